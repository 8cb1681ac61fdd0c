/*
** stabilize.c — keep a simulation of a constrained model on its
** constraints phi(q, t) = 0.
**
** The index-1 form M q'' = f + Gᵀλ, G q'' = gamma only fixes the second
** derivative of phi, so rounding and truncation errors make phi and phi'
** drift away from zero.  Two remedies, both on by default:
**
**  - Baumgarte stabilization (J. Baumgarte, Stabilization of constraints
**    and integrals of motion in dynamical systems, Comput. Methods Appl.
**    Mech. Eng. 1 (1972) 1–16): the acceleration constraint becomes
**    G q'' = gamma - 2 alpha phi' - beta² phi, so a deviation decays like a
**    damped oscillator instead of growing.  Models that export
**    constraint_gamma get their constrained accelerations from
**    stabilize_accel, one rank-revealing solve with gamma + delta
**    (constraint_solve.c); for others the generated accel_constrained
**    solves for gamma and delta is added by the range-space update
**    q'' += M⁻¹Gᵀ mu, λ += mu with mu = (G M⁻¹ Gᵀ)⁺ delta.
**  - Projection after every accepted step: Gauss–Newton on phi(q) = 0 with
**    mass-orthogonal minimum-norm corrections dq = -M⁻¹Gᵀ (G M⁻¹ Gᵀ)⁺ phi,
**    then the rates are projected onto phi' = G q' + dphi/dt = 0 the same
**    way.  The same projection puts the user's initial guess on the
**    constraints before the run.  Rows of G that are dependent (a linkage
**    at a singular position, redundant joints) are handled by the
**    pseudo-inverse: the run goes on, on its branch.
**
** Constraints are read through the descriptor's constraint_at(t, ...), so
** time-dependent ones are kept too.  A hand-written descriptor without it
** falls back to the time-free constraint(); a constraint that depends on t
** evaluates to NaN there, and such a model is integrated through
** accel_constrained alone (stabilization off).
*/
#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "integrators.h"

static double max_abs(int n, const double *v, int *where) {
  double m = 0;
  int w = 0;
  for (int i = 0; i < n; i++) {
    if (!isfinite(v[i])) {
      if (where) *where = i;
      return INFINITY;
    }
    if (fabs(v[i]) > m) m = fabs(v[i]), w = i;
  }
  if (where) *where = w;
  return m;
}

int stabilize_init(SimContext *c, const struct eom_sim_options *o, const double *x) {
  const struct eom_model *m = c->m;
  int nq = m->nq, nc = m->nc;
  c->cs_active = 0;
  if (nc <= 0 || (!m->constraint_at && (!m->constraint || !m->constraint_jacobian))) return EOM_OK;
  size_t size = (size_t)nq * nq + 2 * (size_t)nc * nq + 5 * (size_t)nc + 4 * (size_t)nq +
                (size_t)c->n + csolve_doubles(nq, nc);
  c->cs_work = calloc(size + (size_t)c->n, sizeof(double));
  if (!c->cs_work) return EOM_ENOMEM;
  c->cs_sample = c->cs_work + size;
  if (!m->constraint_at) { /* time-free only: a time-dependent one is NaN here */
    m->constraint(x, c->p, c->cs_work);
    for (int k = 0; k < nc; k++)
      if (isnan(c->cs_work[k])) return EOM_OK;
  }
  c->cs_active = 1;
  c->cs_project = !o->no_projection;
  c->cs_alpha = o->baumgarte_alpha;
  c->cs_beta = o->baumgarte_beta;
  c->cs_tol = o->constraint_tol > 0 ? o->constraint_tol : 1e-12;
  return EOM_OK;
}

/* Scratch of the stabilizer: M (nq x nq), G and G_spare (nc x nq), phi,
** phi_t, r, mu, gamma (nc), dq, q_old, y, f (nq), a state copy (n), and the
** rank-revealing solver's own scratch. */
typedef struct Scratch {
  double *M, *G, *G_spare, *phi, *phi_t, *r, *mu, *gamma, *dq, *q_old, *y, *f, *x;
  ConstraintSolver solver;
} Scratch;

static Scratch scratch(const SimContext *c) {
  int nq = c->m->nq, nc = c->m->nc;
  Scratch s;
  s.M = c->cs_work;
  s.G = s.M + (size_t)nq * nq;
  s.G_spare = s.G + (size_t)nc * nq;
  s.phi = s.G_spare + (size_t)nc * nq;
  s.phi_t = s.phi + nc;
  s.r = s.phi_t + nc;
  s.mu = s.r + nc;
  s.gamma = s.mu + nc;
  s.dq = s.gamma + nc;
  s.q_old = s.dq + nq;
  s.y = s.q_old + nq;
  s.f = s.y + nq;
  s.x = s.f + nq;
  csolve_init(&s.solver, nq, nc, s.x + c->n);
  return s;
}

