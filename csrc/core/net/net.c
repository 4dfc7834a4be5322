/* Network building, element changes and topology checks. */
#include "net/net.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

static char *dupstr(const char *s, sw_err *err)
{
  size_t n = strlen(s) + 1;
  char *d = sw_alloc(n, 1, err);
  if (d) memcpy(d, s, n);
  return d;
}

const char *sw_net_kind_name(sw_net_kind k)
{
  switch (k) {
  case SW_NET_R: return "resistor";
  case SW_NET_V: return "voltage source";
  case SW_NET_I: return "current source";
  case SW_NET_VCVS: return "vcvs";
  case SW_NET_VCCS: return "vccs";
  case SW_NET_CCVS: return "ccvs";
  case SW_NET_CCCS: return "cccs";
  case SW_NET_DEV: return "device";
  }
  return "?";
}

void sw_net_init(sw_net *net) { memset(net, 0, sizeof *net); }

static void unprepare(sw_net *net)
{
  free(net->K); free(net->yp); free(net->Xv); free(net->Xi);
  free(net->vp); free(net->ip);
  net->K = net->yp = net->Xv = net->Xi = net->vp = net->ip = NULL;
  net->prepared = 0;
}

void sw_net_free(sw_net *net)
{
  size_t k;
  if (!net) return;
  unprepare(net);
  for (k = 0; k < net->nnodes; k++) free(net->node[k]);
  for (k = 0; k < net->nel; k++) { free(net->el[k].name); free(net->el[k].ctrl_name); }
  for (k = 0; k < net->ndev; k++) { sw_pwl_free(&net->dev[k].model); free(net->dev[k].seg); }
  free(net->node); free(net->el); free(net->dev);
  memset(net, 0, sizeof *net);
}

static int is_ground(const char *s) { return strcmp(s, "0") == 0 || strcmp(s, "gnd") == 0; }

int sw_net_node(sw_net *net, const char *name, size_t *idx, sw_err *err)
{
  size_t k;
  char *d;
  if (!name[0]) return sw_err_set(err, SW_EINVAL, "node names must not be empty");
  if (!net->node) {
    net->node = sw_alloc(8, sizeof *net->node, err);
    if (!net->node) return SW_ENOMEM;
    net->nodecap = 8;
    if (!(net->node[0] = dupstr("0", err))) return SW_ENOMEM;
    net->nnodes = 1;
  }
  if (is_ground(name)) { *idx = 0; return SW_OK; }
  for (k = 1; k < net->nnodes; k++)
    if (strcmp(net->node[k], name) == 0) { *idx = k; return SW_OK; }
  if (net->nnodes == net->nodecap) {
    char **q = sw_realloc(net->node, net->nodecap * 2, sizeof *q, err);
    if (!q) return SW_ENOMEM;
    net->node = q; net->nodecap *= 2;
  }
  if (!(d = dupstr(name, err))) return SW_ENOMEM;
  net->node[net->nnodes] = d;
  *idx = net->nnodes++;
  return SW_OK;
}

size_t sw_net_find(const sw_net *net, const char *name)
{
  size_t k;
  for (k = 0; k < net->nel; k++)
    if (strcmp(net->el[k].name, name) == 0) return k;
  return SW_NET_NONE;
}

static int grow_el(sw_net *net, sw_err *err)
{
  if (net->nel == net->elcap) {
    size_t cap = net->elcap ? net->elcap * 2 : 8;
    sw_net_el *q = sw_realloc(net->el, cap, sizeof *q, err);
    if (!q) return SW_ENOMEM;
    net->el = q; net->elcap = cap;
  }
  return SW_OK;
}

static int check_value(sw_net_kind kind, const char *name, double value, sw_err *err)
{
  if (!sw_isfinite(value))
    return sw_err_set(err, SW_EINVAL, "%s %s: value must be finite (got %g)",
                      sw_net_kind_name(kind), name, value);
  if (kind == SW_NET_R && !(value > 0))
    return sw_err_set(err, SW_EINVAL, "resistor %s: resistance must be positive (got %g ohm)", name,
                      value);
  return SW_OK;
}

