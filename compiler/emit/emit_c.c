/*
** emit_c.c — the C back end: P.h and P.c from an EomSystem (docs/generated-c.md).
**
** One generated function at a time: collect its roots in the shared IrGraph,
** count how often each node is used inside that function, and turn every
** non-leaf node used more than once into a `const double wK` temporary
** (common-subexpression elimination), written in node order, which is a
** dependency order.  Expressions are printed with minimal parentheses,
** signs folded into subtractions, small integer powers as products.
**
** M q'' = f is solved by an LDLᵀ factorization unrolled for the model's
** sparsity pattern (with fill-in) into two static functions, P_ldl_factor
** and P_ldl_solve, that P_accel, P_jacobian and P_accel_constrained share.
*/
#include "emit/emit_c.h"
#include "emit/emit_control.h"
#include "emit/emit_attitude.h"
#include "emit/emit_kinematics.h"

#include <assert.h>
#include <ctype.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "emit/fsutil.h"

#ifndef EOMC_VERSION
#define EOMC_VERSION "unknown"
#endif

/* A printed expression larger than this many nodes gets its subexpressions
** hoisted into temporaries, so no single statement becomes enormous.  With
** --no-cse the limit is far higher: a hoisted node is shared by all its
** users, which is the very sharing --no-cse is there to leave out. */
#define MAX_INLINE_NODES 400
#define MAX_INLINE_NODES_NO_CSE 200000
/* Integer powers up to this are written as products; larger ones call pow. */
#define MAX_POW_PRODUCT 8

enum { PREC_LOW, PREC_ADD, PREC_MUL, PREC_UNARY, PREC_ATOM };

#define VAR_BIT(v) (1u << (unsigned)(v))
#define VARS_STATE (VAR_BIT(IRV_T) | VAR_BIT(IRV_Q) | VAR_BIT(IRV_QD) | VAR_BIT(IRV_U) | VAR_BIT(IRV_P))

/* ------------------------------------------------------------------ buffers */

typedef struct Buf {
  char *s;
  size_t len, cap;
} Buf;

static void buf_grow(Buf *b, size_t extra) {
  if (b->len + extra + 1 <= b->cap) return;
  size_t cap = b->cap ? b->cap : 256;
  while (cap < b->len + extra + 1) cap *= 2;
  char *s = realloc(b->s, cap);
  if (!s) {
    fputs("eomc: out of memory\n", stderr);
    abort();
  }
  b->s = s;
  b->cap = cap;
}

static void buf_put(Buf *b, const char *s) {
  size_t n = strlen(s);
  buf_grow(b, n);
  memcpy(b->s + b->len, s, n + 1);
  b->len += n;
}

