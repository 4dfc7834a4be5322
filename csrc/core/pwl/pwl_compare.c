/* Error of a PWL model against a curve, stated as an upper bound.
 *
 * Piecewise-linear truths (sampled curves, models): between two consecutive
 * knots of either side both are lines, so the error is a line there, and
 * the relative error a ratio of lines (monotone) or, where |f| < rel_floor,
 * a line over a constant: every maximum is at a knot of one or the other or
 * where the truth crosses +-rel_floor.  One walk visits exactly those
 * points, each knot from both sides (at a jump the one-sided limit counts).
 *
 * Analytic truths (laws, functions): on each segment's own line the error is
 * smooth.  A grid brackets its maxima; each grid maximum (also at a segment
 * end or tied with a neighbour, where a probe looks for a bracket) is then
 * refined by GSL's Brent minimiser.  The result is the largest value met,
 * always a real error at a real point. */
#include "pwl/pwl.h"

#include <math.h>
#include <stdlib.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_min.h>

#define BRENT_ITERS 100
#define BRENT_UTOL 1e-7 /* bracket width in units of the bracket (value: ~1e-14) */
#define PROBE_HALVINGS 16

/* ---- Piecewise-linear truths: the exact walk ---------------------------- */

/* A piecewise-linear truth: knots x[0..nseg], piece k from ya[k] to yb[k]. */
typedef struct pl_ref {
  const double *x, *ya, *yb;
  size_t nseg;
} pl_ref;

/* Running maxima and the rms sums of one walk. */
typedef struct walk {
  double floor, sum;
  size_t cnt;
  sw_compare *out;
} walk;

/* First index i in [0, n) with x[i] > v, n when none. */
static size_t first_above(const double *x, size_t n, double v)
{
  size_t a = 0, b = n;
  while (a < b) {
    size_t mid = a + (b - a) / 2;
    if (x[mid] > v) b = mid; else a = mid + 1;
  }
  return a;
}

/* Values of the truth just left and right of x, inside its knots; *j is a
 * cursor that only moves forward. */
static void ref_sides(const pl_ref *r, size_t *j, double x, double *left, double *right)
{
  double t;
  while (*j + 1 < r->nseg && x >= r->x[*j + 1]) (*j)++;
  if (x == r->x[*j]) {
    *right = r->ya[*j];
    *left = *j > 0 ? r->yb[*j - 1] : *right;
    return;
  }
  t = (x - r->x[*j]) / (r->x[*j + 1] - r->x[*j]);
  *right = *left = x == r->x[*j + 1] ? r->yb[*j] : r->ya[*j] + t * (r->yb[*j] - r->ya[*j]);
}

/* The model's values just left and right of x (they differ at a jump);
 * outside its knots its extension rule, which is continuous. */
static int model_sides(const sw_pwl *m, size_t *k, double x, double *left, double *right,
                       sw_err *err)
{
  if (x < m->x[0] || x > m->x[m->nseg]) {
    int st = sw_pwl_eval(m, x, right, err);
    *left = *right;
    return st;
  }
  while (*k + 1 < m->nseg && x >= m->x[*k + 1]) (*k)++;
  *right = sw_pwl_line(m, *k, x);
  *left = *k > 0 && x == m->x[*k] ? sw_pwl_line(m, *k - 1, x) : *right;
  return SW_OK;
}

/* One pair (model a, truth b) at x into the maxima. */
static void visit(walk *w, double a, double b, double x)
{
  sw_compare *o = w->out;
  double d = fabs(a - b);
  if (d > o->max_abs) { o->max_abs = d; o->x_abs = x; }
  if (w->floor > 0 || b != 0) {
    double rel = d / (fabs(b) > w->floor ? fabs(b) : w->floor);
    if (rel > o->max_rel) { o->max_rel = rel; o->x_rel = x; }
  } else if (!o->rel_undefined) {
    o->rel_undefined = 1;
    o->x_zero = x;
  }
}

/* Inside (p, q), where model and truth are lines from (pa, pb) to (qa, qb):
 * the places where the relative error's denominator changes form. */
static void visit_between(walk *w, double p, double pa, double pb, double q, double qa, double qb)
{
  int s;
  if (!(w->floor > 0)) {
    if (pb != 0 && qb != 0 && (pb > 0) != (qb > 0) && !w->out->rel_undefined) {
      w->out->rel_undefined = 1;
      w->out->x_zero = p + (q - p) * (pb / (pb - qb));
    }
    return;
  }
  for (s = -1; s <= 1; s += 2) {
    double lvl = s * w->floor, t;
    if (!((pb - lvl) * (qb - lvl) < 0)) continue;
    t = (lvl - pb) / (qb - pb);
    visit(w, pa + t * (qa - pa), lvl, p + t * (q - p));
  }
}

