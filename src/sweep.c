/*
 * The sweep engine (see vg_sweep.h).
 *
 * Work hoisting: the weights W_n depend only on (huang_rhys, mode,
 * temperature), the three slowest axes, so each thread keeps one
 * vg_rate_mode and re-initialises it only when that triple changes.  Its
 * weight table is a cache of ln W_n over the channels the grid can reach;
 * the kernel computes the same values with or without it, which is what
 * keeps the output independent of how points are split between threads.
 *
 * A many-mode odorant ([model] odorant) replaces the single mode: each
 * thread evaluates the many-mode engine over the whole gap axis of a
 * (temperature, coupling, reorganization) row at once and keeps the row,
 * so a point's bits do not depend on where a block boundary cuts the row
 * (the engine's lattice covers the gaps of its call, vg_multimode.h).
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

#include "vg_const.h"
#include "vg_evaluate.h"
#include "vg_metrics.h"
#include "vg_fft.h"
#include "vg_multimode.h"
#include "vg_sweep.h"

/* Largest weight table per thread (entries); channels outside it are
 * computed directly. */
#define TABLE_MAX ((size_t)1 << 15)
/* Extra channels beyond the ones whose centre the grid reaches. */
#define TABLE_MARGIN 64

/* One isotopologue's kernel records and caches. */
typedef struct {
    vg_rate_mode mode;
    vg_rate_row row;
    double *tab;
    unsigned char *set;
    double *q, *qi;        /* the row's step cache, over the same channels */
    unsigned *qgen;
} track;

/* The many-mode rows of one thread: the mapped odorant, its heavy form
 * ([isotope]) and the odorant compared against ([model] against). */
#define ODOR_TRACKS 3

/* Longest transform a sweep row may take with engine = fft (the point
 * command's limit). */
#define ODOR_FFT_MAX ((size_t)1 << 24)

typedef struct {
    vg_multimode_work *mw;
    vg_fft_work *fw;                   /* engine = fft: for the longest row's plan */
    size_t fft_n;                      /* that length */
    vg_fft_point *fp;                  /* engine = fft: one row of the gap axis */
    vg_multimode_rates *mm;            /* one row of the gap axis */
    vg_rates *rates[ODOR_TRACKS];      /* the same as kernel records */
    size_t key;                        /* (T, V, lambda) row held, or SIZE_MAX */
} odor_rows;

