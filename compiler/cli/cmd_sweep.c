/*
** cmd_sweep.c — `eomc sweep`: many simulations of one model over a grid of
** values and random samples (eom_sweep in libeomrt, on every core), one CSV
** row per run, a summary of the outputs on stderr and optionally the spread
** over time as a plot.  Under an MPI launcher the runs are split over the
** processes and rank 0 writes every row, in run order (sweep_mpi.h).
**
** Usage errors (a name that is not a parameter, input or coordinate, LO >
** HI, N < 1, SD < 0, ...) are found before any run starts.  A run that
** fails is reported in its row and never stops the others; the exit status
** is then 3.
*/
#include <errno.h>
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>
#include <fcntl.h>

#include "cli/build_model.h"
#include "cli/cmd.h"
#include "cli/plot.h"
#include "cli/run_values.h"
#include "cli/sweep_mpi.h"
#include "cli/sweep_plot.h"
#include "cli/sweep_table.h"
#include "eom/sweep.h"

/* Trace times kept per run for --plot. */
#define PLOT_TRACE_POINTS 101

static const char sweep_usage[] =
  "usage: eomc sweep MODEL.eom [OPTIONS]\n"
  "\n"
  "Simulate the model many times over a grid of values and/or random samples,\n"
  "in parallel, and write one CSV row per run: run (from 0), the values used,\n"
  "the final state and outputs (final(NAME)), the time reached t, min(NAME) and\n"
  "max(NAME) of every coordinate and output, dE (T + V at the end minus at the\n"
  "start) and status (ok, or the failure).  A summary of the runs follows on\n"
  "standard output when the table goes to a file (-o), else on standard error\n"
  "(standard output is the table then).  NAME is a parameter, a constant\n"
  "input, a coordinate (its initial value) or a coordinate followed by ' (its\n"
  "initial rate).\n"
  "\n"
  "options:\n"
  "  --vary NAME=LO:HI:N      N equally spaced values from LO to HI (repeatable;\n"
  "                           the axes multiply, the first varying slowest)\n"
  "  --random NAME=normal(MU,SD)  or  NAME=uniform(LO,HI)\n"
  "                           a random value per run (repeatable)\n"
  "  --runs N                 runs per grid point (default 1), each with fresh\n"
  "                           random values\n"
  "  --seed S                 seed of the random values (default 1); a run's\n"
  "                           values depend only on the seed and its number\n"
  "  --until T                end time of every run (default 10)\n"
  "  --every DT               time between the samples min/max are taken from\n"
  "                           (default T/1000); also the fixed-step methods' step\n"
  "  --method NAME            rk4, dopri (default), radau5 or midpoint\n"
  "  --rtol R, --atol A       tolerances of dopri and radau5\n"
  "  --set NAME=VALUE         a value every run starts from (repeatable); VALUE:\n"
  "                           numbers, pi and parameters, with an optional unit\n"
  "                           converted to the declared one: 30[deg], 2.5[kN/m]\n"
  "  --threads N              worker threads (default: one per core, shared\n"
  "                           among the MPI processes on a machine)\n"
  "  -o OUT.csv               write the CSV there (default: standard output)\n"
  "  --plot OUT.svg           percentile bands (5-95 %, 25-75 %, median) of every\n"
  "                           coordinate and output over time (gnuplot)\n"
  "\n"
  "Across machines: mpirun -n K eomc sweep ... (when eomc was built with MPI);\n"
  "the rows are the same whatever K and the number of threads.\n"
  "exit status: 0 every run ok, 1 model error, 2 usage error, 3 a run failed\n"
  "or the output could not be written\n";

typedef struct SweepArgs {
  const char *model, *method, *out, *plot;
  double until, every, rtol, atol;
  long runs, threads;
  uint64_t seed;
  char **sets;
  int nsets;
  char **specs;      /* the --vary and --random arguments, in order */
  int *spec_random;  /* 1: --random */
  int nspecs;
} SweepArgs;

static int quiet; /* ranks other than 0 print no usage errors */

static int usage_error(const char *fmt, const char *arg) {
  if (quiet) return EXIT_USAGE;
  fputs("eomc sweep: ", stderr);
  fprintf(stderr, fmt, arg);
  fputs(" (try 'eomc sweep --help')\n", stderr);
  return EXIT_USAGE;
}

