/* Model files: a plain CSV of knots (x, y arriving from the left, y leaving
 * to the right) under a '#' header that gives the version, units, extension
 * rule and segment count.  Numbers are printed with %.17g so a save and load
 * gives back the same doubles, and both run in the C locale whatever the
 * host's (text/textloc.h), so a file reads the same everywhere.  Saving goes
 * through text/textfile.h: a temporary beside the real target, renamed into
 * place, so a failure never leaves a truncated file over a good one. */
#include "pwl/pwl_io.h"

#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "text/textfile.h"
#include "text/textloc.h"
#include "text/textread.h"

static const char *const extend_names[] = {"line", "hold", "error"};

/* A unit goes on a comment line: refuse line breaks and control bytes
 * (a tab is fine). */
static int check_unit(const char *u, const char *which, sw_err *err)
{
  size_t i;
  if (!u) return SW_OK;
  if (strlen(u) >= SW_UNIT_MAX)
    return sw_err_set(err, SW_EINVAL, "%s unit is longer than %d bytes", which, SW_UNIT_MAX - 1);
  for (i = 0; u[i]; i++)
    if (((unsigned char)u[i] < 0x20 && u[i] != '\t') || u[i] == 0x7f)
      return sw_err_set(err, SW_EINVAL, "%s unit contains a control character (byte %zu)", which,
                        i + 1);
  return SW_OK;
}

static void write_model(FILE *f, const sw_pwl *m, const char *xunit, const char *yunit,
                        const sw_pwl_prov *prov)
{
  size_t k, n = m->nseg;
  int ext = (m->extend >= SW_EXTEND_LINE && m->extend <= SW_EXTEND_ERROR) ? (int)m->extend : 0;
  fprintf(f, "# segwise %s piecewise-linear model\n", SW_VERSION);
  fprintf(f, "# x unit: %s\n", xunit ? xunit : "");
  fprintf(f, "# y unit: %s\n", yunit ? yunit : "");
  fprintf(f, "# extend: %s\n", extend_names[ext]);
  fprintf(f, "#   (beyond the end knots: line = the end segment continues, hold = the end\n"
             "#    value stays, error = evaluation is refused)\n");
  fprintf(f, "# segments: %zu\n", n);
  sw_pwl_prov_write(f, prov);
  fprintf(f, "# one row per knot; y_left is the value reached from the left, y_right the\n"
             "# value leaving to the right (equal where the model is continuous);\n"
             "# slope_right is the slope leaving to the right, kept so that a model\n"
             "# given by slopes reloads exactly (last row: the end segment's slope)\n");
  fprintf(f, "x,y_left,y_right,slope_right\n");
  for (k = 0; k <= n; k++) {
    double yl = k == 0 ? m->ya[0] : m->yb[k - 1];
    double yr = k == n ? m->yb[n - 1] : m->ya[k];
    double s = k == n ? m->slope[n - 1] : m->slope[k];
    fprintf(f, "%.17g,%.17g,%.17g,%.17g\n", m->x[k], yl, yr, s);
  }
}

int sw_pwl_save(const sw_pwl *m, const char *path, const char *xunit,
                const char *yunit, sw_err *err)
{
  return sw_pwl_save_prov(m, path, xunit, yunit, NULL, err);
}

/* The checks of a save, before anything is written. */
static int check_save(const sw_pwl *m, const char *path, const char *xunit, const char *yunit,
                      const sw_pwl_prov *prov, sw_err *err)
{
  if (!m || m->nseg < 1 || !m->x || !m->ya || !m->yb || !m->slope)
    return sw_err_set(err, SW_EINVAL, "the model is empty");
  if (!path || !*path) return sw_err_set(err, SW_EINVAL, "the path is empty");
  if (check_unit(xunit, "x", err) || check_unit(yunit, "y", err))
    return err ? err->code : SW_EINVAL;
  if (prov && sw_pwl_prov_check(prov, err)) return err ? err->code : SW_EINVAL;
  return SW_OK;
}

int sw_pwl_save_prov(const sw_pwl *m, const char *path, const char *xunit,
                     const char *yunit, const sw_pwl_prov *prov, sw_err *err)
{
  sw_wfile w;
  sw_cnum c;
  int st = check_save(m, path, xunit, yunit, prov, err);
  if (st) return st;
  if ((st = sw_cnum_enter(&c, err))) return st;
  if (!(st = sw_wfile_open(&w, path, err))) {
    write_model(w.f, m, xunit, yunit, prov);
    st = sw_wfile_commit(&w, err);
  }
  sw_cnum_leave(&c);
  return st;
}

/* Reads "# key: value" comment lines for the extension rule, the units,
 * the segment count and the provenance.  *nseg_said stays 0 when the header
 * does not say. */
