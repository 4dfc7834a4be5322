/* Linear networks with piecewise-linear devices: modified nodal analysis,
 * topology checks, and the operating-point solvers (assumed state,
 * enumeration, Lemke's LCP, Newton on exact curves, sweeps).
 *
 * Every device segment is an implicit line a*v + b*i = c over an interval
 * of the device's input variable x (v or i), with the device current as its
 * own unknown, so flat and near-vertical segments both work.
 *
 * Solving goes through a port reduction: the linear rows L*y = s of the MNA
 * system leave an m-dimensional family of solutions y = yp + K*z (m =
 * number of devices, K from a QR factorisation of L^T), so each device's
 * port values are v = vp + Xv*z, i = ip + Xi*z and a choice of segments is
 * an m x m system.  A segment change alters one row of it: a rank-one
 * (Sherman-Morrison) update.  An accepted state is re-solved on the full
 * MNA matrix with GSL's LU for the reported point. */
#ifndef SW_NET_H
#define SW_NET_H

#include <stddef.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_vector.h>

#include "err/sw_err.h"
#include "curve/curve.h"
#include "pwl/pwl.h"

typedef enum {
  SW_NET_R = 1, SW_NET_V, SW_NET_I, SW_NET_VCVS, SW_NET_VCCS, SW_NET_CCVS,
  SW_NET_CCCS, SW_NET_DEV
} sw_net_kind;

#define SW_NET_NONE ((size_t)-1)

/* One segment of a device: x in [lo, hi] (infinite ends allowed), y = slope
 * * x + icpt, stored as a*v + b*i = c (normalised).  label is the 1-based
 * segment number shown to users (0 and nseg+1 for held extensions). */
typedef struct sw_net_seg {
  double lo, hi, slope, icpt, a, b, c;
  int label;
} sw_net_seg;

typedef struct sw_net_dev {
  size_t el;         /* element index */
  sw_pwl model;      /* owned copy */
  int x_is_i;        /* 0: model gives i(v); 1: model gives v(i) */
  double pmax;       /* rating in W, or 0 for none */
  size_t nseg;
  sw_net_seg *seg;
  double tol;        /* membership tolerance in x units */
  size_t col;        /* column of the device current in y */
} sw_net_dev;

typedef struct sw_net_el {
  sw_net_kind kind;
  char *name;
  size_t na, nb, cp, cm; /* nodes (0 = reference); cp/cm: control nodes */
  char *ctrl_name;       /* CCVS/CCCS: controlling element */
  size_t ctrl;           /* resolved element index */
  double value;          /* ohms, volts, amps, gain */
  size_t col;            /* branch-current column, or SW_NET_NONE */
  size_t dev;            /* device index for SW_NET_DEV */
} sw_net_el;

typedef struct sw_net {
  size_t nnodes, nodecap;
  char **node;           /* node[0] = "0" */
  size_t nel, elcap;
  sw_net_el *el;
  size_t ndev, devcap;
  sw_net_dev *dev;
  /* prepared data (rebuilt after any change) */
  int prepared;
  size_t nunk;           /* N: node voltages 1..n-1, then branch currents */
  size_t nlin;           /* rows of the linear part L (N - ndev) */
  double *K;             /* N x m null-space basis of L */
  double *yp;            /* N: particular solution of L*y = s */
  double *Xv, *Xi;       /* m x m: device port rows of K */
  double *vp, *ip;       /* m: device port values of yp */
  /* 1: every change of state refactorises the m x m system (no
   * Sherman-Morrison-Woodbury updates); for measuring the updates */
  int refactor_always;
} sw_net;

/* An operating point (all arrays owned). */
typedef struct sw_net_op {
  double *vnode;         /* nnodes, vnode[0] = 0 */
  double *v, *i, *p;     /* per element: branch voltage, current, power */
  int *state;            /* per device: 0-based index into dev->seg */
  unsigned char *on_bp;  /* per device: sits on a breakpoint */
  int stability;         /* SW_NET_STABLE ... */
  size_t iterations;
} sw_net_op;

enum { SW_NET_UNKNOWN = 0, SW_NET_STABLE, SW_NET_UNSTABLE, SW_NET_MARGINAL };

