/*
** test_diag.c — the diagnostics module: message format, source line and
** caret, suppression of follow-on errors, readable output for hostile lines.
*/
#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "front/diag.h"

static char *print_all(const Diag *d) {
  char *buf = NULL;
  size_t len = 0;
  FILE *f = open_memstream(&buf, &len);
  diag_print(d, f);
  fclose(f);
  return buf;
}

static SrcLoc at(int line, int col) {
  SrcLoc l = {line, col};
  return l;
}

START_TEST(format_and_caret) {
  const char *src = "coord x\npotential k*x\n";
  Diag d;
  diag_init(&d, "m.eom", src, strlen(src));
  diag_error(&d, at(2, 11), "undefined name '%s'", "k");
  ck_assert_int_eq(d.nerrors, 1);
  char *out = print_all(&d);
  ck_assert_str_eq(out,
                   "m.eom:2:11: error: undefined name 'k'\n"
                   "    potential k*x\n"
                   "              ^\n");
  free(out);
  diag_free(&d);
}
END_TEST

START_TEST(one_error_per_line) {
  const char *src = "a b c\nd\n";
  Diag d;
  diag_init(&d, "m.eom", src, strlen(src));
  diag_error(&d, at(1, 1), "first");
  diag_error(&d, at(1, 3), "follow-on");
  diag_warning(&d, at(1, 5), "a warning is kept");
  diag_error(&d, at(2, 1), "second line");
  ck_assert_int_eq(d.nerrors, 2);
  ck_assert_int_eq(d.nwarnings, 1);
  char *out = print_all(&d);
  ck_assert_ptr_null(strstr(out, "follow-on"));
  ck_assert_ptr_nonnull(strstr(out, "m.eom:1:5: warning: a warning is kept"));
  ck_assert_ptr_nonnull(strstr(out, "m.eom:2:1: error: second line"));
  free(out);
  diag_free(&d);
}
END_TEST

START_TEST(error_limit) {
  Diag d;
  diag_init(&d, "m.eom", NULL, 0);
  for (int i = 1; i <= DIAG_MAX_ERRORS + 7; i++) diag_error(&d, at(i, 1), "e%d", i);
  char *out = print_all(&d);
  ck_assert_ptr_nonnull(strstr(out, "7 more errors not shown"));
  free(out);
  diag_free(&d);
}
END_TEST

START_TEST(hostile_lines) {
  /* Control and non-ASCII bytes are shown as '?'; a long line is cut. */
  size_t n = 100000;
  char *src = malloc(n + 1);
  memset(src, 'x', n);
  src[0] = '\x01';
  src[1] = (char)0xff;
  src[n] = '\0';
  Diag d;
  diag_init(&d, "m.eom", src, n);
  diag_error(&d, at(1, 50000), "bad");
  diag_error(&d, at(7, 1), "line past the end of the file");
  diag_error(&d, at(0, 0), "no location");
  char *out = print_all(&d);
  ck_assert_msg(strlen(out) < 1000, "long lines must be cut");
  ck_assert_ptr_nonnull(strstr(out, "m.eom:1:50000: error: bad\n    ..."));
  ck_assert_ptr_nonnull(strstr(out, "m.eom:7:1: error: line past the end"));
  ck_assert_ptr_nonnull(strstr(out, "m.eom: error: no location"));
  free(out);
  diag_free(&d);
  diag_init(&d, "m.eom", src, n);
  diag_error(&d, at(1, 1), "start");
  out = print_all(&d);
  ck_assert_ptr_nonnull(strstr(out, "    ??xxx"));
  free(out);
  diag_free(&d);
  free(src);
}
END_TEST

int main(void) {
  Suite *s = suite_create("diag");
  TCase *tc = tcase_create("diag");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, format_and_caret);
  tcase_add_test(tc, one_error_per_line);
  tcase_add_test(tc, error_limit);
  tcase_add_test(tc, hostile_lines);
  suite_add_tcase(s, tc);
  SRunner *sr = srunner_create(s);
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? 1 : 0;
}
