/*
** steady.c — steady motions and their stability (see steady.h).
**
** Everything is numeric, through the model's descriptor: accel_constrained
** (or accel) and velocity_constraint.  The steps:
**  1. Which positions are absent from the dynamics: moving q_i leaves the
**     accelerations and A, b unchanged (tested at two offsets and two
**     rate vectors).
**  2. Which rates the velocity constraints fix: Gaussian elimination with
**     column pivoting on A, preferring columns of absent coordinates, then
**     of coordinates without a given rate (a vehicle's travel x', y' follow
**     from its wheel speeds, not the other way round).
**  3. The reduced state z = [q_K; v_I]: positions of the coordinates that
**     are neither absent nor given, and the independent rates; z' comes
**     from accel_constrained with the dependent rates solved from A q' = b.
**  4. The steady motion: z' = 0 with the given rates held, the kept
**     coordinates at rest, by Levenberg–Marquardt on the kept positions and
**     the free independent rates; a given coordinate's position must not
**     change z' there (it really is cyclic).
**  5. J = dz'/dz by central differences and its eigenvalues (LAPACK dgeev).
** Position constraints are not supported here (an error says so).
*/
#include "cli/steady.h"
#include "sym/numeric.h"

#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

extern void dgeev_(const char *jobvl, const char *jobvr, const int *n, double *a, const int *lda,
                   double *wr, double *wi, double *vl, const int *ldvl, double *vr,
                   const int *ldvr, double *work, const int *lwork, int *info, size_t, size_t);

typedef struct Work {
  const struct eom_model *m;
  const double *p, *u;
  int nq, nvc;
  double *H, *b, *gam;    /* A (nvc x nq), b, gamma */
  double *Hd;             /* nvc x nvc: A's dependent columns, factored */
  int *piv;               /* nvc */
  int *dep;               /* nvc: the dependent coordinates */
  double *q, *v, *qdd, *lambda;
} Work;

static void *zalloc(size_t n, size_t size) { return calloc(n ? n : 1, size); }

/* qdd at (q, v); nonzero when M or the constraints' matrix is singular. */
static int accel(Work *w, const double *q, const double *v, double *qdd) {
  const struct eom_model *m = w->m;
  if (m->nvc > 0) return m->accel_constrained(0, q, v, w->u, w->p, qdd, w->lambda);
  return m->accel(0, q, v, w->u, w->p, qdd);
}

static double max_abs(int n, const double *x) {
  double s = 0;
  for (int i = 0; i < n; i++) s = fmax(s, fabs(x[i]));
  return isfinite(s) ? s : INFINITY;
}

/* Dense LU with partial pivoting in place; -1 when singular. */
static int lu(int n, double *a, int *piv) {
  for (int k = 0; k < n; k++) {
    int p = k;
    for (int i = k + 1; i < n; i++)
      if (fabs(a[i * n + k]) > fabs(a[p * n + k])) p = i;
    if (!(fabs(a[p * n + k]) > 0)) return -1;
    piv[k] = p;
    if (p != k)
      for (int j = 0; j < n; j++) {
        double t = a[k * n + j];
        a[k * n + j] = a[p * n + j];
        a[p * n + j] = t;
      }
    for (int i = k + 1; i < n; i++) {
      a[i * n + k] /= a[k * n + k];
      for (int j = k + 1; j < n; j++) a[i * n + j] -= a[i * n + k] * a[k * n + j];
    }
  }
  return 0;
}

static void lu_solve(int n, const double *a, const int *piv, double *x) {
  for (int k = 0; k < n; k++) {
    double t = x[k];
    x[k] = x[piv[k]];
    x[piv[k]] = t;
  }
  for (int i = 0; i < n; i++)
    for (int k = 0; k < i; k++) x[i] -= a[i * n + k] * x[k];
  for (int i = n - 1; i >= 0; i--) {
    for (int k = i + 1; k < n; k++) x[i] -= a[i * n + k] * x[k];
    x[i] /= a[i * n + i];
  }
}

