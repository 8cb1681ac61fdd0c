/*
** value_text.c — values written on the command line (`--set a=30[deg]`,
** `--at x=0.2*L`, `--set k=2.5[kN/m]`): a constant expression of numbers,
** `pi` and the model's parameters, optionally followed by a unit in
** brackets, converted to the unit the model declares for the name.
**
** The expression and the unit go through the model language's own parser
** (a one-line model text made around them) and the unit table of
** front/units.c, so a value reads exactly as it would in a model file.
** Errors name the problem and point a caret into the argument.
*/
#include "cli/value_text.h"

#include <assert.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "front/builtins.h"
#include "front/diag.h"
#include "front/parse.h"
#include "front/units.h"

/* pi to double precision (M_PI is not C99). */
#define VALUE_PI 3.14159265358979323846

/* The model text an expression or unit is wrapped in. */
static const char expr_prefix[] = "param eomc_value = ";
static const char unit_prefix[] = "coord eomc_value [";

typedef struct ValueCtx {
  const char *arg;        /* the whole argument, for the caret */
  const struct eom_model *m;
  const double *p;
  char *err;
  size_t errlen;
} ValueCtx;

/* "MESSAGE\n  ARG\n     ^" with the caret under byte `at` of the argument
** (no caret line when at < 0). */
static int fail_at(ValueCtx *c, long at, const char *fmt, ...) DIAG_PRINTF(3, 4);
static int fail_at(ValueCtx *c, long at, const char *fmt, ...) {
  va_list ap;
  size_t len = 0;
  assert(c->errlen > 0);
  c->err[0] = '\0';
  if (c->arg[0]) snprintf(c->err, c->errlen, "%s: ", c->arg);
  len = strlen(c->err);
  va_start(ap, fmt);
  vsnprintf(c->err + len, c->errlen - len, fmt, ap);
  va_end(ap);
  len = strlen(c->err);
  if (at >= 0 && at <= (long)strlen(c->arg) && len + 8 < c->errlen)
    snprintf(c->err + len, c->errlen - len, "\n    %s\n    %*s^", c->arg, (int)at, "");
  return -1;
}

/* Parse `text` (n bytes) wrapped as `prefix TEXT suffix`; the Ast's one
** statement, or NULL with the first diagnostic reported against the
** argument (`offset`: where text starts in it). */
static Ast *parse_wrapped(ValueCtx *c, const char *prefix, const char *text, size_t n,
                          const char *suffix, long offset, const char *what) {
  size_t plen = strlen(prefix), slen = strlen(suffix);
  char *src = malloc(plen + n + slen + 2);
  Diag d;
  if (!src) {
    fail_at(c, -1, "out of memory");
    return NULL;
  }
  memcpy(src, prefix, plen);
  memcpy(src + plen, text, n);
  memcpy(src + plen + n, suffix, slen);
  memcpy(src + plen + n + slen, "\n", 2);
  diag_init(&d, "value", src, plen + n + slen + 1);
  Ast *ast = parse_model("value", src, plen + n + slen + 1, &d);
  int ok = d.nerrors == 0 && ast->nstmts == 1;
  if (!ok) {
    long at = offset;
    const char *msg = "it is not one expression";
    for (int i = 0; i < d.nmsgs; i++)
      if (d.msgs[i].level == DIAG_ERROR) {
        msg = d.msgs[i].text;
        if (d.msgs[i].loc.line == 1) at = offset + d.msgs[i].loc.col - 1 - (long)plen;
        break;
      }
    if (at < offset) at = offset;
    if (at > offset + (long)n) at = offset + (long)n;
    if (strcmp(what, "unit") == 0) fail_at(c, at, "in the unit [%.*s]: %s", (int)n, text, msg);
    else fail_at(c, at, "%s", msg);
    ast_free(ast);
    ast = NULL;
  }
  diag_free(&d);
  free(src);
  return ast;
}

/* Column in the argument of a node parsed from the text at `offset`. */
static long arg_col(const Expr *e, long offset) {
  return offset + e->loc.col - 1 - (long)(sizeof expr_prefix - 1);
}

