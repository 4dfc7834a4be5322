/* Modified nodal analysis: stamping, the port reduction by QR, the m x m
 * state systems, the full LU solve of an accepted state, and the stability
 * of an operating point with a small capacitance across each device. */
#include "net/net.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_blas.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>


/* Adds coef * (voltage of node n) to row r. */
static void add_v(gsl_matrix *A, size_t r, size_t n, double coef)
{
  if (n > 0) *gsl_matrix_ptr(A, r, n - 1) += coef;
}

/* Adds coef * (current of element k, na -> nb) to row r; constant parts
 * go to the right-hand side with the opposite sign. */
static void add_current(const sw_net *net, gsl_matrix *A, gsl_vector *rhs,
                        size_t r, size_t k, double coef)
{
  const sw_net_el *e = &net->el[k];
  switch (e->kind) {
  case SW_NET_R:
    if (e->col != SW_NET_NONE) { /* a stiff resistor: its current is an unknown */
      *gsl_matrix_ptr(A, r, e->col) += coef;
      break;
    }
    add_v(A, r, e->na, coef / e->value); add_v(A, r, e->nb, -coef / e->value);
    break;
  case SW_NET_I:
    if (rhs) *gsl_vector_ptr(rhs, r) -= coef * e->value;
    break;
  case SW_NET_VCCS:
    add_v(A, r, e->cp, coef * e->value); add_v(A, r, e->cm, -coef * e->value);
    break;
  case SW_NET_CCCS:
    add_current(net, A, rhs, r, e->ctrl, coef * e->value);
    break;
  default:
    *gsl_matrix_ptr(A, r, e->col) += coef;
  }
}

/* Writes the linear rows (KCL, source equations) and, when state is not
 * NULL, each device's segment row.  A and rhs are zeroed first. */
int sw_net_stamp(const sw_net *net, const int *state, gsl_matrix *A, gsl_vector *rhs)
{
  size_t k;
  gsl_matrix_set_zero(A);
  if (rhs) gsl_vector_set_zero(rhs);
  for (k = 0; k < net->nel; k++) {
    const sw_net_el *e = &net->el[k];
    if (e->na > 0) add_current(net, A, rhs, e->na - 1, k, 1.0);
    if (e->nb > 0) add_current(net, A, rhs, e->nb - 1, k, -1.0);
    if (e->kind == SW_NET_V || e->kind == SW_NET_VCVS || e->kind == SW_NET_CCVS) {
      add_v(A, e->col, e->na, 1); add_v(A, e->col, e->nb, -1);
      if (e->kind == SW_NET_V) { if (rhs) gsl_vector_set(rhs, e->col, e->value);
      } else if (e->kind == SW_NET_VCVS) {
        add_v(A, e->col, e->cp, -e->value);
        add_v(A, e->col, e->cm, e->value);
      } else
        add_current(net, A, rhs, e->col, e->ctrl, -e->value);
    } else if (e->kind == SW_NET_R && e->col != SW_NET_NONE) {
      add_v(A, e->col, e->na, 1); add_v(A, e->col, e->nb, -1);
      *gsl_matrix_ptr(A, e->col, e->col) -= e->value;
    }
  }
  if (state)
    for (k = 0; k < net->ndev; k++) {
      const sw_net_dev *d = &net->dev[k];
      const sw_net_el *e = &net->el[d->el];
      const sw_net_seg *g = &d->seg[state[k]];
      add_v(A, d->col, e->na, g->a); add_v(A, d->col, e->nb, -g->a);
      *gsl_matrix_ptr(A, d->col, d->col) += g->b;
      if (rhs) gsl_vector_set(rhs, d->col, g->c);
    }
  return SW_OK;
}

static double node_of(const double *y, size_t n) { return n ? y[n - 1] : 0.0; }

/* Port values of a full unknown vector (stride: the column step). */
static void ports_of(const sw_net *net, const double *y, size_t stride, size_t j,
                     double *v, double *i)
{
  const sw_net_dev *d = &net->dev[j];
  const sw_net_el *e = &net->el[d->el];
  *v = (e->na ? y[(e->na - 1) * stride] : 0.0) - (e->nb ? y[(e->nb - 1) * stride] : 0.0);
  *i = y[d->col * stride];
}

