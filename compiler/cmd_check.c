/*
** cmd_check.c — `eomc check MODEL.eom`: parse and check a model, print a summary.
**
** Diagnostics go to stderr; the summary (coordinates, params, inputs,
** outputs, terms) goes to stdout so it can be piped or compared.
*/
#include <stdio.h>
#include <string.h>
#include "cmd.h"
#include "frontend.h"
#include "units.h"

static const char check_usage[] =
  "usage: eomc check MODEL.eom\n"
  "\n"
  "Parse and check a model (names, shapes, time rates, units) and print a\n"
  "summary: coordinates, parameters, inputs, outputs and every energy, force\n"
  "and constraint term with its line.  `-` reads the model from stdin.\n"
  "\n"
  "options:\n"
  "  -h, --help   this text\n"
  "\n"
  "exit status: 0 the model is sound (warnings may be printed), 1 errors in\n"
  "the model, 2 usage error or unreadable file\n";

/* Print a description or unit with control bytes blanked, so a string with
** escapes cannot break the layout. */
static void put_clean(const char *s, FILE *out) {
  for (; s && *s; s++) fputc((unsigned char)*s < 0x20 ? ' ' : *s, out);
}

static int name_width(Decl **v, int n) {
  int w = 4;
  for (int i = 0; i < n; i++) {
    int k = (int)strlen(v[i]->name);
    if (k > w) w = k;
  }
  return w > 24 ? 24 : w;
}

static void print_unit_desc(Arena *a, const Decl *dc, FILE *out) {
  if (dc->unit) {
    fputs("  [", out);
    put_clean(unit_text(a, dc->unit), out);
    fputs("]", out);
  }
  if (dc->desc) {
    fputs("  ", out);
    put_clean(dc->desc, out);
  }
  fputc('\n', out);
}

static void print_decls(const Model *m, const char *title, Decl **v, int n, int with_value, FILE *out) {
  if (n == 0) return;
  int w = name_width(v, n);
  fprintf(out, "%s (%d):\n", title, n);
  for (int i = 0; i < n; i++) {
    fprintf(out, "  %-*s", w, v[i]->name);
    if (with_value) fprintf(out, " = %-10.6g", v[i]->number);
    print_unit_desc(m->ast->arena, v[i], out);
  }
}

static const char *term_kind(const Stmt *s) {
  switch (s->kind) {
  case ST_FORCE_AT: return "force at a point";
  case ST_CONSTRAINT: return "constraint";
  default: return ast_stmt_keyword(s->kind);
  }
}

static void print_summary(const Model *m, const char *path, FILE *out) {
  Arena *a = m->ast->arena;
  fprintf(out, "model %s  (%s)\n", m->name, path);
  int w = name_width(m->coords, m->ncoords);
  fprintf(out, "coordinates (%d):\n", m->ncoords);
  for (int i = 0; i < m->ncoords; i++) {
    fprintf(out, "  %-*s  initial %g, rate %g", w, m->coords[i]->name, m->q0[i], m->qd0[i]);
    print_unit_desc(a, m->coords[i], out);
  }
  print_decls(m, "parameters", m->params, m->nparams, 1, out);
  print_decls(m, "constants", m->consts, m->nconsts, 1, out);
  print_decls(m, "inputs", m->inputs, m->ninputs, 0, out);
  print_decls(m, "outputs", m->outputs, m->noutputs, 0, out);
  if (m->nidentify) {
    fputs("identify:", out);
    for (int i = 0; i < m->nidentify; i++) fprintf(out, " %s", m->identify[i]->name);
    fputc('\n', out);
  }
  fprintf(out, "terms (%d):\n", m->nterms);
  for (int i = 0; i < m->nterms; i++) {
    const Stmt *s = m->terms[i];
    fprintf(out, "  line %-5d %s", s->loc.line, term_kind(s));
    if (s->kind == ST_FORCE) fprintf(out, " on %s", s->name);
    if (s->kind == ST_BODY) fprintf(out, " %s", s->decls[0]->name);
    fputc('\n', out);
  }
  if (m->nconstraints) fprintf(out, "constraint equations: %d\n", m->nconstraints);
  fprintf(out, "units: %s\n", m->has_units ? "checked" : "not checked (not every coordinate and param has one)");
}

int cmd_check(int argc, char **argv) {
  const char *path = NULL;
  for (int i = 1; i < argc; i++) {
    if (cmd_is_help(argv[i])) {
      fputs(check_usage, stdout);
      return 0;
    }
    if (argv[i][0] == '-' && argv[i][1] != '\0') {
      fprintf(stderr, "eomc check: unknown option '%s' (try 'eomc check --help')\n", argv[i]);
      return EXIT_USAGE;
    }
    if (path) {
      fprintf(stderr, "eomc check: one model file only ('%s' and '%s')\n", path, argv[i]);
      return EXIT_USAGE;
    }
    path = argv[i];
  }
  if (!path) {
    fputs(check_usage, stderr);
    return EXIT_USAGE;
  }
  Frontend fe;
  int rc = frontend_load(&fe, path);
  if (rc == 2) {
    frontend_free(&fe);
    return EXIT_USAGE;
  }
  diag_print(&fe.diag, stderr);
  if (rc == 0) print_summary(&fe.model, path, stdout);
  frontend_free(&fe);
  return rc == 0 ? 0 : EXIT_MODEL;
}
