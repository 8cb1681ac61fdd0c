/*
** test_emit.c — the C back end on hand-built equations, compiled and run.
**
** The symbolic core is bypassed: each test builds an IrGraph by hand for a
** system whose equations of motion are known in closed form, emits P.h/P.c,
** compiles them with a small driver under -std=c99 -pedantic -Wall -Wextra
** -Werror, runs the driver and compares its numbers with the same closed
** form written directly in C here.  This checks the emitter alone: CSE,
** power and sign printing, the unrolled LDLᵀ, the Jacobian assembly, the
** descriptor and the escaping of model strings.
*/
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include "emit/emit_c.h"
#include "emit/hash.h"
#include "testutil.h"

/* ------------------------------------------------------------------ a tiny IR builder */

typedef struct B {
  IrGraph g;
  int cap;
  int args[4096];
  int nargs;
} B;

static int b_node(B *b, IrOp op, int nargs, const int *args) {
  if (b->g.nnodes == b->cap) {
    b->cap = b->cap ? 2 * b->cap : 64;
    b->g.nodes = realloc(b->g.nodes, (size_t)b->cap * sizeof *b->g.nodes);
  }
  IrNode *x = &b->g.nodes[b->g.nnodes];
  memset(x, 0, sizeof *x);
  x->op = op;
  x->nargs = nargs;
  x->args = b->args + b->nargs;
  ck_assert_int_lt(b->nargs + nargs, 4096);
  for (int i = 0; i < nargs; i++) {
    ck_assert_int_lt(args[i], b->g.nnodes);
    b->args[b->nargs++] = args[i];
  }
  return b->g.nnodes++;
}
static int num(B *b, double v) {
  int n = b_node(b, IR_NUM, 0, NULL);
  b->g.nodes[n].num = v;
  return n;
}
static int var(B *b, IrVar v, int i) {
  int n = b_node(b, IR_VAR, 0, NULL);
  b->g.nodes[n].var = v;
  b->g.nodes[n].index = i;
  return n;
}
static int add2(B *b, int x, int y) { int a[] = {x, y}; return b_node(b, IR_ADD, 2, a); }
static int add3(B *b, int x, int y, int z) { int a[] = {x, y, z}; return b_node(b, IR_ADD, 3, a); }
static int mul2(B *b, int x, int y) { int a[] = {x, y}; return b_node(b, IR_MUL, 2, a); }
static int mul3(B *b, int x, int y, int z) { int a[] = {x, y, z}; return b_node(b, IR_MUL, 3, a); }
static int neg(B *b, int x) { return b_node(b, IR_NEG, 1, &x); }
static int powr(B *b, int x, double e) { int a[] = {x, num(b, e)}; return b_node(b, IR_POW, 2, a); }
static int call(B *b, IrFn fn, int x) {
  int n = b_node(b, IR_CALL, 1, &x);
  b->g.nodes[n].fn = fn;
  return n;
}

/* ------------------------------------------------------------------ model scaffolding */

typedef struct Fixture {
  B b;
  EomSystem s;
  Model m;
  Decl decls[16];
  Decl *coords[4], *params[8], *inputs[4], *outputs[4];
  double q0[4], qd0[4];
  int zero;
} Fixture;

static Decl *decl(Fixture *f, int k, DeclKind kind, const char *name, double v, const char *desc) {
  Decl *d = &f->decls[k];
  memset(d, 0, sizeof *d);
  d->kind = kind;
  d->name = name;
  d->number = v;
  d->desc = desc;
  d->shape.rows = d->shape.cols = 1;  /* scalars, as the checker would find them */
  return d;
}

static int *ints(int n) {
  int *p = calloc((size_t)n + 1, sizeof *p);
  ck_assert_ptr_nonnull(p);
  return p;
}

static void fixture_alloc(Fixture *f, int nq, int nu, int np, int ny) {
  f->zero = num(&f->b, 0.0);
  f->s.nq = nq, f->s.nv = nq, f->s.nu = nu, f->s.np = np, f->s.ny = ny;
  f->s.mass = ints(nq * nq);
  f->s.forcing = ints(nq);
  f->s.dmass_dq = ints(nq * nq * nq);
  f->s.dforcing_dq = ints(nq * nq);
  f->s.dforcing_dqd = ints(nq * nq);
  f->s.dforcing_du = ints(nq * nu);
  f->s.inverse = ints(nq);
  f->s.outputs = ints(ny);
  f->m.coords = f->coords, f->m.ncoords = nq;
  f->m.params = f->params, f->m.nparams = np;
  f->m.inputs = f->inputs, f->m.ninputs = nu;
  f->m.outputs = f->outputs, f->m.noutputs = ny, f->m.ny = ny;
  f->m.q0 = f->q0, f->m.qd0 = f->qd0;
  /* every root starts as a structural zero */
  int *all[] = {f->s.mass, f->s.forcing, f->s.dmass_dq, f->s.dforcing_dq, f->s.dforcing_dqd,
                f->s.dforcing_du, f->s.inverse, f->s.outputs};
  int len[] = {nq * nq, nq, nq * nq * nq, nq * nq, nq * nq, nq * nu, nq, ny};
  for (int k = 0; k < 8; k++)
    for (int i = 0; i < len[k]; i++) all[k][i] = f->zero;
  f->s.energy_T = f->s.energy_V = f->zero;
}

