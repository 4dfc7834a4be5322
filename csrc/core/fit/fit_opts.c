/* Fit options: every check and every default in one place, so that a fit
 * made from Lua and one made by a C caller obey the same rules and give
 * the same messages.  The binding only converts Lua values. */
#include "fit/fit_opts.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#define MAX_SEGMENTS 100000
#define MAX_GRID 10000000

void sw_fit_opts_init(sw_fit_opts *o)
{
  memset(o, 0, sizeof *o);
  o->lo = o->hi = o->tol = o->rel_floor = o->offset = NAN;
  o->knots = SW_KNOTS_AUTO;
  o->criterion = SW_FIT_MINIMAX;
  o->continuous = 1;
}

int sw_fit_set_count(sw_fit_opts *o, const char *key, double v, sw_err *err)
{
  int whole = sw_isfinite(v) && v == floor(v);
  if (strcmp(key, "segments") == 0) {
    if (!whole || v < 1)
      return sw_err_set(err, SW_EINVAL, "segments (%g) must be an integer of at least 1", v);
    if (v > MAX_SEGMENTS)
      return sw_err_set(err, SW_EINVAL, "segments (%g) is too large (at most %d)", v,
                        MAX_SEGMENTS);
    o->segments = (size_t)v;
  } else if (strcmp(key, "max_segments") == 0) {
    if (!whole || v < 1 || v > MAX_SEGMENTS)
      return sw_err_set(err, SW_EINVAL, "max_segments (%g) must be an integer from 1 to %d", v,
                        MAX_SEGMENTS);
    o->max_segments = (size_t)v;
  } else if (strcmp(key, "grid") == 0) {
    if (sw_isfinite(v) && v > MAX_GRID)
      return sw_err_set(err, SW_EINVAL, "grid (%g) is too large (at most %d)", v, MAX_GRID);
    if (!whole || v < 3)
      return sw_err_set(err, SW_EINVAL, "grid (%g) must be an integer of at least 3", v);
    o->grid = (size_t)v;
  } else {
    return sw_err_set(err, SW_EINVAL, "no count option named '%s'", key);
  }
  return SW_OK;
}

/* A given number must be finite; NaN stands for "not given". */
static int check_finite(const char *name, double v, sw_err *err)
{
  if (v == v && !sw_isfinite(v))
    return sw_err_set(err, SW_EINVAL, "%s must be finite (got %g)", name, v);
  return SW_OK;
}

static int check_numbers(const sw_fit_opts *o, sw_err *err)
{
  int st;
  if ((st = check_finite("lo", o->lo, err)) || (st = check_finite("hi", o->hi, err)) ||
      (st = check_finite("tol", o->tol, err)) ||
      (st = check_finite("rel_floor", o->rel_floor, err)) ||
      (st = check_finite("offset", o->offset, err)))
    return st;
  if (o->has_at && (st = check_finite("at", o->at, err))) return st;
  if (o->has_slope_first && (st = check_finite("slope_first", o->slope_first, err))) return st;
  if (o->has_slope_last && (st = check_finite("slope_last", o->slope_last, err))) return st;
  if (o->tol == o->tol && !(o->tol > 0))
    return sw_err_set(err, SW_EINVAL, "tol (%g) must be positive", o->tol);
  if (o->rel && o->tol >= 1) /* a band as wide as the curve: a percentage given as a number */
    return sw_err_set(err, SW_EINVAL, "tol (%g) is a relative error of %g %%: with error = "
                      "\"rel\" tol is a fraction below 1 (1 %% is 0.01)", o->tol, 100 * o->tol);
  if (o->rel_floor == o->rel_floor && !(o->rel_floor > 0))
    return sw_err_set(err, SW_EINVAL, "rel_floor (%g) must be positive", o->rel_floor);
  return SW_OK;
}

/* The operating range: the curve's domain where not given. */
static int resolve_range(const sw_curve *c, sw_fit_opts *o, sw_err *err)
{
  if (o->lo != o->lo) o->lo = c->lo;
  if (o->hi != o->hi) o->hi = c->hi;
  if (!sw_isfinite(o->lo) || !sw_isfinite(o->hi))
    return sw_err_set(err, SW_EINVAL, "the curve's domain [%g, %g] is unbounded; give lo and hi "
                      "(the operating range)", o->lo, o->hi);
  if (!(o->lo < o->hi))
    return sw_err_set(err, SW_EINVAL, "lo (%g) must be below hi (%g)", o->lo, o->hi);
  if (o->lo < c->lo || o->hi > c->hi)
    return sw_err_set(err, SW_ERANGE, "range [%g, %g] is outside the curve's domain [%g, %g]",
                      o->lo, o->hi, c->lo, c->hi);
  return SW_OK;
}

/* The knot list, checked, with lo and hi added where missing (owned). */
static int resolve_knot_list(fit_resolved *r, sw_err *err)
{
  sw_fit_opts *o = &r->o;
  size_t i, n = 0;
  if (o->tol > 0)
    return sw_err_set(err, SW_EINVAL, "tol and an explicit knot list exclude each other");
  for (i = 0; i < o->nknot_list; i++) {
    double x = o->knot_list[i];
    if (!sw_isfinite(x) || x < o->lo || x > o->hi)
      return sw_err_set(err, SW_EINVAL, "knots[%zu] = %g is outside the range [%g, %g]", i + 1, x,
                        o->lo, o->hi);
    if (i > 0 && !(x > o->knot_list[i - 1]))
      return sw_err_set(err, SW_EINVAL, "knots must be strictly increasing (knots[%zu] = %g "
                        "after knots[%zu] = %g)", i + 1, x, i, o->knot_list[i - 1]);
  }
  if (!(r->knots = sw_alloc(o->nknot_list + 2, sizeof *r->knots, err))) return SW_ENOMEM;
  if (o->nknot_list == 0 || o->knot_list[0] != o->lo) r->knots[n++] = o->lo;
  for (i = 0; i < o->nknot_list; i++) r->knots[n++] = o->knot_list[i];
  if (r->knots[n - 1] != o->hi) r->knots[n++] = o->hi;
  if (o->segments && o->segments != n - 1)
    return sw_err_set(err, SW_EINVAL, "segments (%zu) disagrees with the knot list (%zu segments)",
                      o->segments, n - 1);
  o->knot_list = r->knots;
  o->nknot_list = n;
  o->segments = n - 1;
  return SW_OK;
}

