/*
 * Tests of the prior distributions (src/prior.c).
 *
 * References, independent of the module: the standard normal CDF written
 * from the C library's erfc (P(z) = erfc(-z / sqrt 2) / 2, Abramowitz &
 * Stegun 26.2.29) and inverted here by bisection, in long double (erfcl)
 * far in the tails; the defining formulas of the uniform, log-uniform and
 * log-normal quantiles; and moments as integrals of the quantile function,
 * E[g(X)] = int_0^1 g(F^-1(u)) du (the probability integral transform),
 * by GSL's adaptive quadrature.  Tolerances are stated per check.
 */
#include <float.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>

#include "vg_prior.h"

/* ------------------------------------------------------------ helpers --- */

static void assert_rel(double got, double want, double rel, const char *what)
{
    if (!(fabs(got - want) <= rel * fabs(want)))
        fail_msg("%s: got %.17g, want %.17g (relative difference %.3g > %.3g)", what, got, want,
                 fabs(got - want) / fabs(want), rel);
}

static void assert_abs(double got, double want, double tol, const char *what)
{
    if (!(fabs(got - want) <= tol))
        fail_msg("%s: got %.17g, want %.17g (difference %.3g > %.3g)", what, got, want,
                 fabs(got - want), tol);
}

static vg_prior prior(vg_prior_kind kind, double a, double b)
{
    vg_prior p = {kind, a, b};

    return p;
}

/* --------------------------------------------------- reference CDFs --- */

#define SQRT_2 1.41421356237309504880168872420969808

/* Standard normal CDF and its complement from erfc (A&S 26.2.29). */
static double ref_P(double z)
{
    return 0.5 * erfc(-z / SQRT_2);
}

static double ref_Q(double z)
{
    return 0.5 * erfc(z / SQRT_2);
}

/* CDF F of the standard normal truncated to [zl, zh] and its complement
 * G = 1 - F, each written with the probabilities that keep their precision
 * on that interval (P in the lower tail, Q in the upper). */
static double ref_trunc_cdf(double z, double zl, double zh)
{
    if (zl > 0.0)
        return (ref_Q(zl) - ref_Q(z)) / (ref_Q(zl) - ref_Q(zh));
    return (ref_P(z) - ref_P(zl)) / (ref_P(zh) - ref_P(zl));
}

static double ref_trunc_ccdf(double z, double zl, double zh)
{
    if (zh < 0.0)
        return (ref_P(zh) - ref_P(z)) / (ref_P(zh) - ref_P(zl));
    return (ref_Q(z) - ref_Q(zh)) / (ref_Q(zl) - ref_Q(zh));
}

/* Its inverse at u by bisection to the resolution of double: on F below
 * u = 1/2, on G = 1 - u (exact there) above. */
static double ref_trunc_quantile(double u, double zl, double zh)
{
    double lo = zl, hi = zh;

    for (int i = 0; i < 400; i++) {
        double mid = 0.5 * (lo + hi);
        int below = u <= 0.5 ? ref_trunc_cdf(mid, zl, zh) < u
                             : ref_trunc_ccdf(mid, zl, zh) > 1.0 - u;

        if (mid <= lo || mid >= hi)
            break;
        if (below)
            lo = mid;
        else
            hi = mid;
    }
    return 0.5 * (lo + hi);
}

/* The same in long double, for intervals beyond 37 standard deviations
 * where double underflows (needs the x87 80-bit format, exponent to
 * -16381). */
static long double ref_trunc_cdf_ld(long double z, long double zl, long double zh)
{
    long double pl = 0.5L * erfcl(-zl / sqrtl(2.0L)), ph = 0.5L * erfcl(-zh / sqrtl(2.0L));

    return (0.5L * erfcl(-z / sqrtl(2.0L)) - pl) / (ph - pl);
}

/* Whether erfcl really reaches 40.5 sd: ln P(z) against the asymptotic
 * series P(z) = phi(z) / |z| (1 - 1/z^2 + 3/z^4 - 15/z^6 + ...) (A&S
 * 26.2.12), whose next term is 1e-11 there. */
static int ref_far_usable(void)
{
    static const double zs[2] = {-39.0, -40.5};

    for (int i = 0; i < 2; i++) {
        double z = zs[i], z2 = z * z;
        double asym = -0.5 * z2 - 0.5 * log(2.0 * 3.14159265358979323846) - log(-z) +
                      log(1.0 - 1.0 / z2 + 3.0 / (z2 * z2) - 15.0 / (z2 * z2 * z2));
        long double p = 0.5L * erfcl(-(long double)z / sqrtl(2.0L));

        if (!(p > 0.0L) || !(fabs((double)logl(p) - asym) < 1e-9))
            return 0;
    }
    return 1;
}

