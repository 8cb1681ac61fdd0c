/*
** test_friction.c — end to end: Coulomb sticking in `eomc sim`.  Models
** with sign(rate) friction come to rest and stay there (the friction is
** then a multiplier within its bound), slip again when the other forces
** exceed the bound, and finish in a bounded number of steps with every
** method.  Checked against closed forms of Newton's law with dry
** friction, sources beside each test.
*/
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "testutil.h"

static const double PI = 3.141592653589793238462643383279502884;
static char *cache_dir;

static char *model_path(const char *name) {
  static char buf[4096];
  snprintf(buf, sizeof buf, "%s/tests/sim/%s", srcdir(), name);
  return buf;
}

static void setup(void) {
  cache_dir = make_temp_dir();
  setenv("EOMC_CACHE_DIR", cache_dir, 1);
}

static void teardown(void) {
  remove_tree(cache_dir);
  free(cache_dir);
}

/* Accepted steps in the summary line "METHOD, N steps (...)". */
static long summary_steps(const char *err) {
  const char *s = strstr(err, " steps (");
  ck_assert_msg(s != NULL, "no summary in\n%s", err);
  while (s > err && s[-1] != ' ') s--;
  return atol(s);
}

/* Time of the first logged event whose line contains `what`. */
static double event_time(const char *err, const char *what) {
  const char *s = strstr(err, what);
  ck_assert_msg(s != NULL, "no '%s' event in\n%s", what, err);
  while (s > err && s[-1] != '\n') s--;
  ck_assert_msg(strncmp(s, "event at t = ", 13) == 0, "%s", s);
  return strtod(s + 13, NULL);
}

/* Column `col` of the last row of a CSV text. */
static double last_value(const char *csv, int col) {
  size_t len = strlen(csv);
  ck_assert_msg(len > 1 && csv[len - 1] == '\n', "no rows in\n%s", csv);
  const char *row = csv + len - 1;
  while (row > csv && row[-1] != '\n') row--;
  ck_assert_msg(row > csv, "no rows in\n%s", csv);
  for (int i = 0; i < col; i++) {
    row = strchr(row, ',');
    ck_assert_msg(row != NULL, "no column %d", col);
    row++;
  }
  return strtod(row, NULL);
}

