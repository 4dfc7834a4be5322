/* sw_fit, the dispatcher on top of the fitting folder: options, the sample
 * set, the choice of method, and the error report.  It calls the methods
 * (fit_minimax.c, fit_interp.c, fit_lsq.c, fit_knots.c) and none of them
 * calls back: what they share lives in the leaf fit_data.c. */
#include "fit/fit.h"
#include "fit/fit_opts.h"
#include "fit/fit_check.h"
#include "fit/fit_data.h"
#include "fit/fit_grid.h"
#include "fit/fit_interp.h"
#include "fit/fit_knots.h"
#include "fit/fit_lsq.h"
#include "fit/fit_minimax.h"

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define DEFAULT_GRID 4001
#define COMPARE_GRID 2001
#define TOL_RETRIES 8
#define TOL_POINTS_PER_SEG 64
#define POLISH_RTOL 1e-2 /* the polish only centres the lines: a coarse level will do */
#define POLISH_FINE_RTOL 1e-4 /* a generous level: the best lines, found from 0 */
#define POLISH_FEW 8          /* ... for models of this many segments or fewer */
#define TOL_MAX_GRID 2000001
#define FEWER_MARGIN 0.02 /* see fewer_possible */
#define FEWER_MARGIN_MIN 4e-3 /* dense samples (1000 a segment): no off-grid search */
#define FEWER_MAX 64       /* above this count a spare segment is left (see fewer_segments) */
#define COUNT_SEARCH_MAX 4096 /* the most segments a count search tries */
#define TOL_SLACK 1e-9     /* the recheck's allowance over tol */
#define FLOOR_RTOL 1e-2    /* precision of a stated floor on the error (two digits) */
#define KNOTS_FLOOR_RTOL 1e-2

/* How many samples a fit of c works on: the curve's own inside (lo, hi)
 * plus the range ends, or an analytic grid's target size. */
static size_t sample_count(const sw_curve *c, const sw_fit_opts *o)
{
  size_t n, a = 0, b;
  if (c->kind == SW_CURVE_SAMPLES) {
    while (a < c->n && c->x[a] <= o->lo) a++;
    b = a;
    while (b < c->n && c->x[b] < o->hi) b++;
    return b - a + 2;
  }
  n = o->grid ? o->grid : DEFAULT_GRID;
  /* optimal knots sit on grid points: keep ~400 points per segment */
  if (!o->grid && o->knots == SW_KNOTS_OPTIMAL && n < 400 * o->segments + 1)
    n = 400 * o->segments + 1 < 100001 ? 400 * o->segments + 1 : 100001;
  if (n < 8 * o->segments + 1) n = 8 * o->segments + 1;
  return n < 3 ? 3 : n;
}

/* The abscissae and weights: the curve's samples inside (lo, hi) between
 * the range ends (weight 1, or 0 for an end no sample sits on), or the
 * grid's with quadrature weights. */
static void place_samples(const sw_curve *c, const sw_fit_opts *o, fit_data *d)
{
  size_t i, k = 0, n = d->n;
  if (c->kind != SW_CURVE_SAMPLES) {
    for (i = 0; i < n; i++)
      d->w[i] = 0.5 * ((i + 1 < n ? d->x[i + 1] : d->x[i]) - (i > 0 ? d->x[i - 1] : d->x[i]));
    return;
  }
  d->x[k] = o->lo;
  d->w[k++] = 0;
  for (i = 0; i < c->n; i++)
    if (c->x[i] > o->lo && c->x[i] < o->hi) {
      d->x[k] = c->x[i];
      d->y[k] = c->y[i];
      d->w[k++] = 1;
    } else if (c->x[i] == o->lo)
      d->w[0] = 1;
    else if (c->x[i] == o->hi) d->w[n - 1] = 1;
  d->x[k++] = o->hi;
}

/* The values and tube scales of the samples. */
static int sample_values(const sw_curve *c, const sw_fit_opts *o, fit_data *d, sw_err *err)
{
  size_t i, n = d->n;
  int st;
  for (i = 0; i < n; i++) {
    /* a sample's own value is taken as it is (x is unique and sorted) */
    int own = c->kind == SW_CURVE_SAMPLES && i > 0 && i + 1 < n;
    if (!own && (st = sw_curve_eval(c, d->x[i], &d->y[i], err))) return st;
    if (!sw_isfinite(d->y[i]))
      return sw_err_set(err, SW_ENUMERIC, "the curve is not finite at x = %g", d->x[i]);
    if (o->rel && !(o->rel_floor > 0) &&
        (d->y[i] == 0 || (i > 0 && (d->y[i] > 0) != (d->y[i - 1] > 0))))
      return sw_err_set(err, SW_EINVAL, "relative error is undefined where the curve is 0 "
                        "(near x = %g); give rel_floor or a range that avoids it", d->x[i]);
    d->s[i] = fit_scale_of(d->y[i], o->rel, o->rel_floor);
  }
  return SW_OK;
}

/* The through points as samples of their own, and the level searches'
 * start kept far from overflow (they double from it). */
static int finish_samples(const sw_fit_opts *o, fit_data *d, sw_err *err)
{
  double lvl;
  if (o->nthrough) {
    double *ss = sw_alloc(o->nthrough, sizeof *ss, err);
    int st;
    if (!ss) return SW_ENOMEM;
    st = fit_data_merge(d, o->through_x, o->through_y, ss, 0, o->nthrough, 1, err);
    free(ss);
    if (st) return st;
  }
  lvl = fit_start_level(d);
  if (!sw_isfinite(lvl) || lvl > 1e250)
    return sw_err_set(err, SW_ERANGE, "the curve's values over their error scale reach %g%s: "
                      "rescale the data%s", lvl, o->rel ? " (relative error)" : "",
                      o->rel ? " or raise rel_floor" : "");
  return SW_OK;
}

