/* Curves: construction and evaluation of the four kinds of y = f(x). */
#include "curve/curve.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_deriv.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_lambert.h>

/* CODATA 2018 exact values (SI redefinition of 2019). */
#define SW_BOLTZMANN 1.380649e-23
#define SW_ECHARGE   1.602176634e-19

double sw_thermal_voltage(double kelvin) { return SW_BOLTZMANN * kelvin / SW_ECHARGE; }

typedef struct sample_row {
  double x, y;
  size_t idx; /* 0-based position in the caller's arrays */
} sample_row;

static int cmp_rows(const void *a, const void *b)
{
  const sample_row *p = a, *q = b;
  if (p->x < q->x) return -1;
  if (p->x > q->x) return 1;
  return (p->idx > q->idx) - (p->idx < q->idx);
}

int sw_curve_samples(sw_curve *c, const double *x, const double *y, size_t n,
                     int sort, int dup_mean, sw_err *err)
{
  sample_row *rows;
  size_t i, m;
  if (n < 2) return sw_err_set(err, SW_EINVAL, "need at least 2 samples (got %zu)", n);
  for (i = 0; i < n; i++) {
    if (!sw_isfinite(x[i]))
      return sw_err_set(err, SW_EINVAL, "x[%zu] is not finite (%g)", i + 1, x[i]);
    if (!sw_isfinite(y[i]))
      return sw_err_set(err, SW_EINVAL, "y[%zu] is not finite (%g)", i + 1, y[i]);
  }
  rows = sw_alloc(n, sizeof *rows, err);
  if (!rows) return SW_ENOMEM;
  for (i = 0; i < n; i++) { rows[i].x = x[i]; rows[i].y = y[i]; rows[i].idx = i; }
  if (sort) {
    int sorted = 1; /* measured sweeps usually arrive sorted: skip the sort */
    for (i = 1; i < n && sorted; i++) sorted = rows[i].x >= rows[i - 1].x;
    if (!sorted) qsort(rows, n, sizeof *rows, cmp_rows);
  } else {
    for (i = 1; i < n; i++)
      if (rows[i].x < rows[i - 1].x) {
        free(rows);
        return sw_err_set(
            err, SW_EINVAL,
            "x must be increasing (x[%zu] = %g after x[%zu] = %g); pass sort = true to sort", i + 1,
            x[i], i, x[i - 1]);
      }
  }
  /* Merge or reject repeated x; rows is sorted so repeats are adjacent. */
  m = 0;
  for (i = 0; i < n;) {
    size_t j = i + 1;
    double sum = rows[i].y;
    while (j < n && rows[j].x == rows[i].x) {
      if (!dup_mean) {
        size_t a = rows[i].idx + 1, b = rows[j].idx + 1;
        double xv = rows[i].x;
        free(rows);
        return sw_err_set(
            err, SW_EINVAL,
            "x[%zu] and x[%zu] repeat the value %g; pass duplicates = \"mean\" to average them",
            a < b ? a : b, a < b ? b : a, xv);
      }
      sum += rows[j].y;
      j++;
    }
    rows[m].x = rows[i].x;
    rows[m].y = sum / (double)(j - i);
    m++;
    i = j;
  }
  if (m < 2) {
    free(rows);
    return sw_err_set(err, SW_EINVAL, "need at least 2 distinct x values (got %zu)", m);
  }
  c->x = sw_alloc(m, sizeof *c->x, err);
  c->y = sw_alloc(m, sizeof *c->y, err);
  if (!c->x || !c->y) {
    free(rows);
    sw_curve_free(c);
    return SW_ENOMEM;
  }
  for (i = 0; i < m; i++) { c->x[i] = rows[i].x; c->y[i] = rows[i].y; }
  free(rows);
  c->kind = SW_CURVE_SAMPLES;
  c->n = m;
  c->lo = c->x[0];
  c->hi = c->x[m - 1];
  return SW_OK;
}

