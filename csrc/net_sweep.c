/* Sweeps: one operating point per value of a source, gain or resistor.
 * Each point starts the assumed-state iteration from the previous point's
 * states (a warm start: neighbouring values rarely change many segments);
 * when that fails the automatic choice takes over.  The element's value is
 * restored afterwards, also on error. */
#include "net.h"

#include <stdlib.h>
#include <string.h>

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
    if (sw_net_assumed(net, state, 0, state, &it, NULL, err) != SW_OK) {
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
