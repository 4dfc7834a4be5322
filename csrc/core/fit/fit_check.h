/* The error of a fitted model against the curve itself (fit_check.c). */
#ifndef SW_FIT_CHECK_H
#define SW_FIT_CHECK_H

#include <stddef.h>
#include "err/sw_err.h"
#include "curve/curve.h"
#include "pwl/pwl.h"

/* The fit report's error of m against c on [lo, hi]: sw_pwl_compare with n
 * grid points (exact for sampled curves, refined for analytic ones). */
int fit_recheck(const sw_pwl *m, const sw_curve *c, double lo, double hi, size_t n,
                double rel_floor, sw_compare *cmp, sw_err *err);

#endif
