/*
** test_lexer.c — the re2c lexer: tokens, locations, numbers, strings, the
** newline continuation rules, the index-bracket rule, bad bytes, limits.
**
** The expected token streams follow the language reference (docs/language.md,
** "Lexical structure"), written down by hand for each input.
*/
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "front/keywords.h"
#include "front/lexer.h"

/* A lexed input: its tokens, values and locations, and the diagnostics. */
typedef struct Lexed {
  int kind[4096];
  YYSTYPE val[4096];
  YYLTYPE loc[4096];
  int n;
  Arena *arena;
  Diag diag;
  char *text;
} Lexed;

static Lexed *lex_n(const char *src, size_t len) {
  Lexed *x = calloc(1, sizeof *x);
  ck_assert_ptr_nonnull(x);
  x->text = malloc(len + 1);
  memcpy(x->text, src, len);
  x->text[len] = '\0';
  x->arena = arena_new();
  diag_init(&x->diag, "t.eom", x->text, len);
  Lexer *lx = malloc(sizeof *lx);
  lexer_init(lx, x->text, len, x->arena, &x->diag);
  for (;;) {
    ck_assert_int_lt(x->n, 4096);
    int k = lexer_next(lx, &x->val[x->n], &x->loc[x->n]);
    x->kind[x->n++] = k;
    if (k == YYEOF) break;
  }
  /* End of file is sticky. */
  YYSTYPE v;
  YYLTYPE l;
  ck_assert_int_eq(lexer_next(lx, &v, &l), YYEOF);
  free(lx);
  return x;
}

static Lexed *lex(const char *src) { return lex_n(src, strlen(src)); }

static void lexed_free(Lexed *x) {
  arena_free(x->arena);
  diag_free(&x->diag);
  free(x->text);
  free(x);
}

/* The token kinds must be exactly `want` (terminated by -1; YYEOF implied). */
static void expect_kinds(const Lexed *x, const int *want) {
  int i = 0;
  for (; want[i] != -1; i++) {
    ck_assert_msg(i < x->n, "token %d missing", i);
    ck_assert_msg(x->kind[i] == want[i], "token %d: kind %d, expected %d", i, x->kind[i], want[i]);
  }
  ck_assert_int_eq(x->n, i + 1);
  ck_assert_int_eq(x->kind[i], YYEOF);
}

static int first_error_has(const Lexed *x, const char *text) {
  return x->diag.nmsgs > 0 && strstr(x->diag.msgs[0].text, text) != NULL;
}

#define END -1
#define NL T_NEWLINE

START_TEST(declaration_tokens) {
  Lexed *x = lex("param m = 1.5 [kg] \"seat mass\"\n");
  int want[] = {KW_PARAM, T_NAME, '=', T_NUMBER, '[', T_NAME, ']', T_STRING, NL, END};
  expect_kinds(x, want);
  ck_assert_str_eq(x->val[1].str, "m");
  ck_assert_double_eq(x->val[3].num, 1.5);
  ck_assert_str_eq(x->val[5].str, "kg");
  ck_assert_str_eq(x->val[7].str, "seat mass");
  ck_assert_int_eq(x->diag.nerrors, 0);
  lexed_free(x);
}
END_TEST

START_TEST(every_keyword_and_operator) {
  Lexed *x = lex("model coord param const input let initial output identify kinetic "
                 "potential lagrangian dissipation force torque gravity body constraint\n"
                 "+ - * / ^ = , ; ' ( ) ]");
  int want[] = {KW_MODEL, KW_COORD, KW_PARAM, KW_CONST, KW_INPUT, KW_LET, KW_INITIAL,
                KW_OUTPUT, KW_IDENTIFY, KW_KINETIC, KW_POTENTIAL, KW_LAGRANGIAN,
                KW_DISSIPATION, KW_FORCE, KW_TORQUE, KW_GRAVITY, KW_BODY, KW_CONSTRAINT, NL,
                '+', '-', '*', '/', '^', '=', ',', ';', '\'', '(', ')', ']', NL, END};
  expect_kinds(x, want);
  lexed_free(x);
}
END_TEST

