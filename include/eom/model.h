/*
** eom/model.h — the descriptor every generated model exports as P_model.
**
** One runtime (libeomrt) drives any generated model through this struct:
** sizes, names, units, defaults, initial state and the generated functions.
** Arrays are plain double*, matrices row-major; the state is x = [q; qd]
** (nq + nv entries: qd is v, the velocities, which are the rates of q
** except for attitudes, whose velocities are their body-frame omega; see
** the fields of ABI 8 at the end).
** Function pointers of features a model lacks are NULL (e.g. the constraint
** functions when nc == 0).
*/
#ifndef EOM_MODEL_H
#define EOM_MODEL_H

#ifdef __cplusplus
extern "C" {
#endif

/* Bumped whenever the layout of struct eom_model changes. */
#define EOM_MODEL_ABI 9

struct eom_model {
  int abi;                          /* EOM_MODEL_ABI of the generating eomc */
  const char *name;                 /* the model's C prefix */
  const char *hash;                 /* hash of the model text (hex) */
  int nq, nu, np, ny, nc;

  const char *const *coord_names;   /* nq */
  const char *const *coord_units;   /* nq, "" when none */
  const char *const *coord_descs;   /* nq, "" when none */
  const char *const *param_names;   /* np */
  const char *const *param_units;   /* np */
  const char *const *param_descs;   /* np */
  const double *param_defaults;     /* np */
  const char *const *input_names;   /* nu */
  const char *const *input_units;   /* nu */
  const char *const *output_names;  /* ny */
  const double *q0, *qd0;           /* default initial state, nq each */

  void (*mass)(const double *q, const double *p, double *M);
  void (*forcing)(double t, const double *q, const double *qd, const double *u,
                  const double *p, double *f);
  int (*accel)(double t, const double *q, const double *qd, const double *u,
               const double *p, double *qdd);
  void (*rhs)(double t, const double *x, const double *u, const double *p, double *xdot);
  void (*jacobian)(double t, const double *x, const double *u, const double *p,
                   double *A, double *B);
  void (*inverse)(double t, const double *q, const double *qd, const double *qdd,
                  const double *p, double *Q);
  void (*energy)(const double *q, const double *qd, const double *p, double *T, double *V);
  void (*outputs)(double t, const double *q, const double *qd, const double *u,
                  const double *p, double *y);
  void (*constraint)(const double *q, const double *p, double *phi);
  void (*constraint_jacobian)(const double *q, const double *p, double *G);
  int (*accel_constrained)(double t, const double *q, const double *qd, const double *u,
                           const double *p, double *qdd, double *lambda);

  /* Since ABI 2: M qdd + C qd + g = Q - dD/dqd (coriolis and gravity NULL
  ** when the model has no such split), the momenta dL/dqd, the energy
  ** function h = qd.dL/dqd - L, and which of them are constants of the
  ** motion. */
  void (*coriolis)(const double *q, const double *qd, const double *p, double *C);
  void (*gravity)(const double *q, const double *p, double *g);
  void (*momenta)(const double *q, const double *qd, const double *p, double *pm);
  void (*hamiltonian)(const double *q, const double *qd, const double *p, double *h);
  const int *cyclic;                /* nq: 1 when pm[i] is conserved; NULL when none is */
  int energy_conserved;             /* 1 when h is conserved */

  /* Since ABI 3: recompute the params whose default is an expression of
  ** earlier params from the current p, in declaration order, except those
  ** flagged in given (np ints, or NULL: recompute them all).  Generated
  ** models always set it; NULL (hand-written descriptors): no such params. */
  void (*derived_params)(double *p, const int *given);
  /* Since ABI 3: the constraints at time t (time-dependent ones too): phi
  ** (nc), G = dphi/dq (nc x nq) and dphi/dt (nc), so phi' = G qd + dphi/dt.
  ** NULL when nc == 0 (and in hand-written descriptors without it). */
  void (*constraint_at)(double t, const double *q, const double *p, double *phi, double *G,
                        double *phi_t);

  /* Since ABI 4: the outputs that depend on q and p only are "kinematic"
  ** (output_kinematic[i] == 1, ny flags); output_jacobian writes
  ** J = dy/dq (ny x nq, NaN in the rows of the other outputs) and
  ** output_bias J' qd (ny), so y'' = J qdd + J' qd.  All three NULL when
  ** no output is kinematic. */
  const int *output_kinematic;
  void (*output_jacobian)(const double *q, const double *p, double *J);
  void (*output_bias)(const double *q, const double *qd, const double *p, double *b);
  /* Since ABI 4: the `frame` outputs.  Frame k fills y[frame_outputs[k]]
  ** onwards with its position (3) and rotation (9, row by row); its
  ** function writes the same pos and R, the geometric Jacobian J (6 x nq:
  ** world velocity of the origin over world angular velocity) and the bias
  ** Jdv = J' qd (6).  NULL arrays when nframes == 0. */
  int nframes;
  const char *const *frame_names;
  const int *frame_outputs;
  void (*const *frames)(const double *q, const double *qd, const double *p, double *pos,
                        double *R, double *J, double *Jdv);
  /* Since ABI 5: velocity constraints A(t, q) qd = b(t, q) (nvc x nq and
  ** nvc) and gamma(t, q, qd) (nvc) with A qdd = gamma.  accel_constrained
  ** then takes both kinds: lambda has nc + nvc entries, the velocity
  ** constraints' last, and the constraint force is [G; A]ᵀ lambda.
  ** nvc = 0 and NULL when the model has none. */
  int nvc;
  void (*velocity_constraint)(double t, const double *q, const double *qd, const double *p,
                              double *A, double *b, double *gamma);
  /* Since ABI 6: gamma of the acceleration constraint G qdd = gamma (nc),
  ** so the runtime can solve M qdd = f + Gᵀλ itself where G loses rank.
  ** NULL when nc == 0 (and in hand-written descriptors without it). */
  void (*constraint_gamma)(double t, const double *q, const double *qd, const double *p,
                           double *gamma);

  /* Since ABI 7: the ns switching functions s(t, q, qd, u, p); where one
  ** changes sign a non-smooth term (min, max, sign, step, clamp, abs)
  ** changes branch.  switch_names[k] is "LINE:COL FUNCTION" of its call
  ** ("... lower"/"... upper" for a clamp's bounds).  0 and NULL when the
  ** model has none. */
  int ns;
  void (*switches)(double t, const double *q, const double *qd, const double *u,
                   const double *p, double *s);
  const char *const *switch_names;

  /* Since ABI 8: attitudes (free orientations).  Each adds a unit
  ** quaternion [w, x, y, z] (body axes to world) to q, after the
  ** coordinates, and its body-frame angular velocity omega to the
  ** velocities v, after the coordinates' rates: nv = nq - nattitudes, the
  ** state is x = [q; v] (nq + nv), q' = kinematics(q, v), and everything
  ** over rates (qd, qdd, M, f, Q, the momenta, the Jacobians' columns of
  ** outputs and frames, qd0) is nv long.  coord_names (nq) name the
  ** quaternion entries "R.w" ... "R.z"; rate_names (nv) name the entries
  ** of v ("x'", "omega(R)[1]").  normalize divides each quaternion by its
  ** norm (integrators call it after every step) and returns the largest
  ** | |q| - 1 | it met.  Without attitudes: nv == nq (hand-written
  ** descriptors may leave it 0, meaning the same) and the rest 0/NULL. */
  int nv;
  int nattitudes;
  const char *const *attitude_names;
  const char *const *rate_names;
  void (*kinematics)(const double *q, const double *v, double *qdot);
  double (*normalize)(double *q);

  /* Since ABI 9: the nstops end stops (`stop LEFT >= RIGHT`).  stops writes
  ** their gaps g = LEFT - RIGHT (nstops; >= 0 while apart), the gradient
  ** G = dg/dq (nstops x nv) and gamma (nstops) with g'' = G qdd - gamma.
  ** stop_names[k] is "LINE:COL TEXT"; stop_bounce[k] the coefficient of
  ** restitution in [0, 1].  0 and NULL when the model has none. */
  int nstops;
  void (*stops)(double t, const double *q, const double *qd, const double *p, double *g,
                double *G, double *gamma);
  const char *const *stop_names;
  const double *stop_bounce;
};

#ifdef __cplusplus
}
#endif
#endif
