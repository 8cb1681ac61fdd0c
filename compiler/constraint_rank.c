/*
** constraint_rank.c — the numeric rank test of the constraint Jacobian
** G = dphi/dq at a model's initial state (see constraint_rank.h).
**
** The rows of G are taken in source order through modified Gram–Schmidt.
** A row whose part outside the span of the rows before it is at rounding
** level is dependent: the constraint adds nothing new to first order (it
** repeats others: redundant) or contradicts them (conflicting).  Either way
** the multipliers are not unique and the saddle-point system is singular.
** Each orthonormal basis vector also keeps its coefficients in terms of the
** original rows, so a dependent row is written as a combination of the
** earlier rows and the message names exactly the ones that take part.
*/
#include "constraint_rank.h"

#include <assert.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* A row counts as dependent when what is left of it after removing its
** projection on the earlier rows is this small relative to its own size
** (a few thousand rounding errors: common practice for rank decisions). */
#define DEPENDENT_REL 1e-9
/* A row's coefficient names its constraint when it carries at least this
** fraction of the dependent row's size. */
#define INVOLVED_REL 1e-8

static double call_value(IrFn fn, const double *a) {
  switch (fn) {
  case IRF_SIN: return sin(a[0]);
  case IRF_COS: return cos(a[0]);
  case IRF_TAN: return tan(a[0]);
  case IRF_ASIN: return asin(a[0]);
  case IRF_ACOS: return acos(a[0]);
  case IRF_ATAN: return atan(a[0]);
  case IRF_ATAN2: return atan2(a[0], a[1]);
  case IRF_EXP: return exp(a[0]);
  case IRF_LOG: return log(a[0]);
  case IRF_SQRT: return sqrt(a[0]);
  case IRF_ABS: return fabs(a[0]);
  case IRF_SINH: return sinh(a[0]);
  case IRF_COSH: return cosh(a[0]);
  case IRF_TANH: return tanh(a[0]);
  case IRF_SIGN: return (double)((a[0] > 0) - (a[0] < 0));
  }
  return NAN;
}

/* Values of nodes 0..hi of g; vars[IrVar] gives each variable array (t at [0]). */
static void eval_nodes(const IrGraph *g, int hi, const double *const vars[6], double *v) {
  for (int n = 0; n <= hi; n++) {
    const IrNode *x = &g->nodes[n];
    double a[2] = {0, 0}, r = NAN;
    switch (x->op) {
    case IR_NUM: r = x->num; break;
    case IR_VAR: r = vars[x->var][x->var == IRV_T ? 0 : x->index]; break;
    case IR_ADD:
      r = 0;
      for (int i = 0; i < x->nargs; i++) r += v[x->args[i]];
      break;
    case IR_MUL:
      r = 1;
      for (int i = 0; i < x->nargs; i++) r *= v[x->args[i]];
      break;
    case IR_NEG: r = -v[x->args[0]]; break;
    case IR_DIV: r = v[x->args[0]] / v[x->args[1]]; break;
    case IR_POW: r = pow(v[x->args[0]], v[x->args[1]]); break;
    case IR_CALL:
      for (int i = 0; i < x->nargs && i < 2; i++) a[i] = v[x->args[i]];
      r = call_value(x->fn, a);
      break;
    }
    v[n] = r;
  }
}

/* The constraint statement of each equation (vector constraints give several). */
static void equation_statements(const Model *m, int nc, const Stmt **of) {
  int k = 0;
  for (int i = 0; i < m->nterms && k < nc; i++) {
    const Stmt *s = m->terms[i];
    if (s->kind != ST_CONSTRAINT) continue;
    int count = s->e[0]->shape.rows * s->e[0]->shape.cols;
    for (int j = 0; j < count && k < nc; j++) of[k++] = s;
  }
  assert(k == nc);
}

/* "x = 0.3, y = -1.2" for the coordinates' initial values. */
static void describe_state(const Model *m, char *buf, size_t cap) {
  size_t len = 0;
  buf[0] = '\0';
  for (int i = 0; i < m->ncoords && len + 1 < cap; i++) {
    int k = snprintf(buf + len, cap - len, "%s%s = %.6g", i ? ", " : "", m->coords[i]->name,
                     m->q0[i]);
    if (k < 0) break;
    len += (size_t)k;
  }
  if (len >= cap && cap > 4) strcpy(buf + cap - 4, "...");
}

/* Append " N" (or ", N", " and N") for each distinct line in lines[0..n). */
static void list_lines(const int *lines, int n, char *buf, size_t cap) {
  size_t len = 0;
  buf[0] = '\0';
  for (int i = 0; i < n && len + 1 < cap; i++) {
    const char *sep = i == 0 ? "" : (i + 1 == n ? " and " : ", ");
    int k = snprintf(buf + len, cap - len, "%s%d", sep, lines[i]);
    if (k < 0) break;
    len += (size_t)k;
  }
}

