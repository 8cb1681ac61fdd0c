/*
** attitude.c — constant rotation matrices and quaternions for the checker.
**
** See attitude.h.  Only checked expressions reach here, so shapes are known
** and agree; the evaluator still refuses anything larger than 4x4.
*/
#include "front/attitude.h"

#include <assert.h>
#include <math.h>
#include <string.h>

static int is_scalar_shape(Shape s) { return s.rows == 1 && s.cols == 1; }

static void set_shape(ConstMat *m, int rows, int cols) {
  assert(rows * cols <= CONST_MAT_MAX);
  m->rows = rows;
  m->cols = cols;
  memset(m->a, 0, sizeof m->a);
}

/* rotx/roty/rotz(a) as the rest of the compiler builds them. */
static void axis_rotation(int axis, double a, ConstMat *out) {
  double c = cos(a), s = sin(a);
  int i = (axis + 1) % 3, j = (axis + 2) % 3;
  set_shape(out, 3, 3);
  out->a[axis * 3 + axis] = 1;
  out->a[i * 3 + i] = c;
  out->a[j * 3 + j] = c;
  out->a[i * 3 + j] = -s;
  out->a[j * 3 + i] = s;
}

/* The Denavit–Hartenberg transform rotz(theta) transz(d) transx(a) rotx(alpha). */
static void dh_transform(const double v[4], ConstMat *out) {
  double ct = cos(v[0]), st = sin(v[0]), ca = cos(v[3]), sa = sin(v[3]);
  const double T[16] = {ct, -st * ca, st * sa, v[2] * ct,
                        st, ct * ca,  -ct * sa, v[2] * st,
                        0,  sa,       ca,       v[1],
                        0,  0,        0,        1};
  set_shape(out, 4, 4);
  memcpy(out->a, T, sizeof T);
}

static int eval_list(const Expr *e, ScalarEval scalar, ConstMat *out, const Expr **bad) {
  if (e->shape.rows * e->shape.cols > CONST_MAT_MAX) {
    *bad = e;
    return 0;
  }
  set_shape(out, e->shape.rows, e->shape.cols);
  for (int i = 0; i < e->nargs; i++) {
    ConstMat row;
    if (!attitude_const_matrix(e->args[i], scalar, &row, bad)) return 0;
    for (int k = 0; k < row.rows * row.cols; k++) out->a[i * e->shape.cols + k] = row.a[k];
  }
  return 1;
}

static int eval_binary(const Expr *e, ScalarEval scalar, ConstMat *out, const Expr **bad) {
  ConstMat x, y;
  if (!attitude_const_matrix(e->args[0], scalar, &x, bad) ||
      !attitude_const_matrix(e->args[1], scalar, &y, bad))
    return 0;
  int xs = x.rows == 1 && x.cols == 1, ys = y.rows == 1 && y.cols == 1;
  switch (e->op) {
  case OP_ADD: case OP_SUB:
    *out = x;
    for (int k = 0; k < x.rows * x.cols; k++) out->a[k] = e->op == OP_ADD ? x.a[k] + y.a[k] : x.a[k] - y.a[k];
    return 1;
  case OP_DIV:
    *out = x;
    for (int k = 0; k < x.rows * x.cols; k++) out->a[k] = x.a[k] / y.a[0];
    return 1;
  case OP_MUL:
    if (xs || ys) {
      *out = xs ? y : x;
      double f = xs ? x.a[0] : y.a[0];
      for (int k = 0; k < out->rows * out->cols; k++) out->a[k] *= f;
      return 1;
    }
    assert(x.cols == y.rows);
    set_shape(out, x.rows, y.cols);
    for (int i = 0; i < x.rows; i++)
      for (int j = 0; j < y.cols; j++)
        for (int k = 0; k < x.cols; k++) out->a[i * y.cols + j] += x.a[i * x.cols + k] * y.a[k * y.cols + j];
    return 1;
  default: break;
  }
  *bad = e;   /* ^ has scalar operands and is handled as a scalar */
  return 0;
}

static int eval_call(const Expr *e, ScalarEval scalar, ConstMat *out, const Expr **bad) {
  const char *f = e->name;
  if (strcmp(f, "rotx") == 0 || strcmp(f, "roty") == 0 || strcmp(f, "rotz") == 0) {
    double a;
    if (!scalar(e->args[0], &a, bad)) return 0;
    axis_rotation(f[3] - 'x', a, out);
    return 1;
  }
  if (strcmp(f, "dh") == 0) {
    double v[4];
    for (int i = 0; i < 4; i++)
      if (!scalar(e->args[i], &v[i], bad)) return 0;
    dh_transform(v, out);
    return 1;
  }
  if (strcmp(f, "diag") == 0 && e->nargs <= 4) {
    set_shape(out, e->nargs, e->nargs);
    for (int i = 0; i < e->nargs; i++)
      if (!scalar(e->args[i], &out->a[i * e->nargs + i], bad)) return 0;
    return 1;
  }
  ConstMat x;
  if ((strcmp(f, "transpose") == 0 || strcmp(f, "rot") == 0 || strcmp(f, "pos") == 0) &&
      attitude_const_matrix(e->args[0], scalar, &x, bad)) {
    if (f[0] == 't') {
      set_shape(out, x.cols, x.rows);
      for (int i = 0; i < x.rows; i++)
        for (int j = 0; j < x.cols; j++) out->a[j * x.rows + i] = x.a[i * x.cols + j];
    } else if (f[0] == 'r') {
      set_shape(out, 3, 3);
      for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) out->a[i * 3 + j] = x.a[i * 4 + j];
    } else {
      set_shape(out, 3, 1);
      for (int i = 0; i < 3; i++) out->a[i] = x.a[i * 4 + 3];
    }
    return 1;
  }
  if (!*bad) *bad = e;
  return 0;
}

