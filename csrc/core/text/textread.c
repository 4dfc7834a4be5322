/* Numeric text reader (see textread.h).  One fread of the whole file, one
 * pass to count lines and refuse binary bytes, one pass to parse with strtod
 * straight on the buffer, in the C locale whatever the host's (textloc.h).
 * A line ends at LF or CR LF; in a file without any LF, at each CR (classic
 * Mac files; elsewhere a stray CR stays part of its line).  No Lua, no
 * global state. */
#include "text/textread.h"
#include "text/textloc.h"
#include "text/textnum.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#define SHOW_MAX 40   /* characters of offending text quoted in a message */
#define NUM_MAX 80    /* longest field the slow number path accepts */
#define NO_FIELD ((size_t)-1) /* an optional column the file lacks */
/* Most a reader takes from a pipe, FIFO or device (a regular file tells its
 * size and is read whole): endless streams such as /dev/zero stop here. */
#define STREAM_MAX ((size_t)256 << 20)

typedef struct scan {
  const char *p, *end;
  const char *name;        /* file name used in messages */
  const char *line_start;
  size_t line;             /* 1-based */
  char delim;              /* ',', ';', '\t', or ' ' for whitespace runs */
  int cr_only;             /* no LF in the text: a lone CR ends a line */
  int extended_ok;         /* sw_text_extended_ok(), asked once */
  sw_err *err;
} scan;

typedef struct field {
  const char *p; /* first character (the opening quote when quoted) */
  size_t len;    /* raw length, quotes included, trailing blanks excluded */
  int quoted;
} field;

/* What the header (or first row) told us. */
typedef struct layout {
  size_t nfields;
  int has_header;
  size_t header_line;
  char **names;        /* nfields unescaped names when has_header */
  char *name_store;
  unsigned char *wanted; /* nfields flags */
  double *vals;          /* nfields values of the current row */
  size_t *slot_field;    /* per wanted column, its 0-based field */
} layout;

static int is_eol(const scan *s, const char *q)
{
  return q >= s->end || *q == '\n' ||
         (*q == '\r' && (s->cr_only || q + 1 >= s->end || q[1] == '\n'));
}

/* The line end at or after s->p (its LF, or its CR in a CR-only text). */
static const char *find_eol(const scan *s)
{
  const char *q = memchr(s->p, s->cr_only ? '\r' : '\n', (size_t)(s->end - s->p));
  return q ? q : s->end;
}

static int is_blank(const scan *s, char c)
{
  return c == ' ' || (c == '\t' && s->delim != '\t');
}

/* Quoted, escaped and shortened copy of text for messages. */
static void show(char *dst, size_t cap, const char *t, size_t n)
{
  size_t o = 0, i;
  const char *hex = "0123456789abcdef";
  if (cap < 8) { if (cap) dst[0] = '\0'; return; }
  dst[o++] = '"';
  for (i = 0; i < n && o + 8 < cap; i++) {
    unsigned char c = (unsigned char)t[i];
    if (i == SHOW_MAX) { memcpy(dst + o, "...", 3); o += 3; break; }
    if (c < 0x20 || c == 0x7f) {
      dst[o++] = '\\'; dst[o++] = 'x';
      dst[o++] = hex[c >> 4]; dst[o++] = hex[c & 15];
    } else {
      dst[o++] = (char)c;
    }
  }
  dst[o++] = '"';
  dst[o] = '\0';
}

/* Error at a position: "name:line:col: message". */
static int fail_at(scan *s, const char *at, const char *fmt, ...) SW_PRINTF(3, 4);
static int fail_at(scan *s, const char *at, const char *fmt, ...)
{
  char msg[256];
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(msg, sizeof msg, fmt, ap);
  va_end(ap);
  return sw_err_set(s->err, SW_EINVAL, "%s:%zu:%zu: %s", s->name, s->line,
                    (size_t)(at - s->line_start) + 1, msg);
}

