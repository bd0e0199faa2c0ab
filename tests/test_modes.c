/*
 * Tests of the mode-table reader (src/modes.c, format in include/vg_modes.h):
 * valid tables in cm-1 and in meV from tests/data/modes/ (comments, blank
 * lines, CRLF, byte order mark, labels, lifetimes given, empty and 'inf'),
 * the limits, the file errors of vg_modes_load, and every bad-table
 * message, each written out from the documented grammar.
 *
 * Reference values are written out here with their sources; none is copied
 * from the program's output.
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
#include <sys/stat.h>
#include <unistd.h>

#include <cmocka.h>

#include "testutil.h"

#include "vg_modes.h"

/* CODATA 2018 (Tiesinga et al., Rev. Mod. Phys. 93, 025010, 2021), as
 * printed there: hc = 1.239841984e-4 eV cm, so 1 cm^-1 = 0.1239841984 meV.
 * Printed to 10 digits, hence the 1e-9 relative tolerance. */
#define REF_MEV_PER_CM1 0.1239841984
#define REF_TOL 1e-9

static char tmpdir[] = "/tmp/vg_test_modes_XXXXXX";
static vg_modes table; /* about 48 KiB: kept off the stack */

static void assert_rel(double got, double want, double tol)
{
    if (!(fabs(got - want) <= tol * fabs(want)))
        fail_msg("got %.17g, want %.17g (relative tolerance %g)", got, want, tol);
}

static char *data_path(const char *name)
{
    static char path[4096];
    const char *src = getenv("VG_SRCDIR");

    snprintf(path, sizeof path, "%s/tests/data/modes/%s", src ? src : ".", name);
    return path;
}

/* tests/data/modes/NAME into table, which must succeed. */
static void load_data(const char *name)
{
    vg_error err;

    if (vg_modes_load(data_path(name), &table, &err) != VG_OK)
        fail_msg("%s", err.msg);
}

static char *write_file(const char *name, const char *text, size_t len)
{
    return test_write_file(tmpdir, name, text, len);
}

static int setup(void **state)
{
    (void)state;
    return mkdtemp(tmpdir) ? 0 : -1;
}

static int teardown(void **state)
{
    char path[4096];

    (void)state;
    snprintf(path, sizeof path, "%s/big.csv", tmpdir);
    remove(path);
    snprintf(path, sizeof path, "%s/bad.csv", tmpdir);
    remove(path);
    snprintf(path, sizeof path, "%s/sub", tmpdir);
    rmdir(path);
    return rmdir(tmpdir);
}

static vg_status parse(const char *text, vg_error *err)
{
    memset(err, 0, sizeof *err);
    return vg_modes_parse(NULL, text, strlen(text), &table, err);
}

/* ------------------------------------------------------------------ */
/* Valid tables.                                                      */

/* The five modes of the hypothetical odorant OD-7 (invented values), as
 * written in tests/data/modes/od7_cm1.csv. */
static const double od7_cm1[5] = {2950, 1715, 1450, 1000, 2205};
static const double od7_s[5] = {0.021, 0.12, 0.045, 0.3, 0.018};
static const double od7_t1[5] = {1.5, INFINITY, 4.2, INFINITY, 2.35};
static const char *const od7_label[5] = {"C-H stretch", "C=O stretch", "C-H bend",
                                         "ring breathing", "C-D stretch"};
/* Lines of the rows in both files (counted by hand, comments included). */
static const int od7_cm1_line[5] = {5, 6, 9, 10, 11};
static const int od7_mev_line[5] = {4, 5, 7, 8, 9};

/* S, lifetimes and labels of OD-7: the decimals written in the files,
 * compared exactly (C17 6.4.4.2 and glibc's strtod both round a decimal
 * correctly, so the literal and the parsed value are the same double). */
static void check_od7_rest(const vg_modes *t, const int *lines)
{
    assert_int_equal(t->n, 5);
    assert_true(t->has_label && t->has_lifetime);
    for (size_t i = 0; i < 5; i++) {
        assert_true(t->mode[i].huang_rhys == od7_s[i]);
        assert_true(t->mode[i].lifetime_ps == od7_t1[i]);
        assert_string_equal(t->label[i], od7_label[i]);
        assert_int_equal(t->line[i], lines[i]);
    }
}

static void test_cm1_table(void **state)
{
    (void)state;
    load_data("od7_cm1.csv");
    assert_int_equal(table.quantum_unit, VG_MODES_CM1);
    check_od7_rest(&table, od7_cm1_line);
    for (size_t i = 0; i < 5; i++) /* CODATA 2018 factor, 1e-9 (printed digits) */
        assert_rel(table.mode[i].mode, od7_cm1[i] * REF_MEV_PER_CM1, REF_TOL);
}