/* The walk over lo, hi and every knot of m and r between them.  samples:
 * r's knots are samples, and the rms is taken at them; else the rms of the
 * error (a line between points) is integrated. */
static int walk_exact(const sw_pwl *m, const pl_ref *r, double lo, double hi, int samples,
                      walk *w, sw_err *err)
{
  size_t ia = first_above(m->x, m->nseg + 1, lo), ib = first_above(r->x, r->nseg + 1, lo);
  size_t k = sw_pwl_locate(m, lo), j = ib > 0 ? ib - 1 : 0, pts = 0;
  double x = lo, p = lo, pa = 0, pb = 0, integral = 0, psum = 0;
  if (j >= r->nseg) j = r->nseg - 1;
  for (;;) {
    double al, ar, bl, br, next = hi;
    int st = model_sides(m, &k, x, &al, &ar, err);
    if (st) return st;
    ref_sides(r, &j, x, &bl, &br);
    if (x > lo) {
      visit_between(w, p, pa, pb, x, al, bl);
      visit(w, al, bl, x);
      double d0 = pa - pb, d1 = al - bl; /* the error is a line from d0 to d1 */
      integral += (x - p) * (d0 * d0 + d0 * d1 + d1 * d1) / 3;
    }
    visit(w, ar, br, x); /* the values at x itself: the right-hand ones */
    pts++;
    psum += (ar - br) * (ar - br);
    if (samples && (x == r->x[j] || x == r->x[j + 1])) {
      w->sum += (ar - br) * (ar - br);
      w->cnt++;
    }
    if (x >= hi) break;
    p = x; pa = ar; pb = br;
    while (ia <= m->nseg && m->x[ia] <= x) ia++;
    while (ib <= r->nseg && r->x[ib] <= x) ib++;
    if (ia <= m->nseg && m->x[ia] < next) next = m->x[ia];
    if (ib <= r->nseg && r->x[ib] < next) next = r->x[ib];
    x = next;
  }
  w->out->npoints = pts;
  if (!samples) w->out->rms = sqrt(integral / (hi - lo));
  else w->out->rms = w->cnt ? sqrt(w->sum / (double)w->cnt) : sqrt(psum / (double)pts);
  return SW_OK;
}

static int compare_exact(const sw_pwl *m, const pl_ref *r, double lo, double hi, double floor,
                         int samples, sw_compare *out, sw_err *err)
{
  walk w;
  int st;
  w.floor = floor > 0 ? floor : 0;
  w.sum = 0;
  w.cnt = 0;
  w.out = out;
  st = walk_exact(m, r, lo, hi, samples, &w, err);
  out->exact = 1;
  if (out->rel_undefined) out->max_rel = NAN;
  return st;
}

/* ---- Analytic truths: grid, brackets, Brent ------------------------------ */

typedef struct err_ctx {
  const sw_pwl *m;
  const sw_curve *c;
  double floor;  /* denominator floor for relative error */
  int rel;       /* 0: |m - f|, 1: |m - f| / max(|f|, floor) */
  size_t k;      /* the segment whose line is measured */
  int inside;    /* 0: the piece lies outside the knots (extension rule) */
  double xl, w;  /* Brent's coordinate: x = xl + (u - 1) * w, u in [1, 2] */
  sw_err *err;
  int failed;
  int zero_hit;  /* relative error met f = 0 with no floor */
  double x_zero;
} err_ctx;

/* The current piece's line at x minus the curve, and the curve. */
static int piece_error(err_ctx *e, double x, double *d, double *f)
{
  double ym;
  int st = sw_curve_eval(e->c, x, f, e->err);
  if (st) return st;
  if (e->inside) ym = sw_pwl_line(e->m, e->k, x);
  else if ((st = sw_pwl_eval(e->m, x, &ym, e->err))) return st;
  *d = ym - *f;
  return SW_OK;
}

static double measure(err_ctx *e, double x, double d, double f)
{
  if (!e->rel) return fabs(d);
  if (!(e->floor > 0) && f == 0) { /* a zero between grid points */
    if (!e->zero_hit) { e->zero_hit = 1; e->x_zero = x; }
    return 0;
  }
  return fabs(d) / (fabs(f) > e->floor ? fabs(f) : e->floor);
}

