/*
 * Tests of the Sobol' design and sensitivity indices (src/sobol.c).
 *
 * References, independent of the module: the Sobol' sequence in two
 * dimensions built here from its definition (Antonov & Saleev's Gray-code
 * order; direction numbers from the primitive polynomials, Bratley & Fox,
 * ACM TOMS 14, 88, 1988) and its equidistribution properties; the
 * analytic indices of the Ishigami function (Ishigami & Homma 1990) and of
 * an additive linear model, derived in the comments from the Sobol' (1993)
 * decomposition; and the published estimators (Saltelli et al. 2010,
 * Table 2 (b); Jansen 1999) and percentile bootstrap written out again
 * here.  Tolerances are stated per check.
 */
#include <float.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_rng.h>

#include "vg_const.h"
#include "vg_sobol.h"

/* ------------------------------------------------------------ helpers --- */

static void *xcalloc(size_t n, size_t size)
{
    void *p = calloc(n, size);

    assert_non_null(p);
    return p;
}

static void assert_within(double v, double lo, double hi, const char *what)
{
    if (!(v >= lo && v <= hi))
        fail_msg("%s: %.6f outside the interval [%.6f, %.6f]", what, v, lo, hi);
}

typedef double (*model_fn)(const double *u, size_t k);

/* A design run end to end: the sample, the model on A, B and every
 * A_B^(i), the indices.  Returns the status of vg_sobol_indices. */
static vg_status run_design(size_t n, size_t k, model_fn f, size_t nboot, unsigned long seed,
                            double level, vg_sobol_result *out, vg_error *err)
{
    double *A = xcalloc(n * k, sizeof *A), *B = xcalloc(n * k, sizeof *B);
    double *fA = xcalloc(n, sizeof *fA), *fB = xcalloc(n, sizeof *fB);
    double *fAB = xcalloc(n * k, sizeof *fAB);
    double *work = xcalloc(vg_sobol_work_size(k, nboot), sizeof *work);
    double row[VG_SOBOL_MAX_PARAMS];
    vg_status st;

    assert_int_equal(vg_sobol_sample(n, k, A, B, err), VG_OK);
    for (size_t j = 0; j < n; j++) {
        fA[j] = f(A + j * k, k);
        fB[j] = f(B + j * k, k);
        for (size_t i = 0; i < k; i++) {
            memcpy(row, A + j * k, k * sizeof *row);
            row[i] = B[j * k + i];
            fAB[i * n + j] = f(row, k);
        }
    }
    st = vg_sobol_indices(n, k, fA, fB, fAB, nboot, seed, level, out, work, err);
    free(A);
    free(B);
    free(fA);
    free(fB);
    free(fAB);
    free(work);
    return st;
}

/* ---------------------------------------------------- the sequence --- */

/* The first points of the two-dimensional Sobol' sequence, 1/2 1/2,
 * 3/4 1/4, 1/4 3/4 (common knowledge, from memory), then 3/8 3/8 and
 * 7/8 7/8 as the definition below gives them; for k = 1 the first
 * coordinate is A's, the second B's.  Exact: dyadic fractions. */
static void test_first_points(void **state)
{
    static const double want_a[5] = {0.5, 0.75, 0.25, 0.375, 0.875};
    static const double want_b[5] = {0.5, 0.25, 0.75, 0.375, 0.875};
    double A[5], B[5];
    vg_error err = {VG_OK, ""};
    (void)state;
    assert_int_equal(vg_sobol_sample(5, 1, A, B, &err), VG_OK);
    for (int j = 0; j < 5; j++) {
        assert_true(A[j] == want_a[j]);
        assert_true(B[j] == want_b[j]);
    }
}

#define BITS 30 /* the generator's resolution, 2^-30 */

