/*
** test_wheels.c — velocity constraints end to end: `eomc sim` and `eomc
** check` on the wheeled examples (cargo sledge, warehouse robot, rolling
** coin, trolley castor) and on small models written here, checked against
** closed-form mechanics: the sledge's straightening, a wheel on a rail
** written both ways, a vertical disk's circle, a differential-drive robot's
** arc; and `eomc modes --rate` about steady motions: the rolling coin's
** stability threshold, the sledge's and the castor's straight runs.
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

static const char *tight[] = {"--rtol", "1e-12", "--atol", "1e-13"};
#define TIGHT tight[0], tight[1], tight[2], tight[3]

/* ------------------------------------------------------------ sledge */

/* The sledge on one runner (Chaplygin's sleigh; Neimark & Fufaev, Dynamics
** of Nonholonomic Systems, 1972, ch. V, from memory): with v the speed of
** the contact point along the runner and w = th', the constraint forces do
** no work and
**   m v' = m a w^2,   (I + m a^2) w' = -m a v w,
** so v^2 + k w^2 = c^2 with k = (I + m a^2)/m is constant, and
** v' = (a/k)(c^2 - v^2) integrates to v = c tanh(a c t / k + atanh(v0/c)):
** the turning dies out and the sledge runs straight at speed c, mass centre
** leading (v > 0 for a > 0). */
START_TEST(sledge_straightens_mass_centre_leading) {
  const double m = 18, a = 0.35, I = 0.9, v0 = 0.5, w0 = 1.2;
  const double k = (I + m * a * a) / m, c = sqrt(v0 * v0 + k * w0 * w0);
  CsvTable s = sim_csv(example_file("cargo_sledge.eom"), scratch_path("sledge.csv"), "--until",
                       "20", "--step", "0.01", TIGHT, NULL);
  int th = csv_col(&s, "th"), xd = csv_col(&s, "x'"), yd = csv_col(&s, "y'"),
      thd = csv_col(&s, "th'");
  int T = csv_col(&s, "T"), sp = csv_col(&s, "speed");
  double E0 = csv_at(&s, 0, T), worst_v = 0, worst_w = 0, worst_e = 0, worst_slip = 0;
  for (int i = 0; i < s.nrows; i++) {
    double t = csv_at(&s, i, 0), h = csv_at(&s, i, th), v = csv_at(&s, i, sp),
           w = csv_at(&s, i, thd);
    double v_ref = c * tanh(a * c * t / k + atanh(v0 / c));
    double w_ref = sqrt(fmax(0, c * c - v_ref * v_ref) / k);  /* w keeps its sign (> 0) */
    worst_v = fmax(worst_v, fabs(v - v_ref));
    worst_w = fmax(worst_w, fabs(w - w_ref));
    worst_e = fmax(worst_e, fabs(csv_at(&s, i, T) - E0) / E0);
    worst_slip = fmax(worst_slip, fabs(-sin(h) * csv_at(&s, i, xd) + cos(h) * csv_at(&s, i, yd)));
  }
  ck_assert_msg(worst_v < 1e-8, "speed off the closed form by %.3g", worst_v);
  ck_assert_msg(worst_w < 1e-7, "turning rate off the closed form by %.3g", worst_w);
  ck_assert_msg(worst_e < 1e-10, "energy drifts by %.3g relative", worst_e);
  ck_assert_msg(worst_slip < 1e-10, "the runner slides sideways at %.3g m/s", worst_slip);
  /* the end: straight, mass centre leading */
  int last = s.nrows - 1;
  ck_assert(fabs(csv_at(&s, last, thd)) < 1e-6);
  ck_assert(csv_at(&s, last, sp) > 0.999 * c);
  ck_assert_int_eq(csv_col(&s, "lambda1"), s.ncols - 3);
  csv_free(&s);
}
END_TEST

