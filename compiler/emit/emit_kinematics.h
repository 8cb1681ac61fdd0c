/*
** emit_kinematics.h — the generated functions of the outputs' kinematics:
** output Jacobians and biases, and one function per `frame` (position,
** rotation, geometric Jacobian, bias), with their descriptor entries.
**
** emit_c.c calls these at fixed places of P.h and P.c, like emit_control.h.
*/
#ifndef EOMC_EMIT_KINEMATICS_H
#define EOMC_EMIT_KINEMATICS_H

#include <stdio.h>
#include "emit/emit_control.h"
#include "front/check.h"
#include "sym/symbolic.h"

/* P.h: macros and prototypes (nothing when the model has neither). */
void emit_kinematics_prototypes(FILE *o, const Model *m, const EomSystem *s, const char *P);
/* P.c: the function bodies. */
void emit_kinematics_functions(struct Emitter *E, const Model *m, const EomSystem *s);
/* P.c, inside the descriptor block: tables. */
void emit_kinematics_tables(FILE *o, const Model *m, const EomSystem *s, const char *P);
/* P.c: the descriptor's fields of ABI 4. */
void emit_kinematics_fields(FILE *o, const EomSystem *s, const char *P);

#endif
