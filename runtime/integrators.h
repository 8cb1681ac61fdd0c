/*
** integrators.h — internal interface shared by the files of libeomrt.
**
** SimContext bundles what every integrator needs to evaluate a model (the
** descriptor, parameters, inputs and scratch space) and records the first
** failure with the time and state where it happened.  The Sampler hands out
** evenly spaced sample times and calls the user's sample function.  Nothing
** here is installed; users see only <eom/runtime.h>.
*/
#ifndef EOMRT_INTEGRATORS_H
#define EOMRT_INTEGRATORS_H

#include <float.h>
#include <math.h>

#include <stdio.h>

#include "eom/runtime.h"

typedef struct SimContext {
  const struct eom_model *m;
  const double *p;          /* parameters (np) */
  const eom_inputs *in;     /* may be NULL */
  const double *u_fixed;    /* when set, u is this instead of in's signals */
  int n;                    /* state size nq + nv (2 nq without attitudes) */
  double *att_sample;       /* n: a sample with its quaternions normalized */
  double *u;                /* nu: inputs at the last evaluation */
  double *lambda;           /* nc: multipliers (constrained models) */
  double *jac_b;            /* n*nu: d xdot/du, filled by jacobian() and dropped */
  double *fd_x, *fd_f1, *fd_f2;  /* n each: finite-difference scratch */
  int *piv;                 /* 3n: pivots for the implicit methods */
  double rtol, atol;
  double t_good;            /* time of the last accepted state */
  int jacobian_by_fd;       /* the model's jacobian proved wrong: use differences */
  struct eom_report *rep;   /* never NULL inside the runtime */
  /* Constraint upkeep (stabilize.c); all zero when off. */
  int cs_active;            /* nc > 0 and phi can be evaluated: stabilize */
  int cs_project;           /* project q, q' after each accepted step */
  double cs_alpha, cs_beta; /* Baumgarte gains (1/s) */
  double cs_tol;            /* max|phi| the projection aims for */
  double *cs_work;          /* scratch of stabilize.c */
  double *cs_sample;        /* n: a sample projected onto the constraints */
  const int *cs_hold;       /* nq flags or NULL: coordinates the initial fix keeps */
  int cs_solver;            /* enum eom_constraint_solver */
  int cs_holding;           /* 1 during the initial fix: honour cs_hold */
  struct StickState *stick; /* Coulomb sticking (stick.c); NULL when off */
} SimContext;

/* Allocate the scratch of c for model m (everything else set by the caller).
** Returns EOM_OK or EOM_ENOMEM. */
int simctx_init(SimContext *c, const struct eom_model *m, const double *p,
                const eom_inputs *in, struct eom_report *rep);
void simctx_free(SimContext *c);

/* Put each quaternion of x back on the unit sphere after an accepted step
** (models with attitudes; nothing otherwise: eom_normalize_state). */
void sim_normalize(SimContext *c, double *x);

/* xdot = dynamics at (t, x) with u = u(t).  When accel() reports a mass
** matrix that is not positive definite, fills c->rep with the time and state
** and returns EOM_EMASS.  Finiteness is the caller's to check: an adaptive
** method rejects a non-finite trial step instead of failing. */
int sim_rhs(SimContext *c, double t, const double *x, double *xdot);
/* A = d xdot/dx at (t, x): the model's jacobian, or central differences. */
int sim_jacobian(SimContext *c, double t, const double *x, double *A);
/* Compare the model's jacobian with central differences at (t, x); when
** they disagree, use differences from now on.  Returns 1 when it switched. */
int sim_distrust_jacobian(SimContext *c, double t, const double *x);

/* Record a failure in c->rep (report.c):
** "at t = T: WHAT; state q1 = ..., q1' = ...". */
int sim_fail(SimContext *c, int status, double t, const double *x, const char *what);

