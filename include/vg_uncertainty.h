/*
 * Uncertainty analyses over the priors of [uncertainty]: global sensitivity
 * (Sobol' indices of one metric, vg_sobol.h) and the probability that the
 * [feasibility] conditions hold, cell by cell over an x-y grid.
 *
 * The uncertain parameters are those with a prior; each is sampled from its
 * prior truncated to the parameter's accepted domain (docs/config.md), so
 * every parameter set handed to the model lies where the rate kernel is
 * tested.  Every other parameter keeps its value from [parameters].  A
 * parameter may not be an axis and have a prior at once.
 *
 * The model is a callback, so that the sampling and estimator glue can be
 * exercised without the rate kernel; vg_unc_metric_model wraps
 * vg_evaluate.  Model runs are spread over
 * OpenMP threads, each run writing its own slot, with one workspace per
 * thread allocated before the parallel region: results are the same bits
 * at any thread count.
 *
 * Called by the uncertainty command (src/cmd_uncertainty.c).
 */
#ifndef VG_UNCERTAINTY_H
#define VG_UNCERTAINTY_H

#include <stddef.h>
#include "vg_config.h"
#include "vg_sobol.h"
#include "vg_status.h"

/* The uncertain parameters of a config and the values of the others. */
typedef struct {
    const vg_config *cfg;          /* for messages (path) and the model */
    size_t k;                      /* number of uncertain parameters, 1 .. VG_NPARAM */
    vg_param_id id[VG_NPARAM];     /* id[i]: uncertain parameter i, in vg_param_id order */
    vg_prior prior[VG_NPARAM];     /* prior[i] of parameter id[i] */
    double lo[VG_NPARAM], hi[VG_NPARAM]; /* its accepted domain, the truncation */
    double base[VG_NPARAM];        /* per vg_param_id: the first value in [parameters]
                                      (what the parameters without a prior take) */
} vg_unc_space;

/* The accepted domain of parameter p, canonical units (docs/config.md,
 * "accepted values"). */
void vg_unc_domain(vg_param_id p, double *lo, double *hi);

/* Collect cfg's priors.  VG_ECONFIG, with the prior's location
 * ("FILE:LINE: " or "--set uncertainty.KEY: "), for a prior on an axis;
 * "FILE: " and the reason when no parameter has a prior. */
vg_status vg_unc_space_init(vg_unc_space *sp, const vg_config *cfg, vg_error *err);

/* The parameter set of one point of the unit cube: sp->base with each
 * uncertain parameter id[i] replaced by the truncated prior quantile of
 * u[i] (vg_prior_quantile_truncated). */
void vg_unc_map(const vg_unc_space *sp, const double *u, double v[VG_NPARAM]);

/* ", gap = 150 meV, reorganization = 40.5 meV": the uncertain parameters
 * of v, for messages. */
void vg_unc_describe(const vg_unc_space *sp, const double v[VG_NPARAM], char *buf,
                     size_t len);

/* ---------------------------------------------------------- models --- */

/* One model run: the value of the model at parameter set v (canonical
 * units) into *out; VG_FILL when the model has no value there.  ws is the
 * calling thread's workspace of ws_size bytes (uninitialised, suitably
 * aligned for any type).  Must be safe to call from several threads at
 * once with different ws. */
typedef vg_status (*vg_unc_eval_fn)(const void *ctx, void *ws, const double v[VG_NPARAM],
                                    double *out, vg_error *err);

typedef struct {
    vg_unc_eval_fn eval;
    const void *ctx;
    size_t ws_size;
} vg_unc_model;

/* The metric m of vg_evaluate(cfg, v) (VG_FILL where it has no value).
 * With m = VG_M_FEASIBLE and [feasibility] conditions it is the indicator
 * of the probability map: 1 where every condition holds
 * (vg_require_holds), else 0.  ctx must outlive the model. */
typedef struct {
    const vg_config *cfg;
    vg_metric_id metric;
} vg_unc_metric_ctx;

