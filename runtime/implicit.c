/*
** implicit.c — the two implicit one-step methods, both solved by simplified
** Newton iterations with the model's jacobian:
**
**  midpoint  the implicit midpoint rule, x1 = x0 + h f(t + h/2, (x0 + x1)/2):
**            symplectic and symmetric, so for conservative models the
**            energy error stays bounded over long runs, and quadratic
**            invariants (linear models) are kept exactly (Hairer, Lubich &
**            Wanner, Geometric Numerical Integration, 2nd ed., 2006, §VI.4,
**            §IV.2; sections from memory).  Always fixed steps: a step size
**            that follows the solution breaks the symplectic structure and
**            with it the bounded energy error (ibid. §VIII.1, from memory).
**  radau5    Radau IIA with three stages, order 5, stiffly accurate and
**            L-stable, for stiff models (Hairer & Wanner, Solving Ordinary
**            Differential Equations II, 2nd ed., 1996, §IV.5, Table 5.6; the
**            table number from memory, the coefficients checked by the order
**            test).  radau5_run controls the step size with the embedded
**            error estimate of §IV.8 and gives samples from the collocation
**            polynomial; radau5_step is one fixed step (fixed_step = 1).
**
** The Newton iteration stops when the update is a thousandth of the
** tolerance; when it fails to converge the step returns EOM_ENEWTON and the
** driver retries with half the step.
*/
#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
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


/* ------------------------------------------------------------- Radau IIA */

/* Radau IIA, s = 3 (Hairer & Wanner II, Table IV.5.6). */
#define S6 2.449489742783178098197284074705891391965947480656670128432692567
static const double RC[3] = {(4.0 - S6) / 10, (4.0 + S6) / 10, 1.0};
static const double RA[3][3] = {
    {(88.0 - 7 * S6) / 360, (296.0 - 169 * S6) / 1800, (-2.0 + 3 * S6) / 225},
    {(296.0 + 169 * S6) / 1800, (88.0 + 7 * S6) / 360, (-2.0 - 3 * S6) / 225},
    {(16.0 - S6) / 36, (16.0 + S6) / 36, 1.0 / 9},
};

/* The embedded error estimate (Hairer & Wanner II, §IV.8, the formulas for
** err and its improved form; from memory): gamma0 = (6 + 81^(1/3) -
** 9^(1/3)) / 30 is the real eigenvalue of A (radau5_run asserts it), and
**   err = (I - h gamma0 J)^-1 (gamma0 h f(t0, x0) + e1 z1 + e2 z2 + e3 z3)
** with e = gamma0 (-(13 + 7 sqrt 6), -13 + 7 sqrt 6, -1) / 3: the
** difference between the solution and an embedded formula of order 3,
** filtered through the Newton-like matrix so that stiff components do not
** inflate it.  The weights vanish on polynomials of degree <= 2 (checked by
** hand: sum e_i c_i^k = -gamma0 [k = 0], 0 for k = 1, 2). */
#define G0 0.2748888295956773677478286035994147792947
static const double RE[3] = {-G0 * (13.0 + 7 * S6) / 3, G0 * (-13.0 + 7 * S6) / 3, -G0 / 3};

size_t radau5_work(int n) {
  size_t nn = (size_t)n;
  return 9 * nn + 2 * nn + nn * nn + 9 * nn * nn;
}

/* LU of the Newton matrix I - h (A ⊗ J) into mat (3n x 3n, stage-major
** blocks), pivots in c->piv.  -1 when singular. */
static int radau5_newton_matrix(SimContext *c, double h, const double *jac, double *mat) {
  int n = c->n, N = 3 * n;
  for (int bi = 0; bi < 3; bi++)
    for (int bj = 0; bj < 3; bj++)
      for (int a = 0; a < n; a++)
        for (int b = 0; b < n; b++) {
          double v = -h * RA[bi][bj] * jac[a * n + b];
          if (bi == bj && a == b) v += 1.0;
          mat[(size_t)(bi * n + a) * N + (size_t)(bj * n + b)] = v;
        }
  return dense_lu(N, mat, c->piv);
}

