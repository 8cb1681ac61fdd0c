/*
** run_sink.c — the destinations of a run's rows (run_sink.h).
*/
#include "cli/run_sink.h"

#include <assert.h>
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli/tmpfiles.h"
#include "eom/runtime.h"

static int ends_with(const char *s, const char *tail) {
  size_t n = strlen(s), k = strlen(tail);
  return n > k && strcmp(s + n - k, tail) == 0;
}

int run_sink_is_h5(const char *path) {
  return path && (ends_with(path, ".h5") || ends_with(path, ".hdf5"));
}

/* "OUT.tmp.PID", beside OUT. */
static char *temp_beside(const char *out) {
  size_t len = strlen(out) + 32;
  char *p = malloc(len);
  if (p) snprintf(p, len, "%s.tmp.%ld", out, (long)getpid());
  return p;
}

static int write_header(FILE *f, const RunSink *s) {
  return eom_csv_write_names(f, s->m, s->cols, s->ncols);
}

/* The HDF5 file, through its temporary; its column names and units. */
static int open_h5(RunSink *s, const H5Meta *meta, char *err, size_t errlen) {
  char **names = calloc((size_t)s->ncols, sizeof(char *)), **units = calloc((size_t)s->ncols, sizeof(char *));
  int rc = -1;
  if (!names || !units) {
    snprintf(err, errlen, "out of memory");
    goto out;
  }
  for (int i = 0; i < s->ncols; i++) {
    char buf[256];
    names[i] = strdup(eom_row_column(s->m, s->cols[i], buf, sizeof buf, NULL));
    units[i] = strdup(eom_row_unit(s->m, s->cols[i], buf, sizeof buf));
    if (!names[i] || !units[i]) {
      snprintf(err, errlen, "out of memory");
      goto out;
    }
  }
  H5Meta full = *meta;
  full.columns = (const char *const *)names;
  full.units = (const char *const *)units;
  full.ncols = s->ncols;
  if ((s->tmp = temp_beside(s->out)) && (s->h5 = h5_out_open(s->tmp, &full, err, errlen))) rc = 0;
  else if (!s->tmp) snprintf(err, errlen, "out of memory");
  else unlink(s->tmp);
out:
  for (int i = 0; i < s->ncols; i++) {
    if (names) free(names[i]);
    if (units) free(units[i]);
  }
  free(names);
  free(units);
  return rc;
}

/* The CSV: standard output, a special file as it is (/dev/null, a pipe),
** or a temporary beside a regular file. */
static int open_csv(RunSink *s, char *err, size_t errlen) {
  struct stat st;
  if (!s->out) {
    s->csv = stdout;
    return 0;
  }
  if (stat(s->out, &st) == 0 && !S_ISREG(st.st_mode)) {
    s->csv = fopen(s->out, "w");
  } else if ((s->tmp = temp_beside(s->out))) {
    s->csv = fopen(s->tmp, "w");
  }
  if (!s->csv) {
    snprintf(err, errlen, "cannot write %s: %s", s->tmp ? s->tmp : s->out, strerror(errno));
    return -1;
  }
  return 0;
}

int run_sink_open(RunSink *s, const struct eom_model *m, const int *cols, int ncols,
                  const char *out, int plot, const H5Meta *meta, char *err, size_t errlen) {
  memset(s, 0, sizeof *s);
  assert(m && cols && ncols > 0);
  s->m = m, s->cols = cols, s->ncols = ncols, s->out = out;
  s->lo = malloc((size_t)ncols * sizeof(double));
  s->hi = malloc((size_t)ncols * sizeof(double));
  s->sel = malloc((size_t)ncols * sizeof(double));
  if (!s->lo || !s->hi || !s->sel) {
    snprintf(err, errlen, "out of memory");
    goto fail;
  }
  for (int i = 0; i < ncols; i++) s->lo[i] = INFINITY, s->hi[i] = -INFINITY;
  if (run_sink_is_h5(out) ? open_h5(s, meta, err, errlen) : open_csv(s, err, errlen)) goto fail;
  /* The plot reads the output itself when it is a regular CSV file. */
  if (plot && (!s->csv || !s->tmp)) {
    int fd = tmpfiles_create("eomc-sim", &s->plot_tmp);
    if (fd < 0 || !(s->plot_csv = fdopen(fd, "w"))) {
      if (fd >= 0) close(fd);
      snprintf(err, errlen, "cannot create a scratch file in %s: %s", tmpfiles_dir(),
               strerror(errno));
      goto fail;
    }
  }
  if ((s->csv && write_header(s->csv, s) != 0) || (s->plot_csv && write_header(s->plot_csv, s))) {
    snprintf(err, errlen, "writing the CSV header failed");
    goto fail;
  }
  return 0;
fail:
  run_sink_free(s);
  return -1;
}

int run_sink_row(RunSink *s, const double *row, char *err, size_t errlen) {
  for (int i = 0; i < s->ncols; i++) {
    double v = s->sel[i] = row[s->cols[i]];
    if (isfinite(v)) s->lo[i] = fmin(s->lo[i], v), s->hi[i] = fmax(s->hi[i], v);
  }
  if ((s->csv && eom_csv_write_values(s->csv, s->sel, NULL, s->ncols) != 0) ||
      (s->plot_csv && eom_csv_write_values(s->plot_csv, s->sel, NULL, s->ncols) != 0)) {
    snprintf(err, errlen, "writing the CSV failed: %s", strerror(errno));
    return -1;
  }
  if (s->h5 && h5_out_row(s->h5, s->sel, err, errlen) != 0) return -1;
  s->rows++;
  return 0;
}

int run_sink_finish(RunSink *s, int keep, char *err, size_t errlen) {
  int bad = 0;
  char why[256] = "";
  assert(!s->finished);
  s->finished = 1;
  if (s->csv) {
    bad |= fflush(s->csv) != 0 || ferror(s->csv);
    if (s->csv != stdout) bad |= fclose(s->csv) != 0;
    s->csv = NULL;
    if (bad) snprintf(why, sizeof why, "writing the CSV failed");
  }
  if (s->h5 && h5_out_close(s->h5, why, sizeof why) != 0) bad = 1;
  s->h5 = NULL;
  if (s->plot_csv) {
    bad |= fclose(s->plot_csv) != 0;
    s->plot_csv = NULL;
  }
  if (bad) {
    snprintf(err, errlen, "%s", why[0] ? why : "writing the plot's scratch data failed");
    keep = 0;
  }
  if (s->tmp) {
    if (keep && rename(s->tmp, s->out) != 0) {
      snprintf(err, errlen, "cannot write %s: %s", s->out, strerror(errno));
      bad = 1;
    }
    if (!keep || bad) unlink(s->tmp);
    free(s->tmp);
    s->tmp = NULL;
  }
  return bad ? -1 : 0;
}

const char *run_sink_plot_data(const RunSink *s) { return s->plot_tmp ? s->plot_tmp : s->out; }

void run_sink_free(RunSink *s) {
  if (!s->finished && (s->csv || s->h5 || s->plot_csv || s->tmp)) {
    char ignored[8];
    run_sink_finish(s, 0, ignored, sizeof ignored);
  }
  if (s->plot_tmp) unlink(s->plot_tmp);
  free(s->plot_tmp);
  free(s->lo);
  free(s->hi);
  free(s->sel);
  memset(s, 0, sizeof *s);
}
