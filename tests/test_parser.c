/*
** test_parser.c — the Bison parser: the AST of every statement kind,
** precedence and associativity, locations, error messages and recovery,
** hostile input (deep nesting, huge lines, binary garbage), and the
** catalogue of syntax errors in tests/bad/p_*.eom.
**
** Precedence and associativity expected here are those the language
** reference fixes (docs/language.md, "Expressions"): `'` binds tightest,
** then `^` (right-associative, above unary minus), then unary minus, then
** `* /`, then `+ -` (both left-associative), the usual convention of
** algebraic notation.
*/
#include <check.h>
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "front/parse.h"

#ifndef SRCDIR
#define SRCDIR "."
#endif

typedef struct Parsed {
  Ast *ast;
  Diag diag;
  char *text;
} Parsed;

static Parsed *parse_n(const char *src, size_t len) {
  Parsed *p = calloc(1, sizeof *p);
  /* The parser must not rely on a NUL after the input: give it none. */
  p->text = malloc(len ? len : 1);
  memcpy(p->text, src, len);
  diag_init(&p->diag, "t.eom", p->text, len);
  p->ast = parse_model("t.eom", p->text, len, &p->diag);
  ck_assert_ptr_nonnull(p->ast);
  return p;
}

static Parsed *parse(const char *src) { return parse_n(src, strlen(src)); }

static void parsed_free(Parsed *p) {
  ast_free(p->ast);
  diag_free(&p->diag);
  free(p->text);
  free(p);
}

static Stmt *stmt(const Parsed *p, int i) {
  ck_assert_int_lt(i, p->ast->nstmts);
  return p->ast->stmts[i];
}

/* Fully parenthesised rendering of an expression. */
static void render(const Expr *e, char *buf, size_t n) {
  size_t used = strlen(buf);
#define OUT(...) (used += (size_t)snprintf(buf + used, used < n ? n - used : 0, __VA_ARGS__))
  switch (e->kind) {
    case EX_NUM: OUT("%g", e->num); break;
    case EX_NAME: OUT("%s", e->name); break;
    case EX_UNARY:
      OUT("(-");
      render(e->args[0], buf, n);
      used = strlen(buf);
      OUT(")");
      break;
    case EX_BINARY:
      OUT("(");
      render(e->args[0], buf, n);
      used = strlen(buf);
      OUT(" %c ", "+-*/^"[e->op]);
      render(e->args[1], buf, n);
      used = strlen(buf);
      OUT(")");
      break;
    case EX_RATE:
      render(e->args[0], buf, n);
      used = strlen(buf);
      OUT("'");
      break;
    case EX_CALL:
    case EX_LIST:
    case EX_INDEX: {
      int first = 0;
      if (e->kind == EX_CALL) OUT("%s(", e->name);
      if (e->kind == EX_LIST) OUT("[");
      if (e->kind == EX_INDEX) {
        render(e->args[0], buf, n);
        used = strlen(buf);
        OUT("{");
        first = 1;
      }
      for (int i = first; i < e->nargs; i++) {
        if (i > first) OUT(", ");
        render(e->args[i], buf, n);
        used = strlen(buf);
      }
      OUT("%s", e->kind == EX_CALL ? ")" : e->kind == EX_LIST ? "]" : "}");
      break;
    }
  }
#undef OUT
}

static const char *show(const Expr *e) {
  static char buf[4096];
  buf[0] = '\0';
  if (!e) return "(null)";
  render(e, buf, sizeof buf);
  return buf;
}

/* The expression of `kinetic SRC`, rendered. */
static void expect_expr(const char *src, const char *want) {
  char line[512];
  snprintf(line, sizeof line, "kinetic %s\n", src);
  Parsed *p = parse(line);
  ck_assert_msg(p->diag.nerrors == 0, "'%s': %s", src, p->diag.nmsgs ? p->diag.msgs[0].text : "");
  ck_assert_int_eq(p->ast->nstmts, 1);
  ck_assert_str_eq(show(stmt(p, 0)->e[0]), want);
  parsed_free(p);
}

/* Parsing `src` must fail; the first error is at line:col and contains `text`. */
static void expect_error(const char *src, int line, int col, const char *text) {
  Parsed *p = parse(src);
  ck_assert_msg(p->diag.nerrors >= 1, "no error for '%s'", src);
  const DiagMsg *m = &p->diag.msgs[0];
  ck_assert_msg(strstr(m->text, text) != NULL, "'%s': message '%s' lacks '%s'", src, m->text, text);
  ck_assert_msg(m->loc.line == line && m->loc.col == col, "'%s': error at %d:%d, expected %d:%d (%s)",
                src, m->loc.line, m->loc.col, line, col, m->text);
  parsed_free(p);
}

static void expect_loc(SrcLoc l, int line, int col) {
  ck_assert_int_eq(l.line, line);
  ck_assert_int_eq(l.col, col);
}

/* ------------------------------------------------------------ statements */

