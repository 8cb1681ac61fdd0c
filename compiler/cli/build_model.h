/*
** build_model.h — turn a model file into a loaded struct eom_model for
** `eomc sim` and `eomc modes`: check it, generate its C into a cache
** directory keyed by a hash of the model text and of this eomc, compile it
** into a shared object with the system C compiler and dlopen it.
*/
#ifndef EOMC_BUILD_MODEL_H
#define EOMC_BUILD_MODEL_H

#include "eom/model.h"

typedef struct BuiltModel {
  void *handle;                   /* from dlopen */
  const struct eom_model *model;  /* the loaded P_model */
  char *dir;                      /* cache directory of this model (malloc'd) */
  int cache_hit;                  /* 1: the shared object was already built */
} BuiltModel;

/* Load the model at `path`.  Returns 0, or the exit status of the failure
** after printing its message: EXIT_USAGE (file unreadable), EXIT_MODEL (the
** model is wrong; diagnostics printed) or EXIT_RUN (cache, compiler or
** loader failure).
**
** Cache directory: $EOMC_CACHE_DIR, else $XDG_CACHE_HOME/eomc, else
** $HOME/.cache/eomc.  Compiler: $CC (split at blanks; default "cc"). */
int build_model(const char *path, BuiltModel *out);
/* The same for a verb whose analysis does not handle attitudes yet (modes,
** linearize, sweep): a model with one is refused with an error at its
** first attitude (EXIT_MODEL). */
int build_model_without_attitudes(const char *path, const char *verb, BuiltModel *out);
void built_model_close(BuiltModel *b);

/* The cache root as above, malloc'd, or NULL when no variable gives one. */
char *build_cache_root(void);

#endif
