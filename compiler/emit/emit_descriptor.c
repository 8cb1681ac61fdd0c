/*
** emit_descriptor.c — the end of P.c: default parameters, derived
** parameters, the initial state, and the descriptor P_model (struct
** eom_model of <eom/model.h>) with its tables of names, units and values.
*/
#include "emit/emit_internal.h"
#include "emit/emit_control.h"
#include "emit/emit_attitude.h"

#include <assert.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* C99 promises string literals of 4095 bytes only (5.2.4.1): a longer model
** string becomes a char array initialized byte by byte. */
#define MAX_STRING_LITERAL 4000

static void emit_long_string(Emitter *E, const char *ident, const char *text) {
  FILE *o = E->out;
  fprintf(o, "static const char %s[] = {", ident);
  for (size_t i = 0; text[i]; i++) fprintf(o, "%s%d", i % 20 ? ", " : (i ? ",\n  " : "\n  "), (unsigned char)text[i]);
  fputs(", 0\n};\n", o);
}

/* static const char *const P_name[n] = {texts...}; the texts are freed. */
static void emit_texts(Emitter *E, const char *name, char **texts, int n) {
  FILE *o = E->out;
  char ident[600];
  assert(n > 0);
  for (int i = 0; i < n; i++)
    if (strlen(texts[i]) > MAX_STRING_LITERAL) {
      snprintf(ident, sizeof ident, "%s_%s_%d", E->P, name, i);
      emit_long_string(E, ident, texts[i]);
    }
  fprintf(o, "static const char *const %s_%s[%d] = {", E->P, name, n);
  for (int i = 0; i < n; i++) {
    fputs(i ? ",\n  " : "\n  ", o);
    if (strlen(texts[i]) > MAX_STRING_LITERAL) fprintf(o, "%s_%s_%d", E->P, name, i);
    else put_c_string(o, texts[i]);
    free(texts[i]);
  }
  fputs("\n};\n", o);
}

/* A table of one field of each declaration: 0 name, 1 unit, 2 description. */
static void emit_string_table(Emitter *E, const char *name, Decl **ds, int n, int field) {
  if (!n) return;
  char **texts = calloc((size_t)n, sizeof *texts);
  assert(texts);
  for (int i = 0; i < n; i++) {
    Buf b = {0};
    if (field == 0) buf_put(&b, ds[i]->name);
    else if (field == 2) buf_put(&b, ds[i]->desc ? ds[i]->desc : "");
    else unit_annotation_text(&b, ds[i]->unit);
    texts[i] = b.s ? b.s : calloc(1, 1);
  }
  emit_texts(E, name, texts, n);
  free(texts);
}

/* The name of each entry of y: the output's name, or name[i] and name[i,j]
** (1-based, as the model language indexes) for a vector or matrix output. */
static void emit_output_names(Emitter *E);

/* Names, units and descriptions of the entries of q: the coordinates', then
** each attitude's quaternion entries "R.w" ... "R.z" (no unit). */
static void emit_coord_tables(Emitter *E) {
  const Model *m = E->m;
  if (!m->nattitudes) {
    emit_string_table(E, "coord_names", m->coords, m->ncoords, 0);
    emit_string_table(E, "coord_units", m->coords, m->ncoords, 1);
    emit_string_table(E, "coord_descs", m->coords, m->ncoords, 2);
    return;
  }
  static const char *const part = "wxyz";
  int nq = E->s->nq;
  for (int field = 0; field < 3; field++) {
    char **texts = calloc((size_t)nq, sizeof *texts);
    assert(texts);
    for (int i = 0; i < nq; i++) {
      Buf b = {0};
      const Decl *d = i < m->ncoords ? m->coords[i] : m->attitudes[(i - m->ncoords) / 4];
      if (field == 0 && i < m->ncoords) buf_put(&b, d->name);
      else if (field == 0) buf_printf(&b, "%s.%c", d->name, part[(i - m->ncoords) % 4]);
      else if (field == 2) buf_put(&b, d->desc ? d->desc : "");
      else if (i < m->ncoords) unit_annotation_text(&b, d->unit);
      texts[i] = b.s ? b.s : calloc(1, 1);
    }
    emit_texts(E, field == 0 ? "coord_names" : field == 1 ? "coord_units" : "coord_descs", texts, nq);
    free(texts);
  }
}

static void emit_output_names(Emitter *E) {
  const Model *m = E->m;
  if (!m->ny) return;
  char **texts = calloc((size_t)m->ny, sizeof *texts);
  int k = 0;
  assert(texts);
  for (int i = 0; i < m->noutputs; i++) {
    const Decl *d = m->outputs[i];
    int rows = d->shape.rows, cols = d->shape.cols;
    for (int r = 0; r < rows; r++)
      for (int c = 0; c < cols; c++) {
        Buf b = {0};
        int e = r * cols + c;
        if (d->frame && e < 3) buf_printf(&b, "%s.pos[%d]", d->name, e + 1);
        else if (d->frame) buf_printf(&b, "%s.rot[%d,%d]", d->name, (e - 3) / 3 + 1, (e - 3) % 3 + 1);
        else if (rows * cols == 1) buf_put(&b, d->name);
        else if (cols == 1 || rows == 1) buf_printf(&b, "%s[%d]", d->name, r * cols + c + 1);
        else buf_printf(&b, "%s[%d,%d]", d->name, r + 1, c + 1);
        assert(k < m->ny);
        texts[k++] = b.s;
      }
  }
  assert(k == m->ny);
  emit_texts(E, "output_names", texts, m->ny);
  free(texts);
}