/* The sample set of curve c on [lo, hi] with tube scales and weights. */
static int prepare(const sw_curve *c, const sw_fit_opts *o, fit_data *d, sw_err *err)
{
  size_t n = sample_count(c, o);
  int st;
  memset(d, 0, sizeof *d);
  if (c->kind != SW_CURVE_SAMPLES) {
    if ((st = fit_grid_analytic(c, o->lo, o->hi, n, o->rel, o->rel_floor, o->tol, &d->x, &n, err)))
      return st;
    d->analytic = 1;
  } else {
    d->x = sw_alloc(n, sizeof(double), err);
  }
  d->y = sw_alloc(n, sizeof(double), err);
  d->s = sw_alloc(n, sizeof(double), err);
  d->w = sw_alloc(n, sizeof(double), err);
  if (!d->x || !d->y || !d->s || !d->w) { fit_data_free(d); return SW_ENOMEM; }
  d->n = n;
  place_samples(c, o, d);
  if ((st = sample_values(c, o, d, err)) || (st = finish_samples(o, d, err))) fit_data_free(d);
  return st;
}

/* ---- Validation ----------------------------------------------------------- */

/* ---- Methods by criterion ------------------------------------------------ */

typedef struct fit_job {
  const sw_curve *c;
  const sw_fit_opts *o;
  fit_data d;
  fit_cons cons;       /* slope and direction constraints of the tube methods */
  size_t iters;
  double internal;
  sw_compare cmp;   /* the last recheck, and 1 when it is of the model returned */
  int have_cmp;
  size_t lower;     /* tol fits: the fewest segments any model needs on the samples */
} fit_job;

/* An analytic curve, absolute error, no constraints on the lines. */
static int plain_law(const fit_job *J)
{
  const sw_fit_opts *o = J->o;
  return J->c->kind != SW_CURVE_SAMPLES && !o->rel && !o->nthrough && !o->has_slope_first &&
         !o->has_slope_last && !o->monotone;
}

/* The sign of f'' on [lo, hi] when it keeps one there (1 or -1), else 0
 * (read at 63 interior points). */
static int curvature_sign(const fit_job *J, int *st, sw_err *err)
{
  int sign = 0, i;
  for (i = 1; i < 64; i++) {
    double f2, x = J->o->lo + (J->o->hi - J->o->lo) * (double)i / 64.0;
    if ((*st = sw_curve_deriv2(J->c, x, &f2, err))) return 0;
    if (!sw_isfinite(f2) || f2 == 0) continue;
    if (sign == 0) sign = f2 > 0 ? 1 : -1;
    else if ((f2 > 0 ? 1 : -1) != sign) return 0;
  }
  return sign;
}

/* Closed form of the best line to a convex or concave law on [lo, hi]: the
 * chord's slope, touching the curve's parallel tangent halfway (Chebyshev
 * equioscillation at lo, the tangent point and hi).  Returns 1 when used. */
static int one_segment_closed(fit_job *J, sw_pwl *out, int *st, sw_err *err)
{
  const sw_curve *c = J->c;
  const sw_fit_opts *o = J->o;
  double fa, fb, m, a, b, xi, fx, icpt;
  int sign, i;
  *st = SW_OK;
  if (!plain_law(J)) return 0;
  if ((sign = curvature_sign(J, st, err)) == 0 || *st) return *st != SW_OK;
  if ((*st = sw_curve_eval(c, o->lo, &fa, err)) || (*st = sw_curve_eval(c, o->hi, &fb, err)))
    return 1;
  m = (fb - fa) / (o->hi - o->lo);
  a = o->lo;
  b = o->hi;
  for (i = 0; i < 200 && b - a > 1e-15 * (fabs(a) + fabs(b)); i++) {
    double mid = 0.5 * (a + b), d1;
    if ((*st = sw_curve_deriv(c, mid, &d1, err))) return 1;
    if ((d1 - m) * sign < 0) a = mid; else b = mid;
  }
  J->iters += (size_t)i;
  xi = 0.5 * (a + b);
  if ((*st = sw_curve_eval(c, xi, &fx, err))) return 1;
  icpt = 0.5 * ((fa - m * o->lo) + (fx - m * xi));
  J->internal = 0.5 * fabs((fx - m * xi) - (fa - m * o->lo));
  if ((*st = sw_pwl_alloc(out, 1, err))) return 1;
  out->x[0] = o->lo;
  out->x[1] = o->hi;
  out->ya[0] = m * o->lo + icpt;
  out->yb[0] = m * o->hi + icpt;
  if ((*st = sw_pwl_finish(out, err))) sw_pwl_free(out);
  return 1;
}

/* A failure an optional refinement may fall back from: numeric trouble
 * yes; out of memory and callback errors never. */
static int absorbable(int st)
{
  return st != SW_ENOMEM && st != SW_ECALLBACK;
}

static int knots_for(fit_job *J, size_t n, double *K, sw_err *err)
{
  const sw_fit_opts *o = J->o;
  switch (o->knots) {
  case SW_KNOTS_LIST:
    memcpy(K, o->knot_list, (n + 1) * sizeof *K);
    return SW_OK;
  case SW_KNOTS_GEOMETRIC:
    return fit_knots_geometric(o->lo, o->hi, o->offset, n, K, err);
  case SW_KNOTS_CURVATURE:
  case SW_KNOTS_OPTIMAL:
    return fit_knots_curvature(J->c, &J->d, o->lo, o->hi, n,
                               o->criterion == SW_FIT_LSQ ? 0.4 : 0.5, K, err);
  default:
    return fit_knots_uniform(o->lo, o->hi, n, K, err);
  }
}

static int interp_model(fit_job *J, const double *K, size_t n, sw_pwl *out, sw_err *err)
{
  size_t j;
  double *yk = sw_alloc(n + 1, sizeof *yk, err);
  int st;
  if (!yk) return SW_ENOMEM;
  for (j = 0; j <= n; j++)
    if ((st = sw_curve_eval(J->c, K[j], &yk[j], err))) { free(yk); return st; }
  if ((st = sw_pwl_alloc(out, n, err))) { free(yk); return st; }
  for (j = 0; j <= n; j++) out->x[j] = K[j];
  for (j = 0; j < n; j++) {
    out->ya[j] = yk[j];
    out->yb[j] = yk[j + 1];
  }
  free(yk);
  if ((st = sw_pwl_finish(out, err))) { sw_pwl_free(out); return st; }
  J->internal = fit_data_maxerr(&J->d, out);
  return SW_OK;
}

/* Error of m at x in the fit's measure, against the curve itself. */
static int true_error(fit_job *J, const sw_pwl *m, double x, double *e, sw_err *err)
{
  double y, v;
  int st = sw_curve_eval(J->c, x, &y, err);
  if (st) return st;
  sw_pwl_eval(m, x, &v, NULL);
  *e = J->o->rel ? fabs(v - y) / (fabs(y) > J->o->rel_floor ? fabs(y) : J->o->rel_floor)
                 : fabs(v - y);
  if (!(*e == *e)) *e = 0;
  return SW_OK;
}

