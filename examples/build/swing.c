/*
** swing.c — the program of the build examples: it drives the sorting arm that
** eomc generated (sorting_arm.h, sorting_arm.c) with the runtime libeomrt.
**
** It calls the generated forward dynamics once directly, then lets the
** runtime integrate a one-second swing under a constant motor torque and
** prints where the gripper ends up.  Both build examples (make/ and cmake/)
** compile this same file.
*/
#include <stdio.h>

#include <eom/runtime.h>

#include "sorting_arm.h"

int main(void) {
  const struct eom_model *m = &sorting_arm_model;
  const double *p = m->param_defaults;
  const double torque = 1.5; /* N*m, a gentle start */
  double x[2 * sorting_arm_NQ], qdd[sorting_arm_NQ], y[sorting_arm_NY], u[sorting_arm_NU];
  struct eom_sim_options o;
  struct eom_report rep;
  eom_inputs *in;
  int st;

  for (int i = 0; i < sorting_arm_NQ; i++) {
    x[i] = m->q0[i];
    x[sorting_arm_NQ + i] = m->qd0[i];
  }
  u[0] = torque;

  /* The generated code on its own: accelerations at the start. */
  if (sorting_arm_accel(0.0, x, x + sorting_arm_NQ, u, p, qdd) != 0) {
    fprintf(stderr, "swing: the mass matrix is not positive definite\n");
    return 1;
  }
  printf("start: th'' = %.6f rad/s^2, r'' = %.6f m/s^2\n", qdd[0], qdd[1]);

  /* The runtime: one second of motion under the same torque. */
  in = eom_inputs_new(m->nu);
  if (!in || eom_inputs_set_constant(in, 0, torque) != EOM_OK) {
    fprintf(stderr, "swing: cannot set up the inputs\n");
    if (in) eom_inputs_free(in);
    return 1;
  }
  eom_sim_options_init(&o);
  o.t_end = 1.0;
  st = eom_simulate(m, p, in, x, &o, NULL, NULL, &rep);
  eom_inputs_free(in);
  if (st != EOM_OK) {
    fprintf(stderr, "swing: %s\n", rep.message);
    return 1;
  }
  sorting_arm_outputs(o.t_end, x, x + sorting_arm_NQ, u, p, y);
  printf("after %.1f s: th = %.6f rad, r = %.6f m, gripper at (%.6f, %.6f) m\n", o.t_end, x[0],
         x[1], y[0], y[1]);
  return 0;
}
