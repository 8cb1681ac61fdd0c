/*
** diag.c — collect diagnostics and print them with the source line and a caret.
**
** The printed source line is sanitised (control and non-ASCII bytes become
** '?') and, for very long lines, cut to a window around the caret, so that
** binary garbage or a 1 MB line still gives a readable message.
*/
#include "front/diag.h"
#include "front/xalloc.h"

#include <assert.h>
#include <stdlib.h>
#include <string.h>

#define WINDOW 120   /* widest slice of a source line shown */

void diag_init(Diag *d, const char *path, const char *src, size_t len) {
  memset(d, 0, sizeof *d);
  d->path = path;
  d->src = src;
  d->len = len;
}

void diag_free(Diag *d) {
  for (int i = 0; i < d->nmsgs; i++) free(d->msgs[i].text);
  free(d->msgs);
  d->msgs = NULL;
  d->nmsgs = d->cap = 0;
}

static char *vformat(const char *fmt, va_list ap) {
  va_list ap2;
  va_copy(ap2, ap);
  int n = vsnprintf(NULL, 0, fmt, ap2);
  va_end(ap2);
  if (n < 0) n = 0;
  char *s = xmalloc((size_t)n + 1);
  vsnprintf(s, (size_t)n + 1, fmt, ap);
  return s;
}

void diag_vreport(Diag *d, DiagLevel level, SrcLoc loc, const char *fmt, va_list ap) {
  if (level == DIAG_ERROR) {
    /* One error per line: the rest are follow-on errors. */
    if (loc.line > 0 && loc.line == d->last_error_line) return;
    d->nerrors++;
    d->last_error_line = loc.line;
    if (d->nerrors > DIAG_MAX_ERRORS) return;
  } else if (level == DIAG_WARNING) {
    d->nwarnings++;
  }
  if (d->nmsgs == d->cap) {
    d->cap = d->cap ? 2 * d->cap : 16;
    d->msgs = xrealloc(d->msgs, (size_t)d->cap * sizeof *d->msgs);
  }
  DiagMsg *m = &d->msgs[d->nmsgs++];
  m->level = level;
  m->loc = loc;
  m->text = vformat(fmt, ap);
}

void diag_report(Diag *d, DiagLevel level, SrcLoc loc, const char *fmt, ...) {
  va_list ap;
  va_start(ap, fmt);
  diag_vreport(d, level, loc, fmt, ap);
  va_end(ap);
}

/* Find the bytes of 1-based line `line`; returns 0 when out of range. */
static int find_line(const Diag *d, int line, size_t *start, size_t *end) {
  if (!d->src || line < 1) return 0;
  size_t i = 0;
  for (int l = 1; l < line; l++) {
    const char *nl = memchr(d->src + i, '\n', d->len - i);
    if (!nl) return 0;
    i = (size_t)(nl - d->src) + 1;
  }
  size_t j = i;
  while (j < d->len && d->src[j] != '\n' && d->src[j] != '\r') j++;
  *start = i;
  *end = j;
  return 1;
}

static void print_source(const Diag *d, SrcLoc loc, FILE *out) {
  size_t start, end;
  if (!find_line(d, loc.line, &start, &end)) return;
  size_t caret = start + (size_t)(loc.col > 0 ? loc.col - 1 : 0);
  if (caret > end) caret = end;
  size_t from = start, to = end;
  if (to - from > WINDOW) {
    from = caret > start + WINDOW / 2 ? caret - WINDOW / 2 : start;
    to = from + WINDOW < end ? from + WINDOW : end;
  }
  fputs("    ", out);
  if (from > start) fputs("...", out);
  for (size_t i = from; i < to; i++) {
    unsigned char c = (unsigned char)d->src[i];
    fputc(c == '\t' || (c >= 0x20 && c < 0x7f) ? c : '?', out);
  }
  if (to < end) fputs("...", out);
  fputs("\n    ", out);
  if (from > start) fputs("   ", out);
  for (size_t i = from; i < caret; i++) fputc(d->src[i] == '\t' ? '\t' : ' ', out);
  fputs("^\n", out);
}

void diag_print(const Diag *d, FILE *out) {
  diag_print_from(d, 0, out);
}

void diag_print_from(const Diag *d, int first, FILE *out) {
  static const char *const names[] = {"error", "warning", "note"};
  assert(first >= 0);
  for (int i = first; i < d->nmsgs; i++) {
    const DiagMsg *m = &d->msgs[i];
    assert(m->level <= DIAG_NOTE);
    if (d->errors_only && m->level != DIAG_ERROR) continue;
    if (m->loc.line > 0)
      fprintf(out, "%s:%d:%d: %s: %s\n", d->path, m->loc.line, m->loc.col, names[m->level], m->text);
    else
      fprintf(out, "%s: %s: %s\n", d->path, names[m->level], m->text);
    if (m->loc.line > 0) print_source(d, m->loc, out);
  }
  if (d->nerrors > DIAG_MAX_ERRORS)
    fprintf(out, "%s: note: %d more errors not shown\n", d->path, d->nerrors - DIAG_MAX_ERRORS);
}
