/*
 * Tests of the uncertainty analyses (src/uncertainty.c): the priors of a
 * config as a sampling space, the Sobol' pipeline (design -> truncated
 * priors -> model runs in parallel -> indices), the Monte Carlo draws and
 * the probability map.
 *
 * References, independent of the module: for additive models the Sobol'
 * indices are the shares of the variance of each term (Sobol' 1993,
 * ANOVA decomposition; S1_i = ST_i = V_i / sum V_j), with the variances of
 * the terms in closed form: uniform (b - a)^2 / 12; ln of a log-uniform is
 * uniform on [ln a, ln b]; a normal truncated to [lo, hi] has mean
 * mu + sigma (phi(al) - phi(be)) / Z and variance
 * sigma^2 [1 + (al phi(al) - be phi(be)) / Z - ((phi(al) - phi(be)) / Z)^2],
 * Z = Phi(be) - Phi(al) (Johnson, Kotz & Balakrishnan, Continuous
 * Univariate Distributions vol. 1, 2nd ed., sec. 10.1, from memory); the
 * variance of a function of a uniform variable by Simpson's rule; the
 * Marcus rate (Marcus & Sutin, BBA 811, 265, 1985) written out here with
 * the exact SI constants of vg_const.h, which the kernel must reproduce at
 * huang_rhys = 0 (docs/theory.md: the total rate is then the bare rate);
 * the normal CDF from the C library's erfc (A&S 26.2.29).  The probability
 * estimate is a binomial proportion, compared with the exact probability
 * within 3 binomial standard errors.
 */
#include <float.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_rng.h>

#include "vg_config.h"
#include "vg_const.h"
#include "vg_sobol.h"
#include "vg_uncertainty.h"

/* ------------------------------------------------------------ helpers --- */

static void *xcalloc(size_t n, size_t size)
{
    void *p = calloc(n, size);

    assert_non_null(p);
    return p;
}

static void load(vg_config *cfg, const char *text)
{
    vg_error err = {VG_OK, ""};

    if (vg_config_load_text(cfg, "test.ini", text, 0, NULL, &err) != VG_OK)
        fail_msg("config refused: %s", err.msg);
}

static void assert_close(double got, double want, double tol, const char *what)
{
    if (!(fabs(got - want) <= tol))
        fail_msg("%s: %.10g, expected %.10g within %.3g", what, got, want, tol);
}

/* Standard normal density and CDF (A&S 26.2.29 through erfc). */
static double phi(double z)
{
    return isinf(z) ? 0.0 : exp(-0.5 * z * z) / sqrt(2.0 * VG_PI);
}

static double Phi(double z)
{
    return 0.5 * erfc(-z / sqrt(2.0));
}

/* Mean and variance of N(mu, sd^2) truncated to [lo, hi]. */
static void trunc_normal(double mu, double sd, double lo, double hi, double *mean, double *var)
{
    double al = (lo - mu) / sd, be = (hi - mu) / sd, z = Phi(be) - Phi(al);
    double d = (phi(al) - phi(be)) / z;
    double t = ((isinf(al) ? 0.0 : al * phi(al)) - (isinf(be) ? 0.0 : be * phi(be))) / z;

    *mean = mu + sd * d;
    *var = sd * sd * (1.0 + t - d * d);
}

/* A space built by hand: k priors on the parameters ids, the domains of
 * vg_unc_domain, the other parameters at base. */
static void make_space(vg_unc_space *sp, size_t k, const vg_param_id *ids, const vg_prior *pr,
                       const double base[VG_NPARAM])
{
    memset(sp, 0, sizeof *sp);
    sp->k = k;
    for (size_t i = 0; i < k; i++) {
        sp->id[i] = ids[i];
        sp->prior[i] = pr[i];
        vg_unc_domain(ids[i], &sp->lo[i], &sp->hi[i]);
    }
    memcpy(sp->base, base, sizeof sp->base);
}

/* -------------------------------------------------------- the space --- */