/* Is every entry of v[n] finite? */
int all_finite(int n, const double *v);
/* Weighted RMS norm of v with weights atol + rtol * max(|a|, |b|). */
double scaled_norm(int n, const double *v, const double *a, const double *b,
                   double rtol, double atol);

/* Evenly spaced sample times over [t0, t_end]: t0 + k*dt, and t_end. */
typedef struct Sampler {
  double t0, t_end, dt;
  long k, kmax;             /* next index; last index on the grid */
  int end_extra;            /* t_end is off the grid: one more sample there */
  int done;
  int every_step;           /* dt == 0: a sample after every step */
  double last_t;            /* time of the last sample delivered */
  eom_sample_fn fn;
  void *ctx;
} Sampler;

void sampler_init(Sampler *s, double t0, double t_end, double dt, eom_sample_fn fn, void *ctx);
/* Time of the next grid sample not yet emitted (INFINITY when all are out,
** and always in every-step mode). */
double sampler_next(const Sampler *s);
/* Deliver a sample (t, x): the next grid time, or any step's end in
** every-step mode.  Returns EOM_OK or EOM_ESTOPPED. */
int sampler_emit(SimContext *c, Sampler *s, double t, const double *x);

/* One fixed step of length h from (t, x) into x.  Returns EOM_OK or a status
** (EOM_ENEWTON means: try again with a smaller step). */
typedef int (*FixedStepFn)(SimContext *c, double t, double h, double *x, double *work);

int rk4_step(SimContext *c, double t, double h, double *x, double *work);
int dopri_fixed_step(SimContext *c, double t, double h, double *x, double *work);
int midpoint_step(SimContext *c, double t, double h, double *x, double *work);
int radau5_step(SimContext *c, double t, double h, double *x, double *work);
/* Doubles of work each stepper needs for state size n. */
size_t rk4_work(int n);
size_t dopri_work(int n);
size_t midpoint_work(int n);
size_t radau5_work(int n);

/* An adaptive run over [o->t0, o->t_end] from x, samples at s's times. */
typedef int (*AdaptiveRunFn)(SimContext *c, const struct eom_sim_options *o, Sampler *s,
                             double *x);

/* Adaptive Dormand–Prince run with dense output at the sample times. */
int dopri_run(SimContext *c, const struct eom_sim_options *o, Sampler *s, double *x);
/* Adaptive Radau IIA run (error estimate and step control of Hairer &
** Wanner II, §IV.8) with samples from the collocation polynomial. */
int radau5_run(SimContext *c, const struct eom_sim_options *o, Sampler *s, double *x);

/* dx = -(JᵀJ + mu I)⁻¹ Jᵀ f for a singular square J (n x n, row-major);
** work n x n.  Returns -1 when J is zero.  (dense.c) */
int least_squares_step(int n, const double *J, const double *f, double *work, double *dx,
                       int *piv);
/* "q1 = 0.1, q2 = 0.2" into buf (report.c). */
void describe_coords(const struct eom_model *m, const double *q, char *buf, size_t cap);

/* Equilibria and tangent-space linearization of models with constraints
** (constrained.c); eom_equilibrium() hands over when nc > 0. */
int constrained_equilibrium(const struct eom_model *m, const double *p, const double *u, double t,
                            double *q, double tol, int max_iter, struct eom_report *rep);