static void fixture_free(Fixture *f) {
  free(f->b.g.nodes);
  free(f->s.mass); free(f->s.forcing); free(f->s.dmass_dq); free(f->s.dforcing_dq);
  free(f->s.dforcing_dqd); free(f->s.dforcing_du); free(f->s.inverse); free(f->s.outputs);
  free(f->s.constraint); free(f->s.constraint_jacobian); free(f->s.constraint_gamma);
  free(f->s.constraint_dt);
}

/* Mass–spring–damper with a force input:  m x'' = -k x - c x' + F. */
static void build_oscillator(Fixture *f, const char *name, const char *desc) {
  B *b = &f->b;
  memset(f, 0, sizeof *f);
  fixture_alloc(f, 1, 1, 3, 1);
  f->m.name = name;
  f->coords[0] = decl(f, 0, DECL_COORD, "x", 0, desc);
  f->params[0] = decl(f, 1, DECL_PARAM, "m", 2.0, "mass");
  f->params[1] = decl(f, 2, DECL_PARAM, "k", 50.0, NULL);
  f->params[2] = decl(f, 3, DECL_PARAM, "c", 0.5, NULL);
  f->inputs[0] = decl(f, 4, DECL_INPUT, "F", 0, NULL);
  f->outputs[0] = decl(f, 5, DECL_OUTPUT, "spring_force", 0, NULL);
  f->q0[0] = 0.1;
  int x = var(b, IRV_Q, 0), xd = var(b, IRV_QD, 0), xdd = var(b, IRV_QDD, 0), F = var(b, IRV_U, 0);
  int m = var(b, IRV_P, 0), k = var(b, IRV_P, 1), c = var(b, IRV_P, 2);
  int kx = mul2(b, k, x), cxd = mul2(b, c, xd);
  f->s.mass[0] = m;
  f->s.forcing[0] = add3(b, neg(b, kx), mul2(b, num(b, -1), cxd), F);
  f->s.dforcing_dq[0] = neg(b, k);
  f->s.dforcing_dqd[0] = neg(b, c);
  f->s.dforcing_du[0] = num(b, 1.0);
  f->s.inverse[0] = add3(b, mul2(b, m, xdd), kx, cxd);
  f->s.energy_T = mul3(b, num(b, 0.5), m, powr(b, xd, 2));
  f->s.energy_V = mul3(b, num(b, 0.5), k, powr(b, x, 2));
  f->s.outputs[0] = neg(b, kx);
  f->s.g = b->g;
}

