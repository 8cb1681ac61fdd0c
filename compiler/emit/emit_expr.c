/*
** emit_expr.c — the C back end's expression printer and per-function
** analysis (see emit_internal.h).
**
** One generated function at a time: collect its roots in the shared IrGraph,
** count how often each node is used inside that function, and turn every
** non-leaf node used more than once into a `const double wK` temporary
** (common-subexpression elimination), written in node order, which is a
** dependency order.  Expressions are printed with minimal parentheses,
** signs folded into subtractions, small integer powers as products.
*/
#include "emit/emit_internal.h"
#include "sym/numeric.h"
#include "front/xalloc.h"

#include <assert.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ------------------------------------------------------------------ buffers */

static void buf_grow(Buf *b, size_t extra) {
  if (b->len + extra + 1 <= b->cap) return;
  size_t cap = b->cap ? b->cap : 256;
  while (cap < b->len + extra + 1) cap *= 2;
  char *s = xrealloc(b->s, cap);
  b->s = s;
  b->cap = cap;
}

void buf_put(Buf *b, const char *s) {
  size_t n = strlen(s);
  buf_grow(b, n);
  memcpy(b->s + b->len, s, n + 1);
  b->len += n;
}

void buf_printf(Buf *b, const char *fmt, ...) DIAG_PRINTF(2, 3);
void buf_printf(Buf *b, const char *fmt, ...) {
  va_list ap;
  va_start(ap, fmt);
  int n = vsnprintf(NULL, 0, fmt, ap);
  va_end(ap);
  assert(n >= 0);
  buf_grow(b, (size_t)n);
  va_start(ap, fmt);
  vsnprintf(b->s + b->len, (size_t)n + 1, fmt, ap);
  va_end(ap);
  b->len += (size_t)n;
}

/* Wrap b->s[from..] in parentheses. */
static void buf_paren_from(Buf *b, size_t from) {
  assert(from <= b->len);
  buf_grow(b, 2);
  memmove(b->s + from + 1, b->s + from, b->len - from);
  b->s[from] = '(';
  b->len++;
  b->s[b->len++] = ')';
  b->s[b->len] = '\0';
}

static void emit_fail(Emitter *E, const char *fmt, ...) DIAG_PRINTF(2, 3);
static void emit_fail(Emitter *E, const char *fmt, ...) {
  va_list ap;
  if (E->failed) return;
  E->failed = 1;
  va_start(ap, fmt);
  vsnprintf(E->err, sizeof E->err, fmt, ap);
  va_end(ap);
}

static const IrNode *emit_node(const Emitter *E, int n) {
  assert(n >= 0 && n < E->g->nnodes);
  return &E->g->nodes[n];
}

int emit_is_zero(const Emitter *E, int n) {
  const IrNode *x = emit_node(E, n);
  return x->op == IR_NUM && x->num == 0.0;
}

static int is_leaf(const Emitter *E, int n) {
  IrOp op = emit_node(E, n)->op;
  return op == IR_NUM || op == IR_VAR;
}

/* Is node n a number equal to an integer k with 1 <= |k| <= MAX_POW_PRODUCT? */
static int small_int(const Emitter *E, int n, int *k) {
  const IrNode *x = emit_node(E, n);
  if (x->op != IR_NUM || x->num != floor(x->num) || fabs(x->num) > MAX_POW_PRODUCT ||
      x->num == 0.0)
    return 0;
  *k = (int)x->num;
  return 1;
}

/* ------------------------------------------------------------------ strings */

/* A model string as a C string literal: printable ASCII stays, everything
** else becomes an octal escape; `?` is escaped so no trigraph can form. */
void put_c_string(FILE *out, const char *s) {
  fputc('"', out);
  for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p; p++) {
    if (*p == '"' || *p == '\\' || *p == '?')
      fprintf(out, "\\%c", *p);
    else if (*p >= 0x20 && *p < 0x7f)
      fputc(*p, out);
    else
      fprintf(out, "\\%03o", *p);
  }
  fputc('"', out);
}

/* A model string inside a block comment: one line of printable ASCII, with
** no comment delimiters and no `??` that could start a trigraph. */
void put_comment_text(FILE *out, const char *s) {
  int prev = 0;
  for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p; p++) {
    int c = *p;
    if (c == '\n' || c == '\r' || c == '\t') c = ' ';
    else if (c < 0x20 || c >= 0x7f) c = '.';
    else if (c == '?' && prev == '?') c = '.';
    else if (c == '/' && prev == '*') c = ' ';       /* would close the comment */
    else if (c == '*' && prev == '/') c = ' ';       /* would open a nested one */
    else if (c == '\\') c = '/';                     /* no line splices */
    fputc(c, out);
    prev = c;
  }
}

