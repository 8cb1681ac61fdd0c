/*
** modal.c — solve the linearized free motion M q'' + C q' + K q = 0.
**
** Undamped with symmetric K: the generalized symmetric eigenproblem
** K v = omega^2 M v (LAPACK dsygv); a negative omega^2 is an unstable
** direction, reported with its growth rate, never as NaN.  Otherwise the
** eigenvalues s of the state matrix [[0, I], [-M⁻¹K, -M⁻¹C]] (dgeev):
** a complex pair s = -zeta omega ± i omega sqrt(1 - zeta^2) gives the
** natural frequency |s| and damping ratio -Re s / |s|.
*/
#include "cli/modal.h"

#include <assert.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* LAPACK (Fortran) entry points; trailing hidden lengths of the CHARACTER
** arguments, as gfortran passes them. */
extern void dsygv_(const int *itype, const char *jobz, const char *uplo, const int *n, double *a,
                   const int *lda, double *b, const int *ldb, double *w, double *work,
                   const int *lwork, int *info, size_t jobz_len, size_t uplo_len);
extern void dgeev_(const char *jobvl, const char *jobvr, const int *n, double *a, const int *lda,
                   double *wr, double *wi, double *vl, const int *ldvl, double *vr,
                   const int *ldvr, double *work, const int *lwork, int *info,
                   size_t jobvl_len, size_t jobvr_len);
extern void dgesv_(const int *n, const int *nrhs, double *a, const int *lda, int *ipiv,
                   double *b, const int *ldb, int *info);

static const double DEGREES_PER_RADIAN = 57.295779513082320876798154814105;

void modal_free(ModalResult *r) {
  if (!r) return;
  for (int i = 0; i < r->nmodes; i++) {
    free(r->modes[i].shape);
    free(r->modes[i].phase);
  }
  free(r->modes);
  memset(r, 0, sizeof *r);
}

static double max_abs(size_t n, const double *v) {
  double m = 0;
  for (size_t i = 0; i < n; i++) m = fmax(m, fabs(v[i]));
  return m;
}

/* Scale a real shape so its largest entry is +1. */
/* Eigenvalues this small relative to the largest are zero: K (or the state
** matrix) from finite differences carries errors near 1e-10 of its size, and
** a double zero eigenvalue of the state matrix (a free coordinate) splits by
** about the square root of rounding. */
#define NEUTRAL_UNDAMPED 1e-9
#define NEUTRAL_DAMPED 1e-7

static void normalize_real(int n, double *v) {
  int big = 0;
  for (int i = 1; i < n; i++)
    if (fabs(v[i]) > fabs(v[big]) * (1 + 1e-9)) big = i;
  double s = v[big];
  if (s == 0) return;
  for (int i = 0; i < n; i++) {
    v[i] /= s;
    if (fabs(v[i]) < 1e-13) v[i] = 0; /* print 0, not -1e-17 */
  }
}

static int mode_order(const void *a, const void *b) {
  const Mode *x = a, *y = b;
  int rx = x->kind != MODE_OSCILLATING, ry = y->kind != MODE_OSCILLATING;
  if (rx != ry) return rx - ry;
  double kx = rx ? x->rate : x->omega, ky = ry ? y->rate : y->omega;
  return (kx > ky) - (kx < ky);
}

static int undamped(int nq, const double *M, const double *K, ModalResult *out, char *err,
                    size_t errlen) {
  size_t nn = (size_t)nq * nq;
  double *a = malloc(nn * sizeof(double)), *b = malloc(nn * sizeof(double));
  double *w = malloc((size_t)nq * sizeof(double));
  int lwork = 64 * nq + 64, info = 0, itype = 1, n = nq;
  double *work = malloc((size_t)lwork * sizeof(double));
  int rc = -1;
  if (!a || !b || !w || !work) {
    snprintf(err, errlen, "out of memory");
    goto out;
  }
  /* Symmetric, so row-major equals column-major; symmetrize rounding noise. */
  for (int i = 0; i < nq; i++)
    for (int j = 0; j < nq; j++) {
      a[i * nq + j] = 0.5 * (K[i * nq + j] + K[j * nq + i]);
      b[i * nq + j] = 0.5 * (M[i * nq + j] + M[j * nq + i]);
    }
  dsygv_(&itype, "V", "U", &n, a, &n, b, &n, w, work, &lwork, &info, 1, 1);
  if (info > nq) {
    snprintf(err, errlen, "the mass matrix is not positive definite at the equilibrium");
    goto out;
  }
  if (info != 0) {
    snprintf(err, errlen, "LAPACK dsygv failed (info %d)", info);
    goto out;
  }
  double scale = fmax(max_abs((size_t)nq, w), 1e-300);
  out->modes = calloc((size_t)nq, sizeof(Mode));
  if (!out->modes) {
    snprintf(err, errlen, "out of memory");
    goto out;
  }
  out->nmodes = nq;
  for (int j = 0; j < nq; j++) {
    Mode *md = &out->modes[j];
    md->omega2 = w[j];
    md->shape = malloc((size_t)nq * sizeof(double));
    if (!md->shape) {
      snprintf(err, errlen, "out of memory");
      goto out;
    }
    for (int i = 0; i < nq; i++) md->shape[i] = a[(size_t)j * nq + i]; /* column j */
    normalize_real(nq, md->shape);
    if (fabs(w[j]) <= NEUTRAL_UNDAMPED * scale) {
      md->kind = MODE_NEUTRAL;
    } else if (w[j] > 0) {
      md->kind = MODE_OSCILLATING;
      md->omega = md->omega_d = sqrt(w[j]);
    } else {
      md->kind = MODE_UNSTABLE;
      md->rate = sqrt(-w[j]);
    }
  }
  rc = 0;
out:
  free(a);
  free(b);
  free(w);
  free(work);
  return rc;
}

