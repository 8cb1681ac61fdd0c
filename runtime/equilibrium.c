/*
** equilibrium.c — static equilibria: Newton's method on f(t, q, 0, u) = 0.
**
** The residual is the generalized force f, not the acceleration M⁻¹f, so a
** mass matrix that is singular away from the solution does not matter.  The
** Newton matrix df/dq is M·(d q''/dq) from the model's jacobian, which is
** exact at the solution (the term (dM/dq)·q'' vanishes there) and so keeps
** quadratic convergence; central differences of f stand in when that product
** is unusable.  A backtracking line search on max|f| widens the basin.
**
** When df/dq is singular the model has free directions (a cart on rails, a
** free-floating pair): the step is then the Levenberg–Marquardt one,
** (JᵀJ + mu I) dq = -Jᵀ f with a small mu, which leaves the free coordinates
** where they are and still solves for the others (Nocedal & Wright,
** Numerical Optimization, 2nd ed., 2006, §10.3; section from memory).
*/
#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "integrators.h"

/* An accepted equilibrium leaves max|f| below this fraction of the force
** scale (the starting force, or df/dq times the size of q). */
#define FORCE_TOL 1e-8

static double max_abs(int n, const double *v) {
  double m = 0;
  for (int i = 0; i < n; i++) m = fmax(m, fabs(v[i]));
  return isfinite(m) ? m : INFINITY;
}

/* df/dq (nq x nq) by central differences of forcing() at qd = 0. */
static void forcing_dq_fd(const struct eom_model *m, const double *p, const double *u, double t,
                          const double *q, const double *qd, double *J, double *qt,
                          double *f1, double *f2) {
  int nq = m->nq;
  memcpy(qt, q, (size_t)nq * sizeof(double));
  for (int j = 0; j < nq; j++) {
    double delta = cbrt(DBL_EPSILON) * fmax(1.0, fabs(q[j]));
    qt[j] = q[j] + delta;
    m->forcing(t, qt, qd, u, p, f1);
    qt[j] = q[j] - delta;
    m->forcing(t, qt, qd, u, p, f2);
    qt[j] = q[j];
    for (int i = 0; i < nq; i++) J[i * nq + j] = (f1[i] - f2[i]) / (2 * delta);
  }
}

/* df/dq from the model's jacobian: M times the q-block of d q''/dx. */
static int forcing_dq_model(const struct eom_model *m, const double *p, const double *u,
                            double t, const double *q, double *J, double *M, double *x,
                            double *A, double *B) {
  int nq = m->nq, n = 2 * nq;
  if (!m->jacobian || m->nc > 0) return -1;
  memcpy(x, q, (size_t)nq * sizeof(double));
  memset(x + nq, 0, (size_t)nq * sizeof(double));
  m->jacobian(t, x, u, p, A, B);
  m->mass(q, p, M);
  for (int i = 0; i < nq; i++)
    for (int j = 0; j < nq; j++) {
      double s = 0;
      for (int k = 0; k < nq; k++) s += M[i * nq + k] * A[(size_t)(nq + k) * n + j];
      J[i * nq + j] = s;
    }
  return all_finite(nq * nq, J) ? 0 : -1;
}

