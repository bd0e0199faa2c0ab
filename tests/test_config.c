/*
 * Tests of the config module (src/config.c): the value grammar and its unit
 * conversions, ranges, the INI reader, defaults, --set overrides, and every
 * error path with its exact message.  The last test runs the bad-input
 * catalogue tests/bad/ (NAME.ini + NAME.expect, format in tests/bad/README)
 * through vg_config_load; tests/scripts/bad_inputs.sh runs the same
 * catalogue through the vibrogate program.
 *
 * Reference values are written out here with their sources; none is copied
 * from the program's output.
 */
#define _XOPEN_SOURCE 700 /* POSIX 2008 and nftw, for testutil.h */

#include <dirent.h>
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
#include "vg_const.h"

/* CODATA 2018 (Tiesinga et al., Rev. Mod. Phys. 93, 025010, 2021), as
 * printed there: hc = 1.239841984e-4 eV cm, so 1 cm^-1 = 0.1239841984 meV;
 * F = N_A e = 96485.33212 C/mol, so 1 eV per particle = 96.48533212 kJ/mol.
 * Printed to 10 digits, hence the 1e-9 relative tolerance. */
#define REF_MEV_PER_CM1 0.1239841984
#define REF_KJMOL_PER_EV 96.48533212
#define REF_TOL 1e-9
/* The thermochemical calorie, 1 cal = 4.184 J exactly (ISO 80000-5). */
#define REF_KJ_PER_KCAL 4.184
/* The same conversions from the exact 2019 SI constants (h, c, e, N_A),
 * evaluated with mpmath at 40 digits: h*c*100/e*1000, 1e6/(N_A*e) and
 * 4.184e6/(N_A*e). */
#define EXACT_MEV_PER_CM1 0.1239841984332002622
#define EXACT_MEV_PER_KJMOL 10.36426965626217380
#define EXACT_MEV_PER_KCALMOL 43.36410424180093517
#define EXACT_TOL (4 * DBL_EPSILON)
/* 10^(1/10), mpmath.power(10, mpf(1)/10) at 40 digits: the step of a log
 * range over three decades in 30 steps. */
#define TENTH_DECADE 1.258925411794167210424

static char tmpdir[] = "/tmp/vg_test_config_XXXXXX";

static int close_rel(double got, double want, double tol)
{
    return fabs(got - want) <= tol * fabs(want);
}

static void assert_rel(double got, double want, double tol)
{
    if (!close_rel(got, want, tol))
        fail_msg("got %.17g, want %.17g (relative tolerance %g)", got, want, tol);
}

/* ------------------------------------------------------------------ */
/* Files.                                                             */

static char *write_file(const char *name, const char *text, size_t len)
{
    return test_write_file(tmpdir, name, text, len);
}

static char *write_ini(const char *text)
{
    return write_file("t.ini", text, strlen(text));
}

/* Replace every "@FILE@" in pattern with path. */
static void expand(const char *pattern, const char *path, char *out, size_t size)
{
    const char *at;
    size_t used = 0;

    out[0] = '\0';
    while ((at = strstr(pattern, "@FILE@")) != NULL) {
        used += (size_t)snprintf(out + used, size - used, "%.*s%s", (int)(at - pattern), pattern,
                                 path);
        pattern = at + 6;
    }
    snprintf(out + used, size - used, "%s", pattern);
}

/* want with "@FILE@" expanded; "@ANY@" (at most one) matches any text. */
static int message_matches(const char *got, const char *want, const char *path)
{
    char full[2 * VG_ERROR_MAX];
    char *any;
    size_t head, tail, n = strlen(got);

    expand(want, path, full, sizeof full);
    any = strstr(full, "@ANY@");
    if (!any)
        return strcmp(got, full) == 0;
    head = (size_t)(any - full);
    tail = strlen(any + 5);
    return n >= head + tail && strncmp(got, full, head) == 0 &&
           strcmp(got + n - tail, any + 5) == 0;
}

static void assert_message(const vg_error *err, const char *want, const char *path)
{
    if (!message_matches(err->msg, want, path))
        fail_msg("message\n  got:  %s\n  want: %s", err->msg, want);
}

/* Load and check as the map-drawing commands do (check, sweep, render):
 * vg_config_load, then vg_config_check_maps. */
static vg_status load_for_maps(vg_config *cfg, const char *path, size_t nset,
                               const char *const *sets, vg_error *err)
{
    vg_status st = vg_config_load(cfg, path, nset, sets, err);

    if (st == VG_OK && (st = vg_config_check_maps(cfg, err)) != VG_OK)
        vg_config_free(cfg);
    return st;
}

/* Load text with the given overrides; expect status st. */
static void load_text(vg_config *cfg, const char *text, size_t nset, const char *const *sets,
                      vg_status st, vg_error *err)
{
    vg_status got = load_for_maps(cfg, write_ini(text), nset, sets, err);

    if (got != st)
        fail_msg("status %d, wanted %d (%s)", got, st, got ? err->msg : "");
}

/* Loading text must fail with status VG_ECONFIG and message want. */
static void expect_refused(const char *text, const char *want)
{
    vg_config cfg;
    vg_error err;
    char *path = write_ini(text);
    vg_status st = vg_config_load(&cfg, path, 0, NULL, &err);

    if (st != VG_ECONFIG)
        fail_msg("accepted (status %d): %s", st, text);
    assert_message(&err, want, path);
    assert_null(cfg.path); /* cfg is left freed */
}

static const char *const minimal =
    "[parameters]\n"
    "gap = 250 meV\n"
    "reorganization = 30 meV\n"
    "huang_rhys = 0.05\n"
    "mode = 200 meV\n";

/* ------------------------------------------------------------------ */
/* Parameter table.                                                   */

/* The contract in include/vg_config.h: keys, canonical units, CSV columns. */
static void test_param_info(void **state)
{
    static const char *const key[] = {"gap", "reorganization", "electronic_coupling",
                                      "huang_rhys", "mode", "temperature"};
    static const char *const unit[] = {"meV", "meV", "meV", "1", "meV", "K"};
    static const char *const col[] = {"gap_meV", "reorganization_meV",
                                      "electronic_coupling_meV", "huang_rhys", "mode_meV",
                                      "temperature_K"};
    (void)state;
    for (int p = 0; p < VG_NPARAM; p++) {
        const vg_param_info *info = vg_param_get((vg_param_id)p);
        assert_non_null(info);
        assert_string_equal(info->key, key[p]);
        assert_string_equal(info->unit, unit[p]);
        assert_string_equal(info->csv_column, col[p]);
        assert_true(info->long_name[0] && info->symbol[0]);
    }
    assert_null(vg_param_get(VG_NPARAM));
    assert_null(vg_param_get((vg_param_id)-1));
}

/* ------------------------------------------------------------------ */
/* Value grammar.                                                     */

static void parse_ok(vg_param_id id, const char *text, vg_param *p)
{
    vg_error err = {VG_OK, ""};

    if (vg_config_parse_value(id, text, p, &err) != VG_OK)
        fail_msg("'%s' refused: %s", text, err.msg);
}

/* Every unit, against the printed CODATA values and the exact SI ones. */
static void test_units(void **state)
{
    static const struct {
        vg_param_id id;
        const char *text;
        double want;      /* canonical, from the printed reference values */
        double exact;     /* canonical, from the exact SI constants (0: same as want) */
        const char *unit;
    } c[] = {
        {VG_P_GAP, "123.45 meV", 123.45, 0, "meV"},
        {VG_P_GAP, "0.23851 eV", 238.51, 0, "eV"},              /* SI prefix: 1 eV = 1000 meV */
        {VG_P_MODE, "1637.5 cm-1", 1637.5 * REF_MEV_PER_CM1, 1637.5 * EXACT_MEV_PER_CM1, "cm-1"},
        {VG_P_MODE, "2385 cm^-1", 2385 * REF_MEV_PER_CM1, 2385 * EXACT_MEV_PER_CM1, "cm^-1"},
        {VG_P_REORG, "12.5 kJ/mol", 12.5 * 1000.0 / REF_KJMOL_PER_EV,
         12.5 * EXACT_MEV_PER_KJMOL, "kJ/mol"},
        {VG_P_REORG, "2.385 kcal/mol", 2.385 * REF_KJ_PER_KCAL * 1000.0 / REF_KJMOL_PER_EV,
         2.385 * EXACT_MEV_PER_KCALMOL, "kcal/mol"},
        {VG_P_TEMPERATURE, "310.5 K", 310.5, 0, "K"},
        {VG_P_HUANG_RHYS, "0.0385", 0.0385, 0, ""},
        {VG_P_COUPLING, "-0 meV", 0.0, 0, "meV"},
        {VG_P_GAP, "-1.5e2meV", -150.0, 0, "meV"},             /* unit may follow directly */
        {VG_P_GAP, "+.5 eV", 500.0, 0, "eV"},
    };
    (void)state;
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
        vg_param p;
        parse_ok(c[i].id, c[i].text, &p);
        assert_int_equal(p.n, 1);
        assert_int_equal(p.log_spacing, 0);
        assert_string_equal(p.user_unit, c[i].unit);
        if (c[i].want == 0.0)
            assert_true(p.v[0] == 0.0 && !signbit(p.v[0])); /* -0 is stored as +0 */
        else
            assert_rel(p.v[0], c[i].want, REF_TOL);
        if (c[i].exact != 0.0)
            assert_rel(p.v[0], c[i].exact, EXACT_TOL);
        free(p.v);
    }
}

/* A trailing unit applies to every item; items may carry units of the
 * same kind; the unit recorded is the trailing one. */
static void test_lists(void **state)
{
    vg_param p;

    (void)state;
    parse_ok(VG_P_MODE, "1600, 2100 cm-1", &p);
    assert_int_equal(p.n, 2);
    assert_rel(p.v[0], 1600 * EXACT_MEV_PER_CM1, EXACT_TOL);
    assert_rel(p.v[1], 2100 * EXACT_MEV_PER_CM1, EXACT_TOL);
    assert_string_equal(p.user_unit, "cm-1");
    free(p.v);

    parse_ok(VG_P_MODE, "0.2 eV, 1600 cm-1, 150 meV", &p);
    assert_int_equal(p.n, 3);
    assert_rel(p.v[0], 200.0, DBL_EPSILON);
    assert_rel(p.v[1], 1600 * EXACT_MEV_PER_CM1, EXACT_TOL);
    assert_true(p.v[2] == 150.0);
    assert_string_equal(p.user_unit, "meV");
    free(p.v);

    parse_ok(VG_P_HUANG_RHYS, "0.01, 0.03, 0.1", &p);
    assert_int_equal(p.n, 3);
    assert_true(p.v[0] == 0.01 && p.v[1] == 0.03 && p.v[2] == 0.1);
    assert_string_equal(p.user_unit, "");
    free(p.v);

    parse_ok(VG_P_TEMPERATURE, "350, 300 K, 250K", &p); /* decreasing is allowed */
    assert_int_equal(p.n, 3);
    assert_true(p.v[0] == 350.0 && p.v[1] == 300.0 && p.v[2] == 250.0);
    free(p.v);
}

