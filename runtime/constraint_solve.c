/*
** constraint_solve.c — the constrained accelerations and the corrections
** onto the constraints by a rank-revealing route, well posed where the
** constraint Jacobian G = dphi/dq loses rank.
**
** A linkage passing a singular position (a parallelogram with all links
** aligned) and a machine with redundant joints (three parallel cranks on one
** beam) have a G whose rows become, or always are, dependent.  The plain
** range-space solve of M qdd = f + Gᵀλ, G qdd = gamma divides by the
** vanishing pivots of S = G M⁻¹ Gᵀ there.  Here S is diagonalized (cyclic
** Jacobi) and applied through its pseudo-inverse, dropping the directions
** whose eigenvalue is below a small fraction of the largest: the
** multipliers are the minimum-norm split of the constraint force over the
** rows — not unique for redundant rows — and the accelerations are those of
** the constraints that act.  Every correction is mass-orthogonal,
**   dq = -M⁻¹Gᵀ S⁺ r,
** the smallest change in the kinetic-energy metric, so a projection started
** from an integrator's predicted state keeps the assembly branch the motion
** is on (Bayo & Ledesma, "Augmented Lagrangian and mass-orthogonal
** projection methods for constrained multibody dynamics", Nonlinear
** Dynamics 9, 1996, for mass-orthogonal projections; Golub & Van Loan,
** Matrix Computations, 3rd ed., 1996, §8.4 for the cyclic Jacobi method —
** the section number from memory).
*/
#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "integrators.h"

/* Eigenvalues of S below this fraction of the largest count as zero: a
** row whose part outside the span of the others is below ~1e-4 of the
** largest row (in the kinetic metric).  Near a singular position the dropped row's constraint is of
** second order (its residual ~1e-8 there); enforcing it through a near-zero
** eigenvalue would instead amplify rounding and projection residuals into
** the rates (measured on a square four-bar: energy drift 0.4 at 1e-12,
** 2e-7 at 1e-8 with dopri over 10 s). */
#define RANK_TOL 1e-8

/* Doubles of the dense layout; the sparse route's integers follow them. */
static size_t dense_doubles(int nq, int nc) {
  return (size_t)nq * nq + 2 * (size_t)nc * nq + 2 * (size_t)nc * nc + 2 * (size_t)nc +
         (size_t)(nq > nc ? nq : nc);
}

size_t csolve_doubles(int nq, int nc) {
  return dense_doubles(nq, nc) + csparse_doubles(nc) +
         (csparse_ints(nq, nc) * sizeof(int) + sizeof(double) - 1) / sizeof(double);
}

void csolve_init(ConstraintSolver *s, int nq, int nc, double *work) {
  assert(nq > 0 && nc > 0 && work);
  s->nq = nq;
  s->nc = nc;
  s->L = work;
  s->W = s->L + (size_t)nq * nq;
  s->G = s->W + (size_t)nc * nq;
  s->V = s->G + (size_t)nc * nq;
  s->S = s->V + (size_t)nc * nc;
  s->ev = s->S + (size_t)nc * nc;
  s->rhs = s->ev + nc;
  s->tmp = s->rhs + nc;
  s->dwork = work + dense_doubles(nq, nc);
  /* The work comes from malloc, so its tail takes the type of what is stored
  ** in it; csolve_doubles rounds that tail up to whole doubles. */
  void *tail = s->dwork + csparse_doubles(nc);
  s->iwork = tail;
  s->rank = 0;
  s->mode = EOM_CSOLVE_AUTO;
  s->sparse = 0;
  s->nblocks = s->nnull = s->nput = s->crank = 0;
}

/* Cholesky M = L Lᵀ in place (lower triangle); -1 when M is not clearly
** positive definite. */
static int cholesky(int n, double *a) {
  double big = 0;
  for (int i = 0; i < n; i++) big = fmax(big, fabs(a[i * n + i]));
  if (!(big > 0) || !isfinite(big)) return -1;
  for (int j = 0; j < n; j++) {
    double d = a[j * n + j];
    for (int k = 0; k < j; k++) d -= a[j * n + k] * a[j * n + k];
    if (!(d > 1e-14 * big)) return -1;
    d = sqrt(d);
    a[j * n + j] = d;
    for (int i = j + 1; i < n; i++) {
      double v = a[i * n + j];
      for (int k = 0; k < j; k++) v -= a[i * n + k] * a[j * n + k];
      a[i * n + j] = v / d;
    }
  }
  return 0;
}

