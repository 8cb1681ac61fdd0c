/*
** test_check.c — the semantic pass (check.c): names, shapes, built-in
** arities, time rates, param/const/initial evaluation, the Model it fills,
** and the rule that one mistake gives one error.
**
** Each model is parsed with parse_model() and checked with check_model();
** errors are asserted by position (line:col) and a piece of the message.
** The numbers expected from evaluated defaults are plain arithmetic.
*/
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>

#include "front/attitude.h"
#include "front/check.h"
#include "front/parse.h"

typedef struct Checked {
  Diag d;
  Ast *ast;
  Model m;
  const char *src;
} Checked;

/* Parse (which must succeed) and check `src` as the file `path`. */
static Checked *load_as(const char *path, const char *src) {
  Checked *c = calloc(1, sizeof *c);
  ck_assert_ptr_nonnull(c);
  c->src = src;
  diag_init(&c->d, path, src, strlen(src));
  c->ast = parse_model(path, src, strlen(src), &c->d);
  if (c->d.nerrors) {
    diag_print(&c->d, stderr);
    ck_abort_msg("test model does not parse:\n%s", src);
  }
  check_model(c->ast, &c->d, &c->m);
  return c;
}

static Checked *load(const char *src) { return load_as("test.eom", src); }

static void unload(Checked *c) {
  ast_free(c->ast);
  diag_free(&c->d);
  free(c);
}

static const DiagMsg *first_of(const Checked *c, DiagLevel level) {
  for (int i = 0; i < c->d.nmsgs; i++)
    if (c->d.msgs[i].level == level) return &c->d.msgs[i];
  return NULL;
}

/* The first error is at line:col and contains `substr`. */
static void expect_error(const char *src, int line, int col, const char *substr) {
  Checked *c = load(src);
  const DiagMsg *e = first_of(c, DIAG_ERROR);
  if (!e || e->loc.line != line || e->loc.col != col || !strstr(e->text, substr)) {
    diag_print(&c->d, stderr);
    ck_abort_msg("expected error at %d:%d containing '%s' for:\n%s", line, col, substr, src);
  }
  unload(c);
}

/* No errors and no warnings. */
static Checked *expect_clean(const char *src) {
  Checked *c = load(src);
  if (c->d.nerrors || c->d.nwarnings) {
    diag_print(&c->d, stderr);
    ck_abort_msg("expected a clean model:\n%s", src);
  }
  return c;
}

static void expect_ok(const char *src) { unload(expect_clean(src)); }

static int count_level(const Checked *c, DiagLevel level) {
  int n = 0;
  for (int i = 0; i < c->d.nmsgs; i++) n += c->d.msgs[i].level == level;
  return n;
}

/* ------------------------------------------------------------ names */

START_TEST(undefined_name) {
  expect_error("coord x\nkinetic x'^2 + y\n", 2, 16, "undefined name 'y'");
}
END_TEST

START_TEST(declaration_must_precede_use) {
  expect_error("coord x\nkinetic m*x'^2\nparam m = 1\n", 2, 9, "undefined name 'm'");
  expect_error("coord x\nparam m = m\nkinetic m*x'^2\n", 2, 11, "undefined name 'm'");
  expect_error("coord x\nlet r = r + x\nkinetic r'^2\n", 2, 9, "undefined name 'r'");
}
END_TEST

START_TEST(duplicate_declaration_names_earlier_line) {
  Checked *c = load("coord x\nparam m = 1\nparam m = 2\nkinetic m*x'^2\n");
  ck_assert_int_eq(c->d.nerrors, 1);
  const DiagMsg *e = first_of(c, DIAG_ERROR);
  ck_assert_int_eq(e->loc.line, 3);
  ck_assert_int_eq(e->loc.col, 7);
  ck_assert_ptr_nonnull(strstr(e->text, "duplicate declaration of 'm'"));
  ck_assert_ptr_nonnull(strstr(e->text, "line 2"));
  const DiagMsg *n = first_of(c, DIAG_NOTE);
  ck_assert_ptr_nonnull(n);
  ck_assert_int_eq(n->loc.line, 2);
  ck_assert_int_eq(n->loc.col, 7);
  unload(c);
  /* Across kinds and within one coord list. */
  expect_error("coord x\ninput x\nkinetic x'^2\n", 2, 7, "duplicate declaration of 'x'");
  expect_error("coord x, y, x\nkinetic x'^2 + y'^2\n", 1, 13, "duplicate declaration of 'x'");
}
END_TEST

START_TEST(builtin_and_predefined_names_rejected) {
  expect_error("coord x\nparam cos = 1\nkinetic x'^2\n", 2, 7, "'cos' is a built-in function");
  expect_error("coord x\nlet dh = x\nkinetic x'^2\n", 2, 5, "'dh' is a built-in function");
  expect_error("coord pi\nkinetic pi'^2\n", 1, 7, "'pi' is predefined");
  expect_error("coord x\ninput t\nkinetic x'^2\n", 2, 7, "'t' is predefined");
}
END_TEST

START_TEST(c_keywords_and_libm_names_are_fine) {
  /* The emitter never uses model names as C identifiers. */
  expect_ok("coord double\nparam y0 = 1\nparam j1 = 2\nlet int = y0*j1\n"
            "kinetic int*double'^2\npotential y0*double^2\n");
}
END_TEST

START_TEST(context_words_are_names) {
  /* mass, at, on, orient, inertia mean something only inside body/force/torque. */
  expect_ok("coord at\nparam mass = 2\nparam inertia = 1\nkinetic mass*at'^2 + inertia*at'^2\n");
}
END_TEST

START_TEST(undefined_name_reported_once_per_statement) {
  Checked *c = load("coord x\nkinetic (zz +\n   x'^2 + zz*zz)\npotential zz\n");
  /* Once in the kinetic statement (which spans two lines), once in potential. */
  ck_assert_int_eq(c->d.nerrors, 2);
  ck_assert_int_eq(c->d.msgs[0].loc.line, 2);
  ck_assert_int_eq(c->d.msgs[1].loc.line, 4);
  unload(c);
}
END_TEST

