/*
 * Tests of the plot geometry helpers (src/ticks.c, src/contour.c).
 *
 * Ticks: the expected positions are derived by hand from Heckbert's
 * nice-numbers method ("Nice numbers for graph labels", Graphics Gems,
 * 1990) and from the log-axis rules stated in src/ticks.c, step by step in
 * the comments; random ranges are checked for the properties every tick
 * set must have (increasing, inside, 1-2-5 steps, labels that read back as
 * the tick value).
 *
 * Contours: fields whose iso-line is known in closed form -- a plane (the
 * linear interpolation along an edge is exact), a circle (the secant root
 * of a quadratic has a closed-form error), a saddle z = x y (exact along
 * every edge) -- and counting identities between the segments and the
 * edges whose ends lie on opposite sides of the level.
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

#include "vg_plotaux.h"

#define MINUS "\xe2\x88\x92"
#define TIMES "\xc3\x97"

/* A label read back must give the tick value to this relative accuracy
 * (the label is the exact decimal, so only strtod's rounding is left). */
#define LABEL_TOL 1e-12
/* The end tolerance documented in src/ticks.c. */
#define END_TOL 1e-9

/* ---- helpers -------------------------------------------------------- */

static void assert_rel(double got, double want, double tol)
{
    double rel = want == 0.0 ? fabs(got) : fabs(got - want) / fabs(want);

    if (!(rel <= tol))
        fail_msg("got %.17g, want %.17g: relative difference %.3g > %.3g", got, want, rel, tol);
}

static int starts(const char *s, const char *p)
{
    return strncmp(s, p, strlen(p)) == 0;
}

/* Reads a tick label back as a number: U+2212 -> '-', "m×10<sup>k</sup>"
 * -> "mek", "10<sup>k</sup>" -> "1ek".  Fails the test on anything else
 * (an ASCII '-' included, so a hyphen-minus cannot slip through). */
static double label_number(const char *label)
{
    char buf[128], *end;
    size_t n = 0;
    const char *s = label;
    double v;

    while (*s && n + 3 < sizeof buf) {
        if (starts(s, MINUS)) {
            buf[n++] = '-';
            s += strlen(MINUS);
        } else if (starts(s, TIMES "10<sup>")) {
            buf[n++] = 'e';
            s += strlen(TIMES "10<sup>");
        } else if (starts(s, "10<sup>") && (n == 0 || (n == 1 && buf[0] == '-'))) {
            buf[n++] = '1';
            buf[n++] = 'e';
            s += strlen("10<sup>");
        } else if (starts(s, "</sup>")) {
            s += strlen("</sup>");
        } else if (strchr("0123456789.", *s)) {
            buf[n++] = *s++;
        } else {
            fail_msg("label '%s' has an unexpected character at '%s'", label, s);
        }
    }
    buf[n] = '\0';
    v = strtod(buf, &end);
    if (n == 0 || *end != '\0')
        fail_msg("label '%s' (read as '%s') is not a number", label, buf);
    return v;
}

/* x as m * 10^e: returns m in [1, 10). */
static double mantissa(double x)
{
    double m = fabs(x) / pow(10.0, floor(log10(fabs(x))));

    return m >= 10.0 - 1e-9 ? m / 10.0 : m;
}

/* 1, 2 or 5 (or 10 by rounding) to tol. */
static int is_125(double m, double tol)
{
    return fabs(m - 1.0) <= tol || fabs(m - 2.0) <= tol || fabs(m - 5.0) <= tol
           || fabs(m - 10.0) <= tol;
}

/* The 1-2-5 number (1, 2, 5 or 10 times 10^floor(log10 x)) nearest x. */
static double nearest_125(double x)
{
    static const double m[4] = {1.0, 2.0, 5.0, 10.0};
    double p = pow(10.0, floor(log10(x))), best = p;
    int k;

    for (k = 1; k < 4; k++)
        if (fabs(x - m[k] * p) < fabs(x - best))
            best = m[k] * p;
    return best;
}

static size_t count_major(const vg_ticks *t)
{
    size_t k, n = 0;

    for (k = 0; k < t->n; k++)
        n += t->major[k] != 0 ? 1 : 0;
    return n;
}

/* The properties every tick set has: at least two labelled ticks, at most
 * VG_TICKS_MAX in all, strictly increasing, inside [wlo, whi], labels
 * empty exactly for minor ticks, and each label reads back as its value
 * (a zero without a minus sign). */
static void check_common(const vg_ticks *t, double wlo, double whi)
{
    size_t k;

    assert_true(t->n <= VG_TICKS_MAX);
    assert_true(count_major(t) >= 2);
    for (k = 0; k < t->n; k++) {
        double v = t->v[k];
        if (k > 0 && !(t->v[k - 1] < v))
            fail_msg("tick %zu (%.17g) does not follow %.17g", k, v, t->v[k - 1]);
        if (!(v >= wlo && v <= whi))
            fail_msg("tick %.17g outside [%.17g, %.17g]", v, wlo, whi);
        if (!t->major[k]) {
            assert_string_equal(t->label[k], "");
            continue;
        }
        assert_true(strlen(t->label[k]) > 0);
        assert_rel(label_number(t->label[k]), v, LABEL_TOL);
        if (v == 0.0)
            assert_false(starts(t->label[k], MINUS) || signbit(v));
    }
}

/* The labelled ticks of a linear axis are the integer multiples of one
 * step that is 1, 2 or 5 times a power of ten (Heckbert 1990). */
static void check_linear_multiples(const vg_ticks *t)
{
    double first = NAN, step = NAN, big = 0.0;
    size_t k;

    for (k = 0; k < t->n; k++) {
        big = fmax(big, fabs(t->v[k]));
        if (!t->major[k])
            continue;
        if (isnan(first))
            first = t->v[k];
        else if (isnan(step))
            step = t->v[k] - first;
    }
    /* The step is read as a difference of two doubles near big. */
    double tol = 8.0 * DBL_EPSILON * big / step + 1e-12;
    assert_true(is_125(mantissa(step), 10.0 * tol));
    step = nearest_125(step);
    for (k = 0; k < t->n; k++) {
        double q = t->v[k] / step;
        if (t->major[k] && !(fabs(q - nearbyint(q)) <= tol))
            fail_msg("tick %.17g is not a multiple of the step %.17g", t->v[k], step);
    }
}

/* Linear ticks expected from the method: the labelled values, their
 * labels, and every tick value (minor ones included). */
