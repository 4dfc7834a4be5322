/* sw.array: a userdata of n contiguous doubles, so large data never has to
 * pass through Lua tables.  1-based get/set with bounds and finite checks,
 * #a, :totable(), :slice(i, j), :free() (also __gc and __close).  Filling
 * an array from a file column lives in read.c with the other readers. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "bind.h"

/* Sizes beyond this fail at once instead of asking the allocator. */
#define ARRAY_MAX ((size_t)1 << 32)

static void array_free_mem(lsw_life *life)
{
  lsw_array *a = (lsw_array *)life;
  free(a->data);
  a->data = NULL;
  a->n = 0;
}

/* An empty, consistent array userdata: safe to collect on any later error. */
static lsw_array *array_push_empty(lua_State *L)
{
  lsw_array *a = lua_newuserdatauv(L, sizeof *a, 0);
  memset(a, 0, sizeof *a);
  a->life.release = array_free_mem;
  luaL_setmetatable(L, LSW_ARRAY_MT);
  return a;
}

lsw_array *lsw_newarray(lua_State *L, size_t n)
{
  lsw_array *a = array_push_empty(L);
  sw_err err;
  if (n > ARRAY_MAX)
    lsw_fail(L, "array", "%f elements is more than the limit of %f", (double)n,
               (double)ARRAY_MAX); /* lua_pushfstring knows no %zu */
  a->data = sw_alloc(n, sizeof *a->data, &err);
  if (!a->data) {
    lsw_raise(L, "array", &err);
    return NULL;
  }
  a->n = n;
  return a;
}

static lsw_array *check_array(lua_State *L, int idx, const char *fname)
{
  lsw_array *a = lsw_toarray(L, idx);
  if (!a)
    lsw_fail(L, NULL, "segwise.%s: bad argument #%d (a segwise array expected, got %s)", fname, idx,
               luaL_typename(L, idx));
  if (LSW_DEAD(a)) lsw_fail(L, NULL, "segwise.%s: array used after free()", fname);
  return a;
}

/* A 1-based index argument, checked against 1..hi. */
static size_t check_index(lua_State *L, int idx, size_t hi, const char *fname, const char *what)
{
  int isint;
  lua_Integer i = lua_tointegerx(L, idx, &isint);
  if (!isint) {
    if (lua_type(L, idx) == LUA_TNUMBER)
      lsw_fail(L, NULL, "segwise.%s: %s %s is not a whole number", fname, what,
               lua_tostring(L, idx));
    lsw_fail(L, NULL, "segwise.%s: %s must be a whole number (got %s)", fname, what,
             luaL_typename(L, idx));
  }
  if (i < 1 || (lua_Unsigned)i > hi)
    lsw_fail(L, NULL, "segwise.%s: %s %I out of range 1..%I", fname, what, (lua_Integer)i,
               (lua_Integer)hi);
  return (size_t)i - 1;
}

/* sw.array(n) -> n zeros; sw.array(table) -> a copy of the numbers. */
static int l_array(lua_State *L)
{
  if (lua_type(L, 1) == LUA_TNUMBER) {
    int isint;
    lua_Integer n = lua_tointegerx(L, 1, &isint);
    if (!isint) return lsw_fail(L, "array", "size %s is not a whole number", lua_tostring(L, 1));
    if (n < 0) return lsw_fail(L, "array", "size %I is negative", (lua_Integer)n);
    if ((lua_Unsigned)n > ARRAY_MAX)
      return lsw_fail(L, "array", "size %I is more than the limit of %I", (lua_Integer)n,
                        (lua_Integer)ARRAY_MAX);
    lsw_newarray(L, (size_t)n);
    return 1;
  }
  if (lua_istable(L, 1)) {
    lua_Integer len = luaL_len(L, 1), i;
    lsw_array *a;
    if (len < 0 || (lua_Unsigned)len > ARRAY_MAX)
      return lsw_fail(L, "array", "table length %I is out of range", (lua_Integer)len);
    a = lsw_newarray(L, (size_t)len);
    for (i = 1; i <= len; i++) {
      int isnum;
      double v;
      lua_geti(L, 1, i);
      v = lua_tonumberx(L, -1, &isnum);
      if (!isnum)
        return lsw_fail(L, "array", "element [%I] must be a number (got %s)", (lua_Integer)i,
                          luaL_typename(L, -1));
      if (!isfinite(v))
        return lsw_fail(L, "array", "element [%I] is not finite (%f)", (lua_Integer)i, v);
      lua_pop(L, 1);
      a->data[i - 1] = v;
    }
    return 1;
  }
  if (lsw_toarray(L, 1)) { /* a copy of another array */
    lsw_array *src = check_array(L, 1, "array"), *a = lsw_newarray(L, src->n);
    src = check_array(L, 1, "array"); /* the allocation may have run a finalizer */
    if (src->n) memcpy(a->data, src->data, src->n * sizeof *a->data);
    return 1;
  }
  return lsw_fail(L, "array",
                  "bad argument #1 (a size, a table of numbers or an array expected, got %s)",
                  luaL_typename(L, 1));
}

