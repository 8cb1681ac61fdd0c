/*
** test_gen.c — end to end: `eomc gen` on model files, the generated C
** compiled with -std=c99 -pedantic -Wall -Wextra -Werror and run.
**
** One generic driver (written below) talks to any generated model through its
** descriptor: it reads states from a file, calls every generated function and
** prints the results, with central finite differences of P_rhs beside the
** exact P_jacobian.  Each test compares those numbers with a closed form from
** outside the project; the source is named beside every check.  Also: the
** command line (usage and model errors, --prefix, --no-cse, --depfile), the
** files (determinism, kept mtime, bad directories) and `eomc show`.
**
** Environment (AM_TESTS_ENVIRONMENT): EOMC the binary, SRCDIR the sources,
** CLANG a clang to compile with too (may be empty), CC the C compiler
** (default cc).
*/
#include <assert.h>
#include <check.h>
#include <dirent.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>
#include "testutil.h"

#ifndef SRCDIR
#define SRCDIR "."
#endif
#ifndef BUILDDIR
#define BUILDDIR "."
#endif


static char *model_path(const char *rel) {
  char *p = malloc(strlen(srcdir()) + strlen(rel) + 2);
  sprintf(p, "%s/%s", srcdir(), rel);
  return p;
}

/* Run eomc with up to 8 arguments (NULL-terminated). */
static RunResult run_eomc(const char *a0, const char *a1, const char *a2, const char *a3,
                          const char *a4, const char *a5, const char *a6) {
  char *argv[9] = {(char *)eomc(), (char *)a0, (char *)a1, (char *)a2, (char *)a3,
                   (char *)a4, (char *)a5, (char *)a6, NULL};
  return run_argv(argv);
}

/* ------------------------------------------------------------------ the generic driver */

static const char driver_src[] =
  "#include <stdio.h>\n#include <stdlib.h>\n#include <string.h>\n#include <math.h>\n"
  "#include <eom/model.h>\n"
  "extern const struct eom_model MODEL;\n"
  "static void vec(const char *label, const double *v, int n) {\n"
  "  int i;\n  printf(\"%s\", label);\n"
  "  for (i = 0; i < n; i++) printf(\" %.17g\", v[i]);\n  printf(\"\\n\");\n}\n"
  "int main(int argc, char **argv) {\n"
  "  const struct eom_model *m = &MODEL;\n"
  "  static double p[64], q[16], qd[16], u[16], qdd[16], M[256], f[16], Q[16], y[16];\n"
  "  static double sw[64], x[32], xd[32], A[1024], B[512], FA[1024], FB[512], xp[32], up[16], fp[32], fm[32];\n"
  "  double T, V, t;\n  char cmd[16];\n  int i, j, rc, n, nx, nu;\n"
  "  FILE *in;\n"
  "  if (argc < 2 || !(in = fopen(argv[1], \"r\"))) return 2;\n"
  "  if (m->abi != EOM_MODEL_ABI || m->nq > 16 || m->nu > 16 || m->np > 64 || m->ny > 16) return 3;\n"
  "  n = m->nq; nx = 2*n; nu = m->nu;\n"
  "  for (i = 0; i < m->np; i++) p[i] = m->param_defaults[i];\n"
  "  printf(\"model %s nq %d nu %d np %d ny %d\\n\", m->name, m->nq, m->nu, m->np, m->ny);\n"
  "  if (m->ns > 64) return 3;\n"
  "  for (i = 0; i < m->ns; i++) printf(\"switch %s\\n\", m->switch_names[i]);\n"
  "  while (fscanf(in, \"%15s\", cmd) == 1) {\n"
  "    if (strcmp(cmd, \"p\") == 0) {\n"
  "      if (fscanf(in, \"%d\", &i) != 1 || fscanf(in, \"%lf\", &p[i]) != 1) return 4;\n"
  "      continue;\n"
  "    }\n"
  "    if (fscanf(in, \"%lf\", &t) != 1) return 4;\n"
  "    for (i = 0; i < n; i++) if (fscanf(in, \"%lf\", &q[i]) != 1) return 4;\n"
  "    for (i = 0; i < n; i++) if (fscanf(in, \"%lf\", &qd[i]) != 1) return 4;\n"
  "    for (i = 0; i < nu; i++) if (fscanf(in, \"%lf\", &u[i]) != 1) return 4;\n"
  "    for (i = 0; i < n; i++) { x[i] = q[i]; x[n + i] = qd[i]; qdd[i] = 1234.5; }\n"
  "    rc = m->accel(t, q, qd, u, p, qdd);\n"
  "    printf(\"rc %d\\n\", rc);\n"
  "    vec(\"qdd\", qdd, n);\n"
  "    m->mass(q, p, M); vec(\"M\", M, n*n);\n"
  "    m->forcing(t, q, qd, u, p, f); vec(\"f\", f, n);\n"
  "    if (rc == 0) { m->inverse(t, q, qd, qdd, p, Q); vec(\"Q\", Q, n); }\n"
  "    m->energy(q, qd, p, &T, &V); printf(\"TV %.17g %.17g\\n\", T, V);\n"
  "    m->outputs(t, q, qd, u, p, y); vec(\"y\", y, m->ny);\n"
  "    if (m->ns) { m->switches(t, q, qd, u, p, sw); vec(\"s\", sw, m->ns); }\n"
  "    m->rhs(t, x, u, p, xd); vec(\"xd\", xd, nx);\n"
  "    m->jacobian(t, x, u, p, A, B); vec(\"A\", A, nx*nx); vec(\"B\", B, nx*nu);\n"
  "    for (j = 0; j < nx + nu; j++) {\n"
  "      double h;\n"
  "      for (i = 0; i < nx; i++) xp[i] = x[i];\n"
  "      for (i = 0; i < nu; i++) up[i] = u[i];\n"
  "      h = 1e-6*(j < nx ? fmax(1.0, fabs(x[j])) : fmax(1.0, fabs(u[j - nx])));\n"
  "      if (j < nx) xp[j] = x[j] + h; else up[j - nx] = u[j - nx] + h;\n"
  "      m->rhs(t, xp, up, p, fp);\n"
  "      if (j < nx) xp[j] = x[j] - h; else up[j - nx] = u[j - nx] - h;\n"
  "      m->rhs(t, xp, up, p, fm);\n"
  "      for (i = 0; i < nx; i++) {\n"
  "        double d = (fp[i] - fm[i])/(2*h);\n"
  "        if (j < nx) FA[i*nx + j] = d; else FB[i*nu + j - nx] = d;\n"
  "      }\n"
  "    }\n"
  "    vec(\"FA\", FA, nx*nx); vec(\"FB\", FB, nx*nu);\n"
  "    printf(\"end\\n\");\n"
  "  }\n"
  "  return 0;\n}\n";