/* Every word of the table lexes as its token, alone and in a statement. */
START_TEST(every_word_of_the_table) {
  static const struct { int token; const char *spelling; } words[] = {
#define WORD(token, spelling) {token, spelling},
    EOM_WORDS(WORD, WORD)
#undef WORD
  };
  for (size_t i = 0; i < sizeof words / sizeof words[0]; i++) {
    char text[64];
    snprintf(text, sizeof text, "%s %sx x%s", words[i].spelling, words[i].spelling,
             words[i].spelling);
    Lexed *x = lex(text);
    int want[] = {words[i].token, T_NAME, T_NAME, NL, END};
    expect_kinds(x, want);
    lexed_free(x);
  }
}
END_TEST

/* The words a document lists between `from` and `to` (malloc'd): in
** Markdown the words of that stretch of text (which sits inside one code
** span), in troff the word after each .B or .BR at a line's start. */
static char **words_between(const char *text, const char *from, const char *to, int troff,
                            int *n) {
  const char *a = strstr(text, from);
  ck_assert_msg(a != NULL, "no '%s' in the document", from);
  a += strlen(from);
  const char *b = strstr(a, to);
  ck_assert_msg(b != NULL, "no '%s' after '%s'", to, from);
  char **w = calloc(64, sizeof *w);
  ck_assert_ptr_nonnull(w);
  *n = 0;
  for (const char *p = a; p < b;) {
    if (troff) { /* to the next ".B word" or ".BR word" */
      const char *m = strstr(p, "\n.B");
      if (!m || m >= b) break;
      p = m + 3;
      if (*p == 'R') p++;
      if (*p != ' ') continue;
    }
    while (p < b && !(*p >= 'a' && *p <= 'z')) p++;
    const char *e = p;
    while (e < b && ((*e >= 'a' && *e <= 'z') || *e == '_')) e++;
    if (e > p) {
      ck_assert_int_lt(*n, 63);
      char *word = malloc((size_t)(e - p) + 1);
      ck_assert_ptr_nonnull(word);
      memcpy(word, p, (size_t)(e - p));
      word[e - p] = '\0';
      w[(*n)++] = word;
    }
    p = e;
  }
  return w;
}

static int listed(char **w, int n, const char *word) {
  for (int i = 0; i < n; i++)
    if (strcmp(w[i], word) == 0) return 1;
  return 0;
}

static void free_words(char **w, int n) {
  for (int i = 0; i < n; i++) free(w[i]);
  free(w);
}

/* The reference pages list exactly the table's words: the reserved words
** and the context words, in docs/language.md ("Lexical structure") and in
** docs/eom.5 (LEXICAL STRUCTURE). */
static void check_doc(const char *file, int troff, const char *kw_from, const char *kw_to,
                      const char *cw_from, const char *cw_to) {
  char path[4096];
  snprintf(path, sizeof path, "%s/docs/%s", SRCDIR, file);
  FILE *f = fopen(path, "rb");
  ck_assert_msg(f != NULL, "cannot open %s", path);
  static char text[1 << 20];
  size_t len = fread(text, 1, sizeof text - 1, f);
  fclose(f);
  text[len] = '\0';
  int nk, nc, nkw = 0, ncw = 0;
  char **kw = words_between(text, kw_from, kw_to, troff, &nk);
  char **cw = words_between(text, cw_from, cw_to, troff, &nc);
#define IN_KEYWORDS(token, spelling) \
  nkw++;                             \
  ck_assert_msg(listed(kw, nk, spelling), "%s does not list the keyword '%s'", file, spelling);
#define IN_CONTEXT_WORDS(token, spelling) \
  ncw++;                                  \
  ck_assert_msg(listed(cw, nc, spelling), "%s does not list the word '%s'", file, spelling);
  EOM_WORDS(IN_KEYWORDS, IN_CONTEXT_WORDS)
#undef IN_KEYWORDS
#undef IN_CONTEXT_WORDS
  ck_assert_msg(nk == nkw, "%s lists %d reserved words, the language has %d", file, nk, nkw);
  ck_assert_msg(nc == ncw, "%s lists %d context words, the language has %d", file, nc, ncw);
  free_words(kw, nk);
  free_words(cw, nc);
}

