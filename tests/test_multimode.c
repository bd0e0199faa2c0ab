/*
 * Tests of the many-mode engines (src/multimode.c, src/fft_engine.c)
 * against the single-mode kernel (src/rate.c, itself checked against mpmath
 * in tests/scripts/rates_ref.py), exact identities of the weights, published
 * limits, closed forms, and each other (frequency domain against time
 * domain).  The mpmath brute-force sums and the scipy quadrature of the
 * damped time integral are in tests/scripts/multimode_ref.py.  Inputs are
 * "high-entropy" (2.385, not 2); tolerances are stated per check.
 */
#include <float.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_erf.h>

#include "vg_const.h"
#include "vg_fft.h"
#include "vg_multimode.h"
#include "vg_rate.h"

#define POINTS 400000  /* workspace lattice points */
#define WORK 4e9        /* terms one call may sum (tens of seconds at most) */
#define MAXG 512       /* gaps per call in these tests */
#define FFT_MAX (1u << 22)

/* ------------------------------------------------------------ helpers --- */

static void assert_near(double got, double want, double tol, const char *what)
{
    if (!(fabs(got - want) <= tol))
        fail_msg("%s: got %.17g, want %.17g (difference %.3g > %.3g)", what, got, want,
                 fabs(got - want), tol);
}

static int setup(void **state)
{
    vg_multimode_work *w;
    vg_error err = {VG_OK, ""};

    gsl_set_error_handler_off();
    if (vg_multimode_alloc(16, POINTS, WORK, &w, &err) != VG_OK)
        return -1;
    *state = w;
    return 0;
}

static int teardown(void **state)
{
    vg_multimode_free(*state);
    return 0;
}

static vg_multimode_system system_of(vg_mode_statistics st, const vg_multimode_mode *m,
                                     size_t n)
{
    vg_multimode_system s = {st, n, m};
    return s;
}

static void eval_sum(vg_multimode_work *w, const vg_multimode_system *sys, double lam,
                     double T, double V, double tol, size_t n, const double *gap,
                     vg_multimode_rates *out)
{
    vg_error err = {VG_OK, ""};

    if (vg_multimode_eval(w, sys, lam, T, V, tol, n, gap, out, &err) != VG_OK)
        fail_msg("many-mode sum failed at reorganization %g, T %g: %s", lam, T, err.msg);
}

static void linspace(double *g, size_t n, double lo, double hi)
{
    for (size_t i = 0; i < n; i++)
        g[i] = lo + (hi - lo) * (double)i / (double)(n - 1);
}

/* ------------------------------------------------ one mode = rate.c --- */

/* With a single mode the sum engine and the single-mode kernel evaluate the
 * same Marcus-Levich-Jortner sum by different methods (lattice trapezoid
 * against a channel-by-channel Bessel sum, src/rate.c, which
 * tests/scripts/rates_ref.py checks against mpmath).  ln k agree within the
 * engine's own relative error bound plus 1e-13 relative to max(1, |ln k|)
 * (double rounding of logs as large as 1e3). */
static void check_one_mode(vg_multimode_work *w, vg_mode_statistics st, double S,
                           double hw, double T, double lam)
{
    vg_multimode_mode md = {hw, S, INFINITY};
    vg_multimode_system sys = system_of(st, &md, 1);
    double gap[41];
    vg_multimode_rates r[41];
    vg_rate_mode m;
    vg_error err = {VG_OK, ""};

    linspace(gap, 41, -1385.0, 3085.0);
    eval_sum(w, &sys, lam, T, 1.385, 1e-12, 41, gap, r);
    assert_int_equal(vg_rate_mode_init(&m, st, S, hw, T, &err), VG_OK);
    for (int i = 0; i < 41; i++) {
        vg_rates k;
        assert_int_equal(vg_rate_eval(&m, gap[i], lam, 1.385, 1e-15, &k, &err), VG_OK);
        assert_near(r[i].ln_k_total, k.ln_k_total,
                    r[i].err_total + 1e-13 * fmax(1.0, fabs(k.ln_k_total)), "ln k_total");
        assert_near(r[i].ln_k_elastic, k.ln_k_elastic,
                    r[i].err_elastic + 1e-13 * fmax(1.0, fabs(k.ln_k_elastic)), "ln k_elastic");
        assert_near(r[i].ln_k_assisted, k.ln_k_assisted,
                    r[i].err_assisted + 1e-13 * fmax(1.0, fabs(k.ln_k_assisted)),
                    "ln k_assisted");
        assert_true(r[i].err_total <= 1e-12 + 1e-12 * (1.0 + fabs(r[i].ln_f_total)));
    }
}

