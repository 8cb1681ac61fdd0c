/*
** constraint_sparse.c — the sparse route of the constrained solve, for
** models with many constraint rows (long chains, rows of linkages).
**
** It computes what constraint_solve.c's dense route computes — the
** accelerations of M qdd = f + Gᵀλ, G qdd = gamma with λ = S⁺(gamma -
** G M⁻¹ f), S = G M⁻¹ Gᵀ, and the mass-orthogonal corrections through the
** same S⁺ — from the structure such models have:
**
**  - M is block diagonal once its coupled coordinates are grouped (each
**    body's coordinates couple only among themselves), so M = LLᵀ is a
**    Cholesky factorization per block and M⁻¹ Gᵀ keeps G's sparsity;
**  - S couples only rows that share a block, so in the order constraints
**    are written along a chain it is banded.  It is factored S = L D Lᵀ
**    within its profile (the envelope of each row's first nonzero), without
**    pivoting, which keeps the profile.
**
** Rank: S is positive semidefinite, so a pivot d_k that falls to a small
** fraction of the largest diagonal of S marks row k as dependent on the
** rows before it (in exact arithmetic its Schur-complement column is then
** zero too).  Dropped rows get d_k = 0; the null space of the factored S
** is spanned by z = L⁻ᵀ e_k over the dropped k, orthonormalized (modified
** Gram–Schmidt) into Z, and with P = I - Z Zᵀ the Moore–Penrose inverse is
** S⁺ = P L⁻ᵀ D⁺ L⁻¹ P (for symmetric S any generalized inverse X, S X S = S,
** gives S⁺ = P X P; Golub & Van Loan, Matrix Computations, 3rd ed., 1996,
** §5.5 for the pseudo-inverse and its projections — from memory).  So
** multipliers are the minimum-norm split, as on the dense route.  Where no
** row is dropped both routes agree to rounding; near a singular position
** they drop the nearly dependent rows by different tests (a pivot here, an
** eigenvalue there), which the projections after each step absorb.
**
** Cost per factorization: the blocks' Cholesky factors, one block solve per
** nonzero block of each row of G, S's entries (dot products over G's
** nonzeros) and O(nc b²) for a profile of half-width b, against the dense
** route's O(nq³ + nc nq² + nc³ · sweeps).
*/
#include <assert.h>
#include <math.h>
#include <string.h>

#include "integrators.h"

/* A pivot at or below this fraction of the largest diagonal of S puts its
** row off to the border (see profile_ldl).  Far above the rank threshold
** (1e-8, constraint_solve.c), so the rows kept are clearly independent;
** small enough that away from singular positions no row is put off (the
** border costs a dense eigenproblem).  Our choice. */
#define POSTPONE_TOL 1e-4

/* The integer scratch carved from the solver's work (see csolve_init). */
typedef struct Index {
  int *block_of;  /* nq: block number of each coordinate */
  int *order;     /* nq: coordinates grouped by block, increasing inside */
  int *bstart;    /* nq + 1: block b is order[bstart[b] .. bstart[b+1]) */
  int *gstart;    /* nc + 1: row k's nonzeros of G are gcol[gstart[k] ..) */
  int *gcol;      /* nc * nq */
  int *first;     /* nc: first column of row k inside S's profile */
  int *mark;      /* nq: scratch (blocks touched by a row) */
  int *put;       /* nc: the rows put off, s->nput of them, increasing */
  int *perm;      /* nc: the border's pivot order (row m of the pivoted C is put[perm[m]]) */
  int *rbstart;   /* nc + 1: row k touches blocks rblk[rbstart[k] ..) */
  int *rblk;      /* nc * nq */
  int *brstart;   /* nq + 1: block b is touched by rows brow[brstart[b] ..) */
  int *brow;      /* nc * nq */
  int *stamp;     /* nc: scratch (rows already met) */
  int *sdlo, *sdhi; /* nc each: the nonzero range of the border's row Sd[m] */
} Index;

static Index index_of(const ConstraintSolver *s) {
  int nq = s->nq, nc = s->nc;
  Index x;
  x.block_of = s->iwork;
  x.order = x.block_of + nq;
  x.bstart = x.order + nq;
  x.gstart = x.bstart + nq + 1;
  x.gcol = x.gstart + nc + 1;
  x.first = x.gcol + (size_t)nc * nq;
  x.mark = x.first + nc;
  x.put = x.mark + nq;
  x.perm = x.put + nc;
  x.rbstart = x.perm + nc;
  x.rblk = x.rbstart + nc + 1;
  x.brstart = x.rblk + (size_t)nc * nq;
  x.brow = x.brstart + nq + 1;
  x.stamp = x.brow + (size_t)nc * nq;
  x.sdlo = x.stamp + nc;
  x.sdhi = x.sdlo + nc;
  return x;
}