/* The accepted ranges of docs/config.md, [parameters]. */
static void test_domains(void **state)
{
    static const double want[VG_NPARAM][2] = {{-3000, 3000}, {0.1, 3000}, {0, 1000},
                                              {0, 50},       {1, 1000},   {1, 5000}};
    (void)state;
    for (int p = 0; p < VG_NPARAM; p++) {
        double lo, hi;

        vg_unc_domain((vg_param_id)p, &lo, &hi);
        assert_true(lo == want[p][0] && hi == want[p][1]);
    }
}

#define BASE_PARAMS                                                                          \
    "[parameters]\ngap = 150 meV\nreorganization = 40 meV\nelectronic_coupling = 1 meV\n"   \
    "huang_rhys = 0.05\nmode = 200 meV\ntemperature = 300 K\n"

/* The priors of a config, in parameter order, with their domains; the
 * other parameters at their [parameters] values. */
static void test_space_from_config(void **state)
{
    vg_config cfg;
    vg_unc_space sp;
    vg_error err = {VG_OK, ""};
    (void)state;
    load(&cfg, BASE_PARAMS "[uncertainty]\nmode = uniform 150 .. 250 meV\n"
                           "reorganization = lognormal 40 meV, 0.5\n");
    assert_int_equal(vg_unc_space_init(&sp, &cfg, &err), VG_OK);
    assert_int_equal(sp.k, 2);
    assert_int_equal(sp.id[0], VG_P_REORG);
    assert_int_equal(sp.id[1], VG_P_MODE);
    assert_int_equal(sp.prior[0].kind, VG_PRIOR_LOGNORMAL);
    assert_true(sp.prior[0].a == 40.0 && sp.prior[0].b == 0.5);
    assert_true(sp.prior[1].a == 150.0 && sp.prior[1].b == 250.0);
    assert_true(sp.lo[0] == 0.1 && sp.hi[0] == 3000.0 && sp.lo[1] == 1.0 && sp.hi[1] == 1000.0);
    assert_true(sp.base[VG_P_GAP] == 150.0 && sp.base[VG_P_TEMPERATURE] == 300.0);
    vg_config_free(&cfg);
}

/* A prior on an axis is refused at the prior's line; no prior at all is
 * refused too. */
static void test_space_errors(void **state)
{
    vg_config cfg;
    vg_unc_space sp;
    vg_error err = {VG_OK, ""};
    (void)state;
    load(&cfg, "[parameters]\ngap = 0 .. 300 meV, 4 points\nreorganization = 40 meV\n"
               "huang_rhys = 0.05\nmode = 200 meV\n[uncertainty]\n"
               "gap = uniform 100 .. 300 meV\n");
    assert_int_equal(vg_unc_space_init(&sp, &cfg, &err), VG_ECONFIG);
    assert_string_equal(err.msg, "test.ini:7: 'gap' has a prior and is also an axis of "
                                 "[parameters] (4 values); give it one or the other");
    vg_config_free(&cfg);
    load(&cfg, BASE_PARAMS);
    assert_int_equal(vg_unc_space_init(&sp, &cfg, &err), VG_ECONFIG);
    assert_non_null(strstr(err.msg, "needs a prior for at least one parameter"));
    vg_config_free(&cfg);
}

/* The plane follows the grid order (slowest first); three axes are too
 * many. */
static void test_plane(void **state)
{
    vg_config cfg;
    vg_unc_plane pl;
    vg_error err = {VG_OK, ""};
    (void)state;
    load(&cfg, "[parameters]\ngap = 0 .. 300 meV, 4 points\nreorganization = 40 meV\n"
               "huang_rhys = 0.05\nmode = 200 meV\ntemperature = 250, 300, 350 K\n");
    assert_int_equal(vg_unc_plane_from_config(&pl, &cfg, &err), VG_OK);
    assert_int_equal(pl.naxes, 2);
    assert_int_equal(pl.p[0], VG_P_TEMPERATURE);
    assert_int_equal(pl.p[1], VG_P_GAP);
    assert_true(pl.n[0] == 3 && pl.n[1] == 4 && pl.v[1][3] == 300.0);
    vg_config_free(&cfg);
    load(&cfg, "[parameters]\ngap = 0 .. 300 meV, 4 points\nreorganization = 40, 50 meV\n"
               "huang_rhys = 0.05\nmode = 200 meV\ntemperature = 250, 300, 350 K\n");
    assert_int_equal(vg_unc_plane_from_config(&pl, &cfg, &err), VG_ECONFIG);
    assert_non_null(strstr(err.msg, "(got 3: temperature, reorganization, gap)"));
    vg_config_free(&cfg);
}

