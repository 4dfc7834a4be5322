/* Reading and writing files from Lua: columns of a text file into arrays
 * (read_columns, array_read), and model files (model:save, load_model).
 * Result userdata are pushed empty and consistent before the core reads, so
 * nothing leaks when a later step raises. */
#include <stdlib.h>
#include <string.h>

#include "bind.h"
#include "pwl/pwl_io.h"
#include "text/textread.h"

/* Column chooser at idx: a header name or a 1-based number; dflt when nil. */
static void check_column(lua_State *L, int idx, const char *fname, const char *what,
                         lua_Integer dflt, sw_text_col *col)
{
  col->name = NULL;
  col->index = 0;
  col->scale = 1.0;
  col->optional = 0;
  if (lua_isnoneornil(L, idx)) {
    col->index = (size_t)dflt;
  } else if (lua_type(L, idx) == LUA_TSTRING) {
    col->name = lua_tostring(L, idx);
  } else if (lua_type(L, idx) == LUA_TNUMBER) {
    int isint;
    lua_Integer i = lua_tointegerx(L, idx, &isint);
    if (!isint || i < 1)
      lsw_fail(L, NULL, "segwise.%s: %s column %s must be a header name or a number from 1", fname,
               what, lua_tostring(L, idx));
    col->index = (size_t)i;
  } else {
    lsw_fail(L, NULL, "segwise.%s: %s column must be a header name or a number (got %s)", fname,
             what, luaL_typename(L, idx));
  }
}

/* A scale factor at idx: a finite non-zero number. */
static double check_scale(lua_State *L, int idx, const char *fname, const char *what)
{
  int isnum;
  double v = lua_tonumberx(L, idx, &isnum);
  if (!isnum || lua_type(L, idx) != LUA_TNUMBER)
    lsw_fail(L, NULL, "segwise.%s: %s must be a number (got %s)", fname, what,
             luaL_typename(L, idx));
  if (!sw_isfinite(v) || v == 0)
    lsw_fail(L, NULL, "segwise.%s: %s must be finite and non-zero (got %f)", fname, what, v);
  return v;
}

/* Options shared by the readers: delimiter and header; every key must be
 * one of `allowed` (a typo is an error, not a silent default). */
static void check_opts(lua_State *L, int idx, const char *fname, const char *const *allowed,
                       sw_text_opts *opts)
{
  opts->delim = 0;
  opts->header = -1;
  if (lua_isnoneornil(L, idx)) return;
  if (!lua_istable(L, idx))
    lsw_fail(L, NULL, "segwise.%s: options must be a table (got %s)", fname, luaL_typename(L, idx));
  lua_pushnil(L);
  while (lua_next(L, idx)) {
    const char *const *a;
    lua_pop(L, 1);
    if (lua_type(L, -1) != LUA_TSTRING)
      lsw_fail(L, NULL, "segwise.%s: option keys must be names (got %s)", fname,
               luaL_typename(L, -1));
    for (a = allowed; *a; a++)
      if (strcmp(*a, lua_tostring(L, -1)) == 0) break;
    if (!*a) lsw_fail(L, NULL, "segwise.%s: unknown option '%s'", fname, lua_tostring(L, -1));
  }
  lua_getfield(L, idx, "delimiter");
  if (!lua_isnil(L, -1)) {
    static const char *const names[] = {",",         ";",   "\t",    " ", "comma",
                                        "semicolon", "tab", "space", NULL};
    static const char chars[] = {',', ';', '\t', ' ', ',', ';', '\t', ' '};
    int k = -1, j;
    if (lua_type(L, -1) == LUA_TSTRING)
      for (j = 0; names[j]; j++)
        if (strcmp(names[j], lua_tostring(L, -1)) == 0) k = j;
    if (k < 0)
      lsw_fail(L, NULL,
               "segwise.%s: delimiter must be \",\", \";\", \"\\t\", \" \" (or comma, semicolon, "
               "tab, space)",
               fname);
    opts->delim = chars[k];
  }
  lua_pop(L, 1);
  lua_getfield(L, idx, "header");
  if (!lua_isnil(L, -1)) {
    if (!lua_isboolean(L, -1))
      lsw_fail(L, NULL, "segwise.%s: header must be true or false (got %s)", fname,
               luaL_typename(L, -1));
    opts->header = lua_toboolean(L, -1);
  }
  lua_pop(L, 1);
}

/* An empty array whose buffer the reader will supply. */
static lsw_array *push_target(lua_State *L)
{
  lsw_array *a = lsw_newarray(L, 0);
  return a;
}

