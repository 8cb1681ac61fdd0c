/*
** sweep_table.h — the results of `eomc sweep`: one CSV row per run, the
** summary statistics after the table, the traces kept for the plot, and
** the fixed-size byte records a run travels in between MPI ranks.
**
** Columns: run, the values used (one per --vary/--random NAME), the final
** state and outputs (final(q)..., final(q')..., final(y)...), the time reached t, min(NAME) and
** max(NAME) of every coordinate and output over the samples, dE (T + V at
** the end minus at the start) and status ("ok" or the failure, quoted).
*/
#ifndef EOMC_SWEEP_TABLE_H
#define EOMC_SWEEP_TABLE_H

#include <stdio.h>
#include "eom/sweep.h"

/* Mean, spread and extremes of one quantity over the runs. */
typedef struct SweepStat {
  long n;
  double mean, m2;       /* Welford's running mean and sum of squares */
  double lo, hi;         /* extremes of the final value */
  long lo_run, hi_run;
  double env_lo, env_hi; /* lowest min(), highest max() over the runs */
  long env_lo_run, env_hi_run;
} SweepStat;

typedef struct SweepTable {
  const struct eom_model *m;
  int nvars;
  const char *const *var_names;
  FILE *out;
  int write_failed;
  long rows, failed;
  long first_failed;     /* run number of the first failure, -1 when none */
  SweepStat *stats;      /* nq coordinates, nq rates, ny outputs, dE */
  int trace_points;      /* > 1: traces kept for the plot */
  double *traces;        /* rows x trace_points x (nq + ny) */
  size_t traces_cap;     /* in runs */
} SweepTable;

/* 0, or -1 when out of memory. */
int sweep_table_init(SweepTable *t, const struct eom_model *m, int nvars,
                     const char *const *var_names, FILE *out, int trace_points);
void sweep_table_free(SweepTable *t);
void sweep_table_header(SweepTable *t);
/* One run's row (runs must come in run order) into the CSV, the
** statistics and the traces. */
void sweep_table_add(SweepTable *t, const struct eom_sweep_run *r);
/* The statistics, a table of one line per quantity. */
void sweep_table_summary(const SweepTable *t, FILE *f);

/* ----------------------------------------------------- MPI records */
size_t sweep_record_size(const struct eom_model *m, int nvars, int trace_points);
void sweep_record_pack(const struct eom_model *m, int nvars, int trace_points,
                       const struct eom_sweep_run *r, unsigned char *dst);
/* A record unpacked: r points into storage (sweep_record_size bytes, from
** malloc, so suitably aligned). */
void sweep_record_unpack(const struct eom_model *m, int nvars, int trace_points,
                         const unsigned char *src, double *storage, struct eom_sweep_run *r);

#endif
