/*
 * Tests of the local sensitivity module (vg_sensitivity.h) and of the bar
 * charts (vg_barchart.h).
 *
 * References, each named again beside its check:
 *  - closed-form derivatives of elementary functions (calculus);
 *  - the Marcus rate, the S -> 0 limit of the model (Marcus & Sutin,
 *    Biochim. Biophys. Acta 811, 265 (1985); docs/theory.md 2.1, with
 *    eps = E_D - E_A > 0 downhill and the peak at eps = lambda):
 *        ln k = ln(2 pi / hbar) + 2 ln V - 1/2 ln(4 pi lambda kT)
 *               - (eps - lambda)^2 / (4 lambda kT),
 *    differentiated by hand below;
 *  - the first-order weights at S -> 0: the power series of I_0 and I_1
 *    (Abramowitz & Stegun 9.6.10) in the thermal weights, the Poisson
 *    weights of the frozen mode (docs/theory.md 2.2);
 *  - central differences at two fixed steps computed here, independently of
 *    the module's differentiator;
 *  - the accepted ranges of docs/config.md, as the loader enforces them;
 *  - SOURCE_DATE_EPOCH = 10^9 is 2001-09-09T01:46:40Z (date -u -d @1000000000,
 *    from memory).
 */
#define _GNU_SOURCE /* mkdtemp, nftw, setenv */

#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include "testutil.h"

#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cairo.h>
#include <gsl/gsl_errno.h>

#include "vg_barchart.h"
#include "vg_config.h"
#include "vg_const.h"
#include "vg_evaluate.h"
#include "vg_png.h"
#include "vg_sensitivity.h"

/* ------------------------------------------------------------ helpers --- */

static void assert_within(double got, double want, double tol, const char *what)
{
    if (!(fabs(got - want) <= tol))
        fail_msg("%s: got %.17g, want %.17g (difference %.3g > %.3g)", what, got, want,
                 fabs(got - want), tol);
}

/* A config with every parameter scalar (canonical units), plus extra text
 * (sections after [parameters]). */
static void load_point(vg_config *cfg, const double v[VG_NPARAM], const char *extra)
{
    char text[4096];
    vg_error err = {VG_OK, ""};

    snprintf(text, sizeof text,
             "[parameters]\ngap = %.17g meV\nreorganization = %.17g meV\n"
             "electronic_coupling = %.17g meV\nhuang_rhys = %.17g\nmode = %.17g meV\n"
             "temperature = %.17g K\n%s",
             v[0], v[1], v[2], v[3], v[4], v[5], extra ? extra : "");
    if (vg_config_load_text(cfg, "test.ini", text, 0, NULL, &err) != VG_OK)
        fail_msg("config: %s", err.msg);
}

static void compute(const vg_config *cfg, const double v[VG_NPARAM], vg_sens_result *r)
{
    vg_error err = {VG_OK, ""};

    if (vg_sensitivity_compute(cfg, v, r, &err) != VG_OK)
        fail_msg("sensitivity: %s", err.msg);
}

/* Load the point into cfg and compute its elasticities into a new result
 * (the caller frees both). */
static vg_sens_result *sensitivity_at(vg_config *cfg, const double v[VG_NPARAM],
                                      const char *extra)
{
    vg_sens_result *r = malloc(sizeof *r);

    assert_non_null(r);
    load_point(cfg, v, extra);
    compute(cfg, v, r);
    return r;
}

/* The reported error must cover the actual error (honesty), allowing for
 * the rounding of the closed form itself (a few ulp of its terms), and be
 * small enough to be useful (bound). */
static void assert_honest(double got, double err, double want, double bound, const char *what)
{
    double slack = 1e-13 * (1.0 + fabs(want));

    if (!(err >= 0.0 && isfinite(err)))
        fail_msg("%s: error estimate %g is not a finite number >= 0", what, err);
    if (!(fabs(got - want) <= err + slack))
        fail_msg("%s: got %.17g, want %.17g: actual error %.3g above the reported %.3g",
                 what, got, want, fabs(got - want), err);
    if (!(err <= bound))
        fail_msg("%s: error estimate %.3g above the bound %.3g", what, err, bound);
}

/* ------------------------------------------- the differentiator alone --- */

typedef struct {
    double lo, hi;
    int outside;   /* evaluations outside [lo, hi] */
    int which;
} fn_ctx;

static double test_fn(double x, void *vctx, int *ok)
{
    fn_ctx *c = vctx;

    if (x < c->lo || x > c->hi)
        c->outside++;
    switch (c->which) {
    case 0: return sin(x);
    case 1: return exp(3.0 * x);
    case 2: return log(1e-5 + x);
    case 3: return sqrt(x);
    case 4: return 1.0 / (1.0 + 1e4 * (x - 0.3) * (x - 0.3));
    case 5: return x * x + 1e-9 * sin(1e8 * x); /* x^2 with noise below 1e-9 */
    default: *ok = x == 0.5; return 1.0;       /* a value at 0.5 only */
    }
}

typedef struct {
    int which;
    double x, lo, hi, h0, noise, exact, bound;
    int side;
} deriv_case;

/* Derivatives of elementary functions (calculus): cos, 3 e^{3x}, 1/(1e-5 + x),
 * 1 / (2 sqrt x), the Lorentzian's -2a(x-c) / (1 + a(x-c)^2)^2, 2x. */