/* The path argument at idx: a string without NUL bytes (C would cut it). */
static const char *check_path(lua_State *L, int idx, const char *fname)
{
  size_t len;
  const char *path;
  if (lua_type(L, idx) != LUA_TSTRING)
    lsw_fail(L, fname, "path must be a string (got %s)", luaL_typename(L, idx));
  path = lua_tolstring(L, idx, &len);
  if (strlen(path) != len) lsw_fail(L, fname, "path contains a NUL byte");
  return path;
}

static void adopt(lsw_array *a, double *data, size_t n)
{
  free(a->data);
  a->data = data;
  a->n = n;
}

/* read_columns(path, xcol, ycol [, {scale = {x=, y=}, delimiter=, header=}
 * [, with_lines]]) -> xs, ys as arrays (x defaults to column 1, y to column
 * 2), and with_lines, a third array of each row's file line. */
static int l_read_columns(lua_State *L)
{
  static const char *const allowed[] = {"scale", "delimiter", "header", NULL};
  const char *path = check_path(L, 1, "read_columns");
  sw_text_col cols[2];
  sw_text_opts opts;
  lsw_array *ax, *ay, *al;
  double *out[2];
  size_t n, *lines = NULL;
  int with_lines;
  sw_err err;
  check_column(L, 2, "read_columns", "x", 1, &cols[0]);
  check_column(L, 3, "read_columns", "y", 2, &cols[1]);
  check_opts(L, 4, "read_columns", allowed, &opts);
  if (lua_istable(L, 4)) {
    lua_getfield(L, 4, "scale");
    if (!lua_isnil(L, -1)) {
      int t = lua_gettop(L);
      if (!lua_istable(L, t))
        lsw_fail(L, "read_columns", "scale must be a table {x =, y =} (got %s)",
                 luaL_typename(L, t));
      lua_getfield(L, t, "x");
      if (!lua_isnil(L, -1)) cols[0].scale = check_scale(L, -1, "read_columns", "scale.x");
      lua_getfield(L, t, "y");
      if (!lua_isnil(L, -1)) cols[1].scale = check_scale(L, -1, "read_columns", "scale.y");
      lua_pop(L, 2);
    }
    lua_pop(L, 1);
  }
  with_lines = lua_toboolean(L, 5);
  ax = push_target(L);
  ay = push_target(L);
  al = with_lines ? push_target(L) : NULL;
  if (sw_text_read(path, &opts, cols, 2, out, with_lines ? &lines : NULL, &n, &err))
    return lsw_raise(L, "read_columns", &err);
  adopt(ax, out[0], n);
  adopt(ay, out[1], n);
  if (al) { /* line numbers as doubles */
    double *d = sw_alloc(n, sizeof *d, &err);
    size_t k;
    if (!d) {
      free(lines);
      return lsw_raise(L, "read_columns", &err);
    }
    for (k = 0; k < n; k++) d[k] = (double)lines[k];
    free(lines);
    adopt(al, d, n);
  }
  return with_lines ? 3 : 2;
}

/* array_read(path [, column [, {scale=, delimiter=, header=}]]) -> array. */
static int l_array_read(lua_State *L)
{
  static const char *const allowed[] = {"scale", "delimiter", "header", NULL};
  const char *path = check_path(L, 1, "array.read");
  sw_text_col col;
  sw_text_opts opts;
  lsw_array *a;
  double *out[1];
  size_t n;
  sw_err err;
  check_column(L, 2, "array.read", "the", 1, &col);
  check_opts(L, 3, "array.read", allowed, &opts);
  if (lua_istable(L, 3)) {
    lua_getfield(L, 3, "scale");
    if (!lua_isnil(L, -1)) col.scale = check_scale(L, -1, "array.read", "scale");
    lua_pop(L, 1);
  }
  a = push_target(L);
  if (sw_text_read(path, &opts, &col, 1, out, NULL, &n, &err))
    return lsw_raise(L, "array.read", &err);
  adopt(a, out[0], n);
  return 1;
}

/* ---- Provenance: fit_info's fields <-> the file's "# fit" lines -------- */

static const char *const prov_texts[] = {"source", "criterion", "knots", "error", "checked",
                                         "made", NULL};
static const char *const prov_numbers[] = {"lo", "hi", "tol", "rel_floor", "max_abs", "x_abs",
                                           "max_rel", "x_rel", "rms", NULL};

static int by_name(const void *a, const void *b)
{
  return strcmp(*(const char *const *)a, *(const char *const *)b);
}

