/*
** reduce.c — the reduced state of a model with constraints (see reduce.h).
**
** Everything is numeric, through the model's descriptor: mass, forcing,
** constraint_at (or constraint and constraint_jacobian), constraint_gamma
** and velocity_constraint (the runtime's eom_dynamics for models without
** constraint_gamma).
*/
#include "cli/reduce.h"
#include "eom/runtime.h"

#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Scratch layout in r->work. */
typedef struct Scratch {
  double *H, *rhs, *Hd;  /* nh x nq, nh, nh x nh */
  double *phi, *phit;    /* nc each */
  double *b, *gam;       /* nvc each */
} Scratch;

static Scratch scratch(const Reduction *r) {
  int nq = r->nq, nh = r->nc + r->nvc;
  Scratch s;
  s.H = r->work;
  s.rhs = s.H + (size_t)nh * nq;
  s.Hd = s.rhs + nh;
  s.phi = s.Hd + (size_t)nh * nh;
  s.phit = s.phi + r->nc;
  s.b = s.phit + r->nc;
  s.gam = s.b + r->nvc;
  return s;
}

static void *zalloc(size_t n, size_t size) { return calloc(n ? n : 1, size); }

void reduce_free(Reduction *r) {
  if (!r) return;
  free(r->u);
  free(r->role);
  free(r->dep);
  free(r->row);
  free(r->kept);
  free(r->independent);
  free(r->q);
  free(r->work);
  free(r->piv);
  free(r->piv2);
  free(r->acc);
  memset(r, 0, sizeof *r);
}

int reduce_init(Reduction *r, const struct eom_model *m, const double *p, const double *u,
                double t, const double *q, const double *v) {
  assert(r && m && q && v);
  memset(r, 0, sizeof *r);
  int nq = m->nq, nc = m->nc, nvc = m->nvc, nh = nc + nvc;
  r->m = m;
  r->p = p ? p : m->param_defaults;
  r->t = t;
  r->nq = nq, r->nc = nc, r->nvc = nvc;
  r->u = zalloc((size_t)m->nu, sizeof(double));
  r->role = zalloc((size_t)nq, sizeof(int));
  r->dep = zalloc((size_t)nh, sizeof(int));
  r->row = zalloc((size_t)nh, sizeof(int));
  r->kept = zalloc((size_t)nq, sizeof(int));
  r->independent = zalloc((size_t)nq, sizeof(int));
  r->q = zalloc(6 * (size_t)nq + (size_t)nh, sizeof(double));
  /* Scratch: H, rhs, Hd, phi, phit, b, gam */
  r->work = zalloc((size_t)nh * nq + (size_t)nh + (size_t)nh * nh + 2 * (size_t)nc + 2 * (size_t)nvc,
                   sizeof(double));
  r->piv = zalloc((size_t)nh + 1, sizeof(int));
  r->piv2 = zalloc((size_t)nq + 1, sizeof(int));
  /* reduced_accel: M, T, Mr, f, c, gamma, w */
  r->acc = zalloc(3 * (size_t)nq * nq + 3 * (size_t)nq + 2 * (size_t)nh + 1, sizeof(double));
  if (!r->u || !r->role || !r->dep || !r->row || !r->kept || !r->independent || !r->q ||
      !r->work || !r->piv || !r->piv2 || !r->acc)
    return -1;
  r->v = r->q + nq;
  r->qf = r->v + nq;
  r->vf = r->qf + nq;
  r->xdot = r->vf + nq;
  r->qdd = r->xdot + nq;
  r->lambda = r->qdd + nq;
  if (u) memcpy(r->u, u, (size_t)m->nu * sizeof(double));
  memcpy(r->q, q, (size_t)nq * sizeof(double));
  memcpy(r->v, v, (size_t)nq * sizeof(double));
  memcpy(r->qf, q, (size_t)nq * sizeof(double));
  memcpy(r->vf, v, (size_t)nq * sizeof(double));
  return 0;
}

/* phi, G (nc x nq, rows of H) and dphi/dt at (t, q). */
static void position_constraints(const Reduction *r, const double *q, double *phi, double *G,
                                 double *phit) {
  const struct eom_model *m = r->m;
  if (m->constraint_at) {
    m->constraint_at(r->t, q, r->p, phi, G, phit);
    return;
  }
  m->constraint(q, r->p, phi);
  m->constraint_jacobian(q, r->p, G);
  memset(phit, 0, (size_t)r->nc * sizeof(double));
}

