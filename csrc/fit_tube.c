/* Minimax fits as tube problems.  For an error level e every sample i gives
 * a band y[i] +- e*s[i]; the lines a + s*(x - x0) that stay inside the bands
 * of a run of samples form a convex polygon in the (a, s) plane, cut down
 * one half-plane at a time (O'Rourke's on-line line fitting).  On top of
 * that one primitive:
 *   - fewest segments within e: greedy farthest reach, segments sharing
 *     their end samples (optimal for discontinuous models; for continuous
 *     models the reachable start interval is carried over each knot);
 *   - fixed knots: the feasible start intervals are propagated knot to knot,
 *     which decides feasibility exactly; bisection on e gives the minimax;
 *   - a given segment count: bisection on e over the fewest-segments count.
 * Knots always sit on samples; callers insert them first. */
#include "fit.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

typedef struct poly {
  size_t n;
  double *a, *s;
} poly;

typedef struct tube_ws {
  size_t cap;
  poly P, T, U;
} tube_ws;

/* Recorded segment of a greedy or chained pass: samples p..q and the
 * polygon of feasible (a, s) at its end (copied into a pool). */
typedef struct seg_rec {
  size_t p, q, off, pn;
} seg_rec;

typedef struct rec_list {
  size_t n, cap;
  seg_rec *r;
  size_t pool_n, pool_cap;
  double *pa, *ps;
} rec_list;

#define BISECT_STEPS 64

static int ws_init(tube_ws *w, size_t n, sw_err *err)
{
  memset(w, 0, sizeof *w);
  w->cap = 2 * n + 16;
  w->P.a = sw_alloc(w->cap, sizeof(double), err);
  w->P.s = sw_alloc(w->cap, sizeof(double), err);
  w->T.a = sw_alloc(w->cap, sizeof(double), err);
  w->T.s = sw_alloc(w->cap, sizeof(double), err);
  w->U.a = sw_alloc(w->cap, sizeof(double), err);
  w->U.s = sw_alloc(w->cap, sizeof(double), err);
  if (!w->P.a || !w->P.s || !w->T.a || !w->T.s || !w->U.a || !w->U.s) return SW_ENOMEM;
  return SW_OK;
}

static void ws_free(tube_ws *w)
{
  free(w->P.a); free(w->P.s);
  free(w->T.a); free(w->T.s);
  free(w->U.a); free(w->U.s);
  memset(w, 0, sizeof *w);
}

static void recs_free(rec_list *r)
{
  free(r->r);
  free(r->pa);
  free(r->ps);
  memset(r, 0, sizeof *r);
}

static int recs_push(rec_list *r, size_t p, size_t q, const poly *P, sw_err *err)
{
  size_t i;
  if (r->n == r->cap) {
    size_t nc = r->cap ? 2 * r->cap : 16;
    seg_rec *nr = sw_realloc(r->r, nc, sizeof *nr, err);
    if (!nr) return SW_ENOMEM;
    r->r = nr;
    r->cap = nc;
  }
  if (r->pool_n + P->n > r->pool_cap) {
    size_t nc = 2 * (r->pool_cap + P->n) + 64;
    double *na = sw_realloc(r->pa, nc, sizeof *na, err), *ns;
    if (!na) return SW_ENOMEM;
    r->pa = na;
    ns = sw_realloc(r->ps, nc, sizeof *ns, err);
    if (!ns) return SW_ENOMEM;
    r->ps = ns;
    r->pool_cap = nc;
  }
  r->r[r->n].p = p;
  r->r[r->n].q = q;
  r->r[r->n].off = r->pool_n;
  r->r[r->n].pn = P->n;
  for (i = 0; i < P->n; i++) {
    r->pa[r->pool_n + i] = P->a[i];
    r->ps[r->pool_n + i] = P->s[i];
  }
  r->pool_n += P->n;
  r->n++;
  return SW_OK;
}

/* Keeps the part of convex polygon q where al*a + be*s <= ga (Sutherland and
 * Hodgman for one edge), with a relative slack for rounding. */
