/*
** rate_degree.c — is an expression linear in the rates? (see rate_degree.h)
**
** Degrees add under products, and any rate inside a function other than
** the bilinear dot, cross and the linear transpose, diag and indexing, or
** in a divisor or a power, is not linear.  A let is read through its value.
*/
#include <assert.h>
#include <string.h>

#include "front/rate_degree.h"

static int degree(const Expr *e, SrcLoc *where, int depth);

/* A product-like combination of degrees da and db at `at`. */
static int product(int da, int db, SrcLoc at, SrcLoc *where) {
  if (da == RATES_NONLINEAR || db == RATES_NONLINEAR) return RATES_NONLINEAR;
  if (da + db > RATES_LINEAR) {
    *where = at;
    return RATES_NONLINEAR;
  }
  return da + db;
}

/* The highest degree among the arguments of e, from index `from`. */
static int max_args(const Expr *e, int from, SrcLoc *where, int depth) {
  int d = RATES_NONE;
  for (int i = from; i < e->nargs && d != RATES_NONLINEAR; i++) {
    int di = degree(e->args[i], where, depth);
    if (di > d) d = di;
  }
  return d;
}

static int degree_call(const Expr *e, SrcLoc *where, int depth) {
  if (strcmp(e->name, "omega") == 0 && e->nargs == 1 && e->args[0]->ref &&
      e->args[0]->ref->kind == DECL_ATTITUDE)
    return RATES_LINEAR;   /* the attitude's velocity state */
  if (strcmp(e->name, "dot") == 0 || strcmp(e->name, "cross") == 0) {
    assert(e->nargs == 2);
    int da = degree(e->args[0], where, depth);
    if (da == RATES_NONLINEAR) return da;
    int db = degree(e->args[1], where, depth);
    return product(da, db, e->loc, where);
  }
  if (strcmp(e->name, "transpose") == 0 || strcmp(e->name, "diag") == 0)
    return max_args(e, 0, where, depth);
  int d = max_args(e, 0, where, depth);
  if (d == RATES_LINEAR) {  /* a rate under a non-linear function */
    *where = e->loc;
    return RATES_NONLINEAR;
  }
  return d;
}

static int degree(const Expr *e, SrcLoc *where, int depth) {
  assert(e && depth < AST_MAX_DEPTH + 64);
  switch (e->kind) {
  case EX_NUM: return RATES_NONE;
  case EX_NAME:
    /* a let's value carries its own rates; lets are acyclic once checked */
    if (e->ref && e->ref->kind == DECL_LET && e->ref->value)
      return degree(e->ref->value, where, depth + 1);
    return RATES_NONE;
  case EX_RATE: {
    int d = degree(e->args[0], where, depth + 1);
    if (d != RATES_NONE) {  /* rejected by the checker already; be safe */
      *where = e->loc;
      return RATES_NONLINEAR;
    }
    return RATES_LINEAR;
  }
  case EX_UNARY: return degree(e->args[0], where, depth + 1);
  case EX_LIST: return max_args(e, 0, where, depth + 1);
  case EX_INDEX: {
    int d = degree(e->args[0], where, depth + 1);
    if (d == RATES_NONLINEAR) return d;
    if (max_args(e, 1, where, depth + 1) != RATES_NONE) {
      *where = e->loc;
      return RATES_NONLINEAR;
    }
    return d;
  }
  case EX_CALL: return degree_call(e, where, depth + 1);
  case EX_BINARY: {
    int da = degree(e->args[0], where, depth + 1);
    if (da == RATES_NONLINEAR) return da;
    int db = degree(e->args[1], where, depth + 1);
    if (db == RATES_NONLINEAR) return db;
    switch (e->op) {
    case OP_ADD: case OP_SUB: return da > db ? da : db;
    case OP_MUL: return product(da, db, e->loc, where);
    case OP_DIV:
      if (db != RATES_NONE) {  /* a rate in a divisor */
        *where = e->loc;
        return RATES_NONLINEAR;
      }
      return da;
    case OP_POW:
      if (db != RATES_NONE || (da != RATES_NONE && !(e->args[1]->kind == EX_NUM &&
                                                     e->args[1]->num == 1))) {
        *where = e->loc;
        return RATES_NONLINEAR;
      }
      return da;
    case OP_NEG: break;
    }
    assert(0);
    return RATES_NONLINEAR;
  }
  }
  assert(0);
  return RATES_NONLINEAR;
}

int rate_degree(const Expr *e, SrcLoc *where) {
  assert(e && where);
  return degree(e, where, 0);
}
