/*
** test_attitude.c — free bodies (attitude coordinates), end to end: models
** written here go through `eomc gen`, the C is compiled with -std=c99
** -pedantic -Wall -Wextra -Werror together with a small driver (below),
** and the motion it computes is checked against published results:
**
**   torque-free asymmetric body   kinetic energy and world angular momentum
**                                 are constants of the motion (Landau and
**                                 Lifshitz, Mechanics, 3rd ed., 1976, §36-37)
**   spin about a principal axis   unstable about the intermediate axis with
**                                 growth rate sqrt((I2-I1)(I3-I2)/(I1 I3)) w,
**                                 stable about the others (Landau and
**                                 Lifshitz, §37, problem; the form used is
**                                 our own linearization, see below)
**   torque-free symmetric body    body-frame precession of omega at
**                                 (I3 - I1)/I1 w3 (Goldstein, Classical
**                                 Mechanics, 3rd ed., 2002, §5.6), through
**                                 whole tumbles of the body
**   multirotor                    hover in equilibrium; a forced flight
**                                 against Newton's and Euler's equations with
**                                 quaternion kinematics, integrated by hand
**                                 here (Euler's equations: Goldstein §5.5)
**   generated Jacobian            against central differences of P_rhs
**   eomc sim                      unit quaternions with every method, roll/
**                                 pitch/yaw columns; the heavy top against
**                                 examples/gimbal_top.eom (Euler angles),
**                                 and from the vertical where those fail
**
** The driver steps the state x = [q; v] with the classical Runge–Kutta
** method and divides each quaternion by its norm after every step (the
** projection libeomrt documents).
*/
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "testutil.h"

#define PI 3.14159265358979323846

/* ------------------------------------------------------------------ the driver */

/* Commands, one per line; numbers printed with 17 digits:
**   p I V        set parameter I
**   u V...       set the inputs (NU numbers)
**   x V...       set the state (NQ + NV numbers)
**   r H N K      N Runge-Kutta steps of size H from the current state,
**                normalizing after each; print "t x..." every K steps
**   s            print rc of P_accel, v' (NV), P_inverse at that v' (NV), T, V
**   j            print A of P_jacobian, then A by central differences of P_rhs
** The first line is "nq nv nu np". */
static const char driver_src[] =
  "#include <stdio.h>\n#include <string.h>\n#include <math.h>\n#include <eom/model.h>\n"
  "extern const struct eom_model MODEL;\n"
  "#define MX 40\n"
  "static void vec(const double *v, int n) {\n"
  "  int i;\n  for (i = 0; i < n; i++) printf(\" %.17g\", v[i]);\n}\n"
  "static int rd(FILE *in, double *v, int n) {\n"
  "  int i;\n  for (i = 0; i < n; i++) if (fscanf(in, \"%lf\", &v[i]) != 1) return 0;\n"
  "  return 1;\n}\n"
  "int main(int argc, char **argv) {\n"
  "  const struct eom_model *m = &MODEL;\n"
  "  static double p[64], u[16], x[MX], k1[MX], k2[MX], k3[MX], k4[MX], xs[MX], a[MX], Q[MX];\n"
  "  static double A[MX*MX], B[MX*16], xp[MX], xm[MX], fp[MX], fm[MX];\n"
  "  double t = 0, h, T, V;\n  char cmd[8];\n  int i, j, nq, nv, nx, rc;\n  long s, steps, every;\n"
  "  FILE *in;\n"
  "  if (argc < 2 || !(in = fopen(argv[1], \"r\"))) return 2;\n"
  "  if (m->abi != EOM_MODEL_ABI || m->nq + m->nv > MX || m->nu > 16 || m->np > 64) return 3;\n"
  "  nq = m->nq; nv = m->nv; nx = nq + nv;\n"
  "  if (!m->normalize || !m->kinematics || m->nattitudes < 1) return 3;\n"
  "  for (i = 0; i < m->np; i++) p[i] = m->param_defaults[i];\n"
  "  memcpy(x, m->q0, nq * sizeof *x);\n  memcpy(x + nq, m->qd0, nv * sizeof *x);\n"
  "  printf(\"%d %d %d %d\\n\", nq, nv, m->nu, m->np);\n"
  "  while (fscanf(in, \"%7s\", cmd) == 1) {\n"
  "    if (strcmp(cmd, \"p\") == 0) {\n"
  "      if (fscanf(in, \"%d\", &i) != 1 || i < 0 || i >= m->np || !rd(in, &p[i], 1)) return 4;\n"
  "    } else if (strcmp(cmd, \"u\") == 0) {\n"
  "      if (!rd(in, u, m->nu)) return 4;\n"
  "    } else if (strcmp(cmd, \"x\") == 0) {\n"
  "      if (!rd(in, x, nx)) return 4;\n"
  "    } else if (strcmp(cmd, \"r\") == 0) {\n"
  "      if (!rd(in, &h, 1) || fscanf(in, \"%ld %ld\", &steps, &every) != 2 || every < 1) return 4;\n"
  "      for (s = 1; s <= steps; s++) {\n"
  "        m->rhs(t, x, u, p, k1);\n"
  "        for (j = 0; j < nx; j++) xs[j] = x[j] + h/2*k1[j];\n"
  "        m->rhs(t + h/2, xs, u, p, k2);\n"
  "        for (j = 0; j < nx; j++) xs[j] = x[j] + h/2*k2[j];\n"
  "        m->rhs(t + h/2, xs, u, p, k3);\n"
  "        for (j = 0; j < nx; j++) xs[j] = x[j] + h*k3[j];\n"
  "        m->rhs(t + h, xs, u, p, k4);\n"
  "        for (j = 0; j < nx; j++) x[j] += h/6*(k1[j] + 2*k2[j] + 2*k3[j] + k4[j]);\n"
  "        m->normalize(x);\n"
  "        t = s == steps ? t + h : t + h;\n"
  "        if (s % every == 0) { printf(\"%.17g\", t); vec(x, nx); printf(\"\\n\"); }\n"
  "      }\n"
  "    } else if (strcmp(cmd, \"s\") == 0) {\n"
  "      rc = m->accel(t, x, x + nq, u, p, a);\n"
  "      m->inverse(t, x, x + nq, a, p, Q);\n"
  "      m->energy(x, x + nq, p, &T, &V);\n"
  "      printf(\"%d\", rc); vec(a, nv); vec(Q, nv); printf(\" %.17g %.17g\\n\", T, V);\n"
  "    } else if (strcmp(cmd, \"j\") == 0) {\n"
  "      m->jacobian(t, x, u, p, A, B);\n"
  "      printf(\"0\"); vec(A, nx*nx); printf(\"\\n0\");\n"
  "      for (i = 0; i < nx; i++) for (j = 0; j < nx; j++) {\n"
  "        double d = 1e-6 * (1 + fabs(x[j]));\n"
  "        memcpy(xp, x, sizeof x); memcpy(xm, x, sizeof x);\n"
  "        xp[j] += d; xm[j] -= d;\n"
  "        m->rhs(t, xp, u, p, fp); m->rhs(t, xm, u, p, fm);\n"
  "        printf(\" %.17g\", (fp[i] - fm[i]) / (2*d));\n"
  "      }\n"
  "      printf(\"\\n\");\n"
  "    } else return 5;\n"
  "  }\n"
  "  return 0;\n}\n";

