/* Breakpoint schemes (fit_knots.c). */
#ifndef SW_FIT_KNOTS_H
#define SW_FIT_KNOTS_H

#include <stddef.h>
#include "fit/fit_data.h"

/* Knot schemes (fit_knots.c): nseg + 1 knots from lo to hi. */
int fit_knots_uniform(double lo, double hi, size_t nseg, double *k, sw_err *err);
int fit_knots_geometric(double lo, double hi, double offset, size_t nseg, double *k, sw_err *err);
int fit_knots_curvature(const sw_curve *c, const fit_data *d, double lo,
                        double hi, size_t nseg, double power, double *k,
                        sw_err *err);

#endif
