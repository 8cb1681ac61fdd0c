/*
** test_import.c — end to end: `eomc import` of robot descriptions (URDF,
** issue 18).
**
** The picking arm of examples/pick_arm3.urdf is imported, checked, built
** and compared at 100 pseudo-random states with a model of the same robot
** written by hand (tests/models/pick_arm3_hand.eom, its frames worked out
** on paper): M, f and P_inverse must agree to 1e-12 relative.  Both are
** ours; the body dynamics they share is checked elsewhere against recursive
** Newton–Euler (Featherstone, Rigid Body Dynamics Algorithms, 2008, ch. 5),
** so what this test checks is the reading of the description: URDF's
** frame conventions (origin xyz then roll-pitch-yaw about fixed axes,
** R = Rz(yaw) Ry(pitch) Rx(roll); joint axes in the joint frame; inertial
** origins and axes), as the URDF specification of the ROS project states
** them (common practice across the robotics trade).
**
** tests/bad_urdf/ is a catalogue of malformed descriptions; the first line
** of each says where its error must be and what it says.
*/
#include <check.h>
#include <dirent.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "testutil.h"

/* Every test builds into a private cache and work directory. */
static char *work;
static void setup(void) {
  work = make_temp_dir();
  setenv("EOMC_CACHE_DIR", work, 1);
}
static void teardown(void) {
  remove_tree(work);
  free(work);
}

/* dir/name, malloc'd (no Check assertion: also used while the suite is built) */
static char *path_in(const char *dir, const char *name) {
  char *p = malloc(strlen(dir) + strlen(name) + 2);
  if (!p) abort();
  sprintf(p, "%s/%s", dir, name);
  return p;
}

/* eomc import SRC -o OUT; returns the written text. */
static char *import(const char *src, const char *out) {
  char *argv[] = {(char *)eomc(), "import", (char *)src, "-o", (char *)out, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "eomc import %s failed (%d):\n%s", src, r.status, r.err);
  run_free(&r);
  char *text = read_file(out, NULL);
  ck_assert_ptr_nonnull(text);
  return text;
}

/* The imported model passes `eomc check`, and importing again gives the
** same text. */
START_TEST(import_checks_and_is_stable) {
  char *src = path_in(srcdir(), "examples/pick_arm3.urdf");
  char *a = path_in(work, "a.eom"), *b = path_in(work, "b.eom");
  char *ta = import(src, a), *tb = import(src, b);
  ck_assert_str_eq(ta, tb);
  char *argv[] = {(char *)eomc(), "check", a, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0 && r.err[0] == '\0', "eomc check (%d):\n%s", r.status, r.err);
  /* one coordinate per moving joint, named after it; the tool as a frame */
  ck_assert_msg(strstr(ta, "\ncoord yaw ") && strstr(ta, "\ncoord shoulder ") &&
                    strstr(ta, "\ncoord elbow ") && !strstr(ta, "coord gripper_mount"),
                "%s", ta);
  ck_assert_msg(strstr(ta, "\nframe gripper_frame = ") != NULL, "%s", ta);
  ck_assert_msg(strstr(ta, "# limits of shoulder: -1.9 .. 1.9 rad") != NULL, "%s", ta);
  run_free(&r);
  free(src), free(a), free(b), free(ta), free(tb);
}
END_TEST

