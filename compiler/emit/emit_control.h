/*
** emit_control.h — the generated functions for controllers, identification
** and accuracy monitors: the Coriolis matrix and gravity vector (where the
** split M qdd + C qd + g = Q exists), the momenta, the energy function and
** the table of constants of the motion in the descriptor.
**
** The C back end calls the four entry points below at fixed places of P.h and
** P.c.  This file only says which functions P.c gets (emit_control_functions
** lists them); emit_dynamics.c writes their bodies, so nothing here calls back up.
*/
#ifndef EOMC_EMIT_CONTROL_H
#define EOMC_EMIT_CONTROL_H

#include <stdio.h>
#include "front/check.h"
#include "sym/symbolic.h"

/* Bits of the arguments a generated function takes, in this order. */
enum {
  EMIT_ARG_T = 1 << 0, EMIT_ARG_Q = 1 << 1, EMIT_ARG_QD = 1 << 2,
  EMIT_ARG_QDD = 1 << 3, EMIT_ARG_U = 1 << 4, EMIT_ARG_P = 1 << 5
};

/* A function `void P_fname(args..., double *out)` writing out[k] = roots[k]
** for k < n.  emit_dynamics.c writes it; a root reading an argument the function
** lacks makes it write NaN (t and u are first checked numerically: a mention
** without dependence is fine). */
typedef struct PlainFunction {
  const char *fname;  /* name after the prefix */
  unsigned args;      /* EMIT_ARG_* bits */
  const char *out;    /* name of the output array */
  const int *roots;   /* n roots of the system's graph */
  int n;
} PlainFunction;

enum { EMIT_CONTROL_MAX_FUNCTIONS = 6 };

/* P.h: macros and prototypes. */
void emit_control_prototypes(FILE *o, const Model *m, const EomSystem *s, const char *P);
/* P.c: the functions to write, in order, into fns; returns how many. */
int emit_control_functions(const EomSystem *s, PlainFunction fns[EMIT_CONTROL_MAX_FUNCTIONS]);
/* P.c, inside the descriptor block, before `const struct eom_model`: tables. */
void emit_control_tables(FILE *o, const EomSystem *s, const char *P);
/* P.c: the descriptor's fields after the constraint functions (each line
** starts with ",\n"-free text; the caller has written the comma). */
void emit_control_fields(FILE *o, const EomSystem *s, const char *P);

#endif
