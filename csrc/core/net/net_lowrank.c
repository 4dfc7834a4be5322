/* Segment changes as low-rank updates (Sherman-Morrison-Woodbury).
 * The m x m state matrix M(s) has one row per device; moving k devices to
 * other segments replaces k rows: M = M0 + E_C D with D the k x m row
 * differences.  With Y = M0^-1 E_C (k columns of the stored inverse),
 *   M^-1 r = z0 - Y (I + D Y)^-1 D z0,   z0 = M0^-1 r,
 * O(m^2 + m k^2 + k^3) instead of a new O(m^3) factorisation.  When more
 * than half the rows changed, or I + D Y is ill conditioned, the base is
 * refactored at the new state (also at every change when the network's
 * refactor_always switch is on, to measure what the updates save).  One
 * device needs no inverse: its 1 x 1 system is a division.  After an
 * update the inverse itself moves to the new state (see rebase), so a
 * sweep whose devices change a segment now and then pays O(m^2) a point.  All scratch is
 * allocated once by sw_net_lr_init. */
#include "net/net.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_linalg.h>

void sw_net_lr_free(sw_net_lr *lr)
{
  if (!lr) return;
  free(lr->base); free(lr->Minv); free(lr->work); free(lr->fac); free(lr->idx); free(lr->perm);
  memset(lr, 0, sizeof *lr);
}

int sw_net_lr_init(sw_net_lr *lr, size_t m, sw_err *err)
{
  size_t mm = m ? m : 1;
  memset(lr, 0, sizeof *lr);
  lr->m = m;
  lr->base = sw_alloc(mm, sizeof *lr->base, err);
  lr->Minv = sw_alloc(mm * mm, sizeof *lr->Minv, err);
  lr->work = sw_alloc(mm * mm * 3 + 6 * mm, sizeof *lr->work, err);
  lr->fac = sw_alloc(mm * mm, sizeof *lr->fac, err);
  lr->idx = sw_alloc(mm, sizeof *lr->idx, err);
  lr->perm = sw_alloc(mm, sizeof *lr->perm, err);
  if (!lr->base || !lr->Minv || !lr->work || !lr->fac || !lr->idx || !lr->perm) {
    sw_net_lr_free(lr);
    return SW_ENOMEM;
  }
  return SW_OK;
}

static void state_row(const sw_net *net, size_t j, int s, double *row, double *rhs)
{
  size_t m = net->ndev, c;
  const sw_net_seg *g = &net->dev[j].seg[s];
  for (c = 0; c < m; c++) row[c] = g->a * net->Xv[j * m + c] + g->b * net->Xi[j * m + c];
  *rhs = g->c - g->a * net->vp[j] - g->b * net->ip[j];
}

/* 1: factorised; 0: singular at this state. */
static int refactor(const sw_net *net, sw_net_lr *lr, const int *state)
{
  size_t m = lr->m, j, c;
  gsl_matrix_view M = gsl_matrix_view_array(lr->fac, m, m);
  gsl_matrix_view inv = gsl_matrix_view_array(lr->Minv, m, m);
  gsl_permutation p;
  int sgn, ok = 0;
  double big = 0, rhs;
  p.size = m; p.data = lr->perm;
  for (j = 0; j < m; j++) {
    state_row(net, j, state[j], lr->fac + j * m, &rhs);
    for (c = 0; c < m; c++) if (fabs(lr->fac[j * m + c]) > big) big = fabs(lr->fac[j * m + c]);
  }
  if (gsl_linalg_LU_decomp(&M.matrix, &p, &sgn)) goto done;
  for (j = 0; j < m; j++) if (!(fabs(lr->fac[j * m + j]) > 1e-13 * big)) goto done;
  if (gsl_linalg_LU_invert(&M.matrix, &p, &inv.matrix)) goto done;
  memcpy(lr->base, state, m * sizeof *state);
  lr->moves = 0;
  ok = 1;
done:
  lr->valid = ok;
  lr->refactors++;
  return ok;
}

/* Moves the stored inverse to the new state in O(m^2 k):
 *   Minv <- Minv - Y S^-1 (D Minv),  S = I + D Y (LU-factorised),
 * so the next solve at this state, or a step away from it, stays cheap.
 * Rounding grows with each move: after REBASE_MAX moves the next change
 * refactorises. */
#define REBASE_MAX 64

