/*
** test_units.c — units (units.c): annotation parsing, unit algebra and
** printing, and the model-wide dimensional check.
**
** The derived SI units used as references are the definitions of the SI
** brochure (BIPM, "The International System of Units (SI)", 9th edition,
** 2019, section 2.3.4, table 4): N = kg m s^-2, J = N m, W = J/s,
** Pa = N/m^2, Hz = s^-1; rad = m/m is dimensionless.
*/
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "front/check.h"
#include "front/parse.h"
#include "front/units.h"

typedef struct Checked {
  Diag d;
  Ast *ast;
  Model m;
} Checked;

static Checked *load(const char *src) {
  Checked *c = calloc(1, sizeof *c);
  ck_assert_ptr_nonnull(c);
  diag_init(&c->d, "units.eom", src, strlen(src));
  c->ast = parse_model("units.eom", src, strlen(src), &c->d);
  if (c->d.nerrors) {
    diag_print(&c->d, stderr);
    ck_abort_msg("test model does not parse:\n%s", src);
  }
  check_model(c->ast, &c->d, &c->m);
  return c;
}

static void unload(Checked *c) {
  ast_free(c->ast);
  diag_free(&c->d);
  free(c);
}

static const DiagMsg *first_error(const Checked *c) {
  for (int i = 0; i < c->d.nmsgs; i++)
    if (c->d.msgs[i].level == DIAG_ERROR) return &c->d.msgs[i];
  return NULL;
}

/* The first error is at line:col and contains every one of the pieces. */
static void expect_error(const char *src, int line, int col, const char *piece1, const char *piece2) {
  Checked *c = load(src);
  const DiagMsg *e = first_error(c);
  if (!e || e->loc.line != line || e->loc.col != col || !strstr(e->text, piece1) ||
      (piece2 && !strstr(e->text, piece2))) {
    diag_print(&c->d, stderr);
    ck_abort_msg("expected error at %d:%d with '%s' and '%s' for:\n%s", line, col, piece1,
                 piece2 ? piece2 : "", src);
  }
  unload(c);
}

/* Units checked, no error, no warning. */
static void expect_clean(const char *src) {
  Checked *c = load(src);
  if (c->d.nerrors || c->d.nwarnings || !c->m.has_units) {
    diag_print(&c->d, stderr);
    ck_abort_msg("expected a clean unit-checked model (has_units %d):\n%s", c->m.has_units, src);
  }
  unload(c);
}

/* The unit of the first coordinate's annotation, printed. */
static void expect_unit(const char *annotation, const char *printed) {
  char src[256], buf[96];
  snprintf(src, sizeof src, "coord x [%s]\nkinetic x'^2\n", annotation);
  Checked *c = load(src);
  Decl *x = c->m.coords[0];
  ck_assert_msg(x->dim != NULL, "[%s] did not parse", annotation);
  unit_format(*x->dim, 1, buf, sizeof buf);
  ck_assert_msg(strcmp(buf, printed) == 0, "[%s] printed as '%s', want '%s'", annotation, buf, printed);
  unload(c);
}

/* ------------------------------------------------------------ parsing and algebra */

START_TEST(parse_si_symbols) {
  expect_unit("m", "m");
  expect_unit("kg*m/s^2", "N");
  expect_unit("N", "N");
  expect_unit("N*m", "J");
  expect_unit("J/s", "W");
  expect_unit("W", "W");
  expect_unit("N/m^2", "Pa");
  expect_unit("Pa*m^2", "N");
  expect_unit("Hz", "1/s");
  expect_unit("1", "1");
  expect_unit("rad", "rad");
  expect_unit("rad/s", "rad/s");
  expect_unit("m/s^2", "m/s^2");
  expect_unit("kg*m^2", "kg*m^2");
  expect_unit("s^-2", "1/s^2");
  expect_unit("kg/(m*s)", "kg/(m*s)");
  expect_unit("(kg*m)/(s^2)", "N");
  expect_unit("A*s", "s*A");
  expect_unit("K*mol/cd", "K*mol/cd");
  expect_unit("N*m*s/rad", "kg*m^2/(s*rad)");
}
END_TEST

