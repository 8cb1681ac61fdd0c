/*
** emit_show_expr.c — the expression printer of `eomc show`.
**
** A small precedence printer over the IrGraph with two styles: plain text
** (m*l^2*q'', sin(q1 - q2)) and LaTeX (m l^{2} \ddot{q}, \frac{a}{b}).  Signs
** are folded into subtractions, negative powers become denominators.
*/
#include "emit/emit_show_internal.h"
#include "front/xalloc.h"

#include <assert.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ------------------------------------------------------------------ text */

static void text_grow(Text *t, size_t extra) {
  if (t->len + extra + 1 <= t->cap) return;
  size_t cap = t->cap ? t->cap : 128;
  while (cap < t->len + extra + 1) cap *= 2;
  char *s = xrealloc(t->s, cap);
  t->s = s;
  t->cap = cap;
}

void show_put(Text *t, const char *s) {
  size_t n = strlen(s);
  text_grow(t, n);
  memcpy(t->s + t->len, s, n + 1);
  t->len += n;
}

void show_putf(Text *t, const char *fmt, ...) {
  char small[256];
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(small, sizeof small, fmt, ap);
  va_end(ap);
  show_put(t, small);
}

const IrNode *show_node(const Show *S, int n) {
  assert(n >= 0 && n < S->g->nnodes);
  return &S->g->nodes[n];
}

int show_is_zero(const Show *S, int n) {
  return show_node(S, n)->op == IR_NUM && show_node(S, n)->num == 0.0;
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
  if (accent) show_putf(t, "%s{", accent);
  if (is_greek) show_putf(t, "\\%s", head);
  else if (stem == 1) show_put(t, head);
  else {
    show_put(t, "\\mathrm{");
    for (const char *c = head; *c; c++) show_putf(t, *c == '_' ? "\\_" : "%c", *c);
    show_put(t, "}");
  }
  if (accent) show_put(t, "}");
  if (sub && *sub) {
    show_put(t, "_{");
    if (strlen(sub) > 1 && !(sub[0] >= '0' && sub[0] <= '9')) show_put(t, "\\mathrm{");
    for (const char *c = sub; *c; c++) show_putf(t, *c == '_' ? "\\_" : "%c", *c);
    if (strlen(sub) > 1 && !(sub[0] >= '0' && sub[0] <= '9')) show_put(t, "}");
    show_put(t, "}");
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
const char *show_rate_label(const Show *S, int i, char *buf, size_t len) {
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
    if (rate) show_putf(t, "%s\\omega_{", rate == 2 ? "\\dot" : "");
    else show_put(t, "q_{");
    latex_name(t, name);
    if (rate) show_putf(t, ",%d}", c + 1);
    else show_putf(t, ",%c}", "wxyz"[c]);
    return;
  }
  if (rate) show_putf(t, "omega(%s)[%d]%s", name, c + 1, rate == 2 ? "'" : "");
  else show_putf(t, "%s.%c", name, "wxyz"[c]);
}

void show_put_coord(Show *S, Text *t, int i, int rate) {
  if (i >= S->m->ncoords) {
    put_attitude_var(S, t, i, rate);
    return;
  }
  const char *name = coord_name(S, i);
  if (!S->latex) {
    show_put(t, name);
    show_put(t, rate == 2 ? "''" : rate == 1 ? "'" : "");
    return;
  }
  latex_accented(t, name, rate == 2 ? "\\ddot" : rate == 1 ? "\\dot" : NULL);
}

static void put_var(Show *S, Text *t, const IrNode *x) {
  const char *name = "?";
  switch (x->var) {
  case IRV_T: name = "t"; break;
  case IRV_Q: show_put_coord(S, t, x->index, 0); return;
  case IRV_QD: show_put_coord(S, t, x->index, 1); return;
  case IRV_QDD: show_put_coord(S, t, x->index, 2); return;
  case IRV_U: name = decl_name(S->m->inputs, S->m->ninputs, x->index); break;
  case IRV_P: name = decl_name(S->m->params, S->m->nparams, x->index); break;
  }
  if (S->latex) latex_name(t, name);
  else show_put(t, name);
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
      show_putf(t, "%s\\frac{%ld}{%ld}", n < 0 ? "-" : "", labs(n), d);
      return n < 0 ? PR_ADD : PR_ATOM;
    }
    show_putf(t, "%ld/%ld", n, d);
    return n < 0 ? PR_ADD : PR_MUL;
  }
  for (int prec = 12; prec <= 17; prec++) {
    snprintf(buf, sizeof buf, "%.*g", prec, v);
    if (strtod(buf, NULL) == v) break;
  }
  show_put(t, buf);
  return v < 0 ? PR_ADD : PR_ATOM;
}

