/*
** symbolic_internal.h — what the C++ files of the symbolic core share.
**
** symbolic.cc and its companions (listed at "the derivation" below) derive
** GiNaC expressions from the model; ir_build.cc turns them into the
** deterministic, hash-consed IrGraph.  Neither the C parts of
** the compiler nor the emitter see this header: their interface is symbolic.h.
**
** Errors inside the core are thrown as SymError and turned into one Diag
** error at the C boundary (sym_derive), so deep code never has to unwind by
** hand and never exits.
*/
#ifndef EOMC_SYMBOLIC_INTERNAL_H
#define EOMC_SYMBOLIC_INTERNAL_H

#include <ginac/ginac.h>

#include <chrono>
#include <cstdint>
#include <functional>
#include <map>
#include <memory>
#include <string>
#include <typeinfo>
#include <unordered_map>
#include <vector>

/* The shared C headers carry no extern "C" of their own. */
extern "C" {
#include "front/ast.h"
#include "front/check.h"
#include "front/diag.h"
}
#include "sym/ir.h"
#include "sym/symbolic.h"

namespace eomsym {

/* The built-in scalar functions on the GiNaC side (symbolic_builtins.cc). */
DECLARE_FUNCTION_2P(eom_min)
DECLARE_FUNCTION_2P(eom_max)
DECLARE_FUNCTION_1P(eom_step)
DECLARE_FUNCTION_3P(eom_clamp)
/* f of the arguments a, as GiNaC builds it (sign is csgn, sqrt a power). */
GiNaC::ex make_builtin(BuiltinFn f, const GiNaC::exvector &a);
/* The BuiltinFn of a GiNaC function's name, -1 when it is not one. */
int ginac_builtin(const std::string &name);
/* d e / d var of e = f(a...), given the arguments' derivatives d (the
** branch derivative for the non-smooth ones). */
GiNaC::ex builtin_derivative(BuiltinFn f, const GiNaC::ex &e, const GiNaC::exvector &a,
                             const GiNaC::exvector &d);

/* A model error found by the core, reported at `loc` (line 0: no place). */
struct SymError {
  SrcLoc loc;
  std::string msg;
};

/* GiNaC keeps the (rest, coeff) pairs of sums and products protected, and
** op(i) recombines each pair into a new object, which defeats memoising on
** node addresses.  This reads them in place: for an add, rest*coeff terms
** plus overall_coeff; for a mul, rest^coeff factors times overall_coeff. */
struct PairAccess : GiNaC::expairseq {
  static const GiNaC::epvector &pairs(const GiNaC::ex &e) {
    return GiNaC::ex_to<GiNaC::expairseq>(e).*(&PairAccess::seq);
  }
  static const GiNaC::ex &overall(const GiNaC::ex &e) {
    return GiNaC::ex_to<GiNaC::expairseq>(e).*(&PairAccess::overall_coeff);
  }
};

/* The GiNaC classes the core meets, found by comparing type_info addresses:
** is_a<>() is a dynamic_cast that ends in strcmp on type names, and the
** core asks this once per node per pass. */
enum NodeKind { NK_NUMERIC, NK_SYMBOL, NK_CONSTANT, NK_ADD, NK_MUL, NK_POWER, NK_FUNCTION, NK_OTHER };

inline NodeKind node_kind(const GiNaC::ex &e) {
  const GiNaC::basic &b = GiNaC::ex_to<GiNaC::basic>(e);
  const std::type_info &t = typeid(b);
  if (&t == &typeid(GiNaC::mul)) return NK_MUL;
  if (&t == &typeid(GiNaC::add)) return NK_ADD;
  if (&t == &typeid(GiNaC::power)) return NK_POWER;
  if (&t == &typeid(GiNaC::function)) return NK_FUNCTION;
  if (&t == &typeid(GiNaC::numeric)) return NK_NUMERIC;
  if (&t == &typeid(GiNaC::realsymbol)) return NK_SYMBOL;
  /* slow path: another address for the same class, or a subclass */
  if (GiNaC::is_a<GiNaC::numeric>(e)) return NK_NUMERIC;
  if (GiNaC::is_a<GiNaC::symbol>(e)) return NK_SYMBOL;
  if (GiNaC::is_a<GiNaC::constant>(e)) return NK_CONSTANT;
  if (GiNaC::is_a<GiNaC::add>(e)) return NK_ADD;
  if (GiNaC::is_a<GiNaC::mul>(e)) return NK_MUL;
  if (GiNaC::is_a<GiNaC::power>(e)) return NK_POWER;
  if (GiNaC::is_a<GiNaC::function>(e)) return NK_FUNCTION;
  return NK_OTHER;
}

/* Which IR variable a GiNaC symbol stands for. */
struct VarRef {
  IrVar var;
  int index;
};
typedef std::map<GiNaC::ex, VarRef, GiNaC::ex_is_less> VarTable;

/* Builds one IrGraph from many roots.  Equal subexpressions become one node
** whatever GiNaC's (run-dependent) operand order; node numbers depend only on
** the roots' content and the order in which they were added. */
class IrBuilder {
 public:
  explicit IrBuilder(const VarTable &vars);
  ~IrBuilder();
  IrBuilder(const IrBuilder &) = delete;
  IrBuilder &operator=(const IrBuilder &) = delete;

