/*
** integrate.c — eom_simulate(): pick the method by name, hand out the
** sample times and drive the fixed-step methods; the adaptive runs of
** Dormand–Prince (dopri.c) and Radau IIA (implicit.c) drive themselves.  Every failure stops the run with a status and a message
** naming the time and state; the samples already delivered stay delivered,
** and the last good state is delivered as one more sample.
*/
#include <assert.h>
#include <float.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "integrators.h"

const char *eom_status_text(eom_status s) {
  switch (s) {
  case EOM_OK: return "ok";
  case EOM_EINVAL: return "invalid argument";
  case EOM_ENOMEM: return "out of memory";
  case EOM_ESTEP: return "step size underflow";
  case EOM_ENONFINITE: return "non-finite state";
  case EOM_EMASS: return "mass matrix not positive definite";
  case EOM_ENEWTON: return "Newton iteration did not converge";
  case EOM_ESINGULAR: return "singular Newton matrix";
  case EOM_ESTOPPED: return "stopped by the sample function";
  case EOM_EMAXSTEPS: return "too many steps";
  case EOM_EINPUT: return "bad input table";
  case EOM_ECHATTER: return "a switch chatters";
  }
  return "unknown status";
}

void eom_sim_options_init(struct eom_sim_options *o) {
  memset(o, 0, sizeof *o);
  o->method = "dopri";
  o->t_end = 1.0;
  o->rtol = 1e-8;
  o->atol = 1e-10;
  o->baumgarte_alpha = 10;
  o->baumgarte_beta = 10;
}

typedef struct Method {
  const char *name;
  FixedStepFn step;      /* one fixed step (always there) */
  size_t (*work)(int n);
  AdaptiveRunFn run;     /* step-size control; NULL: fixed steps only */
  const char *help;      /* one line for `eomc sim --help` */
} Method;

/* The one list of methods: the table below, the list in messages and the
** help lines all come from it.  midpoint has no adaptive run on purpose:
** varying the step destroys the symplectic structure that keeps its energy
** error bounded. */
#define EOM_METHODS(X)                                                              \
  X(rk4, rk4_step, rk4_work, NULL, "classic Runge-Kutta, fixed step")               \
  X(dopri, dopri_fixed_step, dopri_work, dopri_run,                                 \
    "Dormand-Prince 5(4), adaptive (the default)")                                  \
  X(radau5, radau5_step, radau5_work, radau5_run,                                   \
    "implicit Radau IIA, adaptive, for stiff models")                               \
  X(midpoint, midpoint_step, midpoint_work, NULL,                                   \
    "implicit midpoint rule, fixed step, energy-preserving")

#define METHOD_ENTRY(name, step, work, run, help) {#name, step, work, run, help},
static const Method methods[] = {EOM_METHODS(METHOD_ENTRY)};
#define METHOD_NAME(name, step, work, run, help) ", " #name
static const char method_names[] = "" EOM_METHODS(METHOD_NAME);
enum { NMETHODS = (int)(sizeof methods / sizeof methods[0]) };

const char *eom_method_list(void) { return method_names + 2; /* past the first ", " */ }

const char *eom_method_name(int i) { return i >= 0 && i < NMETHODS ? methods[i].name : NULL; }
const char *eom_method_help(int i) { return i >= 0 && i < NMETHODS ? methods[i].help : NULL; }

static const Method *find_method(const char *name) {
  if (!name) name = "dopri";
  for (size_t i = 0; i < sizeof methods / sizeof methods[0]; i++)
    if (strcmp(methods[i].name, name) == 0) return &methods[i];
  return NULL;
}

int eom_method_known(const char *name) { return name && find_method(name) != NULL; }

/* ------------------------------------------------------------------ sampler */

void sampler_init(Sampler *s, double t0, double t_end, double dt, eom_sample_fn fn, void *ctx) {
  memset(s, 0, sizeof *s);
  s->t0 = t0;
  s->t_end = t_end;
  s->dt = dt;
  s->fn = fn;
  s->ctx = ctx;
  s->last_t = -INFINITY;
  if (!(dt > 0)) {
    s->every_step = 1;
    return;
  }
  /* A grid point within rounding of t_end is t_end itself. */
  double span = t_end - t0;
  s->kmax = (long)floor(span / dt * (1 + 1e-12));
  s->end_extra = t0 + (double)s->kmax * dt < t_end - 1e-12 * span;
}

