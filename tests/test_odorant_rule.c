/*
 * Unit tests of the odorant keys of the config that give the heavy
 * isotopologue by the [isotope] rule ('substitute = PATTERN'), of
 * [model] engine and of the [validity] section (docs/config.md).
 *
 * References: the C-H -> C-D reduced-mass ratio is formed here by hand
 * from atomic masses (AME 2016 / CODATA: 12 u exactly for carbon-12,
 * 1.00782503207 u for 1H, 2.0141017778 u for 2H), and its square root
 * compared with the ratio 1.3619710 quoted in the project's physics notes
 * for the same masses; unit conversions are SI prefixes (1 fs = 1e-3 ps,
 * 1 THz = 1e12 s^-1).  Nothing is copied from the program's output.
 */
#define _XOPEN_SOURCE 700 /* POSIX 2008 and nftw, for testutil.h */

#include <float.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cmocka.h>

#include "testutil.h"

#include "vg_config.h"
#include "vg_evaluate.h"

/* Atomic masses in u (AME 2016, Wang et al., Chin. Phys. C 41, 030003,
 * 2017; carbon-12 is 12 by definition of the unit). */
#define M_C12 12.0
#define M_H1 1.00782503207
#define M_H2 2.0141017778
/* omega_H / omega_D of an isolated C-H oscillator for these masses, to the
 * 8 digits the physics notes print (from memory there, 1.3619710). */
#define REF_CH_RATIO 1.3619710
#define REF_CH_TOL 5e-8

static char tmpdir[] = "/tmp/vg_test_odorant_rule_XXXXXX";

static const char *const PARAMS =
    "[parameters]\n"
    "gap = 400 meV\n"
    "reorganization = 30 meV\n"
    "electronic_coupling = 1 meV\n"
    "huang_rhys = 0.05\n"
    "mode = 2950 cm-1\n"
    "temperature = 310 K\n";

/* Three labelled modes (invented values): two C-H stretches, one damped,
 * and a carbonyl stretch the pattern must leave alone. */
static const char *const TABLE =
    "# invented test table\n"
    "wavenumber_cm-1, huang_rhys, label, lifetime_ps\n"
    "2968, 0.009, C-H stretch (methyl), 1.5\n"
    "1718, 0.060, C=O stretch,\n"
    "2935, 0.012, C-H stretch (methylene), inf\n";

static char *write_tmp(const char *name, const char *text)
{
    return test_write_file(tmpdir, name, text, strlen(text));
}

/* PARAMS + extra as t.ini, loaded; the status. */
static vg_status load_with(vg_config *cfg, const char *extra, size_t nset,
                           const char *const *sets, vg_error *err)
{
    char text[4096];
    char path[4096];

    snprintf(text, sizeof text, "%s%s", PARAMS, extra);
    snprintf(path, sizeof path, "%s", write_tmp("t.ini", text));
    return vg_config_load(cfg, path, nset, sets, err);
}

static double ratio_by_hand(void)
{
    double mu_h = M_C12 * M_H1 / (M_C12 + M_H1), mu_d = M_C12 * M_H2 / (M_C12 + M_H2);
    return sqrt(mu_d / mu_h);
}

static void test_reduced_mass_ratio(void **state)
{
    double r = ratio_by_hand();

    (void)state;
    /* physics notes: mu_CH = 0.9297404 u, mu_CD = 1.7246358 u, ratio 1.3619710 */
    assert_true(fabs(r - REF_CH_RATIO) < REF_CH_TOL);
    assert_true(fabs(vg_isotope_frequency_ratio(vg_reduced_mass(M_C12, M_H2) /
                                                vg_reduced_mass(M_C12, M_H1)) - r)
                <= 4 * DBL_EPSILON * r);
}

/* The rule-derived heavy table: matched modes = the rule applied by hand,
 * the others bit for bit the light ones, lifetimes kept. */