START_TEST(names_resolve_to_declarations) {
  Checked *c = expect_clean("coord x\nparam m = 2\nkinetic m*x'^2 + t*pi*0\n");
  Expr *e = c->m.terms[0]->e[0];            /* (m*(x')^2) + ((t*pi)*0) */
  ck_assert_int_eq(e->kind, EX_BINARY);
  Expr *mx = e->args[0];
  ck_assert_int_eq(mx->args[0]->kind, EX_NAME);
  ck_assert_ptr_eq(mx->args[0]->ref, c->m.params[0]);
  ck_assert_ptr_eq(mx->args[1]->args[0]->args[0]->ref, c->m.coords[0]);
  Expr *tp = e->args[1]->args[0];
  ck_assert_str_eq(tp->args[0]->name, "t");
  ck_assert_ptr_null(tp->args[0]->ref);
  ck_assert_ptr_null(tp->args[1]->ref);
  unload(c);
}
END_TEST

START_TEST(outputs_and_bodies_are_not_values) {
  expect_error("coord x\noutput y = x\nkinetic y*x'^2\n", 3, 9, "'y' is an output");
  expect_error("coord x\nbody b mass 1 at [x, 0, 0]\nkinetic b\n", 3, 9, "'b' is a body");
}
END_TEST

/* ------------------------------------------------------------ built-ins */

START_TEST(builtin_arity_table) {
  ck_assert_int_eq(check_builtin_arity("sin"), 1);
  ck_assert_int_eq(check_builtin_arity("atan2"), 2);
  ck_assert_int_eq(check_builtin_arity("dh"), 4);
  ck_assert_int_eq(check_builtin_arity("diag"), -1);
  ck_assert_int_eq(check_builtin_arity("rot"), 1);
  ck_assert_int_eq(check_builtin_arity("min"), 2);
  ck_assert_int_eq(check_builtin_arity("max"), 2);
  ck_assert_int_eq(check_builtin_arity("sign"), 1);
  ck_assert_int_eq(check_builtin_arity("step"), 1);
  ck_assert_int_eq(check_builtin_arity("clamp"), 3);
  ck_assert_int_lt(check_builtin_arity("sine"), -1);
  ck_assert_int_lt(check_builtin_arity("y0"), -1);
  ck_assert(check_is_keyword("coord"));
  ck_assert(check_is_keyword("constraint"));
  ck_assert(!check_is_keyword("mass"));
  ck_assert(!check_is_keyword("double"));
}
END_TEST

START_TEST(wrong_arity) {
  expect_error("coord x\nkinetic sin(x, x)*x'^2\n", 2, 9, "sin takes 1 argument, not 2");
  expect_error("coord x\nlet T = dh(x, 1, 2)\nkinetic x'^2\n", 2, 9, "dh takes 4 arguments, not 3");
  expect_error("coord x\nkinetic atan2(x)*x'^2\n", 2, 9, "atan2 takes 2 arguments, not 1");
  expect_error("coord x\nkinetic min(x)*x'^2\n", 2, 9, "min takes 2 arguments, not 1");
  expect_error("coord x\nkinetic x'^2\nforce x = clamp(x, 1)\n", 3, 11, "clamp takes 3 arguments, not 2");
  expect_error("coord x\nkinetic x'^2\nforce x = sign(x, x')\n", 3, 11, "sign takes 1 argument, not 2");
  expect_error("coord x\nkinetic x'^2\nforce x = max([x, x], 1)\n", 3, 15,
               "argument 1 of max must be a scalar, not 2x1");
  expect_error("coord x\nparam step = 1\nkinetic x'^2\n", 2, 7, "'step' is a built-in function");
}
END_TEST

START_TEST(unknown_function) {
  expect_error("coord x\nkinetic foo(x)*x'^2\n", 2, 9, "unknown function 'foo'");
  expect_error("coord x\nparam m = 1\nkinetic m(x)*x'^2\n", 3, 9, "'m' is a param, not a function");
}
END_TEST

/* ------------------------------------------------------------ shapes */

START_TEST(vector_plus_scalar) {
  expect_error("coord x\nlet v = [x, x, x]\nkinetic x'^2 + v\n", 3, 14, "cannot add scalar and 3x1");
  expect_error("coord x\nkinetic x'^2 - [1, 2]\n", 2, 14, "cannot subtract scalar and 2x1");
}
END_TEST

START_TEST(matrix_times_wrong_vector) {
  expect_error("coord x\nlet R = rotz(x)\nlet p = R*[1, 2]\nkinetic x'^2\n", 3, 10,
               "cannot multiply 3x3 by 2x1");
}
END_TEST

START_TEST(shapes_of_valid_expressions) {
  Checked *c = load("coord x\n"
                    "let R = rotz(x)\n"             /* 3x3 */
                    "let p = R*[1, 2, 3]\n"         /* 3x1 */
                    "let pt = transpose(p)\n"       /* 1x3 */
                    "let s = pt*p\n"                /* 1x1 */
                    "let M = [[1, 2], [3, 4]]\n"    /* 2x2 */
                    "let T = dh(x, 0.1, 0.2, 0)\n"  /* 4x4 */
                    "let P = pos(T)\n"              /* 3x1 */
                    "let Q = rot(T)\n"              /* 3x3 */
                    "let D = diag(1, 2, 3, 4)\n"    /* 4x4 */
                    "let c = cross(p, P)\n"         /* 3x1 */
                    "let n = norm(c) + dot(p, P) + p[2] + R[1, 3] + M[2, 2] + D[4, 4]\n"
                    "let rows = [[1, 2, 3]]\n"      /* 1x3 */
                    "kinetic (s + n)*x'^2 + rows[3] + Q[1, 1]\n");
  ck_assert_int_eq(c->d.nerrors, 0);
  static const struct {
    int r, c;
  } want[] = {{3, 3}, {3, 1}, {1, 3}, {1, 1}, {2, 2}, {4, 4}, {3, 1}, {3, 3}, {4, 4}, {3, 1}, {1, 1}, {1, 3}};
  ck_assert_int_eq(c->m.nlets, 12);
  for (int i = 0; i < 12; i++) {
    ck_assert_msg(c->m.lets[i]->shape.rows == want[i].r && c->m.lets[i]->shape.cols == want[i].c,
                  "let %s: %dx%d, want %dx%d", c->m.lets[i]->name, c->m.lets[i]->shape.rows,
                  c->m.lets[i]->shape.cols, want[i].r, want[i].c);
    ck_assert_int_eq(c->m.lets[i]->index, i);
  }
  unload(c);
}
END_TEST

