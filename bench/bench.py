"""bench.py — eomc benchmarks: figures printed, never pass/fail.

Run through `make bench` (which passes the paths).  Everything is measured
side by side in one run, so ratios are meaningful on a noisy machine.

  front end   parse + check a 10,000-statement model
  derivation  eomc gen on planar chains: seconds, peak memory, operation
              counts of P_accel and P_mass + P_forcing with and without CSE,
              ns per P_accel call, and the same derivation with SymPy
  examples    eomc gen on every bundled example
  free body   a 6-DOF free body (three coordinates and an attitude): gen
              time, P_accel operations and ns per call
"""
import glob
import os
import subprocess
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import count_ops  # noqa: E402
import models  # noqa: E402

EOMC = os.environ.get("EOMC", "./eomc")
SRCDIR = os.environ.get("SRCDIR", ".")
CC = os.environ.get("CC", "cc")
PY = "/usr/bin/python3"   # Debian's python3 sees python3-sympy


def run_measured(argv):
    """Run argv; return (seconds, peak RSS in MB, exit status, stderr)."""
    t0 = time.perf_counter()
    p = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    err = p.stderr.read()
    _, status, ru = os.wait4(p.pid, 0)
    p.returncode = status
    dt = time.perf_counter() - t0
    return dt, ru.ru_maxrss / 1024.0, os.waitstatus_to_exitcode(status), err.decode(errors="replace")


def front_end(tmp):
    path = os.path.join(tmp, "big.eom")
    with open(path, "w") as f:
        f.write(models.big_model(10000))
    best = min(run_measured([EOMC, "check", "--no-derive", path])[0] for _ in range(3))
    print("front end: parse + check of a 10,000-statement model: %.3f s (target < 0.2 s)" % best)


def ns_per_accel(tmp, cfile, prefix, nq):
    drv = os.path.join(tmp, "drv_%s.c" % prefix)
    with open(drv, "w") as f:
        f.write("""#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <time.h>
#include "%(p)s.h"
int main(void) {
  double q[%(n)d], qd[%(n)d], qdd[%(n)d], p[%(p)s_NP > 0 ? %(p)s_NP : 1], u[%(p)s_NU > 0 ? %(p)s_NU : 1];
  for (int i = 0; i < %(n)d; i++) { q[i] = 0.1 * i + 0.05; qd[i] = 0.2 - 0.03 * i; }
  %(p)s_default_params(p);
  for (int i = 0; i < %(p)s_NU; i++) u[i] = 0.0;
  long iters = 200000 / (%(n)d * %(n)d) + 1000;
  double sink = 0;
  struct timespec a, b;
  clock_gettime(CLOCK_MONOTONIC, &a);
  for (long k = 0; k < iters; k++) { q[0] += 1e-9; %(p)s_accel(0.0, q, qd, u, p, qdd); sink += qdd[0]; }
  clock_gettime(CLOCK_MONOTONIC, &b);
  double ns = ((b.tv_sec - a.tv_sec) * 1e9 + (b.tv_nsec - a.tv_nsec)) / iters;
  printf("%%.0f %%g\\n", ns, sink);
  return 0;
}
""" % {"p": prefix, "n": nq})
    exe = os.path.join(tmp, "drv_%s" % prefix)
    inc = os.path.join(SRCDIR, "include")
    r = subprocess.run([CC, "-O2", "-std=c99", "-I", inc, "-I", os.path.dirname(cfile),
                        drv, cfile, "-o", exe, "-lm"], capture_output=True, text=True)
    if r.returncode:
        return None
    out = subprocess.run([exe], capture_output=True, text=True).stdout.split()
    return float(out[0]) if out else None


def gen(tmp, model_path, outdir, extra=()):
    os.makedirs(outdir, exist_ok=True)
    return run_measured([EOMC, "gen", model_path, "-o", outdir] + list(extra))


