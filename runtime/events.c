/*
** events.c — switches of non-smooth models located in time.
**
** A model with branch functions (min, max, sign, step, clamp, abs) exports
** its switching functions s(t, q, qd, u, p): where one changes sign, a term
** changes branch and the right-hand side has a kink or a jump there.  A
** step that crosses one is accurate only to the order the error control
** forced on it, and every later step that straddles a kink loses order
** again.  So after each accepted step the adaptive methods (dopri, radau5)
** compare the signs at both ends; on a change they find the earliest
** crossing on the step's own continuous extension (Illinois false position,
** bracket at most `tol` wide), end the step just past it and restart the
** method there, with a fresh slope, on the new branch.
**
** The crossing is located on the accepted step's dense output, so the state
** at the restart is as accurate as the step itself; the restart time only
** needs to be past the switch, not exactly on it.
*/
#include <assert.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "integrators.h"

int events_init(SimContext *c, const struct eom_sim_options *o, EventWatch *w, double t,
                const double *x) {
  const struct eom_model *m = c->m;
  memset(w, 0, sizeof *w);
  if (o->no_events || m->ns <= 0 || !m->switches) return EOM_OK;
  w->ns = m->ns;
  w->last = -1;
  w->log = o->event_log;
  w->s0 = malloc((size_t)(3 * w->ns) * sizeof(double));
  w->xa = malloc((size_t)(2 * c->n) * sizeof(double));
  if (!w->s0 || !w->xa) {
    events_free(w);
    return EOM_ENOMEM;
  }
  w->s1 = w->s0 + w->ns;
  w->sa = w->s1 + w->ns;
  w->x_ev = w->xa + c->n;
  events_values(c, t, x, w->s0);
  return EOM_OK;
}

void events_free(EventWatch *w) {
  free(w->s0);
  free(w->xa);
  memset(w, 0, sizeof *w);
}

void events_values(SimContext *c, double t, const double *x, double *s) {
  const struct eom_model *m = c->m;
  assert(m->switches);
  sim_load_inputs(c, t);
  m->switches(t, x, x + m->nq, c->u, c->p, s);
  stick_margins(c, t, x, s);
}

/* Crossings back right after an event, in a row, before a run gives up. */
#define EVENTS_MAX_CHATTER 200

static int sign_of(double v) { return (v > 0) - (v < 0); }

/* Count the event and, when asked, log it: time, the switch's call, which way. */
static void log_event(SimContext *c, EventWatch *w, double t, int k, double before) {
  const struct eom_model *m = c->m;
  /* a stuck switch's crossing is its release: stick.c logs it */
  if (c->stick && c->stick->follows[k] == k) return;
  c->rep->events++;
  if (!w->log) return;
  fprintf(w->log, "event at t = %.10g: switch %d (%s) %s\n", t, k + 1,
          m->switch_names ? m->switch_names[k] : "?",
          before < 0 ? "rises through 0" : "falls through 0");
}

/* Does switch k change sign from a to b?  Leaving zero is no crossing: the
** restart that put it there already handled it. */
static int crosses(double a, double b) { return sign_of(a) != 0 && sign_of(b) != sign_of(a); }

/* The earliest time in (ta, tb] where switch k crosses, given that it
** crosses between ta and tb: a bracket [lo, hi] at most tol wide; returns
** hi (the side past the switch). */
static double locate(SimContext *c, EventWatch *w, int k, double ta, double sa, double tb,
                     double sb, DenseFn dense, const void *dctx, double tol) {
  double lo = ta, hi = tb, flo = sa, fhi = sb;
  int side = 0;  /* Illinois: halve the weight of an end kept twice */
  for (int it = 0; it < 200 && hi - lo > tol; it++) {
    double tm = (flo != fhi) ? hi - fhi * (hi - lo) / (fhi - flo) : 0.5 * (lo + hi);
    /* keep inside and away from the ends so the bracket always shrinks */
    double margin = 0.1 * tol;
    if (!(tm > lo + margin && tm < hi - margin)) tm = 0.5 * (lo + hi);
    dense(dctx, tm, w->xa);
    events_values(c, tm, w->xa, w->sa);
    double fm = w->sa[k];
    if (crosses(flo, fm) || fm == 0) {
      hi = tm, fhi = fm;
      if (side == -1) flo *= 0.5;
      side = -1;
    } else {
      lo = tm, flo = fm;
      if (side == 1) fhi *= 0.5;
      side = 1;
    }
  }
  return hi;
}

int events_crossing(SimContext *c, EventWatch *w, double t, double t_new, const double *x_new,
                    DenseFn dense, const void *dctx, double tol, double *t_sw) {
  if (!w->ns) return 0;
  double *s1 = w->s1;
  events_values(c, t_new, x_new, s1);
  double best = INFINITY;
  for (int k = 0; k < w->ns; k++) {
    if (!crosses(w->s0[k], s1[k]) || (k == w->last && w->t_last == t)) continue;
    /* locate() overwrites sa and xa, never s1 */
    double tk = locate(c, w, k, t, w->s0[k], t_new, s1[k], dense, dctx, tol);
    best = fmin(best, tk);
  }
  *t_sw = best;
  return best < INFINITY;
}

