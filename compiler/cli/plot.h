/*
** plot.h — draw a simulation CSV (`eomc sim --plot`) or a sweep of steady
** motions (`eomc modes --sweep-rate --plot`) as an SVG with gnuplot.
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

/* Plot the CSV written by eomc sim for model m (columns t, q, q', outputs,
** T, V) into svg_path: coordinates against time, T, V and T + V against
** time, and a phase portrait (q', q) per coordinate.  The SVG goes through
** a temporary renamed into place.  0, or -1 with a message in err. */
int plot_svg(const struct eom_model *m, const char *csv_path, const char *svg_path, char *err,
             size_t errlen);

/* Plot the table of `eomc modes --sweep-rate` (columns: the swept rate,
** max growth, stable flag, then Re and Im of each of neig eigenvalues)
** into svg_path: growth rates and frequencies against the rate of `name`.
** 0, or -1 with a message in err. */
int plot_sweep_svg(const char *name, int neig, const char *csv_path, const char *svg_path,
                   char *err, size_t errlen);

/* Any plot: run gnuplot on the script `write` writes for data_path, its
** SVG going through a temporary renamed to svg_path.  0, or -1 with a
** message in err. */
int plot_render(PlotScriptWriter write, const void *ctx, const char *data_path,
                const char *svg_path, char *err, size_t errlen);

#endif
