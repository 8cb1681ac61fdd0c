/*
** sweep_plot.c — percentile bands of a sweep's traces (see sweep_plot.h).
** The percentiles go to a temporary data file, one row per trace time:
** t, then per channel p5, p25, p50, p75, p95; the script fills the bands
** between them.  Percentiles interpolate linearly between order statistics
** (R. J. Hyndman, Y. Fan, "Sample quantiles in statistical packages", The
** American Statistician 50, 1996: their definition 7; common practice).
*/
#include "cli/sweep_plot.h"

#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli/plot.h"
#include "cli/tmpfiles.h"

static const double PERCENTS[5] = {5, 25, 50, 75, 95};

static int cmp_double(const void *a, const void *b) {
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

double sweep_percentile(double *v, size_t *n, double pct) {
  size_t k = 0;
  for (size_t i = 0; i < *n; i++)
    if (isfinite(v[i])) v[k++] = v[i];
  *n = k;
  if (k == 0) return NAN;
  qsort(v, k, sizeof *v, cmp_double);
  double h = (double)(k - 1) * pct / 100.0;
  size_t lo = (size_t)floor(h);
  if (lo + 1 >= k) return v[k - 1];
  return v[lo] + (h - (double)lo) * (v[lo + 1] - v[lo]);
}

/* Percentile rows into the open data file f. */
static int write_bands(FILE *f, const SweepTable *t, double t0, double t_end) {
  int width = t->m->nq + t->m->ny, P = t->trace_points;
  double *col = malloc(((size_t)t->rows + 1) * sizeof(double));
  if (!col) return -1;
  for (int k = 0; k < P; k++) {
    fprintf(f, "%.10g", t0 + (t_end - t0) * k / (P - 1));
    for (int c = 0; c < width; c++) {
      size_t n = 0;
      for (long r = 0; r < t->rows; r++)
        col[n++] = t->traces[((size_t)r * (size_t)P + (size_t)k) * (size_t)width + (size_t)c];
      for (int j = 0; j < 5; j++) {
        size_t m = n;
        double v = sweep_percentile(col, &m, PERCENTS[j]);
        n = m;
        if (isnan(v)) fputs(" NaN", f);
        else fprintf(f, " %.10g", v);
      }
    }
    fputc('\n', f);
  }
  free(col);
  return ferror(f) ? -1 : 0;
}

static void put_quoted(FILE *f, const char *s) {
  fputc('\'', f);
  for (; *s; s++) {
    if (*s == '\'') fputc('\'', f);
    fputc(*s, f);
  }
  fputc('\'', f);
}

/* One panel per coordinate and output: two bands and the median. */
static int write_band_script(FILE *f, const void *ctx, const char *data, const char *out) {
  const SweepTable *t = ctx;
  const struct eom_model *m = t->m;
  int width = m->nq + m->ny;
  plot_terminal(f, out, 900, 240 * width);
  fprintf(f, "set grid\nset key outside right top\nset xlabel 't'\n"
             "set style fill transparent solid 0.25 noborder\n"
             "set multiplot layout %d,1\n", width);
  for (int c = 0; c < width; c++) {
    const char *name = c < m->nq ? m->coord_names[c] : m->output_names[c - m->nq];
    int base = 2 + 5 * c; /* columns of p5 .. p95 */
    char title[300];
    snprintf(title, sizeof title, "%s over %ld runs", name, t->rows);
    fputs("set title ", f);
    put_quoted(f, title);
    fputs("\nplot ", f);
    put_quoted(f, data);
    fprintf(f, " using 1:%d:%d with filledcurves lc rgb '#4a78b0' title '5-95 %%', "
               "'' using 1:%d:%d with filledcurves lc rgb '#1f4e8c' title '25-75 %%', "
               "'' using 1:%d with lines lw 2 lc rgb '#0b2545' title 'median'\n",
            base, base + 4, base + 1, base + 3, base + 2);
  }
  fputs("unset multiplot\nset output\n", f);
  return ferror(f) ? -1 : 0;
}

int sweep_bands_svg(const SweepTable *t, double t0, double t_end, const char *svg_path, char *err,
                   size_t errlen) {
  if (t->trace_points < 2 || !t->traces || t->rows == 0) {
    snprintf(err, errlen, "--plot: no run to plot");
    return -1;
  }
  if (t->m->nq + t->m->ny == 0) {
    snprintf(err, errlen, "--plot: the model has nothing to plot");
    return -1;
  }
  char *data = NULL;
  int fd = tmpfiles_create("eomc-bands", &data);
  if (fd < 0) {
    snprintf(err, errlen, "cannot create a temporary file: %s", strerror(errno));
    return -1;
  }
  FILE *f = fdopen(fd, "w");
  int rc = -1;
  if (!f) {
    close(fd);
    snprintf(err, errlen, "cannot write the plot data: %s", strerror(errno));
  } else if ((write_bands(f, t, t0, t_end) != 0) | (fclose(f) != 0)) {
    snprintf(err, errlen, "cannot write the plot data %s", data);
  } else {
    rc = plot_render(write_band_script, t, data, svg_path, err, errlen);
  }
  unlink(data);
  free(data);
  return rc;
}
