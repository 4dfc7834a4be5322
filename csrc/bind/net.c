/* Binding of networks: the network userdata (its models and exact curves
 * kept alive in its user values), solving, all solutions, sweeps.  Results
 * of the core are held in a GC-owned holder while they are turned into Lua
 * tables, so a Lua error at any point frees them. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "bind.h"
#include "net/net.h"

#define LSW_NET_MT "segwise.Network"
#define LSW_HOLD_MT "segwise.NetResults"

typedef struct lsw_net {
  lsw_life life; /* busy while a computation holds it (see busy_net) */
  sw_net net;
} lsw_net;

/* Everything a solve may allocate, freed by __gc. */
typedef struct lsw_hold {
  sw_net_op *ops;
  size_t nops;
  sw_net_trace trace;
  int *states;
  sw_net_sweep_info sweep;
} lsw_hold;

static int hold_gc(lua_State *L)
{
  lsw_hold *h = luaL_checkudata(L, 1, LSW_HOLD_MT);
  size_t k;
  for (k = 0; k < h->nops; k++) sw_net_op_free(&h->ops[k]);
  free(h->ops); h->ops = NULL; h->nops = 0;
  sw_net_trace_free(&h->trace);
  free(h->states); h->states = NULL;
  sw_net_sweep_info_free(&h->sweep);
  return 0;
}

static lsw_hold *new_hold(lua_State *L)
{
  lsw_hold *h = lua_newuserdatauv(L, sizeof *h, 0);
  memset(h, 0, sizeof *h);
  luaL_setmetatable(L, LSW_HOLD_MT);
  return h;
}

static void hold_ops(lua_State *L, lsw_hold *h, size_t n)
{
  sw_err err = { 0, "" };
  h->ops = sw_alloc(n, sizeof *h->ops, &err);
  if (!h->ops) lsw_raise(L, "network", &err);
  h->nops = n;
}

static lsw_net *net_arg(lua_State *L, int idx)
{
  lsw_net *n = luaL_testudata(L, idx, LSW_NET_MT);
  if (!n) lsw_fail(L, "network", "argument #%d must be a segwise network (got %s)", idx,
                   luaL_typename(L, idx));
  return n;
}

static lsw_net *check_net(lua_State *L, int idx)
{
  lsw_net *n = net_arg(L, idx);
  if (LSW_DEAD(n)) lsw_fail(L, "network", "network used after free()");
  return n;
}

/* The network at 1 for a computation (a solve, a sweep, a study): refused
 * while another holds it (a curve's callback, a metamethod or a finalizer
 * coming back in), then pinned, so that while it runs nothing can change,
 * solve or free the network under it.  Call after any lua_settop. */
static lsw_net *busy_net(lua_State *L, const char *fname)
{
  lsw_net *n = check_net(L, 1);
  if (n->life.busy > 0)
    lsw_fail(L, fname, "network is being solved: it cannot be solved again inside its own "
             "callback");
  lsw_pin(L, 1, &n->life);
  return check_net(L, 1); /* the pin's allocation may have run a finalizer */
}

/* The network at 1 for a change, checked just before the core call (after
 * every argument conversion, which may run a finalizer). */
static lsw_net *idle_net(lua_State *L, const char *fname)
{
  lsw_net *n = check_net(L, 1);
  if (n->life.busy > 0)
    lsw_fail(L, fname, "network is being solved: it cannot change inside its own callback");
  return n;
}

static void net_free_mem(lsw_life *life)
{
  sw_net_free(&((lsw_net *)life)->net);
}

/* __gc: while a computation holds the network, its release waits for it. */
static int net_gc(lua_State *L)
{
  return lsw_release(L, &net_arg(L, 1)->life, "network", 1);
}

/* :free() and __close: refused while a computation holds the network. */
static int net_release(lua_State *L)
{
  return lsw_release(L, &net_arg(L, 1)->life, "network", 0);
}

static int net_tostring(lua_State *L)
{
  lsw_net *n = luaL_testudata(L, 1, LSW_NET_MT);
  if (!n || LSW_DEAD(n)) lua_pushliteral(L, "segwise network (freed)");
  else lua_pushfstring(L, "segwise network: %I nodes, %I elements", (lua_Integer)n->net.nnodes,
                       (lua_Integer)n->net.nel);
  return 1;
}

/* core.net_new(): user value 1 holds the models, 2 the exact curves, both
 * indexed by device number (1-based). */
static int l_net_new(lua_State *L)
{
  lsw_net *n = lua_newuserdatauv(L, sizeof *n, 2);
  memset(n, 0, sizeof *n);
  n->life.release = net_free_mem;
  sw_net_init(&n->net);
  luaL_setmetatable(L, LSW_NET_MT);
  lua_newtable(L); lua_setiuservalue(L, -2, 1);
  lua_newtable(L); lua_setiuservalue(L, -2, 2);
  return 1;
}

/* A node name: a string without NUL bytes, or a whole number, which names
 * the node its decimal digits name (1 and 1.0 are node "1"); the converted
 * name replaces the argument in its slot, so it stays alive. */
static const char *node_arg(lua_State *L, int idx, const char *fname, const char *what)
{
  if (lua_type(L, idx) == LUA_TNUMBER) {
    lua_Integer k = lsw_checkint(L, idx, fname, what, LUA_MININTEGER, LUA_MAXINTEGER);
    lua_pushfstring(L, "%I", k);
    lua_replace(L, idx);
  } else if (lua_type(L, idx) != LUA_TSTRING) {
    lsw_fail(L, fname, "%s must be a node name (string or number, got %s)", what,
             luaL_typename(L, idx));
  }
  return lsw_checkname(L, idx, fname, what);
}

