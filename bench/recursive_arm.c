/*
** recursive_arm.c — the numeric competitor of the generated code: forward
** dynamics of examples/picking_arm6.eom by the recursive algorithms, in
** plain C, timed side by side with picking_arm6_accel in one run.
**
**   bias forces   recursive Newton–Euler with q'' = 0 (Luh, Walker and Paul,
**                 ASME J. Dyn. Sys. Meas. Control 102, 1980)
**   mass matrix   composite-rigid-body algorithm (Walker and Orin, 1982;
**                 Featherstone, Rigid Body Dynamics Algorithms, 2008, §6.2)
**   solve         Cholesky, M = L L^T
**
** Both work in link coordinates with the standard Denavit–Hartenberg frames:
** link i carries frame i, joint i turns about z_{i-1}.  The arm's lengths,
** masses, g and frictions are read from the generated model's parameter
** defaults (by name); the mass centres and inertias are the constants of the
** example file, repeated below.  Built and run by bench_arm.py:
**   cc -O2 recursive_arm.c picking_arm6.c -lm && ./a.out
*/
#define _POSIX_C_SOURCE 199309L  /* clock_gettime */
#include <assert.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

#include "picking_arm6.h"
#include <eom/model.h>

#define N 6
#define PI 3.14159265358979323846

typedef struct Link {
  double ca, sa, d, a;   /* cos, sin alpha; DH offsets */
  double ps[3];          /* origin i from origin i-1, in frame i */
  double m, h[3];        /* mass and first moment m c (frame i, about origin i) */
  double J[3][3];        /* rotational inertia about origin i (frame i) */
  double b;              /* viscous friction */
} Link;

typedef struct Arm {
  Link l[N];
  double g;
} Arm;

/* ---- the example's constants: mass centres (mm), inertias about them (kg m^2) */
static const double centre[N][3] = {
  {-40, -110, 10}, {-330, 0, 130}, {-20, -10, 50}, {0, 160, 10}, {0, -15, 20}, {0, 0, -30}};
static const double inertia[N][3][3] = {
  {{0.42, 0, 0.02}, {0, 0.31, 0}, {0.02, 0, 0.38}},
  {{0.09, 0, -0.03}, {0, 0.58, 0}, {-0.03, 0, 0.55}},
  {{0.09, 0, 0}, {0, 0.085, 0}, {0, 0, 0.05}},
  {{0.075, 0, 0}, {0, 0.012, 0.004}, {0, 0.004, 0.07}},
  {{0.0042, 0, 0}, {0, 0.0038, 0}, {0, 0, 0.0031}},
  {{0.0012, 0, 0}, {0, 0.0012, 0}, {0, 0, 0.0009}}};
static const double alpha[N] = {PI / 2, 0, PI / 2, -PI / 2, PI / 2, 0};

static double param(const char *name) {
  const struct eom_model *m = &picking_arm6_model;
  for (int i = 0; i < m->np; i++)
    if (strcmp(m->param_names[i], name) == 0) return m->param_defaults[i];
  fprintf(stderr, "recursive_arm: no parameter %s\n", name);
  assert(0);
  return 0;
}

/* Add a part of mass m at c (frame i) with inertia I about c to link l:
** first moment m c, inertia about the origin I + m ([c]^T [c]) (parallel axes). */
static void add_part(Link *l, double m, const double c[3], const double I[3][3]) {
  double cc = c[0] * c[0] + c[1] * c[1] + c[2] * c[2];
  l->m += m;
  for (int i = 0; i < 3; i++) {
    l->h[i] += m * c[i];
    for (int j = 0; j < 3; j++) l->J[i][j] += I[i][j] + m * ((i == j ? cc : 0) - c[i] * c[j]);
  }
}

