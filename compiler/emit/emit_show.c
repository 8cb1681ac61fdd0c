/*
** emit_show.c — pretty-printer of derived equations for `eomc show`.
**
** A small precedence printer over the IrGraph with two styles: plain text
** (m*l^2*q'', sin(q1 - q2)) and LaTeX (m l^{2} \ddot{q}, \frac{a}{b}).  Signs
** are folded into subtractions, negative powers become denominators.
*/
#include "emit/emit_show.h"
#include "front/rate_degree.h"
#include "front/units.h"

#include <assert.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

/* Repeated subexpressions bigger than this are printed once, by name. */
#define SHOW_SHARE_NODES 24

enum { PR_LOW, PR_ADD, PR_MUL, PR_UNARY, PR_POW, PR_ATOM };

typedef struct Text {
  char *s;
  size_t len, cap;
} Text;

static void text_grow(Text *t, size_t extra) {
  if (t->len + extra + 1 <= t->cap) return;
  size_t cap = t->cap ? t->cap : 128;
  while (cap < t->len + extra + 1) cap *= 2;
  char *s = realloc(t->s, cap);
  if (!s) {
    fputs("eomc: out of memory\n", stderr);
    abort();
  }
  t->s = s;
  t->cap = cap;
}

static void put(Text *t, const char *s) {
  size_t n = strlen(s);
  text_grow(t, n);
  memcpy(t->s + t->len, s, n + 1);
  t->len += n;
}

static void putf(Text *t, const char *fmt, ...) {
  char small[256];
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(small, sizeof small, fmt, ap);
  va_end(ap);
  put(t, small);
}

typedef struct Show {
  const Model *m;
  const EomSystem *s;
  const IrGraph *g;
  int latex;
  int *uses, *size, *name;   /* name: 1-based shared-subexpression number, 0 inline */
  int defining;              /* node whose definition is being printed */
} Show;

static const IrNode *nd(const Show *S, int n) {
  assert(n >= 0 && n < S->g->nnodes);
  return &S->g->nodes[n];
}

static int is_zero(const Show *S, int n) {
  return nd(S, n)->op == IR_NUM && nd(S, n)->num == 0.0;
}

static int named(const Show *S, int n) {
  return S->name[n] > 0 && n != S->defining;
}

/* ------------------------------------------------------------------ names */

static const char *const greek[] = {
  "alpha", "beta", "gamma", "delta", "epsilon", "zeta", "eta", "theta", "iota", "kappa",
  "lambda", "mu", "nu", "xi", "pi", "rho", "sigma", "tau", "upsilon", "phi", "chi", "psi",
  "omega", "Gamma", "Delta", "Theta", "Lambda", "Xi", "Pi", "Sigma", "Upsilon", "Phi", "Psi",
  "Omega", NULL};

/* A model identifier in LaTeX: theta2 -> \theta_{2}, m_cart -> m_{\mathrm{cart}};
** an accent (\dot, \ddot) goes on the stem: \dot{\theta}_{2}. */
static void latex_accented(Text *t, const char *name, const char *accent) {
  size_t n = strlen(name), stem = n;
  const char *sub = NULL;
  const char *us = strchr(name, '_');
  if (us && us != name) {
    stem = (size_t)(us - name);
    sub = us + 1;
  } else {
    while (stem > 1 && name[stem - 1] >= '0' && name[stem - 1] <= '9') stem--;
    if (stem < n) sub = name + stem;
  }
  char head[128];
  snprintf(head, sizeof head, "%.*s", (int)(stem < 127 ? stem : 127), name);
  int is_greek = 0;
  for (int i = 0; greek[i]; i++)
    if (strcmp(head, greek[i]) == 0) is_greek = 1;
  if (accent) putf(t, "%s{", accent);
  if (is_greek) putf(t, "\\%s", head);
  else if (stem == 1) put(t, head);
  else {
    put(t, "\\mathrm{");
    for (const char *c = head; *c; c++) putf(t, *c == '_' ? "\\_" : "%c", *c);
    put(t, "}");
  }
  if (accent) put(t, "}");
  if (sub && *sub) {
    put(t, "_{");
    if (strlen(sub) > 1 && !(sub[0] >= '0' && sub[0] <= '9')) put(t, "\\mathrm{");
    for (const char *c = sub; *c; c++) putf(t, *c == '_' ? "\\_" : "%c", *c);
    if (strlen(sub) > 1 && !(sub[0] >= '0' && sub[0] <= '9')) put(t, "}");
    put(t, "}");
  }
}