static void test_one_mode_thermal(void **state)
{
    check_one_mode(*state, VG_STATS_THERMAL, 0.385, 185.5, 298.15, 38.5);
    check_one_mode(*state, VG_STATS_THERMAL, 2.385, 23.85, 1234.5, 123.4);
    check_one_mode(*state, VG_STATS_THERMAL, 0.0815, 371.3, 77.3, 23.85); /* sparse */
}

static void test_one_mode_frozen(void **state)
{
    check_one_mode(*state, VG_STATS_FROZEN, 0.385, 185.5, 298.15, 38.5);
    check_one_mode(*state, VG_STATS_FROZEN, 3.85, 61.7, 151.3, 238.5);
}

/* Two modes of the same frequency act as one with S_1 + S_2: the
 * generating function (physics reference, "Time domain") is linear in S_j
 * at equal omega_j (for the weights: the sum of two Skellam or Poisson
 * variables with the same step).  A mode with S = 0 does nothing.
 * Reference: the single-mode kernel; tolerance as above.  Only the total
 * compares: (n_1, n_2) = (1, -1) exchanges no net energy but is assisted
 * in the many-mode split (not every n_j is 0), elastic for the merged mode. */
static void test_modes_combine(void **state)
{
    vg_multimode_mode md[3] = {{148.3, 0.2385, INFINITY}, {61.7, 0.0, INFINITY},
                               {148.3, 0.5115, INFINITY}};
    vg_multimode_system sys = system_of(VG_STATS_THERMAL, md, 3);
    double gap[23];
    vg_multimode_rates r[23];
    vg_rate_mode m;
    vg_error err = {VG_OK, ""};

    linspace(gap, 23, -985.0, 2385.0);
    eval_sum(*state, &sys, 61.85, 211.7, 0.5, 1e-12, 23, gap, r);
    assert_int_equal(vg_rate_mode_init(&m, VG_STATS_THERMAL, 0.75, 148.3, 211.7, &err), VG_OK);
    for (int i = 0; i < 23; i++) {
        vg_rates k;
        assert_int_equal(vg_rate_eval(&m, gap[i], 61.85, 0.5, 1e-15, &k, &err), VG_OK);
        assert_near(r[i].ln_k_total, k.ln_k_total,
                    r[i].err_total + 1e-13 * fmax(1.0, fabs(k.ln_k_total)), "combined modes");
    }
}

/* No active mode: F is the Marcus Gaussian, the assisted part is exactly 0
 * (Marcus & Sutin 1985; vg_rate_ln_marcus). */
static void test_no_mode_is_marcus(void **state)
{
    vg_multimode_mode md = {185.5, 0.0, INFINITY};
    vg_multimode_system sys = system_of(VG_STATS_THERMAL, &md, 1);
    double gap[3] = {-238.5, 38.5, 1385.0};
    vg_multimode_rates r[3];

    eval_sum(*state, &sys, 38.5, 298.15, 1.385, 1e-12, 3, gap, r);
    for (int i = 0; i < 3; i++) {
        double want = vg_rate_ln_marcus(gap[i], 38.5, 1.385, 298.15);
        assert_int_equal(r[i].assisted_zero, 1);
        assert_near(r[i].ln_k_total, want, 1e-13 * fmax(1.0, fabs(want)), "no mode");
        assert_true(r[i].ln_k_assisted == -HUGE_VAL);
    }
}

/* --------------------------------------------------------- identities --- */

