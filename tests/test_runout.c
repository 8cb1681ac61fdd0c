/*
** test_runout.c — end to end: what `eomc sim` writes.  Rows at --every,
** independent of the integration step; the column layout and --columns.
**
** Reference solution: an undamped mass on a linear spring released from
** rest at x0 moves as x(t) = x0 cos(w t), w = sqrt(k/m) (W. T. Thomson and
** M. D. Dahleh, Theory of Vibration with Applications, 5th ed., 1998, §2.1;
** from memory — it is the textbook solution of m x'' + k x = 0).
*/
#include <check.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "testutil.h"

static char *cache_dir, *work_dir, *hook_model;

/* A crane hook on a stiff rope, bobbing vertically: w = sqrt(k/m) = 4 rad/s. */
static const char hook_text[] =
    "# hook_bob.eom: a crane hook bobbing on its rope's stretch\n"
    "model hook_bob\n"
    "coord z [m] \"stretch of the rope below rest\"\n"
    "param m = 12.5 [kg] \"hook block\"\n"
    "param k = 200 [N/m] \"rope stiffness\"\n"
    "input F [N] \"pull on the hook\"\n"
    "kinetic 1/2*m*z'^2\n"
    "potential 1/2*k*z^2\n"
    "force z = F\n"
    "output rope_force = k*z [N]\n"
    "initial z = 0.05\n";
static const double X0 = 0.05, W = 4.0;

static void setup(void) {
  cache_dir = make_temp_dir();
  work_dir = make_temp_dir();
  setenv("EOMC_CACHE_DIR", cache_dir, 1);
  hook_model = write_file(work_dir, "hook_bob.eom", hook_text, strlen(hook_text));
}

static void teardown(void) {
  remove_tree(cache_dir);
  remove_tree(work_dir);
  free(cache_dir);
  free(work_dir);
  free(hook_model);
}

/* Parsed CSV text: header names and a row-major table of numbers. */
typedef struct Table {
  char names[32][32];
  int ncols, nrows;
  double *v;
} Table;

static Table parse_csv(const char *text) {
  Table t;
  memset(&t, 0, sizeof t);
  const char *p = text;
  while (*p && *p != '\n') {
    size_t n = strcspn(p, ",\n");
    ck_assert(t.ncols < 32 && n < 32);
    memcpy(t.names[t.ncols], p, n);
    t.names[t.ncols++][n] = '\0';
    p += n;
    if (*p == ',') p++;
  }
  int lines = count_lines(text) - 1;
  t.v = malloc(((size_t)lines * (size_t)t.ncols + 1) * sizeof(double));
  for (p = strchr(text, '\n'); p && p[1]; p = strchr(p, '\n')) {
    p++;
    for (int c = 0; c < t.ncols; c++) {
      char *end;
      t.v[t.nrows * t.ncols + c] = strtod(p, &end);
      ck_assert_msg(end != p, "not a number at row %d col %d", t.nrows, c);
      p = end + (*end == ',');
    }
    t.nrows++;
  }
  return t;
}

static double cell(const Table *t, int row, int col) { return t->v[row * t->ncols + col]; }

/* eomc sim HOOK ARGS... (a NULL ends the arguments). */
static RunResult sim(const char *first, ...) {
  char *argv[32] = {(char *)eomc(), "sim", hook_model};
  int n = 3;
  va_list ap;
  va_start(ap, first);
  for (const char *a = first; a; a = va_arg(ap, const char *)) {
    ck_assert(n < 31);
    argv[n++] = (char *)a;
  }
  va_end(ap);
  argv[n] = NULL;
  return run_argv(argv);
}

