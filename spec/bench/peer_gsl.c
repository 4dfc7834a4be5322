/* Peer programs for the benchmark, built on GSL, each timing only its own
 * work loop (process CPU time, like the Lua side's os.clock) and printing
 * one line "time SECONDS check VALUE".  Not part of the module.
 *
 *   peer_gsl gen N SEED ORDER OUT.bin    points in [lo, hi) (ORDER random|sorted)
 *   peer_gsl interp KNOTS.bin POINTS.bin  gsl_interp linear with an accelerator
 *   peer_gsl brent PARAMS.bin OUT.bin     series diode circuit, Brent per point
 *   peer_gsl ladder PARAMS.bin OUT.bin    diode ladder, Newton (gsl_multiroot)
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_interp.h>
#include <gsl/gsl_multiroots.h>
#include <gsl/gsl_roots.h>
#include <gsl/gsl_vector.h>

static double cpu_now(void)
{
  struct timespec t;
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
  return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static void die(const char *what)
{
  fprintf(stderr, "peer_gsl: %s\n", what);
  exit(2);
}

/* Reads a whole file of little-endian doubles (the bench runs on x86-64). */
static double *read_doubles(const char *path, size_t *n)
{
  FILE *f = fopen(path, "rb");
  long len;
  double *d;
  if (!f) die("cannot open input");
  fseek(f, 0, SEEK_END);
  len = ftell(f);
  fseek(f, 0, SEEK_SET);
  *n = (size_t)len / sizeof(double);
  d = malloc(*n * sizeof *d + 1);
  if (!d || fread(d, sizeof *d, *n, f) != *n) die("cannot read input");
  fclose(f);
  return d;
}

static void write_doubles(const char *path, const double *d, size_t n)
{
  FILE *f = fopen(path, "wb");
  if (!f || fwrite(d, sizeof *d, n, f) != n || fclose(f)) die("cannot write output");
}

/* The generator the Lua side repeats bit for bit: xorshift64 to 53-bit
 * uniforms in [0, 1). */
static double next_uniform(uint64_t *s)
{
  *s ^= *s << 13;
  *s ^= *s >> 7;
  *s ^= *s << 17;
  return (double)(*s >> 11) * (1.0 / 9007199254740992.0);
}

/* Sum over every 97th value: a cheap fingerprint both sides can compute. */
static double fingerprint(const double *d, size_t n)
{
  double s = 0;
  size_t i;
  for (i = 0; i < n; i += 97) s += d[i];
  return s;
}

static int gen(int argc, char **argv)
{
  size_t n, i;
  uint64_t s;
  double lo, hi, *x;
  int sorted;
  if (argc != 8) die("usage: gen N SEED ORDER LO HI OUT.bin");
  n = (size_t)strtod(argv[2], NULL);
  s = (uint64_t)strtoull(argv[3], NULL, 10);
  sorted = strcmp(argv[4], "sorted") == 0;
  lo = strtod(argv[5], NULL);
  hi = strtod(argv[6], NULL);
  x = malloc(n * sizeof *x + 1);
  if (!x) die("out of memory");
  for (i = 0; i < n; i++) {
    double u = next_uniform(&s);
    x[i] = sorted ? lo + (hi - lo) * (((double)i + u) / (double)n) : lo + (hi - lo) * u;
  }
  write_doubles(argv[7], x, n);
  printf("check %.17g\n", fingerprint(x, n));
  free(x);
  return 0;
}

static int interp(int argc, char **argv)
{
  size_t nk, n, i;
  double *k, *x, *y, t;
  gsl_interp *it;
  gsl_interp_accel *acc;
  if (argc != 4) die("usage: interp KNOTS.bin POINTS.bin");
  k = read_doubles(argv[2], &nk); /* x[0..m-1] then y[0..m-1] */
  x = read_doubles(argv[3], &n);
  nk /= 2;
  it = gsl_interp_alloc(gsl_interp_linear, nk);
  acc = gsl_interp_accel_alloc();
  if (!it || !acc || gsl_interp_init(it, k, k + nk, nk)) die("gsl_interp_init failed");
  t = cpu_now();
  y = malloc(n * sizeof *y + 1); /* the result is part of the job, as on the other sides */
  if (!y) die("out of memory");
  for (i = 0; i < n; i++) {
    if (gsl_interp_eval_e(it, k, k + nk, x[i], acc, &y[i])) die("point outside the knots");
  }
  t = cpu_now() - t;
  printf("time %.9f check %.17g\n", t, fingerprint(y, n));
  gsl_interp_accel_free(acc);
  gsl_interp_free(it);
  free(k);
  free(x);
  free(y);
  return 0;
}

/* Series circuit: source E, resistor R, diode i = is*(exp(v/(n*vt)) - 1). */
typedef struct diode_ckt {
  double e, r, is, nvt;
} diode_ckt;

static double diode_kcl(double v, void *p)
{
  const diode_ckt *c = p;
  return c->is * expm1(v / c->nvt) - (c->e - v) / c->r;
}