/* One step of iterative refinement of K (L K = 0) and yp (L yp = s), the
 * residuals summed in long double over the nonzeros of L: QR leaves
 * residuals of the size of eps * |L| * |K|, which a row of KCL mixing unit
 * branch-current coefficients with small conductances turns into relative
 * errors of 1e-12 in small currents; after the step they are of the size
 * of each row's own terms.  Correction: Q1 R1^-T [L K, L yp - s]. */
static int refine_reduction(sw_net *net, const gsl_matrix *L, const gsl_vector *s,
                            const gsl_matrix *Q, const gsl_matrix *R, sw_err *err)
{
  size_t N = net->nunk, nl = net->nlin, m = net->ndev, r, c, j;
  gsl_matrix_const_view R1 = gsl_matrix_const_submatrix(R, 0, 0, nl, nl);
  gsl_matrix_const_view Q1 = gsl_matrix_const_submatrix(Q, 0, 0, N, nl);
  gsl_matrix *W = gsl_matrix_alloc(nl, m + 1), *C = gsl_matrix_alloc(N, m + 1);
  long double *acc = sw_alloc(m + 1, sizeof *acc, err);
  int rc = SW_OK;
  if (!W || !C || !acc) {
    rc = sw_err_set(err, SW_ENOMEM, "out of memory in the MNA reduction");
    goto done;
  }
  for (r = 0; r < nl; r++) {
    const double *row = L->data + r * L->tda;
    for (j = 0; j < m; j++) acc[j] = 0;
    acc[m] = -(long double)gsl_vector_get(s, r);
    for (c = 0; c < N; c++) {
      long double l = row[c];
      if (row[c] == 0) continue;
      for (j = 0; j < m; j++) acc[j] += l * net->K[c * m + j];
      acc[m] += l * net->yp[c];
    }
    for (j = 0; j <= m; j++) gsl_matrix_set(W, r, j, (double)acc[j]);
  }
  if (gsl_blas_dtrsm(CblasLeft, CblasUpper, CblasTrans, CblasNonUnit, 1.0, &R1.matrix, W) ||
      gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, &Q1.matrix, W, 0.0, C)) {
    rc = sw_err_set(err, SW_ENUMERIC, "solving the linear part failed");
    goto done;
  }
  for (c = 0; c < N; c++) {
    for (j = 0; j < m; j++) net->K[c * m + j] -= gsl_matrix_get(C, c, j);
    net->yp[c] -= gsl_matrix_get(C, c, m);
  }
done:
  gsl_matrix_free(W); gsl_matrix_free(C); free(acc);
  return rc;
}

/* The linear rows of the MNA system into L and s: stamped into an N x N
 * scratch, of which the first nl rows are kept. */
static int linear_rows(const sw_net *net, gsl_matrix *L, gsl_vector *s, sw_err *err)
{
  size_t N = net->nunk, r, c;
  gsl_matrix *A = gsl_matrix_alloc(N, N);
  gsl_vector *b = gsl_vector_alloc(N);
  if (!A || !b) {
    gsl_matrix_free(A);
    gsl_vector_free(b);
    return sw_err_set(err, SW_ENOMEM, "out of memory in the MNA reduction");
  }
  sw_net_stamp(net, NULL, A, b);
  for (r = 0; r < net->nlin; r++) {
    for (c = 0; c < N; c++) gsl_matrix_set(L, r, c, gsl_matrix_get(A, r, c));
    gsl_vector_set(s, r, gsl_vector_get(b, r));
  }
  gsl_matrix_free(A);
  gsl_vector_free(b);
  return SW_OK;
}

/* The linear equations are independent: no diagonal of R is small next to
 * the largest. */
