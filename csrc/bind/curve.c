/* Binding of curves: constructors, evaluation, and the trampoline that lets
 * the core call a Lua function safely. */
#include <math.h>
#include <string.h>

#include "bind.h"

lsw_curve *lsw_checkcurve(lua_State *L, int idx)
{
  lsw_curve *c = luaL_testudata(L, idx, LSW_CURVE_MT);
  if (!c)
    lsw_fail(L, NULL, "argument #%d must be a segwise curve (got %s)", idx, luaL_typename(L, idx));
  if (LSW_DEAD(c)) lsw_fail(L, NULL, "curve used after free() (argument #%d)", idx);
  return c;
}

static void curve_free_mem(lsw_life *life)
{
  sw_curve_free(&((lsw_curve *)life)->c);
}

/* Pushes an empty curve userdata with its metatable set (safe to collect). */
static lsw_curve *new_curve(lua_State *L)
{
  lsw_curve *c = lua_newuserdatauv(L, sizeof *c, 1);
  memset(c, 0, sizeof *c);
  c->life.release = curve_free_mem;
  luaL_setmetatable(L, LSW_CURVE_MT);
  return c;
}

/* Calls the Lua function under lua_pcall: an error or a non-number result
 * is saved in the context's error slot and reported as a failure, so the
 * core can unwind and free before the binding raises it. */
static int trampoline(void *p, double x, double *y)
{
  lsw_callctx *ctx = p;
  lua_State *L = ctx->L;
  int isnum;
  if (ctx->failed) return 1;
  if (!lua_checkstack(L, 4)) {
    ctx->failed = 1;
    lua_pushliteral(L, "segwise.curve.fn: Lua stack overflow in a curve function");
    lua_replace(L, ctx->erridx);
    return 1;
  }
  lua_pushvalue(L, ctx->fidx);
  lua_pushnumber(L, x);
  if (lua_pcall(L, 1, 1, 0) != LUA_OK) {
    ctx->failed = 1;
    lua_replace(L, ctx->erridx);
    return 1;
  }
  *y = lua_tonumberx(L, -1, &isnum);
  if (!isnum || !isfinite(*y)) {
    ctx->failed = 1;
    if (isnum) lua_pushfstring(L, "segwise.curve.fn: the curve function returned %s at x = %f",
                               isnan(*y) ? "NaN" : *y > 0 ? "inf" : "-inf", x);
    else
      lua_pushfstring(
          L, "segwise.curve.fn: the curve function returned %s (a number expected) at x = %f",
          luaL_typename(L, -1), x);
    lua_replace(L, ctx->erridx);
    lua_pop(L, 1);
    return 1;
  }
  lua_pop(L, 1);
  return 0;
}

void lsw_curve_bind(lua_State *L, int idx, sw_curve *copy, lsw_callctx *ctx)
{
  lsw_curve *c = lsw_checkcurve(L, idx);
  idx = lua_absindex(L, idx);
  luaL_checkstack(L, 4, "segwise: no room on the Lua stack for a curve");
  lsw_pin(L, idx, &c->life);
  if (LSW_DEAD(c)) /* the pin's allocation ran a finalizer that freed it */
    lsw_fail(L, NULL, "curve used after free() (argument #%d)", idx);
  *copy = c->c;
  memset(ctx, 0, sizeof *ctx);
  ctx->L = L;
  lua_getiuservalue(L, idx, 1);
  ctx->fidx = lua_gettop(L);
  lua_pushnil(L);
  ctx->erridx = lua_gettop(L);
  if (c->c.kind == SW_CURVE_FN) {
    copy->fn = trampoline;
    copy->ctx = ctx;
  }
}

void lsw_curve_done(lua_State *L, lsw_callctx *ctx)
{
  if (ctx->failed) { /* the pin is closed as the error unwinds */
    lua_pushvalue(L, ctx->erridx);
    lua_error(L);
  }
  /* the pin first, by lua_closeslot: Lua 5.4.4's lua_settop keeps a stale
   * stack pointer when closing a slot moves the stack */
  lua_closeslot(L, ctx->fidx - 1);
  lua_settop(L, ctx->fidx - 2); /* the error slot, the function and the pin */
}