int constraint_rank_check(const Model *m, const EomSystem *s, Diag *d) {
  int nq = s->nq, nc = s->nc, errors = 0;
  assert(m && s && d && nq == m->ncoords && nc == m->nconstraints);
  if (nc == 0) return 0;
  size_t nqc = (size_t)nq * nc;
  double *G = calloc(nqc, sizeof(double));
  double *basis = calloc(nqc + 1, sizeof(double)); /* orthonormal rows */
  double *coef = calloc((size_t)nc * nc + 1, sizeof(double)); /* basis = coef * G */
  double *comb = calloc((size_t)nc + 1, sizeof(double));
  double *r = calloc((size_t)nq + 1, sizeof(double));
  double *params = calloc((size_t)s->np + 1, sizeof(double));
  double *zeros = calloc((size_t)(nq > s->nu ? nq : s->nu) + 1, sizeof(double));
  const Stmt **of = calloc((size_t)nc, sizeof *of);
  int *lines = calloc((size_t)nc + 1, sizeof(int));
  double *v = NULL;
  int hi = 0;
  for (size_t i = 0; i < nqc; i++)
    if (s->constraint_jacobian[i] > hi) hi = s->constraint_jacobian[i];
  v = calloc((size_t)hi + 1, sizeof(double));
  if (!G || !basis || !coef || !comb || !r || !params || !zeros || !of || !lines || !v) {
    SrcLoc nowhere = {0, 0};
    diag_error(d, nowhere, "out of memory while checking the constraints");
    errors = 1;
    goto out;
  }
  for (int i = 0; i < s->np; i++) params[i] = m->params[i]->number;
  const double t0 = 0;
  const double *vars[6];
  vars[IRV_T] = &t0;
  vars[IRV_Q] = m->q0;
  vars[IRV_QD] = m->qd0;
  vars[IRV_QDD] = zeros;
  vars[IRV_U] = zeros;
  vars[IRV_P] = params;
  eval_nodes(&s->g, hi, vars, v);
  for (size_t i = 0; i < nqc; i++) {
    G[i] = v[s->constraint_jacobian[i]];
    if (!isfinite(G[i])) goto out; /* no verdict here; the run reports it */
  }
  equation_statements(m, nc, of);

  char state[256], which[256];
  describe_state(m, state, sizeof state);
  int nb = 0;
  for (int k = 0; k < nc; k++) {
    const double *row = G + (size_t)k * nq;
    double norm0 = 0, norm = 0;
    memcpy(r, row, (size_t)nq * sizeof(double));
    memset(comb, 0, (size_t)nc * sizeof(double));
    for (int i = 0; i < nq; i++) norm0 += row[i] * row[i];
    norm0 = sqrt(norm0);
    for (int b = 0; b < nb; b++) {
      double dot = 0;
      for (int i = 0; i < nq; i++) dot += basis[(size_t)b * nq + i] * r[i];
      for (int i = 0; i < nq; i++) r[i] -= dot * basis[(size_t)b * nq + i];
      /* row k = sum_b dot_b basis_b + r, and basis_b = sum_j coef[b][j] G_j */
      for (int j = 0; j < k; j++) comb[j] += dot * coef[(size_t)b * nc + j];
    }
    for (int i = 0; i < nq; i++) norm += r[i] * r[i];
    norm = sqrt(norm);
    const Stmt *st = of[k];
    if (norm0 == 0) {
      /* Most often an initial state far from the constraint (a default of
      ** zero): a warning here, and the run's Gauss–Newton start says more. */
      diag_warning(d, st->loc,
                   "this constraint's gradient dphi/dq is zero at the initial state (%s): it "
                   "does not fix the coordinates there; give initial values on the constraint",
                   state);
      continue;
    }
    if (norm > DEPENDENT_REL * norm0) {
      /* Independent: a new basis row, r / norm = (G_k - sum_j comb_j G_j) / norm. */
      for (int i = 0; i < nq; i++) basis[(size_t)nb * nq + i] = r[i] / norm;
      for (int j = 0; j < nc; j++) coef[(size_t)nb * nc + j] = -comb[j] / norm;
      coef[(size_t)nb * nc + k] = 1 / norm;
      nb++;
      continue;
    }
    /* Dependent: row k = sum_j comb_j G_j; name the rows with a real share. */
    int nlines = 0;
    for (int j = 0; j < k; j++) {
      double rn = 0;
      for (int i = 0; i < nq; i++) rn += G[(size_t)j * nq + i] * G[(size_t)j * nq + i];
      if (!(fabs(comb[j]) * sqrt(rn) > INVOLVED_REL * norm0)) continue;
      int line = of[j]->loc.line, seen = 0;
      for (int l = 0; l < nlines; l++) seen |= lines[l] == line;
      if (!seen) lines[nlines++] = line;
    }
    list_lines(lines, nlines, which, sizeof which);
    if (nlines == 1 && lines[0] == st->loc.line)
      diag_error(d, st->loc,
                 "the equations of this constraint are dependent at the initial state (%s): "
                 "redundant or conflicting constraints (the constraint Jacobian dphi/dq loses "
                 "rank)", state);
    else
      diag_error(d, st->loc,
                 "this constraint depends on the constraint%s at line%s %s at the initial "
                 "state (%s): redundant or conflicting constraints (the constraint Jacobian "
                 "dphi/dq loses rank); remove one or change the coordinates",
                 nlines == 1 ? "" : "s", nlines == 1 ? "" : "s", which, state);
    errors++;
  }
out:
  free(G);
  free(basis);
  free(coef);
  free(comb);
  free(r);
  free(params);
  free(zeros);
  free(of);
  free(lines);
  free(v);
  return errors;
}
