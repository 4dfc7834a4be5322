/* Decoding fuzzer bytes into bounded numbers and sizes.  Header-only, used by
 * every harness.  Numbers come either as raw IEEE doubles (so NaN, Inf,
 * denormals and huge values reach the core) or as small scaled integers (so
 * the fuzzer easily builds well-formed data that gets deep into the code). */
#ifndef FUZZ_INPUT_H
#define FUZZ_INPUT_H

#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <gsl/gsl_errno.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerInitialize(int *argc, char ***argv);

/* As the module does at load: GSL reports errors as status codes.  (Each
 * harness is one translation unit, so the definition may live here.) */
int LLVMFuzzerInitialize(int *argc, char ***argv)
{
  (void)argc;
  (void)argv;
  gsl_set_error_handler_off();
  return 0;
}

typedef struct fuzz_in {
  const uint8_t *p;
  size_t n;
} fuzz_in;

static inline unsigned fuzz_u8(fuzz_in *in)
{
  unsigned v;
  if (in->n == 0) return 0;
  v = in->p[0];
  in->p++;
  in->n--;
  return v;
}

/* A count in [lo, hi]. */
static inline size_t fuzz_count(fuzz_in *in, size_t lo, size_t hi)
{
  size_t span = hi - lo + 1;
  return lo + (size_t)fuzz_u8(in) % span;
}

/* A number: tag byte >= 0xF0 reads a raw double; otherwise a signed byte
 * scaled by a power of ten chosen by the tag. */
static inline double fuzz_double(fuzz_in *in)
{
  unsigned tag = fuzz_u8(in);
  if (tag >= 0xF0) {
    double d = 0;
    uint8_t raw[8] = {0};
    size_t k = in->n < 8 ? in->n : 8;
    memcpy(raw, in->p, k);
    in->p += k;
    in->n -= k;
    memcpy(&d, raw, sizeof d);
    return d;
  } else {
    static const double scale[8] = {1, 0.1, 0.01, 1e-3, 1e-6, 10, 1e3, 1e-12};
    int v = (int)(int8_t)fuzz_u8(in);
    return v * scale[tag & 7];
  }
}

/* n numbers into a caller-sized buffer. */
static inline void fuzz_doubles(fuzz_in *in, double *out, size_t n)
{
  size_t k;
  for (k = 0; k < n; k++) out[k] = fuzz_double(in);
}

/* Strictly increasing values from positive steps (a well-formed knot set),
 * starting at a fuzzed origin. */
static inline void fuzz_increasing(fuzz_in *in, double *out, size_t n)
{
  size_t k;
  double x = (int)(int8_t)fuzz_u8(in) * 0.1;
  for (k = 0; k < n; k++) {
    out[k] = x;
    x += 0.01 * (1 + fuzz_u8(in));
  }
}

#endif
