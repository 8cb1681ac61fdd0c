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
** Models with constraints are linearized by differences of the constrained
** dynamics (their state keeps the dependent coordinates).
**
** A model with attitudes is linearized in a minimal state: each attitude's
** quaternion q (4 entries) is replaced by a small rotation dth about its
** body axes, q = q0 (x) [1, dth/2], so dq = N(q0) dth and dth = 4 N(q0)^T dq
** (N the kinematic map of P_kinematics; N^T N = I/4 on the unit sphere).
** With T (full from minimal) and P (minimal from full), z = P dx gives
** z' = (P A_full T + P' T) z + P B_full u, so A = P A_full T + P' T (P'
** from q0' = N(q0) omega0: zero at rest, the turning of the body axes in a
** steady spin), B = P B_full, C = C_full T.
*/
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/build_model.h"
#include "cli/cmd.h"
#include "cli/json_out.h"
#include "cli/run_values.h"
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
  "  --json             machine-readable output\n"
  "\n"
  "exit status: 0 success, 1 model error, 2 usage error,\n"
  "             3 no equilibrium found or the analysis failed\n";

/* Above this disagreement (relative to the matrices' size) the jacobian is
** wrong, not inexact: central differences are good to ~1e-10 relative. */
#define AGREEMENT 1e-6
/* ... plus this absolute floor, below which both are zero. */
#define ZERO_FLOOR 1e-9

/* The linear model and what it was computed from. */
typedef struct Linear {
  int n, nu, ny;
  double *A, *B, *C, *D;      /* n x n, n x nu, ny x n, ny x nu, row-major */
  double *Ad, *Bd;            /* A and B by differences */
  int from_jacobian;          /* A, B are the generated jacobian's */
} Linear;

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

/* Print an r x c matrix with labels, in columns wide enough for both. */
static void print_matrix(FILE *f, const char *title, const double *a, int r, int c,
                         const char *const *rows, const char *const *cols) {
  int lw = 1, cw = 12;
  fprintf(f, "\n%s:\n", title);
  if (r == 0 || c == 0) {
    fprintf(f, "  (empty: %d x %d)\n", r, c);
    return;
  }
  for (int i = 0; i < r; i++)
    if ((int)strlen(rows[i]) > lw) lw = (int)strlen(rows[i]);
  for (int j = 0; j < c; j++)
    if ((int)strlen(cols[j]) + 1 > cw) cw = (int)strlen(cols[j]) + 1;
  fprintf(f, "  %*s", lw, "");
  for (int j = 0; j < c; j++) fprintf(f, " %*s", cw, cols[j]);
  fputc('\n', f);
  for (int i = 0; i < r; i++) {
    fprintf(f, "  %-*s", lw, rows[i]);
    for (int j = 0; j < c; j++) {
      double v = a[(size_t)i * c + j];
      fprintf(f, " %*.*g", cw, 6, v == 0 ? 0.0 : v);  /* no -0 */
    }
    fputc('\n', f);
  }
}

static void json_names(FILE *f, const char *key, const char *const *names, int n) {
  fprintf(f, ",\n  \"%s\": [", key);
  for (int i = 0; i < n; i++) {
    fputs(i ? ", " : "", f);
    json_str(f, names[i]);
  }
  fputc(']', f);
}

static void json_matrix(FILE *f, const char *key, const double *a, int r, int c) {
  fprintf(f, ",\n  \"%s\": [", key);
  for (int i = 0; i < r; i++) {
    fputs(i ? ",\n    [" : "\n    [", f);
    for (int j = 0; j < c; j++) {
      fputs(j ? ", " : "", f);
      json_num_exact(f, a[(size_t)i * c + j] == 0 ? 0.0 : a[(size_t)i * c + j]);
    }
    fputc(']', f);
  }
  fputs(r ? "\n  ]" : "]", f);
}

typedef struct Point {
  const double *x, *u;
  int searched;                 /* an equilibrium was searched for */
  const struct eom_report *eq;  /* its report, when searched */
} Point;

/* The name of entry i of the full state (the point): the linear model's
** state names without attitudes; else coordinates with quaternion entries
** (R.w ...) and the velocities (omega(R)[1] ...). */
static const char *point_name(const struct eom_model *m, const char *const *xs, int i, char *buf,
                              size_t size) {
  if (m->nattitudes == 0) return xs[i];
  if (i < m->nq) snprintf(buf, size, "%s", m->coord_names[i]);
  else snprintf(buf, size, "%s", m->rate_names[i - m->nq]);
  return buf;
}