/* Linear ranges: ends exact, interior points the exact decimal values. */
static void test_linear_ranges(void **state)
{
    vg_param p;

    (void)state;
    parse_ok(VG_P_GAP, "0 .. 600 meV, 241 points", &p);
    assert_int_equal(p.n, 241);
    assert_int_equal(p.log_spacing, 0);
    assert_string_equal(p.user_unit, "meV");
    for (size_t i = 0; i < p.n; i++)
        assert_true(p.v[i] == 2.5 * (double)i); /* 600/240 = 2.5, exact in binary */
    free(p.v);

    parse_ok(VG_P_GAP, "-1 .. 1 eV, 5 points", &p);
    assert_int_equal(p.n, 5);
    for (size_t i = 0; i < 5; i++)
        assert_true(p.v[i] == -1000.0 + 500.0 * (double)i);
    free(p.v);

    /* Ends that a + (b - a) * t would not reproduce exactly. */
    parse_ok(VG_P_GAP, "-12.3 .. 587.3 meV, 7 points", &p);
    assert_true(p.v[0] == -12.3 && p.v[6] == 587.3);
    for (size_t i = 1; i < 6; i++)
        assert_rel(p.v[i], -12.3 + 99.9333333333333333 * (double)i, 4 * DBL_EPSILON);
    free(p.v);

    parse_ok(VG_P_REORG, "10..300 meV,3 points,linear", &p);
    assert_true(p.n == 3 && p.v[0] == 10.0 && p.v[1] == 155.0 && p.v[2] == 300.0);
    free(p.v);

    parse_ok(VG_P_GAP, "5 .. 5 meV, 1 point", &p); /* one point: a scalar */
    assert_true(p.n == 1 && p.v[0] == 5.0);
    free(p.v);

    /* A unit on each end, of the same kind: ends converted, then spaced. */
    parse_ok(VG_P_MODE, "1600 cm-1 .. 0.3 eV, 3 points", &p);
    assert_rel(p.v[0], 1600 * EXACT_MEV_PER_CM1, EXACT_TOL);
    assert_rel(p.v[1], (1600 * EXACT_MEV_PER_CM1 + 300.0) / 2, EXACT_TOL);
    assert_true(p.v[2] == 300.0);
    assert_string_equal(p.user_unit, "eV");
    free(p.v);
}

/* Log ranges: geometric to 1e-15 relative, ends exact, decades exact. */
static void test_log_ranges(void **state)
{
    vg_param p;

    (void)state;
    parse_ok(VG_P_HUANG_RHYS, "0.001 .. 1, 31 points, log", &p);
    assert_int_equal(p.n, 31);
    assert_int_equal(p.log_spacing, 1);
    assert_true(p.v[0] == 0.001 && p.v[30] == 1.0);
    assert_rel(p.v[10], 0.01, 1e-15);
    assert_rel(p.v[20], 0.1, 1e-15);
    for (size_t i = 1; i < p.n; i++)
        assert_rel(p.v[i] / p.v[i - 1], TENTH_DECADE, 1e-15);
    free(p.v);

    /* Descending, in cm-1: the step is 10^(-1/3) whatever the unit. */
    parse_ok(VG_P_MODE, "8000 .. 80 cm-1, 7 points, log", &p);
    assert_int_equal(p.n, 7);
    assert_rel(p.v[0], 8000 * EXACT_MEV_PER_CM1, EXACT_TOL);
    assert_rel(p.v[6], 80 * EXACT_MEV_PER_CM1, EXACT_TOL);
    for (size_t i = 1; i < p.n; i++)
        assert_rel(p.v[i - 1] / p.v[i], 2.154434690031883722, 1e-15); /* 10^(1/3), mpmath */
    free(p.v);
}

/* Every error of the value grammar, with its exact message. */
static void test_value_errors(void **state)
{
    static const struct {
        vg_param_id id;
        const char *text;
        const char *msg;
    } c[] = {
        {VG_P_GAP, "  ", "'gap' has no value"},
        {VG_P_GAP, "120", "'gap' needs a unit: meV, eV, cm-1, cm^-1, kJ/mol or kcal/mol "
                          "(got '120')"},
        {VG_P_TEMPERATURE, "300", "'temperature' needs a unit: K (got '300')"},
        {VG_P_TEMPERATURE, "300 meV", "'temperature' takes a unit of K, not 'meV' "
                                      "(got '300 meV')"},
        {VG_P_GAP, "120 K", "'gap' takes a unit of meV, eV, cm-1, cm^-1, kJ/mol or kcal/mol, "
                            "not 'K' (got '120 K')"},
        {VG_P_HUANG_RHYS, "0.1 meV", "'huang_rhys' is dimensionless and takes no unit "
                                     "(got '0.1 meV')"},
        {VG_P_GAP, "120 mev", "unknown unit 'mev' for 'gap' (allowed: meV, eV, cm-1, cm^-1, "
                              "kJ/mol or kcal/mol)"},
        {VG_P_GAP, "120 meV extra", "unknown unit 'meV extra' for 'gap' (allowed: meV, eV, "
                                    "cm-1, cm^-1, kJ/mol or kcal/mol)"},
        {VG_P_GAP, "abc meV", "bad number 'abc' for 'gap' (write a decimal number such as "
                              "120, -0.5 or 1.5e-3)"},
        {VG_P_GAP, "inf meV", "bad number 'inf' for 'gap' (write a decimal number such as "
                              "120, -0.5 or 1.5e-3)"},
        {VG_P_GAP, "-infinity meV", "bad number '-infinity' for 'gap' (write a decimal number "
                                    "such as 120, -0.5 or 1.5e-3)"},
        {VG_P_HUANG_RHYS, "nan", "bad number 'nan' for 'huang_rhys' (write a decimal number "
                                 "such as 120, -0.5 or 1.5e-3)"},
        {VG_P_GAP, "0x1p4 meV", "hex number '0x1p4' for 'gap' is not allowed (write a decimal "
                                "number)"},
        {VG_P_GAP, "1e999 meV", "number '1e999' for 'gap' is out of the range of double "
                                "precision"},
        {VG_P_HUANG_RHYS, "1e-400", "number '1e-400' for 'huang_rhys' is out of the range of "
                                    "double precision"},
        {VG_P_GAP, "1.2.3 meV", "bad number '1.2.3' for 'gap' (write a decimal number such as "
                                "120, -0.5 or 1.5e-3)"},
        {VG_P_REORG, "-5 meV", "'reorganization' must be > 0 meV (got -5 meV)"},
        {VG_P_REORG, "0 eV", "'reorganization' must be > 0 meV (got 0 eV = 0 meV)"},
        {VG_P_REORG, "-0.005 eV", "'reorganization' must be > 0 meV (got -0.005 eV = -5 meV)"},
        {VG_P_REORG, "0.05 meV", "'reorganization' must be between 0.1 and 3000 meV "
                                 "(got 0.05 meV)"},
        {VG_P_REORG, "3.5 eV", "'reorganization' must be between 0.1 and 3000 meV "
                               "(got 3.5 eV = 3500 meV)"},
        {VG_P_TEMPERATURE, "-3 K", "'temperature' must be > 0 K (got -3 K)"},
        {VG_P_TEMPERATURE, "0.5 K", "'temperature' must be between 1 and 5000 K (got 0.5 K)"},
        {VG_P_TEMPERATURE, "6000 K", "'temperature' must be between 1 and 5000 K (got 6000 K)"},
        {VG_P_HUANG_RHYS, "-0.1", "'huang_rhys' must be >= 0 (got -0.1)"},
        {VG_P_HUANG_RHYS, "50.5", "'huang_rhys' must be between 0 and 50 (got 50.5)"},
        {VG_P_MODE, "0 meV", "'mode' must be > 0 meV (got 0 meV)"},
        {VG_P_MODE, "0.5 meV", "'mode' must be between 1 and 1000 meV (got 0.5 meV)"},
        {VG_P_MODE, "9000 cm-1", "'mode' must be between 1 and 1000 meV "
                                 "(got 9000 cm-1 = 1115.86 meV)"},
        {VG_P_COUPLING, "-1 meV", "'electronic_coupling' must be >= 0 meV (got -1 meV)"},
        {VG_P_COUPLING, "2 eV", "'electronic_coupling' must be between 0 and 1000 meV "
                                "(got 2 eV = 2000 meV)"},
        {VG_P_GAP, "-3.5 eV", "'gap' must be between -3000 and 3000 meV (got -3.5 eV = "
                              "-3500 meV)"},
        {VG_P_MODE, "100, -2100 cm-1", "'mode' must be > 0 meV (got -2100 cm-1 = -260.367 "
                                       "meV)"},
        {VG_P_GAP, "1 eV, 1600", "'gap' needs a unit: meV, eV, cm-1, cm^-1, kJ/mol or "
                                 "kcal/mol (got '1600')"},
        {VG_P_TEMPERATURE, "300 K, 2 meV", "'temperature' takes a unit of K, not 'meV' "
                                           "(got '2 meV')"},
        {VG_P_GAP, "1, , 2 meV", "empty item in the list of 'gap'"},
        {VG_P_GAP, "1, 1 meV", "the values of 'gap' must all differ and be in increasing or "
                               "decreasing order (got '1, 1 meV')"},
        {VG_P_GAP, "1, 3, 2 meV", "the values of 'gap' must all differ and be in increasing "
                                  "or decreasing order (got '1, 3, 2 meV')"},
        {VG_P_GAP, "1, 0 .. 2 meV, 3 points", "a range of 'gap' must come first and stand "
                                              "alone, as in '0 .. 600 meV, 241 points' "
                                              "(got '0 .. 2 meV')"},
        {VG_P_GAP, "0 .. 600 meV", "a range of 'gap' needs a number of points, as in "
                                   "'0 .. 600 meV, 241 points'"},
        {VG_P_GAP, ".. 600 meV, 3 points", "a range of 'gap' needs one start and one stop, as "
                                           "in '0 .. 600 meV, 241 points' (got '.. 600 meV')"},
        {VG_P_GAP, "0 .. 1 .. 2 meV, 3 points", "a range of 'gap' needs one start and one "
                                                "stop, as in '0 .. 600 meV, 241 points' "
                                                "(got '0 .. 1 .. 2 meV')"},
        {VG_P_GAP, "0 .. 600 meV, 0 points", "a range of 'gap' needs at least 1 point "
                                             "(got 0 points)"},
        {VG_P_GAP, "0 .. 600 meV, -3 points", "a range of 'gap' needs at least 1 point "
                                              "(got -3 points)"},
        {VG_P_GAP, "0 .. 600 meV, 3 pts", "expected 'N points' after the range of 'gap' "
                                          "(got '3 pts')"},
        {VG_P_GAP, "0 .. 600 meV, 2.5 points", "expected 'N points' after the range of 'gap' "
                                               "(got '2.5 points')"},
        {VG_P_GAP, "0 .. 600 meV, 10000001 points", "'gap' has 10000001 points, more than "
                                                    "the limit of 10000000 per parameter"},
        {VG_P_GAP, "0 .. 600 meV, 99999999999999999999 points", "'gap' has "
         "99999999999999999999 points, more than the limit of 10000000 per parameter"},
        {VG_P_GAP, "0 .. 600 meV, 3 points, lin", "unexpected 'lin' after the range of 'gap' "
                                                  "(allowed: 'log' or 'linear')"},
        {VG_P_GAP, "0 .. 600 meV, 3 points, log, x", "unexpected 'x' after the range of 'gap' "
                                                     "(allowed: 'log' or 'linear')"},
        {VG_P_GAP, "5 .. 5 meV, 3 points", "a range of 'gap' with 3 points needs two "
                                           "different ends (got 5 meV .. 5 meV)"},
        {VG_P_GAP, "0 .. 5 meV, 1 point", "a range of 'gap' with 1 point needs equal ends "
                                          "(got 0 meV .. 5 meV); give a single value instead"},
        {VG_P_HUANG_RHYS, "0 .. 1, 5 points, log", "a log range of 'huang_rhys' needs both "
                                                   "ends > 0 (got 0 .. 1)"},
        {VG_P_GAP, "-10 .. 10 meV, 5 points, log", "a log range of 'gap' needs both ends > 0 "
                                                   "(got -10 meV .. 10 meV)"},
        {VG_P_REORG, "0 .. 300 meV, 4 points", "'reorganization' must be > 0 meV (got 0 meV)"},
        {VG_P_TEMPERATURE, "100 .. 6000 K, 4 points", "'temperature' must be between 1 and "
                                                      "5000 K (got 6000 K)"},
        {VG_P_GAP, "1 .. 1.0000000000000002 meV, 100 points", "the points of 'gap' are too "
         "close to tell apart in double precision (got '1 .. 1.0000000000000002 meV, 100 "
         "points')"},
    };
    (void)state;
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
        vg_param p;
        vg_error err = {VG_OK, ""};
        vg_status st = vg_config_parse_value(c[i].id, c[i].text, &p, &err);
        if (st != VG_ECONFIG)
            fail_msg("'%s' accepted (status %d)", c[i].text, st);
        assert_int_equal(err.status, VG_ECONFIG);
        assert_null(p.v);
        assert_int_equal(p.n, 0);
        assert_message(&err, c[i].msg, "");
    }
}

