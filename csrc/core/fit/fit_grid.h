/* The sample grid of an analytic curve (fit_grid.c). */
#ifndef SW_FIT_GRID_H
#define SW_FIT_GRID_H

#include <stddef.h>
#include "err/sw_err.h"
#include "curve/curve.h"

/* Grid of an analytic curve on [lo, hi] (fit_grid.c): about n sorted
 * distinct points into *xs (caller frees), more for a tolerance fit (tol >
 * 0) until the grid's own chord error is a small part of tol. */
int fit_grid_analytic(const sw_curve *c, double lo, double hi, size_t n, int rel,
                      double rel_floor, double tol, double **xs, size_t *nx, sw_err *err);

#endif
