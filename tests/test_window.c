/*
 * Unit tests of the isotope rule (src/evaluate.c), the feasibility
 * conditions (src/config.c, src/metrics.c) and the feasibility window
 * (src/window.c): reduced masses against the atomic masses, lambda_v kept,
 * the heavy rate against a direct kernel call at the heavy mode, conditions
 * normalised to the log domain, the window of a condition whose edge is
 * known in closed form (Marcus), and the distance transform against cases
 * whose most robust point is known by hand.
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

#include "vg_config.h"
#include "vg_const.h"
#include "vg_evaluate.h"
#include "vg_grid.h"
#include "vg_metrics.h"
#include "vg_sweep.h"
#include "vg_window.h"

static void assert_rel(double got, double want, double tol, const char *what)
{
    if (!(fabs(got - want) <= tol * fabs(want))) {
        print_error("%s: got %.17g, want %.17g (relative tolerance %g)\n", what, got, want,
                    tol);
        fail();
    }
}

static void load(vg_config *cfg, const char *text)
{
    vg_error err;
    vg_status st = vg_config_load_text(cfg, "test.ini", text, 0, NULL, &err);

    if (st != VG_OK) {
        print_error("config: %s\n", err.msg);
        fail();
    }
}

/* ------------------------------------------------------ isotope rule --- */

/* C-H -> C-D stretch as an isolated oscillator: atomic masses 12 (carbon,
 * exact by definition of the unit), 1.00782503 and 2.01410178 u (the
 * values the feasibility issue quotes; atomic mass evaluation, from
 * memory): mu_CH = 0.9297404 u, mu_CD = 1.7246358 u, omega_H / omega_D =
 * 1.3619710 (physics reference, same masses to more digits). */
static void frequency_ratio_from_reduced_masses(void **state)
{
    double mu_h = vg_reduced_mass(12.0, 1.00782503);
    double mu_d = vg_reduced_mass(12.0, 2.01410178);
    double r = vg_isotope_frequency_ratio(mu_d / mu_h);
    vg_config cfg;
    char text[512];

    (void)state;
    assert_rel(mu_h, 0.9297404, 1e-7, "mu_CH");
    assert_rel(mu_d, 1.7246358, 1e-7, "mu_CD");
    assert_rel(r, 1.36197, 4e-6, "omega_H / omega_D (5 decimals as quoted)");
    assert_rel(r, 1.3619710, 1e-7, "omega_H / omega_D (physics reference)");
    /* the same through the config key */
    snprintf(text, sizeof text, "[parameters]\ngap = 230 meV\nreorganization = 30 meV\n"
             "huang_rhys = 0.05\nmode = 2950 cm-1\n[isotope]\nreduced_mass_ratio = %.17g\n",
             mu_d / mu_h);
    load(&cfg, text);
    assert_true(cfg.isotope.on);
    assert_rel(cfg.isotope.frequency_ratio, 1.3619710, 1e-7, "config frequency_ratio");
    vg_config_free(&cfg);
}

/* Born-Oppenheimer: the force constant and the displacement do not depend
 * on mass, so lambda_v = S hbar omega is the same for both isotopologues
 * (physics reference, "Isotope substitution"); the fixed rule keeps S. */
static void vibrational_reorganization_is_kept(void **state)
{
    vg_isotope bo = {1, 1.362, VG_HR_BORN_OPPENHEIMER, 1};
    vg_isotope fx = {1, 1.362, VG_HR_FIXED, 1};
    double S_h, w_h;

    (void)state;
    vg_isotope_heavy(&bo, 0.0385, 365.75, &S_h, &w_h);
    assert_rel(w_h, 365.75 / 1.362, 1e-15, "heavy mode");
    assert_rel(S_h * w_h, 0.0385 * 365.75, 1e-15, "lambda_v under Born-Oppenheimer");
    vg_isotope_heavy(&fx, 0.0385, 365.75, &S_h, &w_h);
    assert_true(S_h == 0.0385);
    assert_rel(w_h, 365.75 / 1.362, 1e-15, "heavy mode, fixed rule");
}

/* The heavy rate is the light formula evaluated at the heavy mode and
 * coupling (the definition): vg_evaluate's heavy record against a
 * direct vg_rate_eval there, bit for bit, and the isotope effect against
 * the two totals. */
