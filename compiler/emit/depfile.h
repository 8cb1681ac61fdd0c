/*
** depfile.h — write a Make-syntax dependency file for a code-generation step.
**
** `eomc gen --depfile FILE` tells the build tool which inputs its outputs
** were made from, in the one syntax GNU make, CMake and Ninja all read:
**
**     out/P.h out/P.c: model.eom
**
** File names are escaped the way GNU make reads them back (space as "\ ",
** '#' as "\#", '$' as "$$"; backslashes in front of those doubled).  The file
** is written to a temporary and renamed, and left untouched (mtime kept) when
** it already holds the same text, so a no-op run never triggers a rebuild.
*/
#ifndef EOMC_DEPFILE_H
#define EOMC_DEPFILE_H

#include <stddef.h>

/* Write the escaped form of one file name, as a target (is_target != 0) or
** as a prerequisite, into out (at most outcap bytes, NUL included; the text
** is cut short when it does not fit).  Returns the length the escaped name
** needs without the NUL, like snprintf, or -1 with a message in err when the
** name cannot be written in a depfile at all (empty, a line break, or a
** trailing backslash). */
long depfile_escape(const char *name, int is_target, char *out, size_t outcap, char *err,
                    size_t errlen);

/* The text of the rule "t1 t2 ...: d1 d2 ...\n" (malloc'd, NUL-terminated),
** or NULL with a message in err.  ntargets must be at least 1; ndeps may be 0. */
char *depfile_format(const char *const *targets, int ntargets, const char *const *deps,
                     int ndeps, char *err, size_t errlen);

/* Write the rule to `path` atomically and only when its content changed.
** Returns 0, or -1 with a message in err and `path` left as it was. */
int depfile_write(const char *path, const char *const *targets, int ntargets,
                  const char *const *deps, int ndeps, char *err, size_t errlen);

#endif
