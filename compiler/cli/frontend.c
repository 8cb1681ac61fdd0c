/*
** frontend.c — read, parse and check one model file.
*/
#include "cli/frontend.h"

#include <stdio.h>
#include <string.h>
#include "cli/cmd.h"
#include "front/parse.h"

int frontend_load(Frontend *fe, const char *path) {
  char err[512];
  memset(fe, 0, sizeof *fe);
  if (source_read(&fe->src, path, err, sizeof err) != 0) {
    fprintf(stderr, "eomc: error: %s\n", err);
    return 2;
  }
  diag_init(&fe->diag, path, fe->src.text, fe->src.len);
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
  if (rc != 2) diag_print(&fe->diag, stderr);
  if (rc != 0) frontend_free(fe);
  return rc == 0 ? 0 : rc == 2 ? EXIT_USAGE : EXIT_MODEL;
}

int frontend_derive(Frontend *fe, const SymOptions *so, EomSystem *sys) {
  int printed = fe->diag.nmsgs;
  memset(sys, 0, sizeof *sys);
  int failed = sym_derive(&fe->model, so, &fe->diag, sys) != 0;
  diag_print_from(&fe->diag, printed, stderr);
  if (failed && fe->diag.nmsgs == printed)
    fprintf(stderr, "eomc: error: %s: the derivation failed\n", fe->src.path);
  return failed;
}
