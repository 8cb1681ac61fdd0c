"""bench_big.py — large models: what a build step costs.  Figures, not tests.

For spatial arms of 6, 12 and 24 axes (bench/arm_n.py), measured side by
side in one run:

  gen        seconds of `eomc gen`
  size       bytes of P.c
  gcc, clang CPU seconds (user + system) of `CC -O2 -c P.c`, for the code as
             written (large functions in helpers, compiler/emit/emit_parts.c)
             and, where it takes less than BENCH_WHOLE_LIMIT seconds (default
             120) at the size before, as one body per function (--no-split)
  ops        + - * / (sin, cos, ... counted apart) of P_accel, P_jacobian,
             P_coriolis and P_inverse, helpers included

Targets (issue 17): whole file with gcc -O2 under 1 s at 6 axes, 5 s at 12,
20 s at 24.  Set BENCH_SIZES (e.g. "6 12") to measure fewer sizes.
"""
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import arm_n  # noqa: E402
import count_ops  # noqa: E402

EOMC = os.environ.get("EOMC", "./eomc")
SRCDIR = os.environ.get("SRCDIR", ".")
SIZES = [int(s) for s in os.environ.get("BENCH_SIZES", "6 12 24").split()]
WHOLE_LIMIT = float(os.environ.get("BENCH_WHOLE_LIMIT", "120"))


def cpu_seconds(argv, limit=None):
    """CPU seconds (user + system) of argv, or None when it fails or runs
    past `limit` wall seconds."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    try:
        p = subprocess.run(argv, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                           timeout=limit)
    except subprocess.TimeoutExpired:
        return None
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if p.returncode:
        print("  %s failed: %s" % (" ".join(argv[:3]), p.stderr.decode(errors="replace")[:300]))
        return None
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def compile_time(compiler, src, limit=None):
    if not shutil.which(compiler):
        return None
    return cpu_seconds([compiler, "-O2", "-std=c99", "-I", os.path.join(SRCDIR, "include"),
                        "-c", src, "-o", os.devnull], limit)


def fmt(secs, limit=None):
    if secs is None:
        return "> %.0f s (stopped)" % limit if limit else "n/a"
    return "%.2f s" % secs


def main():
    print("large models: spatial arms on dh chains (see bench/bench_big.py):")
    print("  %-5s %8s %9s %14s %14s %14s %s" % ("axes", "gen", "P.c", "gcc -O2", "clang -O2",
                                               "gcc one-body", "ops accel/jacobian/coriolis/inverse"))
    whole_ok = True
    with tempfile.TemporaryDirectory() as tmp:
        for n in SIZES:
            name = "arm%d" % n
            path = os.path.join(tmp, name + ".eom")
            with open(path, "w") as f:
                f.write(arm_n.arm_model(n))
            t0 = time.perf_counter()
            p = subprocess.run([EOMC, "gen", path, "-o", tmp], capture_output=True, text=True)
            gen_s = time.perf_counter() - t0
            if p.returncode:
                print("  eomc gen %s failed: %s" % (name, p.stderr.strip()))
                continue
            src = os.path.join(tmp, name + ".c")
            text = open(src).read()
            ops = [count_ops.count(text, "%s_%s" % (name, fn))[0]
                   for fn in ("accel", "jacobian", "coriolis", "inverse")]
            gcc = compile_time("gcc", src)
            clang = compile_time("clang", src)
            whole = None
            if whole_ok:
                wdir = os.path.join(tmp, "whole")
                os.makedirs(wdir, exist_ok=True)
                subprocess.run([EOMC, "gen", path, "-o", wdir, "--no-split"], check=True)
                whole = compile_time("gcc", os.path.join(wdir, name + ".c"), WHOLE_LIMIT)
                whole_ok = whole is not None   # a larger arm would take longer still
                whole_txt = fmt(whole, WHOLE_LIMIT)
            else:
                whole_txt = "not run"
            print("  %-5d %7.2fs %8.0fK %14s %14s %14s %s" % (
                n, gen_s, len(text) / 1024.0, fmt(gcc), fmt(clang), whole_txt,
                " / ".join("{:,}".format(o) for o in ops)))
    print("  targets: gcc -O2 < 1 s (6 axes), < 5 s (12), < 20 s (24); CPU seconds, "
          "so a busy machine counts less against them than wall time would")


if __name__ == "__main__":
    main()
