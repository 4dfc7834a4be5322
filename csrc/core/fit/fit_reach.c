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
#include "fit/fit_reach.h"
#include "fit/fit_data.h"
#include "fit/fit_scan.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#define MAX_CANDIDATES 400
#define PIECES 4

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
  size_t *cand_of; /* candidate at each sample, SIZE_MAX elsewhere */
  fit_tube *w;
} reach_ws;

/* The expansion in progress, seen by the run's stop test. */
typedef struct expand_ctx {
  reach_ws *r;
  size_t j, level, fin;
  int t, grew;
} expand_ctx;

static void reach_free(reach_ws *r)
{
  free(r->ci); free(r->pc); free(r->np); free(r->rlo); free(r->rhi); free(r->cand_of);
  fit_tube_free(r->w);
  memset(r, 0, sizeof *r);
}

static int cmp_size(const void *a, const void *b)
{
  size_t p = *(const size_t *)a, q = *(const size_t *)b;
  return (p > q) - (p < q);
}

/* Candidates: an even subsample of the distinct abscissae plus the extra
 * knots (e.g. a greedy pass's), each as the last sample at its x; sorted,
 * distinct, the first one sample 0.  *ci has room for 400 + nextra. */
static int choose_candidates(const fit_data *d, const double *extra, size_t nextra, int own,
                             size_t **ci, size_t *M, sw_err *err)
{
  size_t i, groups = 0, g, *last, M0, m;
  *ci = NULL;
  last = sw_alloc(d->n, sizeof *last, err);
  if (!last) return SW_ENOMEM;
  for (i = 0; i < d->n; i++)
    if (i + 1 == d->n || d->x[i + 1] > d->x[i]) last[groups++] = i;
  M0 = !own ? 0 : groups < MAX_CANDIDATES ? groups : MAX_CANDIDATES;
  *ci = sw_alloc(M0 + nextra + 1, sizeof **ci, err);
  if (!*ci) { free(last); return SW_ENOMEM; }
  for (g = 0; g < M0; g++)
    (*ci)[g] = last[(size_t)((double)g * (double)(groups - 1) / (double)(M0 - 1) + 0.5)];
  for (g = 0; g < nextra; g++) {
    size_t u = fit_upper(d, extra[g]);
    (*ci)[M0 + g] = u > 0 ? u - 1 : 0;
  }
  (*ci)[M0 + nextra] = d->n - 1; /* the end is always one */
  qsort(*ci, M0 + nextra + 1, sizeof **ci, cmp_size);
  for (g = 0, m = 0; g < M0 + nextra + 1; g++)
    if (m == 0 || (*ci)[g] > (*ci)[m - 1]) (*ci)[m++] = (*ci)[g];
  (*ci)[0] = 0; /* the start: a run from sample 0 takes every sample at x[0] */
  *M = m;
  free(last);
  return SW_OK;
}

static int reach_init(reach_ws *r, const fit_data *d, const double *extra, size_t nextra, int own,
                      sw_err *err)
{
  size_t i, g;
  int st;
  memset(r, 0, sizeof *r);
  if ((st = choose_candidates(d, extra, nextra, own, &r->ci, &r->M, err))) return st;
  r->pc = sw_alloc(r->M * PIECES, sizeof *r->pc, err);
  r->np = sw_alloc(r->M, sizeof *r->np, err);
  r->rlo = sw_alloc(d->n, sizeof *r->rlo, err);
  r->rhi = sw_alloc(d->n, sizeof *r->rhi, err);
  r->cand_of = sw_alloc(d->n, sizeof *r->cand_of, err);
  r->w = fit_tube_new(d->n, err);
  if (!r->pc || !r->np || !r->rlo || !r->rhi || !r->cand_of || !r->w) {
    reach_free(r);
    return SW_ENOMEM;
  }
  for (i = 0; i < d->n; i++) r->cand_of[i] = SIZE_MAX;
  for (g = 0; g < r->M; g++) r->cand_of[r->ci[g]] = g;
  return SW_OK;
}

int fit_reach_candidates(const fit_data *d, const double *extra, size_t nextra, double **xs,
                         size_t *n, sw_err *err)
{
  size_t *ci, M, g;
  int st = choose_candidates(d, extra, nextra, 1, &ci, &M, err);
  *xs = NULL;
  *n = 0;
  if (st) return st;
  *xs = sw_alloc(M, sizeof **xs, err);
  if (!*xs) { free(ci); return SW_ENOMEM; }
  for (g = 0; g < M; g++) (*xs)[g] = d->x[ci[g]];
  *n = M;
  free(ci);
  return SW_OK;
}

