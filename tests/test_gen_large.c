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
** Also `--float` (single precision, against the double code) and `--only`
** (a subset of the functions, against the full build).  Everything is
** compiled with -std=c99 -pedantic -Wall -Wextra -Werror.
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

/* ------------------------------------------------------------------ --float */

/* The single-precision functions against the double ones of the same model
** at 5 states, inputs rounded to float first; prints the largest
** difference relative to the largest magnitude of each result. */
static const char float_driver[] =
  "#include <math.h>\n#include <stdio.h>\n#include <eom/model.h>\n#include \"f.h\"\n"
  "extern const struct eom_model d_model;\n"
  "#define NQ f_NQ\n#define NU f_NU\n#define NP f_NP\n"
  "static double worst = 0.0;\nstatic long compared = 0;\n"
  "static void cmp(const float *a, const double *b, int n) {\n"
  "  double big = 1e-300, d = 0.0;\n  int i;\n"
  "  for (i = 0; i < n; i++) {\n"
  "    if (fabs(b[i]) > big) big = fabs(b[i]);\n"
  "    if (!(fabs((double)a[i] - b[i]) <= d)) d = fabs((double)a[i] - b[i]);\n"
  "  }\n"
  "  if (d != d) d = 1.0;\n"
  "  if (d/big > worst) worst = d/big;\n  compared += n;\n}\n"
  "static unsigned seed = 11u;\n"
  "static float rnd(void) { seed = seed*1103515245u + 12345u; return (float)((seed >> 8) & 0xffff)/32767.5f - 1.0f; }\n"
  "int main(void) {\n"
  "  float qf[NQ], qdf[NQ], qddf[NQ], uf[NU + 1], pf[NP], xf[2*NQ], r1[4*NQ*NQ], r3[2*NQ*NU + 1], Tf, Vf;\n"
  "  double q[NQ], qd[NQ], qdd[NQ], u[NU + 1], p[NP], x[2*NQ], r2[4*NQ*NQ], r4[2*NQ*NU + 1], T, V;\n"
  "  int k, i;\n"
  "  if (d_model.nq != NQ || d_model.nu != NU || d_model.np != NP) return 3;\n"
  "  for (k = 0; k < 5; k++) {\n"
  "    f_default_params(pf);\n"
  "    for (i = 0; i < NP; i++) p[i] = pf[i];\n"
  "    for (i = 0; i < NQ; i++) {\n"
  "      qf[i] = 2.0f*rnd(); qdf[i] = rnd(); qddf[i] = 2.0f*rnd();\n"
  "      q[i] = qf[i]; qd[i] = qdf[i]; qdd[i] = qddf[i]; xf[i] = qf[i]; xf[NQ + i] = qdf[i];\n"
  "      x[i] = q[i]; x[NQ + i] = qd[i];\n"
  "    }\n"
  "    for (i = 0; i < NU; i++) { uf[i] = 5.0f*rnd(); u[i] = uf[i]; }\n"
  "    f_mass(qf, pf, r1); d_model.mass(q, p, r2); cmp(r1, r2, NQ*NQ);\n"
  "    f_forcing(0.0f, qf, qdf, uf, pf, r1); d_model.forcing(0.0, q, qd, u, p, r2); cmp(r1, r2, NQ);\n"
  "    if (f_accel(0.0f, qf, qdf, uf, pf, r1) || d_model.accel(0.0, q, qd, u, p, r2)) return 4;\n"
  "    cmp(r1, r2, NQ);\n"
  "    f_inverse(0.0f, qf, qdf, qddf, pf, r1); d_model.inverse(0.0, q, qd, qdd, p, r2); cmp(r1, r2, NQ);\n"
  "    f_jacobian(0.0f, xf, uf, pf, r1, r3); d_model.jacobian(0.0, x, u, p, r2, r4);\n"
  "    cmp(r1, r2, 4*NQ*NQ); cmp(r3, r4, 2*NQ*NU);\n"
  "    f_energy(qf, qdf, pf, &Tf, &Vf); d_model.energy(q, qd, p, &T, &V); cmp(&Tf, &T, 1); cmp(&Vf, &V, 1);\n"
  "    f_coriolis(qf, qdf, pf, r1); d_model.coriolis(q, qd, p, r2); cmp(r1, r2, NQ*NQ);\n"
  "  }\n"
  "  printf(\"compared %ld worst %.3g\\n\", compared, worst);\n"
  "  return 0;\n}\n";

