/*
** test_runtime.c — libeomrt and the modal analysis on hand-written models
** (tests/handmodels.c) whose motion is known in closed form or from
** handbook formulas.  Each check names its source.
*/
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "eom/runtime.h"
#include "cli/modal.h"
#include "handmodels.h"
#include "../runtime/integrators.h" /* the rank-revealing constrained solve */

#ifdef HAVE_GSL
#include <gsl/gsl_sf_ellint.h>
#endif

static const double PI = 3.141592653589793238462643383279502884;

/* Run m from x over [0, t_end] with the given method; returns the status. */
static int run(const struct eom_model *m, const double *p, const eom_inputs *in, double *x,
               const char *method, double t_end, double step, double rtol, double atol,
               eom_sample_fn fn, void *ctx, struct eom_report *rep) {
  struct eom_sim_options o;
  eom_sim_options_init(&o);
  o.method = method;
  o.t_end = t_end;
  o.step = step;
  if (rtol > 0) o.rtol = rtol;
  if (atol > 0) o.atol = atol;
  return eom_simulate(m, p, in, x, &o, fn, ctx, rep);
}

/* ------------------------------------------------------------- pendulum */

/* Large-amplitude period T = 4 sqrt(L/g) K(sin(theta0/2)) (Abramowitz &
** Stegun, Handbook of Mathematical Functions, 1964, ch. 17 for K; the
** pendulum formula is the standard exact solution), K from GSL's
** gsl_sf_ellint_Kcomp (GSL uses the modulus k, not the parameter m = k^2).
** Integrate exactly one reference period from rest at theta0: the pendulum
** must be back at rest; the residual rate gives the period error as one
** Newton step, dT = -theta'(T) / theta''(T). */
#ifdef HAVE_GSL
START_TEST(pendulum_period_large_amplitude) {
  const double amplitudes_deg[] = {10, 90, 170};
  const double p[] = {1.0, 1.3, 9.81}; /* m, L, g */
  double theta0 = amplitudes_deg[_i] * PI / 180;
  double T_ref = 4 * sqrt(p[1] / p[2]) * gsl_sf_ellint_Kcomp(sin(theta0 / 2), GSL_PREC_DOUBLE);
  double x[2] = {theta0, 0};
  struct eom_report rep;
  int st = run(&tm_pendulum, p, NULL, x, "dopri", T_ref, 0, 1e-13, 1e-14, NULL, NULL, &rep);
  ck_assert_msg(st == EOM_OK, "%s", rep.message);
  double accel = -p[2] / p[1] * sin(x[0]);
  double dT = -x[1] / accel;
  ck_assert_msg(fabs(dT) / T_ref < 1e-7, "amplitude %g deg: period error %g (T_ref %.12g)",
                amplitudes_deg[_i], fabs(dT) / T_ref, T_ref);
  ck_assert_msg(fabs(x[0] - theta0) < 1e-7, "theta(T) = %.12g, theta0 %.12g", x[0], theta0);
  /* The small-angle period 2 pi sqrt(L/g) is off by 0.19% at 10 degrees
  ** (A&S 17.3.11 series, first term theta0^2/16): the check can tell. */
  ck_assert(fabs(T_ref - 2 * PI * sqrt(p[1] / p[2])) / T_ref > 1e-3);
}
END_TEST
#endif

/* Dense output between steps: the undamped oscillator x = cos(w t)
** (closed form, common practice); samples every 0.05 s fall between the
** adaptive steps. */
typedef struct Track {
  int n;
  double max_err, last_t;
  double w;
} Track;

static int track_cos(void *ctx, double t, const double *x, const double *u) {
  Track *k = ctx;
  (void)u;
  k->n++;
  k->last_t = t;
  k->max_err = fmax(k->max_err, fabs(x[0] - cos(k->w * t)));
  k->max_err = fmax(k->max_err, fabs(x[1] + k->w * sin(k->w * t)));
  return 0;
}

START_TEST(dopri_dense_output) {
  const double p[] = {1.0, 4.0, 0.0}; /* m, k, c: w = 2 */
  double x[2] = {1, 0};
  Track k = {0, 0, 0, 2.0};
  struct eom_sim_options o;
  struct eom_report rep;
  eom_sim_options_init(&o);
  o.t_end = 10;
  o.sample_dt = 0.01;
  o.rtol = 1e-7;
  o.atol = 1e-9;
  ck_assert_int_eq(eom_simulate(&tm_oscillator, p, NULL, x, &o, track_cos, &k, &rep), EOM_OK);
  ck_assert_int_eq(k.n, 1001);
  ck_assert_double_eq(k.last_t, 10.0);
  ck_assert_msg(k.max_err < 2e-6, "dense output error %g", k.max_err);
  /* Far fewer steps than samples: the samples really come from interpolation. */
  ck_assert_msg(rep.steps < 300, "%ld steps", rep.steps);
}
END_TEST

/* ------------------------------------------------------------- Kepler */

/* Kepler's third law, period 2 pi sqrt(a^3 / mu), and the conservation of
** angular momentum m r^2 phi' (Goldstein, Poole & Safko, Classical
** Mechanics, 3rd ed., 2002, §3.7-3.8, sections from memory).  Start at periapsis r = a(1 - e)
** with speed sqrt(mu (1 + e) / (a (1 - e))) (vis-viva). */
typedef struct Ang {
  double h0, max_dev;
} Ang;

static int track_angular(void *ctx, double t, const double *x, const double *u) {
  Ang *a = ctx;
  (void)t, (void)u;
  double h = x[0] * x[0] * x[3];
  if (a->h0 == 0) a->h0 = h;
  a->max_dev = fmax(a->max_dev, fabs(h - a->h0) / fabs(a->h0));
  return 0;
}

START_TEST(kepler_period_and_angular_momentum) {
  const double p[] = {1.0, 3.0}; /* m, mu */
  double a = 2.0, e = 0.6, mu = p[1];
  double rp = a * (1 - e), vp = sqrt(mu * (1 + e) / (a * (1 - e)));
  double T = 2 * PI * sqrt(a * a * a / mu);
  double x[4] = {rp, 0, 0, vp / rp};
  Ang ang = {0, 0};
  struct eom_sim_options o;
  struct eom_report rep;
  eom_sim_options_init(&o);
  o.t_end = T;
  o.sample_dt = T / 100;
  o.rtol = 1e-12;
  o.atol = 1e-14;
  ck_assert_int_eq(eom_simulate(&tm_kepler, p, NULL, x, &o, track_angular, &ang, &rep), EOM_OK);
  ck_assert_msg(fabs(x[0] - rp) < 1e-8 * a, "r(T) = %.12g, periapsis %.12g", x[0], rp);
  ck_assert_msg(fabs(x[1] - 2 * PI) < 1e-8, "phi(T) - 2 pi = %g", x[1] - 2 * PI);
  ck_assert_msg(fabs(x[2]) < 1e-7, "r'(T) = %g", x[2]);
  ck_assert_msg(ang.max_dev < 1e-9, "angular momentum drift %g", ang.max_dev);
}
END_TEST

/* A constrained model is integrated through accel_constrained(): the
** Cartesian pendulum must follow the same angle as the pendulum in its
** angle coordinate, and stay on its circle (index-1 form, constraint drift
** only at the level of the integration error). */
START_TEST(constrained_model_follows_angle_model) {
  static const char *const methods[] = {"dopri", "radau5", "midpoint", "rk4"};
  static const double tols[] = {1e-8, 1e-6, 1e-4, 1e-6};
  const double p[] = {1.0, 1.5, 9.81}, theta0 = 1.0;
  double ref[2] = {theta0, 0};
  struct eom_report rep;
  ck_assert_int_eq(run(&tm_pendulum, p, NULL, ref, "dopri", 3, 0, 1e-12, 1e-13, NULL, NULL, &rep),
                   EOM_OK);
  for (int k = 0; k < 4; k++) {
    double x[4] = {p[1] * sin(theta0), -p[1] * cos(theta0), 0, 0};
    int st = run(&tm_cartesian_pendulum, p, NULL, x, methods[k], 3, 0.001, 1e-11, 1e-12, NULL,
                 NULL, &rep);
    ck_assert_msg(st == EOM_OK, "%s: %s", methods[k], rep.message);
    double theta = atan2(x[0], -x[1]);
    ck_assert_msg(fabs(theta - ref[0]) < tols[k], "%s: theta %.12g, want %.12g", methods[k], theta,
                  ref[0]);
    ck_assert_msg(fabs(hypot(x[0], x[1]) - p[1]) < tols[k], "%s: off the circle by %g",
                  methods[k], hypot(x[0], x[1]) - p[1]);
  }
}
END_TEST

/* Constraint upkeep (runtime/stabilize.c) on the Cartesian pendulum. */

typedef struct FirstSample {
  int n;
  double x[4];
} FirstSample;

static int keep_first(void *ctx, double t, const double *x, const double *u) {
  FirstSample *f = ctx;
  (void)t, (void)u;
  if (f->n++ == 0) memcpy(f->x, x, sizeof f->x);
  return 0;
}