static double ref_far_quantile(double u, double zl, double zh)
{
    long double lo = zl, hi = zh;

    for (int i = 0; i < 200; i++) {
        long double mid = 0.5L * (lo + hi);

        if (ref_trunc_cdf_ld(mid, zl, zh) < (long double)u)
            lo = mid;
        else
            hi = mid;
    }
    return (double)(0.5L * (lo + hi));
}

/* ----------------------------------------------------- known values --- */

/* The 97.5 % point of the standard normal, 1.959963984540054 (common
 * knowledge, from memory; the percentage points are tabulated in A&S
 * chapter 26).  gsl_cdf_ugaussian_Pinv is accurate to a few ulps, so
 * 4 DBL_EPSILON relative; and erfc of it gives back 0.975 to 4 DBL_EPSILON
 * (an independent check of the memorised digits).  A non-standard normal
 * is mean + sd z by definition. */
static void test_normal_quantile(void **state)
{
    const double z975 = 1.959963984540054;
    vg_prior std = prior(VG_PRIOR_NORMAL, 0.0, 1.0), p = prior(VG_PRIOR_NORMAL, 2.385, 0.713);
    (void)state;
    assert_rel(ref_P(z975), 0.975, 4 * DBL_EPSILON, "erfc at the memorised 97.5 % point");
    assert_rel(vg_prior_quantile(&std, 0.975), z975, 4 * DBL_EPSILON, "normal 0.975");
    assert_rel(vg_prior_quantile(&std, 0.025), -z975, 4 * DBL_EPSILON, "normal 0.025");
    assert_true(vg_prior_quantile(&std, 0.5) == 0.0);
    assert_rel(vg_prior_quantile(&p, 0.975), 2.385 + 0.713 * z975, 4 * DBL_EPSILON,
               "normal(2.385, 0.713) at 0.975");
}

/* Log-normal: ln x ~ normal(ln a, b), so the median is a (2 DBL_EPSILON:
 * exp(log a)) and the 0.975 point a exp(b z975) (8 DBL_EPSILON: the ulps of
 * z times b, amplified by exp). */
static void test_lognormal_quantile(void **state)
{
    vg_prior p = prior(VG_PRIOR_LOGNORMAL, 85.2, 0.63);
    (void)state;
    assert_rel(vg_prior_quantile(&p, 0.5), 85.2, 2 * DBL_EPSILON, "lognormal median");
    assert_rel(vg_prior_quantile(&p, 0.975), 85.2 * exp(0.63 * 1.959963984540054),
               8 * DBL_EPSILON, "lognormal 0.975");
}

/* Log-uniform on [a, b]: ln x uniform, so F^-1(u) = a^(1-u) b^u; at 0.5 the
 * geometric mean sqrt(ab).  Uniform: a + u (b - a).  4 DBL_EPSILON. */
static void test_bounded_quantiles(void **state)
{
    vg_prior lu = prior(VG_PRIOR_LOGUNIFORM, 0.37, 415.0), un = prior(VG_PRIOR_UNIFORM, -3.1, 7.9);
    (void)state;
    assert_rel(vg_prior_quantile(&lu, 0.5), sqrt(0.37 * 415.0), 4 * DBL_EPSILON,
               "loguniform median = sqrt(ab)");
    assert_rel(vg_prior_quantile(&lu, 0.2718), pow(0.37, 1 - 0.2718) * pow(415.0, 0.2718),
               4 * DBL_EPSILON, "loguniform a^(1-u) b^u");
    assert_rel(vg_prior_quantile(&un, 0.3721), -3.1 + 0.3721 * 11.0, 4 * DBL_EPSILON,
               "uniform a + u (b - a)");
    assert_true(vg_prior_quantile(&un, 0.0) == -3.1 && vg_prior_quantile(&un, 1.0) == 7.9);
    assert_true(vg_prior_quantile(&un, NAN) == -3.1);
    assert_true(vg_prior_quantile(&lu, 0.0) >= 0.37 && vg_prior_quantile(&lu, 1.0) <= 415.0);
}

/* --------------------------------------------------------- moments --- */

typedef struct {
    const vg_prior *p;
    int power;
} moment_arg;

