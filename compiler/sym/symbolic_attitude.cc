/*
** symbolic_attitude.cc — the algebra of attitude coordinates.
**
** An attitude R (body axes to world) is stored as a unit quaternion
** q = [w, x, y, z] (scalar first) and moves with the body-frame angular
** velocity omega: R' = R [omega]x and q' = q (x) [0, omega] / 2 = N(q) omega.
** The equations of motion are written in omega (quasi-velocities), so the
** derivation needs the derivative of an expression e along the body-frame
** direction e_a, the rate of e per unit of omega_a.  While deriving, R is
** nine symbols r (Derivation::att_r_) and that derivative is
**   X_a e = sum_ij de/dr_ij (R [e_a]x)_ij,
** with R' = R [omega]x the same way; R(q) below replaces r in the results.
** The X_a are left-invariant vector fields of the rotation group,
** [X_a, X_b] = X_(e_a x e_b), which is where the term omega x dL/domega of
** the equations comes from (the Euler-Poincare equations: J. E. Marsden
** and T. S. Ratiu, "Introduction to Mechanics and Symmetry", 2nd ed., 1999,
** ch. 13; the Boltzmann-Hamel form of the same: L. Meirovitch, "Methods of
** Analytical Dynamics", 1970, ch. 4; chapters from memory).
*/
#include "sym/symbolic_internal.h"

#include <cassert>

using namespace GiNaC;

namespace eomsym {

/* The rotation of a unit quaternion, row-major: the textbook form
** R = I + 2w[v]x + 2[v]x^2 (J. B. Kuipers, "Quaternions and Rotation
** Sequences", 1999; chapter from memory).  It equals the rotation on the unit sphere, so
** its derivatives along the sphere (all the derivation takes) are exact. */
void attitude_rotation(const ex q[4], ex R[9]) {
  const ex &w = q[0], &x = q[1], &y = q[2], &z = q[3];
  R[0] = 1 - 2 * (y * y + z * z);
  R[1] = 2 * (x * y - w * z);
  R[2] = 2 * (x * z + w * y);
  R[3] = 2 * (x * y + w * z);
  R[4] = 1 - 2 * (x * x + z * z);
  R[5] = 2 * (y * z - w * x);
  R[6] = 2 * (x * z - w * y);
  R[7] = 2 * (y * z + w * x);
  R[8] = 1 - 2 * (x * x + y * y);
}

/* N(q), 4x3 row-major: q' = N(q) omega for the body-frame omega, from
** q' = q (x) [0, omega] / 2 (Kuipers 1999; chapter from memory). */
void attitude_rate_map(const ex q[4], ex N[12]) {
  const ex &w = q[0], &x = q[1], &y = q[2], &z = q[3];
  const ex h = numeric(1, 2);
  N[0] = -h * x, N[1] = -h * y, N[2] = -h * z;
  N[3] = h * w, N[4] = -h * z, N[5] = h * y;
  N[6] = h * z, N[7] = h * w, N[8] = -h * x;
  N[9] = -h * y, N[10] = h * x, N[11] = h * w;
}

/* a x b */
void attitude_cross(const ex a[3], const ex b[3], ex out[3]) {
  for (int i = 0; i < 3; i++) {
    int j = (i + 1) % 3, k = (i + 2) % 3;
    out[i] = a[j] * b[k] - a[k] * b[j];
  }
}

}  // namespace eomsym