static void expect_ticks(const vg_ticks *t, const double *v, const int *major, size_t n,
                         const char *const *labels)
{
    size_t k, m = 0;

    assert_int_equal(t->n, n);
    for (k = 0; k < n; k++) {
        /* Each value is the double nearest a short decimal, as is the
         * literal it is compared with. */
        if (t->v[k] != v[k])
            fail_msg("tick %zu: got %.17g, want %.17g", k, t->v[k], v[k]);
        assert_int_equal(t->major[k], major[k]);
        if (major[k])
            assert_string_equal(t->label[k], labels[m++]);
    }
}

/* ---- linear ticks --------------------------------------------------- */

/* Heckbert's worked example (Graphics Gems 1990, from memory): data
 * 105..543 with 5 ticks.  range = nicenum(438, no round) = 500; d =
 * nicenum(500 / 4 = 125, round) = 100; loose limits 100..600.  Kept inside
 * [105, 543]: 200, 300, 400, 500.  Minor step for d = 1e2 is 5e1. */
static void linear_heckbert_example(void **state)
{
    static const double v[] = {150, 200, 250, 300, 350, 400, 450, 500};
    static const int mj[] = {0, 1, 0, 1, 0, 1, 0, 1};
    static const char *const lab[] = {"200", "300", "400", "500"};
    vg_ticks t;

    (void)state;
    assert_int_equal(vg_ticks_linear(105.0, 543.0, 5, &t, NULL), VG_OK);
    expect_ticks(&t, v, mj, 8, lab);
    check_common(&t, 105.0, 543.0);
}

/* 0..600.  range = nicenum(600, no round) = 1000 (f = 6 > 5).  target 6:
 * d = nicenum(200, round) = 200 (f = 2 < 3), so 0, 200, 400, 600 with
 * minor ticks at the odd hundreds.  target 8: d = nicenum(142.9, round) =
 * 100 (f = 1.43 < 1.5), so 0..600 by 100 with minor ticks at the fifties.
 * (The method gives a step of 100 for 0..600 only from 8 ticks up.) */
static void linear_zero_to_600(void **state)
{
    static const double v6[] = {0, 100, 200, 300, 400, 500, 600};
    static const int mj6[] = {1, 0, 1, 0, 1, 0, 1};
    static const char *const lab6[] = {"0", "200", "400", "600"};
    vg_ticks t;
    size_t k;

    (void)state;
    assert_int_equal(vg_ticks_linear(0.0, 600.0, 6, &t, NULL), VG_OK);
    expect_ticks(&t, v6, mj6, 7, lab6);
    assert_int_equal(vg_ticks_linear(0.0, 600.0, 8, &t, NULL), VG_OK);
    assert_int_equal(t.n, 13);
    for (k = 0; k < t.n; k++) {
        assert_true(t.v[k] == 50.0 * (double)k);
        assert_int_equal(t.major[k], k % 2 == 0);
    }
    assert_string_equal(t.label[12], "600");
    check_common(&t, 0.0, 600.0);
}

/* -3000..3000.  range = nicenum(6000, no round) = 10000.  target 8: d =
 * nicenum(1428.6, round) = 1000: -3000..3000 by 1000, labels with U+2212.
 * target 6: d = nicenum(2000, round) = 2000: -2000, 0, 2000, minor ticks at
 * the odd thousands (minor step 1e3 for d = 2e3). */
static void linear_symmetric_thousands(void **state)
{
    static const double v6[] = {-3000, -2000, -1000, 0, 1000, 2000, 3000};
    static const int mj6[] = {0, 1, 0, 1, 0, 1, 0};
    static const char *const lab6[] = {MINUS "2000", "0", "2000"};
    vg_ticks t;
    size_t k, m = 0;

    (void)state;
    assert_int_equal(vg_ticks_linear(-3000.0, 3000.0, 8, &t, NULL), VG_OK);
    check_common(&t, -3000.0, 3000.0);
    assert_int_equal(count_major(&t), 7);
    for (k = 0; k < t.n; k++)
        if (t.major[k])
            assert_true(t.v[k] == -3000.0 + 1000.0 * (double)m++);
    assert_string_equal(t.label[0], MINUS "3000");
    assert_int_equal(vg_ticks_linear(-3000.0, 3000.0, 6, &t, NULL), VG_OK);
    expect_ticks(&t, v6, mj6, 7, lab6);
}

/* 0..1 with 5 ticks: range = nicenum(1, no round) = 1 (f = 1); d =
 * nicenum(0.25, round) = 0.2 (f = 2.5 < 3); nfrac = -floor(log10 0.2) = 1,
 * so every label has one decimal.  Minor step 0.1. */
static void linear_decimals(void **state)
{
    static const double v[] = {0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0};
    static const int mj[] = {1, 0, 1, 0, 1, 0, 1, 0, 1, 0, 1};
    static const char *const lab[] = {"0.0", "0.2", "0.4", "0.6", "0.8", "1.0"};
    vg_ticks t;

    (void)state;
    assert_int_equal(vg_ticks_linear(0.0, 1.0, 5, &t, NULL), VG_OK);
    expect_ticks(&t, v, mj, 11, lab);
}

/* -1..1 with 5 ticks: range = nicenum(2, no round) = 2; d = nicenum(0.5,
 * round) = 0.5 (f = 5 < 7); nfrac 1.  The zero is "0.0", never "−0.0". */
static void linear_negative_and_zero(void **state)
{
    static const char *const lab[] = {MINUS "1.0", MINUS "0.5", "0.0", "0.5", "1.0"};
    vg_ticks t;
    size_t k, m = 0;

    (void)state;
    assert_int_equal(vg_ticks_linear(-1.0, 1.0, 5, &t, NULL), VG_OK);
    check_common(&t, -1.0, 1.0);
    for (k = 0; k < t.n; k++)
        if (t.major[k]) {
            assert_true(m < 5);
            assert_true(t.v[k] == -1.0 + 0.5 * (double)m);
            assert_string_equal(t.label[k], lab[m++]);
        }
    assert_int_equal(m, 5);
}

/* The rounding thresholds of nicenum (round: f < 1.5 -> 1, < 3 -> 2,
 * < 7 -> 5, else 10).  0..2, 4 ticks: range = nicenum(2, no round) = 2,
 * d = nicenum(2/3, round) = 0.5 (f = 6.67 < 7): 0.0 .. 2.0 by 0.5.  0..4,
 * 8 ticks: range = nicenum(4, no round) = 5, d = nicenum(5/7, round) = 1
 * (f = 7.14 >= 7): 0 .. 4 by 1, minor ticks at the halves. */
