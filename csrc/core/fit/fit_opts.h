/* The one owner of the fit options' rules: checks, defaults and the lists
 * a fit works on (fit_opts.c). */
#ifndef SW_FIT_OPTS_H
#define SW_FIT_OPTS_H

#include <stddef.h>
#include "fit/fit.h"

/* The options of a fit as the methods see them: checked, defaults filled,
 * the knot list with both range ends, the through points sorted by x.
 * The lists are owned here (fit_opts_release frees them). */
typedef struct fit_resolved {
  sw_fit_opts o;
  double *knots;            /* owned copy behind o.knot_list, or NULL */
  double *through;          /* owned copies behind o.through_x / o.through_y, or NULL */
} fit_resolved;

/* Checks in against curve c and fills r; on failure r holds nothing. */
int fit_opts_resolve(const sw_curve *c, const sw_fit_opts *in, fit_resolved *r, sw_err *err);
void fit_opts_release(fit_resolved *r);

#endif
