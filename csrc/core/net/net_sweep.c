/* Sweeps and seeded Monte Carlo runs: one operating point per value of a
 * source, gain or resistor.  Each point starts the assumed-state iteration
 * from the previous point's states (a warm start: neighbouring values
 * rarely change many segments); when that fails the automatic choice takes
 * over.  The element's value is restored afterwards, also on error.
 * sw_net_sweep fills full operating points; sw_net_sweep_arrays writes
 * chosen quantities into arrays without allocating per point. */
#include "net/net.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>


/* Names the point of a loop an error happened at, as a user counts it:
 * "point 3 of 10 (I = 1): ". */
static void name_point(sw_err *err, const char *name, const double *values, size_t k, size_t n)
{
  sw_err_prefix(err, "point %zu of %zu (%s = %g): ", k + 1, n, name, values[k]);
}

int sw_net_sweep(sw_net *net, const sw_net_sweep_spec *sp, sw_net_op *ops, sw_err *err)
{
  const size_t el = sp->el, n = sp->n;
  const double *values = sp->values, max_states = sp->max_states;
  const int *start = sp->start;
  size_t m = net->ndev, k, it, nf;
  double keep = net->el[el].value;
  const char *name = net->el[el].name, *used;
  int *state = sw_alloc(m, sizeof *state, err), rc = SW_OK, have = 0;
  if (!state) return SW_ENOMEM;
  if (start) { memcpy(state, start, m * sizeof *state); have = 1; }
  for (k = 0; k < n && rc == SW_OK; k++) {
    if ((rc = sw_net_set(net, name, values[k], err)) || (rc = sw_net_prepare(net, err))) break;
    if (!have) sw_net_default_start(net, state);
    if (sw_net_assumed(net, state, 0, state, &it, NULL, NULL, err) != SW_OK) {
      if (err->code == SW_ENOMEM) { rc = SW_ENOMEM; break; }
      if ((rc = sw_net_auto(net, state, max_states, state, &it, &nf, &used, err))) {
        name_point(err, name, values, k, n);
        break;
      }
    }
    have = 1;
    if ((rc = sw_net_op_from_state(net, state, &ops[k], err))) {
      name_point(err, name, values, k, n);
      break;
    }
    ops[k].iterations = it;
  }
  {
    sw_err e2;
    sw_net_set(net, name, keep, &e2);
  }
  free(state);
  return rc;
}


/* ---- sweeps into arrays ------------------------------------------------ */

void sw_net_sweep_info_free(sw_net_sweep_info *info)
{
  if (!info) return;
  free(info->warn);
  memset(info, 0, sizeof *info);
}

static int push_warn(sw_net_sweep_info *info, size_t dev, size_t index, int kind, sw_err *err)
{
  if (info->nwarn == info->wcap) { /* doubling: amortised, not per point */
    size_t cap = info->wcap ? 2 * info->wcap : 64;
    sw_net_warn *w = sw_realloc(info->warn, cap, sizeof *w, err);
    if (!w) return SW_ENOMEM;
    info->warn = w; info->wcap = cap;
  }
  info->warn[info->nwarn].dev = dev;
  info->warn[info->nwarn].index = index;
  info->warn[info->nwarn].kind = kind;
  info->nwarn++;
  return SW_OK;
}

/* One device: the load line against its current segment, O(1); 1 when
 * the crossing lies on that segment (z then holds the point). */
static int load_line_holds(const sw_net *net, int s, double *z)
{
  const sw_net_dev *d = &net->dev[0];
  const sw_net_seg *g = &d->seg[s];
  double row = g->a * net->Xv[0] + g->b * net->Xi[0], zz, x;
  if (!(fabs(row) > 0)) return 0;
  zz = (g->c - g->a * net->vp[0] - g->b * net->ip[0]) / row;
  x = d->x_is_i ? net->ip[0] + net->Xi[0] * zz : net->vp[0] + net->Xv[0] * zz;
  if (!(x <= g->hi + d->tol && x >= g->lo - d->tol)) return 0;
  *z = zz;
  return 1;
}

static double node_v(const double *y, size_t n) { return n ? y[n - 1] : 0.0; }

/* Workspace of an array sweep, allocated once. */
typedef struct sweep_ws {
  double *yp0, *dyp, *vp0, *dvp, *ip0, *dip; /* source sweeps: yp = yp0 + value * dyp */
  double *y, *work;
  int *state, *hist;
  size_t max_iter;
  sw_net_lr lr;
} sweep_ws;