static void linear_rounding_thresholds(void **state)
{
    static const char *const half[] = {"0.0", "0.5", "1.0", "1.5", "2.0"};
    static const double v[] = {0, 0.5, 1, 1.5, 2, 2.5, 3, 3.5, 4};
    static const int mj[] = {1, 0, 1, 0, 1, 0, 1, 0, 1};
    static const char *const one[] = {"0", "1", "2", "3", "4"};
    vg_ticks t;
    size_t k, m = 0;

    (void)state;
    assert_int_equal(vg_ticks_linear(0.0, 2.0, 4, &t, NULL), VG_OK);
    assert_int_equal(t.n, 21); /* minor step 0.1 for d = 0.5 */
    for (k = 0; k < t.n; k++)
        if (t.major[k]) {
            assert_true(m < 5 && t.v[k] == 0.5 * (double)m);
            assert_string_equal(t.label[k], half[m++]);
        }
    assert_int_equal(m, 5);
    assert_int_equal(vg_ticks_linear(0.0, 4.0, 8, &t, NULL), VG_OK);
    expect_ticks(&t, v, mj, 9, one);
}

/* Ends computed with rounding: 0.1 + 0.2 = 0.30000000000000004 and 0.7 +
 * 0.2 = 0.8999999999999999.  With 8 ticks: range = nicenum(0.6, no round)
 * = 1, d = nicenum(1/7 = 0.143, round) = 0.1, so 0.3 .. 0.9 by 0.1, both
 * ends kept within the 1e-9 end tolerance.  An end 1e-6 past 0.3 drops
 * the 0.3 tick. */
static void linear_round_ends_kept(void **state)
{
    vg_ticks t;
    size_t k, m = 0;

    (void)state;
    assert_int_equal(vg_ticks_linear(0.1 + 0.2, 0.7 + 0.2, 8, &t, NULL), VG_OK);
    for (k = 0; k < t.n; k++)
        if (t.major[k])
            assert_true(t.v[k] == (double)(3 + m++) / 10.0);
    assert_int_equal(m, 7);
    assert_string_equal(t.label[0], "0.3");
    assert_true(t.v[t.n - 1] == 0.9);
    assert_int_equal(vg_ticks_linear(0.3 + 1e-6, 0.9, 8, &t, NULL), VG_OK);
    assert_true(t.v[0] > 0.3);
    assert_true(t.v[0] == 0.35); /* minor step 0.05 */
}

/* 0.1..0.9 with 2 ticks: range = nicenum(0.8, no round) = 1, d =
 * nicenum(1, round) = 1 has no multiple inside.  Made finer: 0.5 gives one
 * (0.5), 0.2 gives 0.2, 0.4, 0.6, 0.8 -- at least two labels always. */
static void linear_small_target_refined(void **state)
{
    static const char *const lab[] = {"0.2", "0.4", "0.6", "0.8"};
    vg_ticks t;
    size_t k, m = 0;

    (void)state;
    assert_int_equal(vg_ticks_linear(0.1, 0.9, 2, &t, NULL), VG_OK);
    check_common(&t, 0.1, 0.9);
    for (k = 0; k < t.n; k++)
        if (t.major[k]) {
            assert_true(m < 4);
            assert_string_equal(t.label[k], lab[m++]);
        }
    assert_int_equal(m, 4);
}

/* Exponent labels outside 1e-4 .. 1e6.
 * 0..3e7, 5 ticks: range = nicenum(3e7, no round) = 5e7, d = nicenum(1.25e7,
 * round) = 1e7.  1.5e6..1.62e6, 5 ticks: range = nicenum(1.2e5) = 2e5, d =
 * nicenum(5e4, round) = 5e4: 1.5e6, 1.55e6, 1.6e6.  -5e-5..5e-5, 5 ticks:
 * range = nicenum(1e-4) = 1e-4, d = nicenum(2.5e-5, round) = 2e-5. */
static void linear_exponent_labels(void **state)
{
    static const char *const big[] = {"0", "1" TIMES "10<sup>7</sup>", "2" TIMES "10<sup>7</sup>",
                                      "3" TIMES "10<sup>7</sup>"};
    static const char *const mid[] = {"1.5" TIMES "10<sup>6</sup>", "1.55" TIMES "10<sup>6</sup>",
                                      "1.6" TIMES "10<sup>6</sup>"};
    static const char *const small[] = {
        MINUS "4" TIMES "10<sup>" MINUS "5</sup>", MINUS "2" TIMES "10<sup>" MINUS "5</sup>", "0",
        "2" TIMES "10<sup>" MINUS "5</sup>", "4" TIMES "10<sup>" MINUS "5</sup>"};
    static const struct {
        double lo, hi;
        size_t n;
        const char *const *lab;
    } c[] = {{0.0, 3e7, 4, big}, {1.5e6, 1.62e6, 3, mid}, {-5e-5, 5e-5, 5, small}};
    vg_ticks t;
    size_t i, k, m;

    (void)state;
    for (i = 0; i < 3; i++) {
        assert_int_equal(vg_ticks_linear(c[i].lo, c[i].hi, 5, &t, NULL), VG_OK);
        check_common(&t, c[i].lo, c[i].hi);
        for (k = 0, m = 0; k < t.n; k++)
            if (t.major[k]) {
                assert_true(m < c[i].n);
                assert_string_equal(t.label[k], c[i].lab[m++]);
            }
        assert_int_equal(m, c[i].n);
    }
}

/* A small deterministic generator (64-bit LCG, Knuth's MMIX constants,
 * from memory): uniform in [0, 1). */
static double uniform(uint64_t *s)
{
    *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*s >> 11) * 0x1.0p-53;
}

/* Random ranges: centres from 0 to 1e8 either sign, widths 1e-8 .. 1e9
 * (never under 1e-7 of the centre), targets 2..16.  Besides the common
 * properties: the labelled ticks are multiples of a 1-2-5 step and there
 * are at most max(1.5 (target - 1) + 1, 5) of them (Heckbert's step is at
 * least 2/3 of span / (target - 1); a refined step leaves at most 5). */
static void linear_random_ranges(void **state)
{
    uint64_t seed = 20240611;
    int r;

    (void)state;
    for (r = 0; r < 4000; r++) {
        double c = (uniform(&seed) < 0.2 ? 0.0 : 1.0) * pow(10.0, 16.0 * uniform(&seed) - 8.0)
                   * (uniform(&seed) < 0.5 ? -1.0 : 1.0);
        double w = fmax(pow(10.0, 17.0 * uniform(&seed) - 8.0), 1e-7 * fabs(c));
        double lo = c - w * uniform(&seed), hi = lo + w, tol = END_TOL * (hi - lo);
        int target = 2 + (int)(15.0 * uniform(&seed));
        vg_ticks t;
        vg_error e;

        if (vg_ticks_linear(lo, hi, target, &t, &e) != VG_OK)
            fail_msg("[%.17g, %.17g] target %d: %s", lo, hi, target, e.msg);
        check_common(&t, lo - tol, hi + tol);
        check_linear_multiples(&t);
        assert_true((double)count_major(&t) <= fmax(1.5 * (target - 1) + 1.0, 5.0));
    }
}

