/*
** h5_out.c — HDF5 output of a run (h5_out.h), through the HDF5 C library
** (The HDF Group, HDF5 Reference Manual, H5D/H5S/H5A/H5T interfaces).
**
** Rows are buffered H5_CHUNK_ROWS at a time; each full buffer extends the
** dataset and writes one hyperslab, so the cost per row is a memcpy.  The
** library's own error printing is switched off: errors come back as
** messages for the caller to report.
*/
#include "cli/h5_out.h"

#ifdef HAVE_CONFIG_H
#include "config.h"
#endif

#include <assert.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#ifdef HAVE_HDF5
#include <hdf5.h>

/* Rows per chunk: 8192 rows of ~20 columns is ~1.3 MB, large enough that
** the per-write overhead vanishes, small enough to stay in cache. */
#define H5_CHUNK_ROWS 8192

struct H5Out {
  hid_t file, dset;
  int ncols;
  hsize_t written;   /* rows in the file */
  double *buf;       /* H5_CHUNK_ROWS x ncols */
  int nbuf;          /* rows in buf */
};

const char *h5_out_library(void) {
  static char text[64];
  unsigned maj = 0, min = 0, rel = 0;
  H5get_libversion(&maj, &min, &rel);
  snprintf(text, sizeof text, "HDF5 %u.%u.%u", maj, min, rel);
  return text;
}

/* A variable-length UTF-8 string type (the caller closes it). */
static hid_t string_type(void) {
  hid_t t = H5Tcopy(H5T_C_S1);
  if (t < 0) return t;
  H5Tset_size(t, H5T_VARIABLE);
  H5Tset_cset(t, H5T_CSET_UTF8);
  return t;
}

/* Attribute `name` on obj: n strings (n = 0: one scalar string, strs[0]). */
static int put_strings(hid_t obj, const char *name, const char *const *strs, int n) {
  hid_t t = string_type();
  hsize_t dims[1] = {(hsize_t)(n > 0 ? n : 1)};
  hid_t space = n > 0 ? H5Screate_simple(1, dims, NULL) : H5Screate(H5S_SCALAR);
  hid_t attr = t >= 0 && space >= 0 ? H5Acreate2(obj, name, t, space, H5P_DEFAULT, H5P_DEFAULT)
                                    : -1;
  int rc = attr >= 0 && H5Awrite(attr, t, strs) >= 0 ? 0 : -1;
  if (attr >= 0) H5Aclose(attr);
  if (space >= 0) H5Sclose(space);
  if (t >= 0) H5Tclose(t);
  return rc;
}

/* Attribute `parameters`: np records {name, value}. */
typedef struct ParamRecord {
  const char *name;
  double value;
} ParamRecord;

static int put_parameters(hid_t obj, const H5Meta *meta) {
  int n = meta->np, rc = -1;
  ParamRecord *rec = calloc((size_t)n + 1, sizeof *rec);
  hid_t s = string_type(), t = H5Tcreate(H5T_COMPOUND, sizeof(ParamRecord));
  hsize_t dims[1] = {(hsize_t)n};
  hid_t space = H5Screate_simple(1, dims, NULL), attr = -1;
  if (!rec || s < 0 || t < 0 || space < 0) goto out;
  for (int i = 0; i < n; i++) rec[i].name = meta->param_names[i], rec[i].value = meta->param_values[i];
  if (H5Tinsert(t, "name", HOFFSET(ParamRecord, name), s) < 0 ||
      H5Tinsert(t, "value", HOFFSET(ParamRecord, value), H5T_NATIVE_DOUBLE) < 0)
    goto out;
  attr = H5Acreate2(obj, "parameters", t, space, H5P_DEFAULT, H5P_DEFAULT);
  if (attr >= 0 && H5Awrite(attr, t, rec) >= 0) rc = 0;
out:
  if (attr >= 0) H5Aclose(attr);
  if (space >= 0) H5Sclose(space);
  if (t >= 0) H5Tclose(t);
  if (s >= 0) H5Tclose(s);
  free(rec);
  return rc;
}

static hid_t create_rows(hid_t file, int ncols) {
  hsize_t dims[2] = {0, (hsize_t)ncols}, maxdims[2] = {H5S_UNLIMITED, (hsize_t)ncols};
  hsize_t chunk[2] = {H5_CHUNK_ROWS, (hsize_t)ncols};
  hid_t space = H5Screate_simple(2, dims, maxdims), dcpl = H5Pcreate(H5P_DATASET_CREATE), d = -1;
  if (space >= 0 && dcpl >= 0 && H5Pset_chunk(dcpl, 2, chunk) >= 0)
    d = H5Dcreate2(file, "rows", H5T_IEEE_F64LE, space, H5P_DEFAULT, dcpl, H5P_DEFAULT);
  if (dcpl >= 0) H5Pclose(dcpl);
  if (space >= 0) H5Sclose(space);
  return d;
}