/* A sledge whose mass centre trails the runner (a < 0) also ends straight,
** but running backwards along the runner: v -> -c (same closed form). */
START_TEST(sledge_with_trailing_mass_centre_turns_round) {
  CsvTable s = sim_csv(example_file("cargo_sledge.eom"), scratch_path("trail.csv"), "--until", "40",
                       "--step", "0.1", set_param_arg("a", -0.35), NULL);
  int last = s.nrows - 1;
  double c = sqrt(0.25 + (0.9 + 18 * 0.35 * 0.35) / 18 * 1.44);
  ck_assert_msg(csv_at(&s, last, csv_col(&s, "speed")) < -0.99 * c, "speed %g",
                csv_at(&s, last, csv_col(&s, "speed")));
  csv_free(&s);
}
END_TEST

/* ------------------------------------------------------------ rail */

/* A wheel on a straight rail with a spring on its centre: x' = r th' is
** integrable (x = r th + const), so the velocity form and the position form
** must give the same motion, and both the closed form of a mass-spring with
** the effective mass m + J/r^2 (common practice): x = x0 cos(omega t). */
static const char rail_head[] =
  "coord x [m]\ncoord th [rad]\n"
  "param m = 2 [kg]\nparam J = 0.01 [kg*m^2]\nparam r = 0.1 [m]\nparam k = 40 [N/m]\n"
  "kinetic 1/2*m*x'^2 + 1/2*J*th'^2\npotential 1/2*k*x^2\ninitial x = 0.2\n"
  "initial th = 2\n";

START_TEST(rail_velocity_form_matches_position_form) {
  char text[1024];
  snprintf(text, sizeof text, "%sconstraint x' = r*th'\n", rail_head);
  char *vel = write_file(scratch_dir(), "rail_v.eom", text, strlen(text));
  snprintf(text, sizeof text, "%sconstraint x = r*th\n", rail_head);
  char *pos = write_file(scratch_dir(), "rail_p.eom", text, strlen(text));
  CsvTable a = sim_csv(vel, scratch_path("v.csv"), "--until", "5", "--step", "0.01", TIGHT, NULL);
  CsvTable b = sim_csv(pos, scratch_path("p.csv"), "--until", "5", "--step", "0.01", TIGHT, NULL);
  ck_assert_int_eq(a.nrows, b.nrows);
  const double omega = sqrt(40 / (2 + 0.01 / 0.01));
  double worst = 0, worst_ref = 0;
  for (int i = 0; i < a.nrows; i++)
    for (int j = 1; j <= 4; j++) {
      worst = fmax(worst, fabs(csv_at(&a, i, j) - csv_at(&b, i, j)));
      if (j == 1)
        worst_ref = fmax(worst_ref, fabs(csv_at(&a, i, j) - 0.2 * cos(omega * csv_at(&a, i, 0))));
    }
  ck_assert_msg(worst < 1e-9, "the two forms differ by %.3g", worst);
  ck_assert_msg(worst_ref < 1e-9, "off x0 cos(omega t) by %.3g", worst_ref);
  /* the multipliers are the same force: lambda (x' - r th') vs lambda (x - r th) */
  int la = csv_col(&a, "lambda1"), lb = csv_col(&b, "lambda1");
  for (int i = 0; i < a.nrows; i++)
    ck_assert_msg(fabs(csv_at(&a, i, la) - csv_at(&b, i, lb)) < 1e-7,
                  "multipliers differ at row %d", i);
  csv_free(&a);
  csv_free(&b);
  /* check notes that this one could be a position constraint */
  RunResult r = eomc_run("check", vel, NULL);
  ck_assert_int_eq(r.status, 0);
  ck_assert_msg(strstr(r.err, "note: the velocity constraints are integrable"), "%s", r.err);
  ck_assert(strstr(r.out, "velocity constraint equations: 1"));
  run_free(&r);
  r = eomc_run("check", example_file("cargo_sledge.eom"), NULL);
  ck_assert_int_eq(r.status, 0);
  ck_assert_msg(!strstr(r.err, "integrable"), "%s", r.err);
  run_free(&r);
  /* show prints A q' = b beside the equations of motion */
  r = eomc_run("show", example_file("cargo_sledge.eom"), NULL);
  ck_assert_int_eq(r.status, 0);
  ck_assert_msg(strstr(r.out, "  (1) -sin(th)*x' + cos(th)*y' = 0"), "%s", r.out);
  run_free(&r);
  free(vel);
  free(pos);
}
END_TEST

