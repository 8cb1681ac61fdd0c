/*
** test_symbolic.c — the symbolic core: derived equations of motion against
** published closed forms, exact derivatives against finite differences,
** determinism of the expression graph, and the errors it reports.
**
** Each model goes through the real front end (frontend_load on model text
** written to a temporary file) and sym_derive(); the resulting IrGraph is
** evaluated by the small interpreter below, so these tests check the graph
** the emitter consumes, not GiNaC's view of it.
*/
#include <check.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli/frontend.h"
#include "sym/numeric.h"
#include "sym/symbolic.h"

/* ------------------------------------------------------------ helpers */

/* A point at which to evaluate a graph. */
typedef struct State {
  double t;
  double q[32], qd[32], qdd[32], u[8], p[32];
} State;

/* Value of every node of g at s (nodes are in dependency order). */
static double *eval_graph(const IrGraph *g, const State *s) {
  double *v = malloc(sizeof(double) * (g->nnodes ? g->nnodes : 1));
  ck_assert_ptr_nonnull(v);
  for (int i = 0; i < g->nnodes; i++) {
    const IrNode *n = &g->nodes[i];
    for (int k = 0; k < n->nargs; k++) ck_assert_int_lt(n->args[k], i);
    const double *a0 = n->nargs > 0 ? &v[n->args[0]] : NULL;
    double x = 0;
    switch (n->op) {
      case IR_NUM: x = n->num; break;
      case IR_VAR:
        switch (n->var) {
          case IRV_T: x = s->t; break;
          case IRV_Q: x = s->q[n->index]; break;
          case IRV_QD: x = s->qd[n->index]; break;
          case IRV_QDD: x = s->qdd[n->index]; break;
          case IRV_U: x = s->u[n->index]; break;
          case IRV_P: x = s->p[n->index]; break;
        }
        break;
      case IR_ADD:
        ck_assert_int_ge(n->nargs, 2);
        for (int k = 0; k < n->nargs; k++) x += v[n->args[k]];
        break;
      case IR_MUL:
        ck_assert_int_ge(n->nargs, 2);
        x = 1;
        for (int k = 0; k < n->nargs; k++) x *= v[n->args[k]];
        break;
      case IR_NEG: x = -*a0; break;
      case IR_DIV: x = v[n->args[0]] / v[n->args[1]]; break;
      case IR_POW: x = pow(v[n->args[0]], v[n->args[1]]); break;
      case IR_CALL:
        switch (n->fn) {
          case IRF_SIN: x = sin(*a0); break;
          case IRF_COS: x = cos(*a0); break;
          case IRF_TAN: x = tan(*a0); break;
          case IRF_ASIN: x = asin(*a0); break;
          case IRF_ACOS: x = acos(*a0); break;
          case IRF_ATAN: x = atan(*a0); break;
          case IRF_ATAN2: x = atan2(v[n->args[0]], v[n->args[1]]); break;
          case IRF_EXP: x = exp(*a0); break;
          case IRF_LOG: x = log(*a0); break;
          case IRF_SQRT: x = sqrt(*a0); break;
          case IRF_ABS: x = fabs(*a0); break;
          case IRF_SINH: x = sinh(*a0); break;
          case IRF_COSH: x = cosh(*a0); break;
          case IRF_TANH: x = tanh(*a0); break;
          case IRF_SIGN: x = (*a0 > 0) - (*a0 < 0); break;
          case IRF_MIN: x = fmin(v[n->args[0]], v[n->args[1]]); break;
          case IRF_MAX: x = fmax(v[n->args[0]], v[n->args[1]]); break;
          case IRF_STEP: x = *a0 > 0 ? 1 : 0; break;
          case IRF_CLAMP: x = fmin(fmax(*a0, v[n->args[1]]), v[n->args[2]]); break;
        }
        break;
    }
    v[i] = x;
  }
  return v;
}

/* One loaded and derived model. */
typedef struct Derived {
  Frontend fe;
  EomSystem sys;
  int status;  /* sym_derive's result; -1 when the front end failed */
  char *path;  /* the model file's name: the diagnostics point to it */
} Derived;

/* Write text to a fresh DIR/model.eom; returns the malloc'd path. */
static char *write_temp_model(const char *text) {
  char dir[] = "/tmp/eomc-test-symbolic-XXXXXX";
  ck_assert_ptr_nonnull(mkdtemp(dir));
  char *path = malloc(sizeof dir + 16);
  sprintf(path, "%s/model.eom", dir);
  FILE *f = fopen(path, "w");
  ck_assert_ptr_nonnull(f);
  ck_assert_int_eq((long)fwrite(text, 1, strlen(text), f), (long)strlen(text));
  fclose(f);
  return path;
}

static void remove_temp_model(char *path) {
  unlink(path);
  char *slash = strrchr(path, '/');
  *slash = 0;
  rmdir(path);
  *slash = '/';
}

static void derive_opts(Derived *d, const char *text, const SymOptions *opt) {
  char *path = write_temp_model(text);
  memset(d, 0, sizeof *d);
  d->path = path;
  int rc = frontend_load(&d->fe, path);
  remove_temp_model(path);
  if (rc != 0) {
    diag_print(&d->fe.diag, stderr);
    d->status = -1;
    return;
  }
  d->status = sym_derive(&d->fe.model, opt, &d->fe.diag, &d->sys);
}

static void derive(Derived *d, const char *text) {
  SymOptions opt = {0, 0};
  derive_opts(d, text, &opt);
}

/* Derive a model that must be accepted. */
static void derive_ok(Derived *d, const char *text) {
  derive(d, text);
  if (d->status != 0) diag_print(&d->fe.diag, stderr);
  ck_assert_int_eq(d->status, 0);
}

static void derived_free(Derived *d) {
  sym_free(&d->sys);
  frontend_free(&d->fe);
  free(d->path);
}

static int param_index(const Derived *d, const char *name) {
  for (int i = 0; i < d->fe.model.nparams; i++)
    if (strcmp(d->fe.model.params[i]->name, name) == 0) return i;
  ck_abort_msg("no parameter %s", name);
  return -1;
}

/* Deterministic pseudo-random numbers in [lo, hi). */
static uint64_t rng_state = 88172645463325252ULL;
static double uniform(double lo, double hi) {
  rng_state ^= rng_state << 13;
  rng_state ^= rng_state >> 7;
  rng_state ^= rng_state << 17;
  return lo + (hi - lo) * (double)(rng_state >> 11) / 9007199254740992.0;
}

static void random_state(const Derived *d, State *s) {
  memset(s, 0, sizeof *s);
  s->t = uniform(0, 2);
  for (int i = 0; i < d->sys.nq; i++) {
    s->q[i] = uniform(-3, 3);
    s->qd[i] = uniform(-2, 2);
    s->qdd[i] = uniform(-2, 2);
  }
  for (int i = 0; i < d->sys.nu; i++) s->u[i] = uniform(-1, 1);
  for (int i = 0; i < d->sys.np; i++) s->p[i] = uniform(0.5, 2);
}

static void assert_close(double got, double want, double rel, const char *what) {
  double err = fabs(got - want), scale = fabs(want) > 1 ? fabs(want) : 1;
  ck_assert_msg(err <= rel * scale, "%s: got %.17g, want %.17g (error %.3g)", what, got, want,
                err / scale);
}

