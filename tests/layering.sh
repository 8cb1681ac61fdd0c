#!/bin/sh
# layering.sh — the compiler's stage folders form a pipeline
# (front -> sym -> emit -> cli); a file may include its own stage and earlier
# ones, never a later one.  The runtime includes nothing of the compiler.
# Exit 1 and name each offending include.
src=${SRCDIR:-$(dirname "$0")/..}
status=0
out=$(mktemp) || exit 99
allowed() {   # allowed STAGE: the stages STAGE may include
  case $1 in
    front) echo "front" ;;
    sym)   echo "front sym" ;;
    emit)  echo "front sym emit" ;;
    cli)   echo "front sym emit cli" ;;
  esac
}
for stage in front sym emit cli; do
  ok=$(allowed "$stage")
  for f in "$src"/compiler/"$stage"/*; do
    grep -n '#include "\(front\|sym\|emit\|cli\)/' "$f" | while IFS= read -r line; do
      inc=$(printf '%s\n' "$line" | sed 's|.*#include "\([a-z]*\)/.*|\1|')
      case " $ok " in
        *" $inc "*) ;;
        *) echo "layering: ${f#"$src"/}:${line%%:*}: a $stage file includes a later stage ($inc/)"; echo x ;;
      esac
    done
  done
done > "$out" 2>&1
grep -v '^x$' "$out"
grep -q '^x$' "$out" && status=1
if grep -n '#include "\(front\|sym\|emit\|cli\)/' "$src"/runtime/* "$src"/include/eom/* 2>/dev/null; then
  echo "layering: the runtime includes compiler headers"; status=1
fi
rm -f "$out"
[ $status = 0 ] && echo "layering: 1 passed, 0 failed" || echo "layering: 0 passed, 1 failed"
exit $status
