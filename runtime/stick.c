/*
** stick.c — Coulomb sticking: the set-valued law of `sign` of a rate.
**
** A force F*sign(s) with s a rate (s = x', or x' - y' between two bodies)
** is set-valued where s = 0: any force between -F and F.  Stepping it as a
** function makes the integrator chatter about s = 0 with ever smaller
** steps once the body should rest.  So when a rate switch s_k reaches zero
** (a located event, or a fixed step that crosses it) and the other forces
** can be held by the friction bound, the switch sticks: s_k = 0 becomes a
** constraint on the rates, and the friction force is its multiplier,
** sigma_k times the friction's half jump across the switch.
**
** The runtime knows the switches only as numbers, so everything is found
** by evaluating the model:
**   a_k       the rate gradient ds_k/dqd (central differences; exact for
**             s linear in the rates, which is what a sliding rate is),
**   r_k       -(ds_k/dt + ds_k/dq qd), so that s_k' = a_k qdd - r_k,
**   Df_l      (f(s_l = +d) - f(s_l = -d)) / 2: the friction's half jump,
**             from two forcing evaluations just either side of the switch
**             (along the dual direction that moves s_l alone),
**   f0        the forcing with every stuck switch at the centre of its
**             set: the average of the two sides (smooth terms linear in
**             the rate cancel exactly).
** The stuck motion is M qdd = f0 + sum_l Df_l sigma_l with a_k qdd = r_k
** for every stuck k: one small linear solve for sigma.  A switch stays
** stuck while |sigma_k| < 1; its margin 1 - |sigma_k| stands in for its
** value in the event search, so the release is located like any switch.
** At the release the rate leaves zero towards sign(sigma_k), where the
** friction's branch is the one that was saturated.
**
** A switch whose rate gradient lies along a stuck one's (two `sign(x')`
** terms) follows it: it is held at zero with it and released with it.
** Models with constraints (nc > 0) or attitudes keep the plain event
** handling.
*/
#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "integrators.h"

/* Relative size of the difference steps in t, q and qd. */
#define STICK_DIFF 1e-6
/* Half width, in units of the switch, of the two sides sampled for Df. */
#define STICK_SIDE 1e-8

static double *take(double **pool, size_t n) {
  double *p = *pool;
  *pool += n;
  return p;
}

int stick_init(SimContext *c, const struct eom_sim_options *o) {
  const struct eom_model *m = c->m;
  c->stick = NULL;
  /* x = [q; qd] with nq rates each: models with attitudes (nv != nq) and
  ** constraints keep the plain event handling */
  if (o->no_events || m->ns <= 0 || !m->switches || !m->mass || !m->forcing ||
      m->nc + m->nvc > 0 || m->nattitudes > 0)
    return EOM_OK;
  size_t ns = (size_t)m->ns, nq = (size_t)m->nq, n = 2 * nq;
  StickState *s = calloc(1, sizeof *s);
  size_t doubles = 2 * ns + ns * nq + ns + ns * nq + ns * ns + ns * nq + 4 * nq + nq * nq +
                   (ns + 1) * nq + ns * ns + ns + n + 2 * ns + 4 * ns + nq + n;
  double *pool = malloc(doubles * sizeof(double));
  int *ints = malloc((2 * ns + nq + ns + 1) * sizeof(int));
  if (!s || !pool || !ints) {
    free(s);
    free(pool);
    free(ints);
    return EOM_ENOMEM;
  }
  s->ns = m->ns, s->nq = m->nq;
  s->log = o->event_log;
  s->sigma = take(&pool, ns);
  s->s_prev = take(&pool, ns);
  s->A = take(&pool, ns * nq);
  s->r = take(&pool, ns);
  s->D = take(&pool, ns * nq);
  s->gram = take(&pool, ns * ns);
  s->df = take(&pool, ns * nq);
  s->f0 = take(&pool, nq);
  s->fb = take(&pool, nq);
  s->fp = take(&pool, nq);
  s->fm = take(&pool, nq);
  s->M = take(&pool, nq * nq);
  s->B = take(&pool, (ns + 1) * nq);
  s->W = take(&pool, ns * ns);
  s->rhs = take(&pool, ns);
  s->xp = take(&pool, n);
  s->s1 = take(&pool, ns);
  s->s2 = take(&pool, ns);
  s->now = take(&pool, ns);
  s->sig = take(&pool, ns);
  s->qdd = take(&pool, nq);
  s->wdiag = take(&pool, ns);
  s->vals = take(&pool, ns);
  s->xc = take(&pool, n);
  s->lead = ints;
  s->follows = ints + ns;
  s->piv = ints + 2 * ns;
  for (int k = 0; k < m->ns; k++) s->follows[k] = -1;
  c->stick = s;
  return EOM_OK;
}