static void clip(const poly *q, double al, double be, double ga, poly *r)
{
  size_t i;
  r->n = 0;
  for (i = 0; i < q->n; i++) {
    size_t j = (i + 1) % q->n;
    double ac = q->a[i], sc = q->s[i], an = q->a[j], sn = q->s[j];
    double fc = al * ac + be * sc - ga, fn = al * an + be * sn - ga;
    int ic = fc <= 1e-12 * (fabs(al * ac) + fabs(be * sc) + fabs(ga));
    int in = fn <= 1e-12 * (fabs(al * an) + fabs(be * sn) + fabs(ga));
    if (ic) {
      r->a[r->n] = ac;
      r->s[r->n] = sc;
      r->n++;
    }
    if (ic != in && q->n > 1) {
      double t = (fc != fn) ? fc / (fc - fn) : 0;
      if (t < 0) t = 0;
      if (t > 1) t = 1;
      r->a[r->n] = ac + t * (an - ac);
      r->s[r->n] = sc + t * (sn - sc);
      r->n++;
    }
  }
}

/* Clips ws->P in place (through T); returns 0 when the result is empty
 * (P unchanged then). */
static int clip_keep(tube_ws *w, double al, double be, double ga)
{
  poly t;
  clip(&w->P, al, be, ga, &w->T);
  if (w->T.n == 0) return 0;
  t = w->P;
  w->P = w->T;
  w->T = t;
  return 1;
}

static void value_range(const poly *P, double D, double *lo, double *hi)
{
  size_t i;
  *lo = INFINITY;
  *hi = -INFINITY;
  for (i = 0; i < P->n; i++) {
    double v = P->a[i] + P->s[i] * D;
    if (v < *lo) *lo = v;
    if (v > *hi) *hi = v;
  }
}

/* Lines a + s*(x - x[p]) with a in [alo, ahi] and s in [smin, smax] through
 * the bands of samples p..qmax.  Returns the last index q all of p..q fit,
 * with ws->P their polygon; *ok = 0 when even the samples at x[p] do not. */
static size_t tube_run(const fit_data *d, double e, size_t p, size_t qmax,
                       double alo, double ahi, double smin, double smax,
                       tube_ws *w, int *ok)
{
  double X0 = d->x[p], l, u, D;
  size_t i = p, last;
  *ok = 0;
  while (i <= qmax && d->x[i] == X0) {
    l = d->y[i] - e * d->s[i];
    u = d->y[i] + e * d->s[i];
    if (l > alo) alo = l;
    if (u < ahi) ahi = u;
    i++;
  }
  if (alo > ahi) {
    if (alo - ahi > 1e-12 * (fabs(alo) + fabs(ahi))) return p;
    alo = ahi = 0.5 * (alo + ahi);
  }
  *ok = 1;
  last = i - 1;
  w->P.n = 2;
  w->P.a[0] = alo; w->P.s[0] = 0;
  w->P.a[1] = ahi; w->P.s[1] = 0;
  if (i > qmax) return last;
  D = d->x[i] - X0;
  l = d->y[i] - e * d->s[i];
  u = d->y[i] + e * d->s[i];
  w->P.n = 4;
  w->P.a[0] = alo; w->P.s[0] = (l - alo) / D;
  w->P.a[1] = ahi; w->P.s[1] = (l - ahi) / D;
  w->P.a[2] = ahi; w->P.s[2] = (u - ahi) / D;
  w->P.a[3] = alo; w->P.s[3] = (u - alo) / D;
  if (sw_isfinite(smin) && !clip_keep(w, 0, -1, -smin)) return last;
  if (sw_isfinite(smax) && !clip_keep(w, 0, 1, smax)) return last;
  last = i;
  for (i = i + 1; i <= qmax; i++) {
    D = d->x[i] - X0;
    l = d->y[i] - e * d->s[i];
    u = d->y[i] + e * d->s[i];
    clip(&w->P, 1, D, u, &w->T);
    if (w->T.n == 0) break;
    clip(&w->T, -1, -D, -l, &w->U);
    if (w->U.n == 0) break;
    { poly t = w->P; w->P = w->U; w->U = t; }
    last = i;
  }
  return last;
}

static void slope_bounds(const fit_cons *k, int first, int lastseg, double *smin, double *smax)
{
  *smin = -INFINITY;
  *smax = INFINITY;
  if (k && k->dir > 0) *smin = 0;
  if (k && k->dir < 0) *smax = 0;
  if (k && first && k->has_first) *smin = *smax = k->slope_first;
  if (k && lastseg && k->has_last) {
    if (first && k->has_first && k->slope_first != k->slope_last) { *smin = 1; *smax = 0; return; }
    *smin = *smax = k->slope_last;
  }
}

