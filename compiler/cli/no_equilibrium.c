/*
** no_equilibrium.c — what `eomc modes` says when a model has no static
** equilibrium: which coordinates' generalized forces cannot vanish and why,
** and, where those coordinates enter the dynamics only through their rates
** (a trolley free to roll), the steady motion in which they accelerate
** uniformly while the others hold still.
**
** Everything is numeric, on the generated functions: df/dq by central
** differences of forcing(), and "enters only through its rates" tested by
** moving the coordinate and comparing M and f.
*/
#include "cli/no_equilibrium.h"

#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

extern void dgesv_(const int *n, const int *nrhs, double *a, const int *lda, int *ipiv,
                   double *b, const int *ldb, int *info);

/* Relative size below which a force or a derivative counts as zero. */
#define ZERO_FORCE 1e-8
#define ZERO_SLOPE 1e-9

static double max_abs(size_t n, const double *v) {
  double m = 0;
  for (size_t i = 0; i < n; i++) m = fmax(m, fabs(v[i]));
  return m;
}

/* The unit of the generalized force that goes with a coordinate's unit. */
static void force_unit(const char *cu, char *buf, size_t cap) {
  if (strcmp(cu, "m") == 0) snprintf(buf, cap, "N");
  else if (strcmp(cu, "rad") == 0) snprintf(buf, cap, "N*m");
  else if (!cu[0]) snprintf(buf, cap, "J");
  else snprintf(buf, cap, "J/%s", cu);
}

/* df/dq at rest (row-major nq x nq) by central differences. */
static void force_slope(const struct eom_model *m, const double *p, const double *u,
                        const double *q, double *J, double *qt, const double *qd, double *f1,
                        double *f2) {
  int nq = m->nq;
  memcpy(qt, q, (size_t)nq * sizeof(double));
  for (int j = 0; j < nq; j++) {
    double h = cbrt(DBL_EPSILON) * fmax(1.0, fabs(q[j]));
    qt[j] = q[j] + h;
    m->forcing(0, qt, qd, u, p, f1);
    qt[j] = q[j] - h;
    m->forcing(0, qt, qd, u, p, f2);
    qt[j] = q[j];
    for (int i = 0; i < nq; i++) J[i * nq + j] = (f1[i] - f2[i]) / (2 * h);
  }
}

/* 1 when M and f at rest do not change as coordinate j moves (by a few
** unrelated amounts, so a periodic coordinate is not mistaken for one). */
static int enters_by_rates_only(const struct eom_model *m, const double *p, const double *u,
                                const double *q, int j, double *qt, const double *qd,
                                double *f0, double *f1, double *M0, double *M1) {
  static const double shifts[] = {0.37, -1.9, 5.3};
  int nq = m->nq;
  size_t nn = (size_t)nq * nq;
  m->forcing(0, q, qd, u, p, f0);
  m->mass(q, p, M0);
  double fs = fmax(1e-300, max_abs((size_t)nq, f0)), ms = fmax(1e-300, max_abs(nn, M0));
  memcpy(qt, q, (size_t)nq * sizeof(double));
  for (size_t s = 0; s < sizeof shifts / sizeof shifts[0]; s++) {
    qt[j] = q[j] + shifts[s] * fmax(1.0, fabs(q[j]));
    m->forcing(0, qt, qd, u, p, f1);
    m->mass(qt, p, M1);
    for (int i = 0; i < nq; i++)
      if (fabs(f1[i] - f0[i]) > 1e-12 * fs) return 0;
    for (size_t i = 0; i < nn; i++)
      if (fabs(M1[i] - M0[i]) > 1e-12 * ms) return 0;
  }
  return 1;
}

/* 1 when the force at rest changes with coordinate j's rate. */
static int force_depends_on_rate(const struct eom_model *m, const double *p, const double *u,
                                 const double *q, int j, double *qdt, double *f0, double *f1) {
  int nq = m->nq;
  memset(qdt, 0, (size_t)nq * sizeof(double));
  m->forcing(0, q, qdt, u, p, f0);
  double fs = fmax(1.0, max_abs((size_t)nq, f0));
  for (int s = -1; s <= 1; s += 2) {
    qdt[j] = s * 1.0;
    m->forcing(0, q, qdt, u, p, f1);
    for (int i = 0; i < nq; i++)
      if (fabs(f1[i] - f0[i]) > 1e-12 * fs) return 1;
  }
  return 0;
}