static int check_rank(const gsl_matrix *R, size_t nl, sw_err *err)
{
  double big = 0;
  size_t r;
  for (r = 0; r < nl; r++)
    if (fabs(gsl_matrix_get(R, r, r)) > big) big = fabs(gsl_matrix_get(R, r, r));
  for (r = 0; r < nl; r++)
    if (!(fabs(gsl_matrix_get(R, r, r)) > 1e-12 * big))
      return sw_err_set(err, SW_EINVAL,
                        "the linear part of the network is singular: its equations are dependent "
                        "(check controlled-source gains and how sources are connected)");
  return SW_OK;
}

int sw_net_reduce(sw_net *net, sw_err *err)
{
  size_t N = net->nunk, nl = net->nlin, m = net->ndev, r, c, j;
  gsl_matrix *L = NULL, *LT = NULL, *Q = NULL, *R = NULL;
  gsl_vector *s = NULL, *tau = NULL, *w = NULL;
  double *dr;
  int rc = SW_OK;
  net->K = sw_alloc(N * m, sizeof(double), err);
  net->yp = sw_alloc(N, sizeof(double), err);
  net->Xv = sw_alloc(m * m, sizeof(double), err);
  net->Xi = sw_alloc(m * m, sizeof(double), err);
  net->vp = sw_alloc(m, sizeof(double), err);
  net->ip = sw_alloc(m, sizeof(double), err);
  if (!net->K || !net->yp || !net->Xv || !net->Xi || !net->vp || !net->ip) return SW_ENOMEM;
  dr = sw_alloc(nl + 1, sizeof *dr, err);
  if (!dr) return SW_ENOMEM;
  if (nl == 0) { /* only devices: every unknown is free */
    for (j = 0; j < m; j++) net->K[j * m + j] = 1;
  } else {
    L = gsl_matrix_alloc(nl, N); LT = gsl_matrix_alloc(N, nl);
    Q = gsl_matrix_alloc(N, N); R = gsl_matrix_alloc(N, nl);
    s = gsl_vector_alloc(nl); tau = gsl_vector_alloc(nl); w = gsl_vector_alloc(nl);
    if (!L || !LT || !Q || !R || !s || !tau || !w) {
      rc = sw_err_set(err, SW_ENOMEM, "out of memory in the MNA reduction");
      goto done;
    }
    if ((rc = linear_rows(net, L, s, err))) goto done;
    /* rows only: the rank test is fair to rows of 1e-13 S, and the null
     * space and K's orthonormal columns stay those of the unscaled L */
    sw_net_equilibrate_rows(L, dr);
    for (r = 0; r < nl; r++) s->data[r * s->stride] *= dr[r];
    gsl_matrix_transpose_memcpy(LT, L);
    if (gsl_linalg_QR_decomp(LT, tau) || gsl_linalg_QR_unpack(LT, tau, Q, R)) {
      rc = sw_err_set(err, SW_ENUMERIC, "QR factorisation of the linear part failed");
      goto done;
    }
    if ((rc = check_rank(R, nl, err))) goto done;
    for (r = 0; r < N; r++)
      for (j = 0; j < m; j++) net->K[r * m + j] = gsl_matrix_get(Q, r, nl + j);
    {
      gsl_matrix_view R1 = gsl_matrix_submatrix(R, 0, 0, nl, nl);
      gsl_matrix_view Q1 = gsl_matrix_submatrix(Q, 0, 0, N, nl);
      gsl_vector_view yv = gsl_vector_view_array(net->yp, N);
      gsl_vector_memcpy(w, s);
      if (gsl_blas_dtrsv(CblasUpper, CblasTrans, CblasNonUnit, &R1.matrix, w) ||
          gsl_blas_dgemv(CblasNoTrans, 1.0, &Q1.matrix, w, 0.0, &yv.vector)) {
        rc = sw_err_set(err, SW_ENUMERIC, "solving the linear part failed");
        goto done;
      }
    }
    if ((rc = refine_reduction(net, L, s, Q, R, err))) goto done;
  }
  for (j = 0; j < m; j++) {
    for (c = 0; c < m; c++)
      ports_of(net, net->K + c, m, j, &net->Xv[j * m + c], &net->Xi[j * m + c]);
    ports_of(net, net->yp, 1, j, &net->vp[j], &net->ip[j]);
  }
done:
  gsl_matrix_free(L); gsl_matrix_free(LT); gsl_matrix_free(Q); gsl_matrix_free(R);
  gsl_vector_free(s); gsl_vector_free(tau); gsl_vector_free(w);
  free(dr);
  return rc;
}