static void centroid(const double *a, const double *s, size_t n, double *ac, double *sc)
{
  size_t i;
  *ac = *sc = 0;
  for (i = 0; i < n; i++) { *ac += a[i]; *sc += s[i]; }
  *ac /= (double)n;
  *sc /= (double)n;
}

/* Point of the recorded polygon on the line a + s*h = target: the middle of
 * the chord it cuts; the nearest vertex when rounding lost the chord. */
static double start_on_line(const rec_list *R, const seg_rec *g, double h, double target)
{
  const double *a = R->pa + g->off, *s = R->ps + g->off;
  size_t i, n = g->pn, best = 0;
  double amin = INFINITY, amax = -INFINITY, bd = INFINITY;
  for (i = 0; i < n; i++) {
    size_t j = (i + 1) % n;
    double fi = a[i] + s[i] * h - target, fj = a[j] + s[j] * h - target;
    if (fabs(fi) < bd) { bd = fabs(fi); best = i; }
    if (fi == 0) {
      if (a[i] < amin) amin = a[i];
      if (a[i] > amax) amax = a[i];
    } else if ((fi < 0) != (fj < 0) && fj != 0) {
      double t = fi / (fi - fj), av = a[i] + t * (a[j] - a[i]);
      if (av < amin) amin = av;
      if (av > amax) amax = av;
    }
  }
  if (amin <= amax) return 0.5 * (amin + amax);
  return a[best];
}

/* Model from recorded segments: centroid lines (discontinuous) or a
 * back-substitution that keeps the knots shared (continuous). */
static int build_model(const fit_data *d, const rec_list *R, int continuous, sw_pwl *out, sw_err *err)
{
  size_t m = R->n, j;
  int st = sw_pwl_alloc(out, m, err);
  if (st) return st;
  for (j = 0; j < m; j++) out->x[j] = d->x[R->r[j].p];
  out->x[m] = d->x[R->r[m - 1].q];
  if (!continuous) {
    for (j = 0; j < m; j++) {
      const seg_rec *g = &R->r[j];
      double ac, sc, h = out->x[j + 1] - out->x[j];
      centroid(R->pa + g->off, R->ps + g->off, g->pn, &ac, &sc);
      out->ya[j] = ac;
      out->yb[j] = ac + sc * h;
    }
  } else {
    double ac, sc, target;
    const seg_rec *g = &R->r[m - 1];
    centroid(R->pa + g->off, R->ps + g->off, g->pn, &ac, &sc);
    out->ya[m - 1] = ac;
    out->yb[m - 1] = ac + sc * (out->x[m] - out->x[m - 1]);
    target = ac;
    for (j = m - 1; j-- > 0;) {
      double h = out->x[j + 1] - out->x[j];
      double a = start_on_line(R, &R->r[j], h, target);
      out->ya[j] = a;
      out->yb[j] = target;
      target = a;
    }
  }
  st = sw_pwl_finish(out, err);
  if (st) sw_pwl_free(out);
  return st;
}

/* Greedy farthest reach at level e.  Returns the segment count (stopping
 * once above maxseg), or SIZE_MAX when the bands cannot be met at all. */
static size_t greedy(const fit_data *d, double e, int continuous, const fit_cons *k,
                     size_t maxseg, tube_ws *w, rec_list *R, int *st, sw_err *err)
{
  size_t p = 0, q, m = 0;
  double alo = -INFINITY, ahi = INFINITY;
  *st = SW_OK;
  if (R) { R->n = 0; R->pool_n = 0; }
  for (;;) {
    double smin, smax;
    int ok;
    slope_bounds(k, m == 0, 0, &smin, &smax);
    q = tube_run(d, e, p, d->n - 1, alo, ahi, smin, smax, w, &ok);
    if (!ok || !(d->x[q] > d->x[p])) return SIZE_MAX;
    m++;
    if (R && (*st = recs_push(R, p, q, &w->P, err))) return SIZE_MAX;
    if (q == d->n - 1) return m;
    if (m >= maxseg) return m + 1;
    if (continuous) value_range(&w->P, d->x[q] - d->x[p], &alo, &ahi);
    p = fit_lower(d, d->x[q]);
  }
}

/* Deviation bound: a constant line at the weighted centre is within it. */
static double start_level(const fit_data *d)
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

