/*
** sweep_plot.h — `eomc sweep --plot`: the spread of the runs over time as
** percentile bands (5-95 %, 25-75 % and the median) of every coordinate
** and output, drawn with gnuplot.
*/
#ifndef EOMC_SWEEP_PLOT_H
#define EOMC_SWEEP_PLOT_H

#include <stddef.h>
#include "cli/sweep_table.h"

/* Percentile pct (0..100) of the n finite values in v (sorted in place,
** NaNs dropped first) by linear interpolation between order statistics;
** NaN when none is finite.  *n gets the finite count. */
double sweep_percentile(double *v, size_t *n, double pct);

/* Plot the traces kept in t (trace times t0..t_end) into svg_path.  0, or
** -1 with a message in err. */
int sweep_bands_svg(const SweepTable *t, double t0, double t_end, const char *svg_path, char *err,
                   size_t errlen);

#endif