typedef struct Built {
  char *dir;    /* temporary directory holding the generated files and the driver */
  char *exe;
  char *prefix;
} Built;

/* Generate `model` (relative to SRCDIR) into a fresh directory and compile
** it with the generic driver by `compiler`; extra: one more gen option. */
static Built build_model(const char *model, const char *prefix, const char *extra,
                         const char *compiler) {
  Built b;
  char *path = model_path(model);
  b.dir = make_temp_dir();
  b.prefix = strdup(prefix);
  RunResult r = extra ? run_eomc("gen", path, "-o", b.dir, extra, NULL, NULL)
                      : run_eomc("gen", path, "-o", b.dir, NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "eomc gen %s failed (%d):\n%s", model, r.status, r.err);
  run_free(&r);
  char *drv = write_file(b.dir, "driver.c", driver_src, strlen(driver_src));
  size_t n = strlen(b.dir) + strlen(prefix) + 64;
  char *csrc = malloc(n), *inc = malloc(strlen(srcdir()) + 16), *dinc = malloc(n),
       *def = malloc(n);
  b.exe = malloc(n);
  sprintf(csrc, "%s/%s.c", b.dir, prefix);
  sprintf(inc, "-I%s/include", srcdir());
  sprintf(dinc, "-I%s", b.dir);
  sprintf(def, "-DMODEL=%s_model", prefix);
  sprintf(b.exe, "%s/driver", b.dir);
  char *argv[] = {(char *)compiler, "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror",
                  inc, dinc, def, csrc, drv, "-o", b.exe, "-lm", NULL};
  r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s does not compile the code of %s (%d):\n%s", compiler, model,
                r.status, r.err);
  run_free(&r);
  free(path), free(drv), free(csrc), free(inc), free(dinc), free(def);
  return b;
}

static void built_free(Built *b) {
  remove_tree(b->dir);
  free(b->dir), free(b->exe), free(b->prefix);
}

/* Run the driver on `input` (its command file); returns its stdout. */
static char *drive(const Built *b, const char *input) {
  char *in = write_file(b->dir, "input.txt", input, strlen(input));
  char *argv[] = {b->exe, in, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "driver failed (%d): %s", r.status, r.err);
  char *out = r.out;
  r.out = NULL;
  run_free(&r);
  free(in);
  return out;
}

/* The numbers after `label` in the k-th state block (0-based); returns how many. */
static int get(const char *out, int k, const char *label, double *v, int max) {
  const char *s = out;
  for (int i = 0; i <= k; i++) {
    s = strstr(s, "\nrc ");
    ck_assert_msg(s != NULL, "state block %d missing in:\n%s", k, out);
    s++;
  }
  const char *end = strstr(s, "\nend");
  size_t ll = strlen(label);
  for (const char *line = s; line && line < end; line = strchr(line, '\n') ? strchr(line, '\n') + 1 : NULL) {
    if (strncmp(line, label, ll) == 0 && (line[ll] == ' ' || line[ll] == '\n')) {
      return read_numbers(line + ll, v, max);
    }
  }
  ck_abort_msg("label %s missing in block %d", label, k);
  return 0;
}

static double get1(const char *out, int k, const char *label, int index) {
  double v[1100];
  int n = get(out, k, label, v, 1100);
  ck_assert_msg(index < n, "%s has %d entries, wanted %d", label, n, index);
  return v[index];
}

static int close_rel(double got, double want, double rel) {
  return fabs(got - want) <= rel * fmax(1.0, fabs(want));
}

#define CHECK_REL(got, want, rel)                                                             \
  ck_assert_msg(close_rel((got), (want), (rel)), "%s = %.17g, expected %.17g (rel %g)", #got, \
                (double)(got), (double)(want), (double)(rel))

/* Deterministic pseudo-random numbers in [-1, 1] for test states. */
static double rnd(unsigned *s) {
  *s = *s * 1103515245u + 12345u;
  return ((*s >> 8) & 0xffff) / 32767.5 - 1.0;
}

/* Exact Jacobian against central differences of P_rhs in block k. */
static void check_jacobian(const char *out, int k, int nx, int nu) {
  double A[1100], FA[1100], Bm[600], FB[600];
  ck_assert_int_eq(get(out, k, "A", A, 1100), nx * nx);
  ck_assert_int_eq(get(out, k, "FA", FA, 1100), nx * nx);
  for (int i = 0; i < nx * nx; i++)
    ck_assert_msg(fabs(A[i] - FA[i]) <= 1e-7 * fmax(1.0, fabs(A[i])),
                  "A[%d] = %.17g, finite difference %.17g", i, A[i], FA[i]);
  if (!nu) return;
  ck_assert_int_eq(get(out, k, "B", Bm, 600), nx * nu);
  ck_assert_int_eq(get(out, k, "FB", FB, 600), nx * nu);
  for (int i = 0; i < nx * nu; i++)
    ck_assert_msg(fabs(Bm[i] - FB[i]) <= 1e-7 * fmax(1.0, fabs(Bm[i])),
                  "B[%d] = %.17g, finite difference %.17g", i, Bm[i], FB[i]);
}

/* ------------------------------------------------------------------ physics checks */

/* Mass–spring: omega^2 = k/m, so d x''/d x = -k/m (common practice; any
** mechanics text); T = m x'^2/2, V = k x^2/2. */
START_TEST(test_mass_spring) {
  Built b = build_model("tests/models/mass_spring.eom", "mass_spring", NULL, cc());
  char *out = drive(&b, "s 0 0.05 -0.2\ns 1 -0.3 0.7\n");
  const double m = 2.5, k = 40;
  CHECK_REL(get1(out, 0, "qdd", 0), -k / m * 0.05, 1e-14);
  CHECK_REL(get1(out, 1, "qdd", 0), -k / m * -0.3, 1e-14);
  /* A = [0 1; -omega^2 0] */
  CHECK_REL(get1(out, 0, "A", 2), -k / m, 1e-14);
  CHECK_REL(get1(out, 0, "A", 1), 1.0, 0);
  CHECK_REL(get1(out, 0, "A", 3), 0.0, 0);
  CHECK_REL(get1(out, 1, "TV", 0), 0.5 * m * 0.49, 1e-14);
  CHECK_REL(get1(out, 1, "TV", 1), 0.5 * k * 0.09, 1e-14);
  CHECK_REL(get1(out, 0, "xd", 0), -0.2, 0);
  check_jacobian(out, 0, 2, 0);
  free(out);
  built_free(&b);
}
END_TEST

