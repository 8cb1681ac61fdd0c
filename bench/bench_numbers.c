/*
** bench_numbers.c — the run writer's cost per number and per row, printed
** side by side with the formatting it replaced (printf "%.15g", strtod to
** check it, "%.17g" when it does not read back).  Figures, not pass/fail;
** both are measured in the same run on the same numbers.
*/
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "eom/runtime.h"

static double now(void) {
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* The writer before: %.15g when it reads back, else %.17g. */
static int format_before(char *buf, double v) {
  if (v == 0) v = 0;
  int n = snprintf(buf, 40, "%.15g", v);
  if (strtod(buf, NULL) != v) n = snprintf(buf, 40, "%.17g", v);
  return n;
}

/* A row of 18 numbers (a six-axis arm: t, 6 q, 6 q', 3 outputs, T, V) as
** one line into f, with either formatter. */
static void write_rows(FILE *f, const double *vals, long rows, int (*fmt)(char *, double)) {
  char line[18 * 41];
  for (long r = 0; r < rows; r++) {
    char *p = line;
    for (int i = 0; i < 18; i++) {
      if (i) *p++ = ',';
      p += fmt(p, vals[(r * 18 + i) % 1000000]);
    }
    *p++ = '\n';
    fwrite(line, 1, (size_t)(p - line), f);
  }
}

int main(void) {
  enum { N = 1000000 };
  double *vals = malloc(N * sizeof(double));
  uint64_t s = 88172645463325252u;
  char buf[64];
  if (!vals) return 1;
  /* Simulation-like values: smooth signals of various sizes. */
  for (int i = 0; i < N; i++) {
    s ^= s << 13, s ^= s >> 7, s ^= s << 17;
    double u = (double)(s >> 11) / 9007199254740992.0;
    vals[i] = (u - 0.5) * (i % 3 == 0 ? 1e-3 : i % 3 == 1 ? 2.0 : 300.0);
  }
  volatile size_t sink = 0;
  double t0 = now();
  for (int i = 0; i < N; i++) sink += (size_t)format_before(buf, vals[i]);
  double before = (now() - t0) / N * 1e9;
  t0 = now();
  for (int i = 0; i < N; i++) sink += (size_t)eom_format_double(buf, vals[i]);
  double after = (now() - t0) / N * 1e9;
  printf("number formatting: %.0f ns/number before (printf+strtod), %.0f ns/number now "
         "(shortest round trip): %.1fx\n", before, after, before / after);
  FILE *f = fopen("/dev/null", "w");
  if (!f) return 1;
  long rows = 100000;
  t0 = now();
  write_rows(f, vals, rows, format_before);
  double rb = (now() - t0) / (double)rows * 1e9;
  t0 = now();
  write_rows(f, vals, rows, eom_format_double);
  double ra = (now() - t0) / (double)rows * 1e9;
  fclose(f);
  printf("CSV rows of 18 numbers: %.0f ns/row before, %.0f ns/row now: %.1fx "
         "(%.0f rows/s before, %.0f rows/s now)\n", rb, ra, rb / ra, 1e9 / rb, 1e9 / ra);
  free(vals);
  return sink == 0;
}
