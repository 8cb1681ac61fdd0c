/*
** cmd_show.c — `eomc show`: print a model's M, f and equations of motion.
**
**   eomc show MODEL.eom [--latex]
**
** Exit status: 0, 1 model error, 2 usage error or unreadable model.
*/
#include <stdio.h>
#include <string.h>
#include "cli/cmd.h"
#include "cli/conserved_report.h"
#include "emit/emit_show.h"
#include "cli/frontend.h"
#include "sym/symbolic.h"

static const char show_usage[] =
  "usage: eomc show MODEL.eom [--latex]\n"
  "\n"
  "Print the mass matrix M, the forcing f and the equations of motion\n"
  "M q'' = f of MODEL.eom, with the model's own names.\n"
  "\n"
  "options:\n"
  "  --latex      LaTeX math (align* environments, a bmatrix for M)\n"
  "  --no-cse     derive without sharing subexpressions (as `gen --no-cse`)\n"
  "  -h, --help   this text\n";

int cmd_show(int argc, char **argv) {
  const char *model = NULL;
  int latex = 0, no_cse = 0;
  for (int i = 1; i < argc; i++) {
    if (cmd_is_help(argv[i])) {
      fputs(show_usage, stdout);
      return 0;
    }
    if (strcmp(argv[i], "--latex") == 0) latex = 1;
    else if (strcmp(argv[i], "--no-cse") == 0) no_cse = 1;
    else if (argv[i][0] == '-' && argv[i][1]) {
      fprintf(stderr, "eomc show: unknown option '%s'\n(try 'eomc show --help')\n", argv[i]);
      return EXIT_USAGE;
    } else if (model) {
      fprintf(stderr, "eomc show: more than one model given ('%s')\n", argv[i]);
      return EXIT_USAGE;
    } else {
      model = argv[i];
    }
  }
  if (!model) {
    fputs("eomc show: no model file given\n(try 'eomc show --help')\n", stderr);
    return EXIT_USAGE;
  }

  Frontend fe;
  int rc = frontend_open(&fe, model, 0);
  if (rc != 0) return rc;
  EomSystem sys;
  SymOptions so = {no_cse, 0.0};
  if (frontend_derive(&fe, &so, &sys) != 0) {
    rc = EXIT_MODEL;
  } else {
    printf(latex ? "%% model %s\n" : "model %s\n\n", fe.model.name);
    if (show_equations(&fe.model, &sys, latex, stdout) != 0) {
      fputs("eomc: error: cannot write the output\n", stderr);
      rc = EXIT_RUN;
    } else if (!latex) {
      /* the split and the constants of the motion, after the equations */
      putchar('\n');
      report_structure(&fe.model, &sys, stdout);
      if (ferror(stdout)) {
        fputs("eomc: error: cannot write the output\n", stderr);
        rc = EXIT_RUN;
      }
    }
  }
  sym_free(&sys);
  frontend_free(&fe);
  return rc;
}
