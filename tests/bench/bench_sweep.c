/*
 * Benchmark of the sweep engine and the rate kernel (run by make bench
 * through tests/bench/bench.sh; it asserts nothing and is no part of make
 * check).
 *
 * In one process it measures:
 *   - the machine ceiling: exp() calls per second on this CPU, over varied
 *     arguments whose results are all consumed, on one thread and on every
 *     core at once (what the machine itself gives from more threads), and
 *     the same for a throughput-bound loop of independent multiply-adds;
 *   - the sweep of a 4-D single-mode thermal grid (gap x reorganization x
 *     huang_rhys x temperature, 10^7 points, invented but plausible receptor
 *     ranges) through vg_sweep_run with a sink that discards the metrics, at
 *     1 thread and at every core, as points per second, and the cost of one
 *     point as a multiple of one exp(); also at every core with chunks of
 *     DIAG_CHUNK points, to show what the split of a chunk between threads
 *     costs;
 *   - the kernel alone (vg_rate_eval_gaps_run on the same points row by row,
 *     as the sweep calls it, one thread, no grid indexing, no metrics), in
 *     the same units;
 *   - that 1 thread and every core give identical output (an order-sensitive
 *     checksum over the bits of every metric of a 10^6-point grid).
 * With --rss it instead sweeps one grid once at every core and reports the
 * process's peak resident memory; bench.sh runs it on a 10^6- and a
 * 10^7-point grid, each in a fresh process: the engine keeps one chunk of
 * metrics at a time, so the peak must not grow with the grid.
 * The machine's speed moves within seconds (clock and neighbour load on a
 * shared host), so no figure compares timings taken far apart: every timed
 * run of the kernel and of the 1-thread sweep sits between two slices of
 * the exp() loop and is costed against their mean, 1 thread and all cores
 * run in turn and each speedup is of a run against the one beside it; each
 * figure is the median over REPEAT such runs, with the least and greatest
 * (key_lo, key_hi).  Points per second are the best run.
 *
 * Output: one "key value" pair a line, read by bench.sh.
 * Usage: bench_sweep [--rss] [HUANG_RHYS_VALUES]   (default 20: 10^7 points;
 *        the identity grid has a tenth of them, at least 2)
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>

#include <gsl/gsl_errno.h>

#include "vg_config.h"
#include "vg_grid.h"
#include "vg_metrics.h"
#include "vg_rate.h"
#include "vg_sweep.h"

#include "bench_kernel.h"

#define REPEAT 7
/* Chunk of the scheduling diagnostic (the engine's default is 16384). */
#define DIAG_CHUNK ((size_t)4096)
/* exp() ceiling: EXP_ARGS arguments spread over [-40, 0], the range the
 * kernel's terms take relative to the largest one, EXP_PASSES times (about
 * 50 ms on the 2-core machine of docs/performance.md). */
#define EXP_ARGS 4096
#define EXP_PASSES 2000

typedef struct {
    uint64_t hash; /* order-sensitive: FNV-1a over the metric bits */
    size_t points;
} checksum;

/* "key median", "key_lo least" and "key_hi greatest" of v[0..n) (sorts v). */
static void print_spread(const char *key, double *v, size_t n)
{
    qsort(v, n, sizeof *v, bench_cmp_double);
    printf("%s %.4g\n%s_lo %.4g\n%s_hi %.4g\n", key,
           n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]), key, v[0], key, v[n - 1]);
}

static long peak_rss_kib(void)
{
    struct rusage ru;

    return getrusage(RUSAGE_SELF, &ru) == 0 ? ru.ru_maxrss : -1;
}

static vg_status sink_discard(void *ctx, size_t start, size_t count,
                              const double *metrics, vg_error *err)
{
    (void)ctx;
    (void)start;
    (void)count;
    (void)metrics;
    (void)err;
    return VG_OK;
}

static vg_status sink_checksum(void *ctx, size_t start, size_t count,
                               const double *metrics, vg_error *err)
{
    checksum *c = ctx;
    size_t n = count * VG_N_METRICS;

    (void)start;
    (void)err;
    for (size_t i = 0; i < n; i++) {
        uint64_t bits;
        memcpy(&bits, &metrics[i], sizeof bits);
        c->hash = (c->hash ^ bits) * 0x100000001b3ULL; /* FNV-1a 64-bit prime (common practice) */
    }
    c->points += count;
    return VG_OK;
}

/* EXP_ARGS * EXP_PASSES calls of exp() over varied arguments (a fixed
 * permutation of [-40, 0], shifted a little on each pass); returns the sum
 * of the results, which main prints, so that no call can be dropped. */
static double exp_loop(void)
{
    double arg[EXP_ARGS], acc = 0.0;

    for (size_t i = 0; i < EXP_ARGS; i++)
        arg[i] = -40.0 * (double)((i * 2654435761u) % EXP_ARGS) / (double)EXP_ARGS;
    for (size_t k = 0; k < EXP_PASSES; k++) {
        double shift = 1e-6 * (double)k;
        for (size_t i = 0; i < EXP_ARGS; i++)
            acc += exp(arg[i] - shift);
    }
    return acc;
}