void stick_free(SimContext *c) {
  StickState *s = c->stick;
  if (!s) return;
  free(s->sigma);  /* the start of the pool */
  free(s->lead);   /* the start of the ints */
  free(s);
  c->stick = NULL;
}

int stick_holding(const SimContext *c) { return c->stick && c->stick->nlead > 0; }

static void switches_at(SimContext *c, double t, const double *x, double *out) {
  const struct eom_model *m = c->m;
  m->switches(t, x, x + m->nq, c->u, c->p, out);
}

/* Rate gradients a_k (rows of A) and r_k of the switches ks[0..cnt) at (t, x). */
static void rate_gradients(SimContext *c, StickState *s, double t, const double *x,
                           const int *ks, int cnt, double *A, double *r) {
  int nq = s->nq, n = 2 * nq;
  double vmax = 0;
  for (int j = 0; j < n; j++) vmax = fmax(vmax, fabs(x[j]));
  for (int j = 0; j < nq; j++) {
    double h = STICK_DIFF * fmax(1.0, fabs(x[nq + j]));
    memcpy(s->xp, x, (size_t)n * sizeof(double));
    s->xp[nq + j] = x[nq + j] + h;
    switches_at(c, t, s->xp, s->s1);
    s->xp[nq + j] = x[nq + j] - h;
    switches_at(c, t, s->xp, s->s2);
    for (int l = 0; l < cnt; l++) A[l * nq + j] = (s->s1[ks[l]] - s->s2[ks[l]]) / (2 * h);
  }
  /* along the motion with the rates held: t + e, q + e qd */
  double e = STICK_DIFF * fmax(1.0, fabs(t)) / fmax(1.0, vmax);
  memcpy(s->xp, x, (size_t)n * sizeof(double));
  for (int j = 0; j < nq; j++) s->xp[j] = x[j] + e * x[nq + j];
  switches_at(c, t + e, s->xp, s->s1);
  for (int j = 0; j < nq; j++) s->xp[j] = x[j] - e * x[nq + j];
  switches_at(c, t - e, s->xp, s->s2);
  for (int l = 0; l < cnt; l++) r[l] = -(s->s1[ks[l]] - s->s2[ks[l]]) / (2 * e);
}

/* The dual directions D (rows): a_k . D_l = [k == l], D_l in the span of
** the a's.  -1 when the gradients are dependent (or zero). */
static int dual_directions(StickState *s, const double *A, int cnt, double *D) {
  int nq = s->nq;
  for (int k = 0; k < cnt; k++)
    for (int l = 0; l < cnt; l++) {
      double g = 0;
      for (int j = 0; j < nq; j++) g += A[k * nq + j] * A[l * nq + j];
      s->gram[k * cnt + l] = g;
    }
  if (dense_lu(cnt, s->gram, s->piv) != 0) return -1;
  for (int l = 0; l < cnt; l++) {
    for (int k = 0; k < cnt; k++) s->rhs[k] = k == l;
    dense_lu_solve(cnt, s->gram, s->piv, s->rhs);
    for (int j = 0; j < nq; j++) {
      double v = 0;
      for (int k = 0; k < cnt; k++) v += A[k * nq + j] * s->rhs[k];
      D[l * nq + j] = v;
    }
  }
  return 0;
}