/* phi at (t, q); G and phi_t too unless NULL (phi_t is 0 without constraint_at). */
static void constraints(const SimContext *c, double t, const double *q, double *phi, double *G,
                        double *phi_t) {
  const struct eom_model *m = c->m;
  Scratch s = scratch(c);
  if (m->constraint_at) {
    m->constraint_at(t, q, c->p, phi, G ? G : s.G_spare, phi_t ? phi_t : s.phi_t);
    return;
  }
  m->constraint(q, c->p, phi);
  if (G) m->constraint_jacobian(q, c->p, G);
  if (phi_t) memset(phi_t, 0, (size_t)m->nc * sizeof(double));
}

/* The metric of a projection's corrections: the mass matrix at q during a
** run (mass-orthogonal: keeps the branch and adds no energy), the identity
** for the initial fix (the smallest change of the numbers the user gave,
** the way a user reads them). */
typedef enum { METRIC_MASS, METRIC_IDENTITY } Metric;

static void metric_at(const SimContext *c, Metric metric, const double *q, double *W) {
  int nq = c->m->nq;
  if (metric == METRIC_MASS) {
    c->m->mass(q, c->p, W);
    return;
  }
  memset(W, 0, (size_t)nq * nq * sizeof(double));
  for (int i = 0; i < nq; i++) W[i * nq + i] = 1;
}

/* Factor the metric (at q) and G for the corrections; G is left in s->G.
** EOM_EMASS when M is not positive definite. */
static int factor_at(SimContext *c, Scratch *s, Metric metric, double t, const double *q,
                     double *phi, double *phi_t) {
  constraints(c, t, q, phi, s->G, phi_t);
  metric_at(c, metric, q, s->M);
  return csolve_factor(&s->solver, s->M, s->G);
}

/* Gauss–Newton on phi(q, t) = 0 from q, then the rates onto
** G q' + dphi/dt = 0; both corrections are mass-orthogonal and minimum-norm
** (constraint_solve.c), so rows that are dependent here (a singular
** position, redundant joints) neither stop the run nor throw it onto
** another assembly branch.  The metric stays at its value at the starting
** point (a simplified Newton method): it only picks the direction.
** Returns EOM_OK, EOM_ENEWTON (no convergence within max_iter),
** EOM_ESINGULAR (no convergence where rows of G are dependent) or
** EOM_EMASS; *res and *worst give max|phi| and the equation where it is
** largest. */
static int project(SimContext *c, Metric metric, double t, double *x, int max_iter, double *res,
                   int *worst) {
  const struct eom_model *m = c->m;
  int nq = m->nq, nc = m->nc;
  Scratch s = scratch(c);
  double *q = x, *qd = x + nq;
  constraints(c, t, q, s.phi, NULL, NULL);
  double r = max_abs(nc, s.phi, worst);
  int converged = r <= c->cs_tol;
  int rank_lost = 0;
  if (!converged && isfinite(r)) metric_at(c, metric, q, s.M);
  for (int it = 0; !converged && it < max_iter; it++) {
    if (!isfinite(r)) break;
    constraints(c, t, q, s.phi, s.G, NULL);
    if (csolve_factor(&s.solver, s.M, s.G) != EOM_OK) {
      *res = r;
      return EOM_EMASS;
    }
    rank_lost = s.solver.rank < nc;
    memcpy(s.q_old, q, (size_t)nq * sizeof(double));
    memset(s.dq, 0, (size_t)nq * sizeof(double));
    csolve_correct(&s.solver, s.phi, s.mu, s.dq); /* dq = -M⁻¹Gᵀ S⁺ phi */
    /* Halve the step while it makes things worse (a far initial guess). */
    double step = 1, r_new = INFINITY;
    for (int half = 0; half < 30; half++, step /= 2) {
      for (int i = 0; i < nq; i++) q[i] = s.q_old[i] + step * s.dq[i];
      constraints(c, t, q, s.phi, NULL, NULL);
      r_new = max_abs(nc, s.phi, worst);
      if (r_new < r) break;
    }
    double dq_max = step * max_abs(nq, s.dq, NULL), q_max = max_abs(nq, q, NULL);
    int stalled = !(r_new < r);
    if (stalled) { /* keep the best point */
      memcpy(q, s.q_old, (size_t)nq * sizeof(double));
      constraints(c, t, q, s.phi, NULL, NULL);
      max_abs(nc, s.phi, worst);
    } else {
      r = r_new;
    }
    converged = r <= c->cs_tol;
    /* At rounding level further steps cannot help: accept when phi is
    ** small on the constraint's own scale (large terms that cancel). */
    if (!converged && (dq_max <= 8 * DBL_EPSILON * (1 + q_max) || stalled)) {
      converged = r <= 1e4 * c->cs_tol;
      break;
    }
  }
  *res = r;
  if (!converged) return rank_lost ? EOM_ESINGULAR : EOM_ENEWTON;
  /* Rates: the smallest change (in the metric) that makes
  ** phi' = G q' + dphi/dt = 0. */
  if (factor_at(c, &s, metric, t, q, s.phi, s.phi_t) != EOM_OK) return EOM_EMASS;
  for (int k = 0; k < nc; k++) {
    double v = s.phi_t[k];
    for (int i = 0; i < nq; i++) v += s.G[k * nq + i] * qd[i];
    s.r[k] = v;
  }
  csolve_correct(&s.solver, s.r, s.mu, qd);
  return EOM_OK;
}