/* H = [G; A] at (q, v) with rhs = [-dphi/dt; b]; phi too. */
static void rate_rows(const Reduction *r, const double *q, const double *v, Scratch *s) {
  int nq = r->nq, nc = r->nc;
  if (nc > 0) {
    position_constraints(r, q, s->phi, s->H, s->phit);
    for (int k = 0; k < nc; k++) s->rhs[k] = -s->phit[k];
  }
  if (r->nvc > 0) {
    r->m->velocity_constraint(r->t, q, v, r->p, s->H + (size_t)nc * nq, s->b, s->gam);
    memcpy(s->rhs + nc, s->b, (size_t)r->nvc * sizeof(double));
  }
}

/* Dense LU with partial pivoting in place; -1 when singular. */
static int lu(int n, double *a, int *piv) {
  for (int k = 0; k < n; k++) {
    int p = k;
    for (int i = k + 1; i < n; i++)
      if (fabs(a[i * n + k]) > fabs(a[p * n + k])) p = i;
    if (!(fabs(a[p * n + k]) > 0)) return -1;
    piv[k] = p;
    if (p != k)
      for (int j = 0; j < n; j++) {
        double t = a[k * n + j];
        a[k * n + j] = a[p * n + j];
        a[p * n + j] = t;
      }
    for (int i = k + 1; i < n; i++) {
      a[i * n + k] /= a[k * n + k];
      for (int j = k + 1; j < n; j++) a[i * n + j] -= a[i * n + k] * a[k * n + j];
    }
  }
  return 0;
}

static void lu_solve(int n, const double *a, const int *piv, double *x) {
  for (int k = 0; k < n; k++) {
    double t = x[k];
    x[k] = x[piv[k]];
    x[piv[k]] = t;
  }
  for (int i = 0; i < n; i++)
    for (int k = 0; k < i; k++) x[i] -= a[i * n + k] * x[k];
  for (int i = n - 1; i >= 0; i--) {
    for (int k = i + 1; k < n; k++) x[i] -= a[i * n + k] * x[k];
    x[i] /= a[i * n + i];
  }
}

/* May column j be a pivot of preference class cls?  Classes, tried in
** order: absent positions (they matter least), then coordinates neither
** given nor preferred, then any not preferred, then any. */
static int in_class(int role, int cls) {
  switch (cls) {
  case 0: return (role & REDUCE_ABSENT) && !(role & (REDUCE_GIVEN | REDUCE_PREFER));
  case 1: return !(role & (REDUCE_GIVEN | REDUCE_PREFER));
  case 2: return !(role & REDUCE_PREFER);
  default: return 1;
  }
}

/* One elimination step over the unused rows lo..hi-1 of a (nh x nq):
** the pivot's column (its row in *prow), or -1 when every candidate is
** below the floor (the rows left depend on the others). */
static int eliminate_one(Reduction *r, double *a, int lo, int hi, int *row_used, int *col_used,
                         double floor, int *prow) {
  int nq = r->nq, nh = r->nc + r->nvc, br = -1, bc = -1;
  for (int cls = 0; cls < 4 && br < 0; cls++) {
    double best = floor;
    for (int j = 0; j < nq; j++) {
      if (col_used[j] || !in_class(r->role[j], cls)) continue;
      for (int i = lo; i < hi; i++)
        if (!row_used[i] && fabs(a[i * nq + j]) > best) best = fabs(a[i * nq + j]), br = i, bc = j;
    }
  }
  if (br < 0) return -1;
  *prow = br;
  row_used[br] = col_used[bc] = 1;
  for (int i = 0; i < nh; i++) {
    if (row_used[i]) continue;
    double f = a[i * nq + bc] / a[br * nq + bc];
    for (int j = 0; j < nq; j++) a[i * nq + j] -= f * a[br * nq + j];
  }
  return bc;
}

