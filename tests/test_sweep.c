/*
** test_sweep.c — ensembles: `eomc sweep` end to end on the models in
** tests/sweep (closed-form final states over a grid, the grid's order, the
** statistics of the random draws, rows identical whatever the thread
** count, failing runs, usage errors, the plot), and eom_sweep called from C
** on a hand-written model (run order, splitting a sweep between callers).
*/
#include <check.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#ifdef HAVE_CONFIG_H
#include "config.h"
#endif

#include "eom/sweep.h"
#include "handmodels.h"
#include "testutil.h"

static const double PI = 3.141592653589793238462643383279502884;
static char *cache_dir, *work_dir;

static void setup(void) {
  cache_dir = make_temp_dir();
  work_dir = make_temp_dir();
  setenv("EOMC_CACHE_DIR", cache_dir, 1);
}

static void teardown(void) {
  remove_tree(cache_dir);
  remove_tree(work_dir);
  free(cache_dir);
  free(work_dir);
}

static const char *model(const char *name) {
  static char buf[4096];
  snprintf(buf, sizeof buf, "%s/tests/sweep/%s", srcdir(), name);
  return buf;
}

static const char *work(const char *name) {
  static char buf[4][4096];
  static int next;
  char *b = buf[next++ % 4];
  snprintf(b, sizeof buf[0], "%s/%s", work_dir, name);
  return b;
}

/* Run `eomc sweep` with the arguments (NULL-terminated after the model). */
static RunResult sweep(const char *model_file, ...) {
  char *argv[64];
  int n = 0;
  va_list ap;
  argv[n++] = (char *)eomc();
  argv[n++] = "sweep";
  argv[n++] = (char *)model_file;
  va_start(ap, model_file);
  const char *a;
  while ((a = va_arg(ap, const char *)) != NULL && n < 63) argv[n++] = (char *)a;
  va_end(ap);
  argv[n] = NULL;
  return run_argv(argv);
}

/* ------------------------------------------------------------ CSV reading */

typedef struct Table {
  char *text;
  char **head;   /* column names */
  int ncols;
  double *v;     /* rows x ncols (the status column: 1 for ok, 0 otherwise) */
  char **status; /* per row, the raw status field */
  int nrows;
} Table;

static int split(char *line, char **fields, int max) {
  int n = 0;
  char *p = line;
  while (n < max) {
    fields[n++] = p;
    if (*p == '"') { /* quoted: the rest of the line is this field */
      break;
    }
    char *c = strchr(p, ',');
    if (!c) break;
    *c = '\0';
    p = c + 1;
  }
  return n;
}

static Table read_table(const char *path) {
  Table t;
  memset(&t, 0, sizeof t);
  t.text = read_file(path, NULL);
  ck_assert_msg(t.text != NULL, "cannot read %s", path);
  int lines = count_lines(t.text);
  char *save, *line = strtok_r(t.text, "\n", &save);
  ck_assert(line != NULL);
  t.head = calloc(256, sizeof(char *));
  t.ncols = split(line, t.head, 256);
  t.v = calloc((size_t)lines * (size_t)t.ncols + 1, sizeof(double));
  t.status = calloc((size_t)lines + 1, sizeof(char *));
  while ((line = strtok_r(NULL, "\n", &save)) != NULL) {
    char *f[256];
    int n = split(line, f, 256);
    ck_assert_msg(n == t.ncols, "row %d has %d fields, the header %d", t.nrows, n, t.ncols);
    for (int i = 0; i < n - 1; i++) t.v[t.nrows * t.ncols + i] = strtod(f[i], NULL);
    t.status[t.nrows] = f[n - 1];
    t.v[t.nrows * t.ncols + n - 1] = strcmp(f[n - 1], "ok") == 0;
    t.nrows++;
  }
  return t;
}