/* n:add(kind, name, n1, n2, n3, n4, ctrl, value) */
static int l_add(lua_State *L)
{
  static const char *const kinds[] = { "r", "v", "i", "vcvs", "vccs", "ccvs", "cccs", NULL };
  static const char *const fnames[] = {"network:resistor", "network:vsource", "network:isource",
                                       "network:vcvs", "network:vccs", "network:ccvs",
                                       "network:cccs"};
  static const sw_net_kind codes[] = {SW_NET_R,    SW_NET_V,    SW_NET_I,   SW_NET_VCVS,
                                      SW_NET_VCCS, SW_NET_CCVS, SW_NET_CCCS};
  static const char *const what[] = {"first node", "second node", "first control node",
                                     "second control node"};
  int k, j, nn;
  const char *name, *nodes[4], *ctrl = NULL, *fname;
  double value;
  sw_err err = { 0, "" };
  check_net(L, 1);
  k = lsw_checkoption(L, 2, "network:add", "kind", NULL, kinds);
  fname = fnames[k];
  nn = (codes[k] == SW_NET_VCVS || codes[k] == SW_NET_VCCS) ? 4 : 2;
  name = lsw_checkname(L, 3, fname, "name");
  value = lsw_checknum(L, 9, fname, "value");
  for (j = 0; j < nn; j++) nodes[j] = node_arg(L, 4 + j, fname, what[j]);
  if (codes[k] == SW_NET_CCVS || codes[k] == SW_NET_CCCS) ctrl = lsw_checkname(L, 8, fname, "ctrl");
  if (sw_net_add(&idle_net(L, fname)->net, codes[k], name, nodes, ctrl, value, &err))
    return lsw_raise(L, "network:add", &err);
  return 0;
}

/* n:device(name, na, nb, model, x_is_i, pmax [, curve]) */
static int l_device(lua_State *L)
{
  const char *name, *na, *nb;
  lsw_model *m;
  int x_is_i = lua_toboolean(L, 6);
  double pmax;
  sw_err err = { 0, "" };
  lsw_net *n = check_net(L, 1);
  name = lsw_checkname(L, 2, "network:element", "name");
  na = node_arg(L, 3, "network:element", "first node");
  nb = node_arg(L, 4, "network:element", "second node");
  pmax = lsw_optnum(L, 7, "network:element", "pmax", 0);
  m = lsw_checkmodel(L, 5); /* after the conversions, which may run a finalizer */
  if (!lua_isnoneornil(L, 8)) lsw_checkcurve(L, 8);
  n = idle_net(L, "network:element");
  if (sw_net_add_device(&n->net, name, na, nb, &m->m, x_is_i, pmax, &err))
    return lsw_raise(L, "network:element", &err);
  lua_getiuservalue(L, 1, 1);
  lua_pushvalue(L, 5);
  lua_rawseti(L, -2, (lua_Integer)n->net.ndev);
  lua_getiuservalue(L, 1, 2);
  lua_pushvalue(L, 8);
  lua_rawseti(L, -2, (lua_Integer)n->net.ndev);
  return 0;
}

static int l_set(lua_State *L)
{
  sw_err err = { 0, "" };
  const char *name = lsw_checkname(L, 2, "network:set", "name");
  double v = lsw_checknum(L, 3, "network:set", "value");
  if (sw_net_set(&idle_net(L, "network:set")->net, name, v, &err))
    return lsw_raise(L, "network:set", &err);
  return 0;
}

static void prepare(lua_State *L, lsw_net *n, const char *fname)
{
  sw_err err = { 0, "" };
  if (sw_net_prepare(&n->net, &err)) lsw_raise(L, fname, &err);
}

/* Fills a start array from the table at tidx. */
static void fill_start(lua_State *L, int tidx, const sw_net *net, int *st)
{
  lua_pushnil(L);
  while (lua_next(L, tidx)) {
    const char *name;
    size_t el, s;
    lua_Integer label;
    if (lua_type(L, -2) != LUA_TSTRING)
      lsw_fail(L, "network:solve", "start keys must be device names");
    name = lua_tostring(L, -2);
    el = sw_net_find(net, name);
    if (el == SW_NET_NONE || net->el[el].kind != SW_NET_DEV)
      lsw_fail(L, "network:solve", "start: no device named '%s'", name);
    if (!lua_isinteger(L, -1))
      lsw_fail(L, "network:solve", "start.%s must be an integer segment number", name);
    label = lua_tointeger(L, -1);
    {
      const sw_net_dev *d = &net->dev[net->el[el].dev];
      for (s = 0; s < d->nseg; s++) if (d->seg[s].label == label) break;
      if (s == d->nseg)
        lsw_fail(L, "network:solve",
                 "start.%s = %I is not a segment of its model (segments %d..%d)", name, label,
                 d->seg[0].label, d->seg[d->nseg - 1].label);
      st[net->el[el].dev] = (int)s;
    }
    lua_pop(L, 1);
  }
}

static void setnum(lua_State *L, const char *key, double v)
{
  lua_pushnumber(L, v);
  lua_setfield(L, -2, key);
}

static const char *stability_name(int s)
{
  switch (s) {
  case SW_NET_STABLE: return "stable";
  case SW_NET_UNSTABLE: return "unstable";
  case SW_NET_MARGINAL: return "marginal";
  }
  return "unknown";
}