/* Forcing at x with the rates moved by v along direction dir. */
static void forcing_along(SimContext *c, StickState *s, double t, const double *x,
                          const double *dir, double v, double *f) {
  const struct eom_model *m = c->m;
  int nq = s->nq;
  memcpy(s->xp, x, (size_t)(2 * nq) * sizeof(double));
  for (int j = 0; j < nq; j++) s->xp[nq + j] += v * dir[j];
  m->forcing(t, s->xp, s->xp + nq, c->u, c->p, f);
}

/* Half the distance, in units of a switch, between the two sides where
** the forcing is sampled: small against the rates, far above rounding. */
static double side_width(const StickState *s, const double *x) {
  double v = 0;
  for (int j = 0; j < s->nq; j++) v = fmax(v, fabs(x[s->nq + j]));
  return STICK_SIDE * fmax(1.0, v);
}

/* Solve the stuck motion at (t, x) for the switches ks[0..cnt): qdd (nq)
** and sigma (cnt).  1 when it cannot be solved (dependent gradients, or a
** set-valued term that does not act on its own rate), EOM_EMASS, or 0. */
static int stuck_solve(SimContext *c, StickState *s, double t, const double *x, const int *ks,
                       int cnt, double *qdd, double *sigma) {
  const struct eom_model *m = c->m;
  int nq = s->nq;
  size_t bytes = (size_t)nq * sizeof(double);
  rate_gradients(c, s, t, x, ks, cnt, s->A, s->r);
  if (dual_directions(s, s->A, cnt, s->D)) return 1;
  /* The state the integrator passes may have the stuck rates off zero
  ** (a stage, a difference for the jacobian): the set-valued force is
  ** the one at zero, so evaluate it on xc, x with the stuck rates zeroed. */
  double *xc = s->xc;
  memcpy(xc, x, 2 * bytes);
  switches_at(c, t, x, s->now);
  for (int l = 0; l < cnt; l++)
    for (int j = 0; j < nq; j++) xc[nq + j] -= s->now[ks[l]] * s->D[l * nq + j];
  double d = side_width(s, xc);
  m->forcing(t, xc, xc + nq, c->u, c->p, s->fb);
  memcpy(s->f0, s->fb, bytes);
  for (int l = 0; l < cnt; l++) {
    forcing_along(c, s, t, xc, s->D + l * nq, d, s->fp);
    forcing_along(c, s, t, xc, s->D + l * nq, -d, s->fm);
    for (int j = 0; j < nq; j++) {
      s->df[l * nq + j] = 0.5 * (s->fp[j] - s->fm[j]);
      s->f0[j] += 0.5 * (s->fp[j] + s->fm[j]) - s->fb[j];
    }
  }
  /* own pivots: c->piv may hold an implicit method's Newton matrix's */
  m->mass(x, c->p, s->M);
  if (dense_lu(nq, s->M, s->piv) != 0) return EOM_EMASS;
  memcpy(s->B, s->f0, bytes);
  dense_lu_solve(nq, s->M, s->piv, s->B);
  for (int l = 0; l < cnt; l++) {
    memcpy(s->B + (l + 1) * nq, s->df + l * nq, bytes);
    dense_lu_solve(nq, s->M, s->piv, s->B + (l + 1) * nq);
  }
  for (int k = 0; k < cnt; k++) {
    double ab0 = 0;
    for (int j = 0; j < nq; j++) ab0 += s->A[k * nq + j] * s->B[j];
    sigma[k] = s->r[k] - ab0;
    for (int l = 0; l < cnt; l++) {
      double w = 0;
      for (int j = 0; j < nq; j++) w += s->A[k * nq + j] * s->B[(l + 1) * nq + j];
      s->W[k * cnt + l] = w;
      if (k == l) s->wdiag[k] = w;
    }
  }
  if (dense_lu(cnt, s->W, s->piv) != 0) return 1;
  dense_lu_solve(cnt, s->W, s->piv, sigma);
  for (int j = 0; j < nq; j++) {
    double v = s->B[j];
    for (int l = 0; l < cnt; l++) v += s->B[(l + 1) * nq + j] * sigma[l];
    qdd[j] = v;
  }
  /* clean the rounding out of a_k qdd = r_k, so a rate along a coordinate
  ** stays exactly at rest */
  for (int l = 0; l < cnt; l++) {
    double miss = -s->r[l];
    for (int j = 0; j < nq; j++) miss += s->A[l * nq + j] * qdd[j];
    for (int j = 0; j < nq; j++) qdd[j] -= miss * s->D[l * nq + j];
  }
  return 0;
}

