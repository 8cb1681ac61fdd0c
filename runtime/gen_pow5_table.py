#!/usr/bin/env python3
"""gen_pow5_table.py -- write runtime/pow5_table.h, the powers of five that
the shortest round-trip number formatter (runtime/fmtnum.c) multiplies by.

The method is Ryu (Ulf Adams, "Ryu: fast float-to-string conversion",
PLDI 2018, section 3): each double's decimal interval is found with one
128-bit multiplication by a truncated power of 5 (for negative binary
exponents) or a rounded-up inverse power of 5 (for positive ones).  Both
tables hold exactly 125 significant bits, split into two 64-bit halves,
low half first.  Python's integers are exact, so the tables are exact.

Run: python3 runtime/gen_pow5_table.py > runtime/pow5_table.h
"""

POW5_BITS = 125      # bits kept of 5^i
POW5_INV_BITS = 125  # bits kept of 2^k / 5^q
POW5_COUNT = 326     # i up to 325: binary exponents down to the subnormals
POW5_INV_COUNT = 292 # q up to 291: binary exponents up to DBL_MAX's


def pow5bits(e):
    """ceil(log2(5^e)) for e >= 1, and 1 for e = 0 (the formatter's formula)."""
    return ((e * 1217359) >> 19) + 1


def halves(v):
    assert 0 <= v < (1 << 128)
    return v & ((1 << 64) - 1), v >> 64


def main():
    out = []
    out.append("/*\n** pow5_table.h -- powers of five for fmtnum.c, written by"
               " gen_pow5_table.py\n** (do not edit by hand). Each entry is "
               "{low 64 bits, high 64 bits}.\n*/")
    out.append("#define POW5_BITS %d" % POW5_BITS)
    out.append("#define POW5_INV_BITS %d" % POW5_INV_BITS)
    out.append("#define POW5_COUNT %d" % POW5_COUNT)
    out.append("#define POW5_INV_COUNT %d" % POW5_INV_COUNT)
    out.append("/* 5^i truncated to its top POW5_BITS bits. */")
    out.append("static const uint64_t POW5[POW5_COUNT][2] = {")
    for i in range(POW5_COUNT):
        p = 5 ** i
        shift = pow5bits(i) - POW5_BITS
        v = p >> shift if shift >= 0 else p << -shift
        lo, hi = halves(v)
        out.append("  {0x%016xu, 0x%016xu}," % (lo, hi))
    out.append("};")
    out.append("/* floor(2^(pow5bits(q) - 1 + POW5_INV_BITS) / 5^q) + 1. */")
    out.append("static const uint64_t POW5_INV[POW5_INV_COUNT][2] = {")
    for q in range(POW5_INV_COUNT):
        k = pow5bits(q) - 1 + POW5_INV_BITS
        v = (1 << k) // (5 ** q) + 1
        lo, hi = halves(v)
        out.append("  {0x%016xu, 0x%016xu}," % (lo, hi))
    out.append("};")
    print("\n".join(out))


if __name__ == "__main__":
    main()
