/* Shared declarations of the Lua binding (csrc/bind/): the only C that
 * includes Lua's headers; the core (csrc/core/) never does.  util.c holds
 * the helpers every binding file uses and calls none of them back. */
#ifndef LSW_BIND_H
#define LSW_BIND_H

#include <lua.h>
#include <lauxlib.h>

#include "err/sw_err.h"
#include "curve/curve.h"
#include "pwl/pwl.h"

#define LSW_CURVE_MT "segwise.Curve"
#define LSW_MODEL_MT "segwise.Model"
#define LSW_ARRAY_MT "segwise.Array"

/* Array userdata: n contiguous doubles owned by the userdata (array.c). */
typedef struct lsw_array {
  size_t n;
  double *data;
  int freed;
} lsw_array;

/* The array at idx, or NULL when idx is not a segwise array (util.c). */
lsw_array *lsw_toarray(lua_State *L, int idx);
/* Pushes a new array of n zeroed doubles. */
lsw_array *lsw_newarray(lua_State *L, size_t n);

/* Curve userdata.  User value 1 holds the Lua function of a fn curve. */
typedef struct lsw_curve {
  sw_curve c;
  int freed;
  int busy;  /* > 0 while a computation may call back into Lua with it */
} lsw_curve;

/* Model userdata.  User value 1 holds the fit-info table (or nil). */
typedef struct lsw_model {
  sw_pwl m;
  int freed;
  int busy;  /* > 0 while a computation that calls back into Lua reads it */
} lsw_model;

/* Per-call context of a fn curve's trampoline: the calling state, the stack
 * slot of the Lua function, and the saved error when a call failed. */
typedef struct lsw_callctx {
  lua_State *L;
  int fidx;      /* absolute stack index of the function */
  int failed;    /* 1 when a call raised or returned a non-number */
  int erridx;    /* absolute stack index of a reserved slot for the error */
  lsw_curve *owner; /* marked busy between bind and done */
} lsw_callctx;

/* The one way the binding raises an error: the formatted message under
 * "segwise.<fname>: ", or, when fname is NULL, under the public name of
 * the running function found from the call information ("segwise.model:
 * eval: ", "segwise.curve.samples: ").  A message that already starts with
 * "segwise." is left as it is.  Formats are lua_pushfstring's (%s %d %I
 * %f %p %c %%: no %g, no %zu). */
int lsw_fail(lua_State *L, const char *fname, const char *fmt, ...);

/* Raises a core error err through lsw_fail under fname. */
int lsw_raise(lua_State *L, const char *fname, const sw_err *err);

/* Reads a number sequence (a table or a segwise array) at idx into a
 * GC-owned buffer pushed on the stack; NaN/Inf rejected naming
 * "<what>[i]".  Returns the data and its length. */
double *lsw_checkdoubles(lua_State *L, int idx, const char *what, size_t *n,
                         int allow_nonfinite);
/* Pushes a GC-owned scratch buffer of n doubles (freed even on error). */
double *lsw_scratch(lua_State *L, size_t n);
/* Pushes a Lua table {y[0], ..., y[n-1]}. */
void lsw_pushdoubles(lua_State *L, const double *y, size_t n);

lsw_curve *lsw_checkcurve(lua_State *L, int idx);
lsw_model *lsw_checkmodel(lua_State *L, int idx);
/* Pushes a new, empty, consistent model userdata (metatable set, nothing
 * allocated): safe to collect on any later error. */
lsw_model *lsw_newmodel(lua_State *L);

/* Prepares a stack copy of curve idx that is safe to hand to the core: for
 * fn curves it pushes the function and an error slot and points the copy's
 * callback at the trampoline.  After the core call, lsw_curve_done raises
 * the callback's saved error if any, then pops what lsw_curve_bind pushed. */
void lsw_curve_bind(lua_State *L, int idx, sw_curve *copy, lsw_callctx *ctx);
void lsw_curve_done(lua_State *L, lsw_callctx *ctx);

/* Explicit :free() of an object in use by a computation calling back into
 * Lua is refused (a callback must not pull memory from under the core);
 * __gc cannot happen then, since the object is on the stack. */
int lsw_refuse_busy(lua_State *L, const char *what);

/* Per-file openers: each adds its functions to the module table at -1. */
void lsw_open_curve(lua_State *L);
void lsw_open_pwl(lua_State *L);
void lsw_open_fit(lua_State *L);
void lsw_open_net(lua_State *L);
void lsw_open_array(lua_State *L);
void lsw_open_read(lua_State *L);
void lsw_open_file(lua_State *L);

#endif
