/* Helpers shared by the binding files: raising core errors, converting
 * number sequences at the boundary, scratch memory owned by Lua's GC. */
#include <math.h>
#include <stdarg.h>
#include <string.h>

#include "bind.h"

/* Module functions of segwise.core and the public names that call them. */
static const char *const public_names[][2] = {
  {"curve_samples", "curve.samples"}, {"curve_diode", "curve.diode"},
  {"curve_power", "curve.power"}, {"curve_fn", "curve.fn"},
  {"pwl_points", "pwl"}, {"pwl_segments", "pwl.segments"},
  {NULL, NULL}
};

/* Owner of a method: the segwise type of its first argument, or "". */
static const char *owner_of(lua_State *L)
{
  if (luaL_testudata(L, 1, LSW_MODEL_MT)) return "model";
  if (luaL_testudata(L, 1, LSW_CURVE_MT)) return "curve";
  if (luaL_testudata(L, 1, LSW_ARRAY_MT)) return "array";
  /* a network is named by the Lua layer (util.call renames "segwise: ") */
  return "";
}

/* Pushes "segwise.<owner>:<name>: " for the running C function, found
 * from the call information. */
static void push_own_prefix(lua_State *L)
{
  lua_Debug ar;
  const char *name = NULL, *owner;
  int k;
  /* Only names from a field or method call are the function's own: a local
   * or global name is the caller's variable. */
  if (lua_getstack(L, 0, &ar) && lua_getinfo(L, "n", &ar) && ar.name &&
      (strcmp(ar.namewhat, "method") == 0 || strcmp(ar.namewhat, "field") == 0))
    name = ar.name;
  /* a body run by lsw_protected has no name: its caller's is the public one */
  else if (lua_getstack(L, 1, &ar) && lua_getinfo(L, "nS", &ar) && ar.name &&
           strcmp(ar.what, "C") == 0 &&
           (strcmp(ar.namewhat, "method") == 0 || strcmp(ar.namewhat, "field") == 0))
    name = ar.name;
  for (k = 0; name && public_names[k][0]; k++)
    if (strcmp(name, public_names[k][0]) == 0) name = public_names[k][1];
  owner = owner_of(L);
  if (name) /* "segwise.model:eval: ", or "segwise.pwl: " for a module function */
    lua_pushfstring(L, "segwise.%s%s%s: ", owner, *owner ? ":" : "", name);
  else      /* called without a name (pcall(m.eval, ...)): name the owner */
    lua_pushfstring(L, *owner ? "segwise.%s: " : "segwise: ", owner);
}

int lsw_fail(lua_State *L, const char *fname, const char *fmt, ...)
{
  va_list ap;
  va_start(ap, fmt);
  lua_pushvfstring(L, fmt, ap);
  va_end(ap);
  if (strncmp(lua_tostring(L, -1), "segwise.", 8) == 0) return lua_error(L);
  if (fname) lua_pushfstring(L, "segwise.%s: ", fname);
  else push_own_prefix(L);
  lua_insert(L, -2);
  lua_concat(L, 2);
  return lua_error(L);
}

int lsw_raise(lua_State *L, const char *fname, const sw_err *err)
{
  return lsw_fail(L, fname, "%s", err->msg);
}

double *lsw_scratch(lua_State *L, size_t n)
{
  if (n > ((size_t)-1) / sizeof(double) / 2) lsw_fail(L, NULL, "%f values is too many", (double)n);
  return (double *)lua_newuserdatauv(L, (n ? n : 1) * sizeof(double), 0);
}

lsw_array *lsw_toarray(lua_State *L, int idx)
{
  return (lsw_array *)luaL_testudata(L, idx, LSW_ARRAY_MT);
}

