/*
** steady.c — steady motions and their stability (see steady.h).
**
** Everything is numeric, through the model's descriptor (the position
** constraints, velocity_constraint) and the runtime's accelerations
** (eom_dynamics, which also copes with redundant constraints).  The steps:
**  1. Which positions are absent from the dynamics: moving q_i leaves the
**     accelerations, G and A, b unchanged (tested at two offsets and two
**     rate vectors).
**  2. Which positions and rates the constraints fix (reduce.c): pivoting
**     on G, then on A, preferring columns of absent coordinates, then of
**     coordinates without a given rate (a vehicle's travel x', y' follow
**     from its wheel speeds, not the other way round).
**  3. The reduced state z = [q_K; v_I]: positions of the coordinates that
**     are neither absent, nor given, nor fixed by phi = 0, and the
**     independent rates; z' comes from accel_constrained at the full state
**     (dependent positions by Newton on phi = 0, dependent rates from the
**     constraints on the rates).
**  4. The steady motion: z' = 0 with the given rates held, the kept
**     coordinates at rest, by Levenberg–Marquardt on the kept positions and
**     the free independent rates; a given coordinate's position must not
**     change z' there (it really is cyclic).
**  5. J = dz'/dz by central differences and its eigenvalues (LAPACK dgeev).
*/
#include "cli/steady.h"
#include "sym/numeric.h"

#include "eom/runtime.h"

#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

extern void dgeev_(const char *jobvl, const char *jobvr, const int *n, double *a, const int *lda,
                   double *wr, double *wi, double *vl, const int *ldvl, double *vr,
                   const int *ldvr, double *work, const int *lwork, int *info, size_t, size_t);

static void *zalloc(size_t n, size_t size) { return calloc(n ? n : 1, size); }

static double max_abs(int n, const double *x) {
  double s = 0;
  for (int i = 0; i < n; i++) s = fmax(s, fabs(x[i]));
  return isfinite(s) ? s : INFINITY;
}

/* The state's rate, G and A, b at x = [q; v] into f: probe_size() entries
** compared, then scratch for phi, dphi/dt and gamma.  Nonzero when they
** cannot be had. */
static int probe_size(const Reduction *r) { return 2 * r->nq + (r->nc + r->nvc) * r->nq + r->nvc; }

static int dynamics_probe(const Reduction *r, const double *x, double *f) {
  const struct eom_model *m = r->m;
  int nq = r->nq, nc = r->nc, nvc = r->nvc;
  double *G = f + 2 * nq, *H = G + (size_t)nc * nq, *b = H + (size_t)nvc * nq;
  double *phi = b + nvc, *phit = phi + nc, *gam = phit + nc;
  if (eom_dynamics(m, r->p, r->t, x, r->u, f) != EOM_OK) return -1;
  if (nc > 0 && m->constraint_at) m->constraint_at(r->t, x, r->p, phi, G, phit);
  else if (nc > 0) m->constraint_jacobian(x, r->p, G);
  if (nvc > 0) m->velocity_constraint(r->t, x, x + nq, r->p, H, b, gam);
  return 0;
}

/* Step 1: is coordinate i absent from the accelerations, G and A, b? */
static int is_absent(const Reduction *r, const double *q0, int i, double *scratch) {
  int nq = r->nq, n = probe_size(r), tail = 2 * r->nc + r->nvc;
  double *qa = scratch, *va = qa + nq, *f0 = va + nq, *f1 = f0 + n + tail;
  static const double offsets[2] = {0.37, -0.81};
  for (int trial = 0; trial < 2; trial++) {
    for (int j = 0; j < nq; j++) va[j] = 0.3 + 0.1 * j + 0.7 * trial * (j % 2 ? -1 : 1);
    for (int side = 0; side < 2; side++) {
      memcpy(qa, q0, (size_t)nq * sizeof(double));
      if (side) qa[i] += offsets[trial];
      if (dynamics_probe(r, qa, side ? f1 : f0) != 0) return 0;  /* qa, va: x */
    }
    double scale = 1 + fmax(max_abs(n, f0), max_abs(n, f1));
    for (int k = 0; k < n; k++)
      if (!(fabs(f0[k] - f1[k]) <= 1e-9 * scale)) return 0;
  }
  return 1;
}

