/* Decimal text to double, correctly rounded like strtod but much faster on
 * the plain decimals that data files hold. */
#ifndef SW_TEXTNUM_H
#define SW_TEXTNUM_H

/* Same result and end pointer as strtod(p, end) in the C locale. */
double sw_text_strtod(const char *p, char **end);

#endif
