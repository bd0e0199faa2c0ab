/*
 * Local elasticities at one operating point (see vg_sensitivity.h).
 *
 * The derivative is Ridders' method: central differences
 * D(h) = (f(x+h) - f(x-h)) / 2h at steps h, h/c, h/c^2, ... (c = 1.4),
 * extrapolated to h -> 0 by Richardson's rule in a Neville tableau, the
 * entry with the smallest estimated error taken (Ridders, Adv. Eng. Software
 * 4, 75 (1982); the tableau as in Press et al., Numerical Recipes, 2nd ed.,
 * section 5.7, from memory).  D(h) has an error series in h^2, h^4, ...;
 * the one-sided D(h) = (f(x+h) - f(x)) / h used at the edge of the domain
 * one in h, h^2, ..., so its columns eliminate one power at a time.
 *
 * The error reported is
 *   (a) the tableau's estimate for the chosen entry (its distance from the
 *       two lower-order entries it was made from), plus
 *   (b) the noise bound of f times the factor by which the chosen entry
 *       amplifies noise in f (tracked through the same linear combinations;
 *       1/h for a central quotient), plus
 *   (c) when two tableaus, the second started at an eighth of the first
 *       one's step, are compared: their distance, if it is larger.
 * The noise of ln M is bounded by the kernel's truncation tolerance (twice,
 * for a difference of two truncated sums) and rounding at the scale of
 * ln M (docs/theory.md, section 3: the log-domain terms are no larger
 * than |ln k| plus the prefactor).
 */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "vg_const.h"
#include "vg_evaluate.h"
#include "vg_sensitivity.h"

static const vg_sens_metric_info metric_info[VG_SENS_N] = {
    [VG_SENS_K_TOTAL] = {"k_total", VG_M_LOG10_K_TOTAL, "<i>k</i><sub>total</sub>"},
    [VG_SENS_RATIO] = {"ratio", VG_M_LOG10_RATIO,
                       "<i>k</i><sub>assisted</sub> / <i>k</i><sub>elastic</sub>"},
    [VG_SENS_ISOTOPE_EFFECT] = {"isotope_effect", VG_M_LOG10_ISOTOPE_EFFECT,
                                "<i>k</i><sub>light</sub> / <i>k</i><sub>heavy</sub>"},
};

const vg_sens_metric_info *vg_sens_metric_get(vg_sens_metric m)
{
    return (unsigned)m < VG_SENS_N ? &metric_info[m] : NULL;
}

/* docs/config.md, "[parameters]", accepted values; the same numbers as the
 * loader's table in src/config.c (tests/test_sensitivity.c checks that the
 * loader accepts each end and refuses just beyond it). */
static const double domain[VG_NPARAM][2] = {
    [VG_P_GAP] = {-3000.0, 3000.0},      [VG_P_REORG] = {0.1, 3000.0},
    [VG_P_COUPLING] = {0.0, 1000.0},     [VG_P_HUANG_RHYS] = {0.0, 50.0},
    [VG_P_MODE] = {1.0, 1000.0},         [VG_P_TEMPERATURE] = {1.0, 5000.0},
};

void vg_sensitivity_domain(const vg_config *cfg, vg_param_id p, double *lo, double *hi)
{
    double r = cfg->isotope.frequency_ratio;

    *lo = domain[p][0];
    *hi = domain[p][1];
    if (!cfg->isotope.on)
        return;
    /* heavy: hbar omega / r >= 1 meV; Born-Oppenheimer: S r <= 50 (src/evaluate.c);
     * the ends rounded inwards so that the heavy values are in range exactly */
    if (p == VG_P_MODE && *lo * r > *lo) {
        double lo_h = *lo;
        *lo = *lo * r;
        while (*lo / r < lo_h)
            *lo = nextafter(*lo, HUGE_VAL);
    }
    if (p == VG_P_HUANG_RHYS && cfg->isotope.rule == VG_HR_BORN_OPPENHEIMER) {
        double hi_h = *hi;
        *hi = *hi / r;
        while (*hi * r > hi_h)
            *hi = nextafter(*hi, 0.0);
    }
}

