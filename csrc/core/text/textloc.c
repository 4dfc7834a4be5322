/* Numbers as text whatever the host's locale (see textloc.h). */
#include "text/textloc.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int sw_cnum_enter(sw_cnum *s, sw_err *err)
{
  /* glibc and musl hand back a shared constant for "C": nothing allocated */
  s->c = newlocale(LC_ALL_MASK, "C", (locale_t)0);
  s->prev = (locale_t)0;
  if (s->c == (locale_t)0)
    return sw_err_set(err, SW_ENOMEM, "cannot set up the C locale for numbers as text");
  s->prev = uselocale(s->c);
  if (s->prev == (locale_t)0) { /* cannot happen with a valid object; stay safe */
    freelocale(s->c);
    s->c = (locale_t)0;
    return sw_err_set(err, SW_ENOMEM, "cannot switch to the C locale for numbers as text");
  }
  return SW_OK;
}

void sw_cnum_leave(sw_cnum *s)
{
  if (s->c == (locale_t)0) return;
  uselocale(s->prev);
  freelocale(s->c);
  s->c = (locale_t)0;
}

/* The locale's decimal point in text printed by %g becomes '.': anything
 * that is not a digit, sign, exponent letter or part of inf/nan is it (no
 * grouping: %g never groups digits). */
static void fix_point(char *buf)
{
  char *r = buf, *w = buf;
  int in_point = 0;
  for (; *r; r++) {
    int plain = *r == ' ' || (*r >= '0' && *r <= '9') || (*r >= 'a' && *r <= 'z') ||
                (*r >= 'A' && *r <= 'Z') || *r == '+' || *r == '-';
    if (plain) { *w++ = *r; in_point = 0; }
    else if (!in_point) { *w++ = '.'; in_point = 1; } /* a point may be several bytes */
  }
  *w = '\0';
}

void sw_text_fmt_g(char *buf, size_t cap, int prec, double v)
{
  sw_cnum s;
  int scoped;
  if (!cap) return;
  scoped = sw_cnum_enter(&s, NULL) == SW_OK;
  snprintf(buf, cap, "%.*g", prec, v);
  if (scoped) sw_cnum_leave(&s);
  else fix_point(buf);
}

double sw_text_strtod_c(const char *p, char **end)
{
  sw_cnum s;
  double v;
  if (sw_cnum_enter(&s, NULL) != SW_OK) { /* no scope: read nothing rather than misread */
    if (end) *end = (char *)p;
    return 0.0;
  }
  v = strtod(p, end);
  sw_cnum_leave(&s);
  return v;
}
