/*
** lexer.re — the re2c lexer of the model language.
**
** See compiler/front/lexer.h for the rules it implements (statement-ending
** newlines, index brackets) and its contract with the parser.  The input is
** one NUL-terminated buffer; re2c's end-of-input check (re2c:eof) tells the
** terminating NUL from NUL bytes inside the file, which are errors.
*/
#include "front/lexer.h"

#include <assert.h>
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void lexer_init(Lexer *lx, const char *src, size_t len, Arena *a, Diag *d) {
  memset(lx, 0, sizeof *lx);
  lx->src = (const unsigned char *)src;
  lx->lim = lx->src + len;
  assert(*lx->lim == '\0');
  lx->cur = lx->tok = lx->line_start = lx->src;
  lx->line = 1;
  /* A UTF-8 byte order mark is not text; columns still count its bytes,
  ** as they count every byte of the line. */
  if (len >= 3 && memcmp(src, "\xef\xbb\xbf", 3) == 0) lx->cur += 3;
  lx->arena = a;
  lx->diag = d;
  /* Start as if after an end of line: no statement is open. */
  lx->last.kind = T_NEWLINE;
  lx->before_last.kind = T_NEWLINE;
}

/* ------------------------------------------------------------ helpers */

static SrcLoc loc_at(const Lexer *lx, const unsigned char *p) {
  SrcLoc l = {lx->line, (int)(p - lx->line_start) + 1};
  return l;
}

static YYLTYPE span(const Lexer *lx, const unsigned char *from, const unsigned char *to) {
  YYLTYPE l;
  l.first_line = l.last_line = lx->line;
  l.first_column = (int)(from - lx->line_start) + 1;
  l.last_column = (int)(to - lx->line_start) + (to > from ? 0 : 1);
  return l;
}

/* Report a lexical error, unless the parser is already skipping this statement. */
static void lex_error(Lexer *lx, SrcLoc loc, const char *fmt, ...) DIAG_PRINTF(3, 4);
static void lex_error(Lexer *lx, SrcLoc loc, const char *fmt, ...) {
  if (lx->recovering) return;
  va_list ap;
  va_start(ap, fmt);
  diag_vreport(lx->diag, DIAG_ERROR, loc, fmt, ap);
  va_end(ap);
}

/* The token just scanned, lx->tok .. lx->cur. */
static void finish(Lexer *lx, Token *t, int kind) {
  memset(t, 0, sizeof *t);
  t->kind = kind;
  t->start = lx->tok;
  t->len = (size_t)(lx->cur - lx->tok);
  t->loc = span(lx, lx->tok, lx->cur);
}

/* A token made up by the lexer (an end of line re-inserted, end of file). */
static Token synthetic(int kind, YYLTYPE loc, const unsigned char *at) {
  Token t;
  memset(&t, 0, sizeof t);
  t.kind = kind;
  t.start = at;
  t.len = at ? 1 : 0;
  t.loc = loc;
  return t;
}

static void push_pending(Lexer *lx, Token t) {
  assert(lx->npend < (int)(sizeof lx->pend / sizeof lx->pend[0]));
  lx->pend[lx->npend++] = t;
}

/* Length of the valid UTF-8 sequence at p (1 to 4), or 0 if the bytes are
** not valid UTF-8 (overlong forms and surrogates included). */
static int utf8_len(const unsigned char *p, const unsigned char *lim) {
  unsigned c = p[0];
  int n;
  unsigned min;
  if (c < 0x80) return 1;
  if (c >= 0xc2 && c <= 0xdf) n = 2, min = 0x80;
  else if (c >= 0xe0 && c <= 0xef) n = 3, min = 0x800;
  else if (c >= 0xf0 && c <= 0xf4) n = 4, min = 0x10000;
  else return 0;
  if (lim - p < n) return 0;
  unsigned cp = c & (0x7f >> n);
  for (int i = 1; i < n; i++) {
    if ((p[i] & 0xc0) != 0x80) return 0;
    cp = (cp << 6) | (p[i] & 0x3f);
  }
  if (cp < min || cp > 0x10ffff || (cp >= 0xd800 && cp <= 0xdfff)) return 0;
  return n;
}