START_TEST(model_and_coord) {
  Parsed *p = parse("model crane_trolley\ncoord x, theta [m] \"travel\"\ncoord phi\n");
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_int_eq(p->ast->nstmts, 3);
  Stmt *s = stmt(p, 0);
  ck_assert_int_eq(s->kind, ST_MODEL);
  ck_assert_str_eq(s->name, "crane_trolley");
  expect_loc(s->name_loc, 1, 7);
  s = stmt(p, 1);
  ck_assert_int_eq(s->kind, ST_COORD);
  expect_loc(s->loc, 2, 1);
  ck_assert_int_eq(s->ndecls, 2);
  ck_assert_str_eq(s->decls[0]->name, "x");
  ck_assert_str_eq(s->decls[1]->name, "theta");
  expect_loc(s->decls[1]->loc, 2, 10);
  for (int i = 0; i < 2; i++) {
    ck_assert_int_eq(s->decls[i]->kind, DECL_COORD);
    ck_assert_str_eq(show(s->decls[i]->unit), "m");
    ck_assert_str_eq(s->decls[i]->desc, "travel");
    ck_assert_ptr_null(s->decls[i]->value);
  }
  s = stmt(p, 2);
  ck_assert_ptr_null(s->decls[0]->unit);
  ck_assert_ptr_null(s->decls[0]->desc);
  parsed_free(p);
}
END_TEST

START_TEST(param_const_input_let_output) {
  Parsed *p = parse("param m = 1.5 [kg] \"trolley mass\"\n"
                    "const c = 2*3 [N*s/m]\n"
                    "input tau, f [N*m]\n"
                    "let r = [x, 0]\n"
                    "output tip = r[1] + 2 [m] \"tip \\\"x\\\"\"\n"
                    "param g = 9.81 [m*s^-2]\n");
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_int_eq(p->ast->nstmts, 6);
  Stmt *s = stmt(p, 0);
  ck_assert_int_eq(s->kind, ST_PARAM);
  ck_assert_int_eq(s->ndecls, 1);
  ck_assert_int_eq(s->decls[0]->kind, DECL_PARAM);
  ck_assert_str_eq(s->decls[0]->name, "m");
  ck_assert_str_eq(show(s->decls[0]->value), "1.5");
  ck_assert_str_eq(show(s->decls[0]->unit), "kg");
  ck_assert_str_eq(s->decls[0]->desc, "trolley mass");
  s = stmt(p, 1);
  ck_assert_int_eq(s->kind, ST_CONST);
  ck_assert_int_eq(s->decls[0]->kind, DECL_CONST);
  ck_assert_str_eq(show(s->decls[0]->value), "(2 * 3)");
  ck_assert_str_eq(show(s->decls[0]->unit), "((N * s) / m)");
  s = stmt(p, 2);
  ck_assert_int_eq(s->kind, ST_INPUT);
  ck_assert_int_eq(s->ndecls, 2);
  ck_assert_int_eq(s->decls[1]->kind, DECL_INPUT);
  ck_assert_str_eq(show(s->decls[1]->unit), "(N * m)");
  s = stmt(p, 3);
  ck_assert_int_eq(s->kind, ST_LET);
  ck_assert_int_eq(s->decls[0]->kind, DECL_LET);
  ck_assert_str_eq(show(s->decls[0]->value), "[x, 0]");
  s = stmt(p, 4);
  ck_assert_int_eq(s->kind, ST_OUTPUT);
  ck_assert_int_eq(s->decls[0]->kind, DECL_OUTPUT);
  ck_assert_str_eq(show(s->decls[0]->value), "(r{1} + 2)");
  ck_assert_str_eq(show(s->decls[0]->unit), "m");
  ck_assert_str_eq(s->decls[0]->desc, "tip \"x\"");
  s = stmt(p, 5);
  ck_assert_str_eq(show(s->decls[0]->unit), "(m * (s ^ (-2)))");
  parsed_free(p);
}
END_TEST

START_TEST(initial_and_identify) {
  Parsed *p = parse("initial x = 0.3; initial x' = -1\nidentify m1, m2\n");
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_int_eq(p->ast->nstmts, 3);
  Stmt *s = stmt(p, 0);
  ck_assert_int_eq(s->kind, ST_INITIAL);
  ck_assert_str_eq(s->name, "x");
  ck_assert_int_eq(s->rate, 0);
  ck_assert_str_eq(show(s->e[0]), "0.3");
  s = stmt(p, 1);
  ck_assert_int_eq(s->kind, ST_INITIAL);
  expect_loc(s->loc, 1, 18);
  expect_loc(s->name_loc, 1, 26);
  ck_assert_int_eq(s->rate, 1);
  ck_assert_str_eq(show(s->e[0]), "(-1)");
  s = stmt(p, 2);
  ck_assert_int_eq(s->kind, ST_IDENTIFY);
  ck_assert_int_eq(s->nnames, 2);
  ck_assert_str_eq(s->names[0], "m1");
  ck_assert_str_eq(s->names[1], "m2");
  expect_loc(s->name_locs[1], 2, 14);
  parsed_free(p);
}
END_TEST

