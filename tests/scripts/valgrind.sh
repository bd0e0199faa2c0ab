#!/bin/sh
# Valgrind memcheck over end-to-end commands of the ordinary build's
# baseline twin (build-base/vibrogate, see below; or VG_BUILD): a sweep of
# a small grid into a temporary
# directory with NetCDF, CSV, PNG, PDF and SVG outputs; render from its
# sweep.nc; point, point --json and check; spectrum; and bad inputs from the
# catalogue (tests/bad/, format in tests/bad/README) plus a usage error.
#
# Each command runs under
#   valgrind --tool=memcheck --error-exitcode=99 --leak-check=full
#            --errors-for-leak-kinds=definite,indirect
# and passes when its exit status is the documented one (0, or the status in
# the case's .expect file, or 2 for a usage error; docs/config.md "Exit
# statuses"), valgrind's log says "ERROR SUMMARY: 0 errors" (so no invalid
# access, no use of an uninitialised value, no definite or indirect leak)
# and, for the commands that write files, the files are there.  First, a
# probe proves the check can fail: a tiny program that leaks one block must
# get exit status 99 and a "definitely lost" record.  Memory still
# reachable at exit (library caches) and "possibly lost" blocks are not
# errors.  Suppressions: tests/valgrind.supp, library frames only, each
# documented there.
#
# Not run inside the sanitizer run (VG_UNDER_SANITIZER, set by
# tests/scripts/sanitize.sh): valgrind cannot run an ASan binary.  The MPI
# build (VG_BUILD=build-mpi) is not memchecked; the one-process build is.
set -u
SRC=$(cd "$(dirname "$0")/../.." && pwd)
cd "$SRC" || exit 1
[ -z "${VG_UNDER_SANITIZER:-}" ] || { echo "valgrind.sh: not run against the sanitizer build"; exit 0; }
pass() { echo "PASS: $1"; }
fail() { echo "FAIL: $1: $2"; }
B=${VG_BUILD:-build}
[ "$B" = build-mpi ] && B=build
# The ordinary build's baseline twin (make BASELINE=1, build-base/): the
# same code with the rate kernel's lanes compiled for baseline x86-64 only,
# because valgrind 3.19 stops at some AVX2 encodings GCC emits (an "illegal
# opcode" in the kernel's AVX2 version).  tests/scripts/lanes.sh shows that
# the two builds give the same bits.
if [ "$B" = build ]; then
    make -s BASELINE=1 all >/dev/null 2>&1 || { fail "baseline build" "make BASELINE=1 all failed"; exit 1; }
    B=build-base
