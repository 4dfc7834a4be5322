/* Newton's method (GSL multiroot, gnewton with its backtracking) on the
 * full MNA unknowns with each device row replaced by its exact law
 * y - f(x) = 0, started at the PWL operating point.  Devices without an
 * exact curve keep their PWL model (evaluated where Newton puts them). */
#include "net/net.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_multiroots.h>

typedef struct exact_ctx {
  const sw_net *net;
  const sw_curve *const *curves;
  gsl_matrix *A;    /* linear rows (device rows unused) */
  gsl_vector *b;
  sw_err *err;
  int failed;       /* a callback curve failed: stop */
} exact_ctx;

#define BIG 1e100     /* stands for an overflowing law: makes gnewton backtrack */

static double clampbig(double x) { return sw_isfinite(x) ? x : BIG; }

/* Law value and slope of device j at x: 0 when evaluated, 1 when x lies
 * outside the law's domain, -1 when a callback failed.  Outside the domain
 * the law continues on its tangent at the nearest end, so Newton's steps stay
 * sane; a final point outside (beyond rounding) is reported by the caller. */
static int law(exact_ctx *c, size_t j, double x, double *y, double *dy)
{
  const sw_net_dev *d = &c->net->dev[j];
  const sw_curve *cv = c->curves ? c->curves[j] : NULL;
  sw_err e;
  int outside = 0;
  if (cv) {
    double xe = x, slack = sw_curve_bounded(cv) ? 1e-9 * (cv->hi - cv->lo) : 0;
    /* v(i) of a diode is undefined at its lower end i = -is itself */
    int open_lo = cv->kind == SW_CURVE_DIODE && cv->x_is_i;
    double lo = open_lo ? cv->lo + 1e-3 * fabs(cv->lo) : cv->lo;
    if (x < lo) { xe = lo; outside = x < cv->lo - slack; }
    if (x > cv->hi) { xe = cv->hi; outside = x > cv->hi + slack; }
    if (sw_curve_eval(cv, xe, y, &e) || sw_curve_deriv(cv, xe, dy, &e)) {
      if (e.code == SW_ECALLBACK) { c->failed = 1; *c->err = e; return -1; }
      *y = BIG; *dy = 0;
      return 1;
    }
    *y += *dy * (x - xe);
  } else if (sw_pwl_eval(&d->model, x, y, &e) || sw_pwl_slope_at(&d->model, x, dy, &e)) {
    *y = BIG; *dy = 0;
    return 1;
  }
  *y = clampbig(*y); *dy = clampbig(*dy);
  return outside;
}

static int fdf(const gsl_vector *y, void *params, gsl_vector *f, gsl_matrix *J)
{
  exact_ctx *c = params;
  const sw_net *net = c->net;
  size_t N = net->nunk, r, k;
  for (r = 0; r < net->nlin; r++) {
    double acc = -gsl_vector_get(c->b, r);
    for (k = 0; k < N; k++) acc += gsl_matrix_get(c->A, r, k) * gsl_vector_get(y, k);
    if (f) gsl_vector_set(f, r, acc);
    if (J) for (k = 0; k < N; k++) gsl_matrix_set(J, r, k, gsl_matrix_get(c->A, r, k));
  }
  for (k = 0; k < net->ndev; k++) {
    const sw_net_dev *d = &net->dev[k];
    const sw_net_el *e = &net->el[d->el];
    double v = (e->na ? gsl_vector_get(y, e->na - 1) : 0) - (e->nb ? gsl_vector_get(y, e->nb - 1) : 0);
    double i = gsl_vector_get(y, d->col), x = d->x_is_i ? i : v, yy = d->x_is_i ? v : i, fx, dfx;
    if (law(c, k, x, &fx, &dfx) < 0) return GSL_EBADFUNC;
    if (f) gsl_vector_set(f, d->col, clampbig(yy - fx));
    if (J) {
      for (r = 0; r < N; r++) gsl_matrix_set(J, d->col, r, 0);
      if (d->x_is_i) {  /* F = v - f(i) */
        if (e->na) *gsl_matrix_ptr(J, d->col, e->na - 1) += 1;
        if (e->nb) *gsl_matrix_ptr(J, d->col, e->nb - 1) -= 1;
        *gsl_matrix_ptr(J, d->col, d->col) -= dfx;
      } else {          /* F = i - f(v) */
        *gsl_matrix_ptr(J, d->col, d->col) += 1;
        if (e->na) *gsl_matrix_ptr(J, d->col, e->na - 1) -= dfx;
        if (e->nb) *gsl_matrix_ptr(J, d->col, e->nb - 1) += dfx;
      }
    }
  }
  return GSL_SUCCESS;
}

static int f_only(const gsl_vector *y, void *p, gsl_vector *f) { return fdf(y, p, f, NULL); }
static int df_only(const gsl_vector *y, void *p, gsl_matrix *J) { return fdf(y, p, NULL, J); }

/* A step-size test alone also stops at a minimum of |F| that is not a
 * root (backtracking shrinks the step to nothing): require every row's
 * residual to be small against the size of its terms.  *outside gets the
 * device index + 1 when a device ended outside its law's domain. */
