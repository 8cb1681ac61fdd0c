/*
** cmd_linearize.c — `eomc linearize`: the linear model
**   x' = A x + B u,   y = C x + D u
** about an operating point, x = [q; q'] the state, u the inputs, y the
** outputs, all as deviations from the point.  The point is a static
** equilibrium found as `eomc modes` finds it (Newton on the forces at rest
** from the initial coordinates and --at), or with --no-search the state
** given by the model's `initial` and --at (rates too) as it is.
**
** A and B come from the model's generated jacobian and are checked against
** central differences of its dynamics; C and D from the generated output
** Jacobians (kinematic outputs) or central differences of the outputs.  A
** warning with the numbers is printed only when the jacobian and the
** differences truly disagree: relative to the size of the matrices, with an
** absolute floor so that two zeros (a degenerate point) never disagree.
** Models with constraints (or with --rate) are linearized in a reduced
** state z = [q_K; v_I] (reduce.h): the independent positions and rates,
** chosen by pivoting on the constraints' matrices (--independent names the
** coordinates to keep), the others following from the constraints.  A, B,
** C, D are central differences through that reduction, checked by the
** chain rule against differences of the runtime's constrained dynamics:
** dz'/dz = P (dx'/dx) (dx/dz), P picking z's entries out of x'.  With
** --rate the point is a steady motion (steady.c), and z leaves out the
** coordinates that turn at the given rates and those that enter nothing.
**
** A model with attitudes is linearized in a minimal state: each attitude's
** quaternion q (4 entries) is replaced by a small rotation dth about its
** body axes, q = q0 (x) [1, dth/2], so dq = N(q0) dth and dth = 4 N(q0)^T dq
** (N the kinematic map of P_kinematics; N^T N = I/4 on the unit sphere).
** With T (full from minimal) and P (minimal from full), z = P dx gives
** z' = (P A_full T + P' T) z + P B_full u, so A = P A_full T + P' T (P'
** from q0' = N(q0) omega0: zero at rest, the turning of the body axes in a
** steady spin), B = P B_full, C = C_full T.  (Not yet together with
** constraints or --rate.)
*/
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/build_model.h"
#include "cli/cmd.h"
#include "cli/json_out.h"
#include "cli/linearize_print.h"
#include "cli/reduce.h"
#include "cli/run_values.h"
#include "cli/steady.h"
#include "cli/value_text.h"
#include "eom/runtime.h"

static const char linearize_usage[] =
  "usage: eomc linearize MODEL.eom [OPTIONS]\n"
  "\n"
  "Linearize x' = f(x, u), y = g(x, u) about an operating point and print\n"
  "A, B, C, D (x' = A x + B u, y = C x + D u; x = [q; q'] the state, u the\n"
  "inputs, y the outputs, as deviations from the point) with row and column\n"
  "labels.  The point is a static equilibrium, searched (as `eomc modes`\n"
  "does) from the initial coordinates with the inputs at their --set values.\n"
  "With attitudes (--no-search only) the state is minimal: three small body-axis\n"
  "rotations R.dth1..3 per attitude instead of its quaternion.\n"
  "\n"
  "options:\n"
  "  --at NAME=VALUE    a coordinate's starting value for the search, or with\n"
  "                     --no-search its value at the point; with --no-search\n"
  "                     also a rate, NAME'=VALUE (repeatable)\n"
  "  --set NAME=VALUE   a parameter or a constant input (repeatable)\n"
  "                     VALUE: numbers, pi and parameters, with an optional unit\n"
  "                     converted to the declared one: 30[deg], 2.5[kN/m], L/2\n"
  "  --no-search        take the point as given (model's initial state and\n"
  "                     --at), not an equilibrium\n"
  "  --rate NAME=VALUE  linearize about a steady motion in which the\n"
  "                     coordinate NAME turns at this constant rate (it must\n"
  "                     not enter the dynamics; repeatable), as `eomc modes\n"
  "                     --rate` finds it\n"
  "  --independent NAME with constraints: keep NAME among the independent\n"
  "                     coordinates of the reduced state (repeatable)\n"
  "  --json             machine-readable output\n"
  "\n"
  "With constraints, or with --rate, the state is reduced: the independent\n"
  "positions and rates only, the others following from the constraints.\n"
  "\n"
  "exit status: 0 success, 1 model error, 2 usage error,\n"
  "             3 no equilibrium found or the analysis failed\n";

