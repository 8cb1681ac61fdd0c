/*
** test_cli.c — end-to-end tests of the eomc command line: exit statuses,
** hostile input, and the catalogue of malformed models in tests/bad/.
**
** Each model in tests/bad/ starts with `# expect: LINE:COL: SUBSTRING`: the
** position and a piece of the message of the first error eomc must print.
*/
#include <check.h>
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "testutil.h"


static RunResult run2(const char *verb, const char *arg) {
  char *argv[] = {(char *)eomc(), (char *)verb, (char *)arg, NULL};
  if (!arg) argv[2] = NULL;
  return run_argv(argv);
}

/* Run `eomc check` on model text; returns the result. */
static RunResult check_text(const char *text, size_t len) {
  char *dir = make_temp_dir();
  char *path = write_file(dir, "model.eom", text, len);
  RunResult r = run2("check", path);
  free(path);
  remove_tree(dir);
  free(dir);
  return r;
}

START_TEST(usage_statuses) {
  RunResult r = run2(NULL, NULL);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
  r = run2("--help", NULL);
  ck_assert_int_eq(r.status, 0);
  ck_assert_ptr_nonnull(strstr(r.out, "usage: eomc"));
  run_free(&r);
  r = run2("--version", NULL);
  ck_assert_int_eq(r.status, 0);
  ck_assert_ptr_nonnull(strstr(r.out, "eomc "));
  run_free(&r);
  r = run2("frobnicate", NULL);
  ck_assert_int_eq(r.status, 2);
  ck_assert_ptr_nonnull(strstr(r.err, "unknown command"));
  run_free(&r);
  r = run2("check", NULL);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
  r = run2("check", "--help");
  ck_assert_int_eq(r.status, 0);
  run_free(&r);
  r = run2("check", "/nonexistent/dir/model.eom");
  ck_assert_int_eq(r.status, 2);
  /* through the Diag like every error: FILE: error: message */
  ck_assert_msg(strstr(r.err, "/nonexistent/dir/model.eom: error: cannot open the file") != NULL,
                "%s", r.err);
  run_free(&r);
}
END_TEST

/* Whatever the bytes, eomc answers with diagnostics and status 1: no crash. */
static void expect_model_error(const char *text, size_t len, const char *substr) {
  RunResult r = check_text(text, len);
  ck_assert_msg(r.status == 1, "status %d, stderr: %.300s", r.status, r.err ? r.err : "");
  ck_assert_ptr_nonnull(strstr(r.err, "error:"));
  if (substr) ck_assert_msg(strstr(r.err, substr) != NULL, "missing '%s' in: %.300s", substr, r.err);
  run_free(&r);
}

START_TEST(empty_file) { expect_model_error("", 0, "coordinate"); }
END_TEST

START_TEST(binary_garbage) {
  char buf[4096];
  unsigned x = 12345;
  for (size_t i = 0; i < sizeof buf; i++) {
    x = x * 1103515245u + 12345u;
    buf[i] = (char)(x >> 16);
  }
  expect_model_error(buf, sizeof buf, NULL);
}
END_TEST

START_TEST(non_utf8_bytes) {
  const char text[] = "coord x [m]\nparam k\xff\xfe = 2\nkinetic x'^2/2\n";
  expect_model_error(text, sizeof text - 1, NULL);
}
END_TEST

START_TEST(nul_byte) {
  const char text[] = "coord x\n\0kinetic x'^2\n";
  expect_model_error(text, sizeof text - 1, NULL);
}
END_TEST

START_TEST(deep_nesting) {
  size_t n = 100000, len = 0;
  char *text = malloc(2 * n + 64);
  len += (size_t)sprintf(text, "coord x\nkinetic ");
  for (size_t i = 0; i < n; i++) text[len++] = '(';
  text[len++] = 'x';
  for (size_t i = 0; i < n; i++) text[len++] = ')';
  text[len++] = '\n';
  expect_model_error(text, len, "nesting too deep");
  free(text);
}
END_TEST

