/*
 * The rate kernel (see vg_rate.h): Marcus-Levich-Jortner rates of one point,
 * the thermal and frozen vibronic weights ln W_n, and ln I_n(x) in every
 * range the weights need.  Called by the sweep engine, the point command and
 * the tests.  Everything is a natural log; no rate is ever formed in linear
 * form except as a ratio to the largest term of a sum.
 *
 * Pure: no I/O, no allocation, no static state (the loader's choice of the
 * lanes' build, AVX-512, AVX2 or baseline, is made once at start-up).  GSL reports an underflow of
 * gsl_sf_bessel_In_scaled_e through its status (which is checked and answered
 * by the asymptotic branch), so the caller must have switched GSL's abort
 * handler off (main calls gsl_set_error_handler_off() once).
 *
 * Channel window (docs/theory.md, "Channel window"): a_n = ln W_n + ln G_n is
 * concave in n, so the terms are unimodal.  Two paths compute the sums:
 *   - the window path (docs/theory.md 4.2a), which nearly every point of a
 *     sweep takes: the peak by a short walk, a fixed window of K channels
 *     each side (K from the row's curvature and the tolerance), terms as
 *     products of cached step ratios, four gaps at a time in vector lanes;
 *   - the log path (4.2) for the rest: the peak by walking or bisection,
 *     terms as exps of differences, each side stopped when the geometric
 *     bound on its tail falls below tol/4 of the sum so far.
 * Which path a point takes depends on its own inputs only, and a point
 * gives the same bits alone or in a row.
 *
 * Cost (docs/performance.md): on a sweep the weights and step ratios come
 * from the caller's caches, so a point costs, in vector lanes, one exp, a
 * few multiplications per channel of its window and two logs.
 */
#include <float.h>
#include <limits.h>
#include <math.h>
#include <stdint.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_bessel.h>
#include <gsl/gsl_sf_gamma.h>

#include "vg_const.h"
#include "vg_rate.h"

/* Largest |n| the kernel sums over.  Accepted inputs reach |n| of a few 10^4
 * (|gap - reorganization| / mode <= 6000 plus the window's width at 1 meV,
 * 5000 K); the Bessel branches are verified against mpmath up to n = 1e5. */
#define CHANNEL_LIMIT 100000L

/* 2^-54, a quarter of DBL_EPSILON, below half an ulp of any x >= 1: a
 * term this much smaller than a sum >= 1 does not change the rounded sum. */
#define HALF_ULP (0.25 * DBL_EPSILON)

/* Steps the peak search walks before it bisects instead. */
#define PEAK_WALK 8

/* Which form a value of ln I_n(x) comes in (so that callers can fold the
 * large leading term analytically instead of cancelling it numerically). */
typedef enum {
    LNI_POWER,  /* ln I_n = n ln(x/2) + rest   (power series) */
    LNI_SCALED, /* ln I_n = x + rest           (GSL, e^-x I_n) */
    LNI_FULL    /* ln I_n = rest               (uniform asymptotic) */
} lni_form;

typedef struct {
    lni_form form;
    double rest;
} lni_parts;

/* One point's channel sequence a_n = ln W_n - (d - n hbar omega)^2 / (4 lam kT). */
typedef struct {
    vg_rate_mode *m;
    double d;       /* gap - reorganization, meV */
    double inv4lkt; /* 1 / (4 reorganization k_B T), meV^-2 */
    long nmin;      /* lowest channel with a nonzero weight */
} chan_seq;

/* ln n!, from GSL's table (n <= 170) or ln Gamma; NaN if GSL fails (the
 * final finiteness check of vg_rate_eval turns that into an error). */
static double ln_fact(long n)
{
    gsl_sf_result r;

    if (n < 0 || (unsigned long)n > UINT_MAX)
        return NAN;
    if (gsl_sf_lnfact_e((unsigned int)n, &r) != GSL_SUCCESS)
        return NAN;
    return r.val;
}

/* ln(1 - e^-y) for y > 0, accurate at both ends (y -> 0 and y -> inf). */
static double ln_one_minus_exp(double y)
{
    return log(-expm1(-y));
}

/* Power series of I_n (A&S 9.6.10) without its leading (x/2)^n:
 * ln sum_k (x^2/4)^k / (k! (n+1)_k) - ln n!.  Used only for x^2 < n + 1, where
 * the ratio of successive terms is below 1/4, so stopping at a term below
 * DBL_EPSILON/2 of the sum leaves a tail below a third of that. */
static double series_rest(long n, double x)
{
    double q = 0.25 * x * x;
    double term = 1.0;
    double sum = 0.0;

    for (long k = 1; term > 0.5 * DBL_EPSILON * (1.0 + sum); k++) {
        term *= q / ((double)k * (double)(n + k));
        sum += term;
    }
    return log1p(sum) - ln_fact(n);
}

/* u_k(t) of the uniform expansion, A&S 9.3.9 and 9.3.10. */
static double debye_sum(double t, double nu)
{
    double t2 = t * t;
    double u1 = t * (3.0 - 5.0 * t2) / 24.0;
    double u2 = t2 * (81.0 + t2 * (-462.0 + t2 * 385.0)) / 1152.0;
    double u3 = t * t2 * (30375.0 + t2 * (-369603.0 + t2 * (765765.0
                - t2 * 425425.0))) / 414720.0;
    double u4 = t2 * t2 * (4465125.0 + t2 * (-94121676.0 + t2 * (349922430.0
                + t2 * (-446185740.0 + t2 * 185910725.0)))) / 39813120.0;

    return 1.0 + (u1 + (u2 + (u3 + u4 / nu) / nu) / nu) / nu;
}

/* ln I_nu(nu z), uniform asymptotic expansion for large order, A&S 9.7.7:
 * I_nu(nu z) ~ e^{nu eta} / sqrt(2 pi nu) / (1+z^2)^{1/4} sum_k u_k(t)/nu^k,
 * t = 1/sqrt(1+z^2), eta = sqrt(1+z^2) + ln(z / (1 + sqrt(1+z^2))).
 * Reached only for n >~ 280 (below that GSL's scaled value is normal), where
 * the first omitted term u_5/nu^5 is below 1e-12. */
static double debye_ln_i(long n, double ln_x)
{
    double nu = (double)n;
    double ln_z = ln_x - log(nu);
    double root = hypot(1.0, exp(ln_z));
    double eta = root + ln_z - log1p(root);

    return nu * eta - 0.5 * log(2.0 * VG_PI * nu) - 0.5 * log(root)
           + log(debye_sum(1.0 / root, nu));
}

/* GSL's e^-x I_n(x) as ln; 0 when GSL fails or its value is not normal
 * (underflow, where the asymptotic branch takes over). */
static int scaled_ln_i(long n, double x, double *rest)
{
    gsl_sf_result r;

    if (n > INT_MAX)
        return 0;
    if (gsl_sf_bessel_In_scaled_e((int)n, x, &r) != GSL_SUCCESS)
        return 0;
    if (!isnormal(r.val) || r.val <= 0.0)
        return 0;
    *rest = log(r.val);
    return 1;
}

/* ln I_n(x), n >= 0, in the branch that is accurate there. */
static lni_parts ln_bessel_parts(long n, double x, double ln_x)
{
    lni_parts p;

    if (x * x < (double)n + 1.0) {
        p.form = LNI_POWER;
        p.rest = series_rest(n, x);
    } else if (scaled_ln_i(n, x, &p.rest)) {
        p.form = LNI_SCALED;
    } else {
        p.form = LNI_FULL;
        p.rest = debye_ln_i(n, ln_x);
    }
    return p;
}

double vg_rate_ln_bessel_i(long n, double x, double ln_x)
{
    long a = n < 0 ? -n : n; /* I_{-n} = I_n for integer n */
    lni_parts p = ln_bessel_parts(a, x, ln_x);

    if (p.form == LNI_SCALED)
        return x + p.rest;
    if (p.form == LNI_FULL || a == 0)
        return p.rest;
    return (double)a * (ln_x - log(2.0)) + p.rest;
}

/* Thermal weight, W_n = exp(-S coth(b/2)) exp(n b/2) I_|n|(S / sinh(b/2))
 * (Jortner 1976).  The large terms are combined analytically per branch:
 *   power:  n b/2 + |n| ln(x/2) = |n| (ln S - ln(1 - e^-b)) - [n < 0] |n| b
 *   scaled: -S coth(b/2) + x    = -S tanh(b/4)
 * so that at 1 K nothing of size b ~ 1e6 is cancelled. */
static double ln_weight_thermal(const vg_rate_mode *m, long n)
{
    long a = n < 0 ? -n : n;
    double da = (double)a;
    lni_parts p = ln_bessel_parts(a, m->x, m->ln_x);

    if (p.form == LNI_POWER) {
        double lead = a == 0 ? 0.0 : da * (m->ln_s - ln_one_minus_exp(m->beta));
        double down = n < 0 ? da * m->beta : 0.0;
        return m->c0 + lead - down + p.rest;
    }
    if (p.form == LNI_SCALED)
        return -m->S * tanh(0.25 * m->beta) + 0.5 * (double)n * m->beta + p.rest;
    return m->c0 + 0.5 * (double)n * m->beta + p.rest;
}

double vg_rate_ln_weight(const vg_rate_mode *m, long n)
{
    if (m->S == 0.0)
        return n == 0 ? 0.0 : -HUGE_VAL;
    if (m->stats == VG_STATS_FROZEN) /* Poisson: e^-S S^n / n! */
        return n < 0 ? -HUGE_VAL : m->c0 + (double)n * m->ln_s - ln_fact(n);
    return ln_weight_thermal(m, n);
}