/* Exchange step for analytic curves: finds the curve's true error peaks of
 * m between grid points (golden section around each grid maximum) and adds
 * them to the sample set, so the next fit sees them.  *peak gets the largest. */
static int refine_peaks(fit_job *J, const sw_pwl *m, double *peak, size_t *added, sw_err *err)
{
  fit_data *d = &J->d;
  size_t i, cnt = 0;
  double *e = sw_alloc(d->n, sizeof *e, err), *xs = sw_alloc(d->n, sizeof *xs, err), emax = 0;
  int st = SW_OK;
  *added = 0;
  *peak = 0;
  if (!e || !xs) { st = SW_ENOMEM; goto done; }
  for (i = 0; i < d->n; i++) {
    double v;
    sw_pwl_eval(m, d->x[i], &v, NULL);
    e[i] = d->s[i] > 0 ? fabs(v - d->y[i]) / d->s[i] : 0;
    if (e[i] > emax) emax = e[i];
  }
  *peak = emax;
  for (i = 1; i + 1 < d->n; i++) {
    const double g = 0.6180339887498949;
    double a = d->x[i - 1], b = d->x[i + 1], x1, x2, f1, f2;
    int it;
    if (!(e[i] >= e[i - 1] && e[i] >= e[i + 1] && e[i] > 0.5 * emax)) continue;
    x1 = b - g * (b - a);
    x2 = a + g * (b - a);
    if ((st = true_error(J, m, x1, &f1, err)) || (st = true_error(J, m, x2, &f2, err))) goto done;
    for (it = 0; it < 40 && b - a > 1e-14 * (fabs(a) + fabs(b)); it++) {
      if (f1 >= f2) {
        b = x2;
        x2 = x1;
        f2 = f1;
        x1 = b - g * (b - a);
        if ((st = true_error(J, m, x1, &f1, err))) goto done;
      } else {
        a = x1;
        x1 = x2;
        f1 = f2;
        x2 = a + g * (b - a);
        if ((st = true_error(J, m, x2, &f2, err))) goto done;
      }
    }
    if ((f1 > f2 ? f1 : f2) > *peak) *peak = f1 > f2 ? f1 : f2;
    if ((f1 > f2 ? f1 : f2) > e[i] * (1 + 1e-9)) xs[cnt++] = f1 > f2 ? x1 : x2;
  }
  if (cnt) {
    size_t k = 0;
    for (i = 0; i < cnt; i++) /* sorted already, drop repeats */
      if (k == 0 || xs[i] > xs[k - 1]) xs[k++] = xs[i];
    st = fit_data_insert(d, J->c, xs, k, J->o->rel, J->o->rel_floor, err);
    *added = k;
  }
done:
  free(e);
  free(xs);
  return st;
}

#define EXCHANGE_ROUNDS 4

static int minimax_fixed(fit_job *J, const double *K, size_t n, sw_pwl *out, sw_err *err)
{
  int st, round;
  if (n == 1 && one_segment_closed(J, out, &st, err)) return st;
  if ((st = fit_data_insert(&J->d, J->c, K, n + 1, J->o->rel, J->o->rel_floor, err))) return st;
  for (round = 0;; round++) {
    double peak;
    size_t added;
    st = fit_minimax_fixed(&J->d, K, n, J->o->continuous, &J->cons, out, &J->internal, &J->iters,
                           err);
    if (st || !J->d.analytic || round == EXCHANGE_ROUNDS) return st;
    if ((st = refine_peaks(J, out, &peak, &added, err))) { sw_pwl_free(out); return st; }
    if (!added || peak <= J->internal * (1 + 1e-6)) return SW_OK;
    sw_pwl_free(out);
  }
}

/* ---- Equal-error knots: discontinuous minimax on a convex or concave law ----
 * There each segment's best line is its chord moved halfway to the parallel
 * tangent, its error half the chord's largest gap, which grows with the
 * segment.  The optimum of n segments makes every segment reach as far as
 * the common level allows: a greedy reach per level, and a bisection on the
 * level until n segments just cover [lo, hi].  Knots move freely, not on
 * the sample grid. */

#define EQ_LEVEL_STEPS 48
#define EQ_REACH_STEPS 52

typedef struct eq_job {
  fit_job *J;
  sw_pwl one; /* scratch: the chord of one segment */
  size_t steps;
} eq_job;

/* The chord of [a, b] into q->one and its largest gap to the curve. */
static int chord_gap(eq_job *q, double a, double b, sw_compare *cmp, sw_err *err)
{
  int st = sw_curve_eval(q->J->c, a, &q->one.ya[0], err);
  if (st || (st = sw_curve_eval(q->J->c, b, &q->one.yb[0], err))) return st;
  q->one.x[0] = a;
  q->one.x[1] = b;
  if ((st = sw_pwl_finish(&q->one, err))) return st;
  q->steps++;
  /* the gap is unimodal: three grid points bracket it, Brent refines */
  return sw_pwl_compare(&q->one, q->J->c, a, b, 3, 0, cmp, err);
}

/* The farthest b in (a, hi] whose segment's best line stays within lvl. */
static int reach(eq_job *q, double a, double lvl, double *b, sw_err *err)
{
  double hi = q->J->o->hi, lo = a, top = hi;
  sw_compare cmp;
  int st, i;
  if ((st = chord_gap(q, a, hi, &cmp, err))) return st;
  if (0.5 * cmp.max_abs <= lvl) { *b = hi; return SW_OK; }
  for (i = 0; i < EQ_REACH_STEPS; i++) {
    double mid = 0.5 * (lo + top);
    if (!(mid > lo && mid < top)) break;
    if ((st = chord_gap(q, a, mid, &cmp, err))) return st;
    if (0.5 * cmp.max_abs <= lvl) lo = mid; else top = mid;
  }
  *b = lo;
  return SW_OK;
}

/* Knots K[0..n] of the greedy at lvl; *ok: they reach hi in n segments. */
static int cover(eq_job *q, size_t n, double lvl, double *K, int *ok, sw_err *err)
{
  size_t j;
  int st;
  K[0] = q->J->o->lo;
  *ok = 0;
  for (j = 1; j <= n; j++) {
    if ((st = reach(q, K[j - 1], lvl, &K[j], err))) return st;
    if (!(K[j] > K[j - 1])) return SW_OK;
    if (K[j] == q->J->o->hi) { *ok = j == n; return SW_OK; }
  }
  return SW_OK;
}

