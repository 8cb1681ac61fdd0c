/*
** run_columns.h — which of a run's columns are written and plotted
** (`eomc sim --columns LIST`).  A column is named as in the CSV header:
** t, a coordinate, a rate (name'), an output, an input, lambda1..., T, V;
** indices are those of the runtime's row (eom_row_column), so columns a
** model gains later (attitudes, ...) are selectable with no change here.
*/
#ifndef EOMC_RUN_COLUMNS_H
#define EOMC_RUN_COLUMNS_H

#include <stddef.h>
#include "eom/model.h"

/* Every column, in row order.  *cols malloc'd; 0, or -1 when out of memory. */
int run_columns_all(const struct eom_model *m, int **cols, int *ncols);

/* The columns of a comma-separated LIST, in its order (each at most once).
** 0, or -1 with a message in err naming the unknown or repeated name (and
** the names there are). */
int run_columns_parse(const struct eom_model *m, const char *list, int **cols, int *ncols,
                      char *err, size_t errlen);

#endif
