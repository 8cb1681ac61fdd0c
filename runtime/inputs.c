/*
** inputs.c — input signals u(t): constants, or columns of a CSV table
** interpolated linearly in time and held at the end values outside it.
*/
#include <assert.h>
#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "eom/runtime.h"

struct eom_inputs {
  int nu;
  double *constant;   /* nu */
  int *column;        /* nu: column of the table (1..), or 0 for the constant */
  int nrows, ncols;   /* the table: ncols numbers per row, t first */
  double *rows;       /* nrows * ncols */
};

eom_inputs *eom_inputs_new(int nu) {
  assert(nu >= 0);
  eom_inputs *in = calloc(1, sizeof *in);
  if (!in) return NULL;
  in->nu = nu;
  in->constant = calloc((size_t)nu + 1, sizeof(double));
  in->column = calloc((size_t)nu + 1, sizeof(int));
  if (!in->constant || !in->column) {
    eom_inputs_free(in);
    return NULL;
  }
  return in;
}

void eom_inputs_free(eom_inputs *in) {
  if (!in) return;
  free(in->constant);
  free(in->column);
  free(in->rows);
  free(in);
}

int eom_inputs_set_constant(eom_inputs *in, int j, double value) {
  if (!in || j < 0 || j >= in->nu) return EOM_EINVAL;
  in->constant[j] = value;
  in->column[j] = 0;
  return EOM_OK;
}

void eom_inputs_eval(const eom_inputs *in, double t, double *u) {
  if (!in) return; /* a model without inputs, or all zero: u is left as zeroed by the caller */
  for (int j = 0; j < in->nu; j++) {
    int col = in->column[j];
    if (col == 0 || in->nrows == 0) {
      u[j] = in->constant[j];
      continue;
    }
    const double *r = in->rows;
    int nc = in->ncols, last = in->nrows - 1;
    if (t <= r[0]) {
      u[j] = r[col];
    } else if (t >= r[(size_t)last * nc]) {
      u[j] = r[(size_t)last * nc + col];
    } else {
      int lo = 0, hi = last; /* invariant: t_lo <= t < t_hi */
      while (hi - lo > 1) {
        int mid = lo + (hi - lo) / 2;
        if (r[(size_t)mid * nc] <= t) lo = mid; else hi = mid;
      }
      double t0 = r[(size_t)lo * nc], t1 = r[(size_t)hi * nc];
      double w = (t - t0) / (t1 - t0);
      u[j] = (1 - w) * r[(size_t)lo * nc + col] + w * r[(size_t)hi * nc + col];
    }
  }
}

/* Next comma-separated field of *cursor, trimmed of blanks and quotes. */
static char *next_field(char **cursor) {
  char *s = *cursor, *end;
  if (!s) return NULL;
  char *comma = strchr(s, ',');
  if (comma) {
    *comma = '\0';
    *cursor = comma + 1;
  } else {
    *cursor = NULL;
  }
  while (isspace((unsigned char)*s)) s++;
  end = s + strlen(s);
  while (end > s && isspace((unsigned char)end[-1])) *--end = '\0';
  if (end - s >= 2 && s[0] == '"' && end[-1] == '"') {
    end[-1] = '\0';
    s++;
  }
  return s;
}

/* Did fgets stop before the end of the line (a line longer than the buffer)? */
static int truncated(const char *line, FILE *f) {
  size_t len = strlen(line);
  return len > 0 && line[len - 1] != '\n' && !feof(f);
}

static int blank_or_comment(const char *line) {
  while (isspace((unsigned char)*line)) line++;
  return *line == '\0' || *line == '#';
}