/* The model of the knots K: each segment's chord moved halfway to its
 * parallel tangent; *lvl gets the largest half gap. */
static int eq_model(eq_job *q, const double *K, size_t n, sw_pwl *out, double *lvl, sw_err *err)
{
  size_t j;
  int st = sw_pwl_alloc(out, n, err);
  *lvl = 0;
  for (j = 0; !st && j < n; j++) {
    sw_compare cmp;
    double f, shift;
    if ((st = chord_gap(q, K[j], K[j + 1], &cmp, err)) ||
        (st = sw_curve_eval(q->J->c, cmp.x_abs, &f, err)))
      break;
    shift = 0.5 * (f - sw_pwl_line(&q->one, 0, cmp.x_abs));
    out->x[j] = K[j];
    out->ya[j] = q->one.ya[0] + shift;
    out->yb[j] = q->one.yb[0] + shift;
    if (0.5 * cmp.max_abs > *lvl) *lvl = 0.5 * cmp.max_abs;
  }
  if (!st) {
    out->x[n] = K[n];
    st = sw_pwl_finish(out, err);
  }
  if (st) sw_pwl_free(out);
  return st;
}

/* Bisection on the level from [0, e_hi] (e_hi covered): the knots in K. */
static int level_search(eq_job *q, size_t n, double e_hi, double *K, int *found, sw_err *err)
{
  double e_lo = 0, *T = sw_alloc(n + 1, sizeof *T, err);
  int st, ok, i;
  *found = 0;
  if (!T) return SW_ENOMEM;
  if ((st = cover(q, n, e_hi, K, &ok, err)) || !ok) goto done;
  for (i = 0; i < EQ_LEVEL_STEPS && e_hi - e_lo > 1e-11 * e_hi; i++) {
    double mid = i < 4 ? e_hi * (1 - 0.01 * (double)(1 << i)) : 0.5 * (e_lo + e_hi);
    if ((st = cover(q, n, mid, T, &ok, err))) goto done;
    if (ok) { e_hi = mid; memcpy(K, T, (n + 1) * sizeof *K); }
    else e_lo = mid;
  }
  *found = 1;
done:
  free(T);
  return st;
}

/* Replaces out by the equal-error model when that one's rechecked error is
 * lower.  Only for discontinuous minimax on a convex or concave
 * law; anything else leaves out as it is. */
static int equal_error(fit_job *J, size_t n, sw_pwl *out, sw_err *err)
{
  eq_job q;
  sw_pwl alt;
  sw_compare now, then;
  double *K, lvl;
  int st = SW_OK, found;
  if (J->o->continuous || n < 2 || !plain_law(J)) return SW_OK;
  if (curvature_sign(J, &st, err) == 0 || st) return st;
  memset(&q, 0, sizeof q);
  memset(&alt, 0, sizeof alt);
  q.J = J;
  if ((st = fit_recheck(out, J->c, J->o->lo, J->o->hi, COMPARE_GRID, 0, &now, err))) return st;
  if (!(K = sw_alloc(n + 1, sizeof *K, err))) return SW_ENOMEM;
  if ((st = sw_pwl_alloc(&q.one, 1, err))) goto done;
  /* the rechecked error is a level n segments reach: a bracket's top */
  if ((st = level_search(&q, n, now.max_abs * (1 + 1e-9), K, &found, err)) || !found) goto done;
  if ((st = eq_model(&q, K, n, &alt, &lvl, err))) goto done;
  st = fit_recheck(&alt, J->c, J->o->lo, J->o->hi, COMPARE_GRID, 0, &then, err);
  if (!st && then.max_abs < now.max_abs) {
    sw_pwl_free(out);
    *out = alt;
    J->internal = lvl;
  } else {
    sw_pwl_free(&alt);
  }
done:
  J->iters += q.steps;
  sw_pwl_free(&q.one);
  free(K);
  return st;
}

/* A model with exactly n segments under the chosen scheme and criterion. */
/* Optimal-knot minimax with n segments into out (K: room for n + 1 knots):
 * the count search's knots, exchange steps on laws, never worse than the
 * curvature scheme's knots, and equal-error knots off the grid. */
static int minimax_optimal(fit_job *J, size_t n, double *K, sw_pwl *out, sw_err *err)
{
  const sw_fit_opts *o = J->o;
  sw_pwl alt;
  double e_alt;
  int st;
  memset(&alt, 0, sizeof alt);
  if ((st = fit_minimax_count(&J->d, n, o->continuous, &J->cons, out, &J->internal, &J->iters,
                              err)))
    return st;
  if (J->d.analytic) { /* exchange steps on the found knots */
    sw_pwl r;
    memset(&r, 0, sizeof r);
    memcpy(K, out->x, (n + 1) * sizeof *K);
    if ((st = minimax_fixed(J, K, n, &r, err))) return st;
    sw_pwl_free(out);
    *out = r;
  }
  /* never worse than the curvature scheme's minimax on its knots; that
   * alternative may fail numerically (a knot without samples), which
   * keeps the optimal answer, but out of memory is passed up */
  if (n > 1) {
    st = knots_for(J, n, K, err);
    if (!st) st = fit_data_insert(&J->d, J->c, K, n + 1, o->rel, o->rel_floor, err);
    /* only a level below the optimal knots' one matters: capped there */
    if (!st) {
      fit_level_search ls = {0, J->internal, 1e-11, 1};
      st = fit_minimax_fixed_from(&J->d, K, n, o->continuous, &J->cons, &ls, &alt, &e_alt,
                                  &J->iters, err);
    }
    if (!st && e_alt == INFINITY) {
      /* the curvature knots cannot reach that level: nothing to compare */
    } else if (!st) {
      if (e_alt < J->internal) { sw_pwl_free(out); *out = alt; J->internal = e_alt; }
      else sw_pwl_free(&alt);
    } else if (absorbable(st)) {
      st = SW_OK;
    } else {
      sw_pwl_free(out);
      return st;
    }
  }
  if (J->d.analytic) { /* knots off the grid, where the optimum is */
    st = equal_error(J, n, out, err);
    if (st && absorbable(st)) st = SW_OK;
    else if (st) sw_pwl_free(out);
  }
  return st;
}

