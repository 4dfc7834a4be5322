/* Interpolation through the samples with the fewest chords (fit_interp.c). */
#ifndef SW_FIT_INTERP_H
#define SW_FIT_INTERP_H

#include <stddef.h>
#include "fit/fit_data.h"

int fit_interp_tol(const fit_data *d, double e, sw_pwl *out, sw_err *err);
int fit_interp_count(const fit_data *d, size_t nseg, sw_pwl *out,
                     double *e_out, size_t *iters, sw_err *err);

#endif
