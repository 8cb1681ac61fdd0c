# build_env.sh — shared set-up of the build-step tests (sourced, not run).
#
# Installs the build tree with `make install DESTDIR=STAGE`, the way a
# packager does, and points everything at that staged copy: the installed
# eomc, pkg-config (PKG_CONFIG_PATH to the staged eomrt.pc, and
# PKG_CONFIG_SYSROOT_DIR=STAGE so its -I and -L land inside the stage), and
# LD_LIBRARY_PATH for the staged shared runtime.  Nothing outside a fresh
# temporary directory is written, and it is removed on exit.
#
# Provides: tmp, stage, bindir, libdir, includedir, pcdir, man_dir and EOMC;
# fail MESSAGE; run_logged LOG CMD...; newer_than MARKER PATH... (prints the
# paths modified after MARKER).

# The variables set here are for the scripts that source this file.
# shellcheck disable=SC2034
set -eu

: "${BUILDDIR:?BUILDDIR must name the configured build tree}"
: "${SRCDIR:?SRCDIR must name the source tree}"
MAKE=${MAKE:-make}
CC=${CC:-cc}
# The flags the tree was built with (a sanitizer build needs them to link
# programs against its instrumented runtime); the example projects read them
# from the environment too.
CFLAGS=${CFLAGS:-}
LDFLAGS=${LDFLAGS:-}

tmp=$(mktemp -d "${TMPDIR:-/tmp}/eomc-build-test.XXXXXX")
trap 'rm -rf "$tmp"' EXIT

fail() {
  echo "FAIL: $*" >&2
  exit 1
}

# Run a command with its output in a log; on failure show the log and fail.
run_logged() {
  log=$1
  shift
  if ! "$@" >"$log" 2>&1; then
    tail -n 40 "$log" >&2
    fail "command failed: $*"
  fi
}

# The paths among $2... modified after the marker file $1.
newer_than() {
  marker=$1
  shift
  find "$@" -newer "$marker" -print
}

# A make started from `make check` must not talk to the outer make's jobserver.
unset MAKEFLAGS MFLAGS MAKELEVEL || true

stage=$tmp/stage
run_logged "$tmp/install.log" "$MAKE" -C "$BUILDDIR" install DESTDIR="$stage"

# Where configure put things, found in the stage rather than assumed.
pc=$(find "$stage" -name eomrt.pc -type f | head -n 1)
[ -n "$pc" ] || fail "make install did not install eomrt.pc"
pcdir=$(dirname "$pc")
libdir=$(dirname "$pcdir")
eomc_path=$(find "$stage" -name eomc -type f | head -n 1)
[ -n "$eomc_path" ] || fail "make install did not install eomc"
bindir=$(dirname "$eomc_path")
model_h=$(find "$stage" -path '*/eom/model.h' -type f | head -n 1)
[ -n "$model_h" ] || fail "make install did not install eom/model.h"
includedir=$(dirname "$(dirname "$model_h")")
man_dir=$(find "$stage" -type d -name man1 | head -n 1)
man_dir=${man_dir%/man1}

PKG_CONFIG_PATH=$pcdir
PKG_CONFIG_SYSROOT_DIR=$stage
LD_LIBRARY_PATH=$libdir${LD_LIBRARY_PATH:+:$LD_LIBRARY_PATH}
EOMC=$bindir/eomc
export PKG_CONFIG_PATH PKG_CONFIG_SYSROOT_DIR LD_LIBRARY_PATH EOMC CC CFLAGS LDFLAGS

# Copy one of the example build projects (and the model and program they
# share) to a writable place: the source tree may be read-only (distcheck).
copy_examples() {
  cp -R "$SRCDIR/examples/build" "$tmp/examples"
  chmod -R u+w "$tmp/examples"
}
