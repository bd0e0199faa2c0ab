/*
 * Uncertainty analyses (see vg_uncertainty.h): the priors of a config as a
 * sampling space, the Sobol' design run through a model, and the Monte
 * Carlo probability of the feasibility conditions over a plane of cells.
 *
 * Both analyses are a list of independent slots (a model run of the Sobol'
 * design; a cell of the plane with all its draws) handed to run_slots,
 * which spreads them over threads.  Each slot writes only its own output;
 * when slots fail, the one reported is the lowest-numbered: a slot is
 * skipped only when a lower one has already failed, so every slot below
 * the first failure runs and the report does not depend on the threads.
 */
#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_rng.h>

#ifdef _OPENMP
#include <omp.h>
#endif

#include "vg_evaluate.h"
#include "vg_grid.h"
#include "vg_uncertainty.h"

/* Slots a thread takes at a time, dealt out dynamically as runs differ in
 * cost (the channel window grows with S and T): a few model runs of the
 * Sobol design, one cell (ndraws runs) of the probability map. */
#define SOBOL_BATCH 16
#define CELL_BATCH 1

/* ------------------------------------------------------------ space --- */

void vg_unc_domain(vg_param_id p, double *lo, double *hi)
{
    /* docs/config.md, [parameters], "accepted values" */
    static const double dom[VG_NPARAM][2] = {
        [VG_P_GAP] = {-3000.0, 3000.0},   [VG_P_REORG] = {0.1, 3000.0},
        [VG_P_COUPLING] = {0.0, 1000.0},  [VG_P_HUANG_RHYS] = {0.0, 50.0},
        [VG_P_MODE] = {1.0, 1000.0},      [VG_P_TEMPERATURE] = {1.0, 5000.0},
    };

    *lo = dom[p][0];
    *hi = dom[p][1];
}

/* "FILE:LINE: " or "--set uncertainty.KEY: " for the prior of p. */
static void prior_where(const vg_config *cfg, vg_param_id p, char *buf, size_t len)
{
    int line = cfg->uncertainty.line[p];

    if (line < 0)
        snprintf(buf, len, "--set uncertainty.%s: ", vg_param_get(p)->key);
    else
        snprintf(buf, len, "%s:%d: ", cfg->path ? cfg->path : "config", line);
}

vg_status vg_unc_space_init(vg_unc_space *sp, const vg_config *cfg, vg_error *err)
{
    memset(sp, 0, sizeof *sp);
    sp->cfg = cfg;
    for (int p = 0; p < VG_NPARAM; p++) {
        const vg_param *q = &cfg->param[p];

        sp->base[p] = q->n > 0 && q->v ? q->v[0] : 0.0;
        if (!cfg->uncertainty.has[p])
            continue;
        if (q->n > 1) {
            char where[VG_ERROR_MAX / 2];

            prior_where(cfg, (vg_param_id)p, where, sizeof where);
            return vg_error_set(err, VG_ECONFIG, "%s'%s' has a prior and is also an axis of "
                                "[parameters] (%zu values); give it one or the other",
                                where, vg_param_get((vg_param_id)p)->key, q->n);
        }
        sp->id[sp->k] = (vg_param_id)p;
        sp->prior[sp->k] = cfg->uncertainty.prior[p];
        vg_unc_domain((vg_param_id)p, &sp->lo[sp->k], &sp->hi[sp->k]);
        sp->k++;
    }
    if (sp->k == 0)
        return vg_error_set(err, VG_ECONFIG, "%s: 'uncertainty' needs a prior for at least one "
                            "parameter in [uncertainty], as in 'reorganization = lognormal "
                            "40 meV, 0.5'", cfg->path ? cfg->path : "config");
    return VG_OK;
}

/* The k uncertain values of unit-cube point u into x (which may be u). */
static void map_row(const vg_unc_space *sp, const double *u, double *x)
{
    for (size_t i = 0; i < sp->k; i++)
        x[i] = vg_prior_quantile_truncated(&sp->prior[i], u[i], sp->lo[i], sp->hi[i]);
}