int sw_curve_diode(sw_curve *c, double is, double ideality, double vt,
                   double rs, int x_is_i, sw_err *err)
{
  if (!(sw_isfinite(is) && is > 0))
    return sw_err_set(err, SW_EINVAL, "is must be a positive saturation current (got %g)", is);
  if (!(sw_isfinite(ideality) && ideality > 0))
    return sw_err_set(err, SW_EINVAL, "n must be a positive ideality factor (got %g)", ideality);
  if (!(sw_isfinite(vt) && vt > 0))
    return sw_err_set(err, SW_EINVAL, "vt must be a positive thermal voltage (got %g)", vt);
  if (!(sw_isfinite(rs) && rs >= 0))
    return sw_err_set(err, SW_EINVAL, "rs must be a finite resistance >= 0 (got %g)", rs);
  c->kind = SW_CURVE_DIODE;
  c->is = is;
  c->ideality = ideality;
  c->vt = vt;
  c->rs = rs;
  c->x_is_i = x_is_i ? 1 : 0;
  c->lo = x_is_i ? -is : -INFINITY; /* v(i) needs i > -is */
  c->hi = INFINITY;
  return SW_OK;
}

int sw_curve_power(sw_curve *c, double k, double p, sw_err *err)
{
  if (!sw_isfinite(k) || k == 0)
    return sw_err_set(err, SW_EINVAL, "k must be finite and non-zero (got %g)", k);
  if (!(sw_isfinite(p) && p > 0))
    return sw_err_set(err, SW_EINVAL, "n must be a positive exponent (got %g)", p);
  c->kind = SW_CURVE_POWER;
  c->k = k;
  c->p = p;
  c->lo = -INFINITY;
  c->hi = INFINITY;
  return SW_OK;
}

int sw_curve_fn(sw_curve *c, double lo, double hi, sw_err *err)
{
  if (!sw_isfinite(lo) || !sw_isfinite(hi))
    return sw_err_set(err, SW_EINVAL, "lo and hi must be finite (got %g, %g)", lo, hi);
  if (!(lo < hi)) return sw_err_set(err, SW_EINVAL, "lo (%g) must be below hi (%g)", lo, hi);
  c->kind = SW_CURVE_FN;
  c->lo = lo;
  c->hi = hi;
  return SW_OK;
}

void sw_curve_free(sw_curve *c)
{
  if (!c) return;
  free(c->x);
  free(c->y);
  c->x = c->y = NULL;
  c->n = 0;
}

int sw_curve_bounded(const sw_curve *c) { return sw_isfinite(c->lo) && sw_isfinite(c->hi); }

int sw_curve_restrict(sw_curve *c, double lo, double hi, sw_err *err)
{
  if (isnan(lo) || isnan(hi)) return sw_err_set(err, SW_EINVAL, "lo and hi must be numbers");
  if (!(lo < hi)) return sw_err_set(err, SW_EINVAL, "lo (%g) must be below hi (%g)", lo, hi);
  if (lo < c->lo || hi > c->hi || (c->kind == SW_CURVE_DIODE && c->x_is_i && lo <= c->lo))
    return sw_err_set(err, SW_ERANGE, "range [%g, %g] is outside the curve's domain [%g, %g]", lo,
                      hi, c->lo, c->hi);
  c->lo = lo;
  c->hi = hi;
  return SW_OK;
}

/* Index k with x[k] <= t <= x[k+1] in a sorted sample array. */
static size_t sample_interval(const sw_curve *c, double t)
{
  size_t lo = 0, hi = c->n - 1;
  while (hi - lo > 1) {
    size_t mid = lo + (hi - lo) / 2;
    if (c->x[mid] <= t) lo = mid; else hi = mid;
  }
  return lo;
}

