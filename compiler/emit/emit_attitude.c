/*
** emit_attitude.c — the generated code of attitude coordinates.
**
** The kinematic map q' = N(q) v is fixed by the state's layout, so it is
** written here as text rather than derived: ordinary coordinates move with
** their rates, and each attitude's quaternion with
**   q' = q (x) [0, omega] / 2
** (scalar first; omega in body axes; J. B. Kuipers, "Quaternions and
** Rotation Sequences", 1999).  P_normalize puts each quaternion back on
** the unit sphere: the integrators of libeomrt call it after every step
** (docs/runtime.md), since q' = N(q) v keeps |q| only up to the stepping
** error.
*/
#include "emit/emit_attitude.h"

#include <assert.h>

/* First index of attitude k's quaternion in q and of its omega in v. */
static int quat_at(const Model *m, int k) { return m->ncoords + 4 * k; }
static int omega_at(const Model *m, int k) { return m->ncoords + 3 * k; }

/* A model name in a C comment: "*" followed by "/" would end it. */
static void put_comment_name(FILE *o, const char *s) {
  for (; *s; s++) {
    if (s[0] == '*' && s[1] == '/') fputs("* ", o);
    else fputc(*s, o);
  }
}

void emit_attitude_header(FILE *o, const Model *m, const char *P) {
  assert(m->nattitudes > 0);
  int nv = m->ncoords + 3 * m->nattitudes;
  fprintf(o, "#define %s_NV %d   /* velocities: the coordinates' rates, then omega of each attitude */\n",
          P, nv);
  fprintf(o, "#define %s_NATT %d   /* attitudes */\n", P, m->nattitudes);
  fprintf(o, "/*\n** attitudes: the unit quaternion [w, x, y, z] (body axes to world) in q,\n"
             "** the body-frame angular velocity omega in qd (v):\n");
  for (int k = 0; k < m->nattitudes; k++) {
    const Decl *d = m->attitudes[k];
    fprintf(o, "**   q[%d..%d], qd[%d..%d]  ", quat_at(m, k), quat_at(m, k) + 3, omega_at(m, k),
            omega_at(m, k) + 2);
    put_comment_name(o, d->name);
    if (d->desc && d->desc[0]) {
      fputs("  ", o);
      put_comment_name(o, d->desc);
    }
    fputc('\n', o);
  }
  fprintf(o, "*/\n");
  for (int k = 0; k < m->nattitudes; k++) {
    fprintf(o, "#define %s_Q_%s %d\n", P, m->attitudes[k]->name, quat_at(m, k));
    fprintf(o, "#define %s_V_%s %d\n", P, m->attitudes[k]->name, omega_at(m, k));
  }
  fputc('\n', o);
  fprintf(o,
    "/* The state is x = [q; v], NQ + NV entries: v = qd for the coordinates\n"
    "** and omega for the attitudes, and M, f, qdd, Q live in v (NV).\n"
    "** q' = N(q) v: */\n"
    "void %s_kinematics(const double *q, const double *v, double *qdot);   /* NQ */\n"
    "/* Every quaternion of q divided by its norm (integrators call it after\n"
    "** each step); returns the largest | |q| - 1 | it met. */\n"
    "double %s_normalize(double *q);\n\n", P, P);
}

void emit_attitude_functions(FILE *o, const Model *m, const char *P) {
  assert(m->nattitudes > 0);
  fprintf(o, "void %s_kinematics(const double *q, const double *v, double *qdot)\n{\n", P);
  for (int i = 0; i < m->ncoords; i++) fprintf(o, "  qdot[%d] = v[%d];\n", i, i);
  for (int k = 0; k < m->nattitudes; k++) {
    int a = quat_at(m, k), w = omega_at(m, k);
    fprintf(o, "  /* ");
    put_comment_name(o, m->attitudes[k]->name);
    fprintf(o, ": q' = q (x) [0, omega] / 2 */\n");
    fprintf(o, "  qdot[%d] = -0.5*(q[%d]*v[%d] + q[%d]*v[%d] + q[%d]*v[%d]);\n", a, a + 1, w, a + 2,
            w + 1, a + 3, w + 2);
    fprintf(o, "  qdot[%d] = 0.5*(q[%d]*v[%d] + q[%d]*v[%d] - q[%d]*v[%d]);\n", a + 1, a, w, a + 2,
            w + 2, a + 3, w + 1);
    fprintf(o, "  qdot[%d] = 0.5*(q[%d]*v[%d] + q[%d]*v[%d] - q[%d]*v[%d]);\n", a + 2, a, w + 1, a + 3,
            w, a + 1, w + 2);
    fprintf(o, "  qdot[%d] = 0.5*(q[%d]*v[%d] + q[%d]*v[%d] - q[%d]*v[%d]);\n", a + 3, a, w + 2, a + 1,
            w + 1, a + 2, w);
  }
  if (!m->ncoords && m->nattitudes == 0) fputs("  (void)q;\n  (void)v;\n  (void)qdot;\n", o);
  fputs("}\n\n", o);

  fprintf(o, "double %s_normalize(double *q)\n{\n  double worst = 0.0, n, e;\n  int k;\n", P);
  fprintf(o, "  for (k = %d; k < %d; k += 4) {\n", quat_at(m, 0), quat_at(m, m->nattitudes));
  fputs("    n = sqrt(q[k]*q[k] + q[k + 1]*q[k + 1] + q[k + 2]*q[k + 2] + q[k + 3]*q[k + 3]);\n"
        "    e = fabs(n - 1.0);\n"
        "    if (e > worst || !(e == e)) worst = e;\n"
        "    if (n > 0.0) {\n"
        "      q[k] /= n;\n      q[k + 1] /= n;\n      q[k + 2] /= n;\n      q[k + 3] /= n;\n"
        "    }\n  }\n  return worst;\n}\n\n", o);
}

