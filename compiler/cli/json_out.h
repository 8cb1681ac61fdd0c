/*
** json_out.h — the few JSON writers the commands' --json output shares:
** numbers (null when not finite) and escaped strings.
*/
#ifndef EOMC_JSON_OUT_H
#define EOMC_JSON_OUT_H

#include <stdio.h>

/* A JSON number with 12 significant digits, or null when not finite. */
void json_num(FILE *f, double v);
/* The same with 17 significant digits: reads back as the same double. */
void json_num_exact(FILE *f, double v);
/* A JSON string: quotes, backslashes and control characters escaped. */
void json_str(FILE *f, const char *s);

#endif
