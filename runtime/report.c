/*
** report.c — failure messages of the runtime: the first failure of a run
** recorded in its eom_report with the time and the state, and coordinates
** named with their values.  Every part that can fail calls down into this
** file; it calls no other file of the runtime.
*/
#include <assert.h>
#include <stdarg.h>
#include <stdio.h>

#include "integrators.h"

/* Append printf-style text to buf (of size cap, holding len bytes). */
static size_t append(char *buf, size_t cap, size_t len, const char *fmt, ...) {
  if (len + 1 >= cap) return len;
  va_list ap;
  va_start(ap, fmt);
  int k = vsnprintf(buf + len, cap - len, fmt, ap);
  va_end(ap);
  if (k < 0) return len;
  len += (size_t)k;
  return len < cap ? len : cap - 1;
}

int sim_fail(SimContext *c, int status, double t, const double *x, const char *what) {
  struct eom_report *r = c->rep;
  assert(status != EOM_OK);
  if (r->status != EOM_OK) return r->status; /* keep the first cause */
  r->status = (eom_status)status;
  r->t = t;
  size_t cap = sizeof r->message, len = 0;
  len = append(r->message, cap, len, "at t = %.10g: %s", t, what);
  if (x) {
    const struct eom_model *m = c->m;
    len = append(r->message, cap, len, "; state");
    for (int i = 0; i < m->nq; i++)
      len = append(r->message, cap, len, "%s %s = %.10g", i ? "," : "", m->coord_names[i], x[i]);
    for (int i = 0; i < eom_nv(m); i++) {
      if (m->nattitudes > 0 && m->rate_names)
        len = append(r->message, cap, len, ", %s = %.10g", m->rate_names[i], x[m->nq + i]);
      else
        len = append(r->message, cap, len, ", %s' = %.10g", m->coord_names[i], x[m->nq + i]);
    }
  }
  return status;
}

void describe_coords(const struct eom_model *m, const double *q, char *buf, size_t cap) {
  size_t len = 0;
  buf[0] = '\0';
  for (int i = 0; i < m->nq && len + 1 < cap; i++) {
    int k = snprintf(buf + len, cap - len, "%s%s = %.10g", i ? ", " : "", m->coord_names[i], q[i]);
    if (k < 0) break;
    len += (size_t)k;
  }
}
