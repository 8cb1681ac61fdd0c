/*
** emit_internal.h — what the files of the C back end share: the Emitter
** (the state of one run over the IrGraph), growable text buffers, the
** per-function analysis that picks temporaries, the expression printer,
** and the writers of each part of P.h and P.c.
**
** emit_expr.c      buffers, number and string literals, temporaries, expressions,
**                  function frames, the numeric check of unused arguments
** emit_ldl.c       the LDLᵀ sparsity pattern, P_ldl_factor and P_ldl_solve
** emit_dynamics.c  mass, forcing, accel, rhs, jacobian, inverse, energy, outputs,
**                  switches, and the plain functions of emit_control/emit_kinematics
** emit_constrained.c  position and velocity constraints, accel_constrained
** emit_header.c    P.h, the banner, unit annotations
** emit_descriptor.c   defaults, initial state, name tables and P_model
** emit_c.c         the order of P.c and the entry points (emit_c.h)
**
** Internal to compiler/emit/: nothing outside this folder includes it.
*/
#ifndef EOMC_EMIT_INTERNAL_H
#define EOMC_EMIT_INTERNAL_H

#include <stddef.h>
#include <stdio.h>
#include "emit/emit_c.h"
#include "emit/emit_kinematics.h"
#include "front/check.h"
#include "sym/ir.h"
#include "sym/symbolic.h"

#ifndef EOMC_VERSION
#define EOMC_VERSION "unknown"
#endif

/* A printed expression larger than this many nodes gets its subexpressions
** hoisted into temporaries, so no single statement becomes enormous.  With
** --no-cse the limit is far higher: a hoisted node is shared by all its
** users, which is the very sharing --no-cse is there to leave out. */
#define MAX_INLINE_NODES 400
#define MAX_INLINE_NODES_NO_CSE 200000
/* Integer powers up to this are written as products; larger ones call pow. */
#define MAX_POW_PRODUCT 8

enum { PREC_LOW, PREC_ADD, PREC_MUL, PREC_UNARY, PREC_ATOM };

#define VAR_BIT(v) (1u << (unsigned)(v))
#define VARS_STATE (VAR_BIT(IRV_T) | VAR_BIT(IRV_Q) | VAR_BIT(IRV_QD) | VAR_BIT(IRV_U) | VAR_BIT(IRV_P))

/* ------------------------------------------------------------------ buffers */

typedef struct Buf {
  char *s;
  size_t len, cap;
} Buf;

void buf_put(Buf *b, const char *s);
void buf_printf(Buf *b, const char *fmt, ...) DIAG_PRINTF(2, 3);

/* ------------------------------------------------------------------ state */

typedef struct Emitter {
  const Model *m;
  const EomSystem *s;
  const IrGraph *g;
  const char *P;         /* the prefix */
  const char *hash;
  int no_cse;
  FILE *out;
  int failed;
  char err[256];

  /* Per generated function. */
  int *uses;             /* uses of each node inside the function */
  int *tempno;           /* temporary number, or -1 when printed inline */
  int *size;             /* nodes of the inline expression of each node */
  int *roots;            /* the function's roots */
  int nroots, roots_cap;
  unsigned vars;         /* VAR_BIT of every variable kind the roots read */
  unsigned missing;      /* ... that the function's signature does not pass */
  unsigned fixed;        /* ... of those, mentioned but shown not to matter: zero locals */
  int ntemps;

  /* The LDLᵀ pattern: slot[i*nq + j] (j <= i) is the index in the packed
  ** factor array, or -1 for a structural zero of L. */
  int *slot;
  int nslots;
} Emitter;

int emit_is_zero(const Emitter *E, int n);

/* ------------------------------------------------------------------ literals */

void put_c_string(FILE *out, const char *s);
void put_comment_text(FILE *out, const char *s);
void format_number(Emitter *E, double v, char *buf, size_t len);

/* ------------------------------------------------------------------ one function's temporaries */

/* fn_reset, then add the function's roots, then fn_analyse: afterwards
** E->uses, E->tempno and E->vars describe the function's body. */
void fn_reset(Emitter *E);
void add_root(Emitter *E, int n);
void add_roots(Emitter *E, const int *r, int n);
void add_lower(Emitter *E, const int *mat);
void fn_analyse(Emitter *E);

/* ------------------------------------------------------------------ expressions */

/* Print node n into b, parenthesized when its precedence is below minprec
** (magnitude: print |n| and let the caller write the sign). */
void put_at(Emitter *E, Buf *b, int n, int minprec, int magnitude);
/* Does node n print as a negated magnitude? */
int prints_negative(const Emitter *E, int n);
void emit_assign(Emitter *E, const char *lhs, int n);
void emit_temps(Emitter *E);

/* ------------------------------------------------------------------ function frames */

typedef struct Param {
  int var;               /* the IrVar an input parameter carries; -1 for outputs */
  const char *decl;      /* e.g. "const double *q" */
  const char *name;
} Param;

#define NPARAMS(a) ((int)(sizeof(a) / sizeof((a)[0])))

extern const Param PARAM_T, PARAM_Q, PARAM_QD, PARAM_U, PARAM_P;

void emit_unused(Emitter *E, const Param *ps, int nps);
void emit_signature(Emitter *E, const char *ret, const char *fname, const Param *ps, int nps,
                    int proto);
int needs_missing(const Emitter *E, unsigned allowed);
int resolve_missing(Emitter *E, unsigned allowed);
void emit_fixed_locals(Emitter *E);
void emit_nan_body(Emitter *E, const Param *ps, int nps, const char *what, const char *fill,
                   const char *also);

/* ------------------------------------------------------------------ LDLᵀ (emit_ldl.c) */

void ldl_pattern(Emitter *E);
void emit_ldl_factor(Emitter *E);
void emit_ldl_solve(Emitter *E);
void emit_mass_slots(Emitter *E);

/* ------------------------------------------------------------------ functions (emit_dynamics.c) */

void emit_mass(Emitter *E);
void emit_forcing(Emitter *E);
void emit_accel(Emitter *E);
void emit_rhs(Emitter *E);
void emit_jacobian(Emitter *E);
void emit_inverse(Emitter *E);
void emit_energy(Emitter *E);
void emit_outputs(Emitter *E);
void emit_switches(Emitter *E);
void emit_function_outs(Emitter *E, const char *fname, unsigned args, const EmitOut *outs,
                        int nouts);
void emit_plain_function(Emitter *E, const char *fname, unsigned args, const char *out,
                         const int *roots, int n);

/* ------------------------------------------------------------------ constraints (emit_constrained.c) */

void emit_constraint(Emitter *E);
void emit_constraint_jacobian(Emitter *E);
void emit_constraint_at(Emitter *E);
void emit_constraint_gamma(Emitter *E);
void emit_stops(Emitter *E);
void emit_velocity_constraint(Emitter *E);
void emit_accel_constrained(Emitter *E);

/* ------------------------------------------------------------------ header and descriptor */

void emit_banner(Emitter *E, const char *what);
void unit_annotation_text(Buf *b, const Expr *u);
void emit_header(Emitter *E);
void emit_defaults(Emitter *E);
void emit_descriptor(Emitter *E);

#endif