int stick_accel(SimContext *c, double t, const double *x, double *qdd) {
  StickState *s = c->stick;
  assert(s && s->nlead > 0);
  int st = stuck_solve(c, s, t, x, s->lead, s->nlead, qdd, s->sigma);
  if (st == EOM_EMASS) return sim_fail(c, EOM_EMASS, t, x, "the mass matrix is not positive definite");
  if (st) return sim_fail(c, EOM_ESINGULAR, t, x, "the friction of the stuck rates cannot hold them "
                                                  "(their switches are dependent here)");
  return EOM_OK;
}

void stick_margins(SimContext *c, double t, const double *x, double *sw) {
  StickState *s = c->stick;
  if (!s || s->nlead == 0) return;
  if (stuck_solve(c, s, t, x, s->lead, s->nlead, s->qdd, s->sig) != 0) {
    for (int l = 0; l < s->nlead; l++) sw[s->lead[l]] = -1;  /* cannot hold: release */
  } else {
    for (int l = 0; l < s->nlead; l++) sw[s->lead[l]] = 1 - fabs(s->sig[l]);
  }
  for (int k = 0; k < s->ns; k++)
    if (s->follows[k] >= 0 && s->follows[k] != k) sw[k] = 1;  /* never crosses */
}

/* The smallest rate a release gives the switch, so that the branch
** functions see the side it slips to from the first evaluation on. */
static double release_kick(const SimContext *c, const double *x) {
  double v = 0;
  for (int j = 0; j < c->m->nq; j++) v = fmax(v, fabs(x[c->m->nq + j]));
  return fmax(1e-2 * c->atol, 64 * DBL_EPSILON * v);
}

/* Put the switches ks[0..cnt) at the values want[] (0 by default) by
** moving the rates along their dual directions (two passes: exact when
** the switches are linear in the rates).  -1 when that is not possible. */
static int set_rate_switches(SimContext *c, StickState *s, double t, double *x, const int *ks,
                             int cnt, const double *want) {
  int nq = s->nq;
  for (int pass = 0; pass < 2; pass++) {
    rate_gradients(c, s, t, x, ks, cnt, s->A, s->r);
    if (dual_directions(s, s->A, cnt, s->D)) return -1;
    switches_at(c, t, x, s->now);
    for (int l = 0; l < cnt; l++) {
      double miss = (want ? want[l] : 0) - s->now[ks[l]];
      for (int j = 0; j < nq; j++) x[nq + j] += miss * s->D[l * nq + j];
    }
  }
  return 0;
}

/* Is the term at switch k (with the stuck set ks, k last) a jump of the
** forcing rather than a kink?  The half jump stays when the sides close
** in; a kink's shrinks with them. */
static int is_jump(SimContext *c, StickState *s, double t, const double *x, int l) {
  int nq = s->nq;
  double d = side_width(s, x), big = 0, small = 0;
  forcing_along(c, s, t, x, s->D + l * nq, d, s->fp);
  forcing_along(c, s, t, x, s->D + l * nq, -d, s->fm);
  for (int j = 0; j < nq; j++) big = fmax(big, fabs(s->fp[j] - s->fm[j]));
  forcing_along(c, s, t, x, s->D + l * nq, d / 16, s->fp);
  forcing_along(c, s, t, x, s->D + l * nq, -d / 16, s->fm);
  for (int j = 0; j < nq; j++) small = fmax(small, fabs(s->fp[j] - s->fm[j]));
  return big > 0 && small > 0.5 * big;
}

