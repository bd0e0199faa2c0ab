#!/bin/sh
# Output faults: what `vibrogate sweep` does when its outputs cannot be
# written.  Every case starts from a directory holding the outputs of an
# earlier successful run (sweep.nc, sweep.csv, map-log10_ratio.png,
# map-log10_ratio.svg) and then provokes one fault in a second run of
# different values into the same directory:
#
#   - the output directory on a read-only file system (a read-only bind
#     mount in a private mount namespace; as root, permission bits do not
#     stop writes), and a new output directory below it;
#   - an output directory below a regular file, and one that is a regular file;
#   - a final name (sweep.csv) taken by a directory, so that rename(2) fails;
#   - a full disk (a tmpfs of a few pages, `mount -t tmpfs -o size=`) while
#     the checkpoint is written, while the data files are written, and while
#     the figures are drawn, then at 35 sizes from 30 to 200 free pages so
#     that the space runs out at many places inside the writers; without
#     mount rights, a file size limit (`ulimit -f`, SIGXFSZ ignored) stands
#     in for it (VG_FAULTS_NO_MOUNT=1 forces that);
#   - the output directory removed (rm -rf) while the grid is computed, and
#     moved away (mv) while the data files are written (the run is held with
#     SIGSTOP for the change and let go with SIGCONT);
#   - a config file without read permission (as root, run as user nobody
#     through setpriv, since root reads a mode-000 file).
#
# For each: the exit status of docs/config.md ("Exit statuses": 4 for an
# output that could not be written, 3 for a config that cannot be read), one
# line on stderr naming the path and the reason (the C library's text for
# the errno, os.strerror in Python, compared without regard to case), no
# file under a final name that was not there before and no temporary file
# left (a kept checkpoint, .vibrogate-run/, is documented and allowed), and
# the earlier outputs byte-identical (sha256sum -c).  Where the checkpoint
# keeps the work, the `--resume` the message prints must finish the run once
# the fault is gone, with a sweep.csv equal (cmp) to an uninterrupted run's.
#
# A mode table that disappears or changes during a sweep that maps a
# many-mode odorant ([model] odorant): the sweep reads its tables once, when
# it loads the config, so a table removed while the grid is computed does
# not touch the run, which must finish with the output of an uninterrupted
# run.  The table matters again when a killed run is resumed: removed or
# emptied, the resume must stop with exit status 3 and one line naming the
# table and the reason, keep the checkpoint and leave the earlier outputs
# byte-identical; changed, the checkpoint must refuse it (exit status 2,
# "... a mode table it names ... differs"); restored, the resume must finish
# with the uninterrupted run's sweep.csv.
#
# Prints one line `PASS: what` or `FAIL: what: why` per check; a check that
# cannot be made here says `SKIP: what: why` (neither passed nor failed).
set -u
SRC=$(cd "$(dirname "$0")/../.." && pwd)
B=${VG_BUILD:-build}
case "$B" in /*) ;; *) B="$SRC/$B" ;; esac
VG="$B/vibrogate"
PY=${PYTHON:-/usr/bin/python3}
SELF="$SRC/tests/scripts/faults.sh"
export SOURCE_DATE_EPOCH=1764000000 # fixed time stamp: reruns are byte-identical

pass() { echo "PASS: $1"; }
fail() { echo "FAIL: $1: $2"; }
skip() { echo "SKIP: $1: $2"; }

# The C library's message for errno name $1 (ENOSPC ...), from Python's os.strerror.
reason() { "$PY" -c 'import errno, os, sys; print(os.strerror(getattr(errno, sys.argv[1])))' "$1"; }

# Invented values: a 11 x 7 (gap, reorganization) grid, both data formats,
# a PNG and an SVG map.  The PNG at 600 dpi (about 240 kB) is far larger
# than the data files, which the full-disk-while-drawing case needs.
write_config() {
    cat >"$1" <<'EOF'
; fault tests (invented values)
[scenario]
title = fault tests
[parameters]
gap = 0 .. 600 meV, 11 points
reorganization = 10 .. 300 meV, 7 points, log
electronic_coupling = 1 meV
huang_rhys = 0.05
mode = 200 meV
temperature = 300 K
[output]
data = netcdf, csv
figures = png, svg
dpi = 600
width = 7 in
EOF
}

# The second run's values (different from the earlier run's); BIG also
# makes the checkpoint (8 bytes per stored metric a point: 56 bytes for the
# 7 this config stores) larger than the space left.
OTHER='parameters.gap=0 .. 500 meV, 11 points'
BIG='parameters.gap=0 .. 600 meV, 300 points' # 2100 points

sweep() { # DIR [options...]: the program on the test config, quietly
    _out=$1
    shift
    "$VG" sweep "$CFG" --out "$_out" --quiet "$@"
}

# The same for a run started with `&`: the background subshell becomes the
# program (exec), so that $! is the program's own process, which a signal
# must reach (sweep's subshell would forward no SIGSTOP or SIGKILL).
sweep_bg() {
    _out=$1
    shift
    exec "$VG" sweep "$CFG" --out "$_out" --quiet "$@"
}

# earlier DIR: a successful run into DIR and the checksums of its files in
# DIR.sum; the file names in DIR.list.
earlier() {
    sweep "$1" >/dev/null 2>"$T/earlier.err" || {
        fail "earlier run into $1" "$(cat "$T/earlier.err")"
        return 1
    }
    (cd "$1" && sha256sum -- *) >"$1.sum"
    (cd "$1" && ls -A) >"$1.list"
}

# judge WHAT STATUS ERRNO-NAME DIR SUMS: the run just made exited with
# $got (stderr in $T/err).  DIR is the directory the message must name and
# the one to inspect, SUMS the checksums of the earlier outputs it must
# still hold ("-": none, and DIR is not inspected).
judge() {
    what=$1 want=$2 why=$(reason "$3") dir=$4 sums=$5
    msg=$(cat "$T/err")
    if [ "$got" -eq "$want" ]; then
        pass "$what: exit status $want"
    else
        fail "$what: exit status" "got $got, wanted $want ($msg)"
    fi
    low=$(printf '%s' "$msg" | tr '[:upper:]' '[:lower:]')
    lwhy=$(printf '%s' "$why" | tr '[:upper:]' '[:lower:]')
    case "$low" in
        "vibrogate: "*"$lwhy"*) ok=1 ;;
        *) ok=0 ;;
    esac
    case "$msg" in *"$dir"*) ;; *) ok=0 ;; esac
    if [ "$(wc -l <"$T/err")" -eq 1 ] && [ "$ok" -eq 1 ]; then
        pass "$what: one line on stderr naming the path and giving the reason '$why'"
    else
        fail "$what: message" "wanted one line naming $dir with '$why', got: $msg"
    fi
    [ "$sums" = - ] && return 0
    extra=$(cd "$dir" && ls -A | grep -vxF -e .vibrogate-run -f "${sums%.sum}.list")
    if [ -z "$extra" ]; then
        pass "$what: no new final name and no temporary file left in the directory"
    else
        fail "$what: files left" "$(printf '%s' "$extra" | tr '\n' ' ')"
    fi
    if bad=$(cd "$dir" && sha256sum -c --quiet "$sums" 2>&1); then
        pass "$what: the earlier outputs are byte-identical (sha256sum)"
    else
        fail "$what: earlier outputs changed" "$(printf '%s' "$bad" | tr '\n' ' ')"
    fi
}

# resumed WHAT DIR REF [options...]: `sweep --resume` with the options of the
# failed run finishes it, and its sweep.csv equals REF byte for byte.
resumed() {
    what=$1 dir=$2 ref=$3
    shift 3
    sweep "$dir" "$@" --resume 2>"$T/err"
    got=$?
    if [ "$got" -eq 0 ] && cmp -s "$dir/sweep.csv" "$ref" && [ ! -e "$dir/.vibrogate-run" ] &&
        [ -z "$(cd "$dir" && ls -A | grep '^\.')" ]; then
        pass "$what: --resume after the fault finishes the run, sweep.csv equal to an uninterrupted run's"
    else
        fail "$what: resume" "exit $got ($(cat "$T/err")), left: $(cd "$dir" && ls -A | tr '\n' ' ')"
    fi
}

# An uninterrupted run of the second run's values, for the comparisons.
reference() { # NAME [options...]: into $T/ref-NAME
    r="$T/ref-$1"
    shift
    sweep "$r" "$@" 2>"$T/err" || fail "reference run $r" "$(cat "$T/err")"
}

pages() { # 4 KiB pages the files of DIR take (tmpfs counts whole pages)
    n=0
    for f in "$1"/*; do
        n=$((n + ($(stat -c %s "$f") + 4095) / 4096))
    done
    echo "$n"
}

# ---- cases run inside a private mount namespace ------------------------

# The output directory read-only (a read-only bind mount of itself).
ns_readonly() {
    d="$T/ro"
    mount --bind "$d" "$d" && mount -o remount,bind,ro "$d" || {
        skip "read-only output directory" "the bind mount could not be made read-only"
        return
    }
    sweep "$d" --set "$OTHER" 2>"$T/err"
    got=$?
    judge "read-only output directory" 4 EROFS "$d" "$d.sum"
    sweep "$d/new/deeper" 2>"$T/err"
    got=$?
    judge "new output directory below a read-only one" 4 EROFS "$d" "$d.sum"
}

# A tmpfs on DIR of the earlier outputs' pages plus $2 pages, the earlier
# outputs (from $T/stage) copied in.
full_tmpfs() {
    mount -t tmpfs -o "size=$((($(pages "$T/stage") + $2) * 4096))" tmpfs "$1" &&
        cp -p "$T/stage"/* "$1"/
}

# The fault gone: DIR's files moved from its tmpfs to the disk beneath.
# (A remount with a larger size would do as root, but not in a user
# namespace.)
make_room() {
    mkdir "$1.saved" && cp -a "$1"/. "$1.saved"/ && umount "$1" && cp -a "$1.saved"/. "$1"/
}

# full_big NAME PAGES WHAT: the BIG sweep into $T/NAME, a tmpfs with PAGES
# pages free beyond the earlier outputs, judged as WHAT.
full_big() {
    d="$T/$1"
    if ! { mkdir "$d" && full_tmpfs "$d" "$2"; }; then
        fail "$3" "no tmpfs"
        return 1
    fi
    sweep "$d" --set "$BIG" --chunk 256 2>"$T/err"
    got=$?
    judge "$3" 4 ENOSPC "$d" "$T/stage.sum"
}

# The fault gone, the resume the message prints finishes the BIG run.
then_resume() {
    make_room "$d"
    resumed "$1" "$d" "$T/ref-big/sweep.csv" --set "$BIG" --chunk 256
}

# Full disk while computing: 16 pages free, the checkpoint of BIG needs 29
# (2100 points of 7 doubles).
ns_full_compute() {
    full_big full1 16 "full disk while computing" && then_resume "full disk while computing"
}

# Full disk while the data files are written: 72 pages free hold the
# checkpoint (29 and its record) and sweep.nc but not sweep.csv of BIG
# (about 100).
ns_full_write() {
    name="full disk while writing the data files"
    full_big full2 72 "$name" || return
    if [ "$(sed -n '5s/^done //p' "$d/.vibrogate-run/state" 2>/dev/null)" = 2100 ]; then
        pass "$name: the fault came after the grid was computed"
    else
        fail "$name" "the checkpoint does not hold all 2100 points"
    fi
    then_resume "$name"
}

# Full disk while drawing: room for the data files and the checkpoint, not
# for the PNG map.  The data files are then complete (equal to a run made
# at the same path on a disk with room: their history names the path) and
# the earlier maps are kept.
ns_full_figures() {
    d="$T/full3"
    sweep "$d" --set "$OTHER" 2>"$T/err" || fail "reference run into $d" "$(cat "$T/err")"
    mkdir "$T/ref-fig" && mv "$d"/* "$T/ref-fig"/
    room=8 # the checkpoint, its record and spare pages
    for f in sweep.nc sweep.csv; do
        room=$((room + ($(stat -c %s "$T/ref-fig/$f") + 4095) / 4096))
    done
    if [ $((($(stat -c %s "$T/ref-fig/map-log10_ratio.png") + 4095) / 4096)) -le $((room + 8)) ]; then
        fail "full disk while drawing" "test set-up: the map would fit in $room free pages"
        return
    fi
    full_tmpfs "$d" "$room" || {
        fail "full disk while drawing" "no tmpfs"
        return
    }
    sweep "$d" --set "$OTHER" 2>"$T/err"
    got=$?
    grep -v -e ' sweep\.nc$' -e ' sweep\.csv$' "$T/stage.sum" >"$T/maps.sum"
    cp "$T/stage.list" "$T/maps.list" # the data files are judged below
    judge "full disk while drawing the figures" 4 ENOSPC "$d" "$T/maps.sum"
    if cmp -s "$d/sweep.nc" "$T/ref-fig/sweep.nc" && cmp -s "$d/sweep.csv" "$T/ref-fig/sweep.csv"; then
        pass "full disk while drawing the figures: sweep.nc and sweep.csv are the new, complete files"
    else
        fail "full disk while drawing the figures" "the data files differ from the reference run's"
    fi
}

# check counts the checkpoint beside the outputs: on a tmpfs of 64 pages
# (262144 bytes, all free), a NetCDF-only grid of 3000 points stores 7
# metrics, 168000 bytes at most in sweep.nc (8 bytes a value) and as many in
# the checkpoint while the run lasts (docs/config.md): the outputs alone
# would fit, the two together do not, and check must warn; 1000 points
# (112000 bytes in all) fit, and it must not.
ns_check_space() {
    d="$T/space"
    if ! { mkdir "$d" && mount -t tmpfs -o size=262144 tmpfs "$d"; }; then
        fail "check counts the checkpoint" "no tmpfs"
        return
    fi
    for n in 3000 1000; do
        "$VG" check "$CFG" --out "$d" --set "parameters.gap=0 .. 600 meV, $n points" \
            --set 'parameters.reorganization=100 meV' --set 'output.data=netcdf' \
            --set 'output.figures=none' \
            >"$T/out" 2>"$T/err"
        got=$?
        warned=0
        grep -q "warning: the outputs and the run's checkpoint may need up to" "$T/err" && warned=1
        if [ "$n" -eq 3000 ] && [ "$got" -eq 0 ] && [ "$warned" -eq 1 ] &&
            grep -qx 'checkpoint while the run lasts: 168 kB more' "$T/out"; then
            pass "check warns when outputs and checkpoint together exceed the free space (3000 points, 262 kB free)"
        elif [ "$n" -eq 1000 ] && [ "$got" -eq 0 ] && [ "$warned" -eq 0 ]; then
            pass "check does not warn when both fit (1000 points, 262 kB free)"
        else
            fail "check and the checkpoint's space ($n points)" "exit $got: $(cat "$T/out" "$T/err" | tail -4)"
        fi
    done
}

# The disk filling at every stage: the BIG sweep (checkpoint, data files,
# figures) on a tmpfs with 30, 35, ... 200 pages free, so that the space
# runs out at many different places inside the writers (one fixed size can
# miss a fault path).  Each run must exit 0 (everything fitted: sweep.csv
# equal to the reference run's) or 4 with one line giving ENOSPC; never be
# killed by a signal; leave no temporary file; and leave the earlier
# outputs byte-identical, except that once the data files are committed
# they are the new complete ones and only the maps are earlier ones.
ns_full_scan() {
    why=$(reason ENOSPC)
    crashed="" wrong="" left="" damaged="" runs=0
    for free in $(seq 30 5 200); do
        d="$T/scan$free"
        mkdir "$d" && full_tmpfs "$d" "$free" || {
            fail "full disk scan" "no tmpfs"
            return
        }
        sweep "$d" --set "$BIG" 2>"$T/err"
        got=$?
        runs=$((runs + 1))
        [ "$got" -gt 128 ] && crashed="$crashed $free:$(kill -l "$got" 2>/dev/null || echo "$got")"
        if [ "$got" -eq 4 ]; then
            grep -qi "^vibrogate: .*$why" "$T/err" && [ "$(wc -l <"$T/err")" -eq 1 ] ||
                wrong="$wrong $free"
        elif [ "$got" -ne 0 ] || ! cmp -s "$d/sweep.csv" "$T/ref-big/sweep.csv"; then
            [ "$got" -le 128 ] && wrong="$wrong $free"
        fi
        [ -n "$(cd "$d" && ls -A | grep '^\.' | grep -vx .vibrogate-run)" ] && left="$left $free"
        if cmp -s "$d/sweep.csv" "$T/ref-big/sweep.csv"; then
            sums="$T/maps.sum"
        else
            sums="$T/stage.sum"
        fi
        [ "$got" -ne 0 ] && ! (cd "$d" && sha256sum -c --quiet "$sums" >/dev/null 2>&1) &&
            damaged="$damaged $free"
        umount "$d"
    done
    what="full disk at $runs sizes from 30 to 200 free pages (BIG sweep with figures)"
    check_list "$what: never killed by a signal" "$crashed" "killed at free pages:signal"
    check_list "$what: exit 0, or 4 with one line giving '$why'" "$wrong" "wrong at free pages"
    check_list "$what: no temporary file left" "$left" "left at free pages"
    check_list "$what: earlier outputs byte-identical (the maps alone once the data are new)" \
        "$damaged" "changed at free pages"
}

check_list() { # WHAT LIST WHY: PASS when LIST is empty
    if [ -z "$2" ]; then pass "$1"; else fail "$1" "$3$2"; fi
}

if [ "${1:-}" = --in-namespace ]; then
    # Inside `unshare -m`: nothing mounted here is seen outside, and it all
    # goes when this process ends.
    mount --make-rprivate / || exit 1
    "ns_$2"
    exit 0
fi

# ---- outside ----------------------------------------------------------

if [ ! -x "$VG" ] || [ ! -x "$PY" ]; then
    fail "faults" "no program at $VG or no $PY"
    exit 1
fi
T=$(mktemp -d)
export T
pid=""
trap '[ -n "$pid" ] && kill -9 "$pid" 2>/dev/null; rm -rf "$T"' EXIT
CFG="$T/faults.ini"
write_config "$CFG"
export CFG

# Mount namespaces: root's own, or a user namespace of its own otherwise.
if [ "$(id -u)" -eq 0 ]; then NS="unshare -m"; else NS="unshare -r -m"; fi
mkdir "$T/probe"
if $NS sh -c 'mount --make-rprivate / && mount -t tmpfs -o size=4k tmpfs "$1"' sh "$T/probe" \
    2>/dev/null; then
    can_mount=${VG_FAULTS_NO_MOUNT:+0}
    can_mount=${can_mount:-1}
else
    can_mount=0
fi
in_ns() { $NS sh "$SELF" --in-namespace "$1"; }

earlier "$T/stage" || exit 1
reference big --set "$BIG"

# -- read-only output directory
mkdir "$T/ro" && cp -p "$T/stage"/* "$T/ro"/ && cp "$T/stage.sum" "$T/ro.sum" &&
    cp "$T/stage.list" "$T/ro.list"
if [ "$can_mount" -eq 1 ]; then
    in_ns readonly
elif [ "$(id -u)" -ne 0 ]; then
    chmod a-w "$T/ro"
    sweep "$T/ro" --set "$OTHER" 2>"$T/err"
    got=$?
    judge "output directory without write permission" 4 EACCES "$T/ro" "$T/ro.sum"
    chmod u+w "$T/ro"
else
    skip "read-only output directory" "root without mount rights: permission bits do not stop root"
fi

# -- an output directory below a regular file; one that is a regular file
printf 'not a directory\n' >"$T/plain"
(cd "$T" && sha256sum plain) >"$T/plain.sum"
sweep "$T/plain/sub" 2>"$T/err"
got=$?
judge "output directory below a regular file" 4 ENOTDIR "$T" -
sweep "$T/plain" 2>"$T/err"
got=$?
judge "output directory that is a regular file" 4 ENOTDIR "$T" -
if (cd "$T" && sha256sum -c --quiet plain.sum >/dev/null 2>&1); then
    pass "output directory that is a regular file: the file is unchanged"
else
    fail "output directory that is a regular file" "the file changed"
fi

# -- a final name taken by a directory: the rename of sweep.csv fails
d="$T/taken"
earlier "$d"
rm "$d/sweep.csv"
mkdir "$d/sweep.csv" && : >"$d/sweep.csv/inside"
grep -v ' sweep\.csv$' "$d.sum" >"$d.sum.new" && mv "$d.sum.new" "$d.sum"
sweep "$d" --set "$OTHER" 2>"$T/err"
got=$?
judge "final name sweep.csv taken by a directory" 4 EISDIR "$d" "$d.sum"

# -- full disk
if [ "$can_mount" -eq 1 ]; then
    in_ns full_compute
    in_ns full_write
    in_ns full_figures
    in_ns check_space
    grep -v -e ' sweep\.nc$' -e ' sweep\.csv$' "$T/stage.sum" >"$T/maps.sum"
    in_ns full_scan
else
    # A file size limit instead: each file may grow to the limit only.
    # `ulimit -f` counts blocks of 512 bytes in a POSIX sh (dash, and bash
    # run as sh).  60 blocks stop the checkpoint of BIG (117600 bytes); 400
    # hold it but not its sweep.csv (about 280 kB); 160 hold the data files
    # of OTHER (under 50 kB) but not its PNG map (about 240 kB).
    limited() { # DIR BLOCKS [options...]
        (
            d=$1 n=$2
            shift 2
            trap '' XFSZ
            ulimit -f "$n" && exec "$VG" sweep "$CFG" --out "$d" --quiet "$@"
        )
    }
    for step in checkpoint data figures; do
        d="$T/limit-$step"
        mkdir "$d" && cp -p "$T/stage"/* "$d"/ && cp "$T/stage.sum" "$d.sum" && cp "$T/stage.list" "$d.list"
        case $step in
            checkpoint) limited "$d" 60 --set "$BIG" --chunk 256 2>"$T/err" ;;
            data) limited "$d" 400 --set "$BIG" --chunk 256 2>"$T/err" ;;
            figures) limited "$d" 160 --set "$OTHER" 2>"$T/err" ;;
        esac
        got=$?
        # after a figure fails, the new data files stand (as with a full disk)
        [ "$step" = figures ] && grep map- "$T/stage.sum" >"$d.sum.new" && mv "$d.sum.new" "$d.sum"
        judge "file size limit while writing the $step" 4 EFBIG "$d" "$d.sum"
    done
    skip "full disk" "no tmpfs could be mounted; a file size limit was used instead"
fi

# -- output directory removed while the grid is computed, moved away while
# the data files are written.  The run is stopped (SIGSTOP) for the change,
# so the change always falls inside the step named.
LONG='parameters.gap=0 .. 600 meV, 100000 points' # 700000 points, about a second
state_done() { sed -n '5s/^done //p' "$1/.vibrogate-run/state" 2>/dev/null; }
wait_for() { # CONDITION...: poll every 5 ms, at most 20 s
    n=0
    until "$@"; do
        n=$((n + 1))
        [ "$n" -gt 4000 ] && return 1
        sleep 0.005
    done
}
computing() { [ "$(state_done "$d")" != "" ] && [ "$(state_done "$d")" != 0 ]; }
# A writer's temporary file exists and the checkpoint names it (so that a
# resume can remove it; see docs/reliability.md, "Known gaps", for the
# moment before that).
writing() {
    ls -A "$d" | grep -q '^\.sweep\.' && grep -q '\.sweep\.nc\.' "$d/.vibrogate-run/state"
}
# kill(2) returns before the target has stopped: wait until every thread
# of it shows state T (stopped) in /proc (proc(5)).
held() {
    for t in /proc/"$pid"/task/*/stat; do
        [ "$(sed 's/.*) //' "$t" | cut -d' ' -f1)" = T ] || return 1
    done
}
hold() { kill -STOP "$pid" 2>/dev/null && wait_for held; }