/* M and f of a derived system at s. */
static void mass_forcing(const Derived *d, const State *s, double *M, double *f) {
  double *v = eval_graph(&d->sys.g, s);
  int n = d->sys.nq;
  for (int i = 0; i < n * n; i++) M[i] = v[d->sys.mass[i]];
  for (int i = 0; i < n; i++) f[i] = v[d->sys.forcing[i]];
  free(v);
}

/* Does the value of node `root` read variable kind `var`? */
static int uses_var(const IrGraph *g, int root, IrVar var) {
  const IrNode *n = &g->nodes[root];
  if (n->op == IR_VAR) return n->var == var;
  for (int k = 0; k < n->nargs; k++)
    if (uses_var(g, n->args[k], var)) return 1;
  return 0;
}

/* Is there an error reported on source line `line` containing `text`? */
static int has_error(const Derived *d, int line, const char *text) {
  for (int i = 0; i < d->fe.diag.nmsgs; i++) {
    const DiagMsg *m = &d->fe.diag.msgs[i];
    if (m->level == DIAG_ERROR && m->loc.line == line && strstr(m->text, text)) return 1;
  }
  return 0;
}

/* ------------------------------------------------------------ closed forms */

/* Mass on a linear spring: omega^2 = k/m (common practice; any mechanics text). */
START_TEST(mass_spring) {
  Derived d;
  derive_ok(&d,
            "coord x\n"
            "param m = 2\n"
            "param k = 8\n"
            "kinetic m/2*x'^2\n"
            "potential k/2*x^2\n");
  ck_assert_int_eq(d.sys.nq, 1);
  State s;
  for (int trial = 0; trial < 10; trial++) {
    random_state(&d, &s);
    double m = s.p[param_index(&d, "m")], k = s.p[param_index(&d, "k")];
    double M, f, *v;
    mass_forcing(&d, &s, &M, &f);
    assert_close(M, m, 1e-14, "M");
    assert_close(-f / (M * s.q[0]), k / m, 1e-13, "omega^2");
    v = eval_graph(&d.sys.g, &s);
    assert_close(v[d.sys.energy_T], m / 2 * s.qd[0] * s.qd[0], 1e-14, "T");
    assert_close(v[d.sys.energy_V], k / 2 * s.q[0] * s.q[0], 1e-14, "V");
    free(v);
  }
  derived_free(&d);
}
END_TEST

/* Atwood machine over a massless pulley: a = g (m1 - m2)/(m1 + m2)
** (common textbook result).  y is the drop of m1; m2 rises by y. */
START_TEST(atwood_machine) {
  Derived d;
  derive_ok(&d,
            "coord y\n"
            "param m1 = 3\n"
            "param m2 = 1\n"
            "param g = 9.81\n"
            "kinetic (m1 + m2)/2*y'^2\n"
            "potential -m1*g*y + m2*g*y\n");
  State s;
  for (int trial = 0; trial < 10; trial++) {
    random_state(&d, &s);
    double m1 = s.p[param_index(&d, "m1")], m2 = s.p[param_index(&d, "m2")],
           g = s.p[param_index(&d, "g")];
    double M, f;
    mass_forcing(&d, &s, &M, &f);
    assert_close(f / M, g * (m1 - m2) / (m1 + m2), 1e-14, "a");
  }
  derived_free(&d);
}
END_TEST

/* Bead on a hoop of radius R spinning at rate w about its vertical diameter
** (Marion, Classical Dynamics of Particles and Systems, 1970, problem 7-18):
** q'' = w^2 sin q cos q - (g/R) sin q, q measured from the lowest point. */
START_TEST(bead_on_rotating_hoop) {
  Derived d;
  derive_ok(&d,
            "coord q\n"
            "param m = 0.1\n"
            "param R = 0.5\n"
            "param w = 6\n"
            "param g = 9.81\n"
            "let rho = R*sin(q)\n"
            "kinetic m/2*(R^2*q'^2 + rho^2*w^2)\n"
            "potential -m*g*R*cos(q)\n");
  State s;
  for (int trial = 0; trial < 10; trial++) {
    random_state(&d, &s);
    double R = s.p[param_index(&d, "R")], w = s.p[param_index(&d, "w")],
           g = s.p[param_index(&d, "g")], q = s.q[0];
    double M, f;
    mass_forcing(&d, &s, &M, &f);
    assert_close(f / M, w * w * sin(q) * cos(q) - g / R * sin(q), 1e-13, "q''");
  }
  derived_free(&d);
}
END_TEST

static const char double_pendulum[] =
  "# two point masses on massless rods, angles from the downward vertical\n"
  "coord a, b\n"
  "param m1 = 1.2\n"
  "param m2 = 0.7\n"
  "param l1 = 0.9\n"
  "param l2 = 0.6\n"
  "param g = 9.81\n"
  "let x1 = l1*sin(a)\n"
  "let y1 = -l1*cos(a)\n"
  "let x2 = x1 + l2*sin(b)\n"
  "let y2 = y1 - l2*cos(b)\n"
  "kinetic m1/2*(x1'^2 + y1'^2)\n"
  "kinetic m2/2*(x2'^2 + y2'^2)\n"
  "potential g*(m1*y1 + m2*y2)\n";

/* Double pendulum with point masses (Taylor, Classical Mechanics, 2005,
** section 11.4 — closed form written from memory):
**   M = [(m1+m2) l1^2, m2 l1 l2 c; m2 l1 l2 c, m2 l2^2], c = cos(a - b)
**   f1 = -m2 l1 l2 sin(a - b) b'^2 - (m1+m2) g l1 sin a
**   f2 =  m2 l1 l2 sin(a - b) a'^2 - m2 g l2 sin b */
START_TEST(double_pendulum_closed_form) {
  Derived d;
  derive_ok(&d, double_pendulum);
  ck_assert_int_eq(d.sys.nq, 2);
  State s;
  for (int trial = 0; trial < 50; trial++) {
    random_state(&d, &s);
    double m1 = s.p[param_index(&d, "m1")], m2 = s.p[param_index(&d, "m2")],
           l1 = s.p[param_index(&d, "l1")], l2 = s.p[param_index(&d, "l2")],
           g = s.p[param_index(&d, "g")];
    double a = s.q[0], b = s.q[1], ad = s.qd[0], bd = s.qd[1];
    double c = cos(a - b), sn = sin(a - b);
    double Mw[4] = {(m1 + m2) * l1 * l1, m2 * l1 * l2 * c, m2 * l1 * l2 * c, m2 * l2 * l2};
    double fw[2] = {-m2 * l1 * l2 * sn * bd * bd - (m1 + m2) * g * l1 * sin(a),
                    m2 * l1 * l2 * sn * ad * ad - m2 * g * l2 * sin(b)};
    double M[4], f[2];
    mass_forcing(&d, &s, M, f);
    for (int i = 0; i < 4; i++) assert_close(M[i], Mw[i], 1e-12, "M");
    for (int i = 0; i < 2; i++) assert_close(f[i], fw[i], 1e-12, "f");
  }
  derived_free(&d);
}
END_TEST

