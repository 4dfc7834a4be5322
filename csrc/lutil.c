/* Helpers shared by the binding files: raising core errors, converting
 * number sequences at the boundary, scratch memory owned by Lua's GC. */
#include <math.h>
#include <string.h>

#include "lsw.h"

int lsw_raise(lua_State *L, const char *fname, const sw_err *err)
{
  return luaL_error(L, "segwise.%s: %s", fname, err->msg);
}

double *lsw_scratch(lua_State *L, size_t n)
{
  if (n > ((size_t)-1) / sizeof(double) / 2) luaL_error(L, "segwise: %zu values is too many", n);
  return (double *)lua_newuserdatauv(L, (n ? n : 1) * sizeof(double), 0);
}

double *lsw_checkdoubles(lua_State *L, int idx, const char *what, size_t *n, int allow_nonfinite)
{
  lsw_array *a;
  double *buf;
  size_t i, len;
  idx = lua_absindex(L, idx);
  a = lsw_toarray(L, idx);
  if (a) {
    if (a->freed) luaL_error(L, "%s: array used after free()", what);
    buf = lsw_scratch(L, a->n);
    for (i = 0; i < a->n; i++) {
      if (!allow_nonfinite && !isfinite(a->data[i]))
        luaL_error(L, "%s[%d] is not finite (%f)", what, (int)(i + 1), a->data[i]);
      buf[i] = a->data[i];
    }
    *n = a->n;
    return buf;
  }
  if (!lua_istable(L, idx))
    luaL_error(L, "%s must be a table of numbers or a segwise array (got %s)", what, luaL_typename(L, idx));
  len = (size_t)luaL_len(L, idx);
  buf = lsw_scratch(L, len);
  for (i = 0; i < len; i++) {
    int isnum;
    double v;
    lua_geti(L, idx, (lua_Integer)(i + 1));
    v = lua_tonumberx(L, -1, &isnum);
    if (!isnum) luaL_error(L, "%s[%d] must be a number (got %s)", what, (int)(i + 1), luaL_typename(L, -1));
    if (!allow_nonfinite && !isfinite(v)) luaL_error(L, "%s[%d] is not finite (%f)", what, (int)(i + 1), v);
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