START_TEST(list_and_matrix_literals) {
  expect_error("coord x\nlet M = [[1, 2], [3]]\nkinetic x'^2\n", 2, 18, "rows must have equal lengths");
  expect_error("coord x\nlet M = [[1, 2], 3]\nkinetic x'^2\n", 2, 18, "every row of a matrix must be a list");
  expect_error("coord x\nlet v = [1, 2]\nlet w = [v, 1]\nkinetic x'^2\n", 3, 10,
               "entries of a vector must be scalars");
}
END_TEST

START_TEST(divisor_and_power_need_scalars) {
  expect_error("coord x\nkinetic x'^2/[1, 2, 3]\n", 2, 13, "divisor must be a scalar, not 3x1");
  expect_error("coord x\nlet R = rotx(x)\nlet S = R^2\nkinetic x'^2\n", 3, 10, "base of ^ must be a scalar");
  expect_error("coord x\nkinetic x'^[1, 2]\n", 2, 11, "exponent of ^ must be a scalar");
}
END_TEST

START_TEST(indexing) {
  const char *head = "coord x\nconst two = 2\nlet v = [x, 2*x, 3*x]\nlet A = rotx(x)\n";
  char src[512];
  snprintf(src, sizeof src, "%skinetic v[4]*x'^2\n", head);
  expect_error(src, 5, 11, "index 4 is out of range 1..3");
  snprintf(src, sizeof src, "%skinetic v[0]*x'^2\n", head);
  expect_error(src, 5, 11, "out of range");
  snprintf(src, sizeof src, "%skinetic v[x]*x'^2\n", head);
  expect_error(src, 5, 11, "constant integer");
  snprintf(src, sizeof src, "%skinetic v[1.5]*x'^2\n", head);
  expect_error(src, 5, 11, "constant integer");
  snprintf(src, sizeof src, "%skinetic A[1]*x'^2\n", head);
  expect_error(src, 5, 10, "needs two indices");
  snprintf(src, sizeof src, "%skinetic A[2, 4]*x'^2\n", head);
  expect_error(src, 5, 14, "index 4 is out of range 1..3");
  snprintf(src, sizeof src, "%skinetic x[1]*x'^2\n", head);
  expect_error(src, 5, 10, "cannot index a scalar");
  snprintf(src, sizeof src, "%skinetic (v[two] + A[two, 3] + v[1 + 2])*x'^2\n", head);
  expect_ok(src);
}
END_TEST

START_TEST(vector_builtins) {
  expect_error("coord x\nkinetic dot([1, 2, 3], [1, 2])*x'^2\n", 2, 9, "dot needs two vectors of equal length");
  expect_error("coord x\nlet c = cross([1, 2], [3, 4])\nkinetic x'^2\n", 2, 9, "cross needs two 3-vectors");
  expect_error("coord x\nkinetic norm(rotz(x))*x'^2\n", 2, 9, "norm needs a vector, not 3x3");
  expect_error("coord x\nlet p = pos(rotz(x))\nkinetic x'^2\n", 2, 9, "pos needs a 4x4 transform, not 3x3");
  expect_error("coord x\nlet R = rotz([x, x])\nkinetic x'^2\n", 2, 14, "argument 1 of rotz must be a scalar");
  expect_error("coord x\nkinetic sin([x, x])*x'^2\n", 2, 13, "argument 1 of sin must be a scalar");
  expect_error("coord x\nlet D = diag()\nkinetic x'^2\n", 2, 9, "diag needs at least one argument");
  expect_ok("coord x\nkinetic dot([1, 2], [x', x'])^2 + atan2(x, 1)\n");
}
END_TEST

START_TEST(statement_shapes) {
  expect_error("coord x\nkinetic [x', x']\n", 2, 9, "a kinetic term must be a scalar, not 2x1");
  expect_error("coord x\nkinetic x'^2\npotential rotz(x)\n", 3, 11, "a potential term must be a scalar, not 3x3");
  expect_error("coord x\nkinetic x'^2\nforce x = [1, 2, 3]\n", 3, 11, "generalized force must be a scalar");
  expect_error("coord x\nkinetic x'^2\nforce [1, 0] at [x, 0, 0]\n", 3, 7, "force vector must be a 3-vector");
  expect_error("coord x\nkinetic x'^2\nforce [1, 0, 0] at x\n", 3, 20, "point of application must be a 3-vector");
  expect_error("coord x\nkinetic x'^2\ntorque [0, 0, 1] on [x, 0, 0]\n", 3, 21, "orientation must be a 3x3 matrix");
  expect_error("coord x\nkinetic x'^2\ngravity 9.81\n", 3, 9, "gravity must be a 3-vector");
  expect_error("coord x\nbody b mass [1, 2] at [x, 0, 0]\n", 2, 13, "mass of body 'b' must be a scalar");
  expect_error("coord x\nbody b mass 1 at [x, 0]\n", 2, 18, "position of body 'b' must be a 3-vector");
  expect_error("coord x\nbody b mass 1 at [x, 0, 0] orient diag(1, 1)\n", 2, 35,
               "orientation of body 'b' must be a 3x3 matrix");
  expect_error("coord x\nbody b mass 1 at [x, 0, 0] inertia [1, 1, 1]\n", 2, 36,
               "inertia of body 'b' must be a 3x3 matrix");
  expect_error("coord x\nkinetic x'^2\nconstraint [x, x] = x\n", 3, 1, "equal shapes, not 2x1 and scalar");
  expect_ok("coord x\nkinetic x'^2\noutput p = [x, x]\noutput R = rotz(x)\n");  /* ny = 2 + 9 */
}
END_TEST

START_TEST(inertia_symmetry_error) {
  expect_error("coord x\ngravity [0, 0, -9.81]\n"
               "body b mass 2 at [x, 0, 0] orient rotz(x) inertia [[1, 0.2, 0], [0, 1, 0], [0, 0, 1]]\n",
               3, 56, "inertia of body 'b' must be symmetric: I[1,2] = 0.2 but I[2,1] = 0");
  expect_ok("coord x\nparam Ixy = 0.2\n"
            "body b mass 2 at [x, 0, 0] inertia [[1, Ixy, 0], [Ixy, 1, 0], [0, 0, 1]]\n");
  expect_ok("coord x\nbody b mass 2 at [x, 0, 0] orient rotz(x) inertia diag(1, 2, 3)\n");
}
END_TEST

