/*
** ir.c — small helpers on the expression DAG shared by the core and the emitter.
*/
#include "ir.h"

#include <assert.h>

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
