/*
** run_values.h — the numbers a run of a loaded model starts from: parameter
** values, initial state and constant inputs, with NAME=VALUE assignments
** from the command line applied (`--set`, `--at`).
**
** Syntax of an assignment: NAME=VALUE where NAME is a parameter, an input,
** a coordinate (its initial value) or a coordinate followed by ' (its
** initial rate, e.g. theta'=0.5).  VALUE is a constant expression with an
** optional unit, converted to the name's declared unit (cli/value_text.h):
** a=30[deg], k=2.5[kN/m], b=2*a.
*/
#ifndef EOMC_RUN_VALUES_H
#define EOMC_RUN_VALUES_H

#include <stddef.h>
#include "eom/model.h"

typedef struct RunValues {
  double *p;   /* np: defaults, then assignments (a param whose default
                  reads other params follows their assignments unless set) */
  double *x;   /* 2nq: [q0; qd0] from the model's `initial`, then assignments */
  double *u;   /* nu: 0, then assignments */
  int *u_set;  /* nu: 1 when an assignment gave the input */
  int *p_set;  /* np: 1 when an assignment gave the param */
} RunValues;

/* Which names an assignment may use. */
enum { RV_PARAMS = 1, RV_COORDS = 2, RV_RATES = 4, RV_INPUTS = 8 };

/* Start from the model's defaults.  0, or -1 when out of memory. */
int run_values_init(RunValues *v, const struct eom_model *m);
void run_values_free(RunValues *v);

/* Apply one assignment "NAME=VALUE" allowed by `kinds`.  0, or -1 with a
** message in err naming the problem (and the names allowed). */
int run_values_assign(RunValues *v, const struct eom_model *m, const char *assignment, int kinds,
                      char *err, size_t errlen);

/* Parse a whole finite number; 0 or -1. */
int parse_number(const char *s, double *out);

#endif