static void arm_init(Arm *arm) {
  memset(arm, 0, sizeof *arm);
  const double d[N] = {param("d1"), 0, 0, param("d4"), 0, param("d6")},
               a[N] = {param("a1"), param("a2"), param("a3"), 0, 0, 0};
  static const char *mass[N] = {"m1", "m2", "m3", "m4", "m5", "m6"},
                    *fric[N] = {"b1", "b2", "b3", "b4", "b5", "b6"};
  for (int i = 0; i < N; i++) {
    Link *l = &arm->l[i];
    l->ca = cos(alpha[i]), l->sa = sin(alpha[i]), l->d = d[i], l->a = a[i];
    if (fabs(l->ca) < 1e-15) l->ca = 0;
    l->ps[0] = a[i], l->ps[1] = d[i] * l->sa, l->ps[2] = d[i] * l->ca;
    double c[3] = {centre[i][0] * 1e-3, centre[i][1] * 1e-3, centre[i][2] * 1e-3};
    add_part(l, param(mass[i]), c, inertia[i]);
    l->b = param(fric[i]);
  }
  static const double none[3][3] = {{0}};
  double tool[3] = {0, 0, param("dt")};
  add_part(&arm->l[N - 1], param("mp"), tool, none);
  arm->g = param("g");
}

static void cross(const double *u, const double *v, double *w) {
  w[0] = u[1] * v[2] - u[2] * v[1];
  w[1] = u[2] * v[0] - u[0] * v[2];
  w[2] = u[0] * v[1] - u[1] * v[0];
}

/* v in frame i from v in frame i-1: R_i^T v, R_i = rotz(q) rotx(alpha) */
static void to_link(const Link *l, double c, double s, const double *v, double *w) {
  double x = c * v[0] + s * v[1], y = -s * v[0] + c * v[1];
  w[0] = x;
  w[1] = l->ca * y + l->sa * v[2];
  w[2] = -l->sa * y + l->ca * v[2];
}

/* v in frame i-1 from v in frame i: R_i v (w may be v) */
static void from_link(const Link *l, double c, double s, const double *v, double *w) {
  double x = v[0], y = l->ca * v[1] - l->sa * v[2], z = l->sa * v[1] + l->ca * v[2];
  w[0] = c * x - s * y;
  w[1] = s * x + c * y;
  w[2] = z;
}

/* Recursive Newton–Euler: tau = M qdd + c(q, qd) + friction + gravity. */
static void rnea(const Arm *arm, const double *cq, const double *sq, const double *qd,
                 const double *qdd, double *tau) {
  double w[N][3], wd[N][3], f[N][3], n[N][3];
  double wp[3] = {0, 0, 0}, wdp[3] = {0, 0, 0}, ap[3] = {0, 0, arm->g};
  for (int i = 0; i < N; i++) {
    const Link *l = &arm->l[i];
    double t[3] = {wp[0], wp[1], wp[2] + qd[i]};
    double u[3] = {wdp[0] + wp[1] * qd[i], wdp[1] - wp[0] * qd[i], wdp[2] + qdd[i]};
    double a[3], x[3], y[3];
    to_link(l, cq[i], sq[i], t, w[i]);
    to_link(l, cq[i], sq[i], u, wd[i]);
    to_link(l, cq[i], sq[i], ap, a);
    cross(wd[i], l->ps, x);
    cross(w[i], l->ps, y);
    cross(w[i], y, t);
    for (int k = 0; k < 3; k++) a[k] += x[k] + t[k];
    /* force m a_c = m a + wd x h + w x (w x h); moment about origin i
    ** J wd + w x J w + h x a */
    double Jw[3], Jwd[3];
    cross(wd[i], l->h, x);
    cross(w[i], l->h, y);
    cross(w[i], y, t);
    for (int k = 0; k < 3; k++) {
      f[i][k] = l->m * a[k] + x[k] + t[k];
      Jw[k] = l->J[k][0] * w[i][0] + l->J[k][1] * w[i][1] + l->J[k][2] * w[i][2];
      Jwd[k] = l->J[k][0] * wd[i][0] + l->J[k][1] * wd[i][1] + l->J[k][2] * wd[i][2];
    }
    cross(w[i], Jw, x);
    cross(l->h, a, y);
    for (int k = 0; k < 3; k++) n[i][k] = Jwd[k] + x[k] + y[k];
    memcpy(wp, w[i], sizeof wp), memcpy(wdp, wd[i], sizeof wdp), memcpy(ap, a, sizeof ap);
  }
  for (int i = N - 1; i >= 0; i--) {
    const Link *l = &arm->l[i];
    if (i + 1 < N) {
      double fo[3], no[3];
      from_link(&arm->l[i + 1], cq[i + 1], sq[i + 1], f[i + 1], fo);
      from_link(&arm->l[i + 1], cq[i + 1], sq[i + 1], n[i + 1], no);
      for (int k = 0; k < 3; k++) f[i][k] += fo[k], n[i][k] += no[k];
    }
    /* the moment about origin i-1, on the joint axis z_{i-1} = (0, sa, ca) in frame i;
    ** link i-1 takes it from there */
    double x[3];
    cross(l->ps, f[i], x);
    for (int k = 0; k < 3; k++) n[i][k] += x[k];
    tau[i] = l->sa * n[i][1] + l->ca * n[i][2] + l->b * qd[i];
  }
}