/* Rank-revealing constrained solves (constraint_solve.c).  A solver works
** in caller-owned scratch of csolve_doubles(nq, nc) doubles; csolve_factor
** takes M and G at one configuration (EOM_EMASS when M is not positive
** definite), after which the other calls reuse the factors. */
typedef struct ConstraintSolver {
  int nq, nc, rank;          /* rank: rows of G that act (nc when regular) */
  int mode;                  /* enum eom_constraint_solver: which route to take */
  int sparse;                /* the route of the last factorization: 1 sparse */
  double *L;                 /* nq x nq: Cholesky factor of M (per block: sparse) */
  double *W;                 /* nc x nq: L⁻¹ Gᵀ (dense), M⁻¹ Gᵀ (sparse), by rows of G */
  double *G;                 /* nc x nq: G at the factored configuration */
  double *V, *S;             /* nc x nc: eigenvectors of G M⁻¹ Gᵀ; scratch (dense);
                                null-space basis; L D Lᵀ factor (sparse) */
  double *ev;                /* nc: its eigenvalues, dropped ones set to 0 (dense);
                                D (sparse) */
  double *rhs, *tmp;         /* nc, max(nq, nc): scratch */
  double *dwork;             /* the sparse route's border scratch */
  int *iwork;                /* the sparse route's index scratch */
  int nblocks, nnull, nput;  /* sparse: blocks of M, dimension of the null space,
                                rows put off to the border */
  int crank;                 /* sparse: rank of the border's Schur complement */
} ConstraintSolver;
/* The route AUTO takes from this many rows of G on: the sparse one
** (constraint_sparse.c).  Measured by `make bench` (bench/bench_linkage.py). */
#define CSOLVE_SPARSE_ROWS 8
size_t csolve_doubles(int nq, int nc);
void csolve_init(ConstraintSolver *s, int nq, int nc, double *work);
int csolve_factor(ConstraintSolver *s, const double *M, const double *G);
/* mu = S⁺ r with S = G M⁻¹ Gᵀ (minimum norm where S is singular). */
void csolve_pinv(const ConstraintSolver *s, const double *r, double *mu);
/* b := M⁻¹ b */
void csolve_mass_solve(const ConstraintSolver *s, double *b);
/* v += scale M⁻¹ Gᵀ mu */
void csolve_add_reaction(const ConstraintSolver *s, const double *mu, double scale, double *v);
/* The mass-orthogonal correction that removes r from G v: mu = S⁺ r,
** v -= M⁻¹ Gᵀ mu. */
void csolve_correct(const ConstraintSolver *s, const double *r, double *mu, double *v);
/* M qdd = f + Gᵀλ, G qdd = gamma with minimum-norm λ. */
int csolve_accel(ConstraintSolver *s, const double *M, const double *G, const double *f,
                 const double *gamma, double *qdd, double *lambda);

/* The sparse route (constraint_sparse.c): the same solves from M's blocks
** and a profile L D Lᵀ of G M⁻¹ Gᵀ; csparse_ints is its integer scratch. */
size_t csparse_ints(int nq, int nc);
size_t csparse_doubles(int nc);
int csparse_factor(ConstraintSolver *s, const double *M, const double *G, double tol);
void csparse_pinv(const ConstraintSolver *s, const double *r, double *mu);
void csparse_mass_solve(const ConstraintSolver *s, double *b);
void csparse_add_reaction(const ConstraintSolver *s, const double *mu, double scale, double *v);

/* Constraint upkeep of constrained models (stabilize.c).  stabilize_init
** reads the options and checks at the state x that phi can be evaluated
** (a constraint with explicit t cannot: then everything here is off).
** EOM_OK or EOM_ENOMEM. */
int stabilize_init(SimContext *c, const struct eom_sim_options *o, const double *x);
/* Put x = [q; q'] on phi(q) = 0, G q' = 0 by minimum-norm Gauss–Newton
** steps (at most max_iter); on failure x is unchanged and c->rep says
** `when` it happened.  EOM_OK, EOM_ENEWTON or EOM_ESINGULAR. */
int stabilize_project(SimContext *c, double t, double *x, int max_iter, const char *when);
/* The fix of the initial state before a run: the smallest change of the
** given q and q' (unweighted) that puts them on the constraints. */
int stabilize_initial_fix(SimContext *c, double t, double *x);
/* out = x projected as above when projection is on (else a copy); -1
** (out = x) when the projection fails.  For samples: reports nothing. */
int stabilize_sample(SimContext *c, double t, const double *x, double *out);
/* Add the Baumgarte term to qdd (and c->lambda) at state x. */
int stabilize_baumgarte(SimContext *c, double t, const double *x, double *qdd);
/* qdd and c->lambda of a model with constraint_gamma, by the rank-revealing
** solve with the Baumgarte term included. */
int stabilize_accel(SimContext *c, double t, const double *x, const double *u, double *qdd);