static void test_mev_table(void **state)
{
    /* 2950, 1715, 1450, 1000, 2205 cm-1 times 0.1239841984 meV (CODATA 2018
     * hc), multiplied out exactly in decimal (Python decimal module); the
     * file od7_mev.csv holds these decimals, with CRLF line ends, a byte
     * order mark, a blank line and the columns in another order. */
    static const double mev[5] = {365.75338528, 212.632900256, 179.77708768, 123.9841984,
                                  273.385157472};
    (void)state;
    load_data("od7_mev.csv");
    assert_int_equal(table.quantum_unit, VG_MODES_MEV);
    check_od7_rest(&table, od7_mev_line);
    for (size_t i = 0; i < 5; i++) {
        assert_true(table.mode[i].mode == mev[i]); /* the decimal itself, exactly */
        assert_rel(table.mode[i].mode, od7_cm1[i] * REF_MEV_PER_CM1, REF_TOL);
    }
}

static void test_required_columns_only(void **state)
{
    (void)state;
    load_data("plain_mev.csv");
    assert_int_equal(table.n, 2);
    assert_false(table.has_label || table.has_lifetime);
    /* No lifetime column: undamped; no label column: "" (vg_modes.h). */
    assert_true(table.mode[0].mode == 151.7 && table.mode[0].huang_rhys == 0.0);
    assert_true(table.mode[1].mode == 42.25 && table.mode[1].huang_rhys == 2.5);
    for (size_t i = 0; i < 2; i++) {
        assert_true(isinf(table.mode[i].lifetime_ps) && table.mode[i].lifetime_ps > 0);
        assert_string_equal(table.label[i], "");
    }
    assert_int_equal(table.line[1], 4); /* last line, no final line end */
}

/* The limits of vg_modes.h, at the edge and inside. */
static void test_edges_accepted(void **state)
{
    const char *text = "huang_rhys,energy_meV,lifetime_ps,label\n"
                       "-0, 1, 1e12,\n"
                       "50, 1000, 1e-300, \t abc\t#1 \n"
                       " 0.5 ,\t+7.5E+1\t, .5, \xce\xbd(C\xe2\x80\x93H)\n";
    vg_error err;

    (void)state;
    assert_int_equal(parse(text, &err), VG_OK);
    assert_int_equal(table.n, 3);
    assert_true(table.mode[0].huang_rhys == 0.0 && !signbit(table.mode[0].huang_rhys));
    assert_true(table.mode[0].mode == 1.0 && table.mode[0].lifetime_ps == 1e12);
    assert_true(table.mode[1].huang_rhys == 50.0 && table.mode[1].mode == 1000.0);
    assert_true(table.mode[1].lifetime_ps == 1e-300);
    assert_string_equal(table.label[1], "abc\t#1");
    assert_true(table.mode[2].mode == 75.0 && table.mode[2].lifetime_ps == 0.5);
    assert_string_equal(table.label[2], "\xce\xbd(C\xe2\x80\x93H)");
}

/* With the CODATA 2018 factor, multiplied out in decimal (Python decimal
 * module): 8.0656 cm-1 = 1.00000695 meV and 8065.5 cm-1 = 999.99455 meV lie
 * inside; 8.0655 cm-1 = 0.99999455 meV lies below. */
static void test_cm1_edges(void **state)
{
    vg_error err;

    (void)state;
    assert_int_equal(parse("wavenumber_cm-1,huang_rhys\n8.0656,1\n8065.5,1\n", &err), VG_OK);
    assert_rel(table.mode[0].mode, 8.0656 * REF_MEV_PER_CM1, REF_TOL);
    assert_rel(table.mode[1].mode, 8065.5 * REF_MEV_PER_CM1, REF_TOL);
    assert_int_equal(parse("wavenumber_cm-1,huang_rhys\n8.0655,1\n", &err), VG_ECONFIG);
    assert_string_equal(err.msg, "2: 'wavenumber_cm-1' must be between 1 and 1000 meV after "
                                 "conversion (got '8.0655' = 0.999995 meV)");
}