static int col(const Table *t, const char *name) {
  for (int i = 0; i < t->ncols; i++)
    if (strcmp(t->head[i], name) == 0) return i;
  ck_abort_msg("no column %s", name);
  return -1;
}

static double at(const Table *t, int row, const char *name) {
  return t->v[row * t->ncols + col(t, name)];
}

static void free_table(Table *t) {
  free(t->text), free(t->head), free(t->v), free(t->status);
}

/* ------------------------------------------------------------ closed form */

/* The undamped oscillator: x(t) = x0 cos(wt) + v0/w sin(wt),
** x'(t) = -x0 w sin(wt) + v0 cos(wt), w = sqrt(k/m) (from memory). */
START_TEST(grid_matches_closed_form) {
  const char *out = work("grid.csv");
  RunResult r = sweep(model("dock_buffer.eom"), "--vary", "m=10:50:3", "--vary", "k=1000:4000:4",
                      "--vary", "x'=-0.5:0.5:3", "--until", "0.7", "--rtol", "1e-12", "--atol",
                      "1e-14", "-o", out, NULL);
  ck_assert_msg(r.status == 0, "status %d: %.2000s", r.status, r.err);
  Table t = read_table(out);
  ck_assert_int_eq(t.nrows, 3 * 4 * 3);
  for (int row = 0; row < t.nrows; row++) {
    double m = at(&t, row, "m"), k = at(&t, row, "k"), v0 = at(&t, row, "x'"), x0 = 0.02;
    double w = sqrt(k / m), T = at(&t, row, "t");
    ck_assert_double_eq_tol(T, 0.7, 1e-12);
    double x = x0 * cos(w * T) + v0 / w * sin(w * T);
    double v = -x0 * w * sin(w * T) + v0 * cos(w * T);
    ck_assert_msg(fabs(at(&t, row, "final(x)") - x) < 1e-8, "row %d: x %.12g vs %.12g", row,
                  at(&t, row, "final(x)"), x);
    ck_assert_msg(fabs(at(&t, row, "final(x')") - v) < 1e-8, "row %d: x' %.12g vs %.12g", row,
                  at(&t, row, "final(x')"), v);
    ck_assert_double_eq_tol(at(&t, row, "final(spring_force)"), -k * x, 1e-8 * k);
    /* the amplitude bounds the samples; the sampled extremes come within
    ** one sample step of it */
    double amp = sqrt(x0 * x0 + v0 * v0 / (w * w));
    ck_assert(at(&t, row, "max(x)") <= amp + 1e-9 && at(&t, row, "min(x)") >= -amp - 1e-9);
    ck_assert(fabs(at(&t, row, "dE")) < 1e-8 * (0.5 * k * amp * amp));
    ck_assert_int_eq((int)at(&t, row, "status"), 1);
  }
  free_table(&t);
  run_free(&r);
}
END_TEST

/* The events column counts each run's located switches: the crate of
** return_slide.eom turns n times, where its turning points x0 - 2 i F/k
** (i = 1..n) first come within F/k of the rest point, and then sticks
** there (Den Hartog, Mechanical Vibrations, the section on Coulomb
** damping; from memory): n = ceil((k x0 / F - 1) / 2) events, the last
** of them a stick.  A smooth model's rows say 0. */
START_TEST(events_column_counts_switches) {
  const char *out = work("events.csv");
  RunResult r = sweep(model("return_slide.eom"), "--vary", "F=2:6:5", "--until", "3", "-o", out,
                      NULL);
  ck_assert_msg(r.status == 0, "status %d: %.2000s", r.status, r.err);
  Table t = read_table(out);
  ck_assert_int_eq(t.nrows, 5);
  ck_assert_str_eq(t.head[t.ncols - 2], "events");
  for (int row = 0; row < t.nrows; row++) {
    double F = at(&t, row, "F"), n = ceil((300 * 0.105 / F - 1) / 2);
    ck_assert_msg(at(&t, row, "events") == n, "F = %g: %g events, want %g", F,
                  at(&t, row, "events"), n);
    ck_assert_msg(fabs(fabs(at(&t, row, "final(x)")) - fabs(0.105 - 2 * n * F / 300)) < 1e-7,
                  "F = %g: x = %.10g", F, at(&t, row, "final(x)"));
  }
  free_table(&t);
  run_free(&r);
  r = sweep(model("dock_buffer.eom"), "--vary", "m=10:50:2", "--until", "0.1", "-o", out, NULL);
  ck_assert_msg(r.status == 0, "%.2000s", r.err);
  t = read_table(out);
  for (int row = 0; row < t.nrows; row++) ck_assert_double_eq(at(&t, row, "events"), 0);
  free_table(&t);
  run_free(&r);
}
END_TEST

