/*
** fsutil.h — write output files safely.
**
** A file is written to a temporary in its target directory and renamed into
** place, so a failed run never leaves a half-written file; when the file
** already holds exactly the new bytes it is left alone (its mtime is kept,
** so build tools do not rebuild).  Several files that belong together are
** staged first and renamed only when every one of them was written.
*/
#ifndef EOMC_FSUTIL_H
#define EOMC_FSUTIL_H

#include <stddef.h>

/* Is `dir` an existing, writable directory?  0, or -1 with a message in err. */
int fs_check_dir(const char *dir, char *err, size_t errlen);

/* One file written to a temporary, not yet renamed into place. */
typedef struct FsStaged {
  char *path;        /* dir/name */
  char *tmp;         /* the temporary, or NULL when the file is unchanged */
} FsStaged;

/* Stage `len` bytes for dir/name.  Returns 0, or -1 with a message in err
** and nothing left behind. */
int fs_stage(FsStaged *s, const char *dir, const char *name, const char *data, size_t len,
             char *err, size_t errlen);
/* Rename the temporary into place (nothing to do when unchanged).  Sets
** *changed to 1 when the file was replaced.  Returns 0 or -1 with err. */
int fs_commit(FsStaged *s, int *changed, char *err, size_t errlen);
/* Remove the temporary, if any, and free s. */
void fs_discard(FsStaged *s);

/* fs_stage + fs_commit of one file. */
int fs_write_if_changed(const char *dir, const char *name, const char *data, size_t len,
                        int *changed, char *err, size_t errlen);

/* "dir/name", malloc'd; NULL when out of memory. */
char *fs_join_path(const char *dir, const char *name);

#endif