/* Above this disagreement (relative to the matrices' size) the jacobian is
** wrong, not inexact: central differences are good to ~1e-10 relative. */
#define AGREEMENT 1e-6
/* ... plus this absolute floor, below which both are zero. */
#define ZERO_FLOOR 1e-9

static void linear_free(Linear *L) {
  free(L->A);
  memset(L, 0, sizeof *L);
}

static int linear_alloc(Linear *L, int n, int nu, int ny) {
  size_t nn = (size_t)n * n, nb = (size_t)n * nu, nc = (size_t)ny * n, nd = (size_t)ny * nu;
  memset(L, 0, sizeof *L);
  L->n = n, L->nu = nu, L->ny = ny;
  L->A = calloc(2 * nn + 2 * nb + nc + nd + 1, sizeof(double));
  if (!L->A) return -1;
  L->B = L->A + nn;
  L->C = L->B + nb;
  L->D = L->C + nc;
  L->Ad = L->D + nd;
  L->Bd = L->Ad + nn;
  return 0;
}

/* The step of a central difference about v: eps^(1/3) relative, common
** practice for second-order-accurate differences. */
static double fd_step(double v) { return cbrt(DBL_EPSILON) * fmax(1.0, fabs(v)); }

/* Ad, Bd by central differences of the dynamics.  0, or -1 when the
** dynamics fail (M not positive definite) near the point. */
static int difference_dynamics(const struct eom_model *m, const double *p, const double *x,
                               const double *u, Linear *L) {
  int n = L->n, nu = L->nu, rc = 0;
  double *xt = malloc((size_t)(n + nu + 1) * sizeof(double)), *f1, *f2, *ut;
  double *buf = malloc((size_t)(2 * n) * sizeof(double));
  if (!xt || !buf) {
    free(xt), free(buf);
    return -1;
  }
  ut = xt + n;
  f1 = buf, f2 = buf + n;
  memcpy(xt, x, (size_t)n * sizeof(double));
  memcpy(ut, u, (size_t)nu * sizeof(double));
  for (int j = 0; j < n + nu && rc == 0; j++) {
    double *v = j < n ? &xt[j] : &ut[j - n], base = *v, h = fd_step(base);
    *v = base + h;
    rc |= eom_dynamics(m, p, 0.0, xt, ut, f1);
    *v = base - h;
    rc |= eom_dynamics(m, p, 0.0, xt, ut, f2);
    *v = base;
    for (int i = 0; i < n; i++) {
      double d = (f1[i] - f2[i]) / (2 * h);
      if (j < n) L->Ad[(size_t)i * n + j] = d;
      else L->Bd[(size_t)i * nu + (j - n)] = d;
    }
  }
  free(xt), free(buf);
  return rc == 0 ? 0 : -1;
}

/* C and D: exact rows of kinematic outputs (dy/dq, and 0 for q' and u),
** central differences of the outputs for the rest. */
static int output_matrices(const struct eom_model *m, const double *p, const double *x,
                           const double *u, Linear *L) {
  int n = L->n, nq = m->nq, nu = L->nu, ny = L->ny;
  if (ny == 0) return 0;
  double *xt = malloc((size_t)(n + nu + 2 * ny + (size_t)ny * nq + 1) * sizeof(double));
  if (!xt) return -1;
  double *ut = xt + n, *y1 = ut + nu, *y2 = y1 + ny, *J = y2 + ny;
  memcpy(xt, x, (size_t)n * sizeof(double));
  memcpy(ut, u, (size_t)nu * sizeof(double));
  for (int j = 0; j < n + nu; j++) {
    double *v = j < n ? &xt[j] : &ut[j - n], base = *v, h = fd_step(base);
    *v = base + h;
    m->outputs(0.0, xt, xt + nq, ut, p, y1);
    *v = base - h;
    m->outputs(0.0, xt, xt + nq, ut, p, y2);
    *v = base;
    for (int i = 0; i < ny; i++) {
      double d = (y1[i] - y2[i]) / (2 * h);
      if (j < n) L->C[(size_t)i * n + j] = d;
      else L->D[(size_t)i * nu + (j - n)] = d;
    }
  }
  if (m->output_jacobian && m->output_kinematic && m->nattitudes == 0) {  /* J is NV wide with attitudes */
    m->output_jacobian(x, p, J);
    for (int i = 0; i < ny; i++) {
      if (!m->output_kinematic[i]) continue;
      for (int j = 0; j < n; j++) L->C[(size_t)i * n + j] = j < nq ? J[(size_t)i * nq + j] : 0.0;
      for (int j = 0; j < nu; j++) L->D[(size_t)i * nu + j] = 0.0;
    }
  }
  free(xt);
  return 0;
}