size_t csparse_ints(int nq, int nc) {
  return 5 * (size_t)nq + 4 + 8 * (size_t)nc + 3 * (size_t)nc * nq;
}

size_t csparse_doubles(int nc) {
  return 4 * (size_t)nc * nc + (size_t)nc;
}

/* The border's scratch after the dense layout (see csolve_init): Sd and Vd
** (nput x nc, by rows), C (nput x nput; its pivoted L D Lᵀ), D. */
typedef struct Border {
  double *Sd, *Vd, *C, *dd;
} Border;

static Border border_of(const ConstraintSolver *s) {
  size_t nc = (size_t)s->nc, d = (size_t)s->nput;
  Border b;
  b.Sd = s->dwork;
  b.Vd = b.Sd + d * nc;
  b.C = b.Vd + d * nc;
  b.dd = b.C + d * d;
  return b;
}

/* Group the coordinates into the connected blocks of M's nonzero pattern
** (union-find with path halving), numbered by their smallest coordinate. */
static void find_blocks(ConstraintSolver *s, const double *M, Index *x) {
  int nq = s->nq, *parent = x->order;
  for (int i = 0; i < nq; i++) parent[i] = i;
  for (int i = 0; i < nq; i++)
    for (int j = i + 1; j < nq; j++) {
      if (M[i * nq + j] == 0 && M[j * nq + i] == 0) continue;
      int a = i, b = j;
      while (parent[a] != a) a = parent[a] = parent[parent[a]];
      while (parent[b] != b) b = parent[b] = parent[parent[b]];
      if (a != b) parent[a > b ? a : b] = a < b ? a : b;
    }
  int nblocks = 0;
  for (int i = 0; i < nq; i++) { /* roots are the smallest members */
    int a = i;
    while (parent[a] != a) a = parent[a];
    x->block_of[i] = a == i ? nblocks++ : x->block_of[a];
  }
  memset(x->bstart, 0, (size_t)(nblocks + 1) * sizeof(int));
  for (int i = 0; i < nq; i++) x->bstart[x->block_of[i] + 1]++;
  for (int b = 0; b < nblocks; b++) x->bstart[b + 1] += x->bstart[b];
  int *fill = x->mark;
  memcpy(fill, x->bstart, (size_t)nblocks * sizeof(int));
  for (int i = 0; i < nq; i++) x->order[fill[x->block_of[i]]++] = i;
  s->nblocks = nblocks;
}

/* Cholesky of M on each block, in place in s->L at the coordinates' own
** positions; -1 when a block is not clearly positive definite. */
static int block_cholesky(ConstraintSolver *s, const double *M, const Index *x) {
  int nq = s->nq;
  double *a = s->L;
  memcpy(a, M, (size_t)nq * nq * sizeof(double));
  double big = 0;
  for (int i = 0; i < nq; i++) big = fmax(big, fabs(M[i * nq + i]));
  if (!(big > 0) || !isfinite(big)) return -1;
  for (int b = 0; b < s->nblocks; b++) {
    const int *ix = x->order + x->bstart[b];
    int n = x->bstart[b + 1] - x->bstart[b];
    for (int j = 0; j < n; j++) {
      int J = ix[j];
      double d = a[J * nq + J];
      for (int k = 0; k < j; k++) d -= a[J * nq + ix[k]] * a[J * nq + ix[k]];
      if (!(d > 1e-14 * big)) return -1;
      d = sqrt(d);
      a[J * nq + J] = d;
      for (int i = j + 1; i < n; i++) {
        int I = ix[i];
        double v = a[I * nq + J];
        for (int k = 0; k < j; k++) v -= a[I * nq + ix[k]] * a[J * nq + ix[k]];
        a[I * nq + J] = v / d;
      }
    }
  }
  return 0;
}

