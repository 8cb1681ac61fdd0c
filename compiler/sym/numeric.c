/*
** numeric.c — the checks' pseudo-random sequence and SPD solve (numeric.h).
*/
#include "sym/numeric.h"

#include <assert.h>
#include <math.h>

double num_uniform(uint64_t *state) {
  assert(state);
  *state = *state * 6364136223846793005ULL + 1442695040888963407ULL;
  return (double)(*state >> 11) / 9007199254740992.0; /* 2^53 */
}

int num_spd_solve(int n, double *A, double *b) {
  assert(n >= 0 && (n == 0 || (A && b)));
  for (int j = 0; j < n; j++) {
    double d = A[j * n + j];
    for (int k = 0; k < j; k++) d -= A[j * n + k] * A[j * n + k];
    if (!(d > 0)) return -1;
    d = sqrt(d);
    A[j * n + j] = d;
    for (int i = j + 1; i < n; i++) {
      double t = A[i * n + j];
      for (int k = 0; k < j; k++) t -= A[i * n + k] * A[j * n + k];
      A[i * n + j] = t / d;
    }
  }
  for (int i = 0; i < n; i++) { /* L y = b */
    for (int k = 0; k < i; k++) b[i] -= A[i * n + k] * b[k];
    b[i] /= A[i * n + i];
  }
  for (int i = n - 1; i >= 0; i--) { /* Lᵀ x = y */
    for (int k = i + 1; k < n; k++) b[i] -= A[k * n + i] * b[k];
    b[i] /= A[i * n + i];
  }
  return 0;
}
