/*
** plot.h — draw a simulation CSV as an SVG with gnuplot (`eomc sim --plot`).
*/
#ifndef EOMC_PLOT_H
#define EOMC_PLOT_H

#include <stddef.h>
#include <stdio.h>
#include "eom/model.h"

/* Is gnuplot available?  0, or -1 with a message in err. */
int plot_available(char *err, size_t errlen);

/* Plot the CSV written by eomc sim for model m (columns t, q, q', outputs,
** T, V) into svg_path: coordinates against time, T, V and T + V against
** time, and a phase portrait (q', q) per coordinate.  The SVG goes through
** a temporary renamed into place.  0, or -1 with a message in err. */
int plot_svg(const struct eom_model *m, const char *csv_path, const char *svg_path, char *err,
             size_t errlen);

/* Run gnuplot on the script put_script() writes into f, whose output goes to
** `out` (a temporary renamed to svg_path when gnuplot succeeds).  put_script
** returns 0, or -1 when it failed.  0, or -1 with a message in err. */
int plot_run(int (*put_script)(FILE *f, void *ctx, const char *out), void *ctx, const char *svg_path,
             char *err, size_t errlen);

#endif