/* Composite-rigid-body mass matrix.  The composite of links i..N-1 is kept
** as mass, first moment and inertia about origin i, in frame i. */
static void crba(const Arm *arm, const double *cq, const double *sq, double M[N][N]) {
  double m[N], h[N][3], J[N][3][3];
  for (int i = N - 1; i >= 0; i--) {
    const Link *l = &arm->l[i];
    m[i] = l->m;
    memcpy(h[i], l->h, sizeof h[i]);
    memcpy(J[i], l->J, sizeof J[i]);
    if (i + 1 < N) {
      /* composite i+1 into frame i: rotate by R_{i+1}, shift by r = R_{i+1} p*_{i+1} */
      const Link *c = &arm->l[i + 1];
      double r[3], hr[3], RJ[3][3], col[3], out[3];
      from_link(c, cq[i + 1], sq[i + 1], c->ps, r);
      from_link(c, cq[i + 1], sq[i + 1], h[i + 1], hr);
      for (int k = 0; k < 3; k++) { /* R J R^T, column by column */
        for (int j = 0; j < 3; j++) col[j] = J[i + 1][j][k];
        from_link(c, cq[i + 1], sq[i + 1], col, out);
        for (int j = 0; j < 3; j++) RJ[j][k] = out[j];
      }
      for (int k = 0; k < 3; k++) {
        for (int j = 0; j < 3; j++) col[j] = RJ[k][j];
        from_link(c, cq[i + 1], sq[i + 1], col, out);
        for (int j = 0; j < 3; j++) RJ[k][j] = out[j];
      }
      double mc = m[i + 1], rr = r[0] * r[0] + r[1] * r[1] + r[2] * r[2], rh = 0;
      for (int k = 0; k < 3; k++) rh += r[k] * hr[k];
      m[i] += mc;
      for (int k = 0; k < 3; k++) {
        h[i][k] += hr[k] + mc * r[k];
        /* J += R J' R^T - m [r]^2 - [r][h] - [h][r] */
        for (int j = 0; j < 3; j++)
          J[i][k][j] += RJ[k][j] + mc * ((k == j ? rr : 0) - r[k] * r[j]) +
                        (k == j ? 2 * rh : 0) - r[k] * hr[j] - hr[k] * r[j];
      }
    }
    /* unit rate of joint i: angular s (axis in frame i), velocity of origin i s x p* */
    double s[3] = {0, l->sa, l->ca}, v[3], f[3], n[3], x[3];
    cross(s, l->ps, v);
    /* momentum of the composite: f = m v + s x h, about origin i: n = J s + h x v */
    cross(s, h[i], x);
    for (int k = 0; k < 3; k++) f[k] = m[i] * v[k] + x[k];
    cross(h[i], v, x);
    for (int k = 0; k < 3; k++) n[k] = J[i][k][0] * s[0] + J[i][k][1] * s[1] + J[i][k][2] * s[2] + x[k];
    /* carry (f, n) down the chain: M_ji = axis_j . moment about origin j-1 */
    for (int j = i; j >= 0; j--) {
      const Link *lj = &arm->l[j];
      double nj[3];
      cross(lj->ps, f, x);
      for (int k = 0; k < 3; k++) nj[k] = n[k] + x[k];
      M[j][i] = M[i][j] = lj->sa * nj[1] + lj->ca * nj[2];
      if (j > 0) {
        from_link(lj, cq[j], sq[j], f, f);
        from_link(lj, cq[j], sq[j], nj, n);
      }
    }
  }
}

