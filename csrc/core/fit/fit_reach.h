/* Continuous fewest-segments search over reachable sets (fit_reach.c). */
#ifndef SW_FIT_REACH_H
#define SW_FIT_REACH_H

#include <stddef.h>
#include "fit/fit_data.h"

/* Continuous fewest-segments search over reachable sets:
 * *count segments (SIZE_MAX when none within maxseg); knots and their
 * values (room for maxseg + 1) when given. */
int fit_reach(const fit_data *d, double e, const fit_cons *cons, size_t maxseg, const double *extra,
              size_t nextra, size_t *count, double *kx, double *ky, sw_err *err);
/* The same count with knots among the abscissae cand only (which must hold
 * x[0]'s and the last sample's); no model. */
int fit_reach_among(const fit_data *d, double e, const fit_cons *cons, size_t maxseg,
                    const double *cand, size_t ncand, size_t *count, sw_err *err);
/* The candidate knots fit_reach takes on d (abscissae, sorted, distinct). */
int fit_reach_candidates(const fit_data *d, const double *extra, size_t nextra, double **xs,
                         size_t *n, sw_err *err);

#endif
