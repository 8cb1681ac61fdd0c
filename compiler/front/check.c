/*
** check.c — semantic analysis of a parsed model.
**
** One pass over the statements in source order, like a C compiler's: a name
** must be declared before it is used.  For every expression the pass resolves
** names (Expr.ref), computes the shape (Expr.shape) and tracks two facts the
** rest of the compiler relies on: the highest time-rate order of the
** coordinates it contains (q'' is never allowed) and whether it uses an
** input (whose rate is unknown).  Param and const defaults and initial values
** are evaluated here.  Then the Model is gathered and, when every coordinate
** and param has a unit, units.c checks the dimensions.
**
** Errors do not cascade: a subexpression in error gets the shape SHAPE_ERR,
** which silences every check above it, and an undefined name is reported
** once per statement.
*/
#include "front/check.h"
#include "front/rate_degree.h"

#include "front/builtins.h"

#include <assert.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "front/attitude.h"
#include "front/units.h"

/* pi to double precision (M_PI is not C99). */
#define EOM_PI 3.14159265358979323846

/* ------------------------------------------------------------ reserved names */

static const char *const keywords[] = {
  "model", "coord", "param", "const", "input", "let", "initial", "output", "identify",
  "kinetic", "potential", "lagrangian", "dissipation", "force", "torque", "gravity",
  "body", "constraint", "frame", "attitude", "stop",
};

int check_is_keyword(const char *s) {
  for (size_t i = 0; i < sizeof keywords / sizeof keywords[0]; i++)
    if (strcmp(s, keywords[i]) == 0) return 1;
  return 0;
}

/* Returns the arity, -1 for a variadic built-in, -2 when `name` is not one. */
int check_builtin_arity(const char *name) { return builtin_arity(name); }

static int is_scalar_function(const char *f) { return builtin_scalar(f) >= 0; }

static const char *kind_name(DeclKind k) {
  static const char *const names[] = {"coordinate", "param", "const", "input", "let", "output", "body",
                                      "attitude"};
  assert((int)k >= 0 && k <= DECL_ATTITUDE);
  return names[k];
}

/* ------------------------------------------------------------ shapes */

static const Shape SHAPE_SCALAR = {1, 1};
static const Shape SHAPE_ERR = {0, 0};   /* an operand in error: checks above it are silent */

static int is_err(Shape s) { return s.rows == 0; }
static int is_scalar(Shape s) { return s.rows == 1 && s.cols == 1; }
static int same_shape(Shape a, Shape b) { return a.rows == b.rows && a.cols == b.cols; }
static Shape shape(int r, int c) { Shape s = {r, c}; return s; }

/* "scalar", "3x1", "3x3": for messages.  Uses one of two rotating buffers so
** two shapes can appear in one message. */
static const char *shape_str(Shape s) {
  static char bufs[2][32];
  static int k;
  char *b = bufs[k++ & 1];
  if (is_scalar(s)) return "scalar";
  snprintf(b, sizeof bufs[0], "%dx%d", s.rows, s.cols);
  return b;
}

/* ------------------------------------------------------------ checker state */

/* What an expression depends on, beyond its shape. */
typedef struct Info {
  Shape shape;
  int order;        /* highest rate order of a coordinate in it: -1 none, 0 q, 1 q' */
  Decl *input;      /* an input it uses, or NULL */
} Info;

/* Growable vector of pointers (malloc'd; copied into the arena at the end). */
typedef struct PtrVec {
  void **v;
  int n, cap;
} PtrVec;

static void vec_push(PtrVec *p, void *x) {
  if (p->n == p->cap) {
    p->cap = p->cap ? 2 * p->cap : 16;
    p->v = realloc(p->v, (size_t)p->cap * sizeof *p->v);
    if (!p->v) abort();
  }
  p->v[p->n++] = x;
}

/* Per-coordinate and per-let facts, indexed by Decl.index. */
typedef struct CoordInit {
  double q0, qd0;
  Stmt *q0_stmt, *qd0_stmt;   /* the `initial` that set it (for duplicates) */
} CoordInit;

/* Per-attitude initial state, indexed by Decl.index. */
typedef struct AttitudeInit {
  double quat[4], omega[3];   /* unit quaternion [w, x, y, z]; body-frame rad/s */
  Stmt *quat_stmt, *omega_stmt;
} AttitudeInit;

typedef struct LetInfo {
  int order;
  Decl *input;
} LetInfo;

typedef struct Checker {
  Ast *ast;
  Diag *d;
  Model *m;
  /* Symbol table: open addressing on the name. */
  Decl **tab;
  size_t tabcap, tabcount;
  PtrVec by_kind[DECL_ATTITUDE + 1];
  PtrVec terms;
  CoordInit *init;
  size_t initcap;
  AttitudeInit *attinit;
  size_t attcap;
  LetInfo *lets;
  size_t letcap;
  PtrVec identify;
  Stmt *gravity;
  int nconstraints, nvconstraints, nstops;
  int has_energy, has_coord_stmt;
  /* Undefined names already reported in the current statement. */
  const char *undefined[16];
  int nundefined;
} Checker;

static uint32_t hash_name(const char *s) {
  uint32_t h = 2166136261u;
  for (; *s; s++) h = (h ^ (unsigned char)*s) * 16777619u;
  return h;
}

static Decl *lookup(Checker *c, const char *name) {
  if (!c->tabcap) return NULL;
  size_t i = hash_name(name) & (c->tabcap - 1);
  for (; c->tab[i]; i = (i + 1) & (c->tabcap - 1))
    if (strcmp(c->tab[i]->name, name) == 0) return c->tab[i];
  return NULL;
}

static void table_insert(Checker *c, Decl *dc) {
  if (2 * (c->tabcount + 1) > c->tabcap) {
    size_t ncap = c->tabcap ? 2 * c->tabcap : 64;
    Decl **ntab = calloc(ncap, sizeof *ntab);
    if (!ntab) abort();
    for (size_t i = 0; i < c->tabcap; i++) {
      if (!c->tab[i]) continue;
      size_t j = hash_name(c->tab[i]->name) & (ncap - 1);
      while (ntab[j]) j = (j + 1) & (ncap - 1);
      ntab[j] = c->tab[i];
    }
    free(c->tab);
    c->tab = ntab;
    c->tabcap = ncap;
  }
  size_t j = hash_name(dc->name) & (c->tabcap - 1);
  while (c->tab[j]) j = (j + 1) & (c->tabcap - 1);
  c->tab[j] = dc;
  c->tabcount++;
}

/* Report an error, then a note pointing at an earlier place; the note is
** dropped when the Diag suppressed the error (one error per line). */
static void error_with_note(Checker *c, SrcLoc loc, SrcLoc earlier, const char *note, const char *fmt,
                            const char *name, int line) {
  int before = c->d->nmsgs;
  diag_error(c->d, loc, fmt, name, line);
  if (c->d->nmsgs > before) diag_note(c->d, earlier, note, name);
}