void emit_attitude_jacobian_rows(FILE *o, const Model *m, int nq, int nv) {
  assert(m->nattitudes > 0 && nq == m->ncoords + 4 * m->nattitudes && nv == m->ncoords + 3 * m->nattitudes);
  int nx = nq + nv;
  if (m->ncoords)
    fprintf(o, "  for (i = 0; i < %d; i++) A[i*%d + %d + i] = 1.0;   /* d q'/d qd = I */\n", m->ncoords,
            nx, nq);
  /* q' = N(q) omega: d/dq is Omega(omega)/2, d/domega is N(q) */
  static const int dq[4][4][2] = {  /* [row][col] = {sign, omega entry}; sign 0: zero */
    {{0, 0}, {-1, 0}, {-1, 1}, {-1, 2}},
    {{1, 0}, {0, 0}, {1, 2}, {-1, 1}},
    {{1, 1}, {-1, 2}, {0, 0}, {1, 0}},
    {{1, 2}, {1, 1}, {-1, 0}, {0, 0}}};
  static const int dw[4][3][2] = {  /* [row][omega] = {sign, quaternion entry} */
    {{-1, 1}, {-1, 2}, {-1, 3}},
    {{1, 0}, {-1, 3}, {1, 2}},
    {{1, 3}, {1, 0}, {-1, 1}},
    {{-1, 2}, {1, 1}, {1, 0}}};
  for (int k = 0; k < m->nattitudes; k++) {
    int a = quat_at(m, k), w = nq + omega_at(m, k);
    fprintf(o, "  /* quaternion of attitude %d: d q'/d q and d q'/d omega */\n", k + 1);
    for (int r = 0; r < 4; r++) {
      for (int c = 0; c < 4; c++)
        if (dq[r][c][0])
          fprintf(o, "  A[%d] = %s0.5*x[%d];\n", (a + r) * nx + a + c, dq[r][c][0] < 0 ? "-" : "",
                  w + dq[r][c][1]);
      for (int c = 0; c < 3; c++)
        fprintf(o, "  A[%d] = %s0.5*x[%d];\n", (a + r) * nx + w + c, dw[r][c][0] < 0 ? "-" : "",
                a + dw[r][c][1]);
    }
  }
}

/* A C string literal of s (names are identifiers; descriptions may hold anything). */
static void put_c_text(FILE *o, const char *s) {
  fputc('"', o);
  for (; *s; s++) {
    unsigned char c = (unsigned char)*s;
    if (c == '"' || c == '\\') fprintf(o, "\\%c", c);
    else if (c < 32 || c >= 127) fprintf(o, "\\%03o", c);
    else if (c == '?' && s[1] == '?') fputs("?\"\"", o);   /* no trigraphs */
    else fputc(c, o);
  }
  fputc('"', o);
}

void emit_attitude_tables(FILE *o, const Model *m, const char *P) {
  if (!m->nattitudes) return;
  fprintf(o, "static const char *const %s_attitude_names[%d] = {", P, m->nattitudes);
  for (int k = 0; k < m->nattitudes; k++) {
    fputs(k ? ", " : "", o);
    put_c_text(o, m->attitudes[k]->name);
  }
  fputs("};\n", o);
  int nv = m->ncoords + 3 * m->nattitudes;
  fprintf(o, "static const char *const %s_rate_names[%d] = {", P, nv);
  for (int i = 0; i < m->ncoords; i++) {
    fputs(i ? ", " : "", o);
    fputc('"', o);
    fputs(m->coords[i]->name, o);
    fputs("'\"", o);
  }
  for (int k = 0; k < m->nattitudes; k++)
    for (int c = 0; c < 3; c++) fprintf(o, "%s\"omega(%s)[%d]\"", m->ncoords || k || c ? ", " : "",
                                        m->attitudes[k]->name, c + 1);
  fputs("};\n", o);
}

void emit_attitude_fields(FILE *o, const Model *m, const char *P) {
  int nv = m->ncoords + 3 * m->nattitudes;
  if (!m->nattitudes) {
    fprintf(o, "  %d, 0, 0, 0, 0, 0,\n", nv);
    return;
  }
  fprintf(o, "  %d, %d, %s_attitude_names, %s_rate_names, %s_kinematics, %s_normalize,\n", nv,
          m->nattitudes, P, P, P, P);
}