static void test_deriv_elementary(void **state)
{
    const double xl = 0.301, a = 1e4, dl = xl - 0.3;
    const deriv_case cases[] = {
        {0, 0.7, -10, 10, 0.5, 0.0, 0.0, 1e-10, 0},
        {1, 0.2, -1, 1, 0.5, 0.0, 0.0, 1e-9, 0},
        {2, 0.0, 0.0, 1.0, 0.1, 0.0, 1e5, 1e-3, +1},     /* at the lower edge: forward */
        {3, 4.0, 0.0, 4.0, 1.0, 0.0, 0.25, 1e-9, -1},    /* at the upper edge: backward */
        {4, xl, -5, 5, 1.0, 0.0, 0.0, 1e-6, 0},          /* width 0.01, trial step 1 */
        {5, 0.3, -1, 1, 0.2, 1e-9, 0.6, 1e-6, 0},        /* noisy */
    };
    (void)state;
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        const deriv_case *c = &cases[k];
        fn_ctx ctx = {c->lo, c->hi, 0, c->which};
        vg_deriv d;
        vg_error err = {VG_OK, ""};
        double exact = c->exact;
        char what[64];

        if (c->which == 0)
            exact = cos(c->x);
        else if (c->which == 1)
            exact = 3.0 * exp(3.0 * c->x);
        else if (c->which == 4)
            exact = -2.0 * a * dl / ((1.0 + a * dl * dl) * (1.0 + a * dl * dl));
        snprintf(what, sizeof what, "function %d", c->which);
        assert_int_equal(vg_sensitivity_deriv(test_fn, &ctx, c->x, c->lo, c->hi, c->h0, c->noise,
                                              &d, &err), VG_OK);
        assert_int_equal(ctx.outside, 0); /* every step inside [lo, hi] */
        assert_int_equal(d.side, c->side);
        assert_honest(d.value, d.err, exact, c->bound * (1.0 + fabs(exact)), what);
        assert_true(d.step > 0.0);
    }
}

static void test_deriv_errors(void **state)
{
    fn_ctx ctx = {0.0, 1.0, 0, 6};
    vg_deriv d;
    vg_error err = {VG_OK, ""};

    (void)state;
    assert_int_equal(vg_sensitivity_deriv(test_fn, &ctx, 0.5, 0.0, 1.0, 0.0, 0.0, &d, &err),
                     VG_ENUMERIC);
    assert_int_equal(vg_sensitivity_deriv(test_fn, &ctx, 1.5, 0.0, 1.0, 0.1, 0.0, &d, &err),
                     VG_ENUMERIC);
    assert_int_equal(vg_sensitivity_deriv(test_fn, &ctx, 0.5, 0.0, 1.0, 0.1, -1.0, &d, &err),
                     VG_ENUMERIC);
    /* f has a value at x alone: no difference quotient exists */
    assert_int_equal(vg_sensitivity_deriv(test_fn, &ctx, 0.5, 0.0, 1.0, 0.1, 0.0, &d, &err),
                     VG_ENUMERIC);
    assert_non_null(strstr(err.msg, "no finite difference quotient"));
    /* no room at all: lo == hi */
    ctx.which = 0;
    assert_int_equal(vg_sensitivity_deriv(test_fn, &ctx, 0.5, 0.5, 0.5, 0.1, 0.0, &d, &err),
                     VG_ENUMERIC);
}

/* ------------------------------------------------ the Marcus limit --- */

/* Elasticities of the Marcus rate (Marcus & Sutin 1985, docs/theory.md 2.1),
 * with D = eps - lambda and kT in meV:
 *   ln k = c + 2 ln V - 1/2 ln lambda - 1/2 ln T - D^2 / (4 lambda kT)
 *   eps d ln k / d eps       = -eps D / (2 lambda kT)
 *   lambda d ln k / d lambda = -1/2 + (eps^2 - lambda^2) / (4 lambda kT)
 *       because d/d lambda [D^2 / (4 lambda kT)] = -2D / (4 lambda kT) - D^2 / (4 lambda^2 kT)
 *                                               = -(eps - lambda)(eps + lambda) / (4 lambda^2 kT)
 *   T d ln k / dT            = -1/2 + D^2 / (4 lambda kT)     (kT proportional to T)
 *   V d ln k / dV            = 2
 * and d ln k / d eps = -D / (2 lambda kT) where eps = 0. */
typedef struct {
    double gap, lam, V, hw, T;
} marcus_point;

static void marcus_elasticities(const marcus_point *m, double e[VG_NPARAM], double *dgap)
{
    double kT = VG_KB_MEV * m->T, D = m->gap - m->lam;

    e[VG_P_GAP] = -m->gap * D / (2.0 * m->lam * kT);
    e[VG_P_REORG] = -0.5 + (m->gap - m->lam) * (m->gap + m->lam) / (4.0 * m->lam * kT);
    e[VG_P_TEMPERATURE] = -0.5 + D * D / (4.0 * m->lam * kT);
    e[VG_P_COUPLING] = 2.0;
    e[VG_P_MODE] = 0.0;          /* no mode at S = 0 */
    e[VG_P_HUANG_RHYS] = 0.0;    /* the parameter is 0 */
    *dgap = -D / (2.0 * m->lam * kT);
}

/* d ln k_total / dS at S = 0 (first order in S of the weights):
 * thermal W_0 = exp(-S coth(b/2)) I_0(x) = 1 - S coth(b/2) + O(S^2),
 * W_{+-1} = exp(-S coth) e^{+-b/2} I_1(x) = S e^{+-b/2} / (2 sinh(b/2)) + O(S^2)
 * = S (nbar + 1), S nbar (A&S 9.6.10: I_0 = 1 + x^2/4 + ..., I_1 = x/2 + ...),
 * so d ln k / dS = -coth(b/2) + (nbar+1) G_1 / G_0 + nbar G_-1 / G_0;
 * frozen W_0 = e^-S, W_1 = S e^-S: -1 + G_1 / G_0.  G_n / G_0 in logs. */