/* ------------------------------------------------------------ constant values */

/* Value of a constant expression: numbers, pi, consts, and params (by their
** defaults) when `allow_params`.  Returns 1 and sets *v, or returns 0 and
** points *bad at the first node that is not constant. */
static int eval_const(const Expr *e, int allow_params, double *v, const Expr **bad) {
  double a, b;
  switch (e->kind) {
  case EX_NUM: *v = e->num; return 1;
  case EX_NAME:
    if (!e->ref) {
      if (strcmp(e->name, "pi") == 0) {
        *v = EOM_PI;
        return 1;
      }
      *bad = e;
      return 0;
    }
    if (e->ref->kind == DECL_CONST || (allow_params && e->ref->kind == DECL_PARAM)) {
      *v = e->ref->number;
      return 1;
    }
    *bad = e;
    return 0;
  case EX_UNARY:
    if (!eval_const(e->args[0], allow_params, &a, bad)) return 0;
    *v = -a;
    return 1;
  case EX_BINARY:
    if (!eval_const(e->args[0], allow_params, &a, bad) || !eval_const(e->args[1], allow_params, &b, bad))
      return 0;
    switch (e->op) {
    case OP_ADD: *v = a + b; return 1;
    case OP_SUB: *v = a - b; return 1;
    case OP_MUL: *v = a * b; return 1;
    case OP_DIV: *v = a / b; return 1;
    case OP_POW: *v = pow(a, b); return 1;
    default: break;
    }
    break;
  case EX_CALL: {
    int f = builtin_scalar(e->name);
    double x[3];
    if (f < 0 || e->nargs != scalar_builtins[f].arity) break;
    assert(e->nargs <= 3);
    for (int i = 0; i < e->nargs; i++)
      if (!eval_const(e->args[i], allow_params, &x[i], bad)) return 0;
    *v = builtin_value(f, x);
    return 1;
  }
  default: break;
  }
  *bad = e;
  return 0;
}

/* Does `e` use a param or const whose own value was in error (NaN)?  Then
** a bad result is a follow-on error and is not reported again. */
static int uses_failed_value(const Expr *e) {
  if (e->kind == EX_NAME && e->ref && (e->ref->kind == DECL_PARAM || e->ref->kind == DECL_CONST))
    return isnan(e->ref->number);
  for (int i = 0; i < e->nargs; i++)
    if (uses_failed_value(e->args[i])) return 1;
  return 0;
}

/* Why `bad` (from eval_const) is not constant, for a message. */
static const char *why_not_constant(const Expr *bad, char *buf, size_t n) {
  if (bad->kind == EX_NAME && bad->ref)
    snprintf(buf, n, "'%s' is %s %s", bad->name, bad->ref->kind == DECL_INPUT ? "an" : "a",
             kind_name(bad->ref->kind));
  else if (bad->kind == EX_NAME && strcmp(bad->name, "t") == 0)
    snprintf(buf, n, "it uses the time t");
  else if (bad->kind == EX_RATE)
    snprintf(buf, n, "it uses a time rate");
  else if (bad->kind == EX_CALL)
    snprintf(buf, n, "%s is not a scalar function", bad->name);
  else
    snprintf(buf, n, "it is not a scalar number");
  return buf;
}

/* ------------------------------------------------------------ expressions */

static Info check_expr(Checker *c, Expr *e);

static Info info_err(void) {
  Info i = {SHAPE_ERR, -1, NULL};
  return i;
}

static Info info_merge(Info a, Info b, Shape s) {
  Info r;
  r.shape = s;
  r.order = a.order > b.order ? a.order : b.order;
  r.input = a.input ? a.input : b.input;
  return r;
}

static void report_undefined(Checker *c, const Expr *e) {
  for (int i = 0; i < c->nundefined; i++)
    if (strcmp(c->undefined[i], e->name) == 0) return;
  if (c->nundefined < (int)(sizeof c->undefined / sizeof c->undefined[0]))
    c->undefined[c->nundefined++] = e->name;
  diag_error(c->d, e->loc, "undefined name '%s'", e->name);
}

static Info check_name(Checker *c, Expr *e) {
  Info r = {SHAPE_SCALAR, -1, NULL};
  if (strcmp(e->name, "t") == 0 || strcmp(e->name, "pi") == 0) {
    e->ref = NULL;
    return r;
  }
  Decl *dc = lookup(c, e->name);
  if (!dc) {
    report_undefined(c, e);
    return info_err();
  }
  e->ref = dc;
  dc->used = 1;
  switch (dc->kind) {
  case DECL_COORD: r.order = 0; break;
  case DECL_PARAM: case DECL_CONST: break;
  case DECL_INPUT: r.input = dc; break;
  case DECL_LET:
    assert((size_t)dc->index < c->letcap);
    r.shape = dc->shape;
    r.order = c->lets[dc->index].order;
    r.input = c->lets[dc->index].input;
    break;
  case DECL_OUTPUT:
    diag_error(c->d, e->loc, "'%s' is an output: outputs cannot be used in expressions (use a let)", e->name);
    return info_err();
  case DECL_BODY:
    diag_error(c->d, e->loc, "'%s' is a body, not a value", e->name);
    return info_err();
  case DECL_ATTITUDE:
    r.shape = shape(3, 3);
    r.order = 0;
    break;
  }
  e->shape = r.shape;
  return r;
}

/* Say so when a shape error is about an attitude used as a plain value. */
static void note_if_attitude(Checker *c, const Expr *e, int msgs_before) {
  if (c->d->nmsgs == msgs_before) return;   /* the error was suppressed */
  if (e->kind == EX_NAME && e->ref && e->ref->kind == DECL_ATTITUDE)
    diag_note(c->d, e->loc, "'%s' is an attitude: a 3x3 rotation (body axes to world), not a scalar",
              e->name);
}

static Info check_rate(Checker *c, Expr *e) {
  Expr *x = e->args[0];
  if (x->kind == EX_NAME && strcmp(x->name, "t") != 0 && strcmp(x->name, "pi") != 0) {
    Decl *dc = lookup(c, x->name);
    if (dc && (dc->kind == DECL_PARAM || dc->kind == DECL_CONST)) {
      x->ref = dc;
      dc->used = 1;
      diag_error(c->d, e->loc, "'%s' has no time rate: it is a %s", x->name, kind_name(dc->kind));
      return info_err();
    }
    if (dc && dc->kind == DECL_INPUT) {
      x->ref = dc;
      dc->used = 1;
      diag_error(c->d, e->loc, "'%s' has no known time rate: it is an input", x->name);
      return info_err();
    }
    if (dc && dc->kind == DECL_ATTITUDE) {
      x->ref = dc;
      dc->used = 1;
      diag_error(c->d, e->loc, "the rate of attitude '%s' is not a state: use omega(%s), its body-frame "
                 "angular velocity (world frame: %s*omega(%s))", x->name, x->name, x->name, x->name);
      return info_err();
    }
  }
  Info r = check_expr(c, x);
  if (is_err(r.shape)) return r;
  if (r.input) {
    diag_error(c->d, e->loc, "the time rate of an expression that uses input '%s' is unknown",
               r.input->name);
    return info_err();
  }
  if (r.order >= 1) {
    diag_error(c->d, e->loc,
               "second time derivative not allowed: energies, forces, outputs and lets may use "
               "coordinates and their first rates only");
    return info_err();
  }
  if (r.order == 0) r.order = 1;
  return r;
}

