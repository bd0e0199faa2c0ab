/*
 * Time-domain engine (vg_fft.h): F(eps) on an evenly spaced grid by one
 * complex FFT of the generating function.  Called by the tests, as the
 * independent check of the sum engine (src/multimode.c).
 *
 * Discretisation.  With s = t / hbar (meV^-1) and the grid eps_k = e_ref +
 * k de, s_m = m ds, ds de = 2 pi / n:
 *   F(eps_k) ~ (ds / 2 pi) sum_m e^(i e_ref s_m) e^(-g(s_m)) e^(+2 pi i m k / n),
 * a backward transform in GSL's sign convention (the forward one, e^-, would
 * return F(-eps), mirrored).  Two errors are bounded:
 *   aliasing: the sum is F periodised with period L = n de; beyond the
 *     window, F(eps) <= g(0) C(tau) e^(-tau (eps - edge)) (the Chernoff bound
 *     of vg_multimode_ln_chernoff with the edge's saddle tau), so the images
 *     add at most g(0) C / (1 - e^(-|tau| L)) per side;
 *   time truncation: |e^(-g(s))| <= e^(-lambda kT s^2) (every mode factor
 *     has modulus <= 1), so the samples beyond |s| = pi / de miss at most
 *     (1/pi) [int_T^inf e^(-lambda kT s^2) ds + ds e^(-lambda kT T^2)].
 * Rounding is estimated (not bounded) as 4 DBL_EPSILON (sum_m |z_m|^2
 * ((2 + Re g_m)^2 + log2(n)^2))^(1/2): each sample carries a relative error
 * ~ DBL_EPSILON Re g from its modulus (its phase is formed in long double,
 * see sample()), and the transform ~ log2 n more.
 * Where F falls below 1e-12 of its largest value, or its estimated error
 * exceeds 1e-3, the point is flagged untrusted.
 *
 * Damped modes.  Their factor e^(-|s| / 2T1) puts a kink into e^(-g) at
 * s = 0 (coefficient Gamma = sum S coth gamma of |s|), whose transform has
 * Lorentzian tails that alias algebraically.  The engine subtracts
 * h(s) = exp(-i e_bar s - Gamma |s| - lambda kT s^2), whose transform is the
 * Voigt profile V(eps - e_bar; sigma, Gamma) (added back exactly), e_bar the
 * mean; the remainder's first kink is i c2 s|s|, c2 = sum S gamma omega,
 * with tails 2 c2 / (pi x^3), then 6 c3 / (pi x^4) from the |s|^3 terms.
 * Their images at distance |x| ~ L are the (estimated) aliasing of the
 * damped part.
 *
 * Pure apart from vg_fft_alloc/free; every GSL status is checked.
 */
#include <float.h>
#include <limits.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_fft_complex.h>

#include "vg_const.h"
#include "vg_fft.h"
#include "vg_multimode.h"

/* hbar in meV ps (CODATA 2018 via vg_const.h). */
#define HBAR_MEV_PS (VG_HBAR_EVS * 1.0e15)

/* Aliasing and truncation targets, relative to the scale of F (the height of
 * a Gaussian with the spectrum's variance): below double rounding. */
#define LN_TARGET (-17.0 * VG_LN10)

/* The dynamic range: trusted points lie above this fraction of the largest
 * value and have an estimated relative error at most TRUST_ERR. */
#define FLOOR 1e-12
#define TRUST_ERR 1e-3

/* Damped modes: the window is made long enough that the estimated
 * aliasing of the remainder's algebraic tails stays below this fraction of
 * the Lorentzian tail Gamma / (pi (x + 4 sd)^2) that F has at any point x
 * of the window (the spectrum's mass within 4 sd, spread by Lorentzians). */
#define DAMPED_TARGET 1e-9

/* Bisection steps for the window edges. */
#define EDGE_STEPS 60

struct vg_fft_work {
    size_t n;
    double *data; /* 2 n: the packed complex samples, then the transform */
    gsl_fft_complex_wavetable *wt;
    gsl_fft_complex_workspace *ws;
};

/* coth(beta/2) for the thermal statistics, 1 for the frozen ones. */
static double mode_coth(vg_mode_statistics st, double w, double kT)
{
    return st == VG_STATS_FROZEN ? 1.0 : 1.0 / tanh(0.5 * w / kT);
}

static double mode_gamma(const vg_multimode_mode *m)
{
    return isfinite(m->lifetime_ps) ? HBAR_MEV_PS / (2.0 * m->lifetime_ps) : 0.0;
}

