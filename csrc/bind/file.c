/* Writing text files for the Lua side (tables, CSV, JSON, SVG) through the
 * core's safe writer (text/textfile.h): a unique temporary beside the real
 * target, renamed into place; symlinks followed, modes kept, devices and
 * FIFOs written directly. */
#include <string.h>

#include "bind.h"
#include "text/textfile.h"

/* write_file(path, text [, fname]): fname names the public function in
 * errors ("plot.svg" gives "segwise.plot.svg: cannot write ..."). */
static int l_write_file(lua_State *L)
{
  const char *fname = lua_type(L, 3) == LUA_TSTRING ? lua_tostring(L, 3) : "write_file";
  const char *path, *text;
  size_t plen, tlen;
  sw_err err;
  if (strncmp(fname, "segwise.", 8) == 0) fname += 8;
  if (lua_type(L, 1) != LUA_TSTRING)
    return lsw_fail(L, fname, "path must be a string (got %s)", luaL_typename(L, 1));
  if (lua_type(L, 2) != LUA_TSTRING)
    return lsw_fail(L, fname, "the text to write must be a string (got %s)", luaL_typename(L, 2));
  path = lua_tolstring(L, 1, &plen);
  text = lua_tolstring(L, 2, &tlen);
  if (plen == 0) return lsw_fail(L, fname, "path must not be empty");
  if (strlen(path) != plen) return lsw_fail(L, fname, "path contains a NUL byte");
  if (sw_write_file(path, text, tlen, &err)) return lsw_raise(L, fname, &err);
  return 0;
}

static const luaL_Reg file_funcs[] = {{"write_file", l_write_file}, {NULL, NULL}};

void lsw_open_file(lua_State *L) { luaL_setfuncs(L, file_funcs, 0); }