double sampler_next(const Sampler *s) {
  if (s->every_step || s->done) return INFINITY;
  /* Without an extra end sample the last grid point is t_end itself, and
  ** the grid divides the span evenly: t0 + span*k/kmax gives the correctly
  ** rounded 0.3 where t0 + k*dt would give 0.30000000000000004. */
  if (s->k == s->kmax && !s->end_extra) return s->t_end;
  if (!s->end_extra && s->kmax > 0)
    return s->t0 + (s->t_end - s->t0) * (double)s->k / (double)s->kmax;
  if (s->k <= s->kmax) return fmin(s->t0 + (double)s->k * s->dt, s->t_end);
  return s->t_end;  /* end_extra */
}

static int sampler_deliver(SimContext *c, Sampler *s, double t, const double *x) {
  s->last_t = t;
  if (!s->fn) return EOM_OK;
  /* Interpolated samples of a model with attitudes: unit quaternions too. */
  if (c->att_sample) {
    memcpy(c->att_sample, x, (size_t)c->n * sizeof(double));
    sim_normalize(c, c->att_sample);
    x = c->att_sample;
  }
  /* Interpolated samples of a constrained run go out on the constraints too. */
  if (c->cs_active && c->cs_project) {
    stabilize_sample(c, t, x, c->cs_sample);
    x = c->cs_sample;
  }
  if (c->u_fixed) {
    if (c->m->nu > 0) memcpy(c->u, c->u_fixed, (size_t)c->m->nu * sizeof(double));
  } else
    eom_inputs_eval(c->in, t, c->u);
  if (s->fn(s->ctx, t, x, c->u) != 0) return sim_fail(c, EOM_ESTOPPED, t, NULL, "stopped by the sample function");
  return EOM_OK;
}

int sampler_emit(SimContext *c, Sampler *s, double t, const double *x) {
  if (!s->every_step) {
    s->k++;
    if (s->k > s->kmax + s->end_extra) s->done = 1;
  }
  return sampler_deliver(c, s, t, x);
}

/* ------------------------------------------------------- fixed-step driver */

/* One step of h; when Newton fails, two steps of h/2 (recursively), down to hmin. */
static int guarded_step(SimContext *c, const Method *m, double t, double h, double hmin,
                        double *x, double *work, double *backup) {
  memcpy(backup, x, (size_t)c->n * sizeof(double));
  int st = m->step(c, t, h, x, work);
  if (st != EOM_ENEWTON) return st;
  memcpy(x, backup, (size_t)c->n * sizeof(double));
  /* Newton cannot follow a rate across a dry friction's jump: where the
  ** friction holds it, the rate sticks and the step is taken stuck. */
  sim_load_inputs(c, t);
  if (stick_rescue(c, t, h, x)) return guarded_step(c, m, t, h, hmin, x, work, backup);
  /* A wrong generated jacobian also stalls Newton: check it once. */
  if (sim_distrust_jacobian(c, t, x)) {
    st = m->step(c, t, h, x, work);
    if (st != EOM_ENEWTON) return st;
    memcpy(x, backup, (size_t)c->n * sizeof(double));
  }
  if (h / 2 < hmin) {
    char what[128];
    snprintf(what, sizeof what, "the %s Newton iteration does not converge even with h = %.3g",
             m->name, h);
    return sim_fail(c, EOM_ENEWTON, t, x, what);
  }
  /* backup is reused below by the nested calls, so keep our own copy. */
  double *mine = malloc((size_t)c->n * sizeof(double));
  if (!mine) return EOM_ENOMEM;
  st = guarded_step(c, m, t, h / 2, hmin, x, work, mine);
  if (st == EOM_OK) st = guarded_step(c, m, t + h / 2, h / 2, hmin, x, work, mine);
  free(mine);
  return st;
}