/* Residual of the steady acceleration: f(q, 0) - M(q) a, a_j = z_j for the
** free coordinates, q_j = z_j for the others. */
static void steady_residual(const struct eom_model *m, const double *p, const double *u,
                            const double *q0, const int *free_c, const double *z, double *r,
                            double *q, double *a, double *M, const double *qd) {
  int nq = m->nq;
  for (int i = 0; i < nq; i++) {
    q[i] = free_c[i] ? q0[i] : z[i];
    a[i] = free_c[i] ? z[i] : 0;
  }
  m->forcing(0, q, qd, u, p, r);
  m->mass(q, p, M);
  for (int i = 0; i < nq; i++)
    for (int k = 0; k < nq; k++) r[i] -= M[i * nq + k] * a[k];
}

/* Newton (central-difference Jacobian, LAPACK dgesv) for the steady
** acceleration.  On success q holds the positions and acc the accelerations
** (0 for the coordinates that hold still). */
static int solve_steady(const struct eom_model *m, const double *p, const double *u, double *q,
                        const int *free_c, double *acc, double *residual_out, double *w) {
  int nq = m->nq, one = 1, info = 0;
  size_t nn = (size_t)nq * nq;
  double *z = w, *r = z + nq, *r1 = r + nq, *r2 = r1 + nq, *qt = r2 + nq, *a = qt + nq;
  double *qd = a + nq, *M = qd + nq, *J = M + nn;
  int *piv = malloc((size_t)nq * sizeof(int));
  if (!piv) return -1;
  memset(qd, 0, (size_t)nq * sizeof(double));
  for (int i = 0; i < nq; i++) z[i] = free_c[i] ? 0 : q[i];
  int rc = -1;
  for (int it = 0; it < 60; it++) {
    steady_residual(m, p, u, q, free_c, z, r, qt, a, M, qd);
    double res = max_abs((size_t)nq, r);
    for (int j = 0; j < nq; j++) {
      double h = cbrt(DBL_EPSILON) * fmax(1.0, fabs(z[j])), zj = z[j];
      z[j] = zj + h;
      steady_residual(m, p, u, q, free_c, z, r1, qt, a, M, qd);
      z[j] = zj - h;
      steady_residual(m, p, u, q, free_c, z, r2, qt, a, M, qd);
      z[j] = zj;
      for (int i = 0; i < nq; i++) J[(size_t)j * nq + i] = (r1[i] - r2[i]) / (2 * h); /* col-major */
    }
    for (int i = 0; i < nq; i++) r[i] = -r[i];
    dgesv_(&nq, &one, J, &nq, piv, r, &nq, &info);
    if (info != 0 || !isfinite(res)) break;
    double step = max_abs((size_t)nq, r);
    for (int i = 0; i < nq; i++) z[i] += r[i];
    if (step <= 1e-12 * (1 + max_abs((size_t)nq, z))) {
      steady_residual(m, p, u, q, free_c, z, r, qt, a, M, qd);
      *residual_out = max_abs((size_t)nq, r);
      for (int i = 0; i < nq; i++) {
        acc[i] = free_c[i] ? z[i] : 0;
        if (!free_c[i]) q[i] = z[i];
      }
      rc = 0;
      break;
    }
  }
  free(piv);
  return rc;
}

/* Append to a bounded buffer (truncating). */
static void put(char *buf, size_t cap, size_t *len, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));
static void put(char *buf, size_t cap, size_t *len, const char *fmt, ...) {
  if (*len >= cap) return;
  va_list ap;
  va_start(ap, fmt);
  int n = vsnprintf(buf + *len, cap - *len, fmt, ap);
  va_end(ap);
  if (n > 0) *len = *len + (size_t)n < cap ? *len + (size_t)n : cap - 1;
}

