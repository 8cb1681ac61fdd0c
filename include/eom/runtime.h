/*
** eom/runtime.h — the public API of libeomrt: simulate, find equilibria and
** linearize any generated model through its struct eom_model descriptor.
**
** The runtime keeps no global state: every call takes what it needs and
** allocates its own workspace, so several threads may run simulations at
** once.  Errors are data: each call returns an eom_status and, when given an
** eom_report, a message naming the time and the state where it stopped.
**
**   struct eom_sim_options o;
**   eom_sim_options_init(&o);
**   o.method = "dopri"; o.t_end = 10; o.sample_dt = 0.01;
**   double x[2 * NQ];            (initial state [q; q'])
**   struct eom_report rep;
**   int st = eom_simulate(&P_model, p, NULL, x, &o, my_sample, ctx, &rep);
*/
#ifndef EOM_RUNTIME_H
#define EOM_RUNTIME_H

#include <stddef.h>
#include <stdio.h>
#include "model.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef enum eom_status {
  EOM_OK = 0,
  EOM_EINVAL,      /* bad argument: unknown method, empty time span, ... */
  EOM_ENOMEM,      /* out of memory */
  EOM_ESTEP,       /* the step size fell below the smallest allowed */
  EOM_ENONFINITE,  /* the state or its derivative is not finite */
  EOM_EMASS,       /* accel() reported a mass matrix that is not positive definite */
  EOM_ENEWTON,     /* a Newton iteration did not converge */
  EOM_ESINGULAR,   /* a Newton matrix is singular */
  EOM_ESTOPPED,    /* the sample callback asked to stop */
  EOM_EMAXSTEPS,   /* more steps than max_steps */
  EOM_EINPUT,      /* an input table could not be read */
  EOM_ECHATTER     /* a switch keeps crossing back at once (a sliding motion;
                      dry friction in a model with constraints) */
} eom_status;

/* Short fixed name of a status, e.g. "step size underflow". */
const char *eom_status_text(eom_status s);

/* What a call did and, on failure, why it stopped. */
struct eom_report {
  eom_status status;
  double t;            /* time reached (simulation) */
  long steps;          /* accepted steps (simulation) or Newton iterations */
  long rejected;       /* rejected steps (adaptive methods) */
  long rhs_evals;      /* evaluations of the model's dynamics */
  double residual;     /* final max-norm of the residual (equilibrium) */
  long events;         /* switches located (dopri, radau5; models with branch
                          functions): the method restarted at each; and
                          the sticks and slips of dry friction (all methods) */
  char message[512];   /* "" on success; else names the time and state */
};

/* ------------------------------------------------------------------ inputs */

/* Input signals u(t): per input either a constant or a column of a table
** interpolated linearly in time (held constant outside the table's range). */
typedef struct eom_inputs eom_inputs;

eom_inputs *eom_inputs_new(int nu);
void eom_inputs_free(eom_inputs *in);
/* Constant value of input j (drops any table column bound to it). */
int eom_inputs_set_constant(eom_inputs *in, int j, double value);
/* Read a CSV table: a header line naming `t` first and then input names
** (from `names`, nu of them), then rows of numbers with strictly increasing
** t.  Inputs the table does not name keep their constants.  Returns EOM_OK,
** or EOM_EINPUT with a message "FILE:LINE: ..." in err. */
int eom_inputs_load_csv(eom_inputs *in, const char *path, const char *const *names,
                        char *err, size_t errlen);
/* u(t) into u[nu].  With in NULL there is nothing to evaluate and u is
** left as it is (eom_simulate passes zeros then). */
void eom_inputs_eval(const eom_inputs *in, double t, double *u);

/* ------------------------------------------------------------- simulation */

