/* The error of a fitted model against the curve itself (fit_check.c). */
#ifndef SW_FIT_CHECK_H
#define SW_FIT_CHECK_H

#include <stddef.h>
#include "err/sw_err.h"
#include "curve/curve.h"
#include "pwl/pwl.h"

/* sw_pwl_compare of m against c on [lo, hi] with n grid points, plus (for
 * analytic curves) a search for each segment's own error peaks
 * (fit_check.c). */
int fit_recheck(const sw_pwl *m, const sw_curve *c, double lo, double hi, size_t n,
                double rel_floor, sw_compare *cmp, sw_err *err);

#endif