static void ws_free(sweep_ws *w)
{
  free(w->yp0); free(w->y); free(w->work); free(w->state); free(w->hist);
  sw_net_lr_free(&w->lr);
}

/* Particular solution at value 0 and its change per unit of the source
 * (the response is linear in an independent source; K, Xv and Xi do not
 * depend on it). */
static int source_basis(sw_net *net, const char *name, sweep_ws *w, sw_err *err)
{
  size_t N, m = net->ndev, r;
  if (sw_net_set(net, name, 0.0, err) || sw_net_prepare(net, err)) return err->code;
  N = net->nunk;
  memcpy(w->yp0, net->yp, N * sizeof *w->yp0);
  memcpy(w->vp0, net->vp, m * sizeof *w->vp0);
  memcpy(w->ip0, net->ip, m * sizeof *w->ip0);
  if (sw_net_set(net, name, 1.0, err) || sw_net_prepare(net, err)) return err->code;
  for (r = 0; r < N; r++) w->dyp[r] = net->yp[r] - w->yp0[r];
  for (r = 0; r < m; r++) {
    w->dvp[r] = net->vp[r] - w->vp0[r];
    w->dip[r] = net->ip[r] - w->ip0[r];
  }
  return SW_OK;
}

/* The quantities of point k from the reduced unknowns z, and its warnings. */
static int write_point(const sw_net *net, sweep_ws *w, const double *z, size_t k,
                       const sw_net_quant *q, size_t nq, sw_net_sweep_info *info, sw_err *err)
{
  size_t N = net->nunk, m = net->ndev, r, c, j;
  double *y = w->y;
  for (r = 0; r < N; r++) {
    double acc = net->yp[r];
    for (c = 0; c < m; c++) acc += net->K[r * m + c] * z[c];
    if (!sw_isfinite(acc)) return sw_err_set(err, SW_ENUMERIC, "the solution is not finite");
    y[r] = acc;
  }
  for (j = 0; j < nq; j++) {
    double val = 0;
    switch (q[j].kind) {
    case SW_NQ_I: val = sw_net_el_current(net, y, q[j].idx); break;
    case SW_NQ_VD: val = sw_net_el_voltage(net, y, q[j].idx); break;
    case SW_NQ_P:
      val = sw_net_el_voltage(net, y, q[j].idx) * sw_net_el_current(net, y, q[j].idx);
      break;
    case SW_NQ_V: val = node_v(y, q[j].idx); break;
    case SW_NQ_STATE: val = net->dev[q[j].idx].seg[w->state[q[j].idx]].label; break;
    }
    q[j].out[k] = val;
  }
  for (j = 0; j < m; j++) {  /* beyond the knots; above the rating */
    const sw_net_dev *d = &net->dev[j];
    const sw_net_el *e = &net->el[d->el];
    double v = node_v(y, e->na) - node_v(y, e->nb), i = y[d->col], x = d->x_is_i ? i : v;
    double lo = d->model.x[0], hi = d->model.x[d->model.nseg];
    double slack = 1e-9 * fmax(fmax(fabs(lo), fabs(hi)), 1e-300);
    if ((x < lo - slack || x > hi + slack) && push_warn(info, j, k, SW_NW_RANGE, err))
      return SW_ENOMEM;
    if (d->pmax > 0 && fabs(v * i) > d->pmax && push_warn(info, j, k, SW_NW_PMAX, err))
      return SW_ENOMEM;
  }
  return SW_OK;
}

/* The workspace for a prepared network, sized for its topology: a swept or
 * drawn resistor may change which resistors carry a current unknown, so
 * the unknowns are counted at their most. */
static int ws_init(sw_net *net, sweep_ws *w, sw_err *err)
{
  size_t m = net->ndev, N = sw_net_max_unknowns(net);
  memset(w, 0, sizeof *w);
  w->max_iter = sw_net_assumed_max_iter(net);
  w->yp0 = sw_alloc(2 * N + 4 * m + 1, sizeof *w->yp0, err);
  w->y = sw_alloc(N + 1, sizeof *w->y, err);
  w->work = sw_alloc(5 * m + 1, sizeof *w->work, err);
  w->state = sw_alloc(m + 1, sizeof *w->state, err);
  w->hist = sw_alloc((w->max_iter + 1) * m + 1, sizeof *w->hist, err);
  if (!w->yp0 || !w->y || !w->work || !w->state || !w->hist || sw_net_lr_init(&w->lr, m, err)) {
    ws_free(w);
    return SW_ENOMEM;
  }
  w->dyp = w->yp0 + N;
  w->vp0 = w->dyp + N;
  w->dvp = w->vp0 + m;
  w->ip0 = w->dvp + m;
  w->dip = w->ip0 + m;
  return SW_OK;
}