/* v := M⁻¹ v on block b alone. */
static void block_solve(const ConstraintSolver *s, const Index *x, int b, double *v) {
  int nq = s->nq, n = x->bstart[b + 1] - x->bstart[b];
  const int *ix = x->order + x->bstart[b];
  const double *l = s->L;
  for (int i = 0; i < n; i++) {
    double t = v[ix[i]];
    for (int k = 0; k < i; k++) t -= l[ix[i] * nq + ix[k]] * v[ix[k]];
    v[ix[i]] = t / l[ix[i] * nq + ix[i]];
  }
  for (int i = n - 1; i >= 0; i--) {
    double t = v[ix[i]];
    for (int k = i + 1; k < n; k++) t -= l[ix[k] * nq + ix[i]] * v[ix[k]];
    v[ix[i]] = t / l[ix[i] * nq + ix[i]];
  }
}

/* G's nonzeros by rows, and row k of s->W = M⁻¹ g_k (nonzero only on the
** blocks g_k touches). */
static void reactions(ConstraintSolver *s, const double *G, Index *x) {
  int nq = s->nq, nc = s->nc, nb = s->nblocks, nz = 0, nr = 0;
  memset(s->W, 0, (size_t)nc * nq * sizeof(double));
  for (int k = 0; k < nc; k++) {
    const double *g = G + (size_t)k * nq;
    double *w = s->W + (size_t)k * nq;
    x->gstart[k] = nz;
    x->rbstart[k] = nr;
    for (int b = 0; b < nb; b++) x->mark[b] = 0;
    for (int i = 0; i < nq; i++)
      if (g[i] != 0) {
        x->gcol[nz++] = i;
        w[i] = g[i];
        x->mark[x->block_of[i]] = 1;
      }
    for (int b = 0; b < nb; b++)
      if (x->mark[b]) {
        block_solve(s, x, b, w);
        x->rblk[nr++] = b;
      }
  }
  x->gstart[nc] = nz;
  x->rbstart[nc] = nr;
  /* the same incidence by blocks: the rows that touch each block */
  memset(x->brstart, 0, (size_t)(nb + 1) * sizeof(int));
  for (int p = 0; p < nr; p++) x->brstart[x->rblk[p] + 1]++;
  for (int b = 0; b < nb; b++) x->brstart[b + 1] += x->brstart[b];
  memcpy(x->mark, x->brstart, (size_t)nb * sizeof(int));
  for (int k = 0; k < nc; k++)
    for (int p = x->rbstart[k]; p < x->rbstart[k + 1]; p++) x->brow[x->mark[x->rblk[p]]++] = k;
}

/* Call visit(s, x, a, b, ctx) once for every row b that shares a block of
** M with row a (b = a included): the entries of S that can be nonzero. */
typedef void (*NeighbourFn)(ConstraintSolver *s, Index *x, int a, int b, void *ctx);

static void each_neighbour(ConstraintSolver *s, Index *x, int a, NeighbourFn visit, void *ctx) {
  for (int p = x->rbstart[a]; p < x->rbstart[a + 1]; p++) {
    int blk = x->rblk[p];
    for (int q = x->brstart[blk]; q < x->brstart[blk + 1]; q++) {
      int b = x->brow[q];
      if (x->stamp[b] == a) continue;
      x->stamp[b] = a;
      visit(s, x, a, b, ctx);
    }
  }
}

/* Entry (a, b) of S = G M⁻¹ Gᵀ: g_a · (M⁻¹ g_b), over g_a's nonzeros. */
static double s_entry(const ConstraintSolver *s, const Index *x, int a, int b) {
  const double *w = s->W + (size_t)b * s->nq, *g = s->G + (size_t)a * s->nq;
  double v = 0;
  for (int p = x->gstart[a]; p < x->gstart[a + 1]; p++) v += g[x->gcol[p]] * w[x->gcol[p]];
  return v;
}

/* Entry (a, b) of S into its lower triangle when b <= a, widening a's profile. */
static void schur_entry(ConstraintSolver *s, Index *x, int a, int b, void *ctx) {
  (void)ctx;
  if (b > a) return;
  double v = s_entry(s, x, a, b);
  s->S[a * s->nc + b] = v;
  if (v != 0 && b < x->first[a]) x->first[a] = b;
}

/* S = G M⁻¹ Gᵀ into the lower triangle of s->S (zero where rows share no
** block of M), and each row's profile. */
static void schur(ConstraintSolver *s, Index *x) {
  int nc = s->nc;
  memset(s->S, 0, (size_t)nc * nc * sizeof(double));
  for (int a = 0; a < nc; a++) x->stamp[a] = -1;
  for (int a = 0; a < nc; a++) {
    x->first[a] = a;
    each_neighbour(s, x, a, schur_entry, NULL);
  }
}

