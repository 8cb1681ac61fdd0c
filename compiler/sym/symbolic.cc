/*
** symbolic.cc — derive the equations of motion of a checked model (GiNaC).
**
** The model's expressions become GiNaC expressions over symbols for t, q,
** q', q'', u and p; constants are folded to exact rationals.  Then, with
** L = T - V + (lagrangian terms), D the dissipation function and Q the
** generalized forces, the Euler-Lagrange expressions
**   E_i = d/dt dL/dq'_i - dL/dq_i
** are linear in q'': M_ij = dE_i/dq''_j and f_i = Q_i - dD/dq'_i - E_i(q'' = 0).
** Rates of lets are kept as symbols ("atoms") while differentiating, which
** keeps E free of the terms that cancel in the textbook form (see Atom).
** Also derived: the exact dM/dq, df/dq, df/dq', df/du the generated
** Jacobian needs, the inverse dynamics, T and V (T: kinetic terms and
** bodies; V: potential terms and gravity; lagrangian terms count in
** neither), outputs and constraints.  Everything is handed to ir_build.cc
** as the roots of one IrGraph.
**
** Rigid bodies placed on chains of rotx/roty/rotz/dh transforms skip the
** Lagrangian: their mass matrix and forces come from the tree of frames the
** chains pass through, composite-rigid-body and recursive Newton-Euler
** style (symbolic_chain.cc, through finish_placed); other bodies go
** through the Lagrangian with their rates as atoms.
**
** Speed comes from never expanding (products of sums stay as they are) and
** from differentiating with a memo per variable: GiNaC shares subtrees, and
** its own ex::diff walks a shared subtree once per path to it, while the
** Deriver below walks each distinct node containing its variable once.
*/
#include "sym/symbolic_internal.h"  /* first: wraps the C headers in extern "C" */

#include <algorithm>
#include <array>
#include <cassert>
#include <chrono>
#include <cmath>
#include <cstdarg>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <sstream>
#include <unordered_map>

#include "sym/symbolic.h"
#include "sym/constraint_rank.h"

using namespace GiNaC;

namespace eomsym {
namespace {

const SrcLoc kNoLoc = {0, 0};  /* an error not tied to one place in the file */

std::string fmt(const char *f, ...) __attribute__((format(printf, 1, 2)));
std::string fmt(const char *f, ...) {
  char buf[512];
  va_list ap;
  va_start(ap, f);
  vsnprintf(buf, sizeof buf, f, ap);
  va_end(ap);
  return buf;
}

/* ------------------------------------------------------------ numbers */

/* The exact rational a double literal stands for: the shortest decimal that
** reads back as the same double (0.1 is 1/10, not the binary neighbour), so
** that terms cancel exactly in GiNaC. */
ex exact_number(double v, SrcLoc loc) {
  if (!std::isfinite(v)) throw SymError{loc, "number is not finite"};
  if (v == std::floor(v) && std::fabs(v) < 9.0e15) return numeric((long)v);
  char buf[64];
  for (int digits = 1; digits <= 17; digits++) {
    snprintf(buf, sizeof buf, "%.*e", digits - 1, v);
    if (strtod(buf, nullptr) == v) break;
  }
  /* buf is [-]d.ddde[+-]xx */
  const char *s = buf;
  bool negative = *s == '-';
  if (negative) s++;
  long mantissa = 0;
  int ndigits = 0;
  for (; *s && *s != 'e'; s++)
    if (*s != '.') mantissa = mantissa * 10 + (*s - '0'), ndigits++;
  assert(*s == 'e' && ndigits >= 1 && ndigits <= 17);
  long exponent = strtol(s + 1, nullptr, 10) - (ndigits - 1);
  numeric r = numeric(mantissa) * numeric(10).power(numeric(exponent));
  return negative ? ex(-r) : ex(r);
}

/* ------------------------------------------------------------ differentiation */

bool is_one(const ex &c) { return is_a<numeric>(c) && ex_to<numeric>(c).is_equal(numeric(1)); }

/* Which of the variables (t, q, q', q'', u) each node contains, as a bit
** set per node, memoised and shared by all Derivers: differentiation then
** skips every subtree free of its variable without visiting it. */
class DepCache {
 public:
  /* Variables may be added at any time: a node built before a variable
  ** existed cannot contain it, so the sets already computed stay right. */
  int add_var(const ex &sym) {
    assert(is_a<symbol>(sym));
    int id = (int)ids_.size();
    ids_[sym] = id;
    if ((size_t)id >= words_ * 64) {  /* out of room: start over, twice as wide */
      words_ = 2 * (words_ + 1);
      pool_.assign(words_, 0);
      at_.clear();
    }
    return id;
  }

  bool contains(const ex &e, int id) {
    NodeKind k = node_kind(e);
    if (k == NK_NUMERIC || k == NK_CONSTANT) return false;
    size_t o = offset(e);
    return (pool_[o + id / 64] >> (id % 64)) & 1;
  }

 private:
  std::map<ex, int, ex_is_less> ids_;
  size_t words_ = 0;
  std::vector<uint64_t> pool_;  /* words_ per node; offset 0 is the empty set */
  std::unordered_map<const basic *, std::pair<ex, size_t>> at_;

  size_t offset(const ex &e) {
    NodeKind kind = node_kind(e);
    if (kind == NK_NUMERIC || kind == NK_CONSTANT) return 0;
    const basic *b = &ex_to<basic>(e);
    auto it = at_.find(b);
    if (it != at_.end()) return it->second.second;
    std::vector<uint64_t> acc(words_, 0);
    auto merge = [&](const ex &x) {
      size_t o = offset(x);
      for (size_t w = 0; w < words_; w++) acc[w] |= pool_[o + w];
    };
    if (kind == NK_SYMBOL) {
      auto v = ids_.find(e);
      if (v != ids_.end()) acc[v->second / 64] |= (uint64_t)1 << (v->second % 64);
    } else if (kind == NK_ADD || kind == NK_MUL) {
      for (const expair &p : PairAccess::pairs(e)) merge(p.rest);
    } else {
      for (size_t i = 0; i < e.nops(); i++) merge(e.op(i));
    }
    size_t o = pool_.size();
    pool_.insert(pool_.end(), acc.begin(), acc.end());
    at_.emplace(b, std::make_pair(e, o));  /* keeps e alive: the address stays unique */
    return o;
  }
};

/* d/d(var) with a memo: each distinct GiNaC node containing var is
** differentiated once.  Built-in functions use the textbook derivatives
** (abs' = csgn, csgn' = 0 away from 0, branch derivatives of min, max, step,
** clamp: symbolic_builtins.cc), which keeps GiNaC's conjugate() forms out of
** the results. */
class Deriver {
 public:
  Deriver(const ex &var, int id, DepCache *deps) : var_(var), id_(id), deps_(deps) {
    assert(is_a<symbol>(var));
  }

  ex operator()(const ex &e) {
    if (node_kind(e) == NK_SYMBOL) return e.is_equal(var_) ? 1 : 0;
    if (!deps_->contains(e, id_)) return 0;
    const basic *b = &ex_to<basic>(e);
    auto it = memo_.find(b);
    if (it != memo_.end()) return it->second.second;
    ex r = fresh(e);
    memo_.emplace(b, std::make_pair(e, r));  /* keeps e alive: the address stays unique */
    return r;
  }

 private:
  ex var_;
  int id_;
  DepCache *deps_;
  std::unordered_map<const basic *, std::pair<ex, ex>> memo_;

  ex fresh(const ex &e) {
    NodeKind kind = node_kind(e);
    if (kind == NK_ADD) {
      exvector terms;
      for (const expair &p : PairAccess::pairs(e)) {
        ex d = (*this)(p.rest);
        if (!d.is_zero()) terms.push_back(d * p.coeff);
      }
      return terms.empty() ? ex(0) : ex(add(terms));
    }
    if (kind == NK_MUL) {
      /* product rule over the factors rest^coeff */
      const epvector &pairs = PairAccess::pairs(e);
      size_t n = pairs.size();
      exvector f(n), d(n);
      for (size_t k = 0; k < n; k++) {
        const expair &p = pairs[k];
        f[k] = is_one(p.coeff) ? p.rest : pow(p.rest, p.coeff);
        ex dr = (*this)(p.rest);
        d[k] = dr.is_zero() || is_one(p.coeff) ? dr
                                                      : p.coeff * pow(p.rest, p.coeff - 1) * dr;
      }
      exvector terms;
      for (size_t k = 0; k < n; k++) {
        if (d[k].is_zero()) continue;
        exvector factors;
        factors.reserve(n + 1);
        for (size_t j = 0; j < n; j++)
          if (j != k) factors.push_back(f[j]);
        factors.push_back(d[k]);
        factors.push_back(PairAccess::overall(e));
        terms.push_back(mul(factors));
      }
      return terms.empty() ? ex(0) : ex(add(terms));
    }
    if (kind == NK_POWER) {
      const ex &b = e.op(0), &k = e.op(1);
      ex db = (*this)(b), dk = (*this)(k);
      if (dk.is_zero()) return db.is_zero() ? ex(0) : k * pow(b, k - 1) * db;
      return e * (dk * log(b) + k * db / b);
    }
    if (kind == NK_FUNCTION) return function_derivative(e);
    return e.diff(ex_to<symbol>(var_));  /* nothing else arises; GiNaC knows best */
  }

  ex function_derivative(const ex &e) {
    int f = ginac_builtin(ex_to<function>(e).get_name());
    if (f < 0 || (int)e.nops() != scalar_builtins[f].arity) return e.diff(ex_to<symbol>(var_));
    exvector a, d;
    bool moves = false;
    for (size_t i = 0; i < e.nops(); i++) {
      a.push_back(e.op(i));
      d.push_back((*this)(e.op(i)));
      moves = moves || !d.back().is_zero();
    }
    if (!moves) return 0;
    return builtin_derivative((BuiltinFn)f, e, a, d);
  }
};

/* Substitution with a memo (GiNaC's subs() walks shared subtrees once per path). */
class Subst : public map_function {
 public:
  explicit Subst(const exmap &repl) : repl_(repl) {}
  ex operator()(const ex &e) override {
    if (is_a<symbol>(e)) {
      auto it = repl_.find(e);
      return it == repl_.end() ? e : it->second;
    }
    if (is_a<numeric>(e) || is_a<constant>(e)) return e;
    const basic *b = &ex_to<basic>(e);
    auto it = memo_.find(b);
    if (it != memo_.end()) return it->second.second;
    ex r = e.map(*this);
    memo_.emplace(b, std::make_pair(e, r));
    return r;
  }

