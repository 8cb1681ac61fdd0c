/*
** test_runout.c — end to end: what `eomc sim` writes.  Rows at --every,
** independent of the integration step; the column layout and --columns.
**
** Reference solution: an undamped mass on a linear spring released from
** rest at x0 moves as x(t) = x0 cos(w t), w = sqrt(k/m) (W. T. Thomson and
** M. D. Dahleh, Theory of Vibration with Applications, 5th ed., 1998, §2.1;
** from memory — it is the textbook solution of m x'' + k x = 0).
*/
#include <check.h>
#include <math.h>
#include <signal.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#ifdef HAVE_CONFIG_H
#include "config.h"
#endif
#ifdef HAVE_HDF5
#include <hdf5.h>
#endif

#include "cli/plot_run.h"
#include "testutil.h"

static char *cache_dir, *work_dir, *hook_model;

/* A crane hook on a stiff rope, bobbing vertically: w = sqrt(k/m) = 4 rad/s. */
static const char hook_text[] =
    "# hook_bob.eom: a crane hook bobbing on its rope's stretch\n"
    "model hook_bob\n"
    "coord z [m] \"stretch of the rope below rest\"\n"
    "param m = 12.5 [kg] \"hook block\"\n"
    "param k = 200 [N/m] \"rope stiffness\"\n"
    "input F [N] \"pull on the hook\"\n"
    "kinetic 1/2*m*z'^2\n"
    "potential 1/2*k*z^2\n"
    "force z = F\n"
    "output rope_force = k*z [N]\n"
    "initial z = 0.05\n";
static const double X0 = 0.05, W = 4.0;

static void setup(void) {
  cache_dir = make_temp_dir();
  work_dir = make_temp_dir();
  setenv("EOMC_CACHE_DIR", cache_dir, 1);
  hook_model = write_file(work_dir, "hook_bob.eom", hook_text, strlen(hook_text));
}

static void teardown(void) {
  remove_tree(cache_dir);
  remove_tree(work_dir);
  free(cache_dir);
  free(work_dir);
  free(hook_model);
}

/* Parsed CSV text: header names and a row-major table of numbers. */
typedef struct Table {
  char names[32][32];
  int ncols, nrows;
  double *v;
} Table;

static Table parse_csv(const char *text) {
  Table t;
  memset(&t, 0, sizeof t);
  const char *p = text;
  while (*p && *p != '\n') {
    size_t n = strcspn(p, ",\n");
    ck_assert(t.ncols < 32 && n < 32);
    memcpy(t.names[t.ncols], p, n);
    t.names[t.ncols++][n] = '\0';
    p += n;
    if (*p == ',') p++;
  }
  int lines = count_lines(text) - 1;
  t.v = malloc(((size_t)lines * (size_t)t.ncols + 1) * sizeof(double));
  for (p = strchr(text, '\n'); p && p[1]; p = strchr(p, '\n')) {
    p++;
    for (int c = 0; c < t.ncols; c++) {
      char *end;
      t.v[t.nrows * t.ncols + c] = strtod(p, &end);
      ck_assert_msg(end != p, "not a number at row %d col %d", t.nrows, c);
      p = end + (*end == ',');
    }
    t.nrows++;
  }
  return t;
}

static double cell(const Table *t, int row, int col) { return t->v[row * t->ncols + col]; }

/* eomc sim HOOK ARGS... (a NULL ends the arguments). */
static RunResult sim(const char *first, ...) {
  char *argv[32] = {(char *)eomc(), "sim", hook_model};
  int n = 3;
  va_list ap;
  va_start(ap, first);
  for (const char *a = first; a; a = va_arg(ap, const char *)) {
    ck_assert(n < 31);
    argv[n++] = (char *)a;
  }
  va_end(ap);
  argv[n] = NULL;
  return run_argv(argv);
}

