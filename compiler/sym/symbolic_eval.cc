/*
** symbolic_eval.cc — the model's expressions as values of the derivation:
** scalars, vectors and matrices of GiNaC expressions (Val), with rotations
** and transforms built from rotx/roty/rotz/dh remembered as products of
** turns, and points and directions on them remembered as placed, so that
** bodies can be put on the frame tree (symbolic_bodies.cc).  Lets are
** evaluated once; their rates become atoms (symbolic.cc, Derivation::rate).
*/
#include "sym/symbolic_internal.h"  /* first: wraps the C headers in extern "C" */

#include <cassert>
#include <cmath>
#include <cstring>

using namespace GiNaC;

namespace eomsym {

bool last_row_is_unit(const Val &T) {
  assert(T.rows == 4 && T.cols == 4);
  return T.at(3, 0).is_zero() && T.at(3, 1).is_zero() && T.at(3, 2).is_zero() &&
         T.at(3, 3).is_equal(ex(1));
}

std::string shape_name(const Val &v) {
  if (v.scalar()) return "a scalar";
  if (v.cols == 1) return fmt("a %d-vector", v.rows);
  return fmt("a %dx%d matrix", v.rows, v.cols);
}

ex Derivation::scalar(const Expr *x, const char *what) {
  Val v = eval(x);
  if (!v.scalar())
    throw SymError{x->loc, fmt("%s must be a scalar, not %s", what, shape_name(v).c_str())};
  return v.a[0];
}

Val Derivation::eval(const Expr *x) {
  assert(x);
  switch (x->kind) {
    case EX_NUM: return Val(exact_number(x->num, x->loc));
    case EX_NAME: return eval_name(x);
    case EX_UNARY: {
      assert(x->op == OP_NEG && x->nargs == 1);
      Val v = eval(x->args[0]);
      for (ex &e : v.a) e = -e;
      v.turns.reset(), v.att = -1;
      v.placed = 0;
      return v;
    }
    case EX_BINARY: return eval_binary(x);
    case EX_RATE: return eval_rate(x);
    case EX_CALL: return eval_call(x);
    case EX_INDEX: return eval_index(x);
    case EX_LIST: return eval_list(x);
  }
  throw SymError{x->loc, "internal: unknown expression kind"};
}

Val Derivation::eval_name(const Expr *x) {
  const Decl *d = x->ref;
  if (!d) {
    if (strcmp(x->name, "t") == 0) return Val(t_);
    if (strcmp(x->name, "pi") == 0) return Val(Pi);
    throw SymError{x->loc, fmt("internal: unresolved name '%s'", x->name)};
  }
  switch (d->kind) {
    case DECL_COORD:
      assert(d->index >= 0 && d->index < ncoord_);
      return Val(q_[d->index]);
    case DECL_PARAM:
      assert(d->index >= 0 && d->index < np_);
      return Val(p_[d->index]);
    case DECL_INPUT:
      assert(d->index >= 0 && d->index < nu_);
      return Val(u_[d->index]);
    case DECL_CONST: {
      auto it = const_value_.find(d);
      if (it != const_value_.end()) return it->second;
      /* Fold the defining expression exactly (const c = 1/3 stays 1/3) when
      ** it is a constant; otherwise use the value the checker computed. */
      Val v(exact_number(d->number, d->loc));
      if (d->value) {
        Val w = eval(d->value);
        bool constant = true;
        for (const ex &e : w.a) constant = constant && is_a<numeric>(e.evalf());
        if (constant) v = w;
      }
      const_value_.emplace(d, v);
      return v;
    }
    case DECL_LET:
    case DECL_OUTPUT: return let_value(d);
    case DECL_BODY:
      throw SymError{x->loc, fmt("bodies are not supported yet ('%s')", d->name)};
    case DECL_ATTITUDE: {       /* R(q) of its quaternion */
      assert(d->index >= 0 && d->index < m_->nattitudes);
      Val R(3, 3);   /* its entries' symbols (see Derivation::att_r_) */
      for (int k = 0; k < 9; k++) R.a[k] = att_r_[d->index][k];
      R.att = d->index;
      return R;
    }
  }
  throw SymError{x->loc, "internal: unknown declaration kind"};
}

/* A let is converted once and shared by every use. */
Val Derivation::let_value(const Decl *d) {
  auto it = let_value_.find(d);
  if (it != let_value_.end()) return it->second;
  if (!d->value) throw SymError{d->loc, fmt("internal: '%s' has no value", d->name)};
  for (const Decl *s : let_stack_)
    if (s == d) throw SymError{d->loc, fmt("'%s' is defined in terms of itself", d->name)};
  let_stack_.push_back(d);
  Val v = eval(d->value);
  let_stack_.pop_back();
  let_value_.emplace(d, v);
  return v;
}

Val Derivation::eval_rate(const Expr *x) {
  assert(x->nargs == 1);
  const Expr *a = x->args[0];
  if (a->kind == EX_NAME && a->ref && a->ref->kind == DECL_COORD) return Val(qd_[a->ref->index]);
  if (a->kind == EX_NAME && a->ref && (a->ref->kind == DECL_LET || a->ref->kind == DECL_OUTPUT)) {
    auto it = let_rate_.find(a->ref);
    if (it != let_rate_.end()) return it->second;
    Val r = rate(let_value(a->ref));
    let_rate_.emplace(a->ref, r);
    return r;
  }
  return rate(eval(a));
}

Val Derivation::eval_binary(const Expr *x) {
  assert(x->nargs == 2);
  Val a = eval(x->args[0]), b = eval(x->args[1]);
  switch (x->op) {
    case OP_ADD:
    case OP_SUB: {
      if (a.rows != b.rows || a.cols != b.cols)
        throw SymError{x->loc, fmt("cannot %s %s and %s", x->op == OP_ADD ? "add" : "subtract",
                                   shape_name(a).c_str(), shape_name(b).c_str())};
      Val sum = a;
      for (int k = 0; k < a.size(); k++) sum.a[k] = x->op == OP_ADD ? a.a[k] + b.a[k] : a.a[k] - b.a[k];
      sum.turns.reset(), sum.att = -1;
      sum.placed = 0;
      if (b.placed == 2 && x->op == OP_SUB)
        for (ex &e : b.local) e = -e;  /* - R v = R (-v) */
      if (!(a.placed && b.placed == 2 && place_sum(a, b, sum)) && x->op == OP_ADD && a.placed == 2 &&
          b.placed)
        place_sum(b, a, sum);
      return sum;
    }
    case OP_MUL: {
      if (a.scalar() || b.scalar()) {
        Val &s = a.scalar() ? a : b, &v = a.scalar() ? b : a;
        ex c = s.a[0];
        for (ex &e : v.a) e = c * e;
        if (v.placed == 2) { /* c (R l) = R (c l) */
          for (ex &e : v.local) e = c * e;
          return v;
        }
        v.turns.reset(), v.att = -1;
        v.placed = 0;
        return v;
      }
      if (a.cols != b.rows)
        throw SymError{x->loc, fmt("cannot multiply %s by %s", shape_name(a).c_str(),
                                   shape_name(b).c_str())};
      Val r(a.rows, b.cols);
      for (int i = 0; i < a.rows; i++)
        for (int j = 0; j < b.cols; j++) {
          exvector terms;
          for (int k = 0; k < a.cols; k++) terms.push_back(a.at(i, k) * b.at(k, j));
          r.at(i, j) = add(terms);
        }
      bool square = a.rows == a.cols && b.rows == b.cols && a.rows == b.rows && !a.placed && !b.placed;
      if (a.att >= 0 && b.turns && square && a.rows == 3) {  /* R_att F ... times more turns */
        auto t = std::make_shared<std::vector<Turn>>();
        if (a.att_rest) *t = *a.att_rest;
        t->insert(t->end(), b.turns->begin(), b.turns->end());
        r.att = a.att;
        r.att_rest = t;
        return r;
      }
      if (a.turns && b.turns && square &&
          (a.rows == 3 || (a.rows == 4 && last_row_is_unit(a) && last_row_is_unit(b)))) {
        auto t = std::make_shared<std::vector<Turn>>(*a.turns);
        t->insert(t->end(), b.turns->begin(), b.turns->end());
        r.turns = t;
      } else if (a.turns && !a.placed && a.rows == 3 && a.cols == 3 && b.rows == 3 && b.cols == 1) {
        r.turns = a.turns;  /* a direction R v */
        r.placed = 2;
        for (int c = 0; c < 3; c++) r.local[c] = b.a[c];
      }
      return r;
    }
    case OP_DIV: {
      if (!b.scalar())
        throw SymError{x->loc, fmt("cannot divide by %s", shape_name(b).c_str())};
      if (b.a[0].is_zero()) throw SymError{x->loc, "division by zero"};
      for (ex &e : a.a) e = e / b.a[0];
      a.turns.reset(), a.att = -1;
      a.placed = 0;
      return a;
    }
    case OP_POW: {
      if (!a.scalar() || !b.scalar())
        throw SymError{x->loc, "'^' needs scalar operands"};
      if (a.a[0].is_zero() && is_a<numeric>(b.a[0]) && !ex_to<numeric>(b.a[0]).is_positive())
        throw SymError{x->loc, "zero to a non-positive power"};
      return Val(pow(a.a[0], b.a[0]));
    }
    case OP_NEG: break;
  }
  throw SymError{x->loc, "internal: bad binary operator"};
}

/* sum = P + R v, with P a point of a chain of steps (or a direction R' l
** from the origin: a chain of turns only) and R v a direction.  When P's
** turns are the first turns of R, R = R_P R_rest, the sum is a point of a
** longer chain:  T_P [l; 1] + R_P R_rest v = T_P S(l) R_rest [v; 1], with S(l)
** the shift by l.  This keeps bodies written as sums of rotated arms
** (R1*a + R1*R2*b) on the frame tree (see symbolic_chain.cc). */
bool Derivation::place_sum(const Val &P, const Val &dir, Val &sum) {
  assert(P.placed && dir.placed == 2 && P.turns && dir.turns);
  const std::vector<Turn> &steps = *P.turns, &turns = *dir.turns;
  size_t k = 0;  /* turns of P matched so far */
  for (const Turn &f : steps) {
    if (f.shift) continue;
    if (k == turns.size() || turns[k].shift || turns[k].axis != f.axis || !turns[k].angle.is_equal(f.angle))
      return false;
    k++;
  }
  if (k == turns.size()) { /* the same rotation: T [l; 1] + R v = T [l + v; 1] */
    sum.turns = P.turns;
    for (int c = 0; c < 3; c++) sum.local[c] = P.local[c] + dir.local[c];
    sum.placed = 1;
    return true;
  }
  auto chain = std::make_shared<std::vector<Turn>>(steps);
  Turn shift;
  shift.shift = true;
  for (int c = 0; c < 3; c++) shift.s[c] = P.local[c];
  if (!(shift.s[0].is_zero() && shift.s[1].is_zero() && shift.s[2].is_zero())) chain->push_back(shift);
  chain->insert(chain->end(), turns.begin() + (long)k, turns.end());
  sum.turns = chain;
  for (int c = 0; c < 3; c++) sum.local[c] = dir.local[c];
  sum.placed = 1;
  return true;
}

/* 1-based integer index from a constant expression. */
static int index_value(const ex &e, SrcLoc loc, int limit) {
  ex v = e.evalf();
  if (!is_a<numeric>(v) || !ex_to<numeric>(v).is_real())
    throw SymError{loc, "an index must be a constant integer"};
  double d = ex_to<numeric>(v).to_double();
  if (d != std::floor(d) || d < 1 || d > limit)
    throw SymError{loc, fmt("index %g is out of range 1..%d", d, limit)};
  return (int)d - 1;
}

Val Derivation::eval_index(const Expr *x) {
  assert(x->nargs == 2 || x->nargs == 3);
  Val v = eval(x->args[0]);
  if (x->nargs == 3) {
    int i = index_value(scalar(x->args[1], "an index"), x->args[1]->loc, v.rows);
    int j = index_value(scalar(x->args[2], "an index"), x->args[2]->loc, v.cols);
    return Val(v.at(i, j));
  }
  if (v.vector() && !v.scalar()) {
    int i = index_value(scalar(x->args[1], "an index"), x->args[1]->loc, v.size());
    return Val(v.a[i]);
  }
  /* A[i] of a matrix: row i, as a vector */
  int i = index_value(scalar(x->args[1], "an index"), x->args[1]->loc, v.rows);
  Val r(v.cols, 1);
  for (int j = 0; j < v.cols; j++) r.a[j] = v.at(i, j);
  return r;
}

/* [a, b, c] is a column vector; [[a, b], [c, d]] a matrix whose rows are the items. */
Val Derivation::eval_list(const Expr *x) {
  std::vector<Val> items;
  for (int i = 0; i < x->nargs; i++) items.push_back(eval(x->args[i]));
  if (items.empty()) throw SymError{x->loc, "empty list"};
  bool all_scalar = true;
  for (const Val &v : items) all_scalar = all_scalar && v.scalar();
  if (all_scalar) {
    Val r((int)items.size(), 1);
    for (size_t i = 0; i < items.size(); i++) r.a[i] = items[i].a[0];
    return r;
  }
  int n = items[0].size();
  for (size_t i = 0; i < items.size(); i++)
    if (!items[i].vector() || items[i].size() != n)
      throw SymError{x->args[i]->loc, "the rows of a matrix must be vectors of equal length"};
  Val r((int)items.size(), n);
  for (size_t i = 0; i < items.size(); i++)
    for (int j = 0; j < n; j++) r.at((int)i, j) = items[i].a[j];
  return r;
}

static Val rotation(int axis, const ex &a) {
  Val r(3, 3);
  r.turns = std::make_shared<std::vector<Turn>>(1, Turn(axis, a));
  ex c = cos(a), s = sin(a);
  int i = (axis + 1) % 3, j = (axis + 2) % 3;  /* the plane rotated */
  r.at(axis, axis) = 1;
  r.at(i, i) = c;
  r.at(i, j) = -s;
  r.at(j, i) = s;
  r.at(j, j) = c;
  return r;
}

/* A call of a built-in function.  One branch per shaped function (vector,
** rotation and transform builders), kept in one function so that the list
** reads like the table in front/builtins.h; each branch is short. */
Val Derivation::eval_call(const Expr *x) {
  const char *name = x->name;
  if (strcmp(name, "omega") == 0 && x->nargs == 1 && x->args[0]->kind == EX_NAME &&
      x->args[0]->ref && x->args[0]->ref->kind == DECL_ATTITUDE) {
    int a = x->args[0]->ref->index;
    assert(a >= 0 && a < m_->nattitudes);
    Val w(3, 1);
    for (int c = 0; c < 3; c++) w.a[c] = qd_[ncoord_ + 3 * a + c];
    return w;
  }
  std::vector<Val> args;
  for (int i = 0; i < x->nargs; i++) args.push_back(eval(x->args[i]));
  auto need = [&](int n) {
    if ((int)args.size() != n)
      throw SymError{x->loc, fmt("%s() takes %d argument%s", name, n, n == 1 ? "" : "s")};
  };
  auto sarg = [&](int i) -> ex {
    if (!args[i].scalar())
      throw SymError{x->args[i]->loc,
                     fmt("%s() needs a scalar argument, not %s", name, shape_name(args[i]).c_str())};
    return args[i].a[0];
  };
  auto varg = [&](int i, int n) -> const Val & {
    if (!args[i].vector() || (n > 0 && args[i].size() != n))
      throw SymError{x->args[i]->loc, n > 0 ? fmt("%s() needs a %d-vector", name, n)
                                            : fmt("%s() needs a vector", name)};
    return args[i];
  };
  int fn = builtin_scalar(name);
  if (fn >= 0) {
    need(scalar_builtins[fn].arity);
    exvector a;
    for (int i = 0; i < scalar_builtins[fn].arity; i++) a.push_back(sarg(i));
    if (collecting_) note_switches(x, (BuiltinFn)fn, a);
    return Val(make_builtin((BuiltinFn)fn, a));
  }
  if (strcmp(name, "dot") == 0) {
    need(2);
    const Val &a = varg(0, 0);
    const Val &b = varg(1, a.size());
    exvector terms;
    for (int k = 0; k < a.size(); k++) terms.push_back(a.a[k] * b.a[k]);
    return Val(add(terms));
  }
  if (strcmp(name, "cross") == 0) {
    need(2);
    const Val &a = varg(0, 3), &b = varg(1, 3);
    Val r(3, 1);
    for (int i = 0; i < 3; i++) {
      int j = (i + 1) % 3, k = (i + 2) % 3;
      r.a[i] = a.a[j] * b.a[k] - a.a[k] * b.a[j];
    }
    return r;
  }
  if (strcmp(name, "norm") == 0) {
    need(1);
    const Val &a = varg(0, 0);
    exvector terms;
    for (const ex &e : a.a) terms.push_back(pow(e, 2));
    return Val(sqrt(add(terms)));
  }
  if (strcmp(name, "transpose") == 0) {
    need(1);
    const Val &a = args[0];
    Val r(a.cols, a.rows);
    for (int i = 0; i < a.rows; i++)
      for (int j = 0; j < a.cols; j++) r.at(j, i) = a.at(i, j);
    if (a.turns && !a.placed && a.rows == 3 && a.cols == 3) { /* the inverse rotation */
      auto t = std::make_shared<std::vector<Turn>>();
      for (auto it = a.turns->rbegin(); it != a.turns->rend(); ++it) t->push_back(Turn(it->axis, -it->angle));
      r.turns = t;
    }
    return r;
  }
  if (strcmp(name, "diag") == 0) {
    std::vector<ex> d;
    if (args.size() == 1 && !args[0].scalar()) d = varg(0, 0).a;
    else
      for (size_t i = 0; i < args.size(); i++) d.push_back(sarg((int)i));
    if (d.empty()) throw SymError{x->loc, "diag() needs at least one entry"};
    Val r((int)d.size(), (int)d.size());
    for (size_t i = 0; i < d.size(); i++) r.at((int)i, (int)i) = d[i];
    return r;
  }
  if (strcmp(name, "rotx") == 0 || strcmp(name, "roty") == 0 || strcmp(name, "rotz") == 0) {
    need(1);
    return rotation(name[3] - 'x', sarg(0));
  }
  if (strcmp(name, "dh") == 0) {
    /* Denavit–Hartenberg: rotz(theta) transz(d) transx(a) rotx(alpha) */
    need(4);
    ex th = sarg(0), d = sarg(1), a = sarg(2), al = sarg(3);
    ex ct = cos(th), st = sin(th), ca = cos(al), sa = sin(al);
    Val r(4, 4);
    r.at(0, 0) = ct, r.at(0, 1) = -st * ca, r.at(0, 2) = st * sa, r.at(0, 3) = a * ct;
    r.at(1, 0) = st, r.at(1, 1) = ct * ca, r.at(1, 2) = -ct * sa, r.at(1, 3) = a * st;
    r.at(2, 1) = sa, r.at(2, 2) = ca, r.at(2, 3) = d;
    r.at(3, 3) = 1;
    auto steps = std::make_shared<std::vector<Turn>>();
    steps->push_back(Turn(2, th));
    Turn shift(0, 0);
    shift.shift = true, shift.s[0] = a, shift.s[1] = 0, shift.s[2] = d;
    steps->push_back(shift);
    steps->push_back(Turn(0, al));
    r.turns = steps;
    return r;
  }
  if (strcmp(name, "pos") == 0 || strcmp(name, "rot") == 0) {
    need(1);
    const Val &T = args[0];
    if (T.rows != 4 || T.cols != 4)
      throw SymError{x->args[0]->loc, fmt("%s() needs a 4x4 transform", name)};
    bool steps = T.turns && !T.placed && last_row_is_unit(T);
    if (name[0] == 'p') {
      Val r(3, 1);
      for (int i = 0; i < 3; i++) r.a[i] = T.at(i, 3);
      if (steps) {
        r.turns = T.turns, r.placed = 1;
        for (int c = 0; c < 3; c++) r.local[c] = 0;
      }
      return r;
    }
    Val r(3, 3);
    for (int i = 0; i < 3; i++)
      for (int j = 0; j < 3; j++) r.at(i, j) = T.at(i, j);
    if (steps) { /* the turns without the shifts */
      auto t = std::make_shared<std::vector<Turn>>();
      for (const Turn &f : *T.turns)
        if (!f.shift) t->push_back(f);
      r.turns = t;
    }
    return r;
  }
  throw SymError{x->loc, fmt("the function '%s' is not supported yet", name)};
}

Val Derivation::vec3(const Expr *x, const char *what) {
  Val v = eval(x);
  if (!v.vector() || v.size() != 3)
    throw SymError{x->loc, fmt("%s must be a 3-vector, not %s", what, shape_name(v).c_str())};
  return v;
}

Val Derivation::mat3(const Expr *x, const char *what) {
  Val v = eval(x);
  if (v.rows != 3 || v.cols != 3)
    throw SymError{x->loc, fmt("%s must be a 3x3 matrix, not %s", what, shape_name(v).c_str())};
  return v;
}

}  // namespace eomsym