START_TEST(deep_unary_chain) {
  size_t n = 100000, len = 0;
  char *text = malloc(n + 64);
  len += (size_t)sprintf(text, "coord x\nkinetic ");
  for (size_t i = 0; i < n; i++) text[len++] = '-';
  len += (size_t)sprintf(text + len, "x'^2\n");
  expect_model_error(text, len, "too deep");
  free(text);
}
END_TEST

START_TEST(megabyte_line) {
  size_t n = 1 << 20, len = 0;
  char *text = malloc(n + 64);
  len += (size_t)sprintf(text, "coord x\nkinetic x'^2/2 ");
  while (len < n) text[len++] = '@';
  text[len++] = '\n';
  RunResult r = check_text(text, len);
  ck_assert_int_eq(r.status, 1);
  ck_assert_ptr_nonnull(strstr(r.err, ":2:"));
  ck_assert_msg(strlen(r.err) < 4096, "diagnostic should not echo the whole line");
  run_free(&r);
  free(text);
}
END_TEST

/* Parse `# expect: L:C: text` from the first line of a catalogue file. */
static int parse_expect(const char *src, int *line, int *col, char *msg, size_t msglen) {
  const char *p = strstr(src, "# expect:");
  const char *nl = strchr(src, '\n');
  if (!p || (nl && p > nl)) return 0;
  if (sscanf(p, "# expect: %d:%d:", line, col) != 2) return 0;
  const char *m = strchr(strchr(p + 9, ':') + 1, ':') + 1;
  while (*m == ' ') m++;
  size_t n = nl ? (size_t)(nl - m) : strlen(m);
  if (n >= msglen) n = msglen - 1;
  memcpy(msg, m, n);
  msg[n] = '\0';
  return 1;
}

/* The malformed-model catalogue, listed once before the tests run; each
** model is one iteration of a loop test, so a slow machine times one model
** at a time, not the whole catalogue. */
static char **catalogue;
static int catalogue_count;

START_TEST(catalogue_is_full) {
  ck_assert_msg(catalogue_count >= 40, "the catalogue must hold at least 40 malformed models, found %d",
                catalogue_count);
}
END_TEST

START_TEST(bad_catalogue) {
  const char *path = catalogue[_i];
  char *src = read_file(path, NULL);
  ck_assert_ptr_nonnull(src);
  int line, col;
  char msg[512];
  ck_assert_msg(parse_expect(src, &line, &col, msg, sizeof msg), "%s: no '# expect:' line", path);
  RunResult r = run2("check", path);
  char where[8300];
  snprintf(where, sizeof where, "%s:%d:%d: error: ", path, line, col);
  /* The first error line must be at the expected place and name the problem. */
  const char *first = r.err ? strstr(r.err, ": error: ") : NULL;
  while (first && first > r.err && first[-1] != '\n') first--;
  size_t first_len = first ? strcspn(first, "\n") : 0;
  const char *found = first ? strstr(first, msg) : NULL;
  int ok = r.status == 1 && first && strncmp(first, where, strlen(where)) == 0 && found &&
           (size_t)(found - first) < first_len;
  ck_assert_msg(ok, "%s: expected first error at %d:%d containing '%s'; status %d, got:\n%s", path,
                line, col, msg, r.status, r.err ? r.err : "");
  run_free(&r);
  free(src);
}
END_TEST

START_TEST(examples_check_clean) {
  char dir[4096];
  snprintf(dir, sizeof dir, "%s/examples", srcdir());
  DIR *d = opendir(dir);
  ck_assert_ptr_nonnull(d);
  struct dirent *e;
  int count = 0;
  while ((e = readdir(d))) {
    size_t len = strlen(e->d_name);
    if (len <= 4 || strcmp(e->d_name + len - 4, ".eom") != 0) continue;
    char path[8192];
    snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
    RunResult r = run2("check", path);
    ck_assert_msg(r.status == 0, "%s: status %d\n%s", e->d_name, r.status, r.err);
    ck_assert_msg(strstr(r.err, "warning") == NULL, "%s warns:\n%s", e->d_name, r.err);
    run_free(&r);
    count++;
  }
  closedir(d);
  ck_assert_int_ge(count, 4);
}
END_TEST

