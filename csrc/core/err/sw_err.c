#include "err/sw_err.h"

#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int sw_err_set(sw_err *err, int code, const char *fmt, ...)
{
  if (err) {
    va_list ap;
    err->code = code;
    va_start(ap, fmt);
    vsnprintf(err->msg, sizeof err->msg, fmt, ap);
    va_end(ap);
  }
  return code;
}

int sw_err_prefix(sw_err *err, const char *fmt, ...)
{
  char head[128], old[sizeof err->msg];
  va_list ap;
  if (!err) return SW_OK;
  va_start(ap, fmt);
  vsnprintf(head, sizeof head, fmt, ap);
  va_end(ap);
  {
    size_t hl = strlen(head), room = sizeof err->msg - 1;
    memcpy(old, err->msg, sizeof old);
    if (hl > room) hl = room;
    memcpy(err->msg, head, hl);
    old[room - hl] = '\0'; /* truncate the old text to what still fits */
    memcpy(err->msg + hl, old, strlen(old) + 1);
  }
  return err->code;
}

void *sw_alloc(size_t count, size_t size, sw_err *err)
{
  void *p;
  if (count == 0) count = 1;
  if (size != 0 && count > SIZE_MAX / size) {
    sw_err_set(err, SW_ENOMEM, "allocation of %zu x %zu bytes overflows", count, size);
    return NULL;
  }
  p = calloc(count, size);
  if (!p) sw_err_set(err, SW_ENOMEM, "out of memory (%zu x %zu bytes)", count, size);
  return p;
}

void *sw_realloc(void *p, size_t count, size_t size, sw_err *err)
{
  void *q;
  if (count == 0) count = 1;
  if (size != 0 && count > SIZE_MAX / size) {
    sw_err_set(err, SW_ENOMEM, "allocation of %zu x %zu bytes overflows", count, size);
    return NULL;
  }
  q = realloc(p, count * size);
  if (!q) sw_err_set(err, SW_ENOMEM, "out of memory (%zu x %zu bytes)", count, size);
  return q;
}

int sw_isfinite(double x) { return isfinite(x) ? 1 : 0; }