H5Out *h5_out_open(const char *path, const H5Meta *meta, char *err, size_t errlen) {
  assert(path && meta && meta->ncols > 0);
  H5Eset_auto2(H5E_DEFAULT, NULL, NULL);
  H5Out *h = calloc(1, sizeof *h);
  if (!h || !(h->buf = malloc((size_t)H5_CHUNK_ROWS * (size_t)meta->ncols * sizeof(double)))) {
    snprintf(err, errlen, "out of memory");
    if (h) free(h);
    return NULL;
  }
  h->ncols = meta->ncols;
  h->dset = -1;
  h->file = H5Fcreate(path, H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
  if (h->file < 0) {
    snprintf(err, errlen, "cannot create the HDF5 file %s", path);
    free(h->buf);
    free(h);
    return NULL;
  }
  const char *model[1] = {meta->model}, *version[1] = {meta->version};
  if ((h->dset = create_rows(h->file, meta->ncols)) < 0 ||
      put_strings(h->dset, "columns", meta->columns, meta->ncols) != 0 ||
      put_strings(h->dset, "units", meta->units, meta->ncols) != 0 ||
      put_strings(h->dset, "model", model, 0) != 0 ||
      put_strings(h->dset, "eomc_version", version, 0) != 0 ||
      (meta->np > 0 && put_parameters(h->dset, meta) != 0)) {
    snprintf(err, errlen, "cannot write the HDF5 dataset 'rows' and its attributes in %s", path);
    char ignored[8];
    h5_out_close(h, ignored, sizeof ignored);
    return NULL;
  }
  return h;
}

/* Extend the dataset by the buffered rows and write them. */
static int flush_rows(H5Out *h) {
  if (h->nbuf == 0) return 0;
  hsize_t dims[2] = {h->written + (hsize_t)h->nbuf, (hsize_t)h->ncols};
  hsize_t start[2] = {h->written, 0}, count[2] = {(hsize_t)h->nbuf, (hsize_t)h->ncols};
  if (H5Dset_extent(h->dset, dims) < 0) return -1;
  hid_t fspace = H5Dget_space(h->dset), mspace = H5Screate_simple(2, count, NULL);
  int rc = -1;
  if (fspace >= 0 && mspace >= 0 &&
      H5Sselect_hyperslab(fspace, H5S_SELECT_SET, start, NULL, count, NULL) >= 0 &&
      H5Dwrite(h->dset, H5T_NATIVE_DOUBLE, mspace, fspace, H5P_DEFAULT, h->buf) >= 0)
    rc = 0;
  if (mspace >= 0) H5Sclose(mspace);
  if (fspace >= 0) H5Sclose(fspace);
  if (rc == 0) h->written += (hsize_t)h->nbuf, h->nbuf = 0;
  return rc;
}

int h5_out_row(H5Out *h, const double *row, char *err, size_t errlen) {
  assert(h && row);
  memcpy(h->buf + (size_t)h->nbuf * (size_t)h->ncols, row, (size_t)h->ncols * sizeof(double));
  if (++h->nbuf < H5_CHUNK_ROWS) return 0;
  if (flush_rows(h) == 0) return 0;
  snprintf(err, errlen, "writing the HDF5 rows failed");
  return -1;
}

int h5_out_close(H5Out *h, char *err, size_t errlen) {
  int rc = 0;
  if (!h) return 0;
  if (h->dset >= 0 && flush_rows(h) != 0) rc = -1;
  if (h->dset >= 0 && H5Dclose(h->dset) < 0) rc = -1;
  if (h->file >= 0 && H5Fclose(h->file) < 0) rc = -1;
  if (rc != 0) snprintf(err, errlen, "writing the HDF5 file failed");
  free(h->buf);
  free(h);
  return rc;
}

#else /* !HAVE_HDF5 */

const char *h5_out_library(void) { return NULL; }

H5Out *h5_out_open(const char *path, const H5Meta *meta, char *err, size_t errlen) {
  (void)path, (void)meta;
  snprintf(err, errlen,
           "this eomc was built without HDF5, so it cannot write .h5 files (install "
           "libhdf5-dev and re-run configure; see 'eomc --version')");
  return NULL;
}

int h5_out_row(H5Out *h, const double *row, char *err, size_t errlen) {
  (void)h, (void)row, (void)err, (void)errlen;
  assert(0 && "no HDF5 writer without HDF5");
  return -1;
}

int h5_out_close(H5Out *h, char *err, size_t errlen) {
  (void)h, (void)err, (void)errlen;
  return 0;
}

#endif