/* Double pendulum with point masses and a torque u on the first joint
** (closed form: Taylor, Classical Mechanics, 2005, ch. 11 — from memory):
**   M = [(m1+m2) l1^2, m2 l1 l2 cos d; m2 l1 l2 cos d, m2 l2^2],  d = q1 - q2
**   f1 = -m2 l1 l2 q2'^2 sin d - (m1+m2) g l1 sin q1 + u
**   f2 =  m2 l1 l2 q1'^2 sin d - m2 g l2 sin q2                            */
static void build_double_pendulum(Fixture *f) {
  B *b = &f->b;
  memset(f, 0, sizeof *f);
  fixture_alloc(f, 2, 1, 5, 0);
  f->m.name = "dp";
  f->coords[0] = decl(f, 0, DECL_COORD, "q1", 0, NULL);
  f->coords[1] = decl(f, 1, DECL_COORD, "q2", 0, NULL);
  const char *pn[] = {"m1", "m2", "l1", "l2", "g"};
  double pv[] = {1.5, 0.7, 1.1, 0.8, 9.81};
  for (int i = 0; i < 5; i++) f->params[i] = decl(f, 2 + i, DECL_PARAM, pn[i], pv[i], NULL);
  f->inputs[0] = decl(f, 8, DECL_INPUT, "u", 0, NULL);
  int q1 = var(b, IRV_Q, 0), q2 = var(b, IRV_Q, 1), w1 = var(b, IRV_QD, 0), w2 = var(b, IRV_QD, 1);
  int m1 = var(b, IRV_P, 0), m2 = var(b, IRV_P, 1), l1 = var(b, IRV_P, 2), l2 = var(b, IRV_P, 3),
      g = var(b, IRV_P, 4), u = var(b, IRV_U, 0);
  int d = add2(b, q1, neg(b, q2));
  int sd = call(b, IRF_SIN, d), cd = call(b, IRF_COS, d);
  int msum = add2(b, m1, m2);
  int k = mul3(b, m2, l1, l2);                          /* m2 l1 l2 */
  int a11 = mul2(b, msum, powr(b, l1, 2)), a22 = mul2(b, m2, powr(b, l2, 2));
  f->s.mass[0] = a11;
  f->s.mass[1] = f->s.mass[2] = mul2(b, k, cd);
  f->s.mass[3] = a22;
  int w1s = powr(b, w1, 2), w2s = powr(b, w2, 2);
  int grav1 = mul3(b, msum, mul2(b, g, l1), call(b, IRF_SIN, q1));
  int grav2 = mul3(b, m2, mul2(b, g, l2), call(b, IRF_SIN, q2));
  f->s.forcing[0] = add3(b, neg(b, mul3(b, k, w2s, sd)), neg(b, grav1), u);
  f->s.forcing[1] = add2(b, mul3(b, k, w1s, sd), mul2(b, num(b, -1), grav2));
  /* dM/dq1 = [0, -k sin d; ., 0], dM/dq2 = -dM/dq1 */
  int ksd = mul2(b, k, sd);
  f->s.dmass_dq[0 * 4 + 1] = f->s.dmass_dq[0 * 4 + 2] = neg(b, ksd);
  f->s.dmass_dq[1 * 4 + 1] = f->s.dmass_dq[1 * 4 + 2] = ksd;
  int kcd = mul2(b, k, cd);
  int gc1 = mul3(b, msum, mul2(b, g, l1), call(b, IRF_COS, q1));
  int gc2 = mul3(b, m2, mul2(b, g, l2), call(b, IRF_COS, q2));
  f->s.dforcing_dq[0] = add2(b, neg(b, mul2(b, kcd, w2s)), neg(b, gc1));
  f->s.dforcing_dq[1] = mul2(b, kcd, w2s);
  f->s.dforcing_dq[2] = mul2(b, kcd, w1s);
  f->s.dforcing_dq[3] = add2(b, neg(b, mul2(b, kcd, w1s)), neg(b, gc2));
  f->s.dforcing_dqd[1] = mul3(b, num(b, -2), ksd, w2);
  f->s.dforcing_dqd[2] = mul3(b, num(b, 2), ksd, w1);
  f->s.dforcing_du[0] = num(b, 1.0);
  /* inverse: M qdd - f(u = 0) */
  int a1 = var(b, IRV_QDD, 0), a2 = var(b, IRV_QDD, 1);
  f->s.inverse[0] = add3(b, add2(b, mul2(b, a11, a1), mul3(b, k, cd, a2)), mul3(b, k, w2s, sd), grav1);
  f->s.inverse[1] = add3(b, add2(b, mul3(b, k, cd, a1), mul2(b, a22, a2)),
                         neg(b, mul3(b, k, w1s, sd)), grav2);
  /* T = 1/2 (m1+m2) l1^2 q1'^2 + 1/2 m2 l2^2 q2'^2 + k q1' q2' cos d,  V = -(m1+m2) g l1 cos q1 - m2 g l2 cos q2 */
  f->s.energy_T = add3(b, mul3(b, num(b, 0.5), a11, w1s), mul3(b, num(b, 0.5), a22, w2s),
                       mul3(b, kcd, w1, w2));
  f->s.energy_V = add2(b, neg(b, mul3(b, msum, mul2(b, g, l1), call(b, IRF_COS, q1))),
                       neg(b, mul3(b, m2, mul2(b, g, l2), call(b, IRF_COS, q2))));
  f->s.g = b->g;
}

/* ------------------------------------------------------------------ compile and run */


