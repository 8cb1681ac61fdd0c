/*
** tmpfiles.c — scratch files in $TMPDIR (else /tmp), the place POSIX names
** for them, so a user or a build system can move them off a small /tmp.
*/
#include "cli/tmpfiles.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

const char *tmpfiles_dir(void) {
  const char *d = getenv("TMPDIR");
  return d && *d ? d : "/tmp";
}

int tmpfiles_create(const char *stem, char **path) {
  const char *dir = tmpfiles_dir();
  size_t len = strlen(dir) + strlen(stem) + 16;
  int slash = dir[strlen(dir) - 1] != '/';
  *path = malloc(len);
  if (!*path) {
    errno = ENOMEM;
    return -1;
  }
  snprintf(*path, len, "%s%s%s-XXXXXX", dir, slash ? "/" : "", stem);
  int fd = mkstemp(*path);
  if (fd < 0) {
    int e = errno;
    free(*path);
    *path = NULL;
    errno = e;
  }
  return fd;
}