double vg_rate_ln_weight_cached(vg_rate_mode *m, long n)
{
    size_t i;

    if (m->tab_len == 0 || n < m->tab_lo)
        return vg_rate_ln_weight(m, n);
    i = (size_t)(n - m->tab_lo);
    if (i >= m->tab_len)
        return vg_rate_ln_weight(m, n);
    if (!m->tab_set[i]) {
        m->tab[i] = vg_rate_ln_weight(m, n);
        m->tab_set[i] = 1;
    }
    return m->tab[i];
}

void vg_rate_mode_attach_table(vg_rate_mode *m, long lo, size_t len,
                               double *tab, unsigned char *set)
{
    m->tab_lo = lo;
    m->tab_len = len;
    m->tab = tab;
    m->tab_set = set;
    for (size_t i = 0; i < len; i++)
        set[i] = 0;
}

/* The checks of vg_rate_mode_init, one message per way to fail. */
static vg_status mode_check(vg_mode_statistics stats, double S, double mode,
                            double T, vg_error *err)
{
    if (stats != VG_STATS_THERMAL && stats != VG_STATS_FROZEN)
        return vg_error_set(err, VG_ENUMERIC,
                            "'mode_statistics' must be thermal or frozen (got code %d)", (int)stats);
    if (!isfinite(S) || S < 0.0)
        return vg_error_set(err, VG_ENUMERIC,
                            "'huang_rhys' must be a finite number >= 0 (got %g)", S);
    if (!isfinite(mode) || mode <= 0.0)
        return vg_error_set(err, VG_ENUMERIC,
                            "'mode' must be a finite energy > 0 meV (got %g meV)", mode);
    if (!isfinite(T) || T <= 0.0)
        return vg_error_set(err, VG_ENUMERIC,
                            "'temperature' must be finite and > 0 K (got %g K)", T);
    if (!isnormal(VG_KB_MEV * T) || !isfinite(mode / (VG_KB_MEV * T)))
        return vg_error_set(err, VG_ENUMERIC,
                            "'mode' / k_B 'temperature' is not a finite number "
                            "(mode %g meV, temperature %g K)", mode, T);
    return VG_OK;
}

vg_status vg_rate_mode_init(vg_rate_mode *m, vg_mode_statistics stats,
                            double huang_rhys, double mode_meV, double temperature_K,
                            vg_error *err)
{
    vg_status st = mode_check(stats, huang_rhys, mode_meV, temperature_K, err);
    double h;

    if (!m)
        return vg_error_set(err, VG_ENUMERIC, "rate kernel called without a mode record");
    if (st != VG_OK)
        return st;
    m->stats = stats;
    m->S = huang_rhys;
    m->mode = mode_meV;
    m->kT = VG_KB_MEV * temperature_K;
    m->beta = mode_meV / m->kT;
    m->inv_mode = 1.0 / mode_meV;
    h = 0.5 * m->beta;
    m->ln_s = log(huang_rhys); /* -inf for S == 0, never used then */
    /* ln sinh h = h - ln 2 + ln(1 - e^-2h): finite for h up to DBL_MAX */
    m->ln_x = m->ln_s - (h - log(2.0) + ln_one_minus_exp(2.0 * h));
    m->x = huang_rhys == 0.0 ? 0.0 : exp(m->ln_x);
    m->c0 = stats == VG_STATS_FROZEN ? -huang_rhys : -huang_rhys / tanh(h);
    m->tab_lo = 0;
    m->tab_len = 0;
    m->tab = NULL;
    m->tab_set = NULL;
    return VG_OK;
}

/* ln of the golden-rule prefactor (2 pi / hbar) V^2 (4 pi lam kT)^-1/2 in
 * s^-1, with V, lam, kT converted from meV to eV (factor M = 1000):
 *   ln(2 pi / hbar) - ln M - ln(4 pi) / 2 + ln(V^2 / sqrt(lam kT)),
 * one log of the meV quantities where V^2 / sqrt(lam kT) is a normal double
 * (the constant part folds at compile time), one log per factor otherwise. */
static double ln_prefactor(double coupling, double reorg, double kT)
{
    double ln_mev = log(VG_MEV_PER_EV);
    double y = coupling * coupling / sqrt(reorg * kT);
    double ln_v, ln_var;

    if (isnormal(y))
        return log(2.0 * VG_PI / VG_HBAR_EVS) - ln_mev - 0.5 * log(4.0 * VG_PI) + log(y);
    ln_v = log(coupling) - ln_mev;
    ln_var = log(4.0 * VG_PI) + log(reorg) + log(kT) - 2.0 * ln_mev;
    return log(2.0 * VG_PI / VG_HBAR_EVS) + 2.0 * ln_v - 0.5 * ln_var;
}

/* ln of the Marcus Gaussian of channel n, -(d - n hbar omega)^2 / (4 lam kT). */
static double ln_gauss(double d, double n_mode, double inv4lkt)
{
    double u = d - n_mode;

    return -u * u * inv4lkt;
}

/* ln W_n through the cache: the filled-entry case inline (it is the hot
 * path of a sweep), everything else through vg_rate_ln_weight_cached.  The
 * index is formed in unsigned arithmetic so that n < tab_lo wraps to a value
 * past the table instead of overflowing. */
static inline double ln_w(vg_rate_mode *m, long n)
{
    size_t i = (size_t)((unsigned long)n - (unsigned long)m->tab_lo);

    if (i < m->tab_len && m->tab_set[i])
        return m->tab[i];
    return vg_rate_ln_weight_cached(m, n);
}

static inline double chan_a(chan_seq *s, long n)
{
    return ln_w(s->m, n) + ln_gauss(s->d, (double)n * s->m->mode, s->inv4lkt);
}

static double chan_step(chan_seq *s, long n)
{
    return chan_a(s, n + 1) - chan_a(s, n);
}

/* Bracket of the peak: the smallest n with a_{n+1} <= a_n lies in [*lo, *hi].
 * Starts between the weight peak (~S) and the Gaussian centre d/mode (the
 * maximum of a sum of two concave sequences lies between theirs) and widens
 * by doubling steps should rounding have put it just outside. */
static int peak_bracket(chan_seq *s, double centre, long *lo, long *hi)
{
    double S = s->m->S;
    long l = (long)floor(centre < S ? centre : S);
    long h = (long)ceil(centre > S ? centre : S);

    l = l < s->nmin ? s->nmin : l;
    h = h < s->nmin ? s->nmin : h;
    for (long step = 1; chan_step(s, h) > 0.0; step *= 2) {
        l = h + 1;
        h += step;
        if (h > CHANNEL_LIMIT)
            return 0;
    }
    for (long step = 1; l > s->nmin && chan_step(s, l - 1) <= 0.0; step *= 2) {
        h = l - 1;
        l = l - step < s->nmin ? s->nmin : l - step;
        if (l < -CHANNEL_LIMIT)
            return 0;
    }
    *lo = l;
    *hi = h;
    return 1;
}

/* The peak p and its neighbours: a[0] = a_{p-1} (-inf below nmin), a[1] =
 * a_p, a[2] = a_{p+1}. */
typedef struct {
    long p;
    double a[3];
} chan_peak;

static void peak_fill(chan_seq *s, chan_peak *pk)
{
    pk->a[0] = pk->p > s->nmin ? chan_a(s, pk->p - 1) : -HUGE_VAL;
    pk->a[1] = chan_a(s, pk->p);
    pk->a[2] = chan_a(s, pk->p + 1);
}

/* Largest term: bisection on the sign of a_{n+1} - a_n, which never increases
 * with n because a_n is concave (docs/theory.md). */
static int bisect_peak(chan_seq *s, double centre, chan_peak *pk)
{
    long lo, hi;

    if (!peak_bracket(s, centre, &lo, &hi))
        return 0;
    while (lo < hi) {
        long mid = lo + (hi - lo) / 2;
        if (chan_step(s, mid) <= 0.0)
            hi = mid;
        else
            lo = mid + 1;
    }
    pk->p = lo;
    peak_fill(s, pk);
    return 1;
}

/* The same peak (the smallest n with a_{n+1} <= a_n) by walking uphill from
 * channel g, at most PEAK_WALK steps; 0 if it is farther.  On a sweep the
 * peak is nearly always within a step or two of the Gaussian centre, so the
 * walk costs the peak's three terms and rarely more, where bisection costs
 * a dozen; the terms are reused by the sums. */
static int walk_peak(chan_seq *s, long g, chan_peak *pk)
{
    double lo, mid = chan_a(s, g), hi = chan_a(s, g + 1);

    if (hi > mid) { /* a_{g+1} > a_g: the peak lies above g */
        int k = 0;
        do {
            lo = mid;
            mid = hi;
            hi = chan_a(s, ++g + 1);
        } while (hi > mid && ++k < PEAK_WALK);
        if (hi > mid)
            return 0;
    } else {
        int k = 0;
        while (g > s->nmin && (lo = chan_a(s, g - 1)) >= mid) {
            if (++k > PEAK_WALK)
                return 0;
            hi = mid;
            mid = lo;
            g--;
        }
        lo = g > s->nmin ? lo : -HUGE_VAL;
    }
    pk->p = g;
    pk->a[0] = lo;
    pk->a[1] = mid;
    pk->a[2] = hi;
    return 1;
}

