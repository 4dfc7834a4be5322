/* Least-squares fits.  Continuous models are linear in the knot ordinates
 * (hat-function basis): the normal equations are tridiagonal, solved by
 * GSL; equality constraints (through points, end slopes, monotone ties)
 * turn them into a dense KKT system solved by LU.  Discontinuous models are
 * one weighted line per segment.  Free knots: Bellman's dynamic programming
 * over candidate knots (discontinuous) and coordinate-wise golden-section
 * search on the knots (variable projection, continuous). */
#include "fit/fit_lsq.h"
#include "fit/fit_data.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>

#define DENSE_LIMIT 3000
#define DP_CANDIDATES 600
#define SEARCH_SAMPLES 4000

static double weight(const fit_data *d, size_t i)
{
  return d->s[i] > 0 ? d->w[i] / (d->s[i] * d->s[i]) : 0;
}

/* Segment of sample x for knots K (the last segment takes the end). */
static size_t seg_of(const double *K, size_t n, double x)
{
  size_t lo = 0, hi = n;
  while (hi - lo > 1) {
    size_t mid = (lo + hi) / 2;
    if (x >= K[mid]) lo = mid; else hi = mid;
  }
  return lo;
}

typedef struct eqrow {
  size_t j;           /* first ordinate */
  double cj, cj1, g;  /* cj*c[j] + cj1*c[j+1] = g */
} eqrow;

static int solve_dense(const double *D, const double *E, const double *r, size_t nc,
                       const eqrow *rows, size_t m, double *c, sw_err *err)
{
  size_t N = nc + m, i;
  gsl_matrix *A = NULL;
  gsl_vector *b = NULL, *xv = NULL;
  gsl_permutation *P = NULL;
  int sg, st = SW_OK, gs;
  double cmax = 0;
  if (N > DENSE_LIMIT)
    return sw_err_set(err, SW_EINVAL, "constrained least squares with %zu unknowns is not "
                      "supported yet (limit %d)", N, DENSE_LIMIT);
  A = gsl_matrix_calloc(N, N);
  b = gsl_vector_calloc(N);
  xv = gsl_vector_alloc(N);
  P = gsl_permutation_alloc(N);
  if (!A || !b || !xv || !P) {
    st = sw_err_set(err, SW_ENOMEM, "out of memory for the KKT system");
    goto done;
  }
  for (i = 0; i < nc; i++) {
    gsl_matrix_set(A, i, i, D[i]);
    if (i + 1 < nc) {
      gsl_matrix_set(A, i, i + 1, E[i]);
      gsl_matrix_set(A, i + 1, i, E[i]);
    }
    gsl_vector_set(b, i, r[i]);
  }
  for (i = 0; i < m; i++) {
    size_t row = nc + i, j = rows[i].j;
    gsl_matrix_set(A, row, j, rows[i].cj);
    gsl_matrix_set(A, j, row, rows[i].cj);
    if (j + 1 < nc) {
      gsl_matrix_set(A, row, j + 1, rows[i].cj1);
      gsl_matrix_set(A, j + 1, row, rows[i].cj1);
    }
    gsl_vector_set(b, row, rows[i].g);
  }
  gs = gsl_linalg_LU_decomp(A, P, &sg);
  if (gs == GSL_SUCCESS) gs = gsl_linalg_LU_solve(A, P, b, xv);
  if (gs != GSL_SUCCESS) {
    st =
        sw_err_set(err, SW_ENOSOL, "the constraints cannot be met together (%s)", gsl_strerror(gs));
    goto done;
  }
  for (i = 0; i < nc; i++) {
    c[i] = gsl_vector_get(xv, i);
    if (!sw_isfinite(c[i])) {
      st = sw_err_set(err, SW_ENOSOL, "the constraints cannot be met together (singular system)");
      goto done;
    }
  }
  /* a dependent or contradictory set leaves LU a meaningless answer: recheck */
  for (i = 0; i < nc; i++)
    if (fabs(c[i]) > cmax) cmax = fabs(c[i]);
  for (i = 0; i < m; i++) {
    size_t j = rows[i].j;
    double v = rows[i].cj * c[j] + (j + 1 < nc ? rows[i].cj1 * c[j + 1] : 0);
    if (fabs(v - rows[i].g) > 1e-8 * (fabs(rows[i].g) + cmax) + 1e-300) {
      st = sw_err_set(err, SW_ENOSOL, "the constraints (through points, slopes, monotone) cannot "
                      "be met together");
      goto done;
    }
  }
done:
  gsl_matrix_free(A);
  gsl_vector_free(b);
  gsl_vector_free(xv);
  gsl_permutation_free(P);
  return st;
}

