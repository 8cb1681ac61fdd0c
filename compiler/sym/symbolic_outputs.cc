/*
** symbolic_outputs.cc — what task-space controllers need from the outputs:
** the Jacobian dy/dq of every output that depends on the coordinates only,
** its bias J' q' (so that y'' = J q'' + J' q'), and for every `frame` the
** geometric Jacobian (world linear velocity over world angular velocity)
** with its bias.
**
** Everything is an exact symbolic derivative of the expressions the
** outputs already are, taken with the derivation's memoised derivatives, so
** a frame built from the same lets as the bodies shares their nodes in the
** expression graph.  The angular rows follow from R' = sum_j (dR/dq_j) q'_j
** and [w]x = R' R^T (Spong, Hutchinson & Vidyasagar, Robot Modeling and
** Control, 2006, §4.1-4.2): column j of the angular Jacobian is the axial
** vector of (dR/dq_j) R^T.
*/
#include "sym/symbolic_internal.h"

#include <cassert>

using namespace GiNaC;

namespace eomsym {
namespace {

/* Does e depend on anything but the coordinates and the parameters? */
bool moves_beyond_q(const KinematicsInput &in, const ex &e) {
  if (!in.d_dt(e).is_zero()) return true;
  for (int j = 0; j < in.nq; j++)
    if (!in.d_dqd(j, e).is_zero()) return true;
  for (int j = 0; j < in.nu; j++)
    if (!in.d_du(j, e).is_zero()) return true;
  return false;
}

/* The row J (nq entries) of e(q) and its bias J' q' = sum_j (sum_k dJ_j/dq_k q'_k) q'_j. */
void row_and_bias(const KinematicsInput &in, const ex &e, std::vector<ex> &row, ex &bias) {
  row.assign(in.nq, ex(0));
  for (int j = 0; j < in.nq; j++) row[j] = in.d_dq(j, e);
  bias = bias_of(in, row);
}

}  // namespace

/* J' q' for a row J(q). */
ex bias_of(const KinematicsInput &in, const std::vector<ex> &row) {
  exvector terms;
  for (int j = 0; j < in.nq; j++) {
    if (row[j].is_zero()) continue;
    exvector rate;
    for (int k = 0; k < in.nq; k++) {
      ex d = in.d_dq(k, row[j]);
      if (!d.is_zero()) rate.push_back(d * in.qd[k]);
    }
    if (!rate.empty()) terms.push_back(add(rate) * in.qd[j]);
  }
  return terms.empty() ? ex(0) : ex(add(terms));
}

void derive_kinematics(const KinematicsInput &in, KinematicsResult *out) {
  const int nq = in.nq;
  const size_t ny = in.outputs.size();
  out->kinematic.assign(ny, 0);
  out->jacobian.assign(ny * (size_t)nq, ex(0));
  out->bias.assign(ny, ex(0));
  out->frame_jacobian.clear();
  out->frame_bias.clear();
  std::vector<ex> row;
  for (const KinematicsInput::Group &g : in.groups) {
    assert(g.first + g.count <= ny);
    bool q_only = true;
    for (size_t k = g.first; k < g.first + g.count && q_only; k++)
      q_only = !moves_beyond_q(in, in.outputs[k]);
    if (g.frame && !q_only)
      throw SymError{g.loc, "a frame's transform must depend on the coordinates and "
                            "parameters only (not on the time)"};
    if (!q_only) continue;
    for (size_t k = g.first; k < g.first + g.count; k++) {
      row_and_bias(in, in.outputs[k], row, out->bias[k]);
      for (int j = 0; j < nq; j++) out->jacobian[k * nq + j] = row[j];
      out->kinematic[k] = 1;
      in.tick("deriving the output Jacobians");
    }
    if (!g.frame) continue;
    /* y holds the position (3), then R row by row (9) */
    assert(g.count == 12);
    const ex *R = &in.outputs[g.first + 3];
    std::vector<ex> J((size_t)6 * nq), b(6);
    for (int r = 0; r < 3; r++) {
      for (int j = 0; j < nq; j++) J[(size_t)r * nq + j] = out->jacobian[(g.first + r) * nq + j];
      b[r] = out->bias[g.first + r];
    }
    /* S = (dR/dq_j) R^T is skew: w_j = (S_21, S_02, S_10) */
    for (int j = 0; j < nq; j++) {
      const ex *dR = &out->jacobian[0];
      auto S = [&](int a, int c) {
        exvector t;
        for (int k = 0; k < 3; k++) {
          ex d = dR[(g.first + 3 + 3 * a + k) * nq + j];
          if (!d.is_zero() && !R[3 * c + k].is_zero()) t.push_back(d * R[3 * c + k]);
        }
        return t.empty() ? ex(0) : ex(add(t));
      };
      J[(size_t)3 * nq + j] = S(2, 1);
      J[(size_t)4 * nq + j] = S(0, 2);
      J[(size_t)5 * nq + j] = S(1, 0);
    }
    for (int r = 3; r < 6; r++) {
      row.assign(J.begin() + (size_t)r * nq, J.begin() + (size_t)(r + 1) * nq);
      b[r] = bias_of(in, row);
    }
    in.tick("deriving the frame Jacobians");
    out->frame_jacobian.insert(out->frame_jacobian.end(), J.begin(), J.end());
    out->frame_bias.insert(out->frame_bias.end(), b.begin(), b.end());
  }
}

}  // namespace eomsym
