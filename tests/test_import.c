/*
** test_import.c — end to end: `eomc import` of robot descriptions (URDF,
** issue 18).
**
** The picking arm of examples/pick_arm3.urdf is imported, checked, built
** and compared at 100 pseudo-random states with a model of the same robot
** written by hand (tests/models/pick_arm3_hand.eom, its frames worked out
** on paper): M, f and P_inverse must agree to 1e-12 relative.  Both are
** ours; the body dynamics they share is checked elsewhere against recursive
** Newton–Euler (Featherstone, Rigid Body Dynamics Algorithms, 2008, ch. 5),
** so what this test checks is the reading of the description: URDF's
** frame conventions (origin xyz then roll-pitch-yaw about fixed axes,
** R = Rz(yaw) Ry(pitch) Rx(roll); joint axes in the joint frame; inertial
** origins and axes), as the URDF specification of the ROS project states
** them (common practice across the robotics trade).
**
** tests/bad_urdf/ is a catalogue of malformed descriptions; the first line
** of each says where its error must be and what it says.
*/
#include <check.h>
#include <dirent.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "testutil.h"

/* Every test builds into a private cache and work directory. */
static char *work;
static void setup(void) {
  work = make_temp_dir();
  setenv("EOMC_CACHE_DIR", work, 1);
}
static void teardown(void) {
  remove_tree(work);
  free(work);
}

/* dir/name, malloc'd (no Check assertion: also used while the suite is built) */
static char *path_in(const char *dir, const char *name) {
  char *p = malloc(strlen(dir) + strlen(name) + 2);
  if (!p) abort();
  sprintf(p, "%s/%s", dir, name);
  return p;
}

/* eomc import SRC -o OUT; returns the written text. */
static char *import(const char *src, const char *out) {
  char *argv[] = {(char *)eomc(), "import", (char *)src, "-o", (char *)out, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "eomc import %s failed (%d):\n%s", src, r.status, r.err);
  run_free(&r);
  char *text = read_file(out, NULL);
  ck_assert_ptr_nonnull(text);
  return text;
}

/* The imported model passes `eomc check`, and importing again gives the
** same text. */
START_TEST(import_checks_and_is_stable) {
  char *src = path_in(srcdir(), "examples/pick_arm3.urdf");
  char *a = path_in(work, "a.eom"), *b = path_in(work, "b.eom");
  char *ta = import(src, a), *tb = import(src, b);
  ck_assert_str_eq(ta, tb);
  char *argv[] = {(char *)eomc(), "check", a, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0 && r.err[0] == '\0', "eomc check (%d):\n%s", r.status, r.err);
  /* one coordinate per moving joint, named after it; the tool as a frame */
  ck_assert_msg(strstr(ta, "\ncoord yaw ") && strstr(ta, "\ncoord shoulder ") &&
                    strstr(ta, "\ncoord elbow ") && !strstr(ta, "coord gripper_mount"),
                "%s", ta);
  ck_assert_msg(strstr(ta, "\nframe gripper_frame = ") != NULL, "%s", ta);
  ck_assert_msg(strstr(ta, "# limits of shoulder: -1.9 .. 1.9 rad") != NULL, "%s", ta);
  run_free(&r);
  free(src), free(a), free(b), free(ta), free(tb);
}
END_TEST

static const char driver_src[] =
  "#include <stdio.h>\n#include <math.h>\n#include <eom/model.h>\n"
  "extern const struct eom_model pick_arm3_model, pick_arm3_hand_model;\n"
  "static unsigned long long seed = 2718281828ULL;\n"
  "static double uniform(void) {\n"
  "  seed = seed * 6364136223846793005ULL + 1442695040888963407ULL;\n"
  "  return (double)(seed >> 11) / 4503599627370496.0 - 1.0;\n}\n"
  "static double worst = 0;\n"
  "static void cmp(const double *a, const double *b, int n) {\n"
  "  int i; double s = 0;\n"
  "  for (i = 0; i < n; i++) s = fmax(s, fabs(b[i]));\n"
  "  for (i = 0; i < n; i++) if (!(fabs(a[i] - b[i]) <= worst * (1 + s))) worst = fabs(a[i] - b[i]) / (1 + s);\n"
  "}\n"
  "int main(void) {\n"
  "  const struct eom_model *a = &pick_arm3_model, *b = &pick_arm3_hand_model;\n"
  "  double pa[32], pb[32], q[3], qd[3], qdd[3], u[3], Ma[9], Mb[9], fa[3], fb[3], Qa[3], Qb[3];\n"
  "  int s, i;\n"
  "  if (a->nq != 3 || b->nq != 3 || a->np != b->np || a->nu != 3 || b->nu != 3) return 3;\n"
  "  for (i = 0; i < a->np; i++) { pa[i] = a->param_defaults[i]; pb[i] = b->param_defaults[i]; }\n"
  "  for (s = 0; s < 100; s++) {\n"
  "    for (i = 0; i < 3; i++) { q[i] = 3 * uniform(); qd[i] = 2 * uniform(); qdd[i] = 2 * uniform(); u[i] = 5 * uniform(); }\n"
  "    a->mass(q, pa, Ma); b->mass(q, pb, Mb); cmp(Ma, Mb, 9);\n"
  "    a->forcing(0, q, qd, u, pa, fa); b->forcing(0, q, qd, u, pb, fb); cmp(fa, fb, 3);\n"
  "    a->inverse(0, q, qd, qdd, pa, Qa); b->inverse(0, q, qd, qdd, pb, Qb); cmp(Qa, Qb, 3);\n"
  "  }\n"
  "  printf(\"worst %.3g\\n\", worst);\n"
  "  return 0;\n"
  "}\n";

