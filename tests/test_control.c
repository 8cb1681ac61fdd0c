/*
** test_control.c — end to end: the Coriolis matrix, gravity vector, momenta,
** energy function and constants of the motion (issue 9), through `eomc gen`,
** the generated C compiled with -std=c99 -pedantic -Wall -Wextra -Werror and
** run, `eomc check` and `eomc sim`.
**
** A small driver (below) reads states (q, qd, qdd) and prints M, the time
** rate M' (central differences of P_mass along qd), C, g, P_inverse, the
** forcing at u = 0, the momenta, h, T and V.  Each test checks these against
** a property or closed form from outside the project, named beside it.
**
** Environment: EOMC the binary, SRCDIR the sources, CC the C compiler.
*/
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "testutil.h"

#ifndef SRCDIR
#define SRCDIR "."
#endif
#ifndef BUILDDIR
#define BUILDDIR "."
#endif


static char *model_path(const char *rel) {
  char *p = malloc(strlen(srcdir()) + strlen(rel) + 2);
  ck_assert_ptr_nonnull(p);
  sprintf(p, "%s/%s", srcdir(), rel);
  return p;
}

static RunResult run_eomc(const char *a0, const char *a1, const char *a2, const char *a3,
                          const char *a4, const char *a5, const char *a6, const char *a7) {
  char *argv[10] = {(char *)eomc(), (char *)a0, (char *)a1, (char *)a2, (char *)a3,
                    (char *)a4, (char *)a5, (char *)a6, (char *)a7, NULL};
  return run_argv(argv);
}

/* ------------------------------------------------------------------ the driver */

static const char driver_src[] =
  "#include <stdio.h>\n#include <string.h>\n#include <math.h>\n"
  "#include <eom/model.h>\n"
  "extern const struct eom_model MODEL;\n"
  "static void vec(const char *label, const double *v, int n) {\n"
  "  int i;\n  printf(\"%s\", label);\n"
  "  for (i = 0; i < n; i++) printf(\" %.17g\", v[i]);\n  printf(\"\\n\");\n}\n"
  "int main(int argc, char **argv) {\n"
  "  const struct eom_model *m = &MODEL;\n"
  "  static double p[64], q[16], qd[16], qdd[16], u[16], M[256], Mp[256], Mm[256], Md[256];\n"
  "  static double C[256], g[16], Q[16], f[16], pm[16], qp[16], qm[16];\n"
  "  double T, V, h, eps = 1e-6;\n  int i, n;\n  FILE *in;\n"
  "  if (argc < 2 || !(in = fopen(argv[1], \"r\"))) return 2;\n"
  "  if (m->abi != EOM_MODEL_ABI || m->nq > 16 || m->np > 64 || m->nu > 16) return 3;\n"
  "  n = m->nq;\n"
  "  for (i = 0; i < m->np; i++) p[i] = m->param_defaults[i];\n"
  "  for (i = 0; i < m->nu; i++) u[i] = 0.0;\n"
  "  printf(\"split %d\\n\", m->coriolis != 0 && m->gravity != 0);\n"
  "  for (i = 0; i < m->np; i++) printf(\"param %s %.17g\\n\", m->param_names[i], p[i]);\n"
  "  printf(\"begin\\n\");\n"
  "  for (;;) {\n"
  "    for (i = 0; i < n; i++) if (fscanf(in, \"%lf\", &q[i]) != 1) return 0;\n"
  "    for (i = 0; i < n; i++) if (fscanf(in, \"%lf\", &qd[i]) != 1) return 4;\n"
  "    for (i = 0; i < n; i++) if (fscanf(in, \"%lf\", &qdd[i]) != 1) return 4;\n"
  "    for (i = 0; i < n; i++) { qp[i] = q[i] + eps*qd[i]; qm[i] = q[i] - eps*qd[i]; }\n"
  "    m->mass(q, p, M); m->mass(qp, p, Mp); m->mass(qm, p, Mm);\n"
  "    for (i = 0; i < n*n; i++) Md[i] = (Mp[i] - Mm[i])/(2*eps);\n"
  "    vec(\"M\", M, n*n); vec(\"Md\", Md, n*n);\n"
  "    if (m->coriolis) { m->coriolis(q, qd, p, C); vec(\"C\", C, n*n); }\n"
  "    if (m->gravity) { m->gravity(q, p, g); vec(\"g\", g, n); }\n"
  "    m->inverse(0.0, q, qd, qdd, p, Q); vec(\"Q\", Q, n);\n"
  "    m->forcing(0.0, q, qd, u, p, f); vec(\"f\", f, n);\n"
  "    m->momenta(q, qd, p, pm); vec(\"pm\", pm, n);\n"
  "    m->hamiltonian(q, qd, p, &h); printf(\"h %.17g\\n\", h);\n"
  "    m->energy(q, qd, p, &T, &V); printf(\"TV %.17g %.17g\\n\", T, V);\n"
  "    for (i = 0; i < n; i++) {\n"
  "      double s = qd[i], Tp, Tm;\n"
  "      qd[i] = s + eps; m->energy(q, qd, p, &Tp, &V);\n"
  "      qd[i] = s - eps; m->energy(q, qd, p, &Tm, &V);\n"
  "      qd[i] = s; pm[i] = (Tp - Tm)/(2*eps);\n"
  "    }\n"
  "    m->energy(q, qd, p, &T, &V);\n"
  "    vec(\"dTdqd\", pm, n);\n"
  "    printf(\"end\\n\");\n"
  "  }\n"
  "}\n";

