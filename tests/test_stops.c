/*
** test_stops.c — end stops (`stop LEFT >= RIGHT [bounce E]`) through the
** compiler: the generated P_stops gives each gap, its gradient and gamma
** (checked against the closed-form derivatives of the gap), the descriptor
** carries the stops' names and coefficients of restitution, `eomc check`
** lists them, and the runtime refuses to run through a stop it cannot
** simulate yet.
*/
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "testutil.h"

static char *cache_dir;

static void setup(void) {
  cache_dir = make_temp_dir();
  setenv("EOMC_CACHE_DIR", cache_dir, 1);
}

static void teardown(void) {
  remove_tree(cache_dir);
  free(cache_dir);
}

static char *model_path(const char *name) {
  static char buf[4096];
  snprintf(buf, sizeof buf, "%s/tests/models/%s", srcdir(), name);
  return buf;
}

/* Prints the descriptor's stops, then g, G and gamma at (th, th'). */
static const char driver_src[] =
  "#include <stdio.h>\n"
  "#include <eom/model.h>\n"
  "#include \"wall_pendulum.h\"\n"
  "int main(void) {\n"
  "  const struct eom_model *m = &wall_pendulum_model;\n"
  "  double q[1] = {0.3}, qd[1] = {-1.7}, g[2], G[2], gamma[2];\n"
  "  printf(\"%d %d %d\\n\", m->abi, m->nstops, wall_pendulum_NSTOPS);\n"
  "  for (int k = 0; k < m->nstops; k++)\n"
  "    printf(\"%s|%.17g\\n\", m->stop_names[k], m->stop_bounce[k]);\n"
  "  m->stops(0.0, q, qd, m->param_defaults, g, G, gamma);\n"
  "  for (int k = 0; k < 2; k++) printf(\"%.17g %.17g %.17g\\n\", g[k], G[k], gamma[k]);\n"
  "  return 0;\n"
  "}\n";

/* The gap of the wall, g = L sin(th) + d, has G = L cos(th) and
** g'' = L cos(th) th'' - L sin(th) th'^2, so gamma = L sin(th) th'^2
** (chain rule, from memory); the angle stop th + pi/2 has G = 1, gamma 0. */
START_TEST(test_generated_gaps) {
  char *dir = make_temp_dir();
  char *argv_gen[] = {(char *)eomc(), "gen", model_path("wall_pendulum.eom"), "-o", dir, NULL};
  RunResult r = run_argv(argv_gen);
  ck_assert_msg(r.status == 0, "gen failed:\n%s", r.err);
  run_free(&r);
  char *drv = write_file(dir, "driver.c", driver_src, strlen(driver_src));
  char inc[4200], dinc[4200], csrc[4200], exe[4200];
  snprintf(inc, sizeof inc, "-I%s/include", srcdir());
  snprintf(dinc, sizeof dinc, "-I%s", dir);
  snprintf(csrc, sizeof csrc, "%s/wall_pendulum.c", dir);
  snprintf(exe, sizeof exe, "%s/driver", dir);
  char *argv_cc[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror",
                     inc, dinc, csrc, drv, "-o", exe, "-lm", NULL};
  r = run_argv(argv_cc);
  ck_assert_msg(r.status == 0, "the generated code does not compile:\n%s", r.err);
  run_free(&r);
  char *argv_run[] = {exe, NULL};
  r = run_argv(argv_run);
  ck_assert_msg(r.status == 0, "driver failed:\n%s", r.err);
  int abi, n, nd;
  const char *s = r.out;
  ck_assert_int_eq(sscanf(s, "%d %d %d", &abi, &n, &nd), 3);
  ck_assert_int_eq(abi, 9);
  ck_assert_int_eq(n, 2);
  ck_assert_int_eq(nd, 2);
  ck_assert_msg(strstr(s, "\n12:1 padded wall|0.59999999999999998\n") != NULL, "%s", s);
  ck_assert_msg(strstr(s, "\n13:1 stop|0\n") != NULL, "%s", s);
  double v[6];
  const char *rows = strstr(s, "|0\n") + 3;
  ck_assert_int_eq(sscanf(rows, "%lg %lg %lg %lg %lg %lg", &v[0], &v[1], &v[2], &v[3], &v[4], &v[5]), 6);
  const double L = 0.8, d = 0.25, th = 0.3, w = -1.7, pi = 3.141592653589793;
  ck_assert_double_eq_tol(v[0], L * sin(th) + d, 1e-14);
  ck_assert_double_eq_tol(v[1], L * cos(th), 1e-14);
  ck_assert_double_eq_tol(v[2], L * sin(th) * w * w, 1e-14);
  ck_assert_double_eq_tol(v[3], th + pi / 2, 1e-14);
  ck_assert_double_eq(v[4], 1.0);
  ck_assert_double_eq(v[5], 0.0);
  run_free(&r);
  free(drv);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* `eomc check` lists each stop with its bounce and text. */
START_TEST(test_check_lists_stops) {
  char *argv[] = {(char *)eomc(), "check", model_path("wall_pendulum.eom"), NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert_msg(strstr(r.out, "line 12    stop (bounce 0.6)  padded wall\n") != NULL, "%s", r.out);
  ck_assert_msg(strstr(r.out, "line 13    stop (bounce 0)\n") != NULL, "%s", r.out);
  ck_assert_msg(strstr(r.out, "end stops: 2") != NULL, "%s", r.out);
  run_free(&r);
}
END_TEST

/* `eomc show` prints each gap. */
START_TEST(test_show_lists_stops) {
  char *argv[] = {(char *)eomc(), "show", model_path("wall_pendulum.eom"), NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert_msg(strstr(r.out, "stops (gap g = left - right >= 0") != NULL, "%s", r.out);
  ck_assert_msg(strstr(r.out, "[line 12, bounce 0.6: \"padded wall\"]") != NULL, "%s", r.out);
  run_free(&r);
}
END_TEST

/* Until the runtime simulates stops, a run refuses (rather than passing
** through the wall). */
START_TEST(test_sim_refuses) {
  char *argv[] = {(char *)eomc(), "sim", model_path("wall_pendulum.eom"), "--until", "1", NULL};
  RunResult r = run_argv(argv);
  ck_assert_int_ne(r.status, 0);
  ck_assert_msg(strstr(r.err, "end stops ('stop'): simulating them is not supported yet") != NULL,
                "%s", r.err);
  run_free(&r);
}
END_TEST

static Suite *stops_suite(void) {
  Suite *s = suite_create("stops");
  TCase *tc = tcase_create("stops");
  tcase_add_checked_fixture(tc, setup, teardown);
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, test_generated_gaps);
  tcase_add_test(tc, test_check_lists_stops);
  tcase_add_test(tc, test_show_lists_stops);
  tcase_add_test(tc, test_sim_refuses);
  suite_add_tcase(s, tc);
  return s;
}

int main(int argc, char **argv) { return run_test_main(argc, argv, stops_suite); }