/* Adds [lo, hi] at candidate j unless a piece there already holds it. */
static void add_piece(reach_ws *r, size_t j, double lo, double hi, size_t from, int fromp,
                      size_t level)
{
  piece *P = r->pc + j * PIECES;
  int t;
  if (!(lo <= hi)) return;
  for (t = 0; t < r->np[j]; t++)
    if (P[t].lo <= lo && P[t].hi >= hi) return;
  if (r->np[j] == PIECES) return;
  P[r->np[j]++] = (piece){lo, hi, from, fromp, level, 0};
}

/* Records the run's values at a candidate as a piece there, and ends the
 * run when a piece of an earlier level already holds them: every line
 * going on from here is then a new segment from that piece, no longer. */
static int expand_stop(void *p, size_t i, double lo, double hi)
{
  expand_ctx *c = p;
  reach_ws *r = c->r;
  size_t g = r->cand_of[i];
  piece *P;
  int t, before;
  if (g == SIZE_MAX || g <= c->j || g >= c->fin) return 0;
  before = r->np[g];
  add_piece(r, g, lo, hi, c->j, c->t, c->level);
  c->grew |= r->np[g] != before;
  P = r->pc + g * PIECES;
  for (t = 0; t < r->np[g]; t++)
    if (P[t].level < c->level && P[t].lo <= lo && P[t].hi >= hi) return 1;
  return 0;
}

static int last_bounds(const fit_cons *cons, int first, double *smin, double *smax)
{
  double a, b;
  fit_slope_bounds(cons, first, 1, smin, smax);
  fit_slope_bounds(cons, first, 0, &a, &b);
  return *smin != a || *smax != b;
}

static int reach(const fit_data *d, double e, const fit_cons *cons, size_t maxseg,
                 const double *extra, size_t nextra, int own, size_t *count, double *kx, double *ky,
                 sw_err *err);

int fit_reach(const fit_data *d, double e, const fit_cons *cons, size_t maxseg, const double *extra,
              size_t nextra, size_t *count, double *kx, double *ky, sw_err *err)
{
  return reach(d, e, cons, maxseg, extra, nextra, 1, count, kx, ky, err);
}

int fit_reach_among(const fit_data *d, double e, const fit_cons *cons, size_t maxseg,
                    const double *cand, size_t ncand, size_t *count, sw_err *err)
{
  return reach(d, e, cons, maxseg, cand, ncand, 0, count, NULL, NULL, err);
}

static int reach(const fit_data *d, double e, const fit_cons *cons, size_t maxseg,
                 const double *extra, size_t nextra, int own, size_t *count, double *kx, double *ky,
                 sw_err *err)
{
  reach_ws r;
  size_t level, j, M, fin;
  int st;
  *count = SIZE_MAX;
  if ((st = reach_init(&r, d, extra, nextra, own, err))) return st;
  M = r.M;
  fin = M - 1;
  r.np[0] = 1;
  r.pc[0] = (piece){-INFINITY, INFINITY, SIZE_MAX, 0, 0, 0};
  for (level = 1; level <= maxseg && *count == SIZE_MAX; level++) {
    expand_ctx ec;
    ec.r = &r;
    ec.level = level;
    ec.fin = fin;
    ec.grew = 0;
    for (j = 0; j < fin; j++) {
      int t;
      for (t = 0; t < r.np[j]; t++) {
        piece *P = r.pc + j * PIECES + t;
        double smin, smax;
        size_t q;
        int ok, first = P->from == SIZE_MAX;
        if (P->expanded || P->level != level - 1) continue;
        P->expanded = 1;
        fit_slope_bounds(cons, first, 0, &smin, &smax);
        ec.j = j;
        ec.t = t;
        q = fit_tube_run(d, e, (fit_span){r.ci[j], d->n - 1, P->lo, P->hi, smin, smax},
                         r.w, &(fit_track){r.rlo, r.rhi, expand_stop, &ec}, &ok);
        if (!ok) continue;
        if (last_bounds(cons, first, &smin, &smax))
          q = fit_tube_run(d, e, (fit_span){r.ci[j], d->n - 1, P->lo, P->hi, smin, smax},
                         r.w, &(fit_track){r.rlo, r.rhi, NULL, NULL}, &ok);
        if (ok && q == d->n - 1 && r.ci[fin] == d->n - 1) {
          add_piece(&r, fin, r.rlo[q], r.rhi[q], j, t, level);
          if (r.np[fin]) *count = level;
        }
      }
    }
    if (!ec.grew && *count == SIZE_MAX) break;
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
      if (at == fin) last_bounds(cons, first, &smin, &smax);
      else fit_slope_bounds(cons, first, 0, &smin, &smax);
      fit_tube_run(d, e, (fit_span){r.ci[i], r.ci[at], Q->lo, Q->hi, smin, smax},
                         r.w, NULL, &ok);
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
