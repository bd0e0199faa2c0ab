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
#define _POSIX_C_SOURCE 200809L

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
    static char path[4096];
    FILE *f;

    snprintf(path, sizeof path, "%s/%s", tmpdir, name);
    f = fopen(path, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(text, 1, len, f), len);
    assert_int_equal(fclose(f), 0);
    return path;
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

/* Load text with the given overrides; expect status st. */
static void load_text(vg_config *cfg, const char *text, size_t nset, const char *const *sets,
                      vg_status st, vg_error *err)
{
    vg_status got = vg_config_load(cfg, write_ini(text), nset, sets, err);

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
    for (int m = 0; m < VG_N_METRICS; m++)
        assert_int_equal(cfg.metric_on[m], 1);
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
        {"x = 1\n", "@FILE@:1: key 'x' comes before any section header (start with "
                    "[scenario], [parameters], [model] or [output])"},
        {"[paramters]\n", "@FILE@:1: unknown section '[paramters]' (did you mean "
                          "'[parameters]'?)"},
        {"[Output]\n", "@FILE@:1: unknown section '[Output]' (did you mean '[output]'?)"},
        {"[parameters]\n[results]\n", "@FILE@:2: unknown section '[results]' (allowed: "
                                      "[scenario], [parameters], [model], [output])"},
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
         "log10_ratio, assisted_fraction, log10_contrast)"},
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
                                               "[scenario], [parameters], [model], [output])"},
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
    char path[8192], ini[8192], status[32], want[VG_ERROR_MAX], sets[8][512];
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
    while (nset < 8 && nth_line(text, 3 + (int)nset, sets[nset], sizeof sets[nset])) {
        setp[nset] = sets[nset];
        nset++;
    }
    free(text);
    st = vg_config_load(&cfg, ini, nset, setp, &err);
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
        cmocka_unit_test(test_catalogue),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