static double ds_at_zero(const marcus_point *m, int frozen)
{
    double kT = VG_KB_MEV * m->T, b = m->hw / kT, D = m->gap - m->lam, c = 4.0 * m->lam * kT;
    double lg1 = (D * D - (D - m->hw) * (D - m->hw)) / c;
    double lgm = (D * D - (D + m->hw) * (D + m->hw)) / c;
    double ln_nbar = -b - log1p(-exp(-b)), ln_nbar1 = -log1p(-exp(-b)); /* nbar, nbar + 1 */

    if (frozen)
        return -1.0 + exp(lg1);
    return -1.0 / tanh(0.5 * b) + exp(ln_nbar1 + lg1) + exp(ln_nbar + lgm);
}

static const marcus_point marcus_points[] = {
    {250.0, 120.0, 1.3, 180.0, 298.15},     /* inverted region */
    {40.0, 300.0, 0.7, 200.0, 310.0},       /* normal region */
    {-150.0, 85.0, 2.1, 150.0, 273.0},      /* uphill */
    {0.0, 50.0, 1.0, 100.0, 300.0},         /* gap 0: elasticity 0, derivative reported */
    {1200.0, 700.0, 5.0, 300.0, 5000.0},    /* T at its upper end: backward */
    {30.0, 0.1, 1.0, 100.0, 1.0},           /* lambda at its lower end, 1 K: steep */
    {3000.0, 2500.0, 1.0, 10.0, 77.0},      /* gap at its upper end: backward */
    {-3000.0, 3000.0, 1000.0, 1000.0, 1.0}, /* the steepest corner */
};

static void check_marcus(const marcus_point *m, int frozen)
{
    double v[VG_NPARAM] = {m->gap, m->lam, m->V, 0.0, m->hw, m->T}, e[VG_NPARAM], dgap;
    vg_config cfg;
    vg_sens_result *r = sensitivity_at(&cfg, v, frozen ? "[model]\nmode_statistics = frozen\n"
                                                       : NULL);
    char what[160];

    marcus_elasticities(m, e, &dgap);
    assert_true(r->defined[VG_SENS_K_TOTAL]);
    assert_false(r->on[VG_SENS_ISOTOPE_EFFECT]);
    /* the ratio needs an assisted channel, which S = 0 has not */
    assert_false(r->defined[VG_SENS_RATIO]);
    assert_int_equal(r->e[VG_SENS_RATIO][VG_P_GAP].kind, VG_SENS_UNDEFINED);
    assert_non_null(strstr(r->why[VG_SENS_RATIO], "huang_rhys = 0"));
    for (int p = 0; p < VG_NPARAM; p++) {
        const vg_sens_entry *x = &r->e[VG_SENS_K_TOTAL][p];
        snprintf(what, sizeof what, "%s, Marcus at gap %g, lambda %g, T %g: %s",
                 frozen ? "frozen" : "thermal", m->gap, m->lam, m->T,
                 vg_param_get((vg_param_id)p)->key);
        /* reference: the closed forms above; bound 1e-6 relative, or 1e-9 of
         * |ln k| (the rounding of ln k itself limits a difference of it) */
        assert_honest(x->elasticity, x->elasticity_err, e[p],
                      1e-6 * (1.0 + fabs(e[p])) + 1e-9 * fabs(r->ln_m[VG_SENS_K_TOTAL]), what);
        if (p == VG_P_COUPLING) {
            assert_int_equal(x->kind, VG_SENS_ANALYTIC);
            assert_true(x->elasticity == 2.0 && x->elasticity_err == 0.0);
        } else if (p == VG_P_HUANG_RHYS || (p == VG_P_GAP && m->gap == 0.0)) {
            double want = p == VG_P_GAP ? dgap : ds_at_zero(m, frozen);
            assert_int_equal(x->kind, VG_SENS_AT_ZERO);
            assert_true(x->elasticity == 0.0 && x->elasticity_err == 0.0);
            assert_honest(x->deriv, x->deriv_err, want, 1e-6 * (1.0 + fabs(want)), what);
        } else {
            assert_int_equal(x->kind, VG_SENS_NUMERIC);
        }
    }
    /* the ends of the accepted ranges: one-sided differences into the range */
    if (m->T == 5000.0)
        assert_int_equal(r->e[VG_SENS_K_TOTAL][VG_P_TEMPERATURE].side, -1);
    if (m->lam == 0.1)
        assert_int_equal(r->e[VG_SENS_K_TOTAL][VG_P_REORG].side, +1);
    if (m->gap == 3000.0)
        assert_int_equal(r->e[VG_SENS_K_TOTAL][VG_P_GAP].side, -1);
    assert_int_equal(r->e[VG_SENS_K_TOTAL][VG_P_HUANG_RHYS].side, +1); /* S = 0 */
    vg_config_free(&cfg);
    free(r);
}

static void test_marcus_limit(void **state)
{
    (void)state;
    for (size_t k = 0; k < sizeof marcus_points / sizeof marcus_points[0]; k++) {
        check_marcus(&marcus_points[k], 0);
        check_marcus(&marcus_points[k], 1);
    }
}

/* S -> 0 but not 0: the elasticities tend to Marcus's.  At S = 1e-9 the
 * weights differ from Marcus's by O(S G_1/G_0) (about 1e-9 here), so the
 * closed forms hold to 1e-6 (no honesty check: the model is not Marcus). */