/* The same pendulum written with vectors: rates of vector lets, rotz(),
** matrix times vector, dot() and indexing must give the same M and f. */
START_TEST(vector_lets_match_scalar_form) {
  Derived d, e;
  derive_ok(&d, double_pendulum);
  derive_ok(&e,
            "coord a, b\n"
            "param m1 = 1.2\n"
            "param m2 = 0.7\n"
            "param l1 = 0.9\n"
            "param l2 = 0.6\n"
            "param g = 9.81\n"
            "let r1 = rotz(a)*[0, -l1, 0]\n"
            "let r2 = r1 + l2*[sin(b), -cos(b), 0]\n"
            "kinetic m1/2*dot(r1', r1') + m2/2*dot(r2', r2')\n"
            "potential g*(m1*r1[2] + m2*r2[2])\n");
  State s;
  for (int trial = 0; trial < 10; trial++) {
    random_state(&d, &s);
    double M1[4], f1[2], M2[4], f2[2];
    mass_forcing(&d, &s, M1, f1);
    mass_forcing(&e, &s, M2, f2);
    for (int i = 0; i < 4; i++) assert_close(M2[i], M1[i], 1e-13, "M");
    for (int i = 0; i < 2; i++) assert_close(f2[i], f1[i], 1e-13, "f");
  }
  derived_free(&d);
  derived_free(&e);
}
END_TEST

/* The pendulum's T written directly in the coordinate rates (the closed
** form of Taylor, 2005, section 11.4, from memory) and with rates of
** unnamed expressions: three routes through the core, one answer. */
START_TEST(rate_forms_agree) {
  static const char *const texts[] = {
    "coord a, b\nparam m1 = 1.2\nparam m2 = 0.7\nparam l1 = 0.9\nparam l2 = 0.6\n"
    "param g = 9.81\n"
    "kinetic (m1 + m2)/2*l1^2*a'^2 + m2/2*l2^2*b'^2 + m2*l1*l2*a'*b'*cos(a - b)\n"
    "potential -(m1 + m2)*g*l1*cos(a) - m2*g*l2*cos(b)\n",
    "coord a, b\nparam m1 = 1.2\nparam m2 = 0.7\nparam l1 = 0.9\nparam l2 = 0.6\n"
    "param g = 9.81\n"
    "kinetic m1/2*((l1*sin(a))'^2 + (l1*cos(a))'^2)\n"
    "kinetic m2/2*((l1*sin(a) + l2*sin(b))'^2 + (l1*cos(a) + l2*cos(b))'^2)\n"
    "potential -(m1 + m2)*g*l1*cos(a) - m2*g*l2*cos(b)\n",
  };
  Derived ref;
  derive_ok(&ref, double_pendulum);
  for (size_t k = 0; k < sizeof texts / sizeof texts[0]; k++) {
    Derived d;
    derive_ok(&d, texts[k]);
    State s;
    for (int trial = 0; trial < 10; trial++) {
      random_state(&ref, &s);
      double M1[4], f1[2], M2[4], f2[2];
      mass_forcing(&ref, &s, M1, f1);
      mass_forcing(&d, &s, M2, f2);
      for (int i = 0; i < 4; i++) assert_close(M2[i], M1[i], 1e-12, "M");
      for (int i = 0; i < 2; i++) assert_close(f2[i], f1[i], 1e-12, "f");
    }
    derived_free(&d);
  }
  derived_free(&ref);
}
END_TEST

/* The bead on the spinning hoop again, now from its position in the
** inertial frame: the let depends on t explicitly (Marion, 1970, prob. 7-18). */
START_TEST(explicit_time_dependence) {
  Derived d;
  derive_ok(&d,
            "coord q\n"
            "param m = 0.1\n"
            "param R = 0.5\n"
            "param w = 6\n"
            "param g = 9.81\n"
            "let r = [R*sin(q)*cos(w*t), R*sin(q)*sin(w*t), -R*cos(q)]\n"
            "kinetic m/2*dot(r', r')\n"
            "potential m*g*r[3]\n");
  State s;
  for (int trial = 0; trial < 10; trial++) {
    random_state(&d, &s);
    double R = s.p[param_index(&d, "R")], w = s.p[param_index(&d, "w")],
           g = s.p[param_index(&d, "g")], q = s.q[0];
    double M, f;
    mass_forcing(&d, &s, &M, &f);
    assert_close(f / M, w * w * sin(q) * cos(q) - g / R * sin(q), 1e-13, "q''");
  }
  derived_free(&d);
}
END_TEST

/* Charged particle in a uniform magnetic field B along z: the velocity-
** dependent potential L += e v.A with A = B/2 (-y, x, 0) gives the Lorentz
** force m x'' = e B y', m y'' = -e B x' (Goldstein, Poole and Safko,
** Classical Mechanics, 3rd ed., 2002, section 1.5). */
START_TEST(velocity_dependent_potential) {
  Derived d;
  derive_ok(&d,
            "coord x, y\n"
            "param m = 2\n"
            "param e = 0.5\n"
            "param B = 3\n"
            "kinetic m/2*(x'^2 + y'^2)\n"
            "lagrangian e*B/2*(x*y' - y*x')\n");
  State s;
  for (int trial = 0; trial < 10; trial++) {
    random_state(&d, &s);
    double m = s.p[param_index(&d, "m")], e = s.p[param_index(&d, "e")],
           B = s.p[param_index(&d, "B")];
    double M[4], f[2];
    mass_forcing(&d, &s, M, f);
    assert_close(M[0], m, 1e-14, "M11");
    assert_close(M[1], 0, 1e-14, "M12");
    assert_close(f[0], e * B * s.qd[1], 1e-13, "f1");
    assert_close(f[1], -e * B * s.qd[0], 1e-13, "f2");
  }
  derived_free(&d);
}
END_TEST

/* A damper on the stretch of a let: D = c/2 (y' - x')^2 pulls the rates
** together with forces -+c (y' - x') (common practice). */
START_TEST(dissipation_through_a_let) {
  Derived d;
  derive_ok(&d,
            "coord x, y\n"
            "param m = 1\n"
            "param c = 2\n"
            "let s = y - x\n"
            "kinetic m/2*(x'^2 + y'^2)\n"
            "dissipation c/2*s'^2\n");
  State s;
  for (int trial = 0; trial < 10; trial++) {
    random_state(&d, &s);
    double c = s.p[param_index(&d, "c")];
    double M[4], f[2];
    mass_forcing(&d, &s, M, f);
    assert_close(f[0], c * (s.qd[1] - s.qd[0]), 1e-14, "f1");
    assert_close(f[1], -c * (s.qd[1] - s.qd[0]), 1e-14, "f2");
  }
  derived_free(&d);
}
END_TEST

/* Outputs through the matrix built-ins.  dh(theta, d, a, alpha) is the
** standard Denavit-Hartenberg transform rotz(theta) transz(d) transx(a)
** rotx(alpha) (Spong, Hutchinson and Vidyasagar, Robot Modeling and
** Control, 2006, section 3.2): its position is (a cos theta, a sin theta, d)
** and its rotation's (3,3) entry cos alpha. */
START_TEST(outputs_and_matrix_builtins) {
  Derived d;
  derive_ok(&d,
            "coord x, y\n"
            "param m = 1\n"
            "param l = 0.3\n"
            "kinetic m/2*(x'^2 + y'^2)\n"
            "output px = pos(dh(x, 0.4, l, 0.2))[1]\n"
            "output pz = pos(dh(x, 0.4, l, 0.2))[3]\n"
            "output r33 = rot(dh(x, 0.4, l, 0.2))[3, 3]\n"
            "output r12 = rot(dh(x, 0.4, l, 0.2))[1, 2]\n"
            "output nc = norm(cross([1, 0, 0], [0, y, 0]))\n"
            "output tr = transpose([[1, x], [y, 2]])[1, 2]\n"
            "output dg = diag(x, y, 3)[2, 2]\n"
            "output rz = (rotx(x)*roty(y)*[0, 0, 1])[2]\n"
            "output sp = x'*y + t\n");
  ck_assert_int_eq(d.sys.ny, 9);
  State s;
  random_state(&d, &s);
  double l = s.p[param_index(&d, "l")], x = s.q[0], y = s.q[1];
  double *v = eval_graph(&d.sys.g, &s);
  const int *o = d.sys.outputs;
  assert_close(v[o[0]], l * cos(x), 1e-14, "px");
  assert_close(v[o[1]], 0.4, 1e-14, "pz");
  assert_close(v[o[2]], cos(0.2), 1e-14, "r33");
  assert_close(v[o[3]], -sin(x) * cos(0.2), 1e-14, "r12");
  assert_close(v[o[4]], fabs(y), 1e-14, "nc");
  assert_close(v[o[5]], y, 1e-14, "tr");
  assert_close(v[o[6]], y, 1e-14, "dg");
  /* rotx(x) roty(y) e3 = (sin y, -sin x cos y, cos x cos y) */
  assert_close(v[o[7]], -sin(x) * cos(y), 1e-14, "rz");
  assert_close(v[o[8]], s.qd[0] * y + s.t, 1e-14, "sp");
  free(v);
  derived_free(&d);
}
END_TEST