/* A byte as it should appear quoted in a message: 'x' or '\x01'. */
static const char *show_byte(unsigned c, char buf[8]) {
  if (c > 0x20 && c < 0x7f) snprintf(buf, 8, "%c", (int)c);
  else snprintf(buf, 8, "\\x%02x", c);
  return buf;
}

/* Does a newline after a token of this kind continue the statement? */
static int continues(int kind) {
  switch (kind) {
    case '+': case '-': case '*': case '/': case '^': case '=': case ',':
      return 1;
    default:
      return 0;
  }
}

/* May a `[` right after a token of this kind index it? */
static int indexable(int kind) {
  switch (kind) {
    case T_NAME: case CW_MASS: case CW_AT: case CW_ON: case CW_ORIENT: case CW_INERTIA: case CW_BOUNCE:
    case ')': case ']': case '\'':
      return 1;
    default:
      return 0;
  }
}

static void report_unclosed(Lexer *lx) {
  assert(lx->depth > 0);
  char c = lx->open[lx->depth - 1];
  lex_error(lx, lx->open_loc[lx->depth - 1], "'%c' is never closed: expected '%c'",
            c, c == '(' ? ')' : ']');
}

static int open_bracket(Lexer *lx, Token *t, int kind) {
  finish(lx, t, kind);
  if (lx->depth == AST_MAX_NESTING) {
    /* Fatal whatever the parser's state: report even while recovering. */
    diag_error(lx->diag, loc_at(lx, lx->tok),
               "nesting too deep: more than %d brackets open at once", AST_MAX_NESTING);
    lx->fatal = 1;
    t->kind = T_BAD;
    return T_BAD;
  }
  lx->open[lx->depth] = (char)*lx->tok;
  lx->open_loc[lx->depth] = loc_at(lx, lx->tok);
  lx->depth++;
  return kind;
}

static int close_bracket(Lexer *lx, Token *t) {
  finish(lx, t, *lx->tok);
  if (lx->depth > 0) lx->depth--;   /* a mismatch is the parser's to report */
  return t->kind;
}

/* A reserved keyword.  Keywords only start statements, so one that follows a
** newline skipped as a continuation ends the unfinished statement before it. */
static int keyword(Lexer *lx, Token *t, int kind) {
  finish(lx, t, kind);
  if (!lx->cont_pending) return kind;
  Token kw = *t;
  Token nl = synthetic(T_NEWLINE, lx->cont_loc, NULL);
  lx->cont_pending = 0;
  if (lx->depth > 0) {
    report_unclosed(lx);
    lx->depth = 0;
    *t = kw;
    t->kind = T_BAD;
    push_pending(lx, nl);
    push_pending(lx, kw);
    return T_BAD;
  }
  *t = nl;
  push_pending(lx, kw);
  return T_NEWLINE;
}

static int name_token(Lexer *lx, Token *t, int kind) {
  finish(lx, t, kind);
  t->val.str = arena_strndup(lx->arena, (const char *)lx->tok, t->len);
  return kind;
}

static int number_token(Lexer *lx, Token *t) {
  finish(lx, t, T_NUMBER);
  char small[64];
  char *buf = t->len < sizeof small ? small : malloc(t->len + 1);
  if (!buf) abort();
  memcpy(buf, lx->tok, t->len);
  buf[t->len] = '\0';
  errno = 0;
  double v = strtod(buf, NULL);
  int overflow = errno == ERANGE && isinf(v);
  if (buf != small) free(buf);
  if (overflow) {
    lex_error(lx, loc_at(lx, lx->tok), "number out of range: '%.*s%s'",
              t->len > 40 ? 40 : (int)t->len, (const char *)lx->tok, t->len > 40 ? "..." : "");
    t->kind = T_BAD;
    return T_BAD;
  }
  t->val.num = v;   /* an underflow to 0 or a subnormal is kept */
  return T_NUMBER;
}

