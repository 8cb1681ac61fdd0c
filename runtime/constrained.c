/*
** constrained.c — static equilibria and small motions of models with
** holonomic constraints phi(q) = 0.
**
** At rest the generalized forces balance the constraint forces:
**   f(t, q, 0, u) + G(q)ᵀ λ = 0,   phi(q) = 0,   G = dphi/dq,
** solved by Newton's method for (q, λ) together.  The small motions live in
** the tangent space of the constraint surface, spanned by the orthonormal
** columns of N (G N = 0), with q = q* + N z and
**   Mr = Nᵀ M N,  Cr = -Nᵀ (df/dqd) N,  Kr = -Nᵀ d(f + Gᵀλ*)/dq N,
** where λ* stays at its equilibrium value: the λ·(d²phi/dq²) part is the
** stiffness the constraint force adds (a pendulum's rod tension).  The
** terms from the change of N with q multiply f + Gᵀλ*, which is zero.
** (Standard constrained linearization; Hairer & Wanner, Solving ODEs II,
** 2nd ed., 1996, ch. VII for the structure of constrained mechanical
** systems; the chapter is from memory.)
** This file uses only the model's mass, forcing, constraint and
** constraint_jacobian, so it does not depend on how accel_constrained signs λ.
*/
#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "integrators.h"

static double max_abs(int n, const double *v) {
  double m = 0;
  for (int i = 0; i < n; i++) m = fmax(m, fabs(v[i]));
  return isfinite(m) ? m : INFINITY;
}

/* F = [f(q, 0) + Gᵀλ; phi(q)] (nq + nc entries); G (nc x nq) is left in G. */
static void residual(const struct eom_model *m, const double *p, const double *u, double t,
                     const double *q, const double *lambda, const double *qd0, double *G,
                     double *F) {
  int nq = m->nq, nc = m->nc;
  m->forcing(t, q, qd0, u, p, F);
  m->constraint_jacobian(q, p, G);
  for (int i = 0; i < nq; i++)
    for (int k = 0; k < nc; k++) F[i] += G[k * nq + i] * lambda[k];
  m->constraint(q, p, F + nq);
}

/* Least-squares multipliers at q: the minimum-norm λ of (G Gᵀ) λ = -G f,
** so redundant constraints (dependent rows of G) get a definite split and
** the constraint stiffness λ·d²phi/dq² of the tangent linearization is
** right (any λ with Gᵀλ = -f gives the same stiffness along the constraint
** surface; a λ of 0 for the dependent rows would not balance f).  The
** pseudo-inverse is constraint_solve.c's with the metric M = I.  work:
** nc*nc + nq (unused: the solver allocates its own scratch).  λ = 0 when
** out of memory. */
static void initial_multipliers(const struct eom_model *m, const double *p, const double *u,
                                double t, const double *q, const double *qd0, double *G,
                                double *lambda, double *work, int *piv) {
  int nq = m->nq, nc = m->nc;
  (void)work;
  (void)piv;
  m->constraint_jacobian(q, p, G);
  memset(lambda, 0, (size_t)nc * sizeof(double));
  double *buf = malloc(((size_t)nq * nq + 2 * (size_t)nq + (size_t)nc + csolve_doubles(nq, nc)) *
                       sizeof(double));
  if (!buf) return;
  double *I = buf, *f = I + (size_t)nq * nq, *Gf = f + nq, *ws = Gf + nc;
  memset(I, 0, (size_t)nq * nq * sizeof(double));
  for (int i = 0; i < nq; i++) I[i * nq + i] = 1;
  m->forcing(t, q, qd0, u, p, f);
  for (int a = 0; a < nc; a++) {
    double v = 0;
    for (int i = 0; i < nq; i++) v += G[a * nq + i] * f[i];
    Gf[a] = -v;
  }
  ConstraintSolver cs;
  csolve_init(&cs, nq, nc, ws);
  if (csolve_factor(&cs, I, G) == EOM_OK) csolve_pinv(&cs, Gf, lambda);
  free(buf);
}