/* Point p (p >= 1; GSL's first point is p = 1) of the two-dimensional
 * sequence by the definition: x = XOR of the direction numbers V_k over the
 * bits k of the Gray code p ^ (p >> 1) (Antonov & Saleev, USSR Comput.
 * Math. Math. Phys. 19, 252, 1980).  Dimension 1: V_k = 2^-k.  Dimension 2:
 * primitive polynomial x + 1 (degree 1), so m_1 = 1 and
 * m_k = 2 m_{k-1} XOR m_{k-1}, V_k = m_k 2^-k (Bratley & Fox 1988). */
static void ref_sobol_2d(uint32_t p, double x[2])
{
    uint32_t g = p ^ (p >> 1), v1 = 0, v2 = 0, m = 1;

    for (int k = 1; k <= BITS; k++) {
        if (k > 1)
            m = (m << 1) ^ m;
        if (g & (1u << (k - 1))) {
            v1 ^= 1u << (BITS - k);
            v2 ^= m << (BITS - k);
        }
    }
    x[0] = v1 / (double)(1u << BITS);
    x[1] = v2 / (double)(1u << BITS);
}

/* The first 4095 points against the definition, exactly. */
static void test_sequence_definition(void **state)
{
    enum { NPT = 4095 };
    double *A = xcalloc(NPT, sizeof *A), *B = xcalloc(NPT, sizeof *B);
    vg_error err = {VG_OK, ""};
    (void)state;
    assert_int_equal(vg_sobol_sample(NPT, 1, A, B, &err), VG_OK);
    for (uint32_t j = 0; j < NPT; j++) {
        double x[2];

        ref_sobol_2d(j + 1, x);
        if (A[j] != x[0] || B[j] != x[1])
            fail_msg("point %u: %.17g %.17g, the definition gives %.17g %.17g", j + 1, A[j], B[j],
                     x[0], x[1]);
    }
    free(A);
    free(B);
}

/* Equidistribution (Sobol' 1967; Niederreiter 1992, from memory): with the
 * origin GSL leaves out, the first 2^10 points of every one of the 40
 * dimensions are the 1024 multiples of 2^-10, each once (every coordinate
 * is a (0,1)-sequence in base 2), so all of A and B lie strictly inside
 * (0, 1); and the first two dimensions form a (0,10,2)-net: each dyadic box
 * of area 2^-10 (2^a by 2^(10-a) boxes) holds exactly one point. */
static void test_equidistribution(void **state)
{
    enum { M = 10, NPT = (1 << M) - 1, K = VG_SOBOL_MAX_PARAMS };
    double *A = xcalloc(NPT * K, sizeof *A), *B = xcalloc(NPT * K, sizeof *B);
    int seen[1 << M];
    vg_error err = {VG_OK, ""};
    (void)state;
    assert_int_equal(vg_sobol_sample(NPT, K, A, B, &err), VG_OK);
    for (size_t d = 0; d < 2 * K; d++) {
        const double *col = d < K ? A + d : B + (d - K);

        memset(seen, 0, sizeof seen);
        seen[0] = 1; /* the origin */
        for (size_t j = 0; j < NPT; j++) {
            double t = col[j * K] * (1 << M);

            assert_true(col[j * K] > 0.0 && col[j * K] < 1.0);
            assert_true(t == floor(t)); /* a multiple of 2^-10 */
            seen[(int)t]++;
        }
        for (int v = 0; v < (1 << M); v++)
            if (seen[v] != 1)
                fail_msg("dimension %zu: %d/1024 taken %d times", d + 1, v, seen[v]);
    }
    for (int a = 0; a <= M; a++) {
        memset(seen, 0, sizeof seen);
        seen[0] = 1;
        for (size_t j = 0; j < NPT; j++) {
            int bx = (int)(A[j * K] * (1 << a)), by = (int)(A[j * K + 1] * (1 << (M - a)));

            seen[(bx << (M - a)) + by]++;
        }
        for (int v = 0; v < (1 << M); v++)
            if (seen[v] != 1)
                fail_msg("2^%d x 2^%d boxes: box %d holds %d points", a, M - a, v, seen[v]);
    }
    free(A);
    free(B);
}

