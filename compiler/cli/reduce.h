/*
** reduce.h — the reduced state of a model with constraints, for
** `eomc linearize` and the steady motions of `eomc modes --rate`.
**
** Position constraints phi(t, q) = 0 fix some positions given the others,
** and with the velocity constraints A(t, q) q' = b(t, q) they fix some
** rates given the others.  The reduced state is
**   z = [q_K; v_I]
** with K the coordinates whose positions are free (neither fixed by
** phi = 0 nor, for a steady motion, left out) and I those whose rates are
** free.  Which coordinates depend on which is chosen by Gaussian
** elimination with pivoting on G = dphi/dq and then on [G; A] (generalized
** coordinate partitioning: Wehage and Haug, "Generalized coordinate
** partitioning for dimension reduction in analysis of constrained dynamic
** systems", J. Mech. Design 104, 1982), with the caller's preferences
** among coordinates of equal standing.  From z the full state follows:
** the dependent positions by Newton's method on phi = 0 (from the base
** point), the dependent rates from the linear constraints on the rates.
** z' = [q'_K; q''_I] then comes from the model's constrained accelerations.
**
** Indexed by coordinate: the state is x = [q; q'] with NQ entries each.
*/
#ifndef EOMC_REDUCE_H
#define EOMC_REDUCE_H

#include <stddef.h>
#include "eom/model.h"

/* Bit flags of Reduction.role. */
enum {
  REDUCE_GIVEN = 1,     /* steady motions: its rate is given, its position left out */
  REDUCE_ABSENT = 2,    /* steady motions: its position enters nothing, left out */
  REDUCE_RATE_DEP = 4,  /* its rate follows from the constraints */
  REDUCE_KEPT = 8,      /* its position is in z */
  REDUCE_POS_DEP = 16,  /* its position follows from phi = 0 */
  REDUCE_PREFER = 32    /* the caller wants it independent (chosen last as dependent) */
};

typedef struct Reduction {
  const struct eom_model *m;
  const double *p;
  double *u;             /* nu: the inputs (a copy the caller may change) */
  double t;
  int nq, nc, nvc;
  int *role;             /* nq: REDUCE_* flags */
  int npd, nd;           /* dependent positions, dependent rates (the ranks of G, [G; A]) */
  int *dep, *row;        /* nd each: the dependent coordinates and their rows of [G; A],
                            the npd of phi first (rows that depend on others are left out) */
  int nk, ni;
  int *kept;             /* nk coordinates whose positions are in z */
  int *independent;      /* ni coordinates whose rates are in z */
  double *q, *v;         /* nq each: the base point (what z leaves out) */
  double *qf, *vf;       /* nq each: the full state of the last reduce_state (vf = qf + nq) */
  double *xdot, *qdd;    /* 2 nq: [q'; q''] of the last reduce_rhs (qdd = xdot + nq) */
  double *lambda;        /* nc + nvc: scratch for multipliers */
  double *work, *acc;    /* scratch */
  int *piv, *piv2;
} Reduction;

/* Set up for model m at time t from the point (q, v) with params p and
** inputs u (NULL: zeros).  Roles start at 0: the caller may flag
** REDUCE_GIVEN, REDUCE_ABSENT and REDUCE_PREFER before reduce_choose.  0,
** or -1 (out of memory); free with reduce_free either way. */
int reduce_init(Reduction *r, const struct eom_model *m, const double *p, const double *u,
                double t, const double *q, const double *v);
void reduce_free(Reduction *r);

/* Choose the dependent coordinates at the base point and lay out z.
** Redundant constraints (rows that depend on the others there) fix
** nothing more and are left out.  0, or -1 with a message in err. */
int reduce_choose(Reduction *r, char *err, size_t errlen);

/* z at the base point. */
void reduce_point(const Reduction *r, double *z);

/* The full state (qf, vf) for z.  0, or -1 when phi = 0 cannot be met
** from the base point or the rate constraints are singular. */
int reduce_state(Reduction *r, const double *z);

/* z' at z (through reduce_state and the constrained accelerations).  0, or
** -1 when the state or the accelerations cannot be had. */
int reduce_rhs(Reduction *r, const double *z, double *zdot);

/* The linearization about z by central differences: A = dz'/dz (nz x nz),
** and when not NULL B = dz'/du (nz x nu), C = dy/dz (ny x nz), D = dy/du
** (ny x nu), y the model's outputs of the full state.  0, or -1 when the
** dynamics fail next to z. */
int reduce_linearize(Reduction *r, double *z, double *A, double *B, double *C, double *D);

/* Make the full state of z the new base point (after reduce_state). */
void reduce_rebase(Reduction *r);

/* The name of z's entry k ("q" or "q'"), into buf. */
const char *reduce_name(const Reduction *r, int k, char *buf, size_t size);

#endif
