#!/bin/sh
# The whole test suite under AddressSanitizer, LeakSanitizer and
# UndefinedBehaviorSanitizer: build build-asan/ (make SANITIZE=1, which
# compiles with -fsanitize=address,undefined -fno-sanitize-recover=all, so
# the first error stops the process), then run every unit suite and every
# script suite against it: under `make sanitize` (VG_SANITIZE_SHOW=1)
# through tests/run.sh build-asan, shown as it runs; as a suite of
# `make check`, two suites at a time and without mpi.sh (see below).
#
# One line per check:
#   - the sanitizer build succeeds;
#   - three probes prove the reporting works as configured here: a heap
#     overflow, a signed integer overflow and a leak, each compiled with the
#     build's flags, must stop with status 99 and leave a report naming the
#     error (ASan "heap-buffer-overflow", UBSan "signed integer overflow",
#     LSan "detected memory leaks");
#   - each suite of the run: PASS when all its checks passed under the
#     sanitizers, FAIL with its failed checks otherwise;
#   - no process of the run wrote a sanitizer report.  ASan and LSan
#     reports go to files (log_path) rather than stderr, so an error is
#     caught even in a child whose stderr a test discards or whose exit
#     status a test ignores.  UBSan reports stay on stderr: gcc links
#     libubsan beside libasan, and libasan's __sanitizer_set_report_path
#     takes the place of libubsan's, so UBSan's log_path has no effect (the
#     'ub' probe shows it).  Every report stops the process with status 99,
#     a value vibrogate never uses (include/vg_status.h), so a test expecting
#     1 (numeric error) or 3 (config) cannot mistake a sanitizer stop for it.
#
# Inside the run VG_UNDER_SANITIZER=1 is set: this script, valgrind.sh
# (valgrind cannot run an ASan binary) and fuzz.sh (its own clang build)
# then skip themselves.  SANITIZE=1 is exported so that a suite that calls
# make (mpi.sh builds $VG_BUILD/vibrogate) gets build-asan; MPI=1 ignores it.
#
# Leak suppressions: tests/lsan.supp, library frames only, each documented
# there.
set -u
SRC=$(cd "$(dirname "$0")/../.." && pwd)
cd "$SRC" || exit 1

# sanitize.sh --one SUITE DIR: run one suite (the environment already set)
# and write to DIR/NAME its failures, then "NAME  P passed, F failed".
if [ "${1:-}" = --one ]; then
    name=$(basename "$2")
    out="$3/$name"
    case "$2" in
        *.py) "$PYTHON" "$2" >"$out.log" 2>&1 ;;
        *.sh) sh "$2" >"$out.log" 2>&1 ;;
        *) "$2" >"$out.log" 2>&1 ;;
    esac
    rc=$?
    case "$2" in
        *.py | *.sh)
            grep '^FAIL: ' "$out.log" >"$out"
            p=$(grep -c '^PASS: ' "$out.log") ;;
        *) # cmocka: "[       OK ] test" per pass, "[  FAILED  ] test" per failure
            grep '^\[  FAILED  \] ' "$out.log" | grep -v 'test(s)' | sort -u >"$out"
            p=$(grep -c '^\[       OK \] ' "$out.log") ;;
    esac
    f=$(wc -l <"$out")
    if [ "$rc" -ne 0 ] && [ "$f" -eq 0 ]; then
        echo "FAIL: $name: exited with status $rc: $(tail -n 3 "$out.log" | tr '\n' ' ')" >>"$out"
        f=1
    fi
    echo "$name $p passed, $f failed" >>"$out"
    exit 0
fi
[ -z "${VG_UNDER_SANITIZER:-}" ] || { echo "sanitize.sh: not run again inside the sanitizer run"; exit 0; }
AB=build-asan
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
mkdir "$T/reports" "$T/probe-reports"
failed=0
pass() { echo "PASS: $1"; }
fail() { echo "FAIL: $1: $2"; failed=$((failed + 1)); }
show() { [ -n "${VG_SANITIZE_SHOW:-}" ]; }

# Options for a run whose reports go to files $1.PID.
# ASan: stop at the first error; also use-after-return and init order.
# LSan: on (the default with ASan on Linux), with the suppressions file.
# UBSan: a stack for every report.
sanitizer_env() {
    export ASAN_OPTIONS="halt_on_error=1:exitcode=99:detect_leaks=1:detect_stack_use_after_return=1:check_initialization_order=1:log_path=$1"
    export UBSAN_OPTIONS="halt_on_error=1:print_stacktrace=1:exitcode=99:log_path=$1"
    export LSAN_OPTIONS="suppressions=$SRC/tests/lsan.supp:print_suppressions=0:exitcode=99:log_path=$1"
}

jobs=$(getconf _NPROCESSORS_ONLN 2>/dev/null || echo 1)
if ! make -s --no-print-directory -j"$jobs" SANITIZE=1 test-bins >"$T/build.log" 2>&1; then
    fail "make SANITIZE=1 builds $AB" "$(tail -n 5 "$T/build.log" | tr '\n' ' ')"
    exit 1
