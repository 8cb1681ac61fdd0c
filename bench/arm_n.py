"""arm_n.py — write an n-axis spatial arm (benchmark family, our own numbers).

A chain of n revolute joints on standard Denavit–Hartenberg frames, the
twists alternating +90°, -90°, 0° so the axes point every way, one rigid
body per link with a full inertia and an offset mass centre, viscous
friction and a motor torque on every joint, gravity along -z.  Used by
bench_big.py (6, 12 and 24 axes) and the float and --only tests.

  python3 arm_n.py N [OUT.eom]     (default: standard output)
"""
import sys

TWISTS = ("pi/2", "-pi/2", "0")


def arm_model(n, name=None):
    name = name or "arm%d" % n
    lines = ["# %d-axis arm (benchmark family, our own numbers)" % n, "model " + name,
             "coord " + ", ".join("q%d" % i for i in range(1, n + 1)),
             "param g = 9.81"]
    prev = None
    for i in range(1, n + 1):
        d = "%g" % (0.30 - 0.15 * i / n if i % 2 else 0.0)
        a = "%g" % (0.05 + 0.25 * (i % 3) / 3.0 if i % 3 else 0.0)
        lines.append("param m%d = %g" % (i, 12.0 - 10.0 * (i - 1) / n))
        lines.append("input tau%d" % i)
        lines.append("force q%d = tau%d" % (i, i))
        t = "dh(q%d, %s, %s, %s)" % (i, d, a, TWISTS[i % 3])
        lines.append("let T%d = %s" % (i, t if prev is None else prev + "*" + t))
        prev = "T%d" % i
        c = "[%g, %g, %g]" % (0.01 * (i % 5), -0.02 * (i % 3), 0.03 + 0.01 * (i % 2))
        inertia = "[[%g, 0.002, 0], [0.002, %g, 0.001], [0, 0.001, %g]]" % (
            0.05 + 0.01 * (i % 7), 0.04 + 0.005 * (i % 4), 0.02 + 0.003 * (i % 5))
        lines.append("body link%d mass m%d at pos(T%d) + rot(T%d)*%s orient rot(T%d) inertia %s"
                     % (i, i, i, i, c, i, inertia))
        lines.append("dissipation 0.5*q%d'^2" % i)
    lines.append("gravity [0, 0, -g]")
    return "\n".join(lines) + "\n"


if __name__ == "__main__":
    text = arm_model(int(sys.argv[1]))
    if len(sys.argv) > 2:
        with open(sys.argv[2], "w") as f:
            f.write(text)
    else:
        sys.stdout.write(text)