static Info check_binary(Checker *c, Expr *e) {
  Info a = check_expr(c, e->args[0]);
  Info b = check_expr(c, e->args[1]);
  Shape sa = a.shape, sb = b.shape;
  if (is_err(sa) || is_err(sb)) return info_err();
  switch (e->op) {
  case OP_ADD: case OP_SUB:
    if (!same_shape(sa, sb)) {
      int before = c->d->nmsgs;
      diag_error(c->d, e->loc, "cannot %s %s and %s: shapes must be equal",
                 e->op == OP_ADD ? "add" : "subtract", shape_str(sa), shape_str(sb));
      note_if_attitude(c, e->args[is_scalar(sa) ? 1 : 0], before);
      return info_err();
    }
    return info_merge(a, b, sa);
  case OP_MUL:
    if (is_scalar(sa)) return info_merge(a, b, sb);
    if (is_scalar(sb)) return info_merge(a, b, sa);
    if (sa.cols != sb.rows) {
      diag_error(c->d, e->loc, "cannot multiply %s by %s: inner dimensions differ", shape_str(sa),
                 shape_str(sb));
      return info_err();
    }
    return info_merge(a, b, shape(sa.rows, sb.cols));
  case OP_DIV:
    if (!is_scalar(sb)) {
      int before = c->d->nmsgs;
      diag_error(c->d, e->loc, "divisor must be a scalar, not %s", shape_str(sb));
      note_if_attitude(c, e->args[1], before);
      return info_err();
    }
    return info_merge(a, b, sa);
  case OP_POW:
    if (!is_scalar(sa) || !is_scalar(sb)) {
      int before = c->d->nmsgs;
      diag_error(c->d, e->loc, "%s of ^ must be a scalar, not %s", is_scalar(sa) ? "exponent" : "base",
                 shape_str(is_scalar(sa) ? sb : sa));
      note_if_attitude(c, e->args[is_scalar(sa) ? 1 : 0], before);
      return info_err();
    }
    return info_merge(a, b, SHAPE_SCALAR);
  default: break;
  }
  assert(!"unexpected binary operator");
  return info_err();
}

static int is_vector(Shape s) { return s.cols == 1 && s.rows >= 1; }

/* omega(R): the body-frame angular velocity of attitude R, a 3-vector of
** rates.  `omega` is not reserved: a model that declares that name keeps it. */
static Info check_omega(Checker *c, Expr *e) {
  Info r = {SHAPE_ERR, 1, NULL};
  if (e->nargs != 1) {
    diag_error(c->d, e->loc, "omega takes 1 argument (an attitude), not %d", e->nargs);
    return info_err();
  }
  Expr *x = e->args[0];
  Decl *dc = x->kind == EX_NAME ? lookup(c, x->name) : NULL;
  if (!dc || dc->kind != DECL_ATTITUDE) {
    if (x->kind == EX_NAME && !dc && strcmp(x->name, "t") != 0 && strcmp(x->name, "pi") != 0)
      report_undefined(c, x);
    else
      diag_error(c->d, x->loc, "omega() needs the name of an attitude, not %s",
                 dc ? kind_name(dc->kind) : "an expression");
    return info_err();
  }
  x->ref = dc;
  x->shape = shape(3, 3);
  dc->used = 1;
  r.shape = shape(3, 1);
  return r;
}

static Info check_call(Checker *c, Expr *e) {
  Info r = {SHAPE_SCALAR, -1, NULL};
  if (strcmp(e->name, "omega") == 0 && !lookup(c, "omega")) return check_omega(c, e);
  int err = 0;
  Info args[4];
  for (int i = 0; i < e->nargs; i++) {
    Info a = check_expr(c, e->args[i]);
    if (i < 4) args[i] = a;
    if (is_err(a.shape)) err = 1;
    r = info_merge(r, a, SHAPE_SCALAR);
  }
  int arity = check_builtin_arity(e->name);
  if (arity == -2) {
    Decl *dc = lookup(c, e->name);
    if (dc)
      diag_error(c->d, e->loc, "'%s' is %s %s, not a function", e->name,
                 dc->kind == DECL_INPUT ? "an" : "a", kind_name(dc->kind));
    else
      diag_error(c->d, e->loc, "unknown function '%s'", e->name);
    return info_err();
  }
  if (arity >= 0 && e->nargs != arity) {
    diag_error(c->d, e->loc, "%s takes %d argument%s, not %d", e->name, arity, arity == 1 ? "" : "s",
               e->nargs);
    return info_err();
  }
  if (arity == -1 && e->nargs == 0) {
    diag_error(c->d, e->loc, "%s needs at least one argument", e->name);
    return info_err();
  }
  if (err) return info_err();
  const char *f = e->name;
  Shape s0 = e->nargs > 0 ? args[0].shape : SHAPE_SCALAR;
  Shape s1 = e->nargs > 1 ? args[1].shape : SHAPE_SCALAR;
  if (is_scalar_function(f) || strcmp(f, "dh") == 0 || strcmp(f, "rotx") == 0 || strcmp(f, "roty") == 0 ||
      strcmp(f, "rotz") == 0 || strcmp(f, "diag") == 0) {
    for (int i = 0; i < e->nargs; i++)
      if (!is_scalar(e->args[i]->shape)) {
        int before = c->d->nmsgs;
        diag_error(c->d, e->args[i]->loc, "argument %d of %s must be a scalar, not %s", i + 1, f,
                   shape_str(e->args[i]->shape));
        note_if_attitude(c, e->args[i], before);
        return info_err();
      }
    if (strcmp(f, "dh") == 0) r.shape = shape(4, 4);
    else if (strcmp(f, "diag") == 0) r.shape = shape(e->nargs, e->nargs);
    else if (strncmp(f, "rot", 3) == 0) r.shape = shape(3, 3);
    return r;
  }
  if (strcmp(f, "dot") == 0) {
    if (!is_vector(s0) || !same_shape(s0, s1)) {
      diag_error(c->d, e->loc, "dot needs two vectors of equal length, not %s and %s", shape_str(s0),
                 shape_str(s1));
      return info_err();
    }
    return r;
  }
  if (strcmp(f, "cross") == 0) {
    if (!same_shape(s0, shape(3, 1)) || !same_shape(s1, shape(3, 1))) {
      diag_error(c->d, e->loc, "cross needs two 3-vectors (3x1), not %s and %s", shape_str(s0),
                 shape_str(s1));
      return info_err();
    }
    r.shape = shape(3, 1);
    return r;
  }
  if (strcmp(f, "norm") == 0) {
    if (!is_vector(s0)) {
      diag_error(c->d, e->loc, "norm needs a vector, not %s", shape_str(s0));
      return info_err();
    }
    return r;
  }
  if (strcmp(f, "transpose") == 0) {
    r.shape = shape(s0.cols, s0.rows);
    return r;
  }
  if (strcmp(f, "pos") == 0 || strcmp(f, "rot") == 0) {
    if (!same_shape(s0, shape(4, 4))) {
      diag_error(c->d, e->loc, "%s needs a 4x4 transform, not %s", f, shape_str(s0));
      return info_err();
    }
    r.shape = f[0] == 'p' ? shape(3, 1) : shape(3, 3);
    return r;
  }
  assert(!"built-in without a shape rule");
  return info_err();
}

