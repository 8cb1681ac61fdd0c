/*
** handmodels.c — the hand-written models of handmodels.h.  Each gives its
** mass matrix, forcing and energies from the textbook Lagrangian; accel()
** solves M q'' = f by Cholesky and fails when M is not positive definite,
** as generated code does.
*/
#include "handmodels.h"

#include <math.h>
#include <string.h>

/* Solve M a = f in place (a := f) by Cholesky; -1 when M is not positive definite. */
static int cholesky_solve(int n, double *M, double *a) {
  for (int j = 0; j < n; j++) {
    double d = M[j * n + j];
    for (int k = 0; k < j; k++) d -= M[j * n + k] * M[j * n + k];
    if (!(d > 0)) return -1;
    M[j * n + j] = sqrt(d);
    for (int i = j + 1; i < n; i++) {
      double s = M[i * n + j];
      for (int k = 0; k < j; k++) s -= M[i * n + k] * M[j * n + k];
      M[i * n + j] = s / M[j * n + j];
    }
  }
  for (int i = 0; i < n; i++) {
    for (int k = 0; k < i; k++) a[i] -= M[i * n + k] * a[k];
    a[i] /= M[i * n + i];
  }
  for (int i = n - 1; i >= 0; i--) {
    for (int k = i + 1; k < n; k++) a[i] -= M[k * n + i] * a[k];
    a[i] /= M[i * n + i];
  }
  return 0;
}

#define ACCEL_VIA(prefix, N)                                                              \
  static int prefix##_accel(double t, const double *q, const double *qd, const double *u, \
                            const double *p, double *qdd) {                               \
    double M[(N) * (N)];                                                                  \
    prefix##_mass(q, p, M);                                                               \
    prefix##_forcing(t, q, qd, u, p, qdd);                                                \
    return cholesky_solve((N), M, qdd);                                                   \
  }                                                                                       \
  static void prefix##_rhs(double t, const double *x, const double *u, const double *p,   \
                           double *xdot) {                                                \
    memcpy(xdot, x + (N), (N) * sizeof(double));                                          \
    prefix##_accel(t, x, x + (N), u, p, xdot + (N));                                      \
  }

/* ---------------------------------------------------------------- pendulum
** L = 1/2 m L^2 theta'^2 + m g L cos(theta); torque tau on the coordinate. */
static void pend_mass(const double *q, const double *p, double *M) {
  (void)q;
  M[0] = p[0] * p[1] * p[1];
}
static void pend_forcing(double t, const double *q, const double *qd, const double *u,
                         const double *p, double *f) {
  (void)t, (void)qd;
  f[0] = -p[0] * p[2] * p[1] * sin(q[0]) + u[0];
}
ACCEL_VIA(pend, 1)
static void pend_jacobian(double t, const double *x, const double *u, const double *p, double *A,
                          double *B) {
  (void)t, (void)u;
  A[0] = 0, A[1] = 1;
  A[2] = -p[2] / p[1] * cos(x[0]), A[3] = 0;
  B[0] = 0, B[1] = 1 / (p[0] * p[1] * p[1]);
}
static void pend_energy(const double *q, const double *qd, const double *p, double *T,
                        double *V) {
  *T = 0.5 * p[0] * p[1] * p[1] * qd[0] * qd[0];
  *V = -p[0] * p[2] * p[1] * cos(q[0]);
}
static const char *const pend_coords[] = {"theta"}, *const pend_params[] = {"m", "L", "g"};
static const char *const pend_blank[] = {"", "", ""}, *const pend_inputs[] = {"tau"};
static const double pend_defaults[] = {1.0, 1.0, 9.81}, zeros[8] = {0};
const struct eom_model tm_pendulum = {
    .abi = EOM_MODEL_ABI, .name = "pendulum", .hash = "0",
    .nq = 1, .nu = 1, .np = 3, .ny = 0, .nc = 0,
    .coord_names = pend_coords, .coord_units = pend_blank, .coord_descs = pend_blank,
    .param_names = pend_params, .param_units = pend_blank, .param_descs = pend_blank,
    .param_defaults = pend_defaults, .input_names = pend_inputs, .input_units = pend_blank,
    .q0 = zeros, .qd0 = zeros,
    .mass = pend_mass, .forcing = pend_forcing, .accel = pend_accel, .rhs = pend_rhs,
    .jacobian = pend_jacobian, .energy = pend_energy,
};

