/*
** test_linearize.c — end to end: `eomc linearize` (issue 18) on models
** whose linearization is known in closed form, through its --json output
** (17 significant digits) and its text.
**
** Environment: EOMC the binary, SRCDIR the sources, CC the compiler that
** builds the models.
*/
#include <check.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "testutil.h"

/* Every test builds its models into a private cache ($EOMC_CACHE_DIR). */
static char *cache_dir;
static void setup(void) {
  cache_dir = make_temp_dir();
  setenv("EOMC_CACHE_DIR", cache_dir, 1);
}
static void teardown(void) {
  remove_tree(cache_dir);
  free(cache_dir);
}

/* Run `eomc linearize` with up to 6 more arguments; the model path is
** relative to the sources unless absolute. */
static RunResult linearize(const char *model, const char *a1, const char *a2, const char *a3,
                           const char *a4, const char *a5, const char *a6) {
  char path[1024];
  if (model[0] == '/') snprintf(path, sizeof path, "%s", model);
  else snprintf(path, sizeof path, "%s/%s", srcdir(), model);
  char *argv[] = {(char *)eomc(), "linearize", path, (char *)a1, (char *)a2, (char *)a3,
                  (char *)a4, (char *)a5, (char *)a6, NULL};
  return run_argv(argv);
}

/* The numbers of the JSON array under "key" (nested arrays flattened). */
static int json_array(const char *out, const char *key, double *v, int max) {
  char k[64];
  snprintf(k, sizeof k, "\"%s\": [", key);
  const char *s = strstr(out, k);
  ck_assert_msg(s != NULL, "no %s in:\n%s", key, out);
  s += strlen(k);
  int depth = 1, n = 0;
  while (*s && depth > 0) {
    if (*s == '[') depth++, s++;
    else if (*s == ']') depth--, s++;
    else if (*s == ',' || *s == ' ' || *s == '\n') s++;
    else {
      char *end;
      double d = strtod(s, &end);
      ck_assert_msg(end != s, "not a number at '%.20s'", s);
      ck_assert_int_lt(n, max);
      v[n++] = d;
      s = end;
    }
  }
  return n;
}

static void expect_matrix(const char *out, const char *key, const double *want, int n,
                          double tol) {
  double got[64];
  ck_assert_int_eq(json_array(out, key, got, 64), n);
  for (int i = 0; i < n; i++)
    ck_assert_msg(fabs(got[i] - want[i]) <= tol * (1 + fabs(want[i])),
                  "%s[%d] = %.17g, expected %.17g", key, i, got[i], want[i]);
}