/* A constant integer index in 1..n. */
static int check_index_value(Checker *c, const Expr *ix, int n, int *ok) {
  double v;
  const Expr *bad = NULL;
  if (!is_scalar(ix->shape)) {
    diag_error(c->d, ix->loc, "an index must be a scalar, not %s", shape_str(ix->shape));
    *ok = 0;
    return 0;
  }
  if (!eval_const(ix, 0, &v, &bad) || v != floor(v)) {
    if (!uses_failed_value(ix)) diag_error(c->d, ix->loc, "an index must be a constant integer");
    *ok = 0;
    return 0;
  }
  if (v < 1 || v > n) {
    diag_error(c->d, ix->loc, "index %g is out of range 1..%d", v, n);
    *ok = 0;
    return 0;
  }
  return (int)v;
}

static Info check_index(Checker *c, Expr *e) {
  Info r = check_expr(c, e->args[0]);
  int nidx = e->nargs - 1, err = is_err(r.shape);
  assert(nidx == 1 || nidx == 2);
  for (int i = 1; i < e->nargs; i++) {
    Info ix = check_expr(c, e->args[i]);
    if (is_err(ix.shape)) err = 1;
  }
  if (err) return info_err();
  Shape s = r.shape;
  int ok = 1;
  if (is_scalar(s)) {
    diag_error(c->d, e->loc, "cannot index a scalar");
    return info_err();
  }
  if (nidx == 1) {
    if (s.cols != 1 && s.rows != 1) {
      diag_error(c->d, e->loc, "a %s matrix needs two indices", shape_str(s));
      return info_err();
    }
    check_index_value(c, e->args[1], s.cols == 1 ? s.rows : s.cols, &ok);
  } else {
    check_index_value(c, e->args[1], s.rows, &ok);
    if (ok) check_index_value(c, e->args[2], s.cols, &ok);
  }
  if (!ok) return info_err();
  r.shape = SHAPE_SCALAR;
  return r;
}

static Info check_list(Checker *c, Expr *e, int allow_matrix) {
  Info r = {SHAPE_SCALAR, -1, NULL};
  int err = 0;
  if (e->nargs == 0) {
    diag_error(c->d, e->loc, "empty vector");
    return info_err();
  }
  if (allow_matrix && e->args[0]->kind == EX_LIST) {
    int ncols = -1;
    for (int i = 0; i < e->nargs; i++) {
      Expr *row = e->args[i];
      if (row->kind != EX_LIST) {
        Info a = check_expr(c, row);
        if (!is_err(a.shape))
          diag_error(c->d, row->loc, "every row of a matrix must be a list [a, b, ...]");
        err = 1;
        continue;
      }
      Info a = check_list(c, row, 0);
      row->shape = a.shape;
      if (is_err(a.shape)) {
        err = 1;
        continue;
      }
      if (ncols < 0) ncols = row->nargs;
      else if (row->nargs != ncols && !err) {
        diag_error(c->d, row->loc, "matrix rows must have equal lengths: row %d has %d entries, row 1 has %d",
                   i + 1, row->nargs, ncols);
        err = 1;
      }
      r = info_merge(r, a, SHAPE_SCALAR);
    }
    if (err) return info_err();
    r.shape = shape(e->nargs, ncols);
    return r;
  }
  for (int i = 0; i < e->nargs; i++) {
    Info a = check_expr(c, e->args[i]);
    if (is_err(a.shape)) {
      err = 1;
      continue;
    }
    if (!is_scalar(a.shape) && !err) {
      diag_error(c->d, e->args[i]->loc,
                 "entries of a vector must be scalars, not %s (a matrix is written [[a, b], [c, d]])",
                 shape_str(a.shape));
      err = 1;
    }
    r = info_merge(r, a, SHAPE_SCALAR);
  }
  if (err) return info_err();
  r.shape = shape(e->nargs, 1);
  return r;
}

static Info check_expr(Checker *c, Expr *e) {
  Info r;
  assert(e);
  switch (e->kind) {
  case EX_NUM: r.shape = SHAPE_SCALAR; r.order = -1; r.input = NULL; break;
  case EX_NAME: r = check_name(c, e); break;
  case EX_UNARY: r = check_expr(c, e->args[0]); break;
  case EX_BINARY: r = check_binary(c, e); break;
  case EX_RATE: r = check_rate(c, e); break;
  case EX_CALL: r = check_call(c, e); break;
  case EX_INDEX: r = check_index(c, e); break;
  case EX_LIST: r = check_list(c, e, 1); break;
  default: assert(0); r = info_err(); break;
  }
  e->shape = r.shape;
  return r;
}

/* ------------------------------------------------------------ declarations */

static int is_reserved_name(const char *s) {
  return check_builtin_arity(s) != -2 || strcmp(s, "t") == 0 || strcmp(s, "pi") == 0 ||
         check_is_keyword(s);
}

