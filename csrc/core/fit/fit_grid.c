/* The sample grid of an analytic curve (law or function).  Half the points
 * are uniform; the other half are the ends of cells found by splitting, at
 * their middle, the cell whose chord misses the curve most (at its
 * midpoint, in the fit's error measure).  Cells of equal chord error have
 * widths ~ |f''|^(-1/2): the curvature density, but measured on the curve
 * itself, so a knee narrower than any fixed cell still gets its samples.
 * A tolerance fit keeps splitting until the grid's own chord error is a
 * small part of tol, so the samples' interpolant always meets it. */
#include "fit/fit_grid.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#define START_CELLS 500
#define MAX_CELLS 400000
#define TOL_SHARE 0.1 /* the grid's chord error allowed, as a part of tol */

typedef struct cells {
  size_t n, cap, hn;
  double *a, *b, *fa, *fb, *dev;
  size_t *heap;           /* max-heap of cell indices by dev */
  const sw_curve *c;
  int rel;
  double rel_floor;
  double min_width;       /* cells this narrow are not split again */
} cells;

static void cells_free(cells *C)
{
  free(C->a); free(C->b); free(C->fa); free(C->fb); free(C->dev); free(C->heap);
}

static void heap_up(cells *C, size_t i)
{
  while (i > 0) {
    size_t p = (i - 1) / 2, t;
    if (!(C->dev[C->heap[i]] > C->dev[C->heap[p]])) break;
    t = C->heap[i]; C->heap[i] = C->heap[p]; C->heap[p] = t;
    i = p;
  }
}

static void heap_down(cells *C, size_t i)
{
  for (;;) {
    size_t l = 2 * i + 1, r = l + 1, big = i, t;
    if (l < C->hn && C->dev[C->heap[l]] > C->dev[C->heap[big]]) big = l;
    if (r < C->hn && C->dev[C->heap[r]] > C->dev[C->heap[big]]) big = r;
    if (big == i) return;
    t = C->heap[i]; C->heap[i] = C->heap[big]; C->heap[big] = t;
    i = big;
  }
}

/* Sets cell i to [a, b] and measures its chord error at the midpoint; a
 * cell too narrow to split, or where the curve is not finite, stays out of
 * the heap (the sample set's own check reports a non-finite curve). */
static int cell_set(cells *C, size_t i, double a, double b, double fa, double fb, sw_err *err)
{
  double m = 0.5 * (a + b), fm, dv, sc;
  int st;
  C->a[i] = a; C->b[i] = b; C->fa[i] = fa; C->fb[i] = fb;
  C->dev[i] = 0;
  if (!(b - a > C->min_width)) return SW_OK;
  if ((st = sw_curve_eval(C->c, m, &fm, err))) return st;
  dv = fabs(fm - 0.5 * (fa + fb));
  if (C->rel) {
    sc = fabs(fm) > C->rel_floor ? fabs(fm) : C->rel_floor;
    if (sc > 0) dv /= sc;
  }
  if (!sw_isfinite(dv)) return SW_OK;
  C->dev[i] = dv;
  C->heap[C->hn] = i;
  heap_up(C, C->hn++);
  return SW_OK;
}

static void sort_cells(const cells *C, size_t *ord)
{
  /* shell sort by the cells' left ends (no global state for qsort) */
  static const size_t gaps[] = {1391376, 463792, 198768, 86961, 33936, 13776, 4592, 1968, 861,
                                336, 112, 48, 21, 7, 3, 1};
  size_t g, i;
  for (g = 0; g < sizeof gaps / sizeof *gaps; g++) {
    size_t h = gaps[g];
    for (i = h; i < C->n; i++) {
      size_t t = ord[i], j = i;
      while (j >= h && C->a[ord[j - h]] > C->a[t]) { ord[j] = ord[j - h]; j -= h; }
      ord[j] = t;
    }
  }
}

