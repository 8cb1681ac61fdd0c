/*
** test_numbers.c — the run writer's number formatting (eom_format_double)
** and row layout, against the C library's own conversions.
**
** Reference: ISO/IEC 9899:1999 (C99) 7.20.1.3 — strtod converts decimal text
** to the nearest double (glibc rounds correctly), and 7.19.6.1 — printf's
** %.Pg writes v correctly rounded to P significant digits.  So:
**  - round trip: strtod(eom_format_double(v)) == v bit for bit;
**  - shortest: no %.Pg text with fewer significant digits than ours reads
**    back as v (Adams, "Ryu: fast float-to-string conversion", PLDI 2018,
**    section 2, defines the output as the shortest such decimal).
*/
#include <check.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "eom/runtime.h"

/* A reproducible 64-bit generator (xorshift64*, Vigna 2016, common practice). */
static uint64_t rng_state = 0x9e3779b97f4a7c15u;
static uint64_t rng(void) {
  rng_state ^= rng_state >> 12;
  rng_state ^= rng_state << 25;
  rng_state ^= rng_state >> 27;
  return rng_state * UINT64_C(2685821657736338717);
}

static double from_bits(uint64_t b) {
  double v;
  memcpy(&v, &b, sizeof v);
  return v;
}

static int same_bits(double a, double b) { return memcmp(&a, &b, sizeof a) == 0; }

/* Digits in our text's mantissa after its leading zeros. */
static int sig_digits(const char *s) {
  int n = 0, started = 0;
  for (; *s && *s != 'e'; s++) {
    if (*s < '0' || *s > '9') continue;
    if (*s != '0') started = 1;
    if (started) n++;
  }
  return n;
}

/* Zeros ending an integer like "1200": not significant. */
static int trailing_integer_zeros(const char *s) {
  if (strchr(s, '.') || strchr(s, 'e')) return 0;
  size_t n = strlen(s), z = 0;
  while (z < n && s[n - 1 - z] == '0') z++;
  return (int)z;
}

/* Check v: exact round trip, and nothing shorter that %.Pg finds. */
static void check_one(double v) {
  char buf[EOM_NUMBER_MAX + 8];
  int len = eom_format_double(buf, v);
  ck_assert_int_eq(len, (int)strlen(buf));
  ck_assert_int_lt(len, EOM_NUMBER_MAX);
  double back = strtod(buf, NULL);
  if (v == 0) {
    ck_assert_str_eq(buf, "0");
    return;
  }
  if (!same_bits(back, v))
    ck_abort_msg("%.17g written as %s reads back as %.17g", v, buf, back);
  int ours = sig_digits(buf) - trailing_integer_zeros(buf);
  for (int p = 1; p < ours; p++) {
    char ref[512];
    snprintf(ref, sizeof ref, "%.*g", p, v);
    if (strtod(ref, NULL) == v)
      ck_abort_msg("%.17g: wrote %s (%d digits) but %s (%d) reads back too", v, buf, ours,
                   ref, p);
  }
}

START_TEST(random_bit_patterns) {
  /* Any finite double: uniform over the bit patterns, so every exponent. */
  for (int i = 0; i < 40000; i++) {
    double v = from_bits(rng());
    if (isfinite(v)) check_one(v);
  }
}
END_TEST

START_TEST(random_everyday_values) {
  /* Values of a simulation: moderate magnitudes, short decimals, sums. */
  for (int i = 0; i < 30000; i++) {
    double u = (double)(rng() >> 11) / 9007199254740992.0;  /* [0, 1) */
    double v = (u - 0.5) * pow(10, (double)(int)(rng() % 21) - 10);
    check_one(v);
    check_one((double)(int64_t)(rng() % 2000001) / 1000.0 - 1000);
    check_one(0.1 * (double)(i % 1000));
  }
}
END_TEST