/* Inputs u(t) into c->u (dynamics.c). */
void sim_load_inputs(SimContext *c, double t);

/* Coulomb sticking of rate switches (stick.c), below dynamics.c: the
** callers have loaded c->u for the time they pass. */
typedef struct StickState {
  int ns, nq;
  int nlead;            /* stuck switches that carry a multiplier */
  int *lead;            /* nlead: their indices */
  int *follows;         /* ns: -1 free, k itself for a lead, else its lead */
  double *sigma;        /* nlead: multiplier of each lead at the last transition */
  double *s_prev;       /* ns: switch values after the last fixed step */
  FILE *log;
  /* scratch */
  double *A, *r, *D, *gram, *df, *f0, *fb, *fp, *fm, *M, *B, *W, *rhs, *xp, *s1, *s2;
  double *now, *sig, *qdd, *wdiag, *vals, *xc;
  int *piv;
} StickState;
/* c->stick for a model with switches and no constraints, unless
** o->no_events.  EOM_OK or EOM_ENOMEM. */
int stick_init(SimContext *c, const struct eom_sim_options *o);
void stick_free(SimContext *c);
/* Is some rate stuck? (sim_rhs then asks stick_accel for qdd.) */
int stick_holding(const SimContext *c);
/* qdd at (t, x) with the stuck rates held by their friction. */
int stick_accel(SimContext *c, double t, const double *x, double *qdd);
/* Replace the values of stuck switches in sw (ns) by their margins
** 1 - |sigma| (a release is a crossing) and those of followers by 1. */
void stick_margins(SimContext *c, double t, const double *x, double *sw);
/* After an event of switch k at (t, x): a stuck switch slips, a rate that
** reached zero sticks when its friction can hold it (counted as an event
** unless its crossing was).  1 when x or the stuck set changed. */
int stick_event(SimContext *c, int k, double t, double *x, int counted);
/* A step from (t, x) of h failed (an implicit method's Newton iteration
** cannot follow a rate across a friction's jump, an adaptive step shrank
** away before it): the rates that reach zero within h stick when their
** friction holds them, else are set just past zero.  1 when x changed;
** the step is then taken again. */
int stick_rescue(SimContext *c, double t, double h, double *x);
/* After an accepted step to (t, x): a rate closing in on zero that is
** already within the step tolerance of it has reached it (no step could
** resolve the rest): it sticks, or is set just past zero.  1 when x
** changed; the method restarts. */
int stick_near_zero(SimContext *c, double t, double *x);
/* A step from (t, x) of h failed or shrank away, and a rate reaches zero
** within h so soon that an Euler step there is within the tolerance: take
** it (t and x move there), then the rate sticks or turns.  1 when so; the
** method restarts. */
int stick_reach(SimContext *c, double *t, double h, double *x);
/* At the start: rates at zero stick, or are set moving the way they slip.
** 1 when something changed. */
int stick_start(SimContext *c, double t, double *x);

/* Switches of non-smooth models located in time (events.c).  A DenseFn
** writes the accepted step's continuous extension at t into x. */
typedef void (*DenseFn)(const void *ctx, double t, double *x);
typedef struct EventWatch {
  int ns;                   /* switches watched; 0: none (or events off) */
  double *s0;               /* ns: their values at the current time */
  double *s1, *sa;          /* ns: scratch */
  double *xa;               /* n: scratch state */
  double *x_ev;             /* n: the state at the last event */
  FILE *log;                /* o->event_log */
  int last;                 /* the switch of the last event (-1: none) */
  double t_last;            /* and its time */
  long chatters;            /* crossings back in a row, stepped over */
  long pinned;              /* trial steps in a row crossing at their start */
} EventWatch;