/* Continuous least squares on knots K[0..n]: ordinates c[0..n]. */
static int lsq_cont(const fit_data *d, const double *K, size_t n, const fit_cons *cons,
                    const double *tx, const double *ty, size_t nt, double *c, sw_err *err)
{
  size_t nc = n + 1, i, m = 0, cap = nt + 2 + n, loops;
  double *D = sw_alloc(nc, sizeof *D, err), *E = sw_alloc(nc, sizeof *E, err);
  double *r = sw_alloc(nc, sizeof *r, err), *dd = sw_alloc(nc, sizeof *dd, err);
  eqrow *rows = sw_alloc(cap, sizeof *rows, err);
  int st = SW_OK;
  if (!D || !E || !r || !dd || !rows) { st = SW_ENOMEM; goto done; }
  for (i = 0; i < d->n; i++) {
    double W = weight(d, i), t;
    size_t j;
    if (W <= 0) continue;
    j = seg_of(K, n, d->x[i]);
    t = (d->x[i] - K[j]) / (K[j + 1] - K[j]);
    D[j] += W * (1 - t) * (1 - t);
    D[j + 1] += W * t * t;
    E[j] += W * t * (1 - t);
    r[j] += W * (1 - t) * d->y[i];
    r[j + 1] += W * t * d->y[i];
  }
  for (i = 0; i < nt; i++) {
    size_t j = seg_of(K, n, tx[i]);
    double t = (tx[i] - K[j]) / (K[j + 1] - K[j]);
    rows[m++] = (eqrow){j, 1 - t, t, ty[i]};
  }
  if (cons && cons->has_first) rows[m++] = (eqrow){0, -1, 1, cons->slope_first * (K[1] - K[0])};
  if (cons && cons->has_last)
    rows[m++] = (eqrow){n - 1, -1, 1, cons->slope_last * (K[n] - K[n - 1])};
  for (loops = 0; loops <= n; loops++) {
    size_t j, added = 0;
    if (m == 0) {
      int gs;
      memcpy(dd, D, nc * sizeof *dd);
      for (i = 0; i < nc; i++)
        if (!(dd[i] > 0)) {
          st = sw_err_set(err, SW_EINVAL, "knot %zu (x = %g) has no samples near it; use fewer "
                          "segments or other knots", i + 1, K[i]);
          goto done;
        }
      {
        gsl_vector_view vd = gsl_vector_view_array(dd, nc), ve = gsl_vector_view_array(E, nc - 1);
        gsl_vector_view vr = gsl_vector_view_array(r, nc), vc = gsl_vector_view_array(c, nc);
        gs = gsl_linalg_solve_symm_tridiag(&vd.vector, &ve.vector, &vr.vector, &vc.vector);
      }
      if (gs != GSL_SUCCESS) {
        st = sw_err_set(err, SW_ENUMERIC, "least-squares system is singular (%s); use fewer "
                        "segments or other knots", gsl_strerror(gs));
        goto done;
      }
      for (i = 0; i < nc; i++)
        if (!sw_isfinite(c[i])) {
          st = sw_err_set(err, SW_ENUMERIC, "least-squares system is singular; use fewer "
                          "segments or other knots");
          goto done;
        }
    } else if ((st = solve_dense(D, E, r, nc, rows, m, c, err))) {
      goto done;
    }
    if (!cons || cons->dir == 0) break;
    /* monotone: tie the ordinates of every segment that turned the wrong way */
    for (j = 0; j < n && m < cap; j++)
      if ((c[j + 1] - c[j]) * cons->dir < -1e-12 * (fabs(c[j]) + fabs(c[j + 1]))) {
        rows[m++] = (eqrow){j, -1, 1, 0};
        added++;
      }
    if (!added) break;
  }
done:
  free(D); free(E); free(r); free(dd); free(rows);
  return st;
}

static double model_sse(const fit_data *d, const sw_pwl *m)
{
  size_t i;
  double s = 0;
  for (i = 0; i < d->n; i++) {
    double W = weight(d, i), v;
    if (W <= 0) continue;
    sw_pwl_eval(m, d->x[i], &v, NULL);
    s += W * (v - d->y[i]) * (v - d->y[i]);
  }
  return s;
}

/* Discontinuous: one weighted line per segment, honouring one through
 * point per segment and the end slopes. */
