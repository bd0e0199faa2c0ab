/*
 * Tests of the rate kernel (src/rate.c) and the metrics (src/metrics.c)
 * against exact identities, published limits and closed forms
 * (docs/theory.md names the sources; each check names its own).
 * Inputs are "high-entropy" (2.385, not 2) so that a swapped argument or a
 * dropped factor cannot pass by accident.  Tolerances are stated per check;
 * the independent numerical reference (mpmath, scipy) is
 * tests/scripts/rates_ref.py.
 */
#include <float.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_bessel.h>

#include "vg_const.h"
#include "vg_metrics.h"
#include "vg_rate.h"

#define TIGHT 1e-14 /* truncation tolerance handed to the kernel */

/* ------------------------------------------------------------ helpers --- */

static void assert_near(double got, double want, double tol, const char *what)
{
    if (!(fabs(got - want) <= tol))
        fail_msg("%s: got %.17g, want %.17g (difference %.3g > %.3g)", what, got, want,
                 fabs(got - want), tol);
}

static vg_rate_mode mode_of(vg_mode_statistics st, double S, double hw, double T)
{
    vg_rate_mode m;
    vg_error err = {VG_OK, ""};

    if (vg_rate_mode_init(&m, st, S, hw, T, &err) != VG_OK)
        fail_msg("mode init failed: %s", err.msg);
    return m;
}

static vg_rates eval_at(vg_rate_mode *m, double gap, double lam, double V, double tol)
{
    vg_rates r;
    vg_error err = {VG_OK, ""};

    if (vg_rate_eval(m, gap, lam, V, tol, &r, &err) != VG_OK)
        fail_msg("eval failed at gap %g, reorganization %g: %s", gap, lam, err.msg);
    return r;
}

static double ln_add(double a, double b)
{
    double hi = fmax(a, b);

    if (hi == -HUGE_VAL)
        return hi;
    return hi + log1p(exp(fmin(a, b) - hi));
}

/* (2 pi / hbar) V^2 (4 pi lam kT)^-1/2 in s^-1, in linear form for benign
 * inputs (Marcus & Sutin 1985), energies given in meV. */
static double prefactor_direct(double V, double lam, double T)
{
    double v = V / 1000.0, l = lam / 1000.0, kt = VG_KB_EV * T;

    return 2.0 * VG_PI / VG_HBAR_EVS * v * v / sqrt(4.0 * VG_PI * l * kt);
}

/* ---------------------------------------------------- weights: identities --- */

/* Sum rule, first moment and variance of the thermal weights (they form the
 * Skellam distribution of emitted minus absorbed quanta): sum W_n = 1,
 * sum n W_n = S, sum n^2 W_n - S^2 = S (2 nbar + 1) (docs/theory.md, "Identities").
 * Frozen: Poisson, variance S.  A few thousand terms each good to ~1e-14:
 * tolerance 1e-12 on the sum, 1e-11 relative on the moments. */
static void check_moments(vg_mode_statistics st, double S, double hw, double T)
{
    vg_rate_mode m = mode_of(st, S, hw, T);
    double nbar = 1.0 / expm1(m.beta);
    double var = st == VG_STATS_FROZEN ? S : S * (2.0 * nbar + 1.0);
    long reach = (long)(S + 40.0 * sqrt(var) + 40.0);
    double s0 = 0.0, s1 = 0.0, s2 = 0.0;

    for (long n = -reach; n <= reach; n++) {
        double w = exp(vg_rate_ln_weight(&m, n));
        s0 += w;
        s1 += (double)n * w;
        s2 += (double)n * (double)n * w;
    }
    assert_near(s0, 1.0, 1e-12, "sum of W_n");
    assert_near(s1, S, 1e-11 * (S + sqrt(var)), "first moment");
    assert_near(s2 - s1 * s1, var, 1e-11 * (var + S * S), "variance");
}

static void test_weight_moments(void **state)
{
    (void)state;
    check_moments(VG_STATS_THERMAL, 2.385, 61.7, 298.15);   /* nbar ~ 0.1 */
    check_moments(VG_STATS_THERMAL, 0.385, 23.85, 1234.5);  /* nbar ~ 4 */
    check_moments(VG_STATS_THERMAL, 11.85, 4.85, 2385.0);   /* nbar ~ 42, wide */
    check_moments(VG_STATS_THERMAL, 23.85, 185.5, 23.85);   /* beta ~ 90 */
    check_moments(VG_STATS_FROZEN, 2.385, 61.7, 298.15);
    check_moments(VG_STATS_FROZEN, 38.5, 61.7, 298.15);
}

/* W_{-n} = W_n e^{-n beta} (docs/theory.md; detailed balance of the mode).
 * Tolerance 1e-12 relative to max(1, |ln W|). */
static void check_reflection(double S, double hw, double T)
{
    vg_rate_mode m = mode_of(VG_STATS_THERMAL, S, hw, T);

    for (long n = 1; n <= 60; n++) {
        double up = vg_rate_ln_weight(&m, n), down = vg_rate_ln_weight(&m, -n);
        assert_near(down, up - (double)n * m.beta, 1e-12 * fmax(1.0, fabs(down)),
                    "ln W_-n = ln W_n - n beta");
    }
}

static void test_weight_reflection(void **state)
{
    (void)state;
    check_reflection(2.385, 61.7, 298.15);
    check_reflection(23.85, 4.85, 2385.0);
    check_reflection(2.385, 256.0, 60.0);
    check_reflection(0.0385, 1000.0, 1.0); /* beta ~ 1.2e4: x underflows */
}

/* ln W_n is concave in n (the premise of the window's tail bound, see
 * docs/theory.md): for the thermal weights by the Turan-type inequality
 * I_v^2 > I_{v-1} I_{v+1} for modified Bessel functions (Thiruvenkatachar &
 * Nanjundiah, Proc. Indian Acad. Sci. A 33, 373, 1951, from memory) and
 * I_0 > I_1 across n = 0; Poisson weights because S/(n+1) decreases.  The
 * second difference must be <= 0 up to rounding, 1e-12 of max(1, |ln W|). */
static void check_concave(vg_mode_statistics st, double S, double hw, double T)
{
    vg_rate_mode m = mode_of(st, S, hw, T);
    long lo = st == VG_STATS_FROZEN ? 1 : -400;

    for (long n = lo; n <= 400; n++) {
        double a = vg_rate_ln_weight(&m, n - 1), b = vg_rate_ln_weight(&m, n);
        double c = vg_rate_ln_weight(&m, n + 1);
        if (!(a - 2.0 * b + c <= 1e-12 * fmax(1.0, fabs(b))))
            fail_msg("ln W_n not concave at n = %ld: %.17g %.17g %.17g", n, a, b, c);
    }
}