double *lsw_checkdoubles(lua_State *L, int idx, const char *what, size_t *n, int allow_nonfinite)
{
  lsw_array *a;
  double *buf;
  size_t i, len;
  idx = lua_absindex(L, idx);
  a = lsw_toarray(L, idx);
  if (a) {
    if (LSW_DEAD(a)) lsw_fail(L, NULL, "%s: array used after free()", what);
    buf = lsw_scratch(L, a->n);
    /* the allocation may run a finalizer that frees the array: look again */
    if (LSW_DEAD(a)) lsw_fail(L, NULL, "%s: array used after free()", what);
    for (i = 0; i < a->n; i++) {
      if (!allow_nonfinite && !isfinite(a->data[i]))
        lsw_fail(L, NULL, "%s[%I] is not finite (%f)", what, (lua_Integer)(i + 1), a->data[i]);
      buf[i] = a->data[i];
    }
    *n = a->n;
    return buf;
  }
  if (!lua_istable(L, idx))
    lsw_fail(L, NULL, "%s must be a table of numbers or a segwise array (got %s)", what,
             luaL_typename(L, idx));
  {
    lua_Integer l = luaL_len(L, idx); /* a proxy table's __len counts: its values are copied */
    if (l < 0) lsw_fail(L, NULL, "%s has a negative length (%I)", what, l);
    len = (size_t)l;
  }
  buf = lsw_scratch(L, len);
  for (i = 0; i < len; i++) {
    int isnum;
    double v;
    lua_geti(L, idx, (lua_Integer)(i + 1));
    v = lua_tonumberx(L, -1, &isnum);
    if (!isnum)
      lsw_fail(L, NULL, "%s[%I] must be a number (got %s)", what, (lua_Integer)(i + 1),
               luaL_typename(L, -1));
    if (!allow_nonfinite && !isfinite(v))
      lsw_fail(L, NULL, "%s[%I] is not finite (%f)", what, (lua_Integer)(i + 1), v);
    lua_pop(L, 1);
    buf[i] = v;
  }
  *n = len;
  return buf;
}

void lsw_pushdoubles(lua_State *L, const double *y, size_t n)
{
  size_t i;
  lua_createtable(L, n > 0x7fffffff ? 0 : (int)n, 0);
  for (i = 0; i < n; i++) {
    lua_pushnumber(L, y[i]);
    lua_rawseti(L, -2, (lua_Integer)(i + 1));
  }
}

/* ---------------------------------------------------------------- lifetimes */
#define LSW_PIN_MT "segwise.Pin"

/* A pin: the object it keeps busy (user value 1 keeps it alive too). */
typedef struct lsw_pinbox {
  lsw_life *life;
} lsw_pinbox;

/* Drops the pin once; the last pin of a doomed object releases it. */
static int pin_close(lua_State *L)
{
  lsw_pinbox *p = luaL_checkudata(L, 1, LSW_PIN_MT);
  lsw_life *life = p->life;
  if (!life) return 0;
  p->life = NULL;
  if (--life->busy == 0 && life->doomed) {
    life->doomed = 0;
    life->release(life);
  }
  return 0;
}

void lsw_pin(lua_State *L, int idx, lsw_life *life)
{
  lsw_pinbox *p;
  idx = lua_absindex(L, idx);
  luaL_checkstack(L, 2, "segwise: no room on the Lua stack to pin an object");
  p = lua_newuserdatauv(L, sizeof *p, 1);
  p->life = NULL;
  luaL_setmetatable(L, LSW_PIN_MT);
  lua_pushvalue(L, idx);
  lua_setiuservalue(L, -2, 1);
  lua_toclose(L, -1); /* closed on return or error: the count always drops */
  p->life = life;
  life->busy++;
}

int lsw_protected(lua_State *L, lua_CFunction body)
{
  int nargs = lua_gettop(L);
  luaL_checkstack(L, 2, "segwise: no room on the Lua stack for a call");
  lua_pushcfunction(L, body);
  lua_insert(L, 1);
  /* the body's pins close as its error unwinds to here, inside this
   * coroutine, even when nothing above catches the error */
  if (lua_pcall(L, nargs, LUA_MULTRET, 0) != LUA_OK) return lua_error(L);
  return lua_gettop(L);
}

int lsw_release(lua_State *L, lsw_life *life, const char *what, int defer)
{
  if (life->freed) return 0;
  if (life->busy > 0) {
    if (!defer)
      return lsw_fail(L, NULL,
                      "segwise.%s:free: the %s is in use by a computation that is calling back "
                      "into Lua; free it after that returns",
                      what, what);
    life->freed = 1; /* every method refuses from now on; the memory goes with the pin */
    life->doomed = 1;
    return 0;
  }
  life->release(life);
  life->freed = 1;
  return 0;
}

void lsw_protect_meta(lua_State *L, lua_CFunction call)
{
  int mt = lua_gettop(L);
  lua_createtable(L, 0, 2);
  lua_getfield(L, mt, "__name");
  lua_setfield(L, -2, "__name");
  if (call) {
    lua_pushcfunction(L, call);
    lua_setfield(L, -2, "__call");
  }
  lua_setfield(L, mt, "__metatable");
}