START_TEST(energy_terms) {
  Parsed *p = parse("kinetic 1/2*m*x'^2\npotential m*g*y\nlagrangian q*x'\ndissipation 1/2*c*x'^2\n");
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_int_eq(p->ast->nstmts, 4);
  StmtKind kinds[] = {ST_KINETIC, ST_POTENTIAL, ST_LAGRANGIAN, ST_DISSIPATION};
  for (int i = 0; i < 4; i++) {
    ck_assert_int_eq(stmt(p, i)->kind, kinds[i]);
    ck_assert_ptr_nonnull(stmt(p, i)->e[0]);
    ck_assert_ptr_null(stmt(p, i)->e[1]);
    ck_assert_int_eq(stmt(p, i)->ndecls, 0);
  }
  ck_assert_str_eq(show(stmt(p, 0)->e[0]), "(((1 / 2) * m) * (x' ^ 2))");
  ck_assert_str_eq(show(stmt(p, 2)->e[0]), "(q * x')");
  parsed_free(p);
}
END_TEST

START_TEST(forces_gravity_constraint) {
  Parsed *p = parse("force x = -c*x'\n"
                    "force [0, 0, -f] at p\n"
                    "torque [0, 0, tau] on rotz(th)\n"
                    "gravity [0, 0, -9.81]\n"
                    "constraint x^2 + y^2 = l^2\n");
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_int_eq(p->ast->nstmts, 5);
  Stmt *s = stmt(p, 0);
  ck_assert_int_eq(s->kind, ST_FORCE);
  ck_assert_str_eq(s->name, "x");
  expect_loc(s->name_loc, 1, 7);
  ck_assert_str_eq(show(s->e[0]), "((-c) * x')");
  s = stmt(p, 1);
  ck_assert_int_eq(s->kind, ST_FORCE_AT);
  ck_assert_str_eq(show(s->e[0]), "[0, 0, (-f)]");
  ck_assert_str_eq(show(s->e[1]), "p");
  s = stmt(p, 2);
  ck_assert_int_eq(s->kind, ST_TORQUE);
  ck_assert_str_eq(show(s->e[0]), "[0, 0, tau]");
  ck_assert_str_eq(show(s->e[1]), "rotz(th)");
  s = stmt(p, 3);
  ck_assert_int_eq(s->kind, ST_GRAVITY);
  ck_assert_str_eq(show(s->e[0]), "[0, 0, (-9.81)]");
  s = stmt(p, 4);
  ck_assert_int_eq(s->kind, ST_CONSTRAINT);
  ck_assert_str_eq(show(s->e[0]), "((x ^ 2) + (y ^ 2))");
  ck_assert_str_eq(show(s->e[1]), "(l ^ 2)");
  parsed_free(p);
}
END_TEST

START_TEST(body_parts_any_order) {
  Parsed *p = parse("body arm mass m at p orient rotz(th) inertia diag(1, 2, 3)\n"
                    "body hook inertia I at [0, 0, -l] mass 2\n"
                    "body load mass 3 at q\n");
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_int_eq(p->ast->nstmts, 3);
  Stmt *s = stmt(p, 0);
  ck_assert_int_eq(s->kind, ST_BODY);
  expect_loc(s->loc, 1, 1);
  ck_assert_int_eq(s->ndecls, 1);
  ck_assert_int_eq(s->decls[0]->kind, DECL_BODY);
  ck_assert_str_eq(s->decls[0]->name, "arm");
  expect_loc(s->decls[0]->loc, 1, 6);
  ck_assert_str_eq(show(s->e[0]), "m");
  ck_assert_str_eq(show(s->e[1]), "p");
  ck_assert_str_eq(show(s->e[2]), "rotz(th)");
  ck_assert_str_eq(show(s->e[3]), "diag(1, 2, 3)");
  s = stmt(p, 1);
  ck_assert_str_eq(show(s->e[0]), "2");
  ck_assert_str_eq(show(s->e[1]), "[0, 0, (-l)]");
  ck_assert_ptr_null(s->e[2]);
  ck_assert_str_eq(show(s->e[3]), "I");
  s = stmt(p, 2);
  ck_assert_ptr_null(s->e[2]);
  ck_assert_ptr_null(s->e[3]);
  parsed_free(p);
}
END_TEST

START_TEST(body_errors) {
  expect_error("body b at p\n", 1, 1, "body 'b' needs a mass");
  expect_error("body b mass 2\n", 1, 1, "body 'b' needs a position");
  expect_error("body b mass 2 at p mass 3\n", 1, 20, "'mass' is given twice");
  expect_error("body b mass 2 at p colour 3\n", 1, 20, "unexpected name 'colour'");
  Parsed *p = parse("body b mass 2\nkinetic x\n");
  ck_assert_int_eq(p->diag.nerrors, 1);
  ck_assert_int_eq(p->ast->nstmts, 1);    /* the bad body is left out */
  ck_assert_int_eq(stmt(p, 0)->kind, ST_KINETIC);
  parsed_free(p);
}
END_TEST