START_TEST(parse_errors) {
  expect_error("coord x [ft]\nkinetic x'^2\n", 1, 10, "unknown unit 'ft'", NULL);
  expect_error("coord x [m]\nparam k = 1 [N/mm]\nkinetic k*x'^2\n", 2, 16, "'mm' is a scaled unit",
               "[kg/s^2]");
  expect_error("coord a [deg]\nkinetic a'^2\n", 1, 10, "coherent SI", "[rad]");
  expect_error("coord x [Nm]\nkinetic x'^2\n", 1, 10, "unknown unit 'Nm'", NULL);
  expect_error("coord x [2*m]\nkinetic x'^2\n", 1, 10, "cannot hold the number 2", NULL);
  expect_error("coord x [m^0.5]\nkinetic x'^2\n", 1, 12, "exponent must be an integer", NULL);
}
END_TEST

/* The size of a scaled unit annotation in its coherent SI unit, and that
** unit printed. */
static void expect_scaled(const char *annotation, double scale, const char *printed) {
  char src[256], buf[96];
  double got = 0;
  Unit u;
  Diag d;
  snprintf(src, sizeof src, "coord x [%s]\n", annotation);
  diag_init(&d, "units.eom", src, strlen(src));
  Ast *ast = parse_model("units.eom", src, strlen(src), &d);
  ck_assert_int_eq(d.nerrors, 0);
  Expr *e = ast->stmts[0]->decls[0]->unit;
  ck_assert_msg(unit_parse_scaled(e, &d, &u, &got) == 0, "[%s] did not parse", annotation);
  unit_format(u, 1, buf, sizeof buf);
  ck_assert_msg(strcmp(buf, printed) == 0, "[%s] printed as '%s', want '%s'", annotation, buf,
                printed);
  ck_assert_msg(fabs(got - scale) <= 1e-15 * scale, "[%s] scale %.17g, want %.17g", annotation,
                got, scale);
  ast_free(ast);
  diag_free(&d);
}

/* Scaled units, from the SI brochure (BIPM 2019, table 7: prefixes; table
** 8: minute, hour, degree, tonne, bar is 100 kPa as in its 8th edition's
** table 8); rpm = 2 pi rad / 60 s and rev = 2 pi rad are common practice. */
START_TEST(parse_scaled_symbols) {
  const double pi = 3.14159265358979323846;
  expect_scaled("mm", 1e-3, "m");
  expect_scaled("km/h", 1000.0 / 3600.0, "m/s");
  expect_scaled("kN/m", 1e3, "kg/s^2");
  expect_scaled("MPa", 1e6, "Pa");
  expect_scaled("deg", pi / 180, "rad");
  expect_scaled("deg/s", pi / 180, "rad/s");
  expect_scaled("rpm", 2 * pi / 60, "rad/s");
  expect_scaled("rev", 2 * pi, "rad");
  expect_scaled("g", 1e-3, "kg");
  expect_scaled("mg", 1e-6, "kg");
  expect_scaled("t", 1e3, "kg");
  expect_scaled("min", 60, "s");
  expect_scaled("ms", 1e-3, "s");
  expect_scaled("h", 3600, "s");
  expect_scaled("cm^3", 1e-6, "m^3");
  expect_scaled("mrad", 1e-3, "rad");
  expect_scaled("bar", 1e5, "Pa");
  expect_scaled("kW*h", 3.6e6, "J");
  expect_scaled("mol", 1, "mol"); /* a whole symbol, not milli-"ol" */
  expect_scaled("cd", 1, "cd");   /* the candela, not centi-"d" */
  expect_scaled("N*m", 1, "J");
}
END_TEST

START_TEST(algebra) {
  Unit m = unit_base(U_M), s = unit_base(U_S), kg = unit_base(U_KG), r;
  Unit n = unit_div(unit_mul(kg, m), unit_mul(s, s));
  char buf[64];
  ck_assert_str_eq(unit_format(n, 0, buf, sizeof buf), "N");
  /* sqrt(m^2) = m */
  ck_assert_int_eq(unit_pow(unit_mul(m, m), 1, 2, &r), 0);
  ck_assert(unit_same(r, m));
  /* sqrt(m) is m^(1/2); its square is m again. */
  ck_assert_int_eq(unit_pow(m, 1, 2, &r), 0);
  ck_assert_str_eq(unit_format(r, 0, buf, sizeof buf), "m^(1/2)");
  ck_assert_int_eq(unit_pow(r, 2, 1, &r), 0);
  ck_assert(unit_same(r, m));
  /* m^(1/7) has no exponent on the 1/UNIT_DEN grid. */
  ck_assert_int_ne(unit_pow(m, 1, 7, &r), 0);
  /* m^-3 */
  ck_assert_int_eq(unit_pow(m, -3, 1, &r), 0);
  ck_assert_str_eq(unit_format(r, 0, buf, sizeof buf), "1/m^3");
  /* rad never makes a difference, but prints when asked. */
  Unit w = unit_div(unit_base(U_RAD), s);
  ck_assert(unit_same(w, unit_div(unit_dimensionless(), s)));
  ck_assert(unit_is_dimensionless(unit_base(U_RAD)));
  ck_assert_str_eq(unit_format(w, 1, buf, sizeof buf), "rad/s");
  ck_assert_str_eq(unit_format(w, 0, buf, sizeof buf), "1/s");
  ck_assert_str_eq(unit_format(unit_strip_rad(w), 1, buf, sizeof buf), "1/s");
}
END_TEST