static void test_small_s_tends_to_marcus(void **state)
{
    const marcus_point m = {180.0, 140.0, 1.1, 220.0, 300.0};
    double v[VG_NPARAM] = {m.gap, m.lam, m.V, 1e-9, m.hw, m.T}, e[VG_NPARAM], dgap;
    vg_config cfg;
    vg_sens_result *r = sensitivity_at(&cfg, v, "[model]\ntolerance = 1e-14\n");

    (void)state;
    marcus_elasticities(&m, e, &dgap);
    assert_within(r->e[VG_SENS_K_TOTAL][VG_P_GAP].elasticity, e[VG_P_GAP], 1e-6, "gap");
    assert_within(r->e[VG_SENS_K_TOTAL][VG_P_REORG].elasticity, e[VG_P_REORG], 1e-6, "lambda");
    assert_within(r->e[VG_SENS_K_TOTAL][VG_P_TEMPERATURE].elasticity, e[VG_P_TEMPERATURE], 1e-6,
                  "T");
    /* S d ln k / dS -> 0 with S, and d ln(ratio) / d ln S -> 1 (ratio ~ S) */
    assert_within(r->e[VG_SENS_K_TOTAL][VG_P_HUANG_RHYS].elasticity, 0.0, 1e-6, "S");
    assert_true(r->defined[VG_SENS_RATIO]);
    assert_within(r->e[VG_SENS_RATIO][VG_P_HUANG_RHYS].elasticity, 1.0, 1e-6, "S, ratio");
    vg_config_free(&cfg);
    free(r);
}

/* ------------------------------------ against fixed-step differences --- */

typedef struct {
    const vg_config *cfg;
    double v[VG_NPARAM];
} model_at;

static double ln_m(const model_at *ma, vg_param_id p, double value, vg_metric_id metric)
{
    double w[VG_NPARAM];
    vg_eval_result res;
    vg_error err = {VG_OK, ""};

    memcpy(w, ma->v, sizeof w);
    w[p] = value;
    if (vg_evaluate(ma->cfg, w, &res, &err) != VG_OK)
        fail_msg("evaluate: %s", err.msg);
    assert_true(res.metric[metric] != VG_FILL);
    return res.metric[metric] * VG_LN10;
}

/* The symmetric quotient at fixed step h: in ln p for p > 0, in the gap
 * (times the gap) for the gap. */
static double fixed_step(const model_at *ma, vg_param_id p, vg_metric_id metric, double h)
{
    double x = ma->v[p];

    if (p == VG_P_GAP)
        return x * (ln_m(ma, p, x + h, metric) - ln_m(ma, p, x - h, metric)) / (2.0 * h);
    return (ln_m(ma, p, x * exp(h), metric) - ln_m(ma, p, x * exp(-h), metric)) / (2.0 * h);
}

static void check_fixed_steps(const double v[VG_NPARAM], const char *extra)
{
    vg_config cfg;
    vg_sens_result *r = sensitivity_at(&cfg, v, extra);
    model_at ma;

    ma.cfg = &cfg;
    memcpy(ma.v, v, sizeof ma.v);
    for (int m = 0; m < VG_SENS_N; m++) {
        if (!r->on[m])
            continue;
        assert_true(r->defined[m]);
        for (int p = 0; p < VG_NPARAM; p++) {
            const vg_sens_entry *e = &r->e[m][p];
            vg_metric_id metric = vg_sens_metric_get((vg_sens_metric)m)->metric;
            /* steps: 2e-4 and 1e-4 in ln p, 0.02 and 0.01 meV in the gap */
            double h = p == VG_P_GAP ? 0.02 : 2e-4;
            double d1 = fixed_step(&ma, (vg_param_id)p, metric, h);
            double d2 = fixed_step(&ma, (vg_param_id)p, metric, h / 2);
            /* D(h/2) is off by about (D(h) - D(h/2)) / 3 (its error is O(h^2)), plus
             * the kernel's noise (tolerance 1e-14) over the step */
            double tol = e->elasticity_err + fabs(d1 - d2) + 1e-9 * (1.0 + fabs(d2));
            char what[128];
            snprintf(what, sizeof what, "%s by %s", vg_sens_metric_get((vg_sens_metric)m)->name,
                     vg_param_get((vg_param_id)p)->key);
            if (!(fabs(d1 - d2) <= 1e-5 * (1.0 + fabs(d2)))) /* a meaningful reference */
                fail_msg("%s: fixed steps disagree: %.17g and %.17g", what, d1, d2);
            assert_within(e->elasticity, d2, tol, what);
            assert_true(e->elasticity_err <= 1e-6 * (1.0 + fabs(e->elasticity)));
        }
    }
    vg_config_free(&cfg);
    free(r);
}

static void test_against_fixed_steps(void **state)
{
    /* invented operating points: a C-H-like mode near resonance, a low mode
     * at room temperature, an uphill gap with a frozen mode; with [isotope] */
    const double a[VG_NPARAM] = {400.0, 30.0, 1.0, 0.05, 365.75, 310.0};
    const double b[VG_NPARAM] = {210.0, 95.0, 0.4, 1.7, 42.0, 295.0};
    const double c[VG_NPARAM] = {-80.0, 160.0, 3.0, 0.6, 180.0, 250.0};

    (void)state;
    check_fixed_steps(a, "[model]\ntolerance = 1e-14\n[isotope]\nfrequency_ratio = 1.362\n");
    check_fixed_steps(b, "[model]\ntolerance = 1e-14\n[isotope]\nfrequency_ratio = 1.362\n"
                         "huang_rhys_rule = fixed\n");
    check_fixed_steps(c, "[model]\ntolerance = 1e-14\nmode_statistics = frozen\n");
}

/* V enters only the prefactor (docs/theory.md 3: ln P = ln(2 pi / hbar) +
 * 2 ln V - ...; the a_n are V-free): fixed-step differences in ln V give 2
 * for k_total and 0 for the ratio and the isotope effect, as reported. */
