/*
** no_equilibrium.h — explain a missing static equilibrium (unconstrained
** models): the coordinates whose force cannot vanish, and the steady
** acceleration where they enter only through their rates.
*/
#ifndef EOMC_NO_EQUILIBRIUM_H
#define EOMC_NO_EQUILIBRIUM_H
#include <stddef.h>
#include "eom/model.h"

/* Write one line per finding into buf (each ending in '\n'): first
** "NAME: why; NAME: why", then an optional "note: ..." line.  q is where
** Newton's method stopped; inputs u (may not be NULL) at t = 0.  Returns 0,
** or -1 when out of memory (buf says so). */
int explain_no_equilibrium(const struct eom_model *m, const double *p, const double *u,
                           const double *q, char *buf, size_t cap);
#endif