/* ---------------------------------------------------------------- chain
** wall -k- m -k- m -k- wall; damper c from each mass to ground. */
static void chain_mass(const double *q, const double *p, double *M) {
  (void)q;
  M[0] = p[0], M[1] = 0, M[2] = 0, M[3] = p[0];
}
static void chain_forcing(double t, const double *q, const double *qd, const double *u,
                          const double *p, double *f) {
  (void)t, (void)u;
  double k = p[1], c = p[2];
  f[0] = -2 * k * q[0] + k * q[1] - c * qd[0];
  f[1] = k * q[0] - 2 * k * q[1] - c * qd[1];
}
ACCEL_VIA(chain, 2)
static void chain_jacobian(double t, const double *x, const double *u, const double *p,
                           double *A, double *B) {
  (void)t, (void)x, (void)u, (void)B;
  double m = p[0], k = p[1], c = p[2];
  const double J[16] = {0, 0, 1, 0, /**/ 0, 0, 0, 1, /**/ -2 * k / m, k / m, -c / m, 0,
                        /**/ k / m, -2 * k / m, 0, -c / m};
  memcpy(A, J, sizeof J);
}
static void chain_energy(const double *q, const double *qd, const double *p, double *T,
                         double *V) {
  double k = p[1];
  *T = 0.5 * p[0] * (qd[0] * qd[0] + qd[1] * qd[1]);
  *V = 0.5 * k * (q[0] * q[0] + (q[1] - q[0]) * (q[1] - q[0]) + q[1] * q[1]);
}
static const char *const chain_coords[] = {"x1", "x2"}, *const chain_params[] = {"m", "k", "c"};
static const double chain_defaults[] = {2.0, 8.0, 0.0};
const struct eom_model tm_chain = {
    .abi = EOM_MODEL_ABI, .name = "chain", .hash = "0",
    .nq = 2, .nu = 0, .np = 3, .ny = 0, .nc = 0,
    .coord_names = chain_coords, .coord_units = pend_blank, .coord_descs = pend_blank,
    .param_names = chain_params, .param_units = pend_blank, .param_descs = pend_blank,
    .param_defaults = chain_defaults, .q0 = zeros, .qd0 = zeros,
    .mass = chain_mass, .forcing = chain_forcing, .accel = chain_accel, .rhs = chain_rhs,
    .jacobian = chain_jacobian, .energy = chain_energy,
};

/* ---------------------------------------------------------------- Kepler
** L = 1/2 m (r'^2 + r^2 phi'^2) + mu m / r. */
static void kep_mass(const double *q, const double *p, double *M) {
  M[0] = p[0], M[1] = 0, M[2] = 0, M[3] = p[0] * q[0] * q[0];
}
static void kep_forcing(double t, const double *q, const double *qd, const double *u,
                        const double *p, double *f) {
  (void)t, (void)u;
  double m = p[0], mu = p[1], r = q[0];
  f[0] = m * r * qd[1] * qd[1] - mu * m / (r * r);
  f[1] = -2 * m * r * qd[0] * qd[1];
}
ACCEL_VIA(kep, 2)
static void kep_jacobian(double t, const double *x, const double *u, const double *p, double *A,
                         double *B) {
  (void)t, (void)u, (void)B;
  double mu = p[1], r = x[0], rd = x[2], phid = x[3];
  const double J[16] = {0, 0, 1, 0, /**/ 0, 0, 0, 1,
                        /**/ phid * phid + 2 * mu / (r * r * r), 0, 0, 2 * r * phid,
                        /**/ 2 * rd * phid / (r * r), 0, -2 * phid / r, -2 * rd / r};
  memcpy(A, J, sizeof J);
}
static void kep_energy(const double *q, const double *qd, const double *p, double *T,
                       double *V) {
  *T = 0.5 * p[0] * (qd[0] * qd[0] + q[0] * q[0] * qd[1] * qd[1]);
  *V = -p[1] * p[0] / q[0];
}
static const char *const kep_coords[] = {"r", "phi"}, *const kep_params[] = {"m", "mu"};
static const double kep_defaults[] = {1.0, 1.0};
const struct eom_model tm_kepler = {
    .abi = EOM_MODEL_ABI, .name = "kepler", .hash = "0",
    .nq = 2, .nu = 0, .np = 2, .ny = 0, .nc = 0,
    .coord_names = kep_coords, .coord_units = pend_blank, .coord_descs = pend_blank,
    .param_names = kep_params, .param_units = pend_blank, .param_descs = pend_blank,
    .param_defaults = kep_defaults, .q0 = zeros, .qd0 = zeros,
    .mass = kep_mass, .forcing = kep_forcing, .accel = kep_accel, .rhs = kep_rhs,
    .jacobian = kep_jacobian, .energy = kep_energy,
};

