/*
** emit_control.h — the generated functions for controllers, identification
** and accuracy monitors: the Coriolis matrix and gravity vector (where the
** split M qdd + C qd + g = Q exists), the momenta, the energy function and
** the table of constants of the motion in the descriptor.
**
** emit_c.c calls the four entry points below at fixed places of P.h and
** P.c; emit_control.c writes each function body through emit_plain_function,
** the one piece of emit_c.c's machinery it needs.
*/
#ifndef EOMC_EMIT_CONTROL_H
#define EOMC_EMIT_CONTROL_H

#include <stdio.h>
#include "front/check.h"
#include "sym/symbolic.h"

struct Emitter;

/* Bits of the arguments a generated function takes, in this order. */
enum {
  EMIT_ARG_T = 1 << 0, EMIT_ARG_Q = 1 << 1, EMIT_ARG_QD = 1 << 2,
  EMIT_ARG_QDD = 1 << 3, EMIT_ARG_U = 1 << 4, EMIT_ARG_P = 1 << 5
};

/* emit_c.c: `void P_fname(args..., double *out)` writing out[k] = roots[k].
** A root reading an argument the function lacks makes it write NaN (t and
** u are first checked numerically: a mention without dependence is fine). */
void emit_plain_function(struct Emitter *E, const char *fname, unsigned args,
                         const char *out, const int *roots, int n);

/* One output array of a generated function: out[i] = roots[i], or NaN
** where roots[i] < 0 (an entry that has no value, e.g. the Jacobian row
** of an output that depends on rates). */
typedef struct EmitOut {
  const char *name;
  const int *roots;
  int n;
} EmitOut;

/* emit_c.c: `void P_fname(args..., double *out1, ...)` for up to 4 outputs. */
void emit_function_outs(struct Emitter *E, const char *fname, unsigned args,
                        const EmitOut *outs, int nouts);

/* P.h: macros and prototypes. */
void emit_control_prototypes(FILE *o, const Model *m, const EomSystem *s, const char *P);
/* P.c: the function bodies. */
void emit_control_functions(struct Emitter *E, FILE *o, const EomSystem *s);
/* P.c, inside the descriptor block, before `const struct eom_model`: tables. */
void emit_control_tables(FILE *o, const EomSystem *s, const char *P);
/* P.c: the descriptor's fields after the constraint functions (each line
** starts with ",\n"-free text; the caller has written the comma). */
void emit_control_fields(FILE *o, const EomSystem *s, const char *P);

#endif
