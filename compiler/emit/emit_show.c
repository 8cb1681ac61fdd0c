/*
** emit_show.c — the layout of `eomc show`: M q'' = f row by row, the
** constraints and their multipliers, shared subexpressions listed first;
** in plain text or LaTeX.  Expressions are printed by emit_show_expr.c.
*/
#include "emit/emit_show.h"
#include "emit/emit_show_internal.h"
#include "front/xalloc.h"
#include "front/rate_degree.h"
#include "front/units.h"

#include <assert.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

/* Repeated subexpressions bigger than this are printed once, by name. */
#define SHOW_SHARE_NODES 24

/* ------------------------------------------------------------------ layout */

static void count_uses(Show *S, const int *roots, int nroots) {
  for (int i = 0; i < nroots; i++) S->uses[roots[i]]++;
}

/* Name the repeated subexpressions that are too big to repeat inline. */
static void choose_names(Show *S) {
  int next = 0;
  for (int n = S->g->nnodes - 1; n >= 0; n--)
    if (S->uses[n])
      for (int a = 0; a < show_node(S, n)->nargs; a++) S->uses[show_node(S, n)->args[a]]++;
  for (int n = 0; n < S->g->nnodes; n++) {
    const IrNode *x = show_node(S, n);
    int size = 1;
    for (int a = 0; a < x->nargs; a++) size += S->name[x->args[a]] ? 1 : S->size[x->args[a]];
    S->size[n] = size;
    if (S->uses[n] > 1 && size > SHOW_SHARE_NODES && x->op != IR_NUM && x->op != IR_VAR) {
      S->name[n] = ++next;
      S->size[n] = 1;
    }
  }
}

/* One signed term of a sum, "coefficient times": the coefficient r is
** printed by magnitude after " + " or " - " (just "-" first), and left out
** when it is 1. */
static void put_coef(Show *S, Text *t, int r, const char *times, int *terms) {
  int neg = show_negative(S, r);
  if ((*terms)++) show_put(t, neg ? " - " : " + ");
  else if (neg) show_put(t, "-");
  const IrNode *x = show_node(S, r);
  if (x->op == IR_NUM && fabs(x->num) == 1.0) return;
  S->defining = r;
  show_put_at(S, t, r, PR_MUL, 1);
  S->defining = -1;
  show_put(t, times);
}

/* Row i of M q'' into lhs ("m*q'' + c*r''"), products joined by `times`;
** returns the number of terms (0: the row is structurally zero). */
static int mass_row_text(Show *S, int i, const char *times, Text *lhs) {
  const EomSystem *s = S->s;
  int nq = s->nv, terms = 0;
  for (int j = 0; j < nq; j++) {
    int r = i >= j ? s->mass[i * nq + j] : s->mass[j * nq + i];
    if (show_is_zero(S, r)) continue;
    put_coef(S, lhs, r, times, &terms);
    show_put_coord(S, lhs, j, 2);
  }
  return terms;
}

/* ------------------------------------------------------------ constraints */

/* Where a constraint equation comes from: its statement, which entry of
** a vector or matrix constraint, and whether it constrains velocities. */
typedef struct Origin {
  const Stmt *stmt;   /* NULL when it cannot be told */
  int entry, nentries, velocity;
} Origin;

/* The constraint equations in the generated order: the position ones in
** source order, then the velocity ones (as the multipliers are numbered). */
static void constraint_origins(const Show *S, Origin *o) {
  const Model *m = S->m;
  int nc = S->s->nc, nvc = S->s->nvc, kp = 0, kv = 0;
  for (int i = 0; i < m->nterms; i++) {
    const Stmt *st = m->terms[i];
    if (st->kind != ST_CONSTRAINT) continue;
    SrcLoc w;
    int vel = rate_degree(st->e[0], &w) != RATES_NONE || rate_degree(st->e[1], &w) != RATES_NONE;
    int n = st->e[0]->shape.rows * st->e[0]->shape.cols;
    for (int e = 0; e < n; e++) {
      if (vel && kv < nvc) o[nc + kv] = (Origin){st, e, n, 1};
      if (!vel && kp < nc) o[kp] = (Origin){st, e, n, 0};
      if (vel) kv++;
      else kp++;
    }
  }
}

static void put_multiplier(const Show *S, Text *t, int k) {
  show_putf(t, S->latex ? "\\lambda_{%d}" : "lambda%d", k + 1);
}