/* ---------------------------------------------------------------- oscillator
** m x'' = -k x - c x' + F. */
static void osc_mass(const double *q, const double *p, double *M) {
  (void)q;
  M[0] = p[0];
}
static void osc_forcing(double t, const double *q, const double *qd, const double *u,
                        const double *p, double *f) {
  (void)t;
  f[0] = -p[1] * q[0] - p[2] * qd[0] + u[0];
}
ACCEL_VIA(osc, 1)
static void osc_jacobian(double t, const double *x, const double *u, const double *p, double *A,
                         double *B) {
  (void)t, (void)x, (void)u;
  A[0] = 0, A[1] = 1, A[2] = -p[1] / p[0], A[3] = -p[2] / p[0];
  B[0] = 0, B[1] = 1 / p[0];
}
static void osc_energy(const double *q, const double *qd, const double *p, double *T,
                       double *V) {
  *T = 0.5 * p[0] * qd[0] * qd[0];
  *V = 0.5 * p[1] * q[0] * q[0];
}
static void osc_outputs(double t, const double *q, const double *qd, const double *u,
                        const double *p, double *y) {
  (void)t, (void)qd, (void)u;
  y[0] = p[1] * q[0];
}
static const char *const osc_coords[] = {"x"}, *const osc_params[] = {"m", "k", "c"};
static const char *const osc_inputs[] = {"F"}, *const osc_outputs_names[] = {"spring_force"};
static const double osc_defaults[] = {1.0, 1.0, 0.0};
const struct eom_model tm_oscillator = {
    .abi = EOM_MODEL_ABI, .name = "oscillator", .hash = "0",
    .nq = 1, .nu = 1, .np = 3, .ny = 1, .nc = 0,
    .coord_names = osc_coords, .coord_units = pend_blank, .coord_descs = pend_blank,
    .param_names = osc_params, .param_units = pend_blank, .param_descs = pend_blank,
    .param_defaults = osc_defaults, .input_names = osc_inputs, .input_units = pend_blank,
    .output_names = osc_outputs_names, .q0 = zeros, .qd0 = zeros,
    .mass = osc_mass, .forcing = osc_forcing, .accel = osc_accel, .rhs = osc_rhs,
    .jacobian = osc_jacobian, .energy = osc_energy, .outputs = osc_outputs,
};

/* ---------------------------------------------------------------- double pendulum
** Two equal point masses m on massless rods of length l, angles from the
** downward vertical. */
static void dp_mass(const double *q, const double *p, double *M) {
  double ml2 = p[0] * p[1] * p[1], c = cos(q[0] - q[1]);
  M[0] = 2 * ml2, M[1] = ml2 * c, M[2] = ml2 * c, M[3] = ml2;
}
static void dp_forcing(double t, const double *q, const double *qd, const double *u,
                       const double *p, double *f) {
  (void)t, (void)u;
  double m = p[0], l = p[1], g = p[2], s = sin(q[0] - q[1]);
  f[0] = -m * l * l * qd[1] * qd[1] * s - 2 * m * g * l * sin(q[0]);
  f[1] = m * l * l * qd[0] * qd[0] * s - m * g * l * sin(q[1]);
}
ACCEL_VIA(dp, 2)
static void dp_energy(const double *q, const double *qd, const double *p, double *T,
                      double *V) {
  double m = p[0], l = p[1], g = p[2];
  *T = 0.5 * m * l * l * (2 * qd[0] * qd[0] + qd[1] * qd[1] +
                          2 * qd[0] * qd[1] * cos(q[0] - q[1]));
  *V = -m * g * l * (2 * cos(q[0]) + cos(q[1]));
}
static const char *const dp_coords[] = {"th1", "th2"}, *const dp_params[] = {"m", "l", "g"};
static const double dp_defaults[] = {1.0, 0.5, 9.81};
const struct eom_model tm_double_pendulum = {
    .abi = EOM_MODEL_ABI, .name = "double_pendulum", .hash = "0",
    .nq = 2, .nu = 0, .np = 3, .ny = 0, .nc = 0,
    .coord_names = dp_coords, .coord_units = pend_blank, .coord_descs = pend_blank,
    .param_names = dp_params, .param_units = pend_blank, .param_descs = pend_blank,
    .param_defaults = dp_defaults, .q0 = zeros, .qd0 = zeros,
    .mass = dp_mass, .forcing = dp_forcing, .accel = dp_accel, .rhs = dp_rhs,
    .jacobian = NULL, .energy = dp_energy,
};