static void latex_name(Text *t, const char *name) {
  latex_accented(t, name, NULL);
}

static const char *decl_name(Decl **ds, int n, int i) {
  return i >= 0 && i < n && ds[i] && ds[i]->name ? ds[i]->name : "?";
}

static const char *coord_name(const Show *S, int i) {
  return decl_name(S->m->coords, S->m->ncoords, i);
}

/* The name of velocity i (its row of M): a coordinate's, or "omega(R)[c]"
** for an attitude's (in buf). */
static const char *rate_label(const Show *S, int i, char *buf, size_t len) {
  const Model *m = S->m;
  if (i < m->ncoords) return coord_name(S, i);
  int k = (i - m->ncoords) / 3;
  snprintf(buf, len, "omega(%s)[%d]", decl_name(m->attitudes, m->nattitudes, k), (i - m->ncoords) % 3 + 1);
  return buf;
}

/* An attitude's quaternion entry (rate 0: "R.w") or omega entry (rate 1:
** "omega(R)[1]", rate 2: its rate "omega(R)[1]'"). */
static void put_attitude_var(Show *S, Text *t, int i, int rate) {
  const Model *m = S->m;
  int per = rate ? 3 : 4, k = (i - m->ncoords) / per, c = (i - m->ncoords) % per;
  const char *name = decl_name(m->attitudes, m->nattitudes, k);
  if (S->latex) {
    if (rate) putf(t, "%s\\omega_{", rate == 2 ? "\\dot" : "");
    else put(t, "q_{");
    latex_name(t, name);
    if (rate) putf(t, ",%d}", c + 1);
    else putf(t, ",%c}", "wxyz"[c]);
    return;
  }
  if (rate) putf(t, "omega(%s)[%d]%s", name, c + 1, rate == 2 ? "'" : "");
  else putf(t, "%s.%c", name, "wxyz"[c]);
}

static void put_coord(Show *S, Text *t, int i, int rate) {
  if (i >= S->m->ncoords) {
    put_attitude_var(S, t, i, rate);
    return;
  }
  const char *name = coord_name(S, i);
  if (!S->latex) {
    put(t, name);
    put(t, rate == 2 ? "''" : rate == 1 ? "'" : "");
    return;
  }
  latex_accented(t, name, rate == 2 ? "\\ddot" : rate == 1 ? "\\dot" : NULL);
}

static void put_var(Show *S, Text *t, const IrNode *x) {
  const char *name = "?";
  switch (x->var) {
  case IRV_T: name = "t"; break;
  case IRV_Q: put_coord(S, t, x->index, 0); return;
  case IRV_QD: put_coord(S, t, x->index, 1); return;
  case IRV_QDD: put_coord(S, t, x->index, 2); return;
  case IRV_U: name = decl_name(S->m->inputs, S->m->ninputs, x->index); break;
  case IRV_P: name = decl_name(S->m->params, S->m->nparams, x->index); break;
  }
  if (S->latex) latex_name(t, name);
  else put(t, name);
}

/* A simple fraction n/d (d <= 12) that equals v, as GiNaC's rationals arrive
** here as doubles: 1/3 reads better than 0.3333333333333333. */
static int as_fraction(double v, long *num, long *den) {
  if (v == floor(v) || !(fabs(v) < 1e6)) return 0;
  for (long d = 2; d <= 12; d++) {
    double n = v * d;
    if (fabs(n - floor(n + 0.5)) <= 1e-12 * fabs(n)) {
      *num = (long)floor(n + 0.5);
      *den = d;
      return 1;
    }
  }
  return 0;
}

/* Returns the precedence of what it printed. */
static int put_number_in(Text *t, double v, int latex) {
  char buf[64];
  long n, d;
  if (as_fraction(v, &n, &d)) {
    if (latex) {
      putf(t, "%s\\frac{%ld}{%ld}", n < 0 ? "-" : "", labs(n), d);
      return n < 0 ? PR_ADD : PR_ATOM;
    }
    putf(t, "%ld/%ld", n, d);
    return n < 0 ? PR_ADD : PR_MUL;
  }
  for (int prec = 12; prec <= 17; prec++) {
    snprintf(buf, sizeof buf, "%.*g", prec, v);
    if (strtod(buf, NULL) == v) break;
  }
  put(t, buf);
  return v < 0 ? PR_ADD : PR_ATOM;
}

