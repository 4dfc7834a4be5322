/* Binding of the PWL model: constructors, evaluation, companions, compare. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "bind.h"

static const char *const extend_names[] = {"line", "hold", "error", NULL};

lsw_model *lsw_checkmodel(lua_State *L, int idx)
{
  lsw_model *m = luaL_testudata(L, idx, LSW_MODEL_MT);
  if (!m)
    lsw_fail(L, NULL, "argument #%d must be a segwise model (got %s)", idx, luaL_typename(L, idx));
  if (LSW_DEAD(m)) lsw_fail(L, NULL, "model used after free() (argument #%d)", idx);
  return m;
}

static void model_free_mem(lsw_life *life)
{
  sw_pwl_free(&((lsw_model *)life)->m);
}

lsw_model *lsw_newmodel(lua_State *L)
{
  lsw_model *m = lua_newuserdatauv(L, sizeof *m, 1);
  memset(m, 0, sizeof *m);
  m->life.release = model_free_mem;
  luaL_setmetatable(L, LSW_MODEL_MT);
  return m;
}

/* The model at 1, pinned: for methods that allocate (so may run a
 * finalizer) while they read its arrays. */
static lsw_model *pinned_model(lua_State *L)
{
  lsw_model *m = lsw_checkmodel(L, 1);
  lsw_pin(L, 1, &m->life);
  return lsw_checkmodel(L, 1); /* the pin's allocation may have run a finalizer */
}

static lsw_model *model_arg(lua_State *L)
{
  lsw_model *m = luaL_testudata(L, 1, LSW_MODEL_MT);
  if (!m) lsw_fail(L, "model:free", "argument #1 must be a segwise model (got %s)",
                   luaL_typename(L, 1));
  return m;
}

/* __gc: while a computation holds the model, its release waits for it. */
static int model_gc(lua_State *L)
{
  return lsw_release(L, &model_arg(L)->life, "model", 1);
}

/* :free() and __close: refused while a computation uses the model. */
static int model_release(lua_State *L)
{
  return lsw_release(L, &model_arg(L)->life, "model", 0);
}

static sw_extend check_extend(lua_State *L, int idx)
{
  const char *s = lua_isnoneornil(L, idx) ? "line" : lua_tostring(L, idx);
  int k;
  if (lua_type(L, idx) != LUA_TSTRING && !lua_isnoneornil(L, idx))
    lsw_fail(L, NULL, "the extension rule must be \"line\", \"hold\" or \"error\" (got %s)",
             luaL_typename(L, idx));
  for (k = 0; extend_names[k]; k++)
    if (strcmp(s, extend_names[k]) == 0) return (sw_extend)k;
  return (sw_extend)lsw_fail(
      L, NULL, "the extension rule must be \"line\", \"hold\" or \"error\" (got \"%s\")", s);
}

/* core.pwl_points(xs, ys, extend) */
static int l_pwl_points(lua_State *L)
{
  size_t nx, ny;
  double *x = lsw_checkdoubles(L, 1, "x", &nx, 0);
  double *y = lsw_checkdoubles(L, 2, "y", &ny, 0);
  sw_extend ext = check_extend(L, 3);
  sw_err err;
  lsw_model *m;
  if (nx != ny)
    return lsw_fail(L, "pwl", "x has %I values but y has %I", (lua_Integer)nx, (lua_Integer)ny);
  m = lsw_newmodel(L);
  if (sw_pwl_from_points(&m->m, x, y, nx, &err)) return lsw_raise(L, "pwl", &err);
  m->m.extend = ext;
  return 1;
}

/* core.pwl_segments(lo, hi, slope, icpt, extend) */
static int l_pwl_segments(lua_State *L)
{
  size_t n[4];
  double *lo = lsw_checkdoubles(L, 1, "lo", &n[0], 0);
  double *hi = lsw_checkdoubles(L, 2, "hi", &n[1], 0);
  double *sl = lsw_checkdoubles(L, 3, "slope", &n[2], 0);
  double *ic = lsw_checkdoubles(L, 4, "intercept", &n[3], 0);
  sw_extend ext = check_extend(L, 5);
  sw_err err;
  lsw_model *m;
  if (n[0] != n[1] || n[0] != n[2] || n[0] != n[3])
    return lsw_fail(L, "pwl.segments", "field lists differ in length");
  m = lsw_newmodel(L);
  if (sw_pwl_from_segments(&m->m, lo, hi, sl, ic, n[0], &err))
    return lsw_raise(L, "pwl.segments", &err);
  m->m.extend = ext;
  return 1;
}