int eom_equilibrium(const struct eom_model *m, const double *p, const double *u, double t,
                    double *q, double tol, int max_iter, struct eom_report *rep) {
  struct eom_report local;
  if (!rep) rep = &local;
  memset(rep, 0, sizeof *rep);
  assert(m && q);
  if (!p) p = m->param_defaults;
  if (tol <= 0) tol = 1e-10;
  if (max_iter <= 0) max_iter = 100;
  if (m->nc > 0) return constrained_equilibrium(m, p, u, t, q, tol, max_iter, rep);
  int nq = m->nq, n = 2 * nq, nu = m->nu;
  size_t nqq = (size_t)nq * nq;
  double *buf = calloc(9 * (size_t)nq + 3 * nqq + (size_t)n * n + (size_t)n * nu +
                           (size_t)nu + 1, sizeof(double));
  int *piv = calloc((size_t)nq + 1, sizeof(int));
  if (!buf || !piv) {
    free(buf);
    free(piv);
    snprintf(rep->message, sizeof rep->message, "out of memory");
    return rep->status = EOM_ENOMEM;
  }
  double *qd = buf, *f = qd + nq, *dq = f + nq, *qt = dq + nq, *f1 = qt + nq, *f2 = f1 + nq;
  double *x = f2 + nq, *J = x + n, *M = J + nqq, *A = M + nqq, *B = A + (size_t)n * n;
  double *Jcopy = B + (size_t)n * nu + (size_t)nu;
  if (!u) u = B + (size_t)n * nu; /* no inputs given: all zero */
  char where[256];
  int st = EOM_ENEWTON;

  m->forcing(t, q, qd, u, p, f);
  double res = max_abs(nq, f), res0 = isfinite(res) ? res : 0;
  /* Away from the solution M·(dq''/dq) is only an approximation of df/dq;
  ** when it gives no descent, switch to differences for good. */
  int use_fd = 0;
  for (int it = 0; it < max_iter; it++) {
    rep->steps = it;
    rep->residual = res;
    if (!isfinite(res)) {
      describe_coords(m, q, where, sizeof where);
      snprintf(rep->message, sizeof rep->message,
               "the generalized force is not finite at %s", where);
      st = EOM_ENEWTON;
      goto out;
    }
    int used_model = !use_fd && forcing_dq_model(m, p, u, t, q, J, M, x, A, B) == 0;
    if (!used_model) forcing_dq_fd(m, p, u, t, q, qd, J, qt, f1, f2);
    memcpy(Jcopy, J, nqq * sizeof(double));
    if (dense_lu(nq, J, piv) == 0) {
      for (int i = 0; i < nq; i++) dq[i] = -f[i];
      dense_lu_solve(nq, J, piv, dq);
    } else if (res <= FORCE_TOL * fmax(1.0, res0) * DBL_EPSILON) {
      /* df/dq vanishes where f does too (V = -x^4 at x = 0): this is the
      ** equilibrium, degenerate, and no step is needed. */
      st = EOM_OK;
      goto out;
    } else if (least_squares_step(nq, Jcopy, f, J, dq, piv) != 0) {
      describe_coords(m, q, where, sizeof where);
      snprintf(rep->message, sizeof rep->message,
               "df/dq vanishes at %s (residual %.3g): no coordinate feels a restoring force",
               where, res);
      st = EOM_ESINGULAR;
      goto out;
    }
    double step = max_abs(nq, dq);
    if (step <= tol * (1 + max_abs(nq, q))) {
      /* The remaining correction is negligible; take it.  Where df/dq is
      ** singular a small step does not mean a small force: the force may
      ** lie outside what any motion of q can cancel (a constant push on a
      ** free coordinate), and that point is no equilibrium. */
      for (int i = 0; i < nq; i++) q[i] += dq[i];
      m->forcing(t, q, qd, u, p, f);
      rep->steps = it + 1;
      rep->residual = max_abs(nq, f);
      double fscale = fmax(1.0, fmax(res0, max_abs(nq * nq, Jcopy) * (1 + max_abs(nq, q))));
      if (rep->residual > FORCE_TOL * fscale) {
        describe_coords(m, q, where, sizeof where);
        snprintf(rep->message, sizeof rep->message,
                 "the generalized force cannot vanish: max|f| = %.3g at %s, and no change "
                 "of the coordinates reduces it",
                 rep->residual, where);
        st = EOM_ENEWTON;
        goto out;
      }
      st = EOM_OK;
      goto out;
    }
    /* Backtrack until max|f| decreases; take the shortest step if none does. */
    double alpha = 1;
    int retry = 0;
    for (;;) {
      for (int i = 0; i < nq; i++) qt[i] = q[i] + alpha * dq[i];
      m->forcing(t, qt, qd, u, p, f1);
      double rt = max_abs(nq, f1);
      if (!(rt <= (1 - 1e-4 * alpha) * res) && alpha < 1.0 / 64 && used_model) {
        use_fd = retry = 1;
        break;
      }
      if (rt <= (1 - 1e-4 * alpha) * res || alpha < 1.0 / 64) {
        memcpy(q, qt, (size_t)nq * sizeof(double));
        memcpy(f, f1, (size_t)nq * sizeof(double));
        res = rt;
        break;
      }
      alpha /= 2;
    }
    if (retry) continue;
  }
  rep->steps = max_iter;
  rep->residual = res;
  describe_coords(m, q, where, sizeof where);
  snprintf(rep->message, sizeof rep->message,
           "no equilibrium found after %d Newton iterations; last point %s, residual max|f| = %.3g",
           max_iter, where, res);
  st = EOM_ENEWTON;
out:
  free(buf);
  free(piv);
  return rep->status = (eom_status)st;
}
