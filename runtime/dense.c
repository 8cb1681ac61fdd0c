/*
** dense.c — LU factorization with partial pivoting for the small dense
** Newton matrices of the implicit integrators and the equilibrium searches,
** and the regularized least-squares step those searches take when the
** Newton matrix is singular.
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

/* dq = -(JᵀJ + mu I)⁻¹ Jᵀ f for a singular J (row-major nq x nq); work is
** nq x nq.  mu is 1e-9 of the largest diagonal: small enough that the step
** is the least-squares one in the directions J sees, large enough that
** rounding moves the free ones by ~1e-7 of the step only.  Returns -1
** when J is zero. */
int least_squares_step(int nq, const double *J, const double *f, double *work,
                                    double *dq, int *piv) {
  double diag = 0;
  for (int i = 0; i < nq; i++)
    for (int j = 0; j < nq; j++) {
      double s = 0;
      for (int k = 0; k < nq; k++) s += J[k * nq + i] * J[k * nq + j];
      work[i * nq + j] = s;
      if (i == j) diag = fmax(diag, s);
    }
  if (!(diag > 0) || !isfinite(diag)) return -1;
  for (int i = 0; i < nq; i++) work[i * nq + i] += 1e-9 * diag;
  if (dense_lu(nq, work, piv) != 0) return -1;
  for (int i = 0; i < nq; i++) {
    double s = 0;
    for (int k = 0; k < nq; k++) s += J[k * nq + i] * f[k];
    dq[i] = -s;
  }
  dense_lu_solve(nq, work, piv, dq);
  return 0;
}