/* Step 1: is coordinate i absent from the accelerations and from A, b? */
static int is_absent(Work *w, const double *q0, int i, double *scratch) {
  int nq = w->nq, nvc = w->nvc;
  double *qa = scratch, *va = qa + nq, *f0 = va + nq, *f1 = f0 + nq + nvc * (nq + 1);
  static const double offsets[2] = {0.37, -0.81};
  for (int trial = 0; trial < 2; trial++) {
    for (int j = 0; j < nq; j++) va[j] = 0.3 + 0.1 * j + 0.7 * trial * (j % 2 ? -1 : 1);
    for (int side = 0; side < 2; side++) {
      double *f = side ? f1 : f0;
      memcpy(qa, q0, (size_t)nq * sizeof(double));
      if (side) qa[i] += offsets[trial];
      if (accel(w, qa, va, f) != 0) return 0;
      if (nvc) w->m->velocity_constraint(0, qa, va, w->p, f + nq, f + nq + nvc * nq, w->gam);
    }
    int n = nq + nvc * (nq + 1);
    double scale = 1 + fmax(max_abs(n, f0), max_abs(n, f1));
    for (int k = 0; k < n; k++)
      if (!(fabs(f0[k] - f1[k]) <= 1e-9 * scale)) return 0;
  }
  return 1;
}

/* Step 2: choose the dependent rates; -1 when A loses rank. */
static int choose_dependent(Work *w, SteadyMotion *sm) {
  int nq = w->nq, nvc = w->nvc;
  double *a = zalloc((size_t)nvc * nq, sizeof(double));
  int *row_used = zalloc((size_t)nvc, sizeof(int)), *col_used = zalloc((size_t)nq, sizeof(int));
  int rc = 0;
  if (!a || !row_used || !col_used) rc = -1;
  if (rc == 0) {
    w->m->velocity_constraint(0, sm->q, sm->v, w->p, w->H, w->b, w->gam);
    memcpy(a, w->H, (size_t)nvc * nq * sizeof(double));
  }
  double big = rc == 0 ? max_abs(nvc * nq, a) : 0;
  for (int r = 0; rc == 0 && r < nvc; r++) {
    int br = -1, bc = -1;
    /* classes: absent without a given rate, any without one, then the rest */
    for (int cls = 0; cls < 3 && br < 0; cls++) {
      double best = 1e-9 * big;
      for (int j = 0; j < nq; j++) {
        int role = sm->role[j];
        if (col_used[j] || (cls == 0 && (!(role & STEADY_ABSENT) || (role & STEADY_GIVEN))) ||
            (cls == 1 && (role & STEADY_GIVEN)))
          continue;
        for (int i = 0; i < nvc; i++)
          if (!row_used[i] && fabs(a[i * nq + j]) > best) best = fabs(a[i * nq + j]), br = i, bc = j;
      }
    }
    if (br < 0) {
      rc = -1;
      break;
    }
    row_used[br] = col_used[bc] = 1;
    w->dep[r] = bc;
    sm->role[bc] |= STEADY_DEPENDENT;
    for (int i = 0; i < nvc; i++) {
      if (row_used[i]) continue;
      double f = a[i * nq + bc] / a[br * nq + bc];
      for (int j = 0; j < nq; j++) a[i * nq + j] -= f * a[br * nq + j];
    }
  }
  free(a);
  free(row_used);
  free(col_used);
  return rc;
}

