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

/* The lifetime of a userdata whose C memory a computation may read while
 * Lua code runs (a callback, a metamethod, a finalizer run by an
 * allocation).  A pin (lsw_pin) makes it busy until the pinning C function
 * returns or raises; :free() of a busy object is refused, and __gc defers
 * the release until the last pin goes. */
typedef struct lsw_life {
  int freed;   /* released, or its release asked for: every method refuses */
  int busy;    /* pins held by running C functions */
  int doomed;  /* released while busy: the memory goes with the last pin */
  void (*release)(struct lsw_life *); /* frees the C memory (idempotent) */
} lsw_life;

/* Pins the object at idx (whose first member is life) until the running C
 * function returns or raises: a to-be-closed guard is pushed, so nothing
 * may move or remove that slot; close it early only with lua_closeslot (Lua
 * 5.4.4's lua_settop may use a stale stack pointer when it closes one). */
void lsw_pin(lua_State *L, int idx, lsw_life *life);
/* Runs body(L) with this function's arguments under lua_pcall and raises
 * its error again: every C function that pins runs its body this way,
 * because an error that kills a coroutine does not close the coroutine's
 * to-be-closed slots (the pins would stay until it is collected). */
int lsw_protected(lua_State *L, lua_CFunction body);
/* Defines name(L) as lsw_protected(L, name_body), name_body following. */
#define LSW_PROTECT(name)                                                  \
  static int name##_body(lua_State *L);                                    \
  static int name(lua_State *L) { return lsw_protected(L, name##_body); }
/* The release behind :free() and __close (refuse when busy) or __gc
 * (when busy, defer to the last pin).  what names the type. */
int lsw_release(lua_State *L, lsw_life *life, const char *what, int defer);
/* 1 when the object is freed or its release is pending. */
#define LSW_DEAD(obj) ((obj)->life.freed)

/* Array userdata: n contiguous doubles owned by the userdata (array.c). */
typedef struct lsw_array {
  lsw_life life;
  size_t n;
  double *data;
} lsw_array;

/* The array at idx, or NULL when idx is not a segwise array (util.c). */
lsw_array *lsw_toarray(lua_State *L, int idx);
/* Pushes a new array of n zeroed doubles. */
lsw_array *lsw_newarray(lua_State *L, size_t n);

/* Curve userdata.  User value 1 holds the Lua function of a fn curve. */
typedef struct lsw_curve {
  lsw_life life;
  sw_curve c;
} lsw_curve;

/* Model userdata.  User value 1 holds the fit-info table (or nil). */
typedef struct lsw_model {
  lsw_life life;
  sw_pwl m;
} lsw_model;

/* Per-call context of a fn curve's trampoline: the calling state, the stack
 * slot of the Lua function, and the saved error when a call failed. */
typedef struct lsw_callctx {
  lua_State *L;
  int fidx;      /* absolute stack index of the function */
  int failed;    /* 1 when a call raised or returned a non-number */
  int erridx;    /* absolute stack index of a reserved slot for the error */
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

/* Prepares a stack copy of curve idx that is safe to hand to the core: it
 * pins the curve (lsw_pin) and pushes its function and an error slot; for fn
 * curves the copy's callback is the trampoline.  After the core call,
 * lsw_curve_done raises the callback's saved error if any (the pin goes as
 * the error unwinds), else pops what lsw_curve_bind pushed. */
void lsw_curve_bind(lua_State *L, int idx, sw_curve *copy, lsw_callctx *ctx);
void lsw_curve_done(lua_State *L, lsw_callctx *ctx);

/* Argument checks that name the function (fname, or NULL for the running
 * one) and the argument (what) in every message, never "bad argument #n to
 * '?'".  An integer is a whole number (an integral float counts) within
 * lo..hi; a name is a string without NUL bytes (C would cut it short). */
lua_Integer lsw_checkint(lua_State *L, int idx, const char *fname, const char *what,
                         lua_Integer lo, lua_Integer hi);
lua_Integer lsw_optint(lua_State *L, int idx, const char *fname, const char *what,
                       lua_Integer lo, lua_Integer hi, lua_Integer dflt);
double lsw_checknum(lua_State *L, int idx, const char *fname, const char *what);
double lsw_optnum(lua_State *L, int idx, const char *fname, const char *what, double dflt);
const char *lsw_checkname(lua_State *L, int idx, const char *fname, const char *what);
void lsw_checktable(lua_State *L, int idx, const char *fname, const char *what);
int lsw_checkoption(lua_State *L, int idx, const char *fname, const char *what,
                    const char *dflt, const char *const names[]);
/* The length of the table at idx as a count (raw: no __len), capped. */
size_t lsw_rawcount(lua_State *L, int idx, const char *fname, const char *what, size_t cap);

/* Sets the metatable on top's __metatable to a stand-in {__name = its
 * __name} (plus __call when call is given; the Lua layer and plots test
 * both) so that getmetatable never hands out __gc or __close. */
void lsw_protect_meta(lua_State *L, lua_CFunction call);

/* Per-file openers: each adds its functions to the module table at -1. */
void lsw_open_curve(lua_State *L);
void lsw_open_pwl(lua_State *L);
void lsw_open_fit(lua_State *L);
void lsw_open_net(lua_State *L);
void lsw_open_array(lua_State *L);
void lsw_open_read(lua_State *L);
void lsw_open_life(lua_State *L);
void lsw_open_file(lua_State *L);

#endif