int reduce_choose(Reduction *r, char *err, size_t errlen) {
  int nq = r->nq, nc = r->nc, nh = nc + r->nvc, rc = 0;
  const struct eom_model *m = r->m;
  if ((nc > 0 && !((m->constraint && m->constraint_jacobian) || m->constraint_at)) ||
      (nh > 0 && !m->accel_constrained) || (r->nvc > 0 && !m->velocity_constraint) ||
      (nh == 0 && !m->accel)) {
    snprintf(err, errlen, "the model lacks its constraint functions");
    return -1;
  }
  for (int i = 0; i < nq; i++) r->role[i] &= ~(REDUCE_RATE_DEP | REDUCE_POS_DEP | REDUCE_KEPT);
  r->nd = r->npd = 0;
  Scratch s = scratch(r);
  double *a = zalloc((size_t)nh * nq, sizeof(double));
  int *row_used = zalloc((size_t)nh, sizeof(int)), *col_used = zalloc((size_t)nq, sizeof(int));
  if (!a || !row_used || !col_used) {
    snprintf(err, errlen, "out of memory");
    rc = -1;
  }
  if (rc == 0 && nh > 0) {
    rate_rows(r, r->q, r->v, &s);
    memcpy(a, s.H, (size_t)nh * nq * sizeof(double));
    double big = 0;
    for (size_t k = 0; k < (size_t)nh * nq; k++) big = fmax(big, fabs(a[k]));
    /* the positions first (rows of G), then the rates (rows of A) */
    for (int stage = 0; stage < 2; stage++) {
      int lo = stage ? nc : 0, hi = stage ? nh : nc;
      for (int k = lo; k < hi; k++) {
        int row, c = eliminate_one(r, a, lo, hi, row_used, col_used, 1e-9 * big, &row);
        if (c < 0) break;  /* the rows left are redundant */
        r->dep[r->nd] = c, r->row[r->nd++] = row;
        r->role[c] |= REDUCE_RATE_DEP | (stage ? 0 : REDUCE_POS_DEP);
      }
      if (stage == 0) r->npd = r->nd;
    }
    if (r->nd == 0 && nh > 0 && big == 0) {
      snprintf(err, errlen, "the constraints fix nothing at the point (their matrix is zero)");
      rc = -1;
    }
  }
  free(a);
  free(row_used);
  free(col_used);
  if (rc != 0) return rc;
  r->nk = r->ni = 0;
  for (int i = 0; i < nq; i++) {
    if (!(r->role[i] & (REDUCE_ABSENT | REDUCE_GIVEN | REDUCE_POS_DEP))) {
      r->role[i] |= REDUCE_KEPT;
      r->kept[r->nk++] = i;
    }
    if (!(r->role[i] & REDUCE_RATE_DEP)) r->independent[r->ni++] = i;
  }
  return 0;
}

void reduce_point(const Reduction *r, double *z) {
  for (int k = 0; k < r->nk; k++) z[k] = r->q[r->kept[k]];
  for (int k = 0; k < r->ni; k++) z[r->nk + k] = r->v[r->independent[k]];
}

/* Newton's method on phi(t, q) = 0 (its independent rows) for the
** dependent positions. */
static int solve_positions(Reduction *r, Scratch *s) {
  int nq = r->nq, n = r->npd;
  for (int it = 0; it < 50; it++) {
    position_constraints(r, r->qf, s->phi, s->H, s->phit);
    for (int a = 0; a < n; a++)
      for (int b = 0; b < n; b++) s->Hd[a * n + b] = s->H[r->row[a] * nq + r->dep[b]];
    if (lu(n, s->Hd, r->piv) != 0) return -1;
    for (int k = 0; k < n; k++) s->rhs[k] = -s->phi[r->row[k]];
    lu_solve(n, s->Hd, r->piv, s->rhs);
    double step = 0, size = 0;
    for (int k = 0; k < n; k++) {
      r->qf[r->dep[k]] += s->rhs[k];
      step = fmax(step, fabs(s->rhs[k]));
      size = fmax(size, fabs(r->qf[r->dep[k]]));
    }
    if (!isfinite(step)) return -1;
    if (step <= 1e-14 * (1 + size)) return 0;
  }
  return -1;
}