static void test_coupling_is_exact(void **state)
{
    const double v[VG_NPARAM] = {330.0, 45.0, 0.8, 0.3, 250.0, 280.0};
    vg_config cfg;
    vg_sens_result *r = sensitivity_at(&cfg, v, "[isotope]\nfrequency_ratio = 1.362\n");
    model_at ma;

    (void)state;
    ma.cfg = &cfg;
    memcpy(ma.v, v, sizeof ma.v);
    assert_within(fixed_step(&ma, VG_P_COUPLING, VG_M_LOG10_K_TOTAL, 1e-3), 2.0, 1e-9, "k_total");
    assert_within(fixed_step(&ma, VG_P_COUPLING, VG_M_LOG10_RATIO, 1e-3), 0.0, 1e-9, "ratio");
    assert_within(fixed_step(&ma, VG_P_COUPLING, VG_M_LOG10_ISOTOPE_EFFECT, 1e-3), 0.0, 1e-9,
                  "isotope effect");
    for (int m = 0; m < VG_SENS_N; m++) {
        assert_int_equal(r->e[m][VG_P_COUPLING].kind, VG_SENS_ANALYTIC);
        assert_true(r->e[m][VG_P_COUPLING].elasticity == (m == VG_SENS_K_TOTAL ? 2.0 : 0.0));
    }
    assert_within(r->e[VG_SENS_K_TOTAL][VG_P_COUPLING].deriv, 2.0 / 0.8, 1e-15, "2 / V");
    vg_config_free(&cfg);
    free(r);
}

/* V = 0: every rate is exactly zero, so k_total has no logarithm; the
 * ratio and the isotope effect do not depend on V and stay defined. */
static void test_zero_coupling(void **state)
{
    const double v[VG_NPARAM] = {300.0, 60.0, 0.0, 0.2, 240.0, 300.0};
    vg_config cfg;
    vg_sens_result *r = sensitivity_at(&cfg, v, "[isotope]\nfrequency_ratio = 1.362\n");

    (void)state;
    assert_false(r->defined[VG_SENS_K_TOTAL]);
    assert_non_null(strstr(r->why[VG_SENS_K_TOTAL], "electronic_coupling = 0"));
    for (int p = 0; p < VG_NPARAM; p++)
        assert_int_equal(r->e[VG_SENS_K_TOTAL][p].kind, VG_SENS_UNDEFINED);
    assert_true(r->defined[VG_SENS_RATIO] && r->defined[VG_SENS_ISOTOPE_EFFECT]);
    assert_int_equal(r->e[VG_SENS_RATIO][VG_P_COUPLING].kind, VG_SENS_ANALYTIC);
    assert_true(r->e[VG_SENS_RATIO][VG_P_COUPLING].elasticity == 0.0);
    assert_int_equal(r->e[VG_SENS_RATIO][VG_P_GAP].kind, VG_SENS_NUMERIC);
    vg_config_free(&cfg);
    free(r);
}

/* Every entry finite at the corners of the accepted domain (with the
 * isotope's narrowing of mode and S). */
static void test_corners_finite(void **state)
{
    const double lo[VG_NPARAM] = {-3000.0, 0.1, 0.0, 0.0, 1.3621, 1.0};
    const double hi[VG_NPARAM] = {3000.0, 3000.0, 1000.0, 36.7, 1000.0, 5000.0};
    vg_sens_result *r = malloc(sizeof *r);

    (void)state;
    assert_non_null(r);
    /* 16 corners: gap, reorganization, mode and temperature at either end;
     * coupling and S alternate between their ends */
    for (unsigned k = 0; k < 16; k++) {
        double v[VG_NPARAM];
        vg_config cfg;
        v[VG_P_GAP] = k & 1 ? hi[0] : lo[0];
        v[VG_P_REORG] = k & 2 ? hi[1] : lo[1];
        v[VG_P_MODE] = k & 4 ? hi[4] : lo[4];
        v[VG_P_TEMPERATURE] = k & 8 ? hi[5] : lo[5];
        v[VG_P_COUPLING] = (k % 3) ? 1.0 : (k & 1 ? hi[2] : lo[2]);
        v[VG_P_HUANG_RHYS] = (k % 5) ? 0.7 : (k & 2 ? hi[3] : lo[3]);
        load_point(&cfg, v, "[isotope]\nfrequency_ratio = 1.362\n");
        compute(&cfg, v, r);
        for (int m = 0; m < VG_SENS_N; m++)
            for (int p = 0; p < VG_NPARAM; p++) {
                const vg_sens_entry *e = &r->e[m][p];
                if (e->kind == VG_SENS_UNDEFINED) {
                    assert_true(e->why[0] != '\0');
                    continue;
                }
                if (!(isfinite(e->elasticity) && isfinite(e->elasticity_err) &&
                      isfinite(e->deriv) && isfinite(e->deriv_err) && e->elasticity_err >= 0.0))
                    fail_msg("corner %u, metric %d, parameter %d: not finite", k, m, p);
            }
        vg_config_free(&cfg);
    }
    free(r);
}

/* ---------------------------------------------------------- the domain --- */

/* The loader accepts each end of every range and refuses just beyond it
 * (docs/config.md, "[parameters]"); with [isotope], the heavy mode and S
 * ends likewise (the loader's isotope check). */