/* The measured error at x; *st set on a failure. */
static double error_at(err_ctx *e, double x, int *st)
{
  double d, f;
  if ((*st = piece_error(e, x, &d, &f))) return 0;
  return measure(e, x, d, f);
}

/* GSL minimises: minus the error, in Brent's coordinate. */
static double neg_error(double u, void *p)
{
  err_ctx *e = p;
  int st;
  double v;
  if (e->failed) return NAN;
  v = error_at(e, e->xl + (u - 1) * e->w, &st);
  if (st) { e->failed = 1; return NAN; }
  return -v;
}

/* Refines the bracket xa < xb < xc (error vb above va and vc) with Brent;
 * the best value met goes into *best. */
static int brent_max(err_ctx *e, gsl_min_fminimizer *s, double xa, double xb, double xc,
                     double va, double vb, double vc, double *best, double *xbest)
{
  gsl_function F;
  int st, it;
  F.function = neg_error;
  F.params = e;
  e->xl = xa;
  e->w = xc - xa;
  st = gsl_min_fminimizer_set_with_values(s, &F, 1 + (xb - xa) / e->w, -vb, 1, -va, 2, -vc);
  if (st != GSL_SUCCESS)
    return sw_err_set(e->err, SW_ENUMERIC, "error refinement near x = %g failed: %s", xb,
                      gsl_strerror(st));
  for (it = 0; it < BRENT_ITERS; it++) {
    st = gsl_min_fminimizer_iterate(s);
    if (e->failed) return e->err ? e->err->code : SW_ECALLBACK;
    if (st != GSL_SUCCESS)
      return sw_err_set(e->err, SW_ENUMERIC, "error refinement near x = %g failed: %s", xb,
                        gsl_strerror(st));
    if (gsl_min_test_interval(gsl_min_fminimizer_x_lower(s), gsl_min_fminimizer_x_upper(s),
                              BRENT_UTOL, 0) == GSL_SUCCESS)
      break;
  }
  if (-gsl_min_fminimizer_f_minimum(s) > *best) {
    *best = -gsl_min_fminimizer_f_minimum(s);
    *xbest = e->xl + (gsl_min_fminimizer_x_minimum(s) - 1) * e->w;
  }
  return SW_OK;
}

/* A grid maximum at xi (value vi) with a neighbour xj no higher, but no
 * bracket: a point between them above vi makes one.  Halfway first; then
 * next to xi, where a smooth error rising from xi must show (close enough
 * that a peak nearer still is within rounding of vi); then halving. */
static int probe_side(err_ctx *e, gsl_min_fminimizer *s, double xi, double vi, double xj,
                      double vj, double *best, double *xbest)
{
  int st, t;
  double q = xi + 0.5 * (xj - xi), vq = error_at(e, q, &st);
  if (st) return st;
  if (!(vq > vi)) {
    q = xi + ldexp(xj - xi, -PROBE_HALVINGS);
    vq = error_at(e, q, &st);
    if (st) return st;
    if (!(vq > vi) || q == xi) return SW_OK;
    for (t = 2; t < PROBE_HALVINGS; t++) {
      double q2 = xi + ldexp(xj - xi, -t), v2 = error_at(e, q2, &st);
      if (st) return st;
      if (v2 > vi) { q = q2; vq = v2; break; }
    }
  }
  if (vq > *best) { *best = vq; *xbest = q; }
  if (xi < xj) return brent_max(e, s, xi, q, xj, vi, vq, vj, best, xbest);
  return brent_max(e, s, xj, q, xi, vj, vq, vi, best, xbest);
}

/* Maxima of one measure on one piece, grid points xs[0..n-1] (its ends
 * included, measured on the piece's own line): values in v.  A run of equal
 * values counts as one point, bracketed by the first lower value on each
 * side; at a piece end a probe looks for the bracket. */
static int piece_max(err_ctx *e, gsl_min_fminimizer *s, const double *xs, const double *v,
                     size_t n, double *best, double *xbest)
{
  size_t i, r;
  int st = SW_OK;
  for (i = 0; i < n; i++)
    if (v[i] > *best) { *best = v[i]; *xbest = xs[i]; }
  for (i = 0; i < n && !st; i = r) {
    int has_l = i > 0;
    for (r = i + 1; r < n && v[r] == v[i]; r++) {}
    if (!(v[i] > 0) || (has_l && v[i - 1] > v[i]) || (r < n && v[r] > v[i])) continue;
    if (has_l && r < n)
      st = brent_max(e, s, xs[i - 1], xs[i], xs[r], v[i - 1], v[i], v[r], best, xbest);
    else if (r < n)
      st = probe_side(e, s, xs[i], v[i], xs[r], v[r], best, xbest);
    else if (has_l)
      st = probe_side(e, s, xs[n - 1], v[i], xs[i - 1], v[i - 1], best, xbest);
  }
  return st;
}