static int lsq_disc(const fit_data *d, const double *K, size_t n, const fit_cons *cons,
                    const double *tx, const double *ty, size_t nt, sw_pwl *out, sw_err *err)
{
  size_t j, i;
  for (j = 0; j < n; j++) {
    double xc = 0.5 * (K[j] + K[j + 1]), S = 0, Sx = 0, Sy = 0, Sxx = 0, Sxy = 0;
    double alpha, beta = 0, xt = 0, yt = 0;
    int fixed_slope = 0, has_t = 0;
    size_t a = fit_lower(d, K[j]), b = (j + 1 == n) ? d->n : fit_lower(d, K[j + 1]);
    for (i = 0; i < nt; i++)
      if (seg_of(K, n, tx[i]) == j) {
        if (has_t)
          return sw_err_set(err, SW_EINVAL, "at most one through point per segment with "
                            "continuous = false (segment %zu has more)", j + 1);
        has_t = 1;
        xt = tx[i];
        yt = ty[i];
      }
    if (cons && cons->has_first && j == 0) { fixed_slope = 1; beta = cons->slope_first; }
    if (cons && cons->has_last && j == n - 1) {
      if (fixed_slope && beta != cons->slope_last)
        return sw_err_set(err, SW_ENOSOL, "slope_first and slope_last differ on a single segment");
      fixed_slope = 1;
      beta = cons->slope_last;
    }
    for (i = a; i < b; i++) {
      double W = weight(d, i), X = d->x[i] - xc;
      if (W <= 0) continue;
      S += W; Sx += W * X; Sy += W * d->y[i];
    }
    if (!(S > 0))
      return sw_err_set(err, SW_EINVAL, "segment %zu [%g, %g] holds no samples", j + 1, K[j],
                        K[j + 1]);
    {
      double mx = Sx / S, my = Sy / S;
      double px = has_t ? xt - xc : mx, py = has_t ? yt : my;  /* pivot of the line */
      for (i = a; i < b; i++) {
        double W = weight(d, i), X = d->x[i] - xc - px, Y = d->y[i] - py;
        if (W <= 0) continue;
        Sxx += W * X * X;
        Sxy += W * X * Y;
      }
      if (!fixed_slope) {
        if (!(Sxx > 0))
          return sw_err_set(err, SW_EINVAL, "segment %zu [%g, %g] needs two samples at different x",
                            j + 1, K[j], K[j + 1]);
        beta = Sxy / Sxx;
      }
      if (has_t || !fixed_slope) alpha = py - beta * px;
      else alpha = my - beta * mx;
    }
    out->ya[j] = alpha + beta * (K[j] - xc);
    out->yb[j] = alpha + beta * (K[j + 1] - xc);
  }
  return SW_OK;
}

int fit_lsq_fixed(const fit_data *d, const double *knots, size_t nseg, int continuous,
                  const fit_cons *cons, const double *tx, const double *ty, size_t nt,
                  sw_pwl *out, double *sse, sw_err *err)
{
  size_t j;
  int st = sw_pwl_alloc(out, nseg, err);
  if (st) return st;
  for (j = 0; j <= nseg; j++) out->x[j] = knots[j];
  if (continuous) {
    double *c = sw_alloc(nseg + 1, sizeof *c, err);
    if (!c) { st = SW_ENOMEM; goto done; }
    st = lsq_cont(d, knots, nseg, cons, tx, ty, nt, c, err);
    for (j = 0; !st && j < nseg; j++) {
      out->ya[j] = c[j];
      out->yb[j] = c[j + 1];
    }
    free(c);
  } else {
    st = lsq_disc(d, knots, nseg, cons, tx, ty, nt, out, err);
  }
  if (!st) st = sw_pwl_finish(out, err);
  if (!st && sse) *sse = model_sse(d, out);
done:
  if (st) sw_pwl_free(out);
  return st;
}

/* ---- Free knots ---------------------------------------------------------- */

typedef struct sums { double S, Sx, Sy, Sxx, Sxy, Syy, cnt; } sums;

static double seg_cost(const sums *P, size_t a, size_t b)
{
  double S = P[b].S - P[a].S, Sx, Sy, cxx, cxy, cyy;
  if (P[b].cnt - P[a].cnt < 2 || !(S > 0)) return INFINITY;
  Sx = P[b].Sx - P[a].Sx;
  Sy = P[b].Sy - P[a].Sy;
  cxx = (P[b].Sxx - P[a].Sxx) - Sx * Sx / S;
  cxy = (P[b].Sxy - P[a].Sxy) - Sx * Sy / S;
  cyy = (P[b].Syy - P[a].Syy) - Sy * Sy / S;
  if (cxx > 0) cyy -= cxy * cxy / cxx;
  return cyy > 0 ? cyy : 0;
}

