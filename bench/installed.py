"""installed.py — the eomc program a benchmark should time.

In a build tree ./eomc is libtool's wrapper script, which costs a fork and
a shell before eomc starts; the benchmarks time the program itself, the way
it runs once installed."""

import os


def real_binary(eomc):
    """(path, extra environment) to run eomc's own binary."""
    top = os.path.dirname(os.path.abspath(eomc))
    real = os.path.join(top, ".libs", "eomc")
    if not os.path.exists(real):
        return eomc, {}
    libs = os.path.join(top, "runtime", ".libs")
    path = os.environ.get("LD_LIBRARY_PATH")
    return real, {"LD_LIBRARY_PATH": libs + (":" + path if path else "")}
