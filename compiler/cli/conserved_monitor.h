/*
** conserved_monitor.h — watch the constants of the motion during `eomc sim`.
**
** The descriptor says which quantities the model conserves (momenta of
** cyclic coordinates, the energy function); the monitor evaluates them at
** every sample and reports the first and last value and the largest drift
** from the first: an accuracy figure of the integration run.
*/
#ifndef EOMC_CONSERVED_MONITOR_H
#define EOMC_CONSERVED_MONITOR_H

#include <stdio.h>
#include "eom/model.h"

typedef struct ConservedMonitor {
  const struct eom_model *m;
  int n;              /* quantities watched */
  int *coord;         /* per quantity: the cyclic coordinate, or -1 for h */
  double *first, *last, *max_drift;
  double *pm;         /* nq scratch */
  long samples;
} ConservedMonitor;

/* Returns 0, or -1 when out of memory. */
int cmon_init(ConservedMonitor *c, const struct eom_model *m);
void cmon_sample(ConservedMonitor *c, const double *x, const double *p);
/* One line per quantity on out, each starting with `prefix`. */
void cmon_report(const ConservedMonitor *c, const char *prefix, FILE *out);
void cmon_free(ConservedMonitor *c);

#endif