/* rk4 with h = 0.003 and rows every 0.01: rows land between steps and come
** from the cubic Hermite interpolant; a linear one would be off by ~1e-6. */
START_TEST(every_between_fixed_steps) {
  RunResult r = sim("--method", "rk4", "--step", "0.003", "--every", "0.01", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  /* --until 10 by default: 3334 steps of exactly 0.003 (the last shortened). */
  ck_assert_msg(strstr(r.err, " 3334 steps"), "%s", r.err);
  Table t = parse_csv(r.out);
  ck_assert_int_eq(t.nrows, 1001);
  ck_assert_str_eq(t.names[1], "z");
  double worst = 0;
  for (int i = 0; i < t.nrows; i++) {
    double time = cell(&t, i, 0);
    ck_assert_double_eq_tol(time, 0.01 * i, 1e-12);
    worst = fmax(worst, fabs(cell(&t, i, 1) - X0 * cos(W * time)));
    worst = fmax(worst, fabs(cell(&t, i, 2) + X0 * W * sin(W * time)) / W);
  }
  ck_assert_msg(worst < 2e-9, "off the closed form by %g m", worst);
  ck_assert(strstr(r.out, "\n0.07,") && strstr(r.out, "\n10,"));
  free(t.v);
  run_free(&r);
}
END_TEST

/* Every method gives the rows asked for, whatever its steps (h = 0.004 does
** not divide the rows: the fixed-step ones interpolate). */
START_TEST(every_for_each_method) {
  static const char *const methods[] = {"dopri", "radau5", "midpoint", "rk4"};
  for (int k = 0; k < 4; k++) {
    RunResult r = sim("--method", methods[k], "--until", "2", "--every", "0.05",
                      "--step", "0.004", NULL);
    ck_assert_msg(r.status == 0, "%s: status %d: %s", methods[k], r.status, r.err);
    Table t = parse_csv(r.out);
    ck_assert_int_eq(t.nrows, 41);
    double tol = strcmp(methods[k], "midpoint") == 0 ? 1e-3 : 1e-6;
    for (int i = 0; i < t.nrows; i++) {
      double time = cell(&t, i, 0);
      ck_assert_double_eq_tol(time, 0.05 * i, 1e-12);
      ck_assert_double_eq_tol(cell(&t, i, 1), X0 * cos(W * time), tol * X0);
    }
    free(t.v);
    run_free(&r);
  }
}
END_TEST

/* Defaults: about 1,000 rows; a --step longer than until/1000 sets the rows. */
START_TEST(every_defaults) {
  RunResult r = sim("--until", "3", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_int_eq(count_lines(r.out), 1002);
  run_free(&r);
  r = sim("--method", "rk4", "--until", "1", "--step", "0.1", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_int_eq(count_lines(r.out), 12);
  ck_assert_msg(strstr(r.err, " 10 steps"), "%s", r.err);
  run_free(&r);
  /* A fixed step that does not divide the rows: still exactly ceil(T/h) steps. */
  r = sim("--method", "midpoint", "--until", "1", "--step", "0.03", "--every", "0.1", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_int_eq(count_lines(r.out), 12);
  ck_assert_msg(strstr(r.err, " 34 steps"), "%s", r.err);
  run_free(&r);
  static const char *const bad[] = {"0", "-1", "x", "20"};
  for (int i = 0; i < 4; i++) {
    r = sim("--every", bad[i], NULL);
    ck_assert_msg(r.status == 2, "--every %s: status %d", bad[i], r.status);
    ck_assert_msg(strstr(r.err, "--every"), "%s", r.err);
    run_free(&r);
  }
}
END_TEST

/* SPEC 4.6 order: t, coordinates, rates, outputs, inputs, multipliers, T, V;
** the inputs column holds the values the run used. */
START_TEST(columns_in_spec_order) {
  RunResult r = sim("--until", "1", "--set", "F=2.5", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(strncmp(r.out, "t,z,z',rope_force,F,T,V\n", 24) == 0, "%s", r.out);
  Table t = parse_csv(r.out);
  for (int i = 0; i < t.nrows; i++) {
    double z = cell(&t, i, 1), zd = cell(&t, i, 2);
    ck_assert(cell(&t, i, 4) == 2.5);
    ck_assert_double_eq_tol(cell(&t, i, 3), 200 * z, 1e-12);
    ck_assert_double_eq_tol(cell(&t, i, 5), 0.5 * 12.5 * zd * zd, 1e-12);
    ck_assert_double_eq_tol(cell(&t, i, 6), 0.5 * 200 * z * z, 1e-12);
  }
  free(t.v);
  run_free(&r);
}
END_TEST

/* --set VALUE is an expression with an optional unit, converted to the
** declared one.  k = 0.8 kN/m = 800 N/m makes w = sqrt(800/12.5) = 8 rad/s;
** z = 20 mm starts the swing at 0.02 m (the prefixes are the SI brochure's:
** BIPM, The International System of Units, 9th ed., 2019, table 7). */
START_TEST(set_with_units_and_expressions) {
  RunResult r = sim("--until", "1", "--every", "0.1", "--set", "k=0.8[kN/m]", "--set",
                    "z=20 [mm]", "--set", "F=m*0", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  Table t = parse_csv(r.out);
  ck_assert_int_eq(t.nrows, 11);
  for (int i = 0; i < t.nrows; i++) {
    double time = cell(&t, i, 0);
    ck_assert_double_eq_tol(cell(&t, i, 1), 0.02 * cos(8 * time), 1e-7);
    ck_assert_double_eq_tol(cell(&t, i, 3), 800 * cell(&t, i, 1), 1e-9);
  }
  free(t.v);
  run_free(&r);
  /* An expression of parameters and pi: k = 4 m pi^2/pi^2 = 50 N/m, so
  ** w = 2; F = pi/6 N is held by the input column exactly. */
  r = sim("--until", "1", "--every", "0.5", "--set", "k=4*m*pi^2/pi^2", "--set", "F=pi/6",
          "--set", "z'=0[mm/s]", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  t = parse_csv(r.out);
  ck_assert_int_eq(t.nrows, 3);
  ck_assert(cell(&t, 0, 4) == 3.14159265358979323846 / 6);
  /* z'' = -(k/m) z + F/m at rest at z = 0.05: -(50/12.5) 0.05 + (pi/6)/12.5 */
  double z = cell(&t, 1, 1), zs = (3.14159265358979323846 / 6) / 50;
  ck_assert_double_eq_tol(z, zs + (X0 - zs) * cos(2 * 0.5), 1e-7);
  free(t.v);
  run_free(&r);
}
END_TEST

/* A wrong value is a usage error that names both units, or the problem,
** with a caret under it. */
START_TEST(set_errors) {
  static const char *const bad[][2] = {
      {"k=2[kg]", "[kg] (in SI: kg) does not fit the declared unit [N/m]"},
      {"z=1[deg]", "does not fit the declared unit [m]"},
      {"k=2[furlong]", "unknown unit 'furlong'"},
      {"k=2*q", "'q' is not a parameter"},
      {"k=2+", "expected an expression"},
      {"k=1/0", "not a finite number"},
      {"k=", "no value given"},
      {"k=[1,2]", "no value given"},
      {"k=(1)[1,2]", "in the unit [1,2]"},
      {"k=1;kinetic z", "not one expression"},
      {"nope=1", "not a name this option can set"},
  };
  for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
    RunResult r = sim("--until", "0.1", "--set", bad[i][0], NULL);
    ck_assert_msg(r.status == 2, "%s: status %d: %s", bad[i][0], r.status, r.err);
    ck_assert_msg(strstr(r.err, bad[i][1]), "%s: %s", bad[i][0], r.err);
    ck_assert_msg(r.out[0] == '\0', "%s wrote rows", bad[i][0]);
    run_free(&r);
  }
  RunResult r = sim("--until", "0.1", "--set", "k=2[kg]", NULL);
  ck_assert_msg(strstr(r.err, "\n    k=2[kg]\n        ^"), "%s", r.err);
  run_free(&r);
}
END_TEST

static Suite *make_suite(void) {
  Suite *s = suite_create("runout");
  TCase *tc = tcase_create("rows");
  tcase_add_checked_fixture(tc, setup, teardown);
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, every_between_fixed_steps);
  tcase_add_test(tc, every_for_each_method);
  tcase_add_test(tc, every_defaults);
  tcase_add_test(tc, columns_in_spec_order);
  suite_add_tcase(s, tc);
  tc = tcase_create("values");
  tcase_add_checked_fixture(tc, setup, teardown);
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, set_with_units_and_expressions);
  tcase_add_test(tc, set_errors);
  suite_add_tcase(s, tc);
  return s;
}

int main(int argc, char **argv) { return run_test_main(argc, argv, make_suite); }
