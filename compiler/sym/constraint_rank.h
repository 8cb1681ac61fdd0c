/*
** constraint_rank.h — find redundant or conflicting constraints before any
** code runs: a numeric rank test of G = dphi/dq at the model's initial state.
**
** Called by the symbolic core (sym_derive) once the constraint Jacobian is
** in the graph, so `eomc gen`, `show`, `sim` and `modes` all refuse a model
** whose constraint equations conflict where its simulation would start, and
** note the ones that are redundant (dependent but consistent).
*/
#ifndef EOMC_CONSTRAINT_RANK_H
#define EOMC_CONSTRAINT_RANK_H

#include "front/check.h"
#include "front/diag.h"
#include "sym/symbolic.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Evaluate G at t = 0, the model's initial q (first moved onto phi = 0
** by damped Gauss–Newton when it is only near it) and q', its parameters'
** defaults and zero inputs; report every constraint equation whose gradient
** is a combination of earlier ones at its line, naming the lines of the
** equations it depends on: a note when the constraints hold there
** (redundant), an error when they cannot (conflicting) (a zero gradient is only a warning:
** usually an initial state left far from the constraint).  Entries that are not finite
** there are left to the runtime (its Gauss–Newton start reports them).
** Returns the number of errors reported. */
int constraint_rank_check(const Model *m, const EomSystem *s, Diag *d);

#ifdef __cplusplus
}
#endif
#endif