START_TEST(edge_cases) {
  char buf[EOM_NUMBER_MAX];
  static const struct { double v; const char *text; } fixed[] = {
      {0.0, "0"},          {-0.0, "0"},           {1.0, "1"},
      {-2.5, "-2.5"},      {0.1, "0.1"},          {0.3, "0.3"},
      {100, "100"},        {123456789012345.0, "123456789012345"},
      {1e15, "1e+15"},     {1e-5, "1e-05"},       {0.0001, "0.0001"},
      {1e308, "1e+308"},   {5e-324, "5e-324"},    {DBL_MAX, "1.7976931348623157e+308"},
      {DBL_MIN, "2.2250738585072014e-308"},       {0.1 + 0.2, "0.30000000000000004"},
      {9007199254740993.0, "9.007199254740992e+15"},  /* 2^53 + 1 rounds to 2^53 */
      {1.5e-7, "1.5e-07"}, {-1234.5678, "-1234.5678"},
  };
  for (size_t i = 0; i < sizeof fixed / sizeof fixed[0]; i++) {
    eom_format_double(buf, fixed[i].v);
    ck_assert_msg(strcmp(buf, fixed[i].text) == 0, "%.17g: got %s, want %s", fixed[i].v, buf,
                  fixed[i].text);
    check_one(fixed[i].v);
  }
  eom_format_double(buf, NAN);
  ck_assert_str_eq(buf, "nan");
  eom_format_double(buf, INFINITY);
  ck_assert_str_eq(buf, "inf");
  eom_format_double(buf, -INFINITY);
  ck_assert_str_eq(buf, "-inf");
  /* Every power of two and of ten, the largest subnormal and its neighbours. */
  for (int e = -1074; e <= 1023; e++) check_one(ldexp(1.0, e));
  for (int e = -323; e <= 308; e++) {
    char t[16];
    snprintf(t, sizeof t, "1e%d", e);
    check_one(strtod(t, NULL));
  }
  check_one(from_bits(0x000fffffffffffffu));
  check_one(from_bits(0x0010000000000000u));
  check_one(from_bits(0x0000000000000001u));
  /* Integers up to 2^53 print as integers. */
  for (int i = 0; i < 1000; i++) {
    int64_t k = (int64_t)(rng() % (UINT64_C(1) << 53));
    double v = (double)k;
    eom_format_double(buf, v);
    check_one(v);
    if (v < 1e15) {
      char want[32];
      snprintf(want, sizeof want, "%lld", (long long)k);
      ck_assert_str_eq(buf, want);
    }
  }
}
END_TEST

/* A tiny hand model for the row layout: one coordinate x [m], one input F [N]. */
static void energy1(const double *q, const double *qd, const double *p, double *T, double *V) {
  *T = 0.5 * p[0] * qd[0] * qd[0];
  *V = 0.5 * p[1] * q[0] * q[0];
}
static void outputs1(double t, const double *q, const double *qd, const double *u,
                     const double *p, double *y) {
  (void)t, (void)qd, (void)u;
  y[0] = p[1] * q[0];
}

START_TEST(row_layout) {
  static const char *const coords[] = {"x"}, *const cunits[] = {"m"};
  static const char *const inputs[] = {"F"}, *const iunits[] = {"N"};
  static const char *const outs[] = {"spring_force"};
  static const double pdef[] = {2.0, 8.0};
  struct eom_model m;
  memset(&m, 0, sizeof m);
  m.nq = 1, m.nu = 1, m.np = 2, m.ny = 1;
  m.coord_names = coords, m.coord_units = cunits;
  m.input_names = inputs, m.input_units = iunits, m.output_names = outs;
  m.param_defaults = pdef;
  m.energy = energy1, m.outputs = outputs1;
  ck_assert_int_eq(eom_row_width(&m), 7);
  char name[32], unit[32];
  static const char *want_names[] = {"t", "x", "x'", "spring_force", "F", "T", "V"};
  static const char *want_units[] = {"s", "m", "m/s", "", "N", "J", "J"};
  for (int k = 0; k < 7; k++) {
    ck_assert_str_eq(eom_row_column(&m, k, name, sizeof name, NULL), want_names[k]);
    ck_assert_str_eq(eom_row_unit(&m, k, unit, sizeof unit), want_units[k]);
  }
  double x[2] = {0.5, -1.0}, u[1] = {3.0}, row[7];
  ck_assert_int_eq(eom_row_eval(&m, NULL, 0.25, x, u, row), 0);
  /* T = m v^2 / 2 = 1, V = k x^2 / 2 = 1, spring force k x = 4. */
  double want[7] = {0.25, 0.5, -1.0, 4.0, 3.0, 1.0, 1.0};
  for (int k = 0; k < 7; k++) ck_assert(row[k] == want[k]);
  char *text = NULL;
  size_t size = 0;
  FILE *f = open_memstream(&text, &size);
  ck_assert_ptr_nonnull(f);
  ck_assert_int_eq(eom_csv_write_header(f, &m), 0);
  ck_assert_int_eq(eom_csv_write_row(f, &m, NULL, 0.25, x, u), 0);
  int cols[2] = {6, 1};
  ck_assert_int_eq(eom_csv_write_names(f, &m, cols, 2), 0);
  ck_assert_int_eq(eom_csv_write_values(f, row, cols, 2), 0);
  fclose(f);
  ck_assert_str_eq(text, "t,x,x',spring_force,F,T,V\n0.25,0.5,-1,4,3,1,1\nV,x\n1,0.5\n");
  free(text);
}
END_TEST

int main(void) {
  Suite *s = suite_create("numbers");
  TCase *tc = tcase_create("format");
  tcase_set_timeout(tc, 60);
  tcase_add_test(tc, random_bit_patterns);
  tcase_add_test(tc, random_everyday_values);
  tcase_add_test(tc, edge_cases);
  tcase_add_test(tc, row_layout);
  suite_add_tcase(s, tc);
  SRunner *sr = srunner_create(s);
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