double sw_net_dev_x(const sw_net_dev *d, double v, double i) { return d->x_is_i ? i : v; }

double sw_net_excess(const sw_net_dev *d, size_t s, double x)
{
  const sw_net_seg *g = &d->seg[s];
  if (x > g->hi + d->tol) return x - g->hi;
  if (x < g->lo - d->tol) return x - g->lo;
  return 0.0;
}

size_t sw_net_locate(const sw_net_dev *d, double x)
{
  size_t k;
  for (k = 0; k < d->nseg; k++)
    if (x <= d->seg[k].hi) return k;
  return d->nseg - 1;
}

/* Largest |diagonal of U| relative test after an LU factorisation. */
static int lu_singular(const gsl_matrix *LU, double scale)
{
  size_t k;
  for (k = 0; k < LU->size1; k++)
    if (!(fabs(gsl_matrix_get(LU, k, k)) > 1e-13 * scale)) return 1;
  return 0;
}

static double max_abs(const gsl_matrix *A)
{
  size_t r, c;
  double big = 0;
  for (r = 0; r < A->size1; r++)
    for (c = 0; c < A->size2; c++)
      if (fabs(gsl_matrix_get(A, r, c)) > big) big = fabs(gsl_matrix_get(A, r, c));
  return big;
}

int sw_net_state_ports(const sw_net *net, const int *state, double *v,
                       double *i, sw_err *err)
{
  size_t m = net->ndev, j, c;
  gsl_matrix *M;
  gsl_vector *r, *z;
  gsl_permutation *p;
  int sgn, rc = SW_OK;
  if (m == 0) return SW_OK;
  M = gsl_matrix_alloc(m, m); r = gsl_vector_alloc(m); z = gsl_vector_alloc(m);
  p = gsl_permutation_alloc(m);
  if (!M || !r || !z || !p) {
    rc = sw_err_set(err, SW_ENOMEM, "out of memory solving a state");
    goto done;
  }
  for (j = 0; j < m; j++) {
    const sw_net_seg *g = &net->dev[j].seg[state[j]];
    for (c = 0; c < m; c++)
      gsl_matrix_set(M, j, c, g->a * net->Xv[j * m + c] + g->b * net->Xi[j * m + c]);
    gsl_vector_set(r, j, g->c - g->a * net->vp[j] - g->b * net->ip[j]);
  }
  {
    double scale = max_abs(M);
    if (gsl_linalg_LU_decomp(M, p, &sgn) || lu_singular(M, scale > 0 ? scale : 1) ||
        gsl_linalg_LU_solve(M, p, r, z)) {
      rc = sw_err_set(err, SW_ENUMERIC, "the circuit equations of this state are singular");
      goto done;
    }
  }
  for (j = 0; j < m; j++) {
    double vv = net->vp[j], ii = net->ip[j];
    for (c = 0; c < m; c++) {
      vv += net->Xv[j * m + c] * gsl_vector_get(z, c);
      ii += net->Xi[j * m + c] * gsl_vector_get(z, c);
    }
    v[j] = vv; i[j] = ii;
  }
done:
  gsl_matrix_free(M); gsl_vector_free(r); gsl_vector_free(z); gsl_permutation_free(p);
  return rc;
}

void sw_net_op_free(sw_net_op *op)
{
  if (!op) return;
  free(op->vnode); free(op->v); free(op->i); free(op->p); free(op->state); free(op->on_bp);
  memset(op, 0, sizeof *op);
}

static double el_current(const sw_net *net, const double *y, size_t k)
{
  const sw_net_el *e = &net->el[k];
  switch (e->kind) {
  case SW_NET_R:
    if (e->col != SW_NET_NONE) return y[e->col];
    return (node_of(y, e->na) - node_of(y, e->nb)) / e->value;
  case SW_NET_I: return e->value;
  case SW_NET_VCCS: return e->value * (node_of(y, e->cp) - node_of(y, e->cm));
  case SW_NET_CCCS: return e->value * el_current(net, y, e->ctrl);
  default: return y[e->col];
  }
}

