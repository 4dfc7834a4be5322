/* The assumed-state method, as done by hand: assume a segment for every
 * device, solve the now-linear circuit, check each device against its
 * segment, move the devices that left it, repeat.  A repeated state means
 * a cycle: the iteration then moves only the worst device by one segment;
 * a second cycle ends it.  Also the automatic choice of method. */
#include "net/net.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void sw_net_state_text(const sw_net *net, const int *state, char *buf, size_t cap)
{
  size_t k, n = 0;
  if (cap == 0) return;
  buf[0] = 0;
  for (k = 0; k < net->ndev && n + 1 < cap; k++) {
    int w = snprintf(buf + n, cap - n, "%s%s=%d", k ? ", " : "", net->el[net->dev[k].el].name,
                     net->dev[k].seg[state[k]].label);
    if (w < 0) break;
    n += (size_t)w;
  }
}

/* Default start: the segment holding x = 0 (every device at rest). */
void sw_net_default_start(const sw_net *net, int *state)
{
  size_t k;
  for (k = 0; k < net->ndev; k++) state[k] = (int)sw_net_locate(&net->dev[k], 0.0);
}

void sw_net_trace_free(sw_net_trace *t)
{
  if (!t) return;
  free(t->state); free(t->v); free(t->i); free(t->x); free(t->excess); free(t->event);
  memset(t, 0, sizeof *t);
}

static int trace_push(sw_net_trace *t, size_t m, const int *state, const double *v,
                      const double *i, const double *x, const double *ex, int event, sw_err *err)
{
  if (t->n == t->cap) {
    size_t cap = t->cap ? 2 * t->cap : 8;
    int *s = sw_realloc(t->state, cap * m, sizeof *s, err);
    if (s) t->state = s;
    {
      double *q = s ? sw_realloc(t->v, cap * m, sizeof *q, err) : NULL;
      if (q)
        t->v = q;
      else
        s = NULL;
    }
    {
      double *q = s ? sw_realloc(t->i, cap * m, sizeof *q, err) : NULL;
      if (q)
        t->i = q;
      else
        s = NULL;
    }
    {
      double *q = s ? sw_realloc(t->x, cap * m, sizeof *q, err) : NULL;
      if (q)
        t->x = q;
      else
        s = NULL;
    }
    {
      double *q = s ? sw_realloc(t->excess, cap * m, sizeof *q, err) : NULL;
      if (q)
        t->excess = q;
      else
        s = NULL;
    }
    {
      int *q = s ? sw_realloc(t->event, cap, sizeof *q, err) : NULL;
      if (q)
        t->event = q;
      else
        s = NULL;
    }
    if (!s) return SW_ENOMEM;
    t->cap = cap;
  }
  t->m = m;
  memcpy(t->state + t->n * m, state, m * sizeof *state);
  memcpy(t->v + t->n * m, v, m * sizeof *v);
  memcpy(t->i + t->n * m, i, m * sizeof *i);
  memcpy(t->x + t->n * m, x, m * sizeof *x);
  memcpy(t->excess + t->n * m, ex, m * sizeof *ex);
  t->event[t->n++] = event;
  return SW_OK;
}

static int seen(const int *hist, size_t nh, const int *state, size_t m)
{
  size_t h;
  for (h = 0; h < nh; h++)
    if (memcmp(hist + h * m, state, m * sizeof *state) == 0) return 1;
  return 0;
}

/* Port values of a state: the m x m reduced system (z kept for the
 * caller), or, when a trace is kept, the full LU solve (its values are the
 * ones an engineer reads). */
static int solve_ports(const sw_net *net, sw_net_lr *lr, const int *state, double *v,
                       double *i, double *z, int full, sw_err *err)
{
  sw_net_op op;
  size_t k, c, m = net->ndev;
  if (!full) {
    if (sw_net_lr_solve(net, lr, state, z, err)) return err->code;
    for (k = 0; k < m; k++) {
      double vv = net->vp[k], ii = net->ip[k];
      for (c = 0; c < m; c++) { vv += net->Xv[k * m + c] * z[c]; ii += net->Xi[k * m + c] * z[c]; }
      v[k] = vv; i[k] = ii;
    }
    return SW_OK;
  }
  memset(&op, 0, sizeof op);
  if (sw_net_op_from_state(net, state, &op, err)) return err->code;
  for (k = 0; k < m; k++) { v[k] = op.v[net->dev[k].el]; i[k] = op.i[net->dev[k].el]; }
  sw_net_op_free(&op);
  return SW_OK;
}

size_t sw_net_assumed_max_iter(const sw_net *net)
{
  size_t k, n = 100;
  for (k = 0; k < net->ndev; k++) n += net->dev[k].nseg;
  return n;
}