START_TEST(errors_do_not_cascade) {
  /* The undefined name is the only problem reported for the statement. */
  Checked *c = load("coord x\nkinetic (zz + [1, 2])*x'^2 + rotz(zz)\n");
  ck_assert_int_eq(c->d.nerrors, 1);
  ck_assert_ptr_nonnull(strstr(c->d.msgs[0].text, "undefined name 'zz'"));
  unload(c);
  /* A param whose default failed makes no more errors where it is used. */
  c = load("coord x\nparam a = zz\nparam b = 1/(a - a)\nconst n = 2/0\nlet v = [x, x]\n"
           "initial x = b\nkinetic a*b*x'^2 + v[n]\n");
  ck_assert_int_eq(c->d.nerrors, 2);
  ck_assert_int_eq(c->d.msgs[0].loc.line, 2);
  ck_assert_int_eq(c->d.msgs[1].loc.line, 4);
  unload(c);
  /* A let in error does not make later uses of it errors. */
  c = load("coord x\nlet v = [x, 1] + 1\nkinetic v*x'^2\npotential v[3]\n");
  ck_assert_int_eq(c->d.nerrors, 1);
  unload(c);
}
END_TEST

/* ------------------------------------------------------------ time rates */

START_TEST(rate_of_param_const_input) {
  expect_error("coord x\nparam m = 1\nkinetic m'*x'^2\n", 3, 10, "'m' has no time rate: it is a param");
  expect_error("coord x\nconst c = 1\nkinetic c'*x'^2\n", 3, 10, "'c' has no time rate: it is a const");
  expect_error("coord x\ninput u\nkinetic x'^2\nforce x = u'\n", 4, 12, "'u' has no known time rate: it is an input");
  expect_error("coord x\ninput u\nkinetic x'^2\nforce x = (u*x)'\n", 4, 16, "uses input 'u'");
  expect_error("coord x\ninput u\nlet w = u*x\nkinetic x'^2\nforce x = w'\n", 5, 12, "uses input 'u'");
}
END_TEST

START_TEST(second_rate_rejected) {
  expect_error("coord x\nkinetic x''\n", 2, 11, "second time derivative");
  expect_error("coord x\nkinetic (x'*x)'\n", 2, 15, "second time derivative");
  expect_error("coord x\nlet v = x'\nkinetic v'^2\n", 3, 10, "second time derivative");
  expect_error("coord x\nkinetic x'^2\noutput a = x''\n", 3, 14, "second time derivative");
  expect_error("coord x\nkinetic x'^2\nforce x = -x''\n", 3, 14, "second time derivative");
}
END_TEST

START_TEST(harmless_rates_allowed) {
  /* t' is 1; the rate of a constant expression is 0; rates of lets of q are velocities. */
  expect_ok("coord x\nparam m = 2\nlet p = [x, 2*x, 0]\nlet v = p'\n"
            "kinetic m/2*dot(v, v) + t'*x'^2 + (2*m)'*x + pi'\n");
  expect_ok("coord x\nlet s = sin(t)\nkinetic x'^2 + s'*x\n");
}
END_TEST

START_TEST(constraints_holonomic) {
  expect_error("coord x, y\ninput u\nkinetic x'^2 + y'^2\nconstraint x = u\n", 4, 1, "cannot use input 'u'");
  Checked *c = expect_clean("coord x, y, z\nkinetic x'^2 + y'^2 + z'^2\nconstraint x^2 + y^2 = 1\n"
                            "constraint [x, y, z] = [y, z, sin(t)]\n");
  ck_assert_int_eq(c->m.nconstraints, 4);
  ck_assert_int_eq(c->m.nvconstraints, 0);
  unload(c);
}
END_TEST

/* A constraint with rates is a velocity constraint when they enter linearly;
** otherwise the error points at the term where they do not. */
START_TEST(constraints_on_velocities) {
  const char *head = "coord x, y, th\nparam r = 0.2\nkinetic x'^2 + y'^2 + th'^2\n";
  char src[512];
  snprintf(src, sizeof src, "%sconstraint x' = y\nconstraint [x', y'] = r*th'*[cos(th), sin(th)]\n"
           "let v = [x', y']\nconstraint dot(v, [1, 2]) = (x*y)'\n", head);
  Checked *c = expect_clean(src);
  ck_assert_int_eq(c->m.nconstraints, 0);
  ck_assert_int_eq(c->m.nvconstraints, 4);
  unload(c);
  snprintf(src, sizeof src, "%sconstraint x' = y'*y'\n", head);
  expect_error(src, 4, 19, "non-linearly");
  snprintf(src, sizeof src, "%sconstraint x' = sin(th')\n", head);
  expect_error(src, 4, 17, "non-linearly");
  snprintf(src, sizeof src, "%sconstraint x' = 1/th'\n", head);
  expect_error(src, 4, 18, "non-linearly");
  snprintf(src, sizeof src, "%sconstraint x'^2 = 1\n", head);
  expect_error(src, 4, 14, "non-linearly");
  snprintf(src, sizeof src, "%slet v = [x', y']\nconstraint dot(v, v) = 1\n", head);
  expect_error(src, 5, 12, "non-linearly");
  snprintf(src, sizeof src, "%sinput u\nconstraint x' = u\n", head);
  expect_error(src, 5, 1, "cannot use input 'u'");
}
END_TEST

/* ------------------------------------------------------------ values */

START_TEST(param_defaults_evaluated) {
  Checked *c = expect_clean("coord x\nconst two = 2\nparam a = 1.5\nparam b = a*two + sqrt(16) - 2^3\n"
                            "param c = cos(pi)\nconst d = two*pi\n"
                            "kinetic (a + b + c + d)*x'^2\n");
  ck_assert_int_eq(c->m.nparams, 3);
  ck_assert(c->m.params[0]->number == 1.5);
  ck_assert(c->m.params[1]->number == -1.0);
  ck_assert(c->m.params[2]->number == -1.0);
  ck_assert_int_eq(c->m.nconsts, 2);
  ck_assert(c->m.consts[0]->number == 2.0);
  ck_assert(fabs(c->m.consts[1]->number - 2 * 3.14159265358979323846) < 1e-15);
  for (int i = 0; i < 3; i++) ck_assert_int_eq(c->m.params[i]->index, i);
  unload(c);
}
END_TEST

