/* The feasible-line polygon of a run of samples (O'Rourke's on-line line
 * fitting): lines a + s*(x - x0) inside the bands y[i] +- e*s[i] form a
 * convex polygon in the (a, s) plane, kept as a ring of vertices and cut
 * one half-plane at a time.  fit_minimax.c and fit_reach.c build on it. */
#include "fit/fit_scan.h"
#include "fit/fit_data.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

typedef fit_poly poly;
typedef fit_ring ring;

int fit_tube_init(fit_tube *w, size_t n, sw_err *err)
{
  memset(w, 0, sizeof *w);
  w->cap = 2 * n + 16;
  w->P.a = sw_alloc(w->cap, sizeof(double), err);
  w->P.s = sw_alloc(w->cap, sizeof(double), err);
  w->R.a = sw_alloc(w->cap, sizeof(double), err);
  w->R.s = sw_alloc(w->cap, sizeof(double), err);
  w->R.nx = sw_alloc(w->cap, sizeof(size_t), err);
  w->R.pv = sw_alloc(w->cap, sizeof(size_t), err);
  w->R.freel = sw_alloc(w->cap, sizeof(size_t), err);
  w->R.dead = sw_alloc(w->cap, 1, err);
  if (!w->P.a || !w->P.s || !w->R.a || !w->R.s || !w->R.nx || !w->R.pv || !w->R.freel || !w->R.dead)
    return SW_ENOMEM;
  return SW_OK;
}

void fit_tube_clear(fit_tube *w)
{
  free(w->P.a); free(w->P.s);
  free(w->R.a); free(w->R.s); free(w->R.nx); free(w->R.pv); free(w->R.freel); free(w->R.dead);
  memset(w, 0, sizeof *w);
}

static size_t ring_node(ring *R, double a, double s)
{
  size_t i = R->nfree ? R->freel[--R->nfree] : R->used++;
  R->dead[i] = 0;
  R->a[i] = a;
  R->s[i] = s;
  return i;
}

static void ring_set(ring *R, const double *a, const double *s, size_t n)
{
  size_t k, first = 0, prev = 0;
  R->n = n;
  R->used = R->nfree = 0;
  for (k = 0; k < n; k++) {
    size_t i = ring_node(R, a[k], s[k]);
    if (k == 0) first = i;
    else { R->nx[prev] = i; R->pv[i] = prev; }
    prev = i;
  }
  R->nx[prev] = first;
  R->pv[first] = prev;
  R->head = first;
}

static void ring_export(const ring *R, poly *P)
{
  size_t k, i = R->head;
  for (k = 0; k < R->n; k++, i = R->nx[i]) {
    P->a[k] = R->a[i];
    P->s[k] = R->s[i];
  }
  P->n = R->n;
}

#define HV(R, i, al, be) ((al) * (R)->a[i] + (be) * (R)->s[i])

/* Vertex maximising al*a + be*s, climbing from i (the ring is convex, so
 * the climb ends at the maximum). */
static size_t ring_climb(const ring *R, size_t i, double al, double be)
{
  double fi = HV(R, i, al, be);
  size_t k;
  for (k = 0; k < 2 * R->n + 2; k++) {
    double fn = HV(R, R->nx[i], al, be), fp = HV(R, R->pv[i], al, be);
    if (fn > fi) { i = R->nx[i]; fi = fn; }
    else if (fp > fi) { i = R->pv[i]; fi = fp; }
    else break;
  }
  return i;
}

static int outside(const ring *R, size_t i, double al, double be, double ga)
{
  double f = HV(R, i, al, be) - ga;
  return f > 1e-12 * (fabs(al * R->a[i]) + fabs(be * R->s[i]) + fabs(ga));
}

/* Cuts away al*a + be*s > ga, given the maximising vertex top.  Returns 0
 * (ring unchanged) when nothing would remain; *keep gets a live vertex. */