static void print_json(FILE *f, const struct eom_model *m, const Point *pt, const Linear *L,
                       const char *const *xs) {
  fputs("{\n  \"model\": ", f);
  json_str(f, m->name);
  fprintf(f, ",\n  \"equilibrium\": %s", pt->searched ? "true" : "false");
  if (pt->searched) {
    fprintf(f, ",\n  \"newton_iterations\": %ld,\n  \"residual\": ", pt->eq->steps);
    json_num(f, pt->eq->residual);
  }
  fputs(",\n  \"point\": {", f);
  char name[256];
  for (int i = 0; i < eom_state_size(m); i++) {
    fputs(i ? ", " : "", f);
    json_str(f, point_name(m, xs, i, name, sizeof name));
    fputs(": ", f);
    json_num_exact(f, pt->x[i]);
  }
  fputs("},\n  \"inputs_at\": {", f);
  for (int i = 0; i < L->nu; i++) {
    fputs(i ? ", " : "", f);
    json_str(f, m->input_names[i]);
    fputs(": ", f);
    json_num_exact(f, pt->u[i]);
  }
  fputc('}', f);
  json_names(f, "state", xs, L->n);
  json_names(f, "inputs", m->input_names, L->nu);
  json_names(f, "outputs", m->output_names, L->ny);
  json_matrix(f, "A", L->A, L->n, L->n);
  json_matrix(f, "B", L->B, L->n, L->nu);
  json_matrix(f, "C", L->C, L->ny, L->n);
  json_matrix(f, "D", L->D, L->ny, L->nu);
  fputs("\n}\n", f);
}

static void print_text(FILE *f, const struct eom_model *m, const Point *pt, const Linear *L,
                       const char *const *xs) {
  if (pt->searched)
    fprintf(f, "%s linearized at an equilibrium (%ld Newton iterations, residual %.3g):\n",
            m->name, pt->eq->steps, pt->eq->residual);
  else
    fprintf(f, "%s linearized at the given point:\n", m->name);
  char name[256];
  for (int i = 0; i < eom_state_size(m); i++)
    fprintf(f, "  %s = %.12g\n", point_name(m, xs, i, name, sizeof name), pt->x[i]);
  for (int i = 0; i < L->nu; i++) fprintf(f, "  input %s = %.12g\n", m->input_names[i], pt->u[i]);
  fprintf(f, "x' = A x + B u, y = C x + D u (deviations from the point); x = [q; q'] (%d), "
             "u (%d), y (%d)\n", L->n, L->nu, L->ny);
  if (m->nattitudes > 0)
    fprintf(f, "(with attitudes: each quaternion's deviation is a small rotation R.dth1..3 about\n"
               " the body axes, and the rates are the velocities, omega(R) for an attitude)\n");
  if (m->nc > 0)
    fprintf(f, "(with constraints: the state keeps every coordinate; A and B are differences\n"
               " of the constrained dynamics)\n");
  print_matrix(f, "A", L->A, L->n, L->n, xs, xs);
  print_matrix(f, "B", L->B, L->n, L->nu, xs, m->input_names);
  print_matrix(f, "C", L->C, L->ny, L->n, m->output_names, xs);
  print_matrix(f, "D", L->D, L->ny, L->nu, m->output_names, m->input_names);
}

typedef struct Options {
  const char *model;
  char **at, **set;
  int nat, nset, json, no_search;
} Options;