int sw_net_assumed(const sw_net *net, const int *start, size_t max_iter,
                   int *state, size_t *iterations, sw_net_trace *trace,
                   size_t *updates, sw_err *err)
{
  sw_net_lr lr;
  size_t m = net->ndev;
  double *work;
  int *hist, rc;
  *iterations = 0;
  if (m == 0) return SW_OK;
  if (max_iter == 0) max_iter = sw_net_assumed_max_iter(net);
  work = sw_alloc(5 * m, sizeof *work, err);
  hist = sw_alloc((max_iter + 1) * m, sizeof *hist, err);
  if (!work || !hist || sw_net_lr_init(&lr, m, err)) { free(work); free(hist); return SW_ENOMEM; }
  rc = sw_net_assumed_run(net, &lr, hist, work, start, max_iter, state, iterations, trace, err);
  if (updates) *updates = lr.updates;
  sw_net_lr_free(&lr);
  free(work); free(hist);
  return rc;
}

/* The attempt whose equations were singular: traced, and the error. */
static int singular_attempt(const sw_net *net, const int *state, double *work, size_t it,
                            sw_net_trace *trace, sw_err *err)
{
  size_t m = net->ndev, k;
  double *v = work, *i = v + m, *x = i + m, *ex = x + m;
  char text[200];
  sw_net_state_text(net, state, text, sizeof text);
  if (trace) {
    for (k = 0; k < m; k++) v[k] = i[k] = x[k] = ex[k] = NAN;
    if (trace_push(trace, m, state, v, i, x, ex, SW_TRACE_SINGULAR, err)) return SW_ENOMEM;
  }
  return sw_err_set(err, SW_ENOSOL,
                    "assumed state: the equations are singular with states %s after %zu attempts",
                    text, it);
}

/* Each device's x and its excess over its assumed segment (in work, after
 * v and i); returns 1 when some device left its segment, the worst (by
 * excess over its tolerance) in *worst. */
static int check_segments(const sw_net *net, const int *state, double *work, size_t *worst)
{
  size_t m = net->ndev, k;
  double *v = work, *i = v + m, *x = i + m, *ex = x + m, worst_rel = -1;
  int bad = 0;
  for (k = 0; k < m; k++) {
    const sw_net_dev *d = &net->dev[k];
    x[k] = sw_net_dev_x(d, v[k], i[k]);
    ex[k] = sw_net_excess(d, (size_t)state[k], x[k]);
    if (ex[k] != 0) {
      double rel = fabs(ex[k]) / (d->tol * 1e9);
      bad = 1;
      if (rel > worst_rel) { worst_rel = rel; *worst = k; }
    }
  }
  return bad;
}

int sw_net_assumed_run(const sw_net *net, sw_net_lr *lr, int *hist, double *work,
                       const int *start, size_t max_iter, int *state,
                       size_t *iterations, sw_net_trace *trace, sw_err *err)
{
  size_t m = net->ndev, k, it, nh = 0;
  double *v = work, *i = v + m, *x = i + m, *ex = x + m, *z = ex + m;
  int stepping = 0, rc = SW_OK;
  char text[200];
  *iterations = 0;
  if (m == 0) return SW_OK;
  if (start) { if (start != state) memcpy(state, start, m * sizeof *state); }
  else sw_net_default_start(net, state);
  memcpy(hist, state, m * sizeof *state); nh = 1;
  for (it = 1; it <= max_iter; it++) {
    int bad, event = SW_TRACE_SOLVED;
    size_t worst = 0;
    *iterations = it;
    if ((rc = solve_ports(net, lr, state, v, i, z, trace != NULL, err))) {
      if (rc != SW_ENOMEM) /* out of memory is not a singular state */
        rc = singular_attempt(net, state, work, it, trace, err);
      break;
    }
    bad = check_segments(net, state, work, &worst);
    if (!bad) {
      if (trace && trace_push(trace, m, state, v, i, x, ex, event, err)) rc = SW_ENOMEM;
      break;
    }
    /* re-assign */
    if (!stepping) {
      for (k = 0; k < m; k++) if (ex[k] != 0) state[k] = (int)sw_net_locate(&net->dev[k], x[k]);
      if (seen(hist, nh, state, m)) {
        /* cycle: undo, and from here on move one device one segment */
        stepping = 1; event = SW_TRACE_CYCLE;
        memcpy(state, hist + (nh - 1) * m, m * sizeof *state);
        memcpy(hist, state, m * sizeof *state); nh = 1;
      }
    }
    if (stepping) {
      int to = state[worst] + (ex[worst] > 0 ? 1 : -1);
      if (to < 0 || (size_t)to >= net->dev[worst].nseg) {
        const sw_net_dev *d = &net->dev[worst];
        if (trace && trace_push(trace, m, state, v, i, x, ex, event, err)) {
          rc = SW_ENOMEM;
          break;
        }
        rc = sw_err_set(err, SW_ENOSOL,
                        "assumed state: no consistent state: %s needs %s = %g, beyond the end of "
                        "its model's range [%g, %g] (extend = \"error\")",
                        net->el[d->el].name, d->x_is_i ? "i" : "v", x[worst], d->seg[0].lo,
                        d->seg[d->nseg - 1].hi);
        break;
      }
      state[worst] = to;
    }
    if (trace && trace_push(trace, m, hist + (nh - 1) * m, v, i, x, ex, event, err)) {
      rc = SW_ENOMEM;
      break;
    }
    if (stepping && seen(hist, nh, state, m)) {
      sw_net_state_text(net, state, text, sizeof text);
      rc = sw_err_set(err, SW_ENOSOL,
                      "assumed state: the iteration cycles (state %s comes back after %zu "
                      "attempts); try method = \"enumerate\" or \"lcp\"",
                      text, it);
      break;
    }
    memcpy(hist + nh * m, state, m * sizeof *state); nh++;
    if (it == max_iter) {
      sw_net_state_text(net, state, text, sizeof text);
      rc = sw_err_set(err, SW_ENOSOL,
                      "assumed state: no consistent state after %zu attempts (last tried %s); try "
                      "method = \"enumerate\" or \"lcp\"",
                      it, text);
    }
  }
  return rc;
}