/* Double pendulum with point masses and a torque tau at the upper joint;
** closed form (Taylor, Classical Mechanics, 2005, ch. 11 — from memory):
**   M = [(m1+m2) l1^2, m2 l1 l2 cos(q1-q2); ., m2 l2^2]
**   f1 = -m2 l1 l2 q2'^2 sin(q1-q2) - (m1+m2) g l1 sin q1 + tau
**   f2 =  m2 l1 l2 q1'^2 sin(q1-q2) - m2 g l2 sin q2
** checked at random states to 1e-12 relative; P_inverse(P_accel) returns
** the applied forces [tau, 0]; the Jacobian matches finite differences. */
static void check_double_pendulum(const char *extra) {
  Built b = build_model("tests/models/double_pendulum.eom", "double_pendulum", extra, cc());
  const double m1 = 1.3, m2 = 0.6, l1 = 0.9, l2 = 0.7, g = 9.81;
  char input[4096] = "";
  double st[10][5];
  unsigned seed = 11;
  for (int k = 0; k < 10; k++) {
    for (int i = 0; i < 5; i++) st[k][i] = 3.0 * rnd(&seed);
    char line[400];
    snprintf(line, sizeof line, "s 0.5 %.17g %.17g %.17g %.17g %.17g\n", st[k][0], st[k][1],
             st[k][2], st[k][3], st[k][4]);
    strcat(input, line);
  }
  char *out = drive(&b, input);
  for (int k = 0; k < 10; k++) {
    double q1 = st[k][0], q2 = st[k][1], w1 = st[k][2], w2 = st[k][3], tau = st[k][4];
    double d = q1 - q2;
    double M[4] = {(m1 + m2) * l1 * l1, m2 * l1 * l2 * cos(d), m2 * l1 * l2 * cos(d), m2 * l2 * l2};
    double f[2] = {-m2 * l1 * l2 * w2 * w2 * sin(d) - (m1 + m2) * g * l1 * sin(q1) + tau,
                   m2 * l1 * l2 * w1 * w1 * sin(d) - m2 * g * l2 * sin(q2)};
    double det = M[0] * M[3] - M[1] * M[2];
    double a[2] = {(M[3] * f[0] - M[1] * f[1]) / det, (M[0] * f[1] - M[2] * f[0]) / det};
    ck_assert_int_eq((int)get1(out, k, "rc", 0), 0);
    for (int i = 0; i < 4; i++) CHECK_REL(get1(out, k, "M", i), M[i], 1e-12);
    for (int i = 0; i < 2; i++) CHECK_REL(get1(out, k, "f", i), f[i], 1e-12);
    for (int i = 0; i < 2; i++) CHECK_REL(get1(out, k, "qdd", i), a[i], 1e-11);
    CHECK_REL(get1(out, k, "Q", 0), tau, 1e-12);
    CHECK_REL(get1(out, k, "Q", 1), 0.0, 1e-12);
    CHECK_REL(get1(out, k, "y", 0), l1 * sin(q1) + l2 * sin(q2), 1e-14);
    CHECK_REL(get1(out, k, "y", 1), -l1 * cos(q1) - l2 * cos(q2), 1e-14);
    double T = 0.5 * M[0] * w1 * w1 + 0.5 * M[3] * w2 * w2 + M[1] * w1 * w2;
    double V = -(m1 + m2) * g * l1 * cos(q1) - m2 * g * l2 * cos(q2);
    CHECK_REL(get1(out, k, "TV", 0), T, 1e-12);
    CHECK_REL(get1(out, k, "TV", 1), V, 1e-12);
    check_jacobian(out, k, 4, 1);
  }
  free(out);
  built_free(&b);
}

START_TEST(test_double_pendulum) { check_double_pendulum(NULL); }
END_TEST

/* --no-cse changes the code, not the numbers. */
START_TEST(test_double_pendulum_no_cse) { check_double_pendulum("--no-cse"); }
END_TEST

/* Atwood machine: a = g (m1 - m2)/(m1 + m2) (common textbook result). */
START_TEST(test_atwood) {
  Built b = build_model("tests/models/atwood.eom", "atwood", NULL, cc());
  char *out = drive(&b, "s 0 0.3 1.1\n");
  const double m1 = 3.2, m2 = 2.1, g = 9.81;
  CHECK_REL(get1(out, 0, "qdd", 0), g * (m1 - m2) / (m1 + m2), 1e-14);
  CHECK_REL(get1(out, 0, "M", 0), m1 + m2, 1e-14);
  free(out);
  built_free(&b);
}
END_TEST

/* Bead on a hoop spinning at w about its vertical diameter (Marion,
** Classical Dynamics, 1970, prob. 7-18 — the problem number as cited in
** issue 3, from memory): q'' = w^2 sin q cos q - (g/R) sin q,
** whatever the time (the model is written in the non-rotating frame). */
START_TEST(test_rotating_hoop) {
  Built b = build_model("tests/models/rotating_hoop.eom", "rotating_hoop", NULL, cc());
  const double m = 0.05, R = 0.4, w = 6, g = 9.81;
  const double st[][3] = {{0.0, 0.3, 0.0}, {0.37, 1.2, -2.0}, {2.5, -2.7, 0.4}, {11.0, 0.01, 5.0}};
  char input[1024] = "";
  for (int k = 0; k < 4; k++) {
    char line[200];
    snprintf(line, sizeof line, "s %.17g %.17g %.17g\n", st[k][0], st[k][1], st[k][2]);
    strcat(input, line);
  }
  char *out = drive(&b, input);
  for (int k = 0; k < 4; k++) {
    double q = st[k][1], qd = st[k][2];
    CHECK_REL(get1(out, k, "qdd", 0), w * w * sin(q) * cos(q) - g / R * sin(q), 1e-12);
    /* T = 1/2 m R^2 (q'^2 + w^2 sin^2 q), V = -m g R cos q: the expressions
    ** mention t (as cos^2(w t) + sin^2(w t)) but do not depend on it. */
    CHECK_REL(get1(out, k, "M", 0), m * R * R, 1e-13);
    CHECK_REL(get1(out, k, "TV", 0), 0.5 * m * R * R * (qd * qd + w * w * sin(q) * sin(q)), 1e-12);
    CHECK_REL(get1(out, k, "TV", 1), -m * g * R * cos(q), 1e-13);
    check_jacobian(out, k, 2, 0);
  }
  free(out);
  built_free(&b);
}
END_TEST

