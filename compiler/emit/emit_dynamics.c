/*
** emit_dynamics.c — the bodies of the unconstrained generated functions:
** P_mass, P_forcing, P_accel, P_rhs, P_jacobian, P_inverse, P_energy,
** P_outputs, P_switches, and the functions emit_control.c and
** emit_kinematics.c ask for (docs/generated-c.md).
*/
#include "emit/emit_internal.h"
#include "emit/emit_attitude.h"
#include "front/xalloc.h"

#include <assert.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void emit_mass(Emitter *E) {
  const Param ps[] = {PARAM_Q, PARAM_P, {-1, "double *M", "M"}};
  int nq = E->s->nv;
  char lhs[64];
  fn_reset(E);
  add_lower(E, E->s->mass);
  fn_analyse(E);
  int nan_body = resolve_missing(E, VAR_BIT(IRV_Q) | VAR_BIT(IRV_P));
  emit_signature(E, "void", "mass", ps, NPARAMS(ps), 0);
  if (nan_body) {
    char fill[128];
    snprintf(fill, sizeof fill, "  int i;\n  for (i = 0; i < %d; i++) M[i] = NAN;\n", nq * nq);
    emit_nan_body(E, ps, NPARAMS(ps), "M", fill, NULL);
  } else {
    emit_unused(E, ps, NPARAMS(ps));
    emit_fixed_locals(E);
    emit_temps(E);
    for (int i = 0; i < nq; i++)
      for (int j = 0; j <= i; j++) {
        snprintf(lhs, sizeof lhs, "M[%d]", i * nq + j);
        emit_assign(E, lhs, E->s->mass[i * nq + j]);
      }
    for (int i = 0; i < nq; i++)
      for (int j = i + 1; j < nq; j++) fprintf(E->out, "  M[%d] = M[%d];\n", i * nq + j, j * nq + i);
  }
  fputs("}\n\n", E->out);
}

void emit_forcing(Emitter *E) {
  const Param ps[] = {PARAM_T, PARAM_Q, PARAM_QD, PARAM_U, PARAM_P, {-1, "double *f", "f"}};
  char lhs[64];
  fn_reset(E);
  add_roots(E, E->s->forcing, E->s->nv);
  fn_analyse(E);
  assert(!needs_missing(E, VARS_STATE));
  emit_signature(E, "void", "forcing", ps, NPARAMS(ps), 0);
  emit_unused(E, ps, NPARAMS(ps));
  emit_temps(E);
  for (int i = 0; i < E->s->nv; i++) {
    snprintf(lhs, sizeof lhs, "f[%d]", i);
    emit_assign(E, lhs, E->s->forcing[i]);
  }
  fputs("}\n\n", E->out);
}

void emit_accel(Emitter *E) {
  const Param ps[] = {PARAM_T, PARAM_Q, PARAM_QD, PARAM_U, PARAM_P, {-1, "double *qdd", "qdd"}};
  char lhs[64];
  fn_reset(E);
  add_lower(E, E->s->mass);
  add_roots(E, E->s->forcing, E->s->nv);
  fn_analyse(E);
  assert(!needs_missing(E, VARS_STATE));
  emit_signature(E, "int", "accel", ps, NPARAMS(ps), 0);
  fprintf(E->out, "  double a[%d];\n", E->nslots);
  emit_unused(E, ps, NPARAMS(ps));
  emit_temps(E);
  emit_mass_slots(E);
  fprintf(E->out, "  if (%s_ldl_factor(a) != 0) return 1;\n", E->P);
  for (int i = 0; i < E->s->nv; i++) {
    snprintf(lhs, sizeof lhs, "qdd[%d]", i);
    emit_assign(E, lhs, E->s->forcing[i]);
  }
  fprintf(E->out, "  %s_ldl_solve(a, qdd);\n  return 0;\n}\n\n", E->P);
}