/* Axes multiply with the first varying slowest; run numbers count from 0. */
START_TEST(grid_order) {
  const char *out = work("order.csv");
  RunResult r = sweep(model("dock_buffer.eom"), "--vary", "m=10:50:3", "--vary", "k=1000:4000:4",
                      "--runs", "2", "--until", "0.01", "-o", out, NULL);
  ck_assert_msg(r.status == 0, "%.2000s", r.err);
  Table t = read_table(out);
  ck_assert_int_eq(t.nrows, 24);
  ck_assert_str_eq(t.head[0], "run");
  ck_assert_str_eq(t.head[1], "m");
  ck_assert_str_eq(t.head[2], "k");
  ck_assert_str_eq(t.head[t.ncols - 1], "status");
  for (int row = 0; row < t.nrows; row++) {
    int g = row / 2;
    ck_assert_int_eq((int)at(&t, row, "run"), row);
    ck_assert_double_eq(at(&t, row, "m"), 10 + 20.0 * (g / 4));
    ck_assert_double_eq(at(&t, row, "k"), 1000 + 1000.0 * (g % 4));
  }
  free_table(&t);
  run_free(&r);
}
END_TEST

/* A pendulum over a grid of lengths at a small amplitude: theta(t) =
** theta0 cos(2 pi t / P) with P = 2 pi sqrt(L/g) (common practice); the
** amplitude lengthens the period by theta0^2/16 relative (from memory),
** which bounds the phase error allowed. */
START_TEST(pendulum_period_over_lengths) {
  const double theta0 = 0.01, g = 9.81, T = 3;
  const char *out = work("sign.csv");
  RunResult r = sweep(model("shop_sign.eom"), "--vary", "L=0.25:4:6", "--until", "3", "--rtol",
                      "1e-11", "--atol", "1e-13", "-o", out, NULL);
  ck_assert_msg(r.status == 0, "%.2000s", r.err);
  Table t = read_table(out);
  ck_assert_int_eq(t.nrows, 6);
  for (int row = 0; row < t.nrows; row++) {
    double L = at(&t, row, "L"), P = 2 * PI * sqrt(L / g);
    double expect = theta0 * cos(2 * PI * T / P);
    double phase_error = 2 * PI * T / P * theta0 * theta0 / 16;
    ck_assert_msg(fabs(at(&t, row, "final(theta)") - expect) < 2 * theta0 * phase_error + 1e-9,
                  "L = %g: theta %.10g vs %.10g", L, at(&t, row, "final(theta)"), expect);
    ck_assert_double_eq_tol(at(&t, row, "max(theta)"), theta0, 1e-12);
  }
  free_table(&t);
  run_free(&r);
}
END_TEST

/* ------------------------------------------------------------ statistics */

/* Sample mean and standard deviation of column c. */
static void moments(const Table *t, const char *name, double *mean, double *sd) {
  double s = 0, ss = 0;
  for (int i = 0; i < t->nrows; i++) s += at(t, i, name);
  *mean = s / t->nrows;
  for (int i = 0; i < t->nrows; i++) ss += pow(at(t, i, name) - *mean, 2);
  *sd = sqrt(ss / (t->nrows - 1));
}

