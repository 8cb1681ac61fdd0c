/*
** ir.c — small helpers on the expression DAG shared by the core and the emitter.
*/
#include "sym/ir.h"

#include <assert.h>
#include <math.h>

const char *ir_fn_name(IrFn fn) {
  switch (fn) {
    case IRF_SIN: return "sin";
    case IRF_COS: return "cos";
    case IRF_TAN: return "tan";
    case IRF_ASIN: return "asin";
    case IRF_ACOS: return "acos";
    case IRF_ATAN: return "atan";
    case IRF_ATAN2: return "atan2";
    case IRF_EXP: return "exp";
    case IRF_LOG: return "log";
    case IRF_SQRT: return "sqrt";
    case IRF_ABS: return "fabs";
    case IRF_SINH: return "sinh";
    case IRF_COSH: return "cosh";
    case IRF_TANH: return "tanh";
    case IRF_SIGN: return "sign";  /* no libm function: the emitter writes (x > 0) - (x < 0) */
  }
  assert(0 && "unknown IrFn");
  return "?";
}

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
  assert(0 && "unknown IrFn");
  return NAN;
}

void ir_eval(const IrGraph *g, int hi, const double *const vars[6], double *v) {
  assert(hi < g->nnodes);
  for (int n = 0; n <= hi; n++) {
    const IrNode *x = &g->nodes[n];
    double a[2] = {0, 0}, r = NAN;
    switch (x->op) {
    case IR_NUM: r = x->num; break;
    case IR_VAR: r = vars[x->var][x->var == IRV_T ? 0 : x->index]; break;
    case IR_ADD: r = 0; for (int i = 0; i < x->nargs; i++) r += v[x->args[i]]; break;
    case IR_MUL: r = 1; for (int i = 0; i < x->nargs; i++) r *= v[x->args[i]]; break;
    case IR_NEG: r = -v[x->args[0]]; break;
    case IR_DIV: r = v[x->args[0]] / v[x->args[1]]; break;
    case IR_POW: r = pow(v[x->args[0]], v[x->args[1]]); break;
    case IR_CALL:
      assert(x->nargs <= 2);
      for (int i = 0; i < x->nargs; i++) a[i] = v[x->args[i]];
      r = call_value(x->fn, a);
      break;
    }
    v[n] = r;
  }
}