/* Records of the assumed-state iteration, one row per attempt. */
enum { SW_TRACE_SOLVED = 0, SW_TRACE_SINGULAR, SW_TRACE_CYCLE };
typedef struct sw_net_trace {
  size_t n, cap, m;
  int *state;            /* n x m, 0-based */
  double *v, *i, *x;     /* n x m device values */
  double *excess;        /* n x m: > 0 above the segment, < 0 below, 0 ok */
  int *event;            /* n: SW_TRACE_* */
} sw_net_trace;

/* Building.  Names are copied; nodes are created on first use. */
void sw_net_init(sw_net *net);
void sw_net_free(sw_net *net);
int sw_net_node(sw_net *net, const char *name, size_t *idx, sw_err *err);
size_t sw_net_find(const sw_net *net, const char *name);
int sw_net_add(sw_net *net, sw_net_kind kind, const char *name,
               const char *const *nodes, const char *ctrl, double value,
               sw_err *err);
int sw_net_add_device(sw_net *net, const char *name, const char *na,
                      const char *nb, const sw_pwl *model, int x_is_i,
                      double pmax, sw_err *err);
int sw_net_set(sw_net *net, const char *name, double value, sw_err *err);
/* Topology checks and the port reduction (called by every solver). */
int sw_net_prepare(sw_net *net, sw_err *err);
/* The most unknowns any values of this topology give (every resistor with
 * a current unknown): the size of workspaces kept across value changes. */
size_t sw_net_max_unknowns(const sw_net *net);
const char *sw_net_kind_name(sw_net_kind k);

/* Linear algebra (net_mna.c).  Port values of a state; SW_ENUMERIC when
 * the state's system is singular. */
int sw_net_state_ports(const sw_net *net, const int *state, double *v,
                       double *i, sw_err *err);
/* Device input x and how far it lies outside segment s (0 inside). */
double sw_net_dev_x(const sw_net_dev *d, double v, double i);
double sw_net_excess(const sw_net_dev *d, size_t s, double x);
/* 0-based segment holding x (nearest at the ends). */
size_t sw_net_locate(const sw_net_dev *d, double x);
/* Full MNA solve of a state into op (allocates op's arrays). */
int sw_net_op_from_state(const sw_net *net, const int *state, sw_net_op *op,
                         sw_err *err);
/* op from a full unknown vector y (N values). */
int sw_net_op_from_y(const sw_net *net, const double *y, const int *state,
                     sw_net_op *op, sw_err *err);
void sw_net_op_free(sw_net_op *op);
/* Internal to the core: MNA stamping into an N x N matrix (state NULL:
 * linear rows only) and the port reduction. */
int sw_net_stamp(const sw_net *net, const int *state, gsl_matrix *A,
                 gsl_vector *rhs);
int sw_net_reduce(sw_net *net, sw_err *err);
/* Scales A in place to diag(dr) A diag(dc) with power-of-two factors (rows
 * first, then columns, each to a largest entry in [1, 2)); dr has size1,
 * dc size2 entries (net_scale.c).  A x = b becomes (dr A dc)(x / dc) = dr b. */
void sw_net_equilibrate(gsl_matrix *A, double *dr, double *dc);
/* The row half alone: A becomes diag(dr) A (same solutions, same null space). */
void sw_net_equilibrate_rows(gsl_matrix *A, double *dr);
int sw_net_stability(const sw_net *net, const sw_net_op *op, sw_err *err);

/* Low-rank (Sherman-Morrison-Woodbury) solves of state systems against a
 * stored inverse at a base state (net_lowrank.c). */
typedef struct sw_net_lr {
  size_t m;
  int *base;           /* state of the stored inverse */
  double *Minv;        /* m x m */
  double *work;
  double *fac;         /* m x m: LU scratch */
  size_t *idx, *perm;
  int valid;
  size_t moves;        /* rebases since the last factorisation */
  size_t updates, refactors;
} sw_net_lr;
int sw_net_lr_init(sw_net_lr *lr, size_t m, sw_err *err);
void sw_net_lr_free(sw_net_lr *lr);
/* Reduced unknowns z (m) of a state; then v = vp + Xv z, i = ip + Xi z. */
int sw_net_lr_solve(const sw_net *net, sw_net_lr *lr, const int *state,
                    double *z, sw_err *err);
