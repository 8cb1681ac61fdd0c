/*
** test_bodies.c — rigid bodies in 3D, end to end: `eomc gen` on the bundled
** examples, the C compiled with -std=c99 -pedantic -Wall -Wextra -Werror and
** run, the numbers checked against results from outside the project:
**
**   gimbal_top.eom     the heavy symmetric top's steady precession and the
**                      torque-free body's precession (Goldstein)
**   picking_arm6.eom   inverse dynamics against a recursive Newton–Euler
**                      implementation written here from the published
**                      algorithm; M symmetric positive definite
**   arm2_*.eom         a `body` model and its scalar `kinetic` twin agree
**   telescoping_feeder.eom  a revolute and a prismatic joint on one DH chain:
**                      the polar arm's closed form (Spong et al.)
**
** A small driver (below) talks to a generated model through its descriptor:
** it reads commands from a file and prints one line of numbers per command.
*/
#include <check.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "testutil.h"

#define PI 3.14159265358979323846

#ifndef SRCDIR
#define SRCDIR "."
#endif
#ifndef BUILDDIR
#define BUILDDIR "."
#endif


/* ------------------------------------------------------------------ the driver */

/* Commands, one per line:
**   p I V                  set parameter I to V
**   s T Q.. QD.. QDD.. U.. print: rc of P_accel, its q'', M, f, P_inverse at
**                          the given q'' (not the computed one), outputs, T, V
**   r H N T Q.. QD.. U..   N classical Runge–Kutta steps of P_rhs of size H;
**                          print the final state
** The first line printed is "nq nu np ny" and the parameter names. */
static const char driver_src[] =
  "#include <stdio.h>\n#include <string.h>\n#include <eom/model.h>\n"
  "extern const struct eom_model MODEL;\n"
  "static void vec(const double *v, int n) {\n"
  "  int i;\n  for (i = 0; i < n; i++) printf(\" %.17g\", v[i]);\n}\n"
  "static int rd(FILE *in, double *v, int n) {\n"
  "  int i;\n  for (i = 0; i < n; i++) if (fscanf(in, \"%lf\", &v[i]) != 1) return 0;\n"
  "  return 1;\n}\n"
  "int main(int argc, char **argv) {\n"
  "  const struct eom_model *m = &MODEL;\n"
  "  static double p[64], q[16], qd[16], qdd[16], u[16], a[16], M[256], f[16], Q[16], y[16];\n"
  "  static double x[32], k1[32], k2[32], k3[32], k4[32], xs[32];\n"
  "  double t, h, T, V, pi;\n  char cmd[8];\n  int i, j, n, nx, rc;\n  long s, steps;\n"
  "  FILE *in;\n"
  "  if (argc < 2 || !(in = fopen(argv[1], \"r\"))) return 2;\n"
  "  if (m->abi != EOM_MODEL_ABI || m->nq > 16 || m->nu > 16 || m->np > 64 || m->ny > 16) return 3;\n"
  "  n = m->nq; nx = 2*n;\n"
  "  for (i = 0; i < m->np; i++) p[i] = m->param_defaults[i];\n"
  "  printf(\"%d %d %d %d\", m->nq, m->nu, m->np, m->ny);\n"
  "  for (i = 0; i < m->np; i++) printf(\" %s\", m->param_names[i]);\n"
  "  printf(\"\\n\");\n"
  "  while (fscanf(in, \"%7s\", cmd) == 1) {\n"
  "    if (strcmp(cmd, \"p\") == 0) {\n"
  "      if (fscanf(in, \"%d %lf\", &i, &pi) != 2 || i < 0 || i >= m->np) return 4;\n"
  "      p[i] = pi;\n"
  "    } else if (strcmp(cmd, \"s\") == 0) {\n"
  "      if (!rd(in, &t, 1) || !rd(in, q, n) || !rd(in, qd, n) || !rd(in, qdd, n) || !rd(in, u, m->nu)) return 4;\n"
  "      rc = m->accel(t, q, qd, u, p, a);\n"
  "      m->mass(q, p, M);\n"
  "      m->forcing(t, q, qd, u, p, f);\n"
  "      m->inverse(t, q, qd, qdd, p, Q);\n"
  "      m->outputs(t, q, qd, u, p, y);\n"
  "      m->energy(q, qd, p, &T, &V);\n"
  "      printf(\"%d\", rc); vec(a, n); vec(M, n*n); vec(f, n); vec(Q, n); vec(y, m->ny);\n"
  "      printf(\" %.17g %.17g\\n\", T, V);\n"
  "    } else if (strcmp(cmd, \"r\") == 0) {\n"
  "      double hs;\n"
  "      if (!rd(in, &h, 1) || fscanf(in, \"%ld\", &steps) != 1 || !rd(in, &t, 1) || !rd(in, x, nx) || !rd(in, u, m->nu)) return 4;\n"
  "      for (s = 0; s < steps; s++) {\n"
  "        hs = h;\n"
  "        m->rhs(t, x, u, p, k1);\n"
  "        for (j = 0; j < nx; j++) xs[j] = x[j] + hs/2*k1[j];\n"
  "        m->rhs(t + hs/2, xs, u, p, k2);\n"
  "        for (j = 0; j < nx; j++) xs[j] = x[j] + hs/2*k2[j];\n"
  "        m->rhs(t + hs/2, xs, u, p, k3);\n"
  "        for (j = 0; j < nx; j++) xs[j] = x[j] + hs*k3[j];\n"
  "        m->rhs(t + hs, xs, u, p, k4);\n"
  "        for (j = 0; j < nx; j++) x[j] += hs/6*(k1[j] + 2*k2[j] + 2*k3[j] + k4[j]);\n"
  "        t += hs;\n"
  "      }\n"
  "      printf(\"0\"); vec(x, nx); printf(\"\\n\");\n"
  "    } else return 5;\n"
  "  }\n"
  "  return 0;\n}\n";

typedef struct Gen {
  char *dir, *exe;
  int nq, nu, np, ny;
  char pname[64][32];
} Gen;