typedef struct Gen {
  char *dir, *exe;
  int nq, nv, nu, np;
} Gen;

/* Write MODEL text as NAME.eom, generate it and compile it with the driver. */
static Gen gen_model(const char *name, const char *text) {
  Gen g;
  memset(&g, 0, sizeof g);
  g.dir = make_temp_dir();
  char file[64];
  snprintf(file, sizeof file, "%s.eom", name);
  char *model = write_file(g.dir, file, text, strlen(text));
  char *argv_gen[] = {(char *)eomc(), "gen", model, "-o", g.dir, NULL};
  RunResult r = run_argv(argv_gen);
  ck_assert_msg(r.status == 0, "eomc gen %s failed (%d):\n%s", name, r.status, r.err);
  run_free(&r);
  char *drv = write_file(g.dir, "driver.c", driver_src, strlen(driver_src));
  size_t n = strlen(g.dir) + strlen(srcdir()) + strlen(name) + 64;
  char *csrc = malloc(n), *inc = malloc(n), *dinc = malloc(n), *def = malloc(n);
  g.exe = malloc(n);
  sprintf(csrc, "%s/%s.c", g.dir, name);
  sprintf(inc, "-I%s/include", srcdir());
  sprintf(dinc, "-I%s", g.dir);
  sprintf(def, "-DMODEL=%s_model", name);
  sprintf(g.exe, "%s/driver", g.dir);
  char *argv_cc[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror", "-O1",
                     inc, dinc, def, csrc, drv, "-o", g.exe, "-lm", NULL};
  r = run_argv(argv_cc);
  ck_assert_msg(r.status == 0, "the code of %s does not compile (%d):\n%s", name, r.status, r.err);
  run_free(&r);
  free(model), free(drv), free(csrc), free(inc), free(dinc), free(def);
  return g;
}

static void gen_free(Gen *g) {
  remove_tree(g->dir);
  free(g->dir), free(g->exe);
}

/* Run the driver on `commands`; returns its output (malloc'd) and reads the
** sizes from its first line. */
static char *drive(Gen *g, const char *commands) {
  char *cmds = write_file(g->dir, "commands.txt", commands, strlen(commands));
  char *argv[] = {g->exe, cmds, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "driver failed (%d):\n%s", r.status, r.err);
  ck_assert(sscanf(r.out, "%d %d %d %d", &g->nq, &g->nv, &g->nu, &g->np) == 4);
  free(cmds);
  free(r.err);
  return r.out;
}