/* Every argument failure: VG_ENUMERIC, no ticks, a one-line lower-case
 * message without a full stop. */
static void expect_refused(vg_status st, const vg_ticks *t, const vg_error *e)
{
    size_t n = strlen(e->msg);

    assert_int_equal(st, VG_ENUMERIC);
    assert_int_equal(e->status, VG_ENUMERIC);
    assert_int_equal(t->n, 0);
    assert_true(n > 0 && e->msg[n - 1] != '.' && !strchr(e->msg, '\n'));
    assert_true(e->msg[0] >= 'a' && e->msg[0] <= 'z');
}

/* Linear: empty or reversed ranges, non-finite limits, targets outside
 * 2..16, a width under 1e-9 of the limits, limits past 1e300, a width
 * under 1e-300.  Log, besides: lo <= 0 and lo under 1e-300. */
static void ticks_error_paths(void **state)
{
    static const struct {
        double lo, hi;
        int target;
    } bad_lin[] = {
        {2.385, 2.385, 5},     {3.0, -1.0, 5},     {NAN, 1.0, 5},   {0.0, INFINITY, 5},
        {-INFINITY, 0.0, 5},   {0.0, 1.0, 1},      {0.0, 1.0, 17},  {0.0, 1.0, -3},
        {1.0, 1.0 + 1e-12, 5}, {-1e301, 1e301, 5}, {0.0, 1e-310, 5}, {-DBL_MAX, DBL_MAX, 5},
    }, bad_log[] = {
        {0.0, 10.0, 5}, {-1.0, 10.0, 5},    {1e-310, 1.0, 5}, {10.0, 10.0, 5},
        {10.0, 1.0, 5}, {1.0, NAN, 5},      {1.0, INFINITY, 5}, {1.0, 10.0, 1},
        {1.0, 10.0, 17}, {1.0, 1.0 + 1e-12, 5}, {1.0, 1e301, 5}, {1.0, DBL_MAX, 5},
    };
    vg_ticks t;
    vg_error e;
    size_t i;

    (void)state;
    for (i = 0; i < sizeof bad_lin / sizeof bad_lin[0]; i++) {
        t.n = 99;
        memset(&e, 0, sizeof e);
        expect_refused(vg_ticks_linear(bad_lin[i].lo, bad_lin[i].hi, bad_lin[i].target, &t, &e),
                       &t, &e);
    }
    for (i = 0; i < sizeof bad_log / sizeof bad_log[0]; i++) {
        t.n = 99;
        memset(&e, 0, sizeof e);
        expect_refused(vg_ticks_log(bad_log[i].lo, bad_log[i].hi, bad_log[i].target, &t, &e),
                       &t, &e);
    }
    assert_int_equal(vg_ticks_linear(1.0, 0.0, 5, &t, NULL), VG_ENUMERIC); /* err may be NULL */
    assert_int_equal(vg_ticks_log(1.0, 0.5, 5, &t, NULL), VG_ENUMERIC);
}

/* ---- log ticks ------------------------------------------------------ */

/* 0.001..1: three decades (>= 2), so decades 10^-3 .. 10^0, all labelled
 * (4 <= target 6), with minor ticks at 2..9 x 10^-3 .. 10^-1: 4 + 24 = 28
 * ticks, which fit. */
static void log_decades(void **state)
{
    static const char *const lab[] = {"10<sup>" MINUS "3</sup>", "10<sup>" MINUS "2</sup>",
                                      "10<sup>" MINUS "1</sup>", "10<sup>0</sup>"};
    static const double dec[] = {1e-3, 1e-2, 1e-1, 1.0};
    vg_ticks t;
    size_t k, m = 0;

    (void)state;
    assert_int_equal(vg_ticks_log(0.001, 1.0, 6, &t, NULL), VG_OK);
    check_common(&t, 0.001, 1.0);
    assert_int_equal(t.n, 28);
    for (k = 0; k < t.n; k++) {
        if (!t.major[k]) {
            /* 2..9 times the decade below: the minor ticks in order. */
            double want = (double)(k % 9 + 1) * dec[k / 9];
            assert_rel(t.v[k], want, 4 * DBL_EPSILON);
            continue;
        }
        assert_true(m < 4);
        assert_true(t.v[k] == dec[m]);
        assert_int_equal(k, 9 * m);
        assert_string_equal(t.label[k], lab[m++]);
    }
    assert_int_equal(m, 4);
}

/* 10..300 meV: log10(30) = 1.48 decades, under two, so 1-2-5 steps: 10,
 * 20, 50, 100, 200 (5 <= target 6) with plain labels; minor ticks at the
 * other digits 30, 40, 60..90, 300.  With target 4 the five 1-2-5 labels
 * are too many while two decades (10, 100) fit, so decades are labelled
 * instead. */
static void log_short_125(void **state)
{
    static const double v[] = {10, 20, 30, 40, 50, 60, 70, 80, 90, 100, 200, 300};
    static const int mj[] = {1, 1, 0, 0, 1, 0, 0, 0, 0, 1, 1, 0};
    static const char *const lab[] = {"10", "20", "50", "100", "200"};
    static const char *const dec[] = {"10<sup>1</sup>", "10<sup>2</sup>"};
    vg_ticks t;

    (void)state;
    assert_int_equal(vg_ticks_log(10.0, 300.0, 6, &t, NULL), VG_OK);
    expect_ticks(&t, v, mj, 12, lab);
    check_common(&t, 10.0, 300.0);
    assert_int_equal(vg_ticks_log(10.0, 300.0, 4, &t, NULL), VG_OK);
    static const int mj4[] = {1, 0, 0, 0, 0, 0, 0, 0, 0, 1, 0, 0};
    expect_ticks(&t, v, mj4, 12, dec);
}

/* 0.3..3: one decade, 1-2-5 values inside are 0.5, 1, 2 (labels with just
 * the decimals each needs); 0.3 and 3 are minor ticks. */
static void log_one_decade(void **state)
{
    static const double v[] = {0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1, 2, 3};
    static const int mj[] = {0, 0, 1, 0, 0, 0, 0, 1, 1, 0};
    static const char *const lab[] = {"0.5", "1", "2"};
    vg_ticks t;

    (void)state;
    assert_int_equal(vg_ticks_log(0.3, 3.0, 5, &t, NULL), VG_OK);
    expect_ticks(&t, v, mj, 10, lab);
}