/* ------------------------------------------------------------------ */
/* Loading files.                                                     */

static void test_load_everything(void **state)
{
    static const char text[] =
        "; every key\n"
        "[scenario]\n"
        "title = Receptor HR-7, run no. 3   ; a comment\n"
        "notes = ratio 1:2; kept # a comment too\n"
        "[parameters]\n"
        "gap = 0 .. 600 meV, 241 points\n"
        "reorganization = 10 .. 300 meV, 59 points, log\n"
        "electronic_coupling = 0.5, 2 meV\n"
        "huang_rhys = 0.05\n"
        "mode = 1720, 2170, 2950 cm-1\n"
        "temperature = 310 K\n"
        "[model]\n"
        "mode_statistics = frozen\n"
        "tolerance = 1e-10\n"
        "[output]\n"
        "directory = out/run#3\n"
        "data = csv\n"
        "metrics = log10_ratio, log10_k_total\n"
        "max_size = 500 MB\n";
    vg_config cfg;
    vg_error err;
    const int line[VG_NPARAM] = {6, 7, 8, 9, 10, 11};

    (void)state;
    load_text(&cfg, text, 0, NULL, VG_OK, &err);
    assert_string_equal(cfg.text, text);
    assert_null(cfg.overrides);
    assert_string_equal(cfg.title, "Receptor HR-7, run no. 3");
    assert_string_equal(cfg.notes, "ratio 1:2; kept");
    assert_int_equal(cfg.param[VG_P_GAP].n, 241);
    assert_int_equal(cfg.param[VG_P_REORG].n, 59);
    assert_int_equal(cfg.param[VG_P_REORG].log_spacing, 1);
    assert_int_equal(cfg.param[VG_P_COUPLING].n, 2);
    assert_int_equal(cfg.param[VG_P_MODE].n, 3);
    assert_string_equal(cfg.param[VG_P_MODE].user_unit, "cm-1");
    for (int p = 0; p < VG_NPARAM; p++) {
        assert_int_equal(cfg.param[p].line, line[p]);
        assert_int_equal(cfg.param[p].defaulted, 0);
    }
    assert_int_equal(cfg.stats, VG_STATS_FROZEN);
    assert_true(cfg.tolerance == 1e-10);
    assert_string_equal(cfg.out_dir, "out/run#3"); /* '#' not after white space: kept */
    assert_int_equal(cfg.formats, VG_FMT_CSV);
    for (int m = 0; m < VG_N_METRICS; m++)
        assert_int_equal(cfg.metric_on[m], m == VG_M_LOG10_RATIO || m == VG_M_LOG10_K_TOTAL);
    assert_true(cfg.max_bytes == 5e8);
    vg_config_free(&cfg);
}

/* Omitted keys take their documented defaults, flagged as such. */
static void test_defaults(void **state)
{
    static const int line[VG_NPARAM] = {2, 3, 0, 4, 5, 0}; /* lines in minimal */
    vg_config cfg;
    vg_error err;

    (void)state;
    load_text(&cfg, minimal, 0, NULL, VG_OK, &err);
    assert_true(cfg.param[VG_P_TEMPERATURE].v[0] == 298.15);
    assert_true(cfg.param[VG_P_COUPLING].v[0] == 1.0);
    assert_string_equal(cfg.param[VG_P_TEMPERATURE].user_unit, "K");
    assert_string_equal(cfg.param[VG_P_COUPLING].user_unit, "meV");
    for (int p = 0; p < VG_NPARAM; p++) {
        int def = p == VG_P_TEMPERATURE || p == VG_P_COUPLING;
        assert_int_equal(cfg.param[p].defaulted, def);
        assert_int_equal(cfg.param[p].n, 1);
        assert_int_equal(cfg.param[p].line, line[p]);
    }
    assert_string_equal(cfg.title, "");
    assert_string_equal(cfg.notes, "");
    assert_int_equal(cfg.stats, VG_STATS_THERMAL);
    assert_true(cfg.tolerance == 1e-12);
    assert_string_equal(cfg.out_dir, "vibrogate-out");
    assert_int_equal(cfg.formats, VG_FMT_NETCDF | VG_FMT_CSV);
    /* docs/config.md: by default every metric the config can compute; the
     * isotope and feasibility metrics need their sections */
    for (int m = 0; m < VG_N_METRICS; m++)
        assert_int_equal(cfg.metric_on[m], m <= VG_M_LOG10_CONTRAST);
    assert_true(cfg.max_bytes == 4294967296.0); /* 4 GiB = 2^32 bytes */
    vg_config_free(&cfg);
}

/* Overrides: applied in order after the file, each replacing the value. */
static void test_overrides(void **state)
{
    static const char *const sets[] = {
        "parameters.gap=150 meV", "parameters.temperature = 77 K",
        "parameters.gap=0.2 eV", "scenario.title=from the command line",
        "output.metrics=log10_ratio"};
    vg_config cfg;
    vg_error err;

    (void)state;
    load_text(&cfg, minimal, 5, sets, VG_OK, &err);
    assert_true(cfg.param[VG_P_GAP].v[0] == 200.0);
    assert_string_equal(cfg.param[VG_P_GAP].user_unit, "eV");
    assert_int_equal(cfg.param[VG_P_GAP].line, -1);
    assert_true(cfg.param[VG_P_TEMPERATURE].v[0] == 77.0);
    assert_int_equal(cfg.param[VG_P_TEMPERATURE].line, -1);
    assert_int_equal(cfg.param[VG_P_TEMPERATURE].defaulted, 0);
    assert_int_equal(cfg.param[VG_P_REORG].line, 3);
    assert_string_equal(cfg.title, "from the command line");
    assert_string_equal(cfg.overrides,
                        "parameters.gap=150 meV\nparameters.temperature = 77 K\n"
                        "parameters.gap=0.2 eV\nscenario.title=from the command line\n"
                        "output.metrics=log10_ratio");
    assert_int_equal(cfg.metric_on[VG_M_LOG10_RATIO], 1);
    assert_int_equal(cfg.metric_on[VG_M_LOG10_K_TOTAL], 0);
    vg_config_free(&cfg);
}

/* Overrides go through the same checks; the location names the --set. */
static void test_override_errors(void **state)
{
    static const struct {
        const char *set;
        const char *msg;
    } c[] = {
        {"parameters.gap=9 eV", "--set parameters.gap: 'gap' must be between -3000 and 3000 "
                                "meV (got 9 eV = 9000 meV)"},
        {"gap=1 meV", "--set gap: expected 'section.key=value' (did you mean "
                      "'parameters.gap'?)"},
        {"parameters.gap", "--set parameters.gap: expected 'section.key=value'"},
        {"=5", "--set =5: expected 'section.key=value'"},
        {"paramters.gap=1 meV", "--set paramters.gap: unknown section '[paramters]' (did you "
                                "mean '[parameters]'?)"},
        {"parameters.gapp=1 meV", "--set parameters.gapp: unknown key 'gapp' in [parameters] "
                                  "(did you mean 'gap'?)"},
        {"model.gap=1 meV", "--set model.gap: unknown key 'gap' in [model] (it belongs in "
                            "[parameters])"},
        {"parameters.mode=", "--set parameters.mode: 'mode' has no value"},
        {"scenario.title=a\033b", "--set: control character 0x1b at byte 17 (only UTF-8 text "
                                  "and tabs are allowed)"},
        {"output.max_size=1 kB", "--set output.max_size: the outputs would take about @ANY@, "
                                 "more than max_size (1 kB); raise 'max_size' in [output] or "
                                 "use fewer points"},
    };
    (void)state;
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
        const char *sets[2] = {"parameters.gap=0 .. 600 meV, 100 points", c[i].set};
        vg_config cfg;
        vg_error err;
        load_text(&cfg, minimal, 2, sets, VG_ECONFIG, &err);
        assert_message(&err, c[i].msg, "");
        assert_null(cfg.text); /* cfg is left freed */
        assert_null(cfg.param[VG_P_GAP].v);
    }
}

/* CRLF line ends, a byte order mark, comments, tabs, UTF-8 text. */
static void test_line_forms(void **state)
{
    static const char text[] =
        "\xEF\xBB\xBF# comment\r\n"
        "[scenario]\t; comment\r\n"
        "title =\tCaf\xC3\xA9 \xE2\x80\x94 \xF0\x9F\x90\x9D\r\n"
        "\r\n"
        "[parameters]\r\n"
        "  gap = 250 meV ; indented, so a key (no continuation lines)\r\n"
        "reorganization=30 meV\r\n"
        "huang_rhys = 0.05 # comment\r\n"
        "mode = 200 meV";
    vg_config cfg;
    vg_error err;

    (void)state;
    load_text(&cfg, text, 0, NULL, VG_OK, &err);
    assert_string_equal(cfg.title, "Caf\xC3\xA9 \xE2\x80\x94 \xF0\x9F\x90\x9D");
    assert_int_equal(cfg.param[VG_P_GAP].line, 6);
    assert_true(cfg.param[VG_P_GAP].v[0] == 250.0);
    assert_int_equal(cfg.param[VG_P_MODE].line, 9);
    vg_config_free(&cfg);
}