static int fit_count(fit_job *J, size_t n, sw_pwl *out, sw_err *err)
{
  const sw_fit_opts *o = J->o;
  double *K = sw_alloc(n + 1, sizeof *K, err);
  int st;
  if (!K) return SW_ENOMEM;
  if (o->knots == SW_KNOTS_OPTIMAL && o->criterion == SW_FIT_MINIMAX) {
    st = minimax_optimal(J, n, K, out, err);
    goto done;
  }
  if (o->knots == SW_KNOTS_OPTIMAL &&
      (o->criterion == SW_FIT_INTERP || o->criterion == SW_FIT_CHORD)) {
    st = fit_interp_count(&J->d, n, out, &J->internal, &J->iters, err);
    goto done;
  }
  if ((st = knots_for(J, n, K, err))) goto done;
  if (o->knots == SW_KNOTS_OPTIMAL && o->criterion == SW_FIT_LSQ) {
    double *start = sw_alloc(n + 1, sizeof *start, err);
    if (!start) { st = SW_ENOMEM; goto done; }
    memcpy(start, K, (n + 1) * sizeof *K);
    st = fit_lsq_optimal(&J->d, o->lo, o->hi, n, o->continuous, start, K, &J->iters, err);
    free(start);
    if (st) goto done;
  }
  switch (o->criterion) {
  case SW_FIT_MINIMAX:
    st = minimax_fixed(J, K, n, out, err);
    break;
  case SW_FIT_LSQ:
    st = fit_lsq_fixed(&J->d, K, n, o->continuous, &J->cons, o->through_x, o->through_y,
                       o->nthrough, out, &J->internal, err);
    if (!st) J->internal = fit_data_maxerr(&J->d, out);
    break;
  default:
    st = interp_model(J, K, n, out, err);
    break;
  }
done:
  free(K);
  return st;
}

/* Error of m in the fit's measure, rechecked against the curve. */
static int measure(fit_job *J, const sw_pwl *m, double *e, sw_err *err)
{
  int st = fit_recheck(m, J->c, J->o->lo, J->o->hi, COMPARE_GRID, J->o->rel_floor, &J->cmp, err);
  J->have_cmp = 0;
  if (st) return st;
  *e = J->o->rel ? J->cmp.max_rel : J->cmp.max_abs;
  if (!(*e == *e)) *e = INFINITY;
  return SW_OK;
}

/* Polish: the best lines on the greedy knots.  The greedy stops at the
 * first lines within the level (a polygon's centroid when discontinuous),
 * near the level when it is tight; a bracket of its upper half centres
 * them.  A generous level leaves them far from the best (x^2 on [-1, 1]
 * with tol = 10: 4.7 where the best line is 0.5 off): when the model sits
 * at the bracket's foot, a second pass searches from 0, finer (a few
 * segments only: a generous level needs few).  A polished
 * model replaces out only when lower; on failure out is freed. */
static int polish(fit_job *J, sw_pwl *out, double e_int, sw_err *err)
{
  double lo = 0.5 * e_int, hi = e_int, rtol = POLISH_RTOL, now;
  /* the greedy model is within e_int; its own error matters (one pass over
   * the samples) only where a second pass may follow */
  now = out->nseg <= POLISH_FEW ? fit_data_maxerr(&J->d, out) : e_int;
  int pass, st;
  for (pass = 0; pass < 2; pass++) {
    sw_pwl p;
    double ep;
    fit_level_search ls = {lo, hi, rtol, 0};
    memset(&p, 0, sizeof p);
    st = fit_minimax_fixed_from(&J->d, out->x, out->nseg, J->o->continuous, &J->cons, &ls, &p, &ep,
                                &J->iters, err);
    if (st) {
      if (absorbable(st)) return SW_OK; /* the model so far stands */
      sw_pwl_free(out);
      return st;
    }
    if (ep < now) { sw_pwl_free(out); *out = p; now = ep; }
    else sw_pwl_free(&p);
    if (!(now <= lo * (1 + 4 * rtol)) || out->nseg > POLISH_FEW) break;
    lo = 0;
    hi = now;
    rtol = POLISH_FINE_RTOL;
  }
  return SW_OK;
}

/* Fewest segments within tol for optimal minimax or interpolation: the
 * greedy tube on the samples, rechecked against the curve. */

static int tol_greedy(fit_job *J, sw_pwl *out, sw_err *err)
{
  const sw_fit_opts *o = J->o;
  double tol = o->tol, e_int = tol, e;
  int st, tries;
  for (tries = 0; tries < TOL_RETRIES; tries++) {
    if (o->criterion == SW_FIT_MINIMAX) {
      st = fit_minimax_tol(&J->d, e_int, o->continuous, &J->cons, out, err);
      if (!st) st = polish(J, out, e_int, err);
    } else {
      st = fit_interp_tol(&J->d, e_int, out, err);
    }
    if (st) return st;
    J->internal = fit_data_maxerr(&J->d, out);
    J->iters++;
    if ((st = measure(J, out, &e, err))) { sw_pwl_free(out); return st; }
    if (e <= tol * (1 + 1e-9)) { J->have_cmp = 1; return SW_OK; } /* the report reuses it */
    if (J->d.analytic && tries < TOL_RETRIES / 2) {
      /* the grid missed a peak: add the curve's true error peaks as
       * samples and redo at the same level (keeps the count optimal) */
      double peak;
      size_t added;
      st = refine_peaks(J, out, &peak, &added, err);
      sw_pwl_free(out);
      if (st) return st;
      if (added) continue;
    } else {
      sw_pwl_free(out);
    }
    e_int *= 0.98 * tol / e; /* no new samples helped: tighten and redo */
  }
  return sw_err_set(err, SW_ENUMERIC, "could not meet tol = %g on the curve itself between its "
                    "samples; give a denser grid (or rel_floor for relative error)", tol);
}

/* 1 when the greedy tube on the samples needs fewer than n segments at a
 * level a little above tol: only then can knots off the sample grid save
 * a segment.  Moving a knot by part of a sample step changes a segment's
 * error by about that part of the step over the segment's width, so the
 * margin is a few steps' worth (4 n / samples), at most FEWER_MARGIN. */
