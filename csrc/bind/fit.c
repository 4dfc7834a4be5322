/* Binding of the fitting engine: core.fit(curve, opts) -> model, with the
 * fit-info table as the model's user value 1.  Options arrive checked and
 * completed by lua/segwise/fit.lua; they are read again defensively here. */
#include <math.h>
#include <string.h>

#include "bind.h"
#include "fit/fit.h"

#define FNAME "fit"

static const char *const criterion_names[] = {"minimax", "lsq", "interp", "tangent", "chord", NULL};
static const char *const scheme_names[] = {"uniform", "geometric", "curvature", "optimal", NULL};
static const char *const error_names[] = {"abs", "rel", NULL};

static int opt_number(lua_State *L, const char *key, double *v)
{
  int t = lua_getfield(L, 2, key), has = 0;
  if (t != LUA_TNIL) {
    if (!lua_isnumber(L, -1))
      luaL_error(L, "segwise.fit: %s must be a number (got %s)", key, luaL_typename(L, -1));
    *v = lua_tonumber(L, -1);
    has = 1;
  }
  lua_pop(L, 1);
  return has;
}

static int opt_bool(lua_State *L, const char *key, int dflt)
{
  int v = dflt;
  if (lua_getfield(L, 2, key) != LUA_TNIL) v = lua_toboolean(L, -1);
  lua_pop(L, 1);
  return v;
}

static int opt_choice(lua_State *L, const char *key, const char *const names[], int dflt)
{
  int v = dflt;
  if (lua_getfield(L, 2, key) != LUA_TNIL) {
    const char *s = lua_tostring(L, -1);
    int i;
    v = -1;
    for (i = 0; s && names[i]; i++)
      if (strcmp(s, names[i]) == 0) v = i;
    if (v < 0) luaL_error(L, "segwise.fit: bad %s '%s'", key, s ? s : luaL_typename(L, -1));
  }
  lua_pop(L, 1);
  return v;
}

/* through = {{x, y}, ...} into two GC-owned arrays (pushed). */
static void read_through(lua_State *L, sw_fit_opts *o)
{
  size_t n, i;
  double *buf;
  if (lua_getfield(L, 2, "through") == LUA_TNIL) { lua_pop(L, 1); return; }
  if (!lua_istable(L, -1)) luaL_error(L, "segwise.fit: through must be a list of {x, y} pairs");
  n = (size_t)luaL_len(L, -1);
  buf = lsw_scratch(L, 2 * n + 1);
  for (i = 0; i < n; i++) {
    int k;
    if (lua_geti(L, -2, (lua_Integer)i + 1) != LUA_TTABLE)
      luaL_error(L, "segwise.fit: through[%d] must be a pair {x, y}", (int)i + 1);
    for (k = 0; k < 2; k++) {
      lua_geti(L, -1, k + 1);
      if (!lua_isnumber(L, -1))
        luaL_error(L, "segwise.fit: through[%d][%d] must be a number", (int)i + 1, k + 1);
      buf[k * n + i] = lua_tonumber(L, -1);
      lua_pop(L, 1);
    }
    lua_pop(L, 1);
  }
  o->through_x = buf;
  o->through_y = buf + n;
  o->nthrough = n;
  lua_remove(L, -2); /* keep the scratch buffer, drop the table */
}

static void set_num(lua_State *L, const char *k, double v)
{
  if (v == v) {
    lua_pushnumber(L, v);
    lua_setfield(L, -2, k);
  }
}