static double quantile_power(double u, void *arg)
{
    const moment_arg *m = arg;
    double x = vg_prior_quantile(m->p, u);

    return m->power == 1 ? x : x * x;
}

/* int_0^1 (F^-1(u))^power du by QAGS (end-point singularities of the
 * normal quantile are integrable). */
static double moment_by_quadrature(const vg_prior *p, int power)
{
    gsl_integration_workspace *w = gsl_integration_workspace_alloc(1000);
    moment_arg m = {p, power};
    gsl_function fn = {quantile_power, &m};
    double val, abserr;
    int st;

    assert_non_null(w);
    st = gsl_integration_qags(&fn, 0.0, 1.0, 0.0, 1e-11, 1000, w, &val, &abserr);
    gsl_integration_workspace_free(w);
    if (st != GSL_SUCCESS)
        fail_msg("quadrature failed: %s", gsl_strerror(st));
    return val;
}

/* The closed-form mean and sd (vg_prior_mean, vg_prior_sd) against the
 * moments of the quantile function by quadrature: 1e-8 relative (QAGS at
 * 1e-11; the quantile clamp at u = DBL_MIN and 1 - DBL_EPSILON / 2 cuts
 * less than 1e-14 of the integral). */
static void test_moments(void **state)
{
    const vg_prior ps[] = {
        prior(VG_PRIOR_UNIFORM, -3.1, 7.9),   prior(VG_PRIOR_LOGUNIFORM, 0.5, 40.0),
        prior(VG_PRIOR_NORMAL, 2.385, 0.713), prior(VG_PRIOR_LOGNORMAL, 85.2, 0.63),
    };
    (void)state;
    for (size_t i = 0; i < sizeof ps / sizeof ps[0]; i++) {
        double mean, sd, m1 = moment_by_quadrature(&ps[i], 1), m2 = moment_by_quadrature(&ps[i], 2);
        vg_error err = {VG_OK, ""};

        assert_int_equal(vg_prior_mean(&ps[i], &mean, &err), VG_OK);
        assert_int_equal(vg_prior_sd(&ps[i], &sd, &err), VG_OK);
        assert_rel(mean, m1, 1e-8, "mean against quadrature");
        assert_rel(sd, sqrt(m2 - m1 * m1), 1e-8, "sd against quadrature");
    }
}

/* Uniform mean (a + b) / 2 exactly; a log-normal with sigma 40 has a mean
 * e^800 a, beyond double: an error, not Inf; invalid priors are refused. */
static void test_moment_errors(void **state)
{
    vg_prior un = prior(VG_PRIOR_UNIFORM, -3.1, 7.9), wide = prior(VG_PRIOR_LOGNORMAL, 2.0, 40.0);
    vg_prior bad = prior(VG_PRIOR_NORMAL, 1.0, 0.0);
    vg_error err = {VG_OK, ""};
    double v = 0.0;
    (void)state;
    assert_int_equal(vg_prior_mean(&un, &v, &err), VG_OK);
    assert_true(v == 0.5 * (-3.1 + 7.9));
    assert_int_equal(vg_prior_mean(&wide, &v, &err), VG_ENUMERIC);
    assert_string_equal(err.msg, "lognormal mean overflows (sigma 40)");
    assert_int_equal(vg_prior_sd(&wide, &v, &err), VG_ENUMERIC);
    assert_int_equal(vg_prior_sd(&bad, &v, &err), VG_ECONFIG);
}

/* ------------------------------------------------------- validation --- */

typedef struct {
    vg_prior p;
    double lo, hi;
    const char *msg; /* NULL: valid */
} check_case;