fi
pass "make SANITIZE=1 builds $AB (vibrogate, unit suites, tools)"

# ---- probes: is an error of each kind caught and reported? ----
cat >"$T/probe.c" <<'EOF'
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
void *keep;
int main(int argc, char **argv)
{
    size_t n = (size_t)argc + 7; /* 8, unknown to the compiler */
    if (argc > 1 && strcmp(argv[1], "heap") == 0) {
        char *p = malloc(n);
        p[n] = 1;
        free(p);
    } else if (argc > 1 && strcmp(argv[1], "ub") == 0) {
        int x = INT_MAX - 2 + argc; /* INT_MAX */
        x += argc;
        printf("%d\n", x);
    } else if (argc > 1 && strcmp(argv[1], "leak") == 0) {
        keep = malloc(n);
        keep = NULL;
    }
    return 0;
}
EOF
flags=$(make -s --no-print-directory SANITIZE=1 sanitize-cc)
# shellcheck disable=SC2086 # $flags is a list of words
if ! $flags -O0 -o "$T/probe" "$T/probe.c" >"$T/probe.log" 2>&1; then
    fail "sanitizer probe builds" "$(head -c 300 "$T/probe.log")"
else
    for kind in "heap:heap-buffer-overflow" "ub:signed integer overflow" \
                "leak:detected memory leaks"; do
        mode=${kind%%:*} want=${kind#*:}
        rm -f "$T/probe-reports/"* "$T/probe.err"
        (sanitizer_env "$T/probe-reports/report" && exec "$T/probe" "$mode") >/dev/null 2>"$T/probe.err"
        rc=$?
        if [ "$rc" -eq 99 ] && cat "$T/probe-reports/"* "$T/probe.err" 2>/dev/null | grep -q "$want"; then
            pass "probe: '$mode' stops with status 99 and a report of '$want'"
        else
            fail "probe '$mode'" "exit $rc, report: $(cat "$T/probe-reports/"* "$T/probe.err" 2>/dev/null | head -c 300)"
        fi
    done
fi

# ---- the suite under the sanitizers ----
# make sanitize: tests/run.sh itself, every suite one after another, shown.
# make check: the same suites, two at a time (one per core), without
# mpi.sh: its MPI programs are not sanitizer builds, and the one-process
# demo sweeps it compares them with are run here by e2e_data.py and
# resume.sh already; it would add about two minutes.
(
    sanitizer_env "$T/reports/report"
    export VG_UNDER_SANITIZER=1 SANITIZE=1 VG_BUILD="$AB" PYTHON="${PYTHON:-/usr/bin/python3}"
    if show; then
        sh tests/run.sh "$AB" 2>&1 | tee "$T/run.log"
    else
        mkdir "$T/one"
        for s in "$AB"/tests/test_* tests/scripts/*.sh tests/scripts/*.py; do
            case "$s" in */mpi.sh) ;; *) [ -f "$s" ] && echo "$s" ;; esac
        done >"$T/suites"
        xargs -P "$jobs" -I{} sh tests/scripts/sanitize.sh --one {} "$T/one" <"$T/suites"
        while read -r s; do cat "$T/one/$(basename "$s")"; done <"$T/suites" >"$T/run.log"
    fi
)

# Per suite: its FAIL lines come first, then "NAME  P passed, F failed".
awk -v unjudged=" " '
    /^FAIL: / { why = why (why == "" ? "" : "; ") substr($0, 7); next }
    /^\[  FAILED  \] / { why = why (why == "" ? "" : "; ") substr($0, 14); next }
    match($0, /^[A-Za-z_][^ ]* +[0-9]+ passed, [0-9]+ failed$/) {
        name = $1; p = $2; f = $4
        if (index(unjudged, " " name " ")) print "  (" name ": not judged against the sanitizer build)"
        else if (f == 0 && p > 0) print "PASS: under ASan+UBSan: " name " (" p " checks)"
        else if (f > 0) print "FAIL: under ASan+UBSan: " name ": " f " of " (p + f) \
            " failed: " substr(why, 1, 400)
        else print "  (" name ": no checks under the sanitizers)"
        why = ""
    }' "$T/run.log" >"$T/verdicts"
cat "$T/verdicts"
failed=$((failed + $(grep -c '^FAIL: ' "$T/verdicts")))
[ "$(grep -c '^PASS: ' "$T/verdicts")" -gt 0 ] || fail "suite under the sanitizers" "no suite ran: $(tail -n 3 "$T/run.log")"

n=0
for r in "$T/reports/"report.*; do
    [ -f "$r" ] || continue
    n=$((n + 1))
    fail "sanitizer report $(basename "$r")" "$(grep -m 1 -E 'ERROR|SUMMARY|runtime error' "$r")"
    sed 's/^/    /' "$r" | head -n 60
done
[ "$n" -eq 0 ] && pass "no sanitizer report from any process of the run"

if show; then
    echo "sanitize: $(grep -c '^PASS: ' "$T/verdicts") suites clean, $failed failed"
fi
[ "$failed" -eq 0 ]