static void put_number(Text *t, double v) {
  (void)put_number_in(t, v, 0);
}

/* ------------------------------------------------------------------ expressions */

static int put_signed(Show *S, Text *t, int n);
static int put_mag(Show *S, Text *t, int n);

static int negative(const Show *S, int n) {
  const IrNode *x = nd(S, n);
  if (named(S, n)) return 0;
  switch (x->op) {
  case IR_NUM: return x->num < 0;
  case IR_NEG: return !negative(S, x->args[0]);
  case IR_DIV: return negative(S, x->args[0]) != negative(S, x->args[1]);
  case IR_MUL: {
    int neg = 0;
    for (int a = 0; a < x->nargs; a++) neg ^= negative(S, x->args[a]);
    return neg;
  }
  default: return 0;
  }
}

static void paren_from(Show *S, Text *t, size_t from) {
  const char *open = S->latex ? "\\left(" : "(", *close = S->latex ? "\\right)" : ")";
  size_t no = strlen(open);
  text_grow(t, no + strlen(close));
  memmove(t->s + from + no, t->s + from, t->len - from + 1);
  memcpy(t->s + from, open, no);
  t->len += no;
  put(t, close);
}

static void put_at(Show *S, Text *t, int n, int minprec, int mag) {
  size_t from = t->len;
  int prec = mag ? put_mag(S, t, n) : put_signed(S, t, n);
  if (prec < minprec) paren_from(S, t, from);
}

/* Is factor f a power with a negative numeric exponent (a denominator)? */
static int den_factor(const Show *S, int f, double *k) {
  const IrNode *x = nd(S, f);
  if (named(S, f) || x->op != IR_POW || nd(S, x->args[1])->op != IR_NUM) return 0;
  double e = nd(S, x->args[1])->num;
  if (!(e < 0)) return 0;
  *k = -e;
  return 1;
}

static int put_power(Show *S, Text *t, int base, double e, int expo) {
  if (e == 0.5) {
    put(t, S->latex ? "\\sqrt{" : "sqrt(");
    put_at(S, t, base, PR_LOW, 0);
    put(t, S->latex ? "}" : ")");
    return PR_ATOM;
  }
  if (e == 1.0) return put_signed(S, t, base);
  /* sin^2(x) reads better than (sin(x))^2 in LaTeX */
  const IrNode *b = nd(S, base);
  if (S->latex && !named(S, base) && b->op == IR_CALL && b->nargs == 1 && b->fn <= IRF_ATAN &&
      expo < 0 && e == floor(e) && e > 0) {
    putf(t, "%s^{", scalar_builtins[b->fn].tex);
    put_number(t, e);
    put(t, "}\\left(");
    put_at(S, t, b->args[0], PR_LOW, 0);
    put(t, "\\right)");
    return PR_ATOM;
  }
  put_at(S, t, base, PR_ATOM, 0);
  if (S->latex) {
    put(t, "^{");
    if (expo >= 0) put_at(S, t, expo, PR_LOW, 0);
    else put_number(t, e);
    put(t, "}");
  } else {
    put(t, "^");
    if (expo >= 0) put_at(S, t, expo, PR_ATOM, 0);
    else if (e == floor(e) && e > 0) put_number(t, e);
    else {
      put(t, "(");
      put_number(t, e);
      put(t, ")");
    }
  }
  return PR_POW;
}

