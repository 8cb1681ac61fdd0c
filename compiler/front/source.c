/*
** source.c — read a model file (or stdin) into one NUL-terminated buffer.
*/
#include "front/source.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int source_read(Source *s, const char *path, Diag *d) {
  const SrcLoc whole = {0, 0};
  memset(s, 0, sizeof *s);
  s->path = path;
  FILE *f = strcmp(path, "-") == 0 ? stdin : fopen(path, "rb");
  if (!f) {
    diag_error(d, whole, "cannot open the file: %s", strerror(errno));
    return -1;
  }
  size_t cap = 1 << 16, len = 0;
  char *buf = malloc(cap);
  for (;;) {
    if (!buf) {
      diag_error(d, whole, "out of memory reading the file");
      break;
    }
    if (len + 1 >= cap) {
      if (cap > SOURCE_MAX_BYTES) {
        diag_error(d, whole, "the file is larger than %zu MB", SOURCE_MAX_BYTES >> 20);
        free(buf);
        buf = NULL;
        break;
      }
      char *nb = realloc(buf, cap *= 2);
      if (!nb) free(buf);
      buf = nb;
      continue;
    }
    size_t n = fread(buf + len, 1, cap - len - 1, f);
    len += n;
    if (n == 0) {
      if (ferror(f)) {
        diag_error(d, whole, "cannot read the file: %s", strerror(errno));
        free(buf);
        buf = NULL;
      }
      break;
    }
  }
  if (f != stdin) fclose(f);
  if (!buf) return -1;
  buf[len] = '\0';
  s->text = buf;
  s->len = len;
  return 0;
}

void source_free(Source *s) {
  free(s->text);
  s->text = NULL;
  s->len = 0;
}