/* The peak: walked from the integer part of the Gaussian centre, bisected
 * when the walk is too long. */
static int find_peak(chan_seq *s, double centre, chan_peak *pk)
{
    long g = (long)centre; /* |centre| <= CHANNEL_LIMIT: checked by the caller */

    g = g < s->nmin ? s->nmin : g;
    return walk_peak(s, g, pk) || bisect_peak(s, centre, pk);
}

/* Running state of the assisted sum: terms t_n = exp(a_n - a_ref). */
typedef struct {
    double a_ref; /* a_q, the largest assisted term */
    double tol4;  /* a quarter of the relative tolerance */
    double sum;   /* sum of t_n over the assisted channels so far */
    double t0;    /* t_0 once a side has passed n = 0, else -1 */
} chan_sum;

/* Add t_n for n = start, start+dir, ... (a_start = a_{start} given), except
 * n = 0 (the elastic channel), whose t_0 is kept in acc->t0.  Once the step
 * ratio r = t_n / t_{n-dir} is below 1, every later ratio is at most r
 * (log-concavity), so the rest of the side is at most
 * t_n r / (1 - r) = t_n^2 / (t_{n-dir} - t_n); stop when that is below
 * tol4 * sum.  Tested without a division and so that it also stops when
 * t_n = 0 or the sum is NaN (a corrupted mode record, which the final guard
 * reports).  One exp per term.  The upward side may not pass CHANNEL_LIMIT
 * (returns 0); the downward one ends at nmin.  *last is the last channel
 * added (start - dir if none). */
static inline int sum_side(chan_seq *s, chan_sum *acc, long start, long dir,
                           double a_start, long *last)
{
    long end = dir > 0 ? CHANNEL_LIMIT : s->nmin;
    double t_prev = 1.0; /* t of the start's neighbour, the reference term */
    double a = a_start;
    long n = start;

    if (dir > 0 ? start > end : start < end) {
        *last = start - dir;
        return dir < 0;
    }
    for (;; n += dir, a = chan_a(s, n)) {
        double t = exp(a - acc->a_ref);
        int done;

        if (n != 0)
            acc->sum += t;
        else
            acc->t0 = t;
        done = !(t * t > acc->tol4 * acc->sum * (t_prev - t));
        if (done || n == end) {
            *last = n;
            return done || dir < 0;
        }
        t_prev = t;
    }
}

/* ln of the Franck-Condon total W_0 G_0 + assisted sum, as
 * a_q + ln(sum + t_0) with t_0 = exp(a_0 - a_q): from the sum if a side
 * passed n = 0 (it always does when the peak is n = 0), else computed, which
 * is safe because then a_0 <= a_q.  Where one part is below half an ulp of
 * the other (ratio below 2^-54; the sum is at least 1), the rounded sum is
 * the larger part, so its log is the total, and no exp or log is spent;
 * that is also what keeps a t_0 beyond DBL_MAX out. */
static double ln_total(const vg_rates *out, const chan_sum *acc)
{
    double t0;

    if (out->ln_fc_elastic - acc->a_ref < log(HALF_ULP)) /* folded at compile time */
        return out->ln_fc_assisted;
    t0 = acc->t0 >= 0.0 ? acc->t0 : exp(out->ln_fc_elastic - acc->a_ref);
    if (!(t0 * HALF_ULP <= acc->sum))
        return out->ln_fc_elastic;
    return acc->a_ref + log(acc->sum + t0);
}

/* Sum both sides outward from the largest assisted term q, given the peak;
 * the window into *lo, *hi. */
static int sum_window(chan_seq *s, const chan_peak *pk, chan_sum *acc, long *lo, long *hi)
{
    long q = pk->p;
    double a_up = pk->a[2], a_down = pk->a[0];

    acc->a_ref = pk->a[1];
    if (q == 0) { /* the largest assisted term is a neighbour of the elastic peak */
        q = pk->a[2] >= pk->a[0] ? 1 : -1;
        acc->a_ref = q > 0 ? pk->a[2] : pk->a[0];
        a_up = q > 0 ? chan_a(s, 2) : pk->a[1];
        a_down = q > 0 ? pk->a[1] : chan_a(s, -2);
    }
    if (!sum_side(s, acc, q + 1, 1, a_up, hi) || !sum_side(s, acc, q - 1, -1, a_down, lo))
        return 0;
    *lo = *lo < q ? *lo : q;
    *hi = *hi > q ? *hi : q;
    return 1;
}

/* ln of the assisted part sum_{n != 0} W_n G_n, the total, and the channel
 * window. */
static vg_status assisted_sum(chan_seq *s, double tol, vg_rates *out, vg_error *err)
{
    chan_peak pk;
    chan_sum acc = {0.0, 0.25 * tol, 1.0, -1.0};
    double centre = s->d / s->m->mode;

    if (!(fabs(centre) <= (double)CHANNEL_LIMIT) || s->m->S > (double)CHANNEL_LIMIT
        || !find_peak(s, centre, &pk) || !sum_window(s, &pk, &acc, &out->n_lo, &out->n_hi))
        return vg_error_set(err, VG_ENUMERIC,
                            "the channel window needs |n| > %ld quanta of 'mode' "
                            "(gap - reorganization %g meV, mode %g meV, huang_rhys %g)",
                            CHANNEL_LIMIT, s->d, s->m->mode, s->m->S);
    out->ln_fc_assisted = acc.a_ref + log(acc.sum);
    out->ln_fc_total = ln_total(out, &acc);
    out->n_peak = pk.p;
    return VG_OK;
}

/* The checks of vg_rate_row_begin, one message per way to fail. */
static vg_status row_check(const vg_rate_row *row, const vg_rate_mode *m, double reorg,
                           double coupling, vg_error *err)
{
    if (!m || !row)
        return vg_error_set(err, VG_ENUMERIC, "rate kernel called without a mode or row record");
    if (!isfinite(reorg) || reorg <= 0.0)
        return vg_error_set(err, VG_ENUMERIC,
                            "'reorganization' must be finite and > 0 meV (got %g meV)", reorg);
    if (!isfinite(coupling) || coupling < 0.0)
        return vg_error_set(err, VG_ENUMERIC,
                            "'electronic_coupling' must be finite and >= 0 meV (got %g meV)",
                            coupling);
    if (!(reorg * m->kT > 0.0) || !isnormal(4.0 * reorg * m->kT))
        return vg_error_set(err, VG_ENUMERIC,
                            "4 'reorganization' k_B T is not a normal number "
                            "(reorganization %g meV, k_B T %g meV)", reorg, m->kT);
    return VG_OK;
}

/* The checks of vg_rate_eval_row. */
static vg_status point_check(const vg_rate_mode *m, const vg_rate_row *row, double gap,
                             double tol, const vg_rates *out, vg_error *err)
{
    if (!m || !row || !out)
        return vg_error_set(err, VG_ENUMERIC, "rate kernel called without a mode or result record");
    if (!isfinite(gap))
        return vg_error_set(err, VG_ENUMERIC, "'gap' must be a finite energy in meV (got %g)", gap);
    if (!isfinite(tol) || tol <= 0.0 || tol >= 1.0)
        return vg_error_set(err, VG_ENUMERIC,
                            "'tolerance' must lie strictly between 0 and 1 (got %g)", tol);
    return VG_OK;
}

/* Fill the rate fields from the V- and prefactor-free logs. */
static void finish_rates(vg_rates *out, double ln_p, int coupling_zero)
{
    out->coupling_zero = coupling_zero;
    out->ln_k_elastic = coupling_zero ? -HUGE_VAL : ln_p + out->ln_fc_elastic;
    out->ln_k_assisted = coupling_zero ? -HUGE_VAL : ln_p + out->ln_fc_assisted;
    out->ln_k_total = coupling_zero ? -HUGE_VAL : ln_p + out->ln_fc_total;
    out->ln_k_bare = coupling_zero ? -HUGE_VAL : ln_p + out->ln_fc_bare;
}

/* No NaN and no +inf may leave the kernel; -inf only where a flag says the
 * rate is exactly zero. */
static int rates_valid_each(const vg_rates *r)
{
    int fc = isfinite(r->ln_fc_elastic) && isfinite(r->ln_fc_total)
             && isfinite(r->ln_fc_bare)
             && (r->assisted_zero || isfinite(r->ln_fc_assisted));
    int k = r->coupling_zero
            || (isfinite(r->ln_k_elastic) && isfinite(r->ln_k_total)
                && isfinite(r->ln_k_bare)
                && (r->assisted_zero || isfinite(r->ln_k_assisted)));
    return fc && k;
}

/* The same, with a fast path for the usual case: with neither flag set every
 * value must be finite, and a sum of finite logs (far below 1e300 in
 * magnitude) is finite exactly when each term is.  The flags come from the
 * caller's locals: reading the two int fields just stored as one 8-byte load
 * (which is what the compiler made of it) stalls store forwarding. */
static int rates_valid(const vg_rates *r, int coupling_zero, int assisted_zero)
{
    if (!coupling_zero && !assisted_zero
        && isfinite(r->ln_fc_elastic + r->ln_fc_assisted + r->ln_fc_total + r->ln_fc_bare
                    + r->ln_k_elastic + r->ln_k_assisted + r->ln_k_total + r->ln_k_bare))
        return 1;
    return rates_valid_each(r);
}

