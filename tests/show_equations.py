#!/usr/bin/python3
"""show_equations.py — `eomc show` against the generated C, numerically.

For each constrained model given, read the plain equations `eomc show`
prints — M q'' = f + G^T lambda with the constraint forces written out,
the constraints phi = 0 (A q' = b) and their acceleration form
G q'' = gamma — parse them with SymPy (the reference algebra: an outside
library, not eomc), and evaluate both sides at random states with the q''
and lambda that the generated accel_constrained() computes there, and phi
against the generated constraint_at().  Every printed equation must hold to
1e-10 relative.  Also checks that every multiplier has a line saying which
constraint it belongs to.

usage: show_equations.py EOMC CC BUILD_DIR MODEL.eom...
"""
import os
import re
import subprocess
import sys

try:
    import sympy
except ImportError:
    print("SKIP: SymPy not found (Debian: python3-sympy)")
    sys.exit(77)

TOL = 1e-10

DRIVER = r'''
#include <stdio.h>
#include <stdlib.h>
#include <eom/model.h>
#include "%(P)s.h"
/* Random states: q, q', inputs in [-1, 1], params at their defaults; print
** every value by name, then q'' and lambda from accel_constrained and phi. */
int main(int argc, char **argv) {
  const struct eom_model *m = &%(P)s_model;
  int n = argc > 1 ? atoi(argv[1]) : 4, nl = m->nc + m->nvc, k, i;
  unsigned long s = 12345;
  for (k = 0; k < n; k++) {
    double q[64], qd[64], qdd[64], u[64], lam[64], phi[64], G[4096], pt[64], t = 0.25 * k;
    for (i = 0; i < m->nq; i++) {
      s = s * 6364136223846793005UL + 1442695040888963407UL;
      q[i] = m->q0[i] + 0.3 * ((double)(s >> 11) / 9007199254740992.0 - 0.5);
      s = s * 6364136223846793005UL + 1442695040888963407UL;
      qd[i] = 2 * ((double)(s >> 11) / 9007199254740992.0 - 0.5);
    }
    for (i = 0; i < m->nu; i++) u[i] = 0.1 * (i + 1);
    if (m->accel_constrained(t, q, qd, u, m->param_defaults, qdd, lam) != 0) return 2;
    if (m->nc > 0) m->constraint_at(t, q, m->param_defaults, phi, G, pt);
    printf("state\nt %%.17g\n", t);
    for (i = 0; i < m->nq; i++)
      printf("q %%s %%.17g\nqd %%s %%.17g\nqdd %%s %%.17g\n", m->coord_names[i], q[i],
             m->coord_names[i], qd[i], m->coord_names[i], qdd[i]);
    for (i = 0; i < m->np; i++) printf("p %%s %%.17g\n", m->param_names[i], m->param_defaults[i]);
    for (i = 0; i < m->nu; i++) printf("p %%s %%.17g\n", m->input_names[i], u[i]);
    for (i = 0; i < nl; i++) printf("lambda %%d %%.17g\n", i + 1, lam[i]);
    for (i = 0; i < m->nc; i++) printf("phi %%d %%.17g\n", i + 1, phi[i]);
  }
  return 0;
}
'''


def run(cmd, **kw):
    r = subprocess.run(cmd, capture_output=True, text=True, **kw)
    if r.returncode != 0:
        raise SystemExit("FAIL: %s exited %d\n%s%s" % (" ".join(cmd), r.returncode, r.stdout,
                                                      r.stderr))
    return r.stdout


def sections(text):
    """Section title (its first words) -> its indented lines."""
    out, cur = {}, None
    for line in text.splitlines():
        if line and not line.startswith(" "):
            cur = line
            out[cur] = []
        elif line.startswith("  ") and cur is not None:
            out[cur].append(line.strip())
    return out


def find(secs, start):
    for title, lines in secs.items():
        if title.startswith(start):
            return lines
    raise SystemExit("FAIL: no section '%s' in the show output" % start)


class Reader:
    """Plain show syntax to SymPy: x'' and x' become symbols, ^ is **,
    $N the shared subexpressions; every model name is a plain symbol (so a
    parameter called `gamma` is not SymPy's function)."""

    def __init__(self, names):
        self.local = {n: sympy.Symbol(n) for n in names}
        for n in names:
            self.local[n + "__d"] = sympy.Symbol(n + "__d")
            self.local[n + "__dd"] = sympy.Symbol(n + "__dd")
        for k in range(1, 100):
            self.local["lambda%d" % k] = sympy.Symbol("lambda%d" % k)
        self.local["t"] = sympy.Symbol("t")
        self.local["pi"] = sympy.pi
        self.temps = {}

    def parse(self, text):
        text = re.sub(r"([A-Za-z_][A-Za-z0-9_]*)''", r"\1__dd", text)
        text = re.sub(r"([A-Za-z_][A-Za-z0-9_]*)'", r"\1__d", text)
        text = re.sub(r"\$([0-9]+)", r"_tmp\1", text).replace("^", "**")
        local = dict(self.local)
        local.update(self.temps)
        return sympy.sympify(text, locals=local)

    def define(self, line):
        name, rhs = line.split(" = ", 1)
        self.temps["_tmp" + name.strip()[1:]] = self.parse(rhs)