/* GSL's generator has 40 dimensions (two per parameter): k = 21 is refused
 * with the documented message, as are k = 0, n = 0 and n beyond 2^30 - 1;
 * k = 20 works (test_equidistribution). */
static void test_design_limits(void **state)
{
    double A[42], B[42];
    vg_error err = {VG_OK, ""};
    (void)state;
    assert_int_equal(vg_sobol_sample(2, 21, A, B, &err), VG_ECONFIG);
    assert_string_equal(err.msg, "at most 20 uncertain parameters (Sobol sequence limited to 40 "
                                 "dimensions; got 21)");
    assert_int_equal(vg_sobol_sample(2, 0, A, B, &err), VG_ECONFIG);
    assert_string_equal(err.msg, "at least 1 uncertain parameter is needed");
    assert_int_equal(vg_sobol_sample(0, 2, A, B, &err), VG_ECONFIG);
    assert_non_null(strstr(err.msg, "between 1 and 1073741823"));
    assert_int_equal(vg_sobol_sample(VG_SOBOL_MAX_POINTS + 1, 2, A, B, &err), VG_ECONFIG);
    assert_int_equal(err.status, VG_ECONFIG);
}

/* -------------------------------------------------------- Ishigami --- */

#define ISH_A 7.0
#define ISH_B 0.1

/* f = sin x1 + a sin^2 x2 + b x3^4 sin x1, x_i uniform on [-pi, pi]. */
static double ishigami(const double *u, size_t k)
{
    double x1 = VG_PI * (2.0 * u[0] - 1.0), x2 = VG_PI * (2.0 * u[1] - 1.0);
    double x3 = VG_PI * (2.0 * u[2] - 1.0), s1 = sin(x1), s2 = sin(x2);

    (void)k;
    return s1 + ISH_A * s2 * s2 + ISH_B * x3 * x3 * x3 * x3 * s1;
}

/* Analytic indices.  With x uniform on [-pi, pi]: E sin x = 0,
 * E sin^2 x = 1/2, E sin^4 x = 3/8, E x^4 = pi^4/5, E x^8 = pi^8/9.  The
 * Sobol' (1993) decomposition f = f0 + f1 + f2 + f13 has
 *   f0 = a/2,  f1 = (1 + b pi^4/5) sin x1,  f2 = a (sin^2 x2 - 1/2),
 *   f13 = b (x3^4 - pi^4/5) sin x1,  every other term 0, so
 *   V1 = (1 + b pi^4/5)^2 / 2,  V2 = a^2 (3/8 - 1/4) = a^2 / 8,  V3 = 0,
 *   V13 = (b^2 / 2)(pi^8/9 - pi^8/25) = 8 b^2 pi^8 / 225,
 *   V = V1 + V2 + V13 = 1/2 + b pi^4/5 + b^2 pi^8/18 + a^2/8,
 * S_i = V_i / V; ST1 = (V1 + V13) / V, ST2 = S2, ST3 = V13 / V. */
static void ishigami_exact(double s1[3], double st[3], double *v)
{
    double p4 = pow(VG_PI, 4), p8 = pow(VG_PI, 8);
    double v1 = 0.5 * pow(1.0 + ISH_B * p4 / 5.0, 2), v2 = ISH_A * ISH_A / 8.0;
    double v13 = 8.0 * ISH_B * ISH_B * p8 / 225.0;

    *v = 0.5 + ISH_B * p4 / 5.0 + ISH_B * ISH_B * p8 / 18.0 + ISH_A * ISH_A / 8.0;
    s1[0] = v1 / *v;
    s1[1] = v2 / *v;
    s1[2] = 0.0;
    st[0] = (v1 + v13) / *v;
    st[1] = v2 / *v;
    st[2] = v13 / *v;
    assert_true(fabs(v1 + v2 + v13 - *v) <= 8 * DBL_EPSILON * *v); /* the two forms of V */
}

/* The closed forms reproduce the published four-digit values (Ishigami &
 * Homma 1990 as commonly quoted, from memory): S = 0.3139, 0.4424, 0;
 * ST = 0.5576, 0.4424, 0.2437 (to 5e-5, their rounding). */