void lsw_open_life(lua_State *L)
{
  luaL_newmetatable(L, LSW_PIN_MT);
  lua_pushcfunction(L, pin_close);
  lua_setfield(L, -2, "__close");
  lsw_protect_meta(L, NULL);
  lua_pop(L, 1);
}

/* ---------------------------------------------------------------- arguments */
static int not_whole(lua_State *L, int idx, const char *fname, const char *what)
{
  if (lua_type(L, idx) == LUA_TNUMBER)
    return lsw_fail(L, fname, "%s must be a whole number (got %f)", what, lua_tonumber(L, idx));
  return lsw_fail(L, fname, "%s must be a whole number (got %s)", what, luaL_typename(L, idx));
}

lua_Integer lsw_checkint(lua_State *L, int idx, const char *fname, const char *what,
                         lua_Integer lo, lua_Integer hi)
{
  int isint = 0;
  lua_Integer v = 0;
  if (lua_type(L, idx) == LUA_TNUMBER) v = lua_tointegerx(L, idx, &isint);
  if (!isint) {
    double d = lua_tonumber(L, idx);
    if (lua_type(L, idx) == LUA_TNUMBER && isfinite(d) && d == floor(d))
      return lsw_fail(L, fname, "%s %f is outside %I..%I", what, d, lo, hi);
    return not_whole(L, idx, fname, what);
  }
  if (v < lo || v > hi) return lsw_fail(L, fname, "%s %I is outside %I..%I", what, v, lo, hi);
  return v;
}

lua_Integer lsw_optint(lua_State *L, int idx, const char *fname, const char *what,
                       lua_Integer lo, lua_Integer hi, lua_Integer dflt)
{
  if (lua_isnoneornil(L, idx)) return dflt;
  return lsw_checkint(L, idx, fname, what, lo, hi);
}

double lsw_checknum(lua_State *L, int idx, const char *fname, const char *what)
{
  if (lua_type(L, idx) != LUA_TNUMBER)
    return lsw_fail(L, fname, "%s must be a number (got %s)", what, luaL_typename(L, idx));
  return lua_tonumber(L, idx);
}

double lsw_optnum(lua_State *L, int idx, const char *fname, const char *what, double dflt)
{
  if (lua_isnoneornil(L, idx)) return dflt;
  return lsw_checknum(L, idx, fname, what);
}

const char *lsw_checkname(lua_State *L, int idx, const char *fname, const char *what)
{
  size_t len;
  const char *s;
  if (lua_type(L, idx) != LUA_TSTRING)
    return lsw_fail(L, fname, "%s must be a string (got %s)", what, luaL_typename(L, idx)),
           NULL;
  s = lua_tolstring(L, idx, &len);
  if (strlen(s) != len) return lsw_fail(L, fname, "%s contains a NUL byte", what), NULL;
  return s;
}

void lsw_checktable(lua_State *L, int idx, const char *fname, const char *what)
{
  if (!lua_istable(L, idx))
    lsw_fail(L, fname, "%s must be a table (got %s)", what, luaL_typename(L, idx));
}

int lsw_checkoption(lua_State *L, int idx, const char *fname, const char *what,
                    const char *dflt, const char *const names[])
{
  const char *s = dflt;
  int k;
  if (!(dflt && lua_isnoneornil(L, idx))) s = lsw_checkname(L, idx, fname, what);
  luaL_Buffer b;
  for (k = 0; names[k]; k++)
    if (strcmp(s, names[k]) == 0) return k;
  luaL_buffinit(L, &b);
  for (k = 0; names[k]; k++) {
    luaL_addstring(&b, k ? ", \"" : "\"");
    luaL_addstring(&b, names[k]);
    luaL_addchar(&b, '"');
  }
  luaL_pushresult(&b);
  return lsw_fail(L, fname, "%s must be one of %s (got \"%s\")", what, lua_tostring(L, -1), s);
}

size_t lsw_rawcount(lua_State *L, int idx, const char *fname, const char *what, size_t cap)
{
  size_t n;
  lsw_checktable(L, idx, fname, what);
  n = (size_t)lua_rawlen(L, idx);
  if (n > cap)
    lsw_fail(L, fname, "%s lists %I entries, more than the limit of %I", what, (lua_Integer)n,
             (lua_Integer)cap);
  return n;
}
