/*
** ir_build.cc — GiNaC expressions to one deterministic, hash-consed IrGraph.
**
** Three jobs, in this order:
**  1. Translate each GiNaC node once (memoised on its address, so the shared
**     subtrees GiNaC builds while differentiating are visited once) into a
**     temporary node.  Numeric coefficients are pulled out of products
**     (2*a*b becomes 2 * (a*b), so the a*b node is shared with every other
**     use), negative powers become divisions, x^(1/2) becomes sqrt.
**  2. Hash-cons the temporary nodes by content.  Each node gets a 64-bit key
**     computed only from its own content and its arguments' keys; arguments
**     of sums and products are sorted by that key, so the result does not
**     depend on GiNaC's term order (which moves with address randomisation).
**  3. Number the nodes depth first from the roots, in root order: the
**     numbering depends only on the roots' content.
** Along the way constants are folded (x*0, x+0, x*1, f(number)), sums are
** factored greedily (a*x + a*y -> a*(x + y), see factor_sum) and given a
** canonical sign (x - y and y - x share one node).
*/
#include "sym/symbolic_internal.h"

#include <algorithm>
#include <cassert>
#include <cfloat>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <sstream>
#include <unordered_map>

#include "sym/symbolic.h"

using namespace GiNaC;

namespace eomsym {

namespace {

/* A node before final numbering.  Arguments are ids of other TNodes. */
struct TNode {
  IrOp op;
  IrFn fn;
  IrVar var;
  int index;
  double num;
  std::vector<int> args;
  uint64_t key;  /* structural key: content and the arguments' keys only */
};

uint64_t mix(uint64_t h, uint64_t v) {
  /* splitmix64 finaliser over the running hash: cheap and well spread */
  uint64_t z = h ^ (v + 0x9e3779b97f4a7c15ULL + (h << 6) + (h >> 2));
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

uint64_t double_bits(double v) {
  uint64_t b;
  std::memcpy(&b, &v, sizeof b);
  return b;
}

bool is_commutative(IrOp op) { return op == IR_ADD || op == IR_MUL; }

}  // namespace

struct IrBuilder::Impl {
  const VarTable &vars;
  std::vector<TNode> nodes;
  std::unordered_multimap<uint64_t, int> table;  /* key -> ids with that key */
  /* GiNaC node address -> id; the ex is kept so the address is never reused */
  std::unordered_map<const basic *, std::pair<ex, int>> memo;
  std::vector<int> roots;
  SrcLoc loc;  /* of the root being translated, for errors */

  explicit Impl(const VarTable &v) : vars(v), loc{0, 0} {}

  /* ---- hash-consing ---- */

  /* Total order on nodes by content; equal only for the same node. */
  int compare(int a, int b) const {
    if (a == b) return 0;
    const TNode &x = nodes[a], &y = nodes[b];
    if (x.key != y.key) return x.key < y.key ? -1 : 1;
    /* equal keys of different nodes: a 64-bit collision, settle by content */
    if (x.op != y.op) return x.op < y.op ? -1 : 1;
    if (x.fn != y.fn) return x.fn < y.fn ? -1 : 1;
    if (x.var != y.var) return x.var < y.var ? -1 : 1;
    if (x.index != y.index) return x.index < y.index ? -1 : 1;
    if (double_bits(x.num) != double_bits(y.num))
      return double_bits(x.num) < double_bits(y.num) ? -1 : 1;
    if (x.args.size() != y.args.size()) return x.args.size() < y.args.size() ? -1 : 1;
    for (size_t i = 0; i < x.args.size(); i++)
      if (int c = compare(x.args[i], y.args[i])) return c;
    assert(!"two nodes with the same content");
    return 0;
  }

  bool same_content(const TNode &x, const TNode &y) const {
    return x.op == y.op && x.fn == y.fn && x.var == y.var && x.index == y.index &&
           double_bits(x.num) == double_bits(y.num) && x.args == y.args;
  }