/* q'' = M^-1 (u - bias) by Cholesky; 0, or 1 if M is not positive definite. */
static int recursive_accel(const Arm *arm, const double *q, const double *qd, const double *u,
                           double *qdd) {
  double cq[N], sq[N], zero[N] = {0}, bias[N], M[N][N], L[N][N], y[N];
  for (int i = 0; i < N; i++) cq[i] = cos(q[i]), sq[i] = sin(q[i]);
  rnea(arm, cq, sq, qd, zero, bias);
  crba(arm, cq, sq, M);
  for (int j = 0; j < N; j++) {
    double s = M[j][j];
    for (int k = 0; k < j; k++) s -= L[j][k] * L[j][k];
    if (!(s > 0)) return 1;
    L[j][j] = sqrt(s);
    for (int i = j + 1; i < N; i++) {
      double t = M[i][j];
      for (int k = 0; k < j; k++) t -= L[i][k] * L[j][k];
      L[i][j] = t / L[j][j];
    }
  }
  for (int i = 0; i < N; i++) {
    double t = u[i] - bias[i];
    for (int k = 0; k < i; k++) t -= L[i][k] * y[k];
    y[i] = t / L[i][i];
  }
  for (int i = N - 1; i >= 0; i--) {
    double t = y[i];
    for (int k = i + 1; k < N; k++) t -= L[k][i] * qdd[k];
    qdd[i] = t / L[i][i];
  }
  return 0;
}

static double now(void) {
  struct timespec t;
  clock_gettime(CLOCK_MONOTONIC, &t);
  return t.tv_sec + 1e-9 * t.tv_nsec;
}

int main(void) {
  enum { STATES = 64 };
  static double q[STATES][N], qd[STATES][N], u[STATES][N];
  const struct eom_model *mdl = &picking_arm6_model;
  double p[picking_arm6_NP];
  assert(mdl->np <= (int)(sizeof p / sizeof p[0]));
  for (int i = 0; i < mdl->np; i++) p[i] = mdl->param_defaults[i];
  Arm arm;
  arm_init(&arm);
  unsigned long long s = 1;
  for (int k = 0; k < STATES; k++)
    for (int i = 0; i < N; i++) {
      s = s * 6364136223846793005ULL + 1442695040888963407ULL;
      q[k][i] = ((double)(s >> 11) / 9007199254740992.0 - 0.5) * 2 * PI;
      s = s * 6364136223846793005ULL + 1442695040888963407ULL;
      qd[k][i] = ((double)(s >> 11) / 9007199254740992.0 - 0.5) * 4;
      s = s * 6364136223846793005ULL + 1442695040888963407ULL;
      u[k][i] = ((double)(s >> 11) / 9007199254740992.0 - 0.5) * 60;
    }
  /* the two must agree before their speeds mean anything */
  double worst = 0;
  for (int k = 0; k < STATES; k++) {
    double a[N], b[N];
    int ra = picking_arm6_accel(0, q[k], qd[k], u[k], p, a), rb = recursive_accel(&arm, q[k], qd[k], u[k], b);
    assert(ra == 0 && rb == 0);
    for (int i = 0; i < N; i++) worst = fmax(worst, fabs(a[i] - b[i]) / fmax(1, fabs(a[i])));
  }
  if (worst > 1e-9) {
    fprintf(stderr, "recursive_arm: the two disagree by %.3g\n", worst);
    return 1;
  }
  /* alternate rounds, keep each one's best */
  double best_gen = 1e30, best_rec = 1e30, sink = 0;
  const long calls = 20000;
  for (int round = 0; round < 7; round++) {
    double t0 = now();
    for (long c = 0; c < calls; c++) {
      double a[N];
      picking_arm6_accel(0, q[c % STATES], qd[c % STATES], u[c % STATES], p, a);
      sink += a[c % N];
    }
    double t1 = now();
    for (long c = 0; c < calls; c++) {
      double a[N];
      recursive_accel(&arm, q[c % STATES], qd[c % STATES], u[c % STATES], a);
      sink += a[c % N];
    }
    double t2 = now();
    best_gen = fmin(best_gen, (t1 - t0) / calls);
    best_rec = fmin(best_rec, (t2 - t1) / calls);
  }
  printf("%.1f %.1f %.3g %g\n", best_gen * 1e9, best_rec * 1e9, worst, sink);
  return 0;
}