/* ------------------------------------------------------ differentiator --- */

#define NTAB 10          /* rows of one tableau */
#define CON 1.4          /* step ratio between rows */
#define SAFE 2.0         /* stop a tableau once the diagonal grows by this */
#define CURV_MAX 0.05    /* the trial step is shrunk until |second difference| <= this */
#define ATTEMPTS 4       /* tableaus, each started at 1/8 of the previous step */

typedef struct {
    vg_sens_fn f;
    void *ctx;
    double x, fx;
    int side;            /* 0 central, +1 / -1 one-sided */
    size_t nev;
} diff;

static double eval(diff *d, double x, int *ok)
{
    double y;

    *ok = 1;
    d->nev++;
    y = d->f(x, d->ctx, ok);
    if (!isfinite(y))
        *ok = 0;
    return y;
}

/* The difference quotient at step h; 0 if f has no value there. */
static int quotient(diff *d, double h, double *q)
{
    int ok1, ok2 = 1;
    double a, b;

    if (d->x + h == d->x || d->x - h == d->x) /* a step lost in x's rounding */
        return 0;
    if (d->side == 0) {
        a = eval(d, d->x + h, &ok1);
        b = ok1 ? eval(d, d->x - h, &ok2) : 0.0;
        *q = (a - b) / (2.0 * h);
    } else {
        a = eval(d, d->x + d->side * h, &ok1);
        *q = (a - d->fx) / (d->side * h);
    }
    return ok1 && ok2 && isfinite(*q);
}

/* |second difference| of f over step h (central, or one-sided 0, h, 2h). */
static int curvature(diff *d, double h, double *c2)
{
    int ok1, ok2 = 1;
    double a, b;

    if (d->side == 0) {
        a = eval(d, d->x + h, &ok1);
        b = ok1 ? eval(d, d->x - h, &ok2) : 0.0;
        *c2 = fabs(a - 2.0 * d->fx + b);
    } else {
        a = eval(d, d->x + d->side * h, &ok1);
        b = ok1 ? eval(d, d->x + 2.0 * d->side * h, &ok2) : 0.0;
        *c2 = fabs(b - 2.0 * a + d->fx);
    }
    return ok1 && ok2 && isfinite(*c2);
}

typedef struct {
    int ok;
    double value, err, step;
} estimate;

/* One tableau started at step h; delta is the noise bound of f. */
static estimate ridders(diff *d, double h, double delta)
{
    double a[NTAB][NTAB], amp[NTAB][NTAB], hs[NTAB];
    double q, best = HUGE_VAL;
    double ratio = d->side == 0 ? CON * CON : CON; /* the power eliminated per column */
    estimate e = {0, 0.0, 0.0, 0.0};

    if (!quotient(d, h, &q))
        return e;
    a[0][0] = q;
    amp[0][0] = (d->side == 0 ? 1.0 : 2.0) / h;
    hs[0] = h;
    e = (estimate){1, q, HUGE_VAL, h};
    for (int i = 1; i < NTAB; i++) {
        double fac = ratio;
        h /= CON;
        hs[i] = h;
        if (!quotient(d, h, &q))
            break;
        a[0][i] = q;
        amp[0][i] = (d->side == 0 ? 1.0 : 2.0) / h;
        for (int j = 1; j <= i; j++) {
            double errt, total;
            a[j][i] = (a[j - 1][i] * fac - a[j - 1][i - 1]) / (fac - 1.0);
            amp[j][i] = (amp[j - 1][i] * fac + amp[j - 1][i - 1]) / (fac - 1.0);
            fac *= ratio;
            errt = fmax(fabs(a[j][i] - a[j - 1][i]), fabs(a[j][i] - a[j - 1][i - 1]));
            total = errt + delta * amp[j][i];
            if (isfinite(a[j][i]) && total <= best) {
                best = total;
                e.value = a[j][i];
                e.err = total;
                e.step = hs[i - j];
            }
        }
        if (fabs(a[i][i] - a[i - 1][i - 1]) >= SAFE * best)
            break;
    }
    if (!isfinite(e.err)) /* a single row: nothing to compare it with */
        e.ok = 0;
    return e;
}