/* 2000 draws: k ~ uniform(a, b) and c ~ normal(40, 5).  The checks allow 3
** standard errors (common practice).  Standard errors: of a mean sigma /
** sqrt(n); of a standard deviation sqrt((mu4 - sigma^4) / n) / (2 sigma)
** from the large-sample variance of s^2 (H. Cramér, "Mathematical Methods
** of Statistics", 1946, §27.4), which is sigma / sqrt(2 (n - 1)) for a
** normal (from memory).  For w = sqrt(k/m) with k uniform the raw moments
** are E[w^j] = (b^(j/2+1) - a^(j/2+1)) / ((j/2 + 1)(b - a) m^(j/2))
** (integrating k^(j/2) over [a, b]; from memory). */
static double wn_raw_moment(double a, double b, double m, int j) {
  double e = j / 2.0 + 1;
  return (pow(b, e) - pow(a, e)) / (e * (b - a) * pow(m, j / 2.0));
}

START_TEST(random_draws_follow_their_distributions) {
  const double a = 20000, b = 40000, m = 12;
  const int n = 2000;
  const char *out = work("random.csv");
  RunResult r = sweep(model("damped_mount.eom"), "--random", "k=uniform(20000,40000)",
                      "--random", "c=normal(40,5)", "--runs", "2000", "--until", "0.002",
                      "--seed", "2718", "-o", out, NULL);
  ck_assert_msg(r.status == 0, "%.2000s", r.err);
  Table t = read_table(out);
  ck_assert_int_eq(t.nrows, n);
  double mean, sd;
  /* k itself: uniform mean (a+b)/2, variance (b-a)^2/12, mu4 (b-a)^4/80 */
  moments(&t, "k", &mean, &sd);
  double sigma = (b - a) / sqrt(12), mu4 = pow(b - a, 4) / 80;
  ck_assert_msg(fabs(mean - (a + b) / 2) < 3 * sigma / sqrt(n), "k mean %g", mean);
  ck_assert_msg(fabs(sd - sigma) < 3 * sqrt((mu4 - pow(sigma, 4)) / n) / (2 * sigma), "k sd %g",
                sd);
  for (int i = 0; i < n; i++) ck_assert(at(&t, i, "k") >= a && at(&t, i, "k") < b);
  /* c: normal(40, 5) */
  moments(&t, "c", &mean, &sd);
  ck_assert_msg(fabs(mean - 40) < 3 * 5 / sqrt(n), "c mean %g", mean);
  ck_assert_msg(fabs(sd - 5) < 3 * 5 / sqrt(2.0 * (n - 1)), "c sd %g", sd);
  /* the natural frequency the model outputs, wn = sqrt(k/m) */
  double e1 = wn_raw_moment(a, b, m, 1), e2 = wn_raw_moment(a, b, m, 2);
  double e3 = wn_raw_moment(a, b, m, 3), e4 = wn_raw_moment(a, b, m, 4);
  double var = e2 - e1 * e1;
  double m4 = e4 - 4 * e1 * e3 + 6 * e1 * e1 * e2 - 3 * pow(e1, 4);
  moments(&t, "final(wn)", &mean, &sd);
  ck_assert_msg(fabs(mean - e1) < 3 * sqrt(var / n), "wn mean %g vs %g", mean, e1);
  ck_assert_msg(fabs(sd - sqrt(var)) < 3 * sqrt((m4 - var * var) / n) / (2 * sqrt(var)),
                "wn sd %g vs %g", sd, sqrt(var));
  free_table(&t);
  run_free(&r);
}
END_TEST

/* ------------------------------------------------------------ determinism */