static void test_weight_concave(void **state)
{
    (void)state;
    check_concave(VG_STATS_THERMAL, 2.385, 61.7, 298.15);
    check_concave(VG_STATS_THERMAL, 23.85, 4.85, 2385.0);   /* GSL branch, wide */
    check_concave(VG_STATS_THERMAL, 50.0, 1.0, 5000.0);     /* x ~ 4.3e4 */
    check_concave(VG_STATS_THERMAL, 0.0385, 256.0, 60.0);   /* series branch */
    check_concave(VG_STATS_THERMAL, 2.385, 2.385, 116.3);   /* x ~ 20: GSL, A&S 9.7.7 (n ~ 290-399), series */
    check_concave(VG_STATS_FROZEN, 38.5, 61.7, 298.15);
}

/* 60 K, 256 meV (docs/theory.md): the direct evaluation W_n = exp(-S(2nbar+1))
 * ((nbar+1)/nbar)^(n/2) I_n(2S sqrt(nbar(nbar+1))) over a fixed window
 * |n| <= 50 meets inf * 0 = NaN; ours stays finite and, with e^-beta ~ 1e-22,
 * equals the Poisson weight e^-S S^n / n! to rounding (tolerance 1e-12
 * relative to max(1, |ln W|)). */
static void test_weight_where_direct_formula_fails(void **state)
{
    double S = 2.385, hw = 256.0, T = 60.0;
    vg_rate_mode m = mode_of(VG_STATS_THERMAL, S, hw, T);
    double nbar = 1.0 / expm1(m.beta), direct_sum = 0.0;

    (void)state;
    for (long n = -50; n <= 50; n++) {
        gsl_sf_result bi;
        int gst = gsl_sf_bessel_In_e((int)n, 2.0 * S * sqrt(nbar * (nbar + 1.0)), &bi);
        double direct = exp(-S * (2.0 * nbar + 1.0)) * pow((nbar + 1.0) / nbar, 0.5 * (double)n)
                        * (gst == GSL_SUCCESS ? bi.val : 0.0);
        double lw = vg_rate_ln_weight(&m, n);
        direct_sum += direct;
        assert_true(lw == -HUGE_VAL || isfinite(lw));
        if (n >= 0)
            assert_near(lw, -S + (double)n * log(S) - lgamma((double)n + 1.0),
                        1e-12 * fmax(1.0, fabs(lw)), "thermal weight at 60 K vs Poisson");
    }
    assert_true(isnan(direct_sum));
}

/* ------------------------------------------------------- Bessel values --- */

/* ln I_n(x) against mpmath.besseli at 30 digits (values quoted to 22
 * digits), one case per branch and either side of each hand-over.
 * Tolerance 1e-12 relative to max(1, |ln I|): GSL's backward-recurrence
 * range (n = 150, x = 238.5) is good to ~2e-13 of e^-x I_n. */
static void test_bessel_branches(void **state)
{
    static const struct {
        long n;
        double x, want;
    } ref[] = {
        {7, 2.385, -7.116755783477972874334},               /* power series */
        {1, 0.385, -1.629187864724634366492},               /* power series */
        {38, 6.244997992153401, -59.45089520651622324009},  /* x^2 just below n + 1 */
        {38, 6.244998004643397, -59.45089512952239994472},  /* just above: GSL */
        {2, 23.85, 21.2648802459104371126},                 /* GSL */
        {0, 2385.0, 2380.192636687027986401},               /* GSL, large x */
        {150, 238.5, 188.9882358419476703976},              /* GSL */
        {300, 18.0, -755.469493507162201283},               /* GSL underflows: A&S 9.7.7 */
        {2385, 1000.0, -1243.400690867466946499},           /* A&S 9.7.7 */
        {100000, 43000.0, -49196.7133758790197218},         /* A&S 9.7.7 */
    };

    (void)state;
    for (size_t i = 0; i < sizeof ref / sizeof ref[0]; i++) {
        double got = vg_rate_ln_bessel_i(ref[i].n, ref[i].x, log(ref[i].x));
        assert_near(got, ref[i].want, 1e-12 * fmax(1.0, fabs(ref[i].want)),
                    "ln I_n(x) vs mpmath.besseli");
        assert_true(got == vg_rate_ln_bessel_i(-ref[i].n, ref[i].x, log(ref[i].x)));
    }
    /* x underflowed, ln x kept: I_n(x) = (x/2)^n / n! (A&S 9.6.7) */
    assert_near(vg_rate_ln_bessel_i(5, 0.0, -2385.0), 5.0 * (-2385.0 - log(2.0)) - log(120.0),
                1e-12 * 11930.0, "ln I_5 at ln x = -2385");
    assert_true(vg_rate_ln_bessel_i(0, 0.0, -HUGE_VAL) == 0.0);  /* I_0(0) = 1 */
    assert_true(vg_rate_ln_bessel_i(3, 0.0, -HUGE_VAL) == -HUGE_VAL); /* I_3(0) = 0 */
}

/* ------------------------------------------------------------- Marcus --- */

/* Marcus (Marcus & Sutin 1985): maximum at gap = reorganization with value
 * (2 pi/hbar) V^2 (4 pi lam kT)^-1/2, ln k symmetric about it.  Tolerance
 * 1e-13 on ln k (a few roundings of numbers of size ~30). */
static void test_marcus_peak_and_symmetry(void **state)
{
    double V = 2.385, lam = 238.5, T = 298.15;
    double top = vg_rate_ln_marcus(lam, lam, V, T);

    (void)state;
    assert_near(top, log(prefactor_direct(V, lam, T)), 1e-13, "Marcus maximum");
    for (double dg = 0.385; dg < 1000.0; dg *= 3.85) {
        double up = vg_rate_ln_marcus(lam + dg, lam, V, T);
        double down = vg_rate_ln_marcus(lam - dg, lam, V, T);
        assert_near(up, down, 1e-13 * fmax(1.0, fabs(up)), "ln k symmetric about lam");
        assert_true(up < top);
    }
    assert_true(vg_rate_ln_marcus(lam, lam, 0.0, T) == -HUGE_VAL);
}

/* S -> 0 gives the bare Marcus rate (docs/theory.md).  At gap = lam every
 * channel's Gaussian is at most the elastic one, so
 * W_0 <= k_total/k_bare <= sum W_n = 1, and 1 - W_0 <= S coth(beta/2):
 * |ln(k_total/k_bare)| <= 2 S coth(beta/2) for small S.  S == 0 exactly:
 * identical, and the fill rules of vg_metrics.h. */
static void test_small_s_is_marcus(void **state)
{
    double lam = 238.5, V = 2.385, T = 298.15, hw = 61.7, S = 2.385e-9;
    vg_rate_mode m = mode_of(VG_STATS_THERMAL, S, hw, T);
    vg_rates r = eval_at(&m, lam, lam, V, TIGHT);
    double met[VG_N_METRICS];

    (void)state;
    assert_true(fabs(r.ln_k_total - r.ln_k_bare) <= 2.0 * S / tanh(0.5 * m.beta));
    assert_true(r.ln_k_bare == vg_rate_ln_marcus(lam, lam, V, T));
    m = mode_of(VG_STATS_THERMAL, 0.0, hw, T);
    r = eval_at(&m, 123.85, lam, V, TIGHT);
    assert_true(r.assisted_zero && !r.coupling_zero);
    assert_true(r.ln_k_total == r.ln_k_bare && r.ln_k_elastic == r.ln_k_bare);
    vg_metrics_from_rates(&r, met);
    assert_true(met[VG_M_LOG10_K_ASSISTED] == VG_FILL && met[VG_M_LOG10_RATIO] == VG_FILL);
    assert_true(met[VG_M_ASSISTED_FRACTION] == 0.0 && met[VG_M_LOG10_CONTRAST] == 0.0);
    assert_near(met[VG_M_LOG10_K_TOTAL], vg_rate_ln_marcus(123.85, lam, V, T) / VG_LN10,
                0.0, "log10 k_total at S = 0");
}