/* "LINE:COL fn" (and "lower"/"upper" for a clamp's bounds) per switch. */
static void emit_switch_names(Emitter *E) {
  const EomSystem *s = E->s;
  if (!s->ns) return;
  char **texts = calloc((size_t)s->ns, sizeof *texts);
  assert(texts);
  for (int i = 0; i < s->ns; i++) {
    const EomSwitch *w = &s->switch_info[i];
    Buf b = {0};
    buf_printf(&b, "%d:%d %s%s", w->line, w->col, scalar_builtins[w->fn].name,
               w->part == 1 ? " lower" : w->part == 2 ? " upper" : "");
    texts[i] = b.s;
  }
  emit_texts(E, "switch_names", texts, s->ns);
  free(texts);
}

/* "LINE:COL text" per stop ("LINE:COL stop" when it has no text). */
static void emit_stop_names(Emitter *E) {
  const EomSystem *s = E->s;
  if (!s->nstops) return;
  char **texts = calloc((size_t)s->nstops, sizeof *texts);
  assert(texts);
  for (int i = 0; i < s->nstops; i++) {
    const Stmt *st = s->stop_stmt[i];
    Buf b = {0};
    buf_printf(&b, "%d:%d %s", st->loc.line, st->loc.col, st->desc ? st->desc : "stop");
    texts[i] = b.s;
  }
  emit_texts(E, "stop_names", texts, s->nstops);
  free(texts);
}

static void emit_double_table(Emitter *E, const char *name, const double *v, int n) {
  FILE *o = E->out;
  char num[64];
  if (!n) return;
  fprintf(o, "static const double %s_%s[%d] = {", E->P, name, n);
  for (int i = 0; i < n; i++) {
    format_number(E, v[i], num, sizeof num);
    fprintf(o, "%s%s", i ? ", " : "", num);
  }
  fputs("};\n", o);
}

/* Params whose default reads earlier params follow them: each is recomputed
** from the current p in declaration order (so a chain of such defaults
** works), unless given[i] says the caller set it.  Defaults are short, so
** each is written inline, in full. */
static void emit_derived_params(Emitter *E) {
  FILE *o = E->out;
  const EomSystem *s = E->s;
  fprintf(o, "void %s_derived_params(double *p, const int *given)\n{\n", E->P);
  if (!s->nderived) fputs("  (void)p;\n  (void)given;\n", o);
  for (int i = 0; i < s->np; i++) {
    int r = s->param_rule ? s->param_rule[i] : -1;  /* hand-built systems have none */
    if (r < 0) continue;
    fn_reset(E);
    add_root(E, r);
    fn_analyse(E);
    assert(!needs_missing(E, VAR_BIT(IRV_P)));
    for (int n = 0; n < E->g->nnodes; n++) E->tempno[n] = -1;
    Buf b = {0};
    put_at(E, &b, r, PREC_LOW, 0);
    fprintf(o, "  if (!given || !given[%d]) p[%d] = %s;   /* %s */\n", i, i, b.s, E->m->params[i]->name);
    free(b.s);
  }
  fputs("}\n\n", o);
}

/* q0 (nq) and v0 (nv): the coordinates' `initial` values and rates, then
** each attitude's quaternion and omega. */
static void initial_state(const Model *m, double *q0, double *v0) {
  for (int i = 0; i < m->ncoords; i++) {
    q0[i] = m->q0 ? m->q0[i] : 0.0;
    v0[i] = m->qd0 ? m->qd0[i] : 0.0;
  }
  for (int k = 0; k < m->nattitudes; k++) {
    for (int c = 0; c < 4; c++) q0[m->ncoords + 4 * k + c] = m->attitude_q0[4 * k + c];
    for (int c = 0; c < 3; c++) v0[m->ncoords + 3 * k + c] = m->omega0[3 * k + c];
  }
}

void emit_defaults(Emitter *E) {
  FILE *o = E->out;
  const Model *m = E->m;
  int nq = E->s->nq;
  char num[64];
  fprintf(o, "void %s_default_params(double *p)\n{\n", E->P);
  if (!m->nparams) fputs("  (void)p;\n", o);
  for (int i = 0; i < m->nparams; i++) {
    format_number(E, m->params[i]->number, num, sizeof num);
    fprintf(o, "  p[%d] = %s;\n", i, num);
  }
  fputs("}\n\n", o);
  emit_derived_params(E);
  fprintf(o, "void %s_initial_state(double *x)\n{\n", E->P);
  double *q0 = calloc((size_t)nq, sizeof *q0), *v0 = calloc((size_t)E->s->nv, sizeof *v0);
  assert(q0 && v0);
  initial_state(m, q0, v0);
  for (int i = 0; i < nq; i++) {
    format_number(E, q0[i], num, sizeof num);
    fprintf(o, "  x[%d] = %s;\n", i, num);
  }
  for (int i = 0; i < E->s->nv; i++) {
    format_number(E, v0[i], num, sizeof num);
    fprintf(o, "  x[%d] = %s;\n", nq + i, num);
  }
  free(q0);
  free(v0);
  fputs("}\n\n", o);
}