/* Every rule of vg_prior_check, with its message (lower case, no location). */
static void test_check(void **state)
{
    static const check_case cases[] = {
        {{VG_PRIOR_UNIFORM, 0.5, 2.5}, 0.1, 3000.0, NULL},
        {{VG_PRIOR_LOGUNIFORM, 0.1, 3000.0}, 0.1, 3000.0, NULL},
        {{VG_PRIOR_NORMAL, 2.0, 50.0}, 0.1, 3000.0, NULL},
        {{VG_PRIOR_LOGNORMAL, 250.0, 0.4}, 0.1, 3000.0, NULL},
        {{VG_PRIOR_LOGNORMAL, 1.0, -1.0}, 0.1, 3000.0, "lognormal sigma must be > 0 (got -1)"},
        {{VG_PRIOR_LOGNORMAL, 0.0, 1.0}, -10.0, 10.0, "lognormal median must be > 0 (got 0)"},
        {{VG_PRIOR_NORMAL, 1.0, 0.0}, -10.0, 10.0,
         "normal standard deviation must be > 0 (got 0)"},
        {{VG_PRIOR_UNIFORM, 2.0, 2.0}, -10.0, 10.0,
         "uniform lower bound must be below the upper bound (got 2 and 2)"},
        {{VG_PRIOR_LOGUNIFORM, -1.0, 2.0}, -10.0, 10.0,
         "loguniform lower bound must be > 0 (got -1)"},
        {{VG_PRIOR_LOGUNIFORM, 5.0, 2.0}, -10.0, 10.0,
         "loguniform lower bound must be below the upper bound (got 5 and 2)"},
        {{VG_PRIOR_UNIFORM, 0.05, 2.5}, 0.1, 3000.0,
         "uniform range 0.05..2.5 must lie within the allowed range 0.1..3000"},
        {{VG_PRIOR_LOGUNIFORM, 1.0, 4000.0}, 0.1, 3000.0,
         "loguniform range 1..4000 must lie within the allowed range 0.1..3000"},
        {{VG_PRIOR_NORMAL, -5.0, 1.0}, 0.1, 3000.0,
         "normal mean -5 must lie within the allowed range 0.1..3000"},
        {{VG_PRIOR_LOGNORMAL, 5000.0, 1.0}, 0.1, 3000.0,
         "lognormal median 5000 must lie within the allowed range 0.1..3000"},
        {{VG_PRIOR_NORMAL, NAN, 1.0}, 0.1, 3000.0,
         "normal parameters must be finite (got nan and 1)"},
        {{VG_PRIOR_UNIFORM, 1.0, INFINITY}, 0.1, 3000.0,
         "uniform parameters must be finite (got 1 and inf)"},
        {{(vg_prior_kind)7, 1.0, 2.0}, 0.1, 3000.0, "unknown prior kind 7"},
        {{VG_PRIOR_NORMAL, 1.0, 1.0}, 3.0, 3.0, "the allowed range 3..3 is empty"},
    };
    (void)state;
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        const check_case *c = &cases[i];
        vg_error err = {VG_OK, ""};
        vg_status st = vg_prior_check(&c->p, c->lo, c->hi, &err);

        if (!c->msg) {
            if (st != VG_OK)
                fail_msg("case %zu: refused a valid prior: %s", i, err.msg);
            continue;
        }
        assert_int_equal(st, VG_ECONFIG);
        assert_int_equal(err.status, VG_ECONFIG);
        assert_string_equal(err.msg, c->msg);
    }
}

/* ------------------------------------------------------- truncation --- */

static const double probe_u[] = {1e-6, 0.0173, 0.25, 0.5, 0.731, 0.999, 1.0 - 1e-9};
#define N_PROBE (sizeof probe_u / sizeof probe_u[0])

typedef struct {
    vg_prior p;
    double lo, hi;
} trunc_case;

/* Truncated normal and log-normal quantiles against the erfc reference
 * (log-normal: on ln x).  Cases: a positive parameter whose normal prior
 * reaches below 0 (mean 1.3 sd, truncated at 0.1 and at a far upper end),
 * both ends inside one sd, an interval in the upper tail (3.1 to 5.7 sd:
 * through Q), its mirror image, a log-normal cut on both sides.  Tolerance
 * 1e-13 times the interval width in standard units (capped at 40): erfc
 * and GSL's P and Pinv are each good to a few ulps, and the probes (to
 * 1 - 1e-9) stay where the density is not tiny; the differences seen are
 * about 1e-15 of the width. */
