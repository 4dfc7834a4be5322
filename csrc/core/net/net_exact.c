/* Newton's method on the exact curves, started at the PWL operating point.
 *
 * The unknowns are the full MNA vector; each device row y - f(x) = 0 is
 * written in the orientation where its law is well conditioned (a diode
 * as i(v) whatever its model gives: v(i) has no value at or below i = -is,
 * where reverse bias and cut-off live).  Every step solves the Jacobian by
 * GSL's LU, is cut where a junction's tangent cannot be trusted
 * (sw_curve_limit_step), and is halved until the residual falls.  When
 * that fails, a continuation blends each device's law from its PWL model
 * (lambda = 0, solved by the PWL point) to its exact curve (lambda = 1),
 * lambda rising in steps and Newton at each step starting from the last.
 * Devices without an exact curve keep their PWL model throughout. */
#include "net/net.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_permutation.h>

#define BIG 1e100        /* stands for an overflowing law: the step is halved */
#define TOL_EXACT 1e-9   /* relative residual of every row at the answer */
#define TOL_STEP 1e-6    /* ... at an intermediate continuation step */

enum { NT_OK = 0, NT_FAIL = 1 };  /* Newton's outcome; < 0: error set */

typedef struct dev_law {
  const sw_curve *cv;  /* exact law in the solve orientation, or NULL */
  sw_curve flip;       /* the user's curve inverted, when cv points here */
  int so;              /* solve orientation: 1 when x is the current */
  int ux;              /* the user's curve's orientation (for messages) */
  double floor;        /* slope floor in the Jacobian */
  double w;            /* PWL residual to solve-orientation units */
} dev_law;

typedef struct exact_ctx {
  const sw_net *net;
  dev_law *law;
  gsl_matrix *A, *J, *LU;   /* A: linear rows (device rows unused) */
  gsl_vector *b, *F, *Ft, *M, *dy, *y, *yt, *ys, *y0;
  gsl_permutation *perm;
  double lambda;
  sw_err *err;
  size_t its;               /* accepted Newton steps, every stage */
  int limited;              /* some step was cut or halved */
} exact_ctx;

static double clampbig(double x) { return sw_isfinite(x) ? x : BIG; }

static int copy(exact_ctx *c, gsl_vector *dst, const gsl_vector *src)
{
  if (!gsl_vector_memcpy(dst, src)) return 0;
  return sw_err_set(c->err, SW_ENUMERIC, "exact: vector copy failed");
}

static double port_v(const sw_net *net, const sw_net_dev *d, const gsl_vector *y)
{
  const sw_net_el *e = &net->el[d->el];
  return (e->na ? gsl_vector_get(y, e->na - 1) : 0) - (e->nb ? gsl_vector_get(y, e->nb - 1) : 0);
}

/* The device's PWL line at its model input xm: value and slope. */
static void pwl_line(const sw_net_dev *d, double xm, double *f, double *df)
{
  const sw_net_seg *g = &d->seg[sw_net_locate(d, xm)];
  *f = g->slope * xm + g->icpt;
  *df = g->slope;
}

/* Law of device k in its solve orientation at x: 0 evaluated, 1 outside
 * the law's domain (it continues on its tangent at the nearest end, so
 * steps stay sane; the caller reports a final point outside), -1 when a
 * callback failed (err set). */
static int law_at(exact_ctx *c, size_t k, double x, double *y, double *dy)
{
  const sw_curve *cv = c->law[k].cv;
  double xe = x, slack;
  int outside = 0;
  sw_err e;
  if (!cv) { pwl_line(&c->net->dev[k], x, y, dy); return 0; }
  slack = sw_curve_bounded(cv) ? 1e-9 * (cv->hi - cv->lo) : 0;
  if (x < cv->lo) { xe = cv->lo; outside = x < cv->lo - slack; }
  if (x > cv->hi) { xe = cv->hi; outside = x > cv->hi + slack; }
  if (sw_curve_eval(cv, xe, y, &e) || sw_curve_deriv(cv, xe, dy, &e)) {
    if (e.code == SW_ECALLBACK) { *c->err = e; return -1; }
    *y = BIG; *dy = 0;
    return 1;
  }
  *y = clampbig(*y + *dy * (x - xe)); *dy = clampbig(*dy);
  return outside;
}