  /* Add a root; returns its handle for finish().  Throws SymError at `loc`
  ** when `e` holds something C cannot compute (a complex number, an
  ** unknown function). */
  int add_root(const GiNaC::ex &e, SrcLoc loc);

  /* Number the nodes reachable from the roots (depth first, roots in the
  ** order added, arguments in canonical order) and write them to `g`
  ** (malloc'd; freed by sym_free).  roots[h] becomes the node index of the
  ** root with handle h. */
  void finish(IrGraph *g, std::vector<int> &roots);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};


/* One step of a chain of frames: the turn by `angle` about the frame's axis
** `axis` (0, 1, 2 for x, y, z) as rotx/roty/rotz make it, or a shift of the
** origin by s (in the frame's axes), as the translations of a 4x4 transform. */
struct Turn {
  int axis;
  GiNaC::ex angle;
  bool shift;
  GiNaC::ex s[3];
  Turn() : axis(0), shift(false) {}
  Turn(int axis_, const GiNaC::ex &angle_) : axis(axis_), angle(angle_), shift(false) {}
};

/* v <- F^T v: a vector in the axes before turn F, expressed in the axes after
** it (a shift leaves directions alone). */
void turn_back(const Turn &f, GiNaC::ex v[3]);
/* v <- F v: the other way (a shift leaves directions alone). */
void turn_forward(const Turn &f, GiNaC::ex v[3]);

/* What the frame tree needs from the derivation (symbolic_chain.cc). */
struct ChainTools {
  int nq;
  GiNaC::ex gravity[3];                                   /* world frame */
  std::function<GiNaC::ex(const GiNaC::ex &)> rate;       /* d/dt; q'' may appear */
  std::function<GiNaC::ex(const GiNaC::ex &)> no_accel;   /* q'' -> 0 */
  std::function<GiNaC::ex(int, const GiNaC::ex &)> d_dq;
  std::function<void(const char *)> tick;                 /* time-limit check */
};

/* The tree of frames that the chains of placed rigid bodies pass through,
** with the dynamics of the bodies worked the way recursive algorithms work
** in link frames (symbolic_chain.cc): velocities and bias accelerations
** outward, composite inertias and inertia forces inward. */
class FrameTree {
 public:
  explicit FrameTree(const ChainTools &tools);
  ~FrameTree();
  FrameTree(const FrameTree &) = delete;
  FrameTree &operator=(const FrameTree &) = delete;

  /* The frame after the first n steps (made, with its parents, when new). */
  int frame(const std::vector<Turn> &steps, size_t n);