/* b := L⁻¹ b */
static void forward(int n, const double *l, double *b) {
  for (int i = 0; i < n; i++) {
    double v = b[i];
    for (int k = 0; k < i; k++) v -= l[i * n + k] * b[k];
    b[i] = v / l[i * n + i];
  }
}

/* b := L⁻ᵀ b */
static void backward(int n, const double *l, double *b) {
  for (int i = n - 1; i >= 0; i--) {
    double v = b[i];
    for (int k = i + 1; k < n; k++) v -= l[k * n + i] * b[k];
    b[i] = v / l[i * n + i];
  }
}

/* Cyclic Jacobi: a (n x n, symmetric) becomes diagonal (its eigenvalues on
** the diagonal, copied to ev) and v collects the rotations (columns are the
** eigenvectors).  Quadratic convergence: a handful of sweeps. */
static void jacobi_eigen(int n, double *a, double *v, double *ev) {
  memset(v, 0, (size_t)n * n * sizeof(double));
  for (int i = 0; i < n; i++) v[i * n + i] = 1;
  for (int sweep = 0; sweep < 60; sweep++) {
    double off = 0, diag = 0;
    for (int i = 0; i < n; i++) {
      diag += a[i * n + i] * a[i * n + i];
      for (int j = i + 1; j < n; j++) off += a[i * n + j] * a[i * n + j];
    }
    if (!(off > 1e-34 * diag)) break;
    for (int p = 0; p < n; p++)
      for (int r = p + 1; r < n; r++) {
        double apr = a[p * n + r];
        if (apr == 0) continue;
        double theta = (a[r * n + r] - a[p * n + p]) / (2 * apr);
        double t = (theta >= 0 ? 1 : -1) / (fabs(theta) + sqrt(theta * theta + 1));
        double c = 1 / sqrt(t * t + 1), s = t * c;
        for (int k = 0; k < n; k++) { /* columns p and r */
          double akp = a[k * n + p], akr = a[k * n + r];
          a[k * n + p] = c * akp - s * akr;
          a[k * n + r] = s * akp + c * akr;
        }
        for (int k = 0; k < n; k++) { /* rows p and r */
          double apk = a[p * n + k], ark = a[r * n + k];
          a[p * n + k] = c * apk - s * ark;
          a[r * n + k] = s * apk + c * ark;
        }
        for (int k = 0; k < n; k++) {
          double vkp = v[k * n + p], vkr = v[k * n + r];
          v[k * n + p] = c * vkp - s * vkr;
          v[k * n + r] = s * vkp + c * vkr;
        }
      }
  }
  for (int i = 0; i < n; i++) ev[i] = a[i * n + i];
}

/* The dense route: M = LLᵀ, W = L⁻¹Gᵀ, S = WWᵀ diagonalized. */
static int dense_factor(ConstraintSolver *s, const double *M, const double *G) {
  int nq = s->nq, nc = s->nc;
  memcpy(s->L, M, (size_t)nq * nq * sizeof(double));
  if (cholesky(nq, s->L) != 0) return EOM_EMASS;
  memcpy(s->G, G, (size_t)nc * nq * sizeof(double));
  for (int k = 0; k < nc; k++) { /* row k of W = L⁻¹ (row k of G) */
    memcpy(s->W + (size_t)k * nq, G + (size_t)k * nq, (size_t)nq * sizeof(double));
    forward(nq, s->L, s->W + (size_t)k * nq);
  }
  for (int a = 0; a < nc; a++) /* S = W Wᵀ = G M⁻¹ Gᵀ */
    for (int b = 0; b <= a; b++) {
      double v = 0;
      for (int i = 0; i < nq; i++) v += s->W[a * nq + i] * s->W[b * nq + i];
      s->S[a * nc + b] = s->S[b * nc + a] = v;
    }
  /* The rows keep their own size: scaling them to unit size would hide the
  ** commonest singular position, a row of G that shrinks to zero (a
  ** parallelogram's links all aligned), as a well-conditioned one. */
  for (int k = 0; k < nc; k++)
    if (!isfinite(s->S[k * nc + k])) return EOM_ESINGULAR;
  jacobi_eigen(nc, s->S, s->V, s->ev);
  double top = 0;
  for (int k = 0; k < nc; k++) top = fmax(top, s->ev[k]);
  s->rank = 0;
  for (int k = 0; k < nc; k++) {
    if (top > 0 && s->ev[k] > RANK_TOL * top) s->rank++;
    else s->ev[k] = 0; /* dropped: applied as 0 by the pseudo-inverse */
  }
  return EOM_OK;
}

