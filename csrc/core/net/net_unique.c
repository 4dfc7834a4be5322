/* What a solve knows about its answer: whether it is the only operating
 * point of the PWL circuit, and whether it is stable.
 *
 * The monotone network theorem (Duffin 1947; Minty 1960), in the form
 * used here: take two operating points and their differences dv, di on
 * every branch.  dv obeys KVL and di KCL, so sum(dv * di) = 0 over all
 * branches (Tellegen).  Each admitted element gives a term >= 0:
 * independent sources 0 (dv = 0 or di = 0), a positive resistor R di^2,
 * a device whose model is continuous and increasing dx * dy >= 0.  So every
 * term is 0: resistors and strictly increasing devices have dv = di = 0.
 * A device with flat segments only has dv * di = 0, so it counts only once
 * the others pin it: its voltage when a path of elements with dv = 0 joins
 * its terminals, or its current when no loop of elements whose current is
 * still free passes through it (a circulation is zero on a bridge).  With
 * every resistor and device fixed, the node voltages follow along paths
 * to the reference and the voltage-source currents from KCL on their
 * forest (the topology checks refuse source loops and cuts): one point.
 *
 * The same elements with a unit capacitance across each device form a
 * passive RC network whose capacitors all discharge through a resistive
 * path, so its natural frequencies are real and negative: stable. */
#include "net/net.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Enumeration the verdict may run itself: states * (m^2 + m) flops. */
#define ENUM_WORK 2e6

enum { DEV_NOT = 0, DEV_FLAT, DEV_STRICT };

/* Class of a device's model: strictly increasing, increasing with flat
 * segments, or neither (why says where). */
static int dev_class(const sw_net *net, const sw_net_dev *d, char *why, size_t cap)
{
  size_t k;
  int flat = 0;
  const char *name = net->el[d->el].name;
  for (k = 0; k < d->nseg; k++) {
    const sw_net_seg *g = &d->seg[k];
    if (!(g->slope >= 0)) {
      snprintf(why, cap, "%s's model decreases on segment %d (slope %g)", name, g->label, g->slope);
      return DEV_NOT;
    }
    if (g->slope == 0) flat = 1;
    if (k + 1 < d->nseg) {
      double b = g->hi, y1 = g->slope * b + g->icpt,
             y2 = d->seg[k + 1].slope * b + d->seg[k + 1].icpt;
      if (fabs(y1 - y2) > 1e-9 * (fabs(y1) + fabs(y2)) + 1e-300) {
        snprintf(why, cap, "%s's model jumps at %s = %g", name, d->x_is_i ? "i" : "v", b);
        return DEV_NOT;
      }
    }
  }
  return flat ? DEV_FLAT : DEV_STRICT;
}

/* A VCCS controlled by its own terminals is a conductance g (or none). */
static int self_vccs(const sw_net_el *e, double *g)
{
  if (e->kind != SW_NET_VCCS) return 0;
  if (e->cp == e->na && e->cm == e->nb) { *g = e->value; return 1; }
  if (e->cp == e->nb && e->cm == e->na) { *g = -e->value; return 1; }
  return 0;
}

/* Elements the theorem admits; why names the first that it does not. */
static int admitted(const sw_net *net, unsigned char *cls, char *why, size_t cap)
{
  size_t k;
  for (k = 0; k < net->nel; k++) {
    const sw_net_el *e = &net->el[k];
    double g;
    if (e->kind == SW_NET_R || e->kind == SW_NET_V || e->kind == SW_NET_I) continue;
    if (e->kind == SW_NET_DEV) {
      cls[e->dev] = (unsigned char)dev_class(net, &net->dev[e->dev], why, cap);
      if (cls[e->dev] == DEV_NOT) return 0;
      continue;
    }
    if (self_vccs(e, &g) && g >= 0) continue;
    snprintf(why, cap,
             "%s %s is a controlled source (the theorem admits positive resistors, "
             "independent sources and increasing devices only)",
             sw_net_kind_name(e->kind), e->name);
    return 0;
  }
  return 1;
}

