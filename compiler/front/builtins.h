/*
** builtins.h — the one table of the model language's built-in functions.
**
** Every stage that knows a built-in reads it from here (X-macro style): the
** checker (arity, shape, unit rule, constant folding), the symbolic core
** (which GiNaC function it becomes; its derivative is a switch over these
** ids, so a new entry without one is a compiler warning), the IR (IrFn is
** this list), the C emitter (C form) and `eomc show` (names).
**
** Scalar functions take and give scalars:
**   X(ID, NAME, ARITY, UNIT_RULE, C_FORM, TEX, VALUE)
** ID      IrFn is IRF_##ID and BuiltinFn BF_##ID; the order is part of the
**         IR's node order and so of the generated C: append, never reorder.
** C_FORM  the generated C, %0..%2 standing for the arguments.  An argument
**         that fills a whole call slot ("(%0)", "(%0, ", ", %1)") is written
**         without parentheses, anywhere else as an atom; a form that names
**         an argument twice gets that argument as a temporary.
** TEX     the LaTeX name for `eomc show --latex` ("" for abs: bars).
** VALUE   its value at a[0..2], as the generated C computes it.
**
** Branch functions (sign, step, min, max, clamp, and abs) are non-smooth:
** their derivative is the one of the active branch and each has switching
** functions (docs/language.md).
**
** Shaped functions (vectors, rotations, transforms) have their shape and
** unit rules in check.c and units.c, and their construction in symbolic_eval.cc:
**   X(ID, NAME, ARITY)      ARITY -1: one or more arguments.
*/
#ifndef EOMC_BUILTINS_H
#define EOMC_BUILTINS_H

#include <math.h>

/* How a scalar function's unit follows from its arguments' units. */
typedef enum UnitRule {
  UR_DIMLESS,     /* argument dimensionless (angles in rad are), result too */
  UR_AGREE_RATIO, /* arguments agree with each other, result dimensionless (atan2) */
  UR_ROOT,        /* result is the square root of the argument's unit */
  UR_KEEP,        /* result in the argument's unit (abs) */
  UR_AGREE_KEEP,  /* arguments agree with each other, result in their unit */
  UR_ANY_DIMLESS  /* argument in any unit, result dimensionless (sign, step) */
} UnitRule;

#define EOM_SCALAR_BUILTINS(X)                                                                    \
  X(SIN, "sin", 1, UR_DIMLESS, "sin(%0)", "\\sin", sin(a[0]))                                      \
  X(COS, "cos", 1, UR_DIMLESS, "cos(%0)", "\\cos", cos(a[0]))                                      \
  X(TAN, "tan", 1, UR_DIMLESS, "tan(%0)", "\\tan", tan(a[0]))                                      \
  X(ASIN, "asin", 1, UR_DIMLESS, "asin(%0)", "\\arcsin", asin(a[0]))                               \
  X(ACOS, "acos", 1, UR_DIMLESS, "acos(%0)", "\\arccos", acos(a[0]))                               \
  X(ATAN, "atan", 1, UR_DIMLESS, "atan(%0)", "\\arctan", atan(a[0]))                               \
  X(ATAN2, "atan2", 2, UR_AGREE_RATIO, "atan2(%0, %1)", "\\operatorname{atan2}", atan2(a[0], a[1])) \
  X(EXP, "exp", 1, UR_DIMLESS, "exp(%0)", "\\exp", exp(a[0]))                                      \
  X(LOG, "log", 1, UR_DIMLESS, "log(%0)", "\\log", log(a[0]))                                      \
  X(SQRT, "sqrt", 1, UR_ROOT, "sqrt(%0)", "\\sqrt", sqrt(a[0]))                                    \
  X(ABS, "abs", 1, UR_KEEP, "fabs(%0)", "", fabs(a[0]))                                            \
  X(SINH, "sinh", 1, UR_DIMLESS, "sinh(%0)", "\\sinh", sinh(a[0]))                                 \
  X(COSH, "cosh", 1, UR_DIMLESS, "cosh(%0)", "\\cosh", cosh(a[0]))                                 \
  X(TANH, "tanh", 1, UR_DIMLESS, "tanh(%0)", "\\tanh", tanh(a[0]))                                 \
  X(SIGN, "sign", 1, UR_ANY_DIMLESS, "(double)((%0 > 0.0) - (%0 < 0.0))", "\\operatorname{sgn}",  \
    (double)((a[0] > 0) - (a[0] < 0)))                                                             \
  X(MIN, "min", 2, UR_AGREE_KEEP, "fmin(%0, %1)", "\\min", (a[0] <= a[1] ? a[0] : a[1]))           \
  X(MAX, "max", 2, UR_AGREE_KEEP, "fmax(%0, %1)", "\\max", (a[0] >= a[1] ? a[0] : a[1]))           \
  X(STEP, "step", 1, UR_ANY_DIMLESS, "(double)(%0 > 0.0)", "\\operatorname{step}",                \
    (double)(a[0] > 0))                                                                            \
  X(CLAMP, "clamp", 3, UR_AGREE_KEEP, "fmin(fmax(%0, %1), %2)", "\\operatorname{clamp}",          \
    (a[0] >= a[1] ? (a[0] <= a[2] ? a[0] : a[2]) : (a[1] <= a[2] ? a[1] : a[2])))

#define EOM_SHAPED_BUILTINS(X)                                                                    \
  X(DOT, "dot", 2) X(CROSS, "cross", 2) X(NORM, "norm", 1) X(TRANSPOSE, "transpose", 1)           \
  X(DIAG, "diag", -1) X(ROTX, "rotx", 1) X(ROTY, "roty", 1) X(ROTZ, "rotz", 1) X(DH, "dh", 4)     \
  X(POS, "pos", 1) X(ROT, "rot", 1)

typedef enum BuiltinFn {
#define BUILTIN_ID(ID, NAME, ARITY, UNIT, CFORM, TEX, VALUE) BF_##ID,
  EOM_SCALAR_BUILTINS(BUILTIN_ID)
#undef BUILTIN_ID
  BF_NSCALAR  /* number of scalar built-ins */
} BuiltinFn;

typedef struct ScalarBuiltin {
  const char *name;
  int arity;
  UnitRule unit;
  const char *c_form;
  const char *tex;
} ScalarBuiltin;

#ifdef __cplusplus
extern "C" {
#endif

/* The scalar built-ins by BuiltinFn (defined in builtins.c). */
extern const ScalarBuiltin scalar_builtins[BF_NSCALAR];

/* BuiltinFn of a scalar built-in's name, -1 when it is not one. */
int builtin_scalar(const char *name);

/* Arity of any built-in (-1: one or more arguments), -2 when `name` is none. */
int builtin_arity(const char *name);

#ifdef __cplusplus
}
#endif

/* Value of scalar built-in `f` at a[0..arity-1], as the generated C computes
** it (min/max/clamp written as branches: the same values as fmin/fmax on
** numbers, and no C99-only library call in C++ callers). */
static inline double builtin_value(int f, const double *a) {
  switch (f) {
#define BUILTIN_VALUE(ID, NAME, ARITY, UNIT, CFORM, TEX, VALUE) \
  case BF_##ID: return VALUE;
    EOM_SCALAR_BUILTINS(BUILTIN_VALUE)
#undef BUILTIN_VALUE
  default: break;
  }
  return NAN;
}

#endif
