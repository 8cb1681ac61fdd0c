/*
** dopri.c — Dormand–Prince 5(4): the explicit embedded Runge–Kutta pair with
** step-size control and a fourth-order continuous extension for output at
** evenly spaced sample times.
**
** Coefficients, error norm, step-size controller (with the stabilising
** factor beta = 0.04) and the dense-output formula follow Hairer, Nørsett &
** Wanner, Solving Ordinary Differential Equations I, 2nd ed., 1993:
** Table II.5.2 (the tableau), §II.4 (automatic step size control, starting
** step), §II.6 (dense output); table and section numbers from memory, the
** coefficients checked by the order and dense-output tests.  The last stage is evaluated at the new
** point, so it is reused as the first stage of the next step (FSAL).
*/
#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "integrators.h"

/* Tableau (c2..c6; c7 = 1). */
static const double C2 = 1.0 / 5, C3 = 3.0 / 10, C4 = 4.0 / 5, C5 = 8.0 / 9;
static const double A21 = 1.0 / 5;
static const double A31 = 3.0 / 40, A32 = 9.0 / 40;
static const double A41 = 44.0 / 45, A42 = -56.0 / 15, A43 = 32.0 / 9;
static const double A51 = 19372.0 / 6561, A52 = -25360.0 / 2187, A53 = 64448.0 / 6561,
                    A54 = -212.0 / 729;
static const double A61 = 9017.0 / 3168, A62 = -355.0 / 33, A63 = 46732.0 / 5247,
                    A64 = 49.0 / 176, A65 = -5103.0 / 18656;
static const double A71 = 35.0 / 384, A73 = 500.0 / 1113, A74 = 125.0 / 192,
                    A75 = -2187.0 / 6784, A76 = 11.0 / 84;
/* Error coefficients: fifth-order weights minus the embedded fourth-order ones. */
static const double E1 = 71.0 / 57600, E3 = -71.0 / 16695, E4 = 71.0 / 1920,
                    E5 = -17253.0 / 339200, E6 = 22.0 / 525, E7 = -1.0 / 40;
/* Continuous extension (§II.6). */
static const double D1 = -12715105075.0 / 11282082432, D3 = 87487479700.0 / 32700410799,
                    D4 = -10690763975.0 / 1880347072, D5 = 701980252875.0 / 199316789632,
                    D6 = -1453857185.0 / 822651844, D7 = 69997945.0 / 29380423;

size_t dopri_work(int n) { return 16 * (size_t)n; }

typedef struct Stages {
  double *k1, *k2, *k3, *k4, *k5, *k6, *k7;
  double *y1, *ytmp, *err;
  double *r1, *r2, *r3, *r4, *r5;  /* dense-output coefficients */
} Stages;

static void stages_bind(Stages *s, double *w, int n) {
  double **slots[] = {&s->k1, &s->k2, &s->k3, &s->k4, &s->k5, &s->k6, &s->k7, &s->y1,
                      &s->ytmp, &s->err, &s->r1, &s->r2, &s->r3, &s->r4, &s->r5};
  for (size_t i = 0; i < sizeof slots / sizeof slots[0]; i++) *slots[i] = w + i * (size_t)n;
}

