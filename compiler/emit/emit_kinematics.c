/*
** emit_kinematics.c — the outputs' Jacobians and the frames:
** P_output_jacobian and P_output_bias for the outputs that depend on the
** coordinates and parameters only, and one P_frame_NAME per `frame` with
** its position, rotation, geometric Jacobian and bias (listed here, written
** by emit_dynamics.c), plus their prototypes and entries in the descriptor.
**
** Conventions (documented in P.h as written below): y'' = J qdd + J' qd for
** a kinematic output; a frame's J maps qd to [v; w], the world velocity of
** its origin over its world angular velocity, and J' qd is the acceleration
** of both at qdd = 0.  Models with neither get no functions and NULL fields.
*/
#include <assert.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "emit/emit_kinematics.h"
#include "front/xalloc.h"

static const char *frame_name(const Model *m, const EomSystem *s, int f) {
  assert(f >= 0 && f < s->nframes && s->frame_decl[f] < m->noutputs);
  return m->outputs[s->frame_decl[f]]->name;
}

void emit_kinematics_prototypes(FILE *o, const Model *m, const EomSystem *s, const char *P) {
  if (s->nkinematic > 0) {
    fprintf(o, "\n/* Outputs that depend on q and p only (the entries flagged 1 below):\n"
               "** J = dy/dq (NY x NQ; the rows of other outputs are NaN) and the bias\n"
               "** J' qd, so that y' = J qd and y'' = J qdd + J' qd. */\n");
    fprintf(o, "#define %s_NY_KINEMATIC %d\n", P, s->nkinematic);
    fprintf(o,
      "void %s_output_jacobian(const double *q, const double *p, double *J);   /* NY x NQ */\n"
      "void %s_output_bias(const double *q, const double *qd, const double *p, double *b);   /* NY */\n",
      P, P);
  }
  if (s->nframes == 0) return;
  fprintf(o, "\n/* Frames: the origin's position pos (3) and the rotation R (3x3, frame axes\n"
             "** to world, row-major), the geometric Jacobian J (6 x NQ: rows 0-2 the world\n"
             "** velocity of the origin, rows 3-5 the world angular velocity, [v; w] = J qd)\n"
             "** and its bias Jdv = J' qd, so that [v'; w'] = J qdd + J' qd. */\n");
  fprintf(o, "#define %s_NFRAMES %d\n", P, s->nframes);
  for (int f = 0; f < s->nframes; f++)
    fprintf(o, "#define %s_FRAME_%s %d   /* y[%d..%d] */\n", P, frame_name(m, s, f), f,
            s->frame_output[f], s->frame_output[f] + 11);
  for (int f = 0; f < s->nframes; f++)
    fprintf(o,
      "void %s_frame_%s(const double *q, const double *qd, const double *p, double *pos,\n"
      "  double *R, double *J, double *Jdv);\n", P, frame_name(m, s, f));
}

/* a followed by b, malloc'd */
static char *copy(const char *a, const char *b) {
  char *s = xmalloc(strlen(a) + strlen(b) + 1);
  strcpy(s, a);
  strcat(s, b);
  return s;
}

int emit_kinematics_functions(const Model *m, const EomSystem *s, KinematicFunction **out) {
  int nq = s->nv, n = 0;   /* Jacobians are over the velocities */
  KinematicFunction *fns = xcalloc((size_t)s->nframes + 2, sizeof *fns);
  if (s->nkinematic > 0) {
    KinematicFunction J = {copy("output_jacobian", ""), EMIT_ARG_Q | EMIT_ARG_P,
                           {{"J", s->output_jacobian, s->ny * nq}}, 1};
    KinematicFunction b = {copy("output_bias", ""), EMIT_ARG_Q | EMIT_ARG_QD | EMIT_ARG_P,
                           {{"b", s->output_bias, s->ny}}, 1};
    fns[n++] = J;
    fns[n++] = b;
  }
  for (int f = 0; f < s->nframes; f++) {
    const int *y = s->outputs + s->frame_output[f];
    KinematicFunction *k = &fns[n++];
    k->fname = copy("frame_", frame_name(m, s, f));
    k->args = EMIT_ARG_Q | EMIT_ARG_QD | EMIT_ARG_P;
    k->outs[0] = (EmitOut){"pos", y, 3};
    k->outs[1] = (EmitOut){"R", y + 3, 9};
    k->outs[2] = (EmitOut){"J", s->frame_jacobian + (size_t)f * 6 * nq, 6 * nq};
    k->outs[3] = (EmitOut){"Jdv", s->frame_bias + (size_t)f * 6, 6};
    k->nouts = 4;
  }
  *out = fns;
  return n;
}

void emit_kinematics_free(KinematicFunction *fns, int n) {
  for (int k = 0; k < n; k++) free(fns[k].fname);
  free(fns);
}

void emit_kinematics_tables(FILE *o, const Model *m, const EomSystem *s, const char *P) {
  if (s->nkinematic > 0) {
    fprintf(o, "static const int %s_output_kinematic[%d] = {", P, s->ny);
    for (int i = 0; i < s->ny; i++) fprintf(o, "%s%d", i ? ", " : "", s->output_kinematic[i]);
    fputs("};\n", o);
  }
  if (s->nframes == 0) return;
  fprintf(o, "static const char *const %s_frame_names[%d] = {", P, s->nframes);
  for (int f = 0; f < s->nframes; f++) fprintf(o, "%s\"%s\"", f ? ", " : "", frame_name(m, s, f));
  fprintf(o, "};\nstatic const int %s_frame_outputs[%d] = {", P, s->nframes);
  for (int f = 0; f < s->nframes; f++) fprintf(o, "%s%d", f ? ", " : "", s->frame_output[f]);
  fprintf(o, "};\nstatic void (*const %s_frame_functions[%d])(const double *, const double *,\n"
             "  const double *, double *, double *, double *, double *) = {", P, s->nframes);
  for (int f = 0; f < s->nframes; f++) fprintf(o, "%s%s_frame_%s", f ? ", " : "", P, frame_name(m, s, f));
  fputs("};\n", o);
}

void emit_kinematics_fields(FILE *o, const EomSystem *s, const char *P) {
  if (s->nkinematic > 0)
    fprintf(o, "  %s_output_kinematic, %s_output_jacobian, %s_output_bias,\n", P, P, P);
  else
    fputs("  0, 0, 0,\n", o);
  if (s->nframes > 0)
    fprintf(o, "  %d, %s_frame_names, %s_frame_outputs, %s_frame_functions,\n", s->nframes, P, P, P);
  else
    fputs("  0, 0, 0, 0,\n", o);
}