d="$T/gone"
earlier "$d"
sweep_bg "$d" --set "$LONG" --set 'output.figures=none' --chunk 1024 2>"$T/err" &
pid=$!
if wait_for computing && hold; then
    done_at=$(state_done "$d")
    # rm -rf can race with a file the stopped run's kernel call had just
    # created; try again until the directory is gone
    for try in 1 2 3 4 5; do
        rm -rf "$d" 2>/dev/null
        [ -e "$d" ] || break
        sleep 0.1
    done
    kill -CONT "$pid"
    wait "$pid"
    got=$?
    pid=""
    if [ "$done_at" -lt 700000 ]; then
        judge "output directory removed while computing (after $done_at of 700000 points)" 4 ENOENT "$d" -
    else
        fail "output directory removed while computing" "the grid was done before the stop"
    fi
    if [ ! -e "$d" ]; then
        pass "output directory removed while computing: nothing was created at its path again"
    else
        fail "output directory removed while computing" "$d exists again: $(ls -A "$d" | tr '\n' ' ')"
    fi
else
    fail "output directory removed while computing" "the run was not caught computing"
    wait "$pid"
    pid=""
fi

d="$T/moved"
earlier "$d"
sweep_bg "$d" --set "$LONG" --set 'output.figures=none' --set 'output.data=netcdf' 2>"$T/err" &
pid=$!
if wait_for writing && hold; then
    mv "$d" "$d.away"
    kill -CONT "$pid"
    wait "$pid"
    got=$?
    pid=""
    # Its temporary files stay in the moved directory until a resume
    # removes them (the checkpoint names them), so only the final names
    # and the earlier outputs are judged here.
    judge "output directory moved away while the data files are written" 4 ENOENT "$d" -
    if [ -z "$(cd "$d.away" && ls | grep -vxF -f "$d.list")" ] &&
        (cd "$d.away" && sha256sum -c --quiet "$d.sum" >/dev/null 2>&1) && [ ! -e "$d" ]; then
        pass "output directory moved away while writing: the earlier outputs are byte-identical, no new final name"
    else
        fail "output directory moved away while writing" "left: $(ls -A "$d.away" | tr '\n' ' ')"
    fi
    sweep "$d.away" --set "$LONG" --set 'output.figures=none' --set 'output.data=netcdf' --resume \
        2>"$T/err"
    got=$?
    if [ "$got" -eq 0 ] && [ -z "$(ls -A "$d.away" | grep '^\.')" ]; then
        pass "output directory moved away while writing: --resume there finishes and removes the temporary files"
    else
        fail "output directory moved away while writing: resume" "exit $got ($(cat "$T/err")), left: $(ls -A "$d.away" | tr '\n' ' ')"
    fi