/* Residual of the steady motion at z: z' and, for a given rate that the
** constraints fix, its miss.  Returns the count, or -1. */
static int residual(Reduction *red, const double *rate, const double *z, double *r) {
  int n = red->nk + red->ni;
  if (reduce_rhs(red, z, r) != 0) return -1;
  for (int j = 0; j < red->nq; j++)
    if ((red->role[j] & REDUCE_GIVEN) && (red->role[j] & REDUCE_RATE_DEP))
      r[n++] = red->vf[j] - rate[j];
  for (int k = 0; k < n; k++)
    if (!isfinite(r[k])) return -1;
  return n;
}

/* Solve (JᵀJ + mu D) d = -Jᵀr (nu unknowns, nr residuals) by Cholesky. */
static int lm_step(int nu, int nr, const double *J, const double *r, double mu, double *N,
                   double *d) {
  for (int a = 0; a < nu; a++) {
    double g = 0;
    for (int k = 0; k < nr; k++) g += J[k * nu + a] * r[k];
    d[a] = -g;
    for (int b = 0; b <= a; b++) {
      double s = 0;
      for (int k = 0; k < nr; k++) s += J[k * nu + a] * J[k * nu + b];
      N[a * nu + b] = N[b * nu + a] = s;
    }
  }
  for (int a = 0; a < nu; a++) N[a * nu + a] += mu * (N[a * nu + a] + 1e-12);
  return num_spd_solve(nu, N, d);
}

/* Step 4: Levenberg–Marquardt on the unknown entries of z (the kept
** positions and the independent rates that are neither given nor kept). */
static int solve_steady(Reduction *red, SteadyMotion *sm, const double *rate, double *z,
                        char *err, size_t errlen) {
  int nz = red->nk + red->ni, nmax = nz + red->nq, nu = 0;
  int *unk = zalloc((size_t)nz, sizeof(int));
  double *r = zalloc((size_t)nmax, sizeof(double)), *rt = zalloc((size_t)nmax, sizeof(double));
  double *J = zalloc((size_t)nmax * nz, sizeof(double)), *N = zalloc((size_t)nz * nz, sizeof(double));
  double *d = zalloc((size_t)nz, sizeof(double)), *zt = zalloc((size_t)nz, sizeof(double));
  double *r2 = zalloc((size_t)nmax, sizeof(double));
  int rc = -1;
  if (!unk || !r || !rt || !J || !N || !d || !zt || !r2) {
    snprintf(err, errlen, "out of memory");
    goto out;
  }
  for (int k = 0; k < red->nk; k++) unk[nu++] = k;
  for (int k = 0; k < red->ni; k++) {
    int role = red->role[red->independent[k]];
    if (!(role & (REDUCE_GIVEN | REDUCE_KEPT))) unk[nu++] = red->nk + k;
  }
  int nr = residual(red, rate, z, r);
  if (nr < 0) {
    snprintf(err, errlen, "the equations of motion cannot be evaluated at the start "
             "(singular mass matrix or constraints)");
    goto out;
  }
  double vscale = 1 + max_abs(red->nq, red->vf), tol = 1e-10 * vscale * vscale;
  double res = max_abs(nr, r), mu = 1e-6;
  for (sm->iterations = 0; res > tol && sm->iterations < 100 && nu > 0; sm->iterations++) {
    for (int a = 0; a < nu; a++) {  /* J by central differences */
      double z0 = z[unk[a]], h = cbrt(DBL_EPSILON) * fmax(1.0, fabs(z0));
      z[unk[a]] = z0 + h;
      int ok = residual(red, rate, z, rt) == nr;
      z[unk[a]] = z0 - h;
      ok = ok && residual(red, rate, z, r2) == nr;
      z[unk[a]] = z0;
      if (!ok) {
        snprintf(err, errlen, "the equations of motion cannot be evaluated near the steady motion");
        goto out;
      }
      for (int k = 0; k < nr; k++) J[k * nu + a] = (rt[k] - r2[k]) / (2 * h);
    }
    int improved = 0;
    for (int tries = 0; tries < 12 && !improved; tries++, mu *= 10) {
      if (lm_step(nu, nr, J, r, mu, N, d) != 0) continue;
      memcpy(zt, z, (size_t)nz * sizeof(double));
      for (int a = 0; a < nu; a++) zt[unk[a]] += d[a];
      if (residual(red, rate, zt, rt) != nr) continue;
      double rn = max_abs(nr, rt);
      if (rn < res) {
        memcpy(z, zt, (size_t)nz * sizeof(double));
        memcpy(r, rt, (size_t)nr * sizeof(double));
        res = rn;
        improved = 1;
        mu = fmax(mu / 100, 1e-12);
      }
    }
    if (!improved) break;
  }
  sm->residual = res;
  if (!(res <= 1e3 * tol)) {
    snprintf(err, errlen, "no steady motion with these rates near the start: the accelerations "
             "stay %.3g after %d iterations (change the rates, or start nearer with --at)",
             res, sm->iterations);
    goto out;
  }
  rc = 0;
out:
  free(unk);
  free(r);
  free(rt);
  free(J);
  free(N);
  free(d);
  free(zt);
  free(r2);
  return rc;
}

