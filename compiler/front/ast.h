/*
** ast.h — the abstract syntax tree of one model file.
**
** Plain structs and enums.  Every node of one model lives in one arena
** (see arena.h) and is freed at once with it.  Every node carries the
** location of the token that names it, so any later stage can point a
** diagnostic at the source.  The parser fills the syntactic fields; the
** semantic pass (check.c) fills the fields marked "checker".
*/
#ifndef EOMC_AST_H
#define EOMC_AST_H

#include <stddef.h>
#include "front/arena.h"

/* A position in the source: 1-based line and column (column counts bytes). */
typedef struct SrcLoc {
  int line;
  int col;
} SrcLoc;

/* Binary and unary operators. */
typedef enum ExprOp {
  OP_ADD, OP_SUB, OP_MUL, OP_DIV, OP_POW, OP_NEG
} ExprOp;

typedef enum ExprKind {
  EX_NUM,     /* num */
  EX_NAME,    /* name (also `t` and `pi`, resolved by the checker) */
  EX_UNARY,   /* op = OP_NEG, args[0] */
  EX_BINARY,  /* op, args[0], args[1] */
  EX_RATE,    /* args[0]' : total time derivative */
  EX_CALL,    /* name(args...) */
  EX_INDEX,   /* args[0][args[1]] or args[0][args[1], args[2]] (1-based) */
  EX_LIST     /* [args...]: a vector; a list of lists is a matrix */
} ExprKind;

/* Shape of a value: rows x cols.  Scalars are 1x1, vectors n x 1. */
typedef struct Shape {
  int rows, cols;
} Shape;

struct Decl;

typedef struct Expr {
  ExprKind kind;
  ExprOp op;
  SrcLoc loc;            /* the operator, name or first token */
  double num;            /* EX_NUM */
  const char *name;      /* EX_NAME, EX_CALL */
  struct Expr **args;
  int nargs;
  int depth;             /* 1 + max depth of args (bounded by the parser) */
  /* checker: */
  struct Decl *ref;      /* EX_NAME: the declaration it names (NULL for t, pi) */
  Shape shape;
} Expr;

/* What a name was declared as. */
typedef enum DeclKind {
  DECL_COORD, DECL_PARAM, DECL_CONST, DECL_INPUT, DECL_LET, DECL_OUTPUT,
  DECL_BODY,
  DECL_ATTITUDE  /* a free orientation: a 3x3 rotation stored as a unit quaternion */
} DeclKind;

/* One declared name.  `coord a, b` makes two Decls sharing unit and text. */
typedef struct Decl {
  DeclKind kind;
  const char *name;
  SrcLoc loc;            /* the name token */
  Expr *value;           /* param/const default, let/output value; NULL otherwise */
  Expr *unit;            /* unit annotation as an expression of unit symbols, or NULL */
  const char *desc;      /* description text (unescaped), or NULL */
  /* checker: */
  int index;             /* position among the Decls of the same kind (0-based) */
  int used;              /* referenced anywhere (for unused warnings) */
  double number;         /* param/const: evaluated default */
  int frame;             /* an output made by `frame`: its value is a 4x4 transform,
                            its shape 12x1 (position, then rotation row by row) */
  Shape shape;
  struct Unit *dim;      /* parsed unit, or NULL when none */
} Decl;

typedef enum StmtKind {
  ST_MODEL,        /* model NAME                     : name */
  ST_COORD,        /* coord a, b [u] "d"             : decls */
  ST_PARAM,        /* param a = e [u] "d"            : decls[0] */
  ST_CONST,        /* const a = e [u]                : decls[0] */
  ST_INPUT,        /* input a, b [u] "d"             : decls */
  ST_LET,          /* let a = e                      : decls[0] */
  ST_OUTPUT,       /* output a = e [u] "d"           : decls[0] */
  ST_INITIAL,      /* initial q = e / initial q' = e : name, rate, e[0] */
  ST_IDENTIFY,     /* identify a, b                  : names */
  ST_KINETIC,      /* kinetic e                      : e[0] */
  ST_POTENTIAL,    /* potential e                    : e[0] */
  ST_LAGRANGIAN,   /* lagrangian e                   : e[0] */
  ST_DISSIPATION,  /* dissipation e                  : e[0] */
  ST_FORCE,        /* force q = e                    : name, e[0] */
  ST_FORCE_AT,     /* force F at P                   : e[0]=F, e[1]=P */
  ST_TORQUE,       /* torque TAU on R                : e[0]=TAU, e[1]=R */
  ST_GRAVITY,      /* gravity G                      : e[0] */
  ST_BODY,         /* body N mass m at P [orient R] [inertia I]
                      : decls[0] (DECL_BODY), e[0]=m, e[1]=P, e[2]=R|NULL, e[3]=I|NULL */
  ST_CONSTRAINT,   /* constraint a = b [u]           : e[0]=a, e[1]=b, e[2]=unit or NULL */
  ST_FRAME,        /* frame a = T "d"                : decls[0] (DECL_OUTPUT, frame = 1) */
  ST_ATTITUDE,     /* attitude R, S "d"              : decls (DECL_ATTITUDE) */
  ST_STOP          /* stop a >= b [bounce e] "d"     : e[0]=a, e[1]=b, e[2]=e or NULL, desc */
} StmtKind;

typedef struct Stmt {
  StmtKind kind;
  SrcLoc loc;            /* the keyword */
  const char *name;      /* ST_MODEL, ST_INITIAL, ST_FORCE: the named target */
  SrcLoc name_loc;
  const char *desc;      /* ST_STOP: its text, or NULL */
  int rate;              /* ST_INITIAL: 1 for `initial q' = ...` */
  int omega;             /* ST_INITIAL: 1 for `initial omega(R) = ...` */
  Decl **decls;
  int ndecls;
  const char **names;    /* ST_IDENTIFY */
  SrcLoc *name_locs;
  int nnames;
  Expr *e[4];
  /* checker: */
  struct Decl *target;   /* ST_FORCE, ST_INITIAL: the coordinate named */
  double bounce;         /* ST_STOP: the coefficient of restitution (0 without `bounce`) */
} Stmt;

/* A parsed model file. */
typedef struct Ast {
  Arena *arena;          /* owns every node, string and array below */
  const char *path;      /* as given on the command line */
  Stmt **stmts;
  int nstmts;
} Ast;

/* Node constructors used by the parser (ast.c).  All allocate in `a`. */
Expr *ast_num(Arena *a, SrcLoc loc, double v);
Expr *ast_name(Arena *a, SrcLoc loc, const char *name);
Expr *ast_unary(Arena *a, SrcLoc loc, ExprOp op, Expr *x);
Expr *ast_binary(Arena *a, SrcLoc loc, ExprOp op, Expr *x, Expr *y);
Expr *ast_rate(Arena *a, SrcLoc loc, Expr *x);
Expr *ast_call(Arena *a, SrcLoc loc, const char *name, Expr **args, int nargs);
Expr *ast_index(Arena *a, SrcLoc loc, Expr *x, Expr **idx, int nidx);
Expr *ast_list(Arena *a, SrcLoc loc, Expr **items, int nitems);
Decl *ast_decl(Arena *a, DeclKind k, SrcLoc loc, const char *name);
Stmt *ast_stmt(Arena *a, StmtKind k, SrcLoc loc);

/* Deepest expression tree the compiler accepts (brackets are limited to
** AST_MAX_NESTING by the lexer); deeper input is an error, never a
** stack overflow in a later recursive pass. */
#define AST_MAX_DEPTH 2000
#define AST_MAX_NESTING 256

const char *ast_stmt_keyword(StmtKind k);

#endif