fi
case "$B" in /*) VG="$B/vibrogate" ;; *) VG="$SRC/$B/vibrogate" ;; esac
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

if ! command -v valgrind >/dev/null 2>&1; then
    fail "valgrind" "not installed (make deps installs it)"
    exit 1
fi
if [ ! -x "$VG" ]; then
    fail "valgrind" "no program at $VG"
    exit 1
fi

# Invented values: a hypothetical receptor and odorant, a 5 x 4 grid.
cat >"$T/grid.ini" <<'EOF'
[scenario]
title = Memcheck grid: λ and ε
notes = Invented values for the memory checks.

[parameters]
gap = 20 .. 420 meV, 5 points
reorganization = 15 .. 240 meV, 4 points, log
electronic_coupling = 0.7 meV
huang_rhys = 0.12
mode = 1650 cm-1
temperature = 295 K

[output]
data = netcdf, csv
figures = png, pdf, svg
maps = log10_ratio, assisted_fraction
width = 3 in
dpi = 60
contours = -2, 2
mark = probe point: gap 230 meV, reorganization 40 meV
EOF
cat >"$T/point.ini" <<'EOF'
[scenario]
title = Memcheck point

[parameters]
gap = 310 meV
reorganization = 45 meV
electronic_coupling = 1.3 meV
huang_rhys = 0.07
mode = 2100 cm-1
temperature = 305 K

[output]
figures = png, pdf, svg
width = 3 in
dpi = 60
EOF

# memcheck NAME WANT-STATUS FILES -- ARGS...: run vibrogate ARGS under
# memcheck; FILES (space separated, may be empty) must exist afterwards.
memcheck() {
    name=$1 want=$2 files=$3
    shift 4
    log="$T/$(echo "$name" | tr -c 'A-Za-z0-9\n' '_').log"
    OMP_NUM_THREADS=2 valgrind --tool=memcheck --error-exitcode=99 --leak-check=full \
        --errors-for-leak-kinds=definite,indirect --show-leak-kinds=definite,indirect \
        --num-callers=30 --suppressions="$SRC/tests/valgrind.supp" --log-file="$log" \
        "${PROG:-$VG}" "$@" >"$T/out" 2>"$T/err"
    rc=$?
    missing=""
    for f in $files; do
        [ -s "$f" ] || missing="$missing $(basename "$f")"
    done
    if [ "$rc" -eq 99 ] || ! grep -q 'ERROR SUMMARY: 0 errors' "$log"; then
        fail "memcheck: $name" "$(grep -m 1 'ERROR SUMMARY' "$log"); first report: $(grep -m 1 -A 8 -E '^==[0-9]+== (Invalid|Conditional|Use of|Syscall|Mismatched|.*(definitely|indirectly) lost in)' "$log" | sed 's/^==[0-9]*== //' | tr '\n' ' ' | head -c 600)"
    elif [ "$rc" -ne "$want" ]; then
        fail "memcheck: $name" "exit status $rc, wanted $want: $(head -c 300 "$T/err")"
    elif [ -n "$missing" ]; then
        fail "memcheck: $name" "missing outputs:$missing"
    else
        pass "memcheck: $name: exit $want, 0 errors, no definite or indirect leak"
    fi
}

# A catalogue case: its config, command, --set values (lines 4 on) and
# exit status, as tests/bad/README describes them.
memcheck_bad() {
    name=$1 exp="tests/bad/$1.expect"
    want=$(sed -n 1p "$exp") cmd=$(sed -n 3p "$exp")
    cmd=${cmd:-check}
    set --
    while IFS= read -r v; do
        [ -n "$v" ] && set -- "$@" --set "$v"
    done <<EOF
$(sed -n '4,$p' "$exp")
EOF
    mkdir "$T/bad-$name"
    (cd "$T/bad-$name" && memcheck "bad input $name ($cmd)" "$want" "" -- "$cmd" "$@" \
        "$SRC/tests/bad/$name.ini")
}

# The check itself: a program that leaks one block must fail it, with
# valgrind's own exit status 99 and a "definitely lost" record.
printf '#include <stdlib.h>\nvoid *keep;\nint main(void) { keep = malloc(24); keep = 0; return 0; }\n' \
    >"$T/leak.c"
if ${CC:-cc} -O0 -g -o "$T/leak" "$T/leak.c" 2>"$T/cc.err"; then
    PROG="$T/leak" memcheck "probe" 0 "" -- >"$T/probe.out"
    if [ "$rc" -eq 99 ] && grep -q 'ERROR SUMMARY: 1 errors' "$T/probe.log" &&
        grep -q 'definitely lost' "$T/probe.log"; then
        pass "memcheck flags a program that leaks one block (exit 99, 'definitely lost')"
    else
        fail "memcheck probe" "a leaking program was not flagged: $(cat "$T/probe.out")"
    fi
else
    fail "memcheck probe" "cannot compile it: $(head -c 200 "$T/cc.err")"
fi

S="$T/sweep"
memcheck "sweep with netcdf, csv, png, pdf, svg" 0 \
    "$S/sweep.nc $S/sweep.csv $S/map-log10_ratio.png $S/map-log10_ratio.pdf $S/map-log10_ratio.svg $S/map-assisted_fraction.png" \
    -- sweep "$T/grid.ini" --out "$S" --quiet --threads 2
R="$T/render"
mkdir "$R"
memcheck "render from sweep.nc" 0 "$R/map-log10_ratio.png $R/map-log10_ratio.pdf $R/map-log10_ratio.svg" \
    -- render "$S/sweep.nc" --out "$R" --quiet
memcheck "point" 0 "" -- point "$T/point.ini"
memcheck "point --json" 0 "" -- point "$T/point.ini" --json
memcheck "check" 0 "" -- check "$T/grid.ini"
P="$T/spectrum"
memcheck "spectrum" 0 "$P/spectrum.png $P/spectrum.pdf $P/spectrum.svg" \
    -- spectrum "$T/point.ini" --out "$P" --quiet
for case in unknown_key nul_byte sweep_bad_value set_bad_value; do
    memcheck_bad "$case"
done
memcheck "usage error (--threads 0)" 2 "" -- sweep "$T/grid.ini" --threads 0
memcheck "missing config file" 3 "" -- check "$T/no-such.ini"
