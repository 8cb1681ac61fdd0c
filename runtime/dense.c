/*
** dense.c — LU factorization with partial pivoting for the small dense
** Newton matrices of the implicit integrators and the equilibrium search.
** (Golub & Van Loan, Matrix Computations, 4th ed., 2013, §3.4; section
** from memory.)
*/
#include <assert.h>
#include <math.h>

#include "integrators.h"

int dense_lu(int n, double *a, int *piv) {
  assert(n > 0 && a && piv);
  double scale = 0;
  for (int i = 0; i < n * n; i++) scale = fmax(scale, fabs(a[i]));
  if (!(scale > 0) || !isfinite(scale)) return -1;
  for (int k = 0; k < n; k++) {
    int p = k;
    for (int i = k + 1; i < n; i++)
      if (fabs(a[i * n + k]) > fabs(a[p * n + k])) p = i;
    piv[k] = p;
    /* A pivot at rounding level relative to the matrix means singular. */
    if (fabs(a[p * n + k]) <= 1e-14 * scale) return -1;
    if (p != k)
      for (int j = 0; j < n; j++) {
        double t = a[k * n + j];
        a[k * n + j] = a[p * n + j];
        a[p * n + j] = t;
      }
    double inv = 1.0 / a[k * n + k];
    for (int i = k + 1; i < n; i++) {
      double l = a[i * n + k] *= inv;
      if (l != 0)
        for (int j = k + 1; j < n; j++) a[i * n + j] -= l * a[k * n + j];
    }
  }
  return 0;
}

void dense_lu_solve(int n, const double *lu, const int *piv, double *b) {
  assert(n > 0 && lu && piv && b);
  /* dense_lu swaps whole rows, multipliers included, so L is stored in the
  ** final row order: all interchanges go first, then L y = P b. */
  for (int k = 0; k < n; k++)
    if (piv[k] != k) {
      double t = b[k];
      b[k] = b[piv[k]];
      b[piv[k]] = t;
    }
  for (int k = 0; k < n; k++)
    for (int i = k + 1; i < n; i++) b[i] -= lu[i * n + k] * b[k];
  for (int i = n - 1; i >= 0; i--) {
    double s = b[i];
    for (int j = i + 1; j < n; j++) s -= lu[i * n + j] * b[j];
    b[i] = s / lu[i * n + i];
  }
}