static const char *switch_name(const SimContext *c, int k) {
  return c->m->switch_names ? c->m->switch_names[k] : "?";
}

/* Log a stick or slip; count it unless the crossing that led to it was
** counted already (one event per rate reaching zero). */
static void log_transition(SimContext *c, double t, int k, const char *what, double sigma,
                           int counted) {
  StickState *s = c->stick;
  if (!counted) c->rep->events++;
  if (!s->log) return;
  fprintf(s->log, "event at t = %.10g: switch %d (%s) %s (friction at %.3g of its bound)\n", t,
          k + 1, switch_name(c, k), what, fabs(sigma));
}

/* Switches whose rate gradient runs along lead k's and that sit at zero
** with it follow it. */
static void adopt_followers(SimContext *c, StickState *s, double t, const double *x, int k) {
  int nq = s->nq, one[1] = {k};
  double ak[64], *a = nq <= 64 ? ak : NULL;
  if (!a) return;  /* a model of more than 64 coordinates: no followers */
  rate_gradients(c, s, t, x, one, 1, s->A, s->r);
  memcpy(a, s->A, (size_t)nq * sizeof(double));
  switches_at(c, t, x, s->now);
  double na = 0;
  for (int j = 0; j < nq; j++) na += a[j] * a[j];
  for (int i = 0; i < s->ns; i++) {
    if (s->follows[i] >= 0) continue;
    one[0] = i;
    rate_gradients(c, s, t, x, one, 1, s->A, s->r);
    double dot = 0, ni = 0;
    for (int j = 0; j < nq; j++) dot += a[j] * s->A[j], ni += s->A[j] * s->A[j];
    int parallel = ni > 0 && fabs(fabs(dot) - sqrt(na * ni)) <= 1e-9 * sqrt(na * ni);
    if (parallel && fabs(s->now[i]) <= 1e-9 * sqrt(ni) * (1 + fabs(x[nq])))
      s->follows[i] = k;
    one[0] = k;
  }
}

/* Try to stick the free rate switch k at (t, x): the stuck set with k must
** be solvable, k's term a jump that opposes its rate, and every
** multiplier inside its bound.  Then x moves onto the stuck rates and 1;
** else x is unchanged, 0, and *sigma_k (when it could be computed) says
** which side the rate leaves zero to. */
static int stick_try(SimContext *c, StickState *s, int k, double t, double *x, double *sigma_k) {
  int nq = s->nq, n = 2 * nq, cnt = s->nlead + 1;
  *sigma_k = 0;
  s->lead[s->nlead] = k;
  double kx[128], *keep = n <= 128 ? kx : malloc((size_t)n * sizeof(double));
  if (!keep) return 0;
  memcpy(keep, x, (size_t)n * sizeof(double));
  int ok = set_rate_switches(c, s, t, x, s->lead, cnt, NULL) == 0 && is_jump(c, s, t, x, cnt - 1);
  if (ok) ok = stuck_solve(c, s, t, x, s->lead, cnt, s->qdd, s->sig) == 0;
  if (ok) {
    *sigma_k = s->sig[cnt - 1];
    ok = s->wdiag[cnt - 1] < 0;  /* the term brakes the rate */
    for (int l = 0; ok && l < cnt; l++) ok = fabs(s->sig[l]) < 1;
  }
  if (ok) {
    s->nlead = cnt;
    s->follows[k] = k;
    memcpy(s->sigma, s->sig, (size_t)cnt * sizeof(double));
    adopt_followers(c, s, t, x, k);
  } else {
    memcpy(x, keep, (size_t)n * sizeof(double));
  }
  if (keep != kx) free(keep);
  return ok;
}

