/*
 * Unit tests of the validity criteria (src/validity.c): each criterion
 * against values worked out by hand from its published formula with the
 * exact CODATA 2018 / 2019 SI constants (intermediate numbers stated beside
 * each check), the literature receptor regime, the V -> 0 limit, the
 * scaling laws the formulas imply, the edge of every threshold, the
 * combined report, and every input error.
 *
 * Constants used in the hand values (exact SI ratios, CODATA 2018):
 *   h     = 6.62607015e-34 J s / 1.602176634e-19 C = 4.1356676969e-15 eV s
 *   hbar  = h / 2 pi                               = 6.5821195695e-16 eV s
 *   k_B   = 1.380649e-23 J/K / 1.602176634e-19 C   = 8.6173332621e-5 eV/K
 *   pi^3  = 31.0062766803
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

#include "vg_validity.h"

static void assert_rel(double got, double want, double tol, const char *what)
{
    if (!(fabs(got - want) <= tol * fabs(want))) {
        print_error("%s: got %.17g, want %.17g (relative tolerance %g)\n", what, got, want,
                    tol);
        fail();
    }
}

static vg_valid_settings defaults(void)
{
    vg_valid_settings s;

    vg_valid_settings_default(&s);
    return s;
}

/* The literature receptor estimate (Brookes, Hartoutsiou, Horsfield &
 * Stoneham, Phys. Rev. Lett. 98, 038101, 2007; values from memory):
 * V = 1 meV, lambda = 30 meV, hbar omega = 200 meV, room temperature
 * (298 K); assisted transfer on a ns scale, so k_total = 1e9 s^-1; a C-H
 * stretch lifetime of 10 ps (physics reference: 1-12 ps in liquids).
 * tau_L = 0.5 ps: water's longitudinal relaxation time, tau_D eps_inf /
 * eps_s ~ 8.3 ps x 5 / 78 (Debye parameters of water, from memory). */
static vg_valid_point receptor_point(void)
{
    vg_valid_point p = {.coupling = 1.0,
                        .reorg = 30.0,
                        .mode = 200.0,
                        .temperature = 298.0,
                        .tau_l = 0.5,
                        .t1 = 10.0,
                        .k_total = 1.0e9};
    return p;
}

/* ---------------------------------------------------- hand values --- */

/* Newton & Sutin (1984), nu_el = (2 V^2 / h) (pi^3 / (lambda k_B T))^(1/2).
 * V = 1 meV = 1e-3 eV, lambda = 0.03 eV, T = 298 K:
 *   k_B T          = 8.6173332621e-5 x 298 = 2.5679653121e-2 eV
 *   lambda k_B T   = 7.7038959364e-4 eV^2
 *   pi^3 / that    = 4.0247527922e4 eV^-2, square root 2.0061786541e2 eV^-1
 *   2 V^2 / h      = 2e-6 / 4.1356676969e-15 = 4.8359784842e8 eV s^-1
 *   nu_el          = 9.7018368066e10 s^-1
 * Second point, V = 5 meV, lambda = 100 meV, T = 300 K:
 *   k_B T = 2.5851999786e-2 eV, lambda k_B T = 2.5851999786e-3 eV^2,
 *   pi^3 / that = 1.1993763321e4, root 1.0951604138e2,
 *   2 V^2 / h = 1.2089946210e10, nu_el = 1.3240430495e12 s^-1. */
static void electronic_frequency_by_hand(void **state)
{
    double nu;
    vg_error err;

    (void)state;
    assert_int_equal(vg_valid_electronic_frequency(1.0, 30.0, 298.0, &nu, &err), VG_OK);
    assert_rel(nu, 9.7018368066e10, 1e-9, "nu_el (1 meV, 30 meV, 298 K)");
    assert_int_equal(vg_valid_electronic_frequency(5.0, 100.0, 300.0, &nu, &err), VG_OK);
    assert_rel(nu, 1.3240430495e12, 1e-9, "nu_el (5 meV, 100 meV, 300 K)");
}