/* The rows after the first line: `cols` numbers each, into a malloc'd
** array; *nrows gets their count. */
static double *rows_of(const char *out, int cols, int *nrows) {
  const char *s = strchr(out, '\n');
  ck_assert(s);
  int n = count_lines(s + 1);
  double *v = malloc(sizeof *v * (size_t)(n + 1) * (size_t)cols);
  int got = read_numbers(s + 1, v, n * cols);
  ck_assert_msg(got == n * cols, "read %d numbers, want %d", got, n * cols);
  *nrows = n;
  return v;
}

/* The rotation (body to world, row-major) of a unit quaternion [w, x, y, z]:
** the standard formula, written here independently of the generator
** (common practice; e.g. Kuipers, Quaternions and Rotation Sequences, 1999). */
static void rotation_of(const double *q, double R[9]) {
  double w = q[0], x = q[1], y = q[2], z = q[3];
  R[0] = w*w + x*x - y*y - z*z, R[1] = 2*(x*y - w*z), R[2] = 2*(x*z + w*y);
  R[3] = 2*(x*y + w*z), R[4] = w*w - x*x + y*y - z*z, R[5] = 2*(y*z - w*x);
  R[6] = 2*(x*z - w*y), R[7] = 2*(y*z + w*x), R[8] = w*w - x*x - y*y + z*z;
}

static const char free_body[] =
  "model spinner\n"
  "attitude R \"a tumbling box\"\n"
  "param I1 = 1.5 [kg*m^2]\n"
  "param I2 = 2.5 [kg*m^2]\n"
  "param I3 = 4 [kg*m^2]\n"
  "param m = 3 [kg]\n"
  "body box mass m at [0, 0, 0] orient R inertia diag(I1, I2, I3)\n"
  "initial R = rotz(0.3)*rotx(0.2)\n"
  "initial omega(R) = [0.4, 0.2, 1.1]\n";

/* World angular momentum R I omega and kinetic energy omega.I omega / 2 of a
** row "t q(4) omega(3)". */
static void invariants(const double *row, const double I[3], double H[3], double *T) {
  double R[9], Iw[3] = {I[0] * row[5], I[1] * row[6], I[2] * row[7]};
  rotation_of(row + 1, R);
  for (int i = 0; i < 3; i++) H[i] = R[3 * i] * Iw[0] + R[3 * i + 1] * Iw[1] + R[3 * i + 2] * Iw[2];
  *T = (Iw[0] * row[5] + Iw[1] * row[6] + Iw[2] * row[7]) / 2;
}

/* Landau and Lifshitz, §36: without torques, E and the world-frame angular
** momentum M stay constant.  |omega| ~ 1.19 rad/s, so 100 rotations of the
** body take ~530 s; h = 2.5 ms keeps the Runge-Kutta error far below 1e-9. */
START_TEST(torque_free_conservation) {
  Gen g = gen_model("spinner", free_body);
  char *out = drive(&g, "r 0.0025 220000 1000\n");
  ck_assert_int_eq(g.nq, 4);
  ck_assert_int_eq(g.nv, 3);
  int n;
  double *rows = rows_of(out, 8, &n);
  ck_assert_int_eq(n, 220);
  static const double I[3] = {1.5, 2.5, 4};
  double H0[3], T0;
  /* the initial state: rotz(0.3)*rotx(0.2), as its quaternion (half angles) */
  double q0[8] = {0, cos(0.15) * cos(0.1), cos(0.15) * sin(0.1), sin(0.15) * sin(0.1),
                  sin(0.15) * cos(0.1), 0.4, 0.2, 1.1};
  invariants(q0, I, H0, &T0);
  double hn = sqrt(H0[0] * H0[0] + H0[1] * H0[1] + H0[2] * H0[2]);
  for (int k = 0; k < n; k++) {
    double H[3], T;
    invariants(rows + 8 * k, I, H, &T);
    ck_assert_msg(fabs(T - T0) <= 1e-9 * T0, "T %.15g, want %.15g at t = %g", T, T0, rows[8 * k]);
    for (int i = 0; i < 3; i++)
      ck_assert_msg(fabs(H[i] - H0[i]) <= 1e-9 * hn, "H[%d] %.15g, want %.15g at t = %g", i, H[i],
                    H0[i], rows[8 * k]);
  }
  /* rotation periods 2 pi/|omega0| covered */
  double turns = rows[8 * (n - 1)] * sqrt(0.4 * 0.4 + 0.2 * 0.2 + 1.1 * 1.1) / (2 * PI);
  ck_assert_msg(turns > 100, "only %g turns", turns);
  free(rows), free(out);
  gen_free(&g);
}
END_TEST

