/* Provenance lines of model files ("# fit <key>: <value>"): one table of
 * keys drives setting, checking, writing and reading, so the four agree. */
#include "pwl/pwl_prov.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "text/textloc.h"
#include "text/textnum.h"

typedef enum { F_WORD, F_TEXT, F_PATH, F_RANGE, F_BOOL, F_POS, F_NONNEG, F_ERR } fkind;

typedef struct {
  const char *key;  /* in the file, after "fit " */
  const char *name; /* for callers (fit_info's key) */
  fkind kind;
  size_t off, off2; /* the value; F_RANGE: hi, F_ERR: where */
} field;

#define AT(m) offsetof(sw_pwl_prov, m)
static const field fields[SW_PROV_NFIELD] = {
  {"curve", "curve", F_WORD, AT(curve), 0},
  {"source", "source", F_PATH, AT(source), 0},
  {"range", "range", F_RANGE, AT(lo), AT(hi)},
  {"criterion", "criterion", F_WORD, AT(criterion), 0},
  {"knots", "knots", F_WORD, AT(knots), 0},
  {"error", "error", F_WORD, AT(error), 0},
  {"continuous", "continuous", F_BOOL, AT(continuous), 0},
  {"tol", "tol", F_POS, AT(tol), 0},
  {"rel floor", "rel_floor", F_POS, AT(rel_floor), 0},
  {"max abs", "max_abs", F_ERR, AT(max_abs), AT(x_abs)},
  {"max rel", "max_rel", F_ERR, AT(max_rel), AT(x_rel)},
  {"rms", "rms", F_NONNEG, AT(rms), 0},
  {"checked", "checked", F_WORD, AT(checked), 0},
  {"made", "made", F_TEXT, AT(made), 0},
};

/* Numbers a caller sets one by one (a range and a position are halves of
 * one file line). */
enum { N_ANY, N_POS, N_NONNEG };
static const struct { const char *name; size_t off; int rule; } numbers[] = {
  {"lo", AT(lo), N_ANY}, {"hi", AT(hi), N_ANY}, {"tol", AT(tol), N_POS},
  {"rel_floor", AT(rel_floor), N_POS}, {"max_abs", AT(max_abs), N_NONNEG},
  {"x_abs", AT(x_abs), N_ANY}, {"max_rel", AT(max_rel), N_NONNEG},
  {"x_rel", AT(x_rel), N_ANY}, {"rms", AT(rms), N_NONNEG},
};
#define NNUMBERS (sizeof numbers / sizeof numbers[0])

static char *text_at(sw_pwl_prov *p, size_t off) { return (char *)p + off; }
static const char *ctext_at(const sw_pwl_prov *p, size_t off) { return (const char *)p + off; }
static double *num_at(sw_pwl_prov *p, size_t off) { return (double *)(void *)((char *)p + off); }
static double cnum_at(const sw_pwl_prov *p, size_t off)
{
  return *(const double *)(const void *)((const char *)p + off);
}

void sw_pwl_prov_init(sw_pwl_prov *p)
{
  memset(p, 0, sizeof *p);
  p->lo = p->hi = p->tol = p->rel_floor = NAN;
  p->max_abs = p->x_abs = p->max_rel = p->x_rel = p->rms = NAN;
  p->continuous = -1;
}

static int is_blank(char c) { return c == ' ' || c == '\t'; }

/* A text value of n bytes for `what`: fits in cap, no control bytes (a
 * tab inside is fine), no blanks at the ends (a file's reader trims them),
 * one word when word is set. */
static int check_text(const char *what, const char *s, size_t n, size_t cap, int word,
                      sw_err *err)
{
  size_t i;
  if (n >= cap) return sw_err_set(err, SW_EINVAL, "%s is longer than %zu bytes", what, cap - 1);
  for (i = 0; i < n; i++) {
    unsigned char c = (unsigned char)s[i];
    if ((c < 0x20 && c != '\t') || c == 0x7f)
      return sw_err_set(err, SW_EINVAL, "%s contains a control character (byte %zu)", what, i + 1);
    if (word && is_blank(s[i]))
      return sw_err_set(err, SW_EINVAL, "%s must be one word (found \"%.*s\")", what,
                        (int)(n > 40 ? 40 : n), s);
  }
  if (n && (is_blank(s[0]) || is_blank(s[n - 1])))
    return sw_err_set(err, SW_EINVAL, "%s has blanks at its ends", what);
  return SW_OK;
}

static int check_number(const char *what, double v, int rule, sw_err *err)
{
  if (!sw_isfinite(v))
    return sw_err_set(err, SW_EINVAL, "%s must be a finite number (found %g)", what, v);
  if (rule == N_POS && !(v > 0))
    return sw_err_set(err, SW_EINVAL, "%s must be positive (found %g)", what, v);
  if (rule == N_NONNEG && v < 0)
    return sw_err_set(err, SW_EINVAL, "%s must not be negative (found %g)", what, v);
  return SW_OK;
}

