/*
 * Axis ticks for the figures (see vg_plotaux.h): positions and Pango-markup
 * labels for linear and log axes.  Called by the figure module for the map
 * axes (meV, K, cm-1, dimensionless) and the colour bar.
 *
 * Linear axes follow Heckbert's "Nice numbers for graph labels" (Graphics
 * Gems, 1990): the span rounded up to a nice number, the step
 * d = nicenum(span / (target - 1), rounded), nfrac = max(-floor(log10 d), 0)
 * decimals; only the ticks inside [lo, hi] are kept.  Every tick is held as
 * an exact decimal n * 10^e (n an integer), so its value is the double
 * nearest that decimal and its label is written from the integer digits.
 * When the labelled ticks and the minor ones between them (the next finer
 * 1-2-5 step that divides the labelled one) fit in VG_TICKS_MAX, both are
 * given; otherwise the labelled ticks alone.
 *
 * Log axes: labelled decades 10^k (every 2nd, 5th, 10th ... decade when
 * there would be more than target), minor ticks at 2..9 x 10^k or at the
 * unlabelled decades when they fit; under two decades, labelled 1-2-5
 * steps; too short even for two of those, the linear ticks.
 *
 * Errors: every argument failure returns VG_ENUMERIC.  The limits come from
 * the program itself (config axes, data ranges), never straight from the
 * user, so a bad one is an internal failure, not a usage error; the caller
 * adds the file and line it is drawing.
 */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "vg_plotaux.h"

/* A tick at exactly its end is kept when within this fraction of the axis
 * span (linear) or of the end itself (log), so that an end written as a
 * round number but computed with rounding (0.1 + 0.2) keeps its tick. */
#define END_TOL 1e-9
/* Narrower ranges (relative to the largest |limit|) would need more than
 * about ten significant digits per label. */
#define REL_WIDTH_MIN 1e-9
/* Limits and spans outside [ABS_MIN, ABS_MAX] in magnitude are refused:
 * the powers of ten of their steps would underflow or overflow. */
#define ABS_MIN 1e-300
#define ABS_MAX 1e300
/* Labels are plain decimals while both |limits| are below PLAIN_MAX and
 * the step (linear) or lo (log) is at least PLAIN_MIN; otherwise
 * m x 10^k. */
#define PLAIN_MIN 1e-4
#define PLAIN_MAX 1e6
/* A log axis spanning at least this many decades is labelled by decades. */
#define DECADE_SPAN_MIN 2.0
/* At most this many labelled ticks may be asked for: Heckbert's method
 * gives at most 1.5 (target - 1) + 1 of them, which then fits
 * VG_TICKS_MAX with room to spare. */
#define TARGET_MAX (VG_TICKS_MAX / 2)

/* U+2212 MINUS SIGN and U+00D7 MULTIPLICATION SIGN in UTF-8. */
#define MINUS "\xe2\x88\x92"
#define TIMES "\xc3\x97"

/* A nice number m * 10^e with m in {1, 2, 5}. */
typedef struct {
    int m, e;
} nice;

enum { LAB_FIXED, LAB_MINIMAL, LAB_SCI, LAB_DECADE };

/* Ticks under construction: the window [lo, hi] (ends widened by the end
 * tolerance) and how labels are written. */
typedef struct {
    vg_ticks *t;
    double lo, hi;
    int style; /* LAB_* */
    int nfrac; /* decimals for LAB_FIXED */
    int full;  /* set when a tick did not fit in t */
} builder;

/* 10^e; exact for |e| <= 22 (every such power is a double). */
static double pow10_int(int e)
{
    static const double p[23] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                 1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};

    if (e >= 0 && e <= 22)
        return p[e];
    return pow(10.0, (double)e);
}

/* n * 10^e, correctly rounded when |n| < 2^53 and |e| <= 22 (one exact
 * operand each side of one rounding); beyond, two roundings. */
static double dec_value(long long n, int e)
{
    if (e >= 0)
        return (double)n * pow10_int(e);
    if (e >= -22)
        return (double)n / pow10_int(-e);
    return (double)n * pow10_int(e);
}

static double nice_value(nice d)
{
    return dec_value(d.m, d.e);
}

/* floor(log10 x) for x > 0, corrected for a rounded logarithm. */
static int decade_of(double x)
{
    int e = (int)floor(log10(x));

    if (pow10_int(e) > x)
        e--;
    else if (pow10_int(e + 1) <= x)
        e++;
    return e;
}

/* Heckbert's nicenum: a nice number near x > 0, rounded to the nearest
 * (round != 0) or the next one up (round == 0). */