static void test_ishigami_exact(void **state)
{
    static const double pub_s1[3] = {0.3139, 0.4424, 0.0}, pub_st[3] = {0.5576, 0.4424, 0.2437};
    double s1[3], st[3], v;
    (void)state;
    ishigami_exact(s1, st, &v);
    for (int i = 0; i < 3; i++) {
        assert_true(fabs(s1[i] - pub_s1[i]) <= 5e-5);
        assert_true(fabs(st[i] - pub_st[i]) <= 5e-5);
    }
}

/* n = 2^15 (32768 x 5 runs), 1000 resamples, 99 % intervals: each analytic
 * index lies inside its interval, and every interval is narrower than 0.05
 * (so an estimator off by more than that cannot pass).  The resampling
 * treats the rows as independent, so the intervals are wider than the
 * quasi-random estimates' real error; at n = 2^14 that of ST1 is 0.06. */
static void test_ishigami_indices(void **state)
{
    vg_sobol_result r[3];
    double s1[3], st[3], v;
    vg_error err = {VG_OK, ""};
    (void)state;
    ishigami_exact(s1, st, &v);
    if (run_design(1u << 15, 3, ishigami, 1000, 20240611UL, 0.99, r, &err) != VG_OK)
        fail_msg("indices failed: %s", err.msg);
    for (int i = 0; i < 3; i++) {
        assert_within(s1[i], r[i].S1_lo, r[i].S1_hi, "Ishigami S1 in its interval");
        assert_within(st[i], r[i].ST_lo, r[i].ST_hi, "Ishigami ST in its interval");
        assert_true(r[i].S1_hi - r[i].S1_lo < 0.05);
        assert_true(r[i].ST_hi - r[i].ST_lo < 0.05);
        assert_within(r[i].S1, r[i].S1_lo, r[i].S1_hi, "S1 estimate in its interval");
        assert_within(r[i].ST, r[i].ST_lo, r[i].ST_hi, "ST estimate in its interval");
    }
}

/* ---------------------------------------------------------- linear --- */

static const double lin_c[4] = {1.37, -0.62, 2.91, 0.18};

static double linear(const double *u, size_t k)
{
    double f = 0.0;

    for (size_t i = 0; i < k; i++)
        f += lin_c[i] * u[i];
    return f;
}

/* f = sum c_i x_i, x_i uniform on (0, 1): V_i = c_i^2 / 12 and no
 * interactions, so S_i = ST_i = c_i^2 / sum c_j^2.  n = 2^14, 99 %
 * intervals narrower than 0.05 must contain them. */
static void test_linear_indices(void **state)
{
    vg_sobol_result r[4];
    double sum = 0.0;
    vg_error err = {VG_OK, ""};
    (void)state;
    for (int i = 0; i < 4; i++)
        sum += lin_c[i] * lin_c[i];
    if (run_design(1u << 14, 4, linear, 1000, 31UL, 0.99, r, &err) != VG_OK)
        fail_msg("indices failed: %s", err.msg);
    for (int i = 0; i < 4; i++) {
        double s = lin_c[i] * lin_c[i] / sum;

        assert_within(s, r[i].S1_lo, r[i].S1_hi, "linear S1 in its interval");
        assert_within(s, r[i].ST_lo, r[i].ST_hi, "linear ST in its interval");
        assert_true(r[i].S1_hi - r[i].S1_lo < 0.05 && r[i].ST_hi - r[i].ST_lo < 0.05);
    }
}

/* ------------------------------------------------- the estimators --- */

#define SN 6
#define SK 2

/* Invented outputs of a 6-row, 2-parameter design. */
static const double sm_fA[SN] = {2.731, -0.418, 1.905, 3.362, 0.577, -1.244};
static const double sm_fB[SN] = {1.118, 2.046, -0.873, 0.391, 2.954, 1.607};
static const double sm_fAB[SK * SN] = {1.502, 0.733, -0.219, 2.846, 1.988, 0.145,
                                       2.270, -0.931, 1.436, 3.017, 0.802, -0.566};