static size_t uf_find(size_t *p, size_t a)
{
  while (p[a] != a) { p[a] = p[p[a]]; a = p[a]; }
  return a;
}

static void uf_reset(size_t *p, size_t n)
{
  size_t k;
  for (k = 0; k < n; k++) p[k] = k;
}

static void uf_join(size_t *p, size_t a, size_t b) { p[uf_find(p, a)] = uf_find(p, b); }

/* Per device: bit 1 its dv is 0, bit 2 its di is 0 (in any two points). */
enum { FIX_V = 1, FIX_I = 2, FIX_BOTH = 3 };

static int dv_fixed(const sw_net *net, const unsigned char *fix, size_t k)
{
  const sw_net_el *e = &net->el[k];
  double g;
  if (e->kind == SW_NET_R || e->kind == SW_NET_V) return 1;
  if (e->kind == SW_NET_DEV) return (fix[e->dev] & FIX_V) != 0;
  return self_vccs(e, &g) && g > 0;
}

static int di_free(const sw_net *net, const unsigned char *fix, size_t k)
{
  const sw_net_el *e = &net->el[k];
  if (e->kind == SW_NET_V) return 1;
  return e->kind == SW_NET_DEV && !(fix[e->dev] & FIX_I);
}

/* One pass of pinning flat devices; returns 1 when something changed. */
static int pin_pass(const sw_net *net, unsigned char *fix, size_t *p)
{
  size_t k, j, n = net->nnodes;
  int changed = 0;
  uf_reset(p, n);
  for (k = 0; k < net->nel; k++)
    if (dv_fixed(net, fix, k)) uf_join(p, net->el[k].na, net->el[k].nb);
  for (j = 0; j < net->ndev; j++) {
    const sw_net_el *e = &net->el[net->dev[j].el];
    if ((fix[j] & FIX_V) || uf_find(p, e->na) != uf_find(p, e->nb)) continue;
    fix[j] |= net->dev[j].x_is_i ? FIX_V : FIX_BOTH; /* i(v): v fixes i */
    changed = 1;
  }
  for (j = 0; j < net->ndev; j++) {
    const sw_net_el *e = &net->el[net->dev[j].el];
    if (fix[j] & FIX_I) continue;
    uf_reset(p, n);
    for (k = 0; k < net->nel; k++)
      if (k != net->dev[j].el && di_free(net, fix, k)) uf_join(p, net->el[k].na, net->el[k].nb);
    if (uf_find(p, e->na) == uf_find(p, e->nb)) continue; /* on a loop: not pinned */
    fix[j] |= net->dev[j].x_is_i ? FIX_BOTH : FIX_I;      /* v(i): i fixes v */
    changed = 1;
  }
  return changed;
}

int sw_net_monotone(const sw_net *net, char *why, size_t cap, sw_err *err)
{
  size_t m = net->ndev, j;
  unsigned char *cls = sw_alloc(m, 1, err), *fix = sw_alloc(m, 1, err);
  size_t *p = sw_alloc(net->nnodes, sizeof *p, err);
  int ok = 0;
  if (cap) why[0] = 0;
  if (!cls || !fix || !p) { ok = -SW_ENOMEM; goto done; }
  if (!admitted(net, cls, why, cap)) goto done;
  for (j = 0; j < m; j++) fix[j] = cls[j] == DEV_STRICT ? FIX_BOTH : 0;
  while (pin_pass(net, fix, p)) {}
  ok = 2;
  for (j = 0; j < m; j++) if (cls[j] == DEV_FLAT) ok = 1;
  for (j = 0; j < m && ok; j++)
    if (fix[j] != FIX_BOTH) {
      snprintf(why, cap,
               "%s's model has flat segments (slope 0) and the elements around it do "
               "not fix its %s",
               net->el[net->dev[j].el].name, (fix[j] & FIX_V) ? "current" : "voltage");
      ok = 0;
    }
done:
  free(cls); free(fix); free(p);
  return ok;
}

