/* The error of a fitted model against the curve itself: the comparison of
 * pwl_compare.c, which is exact for sampled curves and, for laws and
 * functions, refines every grid maximum on each segment's own line (both
 * ends of a segment included, so a jump's other side counts) with GSL's
 * Brent minimiser.  One place, so that the fit's report and m:compare
 * state the same figure. */
#include "fit/fit_check.h"

int fit_recheck(const sw_pwl *m, const sw_curve *c, double lo, double hi, size_t n,
                double rel_floor, sw_compare *cmp, sw_err *err)
{
  return sw_pwl_compare(m, c, lo, hi, n, rel_floor, cmp, err);
}
