/* Decimal text to double (see textnum.h).  Two exact fast paths, then
 * strtod for everything else:
 *  - Clinger's: a mantissa of at most 15 digits (exact in a double) times
 *    or over a power of ten up to 1e22 (exact too) is one correctly rounded
 *    operation, so it equals strtod's answer.
 *  - Extended precision (x86's 64-bit long double mantissa): a mantissa of
 *    at most 19 digits and a power of ten up to 1e27 are exact there; one
 *    operation is off by at most half a long-double unit, so rounding that
 *    to double is right unless it sits within one such unit of a halfway
 *    point between doubles.  Those rare cases, long doubles of any other
 *    width, and machines whose long double arithmetic turns out narrower
 *    than it says (checked at run time), go to strtod. */
#include "text/textnum.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>

static const double pow10_d[23] = {
  1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
  1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};

#if LDBL_MANT_DIG == 64
static const long double pow10_ld[28] = {
  1e0L, 1e1L, 1e2L, 1e3L, 1e4L, 1e5L, 1e6L, 1e7L, 1e8L, 1e9L, 1e10L, 1e11L, 1e12L, 1e13L,
  1e14L, 1e15L, 1e16L, 1e17L, 1e18L, 1e19L, 1e20L, 1e21L, 1e22L, 1e23L, 1e24L, 1e25L,
  1e26L, 1e27L};

/* m * 10^e10 through long double; 0 when the rounding to double could be
 * ambiguous (the caller then asks strtod). */
static int extended(unsigned long long m, int e10, double *out)
{
  long double r = (long double)m, fr;
  unsigned long long bits;
  unsigned low;
  int ex;
  r = e10 < 0 ? r / pow10_ld[-e10] : r * pow10_ld[e10];
  fr = frexpl(r, &ex);                              /* r = fr * 2^ex, fr in [0.5, 1) */
  bits = (unsigned long long)ldexpl(fr, 64);        /* the 64 mantissa bits, exact */
  low = (unsigned)(bits & 0x7ff);                   /* the 11 bits a double drops */
  if (low >= 0x3ff && low <= 0x401) return 0;       /* near a halfway point */
  *out = (double)r;
  return 1;
}
#endif

int sw_text_extended_ok(void)
{
#if LDBL_MANT_DIG == 64
  volatile long double one = 1.0L, tiny = LDBL_EPSILON, big = 9007199254740993.0L;
  volatile long double sum = one + tiny, diff = big - 9007199254740992.0L;
  return sum != one && diff == one;
#else
  return 0;
#endif
}

double sw_text_strtod(const char *p, char **end, int extended_ok)
{
  const char *q = p;
  unsigned long long m = 0;
  int neg = 0, nd = 0, e10 = 0, any = 0;
  double v;
  if (*q == '-' || *q == '+') { neg = (*q == '-'); q++; }
  for (; *q >= '0' && *q <= '9'; q++) {
    any = 1;
    if (m || *q != '0') { if (++nd > 19) return strtod(p, end); m = m * 10 + (unsigned)(*q - '0'); }
  }
  if (*q == '.') {
    for (q++; *q >= '0' && *q <= '9'; q++) {
      any = 1;
      if (m || *q != '0') {
        if (++nd > 19) return strtod(p, end);
        m = m * 10 + (unsigned)(*q - '0');
      }
      e10--;
    }
  }
  if (!any || *q == 'x' || *q == 'X') return strtod(p, end); /* hex, inf, nan, junk */
  if (*q == 'e' || *q == 'E') {
    const char *r = q + 1;
    int eneg = 0, ev = 0;
    if (*r == '-' || *r == '+') { eneg = (*r == '-'); r++; }
    if (!(*r >= '0' && *r <= '9')) return strtod(p, end);
    for (; *r >= '0' && *r <= '9'; r++) if (ev < 10000) ev = ev * 10 + (*r - '0');
    e10 += eneg ? -ev : ev;
    q = r;
  }
  /* Clinger's path needs plain double arithmetic (no wider evaluation) */
  if (FLT_EVAL_METHOD == 0 && nd <= 15 && e10 >= -22 && e10 <= 22) {
    v = (double)m;
    v = e10 < 0 ? v / pow10_d[-e10] : v * pow10_d[e10];
  } else {
#if LDBL_MANT_DIG == 64
    if (!extended_ok || m == 0 || e10 < -27 || e10 > 27 || !extended(m, e10, &v))
      return strtod(p, end);
#else
    (void)extended_ok;
    return strtod(p, end);
#endif
  }
  *end = (char *)q;
  return neg ? -v : v;
}