static void test_domain_matches_loader(void **state)
{
    const char *unit[VG_NPARAM] = {" meV", " meV", " meV", "", " meV", " K"};
    vg_config plain;
    const double v[VG_NPARAM] = {100.0, 50.0, 1.0, 0.1, 100.0, 300.0};

    (void)state;
    load_point(&plain, v, NULL);
    for (int p = 0; p < VG_NPARAM; p++) {
        double lo, hi;
        vg_sensitivity_domain(&plain, (vg_param_id)p, &lo, &hi);
        for (int end = 0; end < 2; end++) {
            double x = end ? hi : lo, beyond = end ? hi * (1 + 1e-9) + 1e-9 : lo - fabs(lo) * 1e-9 - 1e-9;
            char text[64];
            vg_param q;
            vg_error err = {VG_OK, ""};
            snprintf(text, sizeof text, "%.17g%s", x, unit[p]);
            assert_int_equal(vg_config_parse_value((vg_param_id)p, text, &q, &err), VG_OK);
            free(q.v);
            snprintf(text, sizeof text, "%.17g%s", beyond, unit[p]);
            assert_int_equal(vg_config_parse_value((vg_param_id)p, text, &q, &err), VG_ECONFIG);
        }
    }
    vg_config_free(&plain);

    /* [isotope] (Born-Oppenheimer): hbar omega / r >= 1 meV and S r <= 50 */
    {
        const char *iso = "[isotope]\nfrequency_ratio = 1.362\n";
        double w[VG_NPARAM], lo, hi, dummy;
        vg_config cfg;
        vg_error err = {VG_OK, ""};
        char text[1024];
        load_point(&cfg, v, iso);
        vg_sensitivity_domain(&cfg, VG_P_MODE, &lo, &dummy);
        vg_sensitivity_domain(&cfg, VG_P_HUANG_RHYS, &dummy, &hi);
        assert_within(lo, 1.362, 1e-12, "heavy mode end");
        assert_within(hi, 50.0 / 1.362, 1e-12, "heavy S end");
        vg_config_free(&cfg);
        memcpy(w, v, sizeof w);
        w[VG_P_MODE] = lo;
        w[VG_P_HUANG_RHYS] = hi;
        load_point(&cfg, w, iso); /* accepted */
        vg_config_free(&cfg);
        snprintf(text, sizeof text, "[parameters]\ngap = 100 meV\nreorganization = 50 meV\n"
                 "huang_rhys = 0.1\nmode = %.17g meV\n%s", nextafter(lo, 0.0), iso);
        assert_int_equal(vg_config_load_text(&cfg, "t.ini", text, 0, NULL, &err), VG_ECONFIG);
        snprintf(text, sizeof text, "[parameters]\ngap = 100 meV\nreorganization = 50 meV\n"
                 "huang_rhys = %.17g\nmode = 100 meV\n%s", hi * (1 + 1e-12), iso);
        assert_int_equal(vg_config_load_text(&cfg, "t.ini", text, 0, NULL, &err), VG_ECONFIG);
    }
}

/* ------------------------------------------------------------ ranking --- */

static void test_rank(void **state)
{
    vg_sens_result *r = calloc(1, sizeof *r);
    vg_param_id order[VG_NPARAM];
    /* |k_total| elasticities: 0.5, 3, 2 (exact), 0 (at zero), undefined, -7 */
    const double ek[VG_NPARAM] = {0.5, -3.0, 2.0, 0.0, 0.0, -7.0};
    const double er[VG_NPARAM] = {9.0, 0.1, 0.0, 0.0, 0.2, 1.0};
    const vg_param_id want_k[VG_NPARAM] = {VG_P_TEMPERATURE, VG_P_REORG, VG_P_COUPLING,
                                           VG_P_GAP, VG_P_HUANG_RHYS, VG_P_MODE};
    const vg_param_id want_all[VG_NPARAM] = {VG_P_GAP, VG_P_TEMPERATURE, VG_P_REORG,
                                             VG_P_COUPLING, VG_P_MODE, VG_P_HUANG_RHYS};

    (void)state;
    assert_non_null(r);
    r->on[VG_SENS_K_TOTAL] = r->on[VG_SENS_RATIO] = 1;
    r->defined[VG_SENS_K_TOTAL] = r->defined[VG_SENS_RATIO] = 1;
    for (int p = 0; p < VG_NPARAM; p++) {
        r->e[VG_SENS_K_TOTAL][p].elasticity = ek[p];
        r->e[VG_SENS_RATIO][p].elasticity = er[p];
    }
    r->e[VG_SENS_K_TOTAL][VG_P_HUANG_RHYS].kind = VG_SENS_AT_ZERO;
    r->e[VG_SENS_K_TOTAL][VG_P_MODE].kind = VG_SENS_UNDEFINED;
    r->e[VG_SENS_ISOTOPE_EFFECT][VG_P_MODE].elasticity = 100.0; /* not on: ignored */
    vg_sensitivity_rank(r, VG_SENS_K_TOTAL, order);
    assert_memory_equal(order, want_k, sizeof order);
    vg_sensitivity_rank(r, -1, order);
    assert_memory_equal(order, want_all, sizeof order);
    free(r);
}

/* ------------------------------------------------------------- charts --- */

static vg_bar_item items4[4];

