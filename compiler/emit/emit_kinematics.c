/*
** emit_kinematics.c — write the outputs' Jacobians and the frames:
** P_output_jacobian and P_output_bias for the outputs that depend on the
** coordinates and parameters only, and one P_frame_NAME per `frame` with
** its position, rotation, geometric Jacobian and bias, plus their entries
** in the descriptor.
**
** Conventions (documented in P.h as written below): y'' = J qdd + J' qd for
** a kinematic output; a frame's J maps qd to [v; w], the world velocity of
** its origin over its world angular velocity, and J' qd is the acceleration
** of both at qdd = 0.  Models with neither get no functions and NULL fields.
*/
#include <assert.h>
#include <stdlib.h>
#include "emit/emit_kinematics.h"

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

void emit_kinematics_functions(struct Emitter *E, const Model *m, const EomSystem *s) {
  char fname[300];
  int nq = s->nq;
  if (s->nkinematic > 0) {
    EmitOut J = {"J", s->output_jacobian, s->ny * nq}, b = {"b", s->output_bias, s->ny};
    emit_function_outs(E, "output_jacobian", EMIT_ARG_Q | EMIT_ARG_P, &J, 1);
    emit_function_outs(E, "output_bias", EMIT_ARG_Q | EMIT_ARG_QD | EMIT_ARG_P, &b, 1);
  }
  for (int f = 0; f < s->nframes; f++) {
    const int *y = s->outputs + s->frame_output[f];
    EmitOut outs[4] = {{"pos", y, 3}, {"R", y + 3, 9},
                       {"J", s->frame_jacobian + (size_t)f * 6 * nq, 6 * nq},
                       {"Jdv", s->frame_bias + (size_t)f * 6, 6}};
    snprintf(fname, sizeof fname, "frame_%s", frame_name(m, s, f));
    emit_function_outs(E, fname, EMIT_ARG_Q | EMIT_ARG_QD | EMIT_ARG_P, outs, 4);
  }
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