/* Emit f into a fresh directory, compile it with driver, run it; returns stdout. */
static char *compile_and_run(Fixture *f, const char *prefix, int no_cse, const char *driver,
                             const char *compiler) {
  char err[512], exe[1024], inc[1024];
  char *dir = make_temp_dir();
  EmitOptions o = {prefix, "0123456789abcdef", no_cse};
  ck_assert_msg(emit_c_to_dir(&f->m, &f->s, &o, dir, err, sizeof err) == 0, "emit: %s", err);
  const char *P = prefix ? prefix : f->m.name;
  char cname[256];
  snprintf(cname, sizeof cname, "%s.c", P);
  char *cpath = malloc(strlen(dir) + strlen(cname) + 2);
  sprintf(cpath, "%s/%s", dir, cname);
  char *drv = write_file(dir, "driver.c", driver, strlen(driver));
  snprintf(exe, sizeof exe, "%s/driver", dir);
  snprintf(inc, sizeof inc, "-I%s/include", env_or("SRCDIR", SRCDIR));
  char dinc[1100];
  snprintf(dinc, sizeof dinc, "-I%s", dir);
  char *argv[] = {(char *)compiler, "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror",
                  inc, dinc, cpath, drv, "-o", exe, "-lm", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "compile failed (%d):\n%s", r.status, r.err);
  run_free(&r);
  char *rargv[] = {exe, NULL};
  r = run_argv(rargv);
  ck_assert_msg(r.status == 0, "driver failed (%d): %s", r.status, r.err);
  char *out = r.out;
  r.out = NULL;
  run_free(&r);
  free(cpath);
  free(drv);
  if (getenv("EOMC_KEEP_TEST_DIRS")) fprintf(stderr, "kept %s\n", dir);   /* for debugging */
  else remove_tree(dir);
  free(dir);
  return out;
}

/* Mass–spring–damper: M = m, f = -k x - c x' + F (common practice). */
static const char oscillator_driver[] =
  "#include <stdio.h>\n#include <math.h>\n#include <eom/model.h>\n#include \"osc.h\"\n"
  "int main(void) {\n"
  "  double p[osc_NP], x[2], xd[2], u[1] = {0.25}, M[1], f[1], a[1], Q[1], T, V, y[1], A[4], B[2];\n"
  "  osc_default_params(p); osc_initial_state(x); x[1] = -0.3;\n"
  "  osc_mass(x, p, M); osc_forcing(0.0, x, x + 1, u, p, f);\n"
  "  if (osc_accel(0.0, x, x + 1, u, p, a)) return 1;\n"
  "  osc_rhs(0.0, x, u, p, xd); osc_inverse(0.0, x, x + 1, a, p, Q);\n"
  "  osc_energy(x, x + 1, p, &T, &V); osc_outputs(0.0, x, x + 1, u, p, y);\n"
  "  osc_jacobian(0.0, x, u, p, A, B);\n"
  "  printf(\"%.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g\\n\", M[0], f[0], a[0], xd[0], xd[1], Q[0], T, V);\n"
  "  printf(\"%.17g %.17g %.17g %.17g %.17g %.17g %.17g\\n\", y[0], A[0], A[1], A[2], A[3], B[0], B[1]);\n"
  "  printf(\"%d %d %s %s %g\\n\", osc_model.nq, osc_model.np, osc_model.name, osc_model.param_names[1], osc_model.param_defaults[1]);\n"
  "  p[0] = -1.0; printf(\"%d\\n\", osc_accel(0.0, x, x + 1, u, p, a));\n"
  "  osc_rhs(0.0, x, u, p, xd); printf(\"%d\\n\", isnan(xd[1]) != 0);\n"
  "  return 0;\n}\n";

START_TEST(test_oscillator) {
  Fixture f;
  build_oscillator(&f, "osc", "position */ of the \"cart\" \\ ?\?/\nnext line \xc3\xa9");
  for (int no_cse = 0; no_cse <= 1; no_cse++) {
    char *out = compile_and_run(&f, NULL, no_cse, oscillator_driver, cc());
    double v[15];
    int n = sscanf(out, "%lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %lf", &v[0], &v[1],
                   &v[2], &v[3], &v[4], &v[5], &v[6], &v[7], &v[8], &v[9], &v[10], &v[11], &v[12],
                   &v[13], &v[14]);
    ck_assert_int_eq(n, 15);
    double m = 2, k = 50, c = 0.5, x = 0.1, xd = -0.3, F = 0.25;
    double f0 = -k * x - c * xd + F, a = f0 / m;
    ck_assert_double_eq_tol(v[0], m, 1e-15);
    ck_assert_double_eq_tol(v[1], f0, 1e-14);
    ck_assert_double_eq_tol(v[2], a, 1e-14);
    ck_assert_double_eq_tol(v[3], xd, 1e-15);
    ck_assert_double_eq_tol(v[4], a, 1e-14);
    /* P_inverse(P_accel) gives the applied force (M qdd - f(u = 0) = F). */
    ck_assert_double_eq_tol(v[5], F, 1e-13);
    ck_assert_double_eq_tol(v[6], 0.5 * m * xd * xd, 1e-15);
    ck_assert_double_eq_tol(v[7], 0.5 * k * x * x, 1e-15);
    ck_assert_double_eq_tol(v[8], -k * x, 1e-14);
    /* A = [0 1; -k/m -c/m], B = [0; 1/m] */
    ck_assert_double_eq(v[9], 0);
    ck_assert_double_eq(v[10], 1);
    ck_assert_double_eq_tol(v[11], -k / m, 1e-14);
    ck_assert_double_eq_tol(v[12], -c / m, 1e-14);
    ck_assert_double_eq(v[13], 0);
    ck_assert_double_eq_tol(v[14], 1 / m, 1e-15);
    ck_assert_msg(strstr(out, "\n1 3 osc k 50\n1\n1\n") != NULL, "descriptor / failure lines: %s", out);
    free(out);
  }
  fixture_free(&f);
}
END_TEST

