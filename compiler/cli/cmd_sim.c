/*
** cmd_sim.c — `eomc sim`: build the model, integrate it with libeomrt, write
** the samples (t, coordinates, rates, outputs, inputs, multipliers, T, V,
** or the --columns chosen) as CSV or HDF5 (run_sink.c) and optionally plot
** them (plot_run.c).
**
** The summary line on stderr gives the steps, the final time, the energy
** change and the action, the time integral of L = T - V over the run, by
** Simpson's rule on the samples.  An integration failure keeps every row
** written so far (the file is still renamed into place) and exits 3; a run
** stopped by SIGINT or SIGTERM keeps nothing, says where it stopped and
** exits 128 + the signal's number.
*/
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "cli/build_model.h"
#include "cli/cmd.h"
#include "cli/conserved_monitor.h"
#include "eom/runtime.h"
#include "cli/interrupt.h"
#include "cli/plot.h"
#include "cli/plot_run.h"
#include "cli/run_columns.h"
#include "cli/run_sink.h"
#include "cli/run_values.h"

static const char sim_usage[] =
  "usage: eomc sim MODEL.eom [OPTIONS]\n"
  "\n"
  "Build the model (generated C, compiled and cached), integrate it and write\n"
  "a CSV with columns t, the coordinates, their rates (name'), the outputs, the\n"
  "inputs, the multipliers lambda1.. (models with constraints), T, V.\n"
  "\n"
  "options:\n"
  "  --until T          end time (default 10); the run starts at t = 0\n"
  "  --every DT         a row every DT of model time, whatever the method\n"
  "                     (default T/1000, or H when --step H is longer)\n"
  "  --step H           the fixed-step methods' step (default DT): steps of\n"
  "                     exactly H, rows between steps interpolated; radau5's\n"
  "                     first trial step\n"
  "  --method NAME      the integration method, one of\n";
/* The methods' lines come from the runtime's table (print_sim_usage). */
static const char sim_usage_tail[] =
  "  --rtol R, --atol A tolerances of dopri and radau5, and the Newton\n"
  "                     tolerances of the implicit methods (defaults 1e-8, 1e-10)\n"
  "  --set NAME=VALUE   a parameter, a constant input, a coordinate's initial\n"
  "                     value, or NAME'=VALUE for its initial rate (repeatable;\n"
  "                     params whose default reads the ones set follow them).\n"
  "                     VALUE: numbers, pi and parameters, with an optional unit\n"
  "                     converted to the declared one: 30[deg], 2.5[kN/m], L/2\n"
  "  --inputs FILE.csv  inputs over time: header `t,INPUT,...`, rows of numbers,\n"
  "                     interpolated linearly (its columns override --set)\n"
  "  -o OUT.csv         write the CSV there (default: standard output)\n"
  "  -o OUT.h5          write HDF5 instead: dataset 'rows' (rows x columns) with\n"
  "                     the attributes columns, units, model, parameters,\n"
  "                     eomc_version (.hdf5 too)\n"
  "  --columns LIST     the columns written and plotted, comma-separated, named as\n"
  "                     in the CSV header (e.g. t,x,phi,T,V)\n"
  "  --plot OUT.svg     plot the columns with gnuplot, one panel per unit, and a\n"
  "                     phase portrait per coordinate; the format follows the\n"
  "                     name: .svg, .png or .pdf\n"
  "\n"
  "models with branch functions (min, max, sign, step, clamp, abs): dopri and\n"
  "radau5 locate each switch in time and restart there (rk4 and midpoint do not):\n"
  "  --events           log every located event on standard error\n"
  "  --no-events        step across the switches without locating them (and\n"
  "                     without dry friction sticking)\n"
  "\n"
  "models with constraints (lambda1.. are the multipliers; the\n"
  "generalized constraint force is +G^T lambda with G = dphi/dq):\n"
  "  --baumgarte A,B    Baumgarte gains in 1/s: G q'' = gamma - 2A phi' - B^2 phi\n"
  "                     (default 10,10; 0,0 turns the term off)\n"
  "  --no-projection    do not project q and q' back onto the constraints after\n"
  "                     each step\n"
  "  --no-initial-fix   start from the initial state as given (default: moved\n"
  "                     onto the constraints by Gauss-Newton first)\n"
  "  --constraint-tol E max|phi| the projections aim for (default 1e-12)\n"
  "  --hold NAME        the initial fix keeps coordinate NAME (and its rate) at\n"
  "                     its given value and moves the others (repeatable)\n"
  "  --constraint-solver auto|dense|sparse\n"
  "                     how G M^-1 G^T is factored: eigenvalues (dense) or a\n"
  "                     banded L D L^T over M's blocks (sparse); auto (the\n"
  "                     default) takes sparse from 8 constraint rows on\n"
  "\n"
  "Cache: $EOMC_CACHE_DIR, else $XDG_CACHE_HOME/eomc, else ~/.cache/eomc.\n"
  "Compiler: $CC (default cc).\n"
  "exit status: 0 success, 1 model error, 2 usage error, 3 run failure,\n"
  "128 + N stopped by signal N (SIGINT, SIGTERM: nothing is kept)\n";