/* A cart balancing a pole with friction on the cart (c) and at the pivot
** (gam).  Its equations of motion are those of the balance system of
** Åström & Murray, Feedback Systems, 2008, §2.1 (Example 2.1, eq. 2.9,
** from memory): with Mt = M + m, Jt = J + m l^2,
**   Mt p'' - m l cos(th) th'' + c p' + m l sin(th) th'^2 = F
**   -m l cos(th) p'' + Jt th'' + gam th' - m g l sin(th) = 0.
** About the upright (th = 0, at rest) cos -> 1, sin th -> th, th'^2 -> 0;
** inverting [[Mt, -m l], [-m l, Jt]] (determinant mu = Mt Jt - m^2 l^2)
** gives the textbook linear model (same book's linearization of it):
**   A = [[0, 0, 1, 0], [0, 0, 0, 1],
**        [0, m^2 l^2 g/mu, -c Jt/mu, -gam l m/mu],
**        [0, Mt m g l/mu, -c l m/mu, -gam Mt/mu]],
**   B = [0; 0; Jt/mu; l m/mu].
** The outputs: pole_top = p - 2 l sin th gives C row [1, -2 l, 0, 0];
** cart_speed = p' gives [0, 0, 1, 0]; D = 0. */
START_TEST(balance_cart_matches_textbook) {
  RunResult r = linearize("tests/models/balance_cart.eom", "--json", NULL, NULL, NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(r.err[0] == '\0', "unexpected warning: %s", r.err);
  double M = 1.6, m = 0.4, l = 0.35, J = 0.006, c = 0.7, gam = 0.012, g = 9.81;
  double Mt = M + m, Jt = J + m * l * l, mu = Mt * Jt - m * m * l * l;
  double A[16] = {0, 0, 1, 0,
                  0, 0, 0, 1,
                  0, m * m * l * l * g / mu, -c * Jt / mu, -gam * l * m / mu,
                  0, Mt * m * g * l / mu, -c * l * m / mu, -gam * Mt / mu};
  double B[4] = {0, 0, Jt / mu, l * m / mu};
  double C[8] = {1, -2 * l, 0, 0, 0, 0, 1, 0}, D[2] = {0, 0};
  expect_matrix(r.out, "A", A, 16, 1e-12);
  expect_matrix(r.out, "B", B, 4, 1e-12);
  expect_matrix(r.out, "C", C, 8, 1e-12);
  /* cart_speed's row comes from differences: exact for a linear output */
  expect_matrix(r.out, "D", D, 2, 1e-9);
  ck_assert_msg(strstr(r.out, "\"state\": [\"p\", \"th\", \"p'\", \"th'\"]") != NULL, "%s", r.out);
  ck_assert_msg(strstr(r.out, "\"equilibrium\": true") != NULL, "%s", r.out);
  run_free(&r);
}
END_TEST

/* A block on a spring, m x'' + k x = 0: A = [[0, 1], [-k/m, 0]] (common
** practice: x' = v, v' = -k/m x), searched from x = 0.05 to x = 0. */
START_TEST(mass_spring_matches_hand_derivation) {
  RunResult r = linearize("tests/models/mass_spring.eom", "--json", "--set", "k=50", NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  double A[4] = {0, 1, -50 / 2.5, 0}, x[2] = {0, 0};
  expect_matrix(r.out, "A", A, 4, 1e-12);
  ck_assert_int_eq(json_array(r.out, "B", x, 2), 0);
  ck_assert_msg(strstr(r.out, "\"point\": {\"x\": 0, \"x'\": 0}") != NULL, "%s", r.out);
  run_free(&r);
}
END_TEST

/* The text form labels rows and columns; --no-search keeps the given
** point (here tilted, with rates) as it is. */
START_TEST(text_labels_and_given_point) {
  RunResult r = linearize("tests/models/balance_cart.eom", "--no-search", "--at", "th=0.3",
                          "--at", "th'=0.5", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(r.err[0] == '\0', "unexpected warning: %s", r.err);
  ck_assert_msg(strstr(r.out, "linearized at the given point") != NULL, "%s", r.out);
  ck_assert_msg(strstr(r.out, "  th = 0.3\n") != NULL && strstr(r.out, "  th' = 0.5\n") != NULL,
                "%s", r.out);
  const char *heads[] = {"\nA:\n", "\nB:\n", "\nC:\n", "\nD:\n", "  pole_top ", "  cart_speed "};
  for (size_t i = 0; i < sizeof heads / sizeof heads[0]; i++)
    ck_assert_msg(strstr(r.out, heads[i]) != NULL, "no '%s' in:\n%s", heads[i], r.out);
  run_free(&r);
}
END_TEST

/* A point where the stiffness vanishes (a quartic well at its bottom):
** jacobian and differences are both zero there, which is no disagreement
** (modes once warned at such points). */
START_TEST(no_false_alarm_at_degenerate_point) {
  static const char text[] = "coord x\nparam k = 3\nkinetic x'^2/2\npotential k*x^4\n";
  char *dir = make_temp_dir();
  char *path = write_file(dir, "quartic.eom", text, strlen(text));
  RunResult r = linearize(path, "--no-search", NULL, NULL, NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(r.err[0] == '\0', "false alarm: %s", r.err);
  run_free(&r);
  free(path);
  remove_tree(dir);
  free(dir);
}
END_TEST

START_TEST(usage_errors) {
  RunResult r = linearize("tests/models/mass_spring.eom", "--bogus", NULL, NULL, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 2);
  ck_assert_msg(strstr(r.err, "unknown option '--bogus'") != NULL, "%s", r.err);
  run_free(&r);
  /* a rate is part of the point only with --no-search */
  r = linearize("tests/models/mass_spring.eom", "--at", "x'=1", NULL, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
  r = linearize("tests/models/mass_spring.eom", "--at", NULL, NULL, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
}
END_TEST

/* ------------------------------------------------ reduced states */

/* The number after "key": in out (a JSON object member). */
static double json_value(const char *out, const char *key) {
  char k[128];
  snprintf(k, sizeof k, "\"%s\": ", key);
  const char *s = strstr(out, k);
  ck_assert_msg(s != NULL, "no %s in:\n%s", key, out);
  return strtod(s + strlen(k), NULL);
}

/* A pendulum written in Cartesian coordinates (examples/cartesian_pendulum.eom:
** x, y held on a circle of radius L) linearized at its equilibrium: the
** reduced state is [x; x'] (y follows from the constraint, fixed by
** pivoting: at the bottom only y's column of the constraint's gradient is
** nonzero), and A is that of small swings, x'' = -(g/L) x (common
** practice: the pendulum's theta'' = -(g/L) sin theta with x = L sin theta).
** The output angle = atan2(x, -y) has dC/dx = 1/L there. */
START_TEST(cartesian_pendulum_minimal_coordinates) {
  RunResult r = linearize("examples/cartesian_pendulum.eom", "--json", NULL, NULL, NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(r.err[0] == '\0', "unexpected warning: %s", r.err);
  double g = 9.81, L = 0.85;
  double A[4] = {0, 1, -g / L, 0}, C[2] = {1 / L, 0};
  expect_matrix(r.out, "A", A, 4, 1e-7);
  expect_matrix(r.out, "C", C, 2, 1e-7);
  ck_assert_msg(strstr(r.out, "\"state\": [\"x\", \"x'\"]") && strstr(r.out, "\"dependent\": [\"y\"]") &&
                    strstr(r.out, "\"equilibrium\": true") && strstr(r.out, "\"reduced\": true"),
                "%s", r.out);
  ck_assert(fabs(json_value(r.out, "y") + L) < 1e-12);
  run_free(&r);
  /* at the bottom y cannot be the independent one */
  r = linearize("examples/cartesian_pendulum.eom", "--independent", "y", NULL, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 3);
  ck_assert_msg(strstr(r.err, "'y' cannot be independent"), "%s", r.err);
  run_free(&r);
  r = linearize("examples/cartesian_pendulum.eom", "--independent", "z", NULL, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
}
END_TEST

/* Away from the equilibrium (--no-search): the point goes onto the
** constraint from its independent coordinate (y = -sqrt(L^2 - x^2), y' =
** -x x'/y), and A is the linearization of the pendulum's equation in x:
** with x = L sin th, th'' = -(g/L) sin th gives, c = L^2 - x^2,
**   x'' = f(x, x') = -g x sqrt(c)/L^2 - x x'^2/c,
**   df/dx = -g sqrt(c)/L^2 + g x^2/(L^2 sqrt(c)) - x'^2/c - 2 x^2 x'^2/c^2,
**   df/dx' = -2 x x'/c
** (common practice, worked by hand).  No warning: the reduced A agrees with
** differences of the runtime's constrained dynamics. */
START_TEST(constrained_point_off_equilibrium) {
  RunResult r = linearize("examples/cartesian_pendulum.eom", "--json", "--no-search", "--at",
                          "x=0.3", "--at", "x'=0.4");
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(r.err[0] == '\0', "unexpected warning: %s", r.err);
  double g = 9.81, L = 0.85, x = 0.3, v = 0.4, c = L * L - x * x, sc = sqrt(c);
  double A[4] = {0, 1,
                 -g * sc / (L * L) + g * x * x / (L * L * sc) - v * v / c - 2 * x * x * v * v / (c * c),
                 -2 * x * v / c};
  expect_matrix(r.out, "A", A, 4, 1e-7);
  ck_assert(fabs(json_value(r.out, "y") + sc) < 1e-12);
  ck_assert(fabs(json_value(r.out, "y'") - x * v / sc) < 1e-12);
  run_free(&r);
}
END_TEST

/* A ball in a ring spinning freely about its vertical diameter, the ball
** in Cartesian coordinates of the ring's plane held on the ring by a
** position constraint (tests/models/ring_bead.eom).  About the steady
** motion with the ball at the bottom and the ring turning at ph' = W, the
** reduced state is [a; ph'; a'] (b follows from the constraint, ph turns at
** the given rate and enters nothing) and, with a = R sin th,
**   th'' = (W^2 - g/R) th,  ph'' = tau/J  (to first order),
** so A = [[0, 0, 1], [0, 0, 0], [W^2 - g/R, 0, 0]], B = [0; 1/J; 0]; the
** bottom turns unstable at W^2 = g/R (the bead on a rotating hoop:
** Strogatz, Nonlinear Dynamics and Chaos, 1994, §3.5, from memory).
** Outputs: off_axis = a gives [1, 0, 0]; height = b is flat there. */
START_TEST(spinning_ring_steady_motion_linearized) {
  RunResult r = linearize("tests/models/ring_bead.eom", "--json", "--rate", "ph=5", NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(r.err[0] == '\0', "unexpected warning: %s", r.err);
  double g = 9.81, R = 0.2, J = 0.004, W = 5;
  double A[9] = {0, 0, 1, 0, 0, 0, W * W - g / R, 0, 0}, B[3] = {0, 1 / J, 0};
  double C[6] = {1, 0, 0, 0, 0, 0}, D[2] = {0, 0};
  expect_matrix(r.out, "A", A, 9, 1e-6);
  expect_matrix(r.out, "B", B, 3, 1e-6);
  expect_matrix(r.out, "C", C, 6, 1e-6);
  expect_matrix(r.out, "D", D, 2, 1e-6);
  ck_assert_msg(strstr(r.out, "\"state\": [\"a\", \"ph'\", \"a'\"]") &&
                    strstr(r.out, "\"dependent\": [\"b\"]") &&
                    strstr(r.out, "\"given_rates\": [\"ph\"]") &&
                    strstr(r.out, "\"left_out\": []") &&
                    strstr(r.out, "\"steady_motion\": true"), "%s", r.out);
  run_free(&r);
  /* the text names what the reduction did */
  r = linearize("tests/models/ring_bead.eom", "--rate", "ph=5", NULL, NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.out, "linearized at a steady motion") &&
                    strstr(r.out, "  b: follow from the position constraints") &&
                    strstr(r.out, "  ph: turn at the given rates"), "%s", r.out);
  run_free(&r);
  /* a rate with a unit, converted to the coordinate's (rad/s) */
  r = linearize("tests/models/ring_bead.eom", "--json", "--rate", "ph=(300/pi)[rpm]", NULL, NULL,
                NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(fabs(json_value(r.out, "ph'") - 10) < 1e-12, "%s", r.out);
  run_free(&r);
  /* --rate is searched for: --no-search contradicts it */
  r = linearize("tests/models/ring_bead.eom", "--rate", "ph=5", "--no-search", NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
}
END_TEST

/* The cargo sledge on its runner (examples/cargo_sledge.eom; Chaplygin's
** sleigh) running straight at speed V: the contact point's travel x turns
** at the given rate, y' follows from the runner's velocity constraint, and
** with w = th' the reduced equations (Neimark & Fufaev, Dynamics of
** Nonholonomic Systems, 1972, ch. V, from memory) v' = a w^2,
** (I + m a^2) w' = -m a v w give, about w = 0, th = 0,
**   A = [[0, 0, 1], [0, 0, 0], [0, 0, -m a V/(I + m a^2)]]  for [th; x'; th'],
** and the output speed = cos(th) x' + sin(th) y' = x'/cos(th): C = [0, 1, 0]. */
START_TEST(sledge_straight_run_linearized) {
  RunResult r = linearize("examples/cargo_sledge.eom", "--json", "--rate=x=1.5", "--at", "th=0",
                          "--at", "y=0");
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(r.err[0] == '\0', "unexpected warning: %s", r.err);
  double m = 18, a = 0.35, I = 0.9, V = 1.5;
  double A[9] = {0, 0, 1, 0, 0, 0, 0, 0, -m * a * V / (I + m * a * a)}, C[3] = {0, 1, 0};
  expect_matrix(r.out, "A", A, 9, 1e-6);
  expect_matrix(r.out, "C", C, 3, 1e-6);
  ck_assert_msg(strstr(r.out, "\"state\": [\"th\", \"x'\", \"th'\"]") &&
                    strstr(r.out, "\"dependent\": [\"y'\"]"), "%s", r.out);
  run_free(&r);
}
END_TEST

/* The lifting platform (examples/lifting_platform.eom): a deck on three
** equal parallel cranks, six coordinates and six constraint rows of which
** one is redundant (the linkage moves with one freedom).  The deck only
** translates, its centre at (s + r cos a, r sin a) for every crank angle
** a, so by hand (Lagrange's equations in a, common practice)
**   (mc r^2 + md r^2) a'' = -(3 mc r/2 + md r) g cos a - drag a' + lift,
** about the equilibrium at the top (a = pi/2): A = [[0, 1], [k/J, -drag/J]],
** B = [0; 1/J] with J = mc r^2 + md r^2, k = (3 mc r/2 + md r) g.  The
** driven crank is kept independent (--independent a2). */
START_TEST(redundant_constraints_parallel_cranks) {
  RunResult r = linearize("examples/lifting_platform.eom", "--json", "--independent", "a2", NULL,
                          NULL, NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  double rr = 0.5, mc = 4, md = 60, g = 9.81, drag = 2;
  double J = mc * rr * rr + md * rr * rr, k = (1.5 * mc * rr + md * rr) * g;
  double A[4] = {0, 1, k / J, -drag / J}, B[2] = {0, 1 / J}, C[2] = {0, 0};
  expect_matrix(r.out, "A", A, 4, 1e-6);
  expect_matrix(r.out, "B", B, 2, 1e-6);
  expect_matrix(r.out, "C", C, 2, 1e-6);
  ck_assert_msg(strstr(r.out, "\"state\": [\"a2\", \"a2'\"]"), "%s", r.out);
  ck_assert(fabs(json_value(r.out, "a2") - 2 * atan(1)) < 1e-9);
  run_free(&r);
}
END_TEST

/* `eomc modes VERB-ARGS... NULL` */
static RunResult modes(const char *model, ...) {
  char path[1024], *argv[32];
  int n = 0;
  snprintf(path, sizeof path, "%s/%s", srcdir(), model);
  argv[n++] = (char *)eomc();
  argv[n++] = "modes";
  argv[n++] = path;
  va_list ap;
  va_start(ap, model);
  for (char *a; (a = va_arg(ap, char *)) != NULL && n < 31;) argv[n++] = a;
  va_end(ap);
  argv[n] = NULL;
  return run_argv(argv);
}

/* re/im pairs of `eomc modes --json`, sorted by growth then frequency. */
static int eigenvalues(const char *out, double *re, double *im, int max) {
  int n = 0;
  for (const char *s = strstr(out, "{\"re\": "); s && n < max; s = strstr(s + 1, "{\"re\": ")) {
    ck_assert_int_eq(sscanf(s, "{\"re\": %lf, \"im\": %lf}", &re[n], &im[n]), 2);
    n++;
  }
  return n;
}

/* `eomc modes --rate` on a model with a position constraint: the ball in
** the spinning ring above, ring at W = 9 rad/s > sqrt(g/R).  The ball's
** steady place off the bottom satisfies cos th0 = g/(R W^2) (the bead on
** a rotating hoop, Strogatz 1994, §3.5, from memory), so a = R sin th0,
** b = -R cos th0; and the eigenvalues about that steady motion are those
** of the same ring written with the ball's angle (no constraint,
** tests/models/ring_bead_angle.eom): the eigenvalues do not depend on the
** coordinates. */
START_TEST(spinning_ring_modes_with_position_constraint) {
  double g = 9.81, R = 0.2, W = 9, c0 = g / (R * W * W), th0 = acos(c0);
  RunResult r = modes("tests/models/ring_bead.eom", "--json", "--rate", "ph=9", "--at", "a=0.1",
                      NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(fabs(json_value(r.out, "a") - R * sin(th0)) < 1e-9, "%s", r.out);
  ck_assert_msg(fabs(json_value(r.out, "b") + R * c0) < 1e-9, "%s", r.out);
  ck_assert_msg(strstr(r.out, "\"reduced_state\": [\"a\", \"ph'\", \"a'\"]"), "%s", r.out);
  double re1[8], im1[8], re2[8], im2[8];
  int n1 = eigenvalues(r.out, re1, im1, 8);
  run_free(&r);
  char at[64];
  snprintf(at, sizeof at, "th=%.17g", th0 + 0.05);
  r = modes("tests/models/ring_bead_angle.eom", "--json", "--rate", "ph=9", "--at", at, NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(fabs(json_value(r.out, "th") - th0) < 1e-9, "%s", r.out);
  int n2 = eigenvalues(r.out, re2, im2, 8);
  run_free(&r);
  ck_assert_int_eq(n1, 3);
  ck_assert_int_eq(n2, 3);
  /* as sets: the order of eigenvalues with equal growth rates (here all
  ** near 0) is rounding's */
  for (int k = 0; k < 3; k++) {
    double best = INFINITY;
    for (int j = 0; j < 3; j++) best = fmin(best, fabs(re1[k] - re2[j]) + fabs(im1[k] - im2[j]));
    ck_assert_msg(best < 1e-6, "eigenvalue %g%+gi with the constraint has no match without",
                  re1[k], im1[k]);
  }
  /* the ring turns, the ball oscillates about its place: one frequency */
  ck_assert_msg(fabs(im1[0]) + fabs(im1[1]) + fabs(im1[2]) > 1, "no oscillation");
  /* the bottom: stable below sqrt(g/R) = 7.0 rad/s, unstable above */
  r = modes("tests/models/ring_bead.eom", "--json", "--rate", "ph=6.5", NULL);
  ck_assert_msg(r.status == 0 && strstr(r.out, "\"stable\": true"), "%s%s", r.out, r.err);
  run_free(&r);
  r = modes("tests/models/ring_bead.eom", "--json", "--rate", "ph=7.5", NULL);
  ck_assert_msg(r.status == 0 && strstr(r.out, "\"stable\": false"), "%s%s", r.out, r.err);
  run_free(&r);
}
END_TEST

static Suite *linearize_suite(void) {
  Suite *s = suite_create("linearize");
  TCase *tc = tcase_create("linearize");
  /* each test builds a model with the C compiler: ~1 s plain */
  tcase_set_timeout(tc, 60);
  tcase_add_checked_fixture(tc, setup, teardown);
  tcase_add_test(tc, balance_cart_matches_textbook);
  tcase_add_test(tc, mass_spring_matches_hand_derivation);
  tcase_add_test(tc, text_labels_and_given_point);
  tcase_add_test(tc, no_false_alarm_at_degenerate_point);
  tcase_add_test(tc, usage_errors);
  suite_add_tcase(s, tc);
  TCase *red = tcase_create("reduced");
  /* each test builds a model with the C compiler: ~1 s plain */
  tcase_set_timeout(red, 60);
  tcase_add_checked_fixture(red, setup, teardown);
  tcase_add_test(red, cartesian_pendulum_minimal_coordinates);
  tcase_add_test(red, constrained_point_off_equilibrium);
  tcase_add_test(red, spinning_ring_steady_motion_linearized);
  tcase_add_test(red, sledge_straight_run_linearized);
  tcase_add_test(red, redundant_constraints_parallel_cranks);
  tcase_add_test(red, spinning_ring_modes_with_position_constraint);
  suite_add_tcase(s, red);
  return s;
}

int main(void) {
  SRunner *sr = srunner_create(linearize_suite());
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
