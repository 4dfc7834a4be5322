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
  size_t room;            /* allocated cells; grows up to cap */
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

/* Room for cap0 cells now; cells_grow doubles it up to C->cap. */
static int cells_alloc(cells *C, size_t cap0, sw_err *err)
{
  C->a = sw_alloc(cap0, sizeof(double), err);
  C->b = sw_alloc(cap0, sizeof(double), err);
  C->fa = sw_alloc(cap0, sizeof(double), err);
  C->fb = sw_alloc(cap0, sizeof(double), err);
  C->dev = sw_alloc(cap0, sizeof(double), err);
  C->heap = sw_alloc(cap0, sizeof(size_t), err);
  if (!C->a || !C->b || !C->fa || !C->fb || !C->dev || !C->heap) return SW_ENOMEM;
  C->room = cap0;
  return SW_OK;
}

static int grow_doubles(double **f, size_t nk, sw_err *err)
{
  double *t = sw_realloc(*f, nk, sizeof(double), err);
  if (!t) return SW_ENOMEM;
  *f = t;
  return SW_OK;
}

static int cells_grow(cells *C, sw_err *err)
{
  size_t nk = 2 * C->room < C->cap ? 2 * C->room : C->cap, *h;
  if (grow_doubles(&C->a, nk, err) || grow_doubles(&C->b, nk, err) ||
      grow_doubles(&C->fa, nk, err) || grow_doubles(&C->fb, nk, err) ||
      grow_doubles(&C->dev, nk, err))
    return SW_ENOMEM;
  h = sw_realloc(C->heap, nk, sizeof(size_t), err);
  if (!h) return SW_ENOMEM;
  C->heap = h;
  C->room = nk;
  return SW_OK;
}

/* start uniform cells over [lo, hi], whose ends' values are flo and fhi. */
static int cells_seed(cells *C, double lo, double hi, double flo, double fhi, size_t start,
                      sw_err *err)
{
  double pa = lo, fpa = flo;
  size_t i;
  int st;
  for (i = 0; i < start; i++) {
    double pb = i + 1 == start ? hi : lo + (hi - lo) * (double)(i + 1) / (double)start, fpb;
    if (i + 1 == start) fpb = fhi;
    else if ((st = sw_curve_eval(C->c, pb, &fpb, err))) return st;
    if ((st = cell_set(C, i, pa, pb, fpa, fpb, err))) return st;
    pa = pb;
    fpa = fpb;
  }
  C->n = start;
  return SW_OK;
}

/* Splits the worst cell until the count reaches target and (tol fits) the
 * grid's chord error is within limit, its share of tol. */
static int cells_refine(cells *C, size_t target, double limit, sw_err *err)
{
  int st;
  while (C->hn > 0 && C->n < C->cap) {
    size_t w = C->heap[0], j = C->n;
    double a, b, m, fm;
    if (C->dev[w] <= 0) break;
    if (C->n >= target && C->dev[w] <= limit) break;
    if (j == C->room && (st = cells_grow(C, err))) return st;
    C->heap[0] = C->heap[--C->hn];
    heap_down(C, 0);
    a = C->a[w];
    b = C->b[w];
    m = 0.5 * (a + b);
    if ((st = sw_curve_eval(C->c, m, &fm, err))) return st;
    if ((st = cell_set(C, j, m, b, fm, C->fb[w], err))) return st;
    if ((st = cell_set(C, w, a, m, C->fa[w], fm, err))) return st;
    C->n++;
  }
  return SW_OK;
}

/* Each cell's share q[i] (cells in order ord) of the n - 1 intervals: half
 * uniform, half by the measured density (a cell's sqrt chord error per
 * width ~ |f''|^(1/2)); a tolerance fit puts at least two in every cell,
 * so no interval's chord error passes its share of tol.  Returns the sum. */
static double cell_shares(const cells *C, const size_t *ord, double lo, double hi, size_t n,
                          double tol, double *q)
{
  double total = 0, Q = 0;
  size_t i;
  for (i = 0; i < C->n; i++) total += sqrt(C->dev[i]);
  if (!(total > 0) || !sw_isfinite(total)) total = 0;
  for (i = 0; i < C->n; i++) {
    size_t ci = ord[i];
    double u = (C->b[ci] - C->a[ci]) / (hi - lo);
    q[i] = total > 0 ? 0.5 * (double)(n - 1) * (sqrt(C->dev[ci]) / total + u)
                     : (double)(n - 1) * u;
    if (tol > 0 && q[i] < 2) q[i] = 2;
    Q += q[i];
  }
  return Q;
}

/* The points of one sequence equidistributed on the shares q (sum Q) of
 * the ordered cells, into x (room for M + 1); returns their count. */
static size_t place_points(const cells *C, const size_t *ord, const double *q, double Q, size_t M,
                           double lo, double hi, double *x)
{
  double acc = 0;
  size_t i, j, k = 0;
  x[k++] = lo;
  for (i = 1, j = 0; i < M; i++) {
    double level = Q * (double)i / (double)M, v;
    size_t ci;
    while (j + 1 < C->n && acc + q[j] < level) acc += q[j++];
    ci = ord[j];
    v = C->a[ci] + (q[j] > 0 ? (level - acc) / q[j] : 0.5) * (C->b[ci] - C->a[ci]);
    if (v > x[k - 1] && v < hi) x[k++] = v;
  }
  x[k++] = hi;
  return k;
}

/* The grid of about n points from the measured cells into *xs. */
static int grid_from_cells(const cells *C, double lo, double hi, size_t n, double tol,
                           double **xs, size_t *nx, sw_err *err)
{
  size_t *ord = sw_alloc(C->n, sizeof *ord, err), i, M;
  double *q = sw_alloc(C->n, sizeof *q, err), *x = NULL, Q;
  int st = SW_OK;
  if (!ord || !q) { st = SW_ENOMEM; goto done; }
  for (i = 0; i < C->n; i++) ord[i] = i;
  sort_cells(C, ord);
  Q = cell_shares(C, ord, lo, hi, n, tol, q);
  if (!sw_isfinite(Q) || Q > 1e8) { /* an overflowing range or curve: no grid */
    st = sw_err_set(err, SW_EINVAL, "cannot sample the curve on [%g, %g]: the range or the "
                    "curve's values overflow", lo, hi);
    goto done;
  }
  M = (size_t)ceil(Q);
  if (M < 2) M = 2;
  x = sw_alloc(M + 1, sizeof *x, err);
  if (!x) { st = SW_ENOMEM; goto done; }
  *nx = place_points(C, ord, q, Q, M, lo, hi, x);
  *xs = x;
done:
  free(ord);
  free(q);
  return st;
}

int fit_grid_analytic(const sw_curve *c, double lo, double hi, size_t n, int rel,
                      double rel_floor, double tol, double **xs, size_t *nx, sw_err *err)
{
  cells C;
  size_t target = n / 2 > 1 ? n / 2 : 1, start;
  double flo, fhi, limit = tol > 0 ? TOL_SHARE * tol : INFINITY;
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
  if (!(st = cells_alloc(&C, C.cap < 2 * target + start ? C.cap : 2 * target + start, err)) &&
      !(st = cells_seed(&C, lo, hi, flo, fhi, start, err)) &&
      !(st = cells_refine(&C, target, limit, err)))
    st = grid_from_cells(&C, lo, hi, n, tol, xs, nx, err);
  cells_free(&C);
  return st;
}