static const char driver_src[] =
  "#include <stdio.h>\n#include <math.h>\n#include <eom/model.h>\n"
  "extern const struct eom_model pick_arm3_model, pick_arm3_hand_model;\n"
  "static unsigned long long seed = 2718281828ULL;\n"
  "static double uniform(void) {\n"
  "  seed = seed * 6364136223846793005ULL + 1442695040888963407ULL;\n"
  "  return (double)(seed >> 11) / 4503599627370496.0 - 1.0;\n}\n"
  "static double worst = 0;\n"
  "static void cmp(const double *a, const double *b, int n) {\n"
  "  int i; double s = 0;\n"
  "  for (i = 0; i < n; i++) s = fmax(s, fabs(b[i]));\n"
  "  for (i = 0; i < n; i++) if (!(fabs(a[i] - b[i]) <= worst * (1 + s))) worst = fabs(a[i] - b[i]) / (1 + s);\n"
  "}\n"
  "int main(void) {\n"
  "  const struct eom_model *a = &pick_arm3_model, *b = &pick_arm3_hand_model;\n"
  "  double pa[32], pb[32], q[3], qd[3], qdd[3], u[3], Ma[9], Mb[9], fa[3], fb[3], Qa[3], Qb[3];\n"
  "  int s, i;\n"
  "  if (a->nq != 3 || b->nq != 3 || a->np != b->np || a->nu != 3 || b->nu != 3) return 3;\n"
  "  for (i = 0; i < a->np; i++) { pa[i] = a->param_defaults[i]; pb[i] = b->param_defaults[i]; }\n"
  "  for (s = 0; s < 100; s++) {\n"
  "    for (i = 0; i < 3; i++) { q[i] = 3 * uniform(); qd[i] = 2 * uniform(); qdd[i] = 2 * uniform(); u[i] = 5 * uniform(); }\n"
  "    a->mass(q, pa, Ma); b->mass(q, pb, Mb); cmp(Ma, Mb, 9);\n"
  "    a->forcing(0, q, qd, u, pa, fa); b->forcing(0, q, qd, u, pb, fb); cmp(fa, fb, 3);\n"
  "    a->inverse(0, q, qd, qdd, pa, Qa); b->inverse(0, q, qd, qdd, pb, Qb); cmp(Qa, Qb, 3);\n"
  "  }\n"
  "  printf(\"worst %.3g\\n\", worst);\n"
  "  return 0;\n"
  "}\n";

static void gen(const char *model, const char *dir) {
  char *argv[] = {(char *)eomc(), "gen", (char *)model, "-o", (char *)dir, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "eomc gen %s failed (%d):\n%s", model, r.status, r.err);
  run_free(&r);
}

