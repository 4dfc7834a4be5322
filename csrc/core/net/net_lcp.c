/* The PWL circuit as a linear complementarity problem, solved by Lemke's
 * complementary pivoting with a lexicographic ratio test (no cycling).
 *
 * Each continuous device y = f(x) with breakpoints beta_k and slope jumps
 * d_k is written about a reference segment (the last, sigma = +1, or the
 * first, sigma = -1):  y = L_ref(x) + sum_k d_k u_k  with
 *   sigma = +1: u_k = (beta_k - x)+,  t_k = u_k + (x - beta_k) = (x - beta_k)+
 *   sigma = -1: u_k = (x - beta_k)+,  t_k = u_k - (x - beta_k) = (beta_k - x)+
 * so u, t >= 0 and u.t = 0.  With the port reduction x = X z + x0,
 * y = Y z + y0, the device rows give H z = h + D u, hence
 *   t = (I + sigma E H^-1 D) u + sigma (E H^-1 h + e0 - beta) = M u + q. */
#include "net/net.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>

typedef struct lcp_sys {
  size_t m, n;       /* devices, complementarity pairs */
  size_t *owner;     /* pair -> device */
  double *beta;      /* pair breakpoint */
  double *Hh, *HD;   /* H^-1 h (m), H^-1 D (m x n) */
  double *M, *q;     /* n x n, n */
  double sigma;
} lcp_sys;

static void lcp_free(lcp_sys *s)
{
  free(s->owner); free(s->beta); free(s->Hh); free(s->HD); free(s->M); free(s->q);
  memset(s, 0, sizeof *s);
}

static const double *xrow(const sw_net *net, size_t j)
{
  return net->dev[j].x_is_i ? net->Xi + j * net->ndev : net->Xv + j * net->ndev;
}
static const double *yrow(const sw_net *net, size_t j)
{
  return net->dev[j].x_is_i ? net->Xv + j * net->ndev : net->Xi + j * net->ndev;
}
static double x0of(const sw_net *net, size_t j)
{
  return net->dev[j].x_is_i ? net->ip[j] : net->vp[j];
}
static double y0of(const sw_net *net, size_t j)
{
  return net->dev[j].x_is_i ? net->vp[j] : net->ip[j];
}

/* First device with a jump (its knot in *at), or ndev when all are continuous. */
static size_t first_jump(const sw_net *net, double *at)
{
  size_t j, k;
  for (j = 0; j < net->ndev; j++) {
    const sw_net_dev *d = &net->dev[j];
    for (k = 0; k + 1 < d->nseg; k++) {
      double b = d->seg[k].hi;
      double y1 = d->seg[k].slope * b + d->seg[k].icpt,
             y2 = d->seg[k + 1].slope * b + d->seg[k + 1].icpt;
      if (fabs(y1 - y2) > 1e-9 * (fabs(y1) + fabs(y2)) + 1e-300) { *at = b; return j; }
    }
  }
  return net->ndev;
}

static int check_continuous(const sw_net *net, sw_err *err)
{
  double b = 0;
  size_t j = first_jump(net, &b);
  if (j < net->ndev)
    return sw_err_set(err, SW_EINVAL,
                      "lcp: device %s has a jump at x = %g; the LCP form needs continuous models "
                      "(use method = \"enumerate\" or \"assumed\")",
                      net->el[net->dev[j].el].name, b);
  return SW_OK;
}