/* A "..." description; lx->cur is just past the opening quote. */
static int string_token(Lexer *lx, Token *t) {
  const unsigned char *open = lx->tok, *p = lx->cur;
  int bad = 0;
  for (;;) {
    if (p == lx->lim || *p == '\n' || (*p == '\\' && (p + 1 == lx->lim || p[1] == '\n'))) {
      lx->cur = p;
      finish(lx, t, T_BAD);
      lex_error(lx, loc_at(lx, open),
                "unterminated string: a description must end with '\"' on the line where it starts");
      return T_BAD;
    }
    unsigned c = *p;
    if (c == '"') break;
    if (c == '\\') {
      if (!strchr("\"\\nt", p[1]) || p[1] == '\0') {
        char b[8];
        if (!bad) lex_error(lx, loc_at(lx, p), "invalid escape '\\%s' in string (use \\\" \\\\ \\n or \\t)",
                            show_byte(p[1], b));
        bad = 1;
      }
      p += 2;
    } else if (c < 0x20 && c != '\t') {
      char b[8];
      if (!bad) lex_error(lx, loc_at(lx, p), "invalid character '%s' in string", show_byte(c, b));
      bad = 1;
      p++;
    } else if (c >= 0x80) {
      int n = utf8_len(p, lx->lim);
      if (!n) {
        if (!bad) lex_error(lx, loc_at(lx, p), "invalid byte 0x%02x in string: the file is not valid UTF-8", c);
        bad = 1;
        n = 1;
      }
      p += n;
    } else {
      p++;
    }
  }
  lx->cur = p + 1;
  finish(lx, t, bad ? T_BAD : T_STRING);
  if (bad) return T_BAD;
  /* Unescape: the text is never longer than the quoted source. */
  char *s = arena_alloc(lx->arena, (size_t)(p - open));
  size_t n = 0;
  for (const unsigned char *q = open + 1; q < p; q++) {
    if (*q == '\\') {
      q++;
      s[n++] = *q == 'n' ? '\n' : *q == 't' ? '\t' : (char)*q;
    } else {
      s[n++] = (char)*q;
    }
  }
  s[n] = '\0';
  t->val.str = s;
  return T_STRING;
}

static int invalid_char(Lexer *lx, Token *t) {
  unsigned c = *lx->tok;
  char b[8];
  if (c >= 0x80) {
    int n = utf8_len(lx->tok, lx->lim);
    if (n) {
      lx->cur = lx->tok + n;
      lex_error(lx, loc_at(lx, lx->tok),
                "invalid character '%.*s': names use only ASCII letters, digits and '_'",
                n, (const char *)lx->tok);
    } else {
      lex_error(lx, loc_at(lx, lx->tok), "invalid byte 0x%02x: the file is not valid UTF-8", c);
    }
  } else {
    lex_error(lx, loc_at(lx, lx->tok), "invalid character '%s'", show_byte(c, b));
  }
  finish(lx, t, T_BAD);
  return T_BAD;
}

static int end_of_file(Lexer *lx, Token *t) {
  YYLTYPE here = span(lx, lx->cur, lx->cur);
  if (lx->depth > 0) {
    report_unclosed(lx);
    lx->depth = 0;
    *t = synthetic(T_BAD, here, NULL);
    Token nl = synthetic(T_NEWLINE, here, NULL);
    nl.at_eof = 1;
    push_pending(lx, nl);
    return T_BAD;
  }
  if (lx->last.kind != T_NEWLINE && lx->last.kind != ';') {
    /* Close the last statement, which has no end of line: where its line
    ** ends if that newline was taken as a continuation. */
    *t = synthetic(T_NEWLINE, lx->cont_pending ? lx->cont_loc : here, NULL);
    t->at_eof = 1;
    return T_NEWLINE;
  }
  *t = synthetic(YYEOF, here, NULL);
  lx->at_eof = 1;
  return YYEOF;
}

/* ------------------------------------------------------------ scanner */

/*!re2c
  re2c:define:YYCTYPE = "unsigned char";
  re2c:define:YYCURSOR = "lx->cur";
  re2c:define:YYMARKER = "lx->marker";
  re2c:define:YYLIMIT = "lx->lim";
  re2c:yyfill:enable = 0;
  re2c:eof = 0;

  dig  = [0-9];
  expo = [eE] [+-]? dig+;
  num  = (dig+ ("." dig*)? | "." dig+) expo?;
  name = [A-Za-z_] [A-Za-z0-9_]*;
*/

