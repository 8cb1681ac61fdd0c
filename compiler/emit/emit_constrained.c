/*
** emit_constrained.c — the generated functions of constrained models: the
** position constraints, their Jacobian and gamma, the velocity constraints,
** and P_accel_constrained (docs/generated-c.md).
*/
#include "emit/emit_internal.h"

#include <assert.h>
#include <stdio.h>

void emit_constraint(Emitter *E) {
  const Param ps[] = {PARAM_Q, PARAM_P, {-1, "double *phi", "phi"}};
  int nc = E->s->nc;
  char lhs[64];
  fn_reset(E);
  add_roots(E, E->s->constraint, nc);
  fn_analyse(E);
  emit_signature(E, "void", "constraint", ps, NPARAMS(ps), 0);
  if (resolve_missing(E, VAR_BIT(IRV_Q) | VAR_BIT(IRV_P))) {
    char fill[128];
    snprintf(fill, sizeof fill, "  int i;\n  for (i = 0; i < %d; i++) phi[i] = NAN;\n", nc);
    emit_nan_body(E, ps, NPARAMS(ps), "phi", fill, "constraint_at() takes t.");
  } else {
    emit_unused(E, ps, NPARAMS(ps));
    emit_fixed_locals(E);
    emit_temps(E);
    for (int i = 0; i < nc; i++) {
      snprintf(lhs, sizeof lhs, "phi[%d]", i);
      emit_assign(E, lhs, E->s->constraint[i]);
    }
  }
  fputs("}\n\n", E->out);
}

void emit_constraint_jacobian(Emitter *E) {
  const Param ps[] = {PARAM_Q, PARAM_P, {-1, "double *G", "G"}};
  int nc = E->s->nc, nq = E->s->nq;
  char lhs[64];
  fn_reset(E);
  add_roots(E, E->s->constraint_jacobian, nc * nq);
  fn_analyse(E);
  emit_signature(E, "void", "constraint_jacobian", ps, NPARAMS(ps), 0);
  if (resolve_missing(E, VAR_BIT(IRV_Q) | VAR_BIT(IRV_P))) {
    char fill[128];
    snprintf(fill, sizeof fill, "  int i;\n  for (i = 0; i < %d; i++) G[i] = NAN;\n", nc * nq);
    emit_nan_body(E, ps, NPARAMS(ps), "G", fill, "constraint_at() takes t.");
  } else {
    emit_unused(E, ps, NPARAMS(ps));
    emit_fixed_locals(E);
    emit_temps(E);
    for (int i = 0; i < nc * nq; i++) {
      snprintf(lhs, sizeof lhs, "G[%d]", i);
      emit_assign(E, lhs, E->s->constraint_jacobian[i]);
    }
  }
  fputs("}\n\n", E->out);
}

/* The constraints at time t, for time-dependent ones too: phi, G and
** dphi/dt, which the runtime needs to keep a run on phi = 0 and
** phi' = G qd + dphi/dt = 0.  One function: the three share most terms. */
void emit_constraint_at(Emitter *E) {
  const Param ps[] = {PARAM_T, PARAM_Q, PARAM_P, {-1, "double *phi", "phi"}, {-1, "double *G", "G"},
                      {-1, "double *phi_t", "phi_t"}};
  const EomSystem *s = E->s;
  int nc = s->nc, nq = s->nq;
  char lhs[64];
  fn_reset(E);
  add_roots(E, s->constraint, nc);
  add_roots(E, s->constraint_jacobian, nc * nq);
  add_roots(E, s->constraint_dt, nc);
  fn_analyse(E);
  assert(!needs_missing(E, VAR_BIT(IRV_T) | VAR_BIT(IRV_Q) | VAR_BIT(IRV_P)));
  emit_signature(E, "void", "constraint_at", ps, NPARAMS(ps), 0);
  emit_unused(E, ps, NPARAMS(ps));
  emit_temps(E);
  for (int i = 0; i < nc; i++) {
    snprintf(lhs, sizeof lhs, "phi[%d]", i);
    emit_assign(E, lhs, s->constraint[i]);
  }
  for (int i = 0; i < nc * nq; i++) {
    snprintf(lhs, sizeof lhs, "G[%d]", i);
    emit_assign(E, lhs, s->constraint_jacobian[i]);
  }
  for (int i = 0; i < nc; i++) {
    snprintf(lhs, sizeof lhs, "phi_t[%d]", i);
    emit_assign(E, lhs, s->constraint_dt[i]);
  }
  fputs("}\n\n", E->out);
}