/* ---- The window path ----------------------------------------------------
 * Along the channels, t_{n+1} / t_n = exp(a_{n+1} - a_n) = q_n A with
 *   q_n = exp(ln W_{n+1} - ln W_n - (2n+1) c hbar omega^2),  c = 1 / (4 lam kT),
 *   A   = exp(2 c hbar omega (gap - lam)),
 * (expand the square in a_n).  q_n depends on the row only, A on the gap
 * only.  The sums run over a fixed window n in [p - K, p + K] about the peak
 * p (clipped at the lowest channel with a weight), where K depends on the
 * row and the tolerance only: a_n is concave with second differences at most
 * -2 c hbar omega^2, so a_{p+-k} - a_p <= -c hbar omega^2 k (k - 1), and K is
 * the smallest k whose left-out tail bound
 *   sum_{j > K} e^{-c hbar omega^2 j (j-1)} <= e^{-C K (K+1)} / (1 - e^{-2 C (K+1)})
 * (C = c hbar omega^2) is below tol/4 (docs/theory.md, "Channel window").
 * Every term is formed as a product of ratios walking outward from the peak,
 * so each is at most 1 and their relative error grows by about two ulps a
 * step.
 *
 * LANES (four) gaps of a row are taken together as the lanes of GCC vector
 * types.  Every operation is lane-wise and exp and log of the lanes are our
 * own, so a lane's bits do not depend on the other lanes: a single point is
 * the same code with its gap in every lane, and vg_rate_eval,
 * vg_rate_eval_row and vg_rate_eval_gaps agree bit for bit.  Lanes go
 * together only when each would walk to the same peak alone (lanes_reach)
 * and so take the same window; otherwise lanes_again takes the group again
 * as two groups, and lane by lane where those still disagree.
 *
 * The path declines a point (the log path above takes it) when a factor
 * leaves [e^-LIN_LIMIT, e^LIN_LIMIT] (so that no product can overflow), when
 * the peak is more than PEAK_WALK steps from the Gaussian centre, when K
 * would exceed VG_RATE_WINDOW_MAX, or when the assisted sum relative to an
 * elastic peak is too small to keep its digits. */
#define LIN_LIMIT 300.0
#define LIN_SUM_MIN 0x1p-900
#define LANES 4 /* lane_bits is written for four */
#define ALL_LANES ((1 << LANES) - 1)

/* Every function that takes or returns a vector is always inlined: a call
 * between the AVX2 (or AVX-512) build and a baseline one would pass the vector in
 * different places (the ABI change GCC warns about, silenced here because
 * no such call exists). */
#pragma GCC diagnostic ignored "-Wpsabi"
typedef double vd __attribute__((vector_size(8 * LANES)));
typedef long long vi __attribute__((vector_size(8 * LANES)));
typedef unsigned long long vu __attribute__((vector_size(8 * LANES)));

/* The lanes' code is built three times, for x86-64-v4 (AVX-512, still four
 * lanes: its compare masks and 32 registers took 0.97 of the AVX2 version's
 * time), for AVX2 and for baseline x86-64, and the best one the CPU
 * supports is chosen when the program starts.  All run the same IEEE
 * operations in the same order (no fused multiply-add: the Makefile passes
 * -ffp-contract=off), so they give the same bits; tests/scripts/lanes.sh
 * compares the usual build and the one without the x86-64-v4 version (make
 * AVX2=1) with the baseline-only build (make BASELINE=1). */
#if defined(__x86_64__) && defined(__GNUC__) && !defined(__clang__) && !defined(VG_NO_CLONES)
#ifdef VG_NO_V4_CLONE
#define VG_LANES_CLONES __attribute__((target_clones("avx2", "default")))
#else
#define VG_LANES_CLONES __attribute__((target_clones("arch=x86-64-v4", "avx2", "default")))
#endif
#else
#define VG_LANES_CLONES
#endif

/* ln 2 in two parts, the first with 21 trailing zero bits so that k ln2_hi is
 * exact for |k| < 2^21 (Cody & Waite's reduction; the split of fdlibm's
 * e_exp.c, common practice). */
#define LN2_HI 0x1.62e42fee00000p-1
#define LN2_LO 0x1.a39ef35793c76p-33

static inline __attribute__((always_inline)) vd vsplat(double x)
{
    return (vd){x, x, x, x}; /* not {0} + x, which must keep -0 + 0 = +0 */
}

static inline __attribute__((always_inline)) vu usplat(unsigned long long x)
{
    return (vu){x, x, x, x};
}

/* a > b lane by lane, as all ones or zeros (the kernel's operands are never
 * NaN).  The AVX2 version is one comparison; the baseline compiler makes it
 * one scalar comparison a lane, which only the baseline-only build and
 * CPUs without AVX2 pay for. */
static inline __attribute__((always_inline)) vi vgt(vd a, vd b)
{
    return a > b;
}

/* a <= b lane by lane, as vgt. */
static inline __attribute__((always_inline)) vi vle(vd a, vd b)
{
    return a <= b;
}

/* |x| lane by lane (the sign bit cleared). */
static inline __attribute__((always_inline)) vd vabs(vd x)
{
    return (vd)((vu)x & usplat(0x7fffffffffffffffULL));
}

/* mask ? a : b, lane by lane (mask lanes are all ones or all zeros). */
static inline __attribute__((always_inline)) vd vsel(vi mask, vd a, vd b)
{
    return (vd)(((vi)a & mask) | ((vi)b & ~mask));
}

/* The lanes of mask that are set, as bits (lane i: bit i), and whether all
 * are: by two shuffles, not by reading each lane out. */
static inline __attribute__((always_inline)) int lane_bits(vi mask)
{
    vi b = mask & (vi){1, 2, 4, 8};

    b |= __builtin_shufflevector(b, b, 2, 3, 0, 1);
    b |= __builtin_shufflevector(b, b, 1, 0, 3, 2);
    return (int)b[0];
}

static inline __attribute__((always_inline)) int all_lanes(vi mask)
{
    return lane_bits(mask) == ALL_LANES;
}

/* e^x lane by lane for |x| <= 708 (the callers keep to that): x = k ln2 + r
 * with |r| <= ln2/2, e^r by its Taylor polynomial to r^13 (the first term
 * left out is below 2^-57), evaluated by Estrin's scheme, and 2^k formed in
 * the exponent bits.  Within 3 ulps (tests/test_lanes.c). */
static inline __attribute__((always_inline)) vd vexp(vd x)
{
    const vd shift = vsplat(0x1.8p52);
    vd kd = x * vsplat(0x1.71547652b82fep0) + shift; /* x / ln 2, rounded to an integer */
    vu k = (vu)kd - usplat(0x4338000000000000ULL);
    vd n = kd - shift;
    vd r = (x - n * vsplat(LN2_HI)) - n * vsplat(LN2_LO);
    vd r2 = r * r, r4 = r2 * r2, r8 = r4 * r4;
    vd p01 = vsplat(1.0) + r;
    vd p23 = vsplat(1.0 / 2.0) + r * vsplat(1.0 / 6.0);
    vd p45 = vsplat(1.0 / 24.0) + r * vsplat(1.0 / 120.0);
    vd p67 = vsplat(1.0 / 720.0) + r * vsplat(1.0 / 5040.0);
    vd p89 = vsplat(1.0 / 40320.0) + r * vsplat(1.0 / 362880.0);
    vd pab = vsplat(1.0 / 3628800.0) + r * vsplat(1.0 / 39916800.0);
    vd pcd = vsplat(1.0 / 479001600.0) + r * vsplat(1.0 / 6227020800.0);
    vd lo = (p01 + r2 * p23) + r4 * (p45 + r2 * p67);
    vd hi = (p89 + r2 * pab) + r4 * pcd;
    vu e = (k + 1023) << 52; /* unsigned: wraps instead of overflowing */

    return (lo + r8 * hi) * (vd)e;
}

/* ln m for m in [sqrt(1/2), sqrt(2)) given f = (m - 1) / (m + 1): 2 atanh f. */
static inline __attribute__((always_inline)) vd vlog_f(vd f)
{
    vd s = f * f, s2 = s * s, s4 = s2 * s2, s8 = s4 * s4;
    vd lo = ((vsplat(1.0) + s * vsplat(1.0 / 3.0))
             + s2 * (vsplat(1.0 / 5.0) + s * vsplat(1.0 / 7.0)))
            + s4 * ((vsplat(1.0 / 9.0) + s * vsplat(1.0 / 11.0))
                    + s2 * (vsplat(1.0 / 13.0) + s * vsplat(1.0 / 15.0)));
    vd hi = (vsplat(1.0 / 17.0) + s * vsplat(1.0 / 19.0)) + s2 * vsplat(1.0 / 21.0);

    return (f + f) * (lo + s8 * hi);
}

/* y = 2^e m with m in [sqrt(1/2), sqrt(2)), as vlog splits it. */
static inline __attribute__((always_inline)) vd vlog_split(vd y, vd *e)
{
    const vu mant = usplat(0x000fffffffffffffULL), one = usplat(0x3ff0000000000000ULL);
    vu b = (vu)y;
    vd m = (vd)((b & mant) | one);
    vi big = vgt(m, vsplat(0x1.6a09e667f3bcdp0)); /* sqrt 2 */
    vu ex = (b >> 52) - (vu)big;

    *e = ((vd)(ex | usplat(0x4330000000000000ULL)) - vsplat(0x1p52)) - vsplat(1023.0);
    return vsel(big, m * vsplat(0.5), m);
}

