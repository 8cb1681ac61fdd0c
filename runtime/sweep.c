/*
** sweep.c — eom_sweep: an ensemble of simulations of one model over grids
** and random samples, on a pool of POSIX threads, results delivered in
** run order.
**
** Workers take run numbers from a shared counter and write into a ring of
** result slots; whoever finishes the oldest outstanding run hands every
** consecutive finished slot to the caller's callback (under the lock, so
** callbacks never overlap and come in order).  A worker waits when it is a
** whole ring ahead of the oldest unfinished run, which bounds the memory
** whatever the number of runs.
**
** Random values come from a counter-based generator: the splitmix64 mixing
** function (G. L. Steele, D. Lea, C. H. Flood, "Fast splittable
** pseudorandom number generators", OOPSLA 2014; constants of S. Vigna's
** public-domain splitmix64.c) applied to (seed, run, stream), and normal
** deviates by the Box–Muller transform (G. E. P. Box, M. E. Muller, "A note
** on the generation of random normal deviates", Ann. Math. Stat. 29, 1958).
*/
#include "eom/sweep.h"

#include <assert.h>
#include <limits.h>
#include <math.h>
#include <pthread.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#define GOLDEN_GAMMA 0x9e3779b97f4a7c15ULL
#define RUN_SLOTS_PER_THREAD 32