/* Generate examples/NAME.eom and compile it with the driver. */
static Gen gen_example(const char *name) {
  Gen g;
  memset(&g, 0, sizeof g);
  size_t n = strlen(srcdir()) + strlen(name) + 64;
  char *model = malloc(n);
  sprintf(model, "%s/examples/%s.eom", srcdir(), name);
  g.dir = make_temp_dir();
  char *argv_gen[] = {(char *)eomc(), "gen", model, "-o", g.dir, NULL};
  RunResult r = run_argv(argv_gen);
  ck_assert_msg(r.status == 0, "eomc gen %s failed (%d):\n%s", name, r.status, r.err);
  run_free(&r);
  char *drv = write_file(g.dir, "driver.c", driver_src, strlen(driver_src));
  size_t m = strlen(g.dir) + strlen(srcdir()) + strlen(name) + 64;
  char *csrc = malloc(m), *inc = malloc(m), *dinc = malloc(m), *def = malloc(m);
  g.exe = malloc(m);
  sprintf(csrc, "%s/%s.c", g.dir, name);
  sprintf(inc, "-I%s/include", srcdir());
  sprintf(dinc, "-I%s", g.dir);
  sprintf(def, "-DMODEL=%s_model", name);
  sprintf(g.exe, "%s/driver", g.dir);
  char *argv_cc[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror",
                     inc, dinc, def, csrc, drv, "-o", g.exe, "-lm", NULL};
  r = run_argv(argv_cc);
  ck_assert_msg(r.status == 0, "the code of %s does not compile (%d):\n%s", name, r.status,
                r.err);
  run_free(&r);
  free(model), free(drv), free(csrc), free(inc), free(dinc), free(def);
  return g;
}

static void gen_free(Gen *g) {
  remove_tree(g->dir);
  free(g->dir), free(g->exe);
}

/* Run the driver on `input`; returns its output with the header parsed into g. */
static char *drive(Gen *g, const char *input) {
  char *in = write_file(g->dir, "input.txt", input, strlen(input));
  char *argv[] = {g->exe, in, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "driver failed (%d): %s", r.status, r.err);
  char *out = r.out, *s = out;
  r.out = NULL;
  run_free(&r);
  free(in);
  int used = 0;
  ck_assert_int_eq(sscanf(s, "%d %d %d %d%n", &g->nq, &g->nu, &g->np, &g->ny, &used), 4);
  s += used;
  ck_assert(g->np <= 64);
  for (int i = 0; i < g->np; i++) {
    ck_assert_int_eq(sscanf(s, " %31s%n", g->pname[i], &used), 1);
    s += used;
  }
  return out;
}

/* Index of parameter `name` (the test's numbers are tied to the names). */
static int param(const Gen *g, const char *name) {
  for (int i = 0; i < g->np; i++)
    if (strcmp(g->pname[i], name) == 0) return i;
  ck_abort_msg("no parameter %s", name);
  return -1;
}

/* The numbers of output line k (0 = the first after the header). */
static int line_numbers(const char *out, int k, double *v, int max) {
  const char *s = strchr(out, '\n');
  for (int i = 0; i < k && s; i++) s = strchr(s + 1, '\n');
  ck_assert_msg(s != NULL, "line %d missing in:\n%s", k, out);
  s++;
  int n = 0;
  char *e;
  while (n < max && *s != '\n' && *s) {
    double d = strtod(s, &e);
    if (e == s) break;
    v[n++] = d;
    s = e;
  }
  return n;
}

/* One `s` record: pointers into a buffer of numbers. */
typedef struct Rec {
  double buf[1024];
  int rc;
  double *accel, *M, *f, *Q, *y, T, V;
} Rec;

static void record(const Gen *g, const char *out, int k, Rec *r) {
  int n = g->nq, want = 1 + n + n * n + n + n + g->ny + 2;
  ck_assert_int_eq(line_numbers(out, k, r->buf, 1024), want);
  r->rc = (int)r->buf[0];
  r->accel = r->buf + 1;
  r->M = r->accel + n;
  r->f = r->M + n * n;
  r->Q = r->f + n;
  r->y = r->Q + n;
  r->T = r->y[g->ny];
  r->V = r->y[g->ny + 1];
}

/* Append printf-style text to a growing command buffer. */
typedef struct Buf {
  char *s;
  size_t len, cap;
} Buf;