static int array_index(lua_State *L)
{
  lsw_array *a;
  if (lua_type(L, 2) != LUA_TNUMBER) { /* methods by name */
    if (lua_type(L, 2) != LUA_TSTRING)
      return lsw_fail(L, "array", "index must be a whole number (got %s)", luaL_typename(L, 2));
    lua_getmetatable(L, 1);
    lua_getfield(L, -1, "methods");
    lua_pushvalue(L, 2);
    lua_rawget(L, -2);
    return 1;
  }
  a = check_array(L, 1, "array");
  lua_pushnumber(L, a->data[check_index(L, 2, a->n, "array", "index")]);
  return 1;
}

static int array_newindex(lua_State *L)
{
  lsw_array *a = check_array(L, 1, "array");
  size_t i;
  int isnum;
  double v;
  if (lua_type(L, 2) != LUA_TNUMBER)
    return lsw_fail(L, "array", "index must be a whole number (got %s)", luaL_typename(L, 2));
  i = check_index(L, 2, a->n, "array", "index");
  v = lua_tonumberx(L, 3, &isnum);
  if (!isnum)
    return lsw_fail(L, "array", "value for [%I] must be a number (got %s)", (lua_Integer)(i + 1),
                      luaL_typename(L, 3));
  if (!isfinite(v))
    return lsw_fail(L, "array", "value for [%I] is not finite (%f)", (lua_Integer)(i + 1), v);
  a->data[i] = v;
  return 0;
}

static int array_len(lua_State *L)
{
  lsw_array *a = check_array(L, 1, "array");
  lua_pushinteger(L, (lua_Integer)a->n);
  return 1;
}

LSW_PROTECT(array_totable)
static int array_totable_body(lua_State *L)
{
  lsw_array *a = check_array(L, 1, "array:totable");
  lsw_pin(L, 1, &a->life); /* the table's allocation may run a finalizer */
  a = check_array(L, 1, "array:totable");
  lsw_pushdoubles(L, a->data, a->n);
  return 1;
}

/* a:slice(i [, j]) -> a new array holding a[i..j] (j defaults to #a; an
 * empty slice is i = j + 1). */
static int array_slice(lua_State *L)
{
  lsw_array *a = check_array(L, 1, "array:slice"), *b;
  size_t i, j;
  i = check_index(L, 2, a->n + 1, "array:slice", "start");
  if (lua_isnoneornil(L, 3)) {
    j = a->n;
  } else {
    int isint;
    lua_Integer jj = lua_tointegerx(L, 3, &isint);
    if (!isint)
      return lsw_fail(L, "array:slice", "end must be a whole number (got %s)", luaL_typename(L, 3));
    if (jj < (lua_Integer)i || (lua_Unsigned)jj > a->n)
      return lsw_fail(L, "array:slice", "end %I out of range %I..%I", (lua_Integer)jj,
                        (lua_Integer)i, (lua_Integer)a->n);
    j = (size_t)jj;
  }
  b = lsw_newarray(L, j - i);
  a = check_array(L, 1, "array:slice"); /* the allocation may have run a finalizer */
  if (j > i) memcpy(b->data, a->data + i, (j - i) * sizeof *b->data);
  return 1;
}

