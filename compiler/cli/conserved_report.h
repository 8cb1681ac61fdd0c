/*
** conserved_report.h — the lines `eomc check` and `eomc show` print about a
** derived model's structure: whether the split M qdd + C qd + g = Q - dD/dqd
** exists (and why not), which quantities are constants of the motion, and
** which combinations of the `identify` parameters are identifiable.
*/
#ifndef EOMC_CONSERVED_REPORT_H
#define EOMC_CONSERVED_REPORT_H

#include <stdio.h>
#include "front/check.h"
#include "sym/symbolic.h"

void report_structure(const Model *m, const EomSystem *s, FILE *out);
/* With `identify`: the base parameters and the unidentifiable parameters
** (base_params.h), each line after `prefix`; nothing without. */
void report_identifiability(const Model *m, const EomSystem *s, const char *prefix, FILE *out);

#endif