static int build(const sw_net *net, double sigma, lcp_sys *s, sw_err *err)
{
  size_t m = net->ndev, n = 0, j, k, p, c;
  gsl_matrix *H = NULL;
  gsl_permutation *perm = NULL;
  gsl_vector *b = NULL, *x = NULL;
  int sgn, rc = SW_OK;
  double big = 0;
  for (j = 0; j < m; j++) n += net->dev[j].nseg - 1;
  s->m = m; s->n = n; s->sigma = sigma;
  s->owner = sw_alloc(n, sizeof *s->owner, err); s->beta = sw_alloc(n, sizeof(double), err);
  s->Hh = sw_alloc(m, sizeof(double), err); s->HD = sw_alloc(m * n, sizeof(double), err);
  s->M = sw_alloc(n * n, sizeof(double), err); s->q = sw_alloc(n, sizeof(double), err);
  H = gsl_matrix_alloc(m, m);
  perm = gsl_permutation_alloc(m);
  b = gsl_vector_alloc(m);
  x = gsl_vector_alloc(m);
  if (!s->owner || !s->beta || !s->Hh || !s->HD || !s->M || !s->q || !H || !perm || !b || !x) {
    rc = sw_err_set(err, SW_ENOMEM, "out of memory in lcp");
    goto done;
  }
  for (j = 0, p = 0; j < m; j++) {
    const sw_net_dev *d = &net->dev[j];
    const sw_net_seg *ref = &d->seg[sigma > 0 ? d->nseg - 1 : 0];
    for (c = 0; c < m; c++) {
      gsl_matrix_set(H, j, c, yrow(net, j)[c] - ref->slope * xrow(net, j)[c]);
      if (fabs(gsl_matrix_get(H, j, c)) > big) big = fabs(gsl_matrix_get(H, j, c));
    }
    s->Hh[j] = ref->icpt - y0of(net, j) + ref->slope * x0of(net, j);
    for (k = 0; k + 1 < d->nseg; k++, p++) { s->owner[p] = j; s->beta[p] = d->seg[k].hi; }
  }
  if (gsl_linalg_LU_decomp(H, perm, &sgn)) {
    rc = sw_err_set(err, SW_ENUMERIC, "lcp: LU failed");
    goto done;
  }
  for (j = 0; j < m; j++)
    if (!(fabs(gsl_matrix_get(H, j, j)) > 1e-13 * big)) {
      rc = sw_err_set(err, SW_ENUMERIC, "lcp: the reference system is singular");
      goto done;
    }
  gsl_vector_view hv = gsl_vector_view_array(s->Hh, m);
  if (gsl_linalg_LU_svx(H, perm, &hv.vector)) {
    rc = sw_err_set(err, SW_ENUMERIC, "lcp: solve failed");
    goto done;
  }
  for (p = 0; p < n; p++) {  /* column p of D: d_p at row owner[p] */
    const sw_net_dev *d = &net->dev[s->owner[p]];
    size_t kk = 0, q;
    for (q = 0; q < p; q++) if (s->owner[q] == s->owner[p]) kk++;
    gsl_vector_set_zero(b);
    gsl_vector_set(b, s->owner[p], d->seg[kk + 1].slope - d->seg[kk].slope);
    if (gsl_linalg_LU_solve(H, perm, b, x)) {
      rc = sw_err_set(err, SW_ENUMERIC, "lcp: solve failed");
      goto done;
    }
    for (j = 0; j < m; j++) s->HD[j * n + p] = gsl_vector_get(x, j);
  }
  for (p = 0; p < n; p++) {
    size_t jj = s->owner[p];
    const double *X = xrow(net, jj);
    double acc = x0of(net, jj) - s->beta[p];
    for (c = 0; c < m; c++) acc += X[c] * s->Hh[c];
    s->q[p] = sigma * acc;
    for (k = 0; k < n; k++) {
      double e = 0;
      for (c = 0; c < m; c++) e += X[c] * s->HD[c * n + k];
      s->M[p * n + k] = (p == k ? 1.0 : 0.0) + sigma * e;
    }
  }
done:
  gsl_matrix_free(H); gsl_permutation_free(perm); gsl_vector_free(b); gsl_vector_free(x);
  return rc;
}

/* Strict diagonal dominance by rows or by columns with a positive
 * diagonal: every principal submatrix keeps it, so by Gershgorin each has
 * eigenvalues in the right half plane and a positive determinant. */
static int diag_dominant(const lcp_sys *s)
{
  size_t n = s->n, r, c;
  int rows = 1, cols = 1;
  for (r = 0; r < n && (rows || cols); r++) {
    double d = s->M[r * n + r], sr = 0, sc = 0;
    if (!(d > 0)) return 0;
    for (c = 0; c < n; c++)
      if (c != r) { sr += fabs(s->M[r * n + c]); sc += fabs(s->M[c * n + r]); }
    if (!(d > sr * (1 + 1e-12))) rows = 0;
    if (!(d > sc * (1 + 1e-12))) cols = 0;
  }
  return rows || cols;
}

/* 1 when every principal minor is positive (n <= 12), else the sufficient
 * tests: strict diagonal dominance, then M + M^T positive definite.
 * 0 refuted, -1 not determined, PTEST_NOMEM out of memory. */
