/*
** cmd_check.c — `eomc check MODEL.eom`: parse and check a model, print a summary.
**
** Diagnostics go to stderr; the summary (coordinates, params, inputs,
** outputs, terms) goes to stdout so it can be piped or compared.
*/
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "cli/cmd.h"
#include "cli/conserved_report.h"
#include "cli/frontend.h"
#include "front/builtins.h"
#include "front/rate_degree.h"
#include "sym/symbolic.h"
#include "front/units.h"

static const char check_usage[] =
  "usage: eomc check MODEL.eom\n"
  "\n"
  "Parse and check a model (names, shapes, time rates, units) and print a\n"
  "summary: coordinates, parameters, inputs, outputs and every energy, force\n"
  "and constraint term with its line.  `-` reads the model from stdin.\n"
  "Then it derives the equations of motion and says whether the split\n"
  "M q'' + C q' + g = Q - dD/dq' exists and which quantities are conserved\n"
  "(momenta of cyclic coordinates, the energy function), and lists the\n"
  "switching functions of the branch functions (min, max, sign, ...).\n"
  "\n"
  "options:\n"
  "  --no-derive  parse and check only: skip the derivation and its report\n"
  "  -h, --help   this text\n"
  "\n"
  "exit status: 0 the model is sound (warnings may be printed), 1 errors in\n"
  "the model, 2 usage error or unreadable file\n";

/* Print a description or unit with control bytes blanked, so a string with
** escapes cannot break the layout. */
static void put_clean(const char *s, FILE *out) {
  for (; s && *s; s++) fputc((unsigned char)*s < 0x20 ? ' ' : *s, out);
}

/* What a declaration table shows besides name, unit and description. */
enum { PLAIN, VALUE, COORD };

/* "initial 0.1" or "initial 0.1, rate -2" for coordinate i. */
static char *initial_text(const Model *m, int i, char *buf, size_t n) {
  if (m->qd0[i] != 0) snprintf(buf, n, "initial %g, rate %g", m->q0[i], m->qd0[i]);
  else snprintf(buf, n, "initial %g", m->q0[i]);
  return buf;
}

/* One table of declarations: name, optional value, unit, description,
** each column as wide as its widest entry. */
static void print_decls(const Model *m, const char *title, Decl **v, int n, int kind, FILE *out) {
  Arena *a = m->ast->arena;
  char num[64];
  int wname = 0, wvalue = 0, wunit = 0, winit = 0;
  if (n == 0) return;
  for (int i = 0; i < n; i++) {
    if (kind == COORD) {
      int k = (int)strlen(initial_text(m, i, num, sizeof num));
      if (k > winit) winit = k;
    }
    int k = (int)strlen(v[i]->name);
    if (k > wname) wname = k;
    k = (int)strlen(unit_text(a, v[i]->unit));
    if (k > wunit) wunit = k;
    if (kind == VALUE) {
      k = snprintf(num, sizeof num, "%.6g", v[i]->number);
      if (k > wvalue) wvalue = k;
    }
  }
  if (wname > 24) wname = 24;
  if (wunit > 24) wunit = 24;
  fprintf(out, "%s (%d):\n", title, n);
  for (int i = 0; i < n; i++) {
    fprintf(out, "  %-*s", wname, v[i]->name);
    if (kind == VALUE) {
      snprintf(num, sizeof num, "%.6g", v[i]->number);
      fprintf(out, " = %-*s", wvalue, num);
    }
    if (wunit) {
      const char *u = unit_text(a, v[i]->unit);
      fputs("  ", out);
      if (*u) {
        fputc('[', out);
        put_clean(u, out);
        fputc(']', out);
      } else {
        fputs("  ", out);
      }
      if (v[i]->desc || kind == COORD) fprintf(out, "%*s", wunit - (int)strlen(u), "");
    }
    if (kind == COORD) {
      initial_text(m, i, num, sizeof num);
      fprintf(out, "  %-*s", v[i]->desc ? winit : 0, num);
    }
    if (v[i]->desc) {
      fputs("  ", out);
      put_clean(v[i]->desc, out);
    }
    fputc('\n', out);
  }
}

/* The attitudes: name, initial quaternion [w, x, y, z], initial body-frame
** angular velocity when not zero, description. */
/* Round-off of the rotation's trigonometry (cos(pi) + 1) shows as 0. */
static double tidy(double v) { return fabs(v) < 1e-12 ? 0.0 : v; }

