/*
** test_depfile.c — the Make-syntax dependency-file writer (compiler/emit/depfile.c).
**
** The escaping is checked twice: against the rules as GNU make documents
** them (GNU make manual, Stallman, McGrath & Smith, "GNU Make", ed. for make
** 4.3, 2020, §4.2 "Rule Syntax" for '$$' in file names and §3.1 for '\#';
** section numbers from memory), and end to end by letting GNU make itself
** read the file back and name the targets and prerequisites it understood
** (that covers the backslash-doubling rule, which the manual leaves out).
** Writing is checked for the build-tool contract: atomic, and the mtime kept
** when nothing changed.
*/
#include <check.h>
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>
#include <utime.h>

#include "emit/depfile.h"
#include "testutil.h"

static char err[512];

/* Escaped form of one name (static buffer). */
static const char *esc(const char *name, int is_target) {
  static char buf[512];
  long n = depfile_escape(name, is_target, buf, sizeof buf, err, sizeof err);
  ck_assert_msg(n >= 0, "escape of '%s' failed: %s", name, err);
  ck_assert_int_eq((long)strlen(buf), n);
  return buf;
}

START_TEST(escape_rules) {
  ck_assert_str_eq(esc("model.eom", 0), "model.eom");
  ck_assert_str_eq(esc("out dir/P.h", 0), "out\\ dir/P.h");
  ck_assert_str_eq(esc("a\tb", 0), "a\\\tb");
  ck_assert_str_eq(esc("take#2.eom", 0), "take\\#2.eom");
  ck_assert_str_eq(esc("cost$.eom", 0), "cost$$.eom");
  ck_assert_str_eq(esc("$$", 0), "$$$$");
  ck_assert_str_eq(esc("a:b", 0), "a\\:b");
  /* '%' only turns a target into a pattern. */
  ck_assert_str_eq(esc("50%.eom", 0), "50%.eom");
  ck_assert_str_eq(esc("50%.h", 1), "50\\%.h");
  /* Backslashes: kept as they are unless an escape follows them. */
  ck_assert_str_eq(esc("a\\b", 0), "a\\b");
  ck_assert_str_eq(esc("a\\\\b", 0), "a\\\\b");
  ck_assert_str_eq(esc("a\\ b", 0), "a\\\\\\ b");
  ck_assert_str_eq(esc("a\\\\ b", 0), "a\\\\\\\\\\ b");
  ck_assert_str_eq(esc("a\\#b", 0), "a\\\\\\#b");
  /* Non-ASCII bytes pass through untouched. */
  ck_assert_str_eq(esc("f\xc3\xbc\xc3\x9f.eom", 0), "f\xc3\xbc\xc3\x9f.eom");
}
END_TEST

START_TEST(escape_reports_size_like_snprintf) {
  char small[4];
  long n = depfile_escape("a b c", 0, small, sizeof small, err, sizeof err);
  ck_assert_int_eq(n, 7);              /* "a\ b\ c" */
  ck_assert_str_eq(small, "a\\ ");     /* cut short, still terminated */
  n = depfile_escape("a b c", 0, NULL, 0, err, sizeof err);
  ck_assert_int_eq(n, 7);
}
END_TEST

START_TEST(unwritable_names_are_errors) {
  char buf[64];
  ck_assert_int_eq(depfile_escape("", 0, buf, sizeof buf, err, sizeof err), -1);
  ck_assert_ptr_nonnull(strstr(err, "empty"));
  ck_assert_int_eq(depfile_escape("a\nb", 0, buf, sizeof buf, err, sizeof err), -1);
  ck_assert_ptr_nonnull(strstr(err, "line break"));
  ck_assert_int_eq(depfile_escape("a\rb", 1, buf, sizeof buf, err, sizeof err), -1);
  ck_assert_int_eq(depfile_escape("dir\\", 0, buf, sizeof buf, err, sizeof err), -1);
  ck_assert_ptr_nonnull(strstr(err, "backslash"));
}
END_TEST