/* nodes: 2 entries (4 for VCVS/VCCS); ctrl: element name for CCVS/CCCS. */
int sw_net_add(sw_net *net, sw_net_kind kind, const char *name,
               const char *const *nodes, const char *ctrl, double value,
               sw_err *err)
{
  sw_net_el e;
  size_t nn = (kind == SW_NET_VCVS || kind == SW_NET_VCCS) ? 4 : 2, k, idx[4] = {0, 0, 0, 0};
  if (!name[0]) return sw_err_set(err, SW_EINVAL, "element names must not be empty");
  if (sw_net_find(net, name) != SW_NET_NONE)
    return sw_err_set(err, SW_EINVAL, "duplicate element name '%s'", name);
  if (check_value(kind, name, value, err)) return err->code;
  for (k = 0; k < nn; k++)
    if (sw_net_node(net, nodes[k], &idx[k], err)) return err->code;
  if (grow_el(net, err)) return SW_ENOMEM;
  memset(&e, 0, sizeof e);
  e.kind = kind; e.na = idx[0]; e.nb = idx[1]; e.cp = idx[2]; e.cm = idx[3];
  e.value = value; e.col = SW_NET_NONE; e.dev = SW_NET_NONE; e.ctrl = SW_NET_NONE;
  if (!(e.name = dupstr(name, err))) return SW_ENOMEM;
  if (ctrl && !(e.ctrl_name = dupstr(ctrl, err))) { free(e.name); return SW_ENOMEM; }
  net->el[net->nel++] = e;
  unprepare(net);
  return SW_OK;
}

/* The device's segments from its model: continuation lines extend the end
 * segments, held ends add flat segments, error ends bound them. */
static int build_segments(sw_net_dev *d, const char *name, sw_err *err)
{
  const sw_pwl *m = &d->model;
  size_t n = m->nseg, k, extra = m->extend == SW_EXTEND_HOLD ? 2 : 0, s = 0;
  double span = m->x[n] - m->x[0];
  d->seg = sw_alloc(n + extra, sizeof *d->seg, err);
  if (!d->seg) return SW_ENOMEM;
  if (extra) {
    sw_net_seg *g = &d->seg[s++];
    g->lo = -INFINITY; g->hi = m->x[0]; g->slope = 0; g->icpt = m->ya[0]; g->label = 0;
  }
  for (k = 0; k < n; k++) {
    sw_net_seg *g = &d->seg[s++];
    g->lo = m->x[k]; g->hi = m->x[k + 1];
    g->slope = m->slope[k];
    g->icpt = m->ya[k] - m->slope[k] * m->x[k];
    g->label = (int)k + 1;
    if (m->extend == SW_EXTEND_LINE) {
      if (k == 0) g->lo = -INFINITY;
      if (k == n - 1) g->hi = INFINITY;
    }
  }
  if (extra) {
    sw_net_seg *g = &d->seg[s++];
    g->lo = m->x[n]; g->hi = INFINITY; g->slope = 0; g->icpt = m->yb[n - 1]; g->label = (int)n + 1;
  }
  d->nseg = s;
  for (k = 0; k < s; k++) {
    sw_net_seg *g = &d->seg[k];
    /* y = slope*x + icpt  ->  y - slope*x = icpt, in (v, i) terms */
    double ax = -g->slope, ay = 1, nrm = sqrt(1 + g->slope * g->slope);
    if (!sw_isfinite(g->slope) || !sw_isfinite(g->icpt)) {
      int label = g->label; /* g lives in the block freed next */
      double slope = g->slope, icpt = g->icpt;
      free(d->seg); d->seg = NULL;
      return sw_err_set(err, SW_EINVAL,
                        "device %s: segment %d's line is not finite (slope %g, intercept %g)", name,
                        label, slope, icpt);
    }
    if (d->x_is_i) { g->a = ay / nrm; g->b = ax / nrm; }
    else { g->a = ax / nrm; g->b = ay / nrm; }
    g->c = g->icpt / nrm;
  }
  d->tol = 1e-9 * (span > 0 ? span : 1);
  return SW_OK;
}