/* Lines of exactly the limit are read whole; one byte more is refused. */
static void test_line_limit(void **state)
{
    static char text[8192];
    vg_config cfg;
    vg_error err;
    size_t head = strlen("[scenario]\ntitle = ");

    (void)state;
    strcpy(text, "[scenario]\ntitle = ");
    memset(text + head, 'a', 4096 - 8);   /* "title = " + 4088 = 4096 bytes */
    strcpy(text + head + 4096 - 8, "\r\n");
    strcat(text, minimal);
    load_text(&cfg, text, 0, NULL, VG_OK, &err);
    assert_int_equal(strlen(cfg.title), 4088);
    vg_config_free(&cfg);

    memmove(text + head + 1, text + head, strlen(text + head) + 1);
    load_text(&cfg, text, 0, NULL, VG_ECONFIG, &err);
    assert_message(&err, "@FILE@:2: line is 4097 bytes long, the limit is 4096 bytes",
                   write_ini(text));
}

/* Mistakes of the file, each with its exact message. */
static void test_file_errors(void **state)
{
    static const struct {
        const char *text;
        const char *msg;
    } c[] = {
        {"gap = 1 meV\n", "@FILE@:1: key 'gap' comes before any section header (it belongs "
                          "in [parameters])"},
        {"q = 1\n", "@FILE@:1: key 'q' comes before any section header (start with "
                    "[scenario], [parameters], [model], [output], [isotope], [feasibility], "
                    "[uncertainty] or [validity])"},
        {"[paramters]\n", "@FILE@:1: unknown section '[paramters]' (did you mean "
                          "'[parameters]'?)"},
        {"[Output]\n", "@FILE@:1: unknown section '[Output]' (did you mean '[output]'?)"},
        {"[parameters]\n[results]\n", "@FILE@:2: unknown section '[results]' (allowed: "
                                      "[scenario], [parameters], [model], [output], "
                                      "[isotope], [feasibility], [uncertainty], [validity])"},
        {"[ parameters ]\n", "@FILE@:1: unknown section '[ parameters ]' (did you mean "
                             "'[parameters]'?)"},
        {"[parameters\n", "@FILE@:1: section header '[parameters' has no closing ']'"},
        {"[parameters] gap = 1 meV\n", "@FILE@:1: unexpected 'gap = 1 meV' after the section "
                                       "header (only a comment may follow)"},
        {"[model]\n[model]\n", "@FILE@:2: section [model] appears twice (first at line 1)"},
        {"[parameters]\nreorganisation = 30 meV\n", "@FILE@:2: unknown key 'reorganisation' "
         "in [parameters] (did you mean 'reorganization'?)"},
        {"[parameters]\ntemp = 300 K\n", "@FILE@:2: unknown key 'temp' in [parameters] (did "
                                         "you mean 'temperature'?)"},
        {"[parameters]\nelectronic coupling = 1 meV\n", "@FILE@:2: unknown key 'electronic "
         "coupling' in [parameters] (did you mean 'electronic_coupling'?)"},
        {"[scenario]\ncolour = red\n", "@FILE@:2: unknown key 'colour' in [scenario] "
                                       "(allowed: title, notes)"},
        {"[model]\nmode = 200 meV\n", "@FILE@:2: unknown key 'mode' in [model] (it belongs in "
                                      "[parameters])"},
        {"[parameters]\ngap = 1 meV\ngap = 2 meV\n", "@FILE@:3: duplicate key 'gap' in "
                                                     "[parameters] (first set at line 2)"},
        {"[parameters]\ngap 250 meV\n", "@FILE@:2: expected 'key = value', a '[section]' "
                                        "header or a comment (got 'gap 250 meV')"},
        {"[parameters]\ngap ; = 250 meV\n", "@FILE@:2: expected 'key = value', a '[section]' "
                                            "header or a comment (got 'gap ; = 250 meV')"},
        {"[parameters]\ngap: 250 meV\n", "@FILE@:2: expected '=' between key and value, not "
                                         "':' (got 'gap: 250 meV')"},
        {"[parameters]\n= 250 meV\n", "@FILE@:2: missing key before '='"},
        {"[parameters]\ngap = ; nothing\n", "@FILE@:2: 'gap' has no value"},
        {"[parameters]\ngap = 250\n", "@FILE@:2: 'gap' needs a unit: meV, eV, cm-1, cm^-1, "
                                      "kJ/mol or kcal/mol (got '250')"},
        {"[parameters]\nhuang_rhys = 0.1 eV\n", "@FILE@:2: 'huang_rhys' is dimensionless and "
                                                "takes no unit (got '0.1 eV')"},
        {"[model]\nmode_statistics = hot\n", "@FILE@:2: 'mode_statistics' must be 'thermal' "
                                             "or 'frozen' (got 'hot')"},
        {"[model]\ntolerance = 0.1\n", "@FILE@:2: 'tolerance' must be between 1e-15 and 0.001 "
                                       "(got 0.1)"},
        {"[model]\ntolerance = 1e-16\n", "@FILE@:2: 'tolerance' must be between 1e-15 and "
                                         "0.001 (got 1e-16)"},
        {"[model]\ntolerance = 1e-12 s\n", "@FILE@:2: 'tolerance' is dimensionless and takes "
                                           "no unit (got '1e-12 s')"},
        {"[model]\ntolerance = 1e-12, 1e-9\n", "@FILE@:2: 'tolerance' takes a single value "
                                               "(got '1e-12, 1e-9')"},
        {"[model]\ntolerance = nan\n", "@FILE@:2: bad number 'nan' for 'tolerance' (write a "
                                       "decimal number such as 120, -0.5 or 1.5e-3)"},
        {"[output]\ndirectory =\n", "@FILE@:2: 'directory' needs a directory name"},
        {"[output]\ndata = cvs\n", "@FILE@:2: unknown data format 'cvs' in 'data' (did you "
                                   "mean 'csv'?)"},
        {"[output]\ndata = hdf5\n", "@FILE@:2: unknown data format 'hdf5' in 'data' "
                                    "(allowed: netcdf, csv)"},
        {"[output]\ndata = netcdf,,csv\n", "@FILE@:2: empty item in the list of 'data' "
                                           "(allowed: netcdf, csv)"},
        {"[output]\ndata =\n", "@FILE@:2: empty item in the list of 'data' (allowed: netcdf, "
                               "csv)"},
        {"[output]\nmetrics = log10_k_totl\n", "@FILE@:2: unknown metric 'log10_k_totl' in "
                                               "'metrics' (did you mean 'log10_k_total'?)"},
        {"[output]\nmetrics = speed\n", "@FILE@:2: unknown metric 'speed' in 'metrics' "
         "(allowed: log10_k_elastic, log10_k_assisted, log10_k_total, log10_k_bare, "
         "log10_ratio, assisted_fraction, log10_contrast, log10_k_total_heavy, "
         "isotope_effect, log10_isotope_effect, feasible, discrimination, log10_discrimination, valid, failed_criteria)"},
        {"[output]\nmax_size = 500\n", "@FILE@:2: 'max_size' needs a unit: bytes, B, kB, MB, "
                                       "GB, TB, KiB, MiB, GiB or TiB (got '500')"},
        {"[output]\nmax_size = 5 PB\n", "@FILE@:2: unknown unit 'PB' for 'max_size' "
                                        "(allowed: bytes, B, kB, MB, GB, TB, KiB, MiB, GiB or "
                                        "TiB)"},
        {"[output]\nmax_size = 0.5 bytes\n", "@FILE@:2: 'max_size' must be at least 1 byte "
                                             "(got '0.5 bytes')"},
        {"[output]\nmax_size = -2 GiB\n", "@FILE@:2: 'max_size' must be at least 1 byte "
                                          "(got '-2 GiB')"},
        {"[scenario]\ntitle = a\x01z\n", "@FILE@:2: control character 0x01 at byte 10 (only "
                                         "UTF-8 text and tabs are allowed)"},
        {"[scenario]\ntitle = caf\xE9\n", "@FILE@:2: invalid UTF-8 at byte 12 (config files "
                                          "must be UTF-8 text)"},
        {"[scenario]\ntitle = \xC0\xAF\n", "@FILE@:2: invalid UTF-8 at byte 9 (config files "
                                           "must be UTF-8 text)"},          /* overlong '/' */
        {"[scenario]\ntitle = \xED\xA0\x80\n", "@FILE@:2: invalid UTF-8 at byte 9 (config "
                                               "files must be UTF-8 text)"}, /* surrogate */
        {"[scenario]\ntitle = \xF4\x90\x80\x80\n", "@FILE@:2: invalid UTF-8 at byte 9 "
                                                   "(config files must be UTF-8 text)"},
        {"[scenario]\ntitle = a\rb\n", "@FILE@:2: control character 0x0d at byte 10 (only "
                                       "UTF-8 text and tabs are allowed)"},
        {"", "@FILE@:1: missing required parameter 'gap' in [parameters]"},
        {"[scenario]\n\n[parameters]\ngap = 1 meV\nreorganization = 30 meV\nmode = 200 meV\n",
         "@FILE@:3: missing required parameter 'huang_rhys' in [parameters]"},
        {"[parameters]\ngap = 0 .. 1 eV, 10000 points\nreorganization = 1 .. 1000 meV, 10000 "
         "points, log\nhuang_rhys = 0 .. 1, 20000 points\nmode = 200 meV\n[output]\n"
         "max_size = 1 TiB\n", "@FILE@:1: the grid has 2e+12 points, more than the limit of "
                               "1e+12"},
        {"[parameters]\ngap = 0 .. 1 eV, 1000 points\nreorganization = 30 meV\n"
         "huang_rhys = 0.05\nmode = 200 meV\n[output]\nmax_size = 1 kB\n",
         "@FILE@:7: the outputs would take about @ANY@, more than max_size (1 kB); raise "
         "'max_size' in [output] or use fewer points"},
        {"[parameters]\ngap = 0 .. 1 eV, 10000000 points\nreorganization = 1, 2 meV\n"
         "huang_rhys = 0.05\nmode = 200 meV\n", "@FILE@:1: the outputs would take about "
         "@ANY@, more than max_size (4.29 GB); raise 'max_size' in [output] or use fewer "
         "points"},
    };
    (void)state;
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++)
        expect_refused(c[i].text, c[i].msg);
}

/* Of several mistakes the first in file order is reported; whole-file
 * checks come only after every line passed. */
static void test_first_mistake(void **state)
{
    static const struct {
        const char *text;
        const char *msg;
    } c[] = {
        {"[parameters]\ngap = 250\n[bogus]\n", "@FILE@:2: 'gap' needs a unit: meV, eV, cm-1, "
                                               "cm^-1, kJ/mol or kcal/mol (got '250')"},
        {"[bogus]\n[parameters]\ngap = 250\n", "@FILE@:1: unknown section '[bogus]' (allowed: "
                                               "[scenario], [parameters], [model], [output], "
                                               "[isotope], [feasibility], [uncertainty], [validity])"},
        {"[parameters]\ngap = 1 meV\n[output]\nmax_size = 1 kB\ndata = xml\n",
         "@FILE@:5: unknown data format 'xml' in 'data' (allowed: netcdf, csv)"},
        {"[parameters]\ngap = 1 meV\n[scenario]\ntitle = \xFF\n", "@FILE@:4: invalid UTF-8 at "
         "byte 9 (config files must be UTF-8 text)"},
    };
    (void)state;
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++)
        expect_refused(c[i].text, c[i].msg);
}