def states(out):
    blocks = out.split("state\n")[1:]
    for b in blocks:
        vals, lam, phi = {}, {}, {}
        for line in b.strip().splitlines():
            f = line.split()
            if f[0] == "t":
                vals["t"] = float(f[1])
            elif f[0] == "q":
                vals[f[1]] = float(f[2])
            elif f[0] == "qd":
                vals[f[1] + "__d"] = float(f[2])
            elif f[0] == "qdd":
                vals[f[1] + "__dd"] = float(f[2])
            elif f[0] == "p":
                vals[f[1]] = float(f[2])
            elif f[0] == "lambda":
                vals["lambda" + f[1]] = float(f[2])
            elif f[0] == "phi":
                phi[int(f[1])] = float(f[2])
        yield vals, phi


def value(expr, vals):
    subs = {sympy.Symbol(k): sympy.Float(v, 30) for k, v in vals.items()}
    return complex(sympy.sympify(expr).xreplace(subs).evalf(30))


def scale_of(expr, vals):
    """Largest term of a sum, for a relative tolerance."""
    terms = sympy.Add.make_args(sympy.expand(expr)) if len(str(expr)) < 4000 else [expr]
    return max([abs(value(t, vals)) for t in terms] + [1.0])


def check_model(eomc, cc, work, model):
    name = os.path.splitext(os.path.basename(model))[0]
    shown = run([eomc, "show", model])
    secs = sections(shown)
    wd = os.path.join(work, name)
    os.makedirs(wd, exist_ok=True)
    run([eomc, "gen", model, "-o", wd])
    P = [f[:-2] for f in os.listdir(wd) if f.endswith(".h")][0]
    with open(os.path.join(wd, "driver.c"), "w") as f:
        f.write(DRIVER % {"P": P})
    include = os.path.join(os.environ.get("SRCDIR", "."), "include")
    exe = os.path.join(wd, "driver")
    run([cc, "-std=c99", "-O1", "-I", wd, "-I", include, os.path.join(wd, "driver.c"),
         os.path.join(wd, P + ".c"), "-o", exe, "-lm"])
    data = run([exe, "3"])

    coords = re.findall(r"^q (\S+) ", data, re.M)
    params = re.findall(r"^p (\S+) ", data, re.M)
    rd = Reader(set(coords) | set(params))
    if any(t.startswith("where") for t in secs):
        for line in find(secs, "where"):
            rd.define(line)
    eqs = [rd.parse(l.split(" = ")[0]) - rd.parse(l.split(" = ", 1)[1])
           for l in find(secs, "equations of motion (M q'' = f + G^T lambda)")]
    acc = [l.split(") ", 1)[1] for l in find(secs, "constraints at acceleration level")]
    acc = [rd.parse(a.split(" = ")[0]) - rd.parse(a.split(" = ", 1)[1]) for a in acc]
    cons = [l.split(") ", 1)[1].split("    [")[0] for l in find(secs, "constraints (phi")]
    mults = find(secs, "multipliers")
    nl = len(re.findall(r"^lambda ", data.split("state\n")[1], re.M))
    nq = len(re.findall(r"^q ", data.split("state\n")[1], re.M))
    if len(eqs) != nq:
        raise SystemExit("FAIL: %s: %d equations of motion for %d coordinates" % (model, len(eqs), nq))
    if len(acc) != nl or len(cons) != nl or len(mults) != nl:
        raise SystemExit("FAIL: %s: %d multipliers, but %d acceleration rows, %d constraints, "
                         "%d multiplier lines" % (model, nl, len(acc), len(cons), len(mults)))
    for k, line in enumerate(mults):
        if not line.startswith("lambda%d: of constraint (%d)" % (k + 1, k + 1)):
            raise SystemExit("FAIL: %s: multiplier line '%s'" % (model, line))
    worst = 0.0
    for vals, phi in states(data):
        for what, rows in (("equation of motion", eqs), ("acceleration row", acc)):
            for i, e in enumerate(rows):
                r = abs(value(e, vals)) / scale_of(e, vals)
                worst = max(worst, r)
                if not r <= TOL:
                    raise SystemExit("FAIL: %s: %s %d off by %.3g (relative) at %s"
                                     % (model, what, i + 1, r, vals))
        for k, text in enumerate(cons):
            if k + 1 not in phi:
                continue  # a velocity constraint: A q' = b is checked through its rows above
            e = rd.parse(text.split(" = ")[0])
            r = abs(value(e, vals) - phi[k + 1]) / max(1.0, abs(phi[k + 1]))
            if not r <= TOL:
                raise SystemExit("FAIL: %s: constraint %d prints %s, generated phi %.17g"
                                 % (model, k + 1, text, phi[k + 1]))
    print("PASS: %s (%d equations, %d multipliers; worst relative residual %.2g)"
          % (model, len(eqs), nl, worst))


def main(argv):
    if len(argv) < 5:
        print(__doc__)
        return 2
    eomc, cc, work = argv[1], argv[2], argv[3]
    os.makedirs(work, exist_ok=True)
    for model in argv[4:]:
        check_model(eomc, cc, work, model)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