/* Row of device k at lambda: residual r, its partials in v and i, and the
 * size of its terms (for the relative test). */
static int dev_row(exact_ctx *c, size_t k, double v, double i, double *r,
                   double *rv, double *ri, double *mag)
{
  const sw_net_dev *d = &c->net->dev[k];
  const dev_law *L = &c->law[k];
  double xs = L->so ? i : v, ys = L->so ? v : i, f, df, g;
  if (law_at(c, k, xs, &f, &df) < 0) return -1;
  g = fabs(df) >= L->floor ? df : L->floor;
  *r = clampbig(ys - f); *mag = fabs(ys) + fabs(f);
  if (L->so) { *rv = 1; *ri = -g; } else { *ri = 1; *rv = -g; }
  if (L->cv && c->lambda < 1) {   /* blend with the PWL model's row */
    double xm = d->x_is_i ? i : v, ym = d->x_is_i ? v : i, p, dp, t = c->lambda, s = 1 - t;
    pwl_line(d, xm, &p, &dp);
    *r = t * *r + s * L->w * (ym - p);
    *mag = t * *mag + s * fabs(L->w) * (fabs(ym) + fabs(p));
    if (d->x_is_i) { *rv = t * *rv + s * L->w; *ri = t * *ri - s * L->w * dp; }
    else { *ri = t * *ri + s * L->w; *rv = t * *rv - s * L->w * dp; }
  }
  return 0;
}

/* Residual F, Jacobian J (may be NULL) and row sizes M at y. */
static int fill(exact_ctx *c, const gsl_vector *y, gsl_vector *F, gsl_matrix *J)
{
  const sw_net *net = c->net;
  size_t N = net->nunk, r, k;
  for (r = 0; r < net->nlin; r++) {
    double acc = -gsl_vector_get(c->b, r), mag = fabs(gsl_vector_get(c->b, r));
    for (k = 0; k < N; k++) {
      double t = gsl_matrix_get(c->A, r, k) * gsl_vector_get(y, k);
      acc += t; mag += fabs(t);
      if (J) gsl_matrix_set(J, r, k, gsl_matrix_get(c->A, r, k));
    }
    gsl_vector_set(F, r, acc); gsl_vector_set(c->M, r, mag);
  }
  for (k = 0; k < net->ndev; k++) {
    const sw_net_dev *d = &net->dev[k];
    const sw_net_el *e = &net->el[d->el];
    double res, rv, ri, mag;
    if (dev_row(c, k, port_v(net, d, y), gsl_vector_get(y, d->col), &res, &rv, &ri, &mag))
      return -1;
    gsl_vector_set(F, d->col, res); gsl_vector_set(c->M, d->col, mag);
    if (!J) continue;
    for (r = 0; r < N; r++) gsl_matrix_set(J, d->col, r, 0);
    if (e->na) *gsl_matrix_ptr(J, d->col, e->na - 1) += rv;
    if (e->nb) *gsl_matrix_ptr(J, d->col, e->nb - 1) -= rv;
    *gsl_matrix_ptr(J, d->col, d->col) += ri;
  }
  return 0;
}

static double norm2(const gsl_vector *F)
{
  double s = 0;
  size_t r;
  for (r = 0; r < F->size; r++) s += gsl_vector_get(F, r) * gsl_vector_get(F, r);
  return sqrt(s);
}

/* Every row's residual small against the size of its terms (a step-size
 * test alone also stops where backtracking stalls short of a root). */
static int residual_ok(const exact_ctx *c, double tol)
{
  size_t r;
  for (r = 0; r < c->F->size; r++)
    if (!(fabs(gsl_vector_get(c->F, r)) <= tol * gsl_vector_get(c->M, r) + 1e-300)) return 0;
  return 1;
}