/* m:eval(x [, out]) for a table or an array x: every argument is read (a
 * table's metamethods run) and every buffer allocated before a pointer is
 * taken, and what a finalizer may have freed meanwhile is checked again;
 * no Lua runs while the pointers are in use. */
static int eval_many(lua_State *L)
{
  lsw_array *in, *out = NULL;
  const double *x = NULL;
  double *y;
  size_t n;
  int res;
  sw_err err;
  lua_settop(L, 3);
  if (!lua_isnil(L, 3) && !lsw_toarray(L, 3))
    return lsw_fail(L, "model:eval", "out must be a segwise array (got %s)", luaL_typename(L, 3));
  in = lsw_toarray(L, 2);
  if (!in || LSW_DEAD(in)) x = lsw_checkdoubles(L, 2, "x", &n, 1); /* a copy */
  else n = in->n;
  if (!lua_isnil(L, 3)) res = 3;
  else if (in) { lsw_newarray(L, n); res = lua_gettop(L); }
  else { lsw_scratch(L, n); res = 0; }
  if (in) { /* read in place: look again after the allocations */
    if (LSW_DEAD(in)) return lsw_fail(L, "model:eval", "x: array used after free()");
    x = in->data;
  }
  if (res == 3) {
    out = lsw_toarray(L, 3);
    if (LSW_DEAD(out)) return lsw_fail(L, "model:eval", "out used after free()");
    if (out->n < n)
      return lsw_fail(L, "model:eval", "out has %I values but x has %I", (lua_Integer)out->n,
                      (lua_Integer)n);
  }
  y = res ? lsw_toarray(L, res)->data : lua_touserdata(L, -1);
  if (sw_pwl_eval_many(&lsw_checkmodel(L, 1)->m, x, y, n, &err))
    return lsw_raise(L, "model:eval", &err);
  if (res) lua_pushvalue(L, res);
  else lsw_pushdoubles(L, y, n); /* y is GC-owned scratch: safe across the allocation */
  return 1;
}

/* Evaluates a number, a table or an array at index 2; m:eval(x, out) writes
 * into the array out (which may be x itself) and returns it. */
static int l_eval(lua_State *L)
{
  lsw_model *m = lsw_checkmodel(L, 1);
  sw_err err;
  double y;
  if (lua_type(L, 2) != LUA_TNUMBER) return lsw_protected(L, eval_many);
  if (sw_pwl_eval(&m->m, lua_tonumber(L, 2), &y, &err)) return lsw_raise(L, "model:eval", &err);
  lua_pushnumber(L, y);
  return 1;
}

static double check_x(lua_State *L, int idx)
{
  double x = lsw_checknum(L, idx, NULL, "x");
  if (isnan(x)) lsw_fail(L, NULL, "x is NaN");
  return x;
}

static int l_slope(lua_State *L)
{
  lsw_model *m = lsw_checkmodel(L, 1);
  double s;
  sw_err err;
  if (sw_pwl_slope_at(&m->m, check_x(L, 2), &s, &err)) return lsw_raise(L, "model:slope", &err);
  lua_pushnumber(L, s);
  return 1;
}

static int l_segment(lua_State *L)
{
  lsw_model *m = lsw_checkmodel(L, 1);
  double x = check_x(L, 2), y;
  sw_err err;
  if (sw_pwl_eval(&m->m, x, &y, &err))
    return lsw_raise(L, "model:segment", &err); /* honours extend */
  lua_pushinteger(L, (lua_Integer)sw_pwl_locate(&m->m, x) + 1);
  return 1;
}

static int l_nseg(lua_State *L)
{
  lua_pushinteger(L, (lua_Integer)lsw_checkmodel(L, 1)->m.nseg);
  return 1;
}

/* m:knots() -> xs, ys (value at each knot; right-hand value at a jump),
 * and ys_left (the left-hand limits) as a third result. */