/* The published estimators on rows idx[0 .. n-1], written out directly:
 * f0 and V (divisor 2n) over the pooled fA, fB; V_i = (1/n) sum (fB - f0)
 * (fAB_i - fA) (Saltelli et al. 2010, Table 2 (b), on f - f0);
 * V_Ti = (1/2n) sum (fA - fAB_i)^2 (Jansen 1999). */
static void ref_indices(const size_t *idx, double s1[SK], double st[SK])
{
    double f0 = 0.0, v = 0.0;

    for (size_t j = 0; j < SN; j++)
        f0 += sm_fA[idx[j]] + sm_fB[idx[j]];
    f0 /= 2.0 * SN;
    for (size_t j = 0; j < SN; j++)
        v += pow(sm_fA[idx[j]] - f0, 2) + pow(sm_fB[idx[j]] - f0, 2);
    v /= 2.0 * SN;
    for (size_t i = 0; i < SK; i++) {
        double vi = 0.0, vt = 0.0;

        for (size_t j = 0; j < SN; j++) {
            size_t r = idx[j];
            double d = sm_fAB[i * SN + r] - sm_fA[r];

            vi += (sm_fB[r] - f0) * d;
            vt += d * d;
        }
        s1[i] = vi / SN / v;
        st[i] = vt / (2.0 * SN) / v;
    }
}

static int cmp_double(const void *p, const void *q)
{
    double x = *(const double *)p, y = *(const double *)q;

    return (x > y) - (x < y);
}

/* The p quantile of sorted v[0 .. n-1], linear between order statistics:
 * h = (n - 1) p (Hyndman & Fan 1996, definition 7). */
static double ref_quantile(const double *v, size_t n, double p)
{
    double h = (double)(n - 1) * p;
    size_t lo = (size_t)floor(h);

    return lo + 1 < n ? v[lo] + (h - (double)lo) * (v[lo + 1] - v[lo]) : v[n - 1];
}

/* Point estimates and bootstrap intervals against the formulas above and a
 * bootstrap written out again: resample b draws its rows by
 * gsl_rng_uniform_int from one mt19937 seeded with the seed, as
 * documented; percentile interval at level 0.8 from 25 resamples.  1e-13
 * absolute (sums of six terms of order 1, in another order). */
static void test_estimators(void **state)
{
    enum { NB = 25 };
    const double level = 0.8;
    size_t idx[SN];
    double s1[SK], st[SK], rep[2 * SK][NB], work[SK * (3 + 2 * NB)];
    vg_sobol_result r[SK];
    vg_error err = {VG_OK, ""};
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    (void)state;
    assert_non_null(rng);
    assert_int_equal(vg_sobol_work_size(SK, NB), SK * (3 + 2 * NB));
    for (size_t j = 0; j < SN; j++)
        idx[j] = j;
    ref_indices(idx, s1, st);
    assert_int_equal(vg_sobol_indices(SN, SK, sm_fA, sm_fB, sm_fAB, NB, 977UL, level, r, work,
                                      &err), VG_OK);
    gsl_rng_set(rng, 977UL);
    for (size_t b = 0; b < NB; b++) {
        double bs1[SK], bst[SK];

        for (size_t j = 0; j < SN; j++)
            idx[j] = (size_t)gsl_rng_uniform_int(rng, SN);
        ref_indices(idx, bs1, bst);
        for (size_t i = 0; i < SK; i++) {
            rep[2 * i][b] = bs1[i];
            rep[2 * i + 1][b] = bst[i];
        }
    }
    gsl_rng_free(rng);
    for (size_t i = 0; i < SK; i++) {
        qsort(rep[2 * i], NB, sizeof(double), cmp_double);
        qsort(rep[2 * i + 1], NB, sizeof(double), cmp_double);
        assert_true(fabs(r[i].S1 - s1[i]) <= 1e-13 && fabs(r[i].ST - st[i]) <= 1e-13);
        assert_true(fabs(r[i].S1_lo - ref_quantile(rep[2 * i], NB, 0.1)) <= 1e-13);
        assert_true(fabs(r[i].S1_hi - ref_quantile(rep[2 * i], NB, 0.9)) <= 1e-13);
        assert_true(fabs(r[i].ST_lo - ref_quantile(rep[2 * i + 1], NB, 0.1)) <= 1e-13);
        assert_true(fabs(r[i].ST_hi - ref_quantile(rep[2 * i + 1], NB, 0.9)) <= 1e-13);
    }
}