vg_unc_model vg_unc_metric_model(const vg_unc_metric_ctx *ctx);

/* ----------------------------------------------------------- Sobol --- */

typedef struct {
    size_t n;              /* base sample size: n (k + 2) model runs */
    size_t nboot;          /* bootstrap resamples */
    unsigned long seed;    /* of the bootstrap */
    double level;          /* confidence level of the intervals */
    int threads;           /* 0: OpenMP's default */
} vg_unc_sobol_opts;

typedef struct {
    vg_sobol_result idx[VG_NPARAM]; /* idx[i]: of uncertain parameter sp->id[i] */
    double mean, sd;       /* of the 2n model values on A and B (sd with divisor 2n - 1) */
    size_t runs;           /* model runs made, n (k + 2) */
} vg_unc_sobol_out;

/* The Sobol' indices of model over sp's priors: the design of
 * vg_sobol_sample mapped through vg_unc_map, the model run on A, B and
 * every A_B^(i) (vg_sobol.h), the indices and their bootstrap intervals
 * from vg_sobol_indices.
 *
 * Errors, for the first failing run in design order (A's rows, B's, then
 * A_B^(1), ...; so the same at any thread count): the model's own status
 * and message, prefixed by "run R (...)"; VG_ECONFIG when the model has no
 * value (VG_FILL) at a run, naming the run's uncertain parameters;
 * VG_ECONFIG when the model's values on A and B are all the same (indices
 * undefined); VG_ENUMERIC for a non-finite model value; and those of
 * vg_sobol_sample and vg_sobol_indices.  VG_ENOMEM. */
vg_status vg_unc_sobol(const vg_unc_space *sp, const vg_unc_model *model,
                       const vg_unc_sobol_opts *opts, vg_unc_sobol_out *out, vg_error *err);

/* ----------------------------------------------------- probability --- */

/* The cells: zero, one or two axes (parameters without a prior), the
 * first slowest; cell (i0, i1) is index i0 * n[1] + i1. */
typedef struct {
    size_t naxes;          /* 0 .. 2 */
    vg_param_id p[2];
    size_t n[2];           /* values per axis (1 for an unused one) */
    const double *v[2];    /* the values, canonical units */
} vg_unc_plane;

/* The plane of cfg's grid axes (at most two; VG_ECONFIG otherwise). */
vg_status vg_unc_plane_from_config(vg_unc_plane *pl, const vg_config *cfg, vg_error *err);

/* Uniform points of the unit cube for plain Monte Carlo: ndraws x sp->k
 * values (row-major, draws[j * k + i]) from one gsl_rng_mt19937 seeded
 * with seed (GSL maps 0 to its default 4357), each
 * gsl_rng_uniform_pos, draw after draw and parameter after parameter in
 * sp->id order; then mapped in place to parameter values through the
 * truncated priors.  VG_ENOMEM if the generator cannot be allocated. */
vg_status vg_unc_draws(const vg_unc_space *sp, size_t ndraws, unsigned long seed,
                       double *draws, vg_error *err);

/* For every cell of pl, the mean over the ndraws parameter sets of draws
 * (vg_unc_draws) of an indicator model (values 0 or 1): prob[c] = hits /
 * ndraws and its binomial standard error se[c] = sqrt(p (1 - p) / ndraws)
 * (0 where p is 0 or 1).  Every cell uses the same draws (common random
 * numbers), so differences between cells are not noise of different
 * samples.  Counts are integers, so the result does not depend on the
 * thread count.  Errors, for the first failing cell in cell order and its
 * first failing draw: the model's status and message prefixed by the cell
 * and the draw; VG_ENUMERIC for a value other than 0 or 1; VG_ECONFIG if
 * ndraws is 0 or a plane axis has a prior; VG_ENOMEM. */
vg_status vg_unc_probability(const vg_unc_space *sp, const vg_unc_plane *pl,
                             const vg_unc_model *model, size_t ndraws, const double *draws,
                             int threads, double *prob, double *se, vg_error *err);

#endif