/* Zusman (1980); Rips & Jortner (1987): kappa_A = 4 pi V^2 tau_L /
 * (hbar lambda).  V = 1e-3 eV, lambda = 0.03 eV:
 *   4 pi V^2 / (hbar lambda) = 1.2566370614e-5 / (6.5821195695e-16 x 0.03)
 *                            = 6.3638926041e11 s^-1
 *   tau_L = 0.5 ps: kappa_A = 3.1819463021e-1, 1/(1+kappa_A) = 7.5861331634e-1
 *   tau_L = 0.1 ps: kappa_A = 6.3638926041e-2, 1/(1+kappa_A) = 9.4016867521e-1 */
static void kappa_by_hand(void **state)
{
    double k, f;
    vg_error err;

    (void)state;
    assert_int_equal(vg_valid_kappa(1.0, 30.0, 0.5, &k, &err), VG_OK);
    assert_rel(k, 3.1819463021e-1, 1e-9, "kappa_A (tau_L 0.5 ps)");
    assert_int_equal(vg_valid_solvent_factor(k, &f, &err), VG_OK);
    assert_rel(f, 7.5861331634e-1, 1e-9, "1/(1+kappa_A) (tau_L 0.5 ps)");
    assert_int_equal(vg_valid_kappa(1.0, 30.0, 0.1, &k, &err), VG_OK);
    assert_rel(k, 6.3638926041e-2, 1e-9, "kappa_A (tau_L 0.1 ps)");
    assert_int_equal(vg_valid_solvent_factor(k, &f, &err), VG_OK);
    assert_rel(f, 9.4016867521e-1, 1e-9, "1/(1+kappa_A) (tau_L 0.1 ps)");
    /* limits of the factor: 1 at kappa_A = 0, 1/2 at kappa_A = 1 */
    assert_int_equal(vg_valid_solvent_factor(0.0, &f, &err), VG_OK);
    assert_true(f == 1.0);
    assert_int_equal(vg_valid_solvent_factor(1.0, &f, &err), VG_OK);
    assert_true(f == 0.5);
}

/* Each criterion at the receptor point, with the default thresholds 0.1:
 *   nonadiabatic, nu_n = 1e13 s^-1: 9.7018368066e10 / 1e13 = 9.7018368066e-3, holds
 *   nonadiabatic, nu_n = omega/2pi = 0.2 eV / h = 4.8359784842e13 s^-1:
 *       ratio 2.0061786541e-3 (= 2 V^2 (pi^3/(lambda k_B T))^(1/2) / hbar omega,
 *       h cancels: 2e-6 x 200.61786541 / 0.2), holds
 *   solvent, tau_L 0.5 ps: 0.31819463021, FAILS (water-like relaxation is
 *       already too slow for V = 1 meV at lambda = 30 meV)
 *   resolved: V / hbar omega = 1/200 = 0.005, V / k_B T = 1 / 25.679653121
 *       = 3.8941335978e-2; the larger, 3.8941335978e-2, holds
 *   rethermal: 1e9 s^-1 x 10e-12 s = 0.01, holds */
static void receptor_regime(void **state)
{
    vg_valid_settings s = defaults();
    vg_valid_point p = receptor_point();
    double v;
    int holds;
    vg_error err;

    (void)state;
    assert_int_equal(vg_valid_nonadiabatic(&s, p.coupling, p.reorg, p.temperature, p.mode, &v,
                                           &holds, &err),
                     VG_OK);
    assert_rel(v, 9.7018368066e-3, 1e-9, "nu_el / 1e13 s^-1");
    assert_int_equal(holds, 1);
    s.nuclear_frequency = 0.0;
    assert_int_equal(vg_valid_nonadiabatic(&s, p.coupling, p.reorg, p.temperature, p.mode, &v,
                                           &holds, &err),
                     VG_OK);
    assert_rel(v, 2.0061786541e-3, 1e-9, "nu_el / (omega / 2 pi)");
    assert_int_equal(holds, 1);
    s = defaults();
    assert_int_equal(vg_valid_solvent(&s, p.coupling, p.reorg, p.tau_l, &v, &holds, &err), VG_OK);
    assert_rel(v, 3.1819463021e-1, 1e-9, "kappa_A");
    assert_int_equal(holds, 0);
    assert_int_equal(vg_valid_resolved(&s, p.coupling, p.mode, p.temperature, &v, &holds, &err),
                     VG_OK);
    assert_rel(v, 3.8941335978e-2, 1e-9, "V / k_B T");
    assert_int_equal(holds, 1);
    assert_int_equal(vg_valid_rethermal(&s, p.k_total, p.t1, &v, &holds, &err), VG_OK);
    assert_rel(v, 0.01, 1e-12, "k_total T1");
    assert_int_equal(holds, 1);
}