/* The double pendulum against its closed form at random states, and the
** Jacobian against central differences of P_rhs. */
static const char pendulum_driver[] =
  "#include <stdio.h>\n#include <stdlib.h>\n#include <math.h>\n#include \"dp.h\"\n"
  "static double rnd(void) { return 2.0*rand()/RAND_MAX - 1.0; }\n"
  "int main(void) {\n"
  "  double p[dp_NP], x[4], u[1], M[4], f[2], a[2], Q[2], T, V, A[16], B[4];\n"
  "  int n, i, j;\n"
  "  dp_default_params(p);\n"
  "  srand(7);\n"
  "  for (n = 0; n < 20; n++) {\n"
  "    for (i = 0; i < 4; i++) x[i] = 3.0*rnd();\n"
  "    u[0] = rnd();\n"
  "    dp_mass(x, p, M); dp_forcing(0.0, x, x + 2, u, p, f);\n"
  "    if (dp_accel(0.0, x, x + 2, u, p, a)) return 1;\n"
  "    dp_inverse(0.0, x, x + 2, a, p, Q); dp_energy(x, x + 2, p, &T, &V);\n"
  "    printf(\"S\");\n"
  "    for (i = 0; i < 4; i++) printf(\" %.17g\", x[i]);\n"
  "    printf(\" %.17g\", u[0]);\n"
  "    for (i = 0; i < 4; i++) printf(\" %.17g\", M[i]);\n"
  "    printf(\" %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g\\n\", f[0], f[1], a[0], a[1], Q[0], Q[1], T, V);\n"
  "    dp_jacobian(0.0, x, u, p, A, B);\n"
  "    for (j = 0; j < 5; j++) {\n"
  "      double xp[4], xm[4], up[1], um[1], fp[4], fm[4], h = 1e-6;\n"
  "      for (i = 0; i < 4; i++) xp[i] = xm[i] = x[i];\n"
  "      up[0] = um[0] = u[0];\n"
  "      if (j < 4) { xp[j] += h; xm[j] -= h; } else { up[0] += h; um[0] -= h; }\n"
  "      dp_rhs(0.0, xp, up, p, fp); dp_rhs(0.0, xm, um, p, fm);\n"
  "      for (i = 0; i < 4; i++) {\n"
  "        double fd = (fp[i] - fm[i])/(2*h), an = j < 4 ? A[i*4 + j] : B[i];\n"
  "        printf(\"J %.17g %.17g\\n\", an, fd);\n"
  "      }\n"
  "    }\n"
  "  }\n"
  "  return 0;\n}\n";

static void check_pendulum_output(const char *out) {
  const double m1 = 1.5, m2 = 0.7, l1 = 1.1, l2 = 0.8, g = 9.81;
  int states = 0, jac = 0;
  for (const char *line = out; line && *line; line = strchr(line, '\n') ? strchr(line, '\n') + 1 : NULL) {
    double v[21];
    if (line[0] == 'S') {
      ck_assert_int_eq(sscanf(line + 1, "%lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %lf %lf",
                              &v[0], &v[1], &v[2], &v[3], &v[4], &v[5], &v[6], &v[7], &v[8], &v[9],
                              &v[10], &v[11], &v[12], &v[13], &v[14], &v[15], &v[16]), 17);
      double q1 = v[0], q2 = v[1], w1 = v[2], w2 = v[3], u = v[4], d = q1 - q2;
      double M[4] = {(m1 + m2) * l1 * l1, m2 * l1 * l2 * cos(d), m2 * l1 * l2 * cos(d), m2 * l2 * l2};
      double f1 = -m2 * l1 * l2 * w2 * w2 * sin(d) - (m1 + m2) * g * l1 * sin(q1) + u;
      double f2 = m2 * l1 * l2 * w1 * w1 * sin(d) - m2 * g * l2 * sin(q2);
      double det = M[0] * M[3] - M[1] * M[2];
      double a1 = (M[3] * f1 - M[1] * f2) / det, a2 = (M[0] * f2 - M[2] * f1) / det;
      double T = 0.5 * M[0] * w1 * w1 + 0.5 * M[3] * w2 * w2 + M[1] * w1 * w2;
      double V = -(m1 + m2) * g * l1 * cos(q1) - m2 * g * l2 * cos(q2);
      double want[] = {M[0], M[1], M[2], M[3], f1, f2, a1, a2, u, 0, T, V};
      for (int i = 0; i < 12; i++) {
        double scale = fmax(1.0, fabs(want[i]));
        ck_assert_msg(fabs(v[5 + i] - want[i]) <= 1e-12 * scale, "entry %d: %.17g vs %.17g", i, v[5 + i], want[i]);
      }
      states++;
    } else if (line[0] == 'J') {
      ck_assert_int_eq(sscanf(line + 1, "%lf %lf", &v[0], &v[1]), 2);
      ck_assert_msg(fabs(v[0] - v[1]) <= 1e-7 * fmax(1.0, fabs(v[0])), "jacobian %.17g vs fd %.17g", v[0], v[1]);
      jac++;
    }
  }
  ck_assert_int_eq(states, 20);
  ck_assert_int_eq(jac, 20 * 20);
}

