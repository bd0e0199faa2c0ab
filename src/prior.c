/*
 * Prior distributions of uncertain parameters (see vg_prior.h): validation
 * for the config parser, inverse CDFs for the sampler, closed-form moments.
 *
 * Every sampling path goes through one truncated inverse CDF; the plain
 * quantile is the truncation to the whole real line.  The normal kinds work
 * in standard units z = (x - mean) / sd (ln x for the log-normal): the
 * interval [zl, zh] is moved to the lower tail by symmetry when it lies in
 * the upper one, where P(z) keeps full relative precision, and inverted
 * with gsl_cdf_ugaussian_Pinv; when the probability to invert is below
 * DBL_MIN the interval is so far out (beyond about 37.5 standard
 * deviations) that the inversion is done on ln P(z) instead, by Newton's
 * method (ln P is concave and increasing, so the iteration converges from
 * any start).
 *
 * Pure: no I/O, no allocation, no static state.
 */
#include <float.h>
#include <math.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_erf.h>

#include "vg_prior.h"

#define SQRT2 1.41421356237309504880168872420969808
#define LN2 0.693147180559945309417232121458176568
#define LN_SQRT_2PI 0.918938533204672741780329736405617640 /* ln sqrt(2 pi) */
#define TWO_PI 6.28318530717958647692528676655900577

/* The u range of the normal kinds: the smallest normal double up to the
 * largest double below 1, so that no inverse CDF sees 0 or 1. */
#define U_MIN DBL_MIN
#define U_MAX (1.0 - DBL_EPSILON / 2.0)

/* Newton iterations for the log-domain inversion; quadratic convergence
 * from the asymptotic start needs about four. */
#define NEWTON_MAX 60

static const char *kind_name(vg_prior_kind k)
{
    switch (k) {
    case VG_PRIOR_UNIFORM: return "uniform";
    case VG_PRIOR_LOGUNIFORM: return "loguniform";
    case VG_PRIOR_NORMAL: return "normal";
    case VG_PRIOR_LOGNORMAL: return "lognormal";
    }
    return "?";
}

static double clamp(double x, double lo, double hi)
{
    return fmax(lo, fmin(hi, x)); /* a NaN x gives hi */
}

/* ------------------------------------------------------- validation --- */

/* The kind's own rules on a and b. */
static vg_status check_params(const vg_prior *p, vg_error *err)
{
    const char *k = kind_name(p->kind);

    if (p->kind == VG_PRIOR_LOGUNIFORM && !(p->a > 0.0))
        return vg_error_set(err, VG_ECONFIG, "%s lower bound must be > 0 (got %g)", k, p->a);
    switch (p->kind) {
    case VG_PRIOR_UNIFORM:
    case VG_PRIOR_LOGUNIFORM:
        if (!(p->a < p->b))
            return vg_error_set(err, VG_ECONFIG,
                                "%s lower bound must be below the upper bound (got %g and %g)",
                                k, p->a, p->b);
        return VG_OK;
    case VG_PRIOR_LOGNORMAL:
        if (!(p->a > 0.0))
            return vg_error_set(err, VG_ECONFIG, "%s median must be > 0 (got %g)", k, p->a);
        if (!(p->b > 0.0))
            return vg_error_set(err, VG_ECONFIG, "%s sigma must be > 0 (got %g)", k, p->b);
        return VG_OK;
    case VG_PRIOR_NORMAL:
        if (!(p->b > 0.0))
            return vg_error_set(err, VG_ECONFIG,
                                "%s standard deviation must be > 0 (got %g)", k, p->b);
        return VG_OK;
    }
    return VG_OK;
}

vg_status vg_prior_check(const vg_prior *p, double lo_allowed, double hi_allowed, vg_error *err)
{
    const char *k = kind_name(p->kind);
    vg_status st;

    if (p->kind != VG_PRIOR_UNIFORM && p->kind != VG_PRIOR_LOGUNIFORM &&
        p->kind != VG_PRIOR_NORMAL && p->kind != VG_PRIOR_LOGNORMAL)
        return vg_error_set(err, VG_ECONFIG, "unknown prior kind %d", (int)p->kind);
    if (!isfinite(p->a) || !isfinite(p->b))
        return vg_error_set(err, VG_ECONFIG, "%s parameters must be finite (got %g and %g)", k,
                            p->a, p->b);
    if (!(lo_allowed < hi_allowed))
        return vg_error_set(err, VG_ECONFIG, "the allowed range %g..%g is empty", lo_allowed,
                            hi_allowed);
    st = check_params(p, err);
    if (st != VG_OK)
        return st;
    if (p->kind == VG_PRIOR_UNIFORM || p->kind == VG_PRIOR_LOGUNIFORM) {
        if (p->a < lo_allowed || p->b > hi_allowed)
            return vg_error_set(err, VG_ECONFIG,
                                "%s range %g..%g must lie within the allowed range %g..%g", k,
                                p->a, p->b, lo_allowed, hi_allowed);
    } else if (p->a < lo_allowed || p->a > hi_allowed) {
        return vg_error_set(err, VG_ECONFIG, "%s %s %g must lie within the allowed range %g..%g",
                            k, p->kind == VG_PRIOR_NORMAL ? "mean" : "median", p->a, lo_allowed,
                            hi_allowed);
    }
    return VG_OK;
}