/* A double as a C literal that reads back exactly and is always a double. */
void format_number(Emitter *E, double v, char *buf, size_t len) {
  if (!isfinite(v)) {
    emit_fail(E, "the model yields a constant that is not finite (%g)", v);
    snprintf(buf, len, "0.0");
    return;
  }
  for (int prec = 15; prec <= 17; prec++) {
    snprintf(buf, len, "%.*g", prec, v);
    if (strtod(buf, NULL) == v) break;
  }
  if (!strpbrk(buf, ".eE")) strncat(buf, ".0", len - strlen(buf) - 1);
}

/* ------------------------------------------------------------------ per-function analysis */

void add_root(Emitter *E, int n) {
  assert(n >= 0 && n < E->g->nnodes);
  if (E->nroots == E->roots_cap) {
    E->roots_cap = E->roots_cap ? 2 * E->roots_cap : 64;
    E->roots = xrealloc(E->roots, (size_t)E->roots_cap * sizeof *E->roots);
  }
  E->roots[E->nroots++] = n;
}

void add_roots(Emitter *E, const int *r, int n) {
  for (int i = 0; i < n; i++) add_root(E, r[i]);
}

/* The lower triangle (j <= i) of an nq x nq symmetric matrix of roots. */
void add_lower(Emitter *E, const int *mat) {
  int nq = E->s->nv;
  for (int i = 0; i < nq; i++)
    for (int j = 0; j <= i; j++) add_root(E, mat[i * nq + j]);
}

void fn_reset(Emitter *E) {
  E->nroots = 0;
  E->write_nan = 0;
  E->nparts = 0;
}

/* Does a call's C form name one of its arguments twice (sign)? */
static int form_repeats_arg(IrFn fn) {
  const char *form = scalar_builtins[fn].c_form;
  for (const char *c = form; *c; c++)
    if (*c == '%')
      for (const char *d = c + 2; *d; d++)
        if (*d == '%' && d[1] == c[1]) return 1;
  return 0;
}

/* Decide the temporaries of the function whose roots were just added. */
void fn_analyse(Emitter *E) {
  const IrGraph *g = E->g;
  int hi = -1;
  memset(E->uses, 0, (size_t)g->nnodes * sizeof *E->uses);
  E->vars = 0;
  E->ntemps = 0;
  for (int i = 0; i < E->nroots; i++) {
    E->uses[E->roots[i]]++;
    if (E->roots[i] > hi) hi = E->roots[i];
  }
  /* Arguments precede their users, so one downward sweep counts every use. */
  for (int n = hi; n >= 0; n--) {
    const IrNode *x = &g->nodes[n];
    E->tempno[n] = -1;
    if (!E->uses[n]) continue;
    if (x->op == IR_VAR) E->vars |= VAR_BIT(x->var);
    for (int a = 0; a < x->nargs; a++) {
      assert(x->args[a] < n);
      E->uses[x->args[a]]++;
    }
  }
  /* Upward sweep: choose temporaries and bound the inline size. */
  for (int n = 0; n <= hi; n++) {
    const IrNode *x = &g->nodes[n];
    int k;
    if (!E->uses[n]) continue;
    if (is_leaf(E, n)) {
      E->size[n] = 1;
      continue;
    }
    if (!E->no_cse && E->uses[n] > 1) E->tempno[n] = 0;
    /* A power written as a product, and sign(), repeat an argument:
    ** computed once, unless --no-cse asks for every use in full. */
    int repeats = (x->op == IR_POW && small_int(E, x->args[1], &k) && (k >= 2 || k <= -2));
    if (repeats && !E->no_cse && !is_leaf(E, x->args[0])) E->tempno[x->args[0]] = 0;
    if (x->op == IR_CALL && form_repeats_arg(x->fn) && !E->no_cse)
      for (int a = 0; a < x->nargs; a++)
        if (!is_leaf(E, x->args[a])) E->tempno[x->args[a]] = 0;
    long size = 1;
    for (int a = 0; a < x->nargs; a++) {
      int arg = x->args[a];
      size += E->tempno[arg] >= 0 ? 1 : E->size[arg];
    }
    if (size > (E->no_cse ? MAX_INLINE_NODES_NO_CSE : MAX_INLINE_NODES)) {
      size = 1 + x->nargs;
      for (int a = 0; a < x->nargs; a++)
        if (!is_leaf(E, x->args[a])) E->tempno[x->args[a]] = 0;
    }
    E->size[n] = (int)size;
  }
  for (int n = 0; n <= hi; n++)
    if (E->uses[n] && E->tempno[n] >= 0) E->tempno[n] = E->ntemps++;
  parts_plan(E);
}