static const char *option_value(int argc, char **argv, int *i, const char *name) {
  size_t n = strlen(name);
  if (strncmp(argv[*i], name, n) != 0) return NULL;
  if (argv[*i][n] == '=') return argv[*i] + n + 1;
  if (argv[*i][n] != '\0') return NULL;
  if (*i + 1 >= argc) return "";
  return argv[++*i];
}

/* A whole decimal integer >= min; 0 or -1. */
static int parse_count(const char *s, long min, long *out) {
  char *end;
  errno = 0;
  long v = strtol(s, &end, 10);
  if (end == s || *end || errno || v < min) return -1;
  *out = v;
  return 0;
}

static void args_free(SweepArgs *a) {
  free(a->sets), free(a->specs), free(a->spec_random);
}

static int parse_args(int argc, char **argv, SweepArgs *a) {
  memset(a, 0, sizeof *a);
  a->method = "dopri", a->until = 10, a->runs = 1, a->seed = 1;
  a->sets = calloc((size_t)argc + 1, sizeof(char *));
  a->specs = calloc((size_t)argc + 1, sizeof(char *));
  a->spec_random = calloc((size_t)argc + 1, sizeof(int));
  if (!a->sets || !a->specs || !a->spec_random) return usage_error("%s", "out of memory");
  for (int i = 1; i < argc; i++) {
    const char *v, *arg = argv[i];
    double *num = NULL;
    long *count = NULL;
    if ((v = option_value(argc, argv, &i, "--until"))) num = &a->until;
    else if ((v = option_value(argc, argv, &i, "--every"))) num = &a->every;
    else if ((v = option_value(argc, argv, &i, "--rtol"))) num = &a->rtol;
    else if ((v = option_value(argc, argv, &i, "--atol"))) num = &a->atol;
    else if ((v = option_value(argc, argv, &i, "--runs"))) count = &a->runs;
    else if ((v = option_value(argc, argv, &i, "--threads"))) count = &a->threads;
    else if ((v = option_value(argc, argv, &i, "--method"))) a->method = v;
    else if ((v = option_value(argc, argv, &i, "--set"))) a->sets[a->nsets++] = (char *)v;
    else if ((v = option_value(argc, argv, &i, "--vary"))) a->specs[a->nspecs++] = (char *)v;
    else if ((v = option_value(argc, argv, &i, "--random"))) {
      a->spec_random[a->nspecs] = 1;
      a->specs[a->nspecs++] = (char *)v;
    } else if ((v = option_value(argc, argv, &i, "--seed"))) {
      char *end;
      errno = 0;
      unsigned long long s = strtoull(v, &end, 10);
      if (!*v || *end || errno || v[0] == '-')
        return usage_error("'--seed' needs a whole number >= 0 (got '%s')", v);
      a->seed = (uint64_t)s;
      continue;
    } else if ((v = option_value(argc, argv, &i, "--plot"))) a->plot = v;
    else if ((v = option_value(argc, argv, &i, "-o"))) a->out = v;
    else if (arg[0] == '-' && arg[1] != '\0') return usage_error("unknown option '%s'", arg);
    else if (a->model) return usage_error("more than one model file ('%s')", arg);
    else {
      a->model = arg;
      continue;
    }
    if (!*v) return usage_error("option '%s' needs a value", arg);
    if (num && (parse_number(v, num) != 0 || !(*num > 0)))
      return usage_error("'%s' needs a positive number", arg);
    if (count && parse_count(v, 1, count) != 0)
      return usage_error("'%s' needs a whole number >= 1", arg);
  }
  if (!a->model) return usage_error("%s", "no model file given");
  if (!eom_method_known(a->method)) {
    if (!quiet)
      fprintf(stderr, "eomc sweep: unknown method '%s' (methods: %s)\n", a->method,
              eom_method_list());
    return EXIT_USAGE;
  }
  if (a->every == 0) a->every = a->until / 1000;
  if (a->every > a->until) return usage_error("%s", "--every is longer than --until");
  return 0;
}

/* ------------------------------------------------------ the variables */

