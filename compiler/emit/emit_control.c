/*
** emit_control.c — write P_coriolis, P_gravity, P_momenta, P_hamiltonian and
** the constants-of-the-motion table of the descriptor.
**
** Conventions (documented in P.h as written below):
**   M(q) qdd + C(q, qd) qd + g(q) = Q - dD/dqd  (+ G^T lambda with constraints)
** where Q is the generalized force of the `force` and `torque` statements
** (inputs included) and D the Rayleigh dissipation function; the same
** equation is M qdd = f.  C is built from the Christoffel symbols of the
** first kind, so M' - 2C is skew-symmetric.  P_coriolis and P_gravity exist
** only when L = qd^T M qd / 2 - V(q) with no t or inputs in L
** (P_HAS_SPLIT 1); the momenta and the energy function always exist and take
** (q, qd, p) like P_energy (a Lagrangian with t or inputs in it makes them
** write NaN, as P_energy does).
*/
#include <assert.h>
#include "emit/emit_control.h"

/* A system built by hand (the emitter's unit tests) may lack these parts. */
static int has_split(const EomSystem *s) { return s->has_split && s->coriolis && s->gravity; }
static int has_momenta(const EomSystem *s) { return s->momenta != NULL; }
static int any_cyclic(const EomSystem *s) {
  int any = 0;
  for (int i = 0; s->cyclic && i < s->nv; i++) any |= s->cyclic[i] != 0;
  return any;
}

/* The regressor form of P_inverse for the `identify` parameters. */
static void regressor_prototypes(FILE *o, const Model *m, const EomSystem *s, const char *P) {
  fprintf(o, "\n/* Regressor form: P_inverse = Y pi + Q0, pi = the identified parameters\n"
             "** (pi[k] = p[index]), Y = dQ/dpi, Q0 = P_inverse with pi = 0. */\n");
  fprintf(o, "#define %s_NI %d   /* identified parameters */\n", P, s->ni);
  for (int k = 0; k < s->ni; k++)
    fprintf(o, "#define %s_I_%s %d   /* p[%d] */\n", P, m->params[s->identified[k]]->name, k,
            s->identified[k]);
  fprintf(o,
    "void %s_regressor(double t, const double *q, const double *qd, const double *qdd,\n"
    "  const double *p, double *Y);   /* NQ x NI */\n"
    "void %s_regressor_offset(double t, const double *q, const double *qd, const double *qdd,\n"
    "  const double *p, double *Q0);   /* NQ */\n", P, P);
}

void emit_control_prototypes(FILE *o, const Model *m, const EomSystem *s, const char *P) {
  if (s->ni > 0 && s->regressor) regressor_prototypes(o, m, s, P);
  fprintf(o, "\n/* M qdd + C qd + g = Q - dD/dqd, Q the generalized forces of the force and\n"
             "** torque statements (inputs included), D the dissipation function (with\n"
             "** constraints, + G^T lambda).  C from the Christoffel symbols of the first\n"
             "** kind: M' - 2C is skew-symmetric. */\n");
  if (has_split(s)) {
    fprintf(o, "#define %s_HAS_SPLIT 1\n", P);
    fprintf(o,
      "void %s_coriolis(const double *q, const double *qd, const double *p, double *C);   /* NQ x NQ */\n"
      "void %s_gravity(const double *q, const double *p, double *g);   /* NQ: dV/dq */\n",
      P, P);
  } else {
    if (s->split_why[0]) {
      fputs("/* No M, C, g split: ", o);
      for (const char *c = s->split_why; *c; c++) fputc(*c == '*' && c[1] == '/' ? ' ' : *c, o);
      fputs(". */\n", o);
    }
    fprintf(o, "#define %s_HAS_SPLIT 0\n", P);
  }
  if (!has_momenta(s)) return;
  fprintf(o,
    "void %s_momenta(const double *q, const double *qd, const double *p, double *pm);   /* NQ: dL/dqd */\n"
    "void %s_hamiltonian(const double *q, const double *qd, const double *p, double *h);   /* qd.dL/dqd - L */\n",
    P, P);
  fprintf(o, "#define %s_ENERGY_CONSERVED %d   /* the energy function is a constant of the motion */\n",
          P, s->energy_conserved);
  for (int i = 0; s->cyclic && i < s->nv; i++)
    if (s->cyclic[i]) fprintf(o, "#define %s_CYCLIC_%d 1   /* pm[%d] is a constant of the motion */\n", P, i, i);
}

/* Append one PlainFunction to fns[*n]. */
static void add_function(PlainFunction *fns, int *n, const char *fname, unsigned args,
                         const char *out, const int *roots, int count) {
  assert(*n < EMIT_CONTROL_MAX_FUNCTIONS && roots && count >= 1);
  fns[(*n)++] = (PlainFunction){fname, args, out, roots, count};
}

int emit_control_functions(const EomSystem *s, PlainFunction fns[EMIT_CONTROL_MAX_FUNCTIONS]) {
  int n = 0;
  if (has_split(s)) {
    add_function(fns, &n, "coriolis", EMIT_ARG_Q | EMIT_ARG_QD | EMIT_ARG_P, "C", s->coriolis,
                 s->nv * s->nv);
    add_function(fns, &n, "gravity", EMIT_ARG_Q | EMIT_ARG_P, "g", s->gravity, s->nv);
  }
  if (s->ni > 0 && s->regressor) {
    unsigned args = EMIT_ARG_T | EMIT_ARG_Q | EMIT_ARG_QD | EMIT_ARG_QDD | EMIT_ARG_P;
    add_function(fns, &n, "regressor", args, "Y", s->regressor, s->nv * s->ni);
    add_function(fns, &n, "regressor_offset", args, "Q0", s->regressor_offset, s->nv);
  }
  if (!has_momenta(s)) return n;
  add_function(fns, &n, "momenta", EMIT_ARG_Q | EMIT_ARG_QD | EMIT_ARG_P, "pm", s->momenta, s->nv);
  add_function(fns, &n, "hamiltonian", EMIT_ARG_Q | EMIT_ARG_QD | EMIT_ARG_P, "h", &s->hamiltonian, 1);
  return n;
}

void emit_control_tables(FILE *o, const EomSystem *s, const char *P) {
  if (!any_cyclic(s)) return;
  fprintf(o, "static const int %s_cyclic[%d] = {", P, s->nv);
  for (int i = 0; i < s->nv; i++) fprintf(o, "%s%d", i ? ", " : "", s->cyclic[i]);
  fputs("};\n", o);
}

void emit_control_fields(FILE *o, const EomSystem *s, const char *P) {
  if (has_split(s)) fprintf(o, "  %s_coriolis, %s_gravity,\n", P, P);
  else fputs("  0, 0,\n", o);
  if (has_momenta(s)) fprintf(o, "  %s_momenta, %s_hamiltonian,\n", P, P);
  else fputs("  0, 0,\n", o);
  if (any_cyclic(s)) fprintf(o, "  %s_cyclic,\n", P);
  else fputs("  0,\n", o);
  fprintf(o, "  %d,\n", s->energy_conserved);
}