/* ------------------------------------------------------------------ expressions */

static int put_signed(Emitter *E, Buf *b, int n);
static int put_mag(Emitter *E, Buf *b, int n);

static int is_temp(const Emitter *E, int n) {
  return E->tempno[n] >= 0;
}

/* Does node n print as a negated magnitude? */
int prints_negative(const Emitter *E, int n) {
  const IrNode *x = emit_node(E, n);
  if (is_temp(E, n)) return 0;
  switch (x->op) {
  case IR_NUM: return x->num < 0.0 || (x->num == 0.0 && signbit(x->num));
  case IR_NEG: return !prints_negative(E, x->args[0]);
  case IR_DIV: return prints_negative(E, x->args[0]) != prints_negative(E, x->args[1]);
  case IR_MUL: {
    int neg = 0;
    for (int a = 0; a < x->nargs; a++) neg ^= prints_negative(E, x->args[a]);
    return neg;
  }
  default: return 0;
  }
}

void put_at(Emitter *E, Buf *b, int n, int minprec, int magnitude) {
  size_t from = b->len;
  int prec = magnitude ? put_mag(E, b, n) : put_signed(E, b, n);
  if (prec < minprec) buf_paren_from(b, from);
}

static int put_var(Emitter *E, Buf *b, const IrNode *x) {
  static const char *const arrays[] = {"t", "q", "qd", "qdd", "u", "p"};
  assert(x->var >= IRV_T && x->var <= IRV_P);
  if (x->var == IRV_T)
    buf_put(b, "t");
  else
    buf_printf(b, "%s[%d]", arrays[x->var], x->index);
  (void)E;
  return PREC_ATOM;
}

/* base^k for 2 <= k <= MAX_POW_PRODUCT as k-1 multiplications (the base is a
** leaf or a temporary, or with --no-cse any expression, parenthesized). */
static void put_repeat(Emitter *E, Buf *b, int base, int k) {
  for (int i = 0; i < k; i++) {
    if (i) buf_put(b, "*");
    put_at(E, b, base, PREC_ATOM, 0);
  }
}

/* One denominator factor base^k (k > 0 from a negative exponent -k). */
static int put_den_factor(Emitter *E, Buf *b, int base, double k) {
  if (k == 1.0) {
    size_t from = b->len;
    int prec = put_signed(E, b, base);
    if (prec < PREC_MUL) {
      buf_paren_from(b, from);
      prec = PREC_ATOM;
    }
    return prec;
  }
  if (k == 0.5) {
    buf_put(b, "sqrt(");
    put_at(E, b, base, PREC_LOW, 0);
    buf_put(b, ")");
    return PREC_ATOM;
  }
  assert(k == floor(k) && k >= 2 && k <= MAX_POW_PRODUCT);
  put_repeat(E, b, base, (int)k);
  return PREC_MUL;
}

/* Is factor f of a product a power that belongs in the denominator? */
static int den_power(const Emitter *E, int f, double *k) {
  const IrNode *x = emit_node(E, f);
  if (is_temp(E, f) || x->op != IR_POW) return 0;
  const IrNode *e = emit_node(E, x->args[1]);
  if (e->op != IR_NUM || !(e->num < 0.0)) return 0;
  if (e->num == -0.5 || (e->num == floor(e->num) && e->num >= -MAX_POW_PRODUCT)) {
    *k = -e->num;
    return 1;
  }
  return 0;
}

static int put_pow(Emitter *E, Buf *b, int base, int expo) {
  const IrNode *e = emit_node(E, expo);
  int k;
  if (e->op == IR_NUM && e->num == 0.0) {
    buf_put(b, "1.0");
    return PREC_ATOM;
  }
  if (small_int(E, expo, &k)) {
    if (k == 1) return put_signed(E, b, base);
    if (k > 0) {
      put_repeat(E, b, base, k);
      return PREC_MUL;
    }
    buf_put(b, "1.0/");
    size_t from = b->len;
    if (put_den_factor(E, b, base, -k) < PREC_UNARY) buf_paren_from(b, from);
    return PREC_MUL;
  }
  if (e->op == IR_NUM && (e->num == 0.5 || e->num == -0.5)) {
    buf_put(b, e->num < 0 ? "1.0/sqrt(" : "sqrt(");
    put_at(E, b, base, PREC_LOW, 0);
    buf_put(b, ")");
    return e->num < 0 ? PREC_MUL : PREC_ATOM;
  }
  buf_put(b, "pow(");
  put_at(E, b, base, PREC_LOW, 0);
  buf_put(b, ", ");
  put_at(E, b, expo, PREC_LOW, 0);
  buf_put(b, ")");
  return PREC_ATOM;
}