static void heavy_rate_is_light_rate_at_heavy_mode(void **state)
{
    vg_config cfg;
    vg_eval_result res;
    vg_rate_mode m;
    vg_rates r;
    vg_error err;
    double v[VG_NPARAM];

    (void)state;
    load(&cfg, "[parameters]\ngap = 230 meV\nreorganization = 30 meV\nhuang_rhys = 0.05\n"
               "mode = 2950 cm-1\nelectronic_coupling = 1.5 meV\ntemperature = 310 K\n"
               "[isotope]\nfrequency_ratio = 1.362\n");
    for (int p = 0; p < VG_NPARAM; p++)
        v[p] = cfg.param[p].v[0];
    assert_int_equal(vg_evaluate(&cfg, v, &res, &err), VG_OK);
    assert_int_equal(vg_rate_mode_init(&m, VG_STATS_THERMAL, 0.05 * 1.362,
                                       v[VG_P_MODE] / 1.362, 310.0, &err), VG_OK);
    assert_int_equal(vg_rate_eval(&m, 230.0, 30.0, 1.5, cfg.tolerance, &r, &err), VG_OK);
    assert_memory_equal(&r.ln_k_total, &res.heavy.ln_k_total, sizeof(double));
    assert_rel(res.metric[VG_M_LOG10_K_TOTAL_HEAVY], r.ln_k_total / log(10.0), 1e-15,
               "log10_k_total_heavy");
    assert_rel(res.metric[VG_M_LOG10_ISOTOPE_EFFECT],
               (res.light.ln_k_total - res.heavy.ln_k_total) / log(10.0), 1e-13,
               "log10_isotope_effect");
    assert_rel(res.metric[VG_M_ISOTOPE_EFFECT],
               exp(res.light.ln_k_total - res.heavy.ln_k_total), 1e-13, "isotope_effect");
    vg_config_free(&cfg);
}

/* ------------------------------------------------------- conditions --- */

/* docs/config.md: tau_X < t is log10 k_X > -log10(t / s); isotope_effect > r
 * is log10_isotope_effect > log10 r; the others are taken as written. */
static void conditions_are_normalised_to_logs(void **state)
{
    vg_config cfg;

    (void)state;
    load(&cfg, "[parameters]\ngap = 230 meV\nreorganization = 30 meV\nhuang_rhys = 0.05\n"
               "mode = 200 meV\n[isotope]\nfrequency_ratio = 1.362\n[feasibility]\n"
               "require = tau_assisted < 1 ns\nrequire = tau_total >= 250 us\n"
               "require = isotope_effect > 2\nrequire = assisted_fraction <= 0.5\n");
    assert_int_equal(cfg.feasibility.n, 4);
    assert_int_equal(cfg.feasibility.r[0].metric, VG_M_LOG10_K_ASSISTED);
    assert_int_equal(cfg.feasibility.r[0].op, VG_CMP_GT);
    assert_rel(cfg.feasibility.r[0].value, 9.0, 1e-15, "1 ns");
    assert_int_equal(cfg.feasibility.r[1].metric, VG_M_LOG10_K_TOTAL);
    assert_int_equal(cfg.feasibility.r[1].op, VG_CMP_LE);
    assert_rel(cfg.feasibility.r[1].value, -log10(250e-6), 1e-15, "250 us");
    assert_int_equal(cfg.feasibility.r[2].metric, VG_M_LOG10_ISOTOPE_EFFECT);
    assert_rel(cfg.feasibility.r[2].value, log10(2.0), 1e-15, "ratio 2");
    assert_int_equal(cfg.feasibility.r[3].metric, VG_M_ASSISTED_FRACTION);
    assert_int_equal(cfg.feasibility.r[3].op, VG_CMP_LE);
    assert_string_equal(cfg.feasibility.r[0].text, "tau_assisted < 1 ns");
    /* the stored metrics: everything the config can compute, which is all
     * but the two-odorant and validity metrics */
    for (int m = 0; m < VG_N_METRICS; m++)
        assert_int_equal(cfg.metric_on[m], m != VG_M_DISCRIMINATION
                                           && m != VG_M_LOG10_DISCRIMINATION && m != VG_M_VALID
                                           && m != VG_M_FAILED_CRITERIA);
    vg_config_free(&cfg);
}

/* A zero rate compares as -infinity (docs/config.md): slower than any time
 * constant, below any log10 threshold. */