/* A start off the circle is moved onto it (and its rate onto G q' = 0)
** before the first sample, along the gradient (minimum norm); every
** method's end state is on the circle to the projection tolerance. */
START_TEST(constraint_initial_fix_and_projection) {
  const double p[] = {1.0, 1.5, 9.81};
  static const char *const methods[] = {"dopri", "radau5", "midpoint", "rk4"};
  struct eom_sim_options o;
  eom_sim_options_init(&o);
  ck_assert(o.baumgarte_alpha == 10 && o.baumgarte_beta == 10);
  ck_assert(o.no_projection == 0 && o.no_initial_fix == 0 && o.constraint_tol == 0);
  for (int k = 0; k < 4; k++) {
    double x[4] = {0.9, -1.3, 0.4, 0.2};
    FirstSample first = {0, {0}};
    struct eom_report rep;
    int st = run(&tm_cartesian_pendulum, p, NULL, x, methods[k], 2, 0.01, 0, 0, keep_first,
                 &first, &rep);
    ck_assert_msg(st == EOM_OK, "%s: %s", methods[k], rep.message);
    const double *f = first.x;
    ck_assert_msg(fabs(f[0] * f[0] + f[1] * f[1] - p[1] * p[1]) <= 1e-12, "%s", methods[k]);
    ck_assert(fabs(atan2(f[0], -f[1]) - atan2(0.9, 1.3)) < 1e-12);
    ck_assert(fabs(f[0] * f[2] + f[1] * f[3]) < 1e-12); /* G q' = 0 */
    ck_assert_msg(fabs(x[0] * x[0] + x[1] * x[1] - p[1] * p[1]) <= 1e-12, "%s: phi %g",
                  methods[k], x[0] * x[0] + x[1] * x[1] - p[1] * p[1]);
    ck_assert(fabs(x[0] * x[2] + x[1] * x[3]) < 1e-10);
  }
}
END_TEST

/* Baumgarte's stabilized constraint phi'' + 2 alpha phi' + beta^2 phi = 0
** (Baumgarte, Comput. Methods Appl. Mech. Eng. 1, 1972): with alpha = beta
** it is critically damped, phi(t) = phi0 (1 + alpha t) exp(-alpha t) from
** rest.  With no projection and no initial fix, a start off the circle
** must follow that; without the term phi stays (phi'' = 0). */
START_TEST(baumgarte_decay_follows_its_equation) {
  const double p[] = {1.0, 1.5, 9.81}, alpha = 4, t_end = 0.8;
  struct eom_sim_options o;
  struct eom_report rep;
  for (int gains = 0; gains < 2; gains++) {
    double x[4] = {0, -1.5 - 1e-3, 0, 0};
    double phi0 = x[1] * x[1] - p[1] * p[1];
    eom_sim_options_init(&o);
    o.t_end = t_end;
    o.rtol = 1e-12;
    o.atol = 1e-14;
    o.no_projection = 1;
    o.no_initial_fix = 1;
    o.baumgarte_alpha = o.baumgarte_beta = gains ? alpha : 0;
    ck_assert_int_eq(eom_simulate(&tm_cartesian_pendulum, p, NULL, x, &o, NULL, NULL, &rep),
                     EOM_OK);
    double phi = x[0] * x[0] + x[1] * x[1] - p[1] * p[1];
    double want = gains ? phi0 * (1 + alpha * t_end) * exp(-alpha * t_end) : phi0;
    ck_assert_msg(fabs(phi - want) < 1e-6 * fabs(phi0), "gains %d: phi %.10g, want %.10g", gains,
                  phi, want);
  }
}
END_TEST

/* A start where G = 0 (the anchor itself) cannot be projected: the run
** stops before the first step and says why. */
START_TEST(constraint_start_at_singular_point) {
  const double p[] = {1.0, 1.5, 9.81};
  double x[4] = {0, 0, 0, 0};
  struct eom_report rep;
  int st = run(&tm_cartesian_pendulum, p, NULL, x, "dopri", 1, 0, 0, 0, NULL, NULL, &rep);
  ck_assert_int_eq(st, EOM_ESINGULAR);
  ck_assert_msg(strstr(rep.message, "initial state is not on the constraints") != NULL, "%s",
                rep.message);
  ck_assert_msg(strstr(rep.message, "loses rank") != NULL, "%s", rep.message);
}
END_TEST

/* ------------------------------------------------------------- order */

/* Error at t = 2 of the oscillator x'' = -x from (1, 0) with fixed steps h. */
static double fixed_error(const char *method, double h) {
  const double p[] = {1.0, 1.0, 0.0};
  double x[2] = {1, 0};
  struct eom_sim_options o;
  struct eom_report rep;
  eom_sim_options_init(&o);
  o.method = method;
  o.t_end = 2;
  o.step = h;
  o.fixed_step = 1;
  o.rtol = 1e-15; /* Newton solves well below the truncation error */
  o.atol = 1e-16;
  ck_assert_int_eq(eom_simulate(&tm_oscillator, p, NULL, x, &o, NULL, NULL, &rep), EOM_OK);
  return hypot(x[0] - cos(2.0), x[1] + sin(2.0));
}

/* A method of order p divides the global error by 2^p per halving of h
** (Hairer, Nørsett & Wanner, Solving ODEs I, 2nd ed., 1993, §II.3, from memory):
** dopri 5 -> 32, radau5 5 -> 32, rk4 4 -> 16, midpoint 2 -> 4. */
START_TEST(integrator_orders) {
  static const struct {
    const char *method;
    double h, order;
  } cases[] = {{"dopri", 0.2, 5}, {"radau5", 0.2, 5}, {"rk4", 0.1, 4}, {"midpoint", 0.02, 2}};
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    double e1 = fixed_error(cases[i].method, cases[i].h);
    double e2 = fixed_error(cases[i].method, cases[i].h / 2);
    double e3 = fixed_error(cases[i].method, cases[i].h / 4);
    double want = pow(2, cases[i].order);
    ck_assert_msg(e1 / e2 > 0.75 * want && e1 / e2 < 1.3 * want, "%s: ratio %g, want %g",
                  cases[i].method, e1 / e2, want);
    ck_assert_msg(e2 / e3 > 0.75 * want && e2 / e3 < 1.3 * want, "%s: ratio %g, want %g",
                  cases[i].method, e2 / e3, want);
  }
}
END_TEST

/* Adaptive dopri meets its tolerance: the error falls as rtol does. */
START_TEST(dopri_tolerance_proportionality) {
  const double p[] = {1.0, 1.0, 0.0};
  double prev = INFINITY;
  for (double tol = 1e-5; tol >= 1e-11; tol *= 1e-3) {
    double x[2] = {1, 0};
    struct eom_report rep;
    ck_assert_int_eq(run(&tm_oscillator, p, NULL, x, "dopri", 5, 0, tol, tol, NULL, NULL, &rep),
                     EOM_OK);
    double err = hypot(x[0] - cos(5.0), x[1] + sin(5.0));
    ck_assert_msg(err < 100 * tol, "tol %g: error %g", tol, err);
    ck_assert_msg(err < prev / 50, "tol %g: error %g after %g", tol, err, prev);
    prev = err;
  }
}
END_TEST

/* ------------------------------------------------------------- energy */

typedef struct Energy {
  const struct eom_model *m;
  const double *p;
  double E0, max_rel;
  int have;
} Energy;

static int track_energy(void *ctx, double t, const double *x, const double *u) {
  Energy *e = ctx;
  double T, V;
  (void)t, (void)u;
  e->m->energy(x, x + e->m->nq, e->p, &T, &V);
  if (!e->have) e->E0 = T + V, e->have = 1;
  e->max_rel = fmax(e->max_rel, fabs(T + V - e->E0) / fabs(e->E0));
  return 0;
}

static double energy_drift(const struct eom_model *m, const double *p, double *x,
                           const char *method, double h, double t_end, double sample_dt) {
  Energy e = {m, p, 0, 0, 0};
  struct eom_sim_options o;
  struct eom_report rep;
  eom_sim_options_init(&o);
  o.method = method;
  o.t_end = t_end;
  o.step = h;
  o.sample_dt = sample_dt;
  o.rtol = 1e-14;
  o.atol = 1e-15;
  ck_assert_int_eq(eom_simulate(m, p, NULL, x, &o, track_energy, &e, &rep), EOM_OK);
  ck_assert_int_eq(rep.steps, (long)llround(t_end / h));
  return e.max_rel;
}

/* Implicit midpoint keeps quadratic invariants, so the energy of a linear
** oscillator stays at its start up to rounding (Hairer, Lubich & Wanner,
** Geometric Numerical Integration, 2nd ed., 2006, §IV.2, from memory); RK4 is not
** symplectic and its energy drifts (ibid. §I.1).  10^6 steps of h = 0.1. */
START_TEST(midpoint_energy_bounded) {
  const double p[] = {1.0, 1.0, 0.0};
  double x1[2] = {1, 0}, x2[2] = {1, 0};
  double mid = energy_drift(&tm_oscillator, p, x1, "midpoint", 0.1, 1e5, 100);
  double rk4 = energy_drift(&tm_oscillator, p, x2, "rk4", 0.1, 1e5, 100);
  ck_assert_msg(mid < 1e-6, "midpoint energy drift %g", mid);
  ck_assert_msg(rk4 > 100 * mid && rk4 > 1e-6, "rk4 drift %g vs midpoint %g", rk4, mid);
}
END_TEST