/* Largest |a - b| and the larger of the largest |a| and |b|. */
static void compare(size_t count, const double *a, const double *b, double *diff, double *scale) {
  for (size_t i = 0; i < count; i++) {
    double d = fabs(a[i] - b[i]);
    *diff = isnan(d) ? INFINITY : fmax(*diff, d);
    *scale = fmax(*scale, fmax(fabs(a[i]), fabs(b[i])));
  }
}

/* Fill L at (x, u); a warning on stderr when jacobian and differences
** disagree.  0, or -1 with a message in err. */
static int linearize_at(const struct eom_model *m, const double *p, const double *x,
                        const double *u, Linear *L, char *err, size_t errlen) {
  int n = L->n, nu = L->nu;
  double *xdot = malloc((size_t)n * sizeof(double));
  if (!xdot) return snprintf(err, errlen, "out of memory"), -1;
  int bad = eom_dynamics(m, p, 0.0, x, u, xdot) != EOM_OK;
  free(xdot);
  if (bad)
    return snprintf(err, errlen, "the mass matrix is not positive definite at the point"), -1;
  if (difference_dynamics(m, p, x, u, L) != 0)
    return snprintf(err, errlen, "the dynamics fail next to the point (mass matrix)"), -1;
  if (output_matrices(m, p, x, u, L) != 0) return snprintf(err, errlen, "out of memory"), -1;
  L->from_jacobian = m->nc == 0 && m->jacobian != NULL;
  if (!L->from_jacobian) {
    memcpy(L->A, L->Ad, (size_t)n * n * sizeof(double));
    memcpy(L->B, L->Bd, (size_t)n * nu * sizeof(double));
    return 0;
  }
  m->jacobian(0.0, x, u, p, L->A, L->B);
  double da = 0, sa = 0, db = 0, sb = 0;
  compare((size_t)n * n, L->A, L->Ad, &da, &sa);
  compare((size_t)n * nu, L->B, L->Bd, &db, &sb);
  if (da > AGREEMENT * sa + ZERO_FLOOR || db > AGREEMENT * sb + ZERO_FLOOR)
    fprintf(stderr,
            "eomc linearize: warning: the model's jacobian disagrees with differences of its "
            "dynamics: largest difference %.3g in A (entries up to %.3g), %.3g in B (entries "
            "up to %.3g); printing the jacobian\n",
            da, sa, db, sb);
  return 0;
}

/* State names: q1..., then q1'... (malloc'd array of malloc'd strings).
** With attitudes, the minimal state: the coordinates, each attitude's
** small rotations R.dth1..3, then the velocities (x', omega(R)[1] ...). */
static char **state_names(const struct eom_model *m) {
  int nq = m->nq, nv = eom_nv(m), nplain = nq - 4 * m->nattitudes, n = 2 * nv;
  char **names = calloc((size_t)n + 1, sizeof *names);
  if (!names) return NULL;
  for (int i = 0; i < n; i++) {
    const char *c = i < nplain ? m->coord_names[i] : i < nv ? m->attitude_names[(i - nplain) / 3]
                  : m->nattitudes ? m->rate_names[i - nv] : m->coord_names[i - nv];
    names[i] = malloc(strlen(c) + 8);
    if (!names[i]) return names;  /* caller checks each */
    if (i < nplain) sprintf(names[i], "%s", c);
    else if (i < nv) sprintf(names[i], "%s.dth%d", c, (i - nplain) % 3 + 1);
    else sprintf(names[i], "%s%s", c, m->nattitudes ? "" : "'");
  }
  return names;
}

/* T (nx x nz, full state from minimal) and P (nz x nx, minimal from full)
** at the state x of a model with attitudes (see the top of this file);
** with x the quaternion rates q' instead of q, P is P' (N is linear in q). */
static void attitude_maps(const struct eom_model *m, const double *x, double *T, double *P) {
  int nq = m->nq, nv = eom_nv(m), nx = nq + nv, nz = 2 * nv, nplain = nq - 4 * m->nattitudes;
  memset(T, 0, (size_t)nx * nz * sizeof(double));
  memset(P, 0, (size_t)nz * nx * sizeof(double));
  for (int i = 0; i < nplain; i++) T[(size_t)i * nz + i] = P[(size_t)i * nx + i] = 1;
  for (int i = 0; i < nv; i++) T[(size_t)(nq + i) * nz + nv + i] = P[(size_t)(nv + i) * nx + nq + i] = 1;
  for (int a = 0; a < m->nattitudes; a++) {
    const double *q = x + nplain + 4 * a;
    const double N[4][3] = {{-q[1], -q[2], -q[3]}, {q[0], -q[3], q[2]}, {q[3], q[0], -q[1]},
                            {-q[2], q[1], q[0]}};   /* times 1/2 */
    for (int r = 0; r < 4; r++)
      for (int c = 0; c < 3; c++) {
        int qi = nplain + 4 * a + r, zi = nplain + 3 * a + c;
        T[(size_t)qi * nz + zi] = 0.5 * N[r][c];
        P[(size_t)zi * nx + qi] = 2.0 * N[r][c];   /* 4 (N/2)^T */
      }
  }
}