/* Compile dir/file alone with -Wdouble-promotion too: no arithmetic of the
** single-precision code may happen in double. */
static void compile_alone(const char *dir, const char *file, const char *extra) {
  char src[4200], obj[4200];
  snprintf(src, sizeof src, "%s/%s", dir, file);
  snprintf(obj, sizeof obj, "%s/alone.o", dir);
  char *argv[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror",
                  (char *)extra, "-c", src, "-o", obj, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s %s rejects %s:\n%s", cc(), extra, file, r.err);
  run_free(&r);
}

/* Issue 17's target for microcontrollers: the float code of the 6-axis arm
** agrees with the double code to 1e-4 relative (float's unit roundoff is
** 6e-8, IEEE 754; the LDLᵀ solve and the Jacobian lose some digits to
** the mass matrix's condition). */
START_TEST(test_float_matches_double) {
  char *dir = make_temp_dir();
  gen(ARM6, dir, "f", "--float", NULL, NULL);
  gen(ARM6, dir, "d", NULL, NULL, NULL);
  compile_alone(dir, "f.c", "-Wdouble-promotion");
  char fh[4200];
  snprintf(fh, sizeof fh, "%s/f.c", dir);
  char *text = read_file(fh, NULL);
  ck_assert(text != NULL);
  ck_assert_msg(strstr(text, "sinf(") && strstr(text, "cosf(") && !strstr(text, " sin("),
                "the float code does not call the float functions");
  ck_assert_msg(!strstr(text, "double") || strstr(text, "double") < strstr(text, "*/"),
                "the float code still mentions double outside its banner");
  ck_assert_msg(!strstr(text, "eom_model"), "the float code has a descriptor");
  free(text);
  char *out = build_and_run(dir, float_driver, "f.c d.c", "");
  ck_assert_msg(value_of(out, "compared ") > 500, "%s", out);
  ck_assert_msg(value_of(out, "worst ") <= 1e-4, "float and double differ: %s", out);
  ck_assert_msg(value_of(out, "worst ") > 0.0, "float and double agree exactly: %s", out);
  free(out);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* A constant beyond float's range (3.4e38, IEEE 754) is refused, not
** turned into infinity. */
START_TEST(test_float_range) {
  char *dir = make_temp_dir();
  static const char model[] = "coord x\nparam k = 1e50\nkinetic x'^2/2\npotential k*x^2\n";
  char *m = write_file(dir, "big.eom", model, strlen(model));
  char *argv[] = {(char *)eomc(), "gen", m, "-o", dir, "--float", NULL};
  RunResult r = run_argv(argv);
  ck_assert_int_eq(r.status, 1);
  ck_assert_msg(strstr(r.err, "1e+50") && strstr(r.err, "single precision"), "%s", r.err);
  run_free(&r);
  free(m);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* ------------------------------------------------------------------ --only */

/* Only accel and inverse: P.c has those, the LDLᵀ routines and the
** parameter functions, nothing else; P.h declares only what P.c defines;
** the descriptor's other pointers are 0; accel gives the full build's
** values (same code). */
START_TEST(test_only) {
  char *dir = make_temp_dir();
  gen(ARM6, dir, "o", "--only", "accel,inverse", NULL);
  gen(ARM6, dir, "full", NULL, NULL, NULL);
  compile_alone(dir, "o.c", "-DEOM_NO_DESCRIPTOR");
  char path[4200];
  snprintf(path, sizeof path, "%s/o.c", dir);
  char *c = read_file(path, NULL);
  snprintf(path, sizeof path, "%s/o.h", dir);
  char *h = read_file(path, NULL);
  ck_assert(c && h);
  ck_assert(strstr(c, "int o_accel(") && strstr(c, "void o_inverse(") && strstr(c, "o_ldl_factor("));
  ck_assert(strstr(c, "void o_default_params(") && strstr(c, "void o_initial_state("));
  ck_assert_msg(!strstr(c, "o_jacobian(") && !strstr(c, "o_mass(") && !strstr(c, "o_coriolis"),
                "--only wrote more than asked");
  ck_assert(strstr(h, "int o_accel(") && strstr(h, "void o_inverse("));
  ck_assert_msg(!strstr(h, "o_jacobian(") && !strstr(h, "o_rhs(") && !strstr(h, "o_momenta("),
                "the header declares functions P.c lacks");
  free(c), free(h);
  static const char driver[] =
    "#include <stdio.h>\n#include <eom/model.h>\n"
    "extern const struct eom_model o_model, full_model;\n"
    "int main(void) {\n"
    "  double q[6] = {0.1, -0.4, 0.7, 0.2, -1.1, 0.5}, qd[6] = {0.3, 0.2, -0.1, 0.5, 0.4, -0.2};\n"
    "  double u[6] = {1, 2, 3, -1, -2, 0.5}, p[32], a[6], b[6];\n"
    "  int i, same = 1;\n"
    "  for (i = 0; i < o_model.np; i++) p[i] = o_model.param_defaults[i];\n"
    "  if (o_model.mass || o_model.jacobian || o_model.rhs || o_model.coriolis || !o_model.accel\n"
    "      || !o_model.inverse) return 5;\n"
    "  o_model.accel(0.0, q, qd, u, p, a); full_model.accel(0.0, q, qd, u, p, b);\n"
    "  for (i = 0; i < 6; i++) same &= a[i] == b[i];\n"
    "  printf(\"same %d\\n\", same);\n  return 0;\n}\n";
  char *out = build_and_run(dir, driver, "o.c full.c", "");
  ck_assert_msg(value_of(out, "same ") == 1.0, "%s", out);
  free(out);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* rhs brings accel; a name the model lacks is a usage error that lists
** the names it has. */
START_TEST(test_only_dependencies_and_errors) {
  char *dir = make_temp_dir();
  gen(ARM6, dir, "r", "--only", "rhs", NULL);
  compile_alone(dir, "r.c", "-DEOM_NO_DESCRIPTOR");
  char path[4200];
  snprintf(path, sizeof path, "%s/r.c", dir);
  char *c = read_file(path, NULL);
  ck_assert(c && strstr(c, "int r_accel(") && strstr(c, "void r_rhs("));
  free(c);
  char *model = src_path(ARM6);
  char *argv[] = {(char *)eomc(), "gen", model, "-o", dir, "--only", "accel,constraint", NULL};
  RunResult r = run_argv(argv);
  ck_assert_int_eq(r.status, 2);
  ck_assert_msg(strstr(r.err, "'constraint'") && strstr(r.err, "jacobian"), "%s", r.err);
  run_free(&r);
  char *argv2[] = {(char *)eomc(), "gen", model, "-o", dir, "--only", ",", NULL};
  r = run_argv(argv2);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
  free(model);
  remove_tree(dir);
  free(dir);
}
END_TEST

static Suite *large_suite(void) {
  Suite *s = suite_create("gen_large");
  TCase *split = tcase_create("split");
  tcase_set_timeout(split, 120);
  tcase_add_test(split, test_split_matches_whole);
  tcase_add_test(split, test_small_unsplit);
  suite_add_tcase(s, split);
  TCase *single = tcase_create("float");
  tcase_set_timeout(single, 120);
  tcase_add_test(single, test_float_matches_double);
  tcase_add_test(single, test_float_range);
  suite_add_tcase(s, single);
  TCase *only = tcase_create("only");
  tcase_set_timeout(only, 120);
  tcase_add_test(only, test_only);
  tcase_add_test(only, test_only_dependencies_and_errors);
  suite_add_tcase(s, only);
  return s;
}

int main(int argc, char **argv) {
  return run_test_main(argc, argv, large_suite);
}
