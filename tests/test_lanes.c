/*
 * The rate kernel's lane arithmetic (src/rate.c, included here so that its
 * static helpers can be called): the vector exp and log against glibc's
 * long double expl and logl (64-bit significands, eleven bits more than a
 * double, so their rounded values serve as the exact ones), the lane
 * helpers, and the channel window's K against the tail it bounds, summed
 * directly.
 */
#include "rate.c"

#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>

#include <cmocka.h>

/* |got - ref| in units of the last place of the double nearest ref. */
static double ulps(double got, long double ref)
{
    double r = fabs((double)ref);

    return (double)(fabsl((long double)got - ref) / (long double)(nextafter(r, INFINITY) - r));
}

/* Knuth's MMIX linear congruential generator (common practice), uniform in
 * [0, 1). */
static double uniform(uint64_t *x)
{
    *x = *x * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*x >> 11) * 0x1p-53;
}

/* vexp over the arguments the kernel gives it ([-700, 700]): within 3 ulps
 * (2.1 measured when this test was written); the design's truncation error
 * is below 2^-57, the rest is rounding. */
static void exp_lanes(void **state)
{
    uint64_t x = 1;
    double worst = 0.0;

    (void)state;
    for (int it = 0; it < 250000; it++) {
        vd a, e;
        for (int i = 0; i < LANES; i++)
            a[i] = -700.0 + 1400.0 * uniform(&x);
        e = vexp(a);
        for (int i = 0; i < LANES; i++)
            worst = fmax(worst, ulps(e[i], expl((long double)a[i])));
    }
    assert_true(worst <= 3.0);
    assert_true(vexp(vsplat(0.0))[0] == 1.0);
}

/* vlog over [2^-900, 2^900] and near 1 (where the result is small and a
 * relative error shows most): within 6 ulps (4.4 measured). */
static void log_lanes(void **state)
{
    uint64_t x = 2;
    double worst = 0.0;

    (void)state;
    for (int it = 0; it < 250000; it++) {
        vd y, l;
        for (int i = 0; i < LANES; i++)
            y[i] = it % 2 ? ldexp(0.5 + uniform(&x), (int)(uniform(&x) * 1800.0) - 900)
                          : 1.0 + (uniform(&x) - 0.5) * 0.01;
        l = vlog(y);
        for (int i = 0; i < LANES; i++)
            if (y[i] != 1.0)
                worst = fmax(worst, ulps(l[i], logl((long double)y[i])));
    }
    assert_true(worst <= 6.0);
    assert_true(vlog(vsplat(1.0))[0] == 0.0);
}

/* vgt is a > b lane by lane, vsel picks by it, lane_bits reads it out. */
static void lane_helpers(void **state)
{
    vd a = {1.0, -2.0, 3.5, 1e-300}, b = {0.5, -1.0, 3.5, 0.0};
    vi gt = vgt(a, b);

    (void)state;
    assert_int_equal(lane_bits(gt), 1 | 8);
    assert_false(all_lanes(gt));
    assert_true(all_lanes(vgt(a, vsplat(-10.0))));
    assert_true(vsel(gt, a, b)[0] == 1.0 && vsel(gt, a, b)[1] == -1.0);
    assert_true(vsel(gt, a, b)[2] == 3.5 && vsel(gt, a, b)[3] == 1e-300);
}

/* The window's K (docs/theory.md 4.2a): the tail it leaves out on a side,
 * sum_{k > K} e^{-C k (k-1)} summed term by term, is below tol/4, and K is
 * the first k whose closed-form bound is; rows beyond VG_RATE_WINDOW_MAX
 * get 0.  Thresholds of C for K = 1 (14.51) and K = 7 (0.518) at tol =
 * 1e-12, computed with Python floats from the same bound, bracket the
 * values below. */
static void window_width(void **state)
{
    static const double tols[] = {1e-15, 1e-12, 1e-6, 1e-3};

    (void)state;
    for (size_t t = 0; t < sizeof tols / sizeof tols[0]; t++)
        for (double C = 1e-3; C < 100.0; C *= 1.07) {
            int K = window_k(C, tols[t]);
            double tail = 0.0;
            if (K == 0)
                continue;
            for (int k = K + 1; k < K + 2000; k++)
                tail += exp(-C * k * (k - 1.0));
            assert_true(tail <= 0.25 * tols[t]);
            assert_true(K >= 1 && K <= VG_RATE_WINDOW_MAX);
        }
    assert_int_equal(window_k(14.6, 1e-12), 1);
    assert_int_equal(window_k(14.4, 1e-12), 2);
    assert_int_equal(window_k(0.52, 1e-12), 7);
    assert_int_equal(window_k(0.51, 1e-12), 8);
    assert_int_equal(window_k(0.03, 1e-12), 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(exp_lanes),
        cmocka_unit_test(log_lanes),
        cmocka_unit_test(lane_helpers),
        cmocka_unit_test(window_width),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
