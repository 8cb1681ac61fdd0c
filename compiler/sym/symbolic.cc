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
** This file holds the assembly: the Derivation's symbols, total derivatives
** and atoms, the Euler-Lagrange equations and their Jacobians, and the C
** entry points.  The model's expressions are evaluated in symbolic_eval.cc,
** its statements read in symbolic_bodies.cc and symbolic_constraints.cc,
** the calculus is in symbolic_calculus.cc and the roots of the graph are
** made in symbolic_roots.cc (the map is in symbolic_internal.h).
**
** Speed comes from never expanding (products of sums stay as they are) and
** from differentiating with a memo per variable (symbolic_calculus.cc).
*/
#include "sym/symbolic_internal.h"  /* first: wraps the C headers in extern "C" */

#include <cassert>
#include <cstdio>
#include <cstdlib>
#include <cstring>

#include "sym/constraint_rank.h"

using namespace GiNaC;

namespace eomsym {

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
    for (int k = 0; k < 4; k++) {
      exvector t;
      for (int c = 0; c < 3; c++) t.push_back(N[3 * k + c] * qd_[ncoord_ + 3 * a + c]);
      qrate_.push_back(add(t));
    }
    std::array<ex, 9> r, Rq;
    for (int k = 0; k < 9; k++) {
      r[k] = realsymbol(fmt("%s[%d,%d]", name.c_str(), k / 3 + 1, k % 3 + 1));
      dr_.emplace_back(r[k], deps_.add_var(r[k]), &deps_);
    }
    attitude_rotation(quat, Rq.data());
    att_r_.push_back(r);
    att_Rq_.push_back(Rq);
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
  for (int a = 0; a < m_->nattitudes; a++) {   /* R' = R [omega]x */
    d = along_r(a, &qd_[ncoord_ + 3 * a], e);
    if (!d.is_zero()) terms.push_back(d);
  }
  for (size_t k = 0; k < atoms_.size(); k++) {
    d = dw_[k](e);
    if (!d.is_zero()) terms.push_back(d * atoms_[k].accel);
  }
  return terms.empty() ? ex(0) : ex(add(terms));
}

/* sum_ij de/dr_ij (R [w]x)_ij for attitude a: the rate of e when R turns
** at w in its body axes.  Column j of R [w]x is R (w x e_j). */
ex Derivation::along_r(int a, const ex w[3], const ex &e) {
  const std::array<ex, 9> &r = att_r_[a];
  exvector t;
  for (int i = 0; i < 3; i++)
    for (int j = 0; j < 3; j++) {
      ex d = dr_[9 * a + 3 * i + j](e);
      if (d.is_zero()) continue;
      /* w x e_j = (0, w3, -w2), (-w3, 0, w1), (w2, -w1, 0) for j = 0, 1, 2 */
      int k1 = (j + 1) % 3, k2 = (j + 2) % 3;   /* (w x e_j)_k1 = w_k2, _k2 = -w_k1 */
      ex col = r[3 * i + k1] * w[k2] - r[3 * i + k2] * w[k1];
      if (!col.is_zero()) t.push_back(d * col);
    }
  return t.empty() ? ex(0) : ex(add(t));
}

/* In a point where every q has a value: each attitude's quaternion made
** unit and its r set to R(q), so that checks see a true rotation. */
void Derivation::attitude_point(exmap &point) {
  for (int a = 0; a < m_->nattitudes; a++) {
    ex quat[4], R[9];
    double n = 0;
    for (int k = 0; k < 4; k++) {
      double v = ex_to<numeric>(point[q_[ncoord_ + 4 * a + k]].evalf()).to_double();
      n += v * v;
    }
    n = std::sqrt(n);
    for (int k = 0; k < 4; k++) {
      ex &v = point[q_[ncoord_ + 4 * a + k]];
      v = ex_to<numeric>(v.evalf()).to_double() / n;
      quat[k] = v;
    }
    attitude_rotation(quat, R);
    for (int k = 0; k < 9; k++) point[att_r_[a][k]] = R[k].evalf();
  }
}

/* e with each attitude's r replaced by R(q): what the roots hold. */
ex Derivation::with_quaternions(const ex &e) {
  if (m_->nattitudes == 0) return e;
  if (!att_subst_) {
    exmap m;
    for (int a = 0; a < m_->nattitudes; a++)
      for (int k = 0; k < 9; k++) m[att_r_[a][k]] = att_Rq_[a][k];
    att_subst_.reset(new Subst(m));
  }
  return (*att_subst_)(e);
}