/* Newton step dy = -J^-1 F; non-zero when J is singular or dy not finite. */
static int newton_step(exact_ctx *c)
{
  int signum;
  size_t r;
  if (gsl_matrix_memcpy(c->LU, c->J) || gsl_linalg_LU_decomp(c->LU, c->perm, &signum)) return 1;
  for (r = 0; r < c->LU->size1; r++) {
    double u = gsl_matrix_get(c->LU, r, r);
    if (!(fabs(u) > 0) || !sw_isfinite(u)) return 1;
  }
  if (gsl_linalg_LU_solve(c->LU, c->perm, c->F, c->dy) || gsl_vector_scale(c->dy, -1.0)) return 1;
  for (r = 0; r < c->dy->size; r++) if (!sw_isfinite(gsl_vector_get(c->dy, r))) return 1;
  return 0;
}

/* The step is below rounding: relative to each unknown, with a floor a
 * trillionth of the largest unknown of its kind (voltages, currents). */
static int step_small(const exact_ctx *c, const gsl_vector *y)
{
  size_t N = y->size, nv = c->net->nnodes - 1, r;
  double big[2] = { 0, 0 };
  for (r = 0; r < N; r++) {
    double a = fabs(gsl_vector_get(y, r));
    if (a > big[r >= nv]) big[r >= nv] = a;
  }
  for (r = 0; r < N; r++) {
    double scale = fabs(gsl_vector_get(y, r)) + 1e-12 * big[r >= nv];
    if (!(fabs(gsl_vector_get(c->dy, r)) <= 1e-14 * scale)) return 0;
  }
  return 1;
}

/* Largest fraction of the step dy that every device's law allows. */
static double junction_limit(const exact_ctx *c, const gsl_vector *y)
{
  const sw_net *net = c->net;
  double alpha = 1;
  size_t k;
  for (k = 0; k < net->ndev; k++) {
    const sw_net_dev *d = &net->dev[k];
    const dev_law *L = &c->law[k];
    double dx, x0, lim;
    if (!L->cv) continue;
    dx = L->so ? gsl_vector_get(c->dy, d->col) : port_v(net, d, c->dy);
    x0 = L->so ? gsl_vector_get(y, d->col) : port_v(net, d, y);
    lim = sw_curve_limit_step(L->cv, x0, dx);
    if (dx != 0 && lim / dx >= 0 && lim / dx < alpha) alpha = lim / dx;
  }
  return alpha;
}

/* Tries y + t*dy for t = alpha, alpha/2, ... until the residual falls:
 * 1 accepted (y, F, J and M follow), 0 none, -1 error. */
static int line_search(exact_ctx *c, double alpha, double *fn)
{
  size_t N = c->y->size, r;
  double t;
  for (t = alpha; t > 1e-12 * alpha; t *= 0.5) {
    double ft;
    for (r = 0; r < N; r++)
      gsl_vector_set(c->yt, r, gsl_vector_get(c->y, r) + t * gsl_vector_get(c->dy, r));
    if (fill(c, c->yt, c->Ft, c->J)) return -1;
    ft = norm2(c->Ft);
    if (sw_isfinite(ft) && ft <= (1 - 1e-4 * t) * *fn) {
      if (t < 1) c->limited = 1;
      if (copy(c, c->y, c->yt) || copy(c, c->F, c->Ft)) return -1;
      *fn = ft;
      return 1;
    }
  }
  return 0;
}

/* 1 when some row can no longer resolve its input (see
 * sw_curve_newton_lost): the other orientation must take over. */
static int lost(const exact_ctx *c)
{
  size_t k;
  for (k = 0; k < c->net->ndev; k++) {
    const sw_net_dev *d = &c->net->dev[k];
    const dev_law *L = &c->law[k];
    if (L->cv && L->so && sw_curve_newton_lost(L->cv, gsl_vector_get(c->y, d->col))) return 1;
  }
  return 0;
}

/* Damped, junction-limited Newton on c->y at c->lambda, at most cap steps.
 * It stops at a point whose rows meet tol once the step is below rounding
 * or no step lowers the residual. */
