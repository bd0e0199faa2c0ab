#!/bin/sh
# The rate kernel of git revision REV (default HEAD) against the working
# tree's, timed in one process by tests/bench/ab_kernel.c (why: its header
# comment).  For changes to the kernel's speed, whose effect is smaller
# than this machine's drift between two separate runs.
#
#   sh tests/bench/ab.sh [REV [TRIPLES]]
#
# Builds both as shared objects with the Makefile's compiler flags (and the
# user's CFLAGS), in a temporary directory; reports B / A, B being the
# working tree.  Refuses when include/vg_rate.h differs between the two
# (ab_kernel lays out the records by the working tree's copy).  Asserts
# nothing; no part of make check.
set -eu
SRC=$(cd "$(dirname "$0")/../.." && pwd)
cd "$SRC"
REV=${1:-HEAD}
N=${2:-15}
CC=${CC:-cc}
PKG_CONFIG=${PKG_CONFIG:-pkg-config}
PKGS="gsl inih netcdf libpng zlib cairo cairo-pdf cairo-svg pangocairo"
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

if ! git diff --quiet "$REV" -- include/vg_rate.h; then
    echo "ab.sh: include/vg_rate.h differs between $REV and the working tree;" \
        "the records would not match" >&2
    exit 2
fi
mkdir "$T/a"
git archive "$REV" src include | tar -x -C "$T/a"

# $1: tree, $2: output
build_so() {
    # shellcheck disable=SC2046,SC2086
    $CC -std=c17 -ffp-contract=off -fopenmp -fPIC -shared -I"$1/include" -I"$1/src" \
        $($PKG_CONFIG --cflags $PKGS) -DVG_VERSION='"ab"' -DVG_INIH_VERSION='"ab"' \
        ${CFLAGS:--O2 -g} -o "$2" $(ls "$1"/src/*.c | grep -v '/main\.c$') \
        $($PKG_CONFIG --libs $PKGS) -lm
}
echo "building the kernel of $REV and of the working tree ..."
build_so "$T/a" "$T/a.so" 2>"$T/a.log" || { tail -n 5 "$T/a.log" >&2; exit 1; }
build_so "$SRC" "$T/b.so" 2>"$T/b.log" || { tail -n 5 "$T/b.log" >&2; exit 1; }
make -s build/libvibrogate.a
# shellcheck disable=SC2046,SC2086
$CC -std=c17 -fopenmp -Iinclude -Isrc $($PKG_CONFIG --cflags $PKGS) ${CFLAGS:--O2 -g} \
    -o "$T/ab_kernel" tests/bench/ab_kernel.c build/libvibrogate.a \
    $($PKG_CONFIG --libs $PKGS) -lm -ldl
echo "A = $REV ($(git rev-parse --short "$REV")), B = the working tree"
"$T/ab_kernel" "$T/a.so" "$T/b.so" "$N"