START_TEST(docs_list_the_words_of_the_table) {
  check_doc("language.md", 0, "Reserved words: `", "`.", "The words `", "`");
  check_doc("eom.5", 1, "Reserved words:", "The words", "The words", "mean something");
}
END_TEST

START_TEST(names_contextual_words_and_prefixes) {
  /* Words that merely start with a keyword are names; mass/at/on/orient/
  ** inertia are their own tokens but still carry their text; t and pi are names. */
  Lexed *x = lex("models letter _x9 mass at on orient inertia t pi masses");
  int want[] = {T_NAME, T_NAME, T_NAME, CW_MASS, CW_AT, CW_ON, CW_ORIENT, CW_INERTIA,
                T_NAME, T_NAME, T_NAME, NL, END};
  expect_kinds(x, want);
  ck_assert_str_eq(x->val[0].str, "models");
  ck_assert_str_eq(x->val[2].str, "_x9");
  ck_assert_str_eq(x->val[3].str, "mass");
  ck_assert_str_eq(x->val[7].str, "inertia");
  ck_assert_str_eq(x->val[10].str, "masses");
  lexed_free(x);
}
END_TEST

START_TEST(locations) {
  Lexed *x = lex("coord x\n\n  kinetic 1/2*m*x'^2\n\tlet y = x");
  /* coord x NL kinetic 1 / 2 * m * x ' ^ 2 NL let y = x NL */
  ck_assert_int_eq(x->loc[0].first_line, 1);
  ck_assert_int_eq(x->loc[0].first_column, 1);
  ck_assert_int_eq(x->loc[0].last_column, 5);
  ck_assert_int_eq(x->loc[1].first_column, 7);
  ck_assert_int_eq(x->kind[2], NL);
  ck_assert_int_eq(x->loc[2].first_line, 1);
  ck_assert_int_eq(x->loc[2].first_column, 8);
  ck_assert_int_eq(x->kind[3], KW_KINETIC);
  ck_assert_int_eq(x->loc[3].first_line, 3);
  ck_assert_int_eq(x->loc[3].first_column, 3);
  ck_assert_int_eq(x->kind[11], '\'');
  ck_assert_int_eq(x->loc[11].first_column, 18);
  ck_assert_int_eq(x->kind[15], KW_LET);
  ck_assert_int_eq(x->loc[15].first_line, 4);
  ck_assert_int_eq(x->loc[15].first_column, 2);   /* columns count bytes: a tab is one */
  lexed_free(x);
}
END_TEST

START_TEST(numbers) {
  Lexed *x = lex("2 0.5 3e-4 .5 1E+2 7. 6.02e23 0");
  double want[] = {2, 0.5, 3e-4, .5, 1e2, 7, 6.02e23, 0};
  for (int i = 0; i < 8; i++) {
    ck_assert_int_eq(x->kind[i], T_NUMBER);
    ck_assert_double_eq(x->val[i].num, want[i]);
  }
  ck_assert_int_eq(x->kind[8], NL);
  ck_assert_int_eq(x->diag.nerrors, 0);
  lexed_free(x);
}
END_TEST

START_TEST(number_boundaries) {
  /* No hex or special values: 0x10 is 0 then the name x10; 2x is 2 then x. */
  Lexed *x = lex("0x10 2x 1.2.3");
  int want[] = {T_NUMBER, T_NAME, T_NUMBER, T_NAME, T_NUMBER, T_NUMBER, NL, END};
  expect_kinds(x, want);
  ck_assert_str_eq(x->val[1].str, "x10");
  ck_assert_double_eq(x->val[4].num, 1.2);
  ck_assert_double_eq(x->val[5].num, 0.3);
  lexed_free(x);
}
END_TEST

