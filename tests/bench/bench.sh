#!/bin/sh
# Benchmarks (make bench).  Reports figures; asserts nothing, and nothing
# here is part of make check.  What each number means: docs/performance.md.
#
#   sweep:  tests/bench/bench_sweep.c, a 10^7-point gap x reorganization x
#           huang_rhys x temperature thermal grid through the sweep engine
#           at 1 thread and at every core, the exp() ceiling of this CPU and
#           the peak memory, all in one process; against
#           tests/bench/numpy_sweep.py, the same grid written by hand in
#           NumPy (timed on a 10^6-point sub-grid, checked against the tool).
#   memory: tests/bench/memory.ini, the whole vibrogate sweep command (NetCDF,
#           one metric, checkpoint) on 10^6, 10^7 and 10^8 points, its wall
#           time and peak resident memory (tests/bench/peak_rss.py); skipped
#           when the temporary directory has less than 2 GiB free.
#   render: the 500 x 500 grid in 4 x 4 panels of tests/bench/render.ini,
#           drawn from its saved sweep.nc; reported as cells per second and
#           as a ratio against computing the same grid in the same run.
set -eu
B=${VG_BUILD:-build}
PY=${PYTHON:-/usr/bin/python3}
VG="$B/vibrogate"
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

now() { date +%s.%N; }
secs() { awk -v a="$1" -v b="$2" 'BEGIN { print b - a }'; }
calc() { awk "BEGIN { print $1 }"; }
# value of KEY in the "key value" file $2
val() { awk -v k="$1" '$1 == k { print $2 }' "$2"; }

# ---------------------------------------------------------------- sweep ---
"$B/bench/bench_sweep" >"$T/tool"
"$B/bench/bench_sweep" --rss 2 >"$T/rss-small"
"$B/bench/bench_sweep" --rss 20 >"$T/rss-full"
"$B/bench/bench_sweep" --rss 200 >"$T/rss-huge"
VG_BUILD="$B" "$PY" tests/bench/numpy_sweep.py >"$T/numpy" || true
r1=$(val pts_per_s_1 "$T/tool")
rn=$(val pts_per_s_n "$T/tool")
np=$(val numpy_pts_per_s "$T/numpy")
n=$(val threads "$T/tool")
printf 'sweep benchmark: %s points (gap 500 x reorganization 200 x huang_rhys 20 x temperature 5,\n' \
    "$(val full_points "$T/tool")"
printf '  one 1600 cm-1 mode, thermal), %s cores, %s\n' "$(nproc)" \
    "$(sed -n 's/^model name[[:space:]]*: //p' /proc/cpuinfo | head -n 1)"
printf '  %-40s %12.4g points/s\n' "tool, 1 thread" "$r1"
printf '  %-40s %12.4g points/s\n' "tool, $n threads" "$rn"
printf '  %-40s %12.3f  (speedup %.3f on %s threads, runs %.3f to %.3f)\n' "parallel efficiency" \
    "$(calc "$(val speedup "$T/tool") / $n")" "$(val speedup "$T/tool")" "$n" \
    "$(val speedup_lo "$T/tool")" "$(val speedup_hi "$T/tool")"
printf '  %-40s %12.4g points/s  (speedup %.3f)\n' "tool, $n threads, chunks of 4096 points" \
    "$(val pts_per_s_n_chunk "$T/tool")" "$(val speedup_chunk "$T/tool")"
printf '  %-40s %12.4g points/s  (%s points timed)\n' "NumPy script, 1 process" "$np" \
    "$(val numpy_points "$T/numpy")"
printf '  %-40s %12.1f x  (1 thread: %.1f x)\n' "ratio tool / NumPy, $n threads" \
    "$(calc "$rn / $np")" "$(calc "$r1 / $np")"
printf '  %-40s %12.4g calls/s  (%.2f ns each; slices %.2f to %.2f ns)\n' "exp() ceiling, 1 thread" \
    "$(val exp_per_s "$T/tool")" "$(calc "1e9 / $(val exp_per_s "$T/tool")")" \
    "$(calc "1e9 / $(val exp_per_s_hi "$T/tool")")" "$(calc "1e9 / $(val exp_per_s_lo "$T/tool")")"