/* project() with its failure reported through sim_fail; x is left as it was
** when the projection fails. */
static int project_or_fail(SimContext *c, Metric metric, double t, double *x, int max_iter,
                           const char *when) {
  if (!c->cs_active) return EOM_OK;
  Scratch s = scratch(c);
  int n = c->n, worst = 0;
  double res = 0;
  memcpy(s.x, x, (size_t)n * sizeof(double));
  int st = project(c, metric, t, x, max_iter, &res, &worst);
  if (st == EOM_OK) return EOM_OK;
  memcpy(x, s.x, (size_t)n * sizeof(double));
  char what[256];
  if (st == EOM_EMASS)
    snprintf(what, sizeof what, "%s: the mass matrix is not positive definite", when);
  else if (st == EOM_ESINGULAR)
    snprintf(what, sizeof what,
             "%s: the constraints are dependent here (G = dphi/dq loses rank) and do not hold "
             "(max|phi| = %.3g, largest in constraint equation %d)", when, res, worst + 1);
  else
    snprintf(what, sizeof what,
             "%s: Gauss-Newton did not bring the coordinates onto the constraints in %d "
             "iterations (max|phi| = %.3g, largest in constraint equation %d)",
             when, max_iter, res, worst + 1);
  return sim_fail(c, st, t, x, what);
}

int stabilize_project(SimContext *c, double t, double *x, int max_iter, const char *when) {
  return project_or_fail(c, METRIC_MASS, t, x, max_iter, when);
}

int stabilize_initial_fix(SimContext *c, double t, double *x) {
  return project_or_fail(c, METRIC_IDENTITY, t, x, 50,
                         "the initial state is not on the constraints and cannot be put there");
}

int stabilize_sample(SimContext *c, double t, const double *x, double *out) {
  int worst;
  double res;
  memcpy(out, x, (size_t)c->n * sizeof(double));
  if (!c->cs_active || !c->cs_project) return 0;
  if (project(c, METRIC_MASS, t, out, 10, &res, &worst) != EOM_OK) {
    memcpy(out, x, (size_t)c->n * sizeof(double));
    return -1;
  }
  return 0;
}

/* delta = -2 alpha phi' - beta² phi (phi' = G q' + dphi/dt) into s->mu,
** with phi, G, phi_t of state x left in the scratch. */
static void baumgarte_term(SimContext *c, Scratch *s, const double *x) {
  int nq = c->m->nq, nc = c->m->nc;
  const double *qd = x + nq;
  for (int k = 0; k < nc; k++) {
    double v = s->phi_t[k];
    for (int i = 0; i < nq; i++) v += s->G[k * nq + i] * qd[i];
    s->mu[k] = -2 * c->cs_alpha * v - c->cs_beta * c->cs_beta * s->phi[k];
  }
}

int stabilize_accel(SimContext *c, double t, const double *x, const double *u, double *qdd) {
  const struct eom_model *m = c->m;
  int nq = m->nq, nc = m->nc;
  assert(c->cs_active && m->constraint_gamma);
  Scratch s = scratch(c);
  const double *q = x, *qd = x + nq;
  constraints(c, t, q, s.phi, s.G, s.phi_t);
  m->mass(q, c->p, s.M);
  m->forcing(t, q, qd, u, c->p, s.f);
  m->constraint_gamma(t, q, qd, c->p, s.gamma);
  baumgarte_term(c, &s, x);
  for (int k = 0; k < nc; k++) s.gamma[k] += s.mu[k];
  if (csolve_accel(&s.solver, s.M, s.G, s.f, s.gamma, qdd, c->lambda) != EOM_OK)
    return sim_fail(c, EOM_EMASS, t, x, "the mass matrix is not positive definite");
  return EOM_OK;
}

int stabilize_baumgarte(SimContext *c, double t, const double *x, double *qdd) {
  int nc = c->m->nc;
  if (!c->cs_active || (c->cs_alpha == 0 && c->cs_beta == 0)) return EOM_OK;
  Scratch s = scratch(c);
  if (factor_at(c, &s, METRIC_MASS, t, x, s.phi, s.phi_t) != EOM_OK)
    return sim_fail(c, EOM_EMASS, t, x, "the mass matrix is not positive definite");
  baumgarte_term(c, &s, x);
  csolve_pinv(&s.solver, s.mu, s.r);
  csolve_add_reaction(&s.solver, s.r, 1.0, qdd);
  for (int k = 0; k < nc; k++) c->lambda[k] += s.r[k];
  return EOM_OK;
}