/* Frobenius' test on a few more: a time-dependent affine one that
** integrates (x' = v0 + y' cos(t)... no: x' = sin(t) y' + y cos(t) is
** (y sin t)'), and a pair on three coordinates that does not. */
START_TEST(integrability_note_in_general) {
  static const char yes[] = "coord x, y\nkinetic x'^2 + y'^2\nconstraint x' = sin(t)*y' + y*cos(t)\n"
                            "initial y = 1\n";
  static const char no[] = "coord x, y, z\nkinetic x'^2 + y'^2 + z'^2\nconstraint z' = y*x'\n"
                           "initial y = 1\n";
  static const char pair[] = "coord x, y, z\nkinetic x'^2 + y'^2 + z'^2\n"
                             "constraint [x', y'] = [z', 2*z']\n";
  const char *texts[] = {yes, no, pair};
  int want[] = {1, 0, 1};
  for (int k = 0; k < 3; k++) {
    char name[32];
    snprintf(name, sizeof name, "frob%d.eom", k);
    char *path = write_file(scratch_dir(), name, texts[k], strlen(texts[k]));
    RunResult r = eomc_run("check", path, NULL);
    ck_assert_msg(r.status == 0, "%s", r.err);
    ck_assert_msg((strstr(r.err, "integrable") != NULL) == want[k], "model %d: %s", k, r.err);
    run_free(&r);
    free(path);
  }
}
END_TEST

/* ------------------------------------------------------------ vertical disk */

/* A disk held upright rolls on a plane (x, y contact point, psi heading,
** ph spin): psi' and ph' stay constant and the contact point runs round a
** circle of radius r ph'/psi' at constant speed, energy conserved
** (Greenwood, Principles of Dynamics, 2nd ed., 1988, the rolling-disk
** sections; from memory). */
START_TEST(vertical_disk_runs_on_a_circle) {
  static const char disk[] =
    "coord x [m]\ncoord y [m]\ncoord psi [rad]\ncoord ph [rad]\n"
    "param m = 1.3 [kg]\nparam r = 0.25 [m]\n"
    "kinetic 1/2*m*(x'^2 + y'^2) + 1/2*(m*r^2/4)*psi'^2 + 1/2*(m*r^2/2)*ph'^2\n"
    "constraint [x', y'] = r*ph'*[cos(psi), sin(psi)]\n"
    "initial psi' = 0.8\ninitial ph' = 6\ninitial x' = 1.5\n";
  char *path = write_file(scratch_dir(), "disk.eom", disk, strlen(disk));
  CsvTable s =
      sim_csv(path, scratch_path("disk.csv"), "--until", "20", "--step", "0.05", TIGHT, NULL);
  const double R = 0.25 * 6 / 0.8, w = 0.8;
  int x = csv_col(&s, "x"), y = csv_col(&s, "y"), T = csv_col(&s, "T");
  double worst = 0, worst_e = 0;
  for (int i = 0; i < s.nrows; i++) {
    double t = csv_at(&s, i, 0);
    worst = fmax(worst, fabs(csv_at(&s, i, x) - R * sin(w * t)));
    worst = fmax(worst, fabs(csv_at(&s, i, y) - R * (1 - cos(w * t))));
    worst = fmax(worst, fabs(csv_at(&s, i, csv_col(&s, "ph'")) - 6));
    worst_e = fmax(worst_e, fabs(csv_at(&s, i, T) - csv_at(&s, 0, T)));
  }
  ck_assert_msg(worst < 1e-8, "off the circle by %.3g", worst);
  ck_assert_msg(worst_e < 1e-9 * csv_at(&s, 0, T), "energy changes by %.3g", worst_e);
  csv_free(&s);
  free(path);
}
END_TEST