/* ln of the Chernoff bound on F at eps with eps's own saddle. */
static double ln_bound_at(const vg_multimode_system *sys, double reorg, double T,
                          double s2, double eps, double *tau)
{
    *tau = vg_multimode_saddle(sys, reorg, T, eps);
    return -0.5 * log(2.0 * VG_PI * s2) + vg_multimode_ln_chernoff(sys, reorg, T, eps, *tau);
}

/* The energy beyond which (dir = +1 above, -1 below the mean) the bound on F
 * is below e^ln_target: doubling steps out from the mean, then bisection. */
static double spectrum_edge(const vg_multimode_system *sys, double reorg, double T,
                            double s2, double mean, double sd, double ln_target,
                            double dir)
{
    double in = 0.0, out = 8.0 * sd, tau;

    while (ln_bound_at(sys, reorg, T, s2, mean + dir * out, &tau) > ln_target && out < 1e12) {
        in = out;
        out *= 2.0;
    }
    for (int i = 0; i < EDGE_STEPS; i++) {
        double mid = 0.5 * (in + out);
        if (ln_bound_at(sys, reorg, T, s2, mean + dir * mid, &tau) > ln_target)
            in = mid;
        else
            out = mid;
    }
    return mean + dir * out;
}

/* Smallest m >= n whose only prime factors are 2, 3 and 5 (fast lengths for
 * GSL's mixed-radix transform). */
static size_t good_length(size_t n)
{
    for (size_t m = n < 16 ? 16 : n;; m++) {
        size_t r = m;
        while (r % 2 == 0)
            r /= 2;
        while (r % 3 == 0)
            r /= 3;
        while (r % 5 == 0)
            r /= 5;
        if (r == 1)
            return m;
    }
}

/* Aliasing bound of the images of one side: g(0) C(edge) / (1 - e^(-|tau| L)),
 * tau the edge's saddle; g(0) (no use) if tau has the wrong sign. */
static double alias_side(const vg_multimode_system *sys, const vg_fft_plan *p, double T,
                         double edge, double dir)
{
    double tau, lb = ln_bound_at(sys, p->reorg, T, p->s2, edge, &tau);
    double L = (double)p->n * p->de;

    if (!(dir * tau > 0.0))
        return 1.0 / sqrt(2.0 * VG_PI * p->s2);
    return exp(fmin(lb, 700.0)) / -expm1(-fabs(tau) * L);
}

/* Mean, variance and the damped coefficients of the spectrum. */
static void spectrum_moments(const vg_multimode_system *sys, vg_fft_plan *p, double *var)
{
    double b = 0.0, kink3 = 0.0;

    p->e_bar = p->reorg;
    *var = p->s2;
    p->g_bar = p->c2 = 0.0;
    for (size_t j = 0; j < sys->n_modes; j++) {
        const vg_multimode_mode *m = &sys->modes[j];
        double c = mode_coth(sys->stats, m->mode, p->kT), g = mode_gamma(m);
        double S = m->huang_rhys, w = m->mode;
        p->e_bar += S * w;
        *var += S * w * w * c;
        p->g_bar += S * c * g;
        p->c2 += S * g * w;
        b += 0.5 * S * c * (w * w - g * g);
        kink3 += S * c * g * fabs(0.5 * w * w - g * g / 6.0);
    }
    p->damped = p->g_bar > 0.0;
    p->c3 = fabs(b) * p->g_bar + kink3;
}

/* The checks of a plan request, one message per way to fail. */
static vg_status plan_check(const vg_multimode_system *sys, double reorg, double T,
                            double gap_lo, double step, size_t n_gaps,
                            const vg_fft_plan *plan, vg_error *err)
{
    vg_status st = vg_multimode_check(sys, reorg, T, err);

    if (st != VG_OK)
        return st;
    if (!plan)
        return vg_error_set(err, VG_ENUMERIC, "FFT plan requested without a plan record");
    if (n_gaps == 0 || !isfinite(gap_lo)
        || (n_gaps > 1 && !(isfinite(step) && step > 0.0
                            && isfinite(gap_lo + step * (double)(n_gaps - 1)))))
        return vg_error_set(err, VG_ENUMERIC,
                            "FFT gap grid must have >= 1 finite gap and a step > 0 "
                            "(got %zu gaps from %g meV by %g meV)", n_gaps, gap_lo, step);
    return VG_OK;
}

/* Damped modes: a window length L such that the images at distance
 * >= L - x_max of the tails 2 c2/(pi x^3) + 6 c3/(pi x^4) (summed over the
 * images |q| <= 2, four times over: damped_alias) stay below DAMPED_TARGET
 * times the Lorentzian tail at the farthest point x_max. */
