/* Batch evaluation of a PWL model over many points. */
#include "pwl.h"

int sw_pwl_eval_many(const sw_pwl *m, const double *x, double *y, size_t n, sw_err *err)
{
  size_t i;
  for (i = 0; i < n; i++) {
    int st = sw_pwl_eval(m, x[i], &y[i], err);
    if (st) return sw_err_prefix(err, "at index %zu: ", i + 1);
  }
  return SW_OK;
}