  /* A rigid body on frame k: mass centre at `local` (frame k's axes; may
  ** depend on q and t) and, unless null, the 3x3 row-major inertia about
  ** the mass centre in frame k's axes.  Returns its kinetic energy. */
  GiNaC::ex add_body(int k, const GiNaC::ex &mass, const GiNaC::ex local[3],
                     const GiNaC::ex *inertia);

  /* Adds the bodies' mass matrix to M (nq x nq) and sets bias (nq) to their
  ** generalized inertia and gravity forces at q'' = 0 and full to the same
  ** with q'' (= M q'' + bias, in the recursive form: the inverse dynamics). */
  void equations(std::vector<std::vector<GiNaC::ex>> &M, std::vector<GiNaC::ex> &bias,
                 std::vector<GiNaC::ex> &full);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/* What symbolic_control.cc needs from the derivation in symbolic.cc: the
** Lagrangian and its pieces with every atom replaced (in t, q, q', u, p),
** and the memoised derivatives and numeric probe of the derivation. */
struct ControlInput {
  int nq, nu;
  std::vector<std::string> coord_names, input_names;
  std::vector<GiNaC::ex> qd;
  GiNaC::ex L;                                   /* T - V + lagrangian terms */
  std::vector<std::vector<GiNaC::ex>> M;         /* mass matrix */
  std::vector<GiNaC::ex> dM;                     /* [k*n*n + i*n + j] = dM_ij/dq_k */
  std::vector<GiNaC::ex> force;                  /* Q_i from force and torque statements */
  std::vector<GiNaC::ex> dDdqd;                  /* dD/dq'_i */
  std::vector<GiNaC::ex> constraints;            /* phi */
  std::vector<GiNaC::ex> vc_A, vc_b;             /* velocity constraints A q' = b (nvc*nq, nvc) */
  std::function<GiNaC::ex(int, const GiNaC::ex &)> d_dq, d_dqd, d_du;
  std::function<GiNaC::ex(const GiNaC::ex &)> d_dt;
  std::function<GiNaC::ex(const GiNaC::ex &, const GiNaC::exmap &)> substitute;
  std::function<bool(const GiNaC::ex &, const GiNaC::ex &)> nonzero_somewhere;
  /* non-empty: no split, for this reason (the Christoffel form of C holds
  ** for coordinates, not for the angular velocities of attitudes) */
  std::string no_split;
};

/* The split M q'' + C q' + g = Q - dD/dq', momenta, energy function and the
** constants of the motion (symbolic_control.cc). */
struct ControlResult {
  bool split = false;
  std::string split_why;                 /* when !split */
  std::vector<GiNaC::ex> coriolis;       /* nq*nq, empty without the split */
  std::vector<GiNaC::ex> gravity;        /* nq, empty without the split */
  std::vector<GiNaC::ex> momenta;        /* nq: dL/dq' */
  GiNaC::ex hamiltonian;                 /* q'.dL/dq' - L */
  bool energy_conserved = false;
  std::string energy_why;                /* when !energy_conserved */
  std::vector<int> cyclic;               /* nq flags */
};

void derive_control(const ControlInput &in, ControlResult *out);

/* The regressor form of the inverse dynamics tau = Y pi + tau0 for the
** parameters pi named by `identify` (symbolic_control.cc); throws SymError
** naming a term when tau is not linear in pi. */
struct RegressorInput {
  std::vector<GiNaC::ex> inverse;                /* tau_i(t, q, qd, qdd, p), u = 0 */
  std::vector<GiNaC::ex> pi;                     /* the identified parameters' symbols */
  std::vector<std::string> pi_names;
  std::vector<std::pair<SrcLoc, GiNaC::ex>> terms;  /* model terms, to name a culprit */
  std::function<GiNaC::ex(int, const GiNaC::ex &)> d_dpi;
  std::function<GiNaC::ex(const GiNaC::ex &, const GiNaC::exmap &)> substitute;
  std::function<bool(const GiNaC::ex &, const GiNaC::ex &)> nonzero_somewhere;
};
struct RegressorResult {
  std::vector<GiNaC::ex> Y;       /* nq*ni */
  std::vector<GiNaC::ex> offset;  /* nq: tau at pi = 0 */
};
void derive_regressor(const RegressorInput &in, RegressorResult *out);

/* The outputs' kinematics (symbolic_outputs.cc): every output entry in
** t, q, q', u, p (atoms replaced), grouped by declaration. */
struct KinematicsInput {
  int nq, nu;
  std::vector<GiNaC::ex> qd;
  std::vector<GiNaC::ex> outputs;                /* ny */
  struct Group {
    size_t first, count;                         /* its entries of y */
    bool frame;                                  /* 12 entries: position, R row by row */
    SrcLoc loc;
  };
  std::vector<Group> groups;                     /* in declaration order */
  std::function<GiNaC::ex(int, const GiNaC::ex &)> d_dq, d_dqd, d_du;
  std::function<GiNaC::ex(const GiNaC::ex &)> d_dt;
  std::function<void(const char *)> tick;
};
struct KinematicsResult {
  std::vector<int> kinematic;                    /* ny: 1 when the output is y(q, p) */
  std::vector<GiNaC::ex> jacobian;               /* ny*nq dy/dq (0 rows where not kinematic) */
  std::vector<GiNaC::ex> bias;                   /* ny: J' q' */
  std::vector<GiNaC::ex> frame_jacobian;         /* per frame 6*nq: linear over angular */
  std::vector<GiNaC::ex> frame_bias;             /* per frame 6 */
};
/* Throws SymError at a frame whose transform depends on t. */
void derive_kinematics(const KinematicsInput &in, KinematicsResult *out);
/* J' q' = sum_j (sum_k dJ_j/dq_k q'_k) q'_j for a row J(q) of nq entries. */
GiNaC::ex bias_of(const KinematicsInput &in, const std::vector<GiNaC::ex> &row);

/* Attitude coordinates (symbolic_attitude.cc): R(q) row-major for a unit
** quaternion q = [w, x, y, z], the map N(q) (4x3 row-major) with
** q' = N(q) omega for the body-frame omega, and a x b. */
void attitude_rotation(const GiNaC::ex q[4], GiNaC::ex R[9]);
void attitude_rate_map(const GiNaC::ex q[4], GiNaC::ex N[12]);
void attitude_cross(const GiNaC::ex a[3], const GiNaC::ex b[3], GiNaC::ex out[3]);


/* ================================================================ the derivation
** The class Derivation turns a checked model into the roots of one IrGraph.
** Its methods live in one file per job:
**   symbolic_calculus.cc   numbers, differentiation with memos, substitution,
**                          the numeric probes at pseudo-random points
**   symbolic_eval.cc       model expressions -> values (scalars, vectors,
**                          matrices, rotations known as products of turns)
**   symbolic_bodies.cc     statements: terms, bodies, rotations, forces at
**                          points, torques; bodies placed on frame chains
**   symbolic_constraints.cc position and velocity constraints, integrability
**   symbolic.cc            the Euler-Lagrange assembly, M, f, Jacobians, the
**                          inverse dynamics, the C entry points
**   symbolic_roots.cc      everything derived -> roots of the graph, EomSystem
*/

/* An error not tied to one place in the file. */
extern const SrcLoc kNoLoc;

/* printf into a std::string (messages; 512 bytes at most). */
std::string fmt(const char *f, ...) __attribute__((format(printf, 1, 2)));

/* The exact rational a double literal stands for (symbolic_calculus.cc). */
GiNaC::ex exact_number(double v, SrcLoc loc);

/* Which of the variables (t, q, q', q'', u) each node contains, as a bit
** set per node, memoised and shared by all Derivers: differentiation then
** skips every subtree free of its variable without visiting it. */
class DepCache {
 public:
  /* Variables may be added at any time: a node built before a variable
  ** existed cannot contain it, so the sets already computed stay right. */
  int add_var(const GiNaC::ex &sym);
  bool contains(const GiNaC::ex &e, int id);

