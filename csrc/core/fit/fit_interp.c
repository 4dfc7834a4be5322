/* Interpolation through the samples with the fewest chords for a level,
 * and the smallest level for a chord count (bisection). */
#include "fit/fit_interp.h"
#include "fit/fit_data.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

/* Greedy farthest chord at level e; knots (sample indices) into idx when
 * given.  Returns the count, stopping once above maxseg. */
static size_t chord_greedy(const fit_data *d, double e, size_t maxseg, size_t *idx)
{
  size_t p = 0, m = 0;
  if (idx) idx[0] = 0;
  while (p < d->n - 1) {
    double slo = -INFINITY, shi = INFINITY;
    size_t i, q = p + 1;
    for (i = p + 1; i < d->n; i++) {
      double D = d->x[i] - d->x[p], c = (d->y[i] - d->y[p]) / D;
      double tl, tu;
      if (c >= slo - 1e-12 * fabs(c) && c <= shi + 1e-12 * fabs(c)) q = i;
      tl = (d->y[i] - e * d->s[i] - d->y[p]) / D;
      tu = (d->y[i] + e * d->s[i] - d->y[p]) / D;
      if (tl > slo) slo = tl;
      if (tu < shi) shi = tu;
      if (slo > shi) break;
    }
    m++;
    if (idx && m <= maxseg) idx[m] = q;
    if (m > maxseg) return m;
    p = q;
  }
  return m;
}

static int chord_model(const fit_data *d, const size_t *idx, size_t m, sw_pwl *out, sw_err *err)
{
  size_t j;
  int st = sw_pwl_alloc(out, m, err);
  if (st) return st;
  for (j = 0; j <= m; j++) out->x[j] = d->x[idx[j]];
  for (j = 0; j < m; j++) {
    out->ya[j] = d->y[idx[j]];
    out->yb[j] = d->y[idx[j + 1]];
  }
  if ((st = sw_pwl_finish(out, err))) sw_pwl_free(out);
  return st;
}

int fit_interp_tol(const fit_data *d, double e, sw_pwl *out, sw_err *err)
{
  size_t m = chord_greedy(d, e, SIZE_MAX, NULL), *idx;
  int st;
  idx = sw_alloc(m + 1, sizeof *idx, err);
  if (!idx) return SW_ENOMEM;
  chord_greedy(d, e, m, idx);
  st = chord_model(d, idx, m, out, err);
  free(idx);
  return st;
}

int fit_interp_count(const fit_data *d, size_t nseg, sw_pwl *out, double *e_out,
                     size_t *iters, sw_err *err)
{
  double elo = 0, ehi = fit_start_level(d) * 2;
  size_t it, m, j, *idx = sw_alloc(nseg + 1, sizeof *idx, err);
  int st;
  if (!idx) return SW_ENOMEM;
  while (chord_greedy(d, ehi, nseg, NULL) > nseg) {
    elo = ehi;
    ehi *= 2;
    if (!sw_isfinite(ehi)) {
      free(idx);
      return sw_err_set(err, SW_ERANGE,
                        "no chord model with %zu segments at any finite error level", nseg);
    }
  }
  for (it = 0; it < FIT_BISECT_STEPS && ehi - elo > 1e-10 * ehi; it++) {
    double mid = fit_mid_level(elo, ehi);
    if (chord_greedy(d, mid, nseg, NULL) <= nseg) ehi = mid; else elo = mid;
  }
  *iters += it;
  m = chord_greedy(d, ehi, nseg, idx);
  while (m < nseg) { /* more knots than needed: split the widest run */
    size_t best = 0, span = 0, mid;
    for (j = 0; j < m; j++)
      if (idx[j + 1] - idx[j] > span) { span = idx[j + 1] - idx[j]; best = j; }
    if (span < 2) {
      free(idx);
      return sw_err_set(err, SW_EINVAL, "too few samples for %zu segments", nseg);
    }
    mid = idx[best] + span / 2;
    memmove(idx + best + 2, idx + best + 1, (m - best) * sizeof *idx);
    idx[best + 1] = mid;
    m++;
  }
  st = chord_model(d, idx, m, out, err);
  free(idx);
  if (!st) *e_out = fit_data_maxerr(d, out);
  return st;
}