/* W0(e^L) without forming e^L when it would overflow: solve w + ln w = L. */
static int lambert_w0_exp(double L, double *w, sw_err *err)
{
  if (L < 700.0) {
    gsl_sf_result r;
    int st = gsl_sf_lambert_W0_e(exp(L), &r);
    if (st != GSL_SUCCESS)
      return sw_err_set(err, SW_ENUMERIC, "Lambert W failed: %s", gsl_strerror(st));
    *w = r.val;
    return SW_OK;
  } else {
    double t = L - log(L);
    int it;
    for (it = 0; it < 50; it++) {
      double f = t + log(t) - L, step = f / (1.0 + 1.0 / t);
      t -= step;
      if (fabs(step) <= 1e-15 * t) break;
    }
    *w = t;
    return SW_OK;
  }
}

/* i(v) of a diode with series resistance (Banwell and Jayakumar's Lambert W
 * closed form), polished by Newton on the implicit Shockley equation so that
 * small currents keep full relative accuracy. */
static int diode_i_of_v(const sw_curve *c, double v, double *iout, sw_err *err)
{
  double nvt = c->ideality * c->vt, i;
  if (c->rs == 0) {
    i = c->is * expm1(v / nvt);
    if (!sw_isfinite(i)) return sw_err_set(err, SW_ERANGE, "diode current overflows at v = %g", v);
  } else {
    double theta = c->is * c->rs / nvt, w = 0;
    double L = log(theta) + (v + c->is * c->rs) / nvt;
    int st = lambert_w0_exp(L, &w, err), k;
    if (st) return st;
    i = nvt / c->rs * w - c->is;
    /* the polish needs v - i*rs to within a small part of n*Vt; far above
     * a million n*Vt rounding in that difference exceeds n*Vt itself (once
     * it sent i to 0 at 9e20 V), while the closed form is exact there */
    for (k = 0; k < 2 && fabs(v) < 1e6 * nvt; k++) {
      double e = exp((v - i * c->rs) / nvt);
      double g = i - c->is * (e - 1.0), dg = 1.0 + c->is * e * c->rs / nvt;
      if (!sw_isfinite(g) || !sw_isfinite(dg)) break;
      i -= g / dg;
    }
  }
  *iout = i;
  return SW_OK;
}

static int diode_eval(const sw_curve *c, double x, double *y, sw_err *err)
{
  double nvt = c->ideality * c->vt;
  if (!c->x_is_i) return diode_i_of_v(c, x, y, err);
  if (!(x > -c->is))
    return sw_err_set(err, SW_ERANGE, "diode v(i) needs i > -is (i = %g, is = %g)", x, c->is);
  *y = nvt * log1p(x / c->is) + x * c->rs;
  return SW_OK;
}

/* Dynamic resistance dv/di at current i. */
static double diode_rd(const sw_curve *c, double i)
{
  return c->ideality * c->vt / (i + c->is) + c->rs;
}

/* i + is of the i(v) law at v, from the junction's own exponential
 * is*exp((v - i*rs)/nvt): i + is formed by addition loses every digit once
 * i rounds to -is (reverse bias beyond about 37 n*Vt). */
static int diode_i_plus_is(const sw_curve *c, double v, double *s, sw_err *err)
{
  double i;
  int st = diode_i_of_v(c, v, &i, err);
  if (st) return st;
  *s = c->is * exp((v - i * c->rs) / (c->ideality * c->vt));
  return SW_OK;
}

static int diode_deriv(const sw_curve *c, double x, int order, double *d, sw_err *err)
{
  double nvt = c->ideality * c->vt, s = 0, q;
  int st;
  if (c->x_is_i) {
    if (!(x > -c->is)) return sw_err_set(err, SW_ERANGE, "diode v(i) needs i > -is (i = %g)", x);
    s = x + c->is;
    *d = order == 1 ? diode_rd(c, x) : -nvt / (s * s);
    return SW_OK;
  }
  if ((st = diode_i_plus_is(c, x, &s, err))) return st;
  /* di/dv = s / (nvt + rs s); d2i/dv2 = nvt s / (nvt + rs s)^3, both finite
   * as s -> 0 (deep reverse bias) and, with rs > 0, as s -> infinity */
  if (c->rs > 0 && !sw_isfinite(s)) { *d = order == 1 ? 1.0 / c->rs : 0.0; return SW_OK; }
  q = nvt + c->rs * s;
  *d = order == 1 ? s / q : nvt * s / (q * q * q);
  return SW_OK;
}