/* Sum rules: sum_n W_n = 1, sum_n n W_n = S, variance S (2 nbar + 1)
 * (physics reference, "Identities"; Poisson: S), so F, their convolution
 * with the environment's Gaussian (mean lambda, variance 2 lambda kT), has
 * integral 1, mean lambda + sum S_j hbar omega_j and variance
 * 2 lambda kT + sum S_j (hbar omega_j)^2 coth(beta_j / 2).  The integrals are
 * trapezoidal sums with step sigma/3 from the mean - 12 sd to + 28 sd (the
 * Poisson tails of the 371 meV mode reach far up: 7 quanta carry ~1e-12):
 * spectrally accurate for a sum of Gaussians of width >= sigma (Poisson
 * summation: error ~ e^(-2 pi^2 9) ~ 1e-77).  Tolerance 1e-11 (the engine's
 * 1e-12 times ~100 terms near the peak). */
static void check_moments(vg_multimode_work *w, vg_mode_statistics st)
{
    vg_multimode_mode md[3] = {{61.7, 0.385, INFINITY}, {185.5, 0.2385, INFINITY},
                               {371.3, 0.0815, INFINITY}};
    vg_multimode_system sys = system_of(st, md, 3);
    double lam = 38.5, T = 298.15, kT = VG_KB_MEV * T, s2 = 2.0 * lam * kT;
    double mean = lam, var = s2, h = sqrt(s2) / 3.0, sd, m0 = 0, m1 = 0, m2 = 0;
    static double gap[MAXG];
    static vg_multimode_rates r[MAXG];
    size_t n;

    for (int j = 0; j < 3; j++) {
        double c = st == VG_STATS_FROZEN ? 1.0 : 1.0 / tanh(0.5 * md[j].mode / kT);
        mean += md[j].huang_rhys * md[j].mode;
        var += md[j].huang_rhys * md[j].mode * md[j].mode * c;
    }
    sd = sqrt(var);
    n = (size_t)(40.0 * sd / h) + 1;
    assert_true(n <= MAXG);
    for (size_t i = 0; i < n; i++)
        gap[i] = mean - 12.0 * sd + h * (double)i;
    eval_sum(w, &sys, lam, T, 1.0, 1e-12, n, gap, r);
    for (size_t i = 0; i < n; i++) {
        double f = exp(r[i].ln_f_total), x = gap[i] - mean;
        m0 += h * f;
        m1 += h * f * x;
        m2 += h * f * x * x;
    }
    assert_near(m0, 1.0, 1e-11, "integral of F");
    assert_near(m1, 0.0, 1e-11 * sd, "mean of F - (lambda + sum S omega)");
    assert_near(m2, var, 1e-11 * var, "variance of F");
}

static void test_sum_rules(void **state)
{
    check_moments(*state, VG_STATS_THERMAL);
    check_moments(*state, VG_STATS_FROZEN);
}

/* Detailed balance: k(eps) / k(-eps) = exp(eps / kT) for thermal weights
 * (physics reference, "Identities"; each mode's W_{-n} = W_n e^(-n beta)).
 * Tolerance: the two error bounds plus 1e-13 (1 + |ln F|).  The frozen
 * statistics break it (physics reference), which shows the check can fail. */
static void test_detailed_balance(void **state)
{
    vg_multimode_mode md[3] = {{23.85, 1.385, INFINITY}, {148.3, 0.512, INFINITY},
                               {371.3, 0.0815, INFINITY}};
    vg_multimode_system sys = system_of(VG_STATS_THERMAL, md, 3);
    double T = 151.3, kT = VG_KB_MEV * T, gap[14];
    vg_multimode_rates r[14];

    for (int i = 0; i < 7; i++) {
        gap[i] = 23.85 + 123.4 * (double)i;
        gap[13 - i] = -gap[i];
    }
    eval_sum(*state, &sys, 123.4, T, 1.0, 1e-12, 14, gap, r);
    for (int i = 0; i < 7; i++) {
        const vg_multimode_rates *a = &r[i], *b = &r[13 - i];
        assert_near(a->ln_f_total - b->ln_f_total, gap[i] / kT,
                    a->err_total + b->err_total
                        + 1e-13 * (2.0 + fabs(a->ln_f_total) + fabs(b->ln_f_total)),
                    "ln F(eps) - ln F(-eps) - eps / kT");
    }
    sys.stats = VG_STATS_FROZEN;
    eval_sum(*state, &sys, 123.4, T, 1.0, 1e-12, 14, gap, r);
    assert_true(fabs(r[3].ln_f_total - r[10].ln_f_total - gap[3] / kT) > 1.0);
}