/* Enter `dc` in the symbol table and its kind's list.  Returns 0 when the
** name was rejected (duplicate). */
static int declare(Checker *c, Decl *dc, Shape s) {
  Decl *prev = lookup(c, dc->name);
  if (prev) {
    error_with_note(c, dc->loc, prev->loc, "'%s' was first declared here",
                    "duplicate declaration of '%s' (first declared on line %d)", dc->name, prev->loc.line);
    return 0;
  }
  if (is_reserved_name(dc->name)) {
    if (check_builtin_arity(dc->name) != -2)
      diag_error(c->d, dc->loc, "'%s' is a built-in function and cannot be declared", dc->name);
    else if (check_is_keyword(dc->name))
      diag_error(c->d, dc->loc, "'%s' is a keyword and cannot be declared", dc->name);
    else
      diag_error(c->d, dc->loc, "'%s' is predefined (%s) and cannot be declared", dc->name,
                 strcmp(dc->name, "t") == 0 ? "the time" : "the constant 3.14159...");
  }
  dc->shape = s;
  PtrVec *list = &c->by_kind[dc->kind];
  dc->index = list->n;
  vec_push(list, dc);
  table_insert(c, dc);
  if (dc->kind == DECL_COORD) {
    if ((size_t)list->n > c->initcap) {
      size_t ncap = c->initcap ? 2 * c->initcap : 16;
      c->init = realloc(c->init, ncap * sizeof *c->init);
      if (!c->init) abort();
      memset(c->init + c->initcap, 0, (ncap - c->initcap) * sizeof *c->init);
      c->initcap = ncap;
    }
  }
  if (dc->kind == DECL_ATTITUDE && (size_t)list->n > c->attcap) {
    size_t ncap = c->attcap ? 2 * c->attcap : 8;
    c->attinit = realloc(c->attinit, ncap * sizeof *c->attinit);
    if (!c->attinit) abort();
    for (size_t i = c->attcap; i < ncap; i++) {
      memset(&c->attinit[i], 0, sizeof c->attinit[i]);
      c->attinit[i].quat[0] = 1;   /* default: body axes along the world's */
    }
    c->attcap = ncap;
  }
  if (dc->kind == DECL_LET && (size_t)list->n > c->letcap) {
    size_t ncap = c->letcap ? 2 * c->letcap : 16;
    c->lets = realloc(c->lets, ncap * sizeof *c->lets);
    if (!c->lets) abort();
    memset(c->lets + c->letcap, 0, (ncap - c->letcap) * sizeof *c->lets);
    c->letcap = ncap;
  }
  return 1;
}

/* Parse a declaration's unit annotation into Decl.dim. */
static void declare_unit(Checker *c, Decl *dc) {
  if (!dc->unit) return;
  Unit u;
  if (unit_parse(dc->unit, c->d, &u) != 0) return;
  dc->dim = arena_alloc(c->ast->arena, sizeof *dc->dim);
  *dc->dim = u;
}

/* Evaluate a param/const default into Decl.number. */
static void check_default(Checker *c, Decl *dc) {
  char why[160];
  const Expr *bad = NULL;
  double v;
  assert(dc->value);
  dc->number = NAN;   /* until the value is known good */
  Info r = check_expr(c, dc->value);
  if (is_err(r.shape)) return;
  const char *what = dc->kind == DECL_PARAM ? "default of param" : "value of const";
  if (!is_scalar(r.shape)) {
    diag_error(c->d, dc->value->loc, "%s '%s' must be a scalar, not %s", what, dc->name, shape_str(r.shape));
    return;
  }
  if (!eval_const(dc->value, dc->kind == DECL_PARAM, &v, &bad)) {
    if (dc->kind == DECL_CONST && bad->kind == EX_NAME && bad->ref && bad->ref->kind == DECL_PARAM)
      diag_error(c->d, bad->loc, "value of const '%s' cannot use param '%s': params change at run time",
                 dc->name, bad->name);
    else
      diag_error(c->d, bad->loc, "%s '%s' must be a constant expression of numbers, consts%s: %s", what,
                 dc->name, dc->kind == DECL_PARAM ? " and earlier params" : "",
                 why_not_constant(bad, why, sizeof why));
    return;
  }
  if (!isfinite(v)) {
    if (!uses_failed_value(dc->value))
      diag_error(c->d, dc->value->loc, "%s '%s' is not a finite number", what, dc->name);
    return;
  }
  dc->number = v;
}

/* Resolve the coordinate a `force q = ...` or `initial q = ...` names. */
static Decl *target_coord(Checker *c, Stmt *s) {
  Decl *dc = lookup(c, s->name);
  if (!dc) {
    diag_error(c->d, s->name_loc, "undefined name '%s'", s->name);
    return NULL;
  }
  if (dc->kind == DECL_ATTITUDE && s->kind == ST_FORCE) {
    diag_error(c->d, s->name_loc, "'%s' is an attitude: it takes no generalized force; apply a "
               "world-frame torque with 'torque TAU on %s'", s->name, s->name);
    return NULL;
  }
  if (dc->kind != DECL_COORD) {
    diag_error(c->d, s->name_loc, "'%s' is not a coordinate (it is %s %s)", s->name,
               dc->kind == DECL_INPUT || dc->kind == DECL_ATTITUDE ? "an" : "a", kind_name(dc->kind));
    return NULL;
  }
  return dc;
}

/* Check that a statement's expression has shape `want` (`what` names it). */
static Info expect_shape(Checker *c, Expr *e, Shape want, const char *what) {
  Info r = check_expr(c, e);
  if (is_err(r.shape)) return r;
  if (!same_shape(r.shape, want)) {
    int before = c->d->nmsgs;
    if (is_scalar(want)) {
      diag_error(c->d, e->loc, "%s must be a scalar, not %s", what, shape_str(r.shape));
      note_if_attitude(c, e, before);
    }
    else
      diag_error(c->d, e->loc, "%s must be %s, not %s", what,
                 want.cols == 1 ? "a 3-vector (3x1)" : want.rows == 3 ? "a 3x3 matrix" : "a 4x4 matrix",
                 shape_str(r.shape));
    return info_err();
  }
  return r;
}

static int eval_const_with_params(const Expr *e, double *v, const Expr **bad) {
  return eval_const(e, 1, v, bad);
}

/* Largest |R^T R - I| entry accepted in `initial R = ...`: room for
** rotations typed with six or seven digits; the quaternion is normalised. */
#define ROTATION_TOLERANCE 1e-6

/* initial R = ROTATION: a constant proper rotation, stored as a quaternion. */
static void initial_rotation(Checker *c, Stmt *s, AttitudeInit *ai) {
  char why[160];
  ConstMat m;
  const Expr *bad = NULL;
  Info r = expect_shape(c, s->e[0], shape(3, 3), "the initial value of an attitude");
  if (is_err(r.shape)) return;
  if (!attitude_const_matrix(s->e[0], eval_const_with_params, &m, &bad)) {
    diag_error(c->d, bad->loc, "an initial rotation must be a constant expression of numbers, consts "
               "and params: %s", why_not_constant(bad, why, sizeof why));
    return;
  }
  assert(m.rows == 3 && m.cols == 3);
  double err = attitude_orthonormality_error(m.a);
  if (!isfinite(err)) {
    if (!uses_failed_value(s->e[0]))
      diag_error(c->d, s->e[0]->loc, "the initial rotation of '%s' is not finite", s->name);
    return;
  }
  if (err > ROTATION_TOLERANCE) {
    diag_error(c->d, s->e[0]->loc, "the initial value of attitude '%s' is not a rotation: it is %.3g "
               "from orthonormal (largest entry of |R^T R - I|; at most %g is accepted)", s->name, err,
               ROTATION_TOLERANCE);
    return;
  }
  if (attitude_det3(m.a) < 0) {
    diag_error(c->d, s->e[0]->loc, "the initial value of attitude '%s' is a reflection (determinant "
               "-1), not a rotation", s->name);
    return;
  }
  attitude_quaternion_from_rotation(m.a, ai->quat);
}

