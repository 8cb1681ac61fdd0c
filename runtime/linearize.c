/*
** linearize.c — the matrices of small motions about a point: M, the damping
** C = -df/dqd and the stiffness K = -df/dq, for `eomc modes` and for users
** who design controllers on the linear model.
**
** With q'' = M⁻¹f the model's jacobian holds d q''/dq = M⁻¹(df/dq - (dM/dq) q'')
** and d q''/dqd = M⁻¹ df/dqd.  So C = -M (d q''/dqd) exactly, and
** K = -M (d q''/dq) exactly where q'' = 0; elsewhere K comes from central
** differences of forcing().
*/
#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "integrators.h"

/* Below this max|q''| the (dM/dq) q'' term is rounding noise. */
#define STATIC_ACCEL 1e-9

int eom_linearize(const struct eom_model *m, const double *p, const double *u, double t,
                  const double *q, const double *qd, double *Mout, double *C, double *K,
                  struct eom_report *rep) {
  struct eom_report local;
  if (!rep) rep = &local;
  memset(rep, 0, sizeof *rep);
  assert(m && q && qd);
  if (!p) p = m->param_defaults;
  if (m->nc > 0) {
    snprintf(rep->message, sizeof rep->message,
             "linearization of models with constraints is not supported");
    return rep->status = EOM_EINVAL;
  }
  int nq = m->nq, n = 2 * nq;
  size_t nqq = (size_t)nq * nq;
  double *buf = calloc(2 * (size_t)n + 3 * (size_t)nq + nqq + (size_t)n * n +
                           (size_t)n * (size_t)m->nu + (size_t)m->nu + 1, sizeof(double));
  if (!buf) {
    snprintf(rep->message, sizeof rep->message, "out of memory");
    return rep->status = EOM_ENOMEM;
  }
  double *x = buf, *xdot = x + n, *qt = xdot + n, *f1 = qt + nq, *f2 = f1 + nq;
  double *M = f2 + nq, *A = M + nqq, *B = A + (size_t)n * n;
  if (!u) u = B + (size_t)n * m->nu; /* no inputs given: all zero */
  int st = EOM_OK;

  memcpy(x, q, (size_t)nq * sizeof(double));
  memcpy(x + nq, qd, (size_t)nq * sizeof(double));
  m->mass(q, p, M);
  if (eom_dynamics(m, p, t, x, u, xdot) != EOM_OK) {
    snprintf(rep->message, sizeof rep->message,
             "the mass matrix is not positive definite at the linearization point");
    st = EOM_EMASS;
    goto out;
  }
  double accel = 0;
  for (int i = 0; i < nq; i++) accel = fmax(accel, fabs(xdot[nq + i]));
  if (m->jacobian) {
    m->jacobian(t, x, u, p, A, B);
  } else {
    /* No generated jacobian: differentiate the dynamics numerically. */
    st = eom_state_matrix(m, p, t, x, u, A);
    if (st != EOM_OK) goto out;
  }
  /* C = -M · d q''/dqd,  K = -M · d q''/dq */
  for (int i = 0; i < nq; i++)
    for (int j = 0; j < nq; j++) {
      double sc = 0, sk = 0;
      for (int k = 0; k < nq; k++) {
        sc += M[i * nq + k] * A[(size_t)(nq + k) * n + nq + j];
        sk += M[i * nq + k] * A[(size_t)(nq + k) * n + j];
      }
      if (C) C[i * nq + j] = -sc;
      if (K) K[i * nq + j] = -sk;
    }
  if (K && !(accel <= STATIC_ACCEL)) {
    for (int j = 0; j < nq; j++) {
      double delta = cbrt(DBL_EPSILON) * fmax(1.0, fabs(q[j]));
      memcpy(qt, q, (size_t)nq * sizeof(double));
      qt[j] = q[j] + delta;
      m->forcing(t, qt, qd, u, p, f1);
      qt[j] = q[j] - delta;
      m->forcing(t, qt, qd, u, p, f2);
      for (int i = 0; i < nq; i++) K[i * nq + j] = -(f1[i] - f2[i]) / (2 * delta);
    }
  }
  if (Mout) memcpy(Mout, M, nqq * sizeof(double));
out:
  free(buf);
  return rep->status = (eom_status)st;
}