 private:
  exmap repl_;
  std::unordered_map<const basic *, std::pair<ex, ex>> memo_;
};

/* Value of e at a point (every symbol of e replaced by a float); NaN if
** the point is singular for e. */
double value_at(const ex &e, Subst &point) {
  try {
    ex v = point(e).evalf();
    if (is_a<numeric>(v) && ex_to<numeric>(v).is_real()) return ex_to<numeric>(v).to_double();
  } catch (const std::exception &) {
    /* a pole at this point */
  }
  return NAN;
}

/* ------------------------------------------------------------ values */

/* A value of the model language: a rows x cols matrix, row-major;
** a scalar is 1x1 and a vector n x 1.  A 3x3 rotation (or the rotation part
** of a 4x4 transform whose last row is 0 0 0 1) built only from rotx, roty,
** rotz, dh, rot, transpose and products also remembers its factors in
** `turns`: a body's angular velocity is then read off the factors, the way
** recursive algorithms work in link frames (see add_rotation). */
struct Val {
  int rows, cols;
  std::vector<ex> a;
  std::shared_ptr<const std::vector<Turn>> turns;  /* null: not known as a product */
  /* A 3-vector known as a point T * [local; 1] (placed 1) of the transform T
  ** whose steps are `turns`, or as a direction R * local (placed 2) of the
  ** rotation R whose turns are `turns`: a body's velocity is then read off
  ** the steps too (see add_translation). */
  int placed = 0;
  ex local[3];
  explicit Val(const ex &e) : rows(1), cols(1), a(1, e) {}
  Val(int r, int c) : rows(r), cols(c), a((size_t)r * c, ex(0)) {}
  bool scalar() const { return rows == 1 && cols == 1; }
  bool vector() const { return cols == 1 || rows == 1; }
  int size() const { return rows * cols; }
  ex &at(int i, int j) { return a[(size_t)i * cols + j]; }
  const ex &at(int i, int j) const { return a[(size_t)i * cols + j]; }
};

/* Is the last row of a 4x4 transform exactly 0 0 0 1? */
static bool last_row_is_unit(const Val &T) {
  assert(T.rows == 4 && T.cols == 4);
  return T.at(3, 0).is_zero() && T.at(3, 1).is_zero() && T.at(3, 2).is_zero() &&
         T.at(3, 3).is_equal(ex(1));
}

/* Do the steps of a transform turn like the rotation `turns`? */
static bool same_turns(const std::vector<Turn> &steps, const std::vector<Turn> &turns) {
  size_t k = 0;
  for (const Turn &f : steps) {
    if (f.shift) continue;
    if (k == turns.size() || turns[k].shift || turns[k].axis != f.axis ||
        !turns[k].angle.is_equal(f.angle))
      return false;
    k++;
  }
  return k == turns.size();
}

std::string shape_name(const Val &v) {
  if (v.scalar()) return "a scalar";
  if (v.cols == 1) return fmt("a %d-vector", v.rows);
  return fmt("a %dx%d matrix", v.rows, v.cols);
}

/* ------------------------------------------------------------ the derivation */

struct Term {
  const Stmt *stmt;
  ex e;
};

/* A switching function: e changes sign where the branch function at loc
** changes branch (part: which bound of a clamp). */
struct SwitchFn {
  SrcLoc loc;
  BuiltinFn fn;
  int part;
  ex e;
};

class Derivation {
 public:
  Derivation(const Model *m, const SymOptions *opt, Diag *d);
  void run(EomSystem *out);

 private:
  const Model *m_;
  Diag *diag_;  /* for warnings; errors are thrown as SymError */
  double max_seconds_;
  std::chrono::steady_clock::time_point start_;
  /* nq_ entries of q: the coordinates, then 4 per attitude (its quaternion);
  ** nv_ of the velocities v: the coordinates' rates, then 3 per attitude
  ** (omega); ncoord_ coordinates. */
  int nq_, nv_, ncoord_, nu_, np_;
  ex t_;
  std::vector<ex> q_, qd_, qdd_, u_, p_;  /* qd_, qdd_: v and v' (nv_ each) */
  std::vector<ex> qrate_;                 /* nq_: q' in terms of q and v (N(q) v) */
  std::vector<std::array<ex, 12>> att_N_;  /* per attitude: N(q), q' = N omega */
  VarTable vars_;
  DepCache deps_;
  Deriver dt_;
  std::vector<Deriver> dq_, dqd_, dqdd_, du_;
  std::unordered_map<const Decl *, Val> let_value_, let_rate_, const_value_;

  /* The rate e' of an expression that is not a coordinate is kept as a
  ** symbol w (an "atom") while the Lagrangian is differentiated.  With
  ** L = F(q, q', t, w), w_k = e_k', Lagrange's identities de_k'/dq'_i =
  ** de_k/dq_i and de_k'/dq_i = d/dt de_k/dq_i give
  **   E_i = d/dt dF/dq'_i - dF/dq_i + sum_k d/dt(dF/dw_k) de_k/dq_i
  ** in which the terms that cancel in the textbook form are never made:
  ** for point masses this is M = J^T m J and f = -J^T m (J' q'), and the
  ** expressions stay a fraction of the size. */
  struct Atom {
    ex w;       /* the symbol */
    ex e;       /* the expression whose rate it is */
    ex rate;    /* e' in t, q, q' */
    ex accel;   /* e'' in t, q, q', q'' */
  };
  std::vector<Atom> atoms_;
  std::vector<Deriver> dw_;
  std::unique_ptr<Subst> unatom_;  /* w_k -> e_k' */
  std::unique_ptr<Subst> zero_qdd_;  /* q'' -> 0 */
  std::vector<const Decl *> let_stack_;  /* lets being evaluated (cycle guard) */

  std::vector<Term> kinetic_, potential_, lagrangian_, dissipation_;
  std::vector<Term> reported_potential_;  /* in V, not in L (gravity on placed bodies) */
  /* Rotating bodies whose orientation depends on q and t only enter the
  ** equations through their generalized inertia forces (see add_body):
  ** rot_force_[b][i] is body b's share of E_i, rot_energy_ its part of T. */
  /* Bodies whose mass centre is a point of a chain of turns and shifts
  ** (see finish_placed); `spins`: the body's axes are the chain's last frame. */
  struct Placed {
    const Stmt *stmt;
    ex mass;
    Val pos;
    bool spins;
    Val I;
    ex T;  /* kinetic energy, set by finish_placed */
  };
  std::vector<Placed> placed_;
  std::vector<bool> body_placed_;  /* per entry of bodies_ */
  std::vector<std::vector<ex>> placed_M_;  /* their mass matrix */
  std::vector<ex> placed_bias_;            /* their forces at q'' = 0 */
  std::vector<ex> placed_full_;            /* and with q'': M q'' + bias */
  std::vector<std::vector<ex>> rot_force_;
  std::vector<ex> rot_energy_;  /* with the translational energy of placed points */
  std::vector<ex> force_;  /* Q_i */

  struct Body {
    const Stmt *stmt;
    ex mass;
    Val pos;
  };
  std::vector<Body> bodies_;
  std::vector<std::pair<const Stmt *, Val>> gravity_;
  std::vector<std::pair<const Stmt *, ex>> constraints_;  /* phi = 0, one per entry */
  std::vector<std::pair<const Stmt *, ex>> vconstraints_;  /* A q' - b = 0, one per entry */
  /* switching functions of the branch functions in the terms, in source order */
  bool collecting_ = false;
  std::vector<SwitchFn> switches_;
  void note_switches(const Expr *x, BuiltinFn f, const exvector &a);

  void tick(const char *step);
  ex totald(const ex &e);
  ex dv(int j, const ex &e);
  std::string rate_name(int j) const;
  Val rate(const Val &v);
  ex unatom(const ex &e);

  Val eval(const Expr *x);
  Val eval_name(const Expr *x);
  Val eval_rate(const Expr *x);
  Val eval_binary(const Expr *x);
  Val eval_call(const Expr *x);
  Val eval_index(const Expr *x);
  Val eval_list(const Expr *x);
  bool place_sum(const Val &P, const Val &dir, Val &sum);
  Val let_value(const Decl *d);
  ex scalar(const Expr *x, const char *what);