/* Marcus limit: modes with hbar omega << kT act as a classical bath,
 * k -> Marcus with reorganization lambda + sum S_j hbar omega_j (physics
 * reference, "Identities").  The leading corrections are cumulants that
 * grow as omega^2 at fixed S omega (variance sum S omega^3 / (6 kT),
 * third cumulant sum S omega^3): the deviation must be small and shrink by
 * about 4 when every frequency is halved at fixed S omega (ratio within
 * [3.5, 4.5]; the next order is relatively beta^2 ~ 1e-2). */
static double marcus_deviation(vg_multimode_work *w, double scale)
{
    vg_multimode_mode md[12];
    vg_multimode_system sys = system_of(VG_STATS_THERMAL, md, 12);
    double lam = 30.85, T = 301.5, lv = 0.0, gap[5];
    double dev = 0.0;
    vg_multimode_rates r[5];

    for (int j = 0; j < 12; j++) {
        md[j].mode = scale * (1.15 + 0.2385 * (double)j);
        md[j].huang_rhys = 7.085 / md[j].mode; /* S omega = 7.085 meV each */
        md[j].lifetime_ps = INFINITY;
        lv += md[j].huang_rhys * md[j].mode;
    }
    for (int i = 0; i < 5; i++) /* lambda_tot +- 1.5 sd of the Marcus Gaussian */
        gap[i] = lam + lv + 1.5 * sqrt(2.0 * (lam + lv) * VG_KB_MEV * T) * (double)(i - 2) / 2.0;
    eval_sum(w, &sys, lam, T, 1.0, 1e-12, 5, gap, r);
    for (int i = 0; i < 5; i++)
        dev = fmax(dev, fabs(r[i].ln_k_total - vg_rate_ln_marcus(gap[i], lam + lv, 1.0, T)));
    return dev;
}

static void test_marcus_limit(void **state)
{
    double d1 = marcus_deviation(*state, 1.0), d2 = marcus_deviation(*state, 0.5);

    assert_true(d1 < 2e-3);
    if (!(d1 / d2 > 3.5 && d1 / d2 < 4.5))
        fail_msg("Marcus limit: deviation %.3g at omega, %.3g at omega/2 (ratio %.3g, want ~4)",
                 d1, d2, d1 / d2);
}

/* ---------------------------------------------------- sum against FFT --- */

/* The frequency-domain sum and the time-domain FFT (an independent
 * evaluation of the same F from the generating function, physics reference
 * "Time domain") agree to 1e-6 relative wherever F is above `floor` (1e-10
 * for spectra a few environment widths wide) of its maximum over the gap
 * grid; where F is below 1e-12 of it the FFT must flag the point (its
 * dynamic range ends there); wherever it trusts a point its own error
 * estimate must cover the difference (beyond the sum's bound). */