static int residual_ok(exact_ctx *c, const gsl_vector *y, size_t *outside, double *xout)
{
  const sw_net *net = c->net;
  size_t N = net->nunk, r, k;
  for (r = 0; r < net->nlin; r++) {
    double acc = -gsl_vector_get(c->b, r), mag = fabs(gsl_vector_get(c->b, r));
    for (k = 0; k < N; k++) {
      double t = gsl_matrix_get(c->A, r, k) * gsl_vector_get(y, k);
      acc += t; mag += fabs(t);
    }
    if (!(fabs(acc) <= 1e-9 * mag + 1e-300)) return 0;
  }
  for (k = 0; k < net->ndev; k++) {
    const sw_net_dev *d = &net->dev[k];
    const sw_net_el *e = &net->el[d->el];
    double v = (e->na ? gsl_vector_get(y, e->na - 1) : 0) - (e->nb ? gsl_vector_get(y, e->nb - 1) : 0);
    double i = gsl_vector_get(y, d->col), fx, dfx, yy = d->x_is_i ? v : i;
    int lw = law(c, k, d->x_is_i ? i : v, &fx, &dfx);
    if (lw) { if (lw > 0) { *outside = k + 1; *xout = d->x_is_i ? i : v; } return 0; }
    if (!(fabs(yy - fx) <= 1e-9 * (fabs(yy) + fabs(fx)) + 1e-300)) return 0;
  }
  return 1;
}

int sw_net_exact(const sw_net *net, const sw_curve *const *curves,
                 sw_net_op *op, size_t max_iter, sw_err *err)
{
  size_t N = net->nunk, k, it = 0;
  exact_ctx c;
  gsl_multiroot_function_fdf fn;
  gsl_multiroot_fdfsolver *s = NULL;
  gsl_vector *y0 = gsl_vector_alloc(N);
  int *state = NULL, rc = SW_OK, st = GSL_CONTINUE;
  memset(&c, 0, sizeof c);
  c.net = net; c.curves = curves; c.err = err;
  c.A = gsl_matrix_alloc(N, N); c.b = gsl_vector_alloc(N);
  s = gsl_multiroot_fdfsolver_alloc(gsl_multiroot_fdfsolver_gnewton, N);
  state = sw_alloc(net->ndev, sizeof *state, err);
  if (!y0 || !c.A || !c.b || !s || !state) { rc = sw_err_set(err, SW_ENOMEM, "out of memory in exact"); goto done; }
  if (max_iter == 0) max_iter = 200;
  sw_net_stamp(net, op->state, c.A, c.b);
  for (k = 1; k < net->nnodes; k++) gsl_vector_set(y0, k - 1, op->vnode[k]);
  for (k = 0; k < net->nel; k++)
    if (net->el[k].col != SW_NET_NONE) gsl_vector_set(y0, net->el[k].col, op->i[k]);
  fn.f = f_only; fn.df = df_only; fn.fdf = fdf; fn.n = N; fn.params = &c;
  if (gsl_multiroot_fdfsolver_set(s, &fn, y0)) {
    rc = c.failed ? SW_ECALLBACK : sw_err_set(err, SW_ENUMERIC, "exact: the Newton start could not be evaluated");
    goto done;
  }
  while (st == GSL_CONTINUE && it < max_iter) {
    int ist;
    it++;
    ist = gsl_multiroot_fdfsolver_iterate(s);
    if (c.failed) { rc = SW_ECALLBACK; goto done; }
    if (ist) {
      rc = sw_err_set(err, SW_ENUMERIC, "exact: Newton's method failed at iteration %zu (%s)", it, gsl_strerror(ist));
      goto done;
    }
    st = gsl_multiroot_test_delta(s->dx, s->x, 0, 1e-13);
    if (st == GSL_CONTINUE) st = gsl_multiroot_test_residual(s->f, 1e-300);
  }
  if (st != GSL_SUCCESS) {
    rc = sw_err_set(err, SW_ENUMERIC, "exact: Newton's method did not converge in %zu iterations", max_iter);
    goto done;
  }
  {
    size_t outside = 0;
    double xout = 0;
    if (!residual_ok(&c, s->x, &outside, &xout)) {
      if (c.failed) rc = SW_ECALLBACK;
      else if (outside) {
        const sw_net_dev *d = &net->dev[outside - 1];
        const sw_curve *cv = curves ? curves[outside - 1] : NULL;
        rc = sw_err_set(err, SW_ENUMERIC, "exact: Newton's method ended at %s = %g, outside the domain of %s's exact law [%g, %g]: the exact circuit has no solution there (extend the curve's range)",
                        d->x_is_i ? "i" : "v", xout, net->el[d->el].name, cv ? cv->lo : d->model.x[0], cv ? cv->hi : d->model.x[d->model.nseg]);
      } else
        rc = sw_err_set(err, SW_ENUMERIC, "exact: Newton's method stalled after %zu iterations where the exact laws are not met (no nearby solution of the exact circuit?)", it);
      goto done;
    }
  }
  for (k = 0; k < net->ndev; k++) {
    const sw_net_dev *d = &net->dev[k];
    const sw_net_el *e = &net->el[d->el];
    double v = (e->na ? gsl_vector_get(s->x, e->na - 1) : 0) - (e->nb ? gsl_vector_get(s->x, e->nb - 1) : 0);
    state[k] = (int)sw_net_locate(d, d->x_is_i ? gsl_vector_get(s->x, d->col) : v);
  }
  if ((rc = sw_net_op_from_y(net, s->x->data, state, op, err))) goto done;
  memset(op->on_bp, 0, net->ndev);
  op->iterations = it;
done:
  gsl_vector_free(y0); gsl_matrix_free(c.A); gsl_vector_free(c.b);
  gsl_multiroot_fdfsolver_free(s); free(state);
  return rc;
}
