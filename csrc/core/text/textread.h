/* Numeric text reader: CSV (comma, semicolon or tab) or columns separated by
 * runs of whitespace.  Pure C, no Lua.
 *
 * The file is read in one go and parsed in place.  '#' comment lines and
 * blank lines are skipped.  The first remaining row is a header when one of
 * its fields is not a number (or when asked to be).  Fields may be quoted
 * ("..." with "" for a quote).  CRLF and LF line ends both work.  Columns are
 * chosen by header name or by 1-based number; each has a scale factor.
 * Every error names file:line:column and the text at fault. */
#ifndef SW_TEXTREAD_H
#define SW_TEXTREAD_H

#include <stddef.h>
#include "err/sw_err.h"

/* One wanted column. */
typedef struct sw_text_col {
  const char *name; /* header name, or NULL to choose by index */
  size_t index;     /* 1-based column number, used when name is NULL */
  double scale;     /* every value is multiplied by this (1: as read) */
  int optional;     /* 1: a name the header lacks is no error; out[k] is
                       then NULL */
} sw_text_col;

typedef struct sw_text_opts {
  char delim;  /* 0: detect; ',', ';', '\t', or ' ' for runs of whitespace */
  int header;  /* -1: detect; 0: the first row is data; 1: it is a header */
} sw_text_opts;

/* Reads the whole file into a NUL-terminated buffer the caller frees with
 * free().  A missing, unreadable or directory path is SW_EIO naming it. */
int sw_text_slurp(const char *path, char **buf, size_t *len, sw_err *err);

/* Parses buf (len bytes, buf[len] must be '\0') named `name` in messages.
 * On success out[k] (k < ncols) holds *nrows doubles of column cols[k], and
 * when lines != NULL, *lines holds the 1-based file line of each row; the
 * caller frees them with free().  On failure everything is NULL / 0.
 * opts may be NULL (detect everything). */
int sw_text_parse(const char *buf, size_t len, const char *name,
                  const sw_text_opts *opts, const sw_text_col *cols,
                  size_t ncols, double **out, size_t **lines, size_t *nrows,
                  sw_err *err);

/* sw_text_slurp then sw_text_parse, naming the file by its path. */
int sw_text_read(const char *path, const sw_text_opts *opts,
                 const sw_text_col *cols, size_t ncols, double **out,
                 size_t **lines, size_t *nrows, sw_err *err);

#endif
