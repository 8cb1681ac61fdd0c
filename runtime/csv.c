/*
** csv.c — write simulation samples as CSV: a header naming every column
** (t, coordinates, rates as name', outputs, T, V and, for a model with
** constraints, the multipliers lambda1..lambdaNC) and one row per sample.
** The multipliers are those of accel_constrained at the sample: the
** generalized constraint force is +Gᵀλ (G = dphi/dq, phi = left - right).
** Each number is printed as %.15g when that reads back as the same double
** (short and readable for round values), else as %.17g (always exact);
** a negative zero is written as 0.
*/
#include <assert.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "eom/runtime.h"

static void put_number(FILE *f, const char *sep, double v) {
  char buf[40];
  if (v == 0) v = 0;  /* -0 (from -sin 0, say) reads as 0 */
  snprintf(buf, sizeof buf, "%.15g", v);
  if (strtod(buf, NULL) != v) snprintf(buf, sizeof buf, "%.17g", v);
  fputs(sep, f);
  fputs(buf, f);
}

int eom_csv_write_header(FILE *f, const struct eom_model *m) {
  assert(f && m);
  fputs("t", f);
  for (int i = 0; i < m->nq; i++) fprintf(f, ",%s", m->coord_names[i]);
  for (int i = 0; i < m->nq; i++) fprintf(f, ",%s'", m->coord_names[i]);
  for (int i = 0; i < m->ny; i++) fprintf(f, ",%s", m->output_names[i]);
  fputs(",T,V", f);
  if (m->accel_constrained)
    for (int k = 0; k < m->nc + m->nvc; k++) fprintf(f, ",lambda%d", k + 1);
  fputc('\n', f);
  return ferror(f) ? -1 : 0;
}

int eom_csv_write_row(FILE *f, const struct eom_model *m, const double *p, double t,
                      const double *x, const double *u) {
  double y_small[32], *y = y_small, T = 0, V = 0;
  assert(f && m && x);
  if (!p) p = m->param_defaults;
  if (m->ny > (int)(sizeof y_small / sizeof y_small[0])) {
    y = malloc((size_t)m->ny * sizeof(double));
    if (!y) return -1;
  }
  put_number(f, "", t);
  for (int i = 0; i < 2 * m->nq; i++) put_number(f, ",", x[i]);
  if (m->ny > 0 && m->outputs) {
    m->outputs(t, x, x + m->nq, u, p, y);
    for (int i = 0; i < m->ny; i++) put_number(f, ",", y[i]);
  }
  if (m->energy) m->energy(x, x + m->nq, p, &T, &V);
  put_number(f, ",", T);
  put_number(f, ",", V);
  if (m->nc + m->nvc > 0 && m->accel_constrained) {
    double *qdd = malloc(((size_t)m->nq + (size_t)m->nc + (size_t)m->nvc + (size_t)m->nu + 1) * sizeof(double));
    if (!qdd) {
      if (y != y_small) free(y);
      return -1;
    }
    double *lambda = qdd + m->nq, *zeros = lambda + m->nc + m->nvc;
    if (!u) {
      memset(zeros, 0, ((size_t)m->nu + 1) * sizeof(double));
      u = zeros;
    }
    /* NaN when the saddle-point system is singular there. */
    if (m->accel_constrained(t, x, x + m->nq, u, p, qdd, lambda) != 0)
      for (int k = 0; k < m->nc + m->nvc; k++) lambda[k] = NAN;
    for (int k = 0; k < m->nc + m->nvc; k++) put_number(f, ",", lambda[k]);
    free(qdd);
  }
  fputc('\n', f);
  if (y != y_small) free(y);
  return ferror(f) ? -1 : 0;
}
