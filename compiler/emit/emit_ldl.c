/*
** emit_ldl.c — M q'' = f is solved by an LDLᵀ factorization unrolled for
** the model's sparsity pattern (with fill-in) into two static functions,
** P_ldl_factor and P_ldl_solve, that P_accel, P_jacobian and
** P_accel_constrained share.
*/
#include "emit/emit_internal.h"

#include <assert.h>
#include <stdio.h>

/* ------------------------------------------------------------------ the LDLᵀ pattern */

void ldl_pattern(Emitter *E) {
  int nq = E->s->nv;
  int *nz = E->slot;
  for (int i = 0; i < nq; i++)
    for (int j = 0; j < nq; j++) nz[i * nq + j] = j <= i && (i == j || !emit_is_zero(E, E->s->mass[i * nq + j]));
  /* Symbolic factorization: L_ij fills in when L_ik and L_jk are both nonzero. */
  for (int j = 0; j < nq; j++)
    for (int i = j + 1; i < nq; i++)
      for (int k = 0; k < j && !nz[i * nq + j]; k++)
        if (nz[i * nq + k] && nz[j * nq + k]) nz[i * nq + j] = 1;
  E->nslots = 0;
  for (int i = 0; i < nq; i++)
    for (int j = 0; j <= i; j++) nz[i * nq + j] = nz[i * nq + j] ? E->nslots++ : -1;
  for (int i = 0; i < nq; i++)
    for (int j = i + 1; j < nq; j++) nz[i * nq + j] = -1;
}

static int ldl_slot(const Emitter *E, int i, int j) {
  int nq = E->s->nv;
  assert(i >= 0 && j >= 0 && i < nq && j < nq);
  return i >= j ? E->slot[i * nq + j] : E->slot[j * nq + i];
}

void emit_ldl_factor(Emitter *E) {
  FILE *o = E->out;
  int nq = E->s->nv;
  fprintf(o, "/* M = L D L^T in place, for this model's sparsity pattern: a[] holds the\n"
             "** packed lower triangle of M on entry, L below the diagonal and D on it on\n"
             "** return.  Returns nonzero when a pivot is not positive and finite. */\n");
  fprintf(o, "static int %s_ldl_factor(double *a)\n{\n", E->P);
  for (int j = 0; j < nq; j++) {
    int jj = ldl_slot(E, j, j), nbelow = 0, nk = 0;
    for (int i = j + 1; i < nq; i++) nbelow += ldl_slot(E, i, j) >= 0;
    for (int k = 0; k < j; k++) nk += ldl_slot(E, j, k) >= 0;
    fprintf(o, "  {\n");
    /* w_k = L_jk D_k, shared by the pivot and the column below it. */
    for (int k = 0; k < j; k++)
      if (ldl_slot(E, j, k) >= 0) fprintf(o, "    const double w%d = a[%d]*a[%d];\n", k, ldl_slot(E, j, k), ldl_slot(E, k, k));
    if (nk) {
      fprintf(o, "    a[%d] -= ", jj);
      for (int k = 0, c = 0; k < j; k++)
        if (ldl_slot(E, j, k) >= 0) fprintf(o, "%sa[%d]*w%d", c++ ? " + " : "", ldl_slot(E, j, k), k);
      fprintf(o, ";\n");
    }
    fprintf(o, "    if (!(a[%d] > 0.0) || !isfinite(a[%d])) return 1;\n", jj, jj);
    if (nbelow) fprintf(o, "    const double r = 1.0/a[%d];\n", jj);
    for (int i = j + 1; i < nq; i++) {
      int ij = ldl_slot(E, i, j), terms = 0;
      if (ij < 0) continue;
      int stored = !emit_is_zero(E, E->s->mass[i * nq + j]);   /* else fill-in: starts at 0 */
      for (int k = 0; k < j; k++) terms += ldl_slot(E, i, k) >= 0 && ldl_slot(E, j, k) >= 0;
      if (!terms) {
        assert(stored);
        fprintf(o, "    a[%d] *= r;\n", ij);
        continue;
      }
      fprintf(o, "    a[%d] = %s", ij, stored ? "(" : "-(");
      int c = 0;
      if (stored) fprintf(o, "a[%d]", ij), c = 1;
      for (int k = 0; k < j; k++)
        if (ldl_slot(E, i, k) >= 0 && ldl_slot(E, j, k) >= 0)
          fprintf(o, "%sa[%d]*w%d", stored ? " - " : (c ? " + " : ""), ldl_slot(E, i, k), k), c++;
      fprintf(o, ")*r;\n");
    }
    fprintf(o, "  }\n");
  }
  fprintf(o, "  return 0;\n}\n\n");
}

void emit_ldl_solve(Emitter *E) {
  FILE *o = E->out;
  int nq = E->s->nv;
  fprintf(o, "/* Solve L D L^T x = b in place (b becomes x), with a[] from %s_ldl_factor. */\n", E->P);
  fprintf(o, "static void %s_ldl_solve(const double *a, double *b)\n{\n", E->P);
  for (int i = 0; i < nq; i++) {
    int first = 1;
    for (int k = 0; k < i; k++) {
      if (ldl_slot(E, i, k) < 0) continue;
      if (first) fprintf(o, "  b[%d] -= a[%d]*b[%d]", i, ldl_slot(E, i, k), k);
      else fprintf(o, " + a[%d]*b[%d]", ldl_slot(E, i, k), k);
      first = 0;
    }
    if (!first) fprintf(o, ";\n");
  }
  for (int i = 0; i < nq; i++) fprintf(o, "  b[%d] /= a[%d];\n", i, ldl_slot(E, i, i));
  for (int i = nq - 1; i >= 0; i--) {
    int first = 1;
    for (int k = i + 1; k < nq; k++) {
      if (ldl_slot(E, k, i) < 0) continue;
      if (first) fprintf(o, "  b[%d] -= a[%d]*b[%d]", i, ldl_slot(E, k, i), k);
      else fprintf(o, " + a[%d]*b[%d]", ldl_slot(E, k, i), k);
      first = 0;
    }
    if (!first) fprintf(o, ";\n");
  }
  fprintf(o, "}\n\n");
}

/* a[slot] = M_ij for every stored entry of the lower triangle (fill-in
** slots are written by the factorization itself). */
void emit_mass_slots(Emitter *E) {
  int nq = E->s->nv;
  char lhs[64];
  for (int i = 0; i < nq; i++)
    for (int j = 0; j <= i; j++) {
      int m = E->s->mass[i * nq + j];
      if (i != j && emit_is_zero(E, m)) continue;
      snprintf(lhs, sizeof lhs, "a[%d]", ldl_slot(E, i, j));
      emit_assign(E, lhs, m);
    }
}
