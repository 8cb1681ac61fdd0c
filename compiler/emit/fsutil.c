/*
** fsutil.c — temporary-file-and-rename writes that keep unchanged files.
*/
#include "emit/fsutil.h"

#include <assert.h>
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

char *fs_join_path(const char *dir, const char *name) {
  size_t a = strlen(dir), b = strlen(name);
  char *s = malloc(a + b + 2);
  if (!s) return NULL;
  memcpy(s, dir, a);
  s[a] = '/';
  memcpy(s + a + 1, name, b + 1);
  return s;
}

int fs_check_dir(const char *dir, char *err, size_t errlen) {
  struct stat st;
  assert(dir && err);
  if (stat(dir, &st) != 0) {
    snprintf(err, errlen, "output directory '%s': %s", dir, strerror(errno));
    return -1;
  }
  if (!S_ISDIR(st.st_mode)) {
    snprintf(err, errlen, "output directory '%s' is not a directory", dir);
    return -1;
  }
  if (access(dir, W_OK | X_OK) != 0) {
    snprintf(err, errlen, "output directory '%s' is not writable: %s", dir, strerror(errno));
    return -1;
  }
  return 0;
}

/* Does the file at path hold exactly data[0..len)? */
static int same_content(const char *path, const char *data, size_t len) {
  FILE *f = fopen(path, "rb");
  char buf[8192];
  size_t off = 0, n;
  int same = 1;
  if (!f) return 0;
  while (same && (n = fread(buf, 1, sizeof buf, f)) > 0) {
    if (off + n > len || memcmp(buf, data + off, n) != 0) same = 0;
    off += n;
  }
  if (ferror(f)) same = 0;
  fclose(f);
  return same && off == len;
}

void fs_discard(FsStaged *s) {
  if (s->tmp) unlink(s->tmp);
  free(s->tmp);
  free(s->path);
  s->tmp = s->path = NULL;
}

int fs_stage(FsStaged *s, const char *dir, const char *name, const char *data, size_t len,
             char *err, size_t errlen) {
  FILE *f;
  int fd;
  mode_t mask;
  assert(s && dir && name && (data || len == 0) && err);
  s->path = fs_join_path(dir, name);
  s->tmp = NULL;
  if (!s->path) {
    snprintf(err, errlen, "out of memory");
    return -1;
  }
  if (same_content(s->path, data, len)) return 0;
  s->tmp = fs_join_path(dir, ".eomc-tmp-XXXXXX");
  if (!s->tmp) {
    snprintf(err, errlen, "out of memory");
    fs_discard(s);
    return -1;
  }
  fd = mkstemp(s->tmp);
  if (fd < 0) {
    snprintf(err, errlen, "cannot create a file in '%s': %s", dir, strerror(errno));
    free(s->tmp);
    s->tmp = NULL;
    fs_discard(s);
    return -1;
  }
  /* mkstemp makes the file 0600; generated sources are ordinary files. */
  mask = umask(0);
  umask(mask);
  (void)fchmod(fd, 0666 & ~mask);
  f = fdopen(fd, "wb");
  if (!f) {
    snprintf(err, errlen, "cannot write in '%s': %s", dir, strerror(errno));
    close(fd);
    fs_discard(s);
    return -1;
  }
  if (fwrite(data, 1, len, f) != len || fflush(f) != 0) {
    snprintf(err, errlen, "cannot write '%s': %s", s->path, strerror(errno));
    fclose(f);
    fs_discard(s);
    return -1;
  }
  if (fclose(f) != 0) {
    snprintf(err, errlen, "cannot write '%s': %s", s->path, strerror(errno));
    fs_discard(s);
    return -1;
  }
  return 0;
}

int fs_commit(FsStaged *s, int *changed, char *err, size_t errlen) {
  if (changed) *changed = 0;
  if (!s->tmp) return 0;
  if (rename(s->tmp, s->path) != 0) {
    snprintf(err, errlen, "cannot replace '%s': %s", s->path, strerror(errno));
    return -1;
  }
  free(s->tmp);
  s->tmp = NULL;
  if (changed) *changed = 1;
  return 0;
}

int fs_write_if_changed(const char *dir, const char *name, const char *data, size_t len,
                        int *changed, char *err, size_t errlen) {
  FsStaged s;
  int rc;
  if (fs_stage(&s, dir, name, data, len, err, errlen) != 0) return -1;
  rc = fs_commit(&s, changed, err, errlen);
  fs_discard(&s);
  return rc;
}
