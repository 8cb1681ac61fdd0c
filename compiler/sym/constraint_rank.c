/*
** constraint_rank.c — the numeric rank test of the constraint Jacobian
** G = dphi/dq at a model's initial state (see constraint_rank.h).
**
** The rows of G are taken in source order through modified Gram–Schmidt.
** A row whose part outside the span of the rows before it is at rounding
** level is dependent: the constraint adds nothing new to first order (it
** repeats others: redundant) or contradicts them (conflicting).  A
** redundant row is kept with a note (the runtime's rank-revealing solve
** splits the force by minimum norm; the multipliers are not unique); a
** conflicting one is an error.
** Each orthonormal basis vector also keeps its coefficients in terms of the
** original rows, so a dependent row is written as a combination of the
** earlier rows and the message names exactly the ones that take part.
**
** The `initial` values are often only a guess near the constraints (the
** runtime closes the loop before a run).  Off the constraint surface a
** redundant equation is only nearly dependent, so the test first moves the
** guess onto phi = 0 by damped Gauss–Newton (Levenberg–Marquardt), as the
** run will, and decides the rank there.  Conflicting equations have no
** common solution; the least-squares point it then stops at is where their
** gradients line up, which the test catches as well.
*/
#include "sym/constraint_rank.h"
#include "sym/numeric.h"
#include "front/rate_degree.h"

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


/* The constraint statement of each equation (vector constraints give
** several): the nc position ones, then the nvc velocity ones. */
static void equation_statements(const Model *m, int nc, int nvc, const Stmt **of) {
  int k = 0, kv = nc;
  for (int i = 0; i < m->nterms; i++) {
    const Stmt *s = m->terms[i];
    if (s->kind != ST_CONSTRAINT) continue;
    SrcLoc where;
    int rates = rate_degree(s->e[0], &where) != RATES_NONE ||
                rate_degree(s->e[1], &where) != RATES_NONE;
    int count = s->e[0]->shape.rows * s->e[0]->shape.cols;
    for (int j = 0; j < count; j++) {
      if (rates && kv < nc + nvc) of[kv++] = s;
      else if (!rates && k < nc) of[k++] = s;
    }
  }
  assert(k == nc && kv == nc + nvc);
}

/* "x = 0.3, y = -1.2" for the coordinate values q. */
static void describe_state(const Model *m, const double *q, char *buf, size_t cap) {
  size_t len = 0;
  buf[0] = '\0';
  for (int i = 0; i < m->ncoords && len + 1 < cap; i++) {
    int k = snprintf(buf + len, cap - len, "%s%s = %.6g", i ? ", " : "", m->coords[i]->name,
                     q[i]);
    if (k < 0) break;
    len += (size_t)k;
  }
  if (len >= cap && cap > 4) strcpy(buf + cap - 4, "...");
}

/* What the refinement works with: the graph, the variable values and the
** roots of phi and G. */
typedef struct Eval {
  const EomSystem *s;
  const double *vars[6];
  double *q;      /* nq: the point (vars[IRV_Q]) */
  double *v;      /* node values 0..hi */
  int hi;
} Eval;

/* phi and G at e->q. */
static void eval_at(Eval *e, double *phi, double *G) {
  const EomSystem *s = e->s;
  ir_eval(&s->g, e->hi, e->vars, e->v);
  for (int k = 0; k < s->nc; k++) phi[k] = e->v[s->constraint[k]];
  for (int i = 0; i < s->nc * s->nq; i++) G[i] = e->v[s->constraint_jacobian[i]];
}

static double max_norm(int n, const double *v) {
  double m = 0;
  for (int i = 0; i < n; i++) {
    if (!isfinite(v[i])) return INFINITY;
    m = fmax(m, fabs(v[i]));
  }
  return m;
}

