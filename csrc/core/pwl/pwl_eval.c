/* Batch evaluation of a PWL model over many points.
 *
 * Every point gets exactly the value sw_pwl_eval gives it (bit for bit):
 * the segment is the one sw_pwl_locate finds, the value comes from the same
 * expression, and points outside the knots or NaN go through sw_pwl_eval
 * itself.  Only the way the segment is found changes:
 *   - a running segment while the input is non-decreasing (a merge of the
 *     points with the knots, galloping over runs of knots between two
 *     points), dropped at the first step back;
 *   - for points in random order, a guess from the point's position that is
 *     then corrected to the exact segment: the guess is direct when the
 *     knots are uniform, and read from a small bucket table on the stack
 *     otherwise (a binary search inside the bucket when it holds many
 *     knots).  The correction compares with the knots themselves, so
 *     rounding in the guess never changes the answer, only its cost.
 * Nothing is allocated; a large result gets huge-page advice on Linux. */
#if defined(__linux__) && !defined(_DEFAULT_SOURCE)
#define _DEFAULT_SOURCE /* madvise's MADV_HUGEPAGE under -std=c99 */
#endif
#include "pwl/pwl.h"

#include <math.h>
#include <stdint.h>
#if defined(__linux__)
#include <sys/mman.h>
#endif

/* Below this many points the set-up is not worth it. */
#define FEW_POINTS 16
/* Bucket table size: 8 KiB on the stack. */
#define MAX_BUCKETS 2048
/* Relative deviation of a knot from the uniform grid still called uniform.
 * Any value is safe (the guess is corrected); this one keeps the correction
 * at a step or none. */
#define UNIFORM_TOL 1e-9
/* More forward steps than this per bucket: a binary search instead. */
#define MAX_STEPS 4

/* How a point's position guesses its segment. */
typedef struct guess {
  double x0, scale; /* bucket = (x - x0) * scale */
  size_t nb;        /* buckets */
  size_t steps;     /* most knots inside one bucket */
  int direct;       /* uniform knots: bucket == segment */
  uint32_t start[MAX_BUCKETS]; /* segment holding each bucket's left edge */
} guess;

/* Value of segment k at x, as sw_pwl_line computes it. */
static inline double line_at(const sw_pwl *m, size_t k, double x)
{
  return x == m->x[k + 1] ? m->yb[k] : m->ya[k] + m->slope[k] * (x - m->x[k]);
}

/* Moves k to the segment sw_pwl_locate returns for x, a point inside the
 * knots: the last k < nseg with x >= x[k]. */
static inline size_t settle(const double *xk, size_t nseg, size_t k, double x)
{
  while (k + 1 < nseg && x >= xk[k + 1]) k++;
  while (k > 0 && x < xk[k]) k--;
  return k;
}

static int knots_uniform(const sw_pwl *m)
{
  size_t k, n = m->nseg;
  double x0 = m->x[0], h = (m->x[n] - x0) / (double)n;
  for (k = 1; k < n; k++)
    if (fabs(m->x[k] - (x0 + (double)k * h)) > UNIFORM_TOL * h) return 0;
  return 1;
}

static void guess_init(const sw_pwl *m, guess *g)
{
  size_t n = m->nseg, b, k = 0, nb;
  double x0 = m->x[0], span = m->x[n] - x0, hmin = span;
  g->x0 = x0;
  g->direct = knots_uniform(m);
  g->steps = 1;
  if (g->direct) {
    g->nb = n;
    g->scale = (double)n / span;
    if (!sw_isfinite(g->scale)) g->scale = 0; /* tiny span: guess 0, settle walks */
    return;
  }
  /* Buckets no wider than the narrowest segment (within the table's size),
   * so a bucket holds at most one knot and a point needs one step. */
  for (k = 0; k < n; k++)
    if (m->x[k + 1] - m->x[k] < hmin) hmin = m->x[k + 1] - m->x[k];
  nb = span / hmin < (double)(MAX_BUCKETS - 1) ? (size_t)(span / hmin) + 1 : MAX_BUCKETS;
  if (nb < n) nb = n;
  if (nb > MAX_BUCKETS) nb = MAX_BUCKETS;
  g->nb = nb;
  g->scale = (double)nb / span;
  if (!sw_isfinite(g->scale)) g->scale = 0;
  for (b = 0, k = 0; b < nb; b++) {
    double edge = x0 + (double)b * (span / (double)nb);
    while (k + 1 < n && edge >= m->x[k + 1]) k++;
    g->start[b] = (uint32_t)k;
  }
  for (b = 0; b < nb; b++) {
    size_t next = b + 1 < nb ? g->start[b + 1] : n - 1;
    if (next - g->start[b] > g->steps) g->steps = next - g->start[b];
  }
}