/* An inertia that is not positive definite at the initial state is no rigid
** body's (its principal moments must be positive): a warning, naming the
** body; a proper one gives none.  Leading minors of a symmetric matrix
** (Sylvester's criterion, common practice). */
START_TEST(inertia_not_positive_definite_warns) {
  char *dir = make_temp_dir();
  const char *bad = "coord q\nparam J = 0.5\nlet T1 = dh(q, 0, 1, 0)\n"
                    "body flap mass 1 at pos(T1) orient rot(T1) inertia [[J, 0, 0], [0, J - 1, 0], [0, 0, 1]]\n";
  const char *good = "coord q\nparam J = 1.5\nlet T1 = dh(q, 0, 1, 0)\n"
                     "body flap mass 1 at pos(T1) orient rot(T1) inertia [[J, 0, 0], [0, J - 1, 0], [0, 0, 1]]\n";
  char *mb = write_file(dir, "bad.eom", bad, strlen(bad)), *mg = write_file(dir, "good.eom", good, strlen(good));
  RunResult r = run2("check", mb);
  ck_assert_int_eq(r.status, 0);
  ck_assert_msg(strstr(r.err, "bad.eom:4:52: warning: the inertia of body 'flap' is not positive definite") != NULL,
                "%s", r.err);
  run_free(&r);
  r = run2("check", mg);
  ck_assert_int_eq(r.status, 0);
  ck_assert_msg(strstr(r.err, "warning") == NULL, "%s", r.err);
  run_free(&r);
  free(mb), free(mg);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* A coordinate no kinetic term moves has a zero row in M: `check` says so
** at the coordinate's declaration and fails; `gen` still writes the code
** (its inverse dynamics are sound) with the same words as a warning.  A
** coordinate whose inertia only vanishes at some states is no such case. */
/* `check` lists each attitude with its initial quaternion and angular
** velocity and derives the equations; `gen` writes the code; `sweep`
** refuses the model with an error at the attitude (its analysis does not
** handle attitudes yet), not a crash or a wrong run. */
START_TEST(attitude_check_summary) {
  static const char model[] =
    "coord x, y, z [m]\n"
    "attitude hull \"survey float\"\n"
    "param m = 40 [kg]\n"
    "param J = 3 [kg*m^2]\n"
    "kinetic m*(x'^2 + y'^2 + z'^2)/2 + J*dot(omega(hull), omega(hull))/2\n"
    "initial hull = rotx(pi)\n"
    "initial omega(hull) = [0, 0.25, 0]\n";
  RunResult r = check_text(model, sizeof model - 1);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.out, "attitudes (1):") != NULL, "%s", r.out);
  /* a half turn about x is the quaternion [0, 1, 0, 0] (common practice) */
  ck_assert_msg(strstr(r.out, "hull  initial [0, 1, 0, 0], omega [0, 0.25, 0]  survey float") != NULL,
                "%s", r.out);
  ck_assert_msg(strstr(r.out, "M/C/g split: not available: the model has attitudes") != NULL, "%s", r.out);
  ck_assert_msg(strstr(r.out, "energy function h = q'.dL/dq' - L") != NULL, "%s", r.out);
  run_free(&r);
  char *dir = make_temp_dir();
  char *path = write_file(dir, "float.eom", model, sizeof model - 1);
  char *argv[] = {(char *)eomc(), "gen", path, "-o", dir, NULL};
  r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s", r.err);
  run_free(&r);
  char *argv_sim[] = {(char *)eomc(), "sweep", path, "--vary", "m=30:50:2", NULL};
  r = run_argv(argv_sim);
  ck_assert_int_eq(r.status, 1);
  ck_assert_msg(strstr(r.err, "float.eom:2:10: error: attitude 'hull'") != NULL, "%s", r.err);
  run_free(&r);
  free(path);
  remove_tree(dir);
  free(dir);
}
END_TEST