/* The same seed gives the same bits; another seed the same point estimates
 * but other intervals. */
static void test_determinism(void **state)
{
    vg_sobol_result r1[3], r2[3], r3[3];
    vg_error err = {VG_OK, ""};
    int differ = 0;
    (void)state;
    memset(r1, 0, sizeof r1);
    memset(r2, 0xff, sizeof r2); /* a stale value cannot pass as identical */
    memset(r3, 0, sizeof r3);
    assert_int_equal(run_design(1024, 3, ishigami, 400, 5UL, 0.95, r1, &err), VG_OK);
    assert_int_equal(run_design(1024, 3, ishigami, 400, 5UL, 0.95, r2, &err), VG_OK);
    assert_int_equal(run_design(1024, 3, ishigami, 400, 6UL, 0.95, r3, &err), VG_OK);
    assert_memory_equal(r1, r2, sizeof r1);
    for (int i = 0; i < 3; i++) {
        assert_true(memcmp(&r1[i].S1, &r3[i].S1, sizeof(double)) == 0);
        assert_true(memcmp(&r1[i].ST, &r3[i].ST, sizeof(double)) == 0);
        differ += r1[i].S1_lo != r3[i].S1_lo || r1[i].S1_hi != r3[i].S1_hi ||
                  r1[i].ST_lo != r3[i].ST_lo || r1[i].ST_hi != r3[i].ST_hi;
    }
    assert_true(differ > 0);
}

/* ----------------------------------------------------------- errors --- */

static vg_status small_run(const double *fA, const double *fB, const double *fAB, size_t n,
                           size_t nboot, double level, vg_error *err)
{
    vg_sobol_result r[SK];
    double *work = xcalloc(vg_sobol_work_size(SK, nboot) + 1, sizeof *work);
    vg_status st = vg_sobol_indices(n, SK, fA, fB, fAB, nboot, 1UL, level, r, work, err);

    for (size_t i = 0; st == VG_OK && i < SK; i++)
        assert_true(isfinite(r[i].S1) && isfinite(r[i].ST_hi));
    free(work);
    return st;
}

/* A constant model has no variance to share: an error, never NaN; so has a
 * model constant but for one row, when a resample misses that row
 * (probability (1 - 1/50)^50 = 0.36 per resample, 100 resamples). */
static void test_constant_model(void **state)
{
    enum { NR = 50 };
    double fA[NR], fB[NR], fAB[SK * NR];
    vg_error err = {VG_OK, ""};
    (void)state;
    for (size_t j = 0; j < NR; j++)
        fA[j] = fB[j] = fAB[j] = fAB[NR + j] = 3.7;
    assert_int_equal(small_run(fA, fB, fAB, NR, 100, 0.95, &err), VG_ENUMERIC);
    assert_non_null(strstr(err.msg, "constant over the sample"));
    fB[17] = 4.1;
    assert_int_equal(small_run(fA, fB, fAB, NR, 100, 0.95, &err), VG_ENUMERIC);
    assert_non_null(strstr(err.msg, "constant over the bootstrap resample"));
}

/* Non-finite outputs are refused with their index; outputs whose squares
 * overflow likewise. */