/* ln y lane by lane for normal y > 0: y = 2^e m, ln m = 2 atanh f with
 * f = (m - 1) / (m + 1), |f| <= 0.172, by its series to f^21 (the first
 * term left out is below 2^-60 of the sum), evaluated by Estrin's scheme in
 * s = f^2; e ln 2 in two parts.  Within 6 ulps (tests/test_lanes.c). */
static inline __attribute__((always_inline)) vd vlog(vd y)
{
    vd e, m = vlog_split(y, &e);

    return e * vsplat(LN2_HI)
           + (vlog_f((m - vsplat(1.0)) / (m + vsplat(1.0))) + e * vsplat(LN2_LO));
}

/* The smallest k >= 1 whose tail bound (above) is below tol/4, or 0 when
 * none up to VG_RATE_WINDOW_MAX is: then the log path takes the row. */
static int window_k(double c, double tol)
{
    double lim = log(0.25 * tol);

    for (int k = 1; k <= VG_RATE_WINDOW_MAX; k++) {
        double kk = (double)k;
        if (-c * kk * (kk + 1.0) - log1p(-exp(-2.0 * c * (kk + 1.0))) <= lim)
            return k;
    }
    return 0;
}

static vg_status row_init(vg_rate_row *row, const vg_rate_mode *m, double reorg,
                          double coupling, vg_error *err)
{
    vg_status st = row_check(row, m, reorg, coupling, err);

    if (st != VG_OK)
        return st;
    row->reorg = reorg;
    row->coupling = coupling;
    row->inv4lkt = 1.0 / (4.0 * reorg * m->kT);
    row->ln_p = coupling == 0.0 ? 0.0 : ln_prefactor(coupling, reorg, m->kT);
    row->two_c_mode = 2.0 * m->mode * row->inv4lkt;
    row->c_mode2 = m->mode * m->mode * row->inv4lkt;
    row->win_tol = 0.0;
    row->win_k = 0;
    row->w_lo = 1;
    row->w_hi = 0;
    row->w_ok = 0;
    row->mono_lo = 1;
    row->mono_hi = 0;
    row->p_set = 0;
    row->p_prev = 0;
    return VG_OK;
}

void vg_rate_row_attach(vg_rate_row *row, long lo, size_t len, double *q, double *qi,
                        unsigned *gen)
{
    row->q_lo = lo;
    row->q_len = len;
    row->q = q;
    row->qi = qi;
    row->q_gen = gen;
    row->gen = 0;
    for (size_t i = 0; i < len; i++)
        gen[i] = 0;
}

vg_status vg_rate_row_begin(vg_rate_row *row, const vg_rate_mode *m, double reorg_meV,
                            double coupling_meV, vg_error *err)
{
    vg_status st = row_init(row, m, reorg_meV, coupling_meV, err);

    if (st != VG_OK || row->q_len == 0)
        return st;
    if (++row->gen == 0) { /* wrapped: every stamp could be stale */
        for (size_t i = 0; i < row->q_len; i++)
            row->q_gen[i] = 0;
        row->gen = 1;
    }
    return VG_OK;
}

/* q_n and 1/q_n into q[0], q[1] from the formula, stored in the cache when
 * n lies in it; 0 if the step lies outside the linear range (or a weight is
 * not finite). */
static int q_fill(vg_rate_mode *m, vg_rate_row *row, long n, size_t i, double q[2])
{
    double lq = ln_w(m, n + 1) - ln_w(m, n) - row->c_mode2 * (double)(2 * n + 1);

    if (fabs(lq) <= LIN_LIMIT) {
        q[0] = exp(lq);
        q[1] = exp(-lq);
    } else {
        q[0] = q[1] = -1.0;
    }
    if (i < row->q_len) {
        row->q[i] = q[0];
        row->qi[i] = q[1];
        row->q_gen[i] = row->gen;
    }
    return q[0] >= 0.0;
}

/* The same through the cache: the same value whether cached or not. */
static inline int q_get(vg_rate_mode *m, vg_rate_row *row, long n, double q[2])
{
    size_t i = (size_t)((unsigned long)n - (unsigned long)row->q_lo);

    if (i < row->q_len && row->q_gen[i] == row->gen) {
        q[0] = row->q[i];
        q[1] = row->qi[i];
        return q[0] >= 0.0;
    }
    return q_fill(m, row, n, i, q);
}

/* The peak p (the smallest n >= nmin with t_{n+1} <= t_n) by walking from
 * channel g; 0 if it is farther than PEAK_WALK steps or a step is outside
 * the linear range.  This walk defines a point's peak. */
static int lin_peak(vg_rate_mode *m, vg_rate_row *row, long nmin, long g, double A, long *p)
{
    double q[2];
    int k;

    if (!q_get(m, row, g, q))
        return 0;
    if (q[0] * A > 1.0) {
        for (k = 0; q[0] * A > 1.0; k++) {
            if (k == PEAK_WALK || !q_get(m, row, ++g, q))
                return 0;
        }
    } else {
        for (k = 0; g > nmin; k++, g--) {
            if (k == PEAK_WALK || !q_get(m, row, g - 1, q))
                return 0;
            if (q[0] * A > 1.0)
                break;
        }
    }
    *p = g;
    return 1;
}

/* 1 if every q_n for n in [lo, hi] is in the linear range and
 * q_lo >= q_{lo+1} >= ... >= q_hi (as the concavity of a_n makes them,
 * which rounding could in principle spoil); the range found so is kept in
 * the row, so that a row's points check each channel once. */
static int q_monotone(vg_rate_mode *m, vg_rate_row *row, long lo, long hi)
{
    double q[2], prev;

    if (row->mono_lo <= lo && hi <= row->mono_hi)
        return 1;
    if (!q_get(m, row, lo, q))
        return 0;
    prev = q[0];
    for (long n = lo + 1; n <= hi; n++) {
        if (!q_get(m, row, n, q) || q[0] > prev)
            return 0;
        prev = q[0];
    }
    if (lo <= row->mono_hi && hi >= row->mono_lo) { /* overlapping: the union holds too */
        row->mono_lo = lo < row->mono_lo ? lo : row->mono_lo;
        row->mono_hi = hi > row->mono_hi ? hi : row->mono_hi;
    } else {
        row->mono_lo = lo;
        row->mono_hi = hi;
    }
    return 1;
}

/* q_p and q_{p-1} of the peak lanes_reach last tested, kept for the
 * groups of one call (the peak seldom changes between them); p = nmin - 1:
 * none yet.  ok: both in the linear range (q_{p-1} only where p > nmin). */
typedef struct {
    long p;
    double q, qm;
    int ok;
} peak_steps;

/* 1 if every lane alone would walk to peak p (lin_peak from its start
 * with its own A): each start within PEAK_WALK - 1 steps of p, the q_n on
 * the walks in the linear range and non-increasing (so that q_n A_i falls
 * through 1 once), and p a peak for every lane (q_p A_i <= 1, and
 * q_{p-1} A_i > 1 unless p is the lowest channel).  ps holds the q of the
 * last peak tested, which is usually p again.  *miss: the lanes that
 * would not reach p (bit i: lane i), all of them when a check of the
 * whole group fails. */
static inline __attribute__((always_inline)) int lanes_reach(vg_rate_mode *m, vg_rate_row *row,
                                                              long nmin, long p, long gmin,
                                                              long gmax, const vd *Ap,
                                                              peak_steps *ps, int *miss)
{
    vd A = *Ap;
    long lo = gmin < p - 1 ? gmin : p - 1, hi = gmax > p ? gmax : p;
    vi bad;

    *miss = ALL_LANES;
    if (gmax - p >= PEAK_WALK || p - gmin >= PEAK_WALK)
        return 0;
    lo = lo < nmin ? nmin : lo;
    if (!(row->mono_lo <= lo && hi <= row->mono_hi) && !q_monotone(m, row, lo, hi))
        return 0; /* (the range known already is checked here, without a call) */
    if (ps->p != p) {
        double q[2], qm[2] = {0.0, 0.0};
        ps->p = p;
        ps->ok = q_get(m, row, p, q) && (p == nmin || q_get(m, row, p - 1, qm));
        ps->q = q[0];
        ps->qm = qm[0];
    }
    if (!ps->ok)
        return 0;
    bad = vgt(vsplat(ps->q) * A, vsplat(1.0));
    if (p > nmin)
        bad |= ~vgt(vsplat(ps->qm) * A, vsplat(1.0));
    *miss = lane_bits(bad);
    return *miss == 0;
}

/* q_n and 1/q_n for n in [lo, hi) in the row's window buffer; 0 if a step
 * is outside the linear range. */
static int window_fill(vg_rate_mode *m, vg_rate_row *row, long lo, long hi)
{
    if (row->w_lo == lo && row->w_hi == hi)
        return row->w_ok;
    row->w_lo = lo;
    row->w_hi = hi;
    row->w_ok = 1;
    for (long n = lo; n < hi; n++) {
        double q[2];
        if (!q_get(m, row, n, q)) {
            row->w_ok = 0;
            break;
        }
        row->wq[n - lo] = q[0];
        row->wqi[n - lo] = q[1];
    }
    return row->w_ok;
}

/* Groups of LANES gaps the window path takes in one call (its passes run
 * over all of them, so that the latency of one group's exp, sums and logs
 * overlaps the next group's). */
#define GROUPS 16

/* Lane results of the window path, one group: the prefactor-free logs, the
 * fraction, the rates with the prefactor, and the window. */