static void push_op(lua_State *L, const sw_net *net, const sw_net_op *op)
{
  size_t k;
  lua_createtable(L, 0, 10);
  lua_createtable(L, 0, (int)net->nnodes);
  for (k = 0; k < net->nnodes; k++) setnum(L, net->node[k], op->vnode[k]);
  lua_pushnumber(L, 0); lua_setfield(L, -2, "gnd");
  lua_setfield(L, -2, "v");
  lua_createtable(L, 0, (int)net->nel);
  for (k = 0; k < net->nel; k++) setnum(L, net->el[k].name, op->i[k]);
  lua_setfield(L, -2, "i");
  lua_createtable(L, 0, (int)net->nel);
  for (k = 0; k < net->nel; k++) setnum(L, net->el[k].name, op->p[k]);
  lua_setfield(L, -2, "p");
  lua_createtable(L, 0, (int)net->nel);
  for (k = 0; k < net->nel; k++) setnum(L, net->el[k].name, op->v[k]);
  lua_setfield(L, -2, "vd");
  lua_createtable(L, 0, (int)net->ndev);
  for (k = 0; k < net->ndev; k++) {
    lua_pushinteger(L, net->dev[k].seg[op->state[k]].label);
    lua_setfield(L, -2, net->el[net->dev[k].el].name);
  }
  lua_setfield(L, -2, "state");
  lua_createtable(L, 0, (int)net->ndev);
  for (k = 0; k < net->ndev; k++) {
    lua_pushboolean(L, op->on_bp[k]);
    lua_setfield(L, -2, net->el[net->dev[k].el].name);
  }
  lua_setfield(L, -2, "on_breakpoint");
  lua_pushinteger(L, (lua_Integer)op->iterations);
  lua_setfield(L, -2, "iterations");
}

static void push_trace(lua_State *L, const sw_net *net, const sw_net_trace *t)
{
  size_t a, k, m = net->ndev;
  static const char *const ev[] = { "solved", "singular", "cycle" };
  lua_createtable(L, (int)t->n, 0);
  for (a = 0; a < t->n; a++) {
    lua_createtable(L, 0, 6);
    lua_pushstring(L, ev[t->event[a]]); lua_setfield(L, -2, "event");
    {
      static const char *const keys[] = { "state", "v", "i", "x", "excess" };
      int f;
      for (f = 0; f < 5; f++) {
        lua_createtable(L, 0, (int)m);
        for (k = 0; k < m; k++) {
          size_t q = a * m + k;
          if (f == 0) lua_pushinteger(L, net->dev[k].seg[t->state[q]].label);
          else
            lua_pushnumber(L, f == 1   ? t->v[q]
                              : f == 2 ? t->i[q]
                              : f == 3 ? t->x[q]
                                       : t->excess[q]);
          lua_setfield(L, -2, net->el[net->dev[k].el].name);
        }
        lua_setfield(L, -2, keys[f]);
      }
    }
    lua_rawseti(L, -2, (lua_Integer)a + 1);
  }
}

/* op.unique (true, false, or absent when not determined), its reason,
 * and op.stability into the op table on top. */
static void push_verdict(lua_State *L, const sw_net_verdict *v, int stability, int exact)
{
  if (v->unique != SW_UNIQUE_UNKNOWN) {
    lua_pushboolean(L, v->unique == SW_UNIQUE_YES);
    lua_setfield(L, -2, "unique");
  }
  if (exact) lua_pushfstring(L, "%s (said of the PWL circuit, not of the exact curves)", v->reason);
  else lua_pushstring(L, v->reason);
  lua_setfield(L, -2, "unique_reason");
  lua_pushstring(L, stability_name(stability));
  lua_setfield(L, -2, "stability");
}

/* Binds the exact curves (user value 2) and runs Newton from op; info
 * says how the answer was reached. */
static void run_exact(lua_State *L, lsw_net *n, sw_net_op *op, lua_Integer max_iter,
                      sw_net_exact_info *info)
{
  size_t m = n->net.ndev, k;
  const sw_curve **ptr;
  sw_curve *copies;
  lsw_callctx *ctx;
  int top, rc;
  sw_err err = { 0, "" };
  ptr = lua_newuserdatauv(L, (m ? m : 1) * sizeof *ptr, 0);
  copies = lua_newuserdatauv(L, (m ? m : 1) * sizeof *copies, 0);
  ctx = lua_newuserdatauv(L, (m ? m : 1) * sizeof *ctx, 0);
  lua_getiuservalue(L, 1, 2);
  top = lua_gettop(L);
  /* each device's curve takes four slots (itself, its pin, its function,
   * an error slot): reserve them all before any curve is pinned */
  if (m > 200000 || !lua_checkstack(L, (int)(4 * m) + 8))
    lsw_fail(L, "network:solve", "%d devices with exact curves are more than one "
               "exact solve can hold", (int)m);
  for (k = 0; k < m; k++) {
    lua_rawgeti(L, top, (lua_Integer)k + 1);
    if (lua_isnil(L, -1)) { lua_pop(L, 1); ptr[k] = NULL; continue; }
    lsw_curve_bind(L, -1, &copies[k], &ctx[k]);
    ptr[k] = &copies[k];
  }
  /* the network is pinned by l_solve; a callback's error is raised after
   * the run, and the pins still held close as it unwinds */
  rc = sw_net_exact_run(&n->net, ptr, op, max_iter > 0 ? (size_t)max_iter : 0, info, &err);
  for (k = m; k-- > 0;) if (ptr[k]) { lsw_curve_done(L, &ctx[k]); lua_pop(L, 1); }
  lua_settop(L, top - 4);
  if (rc) lsw_raise(L, "network:solve", &err);
}

/* op.exact_method, op.exact_steps into the op table on top. */
static void push_exact_info(lua_State *L, const sw_net_exact_info *x)
{
  lua_pushstring(L, x->method); lua_setfield(L, -2, "exact_method");
  lua_pushinteger(L, (lua_Integer)x->steps); lua_setfield(L, -2, "exact_steps");
}

/* n:solve(method, start, trace, max_states, exact, max_iter, lowrank)
 * -> op, info {method=, nfound=, pmatrix=, pmatrix_test=, trace=} */
/* What one solve method did (for the info table). */
typedef struct solve_run {
  int method;               /* index into solve_methods */
  size_t it, nfound, updates;
  int pm;                   /* lcp: P-matrix verdict, -1 unknown */
  const char *used, *how;
} solve_run;

static const char *const solve_methods[] = { "auto", "assumed", "enumerate", "lcp", NULL };