/* S_BB = L D Lᵀ within the profile, over the rows B that are not put off
** (L unit lower, in S's strict lower triangle; D in s->ev).  A row whose
** pivot falls to POSTPONE_TOL of the largest diagonal of S is put off (its
** d, row and column of L zero), so every pivot kept is well above the rank
** threshold.  Dropping such a row outright would be wrong: its column of
** the Schur complement can still be of the size of the square root of its
** pivot and change the later pivots by O(1) (a row of G shrinking to zero
** at a singular position); the rows put off are handled together,
** exactly, by their Schur complement (border below). */
static void profile_ldl(ConstraintSolver *s, const Index *x, double top) {
  int nc = s->nc;
  double *a = s->S, *d = s->ev;
  s->nput = 0;
  for (int i = 0; i < nc; i++) {
    int fi = x->first[i];
    for (int j = fi; j < i; j++) {
      if (d[j] == 0) {
        a[i * nc + j] = 0;
        continue;
      }
      int lo = fi > x->first[j] ? fi : x->first[j];
      double v = a[i * nc + j];
      for (int k = lo; k < j; k++) v -= a[i * nc + k] * d[k] * a[j * nc + k];
      a[i * nc + j] = v / d[j];
    }
    double v = a[i * nc + i];
    for (int k = fi; k < i; k++) v -= a[i * nc + k] * a[i * nc + k] * d[k];
    if (top > 0 && v > POSTPONE_TOL * top) {
      d[i] = v;
    } else {
      d[i] = 0;
      for (int j = fi; j < i; j++) a[i * nc + j] = 0;
      x->put[s->nput++] = i;
    }
  }
}

/* v := L⁻¹ v and v := L⁻ᵀ v with the unit lower factor in S's profile. */
static void unit_forward(const ConstraintSolver *s, const Index *x, double *v) {
  int nc = s->nc;
  for (int i = 0; i < nc; i++)
    for (int k = x->first[i]; k < i; k++) v[i] -= s->S[i * nc + k] * v[k];
}

static void unit_backward(const ConstraintSolver *s, const Index *x, double *v) {
  int nc = s->nc;
  for (int i = nc - 1; i >= 0; i--)
    for (int k = x->first[i]; k < i; k++) v[k] -= s->S[i * nc + k] * v[i];
}

/* v := S_BB⁻¹ v over the rows kept; v must be 0 in the rows put off, and
** stays so (their rows and columns of L are zero, their d is 0). */
static void solve_kept(const ConstraintSolver *s, const Index *x, double *v) {
  unit_forward(s, x, v);
  for (int k = 0; k < s->nc; k++) v[k] = s->ev[k] != 0 ? v[k] / s->ev[k] : 0;
  unit_backward(s, x, v);
}

/* Swap rows and columns i and j of the symmetric n x n matrix a. */
static void swap_sym(int n, double *a, int i, int j) {
  for (int k = 0; k < n; k++) {
    double t = a[i * n + k];
    a[i * n + k] = a[j * n + k];
    a[j * n + k] = t;
  }
  for (int k = 0; k < n; k++) {
    double t = a[k * n + i];
    a[k * n + i] = a[k * n + j];
    a[k * n + j] = t;
  }
}

/* C = Pᵀ L D Lᵀ P with diagonal pivoting (the largest remaining diagonal
** first), stopped when every remaining diagonal of the Schur complement is
** at or below drop: the rest is dropped, off by at most its trace
** (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., 2002,
** §10.3, Cholesky with complete pivoting for semidefinite matrices — from
** memory).  L in the strict lower triangle of c, D in dd, the order in
** perm.  Returns the rank. */
static int pivoted_ldl(int n, double *c, double *dd, int *perm, double drop) {
  for (int i = 0; i < n; i++) perm[i] = i;
  for (int k = 0; k < n; k++) {
    int p = k;
    for (int i = k + 1; i < n; i++)
      if (c[i * n + i] > c[p * n + p]) p = i;
    if (!(c[p * n + p] > drop)) {
      for (int i = k; i < n; i++) dd[i] = 0;
      return k;
    }
    if (p != k) {
      swap_sym(n, c, k, p);
      int t = perm[k];
      perm[k] = perm[p];
      perm[p] = t;
    }
    double d = dd[k] = c[k * n + k];
    for (int i = k + 1; i < n; i++) c[i * n + k] /= d;
    for (int i = k + 1; i < n; i++)
      for (int j = k + 1; j < n; j++) c[i * n + j] -= c[i * n + k] * d * c[j * n + k];
  }
  return n;
}

