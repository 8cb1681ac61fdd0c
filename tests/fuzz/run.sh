#!/bin/sh
# run.sh — build the libFuzzer harnesses with clang and run each for a
# bounded time (FUZZ_SECONDS, default 60) from the seed corpus.
#
# Called by `make fuzz`, which passes the source lists; by hand:
#   SRCDIR=/path/to/src BUILDDIR=/path/to/build tests/fuzz/run.sh
# BUILDDIR must hold the generated grammar/lexer.c and grammar/parser.c
# (`make libeomfront.a` there makes them).  Exit status: 0 when no fuzzer
# found anything, 1 otherwise (crash inputs are left in $FUZZ_WORK/crashes),
# 77 when clang or its libFuzzer runtime is missing.
set -u

SRCDIR=${SRCDIR:-$(cd "$(dirname "$0")/../.." && pwd)}
BUILDDIR=${BUILDDIR:-.}
FUZZ_SECONDS=${FUZZ_SECONDS:-60}
FUZZ_WORK=${FUZZ_WORK:-$BUILDDIR/tests/fuzz-work}
FUZZ_TARGETS=${FUZZ_TARGETS:-"frontend symbolic"}
CLANG=${CLANG:-clang}
CLANGXX=${CLANGXX:-clang++}
# Source lists from Makefile.am (make fuzz passes them); defaults for hand use.
FRONT_SOURCES=${FRONT_SOURCES:-"$(cd "$SRCDIR" && echo compiler/front/*.c)"}
SYM_SOURCES=${SYM_SOURCES:-"$(cd "$SRCDIR" && echo compiler/sym/*.c compiler/sym/*.cc)"}

BUILDDIR=$(cd "$BUILDDIR" && pwd)
mkdir -p "$FUZZ_WORK" && FUZZ_WORK=$(cd "$FUZZ_WORK" && pwd)

if ! command -v "$CLANG" >/dev/null 2>&1; then
  echo "SKIP: clang not found (Debian: clang, libclang-rt-14-dev)"; exit 77
fi
printf 'int LLVMFuzzerTestOneInput(const char *d, unsigned long n) { (void)d; (void)n; return 0; }\n' \
  > "$FUZZ_WORK/probe.c"
if ! "$CLANG" -fsanitize=fuzzer "$FUZZ_WORK/probe.c" -o "$FUZZ_WORK/probe" 2>/dev/null; then
  echo "SKIP: clang cannot link libFuzzer (Debian: libclang-rt-14-dev)"; exit 77
fi
for g in lexer.c parser.c; do
  if [ ! -f "$BUILDDIR/grammar/$g" ]; then
    echo "error: $BUILDDIR/grammar/$g missing: run 'make libeomfront.a' in the build directory" >&2
    exit 2
  fi
done

SAN="-g -O1 -fno-omit-frame-pointer -fsanitize=fuzzer-no-link,address,undefined -fno-sanitize-recover=undefined"
INC="-iquote $SRCDIR/compiler -iquote $BUILDDIR/grammar -iquote $SRCDIR/grammar -I$SRCDIR/include"
OBJ="$FUZZ_WORK/obj"
mkdir -p "$OBJ"

# compile SRC...: instrumented objects in $OBJ; prints their paths.
compile() {
  for s in "$@"; do
    case "$s" in
      *.c)  src=$SRCDIR/$s; [ -f "$src" ] || src=$BUILDDIR/$s
            o=$OBJ/$(echo "$s" | tr / _).o
            "$CLANG" -std=c99 -D_POSIX_C_SOURCE=200809L $SAN $INC -c "$src" -o "$o" || return 1 ;;
      *.cc) o=$OBJ/$(echo "$s" | tr / _).o
            "$CLANGXX" -std=c++17 $SAN $INC $(pkg-config --cflags ginac) -c "$SRCDIR/$s" -o "$o" || return 1 ;;
      *) continue ;;
    esac
    echo "$o"
  done
}

echo "fuzz: building the harnesses with $CLANG"
front_objs=$(compile $FRONT_SOURCES grammar/lexer.c grammar/parser.c) || exit 2
"$CLANG" $SAN -fsanitize=fuzzer $INC -c "$SRCDIR/tests/fuzz/fuzz_frontend.c" -o "$OBJ/fuzz_frontend.o" || exit 2
"$CLANG" $SAN -fsanitize=fuzzer "$OBJ/fuzz_frontend.o" $front_objs -lm -o "$FUZZ_WORK/fuzz_frontend" || exit 2
case " $FUZZ_TARGETS " in *" symbolic "*)
  sym_objs=$(compile $SYM_SOURCES) || exit 2
  "$CLANG" $SAN -fsanitize=fuzzer $INC -c "$SRCDIR/tests/fuzz/fuzz_symbolic.c" -o "$OBJ/fuzz_symbolic.o" || exit 2
  "$CLANGXX" $SAN -fsanitize=fuzzer "$OBJ/fuzz_symbolic.o" $sym_objs $front_objs \
    $(pkg-config --libs ginac) -lm -o "$FUZZ_WORK/fuzz_symbolic" || exit 2 ;;
esac

# Seed corpus: every model of the project (examples, the malformed catalogue,
# the differential reproducers) plus the dictionary of the language's words.
seeds=$FUZZ_WORK/seeds
mkdir -p "$seeds"
for f in "$SRCDIR"/examples/*.eom "$SRCDIR"/tests/bad/*.eom "$SRCDIR"/tests/models/*.eom \
         "$SRCDIR"/tests/differential/repro/*.eom "$SRCDIR"/tests/fuzz/corpus/*; do
  [ -f "$f" ] && cp "$f" "$seeds/"
done

status=0
mkdir -p "$FUZZ_WORK/crashes"
for target in $FUZZ_TARGETS; do
  corpus=$FUZZ_WORK/corpus-$target
  mkdir -p "$corpus"
  echo "fuzz: running fuzz_$target for $FUZZ_SECONDS s"
  # detect_leaks: the front end owns its memory in arenas; a leak is a bug.
  ASAN_OPTIONS=detect_leaks=1:allocator_may_return_null=1 \
  LSAN_OPTIONS=suppressions=$SRCDIR/tests/fuzz/lsan.supp:print_suppressions=0 \
  "$FUZZ_WORK/fuzz_$target" -max_total_time="$FUZZ_SECONDS" -timeout=20 -rss_limit_mb=2048 \
    -max_len=8192 -dict="$SRCDIR/tests/fuzz/eom.dict" -print_final_stats=1 \
    -artifact_prefix="$FUZZ_WORK/crashes/$target-" "$corpus" "$seeds" \
    > "$FUZZ_WORK/fuzz_$target.log" 2>&1
  rc=$?
  tail -n 12 "$FUZZ_WORK/fuzz_$target.log"
  if [ $rc -ne 0 ]; then
    echo "fuzz: fuzz_$target FOUND A PROBLEM (exit $rc); inputs in $FUZZ_WORK/crashes, log $FUZZ_WORK/fuzz_$target.log"
    status=1
  fi
done
exit $status