START_TEST(test_double_pendulum) {
  Fixture f;
  build_double_pendulum(&f);
  char *out = compile_and_run(&f, NULL, 0, pendulum_driver, cc());
  check_pendulum_output(out);
  free(out);
  out = compile_and_run(&f, NULL, 1, pendulum_driver, cc());
  check_pendulum_output(out);
  free(out);
  fixture_free(&f);
}
END_TEST

START_TEST(test_renamed_prefix) {
  Fixture f;
  build_double_pendulum(&f);
  static char drv[sizeof pendulum_driver + 256];
  /* the same driver with every dp_ renamed */
  const char *s = pendulum_driver;
  char *o = drv;
  while (*s) {
    if (strncmp(s, "dp", 2) == 0 && (s[2] == '_' || s[2] == '.')) {
      memcpy(o, "arm7", 4);
      o += 4;
      s += 2;
    } else {
      *o++ = *s++;
    }
  }
  *o = '\0';
  char *out = compile_and_run(&f, "arm7", 0, drv, cc());
  check_pendulum_output(out);
  free(out);
  fixture_free(&f);
}
END_TEST

/* A pendulum written in Cartesian coordinates with one holonomic constraint
** x^2 + y^2 = L^2:  M = m I, f = [0, -m g], G = [2x, 2y] and, from the second
** time derivative of the constraint, G q'' = -2 (x'^2 + y'^2).  With
** M q'' = f + G^T lambda:  lambda = (m gamma - G f)/(G G^T)  (derived here
** from the two equations), and the tangential acceleration of the bob is
** -g sin(theta) (any mechanics text: the simple pendulum). */
static void build_cartesian_pendulum(Fixture *f) {
  B *b = &f->b;
  memset(f, 0, sizeof *f);
  fixture_alloc(f, 2, 0, 3, 0);
  f->m.name = "cp";
  f->coords[0] = decl(f, 0, DECL_COORD, "x", 0, NULL);
  f->coords[1] = decl(f, 1, DECL_COORD, "y", 0, NULL);
  f->params[0] = decl(f, 2, DECL_PARAM, "m", 0.8, NULL);
  f->params[1] = decl(f, 3, DECL_PARAM, "g", 9.81, NULL);
  f->params[2] = decl(f, 4, DECL_PARAM, "L", 1.2, NULL);
  int x = var(b, IRV_Q, 0), y = var(b, IRV_Q, 1), xd = var(b, IRV_QD, 0), yd = var(b, IRV_QD, 1);
  int m = var(b, IRV_P, 0), g = var(b, IRV_P, 1), L = var(b, IRV_P, 2);
  f->s.mass[0] = f->s.mass[3] = m;
  f->s.forcing[1] = neg(b, mul2(b, m, g));
  f->s.dforcing_dq[0] = f->zero;
  f->s.inverse[0] = mul2(b, m, var(b, IRV_QDD, 0));
  f->s.inverse[1] = add2(b, mul2(b, m, var(b, IRV_QDD, 1)), mul2(b, m, g));
  f->s.energy_T = mul3(b, num(b, 0.5), m, add2(b, powr(b, xd, 2), powr(b, yd, 2)));
  f->s.energy_V = mul3(b, m, g, y);
  f->s.nc = 1;
  f->m.nconstraints = 1;
  f->s.constraint = ints(1);
  f->s.constraint_jacobian = ints(2);
  f->s.constraint_gamma = ints(1);
  f->s.constraint_dt = ints(1);
  f->s.constraint_dt[0] = f->zero;
  f->s.constraint[0] = add3(b, powr(b, x, 2), powr(b, y, 2), neg(b, powr(b, L, 2)));
  f->s.constraint_jacobian[0] = mul2(b, num(b, 2), x);
  f->s.constraint_jacobian[1] = mul2(b, num(b, 2), y);
  f->s.constraint_gamma[0] = mul2(b, num(b, -2), add2(b, powr(b, xd, 2), powr(b, yd, 2)));
  f->s.g = b->g;
}

