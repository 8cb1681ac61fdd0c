/*
** builtins.c — lookups in the table of built-in functions (builtins.h).
*/
#include "front/builtins.h"

#include <string.h>

const ScalarBuiltin scalar_builtins[BF_NSCALAR] = {
#define BUILTIN_ENTRY(ID, NAME, ARITY, UNIT, CFORM, TEX, VALUE) {NAME, ARITY, UNIT, CFORM, TEX},
  EOM_SCALAR_BUILTINS(BUILTIN_ENTRY)
#undef BUILTIN_ENTRY
};

static const struct {
  const char *name;
  int arity;
} shaped_builtins[] = {
#define BUILTIN_ENTRY(ID, NAME, ARITY) {NAME, ARITY},
  EOM_SHAPED_BUILTINS(BUILTIN_ENTRY)
#undef BUILTIN_ENTRY
};

int builtin_scalar(const char *name) {
  for (int f = 0; f < BF_NSCALAR; f++)
    if (strcmp(name, scalar_builtins[f].name) == 0) return f;
  return -1;
}

int builtin_arity(const char *name) {
  int f = builtin_scalar(name);
  if (f >= 0) return scalar_builtins[f].arity;
  for (size_t i = 0; i < sizeof shaped_builtins / sizeof shaped_builtins[0]; i++)
    if (strcmp(name, shaped_builtins[i].name) == 0) return shaped_builtins[i].arity;
  return -2;
}