/* The grid: lo, hi, every knot and segment middle between them, and n
 * uniform points, less those within a quarter spacing of the others (a
 * near-repeat would make a bracket too narrow to hold its peak).  special
 * is scratch of the same size.  Returns the count. */
static size_t build_grid(const sw_pwl *m, double lo, double hi, size_t n, double *xs,
                         double *special)
{
  size_t i, k, ns = 0, j = 0, g = 0;
  double h = (hi - lo) / (double)(n - 1);
  special[ns++] = lo;
  for (k = 0; k <= m->nseg; k++) { /* knots and middles alternate: sorted */
    double mid = k < m->nseg ? 0.5 * (m->x[k] + m->x[k + 1]) : hi;
    if (m->x[k] > special[ns - 1] && m->x[k] < hi) special[ns++] = m->x[k];
    if (mid > special[ns - 1] && mid < hi) special[ns++] = mid;
  }
  special[ns++] = hi;
  for (i = 1; i + 1 < n; i++) {
    double u = lo + (hi - lo) * (double)i / (double)(n - 1);
    while (j < ns && special[j] <= u) xs[g++] = special[j++];
    if (u - xs[g - 1] >= 0.25 * h && special[j] - u >= 0.25 * h) xs[g++] = u;
  }
  while (j < ns) xs[g++] = special[j++];
  return g;
}

/* Curve values fv at the grid, the rms (model's own values) and the
 * relative error's definedness. */
static int grid_values(err_ctx *e, const double *xs, size_t g, double *fv, sw_compare *out)
{
  size_t i;
  double integral = 0, dp = 0;
  for (i = 0; i < g; i++) {
    double ym, d;
    int st = sw_curve_eval(e->c, xs[i], &fv[i], e->err);
    if (st || (st = sw_pwl_eval(e->m, xs[i], &ym, e->err))) return st;
    d = ym - fv[i];
    if (!out->rel_undefined && e->floor <= 0 &&
        (fv[i] == 0 || (i > 0 && (fv[i] > 0) != (fv[i - 1] > 0)))) {
      out->rel_undefined = 1;
      out->x_zero = xs[i];
    }
    if (i > 0) integral += 0.5 * (d * d + dp * dp) * (xs[i] - xs[i - 1]);
    dp = d;
  }
  out->rms = sqrt(integral / (xs[g - 1] - xs[0]));
  out->npoints = g;
  return SW_OK;
}

/* Each piece (between consecutive knots, or beyond them) on its own line. */
static int pieces_max(err_ctx *e, gsl_min_fminimizer *s, const double *xs, const double *fv,
                      size_t g, double *v, sw_compare *out)
{
  const sw_pwl *m = e->m;
  size_t i0 = 0, i1, kk = 0, i;
  int st;
  while (i0 + 1 < g) {
    double mid;
    for (i1 = i0 + 1; i1 + 1 < g; i1++) { /* the piece ends at the next knot */
      while (kk <= m->nseg && m->x[kk] < xs[i1]) kk++;
      if (kk <= m->nseg && m->x[kk] == xs[i1]) break;
    }
    mid = 0.5 * (xs[i0] + xs[i1]);
    e->inside = mid >= m->x[0] && mid <= m->x[m->nseg];
    e->k = sw_pwl_locate(m, mid);
    for (e->rel = 0; e->rel <= (out->rel_undefined ? 0 : 1); e->rel++) {
      double *best = e->rel ? &out->max_rel : &out->max_abs;
      double *xb = e->rel ? &out->x_rel : &out->x_abs;
      for (i = i0; i <= i1; i++) {
        double d, f = fv[i];
        if (e->inside) d = sw_pwl_line(m, e->k, xs[i]) - f;
        else if ((st = piece_error(e, xs[i], &d, &f))) return st;
        v[i - i0] = measure(e, xs[i], d, f);
      }
      if ((st = piece_max(e, s, xs + i0, v, i1 - i0 + 1, best, xb))) return st;
    }
    i0 = i1;
  }
  return SW_OK;
}

/* At hi the model takes its own value, which differs from the last piece's
 * line when the model jumps there. */
