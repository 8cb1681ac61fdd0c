/*
** emit_parts.c — split a generated function too big for a compiler into
** static helpers of bounded size.
**
** Optimizing compilers take time that grows faster than linearly with the
** length of one straight-line body (register allocation and scheduling
** over thousands of live values): a 24-axis arm's Jacobian as one body
** took gcc -O2 minutes.  A split function computes its temporaries in
** helpers P_fname_part1, P_fname_part2, ... of about PART_NODES printed
** nodes each, called in order from the body, which then writes its outputs
** as before.  A temporary read only inside the helper that defines it
** stays a local there; one read later (by a later helper or by the body)
** lives in a slot of the body's array w[], and a slot is given again to a
** later temporary once the helpers that read it are done, so w[] stays
** near the number of values live across helpers.  Values and the order of
** operations do not change: only where the temporaries are stored.
**
** Small functions are left whole (byte-identical to the unsplit form), and
** so is everything under --no-cse, whose inlined expressions would be
** printed once per use anyway, and under --no-split.
*/
#include "emit/emit_internal.h"
#include "front/xalloc.h"

#include <assert.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* A function whose temporaries print to more nodes than this is split. */
#define SPLIT_MIN_NODES 4000
/* About this many printed nodes go into one helper. */
#define PART_NODES 2000

/* Where each node is printed: -1 nowhere yet, 0..nparts-1 in a helper,
** nparts in the body.  A temporary is printed where it is defined; any
** other node inline in its single user (CSE makes every non-leaf node
** with two uses a temporary), and a root in the body. */
static void find_readers(Emitter *E, int hi, int *where) {
  const IrGraph *g = E->g;
  int body = E->nparts;
  for (int n = 0; n <= hi; n++) where[n] = -1;
  for (int i = 0; i < E->nroots; i++) {
    int r = E->roots[i];
    if (E->tempno[r] >= 0) E->last_part[r] = body;
    else where[r] = body;
  }
  for (int n = hi; n >= 0; n--) {
    const IrNode *x = &g->nodes[n];
    if (!E->uses[n] || x->op == IR_NUM) continue;
    if (x->op == IR_VAR) {   /* a root promoted to a temporary: read where defined */
      if (E->tempno[n] >= 0) E->part_vars[E->part[n]] |= VAR_BIT(x->var);
      continue;
    }
    int at = E->tempno[n] >= 0 ? E->part[n] : where[n];
    assert(at >= 0 && at <= body);
    for (int a = 0; a < x->nargs; a++) {
      int arg = x->args[a];
      const IrNode *y = &g->nodes[arg];
      if (E->tempno[arg] >= 0) {
        if (at > E->last_part[arg]) E->last_part[arg] = at;
      } else if (y->op == IR_VAR) {
        if (at < body) E->part_vars[at] |= VAR_BIT(y->var);
      } else if (y->op != IR_NUM) {
        assert(where[arg] < 0 || where[arg] == at);
        where[arg] = at;
      }
    }
  }
}

/* Slots of w[]: a temporary read after its own helper takes the lowest
** free slot; slots of temporaries whose last reader has run are freed
** before each helper. */
static void assign_slots(Emitter *E, int hi) {
  int *free_at = xcalloc((size_t)E->ntemps + 1, sizeof *free_at);  /* by slot: free from this part on */
  E->nwslots = 0;
  for (int n = 0; n <= hi; n++) {
    if (!E->uses[n] || E->tempno[n] < 0) continue;
    int p = E->part[n];
    assert(E->last_part[n] >= p);
    if (E->last_part[n] == p) continue;   /* a local of its helper */
    int s = 0;
    while (s < E->nwslots && free_at[s] > p) s++;
    if (s == E->nwslots) E->nwslots++;
    /* Read by the body: never freed.  Else free after the last reader. */
    free_at[s] = E->last_part[n] >= E->nparts ? E->nparts + 1 : E->last_part[n] + 1;
    E->wslot[n] = s;
  }
  free(free_at);
}