/* exp() calls per second, all nthreads threads running exp_loop at once
 * (nthreads = 1: the ceiling of one core). */
static double exp_rate(int nthreads, double *consumed)
{
    double acc = 0.0, t0 = bench_now();

#ifdef _OPENMP
#pragma omp parallel num_threads(nthreads) reduction(+ : acc)
#endif
    acc += exp_loop();
    *consumed += acc;
    return (double)nthreads * EXP_ARGS * EXP_PASSES / (bench_now() - t0);
}

/* Multiply-adds a second: MADD_CHAINS independent chains (so the loop is
 * bound by the core's throughput, as the kernel's lanes are, where the exp()
 * loop's single sum is bound by latency), MADD_PASSES steps each, all
 * nthreads threads at once.  On a machine whose two cores share one
 * physical core's execution units the throughput-bound loop gains less from
 * the second thread than the latency-bound one.  The result goes into
 * *consumed. */
#define MADD_CHAINS 8
#define MADD_PASSES 50000000L
static double madd_rate(int nthreads, double *consumed)
{
    double acc = 0.0, t0 = bench_now();

#ifdef _OPENMP
#pragma omp parallel num_threads(nthreads) reduction(+ : acc)
#endif
    {
        double a[MADD_CHAINS];
        for (int c = 0; c < MADD_CHAINS; c++)
            a[c] = 1.0 + 1e-3 * c;
        for (long i = 0; i < MADD_PASSES; i++)
            for (int c = 0; c < MADD_CHAINS; c++)
                a[c] = a[c] * 0.999999999 + 1e-9;
        for (int c = 0; c < MADD_CHAINS; c++)
            acc += a[c];
    }
    *consumed += acc;
    return (double)nthreads * MADD_CHAINS * MADD_PASSES / (bench_now() - t0);
}

static int load_grid(vg_config *cfg, vg_grid *g, size_t n_s)
{
    char text[sizeof bench_grid_format + 32];
    vg_error err = {VG_OK, ""};

    snprintf(text, sizeof text, bench_grid_format, n_s);
    if (vg_config_load_text(cfg, "bench_sweep", text, 0, NULL, &err) != VG_OK) {
        fprintf(stderr, "bench_sweep: %s\n", err.msg);
        return -1;
    }
    vg_grid_init(g, cfg);
    return 0;
}

/* Seconds of one sweep of g (chunk 0: the engine's default), or -1 on
 * failure. */
static double timed_sweep(const vg_grid *g, int threads, size_t chunk, vg_sweep_sink sink,
                          void *ctx)
{
    vg_sweep_opts o = {0};
    vg_error err = {VG_OK, ""};
    double t0 = bench_now();

    o.threads = threads;
    o.chunk = chunk;
    if (vg_sweep_run(g, &o, sink, ctx, &err) != VG_OK) {
        fprintf(stderr, "bench_sweep: %s\n", err.msg);
        return -1.0;
    }
    return bench_now() - t0;
}

/* 1 thread and nthreads give the same bits; prints the checksum lines. */
static int check_identical(const vg_grid *g, int nthreads)
{
    /* FNV-1a 64-bit offset basis (common practice) */
    checksum c[2] = {{0xcbf29ce484222325ULL, 0}, {0xcbf29ce484222325ULL, 0}};

    if (timed_sweep(g, 1, 0, sink_checksum, &c[0]) < 0.0
        || timed_sweep(g, nthreads, 0, sink_checksum, &c[1]) < 0.0)
        return -1;
    printf("identical_points %zu\n", c[0].points);
    printf("identical %s\n", c[0].hash == c[1].hash && c[0].points == c[1].points ? "yes" : "no");
    return 0;
}

/* Seconds a call of one exp() slice took (one thread). */
static double exp_slice(double *consumed)
{
    return 1.0 / exp_rate(1, consumed);
}

/* The whole grid REPEAT times, each time an exp() slice, the sweep at 1
 * thread, a slice, the sweep at nthreads and at nthreads with chunks of
 * DIAG_CHUNK points.  Prints the best points per second of each, the cost
 * of a 1-thread point in exp() calls against its two slices, and the
 * speedups of the nthreads runs over the 1-thread run beside them. */