/* Literals are exact rationals in the core and must come back as the
** doubles they were, subnormal ones included (IEEE 754 binary64). */
START_TEST(literals_round_trip) {
  Derived d;
  derive_ok(&d,
            "coord x\n"
            "param k = 3\n"
            "kinetic x'^2/2\n"
            "force x = 1e-320*k + 0.1*k + 1e300*1e-290*x + 2.5e-310\n");
  State s;
  random_state(&d, &s);
  double *v = eval_graph(&d.sys.g, &s);
  double k = s.p[0];
  double want = 1e-320 * k + 0.1 * k + 1e10 * s.q[0] + 2.5e-310;
  assert_close(v[d.sys.forcing[0]], want, 1e-15, "f");
  /* the subnormal parts alone, where a flush to zero would show */
  s.q[0] = 0;
  s.p[0] = 0;
  free(v);
  v = eval_graph(&d.sys.g, &s);
  ck_assert_msg(v[d.sys.forcing[0]] == 2.5e-310, "got %g", v[d.sys.forcing[0]]);
  free(v);
  derived_free(&d);
}
END_TEST

/* ------------------------------------------------------------ bodies */

/* A point body on a rod under `gravity`: q'' = -(g/l) sin q (common practice). */
START_TEST(body_point_pendulum) {
  Derived d;
  derive_ok(&d,
            "coord q\n"
            "param m = 0.4\n"
            "param l = 0.8\n"
            "param g = 9.81\n"
            "gravity [0, -g, 0]\n"
            "body bob mass m at [l*sin(q), -l*cos(q), 0]\n");
  State s;
  for (int trial = 0; trial < 10; trial++) {
    random_state(&d, &s);
    double l = s.p[param_index(&d, "l")], g = s.p[param_index(&d, "g")];
    double M, f, *v = eval_graph(&d.sys.g, &s);
    mass_forcing(&d, &s, &M, &f);
    assert_close(f / M, -g / l * sin(s.q[0]), 1e-13, "q''");
    assert_close(v[d.sys.energy_V], -s.p[param_index(&d, "m")] * g * l * cos(s.q[0]), 1e-13, "V");
    free(v);
  }
  derived_free(&d);
}
END_TEST

/* Physical pendulum: a rigid body turning about z through a pivot at
** distance d from its mass centre, inertia J there: M = J + m d^2 (parallel
** axes), f = -m g d sin q (common practice). */
START_TEST(body_physical_pendulum) {
  Derived d;
  derive_ok(&d,
            "coord q\n"
            "param m = 2\n"
            "param d = 0.3\n"
            "param J = 0.05\n"
            "param g = 9.81\n"
            "body arm mass m at rotz(q)*[0, -d, 0] orient rotz(q) inertia diag(0.01, 0.02, J)\n"
            "gravity [0, -g, 0]\n");
  State s;
  for (int trial = 0; trial < 10; trial++) {
    random_state(&d, &s);
    double m = s.p[param_index(&d, "m")], dd = s.p[param_index(&d, "d")],
           J = s.p[param_index(&d, "J")], g = s.p[param_index(&d, "g")];
    double M, f;
    mass_forcing(&d, &s, &M, &f);
    assert_close(M, J + m * dd * dd, 1e-13, "M");
    assert_close(f, -m * g * dd * sin(s.q[0]), 1e-13, "f");
  }
  derived_free(&d);
}
END_TEST

/* A rigid body in a two-axis gimbal, R = rotz(a) rotx(b), principal moments
** A, B, C.  Its body-frame angular velocity is (b', a' sin b, a' cos b), so
** T = (A b'^2 + (B sin^2 b + C cos^2 b) a'^2)/2 and, by Euler-Lagrange by
** hand, f_a = -2 (B - C) sin b cos b a' b', f_b = (B - C) sin b cos b a'^2
** (angular velocity in Euler angles: Goldstein, Poole and Safko, 2002,
** section 4.9, from memory). */
START_TEST(body_gimbal_rotation) {
  Derived d;
  derive_ok(&d,
            "coord a, b\n"
            "param A = 0.3\n"
            "param B = 0.5\n"
            "param C = 0.9\n"
            "body rotor mass 1 at [0, 0, 0] orient rotz(a)*rotx(b) inertia diag(A, B, C)\n");
  State s;
  for (int trial = 0; trial < 10; trial++) {
    random_state(&d, &s);
    double A = s.p[param_index(&d, "A")], B = s.p[param_index(&d, "B")],
           C = s.p[param_index(&d, "C")];
    double sb = sin(s.q[1]), cb = cos(s.q[1]), ad = s.qd[0], bd = s.qd[1];
    double M[4], f[2];
    mass_forcing(&d, &s, M, f);
    assert_close(M[0], B * sb * sb + C * cb * cb, 1e-13, "M11");
    assert_close(M[1], 0, 1e-13, "M12");
    assert_close(M[3], A, 1e-13, "M22");
    assert_close(f[0], -2 * (B - C) * sb * cb * ad * bd, 1e-13, "f1");
    assert_close(f[1], (B - C) * sb * cb * ad * ad, 1e-13, "f2");
  }
  derived_free(&d);
}
END_TEST