int csolve_factor(ConstraintSolver *s, const double *M, const double *G) {
  s->sparse = s->mode == EOM_CSOLVE_SPARSE ||
              (s->mode == EOM_CSOLVE_AUTO && s->nc >= CSOLVE_SPARSE_ROWS);
  return s->sparse ? csparse_factor(s, M, G, RANK_TOL) : dense_factor(s, M, G);
}

void csolve_pinv(const ConstraintSolver *s, const double *r, double *mu) {
  int nc = s->nc;
  if (s->sparse) {
    csparse_pinv(s, r, mu);
    return;
  }
  for (int k = 0; k < nc; k++) { /* tmp = diag(1/ev) Vᵀ r */
    double v = 0;
    if (s->ev[k] > 0) {
      for (int i = 0; i < nc; i++) v += s->V[i * nc + k] * r[i];
      v /= s->ev[k];
    }
    s->tmp[k] = v;
  }
  for (int i = 0; i < nc; i++) { /* mu = V tmp */
    double v = 0;
    for (int k = 0; k < nc; k++) v += s->V[i * nc + k] * s->tmp[k];
    mu[i] = v;
  }
}

void csolve_mass_solve(const ConstraintSolver *s, double *b) {
  if (s->sparse) {
    csparse_mass_solve(s, b);
    return;
  }
  forward(s->nq, s->L, b);
  backward(s->nq, s->L, b);
}

void csolve_add_reaction(const ConstraintSolver *s, const double *mu, double scale, double *v) {
  int nq = s->nq, nc = s->nc;
  if (s->sparse) {
    csparse_add_reaction(s, mu, scale, v);
    return;
  }
  for (int i = 0; i < nq; i++) { /* tmp = Wᵀ mu = L⁻¹ Gᵀ mu */
    double x = 0;
    for (int k = 0; k < nc; k++) x += s->W[k * nq + i] * mu[k];
    s->tmp[i] = x;
  }
  backward(nq, s->L, s->tmp); /* M⁻¹ Gᵀ mu */
  for (int i = 0; i < nq; i++) v[i] += scale * s->tmp[i];
}

void csolve_correct(const ConstraintSolver *s, const double *r, double *mu, double *v) {
  csolve_pinv(s, r, mu);
  csolve_add_reaction(s, mu, -1.0, v);
}

int csolve_accel(ConstraintSolver *s, const double *M, const double *G, const double *f,
                 const double *gamma, double *qdd, double *lambda) {
  int nq = s->nq, nc = s->nc;
  int st = csolve_factor(s, M, G);
  if (st != EOM_OK) return st;
  memcpy(qdd, f, (size_t)nq * sizeof(double));
  csolve_mass_solve(s, qdd); /* the free acceleration M⁻¹ f */
  for (int k = 0; k < nc; k++) {
    double v = gamma[k];
    for (int i = 0; i < nq; i++) v -= G[k * nq + i] * qdd[i];
    s->rhs[k] = v;
  }
  csolve_pinv(s, s->rhs, lambda);
  csolve_add_reaction(s, lambda, 1.0, qdd);
  return EOM_OK;
}