/* gamma of the acceleration constraint G qdd = gamma (phi'' = 0), alone: the
** runtime solves the constrained accelerations itself where G may lose rank
** (a linkage at a singular position, redundant constraints). */
void emit_constraint_gamma(Emitter *E) {
  const Param ps[] = {PARAM_T, PARAM_Q, PARAM_QD, PARAM_P, {-1, "double *gamma", "gamma"}};
  const EomSystem *s = E->s;
  char lhs[64];
  fn_reset(E);
  add_roots(E, s->constraint_gamma, s->nc);
  fn_analyse(E);
  assert(!needs_missing(E, VAR_BIT(IRV_T) | VAR_BIT(IRV_Q) | VAR_BIT(IRV_QD) | VAR_BIT(IRV_P)));
  emit_signature(E, "void", "constraint_gamma", ps, NPARAMS(ps), 0);
  emit_unused(E, ps, NPARAMS(ps));
  emit_temps(E);
  for (int i = 0; i < s->nc; i++) {
    snprintf(lhs, sizeof lhs, "gamma[%d]", i);
    emit_assign(E, lhs, s->constraint_gamma[i]);
  }
  fputs("}\n\n", E->out);
}

/* Velocity constraints A(t, q) qd = b(t, q) and gamma(t, q, qd) with
** A qdd = gamma (their time derivative): one function, the three share
** most terms. */
void emit_velocity_constraint(Emitter *E) {
  const Param ps[] = {PARAM_T, PARAM_Q, PARAM_QD, PARAM_P, {-1, "double *A", "A"}, {-1, "double *b", "b"},
                      {-1, "double *gamma", "gamma"}};
  const EomSystem *s = E->s;
  int nvc = s->nvc, nq = s->nq;
  char lhs[64];
  fn_reset(E);
  add_roots(E, s->vconstraint_A, nvc * nq);
  add_roots(E, s->vconstraint_b, nvc);
  add_roots(E, s->vconstraint_gamma, nvc);
  fn_analyse(E);
  assert(!needs_missing(E, VAR_BIT(IRV_T) | VAR_BIT(IRV_Q) | VAR_BIT(IRV_QD) | VAR_BIT(IRV_P)));
  emit_signature(E, "void", "velocity_constraint", ps, NPARAMS(ps), 0);
  emit_unused(E, ps, NPARAMS(ps));
  emit_temps(E);
  for (int i = 0; i < nvc * nq; i++) {
    snprintf(lhs, sizeof lhs, "A[%d]", i);
    emit_assign(E, lhs, s->vconstraint_A[i]);
  }
  for (int i = 0; i < nvc; i++) {
    snprintf(lhs, sizeof lhs, "b[%d]", i);
    emit_assign(E, lhs, s->vconstraint_b[i]);
  }
  for (int i = 0; i < nvc; i++) {
    snprintf(lhs, sizeof lhs, "gamma[%d]", i);
    emit_assign(E, lhs, s->vconstraint_gamma[i]);
  }
  fputs("}\n\n", E->out);
}

