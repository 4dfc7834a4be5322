/* The PWL model: storage, validation, evaluation and companion forms. */
#include "pwl/pwl.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Far beyond any useful model; stops absurd sizes before they allocate. */
#define SW_PWL_MAX_SEGMENTS ((size_t)1 << 26)

int sw_pwl_alloc(sw_pwl *m, size_t nseg, sw_err *err)
{
  memset(m, 0, sizeof *m);
  if (nseg < 1) return sw_err_set(err, SW_EINVAL, "a model needs at least 1 segment");
  if (nseg > SW_PWL_MAX_SEGMENTS)
    return sw_err_set(err, SW_EINVAL, "%zu segments is more than the limit of %zu", nseg,
                      SW_PWL_MAX_SEGMENTS);
  m->x = sw_alloc(nseg + 1, sizeof *m->x, err);
  m->ya = sw_alloc(nseg, sizeof *m->ya, err);
  m->yb = sw_alloc(nseg, sizeof *m->yb, err);
  m->slope = sw_alloc(nseg, sizeof *m->slope, err);
  if (!m->x || !m->ya || !m->yb || !m->slope) {
    sw_pwl_free(m);
    return SW_ENOMEM;
  }
  m->nseg = nseg;
  return SW_OK;
}

void sw_pwl_free(sw_pwl *m)
{
  if (!m) return;
  free(m->x);
  free(m->ya);
  free(m->yb);
  free(m->slope);
  m->x = m->ya = m->yb = m->slope = NULL;
  m->nseg = 0;
}

int sw_pwl_finish(sw_pwl *m, sw_err *err)
{
  size_t k, n = m->nseg;
  for (k = 0; k <= n; k++)
    if (!sw_isfinite(m->x[k]))
      return sw_err_set(err, SW_EINVAL, "x[%zu] is not finite (%g)", k + 1, m->x[k]);
  for (k = 0; k < n; k++) {
    if (!(m->x[k + 1] > m->x[k]))
      return sw_err_set(err, SW_EINVAL,
                        "x must be strictly increasing (x[%zu] = %.17g after x[%zu] = %.17g)",
                        k + 2, m->x[k + 1], k + 1, m->x[k]);
    if (!sw_isfinite(m->ya[k]) || !sw_isfinite(m->yb[k]))
      return sw_err_set(err, SW_EINVAL, "segment %zu has a non-finite value", k + 1);
    m->slope[k] = (m->yb[k] - m->ya[k]) / (m->x[k + 1] - m->x[k]);
    if (!sw_isfinite(m->slope[k]))
      return sw_err_set(err, SW_EINVAL,
                        "segment %zu has an infinite slope (knots %g and %g too close)", k + 1,
                        m->x[k], m->x[k + 1]);
  }
  m->continuous = 1;
  for (k = 0; k + 1 < n; k++)
    if (m->yb[k] != m->ya[k + 1]) m->continuous = 0;
  return SW_OK;
}

int sw_pwl_copy(const sw_pwl *src, sw_pwl *dst, sw_err *err)
{
  int st = sw_pwl_alloc(dst, src->nseg, err);
  if (st) return st;
  memcpy(dst->x, src->x, (src->nseg + 1) * sizeof *src->x);
  memcpy(dst->ya, src->ya, src->nseg * sizeof *src->ya);
  memcpy(dst->yb, src->yb, src->nseg * sizeof *src->yb);
  memcpy(dst->slope, src->slope, src->nseg * sizeof *src->slope);
  dst->extend = src->extend;
  dst->continuous = src->continuous;
  return SW_OK;
}

int sw_pwl_from_points(sw_pwl *m, const double *x, const double *y, size_t n, sw_err *err)
{
  size_t k;
  int st;
  if (n < 2) return sw_err_set(err, SW_EINVAL, "need at least 2 knots (got %zu)", n);
  for (k = 0; k < n; k++)
    if (!sw_isfinite(y[k]))
      return sw_err_set(err, SW_EINVAL, "y[%zu] is not finite (%g)", k + 1, y[k]);
  if ((st = sw_pwl_alloc(m, n - 1, err))) return st;
  memcpy(m->x, x, n * sizeof *x);
  for (k = 0; k + 1 < n; k++) {
    m->ya[k] = y[k];
    m->yb[k] = y[k + 1];
  }
  if ((st = sw_pwl_finish(m, err))) sw_pwl_free(m);
  return st;
}

int sw_pwl_from_segments(sw_pwl *m, const double *lo, const double *hi,
                         const double *slope, const double *icpt, size_t nseg, sw_err *err)
{
  size_t k;
  int st;
  if (nseg < 1) return sw_err_set(err, SW_EINVAL, "need at least 1 segment");
  for (k = 0; k < nseg; k++) {
    if (!sw_isfinite(lo[k]) || !sw_isfinite(hi[k]) || !sw_isfinite(slope[k]) ||
        !sw_isfinite(icpt[k]))
      return sw_err_set(err, SW_EINVAL, "segment %zu has a non-finite field", k + 1);
    if (!(lo[k] < hi[k]))
      return sw_err_set(err, SW_EINVAL, "segment %zu: lo (%g) must be below hi (%g)", k + 1, lo[k],
                        hi[k]);
    if (k > 0 && lo[k] != hi[k - 1])
      return sw_err_set(
          err, SW_EINVAL,
          "segment %zu starts at %.17g but segment %zu ends at %.17g (segments must join)", k + 1,
          lo[k], k, hi[k - 1]);
  }
  if ((st = sw_pwl_alloc(m, nseg, err))) return st;
  for (k = 0; k < nseg; k++) {
    m->x[k] = lo[k];
    m->ya[k] = slope[k] * lo[k] + icpt[k];
    m->yb[k] = slope[k] * hi[k] + icpt[k];
  }
  m->x[nseg] = hi[nseg - 1];
  if ((st = sw_pwl_finish(m, err))) { sw_pwl_free(m); return st; }
  for (k = 0; k < nseg; k++) m->slope[k] = slope[k]; /* keep the caller's exact slope */
  return SW_OK;
}