else
    fail "output directory moved away while writing" "the run was not caught writing"
    wait "$pid"
    pid=""
fi

# -- a config file without read permission
cp "$CFG" "$T/noread.ini"
chmod 000 "$T/noread.ini"
want="vibrogate: $T/noread.ini: cannot open config file: permission denied"
if [ "$(id -u)" -ne 0 ]; then
    "$VG" check "$T/noread.ini" >/dev/null 2>"$T/err"
    got=$?
elif command -v setpriv >/dev/null 2>&1; then
    chmod 755 "$T" # nobody must reach the file to be refused by its mode
    setpriv --reuid=65534 --regid=65534 --clear-groups "$VG" check "$T/noread.ini" \
        >/dev/null 2>"$T/err"
    got=$?
    chmod 700 "$T"
else
    got=-1
    skip "config without read permission" "root reads a mode-000 file and setpriv is missing"
fi
if [ "$got" -ge 0 ]; then
    if [ "$got" -eq 3 ] && [ "$(cat "$T/err")" = "$want" ]; then
        pass "config without read permission: exit status 3 and '$want'"
    else
        fail "config without read permission" "exit $got, stderr '$(cat "$T/err")', wanted 3 and '$want'"
    fi
fi

# -- mode tables of a many-mode odorant (see the header)
TAB="$T/tables"
mkdir "$TAB"
write_table() { printf 'energy_meV, huang_rhys\n180, 0.12\n95, %s\n' "$1" >"$TAB/a.csv"; }
write_table 0.3
cat >"$T/odorant.ini" <<EOF
; fault tests (invented values): a two-mode odorant
[parameters]
gap = 0 .. 600 meV, 400 points
reorganization = 20 .. 300 meV, 160 points, log
electronic_coupling = 1 meV
huang_rhys = 0.05
mode = 200 meV
temperature = 300 K
[model]
odorant = a
[odorant.a]
modes = $TAB/a.csv
[output]
data = netcdf, csv
figures = png
EOF
CFG="$T/odorant.ini"
OTHER='parameters.electronic_coupling=2 meV'
sweep "$T/ref-odorant" --set "$OTHER" >/dev/null 2>"$T/err" ||
    fail "odorant reference run" "$(cat "$T/err")"