static void test_nonfinite_outputs(void **state)
{
    double fA[SN], fB[SN], fAB[SK * SN];
    vg_error err = {VG_OK, ""};
    (void)state;
    memcpy(fA, sm_fA, sizeof fA);
    memcpy(fB, sm_fB, sizeof fB);
    memcpy(fAB, sm_fAB, sizeof fAB);
    fA[4] = NAN;
    assert_int_equal(small_run(fA, fB, fAB, SN, 40, 0.95, &err), VG_ENUMERIC);
    assert_string_equal(err.msg, "model output fA[4] is not finite (got nan)");
    fA[4] = 1.0;
    fB[2] = -INFINITY;
    assert_int_equal(small_run(fA, fB, fAB, SN, 40, 0.95, &err), VG_ENUMERIC);
    assert_string_equal(err.msg, "model output fB[2] is not finite (got -inf)");
    fB[2] = 1.0;
    fAB[SN + 3] = INFINITY;
    assert_int_equal(small_run(fA, fB, fAB, SN, 40, 0.95, &err), VG_ENUMERIC);
    assert_string_equal(err.msg, "model output fAB[9] (row 3 with parameter 1 from B) is not "
                                 "finite (got inf)");
    fAB[SN + 3] = 1.0;
    fA[0] = 1e200;
    fB[0] = -1e200;
    assert_int_equal(small_run(fA, fB, fAB, SN, 40, 0.95, &err), VG_ENUMERIC);
    assert_non_null(strstr(err.msg, "too large"));
}

/* n < 2, k = 0, level outside (0, 1) and too few resamples
 * (2 / (1 - 0.99) = 200) are refused; 200 resamples at 0.99 are enough. */
static void test_bad_arguments(void **state)
{
    vg_sobol_result r[SK];
    double work[SK * 3];
    vg_error err = {VG_OK, ""};
    (void)state;
    assert_int_equal(small_run(sm_fA, sm_fB, sm_fAB, 1, 40, 0.95, &err), VG_ECONFIG);
    assert_string_equal(err.msg, "at least 2 samples are needed (got 1)");
    assert_int_equal(vg_sobol_indices(SN, 0, sm_fA, sm_fB, sm_fAB, 40, 1UL, 0.95, r, work, &err),
                     VG_ECONFIG);
    assert_string_equal(err.msg, "at least 1 uncertain parameter is needed");
    assert_int_equal(small_run(sm_fA, sm_fB, sm_fAB, SN, 40, 1.0, &err), VG_ECONFIG);
    assert_int_equal(small_run(sm_fA, sm_fB, sm_fAB, SN, 40, 0.0, &err), VG_ECONFIG);
    assert_int_equal(small_run(sm_fA, sm_fB, sm_fAB, SN, 40, NAN, &err), VG_ECONFIG);
    assert_non_null(strstr(err.msg, "confidence level must be between 0 and 1"));
    assert_int_equal(small_run(sm_fA, sm_fB, sm_fAB, SN, 199, 0.99, &err), VG_ECONFIG);
    assert_string_equal(err.msg, "at least 200 bootstrap resamples are needed for a 0.99 "
                                 "confidence level (got 199)");
    assert_int_equal(small_run(sm_fA, sm_fB, sm_fAB, SN, 200, 0.99, &err), VG_OK);
    assert_int_equal(vg_sobol_work_size(SIZE_MAX / 4, 10), 0);
    assert_int_equal(vg_sobol_work_size(2, SIZE_MAX / 2), 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_first_points),
        cmocka_unit_test(test_sequence_definition),
        cmocka_unit_test(test_equidistribution),
        cmocka_unit_test(test_design_limits),
        cmocka_unit_test(test_ishigami_exact),
        cmocka_unit_test(test_ishigami_indices),
        cmocka_unit_test(test_linear_indices),
        cmocka_unit_test(test_estimators),
        cmocka_unit_test(test_determinism),
        cmocka_unit_test(test_constant_model),
        cmocka_unit_test(test_nonfinite_outputs),
        cmocka_unit_test(test_bad_arguments),
    };

    gsl_set_error_handler_off();
    return cmocka_run_group_tests(tests, NULL, NULL);
}