void emit_rhs(Emitter *E) {
  FILE *o = E->out;
  int nq = E->s->nq, nv = E->s->nv;
  fprintf(o, "void %s_rhs(double t, const double *x, const double *u, const double *p, double *xdot)\n{\n", E->P);
  fprintf(o, "  double qdd[%d];\n  int i;\n", nv);
  fprintf(o, "  if (%s_accel(t, x, x + %d, u, p, qdd) != 0)\n", E->P, nq);
  fprintf(o, "    for (i = 0; i < %d; i++) qdd[i] = NAN;   /* M not positive definite */\n", nv);
  if (E->s->nattitudes) {   /* q' = N(q) v, v' = qdd */
    fprintf(o, "  %s_kinematics(x, x + %d, xdot);\n", E->P, nq);
    fprintf(o, "  for (i = 0; i < %d; i++) xdot[%d + i] = qdd[i];\n}\n\n", nv, nq);
    return;
  }
  fprintf(o, "  for (i = 0; i < %d; i++) {\n    xdot[i] = x[%d + i];\n    xdot[%d + i] = qdd[i];\n  }\n}\n\n",
          nq, nq, nq);
}

/* "  c[i] = df - (dM_i0 qdd[0] + ...);" for one column of the Jacobian. */
static int emit_jac_entry(Emitter *E, int i, int df, const int *dM) {
  int nq = E->s->nv, any = 0;
  Buf b = {0};
  if (!emit_is_zero(E, df)) {
    put_at(E, &b, df, PREC_LOW, 0);
    any = 1;
  }
  for (int j = 0; dM && j < nq; j++) {
    int d = i >= j ? dM[i * nq + j] : dM[j * nq + i];
    if (emit_is_zero(E, d)) continue;
    /* - dM_ij qdd_j, with the sign of dM_ij folded in */
    int neg = !prints_negative(E, d);
    if (any) buf_put(&b, neg ? " - " : " + ");
    else if (neg) buf_put(&b, "-");
    put_at(E, &b, d, PREC_MUL, 1);
    buf_printf(&b, "*qdd[%d]", j);
    any = 1;
  }
  fprintf(E->out, "  c[%d] = %s;\n", i, any ? b.s : "0.0");
  free(b.s);
  return any;
}

/* Column col of d qdd/d(x, u): its entries into c, the solve, the copy into
** A or B (the caller has declared c and i). */
static void emit_jac_column(Emitter *E, int col) {
  FILE *o = E->out;
  const EomSystem *s = E->s;
  int nq = s->nq, nv = s->nv, nu = s->nu, nx = nq + nv, any = 0;
  if (col < nq) fprintf(o, "  /* d qdd / d q[%d] */\n", col);
  else if (col < nx) fprintf(o, "  /* d qdd / d qd[%d] */\n", col - nq);
  else fprintf(o, "  /* d qdd / d u[%d] */\n", col - nx);
  for (int i = 0; i < nv; i++) {
    if (col < nq) any |= emit_jac_entry(E, i, s->dforcing_dq[i * nq + col], s->dmass_dq + col * nv * nv);
    else if (col < nx) any |= emit_jac_entry(E, i, s->dforcing_dqd[i * nv + col - nq], NULL);
    else any |= emit_jac_entry(E, i, s->dforcing_du[i * nu + col - nx], NULL);
  }
  assert(any);
  fprintf(o, "  %s_ldl_solve(a, c);\n", E->P);
  if (col < nx) fprintf(o, "  for (i = 0; i < %d; i++) A[(%d + i)*%d + %d] = c[i];\n", nv, nq, nx, col);
  else fprintf(o, "  for (i = 0; i < %d; i++) B[(%d + i)*%d + %d] = c[i];\n", nv, nq, nu, col - nx);
}

/* The column as `static void P_jacobian_colK(a, [w,] [qdd,] A or B)`;
** returns what it reads: 1 w[], 2 qdd. */
static int emit_jac_column_helper(Emitter *E, int col) {
  FILE *out = E->out;
  char *body = NULL;
  size_t len = 0;
  E->out = open_memstream(&body, &len);
  assert(E->out);
  emit_jac_column(E, col);
  fclose(E->out);
  E->out = out;
  int reads = (strstr(body, "w[") ? 1 : 0) | (strstr(body, "qdd[") ? 2 : 0);
  int nx = E->s->nq + E->s->nv;
  fprintf(out, "static void %s_jacobian_col%d(const double *a, %s%s%s)\n{\n  double c[%d];\n  int i;\n%s}\n\n",
          E->P, col, reads & 1 ? "const double *w, " : "", reads & 2 ? "const double *qdd, " : "",
          col < nx ? "double *A" : "double *B", E->s->nv, body);
  free(body);
  return reads;
}

