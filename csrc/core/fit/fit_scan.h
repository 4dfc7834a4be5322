/* The tube feasibility scan: the feasible-line polygon (O'Rourke's on-line
 * line fitting) run over consecutive samples (fit_scan.c). */
#ifndef SW_FIT_SCAN_H
#define SW_FIT_SCAN_H

#include <stddef.h>
#include "fit/fit_data.h"

/* The feasible-line polygon. */
typedef struct fit_poly {
  size_t n;
  double *a, *s;
} fit_poly;

/* The live polygon: a circular doubly-linked ring of vertices, so that a
 * cut replaces a chain of vertices in time proportional to the chain
 * (smooth convex data put a vertex per sample on the boundary). */
typedef struct fit_ring {
  size_t n, used, nfree, head;
  double *a, *s;
  size_t *nx, *pv, *freel;
  unsigned char *dead;
} fit_ring;

typedef struct fit_tube {
  size_t cap;
  fit_ring R;
  fit_poly P;   /* the ring exported after a run */
} fit_tube;

int fit_tube_init(fit_tube *w, size_t n, sw_err *err);
void fit_tube_clear(fit_tube *w);
fit_tube *fit_tube_new(size_t n, sw_err *err);
void fit_tube_free(fit_tube *w);
/* Lines with start value in [alo, ahi] at x[p] and slope in [smin, smax]
 * through the bands (half-width e*s) of samples p..qmax: returns the last
 * sample q they all fit; rlo/rhi (when given) get the range of values at
 * each sample up to q, and stop (when given) may end the run there.
 * *ok = 0 when even the samples at x[p] fail. */
typedef int (*fit_stop_fn)(void *ctx, size_t i, double lo, double hi);
/* Where a run starts and what its lines may be. */
typedef struct fit_span {
  size_t p, qmax;           /* first sample, last sample the run may reach */
  double alo, ahi;          /* the lines' values at x[p] */
  double smin, smax;        /* their slopes */
} fit_span;
/* What a run reports as it goes (every field may be NULL). */
typedef struct fit_track {
  double *rlo, *rhi;        /* range of the lines' values at each sample */
  fit_stop_fn stop;         /* may end the run at a sample */
  void *sctx;
} fit_track;
size_t fit_tube_run(const fit_data *d, double e, fit_span sp, fit_tube *w, const fit_track *tr,
                    int *ok);
double fit_tube_start_for(const fit_tube *w, double h, double target);
void fit_slope_bounds(const fit_cons *cons, int first, int lastseg, double *smin, double *smax);

#endif