static int fewer_possible(fit_job *J, size_t n, int *st, sw_err *err)
{
  sw_pwl q;
  double margin = 4.0 * (double)n / (double)J->d.n;
  int fewer;
  *st = SW_OK;
  if (margin > FEWER_MARGIN) margin = FEWER_MARGIN;
  if (margin < FEWER_MARGIN_MIN) return 0; /* the count is optimal within this part of tol */
  memset(&q, 0, sizeof q);
  *st = fit_minimax_tol(&J->d, J->o->tol * (1 + margin), J->o->continuous, &J->cons, &q, err);
  fewer = !*st && q.nseg < n;
  sw_pwl_free(&q);
  if (absorbable(*st)) *st = SW_OK;
  return fewer;
}

/* The greedy tube's count can be one above the fewest: its knots sit on
 * samples, while the fixed-count fit places them off the grid where it
 * can (equal-error segments).  While the best model of one segment fewer
 * also meets tol, it takes the place of out (the report keeps its
 * recheck).  Optimal minimax only, and up to FEWER_MAX segments: there
 * one segment is worth a fixed-count fit; above it the grid's resolution
 * (TOL_POINTS_PER_SEG) bounds the spare to about one segment in 64. */
static int fewer_segments(fit_job *J, sw_pwl *out, sw_err *err)
{
  while (out->nseg > 1 && out->nseg <= FEWER_MAX) {
    sw_pwl p;
    sw_compare keep = J->cmp;
    double e;
    int st;
    if (!fewer_possible(J, out->nseg, &st, err)) return st;
    memset(&p, 0, sizeof p);
    st = fit_count(J, out->nseg - 1, &p, err);
    if (!st) st = measure(J, &p, &e, err);
    if (st || !(e <= J->o->tol * (1 + 1e-9))) {
      sw_pwl_free(&p);
      J->cmp = keep;
      J->have_cmp = 1;
      return absorbable(st) ? SW_OK : st; /* out stands */
    }
    sw_pwl_free(out);
    *out = p;
    J->have_cmp = 1;
  }
  return SW_OK;
}

/* ---- Tolerance fits under a cap -------------------------------------------
 * The cap bounds the work.  fit_minimax_lower counts the fewest segments
 * any model needs within tol on the samples in one greedy pass that stops
 * at the cap, so a tol beyond it is refused before any fit, with the error
 * no model of the cap's count gets below.  The count search of the fixed
 * knot schemes starts from that bound, and a count whose knots cannot meet
 * tol even on the samples is refuted in one pass instead of a full fit. */

/* Optimal minimax and interpolation find their fewest segments by the
 * greedy tube; every other scheme searches the count. */
static int greedy_scheme(const sw_fit_opts *o)
{
  return o->knots == SW_KNOTS_OPTIMAL && o->criterion != SW_FIT_LSQ;
}

/* The most segments a tolerance fit of J may make: max_segments, and for a
 * count search its own limit too; 0: no cap. */
static size_t tol_cap(const fit_job *J)
{
  const sw_fit_opts *o = J->o;
  size_t n = J->d.n > 1 ? J->d.n - 1 : 1;
  if (greedy_scheme(o)) return o->max_segments;
  if (n > COUNT_SEARCH_MAX) n = COUNT_SEARCH_MAX;
  return o->max_segments && o->max_segments < n ? o->max_segments : n;
}

static const char *scheme_name(sw_knots_scheme k)
{
  switch (k) {
  case SW_KNOTS_GEOMETRIC: return "geometric";
  case SW_KNOTS_CURVATURE: return "curvature";
  case SW_KNOTS_OPTIMAL: return "optimal";
  default: return "uniform";
  }
}

/* f rounded down to two significant digits: a stated floor stays one. */
static double down2(double f)
{
  double p;
  if (!(f > 0) || !sw_isfinite(f)) return f;
  p = pow(10, floor(log10(f)) - 1);
  return floor(f / p) * p;
}

static const char *error_word(const sw_fit_opts *o)
{
  return o->rel ? "relative error" : "error";
}

/* The refusal of a tol that needs more than cap segments on samples d. */
static int refuse_over_cap(const sw_fit_opts *o, const fit_data *d, size_t cap, sw_err *err)
{
  double f;
  int st = fit_minimax_floor(d, cap, FLOOR_RTOL, &f, err);
  if (st) return st;
  if (o->max_segments == cap)
    return sw_err_set(err, SW_ENOSOL, "tol = %g needs more than max_segments = %zu segments (no "
                      "model of %zu segments gets its %s below %.2g)", o->tol, cap, cap,
                      error_word(o), down2(f));
  return sw_err_set(err, SW_ENOSOL, "tol = %g needs more than %zu segments, the most a tolerance "
                    "fit with %s knots tries (no model of %zu segments gets its %s below %.2g)",
                    o->tol, cap, scheme_name(o->knots), cap, error_word(o), down2(f));
}

/* Refuses a tol that needs more than cap segments on samples d (cap 0: no
 * check); else *lower gets the fewest segments any model needs there. */
static int check_cap(const sw_fit_opts *o, const fit_data *d, size_t cap, size_t *lower,
                     sw_err *err)
{
  size_t m;
  int st;
  *lower = 1;
  if (!cap) return SW_OK;
  if ((st = fit_minimax_lower(d, o->tol * (1 + TOL_SLACK), cap, &m, err))) return st;
  if (m == SIZE_MAX) return SW_OK; /* not even one run fits: the fit itself says why */
  if (m > cap) return refuse_over_cap(o, d, cap, err);
  *lower = m;
  return SW_OK;
}

/* An analytic curve's tol grid may take 10^5 to 10^6 evaluations; any
 * samples of the curve bound the count, so a tol beyond max_segments is
 * refused first on the grid a fit of max_segments would take (its floor
 * then as close as such a fit's). */
static int coarse_cap_check(const sw_curve *c, const sw_fit_opts *o, sw_err *err)
{
  sw_fit_opts o2 = *o;
  fit_data d;
  size_t lower;
  int st;
  if (c->kind == SW_CURVE_SAMPLES || !(o->tol > 0) || !o->max_segments) return SW_OK;
  if (o->criterion == SW_FIT_TANGENT) return SW_OK;
  o2.tol = 0;
  o2.segments = o->max_segments;
  o2.knots = SW_KNOTS_OPTIMAL;
  if ((st = prepare(c, &o2, &d, err))) return st;
  st = check_cap(o, &d, o->max_segments, &lower, err);
  fit_data_free(&d);
  return st;
}