/* Compound Atwood machine, 2 DOF (Brizard, An Introduction to Lagrangian
** Mechanics, §2.3.4 — section as cited in issue 3, from memory; the closed
** form below is derived here).  With depths x of m1 and y of m2 below the movable
** pulley (see the model file), T = 1/2 m1 x'^2 + 1/2 m2 (y' - x')^2 +
** 1/2 m3 (x' + y')^2 and V = -g (m1 x + m2 (y - x) + m3 (-x - y)) + const, so
**   M = [m1 + m2 + m3, m3 - m2; m3 - m2, m2 + m3],  f = g [m1 - m2 - m3, m2 - m3]
** and, with D = m1 (m2 + m3) + 4 m2 m3 (the determinant of M),
**   x'' = g (m1 (m2 + m3) - 4 m2 m3)/D,   y'' = 2 g m1 (m2 - m3)/D. */
START_TEST(test_compound_atwood) {
  Built b = build_model("tests/models/compound_atwood.eom", "compound_atwood", NULL, cc());
  const double m1 = 4.0, m2 = 1.5, m3 = 2.2, g = 9.81;
  char *out = drive(&b, "s 0 0.2 0.4 -0.5 0.8\n");
  double D = m1 * (m2 + m3) + 4 * m2 * m3;
  CHECK_REL(get1(out, 0, "qdd", 0), g * (m1 * (m2 + m3) - 4 * m2 * m3) / D, 1e-13);
  CHECK_REL(get1(out, 0, "qdd", 1), 2 * g * m1 * (m2 - m3) / D, 1e-13);
  CHECK_REL(get1(out, 0, "M", 1), m3 - m2, 1e-14);
  CHECK_REL(get1(out, 0, "M", 2), m3 - m2, 1e-14);
  CHECK_REL(get1(out, 0, "f", 0), g * (m1 - m2 - m3), 1e-14);
  free(out);
  built_free(&b);
}
END_TEST

/* Damped driven oscillator: the Rayleigh function D = c x'^2/2 gives the
** force -c x' (Goldstein, Classical Mechanics, 3rd ed., 2002, §1.5 — from
** memory), so m x'' = -k x - c x' + F0 cos(wf t). */
START_TEST(test_driven_oscillator) {
  Built b = build_model("tests/models/driven_oscillator.eom", "driven_oscillator", NULL, cc());
  const double m = 0.8, k = 30, c = 1.2, F0 = 2, wf = 4.5;
  const double st[][3] = {{0.0, 0.1, 0.0}, {0.9, -0.2, 1.5}, {3.3, 0.05, -2.5}};
  char input[1024] = "";
  for (int i = 0; i < 3; i++) {
    char line[200];
    snprintf(line, sizeof line, "s %.17g %.17g %.17g\n", st[i][0], st[i][1], st[i][2]);
    strcat(input, line);
  }
  char *out = drive(&b, input);
  for (int i = 0; i < 3; i++) {
    double t = st[i][0], x = st[i][1], v = st[i][2];
    CHECK_REL(get1(out, i, "qdd", 0), (-k * x - c * v + F0 * cos(wf * t)) / m, 1e-13);
    CHECK_REL(get1(out, i, "A", 3), -c / m, 1e-14);   /* d x''/d x' */
    check_jacobian(out, i, 2, 0);
  }
  /* no spring, no force at this instant: only the damper acts */
  free(out);
  out = drive(&b, "p 1 0\ns 0.3490658503988659 0 2.0\n");   /* wf t = pi/2 */
  CHECK_REL(get1(out, 0, "f", 0), -c * 2.0, 1e-12);
  free(out);
  built_free(&b);
}
END_TEST

/* Branch functions (docs/language.md): the shuttle between two buffers obeys
**   m x'' = -k max(0, x - L) - k min(0, x + L) - c max(0, x' - v0)
**           - F sign(x') + clamp(u, -Fm, Fm),
** written out here by the definitions of min, max, sign and clamp (common
** practice: a unilateral spring, Coulomb's dry friction, a saturation).
** The Jacobian is the active branch's: d x''/d x = -k/m inside a buffer and
** 0 in the free travel, d x''/d x' = -c/m above v0, d x''/d u = 1/m inside
** the drive limit; away from the kinks it matches central differences. */
START_TEST(test_buffered_shuttle) {
  Built b = build_model("tests/models/buffered_shuttle.eom", "buffered_shuttle", NULL, cc());
  const double m = 3.5, k = 2500, L = 0.6, F = 4, c = 30, v0 = 1.2, Fm = 20;
  /* x, x', u: free travel, each buffer, overspeed, saturated drive both ways, at rest */
  const double st[][3] = {{0.1, 0.5, 3},    {0.7, 2.0, 25},  {-0.75, -0.3, -40},
                          {-0.2, 1.5, -19}, {0.65, -2, 0.5}, {0.3, 0, 1}};
  const int nst = (int)(sizeof st / sizeof st[0]);
  char input[2048] = "";
  for (int i = 0; i < nst; i++) {
    char line[200];
    snprintf(line, sizeof line, "s 0 %.17g %.17g %.17g\n", st[i][0], st[i][1], st[i][2]);
    strcat(input, line);
  }
  char *out = drive(&b, input);
  for (int i = 0; i < nst; i++) {
    double x = st[i][0], v = st[i][1], u = st[i][2];
    double spring = x > L ? -k * (x - L) : x < -L ? -k * (x + L) : 0;
    double damper = v > v0 ? -c * (v - v0) : 0;
    double friction = v > 0 ? -F : v < 0 ? F : 0;
    double drive_force = u > Fm ? Fm : u < -Fm ? -Fm : u;
    CHECK_REL(get1(out, i, "f", 0), spring + damper + friction + drive_force, 1e-13);
    CHECK_REL(get1(out, i, "qdd", 0), (spring + damper + friction + drive_force) / m, 1e-13);
    CHECK_REL(get1(out, i, "A", 2), fabs(x) > L ? -k / m : 0.0, 1e-13);  /* d x''/d x */
    CHECK_REL(get1(out, i, "A", 3), v > v0 ? -c / m : 0.0, 1e-13);       /* d x''/d x' */
    CHECK_REL(get1(out, i, "B", 1), fabs(u) < Fm ? 1 / m : 0.0, 1e-13);  /* d x''/d u */
    CHECK_REL(get1(out, i, "y", 0), x > L ? L : x < -L ? -L : x, 0);
    CHECK_REL(get1(out, i, "y", 1), fabs(x) > L ? 1.0 : 0.0, 0);
    /* P_inverse: the input's generalized force that gives this x'' */
    CHECK_REL(get1(out, i, "Q", 0), drive_force, 1e-12);
    if (v != 0) check_jacobian(out, i, 2, 1);
    /* the switching functions of the terms, in source order (the outputs'
    ** clamp and step are not among them: they do not act on the motion) */
    double sw[8];
    ck_assert_int_eq(get(out, i, "s", sw, 8), 6);
    CHECK_REL(sw[0], 0 - (x - L), 1e-15);  /* max(0, x - L): 0 - (x - L) */
    CHECK_REL(sw[1], 0 - (x + L), 1e-15);
    CHECK_REL(sw[2], 0 - (v - v0), 1e-15);
    CHECK_REL(sw[3], v, 0);
    CHECK_REL(sw[4], u + Fm, 1e-15);
    CHECK_REL(sw[5], u - Fm, 1e-15);
  }
  ck_assert_ptr_nonnull(strstr(out, "\nswitch 15:17 max\nswitch 15:41 min\nswitch 16:19 max\n"
                                    "switch 17:14 sign\nswitch 17:25 clamp lower\n"
                                    "switch 17:25 clamp upper\n"));
  free(out);
  built_free(&b);
}
END_TEST