static void buf_printf(Buf *b, const char *fmt, ...) DIAG_PRINTF(2, 3);
static void buf_printf(Buf *b, const char *fmt, ...) {
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

/* ------------------------------------------------------------------ state */

typedef struct Emitter {
  const Model *m;
  const EomSystem *s;
  const IrGraph *g;
  const char *P;         /* the prefix */
  const char *hash;
  int no_cse;
  FILE *out;
  int failed;
  char err[256];

  /* Per generated function. */
  int *uses;             /* uses of each node inside the function */
  int *tempno;           /* temporary number, or -1 when printed inline */
  int *size;             /* nodes of the inline expression of each node */
  int *roots;            /* the function's roots */
  int nroots, roots_cap;
  unsigned vars;         /* VAR_BIT of every variable kind the roots read */
  unsigned missing;      /* ... that the function's signature does not pass */
  unsigned fixed;        /* ... of those, mentioned but shown not to matter: zero locals */
  int ntemps;

  /* The LDLᵀ pattern: slot[i*nq + j] (j <= i) is the index in the packed
  ** factor array, or -1 for a structural zero of L. */
  int *slot;
  int nslots;
} Emitter;

static void fail(Emitter *E, const char *fmt, ...) DIAG_PRINTF(2, 3);
static void fail(Emitter *E, const char *fmt, ...) {
  va_list ap;
  if (E->failed) return;
  E->failed = 1;
  va_start(ap, fmt);
  vsnprintf(E->err, sizeof E->err, fmt, ap);
  va_end(ap);
}

static const IrNode *node(const Emitter *E, int n) {
  assert(n >= 0 && n < E->g->nnodes);
  return &E->g->nodes[n];
}

static int is_zero(const Emitter *E, int n) {
  const IrNode *x = node(E, n);
  return x->op == IR_NUM && x->num == 0.0;
}

static int is_leaf(const Emitter *E, int n) {
  IrOp op = node(E, n)->op;
  return op == IR_NUM || op == IR_VAR;
}

/* Is node n a number equal to an integer k with 1 <= |k| <= MAX_POW_PRODUCT? */
static int small_int(const Emitter *E, int n, int *k) {
  const IrNode *x = node(E, n);
  if (x->op != IR_NUM || x->num != floor(x->num) || fabs(x->num) > MAX_POW_PRODUCT ||
      x->num == 0.0)
    return 0;
  *k = (int)x->num;
  return 1;
}

/* ------------------------------------------------------------------ strings */

/* A model string as a C string literal: printable ASCII stays, everything
** else becomes an octal escape; `?` is escaped so no trigraph can form. */
static void put_c_string(FILE *out, const char *s) {
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
static void put_comment_text(FILE *out, const char *s) {
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
static void format_number(Emitter *E, double v, char *buf, size_t len) {
  if (!isfinite(v)) {
    fail(E, "the model yields a constant that is not finite (%g)", v);
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

static void add_root(Emitter *E, int n) {
  assert(n >= 0 && n < E->g->nnodes);
  if (E->nroots == E->roots_cap) {
    E->roots_cap = E->roots_cap ? 2 * E->roots_cap : 64;
    E->roots = realloc(E->roots, (size_t)E->roots_cap * sizeof *E->roots);
    if (!E->roots) {
      fputs("eomc: out of memory\n", stderr);
      abort();
    }
  }
  E->roots[E->nroots++] = n;
}

static void add_roots(Emitter *E, const int *r, int n) {
  for (int i = 0; i < n; i++) add_root(E, r[i]);
}

/* The lower triangle (j <= i) of an nq x nq symmetric matrix of roots. */
static void add_lower(Emitter *E, const int *mat) {
  int nq = E->s->nv;
  for (int i = 0; i < nq; i++)
    for (int j = 0; j <= i; j++) add_root(E, mat[i * nq + j]);
}

static void fn_reset(Emitter *E) {
  E->nroots = 0;
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
static void fn_analyse(Emitter *E) {
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
}

/* ------------------------------------------------------------------ expressions */

static int put_signed(Emitter *E, Buf *b, int n);
static int put_mag(Emitter *E, Buf *b, int n);

static int is_temp(const Emitter *E, int n) {
  return E->tempno[n] >= 0;
}

/* Does node n print as a negated magnitude? */
static int is_negative(const Emitter *E, int n) {
  const IrNode *x = node(E, n);
  if (is_temp(E, n)) return 0;
  switch (x->op) {
  case IR_NUM: return x->num < 0.0 || (x->num == 0.0 && signbit(x->num));
  case IR_NEG: return !is_negative(E, x->args[0]);
  case IR_DIV: return is_negative(E, x->args[0]) != is_negative(E, x->args[1]);
  case IR_MUL: {
    int neg = 0;
    for (int a = 0; a < x->nargs; a++) neg ^= is_negative(E, x->args[a]);
    return neg;
  }
  default: return 0;
  }
}

static void put_at(Emitter *E, Buf *b, int n, int minprec, int magnitude) {
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
  const IrNode *x = node(E, f);
  if (is_temp(E, f) || x->op != IR_POW) return 0;
  const IrNode *e = node(E, x->args[1]);
  if (e->op != IR_NUM || !(e->num < 0.0)) return 0;
  if (e->num == -0.5 || (e->num == floor(e->num) && e->num >= -MAX_POW_PRODUCT)) {
    *k = -e->num;
    return 1;
  }
  return 0;
}

static int put_pow(Emitter *E, Buf *b, int base, int expo) {
  const IrNode *e = node(E, expo);
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
  const IrNode *x = node(E, n);
  double coef = 1.0, k;
  int nnum = 0, nden = 0, single = -1;
  for (int a = 0; a < x->nargs; a++) {
    int f = x->args[a];
    const IrNode *y = node(E, f);
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
    if ((!is_temp(E, f) && node(E, f)->op == IR_NUM) || den_power(E, f, &k)) continue;
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
      prec = put_den_factor(E, b, node(E, f)->args[0], k);
    }
    if (nden > 1 || prec < PREC_UNARY) buf_paren_from(b, from);
  }
  return PREC_MUL;
}

static int put_sum(Emitter *E, Buf *b, int n) {
  const IrNode *x = node(E, n);
  int lead = 0;
  /* Lead with the first positive term: `b - a`, not `-a + b`. */
  for (int a = 0; a < x->nargs; a++)
    if (!is_negative(E, x->args[a])) {
      lead = a;
      break;
    }
  if (is_negative(E, x->args[lead])) buf_put(b, "-");
  put_at(E, b, x->args[lead], PREC_MUL, 1);
  for (int a = 0; a < x->nargs; a++) {
    if (a == lead) continue;
    buf_put(b, is_negative(E, x->args[a]) ? " - " : " + ");
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
  const IrNode *x = node(E, n);
  char num[64];
  if (is_temp(E, n)) {
    buf_printf(b, "w%d", E->tempno[n]);
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
  if (!is_negative(E, n)) return put_mag(E, b, n);
  buf_put(b, "-");
  put_at(E, b, n, PREC_MUL, 1);
  return PREC_ADD;
}

/* "  lhs = expr;" */
static void emit_assign(Emitter *E, const char *lhs, int n) {
  Buf b = {0};
  put_at(E, &b, n, PREC_LOW, 0);
  fprintf(E->out, "  %s = %s;\n", lhs, b.s);
  free(b.s);
}

static void emit_temps(Emitter *E) {
  for (int n = 0; n < E->g->nnodes; n++) {
    if (!E->uses[n] || !is_temp(E, n)) continue;
    Buf b = {0};
    E->tempno[n] = -1 - E->tempno[n];      /* print the definition, not the name */
    put_at(E, &b, n, PREC_LOW, 0);
    E->tempno[n] = -1 - E->tempno[n];
    fprintf(E->out, "  const double w%d = %s;\n", E->tempno[n], b.s);
    free(b.s);
  }
}

/* ------------------------------------------------------------------ function frames */

typedef struct Param {
  int var;               /* the IrVar an input parameter carries; -1 for outputs */
  const char *decl;      /* e.g. "const double *q" */
  const char *name;
} Param;

/* `(void)x;` for every input parameter the body does not read. */
static void emit_unused(Emitter *E, const Param *ps, int nps) {
  for (int i = 0; i < nps; i++)
    if (ps[i].var >= 0 && !(E->vars & VAR_BIT(ps[i].var)))
      fprintf(E->out, "  (void)%s;\n", ps[i].name);
}

static void emit_signature(Emitter *E, const char *ret, const char *fname, const Param *ps,
                           int nps, int proto) {
  fprintf(E->out, "%s %s_%s(", ret, E->P, fname);
  for (int i = 0; i < nps; i++) fprintf(E->out, "%s%s", i ? ", " : "", ps[i].decl);
  fputs(proto ? ");\n" : ")\n{\n", E->out);
}

/* Does the analysed function read a variable its signature lacks? */
static int needs_missing(const Emitter *E, unsigned allowed) {
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

/* ------------------------------------------------------------------ the LDLᵀ pattern */

static void ldl_pattern(Emitter *E) {
  int nq = E->s->nv;
  int *nz = E->slot;
  for (int i = 0; i < nq; i++)
    for (int j = 0; j < nq; j++) nz[i * nq + j] = j <= i && (i == j || !is_zero(E, E->s->mass[i * nq + j]));
  /* Symbolic factorization: L_ij fills in when L_ik and L_jk are both nonzero. */
  for (int j = 0; j < nq; j++)
    for (int i = j + 1; i < nq; i++)
      for (int k = 0; k < j && !nz[i * nq + j]; k++)
        if (nz[i * nq + k] && nz[j * nq + k]) nz[i * nq + j] = 1;
  E->nslots = 0;
  for (int i = 0; i < nq; i++)
    for (int j = 0; j <= i; j++) nz[i * nq + j] = nz[i * nq + j] ? E->nslots++ : -1;
  for (int i = 0; i < nq; i++)
    for (int j = i + 1; j < nq; j++) nz[i * nq + j] = -1;
}

static int slot(const Emitter *E, int i, int j) {
  int nq = E->s->nv;
  assert(i >= 0 && j >= 0 && i < nq && j < nq);
  return i >= j ? E->slot[i * nq + j] : E->slot[j * nq + i];
}

static void emit_ldl_factor(Emitter *E) {
  FILE *o = E->out;
  int nq = E->s->nv;
  fprintf(o, "/* M = L D L^T in place, for this model's sparsity pattern: a[] holds the\n"
             "** packed lower triangle of M on entry, L below the diagonal and D on it on\n"
             "** return.  Returns nonzero when a pivot is not positive and finite. */\n");
  fprintf(o, "static int %s_ldl_factor(double *a)\n{\n", E->P);
  for (int j = 0; j < nq; j++) {
    int jj = slot(E, j, j), nbelow = 0, nk = 0;
    for (int i = j + 1; i < nq; i++) nbelow += slot(E, i, j) >= 0;
    for (int k = 0; k < j; k++) nk += slot(E, j, k) >= 0;
    fprintf(o, "  {\n");
    /* w_k = L_jk D_k, shared by the pivot and the column below it. */
    for (int k = 0; k < j; k++)
      if (slot(E, j, k) >= 0) fprintf(o, "    const double w%d = a[%d]*a[%d];\n", k, slot(E, j, k), slot(E, k, k));
    if (nk) {
      fprintf(o, "    a[%d] -= ", jj);
      for (int k = 0, c = 0; k < j; k++)
        if (slot(E, j, k) >= 0) fprintf(o, "%sa[%d]*w%d", c++ ? " + " : "", slot(E, j, k), k);
      fprintf(o, ";\n");
    }
    fprintf(o, "    if (!(a[%d] > 0.0) || !isfinite(a[%d])) return 1;\n", jj, jj);
    if (nbelow) fprintf(o, "    const double r = 1.0/a[%d];\n", jj);
    for (int i = j + 1; i < nq; i++) {
      int ij = slot(E, i, j), terms = 0;
      if (ij < 0) continue;
      int stored = !is_zero(E, E->s->mass[i * nq + j]);   /* else fill-in: starts at 0 */
      for (int k = 0; k < j; k++) terms += slot(E, i, k) >= 0 && slot(E, j, k) >= 0;
      if (!terms) {
        assert(stored);
        fprintf(o, "    a[%d] *= r;\n", ij);
        continue;
      }
      fprintf(o, "    a[%d] = %s", ij, stored ? "(" : "-(");
      int c = 0;
      if (stored) fprintf(o, "a[%d]", ij), c = 1;
      for (int k = 0; k < j; k++)
        if (slot(E, i, k) >= 0 && slot(E, j, k) >= 0)
          fprintf(o, "%sa[%d]*w%d", stored ? " - " : (c ? " + " : ""), slot(E, i, k), k), c++;
      fprintf(o, ")*r;\n");
    }
    fprintf(o, "  }\n");
  }
  fprintf(o, "  return 0;\n}\n\n");
}

static void emit_ldl_solve(Emitter *E) {
  FILE *o = E->out;
  int nq = E->s->nv;
  fprintf(o, "/* Solve L D L^T x = b in place (b becomes x), with a[] from %s_ldl_factor. */\n", E->P);
  fprintf(o, "static void %s_ldl_solve(const double *a, double *b)\n{\n", E->P);
  for (int i = 0; i < nq; i++) {
    int first = 1;
    for (int k = 0; k < i; k++) {
      if (slot(E, i, k) < 0) continue;
      if (first) fprintf(o, "  b[%d] -= a[%d]*b[%d]", i, slot(E, i, k), k);
      else fprintf(o, " + a[%d]*b[%d]", slot(E, i, k), k);
      first = 0;
    }
    if (!first) fprintf(o, ";\n");
  }
  for (int i = 0; i < nq; i++) fprintf(o, "  b[%d] /= a[%d];\n", i, slot(E, i, i));
  for (int i = nq - 1; i >= 0; i--) {
    int first = 1;
    for (int k = i + 1; k < nq; k++) {
      if (slot(E, k, i) < 0) continue;
      if (first) fprintf(o, "  b[%d] -= a[%d]*b[%d]", i, slot(E, k, i), k);
      else fprintf(o, " + a[%d]*b[%d]", slot(E, k, i), k);
      first = 0;
    }
    if (!first) fprintf(o, ";\n");
  }
  fprintf(o, "}\n\n");
}

/* ------------------------------------------------------------------ generated functions */

#define NPARAMS(a) ((int)(sizeof(a) / sizeof((a)[0])))

static const Param P_T = {IRV_T, "double t", "t"};
static const Param P_Q = {IRV_Q, "const double *q", "q"};
static const Param P_QD = {IRV_QD, "const double *qd", "qd"};
static const Param P_U = {IRV_U, "const double *u", "u"};
static const Param P_P = {IRV_P, "const double *p", "p"};

/* ------------------------------------------------------------------ numeric independence */

static double lcg_uniform(unsigned long *s) {   /* in [-1, 1), deterministic */
  *s = (*s * 6364136223846793005UL + 1442695040888963407UL) & 0xffffffffffffUL;
  return (double)(*s >> 16) / 16777216.0 * 2.0 - 1.0;
}

/* Do the function's roots, which mention the variables in `vars` (t, u),
** give the same values whatever those are?  Symbolic results can mention t
** without depending on it (cos(w t)^2 + sin(w t)^2 left unsimplified), so
** evaluate at random states with several values of `vars` and compare. */
static int independent_of(const Emitter *E, unsigned vars) {
  const EomSystem *s = E->s;
  int hi = 0, compared = 0, ok = 1;
  unsigned long seed = 12345;
  for (int i = 0; i < E->nroots; i++) hi = E->roots[i] > hi ? E->roots[i] : hi;
  double t[1], *q = calloc((size_t)s->nq + 1, sizeof(double)), *qd = calloc((size_t)s->nq + 1, sizeof(double)),
         *qdd = calloc((size_t)s->nq + 1, sizeof(double)), *u = calloc((size_t)s->nu + 1, sizeof(double)),
         *p = calloc((size_t)s->np + 1, sizeof(double)), *v0 = malloc(((size_t)hi + 1) * sizeof(double)),
         *v1 = malloc(((size_t)hi + 1) * sizeof(double));
  const double *const vals[6] = {t, q, qd, qdd, u, p};
  assert(q && qd && qdd && u && p && v0 && v1);
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
static int resolve_missing(Emitter *E, unsigned allowed) {
  E->missing = E->vars & ~allowed;
  E->fixed = 0;
  if (!E->missing) return 0;
  if (E->missing & ~(VAR_BIT(IRV_T) | VAR_BIT(IRV_U))) return 1;
  if (!independent_of(E, E->missing)) return 1;
  E->fixed = E->missing;
  return 0;
}

/* The zero locals resolve_missing() decided on. */
static void emit_fixed_locals(Emitter *E) {
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
static void emit_nan_body(Emitter *E, const Param *ps, int nps, const char *what,
                          const char *fill, const char *also) {
  E->vars = 0;
  fprintf(E->out, "  /* %s depends on %s, which this signature does not pass: NaN. */\n", what,
          var_list(E->missing));
  if (also) fprintf(E->out, "  /* %s_%s */\n", E->P, also);
  emit_unused(E, ps, nps);
  fputs(fill, E->out);
}

static void emit_mass(Emitter *E) {
  const Param ps[] = {P_Q, P_P, {-1, "double *M", "M"}};
  int nq = E->s->nv;
  char lhs[64];
  fn_reset(E);
  add_lower(E, E->s->mass);
  fn_analyse(E);
  emit_signature(E, "void", "mass", ps, NPARAMS(ps), 0);
  if (resolve_missing(E, VAR_BIT(IRV_Q) | VAR_BIT(IRV_P))) {
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

static void emit_forcing(Emitter *E) {
  const Param ps[] = {P_T, P_Q, P_QD, P_U, P_P, {-1, "double *f", "f"}};
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

/* a[slot] = M_ij for every stored entry of the lower triangle (fill-in
** slots are written by the factorization itself). */
static void emit_mass_slots(Emitter *E) {
  int nq = E->s->nv;
  char lhs[64];
  for (int i = 0; i < nq; i++)
    for (int j = 0; j <= i; j++) {
      int m = E->s->mass[i * nq + j];
      if (i != j && is_zero(E, m)) continue;
      snprintf(lhs, sizeof lhs, "a[%d]", slot(E, i, j));
      emit_assign(E, lhs, m);
    }
}

static void emit_accel(Emitter *E) {
  const Param ps[] = {P_T, P_Q, P_QD, P_U, P_P, {-1, "double *qdd", "qdd"}};
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

static void emit_rhs(Emitter *E) {
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
  if (!is_zero(E, df)) {
    put_at(E, &b, df, PREC_LOW, 0);
    any = 1;
  }
  for (int j = 0; dM && j < nq; j++) {
    int d = i >= j ? dM[i * nq + j] : dM[j * nq + i];
    if (is_zero(E, d)) continue;
    /* - dM_ij qdd_j, with the sign of dM_ij folded in */
    int neg = !is_negative(E, d);
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

static void emit_jacobian(Emitter *E) {
  FILE *o = E->out;
  const EomSystem *s = E->s;
  int nq = s->nq, nv = s->nv, nu = s->nu, nx = nq + nv;
  char lhs[64];
  /* Which columns of d qdd/d(x, u) are not structurally zero, and whether
  ** any needs qdd itself (through dM/dq). */
  int need_qdd = 0, need_c = 0;
  int *live = calloc((size_t)(nx + nu), sizeof *live);
  assert(live);
  for (int col = 0; col < nx + nu; col++)
    for (int i = 0; i < nv; i++) {
      int df = col < nq ? s->dforcing_dq[i * nq + col]
             : col < nx ? s->dforcing_dqd[i * nv + col - nq] : s->dforcing_du[i * nu + col - nx];
      if (!is_zero(E, df)) live[col] = 1;
      for (int j = 0; col < nq && j < nv; j++) {
        int d = s->dmass_dq[col * nv * nv + (i >= j ? i * nv + j : j * nv + i)];
        if (!is_zero(E, d)) live[col] = need_qdd = 1;
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
  fprintf(o, "void %s_jacobian(double t, const double *x, const double *u, const double *p,\n"
             "  double *A, double *B)\n{\n", E->P);
  if (E->vars & VAR_BIT(IRV_Q)) fprintf(o, "  const double *q = x;\n");
  if (E->vars & VAR_BIT(IRV_QD)) fprintf(o, "  const double *qd = x + %d;\n", nq);
  fprintf(o, "  double a[%d];\n", E->nslots);
  if (need_qdd) fprintf(o, "  double qdd[%d];\n", nv);
  if (need_c) fprintf(o, "  double c[%d];\n", nv);
  fprintf(o, "  int i;\n");
  {
    const Param ps[] = {P_T, P_U, P_P};
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
    int any = 0;
    if (!live[col]) continue;   /* a zero column: already written */
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
  free(live);
  fputs("}\n\n", o);
}

static void emit_inverse(Emitter *E) {
  const Param ps[] = {P_T, P_Q, P_QD, {IRV_QDD, "const double *qdd", "qdd"}, P_P, {-1, "double *Q", "Q"}};
  unsigned allowed = VAR_BIT(IRV_T) | VAR_BIT(IRV_Q) | VAR_BIT(IRV_QD) | VAR_BIT(IRV_QDD) | VAR_BIT(IRV_P);
  char lhs[64];
  fn_reset(E);
  add_roots(E, E->s->inverse, E->s->nv);
  fn_analyse(E);
  emit_signature(E, "void", "inverse", ps, NPARAMS(ps), 0);
  if (resolve_missing(E, allowed)) {
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

static void emit_energy(Emitter *E) {
  const Param ps[] = {P_Q, P_QD, P_P, {-1, "double *T", "T"}, {-1, "double *V", "V"}};
  fn_reset(E);
  add_root(E, E->s->energy_T);
  add_root(E, E->s->energy_V);
  fn_analyse(E);
  emit_signature(E, "void", "energy", ps, NPARAMS(ps), 0);
  if (resolve_missing(E, VAR_BIT(IRV_Q) | VAR_BIT(IRV_QD) | VAR_BIT(IRV_P))) {
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
static void emit_function_outs(Emitter *E, const char *fname, unsigned args,
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
  emit_signature(E, "void", fname, ps, nps, 0);
  if (resolve_missing(E, allowed)) {
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
static void emit_plain_function(Emitter *E, const char *fname, unsigned args,
                                const char *out, const int *roots, int n) {
  EmitOut o = {out, roots, n};
  emit_function_outs(E, fname, args, &o, 1);
}

static void emit_outputs(Emitter *E) {
  const Param ps[] = {P_T, P_Q, P_QD, P_U, P_P, {-1, "double *y", "y"}};
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
static void emit_switches(Emitter *E) {
  const Param ps[] = {P_T, P_Q, P_QD, P_U, P_P, {-1, "double *s", "s"}};
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

static void emit_constraint(Emitter *E) {
  const Param ps[] = {P_Q, P_P, {-1, "double *phi", "phi"}};
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

static void emit_constraint_jacobian(Emitter *E) {
  const Param ps[] = {P_Q, P_P, {-1, "double *G", "G"}};
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
static void emit_constraint_at(Emitter *E) {
  const Param ps[] = {P_T, P_Q, P_P, {-1, "double *phi", "phi"}, {-1, "double *G", "G"},
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
static void emit_constraint_gamma(Emitter *E) {
  const Param ps[] = {P_T, P_Q, P_QD, P_P, {-1, "double *gamma", "gamma"}};
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
static void emit_velocity_constraint(Emitter *E) {
  const Param ps[] = {P_T, P_Q, P_QD, P_P, {-1, "double *A", "A"}, {-1, "double *b", "b"},
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
static void emit_accel_constrained(Emitter *E) {
  const Param ps[] = {P_T, P_Q, P_QD, P_U, P_P, {-1, "double *qdd", "qdd"}, {-1, "double *lambda", "lambda"}};
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

/* ------------------------------------------------------------------ header, tables, descriptor */

static void emit_banner(Emitter *E, const char *what) {
  fprintf(E->out,
    "/*\n"
    "** %s.%s — %s for the model '%s', generated by eomc %s\n"
    "** from model text with hash fnv1a64:%s.  Do not edit: regenerate.\n"
    "**\n"
    "** Standalone C99; needs only <math.h> (link with -lm).  The state is\n"
    "** x = [q; qd]; matrices are row-major; p holds the parameters in the\n"
    "** order below.  %s_accel solves M(q) qdd = f(t, q, qd, u) and returns\n"
    "** nonzero, writing nothing, when M is not positive definite; %s_rhs and\n"
    "** %s_jacobian then write NaN into the rows they could not compute.\n"
    "** The descriptor %s_model (struct eom_model) is compiled when the\n"
    "** runtime's header <eom/model.h> is on the include path; compile with\n"
    "** -DEOM_NO_DESCRIPTOR to leave it out and need nothing but <math.h>.\n"
    "*/\n",
    E->P, what[0] == 'h' ? "h" : "c", what[0] == 'h' ? "declarations" : "equations of motion",
    E->P, EOMC_VERSION, E->hash, E->P, E->P, E->P, E->P);
}

/* The unit annotation as written: products, quotients and powers of names. */
static void unit_text(Buf *b, const Expr *u) {
  if (!u) return;
  switch (u->kind) {
  case EX_NAME: buf_put(b, u->name ? u->name : "?"); break;
  case EX_NUM: buf_printf(b, "%g", u->num); break;
  case EX_UNARY:
    buf_put(b, "-");
    unit_text(b, u->args[0]);
    break;
  case EX_BINARY: {
    static const char ops[] = "+-*/^";
    int paren = u->op == OP_POW && u->args[0]->kind == EX_BINARY;
    if (paren) buf_put(b, "(");
    unit_text(b, u->args[0]);
    if (paren) buf_put(b, ")");
    buf_printf(b, "%c", u->op <= OP_POW ? ops[u->op] : '?');
    paren = u->args[1]->kind == EX_BINARY && u->op != OP_MUL;
    if (paren) buf_put(b, "(");
    unit_text(b, u->args[1]);
    if (paren) buf_put(b, ")");
    break;
  }
  default: buf_put(b, "?"); break;
  }
}

static void emit_decl_comment(Emitter *E, const char *kind, int index, const Decl *d) {
  FILE *o = E->out;
  int size = d->kind == DECL_OUTPUT ? d->shape.rows * d->shape.cols : 1;
  if (d->frame)  /* a frame: its position, then its rotation row by row */
    fprintf(o, "**   %s[%d..%d]  %s (frame: position 3, rotation 3x3)", kind, index, index + 11, d->name);
  else if (size > 1)  /* a vector or matrix output: its entries, row by row */
    fprintf(o, "**   %s[%d..%d]  %s (%dx%d)", kind, index, index + size - 1, d->name, d->shape.rows,
            d->shape.cols);
  else
    fprintf(o, "**   %s[%d]  %s", kind, index, d->name);
  if (d->kind == DECL_PARAM) {
    char num[64];
    format_number(E, d->number, num, sizeof num);
    fprintf(o, " = %s", num);
  }
  if (d->unit) {
    Buf u = {0};
    unit_text(&u, d->unit);
    fputs(" [", o);
    put_comment_text(o, u.s);
    fputs("]", o);
    free(u.s);
  }
  if (d->desc && d->desc[0]) {
    fputs("  ", o);
    put_comment_text(o, d->desc);
  }
  fputc('\n', o);
}

static void emit_header(Emitter *E) {
  FILE *o = E->out;
  const Model *m = E->m;
  const EomSystem *s = E->s;
  const char *P = E->P;
  emit_banner(E, "header");
  fprintf(o, "#ifndef EOM_GENERATED_%s_H\n#define EOM_GENERATED_%s_H\n\n", P, P);
  fprintf(o, "#ifdef __cplusplus\nextern \"C\" {\n#endif\n\n");
  fprintf(o, "#define %s_NQ %d   /* generalized coordinates */\n", P, s->nq);
  fprintf(o, "#define %s_NU %d   /* inputs */\n", P, s->nu);
  fprintf(o, "#define %s_NP %d   /* parameters */\n", P, s->np);
  fprintf(o, "#define %s_NY %d   /* outputs */\n", P, s->ny);
  if (s->nvc) {
    fprintf(o, "#define %s_NC %d   /* position constraints */\n", P, s->nc);
    fprintf(o, "#define %s_NVC %d   /* velocity constraints (multipliers after the NC) */\n\n", P,
            s->nvc);
  } else {
    fprintf(o, "#define %s_NC %d   /* constraints */\n\n", P, s->nc);
  }
  if (m->nattitudes) emit_attitude_header(o, m, P);
  /* Index macros, e.g. p[P_P_mass], and the meaning of every slot. */
  static const struct { const char *tag, *arr, *what; } kinds[] = {
    {"Q", "q", "coordinates (qd, qdd: their rates)"}, {"P", "p", "parameters (= default)"},
    {"U", "u", "inputs"}, {"Y", "y", "outputs"}};
  Decl **lists[] = {m->coords, m->params, m->inputs, m->outputs};
  int counts[] = {m->ncoords, m->nparams, m->ninputs, m->noutputs};
  for (int k = 0; k < 4; k++) {
    if (!counts[k]) continue;
    /* an output's macro is the index of its first entry in y */
    int *first = calloc((size_t)counts[k], sizeof *first);
    assert(first);
    for (int i = 1; i < counts[k]; i++)
      first[i] = first[i - 1] + (k == 3 ? lists[k][i - 1]->shape.rows * lists[k][i - 1]->shape.cols : 1);
    fprintf(o, "/*\n** %s:\n", kinds[k].what);
    for (int i = 0; i < counts[k]; i++) emit_decl_comment(E, kinds[k].arr, first[i], lists[k][i]);
    fprintf(o, "*/\n");
    for (int i = 0; i < counts[k]; i++)
      fprintf(o, "#define %s_%s_%s %d\n", P, kinds[k].tag, lists[k][i]->name, first[i]);
    fputc('\n', o);
    free(first);
  }
  fprintf(o,
    "void %s_mass(const double *q, const double *p, double *M);   /* NQ x NQ, symmetric */\n"
    "void %s_forcing(double t, const double *q, const double *qd, const double *u,\n"
    "  const double *p, double *f);   /* NQ: M qdd = f */\n"
    "int %s_accel(double t, const double *q, const double *qd, const double *u,\n"
    "  const double *p, double *qdd);   /* 0, or nonzero when M is not positive definite */\n"
    "void %s_rhs(double t, const double *x, const double *u, const double *p, double *xdot);\n"
    "void %s_jacobian(double t, const double *x, const double *u, const double *p,\n"
    "  double *A, double *B);   /* d xdot/dx (2NQ x 2NQ), d xdot/du (2NQ x NU) */\n"
    "void %s_inverse(double t, const double *q, const double *qd, const double *qdd,\n"
    "  const double *p, double *Q);   /* M qdd - f(u = 0) */\n"
    "void %s_energy(const double *q, const double *qd, const double *p, double *T, double *V);\n"
    "void %s_outputs(double t, const double *q, const double *qd, const double *u,\n"
    "  const double *p, double *y);\n"
    "void %s_default_params(double *p);   /* the defaults above */\n"
    "/* Params whose default is an expression of earlier params, recomputed\n"
    "** from the current p in declaration order; given (NP flags, or NULL for\n"
    "** none) marks the ones the caller set, which are kept. */\n"
    "void %s_derived_params(double *p, const int *given);\n"
    "void %s_initial_state(double *x);   /* [q0; qd0] from the model's `initial` */\n",
    P, P, P, P, P, P, P, P, P, P, P);
  if (s->nc)
    fprintf(o,
      "void %s_constraint(const double *q, const double *p, double *phi);   /* NC */\n"
      "void %s_constraint_jacobian(const double *q, const double *p, double *G);   /* NC x NQ */\n"
      "/* phi, G and dphi/dt at time t (time-dependent constraints too):\n"
      "** phi' = G qd + dphi/dt. */\n"
      "void %s_constraint_at(double t, const double *q, const double *p, double *phi, double *G,\n"
      "  double *phi_t);\n"
      "/* M qdd = f + G^T lambda with G qdd = gamma, where phi = left - right of\n"
      "** each `constraint` (source order) and G = dphi/dq: the generalized\n"
      "** constraint force is +G^T lambda.  Returns 1 when M, 2 when G M^-1 G^T\n"
      "** is not positive definite (dependent constraints: G loses rank). */\n"
      "int %s_accel_constrained(double t, const double *q, const double *qd, const double *u,\n"
      "  const double *p, double *qdd, double *lambda);\n",
      P, P, P, P);
  if (s->nvc)
    fprintf(o,
      "/* The velocity constraints A(t, q) qd = b(t, q) (NVC x NQ and NVC), one\n"
      "** row per entry of each `constraint` that mentions rates (source order),\n"
      "** and gamma (NVC) with A qdd = gamma, their time derivative. */\n"
      "void %s_velocity_constraint(double t, const double *q, const double *qd, const double *p,\n"
      "  double *A, double *b, double *gamma);\n", P);
  if (s->nvc && !s->nc)
    fprintf(o,
      "/* M qdd = f + A^T lambda with A qdd = gamma: the generalized force of\n"
      "** the velocity constraints is +A^T lambda (NVC).  Returns 1 when M, 2\n"
      "** when A M^-1 A^T is not positive definite (dependent constraints). */\n"
      "int %s_accel_constrained(double t, const double *q, const double *qd, const double *u,\n"
      "  const double *p, double *qdd, double *lambda);\n", P);
  else if (s->nvc)
    fprintf(o,
      "/* With velocity constraints too, accel_constrained stacks [G; A]: lambda\n"
      "** has NC + NVC entries, the velocity constraints' after the NC, and the\n"
      "** generalized constraint force is +[G; A]^T lambda. */\n");
  if (s->nc)
    fprintf(o,
      "/* gamma of G qdd = gamma alone (position constraints), for solvers of\n"
      "** their own. */\n"
      "void %s_constraint_gamma(double t, const double *q, const double *qd, const double *p,\n"
      "  double *gamma);\n", P);
  if (s->ns)
    fprintf(o,
      "/* The %d switching functions (P_switch_names): where one changes sign, a\n"
      "** non-smooth term (min, max, sign, step, clamp, abs) changes branch. */\n"
      "#define %s_NS %d\n"
      "void %s_switches(double t, const double *q, const double *qd, const double *u,\n"
      "  const double *p, double *s);\n",
      s->ns, P, s->ns, P);
  emit_control_prototypes(o, m, s, P);
  emit_kinematics_prototypes(o, m, s, P);
  fprintf(o, "\n#ifndef EOM_NO_DESCRIPTOR\nstruct eom_model;\nextern const struct eom_model %s_model;\n#endif\n", P);
  fprintf(o, "\n#ifdef __cplusplus\n}\n#endif\n#endif\n");
}

/* C99 promises string literals of 4095 bytes only (5.2.4.1): a longer model
** string becomes a char array initialized byte by byte. */
#define MAX_STRING_LITERAL 4000

static void emit_long_string(Emitter *E, const char *ident, const char *text) {
  FILE *o = E->out;
  fprintf(o, "static const char %s[] = {", ident);
  for (size_t i = 0; text[i]; i++) fprintf(o, "%s%d", i % 20 ? ", " : (i ? ",\n  " : "\n  "), (unsigned char)text[i]);
  fputs(", 0\n};\n", o);
}

/* static const char *const P_name[n] = {texts...}; the texts are freed. */
static void emit_texts(Emitter *E, const char *name, char **texts, int n) {
  FILE *o = E->out;
  char ident[600];
  assert(n > 0);
  for (int i = 0; i < n; i++)
    if (strlen(texts[i]) > MAX_STRING_LITERAL) {
      snprintf(ident, sizeof ident, "%s_%s_%d", E->P, name, i);
      emit_long_string(E, ident, texts[i]);
    }
  fprintf(o, "static const char *const %s_%s[%d] = {", E->P, name, n);
  for (int i = 0; i < n; i++) {
    fputs(i ? ",\n  " : "\n  ", o);
    if (strlen(texts[i]) > MAX_STRING_LITERAL) fprintf(o, "%s_%s_%d", E->P, name, i);
    else put_c_string(o, texts[i]);
    free(texts[i]);
  }
  fputs("\n};\n", o);
}

/* A table of one field of each declaration: 0 name, 1 unit, 2 description. */
static void emit_string_table(Emitter *E, const char *name, Decl **ds, int n, int field) {
  if (!n) return;
  char **texts = calloc((size_t)n, sizeof *texts);
  assert(texts);
  for (int i = 0; i < n; i++) {
    Buf b = {0};
    if (field == 0) buf_put(&b, ds[i]->name);
    else if (field == 2) buf_put(&b, ds[i]->desc ? ds[i]->desc : "");
    else unit_text(&b, ds[i]->unit);
    texts[i] = b.s ? b.s : calloc(1, 1);
  }
  emit_texts(E, name, texts, n);
  free(texts);
}

/* Names, units and descriptions of the entries of q: the coordinates', then
** each attitude's quaternion entries "R.w" ... "R.z" (no unit). */
static void emit_coord_tables(Emitter *E) {
  const Model *m = E->m;
  if (!m->nattitudes) {
    emit_string_table(E, "coord_names", m->coords, m->ncoords, 0);
    emit_string_table(E, "coord_units", m->coords, m->ncoords, 1);
    emit_string_table(E, "coord_descs", m->coords, m->ncoords, 2);
    return;
  }
  static const char *const part = "wxyz";
  int nq = E->s->nq;
  for (int field = 0; field < 3; field++) {
    char **texts = calloc((size_t)nq, sizeof *texts);
    assert(texts);
    for (int i = 0; i < nq; i++) {
      Buf b = {0};
      const Decl *d = i < m->ncoords ? m->coords[i] : m->attitudes[(i - m->ncoords) / 4];
      if (field == 0 && i < m->ncoords) buf_put(&b, d->name);
      else if (field == 0) buf_printf(&b, "%s.%c", d->name, part[(i - m->ncoords) % 4]);
      else if (field == 2) buf_put(&b, d->desc ? d->desc : "");
      else if (i < m->ncoords) unit_text(&b, d->unit);
      texts[i] = b.s ? b.s : calloc(1, 1);
    }
    emit_texts(E, field == 0 ? "coord_names" : field == 1 ? "coord_units" : "coord_descs", texts, nq);
    free(texts);
  }
}

/* The name of each entry of y: the output's name, or name[i] and name[i,j]
** (1-based, as the model language indexes) for a vector or matrix output. */
static void emit_output_names(Emitter *E) {
  const Model *m = E->m;
  if (!m->ny) return;
  char **texts = calloc((size_t)m->ny, sizeof *texts);
  int k = 0;
  assert(texts);
  for (int i = 0; i < m->noutputs; i++) {
    const Decl *d = m->outputs[i];
    int rows = d->shape.rows, cols = d->shape.cols;
    for (int r = 0; r < rows; r++)
      for (int c = 0; c < cols; c++) {
        Buf b = {0};
        int e = r * cols + c;
        if (d->frame && e < 3) buf_printf(&b, "%s.pos[%d]", d->name, e + 1);
        else if (d->frame) buf_printf(&b, "%s.rot[%d,%d]", d->name, (e - 3) / 3 + 1, (e - 3) % 3 + 1);
        else if (rows * cols == 1) buf_put(&b, d->name);
        else if (cols == 1 || rows == 1) buf_printf(&b, "%s[%d]", d->name, r * cols + c + 1);
        else buf_printf(&b, "%s[%d,%d]", d->name, r + 1, c + 1);
        assert(k < m->ny);
        texts[k++] = b.s;
      }
  }
  assert(k == m->ny);
  emit_texts(E, "output_names", texts, m->ny);
  free(texts);
}

/* "LINE:COL fn" (and "lower"/"upper" for a clamp's bounds) per switch. */
static void emit_switch_names(Emitter *E) {
  const EomSystem *s = E->s;
  if (!s->ns) return;
  char **texts = calloc((size_t)s->ns, sizeof *texts);
  assert(texts);
  for (int i = 0; i < s->ns; i++) {
    const EomSwitch *w = &s->switch_info[i];
    Buf b = {0};
    buf_printf(&b, "%d:%d %s%s", w->line, w->col, scalar_builtins[w->fn].name,
               w->part == 1 ? " lower" : w->part == 2 ? " upper" : "");
    texts[i] = b.s;
  }
  emit_texts(E, "switch_names", texts, s->ns);
  free(texts);
}

static void emit_double_table(Emitter *E, const char *name, const double *v, int n) {
  FILE *o = E->out;
  char num[64];
  if (!n) return;
  fprintf(o, "static const double %s_%s[%d] = {", E->P, name, n);
  for (int i = 0; i < n; i++) {
    format_number(E, v[i], num, sizeof num);
    fprintf(o, "%s%s", i ? ", " : "", num);
  }
  fputs("};\n", o);
}

/* Params whose default reads earlier params follow them: each is recomputed
** from the current p in declaration order (so a chain of such defaults
** works), unless given[i] says the caller set it.  Defaults are short, so
** each is written inline, in full. */
static void emit_derived_params(Emitter *E) {
  FILE *o = E->out;
  const EomSystem *s = E->s;
  fprintf(o, "void %s_derived_params(double *p, const int *given)\n{\n", E->P);
  if (!s->nderived) fputs("  (void)p;\n  (void)given;\n", o);
  for (int i = 0; i < s->np; i++) {
    int r = s->param_rule ? s->param_rule[i] : -1;  /* hand-built systems have none */
    if (r < 0) continue;
    fn_reset(E);
    add_root(E, r);
    fn_analyse(E);
    assert(!needs_missing(E, VAR_BIT(IRV_P)));
    for (int n = 0; n < E->g->nnodes; n++) E->tempno[n] = -1;
    Buf b = {0};
    put_at(E, &b, r, PREC_LOW, 0);
    fprintf(o, "  if (!given || !given[%d]) p[%d] = %s;   /* %s */\n", i, i, b.s, E->m->params[i]->name);
    free(b.s);
  }
  fputs("}\n\n", o);
}

/* q0 (nq) and v0 (nv): the coordinates' `initial` values and rates, then
** each attitude's quaternion and omega. */
static void initial_state(const Model *m, double *q0, double *v0) {
  for (int i = 0; i < m->ncoords; i++) {
    q0[i] = m->q0 ? m->q0[i] : 0.0;
    v0[i] = m->qd0 ? m->qd0[i] : 0.0;
  }
  for (int k = 0; k < m->nattitudes; k++) {
    for (int c = 0; c < 4; c++) q0[m->ncoords + 4 * k + c] = m->attitude_q0[4 * k + c];
    for (int c = 0; c < 3; c++) v0[m->ncoords + 3 * k + c] = m->omega0[3 * k + c];
  }
}

static void emit_defaults(Emitter *E) {
  FILE *o = E->out;
  const Model *m = E->m;
  int nq = E->s->nq;
  char num[64];
  fprintf(o, "void %s_default_params(double *p)\n{\n", E->P);
  if (!m->nparams) fputs("  (void)p;\n", o);
  for (int i = 0; i < m->nparams; i++) {
    format_number(E, m->params[i]->number, num, sizeof num);
    fprintf(o, "  p[%d] = %s;\n", i, num);
  }
  fputs("}\n\n", o);
  emit_derived_params(E);
  fprintf(o, "void %s_initial_state(double *x)\n{\n", E->P);
  double *q0 = calloc((size_t)nq, sizeof *q0), *v0 = calloc((size_t)E->s->nv, sizeof *v0);
  assert(q0 && v0);
  initial_state(m, q0, v0);
  for (int i = 0; i < nq; i++) {
    format_number(E, q0[i], num, sizeof num);
    fprintf(o, "  x[%d] = %s;\n", i, num);
  }
  for (int i = 0; i < E->s->nv; i++) {
    format_number(E, v0[i], num, sizeof num);
    fprintf(o, "  x[%d] = %s;\n", nq + i, num);
  }
  free(q0);
  free(v0);
  fputs("}\n\n", o);
}

static void emit_descriptor(Emitter *E) {
  FILE *o = E->out;
  const Model *m = E->m;
  const EomSystem *s = E->s;
  const char *P = E->P;
  double *q0 = calloc((size_t)s->nq, sizeof *q0), *qd0 = calloc((size_t)s->nv, sizeof *qd0);
  double *pd = calloc((size_t)s->np + 1, sizeof *pd);
  assert(q0 && qd0 && pd);
  initial_state(m, q0, qd0);
  for (int i = 0; i < s->np; i++) pd[i] = m->params[i]->number;
  fprintf(o, "#ifndef EOM_NO_DESCRIPTOR\n#include <eom/model.h>\n\n");
  emit_coord_tables(E);
  emit_string_table(E, "param_names", m->params, m->nparams, 0);
  emit_string_table(E, "param_units", m->params, m->nparams, 1);
  emit_string_table(E, "param_descs", m->params, m->nparams, 2);
  emit_double_table(E, "param_defaults", pd, s->np);
  emit_string_table(E, "input_names", m->inputs, m->ninputs, 0);
  emit_string_table(E, "input_units", m->inputs, m->ninputs, 1);
  emit_output_names(E);
  emit_switch_names(E);
  emit_double_table(E, "q0", q0, s->nq);
  emit_double_table(E, "qd0", qd0, s->nv);
  emit_attitude_tables(o, m, P);
  emit_control_tables(o, s, P);
  emit_kinematics_tables(o, m, s, P);
  fprintf(o, "\nconst struct eom_model %s_model = {\n", P);
  fprintf(o, "  EOM_MODEL_ABI,\n  ");
  put_c_string(o, P);
  fprintf(o, ",\n  \"%s\",\n", E->hash);
  fprintf(o, "  %d, %d, %d, %d, %d,\n", s->nq, s->nu, s->np, s->ny, s->nc);
#define TABLE(name, n) fprintf(o, (n) ? "  %s_" name ",\n" : "  0,\n", P)
  TABLE("coord_names", s->nq);
  TABLE("coord_units", s->nq);
  TABLE("coord_descs", s->nq);
  TABLE("param_names", m->nparams);
  TABLE("param_units", m->nparams);
  TABLE("param_descs", m->nparams);
  TABLE("param_defaults", s->np);
  TABLE("input_names", m->ninputs);
  TABLE("input_units", m->ninputs);
  TABLE("output_names", m->ny);
  fprintf(o, "  %s_q0, %s_qd0,\n", P, P);
#undef TABLE
  fprintf(o, "  %s_mass, %s_forcing, %s_accel, %s_rhs, %s_jacobian, %s_inverse, %s_energy, %s_outputs,\n",
          P, P, P, P, P, P, P, P);
  if (s->nc)
    fprintf(o, "  %s_constraint, %s_constraint_jacobian, %s_accel_constrained,\n", P, P, P);
  else if (s->nvc)
    fprintf(o, "  0, 0, %s_accel_constrained,\n", P);
  else
    fprintf(o, "  0, 0, 0,\n");
  emit_control_fields(o, s, P);
  fprintf(o, "  %s_derived_params,\n", P);
  if (s->nc) fprintf(o, "  %s_constraint_at,\n", P);
  else fputs("  0,\n", o);
  emit_kinematics_fields(o, s, P);
  if (s->nvc) fprintf(o, "  %d, %s_velocity_constraint,\n", s->nvc, P);
  else fputs("  0, 0,\n", o);
  if (s->nc) fprintf(o, "  %s_constraint_gamma,\n", P);
  else fputs("  0,\n", o);
  if (s->ns) fprintf(o, "  %d, %s_switches, %s_switch_names,\n", s->ns, P, P);
  else fputs("  0, 0, 0,\n", o);
  emit_attitude_fields(o, m, P);
  fprintf(o, "};\n#endif\n");
  free(q0);
  free(qd0);
  free(pd);
}

static void emit_source(Emitter *E) {
  FILE *o = E->out;
  emit_banner(E, "source");
  fprintf(o, "#include <math.h>\n#include \"%s.h\"\n\n", E->P);
  emit_ldl_factor(E);
  emit_ldl_solve(E);
  emit_mass(E);
  emit_forcing(E);
  emit_accel(E);
  if (E->m->nattitudes) emit_attitude_functions(E->out, E->m, E->P);
  emit_rhs(E);
  emit_jacobian(E);
  emit_inverse(E);
  emit_energy(E);
  emit_outputs(E);
  if (E->s->ns) emit_switches(E);
  if (E->s->nc) {
    emit_constraint(E);
    emit_constraint_jacobian(E);
    emit_constraint_at(E);
  }
  if (E->s->nvc) emit_velocity_constraint(E);
  if (E->s->nc + E->s->nvc) emit_accel_constrained(E);
  if (E->s->nc) emit_constraint_gamma(E);
  PlainFunction fns[EMIT_CONTROL_MAX_FUNCTIONS];
  int nfns = emit_control_functions(E->s, fns);
  for (int k = 0; k < nfns; k++)
    emit_plain_function(E, fns[k].fname, fns[k].args, fns[k].out, fns[k].roots, fns[k].n);
  KinematicFunction *kfns = NULL;
  int nk = emit_kinematics_functions(E->m, E->s, &kfns);
  for (int k = 0; k < nk; k++)
    emit_function_outs(E, kfns[k].fname, kfns[k].args, kfns[k].outs, kfns[k].nouts);
  emit_kinematics_free(kfns, nk);
  emit_defaults(E);
  emit_descriptor(E);
}

/* ------------------------------------------------------------------ entry points */

static int is_c_identifier(const char *s) {
  if (!s || !(isalpha((unsigned char)*s) || *s == '_')) return 0;
  for (; *s; s++)
    if (!(isalnum((unsigned char)*s) || *s == '_')) return 0;
  return 1;
}

static int emit_both(const Model *m, const EomSystem *s, const EmitOptions *o, FILE *h_out,
                     FILE *c_out, char *err, size_t errlen) {
  Emitter E;
  assert(m && s && o);
  int nn = s->g.nnodes;
  memset(&E, 0, sizeof E);
  E.m = m;
  E.s = s;
  E.g = &s->g;
  E.P = o->prefix ? o->prefix : m->name;
  E.hash = o->model_hash && o->model_hash[0] ? o->model_hash : "none";
  E.no_cse = o->no_cse;
  if (!is_c_identifier(E.P)) {
    snprintf(err, errlen, "the prefix '%s' is not a C identifier", E.P ? E.P : "");
    return -1;
  }
  for (const char *h = E.hash; *h; h++)
    if (!isalnum((unsigned char)*h)) {
      snprintf(err, errlen, "the model hash must be alphanumeric");
      return -1;
    }
  if (s->nq < 1) {
    snprintf(err, errlen, "the model has no generalized coordinates");
    return -1;
  }
  assert(s->np == m->nparams && s->nu == m->ninputs && s->ny == m->ny);
  assert(s->nq == m->ncoords + 4 * m->nattitudes && s->nv == m->ncoords + 3 * m->nattitudes);
  E.uses = calloc((size_t)nn + 1, sizeof *E.uses);
  E.tempno = calloc((size_t)nn + 1, sizeof *E.tempno);
  E.size = calloc((size_t)nn + 1, sizeof *E.size);
  E.slot = calloc((size_t)s->nv * (size_t)s->nv, sizeof *E.slot);
  if (!E.uses || !E.tempno || !E.size || !E.slot) {
    fputs("eomc: out of memory\n", stderr);
    abort();
  }
  ldl_pattern(&E);
  E.out = h_out;
  emit_header(&E);
  E.out = c_out;
  emit_source(&E);
  free(E.uses);
  free(E.tempno);
  free(E.size);
  free(E.slot);
  free(E.roots);
  if (E.failed) {
    snprintf(err, errlen, "%s", E.err);
    return -1;
  }
  if (ferror(h_out) || ferror(c_out)) {
    snprintf(err, errlen, "cannot write the generated code");
    return -1;
  }
  return 0;
}

int emit_c(const Model *m, const EomSystem *s, const EmitOptions *o, FILE *h_out, FILE *c_out) {
  char err[256];
  return emit_both(m, s, o, h_out, c_out, err, sizeof err);
}

int emit_c_to_dir(const Model *m, const EomSystem *s, const EmitOptions *o, const char *dir,
                  char *err, size_t errlen) {
  return emit_c_files(m, s, o, dir, NULL, err, errlen);
}

int emit_c_files(const Model *m, const EomSystem *s, const EmitOptions *o, const char *dir,
                 int *replaced, char *err, size_t errlen) {
  char *hbuf = NULL, *cbuf = NULL;
  size_t hlen = 0, clen = 0;
  FsStaged hs = {0}, cs = {0};
  int rc = -1;
  const char *P = o->prefix ? o->prefix : m->name;
  char hname[512], cname[512];
  if (fs_check_dir(dir, err, errlen) != 0) return -1;
  if (P && strlen(P) > 200) {
    snprintf(err, errlen, "the model name is %zu characters long: too long for the file names %.20s....h/.c "
             "(at most 200; use --prefix)", strlen(P), P);
    return -1;
  }
  if (!is_c_identifier(P)) {
    snprintf(err, errlen, "the prefix '%s' is not a C identifier", P ? P : "");
    return -1;
  }
  snprintf(hname, sizeof hname, "%s.h", P);
  snprintf(cname, sizeof cname, "%s.c", P);
  FILE *hf = open_memstream(&hbuf, &hlen), *cf = open_memstream(&cbuf, &clen);
  if (!hf || !cf) {
    snprintf(err, errlen, "out of memory");
    if (hf) fclose(hf);
    if (cf) fclose(cf);
    free(hbuf);
    free(cbuf);
    return -1;
  }
  int bad = emit_both(m, s, o, hf, cf, err, errlen);
  fclose(hf);
  fclose(cf);
  if (bad) goto done;
  /* Stage both, then rename both: never a new header beside an old source. */
  if (fs_stage(&hs, dir, hname, hbuf, hlen, err, errlen) != 0) goto done;
  if (fs_stage(&cs, dir, cname, cbuf, clen, err, errlen) != 0) goto done;
  int h_changed = 0, c_changed = 0;
  if (fs_commit(&hs, &h_changed, err, errlen) != 0 || fs_commit(&cs, &c_changed, err, errlen) != 0)
    goto done;
  if (replaced) *replaced = (h_changed ? EMIT_WROTE_HEADER : 0) | (c_changed ? EMIT_WROTE_SOURCE : 0);
  rc = 0;
done:
  fs_discard(&hs);
  fs_discard(&cs);
  free(hbuf);
  free(cbuf);
  return rc;
}