/* Spin W about principal axis k of a body with I1 < I2 < I3, the other two
** components of omega started at eps.  Euler's equations linearized about
** omega = W e2 give (our own derivation, matching Landau and Lifshitz §37):
**   I1 w1' = (I2 - I3) W w3,  I3 w3' = (I1 - I2) W w1
**   =>  w1'' = (I3 - I2)(I2 - I1) / (I1 I3) W^2 w1,
** growth at lambda = W sqrt((I2 - I1)(I3 - I2) / (I1 I3)); about e1 or e3
** the same product is negative: an oscillation of size ~eps. */
static double *spin_about(Gen *g, int axis, double W, double eps, const char *run, int *n) {
  char cmds[256];
  double w[3] = {eps, eps, eps};
  w[axis] = W;
  snprintf(cmds, sizeof cmds, "x 1 0 0 0 %.17g %.17g %.17g\n%s", w[0], w[1], w[2], run);
  char *out = drive(g, cmds);
  double *rows = rows_of(out, 8, n);
  free(out);
  return rows;
}

START_TEST(intermediate_axis_unstable) {
  static const char model[] =
    "model spin3\n"
    "attitude R\n"
    "param I1 = 1\nparam I2 = 2\nparam I3 = 3\n"
    "body b mass 1 at [0, 0, 0] orient R inertia diag(I1, I2, I3)\n";
  Gen g = gen_model("spin3", model);
  const double W = 1.0, eps = 1e-10, I1 = 1, I2 = 2, I3 = 3;
  const double lambda = W * sqrt((I2 - I1) * (I3 - I2) / (I1 * I3));
  int n;
  /* rows every 1 s up to 24 s: |w1| grows as cosh-like, e^(lambda t) late */
  double *rows = spin_about(&g, 1, W, eps, "r 0.001 24000 1000\n", &n);
  ck_assert_int_eq(n, 24);
  double slope = (log(fabs(rows[8 * 23 + 5])) - log(fabs(rows[8 * 13 + 5]))) / (rows[8 * 23] - rows[8 * 13]);
  ck_assert_msg(fabs(slope - lambda) <= 1e-4 * lambda, "growth rate %.10g, want %.10g", slope, lambda);
  ck_assert_msg(fabs(rows[8 * 23 + 5]) > 1e3 * eps, "no growth: %g", rows[8 * 23 + 5]);
  free(rows);
  /* the stable axes: the perturbation stays of the order of eps */
  for (int axis = 0; axis < 3; axis += 2) {
    rows = spin_about(&g, axis, W, eps, "r 0.001 40000 100\n", &n);
    ck_assert_int_eq(n, 400);
    double big = 0;
    for (int k = 0; k < n; k++)
      for (int c = 0; c < 3; c++)
        if (c != axis) big = fmax(big, fabs(rows[8 * k + 5 + c]));
    ck_assert_msg(big < 10 * eps, "spin about axis %d: perturbation grew to %g", axis + 1, big);
    free(rows);
  }
  gen_free(&g);
}
END_TEST

/* Goldstein §5.6: with I1 = I2 the body-frame omega turns about the
** symmetry axis at Omega = (I3 - I1)/I1 w3, w3 constant.  Started with most
** of the spin across the symmetry axis and turned so that the angular
** momentum [A w1, 0, C w3] is horizontal (a turn about y by atan(C w3/(A w1))),
** the body tumbles end over end: its symmetry axis cones at 83 degrees about
** a horizontal axis, nearly straight up and straight down (where z-x-z
** Euler angles are singular), many times. */
START_TEST(symmetric_precession_through_tumbles) {
  static const char model[] =
    "model disc\n"
    "attitude R\n"
    "param A = 2\nparam C = 3.5\n"
    "body b mass 1 at [0, 0, 0] orient R inertia diag(A, A, C)\n"
    "initial R = roty(atan(7/60))\n"
    "initial omega(R) = [1.5, 0, 0.1]\n";
  Gen g = gen_model("disc", model);
  const double A = 2, C = 3.5, w3 = 0.1, a = 1.5, Omega = (C - A) / A * w3;
  int n;
  char *out = drive(&g, "r 0.002 30000 50\n");
  double *rows = rows_of(out, 8, &n);
  ck_assert_int_eq(n, 600);
  double zmin = 1, zmax = -1;
  for (int k = 0; k < n; k++) {
    const double *r = rows + 8 * k;
    double t = r[0], R[9];
    ck_assert_msg(fabs(r[5] - a * cos(Omega * t)) < 1e-9 && fabs(r[6] - a * sin(Omega * t)) < 1e-9 &&
                      fabs(r[7] - w3) < 1e-12,
                  "t = %g: omega [%.12g, %.12g, %.12g], want [%.12g, %.12g, %.12g]", t, r[5], r[6], r[7],
                  a * cos(Omega * t), a * sin(Omega * t), w3);
    rotation_of(r + 1, R);
    zmin = fmin(zmin, R[8]), zmax = fmax(zmax, R[8]);
  }
  ck_assert_msg(zmin < -0.99 && zmax > 0.99, "no tumble: body z axis up to %g, down to %g", zmax, zmin);
  free(rows), free(out);
  gen_free(&g);
}
END_TEST

