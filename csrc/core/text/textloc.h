/* Numbers as text whatever the host's locale.  A host application may call
 * setlocale(LC_NUMERIC, "de_DE.UTF-8") (Lua's os.setlocale does): printf's
 * %g then writes a decimal comma and strtod stops at a '.'.  Model files
 * and data files must not depend on that, so every core function that
 * writes or reads numbers as text runs inside a C-locale scope: POSIX 2008
 * uselocale, which changes the calling thread only (no global state, other
 * threads and the host keep their locale) and nests. */
#ifndef SW_TEXTLOC_H
#define SW_TEXTLOC_H

#include <locale.h>
#include <stddef.h>

#include "err/sw_err.h"

typedef struct sw_cnum {
  locale_t c;    /* the C locale object, (locale_t)0 when none could be made */
  locale_t prev; /* the thread's locale before the scope */
} sw_cnum;

/* Enters the scope: this thread's numbers follow the C locale until
 * sw_cnum_leave.  SW_ENOMEM (message in err) when no locale object could be
 * made; sw_cnum_leave is then still safe. */
int sw_cnum_enter(sw_cnum *s, sw_err *err);

/* Leaves the scope, restoring the thread's locale as it was. */
void sw_cnum_leave(sw_cnum *s);

/* snprintf(buf, cap, "%.*g", prec, v) with '.' as the decimal point in any
 * locale.  Never fails: without a locale object it rewrites the locale's
 * point to '.'. */
void sw_text_fmt_g(char *buf, size_t cap, int prec, double v);

/* strtod in the C locale (same result and end pointer), in any locale. */
double sw_text_strtod_c(const char *p, char **end);

#endif
