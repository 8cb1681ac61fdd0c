/*
** test_hostile.c — hostile and degenerate models, end to end through the
** eomc binary ($EOMC): names that collide with C or libm, extreme literals,
** 10,000-character identifiers, a 50 MB model, a singular mass matrix,
** descriptions that could break out of C comments and strings, unusable
** output directories, and the derivation time limit.
**
** When eomc accepts a model, the C it writes must compile with the flags of
** docs/generated-c.md (-std=c99 -pedantic -Wall -Wextra -Werror) and give the right
** numbers; the expected values are closed forms of the Euler–Lagrange
** equations worked by hand (common practice) unless noted.  test_cli.c
** already covers empty files, garbage bytes, deep nesting and long lines.
*/
#include <check.h>
#include <dirent.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <unistd.h>

#include "testutil.h"

#ifndef TEST_CC
#define TEST_CC "cc"
#endif


/* ---------------------------------------------------------------- helpers */

static char *path_join(const char *dir, const char *name) {
  size_t n = strlen(dir) + strlen(name) + 2;
  char *p = malloc(n);
  snprintf(p, n, "%s/%s", dir, name);
  return p;
}

/* Run `eomc gen DIR/NAME.eom -o OUTDIR [extra]` on model text. */
static RunResult gen_text(const char *dir, const char *outdir, const char *text, const char *extra) {
  char *model = write_file(dir, "hostile.eom", text, strlen(text));
  char *argv[] = {(char *)eomc(), "gen", model, "-o", (char *)outdir, (char *)extra, NULL};
  RunResult r = run_argv(argv);
  free(model);
  return r;
}

/* Compile DIR/PREFIX.c with a driver (docs/generated-c.md's flags plus `extra_flag`), run
** it, and return its stdout (malloc'd); fails the test on any error. */
static char *compile_and_run(const char *dir, const char *prefix, const char *driver, const char *extra_flag) {
  char *drv = write_file(dir, "driver.c", driver, strlen(driver));
  char csrc[4096], exe[4096], inc[4096];
  snprintf(csrc, sizeof csrc, "%s/%s.c", dir, prefix);
  snprintf(exe, sizeof exe, "%s/driver", dir);
  snprintf(inc, sizeof inc, "-I%s/include", srcdir());
  char idir[4096];
  snprintf(idir, sizeof idir, "-I%s", dir);
  /* The clang pass compiles with clang; the ordinary one with configure's $CC. */
  const char *compiler = clang_pass() ? cc() : env_or("TEST_CC", TEST_CC);
  char *argv[] = {(char *)compiler, "-std=c99", "-pedantic", "-Wall", "-Wextra",
                  "-Werror", inc, idir, (char *)(extra_flag ? extra_flag : "-O0"), drv, csrc,
                  "-o", exe, "-lm", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "generated C does not compile with %s -std=c99 -pedantic -Wall -Wextra -Werror %s:\n%.3000s",
                compiler, extra_flag ? extra_flag : "", r.err);
  run_free(&r);
  char *argv2[] = {exe, NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "driver status %d: %s", r.status, r.err);
  free(r.err);
  free(drv);
  return r.out;
}

/* Read `count` doubles from text after the word `label`. */
static void read_values(const char *out, const char *label, double *v, int count) {
  const char *p = strstr(out, label);
  ck_assert_msg(p != NULL, "no '%s' in driver output:\n%s", label, out);
  p += strlen(label);
  for (int i = 0; i < count; i++) {
    char *end;
    v[i] = strtod(p, &end);
    ck_assert_msg(end != p, "too few values after '%s' in:\n%s", label, out);
    p = end;
  }
}

static void assert_close(double got, double want, double rel, const char *what) {
  ck_assert_msg(fabs(got - want) <= rel * fabs(want) + 1e-300, "%s = %.17g, expected %.17g", what, got, want);
}

static const char good_model_text[] = "coord x\nparam k = 4\nkinetic x'^2/2\npotential k*x^2/2\n";

/* ------------------------------------------------- names C or libm also use */