typedef struct {
    track t[2];            /* light, heavy ([isotope] only) */
    odor_rows o;           /* [model] odorant only */
    size_t key;            /* index of the (S, mode, T) triple, or SIZE_MAX */
    size_t row_key;        /* index of the (S, mode, T, V, lambda) row, or SIZE_MAX */
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

static vg_status track_mode(track *t, const vg_grid *g, const reach *r, double S,
                            double mode, double T, vg_error *err)
{
    long lo;
    size_t len;
    vg_status st = vg_rate_mode_init(&t->mode, g->cfg->stats, S, mode, T, err);

    if (st != VG_OK)
        return st;
    table_range(r, S, mode, &lo, &len);
    vg_rate_mode_attach_table(&t->mode, lo, len, t->tab, t->set);
    vg_rate_row_attach(&t->row, lo, len, t->q, t->qi, t->qgen);
    return VG_OK;
}

static vg_status worker_mode(worker *w, const vg_grid *g, const reach *r,
                             const double v[VG_NPARAM], size_t key)
{
    const vg_isotope *iso = &g->cfg->isotope;
    vg_status st = track_mode(&w->t[0], g, r, v[VG_P_HUANG_RHYS], v[VG_P_MODE],
                              v[VG_P_TEMPERATURE], &w->err);

    if (st == VG_OK && iso->on) {
        double S_h, mode_h;
        vg_isotope_heavy(iso, v[VG_P_HUANG_RHYS], v[VG_P_MODE], &S_h, &mode_h);
        st = track_mode(&w->t[1], g, r, S_h, mode_h, v[VG_P_TEMPERATURE], &w->err);
        if (st != VG_OK)
            vg_error_prefix(&w->err, "heavy isotopologue: ");
    }
    w->key = st == VG_OK ? key : SIZE_MAX;
    w->row_key = SIZE_MAX;
    return st;
}

/* A block of consecutive points walked with an odometer over the axes, so
 * that no point needs a division: c[k] is the index along axis k. */
typedef struct {
    const vg_grid *g;
    size_t c[VG_NPARAM];
} odometer;

static void odo_start(odometer *o, const vg_grid *g, size_t flat)
{
    o->g = g;
    for (size_t k = g->naxes; k-- > 0;) {
        o->c[k] = flat % g->dim[k];
        flat /= g->dim[k];
    }
}

/* Move n points on, n never past the end of the fastest axis's run. */
static void odo_advance(odometer *o, size_t n)
{
    size_t k = o->g->naxes;

    if (k == 0)
        return;
    o->c[k - 1] += n;
    while (k-- > 0 && o->c[k] >= o->g->dim[k]) {
        o->c[k] = 0;
        if (k > 0)
            o->c[k - 1]++;
    }
}

/* Index of the point's values along every parameter (0 for scalars). */
static void odo_index(const odometer *o, size_t idx[VG_NPARAM])
{
    for (int p = 0; p < VG_NPARAM; p++)
        idx[p] = 0;
    for (size_t k = 0; k < o->g->naxes; k++)
        idx[o->g->axis[k]] = o->c[k];
}

static void fail(worker *w, vg_status st, size_t flat, double *out)
{
    w->key = SIZE_MAX;
    if (w->status == VG_OK) {
        w->status = st;
        w->fail_at = flat;
    }
    for (int m = 0; m < VG_N_METRICS; m++)
        out[m] = VG_FILL;
}

/* After a failure the thread fills the rest of its blocks without
 * computing them, so that its message stays the first failure's. */
static int already_failed(worker *w, size_t n, size_t flat, double *out)
{
    if (w->status == VG_OK)
        return 0;
    for (size_t j = 0; j < n; j++, out += VG_N_METRICS)
        fail(w, w->status, flat + j, out);
    return 1;
}

/* The valid and failed_criteria metrics at the point idx
 * (vg_evaluate_valid): v[0], v[1]. */
static vg_status point_valid(const vg_config *cfg, const size_t idx[VG_NPARAM], double mode,
                             double t1, const vg_rates *r, double v[2], vg_error *err)
{
    return vg_evaluate_valid(cfg, cfg->param[VG_P_COUPLING].v[idx[VG_P_COUPLING]],
                             cfg->param[VG_P_REORG].v[idx[VG_P_REORG]],
                             cfg->param[VG_P_TEMPERATURE].v[idx[VG_P_TEMPERATURE]], mode, t1, r,
                             &v[0], &v[1], err);
}

/* Gaps the kernel takes at a time (the rate records of a run live on the
 * stack: 2 x 64 x about 120 bytes). */
#define RUN 64

/* The arrays of a run record over a[0..9). */
static void run_arrays(vg_rates_run *r, double a[9][RUN])
{
    r->ln_k_elastic = a[0];
    r->ln_k_assisted = a[1];
    r->ln_k_total = a[2];
    r->ln_k_bare = a[3];
    r->ln_fc_elastic = a[4];
    r->ln_fc_assisted = a[5];
    r->ln_fc_total = a[6];
    r->ln_fc_bare = a[7];
    r->assisted_fraction = a[8];
}

/* A segment of points that differ only in gap (consecutive along the gap
 * axis, or one point when gap is not the fastest axis): the weights' record
 * when the (S, mode, T) triple changes, the row's when (V, lambda) change
 * too, then the kernel point by point. */
static void segment(worker *w, const vg_grid *g, const reach *r, const size_t idx[VG_NPARAM],
                    size_t n, size_t flat, double *out)
{
    const vg_config *cfg = g->cfg;
    const double *gap = cfg->param[VG_P_GAP].v + idx[VG_P_GAP];
    size_t key = (idx[VG_P_TEMPERATURE] * cfg->param[VG_P_MODE].n + idx[VG_P_MODE])
                 * cfg->param[VG_P_HUANG_RHYS].n + idx[VG_P_HUANG_RHYS];
    size_t row_key = (key * cfg->param[VG_P_COUPLING].n + idx[VG_P_COUPLING])
                     * cfg->param[VG_P_REORG].n + idx[VG_P_REORG];
    vg_status st = VG_OK;
    int niso = cfg->isotope.on ? 2 : 1;

    if (already_failed(w, n, flat, out))
        return;
    if (w->key != key) {
        double v[VG_NPARAM];
        for (int p = 0; p < VG_NPARAM; p++)
            v[p] = cfg->param[p].v[idx[p]];
        st = worker_mode(w, g, r, v, key);
    }
    for (int k = 0; k < niso && st == VG_OK && w->row_key != row_key; k++)
        st = vg_rate_row_begin(&w->t[k].row, &w->t[k].mode,
                               cfg->param[VG_P_REORG].v[idx[VG_P_REORG]],
                               cfg->param[VG_P_COUPLING].v[idx[VG_P_COUPLING]], &w->err);
    w->row_key = st == VG_OK ? row_key : SIZE_MAX;
    for (size_t j0 = 0; j0 < n; j0 += RUN) { /* the kernel on RUN gaps at a time */
        size_t m = n - j0 < RUN ? n - j0 : RUN, good = st == VG_OK ? m : 0;
        double arr[2][9][RUN], valid[2][RUN];
        vg_rates_run run[2];
        int checks = cfg->validity.on && cfg->validity.s.enabled;
        for (int k = 0; k < 2; k++)
            run_arrays(&run[k], arr[k]);
        if (good > 0) {
            size_t g0, g1;
            vg_status s0 = vg_rate_eval_gaps_run(&w->t[0].mode, &w->t[0].row, m, gap + j0,
                                                 cfg->tolerance, &run[0], &g0, &w->err);
            good = g0;
            st = s0;
            if (niso > 1 && good > 0) {
                /* the heavy track over the points the light one computed: the
                 * first point that fails names the error */
                vg_error e0;
                vg_status s1;
                if (s0 != VG_OK)
                    e0 = w->err;
                s1 = vg_rate_eval_gaps_run(&w->t[1].mode, &w->t[1].row, good, gap + j0,
                                           cfg->tolerance, &run[1], &g1, &w->err);
                if (s1 != VG_OK) {
                    st = s1;
                    good = g1;
                } else if (s0 != VG_OK) {
                    w->err = e0;
                }
            }
        }
        for (size_t j = 0; checks && j < good; j++) { /* a failure here comes first */
            vg_rates rec;
            double v[2];
            vg_status sj;
            vg_rates_run_get(&run[0], j, &rec);
            sj = point_valid(cfg, idx, cfg->param[VG_P_MODE].v[idx[VG_P_MODE]],
                             cfg->validity.t1_ps, &rec, v, &w->err);
            valid[0][j] = v[0];
            valid[1][j] = v[1];
            if (sj != VG_OK) {
                good = j;
                st = sj;
            }
        }
        vg_metrics_compute_run(good, &run[0], niso > 1 ? &run[1] : NULL,
                               checks ? valid[0] : NULL, checks ? valid[1] : NULL,
                               &cfg->feasibility, 1, out);
        out += good * VG_N_METRICS;
        if (good < m) { /* the sweep stops at this chunk: fill the rest */
            for (size_t j = j0 + good; j < n; j++, out += VG_N_METRICS)
                fail(w, st, flat + j, out);
            w->row_key = SIZE_MAX;
            return;
        }
    }
}

#define BLOCK 1024

/* ------------------------------------------------ many-mode odorants --- */

/* The systems of a sweep with [model] odorant: the mapped odorant, its
 * heavy form when [isotope] is on, the odorant compared against when
 * [model] against names one (NULL where absent). */
static void odor_systems(const vg_config *cfg, vg_multimode_system sys[ODOR_TRACKS])
{
    const vg_odorant *od = vg_config_mapped(cfg), *other = vg_config_against(cfg);
    const vg_modes *t[ODOR_TRACKS] = {od->light, cfg->isotope.on ? od->heavy : NULL,
                                      other ? other->light : NULL};

    for (int k = 0; k < ODOR_TRACKS; k++) {
        sys[k].stats = cfg->stats;
        sys[k].n_modes = t[k] ? t[k]->n : 0;
        sys[k].modes = t[k] ? t[k]->mode : NULL;
    }
}

/* A many-mode result as a kernel record, so that the metrics are formed by
 * the same code as the single mode's.  The prefactor-free parts are the
 * densities F (meV^-1), the bare part the normalised Marcus Gaussian; the
 * metrics use only their differences and the rates. */
static void odor_record(const vg_multimode_rates *r, double gap, double reorg, double V,
                        double T, vg_rates *o)
{
    double kT = VG_KB_MEV * T, d = gap - reorg;

    memset(o, 0, sizeof *o);
    o->assisted_zero = r->assisted_zero;
    o->coupling_zero = r->coupling_zero;
    o->ln_fc_total = r->ln_f_total;
    o->ln_fc_elastic = r->ln_f_elastic;
    o->ln_fc_assisted = r->assisted_zero ? -HUGE_VAL : r->ln_f_assisted;
    o->ln_fc_bare = -0.5 * log(4.0 * VG_PI * reorg * kT) - d * d / (4.0 * reorg * kT);
    o->ln_k_total = r->ln_k_total;
    o->ln_k_elastic = r->ln_k_elastic;
    o->ln_k_assisted = r->ln_k_assisted;
    o->ln_k_bare = r->coupling_zero ? -HUGE_VAL : vg_rate_ln_marcus(gap, reorg, V, T);
    o->assisted_fraction = r->assisted_zero ? 0.0
                           : fmin(1.0, exp(r->ln_f_assisted - r->ln_f_total));
}

/* No NaN and no infinity in a record but the -inf its flags stand for (the
 * engine promises this; the sweep checks it, as the kernel checks its own). */
static int odor_record_finite(const vg_rates *o)
{
    return isfinite(o->ln_fc_total) && isfinite(o->ln_fc_elastic) && isfinite(o->ln_fc_bare)
           && (o->assisted_zero || isfinite(o->ln_fc_assisted))
           && (o->coupling_zero || (isfinite(o->ln_k_total) && isfinite(o->ln_k_elastic)
                                    && isfinite(o->ln_k_bare)
                                    && (o->assisted_zero || isfinite(o->ln_k_assisted))))
           && o->assisted_fraction >= 0.0 && o->assisted_fraction <= 1.0;
}

/* The section name of track k, for messages. */
static const char *track_name(const vg_config *cfg, int k)
{
    const vg_odorant *od = k == 2 ? vg_config_against(cfg) : vg_config_mapped(cfg);

    return od ? od->name : "";
}

/* The gap axis as the FFT takes it: ascending from *lo by *step; *rev set
 * when the axis runs downward (the FFT's gap i is then the axis' n-1-i). */
static void fft_axis(const vg_param *gp, double *lo, double *step, int *rev)
{
    double a = gp->v[0], b = gp->v[gp->n - 1];

    *rev = gp->n > 1 && b < a;
    *lo = *rev ? b : a;
    *step = gp->n > 1 ? fabs(b - a) / (double)(gp->n - 1) : 0.0;
}

/* The plan of track sys at (reorg, T) over the gap axis. */
static vg_status fft_plan(const vg_config *cfg, const vg_multimode_system *sys, double reorg,
                          double T, vg_fft_plan *plan, vg_error *err)
{
    const vg_param *gp = &cfg->param[VG_P_GAP];
    double lo, step;
    int rev;

    fft_axis(gp, &lo, &step, &rev);
    return vg_fft_plan_make(sys, reorg, T, lo, step, gp->n, ODOR_FFT_MAX, plan, err);
}

/* engine = fft: the total rate of track k over the row from one transform
 * (the plan lengthened to the thread's workspace).  Every gap must lie
 * within the transform's dynamic range; a value below it would be noise,
 * so the row fails instead, naming the gap.  Only the total-rate metrics
 * are stored with this engine (vg_config_metric_lacks), so the elastic and
 * assisted fields are set to the total only to keep the record well
 * formed; they reach no output. */
static vg_status fft_row(worker *w, const vg_config *cfg, const vg_multimode_system *sys, int k,
                         double reorg, double V, double T)
{
    const vg_param *gp = &cfg->param[VG_P_GAP];
    double lo, step, kT = VG_KB_MEV * T;
    double lp = vg_rate_ln_marcus(reorg, reorg, V, T) + 0.5 * log(4.0 * VG_PI * reorg * kT);
    int rev, any = 0;
    vg_fft_plan plan;
    vg_status st = fft_plan(cfg, sys, reorg, T, &plan, &w->err);

    if (st == VG_OK)
        st = vg_fft_plan_widen(sys, &plan, w->o.fft_n, &w->err);
    if (st == VG_OK)
        st = vg_fft_eval(w->o.fw, &plan, sys, w->o.fp, &w->err);
    if (st != VG_OK)
        return st;
    fft_axis(gp, &lo, &step, &rev);
    for (size_t i = 0; i < sys->n_modes; i++)
        any |= sys->modes[i].huang_rhys > 0.0;
    for (size_t j = 0; j < gp->n; j++) {
        const vg_fft_point *f = &w->o.fp[rev ? gp->n - 1 - j : j];
        vg_multimode_rates r;
        if (!f->trusted)
            return vg_error_set(&w->err, VG_ENUMERIC, "gap %g meV lies below the FFT's dynamic "
                                "range at reorganization %g meV, temperature %g K (its rate is "
                                "under 1e-12 of the row's largest, or its error above 1e-3): "
                                "use engine = sum, exact everywhere, or a narrower gap range",
                                gp->v[j], reorg, T);
        memset(&r, 0, sizeof r);
        r.ln_f_total = r.ln_f_elastic = r.ln_f_assisted = f->ln_f;
        r.coupling_zero = V == 0.0;
        r.assisted_zero = !any;
        r.ln_k_total = r.ln_k_elastic = r.ln_k_assisted = r.coupling_zero ? -HUGE_VAL
                                                                           : f->ln_f + lp;
        odor_record(&r, gp->v[j], reorg, V, T, &w->o.rates[k][j]);
        w->o.rates[k][j].assisted_fraction = 0.0;
    }
    return VG_OK;
}

/* Every track's rates over the whole gap axis of one row. */
/* engine = sum: track k over the row by the lattice sum. */
static vg_status sum_row(worker *w, const vg_config *cfg, const vg_multimode_system *sys, int k,
                         double reorg, double V, double T)
{
    const vg_param *gp = &cfg->param[VG_P_GAP];
    vg_status st = vg_multimode_eval(w->o.mw, sys, reorg, T, V, cfg->tolerance, gp->n, gp->v,
                                     w->o.mm, &w->err);

    for (size_t j = 0; st == VG_OK && j < gp->n; j++)
        odor_record(&w->o.mm[j], gp->v[j], reorg, V, T, &w->o.rates[k][j]);
    return st;
}

static vg_status odor_row(worker *w, const vg_config *cfg, double reorg, double V, double T)
{
    const vg_param *gp = &cfg->param[VG_P_GAP];
    vg_multimode_system sys[ODOR_TRACKS];
    vg_status st = VG_OK;

    odor_systems(cfg, sys);
    for (int k = 0; k < ODOR_TRACKS && st == VG_OK; k++) {
        if (!sys[k].modes)
            continue;
        st = cfg->engine == VG_ENGINE_FFT ? fft_row(w, cfg, &sys[k], k, reorg, V, T)
                                          : sum_row(w, cfg, &sys[k], k, reorg, V, T);
        for (size_t j = 0; st == VG_OK && j < gp->n; j++)
            if (!odor_record_finite(&w->o.rates[k][j]))
                st = vg_error_set(&w->err, VG_ENUMERIC, "the many-mode engine gave a non-finite "
                                  "rate at gap %g meV, reorganization %g meV, coupling %g meV, "
                                  "temperature %g K", gp->v[j], reorg, V, T);
        if (st != VG_OK) {
            vg_error_prefix(&w->err, "[odorant.%s]: ", track_name(cfg, k));
            if (k == 1)
                vg_error_prefix(&w->err, "heavy isotopologue of ");
        }
    }
    return st;
}

/* A segment of a sweep with [model] odorant (see segment). */
static void odor_segment(worker *w, const vg_grid *g, const size_t idx[VG_NPARAM], size_t n,
                         size_t flat, double *out)
{
    const vg_config *cfg = g->cfg;
    size_t row_key = (idx[VG_P_TEMPERATURE] * cfg->param[VG_P_COUPLING].n + idx[VG_P_COUPLING])
                     * cfg->param[VG_P_REORG].n + idx[VG_P_REORG];
    const vg_odorant *od = vg_config_mapped(cfg);
    vg_status st = VG_OK;
    size_t j0 = idx[VG_P_GAP];
    double mode, t1;

    if (already_failed(w, n, flat, out))
        return;

    if (w->o.key != row_key) {
        st = odor_row(w, cfg, cfg->param[VG_P_REORG].v[idx[VG_P_REORG]],
                      cfg->param[VG_P_COUPLING].v[idx[VG_P_COUPLING]],
                      cfg->param[VG_P_TEMPERATURE].v[idx[VG_P_TEMPERATURE]]);
        w->o.key = st == VG_OK ? row_key : SIZE_MAX;
    }
    vg_valid_modes_inputs(od->light->mode, od->light->n, cfg->validity.t1_ps, &mode, &t1);
    for (size_t j = 0; j < n; j++, out += VG_N_METRICS) {
        double valid[2] = {VG_FILL, VG_FILL};
        if (st == VG_OK)
            st = point_valid(cfg, idx, mode, t1, &w->o.rates[0][j0 + j], valid, &w->err);
        if (st != VG_OK) {
            fail(w, st, flat + j, out);
            w->o.key = SIZE_MAX;
            continue;
        }
        vg_metrics_compute_full(&w->o.rates[0][j0 + j],
                                cfg->isotope.on ? &w->o.rates[1][j0 + j] : NULL,
                                vg_config_against(cfg) ? &w->o.rates[2][j0 + j] : NULL,
                                valid[0], valid[1], &cfg->feasibility, out);
    }
}

/* The many-mode workspace of every thread, sized for the largest row of
 * the grid: vg_multimode_need at every (reorganization, temperature) pair
 * over the whole gap axis, for every track. */
static vg_status odor_alloc(worker *ws, int nthreads, const vg_grid *g, vg_error *err)
{
    const vg_config *cfg = g->cfg;
    const vg_param *gp = &cfg->param[VG_P_GAP], *lp = &cfg->param[VG_P_REORG];
    const vg_param *tp = &cfg->param[VG_P_TEMPERATURE];
    vg_multimode_system sys[ODOR_TRACKS];
    size_t points = 0, max_modes = 1, fft_n = 0;
    double work = 0.0, glo, ghi;
    int fft = cfg->engine == VG_ENGINE_FFT;
    vg_status st = VG_OK;

    odor_systems(cfg, sys);
    minmax(gp, &glo, &ghi);
    for (int k = 0; k < ODOR_TRACKS; k++) {
        if (!sys[k].modes)
            continue;
        max_modes = sys[k].n_modes > max_modes ? sys[k].n_modes : max_modes;
        for (size_t a = 0; a < lp->n && st == VG_OK; a++)
            for (size_t b = 0; b < tp->n && st == VG_OK; b++) {
                size_t pk = 0;
                double wk = 0.0;
                vg_fft_plan plan;
                st = vg_multimode_check(&sys[k], lp->v[a], tp->v[b], err);
                if (st == VG_OK && fft) {
                    st = fft_plan(cfg, &sys[k], lp->v[a], tp->v[b], &plan, err);
                    fft_n = st == VG_OK && plan.n > fft_n ? plan.n : fft_n;
                } else if (st == VG_OK) {
                    st = vg_multimode_need(&sys[k], lp->v[a], tp->v[b], glo, ghi, gp->n,
                                           cfg->tolerance, &pk, &wk, err);
                }
                points = pk > points ? pk : points;
                work = wk > work ? wk : work;
            }
        if (st != VG_OK) {
            vg_error_prefix(err, "[odorant.%s]: ",
                            track_name(cfg, k));
            return st;
        }
    }
    for (int t = 0; t < nthreads && st == VG_OK; t++) {
        odor_rows *o = &ws[t].o;
        o->key = SIZE_MAX;
        o->fft_n = fft_n;
        if (fft) {
            st = vg_fft_alloc(fft_n, &o->fw, err);
            o->fp = st == VG_OK ? malloc(gp->n * sizeof *o->fp) : NULL;
            if (st == VG_OK && !o->fp)
                st = vg_error_set(err, VG_ENOMEM, "out of memory for the FFT rows");
        } else {
            st = vg_multimode_alloc(max_modes, 2 * points + 64, 4.0 * work + 1e6, &o->mw, err);
        }
        o->mm = st == VG_OK ? malloc(gp->n * sizeof *o->mm) : NULL;
        for (int k = 0; k < ODOR_TRACKS && st == VG_OK; k++)
            o->rates[k] = malloc(gp->n * sizeof *o->rates[k]);
        if (st == VG_OK && (!o->mm || !o->rates[0] || !o->rates[1] || !o->rates[2]))
            st = vg_error_set(err, VG_ENOMEM, "out of memory for the many-mode rows");
    }
    return st;
}

static void odor_free(odor_rows *o)
{
    vg_multimode_free(o->mw);
    vg_fft_free(o->fw);
    free(o->fp);
    free(o->mm);
    for (int k = 0; k < ODOR_TRACKS; k++)
        free(o->rates[k]);
}

/* Points are dealt to threads in blocks of BLOCK rather than one half of
 * the chunk each, because cost varies along the grid (larger
 * reorganization, more channels); each point is still computed alone, so
 * the result does not depend on the split. */
static void compute_chunk(worker *ws, int nthreads, const vg_grid *g, const reach *r,
                          size_t start, size_t count, double *metrics)
{
    long b, nb = (long)((count + BLOCK - 1) / BLOCK);
    int gap_fastest = g->naxes > 0 && g->axis[g->naxes - 1] == VG_P_GAP;

#ifdef _OPENMP
#pragma omp parallel for schedule(static, 1) num_threads(nthreads)
#endif
    for (b = 0; b < nb; b++) {
#ifdef _OPENMP
        worker *w = &ws[omp_get_thread_num()];
#else
        worker *w = &ws[0];
#endif
        size_t i = (size_t)b * BLOCK, i1 = i + BLOCK < count ? i + BLOCK : count;
        odometer o;

        odo_start(&o, g, start + i);
        while (i < i1) {
            size_t idx[VG_NPARAM], n = 1;
            odo_index(&o, idx);
            if (gap_fastest) {
                n = g->dim[g->naxes - 1] - o.c[g->naxes - 1];
                n = n < i1 - i ? n : i1 - i;
            }
            if (vg_config_mapped(g->cfg))
                odor_segment(w, g, idx, n, start + i, metrics + i * VG_N_METRICS);
            else
                segment(w, g, r, idx, n, start + i, metrics + i * VG_N_METRICS);
            i += n;
            odo_advance(&o, n);
        }
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
        for (int k = 0; k < 2; k++) {
            free(ws[t].t[k].tab);
            free(ws[t].t[k].set);
            free(ws[t].t[k].q);
            free(ws[t].t[k].qi);
            free(ws[t].t[k].qgen);
        }
        odor_free(&ws[t].o);
    }
    free(ws);
}

static worker *workers_alloc(int nthreads)
{
    worker *ws = calloc((size_t)nthreads, sizeof *ws);

    if (!ws)
        return NULL;
    for (int t = 0; t < nthreads; t++) {
        int ok = 1;
        ws[t].key = ws[t].row_key = SIZE_MAX;
        for (int k = 0; k < 2; k++) {
            track *tr = &ws[t].t[k];
            tr->tab = malloc(TABLE_MAX * sizeof *tr->tab);
            tr->set = malloc(TABLE_MAX);
            tr->q = malloc(TABLE_MAX * sizeof *tr->q);
            tr->qi = malloc(TABLE_MAX * sizeof *tr->qi);
            tr->qgen = malloc(TABLE_MAX * sizeof *tr->qgen);
            ok = ok && tr->tab && tr->set && tr->q && tr->qi && tr->qgen;
        }
        if (!ok) {
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
    /* every metric starts as fill: a single-mode sweep without isotope,
     * conditions or criteria leaves those columns as they are
     * (vg_metrics_compute_run's fill_kept), and every other path writes
     * all of them */
    for (size_t i = 0; i < chunk * VG_N_METRICS; i++)
        metrics[i] = VG_FILL;
    st = vg_config_mapped(g->cfg) ? odor_alloc(ws, nthreads, g, err) : VG_OK;
    if (st == VG_OK)
        st = run_chunks(g, opts, ws, nthreads, metrics, chunk, sink, ctx, err);
out_free:
    free(metrics);
    workers_free(ws, nthreads);
    return st;
}