/* Room for steps: central if both sides have at least a thousandth of h0,
 * else one-sided towards the larger side. */
static double pick_side(diff *d, double lo, double hi, double h0)
{
    double left = d->x - lo, right = hi - d->x;
    double room = fmin(left, right);

    if (room >= 1e-3 * h0) {
        d->side = 0;
        return fmin(h0, room);
    }
    d->side = right >= left ? 1 : -1;
    return fmin(h0, 0.5 * fmax(left, right)); /* the curvature probe goes to 2h */
}

vg_status vg_sensitivity_deriv(vg_sens_fn f, void *ctx, double x, double lo, double hi,
                               double h0, double noise, vg_deriv *out, vg_error *err)
{
    diff d = {f, ctx, x, 0.0, 0, 0};
    estimate est[ATTEMPTS];
    double h, h_min, c2, delta, q0;
    int ok, best = -1, agreed = 0;

    memset(out, 0, sizeof *out);
    if (!(h0 > 0.0) || !(x >= lo && x <= hi) || !(noise >= 0.0))
        return vg_error_set(err, VG_ENUMERIC, "derivative: bad arguments (x %g in [%g, %g], "
                            "step %g, noise %g)", x, lo, hi, h0, noise);
    d.fx = eval(&d, x, &ok);
    if (!ok)
        return vg_error_set(err, VG_ENUMERIC, "derivative: the function has no value at %g", x);
    h = pick_side(&d, lo, hi, h0);
    if (!(h > 0.0))
        return vg_error_set(err, VG_ENUMERIC, "derivative: no room for a step at %g in "
                            "[%g, %g]", x, lo, hi);
    /* shrink the trial step until f is nearly quadratic over it, but not
     * below a few thousand ulps of x (or of the trial step, at x = 0) */
    h_min = 4096.0 * DBL_EPSILON * fmax(fabs(x), h0);
    while ((!curvature(&d, h, &c2) || c2 > CURV_MAX) && 0.25 * h >= h_min)
        h *= 0.25;
    if (!quotient(&d, h, &q0))
        q0 = 0.0;
    /* rounding at the scale of f, and of x + h (a shift of eps |x| in x) */
    delta = noise + 64.0 * DBL_EPSILON * (1.0 + fabs(d.fx)) +
            4.0 * DBL_EPSILON * fabs(q0) * (1.0 + fabs(x));
    for (int k = 0; k < ATTEMPTS && !agreed; k++, h /= 8.0) {
        est[k] = ridders(&d, h, delta);
        if (!est[k].ok)
            continue;
        if (best >= 0 && fabs(est[k].value - est[best].value) <= est[k].err + est[best].err)
            agreed = 1;
        if (best < 0 || est[k].err < est[best].err) {
            if (best >= 0)
                est[k].err = fmax(est[k].err, fabs(est[k].value - est[best].value));
            best = k;
        } else {
            est[best].err = fmax(est[best].err, fabs(est[k].value - est[best].value));
        }
    }
    out->evaluations = d.nev;
    if (best < 0)
        return vg_error_set(err, VG_ENUMERIC, "derivative: no finite difference quotient "
                            "near %g", x);
    out->value = est[best].value;
    out->err = est[best].err;
    out->step = est[best].step;
    out->side = d.side;
    return VG_OK;
}

/* ---------------------------------------------------- the model's ln M --- */

typedef struct {
    const vg_config *cfg;
    const double *v;
    vg_param_id p;
    vg_metric_id metric;
    int log_var;          /* 1: x = ln(p / p0); 0: x = p */
    size_t nev;
} model_fn;

