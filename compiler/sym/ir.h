/*
** ir.h — the expression DAG handed from the symbolic core to the C emitter.
**
** The symbolic core (C++, GiNaC) derives every quantity the generated code
** needs, then hash-conses all of them into one IrGraph: each distinct
** subexpression is one node, so a repeated subexpression is shared.  Nodes are
** in dependency order (args[i] < own index) and the numbering is
** deterministic (it never depends on GiNaC's hash order or on addresses).
** The emitter decides per generated function which shared nodes become
** temporaries.
*/
#ifndef EOMC_IR_H
#define EOMC_IR_H

#include "front/builtins.h"

#ifdef __cplusplus
extern "C" {
#endif

/* The arrays a generated function reads. */
typedef enum IrVar {
  IRV_T,      /* time (index 0) */
  IRV_Q,      /* q[index] */
  IRV_QD,     /* qd[index] */
  IRV_QDD,    /* qdd[index] (inverse dynamics only) */
  IRV_U,      /* u[index] */
  IRV_P       /* p[index] */
} IrVar;

typedef enum IrOp {
  IR_NUM,     /* num */
  IR_VAR,     /* var, index */
  IR_ADD,     /* sum of args (n >= 2) */
  IR_MUL,     /* product of args (n >= 2) */
  IR_NEG,     /* -args[0] */
  IR_DIV,     /* args[0] / args[1] */
  IR_POW,     /* args[0] ^ args[1]; args[1] is often an IR_NUM */
  IR_CALL     /* fn(args...) */
} IrOp;

/* A call's function: the scalar built-ins of front/builtins.h, in its
** order (sign is also abs's derivative). */
typedef enum IrFn {
#define IR_FN_ID(ID, NAME, ARITY, UNIT, CFORM, TEX, VALUE) IRF_##ID = BF_##ID,
  EOM_SCALAR_BUILTINS(IR_FN_ID)
#undef IR_FN_ID
} IrFn;

typedef struct IrNode {
  IrOp op;
  IrFn fn;        /* IR_CALL */
  IrVar var;      /* IR_VAR */
  int index;      /* IR_VAR */
  double num;     /* IR_NUM */
  int nargs;      /* IR_CALL: the function's arity (at most 3) */
  int *args;      /* node indices, all smaller than this node's */
} IrNode;

typedef struct IrGraph {
  IrNode *nodes;
  int nnodes;
} IrGraph;

/* Name of a function in the model language, e.g. "sin". */
const char *ir_fn_name(IrFn fn);

/* Evaluate nodes 0..hi of g in order into v[0..hi]; vars[IrVar] points to
** each variable array (time at vars[IRV_T][0]).  Used for numeric checks at
** compile time (rank tests, independence of t or u), never in generated code. */
void ir_eval(const IrGraph *g, int hi, const double *const vars[6], double *v);

#ifdef __cplusplus
}
#endif
#endif
