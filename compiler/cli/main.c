/*
** main.c — eomc: compile Lagrangian model text to C.
**
** Dispatches the verb; every verb lives in its own cmd_*.c file.
*/
#include <stdio.h>
#include <string.h>
#include "cli/cmd.h"
#include "cli/h5_out.h"

#ifndef EOMC_VERSION
#define EOMC_VERSION "unknown"
#endif

static const char usage[] =
  "usage: eomc COMMAND MODEL.eom [OPTIONS]\n"
  "\n"
  "Derive the equations of motion of a mechanical model and write fast C.\n"
  "\n"
  "commands:\n"
  "  check MODEL.eom            parse and check the model (units too); print a summary\n"
  "  gen MODEL.eom [-o DIR]     write P.h and P.c (mass matrix, forcing, dynamics, ...)\n"
  "  show MODEL.eom [--latex]   print M, f and the equations of motion\n"
  "  sim MODEL.eom [--until T]  simulate; write CSV and optionally a plot\n"
  "  modes MODEL.eom [--at q=V] natural frequencies and mode shapes at an equilibrium\n"
  "  linearize MODEL.eom        A, B, C, D of the linear model at an equilibrium\n"
  "  import ROBOT.urdf [-o M]   write a robot description (URDF) as a model\n"
  "  sweep MODEL.eom            many runs over value grids and random samples, in parallel\n"
  "\n"
  "options:\n"
  "  -h, --help                 this text; `eomc COMMAND --help` for a command's options\n"
  "  --version                  print the version\n"
  "\n"
  "exit status: 0 success, 1 error in the model, 2 usage error, 3 run failure\n";

int cmd_is_help(const char *arg) {
  return strcmp(arg, "-h") == 0 || strcmp(arg, "--help") == 0;
}

int main(int argc, char **argv) {
  static const struct {
    const char *name;
    int (*run)(int, char **);
  } verbs[] = {
    {"check", cmd_check}, {"gen", cmd_gen}, {"show", cmd_show},
    {"sim", cmd_sim},     {"modes", cmd_modes}, {"linearize", cmd_linearize},
    {"import", cmd_import},
    {"sweep", cmd_sweep},
  };
  if (argc < 2) {
    fputs(usage, stderr);
    return EXIT_USAGE;
  }
  if (cmd_is_help(argv[1])) {
    fputs(usage, stdout);
    return 0;
  }
  if (strcmp(argv[1], "--version") == 0) {
    printf("eomc %s\n", EOMC_VERSION);
    if (h5_out_library()) printf("HDF5 output (-o RUN.h5): %s\n", h5_out_library());
    else printf("HDF5 output (-o RUN.h5): not built in (libhdf5-dev was not found by configure)\n");
    return 0;
  }
  for (size_t i = 0; i < sizeof verbs / sizeof verbs[0]; i++)
    if (strcmp(argv[1], verbs[i].name) == 0) return verbs[i].run(argc - 1, argv + 1);
  fprintf(stderr, "eomc: unknown command '%s' (try 'eomc --help')\n", argv[1]);
  return EXIT_USAGE;
}