void vg_unc_map(const vg_unc_space *sp, const double *u, double v[VG_NPARAM])
{
    double x[VG_NPARAM];

    map_row(sp, u, x);
    memcpy(v, sp->base, sizeof sp->base);
    for (size_t i = 0; i < sp->k; i++)
        v[sp->id[i]] = x[i];
}

void vg_unc_describe(const vg_unc_space *sp, const double v[VG_NPARAM], char *buf, size_t len)
{
    size_t used = 0;

    buf[0] = '\0';
    for (size_t i = 0; i < sp->k && used < len; i++) {
        const vg_param_info *pi = vg_param_get(sp->id[i]);
        int unit = strcmp(pi->unit, "1") != 0;

        used += (size_t)snprintf(buf + used, len - used, "%s%s = %.10g%s%s", i ? ", " : "",
                                 pi->key, v[sp->id[i]], unit ? " " : "", unit ? pi->unit : "");
    }
}

/* ----------------------------------------------------------- models --- */

static vg_status eval_metric(const void *ctx, void *ws, const double v[VG_NPARAM], double *out,
                             vg_error *err)
{
    const vg_unc_metric_ctx *c = ctx;
    vg_eval_result *res = ws;
    vg_status st = vg_evaluate(c->cfg, v, res, err);

    if (st == VG_OK)
        *out = res->metric[c->metric];
    return st;
}

vg_unc_model vg_unc_metric_model(const vg_unc_metric_ctx *ctx)
{
    vg_unc_model m = {eval_metric, ctx, sizeof(vg_eval_result)};

    return m;
}

/* ------------------------------------------------------------ slots --- */

/* One slot: its outputs and nothing else, with the thread's workspace. */
typedef vg_status (*slot_fn)(const void *job, void *ws, size_t s, vg_error *err);

static int thread_count(int threads)
{
#ifdef _OPENMP
    return threads > 0 ? threads : omp_get_max_threads();
#else
    (void)threads;
    return 1;
#endif
}

static int thread_id(void)
{
#ifdef _OPENMP
    return omp_get_thread_num();
#else
    return 0;
#endif
}

/* Run slots 0 .. nslots-1; on failure, the lowest failing slot's status
 * and message.  Per-thread workspaces of ws_size bytes are allocated here,
 * before the parallel region. */
static vg_status run_slots(size_t nslots, int batch, slot_fn fn, const void *job,
                           size_t ws_size, int threads, vg_error *err)
{
    int nt = thread_count(threads);
    size_t stride = (ws_size + sizeof(max_align_t) - 1) / sizeof(max_align_t);
    max_align_t *ws = calloc((size_t)nt * (stride ? stride : 1), sizeof *ws);
    size_t first = nslots; /* lowest failing slot so far */
    vg_status first_st = VG_OK;

    (void)batch; /* without OpenMP */
    if (!ws)
        return vg_error_set(err, VG_ENOMEM, "out of memory for %d model workspaces", nt);
#ifdef _OPENMP
#pragma omp parallel for schedule(dynamic, batch) num_threads(nt)
#endif
    for (size_t s = 0; s < nslots; s++) {
        vg_error e;
        size_t low;
        vg_status st;

#ifdef _OPENMP
#pragma omp atomic read
#endif
        low = first;
        if (s > low)
            continue;
        e.status = VG_OK;
        e.msg[0] = '\0';
        st = fn(job, ws + (size_t)thread_id() * stride, s, &e);
        if (st == VG_OK)
            continue;
#ifdef _OPENMP
#pragma omp critical
#endif
        if (s < first) {
            first_st = st;
            e.status = st;
            if (err)
                *err = e;
#ifdef _OPENMP
#pragma omp atomic write
#endif
            first = s;
        }
    }
    free(ws);
    return first_st;
}