/* Consumes the line end the scanner stands on (CR LF counts as one). */
static void end_row(scan *s)
{
  if (s->p < s->end && *s->p == '\r') s->p++;
  else if (s->p < s->end && *s->p == '\n') s->p++;
  if (s->p < s->end && *s->p == '\n' && s->p[-1] == '\r') s->p++;
  s->line++;
  s->line_start = s->p;
}

static void next_line(scan *s)
{
  s->p = find_eol(s);
  end_row(s);
}

/* Scans one field starting at s->p (blanks allowed before it).  Sets *more
 * when another field follows on the same line; leaves s->p at that field or
 * at the line end.  Returns SW_OK or an error. */
static int next_field(scan *s, field *f, int *more)
{
  const char *q;
  while (s->p < s->end && is_blank(s, *s->p)) s->p++;
  f->p = s->p;
  f->quoted = (s->p < s->end && *s->p == '"');
  if (f->quoted) {
    q = s->p + 1;
    for (;;) {
      if (q >= s->end || *q == '\n' || (s->cr_only && *q == '\r'))
        return fail_at(s, f->p, "quoted field has no closing quote");
      if (*q == '"') {
        if (q + 1 < s->end && q[1] == '"') { q += 2; continue; }
        break;
      }
      q++;
    }
    q++;
    f->len = (size_t)(q - f->p);
    if (!is_eol(s, q) && !is_blank(s, *q) && *q != s->delim) {
      char t[64];
      show(t, sizeof t, q, 1);
      return fail_at(s, q, "text %s after the closing quote", t);
    }
  } else {
    q = s->p;
    if (s->delim == ' ')
      while (!is_eol(s, q) && *q != ' ' && *q != '\t') q++;
    else
      while (!is_eol(s, q) && *q != s->delim) q++;
    f->len = (size_t)(q - f->p);
    while (f->len > 0 && is_blank(s, f->p[f->len - 1])) f->len--;
  }
  while (!is_eol(s, q) && is_blank(s, *q)) q++;
  if (is_eol(s, q)) {
    *more = 0;
  } else if (s->delim != ' ') {
    if (*q != s->delim) { /* only after a quoted field */
      char t[64];
      show(t, sizeof t, q, 1);
      return fail_at(s, q, "text %s after the closing quote", t);
    }
    q++; /* the delimiter */
    *more = 1;
  } else {
    *more = 1;
  }
  s->p = q;
  return SW_OK;
}

/* The field's text: quotes removed, "" unescaped, blanks trimmed.  Writes
 * at most cap-1 bytes; returns the full unescaped length. */
static size_t field_text(const field *f, char *dst, size_t cap)
{
  size_t i, o = 0, n = 0;
  const char *t = f->p;
  size_t len = f->len;
  if (f->quoted) { t++; len = len >= 2 ? len - 2 : 0; }
  for (i = 0; i < len; i++) {
    if (f->quoted && t[i] == '"' && i + 1 < len && t[i + 1] == '"') i++;
    if (o + 1 < cap) dst[o++] = t[i];
    n++;
  }
  if (cap) dst[o] = '\0';
  /* trim blanks inside the quotes */
  if (cap && n < cap) {
    size_t a = 0, b = o;
    while (a < b && (dst[a] == ' ' || dst[a] == '\t')) a++;
    while (b > a && (dst[b - 1] == ' ' || dst[b - 1] == '\t')) b--;
    memmove(dst, dst + a, b - a);
    dst[b - a] = '\0';
    n = b - a;
  }
  return n;
}

/* 1 when the whole field is a number (a decimal comma is accepted in
 * semicolon files); the value goes to *v. */
static int field_number(const scan *s, const field *f, double *v)
{
  char t[NUM_MAX], *e;
  size_t n = field_text(f, t, sizeof t), i;
  if (n == 0 || n >= sizeof t) return 0;
  if (s->delim == ';' && !strchr(t, '.'))
    for (i = 0; i < n; i++) if (t[i] == ',') t[i] = '.';
  *v = strtod(t, &e);
  return e != t && *e == '\0';
}