START_TEST(coordinate_without_inertia) {
  char *dir = make_temp_dir();
  const char *bad = "model idle\ncoord x [m]\ncoord z [m]\nparam m = 2 [kg]\nparam k = 50 [N/m]\n"
                    "kinetic m*x'^2/2\npotential k*x^2/2 + k*z^2/2\n";
  const char *fine = "model fine\ncoord x [m]\ncoord z [m]\nparam m = 2 [kg]\nparam L = 1 [m]\n"
                     "kinetic m*x'^2/2 + m*(x/L)^2*z'^2/2\ninitial x = 0.1\n";
  char *mb = write_file(dir, "idle.eom", bad, strlen(bad));
  char *mf = write_file(dir, "fine.eom", fine, strlen(fine));
  RunResult r = run2("check", mb);
  ck_assert_msg(r.status == 1, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.err, "idle.eom:3:7: error: coordinate 'z' has no inertia") != NULL, "%s",
                r.err);
  ck_assert_msg(strstr(r.err, "'x'") == NULL, "%s", r.err);
  run_free(&r);
  char *argv[] = {(char *)eomc(), "gen", mb, "-o", dir, NULL};
  r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.err, "idle.eom:3:7: warning: coordinate 'z' has no inertia") != NULL,
                "%s", r.err);
  run_free(&r);
  r = run2("check", mf);
  ck_assert_msg(r.status == 0 && strstr(r.err, "inertia") == NULL, "status %d: %s", r.status,
                r.err);
  run_free(&r);
  free(mb), free(mf);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* Several models in one `eomc gen`, one depfile for all; --quiet and --verbose. */
START_TEST(gen_several_models) {
  char *dir = make_temp_dir();
  char a[4096], b[4096], dep[4200];
  snprintf(a, sizeof a, "%s/examples/seat_rig.eom", srcdir());
  snprintf(b, sizeof b, "%s/examples/gantry_crane.eom", srcdir());
  snprintf(dep, sizeof dep, "%s/all.d", dir);
  char *argv[] = {(char *)eomc(), "gen", a, b, "-o", dir, "--depfile", dep, "--verbose", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_ptr_nonnull(strstr(r.err, "seat_rig.h and"));
  ck_assert_ptr_nonnull(strstr(r.err, "gantry_crane.h and"));
  /* -v tells writing from finding the files up to date. */
  ck_assert_msg(strstr(r.err, "wrote ") != NULL && strstr(r.err, "up to date") == NULL, "%s", r.err);
  run_free(&r);
  r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.err, "wrote ") == NULL && strstr(r.err, "already up to date") != NULL,
                "%s", r.err);
  run_free(&r);
  const char *files[] = {"seat_rig.h", "seat_rig.c", "gantry_crane.h", "gantry_crane.c"};
  char *rule = read_file(dep, NULL);
  ck_assert_ptr_nonnull(rule);
  for (int i = 0; i < 4; i++) {
    char path[4200];
    snprintf(path, sizeof path, "%s/%s", dir, files[i]);
    char *text = read_file(path, NULL);
    ck_assert_msg(text != NULL, "%s not written", files[i]);
    ck_assert_ptr_nonnull(strstr(rule, path));
    free(text);
  }
  ck_assert_ptr_nonnull(strstr(rule, a));
  ck_assert_ptr_nonnull(strstr(rule, b));
  free(rule);

  /* --prefix names one model's symbols; quiet and verbose exclude each other. */
  char *prefixed[] = {(char *)eomc(), "gen", a, b, "-o", dir, "--prefix", "x", NULL};
  r = run_argv(prefixed);
  ck_assert_int_eq(r.status, 2);
  ck_assert_ptr_nonnull(strstr(r.err, "--prefix"));
  run_free(&r);
  char *both[] = {(char *)eomc(), "gen", a, "-q", "-v", "-o", dir, NULL};
  r = run_argv(both);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);

  /* --quiet leaves out the warning an unused param gives; errors still show. */
  const char *text = "coord x\nparam k = 2\nkinetic x'^2/2\n";
  char *m = write_file(dir, "unused.eom", text, strlen(text));
  char *loud[] = {(char *)eomc(), "gen", m, "-o", dir, NULL};
  r = run_argv(loud);
  ck_assert_int_eq(r.status, 0);
  ck_assert_ptr_nonnull(strstr(r.err, "warning"));
  run_free(&r);
  char *quiet[] = {(char *)eomc(), "gen", m, "-o", dir, "--quiet", NULL};
  r = run_argv(quiet);
  ck_assert_int_eq(r.status, 0);
  ck_assert_ptr_null(strstr(r.err, "warning"));
  ck_assert_ptr_null(strstr(r.err, "never used"));
  run_free(&r);
  free(m);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* --max-memory stops a derivation cleanly.  Skipped under AddressSanitizer,