static size_t text_cap(fkind k) { return k == F_PATH ? SW_PROV_PATH : SW_PROV_WORD; }

int sw_pwl_prov_set_text(sw_pwl_prov *p, const char *name, const char *s, sw_err *err)
{
  size_t i, n;
  if (!s) s = "";
  n = strlen(s);
  for (i = 0; i < SW_PROV_NFIELD; i++) {
    const field *f = &fields[i];
    int text = f->kind == F_WORD || f->kind == F_TEXT || f->kind == F_PATH;
    if (text && strcmp(f->name, name) == 0) {
      int st = check_text(name, s, n, text_cap(f->kind), f->kind == F_WORD, err);
      if (st) return st;
      memcpy(text_at(p, f->off), s, n);
      text_at(p, f->off)[n] = '\0';
      if (n) p->present = 1;
      return SW_OK;
    }
  }
  return sw_err_set(err, SW_EINVAL, "no provenance text named '%s'", name);
}

int sw_pwl_prov_set_number(sw_pwl_prov *p, const char *name, double v, sw_err *err)
{
  size_t i;
  for (i = 0; i < NNUMBERS; i++)
    if (strcmp(numbers[i].name, name) == 0) {
      int st = check_number(name, v, numbers[i].rule, err);
      if (st) return st;
      *num_at(p, numbers[i].off) = v;
      p->present = 1;
      return SW_OK;
    }
  return sw_err_set(err, SW_EINVAL, "no provenance number named '%s'", name);
}

void sw_pwl_prov_set_continuous(sw_pwl_prov *p, int yes)
{
  p->continuous = yes ? 1 : 0;
  p->present = 1;
}

static int param_name_ok(const char *s, size_t n)
{
  size_t i;
  if (n == 0 || n >= SW_PROV_WORD || !(s[0] == '_' || (s[0] >= 'A' && s[0] <= 'Z') ||
                                       (s[0] >= 'a' && s[0] <= 'z')))
    return 0;
  for (i = 1; i < n; i++) {
    char c = s[i];
    if (!(c == '_' || c == '.' || (c >= '0' && c <= '9') || (c >= 'A' && c <= 'Z') ||
          (c >= 'a' && c <= 'z')))
      return 0;
  }
  return 1;
}

static size_t find_param(const sw_pwl_prov *p, const char *name, size_t n)
{
  size_t k;
  for (k = 0; k < p->nparam; k++)
    if (strlen(p->param[k].name) == n && memcmp(p->param[k].name, name, n) == 0) return k;
  return SW_PROV_NPARAM;
}

/* Adds name = value (n and vn bytes); `what` names it in messages. */
static int add_param(sw_pwl_prov *p, const char *name, size_t n, const char *value, size_t vn,
                     const char *what, sw_err *err)
{
  sw_prov_param *q;
  int st;
  if (!param_name_ok(name, n))
    return sw_err_set(err, SW_EINVAL, "%s: a curve parameter's name is a word of letters, "
                      "digits, '_' and '.' (found \"%.*s\")", what, (int)(n > 40 ? 40 : n), name);
  if (vn == 0) return sw_err_set(err, SW_EINVAL, "%s has no value", what);
  if ((st = check_text(what, value, vn, SW_PROV_WORD, 0, err))) return st;
  if (find_param(p, name, n) < SW_PROV_NPARAM)
    return sw_err_set(err, SW_EINVAL, "%s is given twice", what);
  if (p->nparam == SW_PROV_NPARAM)
    return sw_err_set(err, SW_EINVAL, "%s: more than %d curve parameters", what, SW_PROV_NPARAM);
  q = &p->param[p->nparam++];
  memcpy(q->name, name, n);
  q->name[n] = '\0';
  memcpy(q->value, value, vn);
  q->value[vn] = '\0';
  p->present = 1;
  return SW_OK;
}

int sw_pwl_prov_add_param(sw_pwl_prov *p, const char *name, const char *value, sw_err *err)
{
  char what[SW_PROV_WORD + 16];
  snprintf(what, sizeof what, "curve parameter %.*s", SW_PROV_WORD - 1, name ? name : "");
  return add_param(p, name ? name : "", name ? strlen(name) : 0, value ? value : "",
                   value ? strlen(value) : 0, what, err);
}