/* A NUL byte (which strlen-based code would silently stop at). */
static void test_nul_byte(void **state)
{
    static const char text[] = "[parameters]\ngap = 250\0 meV\n";
    vg_config cfg;
    vg_error err;
    char *path = write_file("nul.ini", text, sizeof text - 1);

    (void)state;
    assert_int_equal(vg_config_load(&cfg, path, 0, NULL, &err), VG_ECONFIG);
    assert_message(&err, "@FILE@:2: NUL byte at byte 10 (config files must be UTF-8 text)",
                   path);
}

static void test_missing_and_unreadable(void **state)
{
    vg_config cfg;
    vg_error err;
    char path[4096];

    (void)state;
    snprintf(path, sizeof path, "%s/absent.ini", tmpdir);
    assert_int_equal(vg_config_load(&cfg, path, 0, NULL, &err), VG_ECONFIG);
    assert_message(&err, "@FILE@: cannot open config file: no such file or directory", path);
    assert_int_equal(vg_config_load(&cfg, tmpdir, 0, NULL, &err), VG_ECONFIG);
    assert_message(&err, "@FILE@: cannot read config file: is a directory", tmpdir);
}

static void test_file_size_limit(void **state)
{
    size_t n = 1024 * 1024 + 1;
    char *text = malloc(n);
    vg_config cfg;
    vg_error err;
    char *path;

    (void)state;
    assert_non_null(text);
    memset(text, '\n', n);
    path = write_file("big.ini", text, n);
    free(text);
    assert_int_equal(vg_config_load(&cfg, path, 0, NULL, &err), VG_ECONFIG);
    assert_message(&err, "@FILE@: config file is larger than the limit of 1048576 bytes", path);
}

/* Raising max_size lets the same grid through. */
static void test_max_size_raise(void **state)
{
    static const char text[] = "[parameters]\ngap = 0 .. 1 eV, 1000 points\n"
                               "reorganization = 30 meV\nhuang_rhys = 0.05\nmode = 200 meV\n"
                               "[output]\nmax_size = 1 kB\n";
    static const char *const sets[] = {"output.max_size=2 GiB"};
    vg_config cfg;
    vg_error err;

    (void)state;
    load_text(&cfg, text, 1, sets, VG_OK, &err);
    assert_true(cfg.max_bytes == 2147483648.0); /* 2 * 2^30 */
    vg_config_free(&cfg);
    vg_config_free(&cfg); /* freeing twice is safe */
}

/* ------------------------------------------------------------------ */
/* Figure keys of [output].                                           */

/* A grid with four axes (gap, reorganization, electronic_coupling, mode)
 * and two scalars; [output] opens at line 8, so its first key is line 9. */
#define FIG_GRID                                                                          \
    "[parameters]\n"                                                                      \
    "gap = 0 .. 600 meV, 7 points\n"                                                      \
    "reorganization = 10 .. 300 meV, 5 points, log\n"                                     \
    "electronic_coupling = 1, 2 meV\n"                                                    \
    "huang_rhys = 0.05\n"                                                                 \
    "mode = 1720, 2950 cm-1\n"                                                            \
    "temperature = 310 K\n"                                                               \
    "[output]\n"

/* The four axes, as listed in messages (grid order, fastest first). */
#define FIG_AXES "gap, reorganization, electronic_coupling, mode"

/* The example of a mark in the messages (docs/config.md). */
#define MARK_EXAMPLE "M1: gap 230 meV, reorganization 30 meV"

/* Without figure keys: no figures, and the documented defaults. */
static void test_figure_defaults(void **state)
{
    vg_config cfg;
    vg_error err;
    const vg_figure_spec *f = &cfg.fig;

    (void)state;
    load_text(&cfg, FIG_GRID, 0, NULL, VG_OK, &err);
    assert_int_equal(f->formats, 0);
    assert_int_equal(f->nmaps, 1);
    assert_int_equal(f->maps[0], VG_M_LOG10_RATIO);
    assert_int_equal(f->x, VG_P_GAP);
    assert_int_equal(f->y, VG_P_REORG);
    assert_int_equal(f->panels, -1);
    assert_int_equal(f->rows, -1);
    assert_true(f->width_in == 7.0);
    assert_true(f->dpi == 300.0);
    assert_string_equal(f->font, "DejaVu Sans");
    assert_int_equal(f->ncontours, 0);
    assert_int_equal(f->nmarks, 0);
    vg_config_free(&cfg);

    /* No axes and no figures: accepted, x and y still gap and reorganization. */
    load_text(&cfg, minimal, 0, NULL, VG_OK, &err);
    assert_int_equal(f->formats, 0);
    assert_int_equal(f->x, VG_P_GAP);
    assert_int_equal(f->y, VG_P_REORG);
    vg_config_free(&cfg);
}

/* Default x and y: the two fastest axes in grid order (gap, reorganization,
 * electronic_coupling, huang_rhys, mode, temperature), avoiding the one
 * given when only one is. */
static void test_figure_default_axes(void **state)
{
    static const struct {
        const char *params; /* the [parameters] lines after gap and reorganization */
        const char *keys;   /* [output] keys */
        vg_param_id x, y;
    } c[] = {
        {"huang_rhys = 0.05\nmode = 1720, 2950 cm-1\ntemperature = 250, 300 K\n", "",
         VG_P_MODE, VG_P_TEMPERATURE},
        {"huang_rhys = 0.01, 0.1\nmode = 200 meV\ntemperature = 250, 300 K\n", "",
         VG_P_HUANG_RHYS, VG_P_TEMPERATURE},
        {"huang_rhys = 0.01, 0.1\nelectronic_coupling = 1, 2 meV\nmode = 200 meV\n", "",
         VG_P_COUPLING, VG_P_HUANG_RHYS},
        {"huang_rhys = 0.01, 0.1\nmode = 1720, 2950 cm-1\n", "x = mode\n", VG_P_MODE,
         VG_P_HUANG_RHYS},
        {"huang_rhys = 0.01, 0.1\nmode = 1720, 2950 cm-1\n", "y = huang_rhys\n", VG_P_MODE,
         VG_P_HUANG_RHYS},
        {"huang_rhys = 0.01, 0.1\nmode = 1720, 2950 cm-1\n", "y = mode\n", VG_P_HUANG_RHYS,
         VG_P_MODE},
    };
    (void)state;
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
        char text[1024];
        vg_config cfg;
        vg_error err;
        snprintf(text, sizeof text, "[parameters]\ngap = 250 meV\nreorganization = 30 meV\n"
                 "%s[output]\nfigures = png\n%s", c[i].params, c[i].keys);
        load_text(&cfg, text, 0, NULL, VG_OK, &err);
        assert_int_equal(cfg.fig.formats, VG_FIG_PNG);
        if (cfg.fig.x != c[i].x || cfg.fig.y != c[i].y)
            fail_msg("case %zu: x %d, y %d; wanted %d, %d", i, cfg.fig.x, cfg.fig.y, c[i].x,
                     c[i].y);
        vg_config_free(&cfg);
    }
}

/* Every figure key, with the values converted as documented. */
static void test_figure_keys(void **state)
{
    static const char text[] = FIG_GRID
        "figures = svg, png\n"
        "maps = log10_k_total, log10_ratio, assisted_fraction\n"
        "x = reorganization\n"
        "y = gap\n"
        "panels = mode\n"
        "rows = electronic_coupling\n"
        "width = 17.8 cm\n"
        "dpi = 612.5\n"
        "font = Noto Sans CJK JP\n"
        "contours = 1.5, 0, -2.25\n"
        "mark = HR-12 (C=O): gap 0.23 eV, reorganization 30 meV, mode 1720 cm-1\n"
        "mark = cold:temperature 77 K,huang_rhys 0.12\n"
        "mark = \xCE\xB5 \xE2\x89\x88 \xCE\xBB: gap 30 meV, reorganization 30 meV\n";
    vg_config cfg;
    vg_error err;
    const vg_figure_spec *f = &cfg.fig;

    (void)state;
    load_text(&cfg, text, 0, NULL, VG_OK, &err);
    assert_int_equal(f->formats, VG_FIG_PNG | VG_FIG_SVG);
    assert_int_equal(f->nmaps, 3);
    assert_int_equal(f->maps[0], VG_M_LOG10_K_TOTAL); /* in the order given */
    assert_int_equal(f->maps[1], VG_M_LOG10_RATIO);
    assert_int_equal(f->maps[2], VG_M_ASSISTED_FRACTION);
    assert_int_equal(f->x, VG_P_REORG);
    assert_int_equal(f->y, VG_P_GAP);
    assert_int_equal(f->panels, VG_P_MODE);
    assert_int_equal(f->rows, VG_P_COUPLING);
    assert_rel(f->width_in, 17.8 / 2.54, DBL_EPSILON); /* 1 in = 2.54 cm exactly (1959) */
    assert_true(f->dpi == 612.5);
    assert_string_equal(f->font, "Noto Sans CJK JP");
    assert_int_equal(f->ncontours, 3);
    assert_true(f->contours[0] == 1.5 && f->contours[1] == 0.0 && f->contours[2] == -2.25);
    assert_int_equal(f->nmarks, 3);
    assert_string_equal(f->marks[0].label, "HR-12 (C=O)");
    assert_int_equal(f->marks[0].line, 19);
    assert_true(f->marks[0].has[VG_P_GAP] && f->marks[0].v[VG_P_GAP] == 230.0);
    assert_true(f->marks[0].has[VG_P_REORG] && f->marks[0].v[VG_P_REORG] == 30.0);
    assert_true(f->marks[0].has[VG_P_MODE]);
    assert_rel(f->marks[0].v[VG_P_MODE], 1720 * EXACT_MEV_PER_CM1, EXACT_TOL);
    assert_false(f->marks[0].has[VG_P_COUPLING] || f->marks[0].has[VG_P_HUANG_RHYS] ||
                 f->marks[0].has[VG_P_TEMPERATURE]);
    assert_string_equal(f->marks[1].label, "cold");
    assert_int_equal(f->marks[1].line, 20);
    assert_true(f->marks[1].has[VG_P_TEMPERATURE] && f->marks[1].v[VG_P_TEMPERATURE] == 77.0);
    assert_true(f->marks[1].has[VG_P_HUANG_RHYS] && f->marks[1].v[VG_P_HUANG_RHYS] == 0.12);
    assert_false(f->marks[1].has[VG_P_GAP] || f->marks[1].has[VG_P_REORG]);
    assert_string_equal(f->marks[2].label, "\xCE\xB5 \xE2\x89\x88 \xCE\xBB"); /* UTF-8 */
    vg_config_free(&cfg);
}