/* out (r x c) = a (r x k) b (k x c). */
static void matmul(const double *a, const double *b, int r, int k, int c, double *out) {
  for (int i = 0; i < r; i++)
    for (int j = 0; j < c; j++) {
      double s = 0;
      for (int l = 0; l < k; l++) s += a[(size_t)i * k + l] * b[(size_t)l * c + j];
      out[(size_t)i * c + j] = s;
    }
}

/* The minimal linear model Z of the full one F (models with attitudes). */
static int reduce_attitudes(const struct eom_model *m, const double *x, const Linear *F, Linear *Z) {
  int nx = F->n, nz = Z->n, nu = F->nu, ny = F->ny;
  double *T = malloc(((size_t)nx * nz * 5 + (size_t)nx + 1) * sizeof(double));
  if (!T) return -1;
  double *P = T + (size_t)nx * nz, *PA = P + (size_t)nz * nx, *Pd = PA + (size_t)nz * nx;
  double *Td = Pd + (size_t)nz * nx, *xd = Td + (size_t)nx * nz;
  attitude_maps(m, x, T, P);
  matmul(P, F->A, nz, nx, nx, PA);
  matmul(PA, T, nz, nx, nz, Z->A);
  /* + P' T: P at the rates q0' (in the q slots; the rest of P' is zero) */
  memcpy(xd, x, (size_t)nx * sizeof(double));
  m->kinematics(x, x + m->nq, xd);
  attitude_maps(m, xd, Td, Pd);
  for (int i = 0; i < nz; i++)
    for (int j = 0; j < nx; j++)
      if (!(j >= m->nq - 4 * m->nattitudes && j < m->nq)) Pd[(size_t)i * nx + j] = 0;
  matmul(Pd, T, nz, nx, nz, PA);
  for (size_t k = 0; k < (size_t)nz * nz; k++) Z->A[k] += PA[k];
  matmul(P, F->B, nz, nx, nu, Z->B);
  matmul(F->C, T, ny, nx, nz, Z->C);
  memcpy(Z->D, F->D, (size_t)ny * nu * sizeof(double));
  Z->from_jacobian = F->from_jacobian;
  free(T);
  return 0;
}

static void free_names(char **names, int n) {
  for (int i = 0; names && i < n; i++) free(names[i]);
  free(names);
}

typedef struct Options {
  const char *model;
  char **at, **set, **rate, **independent;
  int nat, nset, nrate, nindependent, json, no_search;
} Options;

/* The value of an option that takes one; NULL after a message. */
static char *option_value(int argc, char **argv, int *i, const char *name) {
  size_t len = strlen(name);
  const char *arg = argv[*i];
  if (strncmp(arg, name, len) == 0 && arg[len] == '=') return (char *)arg + len + 1;
  if (*i + 1 >= argc) {
    fprintf(stderr, "eomc linearize: option '%s' needs a value (try 'eomc linearize --help')\n",
            name);
    return NULL;
  }
  return argv[++*i];
}

static int is_option(const char *arg, const char *name) {
  size_t len = strlen(name);
  return strncmp(arg, name, len) == 0 && (arg[len] == '\0' || arg[len] == '=');
}