/* Coordinates named like C types, params like POSIX Bessel functions (y0, j1
** are declared by <math.h> under _XOPEN_SOURCE): M = diag(y0, j1) and
** V = double^2/2 + 2 int^2, so f = (-double, -4 int). */
START_TEST(c_keyword_and_libm_names) {
  char *dir = make_temp_dir();
  RunResult r = gen_text(dir, dir,
                         "coord double, int\n"
                         "param y0 = 2\n"
                         "param j1 = 3\n"
                         "param static = 1\n"
                         "kinetic y0*double'^2/2 + j1*int'^2/2\n"
                         "potential static*double^2/2 + 2*int^2\n", NULL);
  ck_assert_msg(r.status == 0, "eomc gen: %s", r.err);
  run_free(&r);
  const char *driver =
    "#include <stdio.h>\n#include \"hostile.h\"\n"
    "int main(void) {\n"
    "  double q[2] = {0.5, -0.25}, qd[2] = {0, 0}, p[3] = {2, 3, 1}, M[4], f[2], qdd[2];\n"
    "  hostile_mass(q, p, M); hostile_forcing(0, q, qd, 0, p, f);\n"
    "  int rc = hostile_accel(0, q, qd, 0, p, qdd);\n"
    "  printf(\"M %.17g %.17g %.17g %.17g f %.17g %.17g rc %d qdd %.17g %.17g\\n\",\n"
    "         M[0], M[1], M[2], M[3], f[0], f[1], rc, qdd[0], qdd[1]);\n"
    "  return 0;\n}\n";
  for (int pass = 0; pass < 2; pass++) {
    char *out = compile_and_run(dir, "hostile", driver, pass ? "-D_XOPEN_SOURCE=700" : NULL);
    double v[4];
    read_values(out, "M", v, 4);
    assert_close(v[0], 2, 0, "M00");
    assert_close(v[1], 0, 0, "M01");
    assert_close(v[3], 3, 0, "M11");
    read_values(out, "f", v, 2);
    assert_close(v[0], -0.5, 1e-15, "f0");
    assert_close(v[1], 1.0, 1e-15, "f1");
    ck_assert_ptr_nonnull(strstr(out, "rc 0 "));
    read_values(out, "qdd", v, 2);
    assert_close(v[0], -0.25, 1e-15, "qdd0");
    assert_close(v[1], 1.0 / 3.0, 1e-15, "qdd1");
    free(out);
  }
  remove_tree(dir);
  free(dir);
}
END_TEST

/* A built-in function's name cannot be declared: a clear error at the name. */
START_TEST(builtin_name_rejected) {
  static const char *const models[] = {
    "coord x\nparam sin = 2\nkinetic sin*x'^2/2\n",
    "coord exp\nkinetic exp'^2/2\n",
    "coord x\ninput sqrt\nkinetic x'^2/2\nforce x = sqrt\n",
    "coord x\nlet cos = x^2\nkinetic x'^2/2\n",
  };
  static const char *const names[] = {"sin", "exp", "sqrt", "cos"};
  static const int lines[] = {2, 1, 2, 2};
  for (int i = 0; i < 4; i++) {
    char *dir = make_temp_dir();
    char *path = write_file(dir, "b.eom", models[i], strlen(models[i]));
    char *argv[] = {(char *)eomc(), "check", path, NULL};
    RunResult r = run_argv(argv);
    ck_assert_msg(r.status == 1, "model %d: status %d", i, r.status);
    char where[64], quoted[32];
    snprintf(where, sizeof where, "b.eom:%d:", lines[i]);
    snprintf(quoted, sizeof quoted, "'%s'", names[i]);
    ck_assert_msg(strstr(r.err, where) && strstr(r.err, "error:") && strstr(r.err, quoted),
                  "model %d: expected an error at line %d naming %s, got:\n%s", i, lines[i], quoted, r.err);
    run_free(&r);
    free(path);
    remove_tree(dir);
    free(dir);
  }
}
END_TEST