/* initial omega(R) = [a, b, c]: the body-frame angular velocity. */
static void initial_omega(Checker *c, Stmt *s, AttitudeInit *ai) {
  char why[160];
  ConstMat m;
  const Expr *bad = NULL;
  Info r = expect_shape(c, s->e[0], shape(3, 1), "an initial angular velocity");
  if (is_err(r.shape)) return;
  if (!attitude_const_matrix(s->e[0], eval_const_with_params, &m, &bad)) {
    diag_error(c->d, bad->loc, "an initial angular velocity must be a constant expression of numbers, "
               "consts and params: %s", why_not_constant(bad, why, sizeof why));
    return;
  }
  for (int i = 0; i < 3; i++)
    if (!isfinite(m.a[i])) {
      if (!uses_failed_value(s->e[0]))
        diag_error(c->d, s->e[0]->loc, "the initial angular velocity of '%s' is not finite", s->name);
      return;
    }
  memcpy(ai->omega, m.a, sizeof ai->omega);
}

/* `initial R = ...` and `initial omega(R) = ...` for an attitude R. */
static void check_initial_attitude(Checker *c, Stmt *s, Decl *att) {
  if (!att || att->kind != DECL_ATTITUDE) {
    if (att)
      diag_error(c->d, s->name_loc, "'%s' is not an attitude (it is %s %s): omega() needs an attitude",
                 s->name, att->kind == DECL_INPUT ? "an" : "a", kind_name(att->kind));
    else
      diag_error(c->d, s->name_loc, "undefined name '%s'", s->name);
    check_expr(c, s->e[0]);
    return;
  }
  if (s->rate) {
    diag_error(c->d, s->loc, "the rate of attitude '%s' is not a state: give 'initial omega(%s) = "
               "[a, b, c]' (body frame, rad/s)", s->name, s->name);
    return;
  }
  s->target = att;
  att->used = 1;
  assert((size_t)att->index < c->attcap);
  AttitudeInit *ai = &c->attinit[att->index];
  Stmt **prev = s->omega ? &ai->omega_stmt : &ai->quat_stmt;
  if (*prev) {
    char what[96];
    snprintf(what, sizeof what, s->omega ? "omega(%s)" : "%s", s->name);
    error_with_note(c, s->loc, (*prev)->loc, "the first initial value of '%s' is here",
                    "duplicate initial value for '%s' (first given on line %d)", what, (*prev)->loc.line);
    return;
  }
  *prev = s;
  if (s->omega) initial_omega(c, s, ai);
  else initial_rotation(c, s, ai);
}

static void check_initial(Checker *c, Stmt *s) {
  char why[160];
  Decl *named = lookup(c, s->name);
  if (s->omega || (named && named->kind == DECL_ATTITUDE)) {
    check_initial_attitude(c, s, named);
    return;
  }
  Decl *q = target_coord(c, s);
  Info r = expect_shape(c, s->e[0], SHAPE_SCALAR, "an initial value");
  if (!q) return;
  s->target = q;
  CoordInit *ci = &c->init[q->index];
  Stmt **prev = s->rate ? &ci->qd0_stmt : &ci->q0_stmt;
  if (*prev) {
    error_with_note(c, s->loc, (*prev)->loc, "the first initial value of '%s' is here",
                    "duplicate initial value for '%s' (first given on line %d)", q->name, (*prev)->loc.line);
    return;
  }
  *prev = s;
  if (is_err(r.shape)) return;
  double v;
  const Expr *bad = NULL;
  if (!eval_const(s->e[0], 1, &v, &bad)) {
    diag_error(c->d, bad->loc, "an initial value must be a constant expression of numbers, consts and "
               "params: %s", why_not_constant(bad, why, sizeof why));
    return;
  }
  if (!isfinite(v)) {
    if (!uses_failed_value(s->e[0]))
      diag_error(c->d, s->e[0]->loc, "the initial value of '%s' is not a finite number", q->name);
    return;
  }
  if (s->rate) ci->qd0 = v;
  else ci->q0 = v;
}

static void check_identify(Checker *c, Stmt *s) {
  for (int i = 0; i < s->nnames; i++) {
    Decl *dc = lookup(c, s->names[i]);
    if (!dc) {
      diag_error(c->d, s->name_locs[i], "undefined name '%s'", s->names[i]);
      continue;
    }
    if (dc->kind != DECL_PARAM) {
      diag_error(c->d, s->name_locs[i], "'%s' is not a param (it is %s %s): only params can be identified",
                 s->names[i], dc->kind == DECL_INPUT ? "an" : "a", kind_name(dc->kind));
      continue;
    }
    int dup = 0;
    for (int j = 0; j < c->identify.n; j++)
      if (c->identify.v[j] == dc) dup = 1;
    if (dup) {
      diag_error(c->d, s->name_locs[i], "'%s' is already listed in identify", s->names[i]);
      continue;
    }
    vec_push(&c->identify, dc);
  }
}

/* An inertia matrix literal whose constant entries are not symmetric (other
** forms are checked when the equations are derived). */
static void check_inertia_symmetry(Checker *c, Stmt *s) {
  const Expr *I = s->e[3];
  while (I->kind == EX_NAME && I->ref && I->ref->kind == DECL_LET) I = I->ref->value;
  if (I->kind != EX_LIST || I->nargs != 3) return;
  for (int i = 0; i < 3; i++)
    if (I->args[i]->kind != EX_LIST || I->args[i]->nargs != 3) return;
  for (int i = 0; i < 3; i++)
    for (int j = i + 1; j < 3; j++) {
      double a, b;
      const Expr *bad;
      if (!eval_const(I->args[i]->args[j], 1, &a, &bad) || !eval_const(I->args[j]->args[i], 1, &b, &bad))
        continue;
      if (fabs(a - b) > 1e-12 * (fabs(a) + fabs(b)) && a != b) {
        diag_error(c->d, I->args[i]->args[j]->loc,
                   "inertia of body '%s' must be symmetric: I[%d,%d] = %g but I[%d,%d] = %g",
                   s->decls[0]->name, i + 1, j + 1, a, j + 1, i + 1, b);
        return;
      }
    }
}

static void check_body(Checker *c, Stmt *s) {
  char what[160];
  Decl *b = s->decls[0];
  snprintf(what, sizeof what, "mass of body '%s'", b->name);
  expect_shape(c, s->e[0], SHAPE_SCALAR, what);
  snprintf(what, sizeof what, "position of body '%s'", b->name);
  expect_shape(c, s->e[1], shape(3, 1), what);
  if (s->e[2]) {
    snprintf(what, sizeof what, "orientation of body '%s'", b->name);
    expect_shape(c, s->e[2], shape(3, 3), what);
  }
  if (s->e[3]) {
    snprintf(what, sizeof what, "inertia of body '%s'", b->name);
    Info r = expect_shape(c, s->e[3], shape(3, 3), what);
    if (!is_err(r.shape)) check_inertia_symmetry(c, s);
  }
  declare(c, b, SHAPE_ERR);
  c->has_energy = 1;
}