/* Reversed copy (x -> -x) so a last-segment slope becomes a first one. */
static int reverse_data(const fit_data *d, fit_data *r, sw_err *err)
{
  size_t i, n = d->n;
  memset(r, 0, sizeof *r);
  r->x = sw_alloc(n, sizeof(double), err);
  r->y = sw_alloc(n, sizeof(double), err);
  r->s = sw_alloc(n, sizeof(double), err);
  r->w = sw_alloc(n, sizeof(double), err);
  if (!r->x || !r->y || !r->s || !r->w) { fit_data_free(r); return SW_ENOMEM; }
  r->n = n;
  r->analytic = d->analytic;
  for (i = 0; i < n; i++) {
    r->x[i] = -d->x[n - 1 - i];
    r->y[i] = d->y[n - 1 - i];
    r->s[i] = d->s[n - 1 - i];
    r->w[i] = d->w[n - 1 - i];
  }
  return SW_OK;
}

static int unreverse_model(sw_pwl *m, sw_err *err)
{
  sw_pwl r;
  size_t j, n = m->nseg;
  int st;
  memset(&r, 0, sizeof r);
  if ((st = sw_pwl_alloc(&r, n, err))) return st;
  for (j = 0; j <= n; j++) r.x[j] = -m->x[n - j];
  for (j = 0; j < n; j++) {
    r.ya[j] = m->yb[n - 1 - j];
    r.yb[j] = m->ya[n - 1 - j];
  }
  if ((st = sw_pwl_finish(&r, err))) { sw_pwl_free(&r); return st; }
  sw_pwl_free(m);
  *m = r;
  return SW_OK;
}

/* Greedy paths handle a last-segment slope by running on reversed data. */
static int need_reverse(const fit_cons *k, sw_err *err, int *rev)
{
  *rev = 0;
  if (!k || !k->has_last) return SW_OK;
  if (k->has_first)
    return sw_err_set(err, SW_EINVAL, "slope_first and slope_last together are not supported yet "
                      "with knots = 'optimal' or tol; give explicit knots");
  *rev = 1;
  return SW_OK;
}

static void reversed_cons(const fit_cons *k, fit_cons *r)
{
  *r = *k;
  r->has_first = 1;
  r->slope_first = -k->slope_last;
  r->has_last = 0;
  r->dir = -k->dir;
}

static int tol_direct(const fit_data *d, double e, int continuous, const fit_cons *k,
                      sw_pwl *out, sw_err *err)
{
  tube_ws w;
  rec_list R;
  size_t m;
  int st;
  memset(&R, 0, sizeof R);
  if ((st = ws_init(&w, d->n, err))) { ws_free(&w); return st; }
  m = greedy(d, e, continuous, k, SIZE_MAX, &w, &R, &st, err);
  if (!st && m == SIZE_MAX)
    st = sw_err_set(err, SW_ENOSOL, "no model meets the tolerance %g under the constraints "
                    "(through points, slopes, monotone) at the data", e);
  if (!st) st = build_model(d, &R, continuous, out, err);
  recs_free(&R);
  ws_free(&w);
  return st;
}

int fit_minimax_tol(const fit_data *d, double e, int continuous, const fit_cons *k,
                    sw_pwl *out, sw_err *err)
{
  int rev, st;
  fit_data r;
  fit_cons kr;
  if ((st = need_reverse(k, err, &rev))) return st;
  if (!rev) return tol_direct(d, e, continuous, k, out, err);
  if ((st = reverse_data(d, &r, err))) return st;
  reversed_cons(k, &kr);
  st = tol_direct(&r, e, continuous, &kr, out, err);
  fit_data_free(&r);
  if (!st && (st = unreverse_model(out, err))) sw_pwl_free(out);
  return st;
}

/* Smallest e whose greedy count is at most nseg, by bisection; the knots of
 * that greedy pass (split to exactly nseg) in knots[0..nseg]. */