START_TEST(number_out_of_range) {
  Lexed *x = lex("kinetic 1e999");
  ck_assert_int_eq(x->kind[1], T_BAD);
  ck_assert_int_eq(x->diag.nerrors, 1);
  ck_assert(first_error_has(x, "number out of range"));
  ck_assert_int_eq(x->diag.msgs[0].loc.col, 9);
  lexed_free(x);
  /* Underflow is not an error: the value is (nearly) zero. */
  x = lex("1e-400");
  ck_assert_int_eq(x->kind[0], T_NUMBER);
  ck_assert(x->val[0].num < 1e-300);
  ck_assert_int_eq(x->diag.nerrors, 0);
  lexed_free(x);
}
END_TEST

START_TEST(malformed_exponent) {
  Lexed *x = lex("let a = 2e+");
  ck_assert_int_eq(x->kind[3], T_BAD);
  ck_assert(first_error_has(x, "malformed number '2e+'"));
  lexed_free(x);
}
END_TEST

START_TEST(strings_and_escapes) {
  Lexed *x = lex("\"a \\\"q\\\" b\\\\c\\nd\\te\" \"\" \"angle θ in rad\"");
  ck_assert_int_eq(x->kind[0], T_STRING);
  ck_assert_str_eq(x->val[0].str, "a \"q\" b\\c\nd\te");
  ck_assert_int_eq(x->kind[1], T_STRING);
  ck_assert_str_eq(x->val[1].str, "");
  ck_assert_int_eq(x->kind[2], T_STRING);
  ck_assert_str_eq(x->val[2].str, "angle θ in rad");   /* UTF-8 is fine in text */
  ck_assert_int_eq(x->diag.nerrors, 0);
  lexed_free(x);
}
END_TEST

START_TEST(unterminated_strings) {
  Lexed *x = lex("coord x \"no end\ncoord y");
  ck_assert_int_eq(x->kind[2], T_BAD);
  ck_assert(first_error_has(x, "unterminated string"));
  ck_assert_int_eq(x->diag.msgs[0].loc.line, 1);
  ck_assert_int_eq(x->diag.msgs[0].loc.col, 9);
  /* The newline is still a token: the next line lexes normally. */
  ck_assert_int_eq(x->kind[3], NL);
  ck_assert_int_eq(x->kind[4], KW_COORD);
  lexed_free(x);
  x = lex("coord x \"at end of file");
  ck_assert_int_eq(x->kind[2], T_BAD);
  ck_assert(first_error_has(x, "unterminated string"));
  lexed_free(x);
  x = lex("coord x \"backslash at end\\");
  ck_assert_int_eq(x->kind[2], T_BAD);
  ck_assert(first_error_has(x, "unterminated string"));
  lexed_free(x);
}
END_TEST

START_TEST(bad_string_contents) {
  Lexed *x = lex("\"bad \\q escape\"");
  ck_assert_int_eq(x->kind[0], T_BAD);
  ck_assert(first_error_has(x, "invalid escape '\\q'"));
  ck_assert_int_eq(x->diag.msgs[0].loc.col, 6);
  lexed_free(x);
  x = lex("\"latin-1 \xe9t\xe9\"");
  ck_assert_int_eq(x->kind[0], T_BAD);
  ck_assert(first_error_has(x, "invalid byte 0xe9"));
  ck_assert_int_eq(x->diag.nerrors, 1);   /* one string, one error */
  lexed_free(x);
  x = lex_n("\"nul\0inside\"", 12);
  ck_assert_int_eq(x->kind[0], T_BAD);
  ck_assert(first_error_has(x, "invalid character '\\x00'"));
  lexed_free(x);
}
END_TEST

START_TEST(comments_and_blank_lines) {
  /* Comments run to the end of the line; blank lines, comment lines and
  ** `;` runs give one end of statement; end of file closes the last line. */
  Lexed *x = lex("# header\n\ncoord x # the travel\n\n# more\n;;\nkinetic x'^2");
  int want[] = {KW_COORD, T_NAME, NL, KW_KINETIC, T_NAME, '\'', '^', T_NUMBER, NL, END};
  expect_kinds(x, want);
  lexed_free(x);
  x = lex("");
  int none[] = {END};
  expect_kinds(x, none);
  lexed_free(x);
  x = lex("\n\n# only a comment");
  expect_kinds(x, none);
  lexed_free(x);
}
END_TEST