static void check_heavy(const vg_odorant *od, double r, int born_oppenheimer)
{
    const vg_modes *l = od->light, *h = od->heavy;

    assert_non_null(h);
    assert_int_equal(h->n, 3);
    assert_int_equal(od->substituted, 2);
    for (size_t i = 0; i < 3; i++) {
        int ch = strncmp(l->label[i], "C-H stretch", 11) == 0;
        double want_w = ch ? l->mode[i].mode / r : l->mode[i].mode;
        double want_s = ch && born_oppenheimer ? l->mode[i].huang_rhys * r : l->mode[i].huang_rhys;
        assert_string_equal(h->label[i], l->label[i]);
        if (!ch) {
            assert_memory_equal(&h->mode[i], &l->mode[i], sizeof h->mode[i]);
            continue;
        }
        /* one division or multiplication each: within 2 ulp of the hand value */
        assert_true(fabs(h->mode[i].mode - want_w) <= 2 * DBL_EPSILON * want_w);
        assert_true(fabs(h->mode[i].huang_rhys - want_s) <= 2 * DBL_EPSILON * want_s);
        /* Born-Oppenheimer: lambda_v = S hbar omega unchanged (docs/theory.md 5a) */
        if (born_oppenheimer)
            assert_true(fabs(h->mode[i].mode * h->mode[i].huang_rhys -
                             l->mode[i].mode * l->mode[i].huang_rhys)
                        <= 8 * DBL_EPSILON * l->mode[i].mode * l->mode[i].huang_rhys);
        assert_memory_equal(&h->mode[i].lifetime_ps, &l->mode[i].lifetime_ps, sizeof(double));
    }
    assert_true(l->mode[0].lifetime_ps == 1.5 && isinf(l->mode[2].lifetime_ps));
}

static void test_substitute_rule(void **state)
{
    char extra[1024];
    double mass_ratio = vg_reduced_mass(M_C12, M_H2) / vg_reduced_mass(M_C12, M_H1);
    vg_config cfg;
    vg_error err;

    (void)state;
    write_tmp("m.csv", TABLE);
    snprintf(extra, sizeof extra, "[isotope]\nreduced_mass_ratio = %.17g\n"
             "[odorant.od]\nmodes = m.csv\nsubstitute = C-H stretch*\n", mass_ratio);
    assert_int_equal(load_with(&cfg, extra, 0, NULL, &err), VG_OK);
    check_heavy(&cfg.odorants[0], ratio_by_hand(), 1);
    vg_config_free(&cfg);

    snprintf(extra, sizeof extra, "[isotope]\nfrequency_ratio = 1.362\nhuang_rhys_rule = fixed\n"
             "[odorant.od]\nmodes = m.csv\nsubstitute = C-H*\n");
    assert_int_equal(load_with(&cfg, extra, 0, NULL, &err), VG_OK);
    check_heavy(&cfg.odorants[0], 1.362, 0);
    vg_config_free(&cfg);

    /* --set gives the pattern too; '[' classes are fnmatch's */
    {
        const char *sets[] = {"odorant.od.substitute=C-H stretch (m[e]th*"};
        snprintf(extra, sizeof extra, "[isotope]\nfrequency_ratio = 1.362\n"
                 "[odorant.od]\nmodes = m.csv\n");
        assert_int_equal(load_with(&cfg, extra, 1, sets, &err), VG_OK);
        assert_int_equal(cfg.odorants[0].substituted, 2);
        vg_config_free(&cfg);
    }
    /* no match: one line naming the config line and the table */
    snprintf(extra, sizeof extra, "[isotope]\nfrequency_ratio = 1.362\n"
             "[odorant.od]\nmodes = m.csv\nsubstitute = O-H*\n");
    assert_int_equal(load_with(&cfg, extra, 0, NULL, &err), VG_ECONFIG);
    assert_non_null(strstr(err.msg, "t.ini:12: 'substitute = O-H*' in [odorant.od] matches no "
                                    "mode label of m.csv"));
    assert_null(strchr(err.msg, '\n'));
}

static void test_engine(void **state)
{
    const char *fft[] = {"model.engine=fft"};
    vg_config cfg;
    vg_error err;

    (void)state;
    assert_int_equal(load_with(&cfg, "", 0, NULL, &err), VG_OK);
    assert_int_equal(cfg.engine, VG_ENGINE_SUM); /* the default */
    vg_config_free(&cfg);
    /* accepted without odorants (it has no effect there) */
    assert_int_equal(load_with(&cfg, "[model]\nengine = fft\n", 0, NULL, &err), VG_OK);
    assert_int_equal(cfg.engine, VG_ENGINE_FFT);
    vg_config_free(&cfg);
    assert_int_equal(load_with(&cfg, "[model]\nengine = sum\n", 1, fft, &err), VG_OK);
    assert_int_equal(cfg.engine, VG_ENGINE_FFT);
    vg_config_free(&cfg);
}

