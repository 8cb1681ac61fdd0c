/*
** plot.c — write a gnuplot script for a simulation CSV and run gnuplot on
** it (fork + execvp, never a shell).  Panels, top to bottom: coordinates
** against time; T, V and T + V against time; one phase portrait per
** coordinate.  For a sweep of steady motions: growth rates and
** frequencies of the eigenvalues against the swept rate.
*/
#include "cli/plot.h"
#include "eom/runtime.h"

#ifdef HAVE_CONFIG_H
#include "config.h"
#endif

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>

int plot_available(char *err, size_t errlen) {
#ifdef GNUPLOT_PATH
  if (access(GNUPLOT_PATH, X_OK) == 0) return 0;
  snprintf(err, errlen, "--plot needs gnuplot, but %s is gone (Debian package: gnuplot-nox)",
           GNUPLOT_PATH);
#else
  snprintf(err, errlen,
           "--plot needs gnuplot, which was not found when eomc was configured "
           "(install gnuplot-nox and re-run configure)");
#endif
  return -1;
}

#ifdef GNUPLOT_PATH
/* A gnuplot single-quoted string: a quote inside is doubled. */
static void put_quoted(FILE *f, const char *s) {
  fputc('\'', f);
  for (; *s; s++) {
    if (*s == '\'') fputc('\'', f);
    fputc(*s, f);
  }
  fputc('\'', f);
}

/* Panels: the coordinates (with attitudes: each one's roll, pitch and yaw
** instead of its quaternion), the energies, and a phase portrait per
** coordinate; columns as eom_row_column numbers them (1-based here). */
static int write_script(FILE *f, const struct eom_model *m, const char *csv, const char *out) {
  int nq = m->nq, nplain = m->nq - 4 * m->nattitudes, width = eom_row_width(m);
  int col_T = width - 1, col_V = width, col_angles = 2 + eom_state_size(m);
  int panels = 2 + nplain;
  fprintf(f, "set terminal svg size 900,%d dynamic noenhanced font 'sans,11'\n", 260 * panels);
  fputs("set output ", f);
  put_quoted(f, out);
  fputs("\nset datafile separator ','\nset grid\nset key outside right top\n", f);
  fprintf(f, "set multiplot layout %d,1\n", panels);
  fputs("set title 'coordinates'\nset xlabel 't'\nset ylabel ''\nplot ", f);
  int ncurves = 0;
  for (int c = 0; c < nplain + 3 * m->nattitudes; c++) {
    int col = c < nplain ? 2 + c : col_angles + (c - nplain);
    fputs(ncurves++ ? ", '' " : "", f);
    if (c == 0) put_quoted(f, csv);
    fprintf(f, " using 1:%d with lines title columnheader(%d)", col, col);
  }
  fputs("\nset title 'energy'\nplot ", f);
  put_quoted(f, csv);
  fprintf(f,
          " using 1:%d with lines title 'T', '' using 1:%d with lines title 'V', "
          "'' using 1:(column(%d) + column(%d)) with lines title 'T + V'\n",
          col_T, col_V, col_T, col_V);
  for (int i = 0; i < nplain; i++) {
    const char *name = m->coord_names[i];
    fputs("set title ", f);
    char buf[300];
    snprintf(buf, sizeof buf, "phase portrait: %s", name);
    put_quoted(f, buf);
    fputs("\nset xlabel ", f);
    put_quoted(f, name);
    fputs("\nset ylabel ", f);
    snprintf(buf, sizeof buf, "%s'", name);
    put_quoted(f, buf);
    fputs("\nplot ", f);
    put_quoted(f, csv);
    fprintf(f, " using %d:%d with lines notitle\n", 2 + i, 2 + nq + i);
  }
  fputs("unset multiplot\nset output\n", f);
  return ferror(f) ? -1 : 0;
}
#endif