/* The mapping: a uniform prior is a + u (b - a); a log-normal at u = 1/2
 * is its median (the truncation to 0.1 .. 3000 meV moves it by about
 * Phi(-12) relative, far below the tolerance of 1e-13); the base values
 * stay. */
static void test_map(void **state)
{
    static const vg_param_id ids[2] = {VG_P_GAP, VG_P_REORG};
    static const vg_prior pr[2] = {{VG_PRIOR_UNIFORM, 100.0, 300.0},
                                   {VG_PRIOR_LOGNORMAL, 40.0, 0.5}};
    static const double base[VG_NPARAM] = {1, 2, 3, 4, 5, 6};
    static const double u[2] = {0.2385, 0.5};
    double v[VG_NPARAM];
    vg_unc_space sp;
    (void)state;
    make_space(&sp, 2, ids, pr, base);
    vg_unc_map(&sp, u, v);
    assert_close(v[VG_P_GAP], 100.0 + 0.2385 * 200.0, 4 * DBL_EPSILON * 200.0, "uniform");
    assert_close(v[VG_P_REORG], 40.0, 1e-13 * 40.0, "log-normal median");
    assert_true(v[VG_P_COUPLING] == 3 && v[VG_P_HUANG_RHYS] == 4 && v[VG_P_MODE] == 5 &&
                v[VG_P_TEMPERATURE] == 6);
}

/* ------------------------------------------------------------ Sobol --- */

/* Models without the rate kernel, chosen by ctx:
 *   TOY_ADDITIVE  gap / 100 + ln(reorganization) + ln(huang_rhys) / 2
 *                 + 2 coupling (temperature has a prior but does not enter);
 *   TOY_FILL      no value (VG_FILL) where gap > 250 meV, else gap + reorganization;
 *   TOY_FAIL      VG_ENUMERIC where gap > 280 meV, else 0;
 *   TOY_CONSTANT  2.385 everywhere;
 *   TOY_HALF      0.5 everywhere (not an indicator). */
typedef enum { TOY_ADDITIVE, TOY_FILL, TOY_FAIL, TOY_CONSTANT, TOY_HALF } toy_kind;

static vg_status toy(const void *ctx, void *ws, const double v[VG_NPARAM], double *out,
                     vg_error *err)
{
    (void)ws;
    *out = 0.0;
    switch (*(const toy_kind *)ctx) {
    case TOY_ADDITIVE:
        *out = v[VG_P_GAP] / 100.0 + log(v[VG_P_REORG]) + 0.5 * log(v[VG_P_HUANG_RHYS]) +
               2.0 * v[VG_P_COUPLING];
        break;
    case TOY_FILL:
        *out = v[VG_P_GAP] > 250.0 ? VG_FILL : v[VG_P_GAP] + v[VG_P_REORG];
        break;
    case TOY_FAIL:
        if (v[VG_P_GAP] > 280.0)
            return vg_error_set(err, VG_ENUMERIC, "gap %.3f out of reach", v[VG_P_GAP]);
        break;
    case TOY_CONSTANT: *out = 2.385; break;
    case TOY_HALF: *out = 0.5; break;
    }
    return VG_OK;
}

static const toy_kind toy_kinds[] = {TOY_ADDITIVE, TOY_FILL, TOY_FAIL, TOY_CONSTANT, TOY_HALF};

static vg_unc_model toy_model(toy_kind k)
{
    vg_unc_model m = {toy, &toy_kinds[k], 0};

    return m;
}

/* Terms of the additive model and their variances in closed form: gap
 * uniform 100 .. 300 meV; ln of a log-normal (median 40 meV, sigma 0.5)
 * truncated to 0.1 .. 3000 meV is a normal (ln 40, 0.5) truncated to
 * [ln 0.1, ln 3000]; ln of a log-uniform 0.01 .. 0.1 is uniform on an
 * interval of length ln 10; the coupling a normal (1 meV, 0.5 meV)
 * truncated to 0 .. 1000 meV (two standard deviations below the mean:
 * the truncation matters). */
