/* Error of a PWL model against a curve: maxima refined by GSL's Brent
 * minimiser for analytic curves, exact at the samples for sampled ones. */
#include "pwl/pwl.h"

#include <math.h>
#include <stdlib.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_min.h>

typedef struct err_ctx {
  const sw_pwl *m;
  const sw_curve *c;
  double floor;  /* denominator floor for relative error */
  int rel;       /* 0: |m - f|, 1: |m - f| / max(|f|, floor) */
  sw_err *err;
  int failed;
} err_ctx;

/* Signed error m(x) - f(x) and f(x). */
static int point_error(const err_ctx *e, double x, double *d, double *f)
{
  double ym;
  int st = sw_curve_eval(e->c, x, f, e->err);
  if (st) return st;
  if ((st = sw_pwl_eval(e->m, x, &ym, e->err))) return st;
  *d = ym - *f;
  return SW_OK;
}

static double measure(const err_ctx *e, double d, double f)
{
  if (!e->rel) return fabs(d);
  return fabs(d) / (fabs(f) > e->floor ? fabs(f) : e->floor);
}

/* GSL minimises: return minus the error. */
static double neg_error(double x, void *p)
{
  err_ctx *e = p;
  double d, f;
  if (e->failed) return NAN;
  if (point_error(e, x, &d, &f)) { e->failed = 1; return NAN; }
  return -measure(e, d, f);
}

/* Refines a grid maximum at xb (neighbours xa, xc, value -fb) with Brent. */
static int refine_max(err_ctx *e, gsl_min_fminimizer *s, double xa, double xb, double xc,
                      double *xbest, double *best)
{
  gsl_function F;
  double fa, fb, fc;
  int st, it;
  F.function = neg_error;
  F.params = e;
  fa = neg_error(xa, e);
  fb = neg_error(xb, e);
  fc = neg_error(xc, e);
  if (e->failed) return e->err ? e->err->code : SW_ENUMERIC;
  if (!(fb < fa && fb < fc)) return SW_OK; /* no interior bracket: the grid value stands */
  st = gsl_min_fminimizer_set_with_values(s, &F, xb, fb, xa, fa, xc, fc);
  if (st != GSL_SUCCESS) return sw_err_set(e->err, SW_ENUMERIC, "error refinement failed: %s", gsl_strerror(st));
  for (it = 0; it < 60; it++) {
    st = gsl_min_fminimizer_iterate(s);
    if (e->failed) return e->err ? e->err->code : SW_ENUMERIC;
    if (st != GSL_SUCCESS) break; /* keep the best point so far */
    if (gsl_min_test_interval(gsl_min_fminimizer_x_lower(s), gsl_min_fminimizer_x_upper(s),
                              1e-13 * (fabs(xb) + 1e-300), 1e-12) == GSL_SUCCESS)
      break;
  }
  if (-gsl_min_fminimizer_f_minimum(s) > *best) {
    *best = -gsl_min_fminimizer_f_minimum(s);
    *xbest = gsl_min_fminimizer_x_minimum(s);
  }
  return SW_OK;
}

static int compare_samples(err_ctx *e, double lo, double hi, sw_compare *out)
{
  const sw_curve *c = e->c;
  const sw_pwl *m = e->m;
  double sum = 0;
  size_t i = 0, k = 0, top = c->n, cnt = 0;
  /* samples are sorted: the first one at or past lo by bisection, then one
   * walk that carries the model's segment along (as sw_pwl_locate picks it) */
  while (i < top) {
    size_t mid = i + (top - i) / 2;
    if (c->x[mid] < lo) i = mid + 1; else top = mid;
  }
  for (; i < c->n && c->x[i] <= hi; i++) {
    double x = c->x[i], r = c->y[i], d, ym;
    int st;
    if (x < m->x[0] || x > m->x[m->nseg]) {
      if ((st = sw_pwl_eval(m, x, &ym, e->err))) return st;
    } else {
      while (k + 1 < m->nseg && x >= m->x[k + 1]) k++;
      ym = sw_pwl_line(m, k, x);
    }
    d = ym - r;
    if (fabs(d) > out->max_abs) { out->max_abs = fabs(d); out->x_abs = x; }
    if (e->floor > 0 || r != 0) {
      double rel = fabs(d) / (fabs(r) > e->floor ? fabs(r) : e->floor);
      if (rel > out->max_rel) { out->max_rel = rel; out->x_rel = x; }
    } else if (!out->rel_undefined) {
      out->rel_undefined = 1;
      out->x_zero = x;
    }
    sum += d * d;
    cnt++;
  }
  if (cnt == 0) return sw_err_set(e->err, SW_EINVAL, "no samples inside [%g, %g]", lo, hi);
  out->rms = sqrt(sum / (double)cnt);
  out->npoints = cnt;
  if (out->rel_undefined) out->max_rel = NAN;
  return SW_OK;
}

