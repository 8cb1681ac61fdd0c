#!/bin/sh
# run_check.sh — the differential tests as `make check` runs them: a bounded
# number of random models (DIFFERENTIAL_COUNT, default 100, seeds 1...) and
# every reproducer kept in tests/differential/repro/.  Exit 77 (skipped)
# only when SymPy is missing; see run_differential.py.
set -u
SRCDIR=${SRCDIR:-$(cd "$(dirname "$0")/../.." && pwd)}
BUILDDIR=${BUILDDIR:-.}
PYTHON=/usr/bin/python3
[ -x "$PYTHON" ] || { echo "SKIP: $PYTHON not found (Debian: python3-sympy)"; exit 77; }
runner="$SRCDIR/tests/differential/run_differential.py"
work="$BUILDDIR/tests/differential-work"
failures="$BUILDDIR/tests/differential-failures"
rm -rf "$work" "$failures"

"$PYTHON" "$runner" --count "${DIFFERENTIAL_COUNT:-100}" --start 1 \
  --work "$work/random" --failures "$failures"
status=$?
[ $status -eq 77 ] && exit 77

set -- $(grep -l "^# differential: seed=" "$SRCDIR"/tests/differential/repro/*.eom 2>/dev/null)
if [ $# -gt 0 ]; then
  "$PYTHON" "$runner" --replay "$@" --work "$work/repro" --failures "$failures/repro"
  rs=$?
  [ $rs -ne 0 ] && status=$rs
fi
[ $status -eq 0 ] && rm -rf "$work"
exit $status