static int l_fit(lua_State *L)
{
  sw_fit_opts o;
  sw_fit_info info;
  sw_err err;
  sw_curve copy;
  lsw_callctx ctx;
  lsw_model *m;
  int midx, st, scheme = 0, has_tol;
  double v;
  size_t k;
  lsw_checkcurve(L, 1);
  luaL_checktype(L, 2, LUA_TTABLE);
  sw_fit_opts_init(&o);
  if (!opt_number(L, "lo", &o.lo) || !opt_number(L, "hi", &o.hi))
    return luaL_error(L, "segwise.fit: lo and hi are required");
  has_tol = opt_number(L, "tol", &o.tol);
  if (has_tol && !(o.tol > 0)) return luaL_error(L, "segwise.fit: tol (%g) must be positive", o.tol);
  if (opt_number(L, "segments", &v)) {
    if (!(v >= 1) || v != floor(v)) return luaL_error(L, "segwise.fit: segments (%g) must be an integer >= 1", v);
    if (v > 100000) return luaL_error(L, "segwise.fit: segments (%g) is too large (at most 100000)", v);
    o.segments = (size_t)v;
  }
  if (has_tol) o.segments = 0;
  o.criterion = (sw_fit_criterion)(opt_choice(L, "criterion", criterion_names, 0) + 1);
  o.rel = opt_choice(L, "error", error_names, 0);
  opt_number(L, "rel_floor", &o.rel_floor);
  o.continuous = opt_bool(L, "continuous", 1);
  o.has_at = opt_number(L, "at", &o.at);
  o.has_slope_first = opt_number(L, "slope_first", &o.slope_first);
  o.has_slope_last = opt_number(L, "slope_last", &o.slope_last);
  o.monotone = opt_bool(L, "monotone", 0);
  opt_number(L, "offset", &o.offset);
  if (opt_number(L, "max_segments", &v)) {
    if (!(v >= 1 && v <= 100000) || v != floor(v))
      return luaL_error(L, "segwise.fit: max_segments (%g) must be an integer from 1 to 100000", v);
    o.max_segments = (size_t)v;
  }
  if (opt_number(L, "grid", &v)) {
    if (!(v >= 3 && v <= 1e7)) return luaL_error(L, "segwise.fit: grid (%g) must be between 3 and 1e7", v);
    o.grid = (size_t)v;
  }
  lua_getfield(L, 2, "knots");
  if (lua_istable(L, -1) || lsw_toarray(L, -1)) {
    o.knot_list = lsw_checkdoubles(L, -1, "knots", &o.nknot_list, 0);
    o.knots = SW_KNOTS_LIST;
    scheme = -1;
  } else {
    lua_pop(L, 1);
    scheme = opt_choice(L, "knots", scheme_names, 0);
    o.knots = (sw_knots_scheme)(scheme + 1);
  }
  read_through(L, &o);

  m = lsw_newmodel(L);
  midx = lua_gettop(L);
  lsw_curve_bind(L, 1, &copy, &ctx);
  st = sw_fit(&copy, &o, &m->m, &info, &err);
  lsw_curve_done(L, &ctx);
  if (st) return lsw_raise(L, FNAME, &err);

  /* the fit-info table, with each segment's own error */
  {
    double *seg = lsw_scratch(L, 3 * m->m.nseg);
    lsw_curve_bind(L, 1, &copy, &ctx);
    st = sw_fit_segment_errors(&m->m, &copy, o.rel_floor, seg, seg + m->m.nseg,
                               seg + 2 * m->m.nseg, &err);
    lsw_curve_done(L, &ctx);
    if (st) return lsw_raise(L, FNAME, &err);
    lua_createtable(L, 0, 16);
    lua_pushstring(L, criterion_names[o.criterion - 1]);
    lua_setfield(L, -2, "criterion");
    lua_pushstring(L, error_names[o.rel]);
    lua_setfield(L, -2, "error");
    lua_pushstring(L, scheme < 0 ? "list" : scheme_names[scheme]);
    lua_setfield(L, -2, "knots");
    lua_pushinteger(L, (lua_Integer)m->m.nseg);
    lua_setfield(L, -2, "segments");
    lua_pushboolean(L, m->m.continuous);
    lua_setfield(L, -2, "continuous");
    set_num(L, "max_abs", info.max_abs);
    set_num(L, "x_abs", info.x_abs);
    set_num(L, "max_rel", info.max_rel);
    set_num(L, "x_rel", info.x_rel);
    set_num(L, "rms", info.rms);
    set_num(L, "internal", info.internal);
    lua_pushinteger(L, (lua_Integer)info.iterations);
    lua_setfield(L, -2, "iterations");
    if (has_tol) set_num(L, "tol", o.tol);
    if (o.rel_floor > 0) set_num(L, "rel_floor", o.rel_floor);
    lua_createtable(L, (int)m->m.nseg, 0);
    for (k = 0; k < m->m.nseg; k++) {
      lua_createtable(L, 0, 5);
      set_num(L, "lo", m->m.x[k]);
      set_num(L, "hi", m->m.x[k + 1]);
      set_num(L, "max_abs", seg[k]);
      set_num(L, "x", seg[m->m.nseg + k]);
      set_num(L, "max_rel", seg[2 * m->m.nseg + k]);
      lua_rawseti(L, -2, (lua_Integer)k + 1);
    }
    lua_setfield(L, -2, "per_segment");
    lua_setiuservalue(L, midx, 1);
  }
  lua_pushvalue(L, midx);
  return 1;
}

void lsw_open_fit(lua_State *L)
{
  lua_pushcfunction(L, l_fit);
  lua_setfield(L, -2, "fit");
}
