/*
** emit_c.c — the C back end: P.h and P.c from an EomSystem (docs/generated-c.md).
**
** This file fixes the order of P.c and holds the entry points of emit_c.h;
** the writers of each part live beside it (emit_internal.h is the map).
*/
#include "emit/emit_c.h"
#include "emit/emit_control.h"
#include "emit/emit_attitude.h"
#include "emit/emit_internal.h"
#include "emit/emit_kinematics.h"

#include <assert.h>
#include <ctype.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "emit/fsutil.h"

static void emit_source(Emitter *E) {
  FILE *o = E->out;
  emit_banner(E, "source");
  fprintf(o, "#include <math.h>\n#include \"%s.h\"\n\n", E->P);
  emit_ldl_factor(E);
  emit_ldl_solve(E);
  emit_mass(E);
  emit_forcing(E);
  emit_accel(E);
  if (E->m->nattitudes) emit_attitude_functions(E->out, E->m, E->P);
  emit_rhs(E);
  emit_jacobian(E);
  emit_inverse(E);
  emit_energy(E);
  emit_outputs(E);
  if (E->s->ns) emit_switches(E);
  if (E->s->nc) {
    emit_constraint(E);
    emit_constraint_jacobian(E);
    emit_constraint_at(E);
  }
  if (E->s->nvc) emit_velocity_constraint(E);
  if (E->s->nc + E->s->nvc) emit_accel_constrained(E);
  if (E->s->nc) emit_constraint_gamma(E);
  if (E->s->nstops) emit_stops(E);
  PlainFunction fns[EMIT_CONTROL_MAX_FUNCTIONS];
  int nfns = emit_control_functions(E->s, fns);
  for (int k = 0; k < nfns; k++)
    emit_plain_function(E, fns[k].fname, fns[k].args, fns[k].out, fns[k].roots, fns[k].n);
  KinematicFunction *kfns = NULL;
  int nk = emit_kinematics_functions(E->m, E->s, &kfns);
  for (int k = 0; k < nk; k++)
    emit_function_outs(E, kfns[k].fname, kfns[k].args, kfns[k].outs, kfns[k].nouts);
  emit_kinematics_free(kfns, nk);
  emit_defaults(E);
  emit_descriptor(E);
}

/* ------------------------------------------------------------------ entry points */

static int is_c_identifier(const char *s) {
  if (!s || !(isalpha((unsigned char)*s) || *s == '_')) return 0;
  for (; *s; s++)
    if (!(isalnum((unsigned char)*s) || *s == '_')) return 0;
  return 1;
}

static int emit_both(const Model *m, const EomSystem *s, const EmitOptions *o, FILE *h_out,
                     FILE *c_out, char *err, size_t errlen) {
  Emitter E;
  assert(m && s && o);
  int nn = s->g.nnodes;
  memset(&E, 0, sizeof E);
  E.m = m;
  E.s = s;
  E.g = &s->g;
  E.P = o->prefix ? o->prefix : m->name;
  E.hash = o->model_hash && o->model_hash[0] ? o->model_hash : "none";
  E.no_cse = o->no_cse;
  if (!is_c_identifier(E.P)) {
    snprintf(err, errlen, "the prefix '%s' is not a C identifier", E.P ? E.P : "");
    return -1;
  }
  for (const char *h = E.hash; *h; h++)
    if (!isalnum((unsigned char)*h)) {
      snprintf(err, errlen, "the model hash must be alphanumeric");
      return -1;
    }
  if (s->nq < 1) {
    snprintf(err, errlen, "the model has no generalized coordinates");
    return -1;
  }
  assert(s->np == m->nparams && s->nu == m->ninputs && s->ny == m->ny);
  assert(s->nq == m->ncoords + 4 * m->nattitudes && s->nv == m->ncoords + 3 * m->nattitudes);
  E.uses = calloc((size_t)nn + 1, sizeof *E.uses);
  E.tempno = calloc((size_t)nn + 1, sizeof *E.tempno);
  E.size = calloc((size_t)nn + 1, sizeof *E.size);
  E.slot = calloc((size_t)s->nv * (size_t)s->nv, sizeof *E.slot);
  if (!E.uses || !E.tempno || !E.size || !E.slot) {
    fputs("eomc: out of memory\n", stderr);
    abort();
  }
  ldl_pattern(&E);
  E.out = h_out;
  emit_header(&E);
  E.out = c_out;
  emit_source(&E);
  free(E.uses);
  free(E.tempno);
  free(E.size);
  free(E.slot);
  free(E.roots);
  if (E.failed) {
    snprintf(err, errlen, "%s", E.err);
    return -1;
  }
  if (ferror(h_out) || ferror(c_out)) {
    snprintf(err, errlen, "cannot write the generated code");
    return -1;
  }
  return 0;
}

int emit_c(const Model *m, const EomSystem *s, const EmitOptions *o, FILE *h_out, FILE *c_out) {
  char err[256];
  return emit_both(m, s, o, h_out, c_out, err, sizeof err);
}

int emit_c_to_dir(const Model *m, const EomSystem *s, const EmitOptions *o, const char *dir,
                  char *err, size_t errlen) {
  return emit_c_files(m, s, o, dir, NULL, err, errlen);
}

int emit_c_files(const Model *m, const EomSystem *s, const EmitOptions *o, const char *dir,
                 int *replaced, char *err, size_t errlen) {
  char *hbuf = NULL, *cbuf = NULL;
  size_t hlen = 0, clen = 0;
  FsStaged hs = {0}, cs = {0};
  int rc = -1;
  const char *P = o->prefix ? o->prefix : m->name;
  char hname[512], cname[512];
  if (fs_check_dir(dir, err, errlen) != 0) return -1;
  if (P && strlen(P) > 200) {
    snprintf(err, errlen, "the model name is %zu characters long: too long for the file names %.20s....h/.c "
             "(at most 200; use --prefix)", strlen(P), P);
    return -1;
  }
  if (!is_c_identifier(P)) {
    snprintf(err, errlen, "the prefix '%s' is not a C identifier", P ? P : "");
    return -1;
  }
  snprintf(hname, sizeof hname, "%s.h", P);
  snprintf(cname, sizeof cname, "%s.c", P);
  FILE *hf = open_memstream(&hbuf, &hlen), *cf = open_memstream(&cbuf, &clen);
  if (!hf || !cf) {
    snprintf(err, errlen, "out of memory");
    if (hf) fclose(hf);
    if (cf) fclose(cf);
    free(hbuf);
    free(cbuf);
    return -1;
  }
  int bad = emit_both(m, s, o, hf, cf, err, errlen);
  fclose(hf);
  fclose(cf);
  if (bad) goto done;
  /* Stage both, then rename both: never a new header beside an old source. */
  if (fs_stage(&hs, dir, hname, hbuf, hlen, err, errlen) != 0) goto done;
  if (fs_stage(&cs, dir, cname, cbuf, clen, err, errlen) != 0) goto done;
  int h_changed = 0, c_changed = 0;
  if (fs_commit(&hs, &h_changed, err, errlen) != 0 || fs_commit(&cs, &c_changed, err, errlen) != 0)
    goto done;
  if (replaced) *replaced = (h_changed ? EMIT_WROTE_HEADER : 0) | (c_changed ? EMIT_WROTE_SOURCE : 0);
  rc = 0;
done:
  fs_discard(&hs);
  fs_discard(&cs);
  free(hbuf);
  free(cbuf);
  return rc;
}