static lsw_array *array_arg(lua_State *L)
{
  lsw_array *a = lsw_toarray(L, 1);
  if (!a) lsw_fail(L, "array:free", "bad argument #1 (a segwise array expected, got %s)",
                   luaL_typename(L, 1));
  return a;
}

/* :free() and __close: refused while a computation reads the array. */
static int array_release(lua_State *L)
{
  return lsw_release(L, &array_arg(L)->life, "array", 0);
}

/* __gc: while a computation holds the array, its release waits for it. */
static int array_gc(lua_State *L)
{
  return lsw_release(L, &array_arg(L)->life, "array", 1);
}

LSW_PROTECT(array_tostring)
static int array_tostring_body(lua_State *L)
{
  lsw_array *a = lsw_toarray(L, 1);
  luaL_Buffer b;
  size_t k, show;
  if (!a || LSW_DEAD(a)) {
    lua_pushliteral(L, "segwise.array (freed)");
    return 1;
  }
  lsw_pin(L, 1, &a->life); /* the buffer's growth may run a finalizer */
  if (LSW_DEAD(a)) {         /* as may the pin's own allocation */
    lua_pushliteral(L, "segwise.array (freed)");
    return 1;
  }
  luaL_buffinit(L, &b);
  lua_pushfstring(L, "segwise.array(%I): {", (lua_Integer)a->n);
  luaL_addvalue(&b);
  show = a->n <= 8 ? a->n : 6;
  for (k = 0; k < show; k++) {
    if (k) luaL_addstring(&b, ", ");
    lua_pushnumber(L, a->data[k]);
    luaL_addvalue(&b);
  }
  if (show < a->n) {
    lua_pushliteral(L, ", ..., ");
    luaL_addvalue(&b);
    lua_pushnumber(L, a->data[a->n - 1]);
    luaL_addvalue(&b);
  }
  luaL_addstring(&b, "}");
  luaL_pushresult(&b);
  return 1;
}

/* pairs(a) walks 1..#a (ipairs cannot: reading past the end raises). */
static int array_next(lua_State *L)
{
  lsw_array *a = check_array(L, 1, "array");
  lua_Integer i = lsw_optint(L, 2, "array", "key", 0, LUA_MAXINTEGER - 1, 0) + 1;
  if ((lua_Unsigned)i > a->n) return 0;
  lua_pushinteger(L, i);
  lua_pushnumber(L, a->data[i - 1]);
  return 2;
}

static int array_pairs(lua_State *L)
{
  check_array(L, 1, "array");
  lua_pushcfunction(L, array_next);
  lua_pushvalue(L, 1);
  lua_pushinteger(L, 0);
  return 3;
}

static const luaL_Reg array_methods[] = {
  {"totable", array_totable}, {"slice", array_slice}, {"free", array_release}, {NULL, NULL}
};

static const luaL_Reg array_meta[] = {
  {"__index", array_index}, {"__newindex", array_newindex}, {"__len", array_len},
  {"__gc", array_gc}, {"__close", array_release}, {"__tostring", array_tostring},
  {"__pairs", array_pairs}, {NULL, NULL}
};

void lsw_open_array(lua_State *L)
{
  luaL_newmetatable(L, LSW_ARRAY_MT);
  luaL_setfuncs(L, array_meta, 0);
  luaL_newlib(L, array_methods);
  lua_setfield(L, -2, "methods");
  lsw_protect_meta(L, NULL);
  lua_getfield(L, -1, "__metatable"); /* the stand-in lists the methods (a copy) */
  luaL_newlib(L, array_methods);
  lua_setfield(L, -2, "methods");
  lua_pop(L, 2);
  lua_pushcfunction(L, l_array);
  lua_setfield(L, -2, "array");
}
