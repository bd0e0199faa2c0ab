/*
 * What tests/bench/bench_sweep.c and tests/bench/ab_kernel.c share: the
 * benchmark grid, the clock, and one pass of the rate kernel alone over a
 * grid, row by row as the sweep engine calls it.  The kernel is reached
 * through a table of its entry points, so that ab_kernel can pass those of
 * a build loaded with dlopen and bench_sweep the linked ones.
 */
#ifndef VG_BENCH_KERNEL_H
#define VG_BENCH_KERNEL_H

#include <stdio.h>
#include <time.h>

#include "vg_config.h"
#include "vg_rate.h"

/* The grid, invented for the benchmark: a 1600 cm-1 mode (C=O stretch
 * region, common practice) and receptor-like ranges of gap, reorganization
 * and coupling (docs/theory.md, typical ranges); %zu is the number of
 * huang_rhys values (20: 500 x 200 x 20 x 5 = 10^7 points). */
static const char bench_grid_format[] = "[parameters]\n"
                                        "gap = -200 .. 800 meV, 500 points\n"
                                        "reorganization = 10 .. 500 meV, 200 points, log\n"
                                        "electronic_coupling = 1 meV\n"
                                        "huang_rhys = 0.01 .. 1, %zu points, log\n"
                                        "mode = 1600 cm-1\n"
                                        "temperature = 250 .. 350 K, 5 points\n"
                                        "[output]\n"
                                        "data = netcdf\n"
                                        "max_size = 1 TB\n";

/* Weight-table and step-cache size (channels -BENCH_TAB/2 .. BENCH_TAB/2),
 * and the most gaps a row may have. */
#define BENCH_TAB 512
#define BENCH_MAX_GAPS 1024

typedef struct {
    vg_status (*mode_init)(vg_rate_mode *, vg_mode_statistics, double, double, double,
                           vg_error *);
    void (*attach_table)(vg_rate_mode *, long, size_t, double *, unsigned char *);
    void (*row_attach)(vg_rate_row *, long, size_t, double *, double *, unsigned *);
    vg_status (*row_begin)(vg_rate_row *, const vg_rate_mode *, double, double, vg_error *);
    vg_status (*gaps_run)(vg_rate_mode *, vg_rate_row *, size_t, const double *, double,
                          vg_rates_run *, size_t *, vg_error *);
} bench_kernel;

/* The entry points of the library this program is linked with. */
#define BENCH_KERNEL_LINKED                                                                    \
    {vg_rate_mode_init, vg_rate_mode_attach_table, vg_rate_row_attach, vg_rate_row_begin,      \
     vg_rate_eval_gaps_run}

static double bench_now(void)
{
    struct timespec ts;

    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* For qsort: ascending doubles. */
static int bench_cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;

    return (x > y) - (x < y);
}

/* Points of cfg's grid (gap x reorganization x huang_rhys x temperature). */
static size_t bench_points(const vg_config *cfg)
{
    const vg_param *p = cfg->param;

    return p[VG_P_GAP].n * p[VG_P_REORG].n * p[VG_P_HUANG_RHYS].n * p[VG_P_TEMPERATURE].n;
}

/* Seconds of one pass of k over every (gap) row of cfg's grid, for each
 * (temperature, huang_rhys, reorganization), one thread, a weight table
 * and a step cache attached as the sweep engine does them, no grid
 * indexing, no metrics; -1 with a message on a failure.  One value of each
 * row goes into *consumed, so that no pass can be dropped. */
static double bench_kernel_pass(const bench_kernel *k, const vg_config *cfg, double *consumed)
{
    static double tab[BENCH_TAB], q[BENCH_TAB], qi[BENCH_TAB], arr[9][BENCH_MAX_GAPS];
    static unsigned char set[BENCH_TAB];
    static unsigned gen[BENCH_TAB];
    const vg_param *p = cfg->param;
    vg_rate_row row = {0};
    vg_rates_run run = {arr[0], arr[1], arr[2], arr[3], arr[4], arr[5], arr[6], arr[7], arr[8],
                        0, 0};
    vg_error err = {VG_OK, ""};
    double t0 = bench_now();

    if (p[VG_P_GAP].n > BENCH_MAX_GAPS) {
        fprintf(stderr, "bench: more than %d gaps a row\n", BENCH_MAX_GAPS);
        return -1.0;
    }
    for (size_t it = 0; it < p[VG_P_TEMPERATURE].n; it++)
        for (size_t is = 0; is < p[VG_P_HUANG_RHYS].n; is++) {
            vg_rate_mode m;
            if (k->mode_init(&m, cfg->stats, p[VG_P_HUANG_RHYS].v[is], p[VG_P_MODE].v[0],
                             p[VG_P_TEMPERATURE].v[it], &err) != VG_OK)
                goto fail;
            k->attach_table(&m, -BENCH_TAB / 2, BENCH_TAB, tab, set);
            k->row_attach(&row, -BENCH_TAB / 2, BENCH_TAB, q, qi, gen);
            for (size_t il = 0; il < p[VG_P_REORG].n; il++) {
                size_t done;
                if (k->row_begin(&row, &m, p[VG_P_REORG].v[il], p[VG_P_COUPLING].v[0], &err)
                        != VG_OK
                    || k->gaps_run(&m, &row, p[VG_P_GAP].n, p[VG_P_GAP].v, cfg->tolerance,
                                   &run, &done, &err) != VG_OK)
                    goto fail;
                *consumed += arr[2][p[VG_P_GAP].n / 2];
            }
        }
    return bench_now() - t0;
fail:
    fprintf(stderr, "bench: %s\n", err.msg);
    return -1.0;
}

#endif