START_TEST(same_rows_whatever_the_threads) {
  char *first = NULL;
  const char *threads[] = {"1", "2", "4"};
  for (int i = 0; i < 3; i++) {
    const char *out = work(i == 0 ? "t1.csv" : i == 1 ? "t2.csv" : "t4.csv");
    RunResult r = sweep(model("dock_buffer.eom"), "--vary", "k=1000:3000:5", "--random",
                        "m=normal(40,4)", "--random", "x=uniform(-0.05,0.05)", "--runs", "40",
                        "--until", "0.3", "--threads", threads[i], "-o", out, NULL);
    ck_assert_msg(r.status == 0, "%.2000s", r.err);
    char *text = read_file(out, NULL);
    ck_assert_int_eq(count_lines(text), 201);
    if (!first) first = text;
    else {
      ck_assert_msg(strcmp(first, text) == 0, "--threads %s differs from --threads 1", threads[i]);
      free(text);
    }
    run_free(&r);
  }
  /* another seed, other draws */
  const char *out = work("seed.csv");
  RunResult r = sweep(model("dock_buffer.eom"), "--vary", "k=1000:3000:5", "--random",
                      "m=normal(40,4)", "--random", "x=uniform(-0.05,0.05)", "--runs", "40",
                      "--until", "0.3", "--seed", "7", "-o", out, NULL);
  char *text = read_file(out, NULL);
  ck_assert(text && strcmp(first, text) != 0);
  free(text), free(first);
  run_free(&r);
}
END_TEST

/* The summary is the answer on stdout when the table goes to a file (-o);
** with the table on stdout, stdout is the table alone (header and one row
** per run) and the summary goes to stderr. */
START_TEST(summary_goes_where_the_table_does) {
  const char *out = work("summary.csv");
  RunResult r = sweep(model("dock_buffer.eom"), "--vary", "k=1000:3000:3", "--until", "0.1", "-o",
                      out, NULL);
  ck_assert_msg(r.status == 0, "%.2000s", r.err);
  ck_assert_msg(strncmp(r.out, "3 runs, 3 ok, 0 failed\n", 23) == 0, "%.2000s", r.out);
  ck_assert_msg(strstr(r.out, "quantity") != NULL, "%.2000s", r.out);
  ck_assert_msg(strstr(r.err, "runs, ") == NULL, "%.2000s", r.err);
  run_free(&r);
  r = sweep(model("dock_buffer.eom"), "--vary", "k=1000:3000:3", "--until", "0.1", NULL);
  ck_assert_msg(r.status == 0, "%.2000s", r.err);
  ck_assert_msg(strncmp(r.out, "run,", 4) == 0, "%.2000s", r.out);
  int lines = 0;
  for (const char *p = r.out; *p; p++) lines += *p == '\n';
  ck_assert_int_eq(lines, 4);
  ck_assert_msg(strstr(r.err, "eomc sweep: 3 runs, 3 ok, 0 failed") != NULL, "%.2000s", r.err);
  run_free(&r);
}
END_TEST

/* ------------------------------------------------------------ failures */

/* m = 0 makes M singular in run 0 only: it is reported in its row and the
** others finish; the exit status says a run failed. */
START_TEST(failing_run_in_its_row) {
  const char *out = work("fail.csv");
  RunResult r = sweep(model("dock_buffer.eom"), "--vary", "m=0:80:5", "--until", "0.2", "-o", out,
                      NULL);
  ck_assert_int_eq(r.status, 3);
  ck_assert_msg(strstr(r.out, "5 runs, 4 ok, 1 failed (the first: run 0)") != NULL, "%.2000s", r.out);
  Table t = read_table(out);
  ck_assert_int_eq(t.nrows, 5);
  ck_assert_msg(strncmp(t.status[0], "\"failed: ", 9) == 0, "%s", t.status[0]);
  ck_assert(strstr(t.status[0], "mass matrix") != NULL);
  for (int row = 1; row < 5; row++) {
    ck_assert_str_eq(t.status[row], "ok");
    ck_assert_double_eq_tol(at(&t, row, "t"), 0.2, 1e-12);
  }
  free_table(&t);
  run_free(&r);
}
END_TEST

