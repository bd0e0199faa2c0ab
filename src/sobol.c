/*
 * Sobol' sample design and sensitivity indices (see vg_sobol.h for the
 * estimators and their sources).
 *
 * The statistic is formed in one pass over the rows, so that the point
 * estimate and every bootstrap replicate read the data once in a fixed
 * order: the outputs are first shifted by their pooled mean c, then per
 * row j with a = fA_j - c, b = fB_j - c and d_i = fAB_ij - fA_j, a and b
 * enter a running mean and sum of squared deviations (Welford's update,
 * Technometrics 4, 419, 1962: no cancellation, and exactly 0 for constant
 * outputs), and per parameter the sums of d_i, b d_i and d_i^2.  A
 * replicate draws its n rows with replacement and recomputes the pooled
 * mean, the variance and both estimators from its own sums.
 * Single-threaded, so the result is the same bits for a given seed.
 */
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_qrng.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_statistics_double.h>

#include "vg_sobol.h"

/* ------------------------------------------------------------ sample --- */

static vg_status check_design(size_t n, size_t k, vg_error *err)
{
    if (k == 0)
        return vg_error_set(err, VG_ECONFIG, "at least 1 uncertain parameter is needed");
    if (k > VG_SOBOL_MAX_PARAMS)
        return vg_error_set(err, VG_ECONFIG, "at most %d uncertain parameters (Sobol sequence "
                            "limited to %d dimensions; got %zu)", VG_SOBOL_MAX_PARAMS,
                            VG_SOBOL_MAX_DIM, k);
    if (n == 0 || n > VG_SOBOL_MAX_POINTS)
        return vg_error_set(err, VG_ECONFIG, "the number of samples must be between 1 and %lu "
                            "(Sobol sequence limited to 2^30 - 1 points; got %zu)",
                            VG_SOBOL_MAX_POINTS, n);
    return VG_OK;
}

/* Point j of the sequence into row j of A and B. */
static vg_status split_point(const double *x, size_t j, size_t k, double *A, double *B,
                             vg_error *err)
{
    for (size_t i = 0; i < 2 * k; i++)
        if (!(x[i] > 0.0 && x[i] < 1.0))
            return vg_error_set(err, VG_ENUMERIC, "Sobol point %zu coordinate %zu is %g, not "
                                "inside (0, 1)", j, i, x[i]);
    for (size_t i = 0; i < k; i++) {
        A[j * k + i] = x[i];
        B[j * k + i] = x[k + i];
    }
    return VG_OK;
}

vg_status vg_sobol_sample(size_t n, size_t k, double *A, double *B, vg_error *err)
{
    double x[VG_SOBOL_MAX_DIM];
    gsl_qrng *q;
    vg_status st = check_design(n, k, err);

    if (st != VG_OK)
        return st;
    q = gsl_qrng_alloc(gsl_qrng_sobol, (unsigned)(2 * k));
    if (!q)
        return vg_error_set(err, VG_ENOMEM, "out of memory for the Sobol generator");
    for (size_t j = 0; j < n && st == VG_OK; j++) {
        int gs = gsl_qrng_get(q, x);

        if (gs != GSL_SUCCESS)
            st = vg_error_set(err, VG_ENUMERIC, "Sobol generator failed at point %zu: %s", j,
                              gsl_strerror(gs));
        else
            st = split_point(x, j, k, A, B, err);
    }
    gsl_qrng_free(q);
    return st;
}

/* ----------------------------------------------------------- indices --- */

size_t vg_sobol_work_size(size_t k, size_t nboot)
{
    if (nboot > (SIZE_MAX - 3) / 2 || (k != 0 && 3 + 2 * nboot > SIZE_MAX / k))
        return 0;
    return k * (3 + 2 * nboot);
}