static int fixed_run(SimContext *c, const Method *m, const struct eom_sim_options *o,
                     Sampler *s, double *x) {
  int n = c->n, st = EOM_OK;
  double t = o->t0, t_end = o->t_end, span = t_end - t;
  double hmax = o->step > 0 ? o->step : (o->sample_dt > 0 ? o->sample_dt : span / 1000);
  double *work = malloc(m->work(n) * sizeof(double));
  double *backup = malloc((size_t)n * sizeof(double));
  double *before = malloc((size_t)n * sizeof(double));
  struct eom_report *rep = c->rep;
  if (!work || !backup || !before) {
    st = EOM_ENOMEM;
    goto done;
  }
  /* Steps are counted in integers while the samples lie on the step grid
  ** t0 + n h: the step count is then exactly (b - t0)/h whatever the
  ** rounding of t + h near a sample (which would otherwise add a sliver
  ** step), and no time drifts by summing h. */
  long n_done = 0;
  int on_grid = o->step > 0;
  while (t < t_end) {
    double b = s->every_step ? t_end : fmin(sampler_next(s), t_end);
    assert(b > t);
    /* Slack, in steps, for the rounding of the times themselves. */
    double slack = 1e-9 + 4 * DBL_EPSILON * fmax(fabs(o->t0), fabs(b)) / hmax;
    double kb = (b - o->t0) / hmax, nb = floor(kb + 0.5);
    long nsteps;
    double h, ta = t;
    if (on_grid && fabs(kb - nb) <= slack * fmax(1.0, kb) && nb > (double)n_done &&
        nb < (double)LONG_MAX) {
      nsteps = (long)nb - n_done;
      h = hmax;
    } else {
      /* Equal steps no longer than hmax that land exactly on the sample. */
      on_grid = 0;
      nsteps = (long)ceil((b - t) / hmax - slack);
      if (nsteps < 1) nsteps = 1;
      h = (b - t) / (double)nsteps;
    }
    double hmin = o->h_min > 0 ? o->h_min : 1e-12 * fmax(span, fabs(t_end));
    for (long i = 0; i < nsteps; i++) {
      if (o->max_steps > 0 && rep->steps >= o->max_steps) {
        char what[64];
        snprintf(what, sizeof what, "more than %ld steps", o->max_steps);
        st = sim_fail(c, EOM_EMAXSTEPS, t, x, what);
        goto done;
      }
      memcpy(before, x, (size_t)n * sizeof(double));
      if ((st = guarded_step(c, m, t, h, hmin, x, work, backup))) goto restore;
      double t_next = i + 1 == nsteps ? b
                      : on_grid     ? o->t0 + (double)(n_done + i + 1) * h
                                    : ta + (double)(i + 1) * h;
      if (!all_finite(n, x)) {
        memcpy(x, before, (size_t)n * sizeof(double));
        st = sim_fail(c, EOM_ENONFINITE, t, x,
                      "the state became non-finite in the step from here");
        goto done;
      }
      sim_normalize(c, x);
      if (c->cs_project &&
          (st = stabilize_project(c, t_next, x, 10, "projecting onto the constraints")))
        goto restore;
      events_fixed_step(c, t_next, x);
      t = t_next;
      c->t_good = t;
      rep->steps++;
      if (s->every_step && (st = sampler_emit(c, s, t, x))) goto done;
    }
    n_done += nsteps;
    if (!s->every_step && (st = sampler_emit(c, s, b, x))) goto done;
  }
  goto done;
restore:
  memcpy(x, before, (size_t)n * sizeof(double));
done:
  free(work);
  free(backup);
  free(before);
  return st;
}

/* ------------------------------------------- fixed steps, rows between */

/* The cubic Hermite interpolant through (x0, f0) at theta = 0 and (x1, f1)
** at theta = 1 over a step of h, at theta in [0, 1]: third-order accurate
** (Hairer, Nørsett & Wanner, Solving ODEs I, 1993, §II.6, eq. 6.7; from
** memory). */
static void hermite(int n, double h, double theta, const double *x0, const double *f0,
                    const double *x1, const double *f1, double *out) {
  double t2 = theta * theta, t3 = t2 * theta;
  double h00 = 2 * t3 - 3 * t2 + 1, h10 = t3 - 2 * t2 + theta;
  double h01 = -2 * t3 + 3 * t2, h11 = t3 - t2;
  for (int i = 0; i < n; i++)
    out[i] = h00 * x0[i] + h10 * h * f0[i] + h01 * x1[i] + h11 * h * f1[i];
}

