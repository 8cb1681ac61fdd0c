/*
** test_gen_large.c — end to end: the code eomc writes for large models.
**
** A function too big for a compiler to digest as one body is split into
** helpers (compiler/emit/emit_parts.c).  The split code must compute what
** the one-body code (`eomc gen --no-split`, the earlier code path) computes:
** both are compiled into one program with the generic comparison driver
** below, which calls every function of both descriptors at pseudo-random
** states and prints the largest relative difference.  The model is a 6-axis
** spatial arm of our own (tests/large/arm6_spatial.eom, written by
** bench/arm_n.py), big enough that its Jacobian and Coriolis matrix split.
** Everything is compiled with -std=c99 -pedantic -Wall -Wextra -Werror.
**
** Environment (AM_TESTS_ENVIRONMENT): EOMC, SRCDIR, CC (see testutil.h).
*/
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "testutil.h"

#define ARM6 "tests/large/arm6_spatial.eom"

static char *src_path(const char *rel) {
  char *p = malloc(strlen(srcdir()) + strlen(rel) + 2);
  ck_assert(p != NULL);
  sprintf(p, "%s/%s", srcdir(), rel);
  return p;
}

/* eomc gen MODEL -o DIR --prefix PREFIX [extra...] (up to 3 extra arguments). */
static void gen(const char *model, const char *dir, const char *prefix, const char *x1,
                const char *x2, const char *x3) {
  char *path = src_path(model);
  char *argv[] = {(char *)eomc(), "gen", path, "-o", (char *)dir, "--prefix", (char *)prefix,
                  (char *)x1, (char *)x2, (char *)x3, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "eomc gen %s %s failed (%d):\n%s", model, x1 ? x1 : "", r.status,
                r.err);
  run_free(&r);
  free(path);
}