static void test_truncated_against_erfc(void **state)
{
    static const trunc_case cases[] = {
        {{VG_PRIOR_NORMAL, 2.385, 1.7}, 0.1, 3000.0},
        {{VG_PRIOR_NORMAL, 41.3, 12.9}, 30.0, 50.0},
        {{VG_PRIOR_NORMAL, 0.0, 1.0}, 3.1, 5.7},
        {{VG_PRIOR_NORMAL, 0.0, 1.0}, -5.7, -3.1},
        {{VG_PRIOR_LOGNORMAL, 85.2, 0.63}, 40.0, 120.0},
    };
    (void)state;
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        const trunc_case *c = &cases[i];
        int lg = c->p.kind == VG_PRIOR_LOGNORMAL;
        double m = lg ? log(c->p.a) : c->p.a, s = c->p.b;
        double zl = ((lg ? log(c->lo) : c->lo) - m) / s, zh = ((lg ? log(c->hi) : c->hi) - m) / s;
        double width = fmin(zh, 40.0) - zl;

        for (size_t j = 0; j < N_PROBE; j++) {
            double x = vg_prior_quantile_truncated(&c->p, probe_u[j], c->lo, c->hi);
            double z = ((lg ? log(x) : x) - m) / s;
            char what[96];

            snprintf(what, sizeof what, "truncated case %zu at u = %g", i, probe_u[j]);
            assert_true(x >= c->lo && x <= c->hi);
            assert_abs(z, ref_trunc_quantile(probe_u[j], zl, zh), 1e-13 * width, what);
        }
    }
}

/* Intervals beyond 37 sd, where the probabilities underflow in double
 * (the log-domain path): [-40, -39] and its mirror [39, 40.5] sd, against
 * the long double reference, 1e-12 absolute in standard units (glibc's
 * erfcl is good to a few long double ulps; the module's ln P through
 * gsl_sf_log_erfc to a few double ulps of ~800, i.e. 4e-13 absolute, and
 * its slope there is ~40, so z to ~1e-14, as seen).  Sampling the interval
 * uniformly would miss the reference by up to 0.5. */
static void test_truncated_far_tail(void **state)
{
    vg_prior p = prior(VG_PRIOR_NORMAL, 3.7, 0.25);
    (void)state;
    /* the reference needs P(-40.5) ~ 1e-360 as a long double: not where
     * long double is double, nor under emulators that compute it so */
    if (LDBL_MAX_EXP < 16384 || !ref_far_usable())
        skip();
    for (size_t j = 0; j < N_PROBE; j++) {
        double lo = 3.7 - 40.0 * 0.25, hi = 3.7 - 39.0 * 0.25;
        double x = vg_prior_quantile_truncated(&p, probe_u[j], lo, hi);

        assert_true(x >= lo && x <= hi);
        assert_abs((x - 3.7) / 0.25, ref_far_quantile(probe_u[j], -40.0, -39.0), 1e-12,
                   "lower far tail");
        lo = 3.7 + 39.0 * 0.25;
        hi = 3.7 + 40.5 * 0.25;
        x = vg_prior_quantile_truncated(&p, probe_u[j], lo, hi);
        assert_true(x >= lo && x <= hi);
        assert_abs((x - 3.7) / 0.25, -ref_far_quantile(1.0 - probe_u[j], -40.5, -39.0), 1e-12,
                   "upper far tail");
        /* the whole tail below -39 sd; the reference stops at -60 sd, whose
         * probability is 1e-450 of the tail's */
        x = vg_prior_quantile_truncated(&p, probe_u[j], -INFINITY, 3.7 - 39.0 * 0.25);
        assert_abs((x - 3.7) / 0.25, ref_far_quantile(probe_u[j], -60.0, -39.0), 1e-12,
                   "tail below -39 sd");
    }
}

/* The bounded kinds truncated: uniform [1, 9] cut to [2, 20] is uniform on
 * [2, 9]; log-uniform [1, 100] cut to [10, 1000] is log-uniform on
 * [10, 100]; a range entirely outside gives the nearest end (4 ulps). */
static void test_truncated_bounded(void **state)
{
    vg_prior un = prior(VG_PRIOR_UNIFORM, 1.0, 9.0), lu = prior(VG_PRIOR_LOGUNIFORM, 1.0, 100.0);
    (void)state;
    assert_rel(vg_prior_quantile_truncated(&un, 0.5, 2.0, 20.0), 5.5, 4 * DBL_EPSILON,
               "uniform cut to [2, 9]");
    assert_rel(vg_prior_quantile_truncated(&lu, 0.5, 10.0, 1000.0), sqrt(1000.0),
               4 * DBL_EPSILON, "loguniform cut to [10, 100]");
    assert_true(vg_prior_quantile_truncated(&un, 0.3, 12.0, 20.0) == 12.0);
    assert_true(vg_prior_quantile_truncated(&un, 0.3, -5.0, 0.5) == 0.5);
}

/* -------------------------------------------- monotone and finite --- */