int sw_pwl_prov_check(const sw_pwl_prov *p, sw_err *err)
{
  if ((p->lo == p->lo) != (p->hi == p->hi))
    return sw_err_set(err, SW_EINVAL, "lo and hi go together (the fitted range)");
  if (p->lo == p->lo && !(p->lo < p->hi))
    return sw_err_set(err, SW_EINVAL, "lo (%g) must be below hi (%g)", p->lo, p->hi);
  if (p->x_abs == p->x_abs && p->max_abs != p->max_abs)
    return sw_err_set(err, SW_EINVAL, "x_abs is given without max_abs");
  if (p->x_rel == p->x_rel && p->max_rel != p->max_rel)
    return sw_err_set(err, SW_EINVAL, "x_rel is given without max_rel");
  return SW_OK;
}

/* ---- Writing -------------------------------------------------------------- */

void sw_pwl_prov_format(double v, char *buf, size_t cap)
{
  int prec;
  /* '.' as the point in any locale: the text goes into model files */
  for (prec = 15; prec < 17; prec++) {
    sw_text_fmt_g(buf, cap, prec, v);
    if (sw_text_strtod_c(buf, NULL) == v) return;
  }
  sw_text_fmt_g(buf, cap, 17, v);
}

static void put_number(FILE *f, double v)
{
  char buf[SW_PROV_NUMBER];
  sw_pwl_prov_format(v, buf, sizeof buf);
  fputs(buf, f);
}

static void write_field(FILE *f, const sw_pwl_prov *p, const field *fd)
{
  int numeric = fd->kind == F_RANGE || fd->kind == F_POS || fd->kind == F_NONNEG ||
                fd->kind == F_ERR;
  double v = numeric ? cnum_at(p, fd->off) : NAN;
  double w = numeric && fd->off2 ? cnum_at(p, fd->off2) : NAN;
  switch (fd->kind) {
  case F_WORD: case F_TEXT: case F_PATH:
    if (ctext_at(p, fd->off)[0]) fprintf(f, "# fit %s: %s\n", fd->key, ctext_at(p, fd->off));
    return;
  case F_BOOL:
    if (p->continuous >= 0) fprintf(f, "# fit %s: %s\n", fd->key, p->continuous ? "true" : "false");
    return;
  case F_RANGE:
    if (v != v || w != w) return;
    fprintf(f, "# fit %s: ", fd->key);
    put_number(f, v);
    fputc(' ', f);
    put_number(f, w);
    fputc('\n', f);
    return;
  case F_POS: case F_NONNEG: case F_ERR:
    if (v != v) return;
    fprintf(f, "# fit %s: ", fd->key);
    put_number(f, v);
    if (fd->kind == F_ERR && w == w) {
      fputs(" at x = ", f);
      put_number(f, w);
    }
    fputc('\n', f);
    return;
  }
}

void sw_pwl_prov_write(FILE *f, const sw_pwl_prov *p)
{
  size_t i, k;
  if (!p || !p->present) return;
  fprintf(f, "# fit: how this model was made (segwise %s; read back by segwise.pwl.load)\n",
          SW_VERSION);
  for (i = 0; i < SW_PROV_NFIELD; i++) {
    write_field(f, p, &fields[i]);
    if (fields[i].off == AT(curve))
      for (k = 0; k < p->nparam; k++)
        fprintf(f, "# fit curve %s: %s\n", p->param[k].name, p->param[k].value);
  }
}

/* ---- Reading -------------------------------------------------------------- */

#define SHOW(n) (int)((n) > 40 ? 40 : (n))

/* Reads a number from s (n bytes) into *v; *used: bytes consumed. */
static int read_number(const char *s, size_t n, double *v, size_t *used)
{
  char buf[64], *end;
  size_t k = 0;
  while (k < n && k + 1 < sizeof buf && !is_blank(s[k])) { buf[k] = s[k]; k++; }
  if (k == 0 || (k < n && !is_blank(s[k]))) return 0;
  buf[k] = '\0';
  *v = sw_text_strtod_c(buf, &end);
  if (end != buf + k) return 0;
  *used = k;
  return 1;
}

static size_t skip_blanks(const char *s, size_t i, size_t n)
{
  while (i < n && is_blank(s[i])) i++;
  return i;
}

/* "<number>" for F_POS/F_NONNEG; F_ERR may add "at x = <number>". */
static int read_value(sw_pwl_prov *p, const field *fd, const char *v, size_t n, const char *what,
                      sw_err *err)
{
  double a, x = NAN;
  size_t used, i;
  int ok = read_number(v, n, &a, &used), st;
  i = skip_blanks(v, used, n);
  if (ok && fd->kind == F_ERR && i < n) {
    ok = n - i > 6 && memcmp(v + i, "at x =", 6) == 0;
    if (ok) i = skip_blanks(v, i + 6, n);
    ok = ok && read_number(v + i, n - i, &x, &used);
    if (ok) i = skip_blanks(v, i + used, n);
    if (ok && !sw_isfinite(x)) return check_number(what, x, N_ANY, err);
  }
  if (!ok || i < n)
    return sw_err_set(err, SW_EINVAL, "%s must be a number%s (found \"%.*s\")", what,
                      fd->kind == F_ERR ? ", optionally followed by \"at x = <number>\"" : "",
                      SHOW(n), v);
  st = check_number(what, a, fd->kind == F_POS ? N_POS : N_NONNEG, err);
  if (st) return st;
  *num_at(p, fd->off) = a;
  if (fd->kind == F_ERR) *num_at(p, fd->off2) = x;
  return SW_OK;
}