static int newton(exact_ctx *c, size_t cap, double tol)
{
  size_t it;
  double fn;
  if (fill(c, c->y, c->F, c->J)) return -1;
  fn = norm2(c->F);
  for (it = 0;; it++) {
    int ok = residual_ok(c, tol), acc;
    if (it == cap || !sw_isfinite(fn) || newton_step(c)) return ok ? NT_OK : NT_FAIL;
    if (ok && step_small(c, c->y)) return NT_OK;
    acc = line_search(c, junction_limit(c, c->y), &fn);
    if (acc < 0) return -1;
    if (acc == 0) return ok ? NT_OK : NT_FAIL;
    c->its++;
    if (lost(c)) return NT_FAIL;
  }
}

/* From the PWL point (lambda = 0) to the exact laws (lambda = 1): each
 * step's Newton starts at the last step's answer; a failed step is retried
 * at a quarter of its length, a quick one lets the next step double. */
static int continuation(exact_ctx *c, size_t max_iter, size_t *steps, double *reached)
{
  double lam = 0, dl = 0.125;
  size_t cap = max_iter < 50 ? max_iter : 50, budget = c->its + 20 * max_iter;
  if (copy(c, c->ys, c->y0)) return -1;
  *steps = 0;
  while (lam < 1) {
    double to = lam + dl > 1 - 1e-9 ? 1 : lam + dl;
    size_t before = c->its;
    int st;
    c->lambda = to;
    if (copy(c, c->y, c->ys)) return -1;
    st = newton(c, to == 1 ? max_iter : cap, to == 1 ? TOL_EXACT : TOL_STEP);
    if (st < 0) return st;
    if (st == NT_OK) {
      if (copy(c, c->ys, c->y)) return -1;
      lam = to; (*steps)++;
      if (c->its - before <= 6 && dl < 0.5) dl *= 2;
    } else if ((dl *= 0.25) < 1e-7) break;
    if (c->its > budget) break;
  }
  *reached = lam;
  return lam == 1 ? NT_OK : NT_FAIL;
}

/* A Jacobian floor for an i(v) law without one of its own: 1e-15 of the
 * model's steepest conductance, so that a string of devices whose law is
 * flat in rounding (deep reverse bias) keeps a solvable Jacobian.  The
 * residual keeps the exact law: the answer does not move. */
static double conductance_floor(const sw_net_dev *d)
{
  double g = 0;
  size_t s;
  for (s = 0; s < d->nseg; s++) if (fabs(d->seg[s].slope) > g) g = fabs(d->seg[s].slope);
  return 1e-15 * g;
}

/* Each device's law in its solve orientation, chosen at the PWL point
 * (all_iv: as for a current at or below zero, i(v) for a diode), and the
 * scale w = -1/s that turns its PWL row into that orientation's units (s:
 * the model's slope at the start, else the exact law's, else 1), so that
 * the blend of two rising laws rises.  1 when some row is v(i). */
static int setup_laws(exact_ctx *c, const sw_curve *const *curves, const sw_net_op *op, int all_iv)
{
  const sw_net *net = c->net;
  size_t k;
  int turned = 0;
  for (k = 0; k < net->ndev; k++) {
    const sw_net_dev *d = &net->dev[k];
    dev_law *L = &c->law[k];
    double v = op->v[d->el], i = all_iv ? -INFINITY : op->i[d->el], p, s;
    double xm = d->x_is_i ? op->i[d->el] : v;
    sw_err e;
    L->cv = curves ? curves[k] : NULL;
    L->so = L->ux = d->x_is_i;
    L->w = 1;
    L->floor = 0;
    if (!L->cv) continue;
    if (L->cv->x_is_i == d->x_is_i &&
        sw_curve_newton_flip(L->cv, d->x_is_i ? i : v, d->x_is_i ? v : i) &&
        sw_curve_flip(L->cv, &L->flip, &e) == SW_OK) {
      double xs = d->x_is_i ? v : op->i[d->el], f = 0, df = 0;
      L->cv = &L->flip;
      L->so = !d->x_is_i;
      pwl_line(d, xm, &p, &s);
      if (!(s > 0 && sw_isfinite(s)))
        s = sw_curve_eval(L->cv, xs, &f, &e) || sw_curve_deriv(L->cv, xs, &df, &e) ? 0 : 1 / df;
      if (!(s > 0 && sw_isfinite(s))) s = 1;
      L->w = -1 / s;
    }
    L->floor = sw_curve_slope_floor(L->cv);
    if (L->floor == 0 && !L->so) L->floor = conductance_floor(d);
    if (L->so) turned = 1;
  }
  return turned;
}