  int intern(TNode n) {
    if (is_commutative(n.op))
      std::sort(n.args.begin(), n.args.end(),
                [this](int a, int b) { return compare(a, b) < 0; });
    uint64_t k = mix(mix(mix(mix(n.op, n.fn), n.var), (uint64_t)n.index), double_bits(n.num));
    for (int a : n.args) k = mix(k, nodes[a].key);
    n.key = k;
    auto range = table.equal_range(k);
    for (auto it = range.first; it != range.second; ++it)
      if (same_content(nodes[it->second], n)) return it->second;
    int id = (int)nodes.size();
    nodes.push_back(std::move(n));
    table.emplace(k, id);
    return id;
  }

  TNode blank(IrOp op) {
    TNode n;
    n.op = op;
    n.fn = IRF_SIN;
    n.var = IRV_T;
    n.index = 0;
    n.num = 0;
    n.key = 0;
    return n;
  }

  bool is_num(int id, double *v = nullptr) const {
    if (nodes[id].op != IR_NUM) return false;
    if (v) *v = nodes[id].num;
    return true;
  }
  bool is_num_value(int id, double v) const {
    return nodes[id].op == IR_NUM && nodes[id].num == v;
  }

  /* ---- node constructors with constant folding ---- */

  int num(double v) {
    if (!std::isfinite(v))
      throw SymError{loc, "the equations contain a constant that is not a finite real number "
                          "(a square root or logarithm of a negative number, or a division "
                          "by zero)"};
    if (v == 0) v = 0;  /* -0 and 0 are one node */
    TNode n = blank(IR_NUM);
    n.num = v;
    return intern(n);
  }

  int var(IrVar v, int index) {
    TNode n = blank(IR_VAR);
    n.var = v;
    n.index = index;
    return intern(n);
  }

  /* c and X when id is the scaled node c*X made by scale(), else 0. */
  bool scaled(int id, double *c, int *x) const {
    const TNode &n = nodes[id];
    if (n.op != IR_MUL || n.args.size() != 2) return false;
    for (int k = 0; k < 2; k++)
      if (is_num(n.args[k], c)) {
        *x = n.args[1 - k];
        return true;
      }
    return false;
  }

  int neg(int a) {
    double v;
    int x;
    if (is_num(a, &v)) return num(-v);
    if (nodes[a].op == IR_NEG) return nodes[a].args[0];
    if (scaled(a, &v, &x)) return scale(-v, x);
    TNode n = blank(IR_NEG);
    n.args.push_back(a);
    return intern(n);
  }

  int add(const std::vector<int> &terms) {
    double c = 0;
    std::vector<Term> rest;
    for (int a : terms) {
      double v;
      if (is_num(a, &v)) c += v;
      else rest.push_back(split_term(a));
    }
    std::vector<int> parts;
    factor_sum(rest, parts);
    if (c != 0) parts.push_back(num(c));
    return make_sum(parts);
  }

  /* ---- factoring of sums ----
  ** a*x*y + a*x*z + b*w  ->  a*x*(y + z) + b*w, greedily: take out the
  ** factor shared by most terms, recurse on the terms that had it and on
  ** the rest.  This is what turns a sum over the points of a chain into
  ** products of short shared sums (sum of masses beyond a joint, ...).
  ** It depends only on the terms' content, so it stays deterministic. */

  struct Term {
    double c;
    std::vector<int> f;  /* factors, a power x^k (integer k <= 4) as k copies of x */
  };

  Term split_term(int id) {
    Term t{1, {}};
    double v;
    int x;
    if (nodes[id].op == IR_NEG) t.c = -1, id = nodes[id].args[0];
    if (scaled(id, &v, &x)) t.c *= v, id = x;
    auto push = [&](int a) {
      const TNode &n = nodes[a];
      double k;
      if (n.op == IR_POW && is_num(n.args[1], &k) && k == std::floor(k) && k >= 2 && k <= 4)
        t.f.insert(t.f.end(), (size_t)k, n.args[0]);
      else
        t.f.push_back(a);
    };
    if (nodes[id].op == IR_MUL)
      for (int a : std::vector<int>(nodes[id].args)) push(a);
    else
      push(id);
    return t;
  }