static void additive_truth(double var[5], double *mean) /* in vg_param_id order */
{
    double m_lnl, v_lnl, m_v, v_v;

    trunc_normal(log(40.0), 0.5, log(0.1), log(3000.0), &m_lnl, &v_lnl);
    trunc_normal(1.0, 0.5, 0.0, 1000.0, &m_v, &v_v);
    var[0] = 2.0 * 2.0 / 12.0;
    var[1] = v_lnl;
    var[2] = 4.0 * v_v;
    var[3] = 0.25 * VG_LN10 * VG_LN10 / 12.0;
    var[4] = 0.0;
    *mean = 2.0 + m_lnl + 0.5 * 0.5 * (log(0.01) + log(0.1)) + 2.0 * m_v;
}

static void additive_space(vg_unc_space *sp)
{
    static const vg_param_id ids[5] = {VG_P_GAP, VG_P_REORG, VG_P_COUPLING, VG_P_HUANG_RHYS,
                                       VG_P_TEMPERATURE};
    static const vg_prior pr[5] = {{VG_PRIOR_UNIFORM, 100.0, 300.0},
                                   {VG_PRIOR_LOGNORMAL, 40.0, 0.5},
                                   {VG_PRIOR_NORMAL, 1.0, 0.5},
                                   {VG_PRIOR_LOGUNIFORM, 0.01, 0.1},
                                   {VG_PRIOR_NORMAL, 300.0, 30.0}};
    static const double base[VG_NPARAM] = {0, 0, 0, 0, 200, 0};

    make_space(sp, 5, ids, pr, base);
}

/* Indices of the additive model against the variance shares.  Tolerance
 * 0.01 absolute on each index at n = 8192 (the bootstrap half-widths are
 * 0.005 to 0.02 here), and the exact value must lie in each 95 % interval.
 * The parameter outside the model has ST = 0 and S1 = 0 exactly (its runs
 * give bit-identical outputs). */
static void test_sobol_additive(void **state)
{
    /* sp.id and var[]: gap, reorganization, coupling, huang_rhys, temperature */
    double var[5], mean, total = 0.0;
    vg_unc_space sp;
    vg_unc_model m = toy_model(TOY_ADDITIVE);
    vg_unc_sobol_opts o = {8192, 500, 2385, 0.95, 0};
    vg_unc_sobol_out out;
    vg_error err = {VG_OK, ""};
    (void)state;
    additive_space(&sp);
    additive_truth(var, &mean);
    for (int i = 0; i < 5; i++)
        total += var[i];
    assert_int_equal(vg_unc_sobol(&sp, &m, &o, &out, &err), VG_OK);
    assert_int_equal(out.runs, 8192 * 7);
    assert_close(out.mean, mean, 0.01 * sqrt(total), "mean");
    assert_close(out.sd, sqrt(total), 0.02 * sqrt(total), "standard deviation");
    for (size_t i = 0; i < 5; i++) {
        const vg_sobol_result *x = &out.idx[i];
        double want = var[i] / total;

        assert_close(x->S1, want, 0.01, vg_param_get(sp.id[i])->key);
        assert_close(x->ST, want, 0.01, vg_param_get(sp.id[i])->key);
        assert_true(want >= x->S1_lo && want <= x->S1_hi);
        assert_true(want >= x->ST_lo && want <= x->ST_hi);
    }
    assert_true(out.idx[4].S1 == 0.0 && out.idx[4].ST == 0.0);
}

/* gap uniform 100 .. 300 meV and reorganization uniform 20 .. 60 meV. */
static void two_uniform_space(vg_unc_space *sp)
{
    static const vg_param_id ids[2] = {VG_P_GAP, VG_P_REORG};
    static const vg_prior pr[2] = {{VG_PRIOR_UNIFORM, 100.0, 300.0},
                                   {VG_PRIOR_UNIFORM, 20.0, 60.0}};
    static const double base[VG_NPARAM] = {0, 0, 1, 0.05, 200, 300};

    make_space(sp, 2, ids, pr, base);
}