/* |product|: coefficient, numerator factors, then one division. */
static int put_product(Emitter *E, Buf *b, int n) {
  const IrNode *x = emit_node(E, n);
  double coef = 1.0, k;
  int nnum = 0, nden = 0, single = -1;
  for (int a = 0; a < x->nargs; a++) {
    int f = x->args[a];
    const IrNode *y = emit_node(E, f);
    if (!is_temp(E, f) && y->op == IR_NUM) coef *= fabs(y->num);
    else if (den_power(E, f, &k)) nden++;
    else {
      nnum++;
      single = f;
    }
  }
  if (coef == 1.0 && nnum == 1 && nden == 0) return put_mag(E, b, single);
  int wrote = 0;
  if (coef != 1.0 || nnum == 0) {
    char num[64];
    format_number(E, coef, num, sizeof num);
    buf_put(b, num);
    wrote = 1;
  }
  for (int a = 0; a < x->nargs; a++) {
    int f = x->args[a];
    if ((!is_temp(E, f) && emit_node(E, f)->op == IR_NUM) || den_power(E, f, &k)) continue;
    if (wrote++) buf_put(b, "*");
    put_at(E, b, f, PREC_MUL, 1);
  }
  if (nden) {
    size_t from;
    int prec = PREC_MUL;
    buf_put(b, "/");
    from = b->len;
    for (int a = 0, i = 0; a < x->nargs; a++) {
      int f = x->args[a];
      if (!den_power(E, f, &k)) continue;
      if (i++) buf_put(b, "*");
      prec = put_den_factor(E, b, emit_node(E, f)->args[0], k);
    }
    if (nden > 1 || prec < PREC_UNARY) buf_paren_from(b, from);
  }
  return PREC_MUL;
}

static int put_sum(Emitter *E, Buf *b, int n) {
  const IrNode *x = emit_node(E, n);
  int lead = 0;
  /* Lead with the first positive term: `b - a`, not `-a + b`. */
  for (int a = 0; a < x->nargs; a++)
    if (!prints_negative(E, x->args[a])) {
      lead = a;
      break;
    }
  if (prints_negative(E, x->args[lead])) buf_put(b, "-");
  put_at(E, b, x->args[lead], PREC_MUL, 1);
  for (int a = 0; a < x->nargs; a++) {
    if (a == lead) continue;
    buf_put(b, prints_negative(E, x->args[a]) ? " - " : " + ");
    put_at(E, b, x->args[a], PREC_MUL, 1);
  }
  return PREC_ADD;
}

/* Write a call by its C form from the table of built-ins (builtins.h):
** %k is argument k, bare where it fills a whole call slot, else an atom.
** A form opening with a cast binds as a unary operator. */
static int put_call(Emitter *E, Buf *b, const IrNode *x) {
  const char *form = scalar_builtins[x->fn].c_form;
  assert(x->nargs == scalar_builtins[x->fn].arity);
  for (const char *c = form; *c; c++) {
    if (*c != '%') {
      char one[2] = {*c, 0};
      buf_put(b, one);
      continue;
    }
    int k = c[1] - '0';
    assert(k >= 0 && k < x->nargs);
    int whole = c > form && (c[-1] == '(' || (c[-1] == ' ' && c - 1 > form && c[-2] == ',')) &&
                (c[2] == ')' || c[2] == ',');
    put_at(E, b, x->args[k], whole ? PREC_LOW : PREC_ATOM, 0);
    c++;
  }
  return strncmp(form, "(double)", 8) == 0 ? PREC_UNARY : PREC_ATOM;
}