/* 512 modes are accepted, a 513th is refused at its line. */
static void test_mode_limit(void **state)
{
    static char text[64 + 513 * 8];
    size_t used = (size_t)sprintf(text, "energy_meV,huang_rhys\n");
    vg_error err;

    (void)state;
    for (int i = 0; i < 512; i++)
        used += (size_t)sprintf(text + used, "%d,0.1\n", 10 + i);
    assert_int_equal(parse(text, &err), VG_OK);
    assert_int_equal(table.n, 512);
    assert_true(table.mode[511].mode == 521.0);
    sprintf(text + used, "600,0.1\n");
    assert_int_equal(parse(text, &err), VG_ECONFIG);
    assert_string_equal(err.msg, "514: more than 512 modes (the limit of a mode table)");
    assert_int_equal(table.n, 0);
}

/* A line of 4096 bytes is accepted, one of 4097 refused (line end not
 * counted). */
static void test_line_limit(void **state)
{
    static char text[32 + 4097 + 2];
    size_t head = (size_t)sprintf(text, "energy_meV,huang_rhys\r\n");
    vg_error err;

    (void)state;
    memset(text + head, ' ', 4096);
    memcpy(text + head, "5,1", 3);
    strcpy(text + head + 4096, "\r\n");
    assert_int_equal(parse(text, &err), VG_OK);
    assert_int_equal(table.n, 1);
    memset(text + head, ' ', 4097);
    memcpy(text + head, "5,1", 3);
    strcpy(text + head + 4097, "\r\n");
    assert_int_equal(parse(text, &err), VG_ECONFIG);
    assert_string_equal(err.msg, "2: line is 4097 bytes long, the limit is 4096 bytes");
}

/* ------------------------------------------------------------------ */
/* Bad tables: text in, the documented message out.                   */

typedef struct {
    const char *text;
    size_t len; /* 0: strlen(text) */
    const char *msg;
} bad_case;

#define HDR "energy_meV,huang_rhys,label,lifetime_ps\n"
#define WITH_LEN(s) s, sizeof(s) - 1 /* a text with a NUL inside */