static void check_constraint(Checker *c, Stmt *s) {
  Info a = check_expr(c, s->e[0]);
  Info b = check_expr(c, s->e[1]);
  if (is_err(a.shape) || is_err(b.shape)) return;
  if (!same_shape(a.shape, b.shape)) {
    diag_error(c->d, s->loc, "the sides of a constraint must have equal shapes, not %s and %s",
               shape_str(a.shape), shape_str(b.shape));
    return;
  }
  Info r = info_merge(a, b, a.shape);
  if (r.input) {
    diag_error(c->d, s->loc, "a constraint cannot use input '%s': constraints may depend on "
               "coordinates, their rates, params and t only", r.input->name);
    return;
  }
  if (r.order >= 1) {
    /* a velocity constraint A(t, q) q' = b(t, q): the rates enter linearly */
    SrcLoc where = s->loc;
    for (int k = 0; k < 2; k++)
      if (rate_degree(s->e[k], &where) == RATES_NONLINEAR) {
        diag_error(c->d, where, "the rates enter this velocity constraint non-linearly here: "
                   "a velocity constraint must be linear in the rates (A(t, q) q' = b(t, q))");
        return;
      }
    c->nvconstraints += a.shape.rows * a.shape.cols;
    return;
  }
  c->nconstraints += a.shape.rows * a.shape.cols;
}

/* stop LEFT >= RIGHT [bounce E]: one scalar gap of the coordinates,
** params and t (no rates: the runtime handles the gap's rate itself), and
** a constant coefficient of restitution in [0, 1]. */
/* The first `x'` in e, for pointing at a rate (NULL when the rate comes
** through a `let`). */
static const Expr *first_rate(const Expr *e) {
  if (e->kind == EX_RATE) return e;
  for (int i = 0; i < e->nargs; i++) {
    const Expr *r = e->args[i] ? first_rate(e->args[i]) : NULL;
    if (r) return r;
  }
  return NULL;
}

static void check_stop(Checker *c, Stmt *s) {
  Info side[2] = {check_expr(c, s->e[0]), check_expr(c, s->e[1])};
  c->nstops++;
  for (int k = 0; k < 2; k++) {
    if (is_err(side[k].shape)) return;
    if (!is_scalar(side[k].shape)) {
      diag_error(c->d, s->e[k]->loc, "the %s side of a stop must be a scalar, not %s",
                 k ? "right" : "left", shape_str(side[k].shape));
      return;
    }
    if (side[k].input) {
      diag_error(c->d, s->e[k]->loc, "a stop cannot use input '%s': its gap may depend on "
                 "coordinates, params and t only", side[k].input->name);
      return;
    }
    if (side[k].order >= 1) {
      const Expr *r = first_rate(s->e[k]);
      diag_error(c->d, r ? r->loc : s->e[k]->loc, "a stop cannot use rates: its gap LEFT - RIGHT "
                 "may depend on coordinates, params and t only");
      return;
    }
  }
  s->bounce = 0;
  if (!s->e[2]) return;
  Info e = expect_shape(c, s->e[2], SHAPE_SCALAR, "a bounce");
  if (is_err(e.shape)) return;
  double v;
  const Expr *bad = NULL;
  char why[160];
  if (!eval_const(s->e[2], 0, &v, &bad)) {
    diag_error(c->d, bad->loc, "a bounce must be a constant expression of numbers and consts: %s",
               why_not_constant(bad, why, sizeof why));
    return;
  }
  if (!(v >= 0 && v <= 1)) {
    if (!uses_failed_value(s->e[2]))
      diag_error(c->d, s->e[2]->loc, "a bounce (coefficient of restitution) must lie in [0, 1], "
                 "not %.15g", v);
    return;
  }
  s->bounce = v;
}

static void check_statement(Checker *c, Stmt *s, int position) {
  char what[160];
  Unit u;
  Unit *shared = NULL;   /* `coord a, b [m]`: one unit for the whole list */
  c->nundefined = 0;
  switch (s->kind) {
  case ST_MODEL:
    if (position != 0) diag_error(c->d, s->loc, "'model' must be the first statement");
    else c->m->name = s->name;
    break;
  case ST_COORD: case ST_INPUT:
    if (s->kind == ST_COORD) c->has_coord_stmt = 1;
    if (s->ndecls > 0 && s->decls[0]->unit && unit_parse(s->decls[0]->unit, c->d, &u) == 0) {
      shared = arena_alloc(c->ast->arena, sizeof *shared);
      *shared = u;
    }
    for (int i = 0; i < s->ndecls; i++) {
      declare(c, s->decls[i], SHAPE_SCALAR);
      s->decls[i]->dim = shared;
    }
    break;
  case ST_PARAM: case ST_CONST:
    check_default(c, s->decls[0]);
    declare(c, s->decls[0], SHAPE_SCALAR);
    declare_unit(c, s->decls[0]);
    break;
  case ST_LET: {
    Decl *dc = s->decls[0];
    Info r = check_expr(c, dc->value);
    if (declare(c, dc, r.shape)) {
      c->lets[dc->index].order = r.order;
      c->lets[dc->index].input = r.input;
    }
    declare_unit(c, dc);
    break;
  }
  case ST_OUTPUT: {
    Decl *dc = s->decls[0];
    Info r = check_expr(c, dc->value);
    /* a vector or matrix output gives one entry of y per element */
    declare(c, dc, is_err(r.shape) ? SHAPE_SCALAR : r.shape);
    declare_unit(c, dc);
    break;
  }
  case ST_FRAME: {
    /* y gets the frame's position and its rotation, row by row */
    Decl *dc = s->decls[0];
    Shape transform = {4, 4}, entries = {12, 1};
    Info r = expect_shape(c, dc->value, transform, "a frame's transform");
    if (r.order > 0)
      diag_error(c->d, dc->value->loc, "a frame's transform must depend on the coordinates, "
                 "not on their rates");
    else if (r.input)
      diag_error(c->d, dc->value->loc, "a frame's transform must not depend on the input '%s'",
                 r.input->name);
    declare(c, dc, entries);
    break;
  }
  case ST_ATTITUDE:
    c->has_coord_stmt = 1;
    for (int i = 0; i < s->ndecls; i++) {
      declare(c, s->decls[i], shape(3, 3));
      s->decls[i]->dim = arena_alloc(c->ast->arena, sizeof *s->decls[i]->dim);
      *s->decls[i]->dim = unit_dimensionless();
    }
    break;
  case ST_INITIAL: check_initial(c, s); break;
  case ST_IDENTIFY: check_identify(c, s); break;
  case ST_KINETIC: case ST_POTENTIAL: case ST_LAGRANGIAN: case ST_DISSIPATION:
    snprintf(what, sizeof what, "a %s term", ast_stmt_keyword(s->kind));
    expect_shape(c, s->e[0], SHAPE_SCALAR, what);
    if (s->kind == ST_KINETIC || s->kind == ST_LAGRANGIAN) c->has_energy = 1;
    vec_push(&c->terms, s);
    break;
  case ST_FORCE: {
    Decl *q = target_coord(c, s);
    expect_shape(c, s->e[0], SHAPE_SCALAR, "a generalized force");
    s->target = q;
    vec_push(&c->terms, s);
    break;
  }
  case ST_FORCE_AT:
    expect_shape(c, s->e[0], shape(3, 1), "the force vector");
    expect_shape(c, s->e[1], shape(3, 1), "the point of application");
    vec_push(&c->terms, s);
    break;
  case ST_TORQUE:
    expect_shape(c, s->e[0], shape(3, 1), "the torque vector");
    expect_shape(c, s->e[1], shape(3, 3), "the orientation");
    vec_push(&c->terms, s);
    break;
  case ST_GRAVITY:
    expect_shape(c, s->e[0], shape(3, 1), "gravity");
    if (c->gravity) {
      int before = c->d->nmsgs;
      diag_error(c->d, s->loc, "gravity is already given (line %d)", c->gravity->loc.line);
      if (c->d->nmsgs > before) diag_note(c->d, c->gravity->loc, "the first gravity statement is here");
    } else
      c->gravity = s;
    vec_push(&c->terms, s);
    break;
  case ST_BODY:
    check_body(c, s);
    vec_push(&c->terms, s);
    break;
  case ST_CONSTRAINT:
    check_constraint(c, s);
    vec_push(&c->terms, s);
    break;
  case ST_STOP:
    check_stop(c, s);
    vec_push(&c->terms, s);
    break;
  }
}