static nice nicenum(double x, int round)
{
    nice d = {1, decade_of(x)};
    double f = x / pow10_int(d.e);

    if (round)
        d.m = f < 1.5 ? 1 : f < 3.0 ? 2 : f < 7.0 ? 5 : 10;
    else
        d.m = f <= 1.0 ? 1 : f <= 2.0 ? 2 : f <= 5.0 ? 5 : 10;
    if (d.m == 10) {
        d.m = 1;
        d.e++;
    }
    return d;
}

/* The next nice number down: 5 -> 2 -> 1 -> 0.5. */
static nice nice_finer(nice d)
{
    nice f = {d.m == 5 ? 2 : d.m == 2 ? 1 : 5, d.m == 1 ? d.e - 1 : d.e};
    return f;
}

/* The next nice number up: 1 -> 2 -> 5 -> 10. */
static nice nice_coarser(nice d)
{
    nice c = {d.m == 1 ? 2 : d.m == 2 ? 5 : 1, d.m == 5 ? d.e + 1 : d.e};
    return c;
}

/* The largest nice number below d that divides it (1 -> 0.5, 2 -> 1,
 * 5 -> 1), for minor ticks; *ratio gets d over it. */
static nice minor_step(nice d, int *ratio)
{
    nice s = {d.m == 1 ? 5 : 1, d.m == 1 ? d.e - 1 : d.e};

    *ratio = d.m == 5 ? 5 : 2;
    return s;
}

/* The run of integers k with k * step inside [b->lo, b->hi]: returns how
 * many (possibly 0) and the first in *first.  The estimate from a division
 * is corrected against the exact tick values. */
static long long index_span(const builder *b, nice s, long long *first)
{
    double step = nice_value(s);
    long long a = (long long)ceil(b->lo / step), z = (long long)floor(b->hi / step);

    while (dec_value(a * s.m, s.e) < b->lo)
        a++;
    while (dec_value((a - 1) * s.m, s.e) >= b->lo)
        a--;
    while (dec_value(z * s.m, s.e) > b->hi)
        z--;
    while (dec_value((z + 1) * s.m, s.e) <= b->hi)
        z++;
    *first = a;
    return z >= a ? z - a + 1 : 0;
}

/* Writes the sign: nothing, or U+2212 when neg; returns the bytes used. */
static size_t put_sign(char *s, int neg)
{
    if (!neg)
        return 0;
    memcpy(s, MINUS, sizeof MINUS - 1);
    return sizeof MINUS - 1;
}

/* |n| * 10^e with nfrac decimals (the digits dropped are zeros). */
static void label_fixed(char *s, size_t cap, long long n, int e, int nfrac)
{
    snprintf(s, cap, "%.*f", nfrac, fabs(dec_value(n, e)));
}

/* |n| * 10^e as "m×10<sup>k</sup>", the mantissa written from the integer
 * digits of n with trailing zeros dropped. */
static void label_sci(char *s, size_t cap, long long n, int e)
{
    char dig[24];
    size_t nd, k = 0;
    unsigned long long u = n < 0 ? 0ULL - (unsigned long long)n : (unsigned long long)n;
    int x;

    while (u != 0 && u % 10 == 0) {
        u /= 10;
        e++;
    }
    nd = (size_t)snprintf(dig, sizeof dig, "%llu", u);
    x = e + (int)nd - 1;
    s[k++] = dig[0];
    if (nd > 1)
        k += (size_t)snprintf(s + k, cap - k, ".%s", dig + 1);
    k += (size_t)snprintf(s + k, cap - k, TIMES "10<sup>");
    k += put_sign(s + k, x < 0);
    snprintf(s + k, cap - k, "%d</sup>", x < 0 ? -x : x);
}

/* The label of the tick n * 10^e in the builder's style. */
static void label_tick(const builder *b, char *s, long long n, int e)
{
    size_t k;

    if (n == 0) {
        label_fixed(s, VG_TICK_LABEL, 0, 0, b->style == LAB_FIXED ? b->nfrac : 0);
        return;
    }
    k = put_sign(s, n < 0);
    if (b->style == LAB_DECADE) {
        snprintf(s + k, VG_TICK_LABEL - k, "10<sup>");
        k += strlen(s + k);
        k += put_sign(s + k, e < 0);
        snprintf(s + k, VG_TICK_LABEL - k, "%d</sup>", e < 0 ? -e : e);
    } else if (b->style == LAB_SCI) {
        label_sci(s + k, VG_TICK_LABEL - k, n, e);
    } else {
        label_fixed(s + k, VG_TICK_LABEL - k, n, e,
                    b->style == LAB_FIXED ? b->nfrac : (e < 0 ? -e : 0));
    }
}

