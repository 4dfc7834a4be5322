/* Entry point of the C module segwise.core: builds the module table from
 * each binding file's opener.  GSL's aborting error handler is switched off
 * here, once; every GSL status is checked by the core instead. */
#include <gsl/gsl_errno.h>

#include "bind.h"

#if defined(__GNUC__)
#define LSW_EXPORT __attribute__((visibility("default")))
#else
#define LSW_EXPORT
#endif

LSW_EXPORT int luaopen_segwise_core(lua_State *L);

LSW_EXPORT int luaopen_segwise_core(lua_State *L)
{
  gsl_set_error_handler_off();
  lua_newtable(L);
  lsw_open_life(L);
  lsw_open_array(L);
  lsw_open_curve(L);
  lsw_open_pwl(L);
  lsw_open_read(L);
  lsw_open_file(L);
  lsw_open_fit(L);
  lsw_open_net(L);
  lua_pushliteral(L, SW_VERSION);
  lua_setfield(L, -2, "version");
  return 1;
}