typedef struct Built {
  char *dir, *exe;
  int nq;
} Built;

/* Generate `model` (a path) into a fresh directory and compile it with the driver. */
static Built build(const char *model, const char *prefix, int nq) {
  Built b;
  b.nq = nq;
  b.dir = make_temp_dir();
  RunResult r = run_eomc("gen", model, "-o", b.dir, NULL, NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "eomc gen %s failed (%d):\n%s", model, r.status, r.err);
  run_free(&r);
  char *drv = write_file(b.dir, "driver.c", driver_src, strlen(driver_src));
  size_t n = strlen(b.dir) + strlen(prefix) + strlen(srcdir()) + 64;
  char *csrc = malloc(n), *inc = malloc(n), *dinc = malloc(n), *def = malloc(n);
  b.exe = malloc(n);
  ck_assert(csrc && inc && dinc && def && b.exe);
  sprintf(csrc, "%s/%s.c", b.dir, prefix);
  sprintf(inc, "-I%s/include", srcdir());
  sprintf(dinc, "-I%s", b.dir);
  sprintf(def, "-DMODEL=%s_model", prefix);
  sprintf(b.exe, "%s/driver", b.dir);
  char *argv[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror",
                  inc, dinc, def, csrc, drv, "-o", b.exe, "-lm", NULL};
  r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s does not compile the code of %s (%d):\n%s", cc(), model,
                r.status, r.err);
  run_free(&r);
  free(drv), free(csrc), free(inc), free(dinc), free(def);
  return b;
}

static void built_free(Built *b) {
  remove_tree(b->dir);
  free(b->dir), free(b->exe);
}

/* Deterministic pseudo-random numbers in [-1, 1) (a 64-bit LCG, common practice). */
static double uniform(unsigned long long *s) {
  *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
  return (double)(*s >> 11) / 4503599627370496.0 - 1.0;
}

/* Run the driver at `nstates` random states; returns its stdout. */
static char *drive_random(const Built *b, int nstates, unsigned long long seed) {
  size_t cap = (size_t)nstates * b->nq * 3 * 32 + 16, len = 0;
  char *text = malloc(cap);
  ck_assert_ptr_nonnull(text);
  for (int k = 0; k < nstates; k++) {
    for (int i = 0; i < 3 * b->nq; i++)
      len += (size_t)snprintf(text + len, cap - len, "%.17g ", 2.0 * uniform(&seed));
    len += (size_t)snprintf(text + len, cap - len, "\n");
  }
  char *in = write_file(b->dir, "states.txt", text, len);
  char *argv[] = {b->exe, in, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "driver failed (%d): %s", r.status, r.err);
  char *out = r.out;
  r.out = NULL;
  run_free(&r);
  free(in), free(text);
  return out;
}

/* The numbers after `label` in the k-th state block; returns how many. */
static int get(const char *out, int k, const char *label, double *v, int max) {
  const char *s = strstr(out, "\nbegin\n");
  ck_assert_msg(s != NULL, "no states in:\n%s", out);
  s += 7;
  for (int i = 0; i < k; i++) {
    s = strstr(s, "end\n");
    ck_assert_msg(s != NULL, "state block %d missing in:\n%s", k, out);
    s += 4;
  }
  const char *end = strstr(s, "\nend");
  size_t ll = strlen(label);
  for (const char *line = s; line && line < end; line = strchr(line, '\n') + 1) {
    if (strncmp(line, label, ll) == 0 && line[ll] == ' ') {
      return read_numbers(line + ll, v, max);
    }
  }
  ck_abort_msg("label %s missing in block %d", label, k);
  return 0;
}

typedef struct State {
  double q[16], qd[16], qdd[16];
  double M[256], Md[256], C[256], g[16], Q[16], f[16], pm[16], dTdqd[16], h, T, V;
} State;