static void zero_rate_fails_a_speed_condition(void **state)
{
    vg_require_set req = {1, {{VG_M_LOG10_K_ASSISTED, VG_CMP_GT, 9.0, "", 0}}};
    double m[VG_N_METRICS];

    (void)state;
    for (int k = 0; k < VG_N_METRICS; k++)
        m[k] = 0.0;
    m[VG_M_LOG10_K_ASSISTED] = VG_FILL;
    assert_int_equal(vg_require_holds(&req, m), 0);
    req.r[0].op = VG_CMP_LT;
    assert_int_equal(vg_require_holds(&req, m), 1);
    m[VG_M_LOG10_K_ASSISTED] = 9.0; /* the edge itself: > fails, >= holds */
    req.r[0].op = VG_CMP_GT;
    assert_int_equal(vg_require_holds(&req, m), 0);
    req.r[0].op = VG_CMP_GE;
    assert_int_equal(vg_require_holds(&req, m), 1);
}

typedef struct {
    double *feas;
    size_t n;
} collected;

static vg_status collect(void *ctx, size_t start, size_t count, const double *metrics,
                         vg_error *err)
{
    collected *c = ctx;

    (void)err;
    for (size_t i = 0; i < count; i++)
        c->feas[start + i] = metrics[i * VG_N_METRICS + VG_M_FEASIBLE];
    c->n += count;
    return VG_OK;
}

/* A window known in closed form: with S = 0 the bare rate is the Marcus
 * rate (Marcus & Sutin, BBA 811, 265, 1985)
 *   log10 k = log10[(2 pi/hbar) V^2 (4 pi lam kT)^-1/2] - (gap - lam)^2 / (4 lam kT ln 10),
 * so log10_k_bare > c holds exactly where |gap - lam| < sqrt(4 lam kT ln10 (log10 P - c)).
 * Every point of a sweep is checked against that, computed here from the
 * CODATA constants (points within 1e-9 meV of the edge are skipped). */
static void window_of_the_marcus_condition(void **state)
{
    vg_config cfg;
    vg_grid g;
    collected c;
    vg_error err;
    vg_sweep_opts o = {2, 37, 0, NULL, 0};
    double kT = VG_KB_EV * 298.15, V = 1e-3, lo_c = 8.0;
    size_t checked = 0, feasible = 0;

    (void)state;
    load(&cfg, "[parameters]\ngap = -400 .. 800 meV, 241 points\n"
               "reorganization = 20 .. 500 meV, 25 points, log\nhuang_rhys = 0\n"
               "mode = 200 meV\nelectronic_coupling = 1 meV\ntemperature = 298.15 K\n"
               "[output]\ndata = netcdf\n[feasibility]\nrequire = log10_k_bare > 8\n");
    vg_grid_init(&g, &cfg);
    c.feas = calloc(g.npoints, sizeof *c.feas);
    c.n = 0;
    assert_non_null(c.feas);
    assert_int_equal(vg_sweep_run(&g, &o, collect, &c, &err), VG_OK);
    for (size_t i = 0; i < g.npoints; i++) {
        double gap = cfg.param[VG_P_GAP].v[vg_grid_coord(&g, i, VG_P_GAP)] * 1e-3;
        double lam = cfg.param[VG_P_REORG].v[vg_grid_coord(&g, i, VG_P_REORG)] * 1e-3;
        double lp = log10(2.0 * VG_PI / VG_HBAR_EVS * V * V / sqrt(4.0 * VG_PI * lam * kT));
        double half = sqrt(4.0 * lam * kT * log(10.0) * (lp - lo_c));
        if (fabs(fabs(gap - lam) - half) < 1e-12)
            continue;
        assert_true(c.feas[i] == (fabs(gap - lam) < half ? 1.0 : 0.0));
        checked++;
        feasible += c.feas[i] == 1.0;
    }
    assert_true(checked > g.npoints - 10 && feasible > 100 && feasible < checked - 100);
    free(c.feas);
    vg_config_free(&cfg);
}

typedef struct {
    double *all;
} everything;

static vg_status keep_all(void *ctx, size_t start, size_t count, const double *metrics,
                          vg_error *err)
{
    everything *e = ctx;

    (void)err;
    memcpy(e->all + start * VG_N_METRICS, metrics, count * VG_N_METRICS * sizeof *metrics);
    return VG_OK;
}

/* The sweep's heavy rows and conditions give the same bits as vg_evaluate
 * point by point, at 1 and 3 threads and any chunk size. */