int sw_net_add_device(sw_net *net, const char *name, const char *na,
                      const char *nb, const sw_pwl *model, int x_is_i,
                      double pmax, sw_err *err)
{
  const char *nodes[2];
  sw_net_dev d;
  size_t el;
  if (!model || model->nseg == 0 || !model->x)
    return sw_err_set(err, SW_EINVAL, "device %s: the model is empty or freed", name);
  if (!(pmax >= 0) || !sw_isfinite(pmax))
    return sw_err_set(err, SW_EINVAL, "device %s: pmax must be a finite rating >= 0 W (got %g)",
                      name, pmax);
  if (net->ndev == net->devcap) {
    size_t cap = net->devcap ? net->devcap * 2 : 4;
    sw_net_dev *q = sw_realloc(net->dev, cap, sizeof *q, err);
    if (!q) return SW_ENOMEM;
    net->dev = q; net->devcap = cap;
  }
  memset(&d, 0, sizeof d);
  d.x_is_i = x_is_i; d.pmax = pmax;
  if (sw_pwl_copy(model, &d.model, err)) return err->code;
  if (build_segments(&d, name, err)) { sw_pwl_free(&d.model); return err->code; }
  nodes[0] = na; nodes[1] = nb;
  if (sw_net_add(net, SW_NET_DEV, name, nodes, NULL, 0, err)) {
    sw_pwl_free(&d.model); free(d.seg);
    return err->code;
  }
  el = net->nel - 1;
  d.el = el;
  net->el[el].dev = net->ndev;
  net->dev[net->ndev++] = d;
  return SW_OK;
}

int sw_net_set(sw_net *net, const char *name, double value, sw_err *err)
{
  size_t k = sw_net_find(net, name);
  if (k == SW_NET_NONE) return sw_err_set(err, SW_EINVAL, "no element named '%s'", name);
  if (net->el[k].kind == SW_NET_DEV)
    return sw_err_set(
        err, SW_EINVAL,
        "'%s' is a device: its law comes from its model, set changes sources, gains and resistors",
        name);
  if (check_value(net->el[k].kind, name, value, err)) return err->code;
  net->el[k].value = value;
  unprepare(net);
  return SW_OK;
}

/* ---- topology ---------------------------------------------------------- */

static size_t uf_find(size_t *parent, size_t a)
{
  while (parent[a] != a) { parent[a] = parent[parent[a]]; a = parent[a]; }
  return a;
}

static int is_vlike(sw_net_kind k) { return k == SW_NET_V || k == SW_NET_VCVS || k == SW_NET_CCVS; }
static int is_ilike(sw_net_kind k) { return k == SW_NET_I || k == SW_NET_VCCS || k == SW_NET_CCCS; }

/* Appends "a, b, c" style lists to buf without overflowing. */
static void append(char *buf, size_t cap, const char *s)
{
  size_t n = strlen(buf);
  if (n + 1 >= cap) return;
  if (n && n + 2 < cap) { strcat(buf, ", "); n += 2; }
  strncat(buf, s, cap - n - 1);
}

/* A loop of voltage-like elements: name the path between the ends of the
 * element that closes it (breadth-first over the voltage-source forest). */
static int vloop_error(const sw_net *net, size_t closing, sw_err *err)
{
  size_t n = net->nnodes, k, head = 0, tail = 0, t = 0;
  size_t *prev_el = malloc(n * sizeof *prev_el), *queue = malloc(n * sizeof *queue);
  char list[200] = "";
  if (!prev_el || !queue) {
    free(prev_el); free(queue);
    return sw_err_set(err, SW_EINVAL, "element %s closes a loop of voltage sources",
                      net->el[closing].name);
  }
  for (k = 0; k < n; k++) prev_el[k] = SW_NET_NONE;
  queue[tail++] = net->el[closing].na;
  prev_el[net->el[closing].na] = closing;
  while (head < tail) {
    size_t a = queue[head++];
    for (k = 0; k < closing; k++) {
      const sw_net_el *e = &net->el[k];
      size_t b;
      if (!is_vlike(e->kind)) continue;
      if (e->na == a) b = e->nb; else if (e->nb == a) b = e->na; else continue;
      if (prev_el[b] != SW_NET_NONE) continue;
      prev_el[b] = k; queue[tail++] = b;
    }
  }
  append(list, sizeof list, net->el[closing].name);
  for (k = net->el[closing].nb; k != net->el[closing].na && prev_el[k] != SW_NET_NONE && t < n;
       t++) {
    const sw_net_el *e = &net->el[prev_el[k]];
    append(list, sizeof list, e->name);
    k = e->na == k ? e->nb : e->na;
  }
  free(prev_el); free(queue);
  return sw_err_set(err, SW_EINVAL,
                    "voltage sources form a loop: %s (their voltages fix the same loop twice)",
                    list);
}