START_TEST(contextual_words_are_names) {
  Parsed *p = parse("param mass = 2\nlet at = mass*on\ncoord orient, inertia\n"
                    "body mass mass mass at at orient orient inertia inertia\n"
                    "force at at at\ntorque on on on\n");
  ck_assert_msg(p->diag.nerrors == 0, "%s", p->diag.nmsgs ? p->diag.msgs[0].text : "");
  ck_assert_int_eq(p->ast->nstmts, 6);
  ck_assert_str_eq(stmt(p, 0)->decls[0]->name, "mass");
  ck_assert_str_eq(show(stmt(p, 1)->decls[0]->value), "(mass * on)");
  ck_assert_str_eq(stmt(p, 2)->decls[1]->name, "inertia");
  Stmt *s = stmt(p, 3);
  ck_assert_str_eq(s->decls[0]->name, "mass");
  ck_assert_str_eq(show(s->e[0]), "mass");
  ck_assert_str_eq(show(s->e[1]), "at");
  ck_assert_str_eq(show(s->e[2]), "orient");
  ck_assert_str_eq(show(s->e[3]), "inertia");
  ck_assert_str_eq(show(stmt(p, 4)->e[0]), "at");
  ck_assert_str_eq(show(stmt(p, 4)->e[1]), "at");
  ck_assert_int_eq(stmt(p, 5)->kind, ST_TORQUE);
  parsed_free(p);
}
END_TEST

START_TEST(keywords_are_reserved) {
  expect_error("let param = 2\n", 1, 5, "'param' is a reserved word");
  expect_error("coord x, kinetic\n", 1, 10, "'kinetic' is a reserved word");
  expect_error("param body = 1\n", 1, 7, "'body' is a reserved word");
  /* every reserved word of front/keywords.h, the later ones too */
  expect_error("coord frame\n", 1, 7, "'frame' is a reserved word");
  expect_error("param attitude = 2\n", 1, 7, "'attitude' is a reserved word");
}
END_TEST

START_TEST(units_after_names) {
  /* After a list of names a touching `[` is still a unit. */
  Parsed *p = parse("coord x[m], y\ncoord z[m] \"height\"\ninput u[N]\n");
  ck_assert_int_eq(p->diag.nerrors, 1);   /* x[m], y: the unit goes last */
  parsed_free(p);
  p = parse("coord z[m] \"height\"\ninput u[N]\ncoord a, b[rad]\n");
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_str_eq(show(stmt(p, 0)->decls[0]->unit), "m");
  ck_assert_str_eq(stmt(p, 0)->decls[0]->desc, "height");
  ck_assert_str_eq(show(stmt(p, 1)->decls[0]->unit), "N");
  ck_assert_str_eq(show(stmt(p, 2)->decls[0]->unit), "rad");
  parsed_free(p);
  /* [1] (dimensionless) and a negative power. */
  p = parse("param k = 3 [1]\nparam a = 1 [m/s^-2]\n");
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_str_eq(show(stmt(p, 0)->decls[0]->unit), "1");
  ck_assert_str_eq(show(stmt(p, 1)->decls[0]->unit), "(m / (s ^ (-2)))");
  parsed_free(p);
}
END_TEST

START_TEST(statement_separators) {
  Parsed *p = parse(";\n\n# only comments\n;;coord x;; kinetic x'^2 ;\n\n\npotential x^2");
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_int_eq(p->ast->nstmts, 3);
  ck_assert_int_eq(stmt(p, 2)->kind, ST_POTENTIAL);
  expect_loc(stmt(p, 2)->loc, 7, 1);
  parsed_free(p);
  /* Continuation after operators, `=`, commas and inside brackets. */
  p = parse("kinetic 1/2*m*\n  x'^2 +\n\n  # comment between\n  y'^2\n"
            "let R = [[cos(q), -sin(q)],\n         [sin(q), cos(q)]]\n"
            "param k =\n  4\ncoord a,\n b\n");
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_int_eq(p->ast->nstmts, 4);
  ck_assert_str_eq(show(stmt(p, 0)->e[0]), "((((1 / 2) * m) * (x' ^ 2)) + (y' ^ 2))");
  ck_assert_str_eq(show(stmt(p, 1)->decls[0]->value),
                   "[[cos(q), (-sin(q))], [sin(q), cos(q)]]");
  ck_assert_int_eq(stmt(p, 3)->ndecls, 2);
  parsed_free(p);
}
END_TEST

START_TEST(empty_inputs) {
  const char *empties[] = {"", "\n", "# nothing\n", ";;;", "\n\n  \t\n# x\n; ;\n"};
  for (size_t i = 0; i < sizeof empties / sizeof empties[0]; i++) {
    Parsed *p = parse(empties[i]);
    ck_assert_int_eq(p->diag.nerrors, 0);
    ck_assert_int_eq(p->ast->nstmts, 0);
    ck_assert_ptr_nonnull(p->ast->arena);
    parsed_free(p);
  }
}
END_TEST

/* ------------------------------------------------------------ expressions */

