/* Exhaustive enumeration of device states for all operating points.  The
 * states are visited in a reflected mixed-radix Gray code (Knuth's
 * Algorithm H), so consecutive states differ in one device's segment: one
 * row of the m x m state matrix.  Its inverse is carried along by the
 * Sherman-Morrison formula (O(m^2) per state instead of an O(m^3)
 * factorisation) and refreshed by LU every REFRESH steps or when the update
 * is ill conditioned.  A state that passes is re-solved afresh before it is
 * accepted; points reached from two adjoining segments are kept once. */
#include "net/net.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_linalg.h>

#define REFRESH 64

typedef struct enum_ws {
  size_t m;
  double *Minv, *row, *u, *w, *rhs, *z;
  gsl_matrix *M;
  gsl_permutation *p;
} enum_ws;

static void row_of(const sw_net *net, size_t j, int s, double *row, double *rhs)
{
  size_t m = net->ndev, c;
  const sw_net_seg *g = &net->dev[j].seg[s];
  for (c = 0; c < m; c++) row[c] = g->a * net->Xv[j * m + c] + g->b * net->Xi[j * m + c];
  *rhs = g->c - g->a * net->vp[j] - g->b * net->ip[j];
}

/* Fresh inverse by LU; returns 0 when the state is singular. */
static int refactor(const sw_net *net, const int *state, enum_ws *ws)
{
  size_t m = ws->m, j, c;
  int sgn;
  double big = 0;
  gsl_matrix_view inv = gsl_matrix_view_array(ws->Minv, m, m);
  for (j = 0; j < m; j++) {
    row_of(net, j, state[j], ws->row, &ws->rhs[j]);
    for (c = 0; c < m; c++) {
      gsl_matrix_set(ws->M, j, c, ws->row[c]);
      if (fabs(ws->row[c]) > big) big = fabs(ws->row[c]);
    }
  }
  if (gsl_linalg_LU_decomp(ws->M, ws->p, &sgn)) return 0;
  for (j = 0; j < m; j++)
    if (!(fabs(gsl_matrix_get(ws->M, j, j)) > 1e-13 * big)) return 0;
  return gsl_linalg_LU_invert(ws->M, ws->p, &inv.matrix) == 0;
}

/* Row j of the matrix changes to state s: rank-one update of the inverse.
 * Returns 0 when the update is ill conditioned (caller refactors). */
static int sm_update(const sw_net *net, size_t j, int olds, int s, enum_ws *ws)
{
  size_t m = ws->m, r, c;
  double oldrhs, denom, *A = ws->Minv;
  row_of(net, j, olds, ws->u, &oldrhs);          /* u: old row (scratch) */
  row_of(net, j, s, ws->row, &ws->rhs[j]);
  for (c = 0; c < m; c++) ws->row[c] -= ws->u[c];  /* delta */
  for (c = 0; c < m; c++) {                       /* w = delta^T Minv */
    double acc = 0;
    for (r = 0; r < m; r++) acc += ws->row[r] * A[r * m + c];
    ws->w[c] = acc;
  }
  denom = 1 + ws->w[j];
  if (!(fabs(denom) > 1e-8)) return 0;
  for (r = 0; r < m; r++) ws->u[r] = A[r * m + j] / denom;
  for (r = 0; r < m; r++)
    for (c = 0; c < m; c++) A[r * m + c] -= ws->u[r] * ws->w[c];
  return 1;
}

static double yscale(const sw_net_dev *d)
{
  size_t k;
  double s = 0;
  for (k = 0; k < d->model.nseg; k++) {
    if (fabs(d->model.ya[k]) > s) s = fabs(d->model.ya[k]);
    if (fabs(d->model.yb[k]) > s) s = fabs(d->model.yb[k]);
  }
  return s > 0 ? s : 1;
}

static int same_point(const sw_net *net, const double *a, const double *b)
{
  size_t m = net->ndev, k;
  for (k = 0; k < m; k++) {
    const sw_net_dev *d = &net->dev[k];
    double tx = 10 * d->tol, ty = 1e-8 * yscale(d);
    double xa = d->x_is_i ? a[m + k] : a[k], xb = d->x_is_i ? b[m + k] : b[k];
    double ya = d->x_is_i ? a[k] : a[m + k], yb = d->x_is_i ? b[k] : b[m + k];
    if (fabs(xa - xb) > tx || fabs(ya - yb) > ty) return 0;
  }
  return 1;
}

/* The operating points found so far: states (m each) and ports (2m each). */
typedef struct enum_found {
  int *out;
  double *pts;
  size_t count, cap;
} enum_found;

/* A generous first screen of state by the low-rank inverse: 1 when every
 * device lands near its assumed segment (the fresh solve decides). */
static int screen(const sw_net *net, const int *state, enum_ws *ws)
{
  size_t m = net->ndev, r, c, k;
  for (r = 0; r < m; r++) {
    double acc = 0;
    for (c = 0; c < m; c++) acc += ws->Minv[r * m + c] * ws->rhs[c];
    ws->z[r] = acc;
  }
  for (k = 0; k < m; k++) {
    double v = net->vp[k], i = net->ip[k];
    for (c = 0; c < m; c++) {
      v += net->Xv[k * m + c] * ws->z[c];
      i += net->Xi[k * m + c] * ws->z[c];
    }
    if (fabs(sw_net_excess(&net->dev[k], (size_t)state[k], sw_net_dev_x(&net->dev[k], v, i))) >
        1e3 * net->dev[k].tol)
      return 0;
  }
  return 1;
}

