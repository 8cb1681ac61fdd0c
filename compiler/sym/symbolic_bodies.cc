/*
** symbolic_bodies.cc — the statements of a model as pieces of the
** equations: energy and dissipation terms, generalized forces, rigid
** bodies (point masses, rotating bodies, bodies placed on chains of
** frames), forces at points and torques.  Constraints are in
** symbolic_constraints.cc; the assembly of the Euler-Lagrange equations
** from these pieces is in symbolic.cc.
*/
#include "sym/symbolic_internal.h"  /* first: wraps the C headers in extern "C" */

#include <array>
#include <cassert>
#include <cmath>
#include <cstring>

using namespace GiNaC;

namespace eomsym {

bool same_turns(const std::vector<Turn> &steps, const std::vector<Turn> &turns) {
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
        case ST_STOP: add_stop(s); break;
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
  attitude_point(point);
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
  static const std::vector<Turn> no_turns;
  if (R.att >= 0 || (R.turns && turns_match(R))) {
    /* R = R_att F_1 ... F_m: the attitude's omega (body axes of R_att) is
    ** carried out through the turns like a turn's axis, per entry */
    const std::vector<Turn> &f = R.att >= 0 ? (R.att_rest ? *R.att_rest : no_turns) : *R.turns;
    const size_t m = f.size();
    exvector wt[3];
    for (int c = 0; R.att >= 0 && c < 3; c++) {
      const int j = ncoord_ + 3 * R.att + c;
      ex v[3] = {0, 0, 0};
      v[c] = 1;
      for (size_t l = 0; l < m; l++) turn_back(f[l], v);
      for (int k = 0; k < 3; k++) {
        W[j][k] = W[j][k] + v[k];
        if (!v[k].is_zero()) wt[k].push_back(qd_[j] * v[k]);
      }
    }
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

}  // namespace eomsym