  void collect_terms();
  Val vec3(const Expr *x, const char *what);
  Val mat3(const Expr *x, const char *what);
  void add_body(const Stmt *s);
  void check_inertia(const Stmt *s, const Val &I);
  void add_rotation(const Val &R, const Val &I);
  void finish_placed();
  exmap random_point(uint64_t &state, bool rates);
  bool point_matches(const Val &P);
  bool turns_match(const Val &R);
  void add_force_at(const Stmt *s);
  void add_torque(const Stmt *s);
  void add_constraint(const Stmt *s);
  void derive_velocity_constraints(std::vector<ex> &A, std::vector<ex> &b, std::vector<ex> &gamma);
  bool velocity_constraints_integrable(const std::vector<ex> &A, const std::vector<ex> &b);
  bool depends_on_rates(const ex &e);
  void check_no_qdd(const ex &L);
  void check_mass(std::vector<std::vector<ex>> &M);
  bool nonzero_somewhere(const ex &e, const ex &scale);
  void derive_control_quantities(const ex &L, const std::vector<std::vector<ex>> &M,
                                 const std::vector<ex> &dM, const std::vector<ex> &dDdqd,
                                 const std::vector<ex> &phi, const std::vector<ex> &vc_A,
                                 const std::vector<ex> &vc_b, ControlResult *out);
  /* the `identify` parameters: indices in p, and derivatives in them (made
  ** before any expression, so that the DepCache knows them from the start) */
  std::vector<int> pi_index_;
  std::vector<Deriver> dpi_;
  void derive_regressor_quantities(const std::vector<ex> &inv, RegressorResult *out);
};

Derivation::Derivation(const Model *m, const SymOptions *opt, Diag *d)
    : m_(m),
      diag_(d),
      max_seconds_(opt ? opt->max_seconds : 0),
      start_(std::chrono::steady_clock::now()),
      nq_(m->ncoords + 4 * m->nattitudes),
      nv_(m->ncoords + 3 * m->nattitudes),
      ncoord_(m->ncoords),
      nu_(m->ninputs),
      np_(m->nparams),
      t_(realsymbol("t")),
      dt_(t_, deps_.add_var(t_), &deps_) {
  vars_[t_] = VarRef{IRV_T, 0};
  auto add_q = [this](const std::string &name) {
    int i = (int)q_.size();
    q_.push_back(realsymbol(name));
    vars_[q_[i]] = VarRef{IRV_Q, i};
    dq_.emplace_back(q_[i], deps_.add_var(q_[i]), &deps_);
  };
  auto add_v = [this](const std::string &name) {
    int i = (int)qd_.size();
    qd_.push_back(realsymbol(name + "'"));
    qdd_.push_back(realsymbol(name + "''"));
    vars_[qd_[i]] = VarRef{IRV_QD, i};
    vars_[qdd_[i]] = VarRef{IRV_QDD, i};
    dqd_.emplace_back(qd_[i], deps_.add_var(qd_[i]), &deps_);
    dqdd_.emplace_back(qdd_[i], deps_.add_var(qdd_[i]), &deps_);
  };
  for (int i = 0; i < ncoord_; i++) {
    add_q(m->coords[i]->name);
    add_v(m->coords[i]->name);
    qrate_.push_back(qd_[i]);
  }
  for (int a = 0; a < m->nattitudes; a++) {
    const std::string name = m->attitudes[a]->name;
    static const char *const part[4] = {"w", "x", "y", "z"};
    for (int k = 0; k < 4; k++) add_q(name + "." + part[k]);
    for (int k = 0; k < 3; k++) add_v(fmt("omega(%s)[%d]", name.c_str(), k + 1));
    const ex *quat = &q_[ncoord_ + 4 * a];
    std::array<ex, 12> N;
    attitude_rate_map(quat, N.data());
    att_N_.push_back(N);
    for (int k = 0; k < 4; k++) {
      exvector t;
      for (int c = 0; c < 3; c++) t.push_back(N[3 * k + c] * qd_[ncoord_ + 3 * a + c]);
      qrate_.push_back(add(t));
    }
  }
  assert((int)q_.size() == nq_ && (int)qd_.size() == nv_);
  for (int i = 0; i < nu_; i++) {
    u_.push_back(realsymbol(m->inputs[i]->name));
    vars_[u_[i]] = VarRef{IRV_U, i};
    du_.emplace_back(u_[i], deps_.add_var(u_[i]), &deps_);
  }
  for (int i = 0; i < np_; i++) {
    p_.push_back(realsymbol(m->params[i]->name));
    vars_[p_[i]] = VarRef{IRV_P, i};
  }
  for (int k = 0; k < m->nidentify; k++) {
    int j = 0;
    while (j < np_ && m->params[j] != m->identify[k]) j++;
    assert(j < np_);
    pi_index_.push_back(j);
    dpi_.emplace_back(p_[j], deps_.add_var(p_[j]), &deps_);
  }
  force_.assign(nv_, ex(0));
}

void Derivation::tick(const char *step) {
  if (max_seconds_ <= 0) return;
  double s = std::chrono::duration<double>(std::chrono::steady_clock::now() - start_).count();
  if (s > max_seconds_)
    throw SymError{kNoLoc, fmt("derivation stopped after %.1f s while %s: over the "
                                     "time limit of %g s",
                                     s, step, max_seconds_)};
}

/* d/dt e = de/dt + sum_i (de/dq_i q'_i + de/dq'_i q''_i) + sum_k de/dw_k e_k''
** (inputs count as constants: their rates are not known) */
ex Derivation::totald(const ex &e) {
  exvector terms;
  ex d = dt_(e);
  if (!d.is_zero()) terms.push_back(d);
  for (int i = 0; i < nq_; i++) {
    d = dq_[i](e);
    if (!d.is_zero()) terms.push_back(d * qrate_[i]);
  }
  for (int i = 0; i < nv_; i++) {
    d = dqd_[i](e);
    if (!d.is_zero()) terms.push_back(d * qdd_[i]);
  }
  for (size_t k = 0; k < atoms_.size(); k++) {
    d = dw_[k](e);
    if (!d.is_zero()) terms.push_back(d * atoms_[k].accel);
  }
  return terms.empty() ? ex(0) : ex(add(terms));
}

/* The derivative of e along velocity j: de/dq_j for a coordinate; for
** entry c of an attitude's omega, the body-frame direction
** X_c e = sum_m de/dq_m N_mc (symbolic_attitude.cc).  Generalized forces,
** partial velocities and the Euler-Lagrange terms all take this in place
** of d/dq, so coordinates and attitudes share one derivation. */
ex Derivation::dv(int j, const ex &e) {
  assert(j >= 0 && j < nv_);
  if (j < ncoord_) return dq_[j](e);
  int a = (j - ncoord_) / 3, c = (j - ncoord_) % 3;
  exvector t;
  for (int m = 0; m < 4; m++) {
    ex d = dq_[ncoord_ + 4 * a + m](e);
    if (!d.is_zero()) t.push_back(d * att_N_[a][3 * m + c]);
  }
  return t.empty() ? ex(0) : ex(add(t));
}

/* "x'" for a coordinate, "omega(R)[2]" for an attitude's velocity. */
std::string Derivation::rate_name(int j) const {
  assert(j >= 0 && j < nv_);
  if (j < ncoord_) return std::string(m_->coords[j]->name) + "'";
  return fmt("omega(%s)[%d]", m_->attitudes[(j - ncoord_) / 3]->name, (j - ncoord_) % 3 + 1);
}

/* The rate of each entry: an atom, or 0 for a constant. */
Val Derivation::rate(const Val &v) {
  Val r(v.rows, v.cols);
  for (int k = 0; k < v.size(); k++) {
    ex rate = totald(v.a[k]);
    if (rate.is_zero()) continue;
    Atom a;
    a.w = realsymbol(fmt("w%zu", atoms_.size()));
    a.e = v.a[k];
    a.rate = rate;
    dw_.emplace_back(a.w, deps_.add_var(a.w), &deps_);
    a.accel = totald(rate);
    atoms_.push_back(a);
    unatom_.reset();
    r.a[k] = a.w;
  }
  return r;
}

/* e with every atom replaced by the rate it stands for. */
ex Derivation::unatom(const ex &e) {
  if (atoms_.empty()) return e;
  if (!unatom_) {
    exmap m;
    for (const Atom &a : atoms_) m[a.w] = a.rate;
    unatom_.reset(new Subst(m));
  }
  return (*unatom_)(e);
}

/* ---- expressions ---- */

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
      v.turns.reset();
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
      Val R(3, 3);
      attitude_rotation(&q_[ncoord_ + 4 * d->index], R.a.data());
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
      sum.turns.reset();
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
        v.turns.reset();
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
      a.turns.reset();
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

/* ---- statements ---- */

/* The switching functions of a branch function met in the equations'
** terms (see SwitchFn): its argument, or the differences that pick its
** branch. */
void Derivation::note_switches(const Expr *x, BuiltinFn f, const exvector &a) {
  auto add = [&](const ex &e, int part) { switches_.push_back(SwitchFn{x->loc, f, part, e}); };
  switch (f) {
  case BF_SIGN: case BF_STEP: case BF_ABS: add(a[0], 0); break;
  case BF_MIN: case BF_MAX: add(a[0] - a[1], 0); break;
  case BF_CLAMP: add(a[0] - a[1], 1), add(a[0] - a[2], 2); break;
  default: break;
  }
}

void Derivation::collect_terms() {
  collecting_ = true;
  for (int i = 0; i < m_->nterms; i++) {
    const Stmt *s = m_->terms[i];
    tick("reading the model");
    try {
      switch (s->kind) {
        case ST_KINETIC: kinetic_.push_back({s, scalar(s->e[0], "a kinetic energy")}); break;
        case ST_POTENTIAL: potential_.push_back({s, scalar(s->e[0], "a potential energy")}); break;
        case ST_LAGRANGIAN: lagrangian_.push_back({s, scalar(s->e[0], "a Lagrangian term")}); break;
        case ST_DISSIPATION:
          dissipation_.push_back({s, scalar(s->e[0], "a dissipation function")});
          break;
        case ST_FORCE: {
          int k = -1;
          for (int c = 0; c < ncoord_; c++)
            if (strcmp(m_->coords[c]->name, s->name) == 0) k = c;
          if (k < 0) throw SymError{s->name_loc, fmt("'%s' is not a coordinate", s->name)};
          force_[k] = force_[k] + scalar(s->e[0], "a generalized force");
          break;
        }
        case ST_BODY: add_body(s); break;
        case ST_FORCE_AT: add_force_at(s); break;
        case ST_TORQUE: add_torque(s); break;
        case ST_GRAVITY: gravity_.push_back({s, vec3(s->e[0], "gravity")}); break;
        case ST_CONSTRAINT: add_constraint(s); break;
        default:
          throw SymError{s->loc, fmt("'%s' statements are not supported yet",
                                     ast_stmt_keyword(s->kind))};
      }
    } catch (const std::exception &e) {
      /* GiNaC's own errors: e.g. a division by zero met while simplifying */
      throw SymError{s->loc, fmt("cannot evaluate this statement: %s", e.what())};
    }
  }
  collecting_ = false;
  /* gravity acts on every body, wherever the statements stand */
  for (const auto &g : gravity_)
    for (size_t k = 0; k < bodies_.size(); k++) {
      const Body &b = bodies_[k];
      exvector terms;
      for (int c = 0; c < 3; c++) terms.push_back(g.second.a[c] * b.pos.a[c]);
      (body_placed_[k] ? reported_potential_ : potential_).push_back({g.first, -b.mass * add(terms)});
    }
  finish_placed();
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

/* Does e contain a rate (of a coordinate or, through an atom, of anything)? */
bool Derivation::depends_on_rates(const ex &e) {
  for (int i = 0; i < nv_; i++)
    if (!dqd_[i](e).is_zero() || !dqdd_[i](e).is_zero()) return true;
  for (Deriver &d : dw_)
    if (!d(e).is_zero()) return true;
  return false;
}

/* T += m/2 |P'|^2 + w.(I w)/2 with w the body-frame angular velocity,
** skew(w) = R^T R' (R maps body axes to world axes).
**
** The translational part goes into the Lagrangian, where the rate of P is
** an atom (so it yields J^T m a).  The rotational part, when R depends on q
** and t only, skips the Lagrangian: with w = sum_j W_j q'_j + W_t and
** skew(W_j) = R^T dR/dq_j, the body's share of the Euler-Lagrange
** expression is its generalized inertia force
**   E_i += W_i . (I w' + w x (I w))
** (Euler's equations projected on the partial angular velocities; equal to
** Lagrange's form for holonomic coordinates: Kane and Levinson, Dynamics:
** Theory and Applications, 1985, ch. 6).  This avoids differentiating
** through the nine entries of R' and is several times smaller for chains. */
void Derivation::add_body(const Stmt *s) {
  Body b{s, scalar(s->e[0], "a body's mass"), vec3(s->e[1], "a body's position")};
  ex T = 0;
  /* a direction R l from the origin is the point T [l; 1] of R's turns */
  bool placed = b.pos.placed != 0 && point_matches(b.pos);
  for (int c = 0; placed && c < 3; c++) placed = !depends_on_rates(b.pos.a[c]);
  Placed pb{s, b.mass, b.pos, false, Val(0), 0};
  if (!placed) {
    Val v = rate(b.pos);
    exvector terms;
    for (int c = 0; c < 3; c++) terms.push_back(pow(v.a[c], 2));
    T = b.mass / 2 * add(terms);
  }
  if (s->e[2] || s->e[3]) {
    if (!s->e[2] || !s->e[3])
      throw SymError{s->loc, "a rotating body needs both 'orient' and 'inertia'"};
    Val R = mat3(s->e[2], "an orientation");
    Val I = eval(s->e[3]);
    if (I.vector() && I.size() == 3) { /* principal moments */
      Val d(3, 3);
      for (int c = 0; c < 3; c++) d.at(c, c) = I.a[c];
      I = d;
    }
    if (I.rows != 3 || I.cols != 3)
      throw SymError{s->e[3]->loc, fmt("an inertia must be a 3x3 matrix or the 3 principal "
                                       "moments, not %s", shape_name(I).c_str())};
    check_inertia(s, I);
    bool rigid_in_q = true;
    for (const ex &e : R.a) rigid_in_q = rigid_in_q && !depends_on_rates(e);
    if (placed && R.turns && same_turns(*b.pos.turns, *R.turns) && turns_match(R)) {
      pb.spins = true;
      pb.I = I;
    } else if (rigid_in_q) {
      add_rotation(R, I);
    } else {
      Val Rd = rate(R);
      auto S = [&](int i, int j) {  /* (R^T R')_ij */
        exvector t;
        for (int k = 0; k < 3; k++) t.push_back(R.at(k, i) * Rd.at(k, j));
        return ex(add(t));
      };
      ex w[3] = {S(2, 1), S(0, 2), S(1, 0)};
      exvector rot;
      for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
          if (!I.at(i, j).is_zero()) rot.push_back(w[i] * I.at(i, j) * w[j]);
      T = T + add(rot) / 2;
    }
  }
  kinetic_.push_back({s, T});
  bodies_.push_back(b);
  if (placed) placed_.push_back(pb);
  body_placed_.push_back(placed);
}

/* An inertia must be symmetric (w.(I w) sees only the symmetric part, so
** anything else is a slip); one that is not positive definite at the
** initial state (coordinates from `initial`, params at their defaults, t
** and inputs 0) is no rigid body's, and gets a warning. */
void Derivation::check_inertia(const Stmt *s, const Val &I) {
  const char *name = s->decls[0]->name;
  for (int i = 0; i < 3; i++)
    for (int j = i + 1; j < 3; j++) {
      ex d = I.at(i, j) - I.at(j, i);
      if (!d.is_zero() && nonzero_somewhere(d, I.at(i, i) + I.at(j, j)))
        throw SymError{s->e[3]->loc, fmt("the inertia of body '%s' must be symmetric: entries "
                                         "[%d,%d] and [%d,%d] differ", name, i + 1, j + 1, j + 1, i + 1)};
    }
  exmap point;
  point[t_] = 0;
  for (int i = 0; i < ncoord_; i++) point[q_[i]] = m_->q0 ? m_->q0[i] : 0.0;
  for (int i = ncoord_; i < nq_; i++) point[q_[i]] = m_->attitude_q0[i - ncoord_];
  for (int i = 0; i < nv_; i++) point[qd_[i]] = 0;
  for (int i = 0; i < nu_; i++) point[u_[i]] = 0;
  for (int i = 0; i < np_; i++) point[p_[i]] = m_->params[i]->number;
  Subst at(point);
  double v[9];
  for (int k = 0; k < 9; k++) v[k] = value_at(I.a[k], at);
  /* leading principal minors (Sylvester's criterion) */
  double m1 = v[0], m2 = v[0] * v[4] - v[1] * v[3],
         m3 = v[0] * (v[4] * v[8] - v[5] * v[7]) - v[1] * (v[3] * v[8] - v[5] * v[6]) +
              v[2] * (v[3] * v[7] - v[4] * v[6]);
  if (std::isnan(m1 + m2 + m3)) return;  /* not a number there: nothing to say */
  if (!(m1 > 0 && m2 > 0 && m3 > 0))
    diag_warning(diag_, s->e[3]->loc,
                 "the inertia of body '%s' is not positive definite at the initial state "
                 "(leading minors %.3g, %.3g, %.3g): no rigid body has such an inertia",
                 name, m1, m2, m3);
}

/* The rotational share of a body whose orientation R(q, t) has no rates:
** its generalized inertia forces and its kinetic energy (see add_body).
**
** W_j (skew(W_j) = R^T dR/dq_j) is the body-frame angular velocity per unit
** rate of q_j.  When R is known as a product of turns F_1 ... F_m about
** axes e_k by angles th_k, R^T dR/dth_k = S_k^T skew(e_k) S_k with
** S_k = F_{k+1} ... F_m, so W_j = sum_k dth_k/dq_j S_k^T e_k: each turn's
** axis carried out to the body frame, the way recursive algorithms work in
** link frames.  Bodies further out the same chain share these vectors.
** Otherwise W_j = vee(R^T dR/dq_j) from the entries. */
void Derivation::add_rotation(const Val &R, const Val &I) {
  std::vector<std::array<ex, 3>> W(nv_);
  ex w[3], wdot[3];
  if (R.turns && turns_match(R)) {
    const std::vector<Turn> &f = *R.turns;
    const size_t m = f.size();
    exvector wt[3];
    for (size_t k = 0; k < m; k++) {
      if (f[k].shift) continue;
      ex th_rate = totald(f[k].angle);
      if (th_rate.is_zero()) continue;
      ex v[3] = {0, 0, 0};  /* S_k^T e_k */
      v[f[k].axis] = 1;
      for (size_t l = k + 1; l < m; l++) turn_back(f[l], v);
      for (int j = 0; j < nv_; j++) {
        ex d = dv(j, f[k].angle);
        if (d.is_zero()) continue;
        for (int c = 0; c < 3; c++) W[j][c] = W[j][c] + d * v[c];
      }
      for (int c = 0; c < 3; c++)
        if (!v[c].is_zero()) wt[c].push_back(th_rate * v[c]);
    }
    for (int c = 0; c < 3; c++) w[c] = add(wt[c]);
    for (int c = 0; c < 3; c++) wdot[c] = totald(w[c]);
  } else {
    /* vee(R^T X) for X = dR/dq_j or dR/dt (the three entries of the skew matrix) */
    auto vee = [&R](const Val &X, ex out[3]) {
      static const int pick[3][2] = {{2, 1}, {0, 2}, {1, 0}};
      for (int c = 0; c < 3; c++) {
        exvector t;
        for (int k = 0; k < 3; k++)
          if (!X.at(k, pick[c][1]).is_zero()) t.push_back(R.at(k, pick[c][0]) * X.at(k, pick[c][1]));
        out[c] = add(t);
      }
    };
    exvector wt[3];
    for (int j = 0; j < nv_; j++) {
      Val X(3, 3);
      for (int k = 0; k < 9; k++) X.a[k] = dv(j, R.a[k]);
      vee(X, W[j].data());
      for (int c = 0; c < 3; c++)
        if (!W[j][c].is_zero()) wt[c].push_back(W[j][c] * qd_[j]);
    }
    Val Xt(3, 3);
    for (int k = 0; k < 9; k++) Xt.a[k] = dt_(R.a[k]);
    ex Wt[3];
    vee(Xt, Wt);
    for (int c = 0; c < 3; c++) {
      wt[c].push_back(Wt[c]);
      w[c] = add(wt[c]);
    }
    for (int c = 0; c < 3; c++) wdot[c] = totald(w[c]);
  }
  ex Iw[3];
  for (int r = 0; r < 3; r++) {
    exvector t;
    for (int c = 0; c < 3; c++)
      if (!I.at(r, c).is_zero()) t.push_back(I.at(r, c) * w[c]);
    Iw[r] = add(t);
  }
  /* I w' + w x (I w) */
  ex euler[3];
  for (int r = 0; r < 3; r++) {
    exvector t;
    for (int c = 0; c < 3; c++)
      if (!I.at(r, c).is_zero()) t.push_back(I.at(r, c) * wdot[c]);
    int a = (r + 1) % 3, b = (r + 2) % 3;
    t.push_back(w[a] * Iw[b] - w[b] * Iw[a]);
    euler[r] = add(t);
  }
  std::vector<ex> share(nv_);
  for (int i = 0; i < nv_; i++) {
    exvector t;
    for (int c = 0; c < 3; c++)
      if (!W[i][c].is_zero()) t.push_back(W[i][c] * euler[c]);
    share[i] = add(t);
  }
  rot_force_.push_back(share);
  rot_energy_.push_back((w[0] * Iw[0] + w[1] * Iw[1] + w[2] * Iw[2]) / 2);
}

/* The shares of the placed bodies in the equations, once gravity is known:
** their frames, mass matrix and bias forces come from the frame tree
** (symbolic_chain.cc).  Gravity is an acceleration of the tree's base there,
** so V is reported, not used. */
void Derivation::finish_placed() {
  if (placed_.empty()) return;
  ChainTools tools;
  tools.nq = nv_;  /* velocity directions: a chain's angles move with coordinates only */
  for (int c = 0; c < 3; c++) {
    exvector t;
    for (const auto &g : gravity_) t.push_back(g.second.a[c]);
    tools.gravity[c] = add(t);
  }
  tools.rate = [this](const ex &e) { return totald(e); };
  tools.no_accel = [this](const ex &e) {
    if (!zero_qdd_) {
      exmap m;
      for (const ex &a : qdd_) m[a] = 0;
      zero_qdd_.reset(new Subst(m));
    }
    return (*zero_qdd_)(e);
  };
  tools.d_dq = [this](int j, const ex &e) { return dv(j, e); };
  tools.tick = [this](const char *step) { tick(step); };
  FrameTree tree(tools);
  for (Placed &pb : placed_) {
    int k = tree.frame(*pb.pos.turns, pb.pos.turns->size());
    pb.T = tree.add_body(k, pb.mass, pb.pos.local, pb.spins ? pb.I.a.data() : nullptr);
    rot_energy_.push_back(pb.T);
  }
  placed_M_.assign(nv_, std::vector<ex>(nv_, ex(0)));
  tree.equations(placed_M_, placed_bias_, placed_full_);
}

/* Every variable (and, with rates, every q' and q'') at a pseudo-random
** value in [0.35, 1.35) drawn from `state`: where the numeric guards look.
** Fixed seeds keep their verdicts reproducible. */
exmap Derivation::random_point(uint64_t &state, bool rates) {
  auto next = [&state]() {
    state = state * 6364136223846793005ULL + 1442695040888963407ULL;
    return 0.35 + (double)(state >> 11) / 9007199254740992.0;
  };
  exmap point;
  point[t_] = next();
  for (int i = 0; i < nq_; i++) point[q_[i]] = next();
  for (int i = 0; rates && i < nv_; i++) point[qd_[i]] = next(), point[qdd_[i]] = next();
  for (int i = 0; i < nu_; i++) point[u_[i]] = next();
  for (int i = 0; i < np_; i++) point[p_[i]] = next();
  return point;
}

/* P's entries equal T(steps) [local; 1] at a pseudo-random point: a guard on
** the bookkeeping of placed points (a mismatch falls back to the entries). */
bool Derivation::point_matches(const Val &P) {
  uint64_t state = 0x5851f42d4c957f2dULL;
  Subst at(random_point(state, false));
  ex v[3] = {P.local[0], P.local[1], P.local[2]};  /* applied from the last step back */
  for (auto it = P.turns->rbegin(); it != P.turns->rend(); ++it) {
    if (it->shift) {
      for (int c = 0; c < 3; c++) v[c] = v[c] + it->s[c];
      continue;
    }
    turn_forward(*it, v);
  }
  for (int c = 0; c < 3; c++) {
    double want = value_at(P.a[c], at), got = value_at(v[c], at);
    if (!(std::fabs(want - got) <= 1e-9 * (1 + std::fabs(want)))) return false;
  }
  return true;
}

/* The product of R's turns equals R's entries at a pseudo-random point: a
** guard on the bookkeeping of `turns` (a mismatch falls back to the entries). */
bool Derivation::turns_match(const Val &R) {
  uint64_t state = 0x9e3779b97f4a7c15ULL;
  Subst at(random_point(state, false));
  for (int col = 0; col < 3; col++) {
    ex v[3] = {0, 0, 0};  /* R e_col = F_1 (F_2 (... F_m e_col)) */
    v[col] = 1;
    for (auto it = R.turns->rbegin(); it != R.turns->rend(); ++it) {
      if (it->shift) continue;
      turn_forward(*it, v);
    }
    for (int row = 0; row < 3; row++) {
      double want = value_at(R.at(row, col), at), got = value_at(v[row], at);
      if (!(std::fabs(want - got) <= 1e-9 * (1 + std::fabs(want)))) return false;
    }
  }
  return true;
}

/* Q_i += F . dP/dq_i */
void Derivation::add_force_at(const Stmt *s) {
  Val F = eval(s->e[0]), P = eval(s->e[1]);
  if (!F.vector() || !P.vector() || F.size() != P.size() || F.scalar())
    throw SymError{s->loc, fmt("a force and its point must be vectors of one length, not %s "
                               "and %s", shape_name(F).c_str(), shape_name(P).c_str())};
  for (int i = 0; i < nv_; i++) {
    exvector terms{force_[i]};
    for (int c = 0; c < F.size(); c++) terms.push_back(F.a[c] * dv(i, P.a[c]));
    force_[i] = add(terms);
  }
}

/* Q_i += TAU . w_i, with skew(w_i) = dR/dq_i R^T the world-frame angular
** velocity per unit rate of q_i (per unit of omega_i: X_i R R^T). */
void Derivation::add_torque(const Stmt *s) {
  Val tau = vec3(s->e[0], "a torque");
  Val R = mat3(s->e[1], "an orientation");
  for (int i = 0; i < nv_; i++) {
    auto W = [&](int r, int c) {  /* (dR/dq_i R^T)_rc */
      exvector t;
      for (int k = 0; k < 3; k++) t.push_back(dv(i, R.at(r, k)) * R.at(c, k));
      return ex(add(t));
    };
    force_[i] = force_[i] + tau.a[0] * W(2, 1) + tau.a[1] * W(0, 2) + tau.a[2] * W(1, 0);
  }
}

void Derivation::add_constraint(const Stmt *s) {
  if (m_->nattitudes > 0)
    throw SymError{s->loc, "constraints in a model with attitudes are not supported yet"};
  Val a = eval(s->e[0]), b = eval(s->e[1]);
  if (a.rows != b.rows || a.cols != b.cols)
    throw SymError{s->loc, fmt("the sides of a constraint are %s and %s", shape_name(a).c_str(),
                               shape_name(b).c_str())};
  for (int k = 0; k < a.size(); k++) {
    ex phi = a.a[k] - b.a[k];
    if (depends_on_rates(phi))
      vconstraints_.push_back({s, unatom(phi)});  /* a velocity constraint */
    else
      constraints_.push_back({s, phi});
  }
}

/* Velocity constraints c(t, q, q') = A q' - b = 0: A = dc/dq', b = -c(q' = 0)
** and gamma = -(c' at q'' = 0), so that A q'' = gamma.  A must not depend on
** the rates (the checker names a non-linear term; this is the exact test). */
void Derivation::derive_velocity_constraints(std::vector<ex> &A, std::vector<ex> &b,
                                             std::vector<ex> &gamma) {
  const int nvc = (int)vconstraints_.size(), n = nv_;  /* none with attitudes */
  exmap at_rest, no_accel;
  for (int i = 0; i < n; i++) at_rest[qd_[i]] = 0, no_accel[qdd_[i]] = 0;
  Subst zero_qd(at_rest), zero_qdd(no_accel);
  A.assign((size_t)nvc * n, ex(0));
  b.assign(nvc, ex(0));
  gamma.assign(nvc, ex(0));
  for (int c = 0; c < nvc; c++) {
    const ex &cv = vconstraints_[c].second;
    for (int j = 0; j < n; j++) {
      ex a = dqd_[j](cv);
      for (int k = 0; k < n; k++)
        if (!dqd_[k](a).is_zero() && nonzero_somewhere(dqd_[k](a), a))
          throw SymError{vconstraints_[c].first->loc,
                         "the rates enter this velocity constraint non-linearly: a velocity "
                         "constraint must be linear in the rates (A(t, q) q' = b(t, q))"};
      A[(size_t)c * n + j] = zero_qd(a);
    }
    b[c] = -zero_qd(cv);
    gamma[c] = -zero_qdd(totald(cv));
    tick("deriving the velocity constraints");
  }
}

/* Can the velocity constraints be integrated to position constraints?  By
** Frobenius' theorem (e.g. Neimark & Fufaev, Dynamics of Nonholonomic
** Systems, 1972, ch. I) the forms w_k = A_k dq - b_k dt, in the space of
** (q, t), are integrable exactly when every dw_k vanishes on the vectors X
** with w(X) = 0: Z^T W_k Z = 0 for a basis Z of the null space of [A, -b],
** with W_k the curl (dA_kj/dq_i - dA_ki/dq_j, t as coordinate n).  Tested
** numerically at a few fixed points. */
bool Derivation::velocity_constraints_integrable(const std::vector<ex> &A,
                                                 const std::vector<ex> &b) {
  const int nvc = (int)b.size(), n = nq_, ne = nq_ + 1;
  auto coef = [&](int k, int j) -> ex { return j < n ? A[(size_t)k * n + j] : -b[k]; };
  auto d = [&](int i, const ex &e) -> ex { return i < n ? dq_[i](e) : dt_(e); };
  std::vector<ex> curl((size_t)nvc * ne * ne, ex(0));
  for (int k = 0; k < nvc; k++)
    for (int i = 0; i < ne; i++)
      for (int j = i + 1; j < ne; j++) {
        ex w = d(i, coef(k, j)) - d(j, coef(k, i));
        curl[((size_t)k * ne + i) * ne + j] = w;
        curl[((size_t)k * ne + j) * ne + i] = -w;
      }
  uint64_t state = 0x9e3779b97f4a7c15ULL;
  for (int trial = 0; trial < 3; trial++) {
    Subst at(random_point(state, false));
    /* rows of [A, -b] at the point, then the null space by Gram-Schmidt */
    std::vector<std::vector<double>> rows, basis;
    for (int k = 0; k < nvc; k++) {
      std::vector<double> r(ne);
      for (int j = 0; j < ne; j++) r[j] = value_at(coef(k, j), at);
      rows.push_back(r);
    }
    std::vector<std::vector<double>> Z;
    for (int pass = 0; pass < 2; pass++)
      for (int r = 0; r < (pass ? ne : nvc); r++) {
        std::vector<double> v(ne, 0.0);
        if (pass) v[r] = 1; else v = rows[r];
        double norm0 = 0;
        for (double x : v) norm0 = std::max(norm0, std::fabs(x));
        for (const auto &e : basis) {
          double dd = 0;
          for (int i = 0; i < ne; i++) dd += e[i] * v[i];
          for (int i = 0; i < ne; i++) v[i] -= dd * e[i];
        }
        double norm = 0;
        for (double x : v) norm += x * x;
        norm = std::sqrt(norm);
        if (!(norm > 1e-8 * norm0) || !std::isfinite(norm) || (pass && norm < 0.5)) continue;
        for (double &x : v) x /= norm;
        basis.push_back(v);
        if (pass) Z.push_back(v);
      }
    for (int k = 0; k < nvc; k++) {
      std::vector<double> W((size_t)ne * ne);
      double scale = 0;
      for (size_t e = 0; e < W.size(); e++) {
        W[e] = curl[(size_t)k * ne * ne + e].is_zero() ? 0 : value_at(curl[(size_t)k * ne * ne + e], at);
        if (std::isnan(W[e])) return false;
        scale = std::max(scale, std::fabs(W[e]));
      }
      double rowscale = 0;
      for (double x : rows[k]) rowscale = std::max(rowscale, std::fabs(x));
      for (size_t a = 0; a < Z.size(); a++)
        for (size_t c = a + 1; c < Z.size(); c++) {
          double s = 0;
          for (int i = 0; i < ne; i++)
            for (int j = 0; j < ne; j++) s += Z[a][i] * W[(size_t)i * ne + j] * Z[c][j];
          if (std::fabs(s) > 1e-9 * (1 + scale + rowscale)) return false;
        }
    }
  }
  return true;
}

/* Numerically non-zero at one of a few fixed pseudo-random points (relative
** to |scale| there): the confirmation of a structural dependence that may
** cancel (sin^2 + cos^2 - 1 stays in GiNaC). */
bool Derivation::nonzero_somewhere(const ex &e, const ex &scale) {
  uint64_t state = 0x2545f4914f6cdd1dULL;  /* fixed seed: the verdict is reproducible */
  for (int trial = 0; trial < 4; trial++) {
    Subst at(random_point(state, true));
    double v = value_at(e, at), s = value_at(scale, at);
    if (std::isnan(v)) continue;
    if (std::fabs(v) > 1e-8 * (1 + (std::isnan(s) ? 0 : std::fabs(s)))) return true;
  }
  return false;
}

void Derivation::check_no_qdd(const ex &L) {
  for (int k = 0; k < nv_; k++) {
    if (dqdd_[k](unatom(L)).is_zero()) continue;
    for (const auto *terms : {&kinetic_, &potential_, &lagrangian_})
      for (const Term &t : *terms)
        if (!dqdd_[k](unatom(t.e)).is_zero())
          throw SymError{t.stmt->loc, fmt("this term depends on the acceleration %s'",
                                          rate_name(k).c_str())};
  }
}

/* The generated mass function takes q and p only: M must not depend on
** q' (L quadratic in the rates), t or u.  A dependence GiNaC shows but
** that cancels numerically (sin^2 + cos^2 - 1) is removed by setting the
** variable to 0, which leaves the value of M unchanged. */
void Derivation::check_mass(std::vector<std::vector<ex>> &M) {
  struct Banned {
    ex var;
    Deriver *d;
    std::string what;
  };
  std::vector<Banned> banned;
  for (int k = 0; k < nv_; k++)
    banned.push_back({qd_[k], &dqd_[k], "the rate " + rate_name(k)});
  banned.push_back({t_, &dt_, "the time t"});
  for (int k = 0; k < nu_; k++)
    banned.push_back({u_[k], &du_[k], fmt("the input '%s'", m_->inputs[k]->name)});
  exmap cancelled;
  for (int i = 0; i < nv_; i++)
    for (int j = i; j < nv_; j++)
      for (const Banned &v : banned) {
        ex d = (*v.d)(M[i][j]);
        if (d.is_zero()) continue;
        if (!nonzero_somewhere(d, M[i][j])) {
          cancelled[v.var] = 0;
          continue;
        }
        bool rate = false;
        for (int k = 0; k < nv_; k++) rate = rate || v.var.is_equal(qd_[k]);
        std::string msg = rate ? "the Lagrangian is not quadratic in the rates: "
                               : "the mass matrix must depend on coordinates and params only: ";
        /* name the first term whose own second derivative depends on it */
        for (const auto *terms : {&kinetic_, &lagrangian_, &potential_})
          for (const Term &t : *terms) {
            ex e = dqd_[j](dqd_[i](unatom(t.e)));
            ex de = (*v.d)(e);
            if (!de.is_zero() && nonzero_somewhere(de, e))
              throw SymError{t.stmt->loc,
                             msg + "this term makes the mass matrix depend on " + v.what};
          }
        for (const Placed &pb : placed_) {
          ex e = dqd_[j](dqd_[i](pb.T));
          ex de = (*v.d)(e);
          if (!de.is_zero() && nonzero_somewhere(de, e))
            throw SymError{pb.stmt->loc, msg + "this body makes the mass matrix depend on " + v.what};
        }
        throw SymError{kNoLoc, msg + "the mass matrix depends on " + v.what};
      }
  if (cancelled.empty()) return;
  Subst clean(cancelled);
  for (int i = 0; i < nv_; i++)
    for (int j = i; j < nv_; j++) M[i][j] = M[j][i] = clean(M[i][j]);
}

static int *alloc_roots(size_t n) {
  int *p = (int *)calloc(n ? n : 1, sizeof(int));
  if (!p) throw std::bad_alloc();
  return p;
}

void Derivation::run(EomSystem *out) {
  const int n = nv_, nq = nq_;  /* v-space (M, f) and q-space sizes */
  collect_terms();

  exvector Tt, Vt, Lt, Dt;
  for (const Term &t : kinetic_) Tt.push_back(t.e);
  for (const Term &t : potential_) Vt.push_back(t.e);
  for (const Term &t : lagrangian_) Lt.push_back(t.e);
  for (const Term &t : dissipation_) Dt.push_back(t.e);
  ex T = add(Tt), V = add(Vt), D = add(Dt);
  ex T_rot = add(exvector(rot_energy_.begin(), rot_energy_.end()));
  exvector Vr;
  for (const Term &t : reported_potential_) Vr.push_back(t.e);
  ex V_reported = V + add(Vr);
  ex L = T - V + add(Lt);  /* in terms of atoms: F above */
  check_no_qdd(L);
  tick("forming the Lagrangian");

  /* the Euler-Lagrange expressions E_i = d/dt dL/dq'_i - dL/dq_i (see Atom) */
  const size_t K = atoms_.size();
  std::vector<ex> dLdw(K), dDdw(K), dLdw_rate(K);
  for (size_t k = 0; k < K; k++) {
    dLdw[k] = dw_[k](L);
    dDdw[k] = dw_[k](D);
    if (!dLdw[k].is_zero()) dLdw_rate[k] = totald(dLdw[k]);
    tick("differentiating the Lagrangian");
  }
  std::vector<ex> E(n), dDdqd(n);
  /* for an attitude's omega, omega x dL/domega besides the rest: the
  ** Euler-Poincare form (symbolic_attitude.cc), with dv() along omega */
  std::vector<ex> gyro(n, ex(0));
  for (int a = 0; a < m_->nattitudes; a++) {
    const int j0 = ncoord_ + 3 * a;
    ex w[3], p[3], c[3];
    for (int k = 0; k < 3; k++) w[k] = qd_[j0 + k], p[k] = dqd_[j0 + k](L);
    attitude_cross(w, p, c);
    for (int k = 0; k < 3; k++) gyro[j0 + k] = c[k];
  }
  for (int i = 0; i < n; i++) {
    exvector terms{totald(dqd_[i](L)), -dv(i, L), gyro[i]}, dterms{dqd_[i](D)};
    for (const std::vector<ex> &share : rot_force_) terms.push_back(share[i]);
    for (size_t k = 0; k < K; k++) {
      if (dLdw[k].is_zero() && dDdw[k].is_zero()) continue;
      ex J = dv(i, atoms_[k].e);  /* = d e_k' / d q'_i (d e_k' / d omega_i) */
      if (J.is_zero()) continue;
      if (!dLdw[k].is_zero()) terms.push_back(dLdw_rate[k] * J);
      if (!dDdw[k].is_zero()) dterms.push_back(dDdw[k] * J);
    }
    E[i] = unatom(add(terms));
    dDdqd[i] = unatom(add(dterms));
    tick("deriving the equations of motion");
  }

  /* E is linear in q'': M_ij = dE_i/dq''_j, f = Q - dD/dq' - E(q'' = 0);
  ** the placed bodies add their own M and forces */
  const bool placed = !placed_M_.empty();
  std::vector<std::vector<ex>> M(n, std::vector<ex>(n)), M_lagrange(n, std::vector<ex>(n));
  for (int i = 0; i < n; i++) {
    for (int j = i; j < n; j++) {
      M_lagrange[i][j] = M_lagrange[j][i] = dqdd_[j](E[i]);
      M[i][j] = M[j][i] = M_lagrange[i][j] + (placed ? placed_M_[i][j] : ex(0));
    }
    tick("deriving the mass matrix");
  }
  check_mass(M);
  exmap no_accel;
  for (const ex &a : qdd_) no_accel[a] = 0;
  Subst zero_qdd(no_accel);
  std::vector<ex> f(n), f_lagrange(n);
  for (int i = 0; i < n; i++) {
    f_lagrange[i] = unatom(force_[i]) - dDdqd[i] - zero_qdd(E[i]);
    f[i] = placed ? f_lagrange[i] - unatom(placed_bias_[i]) : f_lagrange[i];
    for (int j = 0; j < n; j++)
      if (!dqdd_[j](f[i]).is_zero())
        throw SymError{kNoLoc, "internal: the forcing depends on accelerations"};
    tick("deriving the forcing vector");
  }

  /* Jacobian pieces, each an exact symbolic derivative */
  std::vector<ex> dM((size_t)nq * n * n), dfdq((size_t)n * nq), dfdqd((size_t)n * n),
      dfdu((size_t)n * nu_);
  for (int k = 0; k < nq; k++) {
    for (int i = 0; i < n; i++)
      for (int j = i; j < n; j++)
        dM[(size_t)k * n * n + i * n + j] = dM[(size_t)k * n * n + j * n + i] = dq_[k](M[i][j]);
    tick("deriving dM/dq");
  }
  for (int i = 0; i < n; i++) {
    for (int j = 0; j < nq; j++) dfdq[(size_t)i * nq + j] = dq_[j](f[i]);
    for (int j = 0; j < n; j++) dfdqd[(size_t)i * n + j] = dqd_[j](f[i]);
    for (int j = 0; j < nu_; j++) dfdu[(size_t)i * nu_ + j] = du_[j](f[i]);
    tick("deriving the Jacobian of the forcing");
  }

  /* inverse dynamics M q'' - f with the inputs at zero; the placed bodies'
  ** share M q'' + bias in its recursive form (fewer operations) */
  exmap no_inputs;
  for (const ex &u : u_) no_inputs[u] = 0;
  Subst zero_u(no_inputs);
  std::vector<ex> inv(n);
  for (int i = 0; i < n; i++) {
    exvector terms{-zero_u(f_lagrange[i])};
    if (placed) terms.push_back(zero_u(unatom(placed_full_[i])));
    for (int j = 0; j < n; j++) terms.push_back(M_lagrange[i][j] * qdd_[j]);
    inv[i] = add(terms);
  }

  /* constraints: phi, G = dphi/dq and gamma = -(phi'' at q'' = 0), so that G q'' = gamma */
  const int nc = (int)constraints_.size();
  assert(nc == 0 || nq == n);  /* add_constraint refuses them with attitudes */
  std::vector<ex> phi(nc), G((size_t)nc * n), gamma(nc), phi_t(nc);
  for (int c = 0; c < nc; c++) {
    phi[c] = constraints_[c].second;
    for (int j = 0; j < n; j++) G[(size_t)c * n + j] = dq_[j](phi[c]);
    gamma[c] = -zero_qdd(totald(totald(phi[c])));
    phi_t[c] = dt_(phi[c]);
    tick("deriving the constraints");
  }

  std::vector<ex> vc_A, vc_b, vc_gamma;
  derive_velocity_constraints(vc_A, vc_b, vc_gamma);
  const int nvc = (int)vc_b.size();

  ControlResult ctl;
  derive_control_quantities(L + T_rot - add(Vr), M, dM, dDdqd, phi, vc_A, vc_b, &ctl);
  tick("deriving the Coriolis matrix, momenta and constants of the motion");
  RegressorResult reg;
  derive_regressor_quantities(inv, &reg);
  tick("deriving the regressor");

  std::vector<ex> outs;
  std::vector<SrcLoc> out_locs;
  KinematicsInput kin;
  for (int i = 0; i < m_->noutputs; i++) {
    const Decl *d = m_->outputs[i];
    Val v = let_value(d);  /* a vector or matrix: its entries, row by row */
    if (d->frame) {        /* a transform: its position, then its rotation */
      assert(v.rows == 4 && v.cols == 4 && d->shape.rows == 12);
      Val y(12, 1);
      for (int r = 0; r < 3; r++) y.a[r] = v.at(r, 3);
      for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++) y.a[3 + 3 * r + c] = v.at(r, c);
      v = y;
    }
    assert(v.rows * v.cols == d->shape.rows * d->shape.cols);
    kin.groups.push_back({outs.size(), v.a.size(), d->frame != 0, d->loc});
    for (const ex &e : v.a) {
      outs.push_back(unatom(e));
      out_locs.push_back(d->loc);
    }
  }
  tick("computing the outputs");
  kin.nq = nv_;  /* Jacobians over the velocities: dy/dq, or X_a y for an attitude */
  kin.nu = nu_;
  kin.qd = qd_;
  kin.outputs = outs;
  kin.d_dq = [this](int i, const ex &e) { return dv(i, e); };
  kin.d_dqd = [this](int i, const ex &e) { return dqd_[i](e); };
  kin.d_du = [this](int i, const ex &e) { return du_[i](e); };
  kin.d_dt = [this](const ex &e) { return dt_(e); };
  kin.tick = [this](const char *step) { tick(step); };
  KinematicsResult kr;
  derive_kinematics(kin, &kr);

  /* one graph for everything; root handles are kept in this order */
  IrBuilder b(vars_);
  const SrcLoc none = kNoLoc;
  std::vector<int> h_mass, h_f, h_dM, h_dfdq, h_dfdqd, h_dfdu, h_inv, h_out;
  for (int i = 0; i < n; i++)
    for (int j = 0; j < n; j++) h_mass.push_back(b.add_root(M[i][j], none));
  for (const ex &e : f) h_f.push_back(b.add_root(e, none));
  tick("building the expression graph");
  for (const ex &e : dM) h_dM.push_back(b.add_root(e, none));
  tick("building the expression graph");
  if (nq == n) {  /* interleaved, as always for models without attitudes */
    for (size_t k = 0; k < dfdq.size(); k++) {
      h_dfdq.push_back(b.add_root(dfdq[k], none));
      h_dfdqd.push_back(b.add_root(dfdqd[k], none));
      if (k % n == 0) tick("building the expression graph");
    }
  } else {
    for (const ex &e : dfdq) h_dfdq.push_back(b.add_root(e, none));
    for (const ex &e : dfdqd) h_dfdqd.push_back(b.add_root(e, none));
    tick("building the expression graph");
  }
  for (const ex &e : dfdu) h_dfdu.push_back(b.add_root(e, none));
  for (const ex &e : inv) h_inv.push_back(b.add_root(e, none));
  int h_T = b.add_root(unatom(T + T_rot), kinetic_.empty() ? none : kinetic_[0].stmt->loc);
  int h_V = b.add_root(unatom(V_reported), potential_.empty() ? none : potential_[0].stmt->loc);
  for (size_t i = 0; i < outs.size(); i++) h_out.push_back(b.add_root(outs[i], out_locs[i]));
  std::vector<int> h_phi, h_G, h_gamma;
  for (int c = 0; c < nc; c++) h_phi.push_back(b.add_root(phi[c], constraints_[c].first->loc));
  for (int c = 0; c < nc; c++)
    for (int j = 0; j < n; j++) h_G.push_back(b.add_root(G[(size_t)c * n + j], none));
  for (int c = 0; c < nc; c++) h_gamma.push_back(b.add_root(gamma[c], none));
  std::vector<int> h_phi_t;
  for (int c = 0; c < nc; c++) h_phi_t.push_back(b.add_root(phi_t[c], none));
  std::vector<int> h_vA, h_vb, h_vgamma;
  for (const ex &e : vc_A) h_vA.push_back(b.add_root(e, none));
  for (int c = 0; c < nvc; c++) h_vb.push_back(b.add_root(vc_b[c], vconstraints_[c].first->loc));
  for (const ex &e : vc_gamma) h_vgamma.push_back(b.add_root(e, none));
  std::vector<int> h_cor, h_grav, h_mom;
  for (const ex &e : ctl.coriolis) h_cor.push_back(b.add_root(e, none));
  for (const ex &e : ctl.gravity) h_grav.push_back(b.add_root(e, none));
  for (const ex &e : ctl.momenta) h_mom.push_back(b.add_root(e, none));
  int h_ham = b.add_root(ctl.hamiltonian, none);
  /* a param default that reads other params: the rule that recomputes it */
  std::vector<int> h_rule(np_, -1);
  for (int i = 0; i < np_; i++) {
    const Decl *d = m_->params[i];
    if (!d->value) continue;
    ex e = scalar(d->value, "a parameter's default");
    bool reads_params = false;
    for (int k = 0; k < np_; k++) reads_params = reads_params || (k != i && e.has(p_[k]));
    if (reads_params) h_rule[i] = b.add_root(e, d->loc);
  }
  std::vector<int> h_ojac, h_obias, h_fjac, h_fbias;
  for (size_t k = 0; k < outs.size(); k++) {
    if (!kr.kinematic[k]) continue;
    for (int j = 0; j < n; j++) h_ojac.push_back(b.add_root(kr.jacobian[k * n + j], none));
    h_obias.push_back(b.add_root(kr.bias[k], none));
  }
  for (const ex &e : kr.frame_jacobian) h_fjac.push_back(b.add_root(e, none));
  for (const ex &e : kr.frame_bias) h_fbias.push_back(b.add_root(e, none));
  /* switching functions: those that can change sign, each once */
  std::vector<int> h_sw;
  std::vector<EomSwitch> sw_info;
  std::vector<ex> sw;
  for (const SwitchFn &w : switches_) {
    ex e = unatom(w.e);
    bool moves = e.has(t_);
    for (int i = 0; i < nq; i++) moves = moves || e.has(q_[i]);
    for (int i = 0; i < n; i++) moves = moves || e.has(qd_[i]);
    for (const ex &u : u_) moves = moves || e.has(u);
    bool again = false;
    for (const ex &o : sw) again = again || (e - o).is_zero() || (e + o).is_zero();
    if (!moves || again) continue;
    sw.push_back(e);
    sw_info.push_back(EomSwitch{w.loc.line, w.loc.col, (int)w.fn, w.part});
    h_sw.push_back(b.add_root(e, w.loc));
  }
  std::vector<int> h_reg, h_reg0;
  for (const ex &e : reg.Y) h_reg.push_back(b.add_root(e, none));
  for (const ex &e : reg.offset) h_reg0.push_back(b.add_root(e, none));
  tick("building the expression graph");

  std::vector<int> roots;
  b.finish(&out->g, roots);
  auto place = [&roots](const std::vector<int> &handles, size_t count) {
    assert(handles.size() == count);
    int *p = alloc_roots(count);
    for (size_t k = 0; k < count; k++) p[k] = roots[handles[k]];
    return p;
  };
  out->mass = place(h_mass, (size_t)n * n);
  out->forcing = place(h_f, n);
  out->dmass_dq = place(h_dM, (size_t)nq * n * n);
  out->dforcing_dq = place(h_dfdq, (size_t)n * nq);
  out->dforcing_dqd = place(h_dfdqd, (size_t)n * n);
  out->dforcing_du = place(h_dfdu, (size_t)n * nu_);
  out->inverse = place(h_inv, n);
  out->energy_T = roots[h_T];
  out->energy_V = roots[h_V];
  out->outputs = place(h_out, outs.size());
  out->nc = nc;
  out->constraint = place(h_phi, nc);
  out->constraint_jacobian = place(h_G, (size_t)nc * n);
  out->constraint_gamma = place(h_gamma, nc);
  out->constraint_dt = place(h_phi_t, nc);
  out->nvc = nvc;
  out->vconstraint_A = place(h_vA, (size_t)nvc * n);
  out->vconstraint_b = place(h_vb, nvc);
  out->vconstraint_gamma = place(h_vgamma, nvc);
  out->vc_integrable = nvc > 0 && velocity_constraints_integrable(vc_A, vc_b);
  out->has_split = ctl.split;
  snprintf(out->split_why, sizeof out->split_why, "%s", ctl.split_why.c_str());
  out->coriolis = ctl.split ? place(h_cor, (size_t)n * n) : nullptr;
  out->gravity = ctl.split ? place(h_grav, n) : nullptr;
  out->momenta = place(h_mom, n);
  out->hamiltonian = roots[h_ham];
  out->cyclic = alloc_roots(n);
  for (int i = 0; i < n; i++) out->cyclic[i] = ctl.cyclic[i];
  out->energy_conserved = ctl.energy_conserved;
  out->ns = (int)sw.size();
  out->switches = place(h_sw, sw.size());
  out->switch_info = (EomSwitch *)calloc(sw.size() + 1, sizeof(EomSwitch));
  if (!out->switch_info) throw std::bad_alloc();
  for (size_t k = 0; k < sw.size(); k++) out->switch_info[k] = sw_info[k];
  snprintf(out->energy_why, sizeof out->energy_why, "%s", ctl.energy_why.c_str());
  const int ni = (int)pi_index_.size();
  out->ni = ni;
  out->identified = alloc_roots(ni);
  for (int k = 0; k < ni; k++) out->identified[k] = pi_index_[k];
  out->regressor = ni ? place(h_reg, (size_t)n * ni) : nullptr;
  out->regressor_offset = ni ? place(h_reg0, n) : nullptr;
  /* output Jacobians: rows of outputs that are not y(q, p) stay -1 */
  out->output_kinematic = alloc_roots(outs.size());
  out->output_jacobian = alloc_roots(outs.size() * (size_t)n);
  out->output_bias = alloc_roots(outs.size());
  for (size_t k = 0, r = 0; k < outs.size(); k++) {
    out->output_kinematic[k] = kr.kinematic[k];
    out->output_bias[k] = -1;
    for (int j = 0; j < n; j++) out->output_jacobian[k * n + j] = -1;
    if (!kr.kinematic[k]) continue;
    for (int j = 0; j < n; j++) out->output_jacobian[k * n + j] = roots[h_ojac[r * n + j]];
    out->output_bias[k] = roots[h_obias[r]];
    out->nkinematic++;
    r++;
  }
  out->nframes = (int)(kr.frame_bias.size() / 6);
  out->frame_output = alloc_roots(out->nframes);
  out->frame_decl = alloc_roots(out->nframes);
  for (int i = 0, f = 0, first = 0; i < m_->noutputs; i++) {
    const Decl *d = m_->outputs[i];
    if (d->frame) {
      out->frame_output[f] = first;
      out->frame_decl[f++] = i;
    }
    first += d->shape.rows * d->shape.cols;
  }
  out->frame_jacobian = place(h_fjac, (size_t)out->nframes * 6 * n);
  out->frame_bias = place(h_fbias, (size_t)out->nframes * 6);
  assert(out->nv == n && out->nattitudes == m_->nattitudes);
  out->param_rule = alloc_roots(np_);
  out->nderived = 0;
  for (int i = 0; i < np_; i++) {
    out->param_rule[i] = h_rule[i] < 0 ? -1 : roots[h_rule[i]];
    out->nderived += h_rule[i] >= 0;
  }
}

/* The regressor form of the inverse dynamics (symbolic_control.cc). */
void Derivation::derive_regressor_quantities(const std::vector<ex> &inv, RegressorResult *out) {
  if (pi_index_.empty()) return;
  RegressorInput in;
  in.inverse = inv;
  for (int j : pi_index_) {
    in.pi.push_back(p_[j]);
    in.pi_names.push_back(m_->params[j]->name);
  }
  for (const auto *terms : {&kinetic_, &potential_, &lagrangian_, &dissipation_})
    for (const Term &t : *terms) in.terms.push_back({t.stmt->loc, unatom(t.e)});
  in.d_dpi = [this](int k, const ex &e) { return dpi_[k](e); };
  in.substitute = [](const ex &e, const exmap &m) { return Subst(m)(e); };
  in.nonzero_somewhere = [this](const ex &e, const ex &scale) {
    return nonzero_somewhere(e, scale);
  };
  derive_regressor(in, out);
}

/* Hand the Lagrangian and the derivation's tools to symbolic_control.cc. */
void Derivation::derive_control_quantities(const ex &L, const std::vector<std::vector<ex>> &M,
                                           const std::vector<ex> &dM,
                                           const std::vector<ex> &dDdqd,
                                           const std::vector<ex> &phi,
                                           const std::vector<ex> &vc_A,
                                           const std::vector<ex> &vc_b, ControlResult *out) {
  ControlInput in;
  in.nq = nv_;
  in.nu = nu_;
  for (int i = 0; i < nv_; i++) {
    std::string r = rate_name(i);
    in.coord_names.push_back(i < ncoord_ ? r.substr(0, r.size() - 1) : r);
  }
  if (nv_ != nq_)
    in.no_split = "the model has attitudes: its velocities are angular velocities, not "
                  "rates of coordinates";
  for (int i = 0; i < nu_; i++) in.input_names.push_back(m_->inputs[i]->name);
  in.qd = qd_;
  in.L = unatom(L);
  in.M = M;
  in.dM = dM;
  for (const ex &Q : force_) in.force.push_back(unatom(Q));
  in.dDdqd = dDdqd;
  in.constraints = phi;
  in.vc_A = vc_A;
  in.vc_b = vc_b;
  in.d_dq = [this](int i, const ex &e) { return dv(i, e); };
  in.d_dqd = [this](int i, const ex &e) { return dqd_[i](e); };
  in.d_du = [this](int i, const ex &e) { return du_[i](e); };
  in.d_dt = [this](const ex &e) { return dt_(e); };
  in.substitute = [](const ex &e, const exmap &m) { return Subst(m)(e); };
  in.nonzero_somewhere = [this](const ex &e, const ex &scale) {
    return nonzero_somewhere(e, scale);
  };
  derive_control(in, out);
  /* omega's equations keep a gyroscopic term: its momenta are not conserved alone */
  for (int i = ncoord_; i < nv_; i++) out->cyclic[i] = 0;
}

}  // namespace
}  // namespace eomsym