/* NAME (with ' for a rate) as a sweep target of m; 0 or -1. */
static int resolve_name(const struct eom_model *m, const char *name, size_t len,
                        struct eom_sweep_var *v) {
  int rate = len > 0 && name[len - 1] == '\'';
  size_t base = rate ? len - 1 : len;
#define SAME(s) (strlen(s) == base && strncmp((s), name, base) == 0)
  for (int i = 0; i < m->nq; i++)
    if (SAME(m->coord_names[i])) return v->target = rate ? EOM_SWEEP_RATE : EOM_SWEEP_COORD,
                                        v->index = i, 0;
  if (rate) return -1;
  for (int i = 0; i < m->np; i++)
    if (SAME(m->param_names[i])) return v->target = EOM_SWEEP_PARAM, v->index = i, 0;
  for (int i = 0; i < m->nu; i++)
    if (SAME(m->input_names[i])) return v->target = EOM_SWEEP_INPUT, v->index = i, 0;
#undef SAME
  return -1;
}

/* "A,B)" or "A:B:N": numbers split at sep; the last one ends at `end`. */
static int split_numbers(const char *s, char sep, int count, double *out, const char *end) {
  char buf[256];
  size_t n = strlen(s);
  if (n >= sizeof buf) return -1;
  memcpy(buf, s, n + 1);
  if (end) {
    size_t e = strlen(end);
    if (n < e || strcmp(buf + n - e, end) != 0) return -1;
    buf[n - e] = '\0';
  }
  char *p = buf;
  for (int k = 0; k < count; k++) {
    char *q = k + 1 < count ? strchr(p, sep) : p + strlen(p);
    if (!q) return -1;
    *q = '\0';
    if (parse_number(p, &out[k]) != 0) return -1;
    p = q + 1;
  }
  return 0;
}

/* The value part of one --vary (grid) or --random spec; 0 or a usage error. */
static int parse_distribution(const char *spec, const char *rhs, int random,
                              struct eom_sweep_var *v) {
  double num[3];
  if (!random) {
    v->dist = EOM_SWEEP_GRID;
    const char *last = strrchr(rhs, ':');
    if (!last || split_numbers(rhs, ':', 2, num, last) != 0)
      return usage_error("--vary '%s' is not NAME=LO:HI:N", spec);
    if (parse_count(last + 1, 1, &v->n) != 0)
      return usage_error("--vary '%s': N must be a whole number >= 1", spec);
    v->a = num[0], v->b = num[1];
    if (v->a > v->b) return usage_error("--vary '%s': LO is greater than HI", spec);
    return 0;
  }
  if (strncmp(rhs, "normal(", 7) == 0 && split_numbers(rhs + 7, ',', 2, num, ")") == 0) {
    v->dist = EOM_SWEEP_NORMAL, v->a = num[0], v->b = num[1];
    if (v->b < 0) return usage_error("--random '%s': the standard deviation is negative", spec);
    return 0;
  }
  if (strncmp(rhs, "uniform(", 8) == 0 && split_numbers(rhs + 8, ',', 2, num, ")") == 0) {
    v->dist = EOM_SWEEP_UNIFORM, v->a = num[0], v->b = num[1];
    if (v->a > v->b) return usage_error("--random '%s': LO is greater than HI", spec);
    return 0;
  }
  return usage_error("--random '%s' is not NAME=normal(MU,SD) or NAME=uniform(LO,HI)", spec);
}

/* Every --vary/--random spec as a variable of m, with its name; 0 or a
** usage error. */
static int build_vars(const SweepArgs *a, const struct eom_model *m, struct eom_sweep_var *vars,
                      char **names) {
  for (int k = 0; k < a->nspecs; k++) {
    const char *spec = a->specs[k], *eq = strchr(spec, '=');
    if (!eq || eq == spec)
      return usage_error("'%s' does not start with NAME=", spec);
    size_t len = (size_t)(eq - spec);
    names[k] = strndup(spec, len);
    if (!names[k]) return usage_error("%s", "out of memory");
    if (resolve_name(m, spec, len, &vars[k]) != 0) {
      if (!quiet)
        fprintf(stderr, "eomc sweep: '%s' is not a parameter, input or coordinate of %s "
                        "(try 'eomc check %s')\n", names[k], m->name, a->model);
      return EXIT_USAGE;
    }
    for (int j = 0; j < k; j++)
      if (strcmp(names[j], names[k]) == 0)
        return usage_error("'%s' is varied twice", names[k]);
    int rc = parse_distribution(spec, eq + 1, a->spec_random[k], &vars[k]);
    if (rc) return rc;
  }
  return 0;
}