/* ------------------------------------------------------------ model checks */

/* A hanging mass on a spring, every quantity in SI units. */
static const char *const spring_head =
  "coord x [m] \"stretch\"\n"
  "param m = 2 [kg]\n"
  "param k = 300 [N/m]\n"
  "param c = 4 [N*s/m]\n"
  "param g = 9.81 [m/s^2]\n"
  "input F [N]\n"
  "kinetic 1/2*m*x'^2\n";

static char *with_head(const char *rest) {
  static char buf[2048];
  snprintf(buf, sizeof buf, "%s%s", spring_head, rest);
  return buf;
}

START_TEST(correct_si_model_passes) {
  expect_clean(with_head("potential 1/2*k*x^2 - m*g*x\ndissipation 1/2*c*x'^2\nforce x = F\n"
                         "output spring = -k*x [N]\ninitial x = m*g/k\ninitial x' = 0.1\n"));
  Checked *c = load(with_head("potential 1/2*k*x^2\n"));
  ck_assert_int_eq(c->m.has_units, 1);
  unload(c);
}
END_TEST

START_TEST(potential_that_is_a_force_fails) {
  /* k*x is N, not J: the message names both. */
  expect_error(with_head("potential k*x\n"), 8, 1, "potential term has unit N", "J = kg*m^2/s^2");
}
END_TEST

START_TEST(energy_power_and_force_terms) {
  expect_error(with_head("potential 1/2*k*x^2\nkinetic m*x'\n"), 9, 1, "kinetic term has unit kg*m/s", "energy");
  expect_error(with_head("potential 1/2*k*x^2\ndissipation 1/2*k*x^2\n"), 9, 1, "dissipation term has unit J",
               "a power (W");
  expect_error(with_head("potential 1/2*k*x^2\nforce x = m*x\n"), 9, 1, "force on 'x' has unit kg*m",
               "a force (N)");
  expect_error(with_head("potential 1/2*k*x^2\nlagrangian m*x\n"), 9, 1, "lagrangian term has unit kg*m", "energy");
}
END_TEST

START_TEST(torque_for_an_angle_coordinate) {
  const char *head = "coord th [rad]\nparam I = 0.3 [kg*m^2]\nparam kt = 12 [N*m/rad]\n"
                     "param bt = 0.2 [N*m*s/rad]\ninput tau [N*m]\ninput F [N]\n"
                     "kinetic 1/2*I*th'^2\npotential 1/2*kt*th^2\ndissipation 1/2*bt*th'^2\n";
  char src[1024];
  snprintf(src, sizeof src, "%sforce th = tau - kt*th\n", head);
  expect_clean(src);
  snprintf(src, sizeof src, "%sforce th = F\n", head);
  expect_error(src, 10, 1, "force on 'th' has unit N", "a torque (N*m)");
}
END_TEST

START_TEST(sqrt_of_square_is_length) {
  const char *head = "coord x, y [m]\nparam m = 1 [kg]\nparam k = 50 [N/m]\nparam L = 0.4 [m]\n"
                     "kinetic 1/2*m*(x'^2 + y'^2)\n";
  char src[1024];
  snprintf(src, sizeof src, "%slet d = sqrt(x^2 + y^2)\npotential 1/2*k*(d - L)^2\n", head);
  expect_clean(src);
  snprintf(src, sizeof src, "%slet d = sqrt(x^2 + y^2)\npotential 1/2*k*(d - m)^2\n", head);
  expect_error(src, 7, 20, "operands of '-' have different units: m and kg", NULL);
  /* x^3 is m^3, and sqrt(sqrt(x^4)) is m. */
  snprintf(src, sizeof src, "%spotential k*x^3/L + k*sqrt(sqrt(x^4))^2\n", head);
  expect_clean(src);
}
END_TEST

