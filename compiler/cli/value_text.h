/*
** value_text.h — a value written on the command line, in the model's terms.
**
** VALUE is a constant expression of numbers, `pi` and the model's
** parameters (with + - * / ^, parentheses and the scalar functions of the
** model language), optionally followed by a unit in brackets:
**   30[deg]   pi/6   2.5[kN/m]   0.5*L   1200[rpm]   3 [mm]
** With a unit the value is converted to the unit the model declares for
** the name (a unit of another dimension is an error naming both); a name
** declared without a unit takes the value in coherent SI units.
** Shared by every verb that takes NAME=VALUE (`--set`, `--at`, `--rate`).
*/
#ifndef EOMC_VALUE_TEXT_H
#define EOMC_VALUE_TEXT_H

#include <stddef.h>
#include "eom/model.h"

/* Evaluate `value`, which points into the command-line argument `arg`
** (used only to point a caret at errors).  `p` holds the parameter values
** names refer to; `declared` is the unit the result is wanted in ("" or
** NULL: none).  Returns 0 with *out set, or -1 with a message in err (a
** first line, then the argument and a caret under the problem). */
int value_text_eval(const char *arg, const char *value, const struct eom_model *m,
                    const double *p, const char *declared, double *out, char *err,
                    size_t errlen);

#endif