START_TEST(precedence) {
  expect_expr("-x^2", "(-(x ^ 2))");
  expect_expr("a^b^c", "(a ^ (b ^ c))");
  expect_expr("x'^2", "(x' ^ 2)");
  expect_expr("2*x'", "(2 * x')");
  expect_expr("a-b-c", "((a - b) - c)");
  expect_expr("a/b/c", "((a / b) / c)");
  expect_expr("a+b*c", "(a + (b * c))");
  expect_expr("a*b+c", "((a * b) + c)");
  expect_expr("2^-1", "(2 ^ (-1))");
  expect_expr("2^-x^2", "(2 ^ (-(x ^ 2)))");
  expect_expr("-a*b", "((-a) * b)");
  expect_expr("a*-b", "(a * (-b))");
  expect_expr("a^-b*c", "((a ^ (-b)) * c)");
  expect_expr("- -x", "(-(-x))");
  expect_expr("+x - +y", "(x - y)");
  expect_expr("(a+b)*c", "((a + b) * c)");
  expect_expr("(a+b)'", "(a + b)'");
  expect_expr("x''", "x''");
  expect_expr("-x'", "(-x')");
  expect_expr("x'^2^3", "(x' ^ (2 ^ 3))");
  expect_expr("2*x^3", "(2 * (x ^ 3))");
}
END_TEST

START_TEST(calls_lists_and_indexing) {
  expect_expr("atan2(y, x)", "atan2(y, x)");
  expect_expr("f()", "f()");
  expect_expr("sin(q)^2 + cos(q)^2", "((sin(q) ^ 2) + (cos(q) ^ 2))");
  expect_expr("[a, b, c]", "[a, b, c]");
  expect_expr("[[a, b], [c, d]]", "[[a, b], [c, d]]");
  expect_expr("v[1]", "v{1}");
  expect_expr("A[1,2]", "A{1, 2}");
  expect_expr("A[1][2]", "A{1}{2}");
  expect_expr("f(x)[2]", "f(x){2}");
  expect_expr("x'[1]", "x'{1}");
  expect_expr("[a, b][2]", "[a, b]{2}");
  expect_expr("v[i+1]^2", "(v{(i + 1)} ^ 2)");
  expect_expr("dh(q1, 0.1, 0.5, pi/2)*dh(q2, 0, 0.4, 0)",
              "(dh(q1, 0.1, 0.5, (pi / 2)) * dh(q2, 0, 0.4, 0))");
  expect_expr("rotz(q)*[l, 0, 0]", "(rotz(q) * [l, 0, 0])");
}
END_TEST

START_TEST(numbers_in_expressions) {
  expect_expr("2 + 0.5 + 3e-4 + .5 + 1E+2", "((((2 + 0.5) + 0.0003) + 0.5) + 100)");
  expect_error("kinetic 1e400\n", 1, 9, "number out of range");
}
END_TEST

START_TEST(expression_locations) {
  Parsed *p = parse("coord x\nkinetic a + b*c'\nlet v = -f(x)[2]\n");
  ck_assert_int_eq(p->diag.nerrors, 0);
  Expr *e = stmt(p, 1)->e[0];
  ck_assert_int_eq(e->kind, EX_BINARY);
  expect_loc(e->loc, 2, 11);                 /* the '+' */
  expect_loc(e->args[0]->loc, 2, 9);         /* a */
  expect_loc(e->args[1]->loc, 2, 14);        /* the '*' */
  expect_loc(e->args[1]->args[1]->loc, 2, 16);   /* the "'" */
  expect_loc(e->args[1]->args[1]->args[0]->loc, 2, 15);   /* c */
  ck_assert_int_eq(e->depth, 4);
  Expr *v = stmt(p, 2)->decls[0]->value;
  expect_loc(v->loc, 3, 9);                  /* unary '-' */
  expect_loc(v->args[0]->loc, 3, 14);        /* the index '[' */
  expect_loc(v->args[0]->args[0]->loc, 3, 10);   /* the call f */
  expect_loc(stmt(p, 2)->decls[0]->loc, 3, 5);
  parsed_free(p);
}
END_TEST

START_TEST(index_rule_in_declarations) {
  /* `x [m]` after an expression is a unit; `x[1]` indexes. */
  Parsed *p = parse("output y = v[1] [m]\noutput z = (v)[2]\n");
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_str_eq(show(stmt(p, 0)->decls[0]->value), "v{1}");
  ck_assert_str_eq(show(stmt(p, 0)->decls[0]->unit), "m");
  ck_assert_str_eq(show(stmt(p, 1)->decls[0]->value), "v{2}");
  ck_assert_ptr_null(stmt(p, 1)->decls[0]->unit);
  parsed_free(p);
  expect_error("kinetic A[1,2,3]\n", 1, 10, "one or two subscripts");
  expect_error("kinetic v[]\n", 1, 11, "expected an expression");
}
END_TEST

/* ------------------------------------------------------------ errors */