printf '  %-40s %12.3f\n' "exp() loop speedup on $n threads" "$(val exp_speedup_n "$T/tool")"
printf '  %-40s %12.3f\n' "multiply-add loop speedup on $n threads" "$(val madd_speedup_n "$T/tool")"
printf '  %-40s %12.2f  (runs %.2f to %.2f)\n' "cost of a kernel point, in exp() calls" \
    "$(val kernel_exp_per_point "$T/tool")" "$(val kernel_exp_per_point_lo "$T/tool")" \
    "$(val kernel_exp_per_point_hi "$T/tool")"
printf '  %-40s %12.2f  (runs %.2f to %.2f)\n' "cost of a sweep point, in exp() calls" \
    "$(val sweep_exp_per_point "$T/tool")" "$(val sweep_exp_per_point_lo "$T/tool")" \
    "$(val sweep_exp_per_point_hi "$T/tool")"
printf '  %-40s %9s KiB for %s points, %s KiB for %s, %s KiB for %s\n' \
    "peak RSS, $n threads (engine)" \
    "$(val rss_peak_kib "$T/rss-small")" "$(val rss_points "$T/rss-small")" \
    "$(val rss_peak_kib "$T/rss-full")" "$(val rss_points "$T/rss-full")" \
    "$(val rss_peak_kib "$T/rss-huge")" "$(val rss_points "$T/rss-huge")"
printf '  %-40s %12s  (%s points, 1 vs %s threads)\n' "output identical at any thread count" \
    "$(val identical "$T/tool")" "$(val identical_points "$T/tool")" "$n"
sed -n 's/^agreement: /  NumPy vs tool: /p' "$T/numpy"

# ------------------------------------------------------------ many-mode ---
# tests/bench/manymode.ini: the twenty-mode demo odorant, every point through
# the many-mode sum engine; wall time of the whole command (the NetCDF file it
# writes is 0.7 MB), best of 3, at 1 thread and at every core.
mm_best() { # THREADS: best wall time of 3 runs
    best=""
    for r in 1 2 3; do
        rm -rf "$T/mm"
        s=$(now)
        OMP_NUM_THREADS=$1 "$VG" sweep tests/bench/manymode.ini --out "$T/mm" --quiet
        e=$(now)
        t=$(secs "$s" "$e")
        if [ -z "$best" ] || [ "$(calc "($t < $best) ? 1 : 0")" = 1 ]; then best=$t; fi
    done
    echo "$best"
}
mm1=$(mm_best 1)
mmn=$(mm_best "$n")
mmpts=9922
printf 'many-mode sweep benchmark: %d points (gap 121 x reorganization 41 x temperature 2,
' "$mmpts"
printf '  the twenty-mode demo odorant, sum engine, tolerance 1e-12)
'
printf '  %-40s %12.4g points/s
' "tool, 1 thread" "$(calc "$mmpts / $mm1")"
printf '  %-40s %12.4g points/s  (speedup %.3f)
' "tool, $n threads" "$(calc "$mmpts / $mmn")" \
    "$(calc "$mm1 / $mmn")"

# --------------------------------------------------------------- memory ---
# The whole command, writers and checkpoint included: 10^8 points need
# 0.6 GB of sweep.nc and 0.8 GB of checkpoint while they run.
free_kib=$(df -Pk "$T" | awk 'NR == 2 { print $4 }')
printf 'memory benchmark: vibrogate sweep of tests/bench/memory.ini (NetCDF, one metric), %s threads\n' \
    "$(nproc)"
if [ "${free_kib:-0}" -lt 2097152 ]; then
    printf '  skipped: less than 2 GiB free in %s\n' "$T"
else
    for ns in 2 20 200; do
        rm -rf "$T/mem"
        "$PY" tests/bench/peak_rss.py "$VG" sweep tests/bench/memory.ini --out "$T/mem" --quiet \
            --set "parameters.huang_rhys=0.01 .. 1, $ns points, log" >"$T/mem.out"
        printf '  %-40s %9s KiB peak RSS  %8.2f s  (sweep.nc %s)\n' "$((ns * 500000)) points" \
            "$(val peak_kib "$T/mem.out")" "$(val secs "$T/mem.out")" \
            "$(du -h "$T/mem/sweep.nc" | cut -f1)"
    done
    rm -rf "$T/mem"
fi

# --------------------------------------------------------------- render ---
t0=$(now)
"$VG" sweep tests/bench/render.ini --out "$T/render" --quiet --set output.figures=none
t1=$(now)
for fmt in png pdf svg; do
    s=$(now)
    "$VG" render "$T/render/sweep.nc" --out "$T/render" --quiet --set "output.figures=$fmt"
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
        "$(du -h "$T/render/map-log10_ratio.$fmt" | cut -f1)"
done