/* A multirotor: position [x, y, z], attitude R, thrust F along body z and
** body-frame torques, quadratic-free linear drag on the translation. */
static const char copter[] =
  "model hover\n"
  "coord x, y, z [m]\n"
  "attitude R \"airframe\"\n"
  "param m = 1.2 [kg]\n"
  "param Ix = 0.011 [kg*m^2]\n"
  "param Iy = 0.013 [kg*m^2]\n"
  "param Iz = 0.021 [kg*m^2]\n"
  "param g = 9.81 [m/s^2]\n"
  "param c = 0.3 [N*s/m]\n"
  "input F [N]\ninput tx [N*m]\ninput ty [N*m]\ninput tz [N*m]\n"
  "body airframe mass m at [x, y, z] orient R inertia diag(Ix, Iy, Iz)\n"
  "gravity [0, 0, -g]\n"
  "force R*[0, 0, F] at [x, y, z]\n"
  "torque R*[tx, ty, tz] on R\n"
  "dissipation c*(x'^2 + y'^2 + z'^2)/2\n";

/* Thrust m g, level: every acceleration vanishes (to round-off). */
START_TEST(hover_is_equilibrium) {
  Gen g = gen_model("hover", copter);
  char *out = drive(&g, "u 11.772 0 0 0\ns\n");
  ck_assert_int_eq(g.nq, 7);
  ck_assert_int_eq(g.nv, 6);
  double v[32];
  const char *line = strchr(out, '\n') + 1;
  ck_assert_int_eq(read_numbers(line, v, 32), 1 + 6 + 6 + 2);
  ck_assert_int_eq((int)v[0], 0);
  for (int i = 0; i < 6; i++) ck_assert_msg(fabs(v[1 + i]) < 1e-13, "v'[%d] = %g", i, v[1 + i]);
  free(out);
  gen_free(&g);
}
END_TEST

/* The forced flight from a tilted, turning start against the equations of
** motion written here: m p'' = R [0, 0, F] - m g e3 - c p',
** I w' = tau - w x I w (Goldstein §5.5), q' = q (x) [0, w] / 2, stepped
** with the same Runge-Kutta steps and normalization. */
static void newton_euler_rhs(const double *s, const double *u, double *ds) {
  const double m = 1.2, I[3] = {0.011, 0.013, 0.021}, g = 9.81, c = 0.3;
  double R[9];
  rotation_of(s + 3, R);
  for (int i = 0; i < 3; i++) ds[i] = s[7 + i];
  const double *q = s + 3, *w = s + 10;
  ds[3] = -0.5 * (q[1] * w[0] + q[2] * w[1] + q[3] * w[2]);
  ds[4] = 0.5 * (q[0] * w[0] + q[2] * w[2] - q[3] * w[1]);
  ds[5] = 0.5 * (q[0] * w[1] + q[3] * w[0] - q[1] * w[2]);
  ds[6] = 0.5 * (q[0] * w[2] + q[1] * w[1] - q[2] * w[0]);
  for (int i = 0; i < 3; i++) ds[7 + i] = (R[3 * i + 2] * u[0] - c * s[7 + i]) / m - (i == 2 ? g : 0);
  double Iw[3] = {I[0] * w[0], I[1] * w[1], I[2] * w[2]};
  for (int i = 0; i < 3; i++) {
    int j = (i + 1) % 3, k = (i + 2) % 3;
    ds[10 + i] = (u[1 + i] - (w[j] * Iw[k] - w[k] * Iw[j])) / I[i];
  }
}

START_TEST(flight_against_newton_euler) {
  Gen g = gen_model("hover", copter);
  static const double s0[13] = {0.5, -1, 2, 0.9, 0.1, -0.3, 0.2, 0.4, 0.1, -0.2, 1.5, -2, 3};
  static const double u[4] = {13.5, 0.002, -0.001, 0.0015};
  double s[13], k1[13], k2[13], k3[13], k4[13], y[13];
  double nq = sqrt(0.9 * 0.9 + 0.1 * 0.1 + 0.3 * 0.3 + 0.2 * 0.2);
  memcpy(s, s0, sizeof s);
  for (int i = 3; i < 7; i++) s[i] /= nq;
  char cmds[512];
  snprintf(cmds, sizeof cmds,
           "u %.17g %.17g %.17g %.17g\nx %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g "
           "%.17g %.17g\nr 0.001 10000 10000\n",
           u[0], u[1], u[2], u[3], s[0], s[1], s[2], s[3], s[4], s[5], s[6], s[7], s[8], s[9], s[10], s[11],
           s[12]);
  char *out = drive(&g, cmds);
  int n;
  double *rows = rows_of(out, 14, &n);
  ck_assert_int_eq(n, 1);
  const double h = 0.001;
  for (int step = 0; step < 10000; step++) {
    newton_euler_rhs(s, u, k1);
    for (int i = 0; i < 13; i++) y[i] = s[i] + h / 2 * k1[i];
    newton_euler_rhs(y, u, k2);
    for (int i = 0; i < 13; i++) y[i] = s[i] + h / 2 * k2[i];
    newton_euler_rhs(y, u, k3);
    for (int i = 0; i < 13; i++) y[i] = s[i] + h * k3[i];
    newton_euler_rhs(y, u, k4);
    for (int i = 0; i < 13; i++) s[i] += h / 6 * (k1[i] + 2 * k2[i] + 2 * k3[i] + k4[i]);
    double qn = sqrt(s[3] * s[3] + s[4] * s[4] + s[5] * s[5] + s[6] * s[6]);
    for (int i = 3; i < 7; i++) s[i] /= qn;
  }
  ck_assert_msg(fabs(rows[0] - 10.0) < 1e-9, "t = %g", rows[0]);
  for (int i = 0; i < 13; i++)
    ck_assert_msg(fabs(rows[1 + i] - s[i]) <= 1e-9 * (1 + fabs(s[i])), "x[%d] = %.15g, hand-written %.15g", i,
                  rows[1 + i], s[i]);
  free(rows), free(out);
  gen_free(&g);
}
END_TEST