/* A curve parameter's value (at the top) as text; 0 for kinds not kept. */
static int param_text(lua_State *L, char *buf, size_t cap)
{
  if (lua_type(L, -1) == LUA_TNUMBER) sw_pwl_prov_format(lua_tonumber(L, -1), buf, cap);
  else if (lua_type(L, -1) == LUA_TBOOLEAN)
    snprintf(buf, cap, "%s", lua_toboolean(L, -1) ? "true" : "false");
  else if (lua_type(L, -1) == LUA_TSTRING) snprintf(buf, cap, "%s", lua_tostring(L, -1));
  else return 0;
  return 1;
}

/* fit_info.curve (the table at t): its kind and scalar parameters, sorted
 * by name so that a file reads the same from one save to the next. */
static int prov_curve(lua_State *L, int t, sw_pwl_prov *p, sw_err *err)
{
  const char *names[SW_PROV_NPARAM + 1];
  char value[SW_PROV_WORD + 1];
  size_t n = 0, k;
  int st = SW_OK;
  int type = lua_getfield(L, t, "kind");
  if (type == LUA_TSTRING) st = sw_pwl_prov_set_text(p, "curve", lua_tostring(L, -1), err);
  else if (type != LUA_TNIL)
    st = sw_err_set(err, SW_EINVAL, "curve.kind must be a string (got %s)", luaL_typename(L, -1));
  lua_pop(L, 1);
  lua_pushnil(L);
  while (!st && lua_next(L, t)) {
    lua_pop(L, 1);
    if (lua_type(L, -1) != LUA_TSTRING || strcmp(lua_tostring(L, -1), "kind") == 0) continue;
    if (n == SW_PROV_NPARAM)
      st = sw_err_set(err, SW_EINVAL, "curve has more than %d parameters", SW_PROV_NPARAM);
    else names[n++] = lua_tostring(L, -1); /* the key stays alive in the table */
  }
  if (st) return st;
  qsort(names, n, sizeof names[0], by_name);
  for (k = 0; k < n && !st; k++) {
    lua_getfield(L, t, names[k]);
    if (param_text(L, value, sizeof value)) st = sw_pwl_prov_add_param(p, names[k], value, err);
    lua_pop(L, 1);
  }
  return st;
}

/* The fit_info table at t into p. */
static int prov_from_info(lua_State *L, int t, sw_pwl_prov *p, sw_err *err)
{
  int i, st = SW_OK, type;
  for (i = 0; prov_texts[i] && !st; i++) {
    type = lua_getfield(L, t, prov_texts[i]);
    if (type == LUA_TSTRING) st = sw_pwl_prov_set_text(p, prov_texts[i], lua_tostring(L, -1), err);
    else if (type != LUA_TNIL)
      st = sw_err_set(err, SW_EINVAL, "%s must be a string (got %s)", prov_texts[i],
                      luaL_typename(L, -1));
    lua_pop(L, 1);
  }
  for (i = 0; prov_numbers[i] && !st; i++) {
    type = lua_getfield(L, t, prov_numbers[i]);
    if (type == LUA_TNUMBER)
      st = sw_pwl_prov_set_number(p, prov_numbers[i], lua_tonumber(L, -1), err);
    else if (type != LUA_TNIL)
      st = sw_err_set(err, SW_EINVAL, "%s must be a number (got %s)", prov_numbers[i],
                      luaL_typename(L, -1));
    lua_pop(L, 1);
  }
  if (!st) {
    type = lua_getfield(L, t, "continuous");
    if (type == LUA_TBOOLEAN) sw_pwl_prov_set_continuous(p, lua_toboolean(L, -1));
    else if (type != LUA_TNIL)
      st = sw_err_set(err, SW_EINVAL, "continuous must be true or false (got %s)",
                      luaL_typename(L, -1));
    lua_pop(L, 1);
  }
  if (!st) {
    type = lua_getfield(L, t, "curve");
    if (type == LUA_TTABLE) st = prov_curve(L, lua_gettop(L), p, err);
    else if (type != LUA_TNIL)
      st = sw_err_set(err, SW_EINVAL, "curve must be a table (got %s)", luaL_typename(L, -1));
    lua_pop(L, 1);
  }
  if (!st) st = sw_pwl_prov_check(p, err);
  if (st) sw_err_prefix(err, "fit_info ");
  return st;
}

static void push_param(lua_State *L, const char *v)
{
  if (strcmp(v, "true") == 0 || strcmp(v, "false") == 0) lua_pushboolean(L, v[0] == 't');
  else if (lua_stringtonumber(L, v) == 0) lua_pushstring(L, v);
}