  int build_term(const Term &t) {
    std::vector<int> f = t.f, factors;
    std::sort(f.begin(), f.end());
    for (size_t i = 0; i < f.size();) {
      size_t j = i;
      while (j < f.size() && f[j] == f[i]) j++;
      factors.push_back(j - i == 1 ? f[i] : pow_num(f[i], (double)(j - i)));
      i = j;
    }
    return scale(t.c, product(factors));
  }

  void factor_sum(std::vector<Term> terms, std::vector<int> &parts) {
    for (;;) {
      int best = -1, best_count = 1;
      if (terms.size() >= 2) {
        std::unordered_map<int, int> count;
        for (const Term &t : terms)
          for (size_t i = 0; i < t.f.size(); i++)
            if (std::find(t.f.begin(), t.f.begin() + i, t.f[i]) == t.f.begin() + i)
              count[t.f[i]]++;
        for (const auto &kv : count)
          if (kv.second > best_count || (kv.second == best_count && best >= 0 &&
                                         compare(kv.first, best) < 0))
            best = kv.first, best_count = kv.second;
      }
      if (best < 0) {
        for (const Term &t : terms) parts.push_back(build_term(t));
        return;
      }
      std::vector<Term> with, without;
      for (Term &t : terms) {
        auto it = std::find(t.f.begin(), t.f.end(), best);
        if (it == t.f.end()) {
          without.push_back(std::move(t));
        } else {
          t.f.erase(it);
          with.push_back(std::move(t));
        }
      }
      std::vector<int> inner;
      factor_sum(std::move(with), inner);
      parts.push_back(mul({best, make_sum(inner)}));
      terms = std::move(without);
    }
  }

  /* The sum of already factored parts. */
  int make_sum(std::vector<int> parts) {
    /* factoring can leave numbers among the parts: 2*x - 2*x is x*(2 - 2) */
    double c = 0;
    std::vector<int> rest;
    for (int a : parts) {
      double v;
      if (is_num(a, &v)) c += v;
      else rest.push_back(a);
    }
    rest = group_coefficients(rest);
    if (c != 0) rest.push_back(num(c));
    if (rest.empty()) return num(0);
    if (rest.size() == 1) return rest[0];
    /* x - y and y - x are one node (and a NEG): GiNaC picks either sign for
    ** a sum depending on its term order.  The term whose sign-free part
    ** sorts first is made positive. */
    int first = -1, first_base = -1;
    for (int a : rest) {
      int base = negative(a) ? neg(a) : a;
      if (first < 0 || compare(base, first_base) < 0) first = a, first_base = base;
    }
    bool flip = negative(first);
    if (flip)
      for (int &a : rest) a = neg(a);
    TNode n = blank(IR_ADD);
    n.args = rest;
    int sum = intern(n);
    return flip ? neg(sum) : sum;
  }

  /* k*x + k*y - k*z + w -> k*(x + y - z) + w: one product per coefficient
  ** that several terms share (GiNaC spreads a number over a sum, so scaled
  ** sums come back as sums of scaled terms).  Groups are keyed by |k| and
  ** formed in order of it, so the result depends only on the content. */
  std::vector<int> group_coefficients(const std::vector<int> &parts) {
    std::vector<std::pair<double, int>> keyed;  /* |k|, index into parts */
    for (size_t i = 0; i < parts.size(); i++) {
      double k = 1;
      strip(parts[i], &k);
      if (std::fabs(k) != 1) keyed.push_back({std::fabs(k), (int)i});
    }
    std::sort(keyed.begin(), keyed.end());
    std::vector<bool> taken(parts.size(), false);
    std::vector<int> out;
    for (size_t i = 0; i < keyed.size();) {
      size_t j = i;
      while (j < keyed.size() && keyed[j].first == keyed[i].first) j++;
      if (j - i >= 2) {
        const double k = keyed[i].first;
        std::vector<int> inner;
        for (size_t m = i; m < j; m++) {
          double c = 1;
          int core = strip(parts[keyed[m].second], &c);
          inner.push_back(c < 0 ? neg(core) : core);
          taken[keyed[m].second] = true;
        }
        out.push_back(scale(k, make_sum(inner)));
      }
      i = j;
    }
    for (size_t i = 0; i < parts.size(); i++)
      if (!taken[i]) out.push_back(parts[i]);
    return out;
  }