static void test_validity_keys(void **state)
{
    const char *sets[] = {"validity.nuclear_frequency=mode", "validity.relaxation_time=3 ns"};
    vg_config cfg;
    vg_error err;

    (void)state;
    /* absent: nothing evaluated */
    assert_int_equal(load_with(&cfg, "", 0, NULL, &err), VG_OK);
    assert_int_equal(cfg.validity.on, 0);
    assert_int_equal(cfg.validity.s.enabled, 0u);
    vg_config_free(&cfg);

    /* every key, units converted by SI prefixes */
    assert_int_equal(load_with(&cfg, "[validity]\ncriteria = resolved, solvent, rethermal\n"
                               "solvent_max = 0.5\nresolved_max = 0.02\nrethermal_max = 1\n"
                               "nonadiabatic_max = 0.3\nnuclear_frequency = 2 THz\n"
                               "relaxation_time = 200 fs\nmode_lifetime = 1.5 ps\n", 0, NULL,
                               &err), VG_OK);
    assert_int_equal(cfg.validity.on, 1);
    assert_int_equal(cfg.validity.s.enabled,
                     VG_VALID_RESOLVED | VG_VALID_SOLVENT | VG_VALID_RETHERMAL);
    assert_true(cfg.validity.s.solvent_max == 0.5 && cfg.validity.s.resolved_max == 0.02 &&
                cfg.validity.s.rethermal_max == 1.0 && cfg.validity.s.nonadiabatic_max == 0.3);
    assert_true(fabs(cfg.validity.s.nuclear_frequency - 2e12) <= 2e12 * DBL_EPSILON);
    assert_true(fabs(cfg.validity.tau_l_ps - 0.2) <= 0.2 * 2 * DBL_EPSILON);
    assert_true(fabs(cfg.validity.t1_ps - 1.5) <= 1.5 * 2 * DBL_EPSILON);
    vg_config_free(&cfg);

    /* the header alone turns every criterion on, with the default thresholds
     * of vg_validity.h (0.1, 1e13 s^-1); 'mode' and 0 mean the mode's own */
    assert_int_equal(load_with(&cfg, "[validity]\nmode_lifetime = 1 ps\n"
                               "nuclear_frequency = 0 Hz\n", 2, sets, &err), VG_OK);
    assert_int_equal(cfg.validity.s.enabled, VG_VALID_ALL);
    assert_true(cfg.validity.s.solvent_max == 0.1 && cfg.validity.s.nuclear_frequency == 0.0);
    assert_true(fabs(cfg.validity.tau_l_ps - 3000.0) <= 3000.0 * 2 * DBL_EPSILON);
    vg_config_free(&cfg);

    /* none: the section is read, nothing is evaluated and no input needed */
    assert_int_equal(load_with(&cfg, "[validity]\ncriteria = none\n", 0, NULL, &err), VG_OK);
    assert_int_equal(cfg.validity.on, 1);
    assert_int_equal(cfg.validity.s.enabled, 0u);
    vg_config_free(&cfg);

    /* a --set alone is enough to turn the section on (and then needs inputs) */
    {
        const char *only[] = {"validity.criteria=solvent"};
        assert_int_equal(load_with(&cfg, "", 1, only, &err), VG_ECONFIG);
        assert_non_null(strstr(err.msg, "--set validity.criteria: criterion 'solvent' needs "
                                        "'relaxation_time'"));
    }
}

static int setup(void **state)
{
    (void)state;
    return mkdtemp(tmpdir) ? 0 : -1;
}

static int teardown(void **state)
{
    (void)state;
    return test_remove_tree(tmpdir);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_reduced_mass_ratio),
        cmocka_unit_test(test_substitute_rule),
        cmocka_unit_test(test_engine),
        cmocka_unit_test(test_validity_keys),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