/* The other spellings: each width unit, "none", every metric, the limits. */
static void test_figure_values(void **state)
{
    static const struct {
        const char *width;
        double in;
    } w[] = {
        /* 1 in = 25.4 mm exactly (international inch, 1959); 1 pt = 1/72 in
         * (the PostScript point, common practice in PDF and SVG). */
        {"180 mm", 180.0 / 25.4}, {"504 pt", 7.0}, {"6.35in", 6.35}, {"1 in", 1.0},
        {"40 in", 40.0}, {"101.6 cm", 40.0}, {"72 pt", 1.0},
    };
    static const char all_maps[] = "maps = log10_contrast, assisted_fraction, log10_ratio, "
                                   "log10_k_bare, log10_k_total, log10_k_assisted, "
                                   "log10_k_elastic\n";
    char text[2048];
    vg_config cfg;
    vg_error err;

    (void)state;
    for (size_t i = 0; i < sizeof w / sizeof w[0]; i++) {
        snprintf(text, sizeof text, FIG_GRID "width = %s\n", w[i].width);
        load_text(&cfg, text, 0, NULL, VG_OK, &err);
        assert_rel(cfg.fig.width_in, w[i].in, 2 * DBL_EPSILON);
        vg_config_free(&cfg);
    }
    snprintf(text, sizeof text, FIG_GRID "figures = pdf, png, svg, pdf\n%sdpi = 50\n"
             "contours = none\nfont = Times\n", all_maps);
    load_text(&cfg, text, 0, NULL, VG_OK, &err);
    assert_int_equal(cfg.fig.formats, VG_FIG_PNG | VG_FIG_PDF | VG_FIG_SVG);
    assert_int_equal(cfg.fig.nmaps, VG_M_LOG10_CONTRAST + 1); /* the seven listed */
    for (int m = 0; m <= VG_M_LOG10_CONTRAST; m++)
        assert_int_equal(cfg.fig.maps[m], VG_M_LOG10_CONTRAST - m);
    assert_true(cfg.fig.dpi == 50.0);
    assert_int_equal(cfg.fig.ncontours, 0);
    vg_config_free(&cfg);

    /* 63 bytes, the most a font name or a mark label may have. */
    load_text(&cfg, FIG_GRID
              "font = 012345678901234567890123456789012345678901234567890123456789012\n"
              "mark = 012345678901234567890123456789012345678901234567890123456789012: gap 1 meV\n",
              0, NULL, VG_OK, &err);
    assert_int_equal(strlen(cfg.fig.font), 63);
    assert_int_equal(strlen(cfg.fig.marks[0].label), 63);
    vg_config_free(&cfg);

    load_text(&cfg, FIG_GRID "figures = none\ndpi = 2400\npanels = none\nrows = none\n", 0,
              NULL, VG_OK, &err);
    assert_int_equal(cfg.fig.formats, 0);
    assert_true(cfg.fig.dpi == 2400.0);
    assert_true(cfg.fig.panels == -1 && cfg.fig.rows == -1);
    vg_config_free(&cfg);
}

/* A text of n "mark = Mi: gap i meV" lines and n contour levels 0 .. n-1. */
static void many(char *text, size_t size, int marks, int levels)
{
    size_t used = (size_t)snprintf(text, size, FIG_GRID "contours = 0");
    for (int i = 1; i < levels; i++)
        used += (size_t)snprintf(text + used, size - used, ", %d", i);
    used += (size_t)snprintf(text + used, size - used, "\n");
    for (int i = 0; i < marks; i++)
        used += (size_t)snprintf(text + used, size - used, "mark = M%d: gap %d meV\n", i, i);
}

/* Up to VG_MAX_MARKS marks and VG_MAX_CONTOURS levels; one more is refused. */
static void test_figure_limits(void **state)
{
    char text[4096];
    vg_config cfg;
    vg_error err;

    (void)state;
    many(text, sizeof text, VG_MAX_MARKS, VG_MAX_CONTOURS);
    load_text(&cfg, text, 0, NULL, VG_OK, &err);
    assert_int_equal(cfg.fig.nmarks, 16);
    assert_int_equal(cfg.fig.ncontours, 16);
    assert_string_equal(cfg.fig.marks[15].label, "M15");
    assert_true(cfg.fig.marks[15].v[VG_P_GAP] == 15.0);
    assert_true(cfg.fig.contours[15] == 15.0);
    vg_config_free(&cfg);

    many(text, sizeof text, VG_MAX_MARKS + 1, VG_MAX_CONTOURS);
    expect_refused(text, "@FILE@:26: 'mark' is given more than 16 times (the limit is 16 "
                         "marks)"); /* line 9 contours, marks at lines 10 .. 26 */
    many(text, sizeof text, 0, VG_MAX_CONTOURS + 1);
    expect_refused(text, "@FILE@:9: 'contours' has 17 levels, more than the limit of 16");
}

/* Overrides: output.mark adds a mark; the others replace the value. */
static void test_figure_overrides(void **state)
{
    static const char text[] = FIG_GRID "figures = png\npanels = mode\ncontours = 1, 2\n"
                               "mark = A: gap 100 meV\n";
    static const char *const sets[] = {
        "output.mark=B: gap 200 meV", "output.figures=pdf", "output.panels=none",
        "output.contours=none", "output.mark = C:reorganization 20 meV", "output.x=mode",
        "output.width=10 cm"};
    vg_config cfg;
    vg_error err;

    (void)state;
    load_text(&cfg, text, 7, sets, VG_OK, &err);
    assert_int_equal(cfg.fig.nmarks, 3);
    assert_string_equal(cfg.fig.marks[0].label, "A");
    assert_int_equal(cfg.fig.marks[0].line, 12);
    assert_string_equal(cfg.fig.marks[1].label, "B");
    assert_int_equal(cfg.fig.marks[1].line, -1);
    assert_true(cfg.fig.marks[1].v[VG_P_GAP] == 200.0);
    assert_string_equal(cfg.fig.marks[2].label, "C");
    assert_true(cfg.fig.marks[2].v[VG_P_REORG] == 20.0);
    assert_int_equal(cfg.fig.formats, VG_FIG_PDF);
    assert_int_equal(cfg.fig.panels, -1);
    assert_int_equal(cfg.fig.ncontours, 0);
    assert_int_equal(cfg.fig.x, VG_P_MODE);
    assert_int_equal(cfg.fig.y, VG_P_GAP); /* the fastest axis other than x */
    assert_rel(cfg.fig.width_in, 10.0 / 2.54, DBL_EPSILON);
    vg_config_free(&cfg);
}

/* With figures = none the figure keys are read one by one but not checked
 * against the grid: a scalar x is accepted, as is a grid without axes. */
static void test_figure_keys_unused(void **state)
{
    static const char *const sets[] = {"output.figures=none"};
    char text[1024];
    vg_config cfg;
    vg_error err;

    (void)state;
    load_text(&cfg, FIG_GRID "x = huang_rhys\nrows = temperature\n", 0, NULL, VG_OK, &err);
    assert_int_equal(cfg.fig.x, VG_P_HUANG_RHYS);
    assert_int_equal(cfg.fig.y, VG_P_GAP);
    assert_int_equal(cfg.fig.rows, VG_P_TEMPERATURE);
    vg_config_free(&cfg);
    snprintf(text, sizeof text, "%s[output]\nfigures = png\ndata = csv\n", minimal);
    load_text(&cfg, text, 1, sets, VG_OK, &err);
    assert_int_equal(cfg.fig.formats, 0);
    vg_config_free(&cfg);
}