START_TEST(format_rule) {
  const char *t[] = {"out/P.h", "out/P.c"};
  const char *d[] = {"m.eom", "parts/arm.eom"};
  char *s = depfile_format(t, 2, d, 2, err, sizeof err);
  ck_assert_ptr_nonnull(s);
  ck_assert_str_eq(s, "out/P.h out/P.c: m.eom parts/arm.eom\n");
  free(s);
  s = depfile_format(t, 1, NULL, 0, err, sizeof err);
  ck_assert_str_eq(s, "out/P.h:\n");
  free(s);
  ck_assert_ptr_null(depfile_format(NULL, 0, d, 1, err, sizeof err));
  ck_assert_ptr_nonnull(strstr(err, "target"));
  d[1] = "bad\nname";
  ck_assert_ptr_null(depfile_format(t, 2, d, 2, err, sizeof err));
}
END_TEST

/* ------------------------------------------------------------ writing */

static time_t mtime_of(const char *path) {
  struct stat st;
  ck_assert_int_eq(stat(path, &st), 0);
  return st.st_mtime;
}

static char *path_in(const char *dir, const char *name) {
  char *p = malloc(strlen(dir) + strlen(name) + 2);
  sprintf(p, "%s/%s", dir, name);
  return p;
}

/* Pretend the file was written long ago, so a rewrite would show. */
static void age(const char *path) {
  struct utimbuf old = {1000000000, 1000000000};
  ck_assert_int_eq(utime(path, &old), 0);
}

START_TEST(write_keeps_unchanged_file) {
  char *dir = make_temp_dir();
  char *path = path_in(dir, "P.d");
  const char *t[] = {"P.h", "P.c"};
  const char *d[] = {"P.eom"};
  char *text;
  ck_assert_int_eq(depfile_write(path, t, 2, d, 1, err, sizeof err), 0);
  text = read_file(path, NULL);
  ck_assert_str_eq(text, "P.h P.c: P.eom\n");
  free(text);
  age(path);
  ck_assert_int_eq(depfile_write(path, t, 2, d, 1, err, sizeof err), 0);
  ck_assert_int_eq((long)mtime_of(path), 1000000000L);
  /* A different rule replaces it. */
  d[0] = "Q.eom";
  ck_assert_int_eq(depfile_write(path, t, 2, d, 1, err, sizeof err), 0);
  ck_assert_int_ne((long)mtime_of(path), 1000000000L);
  text = read_file(path, NULL);
  ck_assert_str_eq(text, "P.h P.c: Q.eom\n");
  free(text);
  ck_assert_int_eq(count_entries(dir), 1); /* no temporary left behind */
  free(path);
  remove_tree(dir);
  free(dir);
}
END_TEST

START_TEST(write_failure_leaves_old_file) {
  char *dir = make_temp_dir();
  char *path = path_in(dir, "P.d");
  char *missing = path_in(dir, "no/such/dir/P.d");
  char *sub = path_in(dir, "sub");
  const char *t[] = {"P.h"};
  const char *d[] = {"P.eom"};
  const char *bad[] = {"line\nbreak.eom"};
  char *text;
  ck_assert_int_eq(depfile_write(path, t, 1, d, 1, err, sizeof err), 0);
  ck_assert_int_eq(depfile_write(path, t, 1, bad, 1, err, sizeof err), -1);
  text = read_file(path, NULL);
  ck_assert_str_eq(text, "P.h: P.eom\n");
  free(text);
  ck_assert_int_eq(depfile_write(missing, t, 1, d, 1, err, sizeof err), -1);
  ck_assert_ptr_nonnull(strstr(err, "no/such/dir"));
  ck_assert_int_eq(depfile_write("", t, 1, d, 1, err, sizeof err), -1);
  ck_assert_int_eq(count_entries(dir), 1);
  /* A directory is not replaced, and no temporary is left next to it. */
  ck_assert_int_eq(mkdir(sub, 0777), 0);
  ck_assert_int_eq(depfile_write(sub, t, 1, d, 1, err, sizeof err), -1);
  ck_assert_int_eq(count_entries(dir), 2);
  free(sub);
  free(missing);
  free(path);
  remove_tree(dir);
  free(dir);
}
END_TEST