static void check_fft(vg_multimode_work *w, const vg_multimode_system *sys, double lam,
                      double T, double lo, double step, size_t n, double floor)
{
    static double gap[MAXG];
    static vg_multimode_rates r[MAXG];
    static vg_fft_point f[MAXG];
    vg_fft_plan plan;
    vg_fft_work *fw = NULL;
    vg_error err = {VG_OK, ""};
    double top = -HUGE_VAL;
    size_t compared = 0;

    assert_true(n <= MAXG);
    for (size_t i = 0; i < n; i++)
        gap[i] = lo + step * (double)i;
    eval_sum(w, sys, lam, T, 1.0, 1e-12, n, gap, r);
    assert_int_equal(vg_fft_plan_make(sys, lam, T, lo, step, n, FFT_MAX, &plan, &err), VG_OK);
    assert_int_equal(vg_fft_alloc(plan.n, &fw, &err), VG_OK);
    assert_int_equal(vg_fft_eval(fw, &plan, sys, f, &err), VG_OK);
    vg_fft_free(fw);
    for (size_t i = 0; i < n; i++)
        top = fmax(top, r[i].ln_f_total);
    for (size_t i = 0; i < n; i++) {
        double rel = r[i].ln_f_total - top;
        if (rel > log(floor)) {
            if (!f[i].trusted)
                fail_msg("FFT flags gap %g where F is %.3g of its maximum", gap[i], exp(rel));
            assert_near(expm1(f[i].ln_f - r[i].ln_f_total), 0.0, 1e-6, "FFT against sum");
            compared++;
        }
        if (rel < log(1e-12) && f[i].trusted)
            fail_msg("FFT trusts gap %g where F is %.3g of its maximum", gap[i], exp(rel));
        if (f[i].trusted && !(fabs(expm1(f[i].ln_f - r[i].ln_f_total)) <= f[i].err + r[i].err_total))
            fail_msg("FFT at gap %g: error %.3g beyond its estimate %.3g", gap[i],
                     fabs(expm1(f[i].ln_f - r[i].ln_f_total)), f[i].err);
    }
    assert_true(compared > n / 3);
}

static void test_sum_against_fft(void **state)
{
    vg_multimode_mode md[3] = {{61.7, 0.385, INFINITY}, {185.5, 0.2385, INFINITY},
                               {371.3, 0.0815, INFINITY}};
    vg_multimode_system sys = system_of(VG_STATS_THERMAL, md, 3);

    check_fft(*state, &sys, 38.5, 298.15, -800.0, 12.5, 301, 1e-10);
    sys.stats = VG_STATS_FROZEN;
    check_fft(*state, &sys, 38.5, 298.15, -400.0, 9.75, 301, 1e-10);
    sys.stats = VG_STATS_THERMAL;
    sys.n_modes = 2;
    check_fft(*state, &sys, 238.5, 151.3, -1500.0, 23.85, 251, 1e-10);
}

/* A hypothetical odorant of twelve modes (invented values, 52 to 371 meV):
 * its spectrum is ~9 environment widths wide, and the FFT's rounding floor
 * lies ~1e-17 below the environment's peak height (4 pi lambda kT)^-1/2,
 * not below F's maximum, so 1e-6 is asked above 1e-8 of the maximum; below
 * that, down to its dynamic range, the FFT's own estimate must hold. */
static void test_many_modes_against_fft(void **state)
{
    vg_multimode_mode md[12];
    vg_multimode_system sys = system_of(VG_STATS_THERMAL, md, 12);

    for (int j = 0; j < 12; j++) {
        md[j].mode = 52.35 + 26.85 * (double)j;
        md[j].huang_rhys = 0.0385 + 0.0215 * (double)((j * 5) % 12);
        md[j].lifetime_ps = INFINITY;
    }
    check_fft(*state, &sys, 30.85, 298.15, -700.0, 12.5, 361, 1e-8);
}

/* With a lifetime of 0.55 ps on one mode the two engines still agree: the
 * sum enumerates (absorbed, emitted) configurations with Voigt profiles,
 * the FFT damps the generating function and adds a subtracted Voigt back
 * (docs/theory.md).  Tolerance 1e-6 where F is above 1e-10 of its maximum. */
static void test_damped_sum_against_fft(void **state)
{
    vg_multimode_mode md[2] = {{61.7, 0.385, 0.55}, {185.5, 0.2385, INFINITY}};
    vg_multimode_system sys = system_of(VG_STATS_THERMAL, md, 2);

    check_fft(*state, &sys, 38.5, 298.15, -600.0, 37.5, 61, 1e-10);
}

/* A lifetime so long (1e12 ps) that the Lorentzians are ~1e-13 meV wide
 * changes nothing in the bulk of the spectrum: the damped configurations
 * (two Poisson counts, docs/theory.md) reproduce the Bessel weights of the
 * undamped mode (their difference is Skellam distributed).  Compared where
 * F (and, for the elastic part, F_elastic) is above 1e-4 of its maximum,
 * where the Lorentzian tails add < 1e-15 relative; tolerance the two bounds
 * plus 1e-13 (1 + |ln F|). */
