/*
** numeric.h — the small numeric tools the compile-time checks share.
**
** The derivation, the emitter and the commands test symbolic results at
** numbers (is this term really there, is this column dependent, does this
** function depend on t): they draw their points from one pseudo-random
** sequence and solve their small normal equations with one Cholesky.
*/
#ifndef EOMC_NUMERIC_H
#define EOMC_NUMERIC_H

#include <stdint.h>

#ifdef __cplusplus
extern "C" {
#endif

/* The next number of a fixed pseudo-random sequence, uniform in [0, 1)
** (53 bits), advancing *state: a 64-bit linear congruential generator with
** Knuth's MMIX constants (common practice).  Each check starts from its own
** fixed seed, so its verdict is the same on every run and machine. */
double num_uniform(uint64_t *state);

/* Solve the symmetric positive definite A x = b by Cholesky, A = L Lᵀ
** (n x n row-major; the lower triangle is read and overwritten by L, the
** upper one is ignored), b overwritten by x.  Returns 0, or -1 when a pivot
** is not positive (A is not numerically positive definite). */
int num_spd_solve(int n, double *A, double *b);

#ifdef __cplusplus
}
#endif
#endif