static void put_number(Text *t, double v) {
  (void)put_number_in(t, v, 0);
}

/* ------------------------------------------------------------------ expressions */

static int put_signed(Show *S, Text *t, int n);
static int put_mag(Show *S, Text *t, int n);

int show_negative(const Show *S, int n) {
  const IrNode *x = show_node(S, n);
  if (named(S, n)) return 0;
  switch (x->op) {
  case IR_NUM: return x->num < 0;
  case IR_NEG: return !show_negative(S, x->args[0]);
  case IR_DIV: return show_negative(S, x->args[0]) != show_negative(S, x->args[1]);
  case IR_MUL: {
    int neg = 0;
    for (int a = 0; a < x->nargs; a++) neg ^= show_negative(S, x->args[a]);
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
  show_put(t, close);
}

void show_put_at(Show *S, Text *t, int n, int minprec, int mag) {
  size_t from = t->len;
  int prec = mag ? put_mag(S, t, n) : put_signed(S, t, n);
  if (prec < minprec) paren_from(S, t, from);
}

/* Is factor f a power with a negative numeric exponent (a denominator)? */
static int den_factor(const Show *S, int f, double *k) {
  const IrNode *x = show_node(S, f);
  if (named(S, f) || x->op != IR_POW || show_node(S, x->args[1])->op != IR_NUM) return 0;
  double e = show_node(S, x->args[1])->num;
  if (!(e < 0)) return 0;
  *k = -e;
  return 1;
}

static int put_power(Show *S, Text *t, int base, double e, int expo) {
  if (e == 0.5) {
    show_put(t, S->latex ? "\\sqrt{" : "sqrt(");
    show_put_at(S, t, base, PR_LOW, 0);
    show_put(t, S->latex ? "}" : ")");
    return PR_ATOM;
  }
  if (e == 1.0) return put_signed(S, t, base);
  /* sin^2(x) reads better than (sin(x))^2 in LaTeX */
  const IrNode *b = show_node(S, base);
  if (S->latex && !named(S, base) && b->op == IR_CALL && b->nargs == 1 && b->fn <= IRF_ATAN &&
      expo < 0 && e == floor(e) && e > 0) {
    show_putf(t, "%s^{", scalar_builtins[b->fn].tex);
    put_number(t, e);
    show_put(t, "}\\left(");
    show_put_at(S, t, b->args[0], PR_LOW, 0);
    show_put(t, "\\right)");
    return PR_ATOM;
  }
  show_put_at(S, t, base, PR_ATOM, 0);
  if (S->latex) {
    show_put(t, "^{");
    if (expo >= 0) show_put_at(S, t, expo, PR_LOW, 0);
    else put_number(t, e);
    show_put(t, "}");
  } else {
    show_put(t, "^");
    if (expo >= 0) show_put_at(S, t, expo, PR_ATOM, 0);
    else if (e == floor(e) && e > 0) put_number(t, e);
    else {
      show_put(t, "(");
      put_number(t, e);
      show_put(t, ")");
    }
  }
  return PR_POW;
}

static int put_product(Show *S, Text *t, int n) {
  const IrNode *x = show_node(S, n);
  double coef = 1.0, k;
  int nnum = 0, nden = 0, last = -1;
  for (int a = 0; a < x->nargs; a++) {
    int f = x->args[a];
    if (!named(S, f) && show_node(S, f)->op == IR_NUM) coef *= fabs(show_node(S, f)->num);
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
    if ((!named(S, f) && show_node(S, f)->op == IR_NUM) || den_factor(S, f, &k)) continue;
    if (wrote++) show_put(&num, S->latex ? " " : "*");
    show_put_at(S, &num, f, PR_MUL, 1);
  }
  wrote = 0;
  for (int a = 0; a < x->nargs; a++) {
    int f = x->args[a];
    if (!den_factor(S, f, &k)) continue;
    if (wrote++) show_put(&den, S->latex ? " " : "*");
    size_t from = den.len;
    int prec = put_power(S, &den, show_node(S, f)->args[0], k, -1);
    if (prec <= PR_MUL) paren_from(S, &den, from);
  }
  if (!nden) show_put(t, num.s);
  else if (S->latex) {
    show_putf(t, "\\frac{%s}{%s}", num.s, den.s);
  } else {
    show_put(t, num.s);
    show_put(t, "/");
    if (nden > 1) show_putf(t, "(%s)", den.s);
    else show_put(t, den.s);
  }
  free(num.s);
  free(den.s);
  return S->latex && nden && !nnum && coef == 1.0 ? PR_ATOM : PR_MUL;
}

static int put_sum(Show *S, Text *t, int n) {
  const IrNode *x = show_node(S, n);
  int lead = 0;
  for (int a = 0; a < x->nargs; a++)
    if (!show_negative(S, x->args[a])) {
      lead = a;
      break;
    }
  if (show_negative(S, x->args[lead])) show_put(t, "-");
  show_put_at(S, t, x->args[lead], PR_MUL, 1);
  for (int a = 0; a < x->nargs; a++) {
    if (a == lead) continue;
    show_put(t, show_negative(S, x->args[a]) ? " - " : " + ");
    show_put_at(S, t, x->args[a], PR_MUL, 1);
  }
  return PR_ADD;
}

static int put_call(Show *S, Text *t, const IrNode *x) {
  assert((int)x->fn >= 0 && (int)x->fn < BF_NSCALAR);
  if (S->latex && x->fn == IRF_SQRT) {
    show_put(t, "\\sqrt{");
    show_put_at(S, t, x->args[0], PR_LOW, 0);
    show_put(t, "}");
    return PR_ATOM;
  }
  if (S->latex && x->fn == IRF_ABS) {
    show_put(t, "\\left|");
    show_put_at(S, t, x->args[0], PR_LOW, 0);
    show_put(t, "\\right|");
    return PR_ATOM;
  }
  show_put(t, S->latex ? scalar_builtins[x->fn].tex : scalar_builtins[x->fn].name);
  show_put(t, S->latex ? "\\left(" : "(");
  for (int a = 0; a < x->nargs; a++) {
    if (a) show_put(t, ", ");
    show_put_at(S, t, x->args[a], PR_LOW, 0);
  }
  show_put(t, S->latex ? "\\right)" : ")");
  return PR_ATOM;
}

/* A shared subexpression's name: $1 in text and \mathsf{w}_{1} in LaTeX,
** which no model name can spell (names are letters, digits and '_'). */
static void put_temp_name(const Show *S, Text *t, int k) {
  show_putf(t, S->latex ? "\\mathsf{w}_{%d}" : "$%d", k);
}

static int put_mag(Show *S, Text *t, int n) {
  const IrNode *x = show_node(S, n);
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
      show_put(t, "\\frac{");
      show_put_at(S, t, x->args[0], PR_LOW, 1);
      show_put(t, "}{");
      show_put_at(S, t, x->args[1], PR_LOW, 1);
      show_put(t, "}");
      return PR_ATOM;
    }
    show_put_at(S, t, x->args[0], PR_MUL, 1);
    show_put(t, "/");
    show_put_at(S, t, x->args[1], PR_UNARY, 1);
    return PR_MUL;
  case IR_POW: {
    const IrNode *e = show_node(S, x->args[1]);
    if (e->op == IR_NUM && e->num < 0) {
      /* a lone negative power: 1/x^k */
      Text den = {0};
      int prec = put_power(S, &den, x->args[0], -e->num, -1);
      if (S->latex) show_putf(t, "\\frac{1}{%s}", den.s);
      else if (prec <= PR_MUL) show_putf(t, "1/(%s)", den.s);
      else show_putf(t, "1/%s", den.s);
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
  if (!show_negative(S, n)) return put_mag(S, t, n);
  show_put(t, "-");
  show_put_at(S, t, n, PR_MUL, 1);
  return PR_ADD;
}

/* A root (an entry of M or f) is printed in full even when it is also named. */
char *show_render(Show *S, int n) {
  Text t = {0};
  int outer = S->defining;
  S->defining = n;
  show_put_at(S, &t, n, PR_LOW, 0);
  S->defining = outer;
  return t.s;
}