START_TEST(usage_errors_before_any_run) {
  static const struct {
    const char *opt, *val, *says;
  } bad[] = {
    {"--vary", "mass=1:2:3", "'mass' is not a parameter, input or coordinate"},
    {"--vary", "m=2:1:3", "LO is greater than HI"},
    {"--vary", "m=1:2:0", "N must be a whole number >= 1"},
    {"--vary", "m=1:2", "is not NAME=LO:HI:N"},
    {"--random", "k=normal(1,-1)", "standard deviation is negative"},
    {"--random", "k=uniform(3,1)", "LO is greater than HI"},
    {"--random", "k=gamma(1,2)", "is not NAME=normal(MU,SD)"},
    {"--random", "spring_force=normal(1,1)", "is not a parameter"},
    {"--runs", "0", "whole number >= 1"},
    {"--seed", "-4", "whole number >= 0"},
  };
  const char *out = work("never.csv");
  struct stat st;
  for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
    RunResult r = sweep(model("dock_buffer.eom"), bad[i].opt, bad[i].val, "-o", out, NULL);
    ck_assert_msg(r.status == 2, "%s %s: status %d", bad[i].opt, bad[i].val, r.status);
    ck_assert_msg(strstr(r.err, bad[i].says) != NULL, "%s %s: %s", bad[i].opt, bad[i].val,
                  r.err);
    ck_assert(stat(out, &st) != 0);
    run_free(&r);
  }
  RunResult r = sweep(model("dock_buffer.eom"), "--vary", "m=1:2:2", "--random", "m=normal(1,1)",
                      NULL);
  ck_assert_int_eq(r.status, 2);
  ck_assert(strstr(r.err, "'m' is varied twice") != NULL);
  run_free(&r);
}
END_TEST

START_TEST(plot_bands) {
  const char *svg = work("bands.svg");
  RunResult r = sweep(model("dock_buffer.eom"), "--random", "k=uniform(1000,3000)", "--runs",
                      "30", "--until", "0.5", "--plot", svg, "-o", work("bands.csv"), NULL);
  if (r.status == 3 && strstr(r.err, "gnuplot")) { /* no gnuplot here: nothing to draw with */
    run_free(&r);
    return;
  }
  ck_assert_msg(r.status == 0, "%.2000s", r.err);
  char *text = read_file(svg, NULL);
  ck_assert(text != NULL);
  ck_assert(strstr(text, "<svg") != NULL && strstr(text, "median") != NULL);
  ck_assert(strstr(text, "spring_force over 30 runs") != NULL);
  free(text);
  run_free(&r);
}
END_TEST

/* ------------------------------------------------------------ the C API */

typedef struct Seen {
  long runs[64];
  double k[64], x[64];
  int n, in_order;
} Seen;

static void seen_run(void *ctx, const struct eom_sweep_run *r) {
  Seen *s = ctx;
  ck_assert(s->n < 64);
  if (s->n > 0 && r->run <= s->runs[s->n - 1]) s->in_order = 0;
  s->runs[s->n] = r->run;
  s->k[s->n] = r->values[0];
  s->x[s->n] = r->x[0];
  s->n++;
}