static int sweep_rates(const vg_grid *g, int nthreads, double *consumed)
{
    double best[3] = {0.0, 0.0, 0.0}, cost[REPEAT], sp[REPEAT], spc[REPEAT];
    double np = (double)g->npoints;

    for (int r = 0; r < REPEAT; r++) {
        double ea = exp_slice(consumed), t1, eb, tn, tc;
        if ((t1 = timed_sweep(g, 1, 0, sink_discard, NULL)) < 0.0)
            return -1;
        eb = exp_slice(consumed);
        if ((tn = timed_sweep(g, nthreads, 0, sink_discard, NULL)) < 0.0
            || (tc = timed_sweep(g, nthreads, DIAG_CHUNK, sink_discard, NULL)) < 0.0)
            return -1;
        best[0] = fmax(best[0], np / t1);
        best[1] = fmax(best[1], np / tn);
        best[2] = fmax(best[2], np / tc);
        cost[r] = (t1 / np) / (0.5 * (ea + eb));
        sp[r] = t1 / tn;
        spc[r] = t1 / tc;
    }
    printf("full_points %zu\n", g->npoints);
    printf("pts_per_s_1 %.6g\n", best[0]);
    printf("pts_per_s_n %.6g\n", best[1]);
    printf("pts_per_s_n_chunk %.6g\n", best[2]);
    print_spread("speedup", sp, REPEAT);
    print_spread("speedup_chunk", spc, REPEAT);
    print_spread("sweep_exp_per_point", cost, REPEAT);
    return 0;
}

/* Kernel alone (bench_kernel_pass), REPEAT times, each between two exp()
 * slices.  Prints the best points per second and the cost of a point in
 * exp() calls; the results go into *consumed. */
static int kernel_rate(const vg_config *cfg, double *consumed)
{
    const bench_kernel k = BENCH_KERNEL_LINKED;
    size_t n = bench_points(cfg);
    double best = 0.0, cost[REPEAT];

    for (int r = 0; r < REPEAT; r++) {
        double ea = exp_slice(consumed), dt = bench_kernel_pass(&k, cfg, consumed);
        if (dt < 0.0)
            return -1;
        best = fmax(best, (double)n / dt);
        cost[r] = (dt / (double)n) / (0.5 * (ea + exp_slice(consumed)));
    }
    printf("kernel_points %zu\n", n);
    printf("kernel_pts_per_s %.6g\n", best);
    print_spread("kernel_exp_per_point", cost, REPEAT);
    return 0;
}

/* The 10^6-point grid: identity across thread counts, kernel alone. */
static int small_grid(size_t n_s, int nthreads, double *consumed)
{
    vg_config cfg;
    vg_grid g;
    int st;

    if (load_grid(&cfg, &g, n_s) != 0)
        return -1;
    st = check_identical(&g, nthreads);
    if (st == 0)
        st = kernel_rate(&cfg, consumed);
    vg_config_free(&cfg);
    return st;
}

/* The 10^7-point grid: throughput at 1 thread and every core. */
static int full_grid(size_t n_s, int nthreads, double *consumed)
{
    vg_config cfg;
    vg_grid g;
    int st;

    if (load_grid(&cfg, &g, n_s) != 0)
        return -1;
    st = sweep_rates(&g, nthreads, consumed);
    vg_config_free(&cfg);
    return st;
}

/* --rss: one sweep at every core, then the peak resident set of this
 * process. */
static int rss_grid(size_t n_s, int nthreads)
{
    vg_config cfg;
    vg_grid g;
    double dt;

    if (load_grid(&cfg, &g, n_s) != 0)
        return -1;
    dt = timed_sweep(&g, nthreads, 0, sink_discard, NULL);
    vg_config_free(&cfg);
    if (dt < 0.0)
        return -1;
    printf("rss_points %zu\n", g.npoints);
    printf("rss_peak_kib %ld\n", peak_rss_kib());
    return 0;
}

int main(int argc, char **argv)
{
    int rss = argc > 1 && strcmp(argv[1], "--rss") == 0;
    size_t n_s = argc > 1 + rss ? (size_t)strtoul(argv[1 + rss], NULL, 10) : 20;
    vg_sweep_opts all = {0};
    int nthreads = vg_sweep_threads(&all);
    double consumed = 0.0, e1[REPEAT], esp[REPEAT], msp[REPEAT];

    gsl_set_error_handler_off();
    if (n_s < 2) {
        fprintf(stderr, "bench_sweep: HUANG_RHYS_VALUES must be at least 2\n");
        return 2;
    }
    if (rss)
        return rss_grid(n_s, nthreads) == 0 ? 0 : 1;
    for (int r = 0; r < REPEAT; r++) { /* the machine: each speedup from runs side by side */
        e1[r] = exp_rate(1, &consumed);
        esp[r] = exp_rate(nthreads, &consumed) / e1[r];
        msp[r] = madd_rate(1, &consumed);
        msp[r] = madd_rate(nthreads, &consumed) / msp[r];
    }
    printf("threads %d\n", nthreads);
    print_spread("exp_per_s", e1, REPEAT);
    print_spread("exp_speedup_n", esp, REPEAT);
    print_spread("madd_speedup_n", msp, REPEAT);
    if (small_grid(n_s / 10 > 2 ? n_s / 10 : 2, nthreads, &consumed) != 0
        || full_grid(n_s, nthreads, &consumed) != 0)
        return 1;
    printf("consumed %.17g\n", consumed);
    return 0;
}
