/* libFuzzer harness: PWL construction (points and segments), evaluation,
 * slopes, companions, inverse, inverse of the inverse, canonical form, copy
 * and comparison against sample curves and device laws. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "curve/curve.h"
#include "pwl/pwl.h"
#include "fuzz_input.h"

#define MAX_KNOTS 48


static int build(sw_pwl *m, fuzz_in *in, sw_err *err)
{
  double a[MAX_KNOTS], b[MAX_KNOTS], s[MAX_KNOTS], t[MAX_KNOTS];
  unsigned mode = fuzz_u8(in);
  size_t n = fuzz_count(in, 0, MAX_KNOTS - 1);
  if ((mode & 1) == 0) {
    if (mode & 2) fuzz_increasing(in, a, n); else fuzz_doubles(in, a, n);
    fuzz_doubles(in, b, n);
    return sw_pwl_from_points(m, a, b, n, err);
  }
  /* segments: lo/hi from increasing knots (or raw), slopes and intercepts raw */
  if (mode & 2) {
    size_t k;
    fuzz_increasing(in, t, n + 1);
    for (k = 0; k < n; k++) { a[k] = t[k]; b[k] = t[k + 1]; }
  } else {
    fuzz_doubles(in, a, n);
    fuzz_doubles(in, b, n);
  }
  fuzz_doubles(in, s, n);
  fuzz_doubles(in, t, n);
  return sw_pwl_from_segments(m, a, b, s, t, n, err);
}

static void exercise(const sw_pwl *m, fuzz_in *in)
{
  sw_err err;
  double xs[8], ys[8], y, sl, e, r, j, g;
  size_t k, nx = fuzz_count(in, 1, 8);
  fuzz_doubles(in, xs, nx);
  for (k = 0; k < nx; k++) {
    size_t seg = sw_pwl_locate(m, xs[k]);
    (void)sw_pwl_eval(m, xs[k], &y, &err);
    (void)sw_pwl_slope_at(m, xs[k], &sl, &err);
    if (seg >= m->nseg) abort(); /* locate must stay in range */
    (void)sw_pwl_line(m, seg, xs[k]);
    sw_pwl_thevenin(m, seg, &e, &r);
    (void)sw_pwl_norton(m, seg, &j, &g, &err);
  }
  (void)sw_pwl_eval_many(m, xs, ys, nx, &err);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  fuzz_in in = {data, size};
  sw_pwl m, inv, back, cp;
  sw_err err;
  memset(&m, 0, sizeof m);
  memset(&inv, 0, sizeof inv);
  memset(&back, 0, sizeof back);
  memset(&cp, 0, sizeof cp);
  if (build(&m, &in, &err)) {
    sw_pwl_free(&m); /* a failed constructor leaves nothing to free; must be safe */
    return 0;
  }
  m.extend = (sw_extend)(fuzz_u8(&in) % 3);
  exercise(&m, &in);

  if (sw_pwl_copy(&m, &cp, &err) == SW_OK) exercise(&cp, &in);
  if (sw_pwl_inverse(&m, &inv, &err) == SW_OK) {
    exercise(&inv, &in);
    if (sw_pwl_inverse(&inv, &back, &err) == SW_OK) {
      size_t k;
      /* swapping the knots twice gives the model back, bit for bit */
      if (back.nseg != m.nseg) abort();
      for (k = 0; k <= m.nseg; k++)
        if (back.x[k] != m.x[k]) abort();
      for (k = 0; k < m.nseg; k++)
        if (back.ya[k] != m.ya[k] || back.yb[k] != m.yb[k]) abort();
      exercise(&back, &in);
    }
  }
  if (m.nseg >= 1) {
    size_t nc = m.nseg - 1;
    double a, b, *c = malloc((nc ? nc : 1) * sizeof *c),
                 *beta = malloc((nc ? nc : 1) * sizeof *beta);
    if (c && beta) (void)sw_pwl_canonical(&m, &a, &b, c, beta, &err);
    free(c);
    free(beta);
  }
  {
    /* compare against a sample curve or a device law over a fuzzed range */
    sw_curve cv;
    sw_compare out;
    double x[16], y[16];
    unsigned kind = fuzz_u8(&in) % 3;
    int ok;
    memset(&cv, 0, sizeof cv);
    if (kind == 0) {
      size_t n = fuzz_count(&in, 2, 16);
      fuzz_increasing(&in, x, n);
      fuzz_doubles(&in, y, n);
      ok = sw_curve_samples(&cv, x, y, n, 1, 1, &err) == SW_OK;
    } else if (kind == 1) {
      ok = sw_curve_diode(&cv, 1e-12, 1 + fuzz_u8(&in) % 3, 0.02585, fuzz_u8(&in) * 0.1,
                          fuzz_u8(&in) & 1, &err) == SW_OK;
    } else {
      ok = sw_curve_power(&cv, 1 + fuzz_u8(&in), 0.5 + fuzz_u8(&in) * 0.05, &err) == SW_OK;
    }
    if (ok) {
      double lo = fuzz_double(&in), hi = fuzz_double(&in);
      size_t n = fuzz_count(&in, 0, 200);
      double floor = fuzz_double(&in);
      (void)sw_pwl_compare(&m, &cv, lo, hi, n, floor, &out, &err);
      if (m.nseg > 0)
        (void)sw_pwl_compare(&m, &cv, m.x[0], m.x[m.nseg], n, floor, &out, &err);
    }
    sw_curve_free(&cv);
  }
  sw_pwl_free(&back);
  sw_pwl_free(&inv);
  sw_pwl_free(&cp);
  sw_pwl_free(&m);
  return 0;
}
