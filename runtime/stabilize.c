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
** Velocity constraints A(t, q) q' = b(t, q) (nvc rows) only constrain the
** rates: they join the rows of G in the rate projection ([G; A] q' =
** [-dphi/dt; b]), in the constrained accelerations ([G; A] q'' = [gamma;
** gamma_v]) and in the Baumgarte term, where their error e = A q' - b gets
** the first-order part: e' = -2 alpha e (it has no position part to bring
** back).  The positions stay free.
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
  int nq = m->nq, nc = m->nc, nt = m->nc + m->nvc;
  c->cs_active = 0;
  if (nt <= 0) return EOM_OK;
  if (nc > 0 && !m->constraint_at && (!m->constraint || !m->constraint_jacobian)) return EOM_OK;
  if (m->nvc > 0 && !m->velocity_constraint) return EOM_OK;
  size_t size = (size_t)nq * nq + 2 * (size_t)nt * nq + 6 * (size_t)nt + 4 * (size_t)nq +
                (size_t)c->n + csolve_doubles(nq, nt);
  c->cs_work = calloc(size + (size_t)c->n, sizeof(double));
  if (!c->cs_work) return EOM_ENOMEM;
  c->cs_sample = c->cs_work + size;
  if (nc > 0 && !m->constraint_at) { /* time-free only: a time-dependent one is NaN here */
    m->constraint(x, c->p, c->cs_work);
    for (int k = 0; k < nc; k++)
      if (isnan(c->cs_work[k])) return EOM_OK;
  }
  c->cs_active = 1;
  c->cs_project = !o->no_projection;
  c->cs_alpha = o->baumgarte_alpha;
  c->cs_beta = o->baumgarte_beta;
  c->cs_tol = o->constraint_tol > 0 ? o->constraint_tol : 1e-12;
  c->cs_hold = o->hold;
  c->cs_solver = o->constraint_solver;
  return EOM_OK;
}

/* Scratch of the stabilizer, with nt = nc + nvc rows: M (nq x nq), G and
** G_spare (nt x nq; G holds [G; A] where the rates are concerned), phi,
** phi_t, r, mu, gamma (nt), b of the velocity constraints (nt, first nvc
** used), dq, q_old, y, f (nq), a state copy (n), and the rank-revealing
** solver's own scratch (sized for nt rows; solver_rows picks how many). */
typedef struct Scratch {
  double *M, *G, *G_spare, *phi, *phi_t, *r, *mu, *gamma, *vb, *dq, *q_old, *y, *f, *x;
  double *solver_work;
  ConstraintSolver solver;
} Scratch;

static Scratch scratch(const SimContext *c) {
  int nq = c->m->nq, nt = c->m->nc + c->m->nvc;
  Scratch s;
  s.M = c->cs_work;
  s.G = s.M + (size_t)nq * nq;
  s.G_spare = s.G + (size_t)nt * nq;
  s.phi = s.G_spare + (size_t)nt * nq;
  s.phi_t = s.phi + nt;
  s.r = s.phi_t + nt;
  s.mu = s.r + nt;
  s.gamma = s.mu + nt;
  s.vb = s.gamma + nt;
  s.dq = s.vb + nt;
  s.q_old = s.dq + nq;
  s.y = s.q_old + nq;
  s.f = s.y + nq;
  s.x = s.f + nq;
  s.solver_work = s.x + c->n;
  csolve_init(&s.solver, nq, nt, s.solver_work);
  s.solver.mode = c->cs_solver;
  return s;
}