 private:
  std::map<GiNaC::ex, int, GiNaC::ex_is_less> ids_;
  size_t words_ = 0;
  std::vector<uint64_t> pool_;  /* words_ per node; offset 0 is the empty set */
  std::unordered_map<const GiNaC::basic *, std::pair<GiNaC::ex, size_t>> at_;

  size_t offset(const GiNaC::ex &e);
};

/* d/d(var) with a memo: each distinct GiNaC node containing var is
** differentiated once.  Built-in functions use the textbook derivatives
** (abs' = csgn, csgn' = 0 away from 0, branch derivatives of min, max, step,
** clamp: symbolic_builtins.cc), which keeps GiNaC's conjugate() forms out of
** the results. */
class Deriver {
 public:
  Deriver(const GiNaC::ex &var, int id, DepCache *deps);
  GiNaC::ex operator()(const GiNaC::ex &e);

 private:
  GiNaC::ex var_;
  int id_;
  DepCache *deps_;
  std::unordered_map<const GiNaC::basic *, std::pair<GiNaC::ex, GiNaC::ex>> memo_;

  GiNaC::ex fresh(const GiNaC::ex &e);
  GiNaC::ex function_derivative(const GiNaC::ex &e);
};

/* Substitution with a memo (GiNaC's subs() walks shared subtrees once per path). */
class Subst : public GiNaC::map_function {
 public:
  explicit Subst(const GiNaC::exmap &repl) : repl_(repl) {}
  GiNaC::ex operator()(const GiNaC::ex &e) override;