/* Runs the method r->method into state; the trace into h when asked. */
static int run_method(sw_net *net, const int *start, double max_states, int refactor_always,
                      lsw_hold *h, int want_trace, int *state, solve_run *r, sw_err *err)
{
  size_t m = net->ndev, count = 0;
  int *all = NULL, rc = SW_OK;
  switch (r->method) {
  case 0: return sw_net_auto(net, start, max_states, state, &r->it, &r->nfound, &r->used, err);
  case 1:
    net->refactor_always = refactor_always;
    rc = sw_net_assumed(net, start, 0, state, &r->it, want_trace ? &h->trace : NULL, &r->updates,
                        err);
    net->refactor_always = 0;
    return rc;
  case 2:
    rc = sw_net_enumerate(net, max_states, &all, &count, &r->it, err);
    if (rc == SW_OK && count == 0)
      rc =
          sw_err_set(err, SW_ENOSOL,
                     "no consistent state exists: enumeration of all %zu states found none", r->it);
    if (rc == SW_OK) memcpy(state, all, m * sizeof *state);
    free(all);
    r->nfound = count;
    return rc;
  default: return sw_net_lcp(net, state, &r->it, &r->pm, &r->how, err);
  }
}

/* The second result of solve: {method=, nfound=, pmatrix=, pmatrix_test=,
 * lowrank_updates=, trace=}. */
static void push_solve_info(lua_State *L, const sw_net *net, const solve_run *r, int exact,
                            int want_trace, lsw_hold *h)
{
  lua_createtable(L, 0, 5);
  lua_pushstring(L, exact ? "exact" : r->used); lua_setfield(L, -2, "method");
  lua_pushinteger(L, (lua_Integer)r->nfound); lua_setfield(L, -2, "nfound");
  if (r->method == 3) {
    if (r->pm >= 0) { lua_pushboolean(L, r->pm); lua_setfield(L, -2, "pmatrix"); }
    lua_pushstring(L, r->how); lua_setfield(L, -2, "pmatrix_test");
  }
  if (r->method == 1) {
    lua_pushinteger(L, (lua_Integer)r->updates);
    lua_setfield(L, -2, "lowrank_updates");
  }
  if (want_trace && r->method == 1) { push_trace(L, net, &h->trace); lua_setfield(L, -2, "trace"); }
}

LSW_PROTECT(l_solve)
static int l_solve_body(lua_State *L)
{
  lsw_net *n;
  int want_trace = lua_toboolean(L, 4), exact = lua_toboolean(L, 6), rc;
  double max_states = lsw_optnum(L, 5, "network:solve", "max_states", 1e6);
  lua_Integer max_iter = lsw_optint(L, 7, "network:solve", "max_iter", 0, 1000000000, 0);
  const sw_net *net;
  size_t m;
  int *start = NULL, *state, stab;
  lsw_hold *h;
  sw_net_verdict verdict;
  sw_net_exact_info xinfo = { NULL, 0, 0 };
  sw_err err = { 0, "" };
  solve_run r = { 0, 0, 0, 0, -1, NULL, NULL };
  r.method = lsw_checkoption(L, 2, "network:solve", "method", "auto", solve_methods);
  r.used = solve_methods[r.method];
  lua_settop(L, 8);
  n = busy_net(L, "network:solve");
  net = &n->net;
  prepare(L, n, "network:solve");
  m = net->ndev;
  if (!lua_isnil(L, 3)) {
    lsw_checktable(L, 3, "network:solve", "start");
    start = lua_newuserdatauv(L, (m ? m : 1) * sizeof *start, 0);
    sw_net_default_start(net, start);
    fill_start(L, 3, net, start);
  }
  h = new_hold(L);
  hold_ops(L, h, 1);
  h->states = sw_alloc(m ? m : 1, sizeof(int), &err);
  if (!h->states) return lsw_raise(L, "network:solve", &err);
  state = h->states;
  rc = run_method(&n->net, start, max_states, lua_isboolean(L, 8) && !lua_toboolean(L, 8), h,
                  want_trace, state, &r, &err);
  if (rc) {
    if (want_trace && h->trace.n) { /* the attempts are part of the answer */
      push_trace(L, net, &h->trace);
      lua_pushfstring(L, "segwise.network:solve: %s", err.msg);
      lua_setfield(L, -2, "error");
      return lua_error(L);
    }
    return lsw_raise(L, "network:solve", &err);
  }
  if (sw_net_op_from_state(net, state, &h->ops[0], &err))
    return lsw_raise(L, "network:solve", &err);
  h->ops[0].iterations = r.it;
  if (sw_net_unique(net, r.nfound, r.nfound ? r.it : 0, r.method == 3 ? r.pm : -2, r.how,
                    max_states, &verdict, &err))
    return lsw_raise(L, "network:solve", &err);
  stab = sw_net_op_stability(net, &h->ops[0], verdict.monotone, &err); /* of the PWL point */
  if (stab < 0) return lsw_raise(L, "network:solve", &err);
  if (exact) run_exact(L, n, &h->ops[0], max_iter, &xinfo);
  push_op(L, net, &h->ops[0]);
  push_verdict(L, &verdict, stab, exact);
  if (exact) push_exact_info(L, &xinfo);
  push_solve_info(L, net, &r, exact, want_trace, h);
  return 2;
}