typedef struct StepBuffers {
  double *work, *backup, *before, *f0, *f1, *sample;
} StepBuffers;

/* The samples at or before the end of the step [t, t1] that just went from
** `before` to x: interpolated inside the step, x itself at its end.
** *have_f0 says f0 already holds the rates at (t, before). */
static int emit_in_step(SimContext *c, Sampler *s, double t, double t1, const double *x,
                        StepBuffers *b, int *have_f0) {
  int n = c->n, st;
  double h = t1 - t, ts = sampler_next(s), slack = 1e-9 * h;
  if (s->every_step) return sampler_emit(c, s, t1, x);
  if (ts < t1 - slack) {
    if (!*have_f0 && (st = sim_rhs(c, t, b->before, b->f0))) return st;
    if ((st = sim_rhs(c, t1, x, b->f1))) return st;
    for (; ts < t1 - slack; ts = sampler_next(s)) {
      hermite(n, h, (ts - t) / h, b->before, b->f0, x, b->f1, b->sample);
      if ((st = sampler_emit(c, s, ts, b->sample))) return st;
    }
    memcpy(b->f0, b->f1, (size_t)n * sizeof(double)); /* the next step's start */
    *have_f0 = 1;
  } else {
    *have_f0 = 0;
  }
  for (; ts <= t1 + slack; ts = sampler_next(s))
    if ((st = sampler_emit(c, s, ts, x))) return st;
  return EOM_OK;
}

/* Steps of exactly o->step counted in integers (t = t0 + i h, so no sliver
** steps), whatever the sample spacing. */
static int fixed_run_keep_step(SimContext *c, const Method *m, const struct eom_sim_options *o,
                               Sampler *s, double *x) {
  int n = c->n, st = EOM_OK, have_f0 = 0;
  double t0 = o->t0, t_end = o->t_end, h = o->step, span = t_end - t0;
  double hmin = o->h_min > 0 ? o->h_min : 1e-12 * fmax(span, fabs(t_end));
  long nsteps = (long)ceil(span / h - 1e-9);
  struct eom_report *rep = c->rep;
  StepBuffers b;
  size_t sz = (size_t)n * sizeof(double);
  if (nsteps < 1) nsteps = 1;
  b.work = malloc(m->work(n) * sizeof(double));
  b.backup = malloc(5 * sz);
  if (!b.work || !b.backup) {
    st = EOM_ENOMEM;
    goto done;
  }
  b.before = b.backup + n, b.f0 = b.before + n, b.f1 = b.f0 + n, b.sample = b.f1 + n;
  for (long i = 0; i < nsteps; i++) {
    double t = t0 + (double)i * h, t1 = i + 1 == nsteps ? t_end : t0 + (double)(i + 1) * h;
    if (o->max_steps > 0 && rep->steps >= o->max_steps) {
      char what[64];
      snprintf(what, sizeof what, "more than %ld steps", o->max_steps);
      st = sim_fail(c, EOM_EMAXSTEPS, t, x, what);
      goto done;
    }
    memcpy(b.before, x, sz);
    if ((st = guarded_step(c, m, t, t1 - t, hmin, x, b.work, b.backup))) goto restore;
    if (!all_finite(n, x)) {
      memcpy(x, b.before, sz);
      st = sim_fail(c, EOM_ENONFINITE, t, x, "the state became non-finite in the step from here");
      goto done;
    }
    sim_normalize(c, x);
    if (c->cs_project &&
        (st = stabilize_project(c, t1, x, 10, "projecting onto the constraints")))
      goto restore;
    events_fixed_step(c, t1, x);
    c->t_good = t1;
    rep->steps++;
    if ((st = emit_in_step(c, s, t, t1, x, &b, &have_f0))) goto done;
  }
  goto done;
restore:
  memcpy(x, b.before, sz);
done:
  free(b.work);
  free(b.backup);
  return st;
}