 private:
  GiNaC::exmap repl_;
  std::unordered_map<const GiNaC::basic *, std::pair<GiNaC::ex, GiNaC::ex>> memo_;
};

/* Value of e at a point (every symbol of e replaced by a float); NaN if
** the point is singular for e. */
double value_at(const GiNaC::ex &e, Subst &point);

/* ------------------------------------------------------------ values */

/* A value of the model language: a rows x cols matrix, row-major;
** a scalar is 1x1 and a vector n x 1.  A 3x3 rotation (or the rotation part
** of a 4x4 transform whose last row is 0 0 0 1) built only from rotx, roty,
** rotz, dh, rot, transpose and products also remembers its factors in
** `turns`: a body's angular velocity is then read off the factors, the way
** recursive algorithms work in link frames (see add_rotation). */
struct Val {
  int rows, cols;
  std::vector<GiNaC::ex> a;
  std::shared_ptr<const std::vector<Turn>> turns;  /* null: not known as a product */
  /* A 3-vector known as a point T * [local; 1] (placed 1) of the transform T
  ** whose steps are `turns`, or as a direction R * local (placed 2) of the
  ** rotation R whose turns are `turns`: a body's velocity is then read off
  ** the steps too (see add_translation). */
  int placed = 0;
  GiNaC::ex local[3];
  /* A 3x3 rotation known as R_att F_1 ... F_m: attitude `att` (-1: not so)
  ** followed by the turns `att_rest` (null: none).  A body's angular
  ** velocity is then omega(R_att) carried through the turns (add_rotation). */
  int att = -1;
  std::shared_ptr<const std::vector<Turn>> att_rest;
  explicit Val(const GiNaC::ex &e) : rows(1), cols(1), a(1, e) {}
  Val(int r, int c) : rows(r), cols(c), a((size_t)r * c, GiNaC::ex(0)) {}
  bool scalar() const { return rows == 1 && cols == 1; }
  bool vector() const { return cols == 1 || rows == 1; }
  int size() const { return rows * cols; }
  GiNaC::ex &at(int i, int j) { return a[(size_t)i * cols + j]; }
  const GiNaC::ex &at(int i, int j) const { return a[(size_t)i * cols + j]; }
};

/* Is the last row of a 4x4 transform exactly 0 0 0 1? */
bool last_row_is_unit(const Val &T);
/* Do the steps of a transform turn like the rotation `turns`? */
bool same_turns(const std::vector<Turn> &steps, const std::vector<Turn> &turns);
/* "a scalar", "a 3-vector", "a 3x4 matrix": for messages. */
std::string shape_name(const Val &v);

/* ------------------------------------------------------------ the derivation */

struct Term {
  const Stmt *stmt;
  GiNaC::ex e;
};

/* A switching function: e changes sign where the branch function at loc
** changes branch (part: which bound of a clamp). */
struct SwitchFn {
  SrcLoc loc;
  BuiltinFn fn;
  int part;
  GiNaC::ex e;
};

struct RootHandles;  /* symbolic_roots.cc */

/* Everything run() derives before it becomes roots of the graph (see
** symbolic.cc for each piece; n = nq, nc constraints, nvc velocity ones). */
struct Equations {
  GiNaC::ex T, T_rot, V_reported, V_placed, L;   /* energies; L in atoms */
  std::vector<std::vector<GiNaC::ex>> M, M_lagrange;  /* n x n; M_lagrange: without placed bodies */
  std::vector<GiNaC::ex> f, f_lagrange, dDdqd;   /* n */
  std::vector<GiNaC::ex> dM, dfdq, dfdqd, dfdu;  /* n*n*n, n*n, n*n, n*nu */
  std::vector<GiNaC::ex> inv;                    /* n: inverse dynamics at u = 0 */
  std::vector<GiNaC::ex> phi, G, gamma, phi_t;   /* nc, nc*n, nc, nc */
  std::vector<GiNaC::ex> vc_A, vc_b, vc_gamma;   /* nvc*n, nvc, nvc */
  std::vector<GiNaC::ex> stop_g, stop_G, stop_gamma;  /* nstops, nstops*n, nstops */
  ControlResult ctl;
  RegressorResult reg;
  std::vector<GiNaC::ex> outs;                   /* ny */
  std::vector<SrcLoc> out_locs;
  KinematicsResult kr;
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
  GiNaC::ex t_;
  std::vector<GiNaC::ex> q_, qd_, qdd_, u_, p_;  /* qd_, qdd_: v and v' (nv_ each) */
  std::vector<GiNaC::ex> qrate_;                 /* nq_: q' in terms of q and v (N(q) v) */
  /* Per attitude: the symbols r standing for the entries of R while
  ** deriving (row-major), their derivatives, and R(q) that replaces them in
  ** the roots.  With R' = R [omega]x and the body-frame directions
  ** X_c R = R [e_c]x written in r itself, every derivative stays a short
  ** polynomial in r; R(q) enters only at the end (symbolic_attitude.cc). */
  std::vector<std::array<GiNaC::ex, 9>> att_r_, att_Rq_;
  std::vector<Deriver> dr_;                      /* 9 per attitude */
  std::unique_ptr<Subst> att_subst_;             /* r -> R(q) */
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
    GiNaC::ex w;       /* the symbol */
    GiNaC::ex e;       /* the expression whose rate it is */
    GiNaC::ex rate;    /* e' in t, q, q' */
    GiNaC::ex accel;   /* e'' in t, q, q', q'' */
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
    GiNaC::ex mass;
    Val pos;
    bool spins;
    Val I;
    GiNaC::ex T;  /* kinetic energy, set by finish_placed */
  };
  std::vector<Placed> placed_;
  std::vector<bool> body_placed_;  /* per entry of bodies_ */
  std::vector<std::vector<GiNaC::ex>> placed_M_;  /* their mass matrix */
  std::vector<GiNaC::ex> placed_bias_;            /* their forces at q'' = 0 */
  std::vector<GiNaC::ex> placed_full_;            /* and with q'': M q'' + bias */
  std::vector<std::vector<GiNaC::ex>> rot_force_;
  std::vector<GiNaC::ex> rot_energy_;  /* with the translational energy of placed points */
  std::vector<GiNaC::ex> force_;  /* Q_i */

