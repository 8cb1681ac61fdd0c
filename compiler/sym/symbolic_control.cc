/*
** symbolic_control.cc — what controllers and accuracy monitors need beyond
** M and f: the Coriolis matrix and gravity vector of the split
**   M(q) q'' + C(q, q') q' + g(q) = Q - dD/dq'   (+ G^T lambda with constraints)
** the generalized momenta dL/dq', the energy function h = q'.dL/dq' - L, and
** the constants of the motion found by inspection (cyclic coordinates,
** conservation of h).
**
** The split exists when L = T2 - V0 with T2 = q'^T M q' / 2 homogeneous
** quadratic in the rates and L free of t and of the inputs (no gyroscopic or
** moving-frame terms linear in q').  C comes from the Christoffel symbols of
** the first kind, the choice that makes M' - 2C skew-symmetric (Spong,
** Hutchinson & Vidyasagar, Robot Modeling and Control, 2006, §7.3):
**   C_kj = sum_i 1/2 (dM_kj/dq_i + dM_ki/dq_j - dM_ij/dq_k) q'_i,
** and g = dV0/dq with V0 = -L(q' = 0).
**
** Every "is this zero?" question is asked symbolically first and confirmed
** numerically (GiNaC leaves sin^2 + cos^2 - 1 standing), through the
** toolkit symbolic.cc hands over.
*/
#include "sym/symbolic_internal.h"

#include <cassert>

using namespace GiNaC;

namespace eomsym {
namespace {

/* Zero structurally or at every probe point. */
bool vanishes(const ControlInput &in, const ex &e, const ex &scale) {
  return e.is_zero() || !in.nonzero_somewhere(e, scale);
}

/* Why the split M q'' + C q' + g = Q does not exist, or "" when it does. */
std::string split_obstacle(const ControlInput &in, const ex &L, const ex &L0) {
  if (!vanishes(in, in.d_dt(L), L)) return "the Lagrangian depends on the time t explicitly";
  for (int j = 0; j < in.nu; j++)
    if (!vanishes(in, in.d_du(j, L), L))
      return "the Lagrangian depends on the input '" + in.input_names[j] + "'";
  /* L - L(q' = 0) must be exactly q'^T M q' / 2: nothing linear in q' */
  exvector quad;
  for (int i = 0; i < in.nq; i++)
    for (int j = 0; j < in.nq; j++)
      if (!in.M[i][j].is_zero()) quad.push_back(in.M[i][j] * in.qd[i] * in.qd[j] / 2);
  ex rest = L - L0 - add(quad);
  if (!vanishes(in, rest, L))
    return "the Lagrangian has terms linear in the rates (gyroscopic or moving-frame terms), "
           "so it is not T - V with T quadratic in q'";
  return "";
}

/* Why h is not a constant of the motion, or "" when it is. */
std::string energy_obstacle(const ControlInput &in, const ex &L) {
  if (!vanishes(in, in.d_dt(L), L)) return "the Lagrangian depends on the time t explicitly";
  for (int j = 0; j < in.nu; j++)
    if (!vanishes(in, in.d_du(j, L), L))
      return "the Lagrangian depends on the input '" + in.input_names[j] + "'";
  for (int i = 0; i < in.nq; i++) {
    if (!vanishes(in, in.force[i], L))
      return "a generalized force acts on '" + in.coord_names[i] + "'";
    if (!vanishes(in, in.dDdqd[i], L))
      return "dissipation acts on '" + in.coord_names[i] + "'";
  }
  for (const ex &phi : in.constraints)
    if (!vanishes(in, in.d_dt(phi), phi)) return "a constraint depends on the time t";
  /* a velocity constraint's force A^T lambda does work A q' . lambda = b . lambda */
  for (size_t k = 0; k < in.vc_b.size(); k++) {
    ex row = in.vc_b[k];
    for (int i = 0; i < in.nq; i++) row += in.vc_A[k * in.nq + i] * in.qd[i];
    if (!vanishes(in, in.vc_b[k], row)) return "a velocity constraint has a right side b != 0";
    if (!vanishes(in, in.d_dt(row), row)) return "a velocity constraint depends on the time t";
  }
  return "";
}

/* q_i is cyclic: dL/dq_i = 0, no force or dissipation on it, and no
** constraint mentions it; then E_i = d/dt dL/dq'_i = 0. */
bool is_cyclic(const ControlInput &in, const ex &L, int i) {
  if (!vanishes(in, in.d_dq(i, L), L)) return false;
  if (!vanishes(in, in.force[i], L) || !vanishes(in, in.dDdqd[i], L)) return false;
  for (const ex &phi : in.constraints)
    if (!vanishes(in, in.d_dq(i, phi), phi)) return false;
  for (size_t k = 0; k < in.vc_b.size(); k++)  /* column i of A: a force on q_i */
    if (!vanishes(in, in.vc_A[k * in.nq + i], in.vc_A[k * in.nq + i])) return false;
  return true;
}

}  // namespace

void derive_control(const ControlInput &in, ControlResult *out) {
  const int n = in.nq;
  assert((int)in.qd.size() == n && (int)in.M.size() == n);
  assert(!in.no_split.empty() || (int)in.dM.size() == n * n * n);
  const ex &L = in.L;
  exmap at_rest;
  for (const ex &v : in.qd) at_rest[v] = 0;
  ex L0 = in.substitute(L, at_rest);

  out->split_why = in.no_split.empty() ? split_obstacle(in, L, L0) : in.no_split;
  out->split = out->split_why.empty();
  out->coriolis.clear();
  out->gravity.clear();
  out->momenta.assign(n, ex(0));
  if (out->split) {
    /* C_kj = sum_i c_ijk q'_i with c_ijk = (dM_kj/dq_i + dM_ki/dq_j - dM_ij/dq_k) / 2 */
    auto dM = [&](int k, int i, int j) -> const ex & { return in.dM[(size_t)k * n * n + i * n + j]; };
    out->coriolis.assign((size_t)n * n, ex(0));
    for (int k = 0; k < n; k++)
      for (int j = 0; j < n; j++) {
        exvector terms;
        for (int i = 0; i < n; i++) {
          ex c = dM(i, k, j) + dM(j, k, i) - dM(k, i, j);
          if (!c.is_zero()) terms.push_back(c * in.qd[i] / 2);
        }
        out->coriolis[(size_t)k * n + j] = terms.empty() ? ex(0) : ex(add(terms));
      }
    for (int k = 0; k < n; k++) out->gravity.push_back(-in.d_dq(k, L0));
    /* with the split, dL/dq' = M q' and h = q'^T M q' / 2 - L0 = T + V */
    exvector quad;
    for (int i = 0; i < n; i++) {
      exvector row;
      for (int j = 0; j < n; j++)
        if (!in.M[i][j].is_zero()) row.push_back(in.M[i][j] * in.qd[j]);
      out->momenta[i] = row.empty() ? ex(0) : ex(add(row));
      if (!row.empty()) quad.push_back(out->momenta[i] * in.qd[i] / 2);
    }
    out->hamiltonian = add(quad) - L0;
  } else {
    exvector terms{-L};
    for (int i = 0; i < n; i++) {
      out->momenta[i] = in.d_dqd(i, L);
      terms.push_back(in.qd[i] * out->momenta[i]);
    }
    out->hamiltonian = add(terms);
  }

  out->energy_why = energy_obstacle(in, L);
  out->energy_conserved = out->energy_why.empty();
  out->cyclic.assign(n, 0);
  for (int i = 0; i < n; i++) out->cyclic[i] = is_cyclic(in, L, i);
}

}  // namespace eomsym