/* n:solve_all(max_states) -> list of ops with stability */
LSW_PROTECT(l_solve_all)
static int l_solve_all_body(lua_State *L)
{
  double max_states = lsw_optnum(L, 2, "network:solve_all", "max_states", 1e6);
  lsw_net *n;
  const sw_net *net;
  size_t count = 0, visited = 0, k, m;
  int *all = NULL;
  lsw_hold *h;
  sw_net_verdict verdict;
  sw_err err = { 0, "" };
  lua_settop(L, 2);
  n = busy_net(L, "network:solve_all");
  net = &n->net;
  prepare(L, n, "network:solve_all");
  m = net->ndev;
  h = new_hold(L);
  if (sw_net_enumerate(net, max_states, &all, &count, &visited, &err))
    return lsw_raise(L, "network:solve_all", &err);
  h->states = all;
  if (count) hold_ops(L, h, count);
  for (k = 0; k < count; k++) {
    int s;
    if (sw_net_op_from_state(net, all + k * m, &h->ops[k], &err))
      return lsw_raise(L, "network:solve_all", &err);
    h->ops[k].iterations = visited;
    s = sw_net_stability(net, &h->ops[k], &err);
    if (s < 0) return lsw_raise(L, "network:solve_all", &err);
    h->ops[k].stability = s;
  }
  if (count && sw_net_unique(net, count, visited, -2, NULL, max_states, &verdict, &err))
    return lsw_raise(L, "network:solve_all", &err);
  lua_createtable(L, (int)count, 0);
  for (k = 0; k < count; k++) {
    push_op(L, net, &h->ops[k]);
    push_verdict(L, &verdict, h->ops[k].stability, 0);
    lua_rawseti(L, -2, (lua_Integer)k + 1);
  }
  return 1;
}

/* Checks the swept element (arg 2) and reads the start states (arg 4). */
static size_t sweep_target(lua_State *L, lsw_net *n, int **start)
{
  const char *name = lsw_checkname(L, 2, "network:sweep", "name");
  size_t el = sw_net_find(&n->net, name);
  *start = NULL;
  if (el == SW_NET_NONE) lsw_fail(L, "network:sweep", "no element named '%s'", name);
  if (n->net.el[el].kind == SW_NET_DEV)
    lsw_fail(L, "network:sweep", "'%s' is a device; sweep a source, gain or resistor", name);
  prepare(L, n, "network:sweep");
  if (!lua_isnoneornil(L, 4)) {
    lsw_checktable(L, 4, "network:sweep", "start");
    *start = lua_newuserdatauv(L, (n->net.ndev ? n->net.ndev : 1) * sizeof **start, 0);
    sw_net_default_start(&n->net, *start);
    fill_start(L, 4, &n->net, *start);
  }
  return el;
}

/* n:sweep(name, values, start, max_states, lowrank) -> list of ops */
LSW_PROTECT(l_sweep)
static int l_sweep_body(lua_State *L)
{
  lsw_net *n;
  size_t nv, k, el;
  double *vals, max_states;
  int *start = NULL, rc;
  lsw_hold *h;
  sw_err err = { 0, "" };
  lua_settop(L, 6);  /* scratch buffers pushed below must not land in argument slots */
  n = busy_net(L, "network:sweep");
  vals = lsw_checkdoubles(L, 3, "values", &nv, 0); /* a copy: its metamethods may run */
  max_states = lsw_optnum(L, 5, "network:sweep", "max_states", 1e6);
  el = sweep_target(L, n, &start);
  h = new_hold(L);
  if (nv) hold_ops(L, h, nv);
  n->net.refactor_always = lua_isboolean(L, 6) && !lua_toboolean(L, 6);
  {
    sw_net_sweep_spec sp = {el, vals, nv, start, max_states};
    rc = sw_net_sweep(&n->net, &sp, h->ops, &err);
  }
  n->net.refactor_always = 0;
  if (rc) return lsw_raise(L, "network:sweep", &err);
  lua_createtable(L, (int)nv, 0);
  for (k = 0; k < nv; k++) {
    push_op(L, &n->net, &h->ops[k]);
    setnum(L, "value", vals[k]);
    lua_rawseti(L, -2, (lua_Integer)k + 1);
  }
  return 1;
}

/* The swept values: an array is read in place (a copy of 1e5 values costs
 * more in fresh-page faults than the sweep itself), pinned so that nothing
 * frees it while the core reads it; a table is copied. */
static const double *sweep_values(lua_State *L, int idx, size_t *n)
{
  lsw_array *a = lsw_toarray(L, idx);
  size_t k;
  if (!a || LSW_DEAD(a)) return lsw_checkdoubles(L, idx, "values", n, 0);
  lsw_pin(L, idx, &a->life);
  if (LSW_DEAD(a)) lsw_fail(L, "network:sweep", "values: array used after free()");
  for (k = 0; k < a->n; k++)
    if (!sw_isfinite(a->data[k]))
      lsw_fail(L, "network:sweep", "values[%I] is not finite (%f)", (lua_Integer)(k + 1),
               a->data[k]);
  *n = a->n;
  return a->data;
}

static size_t find_node(const sw_net *net, const char *name)
{
  size_t k;
  if (strcmp(name, "gnd") == 0) return 0;
  for (k = 0; k < net->nnodes; k++) if (strcmp(net->node[k], name) == 0) return k;
  return SW_NET_NONE;
}

/* Parses out[j] = "i.D1", "vd.R", "p.D1", "v.a" or "state.D1". */
static void parse_quant(lua_State *L, const sw_net *net, int j, const char *s, sw_net_quant *q)
{
  static const char *const keys[] = { "i", "vd", "p", "v", "state" };
  static const sw_net_qkind kinds[] = { SW_NQ_I, SW_NQ_VD, SW_NQ_P, SW_NQ_V, SW_NQ_STATE };
  const char *dot = strchr(s, '.'), *what;
  size_t f, len = dot ? (size_t)(dot - s) : 0, idx;
  for (f = 0; f < 5; f++) if (dot && strlen(keys[f]) == len && strncmp(s, keys[f], len) == 0) break;
  if (f == 5)
    lsw_fail(L, "network:sweep",
             "out[%d] = '%s': expected \"i.<element>\", \"vd.<element>\", \"p.<element>\", "
             "\"v.<node>\" or \"state.<device>\"",
             j, s);
  what = dot + 1;
  q->kind = kinds[f];
  if (q->kind == SW_NQ_V) {
    idx = find_node(net, what);
    if (idx == SW_NET_NONE)
      lsw_fail(L, "network:sweep", "out[%d] = '%s': no node named '%s'", j, s, what);
  } else {
    idx = sw_net_find(net, what);
    if (idx == SW_NET_NONE)
      lsw_fail(L, "network:sweep", "out[%d] = '%s': no element named '%s'", j, s, what);
    if (q->kind == SW_NQ_STATE) {
      if (net->el[idx].kind != SW_NET_DEV)
        lsw_fail(L, "network:sweep", "out[%d] = '%s': '%s' is not a PWL device", j, s, what);
      idx = net->el[idx].dev;
    }
  }
  q->idx = idx;
}

