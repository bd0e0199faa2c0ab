#!/bin/sh
# Benchmarks (make bench).  Reports figures; asserts nothing, and nothing
# here is part of make check.
#
#   render: the 500 x 500 grid in 4 x 4 panels of tests/bench/render.ini,
#           drawn from its saved sweep.nc; reported as cells per second and
#           as a ratio against computing the same grid in the same run.
set -eu
B=${VG_BUILD:-build}
VG="$B/vibrogate"
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

now() { date +%s.%N; }
secs() { awk -v a="$1" -v b="$2" 'BEGIN { print b - a }'; }
calc() { awk "BEGIN { print $1 }"; }

t0=$(now)
"$VG" sweep tests/bench/render.ini --out "$T" --quiet --set output.figures=none
t1=$(now)
for fmt in png pdf svg; do
    s=$(now)
    "$VG" render "$T/sweep.nc" --out "$T" --quiet --set "output.figures=$fmt"
    e=$(now)
    eval "t_$fmt=$(secs "$s" "$e")"
done
sweep=$(secs "$t0" "$t1")
cells=4000000
printf 'render benchmark: %d cells (500 x 500 in 4 x 4 panels), %s threads\n' "$cells" "$(nproc)"
printf '  %-28s %8.2f s\n' "sweep (compute, reference)" "$sweep"
for fmt in png pdf svg; do
    eval "t=\$t_$fmt"
    printf '  %-28s %8.2f s  %10.3g cells/s  %5.2f x the sweep time  (%s)\n' "render $fmt" "$t" \
        "$(calc "$cells / $t")" "$(calc "$t / $sweep")" \
        "$(du -h "$T/map-log10_ratio.$fmt" | cut -f1)"
done