static void rebase(sw_net_lr *lr, const int *state, size_t k, const double *D,
                   const double *Y, const gsl_matrix *S, const gsl_permutation *p)
{
  size_t m = lr->m, r, c, q;
  double *W = lr->fac; /* k x m: D Minv, then S^-1 D Minv */
  for (r = 0; r < k; r++)
    for (c = 0; c < m; c++) {
      double acc = 0;
      for (q = 0; q < m; q++) acc += D[r * m + q] * lr->Minv[q * m + c];
      W[r * m + c] = acc;
    }
  for (c = 0; c < m; c++) {
    gsl_vector_view col = gsl_vector_view_array_with_stride(W + c, m, k);
    if (gsl_linalg_LU_svx(S, p, &col.vector)) { lr->valid = 0; return; }
  }
  for (r = 0; r < m; r++)
    for (c = 0; c < m; c++) {
      double acc = 0;
      for (q = 0; q < k; q++) acc += Y[r * k + q] * W[q * m + c];
      lr->Minv[r * m + c] -= acc;
    }
  for (r = 0; r < k; r++) lr->base[lr->idx[r]] = state[lr->idx[r]];
  if (++lr->moves >= REBASE_MAX) lr->valid = 0;
}

/* One device: a*(vp + Xv z) + b*(ip + Xi z) = c, solved directly. */
static int solve_one(const sw_net *net, const int *state, double *z, sw_err *err)
{
  double row, rhs;
  state_row(net, 0, state[0], &row, &rhs);
  if (!(fabs(row) > 0) || !sw_isfinite(row))
    return sw_err_set(err, SW_ENUMERIC, "the circuit equations of this state are singular");
  z[0] = rhs / row;
  return SW_OK;
}

int sw_net_lr_solve(const sw_net *net, sw_net_lr *lr, const int *state,
                    double *z, sw_err *err)
{
  size_t m = lr->m, j, c, r, k = 0;
  double *z0, *rhs, *row, *D, *Y, *S, *t;
  if (m == 0) return SW_OK;
  if (m == 1) return solve_one(net, state, z, err);
  if (lr->valid) for (j = 0; j < m; j++) if (state[j] != lr->base[j]) lr->idx[k++] = j;
  if (!lr->valid || 2 * k > m || (k > 0 && net->refactor_always)) {
    if (!refactor(net, lr, state))
      return sw_err_set(err, SW_ENUMERIC, "the circuit equations of this state are singular");
    k = 0;
  }
  z0 = lr->work; rhs = z0 + m; row = rhs + m; t = row + m;
  D = t + m; Y = D + m * m; S = Y + m * m;
  for (j = 0; j < m; j++) {  /* right-hand side only: the rows are the base's or in D */
    const sw_net_seg *g = &net->dev[j].seg[state[j]];
    rhs[j] = g->c - g->a * net->vp[j] - g->b * net->ip[j];
  }
  for (r = 0; r < m; r++) {
    double acc = 0;
    for (c = 0; c < m; c++) acc += lr->Minv[r * m + c] * rhs[c];
    z0[r] = z[r] = acc;
  }
  if (k > 0) {
    gsl_matrix_view Sv = gsl_matrix_view_array(S, k, k);
    gsl_vector_view tv = gsl_vector_view_array(t, k);
    gsl_permutation p;
    int sgn, bad = 0;
    double dummy;
    p.size = k; p.data = lr->perm;
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
    if (gsl_linalg_LU_decomp(&Sv.matrix, &p, &sgn) || gsl_linalg_LU_svx(&Sv.matrix, &p, &tv.vector))
      bad = 1;
    for (r = 0; r < k && !bad; r++) if (!(fabs(S[r * k + r]) > 1e-8)) bad = 1;
    if (bad) {                    /* ill conditioned: start a new base here */
      if (!refactor(net, lr, state))
        return sw_err_set(err, SW_ENUMERIC, "the circuit equations of this state are singular");
      return sw_net_lr_solve(net, lr, state, z, err);
    }
    for (r = 0; r < m; r++)
      for (c = 0; c < k; c++) z[r] -= Y[r * k + c] * t[c];
    lr->updates++;
    rebase(lr, state, k, D, Y, &Sv.matrix, &p);
  }
  return SW_OK;
}

int sw_net_lr_ports(const sw_net *net, sw_net_lr *lr, const int *state,
                    double *v, double *i, sw_err *err)
{
  size_t m = lr->m, j, c;
  double *z = lr->work + 3 * m * m + 5 * m; /* past what sw_net_lr_solve uses */
  if (m == 0) return SW_OK;
  if (sw_net_lr_solve(net, lr, state, z, err)) return err->code;
  for (j = 0; j < m; j++) {
    double vv = net->vp[j], ii = net->ip[j];
    for (c = 0; c < m; c++) { vv += net->Xv[j * m + c] * z[c]; ii += net->Xi[j * m + c] * z[c]; }
    v[j] = vv; i[j] = ii;
  }
  return SW_OK;
}
