/*
** cmd.h — the verbs of the eomc command line (docs/eomc.1).
**
** Each verb parses its own options from argv (argv[0] is the verb) and returns
** the process exit status: 0 success, 1 model error, 2 usage error (bad
** option, missing file), 3 a failure of the run itself (compiler, integrator).
*/
#ifndef EOMC_CMD_H
#define EOMC_CMD_H

#define EXIT_MODEL 1
#define EXIT_USAGE 2
#define EXIT_RUN 3

int cmd_check(int argc, char **argv);
int cmd_gen(int argc, char **argv);
int cmd_show(int argc, char **argv);
int cmd_sim(int argc, char **argv);
int cmd_modes(int argc, char **argv);
int cmd_linearize(int argc, char **argv);
int cmd_import(int argc, char **argv);
int cmd_sweep(int argc, char **argv);

/* Is argv[i] a request for help ("-h" / "--help")? */
int cmd_is_help(const char *arg);

#endif