/* Entry (k, i) of [G; A]: equation k's coefficient of coordinate i. */
static int constraint_coef(const Show *S, int k, int i) {
  const EomSystem *s = S->s;
  return k < s->nc ? s->constraint_jacobian[k * s->nv + i]
                   : s->vconstraint_A[(k - s->nc) * s->nv + i];
}

/* Row k of [G; A] times the rates of order `rate`: "2*x*x'' + 2*y*y''". */
static int constraint_row_text(Show *S, int k, int rate, const char *times, Text *t) {
  int terms = 0;
  for (int j = 0; j < S->s->nv; j++) {
    int r = constraint_coef(S, k, j);
    if (show_is_zero(S, r)) continue;
    put_coef(S, t, r, times, &terms);
    show_put_coord(S, t, j, rate);
  }
  if (!terms) show_put(t, "0");
  return terms;
}

/* f_i + sum over k of [G; A]_ki lambda_k, the constraint forces written out. */
static void force_with_multipliers(Show *S, int i, const char *times, Text *t) {
  int ncall = S->s->nc + S->s->nvc, terms = 0;
  int f = S->s->forcing[i];
  if (!show_is_zero(S, f)) {
    char *e = show_render(S, f);
    show_put(t, e);
    free(e);
    terms++;
  }
  for (int k = 0; k < ncall; k++) {
    int r = constraint_coef(S, k, i);
    if (show_is_zero(S, r)) continue;
    put_coef(S, t, r, times, &terms);
    put_multiplier(S, t, k);
  }
  if (!terms) show_put(t, "0");
}

/* "line 9", "line 9, entry 2 of 3", "unit N/m" parts of a description. */
static void describe_origin(const Origin *o, Text *t) {
  if (!o->stmt) return;
  show_putf(t, "line %d", o->stmt->loc.line);
  if (o->nentries > 1) show_putf(t, ", entry %d of %d", o->entry + 1, o->nentries);
}

/* The multiplier's unit, when the model's units were checked. */
static int multiplier_unit(const Show *S, const Origin *o, char *buf, size_t cap) {
  Unit phi;
  if (!S->m->has_units || !o->stmt || units_of_constraint(o->stmt, &phi) != 0) return 0;
  unit_format(units_of_multiplier(phi, o->velocity), 0, buf, cap);
  return 1;
}

static void print_constraints_plain(Show *S, const Origin *o, FILE *out) {
  const EomSystem *s = S->s;
  int nc = s->nc, nvc = s->nvc;
  fputs("\nconstraints (phi = left - right = 0; velocity constraints A q' = b):\n", out);
  for (int k = 0; k < nc + nvc; k++) {
    Text eq = {0}, where = {0};
    if (k < nc) {
      char *e = show_render(S, s->constraint[k]);
      show_put(&eq, e);
      free(e);
      show_put(&eq, " = 0");
    } else {
      constraint_row_text(S, k, 1, "*", &eq);
      char *e = show_render(S, s->vconstraint_b[k - nc]);
      show_putf(&eq, " = %s", e);
      free(e);
    }
    describe_origin(&o[k], &where);
    fprintf(out, "  (%d) %s%s%s%s\n", k + 1, eq.s, where.s ? "    [" : "", where.s ? where.s : "",
            where.s ? "]" : "");
    free(eq.s);
    free(where.s);
  }
  fputs("\nmultipliers (constraint force +G^T lambda, G = dphi/dq: lambda > 0 pushes towards "
        "larger phi; sim's columns lambda1, ...):\n", out);
  for (int k = 0; k < nc + nvc; k++) {
    char unit[96];
    Text where = {0};
    describe_origin(&o[k], &where);
    fprintf(out, "  lambda%d: of constraint (%d)%s%s%s", k + 1, k + 1,
            k >= nc ? ", a velocity constraint" : "", where.s ? ", " : "", where.s ? where.s : "");
    if (multiplier_unit(S, &o[k], unit, sizeof unit)) fprintf(out, ", unit %s", unit);
    fputc('\n', out);
    free(where.s);
  }
}

