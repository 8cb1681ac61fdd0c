/*
** base_params.h — which combinations of the `identify` parameters the
** dynamics can reveal: the base-parameter idea of Gautier & Khalil (1990,
** IEEE Trans. Robotics and Automation 6(3)), done numerically.
**
** The regressor Y (P_inverse = Y pi + Q0) is evaluated at random states with
** the other parameters at their defaults; the columns are taken in
** declaration order and each is kept when it is independent of those kept
** before (Gram-Schmidt).  A column that is zero everywhere is a parameter
** with no effect; a dependent column j satisfies Y_j = sum_k c_jk Y_k over the
** kept columns k, so only the combinations pi_k + sum_j c_jk pi_j (the base
** parameters) are identifiable.
*/
#ifndef EOMC_BASE_PARAMS_H
#define EOMC_BASE_PARAMS_H

#include <stdio.h>
#include "front/check.h"
#include "sym/symbolic.h"

typedef struct BaseParams {
  int ni, rank;
  int *kept;       /* ni: 1 for a base column */
  int *zero;       /* ni: 1 for a column that vanishes at every sample */
  double *coef;    /* ni*ni: coef[j*ni + k] = c_jk for a dependent column j */
} BaseParams;

/* Returns 0, or -1 when out of memory.  s->ni must be > 0. */
int base_params_analyse(const Model *m, const EomSystem *s, BaseParams *b);
/* The base parameters and the unidentifiable ones, one per line after `prefix`. */
void base_params_report(const Model *m, const EomSystem *s, const BaseParams *b,
                        const char *prefix, FILE *out);
void base_params_free(BaseParams *b);

#endif
