/*
** run_columns.c — `--columns LIST`: names to row column indices.
*/
#include "cli/run_columns.h"

#include <assert.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "eom/runtime.h"

int run_columns_all(const struct eom_model *m, int **cols, int *ncols) {
  int width = eom_row_width(m);
  *cols = malloc((size_t)width * sizeof(int));
  if (!*cols) return -1;
  for (int k = 0; k < width; k++) (*cols)[k] = k;
  *ncols = width;
  return 0;
}

/* The row column named name[0..n), or -1. */
static int column_named(const struct eom_model *m, const char *name, size_t n) {
  char buf[256];
  for (int k = 0, width = eom_row_width(m); k < width; k++) {
    eom_row_column(m, k, buf, sizeof buf, NULL);
    if (strlen(buf) == n && memcmp(buf, name, n) == 0) return k;
  }
  return -1;
}

/* "t, x, phi, ..." into buf, cut short with "..." when it does not fit. */
static void column_names(const struct eom_model *m, char *buf, size_t cap) {
  char name[256];
  size_t len = 0;
  buf[0] = '\0';
  for (int k = 0, width = eom_row_width(m); k < width; k++) {
    eom_row_column(m, k, name, sizeof name, NULL);
    if (len + strlen(name) + 8 >= cap) {
      snprintf(buf + len, cap - len, ", ...");
      return;
    }
    len += (size_t)snprintf(buf + len, cap - len, "%s%s", k ? ", " : "", name);
  }
}

/* The next comma outside brackets (a matrix output's column is y[1,2]). */
static const char *next_comma(const char *p) {
  int depth = 0;
  for (; *p; p++) {
    if (*p == '[') depth++;
    else if (*p == ']' && depth > 0) depth--;
    else if (*p == ',' && depth == 0) return p;
  }
  return NULL;
}

int run_columns_parse(const struct eom_model *m, const char *list, int **cols, int *ncols,
                      char *err, size_t errlen) {
  char names[512];
  int width = eom_row_width(m), n = 0;
  int *out = malloc(((size_t)width + 1) * sizeof(int));
  assert(list);
  if (!out) {
    snprintf(err, errlen, "out of memory");
    return -1;
  }
  for (const char *p = list;;) {
    const char *end = next_comma(p);
    size_t len = end ? (size_t)(end - p) : strlen(p);
    while (len > 0 && *p == ' ') p++, len--;
    while (len > 0 && p[len - 1] == ' ') len--;
    int k = len ? column_named(m, p, len) : -1;
    if (k < 0) {
      column_names(m, names, sizeof names);
      if (len) snprintf(err, errlen, "--columns: the run has no column '%.*s' (columns: %s)",
                        (int)len, p, names);
      else snprintf(err, errlen, "--columns: an empty name in '%s' (columns: %s)", list, names);
      free(out);
      return -1;
    }
    for (int i = 0; i < n; i++)
      if (out[i] == k) {
        snprintf(err, errlen, "--columns: '%.*s' is named twice", (int)len, p);
        free(out);
        return -1;
      }
    out[n++] = k;
    if (!end) break;
    p = end + 1;
  }
  *cols = out;
  *ncols = n;
  return 0;
}
