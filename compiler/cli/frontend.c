/*
** frontend.c — read, parse and check one model file.
*/
#include "cli/frontend.h"

#include <assert.h>
#include <stdio.h>
#include <string.h>
#include "cli/cmd.h"
#include "front/parse.h"

int frontend_load(Frontend *fe, const char *path) {
  memset(fe, 0, sizeof *fe);
  diag_init(&fe->diag, path, NULL, 0);
  if (source_read(&fe->src, path, &fe->diag) != 0) return 2;
  fe->diag.src = fe->src.text; /* now messages can quote their line */
  fe->diag.len = fe->src.len;
  fe->ast = parse_model(path, fe->src.text, fe->src.len, &fe->diag);
  if (fe->diag.nerrors) return 1;
  check_model(fe->ast, &fe->diag, &fe->model);
  return fe->diag.nerrors ? 1 : 0;
}

void frontend_free(Frontend *fe) {
  if (fe->ast) ast_free(fe->ast);
  diag_free(&fe->diag);
  source_free(&fe->src);
  memset(fe, 0, sizeof *fe);
}

int frontend_open(Frontend *fe, const char *path, int quiet) {
  int rc = frontend_load(fe, path);
  fe->diag.errors_only = quiet;
  diag_print(&fe->diag, stderr);
  if (rc != 0) frontend_free(fe);
  return rc == 0 ? 0 : rc == 2 ? EXIT_USAGE : EXIT_MODEL;
}

int frontend_derive(Frontend *fe, const SymOptions *so, EomSystem *sys) {
  int printed = fe->diag.nmsgs;
  memset(sys, 0, sizeof *sys);
  int failed = sym_derive(&fe->model, so, &fe->diag, sys) != 0;
  if (failed && fe->diag.nerrors == 0) {
    const SrcLoc whole = {0, 0};
    diag_error(&fe->diag, whole, "the derivation failed");
  }
  diag_print_from(&fe->diag, printed, stderr);
  return failed;
}

/* A root that is the number zero: a structural zero of the graph. */
static int is_zero_root(const EomSystem *sys, int root) {
  assert(root >= 0 && root < sys->g.nnodes);
  const IrNode *n = &sys->g.nodes[root];
  return n->op == IR_NUM && n->num == 0;
}

int frontend_check_inertia(Frontend *fe, const EomSystem *sys, DiagLevel level) {
  const Model *m = &fe->model;
  int printed = fe->diag.nmsgs, found = 0, nv = sys->nv;
  assert(sys->nq == m->ncoords + 4 * m->nattitudes && nv == m->ncoords + 3 * m->nattitudes);
  for (int i = 0; i < nv; i++) {
    if (!is_zero_root(sys, sys->mass[i * nv + i])) continue;
    found++;
    if (i < m->ncoords) {
      diag_report(&fe->diag, level, m->coords[i]->loc,
                  "coordinate '%s' has no inertia: the kinetic energy has no term in %s' (its "
                  "row of the mass matrix is zero), so its acceleration is undefined",
                  m->coords[i]->name, m->coords[i]->name);
    } else {
      const Decl *a = m->attitudes[(i - m->ncoords) / 3];
      diag_report(&fe->diag, level, a->loc,
                  "attitude '%s' has no inertia about its body axis %d: the kinetic energy has no "
                  "term in omega(%s)[%d] (its row of the mass matrix is zero), so its angular "
                  "acceleration is undefined", a->name, (i - m->ncoords) % 3 + 1, a->name,
                  (i - m->ncoords) % 3 + 1);
    }
  }
  diag_print_from(&fe->diag, printed, stderr);
  return found;
}