/* Solves state afresh (ports into pv) and keeps it when consistent and new. */
static int record(const sw_net *net, const int *state, double *pv, enum_found *F, sw_err *err)
{
  size_t m = net->ndev, k;
  int rc = sw_net_state_ports(net, state, pv, pv + m, err);
  if (rc) return rc == SW_ENOMEM ? rc : SW_OK; /* a singular state holds no point */
  for (k = 0; k < m; k++)
    if (sw_net_excess(&net->dev[k], (size_t)state[k],
                      sw_net_dev_x(&net->dev[k], pv[k], pv[m + k])) != 0)
      return SW_OK;
  for (k = 0; k < F->count; k++) if (same_point(net, F->pts + 2 * m * k, pv)) return SW_OK;
  if (F->count == F->cap) {
    size_t nc = F->cap ? 2 * F->cap : 4;
    int *o2 = sw_realloc(F->out, nc * m, sizeof *o2, err);
    double *p2;
    if (!o2) return SW_ENOMEM;
    F->out = o2;
    p2 = sw_realloc(F->pts, nc * 2 * m, sizeof *p2, err);
    if (!p2) return SW_ENOMEM;
    F->pts = p2;
    F->cap = nc;
  }
  memcpy(F->out + F->count * m, state, m * sizeof *state);
  memcpy(F->pts + F->count * 2 * m, pv, 2 * m * sizeof *pv);
  F->count++;
  return SW_OK;
}

int sw_net_enumerate(const sw_net *net, double max_states, int **states,
                     size_t *count, size_t *visited, sw_err *err)
{
  size_t m = net->ndev, j, na = 0, since = 0;
  double total = 1;
  int *state = NULL, *dir = NULL, valid, rc = SW_OK;
  size_t *act = NULL, *focus = NULL;
  double *pv = NULL;
  enum_found F;
  enum_ws ws;
  *states = NULL; *count = 0; *visited = 0;
  memset(&ws, 0, sizeof ws);
  memset(&F, 0, sizeof F);
  for (j = 0; j < m; j++) total *= (double)net->dev[j].nseg;
  if (total > max_states)
    return sw_err_set(err, SW_ERANGE, "enumerate: %.0f combinations of segments exceed "
                      "max_states = %.0f; use method = \"lcp\" or \"assumed\", or raise "
                      "max_states", total, max_states);
  if (m == 0) {
    *states = sw_alloc(1, sizeof(int), err);
    if (!*states) return SW_ENOMEM;
    *count = 1; *visited = 1;
    return SW_OK;
  }
  ws.m = m;
  state = sw_alloc(m, sizeof *state, err); dir = sw_alloc(m, sizeof *dir, err);
  act = sw_alloc(m + 1, sizeof *act, err); focus = sw_alloc(m + 1, sizeof *focus, err);
  ws.Minv = sw_alloc(m * m, sizeof(double), err); ws.row = sw_alloc(5 * m, sizeof(double), err);
  pv = sw_alloc(2 * m, sizeof(double), err);
  ws.M = gsl_matrix_alloc(m, m); ws.p = gsl_permutation_alloc(m);
  if (!state || !dir || !act || !focus || !ws.Minv || !ws.row || !pv || !ws.M || !ws.p) {
    rc = sw_err_set(err, SW_ENOMEM, "out of memory in enumerate");
    goto done;
  }
  ws.u = ws.row + m; ws.w = ws.u + m; ws.rhs = ws.w + m; ws.z = ws.rhs + m;
  for (j = 0; j < m; j++) if (net->dev[j].nseg > 1) act[na++] = j;
  for (j = 0; j <= na; j++) focus[j] = j;
  for (j = 0; j < na; j++) dir[j] = 1;
  valid = refactor(net, state, &ws);
  for (;;) {
    size_t a;
    int olds;
    ++*visited;
    if (valid && screen(net, state, &ws) && (rc = record(net, state, pv, &F, err))) goto done;
    /* next state in the Gray code */
    a = focus[0]; focus[0] = 0;
    if (a >= na) break;
    j = act[a];
    olds = state[j];
    state[j] += dir[a];
    if (state[j] == 0 || (size_t)state[j] == net->dev[j].nseg - 1) {
      dir[a] = -dir[a]; focus[a] = focus[a + 1]; focus[a + 1] = a + 1;
    }
    if (valid && ++since < REFRESH && sm_update(net, j, olds, state[j], &ws)) continue;
    since = 0;
    valid = refactor(net, state, &ws);
  }
done:
  if (rc) { free(F.out); F.out = NULL; F.count = 0; }
  *states = F.out;
  *count = F.count;
  free(state);
  free(dir);
  free(act);
  free(focus);
  free(ws.Minv);
  free(ws.row);
  free(pv);
  free(F.pts);
  gsl_matrix_free(ws.M); gsl_permutation_free(ws.p);
  return rc;
}
