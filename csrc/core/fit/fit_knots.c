/* Breakpoint schemes: uniform, geometric, and curvature-equidistributed
 * knots (density |f''|^power: 1/2 for max error, 2/5 for least squares,
 * de Boor, A Practical Guide to Splines). */
#include "fit/fit_knots.h"
#include "fit/fit_data.h"
#include "fit/fit_lsq.h"

#include <math.h>
#include <stdlib.h>

#define CURV_CELLS 2000

int fit_knots_uniform(double lo, double hi, size_t nseg, double *k, sw_err *err)
{
  size_t i;
  (void)err;
  for (i = 0; i <= nseg; i++) k[i] = lo + (hi - lo) * (double)i / (double)nseg;
  k[nseg] = hi;
  return SW_OK;
}

/* Spacing grows by a constant ratio away from offset (the knots of
 * x - offset form a geometric sequence). */
int fit_knots_geometric(double lo, double hi, double offset, size_t nseg, double *k, sw_err *err)
{
  size_t i;
  double a = lo - offset, b = hi - offset;
  if (!(a > 0 && b > 0) && !(a < 0 && b < 0))
    return sw_err_set(err, SW_EINVAL,
                      "geometric knots need a range that does not contain the "
                      "offset %g (lo = %g, hi = %g); give offset outside the range",
                      offset, lo, hi);
  for (i = 0; i <= nseg; i++) k[i] = offset + a * pow(b / a, (double)i / (double)nseg);
  k[0] = lo;
  k[nseg] = hi;
  for (i = 1; i < nseg; i++)
    if (!(k[i] > k[i - 1]))
      return sw_err_set(err, SW_EINVAL,
                        "geometric knots collapse (too many segments for the range)");
  return SW_OK;
}

/* Tolerance scale of the sample nearest x (relative error weights). */
static double scale_at(const fit_data *d, double x)
{
  size_t i = fit_lower(d, x);
  if (i >= d->n) i = d->n - 1;
  return d->s[i] > 0 ? d->s[i] : 1;
}

/* |f''| on cells of a sampled curve, estimated robustly from the slope
 * changes of a coarse continuous least-squares fit. */
static int sampled_curvature(const fit_data *d, double lo, double hi, double *rho, size_t G,
                             sw_err *err)
{
  size_t nc = d->n / 8, i, j;
  double *K, h;
  sw_pwl m = {0};
  int st;
  if (nc < 2) nc = 2;
  if (nc > 64) nc = 64;
  K = sw_alloc(nc + 1, sizeof *K, err);
  if (!K) return SW_ENOMEM;
  fit_knots_uniform(lo, hi, nc, K, err);
  st = fit_lsq_fixed(d, K, nc, 1, NULL, NULL, NULL, 0, &m, NULL, err);
  free(K);
  if (st) return st;
  h = (hi - lo) / (double)nc;
  for (i = 0; i < G; i++) {
    double x = lo + (hi - lo) * ((double)i + 0.5) / (double)G, jump = 0;
    size_t c = (size_t)((x - lo) / h);
    if (c >= nc) c = nc - 1;
    /* average of the slope changes at the cell's two knots */
    for (j = c; j <= c + 1; j++)
      if (j >= 1 && j < nc) jump += 0.5 * fabs(m.slope[j] - m.slope[j - 1]);
    rho[i] = jump / h;
  }
  sw_pwl_free(&m);
  return SW_OK;
}

int fit_knots_curvature(const sw_curve *c, const fit_data *d, double lo, double hi,
                        size_t nseg, double power, double *k, sw_err *err)
{
  size_t G = CURV_CELLS, i, j;
  double *rho = sw_alloc(G, sizeof *rho, err), big = 0, mean = 0, total = 0,
         cell = (hi - lo) / (double)G;
  int st = SW_OK;
  if (!rho) return SW_ENOMEM;
  if (c->kind == SW_CURVE_SAMPLES) {
    if ((st = sampled_curvature(d, lo, hi, rho, G, err))) goto done;
  } else {
    for (i = 0; i < G; i++) {
      double x = lo + cell * ((double)i + 0.5), f2;
      if ((st = sw_curve_deriv2(c, x, &f2, err))) goto done;
      rho[i] = fabs(f2);
    }
  }
  for (i = 0; i < G; i++) {
    double x = lo + cell * ((double)i + 0.5);
    if (sw_isfinite(rho[i])) rho[i] = pow(rho[i] / scale_at(d, x), power);
    if (sw_isfinite(rho[i]) && rho[i] > big) big = rho[i];
  }
  for (i = 0; i < G; i++) {
    if (!sw_isfinite(rho[i])) rho[i] = big;
    mean += rho[i] / (double)G;
  }
  if (!(mean > 0)) { st = fit_knots_uniform(lo, hi, nseg, k, err); goto done; }
  for (i = 0; i < G; i++) {
    rho[i] += 1e-3 * mean; /* a small floor keeps straight stretches covered */
    total += rho[i];
  }
  /* equidistribute: knot j where the running integral reaches j/nseg */
  k[0] = lo;
  {
    double acc = 0;
    i = 0;
    for (j = 1; j < nseg; j++) {
      double level = total * (double)j / (double)nseg;
      while (i < G - 1 && acc + rho[i] < level) acc += rho[i++];
      k[j] = lo + cell * ((double)i + (level - acc) / rho[i]);
      if (k[j] <= k[j - 1]) k[j] = k[j - 1] + 1e-9 * (hi - lo);
    }
  }
  k[nseg] = hi;
done:
  free(rho);
  return st;
}