START_TEST(api_runs_in_order_and_splits) {
  /* tm_oscillator: params m, k, c; k over a grid, the initial x random */
  struct eom_sweep_var v[2] = {
    {EOM_SWEEP_PARAM, 1, EOM_SWEEP_GRID, 10, 40, 4},
    {EOM_SWEEP_COORD, 0, EOM_SWEEP_UNIFORM, 0.1, 0.2, 0},
  };
  struct eom_sweep_options o;
  eom_sweep_options_init(&o);
  o.vars = v, o.nvars = 2, o.draws = 5, o.threads = 3;
  o.sim.t_end = 0.5, o.sim.sample_dt = 0.05;
  ck_assert_int_eq(eom_sweep_count(&o), 20);
  Seen all = {.in_order = 1}, half[2] = {{.in_order = 1}, {.in_order = 1}};
  ck_assert_int_eq(eom_sweep(&tm_oscillator, NULL, NULL, NULL, NULL, &o, seen_run, &all), EOM_OK);
  ck_assert_int_eq(all.n, 20);
  ck_assert(all.in_order);
  for (int i = 0; i < 20; i++) {
    ck_assert_int_eq(all.runs[i], i);
    ck_assert_double_eq(all.k[i], 10 + 10.0 * (i / 5));
  }
  /* two callers, each every other run, get the same numbers */
  o.stride = 2;
  for (int h = 0; h < 2; h++) {
    o.first = h, o.threads = 1 + h;
    ck_assert_int_eq(eom_sweep(&tm_oscillator, NULL, NULL, NULL, NULL, &o, seen_run, &half[h]),
                     EOM_OK);
    ck_assert_int_eq(half[h].n, 10);
    for (int i = 0; i < 10; i++) {
      ck_assert_int_eq(half[h].runs[i], 2 * i + h);
      ck_assert(half[h].x[i] == all.x[2 * i + h]);
    }
  }
  /* invalid options are refused before any run */
  v[0].n = 0;
  ck_assert_int_eq(eom_sweep(&tm_oscillator, NULL, NULL, NULL, NULL, &o, seen_run, &all),
                   EOM_EINVAL);
  v[0].n = 4, v[0].index = 3; /* no such param */
  ck_assert_int_eq(eom_sweep(&tm_oscillator, NULL, NULL, NULL, NULL, &o, seen_run, &all),
                   EOM_EINVAL);
}
END_TEST

/* The generator's uniforms: mean 1/2 and variance 1/12 over 10^5 draws
** within 3 standard errors (common practice), and neighbouring streams
** uncorrelated (|r| < 3/sqrt(n), common practice). */
START_TEST(api_uniforms) {
  const int n = 100000;
  double s = 0, ss = 0, sxy = 0;
  for (int i = 0; i < n; i++) {
    double u = eom_sweep_uniform(99, i, 0), w = eom_sweep_uniform(99, i, 1);
    ck_assert(u > 0 && u < 1);
    s += u, ss += u * u, sxy += (u - 0.5) * (w - 0.5);
  }
  double mean = s / n, var = ss / n - mean * mean;
  ck_assert(fabs(mean - 0.5) < 3 * sqrt(1.0 / 12 / n));
  /* mu4 of a uniform on (0,1) is 1/80 */
  ck_assert(fabs(var - 1.0 / 12) < 3 * sqrt((1.0 / 80 - 1.0 / 144) / n));
  ck_assert(fabs(sxy / n * 12) < 3 / sqrt(n));
}
END_TEST

static Suite *sweep_suite(void) {
  Suite *s = suite_create("sweep");
  TCase *tc = tcase_create("cli");
  tcase_add_unchecked_fixture(tc, setup, teardown);
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, grid_matches_closed_form);
  tcase_add_test(tc, grid_order);
  tcase_add_test(tc, events_column_counts_switches);
  tcase_add_test(tc, pendulum_period_over_lengths);
  tcase_add_test(tc, random_draws_follow_their_distributions);
  tcase_add_test(tc, same_rows_whatever_the_threads);
  tcase_add_test(tc, failing_run_in_its_row);
  tcase_add_test(tc, summary_goes_where_the_table_does);
  tcase_add_test(tc, usage_errors_before_any_run);
  tcase_add_test(tc, plot_bands);
  suite_add_tcase(s, tc);
  TCase *api = tcase_create("api");
  tcase_set_timeout(api, 60);
  tcase_add_test(api, api_runs_in_order_and_splits);
  tcase_add_test(api, api_uniforms);
  suite_add_tcase(s, api);
  return s;
}