int constrained_equilibrium(const struct eom_model *m, const double *p, const double *u, double t,
                            double *q, double tol, int max_iter, struct eom_report *rep) {
  int nq = m->nq, nc = m->nc, n = nq + nc;
  char where[256];
  assert(nc > 0);
  if (!m->constraint || !m->constraint_jacobian) {
    snprintf(rep->message, sizeof rep->message, "the model lacks its constraint functions");
    return rep->status = EOM_EINVAL;
  }
  size_t nn = (size_t)n * n;
  double *buf = calloc(8 * (size_t)n + 3 * nn + 2 * (size_t)nc * nq + (size_t)nc * nc +
                           (size_t)nq + (size_t)m->nu + 1, sizeof(double));
  int *piv = calloc((size_t)n + 1, sizeof(int));
  if (!buf || !piv) {
    free(buf);
    free(piv);
    snprintf(rep->message, sizeof rep->message, "out of memory");
    return rep->status = EOM_ENOMEM;
  }
  double *y = buf, *F = y + n, *Ft = F + n, *F1 = Ft + n, *F2 = F1 + n, *dy = F2 + n;
  double *yt = dy + n, *qd0 = yt + n, *J = qd0 + n, *Jc = J + nn, *work = Jc + nn;
  double *G = work + nn, *Gt = G + (size_t)nc * nq, *tmp = Gt + (size_t)nc * nq;
  /* tmp: nc*nc + nq for initial_multipliers; then nu zeros. */
  if (!u) u = tmp + (size_t)nc * nc + nq; /* no inputs given: all zero (calloc) */
  int st = EOM_ENEWTON;

  memcpy(y, q, (size_t)nq * sizeof(double));
  initial_multipliers(m, p, u, t, q, qd0, G, y + nq, tmp, piv);
  residual(m, p, u, t, y, y + nq, qd0, G, F);
  double res = max_abs(n, F);
  for (int it = 0; it < max_iter; it++) {
    rep->steps = it;
    rep->residual = res;
    if (!isfinite(res)) {
      describe_coords(m, y, where, sizeof where);
      snprintf(rep->message, sizeof rep->message, "the residual is not finite at %s", where);
      goto out;
    }
    /* J = [d(f + Gᵀλ)/dq, Gᵀ; G, 0], the q-columns by central differences. */
    memcpy(yt, y, (size_t)n * sizeof(double));
    for (int j = 0; j < nq; j++) {
      double delta = cbrt(DBL_EPSILON) * fmax(1.0, fabs(y[j]));
      yt[j] = y[j] + delta;
      residual(m, p, u, t, yt, y + nq, qd0, Gt, F1);
      yt[j] = y[j] - delta;
      residual(m, p, u, t, yt, y + nq, qd0, Gt, F2);
      yt[j] = y[j];
      for (int i = 0; i < n; i++) J[i * n + j] = (F1[i] - F2[i]) / (2 * delta);
    }
    for (int i = 0; i < nq; i++)
      for (int k = 0; k < nc; k++) {
        J[i * n + nq + k] = G[k * nq + i];
        J[(nq + k) * n + i] = G[k * nq + i];
      }
    for (int k = 0; k < nc; k++)
      for (int l = 0; l < nc; l++) J[(nq + k) * n + nq + l] = 0;
    memcpy(Jc, J, nn * sizeof(double));
    if (dense_lu(n, J, piv) == 0) {
      for (int i = 0; i < n; i++) dy[i] = -F[i];
      dense_lu_solve(n, J, piv, dy);
    } else if (least_squares_step(n, Jc, F, work, dy, piv) != 0) {
      describe_coords(m, y, where, sizeof where);
      snprintf(rep->message, sizeof rep->message,
               "the equilibrium equations are singular at %s (residual %.3g)", where, res);
      st = EOM_ESINGULAR;
      goto out;
    }
    if (max_abs(nq, dy) <= tol * (1 + max_abs(nq, y)) &&
        max_abs(nc, dy + nq) <= tol * (1 + max_abs(nc, y + nq))) {
      for (int i = 0; i < n; i++) y[i] += dy[i];
      residual(m, p, u, t, y, y + nq, qd0, G, F);
      memcpy(q, y, (size_t)nq * sizeof(double));
      rep->steps = it + 1;
      rep->residual = max_abs(n, F);
      st = EOM_OK;
      goto out;
    }
    double alpha = 1;
    for (;;) {
      for (int i = 0; i < n; i++) yt[i] = y[i] + alpha * dy[i];
      residual(m, p, u, t, yt, yt + nq, qd0, Gt, Ft);
      double rt = max_abs(n, Ft);
      if (rt <= (1 - 1e-4 * alpha) * res || alpha < 1.0 / 64) {
        memcpy(y, yt, (size_t)n * sizeof(double));
        memcpy(F, Ft, (size_t)n * sizeof(double));
        memcpy(G, Gt, (size_t)nc * nq * sizeof(double));
        res = rt;
        break;
      }
      alpha /= 2;
    }
  }
  rep->steps = max_iter;
  rep->residual = res;
  describe_coords(m, y, where, sizeof where);
  snprintf(rep->message, sizeof rep->message,
           "no equilibrium on the constraints found after %d Newton iterations; last point %s, "
           "residual %.3g", max_iter, where, res);
out:
  if (st != EOM_OK) memcpy(q, y, (size_t)nq * sizeof(double));
  free(buf);
  free(piv);
  return rep->status = (eom_status)st;
}

