/*
** ast.c — constructors of AST nodes, all allocated in the model's arena.
**
** Each expression node records its depth (1 + the deepest argument) so that
** the parser can refuse trees deeper than AST_MAX_DEPTH before any recursive
** pass walks them.
*/
#include "front/ast.h"
#include "front/parse.h"

#include <assert.h>
#include <string.h>

static Expr *new_expr(Arena *a, ExprKind k, SrcLoc loc) {
  Expr *e = arena_alloc(a, sizeof *e);
  e->kind = k;
  e->loc = loc;
  e->depth = 1;
  return e;
}

/* Give `e` its own copy of args[0..n) and the depth that follows from them. */
static void set_args(Arena *a, Expr *e, Expr **args, int n) {
  assert(n >= 0);
  e->args = (Expr **)arena_copy_ptrs(a, (void *const *)args, (size_t)n);
  e->nargs = n;
  for (int i = 0; i < n; i++) {
    assert(args[i]);
    if (args[i]->depth + 1 > e->depth) e->depth = args[i]->depth + 1;
  }
}

Expr *ast_num(Arena *a, SrcLoc loc, double v) {
  Expr *e = new_expr(a, EX_NUM, loc);
  e->num = v;
  return e;
}

Expr *ast_name(Arena *a, SrcLoc loc, const char *name) {
  assert(name);
  Expr *e = new_expr(a, EX_NAME, loc);
  e->name = name;
  return e;
}

Expr *ast_unary(Arena *a, SrcLoc loc, ExprOp op, Expr *x) {
  assert(op == OP_NEG);
  Expr *e = new_expr(a, EX_UNARY, loc);
  e->op = op;
  set_args(a, e, &x, 1);
  return e;
}

Expr *ast_binary(Arena *a, SrcLoc loc, ExprOp op, Expr *x, Expr *y) {
  assert(op != OP_NEG);
  Expr *e = new_expr(a, EX_BINARY, loc);
  Expr *args[2] = {x, y};
  e->op = op;
  set_args(a, e, args, 2);
  return e;
}

Expr *ast_rate(Arena *a, SrcLoc loc, Expr *x) {
  Expr *e = new_expr(a, EX_RATE, loc);
  set_args(a, e, &x, 1);
  return e;
}

Expr *ast_call(Arena *a, SrcLoc loc, const char *name, Expr **args, int nargs) {
  assert(name);
  Expr *e = new_expr(a, EX_CALL, loc);
  e->name = name;
  set_args(a, e, args, nargs);
  return e;
}

Expr *ast_index(Arena *a, SrcLoc loc, Expr *x, Expr **idx, int nidx) {
  assert(nidx >= 1 && nidx <= 2);
  Expr *e = new_expr(a, EX_INDEX, loc);
  Expr *args[3] = {x, idx[0], nidx > 1 ? idx[1] : NULL};
  set_args(a, e, args, 1 + nidx);
  return e;
}

Expr *ast_list(Arena *a, SrcLoc loc, Expr **items, int nitems) {
  Expr *e = new_expr(a, EX_LIST, loc);
  set_args(a, e, items, nitems);
  return e;
}

Decl *ast_decl(Arena *a, DeclKind k, SrcLoc loc, const char *name) {
  assert(name);
  Decl *d = arena_alloc(a, sizeof *d);
  d->kind = k;
  d->loc = loc;
  d->name = name;
  return d;
}

Stmt *ast_stmt(Arena *a, StmtKind k, SrcLoc loc) {
  Stmt *s = arena_alloc(a, sizeof *s);
  s->kind = k;
  s->loc = loc;
  return s;
}

const char *ast_stmt_keyword(StmtKind k) {
  switch (k) {
    case ST_MODEL: return "model";
    case ST_COORD: return "coord";
    case ST_PARAM: return "param";
    case ST_CONST: return "const";
    case ST_INPUT: return "input";
    case ST_LET: return "let";
    case ST_OUTPUT: return "output";
    case ST_INITIAL: return "initial";
    case ST_IDENTIFY: return "identify";
    case ST_KINETIC: return "kinetic";
    case ST_POTENTIAL: return "potential";
    case ST_LAGRANGIAN: return "lagrangian";
    case ST_DISSIPATION: return "dissipation";
    case ST_FORCE: return "force";
    case ST_FORCE_AT: return "force";
    case ST_TORQUE: return "torque";
    case ST_GRAVITY: return "gravity";
    case ST_BODY: return "body";
    case ST_CONSTRAINT: return "constraint";
    case ST_STOP: return "stop";
    case ST_FRAME: return "frame";
    case ST_ATTITUDE: return "attitude";
  }
  return "?";
}

void ast_free(Ast *ast) {
  if (!ast) return;
  /* The Ast itself lives in its arena. */
  arena_free(ast->arena);
}
