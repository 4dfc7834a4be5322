/* libFuzzer harness: small arbitrary networks (up to 5 nodes, 8 elements,
 * 3 PWL devices) built element by element, then prepared and solved by
 * every method.  Singular, floating, looped and inconsistent circuits are
 * normal outcomes; only crashes, sanitizer reports and leaks count. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "net/net.h"
#include "fuzz_input.h"

#define MAX_EL 8
#define MAX_DEV 3


static const char *node_name(fuzz_in *in)
{
  static const char *const nodes[] = {"0", "a", "b", "c", "gnd", "d"};
  return nodes[fuzz_u8(in) % 6];
}

static int add_device(sw_net *net, const char *name, fuzz_in *in, sw_err *err)
{
  double x[6], y[6];
  size_t n = fuzz_count(in, 2, 6), k;
  unsigned f = fuzz_u8(in);
  sw_pwl m;
  int rc;
  const char *na = node_name(in), *nb = node_name(in);
  memset(&m, 0, sizeof m);
  fuzz_increasing(in, x, n);
  if (f & 1) {
    fuzz_doubles(in, y, n);
  } else {
    /* a diode-like rising curve: mostly what real users give */
    double s = 0;
    for (k = 0; k < n; k++) { y[k] = s; s += 1e-3 * (1 + fuzz_u8(in)); }
  }
  if (sw_pwl_from_points(&m, x, y, n, err)) return err->code;
  m.extend = (sw_extend)((f >> 1) % 3);
  rc = sw_net_add_device(net, name, na, nb, &m, (f >> 3) & 1, (f & 0x10) ? 0.5 : 0, err);
  if (getenv("FUZZ_SHOW")) { /* describe the case when replaying one input */
    fprintf(stderr, "device %s %s %s x=%s extend=%d:", name, na, nb, (f >> 3) & 1 ? "i" : "v",
            (int)m.extend);
    for (k = 0; k < n; k++) fprintf(stderr, " (%.17g, %.17g)", x[k], y[k]);
    fprintf(stderr, " -> %d\n", rc);
  }
  sw_pwl_free(&m);
  return rc;
}