/* Orthonormal basis N (nq x nr, row-major, nr columns used with stride nq)
** of the null space of G (nc x nq), by modified Gram–Schmidt: first the
** rows of G (dependent rows dropped), then the unit vectors.  Returns nr. */
static int null_space(int nq, int nc, const double *G, double *N, double *basis) {
  int nb = 0, nr = 0;
  double *v = basis + (size_t)nq * nq; /* scratch of nq */
  for (int pass = 0; pass < 2; pass++) {
    int count = pass == 0 ? nc : nq;
    for (int r = 0; r < count && nb < nq; r++) {
      double norm0 = 0;
      for (int i = 0; i < nq; i++) {
        v[i] = pass == 0 ? G[r * nq + i] : (i == r);
        norm0 = fmax(norm0, fabs(v[i]));
      }
      for (int b = 0; b < nb; b++) {
        double d = 0;
        for (int i = 0; i < nq; i++) d += basis[b * nq + i] * v[i];
        for (int i = 0; i < nq; i++) v[i] -= d * basis[b * nq + i];
      }
      double norm = 0;
      for (int i = 0; i < nq; i++) norm += v[i] * v[i];
      norm = sqrt(norm);
      /* A vector mostly inside the span so far adds nothing new. */
      if (!(norm > 1e-8 * norm0) || (pass == 1 && norm < 0.5)) continue;
      for (int i = 0; i < nq; i++) basis[nb * nq + i] = v[i] / norm;
      if (pass == 1) {
        for (int i = 0; i < nq; i++) N[i * nq + nr] = basis[nb * nq + i];
        nr++;
      }
      nb++;
    }
  }
  return nr;
}

