#!/bin/sh
# man_options.sh — every option that `eomc COMMAND --help` lists is described
# in the COMMANDS section of docs/eomc.1 under that command (and the global
# ones anywhere in the page): the man page cannot fall behind the --help.
set -u
EOMC=${EOMC:-./eomc}
SRCDIR=${SRCDIR:-$(cd "$(dirname "$0")/.." && pwd)}
man="$SRCDIR/docs/eomc.1"
status=0
# The page with roff's \- as plain '-'.
text=$(sed 's/\\-/-/g' "$man")
commands=$("$EOMC" --help | awk '/^commands:/{on=1; next} /^$/{on=0} on && NF {print $1}')
[ -n "$commands" ] || { echo "FAIL: no commands in 'eomc --help'"; exit 1; }
for opt in $("$EOMC" --help | grep -o -- '--[a-z][a-z0-9-]*' | sort -u); do
  printf '%s\n' "$text" | grep -q -- "$opt" || { echo "FAIL: eomc $opt is not in docs/eomc.1"; status=1; }
done
for cmd in $commands; do
  # The command's entry: from its .BI "cmd " heading to the next heading.
  section=$(printf '%s\n' "$text" | awk -v c="$cmd" '
    $0 ~ "^\\.BI? \"" c " " { on = 1; print; next }
    on && /^\.BI? "[a-z]+ "/ { on = 0 }
    on && /^\.SH/ { on = 0 }
    on { print }')
  if [ -z "$section" ]; then
    echo "FAIL: docs/eomc.1 has no entry for '$cmd' under COMMANDS"
    status=1
    continue
  fi
  for opt in $("$EOMC" "$cmd" --help | grep -o -- '\(^\|[ ,]\)--\?[a-zA-Z][a-zA-Z0-9-]*' |
               sed 's/^[ ,]*//' | grep -- '^-' | sort -u); do
    case $opt in -h|--help) continue ;; esac
    printf '%s\n' "$section" | grep -q -- "$opt\\b" ||
      { echo "FAIL: 'eomc $cmd --help' lists $opt, docs/eomc.1 does not describe it for $cmd"; status=1; }
  done
done
exit $status