/* 0, or an exit status after printing the problem. */
static int parse_options(int argc, char **argv, Options *o) {
  for (int i = 1; i < argc; i++) {
    const char *arg = argv[i];
    if (cmd_is_help(arg)) {
      fputs(linearize_usage, stdout);
      return -1;
    } else if (strcmp(arg, "--json") == 0) {
      o->json = 1;
    } else if (strcmp(arg, "--no-search") == 0) {
      o->no_search = 1;
    } else if (strcmp(arg, "--at") == 0 || strcmp(arg, "--set") == 0) {
      if (i + 1 >= argc) {
        fprintf(stderr, "eomc linearize: option '%s' needs NAME=VALUE (try 'eomc linearize --help')\n", arg);
        return EXIT_USAGE;
      }
      if (arg[2] == 'a') o->at[o->nat++] = argv[++i];
      else o->set[o->nset++] = argv[++i];
    } else if (strncmp(arg, "--at=", 5) == 0) {
      o->at[o->nat++] = (char *)arg + 5;
    } else if (strncmp(arg, "--set=", 6) == 0) {
      o->set[o->nset++] = (char *)arg + 6;
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

/* Newton leftovers (1e-30 where the answer is 0) print as 0. */
static void clean_point(double *q, int n) {
  double scale = 0;
  for (int i = 0; i < n; i++) scale = fmax(scale, fabs(q[i]));
  for (int i = 0; i < n; i++)
    if (fabs(q[i]) < 1e-14 * fmax(1.0, scale)) q[i] = 0;
}

int cmd_linearize(int argc, char **argv) {
  Options o;
  memset(&o, 0, sizeof o);
  o.at = calloc((size_t)argc + 1, sizeof(char *));
  o.set = calloc((size_t)argc + 1, sizeof(char *));
  int rc = 0;
  if (!o.at || !o.set) {
    free(o.at), free(o.set);
    fputs("eomc linearize: out of memory\n", stderr);
    return EXIT_RUN;
  }
  if ((rc = parse_options(argc, argv, &o)) != 0) {
    free(o.at), free(o.set);
    return rc < 0 ? 0 : rc;
  }
  BuiltModel bm;
  RunValues rv;
  Linear L;
  char **xs = NULL, err[512] = "";
  memset(&L, 0, sizeof L);
  if ((rc = build_model(o.model, &bm)) != 0) goto done;
  const struct eom_model *m = bm.model;
  if (run_values_init(&rv, m) != 0) {
    fputs("eomc linearize: out of memory\n", stderr);
    rc = EXIT_RUN;
    goto unload;
  }
  if ((rc = apply_values(&o, m, &rv)) != 0) goto values;
  int nq = m->nq;
  struct eom_report eq;
  memset(&eq, 0, sizeof eq);
  if (!o.no_search && m->nattitudes > 0) {
    fprintf(stderr, "eomc linearize: error: the equilibrium search does not handle attitudes yet: "
                    "give the point with --no-search (the model's initial values and --at)\n");
    rc = EXIT_RUN;
    goto values;
  }
  if (!o.no_search) {
    memset(rv.x + nq, 0, (size_t)nq * sizeof(double));  /* at rest */
    if (eom_equilibrium(m, rv.p, rv.u, 0, rv.x, 0, 0, &eq) != EOM_OK) {
      fprintf(stderr, "eomc linearize: error: no static equilibrium: %s\n"
                      "  (--no-search linearizes at the given point instead)\n", eq.message);
      rc = EXIT_RUN;
      goto values;
    }
    clean_point(rv.x, nq);
  }
  xs = state_names(m);
  int names_ok = xs != NULL, nz = 2 * eom_nv(m);
  for (int i = 0; names_ok && i < nz; i++) names_ok = xs[i] != NULL;
  if (!names_ok || linear_alloc(&L, eom_state_size(m), m->nu, m->ny) != 0) {
    fputs("eomc linearize: out of memory\n", stderr);
    rc = EXIT_RUN;
    goto values;
  }
  if (linearize_at(m, rv.p, rv.x, rv.u, &L, err, sizeof err) != 0) {
    fprintf(stderr, "eomc linearize: error: %s\n", err);
    rc = EXIT_RUN;
    goto values;
  }
  if (m->nattitudes > 0) {   /* to the minimal state */
    Linear Z;
    if (linear_alloc(&Z, nz, m->nu, m->ny) != 0 || reduce_attitudes(m, rv.x, &L, &Z) != 0) {
      linear_free(&Z);
      fputs("eomc linearize: out of memory\n", stderr);
      rc = EXIT_RUN;
      goto values;
    }
    linear_free(&L);
    L = Z;
  }
  Point pt = {rv.x, rv.u, !o.no_search, &eq};
  if (o.json) print_json(stdout, m, &pt, &L, (const char *const *)xs);
  else print_text(stdout, m, &pt, &L, (const char *const *)xs);
  if (fflush(stdout) != 0) rc = EXIT_RUN;
values:
  run_values_free(&rv);
unload:
  free_names(xs, bm.model ? 2 * eom_nv(bm.model) : 0);
  linear_free(&L);
  built_model_close(&bm);
done:
  free(o.at), free(o.set);
  return rc;
}
