#!/bin/sh
# The bad-input catalogue (tests/bad/, format in tests/bad/README) through
# the program: for every case, run `vibrogate COMMAND [--set V]... FILE` from
# an empty temporary directory and check the exit status, that stderr is
# exactly the expected line, that stdout is empty and that no file or
# directory was created.  Then two cases that cannot be stored in git: a
# directory given as the config, and (when not root) a file without read
# permission.
set -u
SRC=$(cd "$(dirname "$0")/../.." && pwd)
B=${VG_BUILD:-build}
case "$B" in /*) ;; *) B="$SRC/$B" ;; esac
VG="$B/vibrogate"
T=$(mktemp -d)
trap 'chmod -R u+rwx "$T" 2>/dev/null; rm -rf "$T"' EXIT

pass() { echo "PASS: $1"; }
fail() { echo "FAIL: $1: $2"; }

# $1 with every "@FILE@" replaced by $2.
subst() {
    s=$1 out=""
    while :; do
        case "$s" in
            *@FILE@*) out="$out${s%%@FILE@*}$2"; s=${s#*@FILE@} ;;
            *) printf '%s' "$out$s"; return ;;
        esac
    done
}

# Does $1 equal pattern $2, where one "@ANY@" matches any text?
matches() {
    case "$2" in
        *@ANY@*)
            head=${2%%@ANY@*} tail=${2#*@ANY@}
            case "$1" in "$head"*"$tail") return 0 ;; esac
            return 1 ;;
        *) [ "$1" = "$2" ] ;;
    esac
}

# check_run NAME STATUS EXPECTED-LINE WORKDIR: judge the run just made.
check_run() {
    name=$1 want_status=$2 want=$3 work=$4
    got_err=$(cat "$T/err")
    if [ "$got_status" -ne "$want_status" ]; then
        fail "$name" "exit status $got_status, wanted $want_status ($got_err)"
    elif [ "$(wc -l <"$T/err")" -ne 1 ] || ! matches "$got_err" "$want"; then
        fail "$name" "stderr '$got_err', wanted '$want'"
    elif [ -s "$T/out" ]; then
        fail "$name" "wrote to stdout: $(head -c 200 "$T/out")"
    elif [ -n "$(ls -A "$work")" ]; then
        fail "$name" "left files behind: $(ls -A "$work" | tr '\n' ' ')"
    else
        pass "$name: $(sed -n 3p "$SRC/tests/bad/$name.expect" | grep . || echo check) refused with status $want_status"
    fi
}

run_case() {
    name=$1 exp="$SRC/tests/bad/$1.expect" ini="$SRC/tests/bad/$1.ini"
    want_status=$(sed -n 1p "$exp")
    want=$(subst "$(sed -n 2p "$exp")" "$ini")
    cmd=$(sed -n 3p "$exp")
    set --
    i=4
    n=$(wc -l <"$exp")
    while [ "$i" -le "$n" ]; do
        set -- "$@" --set "$(sed -n "${i}p" "$exp")"
        i=$((i + 1))
    done
    work="$T/$name"
    mkdir "$work"
    (cd "$work" && exec "$VG" "${cmd:-check}" "$@" "$ini") >"$T/out" 2>"$T/err"
    got_status=$?
    check_run "$name" "$want_status" "$want" "$work"
}

# run_scripted NAME CONFIG REASON: `vibrogate check CONFIG` must fail with
# status 3 and "vibrogate: CONFIG: REASON", writing nothing.
run_scripted() {
    mkdir "$T/$1"
    (cd "$T/$1" && exec "$VG" check "$2") >"$T/out" 2>"$T/err"
    got_status=$?
    want="vibrogate: $2: $3"
    if [ "$got_status" -eq 3 ] && [ "$(cat "$T/err")" = "$want" ] && [ ! -s "$T/out" ] &&
        [ -z "$(ls -A "$T/$1")" ]; then
        pass "$1 refused with status 3"
    else
        fail "$1" "exit $got_status, stderr '$(cat "$T/err")', wanted '$want'"
    fi
}

if [ ! -x "$VG" ]; then
    fail "bad inputs" "no program at $VG"
    exit 1
fi

count=0
for exp in "$SRC"/tests/bad/*.expect; do
    [ -f "$exp" ] || continue
    run_case "$(basename "$exp" .expect)"
    count=$((count + 1))
done
if [ "$count" -ge 30 ]; then
    pass "catalogue holds $count cases (at least 30)"
else
    fail "catalogue size" "only $count cases"
fi

# A directory where the config should be.
mkdir "$T/dir.ini"
run_scripted directory_as_config "$T/dir.ini" "cannot read config file: is a directory"

# A file without read permission (root reads it anyway, so only as a user).
if [ "$(id -u)" -ne 0 ]; then
    cp "$SRC/tests/bad/duplicate_key.ini" "$T/noread.ini"
    chmod 000 "$T/noread.ini"
    run_scripted unreadable_config "$T/noread.ini" "cannot open config file: permission denied"
fi
