/*
** emit_float.c — `eomc gen --float`: the generated C in single precision.
**
** The writers produce double-precision C; this pass rewrites its tokens,
** leaving comments and string literals alone:
**
**   double                 float
**   a floating constant    the same digits with the f suffix (1.5 -> 1.5f)
**   sin( cos( sqrt( ...    sinf( cosf( sqrtf( ... (C99 7.12)
**
** so no expression is evaluated in double (the generated code then
** compiles cleanly with -Wdouble-promotion).  A constant outside the range
** of float is an error: it would silently become infinity or zero.
** Integer constants, identifiers and punctuation are copied as they are.
*/
#include "emit/emit_internal.h"

#include <assert.h>
#include <ctype.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* The libm functions the writers call (builtins.h, the power printer). */
static const char *const double_functions[] = {
  "sin", "cos", "tan", "asin", "acos", "atan", "atan2", "exp", "log", "sqrt",
  "fabs", "sinh", "cosh", "tanh", "fmin", "fmax", "pow"};

static int is_double_function(const char *s, size_t len) {
  for (size_t i = 0; i < sizeof double_functions / sizeof *double_functions; i++)
    if (strlen(double_functions[i]) == len && memcmp(s, double_functions[i], len) == 0) return 1;
  return 0;
}

/* Copy a comment or a string literal starting at s[i]; returns the index after it. */
static size_t copy_verbatim(const char *s, size_t n, size_t i, FILE *out) {
  size_t start = i;
  if (s[i] == '/') {   /* block comment */
    const char *end = strstr(s + i + 2, "*/");
    i = end ? (size_t)(end - s) + 2 : n;
  } else {             /* "..." or '...' */
    char q = s[i++];
    while (i < n && s[i] != q) i += s[i] == '\\' && i + 1 < n ? 2 : 1;
    if (i < n) i++;
  }
  fwrite(s + start, 1, i - start, out);
  return i;
}

/* A preprocessing number at s[i] (C99 6.4.8): digits, letters, `.`, `_`
** and signs after an exponent letter. */
static size_t number_end(const char *s, size_t n, size_t i) {
  while (i < n) {
    char c = s[i];
    if (isalnum((unsigned char)c) || c == '.' || c == '_') i++;
    else if ((c == '+' || c == '-') && (s[i - 1] == 'e' || s[i - 1] == 'E')) i++;
    else break;
  }
  return i;
}

int emit_float_rewrite(const char *s, size_t n, FILE *out, char *err, size_t errlen) {
  size_t i = 0;
  while (i < n) {
    char c = s[i];
    if ((c == '/' && i + 1 < n && s[i + 1] == '*') || c == '"' || c == '\'') {
      i = copy_verbatim(s, n, i, out);
    } else if (isalpha((unsigned char)c) || c == '_') {
      size_t j = i;
      while (j < n && (isalnum((unsigned char)s[j]) || s[j] == '_')) j++;
      size_t k = j;
      while (k < n && s[k] == ' ') k++;
      if (j - i == 6 && memcmp(s + i, "double", 6) == 0) fputs("float", out);
      else {
        fwrite(s + i, 1, j - i, out);
        if (k < n && s[k] == '(' && is_double_function(s + i, j - i)) fputc('f', out);
      }
      i = j;
    } else if (isdigit((unsigned char)c) || (c == '.' && i + 1 < n && isdigit((unsigned char)s[i + 1]))) {
      size_t j = number_end(s, n, i);
      char text[80];
      fwrite(s + i, 1, j - i, out);
      int hex = j - i > 1 && s[i] == '0' && (s[i + 1] == 'x' || s[i + 1] == 'X');
      int floating = !hex && memchr(s + i, '.', j - i) != NULL;
      for (size_t k = i; !hex && k < j; k++) floating |= s[k] == 'e' || s[k] == 'E';
      if (floating && s[j - 1] != 'f' && s[j - 1] != 'F') {
        assert(j - i < sizeof text);
        memcpy(text, s + i, j - i);
        text[j - i] = '\0';
        double v = strtod(text, NULL);
        if (fabs(v) > FLT_MAX || (v != 0.0 && fabs(v) < FLT_MIN)) {
          snprintf(err, errlen, "the model's constant %s is outside the range of single "
                   "precision (--float)", text);
          return -1;
        }
        fputc('f', out);
      }
      i = j;
    } else {
      fputc(c, out);
      i++;
    }
  }
  if (ferror(out)) {
    snprintf(err, errlen, "cannot write the generated code");
    return -1;
  }
  return 0;
}