START_TEST(sums_functions_and_powers) {
  expect_error(with_head("potential 1/2*k*x^2 + m*x\n"), 8, 21, "operands of '+' have different units: J and kg*m",
               NULL);
  expect_error(with_head("potential 1/2*k*x^2 + 1\n"), 8, 21, "J and 1", NULL);
  expect_error(with_head("potential 1/2*k*x^2*sin(x)\n"), 8, 21, "argument of sin must be dimensionless, not m",
               NULL);
  expect_error(with_head("potential 1/2*k*x^2*exp(t)\n"), 8, 21, "argument of exp must be dimensionless, not s",
               NULL);
  expect_error(with_head("potential 1/2*k*x^x\n"), 8, 18, "exponent must be dimensionless, not m", NULL);
  expect_error("coord x [m]\nparam n = 2 [1]\nparam k = 1 [N/m]\nkinetic k*x^n\n", 4, 12,
               "must be a constant number", NULL);
  expect_error(with_head("potential 1/2*k*x^2 + k*x*t\n"), 8, 21, "J and kg*m/s", NULL);
  expect_error(with_head("potential 1/2*k*x^2*atan2(x, t)\n"), 8, 21, "arguments of atan2 have different units", NULL);
  /* 0 fits anything; an angle in rad is dimensionless; w*t is dimensionless for w in rad/s or Hz. */
  expect_clean("coord x [m]\ncoord th [rad]\nparam m = 1 [kg]\nparam w = 3 [rad/s]\nparam f = 2 [Hz]\n"
               "kinetic 1/2*m*(x' + 0)^2 + 0\npotential 0*x + m*x'^2*sin(th)*cos(w*t)*sin(2*pi*f*t)\n"
               "force x = 0\n");
}
END_TEST

/* min, max and clamp keep their arguments' common unit; sign and step take
** any unit and give a pure number (builtins.h). */
START_TEST(branch_functions) {
  expect_clean(with_head("potential 1/2*k*max(0, x - 0.1*m/m*x)^2 + 1/2*k*min(x, 2*x)^2\n"
                         "force x = -c*sign(x')*x' - F*step(x) + clamp(F, -m*g, m*g)\n"));
  expect_error(with_head("potential 1/2*k*x^2\nforce x = max(F, c)\n"), 9, 11,
               "arguments of max have different units: N and kg/s", NULL);
  expect_error(with_head("potential 1/2*k*x^2\nforce x = clamp(F, -m*g, m)\n"), 9, 11,
               "arguments of clamp have different units: N and kg", NULL);
  /* a clamped length is a length: k * clamp(...) is a force, not an energy */
  expect_error(with_head("potential 1/2*k*x^2 + k*clamp(x, -x, x)\n"), 8, 21, "J and N", NULL);
  /* sign's argument must agree inside itself, and sign(x) is a pure number */
  expect_error(with_head("potential 1/2*k*x^2\nforce x = F*sign(x' - x)\n"), 9, 21,
               "operands of '-' have different units: m/s and m", NULL);
  expect_error(with_head("potential 1/2*k*x^2\nforce x = F + sign(x)\n"), 9, 13, "N and 1", NULL);
}
END_TEST