int reduce_state(Reduction *r, const double *z) {
  int nq = r->nq;
  Scratch s = scratch(r);
  memcpy(r->qf, r->q, (size_t)nq * sizeof(double));
  memcpy(r->vf, r->v, (size_t)nq * sizeof(double));
  for (int k = 0; k < r->nk; k++) r->qf[r->kept[k]] = z[k];
  for (int k = 0; k < r->ni; k++) r->vf[r->independent[k]] = z[r->nk + k];
  if (r->npd > 0 && solve_positions(r, &s) != 0) return -1;
  int nd = r->nd;
  if (nd == 0) return 0;
  rate_rows(r, r->qf, r->vf, &s);
  double *x = s.phi;  /* b - H_I v_I of the independent rows (phi, phit, b: nh >= nd) */
  for (int a = 0; a < nd; a++) {
    int i = r->row[a];
    double sum = s.rhs[i];
    for (int j = 0; j < nq; j++)
      if (!(r->role[j] & REDUCE_RATE_DEP)) sum -= s.H[i * nq + j] * r->vf[j];
    x[a] = sum;
    for (int b = 0; b < nd; b++) s.Hd[a * nd + b] = s.H[i * nq + r->dep[b]];
  }
  if (lu(nd, s.Hd, r->piv) != 0) return -1;
  lu_solve(nd, s.Hd, r->piv, x);
  for (int b = 0; b < nd; b++) r->vf[r->dep[b]] = x[b];
  return 0;
}

/* q'' at the full state from the independent rates' equations alone:
** with H = [G; A] (independent rows) split into its dependent columns Hd
** and the rest H_I, H q'' = gamma gives q'' = T q''_I + c, T = [I;
** -Hd^-1 H_I], c = [0; Hd^-1 gamma], and Tᵀ M T q''_I = Tᵀ (f - M c): the
** reduced equations of coordinate partitioning.  Redundant constraints
** are not in it, so it holds where the full multiplier system is
** singular.  0, or -1 when M or the reduced mass matrix is singular. */
static int reduced_accel(Reduction *r) {
  const struct eom_model *m = r->m;
  int nq = r->nq, nc = r->nc, nd = r->nd, ni = r->ni;
  Scratch s = scratch(r);
  double *M = r->acc, *T = M + (size_t)nq * nq, *Mr = T + (size_t)nq * ni, *f = Mr + (size_t)ni * ni;
  double *c = f + nq, *g = c + nq, *w = g + nc + r->nvc;
  m->mass(r->qf, r->p, M);
  m->forcing(r->t, r->qf, r->vf, r->u, r->p, f);
  rate_rows(r, r->qf, r->vf, &s);
  if (nc > 0) m->constraint_gamma(r->t, r->qf, r->vf, r->p, g);
  if (r->nvc > 0) memcpy(g + nc, s.gam, (size_t)r->nvc * sizeof(double));
  /* Hd^-1 [H_I, gamma] */
  for (int a = 0; a < nd; a++)
    for (int b = 0; b < nd; b++) s.Hd[a * nd + b] = s.H[r->row[a] * nq + r->dep[b]];
  if (nd > 0 && lu(nd, s.Hd, r->piv) != 0) return -1;
  memset(T, 0, (size_t)nq * ni * sizeof(double));
  memset(c, 0, (size_t)nq * sizeof(double));
  for (int k = 0; k <= ni; k++) {  /* column k of H_I, then gamma */
    for (int a = 0; a < nd; a++)
      w[a] = k < ni ? s.H[r->row[a] * nq + r->independent[k]] : g[r->row[a]];
    if (nd > 0) lu_solve(nd, s.Hd, r->piv, w);
    for (int b = 0; b < nd; b++) {
      if (k < ni) T[r->dep[b] * ni + k] = -w[b];
      else c[r->dep[b]] = w[b];
    }
    if (k < ni) T[r->independent[k] * ni + k] = 1;
  }
  /* f - M c, then Mr = Tᵀ M T and the right side Tᵀ (f - M c) into w */
  for (int i = 0; i < nq; i++)
    for (int j = 0; j < nq; j++) f[i] -= M[i * nq + j] * c[j];
  for (int a = 0; a < ni; a++) {
    double sum = 0;
    for (int i = 0; i < nq; i++) sum += T[i * ni + a] * f[i];
    w[a] = sum;
    for (int b = 0; b < ni; b++) {
      double mab = 0;
      for (int i = 0; i < nq; i++) {
        double mt = 0;
        for (int j = 0; j < nq; j++) mt += M[i * nq + j] * T[j * ni + b];
        mab += T[i * ni + a] * mt;
      }
      Mr[a * ni + b] = mab;
    }
  }
  if (ni > 0 && lu(ni, Mr, r->piv2) != 0) return -1;
  if (ni > 0) lu_solve(ni, Mr, r->piv2, w);
  for (int i = 0; i < nq; i++) {
    double sum = c[i];
    for (int k = 0; k < ni; k++) sum += T[i * ni + k] * w[k];
    r->qdd[i] = sum;
  }
  memcpy(r->xdot, r->vf, (size_t)nq * sizeof(double));
  return 0;
}

