/* Minimax fits as tube problems.  For an error level e every sample i gives
 * a band y[i] +- e*s[i]; the lines that stay inside the bands of a run of
 * samples form a convex polygon (fit_scan.c).  On top of that primitive:
 *   - fewest segments within e: greedy farthest reach, segments sharing
 *     their end samples (optimal for discontinuous models); continuous
 *     models carry the reachable start interval over each knot (optimal
 *     for convex or concave data) or use the reachable sets of fit_reach.c;
 *   - fixed knots: the feasible start intervals are propagated knot to knot,
 *     which decides feasibility exactly; bisection on e gives the minimax;
 *   - a given segment count: bisection on e over the fewest-segments count.
 * Knots always sit on samples; callers insert them first. */
#include "fit/fit_minimax.h"
#include "fit/fit_data.h"
#include "fit/fit_interp.h"
#include "fit/fit_reach.h"
#include "fit/fit_scan.h"

#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

typedef fit_poly poly;
typedef fit_tube tube_ws;

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

#ifndef GUESS_MIN            /* the C-level tests lower both to reach the paths */
#define GUESS_MIN 16384     /* sample sets this long get a subset pre-pass */
#define GUESS_SAMPLES 4096  /* about this many samples in that subset */
#endif

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
static int build_model(const fit_data *d, const rec_list *R, int continuous, sw_pwl *out,
                       sw_err *err)
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
static size_t greedy(const fit_data *d, double e, int continuous, const fit_cons *cons,
                     size_t maxseg, tube_ws *w, rec_list *R, int *st, sw_err *err)
{
  size_t p = 0, q, m = 0;
  double alo = -INFINITY, ahi = INFINITY;
  *st = SW_OK;
  if (R) { R->n = 0; R->pool_n = 0; }
  for (;;) {
    double smin, smax;
    int ok;
    fit_slope_bounds(cons, m == 0, 0, &smin, &smax);
    q = fit_tube_run(d, e, (fit_span){p, d->n - 1, alo, ahi, smin, smax},
                         w, NULL, &ok);
    if (!ok || !(d->x[q] > d->x[p])) return SIZE_MAX;
    m++;
    if (R && (*st = recs_push(R, p, q, &w->P, err))) return SIZE_MAX;
    if (q == d->n - 1) return m;
    if (m >= maxseg) return m + 1;
    if (continuous) value_range(&w->P, d->x[q] - d->x[p], &alo, &ahi);
    p = fit_lower(d, d->x[q]);
  }
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
static int need_reverse(const fit_cons *cons, sw_err *err, int *rev)
{
  *rev = 0;
  if (!cons || !cons->has_last) return SW_OK;
  if (cons->has_first)
    return sw_err_set(err, SW_EINVAL, "slope_first and slope_last together are not supported yet "
                      "with knots = 'optimal' or tol; give explicit knots");
  *rev = 1;
  return SW_OK;
}

static void reversed_cons(const fit_cons *cons, fit_cons *r)
{
  *r = *cons;
  r->has_first = 1;
  r->slope_first = -cons->slope_last;
  r->has_last = 0;
  r->dir = -cons->dir;
}

static int tol_direct(const fit_data *d, double e, int continuous, const fit_cons *cons,
                      sw_pwl *out, sw_err *err)
{
  tube_ws w;
  rec_list R;
  size_t m;
  int st;
  memset(&R, 0, sizeof R);
  if ((st = fit_tube_init(&w, d->n, err))) { fit_tube_clear(&w); return st; }
  m = greedy(d, e, continuous, cons, SIZE_MAX, &w, &R, &st, err);
  if (!st && m == SIZE_MAX)
    st = sw_err_set(err, SW_ENOSOL, "no model meets the tolerance %g under the constraints "
                    "(through points, slopes, monotone) at the data", e);
  if (!st) st = build_model(d, &R, continuous, out, err);
  recs_free(&R);
  fit_tube_clear(&w);
  return st;
}

/* 1 when the samples are convex or concave (second divided differences of
 * one sign) with no hard points: there the greedy farthest reach carrying
 * the start interval is the equal-error construction, optimal. */
static int convex_data(const fit_data *d)
{
  size_t i;
  int sign = 0;
  for (i = 0; i < d->n; i++)
    if (!(d->s[i] > 0)) return 0;
  for (i = 1; i + 1 < d->n; i++) {
    double h1 = d->x[i] - d->x[i - 1], h2 = d->x[i + 1] - d->x[i], dd;
    if (!(h1 > 0) || !(h2 > 0)) return 0;
    dd = (d->y[i + 1] - d->y[i]) / h2 - (d->y[i] - d->y[i - 1]) / h1;
    /* below the rounding of the values (close samples on a large curve)
     * a second difference says nothing about the sign */
    if (fabs(dd) <= 1e-12 * (fabs(d->y[i + 1] - d->y[i]) / h2 + fabs(d->y[i] - d->y[i - 1]) / h1) +
                    8 * DBL_EPSILON * (fabs(d->y[i - 1]) + 2 * fabs(d->y[i]) + fabs(d->y[i + 1])) *
                    (1 / h1 + 1 / h2))
      continue;
    if (sign == 0) sign = dd > 0 ? 1 : -1;
    else if ((dd > 0 ? 1 : -1) != sign) return 0;
  }
  return 1;
}

/* 1 when nothing but the bands binds the model: no through points (zero
 * scales), end slopes or monotone direction. */
static int unconstrained(const fit_data *d, const fit_cons *cons)
{
  size_t i;
  if (cons && (cons->has_first || cons->has_last || cons->dir)) return 0;
  for (i = 0; i < d->n; i++)
    if (!(d->s[i] > 0)) return 0;
  return 1;
}

/* Continuous models on data that is not convex: the discontinuous greedy
 * count is a lower bound (a continuous model with knots on samples is
 * also a model whose segments share their end samples, for which the
 * greedy is optimal) and the continuous greedy's count an upper one.  When
 * they agree, or the bound already exceeds maxseg, the count is settled
 * without the reachable-set search: returns 1 with *m (SIZE_MAX: no model
 * at all) and R (when given) holding the continuous greedy's segments. */
static int greedy_settles(const fit_data *d, double e, const fit_cons *cons, size_t maxseg,
                          tube_ws *w, rec_list *R, size_t *m, int *st, sw_err *err)
{
  size_t md, mg;
  *st = SW_OK;
  if (cons && cons->has_last) return 0;
  md = greedy(d, e, 0, cons, maxseg, w, NULL, st, err);
  if (*st) return 1;
  if (md == SIZE_MAX || md > maxseg) { *m = md; return 1; }
  mg = greedy(d, e, 1, cons, maxseg, w, R, st, err);
  if (*st) return 1;
  if (mg != md) return 0;
  *m = mg;
  return 1;
}

/* Knots of a continuous greedy pass at level e (end slope ignored), used as
 * extra candidates of the reachable-set search; *xs owned by the caller. */
static int greedy_candidates(const fit_data *d, double e, const fit_cons *cons, tube_ws *w,
                             double **xs, size_t *n, sw_err *err)
{
  rec_list R;
  fit_cons kk;
  size_t j, m;
  int st = SW_OK;
  memset(&R, 0, sizeof R);
  *xs = NULL;
  *n = 0;
  if (cons) { kk = *cons; kk.has_last = 0; }
  m = greedy(d, e, 1, cons ? &kk : NULL, d->n, w, &R, &st, err);
  if (!st && m != SIZE_MAX && R.n) {
    *xs = sw_alloc(R.n + 1, sizeof **xs, err);
    if (!*xs) st = SW_ENOMEM;
    else {
      for (j = 0; j < R.n; j++) (*xs)[j] = d->x[R.r[j].p];
      (*xs)[R.n] = d->x[R.r[R.n - 1].q];
      *n = R.n + 1;
    }
  }
  recs_free(&R);
  return st;
}

/* Subsets of the samples for the shortcuts below (x, y, s only). */
static int subset_alloc(fit_data *s, size_t cap, sw_err *err)
{
  memset(s, 0, sizeof *s);
  s->x = sw_alloc(cap, sizeof(double), err);
  s->y = sw_alloc(cap, sizeof(double), err);
  s->s = sw_alloc(cap, sizeof(double), err);
  return s->x && s->y && s->s ? SW_OK : SW_ENOMEM;
}

static void subset_take(fit_data *s, const fit_data *d, size_t i)
{
  s->x[s->n] = d->x[i];
  s->y[s->n] = d->y[i];
  s->s[s->n] = d->s[i];
  s->n++;
}

/* Reachable sets on a subset of the samples with the candidate knots of
 * the full search: any model the full data allow is allowed there too, so
 * a level the subset cannot meet within maxseg segments is refuted for the
 * full data, at a fraction of the cost. */
static int reach_refuted_on_subset(const fit_data *d, double e, const fit_cons *cons, size_t maxseg,
                                   const double *extra, size_t nextra, int *refuted, sw_err *err)
{
  fit_data s;
  double *cx = NULL;
  size_t nc, i, c = 0, step = d->n / GUESS_SAMPLES, m, cap;
  int st;
  *refuted = 0;
  memset(&s, 0, sizeof s);
  if ((st = fit_reach_candidates(d, extra, nextra, &cx, &nc, err))) return st;
  cap = d->n / step + nc * 4 + 2;
  if ((st = subset_alloc(&s, cap, err))) goto done;
  for (i = 0; i < d->n; i++) {
    int keep = i % step == 0 || i + 1 == d->n;
    while (c < nc && cx[c] < d->x[i]) c++;
    if (c < nc && cx[c] == d->x[i]) keep = 1; /* every sample at a candidate's x */
    if (!keep) continue;
    if (s.n == cap) goto done; /* x crowded at the candidates: no shortcut */
    subset_take(&s, d, i);
  }
  if ((st = fit_reach_among(&s, e, cons, maxseg, cx, nc, &m, err))) goto done;
  *refuted = m == SIZE_MAX || m > maxseg;
done:
  free(cx);
  free(s.x); free(s.y); free(s.s);
  return st;
}

static int reach_with_greedy(const fit_data *d, double e, const fit_cons *cons, size_t maxseg,
                             tube_ws *w, size_t *m, double *kx, double *ky, sw_err *err)
{
  double *xs;
  size_t nx;
  int st = greedy_candidates(d, e, cons, w, &xs, &nx, err), refuted = 0;
  if (!st && !kx && d->n >= GUESS_MIN) {
    st = reach_refuted_on_subset(d, e, cons, maxseg, xs, nx, &refuted, err);
    if (!st && refuted) *m = SIZE_MAX;
  }
  if (!st && !refuted) st = fit_reach(d, e, cons, maxseg, xs, nx, m, kx, ky, err);
  free(xs);
  return st;
}

/* Continuous model through knots kx with values ky. */
static int knots_model(const double *kx, const double *ky, size_t m, sw_pwl *out, sw_err *err)
{
  size_t j;
  int st = sw_pwl_alloc(out, m, err);
  if (st) return st;
  for (j = 0; j <= m; j++) out->x[j] = kx[j];
  for (j = 0; j < m; j++) {
    out->ya[j] = ky[j];
    out->yb[j] = ky[j + 1];
  }
  if ((st = sw_pwl_finish(out, err))) sw_pwl_free(out);
  return st;
}

int fit_minimax_tol(const fit_data *d, double e, int continuous, const fit_cons *cons,
                    sw_pwl *out, sw_err *err)
{
  int rev, st;
  fit_data r;
  fit_cons kr;
  if (continuous && (!convex_data(d) || (cons && cons->has_last))) {
    double *kx, *ky;
    size_t m = 0;
    tube_ws w;
    rec_list R;
    memset(&R, 0, sizeof R);
    if ((st = fit_tube_init(&w, d->n, err))) { fit_tube_clear(&w); return st; }
    if (greedy_settles(d, e, cons, d->n, &w, &R, &m, &st, err) && (st || m != SIZE_MAX)) {
      if (!st) st = build_model(d, &R, 1, out, err);
      recs_free(&R);
      fit_tube_clear(&w);
      return st;
    }
    recs_free(&R);
    kx = sw_alloc(d->n + 1, sizeof *kx, err);
    ky = sw_alloc(d->n + 1, sizeof *ky, err);
    st = (!kx || !ky) ? SW_ENOMEM : SW_OK;
    if (!st && m == SIZE_MAX)
      st = SW_OK; /* even the relaxation failed: straight to the fallbacks */
    else if (!st) st = reach_with_greedy(d, e, cons, d->n, &w, &m, kx, ky, err);
    fit_tube_clear(&w);
    if (!st && m != SIZE_MAX) st = knots_model(kx, ky, m, out, err);
    free(kx);
    free(ky);
    if (st || m != SIZE_MAX) return st;
    /* the reachable sets lost their way (rounding on bands far narrower
     * than the values, or more disjoint pieces than kept): the continuous
     * greedy, then (no constraints) chords between samples still meet e */
    if (!(cons && cons->has_last)) {
      st = tol_direct(d, e, 1, cons, out, err);
      if (st != SW_ENOSOL) return st;
    }
    if (!unconstrained(d, cons))
      return sw_err_set(err, SW_ENOSOL, "no continuous model meets the tolerance %g under the "
                        "constraints (through points, slopes, monotone) at the data", e);
    return fit_interp_tol(d, e, out, err);
  }
  if ((st = need_reverse(cons, err, &rev))) return st;
  if (!rev) return tol_direct(d, e, continuous, cons, out, err);
  if ((st = reverse_data(d, &r, err))) return st;
  reversed_cons(cons, &kr);
  st = tol_direct(&r, e, continuous, &kr, out, err);
  fit_data_free(&r);
  if (!st && (st = unreverse_model(out, err))) sw_pwl_free(out);
  return st;
}

/* One count search: the data, the count to meet, the model kind and its
 * constraints, whether counts come from reachable sets (decided once by
 * the caller: it scans the data), and the tube workspace every pass
 * shares. */
typedef struct count_task {
  const fit_data *d;
  size_t nseg;
  int continuous;
  const fit_cons *cons;
  int reach;
  tube_ws *w;
} count_task;

/* Levels around the smallest that meets the count: lo fails it; hi meets
 * it when known. */
typedef struct level_bracket {
  double lo, hi;
  int known;
} level_bracket;

/* The knots of the greedy pass just recorded in R, into kx. */
static void knots_of_recs(const fit_data *d, const rec_list *R, double *kx)
{
  size_t j;
  for (j = 0; j < R->n; j++) kx[j] = d->x[R->r[j].p];
  kx[R->n] = d->x[R->r[R->n - 1].q];
}

/* Segment count at level e (above nseg: nseg + 1 or more): greedy for
 * discontinuous models and convex data, reachable sets for other
 * continuous ones; knots into kx (and values into ky) when given. */
static int count_at(const count_task *t, double e, rec_list *R, double *kx, double *ky,
                    size_t *m, sw_err *err)
{
  const fit_data *d = t->d;
  size_t maxseg = t->nseg;
  int st = SW_OK;
  if (t->reach) {
    if (greedy_settles(d, e, t->cons, maxseg, t->w, kx ? R : NULL, m, &st, err)) {
      if (st) return st;
      if (*m == SIZE_MAX) *m = maxseg + 1;
      else if (kx && *m <= maxseg) knots_of_recs(d, R, kx);
      return SW_OK;
    }
    st = reach_with_greedy(d, e, t->cons, maxseg, t->w, m, kx, ky, err);
    if (*m == SIZE_MAX) *m = maxseg + 1;
    return st;
  }
  *m = greedy(d, e, t->continuous, t->cons, maxseg, t->w, kx ? R : NULL, &st, err);
  if (!st && kx && *m <= maxseg) knots_of_recs(d, R, kx);
  return st;
}

/* The greedy count at level e (the task's kind; never reachable sets). */
static int greedy_count(const count_task *t, double e, size_t *m, sw_err *err)
{
  int st = SW_OK;
  *m = greedy(t->d, e, t->continuous, t->cons, t->nseg, t->w, NULL, &st, err);
  return st;
}

/* Long sample sets: the level search first runs on every k-th sample
 * (GUESS_SAMPLES of them), and the full data then only bracket that guess:
 * a dozen passes over all samples instead of forty.  Every decision is
 * still taken on the full data, so the guess affects the time only. */

/* The smallest level whose greedy count is at most nseg, to relative
 * precision rtol, above the infeasible b->lo: unless b->hi is known to
 * meet the count it doubles until it does (at most 200 times, while
 * finite; else *found = 0).  *steps gets the bisection's step count. */
static int greedy_level(const count_task *t, double rtol, level_bracket *b, int *found,
                        size_t *steps, sw_err *err)
{
  size_t m, it;
  int st, tries;
  *found = 0;
  *steps = 0;
  for (tries = 0; !b->known && tries < 200 && sw_isfinite(b->hi); tries++) {
    if ((st = greedy_count(t, b->hi, &m, err))) return st;
    if (m <= t->nseg) b->known = 1;
    else { b->lo = b->hi; b->hi *= 2; }
  }
  if (!b->known) return SW_OK;
  for (it = 0; it < FIT_BISECT_STEPS && b->hi - b->lo > rtol * b->hi; it++) {
    double mid = fit_mid_level(b->lo, b->hi);
    if ((st = greedy_count(t, mid, &m, err))) return st;
    if (m <= t->nseg) b->hi = mid; else b->lo = mid;
  }
  *steps = it;
  *found = 1;
  return SW_OK;
}

/* A guess *g of the level (0: none) from every k-th sample. */
static int level_guess(const count_task *t, double rtol, double *g, sw_err *err)
{
  const fit_data *d = t->d;
  fit_data s;
  count_task sub = *t;
  level_bracket b = { 0, 0, 0 };
  size_t step, i, it;
  int st = SW_OK, found;
  *g = 0;
  if (d->n < GUESS_MIN) return SW_OK;
  step = d->n / GUESS_SAMPLES;
  if ((st = subset_alloc(&s, (d->n - 1) / step + 2, err))) goto done;
  for (i = 0; i < d->n; i += step) subset_take(&s, d, i);
  if (s.x[s.n - 1] < d->x[d->n - 1]) subset_take(&s, d, d->n - 1);
  b.hi = fit_start_level(&s);
  sub.d = &s;
  st = greedy_level(&sub, rtol, &b, &found, &it, err);
  if (!st && found) *g = b.hi; /* else no guess: the full search decides */
done:
  free(s.x); free(s.y); free(s.s);
  return st;
}

/* Brackets the smallest level whose greedy count is at most nseg around
 * the guess g, stepping away from it by 1e-3, 4e-3, ... of g; b->known = 1
 * when b->hi has been seen to meet the count (b->lo only ever rises). */
static int bracket_guess(const count_task *t, double g, level_bracket *b, sw_err *err)
{
  double step;
  size_t m;
  int st, i;
  b->known = 0;
  if ((st = greedy_count(t, g, &m, err))) return st;
  if (m <= t->nseg) {
    b->hi = g;
    b->known = 1;
    for (i = 0, step = 1e-3; i < 6; i++, step *= 4) {
      double p = g * (1 - step);
      if (!(p > b->lo)) break;
      if ((st = greedy_count(t, p, &m, err))) return st;
      if (m > t->nseg) { b->lo = p; break; }
      b->hi = p;
    }
    return SW_OK;
  }
  if (g > b->lo) b->lo = g;
  for (i = 0, step = 1e-3; i < 8; i++, step *= 4) {
    double p = g * (1 + step);
    if ((st = greedy_count(t, p, &m, err))) return st;
    if (m <= t->nseg) { b->hi = p; b->known = 1; return SW_OK; }
    b->lo = p;
  }
  if (b->hi <= b->lo) b->hi = 2 * b->lo; /* the doubling search goes on from here */
  return SW_OK;
}

/* The level of the greedy count: a guess from a subset, bracketed on the
 * full data, then bisected to rtol (the guess's own precision is rtol0). */
static int greedy_search(const count_task *t, double rtol0, double rtol, level_bracket *b,
                         int *found, size_t *steps, sw_err *err)
{
  double g;
  int st;
  if ((st = level_guess(t, rtol0, &g, err))) return st;
  if (g > 0 && (st = bracket_guess(t, g, b, err))) return st;
  return greedy_level(t, rtol, b, found, steps, err);
}

/* The level bracket of the continuous count by reachable sets, and *lower,
 * a level no model of nseg segments gets below.  Reachable sets cost more
 * than a greedy pass: bracket their optimum between the discontinuous
 * optimum (a continuous model is also a discontinuous one) and the
 * continuous greedy's level, then bisect coarsely; the fixed-knot minimax
 * that follows settles the level. */
static int reach_levels(const count_task *t, level_bracket *b, double *lower, int *found,
                        size_t *iters, sw_err *err)
{
  count_task disc = *t, cont = *t;
  level_bracket gb;
  double g;
  size_t m, it;
  int tries, st;
  disc.continuous = 0; disc.cons = NULL; disc.reach = 0;
  cont.continuous = 1; cont.reach = 0;
  gb.hi = b->hi; /* the start level, for the continuous greedy */
  if ((st = level_guess(&disc, 1e-5, &g, err))) return st;
  if (g > 0 && (st = bracket_guess(&disc, g, b, err))) return st;
  b->known = 1; /* without constraints the start level meets any count */
  if ((st = greedy_level(&disc, 1e-4, b, found, &it, err))) return st;
  *iters += it;
  b->hi = b->lo;
  *lower = b->lo; /* the discontinuous bound holds for every continuous model */
  gb.lo = b->lo;  /* and for the continuous greedy */
  gb.known = 0;
  if (!(t->cons && t->cons->has_last)) {
    if ((st = greedy_search(&cont, 1e-8, 1e-6, &gb, found, &it, err))) return st;
    if (*found) b->hi = gb.hi;
  }
  for (tries = 0; tries < 200; tries++) {
    if ((st = count_at(t, b->hi, NULL, NULL, NULL, &m, err))) return st;
    if (m <= t->nseg) break;
    b->lo = b->hi;
    b->hi *= 1.25;
  }
  /* the greedy level is usually within the bisection's precision of the
   * optimum: one probe just below it settles that case, where bisection
   * would spend a dozen reachable-set passes all finding no model */
  if (tries < 200 && b->hi * (1 - 0.9e-4) > b->lo) {
    double probe = b->hi * (1 - 0.9e-4); /* an infeasible probe ends the bisection */
    if ((st = count_at(t, probe, NULL, NULL, NULL, &m, err))) return st;
    if (m <= t->nseg) b->hi = probe; else b->lo = probe;
  }
  for (it = 0; tries < 200 && it < FIT_BISECT_STEPS && b->hi - b->lo > 1e-4 * b->hi; it++) {
    double mid = fit_mid_level(b->lo, b->hi);
    if ((st = count_at(t, mid, NULL, NULL, NULL, &m, err))) return st;
    if (m <= t->nseg) b->hi = mid; else b->lo = mid;
  }
  *iters += it;
  *found = tries < 200;
  return SW_OK;
}

/* Knots of m segments (kx[0..m]) split to exactly nseg: the segment with
 * most samples is split at its middle sample until the count is reached. */
static int split_to_count(const fit_data *d, const double *kx, size_t m, size_t nseg,
                          double *knots, sw_err *err)
{
  size_t j, *idx = sw_alloc(nseg + 1, sizeof *idx, err);
  if (!idx) return SW_ENOMEM;
  for (j = 0; j <= m; j++) idx[j] = j == 0 ? 0 : j == m ? d->n - 1 : fit_lower(d, kx[j]);
  while (m < nseg) {
    size_t best = m, span = 0, mid;
    for (j = 0; j < m; j++)
      if (idx[j + 1] - idx[j] > span) { span = idx[j + 1] - idx[j]; best = j; }
    mid = idx[best] + span / 2;
    if (span < 2 || !(d->x[mid] > d->x[idx[best]]) || !(d->x[mid] < d->x[idx[best + 1]])) {
      free(idx);
      return sw_err_set(err, SW_EINVAL, "too few samples for %zu segments", nseg);
    }
    memmove(idx + best + 2, idx + best + 1, (m - best) * sizeof *idx);
    idx[best + 1] = mid;
    m++;
  }
  for (j = 0; j <= nseg; j++) knots[j] = d->x[idx[j]];
  free(idx);
  return SW_OK;
}

/* Smallest e whose greedy count is at most nseg, by bisection; the knots of
 * that greedy pass (split to exactly nseg) in knots[0..nseg]. */
static int count_knots(const fit_data *d, size_t nseg, int continuous, const fit_cons *cons,
                       double *knots, double *e_lo, double *e_hi, size_t *iters, sw_err *err)
{
  tube_ws w;
  rec_list R;
  count_task t;
  level_bracket b = { 0, 0, 0 };
  double *kx = NULL, *ky = NULL, lower = 0;
  size_t m, it = 0;
  int st, found;
  memset(&R, 0, sizeof R);
  memset(&w, 0, sizeof w);
  b.hi = fit_start_level(d);
  kx = sw_alloc(d->n + 1, sizeof *kx, err);
  ky = sw_alloc(d->n + 1, sizeof *ky, err);
  if (!kx || !ky) { st = SW_ENOMEM; goto done; }
  if ((st = fit_tube_init(&w, d->n, err))) goto done;
  t.d = d; t.nseg = nseg; t.continuous = continuous; t.cons = cons; t.w = &w;
  t.reach = continuous && (!convex_data(d) || (cons && cons->has_last));
  if (t.reach) st = reach_levels(&t, &b, &lower, &found, iters, err);
  else if (!(st = greedy_search(&t, 1e-8, 1e-7, &b, &found, &it, err))) *iters += it;
  if (st) goto done;
  if (!found) {
    st = sw_err_set(err, SW_ENOSOL, "the constraints (through points, slopes, monotone) cannot "
                    "be met with %zu segments", nseg);
    goto done;
  }
  *e_lo = t.reach ? lower : b.lo; /* the greedy counts are exact: lo is infeasible for any knots */
  *e_hi = b.hi;
  if ((st = count_at(&t, b.hi, &R, kx, ky, &m, err))) goto done;
  if (m > nseg) {
    st = sw_err_set(err, SW_ENUMERIC, "segment count search did not settle");
    goto done;
  }
  st = split_to_count(d, kx, m, nseg, knots, err);
done:
  free(kx);
  free(ky);
  recs_free(&R);
  fit_tube_clear(&w);
  return st;
}

int fit_minimax_count(const fit_data *d, size_t nseg, int continuous, const fit_cons *cons,
                      sw_pwl *out, double *e_out, size_t *iters, sw_err *err)
{
  double *knots = sw_alloc(nseg + 1, sizeof(double), err), elo = 0, ehi = 0;
  int st, rev;
  if (!knots) return SW_ENOMEM;
  rev = 0;
  if (!continuous && (st = need_reverse(cons, err, &rev))) goto done;
  if (rev) {
    fit_data r;
    fit_cons kr;
    size_t j;
    if ((st = reverse_data(d, &r, err))) goto done;
    reversed_cons(cons, &kr);
    st = count_knots(&r, nseg, continuous, &kr, knots, &elo, &ehi, iters, err);
    fit_data_free(&r);
    if (st) goto done;
    for (j = 0; j <= nseg / 2; j++) {
      double t = -knots[j];
      knots[j] = -knots[nseg - j];
      knots[nseg - j] = t;
    }
  } else if ((st = count_knots(d, nseg, continuous, cons, knots, &elo, &ehi, iters, err))) {
    goto done;
  }
  /* the exact minimax on these knots lies between the count search's
   * bounds: a short bisection to full precision */
  {
    fit_level_search ls = {elo, ehi, 1e-11, 0};
    st = fit_minimax_fixed_from(d, knots, nseg, continuous, cons, &ls, out, e_out, iters, err);
  }
done:
  free(knots);
  return st;
}

/* A chain of segments over fixed knots: segment j spans samples pi[j] to
 * qi[j]; cons and the tube workspace w as for the whole fit. */
typedef struct chain_task {
  const fit_data *d;
  const size_t *pi, *qi;
  size_t nseg;
  const fit_cons *cons;
  tube_ws *w;
} chain_task;

/* Chained feasibility over fixed knots at level e; records polygons in R. */
static int chain(const chain_task *c, double e, rec_list *R, int *feasible, sw_err *err)
{
  const fit_data *d = c->d;
  const size_t *pi = c->pi, *qi = c->qi, nseg = c->nseg;
  const fit_cons *cons = c->cons;
  tube_ws *w = c->w;
  size_t j;
  double alo = -INFINITY, ahi = INFINITY;
  int st;
  *feasible = 0;
  if (R) { R->n = 0; R->pool_n = 0; }
  for (j = 0; j < nseg; j++) {
    double smin, smax;
    int ok;
    size_t q;
    fit_slope_bounds(cons, j == 0, j == nseg - 1, &smin, &smax);
    if (smin > smax) return SW_OK;
    q = fit_tube_run(d, e, (fit_span){pi[j], qi[j], alo, ahi, smin, smax},
                         w, NULL, &ok);
    if (!ok || q < qi[j]) return SW_OK;
    if (R && (st = recs_push(R, pi[j], qi[j], &w->P, err))) return st;
    value_range(&w->P, d->x[qi[j]] - d->x[pi[j]], &alo, &ahi);
  }
  *feasible = 1;
  return SW_OK;
}

/* Bisection on the level of one chain (all segments, or one of them) in
 * [ls->lo, ls->hi] (hi <= 0: from 0 and a level every constant line
 * meets); hi infeasible doubles it, or when capped gives *e_out = INFINITY. */
static int bisect_chain(const chain_task *c, rec_list *R, const fit_level_search *ls,
                        double *e_out, size_t *iters, sw_err *err)
{
  double elo = ls->hi > 0 ? ls->lo : 0, ehi = ls->hi > 0 ? ls->hi : fit_start_level(c->d);
  int feas, st, tries;
  size_t it;
  for (tries = 0; tries < 200; tries++) {
    if (!sw_isfinite(ehi)) /* values over their error scale beyond the double range */
      return sw_err_set(err, SW_ERANGE, "the error level overflows: the curve's values divided by "
                        "their error scale exceed the double range (raise rel_floor or rescale)");
    if ((st = chain(c, ehi, NULL, &feas, err))) return st;
    if (feas) break;
    if (ls->capped) { *e_out = INFINITY; return SW_OK; }
    elo = ehi;
    ehi *= 2;
  }
  if (tries == 200)
    return sw_err_set(err, SW_ENOSOL, "the constraints (through points, slopes, monotone) cannot "
                      "be met with these knots");
  for (it = 0; it < FIT_BISECT_STEPS && ehi - elo > ls->rtol * ehi; it++) {
    double mid = fit_mid_level(elo, ehi);
    if ((st = chain(c, mid, NULL, &feas, err))) return st;
    if (feas) ehi = mid; else elo = mid;
  }
  *iters += it;
  *e_out = ehi;
  return chain(c, ehi, R, &feas, err);
}

int fit_minimax_fixed(const fit_data *d, const double *knots, size_t nseg, int continuous,
                      const fit_cons *cons, sw_pwl *out, double *e_out, size_t *iters,
                      sw_err *err)
{
  fit_level_search ls = {0, 0, 1e-11, 0};
  return fit_minimax_fixed_from(d, knots, nseg, continuous, cons, &ls, out, e_out, iters, err);
}

int fit_minimax_fixed_from(const fit_data *d, const double *knots, size_t nseg, int continuous,
                           const fit_cons *cons, const fit_level_search *ls, sw_pwl *out,
                           double *e_out, size_t *iters, sw_err *err)
{
  size_t *pi = sw_alloc(nseg, sizeof *pi, err), *qi = sw_alloc(nseg, sizeof *qi, err), j;
  double e_lo = ls->lo, e_hi = ls->hi;
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
  if ((st = fit_tube_init(&w, d->n, err))) goto done;
  *e_out = 0;
  if (continuous) {
    chain_task c = {d, pi, qi, nseg, cons, &w};
    if ((st = bisect_chain(&c, &R, ls, e_out, iters, err))) goto done;
    if (*e_out == INFINITY) goto done; /* capped: nothing below e_hi */
  } else {
    /* segments are independent: each gets its own smallest level (not
     * below e_lo when a bracket is given: a segment already within e_lo
     * needs no bisection, which would only close in on e_lo) */
    for (j = 0; j < nseg; j++) {
      double ej;
      int feas = 0;
      fit_cons kk = cons ? *cons : (fit_cons){0, 0, 0, 0, 0};
      chain_task c = {d, pi + j, qi + j, 1, &kk, &w};
      kk.has_first = cons && cons->has_first && j == 0;
      kk.has_last = cons && cons->has_last && j == nseg - 1;
      if (e_lo > 0 && e_hi > 0 && (st = chain(&c, e_lo, &one, &feas, err))) goto done;
      if (feas) ej = e_lo;
      else if ((st = bisect_chain(&c, &one, ls, &ej, iters, err))) goto done;
      if (ej > *e_out) *e_out = ej;
      if (ej == INFINITY) goto done; /* capped: nothing below e_hi */
      if ((st = recs_push(&R, pi[j], qi[j], &(poly){one.r[0].pn, one.pa, one.ps}, err))) goto done;
    }
  }
  st = build_model(d, &R, continuous, out, err);
done:
  free(pi);
  free(qi);
  recs_free(&R);
  recs_free(&one);
  fit_tube_clear(&w);
  return st;
}

/* ---- Bounds that hold for every scheme ------------------------------------
 * A model of n segments within e on the samples splits them into at most
 * n disjoint runs (a knot between two samples, or on one), each within one
 * line's bands; the greedy farthest reach over disjoint runs makes the
 * fewest such runs.  So its count bounds every model's (continuous or not,
 * knots anywhere, any criterion), and its level for a count bounds every
 * model's error: cheap refusals for a tolerance fit under a cap.  (The
 * greedy above shares end samples: a bound only for knots on samples.) */

/* Disjoint runs of samples at level e, no constraints: their count, or
 * maxseg + 1 once above maxseg, or SIZE_MAX when samples at one x conflict. */
static size_t disjoint_runs(const fit_data *d, double e, size_t maxseg, tube_ws *w)
{
  size_t p = 0, q, m = 0;
  for (;;) {
    int ok;
    q = fit_tube_run(d, e, (fit_span){p, d->n - 1, -INFINITY, INFINITY, -INFINITY, INFINITY}, w,
                     NULL, &ok);
    if (!ok) return SIZE_MAX;
    m++;
    if (q + 1 >= d->n) return m;
    if (m >= maxseg) return m + 1;
    p = q + 1;
  }
}

int fit_minimax_lower(const fit_data *d, double e, size_t maxseg, size_t *m, sw_err *err)
{
  tube_ws w;
  int st;
  memset(&w, 0, sizeof w);
  *m = SIZE_MAX;
  if ((st = fit_tube_init(&w, d->n, err))) { fit_tube_clear(&w); return st; }
  *m = disjoint_runs(d, e, maxseg, &w);
  fit_tube_clear(&w);
  return SW_OK;
}

/* The level bracket [*lo, *hi] of the fewest disjoint runs reaching nseg,
 * to rtol: *lo refuted, *hi met (raised by doubling while it is not). */
static void floor_search(const fit_data *d, size_t nseg, double rtol, double *lo, double *hi,
                         tube_ws *w)
{
  size_t it;
  int tries;
  for (tries = 0; disjoint_runs(d, *hi, nseg, w) > nseg; tries++) {
    *lo = *hi;
    *hi *= 2;
    if (tries == 200 || !sw_isfinite(*hi)) return; /* samples at one x that conflict */
  }
  for (it = 0; it < FIT_BISECT_STEPS && *hi - *lo > rtol * *hi; it++) {
    double mid = fit_mid_level(*lo, *hi);
    if (disjoint_runs(d, mid, nseg, w) <= nseg) *hi = mid;
    else *lo = mid;
  }
}

/* Long sample sets search every k-th sample first (64 samples a run at
 * least, so the subset's level is close): a level refuted there is refuted
 * on all (a subset's runs are never more), so only a short bisection above
 * it runs on the full data. */
int fit_minimax_floor(const fit_data *d, size_t nseg, double rtol, double *e, sw_err *err)
{
  tube_ws w;
  double lo = 0, hi = fit_start_level(d);
  int st;
  memset(&w, 0, sizeof w);
  *e = 0;
  if ((st = fit_tube_init(&w, d->n, err))) goto done;
  if (d->n >= GUESS_MIN && d->n / 64 >= nseg * 2) {
    fit_data s;
    size_t i, want = GUESS_SAMPLES > 64 * nseg ? GUESS_SAMPLES : 64 * nseg;
    size_t step = d->n / want;
    if ((st = subset_alloc(&s, (d->n - 1) / step + 2, err))) {
      free(s.x); free(s.y); free(s.s);
      goto done;
    }
    for (i = 0; i < d->n; i += step) subset_take(&s, d, i);
    if (s.x[s.n - 1] < d->x[d->n - 1]) subset_take(&s, d, d->n - 1);
    floor_search(&s, nseg, rtol, &lo, &hi, &w);
    free(s.x); free(s.y); free(s.s);
    hi *= 1 + 8 * rtol;
  }
  floor_search(d, nseg, rtol, &lo, &hi, &w);
  *e = lo; /* a level the runs refuted: no model of nseg segments gets below it */
done:
  fit_tube_clear(&w);
  return st;
}
