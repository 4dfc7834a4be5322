/* Provenance of a fitted model: how it was made, kept as "# fit <key>:"
 * comment lines in its model file (pwl_io.c writes and reads them).
 * Everything is checked on the way in, both when set by a caller and when
 * read from a file, so whatever saves loads back exactly and whatever loads
 * saves again. */
#ifndef SW_PWL_PROV_H
#define SW_PWL_PROV_H

#include <stddef.h>
#include <stdio.h>

#include "err/sw_err.h"

#define SW_PROV_WORD 64    /* a word, short text or parameter (bytes, with the NUL) */
#define SW_PROV_PATH 1024  /* the source file's name (bytes, with the NUL) */
#define SW_PROV_NPARAM 32  /* curve parameters kept */
#define SW_PROV_NFIELD 14  /* keys besides the curve parameters */

typedef struct {
  char name[SW_PROV_WORD];
  char value[SW_PROV_WORD]; /* as written: a number in %.17g or a word */
} sw_prov_param;

/* Numbers are NaN and texts "" when not stated; continuous -1. */
typedef struct {
  int present; /* anything stated at all */
  char curve[SW_PROV_WORD]; /* the curve's kind: samples, diode, ... */
  size_t nparam;
  sw_prov_param param[SW_PROV_NPARAM];
  char source[SW_PROV_PATH]; /* the file the samples were read from */
  double lo, hi; /* the fitted range */
  char criterion[SW_PROV_WORD], knots[SW_PROV_WORD], error[SW_PROV_WORD];
  int continuous;
  double tol, rel_floor;
  double max_abs, x_abs, max_rel, x_rel, rms; /* the stated errors and where */
  char checked[SW_PROV_WORD]; /* how the errors were checked */
  char made[SW_PROV_WORD]; /* when the fit was made (UTC, ISO 8601) */
} sw_pwl_prov;

/* File lines already seen while reading one file (for repeats). */
typedef struct {
  size_t field[SW_PROV_NFIELD];
  size_t param[SW_PROV_NPARAM];
} sw_prov_seen;

void sw_pwl_prov_init(sw_pwl_prov *p);

/* Setters by field name: texts curve, source, criterion, knots, error,
 * checked, made; numbers lo, hi, tol, rel_floor, max_abs, x_abs, max_rel,
 * x_rel, rms.  Messages name the field ("source contains ..."). */
int sw_pwl_prov_set_text(sw_pwl_prov *p, const char *name, const char *s, sw_err *err);
int sw_pwl_prov_set_number(sw_pwl_prov *p, const char *name, double v, sw_err *err);
void sw_pwl_prov_set_continuous(sw_pwl_prov *p, int yes);
/* A curve parameter: name a word of letters, digits, '_' and '.'. */
int sw_pwl_prov_add_param(sw_pwl_prov *p, const char *name, const char *value, sw_err *err);

/* What the setters cannot see alone: lo with hi, a position with its error. */
int sw_pwl_prov_check(const sw_pwl_prov *p, sw_err *err);

/* v as the shortest of %.15g, %.16g, %.17g that reads back as v (cap:
 * SW_PROV_NUMBER bytes will do), with a '.' point in any locale. */
#define SW_PROV_NUMBER 32
void sw_pwl_prov_format(double v, char *buf, size_t cap);

/* Writes the "# fit" lines (nothing when p is NULL or states nothing). */
void sw_pwl_prov_write(FILE *f, const sw_pwl_prov *p);

/* One comment line's key and value (blanks trimmed, not NUL-terminated).
 * Keys that are not "fit ..." and unknown fit keys are left alone (plain
 * comments); a known key with a bad or repeated value is an error naming
 * path:line. */
int sw_pwl_prov_read_line(sw_pwl_prov *p, sw_prov_seen *seen, const char *key, size_t klen,
                          const char *val, size_t vlen, const char *path, size_t line,
                          sw_err *err);

#endif