/* ---------------------------------------------------------------- vanishing mass */
static void vm_mass(const double *q, const double *p, double *M) {
  (void)p;
  M[0] = 1 - q[0];
}
static void vm_forcing(double t, const double *q, const double *qd, const double *u,
                       const double *p, double *f) {
  (void)t, (void)q, (void)qd, (void)u, (void)p;
  f[0] = 0;
}
ACCEL_VIA(vm, 1)
static void vm_energy(const double *q, const double *qd, const double *p, double *T, double *V) {
  (void)p;
  *T = 0.5 * (1 - q[0]) * qd[0] * qd[0];
  *V = 0;
}
static const char *const vm_coords[] = {"x"};
const struct eom_model tm_vanishing_mass = {
    .abi = EOM_MODEL_ABI, .name = "vanishing_mass", .hash = "0",
    .nq = 1, .nu = 0, .np = 0, .ny = 0, .nc = 0,
    .coord_names = vm_coords, .coord_units = pend_blank, .coord_descs = pend_blank,
    .param_names = pend_blank, .param_units = pend_blank, .param_descs = pend_blank,
    .param_defaults = zeros, .q0 = zeros, .qd0 = zeros,
    .mass = vm_mass, .forcing = vm_forcing, .accel = vm_accel, .rhs = vm_rhs,
    .energy = vm_energy,
};

/* ---------------------------------------------------------------- free pair
** m -k- m, no walls. */
static void fp_mass(const double *q, const double *p, double *M) {
  (void)q;
  M[0] = p[0], M[1] = 0, M[2] = 0, M[3] = p[0];
}
static void fp_forcing(double t, const double *q, const double *qd, const double *u,
                       const double *p, double *f) {
  (void)t, (void)qd, (void)u;
  f[0] = -p[1] * (q[0] - q[1]);
  f[1] = -p[1] * (q[1] - q[0]);
}
ACCEL_VIA(fp, 2)
static void fp_jacobian(double t, const double *x, const double *u, const double *p, double *A,
                        double *B) {
  (void)t, (void)x, (void)u, (void)B;
  double w = p[1] / p[0];
  const double J[16] = {0, 0, 1, 0, /**/ 0, 0, 0, 1, /**/ -w, w, 0, 0, /**/ w, -w, 0, 0};
  memcpy(A, J, sizeof J);
}
static void fp_energy(const double *q, const double *qd, const double *p, double *T,
                      double *V) {
  *T = 0.5 * p[0] * (qd[0] * qd[0] + qd[1] * qd[1]);
  *V = 0.5 * p[1] * (q[1] - q[0]) * (q[1] - q[0]);
}
static const char *const fp_params[] = {"m", "k"};
static const double fp_defaults[] = {3.0, 12.0};
const struct eom_model tm_free_pair = {
    .abi = EOM_MODEL_ABI, .name = "free_pair", .hash = "0",
    .nq = 2, .nu = 0, .np = 2, .ny = 0, .nc = 0,
    .coord_names = chain_coords, .coord_units = pend_blank, .coord_descs = pend_blank,
    .param_names = fp_params, .param_units = pend_blank, .param_descs = pend_blank,
    .param_defaults = fp_defaults, .q0 = zeros, .qd0 = zeros,
    .mass = fp_mass, .forcing = fp_forcing, .accel = fp_accel, .rhs = fp_rhs,
    .jacobian = fp_jacobian, .energy = fp_energy,
};