START_TEST(error_messages) {
  expect_error("kinetic 1 +\n", 1, 12, "expected an expression after '+'");
  expect_error("kinetic 1 + )\n", 1, 13, "expected an expression after '+', found ')'");
  expect_error("kinetic (a))\n", 1, 12, "unexpected ')'");
  expect_error("kinetic x y\n", 1, 11, "unexpected name 'y' after 'x'");
  expect_error("x = 2\n", 1, 1, "at the start of a statement");
  expect_error("param m = 1.5 kg\n", 1, 15, "(a unit goes in brackets: [kg])");
  expect_error("let v = [1 2]\n", 1, 12, "unexpected number '2' after '1' (expected an operator, ']' or ',')");
  expect_error("kinetic x**2\n", 1, 11, "a power is written with '^'");
  expect_error("kinetic 2x^2\n", 1, 10, "unexpected name 'x' after '2' (a product needs '*': 2*x)");
  expect_error("param x 2\n", 1, 9, "expected '=' after 'x', found number '2'");
  expect_error("coord\n", 1, 6, "expected a name after 'coord'");
  expect_error("force x\n", 1, 8, "expected 'at' or '=' after 'x'");
  expect_error("torque t at r\n", 1, 10, "unexpected 'at'");
  expect_error("let r = x [m]\n", 1, 11, "'let r' takes no unit");
  expect_error("torque t at r\n", 1, 10, "unexpected 'at' after 't' (expected an operator or 'on')");
  expect_error("param a = 2 [kg] \"d\" x\n", 1, 22, "expected end of line");
  expect_error("initial x'' = 1\n", 1, 11, "expected '='");
  expect_error("kinetic f(a,)\n", 1, 13, "expected an expression after ','");
  expect_error("kinetic\n", 1, 8, "expected an expression after 'kinetic'");
  expect_error("kinetic 1 +", 1, 12, "expected an expression after '+'");
  expect_error("constraint x\n", 1, 13, "expected '='");
  expect_error("kinetic a $ b\n", 1, 11, "invalid character '$'");
  expect_error("kinetic \"s\"\n", 1, 9, "found a description string");
  /* Never Bison's own vocabulary. */
  const char *bad[] = {"kinetic 1 +\n", "x = 2\n", "coord\n", "force x\n", "param a 1\n",
                       "kinetic (a))\n", "body\n", "kinetic ,\n", "let a = ;\n", "model 3\n",
                       "kinetic a'b\n", "gravity [1,,2]\n"};
  for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
    Parsed *p = parse(bad[i]);
    ck_assert_int_eq(p->diag.nerrors, 1);
    const char *m = p->diag.msgs[0].text;
    ck_assert_msg(!strstr(m, "T_") && !strstr(m, "KW_") && !strstr(m, "CW_") &&
                  !strstr(m, "YY") && !strstr(m, "$end") && !strstr(m, "syntax error") &&
                  !strstr(m, "invalid token"), "internal name in '%s'", m);
    parsed_free(p);
  }
}
END_TEST

START_TEST(recovery_three_bad_lines) {
  Parsed *p = parse("coord x\n"
                    "param k = \n"            /* missing value: continues... */
                    "kinetic 1/2*m*x'^2\n"     /* ...so 'kinetic' ends it */
                    "potential k*x^2 +* 3\n"
                    "let v = [1, 2\n"
                    "dissipation c*x'^2\n");
  ck_assert_int_eq(p->diag.nerrors, 3);
  expect_loc(p->diag.msgs[0].loc, 2, 11);
  ck_assert(strstr(p->diag.msgs[0].text, "expected an expression after '='"));
  expect_loc(p->diag.msgs[1].loc, 4, 18);
  expect_loc(p->diag.msgs[2].loc, 5, 9);
  ck_assert(strstr(p->diag.msgs[2].text, "'[' is never closed"));
  /* The good statements are all there. */
  ck_assert_int_eq(p->ast->nstmts, 3);
  ck_assert_int_eq(stmt(p, 0)->kind, ST_COORD);
  ck_assert_int_eq(stmt(p, 1)->kind, ST_KINETIC);
  ck_assert_int_eq(stmt(p, 2)->kind, ST_DISSIPATION);
  parsed_free(p);
}
END_TEST

START_TEST(one_error_per_bad_statement) {
  /* Follow-on problems in a statement already reported stay silent. */
  Parsed *p = parse("kinetic a + ) $ \xff \"unterminated\n"
                    "potential (b\n"
                    "kinetic c\n");
  ck_assert_int_eq(p->diag.nerrors, 2);
  expect_loc(p->diag.msgs[0].loc, 1, 13);
  expect_loc(p->diag.msgs[1].loc, 2, 11);
  ck_assert_int_eq(p->ast->nstmts, 1);
  parsed_free(p);
}
END_TEST

/* ------------------------------------------------------------ hostile input */

static char *repeat(const char *head, const char *unit, size_t times, const char *tail) {
  size_t hl = strlen(head), ul = strlen(unit), tl = strlen(tail);
  char *s = malloc(hl + ul * times + tl + 1);
  memcpy(s, head, hl);
  for (size_t i = 0; i < times; i++) memcpy(s + hl + i * ul, unit, ul);
  memcpy(s + hl + ul * times, tail, tl + 1);
  return s;
}