double sw_net_el_current(const sw_net *net, const double *y, size_t k)
{
  return el_current(net, y, k);
}

/* A stiff resistor's drop is R i: its node voltages may not resolve it. */
double sw_net_el_voltage(const sw_net *net, const double *y, size_t k)
{
  const sw_net_el *e = &net->el[k];
  if (e->kind == SW_NET_R && e->col != SW_NET_NONE) return e->value * y[e->col];
  return node_of(y, e->na) - node_of(y, e->nb);
}

/* Fills op from a full unknown vector y. */
int sw_net_op_from_y(const sw_net *net, const double *y, const int *state, sw_net_op *op,
                     sw_err *err)
{
  size_t k, n = net->nnodes, ne = net->nel, m = net->ndev;
  sw_net_op_free(op);
  op->vnode = sw_alloc(n, sizeof(double), err);
  op->v = sw_alloc(ne, sizeof(double), err);
  op->i = sw_alloc(ne, sizeof(double), err);
  op->p = sw_alloc(ne, sizeof(double), err);
  op->state = sw_alloc(m, sizeof(int), err);
  op->on_bp = sw_alloc(m, 1, err);
  if (!op->vnode || !op->v || !op->i || !op->p || !op->state || !op->on_bp) {
    sw_net_op_free(op);
    return SW_ENOMEM;
  }
  for (k = 1; k < n; k++) op->vnode[k] = y[k - 1];
  for (k = 0; k < ne; k++) {
    const sw_net_el *e = &net->el[k];
    op->v[k] = sw_net_el_voltage(net, y, k);
    op->i[k] = el_current(net, y, k);
    op->p[k] = op->v[k] * op->i[k];
    if (!sw_isfinite(op->v[k]) || !sw_isfinite(op->i[k])) {
      sw_net_op_free(op);
      return sw_err_set(err, SW_ENUMERIC, "the solution is not finite at element %s", e->name);
    }
  }
  for (k = 0; k < m; k++) {
    const sw_net_dev *d = &net->dev[k];
    const sw_net_seg *g = &d->seg[state[k]];
    double x = sw_net_dev_x(d, op->v[d->el], op->i[d->el]);
    op->state[k] = state[k];
    op->on_bp[k] = (unsigned char)((state[k] > 0 && fabs(x - g->lo) <= d->tol) ||
                                   ((size_t)state[k] + 1 < d->nseg && fabs(x - g->hi) <= d->tol));
  }
  return SW_OK;
}

/* y = dc * (scaled LU)^-1 (dr * rhs), in place in the scaled solve's work. */
static int scaled_solve(const gsl_matrix *LU, const gsl_permutation *p, const double *dr,
                        const double *dc, const gsl_vector *rhs, gsl_vector *y)
{
  size_t r, N = rhs->size;
  for (r = 0; r < N; r++) gsl_vector_set(y, r, dr[r] * gsl_vector_get(rhs, r));
  if (gsl_linalg_LU_svx(LU, p, y)) return 1;
  for (r = 0; r < N; r++) *gsl_vector_ptr(y, r) *= dc[r];
  return 0;
}

/* The full MNA system of a state, equilibrated (net_scale.c) so that
 * singularity is judged on the scaled matrix, then one step of iterative
 * refinement with the residual b - A y summed in long double. */