static int put_product(Show *S, Text *t, int n) {
  const IrNode *x = nd(S, n);
  double coef = 1.0, k;
  int nnum = 0, nden = 0, last = -1;
  for (int a = 0; a < x->nargs; a++) {
    int f = x->args[a];
    if (!named(S, f) && nd(S, f)->op == IR_NUM) coef *= fabs(nd(S, f)->num);
    else if (den_factor(S, f, &k)) nden++;
    else nnum++, last = f;
  }
  if (coef == 1.0 && nnum == 1 && !nden) return put_mag(S, t, last);
  Text num = {0}, den = {0};
  int wrote = 0;
  if (coef != 1.0 || !nnum) {
    put_number_in(&num, coef, S->latex);
    wrote = 1;
  }
  for (int a = 0; a < x->nargs; a++) {
    int f = x->args[a];
    if ((!named(S, f) && nd(S, f)->op == IR_NUM) || den_factor(S, f, &k)) continue;
    if (wrote++) put(&num, S->latex ? " " : "*");
    put_at(S, &num, f, PR_MUL, 1);
  }
  wrote = 0;
  for (int a = 0; a < x->nargs; a++) {
    int f = x->args[a];
    if (!den_factor(S, f, &k)) continue;
    if (wrote++) put(&den, S->latex ? " " : "*");
    size_t from = den.len;
    int prec = put_power(S, &den, nd(S, f)->args[0], k, -1);
    if (prec <= PR_MUL) paren_from(S, &den, from);
  }
  if (!nden) put(t, num.s);
  else if (S->latex) {
    putf(t, "\\frac{%s}{%s}", num.s, den.s);
  } else {
    put(t, num.s);
    put(t, "/");
    if (nden > 1) putf(t, "(%s)", den.s);
    else put(t, den.s);
  }
  free(num.s);
  free(den.s);
  return S->latex && nden && !nnum && coef == 1.0 ? PR_ATOM : PR_MUL;
}

static int put_sum(Show *S, Text *t, int n) {
  const IrNode *x = nd(S, n);
  int lead = 0;
  for (int a = 0; a < x->nargs; a++)
    if (!negative(S, x->args[a])) {
      lead = a;
      break;
    }
  if (negative(S, x->args[lead])) put(t, "-");
  put_at(S, t, x->args[lead], PR_MUL, 1);
  for (int a = 0; a < x->nargs; a++) {
    if (a == lead) continue;
    put(t, negative(S, x->args[a]) ? " - " : " + ");
    put_at(S, t, x->args[a], PR_MUL, 1);
  }
  return PR_ADD;
}

static int put_call(Show *S, Text *t, const IrNode *x) {
  assert((int)x->fn >= 0 && (int)x->fn < BF_NSCALAR);
  if (S->latex && x->fn == IRF_SQRT) {
    put(t, "\\sqrt{");
    put_at(S, t, x->args[0], PR_LOW, 0);
    put(t, "}");
    return PR_ATOM;
  }
  if (S->latex && x->fn == IRF_ABS) {
    put(t, "\\left|");
    put_at(S, t, x->args[0], PR_LOW, 0);
    put(t, "\\right|");
    return PR_ATOM;
  }
  put(t, S->latex ? scalar_builtins[x->fn].tex : scalar_builtins[x->fn].name);
  put(t, S->latex ? "\\left(" : "(");
  for (int a = 0; a < x->nargs; a++) {
    if (a) put(t, ", ");
    put_at(S, t, x->args[a], PR_LOW, 0);
  }
  put(t, S->latex ? "\\right)" : ")");
  return PR_ATOM;
}

/* A shared subexpression's name: $1 in text and \mathsf{w}_{1} in LaTeX,
** which no model name can spell (names are letters, digits and '_'). */
static void put_temp_name(const Show *S, Text *t, int k) {
  putf(t, S->latex ? "\\mathsf{w}_{%d}" : "$%d", k);
}