/* The count, the tolerance and the knot scheme, with their defaults. */
static int resolve_counts(fit_resolved *r, sw_err *err)
{
  sw_fit_opts *o = &r->o;
  int st;
  if (o->tol > 0 && o->segments)
    return sw_err_set(err, SW_EINVAL, "give segments or tol, not both");
  if (o->max_segments && !(o->tol > 0))
    return sw_err_set(err, SW_EINVAL, "max_segments goes with tol (a cap on the fewest-segment "
                      "search)");
  if (o->knots == SW_KNOTS_LIST && (st = resolve_knot_list(r, err))) return st;
  if (o->knots == SW_KNOTS_AUTO)
    o->knots = o->criterion == SW_FIT_MINIMAX || o->criterion == SW_FIT_LSQ ? SW_KNOTS_OPTIMAL
                                                                           : SW_KNOTS_UNIFORM;
  if (!(o->tol > 0) && !o->segments)
    o->segments = o->criterion == SW_FIT_TANGENT || o->criterion == SW_FIT_CHORD ? 1 : 4;
  if (o->offset == o->offset && o->knots != SW_KNOTS_GEOMETRIC)
    return sw_err_set(err, SW_EINVAL, "offset applies to knots = \"geometric\" only");
  return SW_OK;
}

/* The through points sorted by x (owned copies), each inside the range. */
static int resolve_through(fit_resolved *r, sw_err *err)
{
  sw_fit_opts *o = &r->o;
  size_t n = o->nthrough, i, j;
  double *x, *y;
  if (!n) return SW_OK;
  if (!(r->through = sw_alloc(2 * n, sizeof *r->through, err))) return SW_ENOMEM;
  x = r->through;
  y = r->through + n;
  for (i = 0; i < n; i++) { /* insertion sort: a handful of points */
    double xi = o->through_x[i], yi = o->through_y[i];
    if (!sw_isfinite(xi) || !sw_isfinite(yi))
      return sw_err_set(err, SW_EINVAL, "through[%zu] must be finite", i + 1);
    for (j = i; j > 0 && x[j - 1] > xi; j--) { x[j] = x[j - 1]; y[j] = y[j - 1]; }
    x[j] = xi;
    y[j] = yi;
  }
  for (i = 0; i < n; i++)
    if (x[i] < o->lo || x[i] > o->hi)
      return sw_err_set(err, SW_EINVAL, "through[%zu] (x = %g) is outside the range [%g, %g]",
                        i + 1, x[i], o->lo, o->hi);
  o->through_x = x;
  o->through_y = y;
  return SW_OK;
}

/* What goes with the criterion. */
static int check_criterion(const sw_fit_opts *o, sw_err *err)
{
  if (o->criterion == SW_FIT_TANGENT) {
    if (!o->has_at)
      return sw_err_set(err, SW_EINVAL, "criterion 'tangent' needs at (the operating point)");
    if (!(o->at >= o->lo && o->at <= o->hi))
      return sw_err_set(err, SW_EINVAL, "at (%g) must lie in the range [%g, %g]", o->at, o->lo,
                        o->hi);
    if (o->knots != SW_KNOTS_UNIFORM)
      return sw_err_set(err, SW_EINVAL, "knots have no meaning for criterion 'tangent' (one "
                        "segment at the operating point)");
    if (o->tol > 0 || o->segments != 1)
      return sw_err_set(err, SW_EINVAL, "criterion 'tangent' gives one segment (no segments > 1, "
                        "no tol)");
  }
  if (o->criterion != SW_FIT_MINIMAX && o->criterion != SW_FIT_LSQ &&
      (o->nthrough || o->has_slope_first || o->has_slope_last || o->monotone))
    return sw_err_set(err, SW_EINVAL, "through, slope_first, slope_last and monotone apply to "
                      "criterion 'minimax' or 'lsq' only");
  if (o->monotone && !o->continuous)
    return sw_err_set(err, SW_EINVAL, "monotone with continuous = false is not supported yet");
  return SW_OK;
}

int fit_opts_resolve(const sw_curve *c, const sw_fit_opts *in, fit_resolved *r, sw_err *err)
{
  int st;
  memset(r, 0, sizeof *r);
  r->o = *in;
  if (!(st = check_numbers(&r->o, err)) && !(st = resolve_range(c, &r->o, err)) &&
      !(st = resolve_counts(r, err)) && !(st = resolve_through(r, err)) &&
      !(st = check_criterion(&r->o, err))) {
    /* "not given" becomes the methods' plain zero */
    if (r->o.tol != r->o.tol) r->o.tol = 0;
    if (r->o.rel_floor != r->o.rel_floor) r->o.rel_floor = 0;
    if (r->o.offset != r->o.offset) r->o.offset = 0;
    return SW_OK;
  }
  fit_opts_release(r);
  return st;
}

void fit_opts_release(fit_resolved *r)
{
  free(r->knots);
  free(r->through);
  r->knots = r->through = NULL;
}
