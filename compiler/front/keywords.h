/*
** keywords.h — every word of the model language, in one table.
**
**   KEYWORD(TOKEN, "spelling")       a reserved word: it starts a statement
**                                    and can never be a name
**   CONTEXT_WORD(TOKEN, "spelling")  a word with a meaning in one place
**                                    (body b mass m at P, force F at P,
**                                    torque T on R, stop ... bounce) and a
**                                    name elsewhere
**
** TOKEN is the parser's token (grammar/parser.y) that the lexer returns
** for the word.  The lexer glue looks every name up here, the parser's
** messages spell tokens from here, the checker refuses keywords as names
** from here, and test_lexer holds docs/language.md and docs/eom.5 to it.
** A new word is one line here, its %token in parser.y and its grammar rule.
*/
#ifndef EOMC_KEYWORDS_H
#define EOMC_KEYWORDS_H

#define EOM_WORDS(KEYWORD, CONTEXT_WORD)  \
  KEYWORD(KW_MODEL, "model")              \
  KEYWORD(KW_COORD, "coord")              \
  KEYWORD(KW_PARAM, "param")              \
  KEYWORD(KW_CONST, "const")              \
  KEYWORD(KW_INPUT, "input")              \
  KEYWORD(KW_LET, "let")                  \
  KEYWORD(KW_INITIAL, "initial")          \
  KEYWORD(KW_OUTPUT, "output")            \
  KEYWORD(KW_FRAME, "frame")              \
  KEYWORD(KW_ATTITUDE, "attitude")        \
  KEYWORD(KW_IDENTIFY, "identify")        \
  KEYWORD(KW_KINETIC, "kinetic")          \
  KEYWORD(KW_POTENTIAL, "potential")      \
  KEYWORD(KW_LAGRANGIAN, "lagrangian")    \
  KEYWORD(KW_DISSIPATION, "dissipation")  \
  KEYWORD(KW_FORCE, "force")              \
  KEYWORD(KW_TORQUE, "torque")            \
  KEYWORD(KW_GRAVITY, "gravity")          \
  KEYWORD(KW_BODY, "body")                \
  KEYWORD(KW_CONSTRAINT, "constraint")    \
  KEYWORD(KW_STOP, "stop")                \
  CONTEXT_WORD(CW_MASS, "mass")           \
  CONTEXT_WORD(CW_AT, "at")               \
  CONTEXT_WORD(CW_ON, "on")               \
  CONTEXT_WORD(CW_ORIENT, "orient")       \
  CONTEXT_WORD(CW_INERTIA, "inertia")     \
  CONTEXT_WORD(CW_BOUNCE, "bounce")

/* For an X-macro argument that ignores its entries. */
#define EOM_WORD_SKIP(token, spelling)

#endif