static void print_plain_equations(Show *S, FILE *out) {
  const EomSystem *s = S->s;
  int nq = s->nv, ncall = s->nc + s->nvc;
  fputs(ncall ? "\nequations of motion (M q'' = f + G^T lambda):\n"
              : "\nequations of motion (M q'' = f):\n", out);
  for (int i = 0; i < nq; i++) {
    Text lhs = {0}, rhs = {0};
    int terms = mass_row_text(S, i, "*", &lhs);
    force_with_multipliers(S, i, "*", &rhs);
    fprintf(out, "  %s = %s\n", terms ? lhs.s : "0", rhs.s);
    free(lhs.s);
    free(rhs.s);
  }
  if (!ncall) return;
  fputs("\nconstraints at acceleration level (G q'' = gamma), solved with the above for q'' "
        "and lambda:\n", out);
  for (int k = 0; k < ncall; k++) {
    Text lhs = {0};
    constraint_row_text(S, k, 2, "*", &lhs);
    char *e = show_render(S, k < s->nc ? s->constraint_gamma[k] : s->vconstraint_gamma[k - s->nc]);
    fprintf(out, "  (%d) %s = %s\n", k + 1, lhs.s, e);
    free(e);
    free(lhs.s);
  }
}

/* The end stops: each gap, kept >= 0, with its statement and bounce. */
static void print_stops(Show *S, FILE *out) {
  const EomSystem *s = S->s;
  if (!s->nstops) return;
  fputs("\nstops (gap g = left - right >= 0; on contact the rates jump, bounce e):\n", out);
  for (int k = 0; k < s->nstops; k++) {
    const Stmt *st = s->stop_stmt[k];
    char *e = show_render(S, s->stop_gap[k]);
    fprintf(out, "  (%d) %s >= 0    [line %d, bounce %.15g%s%s%s]\n", k + 1, e, st->loc.line,
            st->bounce, st->desc ? ": \"" : "", st->desc ? st->desc : "", st->desc ? "\"" : "");
    free(e);
  }
}

static void print_plain(Show *S, FILE *out) {
  const EomSystem *s = S->s;
  int nq = s->nv;
  int any = 0;
  for (int n = 0; n < S->g->nnodes; n++) {
    if (!S->name[n]) continue;
    if (!any++) fputs("where\n", out);
    char *e = show_render(S, n);
    fprintf(out, "  $%d = %s\n", S->name[n], e);
    free(e);
  }
  if (any) fputc('\n', out);
  int omitted = 0;
  for (int i = 0; i < nq; i++)
    for (int j = i + 1; j < nq; j++) omitted |= show_is_zero(S, s->mass[j * nq + i]);
  fprintf(out, "mass matrix M (symmetric; upper triangle shown%s):\n",
          omitted ? "; all other entries are 0" : "");
  for (int i = 0; i < nq; i++)
    for (int j = i; j < nq; j++) {
      int r = s->mass[j * nq + i];
      if (show_is_zero(S, r) && i != j) continue;
      char *e = show_render(S, r), bi[64], bj[64];
      fprintf(out, "  M[%s, %s] = %s\n", show_rate_label(S, i, bi, sizeof bi), show_rate_label(S, j, bj, sizeof bj), e);
      free(e);
    }
  fputs("\nforcing f:\n", out);
  for (int i = 0; i < nq; i++) {
    char *e = show_render(S, s->forcing[i]), b[64];
    fprintf(out, "  f[%s] = %s\n", show_rate_label(S, i, b, sizeof b), e);
    free(e);
  }
  if (s->nc + s->nvc > 0) {
    Origin *o = xcalloc((size_t)(s->nc + s->nvc), sizeof *o);
    constraint_origins(S, o);
    print_constraints_plain(S, o, out);
    free(o);
  }
  print_stops(S, out);
  print_plain_equations(S, out);
}

/* The constraints phi = 0 (A q' = b), their acceleration form and, as
** comments, what each multiplier is; inside the equations' align*. */
static void print_constraints_latex(Show *S, FILE *out) {
  const EomSystem *s = S->s;
  int nc = s->nc, ncall = nc + s->nvc;
  Origin *o = xcalloc((size_t)ncall, sizeof *o);
  constraint_origins(S, o);
  for (int k = 0; k < ncall; k++) {
    Text eq = {0};
    if (k < nc) {
      char *e = show_render(S, s->constraint[k]);
      show_putf(&eq, "%s &= 0", e);
      free(e);
    } else {
      constraint_row_text(S, k, 1, " ", &eq);
      char *e = show_render(S, s->vconstraint_b[k - nc]);
      show_putf(&eq, " &= %s", e);
      free(e);
    }
    fprintf(out, "  %s \\\\\n", eq.s);
    free(eq.s);
  }
  for (int k = 0; k < ncall; k++) {
    Text lhs = {0};
    constraint_row_text(S, k, 2, " ", &lhs);
    char *e = show_render(S, k < nc ? s->constraint_gamma[k] : s->vconstraint_gamma[k - nc]);
    fprintf(out, "  %s &= %s%s\n", lhs.s, e, k + 1 < ncall ? " \\\\" : "");
    free(e);
    free(lhs.s);
  }
  for (int k = 0; k < ncall; k++) {
    Text where = {0};
    char unit[96];
    describe_origin(&o[k], &where);
    fprintf(out, "%% \\lambda_{%d}: multiplier of constraint %d%s%s%s", k + 1, k + 1,
            where.s ? " (" : "", where.s ? where.s : "", where.s ? ")" : "");
    if (multiplier_unit(S, &o[k], unit, sizeof unit)) fprintf(out, ", unit %s", unit);
    fputc('\n', out);
    free(where.s);
  }
  free(o);
}