LSW_PROTECT(l_knots)
static int l_knots_body(lua_State *L)
{
  lsw_model *m = pinned_model(L);
  size_t k, n = m->m.nseg;
  lsw_pushdoubles(L, m->m.x, n + 1);
  lua_createtable(L, (int)(n + 1), 0);
  lua_createtable(L, (int)(n + 1), 0);
  for (k = 0; k <= n; k++) {
    lua_pushnumber(L, k < n ? m->m.ya[k] : m->m.yb[n - 1]);
    lua_rawseti(L, -3, (lua_Integer)k + 1);
    lua_pushnumber(L, k > 0 ? m->m.yb[k - 1] : m->m.ya[0]);
    lua_rawseti(L, -2, (lua_Integer)k + 1);
  }
  return 3;
}

static size_t check_seg(lua_State *L, lsw_model *m, int idx)
{
  return (size_t)(lsw_checkint(L, idx, NULL, "segment index", 1, (lua_Integer)m->m.nseg) - 1);
}

static void set_num(lua_State *L, const char *key, double v)
{
  lua_pushnumber(L, v);
  lua_setfield(L, -2, key);
}

LSW_PROTECT(l_seg)
static int l_seg_body(lua_State *L)
{
  lsw_model *m = pinned_model(L);
  size_t k = check_seg(L, m, 2);
  double e, r;
  sw_pwl_thevenin(&m->m, k, &e, &r);
  lua_createtable(L, 0, 6);
  set_num(L, "lo", m->m.x[k]);
  set_num(L, "hi", m->m.x[k + 1]);
  set_num(L, "slope", r);
  set_num(L, "intercept", e);
  set_num(L, "y_lo", m->m.ya[k]);
  set_num(L, "y_hi", m->m.yb[k]);
  return 1;
}

static int l_thevenin(lua_State *L)
{
  lsw_model *m = lsw_checkmodel(L, 1);
  size_t k = check_seg(L, m, 2);
  double e, r;
  sw_pwl_thevenin(&m->m, k, &e, &r);
  lua_pushnumber(L, e);
  lua_pushnumber(L, r);
  return 2;
}

static int l_norton(lua_State *L)
{
  lsw_model *m = lsw_checkmodel(L, 1);
  size_t k = check_seg(L, m, 2);
  double j, g;
  sw_err err;
  if (sw_pwl_norton(&m->m, k, &j, &g, &err)) return lsw_raise(L, "model:norton", &err);
  lua_pushnumber(L, j);
  lua_pushnumber(L, g);
  return 2;
}

LSW_PROTECT(l_inverse)
static int l_inverse_body(lua_State *L)
{
  lsw_model *m = pinned_model(L);
  lsw_model *out = lsw_newmodel(L);
  sw_err err;
  if (sw_pwl_inverse(&m->m, &out->m, &err)) return lsw_raise(L, "model:inverse", &err);
  return 1;
}

LSW_PROTECT(l_copy)
static int l_copy_body(lua_State *L)
{
  lsw_model *m = pinned_model(L);
  lsw_model *out = lsw_newmodel(L);
  sw_err err;
  if (sw_pwl_copy(&m->m, &out->m, &err)) return lsw_raise(L, "model:copy", &err);
  return 1;
}

LSW_PROTECT(l_canonical)
static int l_canonical_body(lua_State *L)
{
  lsw_model *m = pinned_model(L);
  size_t n = m->m.nseg;
  double a, b, *c = lsw_scratch(L, n), *beta = lsw_scratch(L, n);
  sw_err err;
  if (sw_pwl_canonical(&m->m, &a, &b, c, beta, &err)) return lsw_raise(L, "model:canonical", &err);
  lua_pushnumber(L, a);
  lua_pushnumber(L, b);
  lsw_pushdoubles(L, c, n - 1);
  lsw_pushdoubles(L, beta, n - 1);
  return 4;
}

/* Reads an optional finite number field of the options table at idx,
 * raw: an options table's metamethods are not consulted (the unknown-key
 * check walks it raw too), so no Lua runs while the models are read. */