static int ring_cut(ring *R, size_t top, double al, double be, double ga, size_t *keep)
{
  size_t j, k, v0, v1, pin, pout, A, B, cnt = 1;
  double fa, fb, t;
  *keep = top;
  if (!outside(R, top, al, be, ga)) return 1;
  for (j = R->nx[top]; outside(R, j, al, be, ga); j = R->nx[j]) {
    if (j == top) return 0;
    cnt++;
  }
  if (j == top) return 0;
  pout = j;
  v1 = R->pv[j];
  for (k = R->pv[top]; outside(R, k, al, be, ga); k = R->pv[k]) cnt++;
  pin = k;
  v0 = R->nx[k];
  if (cnt > R->n) return 0;
  /* A on edge pin -> v0, B on edge v1 -> pout */
  fa = HV(R, pin, al, be) - ga;
  fb = HV(R, v0, al, be) - ga;
  t = fa != fb ? fa / (fa - fb) : 0;
  if (t < 0) t = 0; else if (t > 1) t = 1;
  {
    double aA = R->a[pin] + t * (R->a[v0] - R->a[pin]), sA = R->s[pin] + t * (R->s[v0] - R->s[pin]);
    double aB, sB;
    fa = HV(R, v1, al, be) - ga;
    fb = HV(R, pout, al, be) - ga;
    t = fa != fb ? fa / (fa - fb) : 0;
    if (t < 0) t = 0; else if (t > 1) t = 1;
    aB = R->a[v1] + t * (R->a[pout] - R->a[v1]);
    sB = R->s[v1] + t * (R->s[pout] - R->s[v1]);
    /* free the chain v0..v1 */
    for (j = v0;; j = R->nx[j]) {
      R->freel[R->nfree++] = j;
      R->dead[j] = 1;
      if (j == v1) break;
    }
    A = ring_node(R, aA, sA);
    B = ring_node(R, aB, sB);
  }
  R->nx[pin] = A; R->pv[A] = pin;
  R->nx[A] = B; R->pv[B] = A;
  R->nx[B] = pout; R->pv[pout] = B;
  R->n = R->n - cnt + 2;
  R->head = pin;
  *keep = A;
  return 1;
}

/* Lines a + s*(x - x[p]) with a in [alo, ahi] and s in [smin, smax] through
 * the bands of samples p..qmax.  Returns the last index q all of p..q fit,
 * with ws->P their polygon; *ok = 0 when even the samples at x[p] do not. */
/* Narrows the start values [*alo, *ahi] to the bands of the samples at
 * x[p] (repeated abscissae); returns the first sample past them. */
static size_t narrow_start(const fit_data *d, double e, size_t p, size_t qmax, double *alo,
                           double *ahi)
{
  size_t i = p;
  while (i <= qmax && d->x[i] == d->x[p]) {
    double l = d->y[i] - e * d->s[i], u = d->y[i] + e * d->s[i];
    if (l > *alo) *alo = l;
    if (u < *ahi) *ahi = u;
    i++;
  }
  return i;
}