START_TEST(semicolons) {
  Lexed *x = lex("initial x = 1; initial x' = 0;\n");
  int want[] = {KW_INITIAL, T_NAME, '=', T_NUMBER, ';', KW_INITIAL, T_NAME, '\'', '=',
                T_NUMBER, ';', END};
  expect_kinds(x, want);
  lexed_free(x);
}
END_TEST

START_TEST(newline_continuation) {
  /* After + - * / ^ = and ',' a newline continues the statement. */
  Lexed *x = lex("let a = b +\n c -\n d *\n e /\n f ^\n g\nlet h =\n 1\ncoord p,\n q\n");
  int want[] = {KW_LET, T_NAME, '=', T_NAME, '+', T_NAME, '-', T_NAME, '*', T_NAME, '/',
                T_NAME, '^', T_NAME, NL, KW_LET, T_NAME, '=', T_NUMBER, NL, KW_COORD, T_NAME,
                ',', T_NAME, NL, END};
  expect_kinds(x, want);
  lexed_free(x);
  /* Inside brackets too, even after an operand, with comments between. */
  x = lex("let v = [a # first\n\n  b]\nkinetic (x\n)\n");
  int want2[] = {KW_LET, T_NAME, '=', '[', T_NAME, T_NAME, ']', NL, KW_KINETIC, '(', T_NAME,
                 ')', NL, END};
  expect_kinds(x, want2);
  lexed_free(x);
  /* But not after an operand or a keyword outside brackets. */
  x = lex("kinetic\nx\n");
  int want3[] = {KW_KINETIC, NL, T_NAME, NL, END};
  expect_kinds(x, want3);
  lexed_free(x);
}
END_TEST

START_TEST(keyword_ends_unfinished_line) {
  /* A keyword after a continued newline: the end of line goes back where
  ** the unfinished line ended. */
  Lexed *x = lex("kinetic a +\npotential b\n");
  int want[] = {KW_KINETIC, T_NAME, '+', NL, KW_POTENTIAL, T_NAME, NL, END};
  expect_kinds(x, want);
  ck_assert_int_eq(x->loc[3].first_line, 1);
  ck_assert_int_eq(x->loc[3].first_column, 12);
  ck_assert_int_eq(x->diag.nerrors, 0);   /* the parser reports the missing operand */
  lexed_free(x);
  /* With a bracket left open, the lexer reports the bracket. */
  x = lex("kinetic f(a,\n  b\npotential c\n");
  int want2[] = {KW_KINETIC, T_NAME, '(', T_NAME, ',', T_NAME, T_BAD, NL, KW_POTENTIAL,
                 T_NAME, NL, END};
  expect_kinds(x, want2);
  ck_assert_int_eq(x->diag.nerrors, 1);
  ck_assert(first_error_has(x, "'(' is never closed"));
  ck_assert_int_eq(x->diag.msgs[0].loc.line, 1);
  ck_assert_int_eq(x->diag.msgs[0].loc.col, 10);
  lexed_free(x);
}
END_TEST

START_TEST(unclosed_at_end_of_file) {
  Lexed *x = lex("let v = [1, 2");
  ck_assert_int_eq(x->kind[7], T_BAD);
  ck_assert_int_eq(x->kind[8], NL);
  ck_assert_int_eq(x->kind[9], YYEOF);
  ck_assert(first_error_has(x, "'[' is never closed"));
  ck_assert_int_eq(x->diag.msgs[0].loc.col, 9);
  lexed_free(x);
}
END_TEST