static uint64_t mix64(uint64_t z) {
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

double eom_sweep_uniform(uint64_t seed, long run, uint64_t stream) {
  uint64_t h = mix64(seed + GOLDEN_GAMMA * ((uint64_t)run + 1));
  h = mix64(h + GOLDEN_GAMMA * (stream + 1));
  /* 53 random bits, centred in their cell: never exactly 0 or 1 */
  return ((double)(h >> 11) + 0.5) * (1.0 / 9007199254740992.0);
}

void eom_sweep_options_init(struct eom_sweep_options *o) {
  memset(o, 0, sizeof *o);
  eom_sim_options_init(&o->sim);
  o->draws = 1;
  o->seed = 1;
  o->stride = 1;
}

static int var_valid(const struct eom_sweep_var *v) {
  if (!isfinite(v->a) || !isfinite(v->b)) return 0;
  switch (v->dist) {
  case EOM_SWEEP_GRID: return v->n >= 1 && v->a <= v->b;
  case EOM_SWEEP_NORMAL: return v->b >= 0;
  case EOM_SWEEP_UNIFORM: return v->a <= v->b;
  default: return 0;
  }
}

long eom_sweep_count(const struct eom_sweep_options *o) {
  if (!o || o->draws < 1 || o->nvars < 0 || (o->nvars > 0 && !o->vars)) return -1;
  long count = o->draws;
  for (int k = 0; k < o->nvars; k++) {
    const struct eom_sweep_var *v = &o->vars[k];
    if (!var_valid(v)) return -1;
    if (v->dist != EOM_SWEEP_GRID) continue;
    if (count > LONG_MAX / v->n) return -1;
    count *= v->n;
  }
  return count;
}

double eom_sweep_value(const struct eom_sweep_options *o, long run, int k) {
  assert(k >= 0 && k < o->nvars && run >= 0);
  const struct eom_sweep_var *v = &o->vars[k];
  if (v->dist == EOM_SWEEP_GRID) {
    /* Grid index of axis k: later axes vary faster. */
    long stride = 1;
    for (int j = k + 1; j < o->nvars; j++)
      if (o->vars[j].dist == EOM_SWEEP_GRID) stride *= o->vars[j].n;
    long i = (run / o->draws / stride) % v->n;
    if (v->n == 1) return v->a;
    if (i == v->n - 1) return v->b; /* the end point exactly */
    return v->a + (v->b - v->a) * (double)i / (double)(v->n - 1);
  }
  double u1 = eom_sweep_uniform(o->seed, run, 2 * (uint64_t)k);
  if (v->dist == EOM_SWEEP_UNIFORM) return v->a + (v->b - v->a) * u1;
  double u2 = eom_sweep_uniform(o->seed, run, 2 * (uint64_t)k + 1);
  double z = sqrt(-2.0 * log(u1)) * cos(2.0 * 3.14159265358979323846 * u2);
  return v->a + v->b * z;
}

/* ------------------------------------------------------------ one run */

/* A result slot: the arrays of a struct eom_sweep_run, in one block. */
typedef struct Slot {
  struct eom_sweep_run run;
  double *values, *x, *y, *qmin, *qmax, *ymin, *ymax, *trace;
  char message[sizeof ((struct eom_report *)0)->message];
  int done;
} Slot;

/* What a run's sample callback keeps. */
typedef struct Watch {
  const struct eom_model *m;
  const double *p;
  Slot *slot;
  double *y, *prev;  /* outputs now; previous sample's q and y (trace) */
  double t_prev, E0, E;
  long samples;
  int trace_points, next_point;
  double t0, t_end;
} Watch;

/* Trace points in (t_prev, t]: interpolated between the previous sample
** and this one, whose q and y are in now[]. */
static void trace_fill(Watch *w, double t, const double *now) {
  int width = w->m->nq + w->m->ny;
  double span = w->t_end - w->t0;
  while (w->next_point < w->trace_points) {
    double tk = w->t0 + span * w->next_point / (w->trace_points - 1);
    if (tk > t + 1e-9 * fabs(span)) break;
    double *row = w->slot->trace + (size_t)w->next_point * width;
    double s = (w->samples == 0 || t <= w->t_prev) ? 1.0 : (tk - w->t_prev) / (t - w->t_prev);
    if (s < 0) s = 0;
    for (int i = 0; i < width; i++)
      row[i] = w->samples == 0 ? now[i] : w->prev[i] + s * (now[i] - w->prev[i]);
    w->next_point++;
  }
}

static int on_sample(void *ctx, double t, const double *x, const double *u) {
  Watch *w = ctx;
  const struct eom_model *m = w->m;
  Slot *s = w->slot;
  int nq = m->nq, ny = m->ny;
  double T = 0, V = 0;
  if (ny > 0 && m->outputs) m->outputs(t, x, x + nq, u, w->p, w->y);
  if (m->energy) m->energy(x, x + nq, w->p, &T, &V);
  for (int i = 0; i < nq; i++) {
    if (w->samples == 0 || x[i] < s->qmin[i]) s->qmin[i] = x[i];
    if (w->samples == 0 || x[i] > s->qmax[i]) s->qmax[i] = x[i];
  }
  for (int i = 0; i < ny; i++) {
    if (w->samples == 0 || w->y[i] < s->ymin[i]) s->ymin[i] = w->y[i];
    if (w->samples == 0 || w->y[i] > s->ymax[i]) s->ymax[i] = w->y[i];
  }
  if (w->samples == 0) w->E0 = T + V;
  w->E = T + V;
  if (w->trace_points > 1) {
    /* now = [q; y] in the scratch after prev */
    double *now = w->prev + nq + ny;
    memcpy(now, x, (size_t)nq * sizeof(double));
    memcpy(now + nq, w->y, (size_t)ny * sizeof(double));
    trace_fill(w, t, now);
    memcpy(w->prev, now, (size_t)(nq + ny) * sizeof(double));
  }
  w->t_prev = t;
  w->samples++;
  return 0;
}

/* Values of run `run` applied to copies of the base numbers. */
static void apply_values(const struct eom_model *m, const struct eom_sweep_options *o,
                         long run, double *p, int *given, double *x, double *u, double *values) {
  int any_param = 0;
  for (int k = 0; k < o->nvars; k++) {
    const struct eom_sweep_var *v = &o->vars[k];
    double val = values[k] = eom_sweep_value(o, run, k);
    switch (v->target) {
    case EOM_SWEEP_PARAM: p[v->index] = val, given[v->index] = 1, any_param = 1; break;
    case EOM_SWEEP_INPUT: u[v->index] = val; break;
    case EOM_SWEEP_COORD: x[v->index] = val; break;
    case EOM_SWEEP_RATE: x[m->nq + v->index] = val; break;
    default: assert(0);
    }
  }
  if (any_param && m->derived_params) m->derived_params(p, given);
}

/* The base numbers every run starts from. */
typedef struct Base {
  const struct eom_model *m;
  const struct eom_sweep_options *o;
  double *p, *x, *u;
  int *given;
} Base;

/* Simulate run `run` into slot s.  Scratch: np + 2nq + nu doubles, np ints
** and 3 (nq + ny) doubles for the watch. */
static void run_one(const Base *b, long run, Slot *s, double *scratch, int *given) {
  const struct eom_model *m = b->m;
  const struct eom_sweep_options *o = b->o;
  int np = m->np, nq = m->nq, nu = m->nu, ny = m->ny;
  double *p = scratch, *u = p + np, *y = u + nu, *prev = y + ny;
  memcpy(p, b->p, (size_t)np * sizeof(double));
  memcpy(s->x, b->x, 2 * (size_t)nq * sizeof(double));
  memcpy(u, b->u, (size_t)nu * sizeof(double));
  memcpy(given, b->given, (size_t)np * sizeof(int));
  apply_values(m, o, run, p, given, s->x, u, s->values);

  eom_inputs *in = NULL;
  struct eom_report rep;
  memset(&rep, 0, sizeof rep);
  int st = EOM_OK;
  if (nu > 0) {
    in = eom_inputs_new(nu);
    if (!in) st = EOM_ENOMEM;
    for (int j = 0; in && j < nu; j++) eom_inputs_set_constant(in, j, u[j]);
  }
  Watch w;
  memset(&w, 0, sizeof w);
  w.m = m, w.p = p, w.slot = s, w.y = y, w.prev = prev;
  w.trace_points = o->trace_points > 1 ? o->trace_points : 0;
  w.t0 = o->sim.t0, w.t_end = o->sim.t_end;
  if (st == EOM_OK) st = eom_simulate(m, p, in, s->x, &o->sim, on_sample, &w, &rep);
  eom_inputs_free(in);

  if (w.samples == 0) { /* failed before the first sample: the start is all we know */
    for (int i = 0; i < nq; i++) s->qmin[i] = s->qmax[i] = s->x[i];
    for (int i = 0; i < ny; i++) s->ymin[i] = s->ymax[i] = s->y[i] = NAN;
  } else {
    memcpy(s->y, y, (size_t)ny * sizeof(double));
  }
  for (int k = w.next_point; k < w.trace_points; k++)
    for (int i = 0; i < nq + ny; i++) s->trace[(size_t)k * (nq + ny) + i] = NAN;
  s->run.run = run;
  s->run.t = w.samples > 0 ? w.t_prev : o->sim.t0;
  s->run.energy_change = w.samples > 0 ? w.E - w.E0 : 0.0;
  s->run.status = (eom_status)st;
  s->run.events = rep.events;
  if (st == EOM_OK) s->message[0] = '\0';
  else if (rep.message[0]) memcpy(s->message, rep.message, sizeof s->message);
  else snprintf(s->message, sizeof s->message, "%s", eom_status_text((eom_status)st));
}

/* ------------------------------------------------------------ the pool */

typedef struct Pool {
  Base base;
  eom_sweep_run_fn on_run;
  void *ctx;
  long total;        /* runs this call does */
  long next_take;    /* next local index a worker takes */
  long next_emit;    /* next local index handed to on_run */
  int nslots;
  Slot *slots;
  size_t scratch_len;
  int failed;        /* a worker could not get its scratch */
  pthread_mutex_t lock;
  pthread_cond_t space;
} Pool;

/* Hand every finished slot from next_emit on to the callback (lock held). */
static void emit_ready(Pool *pl) {
  const struct eom_sweep_options *o = pl->base.o;
  while (pl->next_emit < pl->total) {
    Slot *s = &pl->slots[pl->next_emit % pl->nslots];
    if (!s->done) break;
    pl->on_run(pl->ctx, &s->run);
    s->done = 0;
    pl->next_emit++;
    if (o->progress) o->progress(pl->ctx, pl->next_emit, pl->total);
    pthread_cond_broadcast(&pl->space);
  }
}

static void *worker(void *arg) {
  Pool *pl = arg;
  const struct eom_model *m = pl->base.m;
  const struct eom_sweep_options *o = pl->base.o;
  double *scratch = malloc(pl->scratch_len * sizeof(double));
  int *given = malloc(((size_t)m->np + 1) * sizeof(int));
  pthread_mutex_lock(&pl->lock);
  if (!scratch || !given) pl->failed = 1;
  while (!pl->failed && pl->next_take < pl->total) {
    if (pl->next_take >= pl->next_emit + pl->nslots) {
      pthread_cond_wait(&pl->space, &pl->lock);
      continue;
    }
    long j = pl->next_take++;
    Slot *s = &pl->slots[j % pl->nslots];
    pthread_mutex_unlock(&pl->lock);
    run_one(&pl->base, o->first + j * o->stride, s, scratch, given);
    pthread_mutex_lock(&pl->lock);
    s->done = 1;
    emit_ready(pl);
  }
  pthread_cond_broadcast(&pl->space);
  pthread_mutex_unlock(&pl->lock);
  free(scratch);
  free(given);
  return NULL;
}

/* Point each slot's arrays into one block of doubles. */
static double *slots_carve(Pool *pl, const struct eom_model *m) {
  const struct eom_sweep_options *o = pl->base.o;
  size_t nq = (size_t)m->nq, ny = (size_t)m->ny;
  size_t trace = o->trace_points > 1 ? (size_t)o->trace_points * (nq + ny) : 0;
  size_t per = (size_t)o->nvars + 4 * nq + 3 * ny + trace + 1;
  double *block = malloc(per * (size_t)pl->nslots * sizeof(double));
  if (!block) return NULL;
  for (int i = 0; i < pl->nslots; i++) {
    Slot *s = &pl->slots[i];
    double *d = block + per * (size_t)i;
    s->values = d, d += o->nvars;
    s->x = d, d += 2 * nq;
    s->y = d, d += ny;
    s->qmin = d, d += nq;
    s->qmax = d, d += nq;
    s->ymin = d, d += ny;
    s->ymax = d, d += ny;
    s->trace = trace ? d : NULL;
    s->run.values = s->values, s->run.x = s->x, s->run.y = s->y;
    s->run.qmin = s->qmin, s->run.qmax = s->qmax;
    s->run.ymin = s->ymin, s->run.ymax = s->ymax;
    s->run.trace = s->trace;
    s->run.message = s->message;
  }
  return block;
}

static int check_targets(const struct eom_model *m, const struct eom_sweep_options *o) {
  for (int k = 0; k < o->nvars; k++) {
    const struct eom_sweep_var *v = &o->vars[k];
    int limit = v->target == EOM_SWEEP_PARAM ? m->np : v->target == EOM_SWEEP_INPUT ? m->nu
              : v->target == EOM_SWEEP_COORD || v->target == EOM_SWEEP_RATE ? m->nq : 0;
    if (v->index < 0 || v->index >= limit) return -1;
  }
  return 0;
}

static int base_init(Base *b, const struct eom_model *m, const double *p, const int *p_given,
                     const double *x0, const double *u) {
  int np = m->np, nq = m->nq, nu = m->nu;
  b->p = malloc(((size_t)np + 1) * sizeof(double));
  b->x = malloc((2 * (size_t)nq + 1) * sizeof(double));
  b->u = calloc((size_t)nu + 1, sizeof(double));
  b->given = calloc((size_t)np + 1, sizeof(int));
  if (!b->p || !b->x || !b->u || !b->given) return -1;
  for (int i = 0; i < np; i++) {
    b->p[i] = p ? p[i] : m->param_defaults[i];
    b->given[i] = p_given ? p_given[i] : 0;
  }
  for (int i = 0; i < nq; i++) {
    b->x[i] = x0 ? x0[i] : m->q0 ? m->q0[i] : 0.0;
    b->x[nq + i] = x0 ? x0[nq + i] : m->qd0 ? m->qd0[i] : 0.0;
  }
  if (u) memcpy(b->u, u, (size_t)nu * sizeof(double));
  return 0;
}

static void base_free(Base *b) {
  free(b->p), free(b->x), free(b->u), free(b->given);
}

static int online_cpus(void) {
  long n = sysconf(_SC_NPROCESSORS_ONLN);
  return n >= 1 && n <= 4096 ? (int)n : 1;
}

/* Start the workers; the calling thread is one of them. */
static int pool_run(Pool *pl, int threads) {
  pthread_t *tid = calloc((size_t)threads, sizeof(pthread_t));
  if (!tid) return EOM_ENOMEM;
  int started = 0;
  for (; started < threads - 1; started++)
    if (pthread_create(&tid[started], NULL, worker, pl) != 0) break; /* fewer threads */
  worker(pl);
  for (int i = 0; i < started; i++) pthread_join(tid[i], NULL);
  free(tid);
  return pl->failed ? EOM_ENOMEM : EOM_OK;
}

int eom_sweep(const struct eom_model *m, const double *p, const int *p_given, const double *x0,
              const double *u, const struct eom_sweep_options *o, eom_sweep_run_fn on_run,
              void *ctx) {
  if (!m || !o || !on_run) return EOM_EINVAL;
  long count = eom_sweep_count(o);
  if (count < 0 || o->first < 0 || o->stride < 1 || check_targets(m, o) != 0) return EOM_EINVAL;
  if (!(o->sim.t_end > o->sim.t0)) return EOM_EINVAL;
  if (o->trace_points < 0 || o->trace_points > 1000000) return EOM_EINVAL;
  Pool pl;
  memset(&pl, 0, sizeof pl);
  pl.base.m = m, pl.base.o = o, pl.on_run = on_run, pl.ctx = ctx;
  pl.total = o->first < count ? (count - o->first + o->stride - 1) / o->stride : 0;
  if (pl.total == 0) return EOM_OK;
  int threads = o->threads > 0 ? o->threads : online_cpus();
  if (threads > pl.total) threads = (int)pl.total;
  pl.nslots = RUN_SLOTS_PER_THREAD * threads;
  pl.scratch_len = (size_t)m->np + (size_t)m->nu + 3 * ((size_t)m->nq + (size_t)m->ny) + 1;
  int st = EOM_ENOMEM;
  double *block = NULL;
  pl.slots = calloc((size_t)pl.nslots, sizeof(Slot));
  if (pl.slots && base_init(&pl.base, m, p, p_given, x0, u) == 0 &&
      (block = slots_carve(&pl, m)) != NULL) {
    pthread_mutex_init(&pl.lock, NULL);
    pthread_cond_init(&pl.space, NULL);
    st = pool_run(&pl, threads);
    pthread_cond_destroy(&pl.space);
    pthread_mutex_destroy(&pl.lock);
  }
  free(block);
  free(pl.slots);
  base_free(&pl.base);
  return st;
}