START_TEST(deep_parentheses) {
  char *src = repeat("kinetic ", "(", 100000, "x");
  Parsed *p = parse(src);
  ck_assert_int_eq(p->diag.nerrors, 1);
  ck_assert(strstr(p->diag.msgs[0].text, "nesting too deep"));
  ck_assert_int_eq(p->ast->nstmts, 0);
  parsed_free(p);
  free(src);
  /* Deep but within the limit is fine. */
  src = repeat("kinetic ", "(", AST_MAX_NESTING, "x");
  size_t n = strlen(src);
  src = realloc(src, n + AST_MAX_NESTING + 2);
  memset(src + n, ')', AST_MAX_NESTING);
  strcpy(src + n + AST_MAX_NESTING, "\n");
  p = parse(src);
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_str_eq(show(stmt(p, 0)->e[0]), "x");
  parsed_free(p);
  free(src);
}
END_TEST

START_TEST(deep_expressions) {
  const char *units[] = {"-", "a^", "+"};
  for (int u = 0; u < 3; u++) {
    size_t counts[] = {100000, 3000};
    for (int c = 0; c < 2; c++) {
      char *src = repeat("kinetic ", units[u], counts[c], "x\nkinetic y\n");
      Parsed *p = parse(src);
      if (u == 2 && c == 1) {
        /* 3000 unary pluses make no tree nodes: fine. */
        ck_assert_int_eq(p->diag.nerrors, 0);
      } else {
        ck_assert_int_ge(p->diag.nerrors, 1);
        ck_assert_msg(strstr(p->diag.msgs[0].text, "expression nested too deeply"), "%s",
                      p->diag.msgs[0].text);
      }
      parsed_free(p);
      free(src);
    }
  }
  /* An over-deep statement is skipped and the parse goes on. */
  char *src = repeat("kinetic ", "-", 3000, "x\nkinetic y\nkinetic 1 +\n");
  Parsed *p = parse(src);
  ck_assert_int_eq(p->diag.nerrors, 2);
  ck_assert_int_eq(p->ast->nstmts, 1);
  expect_loc(p->diag.msgs[1].loc, 3, 12);
  parsed_free(p);
  free(src);
}
END_TEST

START_TEST(long_sums_and_lists) {
  /* a0+a1+...+a999: 1000 terms, depth 1000. */
  char *src = malloc(20000);
  size_t n = (size_t)sprintf(src, "kinetic a0");
  for (int i = 1; i < 1000; i++) n += (size_t)sprintf(src + n, "+a%d", i);
  strcpy(src + n, "\n");
  Parsed *p = parse(src);
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_int_eq(stmt(p, 0)->e[0]->depth, 1000);
  ck_assert_str_eq(stmt(p, 0)->e[0]->args[1]->name, "a999");
  parsed_free(p);
  free(src);
  /* A vector of 100,000 entries is wide, not deep. */
  src = repeat("let v = [0", ", 1", 99999, "]\n");
  p = parse(src);
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_int_eq(stmt(p, 0)->decls[0]->value->nargs, 100000);
  ck_assert_int_eq(stmt(p, 0)->decls[0]->value->depth, 2);
  parsed_free(p);
  free(src);
}
END_TEST

START_TEST(megabyte_lines) {
  /* A 1 MB name, a 1 MB comment, a 1 MB description, a 1 MB sum. */
  size_t mb = 1 << 20;
  char *name = malloc(mb + 1);
  memset(name, 'q', mb);
  name[mb] = '\0';
  char *src = malloc(3 * mb + 100);
  sprintf(src, "coord %s\n# %s\nparam k = 1 \"%s\"\n", name, name, name);
  Parsed *p = parse(src);
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_int_eq(p->ast->nstmts, 2);
  ck_assert_uint_eq(strlen(stmt(p, 0)->decls[0]->name), mb);
  ck_assert_uint_eq(strlen(stmt(p, 1)->decls[0]->desc), mb);
  parsed_free(p);
  free(src);
  free(name);
  src = repeat("kinetic x", "+x", mb / 2, "\nkinetic y\n");
  p = parse(src);
  ck_assert_int_eq(p->diag.nerrors, 1);
  ck_assert(strstr(p->diag.msgs[0].text, "expression nested too deeply"));
  ck_assert_int_eq(p->ast->nstmts, 1);
  parsed_free(p);
  free(src);
}
END_TEST

START_TEST(binary_garbage) {
  unsigned seed = 2026;
  size_t len = 100000;
  char *buf = malloc(len);
  for (int round = 0; round < 20; round++) {
    for (size_t i = 0; i < len; i++) {
      seed = seed * 1664525u + 1013904223u;
      /* Half the rounds: printable soup of the language's own characters. */
      buf[i] = round % 2 ? (char)(seed >> 24) : "a1 +-*/^()[],;'=\n\"#xkinetic"[(seed >> 24) % 28];
    }
    Parsed *p = parse_n(buf, len);
    for (int i = 0; i < p->diag.nmsgs; i++) {
      ck_assert_int_ge(p->diag.msgs[i].loc.line, 1);
      ck_assert_int_ge(p->diag.msgs[i].loc.col, 1);
    }
    if (round % 2) ck_assert_int_ge(p->diag.nerrors, 1);
    parsed_free(p);
  }
  free(buf);
  /* NUL bytes everywhere. */
  char zeros[64] = {0};
  Parsed *p = parse_n(zeros, sizeof zeros);
  ck_assert_int_ge(p->diag.nerrors, 1);
  ck_assert(strstr(p->diag.msgs[0].text, "invalid character '\\x00'"));
  parsed_free(p);
}
END_TEST