/* ------------------------------------------------------------ warehouse robot */

/* A differential-drive robot with its mass centre on the axle and no motor
** torque keeps its wheel speeds, and the axle's middle runs on the arc of
** the kinematic model: v = r (wl + wr)/2, w = r (wr - wl)/(2 b), and
** x = (v/w)(sin(th0 + w t) - sin th0), y = -(v/w)(cos(th0 + w t) - cos th0)
** (Siegwart & Nourbakhsh, Introduction to Autonomous Mobile Robots, 2004,
** §3.2; from memory). */
START_TEST(robot_follows_the_kinematic_arc) {
  const double r = 0.075, b = 0.21, wl = 8, wr = 10;
  const double v = r * (wl + wr) / 2, w = r * (wr - wl) / (2 * b);
  CsvTable s = sim_csv(example_file("warehouse_robot.eom"), scratch_path("robot.csv"), "--until",
                       "10", "--step", "0.05", set_param_arg("d", 0), TIGHT, NULL);
  int x = csv_col(&s, "x"), y = csv_col(&s, "y"), th = csv_col(&s, "th");
  double worst = 0;
  for (int i = 0; i < s.nrows; i++) {
    double t = csv_at(&s, i, 0);
    worst = fmax(worst, fabs(csv_at(&s, i, x) - v / w * sin(w * t)));
    worst = fmax(worst, fabs(csv_at(&s, i, y) + v / w * (cos(w * t) - 1)));
    worst = fmax(worst, fabs(csv_at(&s, i, th) - w * t));
    worst = fmax(worst, fabs(csv_at(&s, i, csv_col(&s, "pl'")) - wl));
    worst = fmax(worst, fabs(csv_at(&s, i, csv_col(&s, "pr'")) - wr));
  }
  ck_assert_msg(worst < 1e-8, "off the arc by %.3g", worst);
  csv_free(&s);
}
END_TEST

/* With the mass centre ahead of the axle and driven wheels, the rates keep
** all three constraints at every sample and the drive does the work that
** the energy gains: dE/dt = tl pl' + tr pr' (common practice). */
START_TEST(robot_keeps_its_constraints_under_drive) {
  const double r = 0.075, b = 0.21;
  CsvTable s = sim_csv(example_file("warehouse_robot.eom"), scratch_path("drive.csv"), "--until",
                       "6", "--step", "0.01", "--set", "tl=0.4", "--set", "tr=-0.3", TIGHT, NULL);
  int th = csv_col(&s, "th"), xd = csv_col(&s, "x'"), yd = csv_col(&s, "y'"),
      thd = csv_col(&s, "th'");
  int pl = csv_col(&s, "pl"), pr = csv_col(&s, "pr"), pld = csv_col(&s, "pl'"),
      prd = csv_col(&s, "pr'");
  double worst = 0;
  for (int i = 0; i < s.nrows; i++) {
    double h = csv_at(&s, i, th), X = csv_at(&s, i, xd), Y = csv_at(&s, i, yd);
    worst = fmax(worst, fabs(-sin(h) * X + cos(h) * Y));
    worst = fmax(worst,
                 fabs(cos(h) * X + sin(h) * Y - r / 2 * (csv_at(&s, i, pld) + csv_at(&s, i, prd))));
    worst = fmax(
        worst, fabs(csv_at(&s, i, thd) - r / (2 * b) * (csv_at(&s, i, prd) - csv_at(&s, i, pld))));
  }
  ck_assert_msg(worst < 1e-10, "a constraint is off by %.3g", worst);
  int last = s.nrows - 1, T = csv_col(&s, "T");
  double work = 0.4 * (csv_at(&s, last, pl) - csv_at(&s, 0, pl)) -
                0.3 * (csv_at(&s, last, pr) - csv_at(&s, 0, pr));
  double gain = csv_at(&s, last, T) - csv_at(&s, 0, T);
  ck_assert_msg(fabs(gain - work) < 1e-8 * fmax(1, fabs(work)), "energy gain %.12g, work %.12g",
                gain, work);
  csv_free(&s);
}
END_TEST

