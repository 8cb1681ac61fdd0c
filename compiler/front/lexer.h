/*
** lexer.h — the re2c lexer (grammar/lexer.re) and its contract with the
** Bison parser (grammar/parser.y).
**
** The lexer is reentrant: all of its state lives in a Lexer.  It turns bytes
** into the parser's tokens (parser.h) and decides the two context-dependent
** questions of the language, so that the grammar stays free of them:
**
**   Newlines.  A newline ends a statement (token T_NEWLINE) unless it is
**   inside ( ) or [ ], or follows a binary operator (+ - * / ^), `=` or a
**   comma: then it is skipped.  Runs of newlines and `;` collapse; a
**   T_NEWLINE is supplied before end of file when the last statement lacks
**   one.  A reserved keyword can only start a statement, so a keyword that
**   follows a skipped newline means the previous line was left unfinished:
**   the lexer re-inserts the end of line there (and, for an unclosed
**   bracket, reports it), so one bad line cannot swallow the next statement.
**
**   Brackets.  A `[` that directly follows (no whitespace or comment in
**   between) a name, `)`, `]` or `'` is an index bracket (T_IDX_LBRACK):
**   `v[1]`, `A[i,j]`, `f(x)[2]`, `x'[1]`.  Any other `[` (after a space, an
**   operator, a number or a keyword) is '[' and opens a vector or matrix
**   literal or a unit annotation: `[a, b]`, `param g = 9.81 [m/s^2]`.
**
** Lexical errors (invalid bytes, bad strings and numbers, unclosed brackets)
** are reported to the Diag by the lexer, which then returns T_BAD; the
** parser never reports a T_BAD itself, so each problem is reported once.
** Bracket nesting deeper than AST_MAX_NESTING is fatal: the lexer reports
** "nesting too deep" and returns end of file from then on.
*/
#ifndef EOMC_LEXER_H
#define EOMC_LEXER_H

#include <stddef.h>
#include "front/arena.h"
#include "front/ast.h"
#include "front/diag.h"
#include "parser.h"   /* token kinds, YYSTYPE, YYLTYPE (generated from parser.y) */

/* One token as returned to the parser. */
typedef struct Token {
  int kind;                    /* token kind from parser.h, or a character */
  const unsigned char *start;  /* its bytes in the source (NULL when synthetic at EOF) */
  size_t len;
  YYLTYPE loc;
  YYSTYPE val;
  int at_eof;                  /* a T_NEWLINE supplied at end of file */
} Token;

typedef struct Lexer {
  const unsigned char *src;    /* first byte */
  const unsigned char *lim;    /* one past the last byte; *lim must be '\0' */
  const unsigned char *cur;    /* re2c cursor */
  const unsigned char *marker; /* re2c backtracking marker */
  const unsigned char *tok;    /* start of the token being scanned */
  const unsigned char *line_start;
  int line;
  Arena *arena;                /* names and strings are copied here */
  Diag *diag;

  /* Open brackets: their characters and places, innermost last. */
  char open[AST_MAX_NESTING];
  SrcLoc open_loc[AST_MAX_NESTING];
  int depth;

  Token last;                  /* the token returned most recently */
  Token before_last;           /* the one before it (for "after 'x'" in messages) */
  int cont_pending;            /* a newline was skipped as a continuation... */
  YYLTYPE cont_loc;            /* ...here (the first such newline) */
  Token pend[3];               /* tokens queued to return before scanning on */
  int npend, ipend;
  int at_eof;                  /* end of file returned: keep returning it */
  int fatal;                   /* nesting too deep: the parse stops */
  int recovering;              /* set by the parser while it skips a bad statement:
                                  lexical errors there are follow-on errors, not reported */
} Lexer;

/* Start lexing src[0..len).  src[len] must be '\0' (parse_model() ensures it). */
void lexer_init(Lexer *lx, const char *src, size_t len, Arena *a, Diag *d);

/* Scan the next token: its kind (0 at end of file), value and location. */
int lexer_next(Lexer *lx, YYSTYPE *val, YYLTYPE *loc);

#endif
