/* libFuzzer harness: sample curves, device laws, evaluation, derivatives and
 * domain restriction.  Every error return is a normal outcome; the harness
 * only looks for crashes, sanitizer reports and leaks. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "curve/curve.h"
#include "fuzz_input.h"

#define MAX_SAMPLES 64


static void probe(const sw_curve *c, fuzz_in *in)
{
  size_t k, nprobe = fuzz_count(in, 1, 8);
  sw_err err;
  for (k = 0; k < nprobe; k++) {
    double x = fuzz_double(in), y, d;
    unsigned pick = fuzz_u8(in) % 4;
    if (pick == 1 && sw_isfinite(c->lo)) x = c->lo;
    if (pick == 2 && sw_isfinite(c->hi)) x = c->hi;
    (void)sw_curve_eval(c, x, &y, &err);
    (void)sw_curve_deriv(c, x, &d, &err);
    (void)sw_curve_deriv2(c, x, &d, &err);
  }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  fuzz_in in = {data, size};
  sw_curve c;
  sw_err err;
  unsigned mode = fuzz_u8(&in) % 3;
  memset(&c, 0, sizeof c);
  if (mode == 0) {
    double x[MAX_SAMPLES], y[MAX_SAMPLES];
    size_t n = fuzz_count(&in, 0, MAX_SAMPLES);
    unsigned flags = fuzz_u8(&in);
    if (flags & 4) fuzz_increasing(&in, x, n); else fuzz_doubles(&in, x, n);
    fuzz_doubles(&in, y, n);
    if (sw_curve_samples(&c, x, y, n, flags & 1, (flags >> 1) & 1, &err)) return 0;
  } else if (mode == 1) {
    double is = fuzz_double(&in), nn = fuzz_double(&in), vt = fuzz_double(&in);
    double rs = fuzz_double(&in);
    if (sw_curve_diode(&c, is, nn, vt, rs, fuzz_u8(&in) & 1, &err)) return 0;
  } else {
    double k = fuzz_double(&in), p = fuzz_double(&in);
    if (sw_curve_power(&c, k, p, &err)) return 0;
  }
  probe(&c, &in);
  if (fuzz_u8(&in) & 1) {
    double lo = fuzz_double(&in), hi = fuzz_double(&in);
    if (sw_curve_restrict(&c, lo, hi, &err) == SW_OK) probe(&c, &in);
  }
  (void)sw_curve_bounded(&c);
  sw_curve_free(&c);
  return 0;
}