/* ---------------------------------------------------------------- bad jacobian */
static void bad_jacobian(double t, const double *x, const double *u, const double *p, double *A,
                         double *B) {
  pend_jacobian(t, x, u, p, A, B);
  A[2] = -A[2];
}
const struct eom_model tm_pendulum_bad_jacobian = {
    .abi = EOM_MODEL_ABI, .name = "pendulum_bad_jacobian", .hash = "0",
    .nq = 1, .nu = 1, .np = 3, .ny = 0, .nc = 0,
    .coord_names = pend_coords, .coord_units = pend_blank, .coord_descs = pend_blank,
    .param_names = pend_params, .param_units = pend_blank, .param_descs = pend_blank,
    .param_defaults = pend_defaults, .input_names = pend_inputs, .input_units = pend_blank,
    .q0 = zeros, .qd0 = zeros,
    .mass = pend_mass, .forcing = pend_forcing, .accel = pend_accel, .rhs = pend_rhs,
    .jacobian = bad_jacobian, .energy = pend_energy,
};

/* ---------------------------------------------------------------- Cartesian pendulum
** M q'' = f + G^T lambda with G = dphi/dq = [2x, 2y] and G q'' = gamma =
** -2 (x'^2 + y'^2); lambda from the Schur complement G M^-1 G^T. */
static void cp_mass(const double *q, const double *p, double *M) {
  (void)q;
  M[0] = p[0], M[1] = 0, M[2] = 0, M[3] = p[0];
}
static void cp_forcing(double t, const double *q, const double *qd, const double *u,
                       const double *p, double *f) {
  (void)t, (void)q, (void)qd, (void)u;
  f[0] = 0;
  f[1] = -p[0] * p[2];
}
static int cp_accel(double t, const double *q, const double *qd, const double *u,
                    const double *p, double *qdd) {
  /* Unconstrained: free fall (what accel() of a constrained model gives). */
  double f[2];
  cp_forcing(t, q, qd, u, p, f);
  qdd[0] = f[0] / p[0];
  qdd[1] = f[1] / p[0];
  return 0;
}
static void cp_constraint(const double *q, const double *p, double *phi) {
  phi[0] = q[0] * q[0] + q[1] * q[1] - p[1] * p[1];
}
static void cp_constraint_jacobian(const double *q, const double *p, double *G) {
  (void)p;
  G[0] = 2 * q[0], G[1] = 2 * q[1];
}
static int cp_accel_constrained(double t, const double *q, const double *qd, const double *u,
                                const double *p, double *qdd, double *lambda) {
  double f[2], G[2], m = p[0];
  cp_forcing(t, q, qd, u, p, f);
  cp_constraint_jacobian(q, p, G);
  double gamma = -2 * (qd[0] * qd[0] + qd[1] * qd[1]);
  double s = (G[0] * G[0] + G[1] * G[1]) / m;
  if (!(s > 0)) return 1;
  lambda[0] = (gamma - (G[0] * f[0] + G[1] * f[1]) / m) / s;
  qdd[0] = (f[0] + G[0] * lambda[0]) / m;
  qdd[1] = (f[1] + G[1] * lambda[0]) / m;
  return 0;
}
static void cp_rhs(double t, const double *x, const double *u, const double *p, double *xdot) {
  double lambda;
  memcpy(xdot, x + 2, 2 * sizeof(double));
  cp_accel_constrained(t, x, x + 2, u, p, xdot + 2, &lambda);
}
static void cp_energy(const double *q, const double *qd, const double *p, double *T, double *V) {
  *T = 0.5 * p[0] * (qd[0] * qd[0] + qd[1] * qd[1]);
  *V = p[0] * p[2] * q[1];
}
static const char *const cp_coords[] = {"x", "y"};
const struct eom_model tm_cartesian_pendulum = {
    .abi = EOM_MODEL_ABI, .name = "cartesian_pendulum", .hash = "0",
    .nq = 2, .nu = 0, .np = 3, .ny = 0, .nc = 1,
    .coord_names = cp_coords, .coord_units = pend_blank, .coord_descs = pend_blank,
    .param_names = pend_params, .param_units = pend_blank, .param_descs = pend_blank,
    .param_defaults = pend_defaults, .q0 = zeros, .qd0 = zeros,
    .mass = cp_mass, .forcing = cp_forcing, .accel = cp_accel, .rhs = cp_rhs,
    .jacobian = NULL, .energy = cp_energy, .constraint = cp_constraint,
    .constraint_jacobian = cp_constraint_jacobian, .accel_constrained = cp_accel_constrained,
};