/* Bellman's segmented regression over candidate knots (sample abscissae). */
static int dp_knots(const fit_data *d, double lo, double hi, size_t nseg, double *knots,
                    size_t *iters, sw_err *err)
{
  size_t nd = 0, i, M, a, b, kk, *arg = NULL, *dist = NULL;
  double *cand = NULL, *F = NULL, xm = 0.5 * (lo + hi), xs = 0.5 * (hi - lo), ym = 0, ys = 0;
  sums *P = NULL;
  int st = SW_OK;
  dist = sw_alloc(d->n, sizeof *dist, err);
  if (!dist) return SW_ENOMEM;
  for (i = 0; i < d->n; i++)
    if (nd == 0 || d->x[i] > d->x[dist[nd - 1]]) dist[nd++] = i;
  M = nd - 1 < DP_CANDIDATES ? nd - 1 : DP_CANDIDATES;
  if (M < nseg) {
    st = sw_err_set(err, SW_EINVAL, "too few samples for %zu segments", nseg);
    goto done;
  }
  cand = sw_alloc(M + 1, sizeof *cand, err);
  P = sw_alloc(M + 1, sizeof *P, err);
  F = sw_alloc((nseg + 1) * (M + 1), sizeof *F, err);
  arg = sw_alloc((nseg + 1) * (M + 1), sizeof *arg, err);
  if (!cand || !P || !F || !arg) { st = SW_ENOMEM; goto done; }
  for (i = 0; i <= M; i++)
    cand[i] = d->x[dist[(size_t)((double)i * (double)(nd - 1) / (double)M + 0.5)]];
  cand[0] = lo;
  cand[M] = hi;
  for (i = 0; i < d->n; i++) {
    if (fabs(d->y[i]) > ys) ys = fabs(d->y[i]);
    ym += d->y[i];
  }
  ym /= (double)d->n;
  if (!(ys > 0)) ys = 1;
  /* prefix sums of the samples below each candidate (centred, scaled) */
  {
    sums acc = {0, 0, 0, 0, 0, 0, 0};
    size_t c = 1;
    P[0] = acc;
    for (i = 0; i < d->n; i++) {
      double W = weight(d, i), X = (d->x[i] - xm) / xs, Y = (d->y[i] - ym) / ys;
      while (c < M && d->x[i] >= cand[c]) P[c++] = acc;
      if (W <= 0) continue;
      acc.S += W; acc.Sx += W * X; acc.Sy += W * Y;
      acc.Sxx += W * X * X; acc.Sxy += W * X * Y; acc.Syy += W * Y * Y; acc.cnt += 1;
    }
    while (c <= M) P[c++] = acc;
  }
  for (b = 0; b <= M; b++) F[b] = b == 0 ? 0 : INFINITY;
  for (kk = 1; kk <= nseg; kk++) {
    double *Fp = F + (kk - 1) * (M + 1), *Fk = F + kk * (M + 1);
    for (b = 0; b <= M; b++) {
      Fk[b] = INFINITY;
      arg[kk * (M + 1) + b] = 0;
      for (a = kk - 1; a < b; a++) {
        double v;
        if (Fp[a] == INFINITY) continue;
        v = Fp[a] + seg_cost(P, a, b);
        if (v < Fk[b]) { Fk[b] = v; arg[kk * (M + 1) + b] = a; }
      }
    }
  }
  (*iters)++;
  if (F[nseg * (M + 1) + M] == INFINITY) {
    st = sw_err_set(err, SW_EINVAL, "too few samples for %zu segments with two samples each", nseg);
    goto done;
  }
  b = M;
  for (kk = nseg; kk > 0; kk--) {
    knots[kk] = cand[b];
    b = arg[kk * (M + 1) + b];
  }
  knots[0] = lo;
done:
  free(dist); free(cand); free(P); free(F); free(arg);
  return st;
}

/* Weighted SSE of the continuous fit on knots K into *sse: a knot set the
 * system cannot take (singular, empty knot) costs INFINITY, so the search
 * moves away from it; out of memory is passed up, never absorbed. */
static int cont_sse(const fit_data *d, const double *K, size_t n, double *c, double *sse,
                    sw_err *err)
{
  sw_err e;
  size_t i;
  double s = 0;
  int st = lsq_cont(d, K, n, NULL, NULL, NULL, 0, c, &e);
  if (st == SW_ENOMEM) return sw_err_set(err, SW_ENOMEM, "%s", e.msg);
  if (st) { *sse = INFINITY; return SW_OK; }
  for (i = 0; i < d->n; i++) {
    double W = weight(d, i), t, v;
    size_t j;
    if (W <= 0) continue;
    j = seg_of(K, n, d->x[i]);
    t = (d->x[i] - K[j]) / (K[j + 1] - K[j]);
    v = (1 - t) * c[j] + t * c[j + 1] - d->y[i];
    s += W * v * v;
  }
  *sse = s;
  return SW_OK;
}

