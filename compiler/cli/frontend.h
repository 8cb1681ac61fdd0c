/*
** frontend.h — load a model: read, parse and check it in one call.
**
** Every command starts here.  The Frontend owns all memory of the model;
** frontend_free() releases it at once.
*/
#ifndef EOMC_FRONTEND_H
#define EOMC_FRONTEND_H

#include "front/ast.h"
#include "front/check.h"
#include "front/diag.h"
#include "front/source.h"
#include "sym/symbolic.h"

typedef struct Frontend {
  Source src;
  Diag diag;
  Ast *ast;
  Model model;
} Frontend;

/* Returns 0 when the model is usable; 1 on a model error, 2 when the file
** cannot be read (either way the diagnostics are in fe->diag, not yet
** printed). */
int frontend_load(Frontend *fe, const char *path);
void frontend_free(Frontend *fe);

/* frontend_load() for a command: print the diagnostics (errors only when
** `quiet`, which then holds for later prints too) and map the result to
** an exit status: 0, EXIT_MODEL or EXIT_USAGE (cmd.h).  On nonzero the
** Frontend is already freed. */
int frontend_open(Frontend *fe, const char *path, int quiet);

/* Derive the equations of motion of a loaded model into `sys` (zeroed first)
** and print the diagnostics the derivation added.  Returns 0, or nonzero when
** the derivation failed (a message was printed); free `sys` with sym_free()
** either way. */
int frontend_derive(Frontend *fe, const SymOptions *so, EomSystem *sys);

/* Report, at its declaration and with `level`, every coordinate with no
** inertia: its diagonal entry of M is identically zero (no rate of it in
** T), so M is singular everywhere and no acceleration can be computed.
** Prints what it reports; returns the number of such coordinates. */
int frontend_check_inertia(Frontend *fe, const EomSystem *sys, DiagLevel level);

#endif
