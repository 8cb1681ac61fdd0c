/*
** emit_show.h — the equations of motion as readable text or LaTeX (`eomc show`).
**
** Prints M, f and the equations M q'' = f from the shared IrGraph, with the
** model's names for coordinates, parameters and inputs, q' and q'' for rates
** (\dot q, \ddot q in LaTeX), infix with minimal parentheses.  Subexpressions
** that are large and repeated are named once ($1, $2, ...: names no model
** can declare) and listed first.  With constraints: M q'' = f + G^T lambda
** with the constraint forces written out, phi = 0 (A q' = b), what each
** multiplier is (its constraint, line and unit) and G q'' = gamma.
** Output is deterministic.
*/
#ifndef EOMC_EMIT_SHOW_H
#define EOMC_EMIT_SHOW_H

#include <stdio.h>
#include "front/check.h"
#include "sym/symbolic.h"

/* Write the equations of `s` (derived from `m`) to out.  Returns 0, or -1
** when writing failed. */
int show_equations(const Model *m, const EomSystem *s, int latex, FILE *out);

#endif