/* Node j is read by the control input of a voltage-controlled source. */
static int is_control_node(const sw_net *net, size_t j)
{
  size_t k;
  for (k = 0; k < net->nel; k++) {
    const sw_net_el *e = &net->el[k];
    if ((e->kind == SW_NET_VCVS || e->kind == SW_NET_VCCS) && (e->cp == j || e->cm == j)) return 1;
  }
  return 0;
}

/* Each current-controlled source's control element, by name. */
static int resolve_controls(sw_net *net, sw_err *err)
{
  size_t k;
  for (k = 0; k < net->nel; k++) {
    sw_net_el *e = &net->el[k];
    size_t c;
    if (e->kind != SW_NET_CCVS && e->kind != SW_NET_CCCS) continue;
    c = sw_net_find(net, e->ctrl_name);
    if (c == SW_NET_NONE)
      return sw_err_set(err, SW_EINVAL,
                        "%s %s: no element named '%s' to take the control current from",
                        sw_net_kind_name(e->kind), e->name, e->ctrl_name);
    if (net->el[c].kind == SW_NET_CCCS || c == k)
      return sw_err_set(err, SW_EINVAL,
                        "%s %s: the control element '%s' must not be a current-controlled current "
                        "source or itself",
                        sw_net_kind_name(e->kind), e->name, e->ctrl_name);
    e->ctrl = c;
  }
  return SW_OK;
}

/* Dangling nodes: one current-carrying terminal, unless a voltage source
 * holds the node for a control input to read (no current flows there);
 * and elements other than resistors and devices across one node. */
static int check_terminals(const sw_net *net, size_t *count, sw_err *err)
{
  size_t n = net->nnodes, k, j;
  for (k = 0; k < net->nel; k++) { count[net->el[k].na]++; count[net->el[k].nb]++; }
  for (j = 1; j < n; j++) {
    if (count[j] == 0)
      return sw_err_set(err, SW_EINVAL, "node '%s' is only used as a control node: no element "
                        "carries current into it", net->node[j]);
    if (count[j] == 1) {
      for (k = 0; k < net->nel; k++)
        if (net->el[k].na == j || net->el[k].nb == j) break;
      if (!(is_vlike(net->el[k].kind) && is_control_node(net, j)))
        return sw_err_set(err, SW_EINVAL, "node '%s' is dangling: only %s connects to it",
                          net->node[j], net->el[k].name);
    }
  }
  for (k = 0; k < net->nel; k++)
    if (net->el[k].na == net->el[k].nb && net->el[k].kind != SW_NET_R &&
        net->el[k].kind != SW_NET_DEV)
      return sw_err_set(err, SW_EINVAL, "%s %s connects node '%s' to itself",
                        sw_net_kind_name(net->el[k].kind), net->el[k].name,
                        net->node[net->el[k].na]);
  return SW_OK;
}

/* Loops of voltage sources (union-find over their terminals). */
static int check_vloops(const sw_net *net, size_t *parent, sw_err *err)
{
  size_t j, k;
  for (j = 0; j < net->nnodes; j++) parent[j] = j;
  for (k = 0; k < net->nel; k++) {
    const sw_net_el *e = &net->el[k];
    size_t a, b;
    if (!is_vlike(e->kind)) continue;
    a = uf_find(parent, e->na); b = uf_find(parent, e->nb);
    if (a == b) return vloop_error(net, k, err);
    parent[a] = b;
  }
  return SW_OK;
}

