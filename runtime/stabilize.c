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
**    damped oscillator instead of growing.  The generated accel_constrained
**    solves for gamma; the extra right-hand side delta is added here by the
**    range-space update q'' += M⁻¹Gᵀ mu, λ += mu with (G M⁻¹ Gᵀ) mu = delta.
**  - Projection after every accepted step: Gauss–Newton on phi(q) = 0 with
**    minimum-norm corrections dq = -Gᵀ (G Gᵀ)⁻¹ phi, then the rates are
**    projected onto phi' = G q' + dphi/dt = 0 the same way.  The same
**    projection puts the user's initial guess on the constraints before
**    the run.
**
** Velocity constraints A(t, q) q' = b(t, q) (nvc rows) only constrain the
** rates: they join the rows of G in the rate projection (minimum-norm
** change of q' onto [G; A] q' = [-dphi/dt; b]) and in the Baumgarte term,
** where their error e = A q' - b gets the first-order part: e' = -2 alpha e
** (it has no position part to bring back).  The positions stay free.
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

/* Cholesky a = L Lᵀ in place (lower triangle) of a symmetric n x n matrix.
** Returns -1 when a pivot is not clearly positive relative to the largest
** diagonal entry: the matrix is singular to working precision (for G Gᵀ:
** the constraints are dependent). */
static int cholesky(int n, double *a) {
  double big = 0;
  for (int i = 0; i < n; i++) big = fmax(big, fabs(a[i * n + i]));
  if (!(big > 0) || !isfinite(big)) return -1;
  for (int j = 0; j < n; j++) {
    double d = a[j * n + j];
    for (int k = 0; k < j; k++) d -= a[j * n + k] * a[j * n + k];
    if (!(d > 1e-13 * big)) return -1;
    d = sqrt(d);
    a[j * n + j] = d;
    for (int i = j + 1; i < n; i++) {
      double s = a[i * n + j];
      for (int k = 0; k < j; k++) s -= a[i * n + k] * a[j * n + k];
      a[i * n + j] = s / d;
    }
  }
  return 0;
}

static void cholesky_solve(int n, const double *l, double *b) {
  for (int i = 0; i < n; i++) {
    double s = b[i];
    for (int k = 0; k < i; k++) s -= l[i * n + k] * b[k];
    b[i] = s / l[i * n + i];
  }
  for (int i = n - 1; i >= 0; i--) {
    double s = b[i];
    for (int k = i + 1; k < n; k++) s -= l[k * n + i] * b[k];
    b[i] = s / l[i * n + i];
  }
}

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

/* S = G Gᵀ (nc x nc), factored; -1 when G loses rank. */
static int factor_ggt(int nq, int nc, const double *G, double *S) {
  for (int a = 0; a < nc; a++)
    for (int b = 0; b <= a; b++) {
      double s = 0;
      for (int i = 0; i < nq; i++) s += G[a * nq + i] * G[b * nq + i];
      S[a * nc + b] = S[b * nc + a] = s;
    }
  return cholesky(nc, S);
}

/* v -= Gᵀ (G Gᵀ)⁻¹ r, with S the factored G Gᵀ; r (nc) is overwritten.
** The minimum-norm change of v that removes r from G v. */
static void subtract_min_norm(int nq, int nc, const double *G, const double *S, double *r,
                              double *v) {
  cholesky_solve(nc, S, r);
  for (int i = 0; i < nq; i++) {
    double s = 0;
    for (int k = 0; k < nc; k++) s += G[k * nq + i] * r[k];
    v[i] -= s;
  }
}

int stabilize_init(SimContext *c, const struct eom_sim_options *o, const double *x) {
  const struct eom_model *m = c->m;
  int nq = m->nq, nc = m->nc, nt = m->nc + m->nvc;
  c->cs_active = 0;
  if (nt <= 0) return EOM_OK;
  if (nc > 0 && !m->constraint_at && (!m->constraint || !m->constraint_jacobian)) return EOM_OK;
  if (m->nvc > 0 && !m->velocity_constraint) return EOM_OK;
  size_t size = (size_t)nq * nq + 3 * (size_t)nt * nq + (size_t)nt * nt + 4 * (size_t)nt +
                2 * (size_t)m->nvc + 3 * (size_t)nq + (size_t)c->n;
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
  return EOM_OK;
}