/* On the nonlinear pendulum the midpoint energy error oscillates but does
** not grow (ibid. §IX.8, from memory: long-time energy conservation): the worst error in
** the last tenth of a long run is no larger than over the first tenth. */
START_TEST(midpoint_pendulum_no_drift) {
  const double p[] = {1.0, 1.0, 9.81};
  double x[2] = {2.0, 0};
  double first = energy_drift(&tm_pendulum, p, x, "midpoint", 0.01, 100, 0.01);
  double whole = energy_drift(&tm_pendulum, p, x, "midpoint", 0.01, 900, 0.01);
  ck_assert_msg(first < 1e-3 && first > 0, "first %g", first);
  ck_assert_msg(whole < 1.5 * first, "energy error grows: %g then %g", first, whole);
}
END_TEST

/* ------------------------------------------------------------- stiffness */

/* A heavily overdamped oscillator (c = 1e4, k = m = 1): eigenvalues
** s = (-c ± sqrt(c^2 - 4k)) / 2, one near -1e4, one near -1e-4 (closed
** form, common practice).  At h = 0.01, h s = -100 lies outside RK4's
** stability region, which must fail cleanly, while the L-stable Radau IIA
** (Hairer & Wanner, Solving ODEs II, 2nd ed., 1996, §IV.3, from memory) follows the slow
** solution. */
START_TEST(stiff_radau5_vs_rk4) {
  const double p[] = {1.0, 1.0, 1e4};
  double c = p[2], d = sqrt(c * c - 4);
  double s1 = (-c + d) / 2, s2 = (-c - d) / 2;
  double A = -s2 / (s1 - s2), B = 1 - A; /* x(0) = 1, x'(0) = 0 */
  double x[2] = {1, 0};
  struct eom_report rep;
  int st = run(&tm_oscillator, p, NULL, x, "radau5", 5, 0.01, 1e-10, 1e-12, NULL, NULL, &rep);
  ck_assert_msg(st == EOM_OK, "%s", rep.message);
  double exact = A * exp(s1 * 5) + B * exp(s2 * 5);
  ck_assert_msg(fabs(x[0] - exact) < 1e-8, "radau5 x(5) = %.12g, exact %.12g", x[0], exact);
  double y[2] = {1, 0};
  st = run(&tm_oscillator, p, NULL, y, "rk4", 5, 0.01, 0, 0, NULL, NULL, &rep);
  ck_assert_int_eq(st, EOM_ENONFINITE);
  ck_assert_ptr_nonnull(strstr(rep.message, "at t = "));
  ck_assert(isfinite(y[0]) && isfinite(y[1])); /* the last good state */
}
END_TEST

/* ------------------------------------------------------- adaptive radau5 */

/* The Prothero–Robinson test equation (A. Prothero & A. Robinson, On the
** stability and accuracy of one-step methods for solving stiff systems of
** ordinary differential equations, Math. Comp. 28 (1974) 145–162; from
** memory) y' = lambda (y - g'(t)) + g''(t), written for the rate y = q' of
** one coordinate: q'' = lambda (q' - g'(t)) + g''(t), exact q = g(t) when
** q(0) = g(0), q'(0) = g'(0).  lambda = -1e6 makes it stiff; our g is a
** slow sine plus a smooth step of width 0.02 at t = 0.5, so a good step
** size is small only near the step. */
static const double PR_STEP = 0.5, PR_WIDTH = 0.02, PR_T = 0.5;
static double pr_g(double t) { return sin(t) + PR_STEP * tanh((t - PR_T) / PR_WIDTH); }
static double pr_g1(double t) {
  double c = 1 / cosh((t - PR_T) / PR_WIDTH);
  return cos(t) + PR_STEP / PR_WIDTH * c * c;
}
static double pr_g2(double t) {
  double s = (t - PR_T) / PR_WIDTH, c = 1 / cosh(s);
  return -sin(t) - 2 * PR_STEP / (PR_WIDTH * PR_WIDTH) * c * c * tanh(s);
}
static int pr_accel(double t, const double *q, const double *qd, const double *u,
                    const double *p, double *qdd) {
  (void)q, (void)u;
  qdd[0] = p[0] * (qd[0] - pr_g1(t)) + pr_g2(t);
  return 0;
}
static void pr_jacobian(double t, const double *x, const double *u, const double *p, double *A,
                        double *B) {
  (void)t, (void)x, (void)u, (void)B;
  A[0] = 0, A[1] = 1, A[2] = 0, A[3] = p[0];
}
static const char *const pr_names[] = {"q"}, *const pr_params[] = {"lambda"};
static const char *const pr_blank[] = {""};
static const double pr_lambda[] = {-1e6}, pr_zero[] = {0};
static const struct eom_model pr_model = {
    .abi = EOM_MODEL_ABI, .name = "prothero_robinson", .hash = "0",
    .nq = 1, .np = 1, .coord_names = pr_names, .coord_units = pr_blank,
    .coord_descs = pr_blank, .param_names = pr_params, .param_units = pr_blank,
    .param_descs = pr_blank, .param_defaults = pr_lambda, .q0 = pr_zero, .qd0 = pr_zero,
    .accel = pr_accel, .jacobian = pr_jacobian,
};

/* Error at t_end = 4 of the Prothero–Robinson run: adaptive (h == 0) with
** rtol = atol = tol, or fixed steps h without error control. */
static double pr_error(double tol, double h, struct eom_report *rep) {
  const double t_end = 4;
  double x[2] = {pr_g(0), pr_g1(0)};
  struct eom_sim_options o;
  eom_sim_options_init(&o);
  o.method = "radau5";
  o.t_end = t_end;
  o.rtol = o.atol = h > 0 ? 1e-12 : tol; /* fixed: Newton far below the truncation error */
  o.step = h;
  o.fixed_step = h > 0;
  int st = eom_simulate(&pr_model, NULL, NULL, x, &o, NULL, NULL, rep);
  ck_assert_msg(st == EOM_OK, "%s", rep->message);
  return fmax(fabs(x[0] - pr_g(t_end)), fabs(x[1] - pr_g1(t_end)));
}

/* Adaptive radau5 (error estimate and step control of Hairer & Wanner,
** Solving ODEs II, 2nd ed., 1996, §IV.8, from memory) meets the tolerance
** on the stiff problem, and in far fewer steps than the fixed-step run
** that reaches the same accuracy: that one must use the small step the
** smooth step needs everywhere.  Step counts as reported by the runtime. */
START_TEST(radau5_adaptive_stiff_steps) {
  const double tol = 1e-6;
  struct eom_report rep;
  double err = pr_error(tol, 0, &rep);
  long adaptive = rep.steps;
  ck_assert_msg(err < 10 * tol, "error %g at rtol %g", err, tol);
  ck_assert_msg(rep.rejected < rep.steps, "%ld rejected of %ld", rep.rejected, rep.steps);
  double h = 0.1, fixed_err = INFINITY;
  long fixed = 0;
  while (fixed_err > err && h > 1e-4) {
    fixed_err = pr_error(0, h, &rep);
    fixed = rep.steps;
    h /= 2;
  }
  ck_assert_msg(fixed_err <= err, "no fixed step reached %g", err);
  ck_assert_msg(4 * adaptive < fixed, "adaptive %ld steps (error %g), fixed %ld (error %g)",
                adaptive, err, fixed, fixed_err);
}
END_TEST

/* The controller converges: three decades tighter rtol, a much smaller
** error, still within 10 rtol; on the Prothero–Robinson problem and on the
** stiff linear system x'' + (1e5 + 1) x' + 1e5 x = 0, whose eigenvalues
** are exactly -1 and -1e5, x = A e^-t + B e^(-1e5 t) (closed form, common
** practice). */
START_TEST(radau5_tolerance_convergence) {
  const double p[] = {1.0, 1e5, 1e5 + 1}, t_end = 3;
  const double B = -1 / (1e5 - 1), A = 1 - B; /* x(0) = 1, x'(0) = 0 */
  double prev_pr = INFINITY, prev_lin = INFINITY;
  for (double tol = 1e-5; tol >= 1e-8; tol *= 1e-3) {
    struct eom_report rep;
    double err_pr = pr_error(tol, 0, &rep);
    double x[2] = {1, 0};
    ck_assert_int_eq(run(&tm_oscillator, p, NULL, x, "radau5", t_end, 0, tol, tol, NULL, NULL,
                         &rep), EOM_OK);
    double err_lin = fmax(fabs(x[0] - (A * exp(-t_end) + B * exp(-1e5 * t_end))),
                          fabs(x[1] + A * exp(-t_end)));
    ck_assert_msg(err_pr < 10 * tol && err_lin < 10 * tol, "tol %g: errors %g, %g", tol, err_pr,
                  err_lin);
    ck_assert_msg(err_pr < prev_pr / 20 && err_lin < prev_lin / 20,
                  "tol %g: errors %g, %g after %g, %g", tol, err_pr, err_lin, prev_pr, prev_lin);
    prev_pr = err_pr;
    prev_lin = err_lin;
  }
}
END_TEST

/* Samples between the steps come from the collocation polynomial (Hairer
** & Wanner II, §IV.8, from memory): on x'' = -x every sample at 0.1
** matches cos t to the tolerance, while the steps are longer than that. */
typedef struct CosCheck {
  double worst;
  int n;
} CosCheck;

