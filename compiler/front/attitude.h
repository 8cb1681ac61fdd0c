/*
** attitude.h — constant rotations for `attitude` declarations.
**
** An `initial R = EXPR` gives any rotation expression (`rotz(0.3)*rotx(0.1)`,
** a matrix literal, a constant let); the checker evaluates it here, tests
** that it is a proper rotation and turns it into the unit quaternion the
** state stores.  Quaternions are [w, x, y, z], scalar first, and rotate body
** axes to world axes like the matrix they come from.
*/
#ifndef EOMC_ATTITUDE_H
#define EOMC_ATTITUDE_H

#include "front/ast.h"

/* Largest constant matrix evaluated (a 4x4 transform). */
#define CONST_MAT_MAX 16

typedef struct ConstMat {
  int rows, cols;
  double a[CONST_MAT_MAX];   /* row-major */
} ConstMat;

/* Value of a scalar constant expression: 1 and *v, or 0 and *bad set. */
typedef int (*ScalarEval)(const Expr *e, double *v, const Expr **bad);

/* Value of a checked constant expression of any shape up to 4x4: lists,
** constant lets, + - * / and unary minus, rotx/roty/rotz, diag, transpose,
** dh, rot, pos; scalar leaves go to `scalar`.  Returns 1, or 0 with *bad
** pointing at the first node that is not constant. */
int attitude_const_matrix(const Expr *e, ScalarEval scalar, ConstMat *out, const Expr **bad);

/* Largest entry of |R^T R - I| for a row-major 3x3 R: how far it is from
** orthonormal. */
double attitude_orthonormality_error(const double R[9]);

/* Determinant of a row-major 3x3 matrix. */
double attitude_det3(const double R[9]);

/* The unit quaternion [w, x, y, z] (w >= 0) of a rotation matrix, by the
** largest-pivot method (S. W. Shepperd, "Quaternion from rotation matrix",
** J. Guidance and Control 1(3), 1978), normalised. */
void attitude_quaternion_from_rotation(const double R[9], double q[4]);

/* The rotation matrix (row-major) of a unit quaternion [w, x, y, z]. */
void attitude_rotation_from_quaternion(const double q[4], double R[9]);

#endif
