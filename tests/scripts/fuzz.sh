#!/bin/sh
# The libFuzzer harnesses (tests/fuzz/fuzz_*.c, built by `make fuzz-build`
# into build-fuzz/ with clang, AddressSanitizer and UBSan) as a suite:
#
#   - the fuzz build succeeds;
#   - each harness fuzzes for a fixed number of runs from a fixed seed
#     (-seed=1 -runs=N: the same inputs on every machine, not a time
#     budget), starting from its seed corpus (configs/*.ini, tests/bad/),
#     in a scratch corpus, and finds no crash, no sanitizer error and no
#     broken promise of tests/fuzz/fuzz_check.h;
#   - each harness then replays every seed and every input of
#     tests/fuzz/regressions/<harness>/ without failure.
#
# A crash prints its input's path and the top of its report; the input then
# belongs in tests/fuzz/regressions/<harness>/ (see tests/fuzz/README).
# Longer runs: `make fuzz FUZZ_SECONDS=600`.  Environment: FUZZ_CHECK_RUNS
# overrides the number of runs of every harness; FUZZ_CHECK_MAX_SECONDS
# (default 300) stops a harness on a machine too slow to finish its runs.
# Not run inside the sanitizer run (VG_UNDER_SANITIZER): it is a clang
# sanitizer build of its own.
set -u
SRC=$(cd "$(dirname "$0")/../.." && pwd)
cd "$SRC" || exit 1
[ -z "${VG_UNDER_SANITIZER:-}" ] || { echo "fuzz.sh: not run inside the sanitizer run"; exit 0; }
FB=build-fuzz
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
pass() { echo "PASS: $1"; }
fail() { echo "FAIL: $1: $2"; }

# Runs per harness: 10 to 20 s each on the 2-core development machine.
runs_for() {
    if [ -n "${FUZZ_CHECK_RUNS:-}" ]; then
        echo "$FUZZ_CHECK_RUNS"
        return
    fi
    case "$1" in
        fuzz_config) echo 30000 ;;
        fuzz_value) echo 600000 ;;
        *) echo 20000 ;;
    esac
}

if ! make -s --no-print-directory fuzz-build >"$T/build.log" 2>&1; then
    fail "make fuzz-build (clang, libFuzzer, ASan, UBSan)" "$(tail -n 5 "$T/build.log" | tr '\n' ' ')"
    exit 1
fi
pass "make fuzz-build builds the harnesses in $FB (clang, libFuzzer, ASan, UBSan)"

# The top of a failure report: what broke, and the first frames.
report() {
    grep -m 1 -E 'broken promise|ERROR: (AddressSanitizer|LeakSanitizer|libFuzzer)|runtime error|deadly signal' "$1"
    grep -m 6 -E '^ +#[0-9]+ ' "$1" | sed 's/^ *//'
}

for src in tests/fuzz/fuzz_*.c; do
    h=$(basename "$src" .c)
    bin="$FB/$h"
    runs=$(runs_for "$h")
    mkdir "$T/corpus-$h" "$T/crash-$h"
    "$bin" -seed=1 -runs="$runs" -max_total_time="${FUZZ_CHECK_MAX_SECONDS:-300}" \
        -max_len=4096 -timeout=30 -dict=tests/fuzz/config.dict \
        -artifact_prefix="$T/crash-$h/" "$T/corpus-$h" "$FB/seed/$h" >"$T/$h.log" 2>&1
    rc=$?
    done_runs=$(sed -n 's/^Done \([0-9]*\) runs.*/\1/p' "$T/$h.log")
    if [ "$rc" -ne 0 ]; then
        crash=$(ls "$T/crash-$h" 2>/dev/null | head -n 1)
        mkdir -p "$FB/crash/$h"
        [ -n "$crash" ] && cp "$T/crash-$h/$crash" "$FB/crash/$h/"
        fail "$h: $runs runs from seed 1" "exit $rc, input $FB/crash/$h/$crash (copy it to tests/fuzz/regressions/$h/): $(report "$T/$h.log" | tr '\n' ' ' | head -c 700)"
    elif [ -z "$done_runs" ]; then
        fail "$h: $runs runs from seed 1" "no 'Done N runs' line: $(tail -n 3 "$T/$h.log" | tr '\n' ' ')"
    else
        pass "$h: $done_runs runs from seed 1 over the seed corpus, no crash, no sanitizer error, no broken promise"
    fi

    find "$FB/seed/$h" tests/fuzz/regressions/"$h" -type f 2>/dev/null | sort >"$T/$h.list"
    nseed=$(grep -c "^$FB/seed/" "$T/$h.list")
    nreg=$(grep -c '^tests/fuzz/regressions/' "$T/$h.list")
    # shellcheck disable=SC2046 # one argument per file name (no spaces in them)
    if "$bin" $(cat "$T/$h.list") >"$T/$h-replay.log" 2>&1; then
        pass "$h replays $nseed seeds and $nreg regression inputs without failure"
    else
        fail "$h replay of $nseed seeds and $nreg regression inputs" "$(grep '^Running: ' "$T/$h-replay.log" | tail -n 1) $(report "$T/$h-replay.log" | tr '\n' ' ' | head -c 700)"
    fi
done