static int check_cos(void *ctx, double t, const double *x, const double *u) {
  CosCheck *c = ctx;
  (void)u;
  c->worst = fmax(c->worst, fmax(fabs(x[0] - cos(t)), fabs(x[1] + sin(t))));
  c->n++;
  return 0;
}

START_TEST(radau5_dense_samples) {
  const double p[] = {1.0, 1.0, 0.0}, tol = 1e-7;
  double x[2] = {1, 0};
  CosCheck cc = {0, 0};
  struct eom_sim_options o;
  struct eom_report rep;
  eom_sim_options_init(&o);
  o.method = "radau5";
  o.t_end = 10;
  o.sample_dt = 0.1;
  o.rtol = o.atol = tol;
  ck_assert_int_eq(eom_simulate(&tm_oscillator, p, NULL, x, &o, check_cos, &cc, &rep), EOM_OK);
  ck_assert_int_eq(cc.n, 101);
  ck_assert_msg(rep.steps < 100, "%ld steps: the samples shortened them", rep.steps);
  ck_assert_msg(cc.worst < 10 * tol, "worst sample error %g", cc.worst);
}
END_TEST

/* fixed_step = 1 keeps radau5 at exactly o.step, no error control (the
** order study integrator_orders relies on it); midpoint never adapts
** (variable steps break its symplecticity, see runtime/implicit.c). */
START_TEST(radau5_fixed_step_option) {
  const double p[] = {1.0, 1.0, 0.0};
  static const char *const methods[] = {"radau5", "midpoint"};
  for (int k = 0; k < 2; k++) {
    double x[2] = {1, 0};
    struct eom_sim_options o;
    struct eom_report rep;
    eom_sim_options_init(&o);
    o.method = methods[k];
    o.t_end = 2;
    o.step = 0.1;
    o.fixed_step = k == 0;
    o.rtol = 1e-3; /* loose: an adaptive run would take fewer, longer steps */
    ck_assert_int_eq(eom_simulate(&tm_oscillator, p, NULL, x, &o, NULL, NULL, &rep), EOM_OK);
    ck_assert_int_eq(rep.steps, 20);
    ck_assert_int_eq(rep.rejected, 0);
  }
  double x[2] = {1, 0};
  struct eom_report rep;
  ck_assert_int_eq(run(&tm_oscillator, p, NULL, x, "radau5", 2, 0.1, 1e-3, 1e-3, NULL, NULL, &rep),
                   EOM_OK);
  ck_assert_msg(rep.steps < 20, "adaptive radau5 took %ld steps", rep.steps);
}
END_TEST

/* ------------------------------------------------------------- failures */

typedef struct Count {
  int n;
  double last_t;
} Count;

static int count_samples(void *ctx, double t, const double *x, const double *u) {
  Count *c = ctx;
  (void)x, (void)u;
  c->n++;
  c->last_t = t;
  return 0;
}

/* x moves at unit speed into x = 1, where its mass 1 - x vanishes. */
START_TEST(failure_mass_not_positive_definite) {
  static const char *const methods[] = {"dopri", "rk4", "midpoint", "radau5"};
  for (size_t i = 0; i < 4; i++) {
    double x[2] = {0, 1};
    Count cnt = {0, 0};
    struct eom_sim_options o;
    struct eom_report rep;
    eom_sim_options_init(&o);
    o.method = methods[i];
    o.t_end = 3;
    o.sample_dt = 0.1;
    o.step = 0.01;
    int st = eom_simulate(&tm_vanishing_mass, NULL, NULL, x, &o, count_samples, &cnt, &rep);
    ck_assert_msg(st == EOM_EMASS, "%s: status %d (%s)", methods[i], st, rep.message);
    ck_assert_int_eq(rep.status, EOM_EMASS);
    ck_assert_msg(strstr(rep.message, "not positive definite") && strstr(rep.message, "x = "),
                  "%s", rep.message);
    double t_fail = atof(strstr(rep.message, "at t = ") + 7);
    /* Fixed steps fail in the stage that crosses x = 1; dopri shrinks its
    ** step onto the boundary first. */
    double slack = i == 0 ? 1e-9 : o.step;
    ck_assert_msg(t_fail > 0.99 && t_fail <= 1.0 + slack, "%s: failed at %.12g", methods[i],
                  t_fail);
    /* Samples up to the failure were delivered, then the last good state. */
    ck_assert_msg(cnt.n >= 10 && cnt.last_t <= t_fail, "%s: %d samples, last %g", methods[i],
                  cnt.n, cnt.last_t);
    ck_assert_msg(x[0] <= 1.0 + 1e-12, "%s: x = %.17g, %s", methods[i], x[0], rep.message);
    ck_assert_double_eq_tol(rep.t, x[0], 1e-9); /* x = t on this model */
  }
}
END_TEST

/* Radial fall into the centre of force: r reaches 0 in finite time, so the
** adaptive method must stop with step size underflow (or a non-finite
** state), not return garbage. */
START_TEST(failure_collision) {
  const double p[] = {1.0, 1.0};
  double x[4] = {1, 0, 0, 0};
  struct eom_report rep;
  int st = run(&tm_kepler, p, NULL, x, "dopri", 5, 0, 1e-8, 1e-10, NULL, NULL, &rep);
  ck_assert_msg(st == EOM_ESTEP || st == EOM_ENONFINITE, "status %d: %s", st, rep.message);
  /* Free fall from rest at r0 reaches the centre at t = pi/2 sqrt(r0^3 / (2 mu)). */
  ck_assert_msg(fabs(rep.t - PI / 2 / sqrt(2.0)) < 1e-3, "stopped at %g", rep.t);
  ck_assert_ptr_nonnull(strstr(rep.message, "r = "));
}
END_TEST

START_TEST(bad_arguments) {
  double x[2] = {0, 0};
  struct eom_sim_options o;
  struct eom_report rep;
  eom_sim_options_init(&o);
  o.method = "euler-ish";
  ck_assert_int_eq(eom_simulate(&tm_oscillator, NULL, NULL, x, &o, NULL, NULL, &rep), EOM_EINVAL);
  ck_assert_ptr_nonnull(strstr(rep.message, "dopri"));
  ck_assert(eom_method_known("midpoint") && !eom_method_known("euler-ish"));
  o.method = "rk4";
  o.t_end = -1;
  ck_assert_int_eq(eom_simulate(&tm_oscillator, NULL, NULL, x, &o, NULL, NULL, &rep), EOM_EINVAL);
  x[0] = NAN;
  o.t_end = 1;
  ck_assert_int_eq(eom_simulate(&tm_oscillator, NULL, NULL, x, &o, NULL, NULL, &rep),
                   EOM_ENONFINITE);
}
END_TEST

static int stop_at_half(void *ctx, double t, const double *x, const double *u) {
  (void)ctx, (void)x, (void)u;
  return t >= 0.5;
}

/* Sample times are t0 + k dt and the end, exactly; every method agrees. */
START_TEST(sample_grid) {
  static const char *const methods[] = {"dopri", "rk4", "midpoint", "radau5"};
  for (size_t i = 0; i < 4; i++) {
    double x[2] = {1, 0};
    Count cnt = {0, 0};
    struct eom_sim_options o;
    struct eom_report rep;
    eom_sim_options_init(&o);
    o.method = methods[i];
    o.t_end = 1;
    o.sample_dt = 0.3;
    o.step = 0.01;
    ck_assert_int_eq(eom_simulate(&tm_oscillator, NULL, NULL, x, &o, count_samples, &cnt, &rep),
                     EOM_OK);
    ck_assert_int_eq(cnt.n, 5); /* 0, .3, .6, .9, 1 */
    ck_assert_double_eq(cnt.last_t, 1.0);
    ck_assert_msg(fabs(x[0] - cos(1.0)) < 1e-4, "%s: x(1) = %.10g", methods[i], x[0]);
    o.sample_dt = 0.1;
    cnt.n = 0;
    x[0] = 1, x[1] = 0;
    ck_assert_int_eq(eom_simulate(&tm_oscillator, NULL, NULL, x, &o, count_samples, &cnt, &rep),
                     EOM_OK);
    ck_assert_int_eq(cnt.n, 11);
    /* 0.3 / 0.1 and 0.7 / 0.1 are not whole numbers in binary: still exactly
    ** 4 and 8 samples, the last at t_end. */
    static const double ends[] = {0.3, 0.7};
    for (int e = 0; e < 2; e++) {
      o.t_end = ends[e];
      cnt.n = 0;
      x[0] = 1, x[1] = 0;
      ck_assert_int_eq(eom_simulate(&tm_oscillator, NULL, NULL, x, &o, count_samples, &cnt, &rep),
                       EOM_OK);
      ck_assert_int_eq(cnt.n, e ? 8 : 4);
      ck_assert_double_eq(cnt.last_t, ends[e]);
    }
    o.t_end = 1;
    x[0] = 1, x[1] = 0;
    ck_assert_int_eq(eom_simulate(&tm_oscillator, NULL, NULL, x, &o, stop_at_half, NULL, &rep),
                     EOM_ESTOPPED);
  }
}
END_TEST