size_t fit_tube_run(const fit_data *d, double e, fit_span sp, fit_tube *w, const fit_track *tr,
                    int *ok)
{
  size_t p = sp.p, qmax = sp.qmax;
  double alo = sp.alo, ahi = sp.ahi, smin = sp.smin, smax = sp.smax;
  double *rlo = tr ? tr->rlo : NULL, *rhi = tr ? tr->rhi : NULL;
  fit_stop_fn stop = tr ? tr->stop : NULL;
  void *sctx = tr ? tr->sctx : NULL;
  double X0 = d->x[p], l, u, D, pa[4], ps[4];
  size_t i = narrow_start(d, e, p, qmax, &alo, &ahi), last, hu, hl, keep;
  ring *R = &w->R;
  *ok = 0;
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
  pa[0] = alo; ps[0] = (l - alo) / D;
  pa[1] = ahi; ps[1] = (l - ahi) / D;
  pa[2] = ahi; ps[2] = (u - ahi) / D;
  pa[3] = alo; ps[3] = (u - alo) / D;
  ring_set(R, pa, ps, 4);
  ring_export(R, &w->P);
  hu = hl = R->head;
  if (sw_isfinite(smin)) {
    size_t top = ring_climb(R, R->head, 0, -1);
    if (!ring_cut(R, top, 0, -1, -smin, &keep)) return last;
  }
  if (sw_isfinite(smax)) {
    size_t top = ring_climb(R, R->head, 0, 1);
    if (!ring_cut(R, top, 0, 1, smax, &keep)) return last;
  }
  hu = ring_climb(R, R->head, 1, D);
  hl = ring_climb(R, R->head, -1, -D);
  last = i;
  if (rlo) {
    rlo[i] = R->a[hl] + R->s[hl] * D;
    rhi[i] = R->a[hu] + R->s[hu] * D;
    if (stop && stop(sctx, i, rlo[i], rhi[i])) { ring_export(R, &w->P); return last; }
  }
  for (i = i + 1; i <= qmax; i++) {
    double vmax, vmin;
    D = d->x[i] - X0;
    l = d->y[i] - e * d->s[i];
    u = d->y[i] + e * d->s[i];
    hu = ring_climb(R, hu, 1, D);
    hl = ring_climb(R, hl, -1, -D);
    vmax = R->a[hu] + R->s[hu] * D;
    vmin = R->a[hl] + R->s[hl] * D;
    /* the band must meet the polygon's range of values at x[i] */
    if (vmax < l - 1e-12 * (fabs(l) + fabs(vmax)) || vmin > u + 1e-12 * (fabs(u) + fabs(vmin)))
      break;
    if (!ring_cut(R, hu, 1, D, u, &keep)) break;
    hu = keep;
    if (R->dead[hl]) hl = keep;
    hl = ring_climb(R, hl, -1, -D);
    if (!ring_cut(R, hl, -1, -D, -l, &keep)) break;
    hl = keep;
    if (R->dead[hu]) hu = keep;
    last = i;
    if (rlo) {
      rlo[i] = vmin > l ? vmin : l;
      rhi[i] = vmax < u ? vmax : u;
      if (stop && stop(sctx, i, rlo[i], rhi[i])) break;
    }
  }
  ring_export(R, &w->P);
  return last;
}

void fit_slope_bounds(const fit_cons *cons, int first, int lastseg, double *smin, double *smax)
{
  *smin = -INFINITY;
  *smax = INFINITY;
  if (cons && cons->dir > 0) *smin = 0;
  if (cons && cons->dir < 0) *smax = 0;
  if (cons && first && cons->has_first) *smin = *smax = cons->slope_first;
  if (cons && lastseg && cons->has_last) {
    if (first && cons->has_first && cons->slope_first != cons->slope_last) {
      *smin = 1;
      *smax = 0;
      return;
    }
    *smin = *smax = cons->slope_last;
  }
}

fit_tube *fit_tube_new(size_t n, sw_err *err)
{
  fit_tube *w = sw_alloc(1, sizeof *w, err);
  if (!w) return NULL;
  if (fit_tube_init(w, n, err)) { fit_tube_clear(w); free(w); return NULL; }
  return w;
}

void fit_tube_free(fit_tube *w)
{
  if (!w) return;
  fit_tube_clear(w);
  free(w);
}

/* Start value of a line of the last run's polygon whose value at distance
 * h from the start is target (the middle of the chord the line cuts). */
double fit_tube_start_for(const fit_tube *w, double h, double target)
{
  const poly *P = &w->P;
  size_t i, n = P->n, best = 0;
  double amin = INFINITY, amax = -INFINITY, bd = INFINITY;
  for (i = 0; i < n; i++) {
    size_t j = (i + 1) % n;
    double fi = P->a[i] + P->s[i] * h - target, fj = P->a[j] + P->s[j] * h - target;
    if (fabs(fi) < bd) { bd = fabs(fi); best = i; }
    if (fi == 0) {
      if (P->a[i] < amin) amin = P->a[i];
      if (P->a[i] > amax) amax = P->a[i];
    } else if ((fi < 0) != (fj < 0) && fj != 0) {
      double t = fi / (fi - fj), av = P->a[i] + t * (P->a[j] - P->a[i]);
      if (av < amin) amin = av;
      if (av > amax) amax = av;
    }
  }
  if (amin <= amax) return 0.5 * (amin + amax);
  return n ? P->a[best] : target;
}