/* A diode's v(i) is the better row at and above zero current (its tangent
 * lands near the curve from either side, where i(v) climbs down an
 * exponential one n*Vt per step), its i(v) below zero, toward i = -is
 * where v(i) ends. */
int sw_curve_newton_flip(const sw_curve *c, double x, double y)
{
  double i;
  if (c->kind != SW_CURVE_DIODE) return 0;
  i = c->x_is_i ? x : y;
  return c->x_is_i ? !(i >= 0) : i >= 0;
}

int sw_curve_newton_lost(const sw_curve *c, double x)
{
  return c->kind == SW_CURVE_DIODE && c->x_is_i && !(x + c->is > 1e-9 * c->is);
}

/* One end of a flipped diode's domain: the law's value at x, where an
 * infinite end or v(i)'s open end at -is maps to an infinite one. */
static int diode_flip_end(const sw_curve *c, double x, double *y, sw_err *err)
{
  if (!sw_isfinite(x) || (c->x_is_i && x <= -c->is)) {
    *y = x > 0 ? INFINITY : -INFINITY;
    return SW_OK;
  }
  return diode_eval(c, x, y, err);
}

int sw_curve_flip(const sw_curve *c, sw_curve *out, sw_err *err)
{
  double lo, hi;
  int st;
  if (c->kind != SW_CURVE_DIODE)
    return sw_err_set(err, SW_EINVAL, "only the diode law has a closed inverse");
  if ((st = diode_flip_end(c, c->lo, &lo, err))) return st;
  if ((st = diode_flip_end(c, c->hi, &hi, err))) return st;
  *out = *c;
  out->x_is_i = !c->x_is_i;
  /* i(v) -> v(i): v = -inf maps to the open end i = -is itself */
  out->lo = !c->x_is_i && !sw_isfinite(c->lo) ? -c->is : lo;
  out->hi = hi;
  return SW_OK;
}

/* A step of a diode's v(i) row may cut i + is by at most a factor of 100
 * (v falls by up to n*Vt*ln 100): the logarithm's tangent overshoots past
 * i = -is, where the law ends. */
static double diode_limit_fall(const sw_curve *c, double i0, double di)
{
  double s0 = i0 + c->is;
  if (!(s0 > 0) || !(di < -0.99 * s0)) return di;
  return -0.99 * s0;
}

/* A diode's i(v) is convex: the tangent at v0 predicts at v0 + dv a current
 * below the law's, and the exact law reaches that predicted current at a
 * far smaller rise.  A rise of more than 2 n*Vt is cut to that voltage
 * (never below 2 n*Vt): with s0 = i0 + is and q = n*Vt + rs*s0 the rise is
 * n*Vt*ln(1 + dv/q) + rs*s0*dv/q, logarithmic in the junction and linear
 * in the series resistance. */
double sw_curve_limit_step(const sw_curve *c, double x0, double dx)
{
  double nvt, s0 = 0, q, rise;
  sw_err e;
  if (c->kind != SW_CURVE_DIODE) return dx;
  if (c->x_is_i) return diode_limit_fall(c, x0, dx);
  nvt = c->ideality * c->vt;
  if (!(dx > 2 * nvt)) return dx;
  if (diode_i_plus_is(c, x0, &s0, &e)) return 2 * nvt;
  if (!sw_isfinite(s0)) return c->rs > 0 ? dx : 2 * nvt;
  q = nvt + c->rs * s0;
  rise = nvt * log1p(dx / q) + c->rs * s0 * (dx / q);
  if (!(rise > 2 * nvt)) rise = 2 * nvt;
  return rise < dx ? rise : dx;
}

/* i(v)'s slope (i + is) / (n*Vt + rs*(i + is)) at i + is = 1e-12 is: below
 * that the current is -is to twelve digits, whatever v is. */
