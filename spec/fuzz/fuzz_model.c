/* libFuzzer harness: model files (sw_pwl_load_prov) from arbitrary bytes,
 * and a save / load round trip of every model that loads, its units and its
 * provenance ("# fit" lines) included. */
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

static int same_number(double a, double b) { return a == b || (a != a && b != b); }

/* Every field of two provenances agrees (numbers bit for bit). */
static int same_prov(const sw_pwl_prov *a, const sw_pwl_prov *b)
{
  const double na[] = {a->lo, a->hi, a->tol, a->rel_floor, a->max_abs, a->x_abs, a->max_rel,
                       a->x_rel, a->rms};
  const double nb[] = {b->lo, b->hi, b->tol, b->rel_floor, b->max_abs, b->x_abs, b->max_rel,
                       b->x_rel, b->rms};
  size_t k;
  if (a->present != b->present || a->continuous != b->continuous || a->nparam != b->nparam)
    return 0;
  if (strcmp(a->curve, b->curve) || strcmp(a->source, b->source) ||
      strcmp(a->criterion, b->criterion) || strcmp(a->knots, b->knots) ||
      strcmp(a->error, b->error) || strcmp(a->checked, b->checked) || strcmp(a->made, b->made))
    return 0;
  for (k = 0; k < sizeof na / sizeof na[0]; k++)
    if (!same_number(na[k], nb[k])) return 0;
  for (k = 0; k < a->nparam; k++)
    if (strcmp(a->param[k].name, b->param[k].name) || strcmp(a->param[k].value, b->param[k].value))
      return 0;
  return 1;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  char path[96], again[96], xu[SW_UNIT_MAX], yu[SW_UNIT_MAX], xu2[SW_UNIT_MAX], yu2[SW_UNIT_MAX];
  sw_pwl m, back;
  sw_pwl_prov prov, prov2;
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
  if (sw_pwl_load_prov(&m, path, xu, yu, &prov, &err) == SW_OK) {
    size_t k;
    if (m.nseg < 1 || !m.x) abort(); /* success must give a model */
    /* what loads must save and load back to the same numbers and units */
    if (sw_pwl_save_prov(&m, again, xu, yu, &prov, &err) != SW_OK) {
      if (getenv("FUZZ_SHOW")) fprintf(stderr, "save: %s\n", err.msg);
      abort();
    }
    if (sw_pwl_load_prov(&back, again, xu2, yu2, &prov2, &err) != SW_OK) {
      if (getenv("FUZZ_SHOW")) fprintf(stderr, "load again: %s\n", err.msg);
      abort();
    }
    if (!same_prov(&prov, &prov2)) abort();
    if (back.nseg != m.nseg || back.extend != m.extend || strcmp(xu, xu2) || strcmp(yu, yu2)) {
      if (getenv("FUZZ_SHOW")) /* describe the mismatch when replaying one input */
        fprintf(stderr, "nseg %zu/%zu extend %d/%d xunit [%s]/[%s] yunit [%s]/[%s]\n", m.nseg,
                back.nseg, (int)m.extend, (int)back.extend, xu, xu2, yu, yu2);
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