static lsw_curve *curve_arg(lua_State *L)
{
  lsw_curve *c = luaL_testudata(L, 1, LSW_CURVE_MT);
  if (!c) lsw_fail(L, "curve:free", "argument #1 must be a segwise curve (got %s)",
                   luaL_typename(L, 1));
  return c;
}

/* __gc: while a computation holds the curve, its release waits for it. */
static int curve_gc(lua_State *L)
{
  return lsw_release(L, &curve_arg(L)->life, "curve", 1);
}

/* :free() and __close: refused while a computation uses the curve. */
static int curve_release(lua_State *L)
{
  return lsw_release(L, &curve_arg(L)->life, "curve", 0);
}

static double opt_range(lua_State *L, int idx, double dflt, const char *name)
{
  if (lua_isnoneornil(L, idx)) return dflt;
  return lsw_checknum(L, idx, "curve", name);
}

/* Applies an optional domain restriction (lo, hi at idx, idx+1). */
static void restrict_range(lua_State *L, lsw_curve *c, int idx, const char *fname)
{
  sw_err err;
  double lo, hi;
  if (lua_isnoneornil(L, idx) && lua_isnoneornil(L, idx + 1)) return;
  lo = opt_range(L, idx, c->c.lo, "lo");
  hi = opt_range(L, idx + 1, c->c.hi, "hi");
  if (sw_curve_restrict(&c->c, lo, hi, &err)) lsw_raise(L, fname, &err);
}

/* core.curve_samples(xs, ys, sort, dup_mean) */
static int l_curve_samples(lua_State *L)
{
  size_t nx, ny;
  double *x = lsw_checkdoubles(L, 1, "xs", &nx, 0);
  double *y = lsw_checkdoubles(L, 2, "ys", &ny, 0);
  int sort = lua_toboolean(L, 3), dup = lua_toboolean(L, 4);
  sw_err err;
  lsw_curve *c;
  if (nx != ny)
    return lsw_fail(L, "curve.samples", "xs has %d values but ys has %d", (int)nx, (int)ny);
  c = new_curve(L);
  if (sw_curve_samples(&c->c, x, y, nx, sort, dup, &err))
    return lsw_raise(L, "curve.samples", &err);
  return 1;
}

/* core.curve_diode(is, n, vt, rs, x_is_i, lo, hi) */
static int l_curve_diode(lua_State *L)
{
  double is = lsw_checknum(L, 1, "curve.diode", "is");
  double n = lsw_checknum(L, 2, "curve.diode", "n");
  double vt = lsw_checknum(L, 3, "curve.diode", "vt");
  double rs = lsw_checknum(L, 4, "curve.diode", "rs");
  int x_is_i = lua_toboolean(L, 5);
  sw_err err;
  lsw_curve *c;
  lua_settop(L, 7);
  c = new_curve(L);
  if (sw_curve_diode(&c->c, is, n, vt, rs, x_is_i, &err)) return lsw_raise(L, "curve.diode", &err);
  restrict_range(L, c, 6, "curve.diode");
  return 1;
}

/* core.curve_power(k, n, lo, hi) */
static int l_curve_power(lua_State *L)
{
  double k = lsw_checknum(L, 1, "curve.power", "k"), p = lsw_checknum(L, 2, "curve.power", "n");
  sw_err err;
  lsw_curve *c;
  lua_settop(L, 4);
  c = new_curve(L);
  if (sw_curve_power(&c->c, k, p, &err)) return lsw_raise(L, "curve.power", &err);
  restrict_range(L, c, 3, "curve.power");
  return 1;
}

/* core.curve_fn(f, lo, hi) */
static int l_curve_fn(lua_State *L)
{
  double lo, hi;
  sw_err err;
  lsw_curve *c;
  if (lua_type(L, 1) != LUA_TFUNCTION)
    return lsw_fail(L, "curve.fn", "f must be a function (got %s)", luaL_typename(L, 1));
  lo = lsw_checknum(L, 2, "curve.fn", "lo");
  hi = lsw_checknum(L, 3, "curve.fn", "hi");
  lua_settop(L, 3);
  c = new_curve(L);
  if (sw_curve_fn(&c->c, lo, hi, &err)) return lsw_raise(L, "curve.fn", &err);
  lua_pushvalue(L, 1);
  lua_setiuservalue(L, -2, 1);
  return 1;
}

typedef int (*curve_op)(const sw_curve *, double, double *, sw_err *);