/* Step 5: J = dz'/dz and its eigenvalues, by growth rate. */
static int linearize(Reduction *red, SteadyMotion *sm, double *z, char *err, size_t errlen) {
  int nz = red->nk + red->ni, info = 0, one = 1, lwork = 8 * nz + 8;
  double *a = zalloc((size_t)nz * nz, sizeof(double)), *work = zalloc((size_t)lwork, sizeof(double));
  int rc = -1;
  if (!a || !work) {
    snprintf(err, errlen, "out of memory");
    goto out;
  }
  if (reduce_linearize(red, z, sm->J, NULL, NULL, NULL) != 0) {
    snprintf(err, errlen, "the equations of motion cannot be evaluated near the steady motion");
    goto out;
  }
  for (int i = 0; i < nz; i++)  /* column-major for LAPACK */
    for (int j = 0; j < nz; j++) a[j * nz + i] = sm->J[i * nz + j];
  dgeev_("N", "N", &nz, a, &nz, sm->re, sm->im, NULL, &one, NULL, &one, work, &lwork, &info, 1, 1);
  if (info != 0) {
    snprintf(err, errlen, "LAPACK dgeev failed (info %d)", info);
    goto out;
  }
  for (int i = 1; i < nz; i++)  /* insertion sort: growth rate, then frequency */
    for (int k = i; k > 0 && (sm->re[k] > sm->re[k - 1] ||
                              (sm->re[k] == sm->re[k - 1] && sm->im[k] > sm->im[k - 1])); k--) {
      double t = sm->re[k]; sm->re[k] = sm->re[k - 1]; sm->re[k - 1] = t;
      t = sm->im[k]; sm->im[k] = sm->im[k - 1]; sm->im[k - 1] = t;
    }
  double big = 0;
  for (int i = 0; i < nz; i++) big = fmax(big, hypot(sm->re[i], sm->im[i]));
  sm->max_growth = nz ? sm->re[0] : 0;
  /* growth beyond the differencing error of J (relative ~1e-7 of its size) */
  sm->unstable = nz > 0 && sm->re[0] > 1e-6 * (1 + big);
  rc = 0;
out:
  free(a);
  free(work);
  return rc;
}

/* A given coordinate must really be cyclic: its position must not change z'. */
static int check_given_cyclic(Reduction *red, const double *z, char *err, size_t errlen) {
  int nz = red->nk + red->ni;
  double *f0 = zalloc((size_t)nz, sizeof(double)), *f1 = zalloc((size_t)nz, sizeof(double));
  int rc = 0;
  if (!f0 || !f1 || reduce_rhs(red, z, f0) != 0) rc = -1;
  for (int i = 0; rc == 0 && i < red->nq; i++) {
    if (!(red->role[i] & REDUCE_GIVEN)) continue;
    double keep = red->q[i];
    red->q[i] = keep + 0.37;
    int bad = reduce_rhs(red, z, f1) != 0;
    red->q[i] = keep;
    double scale = 1 + max_abs(nz, f0);
    for (int k = 0; !bad && k < nz; k++) bad = !(fabs(f1[k] - f0[k]) <= 1e-8 * scale);
    if (bad) {
      snprintf(err, errlen, "'%s' enters the dynamics (its position changes the accelerations), "
               "so it cannot turn at a constant rate: a steady motion needs coordinates whose "
               "positions do not matter", red->m->coord_names[i]);
      rc = -2;
    }
  }
  if (rc == -1) snprintf(err, errlen, "the equations of motion cannot be evaluated there");
  free(f0);
  free(f1);
  return rc ? -1 : 0;
}

