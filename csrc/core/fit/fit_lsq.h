/* Least-squares fits with fixed or optimal knots (fit_lsq.c). */
#ifndef SW_FIT_LSQ_H
#define SW_FIT_LSQ_H

#include <stddef.h>
#include "fit/fit_data.h"

int fit_lsq_fixed(const fit_data *d, const double *knots, size_t nseg,
                  int continuous, const fit_cons *cons, const double *tx,
                  const double *ty, size_t nt, sw_pwl *out, double *sse,
                  sw_err *err);
int fit_lsq_optimal(const fit_data *d, double lo, double hi, size_t nseg,
                    int continuous, const double *start, double *knots,
                    size_t *iters, sw_err *err);

#endif