/* A coupling of 5 meV at lambda = 100 meV, 300 K: nu_el = 1.3240430495e12
 * s^-1 (above), ratio to 1e13 s^-1 = 0.13240430495 > 0.1, the transfer is
 * no longer safely nonadiabatic. */
static void larger_coupling_is_not_nonadiabatic(void **state)
{
    vg_valid_settings s = defaults();
    double v;
    int holds;
    vg_error err;

    (void)state;
    assert_int_equal(vg_valid_nonadiabatic(&s, 5.0, 100.0, 300.0, 200.0, &v, &holds, &err),
                     VG_OK);
    assert_rel(v, 1.3240430495e-1, 1e-9, "nu_el / nu_n");
    assert_int_equal(holds, 0);
}

/* The combined report at the receptor point: only the solvent criterion
 * fails, and it is the worst, margin 0.31819463021 / 0.1 = 3.1819463021.
 * With tau_L = 0.1 ps every criterion holds; margins 9.7018368066e-2,
 * 6.3638926041e-1, 3.8941335978e-1, 1e-1: the worst is still solvent. */
static void combined_report(void **state)
{
    vg_valid_settings s = defaults();
    vg_valid_point p = receptor_point();
    vg_valid_report r;
    vg_error err;

    (void)state;
    assert_int_equal(vg_valid_evaluate(&s, &p, &r, &err), VG_OK);
    assert_int_equal(r.evaluated, VG_VALID_ALL);
    assert_int_equal(r.failed, VG_VALID_SOLVENT);
    assert_int_equal(r.worst, VG_VALID_IDX_SOLVENT);
    assert_string_equal(vg_valid_name(r.worst), "solvent");
    assert_rel(r.worst_margin, 3.1819463021, 1e-9, "worst margin");
    assert_rel(r.value[VG_VALID_IDX_NONADIABATIC], 9.7018368066e-3, 1e-9, "value nonadiabatic");
    assert_rel(r.value[VG_VALID_IDX_RESOLVED], 3.8941335978e-2, 1e-9, "value resolved");
    assert_rel(r.value[VG_VALID_IDX_RETHERMAL], 0.01, 1e-12, "value rethermal");

    p.tau_l = 0.1;
    assert_int_equal(vg_valid_evaluate(&s, &p, &r, &err), VG_OK);
    assert_int_equal(r.failed, 0u);
    assert_int_equal(r.worst, VG_VALID_IDX_SOLVENT);
    assert_rel(r.margin[VG_VALID_IDX_NONADIABATIC], 9.7018368066e-2, 1e-9, "margin nonadiabatic");
    assert_rel(r.margin[VG_VALID_IDX_SOLVENT], 6.3638926041e-1, 1e-9, "margin solvent");
    assert_rel(r.margin[VG_VALID_IDX_RESOLVED], 3.8941335978e-1, 1e-9, "margin resolved");
    assert_rel(r.margin[VG_VALID_IDX_RETHERMAL], 1e-1, 1e-12, "margin rethermal");

    /* disabling the solvent criterion: not evaluated, and its input is not
     * even looked at (a negative tau_L is accepted) */
    p.tau_l = -1.0;
    s.enabled = VG_VALID_ALL & ~VG_VALID_SOLVENT;
    assert_int_equal(vg_valid_evaluate(&s, &p, &r, &err), VG_OK);
    assert_int_equal(r.evaluated, VG_VALID_ALL & ~VG_VALID_SOLVENT);
    assert_int_equal(r.failed, 0u);
    assert_true(r.value[VG_VALID_IDX_SOLVENT] == 0.0);
    assert_int_equal(r.worst, VG_VALID_IDX_RESOLVED);

    /* nothing enabled: nothing evaluated, no worst criterion */
    s.enabled = 0u;
    assert_int_equal(vg_valid_evaluate(&s, &p, &r, &err), VG_OK);
    assert_int_equal(r.evaluated, 0u);
    assert_int_equal(r.worst, -1);
    assert_string_equal(vg_valid_name(r.worst), "none");
    assert_true(r.worst_margin == 0.0);
}