void steady_free(SteadyMotion *sm) {
  if (!sm) return;
  reduce_free(&sm->red);
  free(sm->q);
  free(sm->v);
  free(sm->J);
  free(sm->re);
  free(sm->im);
  memset(sm, 0, sizeof *sm);
}

/* Steps 1-3: roles, the reduced state's layout. */
static int classify(Reduction *red, const int *given, const int *prefer, char *err,
                    size_t errlen) {
  int nq = red->nq;
  double *scratch = zalloc(2 * (size_t)nq + 2 * ((size_t)probe_size(red) + 2 * (size_t)red->nc +
                           (size_t)red->nvc), sizeof(double));
  if (!scratch) {
    snprintf(err, errlen, "out of memory");
    return -1;
  }
  for (int i = 0; i < nq; i++) {
    red->role[i] = (given[i] ? REDUCE_GIVEN : 0) | (prefer && prefer[i] ? REDUCE_PREFER : 0);
    if (is_absent(red, red->q, i, scratch)) red->role[i] |= REDUCE_ABSENT;
  }
  free(scratch);
  return reduce_choose(red, err, errlen);
}

int steady_analyze(const struct eom_model *m, const double *p, const double *u, const double *q,
                   const double *v, const int *given, const double *rate, const int *prefer,
                   int warm, SteadyMotion *sm, char *err, size_t errlen) {
  assert(m && q && v && given && rate && sm);
  int nq = m->nq, rc = -1;
  err[0] = '\0';
  if (!warm || sm->nq != nq) {
    steady_free(sm);
    sm->nq = nq;
    sm->q = zalloc((size_t)nq, sizeof(double));
    sm->v = zalloc((size_t)nq, sizeof(double));
    sm->J = zalloc((size_t)nq * nq * 4, sizeof(double));
    sm->re = zalloc(2 * (size_t)nq, sizeof(double));
    sm->im = zalloc(2 * (size_t)nq, sizeof(double));
    if (!sm->q || !sm->v || !sm->J || !sm->re || !sm->im) {
      snprintf(err, errlen, "out of memory");
      return -1;
    }
    memcpy(sm->q, q, (size_t)nq * sizeof(double));
    memcpy(sm->v, v, (size_t)nq * sizeof(double));
  }
  for (int i = 0; i < nq; i++)
    if (given[i]) sm->v[i] = rate[i];
  Reduction *red = &sm->red;
  reduce_free(red);
  double *z = zalloc(2 * (size_t)nq, sizeof(double));
  if (!z || reduce_init(red, m, p, u, 0.0, sm->q, sm->v) != 0) {
    snprintf(err, errlen, "out of memory");
    goto out;
  }
  if (classify(red, given, prefer, err, errlen) != 0) goto out;
  sm->nk = red->nk, sm->ni = red->ni;
  sm->kept = red->kept, sm->independent = red->independent, sm->role = red->role;
  /* z from the start; kept coordinates at rest, given rates held */
  for (int k = 0; k < red->nk; k++) z[k] = red->q[red->kept[k]];
  for (int k = 0; k < red->ni; k++) {
    int i = red->independent[k];
    z[red->nk + k] = (red->role[i] & REDUCE_KEPT) ? 0 : red->v[i];
  }
  /* a given coordinate must be cyclic: tested at the start, where a wrong
  ** choice is plainer than a steady motion that cannot be found */
  if (check_given_cyclic(red, z, err, errlen) != 0) goto out;
  if (solve_steady(red, sm, rate, z, err, errlen) != 0) goto out;
  if (reduce_state(red, z) != 0) {
    snprintf(err, errlen, "the constraints cannot be met at the steady motion");
    goto out;
  }
  reduce_rebase(red);
  memcpy(sm->q, red->q, (size_t)nq * sizeof(double));
  memcpy(sm->v, red->v, (size_t)nq * sizeof(double));
  if (linearize(red, sm, z, err, errlen) != 0) goto out;
  rc = 0;
out:
  free(z);
  return rc;
}