/* The branch functions fold like the others (values by their definitions in
** the language reference: step(0) = 0, sign(0) = 0). */
START_TEST(param_defaults_with_branch_functions) {
  Checked *c = expect_clean("coord x\nparam a = min(2, -3)\nparam b = max(2, -3)\nparam c = clamp(5, 0, 2)\n"
                            "param d = clamp(-5, 0, 2)\nparam e = clamp(1.5, 0, 2)\nparam f = step(0) + step(0.1)\n"
                            "param g = sign(-4) + 10*sign(0)\nkinetic (a + b + c + d + e + f + g)*x'^2\n");
  const double want[] = {-3, 2, 2, 0, 1.5, 1, -1};
  ck_assert_int_eq(c->m.nparams, 7);
  for (int i = 0; i < 7; i++) ck_assert_msg(c->m.params[i]->number == want[i], "param %d", i);
  unload(c);
}
END_TEST

START_TEST(param_defaults_must_be_constant) {
  expect_error("coord x\nparam m = 2*x\nkinetic m*x'^2\n", 2, 13, "'x' is a coordinate");
  expect_error("coord x\ninput u\nparam m = u\nkinetic m*x'^2\n", 3, 11, "'u' is an input");
  expect_error("coord x\nparam m = t\nkinetic m*x'^2\n", 2, 11, "time");
  expect_error("coord x\nparam m = 1/0\nkinetic m*x'^2\n", 2, 12, "not a finite number");
  expect_error("coord x\nparam m = [1, 2]\nkinetic x'^2\n", 2, 11, "must be a scalar, not 2x1");
  expect_error("coord x\nparam m = 2\nconst c = 3*m\nkinetic c*m*x'^2\n", 3, 13, "cannot use param 'm'");
}
END_TEST

START_TEST(initial_state) {
  Checked *c = expect_clean("coord x, y\nparam a = 0.25\nkinetic x'^2 + y'^2\n"
                            "initial y = 2*a\ninitial x' = -3\ninitial y' = a + 1\n");
  ck_assert_int_eq(c->m.ncoords, 2);
  ck_assert(c->m.q0[0] == 0.0);
  ck_assert(c->m.q0[1] == 0.5);
  ck_assert(c->m.qd0[0] == -3.0);
  ck_assert(c->m.qd0[1] == 1.25);
  ck_assert_int_eq(c->m.nterms, 1);
  unload(c);
}
END_TEST

START_TEST(initial_errors) {
  expect_error("coord x\nparam m = 1\nkinetic m*x'^2\ninitial m = 2\n", 4, 9, "'m' is not a coordinate (it is a param)");
  expect_error("initial x = 1\ncoord x\nkinetic x'^2\n", 1, 9, "undefined name 'x'");
  expect_error("coord x\nkinetic x'^2\ninitial x = 1\ninitial x = 2\n", 4, 1, "duplicate initial value for 'x'");
  expect_error("coord x\nkinetic x'^2\ninitial x' = 1\ninitial x' = 2\n", 4, 1, "duplicate initial value");
  expect_error("coord x, y\nkinetic x'^2 + y'^2\ninitial x = y\n", 3, 13, "'y' is a coordinate");
}
END_TEST

START_TEST(identify_lists_params) {
  Checked *c = expect_clean("coord x\nparam m = 1\nparam k = 2\nkinetic m*x'^2\npotential k*x^2\nidentify k, m\n");
  ck_assert_int_eq(c->m.nidentify, 2);
  ck_assert_ptr_eq(c->m.identify[0], c->m.params[1]);
  ck_assert_ptr_eq(c->m.identify[1], c->m.params[0]);
  unload(c);
  expect_error("coord x\nkinetic x'^2\nidentify x\n", 3, 10, "'x' is not a param (it is a coordinate)");
  expect_error("coord x\nparam m = 1\nkinetic m*x'^2\nidentify m, m\n", 4, 13, "already listed");
  expect_error("coord x\nkinetic x'^2\nidentify q\n", 3, 10, "undefined name 'q'");
}
END_TEST

/* ------------------------------------------------------------ force targets */

START_TEST(force_target_must_be_coordinate) {
  expect_error("coord x\nparam k = 1\nkinetic x'^2\nforce k = 1\n", 4, 7, "'k' is not a coordinate (it is a param)");
  expect_error("coord x\ninput u\nkinetic x'^2\nforce u = 1\n", 4, 7, "'u' is not a coordinate (it is an input)");
  expect_error("coord x\nkinetic x'^2\nforce y = 1\n", 3, 7, "undefined name 'y'");
  Checked *c = expect_clean("coord x, y\ninput u\nkinetic x'^2 + y'^2\nforce y = u\n");
  ck_assert_ptr_eq(c->m.terms[1]->target, c->m.coords[1]);
  unload(c);
}
END_TEST

/* ------------------------------------------------------------ the model */

START_TEST(model_statement_first) {
  expect_error("coord x\nmodel late\nkinetic x'^2\n", 2, 1, "'model' must be the first statement");
  Checked *c = expect_clean("model crane_2\ncoord x\nkinetic x'^2\n");
  ck_assert_str_eq(c->m.name, "crane_2");
  unload(c);
}
END_TEST

START_TEST(model_name_from_file_stem) {
  static const struct {
    const char *path, *name;
  } cases[] = {
    {"seat_rig.eom", "seat_rig"},
    {"models/gantry-crane.v2.eom", "gantry_crane_v2"},
    {"/tmp/2link arm.eom", "m_2link_arm"},
    {"noext", "noext"},
    {"dir/.eom", "_eom"},
    {"", "m_"},
  };
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    Checked *c = load_as(cases[i].path, "coord x\nkinetic x'^2\n");
    ck_assert_int_eq(c->d.nerrors, 0);
    ck_assert_msg(strcmp(c->m.name, cases[i].name) == 0, "%s -> %s, want %s", cases[i].path, c->m.name,
                  cases[i].name);
    unload(c);
  }
}
END_TEST