/* Block k of the driver's output, with the state that produced it. */
static void state_at(const char *out, int k, int nq, unsigned long long seed, State *st) {
  for (int j = 0; j <= k; j++)
    for (int i = 0; i < 3 * nq; i++) {
      double v = 2.0 * uniform(&seed);
      double *dst = i < nq ? &st->q[i] : i < 2 * nq ? &st->qd[i - nq] : &st->qdd[i - 2 * nq];
      *dst = v;
    }
  int nn = nq * nq;
  ck_assert_int_eq(get(out, k, "M", st->M, 256), nn);
  ck_assert_int_eq(get(out, k, "Md", st->Md, 256), nn);
  ck_assert_int_eq(get(out, k, "C", st->C, 256), nn);
  ck_assert_int_eq(get(out, k, "g", st->g, 16), nq);
  ck_assert_int_eq(get(out, k, "Q", st->Q, 16), nq);
  ck_assert_int_eq(get(out, k, "f", st->f, 16), nq);
  ck_assert_int_eq(get(out, k, "pm", st->pm, 16), nq);
  ck_assert_int_eq(get(out, k, "dTdqd", st->dTdqd, 16), nq);
  ck_assert_int_eq(get(out, k, "h", &st->h, 1), 1);
  double tv[2];
  ck_assert_int_eq(get(out, k, "TV", tv, 2), 2);
  st->T = tv[0], st->V = tv[1];
}

/* The default of parameter `name`, as the driver printed it. */
static double param_value(const char *out, const char *name) {
  char key[128];
  snprintf(key, sizeof key, "\nparam %s ", name);
  const char *s = strstr(out, key);
  ck_assert_msg(s != NULL, "no parameter %s in:\n%.300s", name, out);
  return strtod(s + strlen(key), NULL);
}

static double max_abs(const double *v, int n) {
  double m = 0;
  for (int i = 0; i < n; i++) m = fmax(m, fabs(v[i]));
  return m;
}

/* The properties every model with the split must have, at `nstates` random
** states: M' - 2C skew-symmetric (Spong, Hutchinson & Vidyasagar, Robot
** Modeling and Control, 2006, §7.3, the property of the Christoffel choice
** of C); M qdd + C qd + g + b qd = P_inverse (inputs at zero), b the joint
** friction of a dissipation function sum b_i q_i'^2 / 2 named by `friction`
** (NULL: none), since both sides are d/dt dL/dq' - dL/dq + dD/dq' (§7.1);
** dL/dq' = dT/dq' (finite differences of P_energy) and h = T + V for
** L = T - V with T quadratic in q' (Goldstein, Poole & Safko, Classical
** Mechanics, 3rd ed., 2002, §2.7). */
static void check_split_properties(const char *rel, const char *prefix, int nq, int nstates,
                                   const char *const *friction) {
  char *path = model_path(rel);
  Built b = build(path, prefix, nq);
  unsigned long long seed = 0x9e3779b97f4a7c15ULL;
  char *out = drive_random(&b, nstates, seed);
  ck_assert_msg(strncmp(out, "split 1\n", 8) == 0, "%s: no split:\n%.200s", rel, out);
  for (int k = 0; k < nstates; k++) {
    State st;
    state_at(out, k, nq, seed, &st);
    double scale = 1.0 + max_abs(st.M, nq * nq) + max_abs(st.Md, nq * nq);
    for (int i = 0; i < nq; i++)
      for (int j = 0; j < nq; j++) {
        double nij = st.Md[i * nq + j] - 2 * st.C[i * nq + j];
        double nji = st.Md[j * nq + i] - 2 * st.C[j * nq + i];
        ck_assert_msg(fabs(nij + nji) < 1e-6 * scale,
                      "%s: M' - 2C not skew at state %d (%d,%d): %g vs %g", rel, k, i, j, nij, nji);
      }
    double qscale = 1.0 + max_abs(st.Q, nq);
    for (int i = 0; i < nq; i++) {
      double lhs = st.g[i] + (friction ? param_value(out, friction[i]) * st.qd[i] : 0.0);
      for (int j = 0; j < nq; j++)
        lhs += st.M[i * nq + j] * st.qdd[j] + st.C[i * nq + j] * st.qd[j];
      ck_assert_msg(fabs(lhs - st.Q[i]) < 1e-9 * qscale,
                    "%s: M qdd + C qd + g = %.17g, P_inverse %.17g (state %d, row %d)", rel, lhs,
                    st.Q[i], k, i);
      ck_assert_msg(fabs(st.pm[i] - st.dTdqd[i]) < 1e-6 * (1 + fabs(st.pm[i])),
                    "%s: momentum %d %.17g, dT/dqd %.17g", rel, i, st.pm[i], st.dTdqd[i]);
    }
    ck_assert_msg(fabs(st.h - (st.T + st.V)) < 1e-9 * (1 + fabs(st.T) + fabs(st.V)),
                  "%s: h %.17g, T + V %.17g", rel, st.h, st.T + st.V);
  }
  free(out);
  built_free(&b);
  free(path);
}

