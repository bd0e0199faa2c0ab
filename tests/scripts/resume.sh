#!/bin/sh
# Interrupted sweeps and `sweep CONFIG --resume`.
#
# An uninterrupted reference run of the demo on a finer grid (1001 gap
# values, 354354 points) in small chunks (the hidden --chunk option, so that
# there are hundreds of checkpoints), then the same run killed with SIGKILL
# three times -- after a random delay, after a random number of finished
# points, and while the writers were filling their files -- and resumed each
# time.  The resumed sweep.csv must equal the reference byte for byte
# (cmp), and sweep.nc must have the same header (ncdump -h), the same
# attributes and the same values bit for bit (netCDF4-python).  The time
# stamp must come from the checkpoint when SOURCE_DATE_EPOCH is unset on
# resume, and from SOURCE_DATE_EPOCH when it is set (reproducible-builds.org
# specification).  Also: SIGINT stops with status 6 (vg_status.h), says how
# to resume, leaves no file under a final name, and the command it prints
# finishes the run; a changed --set, a fresh start over a checkpoint, a
# damaged checkpoint and a resume with nothing to resume are refused.
#
# Prints one line `PASS: what` or `FAIL: what: why` per check.
set -u
SRC=$(cd "$(dirname "$0")/../.." && pwd)
B=${VG_BUILD:-build}
case "$B" in /*) ;; *) B="$SRC/$B" ;; esac
VG="$B/vibrogate"
PY=${PYTHON:-/usr/bin/python3}
T=$(mktemp -d)
pid=""
trap '[ -n "$pid" ] && kill -9 "$pid" 2>/dev/null; rm -rf "$T"' EXIT

pass() { echo "PASS: $1"; }
fail() { echo "FAIL: $1: $2"; }
check() { # what condition-status why
    if [ "$2" -eq 0 ]; then pass "$1"; else fail "$1" "$3"; fi
}

CFG="$SRC/configs/demo.ini"
OUT="$T/run"
GRID='parameters.gap=0 .. 600 meV, 1001 points'
NPOINTS=354354 # 1001 gap x 59 reorganization x 2 couplings x 3 modes (configs/demo.ini)
CHUNK=1024
EPOCH=1764000000
EPOCH2=1767225600
export SOURCE_DATE_EPOCH=$EPOCH

sweep() { # [extra options...]: the run every trial repeats, into $OUT
    "$VG" sweep "$CFG" --out "$OUT" --set "$GRID" --set 'output.figures=none' \
        --chunk "$CHUNK" --quiet "$@"
}
start() { # the same in the background; $pid is the program's own
    "$VG" sweep "$CFG" --out "$OUT" --set "$GRID" --set 'output.figures=none' \
        --chunk "$CHUNK" --quiet 2>"$T/err" &
    pid=$!
}
rnd() { od -An -N4 -tu4 /dev/urandom | tr -d ' \n'; }
state_done() { sed -n '5s/^done //p' "$OUT/.vibrogate-run/state" 2>/dev/null; }
alive() { kill -0 "$pid" 2>/dev/null; }
reap() { wait "$pid" 2>/dev/null; pid=""; }

if [ ! -x "$VG" ]; then
    fail "resume" "no program at $VG"
    exit 1
fi

# ---- netCDF comparison: header, attributes, values bit for bit ---------
cat >"$T/cmp.py" <<'PYEOF'
import sys
import numpy as np
import netCDF4

ref, got, history = sys.argv[1], sys.argv[2], sys.argv[3]
problems = []
with netCDF4.Dataset(ref) as a, netCDF4.Dataset(got) as b:
    ga, gb = a.__dict__, b.__dict__
    if history != "-":  # the expected history line replaces the reference's
        ga = dict(ga, history=history)
    if ga != gb:
        problems.append("global attributes differ: %s" %
                        sorted(k for k in set(ga) | set(gb) if ga.get(k) != gb.get(k)))
    if {k: len(v) for k, v in a.dimensions.items()} != {k: len(v) for k, v in b.dimensions.items()}:
        problems.append("dimensions differ")
    if list(a.variables) != list(b.variables):
        problems.append("variables differ")
    for n in a.variables:
        if n not in b.variables:
            continue
        va, vb = a.variables[n], b.variables[n]
        va.set_auto_maskandscale(False)
        vb.set_auto_maskandscale(False)
        if va.__dict__ != vb.__dict__ or va.dimensions != vb.dimensions or va.dtype != vb.dtype:
            problems.append("variable %s: attributes or shape differ" % n)
            continue
        xa = np.ascontiguousarray(np.asarray(va[...], dtype=np.float64)).view(np.uint64)
        xb = np.ascontiguousarray(np.asarray(vb[...], dtype=np.float64)).view(np.uint64)
        if not np.array_equal(xa, xb):
            problems.append("variable %s: %d values differ" % (n, int(np.sum(xa != xb))))
print("; ".join(problems) if problems else "same")
PYEOF

# compare_outputs WHAT [HISTORY]: the finished run in $OUT against $T/ref.
compare_outputs() {
    what=$1 hist=${2:--}
    if cmp -s "$T/ref/sweep.csv" "$OUT/sweep.csv"; then
        pass "$what: sweep.csv equals the uninterrupted run byte for byte"
    else
        fail "$what: sweep.csv" "$(cmp "$T/ref/sweep.csv" "$OUT/sweep.csv" 2>&1 | head -c 200)"
    fi
    if [ "$hist" = "-" ]; then
        ncdump -h "$T/ref/sweep.nc" | sed 1d >"$T/h1"
        ncdump -h "$OUT/sweep.nc" | sed 1d >"$T/h2"
        check "$what: sweep.nc header (ncdump -h) equals the uninterrupted run's" \
            "$(cmp -s "$T/h1" "$T/h2"; echo $?)" "$(diff "$T/h1" "$T/h2" | head -c 300)"
    fi
    r=$("$PY" "$T/cmp.py" "$T/ref/sweep.nc" "$OUT/sweep.nc" "$hist" 2>&1)
    check "$what: sweep.nc values and attributes equal the uninterrupted run's" \
        "$([ "$r" = same ]; echo $?)" "$r"
    left=$(ls -A "$OUT" | grep -v -e '^sweep\.csv$' -e '^sweep\.nc$' | tr '\n' ' ')
    check "$what: no checkpoint or temporary file is left" "$([ -z "$left" ]; echo $?)" "$left"
}

# ---- the uninterrupted reference ---------------------------------------
sweep 2>"$T/err"
rc=$?
check "reference sweep succeeds" "$rc" "exit $rc: $(head -c 300 "$T/err")"
mkdir "$T/ref"
mv "$OUT/sweep.csv" "$OUT/sweep.nc" "$T/ref/" 2>/dev/null
left=$(ls -A "$OUT" | tr '\n' ' ')
check "a finished run removes its checkpoint" "$([ -z "$left" ]; echo $?)" "$left"
rows=$(($(wc -l <"$T/ref/sweep.csv") - 1))
check "reference has one CSV row per point ($NPOINTS)" "$([ "$rows" -eq "$NPOINTS" ]; echo $?)" "$rows rows"
REF_HISTORY=$("$PY" -c "import netCDF4,sys; print(netCDF4.Dataset(sys.argv[1]).history)" "$T/ref/sweep.nc")
# The reference's time stamp is SOURCE_DATE_EPOCH as UTC (ISO 8601).
want_stamp=$("$PY" -c "import datetime; print(datetime.datetime.fromtimestamp($EPOCH, datetime.timezone.utc).strftime('%Y-%m-%dT%H:%M:%SZ'))")
check "reference history starts with the SOURCE_DATE_EPOCH time stamp" \
    "$(case "$REF_HISTORY" in "$want_stamp vibrogate sweep "*) echo 0 ;; *) echo 1 ;; esac)" "$REF_HISTORY"

# ---- trial 1: SIGKILL after a random delay -----------------------------
rm -rf "$OUT"
delay=$(($(rnd) % 400 + 50))
start
sleep "$(printf '0.%03d' "$delay")"
had_state=0
[ -f "$OUT/.vibrogate-run/state" ] && had_state=1
kill -9 "$pid" 2>/dev/null
reap
done1=$(state_done)
sweep --resume 2>"$T/err"
rc=$?
if [ "$had_state" -eq 1 ] || [ -f "$OUT/.vibrogate-run/state" ]; then
    check "kill -9 after ${delay} ms (${done1:-no} points kept): resume succeeds" "$rc" \
        "exit $rc: $(head -c 300 "$T/err")"
else
    # Killed before its first record: nothing to resume, a fresh run works.
    check "kill -9 after ${delay} ms, before the first record: resume says nothing to resume" \
        "$([ "$rc" -eq 2 ] && grep -q 'nothing to resume' "$T/err"; echo $?)" \
        "exit $rc: $(head -c 300 "$T/err")"
    sweep 2>"$T/err"
    rc=$?
    check "and a fresh run over what it left succeeds" "$rc" "exit $rc: $(head -c 300 "$T/err")"
fi
[ "$rc" -eq 0 ] && compare_outputs "kill after ${delay} ms"

# ---- trial 2: SIGKILL after a random number of finished points ----------
rm -rf "$OUT"
target=$(($(rnd) % (NPOINTS * 6 / 10) + NPOINTS / 10))
start
while alive; do
    d=$(state_done)
    if [ -n "$d" ] && [ "$d" -ge "$target" ]; then
        kill -9 "$pid"
        break
    fi
done
reap
done2=$(state_done)
check "kill -9 once $target points were done: the checkpoint holds some but not all (${done2:-none})" \
    "$([ -n "$done2" ] && [ "$done2" -gt 0 ] && [ "$done2" -lt "$NPOINTS" ]; echo $?)" \
    "done = '${done2:-}' of $NPOINTS"
check "  and a whole number of chunks" "$([ $((${done2:-1} % CHUNK)) -eq 0 ]; echo $?)" "$done2"
final=$(ls "$OUT" 2>/dev/null | grep -e '^sweep\.csv$' -e '^sweep\.nc$' | tr '\n' ' ')
check "  and no file under a final name" "$([ -z "$final" ]; echo $?)" "$final"
# The checkpoint holds 8 bytes per stored metric and point (src/checkpoint.h):
# the metrics `check` lists, for the points done (a chunk more when the kill
# fell between its write and its record); `check` predicts the whole.
"$VG" check "$CFG" --out "$OUT" --set "$GRID" --set 'output.figures=none' >"$T/chk" 2>&1
nmet=$(sed -n 's/^metrics: //p' "$T/chk" | tr ',' '\n' | grep -c .)
size=$(stat -c %s "$OUT/.vibrogate-run/metrics")
check "  and the metrics file holds 8 bytes for each of the $nmet stored metrics of each point done" \
    "$([ "$nmet" -ge 1 ] && { [ "$size" -eq $((${done2:-0} * 8 * nmet)) ] ||
        [ "$size" -eq $(((${done2:-0} + CHUNK) * 8 * nmet)) ]; }; echo $?)" \
    "$size bytes for $done2 points of $nmet metrics"
want=$("$PY" -c "
n = $NPOINTS * 8 * $nmet
u = ['bytes', 'kB', 'MB', 'GB']
i = 0
while n >= 1000 and i < 3:
    n /= 1000
    i += 1
print('%.3g %s' % (n, u[i]))")
check "  and check predicted the checkpoint of the whole run ($want)" \
    "$(grep -qx "checkpoint while the run lasts: $want more" "$T/chk"; echo $?)" \
    "$(grep checkpoint "$T/chk")"
cp "$OUT/.vibrogate-run/state" "$T/state.before"

# A changed --set is refused, and nothing changes.
"$VG" sweep "$CFG" --out "$OUT" --set "$GRID" --set 'output.figures=none' --chunk "$CHUNK" \
    --quiet --set 'parameters.temperature=300 K' --resume 2>"$T/err"
rc=$?
check "resume with a changed --set is refused with status 2" "$([ "$rc" -eq 2 ]; echo $?)" \
    "exit $rc: $(head -c 300 "$T/err")"
check "  saying the checkpoint was made by a different config" \
    "$(grep -q "the checkpoint in '$OUT' was made by a different config or version (the --set options differ); remove '$OUT/.vibrogate-run'" "$T/err"; echo $?)" \
    "$(head -c 400 "$T/err")"
check "  and leaves the checkpoint as it was" "$(cmp -s "$T/state.before" "$OUT/.vibrogate-run/state"; echo $?)" "state changed"

# A fresh start over the checkpoint is refused and points to --resume.
sweep 2>"$T/err"
rc=$?
check "a run without --resume over a checkpoint is refused with status 2" \
    "$([ "$rc" -eq 2 ] && grep -q "add --resume to finish it" "$T/err"; echo $?)" \
    "exit $rc: $(head -c 300 "$T/err")"
check "  and leaves the checkpoint as it was" "$(cmp -s "$T/state.before" "$OUT/.vibrogate-run/state"; echo $?)" "state changed"

# A damaged copy is refused (one metrics byte changed; then a shorter file).
cp -R "$OUT" "$T/copy"
printf 'x' | dd of="$T/copy/.vibrogate-run/metrics" bs=1 seek=1000 conv=notrunc 2>/dev/null
"$VG" sweep "$CFG" --out "$T/copy" --set "$GRID" --set 'output.figures=none' --chunk "$CHUNK" \
    --quiet --resume 2>"$T/err"
rc=$?
check "resume of a checkpoint whose metrics changed is refused with status 4" \
    "$([ "$rc" -eq 4 ] && grep -q "is damaged (its metrics file does not match its record)" "$T/err"; echo $?)" \
    "exit $rc: $(head -c 300 "$T/err")"
truncate -s 100 "$T/copy/.vibrogate-run/metrics"
"$VG" sweep "$CFG" --out "$T/copy" --set "$GRID" --set 'output.figures=none' --chunk "$CHUNK" \
    --quiet --resume 2>"$T/err"
rc=$?
check "resume of a checkpoint whose metrics file is short is refused with status 4" \
    "$([ "$rc" -eq 4 ] && grep -q "holds 100 bytes, fewer than" "$T/err"; echo $?)" \
    "exit $rc: $(head -c 300 "$T/err")"

# Resume without SOURCE_DATE_EPOCH: the time stamp comes from the checkpoint.
env -u SOURCE_DATE_EPOCH "$VG" sweep "$CFG" --out "$OUT" --set "$GRID" --set 'output.figures=none' \
    --chunk "$CHUNK" --quiet --resume 2>"$T/err"
rc=$?
check "resume (SOURCE_DATE_EPOCH unset) succeeds" "$rc" "exit $rc: $(head -c 300 "$T/err")"
[ "$rc" -eq 0 ] && compare_outputs "kill after $done2 points, resumed without SOURCE_DATE_EPOCH"

# ---- trial 3: SIGKILL while the writers fill their files ---------------
rm -rf "$OUT"
delay=$(($(rnd) % 300))
start
# (once the state names the writers' temporary files: they exist by then)
while alive && ! grep -q '^temps [1-9]' "$OUT/.vibrogate-run/state" 2>/dev/null; do :; done
sleep "$(printf '0.%03d' "$delay")"
temps=$(ls -A "$OUT" 2>/dev/null | grep -c '^\.sweep\.')
kill -9 "$pid" 2>/dev/null
reap
done3=$(state_done)
check "kill -9 ${delay} ms into writing: every point is in the checkpoint, temporary files left ($temps)" \
    "$([ "${done3:-0}" -eq "$NPOINTS" ] && [ "$temps" -gt 0 ]; echo $?)" "done ${done3:-none}, $temps temporary files"
# With SOURCE_DATE_EPOCH set on resume, its time stamp wins.
SOURCE_DATE_EPOCH=$EPOCH2 sweep --resume 2>"$T/err"
rc=$?
check "resume (another SOURCE_DATE_EPOCH) succeeds" "$rc" "exit $rc: $(head -c 300 "$T/err")"
stamp2=$("$PY" -c "import datetime; print(datetime.datetime.fromtimestamp($EPOCH2, datetime.timezone.utc).strftime('%Y-%m-%dT%H:%M:%SZ'))")
[ "$rc" -eq 0 ] && compare_outputs "kill while writing, resumed with a new SOURCE_DATE_EPOCH" \
    "$stamp2 ${REF_HISTORY#* }"

# ---- SIGINT: clean stop, the message says how to resume ----------------
rm -rf "$OUT"
start
while alive; do
    d=$(state_done)
    [ -n "$d" ] && [ "$d" -gt 0 ] && break
done
kill -INT "$pid" 2>/dev/null
wait "$pid"
rc=$?
pid=""
check "SIGINT stops the sweep with status 6" "$([ "$rc" -eq 6 ]; echo $?)" "exit $rc: $(head -c 300 "$T/err")"
check "  the message says the work is kept and how to resume" \
    "$(grep -q '^vibrogate: interrupted .*kept; to finish, run: vibrogate sweep .* --resume$' "$T/err"; echo $?)" \
    "$(head -c 400 "$T/err")"
final=$(ls -A "$OUT" | grep -v '^\.vibrogate-run$' | tr '\n' ' ')
check "  no output file, final or temporary, only the checkpoint" "$([ -z "$final" ] && [ -f "$OUT/.vibrogate-run/state" ]; echo $?)" "$final"
# The printed command, run as it stands, finishes the run.
cmd=$(sed -n 's/^vibrogate: .*; to finish, run: vibrogate //p' "$T/err")
eval "set -- $cmd"
"$VG" "$@" 2>"$T/err"
rc=$?
check "the command the message prints finishes the run" "$rc" "exit $rc: $(head -c 300 "$T/err")"
[ "$rc" -eq 0 ] && compare_outputs "SIGINT then the printed command"

# ---- nothing to resume -------------------------------------------------
"$VG" sweep "$CFG" --out "$T/none" --quiet --resume 2>"$T/err"
rc=$?
check "--resume with nothing to resume is refused with status 2" \
    "$([ "$rc" -eq 2 ] && grep -q "^vibrogate: nothing to resume in '$T/none'" "$T/err"; echo $?)" \
    "exit $rc: $(head -c 300 "$T/err")"
check "  and creates nothing" "$([ ! -e "$T/none" ]; echo $?)" "$(ls -A "$T/none" 2>&1)"
"$VG" check "$CFG" --resume >/dev/null 2>"$T/err"
rc=$?
check "--resume on another command is a usage error" "$([ "$rc" -eq 2 ]; echo $?)" "exit $rc"
