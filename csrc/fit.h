/* Fitting a PWL model to a curve over an operating range: criteria
 * (minimax, least squares, interpolation, tangent, chord), breakpoint
 * schemes (uniform, geometric, curvature, optimal, explicit) and fewest
 * segments for a tolerance.  Every path works on a sample set: the curve's
 * own samples, or a dense grid of an analytic curve; reported errors are
 * always rechecked against the curve itself. */
#ifndef SW_FIT_H
#define SW_FIT_H

#include <stddef.h>
#include "sw_err.h"
#include "curve.h"
#include "pwl.h"

typedef enum {
  SW_FIT_MINIMAX = 1,
  SW_FIT_LSQ,
  SW_FIT_INTERP,
  SW_FIT_TANGENT,
  SW_FIT_CHORD
} sw_fit_criterion;

typedef enum {
  SW_KNOTS_UNIFORM = 1,
  SW_KNOTS_GEOMETRIC,
  SW_KNOTS_CURVATURE,
  SW_KNOTS_OPTIMAL,
  SW_KNOTS_LIST
} sw_knots_scheme;

typedef struct sw_fit_opts {
  double lo, hi;            /* operating range, inside the curve's domain */
  size_t segments;          /* fixed count, or 0 when tol is given */
  double tol;               /* > 0: fewest segments whose error stays within tol */
  sw_knots_scheme knots;
  const double *knot_list;  /* SW_KNOTS_LIST: sorted knots inside [lo, hi] */
  size_t nknot_list;
  sw_fit_criterion criterion;
  int rel;                  /* 0: absolute error, 1: relative error (fraction) */
  double rel_floor;         /* smallest |y| used as denominator; <= 0: none */
  int continuous;
  int has_at;               /* tangent: operating point */
  double at;
  const double *through_x, *through_y; /* points the model must pass through */
  size_t nthrough;
  int has_slope_first, has_slope_last;
  double slope_first, slope_last;
  int monotone;             /* 1: model slopes follow the curve's direction */
  size_t grid;              /* samples of an analytic curve; 0: default */
  size_t max_segments;      /* tol: no model above this count (an error); 0: no cap */
  double offset;            /* geometric knots: spacing grows from this x */
} sw_fit_opts;

typedef struct sw_fit_info {
  double max_abs, x_abs;    /* rechecked against the curve */
  double max_rel, x_rel;    /* NaN when undefined (curve reaches 0, no floor) */
  double rms;
  size_t iterations;        /* bisection steps, exchange sweeps or search steps */
  double internal;          /* the method's own error estimate on its samples */
} sw_fit_info;

/* Sets the defaults: uniform knots, minimax, abs, continuous, 4 segments. */
void sw_fit_opts_init(sw_fit_opts *o);

/* Fits curve c with options o into out (allocated here; freed on failure). */
int sw_fit(const sw_curve *c, const sw_fit_opts *o, sw_pwl *out,
           sw_fit_info *info, sw_err *err);

/* Error of each segment k of m alone against c over [x[k], x[k+1]]:
 * caller-owned arrays of m->nseg entries; max_rel entries NaN when undefined. */
int sw_fit_segment_errors(const sw_pwl *m, const sw_curve *c, double rel_floor,
                          double *max_abs, double *x_abs, double *max_rel,
                          sw_err *err);

/* ---- Internal to the fit*.c files -------------------------------------- */

/* The sample set every method works on.  s[i] scales the tolerance tube
 * (half-width e*s[i]; 0 for points the model must pass through), w[i] is
 * the least-squares weight (quadrature weight or 1; 0 for inserted points). */
typedef struct fit_data {
  size_t n;
  double *x, *y, *s, *w;
  int analytic;             /* 1: grid of a law or function */
} fit_data;

/* Per-fit constraints the tube methods honour. */
typedef struct fit_cons {
  int has_first, has_last;
  double slope_first, slope_last;
  int dir;                  /* monotone: +1 non-decreasing, -1 non-increasing, 0 free */
} fit_cons;

void fit_data_free(fit_data *d);
size_t fit_lower(const fit_data *d, double x);   /* first i with x[i] >= x */
size_t fit_upper(const fit_data *d, double x);   /* first i with x[i] > x */
/* Inserts points at xs (curve values) so that every knot is a sample. */
int fit_data_insert(fit_data *d, const sw_curve *c, const double *xs, size_t m,
                    int rel, double rel_floor, sw_err *err);
/* Largest |m - y| / s over the samples with s > 0. */
double fit_data_maxerr(const fit_data *d, const sw_pwl *m);

/* The feasible-line polygon (fit_poly.c). */
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
/* A level every constant line at the data's centre meets (bisection start). */
double fit_start_level(const fit_data *d);
/* Next level to try between an infeasible elo and a feasible ehi: the
 * middle, or the geometric middle (ehi / 1024 while elo is 0) when the two
 * are decades apart, so a start level far above the answer (a tiny
 * rel_floor puts it near 1e300) costs tens of steps, not hundreds. */