/* Simplified Newton iterations for the stage offsets z (3n; the starting
** guess comes in z) of a step of h from (t, x), with the factored matrix
** from radau5_newton_matrix.  sk: error weights per component.  f gets
** the stage slopes, *iters the iterations used.  EOM_OK, EOM_ENEWTON
** (diverging, too slow or not finite), or the status of a failed model
** evaluation. */
static int radau5_newton(SimContext *c, double t, double h, const double *x, const double *mat,
                         const double *sk, double *z, double *dz, double *f, double *y,
                         int *iters) {
  int n = c->n, N = 3 * n, st;
  double prev = INFINITY;
  *iters = 0;
  for (int it = 0; it < NEWTON_MAX_ITER; it++) {
    *iters = it + 1;
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
    if (norm <= NEWTON_TARGET || at_rounding_level(N, n, dz, z, x)) return EOM_OK;
    if (it >= 2 && norm > prev) return EOM_ENEWTON;
    prev = norm;
  }
  return EOM_ENEWTON;
}

int radau5_step(SimContext *c, double t, double h, double *x, double *work) {
  int n = c->n, N = 3 * n, st, iters;
  double *z = work, *dz = z + N, *f = dz + N, *y = f + N, *sk = y + n;
  double *jac = sk + n, *mat = jac + (size_t)n * n;

  if ((st = sim_jacobian(c, t, x, jac))) return st;
  if (radau5_newton_matrix(c, h, jac, mat) != 0) return EOM_ENEWTON;
  for (int i = 0; i < n; i++) sk[i] = c->atol + c->rtol * fabs(x[i]);
  memset(z, 0, (size_t)N * sizeof(double));
  if ((st = radau5_newton(c, t, h, x, mat, sk, z, dz, f, y, &iters))) return st;
  /* Stiffly accurate: the new point is the last stage. */
  for (int i = 0; i < n; i++) x[i] += z[2 * n + i];
  return EOM_OK;
}

/* The collocation polynomial of an accepted step from (t0, x0) with h:
** u(t0 + theta h) = x0 + p(theta), p of degree 3 through p(0) = 0 and
** p(c_j) = z_j, in Newton's divided-difference form
**   p(theta) = theta (a1 + (theta - c1) (a2 + (theta - c2) a3)).
** It is the method's natural continuous extension (Hairer & Wanner II,
** §IV.5 and §IV.8, from memory): order 3 between the points, exact at
** them; beyond the step it extrapolates the next step's Newton start. */
typedef struct Collocation {
  double t0, h;
  double *x0, *a1, *a2, *a3;  /* n each */
} Collocation;

static void collocation_fit(Collocation *p, int n, double t0, double h, const double *x0,
                            const double *z) {
  const double c1 = RC[0], c2 = RC[1];
  p->t0 = t0;
  p->h = h;
  for (int i = 0; i < n; i++) {
    double z1 = z[i], z2 = z[n + i], z3 = z[2 * n + i];
    double d01 = z1 / c1, d12 = (z2 - z1) / (c2 - c1), d23 = (z3 - z2) / (1 - c2);
    double d012 = (d12 - d01) / c2, d123 = (d23 - d12) / (1 - c1);
    p->x0[i] = x0[i];
    p->a1[i] = d01;
    p->a2[i] = d012;
    p->a3[i] = d123 - d012; /* divided by theta3 - theta0 = 1 */
  }
}

static void collocation_eval(const Collocation *p, int n, double t, double *out) {
  double th = (t - p->t0) / p->h;
  for (int i = 0; i < n; i++)
    out[i] = p->x0[i] + th * (p->a1[i] + (th - RC[0]) * (p->a2[i] + (th - RC[1]) * p->a3[i]));
}

typedef struct RadauDense {
  const Collocation *poly;
  int n;
} RadauDense;

/* The collocation polynomial at time t, for the event search (events.c). */
static void radau5_dense(const void *ctx, double t, double *x) {
  const RadauDense *d = ctx;
  collocation_eval(d->poly, d->n, t, x);
}