static RunResult sim(const char *model, const char *until, const char *method, const char *extra1,
                     const char *extra2) {
  char *argv[] = {(char *)eomc(), "sim", model_path(model), "--until", (char *)until,
                  "--every", "0.01", "--method", (char *)method, "--rtol", "1e-10", "--atol",
                  "1e-14", "--events", (char *)extra1, (char *)extra2, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s %s: status %d: %s", model, method, r.status, r.err);
  return r;
}

/* The spring-loaded crate of coulomb_block.eom (m = 1.2 kg, k = 300 N/m,
** F = 2.5 N, x0 = 0.105 m): each half cycle is a free oscillation about
** +-F/k lasting pi/w, the turning points drop by 2F/k per half cycle, and
** the crate stops at the first turning point with k|x| <= F (Den Hartog,
** Mechanical Vibrations, the section on Coulomb damping; from memory):
** x0 = 0.105 drops by 1/60 m per half cycle to x = 0.005 after six half
** cycles, at t = 6 pi / w.  There it sticks and stays for good. */
static const double crate_x_stop = 0.105 - 6 * (2 * 2.5 / 300);

static void crate_stops(const char *method, double time_tol) {
  double w = sqrt(300 / 1.2), t_stop = 6 * PI / w;
  RunResult r = sim("coulomb_block.eom", "20", method, NULL, NULL);
  ck_assert_msg(fabs(event_time(r.err, "sticks") - t_stop) < time_tol, "%s sticks at %.12g, want %.12g",
                method, event_time(r.err, "sticks"), t_stop);
  ck_assert_msg(fabs(last_value(r.out, 1) - crate_x_stop) < 1e-8, "%s: x = %.12g, want %.12g",
                method, last_value(r.out, 1), crate_x_stop);
  ck_assert_msg(last_value(r.out, 2) == 0, "%s: the stuck rate is %g", method, last_value(r.out, 2));
  ck_assert_msg(strstr(r.err, "slips") == NULL, "%s: it slipped again:\n%s", method, r.err);
  long steps = summary_steps(r.err);
  run_free(&r);
  /* at rest, a thousand times longer costs only a few more steps */
  r = sim("coulomb_block.eom", "20000", method, NULL, NULL);
  long more = summary_steps(r.err) - steps;
  ck_assert_msg(more < 100, "%s: %ld more steps to stay at rest", method, more);
  ck_assert_msg(fabs(last_value(r.out, 1) - crate_x_stop) < 1e-8, "%s: x = %.12g", method,
                last_value(r.out, 1));
  run_free(&r);
}

START_TEST(crate_stops_dopri) { crate_stops("dopri", 1e-8); }
END_TEST

/* radau5 controls its error at rtol^0.8 (Hairer & Wanner II, §IV.8): 1e-8 */
START_TEST(crate_stops_radau5) { crate_stops("radau5", 1e-7); }
END_TEST

/* The fixed-step methods see the rate cross zero within a step and stick
** it there: the stop is first-order accurate in the step, and the rate is
** held at exactly zero from then on. */
START_TEST(crate_stops_fixed_step) {
  const char *methods[] = {"rk4", "midpoint"};
  for (int i = 0; i < 2; i++) {
    RunResult r = sim("coulomb_block.eom", "5", methods[i], "--step", "1e-4");
    ck_assert_msg(strstr(r.err, "sticks") != NULL, "%s:\n%s", methods[i], r.err);
    ck_assert_msg(fabs(last_value(r.out, 1) - crate_x_stop) < 1e-4, "%s: x = %.12g", methods[i],
                  last_value(r.out, 1));
    ck_assert_msg(last_value(r.out, 2) == 0, "%s: rate %g", methods[i], last_value(r.out, 2));
    run_free(&r);
  }
}
END_TEST

/* The crate pushed up the ramp of ramp_crate.eom at v0 = 2.5 m/s
** decelerates at g (sin a + mu cos a) and stops after s1 = v0^2 / (2 g
** (sin a + mu cos a)) at t1 = v0 / (g (sin a + mu cos a)); with tan a <=
** mu it stays there, else it slides back down at g (sin a - mu cos a)
** (Newton's second law with Coulomb friction on an incline; from memory). */
START_TEST(ramp_holds_or_slides_back) {
  const double g = 9.81, a = 0.2, v0 = 2.5;
  const char *method[] = {"dopri", "radau5"};
  for (int i = 0; i < 2; i++) {
    double mu = 0.35, dec = g * (sin(a) + mu * cos(a));
    RunResult r = sim("ramp_crate.eom", "3", method[i], NULL, NULL);
    ck_assert_msg(fabs(event_time(r.err, "sticks") - v0 / dec) < 1e-8, "%s", r.err);
    ck_assert_msg(fabs(last_value(r.out, 1) - v0 * v0 / (2 * dec)) < 1e-8, "s = %.12g",
                  last_value(r.out, 1));
    run_free(&r);
    mu = 0.1, dec = g * (sin(a) + mu * cos(a));
    double back = g * (sin(a) - mu * cos(a)), t1 = v0 / dec, t = 3;
    r = sim("ramp_crate.eom", "3", method[i], "--set", "mu=0.1");
    ck_assert_msg(strstr(r.err, "sticks") == NULL, "%s", r.err);
    double want = v0 * v0 / (2 * dec) - back * (t - t1) * (t - t1) / 2;
    ck_assert_msg(fabs(last_value(r.out, 1) - want) < 1e-8, "%s: s = %.12g, want %.12g", method[i],
                  last_value(r.out, 1), want);
    ck_assert_msg(fabs(last_value(r.out, 2) + back * (t - t1)) < 1e-8, "s' = %.12g",
                  last_value(r.out, 2));
    run_free(&r);
  }
}
END_TEST

/* The pallet of winched_pallet.eom starts at rest and sticks; the winch
** force c t reaches the friction bound F at t_r = F/c = 1.5 s, where it
** slips, and then m x'' = c (t - t_r), x = c (t - t_r)^3 / (6 m)
** (integrating Newton's law twice; from memory): 1.40625 m at t = 3 s. */
START_TEST(pallet_slips_when_the_winch_exceeds_the_bound) {
  const char *method[] = {"dopri", "radau5"};
  for (int i = 0; i < 2; i++) {
    RunResult r = sim("winched_pallet.eom", "3", method[i], NULL, NULL);
    ck_assert_msg(fabs(event_time(r.err, "sticks")) == 0, "%s", r.err);
    ck_assert_msg(fabs(event_time(r.err, "slips") - 1.5) < 1e-8, "%s: slips at %.12g", method[i],
                  event_time(r.err, "slips"));
    ck_assert_msg(fabs(last_value(r.out, 1) - 300 * 3.375 / 720) < 1e-8, "%s: x = %.12g", method[i],
                  last_value(r.out, 1));
    run_free(&r);
  }
}
END_TEST

/* Rows of a CSV text: column col of every row into v (at most cap). */
static int columns_of(const char *csv, int col, double *v, int cap) {
  int n = 0;
  for (const char *p = strchr(csv, '\n'); p && p[1] && n < cap; p = strchr(p + 1, '\n')) {
    const char *f = p + 1;
    for (int i = 0; i < col && f; i++) f = strchr(f, ',') ? strchr(f, ',') + 1 : NULL;
    ck_assert_msg(f != NULL, "short row");
    v[n++] = strtod(f, NULL);
  }
  return n;
}

/* The tote of stacked_carts.eom sticks to its cart at t_s: from then on
** the two ride as one mass m1 + m2 on the spring k with the guide's
** friction F/2 against the motion, x(t) = c + (x_s - c) cos w(t - t_s) +
** v_s/w sin w(t - t_s), w = sqrt(k / (m1 + m2)), c = F/(2k) while x' < 0
** (harmonic motion under a constant force; from memory), and their
** relative rate stays zero (to rounding) while the cart turns and stops. */
START_TEST(stacked_carts_ride_together) {
  const char *method[] = {"dopri", "radau5"};
  for (int i = 0; i < 2; i++) {
    RunResult r = sim("stacked_carts.eom", "3", method[i], NULL, NULL);
    double t_s = event_time(r.err, "switch 1 (13:13 sign) sticks");
    ck_assert_msg(strstr(r.err, "switch 1 (13:13 sign) slips") == NULL, "%s", r.err);
    static double t[400], x[400], xd[400], yd[400];
    int n = columns_of(r.out, 0, t, 400);
    ck_assert_int_eq(columns_of(r.out, 1, x, 400), n);
    ck_assert_int_eq(columns_of(r.out, 3, xd, 400), n);
    ck_assert_int_eq(columns_of(r.out, 4, yd, 400), n);
    int k0 = (int)ceil(t_s / 0.01 + 1e-9);  /* the first row after the stick */
    double w = sqrt(50.0 / 3), c = 3 / (2 * 50.0), turn = INFINITY;
    for (int k = k0; k < n; k++) {
      ck_assert_msg(fabs(xd[k] - yd[k]) < 1e-13, "%s: t = %g: x' = %.17g, y' = %.17g", method[i],
                    t[k], xd[k], yd[k]);
      if (xd[k] >= 0) turn = fmin(turn, t[k]);
      if (t[k] >= turn) continue;
      double dt = t[k] - t[k0], want = c + (x[k0] - c) * cos(w * dt) + xd[k0] / w * sin(w * dt);
      ck_assert_msg(fabs(x[k] - want) < 1e-8, "%s: t = %g: x = %.12g, want %.12g", method[i],
                    t[k], x[k], want);
    }
    ck_assert_msg(turn < 1, "%s: the cart never turned", method[i]);
    run_free(&r);
  }
}
END_TEST

static Suite *friction_suite(void) {
  Suite *s = suite_create("friction");
  TCase *tc = tcase_create("sticking");
  tcase_add_checked_fixture(tc, setup, teardown);
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, crate_stops_dopri);
  tcase_add_test(tc, crate_stops_radau5);
  tcase_add_test(tc, crate_stops_fixed_step);
  tcase_add_test(tc, ramp_holds_or_slides_back);
  tcase_add_test(tc, pallet_slips_when_the_winch_exceeds_the_bound);
  tcase_add_test(tc, stacked_carts_ride_together);
  suite_add_tcase(s, tc);
  return s;
}

int main(void) {
  SRunner *sr = srunner_create(friction_suite());
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
