/*
** run_values.c — parameters, initial state and constant inputs of a run,
** and the NAME=VALUE assignments that change them.
*/
#include "cli/run_values.h"
#include "cli/value_text.h"
#include "eom/runtime.h"

#include <assert.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int parse_number(const char *s, double *out) {
  char *end;
  if (!s || !*s) return -1;
  double v = strtod(s, &end);
  if (end == s || *end != '\0' || !isfinite(v)) return -1;
  *out = v;
  return 0;
}

int run_values_init(RunValues *v, const struct eom_model *m) {
  memset(v, 0, sizeof *v);
  v->p = calloc((size_t)m->np + 1, sizeof(double));
  v->x = calloc((size_t)eom_state_size(m) + 1, sizeof(double));
  v->u = calloc((size_t)m->nu + 1, sizeof(double));
  v->u_set = calloc((size_t)m->nu + 1, sizeof(int));
  v->p_set = calloc((size_t)m->np + 1, sizeof(int));
  if (!v->p || !v->x || !v->u || !v->u_set || !v->p_set) {
    run_values_free(v);
    return -1;
  }
  for (int i = 0; i < m->np; i++) v->p[i] = m->param_defaults[i];
  for (int i = 0; i < m->nq; i++) v->x[i] = m->q0 ? m->q0[i] : 0.0;
  for (int i = 0; i < eom_nv(m); i++) v->x[m->nq + i] = m->qd0 ? m->qd0[i] : 0.0;
  return 0;
}

void run_values_free(RunValues *v) {
  free(v->p);
  free(v->x);
  free(v->u);
  free(v->u_set);
  free(v->p_set);
  memset(v, 0, sizeof *v);
}

/* The coordinates that are not attitude quaternions: a quaternion is set as
** a whole (`initial R = ...` in the model), its omega entries by name. */
static int plain_coords(const struct eom_model *m) { return m->nq - 4 * m->nattitudes; }

/* Append the names allowed by kinds to buf, comma-separated. */
static void allowed_names(const struct eom_model *m, int kinds, char *buf, size_t cap) {
  size_t len = 0;
  buf[0] = '\0';
#define ADD(fmt, name)                                                        \
  do {                                                                        \
    if (len + 1 < cap) {                                                      \
      int k = snprintf(buf + len, cap - len, fmt, len ? ", " : "", name);     \
      if (k > 0) len += (size_t)k < cap - len ? (size_t)k : cap - len - 1;    \
    }                                                                         \
  } while (0)
  if (kinds & RV_PARAMS)
    for (int i = 0; i < m->np; i++) ADD("%s%s", m->param_names[i]);
  if (kinds & RV_INPUTS)
    for (int i = 0; i < m->nu; i++) ADD("%s%s", m->input_names[i]);
  if (kinds & RV_COORDS)
    for (int i = 0; i < plain_coords(m); i++) ADD("%s%s", m->coord_names[i]);
  if (kinds & RV_RATES) {
    for (int i = 0; i < plain_coords(m); i++) ADD("%s%s'", m->coord_names[i]);
    for (int i = plain_coords(m); i < eom_nv(m); i++) ADD("%s%s", m->rate_names[i]);
  }
#undef ADD
  if (len == 0) snprintf(buf, cap, "none");
}

/* Where `name` (base bytes, without a rate's ') points among the names
** `kinds` allows: its kind and index, or 0. */
static int find_name(const struct eom_model *m, const char *name, size_t base, int rate, int kinds,
                     int *index) {
#define SAME(n) (strlen(n) == base && strncmp((n), name, base) == 0)
  if (rate) {
    if (kinds & RV_RATES)
      for (int i = 0; i < plain_coords(m); i++)
        if (SAME(m->coord_names[i])) return *index = i, RV_RATES;
    return 0;
  }
  if (kinds & RV_RATES)   /* omega(R)[k] */
    for (int i = plain_coords(m); i < eom_nv(m); i++)
      if (SAME(m->rate_names[i])) return *index = i, RV_RATES;
  if (kinds & RV_PARAMS)
    for (int i = 0; i < m->np; i++)
      if (SAME(m->param_names[i])) return *index = i, RV_PARAMS;
  if (kinds & RV_INPUTS)
    for (int i = 0; i < m->nu; i++)
      if (SAME(m->input_names[i])) return *index = i, RV_INPUTS;
  if (kinds & RV_COORDS)
    for (int i = 0; i < plain_coords(m); i++)
      if (SAME(m->coord_names[i])) return *index = i, RV_COORDS;
#undef SAME
  return 0;
}

/* The unit a name's value is declared in ("" when none). */
static const char *declared_unit(const struct eom_model *m, int kind, int i, char *buf,
                                 size_t cap) {
  const char *u = "";
  switch (kind) {
  case RV_PARAMS: u = m->param_units ? m->param_units[i] : ""; break;
  case RV_INPUTS: u = m->input_units ? m->input_units[i] : ""; break;
  case RV_COORDS: u = m->coord_units ? m->coord_units[i] : ""; break;
  case RV_RATES:
    if (i >= plain_coords(m)) return "rad/s";   /* an attitude's omega */
    u = m->coord_units ? m->coord_units[i] : "";
    if (*u) {
      snprintf(buf, cap, "(%s)/s", u);
      return buf;
    }
    break;
  default: break;
  }
  return u ? u : "";
}

int run_values_assign(RunValues *v, const struct eom_model *m, const char *assignment, int kinds,
                      char *err, size_t errlen) {
  char names[512], unit[160];
  int i, kind;
  double value;
  assert(v && m && assignment);
  const char *eq = strchr(assignment, '=');
  if (!eq || eq == assignment) {
    snprintf(err, errlen, "'%s' is not NAME=VALUE", assignment);
    return -1;
  }
  size_t nlen = (size_t)(eq - assignment);
  int rate = assignment[nlen - 1] == '\'';
  size_t base = rate ? nlen - 1 : nlen;
  if (!(kind = find_name(m, assignment, base, rate, kinds, &i))) {
    allowed_names(m, kinds, names, sizeof names);
    snprintf(err, errlen, "'%.*s' is not a name this option can set (names: %s)", (int)nlen,
             assignment, names);
    return -1;
  }
  if (value_text_eval(assignment, eq + 1, m, v->p, declared_unit(m, kind, i, unit, sizeof unit),
                      &value, err, errlen) != 0)
    return -1;
  switch (kind) {
  case RV_PARAMS:
    v->p[i] = value;
    v->p_set[i] = 1;
    /* defaults written in terms of other params follow them */
    if (m->derived_params) m->derived_params(v->p, v->p_set);
    break;
  case RV_INPUTS: v->u[i] = value, v->u_set[i] = 1; break;
  case RV_COORDS: v->x[i] = value; break;
  case RV_RATES: v->x[m->nq + i] = value; break;
  default: assert(0);
  }
  return 0;
}