struct eom_sim_options {
  const char *method;  /* "dopri" (when NULL), "rk4", "radau5" or "midpoint" */
  double t0, t_end;
  double step;         /* fixed-step methods: largest step, shortened so that
                          equal steps land on every sample (0: sample_dt, or
                          span/1000); dopri, radau5: first trial step (0:
                          automatic) */
  double sample_dt;    /* time between samples; 0: a sample after every step */
  double rtol, atol;   /* dopri and radau5 error tolerances; implicit methods:
                          also the Newton tolerance (defaults 1e-8 and 1e-10) */
  double h_min;        /* smallest step before EOM_ESTEP (0: automatic) */
  long max_steps;      /* 0: no limit */
  int fixed_step;      /* dopri, radau5: fixed steps as the fixed-step methods
                          take them, no error control (for order studies) */
  /* Models with constraints (nc > 0), see docs/runtime.md: */
  int no_initial_fix;  /* 1: start from x as given; default: Gauss–Newton
                          first moves q onto phi(q) = 0 and q' onto G q' = 0
                          (minimum-norm changes) */
  int no_projection;   /* 1: no projection of q, q' back onto the
                          constraints after each accepted step */
  double baumgarte_alpha, baumgarte_beta;  /* gains in 1/s of the Baumgarte
                          term: G q'' = gamma - 2 alpha phi' - beta^2 phi;
                          eom_sim_options_init sets 10 and 10; 0, 0: none */
  double constraint_tol;  /* max|phi| the projections aim for (0: 1e-12) */
  int keep_step;       /* fixed-step methods: steps of exactly `step` from t0
                          (the last one shortened to end on t_end), samples
                          between steps by cubic Hermite interpolation */
  const int *hold;     /* NULL, or nq flags: the initial fix keeps the
                          coordinates flagged 1 (and their rates) at their
                          given values and moves only the others */
  /* Models with switching functions (ns > 0): dopri and radau5 locate each
  ** sign change on the step's dense output and restart there; the
  ** fixed-step methods do not (docs/runtime.md). */
  int no_events;       /* 1: step across switches like any other point (and
                          no dry-friction sticking, docs/runtime.md) */
  FILE *event_log;     /* non-NULL: one line per located event */
  /* Models with constraints: how G M⁻¹ Gᵀ is factored (docs/runtime.md,
  ** "Models with constraints"): enum eom_constraint_solver. */
  int constraint_solver;
};

/* The routes of the constrained solve: AUTO (the default) takes the dense
** one below 8 constraint rows and the sparse one from there on. */
enum eom_constraint_solver { EOM_CSOLVE_AUTO = 0, EOM_CSOLVE_DENSE, EOM_CSOLVE_SPARSE };

void eom_sim_options_init(struct eom_sim_options *o);

/* The methods eom_simulate() knows, as one line "rk4, dopri, ...". */
const char *eom_method_list(void);
/* Is `name` a known method? */
int eom_method_known(const char *name);
/* The i-th method's name and its one-line description (0 <= i), or NULL
** past the last: for listing the methods in a program's help. */
const char *eom_method_name(int i);
const char *eom_method_help(int i);

/* Called with each sample: at t0, every sample_dt, and at the end (or at the
** last good state before a failure).  x is [q; qd], u the inputs there.
** Return nonzero to stop the run (status EOM_ESTOPPED). */
typedef int (*eom_sample_fn)(void *ctx, double t, const double *x, const double *u);

/* Integrate from x (2*nq entries, [q; qd]) over [t0, t_end]; x holds the
** last good state on return.  p: the np parameters (NULL: defaults);
** in: input signals (NULL: zero).  sample may be NULL.  rep may be NULL. */
int eom_simulate(const struct eom_model *m, const double *p, const eom_inputs *in,
                 double *x, const struct eom_sim_options *o,
                 eom_sample_fn sample, void *ctx, struct eom_report *rep);

/* ------------------------------------------------------------ attitudes */

/* Velocities of the model: m->nv (ABI 8), or nq for a descriptor that
** leaves it 0.  The state x = [q; v] has eom_state_size(m) = nq + nv
** entries; without attitudes nv = nq and v = q'. */
int eom_nv(const struct eom_model *m);
int eom_state_size(const struct eom_model *m);
/* Index in q of the first attitude's quaternion (after the coordinates). */
int eom_first_quaternion(const struct eom_model *m);
/* Divide each quaternion of x by its norm (the model's normalize()); returns
** the largest | |q| - 1 | met, 0 for a model without attitudes.  The
** integrators call it after every accepted step. */
double eom_normalize_state(const struct eom_model *m, double *x);
/* Roll, pitch, yaw (rad) of the quaternion q[0..3], R = rotz(yaw)
** roty(pitch) rotx(roll); roll is 0 at pitch = +-90 degrees.  For reading. */
void eom_quaternion_rpy(const double *q, double rpy[3]);

/* xdot = [qd; qdd] at (t, x, u), through accel() (or accel_constrained()
** when the model has constraints).  Returns EOM_OK or EOM_EMASS. */
/* (u NULL: all inputs zero, here and below.) */
int eom_dynamics(const struct eom_model *m, const double *p, double t, const double *x,
                 const double *u, double *xdot);

/* ------------------------------------------------- equilibria, linearization */

/* Newton on f(t, q, 0, u) = 0 from the guess in q (nq entries), with the
** M-independent residual f and a backtracking line search on max|f|.
** Where df/dq is singular (free coordinates) the least-squares step leaves
** the free coordinates at their guess.  With constraints (nc > 0) it solves
** f + Gᵀλ = 0, phi(q) = 0 for q and the multipliers λ together (G =
** dphi/dq).  Converged when the update is below tol * (1 + max|q|); tol 0:
** 1e-10, max_iter 0: 100.  A point where the update vanishes but the force
** does not (above 1e-8 of the force scale: a constant force on a free
** coordinate) is no equilibrium.  Returns EOM_OK, EOM_ENEWTON (no convergence
** or a force no coordinate can cancel),
** EOM_ESINGULAR (singular equations: df/dq is zero) or EOM_EINVAL (a
** constrained model without its constraint functions); rep->residual is
** the final max-norm residual and rep->steps the iterations. */
int eom_equilibrium(const struct eom_model *m, const double *p, const double *u, double t,
                    double *q, double tol, int max_iter, struct eom_report *rep);

