/* Curves: the "truth" a PWL model approximates, y = f(x).
 * Measured samples (linear between samples), the Shockley diode law with
 * series resistance, an odd power law, or a caller-supplied function. */
#ifndef SW_CURVE_H
#define SW_CURVE_H

#include <stddef.h>
#include "err/sw_err.h"

typedef enum {
  SW_CURVE_SAMPLES = 1,
  SW_CURVE_DIODE,
  SW_CURVE_POWER,
  SW_CURVE_FN
} sw_curve_kind;

/* A user function y = f(x).  Returns 0 and sets *y, or non-zero when the
 * call failed (the caller's context records why). */
typedef int (*sw_callback)(void *ctx, double x, double *y);

typedef struct sw_curve {
  sw_curve_kind kind;
  double lo, hi;         /* domain; may be -INFINITY / INFINITY for laws */
  /* SW_CURVE_SAMPLES: owned, sorted, strictly increasing x */
  size_t n;
  double *x, *y;
  /* SW_CURVE_DIODE: i(v) (x_is_i = 0) or v(i) (x_is_i = 1) */
  double is, ideality, vt, rs;
  int x_is_i;
  /* SW_CURVE_POWER: y = k * sign(x) * |x|^p */
  double k, p;
  /* SW_CURVE_FN: not owned; a binding sets these on a stack copy per call */
  sw_callback fn;
  void *ctx;
} sw_curve;

/* Thermal voltage kT/q at 300 K from the CODATA 2018 exact k and q. */
double sw_thermal_voltage(double kelvin);

/* Constructors fill *c (which the caller zeroed) and free partial work on
 * failure.  Samples are copied; sort != 0 sorts them by x first;
 * dup_mean != 0 merges repeated x into one point at the mean y. */
int sw_curve_samples(sw_curve *c, const double *x, const double *y, size_t n,
                     int sort, int dup_mean, sw_err *err);
int sw_curve_diode(sw_curve *c, double is, double ideality, double vt,
                   double rs, int x_is_i, sw_err *err);
int sw_curve_power(sw_curve *c, double k, double p, sw_err *err);
int sw_curve_fn(sw_curve *c, double lo, double hi, sw_err *err);
void sw_curve_free(sw_curve *c);

/* Narrows the domain to [lo, hi] (must lie inside the law's domain). */
int sw_curve_restrict(sw_curve *c, double lo, double hi, sw_err *err);

/* y = f(x).  Outside the domain: SW_ERANGE naming x. */
int sw_curve_eval(const sw_curve *c, double x, double *y, sw_err *err);
/* dy/dx: analytic for laws, the local slope for samples, GSL's central
 * difference for functions. */
int sw_curve_deriv(const sw_curve *c, double x, double *dy, sw_err *err);
/* d2y/dx2: analytic for laws, a three-point estimate elsewhere. */
int sw_curve_deriv2(const sw_curve *c, double x, double *d2y, sw_err *err);

/* 1 when the domain is a finite interval. */
int sw_curve_bounded(const sw_curve *c);

/* Newton on a law: the orientation to solve it in, its inverse, and the
 * law's own step limit.  sw_curve_newton_flip is 1 when, near the point
 * (x, y), the law is better solved as its inverse (a diode: v(i) at and
 * above zero current, i(v) below, toward i = -is where v(i) ends).
 * sw_curve_flip writes the same law with x and y exchanged, its domain
 * mapped through the law (SW_EINVAL for kinds without a closed inverse). */
int sw_curve_newton_flip(const sw_curve *c, double x, double y);
int sw_curve_flip(const sw_curve *c, sw_curve *out, sw_err *err);
/* 1 when the law's row can no longer resolve x (a diode's v(i) once i + is
 * falls below 1e-9 is: the inverse orientation must take over). */
int sw_curve_newton_lost(const sw_curve *c, double x);
/* The part of a proposed Newton step dx from x0 that the law's tangent at
 * x0 can be trusted for (dx itself for laws without a limit): a diode's
 * i(v) limits rises of v, its v(i) falls of i toward -is. */
double sw_curve_limit_step(const sw_curve *c, double x0, double dx);
/* A floor for the law's slope in a Newton Jacobian, where the true slope
 * vanishes in rounding (0 for laws without one). */
double sw_curve_slope_floor(const sw_curve *c);

#endif