START_TEST(write_relative_path) {
  char *dir = make_temp_dir();
  char cwd[4096];
  const char *t[] = {"P.h"};
  const char *d[] = {"P.eom"};
  char *text;
  ck_assert_ptr_nonnull(getcwd(cwd, sizeof cwd));
  ck_assert_int_eq(chdir(dir), 0);
  ck_assert_int_eq(depfile_write("P.d", t, 1, d, 1, err, sizeof err), 0);
  text = read_file("P.d", NULL);
  ck_assert_str_eq(text, "P.h: P.eom\n");
  free(text);
  ck_assert_int_eq(chdir(cwd), 0);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* ------------------------------------------------- read back by GNU make */

/* Write `target: dep` as a depfile, include it from a makefile whose only
** rule is that one, ask make for the target, and return what make says is
** missing: make's
** message "No rule to make target 'DEP', needed by 'TARGET'" names both
** exactly as it read them. */
static char *make_reads(const char *target, const char *dep) {
  char *dir = make_temp_dir();
  char *mk = path_in(dir, "Makefile"), *dp = path_in(dir, "rule.d");
  const char *t[] = {target};
  const char *d[] = {dep};
  /* The goal is named: make never picks a target with '%' as its default. */
  char *argv[] = {"make", "--no-print-directory", "-C", dir, (char *)target, NULL};
  char *answer;
  RunResult r;
  FILE *f = fopen(mk, "w");
  ck_assert_ptr_nonnull(f);
  fputs("include rule.d\n", f);
  fclose(f);
  ck_assert_int_eq(depfile_write(dp, t, 1, d, 1, err, sizeof err), 0);
  r = run_argv(argv);
  ck_assert_msg(r.status != 0 && r.status != 127, "make: status %d", r.status);
  answer = strdup(r.err);
  run_free(&r);
  free(mk);
  free(dp);
  remove_tree(dir);
  free(dir);
  return answer;
}

static void expect_make_reads(const char *target, const char *dep) {
  char want[1024];
  char *said = make_reads(target, dep);
  snprintf(want, sizeof want, "No rule to make target '%s', needed by '%s'", dep, target);
  ck_assert_msg(strstr(said, want) != NULL, "make said: %s\nwanted: %s", said, want);
  free(said);
}

START_TEST(gnu_make_reads_it_back) {
  /* Make itself must be there: it is the reference reader. */
  expect_make_reads("P.h", "P.eom");
  expect_make_reads("out dir/P.h", "my model.eom");
  expect_make_reads("out/P.h", "a\tb.eom");
  expect_make_reads("take#2/P.h", "take#2.eom");
  expect_make_reads("cost$/P.h", "$HOME.eom");
  expect_make_reads("50%/P.h", "50%.eom");
  expect_make_reads("c:/P.h", "d:model.eom");
  expect_make_reads("back\\slash/P.h", "a\\b.eom");
  expect_make_reads("x\\ y/P.h", "x\\\\ y.eom");
  expect_make_reads("x\\#y/P.h", "x\\\\#y.eom");
  expect_make_reads("f\xc3\xbc\xc3\x9f/P.h", "f\xc3\xbc\xc3\x9f.eom");
}
END_TEST

static Suite *depfile_suite(void) {
  Suite *s = suite_create("depfile");
  TCase *tc = tcase_create("escape");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, escape_rules);
  tcase_add_test(tc, escape_reports_size_like_snprintf);
  tcase_add_test(tc, unwritable_names_are_errors);
  tcase_add_test(tc, format_rule);
  suite_add_tcase(s, tc);
  tc = tcase_create("write");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, write_keeps_unchanged_file);
  tcase_add_test(tc, write_failure_leaves_old_file);
  tcase_add_test(tc, write_relative_path);
  suite_add_tcase(s, tc);
  tc = tcase_create("make");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, gnu_make_reads_it_back);
  suite_add_tcase(s, tc);
  return s;
}

int main(void) {
  SRunner *sr = srunner_create(depfile_suite());
  int failed;
  /* A make started from `make check` must not join the outer jobserver. */
  unsetenv("MAKEFLAGS");
  unsetenv("MFLAGS");
  unsetenv("MAKELEVEL");
  setenv("LC_ALL", "C", 1); /* make's messages in English */
  srunner_run_all(sr, CK_NORMAL);
  failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