/* The fewest-segment model against the caller's cap (freed when above);
 * spare: one segment more may stand for now, fewer_segments may save it. */
static int within_cap(const fit_job *J, sw_pwl *out, int spare, sw_err *err)
{
  const sw_fit_opts *o = J->o;
  size_t n = out->nseg, cap = o->max_segments;
  if (spare && o->criterion == SW_FIT_MINIMAX && cap < FEWER_MAX) cap++;
  if (!o->max_segments || n <= cap) return SW_OK;
  sw_pwl_free(out);
  return sw_err_set(err, SW_ENOSOL, "tol = %g needs more than max_segments = %zu segments: the "
                    "fewest found is %zu (any model needs at least %zu)", o->tol,
                    o->max_segments, n, J->lower);
}

/* Fewest segments for optimal minimax and interpolation: the greedy tube.
 * Its knots sit on samples: an analytic curve needing many segments gets
 * a grid of TOL_POINTS_PER_SEG points a segment and a second pass. */
static int tol_optimal(fit_job *J, sw_pwl *out, sw_err *err)
{
  const sw_fit_opts *o = J->o;
  int st;
  if ((st = tol_greedy(J, out, err))) return st;
  if ((st = within_cap(J, out, 1, err))) return st;
  if (J->d.analytic && !o->grid && J->d.n < TOL_POINTS_PER_SEG * out->nseg) {
    sw_fit_opts o2 = *o;
    fit_data nd;
    size_t want = TOL_POINTS_PER_SEG * out->nseg + 1;
    o2.grid = want < TOL_MAX_GRID ? want : TOL_MAX_GRID;
    if (o2.grid > J->d.n) {
      if ((st = prepare(J->c, &o2, &nd, err))) { sw_pwl_free(out); return st; }
      fit_data_free(&J->d);
      J->d = nd;
      sw_pwl_free(out);
      if ((st = tol_greedy(J, out, err))) return st;
      if ((st = within_cap(J, out, 1, err))) return st;
    }
  }
  if (o->criterion == SW_FIT_MINIMAX && (st = fewer_segments(J, out, err))) {
    sw_pwl_free(out);
    return st;
  }
  return within_cap(J, out, 0, err);
}

/* The knots of J's scheme for n segments, made samples of J's data. */
static int scheme_knots(fit_job *J, size_t n, double **K, sw_err *err)
{
  int st;
  *K = sw_alloc(n + 1, sizeof **K, err);
  if (!*K) return SW_ENOMEM;
  st = knots_for(J, n, *K, err);
  if (!st) st = fit_data_insert(&J->d, J->c, *K, n + 1, J->o->rel, J->o->rel_floor, err);
  if (st) { free(*K); *K = NULL; }
  return st;
}

/* The minimax on the scheme's knots for n segments, the best any criterion
 * gets on them: *e = INFINITY when it cannot meet the level cap on the
 * samples (one pass), else its level searched to rtol. */
static int knots_level(fit_job *J, size_t n, double cap, double rtol, double *e, sw_err *err)
{
  fit_level_search ls = {cap, cap, rtol, 1};
  sw_pwl p;
  double *K;
  int st;
  if (!(cap > 0)) { ls.lo = ls.hi = 0; ls.capped = 0; } /* no cap: the whole range */
  memset(&p, 0, sizeof p);
  if ((st = scheme_knots(J, n, &K, err))) return st;
  st = fit_minimax_fixed_from(&J->d, K, n, J->o->continuous, &J->cons, &ls, &p, e, &J->iters,
                              err);
  free(K);
  sw_pwl_free(&p);
  return st;
}

/* *e: the error of the scheme's model of n segments against the curve,
 * INFINITY when its knots cannot meet tol even on the samples. */
static int count_error(fit_job *J, size_t n, double *e, sw_err *err)
{
  sw_pwl m;
  int st;
  *e = INFINITY;
  J->iters++;
  if (J->o->knots != SW_KNOTS_OPTIMAL) { /* free knots (lsq) have no fixed knots to refute */
    if ((st = knots_level(J, n, J->o->tol * (1 + TOL_SLACK), 1, e, err))) return st;
    if (*e == INFINITY) return SW_OK;
  }
  memset(&m, 0, sizeof m);
  st = fit_count(J, n, &m, err);
  if (!st) st = measure(J, &m, e, err);
  sw_pwl_free(&m);
  return st;
}

/* A fixed knot scheme that does not meet tol within the cap, where other
 * knots may (the lower bound is within it); e: its error at the cap. */
static int refuse_scheme(fit_job *J, size_t cap, double e, sw_err *err)
{
  const sw_fit_opts *o = J->o;
  char why[160];
  int st;
  if (e == INFINITY) { /* refuted on the samples: the best these knots allow, from below */
    if ((st = knots_level(J, cap, 0, KNOTS_FLOOR_RTOL, &e, err))) return st;
    snprintf(why, sizeof why, "at %zu segments these knots cannot get the %s below %.2g", cap,
             error_word(o), down2(e * (1 - KNOTS_FLOOR_RTOL)));
  } else {
    snprintf(why, sizeof why, "the model of %zu segments is %.2g off", cap, e);
  }
  if (o->max_segments == cap)
    return sw_err_set(err, SW_ENOSOL, "tol = %g needs more than max_segments = %zu segments with "
                      "%s knots (%s%s)", o->tol, cap, scheme_name(o->knots), why,
                      o->knots != SW_KNOTS_OPTIMAL ? "; knots = \"optimal\" may need fewer" : "");
  return sw_err_set(err, SW_ENOSOL, "no model of up to %zu segments with %s knots meets tol = %g "
                    "(%s)", cap, scheme_name(o->knots), o->tol, why);
}

/* Fewest segments of a fixed knot scheme: doubling from the lower bound,
 * then bisection. */
static int tol_count_search(fit_job *J, sw_pwl *out, sw_err *err)
{
  size_t nmax = tol_cap(J), lo = J->lower - 1, hi = J->lower;
  double e;
  int st;
  if (hi > nmax) hi = nmax;
  for (;;) {
    if ((st = count_error(J, hi, &e, err))) return st;
    if (e <= J->o->tol) break;
    lo = hi;
    if (hi >= nmax) return refuse_scheme(J, nmax, e, err);
    hi = hi * 2 > nmax ? nmax : hi * 2;
  }
  while (hi - lo > 1) {
    size_t mid = (lo + hi) / 2;
    st = count_error(J, mid, &e, err);
    if (!absorbable(st)) return st;
    if (!st && e <= J->o->tol) hi = mid; else lo = mid;
  }
  return fit_count(J, hi, out, err);
}