/* Entry S_jp (p = put[m]) of the border's row Sd[m] for a kept row j. */
typedef struct BorderRow {
  int m;
  double *sd;
} BorderRow;

static void border_entry(ConstraintSolver *s, Index *x, int p, int j, void *ctx) {
  BorderRow *row = ctx;
  if (s->ev[j] == 0) return; /* put off (p itself among them) */
  row->sd[j] = s_entry(s, x, j, p);
  if (j < x->sdlo[row->m]) x->sdlo[row->m] = j;
  if (j > x->sdhi[row->m]) x->sdhi[row->m] = j;
}

/* The rows put off, D, as a border of the kept ones, B:
** S = [S_BB S_BD; S_DB S_DD] = Lb diag(S_BB, C) Lbᵀ with
** Lb = [I 0; S_DB S_BB⁻¹ I] and C = S_DD - S_DB S_BB⁻¹ S_BD.  Row m of Sd
** is column D[m] of S on B, row m of Vd is S_BB⁻¹ of it; C is factored
** with pivoting, and what is left of it below tol * top is dropped (the
** threshold the dense route applies to S's eigenvalues).  Returns the
** rank. */
static int border(ConstraintSolver *s, Index *x, double tol, double top) {
  int nc = s->nc, d = s->nput;
  Border b = border_of(s);
  for (int j = 0; j < nc; j++) x->stamp[j] = -1;
  for (int m = 0; m < d; m++) {
    double *sd = b.Sd + (size_t)m * nc, *vd = b.Vd + (size_t)m * nc;
    memset(sd, 0, (size_t)nc * sizeof(double));
    BorderRow row = {m, sd};
    x->sdlo[m] = nc, x->sdhi[m] = -1;
    each_neighbour(s, x, x->put[m], border_entry, &row);
    memcpy(vd, sd, (size_t)nc * sizeof(double));
    solve_kept(s, x, vd);
  }
  for (int m = 0; m < d; m++)
    for (int n = 0; n <= m; n++) {
      double v = s_entry(s, x, x->put[m], x->put[n]);
      const double *sd = b.Sd + (size_t)m * nc, *vd = b.Vd + (size_t)n * nc;
      for (int j = x->sdlo[m]; j <= x->sdhi[m]; j++) v -= sd[j] * vd[j];
      b.C[m * d + n] = b.C[n * d + m] = v;
    }
  s->crank = d > 0 ? pivoted_ldl(d, b.C, b.dd, x->perm, top > 0 ? tol * top : 0) : 0;
  return nc - d + s->crank;
}

/* v := the basic solution of C̃ v = v (in place, d entries): with
** u = P v, u_1 = L11⁻ᵀ D1⁻¹ L11⁻¹ u_1 over the first crank pivots, u_2 = 0. */
static void border_solve(const ConstraintSolver *s, const Index *x, double *v, double *u) {
  int d = s->nput, r = s->crank;
  Border b = border_of(s);
  for (int i = 0; i < d; i++) u[i] = v[x->perm[i]];
  for (int i = 0; i < r; i++)
    for (int j = 0; j < i; j++) u[i] -= b.C[i * d + j] * u[j];
  for (int i = 0; i < r; i++) u[i] /= b.dd[i];
  for (int i = r - 1; i >= 0; i--)
    for (int j = i + 1; j < r; j++) u[i] -= b.C[j * d + i] * u[j];
  for (int i = r; i < d; i++) u[i] = 0;
  for (int i = 0; i < d; i++) v[x->perm[i]] = u[i];
}