  struct Body {
    const Stmt *stmt;
    GiNaC::ex mass;
    Val pos;
  };
  std::vector<Body> bodies_;
  std::vector<std::pair<const Stmt *, Val>> gravity_;
  std::vector<std::pair<const Stmt *, GiNaC::ex>> constraints_;  /* phi = 0, one per entry */
  std::vector<std::pair<const Stmt *, GiNaC::ex>> vconstraints_;  /* A q' - b = 0, one per entry */
  std::vector<std::pair<const Stmt *, GiNaC::ex>> stops_;         /* gaps LEFT - RIGHT >= 0 */
  /* switching functions of the branch functions in the terms, in source order */
  bool collecting_ = false;
  std::vector<SwitchFn> switches_;
  void note_switches(const Expr *x, BuiltinFn f, const GiNaC::exvector &a);

  void tick(const char *step);
  GiNaC::ex totald(const GiNaC::ex &e);
  GiNaC::ex dv(int j, const GiNaC::ex &e);
  GiNaC::ex dq_full(int k, const GiNaC::ex &e);   /* d/dq_k through R(q) */
  GiNaC::ex along_r(int a, const GiNaC::ex w[3], const GiNaC::ex &e);
  GiNaC::ex with_quaternions(const GiNaC::ex &e);
  void attitude_point(GiNaC::exmap &point);
  std::string rate_name(int j) const;
  Val rate(const Val &v);
  GiNaC::ex unatom(const GiNaC::ex &e);

