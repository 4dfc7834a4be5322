/* Binding of the fitting engine: core.fit(curve, opts) -> model, with the
 * fit-info table as the model's user value 1.  Option names and types are
 * checked by lua/segwise/fit.lua; their values, defaults and combinations
 * by the core (csrc/core/fit/fit_opts.c); here they are only converted. */
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
      lsw_fail(L, "fit", "%s must be a number (got %s)", key, luaL_typename(L, -1));
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

/* The index of the name at -1 in names, or a message listing them. */
static int name_index(lua_State *L, const char *key, const char *const names[], const char *more)
{
  const char *s = lua_tostring(L, -1);
  luaL_Buffer b;
  int i;
  for (i = 0; s && names[i]; i++)
    if (strcmp(s, names[i]) == 0) return i;
  luaL_buffinit(L, &b);
  for (i = 0; names[i]; i++) {
    luaL_addstring(&b, i == 0 ? "\"" : names[i + 1] || more ? ", \"" : " or \"");
    luaL_addstring(&b, names[i]);
    luaL_addchar(&b, '"');
  }
  if (more) luaL_addstring(&b, more);
  luaL_pushresult(&b);
  return lsw_fail(L, "fit", "%s must be one of %s (got %s%s%s)", key, lua_tostring(L, -1),
                    s ? "\"" : "", s ? s : luaL_typename(L, -2), s ? "\"" : "");
}

static int opt_choice(lua_State *L, const char *key, const char *const names[], int dflt)
{
  int v = dflt;
  if (lua_getfield(L, 2, key) != LUA_TNIL) v = name_index(L, key, names, NULL);
  lua_pop(L, 1);
  return v;
}

/* A count option through the core's own rule for it. */
static void opt_count(lua_State *L, sw_fit_opts *o, const char *key)
{
  double v;
  sw_err err;
  if (opt_number(L, key, &v) && sw_fit_set_count(o, key, v, &err)) lsw_raise(L, FNAME, &err);
}

