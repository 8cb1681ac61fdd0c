/*
** tmpfiles.h — scratch files of a command (gnuplot scripts, data for a
** plot): created in $TMPDIR, else /tmp, and removed by the caller.
*/
#ifndef EOMC_TMPFILES_H
#define EOMC_TMPFILES_H

/* The folder scratch files go in: $TMPDIR when set and not empty, else /tmp. */
const char *tmpfiles_dir(void);

/* Create a new scratch file named "STEM-XXXXXX" in tmpfiles_dir(), opened
** for writing.  Returns its descriptor and sets *path (malloc'd), or
** returns -1 with errno set and *path NULL. */
int tmpfiles_create(const char *stem, char **path);

#endif
