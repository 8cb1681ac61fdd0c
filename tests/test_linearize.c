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
  return s;
}

int main(void) {
  SRunner *sr = srunner_create(linearize_suite());
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