static void print_sim_usage(FILE *out) {
  fputs(sim_usage, out);
  for (int i = 0; eom_method_name(i); i++)
    fprintf(out, "                       %-9s %s\n", eom_method_name(i), eom_method_help(i));
  fputs(sim_usage_tail, out);
}

typedef struct SimArgs {
  const char *model, *method, *out, *plot, *inputs, *columns;
  double until, step, every, rtol, atol;
  char **sets;
  int nsets;
  /* constraints */
  double alpha, beta, constraint_tol;
  int no_projection, no_initial_fix;
  int constraint_solver;  /* enum eom_constraint_solver */
  char **holds;   /* --hold NAME: coordinates the initial fix keeps */
  int nholds;
  int log_events, no_events;
} SimArgs;

/* "A,B": two numbers >= 0 separated by a comma; 0 or -1. */
static int parse_gains(const char *v, double *a, double *b) {
  char buf[128];
  const char *comma = strchr(v, ',');
  if (!comma || (size_t)(comma - v) >= sizeof buf) return -1;
  memcpy(buf, v, (size_t)(comma - v));
  buf[comma - v] = '\0';
  if (parse_number(buf, a) != 0 || parse_number(comma + 1, b) != 0) return -1;
  return *a >= 0 && *b >= 0 ? 0 : -1;
}

static int usage_error(const char *fmt, const char *arg) {
  fputs("eomc sim: ", stderr);
  fprintf(stderr, fmt, arg);
  fputs(" (try 'eomc sim --help')\n", stderr);
  return EXIT_USAGE;
}

/* Value of an option taking an argument: "--opt V" or "--opt=V". */
static const char *option_value(int argc, char **argv, int *i, const char *name) {
  size_t n = strlen(name);
  if (strncmp(argv[*i], name, n) != 0) return NULL;
  if (argv[*i][n] == '=') return argv[*i] + n + 1;
  if (argv[*i][n] != '\0') return NULL;
  if (*i + 1 >= argc) return "";
  return argv[++*i];
}