START_TEST(index_bracket_rule) {
  /* `[` touching a name, `)`, `]` or `'` indexes; any other `[` opens a
  ** literal or a unit. */
  Lexed *x = lex("v[1] v [1] f(x)[2] A[1][2] x'[3] 2[m] [a][1] kinetic[1] mass[1] (v)\n[1]");
  int want[] = {T_NAME, T_IDX_LBRACK, T_NUMBER, ']',
                T_NAME, '[', T_NUMBER, ']',
                T_NAME, '(', T_NAME, ')', T_IDX_LBRACK, T_NUMBER, ']',
                T_NAME, T_IDX_LBRACK, T_NUMBER, ']', T_IDX_LBRACK, T_NUMBER, ']',
                T_NAME, '\'', T_IDX_LBRACK, T_NUMBER, ']',
                T_NUMBER, '[', T_NAME, ']',
                '[', T_NAME, ']', T_IDX_LBRACK, T_NUMBER, ']',
                KW_KINETIC, '[', T_NUMBER, ']',
                CW_MASS, T_IDX_LBRACK, T_NUMBER, ']',
                '(', T_NAME, ')', NL, '[', T_NUMBER, ']', NL, END};
  expect_kinds(x, want);
  lexed_free(x);
  /* Only contact counts: a comment or newline before the `)` does not matter,
  ** a comment between `)` and `[` does. */
  x = lex("let a = (v #\n)[1]\nlet b = [(v) #\n[1]]");
  ck_assert_int_eq(x->kind[6], T_IDX_LBRACK);
  ck_assert_int_eq(x->kind[16], ')');
  ck_assert_int_eq(x->kind[17], '[');
  lexed_free(x);
}
END_TEST

START_TEST(invalid_bytes) {
  Lexed *x = lex("kinetic \x01 x");
  ck_assert_int_eq(x->kind[1], T_BAD);
  ck_assert(first_error_has(x, "invalid character '\\x01'"));
  ck_assert_int_eq(x->diag.msgs[0].loc.col, 9);
  ck_assert_int_eq(x->kind[2], T_NAME);   /* lexing goes on after the bad byte */
  lexed_free(x);

  x = lex("let a = b $ c");
  ck_assert(first_error_has(x, "invalid character '$'"));
  lexed_free(x);

  x = lex("let a = \xff\xfe");
  ck_assert_int_eq(x->kind[3], T_BAD);
  ck_assert_int_eq(x->kind[4], T_BAD);
  ck_assert(first_error_has(x, "invalid byte 0xff"));
  lexed_free(x);

  /* Valid UTF-8 is one bad character, not several bytes. */
  x = lex("let θ = 1");
  ck_assert_int_eq(x->kind[1], T_BAD);
  ck_assert_int_eq(x->kind[2], '=');
  ck_assert(first_error_has(x, "invalid character 'θ'"));
  lexed_free(x);

  /* Overlong encodings and lone continuation bytes are not UTF-8. */
  x = lex("\xc0\xaf \x80 \xed\xa0\x80");
  ck_assert(first_error_has(x, "invalid byte 0xc0"));
  lexed_free(x);

  /* A NUL byte inside the file is an invalid character, not the end. */
  x = lex_n("coord x\0 y\n", 11);
  int want[] = {KW_COORD, T_NAME, T_BAD, T_NAME, NL, END};
  expect_kinds(x, want);
  ck_assert(first_error_has(x, "invalid character '\\x00'"));
  lexed_free(x);
}
END_TEST

START_TEST(nesting_limit) {
  char buf[2 * AST_MAX_NESTING + 64];
  /* Exactly AST_MAX_NESTING open brackets are fine. */
  int n = 0;
  n += sprintf(buf + n, "kinetic ");
  for (int i = 0; i < AST_MAX_NESTING; i++) buf[n++] = i % 2 ? '[' : '(';
  buf[n] = '\0';
  Lexed *x = lex(buf);
  ck_assert(first_error_has(x, "is never closed"));   /* but not "too deep" */
  lexed_free(x);
  /* One more is fatal: an error, then end of file at once. */
  n = sprintf(buf, "kinetic ");
  for (int i = 0; i <= AST_MAX_NESTING; i++) buf[n++] = '(';
  strcpy(buf + n, "x)\ncoord y\n");
  x = lex(buf);
  ck_assert_int_eq(x->n, AST_MAX_NESTING + 3);
  ck_assert_int_eq(x->kind[AST_MAX_NESTING + 1], T_BAD);
  ck_assert_int_eq(x->kind[AST_MAX_NESTING + 2], YYEOF);
  ck_assert_int_eq(x->diag.nerrors, 1);
  ck_assert(first_error_has(x, "nesting too deep"));
  ck_assert_int_eq(x->diag.msgs[0].loc.col, 9 + AST_MAX_NESTING);
  lexed_free(x);
}
END_TEST