typedef struct {
    vd bare, elastic, assisted, total, fraction;
    vd k_bare, k_elastic, k_assisted, k_total;
    long lo, hi, p;
} lanes_out;

/* What a group needs after the window path (win_run's mask[j]). */
#define LANES_ALONE (-1) /* the lanes cannot go together (lanes_again) */
#define LANES_PENDING 32  /* (inside win_run) the window path goes on */

/* Rates of ng groups of LANES gaps g[LANES j ..] by the window path, into
 * o[j].  mask[j] is LANES_ALONE when the lanes of group j cannot go
 * together (they are not eligible alike, or would not all walk to the same
 * peak), else a bit mask of the lanes the log path must take (bit i: lane
 * i; ALL_LANES: all).  Every lane the log path does not take is complete,
 * prefactor included; bit i of fin[j] is set where lane i's eight logs
 * are finite.  Where mask[j] is LANES_ALONE, reach[j] has the bits of the
 * lanes that would walk to lane 0's peak (lane 0 among them), or is 0 when
 * that is not known.  With dst, the first nfull groups go into dst's arrays from
 * element i0 (group j at i0 + LANES j) instead of o[j], whose rate fields
 * they leave unset; the lanes the log path must take are stored too, to be
 * overwritten.  Returns the number of groups the caller has still to look
 * at: those not stored in dst, and those with a lane to take again. */
static VG_LANES_CLONES int win_run(vg_rate_mode *m, vg_rate_row *row, int ng, const double *g,
                                   double tol, lanes_out *o, int *mask, int *fin, int *reach,
                                   vg_rates_run *dst, size_t i0, int nfull)
{
    long nmin = m->stats == VG_STATS_FROZEN ? 0 : -CHANNEL_LIMIT;
    vd inv4lkt = vsplat(row->inv4lkt), lim = vsplat(LIN_LIMIT), one = vsplat(1.0);
    vd A[GROUPS], Ai[GROUPS], up[GROUPS], dn[GROUPS], ap[GROUPS], d[GROUPS], z[GROUPS];
    vu nonfinite = usplat(0); /* the bits of every group's z, ORed */
    long g0[GROUPS], gmin[GROUPS], gmax[GROUPS]; /* walk starts: lane 0's, the lanes' range */
    double lw0 = ln_w(m, 0);
    /* the row's and mode's constants, read once (the stores into o, vectors
     * of doubles, may alias a double field, so the compiler could not keep
     * them in registers across the loops by itself) */
    const vd reorg = vsplat(row->reorg), two_c = vsplat(row->two_c_mode);
    const vd inv_mode = vsplat(m->inv_mode), lnp = vsplat(row->ln_p);
    const double S = m->S, mode = m->mode;
    const int coupling_zero = row->coupling == 0.0;
    peak_steps ps = {nmin - 1, 0.0, 0.0, 0};
    int k, miss, rest = 0;

    if (row->win_tol != tol) {
        row->win_tol = tol;
        row->win_k = window_k(row->c_mode2, tol);
    }
    k = row->win_k;
    for (int j = 0; j < ng; j++) { /* the closed forms, eligibility and A */
        const double *gj = g + LANES * j;
        vd gap, ln_a, centre;
        vi in;
        for (int i = 0; i < LANES; i++)
            gap[i] = gj[i];
        d[j] = gap - reorg;
        ln_a = two_c * d[j];
        centre = d[j] * inv_mode;
        o[j].bare = (-d[j] * d[j]) * inv4lkt;
        o[j].elastic = vsplat(lw0) + o[j].bare;
        o[j].lo = o[j].hi = o[j].p = 0;
        reach[j] = 0;
        in = vle(vabs(ln_a), lim) & vle(vabs(centre), vsplat((double)CHANNEL_LIMIT));
        A[j] = vexp(vsel(in, ln_a, vsplat(0.0)));
        Ai[j] = one / A[j];
        if (S == 0.0) { /* no assisted channel: every lane is complete */
            mask[j] = 0;
            continue;
        }
        if (!all_lanes(in)) {
            mask[j] = lane_bits(in) != 0 ? LANES_ALONE : ALL_LANES;
            continue;
        }
        if (S > (double)CHANNEL_LIMIT || k == 0) {
            mask[j] = ALL_LANES;
            continue;
        }
        { /* the lanes' walk starts: truncation and the clip at nmin are
           * monotone, so the least and greatest start come from the least
           * and greatest centre */
            vd sw = __builtin_shufflevector(centre, centre, 2, 3, 0, 1);
            vd lo_c = vsel(vgt(centre, sw), sw, centre), hi_c = vsel(vgt(sw, centre), sw, centre);
            sw = __builtin_shufflevector(lo_c, lo_c, 1, 0, 3, 2);
            lo_c = vsel(vgt(lo_c, sw), sw, lo_c);
            sw = __builtin_shufflevector(hi_c, hi_c, 1, 0, 3, 2);
            hi_c = vsel(vgt(sw, hi_c), sw, hi_c);
            gmin[j] = (long)lo_c[0] < nmin ? nmin : (long)lo_c[0];
            gmax[j] = (long)hi_c[0] < nmin ? nmin : (long)hi_c[0];
            g0[j] = (long)centre[0] < nmin ? nmin : (long)centre[0];
        }
        mask[j] = LANES_PENDING;
    }
    for (int j = 0; j < ng; j++) { /* the peak, the window and its sums */
        const double *gj = g + LANES * j;
        int single = 1, t0_known;
        long p, lo, hi;
        vd t, t0, sum_up, sum_dn, u;
        if (mask[j] != LANES_PENDING)
            continue;
        for (int i = 1; i < LANES; i++)
            single &= gj[i] == gj[0];
        /* the last group's peak if every lane would reach it, else lane 0's
         * walk (for a point alone, the walk is the definition) */
        if (single || !row->p_set
            || !lanes_reach(m, row, nmin, row->p_prev, gmin[j], gmax[j], &A[j], &ps, &miss)) {
            if (!lin_peak(m, row, nmin, g0[j], A[j][0], &p)) {
                mask[j] = single ? ALL_LANES : LANES_ALONE;
                continue;
            }
            if (!single && !lanes_reach(m, row, nmin, p, gmin[j], gmax[j], &A[j], &ps, &miss)) {
                mask[j] = LANES_ALONE;
                reach[j] = ALL_LANES & ~miss; /* lane 0's among them, unless miss is all */
                continue;
            }
            row->p_prev = p;
            row->p_set = 1;
        } else {
            p = row->p_prev;
        }
        lo = p - k < nmin ? nmin : p - k;
        hi = p + k;
        if (hi >= CHANNEL_LIMIT || lo <= -CHANNEL_LIMIT
            || (row->w_lo == lo && row->w_hi == hi ? !row->w_ok : !window_fill(m, row, lo, hi))) {
            mask[j] = ALL_LANES;
            continue;
        }
        sum_up = sum_dn = vsplat(0.0);
        t0 = one;
        t0_known = p == 0 || (lo <= 0 && 0 <= hi);
        t = one;
        for (long n = p; n < hi; n++) { /* t_{n+1} = t_n q_n A */
            t = t * (vsplat(row->wq[n - lo]) * A[j]);
            if (n + 1 != 0)
                sum_up += t;
            else
                t0 = t;
        }
        t = one;
        for (long n = p; n > lo; n--) { /* t_{n-1} = t_n / (q_{n-1} A) */
            t = t * (vsplat(row->wqi[n - 1 - lo]) * Ai[j]);
            if (n - 1 != 0)
                sum_dn += t;
            else
                t0 = t;
        }
        u = d[j] - vsplat((double)p * mode);
        ap[j] = vsplat(ln_w(m, p)) + (-u * u) * inv4lkt;
        if (!t0_known) { /* the window stops short of n = 0, so t_0 < t_p */
            vd dl = o[j].elastic - ap[j];
            t0 = vexp(vsel(vgt(vsplat(-700.0), dl), vsplat(-700.0), dl));
        }
        up[j] = (p != 0 ? one : vsplat(0.0)) + sum_up + sum_dn;
        dn[j] = up[j] + t0;
        o[j].lo = lo;
        o[j].hi = hi;
        o[j].p = p;
    }
    for (int j = 0; j < ng; j++) { /* the logs, the fraction and the prefactor */
        vd sum, kb, ke, ka, kt;
        vd assisted = vsplat(-HUGE_VAL), total = o[j].elastic, fraction = vsplat(0.0);
        if (mask[j] == LANES_PENDING) {
            vi small = vgt(vsplat(LIN_SUM_MIN), up[j]);
            assisted = ap[j] + vlog(vsel(small, one, up[j]));
            total = ap[j] + vlog(dn[j]);
            fraction = up[j] / dn[j];
            mask[j] = lane_bits(small);
        }
        if (coupling_zero) {
            kb = ke = ka = kt = vsplat(-HUGE_VAL);
        } else {
            kb = lnp + o[j].bare;
            ke = lnp + o[j].elastic;
            ka = lnp + assisted;
            kt = lnp + total;
        }
        /* sum - sum is 0 where the eight are finite, NaN elsewhere (NaN
         * and +-inf give NaN); the sum as a tree, so that the logs are not
         * followed by a chain of seven additions.  Its bits are ORed over
         * the groups, and the lanes are looked at (below the loop) only
         * when they are not all 0 */
        sum = ((o[j].bare + o[j].elastic) + (assisted + total)) + ((kb + ke) + (ka + kt));
        z[j] = sum - sum;
        nonfinite |= (vu)z[j];
        fin[j] = ALL_LANES;
        rest += !(dst && j < nfull) || mask[j] != 0;
        if (dst && j < nfull) { /* a whole group of a run: straight into its arrays */
            size_t at = i0 + (size_t)(LANES * j);
            memcpy(dst->ln_k_elastic + at, &ke, sizeof(vd));
            memcpy(dst->ln_k_assisted + at, &ka, sizeof(vd));
            memcpy(dst->ln_k_total + at, &kt, sizeof(vd));
            memcpy(dst->ln_k_bare + at, &kb, sizeof(vd));
            memcpy(dst->ln_fc_elastic + at, &o[j].elastic, sizeof(vd));
            memcpy(dst->ln_fc_assisted + at, &assisted, sizeof(vd));
            memcpy(dst->ln_fc_total + at, &total, sizeof(vd));
            memcpy(dst->ln_fc_bare + at, &o[j].bare, sizeof(vd));
            memcpy(dst->assisted_fraction + at, &fraction, sizeof(vd));
        } else {
            o[j].assisted = assisted;
            o[j].total = total;
            o[j].fraction = fraction;
            o[j].k_bare = kb;
            o[j].k_elastic = ke;
            o[j].k_assisted = ka;
            o[j].k_total = kt;
        }
    }
    if ((nonfinite[0] | nonfinite[1] | nonfinite[2] | nonfinite[3]) != 0) {
        rest = 0;
        for (int j = 0; j < ng; j++) {
            fin[j] = lane_bits(z[j] == vsplat(0.0));
            rest += !(dst && j < nfull) || mask[j] != 0 || fin[j] != ALL_LANES;
        }
    }
    return rest;
}