static vg_status check_run(size_t n, size_t k, size_t nboot, double level, vg_error *err)
{
    double need;

    if (n < 2)
        return vg_error_set(err, VG_ECONFIG, "at least 2 samples are needed (got %zu)", n);
    if (k == 0)
        return vg_error_set(err, VG_ECONFIG, "at least 1 uncertain parameter is needed");
    if (n - 1 > 0xffffffffUL) /* gsl_rng_uniform_int with mt19937 draws below 2^32 */
        return vg_error_set(err, VG_ECONFIG, "at most 4294967296 samples can be resampled "
                            "(got %zu)", n);
    if (!(level > 0.0 && level < 1.0))
        return vg_error_set(err, VG_ECONFIG, "the confidence level must be between 0 and 1, "
                            "exclusive (got %g)", level);
    need = ceil(2.0 / (1.0 - level));
    if ((double)nboot < need)
        return vg_error_set(err, VG_ECONFIG, "at least %.0f bootstrap resamples are needed for "
                            "a %g confidence level (got %zu)", need, level, nboot);
    return VG_OK;
}

/* Every output finite; their pooled mean into *c and largest |f| into
 * *scale. */
static vg_status check_outputs(size_t n, size_t k, const double *fA, const double *fB,
                               const double *fAB, double *c, double *scale, vg_error *err)
{
    double sum = 0.0, big = 0.0;

    for (size_t j = 0; j < n; j++) {
        if (!isfinite(fA[j]))
            return vg_error_set(err, VG_ENUMERIC, "model output fA[%zu] is not finite (got %g)",
                                j, fA[j]);
        if (!isfinite(fB[j]))
            return vg_error_set(err, VG_ENUMERIC, "model output fB[%zu] is not finite (got %g)",
                                j, fB[j]);
        sum += fA[j] / (double)n + fB[j] / (double)n;
        big = fmax(big, fmax(fabs(fA[j]), fabs(fB[j])));
    }
    for (size_t i = 0; i < k; i++)
        for (size_t j = 0; j < n; j++)
            if (!isfinite(fAB[i * n + j]))
                return vg_error_set(err, VG_ENUMERIC, "model output fAB[%zu] (row %zu with "
                                    "parameter %zu from B) is not finite (got %g)",
                                    i * n + j, j, i, fAB[i * n + j]);
    *c = 0.5 * sum;
    *scale = big;
    return VG_OK;
}

/* Running sums of one pass; acc holds 3 per parameter: d, b d, d^2. */
typedef struct {
    double count, mean, m2; /* pooled a and b: how many, mean, sum of squared deviations */
    double *acc;
} sums;

/* Welford's update of count, mean and m2 with x. */
static void pool(sums *s, double x)
{
    double dev = x - s->mean;

    s->count += 1.0;
    s->mean += dev / s->count;
    s->m2 += dev * (x - s->mean);
}

/* One pass over n rows: row j itself (rng NULL) or n rows drawn with
 * replacement. */
static void accumulate(size_t n, size_t k, const double *fA, const double *fB,
                       const double *fAB, double c, gsl_rng *rng, sums *s)
{
    s->count = s->mean = s->m2 = 0.0;
    for (size_t i = 0; i < 3 * k; i++)
        s->acc[i] = 0.0;
    for (size_t j = 0; j < n; j++) {
        size_t r = rng ? (size_t)gsl_rng_uniform_int(rng, (unsigned long)n) : j;
        double a = fA[r] - c, b = fB[r] - c;

        pool(s, a);
        pool(s, b);
        for (size_t i = 0; i < k; i++) {
            double d = fAB[i * n + r] - fA[r];
            double *t = s->acc + 3 * i;

            t[0] += d;
            t[1] += b * d;
            t[2] += d * d;
        }
    }
}

/* The indices from the sums of the sample or resample named by what into
 * s1[i * stride], st[i * stride]. */