static double damped_length(const vg_fft_plan *p, double x_max, double sd)
{
    double a = x_max + 4.0 * sd;
    double tail = DAMPED_TARGET * p->g_bar / (VG_PI * a * a);
    double d3 = cbrt(4.0 * 2.0 * 1.21 * 2.0 * p->c2 / (VG_PI * tail));
    double d4 = pow(4.0 * 2.0 * 1.09 * 6.0 * p->c3 / (VG_PI * tail), 0.25);

    return x_max + fmax(d3, d4);
}

/* The grid: steps, reference bin, window and length.  VG_ENUMERIC if the
 * length exceeds max_n. */
static vg_status plan_grid(vg_fft_plan *p, double e_lo, double e_hi, double de_max,
                           double sd, size_t max_n, vg_error *err)
{
    double gap_hi = p->gap_lo + p->gap_step * (double)(p->n_gaps - 1);
    double lo = fmin(e_lo, p->gap_lo), hi = fmax(e_hi, gap_hi), span;
    double j;

    if (p->damped)
        hi = fmax(hi, lo + damped_length(p, fmax(hi - p->e_bar, p->e_bar - lo), sd));

    p->stride = p->n_gaps > 1 ? (size_t)ceil(p->gap_step / de_max) : 1;
    p->de = p->n_gaps > 1 ? p->gap_step / (double)p->stride : de_max;
    span = (hi - lo) / p->de + 4.0;
    if (!(span < (double)max_n) || !(fabs(p->e_bar - p->gap_lo) / p->de < 1e15))
        return vg_error_set(err, VG_ENUMERIC,
                            "the FFT needs more than %zu points for gaps %g .. %g meV "
                            "at reorganization %g meV, k_B T %g meV",
                            max_n, p->gap_lo, gap_hi, p->reorg, p->kT);
    j = nearbyint((p->e_bar - p->gap_lo) / p->de);
    p->e_ref = p->gap_lo + j * p->de;
    p->k_gap0 = -(long)j;
    p->k_lo = (long)floor((lo - p->e_ref) / p->de) - 1;
    p->n = good_length((size_t)span);
    if (p->n > max_n)
        return vg_error_set(err, VG_ENUMERIC,
                            "the FFT needs %zu points (at most %zu allowed) at "
                            "reorganization %g meV, k_B T %g meV", p->n, max_n, p->reorg, p->kT);
    return VG_OK;
}

/* The truncation and aliasing bounds of a plan whose grid is set; the
 * time window's half length pi / de does not depend on n, the time step
 * 2 pi / (n de) and the aliased images' distance do. */
static void plan_bounds(const vg_multimode_system *sys, vg_fft_plan *plan)
{
    double ds = 2.0 * VG_PI / ((double)plan->n * plan->de);
    double T_half = VG_PI / plan->de;
    double env = exp(-0.5 * plan->s2 * T_half * T_half);

    plan->trunc = (sqrt(VG_PI / (2.0 * plan->s2)) * erfc(T_half * sqrt(0.5 * plan->s2))
                   + ds * env) / VG_PI;
    plan->alias = alias_side(sys, plan, plan->temperature,
                             plan->e_ref + (double)(plan->k_lo + (long)plan->n) * plan->de, 1.0)
                  + alias_side(sys, plan, plan->temperature,
                               plan->e_ref + (double)(plan->k_lo - 1) * plan->de, -1.0);
}

vg_status vg_fft_plan_make(const vg_multimode_system *sys, double reorg_meV,
                           double temperature_K, double gap_lo_meV,
                           double gap_step_meV, size_t n_gaps, size_t max_n,
                           vg_fft_plan *plan, vg_error *err)
{
    vg_status st = plan_check(sys, reorg_meV, temperature_K, gap_lo_meV, gap_step_meV,
                              n_gaps, plan, err);
    double var, sd, lt, e_lo, e_hi, smax;

    if (st != VG_OK)
        return st;
    plan->reorg = reorg_meV;
    plan->temperature = temperature_K;
    plan->kT = VG_KB_MEV * temperature_K;
    plan->s2 = 2.0 * reorg_meV * plan->kT;
    plan->gap_lo = gap_lo_meV;
    plan->gap_step = n_gaps > 1 ? gap_step_meV : 0.0;
    plan->n_gaps = n_gaps;
    spectrum_moments(sys, plan, &var);
    sd = sqrt(var);
    lt = LN_TARGET - 0.5 * log(2.0 * VG_PI * var);
    e_lo = spectrum_edge(sys, reorg_meV, temperature_K, plan->s2, plan->e_bar, sd, lt, -1.0);
    e_hi = spectrum_edge(sys, reorg_meV, temperature_K, plan->s2, plan->e_bar, sd, lt, 1.0);
    /* e^(-s2 s^2 / 2) (sqrt(pi / 2 s2) + ds) / pi <= e^lt, with ds <= 2 pi / span */
    smax = sqrt(2.0 / plan->s2 * (-lt + log((sqrt(VG_PI / (2.0 * plan->s2))
                                             + 2.0 * VG_PI / (e_hi - e_lo)) / VG_PI)));
    if ((st = plan_grid(plan, e_lo, e_hi, VG_PI / smax, sd, max_n, err)) != VG_OK)
        return st;
    plan_bounds(sys, plan);
    return VG_OK;
}

