/*
** implicit.c — the two implicit one-step methods, both solved by simplified
** Newton iterations with the model's jacobian:
**
**  midpoint  the implicit midpoint rule, x1 = x0 + h f(t + h/2, (x0 + x1)/2):
**            symplectic and symmetric, so for conservative models the
**            energy error stays bounded over long runs, and quadratic
**            invariants (linear models) are kept exactly (Hairer, Lubich &
**            Wanner, Geometric Numerical Integration, 2nd ed., 2006, §VI.4,
**            §IV.2; sections from memory).
**  radau5    Radau IIA with three stages, order 5, stiffly accurate and
**            L-stable, for stiff models (Hairer & Wanner, Solving Ordinary
**            Differential Equations II, 2nd ed., 1996, §IV.5, Table 5.6; the
**            table number from memory, the coefficients checked by the order test).
**
** The Newton iteration stops when the update is a thousandth of the
** tolerance; when it fails to converge the step returns EOM_ENEWTON and the
** driver retries with half the step.
*/
#include <assert.h>
#include <float.h>
#include <math.h>
#include <string.h>

#include "integrators.h"

#define NEWTON_MAX_ITER 20
#define NEWTON_TARGET 1e-3

/* Has the update dx of the unknowns z (offsets from x) reached rounding
** level?  Tolerances tighter than the arithmetic allows end here. */
static int at_rounding_level(int N, int n, const double *dx, const double *z, const double *x) {
  for (int r = 0; r < N; r++)
    if (fabs(dx[r]) > 64 * DBL_EPSILON * (fabs(x[r % n]) + fabs(z[r]))) return 0;
  return 1;
}

size_t midpoint_work(int n) { return 4 * (size_t)n + (size_t)n * (size_t)n; }

int midpoint_step(SimContext *c, double t, double h, double *x, double *work) {
  int n = c->n, st;
  double *k = work, *dk = k + n, *y = dk + n, *f = y + n, *mat = f + n;
  double tm = t + 0.5 * h;

  /* Explicit Euler predictor for the midpoint slope k. */
  if ((st = sim_rhs(c, t, x, k))) return st;
  if (!all_finite(n, k)) return EOM_ENEWTON;
  if ((st = sim_jacobian(c, tm, x, mat))) return st;
  for (int i = 0; i < n * n; i++) mat[i] *= -0.5 * h;
  for (int i = 0; i < n; i++) mat[i * n + i] += 1.0;
  if (dense_lu(n, mat, c->piv) != 0) return EOM_ENEWTON;

  double prev = INFINITY;
  for (int it = 0; it < NEWTON_MAX_ITER; it++) {
    for (int i = 0; i < n; i++) y[i] = x[i] + 0.5 * h * k[i];
    if ((st = sim_rhs(c, tm, y, f))) return st;
    for (int i = 0; i < n; i++) dk[i] = f[i] - k[i];
    dense_lu_solve(n, mat, c->piv, dk);
    for (int i = 0; i < n; i++) {
      k[i] += dk[i];
      dk[i] *= h;
      y[i] = h * k[i];
    }
    double norm = scaled_norm(n, dk, x, NULL, c->rtol, c->atol);
    if (!isfinite(norm)) return EOM_ENEWTON;
    if (norm <= NEWTON_TARGET || at_rounding_level(n, n, dk, y, x)) {
      for (int i = 0; i < n; i++) x[i] += h * k[i];
      return EOM_OK;
    }
    if (it >= 2 && norm > prev) return EOM_ENEWTON; /* diverging */
    prev = norm;
  }
  return EOM_ENEWTON;
}

/* Radau IIA, s = 3 (Hairer & Wanner II, Table IV.5.6). */
#define S6 2.449489742783178098197284074705891391965947480656670128432692567
static const double RC[3] = {(4.0 - S6) / 10, (4.0 + S6) / 10, 1.0};
static const double RA[3][3] = {
    {(88.0 - 7 * S6) / 360, (296.0 - 169 * S6) / 1800, (-2.0 + 3 * S6) / 225},
    {(296.0 + 169 * S6) / 1800, (88.0 + 7 * S6) / 360, (-2.0 - 3 * S6) / 225},
    {(16.0 - S6) / 36, (16.0 + S6) / 36, 1.0 / 9},
};

size_t radau5_work(int n) {
  size_t nn = (size_t)n;
  return 9 * nn + 2 * nn + nn * nn + 9 * nn * nn;
}

int radau5_step(SimContext *c, double t, double h, double *x, double *work) {
  int n = c->n, N = 3 * n, st;
  double *z = work, *dz = z + N, *f = dz + N, *y = f + N, *sk = y + n;
  double *jac = sk + n, *mat = jac + (size_t)n * n;

  if ((st = sim_jacobian(c, t, x, jac))) return st;
  /* Newton matrix I - h (A ⊗ J), in stage-major blocks. */
  for (int bi = 0; bi < 3; bi++)
    for (int bj = 0; bj < 3; bj++)
      for (int a = 0; a < n; a++)
        for (int b = 0; b < n; b++) {
          double v = -h * RA[bi][bj] * jac[a * n + b];
          if (bi == bj && a == b) v += 1.0;
          mat[(size_t)(bi * n + a) * N + (size_t)(bj * n + b)] = v;
        }
  if (dense_lu(N, mat, c->piv) != 0) return EOM_ENEWTON;
  for (int i = 0; i < n; i++) sk[i] = c->atol + c->rtol * fabs(x[i]);

  memset(z, 0, (size_t)N * sizeof(double));
  double prev = INFINITY;
  for (int it = 0; it < NEWTON_MAX_ITER; it++) {
    for (int j = 0; j < 3; j++) {
      for (int i = 0; i < n; i++) y[i] = x[i] + z[j * n + i];
      if ((st = sim_rhs(c, t + RC[j] * h, y, f + j * n))) return st;
    }
    for (int bi = 0; bi < 3; bi++)
      for (int i = 0; i < n; i++) {
        double s = -z[bi * n + i];
        for (int bj = 0; bj < 3; bj++) s += h * RA[bi][bj] * f[bj * n + i];
        dz[bi * n + i] = s;
      }
    dense_lu_solve(N, mat, c->piv, dz);
    double sum = 0;
    for (int r = 0; r < N; r++) {
      z[r] += dz[r];
      double e = dz[r] / sk[r % n];
      sum += e * e;
    }
    double norm = sqrt(sum / N);
    if (!isfinite(norm)) return EOM_ENEWTON;
    if (norm <= NEWTON_TARGET || at_rounding_level(N, n, dz, z, x)) {
      /* Stiffly accurate: the new point is the last stage. */
      for (int i = 0; i < n; i++) x[i] += z[2 * n + i];
      return EOM_OK;
    }
    if (it >= 2 && norm > prev) return EOM_ENEWTON;
    prev = norm;
  }
  return EOM_ENEWTON;
}