#define PTEST_NOMEM (-2)
static int pmatrix_test(const lcp_sys *s, const char **how)
{
  size_t n = s->n, mask, r, c;
  if (n == 0) { *how = "empty (no breakpoints)"; return 1; }
  if (n > 12 && diag_dominant(s)) {
    *how = "strictly diagonally dominant with a positive diagonal";
    return 1;
  }
  if (n <= 12) {
    for (mask = 1; mask < ((size_t)1 << n); mask++) {
      size_t idx[12], k = 0;
      gsl_matrix *A;
      gsl_permutation *p;
      int sgn;
      double det;
      for (r = 0; r < n; r++) if (mask & ((size_t)1 << r)) idx[k++] = r;
      A = gsl_matrix_alloc(k, k); p = gsl_permutation_alloc(k);
      if (!A || !p) {
        gsl_matrix_free(A);
        gsl_permutation_free(p);
        *how = "not determined";
        return PTEST_NOMEM;
      }
      for (r = 0; r < k; r++)
        for (c = 0; c < k; c++) gsl_matrix_set(A, r, c, s->M[idx[r] * n + idx[c]]);
      det = gsl_linalg_LU_decomp(A, p, &sgn) ? 0 : gsl_linalg_LU_det(A, sgn);
      gsl_matrix_free(A); gsl_permutation_free(p);
      if (!(det > 0)) { *how = "a principal minor is not positive"; return 0; }
    }
    *how = "all principal minors positive";
    return 1;
  }
  {
    gsl_matrix *S = gsl_matrix_alloc(n, n);
    int ok;
    if (!S) { *how = "not determined"; return PTEST_NOMEM; }
    for (r = 0; r < n; r++)
      for (c = 0; c < n; c++) gsl_matrix_set(S, r, c, s->M[r * n + c] + s->M[c * n + r]);
    ok = gsl_linalg_cholesky_decomp1(S) == GSL_SUCCESS;
    gsl_matrix_free(S);
    *how = ok ? "M + M^T positive definite"
              : "not determined (too large for the minor test; neither diagonally dominant nor M + "
                "M^T positive definite)";
    return ok ? 1 : -1;
  }
}

/* Lemke's algorithm on w = M u + q with covering vector 1.  Tableau
 * columns: w (n), u (n), z0, q.  The lexicographic ratio test uses the
 * columns under the initial identity (the basis inverse). */
static int lemke(const lcp_sys *s, double *u, size_t *pivots, sw_err *err)
{
  size_t n = s->n, W = 2 * n + 2, i, k, r = 0, col, leaving, maxpiv = 100 * (n + 1) + 1000;
  double *T = sw_alloc(n * W, sizeof *T, err), qmin = 0;
  size_t *basis = sw_alloc(n, sizeof *basis, err);
  int rc = SW_OK;
  *pivots = 0;
  if (!T || !basis) { free(T); free(basis); return SW_ENOMEM; }
  for (i = 0; i < n; i++) {
    T[i * W + i] = 1;
    for (k = 0; k < n; k++) T[i * W + n + k] = -s->M[i * n + k];
    T[i * W + 2 * n] = -1;
    T[i * W + 2 * n + 1] = s->q[i];
    basis[i] = i;
    if (s->q[i] < qmin) { qmin = s->q[i]; r = i; }
    u[i] = 0;
  }
  if (qmin >= 0) goto solved;
  col = 2 * n;
  for (;;) {
    double piv = T[r * W + col];
    if (++*pivots > maxpiv) {
      rc = sw_err_set(err, SW_ENUMERIC, "lcp: Lemke's algorithm did not finish in %zu pivots",
                      maxpiv);
      goto done;
    }
    for (k = 0; k < W; k++) T[r * W + k] /= piv;
    for (i = 0; i < n; i++) {
      double f = T[i * W + col];
      if (i == r || f == 0) continue;
      for (k = 0; k < W; k++) T[i * W + k] -= f * T[r * W + k];
      T[i * W + col] = 0;
    }
    leaving = basis[r]; basis[r] = col;
    if (leaving == 2 * n) break;
    col = leaving < n ? leaving + n : leaving - n; /* the complement enters */
    {
      double cmax = 0, tol;
      size_t best = n;
      for (i = 0; i < n; i++) if (fabs(T[i * W + col]) > cmax) cmax = fabs(T[i * W + col]);
      tol = 1e-11 * (cmax > 0 ? cmax : 1);
      for (i = 0; i < n; i++) {
        double a = T[i * W + col];
        if (a <= tol) continue;
        if (best == n) { best = i; continue; }
        {
          double a2 = T[best * W + col];
          double d = T[i * W + 2 * n + 1] / a - T[best * W + 2 * n + 1] / a2;
          double scale = 1e-12 * (fabs(T[best * W + 2 * n + 1] / a2) + 1e-300);
          if (d < -scale) best = i;
          else if (d <= scale) {
            if (basis[i] == 2 * n) best = i;              /* let z0 leave */
            else if (basis[best] != 2 * n)
              for (k = 0; k < n; k++) {                   /* lexicographic tie-break */
                double e = T[i * W + k] / a - T[best * W + k] / a2;
                if (e < -1e-14) { best = i; break; }
                if (e > 1e-14) break;
              }
          }
        }
      }
      if (best == n) {
        rc = sw_err_set(err, SW_ENOSOL,
                        "lcp: Lemke's algorithm ended on a ray after %zu pivots (no solution "
                        "found; the LCP may have none)",
                        *pivots);
        goto done;
      }
      r = best;
    }
  }
solved:
  for (i = 0; i < n; i++)
    if (basis[i] >= n && basis[i] < 2 * n)
      u[basis[i] - n] = T[i * W + 2 * n + 1] > 0 ? T[i * W + 2 * n + 1] : 0;
done:
  free(T); free(basis);
  return rc;
}