/* Watch m->switches unless o->no_events; s0 at (t, x).  EOM_OK or EOM_ENOMEM. */
int events_init(SimContext *c, const struct eom_sim_options *o, EventWatch *w, double t,
                const double *x);
void events_free(EventWatch *w);
/* The switches at (t, x) into s (ns). */
void events_values(SimContext *c, double t, const double *x, double *s);
/* After an accepted step from t to t_new (state x_new; dense gives the states
** between): 1 when a switch crosses inside it, with *t_ev just past the
** earliest crossing (within tol) and the state there in w->x_ev; the step
** is to end there and the method restart.  0 otherwise.  Counts the events
** in c->rep->events and keeps s0 at the step's end.  A switch that keeps
** crossing back right after its events fails the run: -EOM_ECHATTER. */
int events_after_step(SimContext *c, EventWatch *w, double t, double t_new, const double *x_new,
                      DenseFn dense, const void *dctx, double tol, double *t_ev);
/* After events_after_step at t (x the state there, as the step ends):
** when its event left a rate at zero or released a stuck one, the stuck
** set is updated (stick.c), x moved onto it and the watch reset; 1 then,
** and the method restarts. */
int events_stick(SimContext *c, EventWatch *w, double t, double *x);
/* A step from (*t, x) of h failed or shrank away: stick_reach, and the
** watch restarted there.  1 when *t and x moved. */
int events_reach(SimContext *c, EventWatch *w, double *t, double h, double *x);
/* Before a run: rates at rest stick or start to slip (1 when x changed). */
int events_start(SimContext *c, double t, double *x);
/* After a fixed step to (t, x): rates that crossed zero in it stick, stuck
** ones whose friction no longer holds slip. */
void events_fixed_step(SimContext *c, double t, double *x);
/* After an accepted step from t to t1 without event: does a switch that
** closes in on zero cross it on the step's extension carried on to t2?
** Then as events_after_step: 1, *t_ev past the crossing, the state there
** in w->x_ev. */
int events_past_end(SimContext *c, EventWatch *w, double t, double t1, double t2, DenseFn dense,
                    const void *dctx, double tol, double *t_ev);
/* Does a trial step from t to t_new cross a switch (one that does not
** chatter)?  Then *t_sw is just past the earliest crossing.  Changes
** nothing but scratch. */
int events_crossing(SimContext *c, EventWatch *w, double t, double t_new, const double *x_new,
                    DenseFn dense, const void *dctx, double tol, double *t_sw);
/* Count accepted steps in a row whose trials ran into a switch (crossing
** 1): after EVENTS_MAX_CHATTER of them the motion is held on the switch
** and the run fails with EOM_ECHATTER; crossing 0 resets. */
int events_pinned(SimContext *c, EventWatch *w, int crossing, double t, const double *x);
/* The bracket tolerance of a step of length h: tied to the step tolerance. */
static inline double events_tol(double rtol, double t, double h) {
  return fmax(1e-3 * rtol * h, 8 * DBL_EPSILON * fmax(fabs(t), fabs(t + h)));
}

/* Dense LU with partial pivoting.  dense_lu returns 0, or -1 when singular. */
int dense_lu(int n, double *a, int *piv);
void dense_lu_solve(int n, const double *lu, const int *piv, double *b);

/* Step control shared by the adaptive methods (dopri, radau5): the
** smallest step before giving up (o->h_min, or 16 ulps of the time), and
** a step stretched to land on t_end rather than leave a sliver there
** (returns 1 when this is the last step). */
static inline double adaptive_h_min(const struct eom_sim_options *o, double t, double t_end) {
  return o->h_min > 0 ? o->h_min : 16 * DBL_EPSILON * fmax(fabs(t), fabs(t_end));
}

static inline int stretch_to_end(double t, double t_end, double *h) {
  if (t + 1.01 * *h < t_end) return 0;
  *h = t_end - t;
  return 1;
}

#endif