static void print_attitudes(const Model *m, FILE *out) {
  if (m->nattitudes == 0) return;
  fprintf(out, "attitudes (%d):  quaternion [w, x, y, z], omega in body axes\n", m->nattitudes);
  for (int i = 0; i < m->nattitudes; i++) {
    const double *q = m->attitude_q0 + 4 * i, *w = m->omega0 + 3 * i;
    fprintf(out, "  %s  initial [%.6g, %.6g, %.6g, %.6g]", m->attitudes[i]->name, tidy(q[0]), tidy(q[1]),
            tidy(q[2]), tidy(q[3]));
    if (w[0] != 0 || w[1] != 0 || w[2] != 0) fprintf(out, ", omega [%.6g, %.6g, %.6g]", w[0], w[1], w[2]);
    if (m->attitudes[i]->desc) {
      fputs("  ", out);
      put_clean(m->attitudes[i]->desc, out);
    }
    fputc('\n', out);
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
  fprintf(out, "model %s  (%s)\n", m->name, path);
  print_decls(m, "coordinates", m->coords, m->ncoords, COORD, out);
  print_attitudes(m, out);
  print_decls(m, "parameters", m->params, m->nparams, VALUE, out);
  print_decls(m, "constants", m->consts, m->nconsts, VALUE, out);
  print_decls(m, "inputs", m->inputs, m->ninputs, PLAIN, out);
  print_decls(m, "outputs", m->outputs, m->noutputs, PLAIN, out);
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
    if (s->kind == ST_STOP) {
      fprintf(out, " (bounce %.15g)", s->bounce);
      if (s->desc) {
        fputs("  ", out);
        put_clean(s->desc, out);
      }
    }
    fputc('\n', out);
  }
  if (m->nconstraints) fprintf(out, "constraint equations: %d\n", m->nconstraints);
  if (m->nvconstraints)
    fprintf(out, "velocity constraint equations: %d (A(t, q) q' = b(t, q))\n", m->nvconstraints);
  if (m->nstops) fprintf(out, "end stops: %d (gaps kept >= 0)\n", m->nstops);
  fprintf(out, "units: %s\n", m->has_units ? "checked" : "not checked (not every coordinate and param has one)");
}

/* Velocity constraints that pass Frobenius' test could be written as
** position constraints (fewer states to keep, no drift of the positions):
** a note at the first of them.  They stay as they are. */
static void note_integrable(Frontend *fe) {
  const Model *m = &fe->model;
  int printed = fe->diag.nmsgs;
  for (int i = 0; i < m->nterms; i++) {
    const Stmt *s = m->terms[i];
    SrcLoc where;
    if (s->kind != ST_CONSTRAINT) continue;
    if (rate_degree(s->e[0], &where) == RATES_NONE && rate_degree(s->e[1], &where) == RATES_NONE)
      continue;
    diag_note(&fe->diag, s->loc,
              "the velocity constraints are integrable (they pass Frobenius' test): they could be "
              "written as position constraints; they are kept as velocity constraints");
    break;
  }
  diag_print_from(&fe->diag, printed, stderr);
}

/* The switching functions of the non-smooth terms, as the descriptor's
** switch_names has them: where each changes sign the runtime locates an
** event (nothing is printed for a smooth model). */
static void report_switches(const EomSystem *s, FILE *out) {
  if (s->ns == 0) return;
  fprintf(out, "switching functions (%d):\n", s->ns);
  for (int i = 0; i < s->ns; i++) {
    const EomSwitch *w = &s->switch_info[i];
    fprintf(out, "  %d:%d %s%s\n", w->line, w->col, scalar_builtins[w->fn].name,
            w->part == 1 ? " lower" : w->part == 2 ? " upper" : "");
  }
}

/* Derive the equations of motion and report the M/C/g split, the
** constants of the motion and the switches; a derivation error is a model
** error. */
static int print_structure(Frontend *fe, FILE *out) {
  EomSystem sys;
  SymOptions so = {0, 0.0};
  fflush(out);  /* the summary before any derivation error on stderr */
  int failed = frontend_derive(fe, &so, &sys);
  if (failed) {
    fputs("equations of motion: not derived (see the errors above)\n", out);
  } else {
    report_structure(&fe->model, &sys, out);
    report_switches(&sys, out);
    fflush(out);
    failed = frontend_check_inertia(fe, &sys, DIAG_ERROR) != 0;
    if (sys.vc_integrable) note_integrable(fe);
  }
  sym_free(&sys);
  return failed;
}

int cmd_check(int argc, char **argv) {
  const char *path = NULL;
  int derive = 1;
  for (int i = 1; i < argc; i++) {
    if (cmd_is_help(argv[i])) {
      fputs(check_usage, stdout);
      return 0;
    }
    if (strcmp(argv[i], "--no-derive") == 0) {
      derive = 0;
      continue;
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
  int rc = frontend_open(&fe, path, 0);
  if (rc != 0) return rc;
  print_summary(&fe.model, path, stdout);
  if (derive)
    rc = print_structure(&fe, stdout) ? EXIT_MODEL : 0;
  frontend_free(&fe);
  return rc;
}