/* Bodies on chains of turns and shifts (rotx/rotz/dh and their products)
** are derived through frames worked outward along the chain; the same
** bodies written with literal matrices go through the entries of P and R.
** Both are the Euler-Lagrange equations of one system (Kane and Levinson,
** Dynamics: Theory and Applications, 1985, ch. 6: generalized inertia
** forces equal Lagrange's form for holonomic coordinates), so M, f, T and
** V must agree: a prismatic offset that is a coordinate (s), a turn driven
** by time, a full inertia and gravity included. */
START_TEST(body_chain_forms_agree) {
  static const char common[] =
    "coord a, s, b\n"
    "param m1 = 1.2\n"
    "param m2 = 0.7\n"
    "param l = 0.4\n"
    "param g = 9.81\n"
    "param A = 0.03\n"
    "param B = 0.05\n"
    "param C = 0.04\n"
    "input tau\n"
    "force a = tau\n"
    "gravity [0.3, -0.2, -g]\n"
    "let I2 = [[A, 0.01, 0], [0.01, B, 0.02], [0, 0.02, C]]\n";
  static const char chain[] =
    "let T1 = dh(a, s, l, 0.7)\n"
    "let T2 = T1*dh(b, 0.2, 0.1, -0.4)\n"
    "let R3 = rotx(0.5*t)*rotz(b)\n"
    "body one mass m1 at pos(T1) + rot(T1)*[0.05, -0.1, 0.02] orient rot(T1) inertia diag(A, B, C)\n"
    "body two mass m2 at pos(T2) + rot(T2)*[0.1, 0.03, -0.05]*l orient rot(T2) inertia I2\n"
    "body three mass m1 at R3*[0.2, 0.1, 0] orient R3 inertia diag(B, C, A)\n";
  static const char literal[] =
    "let H1 = [[cos(a), -sin(a)*cos(0.7), sin(a)*sin(0.7), l*cos(a)],\n"
    "          [sin(a), cos(a)*cos(0.7), -cos(a)*sin(0.7), l*sin(a)],\n"
    "          [0, sin(0.7), cos(0.7), s], [0, 0, 0, 1]]\n"
    "let H2 = [[cos(b), -sin(b)*cos(-0.4), sin(b)*sin(-0.4), 0.1*cos(b)],\n"
    "          [sin(b), cos(b)*cos(-0.4), -cos(b)*sin(-0.4), 0.1*sin(b)],\n"
    "          [0, sin(-0.4), cos(-0.4), 0.2], [0, 0, 0, 1]]\n"
    "let T1 = H1\n"
    "let T2 = T1*H2\n"
    "let P1 = [T1[1, 4], T1[2, 4], T1[3, 4]]\n"
    "let P2 = [T2[1, 4], T2[2, 4], T2[3, 4]]\n"
    "let Q1 = [[T1[1, 1], T1[1, 2], T1[1, 3]], [T1[2, 1], T1[2, 2], T1[2, 3]], [T1[3, 1], T1[3, 2], T1[3, 3]]]\n"
    "let Q2 = [[T2[1, 1], T2[1, 2], T2[1, 3]], [T2[2, 1], T2[2, 2], T2[2, 3]], [T2[3, 1], T2[3, 2], T2[3, 3]]]\n"
    "let X = [[1, 0, 0], [0, cos(0.5*t), -sin(0.5*t)], [0, sin(0.5*t), cos(0.5*t)]]\n"
    "let Z = [[cos(b), -sin(b), 0], [sin(b), cos(b), 0], [0, 0, 1]]\n"
    "let R3 = X*Z\n"
    "body one mass m1 at P1 + Q1*[0.05, -0.1, 0.02] orient Q1 inertia diag(A, B, C)\n"
    "body two mass m2 at P2 + Q2*[0.1, 0.03, -0.05]*l orient Q2 inertia I2\n"
    "body three mass m1 at R3*[0.2, 0.1, 0] orient R3 inertia diag(B, C, A)\n";
  char *text_a = malloc(sizeof common + sizeof chain), *text_b = malloc(sizeof common + sizeof literal);
  sprintf(text_a, "%s%s", common, chain);
  sprintf(text_b, "%s%s", common, literal);
  Derived da, db;
  derive_ok(&da, text_a);
  derive_ok(&db, text_b);
  ck_assert_int_eq(da.sys.nq, 3);
  State s;
  for (int trial = 0; trial < 12; trial++) {
    random_state(&da, &s);
    double Ma[9], fa[3], Mb[9], fb[3];
    mass_forcing(&da, &s, Ma, fa);
    mass_forcing(&db, &s, Mb, fb);
    for (int k = 0; k < 9; k++) assert_close(Ma[k], Mb[k], 1e-12, "M");
    for (int k = 0; k < 3; k++) assert_close(fa[k], fb[k], 1e-12, "f");
    double *va = eval_graph(&da.sys.g, &s), *vb = eval_graph(&db.sys.g, &s);
    assert_close(va[da.sys.energy_T], vb[db.sys.energy_T], 1e-12, "T");
    assert_close(va[da.sys.energy_V], vb[db.sys.energy_V], 1e-12, "V");
    for (int k = 0; k < 3; k++)
      assert_close(va[da.sys.inverse[k]], vb[db.sys.inverse[k]], 1e-12, "inverse");
    free(va), free(vb);
  }
  derived_free(&da), derived_free(&db);
  free(text_a), free(text_b);
}
END_TEST

/* Virtual work: a world force F at a point gives Q_i = F . dP/dq_i, a
** torque about z on a body turning about z gives Q = tau (common practice). */
START_TEST(force_at_point_and_torque) {
  Derived d;
  derive_ok(&d,
            "coord q\n"
            "param m = 1\n"
            "param l = 0.7\n"
            "input F, tau\n"
            "kinetic m/2*l^2*q'^2\n"
            "force [F, 0, 0] at [l*sin(q), -l*cos(q), 0]\n"
            "torque [0, 0, tau] on rotz(q)\n");
  State s;
  for (int trial = 0; trial < 10; trial++) {
    random_state(&d, &s);
    double l = s.p[param_index(&d, "l")];
    double *v = eval_graph(&d.sys.g, &s);
    assert_close(v[d.sys.forcing[0]], s.u[0] * l * cos(s.q[0]) + s.u[1], 1e-14, "f");
    assert_close(v[d.sys.dforcing_du[0]], l * cos(s.q[0]), 1e-14, "df/dF");
    assert_close(v[d.sys.dforcing_du[1]], 1, 1e-14, "df/dtau");
    free(v);
  }
  derived_free(&d);
}
END_TEST

/* A pendulum in Cartesian coordinates held by x^2 + y^2 = l^2:
** G = (2x, 2y) and G q'' = gamma with gamma = -2 (x'^2 + y'^2), the second
** time derivative of the constraint (common practice). */
START_TEST(holonomic_constraint) {
  Derived d;
  derive_ok(&d,
            "coord x, y\n"
            "param m = 1\n"
            "param l = 0.5\n"
            "param g = 9.81\n"
            "kinetic m/2*(x'^2 + y'^2)\n"
            "potential m*g*y\n"
            "constraint x^2 + y^2 = l^2\n");
  ck_assert_int_eq(d.sys.nc, 1);
  State s;
  for (int trial = 0; trial < 10; trial++) {
    random_state(&d, &s);
    double l = s.p[param_index(&d, "l")], x = s.q[0], y = s.q[1];
    double *v = eval_graph(&d.sys.g, &s);
    assert_close(v[d.sys.constraint[0]], x * x + y * y - l * l, 1e-14, "phi");
    assert_close(v[d.sys.constraint_jacobian[0]], 2 * x, 1e-14, "G1");
    assert_close(v[d.sys.constraint_jacobian[1]], 2 * y, 1e-14, "G2");
    assert_close(v[d.sys.constraint_gamma[0]], -2 * (s.qd[0] * s.qd[0] + s.qd[1] * s.qd[1]),
                 1e-14, "gamma");
    free(v);
  }
  derived_free(&d);
}
END_TEST

