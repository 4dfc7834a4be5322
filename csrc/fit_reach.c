/* Fewest segments of a continuous model within a tolerance band, knots on
 * candidate samples.  Greedy farthest reach is not optimal for continuous
 * models (a knot placed past a corner of the data leaves a narrow interval
 * for the next segment), so this keeps, for every candidate knot, the
 * values reachable there with at most k segments (a few intervals, each
 * remembering where it came from) and grows k level by level: the
 * reachable-set form of Imai and Iri's minimum-link construction.  Each
 * interval is expanded once, by one tube run.  Exact among knots at the
 * candidates, except when more than PIECES disjoint intervals meet at one
 * candidate (the extra ones are dropped, which can only add a segment). */
#include "fit.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#define MAX_CANDIDATES 400
#define PIECES 8

typedef struct piece {
  double lo, hi;
  size_t from;   /* candidate it came from (SIZE_MAX: the start) */
  int fromp;     /* piece index there */
  size_t level;  /* segments used to get here */
  int expanded;
} piece;

typedef struct reach_ws {
  size_t M;
  size_t *ci;      /* sample index of each candidate (last sample at its x) */
  piece *pc;       /* PIECES per candidate */
  int *np;
  double *rlo, *rhi;
  fit_tube *w;
} reach_ws;

static void reach_free(reach_ws *r)
{
  free(r->ci); free(r->pc); free(r->np); free(r->rlo); free(r->rhi);
  fit_tube_free(r->w);
  memset(r, 0, sizeof *r);
}

static int reach_init(reach_ws *r, const fit_data *d, sw_err *err)
{
  size_t i, groups = 0, g = 0, *last;
  memset(r, 0, sizeof *r);
  last = sw_alloc(d->n, sizeof *last, err);
  if (!last) return SW_ENOMEM;
  for (i = 0; i < d->n; i++)
    if (i + 1 == d->n || d->x[i + 1] > d->x[i]) last[groups++] = i;
  r->M = groups < MAX_CANDIDATES ? groups : MAX_CANDIDATES;
  r->ci = sw_alloc(r->M, sizeof *r->ci, err);
  r->pc = sw_alloc(r->M * PIECES, sizeof *r->pc, err);
  r->np = sw_alloc(r->M, sizeof *r->np, err);
  r->rlo = sw_alloc(d->n, sizeof *r->rlo, err);
  r->rhi = sw_alloc(d->n, sizeof *r->rhi, err);
  r->w = fit_tube_new(d->n, err);
  if (!r->ci || !r->pc || !r->np || !r->rlo || !r->rhi || !r->w) { free(last); reach_free(r); return SW_ENOMEM; }
  for (g = 0; g < r->M; g++)
    r->ci[g] = last[(size_t)((double)g * (double)(groups - 1) / (double)(r->M - 1) + 0.5)];
  r->ci[0] = 0; /* the start: a run from sample 0 takes every sample at x[0] */
  free(last);
  return SW_OK;
}

/* Adds [lo, hi] at candidate j unless a piece there already holds it. */
static void add_piece(reach_ws *r, size_t j, double lo, double hi, size_t from, int fromp, size_t level)
{
  piece *P = r->pc + j * PIECES;
  int t;
  if (!(lo <= hi)) return;
  for (t = 0; t < r->np[j]; t++)
    if (P[t].lo <= lo && P[t].hi >= hi) return;
  if (r->np[j] == PIECES) return;
  P[r->np[j]++] = (piece){lo, hi, from, fromp, level, 0};
}

static int last_bounds(const fit_cons *k, int first, double *smin, double *smax)
{
  double a, b;
  fit_slope_bounds(k, first, 1, smin, smax);
  fit_slope_bounds(k, first, 0, &a, &b);
  return *smin != a || *smax != b;
}

int fit_reach(const fit_data *d, double e, const fit_cons *k, size_t maxseg, size_t *count,
              double *kx, double *ky, sw_err *err)
{
  reach_ws r;
  size_t level, j, M, fin;
  int st;
  *count = SIZE_MAX;
  if ((st = reach_init(&r, d, err))) return st;
  M = r.M;
  fin = M - 1;
  r.np[0] = 1;
  r.pc[0] = (piece){-INFINITY, INFINITY, SIZE_MAX, 0, 0, 0};
  for (level = 1; level <= maxseg && *count == SIZE_MAX; level++) {
    int grew = 0;
    for (j = 0; j < fin; j++) {
      int t;
      for (t = 0; t < r.np[j]; t++) {
        piece *P = r.pc + j * PIECES + t;
        double smin, smax;
        size_t q, g;
        int ok, first = P->from == SIZE_MAX;
        if (P->expanded || P->level != level - 1) continue;
        P->expanded = 1;
        fit_slope_bounds(k, first, 0, &smin, &smax);
        q = fit_tube_run(d, e, r.ci[j], d->n - 1, P->lo, P->hi, smin, smax, r.w, &ok, r.rlo, r.rhi);
        if (!ok) continue;
        for (g = j + 1; g < fin && r.ci[g] <= q; g++) {
          int before = r.np[g];
          add_piece(&r, g, r.rlo[r.ci[g]], r.rhi[r.ci[g]], j, t, level);
          grew |= r.np[g] != before;
        }
        if (last_bounds(k, first, &smin, &smax))
          q = fit_tube_run(d, e, r.ci[j], d->n - 1, P->lo, P->hi, smin, smax, r.w, &ok, r.rlo, r.rhi);
        if (ok && q == d->n - 1 && r.ci[fin] == d->n - 1) {
          add_piece(&r, fin, r.rlo[q], r.rhi[q], j, t, level);
          if (r.np[fin]) *count = level;
        }
      }
    }
    if (!grew && *count == SIZE_MAX) break;
  }
  if (*count != SIZE_MAX && kx) {
    /* walk back from the end: each segment's start value on its polygon */
    piece *P = r.pc + fin * PIECES;
    double target = 0.5 * (P->lo + P->hi);
    size_t at = fin, seg = *count;
    kx[seg] = d->x[d->n - 1];
    ky[seg] = target;
    while (P->from != SIZE_MAX) {
      size_t i = P->from;
      piece *Q = r.pc + i * PIECES + P->fromp;
      double smin, smax, a;
      int ok, first = Q->from == SIZE_MAX;
      if (at == fin) last_bounds(k, first, &smin, &smax);
      else fit_slope_bounds(k, first, 0, &smin, &smax);
      fit_tube_run(d, e, r.ci[i], r.ci[at], Q->lo, Q->hi, smin, smax, r.w, &ok, NULL, NULL);
      a = fit_tube_start_for(r.w, d->x[r.ci[at]] - d->x[r.ci[i]], target);
      seg--;
      kx[seg] = d->x[r.ci[i]];
      ky[seg] = a;
      target = a;
      at = i;
      P = Q;
    }
    if (seg != 0) st = sw_err_set(err, SW_ENUMERIC, "reachable-set walk back lost its way");
  }
  reach_free(&r);
  return st;
}