static const char constrained_driver[] =
  "#include <stdio.h>\n#include <math.h>\n#include <eom/model.h>\n#include \"cp.h\"\n"
  "int main(void) {\n"
  "  double p[cp_NP], q[2], qd[2], qdd[2], lam[1], phi[1], G[2];\n"
  "  double th = 0.7, w = -1.3, L;\n"
  "  cp_default_params(p); L = p[2];\n"
  "  q[0] = L*sin(th); q[1] = -L*cos(th); qd[0] = L*cos(th)*w; qd[1] = L*sin(th)*w;\n"
  "  if (cp_accel_constrained(0.0, q, qd, 0, p, qdd, lam) != 0) return 1;\n"
  "  cp_constraint(q, p, phi); cp_constraint_jacobian(q, p, G);\n"
  "  printf(\"%.17g %.17g %.17g %.17g %.17g %.17g\\n\", qdd[0], qdd[1], lam[0], phi[0], G[0], G[1]);\n"
  "  printf(\"%d %d\\n\", cp_model.nc, cp_model.accel_constrained != 0);\n"
  "  { double phi2[1], G2[2], pt[1];\n"
  "    cp_model.constraint_at(5.0, q, p, phi2, G2, pt);\n"
  "    printf(\"at %d\\n\", phi2[0] == phi[0] && G2[0] == G[0] && G2[1] == G[1] && pt[0] == 0.0); }\n"
  "  q[0] = q[1] = 0.0;   /* G = 0: the constraint gives no direction */\n"
  "  printf(\"%d\\n\", cp_accel_constrained(0.0, q, qd, 0, p, qdd, lam));\n"
  "  return 0;\n}\n";

START_TEST(test_constraints) {
  Fixture f;
  build_cartesian_pendulum(&f);
  char *out = compile_and_run(&f, NULL, 0, constrained_driver, cc());
  double v[6];
  ck_assert_int_eq(sscanf(out, "%lf %lf %lf %lf %lf %lf", &v[0], &v[1], &v[2], &v[3], &v[4], &v[5]), 6);
  const double m = 0.8, g = 9.81, L = 1.2, th = 0.7, w = -1.3;
  double x = L * sin(th), y = -L * cos(th), xd = L * cos(th) * w, yd = L * sin(th) * w;
  double gamma = -2 * (xd * xd + yd * yd), Gf = 2 * y * -m * g, GG = 4 * (x * x + y * y);
  double lam = (m * gamma - Gf) / GG;
  ck_assert_double_eq_tol(v[2], lam, 1e-12);
  ck_assert_double_eq_tol(v[0], 2 * x * lam / m, 1e-12);
  ck_assert_double_eq_tol(v[1], -g + 2 * y * lam / m, 1e-12);
  /* tangential acceleration along (cos th, sin th) is L th'' = -g sin th */
  ck_assert_double_eq_tol(v[0] * cos(th) + v[1] * sin(th), -g * sin(th), 1e-12);
  ck_assert_double_eq_tol(v[3], 0.0, 1e-15);
  ck_assert_double_eq_tol(v[4], 2 * x, 1e-15);
  ck_assert_double_eq_tol(v[5], 2 * y, 1e-15);
  ck_assert_ptr_nonnull(strstr(out, "\n1 1\nat 1\n2\n"));
  free(out);
  fixture_free(&f);
}
END_TEST

/* A mass matrix that really depends on t cannot be written by P_mass(q, p):
** it writes NaN, while P_accel (which has t) still solves. */
static const char timevarying_driver[] =
  "#include <stdio.h>\n#include <math.h>\n#include \"tv.h\"\n"
  "int main(void) {\n"
  "  double p[tv_NP], x[2] = {0.1, 0.0}, u[1] = {0.0}, M[1], a[1];\n"
  "  tv_default_params(p);\n"
  "  tv_mass(x, p, M);\n"
  "  if (tv_accel(0.5, x, x + 1, u, p, a) != 0) return 1;\n"
  "  printf(\"%d %.17g\\n\", isnan(M[0]) != 0, a[0]);\n"
  "  return 0;\n}\n";

START_TEST(test_time_dependent_mass) {
  Fixture f;
  build_oscillator(&f, "tv", NULL);
  B *b = &f.b;
  /* M = m (2 + sin t) */
  f.s.mass[0] = mul2(b, var(b, IRV_P, 0), add2(b, num(b, 2.0), call(b, IRF_SIN, var(b, IRV_T, 0))));
  f.s.g = b->g;
  char *out = compile_and_run(&f, NULL, 0, timevarying_driver, cc());
  int isnan_m;
  double a;
  ck_assert_int_eq(sscanf(out, "%d %lf", &isnan_m, &a), 2);
  ck_assert_int_eq(isnan_m, 1);
  ck_assert_double_eq_tol(a, (-50.0 * 0.1) / (2.0 * (2.0 + sin(0.5))), 1e-14);
  free(out);
  fixture_free(&f);
}
END_TEST