static int read_header(const char *buf, const char *path, sw_extend *ext,
                       char *xunit, char *yunit, size_t *nseg_said, size_t *said_line,
                       sw_pwl_prov *prov, sw_err *err)
{
  const char *p = buf;
  char eol_char = strchr(buf, '\n') ? '\n' : '\r';
  size_t line = 1;
  sw_prov_seen seen;
  memset(&seen, 0, sizeof seen);
  *ext = SW_EXTEND_LINE;
  while (*p) {
    const char *eol = strchr(p, eol_char); /* as the rows: LF, or CR without any LF */
    const char *q = p, *v, *ve;
    size_t n = eol ? (size_t)(eol - p) : strlen(p);
    while (q < p + n && (*q == ' ' || *q == '\t')) q++;
    if (q < p + n && *q == '#') {
      q++;
      while (q < p + n && (*q == ' ' || *q == '\t')) q++;
      v = memchr(q, ':', (size_t)(p + n - q));
      if (v) {
        size_t klen = (size_t)(v - q);
        v++;
        ve = p + n;
        /* blanks and control bytes (a stray CR) around a value are not
         * part of it, so what loads is what a save writes back */
        while (v < ve && (*v == ' ' || (unsigned char)*v < 0x20)) v++;
        while (ve > v && (ve[-1] == ' ' || (unsigned char)ve[-1] < 0x20)) ve--;
        if (klen == 6 && memcmp(q, "extend", 6) == 0) {
          int k, found = 0;
          for (k = 0; k < 3; k++)
            if ((size_t)(ve - v) == strlen(extend_names[k]) &&
                memcmp(v, extend_names[k], (size_t)(ve - v)) == 0) {
              *ext = (sw_extend)k;
              found = 1;
            }
          if (!found)
            return sw_err_set(err, SW_EINVAL,
                              "%s:%zu: extend must be line, hold or error (found \"%.*s\")", path,
                              line, (int)((ve - v) > 40 ? 40 : (ve - v)), v);
        } else if (klen == 8 && memcmp(q, "segments", 8) == 0) {
          char *e = (char *)v;
          unsigned long long c = 0;
          errno = 0;
          /* strtoull would take "-1" as its wrap-around: a digit must come first */
          if (v < ve && *v >= '0' && *v <= '9') c = strtoull(v, &e, 10);
          if (e == v || e != ve || c == 0)
            return sw_err_set(err, SW_EINVAL,
                              "%s:%zu: segments must be a positive whole number (found \"%.*s\")",
                              path, line, (int)((ve - v) > 40 ? 40 : (ve - v)), v);
          if (errno == ERANGE || c > (size_t)-1 / 64)
            return sw_err_set(err, SW_EINVAL, "%s:%zu: segments is too large (found \"%.*s\")",
                              path, line, (int)((ve - v) > 40 ? 40 : (ve - v)), v);
          *nseg_said = (size_t)c;
          *said_line = line;
        } else if (klen == 6 && (memcmp(q, "x unit", 6) == 0 || memcmp(q, "y unit", 6) == 0)) {
          char *dst = *q == 'x' ? xunit : yunit;
          size_t ul = (size_t)(ve - v);
          if (ul >= SW_UNIT_MAX) /* save refuses such units: never truncate one */
            return sw_err_set(err, SW_EINVAL, "%s:%zu: %c unit is longer than %d bytes", path, line,
                              *q, SW_UNIT_MAX - 1);
          if (dst) {
            size_t i;
            for (i = 0; i < ul; i++) /* a stray CR must not reach a later save */
              dst[i] = ((unsigned char)v[i] < 0x20 && v[i] != '\t') ? ' ' : v[i];
            dst[ul] = '\0';
          }
        } else if (sw_pwl_prov_read_line(prov, &seen, q, klen, v, (size_t)(ve - v), path, line,
                                          err)) {
          return err ? err->code : SW_EINVAL;
        }
      }
    }
    if (!eol) break;
    p = eol + 1;
    line++;
  }
  return SW_OK;
}

int sw_pwl_load_units(sw_pwl *m, const char *path, char *xunit, char *yunit,
                      sw_err *err)
{
  return sw_pwl_load_prov(m, path, xunit, yunit, NULL, err);
}

/* The columns read from a model file (x, y_left, y_right, slope_right)
 * checked against each other and against the header's segment count. */
static int check_columns(double *const col[4], const size_t *lines, size_t n, const char *path,
                         size_t nseg_said, size_t said_line, sw_err *err)
{
  size_t k;
  if (n < 2)
    return sw_err_set(err, SW_EINVAL, "%s:%zu: a model needs at least 2 knots (found 1)", path,
                      lines[0]);
  if (nseg_said && nseg_said != n - 1)
    return sw_err_set(err, SW_EINVAL, "%s:%zu: the header says %zu segments but the file has "
                      "%zu knots (%zu segments)", path, said_line, nseg_said, n, n - 1);
  if (col[1][0] != col[2][0])
    return sw_err_set(err, SW_EINVAL, "%s:%zu: at the first knot y_left (%.17g) must equal "
                      "y_right (%.17g)", path, lines[0], col[1][0], col[2][0]);
  if (col[1][n - 1] != col[2][n - 1])
    return sw_err_set(err, SW_EINVAL, "%s:%zu: at the last knot y_left (%.17g) must equal "
                      "y_right (%.17g)", path, lines[n - 1], col[1][n - 1], col[2][n - 1]);
  for (k = 1; k < n; k++)
    if (!(col[0][k] > col[0][k - 1]))
      return sw_err_set(err, SW_EINVAL, "%s:%zu: x must increase (%.17g here after %.17g on "
                        "line %zu)", path, lines[k], col[0][k], col[0][k - 1], lines[k - 1]);
  return SW_OK;
}