static int damped(int nq, const double *M, const double *C, const double *K, ModalResult *out,
                  char *err, size_t errlen) {
  int n = 2 * nq, info = 0, nrhs = 2 * nq, lda = nq, one = 1, lwork = 8 * n + 64;
  size_t nn = (size_t)n * n;
  double *mf = malloc((size_t)nq * nq * sizeof(double));
  double *rhs = malloc((size_t)nq * n * sizeof(double)); /* column-major nq x 2nq */
  int *ipiv = malloc((size_t)nq * sizeof(int));
  double *A = malloc(nn * sizeof(double)), *wr = malloc((size_t)n * sizeof(double));
  double *wi = malloc((size_t)n * sizeof(double)), *vr = malloc(nn * sizeof(double));
  double *work = malloc((size_t)lwork * sizeof(double));
  int rc = -1;
  if (!mf || !rhs || !ipiv || !A || !wr || !wi || !vr || !work) {
    snprintf(err, errlen, "out of memory");
    goto out;
  }
  /* M⁻¹ [K C], both in column-major for LAPACK. */
  for (int i = 0; i < nq; i++)
    for (int j = 0; j < nq; j++) {
      mf[j * nq + i] = M[i * nq + j];
      rhs[(size_t)j * nq + i] = K[i * nq + j];
      rhs[(size_t)(nq + j) * nq + i] = C ? C[i * nq + j] : 0.0;
    }
  dgesv_(&lda, &nrhs, mf, &lda, ipiv, rhs, &lda, &info);
  if (info != 0) {
    snprintf(err, errlen, "the mass matrix is singular at the equilibrium");
    goto out;
  }
  /* State matrix, column-major: A(r, c) = A[c * n + r]. */
  memset(A, 0, nn * sizeof(double));
  for (int i = 0; i < nq; i++) {
    A[(size_t)(nq + i) * n + i] = 1.0;
    for (int j = 0; j < nq; j++) {
      A[(size_t)j * n + nq + i] = -rhs[(size_t)j * nq + i];
      A[(size_t)(nq + j) * n + nq + i] = -rhs[(size_t)(nq + j) * nq + i];
    }
  }
  dgeev_("N", "V", &n, A, &n, wr, wi, NULL, &one, vr, &n, work, &lwork, &info, 1, 1);
  if (info != 0) {
    snprintf(err, errlen, "LAPACK dgeev failed (info %d)", info);
    goto out;
  }
  out->modes = calloc((size_t)n, sizeof(Mode));
  if (!out->modes) {
    snprintf(err, errlen, "out of memory");
    goto out;
  }
  double scale = fmax(max_abs((size_t)n, wr), max_abs((size_t)n, wi));
  scale = fmax(scale, 1e-300);
  for (int j = 0; j < n; j++) {
    if (wi[j] < 0) continue; /* the conjugate of the previous column pair */
    Mode *md = &out->modes[out->nmodes++];
    md->shape = calloc((size_t)nq, sizeof(double));
    md->phase = calloc((size_t)nq, sizeof(double));
    if (!md->shape || !md->phase) {
      snprintf(err, errlen, "out of memory");
      goto out;
    }
    if (wi[j] > 0) {
      /* Eigenvector re + i im in columns j, j + 1; shape relative to the
      ** coordinate of largest modulus. */
      const double *re = vr + (size_t)j * n, *im = vr + (size_t)(j + 1) * n;
      int big = 0;
      for (int i = 1; i < nq; i++)
        if (hypot(re[i], im[i]) > hypot(re[big], im[big]) * (1 + 1e-9)) big = i;
      double ref_mod = hypot(re[big], im[big]), ref_arg = atan2(im[big], re[big]);
      for (int i = 0; i < nq; i++) {
        double mod = hypot(re[i], im[i]);
        md->shape[i] = ref_mod > 0 ? mod / ref_mod : 0;
        double ph = mod > 1e-13 * ref_mod ? (atan2(im[i], re[i]) - ref_arg) * DEGREES_PER_RADIAN : 0;
        while (ph > 180) ph -= 360;
        while (ph <= -180) ph += 360;
        md->phase[i] = fabs(ph) < 1e-9 ? 0 : ph;
      }
      md->omega = hypot(wr[j], wi[j]);
      md->omega_d = wi[j];
      md->zeta = -wr[j] / md->omega;
      md->kind = wr[j] > NEUTRAL_DAMPED * scale ? MODE_UNSTABLE : MODE_OSCILLATING;
      if (md->omega <= NEUTRAL_DAMPED * scale) md->kind = MODE_NEUTRAL; /* a split zero */
      md->rate = md->kind == MODE_UNSTABLE ? wr[j] : 0;
      md->omega2 = md->omega * md->omega;
      j++;
    } else {
      const double *v = vr + (size_t)j * n;
      for (int i = 0; i < nq; i++) md->shape[i] = v[i];
      normalize_real(nq, md->shape);
      if (fabs(wr[j]) <= NEUTRAL_DAMPED * scale) {
        md->kind = MODE_NEUTRAL;
      } else if (wr[j] > 0) {
        md->kind = MODE_UNSTABLE;
        md->rate = wr[j];
      } else {
        md->kind = MODE_DECAYING;
        md->rate = -wr[j];
      }
    }
  }
  rc = 0;
out:
  free(mf);
  free(rhs);
  free(ipiv);
  free(A);
  free(wr);
  free(wi);
  free(vr);
  free(work);
  return rc;
}

