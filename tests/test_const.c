/*
 * Tests of include/vg_const.h: the derived constants and unit conversions
 * against the values CODATA 2018 lists (Tiesinga, Mohr, Newell & Taylor,
 * Rev. Mod. Phys. 93, 025010, 2021), and the SI values GSL carries.
 *
 * Every listed value below is given to 10 significant digits, so the
 * comparison is to 1e-9 relative (a listed value is rounded by at most
 * 5e-10 relative).
 */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>

#include <cmocka.h>
#include <gsl/gsl_const_mksa.h>

#include "vg_const.h"

#define LISTED_TOL 1e-9

static void assert_rel(double got, double want, double tol)
{
    double rel = fabs(got - want) / fabs(want);

    if (!(rel <= tol))
        fail_msg("got %.12g, want %.12g: relative difference %.3g > %.3g", got, want, rel, tol);
}

/* k_B = 8.617333262e-5 eV/K (CODATA 2018, exact in the 2019 SI; docs/theory.md). */
static void test_boltzmann_ev(void **state)
{
    (void)state;
    assert_rel(VG_KB_EV, 8.617333262e-5, LISTED_TOL);
    assert_rel(VG_KB_MEV, 8.617333262e-2, LISTED_TOL);
}

/* hbar = 6.582119569e-16 eV s (CODATA 2018; docs/theory.md). */
static void test_hbar_evs(void **state)
{
    (void)state;
    assert_rel(VG_HBAR_EVS, 6.582119569e-16, LISTED_TOL);
}

/* hc = 1.239841984e-6 eV m = 1.239841984e-4 eV cm (CODATA 2018; docs/theory.md),
 * hence 1 cm^-1 = 0.1239841984 meV. */
static void test_hc_and_wavenumber(void **state)
{
    (void)state;
    assert_rel(VG_HC_EVCM, 1.239841984e-4, LISTED_TOL);
    assert_rel(VG_MEV_PER_CM1, 0.1239841984, LISTED_TOL);
}

/* Faraday constant F = e N_A = 96485.33212 C/mol (CODATA 2018, exact; value
 * from memory): 1 eV per particle = 96.48533212 kJ/mol, so 1 kJ/mol =
 * 1e6/96485.33212 meV.  The thermochemical calorie is 4.184 J exactly
 * (ISO 80000-5), so 1 kcal/mol = 4.184e6/96485.33212 meV. */
static void test_molar_energies(void **state)
{
    (void)state;
    assert_rel(VG_MEV_PER_KJMOL, 1.0e6 / 96485.33212, LISTED_TOL);
    assert_rel(VG_MEV_PER_KCALMOL, 4.184e6 / 96485.33212, LISTED_TOL);
}

/* GSL's gsl_const_mksa.h (GSL 2.7) still carries the CODATA 2006 values
 * (k = 1.3806504e-23 J/K, h = 6.62606896e-34 J s, e = 1.602176487e-19 C),
 * so it cannot agree with the 2019 SI to 1e-9: the 2006 -> 2018 revisions
 * are 1.0e-6 (k), 1.8e-7 (h) and 9.2e-8 (e) relative.  The check bounds the
 * difference by 2e-6, the size of those revisions (k's 2006 standard
 * uncertainty was 1.7e-6, from memory); a real error in vg_const.h (a wrong
 * exponent, a missing 2 pi) would be orders of magnitude larger.  GSL's
 * calorie is the International Table one (4.1868 J), a different unit, so it
 * is not compared.  This is the only use of gsl_const_* in the project. */
#define GSL_VINTAGE_TOL 2e-6

static void test_gsl_agrees_to_its_vintage(void **state)
{
    (void)state;
    assert_rel(VG_KB_EV, GSL_CONST_MKSA_BOLTZMANN / GSL_CONST_MKSA_ELECTRON_VOLT,
               GSL_VINTAGE_TOL);
    assert_rel(VG_HBAR_EVS, GSL_CONST_MKSA_PLANCKS_CONSTANT_HBAR / GSL_CONST_MKSA_ELECTRON_VOLT,
               GSL_VINTAGE_TOL);
    assert_rel(VG_HC_EVCM, GSL_CONST_MKSA_PLANCKS_CONSTANT_H * GSL_CONST_MKSA_SPEED_OF_LIGHT
                               * 100.0 / GSL_CONST_MKSA_ELECTRON_VOLT, GSL_VINTAGE_TOL);
    assert_rel(VG_SI_C, GSL_CONST_MKSA_SPEED_OF_LIGHT, 1e-15); /* exact in both */
    assert_rel(VG_MEV_PER_KJMOL, 1.0e6 / GSL_CONST_MKSA_FARADAY, GSL_VINTAGE_TOL);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_boltzmann_ev),
        cmocka_unit_test(test_hbar_evs),
        cmocka_unit_test(test_hc_and_wavenumber),
        cmocka_unit_test(test_molar_energies),
        cmocka_unit_test(test_gsl_agrees_to_its_vintage),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