/* ------------------------------------------------------------ rolling coin */

/* A thin disk rolling on a plane: energy conserved and the material point
** at the contact at rest, over a 20 s run (the defining properties of
** rolling without slipping; Neimark & Fufaev 1972, ch. II, from memory). */
START_TEST(coin_rolls_without_slipping) {
  CsvTable s = sim_csv(example_file("rolling_coin.eom"), scratch_path("coin.csv"), "--until", "20",
                       "--step", "0.02", NULL);
  int T = csv_col(&s, "T"), V = csv_col(&s, "V");
  int s1 = csv_col(&s, "slip[1]"), s2 = csv_col(&s, "slip[2]"), s3 = csv_col(&s, "slip[3]");
  double E0 = csv_at(&s, 0, T) + csv_at(&s, 0, V), worst_e = 0, worst_slip = 0;
  for (int i = 0; i < s.nrows; i++) {
    worst_e = fmax(worst_e, fabs(csv_at(&s, i, T) + csv_at(&s, i, V) - E0) / E0);
    for (int c = s1; c <= s3; c++) worst_slip = fmax(worst_slip, fabs(csv_at(&s, i, c)));
  }
  ck_assert(s2 == s1 + 1 && s3 == s1 + 2);
  ck_assert_msg(worst_e < 1e-8, "energy drifts by %.3g relative", worst_e);
  ck_assert_msg(worst_slip < 1e-9, "the contact point slips at %.3g m/s", worst_slip);
  /* fast enough, it stays up */
  int last = s.nrows - 1;
  ck_assert_msg(fabs(csv_at(&s, last, csv_col(&s, "th"))) < 0.3, "tilt %g",
                csv_at(&s, last, csv_col(&s, "th")));
  csv_free(&s);
}
END_TEST

/* The generated interface: P_velocity_constraint gives A, b and gamma, and
** accel_constrained's qdd satisfies A qdd = gamma. */
START_TEST(generated_velocity_constraint_functions) {
  char *dir = make_temp_dir();
  RunResult r = eomc_run("gen", example_file("cargo_sledge.eom"), "-o", dir, NULL);
  ck_assert_msg(r.status == 0, "%s", r.err);
  run_free(&r);
  char path[4200];
  snprintf(path, sizeof path, "%s/cargo_sledge.h", dir);
  char *h = read_file(path, NULL);
  ck_assert(h && strstr(h, "#define cargo_sledge_NVC 1"));
  ck_assert(strstr(h, "void cargo_sledge_velocity_constraint(double t, const double *q, "
                      "const double *qd, const double *p,\n  double *A, double *b, double *gamma);"));
  free(h);
  snprintf(path, sizeof path, "%s/main.c", dir);
  static const char driver[] =
    "#include <math.h>\n#include <stdio.h>\n#include \"cargo_sledge.h\"\n"
    "int main(void) {\n"
    "  double p[3], q[3] = {0.3, -0.2, 0.7}, qd[3], A[3], b[1], g[1], qdd[3], lam[1];\n"
    "  cargo_sledge_default_params(p);\n"
    "  qd[0] = 0.4 * cos(0.7); qd[1] = 0.4 * sin(0.7); qd[2] = -0.9;\n"
    "  cargo_sledge_velocity_constraint(0, q, qd, p, A, b, g);\n"
    "  if (cargo_sledge_accel_constrained(0, q, qd, NULL, p, qdd, lam)) return 1;\n"
    "  printf(\"%.17g %.17g %.17g %.17g %.17g %.17g\\n\", A[0], A[1], A[2], b[0],\n"
    "         A[0]*qdd[0] + A[1]*qdd[1] + A[2]*qdd[2] - g[0], g[0]);\n"
    "  return 0;\n}\n";
  FILE *f = fopen(path, "w");
  ck_assert(f);
  fputs(driver, f);
  fclose(f);
  char cmd[13000];
  snprintf(cmd, sizeof cmd,
           "cd '%s' && %s -std=c99 -pedantic -Wall -Wextra -Werror -DEOM_NO_DESCRIPTOR "
           "-o drv main.c cargo_sledge.c -lm 2>&1 && ./drv > out.txt", dir, cc());
  ck_assert_msg(system(cmd) == 0, "driver failed");
  snprintf(path, sizeof path, "%s/out.txt", dir);
  char *out = read_file(path, NULL);
  double v[6];
  ck_assert_int_eq(read_numbers(out, v, 6), 6);
  /* A = [-sin th, cos th, 0], b = 0; gamma = -(A')qd = th'(cos th x' + sin th y') */
  ck_assert(fabs(v[0] + sin(0.7)) < 1e-15 && fabs(v[1] - cos(0.7)) < 1e-15 && v[2] == 0);
  ck_assert(v[3] == 0);
  ck_assert_msg(fabs(v[4]) < 1e-14, "A qdd - gamma = %g", v[4]);
  ck_assert(fabs(v[5] - (-0.9) * 0.4) < 1e-14);
  free(out);
  remove_tree(dir);
  free(dir);
}
END_TEST