/* 0, or an exit status after printing the problem (-1: help printed). */
static int parse_options(int argc, char **argv, Options *o) {
  static const char *const valued[] = {"--at", "--set", "--rate", "--independent"};
  for (int i = 1; i < argc; i++) {
    const char *arg = argv[i];
    int which = -1;
    for (int k = 0; k < 4; k++)
      if (is_option(arg, valued[k])) which = k;
    if (cmd_is_help(arg)) {
      fputs(linearize_usage, stdout);
      return -1;
    } else if (strcmp(arg, "--json") == 0) {
      o->json = 1;
    } else if (strcmp(arg, "--no-search") == 0) {
      o->no_search = 1;
    } else if (which >= 0) {
      char *v = option_value(argc, argv, &i, valued[which]);
      if (!v) return EXIT_USAGE;
      if (which == 0) o->at[o->nat++] = v;
      else if (which == 1) o->set[o->nset++] = v;
      else if (which == 2) o->rate[o->nrate++] = v;
      else o->independent[o->nindependent++] = v;
    } else if (arg[0] == '-' && arg[1] != '\0') {
      fprintf(stderr, "eomc linearize: unknown option '%s' (try 'eomc linearize --help')\n", arg);
      return EXIT_USAGE;
    } else if (o->model) {
      fprintf(stderr, "eomc linearize: more than one model file ('%s')\n", arg);
      return EXIT_USAGE;
    } else {
      o->model = arg;
    }
  }
  if (!o->model) {
    fputs("eomc linearize: no model file given (try 'eomc linearize --help')\n", stderr);
    return EXIT_USAGE;
  }
  if (o->nrate > 0 && o->no_search) {
    fputs("eomc linearize: --rate linearizes about a steady motion, which is always searched "
          "for (leave out --no-search)\n", stderr);
    return EXIT_USAGE;
  }
  return 0;
}

/* Apply --at and --set to rv; 0 or EXIT_USAGE. */
static int apply_values(const Options *o, const struct eom_model *m, RunValues *rv) {
  char err[1024];
  int kinds = RV_COORDS | (o->no_search ? RV_RATES : 0);
  for (int i = 0; i < o->nat; i++)
    if (run_values_assign(rv, m, o->at[i], kinds, err, sizeof err) != 0) {
      fprintf(stderr, "eomc linearize: --at %s\n", err);
      return EXIT_USAGE;
    }
  for (int i = 0; i < o->nset; i++)
    if (run_values_assign(rv, m, o->set[i], RV_PARAMS | RV_INPUTS, err, sizeof err) != 0) {
      fprintf(stderr, "eomc linearize: --set %s\n", err);
      return EXIT_USAGE;
    }
  return 0;
}

static int coord_index(const struct eom_model *m, const char *name, size_t len) {
  for (int i = 0; i < m->nq; i++)
    if (strlen(m->coord_names[i]) == len && strncmp(m->coord_names[i], name, len) == 0) return i;
  return -1;
}

/* --rate NAME=VALUE (NAME or NAME'; VALUE as for --set, in the
** coordinate's unit per second) into given/rate, --independent NAME into
** prefer; p: the parameters VALUE may name.  0 or EXIT_USAGE. */
static int apply_rates(const Options *o, const struct eom_model *m, const double *p, int *given,
                       double *rate, int *prefer) {
  for (int k = 0; k < o->nrate; k++) {
    const char *arg = o->rate[k], *eq = strchr(arg, '=');
    size_t len = eq ? (size_t)(eq - arg) : 0;
    if (len > 0 && arg[len - 1] == '\'') len--;
    int i = len ? coord_index(m, arg, len) : -1;
    if (!eq || len == 0 || i < 0) {
      fprintf(stderr, "eomc linearize: --rate %s: %s\n", arg,
              !eq || len == 0 ? "not NAME=VALUE" : "not a coordinate of the model");
      return EXIT_USAGE;
    }
    char unit[256] = "", err[1024];
    if (m->coord_units && m->coord_units[i][0])
      snprintf(unit, sizeof unit, "(%s)/s", m->coord_units[i]);
    if (value_text_eval(arg, eq + 1, m, p, unit, &rate[i], err, sizeof err) != 0) {
      fprintf(stderr, "eomc linearize: --rate %s\n", err);
      return EXIT_USAGE;
    }
    given[i] = 1;
  }
  for (int k = 0; k < o->nindependent; k++) {
    int i = coord_index(m, o->independent[k], strlen(o->independent[k]));
    if (i < 0) {
      fprintf(stderr, "eomc linearize: --independent %s: not a coordinate of the model\n",
              o->independent[k]);
      return EXIT_USAGE;
    }
    prefer[i] = 1;
  }
  return 0;
}

/* Newton leftovers (1e-30 where the answer is 0) print as 0. */
static void clean_point(double *q, int n) {
  double scale = 0;
  for (int i = 0; i < n; i++) scale = fmax(scale, fabs(q[i]));
  for (int i = 0; i < n; i++)
    if (fabs(q[i]) < 1e-14 * fmax(1.0, scale)) q[i] = 0;
}