/* Floating parts and cuts of current sources: connectivity to the
 * reference through elements other than current sources. */
static int check_reach(const sw_net *net, size_t *parent, sw_err *err)
{
  size_t n = net->nnodes, j, k;
  for (j = 0; j < n; j++) parent[j] = j;
  for (k = 0; k < net->nel; k++) {
    const sw_net_el *e = &net->el[k];
    if (!is_ilike(e->kind)) parent[uf_find(parent, e->na)] = uf_find(parent, e->nb);
  }
  for (j = 1; j < n; j++) {
    size_t root = uf_find(parent, j), q;
    char nodes[160] = "", srcs[160] = "";
    if (root == uf_find(parent, 0)) continue;
    for (q = 1; q < n; q++)
      if (uf_find(parent, q) == root) append(nodes, sizeof nodes, net->node[q]);
    for (k = 0; k < net->nel; k++) {
      const sw_net_el *e = &net->el[k];
      if (is_ilike(e->kind) &&
          ((uf_find(parent, e->na) == root) != (uf_find(parent, e->nb) == root)))
        append(srcs, sizeof srcs, e->name);
    }
    if (srcs[0])
      return sw_err_set(err, SW_EINVAL,
                        "current sources %s form a cut: nodes %s reach the reference only "
                        "through them, so their voltages are undetermined", srcs, nodes);
    return sw_err_set(err, SW_EINVAL, "floating nodes %s: no path to the reference node (gnd)",
                      nodes);
  }
  return SW_OK;
}

static int check_topology(sw_net *net, sw_err *err)
{
  size_t n = net->nnodes;
  size_t *count, *parent;
  int rc;
  if (net->nel == 0) return sw_err_set(err, SW_EINVAL, "the network has no elements");
  count = sw_alloc(n, sizeof *count, err);
  parent = sw_alloc(n, sizeof *parent, err);
  if (!count || !parent) { free(count); free(parent); return SW_ENOMEM; }
  if (!(rc = resolve_controls(net, err)) && !(rc = check_terminals(net, count, err)) &&
      !(rc = check_vloops(net, parent, err)))
    rc = check_reach(net, parent, err);
  free(count); free(parent);
  return rc;
}

/* A resistor this much smaller than the largest one gets its current as an
 * unknown of its own (the row V(na) - V(nb) - R i = 0): its drop may be
 * below the rounding of its node voltages (1 nOhm at a 1 V node beside
 * 1 GOhm), where V(na) - V(nb) over R would be noise. */
#define STIFF_RATIO 1e-8

static int stiff_resistor(const sw_net *net, const sw_net_el *e)
{
  size_t k;
  double rmax = 0;
  if (e->kind != SW_NET_R) return 0;
  for (k = 0; k < net->nel; k++)
    if (net->el[k].kind == SW_NET_R && net->el[k].value > rmax) rmax = net->el[k].value;
  return e->value < STIFF_RATIO * rmax;
}

size_t sw_net_max_unknowns(const sw_net *net)
{
  size_t k, n = net->nnodes - 1;
  for (k = 0; k < net->nel; k++)
    if (is_vlike(net->el[k].kind) || net->el[k].kind == SW_NET_R) n++;
  return n + net->ndev;
}

int sw_net_prepare(sw_net *net, sw_err *err)
{
  size_t k, col;
  if (net->prepared) return SW_OK;
  if (check_topology(net, err)) return err->code;
  col = net->nnodes - 1;
  for (k = 0; k < net->nel; k++) {
    sw_net_el *e = &net->el[k];
    e->col = is_vlike(e->kind) || stiff_resistor(net, e) ? col++ : SW_NET_NONE;
  }
  for (k = 0; k < net->ndev; k++) {
    net->dev[k].col = col++;
    net->el[net->dev[k].el].col = net->dev[k].col;
  }
  net->nunk = col;
  net->nlin = col - net->ndev;
  if (sw_net_reduce(net, err)) { unprepare(net); return err->code; }
  net->prepared = 1;
  return SW_OK;
}