  /* Does the node carry a visible minus sign (-x, -2*x, a negative number)? */
  bool negative(int id) const {
    double c;
    int x;
    if (is_num(id, &c)) return c < 0;
    if (nodes[id].op == IR_NEG) return true;
    return scaled(id, &c, &x) && c < 0;
  }

  /* Product of non-numeric factors, no coefficient. */
  int product(const std::vector<int> &factors) {
    /* products are flat, so that (a*b)*c and a*(b*c) are one node, and
    ** repeated factors are powers: x * x^2 is x^3 */
    std::vector<std::pair<int, double>> powers;  /* base, exponent */
    auto push = [&](int a) {
      const TNode &n = nodes[a];
      double k;
      if (n.op == IR_POW && is_num(n.args[1], &k)) powers.push_back({n.args[0], k});
      else powers.push_back({a, 1});
    };
    for (int a : factors) {
      double v;
      int x;
      bool plain = !is_num(a) && nodes[a].op != IR_NEG && !scaled(a, &v, &x);
      assert(plain);
      (void)plain, (void)v, (void)x;
      if (nodes[a].op == IR_MUL)
        for (int b : std::vector<int>(nodes[a].args)) push(b);
      else
        push(a);
    }
    std::sort(powers.begin(), powers.end());
    std::vector<int> flat;
    for (size_t i = 0; i < powers.size();) {
      size_t j = i;
      double k = 0;
      for (; j < powers.size() && powers[j].first == powers[i].first; j++) k += powers[j].second;
      int f = pow_num(powers[i].first, k);
      assert(!is_num(f));
      if (nodes[f].op == IR_MUL)  /* b^(n + 1/2) = b^n * sqrt(b) */
        for (int b : std::vector<int>(nodes[f].args)) flat.push_back(b);
      else
        flat.push_back(f);
      i = j;
    }
    if (flat.size() == 1) return flat[0];
    if (flat.empty()) return num(1);
    TNode n = blank(IR_MUL);
    n.args = flat;
    return intern(n);
  }

  /* c * x with the coefficient kept outside x, so x is shared. */
  int scale(double c, int x) {
    double v;
    int y;
    /* one normal form for c*x: x carries no sign and no coefficient */
    if (nodes[x].op == IR_NEG) c = -c, x = nodes[x].args[0];
    if (scaled(x, &v, &y)) c *= v, x = y;
    if (c == 0 || is_num_value(x, 0)) return num(0);
    if (is_num(x, &v)) return num(c * v);
    if (c == 1) return x;
    if (c == -1) return neg(x);
    TNode n = blank(IR_MUL);
    n.args = {num(c), x};
    return intern(n);
  }

  int mul(const std::vector<int> &factors) {
    double c = 1;
    std::vector<int> rest;
    for (int a : factors) {
      double v;
      int x;
      const TNode &n = nodes[a];
      if (is_num(a, &v)) {
        c *= v;
      } else if (n.op == IR_NEG) {
        c = -c;
        rest.push_back(n.args[0]);
      } else if (scaled(a, &v, &x)) {
        c *= v;  /* keep coefficients outside, so x is shared */
        rest.push_back(x);
      } else {
        rest.push_back(a);
      }
    }
    if (c == 0) return num(0);
    return scale(c, product(rest));
  }

  /* x = c * core, with core unsigned and free of a numeric coefficient
  ** (a number has core 1). */
  int strip(int x, double *c) {
    double v;
    int y;
    if (is_num(x, &v)) {
      *c *= v;
      return num(1);
    }
    if (nodes[x].op == IR_NEG) *c = -*c, x = nodes[x].args[0];
    if (scaled(x, &v, &y)) *c *= v, x = y;
    return x;
  }

  int div(int a, int b) {
    double ca = 1, cb = 1;
    a = strip(a, &ca);
    b = strip(b, &cb);
    if (cb == 0) throw SymError{loc, "the equations divide by zero"};
    if (ca == 0) return num(0);
    /* signs and coefficients go outside: (-2a)/(3b) is -2/3 * (a/b) */
    if (is_num_value(b, 1)) return scale(ca / cb, a);
    TNode n = blank(IR_DIV);
    n.args = {a, b};
    return scale(ca / cb, intern(n));
  }

