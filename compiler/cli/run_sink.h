/*
** run_sink.h — where the rows of `eomc sim` go: a CSV (a file, standard
** output) or an HDF5 file, chosen by the name (.h5, .hdf5), with only the
** selected columns.  A named file is written to a temporary beside it and
** renamed into place when the run is kept, removed when it is not (an
** interrupted run), so nothing half-written ever carries the name.  For a
** plot, the rows also go to a scratch CSV when the output is not one.
*/
#ifndef EOMC_RUN_SINK_H
#define EOMC_RUN_SINK_H

#include <stddef.h>
#include <stdio.h>
#include "cli/h5_out.h"
#include "eom/model.h"

typedef struct RunSink {
  const struct eom_model *m;
  const int *cols;      /* row columns written, in order */
  int ncols;
  const char *out;      /* -o, or NULL for standard output */
  FILE *csv;            /* the CSV (stdout, the file or its temporary), or NULL */
  H5Out *h5;            /* the HDF5 file (its temporary), or NULL */
  char *tmp;            /* temporary renamed to out when kept */
  FILE *plot_csv;       /* a scratch copy for the plot, or NULL */
  char *plot_tmp;
  double *lo, *hi;      /* per column: the range of finite values written */
  double *sel;          /* ncols: a row's selected values */
  long rows;
  int finished;
} RunSink;

/* Does the name ask for HDF5 (.h5, .hdf5)? */
int run_sink_is_h5(const char *path);

/* Open the destinations; `plot` asks for a CSV the plot can read.  `meta`
** fills the HDF5 attributes (its columns are set here).  0, or -1 with a
** message in err and nothing left behind. */
int run_sink_open(RunSink *s, const struct eom_model *m, const int *cols, int ncols,
                  const char *out, int plot, const H5Meta *meta, char *err, size_t errlen);

/* One row: all eom_row_width(m) values of eom_row_eval; the selected ones
** are written.  0, or -1 with a message in err. */
int run_sink_row(RunSink *s, const double *row, char *err, size_t errlen);

/* Close the destinations; when `keep`, rename the temporary into place,
** else remove it.  0, or -1 with a message in err. */
int run_sink_finish(RunSink *s, int keep, char *err, size_t errlen);

/* A CSV file of the rows for the plot (after run_sink_finish with keep). */
const char *run_sink_plot_data(const RunSink *s);

/* Remove what is left (the scratch CSV, a temporary) and free. */
void run_sink_free(RunSink *s);

#endif