extern "C" int sym_derive(const Model *m, const SymOptions *opt, Diag *d, EomSystem *out) {
  assert(m && d && out);
  memset(out, 0, sizeof *out);
  out->nq = m->ncoords + 4 * m->nattitudes;
  out->nv = m->ncoords + 3 * m->nattitudes;
  out->nattitudes = m->nattitudes;
  out->nu = m->ninputs;
  out->np = m->nparams;
  out->ny = m->ny;
  out->nc = 0;
  try {
    eomsym::Derivation dv(m, opt, d);
    dv.run(out);
    /* Dependent constraint equations make the multipliers non-unique. */
    return out->nc + out->nvc > 0 && constraint_rank_check(m, out, d) != 0;
  } catch (const eomsym::SymError &e) {
    diag_error(d, e.loc, "%s", e.msg.c_str());
  } catch (const std::bad_alloc &) {
    diag_error(d, eomsym::kNoLoc, "out of memory while deriving the equations of motion");
  } catch (const std::exception &e) {
    diag_error(d, eomsym::kNoLoc, "deriving the equations of motion failed: %s", e.what());
  }
  return 1;
}

extern "C" void sym_free(EomSystem *s) {
  if (!s) return;
  for (int i = 0; i < s->g.nnodes; i++) free(s->g.nodes[i].args);
  free(s->g.nodes);
  free(s->mass);
  free(s->forcing);
  free(s->dmass_dq);
  free(s->dforcing_dq);
  free(s->dforcing_dqd);
  free(s->dforcing_du);
  free(s->inverse);
  free(s->outputs);
  free(s->constraint);
  free(s->constraint_jacobian);
  free(s->constraint_gamma);
  free(s->constraint_dt);
  free(s->vconstraint_A);
  free(s->vconstraint_b);
  free(s->vconstraint_gamma);
  free(s->coriolis);
  free(s->gravity);
  free(s->momenta);
  free(s->cyclic);
  free(s->identified);
  free(s->regressor);
  free(s->regressor_offset);
  free(s->param_rule);
  free(s->output_kinematic);
  free(s->output_jacobian);
  free(s->output_bias);
  free(s->frame_output);
  free(s->frame_decl);
  free(s->frame_jacobian);
  free(s->frame_bias);
  free(s->switches);
  free(s->switch_info);
  memset(s, 0, sizeof *s);
}
