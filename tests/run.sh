#!/bin/sh
# Run every test suite and print one closing line "N passed, N failed".
#
#   unit suites   build/tests/test_*   (cmocka; counts read from its summary)
#   script suites tests/scripts/*.sh, tests/scripts/*.py
#                 (each prints "PASS: what" or "FAIL: what: why" per check)
#
# A suite that exits non-zero without reporting a failure counts as one
# failure, so a crash can never pass silently.
set -u
B=${1:-build}
PY=${PYTHON:-/usr/bin/python3}
export VG_BUILD="$B" PYTHON="$PY"
passed=0
failed=0
log=$(mktemp)
trap 'rm -f "$log"' EXIT

account() { # name rc p f
    passed=$((passed + $3))
    failed=$((failed + $4))
    if [ "$2" -ne 0 ] && [ "$4" -eq 0 ]; then
        failed=$((failed + 1))
        echo "FAIL: $1: exited with status $2 and reported no failure"
    fi
    printf '%-40s %4d passed, %d failed\n' "$1" "$3" "$4"
}

for t in "$B"/tests/test_*; do
    [ -x "$t" ] || continue
    "$t" >"$log" 2>&1
    rc=$?
    grep -E '^\[  (FAILED|ERROR)  \]' "$log" | grep -v 'test(s)' || true
    p=$(sed -n 's/^\[  PASSED  \] \([0-9]*\) test(s)\./\1/p' "$log" | tail -n 1)
    f=$(sed -n 's/^\[  FAILED  \] \([0-9]*\) test(s).*/\1/p' "$log" | tail -n 1)
    account "$(basename "$t")" "$rc" "${p:-0}" "${f:-0}"
done

for s in tests/scripts/*.sh tests/scripts/*.py; do
    [ -f "$s" ] || continue
    case "$s" in
        *.py) "$PY" "$s" >"$log" 2>&1 ;;
        *) sh "$s" >"$log" 2>&1 ;;
    esac
    rc=$?
    grep -E '^FAIL: ' "$log" || true
    if [ "$rc" -ne 0 ] && ! grep -q '^FAIL: ' "$log"; then tail -n 5 "$log"; fi
    p=$(grep -c '^PASS: ' "$log")
    f=$(grep -c '^FAIL: ' "$log")
    account "$(basename "$s")" "$rc" "$p" "$f"
done

echo "$passed passed, $failed failed"
[ "$failed" -eq 0 ]
