/*
** ir.c — small helpers on the expression DAG shared by the core and the emitter.
*/
#include "sym/ir.h"

#include <assert.h>
#include <math.h>

const char *ir_fn_name(IrFn fn) {
  assert((int)fn >= 0 && (int)fn < BF_NSCALAR);
  return scalar_builtins[fn].name;
}

void ir_eval(const IrGraph *g, int hi, const double *const vars[6], double *v) {
  assert(hi < g->nnodes);
  for (int n = 0; n <= hi; n++) {
    const IrNode *x = &g->nodes[n];
    double a[3] = {0, 0, 0}, r = NAN;
    switch (x->op) {
    case IR_NUM: r = x->num; break;
    case IR_VAR: r = vars[x->var][x->var == IRV_T ? 0 : x->index]; break;
    case IR_ADD: r = 0; for (int i = 0; i < x->nargs; i++) r += v[x->args[i]]; break;
    case IR_MUL: r = 1; for (int i = 0; i < x->nargs; i++) r *= v[x->args[i]]; break;
    case IR_NEG: r = -v[x->args[0]]; break;
    case IR_DIV: r = v[x->args[0]] / v[x->args[1]]; break;
    case IR_POW: r = pow(v[x->args[0]], v[x->args[1]]); break;
    case IR_CALL:
      assert(x->nargs <= 3);
      for (int i = 0; i < x->nargs; i++) a[i] = v[x->args[i]];
      r = builtin_value(x->fn, a);
      break;
    }
    v[n] = r;
  }
}
