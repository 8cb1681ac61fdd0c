/*
** arena.h — bump allocator: all memory of one model, freed at once.
**
** Allocation never fails silently: on out-of-memory it aborts with a message,
** the one place eomc stops without a diagnostic (there is nothing to report
** a diagnostic with).
*/
#ifndef EOMC_ARENA_H
#define EOMC_ARENA_H

#include <stddef.h>

typedef struct Arena Arena;

Arena *arena_new(void);
void arena_free(Arena *a);
void *arena_alloc(Arena *a, size_t n);          /* zeroed, aligned for any type */
char *arena_strdup(Arena *a, const char *s);
char *arena_strndup(Arena *a, const char *s, size_t n);
/* Copy n pointers from a temporary vector into the arena. */
void **arena_copy_ptrs(Arena *a, void *const *src, size_t n);

#endif