/* Thinning.  1e-30..1e30, target 6: 61 decades; strides 1, 2, 5, 10 give
 * 61, 31, 13, 7 labels (> 6), stride 20 gives 10^-20, 10^0, 10^20; minor
 * ticks at the stride-10 decades 10^-30, 10^-10, 10^10, 10^30.
 * 1e-5..1e5, target 6: stride 1 gives 11, stride 2 gives 10^-4 .. 10^4
 * (5 labels), minor ticks at the odd decades.
 * 10..1000, target 2: stride 1 gives 3 (> 2) but stride 2 only 10^2, so
 * the stride stays 1 to keep two labels. */
static void log_thinned(void **state)
{
    vg_ticks t;
    size_t k, m = 0;

    (void)state;
    assert_int_equal(vg_ticks_log(1e-30, 1e30, 6, &t, NULL), VG_OK);
    check_common(&t, 1e-30 * (1.0 - END_TOL), 1e30 * (1.0 + END_TOL));
    assert_int_equal(t.n, 7);
    for (k = 0; k < 7; k++) {
        assert_rel(t.v[k], pow(10.0, -30.0 + 10.0 * (double)k), 4 * DBL_EPSILON);
        assert_int_equal(t.major[k], k % 2 == 1);
    }
    assert_string_equal(t.label[1], "10<sup>" MINUS "20</sup>");
    assert_string_equal(t.label[5], "10<sup>20</sup>");
    assert_int_equal(vg_ticks_log(1e-5, 1e5, 6, &t, NULL), VG_OK);
    assert_int_equal(t.n, 11);
    for (k = 0; k < 11; k++) {
        assert_rel(t.v[k], pow(10.0, -5.0 + (double)k), 4 * DBL_EPSILON);
        assert_int_equal(t.major[k], k % 2 == 1);
    }
    assert_int_equal(vg_ticks_log(10.0, 1000.0, 2, &t, NULL), VG_OK);
    for (k = 0; k < t.n; k++)
        if (t.major[k])
            assert_true(t.v[k] == pow(10.0, (double)(1 + m++)));
    assert_int_equal(m, 3);
}

/* Too short for two 1-2-5 values, so the linear ticks (Heckbert):
 * 30..45 holds none: range = nicenum(15, no round) = 20, d = nicenum(5,
 * round) = 5: 30, 35, 40, 45.  15..25 holds only 20: range = nicenum(10)
 * = 10, d = nicenum(2.5, round) = 2: 16, 18, 20, 22, 24. */
static void log_falls_back_to_linear(void **state)
{
    vg_ticks t, lin;
    size_t k, m = 0;

    (void)state;
    assert_int_equal(vg_ticks_log(30.0, 45.0, 5, &t, NULL), VG_OK);
    assert_int_equal(vg_ticks_linear(30.0, 45.0, 5, &lin, NULL), VG_OK);
    assert_int_equal(t.n, lin.n);
    assert_memory_equal(t.v, lin.v, t.n * sizeof t.v[0]);
    for (k = 0; k < t.n; k++)
        if (t.major[k])
            assert_true(t.v[k] == 30.0 + 5.0 * (double)m++);
    assert_int_equal(m, 4);
    assert_int_equal(vg_ticks_log(15.0, 25.0, 5, &t, NULL), VG_OK);
    for (k = 0, m = 0; k < t.n; k++)
        if (t.major[k])
            assert_true(t.v[k] == 16.0 + 2.0 * (double)m++);
    assert_int_equal(m, 5);
}

/* 2e6..5e7: 1.4 decades, 1-2-5 values 2e6, 5e6, 1e7, 2e7, 5e7, labelled
 * m x 10^k since they pass 1e6. */
static void log_exponent_labels(void **state)
{
    static const char *const lab[] = {"2" TIMES "10<sup>6</sup>", "5" TIMES "10<sup>6</sup>",
                                      "1" TIMES "10<sup>7</sup>", "2" TIMES "10<sup>7</sup>",
                                      "5" TIMES "10<sup>7</sup>"};
    vg_ticks t;
    size_t k, m = 0;

    (void)state;
    assert_int_equal(vg_ticks_log(2e6, 5e7, 6, &t, NULL), VG_OK);
    check_common(&t, 2e6, 5e7);
    for (k = 0; k < t.n; k++)
        if (t.major[k]) {
            assert_true(m < 5);
            assert_string_equal(t.label[k], lab[m++]);
        }
    assert_int_equal(m, 5);
}

/* Random log ranges 1e-12 .. 1e12 wide 0.05 .. 40 decades, targets 2..16:
 * the common properties, and labelled ticks that are either all 1, 2 or 5
 * times a power of ten or (the short-axis fallback) linear multiples. */
static void log_random_ranges(void **state)
{
    uint64_t seed = 77310243;
    int r;

    (void)state;
    for (r = 0; r < 4000; r++) {
        double lo = pow(10.0, 24.0 * uniform(&seed) - 12.0);
        double hi = lo * pow(10.0, 0.05 + 39.95 * uniform(&seed));
        int target = 2 + (int)(15.0 * uniform(&seed)), all125 = 1;
        vg_ticks t;
        vg_error e;
        size_t k;

        if (vg_ticks_log(lo, hi, target, &t, &e) != VG_OK)
            fail_msg("[%.17g, %.17g] target %d: %s", lo, hi, target, e.msg);
        check_common(&t, lo * (1.0 - END_TOL), hi * (1.0 + END_TOL));
        for (k = 0; k < t.n; k++)
            if (t.major[k])
                all125 &= is_125(mantissa(t.v[k]), 1e-12);
        if (!all125)
            check_linear_multiples(&t);
    }
}

/* ---- contours ------------------------------------------------------- */

/* Counts the edges whose ends lie on opposite sides of level (">=" is
 * above), split into grid-boundary and interior edges; every such edge
 * gives one segment end in each cell beside it, so 2 * segments =
 * 2 * interior + boundary when no cell is skipped. */
static void count_crossings(const double *z, size_t nx, size_t ny, double level,
                            size_t *interior, size_t *boundary)
{
    size_t i, j;

    *interior = *boundary = 0;
    for (j = 0; j < ny; j++)
        for (i = 0; i + 1 < nx; i++)
            if ((z[j * nx + i] >= level) != (z[j * nx + i + 1] >= level))
                ++*(j == 0 || j + 1 == ny ? boundary : interior);
    for (j = 0; j + 1 < ny; j++)
        for (i = 0; i < nx; i++)
            if ((z[j * nx + i] >= level) != (z[(j + 1) * nx + i] >= level))
                ++*(i == 0 || i + 1 == nx ? boundary : interior);
}