void emit_jacobian(Emitter *E) {
  FILE *o = E->out;
  const EomSystem *s = E->s;
  int nq = s->nq, nv = s->nv, nu = s->nu, nx = nq + nv;
  char lhs[64];
  /* Which columns of d qdd/d(x, u) are not structurally zero, and whether
  ** any needs qdd itself (through dM/dq). */
  int need_qdd = 0, need_c = 0;
  int *live = xcalloc((size_t)(nx + nu), sizeof *live);
  for (int col = 0; col < nx + nu; col++)
    for (int i = 0; i < nv; i++) {
      int df = col < nq ? s->dforcing_dq[i * nq + col]
             : col < nx ? s->dforcing_dqd[i * nv + col - nq] : s->dforcing_du[i * nu + col - nx];
      if (!emit_is_zero(E, df)) live[col] = 1;
      for (int j = 0; col < nq && j < nv; j++) {
        int d = s->dmass_dq[col * nv * nv + (i >= j ? i * nv + j : j * nv + i)];
        if (!emit_is_zero(E, d)) live[col] = need_qdd = 1;
      }
      need_c |= live[col];
    }
  fn_reset(E);
  add_lower(E, s->mass);
  if (need_qdd) add_roots(E, s->forcing, nv);
  add_roots(E, s->dforcing_dq, nv * nq);
  add_roots(E, s->dforcing_dqd, nv * nv);
  for (int k = 0; k < nq; k++) add_lower(E, s->dmass_dq + k * nv * nv);
  if (nu) add_roots(E, s->dforcing_du, nv * nu);
  fn_analyse(E);
  assert(!needs_missing(E, VARS_STATE));
  emit_parts(E, "jacobian");
  /* Split: each column in a helper too (its entries read only w[] and qdd,
  ** since a split function's roots are all temporaries). */
  int *col_reads = calloc((size_t)(nx + nu), sizeof *col_reads);
  assert(col_reads);
  for (int col = 0; E->nparts && col < nx + nu; col++)
    if (live[col]) col_reads[col] = emit_jac_column_helper(E, col);
  fprintf(o, "void %s_jacobian(double t, const double *x, const double *u, const double *p,\n"
             "  double *A, double *B)\n{\n", E->P);
  if (E->vars & VAR_BIT(IRV_Q)) fprintf(o, "  const double *q = x;\n");
  if (E->vars & VAR_BIT(IRV_QD)) fprintf(o, "  const double *qd = x + %d;\n", nq);
  fprintf(o, "  double a[%d];\n", E->nslots);
  if (need_qdd) fprintf(o, "  double qdd[%d];\n", nv);
  if (need_c && !E->nparts) fprintf(o, "  double c[%d];\n", nv);   /* else in the column helpers */
  fprintf(o, "  int i;\n");
  {
    const Param ps[] = {PARAM_T, PARAM_U, PARAM_P};
    emit_unused(E, ps, NPARAMS(ps));
  }
  if (!(E->vars & (VAR_BIT(IRV_Q) | VAR_BIT(IRV_QD)))) fprintf(o, "  (void)x;\n");
  if (!nu) fprintf(o, "  (void)B;\n");
  fprintf(o, "  for (i = 0; i < %d; i++) A[i] = 0.0;\n", nx * nx);
  if (nu) fprintf(o, "  for (i = 0; i < %d; i++) B[i] = 0.0;\n", nx * nu);
  if (s->nattitudes) emit_attitude_jacobian_rows(o, E->m, nq, nv);   /* d q'/dx */
  else fprintf(o, "  for (i = 0; i < %d; i++) A[i*%d + %d + i] = 1.0;   /* d q'/d q' = I */\n", nq, nx, nq);
  emit_temps(E);
  emit_mass_slots(E);
  fprintf(o, "  if (%s_ldl_factor(a) != 0) {   /* M not positive definite */\n", E->P);
  fprintf(o, "    for (i = %d; i < %d; i++) A[i] = NAN;\n", nq * nx, nx * nx);
  if (nu) fprintf(o, "    for (i = %d; i < %d; i++) B[i] = NAN;\n", nq * nu, nx * nu);
  fprintf(o, "    return;\n  }\n");
  for (int i = 0; need_qdd && i < nv; i++) {
    snprintf(lhs, sizeof lhs, "qdd[%d]", i);
    emit_assign(E, lhs, s->forcing[i]);
  }
  if (need_qdd) fprintf(o, "  %s_ldl_solve(a, qdd);\n", E->P);
  /* Column by column: d qdd/d z = M^-1 (df/dz - dM/dz qdd); M depends on q only. */
  for (int col = 0; col < nx + nu; col++) {
    if (!live[col]) continue;   /* a zero column: already written */
    if (!E->nparts) {
      emit_jac_column(E, col);
      continue;
    }
    fprintf(o, "  %s_jacobian_col%d(a, ", E->P, col);
    if (col_reads[col] & 1) fputs("w, ", o);
    if (col_reads[col] & 2) fputs("qdd, ", o);
    fputs(col < nx ? "A);\n" : "B);\n", o);
  }
  free(live);
  free(col_reads);
  fputs("}\n\n", o);
}