/* The result table of an array loop: for each name in the list at index
 * outidx, an array of n values, at res[j] and res[name]; *q the parsed
 * quantities.  Leaves res on the stack and returns its index. */
static int push_quant_arrays(lua_State *L, lsw_net *n, int outidx, size_t n_points,
                             const char *fname, sw_net_quant **q, size_t *nq)
{
  size_t j;
  int res;
  /* out is read raw (no __len, no __index): a plain list of names, and
   * no Lua runs while the network's names are looked up */
  *nq = lsw_rawcount(L, outidx, NULL, "out", 1 << 16);
  if (*nq == 0)
    return lsw_fail(L, NULL, "segwise.network:%s: out must list at least one quantity", fname);
  *q = lua_newuserdatauv(L, *nq * sizeof **q, 0);
  lua_createtable(L, (int)*nq, (int)*nq + 6);
  res = lua_gettop(L);
  for (j = 0; j < *nq; j++) {
    lsw_array *a;
    lua_rawgeti(L, outidx, (lua_Integer)j + 1);
    if (lua_type(L, -1) != LUA_TSTRING)
      return lsw_fail(L, NULL, "segwise.network:%s: out[%d] must be a string (got %s)", fname,
                      (int)j + 1, luaL_typename(L, -1));
    parse_quant(L, &n->net, (int)j + 1, lua_tostring(L, -1), &(*q)[j]);
    a = lsw_newarray(L, n_points);
    (*q)[j].out = a->data;
    lua_pushvalue(L, -1);
    lua_rawseti(L, res, (lua_Integer)j + 1);
    lua_rawset(L, res);  /* res[name] = array */
  }
  return res;
}

/* The counters and the warnings of an array loop into res: warnings
 * grouped by device and kind, indices 1-based in point order. */
static void push_loop_info(lua_State *L, lsw_net *n, int res, const sw_net_sweep_info *info)
{
  size_t m = n->net.ndev, w, g, *count;
  int list, nl = 0;
  lua_pushinteger(L, (lua_Integer)info->iterations); lua_setfield(L, res, "iterations");
  lua_pushinteger(L, (lua_Integer)info->updates); lua_setfield(L, res, "lowrank_updates");
  lua_pushinteger(L, (lua_Integer)info->refactors); lua_setfield(L, res, "refactors");
  lua_pushinteger(L, (lua_Integer)info->fallbacks); lua_setfield(L, res, "fallbacks");
  count = lua_newuserdatauv(L, 2 * (m ? m : 1) * sizeof *count, 0);
  memset(count, 0, 2 * (m ? m : 1) * sizeof *count);
  for (w = 0; w < info->nwarn; w++) count[2 * info->warn[w].dev + (size_t)info->warn[w].kind]++;
  lua_newtable(L);
  list = lua_gettop(L);
  for (g = 0; g < 2 * m; g++) {
    lsw_array *a;
    size_t dev = g / 2, pos = 0;
    if (count[g] == 0) continue;
    lua_createtable(L, 0, 4);
    lua_pushstring(L, n->net.el[n->net.dev[dev].el].name); lua_setfield(L, -2, "device");
    lua_pushstring(L, g % 2 == SW_NW_RANGE ? "range" : "pmax"); lua_setfield(L, -2, "kind");
    a = lsw_newarray(L, count[g]);
    for (w = 0; w < info->nwarn; w++)
      if (2 * info->warn[w].dev + (size_t)info->warn[w].kind == g)
        a->data[pos++] = (double)info->warn[w].index + 1;
    lua_setfield(L, -2, "indices");
    lua_rawseti(L, list, ++nl);
  }
  lua_setfield(L, res, "warnings");
  lua_pop(L, 1); /* count */
}

/* n:sweep_arrays(name, values, start, max_states, out, lowrank)
 * -> {[k] = array, [out[k]] = array, iterations=, lowrank_updates=,
 *     refactors=, fallbacks=, warnings = {{device=, kind=, indices=}...}} */
LSW_PROTECT(l_sweep_arrays)
static int l_sweep_arrays_body(lua_State *L)
{
  lsw_net *n;
  size_t nv, el, nq;
  const double *vals = NULL;
  lsw_array *arr;
  double max_states;
  int *start = NULL, rc, res;
  sw_net_quant *q = NULL;
  lsw_hold *h;
  sw_err err = { 0, "" };
  nq = 0;
  lua_settop(L, 7);
  n = busy_net(L, "network:sweep");
  max_states = lsw_optnum(L, 5, "network:sweep", "max_states", 1e6);
  lsw_checktable(L, 6, "network:sweep", "out");
  arr = lsw_toarray(L, 3);
  if (!arr || LSW_DEAD(arr)) vals = lsw_checkdoubles(L, 3, "values", &nv, 0); /* a copy */
  else nv = arr->n;
  el = sweep_target(L, n, &start);
  res = push_quant_arrays(L, n, 6, nv, "sweep", &q, &nq);
  h = new_hold(L);
  if (!vals) { /* an array in place: pinned last, after everything that may run Lua */
    size_t again;
    vals = sweep_values(L, 3, &again);
    if (again != nv) return lsw_fail(L, "network:sweep", "values changed length while read");
  }
  n->net.refactor_always = lua_isboolean(L, 7) && !lua_toboolean(L, 7);
  {
    sw_net_sweep_spec sp = {el, vals, nv, start, max_states};
    rc = sw_net_sweep_arrays(&n->net, &sp, q, nq, &h->sweep, &err);
  }
  n->net.refactor_always = 0;
  if (rc) return lsw_raise(L, "network:sweep", &err);
  push_loop_info(L, n, res, &h->sweep);
  lua_pushvalue(L, res);
  return 1;
}