static int put_mag(Show *S, Text *t, int n) {
  const IrNode *x = nd(S, n);
  if (named(S, n)) {
    put_temp_name(S, t, S->name[n]);
    return PR_ATOM;
  }
  switch (x->op) {
  case IR_NUM: return put_number_in(t, fabs(x->num), S->latex);
  case IR_VAR: put_var(S, t, x); return PR_ATOM;
  case IR_NEG: return put_mag(S, t, x->args[0]);
  case IR_ADD: return put_sum(S, t, n);
  case IR_MUL: return put_product(S, t, n);
  case IR_DIV:
    if (S->latex) {
      put(t, "\\frac{");
      put_at(S, t, x->args[0], PR_LOW, 1);
      put(t, "}{");
      put_at(S, t, x->args[1], PR_LOW, 1);
      put(t, "}");
      return PR_ATOM;
    }
    put_at(S, t, x->args[0], PR_MUL, 1);
    put(t, "/");
    put_at(S, t, x->args[1], PR_UNARY, 1);
    return PR_MUL;
  case IR_POW: {
    const IrNode *e = nd(S, x->args[1]);
    if (e->op == IR_NUM && e->num < 0) {
      /* a lone negative power: 1/x^k */
      Text den = {0};
      int prec = put_power(S, &den, x->args[0], -e->num, -1);
      if (S->latex) putf(t, "\\frac{1}{%s}", den.s);
      else if (prec <= PR_MUL) putf(t, "1/(%s)", den.s);
      else putf(t, "1/%s", den.s);
      free(den.s);
      return S->latex ? PR_ATOM : PR_MUL;
    }
    return put_power(S, t, x->args[0], e->op == IR_NUM ? e->num : NAN,
                     e->op == IR_NUM ? -1 : x->args[1]);
  }
  case IR_CALL: return put_call(S, t, x);
  }
  return PR_ATOM;
}

static int put_signed(Show *S, Text *t, int n) {
  if (!negative(S, n)) return put_mag(S, t, n);
  put(t, "-");
  put_at(S, t, n, PR_MUL, 1);
  return PR_ADD;
}

/* A root (an entry of M or f) is printed in full even when it is also named. */
static char *render(Show *S, int n) {
  Text t = {0};
  int outer = S->defining;
  S->defining = n;
  put_at(S, &t, n, PR_LOW, 0);
  S->defining = outer;
  return t.s;
}

/* ------------------------------------------------------------------ layout */

static void count_uses(Show *S, const int *roots, int nroots) {
  for (int i = 0; i < nroots; i++) S->uses[roots[i]]++;
}