/* The full state for the reduced state z (dependent rates from A q' = b). */
static int full_state(Work *w, const SteadyMotion *sm, const double *z) {
  int nq = w->nq, nvc = w->nvc;
  memcpy(w->q, sm->q, (size_t)nq * sizeof(double));
  memcpy(w->v, sm->v, (size_t)nq * sizeof(double));
  for (int k = 0; k < sm->nk; k++) w->q[sm->kept[k]] = z[k];
  for (int k = 0; k < sm->ni; k++) w->v[sm->independent[k]] = z[sm->nk + k];
  if (nvc == 0) return 0;
  w->m->velocity_constraint(0, w->q, w->v, w->p, w->H, w->b, w->gam);
  double *rhs = w->gam;  /* b - A_I v_I, overwriting gamma (not needed) */
  for (int r = 0; r < nvc; r++) {
    double s = w->b[r];
    for (int j = 0; j < nq; j++)
      if (!(sm->role[j] & STEADY_DEPENDENT)) s -= w->H[r * nq + j] * w->v[j];
    rhs[r] = s;
    for (int c = 0; c < nvc; c++) w->Hd[r * nvc + c] = w->H[r * nq + w->dep[c]];
  }
  if (lu(nvc, w->Hd, w->piv) != 0) return -1;
  lu_solve(nvc, w->Hd, w->piv, rhs);
  for (int c = 0; c < nvc; c++) w->v[w->dep[c]] = rhs[c];
  return 0;
}

/* z' = [v_K; qdd_I] at z. */
static int reduced_rhs(Work *w, const SteadyMotion *sm, const double *z, double *zdot) {
  if (full_state(w, sm, z) != 0 || accel(w, w->q, w->v, w->qdd) != 0) return -1;
  for (int k = 0; k < sm->nk; k++) zdot[k] = w->v[sm->kept[k]];
  for (int k = 0; k < sm->ni; k++) zdot[sm->nk + k] = w->qdd[sm->independent[k]];
  return 0;
}