int sw_net_lr_ports(const sw_net *net, sw_net_lr *lr, const int *state,
                    double *v, double *i, sw_err *err);

/* Solvers.  Each fills state (m ints).  updates (may be NULL) receives the
 * number of attempts solved by a low-rank update instead of a new
 * factorisation. */
int sw_net_assumed(const sw_net *net, const int *start, size_t max_iter,
                   int *state, size_t *iterations, sw_net_trace *trace,
                   size_t *updates, sw_err *err);
void sw_net_trace_free(sw_net_trace *t);
/* The iteration on caller-owned workspace (no allocation unless a trace is
 * kept): lr persists between calls, hist holds (max_iter + 1) * m ints,
 * work 5 * m doubles.  max_iter must not be 0 (see
 * sw_net_assumed_max_iter).  Without a trace, work + 4m receives the
 * reduced unknowns z of the accepted state. */
size_t sw_net_assumed_max_iter(const sw_net *net);
int sw_net_assumed_run(const sw_net *net, sw_net_lr *lr, int *hist, double *work,
                       const int *start, size_t max_iter, int *state,
                       size_t *iterations, sw_net_trace *trace, sw_err *err);
void sw_net_default_start(const sw_net *net, int *state);

/* All consistent states (deduplicated); *states is m x *count, owned by the
 * caller (free()).  max_states caps the product of segment counts. */
int sw_net_enumerate(const sw_net *net, double max_states, int **states,
                     size_t *count, size_t *visited, sw_err *err);

/* Lemke's algorithm.  pmatrix: 1 P-matrix, 0 not, -1 not determined;
 * how describes the test used (static string). */
int sw_net_lcp(const sw_net *net, int *state, size_t *pivots, int *pmatrix,
               const char **how, sw_err *err);

/* The LCP matrix's P-matrix test alone (no pivoting), for the uniqueness
 * verdict: pmatrix 1 proven, 0 refuted, -1 not determined (models with
 * jumps, a singular reference system, or too large to test cheaply). */
int sw_net_lcp_ptest(const sw_net *net, int *pmatrix, const char **how, sw_err *err);

/* What a solve knows about its answer (net_unique.c). */
enum { SW_UNIQUE_UNKNOWN = -1, SW_UNIQUE_NO = 0, SW_UNIQUE_YES = 1 };
typedef struct sw_net_verdict {
  int unique;         /* SW_UNIQUE_* */
  int monotone;       /* 1: the monotone network theorem applies */
  char reason[400];   /* in words: the proof, the other points, or why neither */
} sw_net_verdict;
/* Whether the monotone network theorem applies to the circuit: 2 yes,
 * every device strictly increasing; 1 yes, with flat segments pinned; 0 no
 * (why says which element breaks it); -SW_ENOMEM on failure. */
int sw_net_monotone(const sw_net *net, char *why, size_t cap, sw_err *err);
/* The uniqueness verdict of a solve.  nfound: points an enumeration of
 * every state found (0: none ran); pmatrix/how: the LCP test when the
 * solve ran it (pmatrix -2 when not).  max_states caps the enumeration the
 * verdict may run itself. */
int sw_net_unique(const sw_net *net, size_t nfound, size_t nstates, int pmatrix,
                  const char *how, double max_states, sw_net_verdict *out, sw_err *err);
/* Stability of a solve's point: stable by the theorem when monotone, else
 * the eigenvalue test when the circuit is small enough, else unknown. */
int sw_net_op_stability(const sw_net *net, const sw_net_op *op, int monotone, sw_err *err);

/* Newton on the exact curves (curves[j] may be NULL: the PWL model is used)
 * started at op; op is updated in place.  max_iter caps each Newton run
 * (0: 200).  info (may be NULL) says how the answer was reached. */
typedef struct sw_net_exact_info {
  const char *method;  /* "newton": full steps; "limited": some step cut at a
                        * junction or halved; "continuation": from the PWL
                        * model toward the exact curves (static strings) */
  size_t iterations;   /* Newton steps taken, every stage counted */
  size_t steps;        /* continuation steps in lambda (0 without) */
} sw_net_exact_info;
int sw_net_exact_run(const sw_net *net, const sw_curve *const *curves,
                     sw_net_op *op, size_t max_iter, sw_net_exact_info *info,
                     sw_err *err);