void emit_inverse(Emitter *E) {
  const Param ps[] = {PARAM_T, PARAM_Q, PARAM_QD, {IRV_QDD, "const double *qdd", "qdd"}, PARAM_P, {-1, "double *Q", "Q"}};
  unsigned allowed = VAR_BIT(IRV_T) | VAR_BIT(IRV_Q) | VAR_BIT(IRV_QD) | VAR_BIT(IRV_QDD) | VAR_BIT(IRV_P);
  char lhs[64];
  fn_reset(E);
  add_roots(E, E->s->inverse, E->s->nv);
  fn_analyse(E);
  int nan_body = resolve_missing(E, allowed);
  emit_signature(E, "void", "inverse", ps, NPARAMS(ps), 0);
  if (nan_body) {
    char fill[128];
    snprintf(fill, sizeof fill, "  int i;\n  for (i = 0; i < %d; i++) Q[i] = NAN;\n", E->s->nv);
    emit_nan_body(E, ps, NPARAMS(ps), "Q", fill, NULL);
  } else {
    emit_unused(E, ps, NPARAMS(ps));
    emit_fixed_locals(E);
    emit_temps(E);
    for (int i = 0; i < E->s->nv; i++) {
      snprintf(lhs, sizeof lhs, "Q[%d]", i);
      emit_assign(E, lhs, E->s->inverse[i]);
    }
  }
  fputs("}\n\n", E->out);
}

void emit_energy(Emitter *E) {
  const Param ps[] = {PARAM_Q, PARAM_QD, PARAM_P, {-1, "double *T", "T"}, {-1, "double *V", "V"}};
  fn_reset(E);
  add_root(E, E->s->energy_T);
  add_root(E, E->s->energy_V);
  fn_analyse(E);
  int nan_body = resolve_missing(E, VAR_BIT(IRV_Q) | VAR_BIT(IRV_QD) | VAR_BIT(IRV_P));
  emit_signature(E, "void", "energy", ps, NPARAMS(ps), 0);
  if (nan_body) {
    emit_nan_body(E, ps, NPARAMS(ps), "the energy", "  *T = NAN;\n  *V = NAN;\n", NULL);
  } else {
    emit_unused(E, ps, NPARAMS(ps));
    emit_fixed_locals(E);
    emit_temps(E);
    emit_assign(E, "*T", E->s->energy_T);
    emit_assign(E, "*V", E->s->energy_V);
  }
  fputs("}\n\n", E->out);
}