int events_pinned(SimContext *c, EventWatch *w, int crossing, double t, const double *x) {
  if (!crossing) {
    w->pinned = 0;
    return EOM_OK;
  }
  if (++w->pinned < EVENTS_MAX_CHATTER) return EOM_OK;
  return sim_fail(c, EOM_ECHATTER, t, x,
                  "the motion is held on a switch (every step runs into it: a sliding "
                  "motion, or dry friction in a model with constraints, which does not stick)");
}

int events_after_step(SimContext *c, EventWatch *w, double t, double t_new, const double *x_new,
                      DenseFn dense, const void *dctx, double tol, double *t_ev) {
  if (!w->ns) return 0;
  events_values(c, t_new, x_new, w->s1);
  double best = INFINITY;
  int which = -1;
  for (int k = 0; k < w->ns; k++) {
    if (!crosses(w->s0[k], w->s1[k])) continue;
    double tk = locate(c, w, k, t, w->s0[k], t_new, w->s1[k], dense, dctx, tol);
    if (tk < best) best = tk, which = k;
  }
  /* A switch that crosses back in the first step after its own event
  ** chatters (dry friction at rest): locating it again would restart the
  ** method at ever shorter intervals, so that step crosses it as any
  ** other point and the error control takes over. */
  if (which >= 0 && which == w->last && w->t_last == t) {
    which = -1;
    if (++w->chatters >= EVENTS_MAX_CHATTER) {
      char what[200];
      snprintf(what, sizeof what,
               "switch %d (%s) chatters: it crossed back right after each of its last %d "
               "events (dry friction in a model with constraints does not stick)",
               w->last + 1, c->m->switch_names ? c->m->switch_names[w->last] : "?",
               EVENTS_MAX_CHATTER);
      return -sim_fail(c, EOM_ECHATTER, t, x_new, what);
    }
  } else if (which < 0) {
    w->chatters = 0;  /* a clean step */
  }
  if (which < 0 || best >= t_new) {
    /* no crossing, or one at the very end: the step stands as it is */
    if (which >= 0) {
      log_event(c, w, t_new, which, w->s0[which]);
      w->last = which;
      w->t_last = t_new;
    }
    memcpy(w->s0, w->s1, (size_t)w->ns * sizeof(double));
    return 0;
  }
  double before = w->s0[which];
  dense(dctx, best, w->x_ev);
  events_values(c, best, w->x_ev, w->s0);
  /* a switch that crossed at the same instant stays crossed: no second event */
  log_event(c, w, best, which, before);
  w->last = which;
  w->t_last = best;
  *t_ev = best;
  return 1;
}

int events_past_end(SimContext *c, EventWatch *w, double t, double t1, double t2, DenseFn dense,
                    const void *dctx, double tol, double *t_ev) {
  if (!w->ns || !(t2 > t1)) return 0;
  (void)t;
  dense(dctx, t2, w->xa);
  events_values(c, t2, w->xa, w->s1);
  double best = INFINITY;
  int which = -1;
  for (int k = 0; k < w->ns; k++) {
    if (!crosses(w->s0[k], w->s1[k])) continue;
    double tk = locate(c, w, k, t1, w->s0[k], t2, w->s1[k], dense, dctx, tol);
    if (tk < best) best = tk, which = k;
  }
  if (which < 0) return 0;
  double before = w->s0[which];
  dense(dctx, best, w->x_ev);
  events_values(c, best, w->x_ev, w->s0);
  log_event(c, w, best, which, before);
  w->last = which;
  w->t_last = best;
  w->chatters = 0;
  *t_ev = best;
  return 1;
}

int events_reach(SimContext *c, EventWatch *w, double *t, double h, double *x) {
  if (!c->stick || !w->ns) return 0;
  sim_load_inputs(c, *t);
  if (!stick_reach(c, t, h, x)) return 0;
  events_values(c, *t, x, w->s0);
  w->last = -1;
  c->t_good = *t;
  return 1;
}

int events_stick(SimContext *c, EventWatch *w, double t, double *x) {
  if (!c->stick || !w->ns) return 0;
  sim_load_inputs(c, t);
  int changed = w->last >= 0 && w->t_last == t ? stick_event(c, w->last, t, x, 1)
                                               : stick_near_zero(c, t, x);
  if (!changed) return 0;
  /* the stuck set changed what the switches' values mean */
  events_values(c, t, x, w->s0);
  w->last = -1;
  return 1;
}

int events_start(SimContext *c, double t, double *x) {
  if (!c->stick) return 0;
  sim_load_inputs(c, t);
  return stick_start(c, t, x);
}

void events_fixed_step(SimContext *c, double t, double *x) {
  StickState *s = c->stick;
  if (!s) return;
  double *now = s->vals;
  events_values(c, t, x, now);
  for (int k = 0; k < s->ns; k++) {
    int lead = s->follows[k] == k, free_rate = s->follows[k] < 0;
    if ((lead && now[k] <= 0) || (free_rate && crosses(s->s_prev[k], now[k]))) {
      sim_load_inputs(c, t);
      if (stick_event(c, k, t, x, 0)) events_values(c, t, x, now);
    }
  }
  memcpy(s->s_prev, now, (size_t)s->ns * sizeof(double));
}