#ifdef GNUPLOT_PATH
/* Write a gnuplot script with `write` into a temporary file, run gnuplot on
** it and rename its SVG into place. */
static int render(PlotScriptWriter write, const void *ctx, const char *data_path,
                  const char *svg_path, char *err, size_t errlen) {
  char script[] = "/tmp/eomc-plot-XXXXXX";
  size_t tlen = strlen(svg_path) + 32;
  char *tmp_svg = malloc(tlen);
  int rc = -1, fd = mkstemp(script);
  FILE *f = NULL;
  if (!tmp_svg || fd < 0) {
    snprintf(err, errlen, "cannot create a temporary file: %s", strerror(errno));
    goto out;
  }
  snprintf(tmp_svg, tlen, "%s.tmp.%ld", svg_path, (long)getpid());
  f = fdopen(fd, "w");
  if (!f || write(f, ctx, data_path, tmp_svg) != 0 || fclose(f) != 0) {
    if (!f) close(fd);
    f = NULL;
    snprintf(err, errlen, "cannot write the gnuplot script %s", script);
    goto out;
  }
  f = NULL;
  pid_t pid = fork();
  if (pid < 0) {
    snprintf(err, errlen, "cannot start gnuplot: %s", strerror(errno));
    goto out;
  }
  if (pid == 0) {
    char *argv[] = {(char *)GNUPLOT_PATH, script, NULL};
    execvp(argv[0], argv);
    _exit(127);
  }
  int status;
  while (waitpid(pid, &status, 0) < 0)
    if (errno != EINTR) break;
  if (!WIFEXITED(status) || WEXITSTATUS(status) != 0) {
    snprintf(err, errlen, "gnuplot failed (script %s)", script);
    unlink(tmp_svg);
    goto out_keep_script;
  }
  if (rename(tmp_svg, svg_path) != 0) {
    snprintf(err, errlen, "cannot write %s: %s", svg_path, strerror(errno));
    unlink(tmp_svg);
    goto out;
  }
  rc = 0;
out:
  if (fd >= 0) unlink(script);
out_keep_script:
  free(tmp_svg);
  return rc;
}

static int write_sim_script(FILE *f, const void *ctx, const char *csv, const char *out) {
  return write_script(f, (const struct eom_model *)ctx, csv, out);
}

/* Growth rates and frequencies against the swept rate (plot_sweep_svg). */
typedef struct SweepPlot {
  const char *name;
  int neig;
} SweepPlot;

static int write_sweep_script(FILE *f, const void *ctx, const char *csv, const char *out) {
  const SweepPlot *sp = ctx;
  char buf[300];
  fputs("set terminal svg size 900,760 dynamic noenhanced font 'sans,11'\nset output ", f);
  put_quoted(f, out);
  fputs("\nset datafile separator ','\nset grid\nset key off\nset multiplot layout 2,1\n", f);
  snprintf(buf, sizeof buf, "%s'", sp->name);
  fputs("set xlabel ", f);
  put_quoted(f, buf);
  fputs("\nset title 'growth rates Re(s) (above 0: unstable)'\nset ylabel '1/s'\n"
        "set xzeroaxis lt -1\nplot ", f);
  for (int k = 0; k < sp->neig; k++) {
    fputs(k ? ", '' " : "", f);
    if (!k) put_quoted(f, csv);
    fprintf(f, " using 1:%d with points pt 7 ps 0.5", 4 + 2 * k);
  }
  fputs("\nset title 'frequencies |Im(s)|'\nset ylabel 'rad/s'\nplot ", f);
  for (int k = 0; k < sp->neig; k++) {
    fputs(k ? ", '' " : "", f);
    if (!k) put_quoted(f, csv);
    fprintf(f, " using 1:(abs(column(%d))) with points pt 7 ps 0.5", 5 + 2 * k);
  }
  fputs("\nunset multiplot\nset output\n", f);
  return ferror(f) ? -1 : 0;
}
#endif

int plot_svg(const struct eom_model *m, const char *csv_path, const char *svg_path, char *err,
             size_t errlen) {
#ifndef GNUPLOT_PATH
  (void)m, (void)csv_path, (void)svg_path;
  return plot_available(err, errlen);
#else
  if (plot_available(err, errlen) != 0) return -1;
  return render(write_sim_script, m, csv_path, svg_path, err, errlen);
#endif
}

int plot_sweep_svg(const char *name, int neig, const char *csv_path, const char *svg_path,
                   char *err, size_t errlen) {
#ifndef GNUPLOT_PATH
  (void)name, (void)neig, (void)csv_path, (void)svg_path;
  return plot_available(err, errlen);
#else
  if (plot_available(err, errlen) != 0) return -1;
  SweepPlot sp = {name, neig};
  return render(write_sweep_script, &sp, csv_path, svg_path, err, errlen);
#endif
}

int plot_render(PlotScriptWriter write, const void *ctx, const char *data_path,
                const char *svg_path, char *err, size_t errlen) {
#ifndef GNUPLOT_PATH
  (void)write, (void)ctx, (void)data_path, (void)svg_path;
  return plot_available(err, errlen);
#else
  if (plot_available(err, errlen) != 0) return -1;
  return render(write, ctx, data_path, svg_path, err, errlen);
#endif
}