START_TEST(vectors_constraints_and_declared_values) {
  const char *head = "coord x [m]\ncoord th [rad]\nparam m = 1 [kg]\nparam L = 0.5 [m]\n"
                     "param g = 9.81 [m/s^2]\nkinetic 1/2*m*(x'^2 + L^2*th'^2)\n";
  char src[1024];
  snprintf(src, sizeof src, "%slet p = [x, th, 0]\npotential 0\n", head);
  expect_error(src, 7, 13, "entries of a vector or matrix have different units: m and 1", NULL);
  snprintf(src, sizeof src, "%sconstraint x = th\n", head);
  expect_error(src, 7, 1, "sides of the constraint have different units", NULL);
  snprintf(src, sizeof src, "%sconstraint x = L*sin(th)\npotential m*g*x\n", head);
  expect_clean(src);
  /* A bare number is dimensionless: the error says how to give it a unit,
  ** and the constraint's unit annotation does. */
  snprintf(src, sizeof src, "%sconstraint x = 0.1\n", head);
  expect_error(src, 7, 1, "sides of the constraint have different units: m and 1",
               "write the constraint's unit after it: 0.1 [m]");
  snprintf(src, sizeof src, "%sconstraint 0.25 = x\n", head);
  expect_error(src, 7, 1, "0.25 [m]", NULL);
  snprintf(src, sizeof src, "%sconstraint x = 0.1 [m]\nconstraint 2*th = 1.5 [rad]\npotential m*g*x\n", head);
  expect_clean(src);
  snprintf(src, sizeof src, "%sconstraint x = 0.1 [kg]\n", head);
  expect_error(src, 7, 12, "left side of the constraint has unit m, expected kg", NULL);
  /* The annotation gives its unit to a side that is a bare number, not to
  ** numbers inside a sum. */
  snprintf(src, sizeof src, "%sconstraint x = L + 0.1 [m]\npotential m*g*x\n", head);
  expect_error(src, 7, 18, "operands of '+' have different units: m and 1", NULL);
  snprintf(src, sizeof src, "%soutput y = x [s]\n", head);
  expect_error(src, 7, 8, "value of output 'y' has unit m, expected s", NULL);
  snprintf(src, sizeof src, "%soutput y = x + m\n", head);
  expect_error(src, 7, 14, "operands of '+' have different units: m and kg", NULL);
  snprintf(src, sizeof src, "%sparam I = m*L [kg*m^2]\npotential I*g/L*th\n", head);
  expect_error(src, 7, 7, "value of param 'I' has unit kg*m", NULL);
  snprintf(src, sizeof src, "%sinitial x = m\n", head);
  expect_error(src, 7, 1, "initial value of x has unit kg, expected m", NULL);
  snprintf(src, sizeof src, "%sinitial x' = L\n", head);
  expect_error(src, 7, 1, "initial value of x' has unit m", NULL);
  snprintf(src, sizeof src, "%sinitial x = L/2\ninitial th' = sqrt(g/L)\n", head);
  expect_clean(src);
}
END_TEST

START_TEST(bodies_and_transforms) {
  /* A link hinged at the origin: dh translation in m, rotation dimensionless. */
  const char *head = "coord th [rad]\nparam m = 1.2 [kg]\nparam a = 0.4 [m]\nparam d = 0 [m]\n"
                     "param Izz = 0.02 [kg*m^2]\ninput F [N]\n"
                     "let T = dh(th, d, a, 0)\ngravity [0, -9.81, 0]\n";
  char src[1024];
  snprintf(src, sizeof src,
           "%sbody link mass m at pos(T) orient rot(T) inertia diag(Izz, Izz, Izz)\n"
           "force [F, 0, 0] at pos(T)\npotential m*9.81*pos(T)[2]*0\n", head);
  expect_error(src, 8, 1, "gravity has unit 1, expected an acceleration", NULL);
  snprintf(src, sizeof src,
           "coord th [rad]\nparam m = 1.2 [kg]\nparam a = 0.4 [m]\nparam d = 0 [m]\nparam g = 9.81 [m/s^2]\n"
           "param Izz = 0.02 [kg*m^2]\ninput F [N]\ninput tau [N*m]\nlet T = dh(th, d, a, 0)\n"
           "gravity [0, -g, 0]\n"
           "body link mass m at pos(T) orient rot(T) inertia diag(Izz, Izz, Izz)\n"
           "force [F, 0, 0] at pos(T)\ntorque [0, 0, tau] on rot(T)\n");
  expect_clean(src);
  snprintf(src, sizeof src,
           "coord th [rad]\nparam m = 1.2 [kg]\nparam a = 0.4 [m]\ninput F [N]\n"
           "body link mass a at [a*cos(th), a*sin(th), 0]\nforce [F, 0, 0] at [m, 0, 0]\n");
  expect_error(src, 5, 16, "mass of body 'link' has unit m, expected a mass (kg)", NULL);
  snprintf(src, sizeof src,
           "coord th [rad]\nparam m = 1.2 [kg]\nparam a = 0.4 [m]\ninput F [N]\n"
           "body link mass m at [a*cos(th), a*sin(th), 0]\nforce [F, 0, 0] at [m, 0, 0]\n");
  expect_error(src, 6, 20, "point of application has unit kg", NULL);
  snprintf(src, sizeof src, "coord th [rad]\nparam a = 0.4 [m]\nparam m = 2 [kg]\n"
           "body link mass m at [a, 0, 0] orient rotz(th) inertia diag(a, a, a)\n");
  expect_error(src, 4, 55, "inertia of body 'link' has unit m", NULL);
  snprintf(src, sizeof src, "coord th [rad]\nparam a = 0.4 [m]\nparam m = 2 [kg]\n"
           "body link mass m at [a, 0, 0] orient rotz(a)\n");
  expect_error(src, 4, 38, "argument of rotz must be dimensionless, not m", NULL);
}
END_TEST

