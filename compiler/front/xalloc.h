/*
** xalloc.h — allocation that cannot fail quietly.
**
** Running out of memory is the one failure the compiler does not report as
** data (DEVELOPERS.md, "Errors"): there is no sensible way to go on, and a
** NULL checked by assert() would vanish under NDEBUG.  These wrappers print
** "eomc: out of memory" and abort; every allocation in compiler/ goes
** through them (the runtime, a library, returns its errors instead).
*/
#ifndef EOMC_XALLOC_H
#define EOMC_XALLOC_H

#include <stddef.h>

void *xmalloc(size_t n);
/* Zeroed n * size bytes (the product checked for overflow). */
void *xcalloc(size_t n, size_t size);
/* realloc(p, n); p's old block is released on success as usual. */
void *xrealloc(void *p, size_t n);

#endif