START_TEST(test_skew_planar3) {
  check_split_properties("tests/models/arm3_planar.eom", "arm3_planar", 3, 6, NULL);
}
END_TEST

/* The six-axis picking arm of the examples: drive torques (inputs, zero
** here) and viscous friction b1..b6 in its joints. */
START_TEST(test_skew_six_axis) {
  static const char *const friction[] = {"b1", "b2", "b3", "b4", "b5", "b6"};
  check_split_properties("examples/picking_arm6.eom", "picking_arm6", 6, 4, friction);
}
END_TEST

/* Planar two-link arm, angles from the horizontal: the closed form of
** Spong, Hutchinson & Vidyasagar, Robot Modeling and Control, 2006, §7.4
** (from memory): with h = -m2 l1 lc2 sin q2,
**   C = [[h q2', h (q1' + q2')], [-h q1', 0]],
**   g1 = (m1 lc1 + m2 l1) g cos q1 + m2 lc2 g cos(q1 + q2),
**   g2 = m2 lc2 g cos(q1 + q2). */
START_TEST(test_two_link_closed_form) {
  char *path = model_path("tests/models/arm2_planar.eom");
  Built b = build(path, "arm2_planar", 2);
  unsigned long long seed = 77;
  char *out = drive_random(&b, 5, seed);
  const double m1 = 1.7, m2 = 1.1, l1 = 0.45, lc1 = 0.2, lc2 = 0.17, g = 9.81;
  for (int k = 0; k < 5; k++) {
    State st;
    state_at(out, k, 2, seed, &st);
    double q1 = st.q[0], q2 = st.q[1], v1 = st.qd[0], v2 = st.qd[1];
    double hh = -m2 * l1 * lc2 * sin(q2);
    double C[4] = {hh * v2, hh * (v1 + v2), -hh * v1, 0.0};
    double G[2] = {(m1 * lc1 + m2 * l1) * g * cos(q1) + m2 * lc2 * g * cos(q1 + q2),
                   m2 * lc2 * g * cos(q1 + q2)};
    for (int i = 0; i < 4; i++)
      ck_assert_msg(fabs(st.C[i] - C[i]) < 1e-12, "C[%d] = %.17g, closed form %.17g", i, st.C[i], C[i]);
    for (int i = 0; i < 2; i++)
      ck_assert_msg(fabs(st.g[i] - G[i]) < 1e-12, "g[%d] = %.17g, closed form %.17g", i, st.g[i], G[i]);
  }
  free(out);
  built_free(&b);
  free(path);
}
END_TEST

/* The example arm with joint friction b (dissipation b q'^2/2 per joint):
** P_inverse = M qdd - f(u = 0) = M qdd + C qd + g + b qd, since the
** Rayleigh force is -dD/dq' = -b q' (Goldstein et al. 2002, §1.5). */
START_TEST(test_split_with_friction) {
  char *path = model_path("examples/arm2_scalar.eom");
  Built b = build(path, "arm2_scalar", 2);
  unsigned long long seed = 5;
  char *out = drive_random(&b, 4, seed);
  const double bf[2] = {0.08, 0.05};
  for (int k = 0; k < 4; k++) {
    State st;
    state_at(out, k, 2, seed, &st);
    for (int i = 0; i < 2; i++) {
      double lhs = st.g[i] + bf[i] * st.qd[i];
      for (int j = 0; j < 2; j++) lhs += st.M[i * 2 + j] * st.qdd[j] + st.C[i * 2 + j] * st.qd[j];
      ck_assert_msg(fabs(lhs - st.Q[i]) < 1e-10 * (1 + fabs(st.Q[i])), "row %d: %.17g vs %.17g", i,
                    lhs, st.Q[i]);
    }
  }
  free(out);
  built_free(&b);
  free(path);
}
END_TEST

/* ------------------------------------------------------------------ eomc check and sim */

static char *check_output(const char *path) {
  RunResult r = run_eomc("check", path, NULL, NULL, NULL, NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "eomc check %s failed (%d): %s", path, r.status, r.err);
  char *out = r.out;
  r.out = NULL;
  run_free(&r);
  return out;
}