/* hbar omega << k_B T: the mode becomes classical and the total rate is
 * Marcus with reorganization lam + S hbar omega (docs/theory.md; Jortner 1976).
 * A limit, not an identity: the leading corrections are the mode's
 * effective temperature (hbar omega/2) coth(beta/2) = kT (1 + beta^2/12),
 * beta^2/12 ~ 1e-5 here, and its third cumulant S (hbar omega)^3 against
 * sigma^3, ~1e-5; tolerance 1e-4 on ln k.  Leaving out S hbar omega is off
 * by more than 1e-2, so the check can tell. */
static void test_classical_mode_limit(void **state)
{
    double T = 2385.0, hw = 2.385, S = 12.85, lam = 123.85, V = 2.385;
    double lam_tot = lam + S * hw;
    vg_rate_mode m = mode_of(VG_STATS_THERMAL, S, hw, T);

    (void)state;
    assert_true(m.beta < 0.012);
    for (double gap = lam_tot - 100.0; gap <= lam_tot + 400.0; gap += 123.85) {
        vg_rates r = eval_at(&m, gap, lam, V, TIGHT);
        assert_near(r.ln_k_total, vg_rate_ln_marcus(gap, lam_tot, V, T), 1e-4,
                    "classical-mode limit");
        assert_true(fabs(r.ln_k_total - vg_rate_ln_marcus(gap, lam, V, T)) > 1e-2);
    }
}

/* ------------------------------------------------------ detailed balance --- */

/* k(gap) / k(-gap) = exp(gap / kT) for the thermal mode, channel by channel
 * (W_{-n} = W_n e^{-n beta} and the Gaussians' ratio exp((gap - n hw)/kT);
 * docs/theory.md).  Each rate is good to tol/2 + rounding: tolerance 1e-12 on
 * the ln ratio.  The frozen (Poisson) weights break it (docs/theory.md). */
static void check_balance(double gap, double lam, double S, double hw, double T)
{
    vg_rate_mode m = mode_of(VG_STATS_THERMAL, S, hw, T);
    vg_rates up = eval_at(&m, gap, lam, 2.385, TIGHT);
    vg_rates down = eval_at(&m, -gap, lam, 2.385, TIGHT);
    double want = gap / m.kT, tol = 1e-12 * fmax(1.0, fabs(up.ln_k_total));

    assert_near(up.ln_k_total - down.ln_k_total, want, tol, "detailed balance, total");
    assert_near(up.ln_k_elastic - down.ln_k_elastic, want, tol, "detailed balance, elastic");
    assert_near(up.ln_k_assisted - down.ln_k_assisted, want, tol, "detailed balance, assisted");
}

static void test_detailed_balance(void **state)
{
    vg_rate_mode fm = mode_of(VG_STATS_FROZEN, 2.385, 61.7, 298.15);
    vg_rates up, down;

    (void)state;
    check_balance(123.85, 238.5, 2.385, 61.7, 298.15);
    check_balance(238.5, 123.85, 0.385, 185.5, 77.35);
    check_balance(1385.0, 2385.0, 23.85, 4.85, 2385.0);
    up = eval_at(&fm, 123.85, 238.5, 2.385, TIGHT);
    down = eval_at(&fm, -123.85, 238.5, 2.385, TIGHT);
    assert_true(fabs(up.ln_k_total - down.ln_k_total - 123.85 / fm.kT) > 0.1);
}

/* --------------------------------------------------- frozen crossover --- */

/* Frozen mode: k_1 = k_0 at gap = lam + hw/2 + (2 lam kT/hw) ln(1/S)
 * (from the Poisson weights, docs/theory.md).  Exponents of size ~10: tolerance
 * 1e-12 on ln k_1 - ln k_0, and the sign on either side. */
static void test_frozen_crossover(void **state)
{
    double lam = 23.85, hw = 185.5, T = 298.15, S = 0.0385, V = 2.385;
    vg_rate_mode m = mode_of(VG_STATS_FROZEN, S, hw, T);
    double cross = lam + 0.5 * hw + 2.0 * lam * m.kT / hw * log(1.0 / S);

    (void)state;
    assert_near(vg_rate_ln_channel(&m, cross, lam, V, 1) - vg_rate_ln_channel(&m, cross, lam, V, 0),
                0.0, 1e-12, "k_1 = k_0 at the crossover gap");
    assert_true(vg_rate_ln_channel(&m, cross + 0.385, lam, V, 1)
                > vg_rate_ln_channel(&m, cross + 0.385, lam, V, 0));
    assert_true(vg_rate_ln_channel(&m, cross - 0.385, lam, V, 1)
                < vg_rate_ln_channel(&m, cross - 0.385, lam, V, 0));
    assert_true(vg_rate_ln_channel(&m, cross, lam, V, -1) == -HUGE_VAL);
}

/* ------------------------------------------------------ window vs brute --- */

/* The window's sums against a log-sum over a range ten times wider than the
 * window plus 200 channels each side (vg_rate_ln_channel, n != 0 for the
 * assisted part).  With tol = 1e-14 the omitted part is below 5e-15:
 * tolerance 1e-12 relative on each rate.  With tol = 1e-6 the difference
 * must stay below 1e-6 (the promise of vg_rate.h). */
static void check_window(vg_mode_statistics st, double gap, double lam, double S,
                         double hw, double T)
{
    vg_rate_mode m = mode_of(st, S, hw, T);
    vg_rates r = eval_at(&m, gap, lam, 2.385, TIGHT);
    vg_rates loose = eval_at(&m, gap, lam, 2.385, 1e-6);
    long wide = 10 * (r.n_hi - r.n_lo) + 200;
    double as = -HUGE_VAL;

    assert_true(r.n_lo <= r.n_peak && r.n_peak <= r.n_hi);
    for (long n = r.n_peak - wide; n <= r.n_peak + wide; n++)
        if (n != 0 && (st == VG_STATS_THERMAL || n > 0))
            as = ln_add(as, vg_rate_ln_channel(&m, gap, lam, 2.385, n));
    assert_near(r.ln_k_assisted, as, 1e-12 * fmax(1.0, fabs(as)), "assisted vs brute force");
    assert_near(r.ln_k_total, ln_add(as, r.ln_k_elastic), 1e-12 * fmax(1.0, fabs(as)),
                "total vs brute force");
    assert_true(fabs(expm1(loose.ln_k_assisted - as)) <= 1e-6);
}

