/*
** emit_kinematics.h — the generated functions of the outputs' kinematics:
** output Jacobians and biases, and one function per `frame` (position,
** rotation, geometric Jacobian, bias), with their descriptor entries.
**
** The C back end calls these at fixed places of P.h and P.c, like emit_control.h;
** nothing here calls back into the writers.
*/
#ifndef EOMC_EMIT_KINEMATICS_H
#define EOMC_EMIT_KINEMATICS_H

#include <stdio.h>
#include "emit/emit_control.h"
#include "front/check.h"
#include "sym/symbolic.h"

/* P.h: macros and prototypes (nothing when the model has neither). */
void emit_kinematics_prototypes(FILE *o, const Model *m, const EomSystem *s, const char *P);
/* One output array of a generated function: out[i] = roots[i], or NaN
** where roots[i] < 0 (an entry without a value, e.g. the Jacobian row of
** an output that depends on rates). */
typedef struct EmitOut {
  const char *name;
  const int *roots;
  int n;
} EmitOut;

/* `void P_fname(args..., double *out1, ...)`: up to four output arrays. */
typedef struct KinematicFunction {
  char *fname;        /* name after the prefix (malloc'd) */
  unsigned args;      /* EMIT_ARG_* bits */
  EmitOut outs[4];
  int nouts;
} KinematicFunction;

/* P.c: the functions to write, in order (malloc'd into *fns, freed with
** emit_kinematics_free); returns how many.  emit_dynamics.c writes the bodies. */
int emit_kinematics_functions(const Model *m, const EomSystem *s, KinematicFunction **fns);
void emit_kinematics_free(KinematicFunction *fns, int n);
/* P.c, inside the descriptor block: tables. */
void emit_kinematics_tables(FILE *o, const Model *m, const EomSystem *s, const char *P);
/* P.c: the descriptor's fields of ABI 4. */
void emit_kinematics_fields(FILE *o, const EomSystem *s, const char *P);

#endif