/* Appends the tick n * 10^e when it lies in the window. */
static void put(builder *b, long long n, int e, int major)
{
    vg_ticks *t = b->t;
    double v = dec_value(n, e);

    if (v < b->lo || v > b->hi)
        return;
    if (t->n == VG_TICKS_MAX) {
        b->full = 1;
        return;
    }
    t->v[t->n] = v;
    t->major[t->n] = major;
    t->label[t->n][0] = '\0';
    if (major)
        label_tick(b, t->label[t->n], n, e);
    t->n++;
}

/* Runs emit(b, arg, 1) (with minor ticks); when they do not all fit, starts
 * again with emit(b, arg, 0) (labelled ticks only). */
static void emit_fitting(builder *b, void (*emit)(builder *, const void *, int), const void *arg)
{
    b->t->n = 0;
    b->full = 0;
    emit(b, arg, 1);
    if (b->full) {
        b->t->n = 0;
        b->full = 0;
        emit(b, arg, 0);
    }
}

static vg_status check_limits(double lo, double hi, int target, vg_error *err)
{
    double big = fmax(fabs(lo), fabs(hi));

    if (!isfinite(lo) || !isfinite(hi))
        return vg_error_set(err, VG_ENUMERIC, "axis limits must be finite (got %g and %g)", lo, hi);
    if (!(lo < hi))
        return vg_error_set(err, VG_ENUMERIC, "axis 'lo' must be below 'hi' (got lo = %g, hi = %g)",
                            lo, hi);
    if (big > ABS_MAX || hi - lo < ABS_MIN)
        return vg_error_set(err, VG_ENUMERIC,
                            "axis [%g, %g] is out of reach: limits must be within %g in magnitude "
                            "and the width at least %g", lo, hi, ABS_MAX, ABS_MIN);
    if (hi - lo < REL_WIDTH_MIN * big)
        return vg_error_set(err, VG_ENUMERIC,
                            "axis [%.17g, %.17g] is too narrow for tick labels: the width must be "
                            "at least %g of the largest limit", lo, hi, REL_WIDTH_MIN);
    if (target < 2 || target > TARGET_MAX)
        return vg_error_set(err, VG_ENUMERIC, "tick 'target' must be 2..%d (got %d)", TARGET_MAX,
                            target);
    return VG_OK;
}

/* ---- linear axes ---------------------------------------------------- */

/* Every multiple of the minor step, each ratio-th one labelled; or only the
 * multiples of the step d. */
static void emit_linear(builder *b, const void *arg, int with_minor)
{
    nice d = *(const nice *)arg, s = d;
    int ratio = 1;
    long long k, first, n;

    if (with_minor)
        s = minor_step(d, &ratio);
    n = index_span(b, s, &first);
    for (k = first; k < first + n && !b->full; k++)
        put(b, k * s.m, s.e, k % ratio == 0);
}

/* Heckbert's step, made finer (5 -> 2 -> 1 ...) while fewer than two of its
 * multiples fall inside: with a small target his loose step can exceed the
 * span.  A span L holds two multiples of any d <= L / 2, so this ends. */
static nice linear_step(const builder *b, double lo, double hi, int target)
{
    nice d = nicenum(nice_value(nicenum(hi - lo, 0)) / (double)(target - 1), 1);
    long long first;

    while (index_span(b, d, &first) < 2)
        d = nice_finer(d);
    return d;
}

/* The linear ticks for checked limits (also the short log axis fallback). */
static vg_status linear_ticks(double lo, double hi, int target, vg_ticks *t, vg_error *err)
{
    double tol = END_TOL * (hi - lo);
    builder b = {t, lo - tol, hi + tol, LAB_FIXED, 0, 0};
    nice d = linear_step(&b, lo, hi, target);

    b.nfrac = d.e < 0 ? -d.e : 0;
    if (fmax(fabs(lo), fabs(hi)) >= PLAIN_MAX || nice_value(d) < PLAIN_MIN)
        b.style = LAB_SCI;
    emit_fitting(&b, emit_linear, &d);
    if (b.full)
        return vg_error_set(err, VG_ENUMERIC, "axis [%g, %g] needs more than %d ticks", lo, hi,
                            VG_TICKS_MAX);
    return VG_OK;
}

vg_status vg_ticks_linear(double lo, double hi, int target, vg_ticks *t, vg_error *err)
{
    vg_status st = check_limits(lo, hi, target, err);

    t->n = 0;
    if (st != VG_OK)
        return st;
    return linear_ticks(lo, hi, target, t, err);
}

/* ---- log axes ------------------------------------------------------- */

/* The smallest k with 10^k >= x (x > 0). */
static int decade_ceil(double x)
{
    int k = decade_of(x);

    return pow10_int(k) < x ? k + 1 : k;
}