/* Linearize M q'' = f about (q, qd): M there (nq x nq), C = -df/dqd and
** K = -df/dq (row-major).  C comes from the model's jacobian (exact: M does
** not depend on qd); so does K where q'' = 0 (an equilibrium), otherwise K
** is central differences of forcing().  A jacobian that disagrees with
** central differences of forcing() is not trusted: the differences are
** used and rep->message holds a warning (status still EOM_OK).  Any of M,
** C, K may be NULL.  Returns EOM_OK, EOM_EMASS, EOM_ENOMEM or EOM_EINVAL
** (constraints: use eom_linearize_tangent). */
int eom_linearize(const struct eom_model *m, const double *p, const double *u, double t,
                  const double *q, const double *qd, double *M, double *C, double *K,
                  struct eom_report *rep);

/* Small motions about a static equilibrium q on the constraint surface:
** tangent coordinates z with q = q* + N z, N's nr columns orthonormal and
** tangent to phi(q) = 0 (N = I, nr = nq without constraints).  Writes N
** (nq x nq storage, row-major, columns 0..nr-1 used) and the nr x nr
** matrices Mr = NᵀMN, Cr = -Nᵀ(df/dqd)N and Kr = -Nᵀ d(f + Gᵀλ)/dq N, the
** last with the constraint force's multipliers held at the equilibrium.
** Each output needs nq*nq doubles.  Returns EOM_OK or a status with
** rep->message (as eom_linearize). */
int eom_linearize_tangent(const struct eom_model *m, const double *p, const double *u, double t,
                          const double *q, double *N, int *nr, double *Mr, double *Cr,
                          double *Kr, struct eom_report *rep);

/* d xdot/dx at (t, x, u) (2nq x 2nq): the model's jacobian, or central
** differences of eom_dynamics() when the model has none or has constraints. */
int eom_state_matrix(const struct eom_model *m, const double *p, double t, const double *x,
                     const double *u, double *A);

/* ------------------------------------------------------------- run rows */

/* A run's row has eom_row_width(m) columns, in this order: t, the
** coordinates, their rates (name'), the outputs, the inputs, the
** multipliers lambda1..lambdaNC (models with constraints: the constraint
** force is Gᵀλ) and the energies T, V.  With attitudes the coordinates
** include each quaternion ("R.w" ... "R.z"), the rates are the velocities
** ("omega(R)[1]" ...), and after them come each attitude's "R.roll",
** "R.pitch", "R.yaw" (rad, eom_quaternion_rpy). */
int eom_row_width(const struct eom_model *m);
/* Column k's name written into buf (e.g. "x'", "lambda2"); *unit (when unit
** is not NULL) is its declared unit, "" when unknown. */
const char *eom_row_column(const struct eom_model *m, int k, char *buf, size_t size,
                           const char **unit);
/* Column k's unit as text ("m", "m/s" for a rate, "J"; "" when unknown). */
const char *eom_row_unit(const struct eom_model *m, int k, char *buf, size_t size);
/* All columns' values at (t, x, u) into row (u NULL: zero inputs); outputs,
** energies and multipliers (NaN where singular) are evaluated here. */
int eom_row_eval(const struct eom_model *m, const double *p, double t, const double *x,
                 const double *u, double *row);

/* ---------------------------------------------------------------- numbers */

/* Longest text eom_format_double writes, with its terminating NUL. */
#define EOM_NUMBER_MAX 32
/* The shortest decimal text that strtod reads back as exactly v (Ryu,
** Adams 2018), printf-%g-like ("0.25", "1e-07", "-3.5e+20"); -0 as "0",
** "nan", "inf", "-inf".  Writes at most EOM_NUMBER_MAX bytes with the NUL
** into buf and returns the length. */
int eom_format_double(char *buf, double v);

/* ---------------------------------------------------------------- CSV out */

/* Header line naming columns cols[0..ncols) (cols NULL: every column). */
int eom_csv_write_names(FILE *f, const struct eom_model *m, const int *cols, int ncols);
/* One line of row[cols[i]] (cols NULL: row[0..ncols)), buffered into one write. */
int eom_csv_write_values(FILE *f, const double *row, const int *cols, int ncols);
/* Header line of every column (see eom_row_width). */
int eom_csv_write_header(FILE *f, const struct eom_model *m);
/* One row of every column for (t, x, u). */
int eom_csv_write_row(FILE *f, const struct eom_model *m, const double *p, double t,
                      const double *x, const double *u);

#ifdef __cplusplus
}
#endif
#endif