/* The chain-rule check of a reduced A against differences of the runtime's
** constrained dynamics (see the header); a warning with the numbers when
** they truly disagree.  r's full state is z's on return. */
static void check_reduced(const struct eom_model *m, Reduction *r, double *z, const Linear *L) {
  int nq = m->nq, n2 = 2 * nq, nz = L->n;
  double *Af = malloc((size_t)n2 * n2 * sizeof(double));
  double *T = malloc((size_t)n2 * nz * sizeof(double));
  double *x = malloc((size_t)n2 * 3 * sizeof(double));
  double *Ac = malloc((size_t)nz * nz * sizeof(double));
  if (!Af || !T || !x || !Ac) goto out;
  double *x1 = x + n2, *x2 = x1 + n2;
  for (int j = 0; j < nz; j++) {  /* T = dx/dz */
    double base = z[j], h = fd_step(base);
    z[j] = base + h;
    int bad = reduce_state(r, z);
    memcpy(x1, r->qf, (size_t)n2 * sizeof(double));  /* qf, vf: one array */
    z[j] = base - h;
    bad = bad || reduce_state(r, z);
    memcpy(x2, r->qf, (size_t)n2 * sizeof(double));
    z[j] = base;
    if (bad) goto out;
    for (int i = 0; i < n2; i++) T[(size_t)i * nz + j] = (x1[i] - x2[i]) / (2 * h);
  }
  if (reduce_state(r, z) != 0) goto out;
  memcpy(x, r->qf, (size_t)n2 * sizeof(double));
  if (eom_state_matrix(m, r->p, r->t, x, r->u, Af) != EOM_OK) goto out;
  for (int a = 0; a < nz; a++) {  /* row a of z' is row `row` of x' */
    int row = a < r->nk ? r->kept[a] : nq + r->independent[a - r->nk];
    for (int b = 0; b < nz; b++) {
      double s = 0;
      for (int k = 0; k < n2; k++) s += Af[(size_t)row * n2 + k] * T[(size_t)k * nz + b];
      Ac[(size_t)a * nz + b] = s;
    }
  }
  double d = 0, sc = 0;
  compare((size_t)nz * nz, L->A, Ac, &d, &sc);
  /* both are differences (of differences for Ac): a looser bound */
  if (d > 1e-4 * sc + 1e-7)
    fprintf(stderr, "eomc linearize: warning: the reduced A disagrees with differences of the "
                    "constrained dynamics: largest difference %.3g (entries up to %.3g)\n", d, sc);
out:
  free(Af), free(T), free(x), free(Ac);
}

/* Replace the full linear model L by its minimal one (attitudes). */
static int to_minimal_state(const struct eom_model *m, const double *x, Linear *L) {
  Linear Z;
  if (linear_alloc(&Z, 2 * eom_nv(m), m->nu, m->ny) != 0 || reduce_attitudes(m, x, L, &Z) != 0) {
    linear_free(&Z);
    return -1;
  }
  linear_free(L);
  *L = Z;
  return 0;
}

/* The plain linearization in x = [q; q'] (no constraints, no rates;
** with attitudes, then reduced to the minimal state). */
static int linearize_full(const struct eom_model *m, RunValues *rv, const Options *o,
                          char **xs) {
  int nq = m->nq, rc = 0;
  char err[512] = "";
  struct eom_report eq;
  memset(&eq, 0, sizeof eq);
  Linear L;
  memset(&L, 0, sizeof L);
  if (!o->no_search && m->nattitudes > 0) {
    fprintf(stderr, "eomc linearize: error: the equilibrium search does not handle attitudes yet: "
                    "give the point with --no-search (the model's initial values and --at)\n");
    return EXIT_RUN;
  }
  if (!o->no_search) {
    memset(rv->x + nq, 0, (size_t)nq * sizeof(double));  /* at rest */
    if (eom_equilibrium(m, rv->p, rv->u, 0, rv->x, 0, 0, &eq) != EOM_OK) {
      fprintf(stderr, "eomc linearize: error: no static equilibrium: %s\n"
                      "  (--no-search linearizes at the given point instead)\n", eq.message);
      return EXIT_RUN;
    }
    clean_point(rv->x, nq);
  }
  if (linear_alloc(&L, eom_state_size(m), m->nu, m->ny) != 0) {
    fputs("eomc linearize: out of memory\n", stderr);
    return EXIT_RUN;
  }
  if (linearize_at(m, rv->p, rv->x, rv->u, &L, err, sizeof err) != 0) {
    fprintf(stderr, "eomc linearize: error: %s\n", err);
    rc = EXIT_RUN;
  } else if (m->nattitudes > 0 && to_minimal_state(m, rv->x, &L) != 0) {
    fputs("eomc linearize: out of memory\n", stderr);
    rc = EXIT_RUN;
  } else {
    Point pt = {rv->x, rv->u, o->no_search ? POINT_GIVEN : POINT_EQUILIBRIUM, eq.steps,
                eq.residual, NULL};
    const char *const *names = (const char *const *)xs;
    if (o->json) linearize_print_json(stdout, m, &pt, &L, names, names);
    else linearize_print_text(stdout, m, &pt, &L, names, names);
  }
  linear_free(&L);
  return rc;
}

