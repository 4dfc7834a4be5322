/* Error reporting shared by the whole C core: a status code plus a message
 * buffer the caller owns.  No globals, no printing. */
#ifndef SW_ERR_H
#define SW_ERR_H

#include <stddef.h>

/* The one place the version lives (model files and the Lua module). */
#define SW_VERSION "0.1.0"

enum {
  SW_OK = 0,
  SW_EINVAL,    /* bad argument or data: the message names it */
  SW_ENOMEM,    /* allocation failed */
  SW_ENUMERIC,  /* a numeric method failed (GSL status, no convergence) */
  SW_ECALLBACK, /* a user callback failed; the binding holds the details */
  SW_EIO,       /* file could not be read or written */
  SW_ENOSOL,    /* no consistent solution exists */
  SW_ERANGE     /* argument outside a domain or range */
};

typedef struct sw_err {
  int code;
  char msg[320];
} sw_err;

#if defined(__GNUC__)
#define SW_PRINTF(a, b) __attribute__((format(printf, a, b)))
#else
#define SW_PRINTF(a, b)
#endif

/* Sets code and message (printf style); returns code so callers can
 * `return sw_err_set(err, SW_EINVAL, "...")`.  err may be NULL. */
int sw_err_set(sw_err *err, int code, const char *fmt, ...) SW_PRINTF(3, 4);

/* Prefixes an existing message with context ("fit: " + msg). */
int sw_err_prefix(sw_err *err, const char *fmt, ...) SW_PRINTF(2, 3);

/* Allocation helpers: return NULL and set SW_ENOMEM in err on failure.
 * Counts are checked for overflow. */
void *sw_alloc(size_t count, size_t size, sw_err *err);
void *sw_realloc(void *p, size_t count, size_t size, sw_err *err);

/* Non-finite check used everywhere input numbers arrive. */
int sw_isfinite(double x);

#endif