/* Kepler's problem in polar coordinates: L = m (r'^2 + r^2 th'^2)/2 + mu m / r
** has no th, so th is cyclic and the angular momentum m r^2 th' is conserved,
** and so is the energy (Goldstein et al. 2002, §3.2 and §2.7). */
START_TEST(test_kepler_cyclic) {
  char *path = model_path("tests/models/kepler_polar.eom");
  char *out = check_output(path);
  ck_assert_msg(strstr(out, "conserved quantities (2):\n"), "%s", out);
  ck_assert_msg(strstr(out, "  momentum of th (dL/dth'): th is cyclic\n"), "%s", out);
  ck_assert_msg(!strstr(out, "momentum of r "), "%s", out);
  ck_assert_msg(strstr(out, "  energy function h = q'.dL/dq' - L\n"), "%s", out);
  free(out);
  RunResult sr = run_eomc("show", path, NULL, NULL, NULL, NULL, NULL, NULL);
  ck_assert_int_eq(sr.status, 0);
  ck_assert_msg(strstr(sr.out, "  momentum of th (dL/dth'): th is cyclic\n"), "%s", sr.out);
  run_free(&sr);

  /* the simulation reports the drift of both; tight tolerances keep it small */
  char *dir = make_temp_dir(), csv[4096];
  snprintf(csv, sizeof csv, "%s/k.csv", dir);
  RunResult r = run_eomc("sim", path, "--until", "20", "--rtol", "1e-12", "-o", csv);
  ck_assert_msg(r.status == 0, "eomc sim failed (%d): %s", r.status, r.err);
  const char *line = strstr(r.err, "conserved momentum of th: ");
  ck_assert_msg(line != NULL, "no drift report:\n%s", r.err);
  double first, last, drift;
  ck_assert_int_eq(sscanf(line, "conserved momentum of th: %lf -> %lf, max drift %lf", &first, &last,
                          &drift), 3);
  /* m r0^2 th0' with the model's m = 2, r0 = 1.3, th0' = 1.1 */
  ck_assert_msg(fabs(first - 2.0 * 1.3 * 1.3 * 1.1) < 1e-12, "initial momentum %.17g", first);
  ck_assert_msg(drift < 1e-9, "angular momentum drift %g", drift);
  ck_assert_msg(strstr(r.err, "conserved energy function h: "), "%s", r.err);
  run_free(&r);
  remove_tree(dir);
  free(dir);
  free(path);
}
END_TEST

/* A turntable with a radial slider on a spring.  Free, the table angle is
** cyclic (L = J th'^2/2 + m (x'^2 + x^2 th'^2)/2 - k x^2/2 has no th) and h
** is conserved; driven by a torque input on th, neither is (a generalized
** force on th breaks d/dt dL/dth' = 0, and the input does work). */
static const char turntable_src[] =
  "coord th [rad]\ncoord x [m]\n"
  "param J = 0.4 [kg*m^2]\nparam m = 0.3 [kg]\nparam k = 12 [N/m]\n"
  "kinetic 1/2*J*th'^2 + 1/2*m*(x'^2 + x^2*th'^2)\n"
  "potential 1/2*k*x^2\n"
  "initial x = 0.2\ninitial th' = 3\n";

START_TEST(test_driven_not_conservative) {
  char *dir = make_temp_dir();
  char *free_path = write_file(dir, "turntable.eom", turntable_src, strlen(turntable_src));
  char *out = check_output(free_path);
  ck_assert_msg(strstr(out, "  momentum of th (dL/dth'): th is cyclic\n"), "%s", out);
  ck_assert_msg(strstr(out, "  energy function h = q'.dL/dq' - L\n"), "%s", out);
  free(out);

  size_t n = strlen(turntable_src) + 128;
  char *driven = malloc(n);
  snprintf(driven, n, "%sinput tau [N*m]\nforce th = tau\n", turntable_src);
  char *driven_path = write_file(dir, "driven.eom", driven, strlen(driven));
  out = check_output(driven_path);
  ck_assert_msg(strstr(out, "conserved quantities (0):\n"), "%s", out);
  ck_assert_msg(strstr(out, "(energy function not conserved: a generalized force acts on 'th')"),
                "%s", out);
  free(out);

  /* friction on the slider: th stays cyclic, the energy is not conserved */
  snprintf(driven, n, "%sparam c = 0.1 [N*s/m]\ndissipation 1/2*c*x'^2\n", turntable_src);
  char *damped_path = write_file(dir, "damped.eom", driven, strlen(driven));
  out = check_output(damped_path);
  ck_assert_msg(strstr(out, "  momentum of th (dL/dth'): th is cyclic\n"), "%s", out);
  ck_assert_msg(strstr(out, "(energy function not conserved: dissipation acts on 'x')"), "%s", out);
  free(out);
  remove_tree(dir);
  free(dir), free(free_path), free(driven), free(driven_path), free(damped_path);
}
END_TEST