/* A looser threshold changes the verdict: solvent at 0.5 holds for kappa_A
 * = 0.318.  Stricter nonadiabatic (1e-3) fails for 9.7e-3. */
static void thresholds_are_the_callers(void **state)
{
    vg_valid_settings s = defaults();
    vg_valid_point p = receptor_point();
    vg_valid_report r;
    vg_error err;

    (void)state;
    s.solvent_max = 0.5;
    s.nonadiabatic_max = 1e-3;
    assert_int_equal(vg_valid_evaluate(&s, &p, &r, &err), VG_OK);
    assert_int_equal(r.failed, VG_VALID_NONADIABATIC);
    assert_int_equal(r.worst, VG_VALID_IDX_NONADIABATIC);
    assert_rel(r.worst_margin, 9.7018368066, 1e-9, "9.7018368066e-3 / 1e-3");
}

/* ---------------------------------------------------------- limits --- */

/* V -> 0: nu_el, kappa_A and V/hbar omega, V/k_B T vanish (each is
 * proportional to V or V^2); with no coupling the rate vanishes too, so
 * k_total T1 = 0.  Every ratio exactly 0, every criterion holds. */
static void zero_coupling_gives_zero_ratios(void **state)
{
    vg_valid_settings s = defaults();
    vg_valid_point p = receptor_point();
    vg_valid_report r;
    vg_error err;
    int i;

    (void)state;
    p.coupling = 0.0;
    p.k_total = 0.0;
    assert_int_equal(vg_valid_evaluate(&s, &p, &r, &err), VG_OK);
    assert_int_equal(r.failed, 0u);
    for (i = 0; i < VG_VALID_NCRIT; i++)
        assert_true(r.value[i] == 0.0);
    assert_int_equal(r.worst, 0); /* tie at 0: the lowest index */
    /* a very small coupling: V^2 underflows to 0, still finite */
    p.coupling = 1e-200;
    assert_int_equal(vg_valid_evaluate(&s, &p, &r, &err), VG_OK);
    assert_true(r.value[VG_VALID_IDX_NONADIABATIC] == 0.0);
    assert_true(r.value[VG_VALID_IDX_SOLVENT] == 0.0);
    assert_rel(r.value[VG_VALID_IDX_RESOLVED], 1e-200 / 25.679653121, 1e-9, "V / k_B T tiny V");
}

/* ----------------------------------------------------- scaling laws --- */

/* nu_el ~ V^2 (lambda T)^(-1/2), kappa_A ~ V^2 tau_L / lambda: the
 * formulas' own structure (Newton & Sutin 1984; Rips & Jortner 1987).
 * Factors of 4 and 2 are exact in binary, so the ratios are exact up to
 * the rounding of a few operations. */