/* Scratch of the stabilizer, with nt = nc + nvc rows: M (nq x nq), G, Y
** and G_spare (nt x nq), S (nt x nt), phi, phi_t, r, mu (nt), b and gamma
** of the velocity constraints (nvc), dq, q_old, y (nq), a state copy (n). */
typedef struct Scratch {
  double *M, *G, *Y, *G_spare, *S, *phi, *phi_t, *r, *mu, *vb, *vgamma, *dq, *q_old, *y, *x;
} Scratch;

static Scratch scratch(const SimContext *c) {
  int nq = c->m->nq, nt = c->m->nc + c->m->nvc;
  Scratch s;
  s.M = c->cs_work;
  s.G = s.M + (size_t)nq * nq;
  s.Y = s.G + (size_t)nt * nq;
  s.G_spare = s.Y + (size_t)nt * nq;
  s.S = s.G_spare + (size_t)nt * nq;
  s.phi = s.S + (size_t)nt * nt;
  s.phi_t = s.phi + nt;
  s.r = s.phi_t + nt;
  s.mu = s.r + nt;
  s.vb = s.mu + nt;
  s.vgamma = s.vb + c->m->nvc;
  s.dq = s.vgamma + c->m->nvc;
  s.q_old = s.dq + nq;
  s.y = s.q_old + nq;
  s.x = s.y + nq;
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

/* The rows that constrain the rates at (t, q, q'): H = [G; A] (nt x nq)
** and the residual e = [G q' + dphi/dt; A q' - b] (nt); phi (nc) too. */
static void rate_rows(const SimContext *c, double t, const double *q, const double *qd,
                      double *H, double *e, double *phi) {
  const struct eom_model *m = c->m;
  int nq = m->nq, nc = m->nc, nvc = m->nvc;
  Scratch s = scratch(c);
  if (nc > 0) constraints(c, t, q, phi, H, s.phi_t);
  if (nvc > 0) m->velocity_constraint(t, q, qd, c->p, H + (size_t)nc * nq, s.vb, s.vgamma);
  for (int k = 0; k < nc + nvc; k++) {
    double v = k < nc ? s.phi_t[k] : -s.vb[k - nc];
    for (int i = 0; i < nq; i++) v += H[k * nq + i] * qd[i];
    e[k] = v;
  }
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
** G q' + dphi/dt = 0 and A q' = b.
** Returns EOM_OK, EOM_ENEWTON (no convergence within max_iter) or
** EOM_ESINGULAR (G loses rank); *res and *worst give max|phi| and the
** equation where it is largest. */
static int project(SimContext *c, double t, double *x, int max_iter, double *res, int *worst) {
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
  int converged = r <= c->cs_tol;
  for (int it = 0; !converged && it < max_iter; it++) {
    if (!isfinite(r)) break;
    constraints(c, t, q, s.phi, s.G, NULL);
    drop_held_columns(c, nc, s.G);
    if (factor_ggt(nq, nc, s.G, s.S) != 0) {
      *res = r;
      return EOM_ESINGULAR;
    }
    memcpy(s.q_old, q, (size_t)nq * sizeof(double));
    memset(s.dq, 0, (size_t)nq * sizeof(double));
    memcpy(s.r, s.phi, (size_t)nc * sizeof(double));
    subtract_min_norm(nq, nc, s.G, s.S, s.r, s.dq); /* dq = -Gᵀ(GGᵀ)⁻¹phi */
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
  if (!converged) return EOM_ENEWTON;
  /* Rates: the minimum-norm change that makes phi' = G q' + dphi/dt = 0
  ** and A q' = b (A, b do not depend on q', so one step is exact). */
  rate_rows(c, t, q, qd, s.G, s.r, s.phi);
  drop_held_columns(c, nt, s.G);
  if (factor_ggt(nq, nt, s.G, s.S) != 0) return EOM_ESINGULAR;
  subtract_min_norm(nq, nt, s.G, s.S, s.r, qd);
  return EOM_OK;
}

int stabilize_project(SimContext *c, double t, double *x, int max_iter, const char *when) {
  if (!c->cs_active) return EOM_OK;
  Scratch s = scratch(c);
  int n = c->n, worst = 0;
  double res = 0;
  memcpy(s.x, x, (size_t)n * sizeof(double));
  int st = project(c, t, x, max_iter, &res, &worst);
  if (st == EOM_OK) return EOM_OK;
  memcpy(x, s.x, (size_t)n * sizeof(double));
  char what[256];
  if (st == EOM_ESINGULAR && c->cs_holding && c->cs_hold)
    snprintf(what, sizeof what,
             "%s: with the held coordinates fixed the constraints leave the others no way "
             "to satisfy them (max|phi| = %.3g); hold fewer coordinates",
             when, res);
  else if (st == EOM_ESINGULAR)
    snprintf(what, sizeof what,
             "%s: the constraints are dependent here (G = dphi/dq loses rank; max|phi| = %.3g)",
             when, res);
  else
    snprintf(what, sizeof what,
             "%s: Gauss-Newton did not bring the coordinates onto the constraints in %d "
             "iterations (max|phi| = %.3g, largest in constraint equation %d)",
             when, max_iter, res, worst + 1);
  return sim_fail(c, st, t, x, what);
}

int stabilize_sample(SimContext *c, double t, const double *x, double *out) {
  int worst;
  double res;
  memcpy(out, x, (size_t)c->n * sizeof(double));
  if (!c->cs_active || !c->cs_project) return 0;
  if (project(c, t, out, 10, &res, &worst) != EOM_OK) {
    memcpy(out, x, (size_t)c->n * sizeof(double));
    return -1;
  }
  return 0;
}

int stabilize_baumgarte(SimContext *c, double t, const double *x, double *qdd) {
  const struct eom_model *m = c->m;
  int nq = m->nq, nc = m->nc + m->nvc;
  if (!c->cs_active || (c->cs_alpha == 0 && c->cs_beta == 0)) return EOM_OK;
  Scratch s = scratch(c);
  const double *q = x, *qd = x + nq;
  rate_rows(c, t, q, qd, s.G, s.mu, s.phi);
  /* delta = -2 alpha phi' - beta² phi with phi' = G q' + dphi/dt; for a
  ** velocity constraint -2 alpha (A q' - b) */
  for (int k = 0; k < nc; k++)
    s.mu[k] = -2 * c->cs_alpha * s.mu[k] - (k < m->nc ? c->cs_beta * c->cs_beta * s.phi[k] : 0);
  m->mass(q, c->p, s.M);
  if (cholesky(nq, s.M) != 0)
    return sim_fail(c, EOM_EMASS, t, x, "the mass matrix is not positive definite");
  for (int k = 0; k < nc; k++) { /* row k of Yᵀ = M⁻¹ (row k of G) */
    memcpy(s.Y + (size_t)k * nq, s.G + (size_t)k * nq, (size_t)nq * sizeof(double));
    cholesky_solve(nq, s.M, s.Y + (size_t)k * nq);
  }
  for (int a = 0; a < nc; a++)
    for (int b = 0; b <= a; b++) {
      double v = 0;
      for (int i = 0; i < nq; i++) v += s.G[a * nq + i] * s.Y[b * nq + i];
      s.S[a * nc + b] = s.S[b * nc + a] = v;
    }
  if (cholesky(nc, s.S) != 0)
    return sim_fail(c, EOM_ESINGULAR, t, x,
                    "the constraints are dependent here (G M^-1 G^T is singular)");
  cholesky_solve(nc, s.S, s.mu);
  for (int i = 0; i < nq; i++)
    for (int k = 0; k < nc; k++) qdd[i] += s.Y[k * nq + i] * s.mu[k];
  for (int k = 0; k < nc; k++) c->lambda[k] += s.mu[k];
  return EOM_OK;
}
