/*
** source.c — read a model file (or stdin) into one NUL-terminated buffer.
*/
#include "front/source.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int source_read(Source *s, const char *path, char *err, size_t errlen) {
  memset(s, 0, sizeof *s);
  s->path = path;
  FILE *f = strcmp(path, "-") == 0 ? stdin : fopen(path, "rb");
  if (!f) {
    snprintf(err, errlen, "cannot open '%s': %s", path, strerror(errno));
    return -1;
  }
  size_t cap = 1 << 16, len = 0;
  char *buf = malloc(cap);
  for (;;) {
    if (!buf) {
      snprintf(err, errlen, "out of memory reading '%s'", path);
      break;
    }
    if (len + 1 >= cap) {
      if (cap > SOURCE_MAX_BYTES) {
        snprintf(err, errlen, "'%s' is larger than %zu MB", path, SOURCE_MAX_BYTES >> 20);
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
        snprintf(err, errlen, "cannot read '%s': %s", path, strerror(errno));
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
