"""linkage_row.py — model text of a row of N parallelograms, for benchmarks
and tests.

N + 1 equal rockers (uniform rods, length L, mass m) turn about shafts at
0, L, 2L, ... N L on a ground line; coupler j (a uniform rod, length L,
mass m) is pinned to the tip of rocker j - 1 and its far end to the tip of
rocker j.  Each coupler and its two rockers form a parallelogram, so the
row has one degree of freedom while its model carries 2N + 1 angles and 2N
constraint equations.  Started with every rocker upright and turning at w0,
the row turns over fully and passes the positions where all links lie on
the ground line twice a turn; there N rows of G = dphi/dq vanish together.

Coordinates are ordered r0, c1, r1, c2, r2, ... (rocker, coupler, ...): a
coupler's kinetic energy involves its own angle and that of the rocker it
hangs from, so M is block diagonal (2 x 2 blocks and one 1 x 1) and
G M⁻¹ Gᵀ is banded: the structure runtime/constraint_solve.c exploits.

  python3 linkage_row.py N > row.eom
"""
import sys


def model(n, w0=6.0):
    assert n >= 1
    out = []
    out.append("# parallelogram_row%d.eom — a row of %d parallelogram(s): %d rockers on a\n"
               "# ground line joined by %d coupler(s), one degree of freedom (written by\n"
               "# bench/linkage_row.py).\n" % (n, n, n + 1, n))
    out.append("model parallelogram_row%d\n" % n)
    names = []
    for j in range(n + 1):
        if j > 0:
            names.append("c%d" % j)
        names.append("r%d" % j)
    out.append("coord %s [rad]\n" % ", ".join(names))
    out.append("param m = 1 [kg] \"each rod\"\n")
    out.append("param L = 1 [m] \"each rod, and the spacing of the shafts\"\n")
    out.append("param g = 9.81 [m/s^2]\n")
    for j in range(n + 1):
        out.append("let tip%d = [%d*L + L*cos(r%d), L*sin(r%d)]\n" % (j, j, j, j))
    for j in range(n + 1):
        out.append("kinetic 1/2*(m*L^2/3)*r%d'^2\n" % j)
        out.append("potential m*g*L/2*sin(r%d)\n" % j)
    for j in range(1, n + 1):
        out.append("let mid%d = tip%d + L/2*[cos(c%d), sin(c%d)]\n" % (j, j - 1, j, j))
        out.append("kinetic 1/2*m*dot(mid%d', mid%d') + 1/2*(m*L^2/12)*c%d'^2\n" % (j, j, j))
        out.append("potential m*g*mid%d[2]\n" % j)
        out.append("constraint tip%d + L*[cos(c%d), sin(c%d)] = tip%d\n" % (j - 1, j, j, j))
    for j in range(n + 1):
        out.append("initial r%d = pi/2\n" % j)
        out.append("initial r%d' = %.17g\n" % (j, w0))
    return "".join(out)


if __name__ == "__main__":
    sys.stdout.write(model(int(sys.argv[1]) if len(sys.argv) > 1 else 4))