static int parse_args(int argc, char **argv, SimArgs *a) {
  memset(a, 0, sizeof *a);
  a->method = "dopri";
  a->until = 10;
  a->alpha = a->beta = -1; /* the runtime's defaults */
  a->sets = calloc((size_t)argc + 1, sizeof(char *));
  a->holds = calloc((size_t)argc + 1, sizeof(char *));
  if (!a->sets || !a->holds) return usage_error("%s", "out of memory");
  for (int i = 1; i < argc; i++) {
    const char *v;
    double *num = NULL;
    const char *arg = argv[i];
    if ((v = option_value(argc, argv, &i, "--until"))) num = &a->until;
    else if ((v = option_value(argc, argv, &i, "--step"))) num = &a->step;
    else if ((v = option_value(argc, argv, &i, "--every"))) num = &a->every;
    else if ((v = option_value(argc, argv, &i, "--rtol"))) num = &a->rtol;
    else if ((v = option_value(argc, argv, &i, "--atol"))) num = &a->atol;
    else if ((v = option_value(argc, argv, &i, "--method"))) a->method = v;
    else if ((v = option_value(argc, argv, &i, "--set"))) a->sets[a->nsets++] = (char *)v;
    else if ((v = option_value(argc, argv, &i, "--hold"))) a->holds[a->nholds++] = (char *)v;
    else if ((v = option_value(argc, argv, &i, "--inputs"))) a->inputs = v;
    else if ((v = option_value(argc, argv, &i, "--plot"))) a->plot = v;
    else if ((v = option_value(argc, argv, &i, "--columns"))) a->columns = v;
    else if ((v = option_value(argc, argv, &i, "-o"))) a->out = v;
    else if ((v = option_value(argc, argv, &i, "--constraint-tol"))) num = &a->constraint_tol;
    else if ((v = option_value(argc, argv, &i, "--constraint-solver"))) {
      static const char *const routes[] = {"auto", "dense", "sparse"};
      a->constraint_solver = -1;
      for (int k = 0; k < 3; k++)
        if (strcmp(v, routes[k]) == 0) a->constraint_solver = k;
      if (a->constraint_solver < 0)
        return usage_error("'--constraint-solver' is auto, dense or sparse (got '%s')", v);
      continue;
    }
    else if (strcmp(arg, "--events") == 0) {
      a->log_events = 1;
      continue;
    } else if (strcmp(arg, "--no-events") == 0) {
      a->no_events = 1;
      continue;
    } else if (strcmp(arg, "--no-projection") == 0) {
      a->no_projection = 1;
      continue;
    } else if (strcmp(arg, "--no-initial-fix") == 0) {
      a->no_initial_fix = 1;
      continue;
    } else if ((v = option_value(argc, argv, &i, "--baumgarte"))) {
      if (parse_gains(v, &a->alpha, &a->beta) != 0)
        return usage_error("'--baumgarte' needs two numbers >= 0, e.g. 10,10 (got '%s')", v);
      continue;
    }
    else if (arg[0] == '-' && arg[1] != '\0') return usage_error("unknown option '%s'", arg);
    else if (a->model) return usage_error("more than one model file ('%s')", arg);
    else {
      a->model = arg;
      continue;
    }
    if (!*v) return usage_error("option '%s' needs a value", arg);
    if (num) {
      if (parse_number(v, num) != 0 || !(*num > 0))
        return usage_error("'%s' needs a positive number", arg);
    }
  }
  if (!a->model) return usage_error("%s", "no model file given");
  if (!eom_method_known(a->method)) {
    fprintf(stderr, "eomc sim: unknown method '%s' (methods: %s)\n", a->method,
            eom_method_list());
    return EXIT_USAGE;
  }
  char err[512];
  if (a->plot && plot_format_check(a->plot, err, sizeof err) != 0)
    return usage_error("--plot: %s", err);
  if (run_sink_is_h5(a->out) && !h5_out_library())
    return usage_error("-o %s: this eomc was built without HDF5, so it cannot write .h5 files "
                       "(install libhdf5-dev and re-run configure)", a->out);
  if (a->step > a->until) return usage_error("%s", "--step is longer than --until");
  if (a->every > a->until) return usage_error("%s", "--every is longer than --until");
  /* About 1,000 rows unless asked; never more rows than steps by default. */
  if (a->every == 0) a->every = fmax(a->until / 1000, a->step);
  return 0;
}

/* ------------------------------------------------------------ the run */