/* `nan`, `inf`, `NAN`, `INFINITY`, `HUGE_VAL` are ordinary model names; in C
** they are math.h's function and macros.  M = diag(NAN, INFINITY) = (2, 3),
** V = HUGE_VAL*inf^2 + nan*inf: f = (-(2 HUGE_VAL inf + nan), -inf). */
START_TEST(nan_inf_as_names) {
  char *dir = make_temp_dir();
  RunResult r = gen_text(dir, dir,
                         "coord inf, nan\n"
                         "param NAN = 2\n"
                         "param INFINITY = 3\n"
                         "param HUGE_VAL = 0.5\n"
                         "kinetic NAN*inf'^2/2 + INFINITY*nan'^2/2\n"
                         "potential HUGE_VAL*inf^2 + nan*inf\n", NULL);
  ck_assert_msg(r.status == 0, "eomc gen: %s", r.err);
  run_free(&r);
  const char *driver =
    "#include <stdio.h>\n#include <eom/model.h>\n#include \"hostile.h\"\n"
    "int main(void) {\n"
    "  double q[2] = {0.5, -1}, qd[2] = {0.25, 0}, p[3], M[4], f[2];\n"
    "  hostile_default_params(p);\n"
    "  hostile_mass(q, p, M); hostile_forcing(0, q, qd, 0, p, f);\n"
    "  printf(\"M %.17g %.17g %.17g %.17g f %.17g %.17g names %s %s %s\\n\", M[0], M[1], M[2], M[3],\n"
    "         f[0], f[1], hostile_model.param_names[0], hostile_model.param_names[1],\n"
    "         hostile_model.coord_names[1]);\n"
    "  return 0;\n}\n";
  char *out = compile_and_run(dir, "hostile", driver, NULL);
  double v[4];
  read_values(out, "M", v, 4);
  assert_close(v[0], 2, 0, "M00");
  assert_close(v[3], 3, 0, "M11");
  read_values(out, "f", v, 2);
  assert_close(v[0], 0.5, 1e-15, "f0");
  assert_close(v[1], -0.5, 1e-15, "f1");
  ck_assert_ptr_nonnull(strstr(out, "names NAN INFINITY nan"));
  free(out);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* --------------------------------------------------------- extreme literals */

/* 1e308 (near DBL_MAX) and 1e-320 (subnormal) survive parsing, exact
** arithmetic and printing: f_x = 1e308*1e-300 = 1e8, f_y = 1e-320*k with
** k = 1e300 is 1e-20 (to the 5 digits a subnormal double keeps), f_z = big*z
** = 5e307 at z = 0.5, and the defaults read back as the same doubles. */
START_TEST(huge_and_tiny_literals) {
  char *dir = make_temp_dir();
  RunResult r = gen_text(dir, dir,
                         "coord x, y, z\n"
                         "param big = 1e308\n"
                         "param tiny = 1e-320\n"
                         "param k = 1e300\n"
                         "kinetic (x'^2 + y'^2 + z'^2)/2\n"
                         "force x = 1e308*1e-300\n"
                         "force y = 1e-320*k\n"
                         "force z = big*z\n", NULL);
  ck_assert_msg(r.status == 0, "eomc gen: %s", r.err);
  run_free(&r);
  const char *driver =
    "#include <stdio.h>\n#include <eom/model.h>\n#include \"hostile.h\"\n"
    "int main(void) {\n"
    "  double q[3] = {0.25, 0.5, 0.5}, qd[3] = {0, 0, 0}, p[3], f[3];\n"
    "  hostile_default_params(p);\n"
    "  hostile_forcing(0, q, qd, 0, p, f);\n"
    "  printf(\"f %.17g %.17g %.17g defaults %.17g %.17g %.17g\\n\", f[0], f[1], f[2],\n"
    "         hostile_model.param_defaults[0], hostile_model.param_defaults[1],\n"
    "         hostile_model.param_defaults[2]);\n"
    "  return 0;\n}\n";
  char *out = compile_and_run(dir, "hostile", driver, NULL);
  double v[3];
  read_values(out, "f", v, 3);
  assert_close(v[0], 1e8, 1e-15, "f_x = 1e308*1e-300");
  assert_close(v[1], 1e-20, 1e-4, "f_y = 1e-320*k (k = 1e300)");
  assert_close(v[2], 5e307, 1e-15, "f_z = big*z");
  read_values(out, "defaults", v, 3);
  ck_assert(v[0] == 1e308);
  ck_assert(v[1] == strtod("1e-320", NULL));
  ck_assert(v[2] == 1e300);
  free(out);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* A literal too large for a double is a model error, not inf in the code. */
START_TEST(overflowing_literal_rejected) {
  char *dir = make_temp_dir();
  RunResult r = gen_text(dir, dir, "coord x\nkinetic x'^2/2\npotential 1e999*x\n", NULL);
  ck_assert_msg(r.status == 1 && strstr(r.err, "hostile.eom:3:") && strstr(r.err, "error:"),
                "status %d: %s", r.status, r.err);
  ck_assert_int_eq(count_entries(dir), 1);  /* only the model: nothing generated */
  run_free(&r);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* ------------------------------------------------------- very long names */

static char *repeat(char c, size_t n) {
  char *s = malloc(n + 1);
  memset(s, c, n);
  s[n] = '\0';
  return s;
}

/* A 10,000-character coordinate and parameter: eomc either refuses them
** with a clear error or writes C that compiles under -pedantic -Werror
** (C99 5.2.4.1 only promises 4095-character string literals) and works. */
START_TEST(ten_thousand_character_identifiers) {
  char *a = repeat('a', 10000), *b = repeat('b', 10000);
  size_t n = 6 * 10000 + 200;  /* five names and the keywords */
  char *text = malloc(n);
  snprintf(text, n, "coord %s\nparam %s = 2\nkinetic %s*%s'^2/2\npotential %s^2/2\n", a, b, b, a, a);
  char *dir = make_temp_dir();
  RunResult r = gen_text(dir, dir, text, NULL);
  ck_assert_msg(r.status == 0 || r.status == 1, "status %d: %.500s", r.status, r.err);
  ck_assert_msg(strlen(r.err) < 100000, "diagnostics should not repeat the name endlessly");
  if (r.status == 1) {
    ck_assert_msg(strstr(r.err, "error:") != NULL, "%.500s", r.err);
    ck_assert_int_eq(count_entries(dir), 1);
  } else {
    const char *driver =
      "#include <stdio.h>\n#include \"hostile.h\"\n"
      "int main(void) {\n"
      "  double q[1] = {0.5}, qd[1] = {0}, p[1] = {2}, qdd[1];\n"
      "  int rc = hostile_accel(0, q, qd, 0, p, qdd);\n"
      "  printf(\"rc %d qdd %.17g\\n\", rc, qdd[0]);\n"
      "  return 0;\n}\n";
    char *out = compile_and_run(dir, "hostile", driver, NULL);
    double v;
    read_values(out, "qdd", &v, 1);
    assert_close(v, -0.25, 1e-15, "qdd = -x/m");
    free(out);
  }
  run_free(&r);
  /* A 10,000-character model name is a 10,000-character file name: that
  ** cannot be written (NAME_MAX is 255 on Linux), so it must be an error. */
  snprintf(text, n, "model %s\ncoord x\nkinetic x'^2/2\n", a);
  r = gen_text(dir, dir, text, NULL);
  ck_assert_msg(r.status != 0 && r.status < 128 && strstr(r.err, "error"), "status %d: %.300s", r.status, r.err);
  ck_assert_msg(strlen(r.err) < 100000, "diagnostics should not repeat the name endlessly");
  run_free(&r);
  remove_tree(dir);
  free(dir);
  free(text);
  free(a);
  free(b);
}
END_TEST

/* ---------------------------------------------------------- a 50 MB model */

/* 50 MB of statements: `eomc check` must finish with a verdict (success or
** a clear error), not a crash.  The memory bound is a guard against runaway
** growth (80x the input), not a performance target: that is `make bench`. */
START_TEST(fifty_megabyte_model) {
  char *dir = make_temp_dir();
  char *path = path_join(dir, "huge.eom");
  FILE *f = fopen(path, "wb");
  ck_assert_ptr_nonnull(f);
  fputs("coord x\nparam k = 2\nkinetic x'^2/2\n", f);
  const char *line = "potential 1e-9*k*x^2   # one of very many small springs\n";
  size_t total = 0, len = strlen(line);
  while (total < (size_t)50 * 1024 * 1024) {
    fputs(line, f);
    total += len;
  }
  fclose(f);
  char *argv[] = {(char *)eomc(), "check", path, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0 || (r.status == 1 && strstr(r.err, "error:")),
                "status %d, stderr: %.500s", r.status, r.err);
  struct rusage ru;
  getrusage(RUSAGE_CHILDREN, &ru);
  ck_assert_msg(ru.ru_maxrss < 4L * 1024 * 1024, "eomc check used %ld kB for a 50 MB model", ru.ru_maxrss);
  run_free(&r);
  free(path);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* ------------------------------------------------------- singular M */

static const char singular_driver[] =
  "#include <math.h>\n#include <stdio.h>\n#include \"hostile.h\"\n"
  "int main(void) {\n"
  "  double q[2] = {0.5, 0.25}, qd[2] = {0.5, -1}, p[1] = {1}, qdd[2] = {7, 7}, M[4], x[4], xd[4];\n"
  "  int rc = hostile_accel(0, q, qd, 0, p, qdd);\n"
  "  hostile_mass(q, p, M);\n"
  "  x[0] = q[0]; x[1] = q[1]; x[2] = qd[0]; x[3] = qd[1];\n"
  "  hostile_rhs(0, x, 0, p, xd);\n"
  "  printf(\"rc %d M %.17g %.17g %.17g %.17g xd %.17g %.17g\\n\", rc, M[0], M[1], M[2], M[3], xd[0], xd[1]);\n"
  "  return 0;\n}\n";

/* Only x has kinetic energy: M = diag(1, 0) is singular.  Generation works,
** P_accel reports it (nonzero), P_rhs still returns the q' rows. */
START_TEST(singular_mass_matrix) {
  char *dir = make_temp_dir();
  RunResult r = gen_text(dir, dir,
                         "coord x, y\nparam k = 1\nkinetic x'^2/2\npotential k*(x^2 + y^2)/2\n", NULL);
  ck_assert_msg(r.status == 0, "eomc gen: %s", r.err);
  run_free(&r);
  char *out = compile_and_run(dir, "hostile", singular_driver, NULL);
  ck_assert_msg(strstr(out, "rc 0 ") == NULL, "P_accel accepted a singular M:\n%s", out);
  double v[4];
  read_values(out, "M", v, 4);
  ck_assert(v[0] == 1 && v[1] == 0 && v[2] == 0 && v[3] == 0);
  read_values(out, "xd", v, 2);
  ck_assert(v[0] == 0.5 && v[1] == -1);
  free(out);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* A kinetic term that differentiates to zero everywhere: (x' - x')^2.
** M = 0 at every state; the code must still compile and P_accel say no. */
START_TEST(mass_identically_zero) {
  char *dir = make_temp_dir();
  RunResult r = gen_text(dir, dir,
                         "coord x, y\nparam k = 1\nkinetic k*(x' - x')^2 + (y - y)'^2\npotential k*x*y\n", NULL);
  ck_assert_msg(r.status == 0, "eomc gen: %s", r.err);
  run_free(&r);
  char *out = compile_and_run(dir, "hostile", singular_driver, NULL);
  ck_assert_msg(strstr(out, "rc 0 ") == NULL, "P_accel accepted M = 0:\n%s", out);
  double v[4];
  read_values(out, "M", v, 4);
  ck_assert(v[0] == 0 && v[1] == 0 && v[2] == 0 && v[3] == 0);
  free(out);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* Constant forcing (a falling mass, a constant push): no entry of the
** state Jacobian depends on the state.  The C must still be -Werror clean.
** x'' = -g and y'' = F/m; A's lower half is zero. */
START_TEST(state_independent_forcing) {
  char *dir = make_temp_dir();
  RunResult r = gen_text(dir, dir,
                         "coord x, y\nparam m = 2\nparam g = 9.81\ninput F\n"
                         "kinetic m*(x'^2 + y'^2)/2\npotential m*g*x\nforce y = F\n", NULL);
  ck_assert_msg(r.status == 0, "eomc gen: %s", r.err);
  run_free(&r);
  const char *driver =
    "#include <stdio.h>\n#include \"hostile.h\"\n"
    "int main(void) {\n"
    "  double x[4] = {1, 2, 3, 4}, u[1] = {4}, p[2] = {2, 9.81}, xd[4], A[16], B[4];\n"
    "  int i; double s = 0;\n"
    "  hostile_rhs(0, x, u, p, xd);\n"
    "  hostile_jacobian(0, x, u, p, A, B);\n"
    "  for (i = 8; i < 16; i++) s += A[i] * A[i];\n"
    "  printf(\"xd %.17g %.17g %.17g %.17g lowerA %.17g B %.17g %.17g %.17g %.17g\\n\",\n"
    "         xd[0], xd[1], xd[2], xd[3], s, B[0], B[1], B[2], B[3]);\n"
    "  return 0;\n}\n";
  char *out = compile_and_run(dir, "hostile", driver, NULL);
  double v[4];
  read_values(out, "xd", v, 4);
  ck_assert(v[0] == 3 && v[1] == 4);
  assert_close(v[2], -9.81, 1e-15, "x''");
  assert_close(v[3], 2, 1e-15, "y''");
  read_values(out, "lowerA", v, 1);
  ck_assert(v[0] == 0);
  read_values(out, "B", v, 4);
  ck_assert(v[0] == 0 && v[1] == 0 && v[2] == 0);
  assert_close(v[3], 0.5, 1e-15, "dy''/dF");
  free(out);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* ---------------------------------------------- descriptions into C text */

/* Descriptions end up in C comments and string literals: comment closers
** and openers, quotes, backslashes, newlines, tabs, printf directives and C99
** trigraphs (two question marks and a slash read as a backslash) must
** neither break the code nor change the text the descriptor hands back. */
START_TEST(descriptions_escape_safely) {
  char *dir = make_temp_dir();
  RunResult r = gen_text(dir, dir,
                         "coord x \"end */ of /* comment \\\"quoted\\\" ?\?/ ?\?= ?\?' \\\\ back\\nnext\\tline %s %n\"\n"
                         "param m = 1 \"say \\\"hi\\\" */ // not a comment\"\n"
                         "kinetic m*x'^2/2\n", NULL);
  ck_assert_msg(r.status == 0, "eomc gen: %s", r.err);
  run_free(&r);
  const char *driver =
    "#include <stdio.h>\n#include <string.h>\n#include <eom/model.h>\n#include \"hostile.h\"\n"
    "int main(void) {\n"
    "  const char *want0 = \"end */ of /* comment \\\"quoted\\\" ?\\?/ ?\\?= ?\\?' \\\\ back\\nnext\\tline %s %n\";\n"
    "  const char *want1 = \"say \\\"hi\\\" */ // not a comment\";\n"
    "  printf(\"coord %s\\n\", strcmp(hostile_model.coord_descs[0], want0) ? \"differs\" : \"same\");\n"
    "  printf(\"param %s\\n\", strcmp(hostile_model.param_descs[0], want1) ? \"differs\" : \"same\");\n"
    "  printf(\"got [%s]\\n\", hostile_model.coord_descs[0]);\n"
    "  return 0;\n}\n";
  char *out = compile_and_run(dir, "hostile", driver, NULL);
  ck_assert_msg(strstr(out, "coord same") != NULL, "coordinate description altered:\n%s", out);
  ck_assert_msg(strstr(out, "param same") != NULL, "parameter description altered:\n%s", out);
  free(out);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* A 5,000-character description: longer than the 4095-character string
** literal C99 5.2.4.1 guarantees.  Either a clear error, or C that compiles
** under -pedantic -Werror and hands the text back whole. */
START_TEST(long_description) {
  char *d = repeat('d', 5000);
  size_t n = 5000 + 200;
  char *text = malloc(n);
  snprintf(text, n, "coord x \"%s\"\nkinetic x'^2/2\n", d);
  char *dir = make_temp_dir();
  RunResult r = gen_text(dir, dir, text, NULL);
  ck_assert_msg(r.status == 0 || (r.status == 1 && strstr(r.err, "error:")), "status %d: %.500s", r.status, r.err);
  if (r.status == 0) {
    const char *driver =
      "#include <stdio.h>\n#include <string.h>\n#include <eom/model.h>\n#include \"hostile.h\"\n"
      "int main(void) {\n"
      "  printf(\"length %lu\\n\", (unsigned long)strlen(hostile_model.coord_descs[0]));\n"
      "  return 0;\n}\n";
    char *out = compile_and_run(dir, "hostile", driver, NULL);
    ck_assert_msg(strstr(out, "length 5000") != NULL, "%s", out);
    free(out);
  }
  run_free(&r);
  remove_tree(dir);
  free(dir);
  free(text);
  free(d);
}
END_TEST

/* --prefix must be a C identifier: anything else is a usage error. */
START_TEST(invalid_prefix_rejected) {
  static const char *const bad[] = {"1abc", "a b", "a-b", "", "x;y", "\xc3\xa9t\xc3\xa9"};
  for (int i = 0; i < 6; i++) {
    char *dir = make_temp_dir();
    char *model = write_file(dir, "m.eom", good_model_text, strlen(good_model_text));
    char *argv[] = {(char *)eomc(), "gen", model, "-o", dir, "--prefix", (char *)bad[i], NULL};
    RunResult r = run_argv(argv);
    ck_assert_msg(r.status == 2 && strstr(r.err, "--prefix"), "--prefix '%s': status %d: %s", bad[i], r.status, r.err);
    ck_assert_int_eq(count_entries(dir), 1);
    run_free(&r);
    free(model);
    remove_tree(dir);
    free(dir);
  }
}
END_TEST

/* ------------------------------------------------------ output directories */

START_TEST(missing_output_directory) {
  char *dir = make_temp_dir();
  char *missing = path_join(dir, "no/such/dir");
  RunResult r = gen_text(dir, missing, good_model_text, NULL);
  ck_assert_msg(r.status != 0 && r.status < 128, "status %d", r.status);
  ck_assert_msg(strstr(r.err, "no/such/dir") && strstr(r.err, "error"), "%s", r.err);
  struct stat st;
  ck_assert_msg(stat(missing, &st) != 0, "eomc created the missing directory");
  ck_assert_int_eq(count_entries(dir), 1);
  run_free(&r);
  /* A regular file where the directory should be. */
  char *file = write_file(dir, "plain", "x", 1);
  r = gen_text(dir, file, good_model_text, NULL);
  ck_assert_msg(r.status != 0 && r.status < 128 && strstr(r.err, "error"), "status %d: %s", r.status, r.err);
  ck_assert_int_eq(count_entries(dir), 2);
  run_free(&r);
  free(file);
  free(missing);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* A directory nobody can write into: chmod 0555 for ordinary users, and
** /proc/self (read-only even for root) always. */
START_TEST(read_only_output_directory) {
  char *dir = make_temp_dir();
  char *ro = path_join(dir, "ro");
  ck_assert_int_eq(mkdir(ro, 0555), 0);
  chmod(ro, 0555);
  if (geteuid() != 0) {
    RunResult r = gen_text(dir, ro, good_model_text, NULL);
    ck_assert_msg(r.status != 0 && r.status < 128 && strstr(r.err, "error"), "status %d: %s", r.status, r.err);
    ck_assert_int_eq(count_entries(ro), 0);
    run_free(&r);
  }
  RunResult r = gen_text(dir, "/proc/self", good_model_text, NULL);
  ck_assert_msg(r.status != 0 && r.status < 128 && strstr(r.err, "error"), "status %d: %s", r.status, r.err);
  run_free(&r);
  chmod(ro, 0755);
  free(ro);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* A failed run leaves the previous output untouched and no temporaries. */
START_TEST(failed_gen_keeps_previous_output) {
  char *dir = make_temp_dir();
  char *out = path_join(dir, "out");
  ck_assert_int_eq(mkdir(out, 0755), 0);
  RunResult r = gen_text(dir, out, "model keep\ncoord x\nparam k = 4\nkinetic x'^2/2\npotential k*x^2/2\n", NULL);
  ck_assert_msg(r.status == 0, "%s", r.err);
  run_free(&r);
  ck_assert_int_eq(count_entries(out), 2);  /* keep.h and keep.c, no temporaries */
  char *h = path_join(out, "keep.h"), *c = path_join(out, "keep.c");
  size_t hlen, clen;
  char *h0 = read_file(h, &hlen), *c0 = read_file(c, &clen);
  ck_assert(h0 && c0);
  /* Same name, now with an error in the model. */
  r = gen_text(dir, out, "model keep\ncoord x\nparam k = 4\nkinetic x'^2/2\npotential k*y^2/2\n", NULL);
  ck_assert_int_eq(r.status, 1);
  run_free(&r);
  /* And a derivation error (M depends on the rates). */
  r = gen_text(dir, out, "model keep\ncoord x\nkinetic x'^4\n", NULL);
  ck_assert_msg(r.status != 0, "a quartic kinetic energy was accepted");
  run_free(&r);
  ck_assert_int_eq(count_entries(out), 2);
  size_t hlen1, clen1;
  char *h1 = read_file(h, &hlen1), *c1 = read_file(c, &clen1);
  ck_assert(h1 && c1 && hlen1 == hlen && clen1 == clen && !memcmp(h0, h1, hlen) && !memcmp(c0, c1, clen));
  free(h0), free(c0), free(h1), free(c1), free(h), free(c);
  free(out);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* ------------------------------------------------------- time limit */

/* A 14-link planar chain written through lets takes seconds to derive; with
** --max-seconds 0.05 eomc must stop with a message and write nothing. */
START_TEST(max_seconds_stops_cleanly) {
  size_t cap = 1 << 16, len = 0;
  char *text = malloc(cap);
  int n = 14;
  len += (size_t)snprintf(text + len, cap - len, "coord a1");
  for (int i = 2; i <= n; i++) len += (size_t)snprintf(text + len, cap - len, ", a%d", i);
  len += (size_t)snprintf(text + len, cap - len, "\nparam l = 1\nparam g = 9.81\n");
  for (int i = 1; i <= n; i++) {
    char sum[512] = "a1";
    for (int j = 2; j <= i; j++) snprintf(sum + strlen(sum), sizeof sum - strlen(sum), " + a%d", j);
    if (i == 1) {
      len += (size_t)snprintf(text + len, cap - len, "let x1 = l*cos(a1)\nlet y1 = l*sin(a1)\n");
    } else {
      len += (size_t)snprintf(text + len, cap - len, "let x%d = x%d + l*cos(%s)\nlet y%d = y%d + l*sin(%s)\n",
                              i, i - 1, sum, i, i - 1, sum);
    }
    len += (size_t)snprintf(text + len, cap - len, "kinetic (x%d'^2 + y%d'^2)/2\npotential g*y%d\n", i, i, i);
  }
  char *dir = make_temp_dir();
  char *out = path_join(dir, "out");
  ck_assert_int_eq(mkdir(out, 0755), 0);
  char *model = write_file(dir, "chain.eom", text, len);
  char *argv[] = {(char *)eomc(), "gen", model, "-o", out, "--max-seconds", "0.05", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 1 || r.status == 3, "status %d: %s", r.status, r.err);
  ck_assert_msg(strstr(r.err, "error") && strstr(r.err, "limit"), "no clear message: %s", r.err);
  ck_assert_int_eq(count_entries(out), 0);
  run_free(&r);
  /* Nonsense limits are usage errors. */
  char *bad[] = {"-1", "abc", "nan"};
  for (int i = 0; i < 3; i++) {
    char *argv2[] = {(char *)eomc(), "gen", model, "-o", out, "--max-seconds", bad[i], NULL};
    r = run_argv(argv2);
    ck_assert_msg(r.status == 2, "--max-seconds %s: status %d", bad[i], r.status);
    run_free(&r);
  }
  free(model);
  free(out);
  remove_tree(dir);
  free(dir);
  free(text);
}
END_TEST

/* The same suite in both passes: the clang pass compiles every driver with clang. */
static Suite *hostile_suite(void) {
  Suite *s = suite_create("hostile");
  TCase *tc = tcase_create("names");
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, c_keyword_and_libm_names);
  tcase_add_test(tc, builtin_name_rejected);
  tcase_add_test(tc, nan_inf_as_names);
  tcase_add_test(tc, ten_thousand_character_identifiers);
  suite_add_tcase(s, tc);
  tc = tcase_create("numbers");
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, huge_and_tiny_literals);
  tcase_add_test(tc, overflowing_literal_rejected);
  tcase_add_test(tc, singular_mass_matrix);
  tcase_add_test(tc, mass_identically_zero);
  tcase_add_test(tc, state_independent_forcing);
  suite_add_tcase(s, tc);
  tc = tcase_create("text");
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, descriptions_escape_safely);
  tcase_add_test(tc, long_description);
  tcase_add_test(tc, invalid_prefix_rejected);
  suite_add_tcase(s, tc);
  tc = tcase_create("files");
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, missing_output_directory);
  tcase_add_test(tc, read_only_output_directory);
  tcase_add_test(tc, failed_gen_keeps_previous_output);
  tcase_add_test(tc, max_seconds_stops_cleanly);
  suite_add_tcase(s, tc);
  /* Safety net for a hung run, not a speed target (sanitizer builds are slow). */
  tc = tcase_create("size");
  tcase_set_timeout(tc, 900);
  tcase_add_test(tc, fifty_megabyte_model);
  suite_add_tcase(s, tc);
  return s;
}

int main(int argc, char **argv) { return run_test_main(argc, argv, hostile_suite); }