static int count_only(void *ctx, double t, const double *x, const double *u) {
  (void)x, (void)u;
  ((Count *)ctx)->n++;
  ((Count *)ctx)->last_t = t;
  return 0;
}

/* A fixed-step run takes exactly span/h steps, t = t0 + n h, even where
** t + h rounds below a sample time (far from t = 0 the times carry a
** rounding of ulp(t), here 1e-4 of a step). */
START_TEST(fixed_step_count) {
  static const char *const methods[] = {"rk4", "midpoint"};
  static const double dts[] = {0, 1e-4, 1e-6};
  for (size_t i = 0; i < 2; i++)
    for (size_t d = 0; d < 3; d++) {
      double x[2] = {1, 0};
      Count cnt = {0, 0};
      struct eom_sim_options o;
      struct eom_report rep;
      eom_sim_options_init(&o);
      o.method = methods[i];
      o.t0 = 1e6;
      o.t_end = 1e6 + 1e-3;
      o.step = 1e-6;
      o.sample_dt = dts[d];
      ck_assert_int_eq(eom_simulate(&tm_oscillator, NULL, NULL, x, &o, count_only, &cnt, &rep),
                       EOM_OK);
      ck_assert_msg(rep.steps == 1000, "%s, samples every %g: %ld steps", methods[i], dts[d],
                    rep.steps);
      ck_assert_double_eq(cnt.last_t, o.t_end);
      if (d == 1) ck_assert_int_eq(cnt.n, 11);
    }
}
END_TEST

/* ------------------------------------------------------------- inputs */

static char *write_temp(const char *text) {
  char *path = strdup("/tmp/eomrt-inputs-XXXXXX");
  int fd = mkstemp(path);
  ck_assert_int_ge(fd, 0);
  ck_assert_int_eq(write(fd, text, strlen(text)), (ssize_t)strlen(text));
  close(fd);
  return path;
}

/* A free mass (k = c = 0) pushed by F(t) = t for t < 1, then 1: by hand,
** x(2) = 1/6 + 1/2 + 1/2 and x'(2) = 3/2. */
START_TEST(inputs_table_drives_model) {
  static const char *const names[] = {"F"};
  char err[256];
  char *path = write_temp("# force ramp\nt, F\n0, 0\n1, 1\n2.5, 1\n");
  eom_inputs *in = eom_inputs_new(1);
  ck_assert_int_eq(eom_inputs_load_csv(in, path, names, err, sizeof err), EOM_OK);
  double u;
  eom_inputs_eval(in, 0.25, &u);
  ck_assert_double_eq_tol(u, 0.25, 1e-15);
  eom_inputs_eval(in, -3, &u);
  ck_assert_double_eq(u, 0.0);
  eom_inputs_eval(in, 7, &u);
  ck_assert_double_eq(u, 1.0);
  const double p[] = {1.0, 0.0, 0.0};
  double x[2] = {0, 0};
  struct eom_sim_options o;
  struct eom_report rep;
  eom_sim_options_init(&o);
  o.t_end = 2;
  o.rtol = 1e-11;
  o.atol = 1e-13;
  ck_assert_int_eq(eom_simulate(&tm_oscillator, p, in, x, &o, NULL, NULL, &rep), EOM_OK);
  ck_assert_double_eq_tol(x[0], 7.0 / 6, 1e-8);
  ck_assert_double_eq_tol(x[1], 1.5, 1e-8);
  /* A constant replaces the table column. */
  eom_inputs_set_constant(in, 0, 2.0);
  eom_inputs_eval(in, 0.25, &u);
  ck_assert_double_eq(u, 2.0);
  eom_inputs_free(in);
  unlink(path);
  free(path);
}
END_TEST

START_TEST(inputs_table_errors) {
  static const char *const names[] = {"F"};
  static const struct {
    const char *text, *want;
  } cases[] = {
      {"t,F\n0,1\n0,2\n", ":3: times must increase"},
      {"t,G\n0,1\n", "'G' is not an input"},
      {"time,F\n0,1\n", "first column must be `t`"},
      {"t,F\n0,1,2\n", ":2: more fields"},
      {"t,F\n0,abc\n", "not a finite number"},
      {"t,F\n", "no rows"},
      {"", "empty table"},
  };
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    char err[256] = "";
    char *path = write_temp(cases[i].text);
    eom_inputs *in = eom_inputs_new(1);
    ck_assert_int_eq(eom_inputs_load_csv(in, path, names, err, sizeof err), EOM_EINPUT);
    ck_assert_msg(strstr(err, cases[i].want) != NULL, "case %zu: %s", i, err);
    eom_inputs_free(in);
    unlink(path);
    free(path);
  }
  /* A line longer than the reader's buffer is an error, not two lines. */
  char *text = malloc(20000);
  strcpy(text, "t,F\n0,");
  size_t len = strlen(text);
  memset(text + len, '1', 12000);
  strcpy(text + len + 12000, "\n1,2\n");
  char err[256] = "", *path = write_temp(text);
  eom_inputs *in = eom_inputs_new(1);
  ck_assert_int_eq(eom_inputs_load_csv(in, path, names, err, sizeof err), EOM_EINPUT);
  ck_assert_msg(strstr(err, ":2: line longer") != NULL, "%s", err);
  eom_inputs_free(in);
  unlink(path);
  free(path);
  free(text);
}
END_TEST

/* ------------------------------------------------------------- equilibria, modes */

/* Hooke's law (common practice): a constant force F on a spring k rests at F / k. */
START_TEST(equilibrium_with_input) {
  const double p[] = {2.0, 50.0, 3.0}, u[] = {7.0};
  double q[1] = {-4};
  struct eom_report rep;
  ck_assert_int_eq(eom_equilibrium(&tm_oscillator, p, u, 0, q, 0, 0, &rep), EOM_OK);
  ck_assert_double_eq_tol(q[0], 7.0 / 50, 1e-12);
  ck_assert(rep.residual < 1e-9);
}
END_TEST

/* A pendulum under a constant torque tau rests where m g L sin(theta) = tau;
** past tau = m g L there is no equilibrium and Newton must say so. */
START_TEST(equilibrium_pendulum_torque) {
  const double p[] = {1.0, 1.0, 9.81};
  double u[] = {4.0}, q[1] = {0.1};
  struct eom_report rep;
  ck_assert_int_eq(eom_equilibrium(&tm_pendulum, p, u, 0, q, 0, 0, &rep), EOM_OK);
  ck_assert_double_eq_tol(q[0], asin(4.0 / 9.81), 1e-12);
  u[0] = 12;
  q[0] = 0.1;
  int st = eom_equilibrium(&tm_pendulum, p, u, 0, q, 0, 50, &rep);
  ck_assert_msg(st == EOM_ENEWTON || st == EOM_ESINGULAR, "status %d", st);
  ck_assert_ptr_nonnull(strstr(rep.message, "theta = "));
}
END_TEST

static void analyse(const struct eom_model *m, const double *p, double *q, ModalResult *r) {
  int nq = m->nq;
  double M[16], C[16], K[16], qd[4] = {0};
  char err[256];
  struct eom_report rep;
  ck_assert_int_eq(eom_equilibrium(m, p, NULL, 0, q, 0, 0, &rep), EOM_OK);
  ck_assert_int_eq(eom_linearize(m, p, NULL, 0, q, qd, M, C, K, &rep), EOM_OK);
  ck_assert_msg(modal_analyze(nq, M, C, K, r, err, sizeof err) == 0, "%s", err);
}

/* Two equal masses between three equal springs: omega = sqrt(k/m) (in
** phase) and sqrt(3k/m) (opposite) (Taylor, Classical Mechanics, 2005, §11.2). */
START_TEST(modes_two_masses_three_springs) {
  const double p[] = {2.0, 8.0, 0.0};
  double q[2] = {0.3, -0.1};
  ModalResult r;
  analyse(&tm_chain, p, q, &r);
  ck_assert_double_eq_tol(q[0], 0, 1e-12);
  ck_assert_int_eq(r.damped, 0);
  ck_assert_int_eq(r.nmodes, 2);
  ck_assert_int_eq(r.modes[0].kind, MODE_OSCILLATING);
  ck_assert_double_eq_tol(r.modes[0].omega, sqrt(8.0 / 2), 1e-12);
  ck_assert_double_eq_tol(r.modes[1].omega, sqrt(3 * 8.0 / 2), 1e-12);
  ck_assert_double_eq_tol(r.modes[0].shape[0], 1, 1e-12);
  ck_assert_double_eq_tol(r.modes[0].shape[1], 1, 1e-12);
  ck_assert_double_eq_tol(fabs(r.modes[1].shape[1]), 1, 1e-12);
  ck_assert_double_eq_tol(r.modes[1].shape[0] * r.modes[1].shape[1], -1, 1e-12);
  modal_free(&r);
}
END_TEST