/* The arguments both Monte Carlo forms share: (n, names, tols, gauss,
 * runs, seed) at stack indices 1..6. */
typedef struct mc_args {
  size_t k, runs;
  size_t *el;
  double *tol;
  int *gauss;
  lua_Integer seed;
} mc_args;

/* The core's description of the study in a, with the enumeration cap. */
static sw_net_mc mc_of(const mc_args *a, double max_states)
{
  sw_net_mc mc;
  mc.el = a->el;
  mc.tol = a->tol;
  mc.gauss = a->gauss;
  mc.k = a->k;
  mc.runs = a->runs;
  mc.seed = (unsigned long)a->seed;
  mc.max_states = max_states;
  return mc;
}

/* The names (2, raw: no metamethods), tolerances (3, copied), kinds (4,
 * raw), runs (5) and seed (6) of a Monte Carlo study. */
static void check_mc_args(lua_State *L, lsw_net *n, mc_args *a)
{
  static const char *const F = "network:montecarlo";
  size_t nt, q;
  a->runs = (size_t)lsw_checkint(L, 5, F, "runs", 1, 100000000);
  a->seed = lsw_checkint(L, 6, F, "seed", 0, 4294967295LL);
  a->k = lsw_rawcount(L, 2, F, "names", 1 << 20);
  lsw_checktable(L, 4, F, "kinds");
  a->tol = lsw_checkdoubles(L, 3, "tol", &nt, 0);
  if (nt != a->k || a->k == 0)
    lsw_fail(L, F, "%I names but %I tolerances", (lua_Integer)a->k, (lua_Integer)nt);
  a->el = lua_newuserdatauv(L, a->k * sizeof *a->el, 0);
  a->gauss = lua_newuserdatauv(L, a->k * sizeof *a->gauss, 0);
  for (q = 0; q < a->k; q++) {
    const char *name;
    lua_rawgeti(L, 2, (lua_Integer)q + 1);
    if (lua_type(L, -1) != LUA_TSTRING)
      lsw_fail(L, F, "names[%I] must be an element name (got %s)", (lua_Integer)q + 1,
               luaL_typename(L, -1));
    name = lsw_checkname(L, -1, F, "an element name");
    a->el[q] = sw_net_find(&n->net, name);
    if (a->el[q] == SW_NET_NONE || n->net.el[a->el[q]].kind == SW_NET_DEV)
      lsw_fail(L, F, "no source, gain or resistor named '%s'", name);
    lua_pop(L, 1);
    lua_rawgeti(L, 4, (lua_Integer)q + 1);
    a->gauss[q] = lua_toboolean(L, -1);
    lua_pop(L, 1);
  }
}

/* n:montecarlo(names, tols, gauss, runs, seed, max_states) -> list of ops,
 * each with .values = {name = drawn value} */
LSW_PROTECT(l_montecarlo)
static int l_montecarlo_body(lua_State *L)
{
  lsw_net *n;
  size_t q, r;
  double max_states = lsw_optnum(L, 7, "network:montecarlo", "max_states", 1e6), *drawn;
  lsw_hold *h;
  mc_args a;
  sw_net_mc mc;
  sw_err err = { 0, "" };
  lua_settop(L, 7);
  n = busy_net(L, "network:montecarlo");
  check_mc_args(L, n, &a);
  prepare(L, n, "network:montecarlo");
  drawn = lsw_scratch(L, a.runs * a.k);
  h = new_hold(L);
  hold_ops(L, h, a.runs);
  mc = mc_of(&a, max_states);
  if (sw_net_montecarlo(&n->net, &mc, h->ops, drawn, &err))
    return lsw_raise(L, "network:montecarlo", &err);
  lua_createtable(L, (int)a.runs, 0);
  for (r = 0; r < a.runs; r++) {
    push_op(L, &n->net, &h->ops[r]);
    lua_createtable(L, 0, (int)a.k);
    for (q = 0; q < a.k; q++) setnum(L, n->net.el[a.el[q]].name, drawn[r * a.k + q]);
    lua_setfield(L, -2, "values");
    lua_rawseti(L, -2, (lua_Integer)r + 1);
  }
  return 1;
}

/* n:montecarlo_arrays(names, tols, gauss, runs, seed, max_states, out) ->
 * res as for sweep_arrays, plus res.values = {name = array of drawn values} */
LSW_PROTECT(l_montecarlo_arrays)
static int l_montecarlo_arrays_body(lua_State *L)
{
  lsw_net *n;
  double max_states, **drawn;
  sw_net_quant *q = NULL;
  size_t nq = 0, j;
  int res, vals, rc;
  lsw_hold *h;
  mc_args a;
  sw_net_mc mc;
  sw_err err = { 0, "" };
  lua_settop(L, 8);
  n = busy_net(L, "network:montecarlo");
  max_states = lsw_optnum(L, 7, "network:montecarlo", "max_states", 1e6);
  check_mc_args(L, n, &a);
  prepare(L, n, "network:montecarlo");
  res = push_quant_arrays(L, n, 8, a.runs, "montecarlo", &q, &nq);
  drawn = lua_newuserdatauv(L, a.k * sizeof *drawn, 0);
  lua_createtable(L, 0, (int)a.k);
  vals = lua_gettop(L);
  for (j = 0; j < a.k; j++) {
    lsw_array *arr = lsw_newarray(L, a.runs);
    drawn[j] = arr->data;
    lua_setfield(L, vals, n->net.el[a.el[j]].name);
  }
  lua_setfield(L, res, "values");
  h = new_hold(L);
  mc = mc_of(&a, max_states);
  rc = sw_net_montecarlo_arrays(&n->net, &mc, drawn, q, nq, &h->sweep, &err);
  if (rc) return lsw_raise(L, "network:montecarlo", &err);
  push_loop_info(L, n, res, &h->sweep);
  lua_pushvalue(L, res);
  return 1;
}