d="$T/table-gone"
earlier "$d"
sweep_bg "$d" --set "$OTHER" --chunk 256 2>"$T/err" &
pid=$!
if wait_for computing && hold; then
    rm "$TAB/a.csv"
    kill -CONT "$pid"
    wait "$pid"
    got=$?
    pid=""
    if [ "$got" -eq 0 ] && cmp -s "$d/sweep.csv" "$T/ref-odorant/sweep.csv"; then
        pass "mode table removed while the grid is computed: the run, which read it at the start, finishes (exit 0) with an uninterrupted run's sweep.csv"
    else
        fail "mode table removed while the grid is computed" "exit $got ($(cat "$T/err"))"
    fi
else
    fail "mode table removed while the grid is computed" "the run was not caught computing"
    wait "$pid"
    pid=""
fi
write_table 0.3

# killed WHAT DIR: a run into DIR (which then holds an earlier run's
# outputs) killed with SIGKILL while it computes; 0 once caught in time.
killed() {
    earlier "$2" || return 1
    sweep_bg "$2" --set "$OTHER" --chunk 256 2>"$T/err" &
    pid=$!
    if wait_for computing && kill -9 "$pid"; then
        wait "$pid" 2>/dev/null
        pid=""
        return 0
    fi
    fail "$1" "the run was not caught computing"
    wait "$pid"
    pid=""
    return 1
}