int reduce_rhs(Reduction *r, const double *z, double *zdot) {
  if (reduce_state(r, z) != 0) return -1;
  /* the reduced equations where the model gives what they need; the
  ** runtime's accelerations otherwise */
  if (r->nd > 0 && (r->nc == 0 || r->m->constraint_gamma)) {
    if (reduced_accel(r) != 0) return -1;
  } else if (eom_dynamics(r->m, r->p, r->t, r->qf, r->u, r->xdot) != EOM_OK) {
    return -1;
  }
  for (int k = 0; k < r->nk; k++) zdot[k] = r->vf[r->kept[k]];
  for (int k = 0; k < r->ni; k++) zdot[r->nk + k] = r->qdd[r->independent[k]];
  for (int k = 0; k < r->nk + r->ni; k++)
    if (!isfinite(zdot[k])) return -1;
  return 0;
}

/* The step of a central difference about v: eps^(1/3) relative, common
** practice for second-order-accurate differences. */
static double fd_step(double v) { return cbrt(DBL_EPSILON) * fmax(1.0, fabs(v)); }

/* z' and y at (z, u) into f and y (y NULL: not wanted). */
static int eval(Reduction *r, const double *z, double *f, double *y) {
  if (reduce_rhs(r, z, f) != 0) return -1;
  if (y) r->m->outputs(r->t, r->qf, r->vf, r->u, r->p, y);
  return 0;
}

int reduce_linearize(Reduction *r, double *z, double *A, double *B, double *C, double *D) {
  int nz = r->nk + r->ni, nu = B ? r->m->nu : 0, ny = C ? r->m->ny : 0, rc = 0;
  double *buf = zalloc(2 * (size_t)nz + 2 * (size_t)ny, sizeof(double));
  if (!buf) return -1;
  double *f1 = buf, *f2 = f1 + nz, *y1 = f2 + nz, *y2 = y1 + ny;
  for (int j = 0; j < nz + nu && rc == 0; j++) {
    double *x = j < nz ? &z[j] : &r->u[j - nz], base = *x, h = fd_step(base);
    *x = base + h;
    rc = eval(r, z, f1, ny ? y1 : NULL);
    *x = base - h;
    rc = rc ? rc : eval(r, z, f2, ny ? y2 : NULL);
    *x = base;
    for (int i = 0; i < nz; i++) {
      double d = (f1[i] - f2[i]) / (2 * h);
      if (j < nz) A[(size_t)i * nz + j] = d;
      else B[(size_t)i * nu + (j - nz)] = d;
    }
    for (int i = 0; i < ny; i++) {
      double d = (y1[i] - y2[i]) / (2 * h);
      if (j < nz) C[(size_t)i * nz + j] = d;
      else D[(size_t)i * nu + (j - nz)] = d;
    }
  }
  /* leave the full state of z itself behind */
  if (rc == 0) rc = reduce_state(r, z);
  free(buf);
  return rc;
}

void reduce_rebase(Reduction *r) {
  memcpy(r->q, r->qf, (size_t)r->nq * sizeof(double));
  memcpy(r->v, r->vf, (size_t)r->nq * sizeof(double));
}

const char *reduce_name(const Reduction *r, int k, char *buf, size_t size) {
  assert(k >= 0 && k < r->nk + r->ni);
  if (k < r->nk) snprintf(buf, size, "%s", r->m->coord_names[r->kept[k]]);
  else snprintf(buf, size, "%s'", r->m->coord_names[r->independent[k - r->nk]]);
  return buf;
}