static const bad_case bad[] = {
    {"", 0, "the mode table is empty (it needs a header line and one row per mode)"},
    {"# nothing\n\n  \t\n", 0,
     "the mode table is empty (it needs a header line and one row per mode)"},
    {"# c\n" HDR "\n# no rows\n", 0,
     "2: the header is not followed by any mode (one row per mode)"},
    {WITH_LEN("ab\0c\n"), "1: NUL byte at byte 3 (mode tables must be UTF-8 text)"},
    {WITH_LEN(HDR "5,1,C-H\0,2\n"), "2: NUL byte at byte 8 (mode tables must be UTF-8 text)"},
    {HDR "5,1,\xc0\xaf,2\n", 0, "2: invalid UTF-8 at byte 5 (mode tables must be UTF-8 text)"},
    {HDR "5,1,\xed\xa0\x80,2\n", 0, "2: invalid UTF-8 at byte 5 (mode tables must be UTF-8 text)"},
    {HDR "5,1,\xf4\x90\x80\x80,2\n", 0,
     "2: invalid UTF-8 at byte 5 (mode tables must be UTF-8 text)"},
    {HDR "5,1,a\x07,2\n", 0,
     "2: control character 0x07 at byte 6 (only UTF-8 text and tabs are allowed)"},
    {HDR "5,1,a\rb,2\n", 0,
     "2: control character 0x0d at byte 6 (only UTF-8 text and tabs are allowed)"},
    {"# c\n2950, 0.02\n", 0,
     "2: expected a header line naming the columns before the first mode (got '2950, 0.02')"},
    {"energy_meV,,huang_rhys\n5,1\n", 0,
     "1: empty column name in the header (got 'energy_meV,,huang_rhys')"},
    {"Energy_meV,huang_rhys\n5,1\n", 0, "1: unknown column 'Energy_meV' (did you mean 'energy_meV'?)"},
    {"energy_meV,huang_rhys,freq\n5,1,2\n", 0,
     "1: unknown column 'freq' (allowed: wavenumber_cm-1, energy_meV, huang_rhys, label, "
     "lifetime_ps)"},
    {"energy_meV, label, huang_rhys, label\n", 0, "1: column 'label' appears twice in the header"},
    {"wavenumber_cm-1,huang_rhys,energy_meV\n", 0,
     "1: the header gives both 'wavenumber_cm-1' and 'energy_meV' (give one mode quantum column)"},
    {"huang_rhys, label\n1,a\n", 0,
     "1: the header needs a mode quantum column, 'wavenumber_cm-1' or 'energy_meV' (got "
     "'huang_rhys, label')"},
    {"energy_meV, label\n5,a\n", 0,
     "1: the header needs a 'huang_rhys' column (got 'energy_meV, label')"},
    {HDR "5,1,a\n", 0, "2: row has 3 fields, the header has 4 columns (got '5,1,a')"},
    {HDR "5,1,a,2,\n", 0, "2: row has 5 fields, the header has 4 columns (got '5,1,a,2,')"},
    {HDR ",1,a,2\n", 0, "2: 'energy_meV' has no value"},
    {HDR "5, ,a,2\n", 0, "2: 'huang_rhys' has no value"},
    {HDR "5,two,a,2\n", 0,
     "2: bad number in 'huang_rhys' (write a decimal number such as 120, 0.5 or 1.5e-3, without "
     "a unit; got 'two')"},
    {HDR "5,0.1.2,a,2\n", 0,
     "2: bad number in 'huang_rhys' (write a decimal number such as 120, 0.5 or 1.5e-3, without "
     "a unit; got '0.1.2')"},
    {"wavenumber_cm-1,huang_rhys\n2950 cm-1,0.1\n", 0,
     "2: bad number in 'wavenumber_cm-1' (write a decimal number such as 120, 0.5 or 1.5e-3, "
     "without a unit; got '2950 cm-1')"},
    {HDR "5,1e,a,2\n", 0,
     "2: bad number in 'huang_rhys' (write a decimal number such as 120, 0.5 or 1.5e-3, without "
     "a unit; got '1e')"},
    {HDR "0x1p3,1,a,2\n", 0,
     "2: hex number in 'energy_meV' is not allowed (write a decimal number; got '0x1p3')"},
    {HDR "5,-0X10,a,2\n", 0,
     "2: hex number in 'huang_rhys' is not allowed (write a decimal number; got '-0X10')"},
    {HDR "5,nan,a,2\n", 0, "2: 'huang_rhys' must be a finite number (got 'nan')"},
    {HDR "inf,1,a,2\n", 0, "2: 'energy_meV' must be a finite number (got 'inf')"},
    {HDR "5,1,a,Infinity\n", 0,
     "2: 'lifetime_ps' must be a finite number, or 'inf' or empty for an undamped mode (got "
     "'Infinity')"},
    {HDR "5,1,a,-inf\n", 0,
     "2: 'lifetime_ps' must be a finite number, or 'inf' or empty for an undamped mode (got "
     "'-inf')"},
    {HDR "5,1e400,a,2\n", 0,
     "2: number in 'huang_rhys' is out of the range of double precision (got '1e400')"},
    {HDR "5,1,a,1e-400\n", 0,
     "2: number in 'lifetime_ps' is out of the range of double precision (got '1e-400')"},
    {HDR "0.5,1,a,2\n", 0, "2: 'energy_meV' must be between 1 and 1000 meV (got '0.5')"},
    {HDR "1000.001,1,a,2\n", 0, "2: 'energy_meV' must be between 1 and 1000 meV (got '1000.001')"},
    /* 9000 cm-1 = 1115.8577856 meV (CODATA 2018 factor). */
    {"wavenumber_cm-1,huang_rhys\n9000,0.1\n", 0,
     "2: 'wavenumber_cm-1' must be between 1 and 1000 meV after conversion (got '9000' = "
     "1115.86 meV)"},
    {HDR "5,-0.1,a,2\n", 0, "2: 'huang_rhys' must be between 0 and 50 (got '-0.1')"},
    {HDR "5,50.01,a,2\n", 0, "2: 'huang_rhys' must be between 0 and 50 (got '50.01')"},
    {HDR "5,1,a,0\n", 0,
     "2: 'lifetime_ps' must be > 0 and at most 1e12, or 'inf' or empty for an undamped mode "
     "(got '0')"},
    {HDR "5,1,a,1.000001e12\n", 0,
     "2: 'lifetime_ps' must be > 0 and at most 1e12, or 'inf' or empty for an undamped mode "
     "(got '1.000001e12')"},
    {HDR "5,1,0123456789012345678901234567890123456789012345678901234567890123,2\n", 0,
     "2: label is 64 bytes long, the limit is 63 bytes (got "
     "'0123456789012345678901234567890123456789012345678901234567890123')"},
    /* A row quoted in a message is cut at 80 bytes, marked "...". */
    {HDR "5,1,a,2,01234567890123456789012345678901234567890123456789012345678901234567890123456789\n", 0,
     "2: row has 5 fields, the header has 4 columns (got "
     "'5,1,a,2,012345678901234567890123456789012345678901234567890123456789012345678901...')"},
    /* The first mistake in line order wins: line 3 before line 4. */
    {HDR "5,1,a,2\n5,51,b,2\n\x01\n", 0, "3: 'huang_rhys' must be between 0 and 50 (got '51')"},
};

