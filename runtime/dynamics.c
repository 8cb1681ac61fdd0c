/*
** dynamics.c — evaluate a model for the integrators: x' = [N(q) v; M⁻¹ f]
** (N(q) v = qd without attitudes), its
** jacobian (the model's own or central differences), and the norms the
** adaptive methods share.  Failure messages are report.c's.
*/
#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "integrators.h"

static void *alloc_doubles(size_t n) {
  return calloc(n ? n : 1, sizeof(double));
}

int simctx_init(SimContext *c, const struct eom_model *m, const double *p,
                const eom_inputs *in, struct eom_report *rep) {
  assert(m && rep);
  memset(c, 0, sizeof *c);
  c->m = m;
  c->p = p ? p : m->param_defaults;
  c->in = in;
  c->n = eom_state_size(m);
  c->rep = rep;
  c->rtol = 1e-8;
  c->atol = 1e-10;
  c->u = alloc_doubles((size_t)m->nu);
  c->lambda = alloc_doubles((size_t)m->nc + (size_t)m->nvc);
  c->jac_b = alloc_doubles((size_t)c->n * (size_t)m->nu);
  c->fd_x = alloc_doubles((size_t)c->n);
  c->fd_f1 = alloc_doubles((size_t)c->n);
  c->fd_f2 = alloc_doubles((size_t)c->n);
  c->piv = calloc((size_t)(3 * c->n + 1), sizeof(int));
  if (m->nattitudes > 0 && !(c->att_sample = alloc_doubles((size_t)c->n))) {
    simctx_free(c);
    return EOM_ENOMEM;
  }
  if (!c->piv || !c->u || !c->lambda || !c->jac_b || !c->fd_x || !c->fd_f1 || !c->fd_f2) {
    simctx_free(c);
    return EOM_ENOMEM;
  }
  return EOM_OK;
}

void simctx_free(SimContext *c) {
  free(c->u);
  free(c->lambda);
  free(c->jac_b);
  free(c->fd_x);
  free(c->fd_f1);
  free(c->fd_f2);
  free(c->piv);
  free(c->cs_work);
  stick_free(c);
  free(c->att_sample);
  c->att_sample = NULL;
  c->piv = NULL;
  c->cs_work = c->cs_sample = NULL;
  c->u = c->lambda = c->jac_b = c->fd_x = c->fd_f1 = c->fd_f2 = NULL;
}

void sim_load_inputs(SimContext *c, double t) {
  int nu = c->m->nu;
  if (c->u_fixed) {
    if (nu > 0) memcpy(c->u, c->u_fixed, (size_t)nu * sizeof(double));
  } else {
    eom_inputs_eval(c->in, t, c->u);
  }
}

/* accel() or, for constrained models, accel_constrained(); nonzero when the
** (augmented) mass matrix cannot be factored. */
static int model_accel(const struct eom_model *m, const double *p, double t, const double *x,
                       const double *u, double *qdd, double *lambda) {
  const double *q = x, *qd = x + m->nq;
  if (m->nc + m->nvc > 0 && m->accel_constrained)
    return m->accel_constrained(t, q, qd, u, p, qdd, lambda);
  return m->accel(t, q, qd, u, p, qdd);
}

/* q' = v, or the kinematic map of a model with attitudes. */
static void rates_of_q(const struct eom_model *m, const double *x, double *qdot) {
  if (m->nattitudes > 0 && m->kinematics) m->kinematics(x, x + m->nq, qdot);
  else memcpy(qdot, x + m->nq, (size_t)m->nq * sizeof(double));
}

void sim_normalize(SimContext *c, double *x) { (void)eom_normalize_state(c->m, x); }

int sim_rhs(SimContext *c, double t, const double *x, double *xdot) {
  const struct eom_model *m = c->m;
  int nq = m->nq;
  sim_load_inputs(c, t);
  c->rep->rhs_evals++;
  rates_of_q(m, x, xdot);
  if (stick_holding(c)) return stick_accel(c, t, x, xdot + nq);
  if (c->cs_active && (m->nc == 0 || m->constraint_gamma))
    return stabilize_accel(c, t, x, c->u, xdot + nq);
  int bad = model_accel(m, c->p, t, x, c->u, xdot + nq, c->lambda);
  /* accel_constrained: 1 for M, 2 for G M^-1 G^T (dependent constraints). */
  if (bad == 2 && m->nc + m->nvc > 0)
    return sim_fail(c, EOM_ESINGULAR, t, x,
                    "the constraints are dependent here (G M^-1 G^T is singular)");
  if (bad != 0) return sim_fail(c, EOM_EMASS, t, x, "the mass matrix is not positive definite");
  if (c->cs_active) return stabilize_baumgarte(c, t, x, xdot + nq);
  return EOM_OK;
}

