/*
** linearize_print.h — how `eomc linearize` writes its linear model: labelled
** text, or JSON for scripts (see cmd_linearize.c).
*/
#ifndef EOMC_LINEARIZE_PRINT_H
#define EOMC_LINEARIZE_PRINT_H

#include <stdio.h>
#include "cli/reduce.h"
#include "eom/model.h"

/* The linear model and what it was computed from. */
typedef struct Linear {
  int n, nu, ny;
  double *A, *B, *C, *D;      /* n x n, n x nu, ny x n, ny x nu, row-major */
  double *Ad, *Bd;            /* A and B by differences */
  int from_jacobian;          /* A, B are the generated jacobian's */
} Linear;

/* How the point was found. */
enum { POINT_GIVEN, POINT_EQUILIBRIUM, POINT_STEADY };

typedef struct Point {
  const double *x, *u;          /* the full state [q; q'] (2 nq) and the inputs */
  int kind;                     /* POINT_* */
  long steps;                   /* Newton or Levenberg–Marquardt iterations */
  double residual;
  const Reduction *red;         /* the reduction, or NULL (state x itself) */
} Point;

/* The point, the reduction (if any) and the matrices.  xs names the full
** state's entries (2 NQ without attitudes), zs the linear model's state. */
void linearize_print_json(FILE *f, const struct eom_model *m, const Point *pt, const Linear *L,
                          const char *const *xs, const char *const *zs);
void linearize_print_text(FILE *f, const struct eom_model *m, const Point *pt, const Linear *L,
                          const char *const *xs, const char *const *zs);

#endif