static void sweep_isotope_metrics_equal_direct_calls(void **state)
{
    vg_config cfg;
    vg_grid g;
    vg_error err;
    everything a, b;
    vg_sweep_opts o1 = {1, 0, 0, NULL, 0}, o3 = {3, 11, 0, NULL, 0};

    (void)state;
    load(&cfg, "[parameters]\ngap = -100 .. 700 meV, 33 points\n"
               "reorganization = 15 .. 200 meV, 7 points, log\nhuang_rhys = 0.02, 0.3\n"
               "mode = 2950 cm-1\ntemperature = 77, 298.15 K\n[isotope]\nfrequency_ratio = 1.362\n"
               "[feasibility]\nrequire = log10_ratio > 0\nrequire = isotope_effect > 1.5\n");
    vg_grid_init(&g, &cfg);
    a.all = malloc(g.npoints * VG_N_METRICS * sizeof *a.all);
    b.all = malloc(g.npoints * VG_N_METRICS * sizeof *b.all);
    assert_true(a.all && b.all);
    assert_int_equal(vg_sweep_run(&g, &o1, keep_all, &a, &err), VG_OK);
    assert_int_equal(vg_sweep_run(&g, &o3, keep_all, &b, &err), VG_OK);
    assert_memory_equal(a.all, b.all, g.npoints * VG_N_METRICS * sizeof *a.all);
    for (size_t i = 0; i < g.npoints; i++) {
        double v[VG_NPARAM];
        vg_eval_result res;
        vg_grid_values(&g, i, v);
        assert_int_equal(vg_evaluate(&cfg, v, &res, &err), VG_OK);
        assert_memory_equal(res.metric, a.all + i * VG_N_METRICS, sizeof res.metric);
    }
    free(a.all);
    free(b.all);
    vg_config_free(&cfg);
}

/* ---------------------------------------------------------- window --- */

/* A grid of one or two axes from a config text. */
static void window_of(const char *params, const unsigned char *mask, vg_window *w,
                      vg_config *cfg, vg_grid *g)
{
    vg_error err;
    char text[1024];

    snprintf(text, sizeof text, "[parameters]\n%shuang_rhys = 0.1\nmode = 200 meV\n", params);
    load(cfg, text);
    vg_grid_init(g, cfg);
    assert_int_equal(vg_window_analyse(g, mask, w, &err), VG_OK);
}

/* By hand: on 11 gap values (steps of 1/10 of the range) feasible at
 * indices 3..7, the middle (5) is 3 steps from the infeasible 2 and 8:
 * distance 0.3. */
static void robust_point_on_a_line(void **state)
{
    unsigned char mask[11] = {0, 0, 0, 1, 1, 1, 1, 1, 0, 0, 0};
    vg_config cfg;
    vg_grid g;
    vg_window w;

    (void)state;
    window_of("gap = 0 .. 100 meV, 11 points\nreorganization = 30 meV\n", mask, &w, &cfg, &g);
    assert_int_equal(w.feasible, 5);
    assert_int_equal(w.lo[VG_P_GAP], 3);
    assert_int_equal(w.hi[VG_P_GAP], 7);
    assert_true(w.have_robust);
    assert_int_equal(w.robust, 5);
    assert_rel(w.distance, 0.3, 1e-14, "distance on a line");
    vg_config_free(&cfg);
}

/* A 5 x 5 grid of gap 0 .. 100 meV against the reorganization axis given,
 * feasible everywhere except the flat index hole (25: none); the most
 * robust point must be the centre at the distance given. */
static void check_five_by_five(const char *reorg, size_t hole, double distance)
{
    unsigned char mask[25];
    char params[256];
    vg_config cfg;
    vg_grid g;
    vg_window w;

    memset(mask, 1, sizeof mask);
    if (hole < 25)
        mask[hole] = 0;
    snprintf(params, sizeof params, "gap = 0 .. 100 meV, 5 points\n%s", reorg);
    window_of(params, mask, &w, &cfg, &g);
    assert_int_equal(w.feasible, hole < 25 ? 24 : 25);
    assert_rel(vg_window_position(&g, VG_P_REORG, 1), 0.25, 1e-15, "axis position");
    assert_int_equal(w.robust, 2 * 5 + 2);
    assert_rel(w.distance, distance, 1e-14, "distance of the centre");
    vg_config_free(&cfg);
}