/* Damped oscillator driven by an input: Rayleigh's dissipation function
** D = c q'^2 / 2 gives the generalized force -c q' (Goldstein, Poole and
** Safko, Classical Mechanics, 3rd ed., 2002, section 1.5). */
START_TEST(damped_driven_oscillator) {
  Derived d;
  derive_ok(&d,
            "coord x\n"
            "param m = 1.5\n"
            "param k = 4\n"
            "param c = 0.3\n"
            "input F\n"
            "kinetic m/2*x'^2\n"
            "potential k/2*x^2\n"
            "dissipation c/2*x'^2\n"
            "force x = F*cos(t)\n");
  ck_assert_int_eq(d.sys.nu, 1);
  State s;
  for (int trial = 0; trial < 10; trial++) {
    random_state(&d, &s);
    double k = s.p[param_index(&d, "k")], c = s.p[param_index(&d, "c")],
           m = s.p[param_index(&d, "m")];
    double *v = eval_graph(&d.sys.g, &s);
    double want = -k * s.q[0] - c * s.qd[0] + s.u[0] * cos(s.t);
    assert_close(v[d.sys.forcing[0]], want, 1e-14, "f");
    assert_close(v[d.sys.dforcing_dqd[0]], -c, 1e-14, "df/dqd");
    assert_close(v[d.sys.dforcing_dq[0]], -k, 1e-14, "df/dq");
    assert_close(v[d.sys.dforcing_du[0]], cos(s.t), 1e-14, "df/du");
    /* inverse dynamics: M q'' - f with u = 0 */
    assert_close(v[d.sys.inverse[0]], m * s.qdd[0] + k * s.q[0] + c * s.qd[0], 1e-14, "inverse");
    free(v);
  }
  derived_free(&d);
}
END_TEST

/* Planar chain of n point masses on rods: M_ij = l_i l_j cos(q_i - q_j)
** sum_{k >= max(i,j)} m_k (the standard result for a chain of point masses
** with absolute angles; e.g. Meirovitch, Methods of Analytical Dynamics,
** 1970, ch. 4 — from memory).  Written with lets, as a user would. */
static char *chain_model(int n) {
  size_t cap = 4096 + (size_t)n * 256;
  char *s = malloc(cap), *p = s;
  p += sprintf(p, "coord q1");
  for (int i = 2; i <= n; i++) p += sprintf(p, ", q%d", i);
  p += sprintf(p, "\nparam g = 9.81\n");
  for (int i = 1; i <= n; i++) p += sprintf(p, "param m%d = 1\nparam l%d = 1\n", i, i);
  for (int i = 1; i <= n; i++) {
    if (i == 1) {
      p += sprintf(p, "let x1 = l1*sin(q1)\nlet y1 = -l1*cos(q1)\n");
    } else {
      p += sprintf(p, "let x%d = x%d + l%d*sin(q%d)\n", i, i - 1, i, i);
      p += sprintf(p, "let y%d = y%d - l%d*cos(q%d)\n", i, i - 1, i, i);
    }
    p += sprintf(p, "kinetic m%d/2*(x%d'^2 + y%d'^2)\npotential m%d*g*y%d\n", i, i, i, i, i);
  }
  ck_assert((size_t)(p - s) < cap);
  return s;
}

START_TEST(planar_chain_mass_matrix) {
  const int n = 6;
  char *text = chain_model(n);
  Derived d;
  derive_ok(&d, text);
  free(text);
  State s;
  for (int trial = 0; trial < 5; trial++) {
    random_state(&d, &s);
    double M[36], f[6];
    mass_forcing(&d, &s, M, f);
    for (int i = 0; i < n; i++)
      for (int j = 0; j < n; j++) {
        char name[16];
        double sum = 0;
        for (int k = (i > j ? i : j); k < n; k++) {
          snprintf(name, sizeof name, "m%d", k + 1);
          sum += s.p[param_index(&d, name)];
        }
        snprintf(name, sizeof name, "l%d", i + 1);
        double li = s.p[param_index(&d, name)];
        snprintf(name, sizeof name, "l%d", j + 1);
        double lj = s.p[param_index(&d, name)];
        assert_close(M[i * n + j], li * lj * cos(s.q[i] - s.q[j]) * sum, 1e-12, "chain M");
      }
  }
  derived_free(&d);
}
END_TEST

/* ------------------------------------------------------------ exact derivatives */

/* dM/dq, df/dq, df/dqd, df/du against central differences of M and f,
** on the pendulum and on a damped, driven body in a gimbal. */
START_TEST(derivatives_match_finite_differences) {
  static const char gimbal[] =
    "coord a, b\n"
    "param A = 0.3\n"
    "param B = 0.5\n"
    "param C = 0.9\n"
    "param c = 0.2\n"
    "input u1\n"
    "body rotor mass 1.5 at [0.1*cos(a), 0, 0.2*sin(b)] orient rotz(a)*rotx(b) "
    "inertia diag(A, B, C)\n"
    "gravity [0, 0, -9.81]\n"
    "dissipation c/2*(a'^2 + a'*b' + b'^2)\n"
    "force a = u1*cos(b)*b'\n";
  const char *const texts[] = {double_pendulum, gimbal};
  const int n = 2;
  const double h = 1e-6;
  for (size_t m = 0; m < sizeof texts / sizeof texts[0]; m++) {
    Derived d;
    derive_ok(&d, texts[m]);
    ck_assert_int_eq(d.sys.nq, n);
    State s;
    for (int trial = 0; trial < 5; trial++) {
      random_state(&d, &s);
      double *v = eval_graph(&d.sys.g, &s);
      for (int k = 0; k < n; k++) {
        double Mp[4], Mm[4], fp[2], fm[2];
        State a = s, b = s;
        a.q[k] += h, b.q[k] -= h;
        mass_forcing(&d, &a, Mp, fp);
        mass_forcing(&d, &b, Mm, fm);
        for (int ij = 0; ij < n * n; ij++)
          assert_close(v[d.sys.dmass_dq[k * n * n + ij]], (Mp[ij] - Mm[ij]) / (2 * h), 1e-7,
                       "dM/dq");
        for (int i = 0; i < n; i++)
          assert_close(v[d.sys.dforcing_dq[i * n + k]], (fp[i] - fm[i]) / (2 * h), 1e-7,
                       "df/dq");
        a = s, b = s;
        a.qd[k] += h, b.qd[k] -= h;
        mass_forcing(&d, &a, Mp, fp);
        mass_forcing(&d, &b, Mm, fm);
        for (int i = 0; i < n; i++)
          assert_close(v[d.sys.dforcing_dqd[i * n + k]], (fp[i] - fm[i]) / (2 * h), 1e-7,
                       "df/dqd");
      }
      for (int k = 0; k < d.sys.nu; k++) {
        double Mp[4], Mm[4], fp[2], fm[2];
        State a = s, b = s;
        a.u[k] += h, b.u[k] -= h;
        mass_forcing(&d, &a, Mp, fp);
        mass_forcing(&d, &b, Mm, fm);
        for (int i = 0; i < n; i++)
          assert_close(v[d.sys.dforcing_du[i * d.sys.nu + k]], (fp[i] - fm[i]) / (2 * h), 1e-7,
                       "df/du");
      }
      free(v);
    }
    derived_free(&d);
  }
}
END_TEST

/* ------------------------------------------------------------ the graph */

static void assert_same_graph(const EomSystem *a, const EomSystem *b) {
  ck_assert_int_eq(a->g.nnodes, b->g.nnodes);
  for (int i = 0; i < a->g.nnodes; i++) {
    const IrNode *x = &a->g.nodes[i], *y = &b->g.nodes[i];
    ck_assert_int_eq(x->op, y->op);
    ck_assert_int_eq(x->nargs, y->nargs);
    if (x->op == IR_NUM) ck_assert(memcmp(&x->num, &y->num, sizeof x->num) == 0);
    if (x->op == IR_VAR) ck_assert(x->var == y->var && x->index == y->index);
    if (x->op == IR_CALL) ck_assert_int_eq(x->fn, y->fn);
    for (int k = 0; k < x->nargs; k++) ck_assert_int_eq(x->args[k], y->args[k]);
  }
  int n = a->nq;
  for (int i = 0; i < n * n; i++) ck_assert_int_eq(a->mass[i], b->mass[i]);
  for (int i = 0; i < n; i++) ck_assert_int_eq(a->forcing[i], b->forcing[i]);
  for (int i = 0; i < n * n * n; i++) ck_assert_int_eq(a->dmass_dq[i], b->dmass_dq[i]);
  for (int i = 0; i < n * n; i++) ck_assert_int_eq(a->dforcing_dq[i], b->dforcing_dq[i]);
  ck_assert_int_eq(a->energy_T, b->energy_T);
  ck_assert_int_eq(a->energy_V, b->energy_V);
}

