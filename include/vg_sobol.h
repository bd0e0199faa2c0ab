/*
 * Variance-based global sensitivity analysis: the Sobol' quasi-random
 * sample design and the first-order and total-effect Sobol' indices with
 * bootstrap confidence intervals.
 *
 * The design (Saltelli et al., Comput. Phys. Commun. 181, 259 (2010)): two
 * n x k matrices A and B of points in the unit cube, one row per model run;
 * the model is evaluated on A, on B, and on each A_B^(i), which is A with
 * its column i taken from B, n (k + 2) runs in all.  The caller maps the
 * unit-cube coordinates to parameter values (vg_prior.h), runs the model
 * and hands the outputs to vg_sobol_indices.
 *
 * Called by the uncertainty analysis (src/uncertainty.c), which runs the
 * model over the design.  vg_sobol_sample and vg_sobol_indices
 * allocate their GSL generator internally and free it before returning; no
 * I/O, no static state.
 */
#ifndef VG_SOBOL_H
#define VG_SOBOL_H

#include <stddef.h>
#include "vg_status.h"

/* GSL's Sobol' generator (gsl_qrng_sobol) has direction numbers for at most
 * 40 dimensions and does not report a larger request; the design takes two
 * dimensions per parameter. */
#define VG_SOBOL_MAX_DIM 40
#define VG_SOBOL_MAX_PARAMS (VG_SOBOL_MAX_DIM / 2)

/* GSL's generator has 30-bit direction numbers: points 1 .. 2^30 - 1. */
#define VG_SOBOL_MAX_POINTS 1073741823UL

typedef struct {
    double S1, S1_lo, S1_hi; /* first-order index, bootstrap percentile interval */
    double ST, ST_lo, ST_hi; /* total-effect index, bootstrap percentile interval */
} vg_sobol_result;

/* Fill A and B (each n x k, row-major: A[j * k + i] is parameter i of run j)
 * from one Sobol' sequence of dimension 2k: point j's first k coordinates
 * form row j of A, the next k row j of B.
 *
 * The points are taken in order from the generator's first, (1/2, ...,
 * 1/2): GSL already leaves out the sequence's initial all-zero point, and
 * nothing more is skipped (dropping further points spoils the equal
 * distribution of the first 2^m; Owen, "On dropping the first Sobol'
 * point", 2022, from memory).  Every later coordinate is a non-zero
 * multiple of 2^-30 below 1, so strictly inside (0, 1) and safe for an
 * inverse CDF; this is checked for every coordinate.
 *
 * Returns VG_OK; VG_ECONFIG if k is 0 or above VG_SOBOL_MAX_PARAMS or n is
 * 0 or above VG_SOBOL_MAX_POINTS; VG_ENOMEM; VG_ENUMERIC if the generator
 * fails or a coordinate is not inside (0, 1). */
vg_status vg_sobol_sample(size_t n, size_t k, double *A, double *B, vg_error *err);

/* Doubles of workspace vg_sobol_indices needs: k (3 + 2 nboot); 0 if that
 * does not fit in a size_t. */
size_t vg_sobol_work_size(size_t k, size_t nboot);

/* First-order and total-effect indices of each of the k parameters from
 * the model outputs fA[j], fB[j] (the runs on rows j of A and B) and
 * fAB[i * n + j] (the run on row j of A_B^(i)), into out[0 .. k-1].
 *
 * With f0 the mean and V the variance (divisor 2n) of the 2n pooled outputs
 * of A and B:
 *   S1_i = V_i / V,  V_i = (1/n) sum_j (fB_j - f0) (fAB_ij - fA_j)
 *     (Saltelli et al. 2010, Table 2, eq. (b), applied to f - f0: a constant
 *     shift leaves the indices unchanged and the estimator's expectation too,
 *     and centring keeps a large mean from inflating its variance; common
 *     practice),
 *   ST_i = V_Ti / V,  V_Ti = (1/2n) sum_j (fA_j - fAB_ij)^2  (Jansen 1999).
 * Estimates are not clipped: sampling error can put them slightly below 0
 * or above 1.
 *
 * Confidence intervals: nboot bootstrap resamples of the n rows, the whole
 * statistic recomputed on each.  One gsl_rng_mt19937 seeded with seed (GSL
 * maps seed 0 to its default 4357) draws the rows, resample after
 * resample, each row by gsl_rng_uniform_int(rng, n), so a seed gives the
 * same bits every time.  The interval is the percentile interval at the
 * given level (e.g. 0.95): the (1 - level) / 2 and (1 + level) / 2
 * quantiles of the sorted replicates (gsl_stats_quantile_from_sorted_data,
 * linear interpolation between order statistics).  nboot must be at least
 * 2 / (1 - level), so that each tail beyond the interval holds at least one
 * replicate's worth of probability.
 *
 * work: vg_sobol_work_size(k, nboot) doubles, caller-owned.  On failure
 * the contents of out are unspecified.
 *
 * Returns VG_OK; VG_ECONFIG for n < 2, k = 0, n beyond the generator's
 * range, level outside (0, 1) or too few resamples; VG_ENUMERIC for a
 * non-finite output (the message names it), outputs so large that their
 * variance overflows, or a sample or resample whose outputs are constant
 * (standard deviation at most DBL_EPSILON times the largest |f|: the
 * indices are undefined); VG_ENOMEM. */
vg_status vg_sobol_indices(size_t n, size_t k, const double *fA, const double *fB,
                           const double *fAB, size_t nboot, unsigned long seed, double level,
                           vg_sobol_result *out, double *work, vg_error *err);

#endif