/* First guess of the segment for x inside the knots. */
static inline size_t guess_bucket(const guess *g, double x)
{
  double t = (x - g->x0) * g->scale;
  return t < (double)g->nb ? (size_t)t : g->nb - 1; /* t >= 0 inside; NaN to the end */
}

/* A large result written for the first time costs a page fault per 4 KiB
 * page; on Linux, advising huge pages for the 2 MiB-aligned inside of the
 * result makes that one fault per 2 MiB (several times faster for 1e7
 * points).  Only above 32 MiB, the size from which the C library maps every
 * block afresh: smaller blocks are usually reused heap pages, already
 * faulted in, where the advice only costs.  Advice only: whatever the kernel
 * answers, nothing else changes. */
static void advise_huge_pages(double *y, size_t n)
{
#if defined(__linux__) && defined(MADV_HUGEPAGE)
  const uintptr_t huge = (uintptr_t)2 << 20;
  uintptr_t lo = ((uintptr_t)y + huge - 1) & ~(huge - 1);
  uintptr_t hi = ((uintptr_t)(y + n)) & ~(huge - 1);
  if (n >= ((size_t)32 << 20) / sizeof *y && hi > lo)
    (void)madvise((void *)lo, hi - lo, MADV_HUGEPAGE);
#else
  (void)y;
  (void)n;
#endif
}

/* One point by the scalar path itself (points outside the knots, NaN, and
 * inputs too short for the set-up). */
static int eval_scalar(const sw_pwl *m, double x, double *y, size_t i, sw_err *err)
{
  int st = sw_pwl_eval(m, x, y, err);
  if (st) return sw_err_prefix(err, "at index %zu: ", i + 1);
  return SW_OK;
}

/* Few segments: the segment is the count of interior knots at or below x;
 * a fixed-length loop without data-dependent branches. */
static int eval_small(const sw_pwl *m, const double *x, double *y, size_t i, size_t n,
                      sw_err *err)
{
  const double *xk = m->x;
  size_t nseg = m->nseg;
  double lo = xk[0], hi = xk[nseg];
  for (; i < n; i++) {
    double xi = x[i];
    size_t j, k = 0;
    if (!(xi >= lo && xi <= hi)) {
      int st = eval_scalar(m, xi, &y[i], i, err);
      if (st) return st;
      continue;
    }
    for (j = 1; j < nseg; j++) k += (size_t)(xi >= xk[j]);
    y[i] = line_at(m, k, xi);
  }
  return SW_OK;
}

/* Points in any order, from index i on.  A fixed number of forward steps
 * without branches from the bucket's first segment, then a check that the
 * segment is the exact one (settle mends the rare miss from rounding). */
static int eval_guessed(const sw_pwl *m, const guess *g, const double *x, double *y,
                        size_t i, size_t n, sw_err *err)
{
  const double *xk = m->x, *ya = m->ya, *yb = m->yb, *sl = m->slope;
  const uint32_t *start = g->start;
  const size_t nseg = m->nseg, steps = g->steps, last = g->nb - 1;
  const double lo = xk[0], hi = xk[nseg], x0 = g->x0, scale = g->scale, top = (double)g->nb;
  const int direct = g->direct;
  for (; i < n; i++) {
    double xi = x[i], t;
    size_t k, s;
    if (!(xi >= lo && xi <= hi)) {
      int st = eval_scalar(m, xi, &y[i], i, err);
      if (st) return st;
      continue;
    }
    t = (xi - x0) * scale;
    k = t < top ? (size_t)t : last; /* t >= 0 inside */
    if (!direct) {
      k = start[k];
      for (s = 0; s < steps; s++) k += (size_t)((k + 1 < nseg) & (xi >= xk[k + 1]));
    }
    if ((int)!(xi >= xk[k]) | ((k + 1 < nseg) & (xi >= xk[k + 1]))) k = settle(xk, nseg, k, xi);
    y[i] = xi == xk[k + 1] ? yb[k] : ya[k] + sl[k] * (xi - xk[k]);
  }
  return SW_OK;
}

