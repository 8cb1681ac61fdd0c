/*
** fmtnum.c — eom_format_double(): the shortest decimal text that reads back
** (strtod) as exactly the same double, written without snprintf.
**
** The method is Ryu (Ulf Adams, "Ryu: fast float-to-string conversion",
** PLDI 2018, sections 2-3): the interval of reals that round to the double
** is scaled by a power of ten with one multiplication by a 125-bit power of
** five (pow5_table.h), and digits are dropped while the interval's ends
** still differ; the last kept digit is rounded correctly.  Everything is
** plain C99 integer arithmetic (the 64x64->128 products are done in halves).
**
** Layout follows printf's %g with at least 15 significant digits of room:
** plain decimals for exponents -5 < X < 15 ("0.001", "12.5", "3"), else
** "d.ddde+XX" / "d.ddde-XXX".  -0 prints as "0"; NaN and infinities as "nan",
** "inf", "-inf".
*/
#include <assert.h>
#include <stdint.h>
#include <string.h>

#include "eom/runtime.h"
#include "pow5_table.h"

/* ceil(log2(5^e)) (1 for e = 0), floor(log10(2^e)), floor(log10(5^e)):
** the integer approximations of Ryu section 3, exact in the ranges used. */
static int32_t pow5bits(int32_t e) { return (int32_t)(((uint32_t)e * 1217359u) >> 19) + 1; }
static uint32_t log10_pow2(int32_t e) { return ((uint32_t)e * 78913u) >> 18; }
static uint32_t log10_pow5(int32_t e) { return ((uint32_t)e * 732923u) >> 20; }

static int pow5_factor(uint64_t v) {
  int n = 0;
  while (v % 5 == 0) v /= 5, n++;
  return n;
}
static int multiple_of_pow5(uint64_t v, uint32_t p) { return (uint32_t)pow5_factor(v) >= p; }
static int multiple_of_pow2(uint64_t v, uint32_t p) {
  assert(p < 64);
  return (v & ((UINT64_C(1) << p) - 1)) == 0;
}

/* a*b = hi*2^64 + return value. */
static uint64_t umul128(uint64_t a, uint64_t b, uint64_t *hi) {
  uint64_t a_lo = (uint32_t)a, a_hi = a >> 32, b_lo = (uint32_t)b, b_hi = b >> 32;
  uint64_t b00 = a_lo * b_lo, b01 = a_lo * b_hi, b10 = a_hi * b_lo, b11 = a_hi * b_hi;
  uint64_t mid1 = b10 + (b00 >> 32);
  uint64_t mid2 = b01 + (uint32_t)mid1;
  *hi = b11 + (mid1 >> 32) + (mid2 >> 32);
  return (mid2 << 32) | (uint32_t)b00;
}

/* (m * mul) >> j for the 128-bit mul = {low, high} and 64 < j < 128. */
static uint64_t mul_shift(uint64_t m, const uint64_t *mul, int32_t j) {
  uint64_t high0, high1;
  (void)umul128(m, mul[0], &high0);
  uint64_t low1 = umul128(m, mul[1], &high1);
  uint64_t sum = high0 + low1;
  if (sum < high0) high1++;
  int dist = j - 64;
  assert(dist > 0 && dist < 64);
  return (high1 << (64 - dist)) | (sum >> dist);
}