/* The fit_info table of a loaded model: what the file states, loaded = true. */
static void push_info(lua_State *L, const sw_pwl_prov *p, const sw_pwl *m)
{
  const char *const texts[] = {p->source, p->criterion, p->knots, p->error, p->checked, p->made};
  const double numbers[] = {p->lo, p->hi, p->tol, p->rel_floor, p->max_abs, p->x_abs,
                            p->max_rel, p->x_rel, p->rms};
  size_t k;
  lua_createtable(L, 0, 20);
  lua_pushboolean(L, 1);
  lua_setfield(L, -2, "loaded");
  lua_pushinteger(L, (lua_Integer)m->nseg);
  lua_setfield(L, -2, "segments");
  for (k = 0; prov_texts[k]; k++)
    if (texts[k][0]) {
      lua_pushstring(L, texts[k]);
      lua_setfield(L, -2, prov_texts[k]);
    }
  for (k = 0; prov_numbers[k]; k++)
    if (numbers[k] == numbers[k]) {
      lua_pushnumber(L, numbers[k]);
      lua_setfield(L, -2, prov_numbers[k]);
    }
  if (p->continuous >= 0) {
    lua_pushboolean(L, p->continuous);
    lua_setfield(L, -2, "continuous");
  }
  if (p->curve[0] || p->nparam) {
    lua_createtable(L, 0, (int)p->nparam + 1);
    if (p->curve[0]) {
      lua_pushstring(L, p->curve);
      lua_setfield(L, -2, "kind");
    }
    for (k = 0; k < p->nparam; k++) {
      push_param(L, p->param[k].value);
      lua_setfield(L, -2, p->param[k].name);
    }
    lua_setfield(L, -2, "curve");
  }
}

/* m:save(path [, {x_unit=, y_unit=}]): fit_info's provenance goes along. */
static int l_save(lua_State *L)
{
  lsw_model *m = lsw_checkmodel(L, 1);
  const char *path = check_path(L, 2, "model:save");
  const char *xu = NULL, *yu = NULL;
  sw_pwl_prov prov;
  sw_err err;
  if (!lua_isnoneornil(L, 3)) {
    static const char *const allowed[] = {"x_unit", "y_unit", NULL};
    sw_text_opts unused;
    check_opts(L, 3, "model:save", allowed, &unused);
    lua_getfield(L, 3, "x_unit");
    if (!lua_isnil(L, -1) && lua_type(L, -1) != LUA_TSTRING)
      lsw_fail(L, "model:save", "x_unit must be a string (got %s)", luaL_typename(L, -1));
    xu = lua_tostring(L, -1);
    lua_getfield(L, 3, "y_unit");
    if (!lua_isnil(L, -1) && lua_type(L, -1) != LUA_TSTRING)
      lsw_fail(L, "model:save", "y_unit must be a string (got %s)", luaL_typename(L, -1));
    yu = lua_tostring(L, -1);
  }
  sw_pwl_prov_init(&prov);
  if (lua_getiuservalue(L, 1, 1) == LUA_TTABLE && prov_from_info(L, lua_gettop(L), &prov, &err))
    return lsw_raise(L, "model:save", &err);
  if (sw_pwl_save_prov(&m->m, path, xu, yu, &prov, &err)) return lsw_raise(L, "model:save", &err);
  return 0;
}

/* load_model(path) -> model, x unit, y unit; the file's provenance becomes
 * the model's fit_info. */
static int l_load_model(lua_State *L)
{
  const char *path = check_path(L, 1, "pwl.load");
  char xu[SW_UNIT_MAX], yu[SW_UNIT_MAX];
  lsw_model *m = lsw_newmodel(L);
  int midx = lua_gettop(L);
  sw_pwl_prov prov;
  sw_err err;
  if (sw_pwl_load_prov(&m->m, path, xu, yu, &prov, &err)) return lsw_raise(L, "pwl.load", &err);
  if (prov.present) {
    push_info(L, &prov, &m->m);
    lua_setiuservalue(L, midx, 1);
  }
  lua_pushstring(L, xu);
  lua_pushstring(L, yu);
  return 3;
}

static const luaL_Reg read_funcs[] = {
  {"read_columns", l_read_columns}, {"array_read", l_array_read}, {"load_model", l_load_model},
  {NULL, NULL}
};

void lsw_open_read(lua_State *L)
{
  luaL_setfuncs(L, read_funcs, 0);
  /* model:save joins the methods lsw_open_pwl put in the model's __index */
  luaL_getmetatable(L, LSW_MODEL_MT);
  if (lua_istable(L, -1)) {
    lua_getfield(L, -1, "__index");
    if (lua_istable(L, -1)) {
      lua_pushcfunction(L, l_save);
      lua_setfield(L, -2, "save");
    }
    lua_pop(L, 1);
  }
  lua_pop(L, 1);
}