static void put(Buf *b, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void put(Buf *b, const char *fmt, ...) {
  va_list ap;
  for (;;) {
    va_start(ap, fmt);
    int k = vsnprintf(b->s ? b->s + b->len : NULL, b->s ? b->cap - b->len : 0, fmt, ap);
    va_end(ap);
    ck_assert(k >= 0);
    if (b->s && b->len + (size_t)k < b->cap) {
      b->len += (size_t)k;
      return;
    }
    b->cap = 2 * (b->cap + (size_t)k + 64);
    b->s = realloc(b->s, b->cap);
    ck_assert(b->s != NULL);
  }
}

static void put_vec(Buf *b, const double *v, int n) {
  for (int i = 0; i < n; i++) put(b, " %.17g", v[i]);
}

/* Deterministic pseudo-random numbers in [lo, hi). */
static double uniform(unsigned long long *s, double lo, double hi) {
  *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
  return lo + (hi - lo) * (double)(*s >> 11) / 9007199254740992.0;
}

/* ------------------------------------------------------------------ the heavy symmetric top */

/* gimbal_top.eom: z-x-z Euler angles (ph, th, ps), mass centre l up the
** axle, moments A (transverse, about the mass centre) and C.  About the
** pivot the transverse moment is I1 = A + m l^2 (parallel axes). */
enum { TOP_PH, TOP_TH, TOP_PS };

static void set_top(Buf *b, const Gen *g, double m, double l, double A, double C, double grav) {
  put(b, "p %d %.17g\n", param(g, "m"), m);
  put(b, "p %d %.17g\n", param(g, "l"), l);
  put(b, "p %d %.17g\n", param(g, "A"), A);
  put(b, "p %d %.17g\n", param(g, "C"), C);
  put(b, "p %d %.17g\n", param(g, "g"), grav);
  put(b, "p %d 0\n", param(g, "c"));  /* no drag */
}

/* Steady precession: with th' = 0 the top keeps its tilt when
**   M g l = ph' (I3 w3 - I1 ph' cos th),  w3 = ps' + ph' cos th
** (Goldstein, Poole and Safko, Classical Mechanics, 3rd ed., 2002, §5.7;
** Thornton and Marion, Classical Dynamics of Particles and Systems, 5th ed.,
** 2004, §11.11).  Worked example (ours, solved by hand): I1 = 1, I3 = 0.5,
** M g l = 1, w3 = 10, th = 60 deg: 0.5 ph'^2 - 5 ph' + 1 = 0, so
** ph' = 5 -+ sqrt(23) = 0.204168 or 9.795832. */
static void steady_roots(double I1, double I3, double Mgl, double w3, double th, double r[2]) {
  double a = I1 * cos(th), b = -I3 * w3, c = Mgl, disc = b * b - 4 * a * c;
  ck_assert(disc > 0);
  r[0] = (-b - sqrt(disc)) / (2 * a);
  r[1] = (-b + sqrt(disc)) / (2 * a);
}

START_TEST(top_steady_precession) {
  Gen g = gen_example("gimbal_top");
  char *hdr = drive(&g, "");
  free(hdr);
  ck_assert_int_eq(g.nq, 3);
  Buf b = {0};
  /* M = 1, l = 0.1, g = 10: M g l = 1; A = I1 - M l^2 = 0.99, so I1 = 1 */
  set_top(&b, &g, 1.0, 0.1, 0.99, 0.5, 10.0);
  double roots[2], th = PI / 3, w3 = 10;
  steady_roots(1.0, 0.5, 1.0, w3, th, roots);
  ck_assert_msg(fabs(roots[0] - 0.204168) < 5e-7 && fabs(roots[1] - 9.795832) < 5e-7,
                "roots %.9g %.9g", roots[0], roots[1]);
  /* both roots, at a few precession and spin angles; then a control state
  ** 1% off the slow root, which must not be steady */
  int nrec = 0;
  for (int k = 0; k < 2; k++)
    for (int a = 0; a < 3; a++) {
      double phd = roots[k], q[3] = {0.4 + a, th, -1.1 + 0.7 * a},
             qd[3] = {phd, 0, w3 - phd * cos(th)}, zero[3] = {0, 0, 0};
      put(&b, "s 0");
      put_vec(&b, q, 3), put_vec(&b, qd, 3), put_vec(&b, zero, 3);
      put(&b, " 0\n");
      nrec++;
    }
  double phd_off = roots[0] * 1.01, q_off[3] = {0.2, th, 0.3},
         qd_off[3] = {phd_off, 0, w3 - phd_off * cos(th)};
  put(&b, "s 0");
  put_vec(&b, q_off, 3), put_vec(&b, qd_off, 3), put_vec(&b, q_off, 3);
  put(&b, " 0\n");
  /* random tilts and spins with I1 = 1.3, I3 = 0.8, M g l = 0.7 * 9.81 * 0.05 */
  unsigned long long seed = 42;
  set_top(&b, &g, 0.7, 0.05, 1.3 - 0.7 * 0.05 * 0.05, 0.8, 9.81);
  double ths[8], w3s[8], ks[8];
  for (int k = 0; k < 8; k++) {
    ths[k] = uniform(&seed, 0.2, 1.35);
    w3s[k] = uniform(&seed, 4, 30);
    ks[k] = k % 2;
    double r[2];
    steady_roots(1.3, 0.8, 0.7 * 9.81 * 0.05, w3s[k], ths[k], r);
    double phd = r[k % 2], q[3] = {uniform(&seed, -3, 3), ths[k], uniform(&seed, -3, 3)},
           qd[3] = {phd, 0, w3s[k] - phd * cos(ths[k])}, zero[3] = {0, 0, 0};
    put(&b, "s 0");
    put_vec(&b, q, 3), put_vec(&b, qd, 3), put_vec(&b, zero, 3);
    put(&b, " 0\n");
  }
  char *out = drive(&g, b.s);
  Rec r;
  for (int k = 0; k < nrec; k++) {
    record(&g, out, k, &r);
    ck_assert_int_eq(r.rc, 0);
    /* steady: no nodding, and the precession and spin rates stay */
    for (int i = 0; i < 3; i++)
      ck_assert_msg(fabs(r.accel[i]) < 1e-10, "state %d: q''[%d] = %.3g", k, i, r.accel[i]);
  }
  record(&g, out, nrec, &r);
  ck_assert_msg(fabs(r.accel[TOP_TH]) > 1e-4, "off the steady rate th'' = %.3g", r.accel[TOP_TH]);
  for (int k = 0; k < 8; k++) {
    record(&g, out, nrec + 1 + k, &r);
    ck_assert_int_eq(r.rc, 0);
    ck_assert_msg(fabs(r.accel[TOP_TH]) < 1e-10, "th = %g w3 = %g root %g: th'' = %.3g", ths[k],
                  w3s[k], ks[k], r.accel[TOP_TH]);
  }
  free(out), free(b.s);
  gen_free(&g);
}
END_TEST

/* Body-frame angular velocity of z-x-z Euler angles and its rate
** (Goldstein, Poole and Safko, 2002, §4.9, eq. 4.87). */
static void body_omega(const double *q, const double *qd, const double *qdd, double w[3],
                       double wd[3]) {
  double st = sin(q[TOP_TH]), ct = cos(q[TOP_TH]), sp = sin(q[TOP_PS]), cp = cos(q[TOP_PS]);
  double phd = qd[TOP_PH], thd = qd[TOP_TH], psd = qd[TOP_PS];
  w[0] = phd * st * sp + thd * cp;
  w[1] = phd * st * cp - thd * sp;
  w[2] = phd * ct + psd;
  if (!wd) return;
  wd[0] = qdd[TOP_PH] * st * sp + phd * (thd * ct * sp + psd * st * cp) + qdd[TOP_TH] * cp -
          thd * psd * sp;
  wd[1] = qdd[TOP_PH] * st * cp + phd * (thd * ct * cp - psd * st * sp) - qdd[TOP_TH] * sp -
          thd * psd * cp;
  wd[2] = qdd[TOP_PH] * ct - phd * thd * st + qdd[TOP_PS];
}

/* Torque-free symmetric body (gravity off): Euler's equations give
** w1' = -W w2, w2' = W w1, w3' = 0 with W = (I3 - I1)/I1 w3, so the
** angular velocity circles the symmetry axis at W in body axes (Goldstein,
** Poole and Safko, 2002, §5.6).  Checked on P_accel at random states, and
** by integrating P_rhs: after time t the body-frame (w1, w2) has turned by
** W t and w3 has not changed. */
START_TEST(torque_free_precession) {
  Gen g = gen_example("gimbal_top");
  free(drive(&g, ""));
  const double m = 0.4, l = 0.06, A = 2e-3, C = 3.1e-3, I1 = A + m * l * l, I3 = C;
  Buf b = {0};
  set_top(&b, &g, m, l, A, C, 0.0);
  unsigned long long seed = 7;
  double qs[20][3], qds[20][3];
  for (int k = 0; k < 20; k++) {
    double zero[3] = {0, 0, 0};
    qs[k][0] = uniform(&seed, -3, 3), qs[k][1] = uniform(&seed, 0.3, 2.8),
    qs[k][2] = uniform(&seed, -3, 3);
    qds[k][0] = uniform(&seed, -3, 3), qds[k][1] = uniform(&seed, -3, 3),
    qds[k][2] = uniform(&seed, -20, 20);
    put(&b, "s 0");
    put_vec(&b, qs[k], 3), put_vec(&b, qds[k], 3), put_vec(&b, zero, 3);
    put(&b, " 0\n");
  }
  /* a run: axle tilted 1 rad from the vertical, spin 6 rad/s */
  double x0[6] = {0.2, 1.0, 0.0, 0.3, 0.2, 6.0}, h = 1e-3;
  long steps = 1500;
  put(&b, "r %.17g %ld 0", h, steps);
  put_vec(&b, x0, 6);
  put(&b, " 0\n");
  char *out = drive(&g, b.s);
  Rec r;
  for (int k = 0; k < 20; k++) {
    record(&g, out, k, &r);
    ck_assert_int_eq(r.rc, 0);
    double w[3], wd[3];
    body_omega(qs[k], qds[k], r.accel, w, wd);
    double W = (I3 - I1) / I1 * w[2], scale = fmax(1.0, fabs(W) * hypot(w[0], w[1]));
    ck_assert_msg(fabs(wd[0] + W * w[1]) < 1e-10 * scale, "state %d: w1' %.17g vs %.17g", k,
                  wd[0], -W * w[1]);
    ck_assert_msg(fabs(wd[1] - W * w[0]) < 1e-10 * scale, "state %d: w2' %.17g vs %.17g", k,
                  wd[1], W * w[0]);
    ck_assert_msg(fabs(wd[2]) < 1e-10 * scale, "state %d: w3' = %.3g", k, wd[2]);
  }
  double x[7];  /* the status, then the state */
  ck_assert_int_eq(line_numbers(out, 20, x, 6 + 1), 7);
  double w0[3], w1[3];
  body_omega(x0, x0 + 3, NULL, w0, NULL);
  body_omega(x + 1, x + 4, NULL, w1, NULL);
  double W = (I3 - I1) / I1 * w0[2], turned = atan2(w1[1], w1[0]) - atan2(w0[1], w0[0]);
  /* d/dt atan2(w2, w1) = (w1 w2' - w2 w1')/(w1^2 + w2^2) = W */
  double want = W * h * (double)steps;
  turned = remainder(turned - want, 2 * PI) + want;
  ck_assert_msg(fabs(turned - want) < 1e-8, "turned %.12g, expected %.12g", turned, want);
  ck_assert_msg(fabs(w1[2] - w0[2]) < 1e-9, "w3 %.17g -> %.17g", w0[2], w1[2]);
  ck_assert_msg(fabs(hypot(w1[0], w1[1]) - hypot(w0[0], w0[1])) < 1e-9, "|w12| changed");
  free(out), free(b.s);
  gen_free(&g);
}
END_TEST

/* ------------------------------------------------------------------ the six-axis arm */

/* Recursive Newton–Euler inverse dynamics for a serial chain of revolute
** joints in standard Denavit–Hartenberg form, in link coordinates: outward
** velocities and accelerations, inward forces and moments (Luh, Walker and
** Paul, "On-line computational scheme for mechanical manipulators", ASME J.
** Dyn. Sys. Meas. Control 102, 1980; Featherstone, Rigid Body Dynamics
** Algorithms, 2008, ch. 5).  Gravity enters as an upward acceleration of the
** base.  Each link may carry several rigid parts (mass, mass centre and
** inertia about it, in link axes). */
#define ARM_N 6
#define ARM_PARTS 2

typedef struct Part {
  double m, c[3], I[3][3];
} Part;

typedef struct Arm {
  double d[ARM_N], a[ARM_N], alpha[ARM_N], b[ARM_N], grav;
  Part part[ARM_N][ARM_PARTS];  /* m = 0: unused */
} Arm;

static void cross3(const double *u, const double *v, double *w) {
  double r[3] = {u[1] * v[2] - u[2] * v[1], u[2] * v[0] - u[0] * v[2], u[0] * v[1] - u[1] * v[0]};
  memcpy(w, r, sizeof r);
}

/* R (frame i axes in frame i-1) of dh(theta, d, a, alpha) */
static void dh_rot(double th, double al, double R[3][3]) {
  double ct = cos(th), st = sin(th), ca = cos(al), sa = sin(al);
  double r[3][3] = {{ct, -st * ca, st * sa}, {st, ct * ca, -ct * sa}, {0, sa, ca}};
  memcpy(R, r, sizeof r);
}

static void mul_t(double R[3][3], const double *v, double *w) {  /* w = R^T v */
  double r[3];
  for (int i = 0; i < 3; i++) r[i] = R[0][i] * v[0] + R[1][i] * v[1] + R[2][i] * v[2];
  memcpy(w, r, sizeof r);
}

static void mul(double R[3][3], const double *v, double *w) {  /* w = R v */
  double r[3];
  for (int i = 0; i < 3; i++) r[i] = R[i][0] * v[0] + R[i][1] * v[1] + R[i][2] * v[2];
  memcpy(w, r, sizeof r);
}

static void rnea(const Arm *arm, const double *q, const double *qd, const double *qdd,
                 double *tau) {
  double R[ARM_N][3][3], w[ARM_N][3], wd[ARM_N][3], ad[ARM_N][3], ps[ARM_N][3];
  double F[ARM_N][ARM_PARTS][3], N[ARM_N][3];
  double w0[3] = {0, 0, 0}, wd0[3] = {0, 0, 0}, a0[3] = {0, 0, arm->grav};
  for (int i = 0; i < ARM_N; i++) {
    const double *wp = i ? w[i - 1] : w0, *wdp = i ? wd[i - 1] : wd0, *ap = i ? ad[i - 1] : a0;
    dh_rot(q[i], arm->alpha[i], R[i]);
    /* origin i from origin i-1, in frame i */
    ps[i][0] = arm->a[i], ps[i][1] = arm->d[i] * sin(arm->alpha[i]),
    ps[i][2] = arm->d[i] * cos(arm->alpha[i]);
    double t[3] = {wp[0], wp[1], wp[2] + qd[i]}, u[3], zq[3] = {0, 0, qd[i]};
    mul_t(R[i], t, w[i]);
    cross3(wp, zq, u);
    double s[3] = {wdp[0] + u[0], wdp[1] + u[1], wdp[2] + qdd[i] + u[2]};
    mul_t(R[i], s, wd[i]);
    double e[3], f[3], g[3];
    mul_t(R[i], ap, e);
    cross3(wd[i], ps[i], f);
    cross3(w[i], ps[i], g);
    cross3(w[i], g, g);
    for (int k = 0; k < 3; k++) ad[i][k] = e[k] + f[k] + g[k];
    N[i][0] = N[i][1] = N[i][2] = 0;
    for (int j = 0; j < ARM_PARTS; j++) {
      const Part *p = &arm->part[i][j];
      double ac[3], h[3], Iw[3], Iwd[3];
      cross3(wd[i], p->c, f);
      cross3(w[i], p->c, g);
      cross3(w[i], g, g);
      for (int k = 0; k < 3; k++) ac[k] = ad[i][k] + f[k] + g[k], F[i][j][k] = p->m * ac[k];
      for (int k = 0; k < 3; k++) {
        Iw[k] = p->I[k][0] * w[i][0] + p->I[k][1] * w[i][1] + p->I[k][2] * w[i][2];
        Iwd[k] = p->I[k][0] * wd[i][0] + p->I[k][1] * wd[i][1] + p->I[k][2] * wd[i][2];
      }
      cross3(w[i], Iw, h);
      for (int k = 0; k < 3; k++) N[i][k] += Iwd[k] + h[k];
    }
  }
  double fo[3] = {0, 0, 0}, no[3] = {0, 0, 0};  /* from link i+1, in frame i+1 */
  for (int i = ARM_N - 1; i >= 0; i--) {
    double f[3], n[3], x[3], y[3];
    if (i + 1 < ARM_N) mul(R[i + 1], fo, f), mul(R[i + 1], no, n);
    else memset(f, 0, sizeof f), memset(n, 0, sizeof n);
    /* moments about origin i-1: n_i = R n_{i+1} + p* x R f_{i+1} + sum (p* + c) x F + N */
    cross3(ps[i], f, x);
    for (int k = 0; k < 3; k++) n[k] += x[k] + N[i][k];
    for (int j = 0; j < ARM_PARTS; j++) {
      const Part *p = &arm->part[i][j];
      double pc[3] = {ps[i][0] + p->c[0], ps[i][1] + p->c[1], ps[i][2] + p->c[2]};
      cross3(pc, F[i][j], y);
      for (int k = 0; k < 3; k++) n[k] += y[k], f[k] += F[i][j][k];
    }
    memcpy(fo, f, sizeof f), memcpy(no, n, sizeof n);
    /* the joint axis z_{i-1} in frame i is the last row of R_i */
    tau[i] = n[0] * R[i][2][0] + n[1] * R[i][2][1] + n[2] * R[i][2][2] + arm->b[i] * qd[i];
  }
}

/* The numbers of examples/picking_arm6.eom: DH table, mass centres (mm),
** inertias (kg m^2, about the mass centres, link axes); the payload is a
** point mass dt along z6.  Lengths, masses, g and frictions are parameters:
** the test draws them at random and sets them in the model too. */
static const double arm_c[ARM_N][3] = {
  {-40, -110, 10}, {-330, 0, 130}, {-20, -10, 50}, {0, 160, 10}, {0, -15, 20}, {0, 0, -30}};
static const double arm_I[ARM_N][3][3] = {
  {{0.42, 0, 0.02}, {0, 0.31, 0}, {0.02, 0, 0.38}},
  {{0.09, 0, -0.03}, {0, 0.58, 0}, {-0.03, 0, 0.55}},
  {{0.09, 0, 0}, {0, 0.085, 0}, {0, 0, 0.05}},
  {{0.075, 0, 0}, {0, 0.012, 0.004}, {0, 0.004, 0.07}},
  {{0.0042, 0, 0}, {0, 0.0038, 0}, {0, 0, 0.0031}},
  {{0.0012, 0, 0}, {0, 0.0012, 0}, {0, 0, 0.0009}}};
static const char *const arm_pnames[] = {"d1", "a1", "a2", "a3", "d4", "d6", "dt", "m1",
                                         "m2", "m3", "m4", "m5", "m6", "mp", "g",  "b1",
                                         "b2", "b3", "b4", "b5", "b6"};
enum { NPARM = 21 };

static void arm_from_params(const double *v, Arm *arm) {
  memset(arm, 0, sizeof *arm);
  const double d[ARM_N] = {v[0], 0, 0, v[4], 0, v[5]}, a[ARM_N] = {v[1], v[2], v[3], 0, 0, 0},
               al[ARM_N] = {PI / 2, 0, PI / 2, -PI / 2, PI / 2, 0};
  for (int i = 0; i < ARM_N; i++) {
    arm->d[i] = d[i], arm->a[i] = a[i], arm->alpha[i] = al[i], arm->b[i] = v[15 + i];
    Part *p = &arm->part[i][0];
    p->m = v[7 + i];
    for (int k = 0; k < 3; k++) {
      p->c[k] = arm_c[i][k] * 1e-3;
      for (int j = 0; j < 3; j++) p->I[k][j] = arm_I[i][k][j];
    }
  }
  Part *pay = &arm->part[ARM_N - 1][1];
  pay->m = v[13];
  pay->c[2] = v[6];
  arm->grav = v[14];
}

/* Cholesky of the n x n matrix A (row-major); 0 if not positive definite. */
static int cholesky_ok(const double *A, int n) {
  double L[256];
  ck_assert(n * n <= 256);
  for (int j = 0; j < n; j++) {
    double s = A[j * n + j];
    for (int k = 0; k < j; k++) s -= L[j * n + k] * L[j * n + k];
    if (!(s > 0)) return 0;
    L[j * n + j] = sqrt(s);
    for (int i = j + 1; i < n; i++) {
      double t = A[i * n + j];
      for (int k = 0; k < j; k++) t -= L[i * n + k] * L[j * n + k];
      L[i * n + j] = t / L[j * n + j];
    }
  }
  return 1;
}

static double norm_inf(const double *v, int n) {
  double m = 0;
  for (int i = 0; i < n; i++) m = fmax(m, fabs(v[i]));
  return m;
}

/* P_inverse of picking_arm6 against the recursive Newton–Euler algorithm at
** 100 random states and parameter sets; M against the same algorithm's
** columns (q' = 0, g = 0, friction off, q'' = e_j: the composite-rigid-body
** identity, Featherstone 2008, §6.1), symmetric and positive definite
** (Cholesky); P_accel's q'' fed back through the reference gives back the
** applied torques. */
START_TEST(arm6_against_newton_euler) {
  Gen g = gen_example("picking_arm6");
  free(drive(&g, ""));
  ck_assert_int_eq(g.nq, ARM_N);
  ck_assert_int_eq(g.nu, ARM_N);
  ck_assert_int_eq(g.np, NPARM);
  for (int i = 0; i < NPARM; i++) ck_assert_str_eq(g.pname[i], arm_pnames[i]);
  enum { STATES = 100 };
  static double pv[STATES][NPARM], q[STATES][ARM_N], qd[STATES][ARM_N], qdd[STATES][ARM_N],
      u[STATES][ARM_N];
  static const double nominal[NPARM] = {0.445, 0.075, 0.62, 0.095, 0.54, 0.085, 0.14,
                                        16.5,  12.8,  7.4,  3.6,   1.3,  0.55,  2.0,
                                        9.81,  3.2,   4.1,  2.3,   0.7,  0.5,   0.2};
  unsigned long long seed = 2026;
  Buf b = {0};
  for (int s = 0; s < STATES; s++) {
    for (int k = 0; k < NPARM; k++) {
      pv[s][k] = nominal[k] * (s == 0 ? 1.0 : uniform(&seed, 0.5, 1.5));
      put(&b, "p %d %.17g\n", k, pv[s][k]);
    }
    for (int i = 0; i < ARM_N; i++) {
      q[s][i] = uniform(&seed, -PI, PI);
      qd[s][i] = uniform(&seed, -2.5, 2.5);
      qdd[s][i] = uniform(&seed, -6, 6);
      u[s][i] = uniform(&seed, -40, 40);
    }
    put(&b, "s %.17g", uniform(&seed, 0, 10));
    put_vec(&b, q[s], ARM_N), put_vec(&b, qd[s], ARM_N), put_vec(&b, qdd[s], ARM_N),
        put_vec(&b, u[s], ARM_N);
    put(&b, "\n");
  }
  char *out = drive(&g, b.s);
  static Rec r;
  double worst_inv = 0, worst_M = 0, worst_acc = 0;
  for (int s = 0; s < STATES; s++) {
    record(&g, out, s, &r);
    Arm arm;
    arm_from_params(pv[s], &arm);
    double tau[ARM_N];
    rnea(&arm, q[s], qd[s], qdd[s], tau);
    double diff[ARM_N];
    for (int i = 0; i < ARM_N; i++) diff[i] = r.Q[i] - tau[i];
    double rel = norm_inf(diff, ARM_N) / norm_inf(tau, ARM_N);
    worst_inv = fmax(worst_inv, rel);
    ck_assert_msg(rel < 1e-10, "state %d: P_inverse off by %.3g (relative)", s, rel);

    /* M column by column from the reference */
    Arm bare = arm;
    bare.grav = 0;
    memset(bare.b, 0, sizeof bare.b);
    double zero[ARM_N] = {0}, Mref[ARM_N * ARM_N];
    for (int j = 0; j < ARM_N; j++) {
      double e[ARM_N] = {0}, col[ARM_N];
      e[j] = 1;
      rnea(&bare, q[s], zero, e, col);
      for (int i = 0; i < ARM_N; i++) Mref[i * ARM_N + j] = col[i];
    }
    double Md[ARM_N * ARM_N];
    for (int k = 0; k < ARM_N * ARM_N; k++) Md[k] = r.M[k] - Mref[k];
    rel = norm_inf(Md, ARM_N * ARM_N) / norm_inf(Mref, ARM_N * ARM_N);
    worst_M = fmax(worst_M, rel);
    ck_assert_msg(rel < 1e-10, "state %d: M off by %.3g (relative)", s, rel);
    for (int i = 0; i < ARM_N; i++)
      for (int j = 0; j < i; j++)
        ck_assert_msg(r.M[i * ARM_N + j] == r.M[j * ARM_N + i], "state %d: M not symmetric", s);
    ck_assert_msg(cholesky_ok(r.M, ARM_N), "state %d: M is not positive definite", s);

    /* forward dynamics: the reference needs u to produce P_accel's q'' */
    ck_assert_int_eq(r.rc, 0);
    rnea(&arm, q[s], qd[s], r.accel, tau);
    for (int i = 0; i < ARM_N; i++) diff[i] = tau[i] - u[s][i];
    rel = norm_inf(diff, ARM_N) / norm_inf(u[s], ARM_N);
    worst_acc = fmax(worst_acc, rel);
    ck_assert_msg(rel < 1e-9, "state %d: P_accel's q'' needs torques off by %.3g", s, rel);
  }
  fprintf(stderr, "arm6: worst relative error inverse %.2g, M %.2g, accel %.2g\n", worst_inv,
          worst_M, worst_acc);
  free(out), free(b.s);
  gen_free(&g);
}
END_TEST

/* The tool-tip outputs and the tool frame (position and rotation) against
** the product of the DH transforms, and the potential energy against
** -sum m g.z (common practice). */
START_TEST(arm6_tip_and_potential) {
  Gen g = gen_example("picking_arm6");
  free(drive(&g, ""));
  static const double pv[NPARM] = {0.445, 0.075, 0.62, 0.095, 0.54, 0.085, 0.14,
                                   16.5,  12.8,  7.4,  3.6,   1.3,  0.55,  2.0,
                                   9.81,  3.2,   4.1,  2.3,   0.7,  0.5,   0.2};
  Arm arm;
  arm_from_params(pv, &arm);
  unsigned long long seed = 99;
  double q[10][ARM_N], zero[ARM_N] = {0};
  Buf b = {0};
  for (int s = 0; s < 10; s++) {
    for (int i = 0; i < ARM_N; i++) q[s][i] = uniform(&seed, -PI, PI);
    put(&b, "s 0");
    put_vec(&b, q[s], ARM_N), put_vec(&b, zero, ARM_N), put_vec(&b, zero, ARM_N),
        put_vec(&b, zero, ARM_N);
    put(&b, "\n");
  }
  char *out = drive(&g, b.s);
  ck_assert_int_eq(g.ny, 3 + 12);  /* tip_x, tip_y, tip_z, frame tool */
  Rec r;
  for (int s = 0; s < 10; s++) {
    record(&g, out, s, &r);
    double Rw[3][3] = {{1, 0, 0}, {0, 1, 0}, {0, 0, 1}}, o[3] = {0, 0, 0}, V = 0;
    for (int i = 0; i < ARM_N; i++) {
      double Ri[3][3], pi[3] = {arm.a[i] * cos(q[s][i]), arm.a[i] * sin(q[s][i]), arm.d[i]},
                       t[3], Rn[3][3];
      dh_rot(q[s][i], arm.alpha[i], Ri);
      mul(Rw, pi, t);
      for (int k = 0; k < 3; k++) o[k] += t[k];
      for (int r1 = 0; r1 < 3; r1++)
        for (int c1 = 0; c1 < 3; c1++)
          Rn[r1][c1] = Rw[r1][0] * Ri[0][c1] + Rw[r1][1] * Ri[1][c1] + Rw[r1][2] * Ri[2][c1];
      memcpy(Rw, Rn, sizeof Rn);
      for (int j = 0; j < ARM_PARTS; j++) {
        mul(Rw, arm.part[i][j].c, t);
        V += arm.part[i][j].m * arm.grav * (o[2] + t[2]);
      }
    }
    double tool[3] = {0, 0, pv[6]}, t[3];
    mul(Rw, tool, t);
    for (int k = 0; k < 3; k++)
      ck_assert_msg(fabs(r.y[k] - (o[k] + t[k])) < 1e-12 && fabs(r.y[3 + k] - (o[k] + t[k])) < 1e-12,
                    "state %d tip[%d] %.17g, frame %.17g vs %.17g", s, k, r.y[k], r.y[3 + k],
                    o[k] + t[k]);
    for (int k = 0; k < 9; k++)  /* the tool frame's axes are the flange's */
      ck_assert_msg(fabs(r.y[6 + k] - Rw[k / 3][k % 3]) < 1e-13, "state %d tool R[%d] %.17g vs %.17g",
                    s, k, r.y[6 + k], Rw[k / 3][k % 3]);
    ck_assert_msg(fabs(r.V - V) < 1e-11 * fmax(1, fabs(V)), "V %.17g vs %.17g", r.V, V);
    ck_assert_msg(r.T == 0, "T at rest = %g", r.T);
  }
  free(out), free(b.s);
  gen_free(&g);
}
END_TEST

/* ------------------------------------------------------------------ body and kinetic forms */

/* arm2_body.eom and arm2_scalar.eom describe one arm: the same M and f
** (to 1e-12) at random states, parameters and inputs, and the same T and V.
** The closed form of the planar two-link arm (Spong, Hutchinson and
** Vidyasagar, Robot Modeling and Control, 2006, §7.4.1, from memory) is
** checked too: M11 = m1 c1^2 + m2 (l1^2 + c2^2 + 2 l1 c2 cos q2) + J1 + J2,
** M12 = m2 (c2^2 + l1 c2 cos q2) + J2, M22 = m2 c2^2 + J2. */
START_TEST(arm2_body_equals_scalar) {
  Gen gb = gen_example("arm2_body"), gs = gen_example("arm2_scalar");
  free(drive(&gb, "")), free(drive(&gs, ""));
  ck_assert_int_eq(gb.np, gs.np);
  for (int i = 0; i < gb.np; i++) ck_assert_str_eq(gb.pname[i], gs.pname[i]);
  unsigned long long seed = 5;
  Buf b = {0};
  double pv[30][10], q[30][2];
  for (int s = 0; s < 30; s++) {
    static const double nominal[10] = {2.4, 1.5, 0.38, 0.17, 0.21, 0.031, 0.022, 9.81, 0.08, 0.05};
    for (int k = 0; k < 10; k++) {
      pv[s][k] = nominal[k] * uniform(&seed, 0.5, 1.5);
      put(&b, "p %d %.17g\n", k, pv[s][k]);
    }
    double qd[2], qdd[2], u[2];
    for (int i = 0; i < 2; i++) {
      q[s][i] = uniform(&seed, -PI, PI);
      qd[i] = uniform(&seed, -4, 4), qdd[i] = uniform(&seed, -8, 8), u[i] = uniform(&seed, -5, 5);
    }
    put(&b, "s 0");
    put_vec(&b, q[s], 2), put_vec(&b, qd, 2), put_vec(&b, qdd, 2), put_vec(&b, u, 2);
    put(&b, "\n");
  }
  ck_assert_int_eq(gb.np, 10);
  char *ob = drive(&gb, b.s), *os = drive(&gs, b.s);
  static Rec rb, rs;
  for (int s = 0; s < 30; s++) {
    record(&gb, ob, s, &rb);
    record(&gs, os, s, &rs);
    for (int k = 0; k < 4; k++)
      ck_assert_msg(fabs(rb.M[k] - rs.M[k]) < 1e-12 * fmax(1, fabs(rs.M[k])),
                    "state %d M[%d] %.17g vs %.17g", s, k, rb.M[k], rs.M[k]);
    for (int k = 0; k < 2; k++) {
      ck_assert_msg(fabs(rb.f[k] - rs.f[k]) < 1e-12 * fmax(1, fabs(rs.f[k])),
                    "state %d f[%d] %.17g vs %.17g", s, k, rb.f[k], rs.f[k]);
      ck_assert_msg(fabs(rb.Q[k] - rs.Q[k]) < 1e-12 * fmax(1, fabs(rs.Q[k])), "Q[%d]", k);
      ck_assert_msg(fabs(rb.y[k] - rs.y[k]) < 1e-12, "y[%d]", k);
    }
    ck_assert(fabs(rb.T - rs.T) < 1e-12 * fmax(1, fabs(rs.T)));
    ck_assert(fabs(rb.V - rs.V) < 1e-12 * fmax(1, fabs(rs.V)));
    const double *p = pv[s];
    double m1 = p[0], m2 = p[1], l1 = p[2], c1 = p[3], c2 = p[4], J1 = p[5], J2 = p[6],
           c = cos(q[s][1]);
    double M11 = m1 * c1 * c1 + m2 * (l1 * l1 + c2 * c2 + 2 * l1 * c2 * c) + J1 + J2,
           M12 = m2 * (c2 * c2 + l1 * c2 * c) + J2, M22 = m2 * c2 * c2 + J2;
    ck_assert(fabs(rb.M[0] - M11) < 1e-12 && fabs(rb.M[1] - M12) < 1e-12 &&
              fabs(rb.M[2] - M12) < 1e-12 && fabs(rb.M[3] - M22) < 1e-12);
  }
  free(ob), free(os), free(b.s);
  gen_free(&gb), gen_free(&gs);
}
END_TEST

/* ------------------------------------------------------------------ a prismatic joint */

/* telescoping_feeder.eom: a turntable and a slide on one DH chain (a
** revolute joint, then a prismatic one whose coordinate is the d of its
** step).  In the horizontal plane it is the polar (RP) arm, whose equations
** are a textbook closed form (Spong, Hutchinson and Vidyasagar, Robot
** Modeling and Control, 2006, ch. 7, the polar/RP examples; from memory):
**   M = diag(Jt + Ja + m (r + c)^2, m),
**   f = (tau - bt th' - 2 m (r + c) r' th',  F - br r' + m (r + c) th'^2),
** gravity vertical and doing no work; the arm tip at reach L beyond the
** slide position is (-(r + L) sin th, (r + L) cos th). */
START_TEST(feeder_polar_closed_form) {
  Gen g = gen_example("telescoping_feeder");
  free(drive(&g, ""));
  ck_assert_int_eq(g.nq, 2);
  ck_assert_int_eq(g.nu, 2);
  ck_assert_int_eq(g.ny, 2);
  const char *names[] = {"Jt", "m", "c", "Ja", "bt", "br", "g", "h"};
  const double nominal[] = {0.65, 4.2, 0.18, 0.09, 0.4, 12, 9.81, 0.3};
  unsigned long long seed = 11;
  Buf b = {0};
  double pv[25][8], x[25][8];  /* th r th' r' th'' r'' tau F */
  for (int s = 0; s < 25; s++) {
    for (int k = 0; k < 8; k++) {
      pv[s][k] = nominal[k] * uniform(&seed, 0.5, 1.5);
      put(&b, "p %d %.17g\n", param(&g, names[k]), pv[s][k]);
    }
    x[s][0] = uniform(&seed, -PI, PI), x[s][1] = uniform(&seed, -0.1, 0.6);
    for (int k = 2; k < 8; k++) x[s][k] = uniform(&seed, -3, 3);
    put(&b, "s 0.5");
    put_vec(&b, x[s], 8);
    put(&b, "\n");
  }
  char *out = drive(&g, b.s);
  static Rec rec;
  for (int s = 0; s < 25; s++) {
    record(&g, out, s, &rec);
    const double *p = pv[s], *v = x[s];
    double Jt = p[0], m = p[1], c = p[2], Ja = p[3], bt = p[4], br = p[5];
    double th = v[0], r = v[1], thd = v[2], rd = v[3], thdd = v[4], rdd = v[5], tau = v[6], F = v[7];
    double M11 = Jt + Ja + m * (r + c) * (r + c), M22 = m;
    double f1 = tau - bt * thd - 2 * m * (r + c) * rd * thd, f2 = F - br * rd + m * (r + c) * thd * thd;
    double want_M[4] = {M11, 0, 0, M22}, want_f[2] = {f1, f2};
    /* P_inverse: the generalized forces for the given q'' with the inputs at 0 */
    double want_Q[2] = {M11 * thdd - (f1 - tau), M22 * rdd - (f2 - F)};
    for (int k = 0; k < 4; k++)
      ck_assert_msg(fabs(rec.M[k] - want_M[k]) < 1e-12 * fmax(1, fabs(want_M[k])),
                    "state %d: M[%d] = %.17g, want %.17g", s, k, rec.M[k], want_M[k]);
    for (int k = 0; k < 2; k++) {
      ck_assert_msg(fabs(rec.f[k] - want_f[k]) < 1e-12 * fmax(1, fabs(want_f[k])),
                    "state %d: f[%d] = %.17g, want %.17g", s, k, rec.f[k], want_f[k]);
      ck_assert_msg(fabs(rec.Q[k] - want_Q[k]) < 1e-12 * fmax(1, fabs(want_Q[k])),
                    "state %d: Q[%d] = %.17g, want %.17g", s, k, rec.Q[k], want_Q[k]);
    }
    ck_assert_msg(fabs(rec.accel[0] - f1 / M11) < 1e-12 * fmax(1, fabs(f1 / M11)), "state %d th''", s);
    ck_assert_msg(fabs(rec.accel[1] - f2 / M22) < 1e-12 * fmax(1, fabs(f2 / M22)), "state %d r''", s);
    double L = 0.45;
    ck_assert(fabs(rec.y[0] + (r + L) * sin(th)) < 1e-13 && fabs(rec.y[1] - (r + L) * cos(th)) < 1e-13);
  }
  free(out), free(b.s);
  gen_free(&g);
}
END_TEST

static Suite *bodies_suite(void) {
  Suite *s = suite_create("bodies");
  TCase *tc = tcase_create("bodies");
  tcase_set_timeout(tc, 300);
  tcase_add_test(tc, top_steady_precession);
  tcase_add_test(tc, torque_free_precession);
  tcase_add_test(tc, arm6_against_newton_euler);
  tcase_add_test(tc, arm6_tip_and_potential);
  tcase_add_test(tc, arm2_body_equals_scalar);
  tcase_add_test(tc, feeder_polar_closed_form);
  suite_add_tcase(s, tc);
  return s;
}

int main(void) {
  SRunner *sr = srunner_create(bodies_suite());
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