static void test_long_lifetime_changes_nothing(void **state)
{
    vg_multimode_mode und[2] = {{61.7, 0.385, INFINITY}, {185.5, 0.2385, INFINITY}};
    vg_multimode_mode dmp[2] = {{61.7, 0.385, 1e12}, {185.5, 0.2385, INFINITY}};
    vg_multimode_system su = system_of(VG_STATS_THERMAL, und, 2);
    vg_multimode_system sd = system_of(VG_STATS_THERMAL, dmp, 2);
    double gap[15], top = -HUGE_VAL, top_el = -HUGE_VAL;
    vg_multimode_rates a[15], b[15];

    linspace(gap, 15, -185.5, 610.0);
    eval_sum(*state, &su, 38.5, 298.15, 1.0, 1e-12, 15, gap, a);
    eval_sum(*state, &sd, 38.5, 298.15, 1.0, 1e-12, 15, gap, b);
    for (int i = 0; i < 15; i++) {
        top = fmax(top, a[i].ln_f_total);
        top_el = fmax(top_el, a[i].ln_f_elastic);
    }
    for (int i = 0; i < 15; i++) {
        if (a[i].ln_f_total - top >= log(1e-4))
            assert_near(b[i].ln_f_total, a[i].ln_f_total,
                        a[i].err_total + b[i].err_total + 1e-13 * (1.0 + fabs(a[i].ln_f_total)),
                        "long lifetime, total");
        if (a[i].ln_f_elastic - top_el >= log(1e-4))
            assert_near(b[i].ln_f_elastic, a[i].ln_f_elastic,
                        a[i].err_elastic + b[i].err_elastic
                            + 1e-13 * (1.0 + fabs(a[i].ln_f_elastic)),
                        "long lifetime, elastic");
    }
}

/* -------------------------------------------------------------- Voigt --- */

/* gamma = 0: the Gaussian; at x = 0 the Voigt is w(iy) / (sigma sqrt(2 pi))
 * with w(iy) = e^(y^2) erfc(y), y = gamma / (sigma sqrt 2) (Abramowitz &
 * Stegun 7.1.3 with z = iy); sigma << gamma: the Lorentzian, up to a
 * relative O(sigma^2 / (x^2 + gamma^2)) ~ 1e-10 here.  GSL's erfc (checked
 * status) is the reference; tolerances 1e-13 relative (the stated accuracy). */
static void test_voigt_limits(void **state)
{
    double s = 2.385, norm = log(s * sqrt(2.0 * VG_PI));
    const double ys[4] = {0.0385, 0.5, 3.85, 23.85};

    (void)state;
    assert_near(vg_multimode_ln_voigt(13.85, s, 0.0), -13.85 * 13.85 / (2.0 * s * s) - norm,
                1e-14 * 20.0, "gamma = 0 is the Gaussian");
    for (int i = 0; i < 4; i++) {
        gsl_sf_result e;
        assert_int_equal(gsl_sf_erfc_e(ys[i], &e), GSL_SUCCESS);
        assert_near(vg_multimode_ln_voigt(0.0, s, ys[i] * s * sqrt(2.0)),
                    ys[i] * ys[i] + log(e.val) - norm, 1e-13 * (1.0 + ys[i] * ys[i]),
                    "Voigt at its centre");
    }
    for (int i = 0; i < 3; i++) {
        double x = 38.5 * (double)i, g = 2.385, sig = 2.385e-5;
        assert_near(vg_multimode_ln_voigt(x, sig, g), log(g / (VG_PI * (x * x + g * g))),
                    1e-9, "narrow Gaussian: the Lorentzian");
    }
}

/* -------------------------------------------------------------- sizes --- */

/* vg_multimode_need sizes a workspace that suffices; a much smaller one is
 * refused with a message that says how many points are needed, and so is a
 * call that would take more terms than the workspace allows (here a 0.3 meV
 * wide environment at 1 K against modes of 185 and 370 meV). */