/* Point the solver at the first `rows` rows: nc for positions, nt for rates
** and accelerations (the scratch fits the larger). */
static void solver_rows(Scratch *s, int nq, int rows) {
  int mode = s->solver.mode;
  csolve_init(&s->solver, nq, rows, s->solver_work);
  s->solver.mode = mode;
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

/* The rows that constrain the rates at (t, q, q'): H = [G; A] (nt x nq),
** the residual e = [G q' + dphi/dt; A q' - b] (nt), phi (nc) and, in
** gamma_v (nvc), the velocity constraints' part of the accelerations. */
static void rate_rows(const SimContext *c, Scratch *s, double t, const double *q,
                      const double *qd, double *H, double *e, double *gamma_v) {
  const struct eom_model *m = c->m;
  int nq = m->nq, nc = m->nc, nvc = m->nvc;
  if (nc > 0) constraints(c, t, q, s->phi, H, s->phi_t);
  if (nvc > 0) m->velocity_constraint(t, q, qd, c->p, H + (size_t)nc * nq, s->vb, gamma_v);
  for (int k = 0; k < nc + nvc; k++) {
    double v = k < nc ? s->phi_t[k] : -s->vb[k - nc];
    for (int i = 0; i < nq; i++) v += H[k * nq + i] * qd[i];
    e[k] = v;
  }
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

/* During the initial fix a held coordinate does not move: its column of
** the rows H (nrows x nq) is dropped, so the minimum-norm correction moves
** only the others. */
static void drop_held_columns(const SimContext *c, int nrows, double *H) {
  int nq = c->m->nq;
  if (!c->cs_holding || !c->cs_hold) return;
  for (int i = 0; i < nq; i++)
    if (c->cs_hold[i])
      for (int k = 0; k < nrows; k++) H[k * nq + i] = 0;
}

/* Gauss–Newton on phi(q, t) = 0 from q, then the rates onto
** G q' + dphi/dt = 0 and A q' = b; both corrections are minimum-norm in the
** metric (constraint_solve.c), so rows that are dependent here (a singular
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
  int nq = m->nq, nc = m->nc, nt = m->nc + m->nvc;
  Scratch s = scratch(c);
  double *q = x, *qd = x + nq;
  double r = 0;
  *worst = 0;
  if (nc > 0) {
    constraints(c, t, q, s.phi, NULL, NULL);
    r = max_abs(nc, s.phi, worst);
  }
  int converged = r <= c->cs_tol, rank_lost = 0;
  metric_at(c, metric, q, s.M);
  if (nc > 0) solver_rows(&s, nq, nc);
  for (int it = 0; !converged && it < max_iter; it++) {
    if (!isfinite(r)) break;
    constraints(c, t, q, s.phi, s.G, NULL);
    drop_held_columns(c, nc, s.G);
    if (csolve_factor(&s.solver, s.M, s.G) != EOM_OK) {
      *res = r;
      return EOM_EMASS;
    }
    rank_lost = s.solver.rank < nc;
    memcpy(s.q_old, q, (size_t)nq * sizeof(double));
    memset(s.dq, 0, (size_t)nq * sizeof(double));
    csolve_correct(&s.solver, s.phi, s.mu, s.dq); /* dq = -W⁻¹Gᵀ (G W⁻¹ Gᵀ)⁺ phi */
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
  ** phi' = G q' + dphi/dt = 0 and A q' = b (A, b do not depend on q', so
  ** one step is exact). */
  rate_rows(c, &s, t, q, qd, s.G, s.r, s.gamma);
  drop_held_columns(c, nt, s.G);
  metric_at(c, metric, q, s.M);
  solver_rows(&s, nq, nt);
  if (csolve_factor(&s.solver, s.M, s.G) != EOM_OK) return EOM_EMASS;
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
  if (st == EOM_ESINGULAR && c->cs_holding && c->cs_hold)
    snprintf(what, sizeof what,
             "%s: with the held coordinates fixed the constraints leave the others no way "
             "to satisfy them (max|phi| = %.3g); hold fewer coordinates",
             when, res);
  else if (st == EOM_EMASS)
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

/* delta = -2 alpha e - beta² phi into s->mu (nt): e = phi' = G q' + dphi/dt
** for a position constraint, e = A q' - b (first order only) for a
** velocity constraint; [G; A] of state x is left in s->G and the velocity
** constraints' gamma in s->gamma + nc. */
static void baumgarte_term(SimContext *c, Scratch *s, double t, const double *x) {
  const struct eom_model *m = c->m;
  int nq = m->nq, nc = m->nc, nt = m->nc + m->nvc;
  rate_rows(c, s, t, x, x + nq, s->G, s->mu, s->gamma + nc);
  for (int k = 0; k < nt; k++)
    s->mu[k] = -2 * c->cs_alpha * s->mu[k] - (k < nc ? c->cs_beta * c->cs_beta * s->phi[k] : 0);
}

int stabilize_accel(SimContext *c, double t, const double *x, const double *u, double *qdd) {
  const struct eom_model *m = c->m;
  int nq = m->nq, nc = m->nc, nt = m->nc + m->nvc;
  assert(c->cs_active && (nc == 0 || m->constraint_gamma));
  Scratch s = scratch(c);
  const double *q = x, *qd = x + nq;
  baumgarte_term(c, &s, t, x);
  if (nc > 0) m->constraint_gamma(t, q, qd, c->p, s.gamma);
  for (int k = 0; k < nt; k++) s.gamma[k] += s.mu[k];
  m->mass(q, c->p, s.M);
  m->forcing(t, q, qd, u, c->p, s.f);
  if (csolve_accel(&s.solver, s.M, s.G, s.f, s.gamma, qdd, c->lambda) != EOM_OK)
    return sim_fail(c, EOM_EMASS, t, x, "the mass matrix is not positive definite");
  return EOM_OK;
}

int stabilize_baumgarte(SimContext *c, double t, const double *x, double *qdd) {
  int nt = c->m->nc + c->m->nvc;
  if (!c->cs_active || (c->cs_alpha == 0 && c->cs_beta == 0)) return EOM_OK;
  Scratch s = scratch(c);
  baumgarte_term(c, &s, t, x);
  metric_at(c, METRIC_MASS, x, s.M);
  if (csolve_factor(&s.solver, s.M, s.G) != EOM_OK)
    return sim_fail(c, EOM_EMASS, t, x, "the mass matrix is not positive definite");
  csolve_pinv(&s.solver, s.mu, s.r);
  csolve_add_reaction(&s.solver, s.r, 1.0, qdd);
  for (int k = 0; k < nt; k++) c->lambda[k] += s.r[k];
  return EOM_OK;
}