/* Compile the C files named in `files` (blank-separated, in dir) with the
** driver `driver` into dir/run and run it; returns its stdout. */
static char *build_and_run(const char *dir, const char *driver, const char *files,
                           const char *defs) {
  char *drv = write_file(dir, "driver.c", driver, strlen(driver));
  char inc[4200], dinc[4200], exe[4200], cmd[16000];
  snprintf(inc, sizeof inc, "-I%s/include", srcdir());
  snprintf(dinc, sizeof dinc, "-I%s", dir);
  snprintf(exe, sizeof exe, "%s/run", dir);
  /* The file list varies: one shell command, every path quoted. */
  int n = snprintf(cmd, sizeof cmd, "cd '%s' && '%s' -std=c99 -pedantic -Wall -Wextra -Werror -O0 '%s' '%s' %s '%s' %s -o '%s' -lm",
                   dir, cc(), inc, dinc, defs, drv, files, exe);
  ck_assert(n > 0 && (size_t)n < sizeof cmd);
  char *argv[] = {"/bin/sh", "-c", cmd, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s does not compile (%d):\n%s", cc(), r.status, r.err);
  run_free(&r);
  char *run[] = {exe, NULL};
  r = run_argv(run);
  ck_assert_msg(r.status == 0, "the driver failed (%d):\n%s%s", r.status, r.out, r.err);
  char *out = r.out;
  r.out = NULL;
  run_free(&r);
  free(drv);
  return out;
}

/* The value after `label` in the driver's output. */
static double value_of(const char *out, const char *label) {
  const char *s = strstr(out, label);
  ck_assert_msg(s != NULL, "'%s' missing in:\n%s", label, out);
  return strtod(s + strlen(label), NULL);
}

/* ------------------------------------------------------------------ split against whole */

/* Calls every function both descriptors have at 5 states; prints the
** largest difference relative to the largest magnitude of each result. */
static const char compare_driver[] =
  "#include <math.h>\n#include <stdio.h>\n#include <stdlib.h>\n#include <eom/model.h>\n"
  "extern const struct eom_model MA, MB;\n"
  "static double worst = 0.0;\nstatic long compared = 0;\n"
  "static void cmp(const double *a, const double *b, int n) {\n"
  "  double big = 1e-300, d = 0.0;\n  int i;\n"
  "  for (i = 0; i < n; i++) {\n"
  "    if (fabs(b[i]) > big) big = fabs(b[i]);\n"
  "    if (fabs(a[i] - b[i]) > d || a[i] != a[i] || b[i] != b[i]) d = fabs(a[i] - b[i]);\n"
  "  }\n"
  "  if (d != d) d = 1.0;\n"
  "  if (d/big > worst) worst = d/big;\n  compared += n;\n}\n"
  "static unsigned seed = 7u;\n"
  "static double rnd(void) { seed = seed*1103515245u + 12345u; return ((seed >> 8) & 0xffff)/32767.5 - 1.0; }\n"
  "int main(void) {\n"
  "  const struct eom_model *a = &MA, *b = &MB;\n"
  "  int nq = a->nq, nu = a->nu, np = a->np, ny = a->ny, k, i;\n"
  "  double *buf = calloc(16*(size_t)(4*nq*nq + nq*nu + np + ny + 8), sizeof(double));\n"
  "  double *q = buf, *qd = q + nq, *qdd = qd + nq, *u = qdd + nq, *p = u + nu + 1, *x = p + np + 1;\n"
  "  double *r1 = x + 2*nq, *r2 = r1 + 4*nq*nq + 2*nq*nu + ny + 4, *r3 = r2 + 4*nq*nq + 2*nq*nu + ny + 4;\n"
  "  double *r4 = r3 + 4*nq*nq + 2*nq*nu + ny + 4;\n"
  "  if (nq != b->nq || nu != b->nu || np != b->np || ny != b->ny) return 3;\n"
  "  for (k = 0; k < 5; k++) {\n"
  "    double t = rnd(), T1, V1, T2, V2;\n"
  "    for (i = 0; i < nq; i++) { q[i] = 2*rnd(); qd[i] = 2*rnd(); qdd[i] = 3*rnd(); x[i] = q[i]; x[nq + i] = qd[i]; }\n"
  "    for (i = 0; i < nu; i++) u[i] = 5*rnd();\n"
  "    for (i = 0; i < np; i++) p[i] = a->param_defaults[i]*(1.0 + 0.1*rnd());\n"
  "    a->mass(q, p, r1); b->mass(q, p, r2); cmp(r1, r2, nq*nq);\n"
  "    a->forcing(t, q, qd, u, p, r1); b->forcing(t, q, qd, u, p, r2); cmp(r1, r2, nq);\n"
  "    if (a->accel(t, q, qd, u, p, r1) != b->accel(t, q, qd, u, p, r2)) return 4;\n"
  "    cmp(r1, r2, nq);\n"
  "    a->jacobian(t, x, u, p, r1, r3); b->jacobian(t, x, u, p, r2, r4);\n"
  "    cmp(r1, r2, 4*nq*nq); cmp(r3, r4, 2*nq*nu);\n"
  "    a->inverse(t, q, qd, qdd, p, r1); b->inverse(t, q, qd, qdd, p, r2); cmp(r1, r2, nq);\n"
  "    a->energy(q, qd, p, &T1, &V1); b->energy(q, qd, p, &T2, &V2); cmp(&T1, &T2, 1); cmp(&V1, &V2, 1);\n"
  "    if (ny) { a->outputs(t, q, qd, u, p, r1); b->outputs(t, q, qd, u, p, r2); cmp(r1, r2, ny); }\n"
  "    if (a->coriolis && b->coriolis) { a->coriolis(q, qd, p, r1); b->coriolis(q, qd, p, r2); cmp(r1, r2, nq*nq); }\n"
  "    if (a->gravity && b->gravity) { a->gravity(q, p, r1); b->gravity(q, p, r2); cmp(r1, r2, nq); }\n"
  "    if (a->momenta && b->momenta) { a->momenta(q, qd, p, r1); b->momenta(q, qd, p, r2); cmp(r1, r2, nq); }\n"
  "    if (a->hamiltonian && b->hamiltonian) { a->hamiltonian(q, qd, p, r1); b->hamiltonian(q, qd, p, r2); cmp(r1, r2, 1); }\n"
  "  }\n"
  "  printf(\"compared %ld worst %.3g\\n\", compared, worst);\n"
  "  free(buf);\n  return 0;\n}\n";

/* How many helpers (static void P_..._partK) a generated source has. */
static int count_parts(const char *dir, const char *prefix) {
  char path[4200], pat[300];
  snprintf(path, sizeof path, "%s/%s.c", dir, prefix);
  snprintf(pat, sizeof pat, "static void %s_", prefix);
  char *text = read_file(path, NULL);
  ck_assert(text != NULL);
  int n = 0;
  for (const char *s = strstr(text, pat); s; s = strstr(s + 1, pat)) {
    const char *paren = strchr(s, '(');
    if (paren && paren - s > 6 && memchr(s, '\n', (size_t)(paren - s)) == NULL &&
        strstr(s, "_part") && strstr(s, "_part") < paren)
      n++;
  }
  free(text);
  return n;
}

START_TEST(test_split_matches_whole) {
  char *dir = make_temp_dir();
  gen(ARM6, dir, "split", NULL, NULL, NULL);
  gen(ARM6, dir, "whole", "--no-split", NULL, NULL);
  ck_assert_msg(count_parts(dir, "split") >= 2, "the 6-axis arm's code was not split");
  ck_assert_int_eq(count_parts(dir, "whole"), 0);
  char *out = build_and_run(dir, compare_driver, "split.c whole.c", "-DMA=split_model -DMB=whole_model");
  ck_assert_msg(value_of(out, "compared ") > 1000, "%s", out);
  /* Same operations in the same order, only stored elsewhere: equal up to
  ** the rounding a compiler may choose differently (-O0: none). */
  ck_assert_msg(value_of(out, "worst ") <= 1e-13, "split and whole code differ: %s", out);
  free(out);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* A small model is never split: its C is byte-identical with and without
** --no-split. */
START_TEST(test_small_unsplit) {
  char *d1 = make_temp_dir(), *d2 = make_temp_dir();
  gen("tests/models/double_pendulum.eom", d1, "a", NULL, NULL, NULL);
  gen("tests/models/double_pendulum.eom", d2, "a", "--no-split", NULL, NULL);
  char pa[4200], pb[4200];
  snprintf(pa, sizeof pa, "%s/a.c", d1);
  snprintf(pb, sizeof pb, "%s/a.c", d2);
  char *ta = read_file(pa, NULL), *tb = read_file(pb, NULL);
  ck_assert(ta && tb);
  ck_assert_msg(strcmp(ta, tb) == 0, "a small model's code changed with --no-split");
  ck_assert_int_eq(count_parts(d1, "a"), 0);
  free(ta), free(tb);
  remove_tree(d1), remove_tree(d2);
  free(d1), free(d2);
}
END_TEST

static Suite *large_suite(void) {
  Suite *s = suite_create("gen_large");
  TCase *split = tcase_create("split");
  tcase_set_timeout(split, 120);
  tcase_add_test(split, test_split_matches_whole);
  tcase_add_test(split, test_small_unsplit);
  suite_add_tcase(s, split);
  return s;
}

int main(int argc, char **argv) {
  return run_test_main(argc, argv, large_suite);
}