static void test_window_vs_brute_force(void **state)
{
    (void)state;
    check_window(VG_STATS_THERMAL, 230.0, 30.0, 0.0385, 200.0, 298.15);
    check_window(VG_STATS_THERMAL, 2385.0, 123.85, 2.385, 61.7, 298.15);
    check_window(VG_STATS_THERMAL, -1385.0, 238.5, 23.85, 4.85, 2385.0);
    check_window(VG_STATS_THERMAL, 3000.0, 3000.0, 50.0, 1.0, 5000.0);
    check_window(VG_STATS_THERMAL, 123.85, 0.385, 0.385, 385.0, 23.85);
    check_window(VG_STATS_FROZEN, 2385.0, 123.85, 2.385, 61.7, 298.15);
    check_window(VG_STATS_FROZEN, -385.0, 23.85, 38.5, 23.85, 77.35);
}

/* ------------------------------------------------------------ the cache --- */

static void assert_same_rates(const vg_rates *a, const vg_rates *b)
{
    const double *x[] = {&a->ln_k_elastic, &a->ln_k_assisted, &a->ln_k_total, &a->ln_k_bare,
                         &a->ln_fc_elastic, &a->ln_fc_assisted, &a->ln_fc_total,
                         &a->ln_fc_bare};
    const double *y[] = {&b->ln_k_elastic, &b->ln_k_assisted, &b->ln_k_total, &b->ln_k_bare,
                         &b->ln_fc_elastic, &b->ln_fc_assisted, &b->ln_fc_total,
                         &b->ln_fc_bare};

    for (size_t i = 0; i < sizeof x / sizeof x[0]; i++)
        assert_memory_equal(x[i], y[i], sizeof(double));
    assert_memory_equal(&a->assisted_fraction, &b->assisted_fraction, sizeof(double));
    assert_true(a->n_lo == b->n_lo && a->n_hi == b->n_hi && a->n_peak == b->n_peak);
}

/* The table is a pure cache (vg_rate.h): results are bit-identical without
 * it, with it empty, half filled, full, and for channels outside it. */
static void test_cache_is_transparent(void **state)
{
    double tab[41];
    unsigned char set[41];
    const double gaps[] = {-2385.0, -123.85, 0.0, 230.0, 385.0, 1238.5, 2999.5};
    vg_rate_mode bare = mode_of(VG_STATS_THERMAL, 2.385, 61.7, 298.15);
    vg_rate_mode cached = bare;

    (void)state;
    vg_rate_mode_attach_table(&cached, -20, 41, tab, set);
    for (int pass = 0; pass < 2; pass++)
        for (size_t i = 0; i < sizeof gaps / sizeof gaps[0]; i++) {
            vg_rates a = eval_at(&bare, gaps[i], 123.85, 2.385, TIGHT);
            vg_rates b = eval_at(&cached, gaps[i], 123.85, 2.385, TIGHT);
            assert_same_rates(&a, &b);
        }
    for (long n = -20; n <= 20; n++)
        assert_true(set[n + 20] == 0
                    || tab[n + 20] == vg_rate_ln_weight(&bare, n));
    assert_true(vg_rate_ln_weight_cached(&cached, 385) == vg_rate_ln_weight(&bare, 385));
}

/* -------------------------------------------------- receptor estimate --- */

/* Inelastic tunnelling estimate for olfactory receptors (Brookes,
 * Hartoutsiou, Horsfield & Stoneham, PRL 98, 038101, 2007; values from
 * memory): hbar omega ~ 200 meV, lam ~ 30 meV, V ~ 1 meV, S ~ 0.01-0.1, gap
 * at resonance lam + hbar omega, room temperature (298.15 K, common
 * practice).  At resonance the n = 1 channel sits at the Gaussian's centre,
 * so the physics alone gives k_assisted ~ P S e^-S with
 * P = (2 pi/hbar) V^2 (4 pi lam kT)^-1/2 ~ 9.7e10 s^-1, i.e.
 * 1/k_assisted from 0.11 ns (S = 0.1) to 1.04 ns (S = 0.01).
 *   - that closed form within 2e-3 (neglected: nbar ~ 4e-4 of the thermal
 *     weight, and channels n = 2, -1 that are e^-13 and e^-beta off);
 *   - the paper's "ns time scale": accepted band 0.01 ns .. 10 ns, a decade
 *     either side of what the closed form gives over S = 0.01-0.1;
 *   - the paper's "elastic orders of magnitude slower": log10 ratio >= 2. */
static void test_receptor_estimate(void **state)
{
    const double S_list[] = {0.01, 0.0385, 0.1};
    double hw = 200.0, lam = 30.0, V = 1.0, T = 298.15;

    (void)state;
    for (size_t i = 0; i < 3; i++) {
        double S = S_list[i];
        vg_rate_mode m = mode_of(VG_STATS_THERMAL, S, hw, T);
        vg_rates r = eval_at(&m, lam + hw, lam, V, TIGHT);
        double met[VG_N_METRICS];
        double tau_ns = 1e9 * exp(-r.ln_k_assisted);
        double closed = prefactor_direct(V, lam, T) * S * exp(-S);

        vg_metrics_from_rates(&r, met);
        assert_near(exp(r.ln_k_assisted) / closed, 1.0, 2e-3, "resonant closed form");
        assert_true(tau_ns >= 0.01 && tau_ns <= 10.0);
        assert_true(met[VG_M_LOG10_RATIO] >= 2.0);
    }
}

/* ----------------------------------------------------- domain corners --- */

static void check_finite_point(vg_rate_mode *m, double gap, double lam, double V)
{
    vg_rates r = eval_at(m, gap, lam, V, 1e-12);
    double met[VG_N_METRICS];

    assert_true(isfinite(r.ln_fc_elastic) && isfinite(r.ln_fc_total) && isfinite(r.ln_fc_bare));
    assert_true(r.assisted_zero || isfinite(r.ln_fc_assisted));
    assert_true(r.n_lo <= r.n_peak && r.n_peak <= r.n_hi);
    vg_metrics_from_rates(&r, met);
    for (int k = 0; k < VG_N_METRICS; k++)
        assert_true(met[k] == VG_FILL || isfinite(met[k]));
    assert_true(met[VG_M_ASSISTED_FRACTION] >= 0.0 && met[VG_M_ASSISTED_FRACTION] <= 1.0);
    assert_true((met[VG_M_LOG10_K_TOTAL] == VG_FILL) == (V == 0.0));
}

/* Every corner of the accepted domain (T 1 .. 5000 K, gap -3000 .. 3000 meV,
 * S 0 .. 50, mode 1 .. 1000 meV, lam 0.1 .. 3000 meV, V 0 .. 1000 meV), both
 * statistics, gives finite numbers or the documented fill; so do the
 * 60 K / 256 meV point where direct formulas give NaN, and S = 1e-4. */