/* The imported arm against the hand-written one (see the header). */
START_TEST(imported_arm_matches_hand_model) {
  char *src = path_in(srcdir(), "examples/pick_arm3.urdf");
  char *mine = path_in(work, "pick_arm3.eom");
  char *hand = path_in(srcdir(), "tests/models/pick_arm3_hand.eom");
  free(import(src, mine));
  gen(mine, work);
  gen(hand, work);
  char *drv = write_file(work, "driver.c", driver_src, strlen(driver_src));
  char *ca = path_in(work, "pick_arm3.c"), *cb = path_in(work, "pick_arm3_hand.c");
  char *exe = path_in(work, "driver"), *inc = malloc(strlen(srcdir()) + 16);
  ck_assert_ptr_nonnull(inc);
  sprintf(inc, "-I%s/include", srcdir());
  char *argv[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror", inc,
                  ca, cb, drv, "-o", exe, "-lm", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s fails on the generated code (%d):\n%s", cc(), r.status, r.err);
  run_free(&r);
  char *run[] = {exe, NULL};
  r = run_argv(run);
  ck_assert_msg(r.status == 0, "driver failed (%d): %s", r.status, r.err);
  double worst = -1;
  ck_assert_int_eq(sscanf(r.out, "worst %lf", &worst), 1);
  ck_assert_msg(worst < 1e-12, "imported and hand-written arms differ by %g (relative)", worst);
  run_free(&r);
  free(src), free(mine), free(hand), free(drv), free(ca), free(cb), free(exe), free(inc);
}
END_TEST

/* ------------------------------------------------ the six-axis arm */

/* examples/picking_arm6.urdf is the arm of examples/picking_arm6.eom (its
** links placed by dh() there) written as a description.  Imported, it
** must give the same M, f, P_inverse and tool frame (position, rotation,
** geometric Jacobian and its bias) at 100 pseudo-random states, to 1e-12
** relative: both are ours, and the DH route is checked against recursive
** Newton–Euler elsewhere (Featherstone, Rigid Body Dynamics Algorithms,
** 2008, ch. 5); what this checks is that the description's frames (joint
** origins with rolls of a quarter turn, inertial axes turned against the
** link) are read as the DH table means them. */
static const char arm6_driver_src[] =
  "#include <stdio.h>\n#include <math.h>\n#include <eom/model.h>\n"
  "extern const struct eom_model arm6_urdf_model, picking_arm6_model;\n"
  "static unsigned long long seed = 1618033988ULL;\n"
  "static double uniform(void) {\n"
  "  seed = seed * 6364136223846793005ULL + 1442695040888963407ULL;\n"
  "  return (double)(seed >> 11) / 4503599627370496.0 - 1.0;\n}\n"
  "static double worst = 0;\n"
  "static void cmp(const double *a, const double *b, int n) {\n"
  "  int i; double s = 0;\n"
  "  for (i = 0; i < n; i++) s = fmax(s, fabs(b[i]));\n"
  "  for (i = 0; i < n; i++) if (!(fabs(a[i] - b[i]) <= worst * (1 + s))) worst = fabs(a[i] - b[i]) / (1 + s);\n"
  "}\n"
  "int main(void) {\n"
  "  const struct eom_model *a = &arm6_urdf_model, *b = &picking_arm6_model;\n"
  "  double q[6], qd[6], qdd[6], u[6], Ma[36], Mb[36], fa[6], fb[6], Qa[6], Qb[6];\n"
  "  double pa[3], pb[3], Ra[9], Rb[9], Ja[36], Jb[36], ba[6], bb[6];\n"
  "  int s, i;\n"
  "  if (a->nq != 6 || b->nq != 6 || a->nu != 6 || b->nu != 6 || a->nframes != 1 || b->nframes != 1) return 3;\n"
  "  for (s = 0; s < 100; s++) {\n"
  "    for (i = 0; i < 6; i++) { q[i] = 3 * uniform(); qd[i] = 2 * uniform(); qdd[i] = 2 * uniform(); u[i] = 40 * uniform(); }\n"
  "    a->mass(q, a->param_defaults, Ma); b->mass(q, b->param_defaults, Mb); cmp(Ma, Mb, 36);\n"
  "    a->forcing(0, q, qd, u, a->param_defaults, fa); b->forcing(0, q, qd, u, b->param_defaults, fb); cmp(fa, fb, 6);\n"
  "    a->inverse(0, q, qd, qdd, a->param_defaults, Qa); b->inverse(0, q, qd, qdd, b->param_defaults, Qb); cmp(Qa, Qb, 6);\n"
  "    a->frames[0](q, qd, a->param_defaults, pa, Ra, Ja, ba);\n"
  "    b->frames[0](q, qd, b->param_defaults, pb, Rb, Jb, bb);\n"
  "    cmp(pa, pb, 3); cmp(Ra, Rb, 9); cmp(Ja, Jb, 36); cmp(ba, bb, 6);\n"
  "  }\n"
  "  printf(\"worst %.3g\\n\", worst);\n"
  "  return 0;\n"
  "}\n";

/* + - * / in the body of the generated function NAME (a measure of its
** operations: both files come from the same emitter, so the counts
** compare like with like). */
static long count_ops(const char *code, const char *name) {
  char head[128];
  snprintf(head, sizeof head, " %s(", name);
  const char *b = strstr(code, head);
  ck_assert_msg(b != NULL, "no function %s in the generated code", name);
  b = strstr(b, "\n{");
  const char *e = b ? strstr(b, "\n}\n") : NULL;
  ck_assert_ptr_nonnull(e);
  long n = 0;
  for (const char *c = b; c < e; c++) n += *c == '+' || *c == '-' || *c == '*' || *c == '/';
  return n;
}

/* Compile the two generated files with a driver and return the worst
** relative difference it prints. */
static double run_driver(const char *ca, const char *cb, const char *src) {
  char *drv = write_file(work, "driver.c", src, strlen(src));
  char *exe = path_in(work, "driver"), *inc = malloc(strlen(srcdir()) + 16);
  ck_assert_ptr_nonnull(inc);
  sprintf(inc, "-I%s/include", srcdir());
  char *argv[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror", inc,
                  (char *)ca, (char *)cb, drv, "-o", exe, "-lm", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s fails on the generated code (%d):\n%s", cc(), r.status, r.err);
  run_free(&r);
  char *run[] = {exe, NULL};
  r = run_argv(run);
  ck_assert_msg(r.status == 0, "driver failed (%d): %s", r.status, r.err);
  double worst = -1;
  ck_assert_int_eq(sscanf(r.out, "worst %lf", &worst), 1);
  run_free(&r);
  free(drv), free(exe), free(inc);
  return worst;
}

START_TEST(imported_six_axis_arm_matches_dh_model) {
  char *src = path_in(srcdir(), "examples/picking_arm6.urdf");
  char *mine = path_in(work, "arm6_urdf.eom");
  char *hand = path_in(srcdir(), "examples/picking_arm6.eom");
  char *text = import(src, mine);
  /* quarter turns given as 1.5707963267948966 are written as pi/2, and the
  ** parcel (no inertia) as a point mass */
  ck_assert_msg(strstr(text, "rotx(pi/2)") && strstr(text, "rotx(-pi/2)") &&
                    !strstr(text, "1.5707963267948966"), "%s", text);
  ck_assert_msg(strstr(text, "\nbody parcel mass m_parcel at p_parcel + R_parcel*[0, 0, 0]\n"),
                "%s", text);
  char *argv[] = {(char *)eomc(), "gen", mine, "-o", work, "--prefix", "arm6_urdf", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0 && r.err[0] == '\0', "eomc gen (%d):\n%s", r.status, r.err);
  run_free(&r);
  gen(hand, work);
  char *ca = path_in(work, "arm6_urdf.c"), *cb = path_in(work, "picking_arm6.c");
  double worst = run_driver(ca, cb, arm6_driver_src);
  ck_assert_msg(worst < 1e-12, "imported and DH arms differ by %g (relative)", worst);
  /* The chain route: the imported arm's functions cost about what the DH
  ** model's do (measured 491/426 for M, 766/788 for f, 921/855 for the
  ** inverse), where the plain Lagrangian route costs ten times more on a
  ** six-axis spatial arm (measured on this class of arm, 8k operations for
  ** M and f together, GINAC-NOTES). */
  char *code_a = read_file(ca, NULL), *code_b = read_file(cb, NULL);
  ck_assert(code_a && code_b);
  static const char *const fns[] = {"mass", "forcing", "inverse"};
  for (int k = 0; k < 3; k++) {
    char na[64], nb[64];
    snprintf(na, sizeof na, "arm6_urdf_%s", fns[k]);
    snprintf(nb, sizeof nb, "picking_arm6_%s", fns[k]);
    long oa = count_ops(code_a, na), ob = count_ops(code_b, nb);
    ck_assert_msg(oa <= 1.3 * ob, "%s: %ld operations imported, %ld by DH", fns[k], oa, ob);
  }
  free(code_a), free(code_b);
  free(src), free(mine), free(hand), free(text), free(ca), free(cb);
}
END_TEST

/* ------------------------------------------------------------ the gantry */

/* examples/pallet_gantry.urdf: three prismatic axes (the lift's axis
** points down) and a wrist turning about the vertical.  M and f at 100
** pseudo-random states against Lagrange's equations worked by hand
** (Goldstein, Poole and Safko, Classical Mechanics, 3rd ed., 2002, §1.4):
** with the wrist's and gripper's mass centres at horizontal offsets r_k
** (wrist axes) from the wrist axis, e(th) = dRz(th)/dth r_k,
**   M = diag(m_x, m_y, m_s, Izz_w + Izz_g + sum m_k |r_k|^2) plus
**   M_x,th = sum m_k e_x,  M_y,th = sum m_k e_y  (and symmetric),
**   f_x = u_x - b_x x' + sum m_k (Rz(th) r_k)_x th'^2,  f_y likewise,
**   f_s = u_s - b_s s' + (m_ram + m_w + m_g) g,  f_th = u_th - b_th th',
** m_x the mass of everything the travel moves, and so on. */
static const char gantry_driver_src[] =
  "#include <stdio.h>\n#include <math.h>\n#include <eom/model.h>\n"
  "extern const struct eom_model pallet_gantry_model;\n"
  "static unsigned long long seed = 1414213562ULL;\n"
  "static double uniform(void) {\n"
  "  seed = seed * 6364136223846793005ULL + 1442695040888963407ULL;\n"
  "  return (double)(seed >> 11) / 4503599627370496.0 - 1.0;\n}\n"
  "static double worst = 0;\n"
  "static void cmp(const double *a, const double *b, int n) {\n"
  "  int i; double s = 0;\n"
  "  for (i = 0; i < n; i++) s = fmax(s, fabs(b[i]));\n"
  "  for (i = 0; i < n; i++) if (!(fabs(a[i] - b[i]) <= worst * (1 + s))) worst = fabs(a[i] - b[i]) / (1 + s);\n"
  "}\n"
  "int main(void) {\n"
  "  const struct eom_model *a = &pallet_gantry_model;\n"
  "  const double mb = 85, mc = 24, mr = 13, mw = 3.1, mg = 1.6, g = 9.81;\n"
  "  const double bx = 40, by = 25, bs = 60, bt = 0.4, izz = 0.005 + 0.0045;\n"
  "  double rx[2], ry[2], m[2] = {3.1, 1.6};\n"
  "  double q[4], qd[4], u[4], M[16], Mh[16], f[4], fh[4];\n"
  "  int s, i, k;\n"
  "  rx[0] = 0.04; ry[0] = 0;\n"
  "  rx[1] = cos(0.5) * 0.02 - sin(0.5) * 0.01; ry[1] = sin(0.5) * 0.02 + cos(0.5) * 0.01;\n"
  "  if (a->nq != 4 || a->nu != 4) return 3;\n"
  "  for (s = 0; s < 100; s++) {\n"
  "    double c, sn, ex = 0, ey = 0, px = 0, py = 0, r2 = 0;\n"
  "    for (i = 0; i < 4; i++) { q[i] = 3 * uniform(); qd[i] = 2 * uniform(); u[i] = 300 * uniform(); }\n"
  "    c = cos(q[3]); sn = sin(q[3]);\n"
  "    for (k = 0; k < 2; k++) {\n"
  "      ex += m[k] * (-sn * rx[k] - c * ry[k]); ey += m[k] * (c * rx[k] - sn * ry[k]);\n"
  "      px += m[k] * (c * rx[k] - sn * ry[k]); py += m[k] * (sn * rx[k] + c * ry[k]);\n"
  "      r2 += m[k] * (rx[k] * rx[k] + ry[k] * ry[k]);\n"
  "    }\n"
  "    for (i = 0; i < 16; i++) Mh[i] = 0;\n"
  "    Mh[0] = mb + mc + mr + mw + mg; Mh[5] = mc + mr + mw + mg; Mh[10] = mr + mw + mg;\n"
  "    Mh[15] = izz + r2; Mh[3] = Mh[12] = ex; Mh[7] = Mh[13] = ey;\n"
  "    fh[0] = u[0] - bx * qd[0] + px * qd[3] * qd[3];\n"
  "    fh[1] = u[1] - by * qd[1] + py * qd[3] * qd[3];\n"
  "    fh[2] = u[2] - bs * qd[2] + (mr + mw + mg) * g;\n"
  "    fh[3] = u[3] - bt * qd[3];\n"
  "    a->mass(q, a->param_defaults, M); cmp(M, Mh, 16);\n"
  "    a->forcing(0, q, qd, u, a->param_defaults, f); cmp(f, fh, 4);\n"
  "  }\n"
  "  printf(\"worst %.3g\\n\", worst);\n"
  "  return 0;\n"
  "}\n";

START_TEST(imported_gantry_matches_hand_equations) {
  char *src = path_in(srcdir(), "examples/pallet_gantry.urdf");
  char *a = path_in(work, "pallet_gantry.eom"), *b = path_in(work, "again.eom");
  char *ta = import(src, a), *tb = import(src, b);
  ck_assert_str_eq(ta, tb);
  ck_assert_msg(strstr(ta, "\ncoord lift ") && strstr(ta, "R_carriage*[0, 0, -lift]") &&
                    strstr(ta, "# limits of lift: 0 .. 1.4 m"), "%s", ta);
  char *argv[] = {(char *)eomc(), "check", a, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0 && r.err[0] == '\0', "eomc check (%d):\n%s", r.status, r.err);
  run_free(&r);
  gen(a, work);
  char *ca = path_in(work, "pallet_gantry.c");
  /* one model: the driver is linked with it alone */
  char *drv = write_file(work, "gdriver.c", gantry_driver_src, strlen(gantry_driver_src));
  char *exe = path_in(work, "gdriver"), *inc = malloc(strlen(srcdir()) + 16);
  ck_assert_ptr_nonnull(inc);
  sprintf(inc, "-I%s/include", srcdir());
  char *cc_argv[] = {(char *)cc(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror", inc,
                     ca, drv, "-o", exe, "-lm", NULL};
  r = run_argv(cc_argv);
  ck_assert_msg(r.status == 0, "%s fails on the generated code (%d):\n%s", cc(), r.status, r.err);
  run_free(&r);
  char *run[] = {exe, NULL};
  r = run_argv(run);
  ck_assert_msg(r.status == 0, "driver failed (%d): %s", r.status, r.err);
  double worst = -1;
  ck_assert_int_eq(sscanf(r.out, "worst %lf", &worst), 1);
  ck_assert_msg(worst < 1e-12, "the imported gantry differs from the hand equations by %g", worst);
  run_free(&r);
  free(src), free(a), free(b), free(ta), free(tb), free(ca), free(drv), free(exe), free(inc);
}
END_TEST

/* ------------------------------------------------------------ catalogue */

static char **bad_files;
static int bad_count;

static int by_name(const void *a, const void *b) {
  return strcmp(*(char *const *)a, *(char *const *)b);
}

static void list_bad_files(void) {
  char *dir = path_in(srcdir(), "tests/bad_urdf");
  DIR *d = opendir(dir);
  struct dirent *e;
  bad_count = 0;
  bad_files = calloc(64, sizeof *bad_files);
  while (d && bad_files && (e = readdir(d)) != NULL && bad_count < 64) {
    size_t n = strlen(e->d_name);
    if (n > 5 && strcmp(e->d_name + n - 5, ".urdf") == 0) bad_files[bad_count++] = path_in(dir, e->d_name);
  }
  if (d) closedir(d);
  if (bad_count) qsort(bad_files, (size_t)bad_count, sizeof *bad_files, by_name);
  free(dir);
}

/* Each malformed description: exit 1 and its error at the expected place. */
START_TEST(bad_catalogue) {
  const char *file = bad_files[_i];
  char *text = read_file(file, NULL);
  ck_assert_ptr_nonnull(text);
  char where[32], what[256];
  ck_assert_msg(sscanf(text, "<!-- expect: %31[0-9:] %255[^\n]", where, what) == 2,
                "%s: no expect line", file);
  char *end = strstr(what, " -->");
  ck_assert_ptr_nonnull(end);
  *end = '\0';
  char *out = path_in(work, "out.eom");
  char *argv[] = {(char *)eomc(), "import", (char *)file, "-o", out, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 1, "%s: status %d\n%s", file, r.status, r.err);
  char want[512];
  snprintf(want, sizeof want, "%s %s", where, "error: ");
  const char *at = strstr(r.err, want);
  ck_assert_msg(at != NULL, "%s: no error at %s in:\n%s", file, where, r.err);
  const char *eol = strchr(at, '\n');
  ck_assert_msg(strstr(at, what) != NULL && (!eol || strstr(at, what) < eol),
                "%s: want '%s' at %s in:\n%s", file, what, where, r.err);
  FILE *f = fopen(out, "r");
  ck_assert_msg(f == NULL, "%s: a model was written despite the error", file);
  run_free(&r);
  free(text), free(out);
}
END_TEST

START_TEST(usage_errors) {
  char *argv[] = {(char *)eomc(), "import", NULL};
  RunResult r = run_argv(argv);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
  char *argv2[] = {(char *)eomc(), "import", "/nonexistent/robot.urdf", NULL};
  r = run_argv(argv2);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
}
END_TEST

static Suite *import_suite(void) {
  Suite *s = suite_create("import");
  TCase *tc = tcase_create("import");
  /* building two models: ~3 s plain */
  tcase_set_timeout(tc, 120);
  tcase_add_checked_fixture(tc, setup, teardown);
  tcase_add_test(tc, import_checks_and_is_stable);
  tcase_add_test(tc, imported_arm_matches_hand_model);
  tcase_add_test(tc, imported_six_axis_arm_matches_dh_model);
  tcase_add_test(tc, imported_gantry_matches_hand_equations);
  tcase_add_test(tc, usage_errors);
  suite_add_tcase(s, tc);
  TCase *bad = tcase_create("bad_urdf");
  tcase_set_timeout(bad, 30);
  tcase_add_checked_fixture(bad, setup, teardown);
  list_bad_files();
  tcase_add_loop_test(bad, bad_catalogue, 0, bad_count);
  suite_add_tcase(s, bad);
  return s;
}

int main(int argc, char **argv) {
  return run_test_main(argc, argv, import_suite);
}
