/* Decimal text to double, correctly rounded like strtod but much faster on
 * the plain decimals that data files hold. */
#ifndef SW_TEXTNUM_H
#define SW_TEXTNUM_H

/* 1 when long double arithmetic really carries a 64-bit mantissa here.
 * Emulators (valgrind) and an x87 set to double precision do not; ask once
 * per parse and pass the answer below. */
int sw_text_extended_ok(void);

/* Same result and end pointer as strtod(p, end) in the C locale.
 * extended_ok: the answer of sw_text_extended_ok(). */
double sw_text_strtod(const char *p, char **end, int extended_ok);

#endif
