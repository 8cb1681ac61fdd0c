/*
** test_constraints.c — holonomic constraints end to end: `eomc sim`,
** `eomc modes` and `eomc gen` on the constrained examples (Cartesian
** pendulum, compressor slider-crank, barrier four-bar) and on small models
** written here, checked against closed-form mechanics: the angle pendulum,
** the rod tension, the slider-crank position formula, the Grashof
** condition and the four-bar's limit angles by the law of cosines.
** The binary is $EOMC, the sources $SRCDIR; generated objects go to a
** private cache directory ($EOMC_CACHE_DIR).
*/
#include <check.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "testutil.h"

static const double PI = 3.141592653589793238462643383279502884;

/* ------------------------------------------------------------ pendulum */

/* The Cartesian pendulum example and a pendulum written with its swing angle
** are the same Lagrangian system in two sets of coordinates (common
** practice), so x = L sin(theta), y = -L cos(theta) at all times. */
static const char angle_pendulum[] =
  "# the tool bag of examples/cartesian_pendulum.eom, by its swing angle\n"
  "coord theta [rad]\n"
  "param m = 0.65 [kg]\nparam L = 0.85 [m]\nparam g = 9.81 [m/s^2]\n"
  "kinetic 1/2*m*L^2*theta'^2\n"
  "potential -m*g*L*cos(theta)\n"
  "initial theta = 0.6\n";

START_TEST(cartesian_matches_angle_pendulum) {
  const double L = 0.85, th0 = 0.6;
  char *angle_model =
      write_file(scratch_dir(), "angle_pendulum.eom", angle_pendulum, strlen(angle_pendulum));
  CsvTable a = sim_csv(angle_model, scratch_path("angle.csv"), "--until", "10", "--step", "0.01",
                       "--rtol", "1e-12", "--atol", "1e-13", NULL);
  CsvTable c = sim_csv(example_file("cartesian_pendulum.eom"), scratch_path("cart.csv"), "--until",
                       "10", "--step", "0.01", "--rtol", "1e-12", "--atol", "1e-13",
                       set_param_arg("x", L * sin(th0)), set_param_arg("y", -L * cos(th0)), NULL);
  ck_assert_int_eq(a.nrows, 1001);
  ck_assert_int_eq(c.nrows, a.nrows);
  int th = csv_col(&a, "theta"), thd = csv_col(&a, "theta'");
  int x = csv_col(&c, "x"), y = csv_col(&c, "y"), xd = csv_col(&c, "x'"), yd = csv_col(&c, "y'");
  double worst = 0, worst_rate = 0;
  for (int i = 0; i < a.nrows; i++) {
    ck_assert(csv_at(&a, i, 0) == csv_at(&c, i, 0));
    double theta = csv_at(&a, i, th), w = csv_at(&a, i, thd);
    worst = fmax(worst, fabs(csv_at(&c, i, x) - L * sin(theta)));
    worst = fmax(worst, fabs(csv_at(&c, i, y) + L * cos(theta)));
    worst_rate = fmax(worst_rate, fabs(csv_at(&c, i, xd) - L * cos(theta) * w));
    worst_rate = fmax(worst_rate, fabs(csv_at(&c, i, yd) - L * sin(theta) * w));
  }
  ck_assert_msg(worst < 1e-8, "positions differ by %.3g", worst);
  ck_assert_msg(worst_rate < 1e-7, "rates differ by %.3g", worst_rate);
  csv_free(&a);
  csv_free(&c);
  free(angle_model);
}
END_TEST

/* Rod tension of a pendulum, T = m (g cos(theta) + L theta'^2) (the radial
** equation of motion; common textbook result).  With phi = x^2 + y^2 - L^2
** the constraint force is +G^T lambda = 2 lambda (x, y), which must be the
** tension pulling the bag towards the anchor: -T (x, y)/L, so T = -2 L lambda
** and lambda < 0 (our sign convention, docs/language.md). */
START_TEST(pendulum_rod_tension_from_lambda) {
  const double m = 0.65, L = 0.85, g = 9.81;
  CsvTable c = sim_csv(example_file("cartesian_pendulum.eom"), scratch_path("cart.csv"), "--until",
                       "4", "--step", "0.01", NULL);
  int x = csv_col(&c, "x"), y = csv_col(&c, "y"), xd = csv_col(&c, "x'"), yd = csv_col(&c, "y'");
  int lam = csv_col(&c, "lambda1");
  ck_assert_int_eq(lam, c.ncols - 3); /* docs/runtime.md's order: ..., multipliers, T, V */
  for (int i = 0; i < c.nrows; i++) {
    double X = csv_at(&c, i, x), Y = csv_at(&c, i, y), Xd = csv_at(&c, i, xd),
           Yd = csv_at(&c, i, yd);
    double theta = atan2(X, -Y), w = (X * Yd - Y * Xd) / (L * L);
    double tension = m * (g * cos(theta) + L * w * w), l = csv_at(&c, i, lam);
    ck_assert_msg(l < 0, "lambda %.17g at row %d", l, i);
    ck_assert_msg(fabs(-2 * L * l - tension) <= 1e-9 * tension, "row %d: -2 L lambda %.17g, T %.17g",
                  i, -2 * L * l, tension);
    /* the force vector itself: +G^T lambda against -T r/L */
    ck_assert(fabs(2 * l * X + tension * X / L) <= 1e-9 * tension);
    ck_assert(fabs(2 * l * Y + tension * Y / L) <= 1e-9 * tension);
  }
  csv_free(&c);
}
END_TEST

