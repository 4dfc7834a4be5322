/* Sweeps and seeded Monte Carlo runs: one operating point per value of a source, gain or resistor.
 * Each point starts the assumed-state iteration from the previous point's
 * states (a warm start: neighbouring values rarely change many segments);
 * when that fails the automatic choice takes over.  The element's value is
 * restored afterwards, also on error. */
#include "net.h"

#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

int sw_net_sweep(sw_net *net, size_t el, const double *values, size_t n,
                 const int *start, double max_states, sw_net_op *ops,
                 sw_err *err)
{
  size_t m = net->ndev, k, it, nf;
  double keep = net->el[el].value;
  const char *name = net->el[el].name, *used;
  int *state = sw_alloc(m, sizeof *state, err), rc = SW_OK, have = 0;
  if (!state) return SW_ENOMEM;
  if (start) { memcpy(state, start, m * sizeof *state); have = 1; }
  for (k = 0; k < n && rc == SW_OK; k++) {
    if ((rc = sw_net_set(net, name, values[k], err)) || (rc = sw_net_prepare(net, err))) break;
    if (!have) sw_net_default_start(net, state);
    if (sw_net_assumed(net, state, 0, state, &it, NULL, NULL, err) != SW_OK) {
      if (err->code == SW_ENOMEM) { rc = SW_ENOMEM; break; }
      if ((rc = sw_net_auto(net, state, max_states, state, &it, &nf, &used, err))) {
        sw_err_prefix(err, "at %s = %g: ", name, values[k]);
        break;
      }
    }
    have = 1;
    if ((rc = sw_net_op_from_state(net, state, &ops[k], err))) { sw_err_prefix(err, "at %s = %g: ", name, values[k]); break; }
    ops[k].iterations = it;
  }
  {
    sw_err e2;
    sw_net_set(net, name, keep, &e2);
  }
  free(state);
  return rc;
}

/* Seeded Monte Carlo: run r draws value k of element el[k] as
 * nominal[k] * (1 + tol[k] * u), u uniform on [-1, 1] (gauss[k] == 0) or
 * standard normal (tol is then the relative standard deviation), from
 * GSL's MT19937 generator.  drawn receives n x k values.  Each run starts
 * from the previous run's states.  Values are restored afterwards. */
int sw_net_montecarlo(sw_net *net, const size_t *el, const double *tol,
                      const int *gauss, size_t k, size_t n, unsigned long seed,
                      double max_states, sw_net_op *ops, double *drawn,
                      sw_err *err)
{
  size_t m = net->ndev, r, q, it, nf;
  double *keep = sw_alloc(k, sizeof *keep, err);
  int *state = sw_alloc(m, sizeof *state, err), rc = SW_OK;
  const char *used;
  gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
  if (!keep || !state || !rng) {
    free(keep); free(state); gsl_rng_free(rng);
    return sw_err_set(err, SW_ENOMEM, "out of memory in montecarlo");
  }
  gsl_rng_set(rng, seed);
  for (q = 0; q < k; q++) keep[q] = net->el[el[q]].value;
  for (r = 0; r < n && rc == SW_OK; r++) {
    for (q = 0; q < k && rc == SW_OK; q++) {
      double u = gauss[q] ? gsl_ran_gaussian(rng, 1.0) : 2 * gsl_rng_uniform(rng) - 1;
      drawn[r * k + q] = keep[q] * (1 + tol[q] * u);
      rc = sw_net_set(net, net->el[el[q]].name, drawn[r * k + q], err);
    }
    if (rc || (rc = sw_net_prepare(net, err))) { sw_err_prefix(err, "run %zu: ", r + 1); break; }
    if (r == 0) sw_net_default_start(net, state);
    if (sw_net_assumed(net, state, 0, state, &it, NULL, NULL, err) != SW_OK) {
      if (err->code == SW_ENOMEM) { rc = SW_ENOMEM; break; }
      if ((rc = sw_net_auto(net, state, max_states, state, &it, &nf, &used, err))) { sw_err_prefix(err, "run %zu: ", r + 1); break; }
    }
    if ((rc = sw_net_op_from_state(net, state, &ops[r], err))) { sw_err_prefix(err, "run %zu: ", r + 1); break; }
    ops[r].iterations = it;
  }
  for (q = 0; q < k; q++) { sw_err e2; sw_net_set(net, net->el[el[q]].name, keep[q], &e2); }
  free(keep); free(state); gsl_rng_free(rng);
  return rc;
}
