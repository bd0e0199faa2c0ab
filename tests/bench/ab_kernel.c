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
 * The points: the benchmark grid (tests/bench/bench_kernel.h) with two
 * huang_rhys values (10^6 points), row by row through
 * vg_rate_eval_gaps_run as the sweep engine calls it (bench_kernel_pass).  Both builds must
 * share include/vg_rate.h (ab.sh checks), since the records are laid out by
 * this file's copy.
 *
 * Usage: ab_kernel A.so B.so [TRIPLES]   (default 15)
 */
#define _POSIX_C_SOURCE 200809L
#include <dlfcn.h>
#include <stdio.h>
#include <stdlib.h>

#include "vg_config.h"
#include "vg_rate.h"

#include "bench_kernel.h"

#define MAX_TRIPLES 1000

/* The five entry points of the build in path; 0, or -1 with a message. */
static int load_kernel(bench_kernel *k, const char *path)
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

int main(int argc, char **argv)
{
    bench_kernel ka, kb;
    vg_config cfg;
    char text[sizeof bench_grid_format + 32];
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
    snprintf(text, sizeof text, bench_grid_format, (size_t)2); /* 10^6 points */
    if (vg_config_load_text(&cfg, "ab_kernel", text, 0, NULL, &err) != VG_OK) {
        fprintf(stderr, "ab_kernel: %s\n", err.msg);
        return 1;
    }
    points = (double)bench_points(&cfg);
    for (int i = 0; i < n; i++) {
        double a = bench_kernel_pass(&ka, &cfg, &consumed), b = bench_kernel_pass(&kb, &cfg, &consumed);
        double a2 = bench_kernel_pass(&ka, &cfg, &consumed);
        if (a < 0.0 || b < 0.0 || a2 < 0.0)
            return 1;
        sum_a += a + a2;
        sum_b += 2.0 * b;
        ratio[i] = 2.0 * b / (a + a2);
    }
    qsort(ratio, (size_t)n, sizeof ratio[0], bench_cmp_double);
    printf("time B / A: median %.4f (triples %.4f to %.4f), summed %.4f; "
           "A %.2f ns a point; %d triples\n",
           n % 2 ? ratio[n / 2] : 0.5 * (ratio[n / 2 - 1] + ratio[n / 2]), ratio[0],
           ratio[n - 1], sum_b / sum_a, 1e9 * sum_a / (2.0 * n * points), n);
    vg_config_free(&cfg);
    return consumed == consumed ? 0 : 1; /* consumed is read, so no pass is dropped */
}