/* P_jacobian against central differences of P_rhs at a tilted, turning
** state (P_rhs is smooth in q, on the unit sphere or off it). */
START_TEST(jacobian_against_differences) {
  Gen g = gen_model("hover", copter);
  char *out = drive(&g, "u 13 0.01 -0.02 0.03\n"
                        "x 0.5 -1 2 0.9 0.1 -0.3 0.2 0.4 0.1 -0.2 1.5 -2 3\nj\n");
  int nx = g.nq + g.nv;
  ck_assert_int_eq(nx, 13);
  double *v = malloc(sizeof *v * (size_t)(2 * nx * nx + 2));
  const char *s = strchr(out, '\n') + 1;
  ck_assert_int_eq(read_numbers(s, v, 1 + nx * nx), 1 + nx * nx);
  s = strchr(s, '\n') + 1;
  ck_assert_int_eq(read_numbers(s, v + 1 + nx * nx, 1 + nx * nx), 1 + nx * nx);
  const double *A = v + 1, *F = v + 2 + nx * nx;
  for (int i = 0; i < nx * nx; i++)
    ck_assert_msg(fabs(A[i] - F[i]) <= 1e-6 * (1 + fabs(F[i])), "A[%d,%d] = %.12g, differences %.12g",
                  i / nx, i % nx, A[i], F[i]);
  free(v), free(out);
  gen_free(&g);
}
END_TEST

/* ------------------------------------------------------------ eomc sim */

/* dst = rotz(yaw) roty(pitch) rotx(roll), row-major (the Z-Y-X convention
** the CSV's angles follow; common practice). */
static void rotation_of_rpy(double roll, double pitch, double yaw, double R[9]) {
  double cr = cos(roll), sr = sin(roll), cp = cos(pitch), sp = sin(pitch), cy = cos(yaw), sy = sin(yaw);
  R[0] = cy * cp, R[1] = cy * sp * sr - sy * cr, R[2] = cy * sp * cr + sy * sr;
  R[3] = sy * cp, R[4] = sy * sp * sr + cy * cr, R[5] = sy * sp * cr - cy * sr;
  R[6] = -sp, R[7] = cp * sr, R[8] = cp * cr;
}

/* Every method of `eomc sim` steps the quaternion and keeps it unit; the
** CSV has the quaternion, omega and roll/pitch/yaw columns, the angles
** give back the quaternion's rotation, and the torque-free body keeps its
** energy. */
START_TEST(sim_keeps_unit_quaternions) {
  static const char *const methods[][3] = {
    {"--method=dopri", "--rtol=1e-10", "--atol=1e-12"},
    {"--method=rk4", "--step=0.002", "--atol=1e-12"},
    {"--method=radau5", "--rtol=1e-10", "--atol=1e-12"},
    {"--method=midpoint", "--step=0.002", "--atol=1e-12"}};
  char *model = write_file(scratch_dir(), "spinner.eom", free_body, strlen(free_body));
  for (size_t k = 0; k < sizeof methods / sizeof methods[0]; k++) {
    CsvTable t = sim_csv(model, scratch_path("run.csv"), "--until=20", "--every=0.1", methods[k][0],
                         methods[k][1], methods[k][2], NULL);
    ck_assert_int_eq(t.nrows, 201);
    int q = csv_col(&t, "R.w"), w = csv_col(&t, "omega(R)[1]"), a = csv_col(&t, "R.roll");
    int T = csv_col(&t, "T");
    ck_assert_int_eq(csv_col(&t, "R.z"), q + 3);
    ck_assert_int_eq(csv_col(&t, "omega(R)[3]"), w + 2);
    ck_assert_int_eq(csv_col(&t, "R.pitch"), a + 1);
    ck_assert_int_eq(csv_col(&t, "R.yaw"), a + 2);
    double T0 = csv_at(&t, 0, T);
    for (int r = 0; r < t.nrows; r++) {
      double qq[4], R[9], E[9], n = 0;
      for (int c = 0; c < 4; c++) qq[c] = csv_at(&t, r, q + c), n += qq[c] * qq[c];
      ck_assert_msg(fabs(sqrt(n) - 1) < 1e-12, "%s: |q| - 1 = %g at row %d", methods[k][0], sqrt(n) - 1, r);
      rotation_of(qq, R);
      rotation_of_rpy(csv_at(&t, r, a), csv_at(&t, r, a + 1), csv_at(&t, r, a + 2), E);
      for (int c = 0; c < 9; c++)
        ck_assert_msg(fabs(R[c] - E[c]) < 1e-12, "%s: roll/pitch/yaw do not give R at row %d", methods[k][0], r);
      /* the midpoint rule keeps a quadratic invariant only up to its error */
      double tol = strcmp(methods[k][0], "--method=midpoint") == 0 ? 1e-5 : 1e-8;
      ck_assert_msg(fabs(csv_at(&t, r, T) - T0) <= tol * T0, "%s: T %.12g, want %.12g at row %d",
                    methods[k][0], csv_at(&t, r, T), T0, r);
    }
    csv_free(&t);
  }
  free(model);
}
END_TEST

