/*
** steady.h — steady motions and their stability (`eomc modes --rate`).
**
** A steady motion: some coordinates turn at constant given rates (a
** vehicle's travel, a wheel's spin) and do not enter the dynamics; the rest
** stand still, and the positions and rates fixed by the constraints
** follow.  The state is reduced to what the dynamics depend on (reduce.h):
** the positions of the coordinates that enter them and that phi = 0 leaves
** free, and the independent rates (those the constraints on the rates do
** not fix).  The linearization of that reduced system about the steady
** motion is a constant matrix whose eigenvalues tell whether the motion is
** stable, and how fast it grows or oscillates.
*/
#ifndef EOMC_STEADY_H
#define EOMC_STEADY_H

#include <stddef.h>
#include "cli/reduce.h"
#include "eom/model.h"

typedef struct SteadyMotion {
  int nq;
  /* the reduced state z = [q_K; v_I] (the arrays are red's) */
  int nk, ni;
  int *kept;          /* nk coordinate indices whose positions are in z */
  int *independent;   /* ni coordinate indices whose rates are in z */
  int *role;          /* nq: what the analysis made of each coordinate (STEADY_*) */
  double *q, *v;      /* nq each: the steady motion found */
  int iterations;
  double residual;
  double *J;          /* nz x nz: d z'/d z there */
  double *re, *im;    /* nz eigenvalues, by growth rate, largest first */
  int unstable;       /* 1: some eigenvalue grows (beyond rounding) */
  double max_growth;  /* the largest real part */
  Reduction red;      /* the reduction, based at the steady motion */
} SteadyMotion;

/* Bit flags in SteadyMotion.role (reduce.h's). */
enum {
  STEADY_GIVEN = REDUCE_GIVEN,        /* its rate is given (--rate) */
  STEADY_ABSENT = REDUCE_ABSENT,      /* its position enters neither M, f, phi's G nor A, b */
  STEADY_DEPENDENT = REDUCE_RATE_DEP, /* its rate follows from the constraints */
  STEADY_KEPT = REDUCE_KEPT,          /* its position is part of the reduced state */
  STEADY_POS_DEP = REDUCE_POS_DEP     /* its position follows from phi = 0 */
};

/* Find the steady motion near (q, v) with the rates rate[i] of the
** coordinates flagged in given[i] held, and linearize there.  p and u as
** for the runtime (u NULL: zero inputs); prefer (NULL or nq flags): keep
** these coordinates independent where the constraints allow.  `sm` is
** reused across calls of a sweep (start from its last motion when
** warm != 0).  0, or -1 with a message in err; free with steady_free
** either way. */
int steady_analyze(const struct eom_model *m, const double *p, const double *u, const double *q,
                   const double *v, const int *given, const double *rate, const int *prefer,
                   int warm, SteadyMotion *sm, char *err, size_t errlen);
void steady_free(SteadyMotion *sm);

#endif