/* Byte-identical output, unchanged files keep their mtime, bad directories. */
START_TEST(test_files) {
  Fixture f;
  char err[512];
  build_oscillator(&f, "osc", NULL);
  char *dir = make_temp_dir();
  EmitOptions o = {NULL, "abc", 0};
  ck_assert_int_eq(emit_c_to_dir(&f.m, &f.s, &o, dir, err, sizeof err), 0);
  char path[1024];
  snprintf(path, sizeof path, "%s/osc.c", dir);
  size_t n1, n2;
  char *c1 = read_file(path, &n1);
  struct stat st1, st2;
  ck_assert_int_eq(stat(path, &st1), 0);
  /* age the file so a rewrite would be visible in its mtime */
  struct timespec old[2] = {{1000000000, 0}, {1000000000, 0}};
  ck_assert_int_eq(utimensat(0, path, old, 0), 0);
  ck_assert_int_eq(emit_c_to_dir(&f.m, &f.s, &o, dir, err, sizeof err), 0);
  char *c2 = read_file(path, &n2);
  ck_assert_int_eq(stat(path, &st2), 0);
  ck_assert_uint_eq(n1, n2);
  ck_assert(memcmp(c1, c2, n1) == 0);
  ck_assert_int_eq((int)st2.st_mtime, 1000000000);
  /* a changed option rewrites */
  o.no_cse = 1;
  o.model_hash = "abd";
  ck_assert_int_eq(emit_c_to_dir(&f.m, &f.s, &o, dir, err, sizeof err), 0);
  ck_assert_int_eq(stat(path, &st2), 0);
  ck_assert_int_ne((int)st2.st_mtime, 1000000000);
  free(c1);
  free(c2);
  /* missing directory */
  snprintf(path, sizeof path, "%s/missing", dir);
  ck_assert_int_eq(emit_c_to_dir(&f.m, &f.s, &o, path, err, sizeof err), -1);
  ck_assert_ptr_nonnull(strstr(err, "missing"));
  /* a bad prefix */
  o.prefix = "9lives";
  ck_assert_int_eq(emit_c_to_dir(&f.m, &f.s, &o, dir, err, sizeof err), -1);
  ck_assert_ptr_nonnull(strstr(err, "identifier"));
  remove_tree(dir);
  free(dir);
  fixture_free(&f);
}
END_TEST

/* A non-finite constant is an error, never `inf` in the code. */
START_TEST(test_nonfinite_constant) {
  Fixture f;
  char err[512];
  build_oscillator(&f, "osc", NULL);
  f.s.energy_V = num(&f.b, HUGE_VAL);
  f.s.g = f.b.g;
  char *dir = make_temp_dir();
  EmitOptions o = {NULL, "abc", 0};
  ck_assert_int_eq(emit_c_to_dir(&f.m, &f.s, &o, dir, err, sizeof err), -1);
  ck_assert_ptr_nonnull(strstr(err, "not finite"));
  char path[1024];
  snprintf(path, sizeof path, "%s/osc.c", dir);
  struct stat st;
  ck_assert_int_ne(stat(path, &st), 0);   /* nothing written */
  remove_tree(dir);
  free(dir);
  fixture_free(&f);
}
END_TEST

/* FNV-1a 64-bit test vectors (Fowler, Noll, Vo, "FNV hash" reference
** page, test vectors for "" and "a" — from memory). */
START_TEST(test_hash) {
  char hex[HASH_HEX_LEN + 1];
  hash_hex("", 0, hex);
  ck_assert_str_eq(hex, "cbf29ce484222325");
  hash_hex("a", 1, hex);
  ck_assert_str_eq(hex, "af63dc4c8601ec8c");
  ck_assert_uint_eq(hash_fnv1a64("foobar", 6), UINT64_C(0x85944171f73967e8));
}
END_TEST

/* The same suite in both passes: the clang pass compiles with clang. */
static Suite *emit_suite(void) {
  Suite *s = suite_create("emit");
  TCase *tc = tcase_create("core");
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, test_oscillator);
  tcase_add_test(tc, test_double_pendulum);
  tcase_add_test(tc, test_renamed_prefix);
  tcase_add_test(tc, test_constraints);
  tcase_add_test(tc, test_time_dependent_mass);
  tcase_add_test(tc, test_files);
  tcase_add_test(tc, test_hash);
  tcase_add_test(tc, test_nonfinite_constant);
  suite_add_tcase(s, tc);
  return s;
}

int main(int argc, char **argv) { return run_test_main(argc, argv, emit_suite); }
