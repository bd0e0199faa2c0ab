/*
 * Two builds of the rate kernel timed against each other in one process
 * (run by tests/bench/ab.sh, which builds them; no part of make check).
 *
 * On a shared machine the speed of a core moves by tens of per cent within
 * seconds, so two binaries timed one after the other differ by more than
 * most changes to the kernel.  Here both builds are shared objects loaded
 * side by side (dlopen, each with its own symbols), and the timings
 * alternate A, B, A over the same points, a pass of about 40 ms each: a
 * change of speed that lasts longer than a pass touches both builds alike.
 * Each triple gives the ratio 2 t_B / (t_A + t_A'); the output is their
 * median, least and greatest, and the ratio of the summed times.
 *
 * The points: the benchmark grid of tests/bench/bench_sweep.c with two
 * huang_rhys values (10^6 points), row by row through
 * vg_rate_eval_gaps_run as the sweep engine calls it.  Both builds must
 * share include/vg_rate.h (ab.sh checks), since the records are laid out by
 * this file's copy.
 *
 * Usage: ab_kernel A.so B.so [TRIPLES]   (default 15)
 */
#define _POSIX_C_SOURCE 200809L
#include <dlfcn.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "vg_config.h"
#include "vg_rate.h"

static const char grid_text[] = "[parameters]\n"
                                "gap = -200 .. 800 meV, 500 points\n"
                                "reorganization = 10 .. 500 meV, 200 points, log\n"
                                "electronic_coupling = 1 meV\n"
                                "huang_rhys = 0.01 .. 1, 2 points, log\n"
                                "mode = 1600 cm-1\n"
                                "temperature = 250 .. 350 K, 5 points\n";

/* Weight-table and step-cache size (channels -TAB/2 .. TAB/2), as in
 * bench_sweep's kernel loop. */
#define TAB 512
#define MAX_TRIPLES 1000

typedef struct {
    vg_status (*mode_init)(vg_rate_mode *, vg_mode_statistics, double, double, double,
                           vg_error *);
    void (*attach_table)(vg_rate_mode *, long, size_t, double *, unsigned char *);
    void (*row_attach)(vg_rate_row *, long, size_t, double *, double *, unsigned *);
    vg_status (*row_begin)(vg_rate_row *, const vg_rate_mode *, double, double, vg_error *);
    vg_status (*gaps_run)(vg_rate_mode *, vg_rate_row *, size_t, const double *, double,
                          vg_rates_run *, size_t *, vg_error *);
} kernel;

static double now_seconds(void)
{
    struct timespec ts;

    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* The five entry points of the build in path; 0, or -1 with a message. */
static int load_kernel(kernel *k, const char *path)
{
    void *h = dlopen(path, RTLD_NOW | RTLD_LOCAL);

    if (!h) {
        fprintf(stderr, "ab_kernel: %s\n", dlerror());
        return -1;
    }
    /* POSIX: a data pointer from dlsym converts to a function pointer */
    *(void **)&k->mode_init = dlsym(h, "vg_rate_mode_init");
    *(void **)&k->attach_table = dlsym(h, "vg_rate_mode_attach_table");
    *(void **)&k->row_attach = dlsym(h, "vg_rate_row_attach");
    *(void **)&k->row_begin = dlsym(h, "vg_rate_row_begin");
    *(void **)&k->gaps_run = dlsym(h, "vg_rate_eval_gaps_run");
    if (!k->mode_init || !k->attach_table || !k->row_attach || !k->row_begin || !k->gaps_run) {
        fprintf(stderr, "ab_kernel: %s lacks a kernel entry point\n", path);
        return -1;
    }
    return 0;
}

/* Seconds of one pass over the grid, or -1 on a failure (printed); one
 * value of each row goes into *consumed. */
static double timed_pass(const kernel *k, const vg_config *cfg, double *consumed)
{
    static double tab[TAB], q[TAB], qi[TAB], arr[9][1024];
    static unsigned char set[TAB];
    static unsigned gen[TAB];
    const vg_param *p = cfg->param;
    vg_rate_row row = {0};
    vg_rates_run run = {arr[0], arr[1], arr[2], arr[3], arr[4], arr[5], arr[6], arr[7], arr[8],
                        0, 0};
    vg_error err = {VG_OK, ""};
    double t0 = now_seconds();

    for (size_t it = 0; it < p[VG_P_TEMPERATURE].n; it++)
        for (size_t is = 0; is < p[VG_P_HUANG_RHYS].n; is++) {
            vg_rate_mode m;
            if (k->mode_init(&m, cfg->stats, p[VG_P_HUANG_RHYS].v[is], p[VG_P_MODE].v[0],
                             p[VG_P_TEMPERATURE].v[it], &err) != VG_OK)
                goto fail;
            k->attach_table(&m, -TAB / 2, TAB, tab, set);
            k->row_attach(&row, -TAB / 2, TAB, q, qi, gen);
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
    return now_seconds() - t0;
fail:
    fprintf(stderr, "ab_kernel: %s\n", err.msg);
    return -1.0;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;

    return (x > y) - (x < y);
}

int main(int argc, char **argv)
{
    kernel ka, kb;
    vg_config cfg;
    vg_error err = {VG_OK, ""};
    static double ratio[MAX_TRIPLES];
    double consumed = 0.0, sum_a = 0.0, sum_b = 0.0, points;
    int n = argc > 3 ? atoi(argv[3]) : 15;

    if (argc < 3 || n < 1 || n > MAX_TRIPLES) {
        fprintf(stderr, "usage: ab_kernel A.so B.so [TRIPLES (1..%d)]\n", MAX_TRIPLES);
        return 2;
    }
    if (load_kernel(&ka, argv[1]) != 0 || load_kernel(&kb, argv[2]) != 0)
        return 1;
    if (vg_config_load_text(&cfg, "ab_kernel", grid_text, 0, NULL, &err) != VG_OK) {
        fprintf(stderr, "ab_kernel: %s\n", err.msg);
        return 1;
    }
    if (cfg.param[VG_P_GAP].n > 1024)
        return 1;
    points = (double)(cfg.param[VG_P_GAP].n * cfg.param[VG_P_REORG].n
                      * cfg.param[VG_P_HUANG_RHYS].n * cfg.param[VG_P_TEMPERATURE].n);
    for (int i = 0; i < n; i++) {
        double a = timed_pass(&ka, &cfg, &consumed), b = timed_pass(&kb, &cfg, &consumed);
        double a2 = timed_pass(&ka, &cfg, &consumed);
        if (a < 0.0 || b < 0.0 || a2 < 0.0)
            return 1;
        sum_a += a + a2;
        sum_b += 2.0 * b;
        ratio[i] = 2.0 * b / (a + a2);
    }
    qsort(ratio, (size_t)n, sizeof ratio[0], cmp_double);
    printf("time B / A: median %.4f (triples %.4f to %.4f), summed %.4f; "
           "A %.2f ns a point; %d triples\n",
           n % 2 ? ratio[n / 2] : 0.5 * (ratio[n / 2 - 1] + ratio[n / 2]), ratio[0],
           ratio[n - 1], sum_b / sum_a, 1e9 * sum_a / (2.0 * n * points), n);
    vg_config_free(&cfg);
    return consumed == consumed ? 0 : 1; /* consumed is read, so no pass is dropped */
}