static void test_bad_tables(void **state)
{
    size_t failed = 0;

    (void)state;
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        const bad_case *c = &bad[i];
        size_t len = c->len ? c->len : strlen(c->text);
        vg_error err;
        vg_status st;
        memset(&err, 0, sizeof err);
        st = vg_modes_parse(NULL, c->text, len, &table, &err);
        if (st != VG_ECONFIG || err.status != VG_ECONFIG || strcmp(err.msg, c->msg) != 0 ||
            table.n != 0) {
            print_error("case %zu: status %d, message '%s'; wanted 3, '%s'\n", i, st, err.msg,
                        c->msg);
            failed++;
        }
    }
    assert_true(sizeof bad / sizeof bad[0] >= 20);
    assert_int_equal(failed, 0);
}

/* The name, when given, goes in front: "NAME:LINE: " or "NAME: ". */
static void test_named_messages(void **state)
{
    vg_error err;

    (void)state;
    assert_int_equal(vg_modes_parse("od.csv", HDR "5,1,a,0x3\n", strlen(HDR) + 10, &table, &err),
                     VG_ECONFIG);
    assert_string_equal(err.msg, "od.csv:2: hex number in 'lifetime_ps' is not allowed (write a "
                                 "decimal number; got '0x3')");
    assert_int_equal(vg_modes_parse("od.csv", NULL, 0, &table, &err), VG_ECONFIG);
    assert_string_equal(err.msg, "od.csv: the mode table is empty (it needs a header line and "
                                 "one row per mode)");
    assert_int_equal(vg_modes_parse(NULL, HDR, VG_MODES_TEXT_MAX + 1, &table, &err), VG_ECONFIG);
    assert_string_equal(err.msg, "the mode table is larger than the limit of 1048576 bytes");
}

/* ------------------------------------------------------------------ */
/* Files.                                                             */

static void test_file_errors(void **state)
{
    char path[4096], want[4200];
    char *big;
    vg_error err;

    (void)state;
    snprintf(path, sizeof path, "%s/missing.csv", tmpdir);
    assert_int_equal(vg_modes_load(path, &table, &err), VG_ECONFIG);
    snprintf(want, sizeof want, "%s: cannot open mode table: no such file or directory", path);
    assert_string_equal(err.msg, want);

    snprintf(path, sizeof path, "%s/sub", tmpdir);
    assert_int_equal(mkdir(path, 0700), 0);
    assert_int_equal(vg_modes_load(path, &table, &err), VG_ECONFIG);
    snprintf(want, sizeof want, "%s: cannot read mode table: is a directory", path);
    assert_string_equal(err.msg, want);

    /* 1 MiB is allowed, one byte more is not (vg_modes.h). */
    big = malloc(VG_MODES_TEXT_MAX + 1);
    assert_non_null(big);
    memset(big, '\n', VG_MODES_TEXT_MAX + 1);
    memcpy(big, "energy_meV,huang_rhys\n5,1\n", 26);
    assert_int_equal(vg_modes_load(write_file("big.csv", big, VG_MODES_TEXT_MAX), &table, &err),
                     VG_OK);
    assert_int_equal(table.n, 1);
    assert_int_equal(vg_modes_load(write_file("big.csv", big, VG_MODES_TEXT_MAX + 1), &table,
                                   &err), VG_ECONFIG);
    snprintf(want, sizeof want, "%s/big.csv: the mode table is larger than the limit of "
             "1048576 bytes", tmpdir);
    assert_string_equal(err.msg, want);
    free(big);

    /* A located message from a file: "PATH:LINE: ". */
    assert_int_equal(vg_modes_load(write_file("bad.csv", "# c\r\nenergy_meV\r\n", 18), &table,
                                   &err), VG_ECONFIG);
    snprintf(want, sizeof want, "%s/bad.csv:2: the header needs a 'huang_rhys' column (got "
             "'energy_meV')", tmpdir);
    assert_string_equal(err.msg, want);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_cm1_table),
        cmocka_unit_test(test_mev_table),
        cmocka_unit_test(test_required_columns_only),
        cmocka_unit_test(test_edges_accepted),
        cmocka_unit_test(test_cm1_edges),
        cmocka_unit_test(test_mode_limit),
        cmocka_unit_test(test_line_limit),
        cmocka_unit_test(test_bad_tables),
        cmocka_unit_test(test_named_messages),
        cmocka_unit_test(test_file_errors),
    };

    return cmocka_run_group_tests(tests, setup, teardown);
}