/* A through point farther than tol from the curve cannot be met. */
static int through_within_tol(const fit_job *J, sw_err *err)
{
  const sw_fit_opts *o = J->o;
  size_t i;
  int st;
  for (i = 0; i < o->nthrough; i++) {
    double f;
    if ((st = sw_curve_eval(J->c, o->through_x[i], &f, err))) return st;
    if (fabs(o->through_y[i] - f) > o->tol * fit_scale_of(f, o->rel, o->rel_floor))
      return sw_err_set(err, SW_ENOSOL, "through[%zu] = (%g, %g) lies farther than tol = %g from "
                        "the curve (%g there)", i + 1, o->through_x[i], o->through_y[i], o->tol, f);
  }
  return SW_OK;
}

/* Fewest segments within tol, within the cap. */
static int fit_tol(fit_job *J, sw_pwl *out, sw_err *err)
{
  int st;
  if ((st = through_within_tol(J, err))) return st;
  if ((st = check_cap(J->o, &J->d, tol_cap(J), &J->lower, err))) return st;
  if (greedy_scheme(J->o)) return tol_optimal(J, out, err);
  return tol_count_search(J, out, err);
}

static int fit_tangent(fit_job *J, sw_pwl *out, sw_err *err)
{
  const sw_fit_opts *o = J->o;
  double f, s;
  int st;
  if ((st = sw_curve_eval(J->c, o->at, &f, err)) || (st = sw_curve_deriv(J->c, o->at, &s, err)))
    return st;
  if (!sw_isfinite(s))
    return sw_err_set(err, SW_ENUMERIC, "the curve's slope at at = %g is not finite", o->at);
  if ((st = sw_pwl_alloc(out, 1, err))) return st;
  out->x[0] = o->lo;
  out->x[1] = o->hi;
  out->ya[0] = f + s * (o->lo - o->at);
  out->yb[0] = f + s * (o->hi - o->at);
  if ((st = sw_pwl_finish(out, err))) sw_pwl_free(out);
  return st;
}

static size_t distinct_x(const fit_data *d)
{
  size_t i, m = d->n ? 1 : 0;
  for (i = 1; i < d->n; i++) m += d->x[i] > d->x[i - 1];
  return m;
}

int sw_fit(const sw_curve *c, const sw_fit_opts *opts, sw_pwl *out, sw_fit_info *info,
           sw_err *err)
{
  const sw_fit_opts *o;
  fit_job J;
  fit_resolved R;
  sw_compare cmp;
  int st;
  memset(out, 0, sizeof *out);
  memset(info, 0, sizeof *info);
  memset(&J, 0, sizeof J);
  if ((st = fit_opts_resolve(c, opts, &R, err))) return st;
  o = &R.o;
  J.c = c;
  J.o = o;
  if ((st = coarse_cap_check(c, o, err)) || (st = prepare(c, o, &J.d, err))) goto done;
  if (c->kind == SW_CURVE_SAMPLES && !(o->tol > 0) && o->knots != SW_KNOTS_LIST &&
      o->segments + 1 > distinct_x(&J.d)) {
    st = sw_err_set(err, SW_EINVAL, "segments (%zu) needs at least %zu samples in [%g, %g]; the "
                    "curve has %zu there (counting the range ends)", o->segments, o->segments + 1,
                    o->lo, o->hi, distinct_x(&J.d));
    goto done;
  }
  J.cons.has_first = o->has_slope_first;
  J.cons.slope_first = o->slope_first;
  J.cons.has_last = o->has_slope_last;
  J.cons.slope_last = o->slope_last;
  if (o->monotone) J.cons.dir = J.d.y[J.d.n - 1] >= J.d.y[0] ? 1 : -1;
  if (o->criterion == SW_FIT_TANGENT) st = fit_tangent(&J, out, err);
  else if (o->tol > 0) st = fit_tol(&J, out, err);
  else st = fit_count(&J, o->knots == SW_KNOTS_LIST ? o->nknot_list - 1 : o->segments, out, err);
  if (st) goto done;
  if (J.have_cmp) cmp = J.cmp;
  else if ((st = fit_recheck(out, c, o->lo, o->hi, COMPARE_GRID, o->rel_floor, &cmp, err)))
    goto done;
  info->max_abs = cmp.max_abs;
  info->x_abs = cmp.x_abs;
  info->max_rel = cmp.rel_undefined ? NAN : cmp.max_rel;
  info->x_rel = cmp.rel_undefined ? NAN : cmp.x_rel;
  info->rms = cmp.rms;
  info->iterations = J.iters;
  info->internal = J.internal;
  info->used = *o;
  info->used.knot_list = info->used.through_x = info->used.through_y = NULL;
done:
  if (st) sw_pwl_free(out);
  fit_data_free(&J.d);
  fit_opts_release(&R);
  return st;
}

/* Each segment's own error: its line alone, compared as m:compare does (on
 * its own knots, so exact for sampled curves and a jump's side counted). */
int sw_fit_segment_errors(const sw_pwl *m, const sw_curve *c, double rel_floor, double *max_abs,
                          double *x_abs, double *max_rel, sw_err *err)
{
  sw_pwl one;
  size_t k;
  int st;
  memset(&one, 0, sizeof one);
  if ((st = sw_pwl_alloc(&one, 1, err))) return st;
  for (k = 0; k < m->nseg; k++) {
    sw_compare cmp;
    one.x[0] = m->x[k];
    one.x[1] = m->x[k + 1];
    one.ya[0] = m->ya[k];
    one.yb[0] = m->yb[k];
    st = sw_pwl_finish(&one, err);
    if (!st) st = sw_pwl_compare(&one, c, one.x[0], one.x[1], 201, rel_floor, &cmp, err);
    if (st) break;
    max_abs[k] = cmp.max_abs;
    x_abs[k] = cmp.x_abs;
    max_rel[k] = cmp.rel_undefined ? NAN : cmp.max_rel;
  }
  sw_pwl_free(&one);
  return st;
}
