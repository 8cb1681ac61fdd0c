/*
** symbolic_internal.h — what the C++ files of the symbolic core share.
**
** symbolic.cc derives GiNaC expressions from the model; ir_build.cc turns
** them into the deterministic, hash-consed IrGraph.  Neither the C parts of
** the compiler nor the emitter see this header: their interface is symbolic.h.
**
** Errors inside the core are thrown as SymError and turned into one Diag
** error at the C boundary (sym_derive), so deep code never has to unwind by
** hand and never exits.
*/
#ifndef EOMC_SYMBOLIC_INTERNAL_H
#define EOMC_SYMBOLIC_INTERNAL_H

#include <ginac/ginac.h>

#include <functional>
#include <map>
#include <memory>
#include <string>
#include <typeinfo>
#include <vector>

/* The shared C headers carry no extern "C" of their own. */
extern "C" {
#include "front/ast.h"
#include "front/check.h"
#include "front/diag.h"
}
#include "sym/ir.h"

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

}  // namespace eomsym

#endif