  int call(IrFn fn, const std::vector<int> &args) {
    bool constant = true;
    std::vector<double> v(args.size());
    for (size_t i = 0; i < args.size(); i++) constant = constant && is_num(args[i], &v[i]);
    if (constant) return num(builtin_value(fn, v.data()));  /* as the generated C computes it */
    if (args.size() == 1 && negative(args[0])) {
      /* f(-x) by parity: one node for sin(a - b) and sin(b - a) */
      int x = neg(args[0]);
      switch (fn) {
        case IRF_COS: case IRF_COSH: case IRF_ABS: return call(fn, {x});
        case IRF_SIN: case IRF_TAN: case IRF_ASIN: case IRF_ATAN: case IRF_SINH:
        case IRF_TANH: case IRF_SIGN: return neg(call(fn, {x}));
        default: break;
      }
    }
    TNode n = blank(IR_CALL);
    n.fn = fn;
    n.args = args;
    return intern(n);
  }

  int pow_num(int base, double k) {
    double v;
    if (k == 0) return num(1);
    if (k == 1) return base;
    if (is_num(base, &v)) return num(std::pow(v, k));
    if (k == 0.5) return call(IRF_SQRT, {base});
    if (k < 0) return div(num(1), pow_num(base, -k));
    if (k == std::floor(k)) {
      /* (c x)^k = c^k x^k for integer k: no sign or coefficient inside */
      double c = 1;
      int x = strip(base, &c);
      if (c != 1) return scale(std::pow(c, k), pow_num(x, k));
    }
    /* b^(n + 1/2) = b^n * sqrt(b): the sqrt node is shared with its other uses */
    if (k - std::floor(k) == 0.5 && k < 8)
      return mul({pow_num(base, std::floor(k)), call(IRF_SQRT, {base})});
    TNode n = blank(IR_POW);
    n.args = {base, num(k)};
    return intern(n);
  }

  /* ---- translation from GiNaC ---- */

  double number_of(const numeric &x) {
    if (!x.is_real())
      throw SymError{loc, "the equations contain a complex number (e.g. sqrt or log of a "
                          "negative constant)"};
    double d = x.to_double();
    if (std::fabs(d) < DBL_MIN && !x.is_zero()) {
      /* CLN flushes values below the normal range to 0: 1e-320 must stay
      ** a (subnormal) 1e-320, so read it back from its decimal text */
      std::ostringstream os;
      os << x.evalf();
      d = std::strtod(os.str().c_str(), nullptr);
    }
    return d;
  }

  int translate(const ex &e) {
    const basic *b = &ex_to<basic>(e);
    auto it = memo.find(b);
    if (it != memo.end()) return it->second.second;
    int id = translate_new(e);
    memo.emplace(b, std::make_pair(e, id));
    return id;
  }

