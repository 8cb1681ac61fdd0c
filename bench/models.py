"""models.py — model text generators for the benchmarks (our own test families).

planar_chain(n): an n-link planar pendulum of point masses, written as scalar
lets and kinetic/potential terms, the way a user would write it.
big_model(n): a model of about n statements for front-end timing.
"""


def planar_chain(n, units=False):
    u = (lambda s: " [" + s + "]") if units else (lambda s: "")
    lines = ["# %d-link planar pendulum chain of point masses (benchmark family)" % n,
             "model chain%d" % n,
             "coord " + ", ".join("q%d" % i for i in range(1, n + 1)) + u("rad"),
             "param m = 0.7" + u("kg"),
             "param l = 0.4" + u("m"),
             "param g = 9.81" + u("m/s^2")]
    for i in range(1, n + 1):
        px = "x%d + " % (i - 1) if i > 1 else ""
        py = "y%d " % (i - 1) if i > 1 else ""
        lines.append("let x%d = %sl*sin(q%d)" % (i, px, i))
        lines.append("let y%d = %s- l*cos(q%d)" % (i, py, i))
        lines.append("kinetic m/2*(x%d'^2 + y%d'^2)" % (i, i))
        lines.append("potential m*g*y%d" % i)
        lines.append("initial q%d = %g" % (i, 0.1 * i))
    return "\n".join(lines) + "\n"


def big_model(n):
    """About n statements: coordinates, params, lets and energy terms."""
    ncoord = 50
    lines = ["# front-end benchmark: %d statements" % n, "model big"]
    lines.append("coord " + ", ".join("q%d" % i for i in range(ncoord)))
    i = 0
    while len(lines) < n:
        c = i % ncoord
        lines.append("param k%d = %d.5" % (i, i % 7 + 1))
        lines.append("let e%d = k%d*sin(q%d)^2 + (q%d - 0.5)*(1 + q%d^2)/3" % (i, i, c, c, c))
        lines.append("potential e%d/2" % i)
        lines.append("kinetic k%d*q%d'^2/4" % (i, c))
        i += 1
    return "\n".join(lines) + "\n"