/* Mistakes of one figure key, each with its exact message. */
static void test_figure_errors(void **state)
{
    static const struct {
        const char *keys; /* [output] lines after FIG_GRID, from line 9 */
        const char *msg;
    } c[] = {
        {"figures = jpg\n", "9: unknown figure format 'jpg' in 'figures' (allowed: png, pdf, "
                            "svg, none)"},
        {"figures = pgn\n", "9: unknown figure format 'pgn' in 'figures' (did you mean "
                            "'png'?)"},
        {"figures = PDF\n", "9: unknown figure format 'PDF' in 'figures' (did you mean "
                            "'pdf'?)"},
        {"figures = png,,pdf\n", "9: empty item in the list of 'figures' (allowed: png, pdf, "
                                 "svg, none)"},
        {"figures =\n", "9: empty item in the list of 'figures' (allowed: png, pdf, svg, "
                        "none)"},
        {"figures = none, png\n", "9: 'figures' takes 'none' or a list of formats, not both "
                                  "(got 'none, png')"},
        {"figures = png\nfigures = pdf\n", "10: duplicate key 'figures' in [output] (first set "
                                           "at line 9)"},
        {"maps = log10_ratoi\n", "9: unknown metric 'log10_ratoi' in 'maps' (did you mean "
                                 "'log10_ratio'?)"},
        {"maps = rate\n", "9: unknown metric 'rate' in 'maps' (allowed: log10_k_elastic, "
                          "log10_k_assisted, log10_k_total, log10_k_bare, log10_ratio, "
                          "assisted_fraction, log10_contrast, log10_k_total_heavy, "
                          "isotope_effect, log10_isotope_effect, feasible, discrimination, log10_discrimination, valid, failed_criteria)"},
        {"maps = log10_ratio, log10_k_total, log10_ratio\n", "9: metric 'log10_ratio' appears "
                                                             "twice in 'maps'"},
        {"maps = log10_ratio,\n", "9: empty item in the list of 'maps' (allowed: "
                                  "log10_k_elastic, log10_k_assisted, log10_k_total, "
                                  "log10_k_bare, log10_ratio, assisted_fraction, "
                                  "log10_contrast, log10_k_total_heavy, isotope_effect, "
                                  "log10_isotope_effect, feasible, discrimination, log10_discrimination, valid, failed_criteria)"},
        {"x = temp\n", "9: unknown parameter 'temp' in 'x' (did you mean 'temperature'?)"},
        {"x = voltage\n", "9: unknown parameter 'voltage' in 'x' (allowed: gap, "
                          "reorganization, electronic_coupling, huang_rhys, mode, "
                          "temperature)"},
        {"y = gap, mode\n", "9: 'y' takes a single value (got 'gap, mode')"},
        {"y =\n", "9: 'y' has no value"},
        {"panels = Gap\n", "9: unknown parameter 'Gap' in 'panels' (did you mean 'gap'?)"},
        {"panels = voltage\n", "9: unknown parameter 'voltage' in 'panels' (allowed: gap, "
                               "reorganization, electronic_coupling, huang_rhys, mode, "
                               "temperature, none)"},
        {"rows = huang\n", "9: unknown parameter 'huang' in 'rows' (did you mean "
                           "'huang_rhys'?)"},
        {"width = 7\n", "9: 'width' needs a unit: in, cm, mm or pt (got '7')"},
        {"width = 7 px\n", "9: unknown unit 'px' for 'width' (allowed: in, cm, mm or pt)"},
        {"width = 7 IN\n", "9: unknown unit 'IN' for 'width' (allowed: in, cm, mm or pt)"},
        {"width = 0.5 in\n", "9: 'width' must be between 1 and 40 in (got 0.5 in)"},
        {"width = 200 cm\n", "9: 'width' must be between 1 and 40 in (got 200 cm = 78.7402 "
                             "in)"},                          /* 200/2.54 = 78.74015... */
        {"width = 70 pt\n", "9: 'width' must be between 1 and 40 in (got 70 pt = 0.972222 in)"},
        {"width = -7 in\n", "9: 'width' must be between 1 and 40 in (got -7 in)"},
        {"width = 7 in, 8 in\n", "9: 'width' takes a single value (got '7 in, 8 in')"},
        {"width = inf in\n", "9: bad number 'inf' for 'width' (write a decimal number such as "
                             "120, -0.5 or 1.5e-3)"},
        {"dpi = 300 dpi\n", "9: 'dpi' is in dots per inch and takes no unit (got '300 dpi')"},
        {"dpi = 20\n", "9: 'dpi' must be between 50 and 2400 (got 20)"},
        {"dpi = 4800\n", "9: 'dpi' must be between 50 and 2400 (got 4800)"},
        {"dpi = 0x12C\n", "9: hex number '0x12C' for 'dpi' is not allowed (write a decimal "
                          "number)"},
        {"dpi =\n", "9: 'dpi' has no value"},
        {"font =\n", "9: 'font' needs a font family name, such as 'DejaVu Sans'"},
        {"font = " "0123456789012345678901234567890123456789012345678901234567890123" "\n",
         "9: 'font' is 64 bytes long, the limit is 63 bytes (got "
         "'0123456789012345678901234567890123456789012345678901234567890123')"},
        {"contours =\n", "9: 'contours' has no value"},
        {"contours = 1, , 2\n", "9: empty item in the list of 'contours'"},
        {"contours = 0, 1 dex\n", "9: 'contours' is in the units of the mapped metric and "
                                  "takes no unit (got '1 dex')"},
        {"contours = 0, nan\n", "9: bad number 'nan' for 'contours' (write a decimal number "
                                "such as 120, -0.5 or 1.5e-3)"},
        {"contours = 1e999\n", "9: number '1e999' for 'contours' is out of the range of double "
                               "precision"},
        {"contours = 1, 0, 2\n", "9: the values of 'contours' must all differ and be in "
                                 "increasing or decreasing order (got '1, 0, 2')"},
        {"contours = 1, 1\n", "9: the values of 'contours' must all differ and be in "
                              "increasing or decreasing order (got '1, 1')"},
        {"mark = M1 gap 230 meV\n", "9: 'mark' needs a label, ':' and parameter values, as in "
                                    "'" MARK_EXAMPLE "' (got 'M1 gap 230 meV')"},
        {"mark = : gap 230 meV\n", "9: 'mark' needs a label before ':', as in '" MARK_EXAMPLE
                                   "' (got ': gap 230 meV')"},
        {"mark = M1:\n", "9: mark 'M1' needs at least one parameter value after ':', as in '"
                         MARK_EXAMPLE "'"},
        {"mark = " "0123456789012345678901234567890123456789012345678901234567890123"
         ": gap 1 meV\n", "9: the label of 'mark' is 64 bytes long, the limit is 63 bytes "
         "(got '0123456789012345678901234567890123456789012345678901234567890123')"},
        {"mark = M1: gap 230 meV, , mode 200 meV\n", "9: empty item in the list of 'mark'"},
        {"mark = M1: gap 230 meV,\n", "9: empty item in the list of 'mark'"},
        {"mark = M1: gapp 230 meV\n", "9: unknown parameter 'gapp' in 'mark' (did you mean "
                                      "'gap'?)"},
        {"mark = M1: 230 meV\n", "9: unknown parameter '230' in 'mark' (allowed: gap, "
                                 "reorganization, electronic_coupling, huang_rhys, mode, "
                                 "temperature)"},
        {"mark = M1: gap\n", "9: 'gap' in 'mark' has no value"},
        {"mark = M1: gap 230\n", "9: 'gap' needs a unit: meV, eV, cm-1, cm^-1, kJ/mol or "
                                 "kcal/mol (got '230')"},
        {"mark = M1: temperature 25 meV\n", "9: 'temperature' takes a unit of K, not 'meV' "
                                            "(got '25 meV')"},
        {"mark = M1: huang_rhys 0.1 meV\n", "9: 'huang_rhys' is dimensionless and takes no "
                                            "unit (got '0.1 meV')"},
        {"mark = M1: gap 5 eV\n", "9: 'gap' must be between -3000 and 3000 meV (got 5 eV = "
                                  "5000 meV)"},
        {"mark = M1: reorganization 0 meV\n", "9: 'reorganization' must be > 0 meV (got 0 "
                                              "meV)"},
        {"mark = M1: mode 9000 cm-1\n", "9: 'mode' must be between 1 and 1000 meV (got 9000 "
                                        "cm-1 = 1115.86 meV)"},
        {"mark = M1: gap two meV\n", "9: bad number 'two' for 'gap' (write a decimal number "
                                     "such as 120, -0.5 or 1.5e-3)"},
        {"mark = M1: gap 1 .. 2 meV\n", "9: 'gap' in 'mark' takes a single value (got '1 .. 2 "
                                        "meV')"},
        {"mark = M1: gap 230 meV, gap 240 meV\n", "9: 'gap' is given twice in mark 'M1'"},
        {"mark = M1: gap 230 meV\nmark = M2: gap 1 meV\nmark = M1: gap 240 meV\n",
         "11: mark 'M1' appears twice (first at line 9)"},
    };
    (void)state;
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
        char text[1024], msg[512];
        snprintf(text, sizeof text, FIG_GRID "%s", c[i].keys);
        snprintf(msg, sizeof msg, "@FILE@:%s", c[i].msg);
        expect_refused(text, msg);
    }
}

/* Checks of the whole: figures need sweep.nc with every map, two axes,
 * and x, y, panels, rows naming distinct axes of the final grid. */
static void test_figure_cross_errors(void **state)
{
    static const struct {
        const char *params; /* NULL: FIG_GRID; else the [parameters] section */
        const char *keys;   /* the [output] lines */
        const char *set;    /* one --set, or NULL */
        const char *msg;
    } c[] = {
        {NULL, "figures = png\ndata = csv\n", NULL, "@FILE@:9: 'figures' needs 'netcdf' in "
         "'data' (figures are drawn from sweep.nc)"},
        {NULL, "data = csv\nfigures = png\n", NULL, "@FILE@:10: 'figures' needs 'netcdf' in "
         "'data' (figures are drawn from sweep.nc)"},
        {NULL, "figures = png\n", "output.data=csv", "@FILE@:9: 'figures' needs 'netcdf' in "
         "'data' (figures are drawn from sweep.nc)"},
        {NULL, "data = csv\n", "output.figures=svg", "--set output.figures: 'figures' needs "
         "'netcdf' in 'data' (figures are drawn from sweep.nc)"},
        {NULL, "figures = png\nmetrics = log10_k_total\n", NULL, "@FILE@:10: 'maps' needs "
         "'log10_ratio' in 'metrics' (figures are drawn from sweep.nc)"},
        {NULL, "figures = png\nmetrics = log10_ratio\nmaps = log10_ratio, log10_k_bare\n",
         NULL, "@FILE@:11: 'maps' needs 'log10_k_bare' in 'metrics' (figures are drawn from "
         "sweep.nc)"},
        {"gap = 0 .. 600 meV, 7 points\nreorganization = 30 meV\n", "figures = png\n", NULL,
         "@FILE@:9: figures need at least two axes (parameters with more than one value); the "
         "grid has 1"},
        {"gap = 250 meV\nreorganization = 30 meV\n", "figures = pdf\n", NULL,
         "@FILE@:9: figures need at least two axes (parameters with more than one value); the "
         "grid has 0"},
        {"gap = 0 .. 600 meV, 7 points\nreorganization = 10, 20 meV\n", "figures = png\n",
         "parameters.reorganization=30 meV", "@FILE@:9: figures need at least two axes "
         "(parameters with more than one value); the grid has 1"},
        {NULL, "figures = png\nx = huang_rhys\n", NULL, "@FILE@:10: 'x' must name an axis of "
         "the grid (got 'huang_rhys', a single value; axes: " FIG_AXES ")"},
        {NULL, "figures = png\ny = temperature\n", NULL, "@FILE@:10: 'y' must name an axis of "
         "the grid (got 'temperature', a single value; axes: " FIG_AXES ")"},
        {NULL, "figures = png\nx = gap\ny = gap\n", NULL, "@FILE@:11: 'y' must differ from "
         "'x' (got 'gap', which is 'x')"},
        {NULL, "figures = png\npanels = gap\n", NULL, "@FILE@:10: 'panels' must differ from "
         "'x' and 'y' (got 'gap', which is 'x')"},
        {NULL, "figures = png\npanels = reorganization\n", NULL, "@FILE@:10: 'panels' must "
         "differ from 'x' and 'y' (got 'reorganization', which is 'y')"},
        {NULL, "figures = png\npanels = temperature\n", NULL, "@FILE@:10: 'panels' must name "
         "an axis of the grid (got 'temperature', a single value; axes: " FIG_AXES ")"},
        {NULL, "figures = png\nrows = mode\n", NULL, "@FILE@:10: 'rows' needs 'panels' too "
         "(rows arrange the panels of a figure)"},
        {NULL, "figures = png\nrows = mode\npanels = mode\n", NULL, "@FILE@:10: 'rows' must "
         "differ from 'x', 'y' and 'panels' (got 'mode', which is 'panels')"},
        {NULL, "figures = png\nrows = gap\npanels = mode\n", NULL, "@FILE@:10: 'rows' must "
         "differ from 'x', 'y' and 'panels' (got 'gap', which is 'x')"},
        {NULL, "figures = png\npanels = mode\nrows = huang_rhys\n", NULL, "@FILE@:11: 'rows' "
         "must name an axis of the grid (got 'huang_rhys', a single value; axes: " FIG_AXES
         ")"},
        {NULL, "figures = png\npanels = mode\n", "parameters.mode=1720 cm-1", "@FILE@:10: "
         "'panels' must name an axis of the grid (got 'mode', a single value; axes: gap, "
         "reorganization, electronic_coupling)"},
        {NULL, "figures = png\n", "output.panels=huang_rhys", "--set output.panels: 'panels' "
         "must name an axis of the grid (got 'huang_rhys', a single value; axes: " FIG_AXES
         ")"},
        {NULL, "figures = png\npanels = mode\nrows = electronic_coupling\n",
         "output.panels=none", "@FILE@:11: 'rows' needs 'panels' too (rows arrange the panels "
         "of a figure)"},
        {"gap = 1 .. 600 meV, 7 points, log\nreorganization = 10, 20 meV\n", "figures = png\n"
         "mark = A: gap -20 meV, reorganization 10 meV\n", NULL, "@FILE@:10: mark 'A' needs "
         "'gap' > 0 to be placed on the log axis 'x' (got -20 meV)"},
        {"gap = 0 .. 600 meV, 7 points\nreorganization = 30 meV\n", "figures = png\n"
         "y = huang_rhys\nmark = A: gap 1 meV\nmark = B: huang_rhys 0, gap 1 meV\n",
         "parameters.huang_rhys=0.01 .. 1, 5 points, log", "@FILE@:12: mark 'B' needs "
         "'huang_rhys' > 0 to be placed on the log axis 'y' (got 0)"},
        {NULL, "mark = M1: gap 230 meV\n", "output.mark=M1: gap 1 meV", "--set output.mark: "
         "mark 'M1' appears twice (first at line 9)"},
        {NULL, "figures = png\n", "output.figures=png, jpg", "--set output.figures: unknown "
         "figure format 'jpg' in 'figures' (allowed: png, pdf, svg, none)"},
    };
    (void)state;
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
        char text[2048];
        const char *sets[1] = {c[i].set};
        vg_config cfg;
        vg_error err;
        if (c[i].params)
            snprintf(text, sizeof text, "[parameters]\n%shuang_rhys = 0.05\nmode = 200 meV\n"
                     "electronic_coupling = 1 meV\ntemperature = 310 K\n[output]\n%s",
                     c[i].params, c[i].keys); /* [output] at line 8, as in FIG_GRID */
        else
            snprintf(text, sizeof text, FIG_GRID "%s", c[i].keys);
        load_text(&cfg, text, c[i].set != NULL, sets, VG_ECONFIG, &err);
        assert_message(&err, c[i].msg, write_ini(text));
        assert_null(cfg.path);
    }
}