/* The shortest digits of a finite positive double given by its IEEE fields:
** the value is *digits * 10^*exp10. */
static void shortest(uint64_t mant, uint32_t bexp, uint64_t *digits, int32_t *exp10) {
  int32_t e2;
  uint64_t m2;
  if (bexp == 0) e2 = 1 - 1023 - 52 - 2, m2 = mant;
  else e2 = (int32_t)bexp - 1023 - 52 - 2, m2 = (UINT64_C(1) << 52) | mant;
  const int accept_bounds = (m2 & 1) == 0; /* round-half-even reads ties to us */
  /* The interval [mv - mm, mv + mp] in units of 2^e2, scaled by 4. */
  const uint64_t mv = 4 * m2;
  const uint32_t mm_shift = mant != 0 || bexp <= 1; /* narrower below a power of 2 */
  uint64_t vr, vp, vm;
  int32_t e10;
  int vm_zeros = 0, vr_zeros = 0;
  if (e2 >= 0) {
    const uint32_t q = log10_pow2(e2) - (e2 > 3);
    const int32_t k = POW5_INV_BITS + pow5bits((int32_t)q) - 1;
    const int32_t i = -e2 + (int32_t)q + k;
    assert(q < POW5_INV_COUNT);
    e10 = (int32_t)q;
    vr = mul_shift(4 * m2, POW5_INV[q], i);
    vp = mul_shift(4 * m2 + 2, POW5_INV[q], i);
    vm = mul_shift(4 * m2 - 1 - mm_shift, POW5_INV[q], i);
    if (q <= 21) {
      /* Only then can the exact scaled values be integers. */
      if (mv % 5 == 0) vr_zeros = multiple_of_pow5(mv, q);
      else if (accept_bounds) vm_zeros = multiple_of_pow5(mv - 1 - mm_shift, q);
      else vp -= (uint64_t)multiple_of_pow5(mv + 2, q);
    }
  } else {
    const uint32_t q = log10_pow5(-e2) - (-e2 > 1);
    const int32_t i = -e2 - (int32_t)q;
    const int32_t k = pow5bits(i) - POW5_BITS;
    const int32_t j = (int32_t)q - k;
    assert(i < POW5_COUNT);
    e10 = (int32_t)q + e2;
    vr = mul_shift(4 * m2, POW5[i], j);
    vp = mul_shift(4 * m2 + 2, POW5[i], j);
    vm = mul_shift(4 * m2 - 1 - mm_shift, POW5[i], j);
    if (q <= 1) {
      vr_zeros = 1;
      if (accept_bounds) vm_zeros = mm_shift == 1;
      else vp--;
    } else if (q < 63) {
      vr_zeros = multiple_of_pow2(mv, q);
    }
  }
  /* Drop digits while the interval's ends still differ in what remains. */
  int32_t removed = 0;
  unsigned last = 0;
  uint64_t out;
  if (vm_zeros || vr_zeros) {
    /* Rare: exact ends and exact ties need the digits dropped so far. */
    while (vp / 10 > vm / 10) {
      vm_zeros &= vm % 10 == 0;
      vr_zeros &= last == 0;
      last = (unsigned)(vr % 10);
      vr /= 10, vp /= 10, vm /= 10, removed++;
    }
    if (vm_zeros)
      while (vm % 10 == 0) {
        vr_zeros &= last == 0;
        last = (unsigned)(vr % 10);
        vr /= 10, vp /= 10, vm /= 10, removed++;
      }
    if (vr_zeros && last == 5 && vr % 2 == 0) last = 4; /* exact tie: to even */
    out = vr + ((vr == vm && (!accept_bounds || !vm_zeros)) || last >= 5);
  } else {
    int round_up = 0;
    while (vp / 10 > vm / 10) {
      round_up = vr % 10 >= 5;
      vr /= 10, vp /= 10, vm /= 10, removed++;
    }
    out = vr + (vr == vm || round_up);
  }
  *digits = out;
  *exp10 = e10 + removed;
}

/* Write the decimal digits of v (no sign) ending just before end; returns
** the number of digits. */
static int put_digits(char *end, uint64_t v) {
  int n = 0;
  do {
    *--end = (char)('0' + v % 10);
    v /= 10;
    n++;
  } while (v);
  return n;
}

int eom_format_double(char *buf, double v) {
  uint64_t bits;
  char *p = buf;
  memcpy(&bits, &v, sizeof bits);
  const uint64_t mant = bits & ((UINT64_C(1) << 52) - 1);
  const uint32_t bexp = (uint32_t)(bits >> 52) & 0x7ff;
  const int neg = (int)(bits >> 63);
  if (bexp == 0x7ff) {
    const char *s = mant ? "nan" : neg ? "-inf" : "inf";
    strcpy(buf, s);
    return (int)strlen(s);
  }
  if (bexp == 0 && mant == 0) {
    strcpy(buf, "0");
    return 1;
  }
  uint64_t digits;
  int32_t e10;
  shortest(mant, bexp, &digits, &e10);
  while (digits % 10 == 0) digits /= 10, e10++;
  char tmp[24];
  int n = put_digits(tmp + sizeof tmp, digits);
  const char *d = tmp + sizeof tmp - n;
  int32_t x = e10 + n - 1; /* the exponent of the leading digit */
  if (neg) *p++ = '-';
  if (x < -4 || x >= 15) {
    *p++ = d[0];
    if (n > 1) {
      *p++ = '.';
      memcpy(p, d + 1, (size_t)n - 1);
      p += n - 1;
    }
    *p++ = 'e';
    *p++ = x < 0 ? '-' : '+';
    int ax = x < 0 ? -x : x;
    if (ax >= 100) *p++ = (char)('0' + ax / 100);
    *p++ = (char)('0' + ax / 10 % 10);
    *p++ = (char)('0' + ax % 10);
  } else if (x < 0) {
    *p++ = '0', *p++ = '.';
    for (int32_t z = -1; z > x; z--) *p++ = '0';
    memcpy(p, d, (size_t)n);
    p += n;
  } else if (n <= x + 1) {
    memcpy(p, d, (size_t)n);
    p += n;
    for (int32_t z = n; z <= x; z++) *p++ = '0';
  } else {
    memcpy(p, d, (size_t)x + 1);
    p += x + 1;
    *p++ = '.';
    memcpy(p, d + x + 1, (size_t)(n - x - 1));
    p += n - x - 1;
  }
  *p = '\0';
  assert(p - buf < EOM_NUMBER_MAX);
  return (int)(p - buf);
}