/* Residual of the steady motion at z: z' and, for a given rate that the
** constraints fix, its miss.  Returns the count, or -1. */
static int residual(Work *w, const SteadyMotion *sm, const double *rate, const double *z,
                    double *r) {
  int nz = sm->nk + sm->ni, n = nz;
  if (reduced_rhs(w, sm, z, r) != 0) return -1;
  for (int j = 0; j < w->nq; j++)
    if ((sm->role[j] & STEADY_GIVEN) && (sm->role[j] & STEADY_DEPENDENT))
      r[n++] = w->v[j] - rate[j];
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
static int solve_steady(Work *w, SteadyMotion *sm, const double *rate, double *z, char *err,
                        size_t errlen) {
  int nz = sm->nk + sm->ni, nmax = nz + w->nq, nu = 0;
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
  for (int k = 0; k < sm->nk; k++) unk[nu++] = k;
  for (int k = 0; k < sm->ni; k++) {
    int role = sm->role[sm->independent[k]];
    if (!(role & (STEADY_GIVEN | STEADY_KEPT))) unk[nu++] = sm->nk + k;
  }
  int nr = residual(w, sm, rate, z, r);
  if (nr < 0) {
    snprintf(err, errlen, "the equations of motion cannot be evaluated at the start "
             "(singular mass matrix or constraints)");
    goto out;
  }
  double vscale = 1 + max_abs(w->nq, w->v), tol = 1e-10 * vscale * vscale;
  double res = max_abs(nr, r), mu = 1e-6;
  for (sm->iterations = 0; res > tol && sm->iterations < 100 && nu > 0; sm->iterations++) {
    for (int a = 0; a < nu; a++) {  /* J by central differences */
      double z0 = z[unk[a]], h = cbrt(DBL_EPSILON) * fmax(1.0, fabs(z0));
      z[unk[a]] = z0 + h;
      int ok = residual(w, sm, rate, z, rt) == nr;
      z[unk[a]] = z0 - h;
      ok = ok && residual(w, sm, rate, z, r2) == nr;
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
      if (residual(w, sm, rate, zt, rt) != nr) continue;
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
static int linearize(Work *w, SteadyMotion *sm, double *z, char *err, size_t errlen) {
  int nz = sm->nk + sm->ni, info = 0, one = 1, lwork = 8 * nz + 8;
  double *f1 = zalloc((size_t)nz, sizeof(double)), *f2 = zalloc((size_t)nz, sizeof(double));
  double *a = zalloc((size_t)nz * nz, sizeof(double)), *work = zalloc((size_t)lwork, sizeof(double));
  int rc = -1;
  if (!f1 || !f2 || !a || !work) {
    snprintf(err, errlen, "out of memory");
    goto out;
  }
  for (int j = 0; j < nz; j++) {
    double z0 = z[j], h = cbrt(DBL_EPSILON) * fmax(1.0, fabs(z0));
    z[j] = z0 + h;
    int bad = reduced_rhs(w, sm, z, f1);
    z[j] = z0 - h;
    bad = bad || reduced_rhs(w, sm, z, f2);
    z[j] = z0;
    if (bad) {
      snprintf(err, errlen, "the equations of motion cannot be evaluated near the steady motion");
      goto out;
    }
    for (int i = 0; i < nz; i++) sm->J[i * nz + j] = (f1[i] - f2[i]) / (2 * h);
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
  free(f1);
  free(f2);
  free(a);
  free(work);
  return rc;
}

/* A given coordinate must really be cyclic: its position must not change z'. */
static int check_given_cyclic(Work *w, SteadyMotion *sm, const double *z, char *err,
                              size_t errlen) {
  int nz = sm->nk + sm->ni;
  double *f0 = zalloc((size_t)nz, sizeof(double)), *f1 = zalloc((size_t)nz, sizeof(double));
  int rc = 0;
  if (!f0 || !f1 || reduced_rhs(w, sm, z, f0) != 0) rc = -1;
  for (int i = 0; rc == 0 && i < w->nq; i++) {
    if (!(sm->role[i] & STEADY_GIVEN)) continue;
    double keep = sm->q[i];
    sm->q[i] = keep + 0.37;
    int bad = reduced_rhs(w, sm, z, f1) != 0;
    sm->q[i] = keep;
    double scale = 1 + max_abs(nz, f0);
    for (int k = 0; !bad && k < nz; k++) bad = !(fabs(f1[k] - f0[k]) <= 1e-8 * scale);
    if (bad) {
      snprintf(err, errlen, "'%s' enters the dynamics (its position changes the accelerations), "
               "so it cannot turn at a constant rate: a steady motion needs coordinates whose "
               "positions do not matter", w->m->coord_names[i]);
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
  free(sm->kept);
  free(sm->independent);
  free(sm->role);
  free(sm->q);
  free(sm->v);
  free(sm->J);
  free(sm->re);
  free(sm->im);
  memset(sm, 0, sizeof *sm);
}

/* Steps 1-3: roles, the reduced state's layout. */
static int classify(Work *w, SteadyMotion *sm, const int *given, char *err, size_t errlen) {
  int nq = w->nq;
  double *scratch = zalloc(4 * (size_t)nq + 2 * (size_t)w->nvc * (nq + 1), sizeof(double));
  if (!scratch) {
    snprintf(err, errlen, "out of memory");
    return -1;
  }
  for (int i = 0; i < nq; i++) {
    sm->role[i] = given[i] ? STEADY_GIVEN : 0;
    if (is_absent(w, sm->q, i, scratch)) sm->role[i] |= STEADY_ABSENT;
  }
  free(scratch);
  if (w->nvc > 0 && choose_dependent(w, sm) != 0) {
    snprintf(err, errlen, "the velocity constraints are dependent at the start (A loses rank)");
    return -1;
  }
  sm->nk = sm->ni = 0;
  for (int i = 0; i < nq; i++) {
    if (!(sm->role[i] & (STEADY_ABSENT | STEADY_GIVEN))) {
      sm->role[i] |= STEADY_KEPT;
      sm->kept[sm->nk++] = i;
    }
    if (!(sm->role[i] & STEADY_DEPENDENT)) sm->independent[sm->ni++] = i;
  }
  return 0;
}

int steady_analyze(const struct eom_model *m, const double *p, const double *u, const double *q,
                   const double *v, const int *given, const double *rate, int warm,
                   SteadyMotion *sm, char *err, size_t errlen) {
  assert(m && q && v && given && rate && sm);
  int nq = m->nq, nvc = m->nvc, rc = -1;
  err[0] = '\0';
  if (m->nc > 0) {
    snprintf(err, errlen, "steady motions of models with position constraints are not "
             "supported (write them with fewer coordinates, or as velocity constraints)");
    return -1;
  }
  if ((nvc > 0 && (!m->velocity_constraint || !m->accel_constrained)) || !m->accel) {
    snprintf(err, errlen, "the model lacks its constraint functions");
    return -1;
  }
  if (!warm || sm->nq != nq) {
    steady_free(sm);
    sm->nq = nq;
    sm->kept = zalloc((size_t)nq, sizeof(int));
    sm->independent = zalloc((size_t)nq, sizeof(int));
    sm->role = zalloc((size_t)nq, sizeof(int));
    sm->q = zalloc((size_t)nq, sizeof(double));
    sm->v = zalloc((size_t)nq, sizeof(double));
    sm->J = zalloc((size_t)nq * nq * 4, sizeof(double));
    sm->re = zalloc(2 * (size_t)nq, sizeof(double));
    sm->im = zalloc(2 * (size_t)nq, sizeof(double));
    if (!sm->kept || !sm->independent || !sm->role || !sm->q || !sm->v || !sm->J || !sm->re ||
        !sm->im) {
      snprintf(err, errlen, "out of memory");
      return -1;
    }
    memcpy(sm->q, q, (size_t)nq * sizeof(double));
    memcpy(sm->v, v, (size_t)nq * sizeof(double));
  }
  for (int i = 0; i < nq; i++)
    if (given[i]) sm->v[i] = rate[i];
  Work w;
  memset(&w, 0, sizeof w);
  w.m = m;
  w.p = p ? p : m->param_defaults;
  w.nq = nq;
  w.nvc = nvc;
  size_t nl = (size_t)m->nc + (size_t)nvc + 1;
  double *buf = zalloc((size_t)nvc * nq + 2 * (size_t)nvc + (size_t)nvc * nvc + 3 * (size_t)nq +
                       nl + (size_t)m->nu + 1, sizeof(double));
  w.piv = zalloc((size_t)nvc + 1, sizeof(int));
  w.dep = zalloc((size_t)nvc + 1, sizeof(int));
  double *z = zalloc(2 * (size_t)nq, sizeof(double));
  if (!buf || !w.piv || !w.dep || !z) {
    snprintf(err, errlen, "out of memory");
    goto out;
  }
  w.H = buf;
  w.b = w.H + (size_t)nvc * nq;
  w.gam = w.b + nvc;
  w.Hd = w.gam + nvc;
  w.q = w.Hd + (size_t)nvc * nvc;
  w.v = w.q + nq;
  w.qdd = w.v + nq;
  w.lambda = w.qdd + nq;
  w.u = u ? u : w.lambda + nl;  /* zeros */
  if (classify(&w, sm, given, err, errlen) != 0) goto out;
  /* z from the start; kept coordinates at rest, given rates held */
  for (int k = 0; k < sm->nk; k++) z[k] = sm->q[sm->kept[k]];
  for (int k = 0; k < sm->ni; k++) {
    int i = sm->independent[k];
    z[sm->nk + k] = (sm->role[i] & STEADY_KEPT) ? 0 : sm->v[i];
  }
  /* a given coordinate must be cyclic: tested at the start, where a wrong
  ** choice is plainer than a steady motion that cannot be found */
  if (check_given_cyclic(&w, sm, z, err, errlen) != 0) goto out;
  if (solve_steady(&w, sm, rate, z, err, errlen) != 0) goto out;
  if (full_state(&w, sm, z) != 0) {
    snprintf(err, errlen, "the velocity constraints are dependent at the steady motion");
    goto out;
  }
  memcpy(sm->q, w.q, (size_t)nq * sizeof(double));
  memcpy(sm->v, w.v, (size_t)nq * sizeof(double));
  if (linearize(&w, sm, z, err, errlen) != 0) goto out;
  rc = 0;
out:
  free(buf);
  free(w.piv);
  free(w.dep);
  free(z);
  return rc;
}