/* k_assisted / k_total from the log difference, for the log path. */
static double fraction_from_logs(double ln_assisted, double ln_elastic)
{
    double d = ln_assisted - ln_elastic;

    if (d >= 0.0)
        return 1.0 / (1.0 + exp(-d));
    return exp(d) / (1.0 + exp(d));
}

/* Lane i of o into a result record. */
static inline void lane_store(const lanes_out *o, int i, int coupling_zero, int assisted_zero,
                              vg_rates *out)
{
    out->ln_fc_bare = o->bare[i];
    out->ln_fc_elastic = o->elastic[i];
    out->ln_fc_assisted = o->assisted[i];
    out->ln_fc_total = o->total[i];
    out->ln_k_bare = o->k_bare[i];
    out->ln_k_elastic = o->k_elastic[i];
    out->ln_k_assisted = o->k_assisted[i];
    out->ln_k_total = o->k_total[i];
    out->assisted_fraction = o->fraction[i];
    out->assisted_zero = assisted_zero;
    out->coupling_zero = coupling_zero;
    out->n_lo = o->lo;
    out->n_hi = o->hi;
    out->n_peak = o->p;
}

/* The rest of a stored record where the lanes could not finish it: the
 * log path when it must take the point, and the final check. */
static vg_status lane_rest(vg_rate_mode *m, const vg_rate_row *row, double gap, double tol,
                           int log_path, vg_rates *out, vg_error *err)
{
    int coupling_zero = row->coupling == 0.0, assisted_zero = m->S == 0.0;

    if (!assisted_zero && log_path) {
        chan_seq s = {m, gap - row->reorg, row->inv4lkt,
                      m->stats == VG_STATS_FROZEN ? 0 : -CHANNEL_LIMIT};
        vg_status st = assisted_sum(&s, tol, out, err);
        if (st != VG_OK)
            return st;
        out->assisted_fraction = fraction_from_logs(out->ln_fc_assisted, out->ln_fc_elastic);
        finish_rates(out, row->ln_p, coupling_zero);
    }
    if (!rates_valid(out, coupling_zero, assisted_zero))
        return vg_error_set(err, VG_ENUMERIC,
                            "rate kernel produced a non-finite value at gap %g meV, "
                            "reorganization %g meV, coupling %g meV, huang_rhys %g, "
                            "mode %g meV, k_B T %g meV", gap, row->reorg,
                            row->coupling, m->S, m->mode, m->kT);
    return VG_OK;
}

void vg_rates_run_get(const vg_rates_run *r, size_t i, vg_rates *x)
{
    memset(x, 0, sizeof *x);
    x->ln_k_elastic = r->ln_k_elastic[i];
    x->ln_k_assisted = r->ln_k_assisted[i];
    x->ln_k_total = r->ln_k_total[i];
    x->ln_k_bare = r->ln_k_bare[i];
    x->ln_fc_elastic = r->ln_fc_elastic[i];
    x->ln_fc_assisted = r->ln_fc_assisted[i];
    x->ln_fc_total = r->ln_fc_total[i];
    x->ln_fc_bare = r->ln_fc_bare[i];
    x->assisted_fraction = r->assisted_fraction[i];
    x->assisted_zero = r->assisted_zero;
    x->coupling_zero = r->coupling_zero;
}

/* Point i (in its run) of a record into the arrays. */
static void run_put(vg_rates_run *r, size_t i, const vg_rates *x)
{
    r->ln_k_elastic[i] = x->ln_k_elastic;
    r->ln_k_assisted[i] = x->ln_k_assisted;
    r->ln_k_total[i] = x->ln_k_total;
    r->ln_k_bare[i] = x->ln_k_bare;
    r->ln_fc_elastic[i] = x->ln_fc_elastic;
    r->ln_fc_assisted[i] = x->ln_fc_assisted;
    r->ln_fc_total[i] = x->ln_fc_total;
    r->ln_fc_bare[i] = x->ln_fc_bare;
    r->assisted_fraction[i] = x->assisted_fraction;
}

/* Lanes [0, nl) of one group into the arrays at point i0. */
static inline void run_lanes(vg_rates_run *r, size_t i0, const lanes_out *o, int nl)
{
    if (nl == LANES) { /* whole vectors */
        memcpy(r->ln_k_elastic + i0, &o->k_elastic, sizeof(vd));
        memcpy(r->ln_k_assisted + i0, &o->k_assisted, sizeof(vd));
        memcpy(r->ln_k_total + i0, &o->k_total, sizeof(vd));
        memcpy(r->ln_k_bare + i0, &o->k_bare, sizeof(vd));
        memcpy(r->ln_fc_elastic + i0, &o->elastic, sizeof(vd));
        memcpy(r->ln_fc_assisted + i0, &o->assisted, sizeof(vd));
        memcpy(r->ln_fc_total + i0, &o->total, sizeof(vd));
        memcpy(r->ln_fc_bare + i0, &o->bare, sizeof(vd));
        memcpy(r->assisted_fraction + i0, &o->fraction, sizeof(vd));
        return;
    }
    for (int l = 0; l < nl; l++) { /* the last group of a run: lane by lane */
        vg_rates rec;
        lane_store(o, l, r->coupling_zero, r->assisted_zero, &rec);
        run_put(r, i0 + (size_t)l, &rec);
    }
}

/* The lanes [0, nj) of a group gj whose lanes cannot go together, taken
 * again by win_run into oa (room for 2 + LANES groups): lane l's results
 * are lane la_of[l] of group ga_of[l].  The lanes in reach (those that walk
 * to lane 0's peak) go as one group and the others as a second; a group
 * that still cannot go together, and every lane when reach does not split
 * the group, goes lane by lane, its gap in every lane of a group.  Lanes
 * are independent, so a lane's results are the same in any group. */
static void lanes_again(vg_rate_mode *m, vg_rate_row *row, const double *gj, int nj, int reach,
                        double tol, lanes_out *oa, int *ma, int *fa, int *ga_of, int *la_of)
{
    double ga[(2 + LANES) * LANES];
    int ra[2 + LANES]; /* win_run's reach of these groups, not needed here */
    int all = (1 << nj) - 1, left = all, n1 = 0;

    reach &= all;
    if ((reach & 1) && reach != all) { /* two groups: the lanes in reach, the others */
        int sets[2] = {reach, all & ~reach};
        for (int k = 0; k < 2; k++) {
            int first = __builtin_ctz((unsigned)sets[k]);
            for (int l = 0; l < LANES; l++)
                ga[LANES * k + l] = gj[l < nj && (sets[k] >> l & 1) ? l : first];
        }
        win_run(m, row, 2, ga, tol, oa, ma, fa, ra, NULL, 0, 0);
        for (int k = 0; k < 2; k++) {
            if (ma[k] == LANES_ALONE)
                continue;
            for (int l = 0; l < nj; l++)
                if (sets[k] >> l & 1) {
                    ga_of[l] = k;
                    la_of[l] = l;
                }
            left &= ~sets[k];
        }
        n1 = 2;
    }
    if (left != 0) { /* lane by lane */
        int n = 0;
        for (int l = 0; l < nj; l++) {
            if (!(left >> l & 1))
                continue;
            for (int l2 = 0; l2 < LANES; l2++)
                ga[LANES * (n1 + n) + l2] = gj[l];
            ga_of[l] = n1 + n++;
            la_of[l] = 0;
        }
        win_run(m, row, n, ga + LANES * n1, tol, oa + n1, ma + n1, fa + n1, ra + n1, NULL, 0,
                0);
    }
}

/* ng groups of LANES gaps g[0 .. LANES ng) of a row (ng <= GROUPS), of which
 * the first nl are points, into records out[0..nl) or, with run != NULL,
 * into its arrays from element i0; *done: how many leading ones succeeded. */