START_TEST(model_needs_coordinates_and_energy) {
  expect_error("", 1, 1, "no coordinates");
  expect_error("param m = 1\n", 1, 1, "no coordinates");
  expect_error("coord x\npotential x^2\n", 1, 1, "no energy");
  expect_ok("coord x\nlagrangian x'^2 - x^2\n");
  expect_ok("coord x\nbody b mass 1 at [x, 0, 0]\n");
}
END_TEST

START_TEST(model_arrays_and_terms) {
  Checked *c = expect_clean("coord a, b [m]\nparam m = 1 [kg]\ncoord c [m]\ninput u, v [N]\n"
                            "let s = a + b + c\nconst k = 3 [N/m]\n"
                            "kinetic 1/2*m*(a'^2 + b'^2 + c'^2)\npotential 1/2*k*s^2\n"
                            "dissipation 0\nforce a = u + v\noutput y = s [m]\n"
                            "constraint a = b\nlagrangian 0\n");
  Model *m = &c->m;
  ck_assert_int_eq(m->ncoords, 3);
  ck_assert_str_eq(m->coords[2]->name, "c");
  for (int i = 0; i < 3; i++) ck_assert_int_eq(m->coords[i]->index, i);
  ck_assert_int_eq(m->ninputs, 2);
  ck_assert_int_eq(m->inputs[1]->index, 1);
  ck_assert_int_eq(m->nlets, 1);
  ck_assert_int_eq(m->nconsts, 1);
  ck_assert_int_eq(m->noutputs, 1);
  ck_assert_int_eq(m->nbodies, 0);
  ck_assert_int_eq(m->nterms, 6);
  static const StmtKind kinds[] = {ST_KINETIC, ST_POTENTIAL, ST_DISSIPATION, ST_FORCE, ST_CONSTRAINT, ST_LAGRANGIAN};
  for (int i = 0; i < 6; i++) ck_assert_int_eq(m->terms[i]->kind, kinds[i]);
  ck_assert_int_eq(m->nconstraints, 1);
  ck_assert_int_eq(m->has_units, 1);
  ck_assert_ptr_eq(m->ast, c->ast);
  unload(c);
}
END_TEST

START_TEST(unused_warnings) {
  Checked *c = load("coord x\nparam m = 1\nparam unused_p = 2\ninput u\nlet l = x\nkinetic m*x'^2\n");
  ck_assert_int_eq(c->d.nerrors, 0);
  ck_assert_int_eq(count_level(c, DIAG_WARNING), 2);
  ck_assert_ptr_nonnull(strstr(c->d.msgs[0].text, "param 'unused_p' is never used"));
  ck_assert_int_eq(c->d.msgs[0].loc.line, 3);
  ck_assert_ptr_nonnull(strstr(c->d.msgs[1].text, "let 'l' is never used"));
  unload(c);
}
END_TEST

/* ------------------------------------------------------------ eomc check */

#ifndef SRCDIR
#define SRCDIR "."
#endif
#ifndef BUILDDIR
#define BUILDDIR "."
#endif

/* Run `eomc check ARGS`; returns the exit status, stdout in `out`. */
static int run_check(const char *args, char *out, size_t n) {
  const char *eomc = getenv("EOMC") ? getenv("EOMC") : BUILDDIR "/eomc";
  char cmd[4096];
  snprintf(cmd, sizeof cmd, "'%s' check %s 2>/dev/null", eomc, args);
  FILE *p = popen(cmd, "r");
  ck_assert_ptr_nonnull(p);
  size_t len = fread(out, 1, n - 1, p);
  out[len] = '\0';
  int st = pclose(p);
  ck_assert(WIFEXITED(st));
  return WEXITSTATUS(st);
}

START_TEST(check_command_summary) {
  static char out[1 << 16];
  ck_assert_int_eq(run_check("'" SRCDIR "/examples/seat_rig.eom'", out, sizeof out), 0);
  static const char *const want[] = {
    "model seat_rig",
    "coordinates (1):",
    "z  [m]  initial 0.02  seat travel from static rest, up",
    "parameters (3):",
    "k = 42000  [N/m]",
    "c = 1150   [N*s/m]  damper coefficient",
    "inputs (1):",
    "F  [N]  actuator force on the seat pan, up",
    "outputs (2):",
    "spring_force  [N]",
    "terms (4):",
    "line 23    potential",
    "line 25    force on z",
    "units: checked",
  };
  for (size_t i = 0; i < sizeof want / sizeof want[0]; i++)
    ck_assert_msg(strstr(out, want[i]) != NULL, "summary lacks '%s':\n%s", want[i], out);
}
END_TEST

START_TEST(check_command_statuses) {
  char out[4096];
  ck_assert_int_eq(run_check("'" SRCDIR "/tests/bad/s_unit_potential_is_force.eom'", out, sizeof out), 1);
  ck_assert_str_eq(out, "");
  ck_assert_int_eq(run_check("'" SRCDIR "/no/such/model.eom'", out, sizeof out), 2);
  ck_assert_int_eq(run_check("--frobnicate", out, sizeof out), 2);
  ck_assert_int_eq(run_check("", out, sizeof out), 2);
  ck_assert_int_eq(run_check("--help", out, sizeof out), 0);
  ck_assert_ptr_nonnull(strstr(out, "usage: eomc check"));
}
END_TEST

/* ------------------------------------------------------------ attitudes */

static const char att_base[] =
  "coord x\n"
  "attitude R \"hull\"\n"
  "kinetic x'^2 + dot(omega(R), omega(R))\n";

static char *att_src(const char *extra) {
  size_t n = strlen(att_base) + strlen(extra) + 1;
  char *s = malloc(n);
  ck_assert_ptr_nonnull(s);
  snprintf(s, n, "%s%s", att_base, extra);
  return s;
}

static void att_error(const char *extra, int line, int col, const char *substr) {
  char *s = att_src(extra);
  expect_error(s, line, col, substr);
  free(s);
}

/* Hamilton product a (x) b, [w, x, y, z]. */
static void quat_mul(const double a[4], const double b[4], double r[4]) {
  r[0] = a[0] * b[0] - a[1] * b[1] - a[2] * b[2] - a[3] * b[3];
  r[1] = a[0] * b[1] + a[1] * b[0] + a[2] * b[3] - a[3] * b[2];
  r[2] = a[0] * b[2] - a[1] * b[3] + a[2] * b[0] + a[3] * b[1];
  r[3] = a[0] * b[3] + a[1] * b[2] - a[2] * b[1] + a[3] * b[0];
}