/* Where M qdd + C qd + g = Q does not exist, eomc check says why and the
** generated code has no P_coriolis: a puck on a turntable spinning at a fixed
** rate W, in the table's frame (L has the gyroscopic terms m W (x y' - y x'),
** linear in the rates), and a pendulum hung from a support moved with time
** (L depends on t explicitly). */
START_TEST(test_no_split_reported) {
  static const char rotating[] =
    "coord x [m]\ncoord y [m]\nparam m = 0.2 [kg]\nparam W = 1.5 [Hz]\n"
    "kinetic 1/2*m*((x' - W*y)^2 + (y' + W*x)^2)\n";
  static const char moving[] =
    "coord a\nparam l = 0.5\nparam g = 9.81\nparam A = 0.1\n"
    "let y = A*sin(3*t) - l*cos(a)\nlet x = l*sin(a)\n"
    "kinetic 1/2*(x'^2 + y'^2)\npotential g*y\n";
  char *dir = make_temp_dir();
  char *p1 = write_file(dir, "puck.eom", rotating, strlen(rotating));
  char *out = check_output(p1);
  ck_assert_msg(strstr(out, "M/C/g split: not available: the Lagrangian has terms linear in the rates"),
                "%s", out);
  free(out);
  char *p2 = write_file(dir, "moving.eom", moving, strlen(moving));
  out = check_output(p2);
  ck_assert_msg(strstr(out, "M/C/g split: not available: the Lagrangian depends on the time t"), "%s",
                out);
  ck_assert_msg(strstr(out, "(energy function not conserved: the Lagrangian depends on the time t"),
                "%s", out);
  free(out);
  RunResult r = run_eomc("gen", p1, "-o", dir, NULL, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 0);
  run_free(&r);
  char hpath[4096];
  snprintf(hpath, sizeof hpath, "%s/puck.h", dir);
  char *h = read_file(hpath, NULL);
  ck_assert_ptr_nonnull(h);
  ck_assert_msg(strstr(h, "#define puck_HAS_SPLIT 0\n") && !strstr(h, "puck_coriolis"), "%s", h);
  ck_assert_msg(strstr(h, "void puck_momenta(") && strstr(h, "void puck_hamiltonian("), "%s", h);
  free(h);
  remove_tree(dir);
  free(dir), free(p1), free(p2);
}
END_TEST

/* Momenta and energy function where there is no split: the puck in the
** rotating frame, L = m ((x' - W y)^2 + (y' + W x)^2) / 2, has
** p = m (x' - W y, y' + W x) and the Jacobi integral
** h = m (x'^2 + y'^2) / 2 - m W^2 (x^2 + y^2) / 2 (Goldstein, Poole & Safko,
** Classical Mechanics, 3rd ed., 2002, §2.7 and §4.10; worked out by hand). */
static const char puck_driver[] =
  "#include <stdio.h>\n#include \"puck.h\"\n"
  "int main(void) {\n"
  "  double p[puck_NP], q[2] = {0.3, -0.7}, qd[2] = {1.1, 0.4}, pm[2], h;\n"
  "  puck_default_params(p);\n"
  "  puck_momenta(q, qd, p, pm);\n"
  "  puck_hamiltonian(q, qd, p, &h);\n"
  "  printf(\"%.17g %.17g %.17g\\n\", pm[0], pm[1], h);\n"
  "  return 0;\n}\n";