int eom_linearize_tangent(const struct eom_model *m, const double *p, const double *u, double t,
                          const double *q, double *N, int *nr_out, double *Mr, double *Cr,
                          double *Kr, struct eom_report *rep) {
  struct eom_report local;
  if (!rep) rep = &local;
  memset(rep, 0, sizeof *rep);
  assert(m && q && N && nr_out && Mr && Cr && Kr);
  if (!p) p = m->param_defaults;
  int nq = m->nq, nc = m->nc;
  size_t nqq = (size_t)nq * nq;
  *nr_out = 0;
  if (nc == 0) {
    double *qd = calloc((size_t)nq + 1, sizeof(double));
    if (!qd) return rep->status = EOM_ENOMEM;
    int st = eom_linearize(m, p, u, t, q, qd, Mr, Cr, Kr, rep);
    free(qd);
    memset(N, 0, nqq * sizeof(double));
    for (int i = 0; i < nq; i++) N[i * nq + i] = 1;
    *nr_out = nq;
    return st;
  }
  if (!m->constraint || !m->constraint_jacobian) {
    snprintf(rep->message, sizeof rep->message, "the model lacks its constraint functions");
    return rep->status = EOM_EINVAL;
  }
  double *buf = calloc(6 * nqq + 2 * (size_t)nc * nq + (size_t)nc * nc + 7 * (size_t)nq +
                           2 * (size_t)nc + (size_t)m->nu + 1, sizeof(double));
  int *piv = calloc((size_t)nc + 1, sizeof(int));
  if (!buf || !piv) {
    free(buf);
    free(piv);
    snprintf(rep->message, sizeof rep->message, "out of memory");
    return rep->status = EOM_ENOMEM;
  }
  double *M = buf, *K = M + nqq, *C = K + nqq, *T = C + nqq, *basis = T + nqq;
  double *G = basis + 2 * nqq, *Gt = G + (size_t)nc * nq, *S = Gt + (size_t)nc * nq;
  /* S: nc*nc + nq, the scratch of initial_multipliers. */
  double *qt = S + (size_t)nc * nc + nq, *qd0 = qt + nq, *f1 = qd0 + nq, *f2 = f1 + nq;
  double *lambda = f2 + nq, *zeros = lambda + nc;
  if (!u) u = zeros; /* no inputs given: all zero (calloc) */

  m->mass(q, p, M);
  initial_multipliers(m, p, u, t, q, qd0, G, lambda, S, piv);
  /* K = -d(f + Gᵀλ)/dq with λ held; C = -df/dqd. */
  memcpy(qt, q, (size_t)nq * sizeof(double));
  for (int j = 0; j < nq; j++) {
    double delta = cbrt(DBL_EPSILON) * fmax(1.0, fabs(q[j]));
    for (int side = 0; side < 2; side++) {
      double *fo = side ? f2 : f1;
      qt[j] = q[j] + (side ? -delta : delta);
      m->forcing(t, qt, qd0, u, p, fo);
      m->constraint_jacobian(qt, p, Gt);
      for (int i = 0; i < nq; i++)
        for (int k = 0; k < nc; k++) fo[i] += Gt[k * nq + i] * lambda[k];
    }
    qt[j] = q[j];
    for (int i = 0; i < nq; i++) K[i * nq + j] = -(f1[i] - f2[i]) / (2 * delta);
  }
  for (int j = 0; j < nq; j++) {
    double delta = cbrt(DBL_EPSILON);
    qd0[j] = delta;
    m->forcing(t, q, qd0, u, p, f1);
    qd0[j] = -delta;
    m->forcing(t, q, qd0, u, p, f2);
    qd0[j] = 0;
    for (int i = 0; i < nq; i++) C[i * nq + j] = -(f1[i] - f2[i]) / (2 * delta);
  }
  int nr = null_space(nq, nc, G, N, basis);
  /* Xr = Nᵀ X N for X in M, C, K (N's columns are at stride nq). */
  double *src[3] = {M, C, K}, *dst[3] = {Mr, Cr, Kr};
  for (int w = 0; w < 3; w++) {
    for (int i = 0; i < nq; i++)
      for (int b = 0; b < nr; b++) {
        double s = 0;
        for (int k = 0; k < nq; k++) s += src[w][i * nq + k] * N[k * nq + b];
        T[i * nq + b] = s;
      }
    for (int a = 0; a < nr; a++)
      for (int b = 0; b < nr; b++) {
        double s = 0;
        for (int i = 0; i < nq; i++) s += N[i * nq + a] * T[i * nq + b];
        dst[w][a * nr + b] = s;
      }
  }
  *nr_out = nr;
  free(buf);
  free(piv);
  return rep->status = EOM_OK;
}