static void layout_free(layout *lay)
{
  free(lay->names);
  free(lay->name_store);
  free(lay->wanted);
  free(lay->vals);
  free(lay->slot_field);
  memset(lay, 0, sizeof *lay);
}

/* Chooses the delimiter from the first content row: a semicolon wins (it is
 * never part of a number, and such files may use decimal commas), then a
 * comma, then a tab, else runs of whitespace. */
static char detect_delim(const scan *s)
{
  const char *q = s->p;
  int inq = 0, semi = 0, comma = 0, tab = 0;
  for (; !is_eol(s, q); q++) {
    if (*q == '"') inq = !inq;
    else if (!inq) {
      if (*q == ';') semi++;
      else if (*q == ',') comma++;
      else if (*q == '\t') tab++;
    }
  }
  if (semi) return ';';
  if (comma) return ',';
  if (tab) return '\t';
  return ' ';
}

static const char *col_name(const layout *lay, size_t f)
{
  return lay->has_header ? lay->names[f] : NULL;
}

/* "column 2 ("V_V")" or "column 2". */
static void col_label(const layout *lay, size_t f, char *dst, size_t cap)
{
  const char *nm = col_name(lay, f);
  if (nm) {
    char t[64];
    show(t, sizeof t, nm, strlen(nm));
    snprintf(dst, cap, "column %zu (%s)", f + 1, t);
  } else {
    snprintf(dst, cap, "column %zu", f + 1);
  }
}

/* Reads the first content row: fields, header or not, column names. */
static int read_first_row(scan *s, const sw_text_opts *opts, layout *lay)
{
  const char *start = s->p;
  size_t cap = 8, n = 0, total = 0, i;
  field *fs = NULL;
  int more = 1, st = SW_OK, numeric = 1;
  double v;
  fs = sw_alloc(cap, sizeof *fs, s->err);
  if (!fs) return SW_ENOMEM;
  while (more) {
    if (s->delim == ' ') {
      while (s->p < s->end && is_blank(s, *s->p)) s->p++;
      if (is_eol(s, s->p)) break;
    }
    if (n == cap) {
      field *g = sw_realloc(fs, cap * 2, sizeof *fs, s->err);
      if (!g) { free(fs); return SW_ENOMEM; }
      fs = g;
      cap *= 2;
    }
    st = next_field(s, &fs[n], &more);
    if (st) { free(fs); return st; }
    if (fs[n].len > (fs[n].quoted ? 2u : 0u) && !field_number(s, &fs[n], &v))
      numeric = 0; /* empty fields decide nothing */
    total += fs[n].len + 1;
    n++;
  }
  lay->nfields = n;
  lay->has_header = opts->header < 0 ? !numeric : opts->header;
  lay->header_line = s->line;
  if (lay->has_header) {
    char *w;
    lay->names = sw_alloc(n, sizeof *lay->names, s->err);
    lay->name_store = sw_alloc(total + 1, 1, s->err);
    if (!lay->names || !lay->name_store) { free(fs); return SW_ENOMEM; }
    w = lay->name_store;
    for (i = 0; i < n; i++) {
      size_t k = field_text(&fs[i], w, fs[i].len + 1);
      lay->names[i] = w;
      w += k + 1;
    }
    end_row(s);
  } else {
    s->p = start; /* the first row is data: parse it again as such */
  }
  free(fs);
  return SW_OK;
}