/* By hand: a 5 x 5 grid, all feasible: the edge is the frame one step
 * outside, so the centre (2, 2) is 3 steps (3/4 of each range) from it. */
static void robust_point_of_a_full_grid(void **state)
{
    (void)state;
    check_five_by_five("reorganization = 10 .. 50 meV, 5 points\n", 25, 0.75);
}

/* A log axis is measured in log units: reorganization 1 .. 1000 meV in 5
 * log-spaced values (positions 0, 1/4, ..., 1, though the values are far
 * from evenly spaced) against gap 0 .. 100 meV in 5 points; one infeasible
 * corner (0, 0).  By hand: only the centre (2, 2) is 3 steps (3/4) from the
 * frame, every other point at most 2 steps (1/2); the centre is
 * sqrt(2^2 + 2^2)/4 = 0.7071 from the corner, so it is the most robust
 * point at distance sqrt(8)/4. */
static void robust_point_on_a_log_axis(void **state)
{
    (void)state;
    check_five_by_five("reorganization = 1 .. 1000 meV, 5 points, log\n", 0, sqrt(8.0) / 4.0);
}

/* Brute force on an uneven 2-D grid with a random mask: the distance of
 * every feasible point to the nearest infeasible point or frame point,
 * the maximum and its (first) index. */
static void robust_point_against_brute_force(void **state)
{
    enum { NX = 13, NY = 9 };
    unsigned char mask[NX * NY];
    vg_config cfg;
    vg_grid g;
    vg_window w;
    double best = -1.0;
    size_t arg = 0;
    uint64_t s = 0x9e3779b97f4a7c15u;

    (void)state;
    for (size_t i = 0; i < NX * NY; i++) {
        s ^= s << 13, s ^= s >> 7, s ^= s << 17; /* xorshift64 (Marsaglia 2003) */
        mask[i] = (s % 100) < 80;
    }
    window_of("gap = -200, -150, -20, 0, 5, 40, 41, 90, 200, 260, 300, 310, 500 meV\n"
              "reorganization = 5, 8, 9, 20, 33, 70, 71, 150, 400 meV\n", mask, &w, &cfg, &g);
    for (size_t i = 0; i < NX * NY; i++) {
        double xi, yi, d = HUGE_VAL;
        if (!mask[i])
            continue;
        xi = vg_window_position(&g, VG_P_GAP, i % NX);
        yi = vg_window_position(&g, VG_P_REORG, i / NX);
        for (long jy = -1; jy <= NY; jy++)
            for (long jx = -1; jx <= NX; jx++) {
                int inside = jx >= 0 && jx < NX && jy >= 0 && jy < NY;
                double x, y;
                if (inside && mask[(size_t)jy * NX + (size_t)jx])
                    continue;
                /* frame points one step beyond each end */
                x = jx < 0 ? -vg_window_position(&g, VG_P_GAP, 1)
                    : jx >= NX ? 2.0 - vg_window_position(&g, VG_P_GAP, NX - 2)
                               : vg_window_position(&g, VG_P_GAP, (size_t)jx);
                y = jy < 0 ? -vg_window_position(&g, VG_P_REORG, 1)
                    : jy >= NY ? 2.0 - vg_window_position(&g, VG_P_REORG, NY - 2)
                               : vg_window_position(&g, VG_P_REORG, (size_t)jy);
                d = fmin(d, hypot(x - xi, y - yi));
            }
        if (d > best) {
            best = d;
            arg = i;
        }
    }
    assert_rel(w.distance, best, 1e-12, "distance against brute force");
    assert_int_equal(w.robust, arg);
    vg_config_free(&cfg);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(frequency_ratio_from_reduced_masses),
        cmocka_unit_test(vibrational_reorganization_is_kept),
        cmocka_unit_test(heavy_rate_is_light_rate_at_heavy_mode),
        cmocka_unit_test(conditions_are_normalised_to_logs),
        cmocka_unit_test(zero_rate_fails_a_speed_condition),
        cmocka_unit_test(window_of_the_marcus_condition),
        cmocka_unit_test(sweep_isotope_metrics_equal_direct_calls),
        cmocka_unit_test(robust_point_on_a_line),
        cmocka_unit_test(robust_point_of_a_full_grid),
        cmocka_unit_test(robust_point_on_a_log_axis),
        cmocka_unit_test(robust_point_against_brute_force),
    };

    gsl_set_error_handler_off();
    return cmocka_run_group_tests(tests, NULL, NULL);
}
