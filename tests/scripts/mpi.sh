#!/bin/sh
# The cluster build (make MPI=1, docs/cluster.md) against the one-process
# program, which is the reference: a sweep spread over ranks by mpirun must
# give the same files, byte for byte, as build/vibrogate with the same
# arguments (SOURCE_DATE_EPOCH fixed, so the time stamps agree too).
#
#   - demo sweeps at 2, 3 (one thread each) and 4 ranks, chunk sizes that
#     give every rank work or leave one idle, and the MPI binary run without
#     mpirun: every output file (sweep.nc, sweep.csv, figures) and stderr
#     identical; sweep.nc also equal, variable by variable to the last bit
#     and attribute by attribute (history aside), to a plain run with the
#     default chunk (netCDF4-python);
#   - errors reach every rank: an output directory rank 0 cannot create
#     (exit 4), a missing config (exit 3), each reported once; SIGTERM to
#     mpirun stops every rank and leaves no output file behind; with
#     checkpoints, resuming on another number of ranks gives the files of an
#     uninterrupted one-process run;
#   - the distribution protocol itself (a small MPI program linked with the
#     library, built here; ranks other than 0 pass start 0 and the default
#     chunk, which rank 0's must override): the same status and message on
#     every rank as vg_sweep_run gives, for success, a resumed start, a
#     failing point on another rank, a sink failure, the stop flag, idle
#     ranks and an empty range; each rank sends rank 0 exactly the points
#     of the chunks dealt to it (counted through the MPI profiling
#     interface, PMPI: MPI 3.1, chapter 14); vg_dist_agree takes the lowest
#     failing rank;
#   - the normal build does not link MPI; the MPI library exports only vg_.
#
# Prints one line `PASS: what` or `FAIL: what: why` per check.  Needs Open
# MPI (mpirun, pkg-config ompi-c: make deps).  Environment: VG_BUILD
# (the one-process build, default "build"; "build-mpi" means "build").
set -u
B=${VG_BUILD:-build}
M=build-mpi
# Under `make MPI=1 test-run` VG_BUILD is the MPI build itself; the
# reference stays the ordinary build.
[ "$B" = "$M" ] && B=build
PY=${PYTHON:-/usr/bin/python3}
CFG=configs/demo.ini
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

pass() { echo "PASS: $1"; }
fail() { echo "FAIL: $1: $2"; }
check() { # what condition-status why
    if [ "$2" -eq 0 ]; then pass "$1"; else fail "$1" "$3"; fi
}

# mpirun refuses root unless told; the shared-memory transport's single-copy
# mode needs ptrace rights that containers often lack (common practice:
# turn it off there); every run has a time limit, so that a deadlock fails
# instead of hanging.
if [ "$(id -u)" -eq 0 ]; then
    export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
fi
export OMPI_MCA_btl_vader_single_copy_mechanism=none
export SOURCE_DATE_EPOCH=1700000000
MPIRUN="timeout 120 mpirun --oversubscribe"

if ! command -v mpirun >/dev/null 2>&1; then
    fail "mpirun" "not found (Open MPI: make deps installs openmpi-bin)"
    exit 1
fi
if ! make -s MPI=1 "$M/vibrogate" "$M/libvibrogate.a" >"$T/build.log" 2>&1; then
    fail "make MPI=1 builds $M/vibrogate" "$(tail -n 3 "$T/build.log" | tr '\n' ' ')"
    exit 1
fi
pass "make MPI=1 builds $M/vibrogate"
if ! make -s MPI=0 "$B/vibrogate" >"$T/build.log" 2>&1; then
    fail "make builds the one-process reference $B/vibrogate" "$(tail -n 3 "$T/build.log" | tr '\n' ' ')"
    exit 1
fi

# ---- whole runs against the one-process program ----

# Every file of dir $1 equals the one of dir $2; prints what differs.
diff_dirs() {
    (cd "$1" && ls -A) >"$T/l1"
    (cd "$2" && ls -A) >"$T/l2"
    cmp -s "$T/l1" "$T/l2" || { echo "files differ: $(cat "$T/l1" | tr '\n' ' ') / $(cat "$T/l2" | tr '\n' ' ')"; return 1; }
    for f in $(cat "$T/l1"); do
        cmp -s "$1/$f" "$2/$f" || { echo "$f differs"; return 1; }
    done
    [ -s "$T/l1" ] || { echo "no files"; return 1; }
}

