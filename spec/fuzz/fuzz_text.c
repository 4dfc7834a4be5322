/* libFuzzer harness: the numeric text reader on arbitrary bytes, with the
 * delimiter, header rule and wanted columns chosen by the first bytes. */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "text/textread.h"
#include "fuzz_input.h"

#define MAX_TEXT (64 * 1024)


int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  static const char delims[] = {0, ',', ';', '\t', ' '};
  static const char *const names[] = {"x", "y", "I_A", "V_V", "", "a b"};
  fuzz_in in = {data, size};
  sw_text_opts opts;
  sw_text_col cols[4];
  memset(cols, 0, sizeof cols);
  double *out[4] = {0};
  size_t *lines = NULL, nrows = 0, ncols, k;
  sw_err err;
  char *buf;
  unsigned ctl;

  ctl = fuzz_u8(&in);
  opts.delim = delims[ctl % 5];
  opts.header = (int)((ctl / 5) % 3) - 1;
  ncols = fuzz_count(&in, 0, 4);
  for (k = 0; k < ncols; k++) {
    unsigned c = fuzz_u8(&in);
    cols[k].name = (c & 0x80) ? names[c % 6] : NULL;
    cols[k].index = c & 7; /* 0 is out of range on purpose */
    cols[k].scale = (c & 0x40) ? 1e-3 : 1.0;
    cols[k].optional = (c >> 3) & 1;
  }
  if (in.n > MAX_TEXT) return 0;
  buf = malloc(in.n + 1);
  if (!buf) return 0;
  memcpy(buf, in.p, in.n);
  buf[in.n] = '\0';
  if (sw_text_parse(buf, in.n, "fuzz.csv", (ctl & 0x80) ? NULL : &opts, cols, ncols, out,
                    (ctl & 0x40) ? NULL : &lines, &nrows, &err) == SW_OK) {
    /* touch every value so ASan checks the sizes */
    volatile double sink = 0;
    size_t r;
    for (k = 0; k < ncols; k++)
      if (out[k]) /* an optional column the header lacks */
        for (r = 0; r < nrows; r++) sink += out[k][r];
    if (lines)
      for (r = 0; r < nrows; r++) sink += (double)lines[r];
    (void)sink;
  }
  for (k = 0; k < 4; k++) free(out[k]);
  free(lines);
  free(buf);
  return 0;
}