int fit_grid_analytic(const sw_curve *c, double lo, double hi, size_t n, int rel,
                      double rel_floor, double tol, double **xs, size_t *nx, sw_err *err)
{
  cells C;
  size_t target = n / 2 > 1 ? n / 2 : 1, start, i, k;
  double flo, fhi, *x = NULL, limit = tol > 0 ? TOL_SHARE * tol : INFINITY;
  int st;
  memset(&C, 0, sizeof C);
  *xs = NULL;
  *nx = 0;
  C.c = c;
  C.rel = rel;
  C.rel_floor = rel_floor > 0 ? rel_floor : 0;
  C.min_width = 1e-11 * (fabs(lo) + fabs(hi) + (hi - lo));
  C.cap = target > MAX_CELLS ? target : MAX_CELLS;
  if (!(tol > 0)) C.cap = target; /* a count fit: the given grid size */
  start = target / 4 > START_CELLS ? START_CELLS : (target / 4 > 0 ? target / 4 : 1);
  if ((st = sw_curve_eval(c, lo, &flo, err)) || (st = sw_curve_eval(c, hi, &fhi, err))) return st;
  /* the arrays grow with the split count: a smooth curve needs few cells */
  {
    size_t cap0 = C.cap < 2 * target + start ? C.cap : 2 * target + start;
    C.a = sw_alloc(cap0, sizeof(double), err);
    C.b = sw_alloc(cap0, sizeof(double), err);
    C.fa = sw_alloc(cap0, sizeof(double), err);
    C.fb = sw_alloc(cap0, sizeof(double), err);
    C.dev = sw_alloc(cap0, sizeof(double), err);
    C.heap = sw_alloc(cap0, sizeof(size_t), err);
    if (!C.a || !C.b || !C.fa || !C.fb || !C.dev || !C.heap) { st = SW_ENOMEM; goto done; }
    k = cap0;
  }
  {
    double pa = lo, fpa = flo;
    for (i = 0; i < start; i++) {
      double pb = i + 1 == start ? hi : lo + (hi - lo) * (double)(i + 1) / (double)start, fpb;
      if (i + 1 == start) fpb = fhi;
      else if ((st = sw_curve_eval(c, pb, &fpb, err))) goto done;
      if ((st = cell_set(&C, i, pa, pb, fpa, fpb, err))) goto done;
      pa = pb;
      fpa = fpb;
    }
    C.n = start;
  }
  /* split the worst cell until the count is reached and (tol fits) the
   * grid's chord error is within its share of tol */
  while (C.hn > 0 && C.n < C.cap) {
    size_t w = C.heap[0], j = C.n;
    double a, b, m, fm;
    if (C.dev[w] <= 0) break;
    if (C.n >= target && C.dev[w] <= limit) break;
    if (j == k) { /* grow */
      size_t nk = 2 * k < C.cap ? 2 * k : C.cap;
      double *t;
      size_t *h;
#define GROW(f) do { t = sw_realloc(C.f, nk, sizeof(double), err); if (!t) { st = SW_ENOMEM; goto done; } C.f = t; } while (0)
      GROW(a); GROW(b); GROW(fa); GROW(fb); GROW(dev);
#undef GROW
      h = sw_realloc(C.heap, nk, sizeof(size_t), err);
      if (!h) { st = SW_ENOMEM; goto done; }
      C.heap = h;
      k = nk;
    }
    C.heap[0] = C.heap[--C.hn];
    heap_down(&C, 0);
    a = C.a[w];
    b = C.b[w];
    m = 0.5 * (a + b);
    if ((st = sw_curve_eval(c, m, &fm, err))) goto done;
    if ((st = cell_set(&C, j, m, b, fm, C.fb[w], err))) goto done;
    if ((st = cell_set(&C, w, a, m, C.fa[w], fm, err))) goto done;
    C.n++;
  }
  /* one sequence equidistributed on a mix of two densities, half each:
   * uniform, and the one the cells measured (a cell's sqrt chord error
   * per width ~ |f''|^(1/2)); a tolerance fit also puts two intervals in
   * every cell, so no interval's chord error passes its share of tol */
  {
    size_t *ord = NULL, M, j;
    double total = 0, Q = 0, acc = 0, *q = NULL;
    ord = sw_alloc(C.n, sizeof *ord, err);
    q = sw_alloc(C.n, sizeof *q, err);
    if (!ord || !q) { free(ord); free(q); st = SW_ENOMEM; goto done; }
    for (i = 0; i < C.n; i++) ord[i] = i;
    sort_cells(&C, ord);
    for (i = 0; i < C.n; i++) total += sqrt(C.dev[i]);
    if (!(total > 0) || !sw_isfinite(total)) total = 0;
    for (i = 0; i < C.n; i++) {
      size_t ci = ord[i];
      double u = (C.b[ci] - C.a[ci]) / (hi - lo);
      q[i] = total > 0 ? 0.5 * (double)(n - 1) * (sqrt(C.dev[ci]) / total + u) : (double)(n - 1) * u;
      if (tol > 0 && q[i] < 2) q[i] = 2;
      Q += q[i];
    }
    if (!sw_isfinite(Q) || Q > 1e8) { /* an overflowing range or curve: no grid */
      free(ord); free(q);
      st = sw_err_set(err, SW_EINVAL, "cannot sample the curve on [%g, %g]: the range or the curve's values overflow", lo, hi);
      goto done;
    }
    M = (size_t)ceil(Q);
    if (M < 2) M = 2;
    x = sw_alloc(M + 1, sizeof *x, err);
    if (!x) { free(ord); free(q); st = SW_ENOMEM; goto done; }
    k = 0;
    x[k++] = lo;
    for (i = 1, j = 0; i < M; i++) {
      double level = Q * (double)i / (double)M, v;
      size_t ci;
      while (j + 1 < C.n && acc + q[j] < level) acc += q[j++];
      ci = ord[j];
      v = C.a[ci] + (q[j] > 0 ? (level - acc) / q[j] : 0.5) * (C.b[ci] - C.a[ci]);
      if (v > x[k - 1] && v < hi) x[k++] = v;
    }
    x[k++] = hi;
    free(ord);
    free(q);
  }
  x[0] = lo;
  x[k - 1] = hi;
  *xs = x;
  *nx = k;
done:
  if (st) free(x);
  cells_free(&C);
  return st;
}
