/*
** base_params.c — numeric rank analysis of the regressor (see base_params.h).
*/
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "sym/base_params.h"
#include "sym/numeric.h"

/* Samples beyond the ni/nq needed for full column rank: a dependence that
** holds at this many random states holds structurally (common practice). */
#define EXTRA_SAMPLES 12
/* A column whose part independent of the kept ones is below this fraction
** of its own size is dependent. */
#define DEPENDENCE_TOL 1e-8


static double uniform(uint64_t *s) { return 2.0 * num_uniform(s) - 1.0; } /* in [-1, 1) */

/* W (rows x ni, column-major): Y stacked over random states. */
static int sample_regressor(const Model *m, const EomSystem *s, int rows, double *W) {
  int nq = s->nq, ni = s->ni;
  double t[1], *q = calloc((size_t)nq, sizeof *q), *qd = calloc((size_t)nq, sizeof *qd),
               *qdd = calloc((size_t)nq, sizeof *qdd), *u = calloc((size_t)s->nu + 1, sizeof *u),
               *p = calloc((size_t)s->np + 1, sizeof *p),
               *v = calloc((size_t)s->g.nnodes + 1, sizeof *v);
  const double *const vals[6] = {t, q, qd, qdd, u, p};
  uint64_t seed = 0x5851f42d4c957f2dULL;
  int ok = q && qd && qdd && u && p && v;
  for (int i = 0; ok && i < s->np; i++) p[i] = m->params[i]->number;
  for (int r0 = 0; ok && r0 < rows; r0 += nq) {
    t[0] = 3.0 * uniform(&seed);
    for (int i = 0; i < nq; i++) {
      q[i] = 1.5 * uniform(&seed);
      qd[i] = 2.0 * uniform(&seed);
      qdd[i] = 2.0 * uniform(&seed);
    }
    ir_eval(&s->g, s->g.nnodes - 1, vals, v);
    for (int i = 0; i < nq; i++)
      for (int k = 0; k < ni; k++) W[(size_t)k * rows + r0 + i] = v[s->regressor[i * ni + k]];
  }
  free(q), free(qd), free(qdd), free(u), free(p), free(v);
  return ok ? 0 : -1;
}

static double dot(const double *a, const double *b, int n) {
  double s = 0;
  for (int i = 0; i < n; i++) s += a[i] * b[i];
  return s;
}

int base_params_analyse(const Model *m, const EomSystem *s, BaseParams *b) {
  int ni = s->ni, nq = s->nq;
  assert(ni > 0 && s->regressor && s->identified);
  memset(b, 0, sizeof *b);
  b->ni = ni;
  int rows = nq * ((ni + nq - 1) / nq + EXTRA_SAMPLES);
  double *W = calloc((size_t)rows * ni, sizeof *W), *Q = calloc((size_t)rows * ni, sizeof *Q),
         *R = calloc((size_t)ni * ni, sizeof *R), *w = calloc((size_t)rows, sizeof *w),
         *c = calloc((size_t)ni, sizeof *c);
  int *basis = calloc((size_t)ni, sizeof *basis);
  b->kept = calloc((size_t)ni, sizeof *b->kept);
  b->zero = calloc((size_t)ni, sizeof *b->zero);
  b->coef = calloc((size_t)ni * ni, sizeof *b->coef);
  int rc = -1;
  if (!W || !Q || !R || !w || !c || !basis || !b->kept || !b->zero || !b->coef) goto done;
  if (sample_regressor(m, s, rows, W) != 0) goto done;
  double largest = 0;
  for (int j = 0; j < ni; j++) largest = fmax(largest, sqrt(dot(W + (size_t)j * rows, W + (size_t)j * rows, rows)));
  int r = 0;  /* kept so far: Q[:, 0..r) orthonormal, R r x r, column basis[k] = sum_l R[l][k] Q_l */
  for (int j = 0; j < ni; j++) {
    const double *a = W + (size_t)j * rows;
    double norm = sqrt(dot(a, a, rows));
    if (!(norm > 1e-12 * (1.0 + largest))) {
      b->zero[j] = 1;  /* NaN counts as zero: no information */
      continue;
    }
    memcpy(w, a, (size_t)rows * sizeof *w);
    for (int k = 0; k < r; k++) c[k] = 0;
    for (int pass = 0; pass < 2; pass++)  /* Gram-Schmidt twice: orthogonal to rounding */
      for (int k = 0; k < r; k++) {
        double h = dot(Q + (size_t)k * rows, w, rows);
        c[k] += h;
        for (int i = 0; i < rows; i++) w[i] -= h * Q[(size_t)k * rows + i];
      }
    double rest = sqrt(dot(w, w, rows));
    if (rest > DEPENDENCE_TOL * norm) {
      for (int i = 0; i < rows; i++) Q[(size_t)r * rows + i] = w[i] / rest;
      for (int k = 0; k < r; k++) R[k * ni + r] = c[k];
      R[r * ni + r] = rest;
      basis[r++] = j;
      b->kept[j] = 1;
      continue;
    }
    /* a = sum_k c_k Q_k: solve R x = c for a = sum_k x_k W[basis[k]] */
    for (int k = r - 1; k >= 0; k--) {
      double x = c[k];
      for (int l = k + 1; l < r; l++) x -= R[k * ni + l] * b->coef[(size_t)j * ni + basis[l]];
      b->coef[(size_t)j * ni + basis[k]] = x / R[k * ni + k];
    }
  }
  b->rank = r;
  rc = 0;
done:
  free(W), free(Q), free(R), free(w), free(c), free(basis);
  if (rc != 0) base_params_free(b);
  return rc;
}

static const char *pi_name(const Model *m, const EomSystem *s, int k) {
  return m->params[s->identified[k]]->name;
}

void base_params_report(const Model *m, const EomSystem *s, const BaseParams *b,
                        const char *prefix, FILE *out) {
  int ni = b->ni;
  fprintf(out, "%sidentify: %d parameters, %d base parameters (the identifiable combinations):\n",
          prefix, ni, b->rank);
  for (int k = 0; k < ni; k++) {
    if (!b->kept[k]) continue;
    fprintf(out, "%s  %s", prefix, pi_name(m, s, k));
    for (int j = 0; j < ni; j++) {
      double c = b->coef[(size_t)j * ni + k];
      if (b->kept[j] || b->zero[j] || fabs(c) < 1e-12) continue;
      fprintf(out, " %s %.6g*%s", c < 0 ? "-" : "+", fabs(c), pi_name(m, s, j));
    }
    fputc('\n', out);
  }
  for (int j = 0; j < ni; j++) {
    if (b->zero[j])
      fprintf(out, "%snot identifiable: %s (it has no effect on the dynamics)\n", prefix,
              pi_name(m, s, j));
    else if (!b->kept[j])
      fprintf(out, "%snot identifiable on its own: %s (only in the combinations above)\n", prefix,
              pi_name(m, s, j));
  }
}

void base_params_free(BaseParams *b) {
  free(b->kept);
  free(b->zero);
  free(b->coef);
  memset(b, 0, sizeof *b);
}