double fit_mid_level(double elo, double ehi);
/* Cap on the steps of a level bisection (a safeguard; none comes near). */
#define FIT_BISECT_STEPS 400

/* Tube methods (fit_tube.c, fit_interp.c). */
fit_tube *fit_tube_new(size_t n, sw_err *err);
void fit_tube_free(fit_tube *w);
/* Lines with start value in [alo, ahi] at x[p] and slope in [smin, smax]
 * through the bands (half-width e*s) of samples p..qmax: returns the last
 * sample q they all fit; rlo/rhi (when given) get the range of values at
 * each sample up to q, and stop (when given) may end the run there.
 * *ok = 0 when even the samples at x[p] fail. */
typedef int (*fit_stop_fn)(void *ctx, size_t i, double lo, double hi);
size_t fit_tube_run(const fit_data *d, double e, size_t p, size_t qmax, double alo, double ahi,
                    double smin, double smax, fit_tube *w, int *ok, double *rlo, double *rhi,
                    fit_stop_fn stop, void *sctx);
double fit_tube_start_for(const fit_tube *w, double h, double target);
void fit_slope_bounds(const fit_cons *k, int first, int lastseg, double *smin, double *smax);
/* Continuous fewest-segments search over reachable sets (fit_reach.c):
 * *count segments (SIZE_MAX when none within maxseg); knots and their
 * values (room for maxseg + 1) when given. */
int fit_reach(const fit_data *d, double e, const fit_cons *k, size_t maxseg, const double *extra,
              size_t nextra, size_t *count, double *kx, double *ky, sw_err *err);
/* The same count with knots among the abscissae cand only (which must hold
 * x[0]'s and the last sample's); no model. */
int fit_reach_among(const fit_data *d, double e, const fit_cons *k, size_t maxseg,
                    const double *cand, size_t ncand, size_t *count, sw_err *err);
/* The candidate knots fit_reach takes on d (abscissae, sorted, distinct). */
int fit_reach_candidates(const fit_data *d, const double *extra, size_t nextra, double **xs,
                         size_t *n, sw_err *err);
int fit_minimax_fixed(const fit_data *d, const double *knots, size_t nseg,
                      int continuous, const fit_cons *k, sw_pwl *out,
                      double *e_out, size_t *iters, sw_err *err);
/* The same by bisection in [e_lo, e_hi] (e_hi <= 0: the whole range) to a
 * relative precision rtol; capped: when e_hi itself is infeasible, *e_out
 * = INFINITY and no model (out untouched) instead of raising the level. */
int fit_minimax_fixed_from(const fit_data *d, const double *knots, size_t nseg, int continuous,
                           const fit_cons *k, double e_lo, double e_hi, double rtol, int capped,
                           sw_pwl *out, double *e_out, size_t *iters, sw_err *err);
int fit_minimax_tol(const fit_data *d, double e, int continuous,
                    const fit_cons *k, sw_pwl *out, sw_err *err);
int fit_minimax_count(const fit_data *d, size_t nseg, int continuous,
                      const fit_cons *k, sw_pwl *out, double *e_out,
                      size_t *iters, sw_err *err);
int fit_interp_tol(const fit_data *d, double e, sw_pwl *out, sw_err *err);
int fit_interp_count(const fit_data *d, size_t nseg, sw_pwl *out,
                     double *e_out, size_t *iters, sw_err *err);

/* Least squares (fit_lsq.c). */
int fit_lsq_fixed(const fit_data *d, const double *knots, size_t nseg,
                  int continuous, const fit_cons *k, const double *tx,
                  const double *ty, size_t nt, sw_pwl *out, double *sse,
                  sw_err *err);
int fit_lsq_optimal(const fit_data *d, double lo, double hi, size_t nseg,
                    int continuous, const double *start, double *knots,
                    size_t *iters, sw_err *err);

/* Grid of an analytic curve on [lo, hi] (fit_grid.c): about n sorted
 * distinct points into *xs (caller frees), more for a tolerance fit (tol >
 * 0) until the grid's own chord error is a small part of tol. */
int fit_grid_analytic(const sw_curve *c, double lo, double hi, size_t n, int rel,
                      double rel_floor, double tol, double **xs, size_t *nx, sw_err *err);

/* sw_pwl_compare of m against c on [lo, hi] with n grid points, plus (for
 * analytic curves) a search for each segment's own error peaks
 * (fit_check.c). */
int fit_recheck(const sw_pwl *m, const sw_curve *c, double lo, double hi, size_t n,
                double rel_floor, sw_compare *cmp, sw_err *err);

/* Knot schemes (fit_knots.c): nseg + 1 knots from lo to hi. */
int fit_knots_uniform(double lo, double hi, size_t nseg, double *k, sw_err *err);
int fit_knots_geometric(double lo, double hi, double offset, size_t nseg, double *k, sw_err *err);
int fit_knots_curvature(const sw_curve *c, const fit_data *d, double lo,
                        double hi, size_t nseg, double power, double *k,
                        sw_err *err);

#endif