/* Solves point k of the set-up network, warm from the states in w (*have:
 * they hold a previous point's), and writes its quantities.  Errors come
 * back without the point's name; the caller prefixes it. */
static int solve_point(sw_net *net, sweep_ws *w, size_t k, int *have, double max_states,
                       const sw_net_quant *q, size_t nq, sw_net_sweep_info *info, sw_err *err)
{
  size_t m = net->ndev, it, nf;
  double *z = w->work + 4 * m;
  const char *used;
  int rc;
  if (!*have) sw_net_default_start(net, w->state);
  if (m == 1 && *have && load_line_holds(net, w->state[0], z)) {
    info->iterations++;
  } else if (sw_net_assumed_run(net, &w->lr, w->hist, w->work, w->state, w->max_iter, w->state, &it,
                                NULL, err) != SW_OK) {
    if (err->code == SW_ENOMEM) return SW_ENOMEM;
    info->fallbacks++;
    if ((rc = sw_net_auto(net, w->state, max_states, w->state, &nf, &nf, &used, err)) ||
        (rc = sw_net_lr_solve(net, &w->lr, w->state, z, err)))
      return rc;
  } else {
    info->iterations += it;
  }
  *have = 1;
  return write_point(net, w, z, k, q, nq, info, err);
}

int sw_net_sweep_arrays(sw_net *net, const sw_net_sweep_spec *sp, const sw_net_quant *q,
                        size_t nq, sw_net_sweep_info *info, sw_err *err)
{
  const size_t el = sp->el, n = sp->n;
  const double *values = sp->values, max_states = sp->max_states;
  const int *start = sp->start;
  size_t m = net->ndev, N, k, r;
  double keep = net->el[el].value;
  const char *name = net->el[el].name;
  int source = net->el[el].kind == SW_NET_V || net->el[el].kind == SW_NET_I;
  int rc = SW_OK, have = 0;
  sweep_ws w;
  memset(&w, 0, sizeof w);
  memset(info, 0, sizeof *info);
  if (sw_net_prepare(net, err)) return err->code;
  N = net->nunk;
  if (ws_init(net, &w, err)) return SW_ENOMEM;
  if (start) { memcpy(w.state, start, m * sizeof *w.state); have = 1; }
  if (source && (rc = source_basis(net, name, &w, err))) goto done;
  for (k = 0; k < n; k++) {
    if (source) {  /* only the particular solution moves */
      double val = values[k];
      if (!sw_isfinite(val)) {
        rc = sw_err_set(err, SW_EINVAL, "point %zu of %zu is not finite", k + 1, n);
        break;
      }
      for (r = 0; r < N; r++) net->yp[r] = w.yp0[r] + val * w.dyp[r];
      for (r = 0; r < m; r++) {
        net->vp[r] = w.vp0[r] + val * w.dvp[r];
        net->ip[r] = w.ip0[r] + val * w.dip[r];
      }
    } else {       /* a resistor or gain: a new reduction */
      if ((rc = sw_net_set(net, name, values[k], err)) || (rc = sw_net_prepare(net, err))) {
        name_point(err, name, values, k, n);
        break;
      }
      w.lr.valid = 0;
    }
    if ((rc = solve_point(net, &w, k, &have, max_states, q, nq, info, err))) {
      if (rc != SW_ENOMEM) name_point(err, name, values, k, n);
      break;
    }
  }
done:
  info->updates = w.lr.updates;
  info->refactors = w.lr.refactors;
  {
    sw_err e2;
    sw_net_set(net, name, keep, &e2); /* also drops the moved reduction */
  }
  ws_free(&w);
  return rc;
}

/* One drawn value: nominal * (1 + tol * u), u uniform on [-1, 1] or
 * standard normal.  Both Monte Carlo forms draw in the same order, so a
 * seed gives the same runs in either. */
static double mc_draw(gsl_rng *rng, double nominal, double tol, int gauss)
{
  double u = gauss ? gsl_ran_gaussian(rng, 1.0) : 2 * gsl_rng_uniform(rng) - 1;
  return nominal * (1 + tol * u);
}

/* Seeded Monte Carlo: run r draws value k of element el[k] as
 * nominal[k] * (1 + tol[k] * u), u uniform on [-1, 1] (gauss[k] == 0) or
 * standard normal (tol is then the relative standard deviation), from
 * GSL's MT19937 generator.  drawn receives n x k values.  Each run starts
 * from the previous run's states.  Values are restored afterwards. */