# compare_run what "launcher" "sweep options": the one-process program and
# the MPI binary under the launcher (mpirun and its options, or nothing),
# with the same sweep options and --out, so that even the history attribute
# and the messages match.
compare_run() {
    rm -rf "$T/run" "$T/ref"
    # shellcheck disable=SC2086 # option lists split on purpose
    "$B/vibrogate" sweep $CFG --out "$T/run" $3 2>"$T/ref.err"
    rs=$?
    [ -d "$T/run" ] && mv "$T/run" "$T/ref"
    # shellcheck disable=SC2086
    $2 "$M/vibrogate" sweep $CFG --out "$T/run" $3 2>"$T/mpi.err"
    rp=$?
    check "$1: exit status 0, as the one-process run" "$([ "$rp" -eq 0 ] && [ "$rs" -eq 0 ]; echo $?)" \
        "exit $rp: $(head -c 300 "$T/mpi.err")"
    why=$(diff_dirs "$T/ref" "$T/run" 2>&1)
    check "$1: every output file byte-identical to the one-process run" $? "$why"
    cmp -s "$T/ref.err" "$T/mpi.err"
    check "$1: stderr identical (rank 0 alone reports)" $? "$(diff "$T/ref.err" "$T/mpi.err" | head -c 300)"
}

compare_run "2 ranks, chunk 1000" "$MPIRUN -np 2" "--chunk 1000"
compare_run "3 ranks of 1 thread, chunk 1000" "$MPIRUN -np 3 -x OMP_NUM_THREADS=1" "--chunk 1000 --threads 1"
compare_run "4 ranks, chunk 20000 (rank 3 idle)" "$MPIRUN -np 4" "--chunk 20000"
compare_run "2 ranks, chunk 333" "$MPIRUN -np 2" "--chunk 333 --quiet"
compare_run "MPI binary without mpirun (one rank)" "" "--chunk 1000"

# A sweep that maps a many-mode odorant against another ([model] odorant,
# against; the demo's twenty-mode tables) with the validity hatching: the
# ranks cut the (T, V, lambda) rows at chunks of 256 points, and each row is
# evaluated whole wherever it is cut, so the files must still be identical.
CFG_SAVED=$CFG
CFG="$T/odorant.ini"
sed -e 's/^gap = .*/gap = 0 .. 600 meV, 61 points/' \
    -e 's/^reorganization = .*/reorganization = 20 .. 300 meV, 21 points, log/' \
    -e "s#odorants/#$(pwd)/configs/odorants/#" configs/discrimination.ini >"$CFG"
compare_run "2 ranks, odorant against odorant, chunk 256" "$MPIRUN -np 2" "--chunk 256"
CFG=$CFG_SAVED

# sweep.nc of a distributed run, value by value, against a plain
# one-process run with the default chunk and no --chunk at all.
rm -rf "$T/plain" "$T/dist"
"$B/vibrogate" sweep $CFG --out "$T/plain" --quiet 2>/dev/null
$MPIRUN -np 3 "$M/vibrogate" sweep $CFG --out "$T/dist" --quiet --chunk 999 2>"$T/mpi.err"
"$PY" - "$T/plain/sweep.nc" "$T/dist/sweep.nc" <<'PYEOF'
import sys
import netCDF4

what = "3 ranks, chunk 999: sweep.nc variables bit-identical to a default one-process run"
try:
    a, b = (netCDF4.Dataset(p) for p in sys.argv[1:3])
except OSError as e:
    print("FAIL: %s: %s" % (what, e))
    sys.exit(0)
bad = []
if sorted(a.variables) != sorted(b.variables):
    bad.append("variables %s / %s" % (sorted(a.variables), sorted(b.variables)))