/* Stages 2..7 of a step from (t, y) with k1 = f(t, y) already in place;
** leaves the new point in y1, f there in k7 and the error estimate in err. */
static int dopri_stages(SimContext *c, double t, double h, const double *y, Stages *s) {
  int n = c->n, st;
  double *yt = s->ytmp;
  for (int i = 0; i < n; i++) yt[i] = y[i] + h * A21 * s->k1[i];
  if ((st = sim_rhs(c, t + C2 * h, yt, s->k2))) return st;
  for (int i = 0; i < n; i++) yt[i] = y[i] + h * (A31 * s->k1[i] + A32 * s->k2[i]);
  if ((st = sim_rhs(c, t + C3 * h, yt, s->k3))) return st;
  for (int i = 0; i < n; i++)
    yt[i] = y[i] + h * (A41 * s->k1[i] + A42 * s->k2[i] + A43 * s->k3[i]);
  if ((st = sim_rhs(c, t + C4 * h, yt, s->k4))) return st;
  for (int i = 0; i < n; i++)
    yt[i] = y[i] + h * (A51 * s->k1[i] + A52 * s->k2[i] + A53 * s->k3[i] + A54 * s->k4[i]);
  if ((st = sim_rhs(c, t + C5 * h, yt, s->k5))) return st;
  for (int i = 0; i < n; i++)
    yt[i] = y[i] + h * (A61 * s->k1[i] + A62 * s->k2[i] + A63 * s->k3[i] + A64 * s->k4[i] +
                        A65 * s->k5[i]);
  if ((st = sim_rhs(c, t + h, yt, s->k6))) return st;
  for (int i = 0; i < n; i++)
    s->y1[i] = y[i] + h * (A71 * s->k1[i] + A73 * s->k3[i] + A74 * s->k4[i] +
                           A75 * s->k5[i] + A76 * s->k6[i]);
  if ((st = sim_rhs(c, t + h, s->y1, s->k7))) return st;
  for (int i = 0; i < n; i++)
    s->err[i] = h * (E1 * s->k1[i] + E3 * s->k3[i] + E4 * s->k4[i] + E5 * s->k5[i] +
                     E6 * s->k6[i] + E7 * s->k7[i]);
  return EOM_OK;
}

int dopri_fixed_step(SimContext *c, double t, double h, double *x, double *work) {
  Stages s;
  int st;
  stages_bind(&s, work, c->n);
  if ((st = sim_rhs(c, t, x, s.k1))) return st;
  if ((st = dopri_stages(c, t, h, x, &s))) return st;
  memcpy(x, s.y1, (size_t)c->n * sizeof(double));
  return EOM_OK;
}

/* Prepare the continuous extension over the accepted step [t, t + h]. */
static void dense_prepare(int n, double h, const double *y, Stages *s) {
  for (int i = 0; i < n; i++) {
    double ydiff = s->y1[i] - y[i];
    double bspl = h * s->k1[i] - ydiff;
    s->r1[i] = y[i];
    s->r2[i] = ydiff;
    s->r3[i] = bspl;
    s->r4[i] = ydiff - h * s->k7[i] - bspl;
    s->r5[i] = h * (D1 * s->k1[i] + D3 * s->k3[i] + D4 * s->k4[i] + D5 * s->k5[i] +
                    D6 * s->k6[i] + D7 * s->k7[i]);
  }
}

static void dense_eval(int n, double theta, const Stages *s, double *out) {
  double theta1 = 1 - theta;
  for (int i = 0; i < n; i++)
    out[i] = s->r1[i] +
             theta * (s->r2[i] + theta1 * (s->r3[i] + theta * (s->r4[i] + theta1 * s->r5[i])));
}

typedef struct DopriDense {
  int n;
  double t, h;
  const Stages *s;
} DopriDense;

/* The continuous extension at time t, for the event search (events.c). */
static void dopri_dense(const void *ctx, double t, double *x) {
  const DopriDense *d = ctx;
  dense_eval(d->n, (t - d->t) / d->h, d->s, x);
}

/* Starting step (§II.4): an explicit Euler probe sizes h so that the first
** step's local error is about the tolerance. */
static int initial_step(SimContext *c, double t, const double *y, const double *f0,
                        double rtol, double atol, double hmax, double *h_out, double *tmp,
                        double *f1) {
  int n = c->n;
  double d0 = scaled_norm(n, y, y, NULL, rtol, atol);
  double d1 = scaled_norm(n, f0, y, NULL, rtol, atol);
  double h0 = (d0 < 1e-5 || d1 < 1e-5) ? 1e-6 : 0.01 * d0 / d1;
  h0 = fmin(h0, hmax);
  for (int i = 0; i < n; i++) tmp[i] = y[i] + h0 * f0[i];
  int st = sim_rhs(c, t + h0, tmp, f1);
  if (st) return st;
  for (int i = 0; i < n; i++) tmp[i] = (f1[i] - f0[i]) / h0;
  double d2 = scaled_norm(n, tmp, y, NULL, rtol, atol);
  if (!isfinite(d2)) d2 = 1e10;
  double dm = fmax(d1, d2);
  double h1 = dm <= 1e-15 ? fmax(1e-6, h0 * 1e-3) : pow(0.01 / dm, 1.0 / 5);
  *h_out = fmin(fmin(100 * h0, h1), hmax);
  return EOM_OK;
}