/* Maps each wanted column to a field; unknown names list what exists. */
static int resolve_columns(scan *s, layout *lay, const sw_text_col *cols,
                           size_t ncols)
{
  size_t k, f;
  lay->wanted = sw_alloc(lay->nfields, 1, s->err);
  lay->vals = sw_alloc(lay->nfields, sizeof *lay->vals, s->err);
  lay->slot_field = sw_alloc(ncols, sizeof *lay->slot_field, s->err);
  if (!lay->wanted || !lay->vals || !lay->slot_field) return SW_ENOMEM;
  for (k = 0; k < ncols; k++) {
    if (!sw_isfinite(cols[k].scale) || cols[k].scale == 0)
      return sw_err_set(s->err, SW_EINVAL,
                        "%s: scale of wanted column %zu must be a finite non-zero number", s->name,
                        k + 1);
    if (cols[k].name) {
      char t[64];
      show(t, sizeof t, cols[k].name, strlen(cols[k].name));
      if (!lay->has_header)
        return sw_err_set(s->err, SW_EINVAL,
                          "%s:%zu: no header row (the first row is numbers), so column %s cannot "
                          "be found by name; choose it by number 1..%zu",
                          s->name, lay->header_line, t, lay->nfields);
      for (f = 0; f < lay->nfields; f++)
        if (strcmp(lay->names[f], cols[k].name) == 0) break;
      if (f == lay->nfields && cols[k].optional) {
        lay->slot_field[k] = NO_FIELD;
        continue;
      }
      if (f == lay->nfields) {
        char list[200];
        size_t o = 0;
        list[0] = '\0';
        for (f = 0; f < lay->nfields && o + 1 < sizeof list; f++) {
          char u[64];
          int w;
          show(u, sizeof u, lay->names[f], strlen(lay->names[f]));
          w = snprintf(list + o, sizeof list - o, "%s%s", f ? ", " : "", u);
          if (w < 0) break;
          o += (size_t)w;
        }
        return sw_err_set(s->err, SW_EINVAL, "%s:%zu: no column named %s (columns: %s)",
                          s->name, lay->header_line, t, list);
      }
    } else {
      if (cols[k].index < 1 || cols[k].index > lay->nfields)
        return sw_err_set(s->err, SW_EINVAL, "%s:%zu: no column %zu (the %s has %zu column%s)",
                          s->name, lay->header_line, cols[k].index,
                          lay->has_header ? "header" : "first row", lay->nfields,
                          lay->nfields == 1 ? "" : "s");
      f = cols[k].index - 1;
    }
    lay->slot_field[k] = f;
    lay->wanted[f] = 1;
  }
  return SW_OK;
}

/* Error for a wanted field that is not a number. */
static int bad_number(scan *s, const layout *lay, size_t f, const char *fs)
{
  field fd;
  int more;
  char lab[96], t[64];
  s->p = fs;
  if (next_field(s, &fd, &more)) return s->err ? s->err->code : SW_EINVAL;
  col_label(lay, f, lab, sizeof lab);
  if (fd.len == 0 || (fd.quoted && fd.len == 2))
    return fail_at(s, fs, "%s: empty field where a number is expected", lab);
  show(t, sizeof t, fd.p, fd.len);
  return fail_at(s, fs, "%s: expected a number, found %s", lab, t);
}