/* 1 when the answer leaves some device's law domain (beyond rounding):
 * *k gets the device, *x its input in the user's terms; -1 on error. */
static int outside_at(exact_ctx *c, size_t *k, double *x)
{
  const sw_net *net = c->net;
  for (*k = 0; *k < net->ndev; (*k)++) {
    const sw_net_dev *d = &net->dev[*k];
    double v = port_v(net, d, c->y), i = gsl_vector_get(c->y, d->col), f, df;
    int lw = law_at(c, *k, c->law[*k].so ? i : v, &f, &df);
    if (lw < 0) return -1;
    if (lw > 0) { *x = c->law[*k].ux ? i : v; return 1; }
  }
  return 0;
}

#define NO_REACH "exact: Newton's method did not reach the exact laws: neither from the PWL " \
  "point (%zu iterations) nor by continuation from the PWL model toward the exact curves "

static int fail_message(exact_ctx *c, size_t first, size_t steps, double reached)
{
  if (reached > 0)
    return sw_err_set(c->err, SW_ENUMERIC, NO_REACH "(%zu steps, stopped at lambda = %.3g of 1; "
                      "no solution of the exact circuit near the PWL point?)",
                      first, steps, reached);
  return sw_err_set(c->err, SW_ENUMERIC, NO_REACH "(no step of it converged; no solution of the "
                    "exact circuit near the PWL point?)", first);
}

static int outside_message(exact_ctx *c, const sw_curve *const *curves, size_t k, double x)
{
  const sw_net_dev *d = &c->net->dev[k];
  const sw_curve *cv = curves[k];
  return sw_err_set(c->err, SW_ENUMERIC, "exact: Newton's method ended at %s = %g, outside the "
                    "domain of %s's exact law [%g, %g]: the exact circuit has no solution there "
                    "(extend the curve's range)",
                    c->law[k].ux ? "i" : "v", x, c->net->el[d->el].name, cv->lo, cv->hi);
}

static int alloc_ctx(exact_ctx *c, size_t N, size_t m, sw_err *err)
{
  c->A = gsl_matrix_alloc(N, N); c->J = gsl_matrix_alloc(N, N); c->LU = gsl_matrix_alloc(N, N);
  c->b = gsl_vector_alloc(N); c->F = gsl_vector_alloc(N); c->Ft = gsl_vector_alloc(N);
  c->M = gsl_vector_alloc(N); c->dy = gsl_vector_alloc(N); c->y = gsl_vector_alloc(N);
  c->yt = gsl_vector_alloc(N); c->ys = gsl_vector_alloc(N); c->y0 = gsl_vector_alloc(N);
  c->perm = gsl_permutation_alloc(N);
  c->law = sw_alloc(m ? m : 1, sizeof *c->law, err);
  if (!c->A || !c->J || !c->LU || !c->b || !c->F || !c->Ft || !c->M || !c->dy || !c->y ||
      !c->yt || !c->ys || !c->y0 || !c->perm || !c->law)
    return sw_err_set(err, SW_ENOMEM, "out of memory in exact");
  return SW_OK;
}