def chains(tmp, sizes, sympy_max):
    print("\nplanar n-link pendulum chains (point masses)")
    print("%4s %8s %8s %10s %10s %12s %10s %9s %9s" % (
        "n", "gen s", "peak MB", "accel ops", "no-CSE", "CSE gain", "M+f ops", "ns/accel", "sympy x"))
    for n in sizes:
        path = os.path.join(tmp, "chain%d.eom" % n)
        with open(path, "w") as f:
            f.write(models.planar_chain(n))
        d_cse, d_raw = os.path.join(tmp, "c%d" % n), os.path.join(tmp, "r%d" % n)
        dt, mb, st, err = gen(tmp, path, d_cse)
        if st != 0:
            print("%4d  eomc gen failed (%d): %s" % (n, st, err.strip().splitlines()[-1:] or ""))
            continue
        gen(tmp, path, d_raw, ["--no-cse"])
        prefix = "chain%d" % n
        src = open(os.path.join(d_cse, prefix + ".c")).read()
        a, c = count_ops.count(src, prefix + "_accel")
        ma, mc = count_ops.count(src, prefix + "_mass")
        fa, fc = count_ops.count(src, prefix + "_forcing")
        raw = open(os.path.join(d_raw, prefix + ".c")).read()
        ra, rc = count_ops.count(raw, prefix + "_accel")
        ns = ns_per_accel(tmp, os.path.join(d_cse, prefix + ".c"), prefix, n)
        ratio = "-"
        if n <= sympy_max:
            r = subprocess.run([PY, os.path.join(SRCDIR, "bench", "sympy_chain.py"), str(n)],
                               capture_output=True, text=True)
            if r.returncode == 0:
                ratio = "%.1f" % (float(r.stdout.split()[0]) / dt)
        print("%4d %8.3f %8.1f %10d %10d %11.1fx %10d %9s %9s" % (
            n, dt, mb, a + c, ra + rc, (ra + rc) / max(1, a + c), ma + mc + fa + fc,
            "%.0f" % ns if ns else "-", ratio))
    print("targets: n=12 < 1 s, n=24 < 5 s, < 200 MB; CSE gain >= 3x at n=12;"
          " M+f ops at n=24 <= 7k; SymPy ratio >= 20x")


def examples(tmp):
    print("\nbundled examples")
    print("%-28s %8s %8s %10s %10s" % ("model", "gen s", "peak MB", "accel ops", "ns/accel"))
    for path in sorted(glob.glob(os.path.join(SRCDIR, "examples", "*.eom"))):
        name = os.path.splitext(os.path.basename(path))[0]
        out = os.path.join(tmp, "ex_" + name)
        dt, mb, st, err = gen(tmp, path, out)
        if st != 0:
            print("%-28s gen failed: %s" % (name, (err.strip().splitlines() or [""])[0]))
            continue
        cfiles = glob.glob(os.path.join(out, "*.c"))
        prefix = os.path.splitext(os.path.basename(cfiles[0]))[0]
        src = open(cfiles[0]).read()
        a, c = count_ops.count(src, prefix + "_accel")
        hdr = open(os.path.join(out, prefix + ".h")).read()
        nq = int(hdr.split("#define %s_NQ" % prefix)[1].split()[0])
        ns = ns_per_accel(tmp, cfiles[0], prefix, nq)
        print("%-28s %8.3f %8.1f %10d %10s" % (name, dt, mb, a + c, "%.0f" % ns if ns else "-"))


FREE_BODY = """model %(name)s
coord x, y, z
attitude R
param m = 2.5
param I1 = 0.11
param I2 = 0.13
param I3 = 0.21
param cx = 0.01
body b mass m at [x, y, z]%(offset)s orient R inertia diag(I1, I2, I3)
gravity [0, 0, -9.81]
"""


def free_body(tmp):
    print("\n6-DOF free body (x, y, z and an attitude)")
    print("%-34s %8s %8s %10s %10s" % ("mass centre", "gen s", "peak MB", "accel ops", "ns/accel"))
    for name, offset, what in (("free6", "", "at the reference point"),
                               ("free6_offset", " + R*[cx, 0, 0]", "off the reference point")):
        path = os.path.join(tmp, name + ".eom")
        with open(path, "w") as f:
            f.write(FREE_BODY % {"name": name, "offset": offset})
        out = os.path.join(tmp, name)
        dt, mb, st, err = gen(tmp, path, out)
        if st != 0:
            print("%-34s eomc gen failed: %s" % (what, (err.strip().splitlines() or [""])[0]))
            continue
        cfile = os.path.join(out, name + ".c")
        a, c = count_ops.count(open(cfile).read(), name + "_accel")
        ns = ns_per_accel(tmp, cfile, name, 7)
        print("%-34s %8.3f %8.1f %10d %10s" % (what, dt, mb, a + c, "%.0f" % ns if ns else "-"))
    print("target: P_accel <= 150 operations for the free body")


def main():
    quick = "--quick" in sys.argv
    with tempfile.TemporaryDirectory(prefix="eomc-bench-") as tmp:
        front_end(tmp)
        chains(tmp, [2, 4, 8] if quick else [2, 4, 8, 12, 16, 24], 4 if quick else 12)
        examples(tmp)
        free_body(tmp)


if __name__ == "__main__":
    main()