/* ------------------------------------------------------------ steady motions */

/* Eigenvalues from `eomc modes ... --json`: re/im pairs, their count. */
static int json_eigenvalues(const char *out, double *re, double *im, int max) {
  int n = 0;
  for (const char *s = strstr(out, "{\"re\": "); s && n < max; s = strstr(s + 1, "{\"re\": ")) {
    ck_assert_int_eq(sscanf(s, "{\"re\": %lf, \"im\": %lf}", &re[n], &im[n]), 2);
    n++;
  }
  return n;
}

static RunResult modes_json(const char *model, const char *a1, const char *a2, const char *a3) {
  RunResult r = eomc_run("modes", model, "--json", a1, a2, a3, NULL);
  ck_assert_msg(r.status == 0, "eomc modes %s: %s", model, r.err);
  return r;
}

/* A thin disk rolling upright in a straight line with spin W is stable
** when W^2 > m g r I1 / (I3 (I3 + m r^2)) = g / (3 r) for I1 = m r^2/4,
** I3 = m r^2/2 (Neimark & Fufaev, Dynamics of Nonholonomic Systems, 1972,
** the rolling disk; from memory), and the tilt and heading then oscillate
** at s^2 = -(I3 (I3 + m r^2) W^2 - m g r I1) / (I1 (I1 + m r^2)) (the same
** linearization, from memory). */
START_TEST(coin_upright_rolling_stability_threshold) {
  const double r = 0.02, g = 9.81, Wc = sqrt(g / (3 * r));
  char rate[64];
  for (int k = 0; k < 2; k++) {
    double W = Wc * (k ? 1.05 : 0.95);
    snprintf(rate, sizeof rate, "--rate=ph=%.17g", W);
    RunResult res = modes_json(example_file("rolling_coin.eom"), rate, "--at=th=0", "--at=psi=0");
    ck_assert_msg(strstr(res.out, k ? "\"stable\": true" : "\"stable\": false"), "W = %g:\n%s", W,
                  res.out);
    run_free(&res);
  }
  const double W = 25, m = 1, I1 = m * r * r / 4, I3 = m * r * r / 2;
  const double w2 = (I3 * (I3 + m * r * r) * W * W - m * g * r * I1) / (I1 * (I1 + m * r * r));
  RunResult res =
      modes_json(example_file("rolling_coin.eom"), "--rate=ph=25", "--at=th=0", "--at=psi=0");
  double re[16], im[16];
  int n = json_eigenvalues(res.out, re, im, 16);
  ck_assert_int_eq(n, 5);  /* psi, th, psi', th', ph' */
  double best = INFINITY;
  for (int k = 0; k < n; k++) {
    ck_assert_msg(fabs(re[k]) < 1e-6, "growth rate %g", re[k]);
    best = fmin(best, fabs(fabs(im[k]) - sqrt(w2)));
  }
  ck_assert_msg(best < 1e-6 * sqrt(w2), "no frequency sqrt(%g) among the eigenvalues:\n%s", w2,
                res.out);
  run_free(&res);
}
END_TEST