static vg_barchart chart4(size_t nseries)
{
    vg_barchart bc;
    const double v0[4] = {0.5, -2.0, 1.5, 0.0}, v1[4] = {0.25, -0.5, 2.5, 0.1};

    memset(items4, 0, sizeof items4);
    for (int i = 0; i < 4; i++) {
        static const char *labels[4] = {"<i>S</i>", "λ", "ħ<i>ω</i><sub>0</sub>", "<i>T</i>"};
        items4[i].label = labels[i];
        items4[i].value[0] = v0[i];
        items4[i].value[1] = v1[i];
        items4[i].defined[0] = i != 3;
        items4[i].defined[1] = 1;
        items4[i].has_interval[0] = 1;
        items4[i].lo[0] = v0[i] - 0.1;
        items4[i].hi[0] = v0[i] + 0.1;
    }
    memset(&bc, 0, sizeof bc);
    bc.title = "test chart";
    bc.axis_label = "value";
    bc.nseries = nseries;
    bc.series_name[0] = "first";
    bc.series_name[1] = "second";
    bc.nitems = 4;
    bc.items = items4;
    bc.order = VG_BAR_ORDER_ABS;
    bc.show_values = 1;
    return bc;
}

static void test_chart_check(void **state)
{
    vg_error err = {VG_OK, ""};
    vg_barchart bc = chart4(2);

    (void)state;
    assert_int_equal(vg_barchart_check(&bc, &err), VG_OK);
    bc.nseries = 3;
    assert_int_equal(vg_barchart_check(&bc, &err), VG_ENUMERIC);
    bc = chart4(1);
    bc.rank_series = 1;
    assert_int_equal(vg_barchart_check(&bc, &err), VG_ENUMERIC);
    bc = chart4(1);
    bc.nitems = 0;
    assert_int_equal(vg_barchart_check(&bc, &err), VG_ENUMERIC);
    bc = chart4(1);
    items4[1].value[0] = NAN;
    assert_int_equal(vg_barchart_check(&bc, &err), VG_ENUMERIC);
    bc = chart4(1);
    items4[2].lo[0] = 3.0; /* above hi */
    assert_int_equal(vg_barchart_check(&bc, &err), VG_ENUMERIC);
    bc = chart4(1);
    items4[3].value[0] = INFINITY; /* undefined: ignored */
    assert_int_equal(vg_barchart_check(&bc, &err), VG_OK);
    bc = chart4(1);
    items4[0].label = NULL;
    assert_int_equal(vg_barchart_check(&bc, &err), VG_ENUMERIC);
    bc = chart4(1);
    bc.range_lo = 1.0;
    bc.range_hi = 0.0;
    assert_int_equal(vg_barchart_check(&bc, &err), VG_ENUMERIC);
}

static vg_config chart_config(void)
{
    vg_config cfg;
    const double v[VG_NPARAM] = {100.0, 50.0, 1.0, 0.1, 100.0, 300.0};

    load_point(&cfg, v, "[output]\nwidth = 5 in\ndpi = 144\n");
    return cfg;
}

static void test_chart_geometry(void **state)
{
    vg_config cfg = chart_config();
    vg_barchart bc = chart4(2);
    vg_barchart_geom g;
    vg_error err = {VG_OK, ""};
    const size_t by_abs[4] = {1, 2, 0, 3}, by_value[4] = {2, 0, 1, 3}, given[4] = {0, 1, 2, 3};

    (void)state;
    assert_int_equal(vg_barchart_geometry(&bc, &cfg.fig, &g, &err), VG_OK);
    assert_memory_equal(g.order, by_abs, sizeof by_abs); /* |-2| > 1.5 > 0.5, undefined last */
    assert_within(g.width_pt, 5.0 * 72.0, 1e-12, "width");
    assert_true(g.lo <= -2.1 && g.hi >= 2.5 && g.lo < 0.0 && g.hi > 0.0); /* values, intervals */
    assert_true(g.x0 > 0.0 && g.x0 + g.w <= g.width_pt && g.y0 + g.h <= g.height_pt);
    assert_within(g.h, 4.0 * g.row_h, 1e-12, "rows");
    assert_true(g.bar_top[1] >= g.bar_top[0] + g.bar_h && g.bar_top[1] + g.bar_h <= g.row_h);
    bc.order = VG_BAR_ORDER_VALUE;
    assert_int_equal(vg_barchart_geometry(&bc, &cfg.fig, &g, &err), VG_OK);
    assert_memory_equal(g.order, by_value, sizeof by_value);
    bc.order = VG_BAR_ORDER_GIVEN;
    bc.range_lo = -10.0;
    bc.range_hi = 20.0;
    assert_int_equal(vg_barchart_geometry(&bc, &cfg.fig, &g, &err), VG_OK);
    assert_memory_equal(g.order, given, sizeof given);
    assert_true(g.lo <= -10.0 && g.hi >= 20.0);
    vg_config_free(&cfg);
}

/* Colour of the PNG pixel at (x, y) points, as 0..1 RGB. */
static void pixel(cairo_surface_t *img, double dpi, double x, double y, double rgb[3])
{
    const unsigned char *d = cairo_image_surface_get_data(img);
    int stride = cairo_image_surface_get_stride(img);
    int px = (int)lround(x * dpi / 72.0), py = (int)lround(y * dpi / 72.0);
    uint32_t w;

    assert_true(px >= 0 && py >= 0 && px < cairo_image_surface_get_width(img) &&
                py < cairo_image_surface_get_height(img));
    memcpy(&w, d + (size_t)py * (size_t)stride + 4 * (size_t)px, 4); /* 0xAARRGGBB, cairo docs */
    rgb[0] = (double)((w >> 16) & 0xff) / 255.0;
    rgb[1] = (double)((w >> 8) & 0xff) / 255.0;
    rgb[2] = (double)(w & 0xff) / 255.0;
}

static int contains(const char *buf, size_t len, const char *s)
{
    size_t n = strlen(s);

    for (size_t i = 0; i + n <= len; i++)
        if (memcmp(buf + i, s, n) == 0)
            return 1;
    return 0;
}