/* err: the scaled norm of the embedded estimate (see RE above) of the step
** whose stages z have just been solved.  f0 = f(t, x); e is scratch and
** keeps the estimate; emat the factored I - h gamma0 J (pivots epiv).
** With `improve` (first step, or after a rejection) an estimate above 1
** is recomputed with f at x + err, which damps the stiff components the
** first form overstates (ibid.). */
static int radau5_error(SimContext *c, double t, double h, const double *x, const double *f0,
                        const double *z, const double *emat, const int *epiv, int improve,
                        double rtol, double atol, double *e, double *y, double *fy,
                        double *err) {
  int n = c->n, st;
  double *x1 = y;
  for (int i = 0; i < n; i++) x1[i] = x[i] + z[2 * n + i];
  for (int i = 0; i < n; i++)
    e[i] = G0 * h * f0[i] + RE[0] * z[i] + RE[1] * z[n + i] + RE[2] * z[2 * n + i];
  dense_lu_solve(n, emat, epiv, e);
  *err = scaled_norm(n, e, x, x1, rtol, atol);
  if (*err < 1 || !improve || !isfinite(*err)) return EOM_OK;
  for (int i = 0; i < n; i++) y[i] = x[i] + e[i];
  if ((st = sim_rhs(c, t, y, fy))) return st;
  for (int i = 0; i < n; i++) x1[i] = x[i] + z[2 * n + i];
  for (int i = 0; i < n; i++)
    e[i] = G0 * h * fy[i] + RE[0] * z[i] + RE[1] * z[n + i] + RE[2] * z[2 * n + i];
  dense_lu_solve(n, emat, epiv, e);
  *err = scaled_norm(n, e, x, x1, rtol, atol);
  return EOM_OK;
}

/* A first trial step when the user gives none: 1% of the time the state
** takes to change by its own size at the initial slope (common practice);
** the controller below corrects it within a few steps either way. */
static double radau5_first_step(int n, const double *x, const double *f0, double rtol,
                                double atol, double span) {
  double d0 = scaled_norm(n, x, x, NULL, rtol, atol);
  double d1 = scaled_norm(n, f0, x, NULL, rtol, atol);
  double h = (d0 < 1e-5 || d1 < 1e-5) ? 1e-6 * span : 0.01 * d0 / d1;
  return fmin(h, span);
}

