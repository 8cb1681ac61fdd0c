"""bench_arm.py — robot-arm benchmarks: figures printed, never pass/fail.

Run through `make bench` (which passes the paths).  Measured side by side in
one run:

  derivation  eomc gen on examples/picking_arm6.eom (6 axes) and on a 7-axis
              arm of our own (written below): seconds and peak memory
              (targets: < 3 s and < 300 MB at 6 axes, < 6 s at 7)
  size        + - * / in the generated P_accel (sin/cos counted apart;
              target <= 1,500 at 6 axes)
  speed       ns per forward-dynamics call: the generated picking_arm6_accel
              against bench/recursive_arm.c (recursive Newton-Euler +
              composite-rigid-body + Cholesky, plain C), both compiled -O2
              into one program that first checks they agree
"""
import os
import subprocess
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import count_ops  # noqa: E402

EOMC = os.environ.get("EOMC", "./eomc")
SRCDIR = os.environ.get("SRCDIR", ".")
CC = os.environ.get("CC", "cc")


def run_measured(argv):
    """Run argv; return (seconds, peak RSS in MB, exit status, stderr)."""
    t0 = time.perf_counter()
    p = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    err = p.stderr.read()
    _, status, ru = os.wait4(p.pid, 0)
    dt = time.perf_counter() - t0
    return dt, ru.ru_maxrss / 1024.0, os.waitstatus_to_exitcode(status), err.decode(errors="replace")


def arm7_model():
    """A 7-axis arm (benchmark family, our own numbers): shoulder roll/pitch,
    upper-arm roll, elbow, forearm roll, wrist pitch and flange roll, one
    rigid body per link with a full inertia and an offset mass centre."""
    dh = [("d1", "0", "pi/2"), ("0", "0", "-pi/2"), ("d3", "0", "pi/2"), ("0", "a4", "-pi/2"),
          ("d5", "0", "pi/2"), ("0", "0", "-pi/2"), ("d7", "0", "0")]
    lines = ["# 7-axis arm (benchmark family)", "model arm7",
             "coord " + ", ".join("q%d" % i for i in range(1, 8)),
             "param d1 = 0.36", "param d3 = 0.42", "param a4 = 0.05", "param d5 = 0.4",
             "param d7 = 0.12", "param g = 9.81"]
    prev = None
    for i, (d, a, al) in enumerate(dh, 1):
        lines.append("param m%d = %g" % (i, 9.0 - i))
        lines.append("input tau%d" % i)
        lines.append("force q%d = tau%d" % (i, i))
        t = "dh(q%d, %s, %s, %s)" % (i, d, a, al)
        lines.append("let T%d = %s" % (i, t if prev is None else prev + "*" + t))
        prev = "T%d" % i
        c = "[%g, %g, %g]" % (0.01 * i, -0.02 * (i % 3), 0.03 + 0.01 * (i % 2))
        inertia = "[[%g, 0.002, 0], [0.002, %g, 0.001], [0, 0.001, %g]]" % (
            0.05 + 0.01 * i, 0.04 + 0.005 * i, 0.02 + 0.003 * i)
        lines.append("body link%d mass m%d at pos(T%d) + rot(T%d)*%s orient rot(T%d) inertia %s"
                     % (i, i, i, i, c, i, inertia))
        lines.append("dissipation 0.5*q%d'^2" % i)
    lines.append("gravity [0, 0, -g]")
    return "\n".join(lines) + "\n"


def gen(path, outdir):
    secs, mb, status, err = run_measured([EOMC, "gen", path, "-o", outdir])
    if status:
        print("  eomc gen %s failed: %s" % (os.path.basename(path), err.strip()))
        return None
    return secs, mb


def main():
    with tempfile.TemporaryDirectory() as tmp:
        print("robot arms (see bench/bench_arm.py):")
        arm6 = os.path.join(SRCDIR, "examples", "picking_arm6.eom")
        arm7 = os.path.join(tmp, "arm7.eom")
        with open(arm7, "w") as f:
            f.write(arm7_model())
        for name, path, target in (("picking_arm6", arm6, 3.0), ("arm7", arm7, 6.0)):
            best = None
            for _ in range(3):
                r = gen(path, tmp)
                if r is None:
                    break
                best = r if best is None or r[0] < best[0] else best
            if best is None:
                continue
            src = open(os.path.join(tmp, name + ".c")).read()
            a, c = count_ops.count(src, name + "_accel")
            ma, _ = count_ops.count(src, name + "_mass")
            fa, _ = count_ops.count(src, name + "_forcing")
            print("  %-13s eomc gen %.2f s (target < %g s), %.0f MB (target < 300 MB); "
                  "P_accel %d + - * / and %d calls (target <= 1,500 at 6 axes); "
                  "P_mass %d, P_forcing %d" % (name, best[0], target, best[1], a, c, ma, fa))
        # speed, side by side
        r = gen(arm6, tmp)
        if r is None:
            return
        exe = os.path.join(tmp, "recursive_arm")
        cc = subprocess.run([CC, "-O2", "-std=c99", "-I", tmp, "-I", os.path.join(SRCDIR, "include"),
                             os.path.join(SRCDIR, "bench", "recursive_arm.c"),
                             os.path.join(tmp, "picking_arm6.c"), "-o", exe, "-lm"],
                            capture_output=True, text=True)
        if cc.returncode:
            print("  recursive_arm.c does not build: " + cc.stderr.strip())
            return
        run = subprocess.run([exe], capture_output=True, text=True)
        if run.returncode:
            print("  recursive_arm failed: " + run.stderr.strip())
            return
        g_ns, r_ns, worst = [float(v) for v in run.stdout.split()[:3]]
        print("  forward dynamics of picking_arm6, ns per call (-O2, best of 7 alternating "
              "rounds): generated %.0f, recursive algorithms in C %.0f; generated/recursive = "
              "%.2f (target < 1); largest relative difference %.1e"
              % (g_ns, r_ns, g_ns / r_ns, worst))


if __name__ == "__main__":
    main()