static int own_value_at(err_ctx *e, double x, double f, sw_compare *out)
{
  double ym, d;
  int st = sw_pwl_eval(e->m, x, &ym, e->err);
  if (st) return st;
  d = fabs(ym - f);
  if (d > out->max_abs) { out->max_abs = d; out->x_abs = x; }
  if (!out->rel_undefined) {
    e->rel = 1;
    d = measure(e, x, ym - f, f);
    if (d > out->max_rel) { out->max_rel = d; out->x_rel = x; }
  }
  return SW_OK;
}

static int compare_analytic(err_ctx *e, double lo, double hi, size_t n, sw_compare *out,
                            sw_err *err)
{
  const sw_pwl *m = e->m;
  size_t g, cap = n + 2 * m->nseg + 1;
  double *xs, *fv, *v;
  gsl_min_fminimizer *s = NULL;
  int st = SW_OK;
  xs = sw_alloc(cap, sizeof *xs, err);
  fv = sw_alloc(cap, sizeof *fv, err);
  v = sw_alloc(cap, sizeof *v, err);
  if (xs && fv && v) s = gsl_min_fminimizer_alloc(gsl_min_fminimizer_brent);
  if (!xs || !fv || !v || !s) {
    st = !xs || !fv || !v ? SW_ENOMEM
                          : sw_err_set(err, SW_ENOMEM, "out of memory for the error minimiser");
    goto done;
  }
  g = build_grid(m, lo, hi, n, xs, v);
  if ((st = grid_values(e, xs, g, fv, out))) goto done;
  if ((st = pieces_max(e, s, xs, fv, g, v, out))) goto done;
  if ((st = own_value_at(e, hi, fv[g - 1], out))) goto done;
  if (e->zero_hit && !out->rel_undefined) {
    out->rel_undefined = 1;
    out->x_zero = e->x_zero;
  }
  if (out->rel_undefined) out->max_rel = NAN;
done:
  free(xs);
  free(fv);
  free(v);
  gsl_min_fminimizer_free(s);
  return st;
}

/* ---- Entry points --------------------------------------------------------- */

static void compare_init(sw_compare *out, double lo)
{
  out->max_abs = out->max_rel = out->rms = 0;
  out->x_abs = out->x_rel = lo;
  out->npoints = 0;
  out->rel_undefined = 0;
  out->x_zero = 0;
  out->exact = 0;
}

static int check_range(double lo, double hi, double dlo, double dhi, const char *what,
                       sw_err *err)
{
  if (!sw_isfinite(lo) || !sw_isfinite(hi) || !(lo < hi))
    return sw_err_set(err, SW_EINVAL, "range [%g, %g] must be finite with lo below hi", lo, hi);
  if (lo < dlo || hi > dhi)
    return sw_err_set(err, SW_ERANGE, "range [%g, %g] is outside the %s [%g, %g]", lo, hi, what,
                      dlo, dhi);
  return SW_OK;
}

int sw_pwl_compare(const sw_pwl *m, const sw_curve *c, double lo, double hi,
                   size_t n, double rel_floor, sw_compare *out, sw_err *err)
{
  err_ctx e;
  int st;
  compare_init(out, lo);
  if ((st = check_range(lo, hi, c->lo, c->hi, "curve's domain", err))) return st;
  if (c->kind == SW_CURVE_SAMPLES) {
    pl_ref r;
    r.x = c->x;
    r.ya = c->y;
    r.yb = c->y + 1;
    r.nseg = c->n - 1;
    return compare_exact(m, &r, lo, hi, rel_floor, 1, out, err);
  }
  if (n < 2) n = 2;
  e.m = m;
  e.c = c;
  e.floor = rel_floor > 0 ? rel_floor : 0;
  e.rel = 0;
  e.k = 0;
  e.inside = 1;
  e.xl = 0;
  e.w = 1;
  e.err = err;
  e.failed = 0;
  e.zero_hit = 0;
  e.x_zero = 0;
  return compare_analytic(&e, lo, hi, n, out, err);
}

int sw_pwl_compare_pwl(const sw_pwl *m, const sw_pwl *ref, double lo, double hi,
                       double rel_floor, sw_compare *out, sw_err *err)
{
  pl_ref r;
  int st;
  compare_init(out, lo);
  if ((st = check_range(lo, hi, ref->x[0], ref->x[ref->nseg], "reference model's knots", err)))
    return st;
  r.x = ref->x;
  r.ya = ref->ya;
  r.yb = ref->yb;
  r.nseg = ref->nseg;
  return compare_exact(m, &r, lo, hi, rel_floor, 0, out, err);
}