static void scaling_laws(void **state)
{
    const double V = 2.385, lam = 47.3, T = 281.6, tau = 0.731;
    double a, b, c, d;
    vg_error err;

    (void)state;
    assert_int_equal(vg_valid_electronic_frequency(V, lam, T, &a, &err), VG_OK);
    assert_int_equal(vg_valid_electronic_frequency(3.0 * V, lam, T, &b, &err), VG_OK);
    assert_rel(b / a, 9.0, 8 * DBL_EPSILON, "nu_el(3V) / nu_el(V)");
    assert_int_equal(vg_valid_electronic_frequency(V, 4.0 * lam, T, &b, &err), VG_OK);
    assert_rel(b / a, 0.5, 8 * DBL_EPSILON, "nu_el(4 lambda) / nu_el(lambda)");
    assert_int_equal(vg_valid_electronic_frequency(V, lam, 4.0 * T, &b, &err), VG_OK);
    assert_rel(b / a, 0.5, 8 * DBL_EPSILON, "nu_el(4T) / nu_el(T)");
    /* only the product lambda T enters */
    assert_int_equal(vg_valid_electronic_frequency(V, 2.0 * lam, 0.5 * T, &b, &err), VG_OK);
    assert_rel(b / a, 1.0, 8 * DBL_EPSILON, "nu_el(2 lambda, T/2) / nu_el(lambda, T)");

    assert_int_equal(vg_valid_kappa(V, lam, tau, &c, &err), VG_OK);
    assert_int_equal(vg_valid_kappa(3.0 * V, lam, tau, &d, &err), VG_OK);
    assert_rel(d / c, 9.0, 8 * DBL_EPSILON, "kappa(3V) / kappa(V)");
    assert_int_equal(vg_valid_kappa(V, lam, 7.0 * tau, &d, &err), VG_OK);
    assert_rel(d / c, 7.0, 8 * DBL_EPSILON, "kappa(7 tau) / kappa(tau)");
    assert_int_equal(vg_valid_kappa(V, 5.0 * lam, tau, &d, &err), VG_OK);
    assert_rel(d / c, 0.2, 8 * DBL_EPSILON, "kappa(5 lambda) / kappa(lambda)");
}

/* ----------------------------------------------------- threshold edge --- */

/* Holds means strictly below: at value == threshold the criterion fails,
 * one ulp above the value it holds.  Exact case: V / hbar omega = 20 / 200
 * is the double nearest 1/10, the same double as the default 0.1 (IEEE 754
 * division is correctly rounded); at 5000 K, V / k_B T = 20 / 430.87 is
 * smaller. */
static void threshold_edges(void **state)
{
    vg_valid_settings s = defaults();
    vg_valid_point p = receptor_point();
    double v, t;
    int holds, i;
    vg_valid_report r;
    vg_error err;

    (void)state;
    assert_int_equal(vg_valid_resolved(&s, 20.0, 200.0, 5000.0, &v, &holds, &err), VG_OK);
    assert_true(v == 0.1);
    assert_int_equal(holds, 0);
    assert_int_equal(vg_valid_resolved(&s, 19.999, 200.0, 5000.0, &v, &holds, &err), VG_OK);
    assert_int_equal(holds, 1);

    /* every criterion at an edge set to its own value, and one ulp above */
    p.tau_l = 0.1;
    assert_int_equal(vg_valid_evaluate(&s, &p, &r, &err), VG_OK);
    for (i = 0; i < VG_VALID_NCRIT; i++) {
        vg_valid_report e;
        double *thr[VG_VALID_NCRIT] = {&s.nonadiabatic_max, &s.solvent_max, &s.resolved_max,
                                       &s.rethermal_max};

        t = *thr[i];
        *thr[i] = r.value[i];
        assert_int_equal(vg_valid_evaluate(&s, &p, &e, &err), VG_OK);
        assert_int_equal(e.failed, 1u << i);
        assert_int_equal(e.worst, i);
        assert_true(e.worst_margin == 1.0);
        *thr[i] = nextafter(r.value[i], HUGE_VAL);
        assert_int_equal(vg_valid_evaluate(&s, &p, &e, &err), VG_OK);
        assert_int_equal(e.failed, 0u);
        *thr[i] = t;
    }
}

/* ------------------------------------------------------------ errors --- */

static void expect_error(vg_status st, double v, int holds, const vg_error *err,
                         const char *needle)
{
    assert_int_equal(st, VG_ENUMERIC);
    assert_true(v == 0.0); /* never NaN, never a stale value */
    assert_int_equal(holds, 0);
    assert_int_equal(err->status, VG_ENUMERIC);
    if (strstr(err->msg, needle) == NULL) {
        print_error("message '%s' lacks '%s'\n", err->msg, needle);
        fail();
    }
}

/* The call first, then its outputs (a sequence point between them). */
#define EXPECT_ERROR(call, needle)                                                          \
    do {                                                                                    \
        vg_status st_ = (call);                                                             \
        expect_error(st_, v, holds, &err, needle);                                          \
    } while (0)

