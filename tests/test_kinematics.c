/*
** test_kinematics.c — end to end: output Jacobians and frames (issue 18),
** through `eomc gen`, the generated C compiled with -std=c99 -pedantic
** -Wall -Wextra -Werror and run.
**
** A driver (below) evaluates the generated functions at pseudo-random
** states and compares them with central differences of the generated
** outputs themselves (the definition of a derivative, common practice):
**   J against dy/dq,  J' qd against d/ds [J(q + s qd) qd] at s = 0,
**   a frame's angular rows against the axial vector of R' R^T, R' taken
**   along qd (Spong, Hutchinson & Vidyasagar, Robot Modeling and Control,
**   2006, §4.1-4.2, [w]x = R' R^T),
** and prints the largest relative errors.  The planar arm's frame Jacobian
** is also checked against its closed form (same book, §4.6 the planar
** two-link example's Jacobian):
**   J = [[-l1 s1 - l2 s12, -l2 s12], [l1 c1 + l2 c12, l2 c12], [0, 0],
**        [0, 0], [0, 0], [1, 1]].
**
** Environment: EOMC the binary, SRCDIR the sources, CC the C compiler.
*/
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "testutil.h"

static const char driver_src[] =
  "#include <stdio.h>\n#include <math.h>\n#include <eom/model.h>\n"
  "extern const struct eom_model MODEL;\n"
  "#define MAXQ 16\n#define MAXY 64\n"
  "static unsigned long long seed = 12345;\n"
  "static double uniform(void) {\n"
  "  seed = seed * 6364136223846793005ULL + 1442695040888963407ULL;\n"
  "  return (double)(seed >> 11) / 4503599627370496.0 - 1.0;\n}\n"
  "static double err(double a, double b, double scale) { return fabs(a - b) / (1.0 + scale); }\n"
  "int main(void) {\n"
  "  const struct eom_model *m = &MODEL;\n"
  "  static double p[64], q[MAXQ], qd[MAXQ], u[MAXQ], qs[MAXQ], y[MAXY], yp[MAXY], ym[MAXY];\n"
  "  static double J[MAXY * MAXQ], Jp[MAXY * MAXQ], Jm[MAXY * MAXQ], b[MAXY];\n"
  "  static double pos[3], R[9], Rp[9], Rm[9], F[6 * MAXQ], Fp[6 * MAXQ], Fm[6 * MAXQ], Fb[6];\n"
  "  double e_jac = 0, e_bias = 0, e_pose = 0, e_flin = 0, e_fang = 0, e_fbias = 0, h = 1e-6;\n"
  "  int n, i, j, k, s, f, rows = 0;\n"
  "  if (m->abi != EOM_MODEL_ABI || m->nq > MAXQ || m->ny > MAXY || m->np > 64) return 3;\n"
  "  n = m->nq;\n"
  "  for (i = 0; i < m->np; i++) p[i] = m->param_defaults[i];\n"
  "  for (i = 0; i < m->nu; i++) u[i] = 0.3;\n"
  "  printf(\"kinematic\");\n"
  "  for (i = 0; i < m->ny; i++) printf(\" %d\", m->output_kinematic ? m->output_kinematic[i] : 0);\n"
  "  printf(\"\\nframes %d\\n\", m->nframes);\n"
  "  for (s = 0; s < 50; s++) {\n"
  "    for (i = 0; i < n; i++) { q[i] = 3 * uniform(); qd[i] = 2 * uniform(); }\n"
  "    if (m->output_jacobian) {\n"
  "      m->output_jacobian(q, p, J); m->output_bias(q, qd, p, b);\n"
  "      for (j = 0; j < n; j++) {\n"
  "        for (i = 0; i < n; i++) qs[i] = q[i];\n"
  "        qs[j] = q[j] + h; m->outputs(0.0, qs, qd, u, p, yp);\n"
  "        qs[j] = q[j] - h; m->outputs(0.0, qs, qd, u, p, ym);\n"
  "        for (k = 0; k < m->ny; k++) {\n"
  "          double d = (yp[k] - ym[k]) / (2 * h);\n"
  "          if (!m->output_kinematic[k]) { if (!isnan(J[k * n + j])) return 5; continue; }\n"
  "          if (err(J[k * n + j], d, fabs(d)) > e_jac) e_jac = err(J[k * n + j], d, fabs(d));\n"
  "        }\n"
  "      }\n"
  "      for (i = 0; i < n; i++) qs[i] = q[i] + h * qd[i];\n"
  "      m->output_jacobian(qs, p, Jp);\n"
  "      for (i = 0; i < n; i++) qs[i] = q[i] - h * qd[i];\n"
  "      m->output_jacobian(qs, p, Jm);\n"
  "      for (k = 0; k < m->ny; k++) {\n"
  "        double d = 0;\n"
  "        if (!m->output_kinematic[k]) { if (!isnan(b[k])) return 5; continue; }\n"
  "        rows++;\n"
  "        for (j = 0; j < n; j++) d += (Jp[k * n + j] - Jm[k * n + j]) / (2 * h) * qd[j];\n"
  "        if (err(b[k], d, fabs(d)) > e_bias) e_bias = err(b[k], d, fabs(d));\n"
  "      }\n"
  "    }\n"
  "    m->outputs(0.0, q, qd, u, p, y);\n"
  "    for (f = 0; f < m->nframes; f++) {\n"
  "      const double *yf = y + m->frame_outputs[f];\n"
  "      m->frames[f](q, qd, p, pos, R, F, Fb);\n"
  "      if (s == 0) {\n"
  "        printf(\"frameJ %s\", m->frame_names[f]);\n"
  "        for (i = 0; i < n; i++) printf(\" %.17g\", q[i]);\n"
  "        for (i = 0; i < 6 * n; i++) printf(\" %.17g\", F[i]);\n"
  "        printf(\"\\n\");\n"
  "      }\n"
  "      for (i = 0; i < 3; i++) if (fabs(pos[i] - yf[i]) > e_pose) e_pose = fabs(pos[i] - yf[i]);\n"
  "      for (i = 0; i < 9; i++) if (fabs(R[i] - yf[3 + i]) > e_pose) e_pose = fabs(R[i] - yf[3 + i]);\n"
  "      for (j = 0; j < n; j++) {\n"
  "        double pp[3], pm[3];\n"
  "        for (i = 0; i < n; i++) qs[i] = q[i];\n"
  "        qs[j] = q[j] + h; m->frames[f](qs, qd, p, pp, Rp, Fp, Fb);\n"
  "        qs[j] = q[j] - h; m->frames[f](qs, qd, p, pm, Rm, Fm, Fb);\n"
  "        for (i = 0; i < 3; i++) {\n"
  "          double d = (pp[i] - pm[i]) / (2 * h);\n"
  "          if (err(F[i * n + j], d, fabs(d)) > e_flin) e_flin = err(F[i * n + j], d, fabs(d));\n"
  "        }\n"
  "        {\n"
  "          /* [w]x = dR/dq_j R^T: w = (S21, S02, S10), each from both skew halves */\n"
  "          double S[9], w[3];\n"
  "          int a, c;\n"
  "          for (a = 0; a < 3; a++) for (c = 0; c < 3; c++) {\n"
  "            S[3 * a + c] = 0;\n"
  "            for (k = 0; k < 3; k++) S[3 * a + c] += (Rp[3 * a + k] - Rm[3 * a + k]) / (2 * h) * R[3 * c + k];\n"
  "          }\n"
  "          w[0] = (S[7] - S[5]) / 2; w[1] = (S[2] - S[6]) / 2; w[2] = (S[3] - S[1]) / 2;\n"
  "          for (i = 0; i < 3; i++)\n"
  "            if (err(F[(3 + i) * n + j], w[i], fabs(w[i])) > e_fang) e_fang = err(F[(3 + i) * n + j], w[i], fabs(w[i]));\n"
  "        }\n"
  "      }\n"
  "      m->frames[f](q, qd, p, pos, R, F, Fb);\n"
  "      for (i = 0; i < n; i++) qs[i] = q[i] + h * qd[i];\n"
  "      m->frames[f](qs, qd, p, pos, Rp, Fp, yp);\n"
  "      for (i = 0; i < n; i++) qs[i] = q[i] - h * qd[i];\n"
  "      m->frames[f](qs, qd, p, pos, Rm, Fm, ym);\n"
  "      for (i = 0; i < 6; i++) {\n"
  "        double d = 0;\n"
  "        for (j = 0; j < n; j++) d += (Fp[i * n + j] - Fm[i * n + j]) / (2 * h) * qd[j];\n"
  "        if (err(Fb[i], d, fabs(d)) > e_fbias) e_fbias = err(Fb[i], d, fabs(d));\n"
  "      }\n"
  "    }\n"
  "  }\n"
  "  printf(\"rows %d\\nerrors %.3g %.3g %.3g %.3g %.3g %.3g\\n\", rows / 50, e_jac, e_bias, e_pose,\n"
  "         e_flin, e_fang, e_fbias);\n"
  "  return 0;\n"
  "}\n";

