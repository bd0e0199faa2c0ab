/*
 * Unit tests of the grid plan (src/grid.c) and the sweep engine
 * (src/sweep.c): index decomposition against an independent nested-loop
 * enumeration, every point equal to a direct kernel call, identical bits at
 * any thread count and chunk size, and the error and interrupt paths.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <cmocka.h>

#include "vg_grid.h"
#include "vg_metrics.h"
#include "vg_sweep.h"

typedef struct {
    vg_config cfg;
    double store[VG_NPARAM][8];
} fixture;

/* A config with awkward axis lengths: gap 5, reorganization 3, S 2,
 * temperature 2; coupling and mode scalar. */
static void fixture_init(fixture *f)
{
    static const size_t n[VG_NPARAM] = {5, 3, 1, 2, 1, 2};
    static const double first[VG_NPARAM] = {-120.5, 12.25, 0.8, 0.031, 186.3, 151.7};
    static const double step[VG_NPARAM] = {97.3, 41.1, 0.0, 0.457, 0.0, 148.9};

    memset(f, 0, sizeof *f);
    for (int p = 0; p < VG_NPARAM; p++) {
        f->cfg.param[p].n = n[p];
        f->cfg.param[p].v = f->store[p];
        for (size_t i = 0; i < n[p]; i++)
            f->store[p][i] = first[p] + step[p] * (double)i;
    }
    f->cfg.stats = VG_STATS_THERMAL;
    f->cfg.tolerance = 1e-12;
    for (int m = 0; m < VG_N_METRICS; m++)
        f->cfg.metric_on[m] = 1;
}

static void grid_matches_nested_loops(void **state)
{
    fixture f;
    vg_grid g;
    size_t flat = 0;

    (void)state;
    fixture_init(&f);
    vg_grid_init(&g, &f.cfg);
    assert_int_equal(g.naxes, 4);
    assert_int_equal(g.npoints, 5 * 3 * 2 * 2);
    assert_int_equal(g.axis[0], VG_P_TEMPERATURE);
    assert_int_equal(g.axis[3], VG_P_GAP);
    /* Row-major, temperature slowest, gap fastest. */
    for (size_t t = 0; t < 2; t++)
        for (size_t s = 0; s < 2; s++)
            for (size_t r = 0; r < 3; r++)
                for (size_t e = 0; e < 5; e++, flat++) {
                    double v[VG_NPARAM];
                    vg_grid_values(&g, flat, v);
                    assert_int_equal(vg_grid_coord(&g, flat, VG_P_GAP), e);
                    assert_int_equal(vg_grid_coord(&g, flat, VG_P_REORG), r);
                    assert_int_equal(vg_grid_coord(&g, flat, VG_P_HUANG_RHYS), s);
                    assert_int_equal(vg_grid_coord(&g, flat, VG_P_TEMPERATURE), t);
                    assert_int_equal(vg_grid_coord(&g, flat, VG_P_MODE), 0);
                    assert_true(v[VG_P_GAP] == f.store[VG_P_GAP][e]);
                    assert_true(v[VG_P_TEMPERATURE] == f.store[VG_P_TEMPERATURE][t]);
                }
}

static void grid_without_axes_has_one_point(void **state)
{
    fixture f;
    vg_grid g;

    (void)state;
    fixture_init(&f);
    for (int p = 0; p < VG_NPARAM; p++)
        f.cfg.param[p].n = 1;
    vg_grid_init(&g, &f.cfg);
    assert_int_equal(g.naxes, 0);
    assert_int_equal(g.npoints, 1);
}

typedef struct {
    double *all;     /* npoints x VG_N_METRICS */
    size_t next;     /* next expected start */
    size_t fail_at;  /* fail when a chunk starts here; SIZE_MAX never */
} collector;

static vg_status collect(void *ctx, size_t start, size_t count, const double *m, vg_error *err)
{
    collector *c = ctx;

    if (start != c->next)
        return vg_error_set(err, VG_EIO, "chunk out of order");
    if (start == c->fail_at)
        return vg_error_set(err, VG_EIO, "sink failed on purpose");
    memcpy(c->all + start * VG_N_METRICS, m, count * VG_N_METRICS * sizeof *m);
    c->next = start + count;
    return VG_OK;
}

static vg_status sweep_into(const vg_grid *g, int threads, size_t chunk, double *all)
{
    collector c = {all, 0, SIZE_MAX};
    vg_sweep_opts o = {threads, chunk, 0, NULL, 0};
    vg_error err;

    return vg_sweep_run(g, &o, collect, &c, &err);
}