static int opt_field(lua_State *L, int idx, const char *key, double *v)
{
  int isnum;
  if (lua_isnoneornil(L, idx)) return 0;
  lua_pushstring(L, key);
  if (lua_rawget(L, idx) == LUA_TNIL) { lua_pop(L, 1); return 0; }
  *v = lua_tonumberx(L, -1, &isnum);
  if (!isnum || !isfinite(*v)) lsw_fail(L, NULL, "option %s must be a finite number", key);
  lua_pop(L, 1);
  return 1;
}

/* Unknown keys of compare's options table are refused. */
static void compare_check_keys(lua_State *L)
{
  static const char *const known[] = {"lo", "hi", "n", "rel_floor", NULL};
  if (lua_isnoneornil(L, 3)) return;
  if (!lua_istable(L, 3))
    lsw_fail(L, NULL, "options must be a table (got %s)", luaL_typename(L, 3));
  lua_pushnil(L);
  while (lua_next(L, 3)) {
    int k, ok = 0;
    lua_pop(L, 1);
    for (k = 0; known[k]; k++)
      ok |= lua_type(L, -1) == LUA_TSTRING && strcmp(lua_tostring(L, -1), known[k]) == 0;
    if (!ok)
      lsw_fail(L, NULL, "unknown option '%s' (known: lo, hi, n, rel_floor)",
                luaL_tolstring(L, -1, NULL));
  }
}

static void compare_push(lua_State *L, const sw_compare *out, double lo, double hi)
{
  lua_createtable(L, 0, 9);
  set_num(L, "max_abs", out->max_abs);
  set_num(L, "x_abs", out->x_abs);
  set_num(L, "rms", out->rms);
  if (!out->rel_undefined) {
    set_num(L, "max_rel", out->max_rel);
    set_num(L, "x_rel", out->x_rel);
  } else {
    lua_pushfstring(L, "relative error undefined: the curve is 0 near x = %f (give rel_floor)",
                    out->x_zero);
    lua_setfield(L, -2, "rel_note");
  }
  lua_pushinteger(L, (lua_Integer)out->npoints);
  lua_setfield(L, -2, "points");
  lua_pushstring(L, out->exact ? "exact" : "refined");
  lua_setfield(L, -2, "checked");
  set_num(L, "lo", lo);
  set_num(L, "hi", hi);
}

/* m:compare(curve_or_model [, {lo=, hi=, n=, rel_floor=}]): a model as the
 * reference is piecewise linear, so its check is exact like a sampled
 * curve's. */
LSW_PROTECT(l_compare)
static int l_compare_body(lua_State *L)
{
  lsw_model *m = lsw_checkmodel(L, 1), *ref = luaL_testudata(L, 2, LSW_MODEL_MT);
  lsw_curve *c = NULL;
  double lo = 0, hi = 0, n = 2001, floor = 0, dlo, dhi;
  int has_lo, has_hi;
  sw_compare out;
  sw_err err;
  int st;
  if (!ref && !luaL_testudata(L, 2, LSW_CURVE_MT))
    return lsw_fail(L, NULL, "argument #2 must be a segwise curve or model (got %s)",
                     luaL_typename(L, 2));
  compare_check_keys(L);
  has_lo = opt_field(L, 3, "lo", &lo);
  has_hi = opt_field(L, 3, "hi", &hi);
  opt_field(L, 3, "n", &n);
  opt_field(L, 3, "rel_floor", &floor);
  if (n < 2 || n > 1e8)
    return lsw_fail(L, "model:compare", "n = %f must be between 2 and 1e8", n);
  lua_settop(L, 3);
  m = lsw_checkmodel(L, 1); /* every argument read: now the pointers */
  if (ref) ref = lsw_checkmodel(L, 2);
  else c = lsw_checkcurve(L, 2);
  dlo = ref ? ref->m.x[0] : c->c.lo;
  dhi = ref ? ref->m.x[ref->m.nseg] : c->c.hi;
  if (!has_lo) lo = dlo > m->m.x[0] ? dlo : m->m.x[0];
  if (!has_hi) hi = dhi < m->m.x[m->m.nseg] ? dhi : m->m.x[m->m.nseg];
  if (ref) {
    st = sw_pwl_compare_pwl(&m->m, &ref->m, lo, hi, floor, &out, &err);
  } else {
    sw_curve copy;
    lsw_callctx ctx;
    lsw_pin(L, 1, &m->life); /* the curve's callback must not free or change the model */
    lsw_curve_bind(L, 2, &copy, &ctx);
    m = lsw_checkmodel(L, 1); /* the pins' allocations may have run a finalizer */
    st = sw_pwl_compare(&m->m, &copy, lo, hi, (size_t)n, floor, &out, &err);
    lsw_curve_done(L, &ctx);
  }
  if (st) return lsw_raise(L, "model:compare", &err);
  compare_push(L, &out, lo, hi);
  return 1;
}