static int read_range(sw_pwl_prov *p, const char *v, size_t n, const char *what, sw_err *err)
{
  double lo, hi;
  size_t used, i;
  int ok = read_number(v, n, &lo, &used);
  i = skip_blanks(v, used, n);
  ok = ok && read_number(v + i, n - i, &hi, &used) && i + used == n;
  if (!ok || !sw_isfinite(lo) || !sw_isfinite(hi) || !(lo < hi))
    return sw_err_set(err, SW_EINVAL, "%s must be two numbers lo hi with lo below hi (found "
                      "\"%.*s\")", what, SHOW(n), v);
  p->lo = lo;
  p->hi = hi;
  return SW_OK;
}

static int read_field(sw_pwl_prov *p, const field *fd, const char *v, size_t n, const char *what,
                      sw_err *err)
{
  int st;
  if (n == 0) return sw_err_set(err, SW_EINVAL, "%s has no value", what);
  switch (fd->kind) {
  case F_WORD: case F_TEXT: case F_PATH:
    st = check_text(what, v, n, text_cap(fd->kind), fd->kind == F_WORD, err);
    if (st) return st;
    memcpy(text_at(p, fd->off), v, n);
    text_at(p, fd->off)[n] = '\0';
    return SW_OK;
  case F_BOOL:
    if (n == 4 && memcmp(v, "true", 4) == 0) p->continuous = 1;
    else if (n == 5 && memcmp(v, "false", 5) == 0) p->continuous = 0;
    else return sw_err_set(err, SW_EINVAL, "%s must be true or false (found \"%.*s\")", what,
                           SHOW(n), v);
    return SW_OK;
  case F_RANGE:
    return read_range(p, v, n, what, err);
  default:
    return read_value(p, fd, v, n, what, err);
  }
}

/* A repeat of a key already read on line *first (0: none yet). */
static int once(size_t *first, size_t line, const char *what, sw_err *err)
{
  if (*first)
    return sw_err_set(err, SW_EINVAL, "%s is given twice (first on line %zu)", what, *first);
  *first = line;
  return SW_OK;
}

/* The key after "fit": a field, a curve parameter, or unknown (ignored). */
static int read_key(sw_pwl_prov *p, sw_prov_seen *seen, const char *k, size_t kn, const char *v,
                    size_t vn, size_t line, sw_err *err)
{
  char what[SW_PROV_WORD + 16];
  size_t i;
  int st;
  snprintf(what, sizeof what, "fit %.*s", (int)(kn < SW_PROV_WORD ? kn : SW_PROV_WORD - 1), k);
  if (kn > 6 && memcmp(k, "curve", 5) == 0 && is_blank(k[5])) {
    size_t a = skip_blanks(k, 5, kn), slot = find_param(p, k + a, kn - a);
    if (slot < SW_PROV_NPARAM) return once(&seen->param[slot], line, what, err);
    st = add_param(p, k + a, kn - a, v, vn, what, err);
    if (!st) seen->param[p->nparam - 1] = line;
    return st;
  }
  for (i = 0; i < SW_PROV_NFIELD; i++)
    if (strlen(fields[i].key) == kn && memcmp(fields[i].key, k, kn) == 0) {
      if ((st = once(&seen->field[i], line, what, err))) return st;
      if ((st = read_field(p, &fields[i], v, vn, what, err))) return st;
      p->present = 1;
      return SW_OK;
    }
  return SW_OK; /* a key of a later version: a plain comment here */
}

int sw_pwl_prov_read_line(sw_pwl_prov *p, sw_prov_seen *seen, const char *key, size_t klen,
                          const char *val, size_t vlen, const char *path, size_t line,
                          sw_err *err)
{
  size_t a;
  int st;
  while (klen && is_blank(key[klen - 1])) klen--;
  if (klen < 3 || memcmp(key, "fit", 3) != 0 || (klen > 3 && !is_blank(key[3]))) return SW_OK;
  a = skip_blanks(key, 3, klen);
  if (a == klen) { /* the opening line: its text is for people */
    p->present = 1;
    return SW_OK;
  }
  st = read_key(p, seen, key + a, klen - a, val, vlen, line, err);
  if (st) sw_err_prefix(err, "%s:%zu: ", path, line);
  return st;
}
