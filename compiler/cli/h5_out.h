/*
** h5_out.h — a run written as HDF5 (`eomc sim -o RUN.h5`): one 2-D
** dataset `rows` (rows x columns, 64-bit IEEE floats, chunked and extended
** as the run goes) with the attributes `columns` and `units` (strings, one
** per column), `model` (its name), `parameters` (name and value of each
** parameter used) and `eomc_version`.  The numbers are those of the CSV.
**
** Built only when configure found libhdf5; otherwise h5_out_open says so.
*/
#ifndef EOMC_H5_OUT_H
#define EOMC_H5_OUT_H

#include <stddef.h>

typedef struct H5Out H5Out;

/* What the file says about the run besides its rows. */
typedef struct H5Meta {
  const char *model, *version;
  const char *const *columns, *const *units;  /* ncols each */
  int ncols;
  const char *const *param_names;
  const double *param_values;
  int np;
} H5Meta;

/* "HDF5 x.y.z" when this eomc writes HDF5, else NULL. */
const char *h5_out_library(void);

/* Create `path` (truncated) for rows of meta->ncols numbers.  NULL with a
** message in err when it cannot (or when HDF5 was not built in). */
H5Out *h5_out_open(const char *path, const H5Meta *meta, char *err, size_t errlen);

/* Append one row of ncols numbers (buffered; written a chunk at a time).
** 0, or -1 with a message in err. */
int h5_out_row(H5Out *h, const double *row, char *err, size_t errlen);

/* Write what is buffered and close the file.  0, or -1 with a message in
** err; h is freed either way. */
int h5_out_close(H5Out *h, char *err, size_t errlen);

#endif
