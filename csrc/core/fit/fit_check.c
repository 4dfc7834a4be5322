/* The error of a fitted model against the curve itself.  The comparison of
 * pwl_compare.c samples a grid plus the knots; a model whose segments
 * crowd into a knee has many segments between two grid points, and there
 * the peak in a segment's middle is never sampled.  For analytic curves
 * this adds, in every segment, a golden-section search for the largest
 * error of each sign (a line minus a convex or concave piece has one
 * interior extremum of each). */
#include "fit/fit_check.h"

#include <math.h>

#define GOLDEN_STEPS 40

typedef struct probe {
  const sw_pwl *m;
  const sw_curve *c;
  size_t k;
  double floor;
  int rel, sign;
} probe;

static int probe_at(const probe *p, double x, double *v, double *f, sw_err *err)
{
  int st = sw_curve_eval(p->c, x, f, err);
  double d;
  if (st) return st;
  d = (sw_pwl_line(p->m, p->k, x) - *f) * p->sign;
  if (p->rel) d /= fabs(*f) > p->floor ? fabs(*f) : p->floor;
  *v = d == d ? d : -INFINITY;
  return SW_OK;
}

/* Largest signed error of segment k on (a, b): value and place. */
static int golden_max(const probe *p, double a, double b, double *best, double *xbest, sw_err *err)
{
  const double g = 0.6180339887498949;
  double x1 = b - g * (b - a), x2 = a + g * (b - a), f1, f2, f;
  int st, it;
  if ((st = probe_at(p, x1, &f1, &f, err)) || (st = probe_at(p, x2, &f2, &f, err))) return st;
  for (it = 0; it < GOLDEN_STEPS; it++) {
    if (f1 >= f2) {
      b = x2; x2 = x1; f2 = f1; x1 = b - g * (b - a);
      if ((st = probe_at(p, x1, &f1, &f, err))) return st;
    } else {
      a = x1; x1 = x2; f1 = f2; x2 = a + g * (b - a);
      if ((st = probe_at(p, x2, &f2, &f, err))) return st;
    }
  }
  *best = f1 >= f2 ? f1 : f2;
  *xbest = f1 >= f2 ? x1 : x2;
  return SW_OK;
}

/* The ends of each segment's own line: a model that jumps at a knot takes
 * one side's value there, but the error next to the knot on the other side
 * comes as close as one likes to that line's error at the knot. */
static int segment_ends(const sw_pwl *m, const sw_curve *c, size_t k, double a, double b,
                        double rel_floor, int rel_ok, sw_compare *cmp, sw_err *err)
{
  int end;
  for (end = 0; end < 2; end++) {
    double x = end ? b : a, f, d;
    int st = sw_curve_eval(c, x, &f, err);
    if (st) return st;
    d = fabs(sw_pwl_line(m, k, x) - f);
    if (d > cmp->max_abs) { cmp->max_abs = d; cmp->x_abs = x; }
    if (rel_ok && (rel_floor > 0 || f != 0)) {
      double r = d / (fabs(f) > rel_floor ? fabs(f) : rel_floor);
      if (r > cmp->max_rel) { cmp->max_rel = r; cmp->x_rel = x; }
    }
  }
  return SW_OK;
}

int fit_recheck(const sw_pwl *m, const sw_curve *c, double lo, double hi, size_t n,
                double rel_floor, sw_compare *cmp, sw_err *err)
{
  size_t k;
  int st = sw_pwl_compare(m, c, lo, hi, n, rel_floor, cmp, err), rel, sign;
  /* sampled curves: the error is the one at the samples (as m:compare's) */
  if (st || c->kind == SW_CURVE_SAMPLES) return st;
  for (k = 0; k < m->nseg; k++) {
    double a = m->x[k] > lo ? m->x[k] : lo, b = m->x[k + 1] < hi ? m->x[k + 1] : hi;
    if (!(b > a)) continue;
    if ((st = segment_ends(m, c, k, a, b, rel_floor > 0 ? rel_floor : 0, !cmp->rel_undefined, cmp, err)))
      return st;
    for (rel = 0; rel <= (cmp->rel_undefined ? 0 : 1); rel++)
      for (sign = -1; sign <= 1; sign += 2) {
        probe p;
        double v, x;
        p.m = m; p.c = c; p.k = k; p.floor = rel_floor > 0 ? rel_floor : 0;
        p.rel = rel; p.sign = sign;
        if ((st = golden_max(&p, a, b, &v, &x, err))) return st;
        if (!rel && v > cmp->max_abs) { cmp->max_abs = v; cmp->x_abs = x; }
        if (rel && v > cmp->max_rel) { cmp->max_rel = v; cmp->x_rel = x; }
      }
  }
  return SW_OK;
}
