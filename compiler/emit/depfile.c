/*
** depfile.c — Make-syntax dependency files (see depfile.h).
**
** GNU make's reading rules, checked against GNU make 4.3:
**   - space, tab, '#' and ':' are escaped with a backslash; a run of N
**     backslashes in front of one of them is written as 2N backslashes
**     (that is how make tells "backslash in the name" from "escape");
**   - '$' is written "$$";
**   - '%' makes a target a pattern, so it is escaped in targets only (in a
**     prerequisite make would keep the backslash);
**   - a newline cannot be written at all, and neither can a trailing
**     backslash (at the end of a line make reads it as a continuation).
** Wildcard characters (* ? [) are left alone, as compilers' depfiles do:
** escaping them would make make keep the backslash when the file does not
** exist yet.
*/
#include "emit/depfile.h"

#include <assert.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "emit/fsutil.h"

/* Growing output buffer: out[0..len) so far; len may exceed cap (counting). */
typedef struct Out {
  char *buf;
  size_t cap, len;
} Out;

static void put(Out *o, char c) {
  if (o->len + 1 < o->cap) o->buf[o->len] = c;
  o->len++;
}

/* Is c escaped with a backslash in this position? */
static int needs_backslash(char c, int is_target) {
  return c == ' ' || c == '\t' || c == '#' || c == ':' || (is_target && c == '%');
}

/* Escape one name into o; 0, or -1 with a message in err. */
static int escape_into(Out *o, const char *name, int is_target, char *err, size_t errlen) {
  size_t n = strlen(name);
  size_t slashes = 0; /* backslashes just before name[i] */
  if (n == 0) {
    snprintf(err, errlen, "an empty file name cannot be written in a depfile");
    return -1;
  }
  if (name[n - 1] == '\\') {
    snprintf(err, errlen, "file name '%s' ends in a backslash, which Make cannot read back",
             name);
    return -1;
  }
  for (size_t i = 0; i < n; i++) {
    char c = name[i];
    if (c == '\n' || c == '\r') {
      snprintf(err, errlen, "a file name with a line break cannot be written in a depfile");
      return -1;
    }
    if (c == '\\') {
      slashes++;
      put(o, c);
      continue;
    }
    if (needs_backslash(c, is_target)) {
      /* The backslashes already written count once more, then the escape. */
      for (; slashes > 0; slashes--) put(o, '\\');
      put(o, '\\');
    } else if (c == '$') {
      put(o, '$');
    }
    slashes = 0;
    put(o, c);
  }
  return 0;
}

long depfile_escape(const char *name, int is_target, char *out, size_t outcap, char *err,
                    size_t errlen) {
  Out o = {out, outcap, 0};
  assert(name && (out || outcap == 0) && err);
  if (escape_into(&o, name, is_target, err, errlen) != 0) return -1;
  if (outcap > 0) out[o.len < outcap ? o.len : outcap - 1] = '\0';
  return (long)o.len;
}

/* Write the whole rule into o (counting only when o->cap is 0). */
static int format_into(Out *o, const char *const *targets, int ntargets,
                       const char *const *deps, int ndeps, char *err, size_t errlen) {
  for (int i = 0; i < ntargets; i++) {
    if (i > 0) put(o, ' ');
    if (escape_into(o, targets[i], 1, err, errlen) != 0) return -1;
  }
  put(o, ':');
  for (int i = 0; i < ndeps; i++) {
    put(o, ' ');
    if (escape_into(o, deps[i], 0, err, errlen) != 0) return -1;
  }
  put(o, '\n');
  return 0;
}

char *depfile_format(const char *const *targets, int ntargets, const char *const *deps,
                     int ndeps, char *err, size_t errlen) {
  Out count = {NULL, 0, 0}, o;
  assert(err && ntargets >= 0 && ndeps >= 0);
  assert(targets || ntargets == 0);
  assert(deps || ndeps == 0);
  if (ntargets == 0) {
    snprintf(err, errlen, "a depfile needs at least one target");
    return NULL;
  }
  /* Two passes: measure, then write into a buffer of the right size. */
  if (format_into(&count, targets, ntargets, deps, ndeps, err, errlen) != 0) return NULL;
  o.cap = count.len + 1;
  o.len = 0;
  o.buf = malloc(o.cap);
  if (!o.buf) {
    snprintf(err, errlen, "out of memory");
    return NULL;
  }
  if (format_into(&o, targets, ntargets, deps, ndeps, err, errlen) != 0) {
    free(o.buf);
    return NULL;
  }
  assert(o.len == count.len);
  o.buf[o.len] = '\0';
  return o.buf;
}

int depfile_write(const char *path, const char *const *targets, int ntargets,
                  const char *const *deps, int ndeps, char *err, size_t errlen) {
  const char *slash;
  char *text, *dir;
  int rc;
  assert(path && err);
  slash = strrchr(path, '/');
  if (path[0] == '\0' || (slash && slash[1] == '\0')) {
    snprintf(err, errlen, "depfile '%s' is not a file name", path);
    return -1;
  }
  text = depfile_format(targets, ntargets, deps, ndeps, err, errlen);
  if (!text) return -1;
  /* The temporary goes next to the file so that the rename is atomic. */
  if (!slash) dir = strdup(".");
  else if (slash == path) dir = strdup("/");
  else {
    dir = malloc((size_t)(slash - path) + 1);
    if (dir) {
      memcpy(dir, path, (size_t)(slash - path));
      dir[slash - path] = '\0';
    }
  }
  if (!dir) {
    free(text);
    snprintf(err, errlen, "out of memory");
    return -1;
  }
  rc = fs_write_if_changed(dir, slash ? slash + 1 : path, text, strlen(text), NULL, err, errlen);
  free(dir);
  free(text);
  return rc;
}