/* The first run of the design of two_uniform_space (A, B, then A_B^(1),
 * which takes gap from B, and A_B^(2)) whose gap is above limit, from the
 * design and the uniform mapping a + u (b - a) directly. */
static size_t first_gap_above(size_t n, double limit)
{
    double A[2 * 64], B[2 * 64];
    vg_error err = {VG_OK, ""};

    assert_int_equal(vg_sobol_sample(n, 2, A, B, &err), VG_OK);
    for (size_t s = 0; s < 4 * n; s++) {
        size_t j = s % n, blk = s / n;
        double u = blk == 1 || blk == 2 ? B[j * 2] : A[j * 2];

        if (100.0 + u * 200.0 > limit)
            return s;
    }
    return SIZE_MAX;
}

/* A model without a value somewhere: the run reported is the first in
 * design order, and the message is the same at 1 and 2 threads. */
static void test_sobol_fill(void **state)
{
    vg_unc_space sp;
    vg_unc_model m = toy_model(TOY_FILL);
    vg_unc_sobol_opts o = {64, 100, 1, 0.95, 1};
    vg_unc_sobol_out out;
    vg_error e1 = {VG_OK, ""}, e2 = {VG_OK, ""};
    char want[64];
    (void)state;
    two_uniform_space(&sp);
    assert_int_equal(vg_unc_sobol(&sp, &m, &o, &out, &e1), VG_ECONFIG);
    o.threads = 2;
    assert_int_equal(vg_unc_sobol(&sp, &m, &o, &out, &e2), VG_ECONFIG);
    assert_string_equal(e1.msg, e2.msg);
    snprintf(want, sizeof want, "no value at model run %zu ", first_gap_above(64, 250.0));
    if (strncmp(e1.msg, want, strlen(want)) != 0)
        fail_msg("got '%s', expected it to start with '%s'", e1.msg, want);
    assert_non_null(strstr(e1.msg, "a rate is exactly zero there"));
}

/* A failing model's status and message come through, prefixed by the
 * first failing run; a constant model and n = 1 are refused. */
static void test_sobol_errors(void **state)
{
    vg_unc_space sp;
    vg_unc_model fm = toy_model(TOY_FAIL), cm = toy_model(TOY_CONSTANT);
    vg_unc_sobol_opts o = {64, 100, 1, 0.95, 2};
    vg_unc_sobol_out out;
    vg_error err = {VG_OK, ""};
    char want[64];
    (void)state;
    two_uniform_space(&sp);
    assert_int_equal(vg_unc_sobol(&sp, &fm, &o, &out, &err), VG_ENUMERIC);
    snprintf(want, sizeof want, "model run %zu (", first_gap_above(64, 280.0));
    assert_true(strncmp(err.msg, want, strlen(want)) == 0);
    assert_non_null(strstr(err.msg, "out of reach"));
    assert_int_equal(vg_unc_sobol(&sp, &cm, &o, &out, &err), VG_ECONFIG);
    assert_non_null(strstr(err.msg, "same value 2.385 at every sample"));
    o.n = 1;
    assert_int_equal(vg_unc_sobol(&sp, &cm, &o, &out, &err), VG_ECONFIG);
}

/* The rate kernel at huang_rhys = 0 and gap = 0: log10 k_total is the
 * Marcus rate, log10[(2 pi / hbar) V^2 (4 pi lam kT)^-1/2] - lam / (4 kT ln 10),
 * which is additive in log10 V and a function of T alone.  With V
 * log-uniform 0.7 .. 1.4 meV the first term's variance is
 * 4 log10(2)^2 / 12; with T uniform 250 .. 350 K and lam = 600 meV the
 * second's (about twice the first) is computed here by Simpson's rule
 * (400 intervals; the integrand is smooth, error far below the
 * tolerance). */
static double marcus_t_term(double T, double lam_meV)
{
    double kT = VG_KB_MEV * T;

    return (-0.5 * log(T) - lam_meV / (4.0 * kT)) / VG_LN10;
}