/* Release lead number l at (t, x): its rate leaves zero to the side of its
** multiplier's sign, the other stuck rates stay at zero. */
static void release(SimContext *c, StickState *s, int l, double t, double *x) {
  int k = s->lead[l], cnt = s->nlead;
  double sig = s->sigma[l];
  if (stuck_solve(c, s, t, x, s->lead, cnt, s->qdd, s->sig) == 0) sig = s->sig[l];
  double want[64];
  assert(cnt <= 64);
  for (int i = 0; i < cnt; i++) want[i] = 0;
  want[l] = (sig >= 0 ? 1 : -1) * release_kick(c, x);
  set_rate_switches(c, s, t, x, s->lead, cnt, want);
  log_transition(c, t, k, "slips", sig, 0);
  for (int i = 0; i < s->ns; i++)
    if (s->follows[i] == k) s->follows[i] = -1;
  for (int i = l; i + 1 < cnt; i++) {
    s->lead[i] = s->lead[i + 1];
    s->sigma[i] = s->sigma[i + 1];
  }
  s->nlead--;
}

int stick_event(SimContext *c, int k, double t, double *x, int counted) {
  StickState *s = c->stick;
  assert(s && k >= 0 && k < s->ns);
  if (s->follows[k] >= 0 && s->follows[k] != k) return 0;
  for (int l = 0; l < s->nlead; l++)
    if (s->lead[l] == k) {
      release(c, s, l, t, x);
      return 1;
    }
  if (s->nlead >= 64) return 0;
  double sigma;
  if (!stick_try(c, s, k, t, x, &sigma)) return 0;
  log_transition(c, t, k, "sticks", sigma, counted);
  return 1;
}

int stick_start(SimContext *c, double t, double *x) {
  StickState *s = c->stick;
  if (!s) return 0;
  int changed = 0;
  switches_at(c, t, x, s->s_prev);
  for (int k = 0; k < s->ns; k++) {
    if (s->s_prev[k] != 0 || s->follows[k] >= 0) continue;
    int one[1] = {k};
    rate_gradients(c, s, t, x, one, 1, s->A, s->r);
    double na = 0;
    for (int j = 0; j < s->nq; j++) na += s->A[j] * s->A[j];
    if (na == 0) continue;  /* not a rate */
    double sigma;
    if (s->nlead < 64 && stick_try(c, s, k, t, x, &sigma)) {
      log_transition(c, t, k, "sticks", sigma, 0);
    } else if (sigma == 0) {
      continue;
    } else {
      /* at rest but not held: it starts to slip to the side of sigma */
      int ks[65];
      double want[65];
      for (int l = 0; l < s->nlead; l++) ks[l] = s->lead[l], want[l] = 0;
      ks[s->nlead] = k;
      want[s->nlead] = (sigma > 0 ? 1 : -1) * release_kick(c, x);
      set_rate_switches(c, s, t, x, ks, s->nlead + 1, want);
    }
    changed = 1;
    switches_at(c, t, x, s->s_prev);
  }
  return changed;
}

/* Rate switch k at value v has as good as reached zero: it sticks, or
** turns (put on the far side at once, as far as it was from zero). */
static void turn_or_stick(SimContext *c, StickState *s, int k, double t, double *x, double v) {
  double sigma, want[65];
  int ks[65];
  if (stick_try(c, s, k, t, x, &sigma)) {
    log_transition(c, t, k, "sticks", sigma, 0);
    return;
  }
  /* the stuck rates stay at zero: move along k's dual direction among them */
  for (int l = 0; l < s->nlead; l++) ks[l] = s->lead[l], want[l] = 0;
  ks[s->nlead] = k;
  want[s->nlead] = fmax(fabs(v), release_kick(c, x)) * (v < 0 ? 1 : -1);
  set_rate_switches(c, s, t, x, ks, s->nlead + 1, want);
  c->rep->events++;
  if (s->log)
    fprintf(s->log, "event at t = %.10g: switch %d (%s) %s through 0\n", t, k + 1,
            switch_name(c, k), v < 0 ? "rises" : "falls");
}