int sw_net_op_from_state(const sw_net *net, const int *state, sw_net_op *op,
                         sw_err *err)
{
  size_t N = net->nunk, r, c;
  gsl_matrix *A = gsl_matrix_alloc(N, N), *LU = gsl_matrix_alloc(N, N);
  gsl_vector *b = gsl_vector_alloc(N), *y = gsl_vector_alloc(N), *res = gsl_vector_alloc(N),
             *dy = gsl_vector_alloc(N);
  gsl_permutation *p = gsl_permutation_alloc(N);
  double *dr = sw_alloc(2 * N + 1, sizeof *dr, err), *dc = dr ? dr + N : NULL;
  int sgn, rc = SW_OK;
  if (!A || !LU || !b || !y || !res || !dy || !p || !dr) {
    rc = sw_err_set(err, SW_ENOMEM, "out of memory in the MNA solve");
    goto done;
  }
  sw_net_stamp(net, state, A, b);
  gsl_matrix_memcpy(LU, A);
  sw_net_equilibrate(LU, dr, dc);
  if (gsl_linalg_LU_decomp(LU, p, &sgn) || lu_singular(LU, 1.0) ||
      scaled_solve(LU, p, dr, dc, b, y)) {
    rc = sw_err_set(err, SW_ENUMERIC, "the circuit matrix of this state is singular");
    goto done;
  }
  for (r = 0; r < N; r++) {
    long double acc = gsl_vector_get(b, r);
    for (c = 0; c < N; c++) acc -= (long double)gsl_matrix_get(A, r, c) * gsl_vector_get(y, c);
    gsl_vector_set(res, r, (double)acc);
  }
  if (!scaled_solve(LU, p, dr, dc, res, dy)) gsl_vector_add(y, dy);
  rc = sw_net_op_from_y(net, y->data, state, op, err);
done:
  gsl_matrix_free(A); gsl_matrix_free(LU); gsl_vector_free(b); gsl_vector_free(y);
  gsl_vector_free(res); gsl_vector_free(dy); gsl_permutation_free(p); free(dr);
  return rc;
}

/* Stable, unstable or marginal from the finite generalised eigenvalues
 * alpha/beta: the sign of the rightmost real part, marginal when it is
 * zero to 1e-9 of the largest magnitude. */
static int classify(const gsl_vector_complex *alpha, const gsl_vector *beta)
{
  size_t j;
  double worst = -INFINITY, big = 0;
  for (j = 0; j < beta->size; j++) {
    double bt = gsl_vector_get(beta, j);
    gsl_complex al = gsl_vector_complex_get(alpha, j);
    double re, mag;
    if (fabs(bt) <= 1e-10 * (fabs(GSL_REAL(al)) + fabs(GSL_IMAG(al)))) continue; /* infinite */
    re = GSL_REAL(al) / bt;
    mag = hypot(GSL_REAL(al), GSL_IMAG(al)) / fabs(bt);
    if (re > worst) worst = re;
    if (mag > big) big = mag;
  }
  if (worst == -INFINITY) return SW_NET_STABLE; /* no dynamics at all */
  if (fabs(worst) <= 1e-9 * big) return SW_NET_MARGINAL;
  return worst < 0 ? SW_NET_STABLE : SW_NET_UNSTABLE;
}

/* The same test on the m x m port form: with the capacitance inside each
 * device's branch (branch current i = i_dev + s v), the linear rows keep
 * y = K z and each segment row a v + b i_dev = 0 becomes
 * (a Xv + b Xi) z = s (b Xv) z.  For circuits too large for the full one. */
static int stability_ports(const sw_net *net, const int *state, int *label, sw_err *err)
{
  size_t m = net->ndev, j, c;
  gsl_matrix *A = gsl_matrix_alloc(m, m), *B = gsl_matrix_alloc(m, m);
  gsl_vector_complex *alpha = gsl_vector_complex_alloc(m);
  gsl_vector *beta = gsl_vector_alloc(m);
  gsl_eigen_gen_workspace *w = gsl_eigen_gen_alloc(m);
  int rc = SW_OK;
  if (!A || !B || !alpha || !beta || !w) {
    rc = sw_err_set(err, SW_ENOMEM, "out of memory in the stability test");
    goto done;
  }
  for (j = 0; j < m; j++) {
    const sw_net_seg *g = &net->dev[j].seg[state[j]];
    for (c = 0; c < m; c++) {
      gsl_matrix_set(A, j, c, g->a * net->Xv[j * m + c] + g->b * net->Xi[j * m + c]);
      gsl_matrix_set(B, j, c, g->b * net->Xv[j * m + c]);
    }
  }
  if (gsl_eigen_gen(A, B, alpha, beta, w)) {
    rc = sw_err_set(err, SW_ENUMERIC, "the eigenvalue computation for the stability test failed");
    goto done;
  }
  *label = classify(alpha, beta);
done:
  gsl_matrix_free(A); gsl_matrix_free(B); gsl_vector_complex_free(alpha); gsl_vector_free(beta);
  gsl_eigen_gen_free(w);
  return rc;
}

