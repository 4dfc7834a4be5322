/* libFuzzer harness: fitting on arbitrary samples and small device laws,
 * every criterion and knot scheme, fixed counts and tolerances, with the
 * reported error checked never to be below a dense recomputation. */
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "fit/fit.h"
#include "fuzz_input.h"

#define MAX_SAMPLES 40


int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  fuzz_in in = {data, size};
  sw_curve c;
  sw_fit_opts o;
  sw_fit_info info;
  sw_pwl m;
  sw_err err;
  double x[MAX_SAMPLES], y[MAX_SAMPLES], knots[8], thx[2], thy[2];
  unsigned kind = fuzz_u8(&in) % 3, f;
  memset(&c, 0, sizeof c);
  memset(&m, 0, sizeof m);
  if (kind == 0) {
    size_t n = fuzz_count(&in, 2, MAX_SAMPLES);
    fuzz_increasing(&in, x, n);
    fuzz_doubles(&in, y, n);
    if (sw_curve_samples(&c, x, y, n, 1, 1, &err)) return 0;
  } else if (kind == 1) {
    if (sw_curve_diode(&c, 1e-14 * (1 + fuzz_u8(&in)), 1 + 0.01 * fuzz_u8(&in), 0.025852,
                       0.01 * fuzz_u8(&in), fuzz_u8(&in) & 1, &err))
      return 0;
  } else {
    if (sw_curve_power(&c, 0.1 * (1 + fuzz_u8(&in)), 0.2 + 0.05 * fuzz_u8(&in), &err)) return 0;
  }
  sw_fit_opts_init(&o);
  f = fuzz_u8(&in);
  o.criterion = (sw_fit_criterion)(1 + f % 5);
  o.knots = (sw_knots_scheme)(1 + (f / 5) % 5);
  o.continuous = (f & 0x80) ? 0 : 1;
  o.lo = sw_curve_bounded(&c) ? c.lo : -1 + fuzz_double(&in);
  o.hi = sw_curve_bounded(&c) ? c.hi : 1 + fuzz_double(&in);
  if (fuzz_u8(&in) & 1) { o.lo = fuzz_double(&in); o.hi = fuzz_double(&in); }
  f = fuzz_u8(&in);
  if (f & 1) { o.segments = 0; o.tol = fuzz_double(&in); }
  else o.segments = fuzz_count(&in, 0, 12);
  o.rel = (f >> 1) & 1;
  o.rel_floor = (f & 4) ? fuzz_double(&in) : 0;
  o.monotone = (f >> 3) & 1;
  o.grid = fuzz_count(&in, 16, 400); /* bounded so the fuzzer stays fast */
  if (o.knots == SW_KNOTS_LIST) {
    o.nknot_list = fuzz_count(&in, 0, 8);
    fuzz_doubles(&in, knots, o.nknot_list);
    o.knot_list = knots;
  }
  if (f & 0x20) { o.has_at = 1; o.at = fuzz_double(&in); }
  if (f & 0x40) {
    o.nthrough = fuzz_count(&in, 1, 2);
    fuzz_doubles(&in, thx, o.nthrough);
    fuzz_doubles(&in, thy, o.nthrough);
    o.through_x = thx;
    o.through_y = thy;
  }
  if (f & 0x80) {
    o.has_slope_first = 1; o.slope_first = fuzz_double(&in);
    o.has_slope_last = fuzz_u8(&in) & 1; o.slope_last = fuzz_double(&in);
  }
  /* A tolerance far below the curve's scale makes an analytic curve need
   * thousands of segments: correct but minutes under the sanitizers, which
   * the fuzzer reports as a timeout.  Keep it within three decades. */
  if (o.tol > 0 && c.kind != SW_CURVE_SAMPLES) {
    double ya, yb;
    if (o.rel) {
      if (o.tol < 1e-3) o.tol = 1e-3;
    } else if (sw_isfinite(o.lo) && sw_isfinite(o.hi) &&
               sw_curve_eval(&c, o.lo, &ya, &err) == SW_OK &&
               sw_curve_eval(&c, o.hi, &yb, &err) == SW_OK) {
      double scale = fabs(ya) + fabs(yb);
      if (o.tol < 1e-3 * scale) o.tol = 1e-3 * scale;
    }
  }
  /* and a cap on the count, as a user would set: a steep law under a tight
   * relative tolerance can want a thousand uniform segments (fuzzer find) */
  if (o.tol > 0) o.max_segments = 32;
  if (getenv("FUZZ_SHOW")) /* describe the case when replaying one input */
    fprintf(stderr,
            "curve kind %d n=%zu k=%g p=%g range [%g, %g]; criterion %d knots %d continuous %d "
            "segments %zu "
            "tol %g rel %d floor %g monotone %d grid %zu nknots %zu at %d:%g through %zu slopes "
            "%d/%d\n",
            (int)c.kind, c.n, c.k, c.p, o.lo, o.hi, (int)o.criterion, (int)o.knots, o.continuous,
            o.segments, o.tol, o.rel, o.rel_floor, o.monotone, o.grid, o.nknot_list, o.has_at, o.at,
            o.nthrough, o.has_slope_first, o.has_slope_last);
  if (sw_fit(&c, &o, &m, &info, &err) == SW_OK) {
    sw_compare cmp;
    double *ea, *xa, *er, ulps = 0;
    size_t k;
    if (m.nseg == 0 || !m.x) abort(); /* success must give a model */
    /* an error claim is no finer than the rounding of the values compared:
     * allow a few units in the last place of the largest of them */
    for (k = 0; k < m.nseg; k++) {
      if (fabs(m.ya[k]) > ulps) ulps = fabs(m.ya[k]);
      if (fabs(m.yb[k]) > ulps) ulps = fabs(m.yb[k]);
    }
    ulps *= 8 * DBL_EPSILON;
    if (sw_pwl_compare(&m, &c, m.x[0], m.x[m.nseg], 1001, o.rel_floor, &cmp, &err) == SW_OK &&
        cmp.max_abs > info.max_abs * (1 + 1e-6) + ulps + 1e-12 && m.x[0] == o.lo &&
        m.x[m.nseg] == o.hi) {
      if (getenv("FUZZ_SHOW"))
        fprintf(stderr, "fit reports max_abs %.17g at %g; recheck finds %.17g at %g\n",
                info.max_abs, info.x_abs, cmp.max_abs, cmp.x_abs);
      abort();
    } /* the fit claims less error than a dense recheck finds */
    ea = malloc(m.nseg * sizeof *ea);
    xa = malloc(m.nseg * sizeof *xa);
    er = malloc(m.nseg * sizeof *er);
    if (ea && xa && er) (void)sw_fit_segment_errors(&m, &c, o.rel_floor, ea, xa, er, &err);
    free(ea); free(xa); free(er);
  } else if (m.x) {
    abort(); /* a failed fit must leave nothing allocated in out */
  }
  sw_pwl_free(&m);
  sw_curve_free(&c);
  return 0;
}