/* Move the initial state onto the constraints, keeping the held coordinates. */
static int initial_fix(SimContext *c, double t0, double *x) {
  c->cs_holding = 1;
  int st = stabilize_initial_fix(c, t0, x);
  c->cs_holding = 0;
  return st;
}

/* ---------------------------------------------------------------- the API */

int eom_simulate(const struct eom_model *m, const double *p, const eom_inputs *in, double *x,
                 const struct eom_sim_options *o, eom_sample_fn sample, void *ctx,
                 struct eom_report *rep) {
  struct eom_report local;
  SimContext c;
  Sampler s;
  if (!rep) rep = &local;
  memset(rep, 0, sizeof *rep);
  assert(m && x && o);
  const Method *meth = find_method(o->method);
  rep->t = o->t0;
  if (!meth) {
    snprintf(rep->message, sizeof rep->message, "unknown method '%s' (known: %s)", o->method,
             eom_method_list());
    return rep->status = EOM_EINVAL;
  }
  if (!(o->t_end > o->t0) || !isfinite(o->t_end) || !isfinite(o->t0) || m->nq <= 0 ||
      !m->accel || o->sample_dt < 0 || o->step < 0 || o->rtol < 0 || o->atol < 0 ||
      !(o->baumgarte_alpha >= 0) || !(o->baumgarte_beta >= 0) || !(o->constraint_tol >= 0)) {
    snprintf(rep->message, sizeof rep->message,
             "invalid run: need t_end > t0, finite times, steps, gains and tolerances >= 0 "
             "and a model with coordinates");
    return rep->status = EOM_EINVAL;
  }
  if (m->abi >= 9 && m->nstops > 0) {
    /* The impact law and the contact phase are not in the runtime yet:
    ** running on as if the stops were not there would be silently wrong. */
    snprintf(rep->message, sizeof rep->message,
             "the model has %d end stop%s ('stop'): simulating them is not supported yet "
             "(the generated P_stops gives their gaps, gradients and gamma)",
             m->nstops, m->nstops == 1 ? "" : "s");
    return rep->status = EOM_EINVAL;
  }
  if (simctx_init(&c, m, p, in, rep) != EOM_OK) {
    snprintf(rep->message, sizeof rep->message, "out of memory");
    return rep->status = EOM_ENOMEM;
  }
  if (o->rtol > 0) c.rtol = o->rtol;
  if (o->atol > 0) c.atol = o->atol;
  c.t_good = o->t0;
  sampler_init(&s, o->t0, o->t_end, o->sample_dt, sample, ctx);
  int st;
  if (!all_finite(c.n, x)) {
    st = sim_fail(&c, EOM_ENONFINITE, o->t0, x, "the initial state is not finite");
  } else if ((st = stabilize_init(&c, o, x)) != EOM_OK) {
    snprintf(rep->message, sizeof rep->message, "out of memory");
  } else if (c.cs_active && !o->no_initial_fix &&
             (st = initial_fix(&c, o->t0, x)) != EOM_OK) {
    /* x is the user's state: the failed sample below shows it. */
  } else if ((st = stick_init(&c, o)) != EOM_OK) {
    snprintf(rep->message, sizeof rep->message, "out of memory");
  } else if (events_start(&c, o->t0, x), (st = sampler_emit(&c, &s, o->t0, x)) == EOM_OK) {
    /* fixed_step: exactly o->step, no error control (order studies). */
    if (meth->run && !o->fixed_step)
      st = meth->run(&c, o, &s, x);
    else if (o->keep_step && o->step > 0)
      st = fixed_run_keep_step(&c, meth, o, &s, x);
    else
      st = fixed_run(&c, meth, o, &s, x);
  }
  if (st != EOM_OK && st != EOM_ESTOPPED && c.t_good > s.last_t) {
    /* Deliver the last good state so the output shows where the run ended. */
    struct eom_report keep = *rep;
    sampler_deliver(&c, &s, c.t_good, x);
    *rep = keep;
  }
  if (st != EOM_OK && rep->status == EOM_OK) {
    rep->status = (eom_status)st;
    snprintf(rep->message, sizeof rep->message, "%s", eom_status_text((eom_status)st));
  }
  rep->t = c.t_good;
  simctx_free(&c);
  return st;
}