/* through = {{x, y}, ...} into two GC-owned arrays (pushed). */
static void read_through(lua_State *L, sw_fit_opts *o)
{
  size_t n, i;
  double *buf;
  if (lua_getfield(L, 2, "through") == LUA_TNIL) { lua_pop(L, 1); return; }
  if (!lua_istable(L, -1)) lsw_fail(L, "fit", "through must be a list of {x, y} pairs");
  n = (size_t)luaL_len(L, -1);
  lua_pushnil(L); /* a keyed table ({x =, y =}) is not a list: refuse, not ignore */
  while (lua_next(L, -2)) {
    if (!lua_isinteger(L, -2) || lua_tointeger(L, -2) < 1 || (size_t)lua_tointeger(L, -2) > n)
      lsw_fail(L, "fit", "through must be a list of {x, y} pairs (it has the key %s)",
                 luaL_tolstring(L, -2, NULL));
    lua_pop(L, 1);
  }
  buf = lsw_scratch(L, 2 * n + 1);
  for (i = 0; i < n; i++) {
    int k;
    if (lua_geti(L, -2, (lua_Integer)i + 1) != LUA_TTABLE)
      lsw_fail(L, "fit", "through[%d] must be a pair {x, y} of numbers", (int)i + 1);
    for (k = 0; k < 2; k++) {
      lua_geti(L, -1, k + 1);
      if (!lua_isnumber(L, -1))
        lsw_fail(L, "fit", "through[%d] must be a pair {x, y} of numbers", (int)i + 1);
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

/* The knots option: a list (table or array, pushed as a scratch buffer)
 * or a scheme's name. */
static void read_knots(lua_State *L, sw_fit_opts *o)
{
  lua_getfield(L, 2, "knots");
  if (lua_istable(L, -1) || lsw_toarray(L, -1)) {
    o->knot_list = lsw_checkdoubles(L, -1, "knots", &o->nknot_list, 0);
    o->knots = SW_KNOTS_LIST;
    lua_remove(L, -2); /* keep the buffer */
    return;
  }
  if (!lua_isnil(L, -1))
    o->knots = (sw_knots_scheme)(name_index(L, "knots", scheme_names, " or a list") + 1);
  lua_pop(L, 1);
}

/* The options table at 2 into o: conversion only; every rule about the
 * values is the core's (fit_opts.c).  Lists stay on the stack. */
static void read_opts(lua_State *L, sw_fit_opts *o)
{
  lsw_checktable(L, 2, "fit", "options");
  sw_fit_opts_init(o);
  opt_number(L, "lo", &o->lo);
  opt_number(L, "hi", &o->hi);
  opt_number(L, "tol", &o->tol);
  opt_count(L, o, "segments");
  opt_count(L, o, "max_segments");
  opt_count(L, o, "grid");
  o->criterion = (sw_fit_criterion)(opt_choice(L, "criterion", criterion_names, 0) + 1);
  o->rel = opt_choice(L, "error", error_names, 0);
  opt_number(L, "rel_floor", &o->rel_floor);
  o->continuous = opt_bool(L, "continuous", 1);
  o->has_at = opt_number(L, "at", &o->at);
  o->has_slope_first = opt_number(L, "slope_first", &o->slope_first);
  o->has_slope_last = opt_number(L, "slope_last", &o->slope_last);
  o->monotone = opt_bool(L, "monotone", 0);
  opt_number(L, "offset", &o->offset);
  read_knots(L, o);
  read_through(L, o);
}

/* Each segment's own error, as the list fit_info().per_segment. */
static void push_per_segment(lua_State *L, const sw_pwl *m, const double *seg)
{
  size_t k;
  lua_createtable(L, (int)m->nseg, 0);
  for (k = 0; k < m->nseg; k++) {
    lua_createtable(L, 0, 5);
    set_num(L, "lo", m->x[k]);
    set_num(L, "hi", m->x[k + 1]);
    set_num(L, "max_abs", seg[k]);
    set_num(L, "x", seg[m->nseg + k]);
    set_num(L, "max_rel", seg[2 * m->nseg + k]);
    lua_rawseti(L, -2, (lua_Integer)k + 1);
  }
}

/* The fit-info table of model m made by info from options u; exact: the
 * curve is sampled, so the rechecked error is exact (else refined). */
static void push_info(lua_State *L, const sw_pwl *m, const sw_fit_info *info, const double *seg,
                      int exact)
{
  const sw_fit_opts *u = &info->used;
  lua_createtable(L, 0, 16);
  lua_pushstring(L, criterion_names[u->criterion - 1]);
  lua_setfield(L, -2, "criterion");
  lua_pushstring(L, error_names[u->rel]);
  lua_setfield(L, -2, "error");
  lua_pushstring(L, u->knots == SW_KNOTS_LIST ? "list" : scheme_names[u->knots - 1]);
  lua_setfield(L, -2, "knots");
  lua_pushinteger(L, (lua_Integer)m->nseg);
  lua_setfield(L, -2, "segments");
  lua_pushboolean(L, m->continuous);
  lua_setfield(L, -2, "continuous");
  set_num(L, "max_abs", info->max_abs);
  set_num(L, "x_abs", info->x_abs);
  set_num(L, "max_rel", info->max_rel);
  set_num(L, "x_rel", info->x_rel);
  set_num(L, "rms", info->rms);
  set_num(L, "internal", info->internal);
  lua_pushstring(L, exact ? "exact" : "refined");
  lua_setfield(L, -2, "checked");
  lua_pushinteger(L, (lua_Integer)info->iterations);
  lua_setfield(L, -2, "iterations");
  if (u->tol > 0) set_num(L, "tol", u->tol);
  if (u->rel_floor > 0) set_num(L, "rel_floor", u->rel_floor);
  push_per_segment(L, m, seg);
  lua_setfield(L, -2, "per_segment");
}

LSW_PROTECT(l_fit)
static int l_fit_body(lua_State *L)
{
  sw_fit_opts o;
  sw_fit_info info;
  sw_err err;
  sw_curve copy;
  lsw_callctx ctx;
  lsw_model *m;
  double *seg;
  int midx, st;
  lsw_checkcurve(L, 1);
  read_opts(L, &o);
  m = lsw_newmodel(L);
  midx = lua_gettop(L);
  lsw_curve_bind(L, 1, &copy, &ctx);
  st = sw_fit(&copy, &o, &m->m, &info, &err);
  lsw_curve_done(L, &ctx);
  if (st) return lsw_raise(L, FNAME, &err);
  seg = lsw_scratch(L, 3 * m->m.nseg);
  lsw_curve_bind(L, 1, &copy, &ctx);
  st = sw_fit_segment_errors(&m->m, &copy, info.used.rel_floor, seg, seg + m->m.nseg,
                             seg + 2 * m->m.nseg, &err);
  lsw_curve_done(L, &ctx);
  if (st) return lsw_raise(L, FNAME, &err);
  push_info(L, &m->m, &info, seg, copy.kind == SW_CURVE_SAMPLES);
  lua_setiuservalue(L, midx, 1);
  lua_pushvalue(L, midx);
  return 1;
}

void lsw_open_fit(lua_State *L)
{
  lua_pushcfunction(L, l_fit);
  lua_setfield(L, -2, "fit");
}