vg_status vg_fft_plan_widen(const vg_multimode_system *sys, vg_fft_plan *plan, size_t n,
                            vg_error *err)
{
    if (!plan || n < plan->n || good_length(n) != n)
        return vg_error_set(err, VG_EUSAGE, "FFT plan: cannot widen a transform of %zu points "
                            "to %zu (a larger product of 2, 3 and 5 is needed)",
                            plan ? plan->n : 0, n);
    plan->n = n;
    plan_bounds(sys, plan);
    return VG_OK;
}

/* ------------------------------------------------------------- samples --- */

/* 2 pi in long double. */
#define TWO_PI_L 6.283185307179586476925286766559005768L

/* (ds / 2 pi) e^(i e_ref s) (e^(-g(s)) - h(s)) at s = m ds >= 0 into
 * z[0..1]; returns the exponent Re g(s) (for the rounding estimate).  The
 * phase e_ref s - Im g(s) grows like (sum S omega) s, hundreds of radians:
 * in double each sample would carry ~1e-16 of that as error, which is what
 * limits the transform's dynamic range.  s, the mode arguments omega s and
 * the phase are therefore formed in long double and the phase reduced
 * modulo 2 pi before the double cos and sin. */
static double sample(const vg_multimode_system *sys, const vg_fft_plan *p, size_t m,
                     long double ds, double z[2])
{
    long double s = (long double)m * ds;
    long double ph = ((long double)p->e_ref - (long double)p->reorg) * s;
    double sd = (double)s, re = 0.5 * p->s2 * sd * sd, a = (double)(ds / TWO_PI_L), mod, phd;

    for (size_t j = 0; j < sys->n_modes; j++) {
        const vg_multimode_mode *md = &sys->modes[j];
        long double ws = (long double)md->mode * s;
        double S = md->huang_rhys, D = exp(-mode_gamma(md) * sd);
        if (S == 0.0)
            continue;
        re += S * mode_coth(sys->stats, md->mode, p->kT) * (1.0 - D * (double)cosl(ws));
        ph -= (long double)(S * D * (double)sinl(ws));
    }
    mod = a * exp(-re);
    phd = (double)remainderl(ph, TWO_PI_L);
    z[0] = mod * cos(phd);
    z[1] = mod * sin(phd);
    if (p->damped) {
        double hm = a * exp(-p->g_bar * sd - 0.5 * p->s2 * sd * sd);
        double hp = (double)remainderl(((long double)p->e_ref - (long double)p->e_bar) * s,
                                       TWO_PI_L);
        z[0] -= hm * cos(hp);
        z[1] -= hm * sin(hp);
    }
    return re;
}

/* Fill the data with the samples (Hermitian: z(-s) = conj z(s)); returns the
 * rounding estimate. */
static double fill_samples(vg_fft_work *w, const vg_multimode_system *sys,
                           const vg_fft_plan *p)
{
    size_t n = p->n;
    long double ds = TWO_PI_L / ((long double)n * (long double)p->de);
    double acc = 0.0, lg = log2((double)n);

    for (size_t m = 0; m <= n / 2; m++) {
        double z[2], re = sample(sys, p, m, ds, z);
        double mag2 = z[0] * z[0] + z[1] * z[1];
        acc += (m == 0 ? 1.0 : 2.0) * mag2 * ((2.0 + re) * (2.0 + re) + lg * lg);
        if (2 * m == n) { /* Nyquist bin: s = +-n ds / 2 together, real */
            w->data[2 * m] = z[0];
            w->data[2 * m + 1] = 0.0;
            continue;
        }
        w->data[2 * m] = z[0];
        w->data[2 * m + 1] = z[1];
        if (m > 0) {
            w->data[2 * (n - m)] = z[0];
            w->data[2 * (n - m) + 1] = -z[1];
        }
    }
    return 4.0 * DBL_EPSILON * sqrt(acc);
}

/* ------------------------------------------------------------ results --- */

