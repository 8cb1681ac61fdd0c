/*
** json_out.c — JSON numbers and strings for the commands' --json output.
*/
#include <math.h>
#include "cli/json_out.h"

void json_num(FILE *f, double v) {
  if (v == 0) v = 0; /* -0 prints as 0 */
  if (isfinite(v)) fprintf(f, "%.12g", v);
  else fputs("null", f);
}

void json_num_exact(FILE *f, double v) {
  if (isfinite(v)) fprintf(f, "%.17g", v);
  else fputs("null", f);
}

void json_str(FILE *f, const char *s) {
  fputc('"', f);
  for (; *s; s++) {
    if (*s == '"' || *s == '\\') fputc('\\', f);
    if ((unsigned char)*s < 0x20) fprintf(f, "\\u%04x", *s);
    else fputc(*s, f);
  }
  fputc('"', f);
}