/* How many multiples of the stride s (>= 1) lie in [klo, khi]. */
static int stride_count(int klo, int khi, nice s)
{
    double w = nice_value(s);

    return (int)(floor(khi / w) - ceil(klo / w)) + 1;
}

/* The decade stride (1, 2, 5, 10, 20 ... decades): the smallest that gives
 * at most target labels, unless that leaves fewer than two. */
static nice decade_stride(int klo, int khi, int target)
{
    nice s = {1, 0}, prev = s;

    while (stride_count(klo, khi, s) > target) {
        prev = s;
        s = nice_coarser(s);
    }
    return stride_count(klo, khi, s) >= 2 ? s : prev;
}

/* Labelled decades at multiples of the stride.  Minor ticks: 2..9 x 10^k
 * for a stride of one decade, otherwise the decades at the next finer
 * stride that divides it (as minor_step). */
static void emit_decades(builder *b, const void *arg, int with_minor)
{
    nice s = *(const nice *)arg, f;
    int ratio, k, m;
    int klo = decade_of(b->lo), khi = decade_of(b->hi);
    int w = (int)nice_value(s), wf;

    f = minor_step(s, &ratio);
    wf = s.e == 0 && s.m == 1 ? 0 : (int)nice_value(f);
    for (k = klo; k <= khi && !b->full; k++) {
        if (k % w == 0)
            put(b, 1, k, 1);
        else if (with_minor && wf > 0 && k % wf == 0)
            put(b, 1, k, 0);
        for (m = 2; m <= 9 && with_minor && wf == 0; m++)
            put(b, m, k, 0);
    }
}

/* 1, 2 and 5 x 10^k labelled, the other digits 3, 4, 6..9 x 10^k minor. */
static void emit_125(builder *b, const void *arg, int with_minor)
{
    int k, m, khi = decade_of(b->hi);

    (void)arg;
    for (k = decade_of(b->lo); k <= khi && !b->full; k++)
        for (m = 1; m <= 9; m++) {
            int major = m == 1 || m == 2 || m == 5;
            if (major || with_minor)
                put(b, m, k, major);
        }
}

/* How many 1-2-5 values lie in the window. */
static int count_125(const builder *b)
{
    static const int m125[3] = {1, 2, 5};
    int k, i, n = 0, khi = decade_of(b->hi);

    for (k = decade_of(b->lo); k <= khi; k++)
        for (i = 0; i < 3; i++) {
            double v = dec_value(m125[i], k);
            n += v >= b->lo && v <= b->hi;
        }
    return n;
}

/* Decades when the axis spans DECADE_SPAN_MIN decades or more, or when the
 * 1-2-5 values would exceed target while two decades fit; 1-2-5 steps for
 * a shorter axis; and for an axis too short even for two 1-2-5 values
 * (15..25 holds only 20) Heckbert's linear ticks, which on so short a span
 * are as good as any. */
static vg_status log_ticks(double lo, double hi, int target, vg_ticks *t, vg_error *err)
{
    builder b = {t, lo * (1.0 - END_TOL), hi * (1.0 + END_TOL), LAB_MINIMAL, 0, 0};
    int klo = decade_ceil(b.lo), khi = decade_of(b.hi);
    int two_decades = khi - klo + 1 >= 2;
    int by_decades = two_decades && log10(b.hi / b.lo) >= DECADE_SPAN_MIN;
    int n125 = by_decades ? 0 : count_125(&b);

    if (by_decades || (two_decades && n125 > target)) {
        nice s = decade_stride(klo, khi, target);
        b.style = LAB_DECADE;
        emit_fitting(&b, emit_decades, &s);
    } else if (n125 >= 2) {
        if (lo < PLAIN_MIN || hi >= PLAIN_MAX)
            b.style = LAB_SCI;
        emit_fitting(&b, emit_125, NULL);
    } else {
        return linear_ticks(lo, hi, target, t, err);
    }
    if (b.full)
        return vg_error_set(err, VG_ENUMERIC, "log axis [%g, %g] needs more than %d ticks", lo, hi,
                            VG_TICKS_MAX);
    return VG_OK;
}

vg_status vg_ticks_log(double lo, double hi, int target, vg_ticks *t, vg_error *err)
{
    vg_status st = check_limits(lo, hi, target, err);

    t->n = 0;
    if (st != VG_OK)
        return st;
    if (!(lo > 0.0))
        return vg_error_set(err, VG_ENUMERIC, "log axis 'lo' must be > 0 (got %g)", lo);
    if (lo < ABS_MIN)
        return vg_error_set(err, VG_ENUMERIC, "log axis 'lo' must be at least %g (got %g)",
                            ABS_MIN, lo);
    return log_ticks(lo, hi, target, t, err);
}