# after_kill WHAT DIR STATUS TEXT: the resume just made (exit $got, stderr
# in $T/err) must stop with STATUS and one line holding TEXT (compared
# without regard to case), keep the checkpoint, and leave no new final name
# and the earlier outputs byte-identical.
after_kill() {
    msg=$(cat "$T/err")
    low=$(printf '%s' "$msg" | tr '[:upper:]' '[:lower:]')
    ltext=$(printf '%s' "$4" | tr '[:upper:]' '[:lower:]')
    case "$low" in "vibrogate: "*"$ltext"*) ok=1 ;; *) ok=0 ;; esac
    if [ "$got" -eq "$3" ] && [ "$ok" -eq 1 ] && [ "$(wc -l <"$T/err")" -eq 1 ]; then
        pass "$1: exit status $3 and one line saying '$4'"
    else
        fail "$1" "exit $got, wanted $3 and one line with '$4', got: $msg"
    fi
    extra=$(cd "$2" && ls -A | grep -vxF -e .vibrogate-run -f "$2.list")
    if [ -z "$extra" ] && [ -d "$2/.vibrogate-run" ] &&
        (cd "$2" && sha256sum -c --quiet "$2.sum" >/dev/null 2>&1); then
        pass "$1: the checkpoint is kept, no new final name, the earlier outputs byte-identical"
    else
        fail "$1: files" "left: $(cd "$2" && ls -A | tr '\n' ' ')"
    fi
}

