/*
 * The sweep engine (see vg_sweep.h).
 *
 * Work hoisting: the weights W_n depend only on (huang_rhys, mode,
 * temperature), the three slowest axes, so each thread keeps one
 * vg_rate_mode and re-initialises it only when that triple changes.  Its
 * weight table is a cache of ln W_n over the channels the grid can reach;
 * the kernel computes the same values with or without it, which is what
 * keeps the output independent of how points are split between threads.
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "vg_metrics.h"
#include "vg_sweep.h"

/* Largest weight table per thread (entries); channels outside it are
 * computed directly. */
#define TABLE_MAX ((size_t)1 << 15)
/* Extra channels beyond the ones whose centre the grid reaches. */
#define TABLE_MARGIN 64

typedef struct {
    vg_rate_mode mode;
    size_t key;            /* flat index of the (S, mode, T) triple, or SIZE_MAX */
    double *tab;
    unsigned char *set;
    vg_status status;      /* first failure of this thread */
    size_t fail_at;        /* its flat index */
    vg_error err;
} worker;

typedef struct {
    double gap_lo, gap_hi, reorg_lo, reorg_hi;
} reach;

int vg_sweep_threads(const vg_sweep_opts *opts)
{
#ifdef _OPENMP
    return opts->threads > 0 ? opts->threads : omp_get_max_threads();
#else
    (void)opts;
    return 1;
#endif
}

static void minmax(const vg_param *p, double *lo, double *hi)
{
    size_t i;

    *lo = *hi = p->v[0];
    for (i = 1; i < p->n; i++) {
        *lo = fmin(*lo, p->v[i]);
        *hi = fmax(*hi, p->v[i]);
    }
}

/* Channels whose Gaussian centre some (gap, reorganization) of the grid
 * reaches, plus the weights' own bulk near n = S, widened by a margin. */
static void table_range(const reach *r, double S, double mode, long *lo, size_t *len)
{
    double a = fmin(0.0, (r->gap_lo - r->reorg_hi) / mode) - TABLE_MARGIN;
    double b = fmax(S + 10.0 * sqrt(S + 1.0), (r->gap_hi - r->reorg_lo) / mode) + TABLE_MARGIN;
    double n = fmin(b - a + 1.0, (double)TABLE_MAX);

    *lo = (long)floor(a);
    *len = (size_t)n;
}

static vg_status worker_mode(worker *w, const vg_grid *g, const reach *r,
                             const double v[VG_NPARAM], size_t key)
{
    long lo;
    size_t len;
    vg_status st;

    if (w->key == key)
        return VG_OK;
    st = vg_rate_mode_init(&w->mode, g->cfg->stats, v[VG_P_HUANG_RHYS],
                           v[VG_P_MODE], v[VG_P_TEMPERATURE], &w->err);
    if (st != VG_OK)
        return st;
    table_range(r, v[VG_P_HUANG_RHYS], v[VG_P_MODE], &lo, &len);
    vg_rate_mode_attach_table(&w->mode, lo, len, w->tab, w->set);
    w->key = key;
    return VG_OK;
}

/* Flat index of the point's (S, mode, T) triple: the point with every
 * faster coordinate zeroed. */
static size_t mode_key(const vg_grid *g, size_t flat)
{
    size_t s = g->stride[VG_P_HUANG_RHYS];

    s = s ? s : g->stride[VG_P_MODE];
    s = s ? s : g->stride[VG_P_TEMPERATURE];
    return s ? flat - flat % s : 0;
}

static void point(worker *w, const vg_grid *g, const reach *r, size_t flat, double *out)
{
    double v[VG_NPARAM];
    vg_rates rates;
    vg_status st;

    vg_grid_values(g, flat, v);
    st = worker_mode(w, g, r, v, mode_key(g, flat));
    if (st == VG_OK)
        st = vg_rate_eval(&w->mode, v[VG_P_GAP], v[VG_P_REORG], v[VG_P_COUPLING],
                          g->cfg->tolerance, &rates, &w->err);
    if (st != VG_OK) {
        w->key = SIZE_MAX;
        if (w->status == VG_OK) {
            w->status = st;
            w->fail_at = flat;
        }
        for (int m = 0; m < VG_N_METRICS; m++)
            out[m] = VG_FILL;
        return;
    }
    vg_metrics_from_rates(&rates, out);
}

/* Points are dealt to threads in blocks of 1024 rather than one half of the
 * chunk each, because cost varies along the grid (larger reorganization,
 * more channels); each point is still computed alone, so the result does not
 * depend on the split. */
