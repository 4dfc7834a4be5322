/* Writing a file so that a failure never leaves a truncated file over a good
 * one.  A regular file (or a new name) gets its content through a uniquely
 * named temporary in the target's real directory, created exclusively and
 * renamed over the target once complete:
 *  - a symlink is followed: the link stays, its target gets the content;
 *  - an existing file keeps its mode (and owner, where allowed); a new one
 *    gets 0666 less the umask, as any new file;
 *  - a target the caller may not write is refused as the system refuses it
 *    ("Permission denied"), before anything is written;
 *  - no other name is touched (an unrelated "<path>.tmp" stays as it is).
 * A FIFO, terminal or other device (/dev/stdout) is written directly; a
 * directory is refused.  No Lua, no global state. */
#ifndef SW_TEXTFILE_H
#define SW_TEXTFILE_H

#include <stddef.h>
#include <stdio.h>
#include <sys/types.h>

#include "err/sw_err.h"

typedef struct sw_wfile {
  FILE *f;          /* write the content here */
  char *tmp;        /* the temporary's name; NULL when writing directly */
  char *target;     /* the file renamed over (symlinks followed); NULL when direct */
  const char *path; /* as the caller named it, for messages (not owned) */
} sw_wfile;

/* Opens path for writing as above.  On failure nothing was created and
 * w is empty (sw_wfile_abort is still safe). */
int sw_wfile_open(sw_wfile *w, const char *path, sw_err *err);

/* Flushes, syncs and moves the content into place; releases w whatever
 * happens (on failure the old file is untouched and the temporary gone).
 * Call it right after the last write: a failed write's errno names why. */
int sw_wfile_commit(sw_wfile *w, sw_err *err);

/* Gives up: closes and removes the temporary; releases w.  Idempotent. */
void sw_wfile_abort(sw_wfile *w);

/* Writes len bytes of data to path through sw_wfile_*. */
int sw_write_file(const char *path, const char *data, size_t len, sw_err *err);

#endif
