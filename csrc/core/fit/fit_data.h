/* The sample set every fitting method shares, and the error-level helpers
 * of the bisections (fit_data.c): a leaf under the methods and the dispatcher. */
#ifndef SW_FIT_DATA_H
#define SW_FIT_DATA_H

#include <stddef.h>
#include "err/sw_err.h"
#include "curve/curve.h"
#include "pwl/pwl.h"

/* The sample set every method works on.  s[i] scales the tolerance tube
 * (half-width e*s[i]; 0 for points the model must pass through), w[i] is
 * the least-squares weight (quadrature weight or 1; 0 for inserted points). */
typedef struct fit_data {
  size_t n;
  double *x, *y, *s, *w;
  int analytic;             /* 1: grid of a law or function */
} fit_data;

/* Per-fit constraints the tube methods honour. */
typedef struct fit_cons {
  int has_first, has_last;
  double slope_first, slope_last;
  int dir;                  /* monotone: +1 non-decreasing, -1 non-increasing, 0 free */
} fit_cons;

void fit_data_free(fit_data *d);
size_t fit_lower(const fit_data *d, double x);   /* first i with x[i] >= x */
size_t fit_upper(const fit_data *d, double x);   /* first i with x[i] > x */
/* Inserts points at xs (curve values) so that every knot is a sample. */
int fit_data_insert(fit_data *d, const sw_curve *c, const double *xs, size_t m,
                    int rel, double rel_floor, sw_err *err);
/* Merges sorted points (xs, ys, ss, weight wv) into d; points at an
 * existing x are added too when keep_dup, else skipped. */
int fit_data_merge(fit_data *d, const double *xs, const double *ys, const double *ss,
                   double wv, size_t m, int keep_dup, sw_err *err);
/* Largest |m - y| / s over the samples with s > 0. */
double fit_data_maxerr(const fit_data *d, const sw_pwl *m);

/* Tube scale of a sample value: 1 (absolute error) or max(|y|, floor)
 * (relative error); the one rule every method and the report share. */
double fit_scale_of(double y, int rel, double floor);
/* A level every constant line at the data's centre meets (bisection start). */
double fit_start_level(const fit_data *d);
/* Next level to try between an infeasible elo and a feasible ehi: the
 * middle, or the geometric middle (ehi / 1024 while elo is 0) when the two
 * are decades apart, so a start level far above the answer (a tiny
 * rel_floor puts it near 1e300) costs tens of steps, not hundreds. */
double fit_mid_level(double elo, double ehi);
/* Cap on the steps of a level bisection (a safeguard; none comes near). */
#define FIT_BISECT_STEPS 400

#endif
