#!/bin/sh
# Command-line behaviour: help, version, usage errors and their exit status,
# the point and check commands, and make install with PREFIX and DESTDIR.
set -u
B=${VG_BUILD:-build}
VG="$B/vibrogate"
PY=${PYTHON:-/usr/bin/python3}
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

pass() { echo "PASS: $1"; }
fail() { echo "FAIL: $1: $2"; }
expect_status() { # what want cmd...
    what=$1; want=$2; shift 2
    "$@" >"$T/out" 2>"$T/err"; got=$?
    if [ "$got" -eq "$want" ]; then pass "$what"; else fail "$what" "exit $got, wanted $want: $(head -c 300 "$T/err")"; fi
}
expect_err() { # what pattern
    if grep -q -- "$2" "$T/err"; then pass "$1"; else fail "$1" "stderr lacks '$2': $(head -c 300 "$T/err")"; fi
}

expect_status "--help exits 0" 0 "$VG" --help
grep -q '^Usage: vibrogate COMMAND CONFIG' "$T/out" && pass "--help prints usage on stdout" || fail "--help prints usage" "$(head -2 "$T/out")"
expect_status "--version exits 0" 0 "$VG" --version
head -n 1 "$T/out" | grep -Eq '^vibrogate [0-9]+\.[0-9]+\.[0-9]+$' && pass "--version first line is 'vibrogate X.Y.Z' (GNU style)" || fail "--version line" "$(head -1 "$T/out")"
sed -n 2p "$T/out" | grep -q 'GSL .*NetCDF .*inih' && pass "--version names library versions" || fail "--version libraries" "$(sed -n 2p "$T/out")"

expect_status "no command is a usage error" 2 "$VG"
expect_status "unknown command is a usage error" 2 "$VG" frobnicate configs/demo.ini
expect_err "unknown command message" "unknown command 'frobnicate'"
expect_status "unknown option is a usage error" 2 "$VG" sweep configs/demo.ini --bogus
expect_err "unknown option message" "unknown option '--bogus'"
expect_status "bad --threads is a usage error" 2 "$VG" sweep configs/demo.ini --threads 0
expect_status "missing config is a config error" 3 "$VG" check "$T/nonexistent.ini"
expect_status "two configs is a usage error" 2 "$VG" check configs/demo.ini configs/point.ini

expect_status "check on the demo succeeds" 0 "$VG" check configs/demo.ini
grep -q 'points' "$T/out" && grep -q 'expected output size' "$T/out" && pass "check prints grid and size" || fail "check output" "$(cat "$T/out")"
# 121 gap x 59 reorganization x 2 couplings x 3 modes, from configs/demo.ini
grep -q '42834 points' "$T/out" && pass "check counts the demo grid (121*59*2*3)" || fail "check count" "$(grep points "$T/out")"

expect_status "point on a sweep config is refused" 3 "$VG" point configs/demo.ini
expect_err "point refusal names the axis" "'gap' has 121 values"
expect_status "point succeeds" 0 "$VG" point configs/point.ini
grep -q 'log10_ratio' "$T/out" && pass "point prints metrics" || fail "point metrics" "$(tail -5 "$T/out")"
expect_status "point --json succeeds" 0 "$VG" point configs/point.ini --json
"$PY" - "$T/out" <<'PYEOF'
import json, math, sys
d = json.load(open(sys.argv[1]))
m = d["metrics"]
ch = d["channels"]
# The shares of the listed channels cannot exceed 1 and the elastic
# channel is always listed (definition of the listing).
ok = abs(m["assisted_fraction"] - 1 / (1 + 10 ** (-m["log10_ratio"]))) < 1e-12 \
    and any(c["n"] == 0 for c in ch) and sum(c["share"] for c in ch) <= 1 + 1e-12
print(("PASS: " if ok else "FAIL: ") + "point --json is valid JSON and self-consistent"
      + ("" if ok else ": " + json.dumps(m)))
PYEOF
expect_status "point --set overrides" 0 "$VG" point configs/point.ini --json --set 'parameters.gap=0.25 eV'
"$PY" -c "import json,sys; d=json.load(open('$T/out')); print('PASS: --set gap in eV reaches the point' if d['parameters']['gap_meV']==250 else 'FAIL: --set: %r' % d['parameters'])"

make -s install PREFIX=/opt/vg DESTDIR="$T/root" >/dev/null 2>&1
if [ -x "$T/root/opt/vg/bin/vibrogate" ] && [ -f "$T/root/opt/vg/share/man/man1/vibrogate.1" ]; then
    pass "make install honours PREFIX and DESTDIR"
else
    fail "make install" "$(find "$T/root" | head)"
fi

# check warns when the outputs may not fit: a 10^10-point grid (estimated
# from the per-point sizes documented in docs/config.md) against the free
# space that statvfs reports for the output directory's file system.
"$VG" check configs/demo.ini --out "$T/big" --set 'parameters.gap=0 .. 600 meV, 100000 points' \
    --set 'parameters.reorganization=10 .. 300 meV, 100000 points' \
    --set 'parameters.mode=2950 cm-1' --set 'parameters.electronic_coupling=1 meV' \
    --set 'output.figures=none' --set 'output.max_size=1000 TB' >"$T/out" 2>"$T/err"
avail=$(df -P -B1 "$T" | awk 'NR == 2 { print $4 }')
if grep -q "free disk space for '$T/big'" "$T/out" && { [ "$avail" -gt 500000000000000 ] || grep -q "warning: the outputs and the run's checkpoint may need up to" "$T/err"; }; then
    pass "check reports free disk space and warns when the outputs may not fit"
else
    fail "check disk-space warning" "$(cat "$T/out" "$T/err" | tail -3)"
fi

# --out DIR is created if missing (vibrogate.1, OPTIONS), for render too.
"$VG" sweep configs/point.ini --set 'parameters.reorganization=20 .. 100 meV, 3 points' \
    --set 'parameters.gap=0 .. 300 meV, 4 points' --set 'output.figures=png' \
    --out "$T/rs" --quiet >/dev/null 2>&1
expect_status "render --out into a missing directory" 0 "$VG" render "$T/rs/sweep.nc" --out "$T/new/deeper" --quiet
[ -f "$T/new/deeper/map-log10_ratio.png" ] && pass "render created the directory and drew the map" || fail "render --out" "$(ls -R "$T/new" 2>&1 | head -5)"