/* ------------------------------------------------------------ the model */

/* The C prefix from the file name: stem, made an identifier. */
static const char *name_from_path(Arena *a, const char *path) {
  const char *base = path ? path : "";
  const char *slash = strrchr(base, '/');
  if (slash) base = slash + 1;
  const char *dot = strrchr(base, '.');
  size_t n = dot && dot != base ? (size_t)(dot - base) : strlen(base);
  char *s = arena_alloc(a, n + 3);
  size_t k = 0;
  if (n == 0 || (base[0] >= '0' && base[0] <= '9')) {
    s[k++] = 'm';
    s[k++] = '_';
  }
  for (size_t i = 0; i < n; i++) {
    unsigned char ch = (unsigned char)base[i];
    int ok = (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') || (ch >= '0' && ch <= '9') || ch == '_';
    s[k++] = ok ? (char)ch : '_';
  }
  s[k] = '\0';
  return s;
}

static Decl **take(Arena *a, PtrVec *v, int *n) {
  *n = v->n;
  Decl **out = (Decl **)arena_copy_ptrs(a, v->v, (size_t)v->n);
  free(v->v);
  memset(v, 0, sizeof *v);
  return out;
}

static void warn_unused(Checker *c, PtrVec *v, const char *kind) {
  for (int i = 0; i < v->n; i++) {
    Decl *dc = v->v[i];
    if (!dc->used) diag_warning(c->d, dc->loc, "%s '%s' is never used", kind, dc->name);
  }
}

int check_model(Ast *ast, Diag *d, Model *m) {
  Checker c;
  assert(ast && d && m);
  memset(&c, 0, sizeof c);
  memset(m, 0, sizeof *m);
  c.ast = ast;
  c.d = d;
  c.m = m;
  m->ast = ast;
  int errors_before = d->nerrors;

  for (int i = 0; i < ast->nstmts; i++) check_statement(&c, ast->stmts[i], i);

  SrcLoc top = {1, 1};
  if (!c.has_coord_stmt)
    diag_error(d, top, "the model has no coordinates: declare them with 'coord'");
  else if (!c.has_energy)
    diag_error(d, top, "the model has no energy: add a 'kinetic', 'lagrangian' or 'body' statement");

  warn_unused(&c, &c.by_kind[DECL_PARAM], "param");
  warn_unused(&c, &c.by_kind[DECL_LET], "let");

  Arena *a = ast->arena;
  if (!m->name) m->name = name_from_path(a, ast->path);
  int ncoords = c.by_kind[DECL_COORD].n;
  m->q0 = arena_alloc(a, (size_t)(ncoords ? ncoords : 1) * sizeof *m->q0);
  m->qd0 = arena_alloc(a, (size_t)(ncoords ? ncoords : 1) * sizeof *m->qd0);
  for (int i = 0; i < ncoords; i++) {
    m->q0[i] = c.init[i].q0;
    m->qd0[i] = c.init[i].qd0;
  }
  m->coords = take(a, &c.by_kind[DECL_COORD], &m->ncoords);
  m->params = take(a, &c.by_kind[DECL_PARAM], &m->nparams);
  m->consts = take(a, &c.by_kind[DECL_CONST], &m->nconsts);
  m->inputs = take(a, &c.by_kind[DECL_INPUT], &m->ninputs);
  m->lets = take(a, &c.by_kind[DECL_LET], &m->nlets);
  m->outputs = take(a, &c.by_kind[DECL_OUTPUT], &m->noutputs);
  m->ny = 0;
  for (int i = 0; i < m->noutputs; i++) m->ny += m->outputs[i]->shape.rows * m->outputs[i]->shape.cols;
  m->bodies = take(a, &c.by_kind[DECL_BODY], &m->nbodies);
  int natt = c.by_kind[DECL_ATTITUDE].n;
  m->attitude_q0 = arena_alloc(a, (size_t)(natt ? natt : 1) * 4 * sizeof *m->attitude_q0);
  m->omega0 = arena_alloc(a, (size_t)(natt ? natt : 1) * 3 * sizeof *m->omega0);
  for (int i = 0; i < natt; i++) {
    memcpy(m->attitude_q0 + 4 * i, c.attinit[i].quat, 4 * sizeof *m->attitude_q0);
    memcpy(m->omega0 + 3 * i, c.attinit[i].omega, 3 * sizeof *m->omega0);
  }
  m->attitudes = take(a, &c.by_kind[DECL_ATTITUDE], &m->nattitudes);
  m->identify = take(a, &c.identify, &m->nidentify);
  m->nterms = c.terms.n;
  m->terms = (Stmt **)arena_copy_ptrs(a, c.terms.v, (size_t)c.terms.n);
  m->nconstraints = c.nconstraints;
  m->nvconstraints = c.nvconstraints;
  m->nstops = c.nstops;
  free(c.terms.v);
  free(c.tab);
  free(c.init);
  free(c.attinit);
  free(c.lets);

  /* Units only for a model that is otherwise sound: a name or shape error
  ** would only produce follow-on unit errors. */
  if (d->nerrors == errors_before) units_check_model(m, d);
  return d->nerrors - errors_before;
}