int sim_jacobian(SimContext *c, double t, const double *x, double *A) {
  const struct eom_model *m = c->m;
  int n = c->n;
  /* while a rate sticks the motion is not the model's own: differences */
  if (m->jacobian && m->nc + m->nvc == 0 && !c->jacobian_by_fd && !stick_holding(c)) {
    sim_load_inputs(c, t);
    m->jacobian(t, x, c->u, c->p, A, c->jac_b);
    return EOM_OK;
  }
  /* Central differences: error O(delta^2) with delta ~ eps^(1/3) balances
  ** truncation against cancellation. */
  memcpy(c->fd_x, x, (size_t)n * sizeof(double));
  for (int j = 0; j < n; j++) {
    double delta = cbrt(DBL_EPSILON) * fmax(1.0, fabs(x[j]));
    c->fd_x[j] = x[j] + delta;
    int st = sim_rhs(c, t, c->fd_x, c->fd_f1);
    if (st) return st;
    c->fd_x[j] = x[j] - delta;
    st = sim_rhs(c, t, c->fd_x, c->fd_f2);
    if (st) return st;
    c->fd_x[j] = x[j];
    for (int i = 0; i < n; i++) A[i * n + j] = (c->fd_f1[i] - c->fd_f2[i]) / (2 * delta);
  }
  return EOM_OK;
}

int sim_distrust_jacobian(SimContext *c, double t, const double *x) {
  const struct eom_model *m = c->m;
  int n = c->n;
  if (!m->jacobian || m->nc + m->nvc > 0 || c->jacobian_by_fd || stick_holding(c)) return 0;
  double *a = malloc(2 * (size_t)n * (size_t)n * sizeof(double));
  if (!a) return 0;
  double *d = a + (size_t)n * n, diff = 0, scale = 1e-300;
  int switched = 0;
  if (sim_jacobian(c, t, x, a) == EOM_OK) {
    c->jacobian_by_fd = 1;
    if (sim_jacobian(c, t, x, d) == EOM_OK) {
      for (int i = 0; i < n * n; i++) {
        diff = fmax(diff, fabs(a[i] - d[i]));
        scale = fmax(scale, fabs(d[i]));
      }
      /* Differences are good to ~1e-10 relative; far worse is a wrong jacobian. */
      switched = !(diff <= 1e-6 * scale);
    }
    c->jacobian_by_fd = switched;
  }
  free(a);
  return switched;
}

int all_finite(int n, const double *v) {
  for (int i = 0; i < n; i++)
    if (!isfinite(v[i])) return 0;
  return 1;
}

double scaled_norm(int n, const double *v, const double *a, const double *b, double rtol,
                   double atol) {
  double sum = 0;
  assert(n > 0);
  for (int i = 0; i < n; i++) {
    double sk = atol + rtol * fmax(fabs(a[i]), b ? fabs(b[i]) : 0.0);
    double e = v[i] / sk;
    sum += e * e;
  }
  return sqrt(sum / n);
}

int eom_dynamics(const struct eom_model *m, const double *p, double t, const double *x,
                 const double *u, double *xdot) {
  double lambda_small[16];
  double *lambda = lambda_small, *zero_u = NULL;
  assert(m && x && xdot);
  if (m->nc + m->nvc > (int)(sizeof lambda_small / sizeof lambda_small[0])) {
    lambda = malloc(((size_t)m->nc + (size_t)m->nvc) * sizeof(double));
    if (!lambda) return EOM_ENOMEM;
  }
  if (!u && m->nu > 0) {
    u = zero_u = calloc((size_t)m->nu, sizeof(double));
    if (!zero_u) {
      if (lambda != lambda_small) free(lambda);
      return EOM_ENOMEM;
    }
  }
  rates_of_q(m, x, xdot);
  int bad = model_accel(m, p ? p : m->param_defaults, t, x, u, xdot + m->nq, lambda);
  if (lambda != lambda_small) free(lambda);
  free(zero_u);
  return bad ? EOM_EMASS : EOM_OK;
}

int eom_state_matrix(const struct eom_model *m, const double *p, double t, const double *x,
                     const double *u, double *A) {
  struct eom_report rep;
  SimContext c;
  memset(&rep, 0, sizeof rep);
  if (simctx_init(&c, m, p, NULL, &rep) != EOM_OK) return EOM_ENOMEM;
  c.u_fixed = u;
  int st = sim_jacobian(&c, t, x, A);
  simctx_free(&c);
  return st;
}
