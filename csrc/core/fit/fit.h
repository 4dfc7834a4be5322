/* Fitting a PWL model to a curve over an operating range: criteria
 * (minimax, least squares, interpolation, tangent, chord), breakpoint
 * schemes (uniform, geometric, curvature, optimal, explicit) and fewest
 * segments for a tolerance.  Every path works on a sample set: the curve's
 * own samples, or a dense grid of an analytic curve; reported errors are
 * always rechecked against the curve itself. */
#ifndef SW_FIT_H
#define SW_FIT_H

#include <stddef.h>
#include "err/sw_err.h"
#include "curve/curve.h"
#include "pwl/pwl.h"

typedef enum {
  SW_FIT_MINIMAX = 1,
  SW_FIT_LSQ,
  SW_FIT_INTERP,
  SW_FIT_TANGENT,
  SW_FIT_CHORD
} sw_fit_criterion;

typedef enum {
  SW_KNOTS_AUTO = 0,        /* "optimal" for minimax and lsq, "uniform" otherwise */
  SW_KNOTS_UNIFORM = 1,
  SW_KNOTS_GEOMETRIC,
  SW_KNOTS_CURVATURE,
  SW_KNOTS_OPTIMAL,
  SW_KNOTS_LIST
} sw_knots_scheme;

/* Options of a fit.  Every rule about them (ranges, defaults, which go
 * together) lives in fit_opts.c, so the core used without Lua checks the
 * same things.  NaN in lo, hi, tol, rel_floor and offset, and 0 in
 * segments, mean "not given". */
typedef struct sw_fit_opts {
  double lo, hi;            /* operating range, inside the curve's domain (NaN: the domain) */
  size_t segments;          /* fixed count (0: 1 for tangent/chord, else 4, unless tol) */
  double tol;               /* > 0: fewest segments whose error stays within tol */
  sw_knots_scheme knots;
  const double *knot_list;  /* SW_KNOTS_LIST: increasing knots in [lo, hi]; ends added */
  size_t nknot_list;
  sw_fit_criterion criterion;
  int rel;                  /* 0: absolute error, 1: relative error (fraction) */
  double rel_floor;         /* smallest |y| used as denominator; NaN or 0: none */
  int continuous;
  int has_at;               /* tangent: operating point */
  double at;
  const double *through_x, *through_y; /* points the model must pass through (any order) */
  size_t nthrough;
  int has_slope_first, has_slope_last;
  double slope_first, slope_last;
  int monotone;             /* 1: model slopes follow the curve's direction */
  size_t grid;              /* samples of an analytic curve; 0: default */
  size_t max_segments;      /* tol: no model above this count (an error); 0: no cap */
  double offset;            /* geometric knots: spacing grows from this x */
} sw_fit_opts;

typedef struct sw_fit_info {
  double max_abs, x_abs;    /* rechecked against the curve */
  double max_rel, x_rel;    /* NaN when undefined (curve reaches 0, no floor) */
  double rms;
  size_t iterations;        /* bisection steps, exchange sweeps or search steps */
  double internal;          /* the method's own error estimate on its samples */
  sw_fit_opts used;         /* the options as resolved (defaults filled; no lists) */
} sw_fit_info;

/* Sets every option to "not given": minimax, absolute error, continuous;
 * the range, count and knot scheme are resolved by sw_fit. */
void sw_fit_opts_init(sw_fit_opts *o);

/* Sets the count option named key ("segments", "max_segments" or "grid")
 * from a number, refusing one that is not a whole number in its range. */
int sw_fit_set_count(sw_fit_opts *o, const char *key, double v, sw_err *err);

/* Fits curve c with options o into out (allocated here; freed on failure). */
int sw_fit(const sw_curve *c, const sw_fit_opts *o, sw_pwl *out,
           sw_fit_info *info, sw_err *err);

/* Error of each segment k of m alone against c over [x[k], x[k+1]]:
 * caller-owned arrays of m->nseg entries; max_rel entries NaN when undefined. */
int sw_fit_segment_errors(const sw_pwl *m, const sw_curve *c, double rel_floor,
                          double *max_abs, double *x_abs, double *max_rel,
                          sw_err *err);

#endif