static void test_need_and_small_workspace(void **state)
{
    vg_multimode_mode md[2] = {{61.7, 0.385, INFINITY}, {185.5, 0.2385, INFINITY}};
    vg_multimode_system sys = system_of(VG_STATS_THERMAL, md, 2);
    double gap[5] = {-385.0, 0.0, 238.5, 1000.0, 2385.0};
    vg_multimode_rates r[5];
    vg_multimode_work *w = NULL;
    vg_error err = {VG_OK, ""};
    size_t need = 0;
    double work = 0.0;

    (void)state;
    assert_int_equal(vg_multimode_need(&sys, 38.5, 298.15, -385.0, 2385.0, 5, 1e-12, &need,
                                       &work, &err), VG_OK);
    assert_true(need > 10 && need < POINTS && work > 0.0 && work < WORK);
    assert_int_equal(vg_multimode_alloc(2, need + need / 2, 4.0 * work, &w, &err), VG_OK);
    assert_int_equal(vg_multimode_eval(w, &sys, 38.5, 298.15, 1.0, 1e-12, 5, gap, r, &err),
                     VG_OK);
    vg_multimode_free(w);
    assert_int_equal(vg_multimode_alloc(2, need / 8, WORK, &w, &err), VG_OK);
    assert_int_equal(vg_multimode_eval(w, &sys, 38.5, 298.15, 1.0, 1e-12, 5, gap, r, &err),
                     VG_ENUMERIC);
    assert_non_null(strstr(err.msg, "needs"));
    vg_multimode_free(w);
    md[0].mode = 370.5;
    assert_int_equal(vg_multimode_alloc(2, POINTS, 1e8, &w, &err), VG_OK);
    assert_int_equal(vg_multimode_eval(w, &sys, 0.5, 1.0, 1.0, 1e-10, 5, gap, r, &err),
                     VG_ENUMERIC);
    if (!strstr(err.msg, "would take") && !strstr(err.msg, "needs"))
        fail_msg("unexpected message '%s'", err.msg);
    vg_multimode_free(w);
}

/* ------------------------------------------------------- error paths --- */

static void expect_error(vg_multimode_work *w, const vg_multimode_system *sys, double lam,
                         double T, double V, double tol, double gap, const char *word)
{
    vg_multimode_rates r;
    vg_error err = {VG_OK, ""};

    assert_int_equal(vg_multimode_eval(w, sys, lam, T, V, tol, 1, &gap, &r, &err), VG_ENUMERIC);
    if (!strstr(err.msg, word))
        fail_msg("message '%s' does not name '%s'", err.msg, word);
}

static void test_error_paths(void **state)
{
    vg_multimode_work *w = *state, *none = NULL;
    vg_multimode_mode md = {185.5, 0.385, INFINITY};
    vg_multimode_system sys = system_of(VG_STATS_THERMAL, &md, 1);
    vg_multimode_rates r;
    vg_error err = {VG_OK, ""};
    double gap = 200.0;

    expect_error(w, &sys, -1.0, 298.15, 1.0, 1e-12, 200.0, "reorganization");
    expect_error(w, &sys, 38.5, 0.0, 1.0, 1e-12, 200.0, "temperature");
    expect_error(w, &sys, 38.5, 298.15, -1.0, 1e-12, 200.0, "electronic_coupling");
    expect_error(w, &sys, 38.5, 298.15, 1.0, 1.0, 200.0, "tolerance");
    expect_error(w, &sys, 38.5, 298.15, 1.0, 1e-12, NAN, "gap");
    md.mode = 0.0;
    expect_error(w, &sys, 38.5, 298.15, 1.0, 1e-12, 200.0, "'mode'");
    md.mode = 185.5;
    md.huang_rhys = -0.1;
    expect_error(w, &sys, 38.5, 298.15, 1.0, 1e-12, 200.0, "huang_rhys");
    md.huang_rhys = 0.385;
    md.lifetime_ps = 0.0;
    expect_error(w, &sys, 38.5, 298.15, 1.0, 1e-12, 200.0, "lifetime");
    md.lifetime_ps = 1e13;
    expect_error(w, &sys, 38.5, 298.15, 1.0, 1e-12, 200.0, "lifetime");
    md.lifetime_ps = INFINITY;
    sys.stats = (vg_mode_statistics)7;
    expect_error(w, &sys, 38.5, 298.15, 1.0, 1e-12, 200.0, "mode_statistics");
    sys.stats = VG_STATS_THERMAL;
    assert_int_equal(vg_multimode_eval(NULL, &sys, 38.5, 298.15, 1.0, 1e-12, 1, &gap, &r, &err),
                     VG_ENUMERIC);
    assert_int_equal(vg_multimode_alloc(0, 100, WORK, &none, &err), VG_EUSAGE);
    assert_null(none);
    assert_int_equal(vg_multimode_alloc(1, 0, WORK, &none, &err), VG_EUSAGE);
    assert_int_equal(vg_multimode_alloc(1, 100, 0.0, &none, &err), VG_EUSAGE);
    vg_multimode_free(NULL);
}

