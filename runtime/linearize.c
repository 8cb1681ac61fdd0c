/*
** linearize.c — the matrices of small motions about a point: M, the damping
** C = -df/dqd and the stiffness K = -df/dq, for `eomc modes` and for users
** who design controllers on the linear model.
**
** With q'' = M⁻¹f the model's jacobian holds d q''/dq = M⁻¹(df/dq - (dM/dq) q'')
** and d q''/dqd = M⁻¹ df/dqd.  So C = -M (d q''/dqd) exactly, and
** K = -M (d q''/dq) exactly where q'' = 0; elsewhere K comes from central
** differences of forcing().  Both are also checked against central
** differences of forcing(): a generated jacobian that disagrees is not
** trusted (the differences are used, and rep->message says so).
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
/* Central differences with step eps^(1/3) are good to ~1e-10 relative;
** a jacobian further off than this is wrong, not inexact. */
#define JACOBIAN_AGREEMENT 1e-6

/* -df/dq (wrt = 0) or -df/dqd (wrt = 1) by central differences into D,
** with the usual step times `widen`. */
static void forcing_diff(const struct eom_model *m, const double *p, const double *u, double t,
                         const double *q, const double *qd, int wrt, double widen, double *D,
                         double *qt, double *qdt, double *f1, double *f2) {
  int nq = m->nq;
  const double *base = wrt ? qd : q;
  double *pert = wrt ? qdt : qt;
  memcpy(qt, q, (size_t)nq * sizeof(double));
  memcpy(qdt, qd, (size_t)nq * sizeof(double));
  for (int j = 0; j < nq; j++) {
    double delta = widen * cbrt(DBL_EPSILON) * fmax(1.0, fabs(base[j]));
    pert[j] = base[j] + delta;
    m->forcing(t, qt, qdt, u, p, f1);
    pert[j] = base[j] - delta;
    m->forcing(t, qt, qdt, u, p, f2);
    pert[j] = base[j];
    for (int i = 0; i < nq; i++) D[i * nq + j] = -(f1[i] - f2[i]) / (2 * delta);
  }
}

/* Largest |a - b| relative to the largest |b| (and a floor for zero
** matrices), after forgiving each entry the truncation error of the
** differences b.  That error is O(h^2): b2, taken with twice the step, is
** off by four times as much, so |b2 - b| is three times b's own error.
** Without it a degenerate point (V = -x^4 at x = 0: exact K = 0, differences
** 4h^2) reads as a disagreement. */
static double disagreement(size_t n, const double *a, const double *b, const double *b2,
                           double floor) {
  double diff = 0, scale = floor;
  for (size_t i = 0; i < n; i++) {
    diff = fmax(diff, fabs(a[i] - b[i]) - fabs(b2[i] - b[i]));
    scale = fmax(scale, fabs(b[i]));
  }
  return isfinite(diff) ? fmax(diff, 0.0) / scale : INFINITY;
}

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
  double *buf = calloc(2 * (size_t)n + 4 * (size_t)nq + 7 * nqq + (size_t)n * n +
                           (size_t)n * (size_t)m->nu + (size_t)m->nu + 1, sizeof(double));
  if (!buf) {
    snprintf(rep->message, sizeof rep->message, "out of memory");
    return rep->status = EOM_ENOMEM;
  }
  double *x = buf, *xdot = x + n, *qt = xdot + n, *qdt = qt + nq, *f1 = qdt + nq,
         *f2 = f1 + nq;
  double *M = f2 + nq, *Kj = M + nqq, *Cj = Kj + nqq, *Kd = Cj + nqq, *Cd = Kd + nqq;
  double *Kd2 = Cd + nqq, *Cd2 = Kd2 + nqq, *A = Cd2 + nqq, *B = A + (size_t)n * n;
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
  double accel = 0, mscale = 0;
  for (int i = 0; i < nq; i++) accel = fmax(accel, fabs(xdot[nq + i]));
  for (size_t i = 0; i < nqq; i++) mscale = fmax(mscale, fabs(M[i]));
  forcing_diff(m, p, u, t, q, qd, 0, 1, Kd, qt, qdt, f1, f2);
  forcing_diff(m, p, u, t, q, qd, 1, 1, Cd, qt, qdt, f1, f2);
  memcpy(Kj, Kd, nqq * sizeof(double));
  memcpy(Cj, Cd, nqq * sizeof(double));
  if (m->jacobian) {
    /* C = -M · d q''/dqd,  K = -M · d q''/dq */
    m->jacobian(t, x, u, p, A, B);
    for (int i = 0; i < nq; i++)
      for (int j = 0; j < nq; j++) {
        double sc = 0, sk = 0;
        for (int k = 0; k < nq; k++) {
          sc += M[i * nq + k] * A[(size_t)(nq + k) * n + nq + j];
          sk += M[i * nq + k] * A[(size_t)(nq + k) * n + j];
        }
        Cj[i * nq + j] = -sc;
        if (accel <= STATIC_ACCEL) Kj[i * nq + j] = -sk;
      }
    /* Differences are judged against the size of the other matrix too, so
    ** a C that is zero up to rounding is not "off" relative to nothing. */
    double kscale = 0;
    for (size_t i = 0; i < nqq; i++) kscale = fmax(kscale, fabs(Kd[i]));
    double floor = 1e-300 + sqrt(kscale * mscale);
    forcing_diff(m, p, u, t, q, qd, 0, 2, Kd2, qt, qdt, f1, f2);
    forcing_diff(m, p, u, t, q, qd, 1, 2, Cd2, qt, qdt, f1, f2);
    double dk = disagreement(nqq, Kj, Kd, Kd2, floor), dc = disagreement(nqq, Cj, Cd, Cd2, floor);
    if (dk > JACOBIAN_AGREEMENT || dc > JACOBIAN_AGREEMENT) {
      snprintf(rep->message, sizeof rep->message,
               "warning: the model's jacobian disagrees with differences of its forcing "
               "(relative %.3g in K, %.3g in C); using the differences",
               dk, dc);
      memcpy(Kj, Kd, nqq * sizeof(double));
      memcpy(Cj, Cd, nqq * sizeof(double));
    }
  }
  if (K) memcpy(K, Kj, nqq * sizeof(double));
  if (C) memcpy(C, Cj, nqq * sizeof(double));
  if (Mout) memcpy(Mout, M, nqq * sizeof(double));
out:
  free(buf);
  return rep->status = (eom_status)st;
}
