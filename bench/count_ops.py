"""count_ops.py — count arithmetic operations in generated C.

Counts binary + - * / and calls of libm functions in the body of one function,
adding the counts of functions of the same file that it calls (so P_accel
includes the M and f it computes).  Unary minus is not counted.  Comments and
string literals are ignored.
"""
import re
import sys

LIBM = {"sin", "cos", "tan", "asin", "acos", "atan", "atan2", "exp", "log",
        "sqrt", "fabs", "sinh", "cosh", "tanh", "pow"}


def strip(src):
    src = re.sub(r"/\*.*?\*/", " ", src, flags=re.S)
    src = re.sub(r'"(\\.|[^"\\])*"', '""', src)
    return src


def functions(src):
    """Map name -> body text for every function definition in src."""
    out = {}
    for m in re.finditer(r"^[A-Za-z_][\w \*]*?\b(\w+)\s*\([^;{]*\)\s*\{", src, flags=re.M):
        depth, i = 1, m.end()
        while depth and i < len(src):
            depth += {"{": 1, "}": -1}.get(src[i], 0)
            i += 1
        out[m.group(1)] = src[m.end():i - 1]
    return out


def count_body(body):
    """(arith, calls, called-names) of one body."""
    toks = re.findall(r"[A-Za-z_]\w*|\d+\.?\d*(?:[eE][-+]?\d+)?|\.\d+(?:[eE][-+]?\d+)?|[-+*/=(),;<>!&|?:\[\]{}]", body)
    arith, calls, called = 0, 0, []
    prev = None
    for i, t in enumerate(toks):
        nxt = toks[i + 1] if i + 1 < len(toks) else None
        if t in "+-*/":
            # binary when the previous token ends an operand
            if prev is not None and (re.match(r"[\w.]", prev) or prev in ")]"):
                arith += 1
        elif re.match(r"[A-Za-z_]", t) and nxt == "(":
            if t in LIBM:
                calls += 1
            elif t not in ("if", "for", "while", "return", "sizeof"):
                called.append(t)
        prev = t
    return arith, calls, called


def count(src, name, seen=None):
    src = strip(src)
    fns = functions(src)
    seen = seen or set()

    def rec(n):
        if n in seen or n not in fns:
            return 0, 0
        seen.add(n)
        a, c, called = count_body(fns[n])
        for f in called:
            da, dc = rec(f)
            a, c = a + da, c + dc
        return a, c
    return rec(name)


if __name__ == "__main__":
    text = open(sys.argv[1]).read()
    for fn in sys.argv[2:]:
        a, c = count(text, fn)
        print("%s: %d arithmetic, %d calls" % (fn, a, c))
