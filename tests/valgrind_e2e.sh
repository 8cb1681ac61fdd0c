#!/bin/sh
# valgrind_e2e.sh — run eomc end to end under valgrind's memcheck: every
# verb on bundled models, including error paths, must show no invalid memory
# access and no definite leak (CLN's static state aside, tests/valgrind.supp).
# Usage (from a configured build directory): sh SRCDIR/tests/valgrind_e2e.sh SRCDIR
set -u
src=${1:?usage: valgrind_e2e.sh SRCDIR}
out=$(mktemp -d /tmp/eomc-valgrind-XXXXXX)
trap 'rm -rf "$out"' EXIT
vg="./libtool --mode=execute valgrind -q --leak-check=full --errors-for-leak-kinds=definite
    --error-exitcode=99 --suppressions=$src/tests/valgrind.supp"
fail=0
run() {   # run EXPECTED-STATUS ARGS...: eomc must exit with that status and valgrind stay quiet
  want=$1
  shift
  $vg ./eomc "$@" >"$out/stdout" 2>"$out/stderr"
  got=$?
  if [ "$got" != "$want" ]; then
    echo "valgrind_e2e: eomc $* exited $got, expected $want"
    sed -n '1,40p' "$out/stderr"
    fail=1
  fi
}
for m in "$src"/examples/*.eom; do
  run 0 gen "$m" -o "$out"
done
run 0 check "$src/examples/seat_rig.eom"
run 0 show --latex "$src/examples/gantry_crane.eom"
run 0 sim "$src/examples/seat_rig.eom" --until 1 -o "$out/seat.csv"
run 0 modes "$src/examples/shear_frame.eom"
run 0 sweep "$src/examples/seat_rig.eom" --vary k=30000:50000:3 --random "m=normal(78,5)" \
  --runs 2 --until 0.5 --threads 2 -o "$out/sweep.csv"
for m in "$src"/tests/bad/p_unterminated_string.eom "$src"/tests/bad/s_undefined_name.eom; do
  [ -f "$m" ] && run 1 check "$m"
done
run 2 gen
if [ $fail = 0 ]; then echo "valgrind_e2e: 1 passed, 0 failed"; else echo "valgrind_e2e: 0 passed, 1 failed"; fi
exit $fail