** whose own allocator cannot live under an address-space limit. */
START_TEST(gen_memory_limit) {
#if defined(__SANITIZE_ADDRESS__)
  return;
#endif
  char *dir = make_temp_dir();
  /* A 24-link chain needs well over 10 MB to derive. */
  size_t cap = 1 << 16, len = 0;
  char *text = malloc(cap);
  len += (size_t)snprintf(text, cap, "coord q1");
  for (int i = 2; i <= 24; i++) len += (size_t)snprintf(text + len, cap - len, ", q%d", i);
  len += (size_t)snprintf(text + len, cap - len, "\nparam l = 0.4\nlet x0 = 0\nlet y0 = 0\n");
  for (int i = 1; i <= 24; i++)
    len += (size_t)snprintf(text + len, cap - len,
                            "let x%d = x%d + l*sin(q%d)\nlet y%d = y%d - l*cos(q%d)\n"
                            "kinetic (x%d'^2 + y%d'^2)/2\npotential 9.81*y%d\n",
                            i, i - 1, i, i, i - 1, i, i, i, i);
  char *model = write_file(dir, "chain.eom", text, len);
  char *argv[] = {(char *)eomc(), "gen", model, "-o", dir, "--max-memory", "10", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 1, "status %d: %s", r.status, r.err);
  ck_assert_ptr_nonnull(strstr(r.err, "--max-memory 10 MB"));
  run_free(&r);
  char out[4200];
  snprintf(out, sizeof out, "%s/chain.c", dir);
  ck_assert_ptr_null(read_file(out, NULL));
  char *bad[] = {(char *)eomc(), "gen", model, "-o", dir, "--max-memory", "lots", NULL};
  r = run_argv(bad);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
  free(model);
  free(text);
  remove_tree(dir);
  free(dir);
}
END_TEST

int main(void) {
  char dir[4096];
  snprintf(dir, sizeof dir, "%s/tests/bad", srcdir());
  catalogue = model_files(dir, &catalogue_count);
  Suite *s = suite_create("cli");
  TCase *tc = tcase_create("usage");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, usage_statuses);
  suite_add_tcase(s, tc);
  tc = tcase_create("hostile");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, empty_file);
  tcase_add_test(tc, binary_garbage);
  tcase_add_test(tc, non_utf8_bytes);
  tcase_add_test(tc, nul_byte);
  tcase_add_test(tc, deep_nesting);
  tcase_add_test(tc, deep_unary_chain);
  tcase_add_test(tc, megabyte_line);
  suite_add_tcase(s, tc);
  tc = tcase_create("catalogue");
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, catalogue_is_full);
  tcase_add_loop_test(tc, bad_catalogue, 0, catalogue_count);
  tcase_add_test(tc, inertia_not_positive_definite_warns);
  tcase_add_test(tc, coordinate_without_inertia);
  tcase_add_test(tc, attitude_check_summary);
  tcase_add_test(tc, examples_check_clean);
  tcase_add_test(tc, gen_several_models);
  tcase_add_test(tc, gen_memory_limit);
  suite_add_tcase(s, tc);
  SRunner *sr = srunner_create(s);
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  for (int i = 0; i < catalogue_count; i++) free(catalogue[i]);
  free(catalogue);
  return failed ? 1 : 0;
}