d="$T/table-removed"
if killed "mode table removed before a resume" "$d"; then
    rm "$TAB/a.csv"
    sweep "$d" --set "$OTHER" --chunk 256 --resume 2>"$T/err"
    got=$?
    after_kill "mode table removed before a resume" "$d" 3 \
        "$TAB/a.csv: cannot open mode table: $(reason ENOENT)"
    write_table 0.3
    resumed "mode table removed before a resume, then restored" "$d" \
        "$T/ref-odorant/sweep.csv" --set "$OTHER" --chunk 256
fi

d="$T/table-emptied"
if killed "mode table emptied before a resume" "$d"; then
    : >"$TAB/a.csv"
    sweep "$d" --set "$OTHER" --chunk 256 --resume 2>"$T/err"
    got=$?
    after_kill "mode table emptied before a resume" "$d" 3 "$TAB/a.csv"
    write_table 0.3
    resumed "mode table emptied before a resume, then restored" "$d" \
        "$T/ref-odorant/sweep.csv" --set "$OTHER" --chunk 256
fi

d="$T/table-changed"
if killed "mode table changed before a resume" "$d"; then
    write_table 0.31
    sweep "$d" --set "$OTHER" --chunk 256 --resume 2>"$T/err"
    got=$?
    after_kill "mode table changed before a resume" "$d" 2 "(or a mode table it names) differs"
    write_table 0.3
    resumed "mode table changed before a resume, then restored" "$d" \
        "$T/ref-odorant/sweep.csv" --set "$OTHER" --chunk 256
fi