  Val eval(const Expr *x);
  Val eval_name(const Expr *x);
  Val eval_rate(const Expr *x);
  Val eval_binary(const Expr *x);
  Val eval_call(const Expr *x);
  Val eval_index(const Expr *x);
  Val eval_list(const Expr *x);
  bool place_sum(const Val &P, const Val &dir, Val &sum);
  Val let_value(const Decl *d);
  GiNaC::ex scalar(const Expr *x, const char *what);

  void collect_terms();
  Val vec3(const Expr *x, const char *what);
  Val mat3(const Expr *x, const char *what);
  void add_body(const Stmt *s);
  void check_inertia(const Stmt *s, const Val &I);
  void add_rotation(const Val &R, const Val &I);
  void finish_placed();
  GiNaC::exmap random_point(uint64_t &state, bool rates);
  bool point_matches(const Val &P);
  bool turns_match(const Val &R);
  void add_force_at(const Stmt *s);
  void add_torque(const Stmt *s);
  void add_constraint(const Stmt *s);
  void add_stop(const Stmt *s);
  void derive_velocity_constraints(std::vector<GiNaC::ex> &A, std::vector<GiNaC::ex> &b, std::vector<GiNaC::ex> &gamma);
  bool velocity_constraints_integrable(const std::vector<GiNaC::ex> &A, const std::vector<GiNaC::ex> &b);
  bool depends_on_rates(const GiNaC::ex &e);
  void check_no_qdd(const GiNaC::ex &L);
  void check_mass(std::vector<std::vector<GiNaC::ex>> &M);
  bool nonzero_somewhere(const GiNaC::ex &e, const GiNaC::ex &scale);
  void derive_control_quantities(const GiNaC::ex &L, const std::vector<std::vector<GiNaC::ex>> &M,
                                 const std::vector<GiNaC::ex> &dM, const std::vector<GiNaC::ex> &dDdqd,
                                 const std::vector<GiNaC::ex> &phi, const std::vector<GiNaC::ex> &vc_A,
                                 const std::vector<GiNaC::ex> &vc_b, ControlResult *out);
  /* the `identify` parameters: indices in p, and derivatives in them (made
  ** before any expression, so that the DepCache knows them from the start) */
  std::vector<int> pi_index_;
  std::vector<Deriver> dpi_;
  void derive_regressor_quantities(const std::vector<GiNaC::ex> &inv, RegressorResult *out);

  /* the pieces of run(), in order */
  void derive_lagrange(Equations &eq);
  void derive_jacobians(Equations &eq);
  void derive_constraint_equations(Equations &eq);
  void derive_outputs(Equations &eq);
  void emit_roots(const Equations &eq, EomSystem *out);
  void add_roots(const Equations &eq, IrBuilder &b, RootHandles &h);
  void write_roots(const Equations &eq, const RootHandles &h, const std::vector<int> &roots,
                   EomSystem *out);
};

}  // namespace eomsym

#endif
