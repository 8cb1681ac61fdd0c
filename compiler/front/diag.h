/*
** diag.h — diagnostics: errors and warnings collected as data.
**
** Every stage reports through a Diag; nothing prints or exits on its own.
** The driver prints the collected messages at the end as
**   FILE:LINE:COL: error: message
**       source line
**       ^
** At most one error per source line is kept (the first): later ones on the
** same line are almost always follow-on errors.
*/
#ifndef EOMC_DIAG_H
#define EOMC_DIAG_H

#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include "front/ast.h"

typedef enum DiagLevel { DIAG_ERROR, DIAG_WARNING, DIAG_NOTE } DiagLevel;

typedef struct DiagMsg {
  DiagLevel level;
  SrcLoc loc;            /* line 0: not tied to a place in the file */
  char *text;
} DiagMsg;

typedef struct Diag {
  const char *path;      /* file name printed in messages */
  const char *src;       /* the file's bytes (not owned), may be NULL */
  size_t len;
  DiagMsg *msgs;
  int nmsgs, cap;
  int nerrors, nwarnings;
  int last_error_line;   /* for suppression of follow-on errors */
  int errors_only;       /* diag_print() leaves out warnings and notes (--quiet) */
} Diag;

/* Most errors kept before the rest are summarised in one line. */
#define DIAG_MAX_ERRORS 50

#if defined(__GNUC__)
#define DIAG_PRINTF(f, a) __attribute__((format(printf, f, a)))
#else
#define DIAG_PRINTF(f, a)
#endif

void diag_init(Diag *d, const char *path, const char *src, size_t len);
void diag_free(Diag *d);
void diag_report(Diag *d, DiagLevel level, SrcLoc loc, const char *fmt, ...) DIAG_PRINTF(4, 5);
void diag_vreport(Diag *d, DiagLevel level, SrcLoc loc, const char *fmt, va_list ap);
#define diag_error(d, loc, ...) diag_report((d), DIAG_ERROR, (loc), __VA_ARGS__)
#define diag_warning(d, loc, ...) diag_report((d), DIAG_WARNING, (loc), __VA_ARGS__)
#define diag_note(d, loc, ...) diag_report((d), DIAG_NOTE, (loc), __VA_ARGS__)

/* Print every message in the order reported, each with its source line and caret. */
void diag_print(const Diag *d, FILE *out);
/* The same for the messages from index `first` on (those not printed yet). */
void diag_print_from(const Diag *d, int first, FILE *out);

#endif