static double uniform_variance(double (*g)(double, double), double a, double b, double arg)
{
    enum { NI = 400 };
    double h = (b - a) / NI, s1 = 0.0, s2 = 0.0;

    for (int i = 0; i <= NI; i++) {
        double w = i == 0 || i == NI ? 1.0 : i % 2 ? 4.0 : 2.0, y = g(a + i * h, arg);

        s1 += w * y;
        s2 += w * y * y;
    }
    s1 *= h / 3.0 / (b - a);
    s2 *= h / 3.0 / (b - a);
    return s2 - s1 * s1;
}

#define KERNEL_SOBOL                                                                         \
    "[parameters]\ngap = 0 meV\nreorganization = 600 meV\nelectronic_coupling = 1 meV\n"    \
    "huang_rhys = 0\nmode = 200 meV\ntemperature = 300 K\n[uncertainty]\n"                  \
    "electronic_coupling = loguniform 0.7 .. 1.4 meV\ntemperature = uniform 250 .. 350 K\n"  \
    "metric = log10_k_total\n"

/* Tolerance 0.01 on each index, as for the additive model. */
static void test_sobol_kernel(void **state)
{
    vg_config cfg;
    vg_unc_space sp;
    vg_unc_sobol_out out;
    vg_error err = {VG_OK, ""};
    double vv = 4.0 * pow(log10(2.0), 2) / 12.0;
    double vt = uniform_variance(marcus_t_term, 250.0, 350.0, 600.0);
    (void)state;
    load(&cfg, KERNEL_SOBOL);
    assert_int_equal(vg_unc_space_init(&sp, &cfg, &err), VG_OK);
    {
        vg_unc_metric_ctx mc = {&cfg, cfg.uncertainty.metric};
        vg_unc_model m = vg_unc_metric_model(&mc);
        vg_unc_sobol_opts o = {4096, 500, 7, 0.95, 0};

        assert_int_equal(vg_unc_sobol(&sp, &m, &o, &out, &err), VG_OK);
    }
    assert_close(out.idx[0].S1, vv / (vv + vt), 0.01, "S1 of the coupling");
    assert_close(out.idx[0].ST, vv / (vv + vt), 0.01, "ST of the coupling");
    assert_close(out.idx[1].S1, vt / (vv + vt), 0.01, "S1 of the temperature");
    assert_close(out.idx[1].ST, vt / (vv + vt), 0.01, "ST of the temperature");
    assert_close(out.sd, sqrt(vv + vt), 0.02 * sqrt(vv + vt), "standard deviation");
    vg_config_free(&cfg);
}

/* The same seed gives the same bits at 1 and 2 threads, and again. */
static void test_sobol_threads(void **state)
{
    vg_config cfg;
    vg_unc_space sp;
    vg_unc_sobol_out out[3];
    vg_error err = {VG_OK, ""};
    (void)state;
    load(&cfg, BASE_PARAMS "[uncertainty]\nreorganization = lognormal 40 meV, 0.5\n"
                           "gap = uniform 100 .. 300 meV\nhuang_rhys = loguniform 0.01 .. 0.1\n");
    assert_int_equal(vg_unc_space_init(&sp, &cfg, &err), VG_OK);
    for (int t = 0; t < 3; t++) {
        vg_unc_metric_ctx mc = {&cfg, VG_M_LOG10_RATIO};
        vg_unc_model m = vg_unc_metric_model(&mc);
        vg_unc_sobol_opts o = {512, 200, 11, 0.9, t == 1 ? 2 : 1};

        memset(&out[t], 0xA5, sizeof out[t]);
        assert_int_equal(vg_unc_sobol(&sp, &m, &o, &out[t], &err), VG_OK);
    }
    assert_memory_equal(&out[0], &out[1], sizeof out[0]);
    assert_memory_equal(&out[0], &out[2], sizeof out[0]);
    vg_config_free(&cfg);
}

/* ------------------------------------------------------ probability --- */

/* The draws are gsl_rng_mt19937's gsl_rng_uniform_pos numbers in order,
 * draw after draw, mapped through the priors: with uniform priors a + u
 * (b - a), recomputed here from GSL directly. */
