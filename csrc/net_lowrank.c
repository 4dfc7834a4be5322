/* Segment changes as low-rank updates (Sherman-Morrison-Woodbury).
 * The m x m state matrix M(s) has one row per device; moving k devices to
 * other segments replaces k rows: M = M0 + E_C D with D the k x m row
 * differences.  With Y = M0^-1 E_C (k columns of the stored inverse),
 *   M^-1 r = z0 - Y (I + D Y)^-1 D z0,   z0 = M0^-1 r,
 * O(m^2 + m k^2 + k^3) instead of a new O(m^3) factorisation.  When more
 * than half the rows changed, or I + D Y is ill conditioned, the base is
 * refactored at the new state. */
#include "net.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_linalg.h>

void sw_net_lr_free(sw_net_lr *lr)
{
  if (!lr) return;
  free(lr->base); free(lr->Minv); free(lr->work); free(lr->idx);
  memset(lr, 0, sizeof *lr);
}

int sw_net_lr_init(sw_net_lr *lr, size_t m, sw_err *err)
{
  memset(lr, 0, sizeof *lr);
  lr->m = m;
  lr->base = sw_alloc(m, sizeof *lr->base, err);
  lr->Minv = sw_alloc(m * m, sizeof *lr->Minv, err);
  lr->work = sw_alloc(m * m * 3 + 6 * m, sizeof *lr->work, err);
  lr->idx = sw_alloc(m, sizeof *lr->idx, err);
  if (!lr->base || !lr->Minv || !lr->work || !lr->idx) { sw_net_lr_free(lr); return SW_ENOMEM; }
  return SW_OK;
}

static void state_row(const sw_net *net, size_t j, int s, double *row, double *rhs)
{
  size_t m = net->ndev, c;
  const sw_net_seg *g = &net->dev[j].seg[s];
  for (c = 0; c < m; c++) row[c] = g->a * net->Xv[j * m + c] + g->b * net->Xi[j * m + c];
  *rhs = g->c - g->a * net->vp[j] - g->b * net->ip[j];
}

/* 1: factorised; 0: singular at this state; -1: out of memory. */
static int refactor(const sw_net *net, sw_net_lr *lr, const int *state)
{
  size_t m = lr->m, j, c;
  gsl_matrix *M = gsl_matrix_alloc(m, m);
  gsl_permutation *p = gsl_permutation_alloc(m);
  gsl_matrix_view inv = gsl_matrix_view_array(lr->Minv, m, m);
  int sgn, ok = 0;
  double big = 0, rhs;
  if (!M || !p) { ok = -1; goto done; }
  for (j = 0; j < m; j++) {
    state_row(net, j, state[j], lr->work, &rhs);
    for (c = 0; c < m; c++) {
      gsl_matrix_set(M, j, c, lr->work[c]);
      if (fabs(lr->work[c]) > big) big = fabs(lr->work[c]);
    }
  }
  if (gsl_linalg_LU_decomp(M, p, &sgn)) goto done;
  for (j = 0; j < m; j++) if (!(fabs(gsl_matrix_get(M, j, j)) > 1e-13 * big)) goto done;
  if (gsl_linalg_LU_invert(M, p, &inv.matrix)) goto done;
  memcpy(lr->base, state, m * sizeof *state);
  ok = 1;
done:
  gsl_matrix_free(M); gsl_permutation_free(p);
  lr->valid = ok > 0;
  lr->refactors++;
  return ok;
}

int sw_net_lr_ports(const sw_net *net, sw_net_lr *lr, const int *state,
                    double *v, double *i, sw_err *err)
{
  size_t m = lr->m, j, c, r, k = 0;
  double *z0, *z, *rhs, *row, *D, *Y, *S, *t;
  if (m == 0) return SW_OK;
  if (lr->valid) for (j = 0; j < m; j++) if (state[j] != lr->base[j]) lr->idx[k++] = j;
  if (!lr->valid || 2 * k > m) {
    int rf = refactor(net, lr, state);
    if (rf < 0) return sw_err_set(err, SW_ENOMEM, "out of memory factorising the circuit equations");
    if (rf == 0) return sw_err_set(err, SW_ENUMERIC, "the circuit equations of this state are singular");
    k = 0;
  }
  z0 = lr->work; z = z0 + m; rhs = z + m; row = rhs + m; t = row + m;
  D = t + m; Y = D + m * m; S = Y + m * m;
  for (j = 0; j < m; j++) state_row(net, j, state[j], row, &rhs[j]);
  for (r = 0; r < m; r++) {
    double acc = 0;
    for (c = 0; c < m; c++) acc += lr->Minv[r * m + c] * rhs[c];
    z0[r] = z[r] = acc;
  }
  if (k > 0) {
    gsl_matrix_view Sv = gsl_matrix_view_array(S, k, k);
    gsl_vector_view tv = gsl_vector_view_array(t, k);
    gsl_permutation *p = gsl_permutation_alloc(k);
    int sgn, bad = 0;
    double dummy;
    for (r = 0; r < k; r++) {     /* D: new row minus base row */
      j = lr->idx[r];
      state_row(net, j, state[j], D + r * m, &dummy);
      state_row(net, j, lr->base[j], row, &dummy);
      for (c = 0; c < m; c++) D[r * m + c] -= row[c];
    }
    for (r = 0; r < m; r++)       /* Y = columns idx of Minv */
      for (c = 0; c < k; c++) Y[r * k + c] = lr->Minv[r * m + lr->idx[c]];
    for (r = 0; r < k; r++) {     /* S = I + D Y, t = D z0 */
      double acc = 0;
      for (c = 0; c < k; c++) {
        double s = r == c ? 1.0 : 0.0;
        size_t q;
        for (q = 0; q < m; q++) s += D[r * m + q] * Y[q * k + c];
        S[r * k + c] = s;
      }
      for (c = 0; c < m; c++) acc += D[r * m + c] * z0[c];
      t[r] = acc;
    }
    if (!p) return sw_err_set(err, SW_ENOMEM, "out of memory in a low-rank update");
    if (gsl_linalg_LU_decomp(&Sv.matrix, p, &sgn) || gsl_linalg_LU_svx(&Sv.matrix, p, &tv.vector)) bad = 1;
    for (r = 0; r < k && !bad; r++) if (!(fabs(S[r * k + r]) > 1e-8)) bad = 1;
    gsl_permutation_free(p);
    if (bad) {                    /* ill conditioned: start a new base here */
      int rf = refactor(net, lr, state);
      if (rf < 0) return sw_err_set(err, SW_ENOMEM, "out of memory factorising the circuit equations");
      if (rf == 0) return sw_err_set(err, SW_ENUMERIC, "the circuit equations of this state are singular");
      return sw_net_lr_ports(net, lr, state, v, i, err);
    }
    for (r = 0; r < m; r++)
      for (c = 0; c < k; c++) z[r] -= Y[r * k + c] * t[c];
    lr->updates++;
  }
  for (j = 0; j < m; j++) {
    double vv = net->vp[j], ii = net->ip[j];
    for (c = 0; c < m; c++) { vv += net->Xv[j * m + c] * z[c]; ii += net->Xi[j * m + c] * z[c]; }
    v[j] = vv; i[j] = ii;
  }
  return SW_OK;
}
