/*
 * Prior distributions of uncertain parameters, in canonical units (meV, K,
 * dimensionless), for uncertainty and global sensitivity analysis: uniform,
 * log-uniform, normal and log-normal, their validation, their inverse
 * cumulative distribution functions (which map points of the unit cube to
 * parameter values) and their closed-form moments.
 *
 * Called by the config parser (vg_prior_check; src/config.c adds the
 * location to the message) and by the uncertainty analysis, which maps
 * Sobol' points to parameter sets (vg_prior_quantile_truncated with the
 * parameter's accepted domain; src/uncertainty.c).
 * Pure: no I/O, no allocation, no static state.
 */
#ifndef VG_PRIOR_H
#define VG_PRIOR_H

#include "vg_status.h"

typedef enum {
    VG_PRIOR_UNIFORM = 0,    /* a .. b, a < b */
    VG_PRIOR_LOGUNIFORM = 1, /* a .. b, 0 < a < b: ln x uniform on ln a .. ln b */
    VG_PRIOR_NORMAL = 2,     /* mean a, standard deviation b > 0 */
    VG_PRIOR_LOGNORMAL = 3   /* median a > 0; ln x normal with standard deviation b > 0 */
} vg_prior_kind;

typedef struct vg_prior {
    vg_prior_kind kind;
    double a, b; /* meaning per kind above, canonical units (b of a log-normal: of ln x) */
} vg_prior;

/* Whether p is a valid prior for a parameter whose accepted domain is the
 * closed range [lo_allowed, hi_allowed] (lo_allowed < hi_allowed; either may
 * be infinite): a and b finite and valid for the kind; a uniform or
 * log-uniform range inside the domain; the mean of a normal and the median
 * of a log-normal inside it (such priors are then sampled truncated to the
 * domain, vg_prior_quantile_truncated).  The message names what is wrong and
 * has no location prefix, e.g. "lognormal sigma must be > 0 (got -1)".
 * Returns VG_OK or VG_ECONFIG. */
vg_status vg_prior_check(const vg_prior *p, double lo_allowed, double hi_allowed, vg_error *err);

/* The value whose cumulative probability is u (the inverse CDF; for the
 * normal kinds through gsl_cdf_ugaussian_Pinv and _Qinv).  For the normal
 * kinds u is clamped to [DBL_MIN, 1 - DBL_EPSILON / 2] (a NaN is taken as
 * DBL_MIN), so they reach about 37.5 standard deviations below the centre
 * and 8.2 above; for the bounded kinds to [0, 1] (a NaN as 0), u = 0 and 1
 * giving the ends.  The result is always finite: clamped to [a, b] for the
 * bounded kinds and to [-DBL_MAX, DBL_MAX] (log-normal: [0, DBL_MAX]) where
 * the formula would overflow.  Non-decreasing in u (to rounding).  p must
 * have passed vg_prior_check. */
double vg_prior_quantile(const vg_prior *p, double u);

/* The same for p truncated to [lo, hi] (lo < hi; either may be infinite):
 * u is mapped onto [F(lo), F(hi)] of the prior's CDF F and inverted.  For
 * the normal kinds the interval is taken in whichever tail keeps the
 * probabilities representable (the upper tail through the complement Q),
 * and an interval so far out that its probabilities underflow is inverted
 * in the log domain, so the result is finite, inside [lo, hi] and
 * non-decreasing in u (to rounding) wherever the interval lies.  The
 * bounded kinds are sampled on the intersection of [a, b] and [lo, hi] (an
 * empty intersection gives the nearest end of [lo, hi]).  p must have
 * passed vg_prior_check. */
double vg_prior_quantile_truncated(const vg_prior *p, double u, double lo, double hi);

/* Mean and standard deviation of the untruncated prior, closed forms:
 * uniform (a + b) / 2, (b - a) / sqrt(12); log-uniform with L = ln(b / a):
 * mean (b - a) / L and variance mean ((a + b) / 2 - mean) (from
 * E[x^2] = (b^2 - a^2) / (2 L)); normal a, b; log-normal a exp(b^2 / 2) and
 * a exp(b^2 / 2) sqrt(exp(b^2) - 1).  Return VG_OK, VG_ECONFIG for an
 * invalid prior (as vg_prior_check on the whole real line), or VG_ENUMERIC
 * when the value would overflow (a log-normal with sigma of order 30). */
vg_status vg_prior_mean(const vg_prior *p, double *mean, vg_error *err);
vg_status vg_prior_sd(const vg_prior *p, double *sd, vg_error *err);

#endif