static void test_chart_files(void **state)
{
    char dir[] = "/tmp/vg-barchart-XXXXXX", stem[256], path[300], names[512];
    vg_config cfg = chart_config();
    vg_barchart bc = chart4(2);
    vg_barchart_geom g;
    vg_figure_meta meta = {"vibrogate test", "2001-09-09T01:46:40Z", 1000000000LL, 1};
    vg_error err = {VG_OK, ""};
    cairo_surface_t *img;
    double bar0[3], bar1[3], beyond[3];
    size_t len;
    char *buf;

    (void)state;
    assert_non_null(mkdtemp(dir));
    snprintf(stem, sizeof stem, "%s/chart", dir);
    assert_int_equal(vg_barchart_write(&bc, &cfg, VG_FIG_PNG | VG_FIG_PDF | VG_FIG_SVG, stem,
                                       &meta, &err), VG_OK);
    test_list_dir(dir, " ", names, sizeof names);
    assert_string_equal(names, "chart.pdf chart.png chart.svg"); /* no temporary left */

    /* the pixels where the geometry says the bars are (row 0 is item 1,
     * value -2 in series 0 and -0.5 in series 1) */
    assert_int_equal(vg_barchart_geometry(&bc, &cfg.fig, &g, &err), VG_OK);
    snprintf(path, sizeof path, "%s.png", stem);
    img = cairo_image_surface_create_from_png(path);
    assert_int_equal(cairo_surface_status(img), CAIRO_STATUS_SUCCESS);
    assert_int_equal(cairo_image_surface_get_width(img), (int)lround(g.width_pt * 2.0));
    {
        double xv0 = g.x0 + (-1.0 - g.lo) / (g.hi - g.lo) * g.w;   /* inside both bars' span */
        double xv1 = g.x0 + (-0.25 - g.lo) / (g.hi - g.lo) * g.w;
        double xr = g.x0 + (0.77 - g.lo) / (g.hi - g.lo) * g.w;    /* right of zero: no bar */
        double y0 = g.y0 + g.bar_top[0] + g.bar_h / 2, y1 = g.y0 + g.bar_top[1] + g.bar_h / 2;
        pixel(img, cfg.fig.dpi, xv0, y0 - 0.25 * g.bar_h, bar0);
        pixel(img, cfg.fig.dpi, xv1, y1, bar1);
        pixel(img, cfg.fig.dpi, xr, y1, beyond);
    }
    cairo_surface_destroy(img);
    /* bars are coloured, series differ, and no bar where there is no value */
    assert_true(bar0[0] + bar0[1] + bar0[2] < 2.4);
    assert_true(fabs(bar0[0] - bar1[0]) + fabs(bar0[1] - bar1[1]) + fabs(bar0[2] - bar1[2]) > 0.3);
    assert_true(beyond[0] > 0.9 && beyond[1] > 0.9 && beyond[2] > 0.9);

    /* metadata: PNG iTXt (Software, Creation Time, the config text under
     * its keyword), PDF dates from the given epoch */
    buf = test_read_file(path, &len);
    assert_true(len > 8 && memcmp(buf, "\x89PNG\r\n\x1a\n", 8) == 0); /* PNG spec 5.2 */
    assert_true(contains(buf, len, "Software"));
    assert_true(contains(buf, len, "vibrogate test"));
    assert_true(contains(buf, len, "2001-09-09T01:46:40Z"));
    assert_true(contains(buf, len, VG_PNG_CONFIG_KEY));
    free(buf);
    snprintf(path, sizeof path, "%s.pdf", stem);
    buf = test_read_file(path, &len);
    assert_true(len > 5 && memcmp(buf, "%PDF-", 5) == 0);
    assert_true(contains(buf, len, "20010909014640")); /* the epoch as a PDF date */
    free(buf);
    snprintf(path, sizeof path, "%s.svg", stem);
    buf = test_read_file(path, &len);
    assert_true(contains(buf, len, "<svg"));
    free(buf);

    /* failures: no file at all */
    snprintf(stem, sizeof stem, "%s/missing/chart", dir);
    assert_int_equal(vg_barchart_write(&bc, &cfg, VG_FIG_PNG | VG_FIG_SVG, stem, &meta, &err),
                     VG_EIO);
    snprintf(stem, sizeof stem, "%s/bad", dir);
    items4[0].value[0] = NAN;
    assert_int_equal(vg_barchart_write(&bc, &cfg, VG_FIG_PNG, stem, &meta, &err), VG_ENUMERIC);
    test_list_dir(dir, " ", names, sizeof names);
    assert_string_equal(names, "chart.pdf chart.png chart.svg");
    /* formats 0: nothing to do */
    bc = chart4(1);
    assert_int_equal(vg_barchart_write(&bc, &cfg, 0, stem, &meta, &err), VG_OK);
    test_list_dir(dir, " ", names, sizeof names);
    assert_string_equal(names, "chart.pdf chart.png chart.svg");
    assert_int_equal(test_remove_tree(dir), 0);
    vg_config_free(&cfg);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_deriv_elementary),
        cmocka_unit_test(test_deriv_errors),
        cmocka_unit_test(test_marcus_limit),
        cmocka_unit_test(test_small_s_tends_to_marcus),
        cmocka_unit_test(test_against_fixed_steps),
        cmocka_unit_test(test_coupling_is_exact),
        cmocka_unit_test(test_zero_coupling),
        cmocka_unit_test(test_corners_finite),
        cmocka_unit_test(test_domain_matches_loader),
        cmocka_unit_test(test_rank),
        cmocka_unit_test(test_chart_check),
        cmocka_unit_test(test_chart_geometry),
        cmocka_unit_test(test_chart_files),
    };

    gsl_set_error_handler_off();
    return cmocka_run_group_tests(tests, NULL, NULL);
}
