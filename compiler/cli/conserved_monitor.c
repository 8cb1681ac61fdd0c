/*
** conserved_monitor.c — evaluate the model's constants of the motion at each
** sample and keep their drift (see conserved_monitor.h).
*/
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "cli/conserved_monitor.h"

int cmon_init(ConservedMonitor *c, const struct eom_model *m) {
  memset(c, 0, sizeof *c);
  c->m = m;
  if (!m->momenta || !m->hamiltonian) return 0;  /* nothing to watch */
  int cap = m->nq + 1;
  c->coord = calloc((size_t)cap, sizeof *c->coord);
  c->first = calloc((size_t)cap, sizeof *c->first);
  c->last = calloc((size_t)cap, sizeof *c->last);
  c->max_drift = calloc((size_t)cap, sizeof *c->max_drift);
  c->pm = calloc((size_t)m->nq + 1, sizeof *c->pm);
  if (!c->coord || !c->first || !c->last || !c->max_drift || !c->pm) {
    cmon_free(c);
    return -1;
  }
  for (int i = 0; i < m->nq - 4 * m->nattitudes; i++)   /* an attitude's omega is never cyclic */
    if (m->cyclic && m->cyclic[i]) c->coord[c->n++] = i;
  if (m->energy_conserved) c->coord[c->n++] = -1;
  return 0;
}

void cmon_sample(ConservedMonitor *c, const double *x, const double *p) {
  const struct eom_model *m = c->m;
  double h = 0;
  if (c->n == 0) return;
  m->momenta(x, x + m->nq, p, c->pm);
  m->hamiltonian(x, x + m->nq, p, &h);
  for (int k = 0; k < c->n; k++) {
    double v = c->coord[k] < 0 ? h : c->pm[c->coord[k]];
    if (c->samples == 0) c->first[k] = v;
    c->last[k] = v;
    double d = fabs(v - c->first[k]);
    if (!(d <= c->max_drift[k])) c->max_drift[k] = d;  /* NaN sticks */
  }
  c->samples++;
}

void cmon_report(const ConservedMonitor *c, const char *prefix, FILE *out) {
  if (c->n == 0 || c->samples == 0) return;
  for (int k = 0; k < c->n; k++) {
    char what[160];
    if (c->coord[k] < 0) snprintf(what, sizeof what, "energy function h");
    else snprintf(what, sizeof what, "momentum of %s", c->m->coord_names[c->coord[k]]);
    double scale = fabs(c->first[k]);
    fprintf(out, "%sconserved %s: %.15g -> %.15g, max drift %.3g%s\n", prefix, what,
            c->first[k], c->last[k], scale > 0 ? c->max_drift[k] / scale : c->max_drift[k],
            scale > 0 ? " relative" : "");
  }
}

void cmon_free(ConservedMonitor *c) {
  free(c->coord);
  free(c->first);
  free(c->last);
  free(c->max_drift);
  free(c->pm);
  memset(c, 0, sizeof *c);
}