static int eval(ValueCtx *c, const Expr *e, long offset, double *v) {
  double a[3];
  switch (e->kind) {
  case EX_NUM: *v = e->num; return 0;
  case EX_NAME:
    if (strcmp(e->name, "pi") == 0) return *v = VALUE_PI, 0;
    for (int i = 0; i < c->m->np; i++)
      if (strcmp(e->name, c->m->param_names[i]) == 0) return *v = c->p[i], 0;
    return fail_at(c, arg_col(e, offset),
                   "'%s' is not a parameter of the model (a value may use numbers, pi and "
                   "parameters)", e->name);
  case EX_UNARY:
    if (eval(c, e->args[0], offset, &a[0])) return -1;
    *v = -a[0];
    return 0;
  case EX_BINARY:
    if (eval(c, e->args[0], offset, &a[0]) || eval(c, e->args[1], offset, &a[1])) return -1;
    switch (e->op) {
    case OP_ADD: *v = a[0] + a[1]; return 0;
    case OP_SUB: *v = a[0] - a[1]; return 0;
    case OP_MUL: *v = a[0] * a[1]; return 0;
    case OP_DIV: *v = a[0] / a[1]; return 0;
    case OP_POW: *v = pow(a[0], a[1]); return 0;
    default: break;
    }
    break;
  case EX_CALL: {
    int f = builtin_scalar(e->name);
    if (f < 0)
      return fail_at(c, arg_col(e, offset), "'%s' is not a scalar function", e->name);
    if (e->nargs != scalar_builtins[f].arity)
      return fail_at(c, arg_col(e, offset), "%s takes %d argument%s", e->name,
                     scalar_builtins[f].arity, scalar_builtins[f].arity == 1 ? "" : "s");
    assert(e->nargs <= 3);
    for (int i = 0; i < e->nargs; i++)
      if (eval(c, e->args[i], offset, &a[i])) return -1;
    *v = builtin_value(f, a);
    return 0;
  }
  default: break;
  }
  return fail_at(c, arg_col(e, offset), "a value is a scalar: numbers, pi, parameters, "
                 "+ - * / ^ and scalar functions");
}

/* Parse a unit's text; 0, or -1 with the error in c. */
static int parse_unit(ValueCtx *c, const char *text, size_t n, long offset, Unit *u,
                      double *scale) {
  Ast *ast = parse_wrapped(c, unit_prefix, text, n, "]", offset, "unit");
  Diag d;
  if (!ast) return -1;
  const Stmt *s = ast->stmts[0];
  if (s->kind != ST_COORD || s->ndecls != 1 || !s->decls[0]->unit) {
    ast_free(ast);
    return fail_at(c, offset, "'%.*s' is not a unit", (int)n, text);
  }
  diag_init(&d, "value", NULL, 0);
  int rc = unit_parse_scaled(s->decls[0]->unit, &d, u, scale);
  if (rc != 0) {
    long at = offset + d.msgs[0].loc.col - 1 - (long)(sizeof unit_prefix - 1);
    fail_at(c, at < offset ? offset : at, "%s", d.msgs[0].text);
  }
  diag_free(&d);
  ast_free(ast);
  return rc;
}

/* Scale `v` given in (given, gscale) into the declared unit. */
static int convert(ValueCtx *c, const char *unit, size_t ulen, long uoffset, const char *declared,
                   double *v) {
  Unit given, want;
  double gscale, wscale;
  char a[128], b[128];
  if (parse_unit(c, unit, ulen, uoffset, &given, &gscale)) return -1;
  if (!declared || !*declared) {
    *v *= gscale; /* no declared unit: coherent SI */
    return 0;
  }
  ValueCtx quiet = *c;
  quiet.arg = "";
  if (parse_unit(&quiet, declared, strlen(declared), -1, &want, &wscale))
    return fail_at(c, -1, "the declared unit [%s] is not one this option can convert to",
                   declared);
  if (!unit_same(given, want))
    return fail_at(c, uoffset, "the unit [%.*s] (in SI: %s) does not fit the declared unit "
                   "[%s] (in SI: %s)", (int)ulen, unit, unit_format(given, 1, a, sizeof a),
                   declared, unit_format(want, 1, b, sizeof b));
  *v *= gscale / wscale;
  return 0;
}

int value_text_eval(const char *arg, const char *value, const struct eom_model *m,
                    const double *p, const char *declared, double *out, char *err,
                    size_t errlen) {
  assert(arg && value && value >= arg && m && out);
  ValueCtx c = {arg, m, p, err, errlen};
  long offset = (long)(value - arg);
  size_t n = strlen(value), elen;
  const char *unit = NULL;
  size_t ulen = 0;
  while (n > 0 && (value[n - 1] == ' ' || value[n - 1] == '\t')) n--;
  elen = n;
  /* A trailing [UNIT]: the last top-level bracket pair. */
  if (n > 0 && value[n - 1] == ']') {
    int depth = 0;
    for (size_t i = n; i-- > 0;) {
      if (value[i] == ']') depth++;
      else if (value[i] == '[' && --depth == 0) {
        unit = value + i + 1;
        ulen = n - 1 - (i + 1);
        elen = i;
        break;
      }
    }
    if (!unit) return fail_at(&c, offset + (long)n - 1, "']' without its '['");
  }
  while (elen > 0 && (value[elen - 1] == ' ' || value[elen - 1] == '\t')) elen--;
  if (elen == 0) return fail_at(&c, offset, "no value given");
  Ast *ast = parse_wrapped(&c, expr_prefix, value, elen, "", offset, "value");
  if (!ast) return -1;
  const Stmt *s = ast->stmts[0];
  int rc;
  if (s->kind != ST_PARAM || s->ndecls != 1 || !s->decls[0]->value || s->decls[0]->unit)
    rc = fail_at(&c, offset, "the value is not one expression");
  else
    rc = eval(&c, s->decls[0]->value, offset, out);
  ast_free(ast);
  if (rc == 0 && unit) rc = convert(&c, unit, ulen, offset + (long)(unit - value), declared, out);
  if (rc == 0 && !isfinite(*out))
    rc = fail_at(&c, offset, "the value is not a finite number");
  return rc;
}
