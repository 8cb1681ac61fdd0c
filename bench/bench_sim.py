"""bench_sim.py — `eomc sim` figures: printed, never pass/fail.

  start-up   generate + compile + load before the first step, with a cold
             cache (a fresh EOMC_CACHE_DIR) and a warm one (target < 50 ms)
  speed      simulated seconds per wall-clock second for every bundled
             example, per method, start-up subtracted

Run through `make bench` (which passes EOMC, SRCDIR and CC).
"""
import glob
import os
import subprocess
import sys
import tempfile
import time
import installed  # noqa: E402

EOMC = os.environ.get("EOMC", "./eomc")
SRCDIR = os.environ.get("SRCDIR", ".")


def real_binary():
    return installed.real_binary(EOMC)


def run(argv, env):
    t0 = time.perf_counter()
    p = subprocess.run(argv, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    return time.perf_counter() - t0, p.returncode, p.stderr.decode(errors="replace")


def first_line(text):
    lines = [l for l in text.strip().splitlines() if "error" in l] or text.strip().splitlines() or [""]
    return lines[0][:70]


def main():
    models = sorted(glob.glob(os.path.join(SRCDIR, "examples", "*.eom")))
    eomc, extra_env = real_binary()
    print("\neomc sim (%s)" % eomc)
    print("%-20s %10s %10s  %s" % ("model", "cold ms", "warm ms", "simulated s per wall s"))
    methods = ["dopri", "rk4", "midpoint", "radau5"]
    with tempfile.TemporaryDirectory(prefix="eomc-bench-sim-") as tmp:
        for path in models:
            name = os.path.splitext(os.path.basename(path))[0]
            env = dict(os.environ, EOMC_CACHE_DIR=os.path.join(tmp, "cache-" + name), **extra_env)
            tiny = [eomc, "sim", path, "--until", "1e-6", "-o", os.devnull]
            cold, st, err = run(tiny, env)
            if st != 0:
                print("%-20s sim failed: %s" % (name, first_line(err)))
                continue
            warm = min(run(tiny, env)[0] for _ in range(5))
            speeds = []
            for method in methods:
                until = 100.0
                argv = [eomc, "sim", path, "--until", str(until), "--step", "0.01",
                        "--method", method, "-o", os.devnull]
                dt, st, err = run(argv, env)
                if st != 0:
                    speeds.append("%s failed" % method)
                    continue
                speeds.append("%s %.0f" % (method, until / max(dt - warm, 1e-6)))
            print("%-20s %10.1f %10.1f  %s" % (name, 1000 * cold, 1000 * warm, ", ".join(speeds)))
    print("(warm start-up target: < 50 ms; speed: 100 s simulated, 10,001 CSV rows written;")
    print(" the fixed-step methods step at 0.01 s)")


if __name__ == "__main__":
    sys.exit(main())