for name in a.variables:
    if name not in b.variables:
        continue
    va, vb = a.variables[name], b.variables[name]
    va.set_auto_mask(False)
    vb.set_auto_mask(False)
    x, y = va[...], vb[...]
    # the same bits, fill values included (numpy tobytes: raw 64-bit patterns)
    if x.dtype != y.dtype or x.shape != y.shape or x.tobytes() != y.tobytes():
        bad.append(name)
    if va.ncattrs() != vb.ncattrs() or any(
            str(va.getncattr(k)) != str(vb.getncattr(k)) for k in va.ncattrs()):
        bad.append(name + " attributes")
ga = [k for k in a.ncattrs() if k != "history"]
if ga != [k for k in b.ncattrs() if k != "history"] or any(
        str(a.getncattr(k)) != str(b.getncattr(k)) for k in ga):
    bad.append("global attributes")
print(("PASS: " + what) if not bad else ("FAIL: %s: %s differ" % (what, ", ".join(bad))))
PYEOF

# ---- errors reach every rank ----

: >"$T/plain-file"
$MPIRUN -np 3 "$M/vibrogate" sweep $CFG --out "$T/plain-file/sub" 2>"$T/mpi.err"
rs=$?
n=$(grep -c '^vibrogate: ' "$T/mpi.err")
check "3 ranks, output directory rank 0 cannot create: exit 4, reported once" \
    "$([ "$rs" -eq 4 ] && [ "$n" -eq 1 ]; echo $?)" "exit $rs, $n lines: $(head -c 300 "$T/mpi.err")"
grep -q "^vibrogate: cannot create output directory '$T/plain-file/sub'" "$T/mpi.err"
check "3 ranks, output directory error names the directory" $? "$(head -c 300 "$T/mpi.err")"

$MPIRUN -np 3 "$M/vibrogate" sweep "$T/missing.ini" 2>"$T/mpi.err"
rs=$?
n=$(grep -c '^vibrogate: ' "$T/mpi.err")
check "3 ranks, missing config: exit 3, reported once" \
    "$([ "$rs" -eq 3 ] && [ "$n" -eq 1 ]; echo $?)" "exit $rs, $n lines: $(head -c 300 "$T/mpi.err")"

# A grid of about 20 s of one thread (590000 points, many channels each),
# on 2 ranks of 1 thread, stopped by SIGTERM after 1 s.  mpirun passes the
# signal on to every rank; rank 0 decides to stop between chunks (small
# ones: mpirun kills ranks still running 1 s later) and no output file
# takes its final name, nor is a writer's temporary file left.  Not under
# timeout(1), which adds signals of its own; a loop of at most 120 s
# instead.
STOP_ARGS="--out $T/stop --threads 1 --chunk 2000"
stop_run() { # launcher, extra options
    # shellcheck disable=SC2086
    $1 sweep $CFG $STOP_ARGS \
        --set 'parameters.gap=-3000 .. 3000 meV, 2500 points' --set 'parameters.huang_rhys=50' \
        --set 'parameters.mode=1, 1.5 meV' --set 'parameters.temperature=5000 K' \
        --set 'output.figures=none' --set 'output.metrics=log10_ratio' $2
}
mkdir "$T/stop"
# exec: the background job is mpirun itself, so that the signal goes to it
stop_run "exec mpirun --oversubscribe -np 2 $M/vibrogate" "" 2>"$T/mpi.err" &
pid=$!
sleep 1
kill -TERM "$pid"
n=0
while kill -0 "$pid" 2>/dev/null && [ "$n" -lt 120 ]; do sleep 1; n=$((n + 1)); done
kill -KILL "$pid" 2>/dev/null
wait "$pid"
rs=$?
n=$(grep -c '^vibrogate: .*interrupted after [0-9]* of 590000 points' "$T/mpi.err")
left=$(ls -A "$T/stop" | grep -v '^\.vibrogate-run$' | tr '\n' ' ')
check "2 ranks, SIGTERM: stopped between chunks, reported once, no output file" \
    "$([ "$rs" -ne 0 ] && [ "$n" -eq 1 ] && [ -z "$left" ]; echo $?)" \
    "exit $rs, $n stop lines, left: '$left': $(head -c 300 "$T/mpi.err")"