typedef struct Built {
  char *dir, *exe;
} Built;

/* Generate `rel` (a path under the sources) and compile it with the driver. */
static Built build(const char *rel, const char *prefix) {
  Built b;
  char model[1024];
  snprintf(model, sizeof model, "%s/%s", srcdir(), rel);
  b.dir = make_temp_dir();
  char *gen[] = {(char *)eomc(), "gen", model, "-o", b.dir, NULL};
  RunResult r = run_argv(gen);
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

static char *drive(Built *b) {
  char *argv[] = {b->exe, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "driver failed (%d): %s", r.status, r.err);
  char *out = r.out;
  r.out = NULL;
  run_free(&r);
  return out;
}

static void built_free(Built *b) {
  remove_tree(b->dir);
  free(b->dir), free(b->exe);
}

/* The numbers after `label` at the start of a line. */
static int numbers_after(const char *out, const char *label, double *v, int max) {
  const char *s = strstr(out, label);
  ck_assert_msg(s != NULL, "no '%s' in:\n%s", label, out);
  return read_numbers(s + strlen(label), v, max);
}

/* Central differences with h = 1e-6 are good to about 1e-9 relative
** (truncation h^2, rounding eps/h): 1e-6 leaves room and still catches any
** wrong term. */
static void check_errors(const char *out, int expect_frames) {
  double e[6];
  static const char *const what[] = {"output Jacobian", "output bias", "frame pose vs y",
                                     "frame linear rows", "frame angular rows", "frame bias"};
  ck_assert_int_eq(numbers_after(out, "errors ", e, 6), 6);
  for (int i = 0; i < 6; i++) {
    if (!expect_frames && i >= 2) break;
    ck_assert_msg(e[i] < (i == 2 ? 1e-14 : 1e-6), "%s off by %g:\n%s", what[i], e[i], out);
  }
}

START_TEST(planar_arm_frame_matches_closed_form) {
  Built b = build("tests/models/arm2_frames.eom", "arm2_frames");
  char *out = drive(&b);
  /* y = tip (12 entries), reach, tip_speed: all but the last are y(q) */
  ck_assert_msg(strstr(out, "kinematic 1 1 1 1 1 1 1 1 1 1 1 1 1 0\n") != NULL, "%s", out);
  ck_assert_msg(strstr(out, "frames 1\n") != NULL, "%s", out);
  ck_assert_msg(strstr(out, "rows 13\n") != NULL, "%s", out);
  check_errors(out, 1);
  double v[2 + 12];
  ck_assert_int_eq(numbers_after(out, "frameJ tip ", v, 14), 14);
  double l1 = 0.7, l2 = 0.45, q1 = v[0], q2 = v[1], *J = v + 2;
  double want[12] = {-l1 * sin(q1) - l2 * sin(q1 + q2), -l2 * sin(q1 + q2),
                     l1 * cos(q1) + l2 * cos(q1 + q2), l2 * cos(q1 + q2),
                     0, 0, 0, 0, 0, 0, 1, 1};
  for (int i = 0; i < 12; i++)
    ck_assert_msg(fabs(J[i] - want[i]) < 1e-13, "J[%d] = %.17g, closed form %.17g", i, J[i],
                  want[i]);
  free(out);
  built_free(&b);
}
END_TEST

/* A spatial arm with offsets and a three-roll wrist: every row of the tool
** frame's Jacobian and bias against differences. */
START_TEST(six_axis_tool_frame_matches_differences) {
  Built b = build("examples/picking_arm6.eom", "picking_arm6");
  char *out = drive(&b);
  ck_assert_msg(strstr(out, "frames 1\n") != NULL, "%s", out);
  check_errors(out, 1);
  free(out);
  built_free(&b);
}
END_TEST

/* Plain outputs only (no frame): the Jacobian of scalar outputs. */
START_TEST(scalar_outputs_of_a_body_model) {
  Built b = build("examples/arm2_body.eom", "arm2_body");
  char *out = drive(&b);
  ck_assert_msg(strstr(out, "frames 0\n") != NULL, "%s", out);
  check_errors(out, 0);
  free(out);
  built_free(&b);
}
END_TEST

/* A frame that moves with time or with the rates is refused with its place. */
START_TEST(frame_must_depend_on_coordinates_only) {
  static const struct { const char *text, *want; } cases[] = {
    {"coord q\nkinetic q'^2/2\nframe f = dh(q, 0, t, 0)\n", "3:7: error: a frame's transform must depend on the coordinates and parameters only"},
    {"coord q\nkinetic q'^2/2\nframe f = dh(q', 0, 1, 0)\n", "3:11: error: a frame's transform must depend on the coordinates"},
    {"coord q\ninput u\nkinetic q'^2/2\nframe f = dh(q, u, 1, 0)\n", "4:11: error: a frame's transform must not depend on the input 'u'"},
    {"coord q\nkinetic q'^2/2\nframe f = rotz(q)\n", "3:11: error: a frame's transform must be a 4x4 matrix, not 3x3"},
    {"coord q\nkinetic q'^2/2\nframe f = dh(q, 0, 1, 0)\noutput g = f\n", "4:12: error: 'f' is an output"},
  };
  char *dir = make_temp_dir();
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    char *path = write_file(dir, "bad.eom", cases[i].text, strlen(cases[i].text));
    char *argv[] = {(char *)eomc(), "gen", path, "-o", dir, NULL};
    RunResult r = run_argv(argv);
    ck_assert_msg(r.status == 1, "case %zu: status %d\n%s", i, r.status, r.err);
    ck_assert_msg(strstr(r.err, cases[i].want) != NULL, "case %zu: want '%s' in:\n%s", i,
                  cases[i].want, r.err);
    run_free(&r);
    free(path);
  }
  remove_tree(dir);
  free(dir);
}
END_TEST

static Suite *kinematics_suite(void) {
  Suite *s = suite_create("kinematics");
  TCase *tc = tcase_create("jacobians");
  /* each test compiles a model: ~1-3 s plain, far more under sanitizers */
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, planar_arm_frame_matches_closed_form);
  tcase_add_test(tc, six_axis_tool_frame_matches_differences);
  tcase_add_test(tc, scalar_outputs_of_a_body_model);
  tcase_add_test(tc, frame_must_depend_on_coordinates_only);
  suite_add_tcase(s, tc);
  return s;
}

int main(void) {
  SRunner *sr = srunner_create(kinematics_suite());
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