/* ------------------------------------------------------------ Sobol --- */

typedef struct {
    const vg_unc_space *sp;
    const vg_unc_model *model;
    size_t n;
    const double *A, *B;  /* n x k mapped parameter values */
    double *f;            /* n (k + 2) model values: A's, B's, A_B^(i)'s */
} sobol_job;

/* The parameter set of design run s: row s % n of A (of B for s in
 * [n, 2n)); for A_B^(i), column i from B. */
static void design_point(const sobol_job *jb, size_t s, double v[VG_NPARAM])
{
    const vg_unc_space *sp = jb->sp;
    size_t k = sp->k, j = s % jb->n, block = s / jb->n;
    const double *row = (block == 1 ? jb->B : jb->A) + j * k;

    memcpy(v, sp->base, sizeof sp->base);
    for (size_t i = 0; i < k; i++)
        v[sp->id[i]] = row[i];
    if (block >= 2)
        v[sp->id[block - 2]] = jb->B[j * k + block - 2];
}

/* "A row 3", "B row 3", "A_B^(2) row 3" (1-based parameter number). */
static void run_name(const sobol_job *jb, size_t s, char *buf, size_t len)
{
    size_t j = s % jb->n, block = s / jb->n;

    if (block < 2)
        snprintf(buf, len, "%s row %zu", block ? "B" : "A", j);
    else
        snprintf(buf, len, "A_B^(%zu) row %zu", block - 1, j);
}

static vg_status sobol_slot(const void *job, void *ws, size_t s, vg_error *err)
{
    const sobol_job *jb = job;
    double v[VG_NPARAM], y = 0.0;
    char name[64], vals[VG_ERROR_MAX / 2];
    vg_status st;

    design_point(jb, s, v);
    st = jb->model->eval(jb->model->ctx, ws, v, &y, err);
    if (st == VG_OK && y != VG_FILL && isfinite(y)) {
        jb->f[s] = y;
        return VG_OK;
    }
    run_name(jb, s, name, sizeof name);
    vg_unc_describe(jb->sp, v, vals, sizeof vals);
    if (st != VG_OK) {
        vg_error_prefix(err, "model run %zu (%s; %s): ", s, name, vals);
        return st;
    }
    if (y == VG_FILL)
        return vg_error_set(err, VG_ECONFIG, "no value at model run %zu (%s; %s): a rate is "
                            "exactly zero there, and the indices need a value at every run",
                            s, name, vals);
    return vg_error_set(err, VG_ENUMERIC, "model value %g is not finite at model run %zu "
                        "(%s; %s)", y, s, name, vals);
}

/* Mean and standard deviation of the 2n values on A and B; VG_ECONFIG when
 * they are all equal (the indices are then undefined). */
static vg_status sobol_moments(const double *f, size_t n2, vg_unc_sobol_out *out, vg_error *err)
{
    double mean = 0.0, m2 = 0.0;
    int constant = 1;

    for (size_t j = 0; j < n2; j++) { /* Welford, Technometrics 4, 419 (1962) */
        double d = f[j] - mean;

        mean += d / (double)(j + 1);
        m2 += d * (f[j] - mean);
        constant = constant && f[j] == f[0];
    }
    if (constant)
        return vg_error_set(err, VG_ECONFIG, "the model has the same value %.10g at every "
                            "sample of the priors, so its sensitivity indices are undefined",
                            f[0]);
    out->mean = mean;
    out->sd = sqrt(m2 / (double)(n2 - 1));
    return VG_OK;
}