/* Double pendulum, equal masses and lengths: omega^2 = (g/l)(2 ∓ √2)
** (Kibble & Berkshire, Classical Mechanics, 5th ed., 2004, eq. 11.21).  The
** model has no jacobian, so this also checks the finite differences. */
START_TEST(modes_double_pendulum) {
  const double p[] = {1.0, 0.5, 9.81};
  double q[2] = {0.2, -0.3};
  ModalResult r;
  analyse(&tm_double_pendulum, p, q, &r);
  double g_l = p[2] / p[1];
  ck_assert_int_eq(r.nmodes, 2);
  ck_assert_double_eq_tol(r.modes[0].omega2 / (g_l * (2 - sqrt(2.0))), 1, 1e-8);
  ck_assert_double_eq_tol(r.modes[1].omega2 / (g_l * (2 + sqrt(2.0))), 1, 1e-8);
  /* Shapes (1, √2) and (1, -√2) for (th1, th2), scaled to a largest entry 1. */
  ck_assert_double_eq_tol(r.modes[0].shape[0] / r.modes[0].shape[1], 1 / sqrt(2.0), 1e-7);
  ck_assert_double_eq_tol(r.modes[1].shape[0] / r.modes[1].shape[1], -1 / sqrt(2.0), 1e-7);
  modal_free(&r);
}
END_TEST

/* Damped oscillator: omega_n = sqrt(k/m) and zeta = c / (2 sqrt(k m))
** (common practice); the damped frequency omega_n sqrt(1 - zeta^2). */
START_TEST(modes_damping_ratio) {
  const double p[] = {2.0, 50.0, 3.0};
  double q[1] = {1};
  ModalResult r;
  analyse(&tm_oscillator, p, q, &r);
  ck_assert_int_eq(r.damped, 1);
  ck_assert_int_eq(r.nmodes, 1);
  ck_assert_double_eq_tol(r.modes[0].omega, 5.0, 1e-12);
  ck_assert_double_eq_tol(r.modes[0].zeta, 3.0 / (2 * sqrt(100.0)), 1e-12);
  ck_assert_double_eq_tol(r.modes[0].omega_d, 5.0 * sqrt(1 - 0.15 * 0.15), 1e-12);
  modal_free(&r);
  /* Overdamped (zeta > 1): two real decaying modes, rates -s. */
  const double p2[] = {1.0, 1.0, 5.0};
  analyse(&tm_oscillator, p2, q, &r);
  ck_assert_int_eq(r.nmodes, 2);
  ck_assert_int_eq(r.modes[0].kind, MODE_DECAYING);
  ck_assert_double_eq_tol(r.modes[0].rate, (5 - sqrt(21.0)) / 2, 1e-12);
  ck_assert_double_eq_tol(r.modes[1].rate, (5 + sqrt(21.0)) / 2, 1e-12);
  modal_free(&r);
  /* Damped chain: each mode keeps its undamped frequency with zeta = c / (2 m w). */
  const double p3[] = {2.0, 8.0, 0.4};
  double q2[2] = {0, 0};
  analyse(&tm_chain, p3, q2, &r);
  ck_assert_int_eq(r.nmodes, 2);
  ck_assert_double_eq_tol(r.modes[0].omega, 2.0, 1e-12);
  ck_assert_double_eq_tol(r.modes[0].zeta, 0.4 / (2 * 2.0 * 2.0), 1e-12);
  ck_assert_double_eq_tol(r.modes[1].phase[0] - r.modes[1].phase[1], 180.0 * (r.modes[1].phase[0] > 0 ? 1 : -1), 1e-9);
  modal_free(&r);
}
END_TEST

/* The inverted pendulum (theta = pi) is an equilibrium with omega^2 = -g/L:
** an unstable direction with growth rate sqrt(g/L), not a NaN frequency. */
START_TEST(modes_unstable_direction) {
  const double p[] = {1.0, 2.0, 9.81};
  double q[1] = {3.0};
  ModalResult r;
  analyse(&tm_pendulum, p, q, &r);
  ck_assert_double_eq_tol(q[0], PI, 1e-12);
  ck_assert_int_eq(r.modes[0].kind, MODE_UNSTABLE);
  ck_assert_double_eq_tol(r.modes[0].omega2, -9.81 / 2, 1e-10);
  ck_assert_double_eq_tol(r.modes[0].rate, sqrt(9.81 / 2), 1e-10);
  ck_assert(!isnan(r.modes[0].omega));
  modal_free(&r);
}
END_TEST

/* Two masses on one spring, free to translate: the translation is a neutral
** mode (omega = 0) and the stretch oscillates at sqrt(k / mu) with the
** reduced mass mu = m/2 (common practice).  Newton must find a rest state
** although df/dq is singular, keeping the free coordinate where it began. */
START_TEST(modes_free_pair_neutral) {
  const double p[] = {3.0, 12.0};
  double q[2] = {0.5, 0.9};
  ModalResult r;
  analyse(&tm_free_pair, p, q, &r);
  ck_assert_double_eq_tol(q[0], q[1], 1e-12);
  double centre = q[0] + q[1];
  ck_assert_double_eq_tol(centre, 1.4, 1e-6); /* the free coordinate stays */
  ck_assert_int_eq(r.nmodes, 2);
  ck_assert_int_eq(r.modes[0].kind, MODE_OSCILLATING);
  ck_assert_double_eq_tol(r.modes[0].omega, sqrt(12.0 / 1.5), 1e-12);
  ck_assert_int_eq(r.modes[1].kind, MODE_NEUTRAL);
  ck_assert_double_eq_tol(r.modes[1].shape[0], 1, 1e-9);
  ck_assert_double_eq_tol(r.modes[1].shape[1], 1, 1e-9);
  modal_free(&r);
}
END_TEST

/* A model whose jacobian is wrong (here: the sign of d q''/dq) must not
** mislead the equilibrium search or the linearization: both fall back to
** differences of the forcing, and the linearization says so. */
START_TEST(untrusted_jacobian) {
  const double p[] = {1.0, 2.0, 9.81}, u[] = {3.0};
  double q[1] = {0.9}, qd[1] = {0}, M[1], C[1], K[1];
  struct eom_report rep;
  ck_assert_int_eq(eom_equilibrium(&tm_pendulum_bad_jacobian, p, u, 0, q, 0, 0, &rep), EOM_OK);
  ck_assert_double_eq_tol(q[0], asin(3.0 / (9.81 * 2.0)), 1e-10);
  ck_assert_int_eq(eom_linearize(&tm_pendulum_bad_jacobian, p, u, 0, q, qd, M, C, K, &rep),
                   EOM_OK);
  ck_assert_ptr_nonnull(strstr(rep.message, "warning"));
  ck_assert_double_eq_tol(K[0], 9.81 * 2.0 * cos(q[0]), 1e-7); /* m g L cos(theta) */
  ck_assert_double_eq_tol(C[0], 0, 1e-9);
  /* The implicit methods still integrate it correctly. */
  double x[2] = {0.5, 0}, y[2] = {0.5, 0};
  const double p0[] = {1.0, 2.0, 9.81};
  ck_assert_int_eq(run(&tm_pendulum_bad_jacobian, p0, NULL, x, "radau5", 2, 0.01, 1e-10, 1e-12,
                       NULL, NULL, &rep), EOM_OK);
  ck_assert_int_eq(run(&tm_pendulum, p0, NULL, y, "dopri", 2, 0, 1e-12, 1e-13, NULL, NULL, &rep),
                   EOM_OK);
  ck_assert_msg(fabs(x[0] - y[0]) < 1e-8, "radau5 %.12g, dopri %.12g", x[0], y[0]);
  /* The correct jacobian gives the same K without a warning. */
  ck_assert_int_eq(eom_linearize(&tm_pendulum, p, u, 0, q, qd, M, C, K, &rep), EOM_OK);
  ck_assert_str_eq(rep.message, "");
  ck_assert_double_eq_tol(K[0], 9.81 * 2.0 * cos(q[0]), 1e-12);
}
END_TEST

/* The pendulum as a bob at (x, y) held on a circle by a constraint: rest at
** the bottom (0, -L), one mode at sqrt(g/L) (the simple pendulum, common
** practice) moving along x; the rod tension is what makes it stiff, so
** this checks the multiplier term of the tangent stiffness.  Hung from the
** top it is an unstable direction with rate sqrt(g/L). */
START_TEST(modes_constrained_pendulum) {
  const double p[] = {0.7, 1.5, 9.81};
  double q[2] = {0.4, -1.2}, N[4], M[4], C[4], K[4];
  int nr;
  char err[256];
  struct eom_report rep;
  ModalResult r;
  ck_assert_int_eq(eom_equilibrium(&tm_cartesian_pendulum, p, NULL, 0, q, 0, 0, &rep), EOM_OK);
  ck_assert_double_eq_tol(q[0], 0, 1e-10);
  ck_assert_double_eq_tol(q[1], -1.5, 1e-10);
  ck_assert_int_eq(eom_linearize_tangent(&tm_cartesian_pendulum, p, NULL, 0, q, N, &nr, M, C, K,
                                         &rep), EOM_OK);
  ck_assert_int_eq(nr, 1);
  ck_assert_int_eq(modal_analyze(nr, M, C, K, &r, err, sizeof err), 0);
  ck_assert_int_eq(modal_expand(&r, 2, N), 0);
  ck_assert_int_eq(r.modes[0].kind, MODE_OSCILLATING);
  ck_assert_double_eq_tol(r.modes[0].omega, sqrt(9.81 / 1.5), 1e-7);
  ck_assert_double_eq_tol(r.modes[0].shape[0], 1, 1e-9);
  ck_assert_double_eq_tol(r.modes[0].shape[1], 0, 1e-7);
  modal_free(&r);
  q[0] = 0.3, q[1] = 1.3;
  ck_assert_int_eq(eom_equilibrium(&tm_cartesian_pendulum, p, NULL, 0, q, 0, 0, &rep), EOM_OK);
  ck_assert_double_eq_tol(q[1], 1.5, 1e-10);
  ck_assert_int_eq(eom_linearize_tangent(&tm_cartesian_pendulum, p, NULL, 0, q, N, &nr, M, C, K,
                                         &rep), EOM_OK);
  ck_assert_int_eq(modal_analyze(nr, M, C, K, &r, err, sizeof err), 0);
  ck_assert_int_eq(r.modes[0].kind, MODE_UNSTABLE);
  ck_assert_double_eq_tol(r.modes[0].rate, sqrt(9.81 / 1.5), 1e-7);
  modal_free(&r);
  /* Without constraints the tangent space is the whole space. */
  double qc[2] = {0, 0};
  const double pc[] = {2.0, 8.0, 0.0};
  ck_assert_int_eq(eom_linearize_tangent(&tm_chain, pc, NULL, 0, qc, N, &nr, M, C, K, &rep),
                   EOM_OK);
  ck_assert_int_eq(nr, 2);
  ck_assert_double_eq(N[0], 1);
  ck_assert_double_eq(N[1], 0);
  ck_assert_double_eq_tol(K[0], 16.0, 1e-12);
}
END_TEST