int sw_net_montecarlo(sw_net *net, const sw_net_mc *mc, sw_net_op *ops, double *drawn,
                      sw_err *err)
{
  const size_t *el = mc->el, k = mc->k, n = mc->runs;
  const double *tol = mc->tol, max_states = mc->max_states;
  const int *gauss = mc->gauss;
  size_t m = net->ndev, r, q, it, nf;
  double *keep = sw_alloc(k, sizeof *keep, err);
  int *state = sw_alloc(m, sizeof *state, err), rc = SW_OK;
  const char *used;
  gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
  if (!keep || !state || !rng) {
    free(keep); free(state); gsl_rng_free(rng);
    return sw_err_set(err, SW_ENOMEM, "out of memory in montecarlo");
  }
  gsl_rng_set(rng, mc->seed);
  for (q = 0; q < k; q++) keep[q] = net->el[el[q]].value;
  for (r = 0; r < n && rc == SW_OK; r++) {
    for (q = 0; q < k && rc == SW_OK; q++) {
      drawn[r * k + q] = mc_draw(rng, keep[q], tol[q], gauss[q]);
      rc = sw_net_set(net, net->el[el[q]].name, drawn[r * k + q], err);
    }
    if (rc || (rc = sw_net_prepare(net, err))) { sw_err_prefix(err, "run %zu: ", r + 1); break; }
    if (r == 0) sw_net_default_start(net, state);
    if (sw_net_assumed(net, state, 0, state, &it, NULL, NULL, err) != SW_OK) {
      if (err->code == SW_ENOMEM) { rc = SW_ENOMEM; break; }
      if ((rc = sw_net_auto(net, state, max_states, state, &it, &nf, &used, err))) {
        sw_err_prefix(err, "run %zu: ", r + 1);
        break;
      }
    }
    if ((rc = sw_net_op_from_state(net, state, &ops[r], err))) {
      sw_err_prefix(err, "run %zu: ", r + 1);
      break;
    }
    ops[r].iterations = it;
  }
  for (q = 0; q < k; q++) { sw_err e2; sw_net_set(net, net->el[el[q]].name, keep[q], &e2); }
  free(keep); free(state); gsl_rng_free(rng);
  return rc;
}

/* The same runs into arrays: drawn[q][r] the value of el[q] in run r, and
 * the quantities q of every run, with no allocation per run (each run
 * rebuilds the reduction, as a resistor sweep does). */
int sw_net_montecarlo_arrays(sw_net *net, const sw_net_mc *mc, double *const *drawn,
                             const sw_net_quant *q, size_t nq, sw_net_sweep_info *info,
                             sw_err *err)
{
  const size_t *el = mc->el, k = mc->k, n = mc->runs;
  const double *tol = mc->tol, max_states = mc->max_states;
  const int *gauss = mc->gauss;
  size_t r, j;
  double *keep;
  gsl_rng *rng;
  sweep_ws w;
  int rc = SW_OK, have = 0;
  memset(info, 0, sizeof *info);
  if (sw_net_prepare(net, err)) return err->code;
  keep = sw_alloc(k, sizeof *keep, err);
  rng = gsl_rng_alloc(gsl_rng_mt19937);
  if (!keep || !rng || ws_init(net, &w, err)) {
    free(keep);
    gsl_rng_free(rng);
    return sw_err_set(err, SW_ENOMEM, "out of memory in montecarlo");
  }
  gsl_rng_set(rng, mc->seed);
  for (j = 0; j < k; j++) keep[j] = net->el[el[j]].value;
  for (r = 0; r < n && rc == SW_OK; r++) {
    for (j = 0; j < k && rc == SW_OK; j++) {
      drawn[j][r] = mc_draw(rng, keep[j], tol[j], gauss[j]);
      rc = sw_net_set(net, net->el[el[j]].name, drawn[j][r], err);
    }
    if (!rc && !(rc = sw_net_prepare(net, err))) {
      w.lr.valid = 0;
      rc = solve_point(net, &w, r, &have, max_states, q, nq, info, err);
    }
    if (rc && rc != SW_ENOMEM) sw_err_prefix(err, "run %zu: ", r + 1);
  }
  info->updates = w.lr.updates;
  info->refactors = w.lr.refactors;
  for (j = 0; j < k; j++) { sw_err e2; sw_net_set(net, net->el[el[j]].name, keep[j], &e2); }
  free(keep);
  gsl_rng_free(rng);
  ws_free(&w);
  return rc;
}
