/*
** test_sim.c — end to end: run the eomc binary's `sim` and `modes` on the
** model files in tests/sim and check the numbers against published
** formulas, the CSV against its documented columns, and the exit codes.
** The binary is $EOMC, the sources $SRCDIR; generated objects go to a
** private cache directory ($EOMC_CACHE_DIR).
*/
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "testutil.h"

static const double PI = 3.141592653589793238462643383279502884;
static char *cache_dir, *work_dir;


static char *model_path(const char *name) {
  static char buf[4096];
  snprintf(buf, sizeof buf, "%s/tests/sim/%s", srcdir(), name);
  return buf;
}

static char *work_path(const char *name) {
  char *p = malloc(strlen(work_dir) + strlen(name) + 2);
  sprintf(p, "%s/%s", work_dir, name);
  return p;
}

static void setup(void) {
  cache_dir = make_temp_dir();
  work_dir = make_temp_dir();
  setenv("EOMC_CACHE_DIR", cache_dir, 1);
}

static void teardown(void) {
  remove_tree(cache_dir);
  remove_tree(work_dir);
  free(cache_dir);
  free(work_dir);
}

/* Value of the k-th (0-based) occurrence of "key": NUMBER in a JSON text. */
static double json_number(const char *text, const char *key, int k) {
  char pat[128];
  snprintf(pat, sizeof pat, "\"%s\": ", key);
  const char *s = text;
  for (int i = 0; i <= k; i++) {
    s = strstr(s, pat);
    ck_assert_msg(s != NULL, "no %s #%d in\n%s", key, k, text);
    s += strlen(pat);
  }
  return strtod(s, NULL);
}

/* ------------------------------------------------------------- modes */