/* PARAMS: r, is, nvt, xtol, then the source values.  OUT: diode currents. */
static int brent(int argc, char **argv)
{
  size_t np, n, k;
  double *p, *cur, t;
  diode_ckt c;
  gsl_function f;
  gsl_root_fsolver *s;
  if (argc != 4) die("usage: brent PARAMS.bin OUT.bin");
  p = read_doubles(argv[2], &np);
  if (np < 5) die("short parameter file");
  c.r = p[0];
  c.is = p[1];
  c.nvt = p[2];
  n = np - 4;
  cur = malloc(n * sizeof *cur + 1);
  s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
  if (!cur || !s) die("out of memory");
  f.function = diode_kcl;
  f.params = &c;
  gsl_set_error_handler_off();
  t = cpu_now();
  for (k = 0; k < n; k++) {
    double lo = 0, hi, v = 0;
    int st, it = 0;
    c.e = p[4 + k];
    hi = c.e > 0 ? c.e : 0; /* the diode voltage lies between 0 and E */
    if (c.e <= 0) { cur[k] = 0; continue; } /* the bench sweeps E > 0 */
    if (gsl_root_fsolver_set(s, &f, lo, hi)) die("bracket failed");
    do {
      if (gsl_root_fsolver_iterate(s)) die("iteration failed");
      lo = gsl_root_fsolver_x_lower(s);
      hi = gsl_root_fsolver_x_upper(s);
      st = gsl_root_test_interval(lo, hi, p[3], 0);
    } while (st == GSL_CONTINUE && ++it < 200);
    v = gsl_root_fsolver_root(s);
    cur[k] = (c.e - v) / c.r;
  }
  t = cpu_now() - t;
  printf("time %.9f check %.17g\n", t, fingerprint(cur, n));
  write_doubles(argv[3], cur, n);
  gsl_root_fsolver_free(s);
  free(p);
  free(cur);
  return 0;
}

/* Ladder: source E through R to node 1; node j to node j+1 through R; a
 * diode from every node to ground.  Unknowns: node voltages. */
typedef struct ladder {
  size_t m;
  double e, r, is, nvt;
} ladder;

static int ladder_f(const gsl_vector *v, void *params, gsl_vector *f)
{
  const ladder *l = params;
  size_t j;
  for (j = 0; j < l->m; j++) {
    double vj = gsl_vector_get(v, j);
    double left = j ? gsl_vector_get(v, j - 1) : l->e;
    double right = j + 1 < l->m ? (vj - gsl_vector_get(v, j + 1)) / l->r : 0;
    gsl_vector_set(f, j, (left - vj) / l->r - right - l->is * expm1(vj / l->nvt));
  }
  return GSL_SUCCESS;
}

static int ladder_df(const gsl_vector *v, void *params, gsl_matrix *J)
{
  const ladder *l = params;
  size_t j;
  gsl_matrix_set_zero(J);
  for (j = 0; j < l->m; j++) {
    double vj = gsl_vector_get(v, j);
    double d = -1 / l->r - (j + 1 < l->m ? 1 / l->r : 0) - l->is / l->nvt * exp(vj / l->nvt);
    gsl_matrix_set(J, j, j, d);
    if (j) gsl_matrix_set(J, j, j - 1, 1 / l->r);
    if (j + 1 < l->m) gsl_matrix_set(J, j, j + 1, 1 / l->r);
  }
  return GSL_SUCCESS;
}

static int ladder_fdf(const gsl_vector *v, void *params, gsl_vector *f, gsl_matrix *J)
{
  ladder_f(v, params, f);
  return ladder_df(v, params, J);
}

/* PARAMS: m, r, is, nvt, ftol, then the source values.  OUT: the
 * current of the diode at node 1 for each source value.  Each solve starts
 * from the previous answer (warm start, as the sweep does). */
static int multiroot(int argc, char **argv)
{
  size_t np, n, k, j;
  double *p, *cur, t;
  ladder l;
  gsl_multiroot_function_fdf f;
  gsl_multiroot_fdfsolver *s;
  gsl_vector *v;
  if (argc != 4) die("usage: ladder PARAMS.bin OUT.bin");
  p = read_doubles(argv[2], &np);
  if (np < 6) die("short parameter file");
  l.m = (size_t)p[0];
  l.r = p[1];
  l.is = p[2];
  l.nvt = p[3];
  n = np - 5;
  f.f = ladder_f;
  f.df = ladder_df;
  f.fdf = ladder_fdf;
  f.n = l.m;
  f.params = &l;
  cur = malloc(n * sizeof *cur + 1);
  v = gsl_vector_calloc(l.m);
  s = gsl_multiroot_fdfsolver_alloc(gsl_multiroot_fdfsolver_newton, l.m);
  if (!cur || !v || !s) die("out of memory");
  gsl_set_error_handler_off();
  for (j = 0; j < l.m; j++) gsl_vector_set(v, j, 0.3);
  t = cpu_now();
  for (k = 0; k < n; k++) {
    int st, it = 0;
    l.e = p[5 + k];
    if (gsl_multiroot_fdfsolver_set(s, &f, v)) die("multiroot set failed");
    do {
      if (gsl_multiroot_fdfsolver_iterate(s)) break; /* checked by the residual test below */
      st = gsl_multiroot_test_residual(s->f, p[4]);
    } while (st == GSL_CONTINUE && ++it < 200);
    if (gsl_multiroot_test_residual(s->f, p[4]) != GSL_SUCCESS) die("Newton did not converge");
    gsl_vector_memcpy(v, s->x);
    cur[k] = l.is * expm1(gsl_vector_get(v, 0) / l.nvt);
  }
  t = cpu_now() - t;
  printf("time %.9f check %.17g\n", t, fingerprint(cur, n));
  write_doubles(argv[3], cur, n);
  gsl_multiroot_fdfsolver_free(s);
  gsl_vector_free(v);
  free(p);
  free(cur);
  return 0;
}

int main(int argc, char **argv)
{
  if (argc < 2) die("usage: peer_gsl gen|interp|brent|ladder ...");
  if (!strcmp(argv[1], "gen")) return gen(argc, argv);
  if (!strcmp(argv[1], "interp")) return interp(argc, argv);
  if (!strcmp(argv[1], "brent")) return brent(argc, argv);
  if (!strcmp(argv[1], "ladder")) return multiroot(argc, argv);
  die("unknown mode");
  return 2;
}