/* Adaptive Radau IIA (Hairer & Wanner II, §IV.8; section from memory).
**
** Error estimate: radau5_error above, scaled with the tolerances
** rtol' = rtol^(4/5), atol' = rtol' atol / rtol.  The estimate is that of
** an order-3 formula while the solution has order 5: held to rtol itself
** the steps would be needlessly short.  With h ~ rtol'^(1/4) the global
** error goes as h^5 ~ rtol, so the error is proportional to the tolerance
** (our choice; about 4 rtol on a smooth oscillator, measured).
**
** Step size: the standard controller for an order-3 estimate,
**   quot = err^(1/4) / fac,  h_new = h / quot,  quot clamped to [1/8, 5],
** with the safety factor fac = 0.9, lowered when Newton needed many
** iterations; after the first accepted step the predictive controller of
** Gustafsson (ibid.) also proposes
**   quot' = (h_acc / h) (err^2 / err_acc)^(1/4) / 0.9,
** h_acc and err_acc being the previous accepted step and its error, and the
** smaller step of the two is taken.  A rejected first step shrinks tenfold;
** a step after a rejection does not grow.  A Newton iteration that fails
** halves the step (after checking the model's jacobian once against
** differences, as the fixed-step driver does).
**
** Newton starts from the previous step's collocation polynomial
** extrapolated to the new stage times (zero on the first step), and stops
** as in the fixed-step method, at a thousandth of (rtol, atol).  The
** jacobian is evaluated once per accepted step and kept over rejections,
** since the point (t, x) has not moved. */
int radau5_run(SimContext *c, const struct eom_sim_options *o, Sampler *smp, double *x) {
  const double safe = 0.9, quot_min = 1.0 / 8, quot_max = 5; /* grow <= 8x, shrink <= 5x */
  int n = c->n, N = 3 * n, st = EOM_OK;
  double t = o->t0, t_end = o->t_end, span = t_end - o->t0;
  double rtol_e = pow(c->rtol, 0.8), atol_e = rtol_e * (c->atol / c->rtol);
  struct eom_report *rep = c->rep;
  size_t nn = (size_t)n;
  double *mem = malloc((3 * (size_t)N + 14 * nn + 11 * nn * nn) * sizeof(double));
  int *epiv = malloc(nn * sizeof(int));
  char what[128];

  assert(c->rtol > 0 && c->atol > 0);
  /* gamma0 is the real eigenvalue of A: det(A - gamma0 I) = 0. */
  assert(fabs((RA[0][0] - G0) * ((RA[1][1] - G0) * (RA[2][2] - G0) - RA[1][2] * RA[2][1]) -
              RA[0][1] * (RA[1][0] * (RA[2][2] - G0) - RA[1][2] * RA[2][0]) +
              RA[0][2] * (RA[1][0] * RA[2][1] - (RA[1][1] - G0) * RA[2][0])) < 1e-15);
  if (!mem || !epiv) {
    free(mem);
    free(epiv);
    return EOM_ENOMEM;
  }
  double *z = mem, *dz = z + N, *f = dz + N, *y = f + N, *fy = y + n, *sk = fy + n;
  double *f0 = sk + n, *e = f0 + n, *sample = e + n;
  Collocation poly = {0, 0, sample + n, sample + 2 * n, sample + 3 * n, sample + 4 * n};
  double *jac = poly.a3 + n, *mat = jac + nn * nn, *emat = mat + 9 * nn * nn;
  double *tr = emat + nn * nn;  /* the trial's polynomial, for the switch search */
  Collocation trial = {0, 0, tr, tr + n, tr + 2 * n, tr + 3 * n};
  int landing = 0;  /* this step was shortened to end at a switch */
  EventWatch ev = {0};
  if ((st = events_init(c, o, &ev, t, x))) goto done;

  if ((st = sim_rhs(c, t, x, f0))) goto done;
  if (!all_finite(n, f0)) {
    st = sim_fail(c, EOM_ENONFINITE, t, x, "the acceleration is not finite");
    goto done;
  }
  double h = o->step > 0 ? fmin(o->step, span) : radau5_first_step(n, x, f0, rtol_e, atol_e, span);
  double h_acc = 0, err_acc = 1;
  long accepted = 0;
  int have_poly = 0, jac_valid = 0, reject = 0, newton_failed = 0;
  /* As in dopri.c: a trial point where M is not positive definite rejects
  ** the step; only when the step cannot shrink further is it the failure. */
  int mass_pending = 0;
  double mass_t = t;
  char mass_message[sizeof rep->message];
  for (;;) {
    double hmin = adaptive_h_min(o, t, t_end);
    if (o->max_steps > 0 && rep->steps >= o->max_steps) {
      snprintf(what, sizeof what, "more than %ld steps", o->max_steps);
      st = sim_fail(c, EOM_EMAXSTEPS, t, x, what);
      goto done;
    }
    if (h < hmin || !(h > 0)) {
      if (mass_pending) {
        rep->status = EOM_EMASS;
        rep->t = mass_t;
        memcpy(rep->message, mass_message, sizeof mass_message);
        st = EOM_EMASS;
      } else if (newton_failed) {
        snprintf(what, sizeof what,
                 "the radau5 Newton iteration does not converge even with h = %.3g", 2 * h);
        st = sim_fail(c, EOM_ENEWTON, t, x, what);
      } else {
        snprintf(what, sizeof what, "step size underflow (h = %.3g)", h);
        st = sim_fail(c, EOM_ESTEP, t, x, what);
      }
      goto done;
    }
    int last = stretch_to_end(t, t_end, &h);
    if (!jac_valid) {
      if ((st = sim_jacobian(c, t, x, jac))) goto done;
      jac_valid = 1;
    }
    for (int i = 0; i < n; i++) sk[i] = c->atol + c->rtol * fabs(x[i]);
    int singular = radau5_newton_matrix(c, h, jac, mat) != 0;
    if (!singular) {
      for (size_t i = 0; i < nn * nn; i++) emat[i] = -h * G0 * jac[i];
      for (int i = 0; i < n; i++) emat[(size_t)i * nn + (size_t)i] += 1.0;
      singular = dense_lu(n, emat, epiv) != 0;
    }
    int iters = NEWTON_MAX_ITER;
    double err = INFINITY;
    if (singular) {
      st = EOM_ENEWTON;
    } else {
      if (have_poly) {
        for (int j = 0; j < 3; j++) {
          collocation_eval(&poly, n, t + RC[j] * h, y);
          for (int i = 0; i < n; i++) z[j * n + i] = y[i] - x[i];
        }
      } else {
        memset(z, 0, (size_t)N * sizeof(double));
      }
      st = radau5_newton(c, t, h, x, mat, sk, z, dz, f, y, &iters);
      if (st == EOM_OK)
        st = radau5_error(c, t, h, x, f0, z, emat, epiv, accepted == 0 || reject, rtol_e,
                          atol_e, e, y, fy, &err);
    }
    if (st == EOM_EMASS) {
      mass_pending = 1;
      mass_t = rep->t;
      memcpy(mass_message, rep->message, sizeof mass_message);
      rep->status = EOM_OK;
      rep->message[0] = '\0';
      h *= 0.5;
      rep->rejected++;
      reject = 1;
      continue;
    }
    if (st == EOM_ENEWTON) {
      /* A wrong generated jacobian also stalls Newton: check it first. */
      if (sim_distrust_jacobian(c, t, x)) {
        jac_valid = 0;
        continue;
      }
      /* Newton cannot follow a rate across a dry friction's jump: once
      ** the rate is as good as at zero, it sticks or turns there. */
      if (events_reach(c, &ev, &t, h, x)) {
        if ((st = sim_rhs(c, t, x, f0))) goto done;
        jac_valid = have_poly = 0;
        accepted = 0;
        continue;
      }
      newton_failed = 1;
      h *= 0.5;
      rep->rejected++;
      reject = 1;
      continue;
    }
    if (st) goto done;
    newton_failed = 0;
    if (!isfinite(err) || !all_finite(N, z)) {
      h *= 0.1; /* overflow in a trial step: shrink hard */
      rep->rejected++;
      reject = 1;
      continue;
    }
    /* A trial step across a switch (as in dopri.c): its error estimate
    ** and Newton assume a smooth right-hand side, so shorten it once to
    ** end just past the switch, located on the trial's own collocation
    ** polynomial, and take it again from the same point. */
    if (ev.ns && !landing) {
      double t_sw;
      collocation_fit(&trial, n, t, h, x, z);
      for (int i = 0; i < n; i++) y[i] = x[i] + z[2 * n + i];
      RadauDense td = {&trial, n};
      if (events_crossing(c, &ev, t, t + h, y, radau5_dense, &td, events_tol(c->rtol, t, h),
                          &t_sw) &&
          t_sw < t + h && t_sw - t > 0.01 * h) {
        h = t_sw - t;
        landing = 1;
        continue;
      }
    }
    err = fmax(err, 1e-10);
    double fac = fmin(safe, safe * (1 + 2 * NEWTON_MAX_ITER) / (iters + 2 * NEWTON_MAX_ITER));
    double quot = fmax(quot_min, fmin(quot_max, pow(err, 0.25) / fac));
    double hnew = h / quot;
    if (err >= 1) {
      rep->rejected++;
      h = accepted == 0 ? 0.1 * h : hnew;
      reject = 1;
      continue;
    }
    if (accepted > 0) {
      double pred = h_acc / h * pow(err * err / err_acc, 0.25) / safe;
      quot = fmax(quot, fmax(quot_min, fmin(quot_max, pred)));
      hnew = h / quot;
    }
    h_acc = h;
    err_acc = fmax(1e-2, err);

    /* Accept: samples inside the step from the collocation polynomial. */
    double t_new = last ? t_end : t + h;
    collocation_fit(&poly, n, t, h, x, z);
    have_poly = 1;
    for (int i = 0; i < n; i++) x[i] += z[2 * n + i];
    /* a switch crossed inside the step: end it there and restart */
    RadauDense rd = {&poly, n};
    int event = events_after_step(c, &ev, t, t_new, x, radau5_dense, &rd,
                                  events_tol(c->rtol, t, h), &t_new);
    if (event < 0) {
      st = -event;
      goto done;
    }
    if (event) memcpy(x, ev.x_ev, nn * sizeof(double));
    /* a rate that reached zero may stick, a stuck one slip */
    if (events_stick(c, &ev, t_new, x)) event = 1;
    if (event) {
      /* samples up to the event come from this step's polynomial; then the
      ** method starts over on the new branch (no extrapolated guess) */
      last = t_new >= t_end;
      have_poly = 0;
      accepted = 0;
    }
    for (double ts = sampler_next(smp); ts <= t_new; ts = sampler_next(smp)) {
      if (ts >= t_new)
        memcpy(sample, x, nn * sizeof(double));
      else
        collocation_eval(&poly, n, ts, sample);
      if ((st = sampler_emit(c, smp, ts, sample))) goto done;
    }
    t = t_new;
    landing = 0;
    rep->steps++;
    accepted++;
    c->t_good = t;
    if (c->cs_project &&
        (st = stabilize_project(c, t, x, 10, "projecting onto the constraints")))
      goto done;
    sim_normalize(c, x);
    mass_pending = 0;
    if (smp->every_step && (st = sampler_emit(c, smp, t, x))) goto done;
    if (last) break;
    if ((st = sim_rhs(c, t, x, f0))) goto done;
    if (!all_finite(n, f0)) {
      st = sim_fail(c, EOM_ENONFINITE, t, x, "the acceleration is not finite");
      goto done;
    }
    if (reject) hnew = fmin(hnew, h);
    reject = 0;
    jac_valid = 0;
    h = fmin(hnew, span);
  }
done:
  events_free(&ev);
  free(mem);
  free(epiv);
  return st;
}
