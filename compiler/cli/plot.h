/*
** plot.h — images drawn by gnuplot: the format follows the file name
** (.svg, .png, .pdf).  A run's plot is in plot_run.h; a sweep of steady
** motions (`eomc modes --sweep-rate --plot`) is here.
*/
#ifndef EOMC_PLOT_H
#define EOMC_PLOT_H

#include <stddef.h>
#include <stdio.h>
#include "eom/model.h"

/* Writes a gnuplot script into f that reads `data` and draws into `out`;
** 0, or -1 when writing failed. */
typedef int (*PlotScriptWriter)(FILE *f, const void *ctx, const char *data, const char *out);

/* Is gnuplot available?  0, or -1 with a message in err. */
int plot_available(char *err, size_t errlen);

/* Is `path` named for a format the plots know (.svg, .png, .pdf)?  0, or
** -1 with a message in err. */
int plot_format_check(const char *path, char *err, size_t errlen);

/* For script writers: `set terminal` for the format `out` is named in
** (width x height pixels; inches at 100 px per inch for pdf) and `set
** output`; a gnuplot single-quoted string. */
void plot_terminal(FILE *f, const char *out, int width, int height);
void plot_quoted(FILE *f, const char *s);

/* Plot the table of `eomc modes --sweep-rate` (columns: the swept rate,
** max growth, stable flag, then Re and Im of each of neig eigenvalues)
** into svg_path: growth rates and frequencies against the rate of `name`.
** 0, or -1 with a message in err. */
int plot_sweep_svg(const char *name, int neig, const char *csv_path, const char *svg_path,
                   char *err, size_t errlen);

/* Any plot: run gnuplot on the script `write` writes for data_path, its
** image going through a temporary renamed to svg_path (the temporary
** keeps the extension, so the writer's plot_terminal(f, out, ...) picks
** the format).  0, or -1 with a
** message in err. */
int plot_render(PlotScriptWriter write, const void *ctx, const char *data_path,
                const char *svg_path, char *err, size_t errlen);

#endif