/* Print |n| (n itself when it is not negative); return its precedence. */
static int put_mag(Emitter *E, Buf *b, int n) {
  const IrNode *x = emit_node(E, n);
  char num[64];
  if (is_temp(E, n)) {
    if (E->wslot[n] >= 0) buf_printf(b, "w[%d]", E->wslot[n]);
    else buf_printf(b, "w%d", E->tempno[n]);
    return PREC_ATOM;
  }
  switch (x->op) {
  case IR_NUM:
    format_number(E, fabs(x->num), num, sizeof num);
    buf_put(b, num);
    return PREC_ATOM;
  case IR_VAR: return put_var(E, b, x);
  case IR_NEG: return put_mag(E, b, x->args[0]);
  case IR_ADD: return put_sum(E, b, n);
  case IR_MUL: return put_product(E, b, n);
  case IR_DIV:
    put_at(E, b, x->args[0], PREC_MUL, 1);
    buf_put(b, "/");
    put_at(E, b, x->args[1], PREC_UNARY, 1);
    return PREC_MUL;
  case IR_POW: return put_pow(E, b, x->args[0], x->args[1]);
  case IR_CALL: return put_call(E, b, x);
  }
  assert(0 && "unknown IR op");
  return PREC_ATOM;
}

/* Print n with its sign. */
static int put_signed(Emitter *E, Buf *b, int n) {
  if (!prints_negative(E, n)) return put_mag(E, b, n);
  buf_put(b, "-");
  put_at(E, b, n, PREC_MUL, 1);
  return PREC_ADD;
}

/* "  lhs = expr;" */
void emit_assign(Emitter *E, const char *lhs, int n) {
  Buf b = {0};
  put_at(E, &b, n, PREC_LOW, 0);
  fprintf(E->out, "  %s = %s;\n", lhs, b.s);
  free(b.s);
}

/* The expression that defines temporary n (not its name). */
void put_definition(Emitter *E, Buf *b, int n) {
  assert(is_temp(E, n));
  E->tempno[n] = -1 - E->tempno[n];      /* print the definition, not the name */
  put_at(E, b, n, PREC_LOW, 0);
  E->tempno[n] = -1 - E->tempno[n];
}

void emit_temps(Emitter *E) {
  if (E->nparts) {
    emit_part_calls(E);
    return;
  }
  for (int n = 0; n < E->g->nnodes; n++) {
    if (!E->uses[n] || !is_temp(E, n)) continue;
    Buf b = {0};
    put_definition(E, &b, n);
    fprintf(E->out, "  const double w%d = %s;\n", E->tempno[n], b.s);
    free(b.s);
  }
}

/* ------------------------------------------------------------------ function frames */

const Param PARAM_T = {IRV_T, "double t", "t"};
const Param PARAM_Q = {IRV_Q, "const double *q", "q"};
const Param PARAM_QD = {IRV_QD, "const double *qd", "qd"};
const Param PARAM_U = {IRV_U, "const double *u", "u"};
const Param PARAM_P = {IRV_P, "const double *p", "p"};

/* `(void)x;` for every input parameter the body does not read. */
void emit_unused(Emitter *E, const Param *ps, int nps) {
  for (int i = 0; i < nps; i++)
    if (ps[i].var >= 0 && !(E->vars & VAR_BIT(ps[i].var)))
      fprintf(E->out, "  (void)%s;\n", ps[i].name);
}

void emit_signature(Emitter *E, const char *ret, const char *fname, const Param *ps,
                    int nps, int proto) {
  if (!proto) emit_parts(E, fname);
  fprintf(E->out, "%s %s_%s(", ret, E->P, fname);
  for (int i = 0; i < nps; i++) fprintf(E->out, "%s%s", i ? ", " : "", ps[i].decl);
  fputs(proto ? ");\n" : ")\n{\n", E->out);
}

/* Does the analysed function read a variable its signature lacks? */
int needs_missing(const Emitter *E, unsigned allowed) {
  return (E->vars & ~allowed) != 0;
}

static const char *var_list(unsigned vars) {
  static char s[64];
  static const char *const names[] = {"t", "q", "qd", "qdd", "u", "p"};
  s[0] = '\0';
  for (int v = IRV_T; v <= IRV_P; v++)
    if (vars & VAR_BIT(v)) {
      if (s[0]) strcat(s, ", ");
      strcat(s, names[v]);
    }
  return s;
}

/* ------------------------------------------------------------------ numeric independence */

static double lcg_uniform(uint64_t *s) { return 2.0 * num_uniform(s) - 1.0; } /* in [-1, 1) */