int stick_rescue(SimContext *c, double t, double h, double *x) {
  StickState *s = c->stick;
  const struct eom_model *m = c->m;
  if (!s) return 0;
  int nq = s->nq, changed = 0;
  switches_at(c, t, x, s->vals);
  if (m->accel(t, x, x + nq, c->u, c->p, s->qdd) != 0) return 0;
  for (int k = 0; k < s->ns && s->nlead < 64; k++) {
    if (s->follows[k] >= 0) continue;
    int one[1] = {k};
    rate_gradients(c, s, t, x, one, 1, s->A, s->r);
    double rate = -s->r[0], na = 0;
    for (int j = 0; j < nq; j++) rate += s->A[j] * s->qdd[j], na += s->A[j] * s->A[j];
    double v = s->vals[k];
    /* a rate that reaches zero within the step */
    if (na == 0 || v == 0 || v * (v + h * rate) > 0) continue;
    turn_or_stick(c, s, k, t, x, v);
    changed = 1;
    switches_at(c, t, x, s->vals);
  }
  return changed;
}

int stick_reach(SimContext *c, double *t, double h, double *x) {
  StickState *s = c->stick;
  const struct eom_model *m = c->m;
  if (!s || s->nlead >= 64) return 0;
  int nq = s->nq, first = -1;
  double dt_first = INFINITY, v_first = 0, amax = 0, xmax = 0;
  switches_at(c, *t, x, s->vals);
  if (m->accel(*t, x, x + nq, c->u, c->p, s->qdd) != 0) return 0;
  for (int j = 0; j < nq; j++) amax = fmax(amax, fabs(s->qdd[j]));
  for (int j = 0; j < 2 * nq; j++) xmax = fmax(xmax, fabs(x[j]));
  for (int k = 0; k < s->ns; k++) {
    double v = s->vals[k];
    if (s->follows[k] >= 0 || v == 0) continue;
    int one[1] = {k};
    rate_gradients(c, s, *t, x, one, 1, s->A, s->r);
    double rate = -s->r[0];
    for (int j = 0; j < nq; j++) rate += s->A[j] * s->qdd[j];
    if (v * rate >= 0) continue;
    double dt = -v / rate;
    if (dt <= h && dt < dt_first) first = k, dt_first = dt, v_first = v;
  }
  /* Euler over dt errs by about dt^2 |qdd| / 2: only within the tolerance */
  if (first < 0 || dt_first * dt_first * amax > c->atol + c->rtol * xmax) return 0;
  for (int j = 0; j < nq; j++) {
    x[j] += dt_first * x[nq + j];
    x[nq + j] += dt_first * s->qdd[j];
  }
  *t += dt_first;
  /* at zero now: only the side it came from matters */
  turn_or_stick(c, s, first, *t, x, copysign(DBL_MIN, v_first));
  return 1;
}

int stick_near_zero(SimContext *c, double t, double *x) {
  StickState *s = c->stick;
  const struct eom_model *m = c->m;
  if (!s) return 0;
  int nq = s->nq, changed = 0;
  double vmax = 0;
  for (int j = 0; j < nq; j++) vmax = fmax(vmax, fabs(x[nq + j]));
  double tol = c->atol + c->rtol * vmax;
  switches_at(c, t, x, s->vals);
  for (int k = 0; k < s->ns && s->nlead < 64; k++) {
    double v = s->vals[k];
    if (s->follows[k] >= 0 || v == 0) continue;
    int one[1] = {k};
    rate_gradients(c, s, t, x, one, 1, s->A, s->r);
    double na = 0, rate = -s->r[0];
    for (int j = 0; j < nq; j++) na += s->A[j] * s->A[j];
    if (na == 0 || fabs(v) > sqrt(na) * tol) continue;
    if (m->accel(t, x, x + nq, c->u, c->p, s->qdd) != 0) continue;
    for (int j = 0; j < nq; j++) rate += s->A[j] * s->qdd[j];
    if (v * rate >= 0) continue;  /* moving away from zero */
    turn_or_stick(c, s, k, t, x, v);
    changed = 1;
    switches_at(c, t, x, s->vals);
  }
  return changed;
}