static void print_latex(Show *S, FILE *out) {
  const EomSystem *s = S->s;
  int nq = s->nv;
  fputs(s->nc + s->nvc ? "% equations of motion M(q) \\ddot q = f + G^T \\lambda with the constraints "
                       "and G \\ddot q = \\gamma, written by eomc show\n"
                     : "% equations of motion M(q) \\ddot q = f, written by eomc show\n", out);
  fputs("\\begin{align*}\n", out);
  for (int n = 0; n < S->g->nnodes; n++) {
    if (!S->name[n]) continue;
    char *e = show_render(S, n);
    fprintf(out, "  \\mathsf{w}_{%d} &= %s \\\\\n", S->name[n], e);
    free(e);
  }
  fputs("  M &= \\begin{bmatrix}\n", out);
  for (int i = 0; i < nq; i++) {
    fputs("    ", out);
    for (int j = 0; j < nq; j++) {
      int r = i >= j ? s->mass[i * nq + j] : s->mass[j * nq + i];
      char *e = show_render(S, r);
      fprintf(out, "%s%s", j ? " & " : "", e);
      free(e);
    }
    fputs(i + 1 < nq ? " \\\\\n" : "\n", out);
  }
  fputs("  \\end{bmatrix} \\\\\n  f &= \\begin{bmatrix}\n", out);
  for (int i = 0; i < nq; i++) {
    char *e = show_render(S, s->forcing[i]);
    fprintf(out, "    %s%s\n", e, i + 1 < nq ? " \\\\" : "");
    free(e);
  }
  fputs("  \\end{bmatrix}\n\\end{align*}\n\\begin{align*}\n", out);
  int ncall = s->nc + s->nvc;
  for (int i = 0; i < nq; i++) {
    Text lhs = {0}, rhs = {0};
    int terms = mass_row_text(S, i, " ", &lhs);
    force_with_multipliers(S, i, " ", &rhs);
    fprintf(out, "  %s &= %s%s\n", terms ? lhs.s : "0", rhs.s, i + 1 < nq || ncall ? " \\\\" : "");
    free(rhs.s);
    free(lhs.s);
  }
  if (ncall) print_constraints_latex(S, out);
  fputs("\\end{align*}\n", out);
}

int show_equations(const Model *m, const EomSystem *s, int latex, FILE *out) {
  Show S;
  int nn = s->g.nnodes, nq = s->nv;
  memset(&S, 0, sizeof S);
  S.m = m;
  S.s = s;
  S.g = &s->g;
  S.latex = latex;
  S.defining = -1;
  S.uses = xcalloc((size_t)nn + 1, sizeof *S.uses);
  S.size = xcalloc((size_t)nn + 1, sizeof *S.size);
  S.name = xcalloc((size_t)nn + 1, sizeof *S.name);
  assert(nq >= 1 && s->mass && s->forcing);
  for (int i = 0; i < nq; i++) count_uses(&S, s->mass + i * nq, i + 1);
  count_uses(&S, s->forcing, nq);
  if (s->nc > 0) {
    count_uses(&S, s->constraint, s->nc);
    count_uses(&S, s->constraint_jacobian, s->nc * nq);
    count_uses(&S, s->constraint_gamma, s->nc);
  }
  if (s->nvc > 0) {
    count_uses(&S, s->vconstraint_A, s->nvc * nq);
    count_uses(&S, s->vconstraint_b, s->nvc);
    count_uses(&S, s->vconstraint_gamma, s->nvc);
  }
  choose_names(&S);
  if (latex) print_latex(&S, out);
  else print_plain(&S, out);
  free(S.uses);
  free(S.size);
  free(S.name);
  return ferror(out) ? -1 : 0;
}
