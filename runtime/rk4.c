/*
** rk4.c — the classic fourth-order Runge–Kutta step (fixed step size).
** (Hairer, Nørsett & Wanner, Solving Ordinary Differential Equations I,
** 2nd ed., 1993, §II.1; section from memory.)
*/
#include <assert.h>

#include "integrators.h"

size_t rk4_work(int n) { return 5 * (size_t)n; }

int rk4_step(SimContext *c, double t, double h, double *x, double *work) {
  int n = c->n, st;
  double *k1 = work, *k2 = k1 + n, *k3 = k2 + n, *k4 = k3 + n, *y = k4 + n;
  assert(h > 0);
  if ((st = sim_rhs(c, t, x, k1))) return st;
  for (int i = 0; i < n; i++) y[i] = x[i] + 0.5 * h * k1[i];
  if ((st = sim_rhs(c, t + 0.5 * h, y, k2))) return st;
  for (int i = 0; i < n; i++) y[i] = x[i] + 0.5 * h * k2[i];
  if ((st = sim_rhs(c, t + 0.5 * h, y, k3))) return st;
  for (int i = 0; i < n; i++) y[i] = x[i] + h * k3[i];
  if ((st = sim_rhs(c, t + h, y, k4))) return st;
  for (int i = 0; i < n; i++) x[i] += h / 6.0 * (k1[i] + 2 * k2[i] + 2 * k3[i] + k4[i]);
  return EOM_OK;
}