int explain_no_equilibrium(const struct eom_model *m, const double *p, const double *u,
                           const double *q, char *buf, size_t cap) {
  int nq = m->nq;
  size_t nn = (size_t)nq * nq;
  assert(m->nc == 0 && cap > 0);
  buf[0] = '\0';
  double *w = calloc(8 * (size_t)nq + 3 * nn, sizeof(double));
  int *free_c = calloc((size_t)nq, sizeof(int));
  if (!w || !free_c) {
    free(w), free(free_c);
    snprintf(buf, cap, "out of memory");
    return -1;
  }
  double *f = w, *f1 = f + nq, *f2 = f1 + nq, *qt = f2 + nq, *qd = qt + nq, *qs = qd + nq;
  double *acc = qs + nq, *J = acc + nq, *M0 = J + nn, *M1 = M0 + nn;
  double *work = NULL;
  size_t len = 0;
  m->forcing(0, q, qd, u, p, f);
  force_slope(m, p, u, q, J, qt, qd, f1, f2);
  double jscale = max_abs(nn, J), fscale = fmax(1.0, max_abs((size_t)nq, f));
  fscale = fmax(fscale, jscale * (1 + max_abs((size_t)nq, q)));
  int named = 0, nfree = 0, rate_dependent = -1;
  for (int i = 0; i < nq; i++) {
    if (!(fabs(f[i]) > ZERO_FORCE * fscale)) continue;
    int row_const = 1;
    for (int j = 0; j < nq; j++)
      if (fabs(J[i * nq + j]) > ZERO_SLOPE * fmax(jscale, 1e-300)) row_const = 0;
    char fu[64];
    force_unit(m->coord_units[i], fu, sizeof fu);
    const char *name = m->coord_names[i];
    put(buf, cap, &len, "%s%s: ", named++ ? "; " : "", name);
    if (row_const)
      put(buf, cap, &len, "a constant generalized force of %.6g %s acts and nothing restores %s",
          f[i], fu, name);
    else
      put(buf, cap, &len,
          "a generalized force of %.6g %s remains that no position of the coordinates cancels",
          f[i], fu);
    if (enters_by_rates_only(m, p, u, q, i, qt, qd, f1, f2, M0, M1)) {
      free_c[i] = 1;
      nfree++;
      if (force_depends_on_rate(m, p, u, q, i, qs, f1, f2)) rate_dependent = i;
    }
  }
  if (!named)
    put(buf, cap, &len, "Newton's method stopped at max|f| = %.3g", max_abs((size_t)nq, f));
  put(buf, cap, &len, "\n");
  if (nfree > 0 && rate_dependent >= 0) {
    put(buf, cap, &len,
        "note: %s enters the dynamics only through its rate, and its force depends on that "
        "rate: for the steady motion at a constant rate give it with --rate %s=VALUE\n",
        m->coord_names[rate_dependent], m->coord_names[rate_dependent]);
  } else if (nfree > 0 && (work = calloc(10 * (size_t)nq + 2 * nn, sizeof(double))) != NULL) {
    double res = 0;
    memcpy(qs, q, (size_t)nq * sizeof(double));
    if (solve_steady(m, p, u, qs, free_c, acc, &res, work) == 0) {
      put(buf, cap, &len, "note: steady acceleration (these coordinates enter only through "
                          "their rates; the others hold still):");
      for (int i = 0; i < nq; i++) {
        const char *cu = m->coord_units[i];
        if (free_c[i])
          put(buf, cap, &len, "%s %s'' = %.8g%s%s/s^2", i ? "," : "", m->coord_names[i],
              acc[i], cu[0] ? " " : "", cu[0] ? cu : "1");
        else
          put(buf, cap, &len, "%s %s = %.8g%s%s", i ? "," : "", m->coord_names[i], qs[i],
              cu[0] ? " " : "", cu);
      }
      put(buf, cap, &len, " (residual %.3g)\n", res);
    }
  }
  free(work);
  free(w);
  free(free_c);
  return 0;
}