static size_t bin_index(long k, size_t n)
{
    long r = k % (long)n;

    return (size_t)(r < 0 ? r + (long)n : r);
}

/* F in bin k: the transform plus, with damping, the Voigt put back. */
static double bin_value(const vg_fft_work *w, const vg_fft_plan *p, long k)
{
    double f = w->data[2 * bin_index(k, p->n)];

    if (p->damped)
        f += exp(vg_multimode_ln_voigt(p->e_ref + (double)k * p->de - p->e_bar,
                                       sqrt(p->s2), p->g_bar));
    return f;
}

/* Estimated aliasing of the damped remainder at bin k: its algebraic tails
 * 2 c2 / (pi x^3) + 6 c3 / (pi x^4) at the images |p| <= 2 of the mean, four
 * times over. */
static double damped_alias(const vg_fft_plan *p, long k)
{
    double L = (double)p->n * p->de, x0 = p->e_ref + (double)k * p->de - p->e_bar, a = 0.0;

    if (!p->damped)
        return 0.0;
    for (int q = -2; q <= 2; q++) {
        double x = fabs(x0 + (double)q * L);
        if (q != 0)
            a += 2.0 * p->c2 / (VG_PI * x * x * x) + 6.0 * p->c3 / (VG_PI * x * x * x * x);
    }
    return 4.0 * a;
}

static void point_result(double f, double fmax, double abs_err, vg_fft_point *out)
{
    out->err = f > 0.0 ? abs_err / f : HUGE_VAL;
    out->trusted = f > FLOOR * fmax && out->err <= TRUST_ERR;
    out->ln_f = out->trusted ? log(f) : log(fabs(f) + abs_err);
    if (!out->trusted)
        out->err = 1.0;
}

vg_status vg_fft_eval(vg_fft_work *w, const vg_fft_plan *plan,
                      const vg_multimode_system *sys, vg_fft_point *out,
                      vg_error *err)
{
    double noise, f_max = 0.0;
    vg_status st;

    if (!w || !plan || !out || w->n != plan->n)
        return vg_error_set(err, VG_ENUMERIC,
                            "FFT called without a workspace of the plan's length %zu",
                            plan ? plan->n : (size_t)0);
    if ((st = vg_multimode_check(sys, plan->reorg, plan->temperature, err)) != VG_OK)
        return st;
    noise = fill_samples(w, sys, plan);
    if (gsl_fft_complex_backward(w->data, 1, plan->n, w->wt, w->ws) != GSL_SUCCESS)
        return vg_error_set(err, VG_ENUMERIC, "GSL's FFT of length %zu failed", plan->n);
    for (long k = plan->k_lo; k < plan->k_lo + (long)plan->n; k++)
        f_max = fmax(f_max, bin_value(w, plan, k));
    for (size_t i = 0; i < plan->n_gaps; i++) {
        long k = plan->k_gap0 + (long)(i * plan->stride);
        double f = bin_value(w, plan, k);
        point_result(f, f_max, plan->alias + plan->trunc + noise + damped_alias(plan, k), &out[i]);
        if (!isfinite(out[i].ln_f) || !isfinite(out[i].err))
            return vg_error_set(err, VG_ENUMERIC,
                                "FFT produced a non-finite value at gap %g meV",
                                plan->gap_lo + (double)i * plan->gap_step);
    }
    return VG_OK;
}

vg_status vg_fft_alloc(size_t n, vg_fft_work **out, vg_error *err)
{
    vg_fft_work *w;

    if (!out)
        return vg_error_set(err, VG_EUSAGE, "FFT workspace: no place for the result");
    *out = NULL;
    if (n == 0 || n > SIZE_MAX / (2 * sizeof(double)))
        return vg_error_set(err, VG_EUSAGE, "FFT workspace: length must be > 0 (got %zu)", n);
    w = calloc(1, sizeof *w);
    if (!w)
        return vg_error_set(err, VG_ENOMEM, "out of memory for the FFT workspace");
    w->n = n;
    w->data = malloc(2 * n * sizeof *w->data);
    w->wt = gsl_fft_complex_wavetable_alloc(n);
    w->ws = gsl_fft_complex_workspace_alloc(n);
    if (!w->data || !w->wt || !w->ws) {
        vg_fft_free(w);
        return vg_error_set(err, VG_ENOMEM, "out of memory for an FFT of length %zu", n);
    }
    *out = w;
    return VG_OK;
}

void vg_fft_free(vg_fft_work *w)
{
    if (!w)
        return;
    free(w->data);
    if (w->wt)
        gsl_fft_complex_wavetable_free(w->wt);
    if (w->ws)
        gsl_fft_complex_workspace_free(w->ws);
    free(w);
}