START_TEST(attitude_declaration_and_shapes) {
  char *s = att_src("let w = R*omega(R)\noutput heading = R[1,1]*w[3]\ntorque [0, 0, x] on R\n");
  Checked *c = expect_clean(s);
  ck_assert_int_eq(c->m.nattitudes, 1);
  ck_assert_str_eq(c->m.attitudes[0]->name, "R");
  ck_assert_str_eq(c->m.attitudes[0]->desc, "hull");
  ck_assert_int_eq(c->m.ncoords, 1);
  /* defaults: body axes along the world's, at rest */
  ck_assert(c->m.attitude_q0[0] == 1 && c->m.attitude_q0[1] == 0 && c->m.attitude_q0[2] == 0 &&
            c->m.attitude_q0[3] == 0);
  ck_assert(c->m.omega0[0] == 0 && c->m.omega0[1] == 0 && c->m.omega0[2] == 0);
  unload(c);
  free(s);
  /* a model whose only coordinate is an attitude is complete */
  expect_ok("attitude B\nkinetic dot(omega(B), omega(B))\n");
  /* `omega` is not reserved: a model may still declare it */
  expect_ok("coord x\nparam omega = 2\nkinetic x'^2 - omega^2*x^2\n");
}
END_TEST

START_TEST(attitude_misuse_errors) {
  att_error("potential R\n", 4, 11, "must be a scalar, not 3x3");
  att_error("potential 1 + R\n", 4, 13, "cannot add scalar and 3x3");
  att_error("potential sin(R)\n", 4, 15, "argument 1 of sin must be a scalar");
  att_error("potential R'[1,1]\n", 4, 12, "the rate of attitude 'R' is not a state: use omega(R)");
  att_error("potential omega(x)[1]\n", 4, 17, "needs the name of an attitude, not coordinate");
  att_error("potential omega(R*R)[1]\n", 4, 18, "needs the name of an attitude");
  att_error("potential omega(Q)[1]\n", 4, 17, "undefined name 'Q'");
  att_error("force R = 1\n", 4, 7, "'R' is an attitude: it takes no generalized force");
  att_error("initial R' = 1\n", 4, 1, "give 'initial omega(R) = [a, b, c]'");
  att_error("initial omega(x) = [1, 2, 3]\n", 4, 15, "'x' is not an attitude");
  att_error("initial omega(R) = 1\n", 4, 20, "must be a 3-vector");
  att_error("initial omega(R) = [x, 0, 0]\n", 4, 21, "'x' is a coordinate");
  att_error("initial R = [1, 0, 0]\n", 4, 13, "must be a 3x3 matrix");
  att_error("initial R = rotz(x)\n", 4, 18, "'x' is a coordinate");
  att_error("initial R = rotz(0.1)\ninitial R = rotz(0.2)\n", 5, 1, "duplicate initial value for 'R'");
  att_error("initial omega(R) = [1, 0, 0]\ninitial omega(R) = [1, 0, 0]\n", 5, 1,
            "duplicate initial value for 'omega(R)'");
}
END_TEST

/* The note says which operand is the attitude. */
START_TEST(attitude_scalar_use_is_explained) {
  char *s = att_src("potential 1 + R\n");
  Checked *c = load(s);
  const DiagMsg *note = first_of(c, DIAG_NOTE);
  ck_assert_ptr_nonnull(note);
  ck_assert_int_eq(note->loc.line, 4);
  ck_assert_int_eq(note->loc.col, 15);
  ck_assert_ptr_nonnull(strstr(note->text, "'R' is an attitude: a 3x3 rotation"));
  unload(c);
  free(s);
}
END_TEST

/* A 3x3 that is not orthonormal, or a reflection, is no orientation. */
START_TEST(attitude_initial_must_be_rotation) {
  att_error("initial R = [[1, 0, 0], [0, 1, 0.1], [0, 0, 1]]\n", 4, 13,
            "is not a rotation: it is 0.1 from orthonormal");
  att_error("initial R = 2*rotx(0.3)\n", 4, 14, "is not a rotation: it is 3 from orthonormal");
  att_error("initial R = diag(1, 1, -1)\n", 4, 13, "is a reflection (determinant -1)");
  /* seven typed digits are close enough; the stored quaternion is unit */
  char *s = att_src("initial R = [[0.7071068, -0.7071068, 0], [0.7071068, 0.7071068, 0], [0, 0, 1]]\n");
  Checked *c = expect_clean(s);
  const double *q = c->m.attitude_q0;
  ck_assert(fabs(q[0] * q[0] + q[1] * q[1] + q[2] * q[2] + q[3] * q[3] - 1) < 1e-15);
  /* an eighth of a turn about z: [cos(pi/8), 0, 0, sin(pi/8)] (half angles) */
  ck_assert(fabs(q[0] - cos(0.39269908169872414)) < 1e-7 && fabs(q[3] - sin(0.39269908169872414)) < 1e-7);
  ck_assert(q[1] == 0 && q[2] == 0);
  unload(c);
  free(s);
}
END_TEST

/* The quaternion of a rotation by angle a about unit axis n is
** [cos(a/2), sin(a/2) n], and composing rotations multiplies quaternions
** (Hamilton product): K. Shoemake, "Animating rotation with quaternion
** curves", SIGGRAPH 1985, section 2 (the form is common practice). */
START_TEST(attitude_initial_quaternion_values) {
  char *s = att_src("param a = 0.3\ninitial R = rotz(a)*rotx(0.1)\ninitial omega(R) = [0.5, -1, 2*a]\n");
  Checked *c = expect_clean(s);
  double qz[4] = {cos(0.15), 0, 0, sin(0.15)}, qx[4] = {cos(0.05), sin(0.05), 0, 0}, want[4];
  quat_mul(qz, qx, want);
  for (int i = 0; i < 4; i++)
    ck_assert_msg(fabs(c->m.attitude_q0[i] - want[i]) < 1e-15, "q[%d] = %.17g, want %.17g", i,
                  c->m.attitude_q0[i], want[i]);
  ck_assert(c->m.omega0[0] == 0.5 && c->m.omega0[1] == -1 && fabs(c->m.omega0[2] - 0.6) < 1e-15);
  unload(c);
  free(s);
  /* a half turn about y: w = 0, so another pivot than w is needed */
  s = att_src("let turn = roty(pi)\ninitial R = transpose(turn)\n");
  c = expect_clean(s);
  ck_assert(fabs(c->m.attitude_q0[0]) < 1e-15 && fabs(fabs(c->m.attitude_q0[2]) - 1) < 1e-15);
  unload(c);
  free(s);
  /* the rotation part of a Denavit–Hartenberg transform */
  s = att_src("initial R = rot(dh(0.4, 1, 2, 0))\n");
  c = expect_clean(s);
  ck_assert(fabs(c->m.attitude_q0[0] - cos(0.2)) < 1e-15 && fabs(c->m.attitude_q0[3] - sin(0.2)) < 1e-15);
  unload(c);
  free(s);
}
END_TEST