static double count_states(const sw_net *net)
{
  double n = 1;
  size_t k;
  for (k = 0; k < net->ndev; k++) n *= (double)net->dev[k].nseg;
  return n;
}

/* The verdict of an enumeration with count points over states states. */
static void by_count(sw_net_verdict *out, size_t count, double states)
{
  if (count >= 2) {
    out->unique = SW_UNIQUE_NO;
    snprintf(out->reason, sizeof out->reason,
             "%zu operating points: an enumeration of all %.0f segment "
             "combinations found them (net:solve_all() lists every one)",
             count, states);
  } else if (count == 1) {
    out->unique = SW_UNIQUE_YES;
    snprintf(out->reason, sizeof out->reason,
             "an enumeration of all %.0f segment combinations found "
             "this point and no other",
             states);
  } else {
    snprintf(
        out->reason, sizeof out->reason,
        "not determined: an enumeration of all %.0f segment "
        "combinations found no point (the solver's point lies within rounding of a segment end)",
        states);
  }
}

/* Enumerates here when that is cheap; returns 1 when it ran. */
static int try_enumerate(const sw_net *net, double max_states, sw_net_verdict *out, sw_err *err)
{
  double states = count_states(net), m = (double)net->ndev;
  int *all = NULL;
  size_t count = 0, visited = 0;
  if (states > max_states || states * (m * m + m) > ENUM_WORK) return 0;
  if (sw_net_enumerate(net, max_states, &all, &count, &visited, err)) return -1;
  free(all);
  by_count(out, count, states);
  return 1;
}

static const char MONOTONE_TEXT[] =
  "every device's model is continuous and %s, in a network of positive resistors and independent "
  "sources: one operating point (monotone network theorem: Duffin 1947; Minty 1960)";

int sw_net_unique(const sw_net *net, size_t nfound, size_t nstates, int pmatrix,
                  const char *how, double max_states, sw_net_verdict *out, sw_err *err)
{
  char why[240];
  int mono, ran;
  memset(out, 0, sizeof *out);
  out->unique = SW_UNIQUE_UNKNOWN;
  mono = sw_net_monotone(net, why, sizeof why, err);
  if (mono < 0) return -mono;
  out->monotone = mono > 0;
  if (net->ndev == 0) {
    out->unique = SW_UNIQUE_YES;
    snprintf(out->reason, sizeof out->reason,
             "a linear circuit with nonsingular equations has exactly one solution");
    return SW_OK;
  }
  if (nfound > 0) {
    by_count(out, nfound, nstates ? (double)nstates : count_states(net));
    return SW_OK;
  }
  if (mono) {
    out->unique = SW_UNIQUE_YES;
    snprintf(out->reason, sizeof out->reason, MONOTONE_TEXT, mono == 2 ? "strictly increasing" :
             "increasing, and those with flat segments are pinned by the elements around them");
    return SW_OK;
  }
  ran = try_enumerate(net, max_states, out, err);
  if (ran < 0) return err->code;
  if (ran) return SW_OK;
  if (pmatrix == -2 && sw_net_lcp_ptest(net, &pmatrix, &how, err)) return err->code;
  if (pmatrix == 1) {
    out->unique = SW_UNIQUE_YES;
    snprintf(out->reason, sizeof out->reason, "the circuit's LCP matrix is a P-matrix (%s), so the "
             "complementarity problem, and with it the circuit, has exactly one solution", how);
    return SW_OK;
  }
  snprintf(out->reason, sizeof out->reason,
           "not determined: the monotone network theorem does not apply, "
           "as %s; the LCP matrix %s%s; too many segment combinations to enumerate quickly (%.0f)",
           why, pmatrix == 0 ? "is not a P-matrix: " : "test: ", how, count_states(net));
  return SW_OK;
}

int sw_net_op_stability(const sw_net *net, const sw_net_op *op, int monotone, sw_err *err)
{
  if (monotone || net->ndev == 0) return SW_NET_STABLE;
  return sw_net_stability(net, op, err);
}