int sw_net_lcp(const sw_net *net, int *state, size_t *pivots, int *pmatrix,
               const char **how, sw_err *err)
{
  size_t m = net->ndev, j, c, p;
  lcp_sys s;
  double *u = NULL, *v = NULL;
  int rc;
  *pivots = 0; *pmatrix = -1; *how = "not determined";
  if (m == 0) return SW_OK;
  if (check_continuous(net, err)) return err->code;
  memset(&s, 0, sizeof s);
  rc = build(net, 1.0, &s, err);
  if (rc == SW_ENUMERIC) { lcp_free(&s); rc = build(net, -1.0, &s, err); }
  if (rc) {
    lcp_free(&s);
    if (rc == SW_ENUMERIC)
      return sw_err_set(
          err, SW_ENUMERIC,
          "lcp: the circuit is singular with every device on its first or on its last segment, so "
          "this LCP form does not apply (use method = \"enumerate\")");
    return rc;
  }
  *pmatrix = pmatrix_test(&s, how);
  if (*pmatrix == PTEST_NOMEM) {
    *pmatrix = -1;
    rc = sw_err_set(err, SW_ENOMEM, "out of memory in the P-matrix test");
    goto done;
  }
  u = sw_alloc(s.n, sizeof *u, err);
  v = sw_alloc(2 * m, sizeof *v, err);
  if (!u || !v) { rc = SW_ENOMEM; goto done; }
  if ((rc = lemke(&s, u, pivots, err))) goto done;
  for (j = 0; j < m; j++) {  /* z = H^-1 h + H^-1 D u, then each device's x */
    double x = x0of(net, j);
    for (c = 0; c < m; c++) {
      double zc = s.Hh[c];
      for (p = 0; p < s.n; p++) zc += s.HD[c * s.n + p] * u[p];
      x += xrow(net, j)[c] * zc;
    }
    state[j] = (int)sw_net_locate(&net->dev[j], x);
  }
  if (sw_net_state_ports(net, state, v, v + m, err)) { rc = err->code; goto done; }
  for (j = 0; j < m; j++)
    if (sw_net_excess(&net->dev[j], (size_t)state[j], sw_net_dev_x(&net->dev[j], v[j], v[m + j])) !=
        0) {
      rc = sw_err_set(err, SW_ENUMERIC,
                      "lcp: Lemke's point puts %s outside its segment (rounding or a model bounded "
                      "at its ends)",
                      net->el[net->dev[j].el].name);
      goto done;
    }
done:
  free(u); free(v); lcp_free(&s);
  return rc;
}

/* Work of the P-matrix test on n pairs and m devices, in flops: building M
 * (n^2 m + n m^2) and a Cholesky attempt (n^3 / 3).  Beyond the budget the
 * verdict does not wait for it (about 0.2 s). */
#define PTEST_BUDGET 2e8

int sw_net_lcp_ptest(const sw_net *net, int *pmatrix, const char **how, sw_err *err)
{
  size_t m = net->ndev, n = 0, j;
  double at = 0, work;
  lcp_sys s;
  int rc;
  *pmatrix = -1;
  if (m == 0) { *pmatrix = 1; *how = "empty (no devices)"; return SW_OK; }
  if (first_jump(net, &at) < m) { *how = "not applicable (a model with a jump)"; return SW_OK; }
  for (j = 0; j < m; j++) n += net->dev[j].nseg - 1;
  work = (double)n * n * (double)m + (double)n * m * m + (double)n * n * n / 3;
  if (work > PTEST_BUDGET) { *how = "not run (too large a matrix to test quickly)"; return SW_OK; }
  memset(&s, 0, sizeof s);
  rc = build(net, 1.0, &s, err);
  if (rc == SW_ENUMERIC) { lcp_free(&s); rc = build(net, -1.0, &s, err); }
  if (rc == SW_ENUMERIC) { /* an answer, not a failure: clear the message */
    lcp_free(&s);
    err->code = SW_OK; err->msg[0] = 0;
    *how = "not applicable (singular reference system)";
    return SW_OK;
  }
  if (rc == SW_OK) *pmatrix = pmatrix_test(&s, how);
  lcp_free(&s);
  if (*pmatrix == PTEST_NOMEM) {
    *pmatrix = -1;
    return sw_err_set(err, SW_ENOMEM, "out of memory in the P-matrix test");
  }
  return rc;
}