START_TEST(test_momenta_without_split) {
  static const char model[] =
    "model puck\ncoord x\ncoord y\nparam m = 0.2\nparam W = 1.5\n"
    "kinetic 1/2*m*((x' - W*y)^2 + (y' + W*x)^2)\n";
  char *dir = make_temp_dir();
  char *path = write_file(dir, "puck.eom", model, strlen(model));
  RunResult r = run_eomc("gen", path, "-o", dir, NULL, NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "%s", r.err);
  run_free(&r);
  char *drv = write_file(dir, "main.c", puck_driver, strlen(puck_driver));
  size_t n = strlen(dir) + 64;
  char *csrc = malloc(n), *dinc = malloc(n), *exe = malloc(n);
  sprintf(csrc, "%s/puck.c", dir);
  sprintf(dinc, "-I%s", dir);
  sprintf(exe, "%s/main", dir);
  char *argv[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror",
                  "-DEOM_NO_DESCRIPTOR", dinc, csrc, drv, "-o", exe, "-lm", NULL};
  r = run_argv(argv);
  ck_assert_msg(r.status == 0, "does not compile (%d): %s", r.status, r.err);
  run_free(&r);
  char *argv2[] = {exe, NULL};
  r = run_argv(argv2);
  ck_assert_int_eq(r.status, 0);
  double px, py, h;
  ck_assert_int_eq(sscanf(r.out, "%lf %lf %lf", &px, &py, &h), 3);
  const double m = 0.2, W = 1.5, x = 0.3, y = -0.7, vx = 1.1, vy = 0.4;
  ck_assert_msg(fabs(px - m * (vx - W * y)) < 1e-15, "p_x %.17g", px);
  ck_assert_msg(fabs(py - m * (vy + W * x)) < 1e-15, "p_y %.17g", py);
  double jacobi = m * (vx * vx + vy * vy) / 2 - m * W * W * (x * x + y * y) / 2;
  ck_assert_msg(fabs(h - jacobi) < 1e-15, "h %.17g, Jacobi integral %.17g", h, jacobi);
  run_free(&r);
  remove_tree(dir);
  free(dir), free(path), free(drv), free(csrc), free(dinc), free(exe);
}
END_TEST

/* ------------------------------------------------------------------ regressor */

/* Calls the generated regressor directly: prints Y pi + Q0 and P_inverse at
** random states (pi = the identified parameters' defaults). */
static const char regressor_driver[] =
  "#include <stdio.h>\n#include \"arm2_identify.h\"\n"
  "static double uniform(unsigned long long *s) {\n"
  "  *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;\n"
  "  return (double)(*s >> 11) / 4503599627370496.0 - 1.0;\n}\n"
  "int main(void) {\n"
  "  double p[arm2_identify_NP], q[2], qd[2], qdd[2], Y[2*arm2_identify_NI], Q0[2], Q[2];\n"
  "  unsigned long long seed = 99;\n  int k, i, j;\n"
  "  arm2_identify_default_params(p);\n"
  "  for (k = 0; k < 8; k++) {\n"
  "    double t = uniform(&seed);\n"
  "    for (i = 0; i < 2; i++) { q[i] = 3*uniform(&seed); qd[i] = 2*uniform(&seed); qdd[i] = 2*uniform(&seed); }\n"
  "    arm2_identify_regressor(t, q, qd, qdd, p, Y);\n"
  "    arm2_identify_regressor_offset(t, q, qd, qdd, p, Q0);\n"
  "    arm2_identify_inverse(t, q, qd, qdd, p, Q);\n"
  "    for (i = 0; i < 2; i++) {\n"
  "      double y = Q0[i];\n"
  "      for (j = 0; j < arm2_identify_NI; j++) y += Y[i*arm2_identify_NI + j] * p[arm2_identify_P_m1 + j];\n"
  "      printf(\"%.17g %.17g %.17g\\n\", y, Q[i], Q0[i]);\n"
  "    }\n"
  "  }\n"
  "  return 0;\n}\n";

/* Y pi + Q0 = P_inverse at random states, and Q0 = 0 here: every term of
** this arm's Lagrangian is linear in the identified parameters (the
** linearity of the inverse dynamics in the inertial parameters: Spong,
** Hutchinson & Vidyasagar 2006, §7.5 (from memory)). */
START_TEST(test_regressor_matches_inverse) {
  char *path = model_path("tests/models/arm2_identify.eom");
  char *dir = make_temp_dir();
  RunResult r = run_eomc("gen", path, "-o", dir, NULL, NULL, NULL, NULL);
  ck_assert_msg(r.status == 0, "eomc gen failed (%d): %s", r.status, r.err);
  ck_assert_msg(strstr(r.err, "eomc: note: identify: 8 parameters, 6 base parameters"), "%s", r.err);
  run_free(&r);
  char *drv = write_file(dir, "main.c", regressor_driver, strlen(regressor_driver));
  size_t n = strlen(dir) + 64;
  char *csrc = malloc(n), *dinc = malloc(n), *exe = malloc(n);
  sprintf(csrc, "%s/arm2_identify.c", dir);
  sprintf(dinc, "-I%s", dir);
  sprintf(exe, "%s/main", dir);
  char *argv[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror",
                  "-DEOM_NO_DESCRIPTOR", dinc, csrc, drv, "-o", exe, "-lm", NULL};
  r = run_argv(argv);
  ck_assert_msg(r.status == 0, "the regressor does not compile (%d): %s", r.status, r.err);
  run_free(&r);
  char *argv2[] = {exe, NULL};
  r = run_argv(argv2);
  ck_assert_int_eq(r.status, 0);
  const char *line = r.out;
  for (int k = 0; k < 16; k++) {
    double y, q, q0;
    ck_assert_int_eq(sscanf(line, "%lf %lf %lf", &y, &q, &q0), 3);
    ck_assert_msg(fabs(y - q) < 1e-12 * (1 + fabs(q)), "Y pi + Q0 = %.17g, P_inverse %.17g", y, q);
    ck_assert_msg(fabs(q0) < 1e-12, "offset %.17g", q0);
    line = strchr(line, '\n') + 1;
  }
  run_free(&r);
  remove_tree(dir);
  free(dir), free(path), free(drv), free(csrc), free(dinc), free(exe);
}
END_TEST