/* M qdd = f + G^T lambda with G qdd = gamma: qdd = M^-1 f + Y lambda where
** Y = M^-1 G^T, and (G Y) lambda = gamma - G M^-1 f (a small dense system).
** G stacks the position constraints' dphi/dq and the velocity ones' A. */
void emit_accel_constrained(Emitter *E) {
  const Param ps[] = {PARAM_T, PARAM_Q, PARAM_QD, PARAM_U, PARAM_P, {-1, "double *qdd", "qdd"}, {-1, "double *lambda", "lambda"}};
  FILE *o = E->out;
  const EomSystem *s = E->s;
  int nq = s->nq, np = s->nc, nvc = s->nvc, nc = np + nvc;
  char lhs[64];
  fn_reset(E);
  add_lower(E, s->mass);
  add_roots(E, s->forcing, nq);
  add_roots(E, s->constraint_jacobian, np * nq);
  add_roots(E, s->constraint_gamma, np);
  add_roots(E, s->vconstraint_A, nvc * nq);
  add_roots(E, s->vconstraint_gamma, nvc);
  fn_analyse(E);
  assert(!needs_missing(E, VARS_STATE));
  emit_signature(E, "int", "accel_constrained", ps, NPARAMS(ps), 0);
  fprintf(o, "  double a[%d], acc[%d], G[%d], Y[%d], S[%d], r[%d];\n  int i, j, k;\n",
          E->nslots, nq, nc * nq, nc * nq, nc * nc, nc);
  emit_unused(E, ps, NPARAMS(ps));
  emit_temps(E);
  emit_mass_slots(E);
  fprintf(o, "  if (%s_ldl_factor(a) != 0) return 1;\n", E->P);
  for (int i = 0; i < nq; i++) {
    snprintf(lhs, sizeof lhs, "acc[%d]", i);
    emit_assign(E, lhs, s->forcing[i]);
  }
  fprintf(o, "  %s_ldl_solve(a, acc);\n", E->P);
  for (int i = 0; i < np * nq; i++) {
    snprintf(lhs, sizeof lhs, "G[%d]", i);
    emit_assign(E, lhs, s->constraint_jacobian[i]);
  }
  for (int i = 0; i < nvc * nq; i++) {
    snprintf(lhs, sizeof lhs, "G[%d]", np * nq + i);
    emit_assign(E, lhs, s->vconstraint_A[i]);
  }
  for (int i = 0; i < np; i++) {
    snprintf(lhs, sizeof lhs, "r[%d]", i);
    emit_assign(E, lhs, s->constraint_gamma[i]);
  }
  for (int i = 0; i < nvc; i++) {
    snprintf(lhs, sizeof lhs, "r[%d]", np + i);
    emit_assign(E, lhs, s->vconstraint_gamma[i]);
  }
  fprintf(o,
    "  for (k = 0; k < %d; k++) {   /* row k of Y^T: M^-1 times row k of G */\n"
    "    for (i = 0; i < %d; i++) Y[k*%d + i] = G[k*%d + i];\n"
    "    %s_ldl_solve(a, Y + k*%d);\n"
    "  }\n", nc, nq, nq, nq, E->P, nq);
  fprintf(o,
    "  for (i = 0; i < %d; i++) {\n"
    "    for (j = 0; j < %d; j++) {\n"
    "      S[i*%d + j] = 0.0;\n"
    "      for (k = 0; k < %d; k++) S[i*%d + j] += G[i*%d + k]*Y[j*%d + k];\n"
    "    }\n"
    "    for (k = 0; k < %d; k++) r[i] -= G[i*%d + k]*acc[k];\n"
    "  }\n", nc, nc, nc, nq, nc, nq, nq, nq, nq);
  /* Dense LDL^T of the symmetric S = G M^-1 G^T.  A pivot that is a tiny
  ** fraction of its diagonal entry (the row is within ~3e-7 rad of the span
  ** of the rows before it) means the constraints are dependent: rounding
  ** rarely leaves an exact zero. */
  fprintf(o,
    "  for (j = 0; j < %d; j++) {\n"
    "    const double diag0 = S[j*%d + j];\n"
    "    for (k = 0; k < j; k++) S[j*%d + j] -= S[j*%d + k]*S[j*%d + k]*S[k*%d + k];\n"
    "    if (!(S[j*%d + j] > 1e-13*diag0) || !isfinite(S[j*%d + j])) return 2;\n"
    "    for (i = j + 1; i < %d; i++) {\n"
    "      for (k = 0; k < j; k++) S[i*%d + j] -= S[i*%d + k]*S[j*%d + k]*S[k*%d + k];\n"
    "      S[i*%d + j] /= S[j*%d + j];\n"
    "    }\n"
    "  }\n",
    nc, nc, nc, nc, nc, nc, nc, nc, nc, nc, nc, nc, nc, nc, nc);
  fprintf(o,
    "  for (i = 0; i < %d; i++)\n"
    "    for (k = 0; k < i; k++) r[i] -= S[i*%d + k]*r[k];\n"
    "  for (i = 0; i < %d; i++) r[i] /= S[i*%d + i];\n"
    "  for (i = %d; i >= 0; i--)\n"
    "    for (k = i + 1; k < %d; k++) r[i] -= S[k*%d + i]*r[k];\n",
    nc, nc, nc, nc, nc - 1, nc, nc);
  fprintf(o,
    "  for (i = 0; i < %d; i++) {\n"
    "    qdd[i] = acc[i];\n"
    "    for (k = 0; k < %d; k++) qdd[i] += Y[k*%d + i]*r[k];\n"
    "  }\n"
    "  for (k = 0; k < %d; k++) lambda[k] = r[k];\n"
    "  return 0;\n}\n\n",
    nq, nc, nq, nc);
}

/* End stops: the gaps g = LEFT - RIGHT (>= 0 while apart), their gradient
** G = dg/dq (nstops x nq) and gamma = -(g'' at qdd = 0), so g'' = G qdd -
** gamma: what an impact law and a contact solver need, in one function
** whose three outputs share their subexpressions. */
void emit_stops(Emitter *E) {
  const Param ps[] = {PARAM_T, PARAM_Q, PARAM_QD, PARAM_P, {-1, "double *g", "g"},
                      {-1, "double *G", "G"}, {-1, "double *gamma", "gamma"}};
  const EomSystem *s = E->s;
  const int ns = s->nstops, n = s->nv;
  char lhs[64];
  fn_reset(E);
  add_roots(E, s->stop_gap, ns);
  add_roots(E, s->stop_gradient, ns * n);
  add_roots(E, s->stop_gamma, ns);
  fn_analyse(E);
  assert(!needs_missing(E, VAR_BIT(IRV_T) | VAR_BIT(IRV_Q) | VAR_BIT(IRV_QD) | VAR_BIT(IRV_P)));
  emit_signature(E, "void", "stops", ps, NPARAMS(ps), 0);
  emit_unused(E, ps, NPARAMS(ps));
  emit_temps(E);
  for (int i = 0; i < ns; i++) {
    snprintf(lhs, sizeof lhs, "g[%d]", i);
    emit_assign(E, lhs, s->stop_gap[i]);
  }
  for (int i = 0; i < ns * n; i++) {
    snprintf(lhs, sizeof lhs, "G[%d]", i);
    emit_assign(E, lhs, s->stop_gradient[i]);
  }
  for (int i = 0; i < ns; i++) {
    snprintf(lhs, sizeof lhs, "gamma[%d]", i);
    emit_assign(E, lhs, s->stop_gamma[i]);
  }
  fputs("}\n\n", E->out);
}