size_t sw_pwl_locate(const sw_pwl *m, double x)
{
  size_t lo = 0, hi = m->nseg; /* answer in [lo, hi) ; x[hi] is the right end */
  if (m->nseg <= 8) {
    size_t k = 0;
    while (k + 1 < m->nseg && x >= m->x[k + 1]) k++;
    return k;
  }
  while (hi - lo > 1) {
    size_t mid = lo + (hi - lo) / 2;
    if (x >= m->x[mid]) lo = mid; else hi = mid;
  }
  return lo;
}

double sw_pwl_line(const sw_pwl *m, size_t k, double x)
{
  if (x == m->x[k + 1]) return m->yb[k];
  return m->ya[k] + m->slope[k] * (x - m->x[k]);
}

static int outside(const sw_pwl *m, double x, double *y, sw_err *err)
{
  int left = x < m->x[0];
  if (m->extend == SW_EXTEND_ERROR)
    return sw_err_set(err, SW_ERANGE,
                      "x = %g is outside the model's knots [%g, %g] (extend = \"error\")", x,
                      m->x[0], m->x[m->nseg]);
  if (m->extend == SW_EXTEND_HOLD) *y = left ? m->ya[0] : m->yb[m->nseg - 1];
  else *y = left ? sw_pwl_line(m, 0, x) : sw_pwl_line(m, m->nseg - 1, x);
  return SW_OK;
}

int sw_pwl_eval(const sw_pwl *m, double x, double *y, sw_err *err)
{
  if (isnan(x)) return sw_err_set(err, SW_EINVAL, "x is NaN");
  if (x < m->x[0] || x > m->x[m->nseg]) return outside(m, x, y, err);
  *y = sw_pwl_line(m, sw_pwl_locate(m, x), x);
  return SW_OK;
}

int sw_pwl_slope_at(const sw_pwl *m, double x, double *s, sw_err *err)
{
  if (isnan(x)) return sw_err_set(err, SW_EINVAL, "x is NaN");
  if (x < m->x[0] || x > m->x[m->nseg]) {
    if (m->extend == SW_EXTEND_ERROR)
      return sw_err_set(err, SW_ERANGE,
                        "x = %g is outside the model's knots [%g, %g] (extend = \"error\")", x,
                        m->x[0], m->x[m->nseg]);
    if (m->extend == SW_EXTEND_HOLD) { *s = 0; return SW_OK; }
  }
  *s = m->slope[sw_pwl_locate(m, x)];
  return SW_OK;
}

void sw_pwl_thevenin(const sw_pwl *m, size_t k, double *e, double *r)
{
  *r = m->slope[k];
  *e = m->ya[k] - m->slope[k] * m->x[k];
}

int sw_pwl_norton(const sw_pwl *m, size_t k, double *j, double *g, sw_err *err)
{
  double e, r;
  sw_pwl_thevenin(m, k, &e, &r);
  if (r == 0)
    return sw_err_set(err, SW_EINVAL, "segment %zu is flat (slope 0): it has no Norton form",
                      k + 1);
  *g = 1.0 / r;
  *j = -e / r;
  return SW_OK;
}

int sw_pwl_inverse(const sw_pwl *m, sw_pwl *out, sw_err *err)
{
  size_t k, n = m->nseg;
  int dir = m->slope[0] > 0 ? 1 : -1, st;
  if (!m->continuous) return sw_err_set(err, SW_EINVAL, "only a continuous model has an inverse");
  for (k = 0; k < n; k++)
    if (!((dir > 0 && m->slope[k] > 0) || (dir < 0 && m->slope[k] < 0)))
      return sw_err_set(err, SW_EINVAL,
                        "model is not strictly monotone: segment %zu has slope %g%s", k + 1,
                        m->slope[k], k ? " against the earlier segments" : "");
  if ((st = sw_pwl_alloc(out, n, err))) return st;
  for (k = 0; k < n; k++) {
    size_t s = dir > 0 ? k : n - 1 - k; /* decreasing models reverse order */
    out->x[k] = dir > 0 ? m->ya[s] : m->yb[s];
    out->ya[k] = dir > 0 ? m->x[s] : m->x[s + 1];
    out->yb[k] = dir > 0 ? m->x[s + 1] : m->x[s];
  }
  out->x[n] = dir > 0 ? m->yb[n - 1] : m->ya[0];
  out->extend = m->extend;
  if ((st = sw_pwl_finish(out, err))) sw_pwl_free(out);
  return st;
}

int sw_pwl_canonical(const sw_pwl *m, double *a, double *b, double *c, double *beta, sw_err *err)
{
  size_t k, n = m->nseg;
  double y0;
  if (!m->continuous)
    return sw_err_set(err, SW_EINVAL, "the canonical form needs a continuous model");
  *b = 0.5 * (m->slope[0] + m->slope[n - 1]);
  y0 = sw_pwl_line(m, sw_pwl_locate(m, 0.0), 0.0); /* the line extension's value at x = 0 */
  *a = y0;
  for (k = 1; k < n; k++) {
    c[k - 1] = 0.5 * (m->slope[k] - m->slope[k - 1]);
    beta[k - 1] = m->x[k];
    *a -= c[k - 1] * fabs(beta[k - 1]);
  }
  return SW_OK;
}