/* Parses one data row into lay->vals. */
static int parse_row(scan *s, layout *lay)
{
  size_t f = 0;
  int more = 1, st;
  const char *extra = NULL;
  while (more) {
    const char *fs;
    while (s->p < s->end && is_blank(s, *s->p)) s->p++;
    if (s->delim == ' ' && is_eol(s, s->p)) break;
    fs = s->p;
    if (f < lay->nfields && lay->wanted[f] && fs < s->end && *fs != '"') {
      char *e;
      const char *q;
      double v;
      /* strtod skips newlines: an empty field must not reach it */
      if (is_eol(s, fs) || *fs == s->delim) return bad_number(s, lay, f, fs);
      v = sw_text_strtod(fs, &e, s->extended_ok);
      q = e;
      if (e == fs) return bad_number(s, lay, f, fs);
      if (s->delim == ';' && *q == ',') { /* decimal comma */
        field fd;
        s->p = fs;
        st = next_field(s, &fd, &more);
        if (st) return st;
        if (!field_number(s, &fd, &v)) return bad_number(s, lay, f, fs);
      } else if (s->delim == ' ') {
        if (is_eol(s, q)) more = 0;
        else if (*q != ' ' && *q != '\t') return bad_number(s, lay, f, fs);
        s->p = q;
      } else {
        while (!is_eol(s, q) && is_blank(s, *q)) q++;
        if (is_eol(s, q)) more = 0;
        else if (*q == s->delim) q++;
        else return bad_number(s, lay, f, fs);
        s->p = q;
      }
      if (!sw_isfinite(v)) {
        char lab[96], t[64];
        col_label(lay, f, lab, sizeof lab);
        show(t, sizeof t, fs, (size_t)(e - fs));
        return fail_at(s, fs, "%s: %s is not a finite number", lab, t);
      }
      lay->vals[f] = v;
    } else {
      field fd;
      st = next_field(s, &fd, &more);
      if (st) return st;
      if (f >= lay->nfields && !extra) extra = fs;
      if (f < lay->nfields && lay->wanted[f]) {
        double v;
        if (!field_number(s, &fd, &v)) return bad_number(s, lay, f, fs);
        if (!sw_isfinite(v)) {
          char lab[96], t[64];
          col_label(lay, f, lab, sizeof lab);
          show(t, sizeof t, fd.p, fd.len);
          return fail_at(s, fs, "%s: %s is not a finite number", lab, t);
        }
        lay->vals[f] = v;
      }
    }
    f++;
  }
  if (f != lay->nfields)
    return fail_at(s, extra ? extra : s->p,
                   "row has %zu field%s but the %s (line %zu) has %zu",
                   f, f == 1 ? "" : "s", lay->has_header ? "header" : "first row",
                   lay->header_line, lay->nfields);
  return SW_OK;
}

/* One pass: refuses binary bytes (naming line and column), counts lines;
 * decides whether a lone CR ends a line. */
static int check_text(scan *s, const char *buf, size_t len, size_t *nlines)
{
  size_t i, n = 1;
  const unsigned char *u = (const unsigned char *)buf;
  char eol;
  s->cr_only = memchr(buf, '\n', len) == NULL;
  eol = s->cr_only ? '\r' : '\n';
  for (i = 0; i < len; i++) {
    unsigned char c = u[i];
    const char *ls;
    if ((unsigned char)(c - 0x20) < 0x5f || c >= 0x80) continue; /* printable */
    if (c == (unsigned char)eol) { n++; continue; }
    if (c == '\t' || c == '\r') continue;
    ls = buf + i;
    while (ls > buf && ls[-1] != eol) ls--;
    s->line = n;
    s->line_start = ls;
    return fail_at(s, buf + i, "binary data (byte 0x%02x): not a text file", c);
  }
  *nlines = n;
  return SW_OK;
}

/* A scanner over buf set up for the file called name. */
static void scan_init(scan *s, const char *buf, size_t len, const char *name, char delim,
                      sw_err *err)
{
  s->p = buf;
  s->end = buf + len;
  s->name = name;
  s->line_start = buf;
  s->line = 1;
  s->delim = delim ? delim : ',';
  s->cr_only = 0;
  s->err = err;
  s->extended_ok = sw_text_extended_ok();
}

/* Moves s to the next line with content; 0 at the end of the text. */
static int skip_to_content(scan *s)
{
  for (;;) {
    const char *q = s->p;
    while (q < s->end && (*q == ' ' || *q == '\t')) q++;
    if (q >= s->end) { s->p = q; return 0; }
    if (is_eol(s, q) || *q == '#') { next_line(s); continue; }
    return 1;
  }
}

/* Room for est rows of each asked column found in the file (and of the
 * line numbers when asked). */