/* Small swings of a pendulum: omega = sqrt(g / L) (common textbook result),
** through the tangent-space linearization of the Cartesian model. */
START_TEST(pendulum_modes_on_the_constraint) {
  char *argv[] = {(char *)eomc(), "modes", example_file("cartesian_pendulum.eom"), "--at",
                  "x=0", "--at", "y=-0.8", "--json", NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  const char *s = strstr(r.out, "\"omega_rad_s\": ");
  ck_assert_msg(s != NULL, "%s", r.out);
  double omega = strtod(s + strlen("\"omega_rad_s\": "), NULL);
  ck_assert_msg(fabs(omega - sqrt(9.81 / 0.85)) < 1e-7 * omega, "omega %.12g", omega);
  ck_assert_msg(strstr(s + 1, "\"omega_rad_s\": ") == NULL, "one mode only:\n%s", r.out);
  run_free(&r);
}
END_TEST

/* --------------------------------------------------------------- four-bar */

typedef struct Linkage {
  double a, b, c, e; /* ground, crank, coupler, rocker */
} Linkage;

static double loop_residual(const Linkage *k, double t2, double t3, double t4) {
  double rx = k->b * cos(t2) + k->c * cos(t3) - k->a - k->e * cos(t4);
  double ry = k->b * sin(t2) + k->c * sin(t3) - k->e * sin(t4);
  return fmax(fabs(rx), fabs(ry));
}

/* The barrier linkage driven by its motor for 20 s: the loop-closure
** residual, computed here from the link lengths, stays below 1e-10.  Without
** projection the Baumgarte term alone holds it far closer than no
** correction at all (Baumgarte, 1972, Comput. Methods Appl. Mech. Eng. 1). */
START_TEST(fourbar_residual_stays_small) {
  const Linkage k = {0.30, 0.08, 0.32, 0.18};
  const char *model = example_file("barrier_fourbar.eom"), *out = scratch_path("bar.csv");
  CsvTable t[3];
  t[0] = sim_csv(model, out, "--until", "20", "--step", "0.01", "--set", "tau=5", NULL);
  t[1] = sim_csv(model, out, "--until", "20", "--step", "0.01", "--set", "tau=5", "--no-projection",
                 NULL);
  t[2] = sim_csv(model, out, "--until", "20", "--step", "0.01", "--set", "tau=5", "--no-projection",
                 "--baumgarte", "0,0", NULL);
  double worst[3] = {0, 0, 0};
  for (int run = 0; run < 3; run++) {
    int t2 = csv_col(&t[run], "th2"), t3 = csv_col(&t[run], "th3"), t4 = csv_col(&t[run], "th4");
    for (int i = 0; i < t[run].nrows; i++)
      worst[run] = fmax(worst[run], loop_residual(&k, csv_at(&t[run], i, t2),
                                                  csv_at(&t[run], i, t3), csv_at(&t[run], i, t4)));
  }
  /* the motor really turns the crank: many revolutions */
  int t2 = csv_col(&t[0], "th2");
  ck_assert_msg(csv_at(&t[0], t[0].nrows - 1, t2) - csv_at(&t[0], 0, t2) > 10 * 2 * PI,
                "crank %.6g", csv_at(&t[0], t[0].nrows - 1, t2));
  ck_assert_msg(worst[0] < 1e-10, "residual %.3g with projection", worst[0]);
  ck_assert_msg(worst[1] < worst[2] / 10, "Baumgarte only %.3g, none %.3g", worst[1], worst[2]);
  for (int run = 0; run < 3; run++) csv_free(&t[run]);
}
END_TEST

/* Consistent coupler and rocker angles for crank angle t2 (the open branch,
** rocker above the ground line), by the law of cosines. */
static void close_loop(const Linkage *k, double t2, double *t3, double *t4) {
  double ax = k->b * cos(t2), ay = k->b * sin(t2);
  double dx = ax - k->a, dy = ay, d = hypot(dx, dy);
  double phi = acos((k->e * k->e + d * d - k->c * k->c) / (2 * k->e * d));
  *t4 = atan2(dy, dx) - phi;
  if (sin(*t4) < 0) *t4 = atan2(dy, dx) + phi;
  double bx = k->a + k->e * cos(*t4), by = k->e * sin(*t4);
  *t3 = atan2(by - ay, bx - ax);
  ck_assert(loop_residual(k, t2, *t3, *t4) < 1e-14);
}

/* Grashof's condition (F. Grashof, Theoretische Maschinenlehre, 1883; common
** practice in mechanism design): with s + l <= p + q and the shortest link
** as the crank, the crank turns fully; with s + l > p + q no link does, and
** the crank swings between the angles where coupler and rocker line up,
** |A - O4| = c + e, i.e. cos(t2) = (a^2 + b^2 - (c + e)^2) / (2 a b). */
static void grashof_run(const Linkage *k, int expect_full_turn) {
  double len[4] = {k->a, k->b, k->c, k->e}, s = 1e9, l = 0, sum = 0;
  for (int i = 0; i < 4; i++) s = fmin(s, len[i]), l = fmax(l, len[i]), sum += len[i];
  int grashof = s + l <= sum - s - l;
  ck_assert_int_eq(grashof && s == k->b, expect_full_turn);
  double t3, t4;
  close_loop(k, 0.0, &t3, &t4);
  /* No gravity, motor or drag: the kinetic energy stays and the linkage
  ** keeps moving through every reachable configuration (the heavy boom on
  ** the rocker makes that slow: 40 s cover a few cycles). */
  CsvTable t =
      sim_csv(example_file("barrier_fourbar.eom"), scratch_path("g.csv"), "--until", "40", "--step",
              "0.002", set_param_arg("a", k->a), set_param_arg("b", k->b), set_param_arg("c", k->c),
              set_param_arg("e", k->e), "--set", "g=0", "--set", "bm=0", "--set", "th2=0",
              set_param_arg("th3", t3), set_param_arg("th4", t4), "--set", "th2'=3", NULL);
  int t2 = csv_col(&t, "th2"), t2d = csv_col(&t, "th2'");
  double lo = 1e9, hi = -1e9;
  int sign_changes = 0;
  for (int i = 0; i < t.nrows; i++) {
    lo = fmin(lo, csv_at(&t, i, t2));
    hi = fmax(hi, csv_at(&t, i, t2));
    if (i > 0 && csv_at(&t, i, t2d) * csv_at(&t, i - 1, t2d) < 0) sign_changes++;
  }
  if (expect_full_turn) {
    ck_assert_msg(hi - lo > 2 * PI, "crank range %.6g", hi - lo);
    ck_assert_int_eq(sign_changes, 0);
  } else {
    double limit = acos((k->a * k->a + k->b * k->b - (k->c + k->e) * (k->c + k->e)) /
                        (2 * k->a * k->b));
    ck_assert_msg(hi - lo < 2 * PI, "crank range %.6g", hi - lo);
    ck_assert_msg(sign_changes >= 2, "the crank reversed %d times", sign_changes);
    ck_assert_msg(hi <= limit + 1e-7 && hi > limit - 2e-3, "max %.10g, limit %.10g", hi, limit);
    ck_assert_msg(lo >= -limit - 1e-7 && lo < -limit + 2e-3, "min %.10g, limit %.10g", lo, -limit);
  }
  csv_free(&t);
}

START_TEST(grashof_crank_rocker_turns_fully) {
  const Linkage k = {0.30, 0.08, 0.32, 0.18}; /* 0.08 + 0.32 <= 0.30 + 0.18 */
  grashof_run(&k, 1);
}
END_TEST

START_TEST(non_grashof_crank_swings_between_limits) {
  const Linkage k = {0.30, 0.25, 0.26, 0.27}; /* 0.25 + 0.30 > 0.26 + 0.27 */
  grashof_run(&k, 0);
}
END_TEST

/* ----------------------------------------------------------- slider-crank */

/* Piston position of a slider-crank with the piston pin on the crank axis:
** x = r cos(theta) + sqrt(L^2 - r^2 sin^2(theta)) (common kinematics result). */
START_TEST(slider_crank_piston_position) {
  const double r = 0.021, L = 0.078;
  CsvTable t = sim_csv(example_file("compressor_slider_crank.eom"), scratch_path("sc.csv"),
                       "--until", "0.5", "--step", "0.0005", "--set", "tau=0.08", NULL);
  int th = csv_col(&t, "theta"), x = csv_col(&t, "x");
  ck_assert(csv_at(&t, t.nrows - 1, th) > 4 * 2 * PI); /* several revolutions */
  double worst = 0;
  for (int i = 0; i < t.nrows; i++) {
    double s = sin(csv_at(&t, i, th));
    worst = fmax(
        worst, fabs(csv_at(&t, i, x) - (r * cos(csv_at(&t, i, th)) + sqrt(L * L - r * r * s * s))));
  }
  ck_assert_msg(worst < 1e-9 * (r + L), "piston off by %.3g m", worst);
  ck_assert_int_eq(csv_col(&t, "lambda2"), t.ncols - 3);
  csv_free(&t);
}
END_TEST

/* ------------------------------------------------------------ failures */

static RunResult run_model(const char *verb, const char *name, const char *text) {
  char *path = write_file(scratch_dir(), name, text, strlen(text));
  char *argv[] = {(char *)eomc(), (char *)verb, path, "-o",
                  strcmp(verb, "gen") == 0 ? scratch_dir() : scratch_path("out.csv"), NULL};
  RunResult r = run_argv(argv);
  free(path);
  return r;
}

/* A constraint that repeats others consistently (redundant) is a note at
** its line naming theirs, and the model runs; one that contradicts another
** (parallel gradients, x = 0.1 and 2x = 0.5: no solution) is an error. */
START_TEST(dependent_constraints_are_named) {
  static const char redundant[] =
    "coord a, b, c\n"                              /* 1 */
    "param m = 2\n"                                /* 2 */
    "kinetic m/2*(a'^2 + b'^2 + c'^2)\n"           /* 3 */
    "constraint a + b = 1\n"                       /* 4 */
    "constraint b - c = 0\n"                       /* 5 */
    "potential m*9.81*c\n"                         /* 6 */
    "constraint a + 2*b - c = 1\n"                 /* 7 */
    "initial a = 0.5\ninitial b = 0.5\ninitial c = 0.5\n";
  const char *verbs[] = {"gen", "sim"};
  for (int v = 0; v < 2; v++) {
    RunResult r = run_model(verbs[v], "redundant.eom", redundant);
    ck_assert_msg(r.status == 0, "%s: status %d\n%s", verbs[v], r.status, r.err);
    ck_assert_msg(strstr(r.err, "redundant.eom:7:1: note:") != NULL, "%s", r.err);
    ck_assert_msg(strstr(r.err, "lines 4 and 5") != NULL, "%s", r.err);
    ck_assert_msg(strstr(r.err, "redundant") != NULL, "%s", r.err);
    run_free(&r);
  }
  /* Redundant rows share the constraint force: a = 1 - b, c = b leaves one
  ** coordinate b with mass 3m/2... here m (a'^2 + b'^2 + c'^2)/2 = 3m b'^2/2
  ** and V = m g b, so b'' = -g/3 whatever the split of the multipliers. */
  CsvTable t = sim_csv(scratch_path("redundant.eom"), scratch_path("r.csv"), "--until", "1", NULL);
  int cb = csv_col(&t, "b");
  double want = 0.5 - 9.81 / 6; /* b(1) = b0 - g t^2 / 6 */
  ck_assert_msg(fabs(csv_at(&t, t.nrows - 1, cb) - want) < 1e-7, "b(1) = %.12g, want %.12g",
                csv_at(&t, t.nrows - 1, cb), want);
  csv_free(&t);
  static const char conflicting[] =
    "coord x, y\n"
    "kinetic 1/2*(x'^2 + y'^2)\n"
    "constraint x = 0.1\n"
    "potential y^2\n"
    "constraint 2*x = 0.5\n";
  RunResult r = run_model("gen", "conflicting.eom", conflicting);
  ck_assert_int_eq(r.status, 1);
  ck_assert_msg(strstr(r.err, "conflicting.eom:5:1: error: this constraint conflicts with the "
                              "constraint at line 3") != NULL, "%s", r.err);
  run_free(&r);
  /* A four-bar's coupler length written out again beside its two loop
  ** equations holds on the whole loop, so its gradient is a combination of
  ** theirs there (the initial guess is only near the loop): redundant. */
  static const char implied[] =
    "coord th2, th3, th4\n"
    "param a = 0.30\nparam b = 0.08\nparam c = 0.32\nparam e = 0.18\n"   /* 2-5 */
    "kinetic 1/2*(th2'^2 + th3'^2 + th4'^2)\n"
    "let A = [b*cos(th2), b*sin(th2)]\n"
    "let B = [a + e*cos(th4), e*sin(th4)]\n"
    "constraint A + c*[cos(th3), sin(th3)] = B\n"                           /* 9 */
    "constraint dot(B - A, B - A) = c^2\n"                                  /* 10 */
    "initial th3 = 0.57\ninitial th4 = 1.29\n";
  r = run_model("gen", "implied.eom", implied);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert_msg(strstr(r.err, "implied.eom:10:1: note: this constraint depends on the "
                              "constraint at line 9") != NULL, "%s", r.err);
  run_free(&r);
  /* a rolling condition written twice the same way is redundant too */
  static const char rolling[] =
    "coord x, th\nparam r = 0.1\n"
    "kinetic 1/2*2*x'^2 + 1/2*0.01*th'^2\n"
    "constraint x' = r*th'\n"                                            /* 4 */
    "constraint 2*x' = 2*r*th'\n"                                        /* 5 */
    "initial th' = 3\n";
  r = run_model("sim", "rolling.eom", rolling);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert_msg(strstr(r.err, "rolling.eom:5:1: note: this constraint depends on the "
                              "constraint at line 4") != NULL, "%s", r.err);
  run_free(&r);
  /* independent constraints pass without a word */
  static const char fine[] =
    "coord x, y\n"
    "kinetic 1/2*(x'^2 + y'^2)\n"
    "constraint x = 0.1\n"
    "constraint x + y = 0.5\n";
  r = run_model("gen", "fine.eom", fine);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert_msg(strstr(r.err, "note:") == NULL, "%s", r.err);
  run_free(&r);
}
END_TEST

/* Constraints that cannot hold: the Gauss–Newton start fails and says so. */
START_TEST(unreachable_constraint_reports_gauss_newton) {
  static const char model[] =
    "coord x, y\n"
    "kinetic 1/2*(x'^2 + y'^2)\n"
    "constraint x^2 + y^2 = -1\n"
    "initial x = 0.3\n";
  RunResult r = run_model("sim", "unreachable.eom", model);
  ck_assert_msg(r.status == 3, "status %d\n%s", r.status, r.err);
  ck_assert_msg(strstr(r.err, "initial state is not on the constraints") != NULL, "%s", r.err);
  ck_assert_msg(strstr(r.err, "Gauss-Newton did not bring") != NULL, "%s", r.err);
  run_free(&r);
}
END_TEST

/* Without the initial fix the run starts from the state as given: a
** pendulum released off its circle keeps the error (Baumgarte pulls it
** back slowly), with it the first row is on the circle. */
START_TEST(initial_fix_and_options) {
  CsvTable fixed = sim_csv(example_file("cartesian_pendulum.eom"), scratch_path("f.csv"), "--until",
                           "0.1", "--step", "0.05", "--set", "x=0.5", "--set", "y=-0.75", NULL);
  double x = csv_at(&fixed, 0, csv_col(&fixed, "x")), y = csv_at(&fixed, 0, csv_col(&fixed, "y"));
  ck_assert_msg(fabs(x * x + y * y - 0.85 * 0.85) < 1e-12, "x %.17g y %.17g", x, y);
  /* minimum-norm: the correction is along the gradient (x, y), so the
  ** direction from the anchor is kept */
  ck_assert(fabs(atan2(x, -y) - atan2(0.5, 0.75)) < 1e-12);
  CsvTable raw = sim_csv(example_file("cartesian_pendulum.eom"), scratch_path("r.csv"), "--until",
                         "0.1", "--step", "0.05", "--set", "x=0.5", "--set", "y=-0.75",
                         "--no-initial-fix", "--no-projection", "--baumgarte", "0,0", NULL);
  ck_assert(csv_at(&raw, 0, csv_col(&raw, "x")) == 0.5);
  ck_assert(csv_at(&raw, 0, csv_col(&raw, "y")) == -0.75);
  csv_free(&fixed);
  csv_free(&raw);
  char *argv[] = {(char *)eomc(), "sim", example_file("cartesian_pendulum.eom"), "--baumgarte",
                  "3", NULL};
  RunResult r = run_argv(argv);
  ck_assert_int_eq(r.status, 2);
  ck_assert_ptr_nonnull(strstr(r.err, "--baumgarte"));
  run_free(&r);
}
END_TEST

/* Generate `model` into the work directory, compile it with `driver` (gcc or
** $CC, -std=c99 -pedantic -Werror) and return the driver's output. */
static char *run_driver(const char *model, const char *stem, const char *driver) {
  char *argv[] = {(char *)eomc(), "gen", (char *)model, "-o", scratch_dir(), NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s", r.err);
  run_free(&r);
  char *drv = write_file(scratch_dir(), "drv.c", driver, strlen(driver));
  char inc[4200], dinc[4200], csrc[4200], exe[4200];
  snprintf(inc, sizeof inc, "-I%s/include", srcdir());
  snprintf(dinc, sizeof dinc, "-I%s", scratch_dir());
  snprintf(csrc, sizeof csrc, "%s/%s.c", scratch_dir(), stem);
  snprintf(exe, sizeof exe, "%s/drv", scratch_dir());
  char *cc[] = {(char *)env_or("CC", "cc"), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror",
                inc, dinc, csrc, drv, "-o", exe, "-lm", NULL};
  r = run_argv(cc);
  ck_assert_msg(r.status == 0, "%s", r.err);
  run_free(&r);
  char *run[] = {exe, NULL};
  r = run_argv(run);
  ck_assert_int_eq(r.status, 0);
  char *out = r.out;
  r.out = NULL;
  run_free(&r);
  free(drv);
  return out;
}

/* The generated accel_constrained refuses a configuration where G loses
** rank: the Cartesian pendulum at the anchor, where G = (2x, 2y) = 0. */
START_TEST(accel_constrained_reports_rank_loss) {
  static const char driver[] =
    "#include <stdio.h>\n#include \"cartesian_pendulum.h\"\n"
    "int main(void) {\n"
    "  double p[cartesian_pendulum_NP], q[2] = {0, 0}, qd[2] = {0, 0}, qdd[2], lam[1];\n"
    "  double q1[2] = {0.3, -0.795}, qd1[2] = {0.1, 0.2};\n"
    "  cartesian_pendulum_default_params(p);\n"
    "  printf(\"%d %d\\n\", cartesian_pendulum_accel_constrained(0, q, qd, NULL, p, qdd, lam),\n"
    "         cartesian_pendulum_accel_constrained(0, q1, qd1, NULL, p, qdd, lam));\n"
    "  return 0;\n}\n";
  char *out = run_driver(example_file("cartesian_pendulum.eom"), "cartesian_pendulum", driver);
  int at_anchor = -1, regular = -1;
  ck_assert_int_eq(sscanf(out, "%d %d", &at_anchor, &regular), 2);
  ck_assert_int_ne(at_anchor, 0);
  ck_assert_int_eq(regular, 0);
  free(out);
}
END_TEST

/* Nearly dependent rows: a bead on the unit circle also held at y = 0.3.
** Near x = 0 the circle's gradient (2x, 2y) lines up with (0, 1): the pivot
** of G M^-1 G^T is x^2/(x^2 + y^2) of its diagonal (1e-15 at x = 1e-8), a
** rounding-level rank loss that must be refused rather than solved into
** multipliers of 1e15. */
START_TEST(accel_constrained_nearly_dependent_rows) {
  static const char model[] =
    "coord x, y\n"
    "param m = 1\n"
    "kinetic m/2*(x'^2 + y'^2)\n"
    "constraint x^2 + y^2 = 1\n"
    "constraint y = 0.3\n"
    "initial x = 0.95\ninitial y = 0.3\n";
  char *path = write_file(scratch_dir(), "pinned_bead.eom", model, strlen(model));
  static const char driver[] =
    "#include <stdio.h>\n#include \"pinned_bead.h\"\n"
    "int main(void) {\n"
    "  double p[1] = {1}, near[2] = {1e-8, 0.3}, fine[2] = {0.95, 0.3}, qd[2] = {0, 0};\n"
    "  double qdd[2], lam[2];\n"
    "  printf(\"%d %d\\n\", pinned_bead_accel_constrained(0, near, qd, NULL, p, qdd, lam),\n"
    "         pinned_bead_accel_constrained(0, fine, qd, NULL, p, qdd, lam));\n"
    "  return 0;\n}\n";
  char *out = run_driver(path, "pinned_bead", driver);
  int near = -1, fine = -1;
  ck_assert_int_eq(sscanf(out, "%d %d", &near, &fine), 2);
  ck_assert_int_eq(near, 2);
  ck_assert_int_eq(fine, 0);
  free(out);
  free(path);
}
END_TEST

/* ------------------------------------------- singular positions, redundancy */

static char *test_model(const char *name) {
  static char buf[4096];
  snprintf(buf, sizeof buf, "%s/tests/models/%s", env_or("SRCDIR", "."), name);
  return buf;
}

/* The square four-bar as a parallelogram with one coordinate (derived here):
** with b = 0 and c = a the crank and rocker turn about their shafts
** (J = mL^2/3 each) and the coupler translates with the crank pin (speed
** L a'), so T = 1/2 (1/3 + 1/3 + 1) m L^2 a'^2 = 1/2 (5/3) m L^2 a'^2; the
** centres sit at heights L/2 sin a, L sin a and L/2 sin a, so
** V = 2 m g L sin a. */
static const char parallelogram[] =
  "coord a\nparam m = 1\nparam L = 1\nparam g = 9.81\n"
  "kinetic 1/2*(5/3)*m*L^2*a'^2\npotential 2*m*g*L*sin(a)\n"
  "initial a = pi/2\ninitial a' = 6\n";

typedef struct SingularCase {
  const char *method;
  const char *opt[4];      /* extra options, NULL-padded */
  double b_tol;            /* max |coupler angle| */
  double drift_tol;        /* max relative change of T + V */
  double crank_tol;        /* max |a - a of the one-coordinate model| */
} SingularCase;

/* Tolerances: dopri and radau5 tightened so the comparison measures the
** branch, not the integrator; midpoint is second order and fixed-step, so
** its own error at h = 1e-3 over 10 s (~1e-7 on the one-coordinate model
** too) bounds what it can match. */
static const SingularCase singular_cases[] = {
  {"dopri", {NULL}, 1e-8, 1e-6, 1e-5},
  {"dopri", {"--rtol", "1e-11", "--atol", "1e-13"}, 1e-8, 1e-8, 1e-7},
  {"radau5", {"--rtol", "1e-10", "--atol", "1e-12"}, 1e-8, 1e-6, 1e-7},
  {"rk4", {NULL}, 1e-8, 1e-6, 1e-7},
  {"midpoint", {"--step", "1e-3"}, 1e-7, 1e-5, 1e-6},
};

/* A square four-bar passes its aligned positions (G loses rank) twice a
** turn; the run keeps the parallelogram branch it started on: the coupler
** stays level (b = 0), the rocker follows the crank (c = a), the energy
** holds, and the crank moves as the one-coordinate parallelogram does. */
START_TEST(square_fourbar_keeps_its_branch) {
  const SingularCase *k = &singular_cases[_i];
  char *one = write_file(scratch_dir(), "parallelogram.eom", parallelogram, strlen(parallelogram));
  const char *o[4];
  for (int j = 0; j < 4; j++) o[j] = k->opt[j];
  CsvTable t = sim_csv(test_model("square_fourbar.eom"), scratch_path("four.csv"), "--until", "10",
                       "--method", k->method, o[0], o[1], o[2], o[3], NULL);
  CsvTable r = sim_csv(one, scratch_path("one.csv"), "--until", "10", "--method", k->method, o[0],
                       o[1], o[2], o[3], NULL);
  ck_assert_int_eq(t.nrows, r.nrows);
  int ca = csv_col(&t, "a"), cb = csv_col(&t, "b"), cc = csv_col(&t, "c"), cT = csv_col(&t, "T"),
      cV = csv_col(&t, "V"), ra = csv_col(&r, "a");
  double e0 = csv_at(&t, 0, cT) + csv_at(&t, 0, cV), b_max = 0, ac_max = 0, drift = 0, crank = 0;
  for (int i = 0; i < t.nrows; i++) {
    b_max = fmax(b_max, fabs(csv_at(&t, i, cb)));
    ac_max = fmax(ac_max, fabs(csv_at(&t, i, ca) - csv_at(&t, i, cc)));
    drift = fmax(drift, fabs(csv_at(&t, i, cT) + csv_at(&t, i, cV) - e0) / fabs(e0));
    crank = fmax(crank, fabs(csv_at(&t, i, ca) - csv_at(&r, i, ra)));
  }
  ck_assert_msg(csv_at(&t, t.nrows - 1, ca) > 4 * 2 * PI, "%s: the crank made only %.3g turns",
                k->method, csv_at(&t, t.nrows - 1, ca) / (2 * PI));
  ck_assert_msg(b_max <= k->b_tol && ac_max <= k->b_tol, "%s: max|b| %.3g, max|a - c| %.3g",
                k->method, b_max, ac_max);
  ck_assert_msg(drift <= k->drift_tol, "%s: energy drift %.3g", k->method, drift);
  ck_assert_msg(crank <= k->crank_tol, "%s: crank off the parallelogram's by %.3g", k->method,
                crank);
  csv_free(&t);
  csv_free(&r);
  free(one);
}
END_TEST

/* The lifting platform's third crank repeats the parallelogram of the other
** two: `check` says so in a note, runs keep the deck level, and the one mode
** at the lowest position is the compound pendulum of cranks and deck
** (derived here): all cranks turn together by z and the deck's centre moves
** on a circle of radius r, so J = 3 mc r^2/3 + md r^2 and, about the hanging
** position, K = 3 mc g r/2 + md g r; omega = sqrt(K / J). */
START_TEST(redundant_cranks_run_and_have_one_mode) {
  const char *model = example_file("lifting_platform.eom");
  char *argv[] = {(char *)eomc(), "check", (char *)model, NULL};
  RunResult r = run_argv(argv);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert_msg(strstr(r.err, "lifting_platform.eom:40:1: note:") != NULL, "%s", r.err);
  ck_assert_msg(strstr(r.err, "redundant") != NULL, "%s", r.err);
  run_free(&r);
  CsvTable t = sim_csv(model, scratch_path("lift.csv"), "--until", "5", "--set", "drag=0", NULL);
  int cth = csv_col(&t, "th"), cT = csv_col(&t, "T"), cV = csv_col(&t, "V");
  double e0 = csv_at(&t, 0, cT) + csv_at(&t, 0, cV), tilt = 0, drift = 0;
  for (int i = 0; i < t.nrows; i++) {
    tilt = fmax(tilt, fabs(csv_at(&t, i, cth)));
    drift = fmax(drift, fabs(csv_at(&t, i, cT) + csv_at(&t, i, cV) - e0) / fabs(e0));
  }
  ck_assert_msg(tilt < 1e-9, "the deck tilted by %.3g rad", tilt);
  ck_assert_msg(drift < 1e-6, "energy drift %.3g", drift);
  csv_free(&t);
  const double rr = 0.5, mc = 4, md = 60, g = 9.81, lo = -PI / 2;
  const double omega = sqrt((3 * mc * g * rr / 2 + md * g * rr) / (3 * mc * rr * rr / 3 + md * rr * rr));
  char at[5][64];
  const char *names[5] = {"a1", "a2", "a3", "x", "y"};
  const double values[5] = {lo, lo, lo, 1.2, -rr};
  for (int i = 0; i < 5; i++) snprintf(at[i], sizeof at[i], "--at=%s=%.17g", names[i], values[i]);
  char *argv2[] = {(char *)eomc(), "modes", (char *)model, "--set", "drag=0", at[0], at[1], at[2],
                   at[3], at[4], NULL};
  r = run_argv(argv2);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert_msg(strstr(r.out, "1 mode") != NULL, "%s", r.out);
  const char *w = strstr(r.out, "mode 1: ");
  ck_assert_msg(w != NULL, "%s", r.out);
  double got = strtod(w + strlen("mode 1: "), NULL);
  ck_assert_msg(fabs(got - omega) < 1e-6 * omega, "omega %.10g, want %.10g", got, omega);
  run_free(&r);
}
END_TEST

/* A row of four parallelograms (tests/models/parallelogram_row4.eom,
** written by bench/linkage_row.py: 5 rockers, 4 couplers, 9 angles, 8
** constraint rows, so `auto` takes the sparse route) turning over for 5 s
** passes the positions where all links align about 12 times; there 4 rows
** of G vanish together.  With every rocker at the same angle a and the
** couplers level, the one-coordinate machine (derived here) has
** T = 1/2 (5/3 + 4) m L^2 a'^2 (five rockers about their shafts, four
** couplers translating at L a') and V = (5/2 + 4) m g L sin a.  Tolerances:
** branch (couplers level, rockers together) 1e-8 as for the four-bar
** above; energy 1e-6, the bound issue 23 sets for dopri at its default
** tolerances (dopri drifts 1.2e-7 on the one-coordinate model over these
** 5 s, its own error, and 1.4e-7 on the row: the linkage adds none to
** speak of); crank 1e-5 as for the four-bar at default tolerances.  The
** dense route runs the same motion: the two routes differ only in how
** they drop rows near the aligned positions, so their states agree to the
** integration tolerance (1e-6). */
static const char row4_one_coordinate[] =
  "coord a\nparam m = 1\nparam L = 1\nparam g = 9.81\n"
  "kinetic 1/2*(5/3 + 4)*m*L^2*a'^2\npotential (5/2 + 4)*m*g*L*sin(a)\n"
  "initial a = pi/2\ninitial a' = 6\n";

START_TEST(parallelogram_row_keeps_its_branch) {
  char *one =
    write_file(scratch_dir(), "row_one.eom", row4_one_coordinate, strlen(row4_one_coordinate));
  const char *model = test_model("parallelogram_row4.eom");
  CsvTable t = sim_csv(model, scratch_path("row.csv"), "--until", "5", NULL);
  CsvTable d = sim_csv(model, scratch_path("row_dense.csv"), "--until", "5", "--constraint-solver",
                       "dense", NULL);
  CsvTable r = sim_csv(one, scratch_path("row_one.csv"), "--until", "5", NULL);
  ck_assert_int_eq(t.nrows, r.nrows);
  ck_assert_int_eq(t.nrows, d.nrows);
  int cr0 = csv_col(&t, "r0"), cT = csv_col(&t, "T"), cV = csv_col(&t, "V"), ra = csv_col(&r, "a");
  double e0 = csv_at(&t, 0, cT) + csv_at(&t, 0, cV), branch = 0, drift = 0, crank = 0, routes = 0;
  for (int i = 0; i < t.nrows; i++) {
    for (int j = 1; j <= 4; j++) {
      char rj[16], cj[16];
      snprintf(rj, sizeof rj, "r%d", j);
      snprintf(cj, sizeof cj, "c%d", j);
      branch = fmax(branch, fabs(csv_at(&t, i, csv_col(&t, cj))));
      branch = fmax(branch, fabs(csv_at(&t, i, csv_col(&t, rj)) - csv_at(&t, i, cr0)));
    }
    drift = fmax(drift, fabs(csv_at(&t, i, cT) + csv_at(&t, i, cV) - e0) / fabs(e0));
    crank = fmax(crank, fabs(csv_at(&t, i, cr0) - csv_at(&r, i, ra)));
    /* the state, columns 1..18 (the multipliers grow without bound at the
    ** aligned positions, so tiny differences of state show large there) */
    for (int k = 1; k <= 18; k++)
      routes = fmax(routes,
                    fabs(csv_at(&t, i, k) - csv_at(&d, i, k)) / (1 + fabs(csv_at(&d, i, k))));
  }
  ck_assert_msg(csv_at(&t, t.nrows - 1, cr0) > 5 * 2 * PI, "the row made only %.3g turns",
                csv_at(&t, t.nrows - 1, cr0) / (2 * PI));
  ck_assert_msg(branch <= 1e-8, "the row left its branch by %.3g", branch);
  ck_assert_msg(drift <= 1e-6, "energy drift %.3g", drift);
  ck_assert_msg(crank <= 1e-5, "crank off the one-coordinate machine's by %.3g", crank);
  ck_assert_msg(routes <= 1e-6, "sparse and dense routes apart by %.3g", routes);
  csv_free(&t);
  csv_free(&d);
  csv_free(&r);
  free(one);
}
END_TEST

static Suite *constraints_suite(void) {
  Suite *s = suite_create("constraints");
  TCase *tc = tcase_create("end to end");
  tcase_add_checked_fixture(tc, scratch_setup, scratch_teardown);
  tcase_set_timeout(tc, 300);
  tcase_add_test(tc, cartesian_matches_angle_pendulum);
  tcase_add_test(tc, pendulum_rod_tension_from_lambda);
  tcase_add_test(tc, pendulum_modes_on_the_constraint);
  tcase_add_test(tc, fourbar_residual_stays_small);
  tcase_add_test(tc, grashof_crank_rocker_turns_fully);
  tcase_add_test(tc, non_grashof_crank_swings_between_limits);
  tcase_add_test(tc, slider_crank_piston_position);
  tcase_add_test(tc, dependent_constraints_are_named);
  tcase_add_test(tc, unreachable_constraint_reports_gauss_newton);
  tcase_add_test(tc, initial_fix_and_options);
  tcase_add_test(tc, accel_constrained_reports_rank_loss);
  tcase_add_test(tc, accel_constrained_nearly_dependent_rows);
  tcase_add_test(tc, redundant_cranks_run_and_have_one_mode);
  tcase_add_loop_test(tc, square_fourbar_keeps_its_branch, 0,
                      (int)(sizeof singular_cases / sizeof singular_cases[0]));
  tcase_add_test(tc, parallelogram_row_keeps_its_branch);
  suite_add_tcase(s, tc);
  return s;
}

int main(void) {
  SRunner *sr = srunner_create(constraints_suite());
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
