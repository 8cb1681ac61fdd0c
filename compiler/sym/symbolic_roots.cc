/*
** symbolic_roots.cc — everything the derivation found becomes the roots of
** one IrGraph (ir_build.cc), and the EomSystem the emitter reads names them.
**
** The order in which roots are added fixes the graph's node numbers and so
** the generated C: a new quantity is added after the existing ones.
*/
#include "sym/symbolic_internal.h"  /* first: wraps the C headers in extern "C" */

#include <cassert>
#include <cstdio>
#include <cstdlib>

#include "sym/symbolic.h"

using namespace GiNaC;

namespace eomsym {

/* The IrBuilder handle of every root, by quantity (see add_roots). */
struct RootHandles {
  std::vector<int> mass, f, dM, dfdq, dfdqd, dfdu, inv, out;
  int T = -1, V = -1, ham = -1;
  std::vector<int> phi, G, gamma, phi_t, vA, vb, vgamma;
  std::vector<int> stop_g, stop_G, stop_gamma;
  std::vector<int> cor, grav, mom, rule, ojac, obias, fjac, fbias, sw, reg, reg0;
  std::vector<EomSwitch> sw_info;
};

static int *alloc_roots(size_t n) {
  int *p = (int *)calloc(n ? n : 1, sizeof(int));
  if (!p) throw std::bad_alloc();
  return p;
}

void Derivation::emit_roots(const Equations &eq, EomSystem *out) {
  IrBuilder b(vars_);
  RootHandles h;
  add_roots(eq, b, h);
  std::vector<int> roots;
  b.finish(&out->g, roots);
  write_roots(eq, h, roots, out);
}

/* One graph for everything; root handles are kept in this order. */
void Derivation::add_roots(const Equations &eq, IrBuilder &b, RootHandles &h) {
  /* the roots hold R(q) where the derivation wrote each attitude's r */
  auto root = [&](const ex &e, SrcLoc loc) { return b.add_root(with_quaternions(e), loc); };
  const int n = nv_, nq = nq_, nc = (int)eq.phi.size(), nvc = (int)eq.vc_b.size();
  const SrcLoc none = kNoLoc;
  for (int i = 0; i < n; i++)
    for (int j = 0; j < n; j++) h.mass.push_back(root(eq.M[i][j], none));
  for (const ex &e : eq.f) h.f.push_back(root(e, none));
  tick("building the expression graph");
  for (const ex &e : eq.dM) h.dM.push_back(root(e, none));
  tick("building the expression graph");
  if (nq == n) {  /* interleaved, as always for models without attitudes */
    for (size_t k = 0; k < eq.dfdq.size(); k++) {
      h.dfdq.push_back(root(eq.dfdq[k], none));
      h.dfdqd.push_back(root(eq.dfdqd[k], none));
      if (k % n == 0) tick("building the expression graph");
    }
  } else {
    for (const ex &e : eq.dfdq) h.dfdq.push_back(root(e, none));
    for (const ex &e : eq.dfdqd) h.dfdqd.push_back(root(e, none));
    tick("building the expression graph");
  }
  for (const ex &e : eq.dfdu) h.dfdu.push_back(root(e, none));
  for (const ex &e : eq.inv) h.inv.push_back(root(e, none));
  h.T = root(unatom(eq.T + eq.T_rot), kinetic_.empty() ? none : kinetic_[0].stmt->loc);
  h.V = root(unatom(eq.V_reported), potential_.empty() ? none : potential_[0].stmt->loc);
  for (size_t i = 0; i < eq.outs.size(); i++) h.out.push_back(root(eq.outs[i], eq.out_locs[i]));
  for (int c = 0; c < nc; c++) h.phi.push_back(root(eq.phi[c], constraints_[c].first->loc));
  for (int c = 0; c < nc; c++)
    for (int j = 0; j < n; j++) h.G.push_back(root(eq.G[(size_t)c * n + j], none));
  for (int c = 0; c < nc; c++) h.gamma.push_back(root(eq.gamma[c], none));
  for (int c = 0; c < nc; c++) h.phi_t.push_back(root(eq.phi_t[c], none));
  for (const ex &e : eq.vc_A) h.vA.push_back(root(e, none));
  for (int c = 0; c < nvc; c++) h.vb.push_back(root(eq.vc_b[c], vconstraints_[c].first->loc));
  for (const ex &e : eq.vc_gamma) h.vgamma.push_back(root(e, none));
  for (size_t k = 0; k < eq.stop_g.size(); k++)
    h.stop_g.push_back(root(eq.stop_g[k], stops_[k].first->loc));
  for (const ex &e : eq.stop_G) h.stop_G.push_back(root(e, none));
  for (const ex &e : eq.stop_gamma) h.stop_gamma.push_back(root(e, none));
  for (const ex &e : eq.ctl.coriolis) h.cor.push_back(root(e, none));
  for (const ex &e : eq.ctl.gravity) h.grav.push_back(root(e, none));
  for (const ex &e : eq.ctl.momenta) h.mom.push_back(root(e, none));
  h.ham = root(eq.ctl.hamiltonian, none);
  /* a param default that reads other params: the rule that recomputes it */
  h.rule.assign(np_, -1);
  for (int i = 0; i < np_; i++) {
    const Decl *d = m_->params[i];
    if (!d->value) continue;
    ex e = scalar(d->value, "a parameter's default");
    bool reads_params = false;
    for (int k = 0; k < np_; k++) reads_params = reads_params || (k != i && e.has(p_[k]));
    if (reads_params) h.rule[i] = root(e, d->loc);
  }
  for (size_t k = 0; k < eq.outs.size(); k++) {
    if (!eq.kr.kinematic[k]) continue;
    for (int j = 0; j < n; j++) h.ojac.push_back(root(eq.kr.jacobian[k * n + j], none));
    h.obias.push_back(root(eq.kr.bias[k], none));
  }
  for (const ex &e : eq.kr.frame_jacobian) h.fjac.push_back(root(e, none));
  for (const ex &e : eq.kr.frame_bias) h.fbias.push_back(root(e, none));
  /* switching functions: those that can change sign, each once */
  std::vector<ex> sw;
  for (const SwitchFn &w : switches_) {
    ex e = with_quaternions(unatom(w.e));
    bool moves = e.has(t_);
    for (int i = 0; i < nq; i++) moves = moves || e.has(q_[i]);
    for (int i = 0; i < n; i++) moves = moves || e.has(qd_[i]);
    for (const ex &u : u_) moves = moves || e.has(u);
    bool again = false;
    for (const ex &o : sw) again = again || (e - o).is_zero() || (e + o).is_zero();
    if (!moves || again) continue;
    sw.push_back(e);
    h.sw_info.push_back(EomSwitch{w.loc.line, w.loc.col, (int)w.fn, w.part});
    h.sw.push_back(root(e, w.loc));
  }
  for (const ex &e : eq.reg.Y) h.reg.push_back(root(e, none));
  for (const ex &e : eq.reg.offset) h.reg0.push_back(root(e, none));
  tick("building the expression graph");
}

/* The EomSystem's arrays: node indices of the roots, by quantity. */
void Derivation::write_roots(const Equations &eq, const RootHandles &h,
                             const std::vector<int> &roots, EomSystem *out) {
  const int n = nv_, nq = nq_, nc = (int)eq.phi.size(), nvc = (int)eq.vc_b.size();
  const size_t ny = eq.outs.size(), ns = h.sw.size();
  const ControlResult &ctl = eq.ctl;
  auto place = [&roots](const std::vector<int> &handles, size_t count) {
    assert(handles.size() == count);
    int *p = alloc_roots(count);
    for (size_t k = 0; k < count; k++) p[k] = roots[handles[k]];
    return p;
  };
  out->mass = place(h.mass, (size_t)n * n);
  out->forcing = place(h.f, n);
  out->dmass_dq = place(h.dM, (size_t)nq * n * n);
  out->dforcing_dq = place(h.dfdq, (size_t)n * nq);
  out->dforcing_dqd = place(h.dfdqd, (size_t)n * n);
  out->dforcing_du = place(h.dfdu, (size_t)n * nu_);
  out->inverse = place(h.inv, n);
  out->energy_T = roots[h.T];
  out->energy_V = roots[h.V];
  out->outputs = place(h.out, ny);
  out->nc = nc;
  out->constraint = place(h.phi, nc);
  out->constraint_jacobian = place(h.G, (size_t)nc * n);
  out->constraint_gamma = place(h.gamma, nc);
  out->constraint_dt = place(h.phi_t, nc);
  out->nvc = nvc;
  out->vconstraint_A = place(h.vA, (size_t)nvc * n);
  out->vconstraint_b = place(h.vb, nvc);
  out->vconstraint_gamma = place(h.vgamma, nvc);
  const int nstop = (int)eq.stop_g.size();
  out->nstops = nstop;
  out->stop_gap = place(h.stop_g, nstop);
  out->stop_gradient = place(h.stop_G, (size_t)nstop * n);
  out->stop_gamma = place(h.stop_gamma, nstop);
  out->stop_stmt = (const Stmt **)calloc(nstop + 1, sizeof(Stmt *));
  if (!out->stop_stmt) throw std::bad_alloc();
  for (int k = 0; k < nstop; k++) out->stop_stmt[k] = stops_[k].first;
  out->vc_integrable = nvc > 0 && velocity_constraints_integrable(eq.vc_A, eq.vc_b);
  out->has_split = ctl.split;
  snprintf(out->split_why, sizeof out->split_why, "%s", ctl.split_why.c_str());
  out->coriolis = ctl.split ? place(h.cor, (size_t)n * n) : nullptr;
  out->gravity = ctl.split ? place(h.grav, n) : nullptr;
  out->momenta = place(h.mom, n);
  out->hamiltonian = roots[h.ham];
  out->cyclic = alloc_roots(n);
  for (int i = 0; i < n; i++) out->cyclic[i] = ctl.cyclic[i];
  out->energy_conserved = ctl.energy_conserved;
  out->ns = (int)ns;
  out->switches = place(h.sw, ns);
  out->switch_info = (EomSwitch *)calloc(ns + 1, sizeof(EomSwitch));
  if (!out->switch_info) throw std::bad_alloc();
  for (size_t k = 0; k < ns; k++) out->switch_info[k] = h.sw_info[k];
  snprintf(out->energy_why, sizeof out->energy_why, "%s", ctl.energy_why.c_str());
  const int ni = (int)pi_index_.size();
  out->ni = ni;
  out->identified = alloc_roots(ni);
  for (int k = 0; k < ni; k++) out->identified[k] = pi_index_[k];
  out->regressor = ni ? place(h.reg, (size_t)n * ni) : nullptr;
  out->regressor_offset = ni ? place(h.reg0, n) : nullptr;
  /* output Jacobians: rows of outputs that are not y(q, p) stay -1 */
  out->output_kinematic = alloc_roots(ny);
  out->output_jacobian = alloc_roots(ny * (size_t)n);
  out->output_bias = alloc_roots(ny);
  for (size_t k = 0, r = 0; k < ny; k++) {
    out->output_kinematic[k] = eq.kr.kinematic[k];
    out->output_bias[k] = -1;
    for (int j = 0; j < n; j++) out->output_jacobian[k * n + j] = -1;
    if (!eq.kr.kinematic[k]) continue;
    for (int j = 0; j < n; j++) out->output_jacobian[k * n + j] = roots[h.ojac[r * n + j]];
    out->output_bias[k] = roots[h.obias[r]];
    out->nkinematic++;
    r++;
  }
  out->nframes = (int)(eq.kr.frame_bias.size() / 6);
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
  out->frame_jacobian = place(h.fjac, (size_t)out->nframes * 6 * n);
  out->frame_bias = place(h.fbias, (size_t)out->nframes * 6);
  assert(out->nv == n && out->nattitudes == m_->nattitudes);
  out->param_rule = alloc_roots(np_);
  out->nderived = 0;
  for (int i = 0; i < np_; i++) {
    out->param_rule[i] = h.rule[i] < 0 ? -1 : roots[h.rule[i]];
    out->nderived += h.rule[i] >= 0;
  }
}

}  // namespace eomsym