static int alloc_rows(const layout *lay, size_t ncols, size_t est, double **out, size_t **ln,
                      int want_lines, sw_err *err)
{
  size_t k;
  for (k = 0; k < ncols; k++) {
    if (lay->slot_field[k] == NO_FIELD) continue;
    out[k] = sw_alloc(est, sizeof **out, err);
    if (!out[k]) return SW_ENOMEM;
  }
  if (want_lines && !(*ln = sw_alloc(est, sizeof **ln, err))) return SW_ENOMEM;
  return SW_OK;
}

/* Reads every data row after the header into the columns; *nrows rows. */
static int read_rows(scan *s, layout *lay, const sw_text_col *cols, size_t ncols, double **out,
                     size_t *ln, size_t *nrows)
{
  size_t r = 0, k;
  int st;
  while (s->p < s->end && skip_to_content(s)) {
    if ((st = parse_row(s, lay))) return st;
    for (k = 0; k < ncols; k++)
      if (out[k]) out[k][r] = lay->vals[lay->slot_field[k]] * cols[k].scale;
    if (ln) ln[r] = s->line;
    r++;
    end_row(s);
  }
  *nrows = r;
  if (r == 0)
    return sw_err_set(s->err, SW_EINVAL, "%s:%zu: no data rows after the header on line %zu",
                      s->name, s->line, lay->header_line);
  return SW_OK;
}

/* Gives back the unused part of the row estimate. */
static void trim_rows(size_t ncols, size_t r, double **out, size_t **ln)
{
  size_t k;
  for (k = 0; k < ncols; k++) {
    double *d = out[k] ? realloc(out[k], r * sizeof **out) : NULL;
    if (d) out[k] = d;
  }
  if (*ln) {
    size_t *d = realloc(*ln, r * sizeof **ln);
    if (d) *ln = d;
  }
}

/* sw_text_parse's work, run inside its C-locale scope. */
static int parse_c(const char *buf, size_t len, const char *name, const sw_text_opts *opts,
                   const sw_text_col *cols, size_t ncols, double **out, size_t **lines,
                   size_t *nrows, sw_err *err)
{
  static const sw_text_opts defaults = {0, -1};
  scan s;
  layout lay;
  size_t est = 0, r = 0, k;
  size_t *ln = NULL;
  int st;

  for (k = 0; k < ncols; k++) out[k] = NULL;
  if (lines) *lines = NULL;
  *nrows = 0;
  if (!opts) opts = &defaults;
  if (ncols == 0) return sw_err_set(err, SW_EINVAL, "%s: no columns asked for", name);
  if (opts->delim && !strchr(",;\t ", opts->delim))
    return sw_err_set(err, SW_EINVAL, "%s: delimiter must be ',', ';', tab or ' '", name);
  memset(&lay, 0, sizeof lay);
  scan_init(&s, buf, len, name, opts->delim, err);
  if (len == 0) return fail_at(&s, s.p, "the file is empty");
  if ((st = check_text(&s, buf, len, &est))) return st;
  if (len >= 3 && memcmp(buf, "\xef\xbb\xbf", 3) == 0) s.p += 3; /* UTF-8 mark */
  if (!skip_to_content(&s))
    return fail_at(&s, s.p, "no data rows (the file holds only comments and blank lines)");
  if (!opts->delim) s.delim = detect_delim(&s);

  if (!(st = read_first_row(&s, opts, &lay)) && !(st = resolve_columns(&s, &lay, cols, ncols)) &&
      !(st = alloc_rows(&lay, ncols, est, out, &ln, lines != NULL, err)) &&
      !(st = read_rows(&s, &lay, cols, ncols, out, ln, &r))) {
    trim_rows(ncols, r, out, &ln);
    if (lines) *lines = ln;
    *nrows = r;
  } else {
    for (k = 0; k < ncols; k++) { free(out[k]); out[k] = NULL; }
    free(ln);
  }
  layout_free(&lay);
  return st;
}