/* Applies op to a number, a table or an array at index 2. */
static int apply_op(lua_State *L, curve_op op, const char *fname)
{
  sw_curve copy;
  lsw_callctx ctx;
  sw_err err;
  int st = SW_OK;
  lua_settop(L, 2);
  if (lua_type(L, 2) == LUA_TNUMBER) {
    double x = lua_tonumber(L, 2), y = 0;
    lsw_curve_bind(L, 1, &copy, &ctx);
    st = op(&copy, x, &y, &err);
    lsw_curve_done(L, &ctx);
    if (st) return lsw_raise(L, fname, &err);
    lua_pushnumber(L, y);
    return 1;
  } else {
    size_t n, i;
    double *x = lsw_checkdoubles(L, 2, "x", &n, 0), *y;
    lsw_array *arr = lsw_toarray(L, 2);
    int out;
    if (arr) {
      lsw_array *res = lsw_newarray(L, n);
      lsw_pin(L, -1, &res->life); /* the callback must not free the result under us */
      y = res->data;
    } else y = lsw_scratch(L, n);
    out = lua_gettop(L);
    lsw_curve_bind(L, 1, &copy, &ctx);
    for (i = 0; i < n && st == SW_OK; i++) st = op(&copy, x[i], &y[i], &err);
    lsw_curve_done(L, &ctx);
    if (st) {
      sw_err_prefix(&err, "x[%zu]: ", i);
      return lsw_raise(L, fname, &err);
    }
    if (arr) lua_pushvalue(L, out - 1); /* the result array, under its pin */
    else lsw_pushdoubles(L, y, n);
    return 1;
  }
}

/* A number x on a curve that calls no Lua: no pin, no protected call (the
 * fast path); returns 0 when the general path must run. */
static int fast_op(lua_State *L, curve_op op, const char *fname)
{
  lsw_curve *c = lsw_checkcurve(L, 1);
  sw_err err;
  double y;
  if (lua_type(L, 2) != LUA_TNUMBER || c->c.kind == SW_CURVE_FN) return 0;
  if (op(&c->c, lua_tonumber(L, 2), &y, &err)) return lsw_raise(L, fname, &err);
  lua_pushnumber(L, y);
  return 1;
}

static int l_eval_body(lua_State *L) { return apply_op(L, sw_curve_eval, "curve:eval"); }
static int l_deriv_body(lua_State *L) { return apply_op(L, sw_curve_deriv, "curve:deriv"); }
static int l_deriv2_body(lua_State *L) { return apply_op(L, sw_curve_deriv2, "curve:deriv2"); }
static int l_call_body(lua_State *L) { return apply_op(L, sw_curve_eval, "curve"); }

static int l_eval(lua_State *L)
{
  return fast_op(L, sw_curve_eval, "curve:eval") ? 1 : lsw_protected(L, l_eval_body);
}
static int l_deriv(lua_State *L)
{
  return fast_op(L, sw_curve_deriv, "curve:deriv") ? 1 : lsw_protected(L, l_deriv_body);
}
static int l_deriv2(lua_State *L)
{
  return fast_op(L, sw_curve_deriv2, "curve:deriv2") ? 1 : lsw_protected(L, l_deriv2_body);
}

static int l_domain(lua_State *L)
{
  lsw_curve *c = lsw_checkcurve(L, 1);
  lua_pushnumber(L, c->c.lo);
  lua_pushnumber(L, c->c.hi);
  return 2;
}

static const char *kind_name(sw_curve_kind k)
{
  switch (k) {
  case SW_CURVE_SAMPLES: return "samples";
  case SW_CURVE_DIODE: return "diode";
  case SW_CURVE_POWER: return "power";
  case SW_CURVE_FN: return "fn";
  }
  return "?";
}

static int l_kind(lua_State *L)
{
  lua_pushstring(L, kind_name(lsw_checkcurve(L, 1)->c.kind));
  return 1;
}

/* c:points() -> xs, ys of a sampled curve (copies). */
LSW_PROTECT(l_points)
static int l_points_body(lua_State *L)
{
  lsw_curve *c = lsw_checkcurve(L, 1);
  lsw_pin(L, 1, &c->life); /* a finalizer run by the tables' allocation may free it */
  if (c->c.kind != SW_CURVE_SAMPLES)
    return lsw_fail(L, "curve:points", "only sampled curves have points (this is a %s curve)",
                    kind_name(c->c.kind));
  lsw_pushdoubles(L, c->c.x, c->c.n);
  lsw_pushdoubles(L, c->c.y, c->c.n);
  return 2;
}