/* The heavy symmetric top of examples/gimbal_top.eom (z-x-z Euler angles)
** written with an attitude: same parameters, no drag, R0 = rotx(0.35), and
** the body-frame omega of the Euler rates phi' = 1.2, psi' = 150 at psi = 0,
** theta' = 0: omega = [theta', phi' sin(theta), phi' cos(theta) + psi'] (the
** kinematic equations of the Euler angles, Goldstein, Classical Mechanics,
** §4.9, at psi = 0).  Where both are valid they must agree (to 1e-9 of the axle); from
** the vertical, where the angles are singular, only the attitude runs. */
static const char top_model[] =
  "model free_top\n"
  "attitude R \"rotor and axle\"\n"
  "param m = 0.18 [kg]\nparam l = 0.035 [m]\n"
  "param A = 6.5e-5 [kg*m^2]\nparam C = 1.1e-4 [kg*m^2]\nparam g = 9.81 [m/s^2]\n"
  "body rotor mass m at R*[0, 0, l] orient R inertia diag(A, A, C)\n"
  "gravity [0, 0, -g]\n"
  "let axle_tip = R*[0, 0, 2*l]\n"
  "output tip_x = axle_tip[1] [m]\noutput tip_y = axle_tip[2] [m]\noutput height = axle_tip[3] [m]\n"
  "initial R = rotx(0.35)\n"
  "initial omega(R) = [0, 1.2*sin(0.35), 1.2*cos(0.35) + 150]\n";

START_TEST(heavy_top_against_euler_angles) {
  char *model = write_file(scratch_dir(), "free_top.eom", top_model, strlen(top_model));
  CsvTable a = sim_csv(model, scratch_path("att.csv"), "--until=0.5", "--every=0.05", "--rtol=1e-13",
                       "--atol=1e-16", NULL);
  CsvTable e = sim_csv(example_file("gimbal_top.eom"), scratch_path("euler.csv"), "--set=c=0", "--until=0.5",
                       "--every=0.05", "--rtol=1e-13", "--atol=1e-16", NULL);
  ck_assert_int_eq(a.nrows, 11);
  ck_assert_int_eq(e.nrows, 11);
  static const char *const tip[3] = {"tip_x", "tip_y", "height"};
  double moved = 0;
  for (int r = 0; r < a.nrows; r++)
    for (int c = 0; c < 3; c++) {
      double x = csv_at(&a, r, csv_col(&a, tip[c])), y = csv_at(&e, r, csv_col(&e, tip[c]));
      ck_assert_msg(fabs(x - y) <= 1e-9 * 0.07, "t = %g, %s: attitude %.15g, Euler angles %.15g",
                    csv_at(&a, r, 0), tip[c], x, y);
      moved = fmax(moved, fabs(x - csv_at(&a, 0, csv_col(&a, tip[c]))));
    }
  ck_assert_msg(moved > 0.01, "the top hardly moved (%g m)", moved);
  csv_free(&a), csv_free(&e);
  free(model);
}
END_TEST

START_TEST(heavy_top_through_the_vertical) {
  char text[sizeof top_model + 64];
  snprintf(text, sizeof text, "%.*s", (int)(strstr(top_model, "initial R") - top_model), top_model);
  strcat(text, "initial omega(R) = [0.3, 0, 150]\n");   /* upright: R = I */
  char *model = write_file(scratch_dir(), "upright.eom", text, strlen(text));
  CsvTable a = sim_csv(model, scratch_path("up.csv"), "--until=1", "--every=0.01", "--rtol=1e-11",
                       "--atol=1e-13", NULL);
  ck_assert_int_eq(a.nrows, 101);
  int T = csv_col(&a, "T"), V = csv_col(&a, "V"), h = csv_col(&a, "height");
  double E0 = csv_at(&a, 0, T) + csv_at(&a, 0, V);
  ck_assert(fabs(csv_at(&a, 0, h) - 0.07) < 1e-15);   /* starts exactly upright */
  for (int r = 0; r < a.nrows; r++)
    ck_assert_msg(fabs(csv_at(&a, r, T) + csv_at(&a, r, V) - E0) <= 1e-7 * E0, "energy at row %d", r);
  csv_free(&a);
  /* the Euler-angle model cannot start there: its mass matrix is singular */
  RunResult r = eomc_run("sim", example_file("gimbal_top.eom"), "--set=th=0", "--until=0.1", NULL);
  ck_assert_int_ne(r.status, 0);
  ck_assert_msg(strstr(r.err, "mass matrix is not positive definite") != NULL, "%s", r.err);
  run_free(&r);
  free(model);
}
END_TEST