/* ------------------------------------------------------------ regressor */

namespace eomsym {

/* Y_ik = dtau_i/dpi_k and tau0 = tau(pi = 0), after checking that tau is
** linear in pi: every second derivative d2 tau / dpi_k dpi_l vanishes.  On
** failure the error names the first model term that is not linear. */
void derive_regressor(const RegressorInput &in, RegressorResult *out) {
  const int n = (int)in.inverse.size(), ni = (int)in.pi.size();
  assert((int)in.pi_names.size() == ni);
  out->Y.assign((size_t)n * ni, ex(0));
  out->offset.assign(n, ex(0));
  for (int i = 0; i < n; i++)
    for (int k = 0; k < ni; k++) out->Y[(size_t)i * ni + k] = in.d_dpi(k, in.inverse[i]);
  for (int i = 0; i < n; i++)
    for (int k = 0; k < ni; k++)
      for (int l = k; l < ni; l++) {
        const ex &y = out->Y[(size_t)i * ni + k];
        ex second = in.d_dpi(l, y);
        if (second.is_zero() || !in.nonzero_somewhere(second, y)) continue;
        std::string what = k == l ? "'" + in.pi_names[k] + "'"
                                  : "'" + in.pi_names[k] + "' and '" + in.pi_names[l] + "'";
        for (const auto &term : in.terms) {
          ex d = in.d_dpi(l, in.d_dpi(k, term.second));
          if (!d.is_zero() && in.nonzero_somewhere(d, term.second))
            throw SymError{term.first, "the dynamics must be linear in the identified parameters: "
                                       "this term is not linear in " + what};
        }
        throw SymError{SrcLoc{0, 0}, "the dynamics must be linear in the identified parameters, "
                                     "but they are not linear in " + what};
      }
  exmap zero;
  for (const ex &p : in.pi) zero[p] = 0;
  for (int i = 0; i < n; i++) out->offset[i] = in.substitute(in.inverse[i], zero);
}

}  // namespace eomsym