/* Move e->q towards phi = 0 by Levenberg–Marquardt steps
** dq = -Gᵀ (G Gᵀ + mu I)⁻¹ phi (mu keeps the step finite when G loses
** rank), halved while max|phi| does not drop.  Stops at phi ~ 0, when no
** step helps, or after a fixed number of iterations; the point is only a
** better place for the rank test, so failure is not an error. */
static void approach_constraints(Eval *e, double *phi, double *G, double *A, double *w,
                                 double *q_old) {
  int nq = e->s->nq, nc = e->s->nc;
  eval_at(e, phi, G);
  double r = max_norm(nc, phi);
  for (int it = 0; it < 40 && isfinite(r) && r > 1e-14; it++) {
    double trace = 0;
    for (int a = 0; a < nc; a++)
      for (int b = 0; b < nc; b++) {
        double t = 0;
        for (int i = 0; i < nq; i++) t += G[a * nq + i] * G[b * nq + i];
        A[a * nc + b] = t;
        if (a == b) trace += t;
      }
    if (!(trace > 0) || !isfinite(trace)) return;
    for (int a = 0; a < nc; a++) A[a * nc + a] += 1e-12 * trace / nc;
    memcpy(w, phi, (size_t)nc * sizeof(double));
    if (num_spd_solve(nc, A, w) != 0) return;
    memcpy(q_old, e->q, (size_t)nq * sizeof(double));
    double step = 1, r_new = INFINITY;
    for (int half = 0; half < 30; half++, step /= 2) {
      for (int i = 0; i < nq; i++) {
        double d = 0;
        for (int k = 0; k < nc; k++) d += G[k * nq + i] * w[k];
        e->q[i] = q_old[i] - step * d;
      }
      eval_at(e, phi, G);
      r_new = max_norm(nc, phi);
      if (r_new < r) break;
    }
    if (!(r_new < (1 - 1e-6) * r)) { /* no progress: keep the better point */
      if (!(r_new < r)) {
        memcpy(e->q, q_old, (size_t)nq * sizeof(double));
        eval_at(e, phi, G);
      }
      return;
    }
    r = r_new;
  }
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
  assert(m && s && d);
  /* rows of G: the position constraints' dphi/dq, then the velocity ones' A */
  int nq = s->nq, np = s->nc, nvc = s->nvc, nc = np + nvc, errors = 0;
  assert(nq == m->ncoords && np == m->nconstraints && nvc == m->nvconstraints);
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
  double *q = calloc((size_t)nq + 1, sizeof(double)), *q_old = calloc((size_t)nq + 1, sizeof(double));
  double *phi = calloc((size_t)nc + 1, sizeof(double)), *w = calloc((size_t)nc + 1, sizeof(double));
  double *A = calloc((size_t)nc * nc + 1, sizeof(double));
  double *v = NULL;
  int hi = 0;
  for (size_t i = 0; i < (size_t)np * nq; i++) /* G has the position rows only */
    if (s->constraint_jacobian[i] > hi) hi = s->constraint_jacobian[i];
  for (int k = 0; k < np; k++)
    if (s->constraint[k] > hi) hi = s->constraint[k];
  for (size_t i = 0; i < (size_t)nvc * nq; i++)
    if (s->vconstraint_A[i] > hi) hi = s->vconstraint_A[i];
  for (int k = 0; k < nvc; k++)
    if (s->vconstraint_b[k] > hi) hi = s->vconstraint_b[k];
  v = calloc((size_t)hi + 1, sizeof(double));
  if (!G || !basis || !coef || !comb || !r || !params || !zeros || !of || !lines || !v || !q ||
      !q_old || !phi || !w || !A) {
    SrcLoc nowhere = {0, 0};
    diag_error(d, nowhere, "out of memory while checking the constraints");
    errors = 1;
    goto out;
  }
  for (int i = 0; i < s->np; i++) params[i] = m->params[i]->number;
  const double t0 = 0;
  Eval e;
  e.s = s;
  e.q = q;
  e.v = v;
  e.hi = hi;
  e.vars[IRV_T] = &t0;
  e.vars[IRV_Q] = q;
  e.vars[IRV_QD] = m->qd0;
  e.vars[IRV_QDD] = zeros;
  e.vars[IRV_U] = zeros;
  e.vars[IRV_P] = params;
  memcpy(q, m->q0, (size_t)nq * sizeof(double));
  if (np > 0) approach_constraints(&e, phi, G, A, w, q_old);
  eval_at(&e, phi, G);
  for (size_t i = 0; i < (size_t)nvc * nq; i++) G[(size_t)np * nq + i] = v[s->vconstraint_A[i]];
  for (size_t i = 0; i < nqc; i++)
    if (!isfinite(G[i])) goto out; /* no verdict here; the run reports it */
  equation_statements(m, np, nvc, of);

  char state[256], which[256];
  describe_state(m, q, state, sizeof state);
  int moved = memcmp(q, m->q0, (size_t)nq * sizeof(double)) != 0;
  const char *where = moved ? "at the initial state moved onto the constraints"
                             : "at the initial state";
  /* Dependent rows are redundant when the constraints hold at the point
  ** reached (to rounding on the scale of the coordinates), conflicting when
  ** even the least-squares point leaves a residual. */
  double residual = max_norm(nc, phi), qscale = 1, gscale = 0;
  for (int i = 0; i < nq; i++) qscale = fmax(qscale, fabs(q[i]));
  for (size_t i = 0; i < nqc; i++) gscale = fmax(gscale, fabs(G[i]));
  int consistent = residual <= 1e-9 * qscale * fmax(gscale, 1e-300);
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
    if (norm0 == 0 && k >= np) {
      diag_error(d, st->loc,
                 "this velocity constraint's rates drop out %s (%s): its matrix A is zero "
                 "there, so it does not constrain the rates", where, state);
      errors++;
      continue;
    }
    if (norm0 == 0) {
      /* Most often an initial state far from the constraint (a default of
      ** zero): a warning here, and the run's Gauss–Newton start says more. */
      diag_warning(d, st->loc,
                   "this constraint's gradient dphi/dq is zero %s (%s): it does not fix the "
                   "coordinates there; give initial values on the constraint", where, state);
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
    int alone = nlines == 1 && lines[0] == st->loc.line;
    /* A velocity row is consistent when its right side b is the same
    ** combination of the others' (a position row's is 0 here: time-free
    ** at t = 0 up to dphi/dt, which a redundant time-free row lacks). */
    double rhs_gap = 0, rhs_scale = 0;
    for (int j = 0; j <= k; j++) {
      double bj = j < np ? 0 : v[s->vconstraint_b[j - np]];
      rhs_gap += (j == k ? bj : -comb[j] * bj);
      rhs_scale = fmax(rhs_scale, fabs(bj));
    }
    if (consistent && fabs(rhs_gap) <= 1e-9 * fmax(rhs_scale, 1e-300) + 1e-300) {
      /* Redundant: the same motion with or without this row; the run keeps
      ** it and splits the constraint force by minimum norm. */
      if (alone)
        diag_note(d, st->loc,
                  "the equations of this constraint are dependent %s (%s) but consistent: "
                  "redundant; their multipliers are not unique (runs report the minimum-norm "
                  "split)", where, state);
      else
        diag_note(d, st->loc,
                  "this constraint depends on the constraint%s at line%s %s %s (%s) but is "
                  "consistent with them: redundant; the multipliers of these rows are not "
                  "unique (runs report the minimum-norm split)",
                  nlines == 1 ? "" : "s", nlines == 1 ? "" : "s", which, where, state);
      continue;
    }
    /* What cannot hold: positions (max|phi|) or, for a velocity row, the
    ** rates (its right side against the others' combination). */
    char what[96];
    if (k < np)
      snprintf(what, sizeof what, "no configuration near it satisfies them all (max|phi| = %.3g)",
               residual);
    else
      snprintf(what, sizeof what, "no rates satisfy them all (the right sides differ by %.3g)",
               fabs(rhs_gap));
    if (alone)
      diag_error(d, st->loc, "the equations of this constraint are dependent %s (%s) and conflict: %s",
                 where, state, what);
    else
      diag_error(d, st->loc,
                 "this constraint conflicts with the constraint%s at line%s %s: its gradient "
                 "depends on theirs %s (%s) but %s; remove one or change the coordinates",
                 nlines == 1 ? "" : "s", nlines == 1 ? "" : "s", which, where, state, what);
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
  free(q);
  free(q_old);
  free(phi);
  free(w);
  free(A);
  free(v);
  return errors;
}
