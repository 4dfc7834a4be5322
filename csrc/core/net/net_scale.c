/* Equilibration of the MNA matrices before they are factorised.
 *
 * Element values in one circuit may span twenty decades (a 10 TOhm
 * insulation path beside a 1 uOhm shunt), so the rows of the MNA system
 * differ in size by as much, and a singularity test against the largest
 * entry refuses good circuits.  Rows and then columns are scaled to a
 * largest entry near 1, as LAPACK's dgeequb does: every factor is a power
 * of two, so scaling and unscaling are exact and the scaled system has
 * exactly the solutions of the original. */
#include "net/net.h"

#include <math.h>

/* The power of two nearest below 1/big (1 for an empty row or column). */
static double pow2_inverse(double big)
{
  int e;
  if (!(big > 0) || !sw_isfinite(big)) return 1.0;
  (void)frexp(big, &e);
  return ldexp(1.0, 1 - e);
}

void sw_net_equilibrate_rows(gsl_matrix *A, double *dr)
{
  size_t r, c, nr = A->size1, nc = A->size2;
  for (r = 0; r < nr; r++) {
    double big = 0;
    for (c = 0; c < nc; c++) big = fmax(big, fabs(gsl_matrix_get(A, r, c)));
    dr[r] = pow2_inverse(big);
    for (c = 0; c < nc; c++) *gsl_matrix_ptr(A, r, c) *= dr[r];
  }
}

void sw_net_equilibrate(gsl_matrix *A, double *dr, double *dc)
{
  size_t r, c, nr = A->size1, nc = A->size2;
  sw_net_equilibrate_rows(A, dr);
  for (c = 0; c < nc; c++) {
    double big = 0;
    for (r = 0; r < nr; r++) big = fmax(big, fabs(gsl_matrix_get(A, r, c)));
    dc[c] = pow2_inverse(big);
    for (r = 0; r < nr; r++) *gsl_matrix_ptr(A, r, c) *= dc[c];
  }
}