/* `void P_fname(args..., double *out1, ...)` writing each out[k] = roots[k],
** or NaN where a root is negative (an entry without a value: see EmitOut
** in emit_kinematics.h).  A root reading an argument the function lacks
** makes it write NaN throughout (t and u are first checked numerically). */
void emit_function_outs(Emitter *E, const char *fname, unsigned args,
                               const EmitOut *outs, int nouts) {
  static const Param all[] = {{IRV_T, "double t", "t"}, {IRV_Q, "const double *q", "q"},
                              {IRV_QD, "const double *qd", "qd"},
                              {IRV_QDD, "const double *qdd", "qdd"},
                              {IRV_U, "const double *u", "u"}, {IRV_P, "const double *p", "p"}};
  enum { MAX_OUTS = 4 };
  Param ps[6 + MAX_OUTS];
  char decl[MAX_OUTS][64], lhs[64], fill[600] = "";
  int nps = 0;
  unsigned allowed = 0;
  assert(nouts >= 1 && nouts <= MAX_OUTS);
  for (int k = 0; k < 6; k++)
    if (args & (1u << k)) {
      ps[nps++] = all[k];
      allowed |= VAR_BIT(all[k].var);
    }
  fn_reset(E);
  for (int k = 0; k < nouts; k++) {
    assert(outs[k].n >= 1 && strlen(outs[k].name) < 16);
    snprintf(decl[k], sizeof decl[k], "double *%s", outs[k].name);
    ps[nps].var = -1, ps[nps].decl = decl[k], ps[nps].name = outs[k].name, nps++;
    for (int i = 0; i < outs[k].n; i++)
      if (outs[k].roots[i] >= 0) add_root(E, outs[k].roots[i]);
  }
  fn_analyse(E);
  int nan_body = resolve_missing(E, allowed);
  emit_signature(E, "void", fname, ps, nps, 0);
  if (nan_body) {
    snprintf(fill, sizeof fill, "  int i;\n");
    for (int k = 0; k < nouts; k++)
      snprintf(fill + strlen(fill), sizeof fill - strlen(fill),
               "  for (i = 0; i < %d; i++) %s[i] = NAN;\n", outs[k].n, outs[k].name);
    emit_nan_body(E, ps, nps, outs[0].name, fill, NULL);
  } else {
    emit_unused(E, ps, nps);
    emit_fixed_locals(E);
    emit_temps(E);
    for (int k = 0; k < nouts; k++)
      for (int i = 0; i < outs[k].n; i++) {
        snprintf(lhs, sizeof lhs, "%s[%d]", outs[k].name, i);
        if (outs[k].roots[i] >= 0) emit_assign(E, lhs, outs[k].roots[i]);
        else fprintf(E->out, "  %s = NAN;\n", lhs);   /* no such entry */
      }
  }
  fputs("}\n\n", E->out);
}

/* `void P_fname(args..., double *out)` writing out[k] = roots[k] (see
** PlainFunction in emit_control.h). */
void emit_plain_function(Emitter *E, const char *fname, unsigned args,
                                const char *out, const int *roots, int n) {
  EmitOut o = {out, roots, n};
  emit_function_outs(E, fname, args, &o, 1);
}

void emit_outputs(Emitter *E) {
  const Param ps[] = {PARAM_T, PARAM_Q, PARAM_QD, PARAM_U, PARAM_P, {-1, "double *y", "y"}};
  char lhs[64];
  fn_reset(E);
  if (E->s->ny) add_roots(E, E->s->outputs, E->s->ny);
  fn_analyse(E);
  assert(!needs_missing(E, VARS_STATE));
  emit_signature(E, "void", "outputs", ps, NPARAMS(ps), 0);
  emit_unused(E, ps, NPARAMS(ps));
  if (!E->s->ny) fputs("  (void)y;\n", E->out);
  emit_temps(E);
  for (int i = 0; i < E->s->ny; i++) {
    snprintf(lhs, sizeof lhs, "y[%d]", i);
    emit_assign(E, lhs, E->s->outputs[i]);
  }
  fputs("}\n\n", E->out);
}

/* P_switches: the switching functions (generated only when the model has
** branch functions, so other models' code is unchanged). */
void emit_switches(Emitter *E) {
  const Param ps[] = {PARAM_T, PARAM_Q, PARAM_QD, PARAM_U, PARAM_P, {-1, "double *s", "s"}};
  char lhs[64];
  assert(E->s->ns > 0);
  fn_reset(E);
  add_roots(E, E->s->switches, E->s->ns);
  fn_analyse(E);
  assert(!needs_missing(E, VARS_STATE));
  emit_signature(E, "void", "switches", ps, NPARAMS(ps), 0);
  emit_unused(E, ps, NPARAMS(ps));
  emit_temps(E);
  for (int i = 0; i < E->s->ns; i++) {
    snprintf(lhs, sizeof lhs, "s[%d]", i);
    emit_assign(E, lhs, E->s->switches[i]);
  }
  fputs("}\n\n", E->out);
}