/* V = 0: every rate is zero (flag, -inf logs), the F are still given. */
static void test_zero_coupling(void **state)
{
    vg_multimode_mode md = {185.5, 0.385, INFINITY};
    vg_multimode_system sys = system_of(VG_STATS_THERMAL, &md, 1);
    double gap = 223.85;
    vg_multimode_rates r;

    eval_sum(*state, &sys, 38.5, 298.15, 0.0, 1e-12, 1, &gap, &r);
    assert_int_equal(r.coupling_zero, 1);
    assert_true(r.ln_k_total == -HUGE_VAL && r.ln_k_assisted == -HUGE_VAL);
    assert_true(isfinite(r.ln_f_total) && isfinite(r.ln_f_assisted));
}

static void test_fft_error_paths(void **state)
{
    vg_multimode_mode md = {185.5, 0.385, INFINITY};
    vg_multimode_system sys = system_of(VG_STATS_THERMAL, &md, 1);
    vg_fft_plan plan;
    vg_fft_work *fw = NULL;
    vg_fft_point pt[4];
    vg_error err = {VG_OK, ""};

    (void)state;
    assert_int_equal(vg_fft_plan_make(&sys, 38.5, 298.15, -100.0, 0.0, 4, FFT_MAX, &plan, &err),
                     VG_ENUMERIC);
    assert_int_equal(vg_fft_plan_make(&sys, -38.5, 298.15, -100.0, 5.0, 4, FFT_MAX, &plan, &err),
                     VG_ENUMERIC);
    assert_int_equal(vg_fft_plan_make(&sys, 38.5, 298.15, -100.0, 5.0, 4, 64, &plan, &err),
                     VG_ENUMERIC);
    assert_non_null(strstr(err.msg, "FFT needs"));
    assert_int_equal(vg_fft_plan_make(&sys, 38.5, 298.15, -100.0, 5.0, 4, FFT_MAX, &plan, &err),
                     VG_OK);
    assert_int_equal(vg_fft_alloc(plan.n + 1, &fw, &err), VG_OK);
    assert_int_equal(vg_fft_eval(fw, &plan, &sys, pt, &err), VG_ENUMERIC);
    vg_fft_free(fw);
    assert_int_equal(vg_fft_alloc(0, &fw, &err), VG_EUSAGE);
    assert_null(fw);
    vg_fft_free(NULL);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_one_mode_thermal),
        cmocka_unit_test(test_one_mode_frozen),
        cmocka_unit_test(test_modes_combine),
        cmocka_unit_test(test_no_mode_is_marcus),
        cmocka_unit_test(test_sum_rules),
        cmocka_unit_test(test_detailed_balance),
        cmocka_unit_test(test_marcus_limit),
        cmocka_unit_test(test_sum_against_fft),
        cmocka_unit_test(test_many_modes_against_fft),
        cmocka_unit_test(test_damped_sum_against_fft),
        cmocka_unit_test(test_long_lifetime_changes_nothing),
        cmocka_unit_test(test_voigt_limits),
        cmocka_unit_test(test_need_and_small_workspace),
        cmocka_unit_test(test_error_paths),
        cmocka_unit_test(test_zero_coupling),
        cmocka_unit_test(test_fft_error_paths),
    };

    return cmocka_run_group_tests(tests, setup, teardown);
}