/* Two derivations in one process create different GiNaC symbols, hence a
** different GiNaC term order: the graphs must still be identical. */
START_TEST(graph_is_deterministic) {
  char *text = chain_model(5);
  Derived a, b;
  derive_ok(&a, text);
  derive_ok(&b, text);
  assert_same_graph(&a.sys, &b.sys);
  derived_free(&a);
  derived_free(&b);
  free(text);
}
END_TEST

/* FNV-1a digest of a derived system's graph and roots. */
static void fnv(uint64_t *h, uint64_t v) {
  for (int b = 0; b < 8; b++, v >>= 8) *h = (*h ^ (v & 0xff)) * 1099511628211ULL;
}

static uint64_t graph_digest(const EomSystem *s) {
  uint64_t h = 1469598103934665603ULL;
  for (int i = 0; i < s->g.nnodes; i++) {
    const IrNode *n = &s->g.nodes[i];
    uint64_t bits;
    memcpy(&bits, &n->num, sizeof bits);
    fnv(&h, (uint64_t)n->op);
    fnv(&h, (uint64_t)n->nargs);
    if (n->op == IR_NUM) fnv(&h, bits);
    if (n->op == IR_VAR) fnv(&h, (uint64_t)n->var * 1000003u + (uint64_t)n->index);
    if (n->op == IR_CALL) fnv(&h, (uint64_t)n->fn);
    for (int k = 0; k < n->nargs; k++) fnv(&h, (uint64_t)n->args[k]);
  }
  for (int i = 0; i < s->nq * s->nq; i++) {
    fnv(&h, (uint64_t)s->mass[i]);
    fnv(&h, (uint64_t)s->dforcing_dq[i]);
    fnv(&h, (uint64_t)s->dforcing_dqd[i]);
  }
  for (int i = 0; i < s->nq; i++) {
    fnv(&h, (uint64_t)s->forcing[i]);
    fnv(&h, (uint64_t)s->inverse[i]);
  }
  fnv(&h, (uint64_t)s->energy_T);
  fnv(&h, (uint64_t)s->energy_V);
  return h;
}

static const char rotating_arm[] =
  "coord a, b, c\n"
  "param A = 0.3\n"
  "param B = 0.5\n"
  "param C = 0.9\n"
  "param l = 0.4\n"
  "let R1 = rotz(a)\n"
  "let R2 = R1*roty(b)\n"
  "let R3 = R2*rotz(c)\n"
  "body b1 mass 1 at R1*[l, 0, 0] orient R1 inertia diag(A, B, C)\n"
  "body b2 mass 2 at R1*[l, 0, 0] + R2*[l, 0, 0] orient R2 inertia diag(B, A, C)\n"
  "body b3 mass 1 at R1*[l, 0, 0] + R2*[l, 0, 0] + R3*[0, l, 0] orient R3 "
  "inertia diag(C, B, A)\n"
  "gravity [0, 0, -9.81]\n";

/* GiNaC orders terms by hashes seeded from addresses, which move from one
** run to the next (address randomisation): derive the same model in fresh
** processes (this program re-run with --graph-digest) and compare. */
START_TEST(graph_is_deterministic_across_runs) {
  char *path = write_temp_model(rotating_arm);
  char first[64] = "", line[64], self[4096];
  ssize_t len = readlink("/proc/self/exe", self, sizeof self - 1);
  ck_assert_int_gt((int)len, 0);
  self[len] = 0;
  for (int run = 0; run < 3; run++) {
    char cmd[8192];
    snprintf(cmd, sizeof cmd, "'%s' --graph-digest '%s'", self, path);
    FILE *p = popen(cmd, "r");
    ck_assert_ptr_nonnull(p);
    ck_assert_ptr_nonnull(fgets(line, sizeof line, p));
    ck_assert_int_eq(pclose(p), 0);
    ck_assert_int_eq((int)strlen(line), 17);  /* 16 hex digits and a newline */
    if (run == 0) strcpy(first, line);
    ck_assert_str_eq(line, first);
  }
  remove_temp_model(path);
  free(path);
}
END_TEST

/* Hash-consing: no two nodes are equal, sums/products carry >= 2 arguments,
** no foldable constants remain, and each sin/cos argument has one node. */
START_TEST(graph_is_hash_consed) {
  char *text = chain_model(4);
  Derived d;
  derive_ok(&d, text);
  free(text);
  const IrGraph *g = &d.sys.g;
  for (int i = 0; i < g->nnodes; i++) {
    const IrNode *x = &g->nodes[i];
    if (x->op == IR_ADD || x->op == IR_MUL) ck_assert_int_ge(x->nargs, 2);
    if (x->op != IR_NUM && x->op != IR_VAR) {
      int all_num = 1;
      for (int k = 0; k < x->nargs; k++) all_num &= g->nodes[x->args[k]].op == IR_NUM;
      ck_assert_msg(!all_num, "node %d has only constant arguments", i);
    }
    if (x->op == IR_MUL)
      for (int k = 0; k < x->nargs; k++) {
        const IrNode *a = &g->nodes[x->args[k]];
        ck_assert_msg(!(a->op == IR_NUM && (a->num == 1 || a->num == 0)), "x*1 or x*0 left");
      }
    for (int j = 0; j < i; j++) {
      const IrNode *y = &g->nodes[j];
      if (x->op != y->op || x->nargs != y->nargs || x->fn != y->fn) continue;
      if (x->op == IR_NUM && x->num != y->num) continue;
      if (x->op == IR_VAR && (x->var != y->var || x->index != y->index)) continue;
      int same = 1;
      for (int k = 0; k < x->nargs; k++) same &= x->args[k] == y->args[k];
      ck_assert_msg(!same, "nodes %d and %d are equal", j, i);
    }
  }
  derived_free(&d);
}
END_TEST

/* ------------------------------------------------------------ errors */

/* Kinetic energy quartic in the rate: M would depend on q'. */
START_TEST(non_quadratic_lagrangian_is_an_error) {
  Derived d;
  derive(&d,
         "coord x\n"
         "param m = 1\n"
         "kinetic m/2*x'^2\n"
         "kinetic x'^4\n"
         "potential x^2\n");
  ck_assert_int_eq(d.status, 1);
  ck_assert_msg(has_error(&d, 4, "not quadratic"), "error on line 4 expected");
  derived_free(&d);
}
END_TEST

/* The same through the rate of a let: the check sees through atoms. */
START_TEST(non_quadratic_through_a_let_is_an_error) {
  Derived d;
  derive(&d,
         "coord x\n"
         "param m = 1\n"
         "let s = sin(x)\n"
         "kinetic m/2*x'^2\n"
         "potential x^2\n"
         "lagrangian s'^2*s'^2*m\n");
  ck_assert_int_eq(d.status, 1);
  ck_assert_msg(has_error(&d, 6, "not quadratic"), "error on line 6 expected");
  derived_free(&d);
}
END_TEST