static int on_boundary(double x, double y, size_t nx, size_t ny)
{
    return x == 0.0 || y == 0.0 || x == (double)(nx - 1) || y == (double)(ny - 1);
}

/* How many segment ends sit exactly at (x, y). */
static size_t ends_at(const vg_segment *s, size_t n, double x, double y)
{
    size_t k, c = 0;

    for (k = 0; k < n; k++)
        c += (size_t)((s[k].x0 == x && s[k].y0 == y) + (s[k].x1 == x && s[k].y1 == y));
    return c;
}

/* Chaining: every end inside the grid is shared by exactly two segments
 * (exact equality: both cells interpolate the shared edge alike), every
 * end on the grid boundary by one.  Returns the number of boundary ends. */
static size_t check_chains(const vg_segment *s, size_t n, size_t nx, size_t ny)
{
    size_t k, nb = 0;

    for (k = 0; k < 2 * n; k++) {
        double x = k % 2 ? s[k / 2].x1 : s[k / 2].x0, y = k % 2 ? s[k / 2].y1 : s[k / 2].y0;
        size_t want = on_boundary(x, y, nx, ny) ? 1 : 2;
        if (ends_at(s, n, x, y) != want)
            fail_msg("end (%.17g, %.17g) shared by %zu segments, want %zu", x, y,
                     ends_at(s, n, x, y), want);
        nb += want == 1;
    }
    return nb;
}

/* Each end lies on a cell edge: one coordinate an integer, the other
 * inside the grid. */
static void check_on_edges(const vg_segment *s, size_t n, size_t nx, size_t ny)
{
    size_t k;

    for (k = 0; k < 2 * n; k++) {
        double x = k % 2 ? s[k / 2].x1 : s[k / 2].x0, y = k % 2 ? s[k / 2].y1 : s[k / 2].y0;
        assert_true(x == floor(x) || y == floor(y));
        assert_true(x >= 0.0 && x <= (double)(nx - 1) && y >= 0.0 && y <= (double)(ny - 1));
    }
}

/* Row by row, cell by cell: the cells (from each segment's midpoint) come
 * in non-decreasing (row, column) order. */
static void check_order(const vg_segment *s, size_t n, size_t nx)
{
    size_t k;
    double prev = -1.0;

    for (k = 0; k < n; k++) {
        double cell = floor(0.5 * (s[k].y0 + s[k].y1)) * (double)nx + floor(0.5 * (s[k].x0 + s[k].x1));
        assert_true(cell >= prev);
        prev = cell;
    }
}

#define PNX 23
#define PNY 17

/* A plane z = a x + b y + c on index coordinates: linear interpolation is
 * exact on it, so every end lies on a x + b y + c = level up to rounding
 * (1e-12 on values of order 30).  One straight line across the grid: an
 * open chain with two boundary ends. */
static void contour_plane(void **state)
{
    static double z[PNX * PNY];
    static vg_segment s[2 * (PNX - 1) * (PNY - 1)];
    const double a = 0.7318, b = -1.2471, c = 3.1416, level = a * 11.37 + b * 8.71 + c;
    size_t i, j, n, in, bd;

    (void)state;
    for (j = 0; j < PNY; j++)
        for (i = 0; i < PNX; i++)
            z[j * PNX + i] = a * (double)i + b * (double)j + c;
    n = vg_contour(z, PNX, PNY, level, -9999.0, s, sizeof s / sizeof s[0]);
    assert_true(n > 10);
    for (i = 0; i < n; i++) {
        assert_true(fabs(a * s[i].x0 + b * s[i].y0 + c - level) <= 1e-12);
        assert_true(fabs(a * s[i].x1 + b * s[i].y1 + c - level) <= 1e-12);
    }
    count_crossings(z, PNX, PNY, level, &in, &bd);
    assert_int_equal(2 * n, 2 * in + bd);
    assert_int_equal(check_chains(s, n, PNX, PNY), 2);
    assert_int_equal(bd, 2);
    check_on_edges(s, n, PNX, PNY);
    check_order(s, n, PNX);
}

#define CN 41

/* The circle X^2 + Y^2 = r^2, X = (i - ci) h, Y = (j - cj) h.  Along an
 * edge where X is fixed, z is the quadratic f(Y) = Y^2 - q (q = r^2 - X^2)
 * and the linear interpolant between Y0 and Y1 has its root at
 * (Y0 Y1 + q) / (Y0 + Y1) = Y* + (Y0 - Y*)(Y1 - Y*) / (Y0 + Y1), Y* the
 * exact root on the edge (the secant step of f, by algebra).  So each end
 * is checked against that closed form (to rounding, which grows as
 * 1 / |Y0 + Y1| near tangency) and lies within h^2 / (4 |Y0 + Y1|) of the
 * true circle (|(Y0 - Y*)(Y1 - Y*)| <= h^2 / 4); away from tangency that
 * is about h^2 / (8 |Y*|).  Likewise with X and Y swapped.  The circle is
 * inside the grid, so the chains are closed: every end shared by two. */
static void check_circle_end(double xi, double yi, double ci, double cj, double h, double r)
{
    int along_y = xi == floor(xi); /* on an edge of fixed X */
    double fixed = along_y ? (xi - ci) * h : (yi - cj) * h;
    double f = along_y ? yi : xi, cf = along_y ? cj : ci;
    double u0 = (floor(f) - cf) * h, u1 = u0 + h, got = (f - cf) * h;
    double q = r * r - fixed * fixed, sum = u0 + u1;
    double root = sqrt(q), secant = (u0 * u1 + q) / sum;
    double tol = 64.0 * DBL_EPSILON * (r * r + 1.0) / fabs(sum);

    if (!(root >= u0 - tol && root <= u1 + tol)) /* the root on this edge */
        root = -root;

    assert_true(root >= u0 - tol && root <= u1 + tol);
    if (!(fabs(got - secant) <= tol))
        fail_msg("end at %.17g, secant root %.17g (tol %.3g)", got, secant, tol);
    assert_true(fabs(got - root) <= h * h / (4.0 * fabs(sum)) + tol);
}