START_TEST(hundred_thousand_brackets) {
  size_t n = 100000;
  char *buf = malloc(2 * n + 16);
  memset(buf, '(', n);
  buf[n] = 'x';
  memset(buf + n + 1, ')', n);
  buf[2 * n + 1] = '\0';
  Lexed *x = lex(buf);
  ck_assert_int_eq(x->diag.nerrors, 1);
  ck_assert(first_error_has(x, "nesting too deep"));
  lexed_free(x);
  free(buf);
}
END_TEST

START_TEST(crlf_line_ends) {
  Lexed *x = lex("coord x\r\nkinetic x'^2\r\n");
  int want[] = {KW_COORD, T_NAME, NL, KW_KINETIC, T_NAME, '\'', '^', T_NUMBER, NL, END};
  expect_kinds(x, want);
  ck_assert_int_eq(x->loc[3].first_line, 2);
  ck_assert_int_eq(x->diag.nerrors, 0);
  lexed_free(x);
}
END_TEST

START_TEST(byte_order_mark) {
  Lexed *x = lex("\xef\xbb\xbf" "coord x\n");
  int want[] = {KW_COORD, T_NAME, NL, END};
  expect_kinds(x, want);
  ck_assert_int_eq(x->loc[0].first_column, 4);
  ck_assert_int_eq(x->diag.nerrors, 0);
  lexed_free(x);
  /* Only at the very start. */
  x = lex("coord x \xef\xbb\xbf\n");
  ck_assert_int_eq(x->kind[2], T_BAD);
  lexed_free(x);
}
END_TEST

START_TEST(random_bytes_terminate) {
  /* Any bytes: the lexer ends, and every error has a place in the file. */
  unsigned seed = 12345;
  char buf[3000];
  for (int round = 0; round < 50; round++) {
    for (size_t i = 0; i < sizeof buf; i++) {
      seed = seed * 1103515245u + 12345u;
      buf[i] = (char)(seed >> 16);
    }
    Lexed *x = lex_n(buf, sizeof buf);
    for (int i = 0; i < x->diag.nmsgs; i++) ck_assert_int_ge(x->diag.msgs[i].loc.line, 1);
    lexed_free(x);
  }
}
END_TEST

static Suite *lexer_suite(void) {
  Suite *s = suite_create("lexer");
  TCase *tc = tcase_create("tokens");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, declaration_tokens);
  tcase_add_test(tc, every_keyword_and_operator);
  tcase_add_test(tc, every_word_of_the_table);
  tcase_add_test(tc, docs_list_the_words_of_the_table);
  tcase_add_test(tc, names_contextual_words_and_prefixes);
  tcase_add_test(tc, locations);
  tcase_add_test(tc, numbers);
  tcase_add_test(tc, number_boundaries);
  tcase_add_test(tc, number_out_of_range);
  tcase_add_test(tc, malformed_exponent);
  tcase_add_test(tc, strings_and_escapes);
  tcase_add_test(tc, unterminated_strings);
  tcase_add_test(tc, bad_string_contents);
  tcase_add_test(tc, crlf_line_ends);
  tcase_add_test(tc, byte_order_mark);
  suite_add_tcase(s, tc);
  tc = tcase_create("statements");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, comments_and_blank_lines);
  tcase_add_test(tc, semicolons);
  tcase_add_test(tc, newline_continuation);
  tcase_add_test(tc, keyword_ends_unfinished_line);
  tcase_add_test(tc, unclosed_at_end_of_file);
  tcase_add_test(tc, index_bracket_rule);
  suite_add_tcase(s, tc);
  tc = tcase_create("hostile input");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, invalid_bytes);
  tcase_add_test(tc, nesting_limit);
  tcase_add_test(tc, hundred_thousand_brackets);
  tcase_add_test(tc, random_bytes_terminate);
  suite_add_tcase(s, tc);
  return s;
}

int main(void) {
  SRunner *sr = srunner_create(lexer_suite());
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