/* The sledge running straight at speed v: the turning rate obeys
** (I + m a^2) w' = -m a v w (the reduced equations above), so the one
** non-zero eigenvalue is -m a v / (I + m a^2): stable forwards, unstable
** backwards. */
START_TEST(sledge_straight_run_stability) {
  const double m = 18, a = 0.35, I = 0.9;
  for (int k = 0; k < 2; k++) {
    double v = k ? -1.5 : 1.5, want = -m * a * v / (I + m * a * a);
    char rate[64];
    snprintf(rate, sizeof rate, "--rate=x=%g", v);
    RunResult res = modes_json(example_file("cargo_sledge.eom"), rate, "--at=th=0", "--at=y=0");
    double re[8], im[8];
    int n = json_eigenvalues(res.out, re, im, 8);
    ck_assert_int_eq(n, 3);  /* th, x', th' */
    double best = INFINITY;
    for (int j = 0; j < n; j++) best = fmin(best, fabs(re[j] - want) + fabs(im[j]));
    ck_assert_msg(best < 1e-6, "v = %g: no eigenvalue %g:\n%s", v, want, res.out);
    ck_assert(strstr(res.out, k ? "\"stable\": false" : "\"stable\": true"));
    run_free(&res);
  }
}
END_TEST

/* A trailing castor of trail e on a frame moving at V turns as
** de' = -(V/e) sin(de) (no sideways slip of its wheel; common practice,
** from memory): the eigenvalue -V/e, unstable when pushed backwards. */
START_TEST(castor_lines_up_when_trailing) {
  const double e = 0.04;
  for (int k = 0; k < 2; k++) {
    double V = k ? -0.8 : 0.8;
    char rate[64];
    snprintf(rate, sizeof rate, "--rate=x=%g", V);
    RunResult res = modes_json(example_file("trolley_castor.eom"), rate, "--at=de=0", "--at=x=0");
    double re[8], im[8];
    int n = json_eigenvalues(res.out, re, im, 8);
    ck_assert_int_eq(n, 2);  /* de (its rate follows), x' */
    double best = INFINITY;
    for (int j = 0; j < n; j++) best = fmin(best, fabs(re[j] + V / e) + fabs(im[j]));
    ck_assert_msg(best < 1e-6 * fabs(V / e), "V = %g: no eigenvalue %g:\n%s", V, -V / e, res.out);
    ck_assert(strstr(res.out, k ? "\"stable\": false" : "\"stable\": true"));
    run_free(&res);
  }
  /* the sideways position of the contact decays on a run (no slip) */
  CsvTable s =
      sim_csv(example_file("trolley_castor.eom"), scratch_path("castor.csv"), "--until", "2", NULL);
  ck_assert(fabs(csv_at(&s, s.nrows - 1, csv_col(&s, "de"))) < 1e-6);
  csv_free(&s);
}
END_TEST