static void test_domain_corners_finite(void **state)
{
    const double T[] = {1.0, 5000.0}, gap[] = {-3000.0, 3000.0}, S[] = {0.0, 1e-4, 50.0};
    const double hw[] = {1.0, 1000.0}, lam[] = {0.1, 3000.0}, V[] = {0.0, 1000.0};

    (void)state;
    for (int st = 0; st < 2; st++)
        for (int a = 0; a < 2; a++)
            for (int c = 0; c < 3; c++)
                for (int d = 0; d < 2; d++) {
                    vg_rate_mode m = mode_of((vg_mode_statistics)st, S[c], hw[d], T[a]);
                    for (int b = 0; b < 2; b++)
                        for (int e = 0; e < 2; e++)
                            for (int f = 0; f < 2; f++)
                                check_finite_point(&m, gap[b], lam[e], V[f]);
                }
    vg_rate_mode m = mode_of(VG_STATS_THERMAL, 2.385, 256.0, 60.0);
    for (double g = -3000.0; g <= 3000.0; g += 238.5)
        check_finite_point(&m, g, 123.85, 2.385);
    /* beta ~ 1e6 (a 1 eV mode at 0.0116 K): ln x stays finite, x underflows */
    m = mode_of(VG_STATS_THERMAL, 2.385, 1000.0, 0.0116);
    assert_true(m.beta > 1e6 && isfinite(m.ln_x) && m.x == 0.0 && m.c0 == -2.385);
    check_finite_point(&m, 2385.0, 238.5, 2.385);
}

/* ------------------------------------------------------------ metrics --- */

/* Names are found exactly; every metric has units and a long name. */
static void test_metric_table(void **state)
{
    (void)state;
    for (int i = 0; i < VG_N_METRICS; i++) {
        const vg_metric_info *mi = vg_metric_get((vg_metric_id)i);
        assert_non_null(mi);
        assert_int_equal(vg_metric_find(mi->name), i);
        assert_true(strlen(mi->units) > 0 && strlen(mi->long_name) > 0);
    }
    assert_int_equal(vg_metric_find("log10_k_total"), VG_M_LOG10_K_TOTAL);
    assert_int_equal(vg_metric_find("assisted_fraction"), VG_M_ASSISTED_FRACTION);
    assert_int_equal(vg_metric_find("log10_k_Total"), -1);
    assert_int_equal(vg_metric_find("log10_k"), -1);
    assert_int_equal(vg_metric_find(""), -1);
    assert_int_equal(vg_metric_find(NULL), -1);
    assert_null(vg_metric_get(VG_N_METRICS));
}

/* The definitions of docs/theory.md on a hand-made record: log10 = ln / ln 10,
 * contrast = total/bare, the fraction copied from the kernel's record (the
 * kernel forms it from its sums: test_fraction_from_kernel). */
static void test_metric_values(void **state)
{
    vg_rates r = {0};
    double met[VG_N_METRICS];

    (void)state;
    r.ln_fc_elastic = -23.85;
    r.ln_fc_assisted = -23.85 + 800.0;
    r.ln_fc_total = ln_add(r.ln_fc_elastic, r.ln_fc_assisted);
    r.ln_fc_bare = -38.5;
    r.ln_k_elastic = 2.385 + r.ln_fc_elastic;
    r.ln_k_assisted = 2.385 + r.ln_fc_assisted;
    r.ln_k_total = 2.385 + r.ln_fc_total;
    r.ln_k_bare = 2.385 + r.ln_fc_bare;
    r.assisted_fraction = 1.0;
    vg_metrics_from_rates(&r, met);
    assert_near(met[VG_M_LOG10_K_ELASTIC], (2.385 - 23.85) / log(10.0), 1e-15, "log10 k_el");
    assert_near(met[VG_M_LOG10_RATIO], 800.0 / log(10.0), 1e-13, "log10 ratio");
    assert_true(met[VG_M_ASSISTED_FRACTION] == 1.0);
    assert_near(met[VG_M_LOG10_CONTRAST], (r.ln_fc_total + 38.5) / log(10.0), 1e-13, "contrast");
    r.ln_fc_assisted = r.ln_fc_elastic + log(3.0); /* fraction 3/4 */
    r.assisted_fraction = 0.75;
    vg_metrics_from_rates(&r, met);
    assert_true(met[VG_M_ASSISTED_FRACTION] == 0.75);
    r.assisted_zero = 1; /* S = 0: no assisted channel, fraction exactly 0 */
    vg_metrics_from_rates(&r, met);
    assert_true(met[VG_M_ASSISTED_FRACTION] == 0.0 && met[VG_M_LOG10_RATIO] == VG_FILL);
    r.assisted_zero = 0;
    r.coupling_zero = 1; /* V = 0: rates fill, ratios stay */
    vg_metrics_from_rates(&r, met);
    for (int k = VG_M_LOG10_K_ELASTIC; k <= VG_M_LOG10_K_BARE; k++)
        assert_true(met[k] == VG_FILL);
    assert_near(met[VG_M_LOG10_RATIO], log(3.0) / log(10.0), 1e-15, "ratio at V = 0");
}

/* V = 0 through the kernel: coupling_zero, rates fill, ratios as at V > 0. */
static void test_zero_coupling(void **state)
{
    vg_rate_mode m = mode_of(VG_STATS_THERMAL, 2.385, 61.7, 298.15);
    vg_rates z = eval_at(&m, 385.0, 123.85, 0.0, TIGHT);
    vg_rates v = eval_at(&m, 385.0, 123.85, 2.385, TIGHT);
    double mz[VG_N_METRICS], mv[VG_N_METRICS];

    (void)state;
    assert_true(z.coupling_zero && !v.coupling_zero);
    vg_metrics_from_rates(&z, mz);
    vg_metrics_from_rates(&v, mv);
    for (int k = VG_M_LOG10_K_ELASTIC; k <= VG_M_LOG10_K_BARE; k++)
        assert_true(mz[k] == VG_FILL);
    for (int k = VG_M_LOG10_RATIO; k < VG_N_METRICS; k++)
        assert_true(mz[k] == mv[k]);
    assert_true(vg_rate_ln_channel(&m, 385.0, 123.85, 0.0, 1) == -HUGE_VAL);
}

/* -------------------------------------------------------- error paths --- */

/* A failure: the status, and a message naming its subject, lower case, no
 * full stop (house style). */
static void assert_fails(vg_status st, const vg_error *err, const char *subject)
{
    size_t len = strlen(err->msg);

    assert_int_equal(st, VG_ENUMERIC);
    assert_int_equal(err->status, VG_ENUMERIC);
    if (!strstr(err->msg, subject))
        fail_msg("message '%s' does not name %s", err->msg, subject);
    assert_true(len > 0 && err->msg[len - 1] != '.');
    assert_false(err->msg[0] >= 'A' && err->msg[0] <= 'Z');
}

/* The fraction the kernel forms from its sums against its own logs:
 * k_as / k_tot = exp(ln k_as - ln k_tot) and k_el / k_tot = 1 - fraction
 * (the definitions, docs/theory.md), over points on both sides of the
 * elastic/assisted crossover, deep in either regime (fraction -> 0 and -> 1),
 * and at 1 K where the steps leave the linear range (the log path). */
