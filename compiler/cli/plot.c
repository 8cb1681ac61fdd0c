/*
** plot.c — run gnuplot (fork + execvp, never a shell) on a script written
** for the data, into an image whose format follows its name (.svg, .png,
** .pdf), through a temporary renamed into place.  The plot of a run is
** plot_run.c's; the plot of a sweep of steady motions (growth rates and
** frequencies of the eigenvalues against the swept rate) is here.
*/
#include "cli/plot.h"

#ifdef HAVE_CONFIG_H
#include "config.h"
#endif

#include <assert.h>
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>

#include "cli/tmpfiles.h"

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

/* The image formats, by the output's extension (gnuplot's cairo terminals
** for png and pdf; its own svg terminal). */
static const struct {
  const char *ext, *terminal, *font;
} formats[] = {
  {".svg", "svg", "sans,11"},
  {".png", "pngcairo", "sans,10"},
  {".pdf", "pdfcairo", "sans,8"},
};

static int format_of(const char *path) {
  size_t n = strlen(path);
  for (size_t i = 0; i < sizeof formats / sizeof formats[0]; i++) {
    size_t k = strlen(formats[i].ext);
    if (n > k && strcmp(path + n - k, formats[i].ext) == 0) return (int)i;
  }
  return -1;
}

int plot_format_check(const char *path, char *err, size_t errlen) {
  if (format_of(path) >= 0) return 0;
  snprintf(err, errlen, "cannot tell the plot format of '%s': name it .svg, .png or .pdf", path);
  return -1;
}

void plot_quoted(FILE *f, const char *s) {
  fputc('\'', f);
  for (; *s; s++) {
    if (*s == '\'') fputc('\'', f);
    fputc(*s, f);
  }
  fputc('\'', f);
}

void plot_terminal(FILE *f, const char *out, int width, int height) {
  int k = format_of(out);
  assert(k >= 0); /* render() names its temporary with the format's extension */
  if (strcmp(formats[k].terminal, "pdfcairo") == 0) /* inches, at 100 px per inch */
    fprintf(f, "set terminal pdfcairo size %.2fin,%.2fin noenhanced font '%s'\n", width / 100.0,
            height / 100.0, formats[k].font);
  else
    fprintf(f, "set terminal %s size %d,%d %snoenhanced font '%s'\n", formats[k].terminal, width,
            height, strcmp(formats[k].terminal, "svg") == 0 ? "dynamic " : "", formats[k].font);
  fputs("set output ", f);
  plot_quoted(f, out);
  fputc('\n', f);
}

#ifdef GNUPLOT_PATH
/* Write a gnuplot script with `write` into a temporary file, run gnuplot on
** it and rename its SVG into place. */
static int render(PlotScriptWriter write, const void *ctx, const char *data_path,
                  const char *svg_path, char *err, size_t errlen) {
  char *script = NULL;
  size_t tlen = strlen(svg_path) + 40;
  char *tmp_svg = malloc(tlen);
  int rc = -1, fd = -1;
  FILE *f = NULL;
  if (plot_format_check(svg_path, err, errlen) != 0) goto out;
  fd = tmpfiles_create("eomc-plot", &script);
  if (!tmp_svg || fd < 0) {
    snprintf(err, errlen, "cannot create a temporary file in %s: %s", tmpfiles_dir(),
             strerror(errno));
    goto out;
  }
  /* The temporary keeps the extension: it names the format (plot_terminal). */
  snprintf(tmp_svg, tlen, "%s.tmp.%ld%s", svg_path, (long)getpid(),
           formats[format_of(svg_path)].ext);
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
  free(script);
  free(tmp_svg);
  return rc;
}

/* Growth rates and frequencies against the swept rate (plot_sweep_svg). */
typedef struct SweepPlot {
  const char *name;
  int neig;
} SweepPlot;

static int write_sweep_script(FILE *f, const void *ctx, const char *csv, const char *out) {
  const SweepPlot *sp = ctx;
  char buf[300];
  plot_terminal(f, out, 900, 760);
  fputs("set datafile separator ','\nset grid\nset key off\nset multiplot layout 2,1\n", f);
  snprintf(buf, sizeof buf, "%s'", sp->name);
  fputs("set xlabel ", f);
  plot_quoted(f, buf);
  fputs("\nset title 'growth rates Re(s) (above 0: unstable)'\nset ylabel '1/s'\n"
        "set xzeroaxis lt -1\nplot ", f);
  for (int k = 0; k < sp->neig; k++) {
    fputs(k ? ", '' " : "", f);
    if (!k) plot_quoted(f, csv);
    fprintf(f, " using 1:%d with points pt 7 ps 0.5", 4 + 2 * k);
  }
  fputs("\nset title 'frequencies |Im(s)|'\nset ylabel 'rad/s'\nplot ", f);
  for (int k = 0; k < sp->neig; k++) {
    fputs(k ? ", '' " : "", f);
    if (!k) plot_quoted(f, csv);
    fprintf(f, " using 1:(abs(column(%d))) with points pt 7 ps 0.5", 5 + 2 * k);
  }
  fputs("\nunset multiplot\nset output\n", f);
  return ferror(f) ? -1 : 0;
}
#endif

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