static int l_fit_info(lua_State *L)
{
  lsw_checkmodel(L, 1);
  lua_getiuservalue(L, 1, 1);
  return 1;
}

static int l_extend(lua_State *L)
{
  lsw_model *m = lsw_checkmodel(L, 1);
  if (!lua_isnoneornil(L, 2)) {
    sw_extend ext = check_extend(L, 2);
    if (m->life.busy > 0)
      return lsw_fail(L, "model:extend", "the model is in use by a computation that is calling "
                      "back into Lua: it cannot change inside that callback");
    m->m.extend = ext;
    lua_settop(L, 1);
    return 1;
  }
  lua_pushstring(L, extend_names[m->m.extend]);
  return 1;
}

static int l_continuous(lua_State *L)
{
  lua_pushboolean(L, lsw_checkmodel(L, 1)->m.continuous);
  return 1;
}

LSW_PROTECT(l_tostring)
static int l_tostring_body(lua_State *L)
{
  lsw_model *m = luaL_testudata(L, 1, LSW_MODEL_MT);
  luaL_Buffer b;
  char line[160];
  size_t k;
  if (!m || LSW_DEAD(m)) { lua_pushliteral(L, "segwise model (freed)"); return 1; }
  m = pinned_model(L); /* the buffer's growth may run a finalizer */
  luaL_buffinit(L, &b);
  snprintf(line, sizeof line, "segwise model: %zu segment%s, %s, outside the knots: %s\n",
           m->m.nseg, m->m.nseg == 1 ? "" : "s", m->m.continuous ? "continuous" : "with jumps",
           extend_names[m->m.extend]);
  luaL_addstring(&b, line);
  snprintf(line, sizeof line, "%4s %13s %13s %13s %13s\n", "seg", "from x", "to x", "slope",
           "y at x=0");
  luaL_addstring(&b, line);
  for (k = 0; k < m->m.nseg; k++) {
    double e, r;
    sw_pwl_thevenin(&m->m, k, &e, &r);
    snprintf(line, sizeof line, "%4zu %13.6g %13.6g %13.6g %13.6g\n", k + 1, m->m.x[k],
             m->m.x[k + 1], r, e);
    luaL_addstring(&b, line);
  }
  luaL_pushresult(&b);
  return 1;
}

static int l_len(lua_State *L) { return l_nseg(L); }

static const luaL_Reg model_methods[] = {
  {"eval", l_eval}, {"slope", l_slope}, {"segment", l_segment}, {"nseg", l_nseg},
  {"knots", l_knots}, {"seg", l_seg}, {"thevenin", l_thevenin}, {"norton", l_norton},
  {"inverse", l_inverse}, {"canonical", l_canonical}, {"compare", l_compare},
  {"fit_info", l_fit_info}, {"extend", l_extend}, {"is_continuous", l_continuous},
  {"copy", l_copy}, {"free", model_release}, {NULL, NULL}
};

static const luaL_Reg model_meta[] = {
  {"__gc", model_gc}, {"__close", model_release}, {"__tostring", l_tostring},
  {"__call", l_eval}, {"__len", l_len}, {NULL, NULL}
};

static const luaL_Reg pwl_funcs[] = {
  {"pwl_points", l_pwl_points}, {"pwl_segments", l_pwl_segments}, {NULL, NULL}
};

void lsw_open_pwl(lua_State *L)
{
  luaL_newmetatable(L, LSW_MODEL_MT);
  luaL_setfuncs(L, model_meta, 0);
  lsw_protect_meta(L, l_eval);
  luaL_newlib(L, model_methods);
  lua_pushvalue(L, -1);
  lua_setfield(L, -4, "model_methods"); /* so Lua can add methods */
  lua_setfield(L, -2, "__index");
  lua_pop(L, 1);
  luaL_setfuncs(L, pwl_funcs, 0);
}