int modal_expand(ModalResult *r, int nq, const double *N) {
  int nr = r->nq;
  assert(nq >= nr && N);
  for (int k = 0; k < r->nmodes; k++) {
    Mode *md = &r->modes[k];
    double *re = calloc((size_t)nq, sizeof(double)), *im = calloc((size_t)nq, sizeof(double));
    double *shape = malloc((size_t)nq * sizeof(double));
    double *phase = md->phase ? malloc((size_t)nq * sizeof(double)) : NULL;
    if (!re || !im || !shape || (md->phase && !phase)) {
      free(re), free(im), free(shape), free(phase);
      return -1;
    }
    for (int i = 0; i < nq; i++)
      for (int b = 0; b < nr; b++) {
        double a = md->phase ? md->phase[b] / DEGREES_PER_RADIAN : 0;
        re[i] += N[i * nq + b] * md->shape[b] * cos(a);
        im[i] += N[i * nq + b] * md->shape[b] * sin(a);
      }
    if (!phase) {
      memcpy(shape, re, (size_t)nq * sizeof(double));
      normalize_real(nq, shape);
    } else {
      int big = 0;
      for (int i = 1; i < nq; i++)
        if (hypot(re[i], im[i]) > hypot(re[big], im[big]) * (1 + 1e-9)) big = i;
      double ref = hypot(re[big], im[big]), arg = atan2(im[big], re[big]);
      for (int i = 0; i < nq; i++) {
        double mod = hypot(re[i], im[i]);
        shape[i] = ref > 0 ? mod / ref : 0;
        double ph = mod > 1e-13 * ref ? (atan2(im[i], re[i]) - arg) * DEGREES_PER_RADIAN : 0;
        while (ph > 180) ph -= 360;
        while (ph <= -180) ph += 360;
        phase[i] = fabs(ph) < 1e-9 ? 0 : ph;
        if (shape[i] < 1e-13) shape[i] = 0;
      }
    }
    free(re), free(im);
    free(md->shape), free(md->phase);
    md->shape = shape;
    md->phase = phase;
  }
  r->nq = nq;
  return 0;
}

int modal_analyze(int nq, const double *M, const double *C, const double *K, ModalResult *out,
                  char *err, size_t errlen) {
  assert(nq > 0 && M && K && out);
  memset(out, 0, sizeof *out);
  out->nq = nq;
  size_t nn = (size_t)nq * nq;
  double kscale = max_abs(nn, K), asym = 0;
  for (int i = 0; i < nq; i++)
    for (int j = 0; j < i; j++) asym = fmax(asym, fabs(K[i * nq + j] - K[j * nq + i]));
  /* Damping or circulatory (non-symmetric) stiffness: the state-matrix route.
  ** Damping at rounding level relative to sqrt(k m) counts as none. */
  double cfloor = 1e-12 * sqrt(kscale * max_abs(nn, M));
  int has_c = C && max_abs(nn, C) > cfloor;
  out->damped = has_c || asym > 1e-9 * kscale;
  int rc = out->damped ? damped(nq, M, C, K, out, err, errlen)
                       : undamped(nq, M, K, out, err, errlen);
  if (rc == 0) qsort(out->modes, (size_t)out->nmodes, sizeof(Mode), mode_order);
  return rc;
}