/* Figures on a grid without two axes are refused only by the map check:
 * the loader keeps the formats for the spectrum of a single point. */
static void test_figures_without_axes_serve_the_spectrum(void **state)
{
    vg_config cfg;
    vg_error err;
    char *path;

    (void)state;
    path = write_ini("[parameters]\ngap = 250 meV\nreorganization = 30 meV\nhuang_rhys = 0.05\n"
                     "mode = 200 meV\n[output]\nfigures = pdf, svg\n");
    assert_int_equal(vg_config_load(&cfg, path, 0, NULL, &err), VG_OK);
    assert_int_equal(cfg.fig.formats, VG_FIG_PDF | VG_FIG_SVG);
    assert_int_equal(vg_config_check_maps(&cfg, &err), VG_ECONFIG);
    assert_message(&err, "@FILE@:7: figures need at least two axes (parameters with more "
                   "than one value); the grid has 0", path);
    vg_config_free(&cfg);
}

/* A mark off the swept ranges is kept; only a log axis needs values > 0
 * (the gap axis of FIG_GRID is linear, the reorganization axis log). */
static void test_mark_placement(void **state)
{
    static const char *const sets[] = {"output.mark=C: reorganization 2500 meV, gap -0.5 eV"};
    vg_config cfg;
    vg_error err;

    (void)state;
    load_text(&cfg, FIG_GRID "figures = png\n", 1, sets, VG_OK, &err);
    assert_int_equal(cfg.fig.nmarks, 1);
    assert_true(cfg.fig.marks[0].v[VG_P_GAP] == -500.0);
    assert_true(cfg.fig.marks[0].v[VG_P_REORG] == 2500.0);
    vg_config_free(&cfg);
}

/* Two marks with one label through --set: the first is named as a --set. */
static void test_mark_set_twice(void **state)
{
    static const char *const sets[] = {"output.mark=M2: gap 1 meV",
                                       "output.mark=M2: gap 2 meV"};
    vg_config cfg;
    vg_error err;

    (void)state;
    load_text(&cfg, FIG_GRID, 2, sets, VG_ECONFIG, &err);
    assert_string_equal(err.msg, "--set output.mark: mark 'M2' appears twice (first in --set "
                                 "output.mark)");
}

/* A config held in memory: the same result as the same text from a file,
 * with the name in place of the path, in cfg->path and in every message. */
static void test_load_text(void **state)
{
    static const char *const name = "out/sweep.nc (config_text)";
    static const char *const sets[] = {"parameters.temperature=77 K"};
    char text[512];
    vg_config cfg, ref;
    vg_error err;

    (void)state;
    snprintf(text, sizeof text, "%s[output]\nmetrics = log10_ratio\n", minimal);
    assert_int_equal(vg_config_load_text(&cfg, name, text, 1, sets, &err), VG_OK);
    load_text(&ref, text, 1, sets, VG_OK, &err);
    assert_string_equal(cfg.path, name);
    assert_string_equal(cfg.text, text);
    assert_true(cfg.text != text); /* a copy */
    assert_string_equal(cfg.overrides, "parameters.temperature=77 K");
    for (int p = 0; p < VG_NPARAM; p++) {
        assert_int_equal(cfg.param[p].n, ref.param[p].n);
        assert_true(cfg.param[p].v[0] == ref.param[p].v[0]);
        assert_int_equal(cfg.param[p].line, ref.param[p].line);
    }
    assert_true(cfg.param[VG_P_TEMPERATURE].v[0] == 77.0);
    assert_memory_equal(cfg.metric_on, ref.metric_on, sizeof cfg.metric_on);
    vg_config_free(&cfg);
    vg_config_free(&ref);

    assert_int_equal(vg_config_load_text(&cfg, name, "[parameters]\ngap = 250\n", 0, NULL,
                                         &err), VG_ECONFIG);
    assert_string_equal(err.msg, "out/sweep.nc (config_text):2: 'gap' needs a unit: meV, eV, "
                                 "cm-1, cm^-1, kJ/mol or kcal/mol (got '250')");
    assert_null(cfg.path); /* cfg is left freed */
    assert_int_equal(vg_config_load_text(&cfg, name, minimal, 1,
                                         (const char *const[]){"parameters.gap=9 eV"}, &err),
                     VG_ECONFIG);
    assert_string_equal(err.msg, "--set parameters.gap: 'gap' must be between -3000 and 3000 "
                                 "meV (got 9 eV = 9000 meV)");
}

/* A text longer than the 1 MiB limit of a file is refused the same way. */
static void test_load_text_limit(void **state)
{
    size_t n = 1024 * 1024 + 1;
    char *text = malloc(n + 1);
    vg_config cfg;
    vg_error err;

    (void)state;
    assert_non_null(text);
    memset(text, '\n', n);
    text[n] = '\0';
    assert_int_equal(vg_config_load_text(&cfg, "mem", text, 0, NULL, &err), VG_ECONFIG);
    assert_string_equal(err.msg, "mem: config text is larger than the limit of 1048576 bytes");
    text[n - 1] = '\0'; /* exactly 1 MiB of empty lines: read, then no parameters */
    assert_int_equal(vg_config_load_text(&cfg, "mem", text, 0, NULL, &err), VG_ECONFIG);
    assert_string_equal(err.msg, "mem:1: missing required parameter 'gap' in [parameters]");
    free(text);
}

/* ------------------------------------------------------------------ */
/* The bad-input catalogue.                                           */

/* Line k (0-based) of text, without its newline, into out; 0 if absent. */
static int nth_line(const char *text, int k, char *out, size_t size)
{
    const char *end;

    for (; k > 0 && text; k--) {
        text = strchr(text, '\n');
        if (text)
            text++;
    }
    if (!text || !*text)
        return 0;
    end = strchr(text, '\n');
    snprintf(out, size, "%.*s", (int)(end ? (size_t)(end - text) : strlen(text)), text);
    return 1;
}

static char *slurp(const char *path)
{
    FILE *f = fopen(path, "rb");
    char *s = calloc(1, 65536);

    assert_non_null(f);
    assert_non_null(s);
    assert_true(fread(s, 1, 65535, f) > 0);
    fclose(f);
    return s;
}

/* One case: NAME.expect = status, "vibrogate: MESSAGE", optional command,
 * then one --set value per line. */
static int run_case(const char *dir, const char *name)
{
    char path[8192], ini[8192], status[32], want[VG_ERROR_MAX], sets[8][512], command[32];
    const char *setp[8];
    char *text;
    size_t nset = 0;
    vg_config cfg;
    vg_error err = {VG_OK, ""};
    vg_status st;

    snprintf(path, sizeof path, "%s/%s.expect", dir, name);
    snprintf(ini, sizeof ini, "%s/%s.ini", dir, name);
    text = slurp(path);
    assert_true(nth_line(text, 0, status, sizeof status));
    assert_true(nth_line(text, 1, want, sizeof want));
    if (!nth_line(text, 2, command, sizeof command) || !command[0])
        snprintf(command, sizeof command, "check");
    while (nset < 8 && nth_line(text, 3 + (int)nset, sets[nset], sizeof sets[nset])) {
        setp[nset] = sets[nset];
        nset++;
    }
    free(text);
    st = load_for_maps(&cfg, ini, nset, setp, &err);
    /* the commands of the catalogue (check, sweep) refuse odorants after
     * loading, unless [model] odorant names one (and the engine is sum) */
    if (st == VG_OK && (st = vg_config_check_mapped_odorant(&cfg, command, &err)) != VG_OK)
        vg_config_free(&cfg);
    if ((int)st == atoi(status) && strncmp(want, "vibrogate: ", 11) == 0 &&
        message_matches(err.msg, want + 11, ini))
        return 1;
    print_error("catalogue case %s: status %d, message '%s'; wanted %s, '%s'\n", name, st,
                st ? err.msg : "", status, want);
    if (st == VG_OK)
        vg_config_free(&cfg);
    return 0;
}

static void test_catalogue(void **state)
{
    const char *src = getenv("VG_SRCDIR");
    char dir[4096];
    DIR *d;
    struct dirent *e;
    int cases = 0, failed = 0;

    (void)state;
    snprintf(dir, sizeof dir, "%s/tests/bad", src ? src : ".");
    d = opendir(dir);
    if (!d)
        fail_msg("cannot open %s (run from the source tree or set VG_SRCDIR)", dir);
    while ((e = readdir(d)) != NULL) {
        size_t n = strlen(e->d_name);
        char name[256];
        if (n < 8 || strcmp(e->d_name + n - 7, ".expect") != 0 || n - 7 >= sizeof name)
            continue;
        snprintf(name, sizeof name, "%.*s", (int)(n - 7), e->d_name);
        cases++;
        failed += !run_case(dir, name);
    }
    closedir(d);
    assert_true(cases >= 30);
    assert_int_equal(failed, 0);
}

/* ------------------------------------------------------------------ */

static int setup(void **state)
{
    (void)state;
    return mkdtemp(tmpdir) ? 0 : -1;
}

static int teardown(void **state)
{
    static const char *const names[] = {"t.ini", "nul.ini", "big.ini"};
    char path[4096];

    (void)state;
    for (size_t i = 0; i < sizeof names / sizeof names[0]; i++) {
        snprintf(path, sizeof path, "%s/%s", tmpdir, names[i]);
        unlink(path);
    }
    return rmdir(tmpdir);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_param_info),
        cmocka_unit_test(test_units),
        cmocka_unit_test(test_lists),
        cmocka_unit_test(test_linear_ranges),
        cmocka_unit_test(test_log_ranges),
        cmocka_unit_test(test_value_errors),
        cmocka_unit_test(test_load_everything),
        cmocka_unit_test(test_defaults),
        cmocka_unit_test(test_overrides),
        cmocka_unit_test(test_override_errors),
        cmocka_unit_test(test_line_forms),
        cmocka_unit_test(test_line_limit),
        cmocka_unit_test(test_file_errors),
        cmocka_unit_test(test_first_mistake),
        cmocka_unit_test(test_nul_byte),
        cmocka_unit_test(test_missing_and_unreadable),
        cmocka_unit_test(test_file_size_limit),
        cmocka_unit_test(test_max_size_raise),
        cmocka_unit_test(test_figure_defaults),
        cmocka_unit_test(test_figure_default_axes),
        cmocka_unit_test(test_figure_keys),
        cmocka_unit_test(test_figure_values),
        cmocka_unit_test(test_figure_limits),
        cmocka_unit_test(test_figure_overrides),
        cmocka_unit_test(test_figure_keys_unused),
        cmocka_unit_test(test_figure_errors),
        cmocka_unit_test(test_figure_cross_errors),
        cmocka_unit_test(test_figures_without_axes_serve_the_spectrum),
        cmocka_unit_test(test_mark_set_twice),
        cmocka_unit_test(test_mark_placement),
        cmocka_unit_test(test_load_text),
        cmocka_unit_test(test_load_text_limit),
        cmocka_unit_test(test_catalogue),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
