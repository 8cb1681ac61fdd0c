/*
** eom/sweep.h — ensembles: many simulations of one model over a grid of
** values and/or random samples, run in parallel on POSIX threads.
**
** A sweep varies some of the run's numbers (parameters, constant inputs,
** initial coordinates and rates).  Grid axes multiply; every grid point is
** run `draws` times with fresh random samples of the random variables.  Run
** numbers count from 0; run r is grid point r / draws (the first axis
** varies slowest, the last fastest) and draw r % draws.  A random value
** depends only on (seed, run number, variable), never on which thread or
** process computes it, so the same sweep gives the same numbers whatever
** the parallelism.
**
**   struct eom_sweep_var v[2] = {
**     {EOM_SWEEP_PARAM, 0, EOM_SWEEP_GRID, 0.5, 2.0, 4},     (p[0] over 4 values)
**     {EOM_SWEEP_COORD, 0, EOM_SWEEP_NORMAL, 0.1, 0.01, 0},  (q0[0] ~ N(0.1, 0.01^2))
**   };
**   struct eom_sweep_options o;
**   eom_sweep_options_init(&o);
**   o.vars = v; o.nvars = 2; o.draws = 100; o.sim.t_end = 5;
**   eom_sweep(&P_model, NULL, NULL, NULL, NULL, &o, on_run, ctx);
**
** on_run gets one struct eom_sweep_run per run, in run order, one call at a
** time (never two at once), so it may write a file without locking.
*/
#ifndef EOM_SWEEP_H
#define EOM_SWEEP_H

#include <stdint.h>
#include "runtime.h"

#ifdef __cplusplus
extern "C" {
#endif

/* What a variable sets. */
enum eom_sweep_target {
  EOM_SWEEP_PARAM,  /* p[index]; params whose default reads it follow it */
  EOM_SWEEP_INPUT,  /* constant input u[index] */
  EOM_SWEEP_COORD,  /* initial value of coordinate q[index] */
  EOM_SWEEP_RATE    /* initial rate q'[index] */
};

/* How its values are chosen. */
enum eom_sweep_dist {
  EOM_SWEEP_GRID,    /* a, b, n: n equally spaced values from a to b (a if n == 1) */
  EOM_SWEEP_NORMAL,  /* a, b: normal with mean a, standard deviation b */
  EOM_SWEEP_UNIFORM  /* a, b: uniform on [a, b) */
};

struct eom_sweep_var {
  int target;       /* enum eom_sweep_target */
  int index;        /* into p, u or q */
  int dist;         /* enum eom_sweep_dist */
  double a, b;
  long n;           /* grid points (EOM_SWEEP_GRID only) */
};

struct eom_sweep_options {
  struct eom_sim_options sim;  /* every run's integration (sim.sample_dt:
                                  how often min/max are taken; 0: span/1000) */
  const struct eom_sweep_var *vars;
  int nvars;
  long draws;          /* runs per grid point (default 1) */
  uint64_t seed;       /* of the random variables (default 1) */
  int threads;         /* worker threads; 0: one per online CPU */
  long first, stride;  /* run only first, first + stride, ... (default 0, 1):
                          lets several processes share one sweep */
  int trace_points;    /* > 1: record q and the outputs at this many equally
                          spaced times from t0 to t_end (run.trace) */
  /* Called after each finished run with the runs done so far and the total
  ** this call will do; serialized like on_run.  May be NULL. */
  void (*progress)(void *ctx, long done, long total);
};

/* One finished run.  Arrays belong to the sweep; copy what you keep. */
struct eom_sweep_run {
  long run;                 /* run number */
  const double *values;     /* nvars: the values used */
  const double *x;          /* 2nq: final state [q; q'] (last good one on failure) */
  const double *y;          /* ny: the outputs there */
  double t;                 /* time reached */
  const double *qmin, *qmax;  /* nq: extremes of the coordinates over the samples */
  const double *ymin, *ymax;  /* ny: extremes of the outputs over the samples */
  double energy_change;     /* T + V at the end minus at the start */
  eom_status status;        /* EOM_OK or the failure */
  const char *message;      /* "" on success; else what eom_simulate reported */
  const double *trace;      /* trace_points x (nq + ny), row by row; NaN after a
                               failure; NULL when trace_points < 2 */
  long events;              /* switches located and dry-friction sticks and
                               slips (eom_report's events) */
};

typedef void (*eom_sweep_run_fn)(void *ctx, const struct eom_sweep_run *run);

void eom_sweep_options_init(struct eom_sweep_options *o);

/* Number of runs the sweep has: product of the grid sizes times draws;
** -1 when the options are invalid (see eom_sweep). */
long eom_sweep_count(const struct eom_sweep_options *o);

/* Value of variable k in run `run` (same as eom_sweep uses). */
double eom_sweep_value(const struct eom_sweep_options *o, long run, int k);

/* The same splitmix64 hash the random draws use: a uniform double in
** (0, 1) from (seed, run, stream). */
double eom_sweep_uniform(uint64_t seed, long run, uint64_t stream);

/* Run the sweep.  p (np), x0 (2nq), u (nu): the values the variables change
** (NULL: the model's defaults, zero inputs); p_given (np flags or NULL):
** params fixed by the caller that derived defaults must not overwrite.
** Every run's result goes to on_run in run order.  A failing run is
** reported in its struct and never stops the others.  Returns EOM_OK,
** EOM_EINVAL (bad options: a grid with n < 1 or a > b, a normal with
** b < 0, a uniform with a > b, an index out of range, draws < 1) or
** EOM_ENOMEM. */
int eom_sweep(const struct eom_model *m, const double *p, const int *p_given, const double *x0,
              const double *u, const struct eom_sweep_options *o, eom_sweep_run_fn on_run,
              void *ctx);

#ifdef __cplusplus
}
#endif
#endif
