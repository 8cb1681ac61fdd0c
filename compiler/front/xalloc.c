/*
** xalloc.c — allocation that reports exhaustion and aborts (see xalloc.h).
*/
#include "front/xalloc.h"

#include <stdio.h>
#include <stdlib.h>

static void out_of_memory(void) {
  fputs("eomc: out of memory\n", stderr);
  abort();
}

void *xmalloc(size_t n) {
  void *p = malloc(n ? n : 1);
  if (!p) out_of_memory();
  return p;
}

void *xcalloc(size_t n, size_t size) {
  void *p = calloc(n ? n : 1, size ? size : 1);
  if (!p) out_of_memory();
  return p;
}

void *xrealloc(void *p, size_t n) {
  void *q = realloc(p, n ? n : 1);
  if (!q) out_of_memory();
  return q;
}