# A build that keeps checkpoints (.vibrogate-run) resumes the run, here on
# 3 ranks, where rank 0 alone knows the start point: the files must equal
# those of one uninterrupted one-process run with the same arguments.
if [ -d "$T/stop/.vibrogate-run" ]; then
    stop_run "$MPIRUN -np 3 $M/vibrogate" "--resume" 2>"$T/mpi.err"
    rs=$?
    mv "$T/stop" "$T/resumed"
    stop_run "$B/vibrogate" "" 2>/dev/null
    why=$(diff_dirs "$T/stop" "$T/resumed" 2>&1)
    check "stopped on 2 ranks, resumed on 3: files byte-identical to an uninterrupted one-process run" \
        "$([ "$rs" -eq 0 ] && [ -z "$why" ]; echo $?)" "exit $rs, $why: $(head -c 300 "$T/mpi.err")"
fi

# ---- the protocol, through the library ----

cat >"$T/dist_probe.c" <<'CEOF'
/* Runs vg_sweep_run_dist and vg_dist_agree under mpirun and compares every
 * rank's result with vg_sweep_run's on that rank (the reference: the
 * one-process engine, itself checked against direct kernel calls in
 * tests/test_sweep.c).  Rank 0 prints the verdicts. */
#include <mpi.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vg_grid.h"
#include "vg_metrics.h"
#include "vg_sweep.h"

#define NPTS 60

/* Doubles this rank has sent to rank 0 (PMPI wrappers, MPI 3.1 ch. 14). */
static long long to_root;

int MPI_Isend(const void *buf, int count, MPI_Datatype type, int dest, int tag,
              MPI_Comm comm, MPI_Request *req)
{
    if (type == MPI_DOUBLE && dest == 0)
        to_root += count;
    return PMPI_Isend(buf, count, type, dest, tag, comm, req);
}

int MPI_Send(const void *buf, int count, MPI_Datatype type, int dest, int tag, MPI_Comm comm)
{
    if (type == MPI_DOUBLE && dest == 0)
        to_root += count;
    return PMPI_Send(buf, count, type, dest, tag, comm);
}

/* A grid of 60 points: gap 5 x reorganization 3 x S 2 x temperature 2
 * (invented values; the loader orders the axes, gap fastest). */
static const char grid_ini[] =
    "[parameters]\n"
    "gap = -120.5, -23.2, 74.1, 171.4, 268.7 meV\n"
    "reorganization = 12.25, 53.35, 94.45 meV\n"
    "electronic_coupling = 0.8 meV\n"
    "huang_rhys = 0.031, 0.488\n"
    "mode = 186.3 meV\n"
    "temperature = 151.7, 300.6 K\n";

typedef struct {
    double all[NPTS * VG_N_METRICS];
    size_t next;                /* next expected start */
    size_t fail_at, stop_after; /* SIZE_MAX: never */
    volatile sig_atomic_t *stop;
    int calls;
} collector;

static vg_status collect(void *ctx, size_t start, size_t count, const double *m, vg_error *err)
{
    collector *c = ctx;

    if (start != c->next)
        return vg_error_set(err, VG_EIO, "chunk at %zu out of order", start);
    if (start == c->fail_at)
        return vg_error_set(err, VG_EIO, "sink failed on purpose");
    memcpy(c->all + start * VG_N_METRICS, m, count * VG_N_METRICS * sizeof *m);
    c->next = start + count;
    c->calls++;
    if (start == c->stop_after)
        *c->stop = 1;
    return VG_OK;
}

typedef struct {
    const char *what;
    size_t chunk, start, fail_at, stop_after;
    int bad_reorg; /* 1: reorganization index 2 out of the kernel's domain */
    vg_status want; /* what vg_sweep_run must return, so no case passes idle */
} scenario;

static int rank, size;
static int failures;

/* Every rank's ok, ANDed; rank 0 prints, with the lowest failing rank's
 * why. */