/* The point of a reduced linearization: a steady motion (--rate), a
** static equilibrium, or the given point; r is set up there.  0, or an
** exit status after the message. */
static int reduced_point(const struct eom_model *m, RunValues *rv, const Options *o,
                         const int *given, const double *rate, const int *prefer,
                         SteadyMotion *sm, Reduction *own, Point *pt, Reduction **red) {
  int nq = m->nq;
  char err[1024] = "";
  if (o->nrate > 0) {
    if (steady_analyze(m, rv->p, rv->u, rv->x, rv->x + nq, given, rate, prefer, 0, sm, err,
                       sizeof err) != 0) {
      fprintf(stderr, "eomc linearize: error: %s\n", err);
      return EXIT_RUN;
    }
    pt->kind = POINT_STEADY, pt->steps = sm->iterations, pt->residual = sm->residual;
    *red = &sm->red;
    return 0;
  }
  if (!o->no_search) {
    struct eom_report eq;
    memset(&eq, 0, sizeof eq);
    memset(rv->x + nq, 0, (size_t)nq * sizeof(double));  /* at rest */
    if (eom_equilibrium(m, rv->p, rv->u, 0, rv->x, 0, 0, &eq) != EOM_OK) {
      fprintf(stderr, "eomc linearize: error: no static equilibrium: %s\n"
                      "  (--no-search linearizes at the given point instead)\n", eq.message);
      return EXIT_RUN;
    }
    clean_point(rv->x, nq);
    pt->kind = POINT_EQUILIBRIUM, pt->steps = eq.steps, pt->residual = eq.residual;
  }
  if (reduce_init(own, m, rv->p, rv->u, 0.0, rv->x, rv->x + nq) != 0) {
    fputs("eomc linearize: out of memory\n", stderr);
    return EXIT_RUN;
  }
  for (int i = 0; i < nq; i++)
    if (prefer[i]) own->role[i] |= REDUCE_PREFER;
  if (reduce_choose(own, err, sizeof err) != 0) {
    fprintf(stderr, "eomc linearize: error: %s\n", err);
    return EXIT_RUN;
  }
  /* the given point onto the constraints: the dependent coordinates and
  ** rates follow from the independent ones */
  double *z = malloc((size_t)(own->nk + own->ni + 1) * sizeof(double));
  int bad = !z;
  if (z) {
    reduce_point(own, z);
    bad = reduce_state(own, z) != 0;
    free(z);
  }
  if (bad) {
    fputs("eomc linearize: error: the constraints cannot be met at the point from its "
          "independent coordinates (start nearer with --at)\n", stderr);
    return EXIT_RUN;
  }
  reduce_rebase(own);
  *red = own;
  return 0;
}