/* The planar two-link arm with the eight planar inertial parameters (m, mx,
** my, zz per link) has 6 base parameters when gravity acts in its plane and
** 4 when it moves in a horizontal plane: m1 has no effect, m2 is grouped into
** zz1 (with l1^2) and mx1 (with l1), and without gravity mx1 and my1 vanish
** from the dynamics (Gautier & Khalil, 1990, IEEE Trans. Robotics and
** Automation 6(3); Khalil & Dombre, Modeling, Identification and Control of
** Robots, 2002, ch. 12; the counts from memory). */
START_TEST(test_base_parameter_count) {
  char *path = model_path("tests/models/arm2_identify.eom");
  char *out = check_output(path);
  ck_assert_msg(strstr(out, "identify: 8 parameters, 6 base parameters"), "%s", out);
  ck_assert_msg(strstr(out, "  zz1 + 0.2025*m2\n"), "%s", out);
  ck_assert_msg(strstr(out, "  mx1 + 0.45*m2\n"), "%s", out);
  ck_assert_msg(strstr(out, "not identifiable: m1 (it has no effect on the dynamics)"), "%s", out);
  ck_assert_msg(strstr(out, "not identifiable on its own: m2"), "%s", out);
  free(out);

  /* the same arm in a horizontal plane */
  size_t len;
  char *text = read_file(path, &len);
  ck_assert_ptr_nonnull(text);
  char *g = strstr(text, "param g = 9.81");
  ck_assert_ptr_nonnull(g);
  memcpy(g, "param g = 0.00", 14);
  char *dir = make_temp_dir();
  char *flat = write_file(dir, "flat.eom", text, len);
  out = check_output(flat);
  ck_assert_msg(strstr(out, "identify: 8 parameters, 4 base parameters"), "%s", out);
  ck_assert_msg(strstr(out, "not identifiable: mx1 (it has no effect"), "%s", out);
  ck_assert_msg(strstr(out, "not identifiable: my1 (it has no effect"), "%s", out);
  free(out);
  remove_tree(dir);
  free(dir), free(flat), free(text), free(path);
}
END_TEST

/* A parameter that enters nonlinearly (a link length, squared in T) cannot
** be identified in regressor form: the error names the term. */
START_TEST(test_regressor_nonlinear_error) {
  static const char model[] =
    "coord a\nparam m = 2\nparam l = 0.5\nparam g = 9.81\nidentify m, l\n"
    "kinetic 1/2*m*l^2*a'^2\n"
    "potential -m*g*l*cos(a)\n";
  char *dir = make_temp_dir();
  char *path = write_file(dir, "pend.eom", model, strlen(model));
  RunResult r = run_eomc("gen", path, "-o", dir, NULL, NULL, NULL, NULL);
  ck_assert_int_eq(r.status, 1);
  ck_assert_msg(strstr(r.err, "pend.eom:6:1: error: the dynamics must be linear in the identified "
                              "parameters: this term is not linear in"), "%s", r.err);
  run_free(&r);
  remove_tree(dir);
  free(dir), free(path);
}
END_TEST

static Suite *control_suite(void) {
  Suite *s = suite_create("control");
  TCase *tc = tcase_create("control");
  tcase_set_timeout(tc, 600);
  tcase_add_test(tc, test_skew_planar3);
  tcase_add_test(tc, test_skew_six_axis);
  tcase_add_test(tc, test_two_link_closed_form);
  tcase_add_test(tc, test_split_with_friction);
  tcase_add_test(tc, test_kepler_cyclic);
  tcase_add_test(tc, test_driven_not_conservative);
  tcase_add_test(tc, test_no_split_reported);
  tcase_add_test(tc, test_momenta_without_split);
  tcase_add_test(tc, test_regressor_matches_inverse);
  tcase_add_test(tc, test_base_parameter_count);
  tcase_add_test(tc, test_regressor_nonlinear_error);
  suite_add_tcase(s, tc);
  return s;
}

int main(void) {
  SRunner *sr = srunner_create(control_suite());
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