static int count_knots(const fit_data *d, size_t nseg, int continuous, const fit_cons *k,
                       double *knots, size_t *iters, sw_err *err)
{
  tube_ws w;
  rec_list R;
  double elo = 0, ehi = start_level(d);
  size_t m, it, j, *idx = NULL;
  int st, tries;
  memset(&R, 0, sizeof R);
  if ((st = ws_init(&w, d->n, err))) goto done;
  for (tries = 0; tries < 200; tries++) {
    m = greedy(d, ehi, continuous, k, nseg, &w, NULL, &st, err);
    if (st) goto done;
    if (m <= nseg) break;
    elo = ehi;
    ehi *= 2;
  }
  if (tries == 200) {
    st = sw_err_set(err, SW_ENOSOL, "the constraints (through points, slopes, monotone) cannot "
                    "be met with %zu segments", nseg);
    goto done;
  }
  for (it = 0; it < BISECT_STEPS && ehi - elo > 1e-13 * ehi; it++) {
    double mid = 0.5 * (elo + ehi);
    m = greedy(d, mid, continuous, k, nseg, &w, NULL, &st, err);
    if (st) goto done;
    if (m <= nseg) ehi = mid; else elo = mid;
  }
  *iters += it;
  m = greedy(d, ehi, continuous, k, nseg, &w, &R, &st, err);
  if (st) goto done;
  /* split the segment with most samples at its middle sample until nseg */
  idx = sw_alloc(nseg + 1, sizeof *idx, err);
  if (!idx) { st = SW_ENOMEM; goto done; }
  for (j = 0; j < R.n; j++) idx[j] = R.r[j].p;
  idx[R.n] = R.r[R.n - 1].q;
  m = R.n;
  while (m < nseg) {
    size_t best = m, span = 0, mid;
    for (j = 0; j < m; j++)
      if (idx[j + 1] - idx[j] > span) { span = idx[j + 1] - idx[j]; best = j; }
    mid = idx[best] + span / 2;
    if (span < 2 || !(d->x[mid] > d->x[idx[best]]) || !(d->x[mid] < d->x[idx[best + 1]])) {
      st = sw_err_set(err, SW_EINVAL, "too few samples for %zu segments", nseg);
      goto done;
    }
    memmove(idx + best + 2, idx + best + 1, (m - best) * sizeof *idx);
    idx[best + 1] = mid;
    m++;
  }
  for (j = 0; j <= nseg; j++) knots[j] = d->x[idx[j]];
done:
  free(idx);
  recs_free(&R);
  ws_free(&w);
  return st;
}

int fit_minimax_count(const fit_data *d, size_t nseg, int continuous, const fit_cons *k,
                      sw_pwl *out, double *e_out, size_t *iters, sw_err *err)
{
  double *knots = sw_alloc(nseg + 1, sizeof(double), err);
  int st, rev;
  if (!knots) return SW_ENOMEM;
  if ((st = need_reverse(k, err, &rev))) goto done;
  if (rev) {
    fit_data r;
    fit_cons kr;
    size_t j;
    if ((st = reverse_data(d, &r, err))) goto done;
    reversed_cons(k, &kr);
    st = count_knots(&r, nseg, continuous, &kr, knots, iters, err);
    fit_data_free(&r);
    if (st) goto done;
    for (j = 0; j <= nseg / 2; j++) {
      double t = -knots[j];
      knots[j] = -knots[nseg - j];
      knots[nseg - j] = t;
    }
  } else if ((st = count_knots(d, nseg, continuous, k, knots, iters, err))) {
    goto done;
  }
  st = fit_minimax_fixed(d, knots, nseg, continuous, k, out, e_out, iters, err);
done:
  free(knots);
  return st;
}

/* Chained feasibility over fixed knots at level e; records polygons in R. */
static int chain(const fit_data *d, double e, const size_t *pi, const size_t *qi, size_t nseg,
                 const fit_cons *k, tube_ws *w, rec_list *R, int *feasible, sw_err *err)
{
  size_t j;
  double alo = -INFINITY, ahi = INFINITY;
  int st;
  *feasible = 0;
  if (R) { R->n = 0; R->pool_n = 0; }
  for (j = 0; j < nseg; j++) {
    double smin, smax;
    int ok;
    size_t q;
    slope_bounds(k, j == 0, j == nseg - 1, &smin, &smax);
    if (smin > smax) return SW_OK;
    q = tube_run(d, e, pi[j], qi[j], alo, ahi, smin, smax, w, &ok);
    if (!ok || q < qi[j]) return SW_OK;
    if (R && (st = recs_push(R, pi[j], qi[j], &w->P, err))) return st;
    value_range(&w->P, d->x[qi[j]] - d->x[pi[j]], &alo, &ahi);
  }
  *feasible = 1;
  return SW_OK;
}