typedef struct SimOut {
  const struct eom_model *m;
  const double *p;
  RunSink *sink;
  double *row;      /* eom_row_width(m) values of a sample */
  int write_failed;
  char write_error[256];
  int stopped_by;   /* the signal that stopped the run, or 0 */
  long rows;
  double E0, E, t_last;
  /* Action by Simpson's rule: pending samples (ta, La), (tb, Lb). */
  double action, ta, La, tb, Lb;
  int pending;
  /* Progress bar. */
  int tty;
  double t_end, started, last_draw;
  int drawn;
  ConservedMonitor *conserved;  /* constants of the motion, watched per sample */
  double *x_first;              /* nq + nv: the first row's state (after the initial fix) */
} SimOut;

static double now_seconds(void) {
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Fold the sample (t, L) into the action: Simpson over two equal intervals,
** the trapezoid where spacing changes. */
static void action_add(SimOut *s, double t, double L) {
  if (s->pending == 0) {
    s->ta = t, s->La = L, s->pending = 1;
  } else if (s->pending == 1) {
    s->tb = t, s->Lb = L, s->pending = 2;
  } else {
    double h1 = s->tb - s->ta, h2 = t - s->tb;
    if (fabs(h1 - h2) <= 1e-9 * fmax(h1, h2)) {
      s->action += (h1 + h2) / 6 * (s->La + 4 * s->Lb + L);
      s->ta = t, s->La = L, s->pending = 1;
    } else {
      s->action += h1 / 2 * (s->La + s->Lb);
      s->ta = s->tb, s->La = s->Lb;
      s->tb = t, s->Lb = L;
    }
  }
}

static double action_total(const SimOut *s) {
  return s->action + (s->pending == 2 ? (s->tb - s->ta) / 2 * (s->La + s->Lb) : 0.0);
}

static void progress(SimOut *s, double t) {
  if (!s->tty) return;
  double now = now_seconds();
  if (now - s->started < 1.0 || now - s->last_draw < 0.1) return;
  s->last_draw = now;
  int width = 40, done = (int)(width * t / s->t_end);
  char bar[64];
  for (int i = 0; i < width; i++) bar[i] = i < done ? '=' : ' ';
  bar[width] = '\0';
  fprintf(stderr, "\r[%s] %3d%%  t = %-12.6g", bar, (int)(100 * t / s->t_end), t);
  s->drawn = 1;
}

static int on_sample(void *ctx, double t, const double *x, const double *u) {
  SimOut *s = ctx;
  const struct eom_model *m = s->m;
  int width = eom_row_width(m);
  if ((s->stopped_by = interrupt_signal()) != 0) return 1;
  if (eom_row_eval(m, s->p, t, x, u, s->row) != 0) {
    snprintf(s->write_error, sizeof s->write_error, "out of memory");
    s->write_failed = 1;
    return 1;
  }
  if (run_sink_row(s->sink, s->row, s->write_error, sizeof s->write_error) != 0) {
    s->write_failed = 1;
    return 1;
  }
  double T = s->row[width - 2], V = s->row[width - 1];
  cmon_sample(s->conserved, x, s->p);
  if (s->rows == 0) s->E0 = T + V;
  if (s->rows == 0 && s->x_first) memcpy(s->x_first, x, (size_t)eom_state_size(m) * sizeof(double));
  s->E = T + V;
  s->rows++;
  s->t_last = t;
  action_add(s, t, T - V);
  progress(s, t);
  return 0;
}

/* The run's figures on stderr: method, steps, final time, energy change
** and the action. */
static void print_run_summary(const SimArgs *a, const struct eom_report *rep, const SimOut *so,
                              const char *lead) {
  double drift = so->E - so->E0;
  fprintf(stderr,
          "%s%s, %ld steps (%ld rejected), %ld evaluations, t = %.10g; "
          "energy T+V %.10g -> %.10g (change %.3g%s); action %.10g\n",
          lead, a->method, rep->steps, rep->rejected, rep->rhs_evals, rep->t, so->E0, so->E,
          so->E0 != 0 ? drift / fabs(so->E0) : drift, so->E0 != 0 ? " relative" : "",
          action_total(so));
  if (so->m->ns > 0)
    fprintf(stderr, "%s%ld events located at the model's %d switches%s\n", lead, rep->events,
            so->m->ns, a->no_events ? " (--no-events)" : "");
}

/* Flags of the --hold coordinates (nq ints), or NULL with a message when a
** name is not a coordinate or the model has no constraints. */
static int *hold_flags(const SimArgs *a, const struct eom_model *m) {
  int *hold = calloc((size_t)m->nq + 1, sizeof(int));
  if (!hold) return NULL;
  for (int h = 0; h < a->nholds; h++) {
    int found = -1;
    for (int i = 0; i < m->nq; i++)
      if (strcmp(m->coord_names[i], a->holds[h]) == 0) found = i;
    if (found < 0) {
      fprintf(stderr, "eomc sim: --hold %s: the model has no coordinate '%s'\n", a->holds[h],
              a->holds[h]);
      free(hold);
      return NULL;
    }
    hold[found] = 1;
  }
  if (a->nholds > 0 && m->nc + m->nvc == 0) {
    fprintf(stderr, "eomc sim: --hold %s: the model has no constraints, so no initial fix to "
            "hold it in\n", a->holds[0]);
    free(hold);
    return NULL;
  }
  return hold;
}

/* How far the initial fix moved each coordinate onto the constraints. */
static void print_fix_summary(const struct eom_model *m, const double *given, const double *first,
                              const int *hold) {
  fputs("eomc sim: initial fix onto the constraints:", stderr);
  for (int i = 0; i < m->nq; i++) {
    double d = first[i] - given[i];
    const char *u = m->coord_units[i];
    fprintf(stderr, "%s %s", i ? "," : "", m->coord_names[i]);
    if (hold[i]) fputs(" held", stderr);
    else if (d == 0) fputs(" unchanged", stderr);
    else fprintf(stderr, " moved by %.6g%s%s (to %.10g)", d, u[0] ? " " : "", u, first[i]);
  }
  fputc('\n', stderr);
}

/* The HDF5 attributes besides the columns: the model, the parameters used. */
static H5Meta run_meta(const struct eom_model *m, const double *p) {
  H5Meta meta;
  memset(&meta, 0, sizeof meta);
  meta.model = m->name;
  meta.version = EOMC_VERSION;
  meta.param_names = (const char *const *)m->param_names;
  meta.param_values = p;
  meta.np = m->np;
  return meta;
}

/* The plot of the rows written, from the sink's CSV. */
static int plot_rows(const SimArgs *a, const struct eom_model *m, const RunSink *sink) {
  char err[1024];
  PlotRun pr = {m, sink->cols, sink->ncols, sink->lo, sink->hi};
  if (plot_run(&pr, run_sink_plot_data(sink), a->plot, err, sizeof err) != 0) {
    fprintf(stderr, "eomc sim: error: %s\n", err);
    return EXIT_RUN;
  }
  return 0;
}

/* Where an interrupted run stopped, on stderr. */
static void report_interrupt(const SimArgs *a, const SimOut *so) {
  fprintf(stderr, "eomc sim: stopped by %s at t = %.10g after %ld rows", interrupt_name(so->stopped_by),
          so->t_last, so->rows);
  if (a->out) fprintf(stderr, "; %s not written (its temporary removed)", a->out);
  fputc('\n', stderr);
}

/* Integrate, writing rows into the sink; then the summary or the failure.
** Returns the exit status. */
static int run_and_report(const SimArgs *a, const struct eom_model *m, RunValues *rv,
                          eom_inputs *in, const int *hold, double *x_given, RunSink *sink,
                          ConservedMonitor *cmon) {
  struct eom_sim_options o;
  struct eom_report rep;
  SimOut so;
  char err[512];
  int rc = 0;
  memset(&so, 0, sizeof so);
  so.m = m;
  so.p = rv->p;
  so.sink = sink;
  so.conserved = cmon;
  so.tty = isatty(STDERR_FILENO);
  so.t_end = a->until;
  so.started = so.last_draw = now_seconds();
  so.x_first = x_given + eom_state_size(m);
  if (!(so.row = malloc((size_t)eom_row_width(m) * sizeof(double)))) {
    fprintf(stderr, "eomc sim: error: out of memory\n");
    return EXIT_RUN;
  }
  eom_sim_options_init(&o);
  o.method = a->method;
  o.t0 = 0;
  o.t_end = a->until;
  o.sample_dt = a->every;
  /* A step of its own is kept exactly; else steps land on the rows. */
  o.step = strcmp(a->method, "dopri") == 0 ? 0 : a->step > 0 ? a->step : a->every;
  o.keep_step = a->step > 0;
  if (a->rtol > 0) o.rtol = a->rtol;
  if (a->atol > 0) o.atol = a->atol;
  if (a->alpha >= 0) o.baumgarte_alpha = a->alpha, o.baumgarte_beta = a->beta;
  o.no_projection = a->no_projection;
  o.no_initial_fix = a->no_initial_fix;
  o.constraint_tol = a->constraint_tol;
  o.constraint_solver = a->constraint_solver;
  o.hold = hold;
  o.no_events = a->no_events;
  o.event_log = a->log_events ? stderr : NULL;
  if (m->ns > 0 && !a->no_events &&
      (strcmp(a->method, "rk4") == 0 || strcmp(a->method, "midpoint") == 0))
    fprintf(stderr,
            "eomc sim: note: %s does not locate the model's %d switches in time "
            "(dopri and radau5 do)\n", a->method, m->ns);

  int st = eom_simulate(m, rv->p, in, rv->x, &o, on_sample, &so, &rep);
  if (!so.stopped_by) so.stopped_by = interrupt_signal();
  free(so.row);
  if (so.drawn) fprintf(stderr, "\r%*s\r", 70, "");
  if (so.stopped_by) {
    run_sink_finish(sink, 0, err, sizeof err);
    report_interrupt(a, &so);
    return 128 + so.stopped_by;
  }
  if (so.write_failed) {
    run_sink_finish(sink, 0, err, sizeof err);
    fprintf(stderr, "eomc sim: error: %s\n", so.write_error);
    return EXIT_RUN;
  }
  /* The rows so far are kept even after a failure. */
  if (run_sink_finish(sink, 1, err, sizeof err) != 0) {
    fprintf(stderr, "eomc sim: error: %s\n", err);
    return EXIT_RUN;
  }
  if (m->nc + m->nvc > 0 && !a->no_initial_fix && so.rows > 0 && (st == EOM_OK || rep.steps > 0))
    print_fix_summary(m, x_given, so.x_first, hold);
  if (st == EOM_OK) {
    print_run_summary(a, &rep, &so, "eomc sim: ");
    cmon_report(cmon, "eomc sim: ", stderr);
  } else {
    /* The failure first; figures of the run up to it only as a note, and
    ** none when it failed before the first step. */
    fprintf(stderr, "eomc sim: error: integration failed %s\n",
            rep.message[0] ? rep.message : eom_status_text((eom_status)st));
    if (rep.steps > 0) print_run_summary(a, &rep, &so, "eomc sim: note: up to the failure: ");
    if (a->out) fprintf(stderr, "eomc sim: note: %ld rows up to t = %.10g kept in %s\n", so.rows,
                        so.t_last, a->out);
    rc = EXIT_RUN;
  }
  return rc;
}

/* The values of the run: --set, then --inputs.  0 or an exit status. */
static int apply_values(const SimArgs *a, const struct eom_model *m, RunValues *rv,
                        eom_inputs *in) {
  char err[1024];
  for (int i = 0; i < a->nsets; i++)
    if (run_values_assign(rv, m, a->sets[i], RV_PARAMS | RV_INPUTS | RV_COORDS | RV_RATES, err,
                          sizeof err) != 0) {
      fprintf(stderr, "eomc sim: --set %s\n", err);
      return EXIT_USAGE;
    }
  for (int j = 0; j < m->nu; j++) eom_inputs_set_constant(in, j, rv->u[j]);
  if (a->inputs &&
      eom_inputs_load_csv(in, a->inputs, (const char *const *)m->input_names, err, sizeof err) !=
          EOM_OK) {
    fprintf(stderr, "eomc sim: error: %s\n", err);
    return EXIT_USAGE;
  }
  return 0;
}

int cmd_sim(int argc, char **argv) {
  SimArgs a;
  BuiltModel bm;
  ConservedMonitor cmon;
  RunValues rv;
  RunSink sink;
  char err[1024];
  int rc, *cols = NULL, ncols = 0;
  for (int i = 1; i < argc; i++)
    if (cmd_is_help(argv[i])) {
      print_sim_usage(stdout);
      return 0;
    }
  if ((rc = parse_args(argc, argv, &a)) != 0) {
    free(a.sets);
    free(a.holds);
    return rc;
  }
  if (a.plot && plot_available(err, sizeof err) != 0) {
    fprintf(stderr, "eomc sim: error: %s\n", err);
    free(a.sets);
    free(a.holds);
    return EXIT_RUN;
  }
  if ((rc = build_model(a.model, &bm)) != 0) {
    free(a.sets);
    free(a.holds);
    return rc;
  }
  const struct eom_model *m = bm.model;
  eom_inputs *in = NULL;
  int *hold = NULL;
  double *x_given = NULL;
  memset(&cmon, 0, sizeof cmon);
  memset(&sink, 0, sizeof sink);
  if (run_values_init(&rv, m) != 0 || !(in = eom_inputs_new(m->nu)) || cmon_init(&cmon, m) != 0) {
    fprintf(stderr, "eomc sim: error: out of memory\n");
    rc = EXIT_RUN;
    goto out;
  }
  if ((rc = apply_values(&a, m, &rv, in)) != 0) goto out;
  if (a.columns ? run_columns_parse(m, a.columns, &cols, &ncols, err, sizeof err)
                : run_columns_all(m, &cols, &ncols)) {
    fprintf(stderr, "eomc sim: %s\n", a.columns ? err : "error: out of memory");
    rc = a.columns ? EXIT_USAGE : EXIT_RUN;
    goto out;
  }
  if (!(hold = hold_flags(&a, m))) {
    rc = EXIT_USAGE;
    goto out;
  }
  x_given = malloc(2 * (size_t)eom_state_size(m) * sizeof(double) + 1);
  if (!x_given) {
    fprintf(stderr, "eomc sim: error: out of memory\n");
    rc = EXIT_RUN;
    goto out;
  }
  memcpy(x_given, rv.x, (size_t)eom_state_size(m) * sizeof(double));
  H5Meta meta = run_meta(m, rv.p);
  /* From the first temporary on, a signal stops the run and removes it. */
  interrupt_watch();
  if (run_sink_open(&sink, m, cols, ncols, a.out, a.plot != NULL, &meta, err, sizeof err) != 0) {
    fprintf(stderr, "eomc sim: error: %s\n", err);
    rc = EXIT_RUN;
    goto out;
  }
  rc = run_and_report(&a, m, &rv, in, hold, x_given, &sink, &cmon);
  if (a.plot && rc < 128 && sink.rows > 0) {
    int prc = plot_rows(&a, m, &sink);
    if (rc == 0) rc = prc;
  }
out:
  run_sink_free(&sink);
  interrupt_unwatch();
  eom_inputs_free(in);
  cmon_free(&cmon);
  run_values_free(&rv);
  built_model_close(&bm);
  free(cols);
  free(hold);
  free(x_given);
  free(a.sets);
  free(a.holds);
  return rc;
}