/* The null space of the factored S as orthonormal columns of s->V
** (s->nnull of them): for each dropped pivot m of C, e = Pᵀ [-L11⁻ᵀ l; 1]
** with l row m of L21 (a null vector of C̃), and z = Lb⁻ᵀ [0; e] =
** [-Vdᵀ e; e]; then modified Gram–Schmidt. */
static void null_space(ConstraintSolver *s, const Index *x) {
  int nc = s->nc, d = s->nput, r = s->crank, m = 0;
  Border b = border_of(s);
  double *e = s->tmp, *u = s->rhs; /* d <= nc each */
  for (int k = r; k < d; k++) {
    for (int i = 0; i < d; i++) u[i] = 0;
    u[k] = 1;
    for (int i = 0; i < r; i++) u[i] = -b.C[k * d + i];
    for (int i = r - 1; i >= 0; i--)
      for (int j = i + 1; j < r; j++) u[i] -= b.C[j * d + i] * u[j];
    for (int i = 0; i < d; i++) e[x->perm[i]] = u[i];
    double *z = s->V + (size_t)m * nc;
    memset(z, 0, (size_t)nc * sizeof(double));
    for (int j = 0; j < d; j++) {
      if (e[j] == 0) continue; /* e is a unit vector where C is dropped whole */
      const double *vd = b.Vd + (size_t)j * nc;
      for (int i = 0; i < nc; i++) z[i] -= e[j] * vd[i];
      z[x->put[j]] += e[j];
    }
    for (int j = 0; j < m; j++) {
      const double *q = s->V + (size_t)j * nc;
      double dot = 0;
      for (int i = 0; i < nc; i++) dot += q[i] * z[i];
      for (int i = 0; i < nc; i++) z[i] -= dot * q[i];
    }
    double norm = 0;
    for (int i = 0; i < nc; i++) norm += z[i] * z[i];
    norm = sqrt(norm);
    assert(norm > 0); /* independent: each has its own 1 among the rows put off */
    for (int i = 0; i < nc; i++) z[i] /= norm;
    m++;
  }
  s->nnull = m;
}

/* v := (I - Z Zᵀ) v */
static void remove_null(const ConstraintSolver *s, double *v) {
  int nc = s->nc;
  for (int j = 0; j < s->nnull; j++) {
    const double *q = s->V + (size_t)j * nc;
    double dot = 0;
    for (int i = 0; i < nc; i++) dot += q[i] * v[i];
    for (int i = 0; i < nc; i++) v[i] -= dot * q[i];
  }
}

int csparse_factor(ConstraintSolver *s, const double *M, const double *G, double tol) {
  int nq = s->nq, nc = s->nc;
  Index x = index_of(s);
  find_blocks(s, M, &x);
  if (block_cholesky(s, M, &x) != 0) return EOM_EMASS;
  memcpy(s->G, G, (size_t)nc * nq * sizeof(double));
  reactions(s, G, &x);
  schur(s, &x);
  double top = 0;
  for (int k = 0; k < nc; k++) {
    if (!isfinite(s->S[k * nc + k])) return EOM_ESINGULAR;
    top = fmax(top, s->S[k * nc + k]);
  }
  profile_ldl(s, &x, top);
  s->rank = border(s, &x, tol, top);
  null_space(s, &x);
  return EOM_OK;
}

/* mu = P X P r with X = Lb⁻ᵀ diag(S_BB⁻¹, C⁺) Lb⁻¹ (see border):
** w = S_BB⁻¹ r_B, t = r_D - S_DB w, c = C̃⁻ t (border_solve),
** X r = [w - Vdᵀ c; c]. */
void csparse_pinv(const ConstraintSolver *s, const double *r, double *mu) {
  int nc = s->nc, d = s->nput;
  Index x = index_of(s);
  Border b = border_of(s);
  double *t = s->tmp, *c = s->rhs; /* d <= nc each */
  memcpy(mu, r, (size_t)nc * sizeof(double));
  remove_null(s, mu);
  for (int m = 0; m < d; m++) {
    t[m] = mu[x.put[m]];
    mu[x.put[m]] = 0;
  }
  solve_kept(s, &x, mu);
  for (int m = 0; m < d; m++) {
    const double *sd = b.Sd + (size_t)m * nc;
    for (int j = x.sdlo[m]; j <= x.sdhi[m]; j++) t[m] -= sd[j] * mu[j];
  }
  border_solve(s, &x, t, c);
  for (int m = 0; m < d; m++) {
    const double *vd = b.Vd + (size_t)m * nc;
    for (int j = 0; j < nc; j++) mu[j] -= vd[j] * t[m];
    mu[x.put[m]] = t[m];
  }
  remove_null(s, mu);
}

void csparse_mass_solve(const ConstraintSolver *s, double *b) {
  Index x = index_of(s);
  for (int k = 0; k < s->nblocks; k++) block_solve(s, &x, k, b);
}

void csparse_add_reaction(const ConstraintSolver *s, const double *mu, double scale, double *v) {
  int nq = s->nq, nc = s->nc;
  for (int k = 0; k < nc; k++) {
    if (mu[k] == 0) continue;
    const double *w = s->W + (size_t)k * nq;
    double c = scale * mu[k];
    for (int i = 0; i < nq; i++) v[i] += c * w[i];
  }
}