int sw_text_parse(const char *buf, size_t len, const char *name,
                  const sw_text_opts *opts, const sw_text_col *cols,
                  size_t ncols, double **out, size_t **lines, size_t *nrows,
                  sw_err *err)
{
  sw_cnum c;
  size_t k;
  int st;
  for (k = 0; k < ncols; k++) out[k] = NULL;
  if (lines) *lines = NULL;
  *nrows = 0;
  if ((st = sw_cnum_enter(&c, err))) return st;
  st = parse_c(buf, len, name, opts, cols, ncols, out, lines, nrows, err);
  sw_cnum_leave(&c);
  return st;
}

/* The system's words for errno e (the thread-safe XSI strerror_r). */
static void os_error(int e, char *dst, size_t cap)
{
  if (e == 0 || strerror_r(e, dst, cap) != 0) snprintf(dst, cap, "error %d", e);
}

int sw_text_slurp(const char *path, char **buf, size_t *len, sw_err *err)
{
  FILE *f;
  char *b = NULL;
  size_t cap = 1 << 16, n = 0;
  struct stat sb;
  int stream = 1;
  *buf = NULL;
  *len = 0;
  errno = 0;
  f = fopen(path, "rb");
  if (!f) {
    char why[128];
    os_error(errno, why, sizeof why);
    return sw_err_set(err, SW_EIO, "cannot open \"%s\": %s", path, why);
  }
  /* a regular file tells its size, which avoids regrowing the buffer */
  if (fstat(fileno(f), &sb) == 0) {
    if (S_ISDIR(sb.st_mode)) {
      fclose(f);
      return sw_err_set(err, SW_EIO, "cannot read \"%s\": it is a directory", path);
    }
    stream = !S_ISREG(sb.st_mode);
    if (!stream && sb.st_size >= 0 && (unsigned long long)sb.st_size < (size_t)-2)
      cap = (size_t)sb.st_size + 2;
  }
  b = sw_alloc(cap, 1, err);
  if (!b) { fclose(f); return SW_ENOMEM; }
  for (;;) {
    size_t got;
    if (n + 1 >= cap) {
      char *g;
      if (stream && n >= STREAM_MAX) {
        free(b);
        fclose(f);
        return sw_err_set(err, SW_EIO, "cannot read \"%s\": it is not a regular file and gives "
                          "more than %zu MiB; copy it to a file first", path, STREAM_MAX >> 20);
      }
      if (!(g = sw_realloc(b, cap * 2, 1, err))) { free(b); fclose(f); return SW_ENOMEM; }
      b = g;
      cap *= 2;
    }
    errno = 0;
    got = fread(b + n, 1, cap - 1 - n, f);
    /* a NUL byte is binary data: stop here, the parser names where it is */
    if (memchr(b + n, '\0', got)) { n += got; break; }
    n += got;
    if (got == 0) break;
  }
  if (ferror(f)) {
    char why[128];
    os_error(errno, why, sizeof why);
    free(b);
    fclose(f);
    return sw_err_set(err, SW_EIO, "cannot read \"%s\": %s", path, why);
  }
  fclose(f);
  b[n] = '\0';
  *buf = b;
  *len = n;
  return SW_OK;
}

int sw_text_read(const char *path, const sw_text_opts *opts,
                 const sw_text_col *cols, size_t ncols, double **out,
                 size_t **lines, size_t *nrows, sw_err *err)
{
  char *buf;
  size_t len, k;
  int st;
  for (k = 0; k < ncols; k++) out[k] = NULL;
  if (lines) *lines = NULL;
  *nrows = 0;
  st = sw_text_slurp(path, &buf, &len, err);
  if (st) return st;
  st = sw_text_parse(buf, len, path, opts, cols, ncols, out, lines, nrows, err);
  free(buf);
  return st;
}