static void gen(const char *model, const char *dir) {
  char *argv[] = {(char *)eomc(), "gen", (char *)model, "-o", (char *)dir, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "eomc gen %s failed (%d):\n%s", model, r.status, r.err);
  run_free(&r);
}

/* The imported arm against the hand-written one (see the header). */
START_TEST(imported_arm_matches_hand_model) {
  char *src = path_in(srcdir(), "examples/pick_arm3.urdf");
  char *mine = path_in(work, "pick_arm3.eom");
  char *hand = path_in(srcdir(), "tests/models/pick_arm3_hand.eom");
  free(import(src, mine));
  gen(mine, work);
  gen(hand, work);
  char *drv = write_file(work, "driver.c", driver_src, strlen(driver_src));
  char *ca = path_in(work, "pick_arm3.c"), *cb = path_in(work, "pick_arm3_hand.c");
  char *exe = path_in(work, "driver"), *inc = malloc(strlen(srcdir()) + 16);
  ck_assert_ptr_nonnull(inc);
  sprintf(inc, "-I%s/include", srcdir());
  char *argv[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror", inc,
                  ca, cb, drv, "-o", exe, "-lm", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s fails on the generated code (%d):\n%s", cc(), r.status, r.err);
  run_free(&r);
  char *run[] = {exe, NULL};
  r = run_argv(run);
  ck_assert_msg(r.status == 0, "driver failed (%d): %s", r.status, r.err);
  double worst = -1;
  ck_assert_int_eq(sscanf(r.out, "worst %lf", &worst), 1);
  ck_assert_msg(worst < 1e-12, "imported and hand-written arms differ by %g (relative)", worst);
  run_free(&r);
  free(src), free(mine), free(hand), free(drv), free(ca), free(cb), free(exe), free(inc);
}
END_TEST

/* ------------------------------------------------------------ catalogue */

static char **bad_files;
static int bad_count;

static int by_name(const void *a, const void *b) {
  return strcmp(*(char *const *)a, *(char *const *)b);
}

static void list_bad_files(void) {
  char *dir = path_in(srcdir(), "tests/bad_urdf");
  DIR *d = opendir(dir);
  struct dirent *e;
  bad_count = 0;
  bad_files = calloc(64, sizeof *bad_files);
  while (d && bad_files && (e = readdir(d)) != NULL && bad_count < 64) {
    size_t n = strlen(e->d_name);
    if (n > 5 && strcmp(e->d_name + n - 5, ".urdf") == 0) bad_files[bad_count++] = path_in(dir, e->d_name);
  }
  if (d) closedir(d);
  if (bad_count) qsort(bad_files, (size_t)bad_count, sizeof *bad_files, by_name);
  free(dir);
}

/* Each malformed description: exit 1 and its error at the expected place. */
START_TEST(bad_catalogue) {
  const char *file = bad_files[_i];
  char *text = read_file(file, NULL);
  ck_assert_ptr_nonnull(text);
  char where[32], what[256];
  ck_assert_msg(sscanf(text, "<!-- expect: %31[0-9:] %255[^\n]", where, what) == 2,
                "%s: no expect line", file);
  char *end = strstr(what, " -->");
  ck_assert_ptr_nonnull(end);
  *end = '\0';
  char *out = path_in(work, "out.eom");
  char *argv[] = {(char *)eomc(), "import", (char *)file, "-o", out, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 1, "%s: status %d\n%s", file, r.status, r.err);
  char want[512];
  snprintf(want, sizeof want, "%s %s", where, "error: ");
  const char *at = strstr(r.err, want);
  ck_assert_msg(at != NULL, "%s: no error at %s in:\n%s", file, where, r.err);
  const char *eol = strchr(at, '\n');
  ck_assert_msg(strstr(at, what) != NULL && (!eol || strstr(at, what) < eol),
                "%s: want '%s' at %s in:\n%s", file, what, where, r.err);
  FILE *f = fopen(out, "r");
  ck_assert_msg(f == NULL, "%s: a model was written despite the error", file);
  run_free(&r);
  free(text), free(out);
}
END_TEST

START_TEST(usage_errors) {
  char *argv[] = {(char *)eomc(), "import", NULL};
  RunResult r = run_argv(argv);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
  char *argv2[] = {(char *)eomc(), "import", "/nonexistent/robot.urdf", NULL};
  r = run_argv(argv2);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
}
END_TEST

static Suite *import_suite(void) {
  Suite *s = suite_create("import");
  TCase *tc = tcase_create("import");
  /* building two models: ~3 s plain */
  tcase_set_timeout(tc, 120);
  tcase_add_checked_fixture(tc, setup, teardown);
  tcase_add_test(tc, import_checks_and_is_stable);
  tcase_add_test(tc, imported_arm_matches_hand_model);
  tcase_add_test(tc, usage_errors);
  suite_add_tcase(s, tc);
  TCase *bad = tcase_create("bad_urdf");
  tcase_set_timeout(bad, 30);
  tcase_add_checked_fixture(bad, setup, teardown);
  list_bad_files();
  tcase_add_loop_test(bad, bad_catalogue, 0, bad_count);
  suite_add_tcase(s, bad);
  return s;
}

int main(int argc, char **argv) {
  return run_test_main(argc, argv, import_suite);
}