void parts_plan(Emitter *E) {
  int hi = -1;
  long total = 0;
  for (int i = 0; i < E->nroots; i++) hi = E->roots[i] > hi ? E->roots[i] : hi;
  for (int n = 0; n <= hi; n++) E->wslot[n] = -1;
  E->nparts = 0;
  if (E->no_cse || E->no_split) return;
  for (int n = 0; n <= hi; n++)
    if (E->uses[n] && E->tempno[n] >= 0) total += E->size[n];
  if (total <= SPLIT_MIN_NODES) return;
  /* Every root a temporary too: the body then only stores values the
  ** helpers computed (a constant root stays a constant). */
  for (int i = 0; i < E->nroots; i++) {
    int r = E->roots[i];
    if (E->tempno[r] < 0 && E->g->nodes[r].op != IR_NUM) E->tempno[r] = 0;
  }
  E->ntemps = 0;
  for (int n = 0; n <= hi; n++)
    if (E->uses[n] && E->tempno[n] >= 0) E->tempno[n] = E->ntemps++;
  /* Cut the temporaries, in their order, into parts of about PART_NODES. */
  long filled = 0;
  for (int n = 0; n <= hi; n++) {
    if (!E->uses[n] || E->tempno[n] < 0) continue;
    if (filled >= PART_NODES) {
      E->nparts++;
      filled = 0;
    }
    E->part[n] = E->nparts;
    E->last_part[n] = E->nparts;
    filled += E->size[n];
  }
  E->nparts++;
  free(E->part_vars);
  E->part_vars = xcalloc((size_t)E->nparts, sizeof *E->part_vars);
  int *where = xcalloc((size_t)hi + 1, sizeof *where);
  find_readers(E, hi, where);
  free(where);
  assign_slots(E, hi);
}

/* The arguments of helper k: the variables it reads, then w. */
static void put_part_args(Emitter *E, int k, int decl) {
  static const char *const decls[] = {"double t", "const double *q", "const double *qd",
                                      "const double *qdd", "const double *u", "const double *p"};
  static const char *const names[] = {"t", "q", "qd", "qdd", "u", "p"};
  for (int v = IRV_T; v <= IRV_P; v++)
    if (E->part_vars[k] & VAR_BIT(v)) fprintf(E->out, "%s, ", decl ? decls[v] : names[v]);
  fputs(decl ? "double *w" : "w", E->out);
}

void emit_parts(Emitter *E, const char *fname) {
  const IrGraph *g = E->g;
  E->part_fname = fname;
  if (!E->nparts || E->write_nan) return;
  int n = 0;
  for (int k = 0; k < E->nparts; k++) {
    fprintf(E->out, "/* %s_%s, part %d of %d: temporaries. */\n", E->P, fname, k + 1, E->nparts);
    fprintf(E->out, "static void %s_%s_part%d(", E->P, fname, k + 1);
    put_part_args(E, k, 1);
    fputs(")\n{\n", E->out);
    for (; n < g->nnodes; n++) {
      if (!E->uses[n] || E->tempno[n] < 0) continue;
      if (E->part[n] != k) break;
      Buf b = {0};
      put_definition(E, &b, n);
      if (E->wslot[n] >= 0) fprintf(E->out, "  w[%d] = %s;\n", E->wslot[n], b.s);
      else fprintf(E->out, "  const double w%d = %s;\n", E->tempno[n], b.s);
      free(b.s);
    }
    fputs("}\n\n", E->out);
  }
}

void emit_part_calls(Emitter *E) {
  assert(E->nparts && E->part_fname);
  fprintf(E->out, "  double w[%d];   /* temporaries shared between the parts */\n",
          E->nwslots ? E->nwslots : 1);
  for (int k = 0; k < E->nparts; k++) {
    fprintf(E->out, "  %s_%s_part%d(", E->P, E->part_fname, k + 1);
    put_part_args(E, k, 0);
    fputs(");\n", E->out);
  }
}