static double ln_metric(double x, void *ctx, int *ok)
{
    model_fn *m = ctx;
    double w[VG_NPARAM], lo, hi;
    vg_eval_result r;
    vg_error e;

    memcpy(w, m->v, sizeof w);
    vg_sensitivity_domain(m->cfg, m->p, &lo, &hi);
    w[m->p] = m->log_var ? m->v[m->p] * exp(x) : x;
    /* exp of the domain's log end may miss it by an ulp */
    if (w[m->p] > hi && w[m->p] <= hi * (1.0 + 4.0 * DBL_EPSILON))
        w[m->p] = hi;
    if (w[m->p] < lo && w[m->p] >= lo * (1.0 - 4.0 * DBL_EPSILON))
        w[m->p] = lo;
    m->nev++;
    if (!(w[m->p] >= lo && w[m->p] <= hi) || vg_evaluate(m->cfg, w, &r, &e) != VG_OK ||
        r.metric[m->metric] == VG_FILL) {
        *ok = 0;
        return 0.0;
    }
    return r.metric[m->metric] * VG_LN10;
}

static void set_undefined(vg_sens_entry *e, const char *why)
{
    memset(e, 0, sizeof *e);
    e->kind = VG_SENS_UNDEFINED;
    snprintf(e->why, sizeof e->why, "%s", why);
}

/* Trial step for parameter p, in the variable differenced: about half the
 * smallest scale on which ln k changes shape (the width sqrt(2 lambda kT)
 * of one channel, moved by lambda or by n hbar omega); the differentiator
 * shrinks it further where needed. */
static double trial_step(const vg_eval_result *r, const double v[VG_NPARAM], vg_param_id p)
{
    double sigma = sqrt(2.0 * v[VG_P_REORG] * r->light_mode.kT);
    double n = 1.0 + fabs((double)r->light.n_peak);

    switch (p) {
    case VG_P_GAP: return 0.5 * sigma;
    case VG_P_REORG: return fmin(0.5, 0.5 * sigma / v[VG_P_REORG]);
    case VG_P_MODE: return fmin(0.5, 0.5 * sigma / (n * v[VG_P_MODE]));
    case VG_P_HUANG_RHYS: return v[p] > 0.0 ? 0.25 : 0.1;
    default: return 0.25;
    }
}

static void coupling_entry(vg_sens_metric m, const double v[VG_NPARAM], vg_sens_entry *e)
{
    /* ln k = ln(2 pi / hbar) + 2 ln V + ... (docs/theory.md, section 3): V
     * only in the prefactor, the same for every channel and both
     * isotopologues, so it cancels from the ratio and the isotope effect. */
    memset(e, 0, sizeof *e);
    e->kind = VG_SENS_ANALYTIC;
    e->elasticity = m == VG_SENS_K_TOTAL ? 2.0 : 0.0;
    e->deriv = m == VG_SENS_K_TOTAL ? 2.0 / v[VG_P_COUPLING] : 0.0;
}

static void numeric_entry(const vg_config *cfg, const vg_eval_result *r0,
                          const double v[VG_NPARAM], vg_sens_metric m, vg_param_id p,
                          vg_sens_entry *e, size_t *nev)
{
    model_fn fn = {cfg, v, p, metric_info[m].metric, 0, 0};
    double lo, hi, x = 0.0, h0 = trial_step(r0, v, p);
    double noise = 2.0 * cfg->tolerance * (m == VG_SENS_ISOTOPE_EFFECT ? 2.0 : 1.0);
    vg_deriv d;
    vg_error er;

    vg_sensitivity_domain(cfg, p, &lo, &hi);
    fn.log_var = v[p] > 0.0 && p != VG_P_GAP;
    if (fn.log_var) {
        x = 0.0;
        lo = lo > 0.0 ? log(lo / v[p]) : -HUGE_VAL;
        hi = log(hi / v[p]);
    } else {
        x = v[p];
    }
    memset(e, 0, sizeof *e);
    if (vg_sensitivity_deriv(ln_metric, &fn, x, lo, hi, h0, noise, &d, &er) != VG_OK) {
        *nev += fn.nev;
        set_undefined(e, "no finite difference quotient near the point");
        return;
    }
    *nev += fn.nev;
    e->step = d.step;
    e->side = d.side;
    if (fn.log_var) {
        e->kind = VG_SENS_NUMERIC;
        e->elasticity = d.value;
        e->elasticity_err = d.err;
        e->deriv = d.value / v[p];
        e->deriv_err = d.err / v[p];
    } else {
        e->kind = v[p] == 0.0 ? VG_SENS_AT_ZERO : VG_SENS_NUMERIC;
        e->deriv = d.value;
        e->deriv_err = d.err;
        e->elasticity = v[p] * d.value;
        e->elasticity_err = fabs(v[p]) * d.err;
    }
}

