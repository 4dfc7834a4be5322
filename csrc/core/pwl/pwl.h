/* The piecewise-linear model: nseg segments on knots x[0] < ... < x[nseg].
 * Segment k (0-based) is the line from (x[k], ya[k]) to (x[k+1], yb[k]);
 * the model is continuous when yb[k] == ya[k+1] for every interior knot.
 * At an interior knot of a discontinuous model the value is the right-hand
 * segment's (the segment starting there); the last knot belongs to the last
 * segment. */
#ifndef SW_PWL_H
#define SW_PWL_H

#include <stddef.h>
#include "err/sw_err.h"
#include "curve/curve.h"

typedef enum {
  SW_EXTEND_LINE = 0, /* outside the knots: continue the end segment */
  SW_EXTEND_HOLD,     /* outside the knots: hold the end value */
  SW_EXTEND_ERROR     /* outside the knots: an error */
} sw_extend;

typedef struct sw_pwl {
  size_t nseg;
  double *x;     /* nseg + 1 knots */
  double *ya;    /* value at the left end of each segment */
  double *yb;    /* value at the right end of each segment */
  double *slope; /* cached (yb - ya) / (x[k+1] - x[k]) */
  sw_extend extend;
  int continuous;
} sw_pwl;

/* Allocates room for nseg segments (zeroed).  Fitters fill x, ya, yb and
 * call sw_pwl_finish. */
int sw_pwl_alloc(sw_pwl *m, size_t nseg, sw_err *err);
/* Validates (finite, strictly increasing knots) and computes the slopes and
 * the continuity flag. */
int sw_pwl_finish(sw_pwl *m, sw_err *err);
void sw_pwl_free(sw_pwl *m);
int sw_pwl_copy(const sw_pwl *src, sw_pwl *dst, sw_err *err);

/* Continuous model through n >= 2 points. */
int sw_pwl_from_points(sw_pwl *m, const double *x, const double *y, size_t n,
                       sw_err *err);
/* Model from segment lines y = slope*x + icpt on [lo, hi]; consecutive
 * segments must share their end: hi[k] == lo[k+1]. */
int sw_pwl_from_segments(sw_pwl *m, const double *lo, const double *hi,
                         const double *slope, const double *icpt, size_t nseg,
                         sw_err *err);

/* 0-based segment holding x (clamped to the end segments outside). */
size_t sw_pwl_locate(const sw_pwl *m, double x);
/* Value of segment k's line at x (no range check). */
double sw_pwl_line(const sw_pwl *m, size_t k, double x);
/* y(x) honouring the extension rule. */
int sw_pwl_eval(const sw_pwl *m, double x, double *y, sw_err *err);
/* y may be x itself: each x[i] is read before y[i] is written. */
int sw_pwl_eval_many(const sw_pwl *m, const double *x, double *y, size_t n,
                     sw_err *err);
/* dy/dx at x (the segment's slope; 0 outside the knots under HOLD). */
int sw_pwl_slope_at(const sw_pwl *m, double x, double *s, sw_err *err);

/* Companion forms of segment k: y = e + r*x, and x = j + g*y. */
void sw_pwl_thevenin(const sw_pwl *m, size_t k, double *e, double *r);
int sw_pwl_norton(const sw_pwl *m, size_t k, double *j, double *g, sw_err *err);

/* Inverse of a continuous strictly monotone model (knots swapped). */
int sw_pwl_inverse(const sw_pwl *m, sw_pwl *out, sw_err *err);

/* y = a + b*x + sum_i c[i]*|x - beta[i]| (Chua and Kang), continuous models;
 * c and beta have nseg - 1 entries. */
int sw_pwl_canonical(const sw_pwl *m, double *a, double *b, double *c,
                     double *beta, sw_err *err);

/* Error of model against curve over [lo, hi]: max_abs and max_rel are upper
 * bounds (suprema: at a jump a one-sided limit counts) reached at x_abs and
 * x_rel, exact for sampled curves and models, refined for laws and functions. */
typedef struct sw_compare {
  double max_abs, x_abs; /* largest |m - f| and where */
  double max_rel, x_rel; /* largest |m - f| / max(|f|, rel_floor) and where */
  double rms;            /* root mean square of m - f: at the samples of a sampled
                            curve (at the points examined when none lies in
                            [lo, hi]), else over [lo, hi] */
  size_t npoints;        /* evaluation points used (before refinement) */
  int rel_undefined;     /* 1: no rel_floor and f is 0 at or crosses 0 near x_zero;
                            max_rel is then NaN */
  double x_zero;
  int exact;             /* 1: the maxima are exact (both sides piecewise linear);
                            0: grid maxima refined by GSL's Brent minimiser */
} sw_compare;

/* Sampled curves: the curve is the linear interpolant of its samples, so the
 * largest error is at a sample, a knot of the model, or (relative error with
 * rel_floor) where the curve crosses +-rel_floor: all are examined, the
 * result is exact and n is unused.  Other curves: a grid of n points plus
 * every knot and segment middle; on each segment's own line every grid
 * maximum (ends and ties too) is bracketed and refined by GSL's Brent
 * minimiser.  rel_floor <= 0 and a curve value of 0 inside the range leave
 * the relative error undefined (flagged, not an error, so the absolute
 * figures stay usable). */
int sw_pwl_compare(const sw_pwl *m, const sw_curve *c, double lo, double hi,
                   size_t n, double rel_floor, sw_compare *out, sw_err *err);
/* m against the reference model ref on [lo, hi] (inside ref's knots): exact,
 * rms over [lo, hi] in closed form. */
int sw_pwl_compare_pwl(const sw_pwl *m, const sw_pwl *ref, double lo, double hi,
                       double rel_floor, sw_compare *out, sw_err *err);

/* Model file: CSV of knots (x, y from the left, y from the right) with a
 * '#' header; written to path.tmp and renamed into place. */
int sw_pwl_save(const sw_pwl *m, const char *path, const char *xunit,
                const char *yunit, sw_err *err);
int sw_pwl_load(sw_pwl *m, const char *path, sw_err *err);

#endif
