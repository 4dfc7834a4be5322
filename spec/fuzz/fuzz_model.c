/* libFuzzer harness: model files (sw_pwl_load_units) from arbitrary bytes,
 * and a save / load round trip of every model that loads. */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>

#include "pwl/pwl.h"
#include "pwl/pwl_io.h"

#define MAX_FILE (16 * 1024)

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerInitialize(int *argc, char ***argv);

/* One scratch directory per fuzzing process (harness state, not product). */
static char dir[64];

int LLVMFuzzerInitialize(int *argc, char ***argv)
{
  (void)argc;
  (void)argv;
  gsl_set_error_handler_off();
  snprintf(dir, sizeof dir, "/tmp/segwise-fuzz-XXXXXX");
  if (!mkdtemp(dir)) abort();
  return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  char path[96], again[96], xu[SW_UNIT_MAX], yu[SW_UNIT_MAX], xu2[SW_UNIT_MAX], yu2[SW_UNIT_MAX];
  sw_pwl m, back;
  sw_err err;
  FILE *f;
  if (size > MAX_FILE) return 0;
  snprintf(path, sizeof path, "%s/in.model", dir);
  snprintf(again, sizeof again, "%s/again.model", dir);
  f = fopen(path, "wb");
  if (!f) abort();
  if (size && fwrite(data, 1, size, f) != size) abort();
  fclose(f);
  memset(&m, 0, sizeof m);
  memset(&back, 0, sizeof back);
  if (sw_pwl_load_units(&m, path, xu, yu, &err) == SW_OK) {
    size_t k;
    if (m.nseg < 1 || !m.x) abort(); /* success must give a model */
    /* what loads must save and load back to the same numbers and units */
    if (sw_pwl_save(&m, again, xu, yu, &err) != SW_OK) abort();
    if (sw_pwl_load_units(&back, again, xu2, yu2, &err) != SW_OK) abort();
    if (back.nseg != m.nseg || back.extend != m.extend || strcmp(xu, xu2) || strcmp(yu, yu2)) {
      if (getenv("FUZZ_SHOW")) /* describe the mismatch when replaying one input */
        fprintf(stderr, "nseg %zu/%zu extend %d/%d xunit [%s]/[%s] yunit [%s]/[%s]\n", m.nseg, back.nseg,
                (int)m.extend, (int)back.extend, xu, xu2, yu, yu2);
      abort();
    }
    for (k = 0; k <= m.nseg; k++)
      if (back.x[k] != m.x[k]) abort();
    for (k = 0; k < m.nseg; k++)
      if (back.ya[k] != m.ya[k] || back.yb[k] != m.yb[k]) abort();
  } else if (m.x) {
    abort(); /* a failed load leaves nothing allocated */
  }
  sw_pwl_free(&back);
  sw_pwl_free(&m);
  return 0;
}