int sw_net_exact(const sw_net *net, const sw_curve *const *curves,
                 sw_net_op *op, size_t max_iter, sw_err *err);

/* Automatic choice: 1 device: load line; else assumed state, then LCP,
 * then enumeration.  used receives the method name (static string). */
int sw_net_auto(const sw_net *net, const int *start, double max_states,
                int *state, size_t *iterations, size_t *nfound,
                const char **used, sw_err *err);
/* Describes a state as "D1=2, D2=1" (1-based labels) into buf. */
void sw_net_state_text(const sw_net *net, const int *state, char *buf, size_t cap);

/* What a sweep steps: element el through values[0..n-1], the first point
 * from start (NULL: the default states), enumeration capped at max_states
 * when a point needs it. */
typedef struct sw_net_sweep_spec {
  size_t el;
  const double *values;
  size_t n;
  const int *start;
  double max_states;
} sw_net_sweep_spec;

/* Sweep as sp says: ops[n] filled (caller frees each). */
int sw_net_sweep(sw_net *net, const sw_net_sweep_spec *sp, sw_net_op *ops, sw_err *err);

/* Sweeps into arrays: one double per point for each requested quantity,
 * no allocation per point.  A swept independent source only moves the
 * particular solution (the reduction is kept); a resistor or gain rebuilds
 * the reduction per point.  Each point warm-starts from the previous
 * states. */
typedef enum {
  SW_NQ_I = 1,  /* current of element idx */
  SW_NQ_VD,     /* branch voltage of element idx */
  SW_NQ_P,      /* absorbed power of element idx */
  SW_NQ_V,      /* voltage of node idx */
  SW_NQ_STATE   /* segment label of device idx (1-based as users see it) */
} sw_net_qkind;
typedef struct sw_net_quant {
  sw_net_qkind kind;
  size_t idx;
  double *out;  /* n values */
} sw_net_quant;
enum { SW_NW_RANGE = 0, SW_NW_PMAX };
typedef struct sw_net_warn { size_t dev, index; int kind; } sw_net_warn;
typedef struct sw_net_sweep_info {
  size_t iterations, updates, refactors, fallbacks;
  sw_net_warn *warn;  /* nwarn entries in point order (owned; see _free) */
  size_t nwarn, wcap;
} sw_net_sweep_info;
void sw_net_sweep_info_free(sw_net_sweep_info *info);
int sw_net_sweep_arrays(sw_net *net, const sw_net_sweep_spec *sp, const sw_net_quant *q,
                        size_t nq, sw_net_sweep_info *info, sw_err *err);
/* Current of element k from a full unknown vector y (net_mna.c). */
double sw_net_el_current(const sw_net *net, const double *y, size_t k);
/* Branch voltage of element k from y: V(na) - V(nb), or R i for a resistor
 * solved for its current (one far smaller than the largest resistor). */
double sw_net_el_voltage(const sw_net *net, const double *y, size_t k);

/* Seeded Monte Carlo over element values (see net_sweep.c): full operating
 * points, or chosen quantities into arrays (drawn[q] holds n values). */
/* What a Monte Carlo study draws: element el[j] (j < k) in each of runs
 * runs as nominal * (1 + tol[j] u), u uniform on [-1, 1] (gauss[j] == 0) or
 * standard normal, from MT19937 seeded with seed. */
typedef struct sw_net_mc {
  const size_t *el;
  const double *tol;
  const int *gauss;
  size_t k, runs;
  unsigned long seed;
  double max_states; /* the enumeration's cap when a run needs it */
} sw_net_mc;
int sw_net_montecarlo_arrays(sw_net *net, const sw_net_mc *mc, double *const *drawn,
                             const sw_net_quant *q, size_t nq, sw_net_sweep_info *info,
                             sw_err *err);
int sw_net_montecarlo(sw_net *net, const sw_net_mc *mc, sw_net_op *ops, double *drawn,
                      sw_err *err);

#endif