static void contour_circle(void **state)
{
    static double z[CN * CN];
    static vg_segment s[2 * (CN - 1) * (CN - 1)];
    const double h = 0.1, ci = 20.3, cj = 19.6, r = 1.37;
    size_t i, j, n, in, bd;

    (void)state;
    for (j = 0; j < CN; j++)
        for (i = 0; i < CN; i++) {
            double x = ((double)i - ci) * h, y = ((double)j - cj) * h;
            z[j * CN + i] = x * x + y * y;
        }
    n = vg_contour(z, CN, CN, r * r, -1.0, s, sizeof s / sizeof s[0]);
    assert_true(n > 50);
    for (i = 0; i < n; i++) {
        check_circle_end(s[i].x0, s[i].y0, ci, cj, h, r);
        check_circle_end(s[i].x1, s[i].y1, ci, cj, h, r);
    }
    count_crossings(z, CN, CN, r * r, &in, &bd);
    assert_int_equal(bd, 0);
    assert_int_equal(n, in);
    assert_int_equal(check_chains(s, n, CN, CN), 0);
    check_order(s, n, CN);
}

/* Does s join (ax, ay) and (bx, by), either way round, to 1e-12? */
static int joins(const vg_segment *s, double ax, double ay, double bx, double by)
{
    const double tol = 1e-12;

    return (fabs(s->x0 - ax) <= tol && fabs(s->y0 - ay) <= tol && fabs(s->x1 - bx) <= tol
            && fabs(s->y1 - by) <= tol)
           || (fabs(s->x0 - bx) <= tol && fabs(s->y0 - by) <= tol && fabs(s->x1 - ax) <= tol
               && fabs(s->y1 - ay) <= tol);
}

static void expect_pair(const vg_segment *s, size_t n, const double p[4][2], int e0, int e1,
                        int e2, int e3)
{
    assert_int_equal(n, 2);
    assert_true((joins(&s[0], p[e0][0], p[e0][1], p[e1][0], p[e1][1])
                 && joins(&s[1], p[e2][0], p[e2][1], p[e3][0], p[e3][1]))
                || (joins(&s[1], p[e0][0], p[e0][1], p[e1][0], p[e1][1])
                    && joins(&s[0], p[e2][0], p[e2][1], p[e3][0], p[e3][1])));
}

/* The crossing points of x y = level on the four edges of the cell
 * x in [-0.8, 1.3], y in [-1.1, 0.7] (z = x y is linear along each edge,
 * so interpolation is exact), in index fractions: edge 0 bottom (y = -1.1),
 * 1 right (x = 1.3), 2 top (y = 0.7), 3 left (x = -0.8). */
static void saddle_points(double level, double p[4][2])
{
    p[0][0] = (level / -1.1 + 0.8) / 2.1, p[0][1] = 0.0;
    p[1][0] = 1.0, p[1][1] = (level / 1.3 + 1.1) / 1.8;
    p[2][0] = (level / 0.7 + 0.8) / 2.1, p[2][1] = 1.0;
    p[3][0] = 0.0, p[3][1] = (level / -0.8 + 1.1) / 1.8;
}

/* z = x y at x = -0.8, 1.3 and y = -1.1, 0.7: corners 0.88, -1.43 (bottom),
 * -0.56, 0.91 (top); mean -0.05.  Level 0: case 5 (the positive diagonal
 * above), mean below the level, so the above corners are cut off: corner
 * (0,0) by edges 3-0 and corner (1,1) by edges 1-2.  Level -0.1: still
 * case 5, mean above, so the below corners are cut off: (1,0) by edges
 * 0-1 and (0,1) by edges 2-3.  For z = -x y the same corners switch sides
 * (case 10) and the rule switches the pairings accordingly. */
static void contour_saddles(void **state)
{
    double z[4] = {-0.8 * -1.1, 1.3 * -1.1, -0.8 * 0.7, 1.3 * 0.7}, w[4], p[4][2];
    vg_segment s[2];
    size_t k;

    (void)state;
    for (k = 0; k < 4; k++)
        w[k] = -z[k];
    saddle_points(0.0, p);
    expect_pair(s, vg_contour(z, 2, 2, 0.0, -9999.0, s, 2), p, 3, 0, 1, 2);
    expect_pair(s, vg_contour(w, 2, 2, 0.0, -9999.0, s, 2), p, 3, 0, 1, 2);
    saddle_points(-0.1, p);
    expect_pair(s, vg_contour(z, 2, 2, -0.1, -9999.0, s, 2), p, 0, 1, 2, 3);
    /* -x y = 0.1 where x y = -0.1: case 10 with the mean 0.05 below 0.1,
     * so its above corners (1,0) and (0,1) are cut off. */
    expect_pair(s, vg_contour(w, 2, 2, 0.1, -9999.0, s, 2), p, 0, 1, 2, 3);
}

/* A centre exactly at the level counts as above: corners 1, -1, -1, 1
 * (mean 0) at level 0 cut off the below corners (1,0) and (0,1); the
 * crossings are the edge midpoints. */
static void contour_saddle_centre_at_level(void **state)
{
    static const double z[4] = {1.0, -1.0, -1.0, 1.0};
    static const double p[4][2] = {{0.5, 0.0}, {1.0, 0.5}, {0.5, 1.0}, {0.0, 0.5}};
    vg_segment s[2];

    (void)state;
    expect_pair(s, vg_contour(z, 2, 2, 0.0, -9999.0, s, 2), p, 0, 1, 2, 3);
}

/* The segments found in cell (ci, cj), from their midpoints. */
static size_t in_cell(const vg_segment *s, size_t n, size_t ci, size_t cj)
{
    size_t k, c = 0;

    for (k = 0; k < n; k++)
        c += floor(0.5 * (s[k].x0 + s[k].x1)) == (double)ci
                     && floor(0.5 * (s[k].y0 + s[k].y1)) == (double)cj
                 ? 1
                 : 0;
    return c;
}

/* A node set to the fill value (or to NaN) removes exactly the segments
 * of the four cells around it and no other. */
static void contour_fill_value_skipped(void **state)
{
    static double z[PNX * PNY];
    static vg_segment all[2 * (PNX - 1) * (PNY - 1)], cut[2 * (PNX - 1) * (PNY - 1)];
    const double a = 0.7318, b = -1.2471, c = 3.1416, level = a * 11.37 + b * 8.71 + c;
    const double fills[2] = {-9999.0, NAN};
    const size_t i0 = 11, j0 = 9, cap = sizeof all / sizeof all[0];
    size_t i, j, f, n, m, removed = 0;

    (void)state;
    for (j = 0; j < PNY; j++)
        for (i = 0; i < PNX; i++)
            z[j * PNX + i] = a * (double)i + b * (double)j + c;
    n = vg_contour(z, PNX, PNY, level, -9999.0, all, cap);
    for (j = j0 - 1; j <= j0; j++)
        for (i = i0 - 1; i <= i0; i++)
            removed += in_cell(all, n, i, j);
    assert_true(removed >= 2); /* the line passes next to the node */
    for (f = 0; f < 2; f++) {
        z[j0 * PNX + i0] = fills[f];
        m = vg_contour(z, PNX, PNY, level, -9999.0, cut, cap);
        assert_int_equal(m, n - removed);
        for (j = j0 - 1; j <= j0; j++)
            for (i = i0 - 1; i <= i0; i++)
                assert_int_equal(in_cell(cut, m, i, j), 0);
        for (i = 0, j = 0; i < n && j < m; i++) /* the rest, unchanged and in order */
            if (joins(&cut[j], all[i].x0, all[i].y0, all[i].x1, all[i].y1))
                j++;
        assert_int_equal(j, m);
    }
    for (i = 0; i < PNX * PNY; i++)
        z[i] = -9999.0;
    assert_int_equal(vg_contour(z, PNX, PNY, level, -9999.0, cut, cap), 0);
}