/* n:segments(name) -> {{label=, lo=, hi=, slope=, intercept=}, ...} */
LSW_PROTECT(l_segments)
static int l_segments_body(lua_State *L)
{
  lsw_net *n = check_net(L, 1);
  const char *name = lsw_checkname(L, 2, "network:segments", "name");
  size_t el, k;
  const sw_net_dev *d;
  lua_settop(L, 2);
  lsw_pin(L, 1, &n->life); /* the tables' allocations may run a finalizer */
  n = check_net(L, 1);
  el = sw_net_find(&n->net, name);
  if (el == SW_NET_NONE || n->net.el[el].kind != SW_NET_DEV)
    return lsw_fail(L, "network", "no device named '%s'", name);
  d = &n->net.dev[n->net.el[el].dev];
  lua_createtable(L, (int)d->nseg, 0);
  for (k = 0; k < d->nseg; k++) {
    lua_createtable(L, 0, 5);
    lua_pushinteger(L, d->seg[k].label); lua_setfield(L, -2, "label");
    setnum(L, "lo", d->seg[k].lo); setnum(L, "hi", d->seg[k].hi);
    setnum(L, "slope", d->seg[k].slope); setnum(L, "intercept", d->seg[k].icpt);
    lua_rawseti(L, -2, (lua_Integer)k + 1);
  }
  return 1;
}

/* n:info() -> {nodes = {...}, elements = {{name=, kind=, nodes={...}, ctrl=, value=, pmax=, x=}}}
 */
LSW_PROTECT(l_info)
static int l_info_body(lua_State *L)
{
  lsw_net *n = check_net(L, 1);
  const sw_net *net;
  size_t k;
  lua_settop(L, 1);
  lsw_pin(L, 1, &n->life); /* the tables' allocations may run a finalizer */
  net = &check_net(L, 1)->net;
  lua_createtable(L, 0, 2);
  lua_createtable(L, (int)net->nnodes, 0);
  for (k = 0; k < net->nnodes; k++) {
    lua_pushstring(L, net->node[k]);
    lua_rawseti(L, -2, (lua_Integer)k + 1);
  }
  lua_setfield(L, -2, "nodes");
  lua_createtable(L, (int)net->nel, 0);
  for (k = 0; k < net->nel; k++) {
    const sw_net_el *e = &net->el[k];
    static const char *const kn[] = {"",     "resistor", "vsource", "isource", "vcvs",
                                     "vccs", "ccvs",     "cccs",    "element"};
    int nn = (e->kind == SW_NET_VCVS || e->kind == SW_NET_VCCS) ? 4 : 2, j;
    size_t idx[4];
    idx[0] = e->na; idx[1] = e->nb; idx[2] = e->cp; idx[3] = e->cm;
    lua_createtable(L, 0, 7);
    lua_pushstring(L, e->name); lua_setfield(L, -2, "name");
    lua_pushstring(L, kn[e->kind]); lua_setfield(L, -2, "kind");
    lua_createtable(L, nn, 0);
    for (j = 0; j < nn; j++) { lua_pushstring(L, net->node[idx[j]]); lua_rawseti(L, -2, j + 1); }
    lua_setfield(L, -2, "nodes");
    if (e->ctrl_name) { lua_pushstring(L, e->ctrl_name); lua_setfield(L, -2, "ctrl"); }
    if (e->kind == SW_NET_DEV) {
      const sw_net_dev *d = &net->dev[e->dev];
      setnum(L, "pmax", d->pmax);
      lua_pushstring(L, d->x_is_i ? "i" : "v"); lua_setfield(L, -2, "x");
      lua_pushinteger(L, (lua_Integer)d->model.nseg); lua_setfield(L, -2, "nseg");
      setnum(L, "lo", d->model.x[0]); /* the model's knot range, for range warnings */
      setnum(L, "hi", d->model.x[d->model.nseg]);
    } else setnum(L, "value", e->value);
    lua_rawseti(L, -2, (lua_Integer)k + 1);
  }
  lua_setfield(L, -2, "elements");
  return 1;
}

static const luaL_Reg net_methods[] = {{"add", l_add},
                                       {"device", l_device},
                                       {"set", l_set},
                                       {"solve", l_solve},
                                       {"solve_all", l_solve_all},
                                       {"sweep", l_sweep},
                                       {"sweep_arrays", l_sweep_arrays},
                                       {"montecarlo", l_montecarlo},
                                       {"montecarlo_arrays", l_montecarlo_arrays},
                                       {"segments", l_segments},
                                       {"info", l_info},
                                       {"free", net_release},
                                       {NULL, NULL}};

void lsw_open_net(lua_State *L)
{
  if (luaL_newmetatable(L, LSW_HOLD_MT)) {
    lua_pushcfunction(L, hold_gc); lua_setfield(L, -2, "__gc");
    lsw_protect_meta(L, NULL);
  }
  lua_pop(L, 1);
  if (luaL_newmetatable(L, LSW_NET_MT)) {
    luaL_newlib(L, net_methods);
    lua_setfield(L, -2, "__index");
    lua_pushcfunction(L, net_gc); lua_setfield(L, -2, "__gc");
    lua_pushcfunction(L, net_release); lua_setfield(L, -2, "__close");
    lua_pushcfunction(L, net_tostring); lua_setfield(L, -2, "__tostring");
    lsw_protect_meta(L, NULL);
  }
  lua_pop(L, 1);
  lua_pushcfunction(L, l_net_new);
  lua_setfield(L, -2, "net_new");
}