static vg_status eval_run(vg_rate_mode *m, vg_rate_row *row, const double *g, int ng, int nl,
                          double tol, vg_rates *out, vg_rates_run *run, size_t i0,
                          size_t *done, vg_error *err)
{
    lanes_out o[GROUPS], oa[2 + LANES];
    int mask[GROUPS], ma[2 + LANES], fin[GROUPS], fa[2 + LANES], reach[GROUPS];
    int ga_of[LANES], la_of[LANES]; /* a lane taken again: its group in oa and lane there */
    int cz = row->coupling == 0.0, az = m->S == 0.0;
    int nfull = run ? nl / LANES : 0; /* groups win_run stores in the arrays itself */

    *done = (size_t)nl;
    if (win_run(m, row, ng, g, tol, o, mask, fin, reach, run, i0, nfull) == 0)
        return VG_OK; /* the usual case: every point complete and in the arrays */
    for (int j = 0; j * LANES < nl; j++) {
        int nj = nl - j * LANES < LANES ? nl - j * LANES : LANES;
        if (run && mask[j] == 0 && fin[j] == ALL_LANES) { /* complete */
            if (j >= nfull)
                run_lanes(run, i0 + (size_t)(j * LANES), &o[j], nj);
            continue;
        }
        if (mask[j] == LANES_ALONE)
            lanes_again(m, row, g + j * LANES, nj, reach[j], tol, oa, ma, fa, ga_of, la_of);
        for (int l = 0; l < nj; l++) {
            int i = j * LANES + l, log_path, finite;
            vg_rates rec, *r = run ? &rec : &out[i];
            if (mask[j] == LANES_ALONE) {
                lane_store(&oa[ga_of[l]], la_of[l], cz, az, r);
                log_path = (ma[ga_of[l]] >> la_of[l]) & 1;
                finite = (fa[ga_of[l]] >> la_of[l]) & 1;
            } else {
                if (j < nfull)
                    vg_rates_run_get(run, i0 + (size_t)i, r);
                else
                    lane_store(&o[j], l, cz, az, r);
                log_path = (mask[j] >> l) & 1;
                finite = (fin[j] >> l) & 1;
            }
            if (log_path || !finite) {
                vg_status st = lane_rest(m, row, g[i], tol, log_path, r, err);
                if (st != VG_OK) {
                    *done = (size_t)i;
                    return st;
                }
            }
            if (run)
                run_put(run, i0 + (size_t)i, r);
        }
    }
    *done = (size_t)nl;
    return VG_OK;
}

/* 1 if every x[0..n) is finite, from the exponent bits: with the other
 * bits cleared, adding 2^52 reaches bit 63 for an exponent of all ones
 * (infinity or NaN) and for no other, so the OR of the sums has bit 63 set
 * exactly when one of them is not finite.  Integer operations only, in
 * four independent chains the compiler can keep in vector registers. */
static int all_finite(const double *x, size_t n)
{
    const uint64_t exp_bits = 0x7ff0000000000000ULL, unit = 0x0010000000000000ULL;
    uint64_t acc[4] = {0, 0, 0, 0};
    size_t i = 0;

    for (; i + 4 <= n; i += 4)
        for (int l = 0; l < 4; l++) {
            uint64_t b;
            memcpy(&b, x + i + l, sizeof b);
            acc[l] |= (b & exp_bits) + unit;
        }
    for (; i < n; i++) {
        uint64_t b;
        memcpy(&b, x + i, sizeof b);
        acc[0] |= (b & exp_bits) + unit;
    }
    return ((acc[0] | acc[1] | acc[2] | acc[3]) >> 63) == 0;
}

/* vg_rate_eval_gaps and vg_rate_eval_gaps_run (run != NULL). */
static vg_status eval_gaps(vg_rate_mode *m, vg_rate_row *row, size_t n, const double *gap_meV,
                           double tol, vg_rates *out, vg_rates_run *run, size_t *done,
                           vg_error *err)
{
    vg_rates probe;

    *done = 0;
    if (n == 0)
        return VG_OK;
    if (point_check(m, row, gap_meV[0], tol, out ? out : &probe, err) != VG_OK)
        return VG_ENUMERIC;
    if (run) {
        run->assisted_zero = m->S == 0.0;
        run->coupling_zero = row->coupling == 0.0;
    }
    for (size_t j = 0; j < n; j += GROUPS * LANES) {
        size_t nl = n - j < GROUPS * LANES ? n - j : GROUPS * LANES, good = nl, ok = 0;
        double g[GROUPS * LANES];
        const double *gp = gap_meV + j; /* whole groups of finite gaps: read in place */
        vg_status st = VG_OK;
        /* else a copy, the last group padded with its last gap */
        if (nl % LANES != 0 || !all_finite(gap_meV + j, nl)) {
            for (size_t i = 0; i < nl; i++)
                if (!isfinite(g[i] = gap_meV[j + i]) && good == nl)
                    good = i;
            for (size_t i = good; good > 0 && i < (good + LANES - 1) / LANES * LANES; i++)
                g[i] = g[good - 1];
            gp = g;
        }
        if (good > 0) {
            st = eval_run(m, row, gp, (int)((good + LANES - 1) / LANES), (int)good, tol,
                          out ? out + j : NULL, run, j, &ok, err);
            *done = j + ok;
        }
        if (st != VG_OK)
            return st;
        if (good < nl) /* the message of the first point that fails its check */
            return point_check(m, row, gap_meV[j + good], tol, &probe, err);
    }
    return VG_OK;
}

vg_status vg_rate_eval_gaps(vg_rate_mode *m, vg_rate_row *row, size_t n, const double *gap_meV,
                            double tol, vg_rates *out, size_t *done, vg_error *err)
{
    if (!out) {
        *done = 0;
        return vg_error_set(err, VG_ENUMERIC, "rate kernel called without a mode or result record");
    }
    return eval_gaps(m, row, n, gap_meV, tol, out, NULL, done, err);
}

vg_status vg_rate_eval_gaps_run(vg_rate_mode *m, vg_rate_row *row, size_t n,
                                const double *gap_meV, double tol, vg_rates_run *out,
                                size_t *done, vg_error *err)
{
    if (!out) {
        *done = 0;
        return vg_error_set(err, VG_ENUMERIC, "rate kernel called without a mode or result record");
    }
    return eval_gaps(m, row, n, gap_meV, tol, NULL, out, done, err);
}

vg_status vg_rate_eval_row(vg_rate_mode *m, vg_rate_row *row, double gap_meV, double tol,
                           vg_rates *out, vg_error *err)
{
    size_t done;

    return vg_rate_eval_gaps(m, row, 1, &gap_meV, tol, out, &done, err);
}

vg_status vg_rate_eval(vg_rate_mode *m, double gap_meV, double reorg_meV,
                       double coupling_meV, double tol, vg_rates *out,
                       vg_error *err)
{
    vg_rate_row row;
    vg_status st;

    row.q_len = 0;
    row.q_lo = 0;
    row.gen = 0;
    st = row_init(&row, m, reorg_meV, coupling_meV, err);
    if (st != VG_OK)
        return st;
    return vg_rate_eval_row(m, &row, gap_meV, tol, out, err);
}

vg_status vg_rate_eval_batch(vg_rate_mode *m, size_t count, const double *gap_meV,
                             const double *reorg_meV, const double *coupling_meV,
                             double tol, vg_rates *out, vg_error *err)
{
    for (size_t i = 0; i < count; i++) {
        vg_status st = vg_rate_eval(m, gap_meV[i], reorg_meV[i], coupling_meV[i],
                                    tol, &out[i], err);
        if (st != VG_OK) {
            vg_error_prefix(err, "point %zu: ", i);
            return st;
        }
    }
    return VG_OK;
}

/* Inputs as vg_rate_eval accepts them (no status here: the caller has
 * evaluated the point first); NaN for inputs it would reject. */
double vg_rate_ln_channel(vg_rate_mode *m, double gap_meV, double reorg_meV,
                          double coupling_meV, long n)
{
    double inv4lkt = 1.0 / (4.0 * reorg_meV * m->kT);
    double lw = vg_rate_ln_weight_cached(m, n);

    if (!(reorg_meV > 0.0) || !(coupling_meV >= 0.0) || !isfinite(gap_meV))
        return NAN;
    if (coupling_meV == 0.0 || lw == -HUGE_VAL)
        return -HUGE_VAL;
    return ln_prefactor(coupling_meV, reorg_meV, m->kT) + lw
           + ln_gauss(gap_meV - reorg_meV, (double)n * m->mode, inv4lkt);
}

/* Marcus & Sutin (1985): ln[(2 pi/hbar) V^2 (4 pi lam kT)^-1/2
 * exp(-(gap - lam)^2 / (4 lam kT))]; NaN for inputs vg_rate_eval rejects. */
double vg_rate_ln_marcus(double gap_meV, double reorg_meV, double coupling_meV,
                         double temperature_K)
{
    double kT = VG_KB_MEV * temperature_K;
    double inv4lkt = 1.0 / (4.0 * reorg_meV * kT);

    if (!(reorg_meV > 0.0) || !(kT > 0.0) || !(coupling_meV >= 0.0) || !isfinite(gap_meV))
        return NAN;
    if (coupling_meV == 0.0)
        return -HUGE_VAL;
    return ln_prefactor(coupling_meV, reorg_meV, kT)
           + ln_gauss(gap_meV - reorg_meV, 0.0, inv4lkt);
}