static void free_ctx(exact_ctx *c)
{
  gsl_matrix_free(c->A); gsl_matrix_free(c->J); gsl_matrix_free(c->LU);
  gsl_vector_free(c->b); gsl_vector_free(c->F); gsl_vector_free(c->Ft);
  gsl_vector_free(c->M); gsl_vector_free(c->dy); gsl_vector_free(c->y);
  gsl_vector_free(c->yt); gsl_vector_free(c->ys); gsl_vector_free(c->y0);
  gsl_permutation_free(c->perm);
  free(c->law);
}

/* The answer into op: segments located, port values, iterations. */
static int finish_op(exact_ctx *c, sw_net_op *op, sw_err *err)
{
  const sw_net *net = c->net;
  size_t k;
  int rc, *state = sw_alloc(net->ndev ? net->ndev : 1, sizeof *state, err);
  if (!state) return SW_ENOMEM;
  for (k = 0; k < net->ndev; k++) {
    const sw_net_dev *d = &net->dev[k];
    double x = d->x_is_i ? gsl_vector_get(c->y, d->col) : port_v(net, d, c->y);
    state[k] = (int)sw_net_locate(d, x);
  }
  rc = sw_net_op_from_y(net, c->y->data, state, op, err);
  free(state);
  if (rc) return rc;
  memset(op->on_bp, 0, net->ndev);
  op->iterations = c->its;
  return SW_OK;
}

/* Newton from the PWL point, each law turned as the PWL point says:
 * *st gets Newton's outcome; returns 1 when some row is v(i). */
static int direct(exact_ctx *c, const sw_curve *const *curves, const sw_net_op *op,
                  size_t max_iter, int *st)
{
  int turned = setup_laws(c, curves, op, 0);
  c->lambda = 1;
  *st = copy(c, c->y, c->y0) ? -1 : newton(c, max_iter, TOL_EXACT);
  return turned;
}

int sw_net_exact_run(const sw_net *net, const sw_curve *const *curves, sw_net_op *op,
                     size_t max_iter, sw_net_exact_info *info, sw_err *err)
{
  size_t N = net->nunk, k, first, steps = 0, out;
  double reached = 0, x = 0;
  const char *method;
  exact_ctx c;
  int rc, st, turned;
  memset(&c, 0, sizeof c);
  c.net = net; c.err = err; c.lambda = 1;
  if ((rc = alloc_ctx(&c, N, net->ndev, err))) goto done;
  if (max_iter == 0) max_iter = 200;
  if ((rc = sw_net_stamp(net, op->state, c.A, c.b))) goto done;
  for (k = 1; k < net->nnodes; k++) gsl_vector_set(c.y0, k - 1, op->vnode[k]);
  for (k = 0; k < net->nel; k++)
    if (net->el[k].col != SW_NET_NONE) gsl_vector_set(c.y0, net->el[k].col, op->i[k]);
  /* Newton with each law turned as the PWL point says; then on from where
   * it stopped with every junction as i(v) (a v(i) row cannot resolve deep
   * reverse bias); then the continuation */
  turned = direct(&c, curves, op, max_iter, &st);
  if (st == NT_FAIL && turned) {
    setup_laws(&c, curves, op, 1);
    st = newton(&c, max_iter, TOL_EXACT);
  }
  first = c.its;
  method = c.limited ? "limited" : "newton";
  if (st == NT_FAIL) {
    setup_laws(&c, curves, op, 1);
    st = continuation(&c, max_iter, &steps, &reached);
    method = "continuation";
  }
  if (st < 0) { rc = err->code; goto done; }
  if (st == NT_FAIL) { rc = fail_message(&c, first, steps, reached); goto done; }
  if (curves && (st = outside_at(&c, &out, &x))) {
    rc = st < 0 ? err->code : outside_message(&c, curves, out, x);
    goto done;
  }
  if ((rc = finish_op(&c, op, err))) goto done;
  if (info) { info->method = method; info->iterations = c.its; info->steps = steps; }
done:
  free_ctx(&c);
  return rc;
}

int sw_net_exact(const sw_net *net, const sw_curve *const *curves,
                 sw_net_op *op, size_t max_iter, sw_err *err)
{
  return sw_net_exact_run(net, curves, op, max_iter, NULL, err);
}