/* --sweep-rate: one CSV row per rate, the stability flag flips at the
** threshold above, and --plot writes an SVG. */
START_TEST(coin_sweep_table_and_plot) {
  const double Wc = sqrt(9.81 / (3 * 0.02));
  char sweep[128];
  /* six rates, none at the threshold itself (there the motion is
  ** marginal, and which side rounding puts it on says nothing) */
  snprintf(sweep, sizeof sweep, "ph=%.17g:%.17g:6", 0.5 * Wc, 1.5 * Wc);
  char *svg = scratch_path("sweep.svg");
  RunResult r = eomc_run("modes", example_file("rolling_coin.eom"), "--at", "th=0", "--sweep-rate",
                         sweep, "--plot", svg, NULL);
  ck_assert_msg(r.status == 0, "%s", r.err);
  ck_assert(strncmp(r.out, "ph',max_growth,stable,re1,im1,", 30) == 0);
  int rows = 0, flips = 0, last = -1;
  for (char *line = strchr(r.out, '\n'); line && line[1]; line = strchr(line + 1, '\n')) {
    double w, g;
    int stable;
    ck_assert_int_eq(sscanf(line + 1, "%lf,%lf,%d", &w, &g, &stable), 3);
    ck_assert_int_eq(stable, w > Wc);
    flips += last >= 0 && stable != last;
    last = stable;
    rows++;
  }
  ck_assert_int_eq(rows, 6);
  ck_assert_int_eq(flips, 1);
  char *text = read_file(svg, NULL);
  ck_assert_msg(text && strstr(text, "<svg"), "no SVG written");
  free(text);
  run_free(&r);
}
END_TEST

/* What --rate cannot do is said plainly. */
START_TEST(steady_motion_errors) {
  RunResult r = eomc_run("modes", example_file("rolling_coin.eom"), "--rate", "th=3", NULL);
  ck_assert_int_eq(r.status, 3);
  ck_assert_msg(strstr(r.err, "'th' enters the dynamics"), "%s", r.err);
  run_free(&r);
  r = eomc_run("modes", example_file("cartesian_pendulum.eom"), "--rate", "x=1", NULL);
  ck_assert_int_eq(r.status, 3);
  ck_assert_msg(strstr(r.err, "'x' enters the dynamics"), "%s", r.err);
  run_free(&r);
  r = eomc_run("modes", example_file("rolling_coin.eom"), "--rate", "nosuch=1", NULL);
  ck_assert_int_eq(r.status, 2);
  ck_assert_msg(strstr(r.err, "'nosuch' is not a coordinate"), "%s", r.err);
  run_free(&r);
  r = eomc_run("modes", example_file("rolling_coin.eom"), "--plot", scratch_path("x.svg"), NULL);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
  r = eomc_run("modes", example_file("rolling_coin.eom"), "--sweep-rate", "ph=1:2", NULL);
  ck_assert_int_eq(r.status, 2);
  run_free(&r);
}
END_TEST

static Suite *wheels_suite(void) {
  Suite *s = suite_create("wheels");
  TCase *tc = tcase_create("end to end");
  tcase_add_checked_fixture(tc, scratch_setup, scratch_teardown);
  tcase_set_timeout(tc, 300);
  tcase_add_test(tc, sledge_straightens_mass_centre_leading);
  tcase_add_test(tc, sledge_with_trailing_mass_centre_turns_round);
  tcase_add_test(tc, rail_velocity_form_matches_position_form);
  tcase_add_test(tc, integrability_note_in_general);
  tcase_add_test(tc, vertical_disk_runs_on_a_circle);
  tcase_add_test(tc, robot_follows_the_kinematic_arc);
  tcase_add_test(tc, robot_keeps_its_constraints_under_drive);
  tcase_add_test(tc, coin_rolls_without_slipping);
  tcase_add_test(tc, generated_velocity_constraint_functions);
  suite_add_tcase(s, tc);
  TCase *st = tcase_create("steady motions");
  tcase_add_checked_fixture(st, scratch_setup, scratch_teardown);
  tcase_set_timeout(st, 300);
  tcase_add_test(st, coin_upright_rolling_stability_threshold);
  tcase_add_test(st, sledge_straight_run_stability);
  tcase_add_test(st, castor_lines_up_when_trailing);
  tcase_add_test(st, coin_sweep_table_and_plot);
  tcase_add_test(st, steady_motion_errors);
  suite_add_tcase(s, st);
  return s;
}

int main(int argc, char **argv) { return run_test_main(argc, argv, wheels_suite); }