/* Round trips over rotations about many axes and angles, including near a
** half turn where the scalar part vanishes: R(q(R)) = R. */
START_TEST(attitude_quaternion_round_trip) {
  for (int k = 0; k < 2000; k++) {
    double a = -3.14159 + 6.28318 * (k % 97) / 96.0;
    double n[3] = {sin(0.37 * k + 0.1), cos(0.91 * k), sin(1.7 * k) + 0.2};
    double len = sqrt(n[0] * n[0] + n[1] * n[1] + n[2] * n[2]);
    double q[4] = {cos(a / 2), sin(a / 2) * n[0] / len, sin(a / 2) * n[1] / len, sin(a / 2) * n[2] / len};
    double R[9], back[9], p[4];
    attitude_rotation_from_quaternion(q, R);
    ck_assert(attitude_orthonormality_error(R) < 1e-14);
    ck_assert(fabs(attitude_det3(R) - 1) < 1e-14);
    attitude_quaternion_from_rotation(R, p);
    ck_assert(p[0] >= 0);
    attitude_rotation_from_quaternion(p, back);
    for (int i = 0; i < 9; i++) ck_assert_msg(fabs(back[i] - R[i]) < 1e-14, "k %d entry %d", k, i);
    double sign = q[0] < 0 ? -1 : 1;
    for (int i = 0; i < 4; i++) ck_assert(fabs(p[i] - sign * q[i]) < 1e-12);
  }
}
END_TEST

/* Units: omega(R) is an angular velocity (rad/s, like the rate of an angle). */
START_TEST(attitude_units) {
  expect_ok("coord x [m]\nattitude R\nparam m = 1 [kg]\nparam J = 0.1 [kg*m^2]\n"
            "kinetic m*x'^2/2 + J*dot(omega(R), omega(R))/2\ninitial omega(R) = [0, 0, 1]\n");
  expect_error("coord x [m]\nattitude R\nparam m = 1 [kg]\n"
               "kinetic m*x'^2/2 + m*dot(omega(R), omega(R))/2\n", 4, 18, "operands of '+'");
}
END_TEST

int main(void) {
  Suite *s = suite_create("check");
  TCase *tc = tcase_create("names");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, undefined_name);
  tcase_add_test(tc, declaration_must_precede_use);
  tcase_add_test(tc, duplicate_declaration_names_earlier_line);
  tcase_add_test(tc, builtin_and_predefined_names_rejected);
  tcase_add_test(tc, c_keywords_and_libm_names_are_fine);
  tcase_add_test(tc, context_words_are_names);
  tcase_add_test(tc, undefined_name_reported_once_per_statement);
  tcase_add_test(tc, names_resolve_to_declarations);
  tcase_add_test(tc, outputs_and_bodies_are_not_values);
  suite_add_tcase(s, tc);
  tc = tcase_create("builtins");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, builtin_arity_table);
  tcase_add_test(tc, wrong_arity);
  tcase_add_test(tc, unknown_function);
  suite_add_tcase(s, tc);
  tc = tcase_create("shapes");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, vector_plus_scalar);
  tcase_add_test(tc, matrix_times_wrong_vector);
  tcase_add_test(tc, shapes_of_valid_expressions);
  tcase_add_test(tc, list_and_matrix_literals);
  tcase_add_test(tc, divisor_and_power_need_scalars);
  tcase_add_test(tc, indexing);
  tcase_add_test(tc, vector_builtins);
  tcase_add_test(tc, statement_shapes);
  tcase_add_test(tc, inertia_symmetry_error);
  tcase_add_test(tc, errors_do_not_cascade);
  suite_add_tcase(s, tc);
  tc = tcase_create("rates");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, rate_of_param_const_input);
  tcase_add_test(tc, second_rate_rejected);
  tcase_add_test(tc, harmless_rates_allowed);
  tcase_add_test(tc, constraints_holonomic);
  tcase_add_test(tc, constraints_on_velocities);
  suite_add_tcase(s, tc);
  tc = tcase_create("values");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, param_defaults_evaluated);
  tcase_add_test(tc, param_defaults_with_branch_functions);
  tcase_add_test(tc, param_defaults_must_be_constant);
  tcase_add_test(tc, initial_state);
  tcase_add_test(tc, initial_errors);
  tcase_add_test(tc, identify_lists_params);
  tcase_add_test(tc, force_target_must_be_coordinate);
  suite_add_tcase(s, tc);
  tc = tcase_create("model");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, model_statement_first);
  tcase_add_test(tc, model_name_from_file_stem);
  tcase_add_test(tc, model_needs_coordinates_and_energy);
  tcase_add_test(tc, model_arrays_and_terms);
  tcase_add_test(tc, unused_warnings);
  suite_add_tcase(s, tc);
  tc = tcase_create("attitudes");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, attitude_declaration_and_shapes);
  tcase_add_test(tc, attitude_misuse_errors);
  tcase_add_test(tc, attitude_scalar_use_is_explained);
  tcase_add_test(tc, attitude_initial_must_be_rotation);
  tcase_add_test(tc, attitude_initial_quaternion_values);
  tcase_add_test(tc, attitude_quaternion_round_trip);
  tcase_add_test(tc, attitude_units);
  suite_add_tcase(s, tc);
  tc = tcase_create("command");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, check_command_summary);
  tcase_add_test(tc, check_command_statuses);
  suite_add_tcase(s, tc);
  SRunner *sr = srunner_create(s);
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? 1 : 0;
}