static void verdict(const char *what, int ok, const char *why)
{
    int mine = ok ? size : rank, first;
    char msg[2200] = "";

    MPI_Allreduce(&mine, &first, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
    if (first < size) {
        if (rank == first)
            snprintf(msg, sizeof msg, "%s", why);
        MPI_Bcast(msg, (int)sizeof msg, MPI_CHAR, first, MPI_COMM_WORLD);
    }
    if (rank == 0 && first == size)
        printf("PASS: %d ranks: %s\n", size, what);
    else if (rank == 0)
        printf("FAIL: %d ranks: %s: rank %d: %s\n", size, what, first, msg);
    failures += first < size;
}

/* Points of the chunks dealt to this rank: k = rank, rank + size, ... */
static long long dealt(size_t npoints, size_t start, size_t chunk)
{
    long long n = 0;
    size_t k = 0;

    for (size_t s = start; s < npoints; s += chunk, k++)
        if ((int)(k % (size_t)size) == rank)
            n += (long long)((npoints - s < chunk ? npoints - s : chunk) * VG_N_METRICS);
    return n;
}

static void run(const scenario *sc)
{
    vg_config cfg;
    vg_grid g;
    static collector ref, got;
    volatile sig_atomic_t stop_ref = 0, stop_got = 0;
    vg_sweep_opts o = {2, sc->chunk, 0, NULL, sc->start};
    vg_error e_ref = {VG_OK, ""}, e_got = {VG_OK, ""};
    vg_status s_ref, s_got;
    char why[2200];
    int ok;

    if (vg_config_load_text(&cfg, "probe.ini", grid_ini, 0, NULL, &e_ref) != VG_OK) {
        verdict(sc->what, 0, e_ref.msg);
        return;
    }
    if (sc->bad_reorg) /* outside the kernel's domain on purpose */
        cfg.param[VG_P_REORG].v[2] = -1.0;
    vg_grid_init(&g, &cfg);
    if (g.npoints != NPTS) {
        verdict(sc->what, 0, "the probe grid has not 60 points");
        vg_config_free(&cfg);
        return;
    }
    ref = (collector){{0}, sc->start, sc->fail_at, sc->stop_after, &stop_ref, 0};
    got = ref;
    got.stop = &stop_got;
    o.stop = &stop_ref;
    s_ref = vg_sweep_run(&g, &o, collect, &ref, &e_ref);
    o.stop = rank == 0 ? &stop_got : NULL;
    if (rank > 0) { /* start and chunk are rank 0's: the others' do not count */
        o.start = 0;
        o.chunk = 0;
    }
    to_root = 0;
    s_got = vg_sweep_run_dist(&g, &o, rank == 0 ? collect : NULL, &got, &e_got);
    ok = s_ref == sc->want && s_got == s_ref &&
         (s_ref == VG_OK || strcmp(e_got.msg, e_ref.msg) == 0);
    snprintf(why, sizeof why, "status %d '%s', vg_sweep_run %d '%s'", s_got, e_got.msg,
             s_ref, e_ref.msg);
    verdict(sc->what, ok, why);
    /* only rank 0 has a sink */
    ok = rank > 0 || (got.next == ref.next && got.calls == ref.calls &&
                      memcmp(got.all, ref.all, sizeof ref.all) == 0);
    snprintf(why, sizeof why, "sink reached %zu in %d calls, vg_sweep_run %zu in %d",
             got.next, got.calls, ref.next, ref.calls);
    verdict("  ... the sink got the same chunks, bit for bit", ok, why);
    if (s_ref == VG_OK) {
        /* rank 0 keeps its own chunks: nothing to send */
        long long want = rank == 0 ? 0 : dealt(g.npoints, sc->start, sc->chunk);
        snprintf(why, sizeof why, "sent %lld values, its chunks hold %lld", to_root, want);
        verdict("  ... each rank sent rank 0 exactly its own chunks", to_root == want, why);
    }
    vg_config_free(&cfg);
}

static void agree(void)
{
    vg_error e = {VG_OK, ""};
    vg_status st;
    char want[64], why[1200];

    st = vg_dist_agree(VG_OK, &e);
    verdict("vg_dist_agree: all VG_OK gives VG_OK", st == VG_OK, "not VG_OK");
    if (rank == size - 1)
        vg_error_set(&e, VG_ECONFIG, "cannot read on purpose");
    st = vg_dist_agree(rank == size - 1 ? VG_ECONFIG : VG_OK, &e);
    snprintf(want, sizeof want, "rank %d: cannot read on purpose", size - 1);
    snprintf(why, sizeof why, "status %d '%s'", st, e.msg);
    verdict("vg_dist_agree: the last rank's failure reaches all, naming it",
            st == VG_ECONFIG && strcmp(e.msg, want) == 0, why);
    vg_error_set(&e, rank == 0 ? VG_EIO : VG_ENOMEM, "failed on rank %d", rank);
    st = vg_dist_agree(rank == 0 ? VG_EIO : VG_ENOMEM, &e);
    snprintf(why, sizeof why, "status %d '%s'", st, e.msg);
    verdict("vg_dist_agree: rank 0's failure wins, unprefixed",
            st == VG_EIO && strcmp(e.msg, "failed on rank 0") == 0, why);
}

int main(int argc, char **argv)
{
    static const scenario sc[] = {
        {"whole grid, chunk 7", 7, 0, SIZE_MAX, SIZE_MAX, 0, VG_OK},
        {"resumed at point 21, chunk 7", 7, 21, SIZE_MAX, SIZE_MAX, 0, VG_OK},
        {"chunk 30: fewer chunks than ranks", 30, 0, SIZE_MAX, SIZE_MAX, 0, VG_OK},
        {"chunk 1", 1, 0, SIZE_MAX, SIZE_MAX, 0, VG_OK},
        {"start at the end: nothing to do", 7, NPTS, SIZE_MAX, SIZE_MAX, 0, VG_OK},
        {"failing point 10 in chunk 1 (rank 1's)", 7, 0, SIZE_MAX, SIZE_MAX, 1, VG_ENUMERIC},
        {"failing point 10 in chunk 2 of size 4", 4, 0, SIZE_MAX, SIZE_MAX, 1, VG_ENUMERIC},
        {"sink failure at point 14", 7, 0, 14, SIZE_MAX, 0, VG_EIO},
        {"stop flag raised after the chunk at 21", 7, 0, SIZE_MAX, 21, 0, VG_EINTR},
    };
    vg_error err;

    if (vg_dist_init(&argc, &argv, &err) != VG_OK) {
        printf("FAIL: vg_dist_init: %s\n", err.msg);
        return 1;
    }
    rank = vg_dist_rank();
    size = vg_dist_size();
    for (size_t i = 0; i < sizeof sc / sizeof *sc; i++)
        run(&sc[i]);
    agree();
    vg_dist_finalize();
    return failures != 0;
}
CEOF
if cc -std=c17 -Wall -Wextra -Werror -fopenmp -Iinclude \
        $(pkg-config --cflags ompi-c | sed 's/-I/-isystem /g') -o "$T/dist_probe" "$T/dist_probe.c" "$M/libvibrogate.a" \
        $(pkg-config --libs gsl inih netcdf ompi-c) -lm >"$T/cc.log" 2>&1; then
    for np in 2 3; do
        timeout 60 mpirun --oversubscribe -np "$np" -x OMP_NUM_THREADS=2 "$T/dist_probe" 2>"$T/probe.err"
        rs=$?
        check "protocol probe on $np ranks exits 0" "$rs" "exit $rs: $(head -c 300 "$T/probe.err")"
    done
else
    fail "protocol probe builds" "$(head -c 400 "$T/cc.log")"
fi

# ---- builds ----

if ldd "$B/vibrogate" | grep -q 'libmpi'; then
    fail "the normal build does not link MPI" "$(ldd "$B/vibrogate" | grep libmpi)"
else
    pass "the normal build does not link MPI"
fi
bad=$(nm -g --defined-only "$M/libvibrogate.a" | awk 'NF == 3 { print $3 }' | grep -v '^vg_' | sort -u)
check "the MPI library exports only vg_ symbols" "$([ -z "$bad" ]; echo $?)" "$(echo $bad)"