static void solve_all_ways(sw_net *net, fuzz_in *in)
{
  sw_err err;
  size_t m = net->ndev, it, nfound, count = 0, visited = 0, pivots = 0, updates = 0;
  int state[MAX_DEV + 1], start[MAX_DEV + 1], *all = NULL, pm;
  const char *used, *how;
  sw_net_trace trace;
  sw_net_op op;
  size_t k;
  memset(&trace, 0, sizeof trace);
  memset(&op, 0, sizeof op);
  if (sw_net_prepare(net, &err)) return;
  for (k = 0; k < m; k++)
    start[k] = (int)(fuzz_u8(in) % (net->dev[k].nseg + 1)) - (fuzz_u8(in) & 1);
  for (k = 0; k < m; k++) if (start[k] < 0 || (size_t)start[k] >= net->dev[k].nseg) start[k] = 0;
  if (sw_net_auto(net, (fuzz_u8(in) & 1) ? start : NULL, 256, state, &it, &nfound, &used, &err) ==
      SW_OK) {
    if (sw_net_op_from_state(net, state, &op, &err) == SW_OK) {
      const sw_curve *curves[MAX_DEV + 1] = {0};
      (void)sw_net_stability(net, &op, &err);
      (void)sw_net_exact(net, curves, &op, 20, &err);
    }
    sw_net_op_free(&op);
    memset(&op, 0, sizeof op);
  }
  (void)sw_net_assumed(net, start, 1 + fuzz_u8(in) % 20, state, &it, &trace, &updates, &err);
  sw_net_trace_free(&trace);
  if (sw_net_enumerate(net, 256, &all, &count, &visited, &err) == SW_OK) free(all);
  (void)sw_net_lcp(net, state, &pivots, &pm, &how, &err);
  {
    char buf[64];
    sw_net_default_start(net, state);
    sw_net_state_text(net, state, buf, sizeof buf);
  }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  fuzz_in in = {data, size};
  sw_net net;
  sw_err err;
  size_t nel = fuzz_count(&in, 1, MAX_EL), k, ndev = 0;
  char names[MAX_EL][8];
  sw_net_init(&net);
  for (k = 0; k < nel; k++) {
    unsigned kind = fuzz_u8(&in) % 9;
    const char *nodes[4];
    const char *ctrl = NULL;
    double value = fuzz_double(&in);
    snprintf(names[k], sizeof names[k], "EL%u", (unsigned)(k % 7)); /* repeats on purpose */
    nodes[0] = node_name(&in); nodes[1] = node_name(&in);
    nodes[2] = node_name(&in); nodes[3] = node_name(&in);
    if (kind == SW_NET_CCVS || kind == SW_NET_CCCS) ctrl = names[fuzz_u8(&in) % (k + 1)];
    if (kind == SW_NET_DEV || kind == 0) {
      if (ndev < MAX_DEV && add_device(&net, names[k], &in, &err) == SW_OK) ndev++;
    } else {
      int rc = sw_net_add(&net, (sw_net_kind)kind, names[k], nodes, ctrl, value, &err);
      if (getenv("FUZZ_SHOW"))
        fprintf(stderr, "%s %s %s %s %s %s ctrl=%s value=%.17g -> %d\n",
                sw_net_kind_name((sw_net_kind)kind), names[k], nodes[0], nodes[1], nodes[2],
                nodes[3], ctrl ? ctrl : "-", value, rc);
    }
  }
  solve_all_ways(&net, &in);
  /* change a value and solve again: an error must leave the network usable */
  if (net.nel > 0) {
    (void)sw_net_set(&net, names[fuzz_u8(&in) % nel], fuzz_double(&in), &err);
    solve_all_ways(&net, &in);
    {
      double values[4];
      sw_net_op ops[4];
      size_t el = fuzz_u8(&in) % net.nel, nv = fuzz_count(&in, 1, 4);
      fuzz_doubles(&in, values, nv);
      memset(ops, 0, sizeof ops);
      if (sw_net_prepare(&net, &err) == SW_OK &&
          sw_net_sweep(&net, &(sw_net_sweep_spec){el, values, nv, NULL, 256}, ops, &err) == SW_OK)
        for (k = 0; k < nv; k++) sw_net_op_free(&ops[k]);
      else
        for (k = 0; k < nv; k++)
          sw_net_op_free(&ops[k]); /* must be safe on zeroed or partial ops */
    }
    if (net.ndev > 0) { /* the array loops: a sweep and a Monte Carlo run */
      double values[4], o1[4], o2[4], d0[4], tol = fuzz_double(&in), *drawn[1];
      size_t el = fuzz_u8(&in) % net.nel, nv = fuzz_count(&in, 1, 4);
      int gauss = fuzz_u8(&in) & 1;
      sw_net_quant q[2];
      sw_net_sweep_info info;
      drawn[0] = d0;
      fuzz_doubles(&in, values, nv);
      q[0].kind = SW_NQ_I; q[0].idx = net.dev[0].el; q[0].out = o1;
      q[1].kind = SW_NQ_STATE; q[1].idx = 0; q[1].out = o2;
      if (net.el[el].kind != SW_NET_DEV && sw_net_prepare(&net, &err) == SW_OK) {
        (void)sw_net_sweep_arrays(&net, &(sw_net_sweep_spec){el, values, nv, NULL, 256}, q, 2, &info,
                                  &err);
        sw_net_sweep_info_free(&info);
        sw_net_mc mc = {&el, &tol, &gauss, 1, nv, fuzz_u8(&in), 256};
        (void)sw_net_montecarlo_arrays(&net, &mc, drawn, q, 2, &info, &err);
        sw_net_sweep_info_free(&info);
      }
    }
  }
  sw_net_free(&net);
  return 0;
}