/* Every stride-th sample of d into sub, weights scaled to match. */
static int thin_samples(const fit_data *d, size_t stride, fit_data *sub, sw_err *err)
{
  size_t i, m = 0, cap = d->n / stride + 2;
  sub->x = sw_alloc(cap, sizeof(double), err);
  sub->y = sw_alloc(cap, sizeof(double), err);
  sub->s = sw_alloc(cap, sizeof(double), err);
  sub->w = sw_alloc(cap, sizeof(double), err);
  if (!sub->x || !sub->y || !sub->s || !sub->w) { fit_data_free(sub); return SW_ENOMEM; }
  for (i = 0; i < d->n; i += stride, m++) {
    sub->x[m] = d->x[i];
    sub->y[m] = d->y[i];
    sub->s[m] = d->s[i];
    sub->w[m] = d->w[i] * (double)stride;
  }
  sub->n = m;
  return SW_OK;
}

/* Golden-section search of interior knot j between its neighbours (K2 and
 * c are scratch); knots[j] and *best move when the error drops. */
static int golden_knot(const fit_data *d, double *knots, size_t nseg, size_t j, double *c,
                       double *K2, double *best, sw_err *err)
{
  const double g = 0.6180339887498949;
  double a = knots[j - 1], b = knots[j + 1], w = b - a, x1, x2, f1, f2, cur;
  size_t it;
  int st;
  a += 1e-6 * w;
  b -= 1e-6 * w;
  memcpy(K2, knots, (nseg + 1) * sizeof *K2);
  x1 = b - g * (b - a);
  x2 = a + g * (b - a);
  K2[j] = x1;
  if ((st = cont_sse(d, K2, nseg, c, &f1, err))) return st;
  K2[j] = x2;
  if ((st = cont_sse(d, K2, nseg, c, &f2, err))) return st;
  for (it = 0; it < 24; it++) {
    if (f1 <= f2) {
      b = x2; x2 = x1; f2 = f1;
      x1 = b - g * (b - a);
      K2[j] = x1;
      st = cont_sse(d, K2, nseg, c, &f1, err);
    } else {
      a = x1; x1 = x2; f1 = f2;
      x2 = a + g * (b - a);
      K2[j] = x2;
      st = cont_sse(d, K2, nseg, c, &f2, err);
    }
    if (st) return st;
  }
  cur = f1 <= f2 ? f1 : f2;
  if (cur < *best) { *best = cur; knots[j] = f1 <= f2 ? x1 : x2; }
  return SW_OK;
}

int fit_lsq_optimal(const fit_data *d, double lo, double hi, size_t nseg, int continuous,
                    const double *start, double *knots, size_t *iters, sw_err *err)
{
  double *c, *K2, best;
  size_t j, sweep;
  fit_data sub;
  size_t stride;
  int st = dp_knots(d, lo, hi, nseg, knots, iters, err);
  if (st || !continuous || nseg < 2) return st;
  c = sw_alloc(nseg + 1, sizeof *c, err);
  K2 = sw_alloc(nseg + 1, sizeof *K2, err);
  memset(&sub, 0, sizeof sub);
  if (!c || !K2) { free(c); free(K2); return SW_ENOMEM; }
  /* the knot search runs on every stride-th sample (weights scaled), the
   * final fit on all of them */
  stride = d->n / SEARCH_SAMPLES + 1;
  if (stride > 1) {
    if ((st = thin_samples(d, stride, &sub, err))) goto done;
    d = &sub;
  }
  if ((st = cont_sse(d, knots, nseg, c, &best, err))) goto done;
  if (start) {
    double s2;
    if ((st = cont_sse(d, start, nseg, c, &s2, err))) goto done;
    if (s2 < best) { best = s2; memcpy(knots, start, (nseg + 1) * sizeof *knots); }
  }
  /* coordinate-wise golden section on each interior knot */
  for (sweep = 0; sweep < 4; sweep++) {
    double before = best;
    for (j = 1; j < nseg; j++) {
      if ((st = golden_knot(d, knots, nseg, j, c, K2, &best, err))) goto done;
      *iters += 1;
    }
    if (!(best < before * (1 - 1e-9))) break;
  }
done:
  free(c);
  free(K2);
  fit_data_free(&sub);
  return st;
}
