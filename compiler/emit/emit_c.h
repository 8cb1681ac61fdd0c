/*
** emit_c.h — the C back end: write P.h and P.c from a derived EomSystem.
**
** The emitter walks the shared IrGraph once per generated function, turns
** nodes used more than once into `const double` temporaries (unless CSE is
** off), writes integer powers as products, and unrolls the LDLᵀ solve of
** M q'' = f for the model's sparsity pattern.  Output is deterministic:
** the same model text gives byte-identical files.
*/
#ifndef EOMC_EMIT_C_H
#define EOMC_EMIT_C_H

#include <stddef.h>
#include <stdio.h>
#include "front/check.h"
#include "sym/symbolic.h"

typedef struct EmitOptions {
  const char *prefix;      /* C prefix P; NULL: the model's name */
  const char *model_hash;  /* hex hash of the model text, written in the header comment */
  int no_cse;              /* inline every node (for benchmarks and debugging) */
  int no_split;            /* write every function as one body, however large */
  int single_precision;    /* float throughout, no descriptor (gen --float) */
  const char *only;        /* comma-separated functions to write (gen --only); NULL: all */
} EmitOptions;

/* Write the header and the source to two streams.  Returns 0 on success. */
int emit_c(const Model *m, const EomSystem *s, const EmitOptions *o, FILE *h_out, FILE *c_out);

/* Write DIR/P.h and DIR/P.c, each through a temporary file renamed into
** place, and only when its content changed (mtime kept otherwise).
** Returns 0, or -1 with a message in err. */
int emit_c_to_dir(const Model *m, const EomSystem *s, const EmitOptions *o, const char *dir,
                  char *err, size_t errlen);

/* The same, telling which files it replaced: *replaced is a mask of
** EMIT_WROTE_HEADER and EMIT_WROTE_SOURCE (0: both were up to date). */
enum { EMIT_WROTE_HEADER = 1, EMIT_WROTE_SOURCE = 2 };
int emit_c_files(const Model *m, const EomSystem *s, const EmitOptions *o, const char *dir,
                 int *replaced, char *err, size_t errlen);

#endif