/* Name the repeated subexpressions that are too big to repeat inline. */
static void choose_names(Show *S) {
  int next = 0;
  for (int n = S->g->nnodes - 1; n >= 0; n--)
    if (S->uses[n])
      for (int a = 0; a < nd(S, n)->nargs; a++) S->uses[nd(S, n)->args[a]]++;
  for (int n = 0; n < S->g->nnodes; n++) {
    const IrNode *x = nd(S, n);
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
  int neg = negative(S, r);
  if ((*terms)++) put(t, neg ? " - " : " + ");
  else if (neg) put(t, "-");
  const IrNode *x = nd(S, r);
  if (x->op == IR_NUM && fabs(x->num) == 1.0) return;
  S->defining = r;
  put_at(S, t, r, PR_MUL, 1);
  S->defining = -1;
  put(t, times);
}

/* Row i of M q'' into lhs ("m*q'' + c*r''"), products joined by `times`;
** returns the number of terms (0: the row is structurally zero). */
static int mass_row_text(Show *S, int i, const char *times, Text *lhs) {
  const EomSystem *s = S->s;
  int nq = s->nv, terms = 0;
  for (int j = 0; j < nq; j++) {
    int r = i >= j ? s->mass[i * nq + j] : s->mass[j * nq + i];
    if (is_zero(S, r)) continue;
    put_coef(S, lhs, r, times, &terms);
    put_coord(S, lhs, j, 2);
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
  putf(t, S->latex ? "\\lambda_{%d}" : "lambda%d", k + 1);
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
    if (is_zero(S, r)) continue;
    put_coef(S, t, r, times, &terms);
    put_coord(S, t, j, rate);
  }
  if (!terms) put(t, "0");
  return terms;
}

/* f_i + sum over k of [G; A]_ki lambda_k, the constraint forces written out. */
static void force_with_multipliers(Show *S, int i, const char *times, Text *t) {
  int ncall = S->s->nc + S->s->nvc, terms = 0;
  int f = S->s->forcing[i];
  if (!is_zero(S, f)) {
    char *e = render(S, f);
    put(t, e);
    free(e);
    terms++;
  }
  for (int k = 0; k < ncall; k++) {
    int r = constraint_coef(S, k, i);
    if (is_zero(S, r)) continue;
    put_coef(S, t, r, times, &terms);
    put_multiplier(S, t, k);
  }
  if (!terms) put(t, "0");
}

/* "line 9", "line 9, entry 2 of 3", "unit N/m" parts of a description. */
static void describe_origin(const Origin *o, Text *t) {
  if (!o->stmt) return;
  putf(t, "line %d", o->stmt->loc.line);
  if (o->nentries > 1) putf(t, ", entry %d of %d", o->entry + 1, o->nentries);
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
      char *e = render(S, s->constraint[k]);
      put(&eq, e);
      free(e);
      put(&eq, " = 0");
    } else {
      constraint_row_text(S, k, 1, "*", &eq);
      char *e = render(S, s->vconstraint_b[k - nc]);
      putf(&eq, " = %s", e);
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
    char *e = render(S, k < s->nc ? s->constraint_gamma[k] : s->vconstraint_gamma[k - s->nc]);
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
    char *e = render(S, s->stop_gap[k]);
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
    char *e = render(S, n);
    fprintf(out, "  $%d = %s\n", S->name[n], e);
    free(e);
  }
  if (any) fputc('\n', out);
  int omitted = 0;
  for (int i = 0; i < nq; i++)
    for (int j = i + 1; j < nq; j++) omitted |= is_zero(S, s->mass[j * nq + i]);
  fprintf(out, "mass matrix M (symmetric; upper triangle shown%s):\n",
          omitted ? "; all other entries are 0" : "");
  for (int i = 0; i < nq; i++)
    for (int j = i; j < nq; j++) {
      int r = s->mass[j * nq + i];
      if (is_zero(S, r) && i != j) continue;
      char *e = render(S, r), bi[64], bj[64];
      fprintf(out, "  M[%s, %s] = %s\n", rate_label(S, i, bi, sizeof bi), rate_label(S, j, bj, sizeof bj), e);
      free(e);
    }
  fputs("\nforcing f:\n", out);
  for (int i = 0; i < nq; i++) {
    char *e = render(S, s->forcing[i]), b[64];
    fprintf(out, "  f[%s] = %s\n", rate_label(S, i, b, sizeof b), e);
    free(e);
  }
  if (s->nc + s->nvc > 0) {
    Origin *o = calloc((size_t)(s->nc + s->nvc), sizeof *o);
    if (!o) {
      fputs("eomc: out of memory\n", stderr);
      abort();
    }
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
  Origin *o = calloc((size_t)ncall, sizeof *o);
  if (!o) {
    fputs("eomc: out of memory\n", stderr);
    abort();
  }
  constraint_origins(S, o);
  for (int k = 0; k < ncall; k++) {
    Text eq = {0};
    if (k < nc) {
      char *e = render(S, s->constraint[k]);
      putf(&eq, "%s &= 0", e);
      free(e);
    } else {
      constraint_row_text(S, k, 1, " ", &eq);
      char *e = render(S, s->vconstraint_b[k - nc]);
      putf(&eq, " &= %s", e);
      free(e);
    }
    fprintf(out, "  %s \\\\\n", eq.s);
    free(eq.s);
  }
  for (int k = 0; k < ncall; k++) {
    Text lhs = {0};
    constraint_row_text(S, k, 2, " ", &lhs);
    char *e = render(S, k < nc ? s->constraint_gamma[k] : s->vconstraint_gamma[k - nc]);
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
    char *e = render(S, n);
    fprintf(out, "  \\mathsf{w}_{%d} &= %s \\\\\n", S->name[n], e);
    free(e);
  }
  fputs("  M &= \\begin{bmatrix}\n", out);
  for (int i = 0; i < nq; i++) {
    fputs("    ", out);
    for (int j = 0; j < nq; j++) {
      int r = i >= j ? s->mass[i * nq + j] : s->mass[j * nq + i];
      char *e = render(S, r);
      fprintf(out, "%s%s", j ? " & " : "", e);
      free(e);
    }
    fputs(i + 1 < nq ? " \\\\\n" : "\n", out);
  }
  fputs("  \\end{bmatrix} \\\\\n  f &= \\begin{bmatrix}\n", out);
  for (int i = 0; i < nq; i++) {
    char *e = render(S, s->forcing[i]);
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
  S.uses = calloc((size_t)nn + 1, sizeof *S.uses);
  S.size = calloc((size_t)nn + 1, sizeof *S.size);
  S.name = calloc((size_t)nn + 1, sizeof *S.name);
  if (!S.uses || !S.size || !S.name) {
    fputs("eomc: out of memory\n", stderr);
    abort();
  }
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