/* Sizes of the stability tests (about 0.1 s each): the full MNA pencil up
 * to this many unknowns, the port form up to this many devices. */
#define STAB_FULL_MAX 300
#define STAB_PORTS_MAX 250

/* Sign of the rightmost finite generalised eigenvalue of (G + s*C) y = 0,
 * C a unit capacitance across each device. */
static int stability_full(const sw_net *net, const int *state, int *label, sw_err *err)
{
  size_t N = net->nunk, k;
  gsl_matrix *G = gsl_matrix_alloc(N, N), *C = gsl_matrix_calloc(N, N);
  gsl_vector_complex *alpha = gsl_vector_complex_alloc(N);
  gsl_vector *beta = gsl_vector_alloc(N);
  gsl_eigen_gen_workspace *w = gsl_eigen_gen_alloc(N);
  int rc = SW_OK;
  if (!G || !C || !alpha || !beta || !w) {
    rc = sw_err_set(err, SW_ENOMEM, "out of memory in the stability test");
    goto done;
  }
  sw_net_stamp(net, state, G, NULL);
  for (k = 0; k < net->ndev; k++) {
    const sw_net_el *e = &net->el[net->dev[k].el];
    size_t a = e->na, b = e->nb;
    if (a) *gsl_matrix_ptr(C, a - 1, a - 1) -= 1;
    if (b) *gsl_matrix_ptr(C, b - 1, b - 1) -= 1;
    if (a && b) { *gsl_matrix_ptr(C, a - 1, b - 1) += 1; *gsl_matrix_ptr(C, b - 1, a - 1) += 1; }
  }
  if (gsl_eigen_gen(G, C, alpha, beta, w)) {
    rc = sw_err_set(err, SW_ENUMERIC, "the eigenvalue computation for the stability test failed");
    goto done;
  }
  *label = classify(alpha, beta);
done:
  gsl_matrix_free(G); gsl_matrix_free(C); gsl_vector_complex_free(alpha); gsl_vector_free(beta);
  gsl_eigen_gen_free(w);
  return rc;
}

/* The full test when it is small, else the port form, else unknown. */
static int stability_of(const sw_net *net, const int *state, int *label, sw_err *err)
{
#ifndef STAB_FORCE_PORTS
  if (net->nunk <= STAB_FULL_MAX) return stability_full(net, state, label, err);
#endif
  if (net->ndev <= STAB_PORTS_MAX) return stability_ports(net, state, label, err);
  *label = SW_NET_UNKNOWN;
  return SW_OK;
}

/* On a breakpoint the point is stable only when it is stable with each
 * adjoining segment. */
int sw_net_stability(const sw_net *net, const sw_net_op *op, sw_err *err)
{
  size_t m = net->ndev, k;
  int *st, label, other, rc;
  if (m == 0) return SW_NET_STABLE;
  st = sw_alloc(m, sizeof *st, err);
  if (!st) return -1;
  memcpy(st, op->state, m * sizeof *st);
  rc = stability_of(net, st, &label, err);
  for (k = 0; k < m && rc == SW_OK; k++) {
    const sw_net_dev *d = &net->dev[k];
    double x;
    int alt;
    if (!op->on_bp[k]) continue;
    x = sw_net_dev_x(d, op->v[d->el], op->i[d->el]);
    alt = fabs(x - d->seg[st[k]].lo) <= d->tol ? st[k] - 1 : st[k] + 1;
    if (alt < 0 || (size_t)alt >= d->nseg) continue;
    st[k] = alt;
    rc = stability_of(net, st, &other, err);
    st[k] = op->state[k];
    if (rc == SW_OK && other != label) label = SW_NET_MARGINAL;
  }
  free(st);
  return rc == SW_OK ? label : -1;
}