static void test_fraction_from_kernel(void **state)
{
    static const double gaps[] = {-800.0, -200.0, 0.0, 30.0, 100.0, 230.0, 430.0, 1500.0};
    static const double temps[] = {1.0, 77.35, 298.15, 2385.0};
    static const double S[] = {1e-6, 0.0385, 2.385};

    (void)state;
    for (size_t t = 0; t < 4; t++)
        for (size_t k = 0; k < 3; k++) {
            vg_rate_mode m = mode_of(VG_STATS_THERMAL, S[k], 200.0, temps[t]);
            for (size_t i = 0; i < 8; i++) {
                vg_rates r = eval_at(&m, gaps[i], 30.0, 1.0, TIGHT);
                double f = r.assisted_fraction;
                assert_true(f >= 0.0 && f <= 1.0);
                assert_near(f, exp(r.ln_fc_assisted - r.ln_fc_total), 1e-13, "fraction");
                assert_near(1.0 - f, exp(r.ln_fc_elastic - r.ln_fc_total), 1e-13, "1 - fraction");
            }
        }
}

/* A row record with its step cache gives the same bits as vg_rate_eval, over
 * rows that share the cache (so entries of an earlier row must not leak into
 * the next), channels outside the cache, points the linear path declines
 * (|2 c hbar omega d| > 300 at 23.85 K and a 4 eV gap), and a wrapped
 * generation counter. */
static void test_row_cache_is_transparent(void **state)
{
    enum { LEN = 33 };
    double q[LEN], qi[LEN];
    unsigned gen[LEN];
    static const double reorgs[] = {12.385, 123.85, 30.0, 12.385};
    static const double gaps[] = {-4000.0, -385.0, -30.0, 0.0, 61.7, 230.0, 385.0,
                                  1238.5, 4000.0};
    vg_rate_row row = {0};
    (void)state;
    for (int st = 0; st < 2; st++)
        for (int T = 0; T < 2; T++) {
            vg_rate_mode m = mode_of(st ? VG_STATS_FROZEN : VG_STATS_THERMAL, 0.385, 61.7,
                                     T ? 298.15 : 23.85);
            vg_rate_row_attach(&row, -16, LEN, q, qi, gen);
            for (int wrap = 0; wrap < 2; wrap++) {
                if (wrap)
                    row.gen = ~0u - 1u; /* the next two begins wrap the counter */
                for (size_t r = 0; r < 4; r++) {
                    assert_int_equal(vg_rate_row_begin(&row, &m, reorgs[r], 2.385, NULL), VG_OK);
                    for (size_t i = 0; i < sizeof gaps / sizeof gaps[0]; i++) {
                        vg_rates a = eval_at(&m, gaps[i], reorgs[r], 2.385, TIGHT);
                        vg_rates b;
                        assert_int_equal(vg_rate_eval_row(&m, &row, gaps[i], TIGHT, &b, NULL),
                                         VG_OK);
                        assert_same_rates(&a, &b);
                    }
                }
            }
        }
}

static void test_mode_init_errors(void **state)
{
    const struct {
        int stats;
        double S, hw, T;
        const char *subject;
    } bad[] = {
        {7, 2.385, 61.7, 298.15, "'mode_statistics'"},
        {-1, 2.385, 61.7, 298.15, "'mode_statistics'"},
        {0, -0.385, 61.7, 298.15, "'huang_rhys'"},
        {0, NAN, 61.7, 298.15, "'huang_rhys'"},
        {1, INFINITY, 61.7, 298.15, "'huang_rhys'"},
        {0, 2.385, 0.0, 298.15, "'mode'"},
        {0, 2.385, -61.7, 298.15, "'mode'"},
        {1, 2.385, NAN, 298.15, "'mode'"},
        {0, 2.385, INFINITY, 298.15, "'mode'"},
        {0, 2.385, 61.7, 0.0, "'temperature'"},
        {0, 2.385, 61.7, -298.15, "'temperature'"},
        {1, 2.385, 61.7, NAN, "'temperature'"},
        {0, 2.385, 61.7, INFINITY, "'temperature'"},
        {0, 2.385, 1e300, 1e-10, "'mode' / k_B 'temperature'"}, /* beta = inf */
        {0, 2.385, 61.7, 1e-320, "'mode' / k_B 'temperature'"}, /* kT subnormal */
    };
    vg_rate_mode m;

    (void)state;
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        vg_error err = {VG_OK, ""};
        vg_status st = vg_rate_mode_init(&m, (vg_mode_statistics)bad[i].stats, bad[i].S,
                                         bad[i].hw, bad[i].T, &err);
        assert_fails(st, &err, bad[i].subject);
    }
    vg_error err = {VG_OK, ""};
    assert_fails(vg_rate_mode_init(NULL, VG_STATS_THERMAL, 2.385, 61.7, 298.15, &err), &err,
                 "mode record");
    assert_int_equal(vg_rate_mode_init(&m, VG_STATS_THERMAL, -1.0, 61.7, 298.15, NULL),
                     VG_ENUMERIC);
}

static void test_eval_errors(void **state)
{
    const struct {
        double gap, lam, V, tol;
        const char *subject;
    } bad[] = {
        {NAN, 123.85, 2.385, TIGHT, "'gap'"},
        {-INFINITY, 123.85, 2.385, TIGHT, "'gap'"},
        {385.0, 0.0, 2.385, TIGHT, "'reorganization'"},
        {385.0, -123.85, 2.385, TIGHT, "'reorganization'"},
        {385.0, NAN, 2.385, TIGHT, "'reorganization'"},
        {385.0, INFINITY, 2.385, TIGHT, "'reorganization'"},
        {385.0, 123.85, -2.385e-3, TIGHT, "'electronic_coupling'"},
        {385.0, 123.85, NAN, TIGHT, "'electronic_coupling'"},
        {385.0, 123.85, INFINITY, TIGHT, "'electronic_coupling'"},
        {385.0, 123.85, 2.385, 0.0, "'tolerance'"},
        {385.0, 123.85, 2.385, -1e-13, "'tolerance'"},
        {385.0, 123.85, 2.385, 1.0, "'tolerance'"},
        {385.0, 123.85, 2.385, NAN, "'tolerance'"},
        {385.0, 1e-311, 2.385, TIGHT, "'reorganization' k_B T"}, /* 4 lam kT subnormal */
    };
    vg_rate_mode m = mode_of(VG_STATS_THERMAL, 2.385, 61.7, 298.15);
    vg_rate_mode tiny = mode_of(VG_STATS_THERMAL, 2.385, 2.385e-3, 298.15);
    vg_rate_mode huge_s = mode_of(VG_STATS_FROZEN, 2.385e5, 61.7, 298.15);
    vg_rates r;
    vg_error err = {VG_OK, ""};

    (void)state;
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        vg_error e = {VG_OK, ""};
        assert_fails(vg_rate_eval(&m, bad[i].gap, bad[i].lam, bad[i].V, bad[i].tol, &r, &e),
                     &e, bad[i].subject);
    }
    assert_fails(vg_rate_eval(NULL, 385.0, 123.85, 2.385, TIGHT, &r, &err), &err, "record");
    assert_fails(vg_rate_eval(&m, 385.0, 123.85, 2.385, TIGHT, NULL, &err), &err, "record");
    /* more than 1e5 channels between the weights and the Gaussian */
    assert_fails(vg_rate_eval(&tiny, 2385.0, 123.85, 2.385, TIGHT, &r, &err), &err,
                 "channel window");
    assert_fails(vg_rate_eval(&huge_s, 385.0, 123.85, 2.385, TIGHT, &r, &err), &err,
                 "channel window");
    /* a corrupted mode record: the last guard keeps NaN out of every output */
    m.beta = NAN;
    assert_fails(vg_rate_eval(&m, 385.0, 123.85, 2.385, TIGHT, &r, &err), &err, "non-finite");
}