static void every_point_equals_a_direct_call(void **state)
{
    fixture f;
    vg_grid g;
    double all[60 * VG_N_METRICS];

    (void)state;
    fixture_init(&f);
    vg_grid_init(&g, &f.cfg);
    assert_int_equal(sweep_into(&g, 2, 7, all), VG_OK);
    for (size_t i = 0; i < g.npoints; i++) {
        double v[VG_NPARAM], m[VG_N_METRICS];
        vg_rate_mode mode;
        vg_rates r;
        vg_grid_values(&g, i, v);
        assert_int_equal(vg_rate_mode_init(&mode, VG_STATS_THERMAL, v[VG_P_HUANG_RHYS],
                                           v[VG_P_MODE], v[VG_P_TEMPERATURE], NULL), VG_OK);
        assert_int_equal(vg_rate_eval(&mode, v[VG_P_GAP], v[VG_P_REORG], v[VG_P_COUPLING],
                                      1e-12, &r, NULL), VG_OK);
        vg_metrics_from_rates(&r, m);
        assert_memory_equal(m, all + i * VG_N_METRICS, sizeof m);
    }
}

static void identical_at_any_thread_count_and_chunk(void **state)
{
    fixture f;
    vg_grid g;
    double a[60 * VG_N_METRICS], b[60 * VG_N_METRICS];
    static const size_t chunks[] = {1, 7, 13, 60, 0};
    static const int threads[] = {1, 2, 3};

    (void)state;
    fixture_init(&f);
    vg_grid_init(&g, &f.cfg);
    assert_int_equal(sweep_into(&g, 1, 0, a), VG_OK);
    for (size_t i = 0; i < sizeof chunks / sizeof *chunks; i++)
        for (size_t t = 0; t < sizeof threads / sizeof *threads; t++) {
            memset(b, 0, sizeof b);
            assert_int_equal(sweep_into(&g, threads[t], chunks[i], b), VG_OK);
            assert_memory_equal(a, b, sizeof a);
        }
}

static void sink_failure_stops_the_sweep(void **state)
{
    fixture f;
    vg_grid g;
    double all[60 * VG_N_METRICS];
    collector c = {all, 0, 14};
    vg_sweep_opts o = {2, 7, 0, NULL, 0};
    vg_error err;

    (void)state;
    fixture_init(&f);
    vg_grid_init(&g, &f.cfg);
    assert_int_equal(vg_sweep_run(&g, &o, collect, &c, &err), VG_EIO);
    assert_string_equal(err.msg, "sink failed on purpose");
    assert_int_equal(c.next, 14);
}

static void stop_flag_interrupts(void **state)
{
    fixture f;
    vg_grid g;
    double all[60 * VG_N_METRICS];
    collector c = {all, 0, SIZE_MAX};
    volatile sig_atomic_t stop = 1;
    vg_sweep_opts o = {1, 7, 0, &stop, 0};
    vg_error err;

    (void)state;
    fixture_init(&f);
    vg_grid_init(&g, &f.cfg);
    assert_int_equal(vg_sweep_run(&g, &o, collect, &c, &err), VG_EINTR);
    assert_int_equal(c.next, 0);
}

static void kernel_failure_is_reported_with_its_point(void **state)
{
    fixture f;
    vg_grid g;
    double all[60 * VG_N_METRICS];
    collector c = {all, 0, SIZE_MAX};
    vg_sweep_opts o = {2, 0, 0, NULL, 0};
    vg_error err;

    (void)state;
    fixture_init(&f);
    f.store[VG_P_REORG][2] = -1.0; /* outside the kernel's domain on purpose */
    vg_grid_init(&g, &f.cfg);
    assert_int_equal(vg_sweep_run(&g, &o, collect, &c, &err), VG_ENUMERIC);
    /* first bad point in flat order: reorganization index 2, gap index 0 */
    assert_non_null(strstr(err.msg, "grid point 10:"));
    assert_int_equal(c.next, 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(grid_matches_nested_loops),
        cmocka_unit_test(grid_without_axes_has_one_point),
        cmocka_unit_test(every_point_equals_a_direct_call),
        cmocka_unit_test(identical_at_any_thread_count_and_chunk),
        cmocka_unit_test(sink_failure_stops_the_sweep),
        cmocka_unit_test(stop_flag_interrupts),
        cmocka_unit_test(kernel_failure_is_reported_with_its_point),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