static void test_draws(void **state)
{
    static const vg_param_id ids[2] = {VG_P_GAP, VG_P_MODE};
    static const vg_prior pr[2] = {{VG_PRIOR_UNIFORM, 100.0, 300.0},
                                   {VG_PRIOR_UNIFORM, 150.0, 250.0}};
    static const double base[VG_NPARAM] = {0};
    double d[2 * 100];
    vg_unc_space sp;
    vg_error err = {VG_OK, ""};
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    (void)state;
    assert_non_null(rng);
    make_space(&sp, 2, ids, pr, base);
    assert_int_equal(vg_unc_draws(&sp, 100, 2385, d, &err), VG_OK);
    gsl_rng_set(rng, 2385);
    for (int j = 0; j < 100; j++) {
        double u0 = gsl_rng_uniform_pos(rng), u1 = gsl_rng_uniform_pos(rng);

        assert_close(d[2 * j], 100.0 + 200.0 * u0, 4 * DBL_EPSILON * 300.0, "gap draw");
        assert_close(d[2 * j + 1], 150.0 + 100.0 * u1, 4 * DBL_EPSILON * 250.0, "mode draw");
    }
    gsl_rng_free(rng);
}

#define KERNEL_MAP                                                                           \
    "[parameters]\ngap = 0 meV\nreorganization = 40 meV\n"                                  \
    "electronic_coupling = 0.8, 1, 1.25 meV\nhuang_rhys = 0\nmode = 200 meV\n"              \
    "temperature = 280, 300, 320 K\n[uncertainty]\nreorganization = lognormal 40 meV, 1\n"  \
    "mode = uniform 100 .. 300 meV\nsamples = 4096\n"                                        \
    "[feasibility]\nrequire = log10_k_total > 10.7\n"

/* log10 of the Marcus rate in s^-1 (gap 0; energies in meV). */
static double log10_marcus(double lam, double V, double T)
{
    double kT = VG_KB_EV * T, l = lam * 1e-3, v = V * 1e-3;

    return log10(2.0 * VG_PI / VG_HBAR_EVS * v * v / sqrt(4.0 * VG_PI * l * kT)) -
           l / (4.0 * kT) / VG_LN10;
}

/* The lam below which log10 k > c (the rate falls with lam at gap 0), by
 * bisection on the accepted domain. */
static double lam_bound(double V, double T, double c)
{
    double lo = 0.1, hi = 3000.0;

    if (log10_marcus(lo, V, T) <= c)
        return lo;
    if (log10_marcus(hi, V, T) > c)
        return hi;
    for (int i = 0; i < 200; i++) {
        double mid = 0.5 * (lo + hi);

        if (log10_marcus(mid, V, T) > c)
            lo = mid;
        else
            hi = mid;
    }
    return 0.5 * (lo + hi);
}

/* P(lam < b) for the log-normal (median 40 meV, sigma 1) truncated to
 * 0.1 .. 3000 meV. */
static double lognormal_cdf(double b)
{
    double zl = log(0.1 / 40.0), zh = log(3000.0 / 40.0), z = log(b / 40.0);

    return (Phi(z) - Phi(zl)) / (Phi(zh) - Phi(zl));
}

static void run_map(const vg_config *cfg, int threads, double *prob, double *se)
{
    vg_unc_space sp;
    vg_unc_plane pl;
    vg_unc_metric_ctx mc = {cfg, VG_M_FEASIBLE};
    vg_unc_model m = vg_unc_metric_model(&mc);
    size_t n = cfg->uncertainty.samples;
    double *draws = xcalloc(n * 2, sizeof *draws);
    vg_error err = {VG_OK, ""};

    assert_int_equal(vg_unc_space_init(&sp, cfg, &err), VG_OK);
    assert_int_equal(vg_unc_plane_from_config(&pl, cfg, &err), VG_OK);
    assert_int_equal(vg_unc_draws(&sp, n, cfg->uncertainty.seed, draws, &err), VG_OK);
    if (vg_unc_probability(&sp, &pl, &m, n, draws, threads, prob, se, &err) != VG_OK)
        fail_msg("%s", err.msg);
    free(draws);
}