/* ----------------------------------------------- truncated normal --- */

/* ln P(z), P the standard normal CDF, accurate far into the lower tail:
 * P(z) = erfc(-z / sqrt 2) / 2 (Abramowitz & Stegun 26.2.29). */
static double log_cdf(double z)
{
    gsl_sf_result r;

    if (isinf(z)) /* gsl_sf_log_erfc_e gives a NaN at infinity */
        return z < 0.0 ? -INFINITY : 0.0;
    if (gsl_sf_log_erfc_e(-z / SQRT2, &r) != GSL_SUCCESS || isnan(r.val))
        return z < 0.0 ? -INFINITY : 0.0; /* not for a finite z */
    return r.val - LN2;
}

/* The z in [zl, zh] with ln P(z) = t, for an interval far in the lower
 * tail.  Start: the asymptotic P(z) ~ phi(z) / |z| (A&S 26.2.12, leading
 * term) solved with ln z^2 ~ ln(-2 t); then Newton on ln P, whose slope is
 * phi(z) / P(z). */
static double log_domain_inverse(double t, double zl, double zh)
{
    double y = -2.0 * t;
    double z = -sqrt(fmax(y - log(y) - log(TWO_PI), 1.0));

    for (int i = 0; i < NEWTON_MAX; i++) {
        double lp = log_cdf(z);
        double slope = exp(-0.5 * z * z - LN_SQRT_2PI - lp);
        double step = (lp - t) / slope;

        if (!isfinite(step))
            break;
        z -= step;
        if (fabs(step) <= 2.0 * DBL_EPSILON * fabs(z))
            break;
    }
    return clamp(z, zl, zh);
}

/* The quantile u of the standard normal truncated to [zl, zh], zl < zh:
 * the z with P(z) = (1 - u) P(zl) + u P(zh), or equivalently
 * Q(z) = (1 - u) Q(zl) + u Q(zh), solved through whichever of the two is
 * below 1/2 so that it keeps full relative precision. */
static double std_normal_truncated(double zl, double zh, double u)
{
    double pl, ph, p;

    if (zl > 0.0) /* upper tail: P(-z) = Q(z) */
        return -std_normal_truncated(-zh, -zl, 1.0 - u);
    pl = gsl_cdf_ugaussian_P(zl);
    ph = gsl_cdf_ugaussian_P(zh);
    p = pl + u * (ph - pl);
    if (p > 0.5) { /* zl <= 0 here, so Q(zl) >= 1/2 and q >= (1 - u) / 2 */
        double q = (1.0 - u) * gsl_cdf_ugaussian_Q(zl) + u * gsl_cdf_ugaussian_Q(zh);

        return clamp(gsl_cdf_ugaussian_Qinv(q), zl, zh);
    }
    if (p >= DBL_MIN)
        return clamp(gsl_cdf_ugaussian_Pinv(p), zl, zh);
    {
        /* ln(u ph + (1 - u) pl) from the logs, which do not underflow */
        double lh = log_cdf(zh), ll = log_cdf(zl);
        double t = lh + log(u + (1.0 - u) * exp(ll - lh));

        return log_domain_inverse(t, zl, zh);
    }
}

/* Normal (log-normal on ln x) truncated to [lo, hi]: in standard units. */
static double normal_truncated(double mean, double sd, double u, double lo, double hi)
{
    double zl = (lo - mean) / sd, zh = (hi - mean) / sd;

    if (!(zl < zh)) /* an interval narrower than sd's rounding */
        return clamp(mean, lo, hi);
    return clamp(mean + sd * std_normal_truncated(zl, zh, u), lo, hi);
}

static double lognormal_truncated(double median, double sigma, double u, double lo, double hi)
{
    double lm = log(median);
    double ll = lo > 0.0 ? log(lo) : -INFINITY;
    double x;

    if (!(hi > 0.0))
        return hi; /* no positive value in [lo, hi] */
    x = exp(normal_truncated(lm, sigma, u, ll, log(hi)));
    return clamp(x, fmax(lo, 0.0), hi);
}