/* Bead on a hoop spinning at w: off-bottom equilibrium cos(theta0) = g / (w^2 R)
** and small oscillations there at w sin(theta0) (Marion, Classical
** Dynamics of Particles and Systems, prob. 7-18). */
START_TEST(modes_bead_on_hoop) {
  char *argv[] = {(char *)eomc(), "modes", model_path("bead_hoop.eom"), "--at", "theta=1",
                  "--json", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  double g = 9.81, R = 0.5, w = 7;
  double theta0 = acos(g / (w * w * R));
  double theta = json_number(r.out, "theta", 0);
  ck_assert_msg(fabs(theta - theta0) < 1e-9, "theta0 %.12g, want %.12g", theta, theta0);
  double omega = json_number(r.out, "omega_rad_s", 0);
  ck_assert_msg(fabs(omega - w * sin(theta0)) < 1e-7 * omega, "omega %.12g, want %.12g", omega,
                w * sin(theta0));
  ck_assert_msg(fabs(json_number(r.out, "frequency_hz", 0) - omega / (2 * PI)) < 1e-9, "%s", r.out);
  ck_assert_ptr_nonnull(strstr(r.out, "\"damped\": false"));
  run_free(&r);

  /* With the same --set the bottom is unstable once w^2 > g/R:
  ** omega^2 = g/R - w^2 < 0, reported as a growth rate, not NaN. */
  char *argv2[] = {(char *)eomc(), "modes", model_path("bead_hoop.eom"), "--at", "theta=0", NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_ptr_nonnull(strstr(r.out, "unstable direction"));
  ck_assert_ptr_null(strstr(r.out, "nan"));
  char want[64];
  snprintf(want, sizeof want, "exp(%.6g t)", sqrt(w * w - g / R));
  ck_assert_msg(strstr(r.out, want) != NULL, "want %s in\n%s", want, r.out);
  run_free(&r);

  /* A slower hoop (w^2 < g/R): only the bottom, at sqrt(g/R - w^2). */
  char *argv3[] = {(char *)eomc(), "modes", model_path("bead_hoop.eom"), "--set", "w=3",
                   "--at", "theta=0.2", "--json", NULL};
  r = run_argv(argv3);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert(fabs(json_number(r.out, "theta", 0)) < 1e-9);
  ck_assert(fabs(json_number(r.out, "omega_rad_s", 0) - sqrt(g / R - 9)) < 1e-7);
  run_free(&r);
}
END_TEST

/* Two equal masses between three equal springs: omega = sqrt(k/m) and
** sqrt(3k/m) (Taylor, Classical Mechanics, 2005, §11.2); with a damper c
** on each mass the modes keep their shapes and have damping ratios
** c / (2 sqrt(k m)) and c / (2 sqrt(3 k m)) (common practice:
** zeta = c / (2 sqrt(k m)) per modal degree of freedom). */
START_TEST(modes_damped_pair) {
  char *argv[] = {(char *)eomc(), "modes", model_path("damped_pair.eom"), "--json", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  double m = 1.5, k = 60, c = 0.9;
  ck_assert_ptr_nonnull(strstr(r.out, "\"damped\": true"));
  ck_assert_double_eq_tol(json_number(r.out, "omega_rad_s", 0), sqrt(k / m), 1e-9);
  ck_assert_double_eq_tol(json_number(r.out, "omega_rad_s", 1), sqrt(3 * k / m), 1e-9);
  ck_assert_double_eq_tol(json_number(r.out, "damping_ratio", 0), c / (2 * sqrt(k * m)), 1e-12);
  ck_assert_double_eq_tol(json_number(r.out, "damping_ratio", 1), c / (2 * sqrt(3 * k * m)),
                          1e-12);
  /* Damped frequency omega sqrt(1 - zeta^2) (common practice). */
  double z1 = c / (2 * sqrt(k * m)), w1 = sqrt(k / m);
  ck_assert_double_eq_tol(json_number(r.out, "damped_omega_rad_s", 0), w1 * sqrt(1 - z1 * z1),
                          1e-9);
  ck_assert_double_eq_tol(json_number(r.out, "frequency_hz", 0), w1 / (2 * PI), 1e-9);
  ck_assert_double_eq_tol(json_number(r.out, "period_s", 0), 2 * PI / (w1 * sqrt(1 - z1 * z1)),
                          1e-9);
  run_free(&r);
  /* Without the dampers: the symmetric problem, shapes (1, 1) and (1, -1). */
  char *argv2[] = {(char *)eomc(), "modes", model_path("damped_pair.eom"), "--set", "c=0", NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.out, "shape: x1 = 1, x2 = 1") && strstr(r.out, "x2 = -1"), "%s", r.out);
  ck_assert_ptr_nonnull(strstr(r.out, "rad/s"));
  ck_assert_ptr_nonnull(strstr(r.out, "Hz"));
  ck_assert_ptr_nonnull(strstr(r.out, "period"));
  run_free(&r);
  /* A steady push F on the first cart moves the equilibrium to K x = (F, 0):
  ** x1 = 2F/(3k), x2 = F/(3k) (statics, common practice); the modes stay. */
  char *argv3[] = {(char *)eomc(), "modes", model_path("damped_pair.eom"), "--set", "F=60",
                   "--json", NULL};
  r = run_argv(argv3);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_double_eq_tol(json_number(r.out, "x1", 0), 2 * 60 / (3 * k), 1e-10);
  ck_assert_double_eq_tol(json_number(r.out, "x2", 0), 60 / (3 * k), 1e-10);
  ck_assert_double_eq_tol(json_number(r.out, "omega_rad_s", 0), sqrt(k / m), 1e-9);
  run_free(&r);
}
END_TEST

/* Double pendulum, equal masses and lengths: omega^2 = (g/l)(2 ∓ √2), with
** shapes (1, √2) and (1, -√2) for (a1, a2) (Kibble & Berkshire, Classical
** Mechanics, 5th ed., 2004, eq. 11.21).  Its mass matrix is full, so this
** checks the whole chain: rates of `let`s, coupling, the LDLᵀ solve. */
START_TEST(modes_twin_pendulum) {
  char *argv[] = {(char *)eomc(), "modes", model_path("twin_pendulum.eom"), "--at", "a1=0.1",
                  "--at", "a2=-0.2", "--json", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  double g = 9.81, l = 0.8;
  ck_assert(fabs(json_number(r.out, "a1", 0)) < 1e-9 && fabs(json_number(r.out, "a2", 0)) < 1e-9);
  double w1 = json_number(r.out, "omega_rad_s", 0), w2 = json_number(r.out, "omega_rad_s", 1);
  ck_assert_msg(fabs(w1 * w1 / (g / l * (2 - sqrt(2.0))) - 1) < 1e-9, "omega1 %.12g", w1);
  ck_assert_msg(fabs(w2 * w2 / (g / l * (2 + sqrt(2.0))) - 1) < 1e-9, "omega2 %.12g", w2);
  /* Shapes: a2 is the largest entry (1), a1 = ±1/√2. */
  ck_assert_double_eq_tol(json_number(r.out, "a1", 1), 1 / sqrt(2.0), 1e-8);
  ck_assert_double_eq_tol(json_number(r.out, "a1", 2), -1 / sqrt(2.0), 1e-8);
  run_free(&r);
}
END_TEST

static double *csv_column(const char *csv, int col, int *n);

/* A constrained model: the lamp on its cable is a simple pendulum,
** omega = sqrt(g/L) (common practice), swinging along x at the bottom; the
** simulation keeps it on its circle. */
START_TEST(constrained_hanging_lamp) {
  char *argv[] = {(char *)eomc(), "modes", model_path("hanging_lamp.eom"), "--json", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  double g = 9.81, L = 1.2;
  ck_assert_double_eq_tol(json_number(r.out, "y", 0), -L, 1e-9);
  ck_assert_double_eq_tol(json_number(r.out, "omega_rad_s", 0), sqrt(g / L), 1e-7);
  ck_assert_double_eq_tol(json_number(r.out, "x", 1), 1, 1e-9);
  ck_assert_double_eq_tol(json_number(r.out, "y", 1), 0, 1e-7);
  run_free(&r);
  char *argv2[] = {(char *)eomc(), "sim", model_path("hanging_lamp.eom"), "--until", "5",
                   "--step", "0.01", "--rtol", "1e-10", "--atol", "1e-12", NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  int n;
  double *x = csv_column(r.out, 1, &n), *y = csv_column(r.out, 2, &n);
  double worst = 0;
  for (int i = 0; i < n; i++) worst = fmax(worst, fabs(hypot(x[i], y[i]) - L));
  ck_assert_msg(worst < 1e-6, "off the circle by %g", worst);
  free(x);
  free(y);
  run_free(&r);
}
END_TEST

/* ------------------------------------------------------------- sim */


START_TEST(sim_csv_columns) {
  char *out = work_path("pair.csv");
  char *argv[] = {(char *)eomc(), "sim", model_path("damped_pair.eom"), "--until", "1", "--step",
                  "0.1", "-o", out, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.err, "action") && strstr(r.err, "steps"), "summary: %s", r.err);
  char *csv = read_file(out, NULL);
  ck_assert_ptr_nonnull(csv);
  /* docs/runtime.md, `eomc sim`: t, coordinates, rates, outputs, inputs, multipliers, T, V. */
  const char *header = "t,x1,x2,x1',x2',spring_middle,F,T,V\n";
  ck_assert_msg(strncmp(csv, header, strlen(header)) == 0, "%s", csv);
  ck_assert_int_eq(count_lines(csv), 12); /* header + t = 0, 0.1, ..., 1 */
  /* First row: t = 0 and the model's initial x1 = 0.05. */
  const char *row = strchr(csv, '\n') + 1;
  double t, x1, x2;
  ck_assert_int_eq(sscanf(row, "%lf,%lf,%lf", &t, &x1, &x2), 3);
  ck_assert(t == 0 && x1 == 0.05 && x2 == 0);
  /* Sample times print as written: 0.3, not 0.30000000000000004. */
  ck_assert_msg(strstr(csv, "\n0.3,") && strstr(csv, "\n0.7,") && strstr(csv, "\n1,"), "%s", csv);
  /* Every row has 9 fields. */
  for (const char *p = row; *p; p = strchr(p, '\n') + 1) {
    int commas = 0;
    for (const char *q = p; *q != '\n'; q++) commas += *q == ',';
    ck_assert_int_eq(commas, 8);
  }
  free(csv);
  run_free(&r);
  /* Without -o the CSV goes to standard output. */
  char *argv2[] = {(char *)eomc(), "sim", model_path("damped_pair.eom"), "--until", "0.5",
                   "--step", "0.25", "--method", "rk4", NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_int_eq(count_lines(r.out), 4);
  ck_assert(strncmp(r.out, "t,x1,x2,", 8) == 0);
  run_free(&r);
  free(out);
}
END_TEST

/* Read column col of a CSV (header skipped) into a malloc'd array. */
static double *csv_column(const char *csv, int col, int *n) {
  int cap = count_lines(csv);
  double *v = malloc(sizeof(double) * (size_t)(cap + 1));
  *n = 0;
  for (const char *p = strchr(csv, '\n') + 1; *p; p = strchr(p, '\n') + 1) {
    const char *f = p;
    for (int i = 0; i < col; i++) f = strchr(f, ',') + 1;
    v[(*n)++] = strtod(f, NULL);
  }
  return v;
}

/* The bead released near its off-bottom equilibrium oscillates at
** w sin(theta0) (Marion, Classical Dynamics, prob. 7-18): measure the period from
** the upward crossings of theta0 in the CSV. */
START_TEST(sim_bead_small_oscillation_period) {
  double g = 9.81, R = 0.5, w = 7, theta0 = acos(g / (w * w * R));
  char set[64];
  snprintf(set, sizeof set, "theta=%.17g", theta0 + 1e-3);
  char *argv[] = {(char *)eomc(), "sim", model_path("bead_hoop.eom"), "--set", set, "--until",
                  "4", "--step", "0.0005", "--rtol", "1e-11", "--atol", "1e-13", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  int n;
  double *t = csv_column(r.out, 0, &n), *th = csv_column(r.out, 1, &n);
  double first = -1, last = -1;
  int crossings = 0;
  for (int i = 1; i < n; i++)
    if (th[i - 1] < theta0 && th[i] >= theta0) {
      double tc = t[i - 1] + (t[i] - t[i - 1]) * (theta0 - th[i - 1]) / (th[i] - th[i - 1]);
      if (first < 0) first = tc;
      last = tc;
      crossings++;
    }
  ck_assert_int_ge(crossings, 3);
  double period = (last - first) / (crossings - 1), want = 2 * PI / (w * sin(theta0));
  ck_assert_msg(fabs(period - want) / want < 1e-4, "period %.8g, want %.8g", period, want);
  free(t);
  free(th);
  run_free(&r);
}
END_TEST

/* Statics (Hooke's law, common practice): a steady push F on the first cart
** settles at K x = (F, 0), x1 = 2F/(3k), x2 = F/(3k).  Given once as a
** constant (--set) and once as an input table (--inputs). */
START_TEST(sim_inputs_settle) {
  char *table = write_file(work_dir, "push.csv", "t,F\n0,60\n100,60\n", 17);
  const char *ways[2][2] = {{"--set", "F=60"}, {"--inputs", table}};
  for (int w = 0; w < 2; w++) {
    char *argv[] = {(char *)eomc(), "sim", model_path("damped_pair.eom"), (char *)ways[w][0],
                    (char *)ways[w][1], "--until", "60", "--step", "1", NULL};
    RunResult r = run_argv(argv);
    ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
    int n;
    double *x1 = csv_column(r.out, 1, &n), *x2 = csv_column(r.out, 2, &n);
    ck_assert_int_eq(n, 61);
    ck_assert_msg(fabs(x1[n - 1] - 2 * 60.0 / 180) < 1e-6, "x1 = %.10g", x1[n - 1]);
    ck_assert_msg(fabs(x2[n - 1] - 60.0 / 180) < 1e-6, "x2 = %.10g", x2[n - 1]);
    free(x1);
    free(x2);
    run_free(&r);
  }
  free(table);
}
END_TEST

/* A stiff mount, m z'' + c z' + k z = 0 with roots s = (-c ± sqrt(c^2 - 4km))
** / 2m near -50 and -19950 (closed form, common practice): at a step of 1 ms
** radau5 follows the slow decay, rk4 blows up and must say so (exit 3). */
START_TEST(sim_stiff_radau5) {
  double m = 1, k = 1e6, c = 2e4, z0 = 0.01;
  double d = sqrt(c * c - 4 * k * m), s1 = (-c + d) / (2 * m), s2 = (-c - d) / (2 * m);
  double A = -s2 / (s1 - s2) * z0, B = z0 - A;
  char *argv[] = {(char *)eomc(), "sim", model_path("stiff_mount.eom"), "--until", "0.1",
                  "--step", "0.001", "--method", "radau5", "--rtol", "1e-10", "--atol", "1e-14",
                  NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  int n;
  double *t = csv_column(r.out, 0, &n), *z = csv_column(r.out, 1, &n);
  ck_assert_int_eq(n, 101);
  for (int i = 10; i < n; i++) {
    double exact = A * exp(s1 * t[i]) + B * exp(s2 * t[i]);
    ck_assert_msg(fabs(z[i] - exact) < 1e-4 * fabs(exact), "t %g: z %.10g, exact %.10g", t[i],
                  z[i], exact);
  }
  free(t);
  free(z);
  run_free(&r);
  char *argv2[] = {(char *)eomc(), "sim", model_path("stiff_mount.eom"), "--until", "0.1",
                   "--step", "0.001", "--method", "rk4", NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 3, "status %d: %s", r.status, r.err);
  ck_assert_ptr_nonnull(strstr(r.err, "non-finite"));
  run_free(&r);
}
END_TEST

/* accel() fails where the mass matrix stops being positive definite: exit 3,
** a message naming the time and state, and the rows so far kept. */
START_TEST(sim_failure_keeps_rows) {
  char *out = work_path("fail.csv");
  char *argv[] = {(char *)eomc(), "sim", model_path("leaning_block.eom"), "--until", "5", "-o",
                  out, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 3, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.err, "at t = ") && strstr(r.err, "x = "), "%s", r.err);
  /* The failure comes first; the run's figures follow only as a note. */
  const char *error = strstr(r.err, "eomc sim: error: integration failed");
  const char *figures = strstr(r.err, "steps (");
  ck_assert_msg(error && figures && error < figures, "%s", r.err);
  ck_assert_msg(strstr(r.err, "note: up to the failure: ") != NULL, "%s", r.err);
  char *csv = read_file(out, NULL);
  ck_assert_ptr_nonnull(csv);
  ck_assert(strncmp(csv, "t,x,x',T,V\n", 11) == 0);
  ck_assert_int_ge(count_lines(csv), 10);
  free(csv);
  free(out);
  run_free(&r);
}
END_TEST

/* A run that fails at t = 0 (M not positive definite there) prints the
** failure and no figures that read like a finished run. */
START_TEST(sim_failure_at_start_has_no_summary) {
  const char *text = "model upside\ncoord x [m]\nparam m = -2 [kg]\nkinetic m*x'^2/2\n"
                     "initial x = 0.5\n";
  char *path = work_path("upside.eom");
  FILE *f = fopen(path, "w");
  ck_assert_ptr_nonnull(f);
  fputs(text, f);
  fclose(f);
  char *argv[] = {(char *)eomc(), "sim", path, "--until", "1", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 3, "status %d: %s", r.status, r.err);
  ck_assert_msg(strncmp(r.err, "eomc sim: error: integration failed at t = 0: ", 46) == 0, "%s",
                r.err);
  ck_assert_msg(!strstr(r.err, "energy T+V") && !strstr(r.err, "drift") &&
                    !strstr(r.err, "action"), "%s", r.err);
  run_free(&r);
  free(path);
}
END_TEST

/* A coordinate with no inertia is a model error before anything is built. */
START_TEST(sim_coordinate_without_inertia) {
  const char *text = "model idle\ncoord x [m]\ncoord z [m]\nparam m = 2 [kg]\n"
                     "param k = 50 [N/m]\nkinetic m*x'^2/2\npotential k*x^2/2 + k*z^2/2\n";
  char *path = work_path("idle.eom");
  FILE *f = fopen(path, "w");
  ck_assert_ptr_nonnull(f);
  fputs(text, f);
  fclose(f);
  const char *verbs[] = {"sim", "modes"};
  for (int k = 0; k < 2; k++) {
    char *argv[] = {(char *)eomc(), (char *)verbs[k], path, NULL};
    RunResult r = run_argv(argv);
    ck_assert_msg(r.status == 1, "%s: status %d: %s", verbs[k], r.status, r.err);
    ck_assert_msg(strstr(r.err, "idle.eom:3:7: error: coordinate 'z' has no inertia"), "%s: %s",
                  verbs[k], r.err);
    run_free(&r);
  }
  free(path);
}
END_TEST

/* A model at rest over an enormous span: every method reaches the end in a
** few steps (the adaptive ones start no shorter than the smallest step the
** span allows), and the state stays exactly at rest. */
START_TEST(sim_at_rest_over_huge_span) {
  static const char *methods[] = {"dopri", "radau5", "rk4", "midpoint"};
  for (int k = 0; k < 4; k++) {
    char *argv[] = {(char *)eomc(), "sim", model_path("damped_pair.eom"), "--until", "1e300",
                    "--step", "1e299", "--method", (char *)methods[k], "--set", "x1=0",
                    "--set", "x2=0", "--set", "x1'=0", "--set", "x2'=0", NULL};
    RunResult r = run_argv(argv);
    ck_assert_msg(r.status == 0, "%s: status %d: %s", methods[k], r.status, r.err);
    const char *last = strstr(r.out, "\n1e+300,");
    ck_assert_msg(last != NULL, "%s: no row at t = 1e300 in\n%s", methods[k], r.out);
    double v[4];
    ck_assert_int_eq(sscanf(last + 8, "%lf,%lf,%lf,%lf", &v[0], &v[1], &v[2], &v[3]), 4);
    for (int i = 0; i < 4; i++) ck_assert_msg(v[i] == 0, "%s: %g", methods[k], v[i]);
    run_free(&r);
  }
}
END_TEST

/* `sim --help` lists every method of the runtime with its help line. */
START_TEST(sim_help_lists_methods) {
  char *argv[] = {(char *)eomc(), "sim", "--help", NULL};
  RunResult r = run_argv(argv);
  ck_assert_int_eq(r.status, 0);
  for (int i = 0; i < 4; i++) {
    static const char *names[] = {"rk4", "dopri", "radau5", "midpoint"};
    char line[64];
    snprintf(line, sizeof line, "\n                       %-9s ", names[i]);
    ck_assert_msg(strstr(r.out, line) != NULL, "no line for %s in\n%s", names[i], r.out);
  }
  run_free(&r);
}
END_TEST

START_TEST(sim_usage_errors) {
  static const char *cases[][4] = {
      {"--set", "nosuch=1", NULL, "not a name"},
      {"--method", "euler-ish", NULL, "unknown method"},
      {"--until", "-3", NULL, "positive number"},
      {"--frobnicate", NULL, NULL, "unknown option"},
      {"--set", "theta=abc", NULL, "'abc' is not a parameter"},
      {"--set", "theta=1e999", NULL, "number out of range"},
      {"--set", "theta=1e300*1e300", NULL, "not a finite number"},
  };
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    char *argv[] = {(char *)eomc(), "sim", model_path("bead_hoop.eom"), (char *)cases[i][0],
                    (char *)cases[i][1], NULL};
    RunResult r = run_argv(argv);
    ck_assert_msg(r.status == 2, "case %zu: status %d: %s", i, r.status, r.err);
    ck_assert_msg(strstr(r.err, cases[i][3]) != NULL, "case %zu: %s", i, r.err);
    run_free(&r);
  }
  char *argv[] = {(char *)eomc(), "sim", model_path("no-such-model.eom"), NULL};
  RunResult r = run_argv(argv);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
  /* A model error is status 1. */
  char *bad = write_file(work_dir, "bad.eom", "coord x\nkinetic 1/2*y'^2\n", 25);
  char *argv2[] = {(char *)eomc(), "sim", bad, NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 1, "status %d: %s", r.status, r.err);
  ck_assert_ptr_nonnull(strstr(r.err, "error"));
  run_free(&r);
  /* Help is not an error and names the options. */
  char *argv4[] = {(char *)eomc(), "sim", "--help", NULL};
  r = run_argv(argv4);
  ck_assert_int_eq(r.status, 0);
  ck_assert(strstr(r.out, "--until") && strstr(r.out, "--inputs") && strstr(r.out, "NAME'="));
  run_free(&r);
  char *argv5[] = {(char *)eomc(), "modes", "--help", NULL};
  r = run_argv(argv5);
  ck_assert_int_eq(r.status, 0);
  ck_assert(strstr(r.out, "--at") && strstr(r.out, "--json"));
  run_free(&r);
  char *argv3[] = {(char *)eomc(), "modes", model_path("bead_hoop.eom"), "--at", "w=1", NULL};
  r = run_argv(argv3);
  ck_assert_msg(r.status == 2, "status %d: %s", r.status, r.err);
  run_free(&r);
  free(bad);
}
END_TEST

/* A conservative model conserves T + V (Goldstein, Poole & Safko,
** Classical Mechanics, 3rd ed., 2002, §2.7, section from memory): released at large angles the
** double pendulum moves chaotically, yet dopri at tight tolerance keeps
** the energy to 1e-7 and implicit midpoint keeps it bounded. */
START_TEST(sim_energy_conserved) {
  static const char *const methods[][2] = {{"dopri", "1e-7"}, {"midpoint", "1e-3"}};
  for (int k = 0; k < 2; k++) {
    char *argv[] = {(char *)eomc(), "sim", model_path("twin_pendulum.eom"), "--set", "a1=1.2",
                    "--set", "a2=-0.7", "--set", "a2'=1", "--until", "10", "--every", "0.002",
                    "--method", (char *)methods[k][0], "--rtol", "1e-11", "--atol", "1e-12",
                    NULL};
    RunResult r = run_argv(argv);
    ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
    ck_assert(strncmp(r.out, "t,a1,a2,a1',a2',T,V\n", 20) == 0);
    int n;
    double *T = csv_column(r.out, 5, &n), *V = csv_column(r.out, 6, &n);
    ck_assert_int_eq(n, 5001);
    double E0 = T[0] + V[0], worst = 0;
    for (int i = 0; i < n; i++) worst = fmax(worst, fabs(T[i] + V[i] - E0) / fabs(E0));
    ck_assert_msg(worst < atof(methods[k][1]), "%s: energy error %g", methods[k][0], worst);
    ck_assert(T[n / 2] > 0.01 * fabs(E0)); /* it really moves */
    free(T);
    free(V);
    run_free(&r);
  }
}
END_TEST

/* The second run loads the cached object; a changed model gets its own. */
START_TEST(sim_cache) {
  char *argv[] = {(char *)eomc(), "sim", model_path("bead_hoop.eom"), "--until", "0.1", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s", r.err);
  char *first = strdup(r.out);
  run_free(&r);
  r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert_str_eq(r.out, first);
  run_free(&r);
  free(first);
  char *text = read_file(model_path("bead_hoop.eom"), NULL);
  size_t len = strlen(text);
  char *edited = malloc(len + 32);
  sprintf(edited, "%sinitial theta' = 1\n", text);
  char *path = write_file(work_dir, "bead2.eom", edited, strlen(edited));
  char *argv2[] = {(char *)eomc(), "sim", path, "--until", "0.1", "--step", "0.1", NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert_msg(strstr(r.out, "\n0,0.3,1,") != NULL, "%s", r.out);
  run_free(&r);
  free(path);
  free(edited);
  free(text);
}
END_TEST

/* --plot writes an SVG when configure found gnuplot, else says so (exit 3). */
START_TEST(sim_plot_svg) {
  char cfg[4096];
  snprintf(cfg, sizeof cfg, "%s/config.h", env_or("BUILDDIR", "."));
  char *config = read_file(cfg, NULL);
  ck_assert_msg(config != NULL, "cannot read %s", cfg);
  int have_gnuplot = strstr(config, "#define GNUPLOT_PATH") != NULL;
  free(config);
  char *svg = work_path("pair.svg");
  char *argv[] = {(char *)eomc(), "sim", model_path("damped_pair.eom"), "--until", "2",
                  "--plot", svg, NULL};
  RunResult r = run_argv(argv);
  if (have_gnuplot) {
    ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
    char *text = read_file(svg, NULL);
    ck_assert_ptr_nonnull(text);
    ck_assert_msg(strstr(text, "<svg") && strstr(text, "</svg>"), "not an SVG");
    ck_assert_ptr_nonnull(strstr(text, "phase portrait: x2"));
    ck_assert_ptr_nonnull(strstr(text, "T + V"));
    free(text);
    ck_assert_int_eq(count_lines(r.out), 1002); /* CSV still on stdout */
  } else {
    ck_assert_int_eq(r.status, 3);
    ck_assert_ptr_nonnull(strstr(r.err, "gnuplot"));
  }
  run_free(&r);
  free(svg);
}
END_TEST

/* Params whose default reads other params follow them (sim --set), unless
** set themselves.  Checked on the free response of an underdamped
** oscillator, z = z0 e^(-zeta w t) (cos wd t + zeta/sqrt(1 - zeta^2) sin wd t)
** with w^2 = k/meff and wd = w sqrt(1 - zeta^2) (closed form, common
** practice), where meff = m + ms/2 and c = 2 zeta sqrt(k meff) come from the
** model's defaults. */
static double tray_z(double meff, double k, double zeta, double z0, double t) {
  double w = sqrt(k / meff), wd = w * sqrt(1 - zeta * zeta);
  return z0 * exp(-zeta * w * t) * (cos(wd * t) + zeta / sqrt(1 - zeta * zeta) * sin(wd * t));
}

START_TEST(sim_derived_params_follow) {
  struct {
    const char *set[3];
    double meff, zeta;
  } runs[] = {
    {{"m=5", NULL, NULL}, 5.2, 0.05},              /* meff and c follow m */
    {{"zeta=0.2", "ms=1", NULL}, 2.5, 0.2},         /* c follows zeta and meff */
    {{"meff=3", "m=7", NULL}, 3, 0.05},             /* meff kept: set itself */
    {{"m=7", "meff=3", NULL}, 3, 0.05},             /* in either order */
  };
  for (size_t i = 0; i < sizeof runs / sizeof runs[0]; i++) {
    char *argv[16] = {(char *)eomc(), "sim", model_path("sprung_tray.eom"), "--until", "1",
                      "--step", "0.01", "--rtol", "1e-11", "--atol", "1e-14"};
    int a = 11;
    for (int k = 0; k < 3 && runs[i].set[k]; k++) argv[a++] = "--set", argv[a++] = (char *)runs[i].set[k];
    argv[a] = NULL;
    RunResult r = run_argv(argv);
    ck_assert_msg(r.status == 0, "run %zu: status %d: %s", i, r.status, r.err);
    int n;
    double *t = csv_column(r.out, 0, &n), *z = csv_column(r.out, 1, &n);
    ck_assert_int_eq(n, 101);
    for (int k = 0; k < n; k += 10) {
      double want = tray_z(runs[i].meff, 800, runs[i].zeta, 0.01, t[k]);
      ck_assert_msg(fabs(z[k] - want) < 1e-9, "run %zu, t = %g: z = %.12g, want %.12g", i, t[k], z[k],
                    want);
    }
    free(t);
    free(z);
    run_free(&r);
  }
}
END_TEST

/* A time-dependent constraint is kept: a sleeve free on a rod turned at a
** steady rate w, released at r0 without radial speed, slides out as
** r = r0 cosh(w t) (r'' = w^2 r in the rod's frame; closed form, common
** practice).  The model starts with the sleeve at rest, so the run must
** first move the rates onto phi' = G q' + dphi/dt = 0 (y' = w r0), and every
** row must stay on phi = 0. */
START_TEST(sim_time_dependent_constraint) {
  char *argv[] = {(char *)eomc(), "sim", model_path("turning_rod.eom"), "--until", "1.5",
                  "--step", "0.05", "--rtol", "1e-11", "--atol", "1e-13", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  int n;
  double *t = csv_column(r.out, 0, &n), *x = csv_column(r.out, 1, &n), *y = csv_column(r.out, 2, &n);
  ck_assert_int_eq(n, 31);
  const double r0 = 0.2, w = 1.5;
  for (int k = 0; k < n; k++) {
    double phi = y[k] * cos(w * t[k]) - x[k] * sin(w * t[k]), rad = hypot(x[k], y[k]);
    ck_assert_msg(fabs(phi) < 1e-10, "t = %g: phi = %.3g", t[k], phi);
    ck_assert_msg(fabs(rad - r0 * cosh(w * t[k])) < 1e-7 * cosh(w * t[k]),
                  "t = %g: r = %.12g, want %.12g", t[k], rad, r0 * cosh(w * t[k]));
  }
  free(t);
  free(x);
  free(y);
  run_free(&r);
}
END_TEST

/* Vector and matrix outputs give one CSV column per entry, named as the
** language indexes them (tip[1], R[1,2]), in order, with the entries'
** values: tip = (x cos th, x sin th, h) and R = rotz(th) (the standard
** rotation about z, common practice) at the initial state. */
START_TEST(sim_vector_outputs) {
  char *argv[] = {(char *)eomc(), "sim", model_path("swing_tip.eom"), "--until", "0.1", "--step", "0.1", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  const char *header = "t,x,th,x',th',r,tip[1],tip[2],tip[3],R[1,1],R[1,2],R[1,3],R[2,1],R[2,2],R[2,3],"
                       "R[3,1],R[3,2],R[3,3],s,T,V\n";
  ck_assert_msg(strncmp(r.out, header, strlen(header)) == 0, "header:\n%s", r.out);
  int n;
  double want[] = {0.5 * cos(0.3), 0.5 * sin(0.3), 0.1, cos(0.3), -sin(0.3), 0, sin(0.3), cos(0.3), 0, 0, 0, 1,
                   0.5 * 0.3};
  for (int c = 0; c < 13; c++) {
    double *v = csv_column(r.out, 6 + c, &n);
    ck_assert_int_eq(n, 2);
    ck_assert_msg(fabs(v[0] - want[c]) < 1e-15, "column %d: %.17g, want %.17g", 6 + c, v[0], want[c]);
    free(v);
  }
  run_free(&r);
}
END_TEST

/* ------------------------------------------------------ equilibria */

/* Value after the first "key" in text (ck fails when absent). */
static double number_after(const char *text, const char *key) {
  const char *s = strstr(text, key);
  ck_assert_msg(s != NULL, "no '%s' in\n%s", key, text);
  return strtod(s + strlen(key), NULL);
}

/* A trolley free to roll under a constant drive force has no equilibrium:
** exit 3, naming x and why.  The steady motion instead: the whole hoist
** accelerates at a = F / (M + m) and the load hangs behind at
** tan(th) = -a / g (a plumb line in a uniformly accelerating car, Halliday,
** Resnick & Walker, Fundamentals of Physics, ch. 5-6; from memory). */
START_TEST(modes_no_equilibrium_under_drive) {
  char *argv[] = {(char *)eomc(), "modes", model_path("rolling_hoist.eom"), "--set", "F=3", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 3, "status %d\nout %s\nerr %s", r.status, r.out, r.err);
  ck_assert_msg(r.out[0] == '\0', "no equilibrium may be printed:\n%s", r.out);
  ck_assert_msg(strstr(r.err, "no static equilibrium: x: a constant generalized force of 3 N acts "
                              "and nothing restores x") != NULL, "%s", r.err);
  double M = 20, m = 5, g = 9.81, a = 3 / (M + m);
  double acc = number_after(r.err, "x'' = "), th = number_after(r.err, "th = ");
  ck_assert_msg(fabs(acc - a) < 1e-9, "a %.12g, want %.12g", acc, a);
  ck_assert_msg(fabs(th + atan(a / g)) < 1e-8, "th %.12g, want %.12g\n%s", th, -atan(a / g), r.err);
  run_free(&r);

  /* Without the drive the same model does have its equilibrium. */
  char *argv2[] = {(char *)eomc(), "modes", model_path("rolling_hoist.eom"), NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  run_free(&r);

  /* With a rolling drag the steady motion is a constant rate, not an
  ** acceleration: the note says to ask for it with --rate. */
  const char *text = "model dragged_hoist\ncoord x [m]\nparam m = 25 [kg]\nparam c = 2 [N*s/m]\n"
                     "input F [N]\nkinetic 1/2*m*x'^2\ndissipation 1/2*c*x'^2\nforce x = F\n";
  char *dragged = write_file(work_dir, "dragged_hoist.eom", text, strlen(text));
  char *argv3[] = {(char *)eomc(), "modes", dragged, "--set", "F=3", NULL};
  r = run_argv(argv3);
  ck_assert_msg(r.status == 3, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.err, "--rate x=") != NULL && strstr(r.err, "x''") == NULL, "%s", r.err);
  run_free(&r);
  free(dragged);
}
END_TEST

/* Angles of 2 pi periodic dynamics are wrapped into (-pi, pi]; an angle a
** torsion spring holds several turns round is not (the spring is not
** periodic).  Equilibria of the pendulum at 0 and pi, of the shaft at its
** spring's rest angle psi0 = 20 rad (statics, common practice). */
START_TEST(modes_wraps_periodic_angles) {
  char *argv[] = {(char *)eomc(), "modes", model_path("wound_pendulum.eom"), "--json", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(fabs(json_number(r.out, "th", 0)) < 1e-9, "%s", r.out);
  ck_assert_msg(fabs(json_number(r.out, "psi", 0) - 20) < 1e-9, "%s", r.out);
  run_free(&r);
  char *argv2[] = {(char *)eomc(), "modes", model_path("wound_pendulum.eom"), "--at", "th=72.4",
                   "--json", NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  double th = json_number(r.out, "th", 0);
  ck_assert_msg(th > -PI && th <= PI + 1e-12 && fabs(fabs(th) - PI) < 1e-9, "th %.17g", th);
  run_free(&r);

  /* A model without units: its periodic coordinate is wrapped too. */
  const char *text = "model bare_pendulum\ncoord th\nparam g = 9.81\nkinetic 1/2*th'^2\n"
                     "potential -g*cos(th)\ninitial th = 75.5\n";
  char *bare = write_file(work_dir, "bare_pendulum.eom", text, strlen(text));
  char *argv3[] = {(char *)eomc(), "modes", bare, "--json", NULL};
  r = run_argv(argv3);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(fabs(json_number(r.out, "th", 0)) < 1e-9, "%s", r.out);
  run_free(&r);
  free(bare);
}
END_TEST

/* The JSON's growth_rate_per_s is Re s: for the damped pair -c / (2 m) in
** both modes (damping proportional to mass; common practice), 0 for an
** undamped oscillation; no "-0" anywhere. */
START_TEST(modes_json_growth_rate) {
  char *argv[] = {(char *)eomc(), "modes", model_path("damped_pair.eom"), "--json", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  for (int k = 0; k < 2; k++)
    ck_assert_double_eq_tol(json_number(r.out, "growth_rate_per_s", k), -0.9 / (2 * 1.5), 1e-9);
  ck_assert_ptr_null(strstr(r.out, "rate_per_s\": 0."));
  run_free(&r);
  char *argv2[] = {(char *)eomc(), "modes", model_path("rolling_hoist.eom"), "--json", NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.out, "-0,") == NULL && strstr(r.out, "-0}") == NULL, "%s", r.out);
  ck_assert_msg(strstr(r.out, "\"kind\": \"neutral\", \"omega2\": 0,") != NULL, "%s", r.out);
  ck_assert_double_eq_tol(json_number(r.out, "growth_rate_per_s", 0), 0, 1e-12);
  run_free(&r);
}
END_TEST

/* At a degenerate equilibrium (V = -a x^4: exact stiffness 0, central
** differences 4 a h^2) the jacobian check must not cry wolf. */
START_TEST(modes_degenerate_no_false_alarm) {
  char *argv[] = {(char *)eomc(), "modes", model_path("quartic_hill.eom"), NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.err, "disagrees") == NULL, "%s", r.err);
  ck_assert_msg(fabs(number_after(r.out, "x = ")) < 1e-6, "%s", r.out);
  run_free(&r);
}
END_TEST

/* --hold keeps the crank of a four-bar at its given angle while the initial
** fix closes the loop with the coupler and the rocker; the closed loop
** b cos th2 + c cos th3 = a + e cos th4, b sin th2 + c sin th3 = e sin th4
** (four-bar loop closure, Norton, Design of Machinery, 5th ed., 2012, §4.5;
** from memory) holds at the first row, and the summary says what moved. */
START_TEST(sim_hold_crank) {
  char path[4200];
  snprintf(path, sizeof path, "%s/examples/barrier_fourbar.eom", srcdir());
  char *argv[] = {(char *)eomc(), "sim", path, "--set", "th2=0.5", "--hold", "th2", "--until",
                  "0.01", "--step", "0.01", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  int n;
  double *th2 = csv_column(r.out, 1, &n), *th3 = csv_column(r.out, 2, &n),
         *th4 = csv_column(r.out, 3, &n);
  double a = 0.30, b = 0.08, c = 0.32, e = 0.18;
  ck_assert_msg(th2[0] == 0.5, "th2 moved to %.17g", th2[0]);
  ck_assert_msg(fabs(b * cos(th2[0]) + c * cos(th3[0]) - a - e * cos(th4[0])) < 1e-10 &&
                    fabs(b * sin(th2[0]) + c * sin(th3[0]) - e * sin(th4[0])) < 1e-10,
                "loop not closed: th3 %.17g th4 %.17g", th3[0], th4[0]);
  ck_assert_msg(strstr(r.err, "initial fix onto the constraints: th2 held, th3 moved by ") != NULL,
                "%s", r.err);
  free(th2), free(th3), free(th4);
  run_free(&r);

  /* Without --hold the minimum-norm fix moves the crank as well. */
  char *argv2[] = {(char *)eomc(), "sim", path, "--set", "th2=0.5", "--until", "0.01", "--step",
                   "0.01", NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  th2 = csv_column(r.out, 1, &n);
  ck_assert_msg(th2[0] != 0.5, "th2 %.17g", th2[0]);
  ck_assert_msg(strstr(r.err, "th2 moved by ") != NULL, "%s", r.err);
  free(th2);
  run_free(&r);

  /* A name that is no coordinate, and a model without constraints: usage errors. */
  char *argv3[] = {(char *)eomc(), "sim", path, "--hold", "crank", NULL};
  r = run_argv(argv3);
  ck_assert_msg(r.status == 2 && strstr(r.err, "no coordinate 'crank'"), "%d %s", r.status, r.err);
  run_free(&r);
  char *argv4[] = {(char *)eomc(), "sim", model_path("damped_pair.eom"), "--hold", "x1", NULL};
  r = run_argv(argv4);
  ck_assert_msg(r.status == 2 && strstr(r.err, "no constraints"), "%d %s", r.status, r.err);
  run_free(&r);
}
END_TEST

/* A cold build of a big model says what it is doing (off a terminal: one
** line per step, for six or more coordinates and 64 KB or more of C); a
** small model stays quiet and so does a warm run. */
START_TEST(sim_cold_build_says_so) {
  char path[4200];
  snprintf(path, sizeof path, "%s/examples/picking_arm6.eom", srcdir());
  char *argv[] = {(char *)eomc(), "sim", path, "--until", "0.001", "--step", "0.001", "-o",
                  "/dev/null", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.err, "eomc: first run of picking_arm6: deriving its equations of motion") &&
                    strstr(r.err, "eomc: first run of picking_arm6: compiling ") &&
                    strstr(r.err, " KB of generated C with "),
                "%s", r.err);
  run_free(&r);
  r = run_argv(argv);
  ck_assert_msg(r.status == 0 && strstr(r.err, "first run") == NULL, "%s", r.err);
  run_free(&r);
  char *argv2[] = {(char *)eomc(), "sim", model_path("damped_pair.eom"), "--until", "0.01", "-o",
                   "/dev/null", NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0 && strstr(r.err, "first run") == NULL, "%s", r.err);
  run_free(&r);
}
END_TEST

/* The parcel on its pad, piecewise analytic (Newton's law in each phase;
** from memory, derived here): free fall from h for t1 = sqrt(2h/g), landing
** at v1 = -sqrt(2gh); pressed, x(tau) = -a + a cos(w tau) + (v1/w) sin(w tau)
** with w = sqrt(k/m), a = mg/k, leaving the pad again after
** tau_c = (2 pi - 2 acos(a/R))/w, R = sqrt(a^2 + (v1/w)^2); without damping
** the motion repeats with period 2 t1 + tau_c. */
static double parcel_x(double t) {
  const double m = 0.5, g = 9.81, k = 2000, h = 0.2;
  double t1 = sqrt(2 * h / g), v1 = -sqrt(2 * g * h), w = sqrt(k / m), a = m * g / k;
  double R = sqrt(a * a + v1 * v1 / (w * w)), tc = (2 * PI - 2 * acos(a / R)) / w;
  double period = 2 * t1 + tc;
  t = fmod(t, period);
  if (t < t1) return h - g * t * t / 2;
  if (t < t1 + tc) {
    double tau = t - t1;
    return -a + a * cos(w * tau) + v1 / w * sin(w * tau);
  }
  double up = t - t1 - tc;  /* rising from the pad at -v1 */
  return -v1 * up - g * up * up / 2;
}

/* Largest deviation of a run's x column from the closed form; its summary. */
static double parcel_error(const char *method, const char *rtol, int events, char **summary) {
  char *argv[] = {(char *)eomc(), "sim", model_path("parcel_drop.eom"), "--until", "1.5",
                  "--every", "0.001", "--method", (char *)method, "--rtol", (char *)rtol,
                  "--atol", "1e-14", events ? NULL : "--no-events", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  int n;
  double *t = csv_column(r.out, 0, &n), *x = csv_column(r.out, 1, &n), worst = 0;
  ck_assert_int_eq(n, 1501);
  for (int i = 0; i < n; i++) worst = fmax(worst, fabs(x[i] - parcel_x(t[i])));
  free(t);
  free(x);
  *summary = r.err;
  r.err = NULL;
  run_free(&r);
  return worst;
}

/* Located switches keep dopri and radau5 on the closed form across the
** kinks of the contact force (three landings and take-offs in 1.5 s); the
** same dopri run stepping across them blindly is much further off. */
START_TEST(sim_events_contact_spring) {
  char *sum;
  double e_dopri = parcel_error("dopri", "1e-10", 1, &sum);
  ck_assert_msg(e_dopri < 1e-7, "dopri with events: max error %.3g", e_dopri);
  /* three landings and three take-offs: t1 + n P and t1 + tau_c + n P */
  const char *line = strstr(sum, " events located at the model's 1 switches");
  ck_assert_msg(line != NULL, "%s", sum);
  while (line > sum && line[-1] != ' ') line--;
  ck_assert_msg(atol(line) == 6, "events: %s", sum);
  free(sum);
  double e_radau = parcel_error("radau5", "1e-10", 1, &sum);
  ck_assert_msg(e_radau < 1e-6, "radau5 with events: max error %.3g", e_radau);
  free(sum);
  double e_blind = parcel_error("dopri", "1e-10", 0, &sum);
  ck_assert_msg(e_blind > 10 * e_dopri, "without events %.3g, with %.3g", e_blind, e_dopri);
  free(sum);
}
END_TEST

/* --events logs each located switch: the first landing at t1 = sqrt(2h/g)
** (free fall, from memory) with the contact switch x falling through 0;
** rk4 says that it does not locate them. */
START_TEST(sim_events_log_and_fixed_step_note) {
  char *argv[] = {(char *)eomc(), "sim", model_path("parcel_drop.eom"), "--until", "0.3",
                  "--events", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  const char *ev = strstr(r.err, "event at t = ");
  ck_assert_msg(ev != NULL, "%s", r.err);
  double t1 = strtod(ev + 13, NULL);
  ck_assert_msg(fabs(t1 - sqrt(2 * 0.2 / 9.81)) < 1e-9, "landing at %.12g", t1);
  ck_assert_msg(strstr(ev, "switch 1 (10:25 max) falls through 0") != NULL, "%s", r.err);
  ck_assert_msg(strstr(ev, "rises through 0") != NULL, "no take-off in:\n%s", r.err);
  run_free(&r);
  char *argv2[] = {(char *)eomc(), "sim", model_path("parcel_drop.eom"), "--until", "0.3",
                   "--method", "rk4", NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.err, "rk4 does not locate the model's 1 switches") != NULL, "%s", r.err);
  run_free(&r);
}
END_TEST

/* Coulomb damping (Den Hartog, Mechanical Vibrations, the section on
** Coulomb damping; from memory): each half cycle is a free oscillation
** about +-F/k lasting pi/w, so the turning points drop by 2F/k per half
** cycle (4F/k per cycle), and the motion ends at the first turning point
** with |x| <= F/k.  The located events are the turning points; at the
** last one the crate sticks (the friction holds the spring) and stays. */
static double coulomb_x(double t, double *t_stop, double *x_stop) {
  const double m = 1.2, k = 300, F = 2.5, x0 = 0.105, w = sqrt(k / m);
  double A = x0;
  int h = 0;
  while (fabs(A) > F / k && (h + 1) * PI / w <= t) {
    double c = A > 0 ? F / k : -F / k;
    A = 2 * c - A;
    h++;
  }
  double c = A > 0 ? F / k : -F / k;
  *x_stop = A, *t_stop = h * PI / w;
  if (fabs(A) <= F / k) return A;  /* stopped */
  return c + (A - c) * cos(w * (t - h * PI / w));
}

START_TEST(sim_events_coulomb_turning_points) {
  char *argv[] = {(char *)eomc(), "sim", model_path("coulomb_block.eom"), "--until", "1.15",
                  "--every", "0.001", "--rtol", "1e-10", "--atol", "1e-14", "--events", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  int n;
  double *t = csv_column(r.out, 0, &n), *x = csv_column(r.out, 1, &n), worst = 0, ts, xs;
  ck_assert_int_eq(n, 1151);
  for (int i = 0; i < n; i++) worst = fmax(worst, fabs(x[i] - coulomb_x(t[i], &ts, &xs)));
  ck_assert_msg(worst < 1e-7, "max deviation from the closed form %.3g", worst);
  /* the turning points t = h pi/w, h = 1..5, are the events */
  const char *ev = r.err;
  for (int h = 1; h <= 5; h++) {
    ev = strstr(ev, "event at t = ");
    ck_assert_msg(ev != NULL, "turning point %d missing:\n%s", h, r.err);
    ev += 13;
    double want = h * PI / sqrt(300 / 1.2);
    ck_assert_msg(fabs(strtod(ev, NULL) - want) < 1e-8, "turning point %d at %.12g, want %.12g",
                  h, strtod(ev, NULL), want);
  }
  free(t);
  free(x);
  run_free(&r);
  /* the sixth turning point is inside |x| <= F/k: the crate stops there */
  coulomb_x(2, &ts, &xs);
  ck_assert_msg(fabs(xs - 0.005) < 1e-12 && fabs(ts - 6 * PI / sqrt(250.0)) < 1e-12, "%g %g", xs,
                ts);
  char *argv2[] = {(char *)eomc(), "sim", model_path("coulomb_block.eom"), "--until", "2",
                   "--every", "0.001", "--method", "radau5", "--rtol", "1e-10", "--atol", "1e-14",
                   "--events", NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ev = strstr(r.err, "sticks");
  ck_assert_msg(ev != NULL, "%s", r.err);
  while (ev > r.err && ev[-1] != '\n') ev--;
  /* radau5 controls its error at rtol^0.8 (1e-8 here) */
  ck_assert_msg(fabs(strtod(ev + 13, NULL) - ts) < 1e-7, "sticks at %.12g, want %.12g",
                strtod(ev + 13, NULL), ts);
  t = csv_column(r.out, 0, &n);
  x = csv_column(r.out, 1, &n);
  ck_assert_int_eq(n, 2001);
  ck_assert_msg(fabs(x[n - 1] - xs) < 1e-8, "x = %.10g at the stop, want %.10g", x[n - 1], xs);
  free(t);
  free(x);
  run_free(&r);
}
END_TEST

static Suite *sim_suite(void) {
  Suite *s = suite_create("sim");
  TCase *tc = tcase_create("cli");
  tcase_add_checked_fixture(tc, setup, teardown);
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, modes_bead_on_hoop);
  tcase_add_test(tc, modes_damped_pair);
  tcase_add_test(tc, modes_twin_pendulum);
  tcase_add_test(tc, constrained_hanging_lamp);
  tcase_add_test(tc, sim_energy_conserved);
  tcase_add_test(tc, sim_csv_columns);
  tcase_add_test(tc, sim_bead_small_oscillation_period);
  tcase_add_test(tc, sim_inputs_settle);
  tcase_add_test(tc, sim_failure_keeps_rows);
  tcase_add_test(tc, sim_failure_at_start_has_no_summary);
  tcase_add_test(tc, sim_coordinate_without_inertia);
  tcase_add_test(tc, sim_at_rest_over_huge_span);
  tcase_add_test(tc, sim_stiff_radau5);
  tcase_add_test(tc, sim_usage_errors);
  tcase_add_test(tc, sim_help_lists_methods);
  tcase_add_test(tc, sim_cache);
  tcase_add_test(tc, sim_plot_svg);
  tcase_add_test(tc, sim_derived_params_follow);
  tcase_add_test(tc, sim_time_dependent_constraint);
  tcase_add_test(tc, sim_vector_outputs);
  tcase_add_test(tc, sim_events_contact_spring);
  tcase_add_test(tc, sim_events_coulomb_turning_points);
  tcase_add_test(tc, sim_events_log_and_fixed_step_note);
  suite_add_tcase(s, tc);
  TCase *te = tcase_create("equilibria");
  tcase_add_checked_fixture(te, setup, teardown);
  tcase_set_timeout(te, 120);
  tcase_add_test(te, modes_no_equilibrium_under_drive);
  tcase_add_test(te, modes_wraps_periodic_angles);
  tcase_add_test(te, modes_json_growth_rate);
  tcase_add_test(te, modes_degenerate_no_false_alarm);
  suite_add_tcase(s, te);
  TCase *th = tcase_create("initial");
  tcase_add_checked_fixture(th, setup, teardown);
  tcase_set_timeout(th, 300);
  tcase_add_test(th, sim_hold_crank);
  tcase_add_test(th, sim_cold_build_says_so);
  suite_add_tcase(s, th);
  return s;
}

int main(void) {
  SRunner *sr = srunner_create(sim_suite());
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
