/*
** attitude.c — what libeomrt needs for models with attitudes: the number of
** velocities, the quaternions kept unit, and roll/pitch/yaw for reading.
**
** A model's state is x = [q; v]: nq entries of q, nv of v.  Each attitude's
** quaternion [w, x, y, z] sits in q after the coordinates; q' = N(q) v
** keeps |q| = 1 only up to the stepping error, so the integrators divide
** each quaternion by its norm after every accepted step (a projection onto
** the unit sphere: the error it removes is of the order of the step's own
** local error, and the equations hold on the sphere).
*/
#include <assert.h>
#include <math.h>

#include "eom/runtime.h"

int eom_nv(const struct eom_model *m) {
  assert(m);
  return m->nv > 0 ? m->nv : m->nq;   /* hand-written descriptors may leave it 0 */
}

int eom_state_size(const struct eom_model *m) { return m->nq + eom_nv(m); }

int eom_first_quaternion(const struct eom_model *m) {
  assert(m && m->nattitudes >= 0);
  return m->nq - 4 * m->nattitudes;
}

double eom_normalize_state(const struct eom_model *m, double *x) {
  if (m->nattitudes <= 0 || !m->normalize) return 0.0;
  return m->normalize(x);
}

/* Z-Y-X (yaw, pitch, roll) angles of the rotation of a unit quaternion:
** R = rotz(yaw) roty(pitch) rotx(roll), the aircraft convention (common
** practice; e.g. J. B. Kuipers, Quaternions and Rotation Sequences, 1999).
** At pitch = +-90 degrees roll and yaw are not separable: roll is then
** reported 0.  Read them, never step them. */
void eom_quaternion_rpy(const double *q, double rpy[3]) {
  double w = q[0], x = q[1], y = q[2], z = q[3];
  double n = sqrt(w * w + x * x + y * y + z * z);
  if (n > 0) w /= n, x /= n, y /= n, z /= n;
  double s = 2 * (w * y - z * x);   /* -R[2][0] = sin(pitch) */
  s = s > 1 ? 1 : s < -1 ? -1 : s;
  double r21 = 2 * (y * z + w * x), r22 = 1 - 2 * (x * x + y * y);
  double r10 = 2 * (x * y + w * z), r00 = 1 - 2 * (y * y + z * z);
  double r01 = 2 * (x * y - w * z), r11 = 1 - 2 * (x * x + z * z);
  rpy[1] = asin(s);
  if (fabs(s) < 1 - 1e-12) {
    rpy[0] = atan2(r21, r22);
    rpy[2] = atan2(r10, r00);
  } else {   /* gimbal lock of the angles (not of the state): roll := 0 */
    rpy[0] = 0;
    rpy[2] = atan2(-r01, r11);
  }
}