/* A 3-DOF nonlinear model with two inputs: the exact Jacobian against central
** differences of P_rhs (1e-7 relative), P_inverse(P_accel) against the
** applied generalized forces (1e-12), and CSE against --no-cse. */
START_TEST(test_cart_double_pendulum) {
  Built b = build_model("tests/models/cart_double_pendulum.eom", "cart_double_pendulum", NULL, cc());
  Built r = build_model("tests/models/cart_double_pendulum.eom", "cart_double_pendulum", "--no-cse", cc());
  char input[4096] = "";
  double st[8][8];
  unsigned seed = 5;
  for (int k = 0; k < 8; k++) {
    char line[600];
    for (int i = 0; i < 8; i++) st[k][i] = 2.0 * rnd(&seed);
    snprintf(line, sizeof line, "s %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g\n",
             0.1 * k, st[k][0], st[k][1], st[k][2], st[k][3], st[k][4], st[k][5], st[k][6],
             st[k][7]);
    strcat(input, line);
  }
  char *out = drive(&b, input), *raw = drive(&r, input);
  for (int k = 0; k < 8; k++) {
    double F = st[k][6], T2 = st[k][7];
    ck_assert_int_eq((int)get1(out, k, "rc", 0), 0);
    /* force s = F; force a1 = -T2; force a2 = T2 */
    CHECK_REL(get1(out, k, "Q", 0), F, 1e-12);
    CHECK_REL(get1(out, k, "Q", 1), -T2, 1e-12);
    CHECK_REL(get1(out, k, "Q", 2), T2, 1e-12);
    check_jacobian(out, k, 6, 2);
    for (int i = 0; i < 3; i++) CHECK_REL(get1(raw, k, "qdd", i), get1(out, k, "qdd", i), 1e-12);
    for (int i = 0; i < 36; i++) CHECK_REL(get1(raw, k, "A", i), get1(out, k, "A", i), 1e-10);
  }
  free(out);
  free(raw);
  built_free(&b);
  built_free(&r);
}
END_TEST