/* de/dq_k of e(q, r), r = R(q): the chain rule through the attitude's
** rotation for a quaternion entry. */
ex Derivation::dq_full(int k, const ex &e) {
  if (k < ncoord_) return dq_[k](e);
  int a = (k - ncoord_) / 4;
  exvector t;
  for (int i = 0; i < 9; i++) {
    ex d = dr_[9 * a + i](e);
    if (d.is_zero()) continue;
    ex dR = dq_[k](att_Rq_[a][i]);
    if (!dR.is_zero()) t.push_back(d * dR);
  }
  return t.empty() ? ex(0) : ex(add(t));
}

/* The derivative of e along velocity j: de/dq_j for a coordinate; for
** entry c of an attitude's omega, the body-frame direction X_c e, the rate
** of e as R turns about its body axis c (R -> R [e_c]x, in r: along_r).
** Generalized forces, partial velocities and the Euler-Lagrange terms all
** take this in place of d/dq, so coordinates and attitudes share one
** derivation. */
ex Derivation::dv(int j, const ex &e) {
  assert(j >= 0 && j < nv_);
  if (j < ncoord_) return dq_[j](e);
  int a = (j - ncoord_) / 3, c = (j - ncoord_) % 3;
  ex axis[3] = {0, 0, 0};
  axis[c] = 1;
  return along_r(a, axis, e);
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

void Derivation::run(EomSystem *out) {
  collect_terms();
  Equations eq;
  derive_lagrange(eq);
  derive_jacobians(eq);
  derive_constraint_equations(eq);
  derive_control_quantities(eq.L + eq.T_rot - eq.V_placed, eq.M, eq.dM, eq.dDdqd, eq.phi, eq.vc_A,
                            eq.vc_b, &eq.ctl);
  tick("deriving the Coriolis matrix, momenta and constants of the motion");
  derive_regressor_quantities(eq.inv, &eq.reg);
  tick("deriving the regressor");
  derive_outputs(eq);
  emit_roots(eq, out);
}

/* L, the Euler-Lagrange expressions E, and from them M and f. */
void Derivation::derive_lagrange(Equations &eq) {
  const int n = nv_;  /* M and f live in the velocities */
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
  eq.T = T, eq.T_rot = T_rot, eq.V_reported = V_reported, eq.V_placed = add(Vr), eq.L = L;
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
  std::vector<ex> E(n);
  std::vector<ex> &dDdqd = eq.dDdqd;
  dDdqd.assign(n, ex(0));
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
  std::vector<std::vector<ex>> &M = eq.M, &M_lagrange = eq.M_lagrange;
  M.assign(n, std::vector<ex>(n));
  M_lagrange.assign(n, std::vector<ex>(n));
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
  std::vector<ex> &f = eq.f, &f_lagrange = eq.f_lagrange;
  f.assign(n, ex(0));
  f_lagrange.assign(n, ex(0));
  for (int i = 0; i < n; i++) {
    f_lagrange[i] = unatom(force_[i]) - dDdqd[i] - zero_qdd(E[i]);
    f[i] = placed ? f_lagrange[i] - unatom(placed_bias_[i]) : f_lagrange[i];
    for (int j = 0; j < n; j++)
      if (!dqdd_[j](f[i]).is_zero())
        throw SymError{kNoLoc, "internal: the forcing depends on accelerations"};
    tick("deriving the forcing vector");
  }
}

/* The exact derivatives the generated Jacobian needs, and the inverse
** dynamics. */
void Derivation::derive_jacobians(Equations &eq) {
  const int n = nv_, nq = nq_;  /* v-space (M, f) and q-space sizes */
  const bool placed = !placed_M_.empty();
  const std::vector<std::vector<ex>> &M = eq.M, &M_lagrange = eq.M_lagrange;
  const std::vector<ex> &f = eq.f, &f_lagrange = eq.f_lagrange;
  /* Jacobian pieces, each an exact symbolic derivative */
  std::vector<ex> &dM = eq.dM, &dfdq = eq.dfdq, &dfdqd = eq.dfdqd, &dfdu = eq.dfdu;
  dM.assign((size_t)nq * n * n, ex(0));
  dfdq.assign((size_t)n * nq, ex(0));
  dfdqd.assign((size_t)n * n, ex(0));
  dfdu.assign((size_t)n * nu_, ex(0));
  for (int k = 0; k < nq; k++) {
    for (int i = 0; i < n; i++)
      for (int j = i; j < n; j++)
        dM[(size_t)k * n * n + i * n + j] = dM[(size_t)k * n * n + j * n + i] = dq_full(k, M[i][j]);
    tick("deriving dM/dq");
  }
  for (int i = 0; i < n; i++) {
    for (int j = 0; j < nq; j++) dfdq[(size_t)i * nq + j] = dq_full(j, f[i]);
    for (int j = 0; j < n; j++) dfdqd[(size_t)i * n + j] = dqd_[j](f[i]);
    for (int j = 0; j < nu_; j++) dfdu[(size_t)i * nu_ + j] = du_[j](f[i]);
    tick("deriving the Jacobian of the forcing");
  }

  /* inverse dynamics M q'' - f with the inputs at zero; the placed bodies'
  ** share M q'' + bias in its recursive form (fewer operations) */
  exmap no_inputs;
  for (const ex &u : u_) no_inputs[u] = 0;
  Subst zero_u(no_inputs);
  std::vector<ex> &inv = eq.inv;
  inv.assign(n, ex(0));
  for (int i = 0; i < n; i++) {
    exvector terms{-zero_u(f_lagrange[i])};
    if (placed) terms.push_back(zero_u(unatom(placed_full_[i])));
    for (int j = 0; j < n; j++) terms.push_back(M_lagrange[i][j] * qdd_[j]);
    inv[i] = add(terms);
  }
}

/* Position constraints phi, G = dphi/dq, gamma and dphi/dt; the velocity
** constraints' A, b, gamma (symbolic_constraints.cc). */
void Derivation::derive_constraint_equations(Equations &eq) {
  const int n = nq_;
  assert((constraints_.empty() && stops_.empty()) || nq_ == nv_);  /* refused with attitudes */
  exmap no_accel;
  for (const ex &a : qdd_) no_accel[a] = 0;
  Subst zero_qdd(no_accel);
  /* constraints: phi, G = dphi/dq and gamma = -(phi'' at q'' = 0), so that G q'' = gamma */
  const int nc = (int)constraints_.size();
  std::vector<ex> &phi = eq.phi, &G = eq.G, &gamma = eq.gamma, &phi_t = eq.phi_t;
  phi.assign(nc, ex(0));
  G.assign((size_t)nc * n, ex(0));
  gamma.assign(nc, ex(0));
  phi_t.assign(nc, ex(0));
  for (int c = 0; c < nc; c++) {
    phi[c] = constraints_[c].second;
    for (int j = 0; j < n; j++) G[(size_t)c * n + j] = dq_[j](phi[c]);
    gamma[c] = -zero_qdd(totald(totald(phi[c])));
    phi_t[c] = dt_(phi[c]);
    tick("deriving the constraints");
  }
  /* stops: the same three for each gap (they never pull, so they are kept
  ** apart from the constraints; the runtime decides when one is active) */
  const int nstop = (int)stops_.size();
  eq.stop_g.assign(nstop, ex(0));
  eq.stop_G.assign((size_t)nstop * n, ex(0));
  eq.stop_gamma.assign(nstop, ex(0));
  for (int k = 0; k < nstop; k++) {
    const ex &g = stops_[k].second;
    eq.stop_g[k] = g;
    for (int j = 0; j < n; j++) eq.stop_G[(size_t)k * n + j] = dq_[j](g);
    eq.stop_gamma[k] = -zero_qdd(totald(totald(g)));
    tick("deriving the stops");
  }

  derive_velocity_constraints(eq.vc_A, eq.vc_b, eq.vc_gamma);
}

/* The outputs' entries and their kinematics (symbolic_outputs.cc). */
void Derivation::derive_outputs(Equations &eq) {
  std::vector<ex> &outs = eq.outs;
  std::vector<SrcLoc> &out_locs = eq.out_locs;
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
  derive_kinematics(kin, &eq.kr);
}

/* ---- checks of the Lagrangian and the mass matrix ---- */

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
  free(s->stop_gap);
  free(s->stop_gradient);
  free(s->stop_gamma);
  free((void *)s->stop_stmt);
  memset(s, 0, sizeof *s);
}