/* ------------------------------------------------- bounded kinds --- */

/* [a, b] intersected with [lo, hi] in *l, *h; 0 if empty, the nearest end
 * of [lo, hi] then in *l. */
static int intersect(double a, double b, double lo, double hi, double *l, double *h)
{
    *l = fmax(a, lo);
    *h = fmin(b, hi);
    if (*l <= *h)
        return 1;
    *l = b < lo ? lo : hi;
    return 0;
}

static double uniform_on(double l, double h, double u)
{
    double w = h - l;
    double x = isfinite(w) ? l + u * w : l * (1.0 - u) + h * u; /* w overflows */

    return clamp(x, l, h);
}

static double loguniform_on(double l, double h, double u)
{
    double ll = log(l);

    return clamp(exp(ll + u * (log(h) - ll)), l, h);
}

/* --------------------------------------------------------- quantiles --- */

/* u for the normal kinds: inside [U_MIN, U_MAX] (a NaN gives U_MIN). */
static double normal_u(double u)
{
    return u > U_MIN ? fmin(u, U_MAX) : U_MIN;
}

double vg_prior_quantile_truncated(const vg_prior *p, double u, double lo, double hi)
{
    double l, h, x;

    switch (p->kind) {
    case VG_PRIOR_UNIFORM:
        u = u > 0.0 ? fmin(u, 1.0) : 0.0; /* a NaN gives 0 */
        x = intersect(p->a, p->b, lo, hi, &l, &h) ? uniform_on(l, h, u) : l;
        break;
    case VG_PRIOR_LOGUNIFORM:
        u = u > 0.0 ? fmin(u, 1.0) : 0.0;
        x = intersect(p->a, p->b, lo, hi, &l, &h) ? loguniform_on(l, h, u) : l;
        break;
    case VG_PRIOR_NORMAL:
        x = normal_truncated(p->a, p->b, normal_u(u), lo, hi);
        break;
    case VG_PRIOR_LOGNORMAL:
        x = lognormal_truncated(p->a, p->b, normal_u(u), lo, hi);
        break;
    default:
        x = p->a;
        break;
    }
    return clamp(x, -DBL_MAX, DBL_MAX);
}

double vg_prior_quantile(const vg_prior *p, double u)
{
    return vg_prior_quantile_truncated(p, u, -INFINITY, INFINITY);
}

/* ----------------------------------------------------------- moments --- */

static vg_status finite_or_overflow(const vg_prior *p, const char *what, double v, double *out,
                                    vg_error *err)
{
    if (!isfinite(v))
        return vg_error_set(err, VG_ENUMERIC, "%s %s overflows (sigma %g)", kind_name(p->kind),
                            what, p->b);
    *out = v;
    return VG_OK;
}

static double loguniform_mean(double a, double b)
{
    return (b - a) / log(b / a);
}

vg_status vg_prior_mean(const vg_prior *p, double *mean, vg_error *err)
{
    vg_status st = vg_prior_check(p, -INFINITY, INFINITY, err);

    if (st != VG_OK)
        return st;
    switch (p->kind) {
    case VG_PRIOR_UNIFORM: *mean = 0.5 * (p->a + p->b); break;
    case VG_PRIOR_LOGUNIFORM: *mean = loguniform_mean(p->a, p->b); break;
    case VG_PRIOR_NORMAL: *mean = p->a; break;
    case VG_PRIOR_LOGNORMAL:
        return finite_or_overflow(p, "mean", exp(log(p->a) + 0.5 * p->b * p->b), mean, err);
    }
    return VG_OK;
}

vg_status vg_prior_sd(const vg_prior *p, double *sd, vg_error *err)
{
    vg_status st = vg_prior_check(p, -INFINITY, INFINITY, err);
    double m, s2;

    if (st != VG_OK)
        return st;
    switch (p->kind) {
    case VG_PRIOR_UNIFORM: *sd = (p->b - p->a) / sqrt(12.0); break;
    case VG_PRIOR_LOGUNIFORM:
        m = loguniform_mean(p->a, p->b);
        *sd = sqrt(fmax(m * (0.5 * (p->a + p->b) - m), 0.0));
        break;
    case VG_PRIOR_NORMAL: *sd = p->b; break;
    case VG_PRIOR_LOGNORMAL:
        /* a e^{s^2/2} sqrt(e^{s^2} - 1) = a e^{s^2} sqrt(1 - e^{-s^2}), which
         * overflows only when the value does */
        s2 = p->b * p->b;
        return finite_or_overflow(p, "standard deviation",
                                  exp(log(p->a) + s2 + 0.5 * log(-expm1(-s2))), sd, err);
    }
    return VG_OK;
}