/* ------------------------------------------------------------ the runs */

/* Where finished runs go: straight into the table (one process), or packed
** for rank 0 (MPI). */
typedef struct Collect {
  SweepTable *table;
  const struct eom_model *m;
  int nvars, trace_points;
  int pack;                  /* 1: pack records into buf */
  unsigned char *buf;
  size_t len, cap, rec;
  int oom;
  /* progress bar (rank 0 on a terminal) */
  int tty;
  double started, last_draw;
  int drawn;
} Collect;

static double now_seconds(void) {
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static void on_run(void *ctx, const struct eom_sweep_run *r) {
  Collect *c = ctx;
  if (!c->pack) {
    sweep_table_add(c->table, r);
    return;
  }
  if (c->oom) return;
  if (c->len + c->rec > c->cap) {
    size_t cap = c->cap ? 2 * c->cap : 64 * c->rec;
    unsigned char *grown = realloc(c->buf, cap);
    if (!grown) {
      c->oom = 1;
      return;
    }
    c->buf = grown, c->cap = cap;
  }
  sweep_record_pack(c->m, c->nvars, c->trace_points, r, c->buf + c->len);
  c->len += c->rec;
}

/* Runs done, runs/s and time left, redrawn at most ten times a second. */
static void on_progress(void *ctx, long done, long total) {
  Collect *c = ctx;
  if (!c->tty) return;
  double now = now_seconds();
  if (done < total && (now - c->started < 0.5 || now - c->last_draw < 0.1)) return;
  c->last_draw = now;
  double rate = done / fmax(now - c->started, 1e-9);
  int width = 30, filled = (int)(width * (double)done / (double)total);
  char bar[64];
  for (int i = 0; i < width; i++) bar[i] = i < filled ? '=' : ' ';
  bar[width] = '\0';
  fprintf(stderr, "\r[%s] %ld/%ld runs  %.1f runs/s  %.0f s left   ", bar, done, total, rate,
          (double)(total - done) / fmax(rate, 1e-9));
  c->drawn = 1;
}

/* Rank 0: every rank's records, in run order, into the table. */
static int merge_records(const SweepComm *comm, Collect *c, long count) {
  unsigned char *all;
  size_t *lens;
  if (sweep_comm_gather(comm, c->buf, c->len, &all, &lens) != 0) return -1;
  if (comm->rank != 0) return 0;
  int rc = 0;
  size_t *offset = calloc((size_t)comm->size, sizeof(size_t));
  double *storage = malloc(c->rec + sizeof(double));
  if (!offset || !storage) rc = -1;
  for (int k = 1; !rc && k < comm->size; k++) offset[k] = offset[k - 1] + lens[k - 1];
  for (long run = 0; !rc && run < count; run++) {
    int k = (int)(run % comm->size);
    size_t at = offset[k] + (size_t)(run / comm->size) * c->rec;
    if (at + c->rec > offset[k] + lens[k]) {
      rc = -1; /* a rank sent fewer runs than it had */
      break;
    }
    struct eom_sweep_run r;
    sweep_record_unpack(c->m, c->nvars, c->trace_points, all + at, storage, &r);
    if (r.run != run) {
      rc = -1;
      break;
    }
    sweep_table_add(c->table, &r);
  }
  free(offset), free(storage), free(all), free(lens);
  return rc;
}

/* ------------------------------------------------------------ the command */

/* Open the CSV: a temporary beside `out` (renamed at the end), the file
** itself when it is not a regular one (/dev/null, a pipe), or stdout. */
static FILE *open_csv(const char *out, char **tmp_path) {
  struct stat st;
  *tmp_path = NULL;
  if (!out) return stdout;
  if (stat(out, &st) == 0 && !S_ISREG(st.st_mode)) return fopen(out, "w");
  size_t len = strlen(out) + 32;
  if (!(*tmp_path = malloc(len))) return NULL;
  snprintf(*tmp_path, len, "%s.tmp.%ld", out, (long)getpid());
  return fopen(*tmp_path, "w");
}

/* Rank 0 builds (and caches) the model first, so the other ranks find it
** built and print none of its warnings again. */
static int load_model(const SweepComm *comm, const char *path, BuiltModel *bm) {
  int rc = 0;
  memset(bm, 0, sizeof *bm);
  if (comm->rank == 0) rc = build_model_without_attitudes(path, "sweep", bm);
  rc = sweep_comm_max(comm, rc);
  if (rc != 0 || comm->rank == 0) return rc;
  int saved = dup(STDERR_FILENO), null = open("/dev/null", O_WRONLY);
  if (saved >= 0 && null >= 0) dup2(null, STDERR_FILENO);
  rc = build_model_without_attitudes(path, "sweep", bm);
  if (saved >= 0 && null >= 0) dup2(saved, STDERR_FILENO);
  if (saved >= 0) close(saved);
  if (null >= 0) close(null);
  return rc;
}

/* Everything a sweep needs besides the model, set up by prepare(). */
typedef struct Sweep {
  SweepArgs a;
  RunValues rv;
  struct eom_sweep_var *vars;
  char **names;
  struct eom_sweep_options o;
  long count;
} Sweep;

static int prepare(Sweep *s, const struct eom_model *m, const SweepComm *comm) {
  char err[1024];
  SweepArgs *a = &s->a;
  if (run_values_init(&s->rv, m) != 0) return usage_error("%s", "out of memory");
  for (int i = 0; i < a->nsets; i++)
    if (run_values_assign(&s->rv, m, a->sets[i], RV_PARAMS | RV_INPUTS | RV_COORDS | RV_RATES,
                          err, sizeof err) != 0)
      return usage_error("--set %s", err);
  s->vars = calloc((size_t)a->nspecs + 1, sizeof *s->vars);
  s->names = calloc((size_t)a->nspecs + 1, sizeof *s->names);
  if (!s->vars || !s->names) return usage_error("%s", "out of memory");
  int rc = build_vars(a, m, s->vars, s->names);
  if (rc) return rc;
  struct eom_sweep_options *o = &s->o;
  eom_sweep_options_init(o);
  o->sim.method = a->method;
  o->sim.t0 = 0, o->sim.t_end = a->until;
  o->sim.sample_dt = a->every;
  o->sim.step = strcmp(a->method, "dopri") == 0 ? 0 : a->every;
  if (a->rtol > 0) o->sim.rtol = a->rtol;
  if (a->atol > 0) o->sim.atol = a->atol;
  o->vars = s->vars, o->nvars = a->nspecs;
  o->draws = a->runs, o->seed = a->seed;
  o->first = comm->rank, o->stride = comm->size;
  int cores = (int)sysconf(_SC_NPROCESSORS_ONLN);
  o->threads = a->threads > 0 ? (int)a->threads
                              : (cores > comm->local_size ? cores / comm->local_size : 1);
  o->trace_points = a->plot ? PLOT_TRACE_POINTS : 0;
  s->count = eom_sweep_count(o);
  if (s->count < 0) return usage_error("%s", "the sweep has too many runs");
  return 0;
}

static void sweep_free(Sweep *s) {
  for (int k = 0; s->names && k < s->a.nspecs; k++) free(s->names[k]);
  free(s->names), free(s->vars);
  run_values_free(&s->rv);
  args_free(&s->a);
}

/* Run the sweep (every rank) and write the table (rank 0); exit status. */
static int run_and_write(Sweep *s, const struct eom_model *m, const SweepComm *comm) {
  SweepArgs *a = &s->a;
  SweepTable table;
  Collect c;
  char *tmp = NULL, err[1024];
  FILE *csv = NULL;
  int rc = 0;
  memset(&table, 0, sizeof table);
  memset(&c, 0, sizeof c);
  if (comm->rank == 0) {
    csv = open_csv(a->out, &tmp);
    if (!csv) {
      fprintf(stderr, "eomc sweep: error: cannot write %s: %s\n", tmp ? tmp : a->out,
              strerror(errno));
      rc = EXIT_RUN;
    } else if (sweep_table_init(&table, m, a->nspecs, (const char *const *)s->names, csv,
                                s->o.trace_points) != 0) {
      rc = EXIT_RUN;
    }
  }
  if ((rc = sweep_comm_max(comm, rc)) != 0) goto out;
  if (comm->rank == 0) sweep_table_header(&table);
  c.table = &table, c.m = m, c.nvars = a->nspecs, c.trace_points = s->o.trace_points;
  c.pack = comm->size > 1;
  c.rec = sweep_record_size(m, a->nspecs, s->o.trace_points);
  c.tty = comm->rank == 0 && isatty(STDERR_FILENO);
  c.started = c.last_draw = now_seconds();
  s->o.progress = on_progress;
  int st = eom_sweep(m, s->rv.p, s->rv.p_set, s->rv.x, s->rv.u, &s->o, on_run, &c);
  if (c.drawn) fprintf(stderr, "\r%*s\r", 79, "");
  int bad = st != EOM_OK || c.oom;
  if (c.pack && sweep_comm_max(comm, bad) == 0 && merge_records(comm, &c, s->count) != 0) bad = 1;
  if ((rc = sweep_comm_max(comm, bad ? EXIT_RUN : 0)) != 0) {
    if (comm->rank == 0) fprintf(stderr, "eomc sweep: error: the sweep failed: %s\n",
                                 st != EOM_OK ? eom_status_text((eom_status)st) : "out of memory");
    goto out;
  }
  if (comm->rank != 0) goto out;
  int write_failed = table.write_failed || fflush(csv) != 0 || ferror(csv);
  if (csv != stdout) write_failed |= fclose(csv) != 0;
  csv = NULL;
  if (write_failed || (tmp && rename(tmp, a->out) != 0)) {
    fprintf(stderr, "eomc sweep: error: writing %s failed\n", a->out ? a->out : "the CSV");
    rc = EXIT_RUN;
    goto out;
  }
  /* The summary is the command's answer when the table went to a file;
  ** with the table on stdout it keeps out of it, on stderr. */
  if (a->out) {
    sweep_table_summary(&table, stdout);
    if (fflush(stdout) != 0 || ferror(stdout)) {
      fprintf(stderr, "eomc sweep: error: writing the summary to standard output failed\n");
      rc = EXIT_RUN;
    }
  } else {
    fputs("eomc sweep: ", stderr);
    sweep_table_summary(&table, stderr);
  }
  if (table.failed) rc = EXIT_RUN;
  if (a->plot && sweep_bands_svg(&table, 0, a->until, a->plot, err, sizeof err) != 0) {
    fprintf(stderr, "eomc sweep: error: %s\n", err);
    rc = EXIT_RUN;
  }
out:
  if (csv && csv != stdout) fclose(csv);
  if (tmp) {
    if (rc != 0 && access(tmp, F_OK) == 0) unlink(tmp);
    free(tmp);
  }
  free(c.buf);
  if (comm->rank == 0) sweep_table_free(&table);
  return rc;
}

int cmd_sweep(int argc, char **argv) {
  Sweep s;
  BuiltModel bm;
  SweepComm comm;
  char err[1024];
  for (int i = 1; i < argc; i++)
    if (cmd_is_help(argv[i])) {
      fputs(sweep_usage, stdout);
      return 0;
    }
  memset(&s, 0, sizeof s);
  memset(&bm, 0, sizeof bm);
  sweep_comm_init(&comm, NULL, NULL);
  quiet = comm.rank != 0;
  int rc = parse_args(argc, argv, &s.a);
  if (!rc && s.a.plot && plot_available(err, sizeof err) != 0) {
    if (!quiet) fprintf(stderr, "eomc sweep: error: %s\n", err);
    rc = EXIT_RUN;
  }
  if (!rc) rc = load_model(&comm, s.a.model, &bm);
  if (!rc) rc = prepare(&s, bm.model, &comm);
  rc = sweep_comm_max(&comm, rc);
  if (!rc) rc = run_and_write(&s, bm.model, &comm);
  rc = sweep_comm_max(&comm, rc);
  if (bm.model) built_model_close(&bm);
  sweep_free(&s);
  sweep_comm_finish(&comm);
  return rc;
}
