"""bench_linkage.py — a row of N parallelograms (bench/linkage_row.py) at
N = 1, 4, 10, 40: printed figures, never pass/fail.

  gen        eomc gen: derivation and writing of the C (seconds)
  compile    the first eomc sim's build of that C, less a warm start
  run        10 s of motion with dopri at its default tolerances, through
             the positions where all links align (twice a turn), on the
             dense and on the sparse route of the constrained solve
             (--constraint-solver), measured alternately, best of 3:
             simulated seconds per wall second (the whole command with a
             warm cache: start-up included, so small N read low), and the
             wall time per right-hand-side evaluation (start-up subtracted:
             the fair comparison of the routes where their spans differ),
             steps (rejected), right-hand-side evaluations, the energy's
             largest relative drift, the constraints' largest residual
             max|phi| over the rows, and how far the two routes' rows lie
             apart.  The dense route at N = 40 runs 0.5 s of the motion (its
             eigenvalue solve makes 10 s take minutes); the rate it prints is
             per simulated second like the others.
  target     N = 40, 10 s of motion in <= 1 s of wall time, energy drift
             <= 1e-6 (issue 23)

The route `auto` takes (the default) switches from dense to sparse at
CSOLVE_SPARSE_ROWS constraint rows (runtime/integrators.h); the table shows
where the sparse route starts to pay.  Run through `make bench` (which
passes EOMC and SRCDIR); BENCH_LINKAGE_N="1 4" picks the sizes.
"""
import csv
import math
import os
import re
import subprocess
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import linkage_row  # noqa: E402
import installed  # noqa: E402

EOMC = os.environ.get("EOMC", "./eomc")
SIZES = [int(n) for n in os.environ.get("BENCH_LINKAGE_N", "1 4 10 40").split()]
UNTIL = 10.0


def real_binary():
    return installed.real_binary(EOMC)


def timed(argv, env):
    t0 = time.perf_counter()
    p = subprocess.run(argv, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    dt = time.perf_counter() - t0
    err = p.stderr.decode(errors="replace")
    if p.returncode != 0:
        lines = [l for l in err.splitlines() if "error" in l] or err.splitlines() or [""]
        return dt, None, lines[0][:100]
    return dt, err, None


def stats(err):
    """steps, rejected, evaluations and the largest energy drift from sim's
    summary lines on stderr."""
    m = re.search(r"(\d+) steps \((\d+) rejected\), (\d+) evaluations", err)
    d = re.search(r"max drift ([-+0-9.e]+) relative", err)
    return (int(m.group(1)), int(m.group(2)), int(m.group(3)) if m else 0,
            float(d.group(1)) if d else float("nan"))


def rows_of(path):
    with open(path) as f:
        return list(csv.DictReader(f))


def phi_max(rows, n, L=1.0):
    """max|phi| over the rows: coupler j from rocker j-1's tip must end at
    rocker j's tip (the model's constraint, evaluated here in Python)."""
    worst = 0.0
    for r in rows:
        for j in range(1, n + 1):
            a, c, b = float(r["r%d" % (j - 1)]), float(r["c%d" % j]), float(r["r%d" % j])
            ex = (j - 1) * L + L * math.cos(a) + L * math.cos(c) - (j * L + L * math.cos(b))
            ey = L * math.sin(a) + L * math.sin(c) - L * math.sin(b)
            worst = max(worst, abs(ex), abs(ey))
    return worst


def apart(a, b, n):
    names = ["r%d" % j for j in range(n + 1)] + ["c%d" % j for j in range(1, n + 1)]
    worst = 0.0
    for ra, rb in zip(a, b):
        for k in names:
            worst = max(worst, abs(float(ra[k]) - float(rb[k])))
    return worst if len(a) == len(b) else float("nan")


def one_size(eomc, env0, tmp, n):
    model = os.path.join(tmp, "row%d.eom" % n)
    with open(model, "w") as f:
        f.write(linkage_row.model(n))
    env = dict(env0, EOMC_CACHE_DIR=os.path.join(tmp, "cache%d" % n))
    gen_dir = os.path.join(tmp, "gen%d" % n)
    os.makedirs(gen_dir, exist_ok=True)
    gen = timed([eomc, "gen", model, "-o", gen_dir], env)[0]
    tiny = [eomc, "sim", model, "--until", "1e-6", "-o", os.devnull]
    cold, _, fail = timed(tiny, env)
    if fail:
        print("N = %-3d sim failed: %s" % (n, fail))
        return
    warm = min(timed(tiny, env)[0] for _ in range(3))
    print("N = %d (%d coordinates, %d constraint rows): gen %.2f s, compile %.2f s, warm start %.3f s"
          % (n, 2 * n + 1, 2 * n, gen, max(cold - warm, 0.0), warm))
    spans = {"dense": UNTIL if n < 40 else 0.5, "sparse": UNTIL}
    best, err_of, fails = {}, {}, {}
    for rep in range(3):
        for route in ("dense", "sparse"):
            if route in fails or (route == "dense" and n >= 40 and rep > 0):
                continue  # one dense run at N = 40 is enough (and takes long)
            out = os.path.join(tmp, "row%d-%s.csv" % (n, route))
            argv = [eomc, "sim", model, "--until", str(spans[route]), "--constraint-solver", route,
                    "-o", out]
            dt, err, fail = timed(argv, env)
            if fail:
                fails[route] = fail
                continue
            if dt < best.get(route, float("inf")):
                best[route], err_of[route] = dt, err
    rows, rate, per_eval = {}, {}, {}
    for route in ("dense", "sparse"):
        if route in best:
            rows[route] = rows_of(os.path.join(tmp, "row%d-%s.csv" % (n, route)))
    for route in ("dense", "sparse"):
        if route in fails and route not in best:
            print("  %-7s failed: %s" % (route, fails[route]))
            continue
        steps, rejected, evals, drift = stats(err_of[route])
        rate[route] = spans[route] / best[route]
        per_eval[route] = (best[route] - warm) / max(evals, 1)
        print("  %-7s %9.1f sim s/wall s  (%5.2f s wall for %g s)  %6d steps (%d rejected)  %7d evals"
              " (%.0f us each)  drift %.2g  max|phi| %.2g"
              % (route, rate[route], best[route], spans[route], steps, rejected, evals,
                 1e6 * per_eval[route], drift, phi_max(rows[route], n)))
    if "dense" in rows and "sparse" in rows:
        m = min(len(rows["dense"]), len(rows["sparse"]))
        dense, sparse = rows["dense"], rows["sparse"][:m]
        if spans["dense"] != spans["sparse"]:  # compare the rows at the same times
            by_t = {r["t"]: r for r in rows["sparse"]}
            pairs = [(r, by_t[r["t"]]) for r in dense if r["t"] in by_t]
            dense, sparse = [p[0] for p in pairs], [p[1] for p in pairs]
        print("  sparse / dense: speed %.2fx, time per evaluation %.2fx; rows apart by at most %.2g rad"
              % (rate["sparse"] / rate["dense"], per_eval["dense"] / max(per_eval["sparse"], 1e-12),
                 apart(dense, sparse, n)))


def main():
    eomc, extra = real_binary()
    print("\nrow of N parallelograms (%s): dopri, 10 s of motion, defaults" % eomc)
    with tempfile.TemporaryDirectory(prefix="eomc-bench-linkage-") as tmp:
        env = dict(os.environ, **extra)
        for n in SIZES:
            one_size(eomc, env, tmp, n)
    print("(target: N = 40, 10 s of motion in <= 1 s of wall time, energy drift <= 1e-6)")


if __name__ == "__main__":
    main()
