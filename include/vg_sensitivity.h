/*
 * Local sensitivity at one operating point: the elasticities
 * d ln M / d ln p of M = k_total, the ratio k_assisted / k_elastic and the
 * isotope effect k_light / k_heavy (with [isotope]) with respect to each of
 * the six parameters p, each with an error bound estimate.  For the gap,
 * which may be zero or negative, the elasticity is gap * d ln M / d gap
 * (the same quantity; its sign then carries the gap's sign).
 *
 * ln M comes from vg_evaluate (the log10 metrics times ln 10).  The
 * coupling V enters only the golden-rule prefactor V^2 (docs/theory.md,
 * section 3), so its elasticities are exact: 2 for k_total, 0 for the
 * ratio and the isotope effect.  Every other one is a derivative by
 * central differences with Richardson extrapolation (Ridders), steps kept
 * inside the accepted domain (one-sided at its edge); the reported error is
 * the extrapolation's own error estimate, plus the function's noise (the
 * kernel's truncation tolerance and rounding) times the amplification of
 * the chosen estimate, plus the spread between two independent tableaus
 * started ten steps apart.  docs/config.md ("sensitivity") has the rules
 * for parameters at zero.
 *
 * Pure: no I/O, no allocation, no static state.  Called by the sensitivity
 * command (src/cmd_sensitivity.c).
 */
#ifndef VG_SENSITIVITY_H
#define VG_SENSITIVITY_H

#include <stddef.h>
#include "vg_config.h"
#include "vg_status.h"

typedef enum {
    VG_SENS_K_TOTAL = 0,      /* k_total (log10_k_total) */
    VG_SENS_RATIO,            /* k_assisted / k_elastic (log10_ratio) */
    VG_SENS_ISOTOPE_EFFECT,   /* k_light / k_heavy (log10_isotope_effect), [isotope] only */
    VG_SENS_N
} vg_sens_metric;

typedef struct {
    const char *name;         /* "k_total", "ratio", "isotope_effect" */
    vg_metric_id metric;      /* the log10 metric it is computed from */
    const char *markup;       /* Pango markup for figures */
} vg_sens_metric_info;

const vg_sens_metric_info *vg_sens_metric_get(vg_sens_metric m);

typedef enum {
    VG_SENS_NUMERIC = 0,  /* finite differences, with their error estimate */
    VG_SENS_ANALYTIC,     /* exact (coupling); error 0 */
    VG_SENS_AT_ZERO,      /* the parameter is 0 (gap = 0, huang_rhys = 0): the
                             elasticity p d ln M / dp is exactly 0; the finite
                             derivative d ln M / dp is reported beside it */
    VG_SENS_UNDEFINED     /* no value: see why */
} vg_sens_kind;

typedef struct {
    vg_sens_kind kind;
    double elasticity;      /* d ln M / d ln p  (gap: gap d ln M / d gap) */
    double elasticity_err;  /* its error bound estimate, >= 0 */
    double deriv;           /* d ln M / dp, per canonical unit (meV^-1, K^-1, 1) */
    double deriv_err;
    double step;            /* largest step of the chosen estimate, in ln p (or p for
                               the gap and for a parameter at 0); 0 when analytic */
    int side;               /* 0 central, +1 forward, -1 backward differences */
    char why[128];          /* VG_SENS_UNDEFINED: the reason; "" otherwise */
} vg_sens_entry;

typedef struct {
    double v[VG_NPARAM];               /* the operating point, canonical units */
    int on[VG_SENS_N];                 /* 1 where the metric is configured */
    int defined[VG_SENS_N];            /* 1 where ln M exists at the point */
    double ln_m[VG_SENS_N];            /* ln M at the point (where defined) */
    char why[VG_SENS_N][128];          /* !defined: the reason */
    vg_sens_entry e[VG_SENS_N][VG_NPARAM];
    size_t evaluations;                /* model evaluations used */
} vg_sens_result;

/* The accepted domain of parameter p (docs/config.md, "[parameters]"), the
 * interval every difference step stays in; with [isotope], narrowed so that
 * the heavy isotopologue's mode and Huang-Rhys factor stay in it too (as
 * the loader demands). */
void vg_sensitivity_domain(const vg_config *cfg, vg_param_id p, double *lo, double *hi);

/* Elasticities of every configured metric at v (canonical units, inside
 * the accepted domain) with cfg's model settings.  Fails (VG_ENUMERIC,
 * with vg_evaluate's message) only if v itself cannot be evaluated;
 * entries that cannot be computed are VG_SENS_UNDEFINED with a reason. */
vg_status vg_sensitivity_compute(const vg_config *cfg, const double v[VG_NPARAM],
                                 vg_sens_result *res, vg_error *err);

/* Parameters by decreasing |elasticity| of metric m (m < 0: the largest
 * |elasticity| over the metrics defined at the point), undefined entries
 * last, ties in parameter order. */
void vg_sensitivity_rank(const vg_sens_result *res, int m, vg_param_id order[VG_NPARAM]);

/* ---- the differentiator, exposed for tests ---------------------------- */

/* A function of one variable; sets *ok = 0 where it has no value. */
typedef double (*vg_sens_fn)(double x, void *ctx, int *ok);

typedef struct {
    double value;           /* f'(x) */
    double err;             /* error bound estimate, >= 0 */
    double step;            /* largest step of the chosen estimate */
    int side;               /* 0 central, +1 forward, -1 backward */
    size_t evaluations;
} vg_deriv;

/* f'(x) for x in [lo, hi] with every evaluation inside [lo, hi] (central
 * when there is room, else one-sided into the interval), starting from the
 * trial step h0 > 0 (shrunk until the second difference of f over it is
 * small).  noise bounds |f computed - f| near x (absolute; rounding at the
 * scale of f(x) is added).  VG_ENUMERIC if no finite estimate exists
 * (f has no value at every step tried). */
vg_status vg_sensitivity_deriv(vg_sens_fn f, void *ctx, double x, double lo, double hi,
                               double h0, double noise, vg_deriv *d, vg_error *err);

#endif