static vg_status indices_from(const sums *s, size_t n, size_t k, double scale, const char *what,
                              double *s1, double *st, size_t stride, vg_error *err)
{
    double nn = (double)n, m = s->mean, v = s->m2 / (2.0 * nn);
    double floor_sd = DBL_EPSILON * scale;

    if (!isfinite(v))
        return vg_error_set(err, VG_ENUMERIC, "model outputs too large: their variance "
                            "overflows (largest |f| %g)", scale);
    if (!(v > floor_sd * floor_sd))
        return vg_error_set(err, VG_ENUMERIC, "model output is constant over the %s "
                            "(standard deviation %g): sensitivity indices are undefined",
                            what, sqrt(fmax(v, 0.0)));
    for (size_t i = 0; i < k; i++) {
        const double *t = s->acc + 3 * i;

        s1[i * stride] = (t[1] - m * t[0]) / nn / v;
        st[i * stride] = t[2] / (2.0 * nn) / v;
        if (!isfinite(s1[i * stride]) || !isfinite(st[i * stride]))
            return vg_error_set(err, VG_ENUMERIC, "model outputs too large: the index sums "
                                "of parameter %zu overflow", i);
    }
    return VG_OK;
}

static int cmp_double(const void *p, const void *q)
{
    double x = *(const double *)p, y = *(const double *)q;

    return (x > y) - (x < y);
}

/* The percentile interval of nboot replicates (sorted in place). */
static void percentile(double *rep, size_t nboot, double level, double *lo, double *hi)
{
    double tail = 0.5 * (1.0 - level);

    qsort(rep, nboot, sizeof *rep, cmp_double);
    *lo = gsl_stats_quantile_from_sorted_data(rep, 1, nboot, tail);
    *hi = gsl_stats_quantile_from_sorted_data(rep, 1, nboot, 1.0 - tail);
}

/* The replicates: S1 of parameter i in rep[2 i nboot + b], ST in
 * rep[(2 i + 1) nboot + b]. */
static vg_status bootstrap(size_t n, size_t k, const double *fA, const double *fB,
                           const double *fAB, double c, double scale, size_t nboot,
                           unsigned long seed, sums *s, double *rep, vg_error *err)
{
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    vg_status st = VG_OK;

    if (!rng)
        return vg_error_set(err, VG_ENOMEM, "out of memory for the bootstrap generator");
    gsl_rng_set(rng, seed);
    for (size_t b = 0; b < nboot && st == VG_OK; b++) {
        accumulate(n, k, fA, fB, fAB, c, rng, s);
        st = indices_from(s, n, k, scale, "bootstrap resample", rep + b, rep + nboot + b,
                          2 * nboot, err);
    }
    gsl_rng_free(rng);
    return st;
}

vg_status vg_sobol_indices(size_t n, size_t k, const double *fA, const double *fB,
                           const double *fAB, size_t nboot, unsigned long seed, double level,
                           vg_sobol_result *out, double *work, vg_error *err)
{
    double c = 0.0, scale = 0.0, *rep = work + 3 * k;
    sums s = {0.0, 0.0, 0.0, work};
    vg_status st = check_run(n, k, nboot, level, err);

    if (st == VG_OK)
        st = check_outputs(n, k, fA, fB, fAB, &c, &scale, err);
    if (st != VG_OK)
        return st;
    /* the point estimates pass through the first replicate slots */
    accumulate(n, k, fA, fB, fAB, c, NULL, &s);
    st = indices_from(&s, n, k, scale, "sample", rep, rep + nboot, 2 * nboot, err);
    if (st != VG_OK)
        return st;
    for (size_t i = 0; i < k; i++) {
        out[i].S1 = rep[2 * i * nboot];
        out[i].ST = rep[(2 * i + 1) * nboot];
    }
    st = bootstrap(n, k, fA, fB, fAB, c, scale, nboot, seed, &s, rep, err);
    for (size_t i = 0; i < k && st == VG_OK; i++) {
        percentile(rep + 2 * i * nboot, nboot, level, &out[i].S1_lo, &out[i].S1_hi);
        percentile(rep + (2 * i + 1) * nboot, nboot, level, &out[i].ST_lo, &out[i].ST_hi);
    }
    return st;
}