/* Terms that cancel are not a dependence: structurally (GiNaC cancels
** x'^3 - x'^3) and only numerically (sin^2 + cos^2 - 1 stays). */
START_TEST(cancelling_rate_terms_are_accepted) {
  Derived d;
  derive_ok(&d,
            "coord x\n"
            "param m = 2\n"
            "kinetic m/2*(x'^2 + x'^3 - x'^3)\n"
            "lagrangian (sin(x)^2 + cos(x)^2 - 1)*x'^4\n");
  State s;
  random_state(&d, &s);
  double M, f;
  mass_forcing(&d, &s, &M, &f);
  assert_close(M, s.p[0], 1e-12, "M");
  /* the generated mass function has no q': the graph of M must not use it */
  ck_assert(!uses_var(&d.sys.g, d.sys.mass[0], IRV_QD));
  derived_free(&d);
}
END_TEST

/* The mass function takes q and p only: a kinetic term that makes M
** depend on time is an error at its line. */
START_TEST(time_dependent_mass_is_an_error) {
  Derived d;
  derive(&d,
         "coord x\n"
         "param m = 1\n"
         "kinetic m/2*x'^2\n"
         "kinetic m*t*x'^2\n");
  ck_assert_int_eq(d.status, 1);
  ck_assert_msg(has_error(&d, 4, "time"), "error on line 4 expected");
  derived_free(&d);
}
END_TEST

START_TEST(time_limit_is_an_error) {
  char *text = chain_model(8);
  Derived d;
  SymOptions opt = {0, 1e-9};
  derive_opts(&d, text, &opt);
  free(text);
  ck_assert_int_eq(d.status, 1);
  ck_assert_int_eq(d.fe.diag.nerrors, 1);
  ck_assert_ptr_nonnull(strstr(d.fe.diag.msgs[0].text, "time limit"));
  derived_free(&d);
}
END_TEST

/* A body with an orientation needs an inertia: an error at its line. */
START_TEST(body_without_inertia_is_an_error) {
  Derived d;
  derive(&d,
         "coord x\n"
         "param m = 1\n"
         "kinetic m/2*x'^2\n"
         "body b mass m at [x, 0, 0] orient rotz(x)\n");
  ck_assert_int_eq(d.status, 1);
  ck_assert_msg(has_error(&d, 4, "inertia"), "error on line 4 expected");
  derived_free(&d);
}
END_TEST

/* The probes' Cholesky solve against a system with a known answer: the
** 4x4 Hilbert matrix H_ij = 1/(i + j - 1), symmetric positive definite,
** with b = H (1, 1, 1, 1)^T (Higham, Accuracy and Stability of Numerical
** Algorithms, 2002, ch. 10: Cholesky is backward stable on any SPD matrix;
** cond(H_4) ~ 1.6e4, so the answer holds to ~1e-12).  Not positive
** definite: -1. */
START_TEST(spd_solve_known_answer) {
  double H[16], b[4];
  for (int i = 0; i < 4; i++) {
    b[i] = 0;
    for (int j = 0; j < 4; j++) b[i] += H[i * 4 + j] = 1.0 / (i + j + 1);
  }
  ck_assert_int_eq(num_spd_solve(4, H, b), 0);
  for (int i = 0; i < 4; i++) ck_assert_msg(fabs(b[i] - 1) < 1e-10, "x[%d] = %.17g", i, b[i]);
  double I2[4] = {1, 2, 2, 1}, r[2] = {1, 1}; /* eigenvalues 3 and -1 */
  ck_assert_int_eq(num_spd_solve(2, I2, r), -1);
}
END_TEST

/* The probes' sequence: a fixed seed gives a fixed sequence in [0, 1) with
** the moments of a uniform variable (mean 1/2, variance 1/12: common
** practice), and the first draw is the LCG step by hand. */
START_TEST(probe_sequence_is_uniform_and_fixed) {
  uint64_t state = 0, again = 0;
  double first = num_uniform(&again);
  ck_assert(first == (double)(1442695040888963407ULL >> 11) / 9007199254740992.0);
  double sum = 0, sum2 = 0;
  const int n = 100000;
  for (int k = 0; k < n; k++) {
    double u = num_uniform(&state);
    ck_assert(u >= 0 && u < 1);
    sum += u;
    sum2 += u * u;
  }
  double mean = sum / n, var = sum2 / n - mean * mean;
  ck_assert_msg(fabs(mean - 0.5) < 0.005, "mean %g", mean);
  ck_assert_msg(fabs(var - 1.0 / 12) < 0.002, "variance %g", var);
}
END_TEST

Suite *symbolic_suite(void) {
  Suite *s = suite_create("symbolic");
  TCase *tc = tcase_create("closed forms");
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, mass_spring);
  tcase_add_test(tc, atwood_machine);
  tcase_add_test(tc, bead_on_rotating_hoop);
  tcase_add_test(tc, double_pendulum_closed_form);
  tcase_add_test(tc, damped_driven_oscillator);
  tcase_add_test(tc, planar_chain_mass_matrix);
  tcase_add_test(tc, vector_lets_match_scalar_form);
  tcase_add_test(tc, rate_forms_agree);
  tcase_add_test(tc, explicit_time_dependence);
  tcase_add_test(tc, velocity_dependent_potential);
  tcase_add_test(tc, dissipation_through_a_let);
  tcase_add_test(tc, outputs_and_matrix_builtins);
  tcase_add_test(tc, literals_round_trip);
  tcase_add_test(tc, body_point_pendulum);
  tcase_add_test(tc, body_physical_pendulum);
  tcase_add_test(tc, body_gimbal_rotation);
  tcase_add_test(tc, body_chain_forms_agree);
  tcase_add_test(tc, force_at_point_and_torque);
  tcase_add_test(tc, holonomic_constraint);
  suite_add_tcase(s, tc);
  tc = tcase_create("derivatives and graph");
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, derivatives_match_finite_differences);
  tcase_add_test(tc, graph_is_deterministic);
  tcase_add_test(tc, graph_is_deterministic_across_runs);
  tcase_add_test(tc, graph_is_hash_consed);
  suite_add_tcase(s, tc);
  tc = tcase_create("errors");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, non_quadratic_lagrangian_is_an_error);
  tcase_add_test(tc, non_quadratic_through_a_let_is_an_error);
  tcase_add_test(tc, cancelling_rate_terms_are_accepted);
  tcase_add_test(tc, time_dependent_mass_is_an_error);
  tcase_add_test(tc, time_limit_is_an_error);
  tcase_add_test(tc, body_without_inertia_is_an_error);
  suite_add_tcase(s, tc);
  tc = tcase_create("numeric probes");
  tcase_set_timeout(tc, 30);
  tcase_add_test(tc, spd_solve_known_answer);
  tcase_add_test(tc, probe_sequence_is_uniform_and_fixed);
  suite_add_tcase(s, tc);
  return s;
}

int main(int argc, char **argv) {
  if (argc == 3 && strcmp(argv[1], "--graph-digest") == 0) {
    /* the child of graph_is_deterministic_across_runs */
    Frontend fe;
    EomSystem sys;
    SymOptions opt = {0, 0};
    if (frontend_load(&fe, argv[2]) != 0 || sym_derive(&fe.model, &opt, &fe.diag, &sys) != 0)
      return 1;
    printf("%016llx\n", (unsigned long long)graph_digest(&sys));
    sym_free(&sys);
    frontend_free(&fe);
    return 0;
  }
  SRunner *sr = srunner_create(symbolic_suite());
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
