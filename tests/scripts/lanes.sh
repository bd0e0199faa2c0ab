#!/bin/sh
# The rate kernel's vector lanes, built three ways: the normal build, which
# chooses at start-up its x86-64-v4 (AVX-512) version where the CPU has
# AVX-512 and its AVX2 version where it has AVX2; the AVX2 build (make
# AVX2=1, build-avx2/: the AVX2 and baseline versions only, so that a CPU
# with AVX-512 runs the AVX2 one too); and the baseline build (make
# BASELINE=1: baseline x86-64 only, build-base/).  All run the same IEEE
# operations in the same order (no fused multiply-add), so the first two
# must each give, against the baseline build, byte-identical CSV files:
# thermal and frozen statistics, an isotope pair, validity criteria, a
# grid with one gap (one point a row), and extreme
# corners where the lanes hand points to the log path.  It also runs the
# kernel's own dump on a few thousand random points (tests/tools/rate_dump)
# through both builds.
#
# Not run inside the sanitizer run (VG_UNDER_SANITIZER, set by
# tests/scripts/sanitize.sh).
set -u
SRC=$(cd "$(dirname "$0")/../.." && pwd)
cd "$SRC" || exit 1
[ -z "${VG_UNDER_SANITIZER:-}" ] || { echo "lanes.sh: not run against the sanitizer build"; exit 0; }
pass() { echo "PASS: $1"; }
fail() { echo "FAIL: $1: $2"; }
B=${VG_BUILD:-build}
[ "$B" = build-mpi ] && B=build
case "$B" in /*) N="$B" ;; *) N="$SRC/$B" ;; esac
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

for v in BASELINE:base AVX2:avx2; do
    if make -s "${v%%:*}=1" all "build-${v#*:}/tests/rate_dump" >"$T/make.log" 2>&1; then
        pass "the ${v#*:} build (make ${v%%:*}=1) builds"
    else
        fail "the ${v#*:} build (make ${v%%:*}=1) builds" "$(tail -n 3 "$T/make.log")"
        exit 1
    fi
done
# what the CPU runs (x86-64-v4 needs AVX-512 F, BW, CD, DQ and VL)
flags=$(grep -m 1 '^flags' /proc/cpuinfo 2>/dev/null)
v4=yes
for f in avx512f avx512bw avx512cd avx512dq avx512vl; do
    case " $flags " in *" $f "*) ;; *) v4=no ;; esac
done
case " $flags " in *" avx2 "*) avx2=yes ;; *) avx2=no ;; esac
if [ $v4 = yes ]; then
    echo "note: this CPU has AVX-512: the normal build runs the x86-64-v4 version, the AVX2 build the AVX2 one"
elif [ $avx2 = yes ]; then
    echo "note: this CPU has AVX2 but not AVX-512: the normal and AVX2 builds both run the AVX2 version"
else
    echo "note: this CPU has no AVX2: every build runs the baseline version"
fi

# name, then the config's [parameters] and [model]/[isotope]/[validity] text
write_case() {
    cat >"$T/$1.ini"
}

write_case thermal <<'INI'
[parameters]
gap = -300 .. 900 meV, 97 points
reorganization = 5 .. 800 meV, 23 points, log
electronic_coupling = 0, 2 meV
huang_rhys = 0, 0.003, 0.4, 3
mode = 60, 1600, 3000 cm-1
temperature = 4, 300 K
[output]
data = csv
INI
write_case frozen <<'INI'
[parameters]
gap = -100 .. 1500 meV, 61 points
reorganization = 20 .. 400 meV, 7 points, log
electronic_coupling = 1 meV
huang_rhys = 0.01, 1, 12
mode = 400, 2100 cm-1
temperature = 300 K
[model]
mode_statistics = frozen
[output]
data = csv
INI
write_case isotope <<'INI'
[parameters]
gap = 0 .. 700 meV, 45 points
reorganization = 30 .. 300 meV, 9 points
electronic_coupling = 1 meV
huang_rhys = 0.05, 0.5
mode = 2950 cm-1
temperature = 310 K
[isotope]
frequency_ratio = 1.362
[validity]
criteria = nonadiabatic, resolved
[output]
data = csv
INI
write_case gapslow <<'INI'
[parameters]
temperature = 250, 300, 350 K
huang_rhys = 0.02, 0.2, 2
reorganization = 10 .. 600 meV, 11 points, log
gap = 123.456 meV
mode = 1600 cm-1
electronic_coupling = 1 meV
[output]
data = csv
INI
write_case extreme <<'INI'
[parameters]
gap = -3000 .. 3000 meV, 41 points
reorganization = 0.1, 3000 meV
electronic_coupling = 1 meV
huang_rhys = 0.001, 50
mode = 1, 1000 meV
temperature = 1, 5000 K
[output]
data = csv
INI

# $1: name of the build, $2: its directory; each case and the dump against
# the baseline build
compare_build() {
    for c in thermal frozen isotope gapslow extreme; do
        mkdir -p "$T/$c.$1" "$T/$c.b"
        if ! "$2/vibrogate" sweep "$T/$c.ini" -q -o "$T/$c.$1" >"$T/$c.$1.log" 2>&1; then
            fail "$c: sweep ($1 build)" "$(tail -n 2 "$T/$c.$1.log")"
            continue
        fi
        if [ ! -s "$T/$c.b/sweep.csv" ] \
            && ! "$SRC/build-base/vibrogate" sweep "$T/$c.ini" -q -o "$T/$c.b" >"$T/$c.b.log" 2>&1; then
            fail "$c: sweep (baseline build)" "$(tail -n 2 "$T/$c.b.log")"
            continue
        fi
        if cmp -s "$T/$c.$1/sweep.csv" "$T/$c.b/sweep.csv"; then
            pass "$c: sweep.csv of the $1 and baseline builds byte-identical ($(($(wc -l <"$T/$c.$1/sweep.csv") - 1)) points)"
        else
            fail "$c: sweep.csv of the $1 and baseline builds byte-identical" "$(cmp "$T/$c.$1/sweep.csv" "$T/$c.b/sweep.csv" 2>&1 | head -n 1)"
        fi
    done
    "$2/tests/rate_dump" <"$T/points" >"$T/dump.$1" 2>&1
    [ -s "$T/dump.b" ] || "$SRC/build-base/tests/rate_dump" <"$T/points" >"$T/dump.b" 2>&1
    if [ -s "$T/dump.$1" ] && cmp -s "$T/dump.$1" "$T/dump.b"; then
        pass "rate_dump: 4000 random points, every field of the $1 and baseline builds byte-identical"
    else
        fail "rate_dump: 4000 random points, the $1 and baseline builds byte-identical" \
             "$(cmp "$T/dump.$1" "$T/dump.b" 2>&1 | head -n 1)"
    fi
}

# rate_dump on 4000 random single points (fixed seed; the single-point path
# puts one gap in every lane), log-uniform over the accepted ranges
awk 'BEGIN { srand(20261202);
    for (i = 0; i < 4000; i++) {
        st = rand() < 0.2 ? "frozen" : "thermal";
        gap = (rand() - 0.3) * 10 ^ (1 + 3 * rand());
        lam = 10 ^ (-0.5 + 3.5 * rand()); v = 10 ^ (-2 + 2 * rand());
        s = rand() < 0.05 ? 0 : 10 ^ (-3 + 4 * rand());
        mode = 10 ^ (0.5 + 2.5 * rand()); t = 10 ^ (0.3 + 3 * rand());
        printf "%s %.9g %.9g %.9g %.9g %.9g %.9g\n", st, gap, lam, v, s, mode, t } }' >"$T/points"
compare_build normal "$N"
compare_build AVX2 "$SRC/build-avx2"