/* Linearization away from rest: K from differences of f must match the
** analytic -df/dq of the Kepler forcing at a moving state. */
START_TEST(linearize_moving_state) {
  const double p[] = {1.5, 2.0};
  double q[2] = {1.2, 0.3}, qd[2] = {0.4, 0.9}, M[4], C[4], K[4];
  struct eom_report rep;
  ck_assert_int_eq(eom_linearize(&tm_kepler, p, NULL, 0, q, qd, M, C, K, &rep), EOM_OK);
  double m = p[0], mu = p[1], r = q[0];
  ck_assert_double_eq_tol(K[0], -(m * qd[1] * qd[1] + 2 * mu * m / (r * r * r)), 1e-7);
  ck_assert_double_eq_tol(K[2], 2 * m * qd[0] * qd[1], 1e-7);
  ck_assert_double_eq_tol(C[1], -2 * m * r * qd[1], 1e-12);
  ck_assert_double_eq_tol(C[3], 2 * m * r * qd[0], 1e-12);
  ck_assert_double_eq_tol(M[3], m * r * r, 1e-15);
}
END_TEST

/* ---------------------------------------------------- rank-revealing solve */

/* LAPACK's minimum-norm least squares by SVD (the reference). */
extern void dgelss_(const int *m, const int *n, const int *nrhs, double *a, const int *lda,
                    double *b, const int *ldb, double *s, const double *rcond, int *rank,
                    double *work, const int *lwork, int *info);

/* M qdd = f + Gᵀλ, G qdd = gamma with a redundant row (row 3 = row 1 + row
** 2, gamma likewise): the solve satisfies both equations, and λ is the
** minimum-norm solution of (G M⁻¹ Gᵀ) λ = gamma - G M⁻¹ f, which LAPACK's
** dgelss computes independently (Anderson et al., LAPACK Users' Guide, 3rd
** ed., 1999, §2.4.2.1: minimum-norm least squares by the SVD). */
START_TEST(constraint_solve_redundant_rows) {
  enum { NQ = 4, NC = 3 };
  const double A[NQ][NQ] = {{2, 0.3, 0, 0.1}, {0.5, 1.5, 0.2, 0}, {0, 0.1, 3, 0.4}, {0.2, 0, 0, 1}};
  double M[NQ * NQ], G[NC * NQ] = {1, 2, 0, -1, 0, 1, 1, 0.5, 0, 0, 0, 0};
  const double f[NQ] = {0.3, -1.2, 0.7, 2.0};
  double gamma[NC] = {0.4, -0.9, 0};
  for (int i = 0; i < NQ; i++) /* M = A Aᵀ: symmetric positive definite */
    for (int j = 0; j < NQ; j++) {
      double v = 0;
      for (int k = 0; k < NQ; k++) v += A[i][k] * A[j][k];
      M[i * NQ + j] = v;
    }
  for (int i = 0; i < NQ; i++) G[2 * NQ + i] = G[i] + G[NQ + i];
  gamma[2] = gamma[0] + gamma[1];
  double *work = malloc(csolve_doubles(NQ, NC) * sizeof(double));
  ConstraintSolver cs;
  csolve_init(&cs, NQ, NC, work);
  double qdd[NQ], lambda[NC];
  ck_assert_int_eq(csolve_accel(&cs, M, G, f, gamma, qdd, lambda), EOM_OK);
  ck_assert_int_eq(cs.rank, 2);
  for (int k = 0; k < NC; k++) {
    double v = 0;
    for (int i = 0; i < NQ; i++) v += G[k * NQ + i] * qdd[i];
    ck_assert_msg(fabs(v - gamma[k]) < 1e-12, "row %d: G qdd %.15g, gamma %.15g", k, v, gamma[k]);
  }
  for (int i = 0; i < NQ; i++) {
    double v = -f[i];
    for (int j = 0; j < NQ; j++) v += M[i * NQ + j] * qdd[j];
    for (int k = 0; k < NC; k++) v -= G[k * NQ + i] * lambda[k];
    ck_assert_msg(fabs(v) < 1e-12, "equation %d: residual %.3g", i, v);
  }
  /* The reference: S λ = r by dgelss, S and r built here with M⁻¹ from the
  ** solver's own mass solve only (checked above). */
  double Minv_G[NC][NQ], Minv_f[NQ], S[NC * NC], r[NC];
  memcpy(Minv_f, f, sizeof Minv_f);
  csolve_mass_solve(&cs, Minv_f);
  for (int k = 0; k < NC; k++) {
    memcpy(Minv_G[k], G + k * NQ, sizeof Minv_G[k]);
    csolve_mass_solve(&cs, Minv_G[k]);
  }
  for (int a = 0; a < NC; a++) {
    r[a] = gamma[a];
    for (int i = 0; i < NQ; i++) r[a] -= G[a * NQ + i] * Minv_f[i];
    for (int b = 0; b < NC; b++) { /* column-major for LAPACK; S is symmetric */
      double v = 0;
      for (int i = 0; i < NQ; i++) v += G[a * NQ + i] * Minv_G[b][i];
      S[b * NC + a] = v;
    }
  }
  int m = NC, n = NC, nrhs = 1, rank = 0, info = 0, lwork = 64;
  double sv[NC], wk[64], rcond = 1e-10;
  dgelss_(&m, &n, &nrhs, S, &m, r, &m, sv, &rcond, &rank, wk, &lwork, &info);
  ck_assert_int_eq(info, 0);
  ck_assert_int_eq(rank, 2);
  for (int k = 0; k < NC; k++)
    ck_assert_msg(fabs(lambda[k] - r[k]) < 1e-10, "lambda %d: %.15g, LAPACK %.15g", k, lambda[k],
                  r[k]);
  free(work);
}
END_TEST

/* A chain-shaped system as the sparse route meets it: M block diagonal
** (2 x 2 blocks and a 1 x 1, like a row of parallelograms in the order
** rocker, coupler, ...), each pair of rows of G touching three neighbouring
** coordinates.  Case 0 is regular; case 1 repeats a row (redundant joint,
** consistent gamma); case 2 zeroes every other row with gamma kept (the
** aligned position of a row of parallelograms: those rows vanish and
** S λ = r has no exact solution, so λ is the minimum-norm least-squares
** one); case 3 has both. */
enum { CH_N = 6, CH_NQ = 2 * CH_N + 1, CH_NC = 2 * CH_N };

static double chain_rand(unsigned *state) { /* a plain LCG: fixed, portable data */
  *state = *state * 1103515245u + 12345u;
  return ((*state >> 8) & 0xffff) / 65536.0 - 0.5;
}

static void chain_system(int kind, double *M, double *G, double *f, double *gamma) {
  unsigned st = 12345u + (unsigned)kind;
  memset(M, 0, sizeof(double) * CH_NQ * CH_NQ);
  memset(G, 0, sizeof(double) * CH_NC * CH_NQ);
  for (int b = 0; b < CH_NQ; b += 2) { /* blocks {b, b+1} and the last {NQ-1} */
    int n = b + 1 < CH_NQ ? 2 : 1;
    double a[2][2] = {{1 + chain_rand(&st), chain_rand(&st)}, {chain_rand(&st), 1 + chain_rand(&st)}};
    for (int i = 0; i < n; i++)
      for (int j = 0; j < n; j++) {
        double v = i == j ? 0.2 : 0; /* A Aᵀ + 0.2 I */
        for (int k = 0; k < n; k++) v += a[i][k] * a[j][k];
        M[(b + i) * CH_NQ + b + j] = v;
      }
  }
  for (int k = 0; k < CH_NC; k++) {
    int j = k / 2; /* rows 2j, 2j+1 touch coordinates 2j, 2j+1, 2j+2 */
    for (int i = 2 * j; i <= 2 * j + 2; i++) G[k * CH_NQ + i] = 1.5 * chain_rand(&st);
    gamma[k] = chain_rand(&st);
  }
  for (int i = 0; i < CH_NQ; i++) f[i] = 2 * chain_rand(&st);
  if (kind == 1 || kind == 3) { /* row 5 := row 3 (the joint written twice) */
    memcpy(G + 5 * CH_NQ, G + 3 * CH_NQ, sizeof(double) * CH_NQ);
    gamma[5] = gamma[3];
  }
  if (kind >= 2)
    for (int k = 0; k < CH_NC; k += 2) memset(G + k * CH_NQ, 0, sizeof(double) * CH_NQ);
}

