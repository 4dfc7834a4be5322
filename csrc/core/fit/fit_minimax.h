/* Minimax fits as tube problems: fixed knots, a fixed count with optimal
 * knots, and the fewest segments for a level (fit_minimax.c). */
#ifndef SW_FIT_MINIMAX_H
#define SW_FIT_MINIMAX_H

#include <stddef.h>
#include "fit/fit_data.h"

int fit_minimax_fixed(const fit_data *d, const double *knots, size_t nseg,
                      int continuous, const fit_cons *cons, sw_pwl *out,
                      double *e_out, size_t *iters, sw_err *err);
/* The same by bisection in [e_lo, e_hi] (e_hi <= 0: the whole range) to a
 * relative precision rtol; capped: when e_hi itself is infeasible, *e_out
 * = INFINITY and no model (out untouched) instead of raising the level. */
int fit_minimax_fixed_from(const fit_data *d, const double *knots, size_t nseg, int continuous,
                           const fit_cons *cons, double e_lo, double e_hi, double rtol, int capped,
                           sw_pwl *out, double *e_out, size_t *iters, sw_err *err);
int fit_minimax_tol(const fit_data *d, double e, int continuous,
                    const fit_cons *cons, sw_pwl *out, sw_err *err);
int fit_minimax_count(const fit_data *d, size_t nseg, int continuous,
                      const fit_cons *cons, sw_pwl *out, double *e_out,
                      size_t *iters, sw_err *err);

#endif