int attitude_const_matrix(const Expr *e, ScalarEval scalar, ConstMat *out, const Expr **bad) {
  assert(e && scalar && out && bad);
  if (is_scalar_shape(e->shape) && !(e->kind == EX_NAME && e->ref && e->ref->kind == DECL_LET)) {
    set_shape(out, 1, 1);
    return scalar(e, &out->a[0], bad);
  }
  switch (e->kind) {
  case EX_NAME:
    if (e->ref && e->ref->kind == DECL_LET && e->ref->value)
      return attitude_const_matrix(e->ref->value, scalar, out, bad);
    break;
  case EX_LIST: return eval_list(e, scalar, out, bad);
  case EX_UNARY:
    if (!attitude_const_matrix(e->args[0], scalar, out, bad)) return 0;
    for (int k = 0; k < out->rows * out->cols; k++) out->a[k] = -out->a[k];
    return 1;
  case EX_BINARY: return eval_binary(e, scalar, out, bad);
  case EX_CALL: *bad = NULL; return eval_call(e, scalar, out, bad);
  default: break;
  }
  *bad = e;
  return 0;
}

double attitude_orthonormality_error(const double R[9]) {
  double worst = 0;
  for (int i = 0; i < 3; i++)
    for (int j = 0; j < 3; j++) {
      double s = 0;
      for (int k = 0; k < 3; k++) s += R[k * 3 + i] * R[k * 3 + j];
      double err = fabs(s - (i == j ? 1.0 : 0.0));
      if (!(err <= worst)) worst = err;   /* NaN propagates */
    }
  return worst;
}

double attitude_det3(const double R[9]) {
  return R[0] * (R[4] * R[8] - R[5] * R[7]) - R[1] * (R[3] * R[8] - R[5] * R[6]) +
         R[2] * (R[3] * R[7] - R[4] * R[6]);
}

void attitude_quaternion_from_rotation(const double R[9], double q[4]) {
  double tr = R[0] + R[4] + R[8];
  /* pick the largest of 4w^2, 4x^2, 4y^2, 4z^2 as the pivot: no cancellation */
  double pivots[4] = {1 + tr, 1 + R[0] - R[4] - R[8], 1 - R[0] + R[4] - R[8], 1 - R[0] - R[4] + R[8]};
  int k = 0;
  for (int i = 1; i < 4; i++)
    if (pivots[i] > pivots[k]) k = i;
  double s = 2 * sqrt(pivots[k] > 0 ? pivots[k] : 0);   /* 4 times the pivot component */
  assert(s > 0);
  switch (k) {
  case 0: q[0] = s / 4; q[1] = (R[7] - R[5]) / s; q[2] = (R[2] - R[6]) / s; q[3] = (R[3] - R[1]) / s; break;
  case 1: q[1] = s / 4; q[0] = (R[7] - R[5]) / s; q[2] = (R[1] + R[3]) / s; q[3] = (R[2] + R[6]) / s; break;
  case 2: q[2] = s / 4; q[0] = (R[2] - R[6]) / s; q[1] = (R[1] + R[3]) / s; q[3] = (R[5] + R[7]) / s; break;
  default: q[3] = s / 4; q[0] = (R[3] - R[1]) / s; q[1] = (R[2] + R[6]) / s; q[2] = (R[5] + R[7]) / s; break;
  }
  double n = sqrt(q[0] * q[0] + q[1] * q[1] + q[2] * q[2] + q[3] * q[3]);
  double sign = q[0] < 0 ? -1 : 1;   /* q and -q are one rotation: keep w >= 0 */
  for (int i = 0; i < 4; i++) q[i] *= sign / n;
}

void attitude_rotation_from_quaternion(const double q[4], double R[9]) {
  double w = q[0], x = q[1], y = q[2], z = q[3];
  R[0] = 1 - 2 * (y * y + z * z); R[1] = 2 * (x * y - w * z);     R[2] = 2 * (x * z + w * y);
  R[3] = 2 * (x * y + w * z);     R[4] = 1 - 2 * (x * x + z * z); R[5] = 2 * (y * z - w * x);
  R[6] = 2 * (x * z - w * y);     R[7] = 2 * (y * z + w * x);     R[8] = 1 - 2 * (x * x + y * y);
}