/* Bisection on the level of one chain (all segments, or one of them). */
static int bisect_chain(const fit_data *d, const size_t *pi, const size_t *qi, size_t nseg,
                        const fit_cons *kp, tube_ws *w, rec_list *R,
                        double *e_out, size_t *iters, sw_err *err)
{
  double elo = 0, ehi = start_level(d);
  int feas, st, tries;
  size_t it;
  for (tries = 0; tries < 200; tries++) {
    if ((st = chain(d, ehi, pi, qi, nseg, kp, w, NULL, &feas, err))) return st;
    if (feas) break;
    elo = ehi;
    ehi *= 2;
  }
  if (tries == 200)
    return sw_err_set(err, SW_ENOSOL, "the constraints (through points, slopes, monotone) cannot "
                      "be met with these knots");
  for (it = 0; it < BISECT_STEPS && ehi - elo > 1e-14 * ehi; it++) {
    double mid = 0.5 * (elo + ehi);
    if ((st = chain(d, mid, pi, qi, nseg, kp, w, NULL, &feas, err))) return st;
    if (feas) ehi = mid; else elo = mid;
  }
  *iters += it;
  *e_out = ehi;
  return chain(d, ehi, pi, qi, nseg, kp, w, R, &feas, err);
}

int fit_minimax_fixed(const fit_data *d, const double *knots, size_t nseg, int continuous,
                      const fit_cons *k, sw_pwl *out, double *e_out, size_t *iters,
                      sw_err *err)
{
  size_t *pi = sw_alloc(nseg, sizeof *pi, err), *qi = sw_alloc(nseg, sizeof *qi, err), j;
  tube_ws w;
  rec_list R, one;
  int st = SW_OK;
  memset(&w, 0, sizeof w);
  memset(&R, 0, sizeof R);
  memset(&one, 0, sizeof one);
  if (!pi || !qi) { st = SW_ENOMEM; goto done; }
  for (j = 0; j < nseg; j++) {
    pi[j] = fit_lower(d, knots[j]);
    qi[j] = fit_upper(d, knots[j + 1]) - 1;
    if (pi[j] >= d->n || qi[j] >= d->n || !(d->x[qi[j]] > d->x[pi[j]])) {
      st = sw_err_set(err, SW_EINVAL, "segment %zu [%g, %g] holds too few samples", j + 1,
                      knots[j], knots[j + 1]);
      goto done;
    }
  }
  if ((st = ws_init(&w, d->n, err))) goto done;
  *e_out = 0;
  if (continuous) {
    if ((st = bisect_chain(d, pi, qi, nseg, k, &w, &R, e_out, iters, err))) goto done;
  } else {
    /* segments are independent: each gets its own smallest level */
    for (j = 0; j < nseg; j++) {
      double ej;
      fit_cons kk = k ? *k : (fit_cons){0, 0, 0, 0, 0};
      kk.has_first = k && k->has_first && j == 0;
      kk.has_last = k && k->has_last && j == nseg - 1;
      if ((st = bisect_chain(d, pi + j, qi + j, 1, &kk, &w, &one, &ej, iters, err))) goto done;
      if (ej > *e_out) *e_out = ej;
      if ((st = recs_push(&R, pi[j], qi[j], &(poly){one.r[0].pn, one.pa, one.ps}, err))) goto done;
    }
  }
  st = build_model(d, &R, continuous, out, err);
done:
  free(pi);
  free(qi);
  recs_free(&R);
  recs_free(&one);
  ws_free(&w);
  return st;
}

/* ---- Interpolation through the samples (chords between knots) ---------- */

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
  double elo = 0, ehi = start_level(d) * 2;
  size_t it, m, j, *idx = sw_alloc(nseg + 1, sizeof *idx, err);
  int st;
  if (!idx) return SW_ENOMEM;
  while (chord_greedy(d, ehi, nseg, NULL) > nseg) { elo = ehi; ehi *= 2; }
  for (it = 0; it < BISECT_STEPS && ehi - elo > 1e-13 * ehi; it++) {
    double mid = 0.5 * (elo + ehi);
    if (chord_greedy(d, mid, nseg, NULL) <= nseg) ehi = mid; else elo = mid;
  }
  *iters += it;
  m = chord_greedy(d, ehi, nseg, idx);
  while (m < nseg) { /* more knots than needed: split the widest run */
    size_t best = 0, span = 0, mid;
    for (j = 0; j < m; j++)
      if (idx[j + 1] - idx[j] > span) { span = idx[j + 1] - idx[j]; best = j; }
    if (span < 2) { free(idx); return sw_err_set(err, SW_EINVAL, "too few samples for %zu segments", nseg); }
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
