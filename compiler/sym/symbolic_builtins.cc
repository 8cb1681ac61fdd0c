/*
** symbolic_builtins.cc — the GiNaC side of the built-in scalar functions
** (front/builtins.h): which GiNaC expression each one becomes, which
** built-in a GiNaC function is, and each one's derivative.
**
** min, max, step and clamp are our own GiNaC functions (GiNaC's step() is
** 1 at 0, ours is 0 there as the language says); sign is GiNaC's csgn.
** Their derivatives are those of the active branch: sign' = step' = 0,
** min(a, b)' = a' where a <= b else b', and so on.  A branch function stays
** unevaluated until all its arguments are numbers.
*/
#include "sym/symbolic_internal.h"  /* first: wraps the C headers in extern "C" */

#include <cassert>
#include <cstring>

using namespace GiNaC;

namespace eomsym {

/* True when every argument is a real number; their doubles in v. */
static bool real_numbers(const exvector &args, double *v) {
  for (size_t i = 0; i < args.size(); i++) {
    if (!is_a<numeric>(args[i]) || !ex_to<numeric>(args[i]).is_real()) return false;
    v[i] = ex_to<numeric>(args[i]).to_double();
  }
  return true;
}

/* The value of a branch function at real numbers (into *r), exact when the
** arguments are rational (min of 1/3 and 1/2 stays 1/3); false when an
** argument is not a number. */
static bool branch_value(BuiltinFn f, const exvector &args, ex *r) {
  double v[3];
  if (!real_numbers(args, v)) return false;
  if (f == BF_STEP) {
    *r = ex_to<numeric>(args[0]).is_positive() ? 1 : 0;
    return true;
  }
  /* min, max and clamp pick one of their arguments */
  double x = builtin_value(f, v);
  *r = x;
  for (const ex &a : args)
    if (ex_to<numeric>(a).to_double() == x) *r = a;
  return true;
}

static ex min_eval(const ex &a, const ex &b) {
  if (a.is_equal(b)) return a;
  ex r;
  return branch_value(BF_MIN, {a, b}, &r) ? r : eom_min(a, b).hold();
}
static ex max_eval(const ex &a, const ex &b) {
  if (a.is_equal(b)) return a;
  ex r;
  return branch_value(BF_MAX, {a, b}, &r) ? r : eom_max(a, b).hold();
}
static ex step_eval(const ex &a) {
  ex r;
  return branch_value(BF_STEP, {a}, &r) ? r : eom_step(a).hold();
}
static ex clamp_eval(const ex &x, const ex &lo, const ex &hi) {
  ex r;
  return branch_value(BF_CLAMP, {x, lo, hi}, &r) ? r : eom_clamp(x, lo, hi).hold();
}
static ex min_evalf(const ex &a, const ex &b) { return min_eval(a.evalf(), b.evalf()); }
static ex max_evalf(const ex &a, const ex &b) { return max_eval(a.evalf(), b.evalf()); }
static ex step_evalf(const ex &a) { return step_eval(a.evalf()); }
static ex clamp_evalf(const ex &x, const ex &lo, const ex &hi) {
  return clamp_eval(x.evalf(), lo.evalf(), hi.evalf());
}

/* Partial derivatives for GiNaC's own diff(); the core's Deriver uses
** builtin_derivative below, which agrees. */
static ex min_deriv(const ex &a, const ex &b, unsigned i) {
  return i == 0 ? 1 - eom_step(a - b) : eom_step(a - b);
}
static ex max_deriv(const ex &a, const ex &b, unsigned i) {
  return i == 0 ? 1 - eom_step(b - a) : eom_step(b - a);
}
static ex step_deriv(const ex &, unsigned) { return 0; }
static ex clamp_deriv(const ex &x, const ex &lo, const ex &hi, unsigned i) {
  if (i == 1) return eom_step(lo - x);
  if (i == 2) return eom_step(x - hi);
  return 1 - eom_step(lo - x) - eom_step(x - hi);
}

REGISTER_FUNCTION(eom_min, eval_func(min_eval).evalf_func(min_evalf).derivative_func(min_deriv))
REGISTER_FUNCTION(eom_max, eval_func(max_eval).evalf_func(max_evalf).derivative_func(max_deriv))
REGISTER_FUNCTION(eom_step, eval_func(step_eval).evalf_func(step_evalf).derivative_func(step_deriv))
REGISTER_FUNCTION(eom_clamp,
                  eval_func(clamp_eval).evalf_func(clamp_evalf).derivative_func(clamp_deriv))

ex make_builtin(BuiltinFn f, const exvector &a) {
  assert((int)a.size() == scalar_builtins[f].arity);
  switch (f) {
  case BF_SIN: return sin(a[0]);
  case BF_COS: return cos(a[0]);
  case BF_TAN: return tan(a[0]);
  case BF_ASIN: return asin(a[0]);
  case BF_ACOS: return acos(a[0]);
  case BF_ATAN: return atan(a[0]);
  case BF_ATAN2: return atan2(a[0], a[1]);
  case BF_EXP: return exp(a[0]);
  case BF_LOG: return log(a[0]);
  case BF_SQRT: return sqrt(a[0]);
  case BF_ABS: return abs(a[0]);
  case BF_SINH: return sinh(a[0]);
  case BF_COSH: return cosh(a[0]);
  case BF_TANH: return tanh(a[0]);
  case BF_SIGN: return csgn(a[0]);
  case BF_MIN: return eom_min(a[0], a[1]);
  case BF_MAX: return eom_max(a[0], a[1]);
  case BF_STEP: return eom_step(a[0]);
  case BF_CLAMP: return eom_clamp(a[0], a[1], a[2]);
  case BF_NSCALAR: break;
  }
  assert(!"unknown built-in");
  return 0;
}

/* GiNaC's names of the built-ins that are GiNaC functions (sqrt is a power). */
static const char *ginac_name(BuiltinFn f) {
  switch (f) {
  case BF_SQRT: return nullptr;
  case BF_SIGN: return "csgn";
  case BF_MIN: return "eom_min";
  case BF_MAX: return "eom_max";
  case BF_STEP: return "eom_step";
  case BF_CLAMP: return "eom_clamp";
  default: return scalar_builtins[f].name;
  }
}

int ginac_builtin(const std::string &name) {
  for (int f = 0; f < BF_NSCALAR; f++) {
    const char *g = ginac_name((BuiltinFn)f);
    if (g && name == g) return f;
  }
  return -1;
}

ex builtin_derivative(BuiltinFn f, const ex &e, const exvector &a, const exvector &d) {
  switch (f) {
  case BF_ATAN2: {
    const ex &y = a[0], &x = a[1];
    return (x * d[0] - y * d[1]) / (pow(x, 2) + pow(y, 2));
  }
  case BF_SIN: return cos(a[0]) * d[0];
  case BF_COS: return -sin(a[0]) * d[0];
  case BF_TAN: return (1 + pow(e, 2)) * d[0];
  case BF_ASIN: return d[0] / sqrt(1 - pow(a[0], 2));
  case BF_ACOS: return -d[0] / sqrt(1 - pow(a[0], 2));
  case BF_ATAN: return d[0] / (1 + pow(a[0], 2));
  case BF_EXP: return e * d[0];
  case BF_LOG: return d[0] / a[0];
  case BF_SQRT: return d[0] / (2 * e);
  case BF_ABS: return csgn(a[0]) * d[0];
  case BF_SINH: return cosh(a[0]) * d[0];
  case BF_COSH: return sinh(a[0]) * d[0];
  case BF_TANH: return (1 - pow(e, 2)) * d[0];
  case BF_SIGN: case BF_STEP: return 0;
  /* the active branch; at a tie the one the value takes (a for min and max) */
  case BF_MIN: return d[0] + eom_step(a[0] - a[1]) * (d[1] - d[0]);
  case BF_MAX: return d[0] + eom_step(a[1] - a[0]) * (d[1] - d[0]);
  case BF_CLAMP:
    return d[0] + eom_step(a[1] - a[0]) * (d[1] - d[0]) + eom_step(a[0] - a[2]) * (d[2] - d[0]);
  case BF_NSCALAR: break;
  }
  assert(!"unknown built-in");
  return 0;
}

}  // namespace eomsym