  int translate_new(const ex &e) {
    NodeKind kind = node_kind(e);
    if (kind == NK_NUMERIC) return num(number_of(ex_to<numeric>(e)));
    if (kind == NK_SYMBOL) {
      auto v = vars.find(e);
      if (v == vars.end())
        throw SymError{loc, "internal: unknown symbol '" + ex_to<symbol>(e).get_name() +
                                "' in the equations"};
      return var(v->second.var, v->second.index);
    }
    if (kind == NK_CONSTANT) {
      ex v = e.evalf();
      if (!is_a<numeric>(v)) throw SymError{loc, "internal: constant without a value"};
      return num(number_of(ex_to<numeric>(v)));
    }
    if (kind == NK_ADD) {
      std::vector<int> terms;
      for (const expair &p : PairAccess::pairs(e))
        terms.push_back(scale(number_of(ex_to<numeric>(p.coeff)), translate(p.rest)));
      terms.push_back(num(number_of(ex_to<numeric>(PairAccess::overall(e)))));
      return add(terms);
    }
    if (kind == NK_MUL) return translate_mul(e);
    if (kind == NK_POWER) {
      const ex &expo = e.op(1);
      if (is_a<numeric>(expo) && ex_to<numeric>(expo).is_real())
        return pow_num(translate(e.op(0)), number_of(ex_to<numeric>(expo)));
      TNode n = blank(IR_POW);
      n.args = {translate(e.op(0)), translate(expo)};
      return intern(n);
    }
    if (kind == NK_FUNCTION) {
      const std::string &name = ex_to<function>(e).get_name();
      /* Every model quantity is real, but GiNaC cannot always prove it (abs(z)^2
      ** of a z with a fractional power becomes z*conjugate(z)): for reals the
      ** conjugate and the real part are the value itself, the imaginary part 0. */
      if (name == "conjugate" || name == "real_part") return translate(e.op(0));
      if (name == "imag_part") return num(0);
      int fn = ginac_builtin(name);
      if (fn >= 0 && (int)e.nops() == scalar_builtins[fn].arity) {
        std::vector<int> args;
        for (size_t i = 0; i < e.nops(); i++) args.push_back(translate(e.op(i)));
        return call((IrFn)fn, args);
      }
      throw SymError{loc, "the equations contain the function '" + name +
                              "', which has no C translation"};
    }
    std::ostringstream os;
    os << e;
    throw SymError{loc, "internal: cannot translate '" + os.str().substr(0, 60) + "' to C"};
  }

  /* coefficient * (numerator factors) / (denominator factors) */
  int translate_mul(const ex &e) {
    std::vector<int> up, down;
    for (const expair &p : PairAccess::pairs(e)) {
      double k = number_of(ex_to<numeric>(p.coeff));
      if (k < 0) down.push_back(pow_num(translate(p.rest), -k));
      else up.push_back(pow_num(translate(p.rest), k));
    }
    /* mul() folds factors that became numbers (e.g. sin of a constant) */
    int top = mul(up), bottom = mul(down);
    int x = is_num_value(bottom, 1) ? top : div(top, bottom);
    return scale(number_of(ex_to<numeric>(PairAccess::overall(e))), x);
  }

  /* ---- final numbering ---- */

  void number(int id, std::vector<int> &final_index, std::vector<int> &order) {
    if (final_index[id] >= 0) return;
    for (int a : nodes[id].args) number(a, final_index, order);
    assert(final_index[id] < 0);
    final_index[id] = (int)order.size();
    order.push_back(id);
  }
};

IrBuilder::IrBuilder(const VarTable &vars) : impl_(new Impl(vars)) {}
IrBuilder::~IrBuilder() = default;

int IrBuilder::add_root(const ex &e, SrcLoc loc) {
  impl_->loc = loc;
  impl_->roots.push_back(impl_->translate(e));
  return (int)impl_->roots.size() - 1;
}

void IrBuilder::finish(IrGraph *g, std::vector<int> &roots) {
  Impl &im = *impl_;
  std::vector<int> final_index(im.nodes.size(), -1), order;
  for (int r : im.roots) im.number(r, final_index, order);
  g->nnodes = (int)order.size();
  g->nodes = (IrNode *)calloc(order.size() ? order.size() : 1, sizeof(IrNode));
  if (!g->nodes) throw std::bad_alloc();
  for (size_t i = 0; i < order.size(); i++) {
    const TNode &t = im.nodes[order[i]];
    IrNode &n = g->nodes[i];
    n.op = t.op;
    n.fn = t.fn;
    n.var = t.var;
    n.index = t.index;
    n.num = t.num;
    n.nargs = (int)t.args.size();
    n.args = nullptr;
    if (n.nargs) {
      n.args = (int *)malloc(sizeof(int) * t.args.size());
      if (!n.args) throw std::bad_alloc();
      for (int k = 0; k < n.nargs; k++) {
        n.args[k] = final_index[t.args[k]];
        assert(n.args[k] >= 0 && n.args[k] < (int)i);
      }
    }
  }
  roots.resize(im.roots.size());
  for (size_t h = 0; h < im.roots.size(); h++) roots[h] = final_index[im.roots[h]];
}

}  // namespace eomsym