/* c:params() -> table of the law's parameters. */
static int l_params(lua_State *L)
{
  lsw_curve *c = lsw_checkcurve(L, 1);
  lua_newtable(L);
  lua_pushstring(L, kind_name(c->c.kind));
  lua_setfield(L, -2, "kind");
  if (c->c.kind == SW_CURVE_DIODE) {
    lua_pushnumber(L, c->c.is); lua_setfield(L, -2, "is");
    lua_pushnumber(L, c->c.ideality); lua_setfield(L, -2, "n");
    lua_pushnumber(L, c->c.vt); lua_setfield(L, -2, "vt");
    lua_pushnumber(L, c->c.rs); lua_setfield(L, -2, "rs");
    lua_pushstring(L, c->c.x_is_i ? "i" : "v"); lua_setfield(L, -2, "x");
  } else if (c->c.kind == SW_CURVE_POWER) {
    lua_pushnumber(L, c->c.k); lua_setfield(L, -2, "k");
    lua_pushnumber(L, c->c.p); lua_setfield(L, -2, "n");
  } else if (c->c.kind == SW_CURVE_SAMPLES) {
    lua_pushinteger(L, (lua_Integer)c->c.n); lua_setfield(L, -2, "count");
  }
  return 1;
}

static int l_tostring(lua_State *L)
{
  lsw_curve *c = luaL_testudata(L, 1, LSW_CURVE_MT);
  if (!c || LSW_DEAD(c)) lua_pushliteral(L, "segwise curve (freed)");
  else if (c->c.kind == SW_CURVE_SAMPLES)
    lua_pushfstring(L, "segwise curve: %d samples on [%f, %f]", (int)c->c.n, c->c.lo, c->c.hi);
  else if (c->c.kind == SW_CURVE_DIODE)
    lua_pushfstring(L, "segwise curve: diode %s(%s), is=%f n=%f vt=%f rs=%f",
                    c->c.x_is_i ? "v" : "i", c->c.x_is_i ? "i" : "v", c->c.is, c->c.ideality,
                    c->c.vt, c->c.rs);
  else if (c->c.kind == SW_CURVE_POWER)
    lua_pushfstring(L, "segwise curve: y = %f*sign(x)*|x|^%f", c->c.k, c->c.p);
  else
    lua_pushfstring(L, "segwise curve: function on [%f, %f]", c->c.lo, c->c.hi);
  return 1;
}

static int l_call(lua_State *L)
{
  return fast_op(L, sw_curve_eval, "curve") ? 1 : lsw_protected(L, l_call_body);
}

static int l_thermal(lua_State *L)
{
  lua_pushnumber(L, sw_thermal_voltage(lsw_optnum(L, 1, "thermal_voltage", "kelvin", 300.0)));
  return 1;
}

static const luaL_Reg curve_methods[] = {
  {"eval", l_eval}, {"deriv", l_deriv}, {"deriv2", l_deriv2}, {"domain", l_domain},
  {"kind", l_kind}, {"points", l_points}, {"params", l_params}, {"free", curve_release},
  {NULL, NULL}
};

static const luaL_Reg curve_meta[] = {
  {"__gc", curve_gc}, {"__close", curve_release}, {"__tostring", l_tostring},
  {"__call", l_call}, {NULL, NULL}
};

static const luaL_Reg curve_funcs[] = {
  {"curve_samples", l_curve_samples}, {"curve_diode", l_curve_diode},
  {"curve_power", l_curve_power}, {"curve_fn", l_curve_fn},
  {"thermal_voltage", l_thermal}, {NULL, NULL}
};

void lsw_open_curve(lua_State *L)
{
  luaL_newmetatable(L, LSW_CURVE_MT);
  luaL_setfuncs(L, curve_meta, 0);
  lsw_protect_meta(L, l_call);
  luaL_newlib(L, curve_methods);
  lua_pushvalue(L, -1);
  lua_setfield(L, -4, "curve_methods"); /* so Lua can add methods */
  lua_setfield(L, -2, "__index");
  lua_pop(L, 1);
  luaL_setfuncs(L, curve_funcs, 0);
}