START_TEST(partial_units_warn_and_skip) {
  /* A param without a unit: one warning, and no unit errors at all. */
  Checked *c = load("coord x [m]\nparam m = 2 [kg]\nparam k = 300\nkinetic 1/2*m*x'^2\npotential k*x\n");
  ck_assert_int_eq(c->d.nerrors, 0);
  ck_assert_int_eq(c->d.nwarnings, 1);
  ck_assert_ptr_nonnull(strstr(c->d.msgs[0].text, "param 'k' has no unit"));
  ck_assert_int_eq(c->d.msgs[0].loc.line, 3);
  ck_assert_int_eq(c->m.has_units, 0);
  unload(c);
  /* No units anywhere: nothing to say. */
  c = load("coord x\nparam m = 2\nkinetic 1/2*m*x'^2\npotential m*x\n");
  ck_assert_int_eq(c->d.nerrors + c->d.nwarnings, 0);
  ck_assert_int_eq(c->m.has_units, 0);
  unload(c);
}
END_TEST

START_TEST(unitless_inputs_and_consts_are_unchecked) {
  /* Decision (documented in units.c): an input or const without a unit
  ** makes the terms that use it unchecked, with one warning per name. */
  Checked *c = load("coord x [m]\nparam m = 2 [kg]\nconst n = 3\ninput u\n"
                    "kinetic 1/2*m*x'^2\npotential m*x*u\nforce x = n*u\n");
  ck_assert_int_eq(c->d.nerrors, 0);
  ck_assert_int_eq(c->d.nwarnings, 2);
  ck_assert_int_eq(c->m.has_units, 1);
  ck_assert_ptr_nonnull(strstr(c->d.msgs[0].text, "input 'u' has no unit"));
  ck_assert_ptr_nonnull(strstr(c->d.msgs[1].text, "const 'n' has no unit"));
  unload(c);
  /* A const with a unit is checked like a param. */
  expect_error("coord x [m]\nparam m = 2 [kg]\nconst g = 9.81 [m/s^2]\nkinetic 1/2*m*x'^2\npotential g*x\n", 5, 1,
               "potential term has unit m^2/s^2", NULL);
}
END_TEST

START_TEST(check_twice_gives_same_answer) {
  /* Later stages may check a model again; computed let units must not be
  ** mistaken for declared ones. */
  Checked *c = load("coord x [m]\nparam m = 2 [kg]\ninput u\nlet w = m*u\nlet v = x'\n"
                    "kinetic 1/2*m*v^2 + 0*w\n");
  ck_assert_int_eq(c->d.nerrors, 0);
  int warnings = c->d.nwarnings;
  Model again;
  ck_assert_int_eq(check_model(c->ast, &c->d, &again), 0);
  ck_assert_int_eq(again.has_units, 1);
  ck_assert_int_eq(c->d.nwarnings, 2 * warnings);
  unload(c);
}
END_TEST

int main(void) {
  Suite *s = suite_create("units");
  TCase *tc = tcase_create("algebra");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, parse_si_symbols);
  tcase_add_test(tc, parse_errors);
  tcase_add_test(tc, parse_scaled_symbols);
  tcase_add_test(tc, algebra);
  suite_add_tcase(s, tc);
  tc = tcase_create("model");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, correct_si_model_passes);
  tcase_add_test(tc, potential_that_is_a_force_fails);
  tcase_add_test(tc, energy_power_and_force_terms);
  tcase_add_test(tc, torque_for_an_angle_coordinate);
  tcase_add_test(tc, sqrt_of_square_is_length);
  tcase_add_test(tc, sums_functions_and_powers);
  tcase_add_test(tc, branch_functions);
  tcase_add_test(tc, vectors_constraints_and_declared_values);
  tcase_add_test(tc, bodies_and_transforms);
  tcase_add_test(tc, partial_units_warn_and_skip);
  tcase_add_test(tc, unitless_inputs_and_consts_are_unchecked);
  tcase_add_test(tc, check_twice_gives_same_answer);
  suite_add_tcase(s, tc);
  SRunner *sr = srunner_create(s);
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? 1 : 0;
}
