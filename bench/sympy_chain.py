"""sympy_chain.py — the derivation a user would otherwise script with SymPy.

Derives M and f of the n-link planar pendulum chain with SymPy's core algebra
(diff, cse, C printing; no mechanics add-ons), the same route eomc takes:
M = d2L/dqd dqd, f = dL/dq - (d2L/dqd dq) qd.  Prints the seconds taken and
the operation count of the printed code, for the side-by-side benchmark.
Usage: /usr/bin/python3 sympy_chain.py N
"""
import sys
import time

import sympy as sp


def derive(n):
    q = sp.symbols("q1:%d" % (n + 1))
    qd = sp.symbols("qd1:%d" % (n + 1))
    m, l, g = sp.symbols("m l g")
    x = y = 0
    T = V = 0
    for i in range(n):
        x = x + l * sp.sin(q[i])
        y = y - l * sp.cos(q[i])
        xd = sum(sp.diff(x, q[j]) * qd[j] for j in range(n))
        yd = sum(sp.diff(y, q[j]) * qd[j] for j in range(n))
        T += m / 2 * (xd ** 2 + yd ** 2)
        V += m * g * y
    L = T - V
    dLdqd = [sp.diff(L, v) for v in qd]
    M = [[sp.diff(dLdqd[i], qd[j]) for j in range(n)] for i in range(n)]
    f = [sp.diff(L, q[i]) - sum(sp.diff(dLdqd[i], q[j]) * qd[j] for j in range(n))
         for i in range(n)]
    exprs = [M[i][j] for i in range(n) for j in range(i + 1)] + f
    repl, red = sp.cse(exprs)
    code = [sp.ccode(e, assign_to=str(s)) for s, e in repl]
    code += [sp.ccode(e, assign_to="out%d" % k) for k, e in enumerate(red)]
    return "\n".join(code)


if __name__ == "__main__":
    n = int(sys.argv[1])
    t0 = time.perf_counter()
    code = derive(n)
    dt = time.perf_counter() - t0
    ops = sum(code.count(c) for c in "+*/") + code.count(" - ") + code.count("(-")
    print("%.3f %d" % (dt, ops))