void emit_descriptor(Emitter *E) {
  FILE *o = E->out;
  const Model *m = E->m;
  const EomSystem *s = E->s;
  const char *P = E->P;
  double *q0 = calloc((size_t)s->nq, sizeof *q0), *qd0 = calloc((size_t)s->nv, sizeof *qd0);
  double *pd = calloc((size_t)s->np + 1, sizeof *pd);
  assert(q0 && qd0 && pd);
  initial_state(m, q0, qd0);
  for (int i = 0; i < s->np; i++) pd[i] = m->params[i]->number;
  fprintf(o, "#ifndef EOM_NO_DESCRIPTOR\n#include <eom/model.h>\n\n");
  emit_coord_tables(E);
  emit_string_table(E, "param_names", m->params, m->nparams, 0);
  emit_string_table(E, "param_units", m->params, m->nparams, 1);
  emit_string_table(E, "param_descs", m->params, m->nparams, 2);
  emit_double_table(E, "param_defaults", pd, s->np);
  emit_string_table(E, "input_names", m->inputs, m->ninputs, 0);
  emit_string_table(E, "input_units", m->inputs, m->ninputs, 1);
  emit_output_names(E);
  emit_switch_names(E);
  emit_stop_names(E);
  if (s->nstops) {
    double *bounce = calloc((size_t)s->nstops, sizeof *bounce);
    assert(bounce);
    for (int i = 0; i < s->nstops; i++) bounce[i] = s->stop_stmt[i]->bounce;
    emit_double_table(E, "stop_bounce", bounce, s->nstops);
    free(bounce);
  }
  emit_double_table(E, "q0", q0, s->nq);
  emit_double_table(E, "qd0", qd0, s->nv);
  emit_attitude_tables(o, m, P);
  emit_control_tables(o, s, P);
  emit_kinematics_tables(o, m, s, P);
  fprintf(o, "\nconst struct eom_model %s_model = {\n", P);
  fprintf(o, "  EOM_MODEL_ABI,\n  ");
  put_c_string(o, P);
  fprintf(o, ",\n  \"%s\",\n", E->hash);
  fprintf(o, "  %d, %d, %d, %d, %d,\n", s->nq, s->nu, s->np, s->ny, s->nc);
#define TABLE(name, n) fprintf(o, (n) ? "  %s_" name ",\n" : "  0,\n", P)
  TABLE("coord_names", s->nq);
  TABLE("coord_units", s->nq);
  TABLE("coord_descs", s->nq);
  TABLE("param_names", m->nparams);
  TABLE("param_units", m->nparams);
  TABLE("param_descs", m->nparams);
  TABLE("param_defaults", s->np);
  TABLE("input_names", m->ninputs);
  TABLE("input_units", m->ninputs);
  TABLE("output_names", m->ny);
  fprintf(o, "  %s_q0, %s_qd0,\n", P, P);
#undef TABLE
  fprintf(o, "  %s_mass, %s_forcing, %s_accel, %s_rhs, %s_jacobian, %s_inverse, %s_energy, %s_outputs,\n",
          P, P, P, P, P, P, P, P);
  if (s->nc)
    fprintf(o, "  %s_constraint, %s_constraint_jacobian, %s_accel_constrained,\n", P, P, P);
  else if (s->nvc)
    fprintf(o, "  0, 0, %s_accel_constrained,\n", P);
  else
    fprintf(o, "  0, 0, 0,\n");
  emit_control_fields(o, s, P);
  fprintf(o, "  %s_derived_params,\n", P);
  if (s->nc) fprintf(o, "  %s_constraint_at,\n", P);
  else fputs("  0,\n", o);
  emit_kinematics_fields(o, s, P);
  if (s->nvc) fprintf(o, "  %d, %s_velocity_constraint,\n", s->nvc, P);
  else fputs("  0, 0,\n", o);
  if (s->nc) fprintf(o, "  %s_constraint_gamma,\n", P);
  else fputs("  0,\n", o);
  if (s->ns) fprintf(o, "  %d, %s_switches, %s_switch_names,\n", s->ns, P, P);
  else fputs("  0, 0, 0,\n", o);
  emit_attitude_fields(o, m, P);
  if (s->nstops)
    fprintf(o, "  %d, %s_stops, %s_stop_names, %s_stop_bounce,\n", s->nstops, P, P, P);
  else
    fputs("  0, 0, 0, 0,\n", o);
  fprintf(o, "};\n#endif\n");
  free(q0);
  free(qd0);
  free(pd);
}
