/*
** arena.c — bump allocator for the AST and checker data of one model.
**
** Chunks grow geometrically; a request larger than a chunk gets a chunk of
** its own.  Memory is zeroed so nodes start with every field cleared.
*/
#include "front/arena.h"
#include "front/xalloc.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

typedef struct Chunk {
  struct Chunk *next;
  size_t size, used;
  /* data follows, max-aligned */
} Chunk;

struct Arena {
  Chunk *head;
  size_t next_size;
};

#define ALIGN 16
#define HEADER (((sizeof(Chunk) + ALIGN - 1) / ALIGN) * ALIGN)

Arena *arena_new(void) {
  Arena *a = xcalloc(1, sizeof *a);
  a->next_size = 64 * 1024;
  return a;
}

void arena_free(Arena *a) {
  if (!a) return;
  Chunk *c = a->head;
  while (c) {
    Chunk *next = c->next;
    free(c);
    c = next;
  }
  free(a);
}

void *arena_alloc(Arena *a, size_t n) {
  n = (n + ALIGN - 1) / ALIGN * ALIGN;
  if (n == 0) n = ALIGN;
  Chunk *c = a->head;
  if (!c || c->size - c->used < n) {
    size_t size = a->next_size;
    if (size < n) size = n;
    c = xcalloc(1, HEADER + size);
    c->size = size;
    c->next = a->head;
    a->head = c;
    if (a->next_size < 16 * 1024 * 1024) a->next_size *= 2;
  }
  void *p = (char *)c + HEADER + c->used;
  c->used += n;
  return p;
}

char *arena_strndup(Arena *a, const char *s, size_t n) {
  char *p = arena_alloc(a, n + 1);
  memcpy(p, s, n);
  p[n] = '\0';
  return p;
}

char *arena_strdup(Arena *a, const char *s) {
  return arena_strndup(a, s, strlen(s));
}

void **arena_copy_ptrs(Arena *a, void *const *src, size_t n) {
  void **p = arena_alloc(a, (n ? n : 1) * sizeof *p);
  if (n) memcpy(p, src, n * sizeof *p);
  return p;
}