static const trunc_case shapes[] = {
    {{VG_PRIOR_UNIFORM, -3.1, 7.9}, -INFINITY, INFINITY},
    {{VG_PRIOR_LOGUNIFORM, 0.37, 415.0}, -INFINITY, INFINITY},
    {{VG_PRIOR_NORMAL, 2.385, 0.713}, -INFINITY, INFINITY},
    {{VG_PRIOR_LOGNORMAL, 85.2, 0.63}, -INFINITY, INFINITY},
    {{VG_PRIOR_NORMAL, 2.385, 1.7}, 0.1, 3000.0},
    {{VG_PRIOR_NORMAL, 0.0, 1.0}, 3.1, 5.7},
    {{VG_PRIOR_NORMAL, 0.0, 1.0}, -40.0, -39.0},
    {{VG_PRIOR_NORMAL, 0.0, 1.0}, 39.0, 40.5},
    {{VG_PRIOR_NORMAL, 0.0, 1.0}, -INFINITY, -39.0},
    {{VG_PRIOR_LOGNORMAL, 3.0, 1.2}, -1.0, 2.0}, /* lo <= 0: no cut below */
    {{VG_PRIOR_LOGNORMAL, 85.2, 0.63}, 40.0, 120.0},
    {{VG_PRIOR_LOGNORMAL, 0.02, 2.9}, 0.1, 3000.0},
    {{VG_PRIOR_NORMAL, 1.0, 1e300}, -INFINITY, INFINITY}, /* a + b z overflows */
    {{VG_PRIOR_LOGNORMAL, 1.0, 30.0}, -INFINITY, INFINITY}, /* exp(30 z) overflows */
    {{VG_PRIOR_UNIFORM, -DBL_MAX, DBL_MAX}, -INFINITY, INFINITY}, /* b - a overflows */
};
#define N_SHAPES (sizeof shapes / sizeof shapes[0])

/* Non-decreasing in u at 0, 1e-300, on a grid of 20000 points up to 1 and
 * at 1 - 1e-16 (which is below 1). */
static void test_monotone(void **state)
{
    (void)state;
    for (size_t i = 0; i < N_SHAPES; i++) {
        const trunc_case *c = &shapes[i];
        double at0 = vg_prior_quantile_truncated(&c->p, 0.0, c->lo, c->hi);
        double prev = vg_prior_quantile_truncated(&c->p, 1e-300, c->lo, c->hi), top;

        assert_true(prev >= at0);
        for (int j = 1; j < 20000; j++) {
            double x = vg_prior_quantile_truncated(&c->p, j / 20000.0, c->lo, c->hi);

            if (!(x >= prev))
                fail_msg("shape %zu: decreases at u = %g: %.17g after %.17g", i, j / 20000.0, x,
                         prev);
            prev = x;
        }
        top = vg_prior_quantile_truncated(&c->p, 1.0 - 1e-16, c->lo, c->hi);
        assert_true(top >= prev);
        assert_true(vg_prior_quantile_truncated(&c->p, 1.0, c->lo, c->hi) >= top);
    }
}

/* Finite and inside [lo, hi] for u = 1e-300, 1 - 1e-16, the out-of-range
 * 0, 1, -2, 3 and NaN, for every shape, including those whose formula
 * overflows. */
static void test_finite(void **state)
{
    const double us[] = {1e-300, 1.0 - 1e-16, 0.0, 1.0, -2.0, 3.0, NAN, DBL_TRUE_MIN};
    (void)state;
    for (size_t i = 0; i < N_SHAPES; i++)
        for (size_t j = 0; j < sizeof us / sizeof us[0]; j++) {
            const trunc_case *c = &shapes[i];
            double x = vg_prior_quantile_truncated(&c->p, us[j], c->lo, c->hi);
            double y = vg_prior_quantile(&c->p, us[j]);

            if (!isfinite(x) || !isfinite(y) || x < c->lo || x > c->hi)
                fail_msg("shape %zu at u = %g: %g, untruncated %g", i, us[j], x, y);
        }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_normal_quantile),
        cmocka_unit_test(test_lognormal_quantile),
        cmocka_unit_test(test_bounded_quantiles),
        cmocka_unit_test(test_moments),
        cmocka_unit_test(test_moment_errors),
        cmocka_unit_test(test_check),
        cmocka_unit_test(test_truncated_against_erfc),
        cmocka_unit_test(test_truncated_far_tail),
        cmocka_unit_test(test_truncated_bounded),
        cmocka_unit_test(test_monotone),
        cmocka_unit_test(test_finite),
    };

    gsl_set_error_handler_off();
    return cmocka_run_group_tests(tests, NULL, NULL);
}