static int cmp_double(const void *a, const void *b)
{
  double p = *(const double *)a, q = *(const double *)b;
  return (p > q) - (p < q);
}

static int compare_analytic(err_ctx *e, double lo, double hi, size_t n, sw_compare *out, sw_err *err)
{
  const sw_pwl *m = e->m;
  size_t i, k, g = 0, cap = n + 2 * m->nseg + 1;
  double *xs = NULL, *dv = NULL, *fv = NULL, integral = 0;
  gsl_min_fminimizer *s = NULL;
  int st = SW_OK;
  xs = sw_alloc(cap, sizeof *xs, err);
  dv = sw_alloc(cap, sizeof *dv, err);
  fv = sw_alloc(cap, sizeof *fv, err);
  s = gsl_min_fminimizer_alloc(gsl_min_fminimizer_brent);
  if (!xs || !dv || !fv || !s) {
    st = s ? SW_ENOMEM : sw_err_set(err, SW_ENOMEM, "out of memory for the error minimiser");
    goto done;
  }
  for (i = 0; i < n; i++) xs[g++] = lo + (hi - lo) * (double)i / (double)(n - 1);
  for (k = 1; k < m->nseg; k++)
    if (m->x[k] > lo && m->x[k] < hi) xs[g++] = m->x[k];
  /* each segment's middle too: segments crowded into a knee may fall
   * between two grid points, and their error peaks with them */
  for (k = 0; k < m->nseg; k++) {
    double mid = 0.5 * (m->x[k] + m->x[k + 1]);
    if (mid > lo && mid < hi) xs[g++] = mid;
  }
  qsort(xs, g, sizeof *xs, cmp_double);
  for (i = 0; i < g; i++) {
    if ((st = point_error(e, xs[i], &dv[i], &fv[i]))) goto done;
    if (!out->rel_undefined && e->floor <= 0 &&
        (fv[i] == 0 || (i > 0 && (fv[i] > 0) != (fv[i - 1] > 0)))) {
      out->rel_undefined = 1;
      out->x_zero = xs[i];
    }
    if (i > 0) integral += 0.5 * (dv[i] * dv[i] + dv[i - 1] * dv[i - 1]) * (xs[i] - xs[i - 1]);
  }
  out->rms = sqrt(integral / (hi - lo));
  out->npoints = g;
  for (e->rel = 0; e->rel <= (out->rel_undefined ? 0 : 1); e->rel++) {
    double *best = e->rel ? &out->max_rel : &out->max_abs, *xb = e->rel ? &out->x_rel : &out->x_abs;
    for (i = 0; i < g; i++) {
      double v = measure(e, dv[i], fv[i]);
      if (v > *best) { *best = v; *xb = xs[i]; }
    }
    for (i = 1; i + 1 < g; i++) {
      double v = measure(e, dv[i], fv[i]);
      if (v >= measure(e, dv[i - 1], fv[i - 1]) && v >= measure(e, dv[i + 1], fv[i + 1]) && v > 0)
        if ((st = refine_max(e, s, xs[i - 1], xs[i], xs[i + 1], xb, best))) goto done;
    }
  }
  if (out->rel_undefined) out->max_rel = NAN;
done:
  free(xs);
  free(dv);
  free(fv);
  gsl_min_fminimizer_free(s);
  return st;
}

int sw_pwl_compare(const sw_pwl *m, const sw_curve *c, double lo, double hi,
                   size_t n, double rel_floor, sw_compare *out, sw_err *err)
{
  err_ctx e;
  out->max_abs = out->max_rel = out->rms = 0;
  out->x_abs = out->x_rel = lo;
  out->npoints = 0;
  out->rel_undefined = 0;
  out->x_zero = 0;
  if (!sw_isfinite(lo) || !sw_isfinite(hi) || !(lo < hi))
    return sw_err_set(err, SW_EINVAL, "range [%g, %g] must be finite with lo below hi", lo, hi);
  if (lo < c->lo || hi > c->hi)
    return sw_err_set(err, SW_ERANGE, "range [%g, %g] is outside the curve's domain [%g, %g]", lo, hi, c->lo, c->hi);
  if (n < 2) n = 2;
  e.m = m;
  e.c = c;
  e.floor = rel_floor > 0 ? rel_floor : 0;
  e.rel = 0;
  e.err = err;
  e.failed = 0;
  if (c->kind == SW_CURVE_SAMPLES) return compare_samples(&e, lo, hi, out);
  return compare_analytic(&e, lo, hi, n, out, err);
}
