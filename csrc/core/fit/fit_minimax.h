/* Minimax fits as tube problems: fixed knots, a fixed count with optimal
 * knots, and the fewest segments for a level (fit_minimax.c). */
#ifndef SW_FIT_MINIMAX_H
#define SW_FIT_MINIMAX_H

#include <stddef.h>
#include "fit/fit_data.h"

int fit_minimax_fixed(const fit_data *d, const double *knots, size_t nseg,
                      int continuous, const fit_cons *cons, sw_pwl *out,
                      double *e_out, size_t *iters, sw_err *err);
/* How a fixed-knot minimax searches its level: bisection in [lo, hi]
 * (hi <= 0: the whole range) to a relative precision rtol; capped: when hi
 * itself is infeasible, *e_out = INFINITY and no model (out untouched)
 * instead of raising the level. */
typedef struct fit_level_search {
  double lo, hi, rtol;
  int capped;
} fit_level_search;
/* The same with the level searched as ls says. */
int fit_minimax_fixed_from(const fit_data *d, const double *knots, size_t nseg, int continuous,
                           const fit_cons *cons, const fit_level_search *ls, sw_pwl *out,
                           double *e_out, size_t *iters, sw_err *err);
int fit_minimax_tol(const fit_data *d, double e, int continuous,
                    const fit_cons *cons, sw_pwl *out, sw_err *err);
int fit_minimax_count(const fit_data *d, size_t nseg, int continuous,
                      const fit_cons *cons, sw_pwl *out, double *e_out,
                      size_t *iters, sw_err *err);

/* Bounds for every model of d's samples (any scheme, continuous or not):
 * *m, the fewest segments within e (maxseg + 1 once above maxseg; SIZE_MAX
 * when no run of samples fits); *e, a level no model of nseg segments gets
 * below (the discontinuous optimum, from below, to relative precision rtol). */
int fit_minimax_lower(const fit_data *d, double e, size_t maxseg, size_t *m, sw_err *err);
int fit_minimax_floor(const fit_data *d, size_t nseg, double rtol, double *e, sw_err *err);

#endif