static void input_errors(void **state)
{
    vg_valid_settings s = defaults();
    const double bad[] = {NAN, HUGE_VAL, -HUGE_VAL, -1.5};
    double v;
    int holds;
    size_t i;
    vg_error err;

    (void)state;
    for (i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        double b = bad[i];
        vg_status st;

        st = vg_valid_nonadiabatic(&s, b, 30.0, 298.0, 200.0, &v, &holds, &err);
        expect_error(st, v, holds, &err, "'electronic_coupling'");
        st = vg_valid_nonadiabatic(&s, 1.0, b, 298.0, 200.0, &v, &holds, &err);
        expect_error(st, v, holds, &err, "'reorganization'");
        st = vg_valid_nonadiabatic(&s, 1.0, 30.0, b, 200.0, &v, &holds, &err);
        expect_error(st, v, holds, &err, "'temperature'");
        st = vg_valid_solvent(&s, b, 30.0, 0.5, &v, &holds, &err);
        expect_error(st, v, holds, &err, "'electronic_coupling'");
        st = vg_valid_solvent(&s, 1.0, b, 0.5, &v, &holds, &err);
        expect_error(st, v, holds, &err, "'reorganization'");
        st = vg_valid_solvent(&s, 1.0, 30.0, b, &v, &holds, &err);
        expect_error(st, v, holds, &err, "'longitudinal relaxation time'");
        st = vg_valid_resolved(&s, b, 200.0, 298.0, &v, &holds, &err);
        expect_error(st, v, holds, &err, "'electronic_coupling'");
        st = vg_valid_resolved(&s, 1.0, b, 298.0, &v, &holds, &err);
        expect_error(st, v, holds, &err, "'mode'");
        st = vg_valid_resolved(&s, 1.0, 200.0, b, &v, &holds, &err);
        expect_error(st, v, holds, &err, "'temperature'");
        st = vg_valid_rethermal(&s, b, 10.0, &v, &holds, &err);
        expect_error(st, v, holds, &err, "'total rate'");
        st = vg_valid_rethermal(&s, 1e9, b, &v, &holds, &err);
        expect_error(st, v, holds, &err, "'mode lifetime T1'");
        assert_int_equal(vg_valid_solvent_factor(b, &v, &err), VG_ENUMERIC);
        assert_true(v == 0.0);
        /* the mode is needed only when nu_n comes from it */
        s.nuclear_frequency = 0.0;
        st = vg_valid_nonadiabatic(&s, 1.0, 30.0, 298.0, b, &v, &holds, &err);
        expect_error(st, v, holds, &err, "'mode'");
        s.nuclear_frequency = 1e13;
        assert_int_equal(vg_valid_nonadiabatic(&s, 1.0, 30.0, 298.0, b, &v, &holds, &err), VG_OK);
    }
    /* strictly positive inputs reject 0 */
    EXPECT_ERROR(vg_valid_nonadiabatic(&s, 1.0, 0.0, 298.0, 200.0, &v, &holds, &err),
                 "> 0 meV (got 0 meV)");
    EXPECT_ERROR(vg_valid_resolved(&s, 1.0, 0.0, 298.0, &v, &holds, &err), "'mode'");
    EXPECT_ERROR(vg_valid_resolved(&s, 1.0, 200.0, 0.0, &v, &holds, &err), "'temperature'");
    /* inputs so large the value overflows: an error, not an Inf */
    EXPECT_ERROR(vg_valid_nonadiabatic(&s, 1e300, 30.0, 298.0, 200.0, &v, &holds, &err),
                 "not a finite number");
    EXPECT_ERROR(vg_valid_solvent(&s, 1e300, 30.0, 0.5, &v, &holds, &err),
                 "not a finite number");
    EXPECT_ERROR(vg_valid_nonadiabatic(&s, 1.0, 1e-320, 1e-320, 200.0, &v, &holds, &err),
                 "not a finite number");
    EXPECT_ERROR(vg_valid_rethermal(&s, 1e300, 1e300, &v, &holds, &err), "not a finite number");
}

