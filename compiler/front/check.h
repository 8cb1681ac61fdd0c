/*
** check.h — semantic analysis: names, shapes, arities, units.
**
** check_model() resolves every name in the AST, computes shapes, evaluates
** param/const defaults and initial values, checks units (units.c), and
** gathers the declarations into a Model that later stages read.  Errors and
** warnings go to the Diag; the Model is usable only when no error was reported.
*/
#ifndef EOMC_CHECK_H
#define EOMC_CHECK_H

#include "front/ast.h"
#include "front/diag.h"

typedef struct Model {
  Ast *ast;
  const char *name;              /* C prefix: `model NAME` or the sanitised file stem */
  Decl **coords;   int ncoords;
  Decl **params;   int nparams;
  Decl **consts;   int nconsts;
  Decl **inputs;   int ninputs;
  Decl **lets;     int nlets;
  Decl **outputs;  int noutputs;
  Decl **bodies;   int nbodies;
  Decl **attitudes; int nattitudes; /* free orientations, in declaration order */
  Decl **identify; int nidentify; /* params named by `identify` */
  /* Energy, force, body, gravity and constraint statements in source order. */
  Stmt **terms;    int nterms;
  int nconstraints;               /* position constraint equations phi(t, q) = 0 */
  int nstops;                     /* `stop` statements (each one gap, in terms) */
  int nvconstraints;             /* velocity constraint equations A(t, q) q' = b(t, q) */
  double *q0, *qd0;              /* initial state, ncoords each (default 0) */
  double *attitude_q0;           /* 4 per attitude: unit quaternion [w, x, y, z] (default 1, 0, 0, 0) */
  double *omega0;                /* 3 per attitude: body-frame angular velocity (default 0) */
  int has_units;                 /* every coord and param carries a unit: units were checked */
  int ny;                        /* entries of y: every element of a vector or matrix output */
} Model;

/* Check `ast`; fill `m` (allocated in ast->arena).  Returns the number of errors. */
int check_model(Ast *ast, Diag *d, Model *m);

/* Built-in functions: name, number of arguments (-1: variadic, -2: not a built-in). */
int check_builtin_arity(const char *name);

/* Is `s` a reserved word of the model language? */
int check_is_keyword(const char *s);

#endif