/* Do the function's roots, which mention the variables in `vars` (t, u),
** give the same values whatever those are?  Symbolic results can mention t
** without depending on it (cos(w t)^2 + sin(w t)^2 left unsimplified), so
** evaluate at random states with several values of `vars` and compare. */
static int independent_of(const Emitter *E, unsigned vars) {
  const EomSystem *s = E->s;
  int hi = 0, compared = 0, ok = 1;
  uint64_t seed = 12345;
  for (int i = 0; i < E->nroots; i++) hi = E->roots[i] > hi ? E->roots[i] : hi;
  double t[1], *q = xcalloc((size_t)s->nq + 1, sizeof(double)),
         *qd = xcalloc((size_t)s->nq + 1, sizeof(double)),
         *qdd = xcalloc((size_t)s->nq + 1, sizeof(double)),
         *u = xcalloc((size_t)s->nu + 1, sizeof(double)), *p = xcalloc((size_t)s->np + 1, sizeof(double)),
         *v0 = xmalloc(((size_t)hi + 1) * sizeof(double)), *v1 = xmalloc(((size_t)hi + 1) * sizeof(double));
  const double *const vals[6] = {t, q, qd, qdd, u, p};
  for (int sample = 0; ok && sample < 4; sample++) {
    for (int i = 0; i < s->nq; i++) {
      q[i] = 1.5 * lcg_uniform(&seed);
      qd[i] = 2.0 * lcg_uniform(&seed);
      qdd[i] = 2.0 * lcg_uniform(&seed);
    }
    for (int i = 0; i < s->np; i++) {
      double d = E->m->params[i]->number;
      p[i] = d != 0.0 ? d * (1.0 + 0.2 * lcg_uniform(&seed)) : 0.5 * lcg_uniform(&seed);
    }
    for (int i = 0; i < s->nu; i++) u[i] = lcg_uniform(&seed);
    t[0] = 5.0 * lcg_uniform(&seed);
    ir_eval(E->g, hi, vals, v0);
    for (int alt = 0; ok && alt < 3; alt++) {
      if (vars & VAR_BIT(IRV_T)) t[0] = 10.0 * lcg_uniform(&seed);
      if (vars & VAR_BIT(IRV_U))
        for (int i = 0; i < s->nu; i++) u[i] = 3.0 * lcg_uniform(&seed);
      ir_eval(E->g, hi, vals, v1);
      for (int i = 0; i < E->nroots; i++) {
        double a = v0[E->roots[i]], b = v1[E->roots[i]];
        if (!isfinite(a) || !isfinite(b)) continue;
        if (fabs(a - b) > 1e-9 * fmax(1.0, fabs(a))) ok = 0;
        compared++;
      }
    }
  }
  free(q), free(qd), free(qdd), free(u), free(p), free(v0), free(v1);
  return ok && compared > 0;
}

/* After fn_analyse: 0 when the function can be written (variables that are
** mentioned but do not matter become zero locals), 1 when it must write NaN. */
int resolve_missing(Emitter *E, unsigned allowed) {
  E->missing = E->vars & ~allowed;
  E->fixed = 0;
  E->write_nan = 0;
  if (!E->missing) return 0;
  if ((E->missing & ~(VAR_BIT(IRV_T) | VAR_BIT(IRV_U))) || !independent_of(E, E->missing)) {
    E->write_nan = 1;
    return 1;
  }
  E->fixed = E->missing;
  return 0;
}

/* The zero locals resolve_missing() decided on. */
void emit_fixed_locals(Emitter *E) {
  if (!E->fixed) return;
  fprintf(E->out, "  /* The expressions below mention %s but do not depend on it (checked\n"
                  "  ** numerically when the code was generated): any value will do. */\n",
          var_list(E->fixed));
  if (E->fixed & VAR_BIT(IRV_T)) fprintf(E->out, "  const double t = 0.0;\n");
  if (E->fixed & VAR_BIT(IRV_U)) fprintf(E->out, "  const double u[%d] = {0.0};\n", E->s->nu);
}

/* The quantity reads a variable the documented signature does not pass (e.g. a
** mass matrix that depends on t): the function writes NaN rather than a
** value computed at a made-up time.  The header says so; `also` (or NULL)
** names the function of this model that gives the value (after the prefix). */
void emit_nan_body(Emitter *E, const Param *ps, int nps, const char *what,
                          const char *fill, const char *also) {
  E->vars = 0;
  fprintf(E->out, "  /* %s depends on %s, which this signature does not pass: NaN. */\n", what,
          var_list(E->missing));
  if (also) fprintf(E->out, "  /* %s_%s */\n", E->P, also);
  emit_unused(E, ps, nps);
  fputs(fill, E->out);
}