/* The range of y a device's model takes over all its segments. */
static void model_y_range(const sw_net_dev *d, double *ymin, double *ymax)
{
  size_t k;
  *ymin = INFINITY;
  *ymax = -INFINITY;
  for (k = 0; k < d->nseg; k++) {
    const sw_net_seg *s = &d->seg[k];
    double ends[2] = {s->lo, s->hi};
    int e;
    for (e = 0; e < 2; e++) {
      double y = sw_isfinite(ends[e]) ? s->slope * ends[e] + s->icpt
                 : s->slope == 0    ? s->icpt
                 : (s->slope > 0) == (e == 1) ? INFINITY : -INFINITY;
      if (y < *ymin) *ymin = y;
      if (y > *ymax) *ymax = y;
    }
  }
}

/* One device and no segment its load line meets.  When the circuit forces
 * the model's y (a current source in series with an i(v) device, say)
 * to a value the model never takes, say that: a flat segment at 0 is the
 * usual cause (no current below a knee). */
static int no_crossing(const sw_net *net, sw_err *err)
{
  const sw_net_dev *d = &net->dev[0];
  const char *name = net->el[d->el].name, *q = d->x_is_i ? "v" : "i", *u = d->x_is_i ? "V" : "A";
  double Y = d->x_is_i ? net->Xv[0] : net->Xi[0], y0 = d->x_is_i ? net->vp[0] : net->ip[0];
  double X = d->x_is_i ? net->Xi[0] : net->Xv[0], ymin, ymax;
  model_y_range(d, &ymin, &ymax);
  if (Y == 0 && X != 0 && (y0 < ymin || y0 > ymax)) {
    int flat0 = (ymin == 0 && y0 < 0) || (ymax == 0 && y0 > 0);
    return sw_err_set(err, SW_ENOSOL,
                      "no consistent state: the circuit forces %s = %g %s through %s, which its "
                      "model never reaches (its %s stays within [%g, %g] %s)%s",
                      q, y0, u, name, q, ymin, ymax, u,
                      flat0 ? "; its flat segment at 0 carries none in that direction" : "");
  }
  return sw_err_set(err, SW_ENOSOL,
                    "no consistent state: the load line meets none of the %zu segments of %s",
                    d->nseg, name);
}

static double count_states(const sw_net *net)
{
  double n = 1;
  size_t k;
  for (k = 0; k < net->ndev; k++) n *= (double)net->dev[k].nseg;
  return n;
}

int sw_net_auto(const sw_net *net, const int *start, double max_states,
                int *state, size_t *iterations, size_t *nfound,
                const char **used, sw_err *err)
{
  size_t m = net->ndev, visited = 0, count = 0, pivots = 0;
  int *all = NULL, pm;
  const char *how;
  char tried[700] = "";
  *nfound = 0; *iterations = 0;
  if (m == 0) { *used = "linear"; *nfound = 1; return SW_OK; }
  if (m > 1) {
    *used = "assumed";
    if (sw_net_assumed(net, start, 0, state, iterations, NULL, NULL, err) == SW_OK) return SW_OK;
    if (err->code == SW_ENOMEM) return SW_ENOMEM;
    snprintf(tried, sizeof tried, "assumed state: %.300s", err->msg);
    *used = "lcp";
    if (sw_net_lcp(net, state, &pivots, &pm, &how, err) == SW_OK) {
      *iterations = pivots;
      return SW_OK;
    }
    if (err->code == SW_ENOMEM) return SW_ENOMEM;
    {
      size_t n = strlen(tried);
      snprintf(tried + n, sizeof tried - n, "; %.300s", err->msg);
    }
  }
  *used = m == 1 ? "load line" : "enumerate";
  if (count_states(net) > max_states)
    return sw_err_set(
        err, SW_ENOSOL,
        "no consistent state found (%s); enumeration skipped: %.0f states exceed max_states", tried,
        count_states(net));
  if (sw_net_enumerate(net, max_states, &all, &count, &visited, err)) return err->code;
  *iterations = visited;
  if (count == 0) {
    free(all);
    if (m == 1) return no_crossing(net, err);
    return sw_err_set(err, SW_ENOSOL,
                      "no consistent state exists (%s; enumeration of all %zu states found none)",
                      tried, visited);
  }
  memcpy(state, all, m * sizeof *state);
  *nfound = count;
  free(all);
  return SW_OK;
}