static vg_status sobol_run(const vg_unc_space *sp, const vg_unc_model *model,
                           const vg_unc_sobol_opts *o, sobol_job *jb, double *A, double *B,
                           double *work, vg_unc_sobol_out *out, vg_error *err)
{
    size_t n = o->n, k = sp->k;
    vg_status st = vg_sobol_sample(n, k, A, B, err);

    for (size_t j = 0; st == VG_OK && j < n; j++) {
        map_row(sp, A + j * k, A + j * k);
        map_row(sp, B + j * k, B + j * k);
    }
    if (st == VG_OK)
        st = run_slots(out->runs, SOBOL_BATCH, sobol_slot, jb, model->ws_size, o->threads, err);
    if (st == VG_OK)
        st = sobol_moments(jb->f, 2 * n, out, err);
    if (st == VG_OK)
        st = vg_sobol_indices(n, k, jb->f, jb->f + n, jb->f + 2 * n, o->nboot, o->seed,
                              o->level, out->idx, work, err);
    return st;
}

vg_status vg_unc_sobol(const vg_unc_space *sp, const vg_unc_model *model,
                       const vg_unc_sobol_opts *opts, vg_unc_sobol_out *out, vg_error *err)
{
    size_t n = opts->n, k = sp->k, nwork = vg_sobol_work_size(k, opts->nboot);
    double *A = NULL, *B = NULL, *work = NULL;
    sobol_job jb = {sp, model, n, NULL, NULL, NULL};
    vg_status st;

    memset(out, 0, sizeof *out);
    if (n < 2 || n > VG_SOBOL_MAX_POINTS)
        return vg_error_set(err, VG_ECONFIG, "the Sobol design needs between 2 and %lu base "
                            "samples (got %zu)", VG_SOBOL_MAX_POINTS, n);
    out->runs = n * (k + 2); /* below 2^30 * 8: no overflow */
    A = malloc(n * k * sizeof *A);
    B = malloc(n * k * sizeof *B);
    jb.f = malloc(out->runs * sizeof *jb.f);
    work = nwork ? malloc(nwork * sizeof *work) : NULL;
    jb.A = A;
    jb.B = B;
    if (!A || !B || !jb.f || !work)
        st = vg_error_set(err, VG_ENOMEM, "out of memory for a Sobol design of %zu model "
                          "runs", out->runs);
    else
        st = sobol_run(sp, model, opts, &jb, A, B, work, out, err);
    free(A);
    free(B);
    free(jb.f);
    free(work);
    return st;
}

/* ------------------------------------------------------ probability --- */

vg_status vg_unc_plane_from_config(vg_unc_plane *pl, const vg_config *cfg, vg_error *err)
{
    vg_grid g;

    vg_grid_init(&g, cfg);
    memset(pl, 0, sizeof *pl);
    pl->n[0] = pl->n[1] = 1;
    if (g.naxes > 2) {
        char names[128];
        size_t used = 0;

        for (size_t a = 0; a < g.naxes && used < sizeof names; a++)
            used += (size_t)snprintf(names + used, sizeof names - used, "%s%s", a ? ", " : "",
                                     vg_param_get(g.axis[a])->key);
        return vg_error_set(err, VG_ECONFIG, "%s: the probability map takes at most two axes "
                            "in [parameters] (got %zu: %s); make the others single values or "
                            "give them priors", cfg->path ? cfg->path : "config", g.naxes,
                            names);
    }
    pl->naxes = g.naxes;
    for (size_t a = 0; a < g.naxes; a++) { /* grid order, slowest first */
        pl->p[a] = g.axis[a];
        pl->n[a] = g.dim[a];
        pl->v[a] = cfg->param[g.axis[a]].v;
    }
    return VG_OK;
}

vg_status vg_unc_draws(const vg_unc_space *sp, size_t ndraws, unsigned long seed,
                       double *draws, vg_error *err)
{
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);

    if (!rng)
        return vg_error_set(err, VG_ENOMEM, "out of memory for the random number generator");
    gsl_rng_set(rng, seed);
    for (size_t j = 0; j < ndraws; j++) {
        double *row = draws + j * sp->k;

        for (size_t i = 0; i < sp->k; i++)
            row[i] = gsl_rng_uniform_pos(rng); /* in (0, 1): safe for an inverse CDF */
        map_row(sp, row, row);
    }
    gsl_rng_free(rng);
    return VG_OK;
}

