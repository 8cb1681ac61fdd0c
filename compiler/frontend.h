/*
** frontend.h — load a model: read, parse and check it in one call.
**
** Every command starts here.  The Frontend owns all memory of the model;
** frontend_free() releases it at once.
*/
#ifndef EOMC_FRONTEND_H
#define EOMC_FRONTEND_H

#include "ast.h"
#include "check.h"
#include "diag.h"
#include "source.h"

typedef struct Frontend {
  Source src;
  Diag diag;
  Ast *ast;
  Model model;
} Frontend;

/* Returns 0 when the model is usable; 1 on a model error (diagnostics in
** fe->diag, not yet printed); 2 when the file cannot be read (message printed). */
int frontend_load(Frontend *fe, const char *path);
void frontend_free(Frontend *fe);

#endif
