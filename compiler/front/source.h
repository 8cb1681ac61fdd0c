/*
** source.h — read a model file into memory.
*/
#ifndef EOMC_SOURCE_H
#define EOMC_SOURCE_H

#include <stddef.h>
#include "front/diag.h"

typedef struct Source {
  const char *path;
  char *text;      /* NUL-terminated copy of the file (may contain NUL bytes) */
  size_t len;      /* bytes, excluding the terminating NUL */
} Source;

/* Largest model file accepted (bytes). */
#define SOURCE_MAX_BYTES ((size_t)256 * 1024 * 1024)

/* Read `path` ("-" is stdin).  Returns 0, or -1 after an error in `d`
** (not tied to a line: "PATH: error: cannot open the file: ..."). */
int source_read(Source *s, const char *path, Diag *d);
void source_free(Source *s);

#endif