double sw_curve_slope_floor(const sw_curve *c)
{
  double s;
  if (c->kind != SW_CURVE_DIODE || c->x_is_i) return 0;
  s = 1e-12 * c->is;
  return s / (c->ideality * c->vt + c->rs * s);
}

static int call_fn(const sw_curve *c, double x, double *y, sw_err *err)
{
  if (!c->fn) return sw_err_set(err, SW_EINVAL, "function curve has no callback bound");
  if (c->fn(c->ctx, x, y))
    return sw_err_set(err, SW_ECALLBACK, "curve function failed at x = %g", x);
  if (!sw_isfinite(*y))
    return sw_err_set(err, SW_ECALLBACK, "curve function returned %g at x = %g", *y, x);
  return SW_OK;
}

static int check_domain(const sw_curve *c, double x, sw_err *err)
{
  if (isnan(x)) return sw_err_set(err, SW_EINVAL, "x is NaN");
  if (x < c->lo || x > c->hi)
    return sw_err_set(err, SW_ERANGE, "x = %g is outside the curve's domain [%g, %g]", x, c->lo,
                      c->hi);
  return SW_OK;
}

int sw_curve_eval(const sw_curve *c, double x, double *y, sw_err *err)
{
  int st = check_domain(c, x, err);
  if (st) return st;
  switch (c->kind) {
  case SW_CURVE_SAMPLES: {
    size_t k = sample_interval(c, x);
    double t = (x - c->x[k]) / (c->x[k + 1] - c->x[k]);
    *y = x == c->x[k + 1] ? c->y[k + 1] : c->y[k] + t * (c->y[k + 1] - c->y[k]);
    return SW_OK;
  }
  case SW_CURVE_DIODE: return diode_eval(c, x, y, err);
  case SW_CURVE_POWER:
    *y = c->k * copysign(pow(fabs(x), c->p), x);
    if (!sw_isfinite(*y)) return sw_err_set(err, SW_ERANGE, "power law overflows at x = %g", x);
    return SW_OK;
  case SW_CURVE_FN: return call_fn(c, x, y, err);
  }
  return sw_err_set(err, SW_EINVAL, "unknown curve kind");
}

/* GSL wants double f(double, void*): carry the curve and the first failure. */
typedef struct fn_adapter {
  const sw_curve *c;
  sw_err *err;
  int failed;
} fn_adapter;

static double adapter_eval(double x, void *p)
{
  fn_adapter *a = p;
  double y;
  if (a->failed) return NAN;
  if (sw_curve_eval(a->c, x, &y, a->err)) { a->failed = 1; return NAN; }
  return y;
}

/* Numerical first derivative by GSL, one-sided near the domain's ends. */
static int numeric_deriv(const sw_curve *c, double x, double *d, sw_err *err)
{
  fn_adapter a;
  gsl_function F;
  double h = 1e-5 * (fabs(x) > 1e-3 ? fabs(x) : 1e-3), abserr;
  int st;
  if (sw_curve_bounded(c)) {
    double w = c->hi - c->lo;
    if (h > 1e-4 * w) h = 1e-4 * w;
  }
  a.c = c; a.err = err; a.failed = 0;
  F.function = adapter_eval;
  F.params = &a;
  if (x - 4 * h < c->lo) st = gsl_deriv_forward(&F, x, h, d, &abserr);
  else if (x + 4 * h > c->hi) st = gsl_deriv_backward(&F, x, h, d, &abserr);
  else st = gsl_deriv_central(&F, x, h, d, &abserr);
  if (a.failed) return err ? err->code : SW_ECALLBACK;
  if (st != GSL_SUCCESS || !sw_isfinite(*d))
    return sw_err_set(err, SW_ENUMERIC, "numerical derivative failed at x = %g (%s)", x,
                      gsl_strerror(st));
  return SW_OK;
}