/* log10_k_total > c holds exactly where lam < lam_bound(V, T), so the
 * probability of each cell is the prior's CDF there; the estimate from
 * 4096 draws lies within 3 binomial standard errors of it, and its
 * standard error is sqrt(p (1 - p) / N) of its own p.  Cells: temperature
 * (slowest) x coupling. */
static void test_probability_exact(void **state)
{
    static const double T[3] = {280, 300, 320}, V[3] = {0.8, 1.0, 1.25};
    double prob[9], se[9];
    vg_config cfg;
    (void)state;
    load(&cfg, KERNEL_MAP);
    run_map(&cfg, 0, prob, se);
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            double p = lognormal_cdf(lam_bound(V[j], T[i], 10.7)), n = 4096.0;
            double q = prob[3 * i + j];
            char what[64];

            snprintf(what, sizeof what, "P at T = %g K, V = %g meV", T[i], V[j]);
            assert_true(p > 0.2 && p < 0.8); /* the case tests something */
            assert_close(q, p, 3.0 * sqrt(p * (1.0 - p) / n), what);
            assert_close(se[3 * i + j], sqrt(q * (1.0 - q) / n), 4 * DBL_EPSILON, "its error");
        }
    vg_config_free(&cfg);
}

/* Same seed, same bits at 1 and 2 threads; another seed, other draws. */
static void test_probability_threads(void **state)
{
    double p1[9], s1[9], p2[9], s2[9], p3[9], s3[9];
    vg_config cfg;
    (void)state;
    load(&cfg, KERNEL_MAP);
    run_map(&cfg, 1, p1, s1);
    run_map(&cfg, 2, p2, s2);
    assert_memory_equal(p1, p2, sizeof p1);
    assert_memory_equal(s1, s2, sizeof s1);
    cfg.uncertainty.seed = 2;
    run_map(&cfg, 2, p3, s3);
    assert_true(memcmp(p1, p3, sizeof p1) != 0);
    vg_config_free(&cfg);
}

/* A model giving something other than 0 or 1 is refused, at the first
 * cell; so is a plane axis with a prior, and zero draws. */
static void test_probability_errors(void **state)
{
    static const double reorg[2] = {20.0, 40.0}, temps[2] = {280.0, 320.0};
    vg_unc_space sp;
    vg_unc_plane pl = {2, {VG_P_REORG, VG_P_GAP}, {2, 2}, {reorg, temps}};
    vg_unc_model m = toy_model(TOY_HALF);
    double draws[8] = {150, 30, 160, 30, 170, 30, 180, 30}, prob[4], se[4];
    vg_error err = {VG_OK, ""};
    (void)state;
    two_uniform_space(&sp);
    assert_int_equal(vg_unc_probability(&sp, &pl, &m, 4, draws, 1, prob, se, &err),
                     VG_ECONFIG);
    assert_string_equal(err.msg, "'reorganization' is an axis of the map and has a prior");
    pl.p[0] = VG_P_COUPLING;
    pl.p[1] = VG_P_TEMPERATURE;
    assert_int_equal(vg_unc_probability(&sp, &pl, &m, 0, draws, 1, prob, se, &err), VG_ECONFIG);
    assert_int_equal(vg_unc_probability(&sp, &pl, &m, 4, draws, 2, prob, se, &err),
                     VG_ENUMERIC);
    assert_non_null(strstr(err.msg, "indicator model gave 0.5, not 0 or 1, at cell 0 "));
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_domains),
        cmocka_unit_test(test_space_from_config),
        cmocka_unit_test(test_space_errors),
        cmocka_unit_test(test_plane),
        cmocka_unit_test(test_map),
        cmocka_unit_test(test_sobol_additive),
        cmocka_unit_test(test_sobol_fill),
        cmocka_unit_test(test_sobol_errors),
        cmocka_unit_test(test_sobol_kernel),
        cmocka_unit_test(test_sobol_threads),
        cmocka_unit_test(test_draws),
        cmocka_unit_test(test_probability_exact),
        cmocka_unit_test(test_probability_threads),
        cmocka_unit_test(test_probability_errors),
    };

    gsl_set_error_handler_off();
    return cmocka_run_group_tests(tests, NULL, NULL);
}