/* ------------------------------------------------------------ MPI pass */
#ifdef HAVE_MPI

/* mpirun -n K eomc sweep ... with K = 1, 2, 3 (oversubscribed: this may be
** a machine with fewer cores; as root Open MPI wants --allow-run-as-root)
** writes the same bytes as one process without MPI. */
START_TEST(mpi_same_rows_whatever_the_ranks) {
  const char *args[] = {"--vary", "k=1000:3000:3", "--random", "m=normal(40,4)", "--runs", "7",
                        "--until", "0.2", "--threads", "1"};
  enum { NARGS = sizeof args / sizeof args[0] };
  char *one = NULL;
  for (int ranks = 0; ranks <= 3; ranks++) {
    char *argv[40], nbuf[16], outbuf[4096];
    int n = 0;
    snprintf(nbuf, sizeof nbuf, "%d", ranks);
    snprintf(outbuf, sizeof outbuf, "%s/mpi%d.csv", work_dir, ranks);
    if (ranks > 0) { /* ranks 0: the plain run */
      argv[n++] = MPIRUN_PATH;
      argv[n++] = "--oversubscribe";
      if (geteuid() == 0) argv[n++] = "--allow-run-as-root";
      argv[n++] = "-n";
      argv[n++] = nbuf;
    }
    argv[n++] = (char *)eomc();
    argv[n++] = "sweep";
    argv[n++] = (char *)model("dock_buffer.eom");
    for (int i = 0; i < NARGS; i++) argv[n++] = (char *)args[i];
    argv[n++] = "-o";
    argv[n++] = outbuf;
    argv[n] = NULL;
    RunResult r = run_argv(argv);
    ck_assert_msg(r.status == 0, "%d ranks: status %d\n%.2000s", ranks, r.status, r.err);
    /* one summary, from rank 0, on stdout (the table went to a file) */
    const char *sum = strstr(r.out, "21 runs, 21 ok");
    ck_assert_msg(sum && !strstr(sum + 1, "21 runs, 21 ok"), "%.2000s", r.out);
    char *text = read_file(outbuf, NULL);
    ck_assert(text != NULL);
    ck_assert_int_eq(count_lines(text), 22);
    if (!one) one = text;
    else {
      ck_assert_msg(strcmp(one, text) == 0, "mpirun -n %d differs from one process", ranks);
      free(text);
    }
    run_free(&r);
  }
  free(one);
}
END_TEST

static Suite *mpi_suite(void) {
  Suite *s = suite_create("sweep-mpi");
  TCase *tc = tcase_create("mpi");
  tcase_add_unchecked_fixture(tc, setup, teardown);
  tcase_set_timeout(tc, 300);
  tcase_add_test(tc, mpi_same_rows_whatever_the_ranks);
  suite_add_tcase(s, tc);
  return s;
}
#endif

int main(int argc, char **argv) {
  if (argc > 1 && strcmp(argv[1], "mpi") == 0) {
#ifndef HAVE_MPI
    puts("SKIP: eomc was built without MPI (Debian packages: libopenmpi-dev openmpi-bin)");
    return TEST_SKIPPED;
#else
    if (!MPIRUN_PATH[0] || access(MPIRUN_PATH, X_OK) != 0) {
      puts("SKIP: no mpirun (Debian package: openmpi-bin)");
      return TEST_SKIPPED;
    }
    /* Open MPI's plugins are unloaded by MPI_Finalize, so a leak of theirs
    ** is only traced to libmpi (tests/lsan.supp) by a full unwind. */
    const char *lsan = getenv("LSAN_OPTIONS");
    if (lsan) {
      char buf[4096];
      snprintf(buf, sizeof buf, "%s:fast_unwind_on_malloc=0", lsan);
      setenv("LSAN_OPTIONS", buf, 1);
    }
    SRunner *sr = srunner_create(mpi_suite());
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
#endif
  }
  return run_test_main(argc, argv, sweep_suite);
}
