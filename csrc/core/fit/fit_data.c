/* The sample set every fitting method shares: lookup, inserted points,
 * the error of a model on the samples, and the error levels the
 * bisections start from and step through. */
#include "fit/fit_data.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

void fit_data_free(fit_data *d)
{
  free(d->x); free(d->y); free(d->s); free(d->w);
  memset(d, 0, sizeof *d);
}

size_t fit_lower(const fit_data *d, double x)
{
  size_t lo = 0, hi = d->n;
  while (lo < hi) {
    size_t mid = (lo + hi) / 2;
    if (d->x[mid] < x) lo = mid + 1; else hi = mid;
  }
  return lo;
}

size_t fit_upper(const fit_data *d, double x)
{
  size_t lo = 0, hi = d->n;
  while (lo < hi) {
    size_t mid = (lo + hi) / 2;
    if (d->x[mid] <= x) lo = mid + 1; else hi = mid;
  }
  return lo;
}

double fit_scale_of(double y, int rel, double floor)
{
  if (!rel) return 1;
  return fabs(y) > floor ? fabs(y) : floor;
}

/* Merges sorted points (xs, ys, ss, ws) into d; points at an existing x are
 * added too when keep_dup, else skipped. */
int fit_data_merge(fit_data *d, const double *xs, const double *ys, const double *ss,
                   double wv, size_t m, int keep_dup, sw_err *err)
{
  size_t n = d->n + m, i = 0, j = 0, k = 0;
  fit_data r;
  memset(&r, 0, sizeof r);
  r.x = sw_alloc(n, sizeof(double), err);
  r.y = sw_alloc(n, sizeof(double), err);
  r.s = sw_alloc(n, sizeof(double), err);
  r.w = sw_alloc(n, sizeof(double), err);
  if (!r.x || !r.y || !r.s || !r.w) { fit_data_free(&r); return SW_ENOMEM; }
  while (i < d->n || j < m) {
    if (j >= m || (i < d->n && d->x[i] <= xs[j])) {
      if (j < m && d->x[i] == xs[j] && !keep_dup) { j++; continue; }
      r.x[k] = d->x[i]; r.y[k] = d->y[i]; r.s[k] = d->s[i]; r.w[k] = d->w[i];
      i++;
    } else {
      r.x[k] = xs[j]; r.y[k] = ys[j]; r.s[k] = ss[j]; r.w[k] = wv;
      j++;
    }
    k++;
  }
  r.n = k;
  r.analytic = d->analytic;
  fit_data_free(d);
  *d = r;
  return SW_OK;
}

int fit_data_insert(fit_data *d, const sw_curve *c, const double *xs, size_t m, int rel,
                    double rel_floor, sw_err *err)
{
  double *ys = sw_alloc(m, sizeof *ys, err), *ss = sw_alloc(m, sizeof *ss, err);
  size_t i;
  int st = SW_OK;
  if (!ys || !ss) { st = SW_ENOMEM; goto done; }
  for (i = 0; i < m; i++) {
    if ((st = sw_curve_eval(c, xs[i], &ys[i], err))) goto done;
    ss[i] = fit_scale_of(ys[i], rel, rel_floor);
  }
  st = fit_data_merge(d, xs, ys, ss, 0, m, 0, err);
done:
  free(ys);
  free(ss);
  return st;
}

double fit_data_maxerr(const fit_data *d, const sw_pwl *m)
{
  size_t i;
  double e = 0;
  for (i = 0; i < d->n; i++) {
    double v;
    if (!(d->s[i] > 0)) continue;
    sw_pwl_eval(m, d->x[i], &v, NULL);
    v = fabs(v - d->y[i]) / d->s[i];
    if (v > e) e = v;
  }
  return e;
}

double fit_mid_level(double elo, double ehi)
{
  if (elo <= 0) return ehi > 1e-300 ? ehi / 1024 : 0; /* 0: an exact fit ends the search */
  if (ehi > 4 * elo) return sqrt(elo) * sqrt(ehi);
  return 0.5 * (elo + ehi);
}

/* Deviation bound: a constant line at the centre is within it. */
double fit_start_level(const fit_data *d)
{
  size_t i;
  double ymin = INFINITY, ymax = -INFINITY, e = 0;
  for (i = 0; i < d->n; i++) {
    if (d->y[i] < ymin) ymin = d->y[i];
    if (d->y[i] > ymax) ymax = d->y[i];
  }
  for (i = 0; i < d->n; i++)
    if (d->s[i] > 0) {
      double v = fabs(d->y[i] - 0.5 * (ymin + ymax)) / d->s[i];
      if (v > e) e = v;
    }
  return e > 0 ? e : 1e-300;
}