int dopri_run(SimContext *c, const struct eom_sim_options *o, Sampler *smp, double *x) {
  const double safe = 0.9, beta = 0.04, expo1 = 0.2 - beta * 0.75;
  const double facc1 = 1.0 / 0.2, facc2 = 1.0 / 10.0; /* step may grow 10x, shrink 5x */
  int n = c->n, st = EOM_OK;
  double t = o->t0, t_end = o->t_end, span = t_end - o->t0;
  double rtol = o->rtol > 0 ? o->rtol : 1e-8, atol = o->atol > 0 ? o->atol : 1e-10;
  struct eom_report *rep = c->rep;
  double *work = malloc(dopri_work(n) * sizeof(double));
  double *sample = malloc((size_t)n * sizeof(double));
  Stages s;
  EventWatch ev = {0};
  char what[128];

  if (!work || !sample) {
    free(work);
    free(sample);
    return EOM_ENOMEM;
  }
  stages_bind(&s, work, n);
  if ((st = events_init(c, o, &ev, t, x))) goto done;
  if ((st = sim_rhs(c, t, x, s.k1))) goto done;
  if (!all_finite(n, s.k1)) {
    st = sim_fail(c, EOM_ENONFINITE, t, x, "the acceleration is not finite");
    goto done;
  }
  double h = o->step;
  if (!(h > 0)) {
    st = initial_step(c, t, x, s.k1, rtol, atol, span, &h, s.ytmp, s.k2);
    if (st) goto done;
    /* The probe's absolute floor (1e-6 when nothing moves) can be below
    ** the smallest step a run over a long span may take. */
    h = fmax(h, adaptive_h_min(o, t, t_end));
  }
  double facold = 1e-4;
  int last_rejected = 0;
  int landing = 0;  /* this step was shortened to end at a switch */
  int trial_crossed = 0;  /* a trial of this step crossed a switch */
  /* A trial stage outside the region where M is positive definite rejects
  ** the step; only when the step cannot shrink further is it the failure. */
  int mass_pending = 0;
  double mass_t = t;
  char mass_message[sizeof rep->message];
  for (;;) {
    double hmin = adaptive_h_min(o, t, t_end);
    if (o->max_steps > 0 && rep->steps >= o->max_steps) {
      snprintf(what, sizeof what, "more than %ld steps", o->max_steps);
      st = sim_fail(c, EOM_EMAXSTEPS, t, x, what);
      goto done;
    }
    if ((h < hmin || !(h > 0)) && mass_pending) {
      rep->status = EOM_EMASS;
      rep->t = mass_t;
      memcpy(rep->message, mass_message, sizeof mass_message);
      st = EOM_EMASS;
      goto done;
    }
    /* Steps that shrink away while a rate creeps up on zero: it has as
    ** good as reached it (stick.c), and the run goes on from there. */
    if (h < hmin && !mass_pending && ev.ns && events_reach(c, &ev, &t, 1e3 * hmin, x)) {
      if ((st = sim_rhs(c, t, x, s.k1))) goto done;
      h = 1e3 * hmin;
      landing = 0;
      continue;
    }
    if (h < hmin || !(h > 0)) {
      snprintf(what, sizeof what, "step size underflow (h = %.3g)", h);
      st = sim_fail(c, EOM_ESTEP, t, x, what);
      goto done;
    }
    int last = stretch_to_end(t, t_end, &h);
    if ((st = dopri_stages(c, t, h, x, &s))) {
      if (st != EOM_EMASS) goto done;
      mass_pending = 1;
      mass_t = rep->t;
      memcpy(mass_message, rep->message, sizeof mass_message);
      rep->status = EOM_OK;
      rep->message[0] = '\0';
      h *= 0.5;
      rep->rejected++;
      last_rejected = 1;
      continue;
    }
    /* A trial step across a switch: its error estimate assumes a smooth
    ** right-hand side, so shorten it once to end just past the switch
    ** (located on the trial's own extension) and take it again. */
    if (ev.ns && !landing && all_finite(n, s.y1)) {
      double t_sw;
      dense_prepare(n, h, x, &s);
      DopriDense trial = {n, t, h, &s};
      int crossing = events_crossing(c, &ev, t, t + h, s.y1, dopri_dense, &trial,
                                     events_tol(rtol, t, h), &t_sw);
      if (crossing && t_sw < t + h && t_sw - t > 0.01 * h) {
        h = t_sw - t;
        landing = 1;
        continue;
      }
      trial_crossed = trial_crossed || crossing;
    }
    double err = scaled_norm(n, s.err, x, s.y1, rtol, atol);
    if (!isfinite(err) || !all_finite(n, s.y1)) {
      /* Overflow in a trial step: shrink hard and retry. */
      h *= 0.1;
      rep->rejected++;
      last_rejected = 1;
      continue;
    }
    double fac11 = pow(err, expo1);
    if (err <= 1.0) {
      double fac = fac11 / pow(facold, beta);
      fac = fmax(facc2, fmin(facc1, fac / safe));
      double hnew = h / fac;
      facold = fmax(err, 1e-4);
      double t_new = last ? t_end : t + h;
      dense_prepare(n, h, x, &s);
      /* a switch crossed inside the step: end it there and restart */
      DopriDense dd = {n, t, h, &s};
      int event = events_after_step(c, &ev, t, t_new, s.y1, dopri_dense, &dd,
                                    events_tol(rtol, t, h), &t_new);
      if (event < 0) {
        st = -event;
        goto done;
      }
      /* A landing that stopped short of its switch (the trial it was cut
      ** from is inaccurate past the kink): cutting the next trial again
      ** would only creep up on it.  The landed step's own extension,
      ** carried a little past its end, finds the crossing instead. */
      if (!event && landing && !last)
        event = events_past_end(c, &ev, t, t_new, fmin(t_new + 0.1 * h, t_end), dopri_dense,
                                &dd, events_tol(rtol, t, h), &t_new);
      double *y_end = event ? ev.x_ev : s.y1;
      /* a rate that reached zero may stick, a stuck one slip */
      if (events_stick(c, &ev, t_new, y_end)) event = 1;
      for (double ts = sampler_next(smp); ts <= t_new; ts = sampler_next(smp)) {
        if (ts >= t_new) {
          memcpy(sample, y_end, (size_t)n * sizeof(double));
        } else {
          dense_eval(n, (ts - t) / h, &s, sample);
        }
        if ((st = sampler_emit(c, smp, ts, sample))) goto done;
      }
      memcpy(x, y_end, (size_t)n * sizeof(double));
      /* unit quaternions again; the moved state keeps y_end's slope (the
      ** move is of the order of the step's error) */
      sim_normalize(c, x);
      if (event) {
        /* restart on the new branch: its own slope, a fresh controller */
        last = t_new >= t_end;
        facold = 1e-4;
        if ((st = sim_rhs(c, t_new, x, s.k1))) goto done;
        if (!all_finite(n, s.k1)) {
          st = sim_fail(c, EOM_ENONFINITE, t_new, x, "the acceleration is not finite");
          goto done;
        }
      } else {
        memcpy(s.k1, s.k7, (size_t)n * sizeof(double));
      }
      if (c->cs_project) {
        /* Back onto the constraints; the moved state needs its own slope. */
        if ((st = stabilize_project(c, t_new, x, 10, "projecting onto the constraints")) ||
            (st = sim_rhs(c, t_new, x, s.k1)))
          goto done;
      }
      /* steps in a row whose trials all ran into a switch: the motion is
      ** held on it (sliding; dry friction sticks instead, stick.c) */
      if ((st = events_pinned(c, &ev, trial_crossed, t_new, x))) goto done;
      t = t_new;
      landing = 0;
      trial_crossed = 0;
      rep->steps++;
      c->t_good = t;
      mass_pending = 0;
      if (smp->every_step && (st = sampler_emit(c, smp, t, x))) goto done;
      if (last) break;
      if (last_rejected) hnew = fmin(hnew, h);
      last_rejected = 0;
      h = fmin(hnew, span);
    } else {
      h /= fmin(facc1, fac11 / safe);
      rep->rejected++;
      last_rejected = 1;
    }
  }
done:
  events_free(&ev);
  free(work);
  free(sample);
  return st;
}