/* A level above or below every value, or not finite, and grids too small
 * to hold a cell give no segment. */
static void contour_nothing(void **state)
{
    static const double z[6] = {0.31, -2.7, 1.9, 4.4, -0.5, 2.2};
    vg_segment s[4];

    (void)state;
    assert_int_equal(vg_contour(z, 3, 2, 4.41, -9999.0, s, 4), 0);
    assert_int_equal(vg_contour(z, 3, 2, -2.71, -9999.0, s, 4), 0);
    assert_int_equal(vg_contour(z, 3, 2, NAN, -9999.0, s, 4), 0);
    assert_int_equal(vg_contour(z, 6, 1, 0.0, -9999.0, s, 4), 0);
    assert_int_equal(vg_contour(z, 1, 6, 0.0, -9999.0, s, 4), 0);
    assert_true(vg_contour(z, 3, 2, 0.0, -9999.0, s, 4) > 0); /* the same grid has one at 0 */
}

/* Values exactly at the level count as above.  z = j - 1 on 4 x 3 nodes
 * at level 0: the middle row is at the level, so the cells below it
 * (bottom -1, top 0: case 12) cross on their left and right edges at
 * t = (0 - (-1)) / (0 - (-1)) = 1, i.e. along y = 1, and the cells above
 * it (all corners >= 0) give nothing: the line y = 1 drawn once.  A single
 * corner at the level with the others above gives nothing either. */
static void contour_corner_at_level(void **state)
{
    static const double z[12] = {-1, -1, -1, -1, 0, 0, 0, 0, 1, 1, 1, 1};
    static const double one[4] = {2.0, 3.5, 2.25, 4.0};
    vg_segment s[12];
    size_t n, k;

    (void)state;
    n = vg_contour(z, 4, 3, 0.0, -9999.0, s, 12);
    assert_int_equal(n, 3);
    for (k = 0; k < n; k++) {
        assert_true(s[k].y0 == 1.0 && s[k].y1 == 1.0);
        assert_true(fmin(s[k].x0, s[k].x1) == (double)k && fmax(s[k].x0, s[k].x1) == (double)k + 1);
    }
    assert_int_equal(vg_contour(one, 2, 2, 2.0, -9999.0, s, 12), 0);
}

/* Bounds: alternating signs make every cell a saddle with two segments,
 * reaching the documented bound 2 (nx-1)(ny-1); a smaller cap returns cap
 * segments, the first ones of the full list. */
static void contour_count_bound_and_cap(void **state)
{
    enum { NX = 7, NY = 5, MAXSEG = 2 * (NX - 1) * (NY - 1) };
    double z[NX * NY];
    vg_segment s[MAXSEG], t[5];
    size_t i, j;

    (void)state;
    for (j = 0; j < NY; j++)
        for (i = 0; i < NX; i++)
            z[j * NX + i] = ((i + j) % 2 ? -1.0 : 1.0) * (1.0 + 0.137 * (double)(i * j));
    assert_int_equal(vg_contour(z, NX, NY, 0.0, -9999.0, s, MAXSEG), MAXSEG);
    assert_int_equal(vg_contour(z, NX, NY, 0.0, -9999.0, t, 5), 5);
    assert_memory_equal(s, t, sizeof t);
    assert_int_equal(vg_contour(z, NX, NY, 0.0, -9999.0, t, 0), 0);
    check_chains(s, MAXSEG, NX, NY);
}

/* Random fields (values in [-1, 1), random levels): the count identity,
 * the bound, chaining and order hold for any field. */
static void contour_random_fields(void **state)
{
    enum { NX = 13, NY = 11 };
    static double z[NX * NY];
    static vg_segment s[2 * (NX - 1) * (NY - 1)];
    uint64_t seed = 99173;
    size_t r, k, n, in, bd;

    (void)state;
    for (r = 0; r < 200; r++) {
        double level = 1.6 * uniform(&seed) - 0.8;
        for (k = 0; k < NX * NY; k++)
            z[k] = 2.0 * uniform(&seed) - 1.0;
        n = vg_contour(z, NX, NY, level, -9999.0, s, sizeof s / sizeof s[0]);
        assert_true(n <= 2 * (NX - 1) * (NY - 1));
        count_crossings(z, NX, NY, level, &in, &bd);
        assert_int_equal(2 * n, 2 * in + bd);
        assert_int_equal(check_chains(s, n, NX, NY), bd);
        check_on_edges(s, n, NX, NY);
        check_order(s, n, NX);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(linear_heckbert_example),
        cmocka_unit_test(linear_zero_to_600),
        cmocka_unit_test(linear_symmetric_thousands),
        cmocka_unit_test(linear_decimals),
        cmocka_unit_test(linear_negative_and_zero),
        cmocka_unit_test(linear_rounding_thresholds),
        cmocka_unit_test(linear_round_ends_kept),
        cmocka_unit_test(linear_small_target_refined),
        cmocka_unit_test(linear_exponent_labels),
        cmocka_unit_test(linear_random_ranges),
        cmocka_unit_test(ticks_error_paths),
        cmocka_unit_test(log_decades),
        cmocka_unit_test(log_short_125),
        cmocka_unit_test(log_one_decade),
        cmocka_unit_test(log_thinned),
        cmocka_unit_test(log_falls_back_to_linear),
        cmocka_unit_test(log_exponent_labels),
        cmocka_unit_test(log_random_ranges),
        cmocka_unit_test(contour_plane),
        cmocka_unit_test(contour_circle),
        cmocka_unit_test(contour_saddles),
        cmocka_unit_test(contour_saddle_centre_at_level),
        cmocka_unit_test(contour_fill_value_skipped),
        cmocka_unit_test(contour_nothing),
        cmocka_unit_test(contour_corner_at_level),
        cmocka_unit_test(contour_count_bound_and_cap),
        cmocka_unit_test(contour_random_fields),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