typedef struct {
    const vg_unc_space *sp;
    const vg_unc_plane *pl;
    const vg_unc_model *model;
    size_t ndraws;
    const double *draws;
    double *prob, *se;
} prob_job;

/* "reorganization = 40 meV, gap = 150 meV" of cell c. */
static void cell_name(const prob_job *jb, size_t c, char *buf, size_t len)
{
    size_t idx[2] = {c / jb->pl->n[1], c % jb->pl->n[1]}, used = 0;

    snprintf(buf, len, "the single cell");
    for (size_t a = 0; a < jb->pl->naxes && used < len; a++) {
        const vg_param_info *pi = vg_param_get(jb->pl->p[a]);
        int unit = strcmp(pi->unit, "1") != 0;

        used += (size_t)snprintf(buf + used, len - used, "%s%s = %.10g%s%s", a ? ", " : "",
                                 pi->key, jb->pl->v[a][idx[a]], unit ? " " : "",
                                 unit ? pi->unit : "");
    }
}

static vg_status prob_fail(const prob_job *jb, size_t c, size_t d, const double v[VG_NPARAM],
                           vg_status st, double y, vg_error *err)
{
    char cell[256], vals[VG_ERROR_MAX / 2];

    cell_name(jb, c, cell, sizeof cell);
    vg_unc_describe(jb->sp, v, vals, sizeof vals);
    if (st != VG_OK) {
        vg_error_prefix(err, "cell %zu (%s), draw %zu (%s): ", c, cell, d, vals);
        return st;
    }
    return vg_error_set(err, VG_ENUMERIC, "indicator model gave %g, not 0 or 1, at cell %zu "
                        "(%s), draw %zu (%s)", y, c, cell, d, vals);
}

static vg_status prob_slot(const void *job, void *ws, size_t c, vg_error *err)
{
    const prob_job *jb = job;
    const vg_unc_space *sp = jb->sp;
    size_t hits = 0, k = sp->k, idx[2] = {c / jb->pl->n[1], c % jb->pl->n[1]};
    double v[VG_NPARAM], p, nd = (double)jb->ndraws;

    memcpy(v, sp->base, sizeof sp->base);
    for (size_t a = 0; a < jb->pl->naxes; a++)
        v[jb->pl->p[a]] = jb->pl->v[a][idx[a]];
    for (size_t d = 0; d < jb->ndraws; d++) {
        double y = -1.0;
        vg_status st;

        for (size_t i = 0; i < k; i++)
            v[sp->id[i]] = jb->draws[d * k + i];
        st = jb->model->eval(jb->model->ctx, ws, v, &y, err);
        if (st != VG_OK || (y != 0.0 && y != 1.0))
            return prob_fail(jb, c, d, v, st, y, err);
        hits += y == 1.0;
    }
    p = (double)hits / nd;
    jb->prob[c] = p;
    jb->se[c] = sqrt(p * (1.0 - p) / nd);
    return VG_OK;
}

vg_status vg_unc_probability(const vg_unc_space *sp, const vg_unc_plane *pl,
                             const vg_unc_model *model, size_t ndraws, const double *draws,
                             int threads, double *prob, double *se, vg_error *err)
{
    prob_job jb = {sp, pl, model, ndraws, draws, prob, se};

    if (ndraws == 0)
        return vg_error_set(err, VG_ECONFIG, "the probability needs at least 1 draw");
    for (size_t a = 0; a < pl->naxes; a++)
        for (size_t i = 0; i < sp->k; i++)
            if (sp->id[i] == pl->p[a])
                return vg_error_set(err, VG_ECONFIG, "'%s' is an axis of the map and has a "
                                    "prior", vg_param_get(pl->p[a])->key);
    return run_slots(pl->n[0] * pl->n[1], CELL_BATCH, prob_slot, &jb, model->ws_size, threads,
                     err);
}