static void settings_errors(void **state)
{
    const double bad[] = {NAN, HUGE_VAL, -0.1, 0.0};
    vg_valid_point p = receptor_point();
    vg_valid_report r;
    vg_valid_settings s;
    double v;
    int holds;
    size_t i;
    vg_error err;

    (void)state;
    s = defaults();
    assert_int_equal(vg_valid_settings_check(&s, &err), VG_OK);
    assert_int_equal(s.enabled, VG_VALID_ALL);
    assert_true(s.nonadiabatic_max == 0.1 && s.solvent_max == 0.1 && s.resolved_max == 0.1 &&
                s.rethermal_max == 0.1 && s.nuclear_frequency == 1e13);
    for (i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        s = defaults();
        s.solvent_max = bad[i];
        EXPECT_ERROR(vg_valid_solvent(&s, 1.0, 30.0, 0.5, &v, &holds, &err),
                     "'solvent threshold'");
        s = defaults();
        s.rethermal_max = bad[i];
        assert_int_equal(vg_valid_evaluate(&s, &p, &r, &err), VG_ENUMERIC);
        assert_non_null(strstr(err.msg, "'rethermal threshold'"));
        assert_int_equal(r.worst, -1);
        assert_int_equal(r.evaluated, 0u);
        if (bad[i] != 0.0) { /* nu_n = 0 is allowed: take the mode's */
            s = defaults();
            s.nuclear_frequency = bad[i];
            EXPECT_ERROR(vg_valid_nonadiabatic(&s, 1.0, 30.0, 298.0, 200.0, &v, &holds, &err),
                         "'nuclear frequency'");
        }
    }
    s = defaults();
    s.enabled = 1u << 7;
    assert_int_equal(vg_valid_evaluate(&s, &p, &r, &err), VG_ENUMERIC);
    assert_non_null(strstr(err.msg, "unknown bits"));
    /* a bad input of an enabled criterion names the criterion, and the
     * report is cleared */
    s = defaults();
    p.t1 = NAN;
    assert_int_equal(vg_valid_evaluate(&s, &p, &r, &err), VG_ENUMERIC);
    assert_non_null(strstr(err.msg, "rethermal criterion: 'mode lifetime T1'"));
    assert_int_equal(r.evaluated, 0u);
    assert_int_equal(r.failed, 0u);
    assert_int_equal(r.worst, -1);
    for (i = 0; i < VG_VALID_NCRIT; i++)
        assert_true(r.value[i] == 0.0 && r.margin[i] == 0.0);
    /* a value / threshold that overflows is an error too */
    p = receptor_point();
    s.rethermal_max = 1e-320;
    assert_int_equal(vg_valid_evaluate(&s, &p, &r, &err), VG_ENUMERIC);
    assert_non_null(strstr(err.msg, "rethermal criterion: value / threshold"));
    assert_int_equal(vg_valid_evaluate(NULL, &p, &r, &err), VG_ENUMERIC);
    s = defaults();
    assert_int_equal(vg_valid_evaluate(&s, NULL, &r, &err), VG_ENUMERIC);
}

static void names(void **state)
{
    (void)state;
    assert_string_equal(vg_valid_name(VG_VALID_IDX_NONADIABATIC), "nonadiabatic");
    assert_string_equal(vg_valid_name(VG_VALID_IDX_SOLVENT), "solvent");
    assert_string_equal(vg_valid_name(VG_VALID_IDX_RESOLVED), "resolved");
    assert_string_equal(vg_valid_name(VG_VALID_IDX_RETHERMAL), "rethermal");
    assert_string_equal(vg_valid_name(VG_VALID_NCRIT), "none");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(electronic_frequency_by_hand),
        cmocka_unit_test(kappa_by_hand),
        cmocka_unit_test(receptor_regime),
        cmocka_unit_test(larger_coupling_is_not_nonadiabatic),
        cmocka_unit_test(combined_report),
        cmocka_unit_test(thresholds_are_the_callers),
        cmocka_unit_test(zero_coupling_gives_zero_ratios),
        cmocka_unit_test(scaling_laws),
        cmocka_unit_test(threshold_edges),
        cmocka_unit_test(input_errors),
        cmocka_unit_test(settings_errors),
        cmocka_unit_test(names),
    };

    gsl_set_error_handler_off();
    return cmocka_run_group_tests(tests, NULL, NULL);
}
