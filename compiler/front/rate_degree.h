/*
** rate_degree.h — how the rates q' enter a checked expression.
**
** A velocity constraint must be linear in the rates: A(t, q) q' = b(t, q).
** rate_degree() reads a checked expression (names resolved) and tells
** whether it is free of rates, linear in them, or not linear, pointing at
** the first term where they enter non-linearly.  The walk is structural
** (a product of two rate factors, a rate under sin, a rate to a power), so
** the error can name the term; the symbolic core confirms the verdict.
*/
#ifndef EOMC_RATE_DEGREE_H
#define EOMC_RATE_DEGREE_H

#include "front/ast.h"

enum { RATES_NONE = 0, RATES_LINEAR = 1, RATES_NONLINEAR = 2 };

/* RATES_NONE, RATES_LINEAR or RATES_NONLINEAR; for the last, *where is the
** term at fault.  `e` must have passed check_model's name resolution. */
int rate_degree(const Expr *e, SrcLoc *where);

#endif