/* Last k in [lo, hi] with x >= xk[k] (lo when none): a binary search. */
static inline size_t search(const double *xk, size_t lo, size_t hi, double x)
{
  while (hi > lo) {
    size_t mid = lo + (hi - lo + 1) / 2;
    if (x >= xk[mid]) lo = mid; else hi = mid - 1;
  }
  return lo;
}

/* Points in any order when buckets hold many knots (large models with
 * uneven knots): a binary search between the bucket's first and last
 * segments, then the exact correction. */
static int eval_search(const sw_pwl *m, const guess *g, const double *x, double *y,
                       size_t i, size_t n, sw_err *err)
{
  const double *xk = m->x;
  const size_t nseg = m->nseg, last = g->nb - 1;
  const double lo = xk[0], hi = xk[nseg];
  for (; i < n; i++) {
    double xi = x[i];
    size_t b, k;
    if (!(xi >= lo && xi <= hi)) {
      int st = eval_scalar(m, xi, &y[i], i, err);
      if (st) return st;
      continue;
    }
    b = guess_bucket(g, xi);
    k = search(xk, g->start[b], b < last ? g->start[b + 1] : nseg - 1, xi);
    y[i] = line_at(m, settle(xk, nseg, k, xi), xi);
  }
  return SW_OK;
}

/* Non-decreasing points: one walk along the knots.  Returns the index of
 * the first point that steps back (n when none does) in *stop. */
static int eval_merge(const sw_pwl *m, const double *x, double *y, size_t n, size_t *stop,
                      sw_err *err)
{
  const double *xk = m->x;
  size_t i, k = 0, nseg = m->nseg;
  double lo = xk[0], hi = xk[nseg], prev = -HUGE_VAL;
  for (i = 0; i < n; i++) {
    double xi = x[i];
    if (!(xi >= prev)) break; /* a step back, or NaN */
    prev = xi;
    if (!(xi >= lo && xi <= hi)) {
      int st = eval_scalar(m, xi, &y[i], i, err);
      if (st) return st;
      continue;
    }
    if (k + 1 < nseg && xi >= xk[k + 1]) { /* gallop, then search: sparse points on many knots */
      size_t from = k + 1, step = 1;
      while (from + step < nseg && xi >= xk[from + step]) {
        from += step;
        step *= 2;
      }
      k = search(xk, from, from + step - 1 < nseg - 1 ? from + step - 1 : nseg - 1, xi);
    }
    y[i] = line_at(m, k, xi);
  }
  *stop = i;
  return SW_OK;
}

int sw_pwl_eval_many(const sw_pwl *m, const double *x, double *y, size_t n, sw_err *err)
{
  size_t i = 0;
  int st;
  guess g;
  if (n >= FEW_POINTS) {
    advise_huge_pages(y, n);
    if ((st = eval_merge(m, x, y, n, &i, err))) return st;
    if (i == n) return SW_OK;
    if (m->nseg <= 4) return eval_small(m, x, y, i, n, err);
  }
  if (n - i < FEW_POINTS || n - i < m->nseg) { /* the set-up below costs O(nseg) */
    for (; i < n; i++)
      if ((st = eval_scalar(m, x[i], &y[i], i, err))) return st;
    return SW_OK;
  }
  guess_init(m, &g);
  if (g.steps > MAX_STEPS) return eval_search(m, &g, x, y, i, n, err);
  return eval_guessed(m, &g, x, y, i, n, err);
}
