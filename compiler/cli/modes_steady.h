/*
** modes_steady.h — the steady-motion side of `eomc modes`: --rate,
** --sweep-rate and --plot (see steady.h for the analysis).
*/
#ifndef EOMC_MODES_STEADY_H
#define EOMC_MODES_STEADY_H

#include "eom/model.h"
#include "cli/run_values.h"

typedef struct SteadyOptions {
  char **rates;        /* "NAME=VALUE" */
  int nrates;
  const char *sweep;   /* "NAME=LO:HI:N" or NULL */
  const char *plot;    /* SVG path or NULL (needs sweep) */
  int json;
} SteadyOptions;

/* Run the analysis on a loaded model; returns an exit status (cmd.h). */
int modes_steady(const struct eom_model *m, RunValues *rv, const SteadyOptions *o);

#endif