/* The saved slopes, taken when they agree with the knots. */
static int take_slopes(sw_pwl *m, const double *slopes, const size_t *lines, const char *path,
                       sw_err *err)
{
  size_t k;
  for (k = 0; k < m->nseg; k++) {
    double dx = m->x[k + 1] - m->x[k], s = slopes[k];
    double miss = fabs(m->ya[k] + s * dx - m->yb[k]);
    double size = fabs(m->ya[k]) + fabs(m->yb[k]) + fabs(s * dx);
    if (!(miss <= 64 * DBL_EPSILON * size))
      return sw_err_set(err, SW_EINVAL, "%s:%zu: slope_right %.17g does not lead from y_right "
                        "%.17g to the next knot's y_left %.17g", path, lines[k], s, m->ya[k],
                        m->yb[k]);
    m->slope[k] = s;
  }
  return SW_OK;
}

/* The model of the checked columns into m (freed again on failure). */
static int build_model(sw_pwl *m, double *const col[4], const size_t *lines, size_t n,
                       sw_extend ext, const char *path, sw_err *err)
{
  size_t k;
  int st = sw_pwl_alloc(m, n - 1, err);
  if (st) return st;
  for (k = 0; k < n; k++) m->x[k] = col[0][k];
  for (k = 0; k + 1 < n; k++) {
    m->ya[k] = col[2][k];     /* leaving knot k to the right */
    m->yb[k] = col[1][k + 1]; /* arriving at knot k+1 from the left */
  }
  m->extend = ext;
  if ((st = sw_pwl_finish(m, err))) sw_err_prefix(err, "%s: ", path);
  else if (col[3]) st = take_slopes(m, col[3], lines, path, err);
  if (st) sw_pwl_free(m);
  return st;
}

static int load_c(sw_pwl *m, const char *path, char *xunit, char *yunit, sw_pwl_prov *prov,
                  sw_err *err);

int sw_pwl_load_prov(sw_pwl *m, const char *path, char *xunit, char *yunit,
                     sw_pwl_prov *prov, sw_err *err)
{
  sw_cnum c;
  int st;
  memset(m, 0, sizeof *m);
  if ((st = sw_cnum_enter(&c, err))) {
    if (prov) sw_pwl_prov_init(prov);
    return st;
  }
  st = load_c(m, path, xunit, yunit, prov, err);
  sw_cnum_leave(&c);
  return st;
}

/* sw_pwl_load_prov's work, inside its C-locale scope. */
static int load_c(sw_pwl *m, const char *path, char *xunit, char *yunit, sw_pwl_prov *prov,
                  sw_err *err)
{
  static const sw_text_opts opts = {',', 1};
  sw_text_col cols[4] = {{"x", 0, 1.0, 0}, {"y_left", 0, 1.0, 0}, {"y_right", 0, 1.0, 0},
                         {"slope_right", 0, 1.0, 1}};
  double *col[4] = {NULL, NULL, NULL, NULL};
  size_t *lines = NULL, n = 0, k, nseg_said = 0, said_line = 0;
  char *buf = NULL;
  size_t len;
  sw_extend ext;
  sw_pwl_prov scratch;
  int st;

  if (!prov) prov = &scratch; /* bad provenance lines are errors all the same */
  sw_pwl_prov_init(prov);
  memset(m, 0, sizeof *m);
  if (xunit) xunit[0] = '\0';
  if (yunit) yunit[0] = '\0';
  if (!path || !*path) return sw_err_set(err, SW_EINVAL, "the path is empty");
  st = sw_text_slurp(path, &buf, &len, err);
  if (st) return st;
  st = sw_text_parse(buf, len, path, &opts, cols, 4, col, &lines, &n, err);
  if (!st) st = read_header(buf, path, &ext, xunit, yunit, &nseg_said, &said_line, prov, err);
  free(buf);
  if (!st) st = check_columns(col, lines, n, path, nseg_said, said_line, err);
  if (!st) st = build_model(m, col, lines, n, ext, path, err);
  for (k = 0; k < 4; k++) free(col[k]);
  free(lines);
  return st;
}

int sw_pwl_load(sw_pwl *m, const char *path, sw_err *err)
{
  return sw_pwl_load_units(m, path, NULL, NULL, err);
}