/* Slope of samples: the interval's slope, the mean of both at a sample. */
static double sample_slope(const sw_curve *c, size_t k)
{
  return (c->y[k + 1] - c->y[k]) / (c->x[k + 1] - c->x[k]);
}

int sw_curve_deriv(const sw_curve *c, double x, double *dy, sw_err *err)
{
  int st = check_domain(c, x, err);
  if (st) return st;
  switch (c->kind) {
  case SW_CURVE_SAMPLES: {
    size_t k = sample_interval(c, x);
    if (x == c->x[k] && k > 0) *dy = 0.5 * (sample_slope(c, k - 1) + sample_slope(c, k));
    else if (x == c->x[k + 1] && k + 2 < c->n)
      *dy = 0.5 * (sample_slope(c, k) + sample_slope(c, k + 1));
    else *dy = sample_slope(c, k);
    return SW_OK;
  }
  case SW_CURVE_DIODE: return diode_deriv(c, x, 1, dy, err);
  case SW_CURVE_POWER:
    if (x == 0 && c->p < 1)
      return sw_err_set(err, SW_ERANGE, "power law slope is unbounded at x = 0 (n = %g < 1)", c->p);
    *dy = c->k * c->p * pow(fabs(x), c->p - 1);
    return SW_OK;
  case SW_CURVE_FN: return numeric_deriv(c, x, dy, err);
  }
  return sw_err_set(err, SW_EINVAL, "unknown curve kind");
}

/* Second difference on three points a < b < c (non-uniform spacing). */
static double second_difference(double xa, double ya, double xb, double yb, double xc, double yc)
{
  double s1 = (yb - ya) / (xb - xa), s2 = (yc - yb) / (xc - xb);
  return 2.0 * (s2 - s1) / (xc - xa);
}

int sw_curve_deriv2(const sw_curve *c, double x, double *d2y, sw_err *err)
{
  int st = check_domain(c, x, err);
  if (st) return st;
  switch (c->kind) {
  case SW_CURVE_SAMPLES: {
    size_t k = sample_interval(c, x), m;
    if (c->n < 3) { *d2y = 0; return SW_OK; }
    m = x - c->x[k] < c->x[k + 1] - x ? k : k + 1; /* nearest sample */
    if (m == 0) m = 1;
    if (m >= c->n - 1) m = c->n - 2;
    *d2y = second_difference(c->x[m - 1], c->y[m - 1], c->x[m], c->y[m], c->x[m + 1], c->y[m + 1]);
    return SW_OK;
  }
  case SW_CURVE_DIODE: return diode_deriv(c, x, 2, d2y, err);
  case SW_CURVE_POWER:
    if (x == 0 && c->p < 2)
      return sw_err_set(err, SW_ERANGE, "power law curvature is unbounded at x = 0 (n = %g < 2)",
                        c->p);
    *d2y = c->k * c->p * (c->p - 1) * copysign(pow(fabs(x), c->p - 2), x);
    return SW_OK;
  case SW_CURVE_FN: {
    double h = 1e-3 * (fabs(x) > 1e-2 ? fabs(x) : 1e-2), a, b, y0, ya, yb;
    double w = c->hi - c->lo;
    if (h > 1e-3 * w) h = 1e-3 * w;
    a = x - h < c->lo ? c->lo : x - h;
    b = x + h > c->hi ? c->hi : x + h;
    if (a == x) { a = x + h; b = x + 2 * h; }
    else if (b == x) { b = x - h; a = x - 2 * h; }
    if ((st = call_fn(c, x, &y0, err)) || (st = call_fn(c, a, &ya, err)) ||
        (st = call_fn(c, b, &yb, err)))
      return st;
    if (a < x && x < b) *d2y = second_difference(a, ya, x, y0, b, yb);
    else if (a > x) *d2y = second_difference(x, y0, a, ya, b, yb);
    else *d2y = second_difference(a, ya, b, yb, x, y0);
    return SW_OK;
  }
  }
  return sw_err_set(err, SW_EINVAL, "unknown curve kind");
}
