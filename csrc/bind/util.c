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
    if (a->freed) lsw_fail(L, NULL, "%s: array used after free()", what);
    buf = lsw_scratch(L, a->n);
    for (i = 0; i < a->n; i++) {
      if (!allow_nonfinite && !isfinite(a->data[i]))
        lsw_fail(L, NULL, "%s[%d] is not finite (%f)", what, (int)(i + 1), a->data[i]);
      buf[i] = a->data[i];
    }
    *n = a->n;
    return buf;
  }
  if (!lua_istable(L, idx))
    lsw_fail(L, NULL, "%s must be a table of numbers or a segwise array (got %s)", what,
             luaL_typename(L, idx));
  len = (size_t)luaL_len(L, idx);
  buf = lsw_scratch(L, len);
  for (i = 0; i < len; i++) {
    int isnum;
    double v;
    lua_geti(L, idx, (lua_Integer)(i + 1));
    v = lua_tonumberx(L, -1, &isnum);
    if (!isnum)
      lsw_fail(L, NULL, "%s[%d] must be a number (got %s)", what, (int)(i + 1),
               luaL_typename(L, -1));
    if (!allow_nonfinite && !isfinite(v))
      lsw_fail(L, NULL, "%s[%d] is not finite (%f)", what, (int)(i + 1), v);
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

int lsw_refuse_busy(lua_State *L, const char *what)
{
  return lsw_fail(L, NULL,
                  "segwise.%s:free: the %s is in use by a computation that is calling back into "
                  "Lua; free it after that returns",
                  what, what);
}