/* The linearization in the reduced state (constraints or --rate). */
static int linearize_reduced(const struct eom_model *m, RunValues *rv, const Options *o) {
  int nq = m->nq, rc = 0;
  int *given = calloc((size_t)nq + 1, sizeof(int)), *prefer = calloc((size_t)nq + 1, sizeof(int));
  double *rate = calloc((size_t)nq + 1, sizeof(double)), *z = NULL, *x = NULL;
  char **xs = state_names(m), **zs = NULL;
  SteadyMotion sm;
  Reduction own, *red = NULL;
  Linear L;
  memset(&sm, 0, sizeof sm);
  memset(&own, 0, sizeof own);
  memset(&L, 0, sizeof L);
  Point pt = {NULL, NULL, POINT_GIVEN, 0, 0, NULL};
  int ok = given && prefer && rate && xs;
  for (int i = 0; ok && i < 2 * nq; i++) ok = xs[i] != NULL;
  if (!ok) {
    fputs("eomc linearize: out of memory\n", stderr);
    rc = EXIT_RUN;
    goto out;
  }
  if ((rc = apply_rates(o, m, rv->p, given, rate, prefer)) != 0) goto out;
  if ((rc = reduced_point(m, rv, o, given, rate, prefer, &sm, &own, &pt, &red)) != 0) goto out;
  for (int i = 0; i < nq; i++)
    if (prefer[i] && (red->role[i] & REDUCE_RATE_DEP)) {
      fprintf(stderr, "eomc linearize: error: '%s' cannot be independent: the constraints fix "
                      "it from the other coordinates here\n", m->coord_names[i]);
      rc = EXIT_RUN;
      goto out;
    }
  int nz = red->nk + red->ni;
  z = malloc((size_t)(nz + 2 * nq + 1) * sizeof(double));
  zs = calloc((size_t)nz + 1, sizeof *zs);
  if (!z || !zs || linear_alloc(&L, nz, m->nu, m->ny) != 0) {
    fputs("eomc linearize: out of memory\n", stderr);
    rc = EXIT_RUN;
    goto out;
  }
  x = z + nz;
  for (int k = 0; k < nz; k++) {
    char buf[512];
    zs[k] = strdup(reduce_name(red, k, buf, sizeof buf));
    if (!zs[k]) rc = EXIT_RUN;
  }
  reduce_point(red, z);
  if (rc == 0 && reduce_linearize(red, z, L.A, L.B, L.C, L.D) != 0) {
    fputs("eomc linearize: error: the constrained dynamics fail next to the point\n", stderr);
    rc = EXIT_RUN;
  }
  if (rc != 0) goto out;
  check_reduced(m, red, z, &L);
  memcpy(x, red->q, (size_t)nq * sizeof(double));
  memcpy(x + nq, red->v, (size_t)nq * sizeof(double));
  clean_point(x, 2 * nq);
  pt.x = x, pt.u = red->u, pt.red = red;
  const char *const *full = (const char *const *)xs, *const *reduced = (const char *const *)zs;
  if (o->json) linearize_print_json(stdout, m, &pt, &L, full, reduced);
  else linearize_print_text(stdout, m, &pt, &L, full, reduced);
out:
  free_names(zs, red ? red->nk + red->ni : 0);
  free_names(xs, 2 * nq);
  linear_free(&L);
  steady_free(&sm);
  reduce_free(&own);
  free(given), free(prefer), free(rate), free(z);
  return rc;
}

int cmd_linearize(int argc, char **argv) {
  Options o;
  memset(&o, 0, sizeof o);
  char **lists = calloc(4 * ((size_t)argc + 1), sizeof(char *));
  int rc = 0;
  if (!lists) {
    fputs("eomc linearize: out of memory\n", stderr);
    return EXIT_RUN;
  }
  o.at = lists, o.set = lists + argc + 1, o.rate = o.set + argc + 1;
  o.independent = o.rate + argc + 1;
  if ((rc = parse_options(argc, argv, &o)) != 0) {
    free(lists);
    return rc < 0 ? 0 : rc;
  }
  BuiltModel bm;
  RunValues rv;
  char **xs = NULL;
  if ((rc = build_model(o.model, &bm)) != 0) goto done;
  const struct eom_model *m = bm.model;
  if (run_values_init(&rv, m) != 0) {
    fputs("eomc linearize: out of memory\n", stderr);
    rc = EXIT_RUN;
    goto unload;
  }
  if ((rc = apply_values(&o, m, &rv)) != 0) goto values;
  if ((m->nc + m->nvc > 0 || o.nrate > 0) && m->nattitudes > 0) {
    fputs("eomc linearize: error: constraints or --rate together with attitudes are not "
          "handled yet\n", stderr);
    rc = EXIT_RUN;
  } else if (m->nc + m->nvc > 0 || o.nrate > 0) {
    rc = linearize_reduced(m, &rv, &o);
  } else {
    xs = state_names(m);
    int names_ok = xs != NULL;
    for (int i = 0; names_ok && i < 2 * eom_nv(m); i++) names_ok = xs[i] != NULL;
    if (!names_ok) {
      fputs("eomc linearize: out of memory\n", stderr);
      rc = EXIT_RUN;
      goto values;
    }
    if (o.nindependent > 0) {
      fputs("eomc linearize: note: the model has no constraints: every coordinate is "
            "independent (--independent changes nothing)\n", stderr);
    }
    rc = linearize_full(m, &rv, &o, xs);
  }
  if (rc == 0 && fflush(stdout) != 0) rc = EXIT_RUN;
values:
  run_values_free(&rv);
unload:
  free_names(xs, bm.model ? 2 * eom_nv(bm.model) : 0);
  built_model_close(&bm);
done:
  free(lists);
  return rc;
}