/* A pendulum in Cartesian coordinates held by x^2 + y^2 = L^2: with
** M q'' = f + G^T lambda and G q'' = gamma = -2 (x'^2 + y'^2), the
** multiplier is lambda = (m gamma - G f)/(G G^T) (derived here from those two
** equations) and the tangential acceleration is -g sin(theta) (the simple
** pendulum; common practice). */
START_TEST(test_constrained_pendulum) {
  char *dir = make_temp_dir(), *model = model_path("tests/models/cartesian_pendulum.eom");
  RunResult r = run_eomc("gen", model, "-o", dir, NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "%s", r.err);
  run_free(&r);
  const char *src =
    "#include <stdio.h>\n#include <math.h>\n#include <eom/model.h>\n#include \"cartesian_pendulum.h\"\n"
    "int main(void) {\n"
    "  const struct eom_model *m = &cartesian_pendulum_model;\n"
    "  double p[cartesian_pendulum_NP], q[2], qd[2], qdd[2], lam[cartesian_pendulum_NC], phi[1], G[2];\n"
    "  double th = 0.7, w = -1.3, L;\n"
    "  cartesian_pendulum_default_params(p); L = p[cartesian_pendulum_P_L];\n"
    "  q[0] = L*sin(th); q[1] = -L*cos(th); qd[0] = L*cos(th)*w; qd[1] = L*sin(th)*w;\n"
    "  if (m->accel_constrained == 0 || m->accel_constrained(0.0, q, qd, 0, p, qdd, lam) != 0) return 1;\n"
    "  m->constraint(q, p, phi); m->constraint_jacobian(q, p, G);\n"
    "  printf(\"%.17g %.17g %.17g %.17g %.17g %.17g %d\\n\", qdd[0], qdd[1], lam[0], phi[0], G[0], G[1], m->nc);\n"
    "  return 0;\n}\n";
  char *drv = write_file(dir, "d.c", src, strlen(src));
  char csrc[4200], exe[4200], inc[4200], dinc[4200];
  snprintf(csrc, sizeof csrc, "%s/cartesian_pendulum.c", dir);
  snprintf(exe, sizeof exe, "%s/d", dir);
  snprintf(inc, sizeof inc, "-I%s/include", srcdir());
  snprintf(dinc, sizeof dinc, "-I%s", dir);
  char *argv[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror", inc, dinc,
                  csrc, drv, "-o", exe, "-lm", NULL};
  r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s", r.err);
  run_free(&r);
  char *argv2[] = {exe, NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "driver: %d", r.status);
  double v[6];
  int nc;
  ck_assert_int_eq(sscanf(r.out, "%lf %lf %lf %lf %lf %lf %d", &v[0], &v[1], &v[2], &v[3], &v[4], &v[5], &nc), 7);
  const double m = 0.8, g = 9.81, L = 1.2, th = 0.7, w = -1.3;
  double x = L * sin(th), y = -L * cos(th), xd = L * cos(th) * w, yd = L * sin(th) * w;
  double Gx = 2 * x, Gy = 2 * y, gamma = -2 * (xd * xd + yd * yd);
  double lam = (m * gamma - Gy * (-m * g)) / (Gx * Gx + Gy * Gy);
  ck_assert_int_eq(nc, 1);
  /* the sign of phi and G is the generator's choice: compare through G */
  double sG = v[4] * Gx > 0 ? 1.0 : -1.0;
  CHECK_REL(v[4], sG * Gx, 1e-14);
  CHECK_REL(v[5], sG * Gy, 1e-14);
  CHECK_REL(v[3], 0.0, 1e-14);
  CHECK_REL(v[2] * sG, lam, 1e-12);
  CHECK_REL(v[0] * cos(th) + v[1] * sin(th), -g * sin(th), 1e-12);
  CHECK_REL(v[0], Gx * lam / m, 1e-12);
  CHECK_REL(v[1], -g + Gy * lam / m, 1e-12);
  run_free(&r);
  free(drv);
  free(model);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* M not positive definite: P_accel returns nonzero and writes nothing,
** P_rhs writes NaN. */
START_TEST(test_not_positive_definite) {
  Built b = build_model("tests/models/negative_inertia.eom", "negative_inertia", NULL, cc());
  char *out = drive(&b, "s 0 0.1 0.2\n");
  ck_assert_int_ne((int)get1(out, 0, "rc", 0), 0);
  CHECK_REL(get1(out, 0, "qdd", 0), 1234.5, 0);   /* untouched */
  ck_assert(isnan(get1(out, 0, "xd", 1)));
  CHECK_REL(get1(out, 0, "M", 0), -1.5, 1e-15);
  free(out);
  built_free(&b);
  /* a healthy model with its mass parameter set negative at run time */
  b = build_model("tests/models/mass_spring.eom", "mass_spring", NULL, cc());
  out = drive(&b, "s 0 0.1 0.2\np 0 -2.5\ns 0 0.1 0.2\np 0 0\ns 0 0.1 0.2\n");
  ck_assert_int_eq((int)get1(out, 0, "rc", 0), 0);
  ck_assert_int_ne((int)get1(out, 1, "rc", 0), 0);
  ck_assert_int_ne((int)get1(out, 2, "rc", 0), 0);   /* a zero pivot too */
  free(out);
  built_free(&b);
}
END_TEST

/* ------------------------------------------------------------------ every model compiles */

/* Every model of examples/ and tests/models/, listed once before the tests
** run; each is one iteration of a loop test (one model per time limit). */
static char **all_models;
static int all_models_count;

static void list_all_models(void) {
  int n1 = 0, n2 = 0;
  char *d1 = model_path("examples"), *d2 = model_path("tests/models");
  char **a = model_files(d1, &n1), **b = model_files(d2, &n2);
  all_models = malloc((size_t)(n1 + n2 + 1) * sizeof *all_models);
  assert(all_models && a && b);
  for (int i = 0; i < n1; i++) all_models[all_models_count++] = a[i];
  for (int i = 0; i < n2; i++) all_models[all_models_count++] = b[i];
  all_models[all_models_count] = NULL;
  free(a);
  free(b);
  free(d1);
  free(d2);
}

static void free_all_models(void) {
  for (int i = 0; i < all_models_count; i++) free(all_models[i]);
  free(all_models);
}

/* eomc gen on one model; its C compiles warning-free with and without the
** descriptor (then needing nothing but <math.h>). */
static void compile_model(const char *model, const char *compiler) {
  char *out = make_temp_dir();
  RunResult r = run_eomc("gen", model, "-o", out, "--prefix", "m", NULL);
  ck_assert_msg(r.status == 0, "eomc gen %s: %s", model, r.err);
  run_free(&r);
  char csrc[4200], obj[4200], inc[4200];
  snprintf(csrc, sizeof csrc, "%s/m.c", out);
  snprintf(obj, sizeof obj, "%s/m.o", out);
  snprintf(inc, sizeof inc, "-I%s/include", srcdir());
  char *argv[] = {(char *)compiler, "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror",
                  "-O1", inc, "-c", csrc, "-o", obj, NULL};
  r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s rejects the code of %s:\n%s", compiler, model, r.err);
  run_free(&r);
  char *argv2[] = {(char *)compiler, "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror",
                   "-DEOM_NO_DESCRIPTOR", "-c", csrc, "-o", obj, NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "%s rejects the code of %s without descriptor:\n%s", compiler,
                model, r.err);
  run_free(&r);
  remove_tree(out);
  free(out);
}

START_TEST(test_models_listed) {
  ck_assert_msg(all_models_count >= 10, "only %d models in examples/ and tests/models/", all_models_count);
}
END_TEST

START_TEST(test_examples_gcc) {
  compile_model(all_models[_i], cc());
}
END_TEST

/* The clang pass: every model's C compiled with clang (cc() is clang there). */
START_TEST(test_examples_clang) {
  ck_assert(clang_pass());
  compile_model(all_models[_i], cc());
}
END_TEST

/* Model strings with comment delimiters, quotes, backslashes, a newline, a
** tab and UTF-8 come back byte for byte from the descriptor. */
START_TEST(test_odd_strings) {
  Built b = build_model("tests/models/odd_strings.eom", "odd_strings", NULL, cc());
  /* a second driver that prints the descriptions */
  const char *src =
    "#include <stdio.h>\n#include <eom/model.h>\n#include \"odd_strings.h\"\n"
    "int main(void) {\n"
    "  fputs(odd_strings_model.coord_descs[0], stdout); fputs(\"|\", stdout);\n"
    "  fputs(odd_strings_model.param_descs[0], stdout); fputs(\"|\", stdout);\n"
    "  fputs(odd_strings_model.param_descs[1], stdout); fputs(\"|\", stdout);\n"
    "  fputs(odd_strings_model.coord_units[0], stdout);\n"
    "  return 0;\n}\n";
  char *drv = write_file(b.dir, "strings.c", src, strlen(src));
  char csrc[4200], exe[4200], inc[4200], dinc[4200];
  snprintf(csrc, sizeof csrc, "%s/odd_strings.c", b.dir);
  snprintf(exe, sizeof exe, "%s/strings", b.dir);
  snprintf(inc, sizeof inc, "-I%s/include", srcdir());
  snprintf(dinc, sizeof dinc, "-I%s", b.dir);
  char *argv[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror", inc, dinc,
                  csrc, drv, "-o", exe, "-lm", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s", r.err);
  run_free(&r);
  char *argv2[] = {exe, NULL};
  r = run_argv(argv2);
  ck_assert_int_eq(r.status, 0);
  const char *want =
    "ends a comment */ here, opens /* one, \"quoted\", back\\slash ?\?/ trigraph?\nsecond line\tand a tab, caf\xc3\xa9|"
    "*/ #define x 1 /*|a \\\\ at the end \\|m";
  ck_assert_str_eq(r.out, want);
  run_free(&r);
  free(drv);
  built_free(&b);
}
END_TEST

/* --prefix renames every symbol and file; the direct API works without the
** descriptor. */
START_TEST(test_prefix) {
  char *dir = make_temp_dir(), *model = model_path("tests/models/atwood.eom");
  RunResult r = run_eomc("gen", model, "--prefix", "rig7", "-o", dir, NULL);
  ck_assert_msg(r.status == 0, "%s", r.err);
  run_free(&r);
  const char *src =
    "#include <stdio.h>\n#include \"rig7.h\"\n"
    "int main(void) {\n"
    "  double p[rig7_NP], x[2 * rig7_NQ], qdd[rig7_NQ];\n"
    "  rig7_default_params(p); rig7_initial_state(x);\n"
    "  if (rig7_accel(0.0, x, x + rig7_NQ, 0, p, qdd) != 0) return 1;\n"
    "  printf(\"%.17g %g\\n\", qdd[0], p[rig7_P_m2]);\n"
    "  return 0;\n}\n";
  char *drv = write_file(dir, "d.c", src, strlen(src));
  char csrc[4200], exe[4200], dinc[4200];
  snprintf(csrc, sizeof csrc, "%s/rig7.c", dir);
  snprintf(exe, sizeof exe, "%s/d", dir);
  snprintf(dinc, sizeof dinc, "-I%s", dir);
  char *argv[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror",
                  "-DEOM_NO_DESCRIPTOR", dinc, csrc, drv, "-o", exe, "-lm", NULL};
  r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s", r.err);
  run_free(&r);
  char *argv2[] = {exe, NULL};
  r = run_argv(argv2);
  ck_assert_int_eq(r.status, 0);
  double a, m2;
  ck_assert_int_eq(sscanf(r.out, "%lf %lf", &a, &m2), 2);
  CHECK_REL(a, 9.81 * (3.2 - 2.1) / (3.2 + 2.1), 1e-14);   /* Atwood, as above */
  CHECK_REL(m2, 2.1, 0);
  run_free(&r);
  char path[4200];
  snprintf(path, sizeof path, "%s/atwood.c", dir);
  ck_assert_int_ne(access(path, F_OK), 0);   /* nothing under the model's own name */
  free(drv);
  free(model);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* ------------------------------------------------------------------ files */

START_TEST(test_deterministic_and_mtime) {
  char *a = make_temp_dir(), *b = make_temp_dir();
  char *model = model_path("tests/models/cart_double_pendulum.eom");
  RunResult r = run_eomc("gen", model, "-o", a, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 0);
  run_free(&r);
  r = run_eomc("gen", model, "-o", b, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 0);
  run_free(&r);
  const char *names[] = {"cart_double_pendulum.h", "cart_double_pendulum.c"};
  for (int i = 0; i < 2; i++) {
    char pa[4200], pb[4200];
    size_t na, nb;
    snprintf(pa, sizeof pa, "%s/%s", a, names[i]);
    snprintf(pb, sizeof pb, "%s/%s", b, names[i]);
    char *da = read_file(pa, &na), *db = read_file(pb, &nb);
    ck_assert_ptr_nonnull(da);
    ck_assert_ptr_nonnull(db);
    ck_assert_msg(na == nb && memcmp(da, db, na) == 0, "%s differs between two runs", names[i]);
    free(da);
    free(db);
    /* unchanged output keeps its mtime */
    struct timespec old[2] = {{1000000000, 0}, {1000000000, 0}};
    ck_assert_int_eq(utimensat(AT_FDCWD, pa, old, 0), 0);
  }
  r = run_eomc("gen", model, "-o", a, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 0);
  run_free(&r);
  for (int i = 0; i < 2; i++) {
    char pa[4200];
    struct stat st;
    snprintf(pa, sizeof pa, "%s/%s", a, names[i]);
    ck_assert_int_eq(stat(pa, &st), 0);
    ck_assert_int_eq((long)st.st_mtime, 1000000000L);
  }
  /* a different option rewrites */
  r = run_eomc("gen", model, "-o", a, "--no-cse", NULL, NULL);
  ck_assert_int_eq(r.status, 0);
  run_free(&r);
  {
    char pa[4200];
    struct stat st;
    snprintf(pa, sizeof pa, "%s/%s", a, names[1]);
    ck_assert_int_eq(stat(pa, &st), 0);
    ck_assert_int_ne((long)st.st_mtime, 1000000000L);
  }
  free(model);
  remove_tree(a);
  remove_tree(b);
  free(a);
  free(b);
}
END_TEST

static int dir_entries(const char *path) {
  DIR *d = opendir(path);
  struct dirent *e;
  int n = 0;
  if (!d) return -1;
  while ((e = readdir(d)) != NULL)
    if (strcmp(e->d_name, ".") && strcmp(e->d_name, "..")) n++;
  closedir(d);
  return n;
}

START_TEST(test_bad_output_dir) {
  char *dir = make_temp_dir(), *model = model_path("tests/models/atwood.eom");
  char missing[4200], file[4200];
  snprintf(missing, sizeof missing, "%s/no/such/dir", dir);
  RunResult r = run_eomc("gen", model, "-o", missing, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 2);
  ck_assert_msg(strstr(r.err, "no/such/dir") != NULL, "message: %s", r.err);
  run_free(&r);
  /* a plain file is not a directory */
  char *f = write_file(dir, "plain", "x", 1);
  snprintf(file, sizeof file, "%s", f);
  r = run_eomc("gen", model, "-o", file, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 2);
  ck_assert_msg(strstr(r.err, "not a directory") != NULL, "message: %s", r.err);
  run_free(&r);
  /* a read-only directory (root may write anywhere: then there is nothing to test) */
  if (geteuid() != 0) {
    char ro[4200];
    snprintf(ro, sizeof ro, "%s/ro", dir);
    ck_assert_int_eq(mkdir(ro, 0555), 0);
    r = run_eomc("gen", model, "-o", ro, NULL, NULL, NULL);
    ck_assert_int_eq(r.status, 2);
    ck_assert_msg(strstr(r.err, "not writable") != NULL, "message: %s", r.err);
    ck_assert_int_eq(dir_entries(ro), 0);
    run_free(&r);
    chmod(ro, 0755);
  }
  ck_assert_int_eq(dir_entries(dir), 1);   /* only the plain file: nothing half-written */
  free(f);
  free(model);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* ------------------------------------------------------------------ command line */

START_TEST(test_usage_errors) {
  char *model = model_path("tests/models/atwood.eom");
  struct {
    const char *a[6];
    const char *msg;
  } cases[] = {
    {{"gen", NULL}, "no model"},
    {{"gen", model, "-o", "-", NULL}, "two files"},
    {{"gen", model, "--prefix", "9lives", NULL}, "not a C identifier"},
    {{"gen", model, "--prefix", "a-b", NULL}, "not a C identifier"},
    {{"gen", model, "--frobnicate", NULL}, "unknown option"},
    {{"gen", model, "--max-seconds", "soon", NULL}, "positive number"},
    {{"gen", model, "-o", NULL}, "needs a value"},
    {{"gen", model, model, NULL}, "given more than once"},
    {{"gen", "/no/such/model.eom", NULL}, "model.eom"},
    {{"show", NULL}, "no model"},
    {{"show", model, "--bogus", NULL}, "unknown option"},
  };
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    RunResult r = run_eomc(cases[i].a[0], cases[i].a[1], cases[i].a[2], cases[i].a[3],
                           cases[i].a[4], NULL, NULL);
    ck_assert_msg(r.status == 2, "case %zu: status %d, stderr %s", i, r.status, r.err);
    ck_assert_msg(strstr(r.err, cases[i].msg) != NULL, "case %zu: %s", i, r.err);
    run_free(&r);
  }
  RunResult r = run_eomc("gen", "--help", NULL, NULL, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 0);
  ck_assert_ptr_nonnull(strstr(r.out, "--prefix"));
  run_free(&r);
  free(model);
}
END_TEST

START_TEST(test_model_errors) {
  char *dir = make_temp_dir();
  const char *bad = "coord x\nparam m = 1\nkinetic 1/2*m*x'^2 +\npotential y^2\n";
  char *path = write_file(dir, "bad.eom", bad, strlen(bad));
  char out[4200];
  snprintf(out, sizeof out, "%s/out", dir);
  mkdir(out, 0755);
  RunResult r = run_eomc("gen", path, "-o", out, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 1);
  ck_assert_msg(strstr(r.err, "bad.eom:") != NULL && strstr(r.err, "error:") != NULL, "%s", r.err);
  ck_assert_int_eq(dir_entries(out), 0);
  run_free(&r);
  r = run_eomc("show", path, NULL, NULL, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 1);
  run_free(&r);
  free(path);
  remove_tree(dir);
  free(dir);
}
END_TEST

START_TEST(test_depfile) {
  char *dir = make_temp_dir(), *model = model_path("tests/models/atwood.eom");
  char dep[4200];
  snprintf(dep, sizeof dep, "%s/atwood.d", dir);
  RunResult r = run_eomc("gen", model, "-o", dir, "--depfile", dep, NULL);
  ck_assert_msg(r.status == 0, "%s", r.err);
  run_free(&r);
  char *text = read_file(dep, NULL);
  ck_assert_ptr_nonnull(text);
  ck_assert_ptr_nonnull(strstr(text, "/atwood.h"));
  ck_assert_ptr_nonnull(strstr(text, "/atwood.c"));
  ck_assert_ptr_nonnull(strstr(text, "atwood.eom"));
  free(text);
  free(model);
  remove_tree(dir);
  free(dir);
}
END_TEST

/* ------------------------------------------------------------------ show */

START_TEST(test_show) {
  char *model = model_path("tests/models/double_pendulum.eom");
  RunResult r = run_eomc("show", model, NULL, NULL, NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert_ptr_nonnull(strstr(r.out, "M[q1, q1] ="));
  ck_assert_ptr_nonnull(strstr(r.out, "M[q1, q2] ="));
  ck_assert_ptr_nonnull(strstr(r.out, "q2''"));
  ck_assert_ptr_nonnull(strstr(r.out, "sin(q1)"));
  ck_assert_ptr_nonnull(strstr(r.out, "tau"));
  ck_assert_ptr_null(strstr(r.out, "q["));   /* names, never array slots */
  RunResult r2 = run_eomc("show", model, NULL, NULL, NULL, NULL, NULL);
  ck_assert_str_eq(r.out, r2.out);           /* deterministic */
  run_free(&r);
  run_free(&r2);
  r = run_eomc("show", model, "--latex", NULL, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 0);
  ck_assert_ptr_nonnull(strstr(r.out, "\\begin{bmatrix}"));
  ck_assert_ptr_nonnull(strstr(r.out, "\\ddot{q}_{1}"));
  ck_assert_ptr_nonnull(strstr(r.out, "\\dot{q}_{2}"));
  ck_assert_ptr_nonnull(strstr(r.out, "\\cos"));
  ck_assert_ptr_nonnull(strstr(r.out, "\\tau"));
  run_free(&r);
  free(model);

  /* Shared subexpressions get names no model can declare ($1, and
  ** \mathsf{w}_{1} in LaTeX), never w1 which a model may use; omitted
  ** zero entries of M are said to be 0. */
  model = model_path("tests/models/arm2_planar.eom");
  r = run_eomc("show", model, NULL, NULL, NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert_msg(strstr(r.out, "\n  $1 = ") != NULL && strstr(r.out, "\n  w1 = ") == NULL, "%s", r.out);
  run_free(&r);
  r = run_eomc("show", model, "--latex", NULL, NULL, NULL, NULL);
  ck_assert_msg(strstr(r.out, "\\mathsf{w}_{1} &= ") != NULL, "%s", r.out);
  run_free(&r);
  free(model);
  model = model_path("tests/models/cartesian_pendulum.eom");
  r = run_eomc("show", model, NULL, NULL, NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert_msg(strstr(r.out, "upper triangle shown; all other entries are 0):") != NULL, "%s", r.out);
  run_free(&r);
  free(model);
}
END_TEST

static Suite *gen_suite(void) {
  Suite *s = suite_create("gen");
  if (clang_pass()) {
    TCase *tc = tcase_create("clang");
    tcase_set_timeout(tc, 120);
    tcase_add_loop_test(tc, test_examples_clang, 0, all_models_count);
    suite_add_tcase(s, tc);
    return s;
  }
  TCase *phys = tcase_create("physics");
  tcase_set_timeout(phys, 300);
  tcase_add_test(phys, test_mass_spring);
  tcase_add_test(phys, test_double_pendulum);
  tcase_add_test(phys, test_double_pendulum_no_cse);
  tcase_add_test(phys, test_atwood);
  tcase_add_test(phys, test_rotating_hoop);
  tcase_add_test(phys, test_compound_atwood);
  tcase_add_test(phys, test_driven_oscillator);
  tcase_add_test(phys, test_buffered_shuttle);
  tcase_add_test(phys, test_cart_double_pendulum);
  tcase_add_test(phys, test_not_positive_definite);
  tcase_add_test(phys, test_constrained_pendulum);
  suite_add_tcase(s, phys);
  TCase *code = tcase_create("code");
  tcase_set_timeout(code, 120);
  tcase_add_test(code, test_models_listed);
  tcase_add_loop_test(code, test_examples_gcc, 0, all_models_count);
  tcase_add_test(code, test_odd_strings);
  tcase_add_test(code, test_prefix);
  suite_add_tcase(s, code);
  TCase *cli = tcase_create("cli");
  tcase_set_timeout(cli, 120);
  tcase_add_test(cli, test_deterministic_and_mtime);
  tcase_add_test(cli, test_bad_output_dir);
  tcase_add_test(cli, test_usage_errors);
  tcase_add_test(cli, test_model_errors);
  tcase_add_test(cli, test_depfile);
  tcase_add_test(cli, test_show);
  suite_add_tcase(s, cli);
  return s;
}

int main(int argc, char **argv) {
  list_all_models();
  int status = run_test_main(argc, argv, gen_suite);
  free_all_models();
  return status;
}