/* The batch form equals the point form, and names the failing point. */
/* A small linear congruential generator (Knuth's MMIX constants, common
 * practice), so that the runs below are the same on every machine. */
static double lcg_uniform(uint64_t *x)
{
    *x = *x * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*x >> 11) * 0x1p-53;
}

/* vg_rate_eval_gaps and vg_rate_eval_gaps_run give, point for point, the bits
 * of vg_rate_eval (which puts one gap in every lane): runs of random length
 * (1 to 150 gaps: partial groups, several calls' worth of groups), evenly
 * spaced (lanes that share a peak), random (lanes that do not), and repeated
 * gaps, over thermal and frozen modes, S = 0, V = 0 and extreme corners
 * where lanes go to the log path. */
static void test_gap_runs_match_points(void **state)
{
    enum { LEN = 400, NMAX = 150 };
    double q[LEN], qi[LEN], gaps[NMAX], arr[9][NMAX];
    unsigned gen[LEN];
    vg_rate_row row = {0};
    vg_rates out[NMAX];
    uint64_t x = 20261202;
    int mixed = 0;

    (void)state;
    for (int trial = 0; trial < 300; trial++) {
        vg_mode_statistics st = lcg_uniform(&x) < 0.25 ? VG_STATS_FROZEN : VG_STATS_THERMAL;
        double S = lcg_uniform(&x) < 0.05 ? 0.0 : pow(10.0, -3.0 + 4.7 * lcg_uniform(&x));
        double mode = pow(10.0, 3.0 * lcg_uniform(&x)), T = pow(10.0, 3.7 * lcg_uniform(&x));
        double lam = pow(10.0, -1.0 + 4.4 * lcg_uniform(&x));
        double V = lcg_uniform(&x) < 0.05 ? 0.0 : 1.0;
        double g0 = -3000.0 + 6000.0 * lcg_uniform(&x), step = 40.0 * lcg_uniform(&x);
        size_t n = 1 + (size_t)(NMAX * lcg_uniform(&x)), done = 0;
        int kind = trial % 3;
        vg_rate_mode m = mode_of(st, S, mode, T);
        vg_rates_run run = {arr[0], arr[1], arr[2], arr[3], arr[4], arr[5], arr[6], arr[7],
                            arr[8], -1, -1};
        n = n > NMAX ? NMAX : n;
        for (size_t i = 0; i < n; i++) {
            gaps[i] = kind == 0   ? g0 + step * (double)i
                      : kind == 1 ? -3000.0 + 6000.0 * lcg_uniform(&x)
                                  : g0 + step * (double)(i / 3);
            gaps[i] = fmax(-3000.0, fmin(3000.0, gaps[i]));
        }
        vg_rate_row_attach(&row, -200, LEN, q, qi, gen);
        assert_int_equal(vg_rate_row_begin(&row, &m, lam, V, NULL), VG_OK);
        assert_int_equal(vg_rate_eval_gaps(&m, &row, n, gaps, TIGHT, out, &done, NULL), VG_OK);
        assert_int_equal(done, n);
        assert_int_equal(vg_rate_row_begin(&row, &m, lam, V, NULL), VG_OK);
        assert_int_equal(vg_rate_eval_gaps_run(&m, &row, n, gaps, TIGHT, &run, &done, NULL),
                         VG_OK);
        assert_int_equal(done, n);
        assert_int_equal(run.assisted_zero, S == 0.0);
        assert_int_equal(run.coupling_zero, V == 0.0);
        for (size_t i = 0; i < n; i++) {
            vg_rates one = eval_at(&m, gaps[i], lam, V, TIGHT);
            const double *y[] = {&one.ln_k_elastic, &one.ln_k_assisted, &one.ln_k_total,
                                 &one.ln_k_bare, &one.ln_fc_elastic, &one.ln_fc_assisted,
                                 &one.ln_fc_total, &one.ln_fc_bare, &one.assisted_fraction};
            assert_same_rates(&one, &out[i]);
            for (int f = 0; f < 9; f++)
                assert_memory_equal(&arr[f][i], y[f], sizeof(double));
            mixed += i > 0 && out[i].n_peak != out[i - 1].n_peak;
        }
    }
    assert_true(mixed > 50); /* the runs did cross peaks inside groups */
}

/* A gap that is not finite in the middle of a run: the points before it are
 * computed, *done names it, and the message is the single point's. */
static void test_gap_run_stops_at_bad_gap(void **state)
{
    double gaps[11], arr[9][11];
    vg_rates out[11];
    vg_rate_row row = {0};
    vg_error err = {VG_OK, ""};
    size_t done = 99;
    vg_rate_mode m = mode_of(VG_STATS_THERMAL, 0.385, 200.0, 298.15);
    vg_rates_run run = {arr[0], arr[1], arr[2], arr[3], arr[4], arr[5], arr[6], arr[7], arr[8],
                        0, 0};

    (void)state;
    for (int i = 0; i < 11; i++)
        gaps[i] = 10.0 * i;
    gaps[6] = NAN;
    assert_int_equal(vg_rate_row_begin(&row, &m, 120.0, 1.0, NULL), VG_OK);
    assert_fails(vg_rate_eval_gaps(&m, &row, 11, gaps, TIGHT, out, &done, &err), &err, "'gap'");
    assert_int_equal(done, 6);
    for (int i = 0; i < 6; i++) {
        vg_rates one = eval_at(&m, gaps[i], 120.0, 1.0, TIGHT);
        assert_same_rates(&one, &out[i]);
    }
    done = 99;
    assert_fails(vg_rate_eval_gaps_run(&m, &row, 11, gaps, TIGHT, &run, &done, &err), &err,
                 "'gap'");
    assert_int_equal(done, 6);
    assert_fails(vg_rate_eval_gaps_run(&m, &row, 11, gaps, TIGHT, NULL, &done, &err), &err,
                 "without");
    assert_fails(vg_rate_eval_gaps(&m, &row, 3, gaps, 2.0, out, &done, &err), &err,
                 "'tolerance'");
    assert_int_equal(done, 0);
}

/* The same where the run is whole groups of four gaps, which the kernel
 * reads in place after one test of all of them (src/rate.c, all_finite):
 * +inf, -inf or NaN at the first, a middle or the last position stops the
 * run there, with the points before it those of single evaluations. */