/* λ by LAPACK's dgelss on S λ = r, S and r built with the given solver's
** mass solves (the reference, Anderson et al., LAPACK Users' Guide, 3rd
** ed., 1999, §2.4.2.1); returns the rank dgelss found. */
static int chain_reference(ConstraintSolver *cs, const double *G, const double *f,
                           const double *gamma, double *lambda) {
  double Minv_f[CH_NQ], Minv_G[CH_NC][CH_NQ], S[CH_NC * CH_NC];
  memcpy(Minv_f, f, sizeof Minv_f);
  csolve_mass_solve(cs, Minv_f);
  for (int k = 0; k < CH_NC; k++) {
    memcpy(Minv_G[k], G + k * CH_NQ, sizeof Minv_G[k]);
    csolve_mass_solve(cs, Minv_G[k]);
  }
  for (int a = 0; a < CH_NC; a++) {
    lambda[a] = gamma[a];
    for (int i = 0; i < CH_NQ; i++) lambda[a] -= G[a * CH_NQ + i] * Minv_f[i];
    for (int b = 0; b < CH_NC; b++) {
      double v = 0;
      for (int i = 0; i < CH_NQ; i++) v += G[a * CH_NQ + i] * Minv_G[b][i];
      S[b * CH_NC + a] = v;
    }
  }
  int m = CH_NC, nrhs = 1, rank = 0, info = 0, lwork = 512;
  double sv[CH_NC], wk[512], rcond = 1e-10;
  dgelss_(&m, &m, &nrhs, S, &m, lambda, &m, sv, &rcond, &rank, wk, &lwork, &info);
  ck_assert_int_eq(info, 0);
  return rank;
}

/* The sparse route (constraint_sparse.c) against the dense one and against
** LAPACK: the same rank, λ equal to LAPACK's minimum-norm solution and the
** dense route's to rounding, and the same accelerations. */
START_TEST(constraint_solve_sparse_matches_dense) {
  static const int want_rank[4] = {CH_NC, CH_NC - 1, CH_N, CH_N - 1};
  double M[CH_NQ * CH_NQ], G[CH_NC * CH_NQ], f[CH_NQ], gamma[CH_NC];
  chain_system(_i, M, G, f, gamma);
  double qdd[2][CH_NQ], lambda[2][CH_NC], ref[CH_NC];
  double *work = malloc(csolve_doubles(CH_NQ, CH_NC) * sizeof(double));
  ck_assert_ptr_nonnull(work);
  for (int route = 0; route < 2; route++) {
    ConstraintSolver cs;
    csolve_init(&cs, CH_NQ, CH_NC, work);
    cs.mode = route == 0 ? EOM_CSOLVE_DENSE : EOM_CSOLVE_SPARSE;
    ck_assert_int_eq(csolve_accel(&cs, M, G, f, gamma, qdd[route], lambda[route]), EOM_OK);
    ck_assert_int_eq(cs.sparse, route);
    ck_assert_int_eq(cs.rank, want_rank[_i]);
    if (route == 1) {
      ck_assert_int_eq(cs.nblocks, CH_N + 1);
      ck_assert_int_eq(chain_reference(&cs, G, f, gamma, ref), want_rank[_i]);
    }
  }
  double scale = 0;
  for (int k = 0; k < CH_NC; k++) scale = fmax(scale, fabs(ref[k]));
  for (int k = 0; k < CH_NC; k++) {
    ck_assert_msg(fabs(lambda[1][k] - ref[k]) < 1e-11 * scale, "case %d, lambda %d: %.15g, LAPACK %.15g",
                  _i, k, lambda[1][k], ref[k]);
    ck_assert_msg(fabs(lambda[1][k] - lambda[0][k]) < 1e-11 * scale,
                  "case %d, lambda %d: sparse %.15g, dense %.15g", _i, k, lambda[1][k], lambda[0][k]);
  }
  for (int i = 0; i < CH_NQ; i++)
    ck_assert_msg(fabs(qdd[1][i] - qdd[0][i]) < 1e-11 * (1 + fabs(qdd[0][i])),
                  "case %d, qdd %d: sparse %.15g, dense %.15g", _i, i, qdd[1][i], qdd[0][i]);
  free(work);
}
END_TEST

#ifdef HAVE_GSL
/* The checks against GSL, run by tests/gsl.test (`test_runtime gsl`). */
static Suite *gsl_suite(void) {
  Suite *s = suite_create("runtime-gsl");
  TCase *tc = tcase_create("gsl");
  tcase_set_timeout(tc, 60);
  tcase_add_loop_test(tc, pendulum_period_large_amplitude, 0, 3);
  suite_add_tcase(s, tc);
  return s;
}
#endif

/* The method list of messages, the names and the help lines are one table:
** the list is the names in order, each name is known, each has a help line. */
START_TEST(method_table_is_one_list) {
  char joined[256] = "";
  int n = 0;
  for (; eom_method_name(n); n++) {
    ck_assert(eom_method_known(eom_method_name(n)));
    ck_assert_msg(eom_method_help(n) && strlen(eom_method_help(n)) > 10, "%s", eom_method_name(n));
    if (n) strcat(joined, ", ");
    strcat(joined, eom_method_name(n));
  }
  ck_assert_int_eq(n, 4);
  ck_assert_str_eq(joined, eom_method_list());
  ck_assert_ptr_null(eom_method_help(n));
  ck_assert_ptr_null(eom_method_name(-1));
}
END_TEST

static Suite *runtime_suite(void) {
  Suite *s = suite_create("runtime");
  TCase *tc = tcase_create("integrators");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, dopri_dense_output);
  tcase_add_test(tc, kepler_period_and_angular_momentum);
  tcase_add_test(tc, integrator_orders);
  tcase_add_test(tc, constrained_model_follows_angle_model);
  tcase_add_test(tc, dopri_tolerance_proportionality);
  tcase_add_test(tc, midpoint_energy_bounded);
  tcase_add_test(tc, midpoint_pendulum_no_drift);
  tcase_add_test(tc, stiff_radau5_vs_rk4);
  tcase_add_test(tc, radau5_adaptive_stiff_steps);
  tcase_add_test(tc, radau5_tolerance_convergence);
  tcase_add_test(tc, radau5_dense_samples);
  tcase_add_test(tc, radau5_fixed_step_option);
  tcase_add_test(tc, failure_mass_not_positive_definite);
  tcase_add_test(tc, failure_collision);
  tcase_add_test(tc, bad_arguments);
  tcase_add_test(tc, method_table_is_one_list);
  tcase_add_test(tc, sample_grid);
  tcase_add_test(tc, fixed_step_count);
  suite_add_tcase(s, tc);
  TCase *ti = tcase_create("inputs");
  tcase_set_timeout(ti, 60);
  tcase_add_test(ti, inputs_table_drives_model);
  tcase_add_test(ti, inputs_table_errors);
  suite_add_tcase(s, ti);
  TCase *tm = tcase_create("modes");
  tcase_set_timeout(tm, 60);
  tcase_add_test(tm, equilibrium_with_input);
  tcase_add_test(tm, constraint_solve_redundant_rows);
  tcase_add_loop_test(tm, constraint_solve_sparse_matches_dense, 0, 4);
  tcase_add_test(tm, equilibrium_pendulum_torque);
  tcase_add_test(tm, modes_two_masses_three_springs);
  tcase_add_test(tm, modes_double_pendulum);
  tcase_add_test(tm, modes_damping_ratio);
  tcase_add_test(tm, modes_unstable_direction);
  tcase_add_test(tm, linearize_moving_state);
  tcase_add_test(tm, modes_free_pair_neutral);
  tcase_add_test(tm, untrusted_jacobian);
  tcase_add_test(tm, modes_constrained_pendulum);
  tcase_add_test(tm, constraint_initial_fix_and_projection);
  tcase_add_test(tm, baumgarte_decay_follows_its_equation);
  tcase_add_test(tm, constraint_start_at_singular_point);
  suite_add_tcase(s, tm);
  return s;
}

/* No argument: the suite.  `gsl`: the checks against GSL, or exit 77
** (automake's SKIP) when configure found no GSL. */
int main(int argc, char **argv) {
  int gsl = argc == 2 && strcmp(argv[1], "gsl") == 0;
  if (argc > 2 || (argc == 2 && !gsl)) {
    fprintf(stderr, "usage: %s [gsl]\n", argv[0]);
    return EXIT_FAILURE;
  }
#ifdef HAVE_GSL
  Suite *suite = gsl ? gsl_suite() : runtime_suite();
#else
  if (gsl) {
    puts("SKIP: configure found no GSL (Debian: libgsl-dev)");
    return 77;
  }
  Suite *suite = runtime_suite();
#endif
  SRunner *sr = srunner_create(suite);
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
