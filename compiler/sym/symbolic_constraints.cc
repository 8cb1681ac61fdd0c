/*
** symbolic_constraints.cc — constraints of a model: position constraints
** phi(t, q) = 0 and velocity constraints A(t, q) q' = b(t, q), their
** derivatives for the generated functions, and whether the velocity
** constraints are integrable (holonomic in disguise).
*/
#include "sym/symbolic_internal.h"  /* first: wraps the C headers in extern "C" */

#include <algorithm>
#include <cassert>
#include <cmath>

using namespace GiNaC;

namespace eomsym {

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

/* A stop's gap LEFT - RIGHT (the checker made sure it has no rates). */
void Derivation::add_stop(const Stmt *s) {
  if (m_->nattitudes > 0)
    throw SymError{s->loc, "stops in a model with attitudes are not supported yet"};
  ex g = scalar(s->e[0], "the left side of a stop") - scalar(s->e[1], "the right side of a stop");
  assert(!depends_on_rates(g));
  stops_.push_back({s, g});
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

}  // namespace eomsym
