/*
** plot_run.h — the plot of a run (`eomc sim --plot`): one panel per unit
** (coordinates in m, in rad, their rates, outputs, inputs, multipliers,
** energies), each against t with its names and unit on the y-axis, then a
** phase portrait (q', q) per coordinate whose both columns are plotted.
** The model's name is the title.
*/
#ifndef EOMC_PLOT_RUN_H
#define EOMC_PLOT_RUN_H

#include <stddef.h>
#include "eom/model.h"

typedef struct PlotRun {
  const struct eom_model *m;
  const int *cols;    /* column i of the CSV is row column cols[i] (eom_row_column) */
  int ncols;
  const double *lo, *hi;  /* per CSV column: smallest and largest finite value
                             written (lo > hi: none) */
} PlotRun;

/* Draw the CSV at csv_path (written with r's columns, t among them) into
** out_path; the format follows its name.  0, or -1 with a message in err. */
int plot_run(const PlotRun *r, const char *csv_path, const char *out_path, char *err,
             size_t errlen);

/* The smallest y-span a panel shows around values in [lo, hi]: a signal
** that is constant up to round-off is drawn flat, not magnified into
** zig-zags.  Sets *ylo, *yhi and returns 1 when the range must be fixed,
** 0 when gnuplot's autoscale is right (the span is large enough). */
int plot_min_span(double lo, double hi, double *ylo, double *yhi);

#endif