int eom_inputs_load_csv(eom_inputs *in, const char *path, const char *const *names, char *err,
                        size_t errlen) {
  assert(in && path);
  FILE *f = fopen(path, "r");
  char line[8192];
  int lineno = 0, ncols = 0, *target = NULL, status = EOM_EINPUT;
  double *rows = NULL;
  size_t nrows = 0, cap = 0;

  if (!f) {
    snprintf(err, errlen, "%s: cannot open: %s", path, strerror(errno));
    return EOM_EINPUT;
  }
  /* Header: t, then input names. */
  line[0] = '\0';
  while (fgets(line, sizeof line, f)) {
    lineno++;
    if (truncated(line, f)) {
      snprintf(err, errlen, "%s:%d: line longer than %zu bytes", path, lineno, sizeof line - 2);
      goto out;
    }
    if (!blank_or_comment(line)) break;
    line[0] = '\0';
  }
  if (line[0] == '\0' || blank_or_comment(line)) {
    snprintf(err, errlen, "%s: empty table (a header line `t,INPUT,...` is needed)", path);
    goto out;
  }
  target = calloc(sizeof line, sizeof(int));
  if (!target) goto nomem;
  char *cur = line, *fld;
  while ((fld = next_field(&cur)) != NULL) {
    if (ncols == 0) {
      if (strcmp(fld, "t") != 0) {
        snprintf(err, errlen, "%s:%d: the first column must be `t`, not '%s'", path, lineno, fld);
        goto out;
      }
      target[ncols++] = -1;
      continue;
    }
    int j = 0;
    while (j < in->nu && strcmp(names[j], fld) != 0) j++;
    if (j == in->nu) {
      snprintf(err, errlen, "%s:%d: '%s' is not an input of the model", path, lineno, fld);
      goto out;
    }
    for (int k = 1; k < ncols; k++)
      if (target[k] == j) {
        snprintf(err, errlen, "%s:%d: input '%s' appears twice", path, lineno, fld);
        goto out;
      }
    target[ncols++] = j;
  }
  /* Rows of numbers. */
  while (fgets(line, sizeof line, f)) {
    lineno++;
    if (truncated(line, f)) {
      snprintf(err, errlen, "%s:%d: line longer than %zu bytes", path, lineno, sizeof line - 2);
      goto out;
    }
    if (blank_or_comment(line)) continue;
    if (nrows == cap) {
      cap = cap ? 2 * cap : 64;
      double *grown = realloc(rows, cap * (size_t)ncols * sizeof(double));
      if (!grown) goto nomem;
      rows = grown;
    }
    double *row = rows + nrows * (size_t)ncols;
    int k = 0;
    cur = line;
    while ((fld = next_field(&cur)) != NULL) {
      char *end;
      if (k >= ncols) {
        snprintf(err, errlen, "%s:%d: more fields than the header's %d", path, lineno, ncols);
        goto out;
      }
      errno = 0;
      row[k] = strtod(fld, &end);
      if (end == fld || *end != '\0' || !isfinite(row[k])) {
        snprintf(err, errlen, "%s:%d: field %d: '%s' is not a finite number", path, lineno,
                 k + 1, fld);
        goto out;
      }
      k++;
    }
    if (k != ncols) {
      snprintf(err, errlen, "%s:%d: %d fields, the header has %d", path, lineno, k, ncols);
      goto out;
    }
    if (nrows > 0 && !(row[0] > row[-ncols])) {
      snprintf(err, errlen, "%s:%d: times must increase strictly (%g after %g)", path, lineno,
               row[0], row[-ncols]);
      goto out;
    }
    nrows++;
  }
  if (nrows == 0) {
    snprintf(err, errlen, "%s: the table has a header but no rows", path);
    goto out;
  }
  if (nrows > (size_t)0x7fffffff / (size_t)ncols) {
    snprintf(err, errlen, "%s: table too large", path);
    goto out;
  }
  free(in->rows);
  in->rows = rows;
  rows = NULL;
  in->nrows = (int)nrows;
  in->ncols = ncols;
  for (int k = 1; k < ncols; k++) in->column[target[k]] = k;
  status = EOM_OK;
  goto out;
nomem:
  snprintf(err, errlen, "%s: out of memory", path);
out:
  free(rows);
  free(target);
  fclose(f);
  return status;
}