static void compute_chunk(worker *ws, int nthreads, const vg_grid *g, const reach *r,
                          size_t start, size_t count, double *metrics)
{
    long i, n = (long)count;

#ifdef _OPENMP
#pragma omp parallel for schedule(static, 1024) num_threads(nthreads)
#endif
    for (i = 0; i < n; i++) {
#ifdef _OPENMP
        worker *w = &ws[omp_get_thread_num()];
#else
        worker *w = &ws[0];
#endif
        point(w, g, r, start + (size_t)i, metrics + (size_t)i * VG_N_METRICS);
    }
    (void)nthreads;
}

/* The first failure in flat-index order, whichever thread met it. */
static vg_status first_failure(const worker *ws, int nthreads, vg_error *err)
{
    const worker *f = NULL;

    for (int t = 0; t < nthreads; t++)
        if (ws[t].status != VG_OK && (!f || ws[t].fail_at < f->fail_at))
            f = &ws[t];
    if (!f)
        return VG_OK;
    if (err)
        *err = f->err;
    vg_error_prefix(err, "grid point %zu: ", f->fail_at);
    return f->status;
}

static double now_seconds(void)
{
    struct timespec ts;

    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static void progress(size_t done, size_t total, double t0, int last)
{
    double dt = now_seconds() - t0;
    double rate = dt > 0 ? (double)done / dt : 0.0;
    double left = rate > 0 ? (double)(total - done) / rate : 0.0;

    fprintf(stderr, "\rvibrogate: %5.1f%%  %zu/%zu points  %.3g points/s  %.0f s left ",
            100.0 * (double)done / (double)total, done, total, rate, left);
    if (last)
        fputc('\n', stderr);
    fflush(stderr);
}

static void workers_free(worker *ws, int nthreads)
{
    if (!ws)
        return;
    for (int t = 0; t < nthreads; t++) {
        free(ws[t].tab);
        free(ws[t].set);
    }
    free(ws);
}

static worker *workers_alloc(int nthreads)
{
    worker *ws = calloc((size_t)nthreads, sizeof *ws);

    if (!ws)
        return NULL;
    for (int t = 0; t < nthreads; t++) {
        ws[t].key = SIZE_MAX;
        ws[t].tab = malloc(TABLE_MAX * sizeof *ws[t].tab);
        ws[t].set = malloc(TABLE_MAX);
        if (!ws[t].tab || !ws[t].set) {
            workers_free(ws, nthreads);
            return NULL;
        }
    }
    return ws;
}

static vg_status run_chunks(const vg_grid *g, const vg_sweep_opts *o, worker *ws,
                            int nthreads, double *metrics, size_t chunk,
                            vg_sweep_sink sink, void *ctx, vg_error *err)
{
    reach r;
    double t0 = now_seconds();
    size_t start, count;
    vg_status st;

    minmax(&g->cfg->param[VG_P_GAP], &r.gap_lo, &r.gap_hi);
    minmax(&g->cfg->param[VG_P_REORG], &r.reorg_lo, &r.reorg_hi);
    for (start = o->start; start < g->npoints; start += count) {
        if (o->stop && *o->stop)
            return vg_error_set(err, VG_EINTR, "interrupted after %zu of %zu points",
                                start, g->npoints);
        count = g->npoints - start < chunk ? g->npoints - start : chunk;
        compute_chunk(ws, nthreads, g, &r, start, count, metrics);
        st = first_failure(ws, nthreads, err);
        if (st == VG_OK)
            st = sink(ctx, start, count, metrics, err);
        if (st != VG_OK)
            return st;
        if (o->progress)
            progress(start + count, g->npoints, t0, start + count == g->npoints);
    }
    return VG_OK;
}

vg_status vg_sweep_run(const vg_grid *g, const vg_sweep_opts *opts,
                       vg_sweep_sink sink, void *ctx, vg_error *err)
{
    int nthreads = vg_sweep_threads(opts);
    size_t chunk = opts->chunk ? opts->chunk : VG_SWEEP_CHUNK;
    worker *ws;
    double *metrics;
    vg_status st;

    if (chunk > g->npoints)
        chunk = g->npoints;
    ws = workers_alloc(nthreads);
    metrics = malloc(chunk * VG_N_METRICS * sizeof *metrics);
    if (!ws || !metrics) {
        st = vg_error_set(err, VG_ENOMEM, "out of memory for %d sweep workspaces", nthreads);
        goto out_free;
    }
    st = run_chunks(g, opts, ws, nthreads, metrics, chunk, sink, ctx, err);
out_free:
    free(metrics);
    workers_free(ws, nthreads);
    return st;
}