static int scan(Lexer *lx, Token *t) {
  for (;;) {
    lx->tok = lx->cur;
    /*!re2c
      $               { return end_of_file(lx, t); }
      [ \t\r]+        { continue; }
      "#" [^\n]*      { continue; }
      "\n" {
        YYLTYPE here = span(lx, lx->tok, lx->cur);
        const unsigned char *at = lx->tok;
        lx->line++;
        lx->line_start = lx->cur;
        if (lx->depth > 0 || continues(lx->last.kind)) {
          if (!lx->cont_pending) {
            lx->cont_pending = 1;
            lx->cont_loc = here;
          }
          continue;
        }
        if (lx->last.kind == T_NEWLINE || lx->last.kind == ';') continue;
        *t = synthetic(T_NEWLINE, here, at);
        return T_NEWLINE;
      }

      "model"       { return keyword(lx, t, KW_MODEL); }
      "coord"       { return keyword(lx, t, KW_COORD); }
      "param"       { return keyword(lx, t, KW_PARAM); }
      "const"       { return keyword(lx, t, KW_CONST); }
      "input"       { return keyword(lx, t, KW_INPUT); }
      "let"         { return keyword(lx, t, KW_LET); }
      "initial"     { return keyword(lx, t, KW_INITIAL); }
      "output"      { return keyword(lx, t, KW_OUTPUT); }
      "frame"       { return keyword(lx, t, KW_FRAME); }
      "attitude"    { return keyword(lx, t, KW_ATTITUDE); }
      "identify"    { return keyword(lx, t, KW_IDENTIFY); }
      "kinetic"     { return keyword(lx, t, KW_KINETIC); }
      "potential"   { return keyword(lx, t, KW_POTENTIAL); }
      "lagrangian"  { return keyword(lx, t, KW_LAGRANGIAN); }
      "dissipation" { return keyword(lx, t, KW_DISSIPATION); }
      "force"       { return keyword(lx, t, KW_FORCE); }
      "torque"      { return keyword(lx, t, KW_TORQUE); }
      "gravity"     { return keyword(lx, t, KW_GRAVITY); }
      "body"        { return keyword(lx, t, KW_BODY); }
      "constraint"  { return keyword(lx, t, KW_CONSTRAINT); }
      "stop"        { return keyword(lx, t, KW_STOP); }

      "mass"        { return name_token(lx, t, CW_MASS); }
      "at"          { return name_token(lx, t, CW_AT); }
      "on"          { return name_token(lx, t, CW_ON); }
      "orient"      { return name_token(lx, t, CW_ORIENT); }
      "inertia"     { return name_token(lx, t, CW_INERTIA); }
      "bounce"      { return name_token(lx, t, CW_BOUNCE); }
      name          { return name_token(lx, t, T_NAME); }

      num           { return number_token(lx, t); }
      num [eE] [+-]? {
        finish(lx, t, T_BAD);
        lex_error(lx, loc_at(lx, lx->tok), "malformed number '%.*s': the exponent needs digits",
                  t->len > 40 ? 40 : (int)t->len, (const char *)lx->tok);
        return T_BAD;
      }

      "\""          { return string_token(lx, t); }

      "("           { return open_bracket(lx, t, '('); }
      "[" {
        int idx = lx->last.start && lx->last.start + lx->last.len == lx->tok
                  && indexable(lx->last.kind);
        return open_bracket(lx, t, idx ? T_IDX_LBRACK : '[');
      }
      ")" | "]"     { return close_bracket(lx, t); }
      ";" {
        /* Empty statements: a `;` after an end of statement is dropped. */
        if (lx->depth == 0 && (lx->last.kind == T_NEWLINE || lx->last.kind == ';')) continue;
        finish(lx, t, ';');
        return ';';
      }
      ">="          { finish(lx, t, T_GE); return T_GE; }
      [-+*/^=,']    { finish(lx, t, *lx->tok); return t->kind; }

      *             { return invalid_char(lx, t); }
    */
  }
}

int lexer_next(Lexer *lx, YYSTYPE *val, YYLTYPE *loc) {
  Token t;
  if (lx->ipend < lx->npend) {
    t = lx->pend[lx->ipend++];
    if (lx->ipend == lx->npend) lx->ipend = lx->npend = 0;
  } else if (lx->at_eof || lx->fatal) {
    t = synthetic(YYEOF, span(lx, lx->cur, lx->cur), NULL);
  } else {
    scan(lx, &t);
  }
  lx->cont_pending = 0;
  lx->before_last = lx->last;
  lx->last = t;
  *val = t.val;
  *loc = t.loc;
  return t.kind;
}