/* rk4 with h = 0.003 and rows every 0.01: rows land between steps and come
** from the cubic Hermite interpolant; a linear one would be off by ~1e-6. */
START_TEST(every_between_fixed_steps) {
  RunResult r = sim("--method", "rk4", "--step", "0.003", "--every", "0.01", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  /* --until 10 by default: 3334 steps of exactly 0.003 (the last shortened). */
  ck_assert_msg(strstr(r.err, " 3334 steps"), "%s", r.err);
  Table t = parse_csv(r.out);
  ck_assert_int_eq(t.nrows, 1001);
  ck_assert_str_eq(t.names[1], "z");
  double worst = 0;
  for (int i = 0; i < t.nrows; i++) {
    double time = cell(&t, i, 0);
    ck_assert_double_eq_tol(time, 0.01 * i, 1e-12);
    worst = fmax(worst, fabs(cell(&t, i, 1) - X0 * cos(W * time)));
    worst = fmax(worst, fabs(cell(&t, i, 2) + X0 * W * sin(W * time)) / W);
  }
  ck_assert_msg(worst < 2e-9, "off the closed form by %g m", worst);
  ck_assert(strstr(r.out, "\n0.07,") && strstr(r.out, "\n10,"));
  free(t.v);
  run_free(&r);
}
END_TEST

/* Every method gives the rows asked for, whatever its steps (h = 0.004 does
** not divide the rows: the fixed-step ones interpolate). */
START_TEST(every_for_each_method) {
  static const char *const methods[] = {"dopri", "radau5", "midpoint", "rk4"};
  for (int k = 0; k < 4; k++) {
    RunResult r = sim("--method", methods[k], "--until", "2", "--every", "0.05",
                      "--step", "0.004", NULL);
    ck_assert_msg(r.status == 0, "%s: status %d: %s", methods[k], r.status, r.err);
    Table t = parse_csv(r.out);
    ck_assert_int_eq(t.nrows, 41);
    double tol = strcmp(methods[k], "midpoint") == 0 ? 1e-3 : 1e-6;
    for (int i = 0; i < t.nrows; i++) {
      double time = cell(&t, i, 0);
      ck_assert_double_eq_tol(time, 0.05 * i, 1e-12);
      ck_assert_double_eq_tol(cell(&t, i, 1), X0 * cos(W * time), tol * X0);
    }
    free(t.v);
    run_free(&r);
  }
}
END_TEST

/* Defaults: about 1,000 rows; a --step longer than until/1000 sets the rows. */
START_TEST(every_defaults) {
  RunResult r = sim("--until", "3", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_int_eq(count_lines(r.out), 1002);
  run_free(&r);
  r = sim("--method", "rk4", "--until", "1", "--step", "0.1", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_int_eq(count_lines(r.out), 12);
  ck_assert_msg(strstr(r.err, " 10 steps"), "%s", r.err);
  run_free(&r);
  /* A fixed step that does not divide the rows: still exactly ceil(T/h) steps. */
  r = sim("--method", "midpoint", "--until", "1", "--step", "0.03", "--every", "0.1", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_int_eq(count_lines(r.out), 12);
  ck_assert_msg(strstr(r.err, " 34 steps"), "%s", r.err);
  run_free(&r);
  static const char *const bad[] = {"0", "-1", "x", "20"};
  for (int i = 0; i < 4; i++) {
    r = sim("--every", bad[i], NULL);
    ck_assert_msg(r.status == 2, "--every %s: status %d", bad[i], r.status);
    ck_assert_msg(strstr(r.err, "--every"), "%s", r.err);
    run_free(&r);
  }
}
END_TEST

/* SPEC 4.6 order: t, coordinates, rates, outputs, inputs, multipliers, T, V;
** the inputs column holds the values the run used. */
START_TEST(columns_in_spec_order) {
  RunResult r = sim("--until", "1", "--set", "F=2.5", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(strncmp(r.out, "t,z,z',rope_force,F,T,V\n", 24) == 0, "%s", r.out);
  Table t = parse_csv(r.out);
  for (int i = 0; i < t.nrows; i++) {
    double z = cell(&t, i, 1), zd = cell(&t, i, 2);
    ck_assert(cell(&t, i, 4) == 2.5);
    ck_assert_double_eq_tol(cell(&t, i, 3), 200 * z, 1e-12);
    ck_assert_double_eq_tol(cell(&t, i, 5), 0.5 * 12.5 * zd * zd, 1e-12);
    ck_assert_double_eq_tol(cell(&t, i, 6), 0.5 * 200 * z * z, 1e-12);
  }
  free(t.v);
  run_free(&r);
}
END_TEST

/* --set VALUE is an expression with an optional unit, converted to the
** declared one.  k = 0.8 kN/m = 800 N/m makes w = sqrt(800/12.5) = 8 rad/s;
** z = 20 mm starts the swing at 0.02 m (the prefixes are the SI brochure's:
** BIPM, The International System of Units, 9th ed., 2019, table 7). */
START_TEST(set_with_units_and_expressions) {
  RunResult r = sim("--until", "1", "--every", "0.1", "--set", "k=0.8[kN/m]", "--set",
                    "z=20 [mm]", "--set", "F=m*0", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  Table t = parse_csv(r.out);
  ck_assert_int_eq(t.nrows, 11);
  for (int i = 0; i < t.nrows; i++) {
    double time = cell(&t, i, 0);
    ck_assert_double_eq_tol(cell(&t, i, 1), 0.02 * cos(8 * time), 1e-7);
    ck_assert_double_eq_tol(cell(&t, i, 3), 800 * cell(&t, i, 1), 1e-9);
  }
  free(t.v);
  run_free(&r);
  /* An expression of parameters and pi: k = 4 m pi^2/pi^2 = 50 N/m, so
  ** w = 2; F = pi/6 N is held by the input column exactly. */
  r = sim("--until", "1", "--every", "0.5", "--set", "k=4*m*pi^2/pi^2", "--set", "F=pi/6",
          "--set", "z'=0[mm/s]", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  t = parse_csv(r.out);
  ck_assert_int_eq(t.nrows, 3);
  ck_assert(cell(&t, 0, 4) == 3.14159265358979323846 / 6);
  /* z'' = -(k/m) z + F/m at rest at z = 0.05: -(50/12.5) 0.05 + (pi/6)/12.5 */
  double z = cell(&t, 1, 1), zs = (3.14159265358979323846 / 6) / 50;
  ck_assert_double_eq_tol(z, zs + (X0 - zs) * cos(2 * 0.5), 1e-7);
  free(t.v);
  run_free(&r);
}
END_TEST

/* A wrong value is a usage error that names both units, or the problem,
** with a caret under it. */
START_TEST(set_errors) {
  static const char *const bad[][2] = {
      {"k=2[kg]", "[kg] (in SI: kg) does not fit the declared unit [N/m]"},
      {"z=1[deg]", "does not fit the declared unit [m]"},
      {"k=2[furlong]", "unknown unit 'furlong'"},
      {"k=2*q", "'q' is not a parameter"},
      {"k=2+", "expected an expression"},
      {"k=1/0", "not a finite number"},
      {"k=", "no value given"},
      {"k=[1,2]", "no value given"},
      {"k=(1)[1,2]", "in the unit [1,2]"},
      {"k=1;kinetic z", "not one expression"},
      {"nope=1", "not a name this option can set"},
  };
  for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
    RunResult r = sim("--until", "0.1", "--set", bad[i][0], NULL);
    ck_assert_msg(r.status == 2, "%s: status %d: %s", bad[i][0], r.status, r.err);
    ck_assert_msg(strstr(r.err, bad[i][1]), "%s: %s", bad[i][0], r.err);
    ck_assert_msg(r.out[0] == '\0', "%s wrote rows", bad[i][0]);
    run_free(&r);
  }
  RunResult r = sim("--until", "0.1", "--set", "k=2[kg]", NULL);
  ck_assert_msg(strstr(r.err, "\n    k=2[kg]\n        ^"), "%s", r.err);
  run_free(&r);
}
END_TEST

/* --columns picks and orders the columns written. */
START_TEST(columns_chosen) {
  RunResult r = sim("--until", "1", "--every", "0.25", "--columns", "t, z',T,rope_force", NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  ck_assert_msg(strncmp(r.out, "t,z',T,rope_force\n", 18) == 0, "%s", r.out);
  Table t = parse_csv(r.out);
  ck_assert_int_eq(t.ncols, 4);
  ck_assert_int_eq(t.nrows, 5);
  for (int i = 0; i < t.nrows; i++) {
    double time = cell(&t, i, 0), zd = -X0 * W * sin(W * time);
    ck_assert_double_eq_tol(cell(&t, i, 1), zd, 1e-7);
    ck_assert_double_eq_tol(cell(&t, i, 2), 0.5 * 12.5 * cell(&t, i, 1) * cell(&t, i, 1), 1e-9);
    ck_assert_double_eq_tol(cell(&t, i, 3), 200 * X0 * cos(W * time), 1e-5);
  }
  free(t.v);
  run_free(&r);
  static const char *const bad[][2] = {
      {"t,q", "no column 'q' (columns: t, z, z', rope_force, F, T, V)"},
      {"t,z,t", "'t' is named twice"},
      {"t,,z", "an empty name"},
  };
  for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
    r = sim("--until", "1", "--columns", bad[i][0], NULL);
    ck_assert_msg(r.status == 2, "%s: status %d", bad[i][0], r.status);
    ck_assert_msg(strstr(r.err, bad[i][1]), "%s: %s", bad[i][0], r.err);
    run_free(&r);
  }
}
END_TEST

static int have_gnuplot(void) {
#ifdef GNUPLOT_PATH
  return 1;
#else
  return 0;
#endif
}

static char *in_work(const char *name) {
  size_t n = strlen(work_dir) + strlen(name) + 2;
  char *p = malloc(n);
  snprintf(p, n, "%s/%s", work_dir, name);
  return p;
}

/* The format follows the name: each file starts with its format's magic
** (SVG: XML with <svg; PNG: 89 50 4E 47, ISO/IEC 15948:2004 §5.2; PDF:
** "%PDF-", ISO 32000-1:2008 §7.5.2).  The SVG names every column plotted,
** its unit on the axis and the model. */
START_TEST(plot_formats) {
  static const char *const names[] = {"run.svg", "run.png", "run.pdf"};
  static const char *const magic[] = {"<svg", "\x89PNG\r\n\x1a\n", "%PDF-"};
  if (!have_gnuplot()) return;
  for (int k = 0; k < 3; k++) {
    char *path = in_work(names[k]);
    RunResult r = sim("--until", "2", "--set", "F=1", "--plot", path, NULL);
    ck_assert_msg(r.status == 0, "%s: status %d: %s", names[k], r.status, r.err);
    size_t len = 0;
    char *img = read_file(path, &len);
    ck_assert_msg(img && len > 100, "%s: no image", names[k]);
    if (k == 0) {
      ck_assert(strstr(img, magic[0]) != NULL);
      static const char *const want[] = {"hook_bob", "t [s]", "z [m]", "z' [m/s]", "rope_force",
                                         "F [N]", "T, V [J]", "T + V", "phase portrait: z"};
      for (size_t i = 0; i < sizeof want / sizeof want[0]; i++)
        ck_assert_msg(strstr(img, want[i]), "the SVG lacks '%s'", want[i]);
    } else {
      ck_assert_msg(memcmp(img, magic[k], strlen(magic[k])) == 0, "%s: not its format", names[k]);
    }
    free(img);
    free(path);
    run_free(&r);
  }
  /* --columns limits the plot to them; an unknown format is a usage error
  ** and writes nothing. */
  char *path = in_work("few.svg");
  RunResult r = sim("--until", "1", "--columns", "t,rope_force", "--plot", path, NULL);
  ck_assert_msg(r.status == 0, "status %d: %s", r.status, r.err);
  char *img = read_file(path, NULL);
  ck_assert(img && strstr(img, "rope_force") && !strstr(img, "z [m]"));
  free(img);
  free(path);
  run_free(&r);
  path = in_work("run.gif");
  r = sim("--until", "1", "--plot", path, NULL);
  ck_assert_int_eq(r.status, 2);
  ck_assert_msg(strstr(r.err, "name it .svg, .png or .pdf"), "%s", r.err);
  ck_assert(access(path, F_OK) != 0);
  free(path);
  run_free(&r);
}
END_TEST

/* The y-span of a panel is at least 1e-6 of its magnitude (plot_run.h):
** a constant with round-off noise is drawn flat; real variation keeps
** gnuplot's autoscale. */
START_TEST(plot_minimum_span) {
  double lo, hi;
  ck_assert(plot_min_span(2.5 - 1e-9, 2.5 + 1e-9, &lo, &hi));
  ck_assert_double_eq_tol(hi - lo, 2.5e-6, 1e-15);
  ck_assert_double_eq_tol((lo + hi) / 2, 2.5, 1e-15);
  ck_assert(plot_min_span(-7, -7, &lo, &hi) && lo < -7 && hi > -7);
  ck_assert(plot_min_span(0, 0, &lo, &hi) && lo == -1 && hi == 1);
  ck_assert(!plot_min_span(0, 1, &lo, &hi));
  ck_assert(!plot_min_span(1e-20, 3e-20, &lo, &hi)); /* small, but not noise on an offset */
  ck_assert(!plot_min_span(INFINITY, -INFINITY, &lo, &hi)); /* nothing finite */
}
END_TEST

/* Start `eomc sim` on the hook with the extra arguments, stderr into
** err_path; returns the child's pid. */
static pid_t spawn_sim(const char *err_path, const char *tmpdir, char **extra) {
  pid_t pid = fork();
  ck_assert(pid >= 0);
  if (pid == 0) {
    char *argv[16] = {(char *)eomc(), "sim", hook_model, "--until", "1e7", "--every", "1e-4"};
    int n = 7;
    for (int i = 0; extra[i]; i++) argv[n++] = extra[i];
    argv[n] = NULL;
    if (tmpdir) setenv("TMPDIR", tmpdir, 1);
    if (!freopen("/dev/null", "w", stdout) || !freopen(err_path, "w", stderr)) _exit(126);
    execvp(argv[0], argv);
    _exit(127);
  }
  return pid;
}

/* Wait until dir holds more than `base` entries (the run's temporary). */
static void wait_for_entries(const char *dir, int base) {
  for (int i = 0; i < 6000 && count_entries(dir) <= base; i++) {
    struct timespec ts = {0, 10 * 1000 * 1000};
    nanosleep(&ts, NULL);
  }
  ck_assert_msg(count_entries(dir) > base, "no temporary appeared in %s", dir);
}

/* Ctrl-C (SIGINT) or SIGTERM stops a run: its temporary is removed, the
** target is not written, the message says where it stopped and the status
** is 128 + the signal (the shells' convention, POSIX.1-2017 XCU 2.8.2). */
START_TEST(interrupt_removes_temporaries) {
  static const int sigs[] = {SIGINT, SIGTERM};
  static const char *const names[] = {"SIGINT", "SIGTERM"};
  char *err_path = malloc(strlen(cache_dir) + 16), *out = in_work("run.csv");
  sprintf(err_path, "%s/err.txt", cache_dir);
  RunResult warm = sim("--until", "0.1", NULL); /* build the model first */
  ck_assert_int_eq(warm.status, 0);
  run_free(&warm);
  for (int k = 0; k < 2; k++) {
    char *extra[] = {"-o", out, NULL};
    int base = count_entries(work_dir), status;
    pid_t pid = spawn_sim(err_path, NULL, extra);
    wait_for_entries(work_dir, base);
    kill(pid, sigs[k]);
    ck_assert(waitpid(pid, &status, 0) == pid);
    ck_assert_msg(WIFEXITED(status) && WEXITSTATUS(status) == 128 + sigs[k], "status %d", status);
    ck_assert_int_eq(count_entries(work_dir), base);
    ck_assert(access(out, F_OK) != 0);
    char *text = read_file(err_path, NULL);
    ck_assert_msg(text && strstr(text, names[k]) && strstr(text, "stopped by") &&
                  strstr(text, "not written"), "%s", text ? text : "");
    free(text);
  }
  /* The plot's scratch data goes to $TMPDIR and is removed too. */
  char *tmpdir = in_work("scratch"), *svg = in_work("p.svg");
  ck_assert_int_eq(mkdir(tmpdir, 0700), 0);
  char *extra[] = {"--plot", svg, NULL};
  int status;
  pid_t pid = spawn_sim(err_path, tmpdir, extra);
  wait_for_entries(tmpdir, 0);
  kill(pid, SIGINT);
  ck_assert(waitpid(pid, &status, 0) == pid);
  ck_assert(WIFEXITED(status) && WEXITSTATUS(status) == 128 + SIGINT);
  ck_assert_int_eq(count_entries(tmpdir), 0);
  ck_assert(access(svg, F_OK) != 0);
  rmdir(tmpdir);
  free(tmpdir);
  free(svg);
  free(out);
  free(err_path);
}
END_TEST

#ifdef HAVE_HDF5
/* A string attribute of `rows` (n strings, or one scalar when n = 0). */
static void read_strings(hid_t dset, const char *name, char **out, int n) {
  hid_t attr = H5Aopen(dset, name, H5P_DEFAULT);
  ck_assert_msg(attr >= 0, "no attribute %s", name);
  hid_t t = H5Tcopy(H5T_C_S1);
  H5Tset_size(t, H5T_VARIABLE);
  H5Tset_cset(t, H5T_CSET_UTF8);
  ck_assert(H5Aread(attr, t, out) >= 0);
  (void)n;
  H5Tclose(t);
  H5Aclose(attr);
}
#endif

/* -o RUN.h5 holds the numbers of the CSV of the same run, exactly, with the
** column names, units, model, parameters and version as attributes, read
** back through the HDF5 C library (The HDF Group, HDF5 Reference Manual). */
START_TEST(hdf5_same_as_csv) {
  char *h5 = in_work("run.h5");
#ifdef HAVE_HDF5
  RunResult c = sim("--until", "3", "--every", "0.001", "--set", "F=0.5", NULL);
  RunResult r = sim("--until", "3", "--every", "0.001", "--set", "F=0.5", "-o", h5, NULL);
  ck_assert_msg(r.status == 0 && c.status == 0, "%s", r.err);
  Table t = parse_csv(c.out);
  hid_t f = H5Fopen(h5, H5F_ACC_RDONLY, H5P_DEFAULT);
  ck_assert(f >= 0);
  hid_t d = H5Dopen2(f, "rows", H5P_DEFAULT), space = H5Dget_space(d);
  hsize_t dims[2];
  ck_assert_int_eq(H5Sget_simple_extent_ndims(space), 2);
  H5Sget_simple_extent_dims(space, dims, NULL);
  ck_assert_int_eq((int)dims[0], t.nrows);
  ck_assert_int_eq((int)dims[1], t.ncols);
  double *v = malloc(dims[0] * dims[1] * sizeof(double));
  ck_assert(H5Dread(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v) >= 0);
  for (size_t i = 0; i < dims[0] * dims[1]; i++)
    ck_assert_msg(v[i] == t.v[i], "value %zu: %.17g in HDF5, %.17g in the CSV", i, v[i], t.v[i]);
  char *cols[7], *units[7], *model[1], *version[1];
  read_strings(d, "columns", cols, 7);
  read_strings(d, "units", units, 7);
  read_strings(d, "model", model, 0);
  read_strings(d, "eomc_version", version, 0);
  static const char *const want_units[] = {"s", "m", "m/s", "", "N", "J", "J"};
  for (int i = 0; i < 7; i++) {
    ck_assert_str_eq(cols[i], t.names[i]);
    ck_assert_str_eq(units[i], want_units[i]);
  }
  ck_assert_str_eq(model[0], "hook_bob");
  ck_assert(strlen(version[0]) > 0);
  /* parameters: {name, value} records */
  typedef struct { char *name; double value; } Rec;
  hid_t s = H5Tcopy(H5T_C_S1), rt = H5Tcreate(H5T_COMPOUND, sizeof(Rec));
  H5Tset_size(s, H5T_VARIABLE);
  H5Tinsert(rt, "name", HOFFSET(Rec, name), s);
  H5Tinsert(rt, "value", HOFFSET(Rec, value), H5T_NATIVE_DOUBLE);
  Rec rec[2];
  hid_t pa = H5Aopen(d, "parameters", H5P_DEFAULT);
  ck_assert(H5Aread(pa, rt, rec) >= 0);
  ck_assert(strcmp(rec[0].name, "m") == 0 && rec[0].value == 12.5);
  ck_assert(strcmp(rec[1].name, "k") == 0 && rec[1].value == 200);
  hid_t aspace = H5Aget_space(pa);
  H5Dvlen_reclaim(rt, aspace, H5P_DEFAULT, rec);
  H5Sclose(aspace);
  H5Aclose(pa);
  H5Tclose(rt);
  H5Tclose(s);
  for (int i = 0; i < 7; i++) free(cols[i]), free(units[i]);
  free(model[0]);
  free(version[0]);
  free(v);
  H5Sclose(space);
  H5Dclose(d);
  H5Fclose(f);
  free(t.v);
  run_free(&c);
  run_free(&r);
  if (H5DUMP_PATH[0]) { /* h5dump, the HDF Group's reader, reads it too */
    char *argv[] = {H5DUMP_PATH, "-H", h5, NULL};
    r = run_argv(argv);
    ck_assert_msg(r.status == 0 && strstr(r.out, "DATASET \"rows\"") &&
                      strstr(r.out, "eomc_version"), "%s", r.out);
    run_free(&r);
  }
#else
  RunResult r = sim("--until", "1", "-o", h5, NULL);
  ck_assert_int_eq(r.status, 2);
  ck_assert_msg(strstr(r.err, "without HDF5"), "%s", r.err);
  ck_assert(access(h5, F_OK) != 0);
  run_free(&r);
#endif
  free(h5);
}
END_TEST

static Suite *make_suite(void) {
  Suite *s = suite_create("runout");
  TCase *tc = tcase_create("rows");
  tcase_add_checked_fixture(tc, setup, teardown);
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, every_between_fixed_steps);
  tcase_add_test(tc, every_for_each_method);
  tcase_add_test(tc, every_defaults);
  tcase_add_test(tc, columns_in_spec_order);
  suite_add_tcase(s, tc);
  tc = tcase_create("values");
  tcase_add_checked_fixture(tc, setup, teardown);
  tcase_set_timeout(tc, 120);
  tcase_add_test(tc, set_with_units_and_expressions);
  tcase_add_test(tc, set_errors);
  suite_add_tcase(s, tc);
  tc = tcase_create("files");
  tcase_add_checked_fixture(tc, setup, teardown);
  tcase_set_timeout(tc, 180);
  tcase_add_test(tc, columns_chosen);
  tcase_add_test(tc, plot_formats);
  tcase_add_test(tc, plot_minimum_span);
  tcase_add_test(tc, interrupt_removes_temporaries);
  tcase_add_test(tc, hdf5_same_as_csv);
  suite_add_tcase(s, tc);
  return s;
}

int main(int argc, char **argv) { return run_test_main(argc, argv, make_suite); }