static void test_gap_whole_groups_stop_at_bad_gap(void **state)
{
    static const int at[] = {0, 5, 15};
    const double bad[] = {INFINITY, -INFINITY, NAN};
    double gaps[16], arr[9][16];
    vg_rate_row row = {0};
    vg_error err = {VG_OK, ""};
    vg_rate_mode m = mode_of(VG_STATS_THERMAL, 0.385, 200.0, 298.15);
    vg_rates_run run = {arr[0], arr[1], arr[2], arr[3], arr[4], arr[5], arr[6], arr[7], arr[8],
                        0, 0};

    (void)state;
    assert_int_equal(vg_rate_row_begin(&row, &m, 120.0, 1.0, NULL), VG_OK);
    for (size_t b = 0; b < sizeof bad / sizeof *bad; b++)
        for (size_t k = 0; k < sizeof at / sizeof *at; k++) {
            size_t done = 99;
            for (int i = 0; i < 16; i++)
                gaps[i] = 12.5 * i;
            gaps[at[k]] = bad[b];
            assert_fails(vg_rate_eval_gaps_run(&m, &row, 16, gaps, TIGHT, &run, &done, &err),
                         &err, "'gap'");
            assert_int_equal(done, (size_t)at[k]);
            for (int i = 0; i < at[k]; i++) {
                vg_rates one = eval_at(&m, gaps[i], 120.0, 1.0, TIGHT), got;
                vg_rates_run_get(&run, (size_t)i, &got);
                assert_memory_equal(&got.ln_k_total, &one.ln_k_total, sizeof(double));
                assert_memory_equal(&got.ln_fc_assisted, &one.ln_fc_assisted, sizeof(double));
            }
        }
}

/* vg_metrics_compute_run gives, point for point, the bits of
 * vg_metrics_compute_full on the points' records: the usual case and every
 * other (V = 0, S = 0, the heavy track, validity values, conditions), with
 * the fill columns written or kept. */
static void test_metrics_run_match_records(void **state)
{
    enum { N = 37 };
    double arr[2][9][N], valid[N], failed[N], out[N * VG_N_METRICS], ref[VG_N_METRICS];
    uint64_t x = 385;
    vg_require_set req, none;

    (void)state;
    memset(&req, 0, sizeof req);
    memset(&none, 0, sizeof none);
    req.n = 2;
    req.r[0].metric = VG_M_LOG10_RATIO;
    req.r[0].op = VG_CMP_GT;
    req.r[0].value = -1.0;
    req.r[1].metric = VG_M_LOG10_K_TOTAL;
    req.r[1].op = VG_CMP_GE;
    req.r[1].value = 0.0;
    for (int variant = 0; variant < 32; variant++) {
        int vz = variant & 1, sz = (variant >> 1) & 1, heavy = (variant >> 2) & 1;
        int extra = (variant >> 3) & 1; /* validity values and conditions */
        int kept = (variant >> 4) & 1;
        vg_rates_run run[2];
        for (int k = 0; k < 2; k++) {
            run[k] = (vg_rates_run){arr[k][0], arr[k][1], arr[k][2], arr[k][3], arr[k][4],
                                    arr[k][5], arr[k][6], arr[k][7], arr[k][8], sz, vz};
            for (int f = 0; f < 9; f++)
                for (int i = 0; i < N; i++)
                    arr[k][f][i] = f == 8 ? lcg_uniform(&x) : 40.0 * lcg_uniform(&x) - 20.0;
        }
        for (int i = 0; i < N; i++) {
            valid[i] = (double)(i % 2);
            failed[i] = (double)(i % 16);
        }
        /* kept: the buffer starts as fill, as the sweep's does, and the
         * usual case may leave the fill columns; else it starts as garbage */
        for (int i = 0; i < N * VG_N_METRICS; i++)
            out[i] = kept ? VG_FILL : 1e300;
        vg_metrics_compute_run(N, &run[0], heavy ? &run[1] : NULL, extra ? valid : NULL,
                               extra ? failed : NULL, extra ? &req : &none, kept, out);
        for (int i = 0; i < N; i++) {
            vg_rates r[2];
            for (int k = 0; k < 2; k++) {
                vg_rates_run_get(&run[k], (size_t)i, &r[k]);
                assert_true(r[k].ln_fc_total == arr[k][6][i] && r[k].assisted_fraction
                            == arr[k][8][i] && r[k].assisted_zero == sz
                            && r[k].coupling_zero == vz);
            }
            vg_metrics_compute_full(&r[0], heavy ? &r[1] : NULL, NULL,
                                    extra ? valid[i] : VG_FILL, extra ? failed[i] : VG_FILL,
                                    extra ? &req : &none, ref);
            assert_memory_equal(ref, out + i * VG_N_METRICS, sizeof ref);
        }
    }
}

static void test_batch(void **state)
{
    const double gap[] = {-385.0, 230.0, 1238.5}, lam[] = {123.85, 30.0, 238.5};
    const double V[] = {2.385, 1.0, 0.0};
    double bad_lam[] = {123.85, 30.0, -1.0};
    vg_rates out[3];
    vg_error err = {VG_OK, ""};
    vg_rate_mode m = mode_of(VG_STATS_THERMAL, 0.0385, 200.0, 298.15);

    (void)state;
    assert_int_equal(vg_rate_eval_batch(&m, 3, gap, lam, V, TIGHT, out, &err), VG_OK);
    for (int i = 0; i < 3; i++) {
        vg_rates one = eval_at(&m, gap[i], lam[i], V[i], TIGHT);
        assert_same_rates(&one, &out[i]);
    }
    assert_fails(vg_rate_eval_batch(&m, 3, gap, bad_lam, V, TIGHT, out, &err), &err,
                 "'reorganization'");
    assert_true(strncmp(err.msg, "point 2: ", 9) == 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_weight_moments),
        cmocka_unit_test(test_weight_reflection),
        cmocka_unit_test(test_weight_concave),
        cmocka_unit_test(test_weight_where_direct_formula_fails),
        cmocka_unit_test(test_bessel_branches),
        cmocka_unit_test(test_marcus_peak_and_symmetry),
        cmocka_unit_test(test_small_s_is_marcus),
        cmocka_unit_test(test_classical_mode_limit),
        cmocka_unit_test(test_detailed_balance),
        cmocka_unit_test(test_frozen_crossover),
        cmocka_unit_test(test_window_vs_brute_force),
        cmocka_unit_test(test_cache_is_transparent),
        cmocka_unit_test(test_receptor_estimate),
        cmocka_unit_test(test_domain_corners_finite),
        cmocka_unit_test(test_metric_table),
        cmocka_unit_test(test_metric_values),
        cmocka_unit_test(test_zero_coupling),
        cmocka_unit_test(test_fraction_from_kernel),
        cmocka_unit_test(test_row_cache_is_transparent),
        cmocka_unit_test(test_mode_init_errors),
        cmocka_unit_test(test_eval_errors),
        cmocka_unit_test(test_batch),
        cmocka_unit_test(test_gap_runs_match_points),
        cmocka_unit_test(test_gap_run_stops_at_bad_gap),
        cmocka_unit_test(test_gap_whole_groups_stop_at_bad_gap),
        cmocka_unit_test(test_metrics_run_match_records),
    };

    gsl_set_error_handler_off();
    return cmocka_run_group_tests(tests, NULL, NULL);
}
