/*
** csv.c — the rows of a run: which columns there are, their values at a
** sample, and CSV text for them.  The columns, in this order: t, the
** coordinates, their rates (name'), the outputs, the inputs, the
** multipliers lambda1..lambdaNC (only for a model with constraints) and the
** energies T, V.  A model with attitudes has its quaternions among the
** coordinates, its velocities (omega(R)[1] ...) as the rates, and each
** attitude's roll, pitch and yaw (R.roll, R.pitch, R.yaw; for reading)
** right after the rates.  The multipliers are those of accel_constrained at the
** sample: the generalized constraint force is +Gᵀλ (G = dphi/dq).
**
** Numbers are written by eom_format_double (shortest exact round trip) into
** one buffer per row, so a row costs one fwrite.
*/
#include <assert.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "eom/runtime.h"

static int multipliers(const struct eom_model *m) {
  return m->accel_constrained ? m->nc + m->nvc : 0;
}

/* Roll, pitch and yaw columns: 3 per attitude. */
static int angle_columns(const struct eom_model *m) { return 3 * (m->nattitudes > 0 ? m->nattitudes : 0); }

int eom_row_width(const struct eom_model *m) {
  assert(m);
  return 1 + eom_state_size(m) + angle_columns(m) + m->ny + m->nu + multipliers(m) + 2;
}

/* Column k's name into buf ("" for k out of range); its unit into *unit
** when unit is not NULL ("" when unknown: outputs and multipliers). */
const char *eom_row_column(const struct eom_model *m, int k, char *buf, size_t size,
                           const char **unit) {
  const char *u = "";
  int nv = eom_nv(m);
  assert(m && buf && size >= 2);
  buf[0] = '\0';
  if (k == 0) snprintf(buf, size, "t"), u = "s";
  else if ((k -= 1) < m->nq) {
    snprintf(buf, size, "%s", m->coord_names[k]);
    u = m->coord_units ? m->coord_units[k] : "";
  } else if ((k -= m->nq) < nv) {
    if (m->nattitudes > 0 && m->rate_names) snprintf(buf, size, "%s", m->rate_names[k]);
    else snprintf(buf, size, "%s'", m->coord_names[k]);
    /* per second: see eom_row_unit (an attitude's omega: rad/s) */
    u = k >= m->nq - 4 * m->nattitudes ? "rad" : m->coord_units ? m->coord_units[k] : "";
  } else if ((k -= nv) < angle_columns(m)) {
    static const char *const angle[3] = {"roll", "pitch", "yaw"};
    snprintf(buf, size, "%s.%s", m->attitude_names[k / 3], angle[k % 3]);
    u = "rad";
  } else if ((k -= angle_columns(m)) < m->ny) snprintf(buf, size, "%s", m->output_names[k]);
  else if ((k -= m->ny) < m->nu) {
    snprintf(buf, size, "%s", m->input_names[k]);
    u = m->input_units ? m->input_units[k] : "";
  } else if ((k -= m->nu) < multipliers(m)) snprintf(buf, size, "lambda%d", k + 1);
  else if ((k -= multipliers(m)) < 2) snprintf(buf, size, "%s", k == 0 ? "T" : "V"), u = "J";
  if (unit) *unit = u;
  return buf;
}

/* The unit of column k as text: a rate's unit is its coordinate's per
** second ("m/s", "rad/s", "1/s" for a unitless one). */
const char *eom_row_unit(const struct eom_model *m, int k, char *buf, size_t size) {
  char name[8];
  const char *u;
  assert(buf && size > 0);
  eom_row_column(m, k, name, sizeof name, &u);
  if (k >= 1 + m->nq && k < 1 + eom_state_size(m))
    snprintf(buf, size, "%s/s", u && *u ? u : "1");
  else
    snprintf(buf, size, "%s", u ? u : "");
  return buf;
}

int eom_row_eval(const struct eom_model *m, const double *p, double t, const double *x,
                 const double *u, double *row) {
  assert(m && x && row);
  int nmul = multipliers(m), st = 0;
  double T = 0, V = 0;
  if (!p) p = m->param_defaults;
  double *r = row;
  *r++ = t;
  memcpy(r, x, (size_t)eom_state_size(m) * sizeof(double));
  r += eom_state_size(m);
  for (int a = 0; a < m->nattitudes; a++, r += 3) eom_quaternion_rpy(x + eom_first_quaternion(m) + 4 * a, r);
  double *zeros = NULL;
  if (!u && (m->nu > 0 || nmul > 0)) {
    zeros = calloc((size_t)m->nu + 1, sizeof(double));
    if (!zeros) return -1;
    u = zeros;
  }
  if (m->ny > 0) {
    if (m->outputs) m->outputs(t, x, x + m->nq, u, p, r);
    else memset(r, 0, (size_t)m->ny * sizeof(double));
    r += m->ny;
  }
  if (m->nu > 0) memcpy(r, u, (size_t)m->nu * sizeof(double));
  r += m->nu;
  if (nmul > 0) {
    double *qdd = malloc((size_t)eom_nv(m) * sizeof(double));
    /* NaN when the saddle-point system is singular there. */
    if (!qdd) st = -1;
    else if (m->accel_constrained(t, x, x + m->nq, u, p, qdd, r) != 0)
      for (int k = 0; k < nmul; k++) r[k] = NAN;
    free(qdd);
    r += nmul;
  }
  if (m->energy) m->energy(x, x + m->nq, p, &T, &V);
  *r++ = T;
  *r++ = V;
  assert(r - row == eom_row_width(m));
  free(zeros);
  return st;
}

int eom_csv_write_names(FILE *f, const struct eom_model *m, const int *cols, int ncols) {
  char name[256];
  assert(f && m);
  int width = eom_row_width(m), n = cols ? ncols : width;
  for (int i = 0; i < n; i++) {
    int k = cols ? cols[i] : i;
    assert(k >= 0 && k < width);
    if (i > 0) fputc(',', f);
    fputs(eom_row_column(m, k, name, sizeof name, NULL), f);
  }
  fputc('\n', f);
  return ferror(f) ? -1 : 0;
}

int eom_csv_write_values(FILE *f, const double *row, const int *cols, int ncols) {
  char small[64 * EOM_NUMBER_MAX], *buf = small, *p;
  size_t need = (size_t)ncols * EOM_NUMBER_MAX + 1;
  assert(f && row && ncols > 0);
  if (need > sizeof small && !(buf = malloc(need))) return -1;
  p = buf;
  for (int i = 0; i < ncols; i++) {
    if (i > 0) *p++ = ',';
    p += eom_format_double(p, row[cols ? cols[i] : i]);
  }
  *p++ = '\n';
  size_t len = (size_t)(p - buf);
  int bad = fwrite(buf, 1, len, f) != len;
  if (buf != small) free(buf);
  return bad ? -1 : 0;
}

int eom_csv_write_header(FILE *f, const struct eom_model *m) {
  return eom_csv_write_names(f, m, NULL, 0);
}

int eom_csv_write_row(FILE *f, const struct eom_model *m, const double *p, double t,
                      const double *x, const double *u) {
  double small[64], *row = small;
  int width = eom_row_width(m), st;
  if (width > 64 && !(row = malloc((size_t)width * sizeof(double)))) return -1;
  st = eom_row_eval(m, p, t, x, u, row);
  if (st == 0) st = eom_csv_write_values(f, row, NULL, width);
  if (row != small) free(row);
  return st;
}