/* Verbs whose analysis does not handle attitudes yet say so at the attitude. */
START_TEST(modes_refuses_attitudes_at_the_attitude) {
  char *model = write_file(scratch_dir(), "spinner.eom", free_body, strlen(free_body));
  RunResult r = eomc_run("modes", model, NULL);
  ck_assert_int_eq(r.status, 1);
  ck_assert_msg(strstr(r.err, "spinner.eom:2:10: error: attitude 'R'") != NULL, "%s", r.err);
  run_free(&r);
  r = eomc_run("linearize", model, NULL);   /* the equilibrium search */
  ck_assert_int_eq(r.status, 3);
  ck_assert_msg(strstr(r.err, "give the point with --no-search") != NULL, "%s", r.err);
  run_free(&r);
  free(model);
}
END_TEST

/* The first `count` numbers after `key` in s (brackets, commas skipped). */
static int numbers_after(const char *s, const char *key, double *v, int count) {
  const char *p = strstr(s, key);
  int n = 0;
  if (!p) return 0;
  p += strlen(key);
  while (*p && n < count) {
    char *end;
    double d = strtod(p, &end);
    if (end != p) v[n++] = d, p = end;
    else p++;
  }
  return n;
}

/* `eomc linearize` of a body spinning at W about its intermediate axis, in
** the minimal state [dth (3); omega (3)]: the omega block is Euler's
** equations linearized (I1 w1' = (I2 - I3) W w3, I3 w3' = (I1 - I2) W w1,
** as in intermediate_axis_unstable), and the small rotations turn with the
** spin, dth' = dw - W e2 x dth (the kinematics of a rotation perturbed in
** body axes; our own derivation). */
START_TEST(linearize_in_three_rotation_parameters) {
  static const char model[] =
    "model spin3\nattitude R\nparam I1 = 1\nparam I2 = 2\nparam I3 = 3\n"
    "body b mass 1 at [0, 0, 0] orient R inertia diag(I1, I2, I3)\n"
    "initial R = rotz(0.4)*roty(-1.1)\n"
    "initial omega(R) = [0, 1.5, 0]\n";
  const double W = 1.5, I1 = 1, I2 = 2, I3 = 3;
  char *path = write_file(scratch_dir(), "spin3.eom", model, strlen(model));
  RunResult r = eomc_run("linearize", path, "--no-search", "--json", NULL);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert_msg(strstr(r.out, "\"state\": [\"R.dth1\", \"R.dth2\", \"R.dth3\", \"omega(R)[1]\"") != NULL,
                "%s", r.out);
  double A[36];
  ck_assert_int_eq(numbers_after(r.out, "\"A\":", A, 36), 36);
  double want[36] = {0};
  want[0 * 6 + 2] = -W, want[2 * 6 + 0] = W;                  /* -W e2 x dth */
  want[0 * 6 + 3] = want[1 * 6 + 4] = want[2 * 6 + 5] = 1;     /* + dw */
  want[3 * 6 + 5] = (I2 - I3) / I1 * W, want[5 * 6 + 3] = (I1 - I2) / I3 * W;
  for (int k = 0; k < 36; k++)
    ck_assert_msg(fabs(A[k] - want[k]) < 1e-7, "A[%d,%d] = %.10g, want %.10g", k / 6, k % 6, A[k], want[k]);
  run_free(&r);
  free(path);
}
END_TEST

static Suite *make_suite(void) {
  Suite *s = suite_create("attitude");
  TCase *tc = tcase_create("free bodies");
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, torque_free_conservation);
  tcase_add_test(tc, intermediate_axis_unstable);
  tcase_add_test(tc, symmetric_precession_through_tumbles);
  tcase_add_test(tc, hover_is_equilibrium);
  tcase_add_test(tc, flight_against_newton_euler);
  tcase_add_test(tc, jacobian_against_differences);
  suite_add_tcase(s, tc);
  tc = tcase_create("runs");
  tcase_set_timeout(tc, 120);
  tcase_add_checked_fixture(tc, scratch_setup, scratch_teardown);
  tcase_add_test(tc, sim_keeps_unit_quaternions);
  tcase_add_test(tc, heavy_top_against_euler_angles);
  tcase_add_test(tc, heavy_top_through_the_vertical);
  tcase_add_test(tc, modes_refuses_attitudes_at_the_attitude);
  tcase_add_test(tc, linearize_in_three_rotation_parameters);
  suite_add_tcase(s, tc);
  return s;
}

int main(int argc, char **argv) { return run_test_main(argc, argv, make_suite); }
