/*
** emit_show_internal.h — what the two halves of `eomc show` share: the
** expression printer (emit_show_expr.c: names, numbers and expressions in
** plain text or LaTeX over the IrGraph) and the layout of the equations
** (emit_show.c: M q'' = f, constraints, shared subexpressions).
*/
#ifndef EOMC_EMIT_SHOW_INTERNAL_H
#define EOMC_EMIT_SHOW_INTERNAL_H

#include <stddef.h>
#include "front/check.h"
#include "sym/symbolic.h"

/* Precedences, lowest first: what an operand must reach to go unparenthesized. */
enum { PR_LOW, PR_ADD, PR_MUL, PR_UNARY, PR_POW, PR_ATOM };

/* A growing NUL-terminated string. */
typedef struct Text {
  char *s;
  size_t len, cap;
} Text;

/* What is printed and how: the model and its equations, plain text or
** LaTeX, and the names chosen for shared subexpressions. */
typedef struct Show {
  const Model *m;
  const EomSystem *s;
  const IrGraph *g;
  int latex;
  int *uses, *size, *name;   /* name: 1-based shared-subexpression number, 0 inline */
  int defining;              /* node whose definition is being printed */
} Show;

void show_put(Text *t, const char *s);
void show_putf(Text *t, const char *fmt, ...);

const IrNode *show_node(const Show *S, int n);
int show_is_zero(const Show *S, int n);
/* Does node n print as a negated magnitude (so that a sum says " - ")? */
int show_negative(const Show *S, int n);
/* Print n (its magnitude when `mag`), parenthesized below precedence minprec. */
void show_put_at(Show *S, Text *t, int n, int minprec, int mag);
/* Coordinate or velocity i, its rate (1) or acceleration (2). */
void show_put_coord(Show *S, Text *t, int i, int rate);
/* The name of velocity i (its row of M), in buf when it must be built. */
const char *show_rate_label(const Show *S, int i, char *buf, size_t len);
/* Node n in full (malloc'd), even when it is a named subexpression. */
char *show_render(Show *S, int n);

#endif