static void metric_undefined_reason(vg_sens_metric m, const double v[VG_NPARAM], char *buf,
                                    size_t len)
{
    if (m == VG_SENS_K_TOTAL && v[VG_P_COUPLING] == 0.0)
        snprintf(buf, len, "k_total is exactly zero (electronic_coupling = 0)");
    else if (m == VG_SENS_RATIO && v[VG_P_HUANG_RHYS] == 0.0)
        snprintf(buf, len, "k_assisted is exactly zero (huang_rhys = 0)");
    else
        snprintf(buf, len, "%s has no value at this point", metric_info[m].name);
}

vg_status vg_sensitivity_compute(const vg_config *cfg, const double v[VG_NPARAM],
                                 vg_sens_result *res, vg_error *err)
{
    vg_eval_result r0;
    vg_status st;

    memset(res, 0, sizeof *res);
    memcpy(res->v, v, sizeof res->v);
    st = vg_evaluate(cfg, v, &r0, err);
    if (st != VG_OK)
        return st;
    res->evaluations = 1;
    for (int m = 0; m < VG_SENS_N; m++) {
        double lm = r0.metric[metric_info[m].metric];
        res->on[m] = m != VG_SENS_ISOTOPE_EFFECT || cfg->isotope.on;
        res->defined[m] = res->on[m] && lm != VG_FILL;
        if (!res->on[m])
            continue;
        if (!res->defined[m])
            metric_undefined_reason((vg_sens_metric)m, v, res->why[m], sizeof res->why[m]);
        else
            res->ln_m[m] = lm * VG_LN10;
        for (int p = 0; p < VG_NPARAM; p++) {
            vg_sens_entry *e = &res->e[m][p];
            if (!res->defined[m])
                set_undefined(e, res->why[m]);
            else if (p == VG_P_COUPLING)
                coupling_entry((vg_sens_metric)m, v, e);
            else
                numeric_entry(cfg, &r0, v, (vg_sens_metric)m, (vg_param_id)p, e,
                              &res->evaluations);
        }
    }
    return VG_OK;
}

/* The key parameters are ranked by: |elasticity|, -1 when undefined. */
static double rank_key(const vg_sens_result *res, int m, int p)
{
    double k = -1.0;

    for (int i = 0; i < VG_SENS_N; i++) {
        const vg_sens_entry *e = &res->e[i][p];
        if ((m >= 0 && i != m) || !res->on[i] || e->kind == VG_SENS_UNDEFINED)
            continue;
        k = fmax(k, fabs(e->elasticity));
    }
    return k;
}

void vg_sensitivity_rank(const vg_sens_result *res, int m, vg_param_id order[VG_NPARAM])
{
    double key[VG_NPARAM];

    for (int p = 0; p < VG_NPARAM; p++) {
        key[p] = rank_key(res, m, p);
        order[p] = (vg_param_id)p;
    }
    /* insertion sort: stable, so ties keep parameter order */
    for (int i = 1; i < VG_NPARAM; i++) {
        vg_param_id t = order[i];
        int j = i;
        while (j > 0 && key[order[j - 1]] < key[t]) {
            order[j] = order[j - 1];
            j--;
        }
        order[j] = t;
    }
}