START_TEST(ten_thousand_statements) {
  /* Correctness at size; the speed figure is in the benchmark. */
  size_t cap = 10000 * 64, n = 0;
  char *src = malloc(cap);
  for (int i = 0; i < 10000; i++)
    n += (size_t)snprintf(src + n, cap - n, "param p%d = %d.5 [kg] \"mass %d\"\n", i, i, i);
  Parsed *p = parse_n(src, n);
  ck_assert_int_eq(p->diag.nerrors, 0);
  ck_assert_int_eq(p->ast->nstmts, 10000);
  ck_assert_str_eq(stmt(p, 9999)->decls[0]->name, "p9999");
  expect_loc(stmt(p, 9999)->loc, 10000, 1);
  parsed_free(p);
  free(src);
}
END_TEST

/* ------------------------------------------------------------ the catalogue */

/* Every tests/bad/p_*.eom starts with `# expect: LINE:COL: SUBSTRING`, the
** first diagnostic the parser must give. */
START_TEST(bad_catalogue) {
  const char *dir = SRCDIR "/tests/bad";
  DIR *d = opendir(dir);
  ck_assert_msg(d != NULL, "cannot open %s", dir);
  int checked = 0;
  struct dirent *ent;
  while ((ent = readdir(d)) != NULL) {
    size_t nl = strlen(ent->d_name);
    if (strncmp(ent->d_name, "p_", 2) != 0 || nl < 5 || strcmp(ent->d_name + nl - 4, ".eom") != 0)
      continue;
    char path[1024];
    snprintf(path, sizeof path, "%s/%s", dir, ent->d_name);
    FILE *f = fopen(path, "rb");
    ck_assert_ptr_nonnull(f);
    static char buf[1 << 16];
    size_t len = fread(buf, 1, sizeof buf, f);
    fclose(f);
    int line = 0, col = 0, off = 0;
    ck_assert_msg(sscanf(buf, "# expect: %d:%d: %n", &line, &col, &off) == 2 && off > 0,
                  "%s: no '# expect: LINE:COL: TEXT' header", ent->d_name);
    char want[256];
    size_t wl = strcspn(buf + off, "\r\n");
    ck_assert(wl < sizeof want);
    memcpy(want, buf + off, wl);
    want[wl] = '\0';
    Parsed *p = parse_n(buf, len);
    ck_assert_msg(p->diag.nerrors >= 1, "%s: no error", ent->d_name);
    const DiagMsg *m = &p->diag.msgs[0];
    ck_assert_msg(m->loc.line == line && m->loc.col == col && strstr(m->text, want),
                  "%s: got %d:%d: %s; expected %d:%d: %s", ent->d_name, m->loc.line, m->loc.col,
                  m->text, line, col, want);
    parsed_free(p);
    checked++;
  }
  closedir(d);
  ck_assert_int_ge(checked, 20);
}
END_TEST

static Suite *parser_suite(void) {
  Suite *s = suite_create("parser");
  TCase *tc = tcase_create("statements");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, model_and_coord);
  tcase_add_test(tc, param_const_input_let_output);
  tcase_add_test(tc, initial_and_identify);
  tcase_add_test(tc, energy_terms);
  tcase_add_test(tc, forces_gravity_constraint);
  tcase_add_test(tc, body_parts_any_order);
  tcase_add_test(tc, body_errors);
  tcase_add_test(tc, contextual_words_are_names);
  tcase_add_test(tc, keywords_are_reserved);
  tcase_add_test(tc, units_after_names);
  tcase_add_test(tc, statement_separators);
  tcase_add_test(tc, empty_inputs);
  suite_add_tcase(s, tc);
  tc = tcase_create("expressions");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, precedence);
  tcase_add_test(tc, calls_lists_and_indexing);
  tcase_add_test(tc, numbers_in_expressions);
  tcase_add_test(tc, expression_locations);
  tcase_add_test(tc, index_rule_in_declarations);
  suite_add_tcase(s, tc);
  tc = tcase_create("errors");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, error_messages);
  tcase_add_test(tc, recovery_three_bad_lines);
  tcase_add_test(tc, one_error_per_bad_statement);
  tcase_add_test(tc, bad_catalogue);
  suite_add_tcase(s, tc);
  tc = tcase_create("hostile input");
  tcase_set_timeout(tc, 60);   /* generous under sanitizers; not a speed test */
  tcase_add_test(tc, deep_parentheses);
  tcase_add_test(tc, deep_expressions);
  tcase_add_test(tc, long_sums_and_lists);
  tcase_add_test(tc, megabyte_lines);
  tcase_add_test(tc, binary_garbage);
  tcase_add_test(tc, ten_thousand_statements);
  suite_add_tcase(s, tc);
  return s;
}

int main(void) {
  SRunner *sr = srunner_create(parser_suite());
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
