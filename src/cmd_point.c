/*
 * The point command: one operating point, every parameter scalar.  Lists the
 * significant vibronic channels (weight, resonance gap, rate, time constant,
 * share of the total) and all metrics, as a table or as JSON.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cmd.h"
#include "vg_config.h"
#include "vg_const.h"
#include "vg_evaluate.h"
#include "vg_fft.h"
#include "vg_multimode.h"
#include "vg_metrics.h"
#include "vg_validity.h"

/* Channels listed: n = 0 always, others carrying at least this share of
 * the total rate. */
#define SHARE_MIN 1e-6

typedef struct {
    double v[VG_NPARAM];
    vg_rate_mode mode;
    vg_rates r;
    double metric[VG_N_METRICS];
    const vg_config *cfg;
    vg_eval_result ev;
} point_result;

static vg_status compute(const vg_config *cfg, point_result *pr, vg_error *err)
{
    vg_status st;

    for (int p = 0; p < VG_NPARAM; p++)
        pr->v[p] = cfg->param[p].v[0];
    pr->cfg = cfg;
    st = vg_evaluate(cfg, pr->v, &pr->ev, err);
    if (st != VG_OK)
        return st;
    pr->mode = pr->ev.light_mode;
    pr->r = pr->ev.light;
    memcpy(pr->metric, pr->ev.metric, sizeof pr->metric);
    return st;
}

/* log10 of channel n's share of the total, from the V-free parts. */
static double log10_share(point_result *pr, long n)
{
    double ln_kn = vg_rate_ln_channel(&pr->mode, pr->v[VG_P_GAP], pr->v[VG_P_REORG], 1.0, n);
    double ln_k1 = vg_rate_ln_channel(&pr->mode, pr->v[VG_P_GAP], pr->v[VG_P_REORG], 1.0, 0);

    /* ln_fc_* exclude the prefactor; channel values at V = 1 meV include it,
     * so compare against the elastic channel computed the same way. */
    return (ln_kn - ln_k1 + pr->r.ln_fc_elastic - pr->r.ln_fc_total) / VG_LN10;
}

static int listed(point_result *pr, long n)
{
    return n == 0 || log10_share(pr, n) >= log10(SHARE_MIN);
}

static void print_text_channel(point_result *pr, long n)
{
    double lnk = vg_rate_ln_channel(&pr->mode, pr->v[VG_P_GAP], pr->v[VG_P_REORG],
                                    pr->v[VG_P_COUPLING], n);
    double lw = vg_rate_ln_weight(&pr->mode, n) / VG_LN10;
    char w[32], k[32], tau[32];

    vg_fmt_log10(lw, w, sizeof w);
    if (pr->r.coupling_zero) {
        snprintf(k, sizeof k, "0");
        snprintf(tau, sizeof tau, "never");
    } else {
        vg_fmt_log10(lnk / VG_LN10, k, sizeof k);
        vg_fmt_time(lnk / VG_LN10, tau, sizeof tau);
    }
    printf("  %6ld  %-11s %12.3f  %-11s  %-11s  %.3e\n", n, w,
           pr->v[VG_P_REORG] + (double)n * pr->v[VG_P_MODE], k, tau,
           pow(10.0, log10_share(pr, n)));
}

static void print_text(const vg_config *cfg, point_result *pr)
{
    printf("operating point (%s):\n", cfg->path);
    for (int p = 0; p < VG_NPARAM; p++)
        printf("  %-20s %.10g %s%s\n", vg_param_get((vg_param_id)p)->key, pr->v[p],
               strcmp(vg_param_get((vg_param_id)p)->unit, "1") ? vg_param_get((vg_param_id)p)->unit : "",
               cfg->param[p].defaulted ? "  (default)" : "");
    printf("  mode statistics      %s\n", cfg->stats == VG_STATS_FROZEN ? "frozen" : "thermal");
    if (cfg->isotope.on)
        printf("  heavy isotopologue   mode %.10g meV, huang_rhys %.10g (frequency ratio %.10g, "
               "%s rule)\n", pr->ev.heavy_mode.mode, pr->ev.heavy_mode.S,
               cfg->isotope.frequency_ratio,
               cfg->isotope.rule == VG_HR_FIXED ? "fixed" : "Born-Oppenheimer");
    printf("\n");
    printf("channels (n > 0: quanta given to the mode; n < 0: taken from it;\n"
           "listed: n = 0 and every channel with at least %.0e of the total)\n", SHARE_MIN);
    printf("  %6s  %-11s %12s  %-11s  %-11s  %s\n", "n", "weight W_n", "resonance/meV",
           "rate/s^-1", "time const", "share of total");
    for (long n = pr->r.n_lo; n <= pr->r.n_hi; n++)
        if (listed(pr, n))
            print_text_channel(pr, n);
    if (pr->r.n_lo > 0 || pr->r.n_hi < 0)
        print_text_channel(pr, 0);
    printf("\nmetrics\n");
    for (int m = 0; m < VG_N_METRICS; m++) {
        const vg_metric_info *mi = vg_metric_get((vg_metric_id)m);
        if (vg_config_metric_lacks_mode(pr->cfg, (vg_metric_id)m))
            continue;
        if (pr->metric[m] == VG_FILL && m == VG_M_ISOTOPE_EFFECT)
            printf("  %-20s beyond 1e+-300 (see log10_isotope_effect)\n", mi->name);
        else if (pr->metric[m] == VG_FILL)
            printf("  %-20s undefined (a rate is exactly zero)\n", mi->name);
        else
            printf("  %-20s %.10g\n", mi->name, pr->metric[m]);
    }
    printf("\nmodel prediction (golden rule, harmonic mode, classical environment)\n");
}

static void json_number(double v)
{
    if (v == VG_FILL || !isfinite(v))
        fputs("null", stdout);
    else
        printf("%.17g", v);
}

static void print_json_channel(point_result *pr, long n, int first)
{
    double lnk = vg_rate_ln_channel(&pr->mode, pr->v[VG_P_GAP], pr->v[VG_P_REORG],
                                    pr->v[VG_P_COUPLING], n);

    printf("%s\n    {\"n\": %ld, \"log10_weight\": ", first ? "" : ",", n);
    json_number(vg_rate_ln_weight(&pr->mode, n) / VG_LN10);
    printf(", \"resonance_gap_meV\": ");
    json_number(pr->v[VG_P_REORG] + (double)n * pr->v[VG_P_MODE]);
    printf(", \"log10_rate\": ");
    json_number(pr->r.coupling_zero ? VG_FILL : lnk / VG_LN10);
    printf(", \"share\": ");
    json_number(pow(10.0, log10_share(pr, n)));
    printf("}");
}

/* ---------------------------------------------------- many-mode odorants --- */

/* One odorant's results at the operating point. */
typedef struct {
    vg_multimode_rates light, heavy; /* sum engine: engine = sum, or --compare */
    int has_sum;
    int has_heavy;
    vg_fft_point fft, fft_heavy;     /* FFT engine: engine = fft, or --compare */
    int has_fft;
    double fft_diff;                 /* |F_fft / F_sum - 1| where the FFT trusts its value */
    double valid_mode, valid_t1;     /* hbar omega (meV) and T1 (ps) of the criteria */
    int valid_k_upper;               /* 1: k_total is the FFT's upper estimate */
    vg_valid_report valid;
} odorant_result;

/* Transform lengths and lattice terms the point command allows one odorant
 * (about a second of work at most on a desktop core). */
#define ODOR_FFT_MAX ((size_t)1 << 24)
#define ODOR_WORK_MAX 2e8

/* F and k of table t at v by the frequency-domain sum engine. */
static vg_status sum_engine(const vg_config *cfg, const double v[VG_NPARAM], const vg_modes *t,
                            vg_multimode_rates *out, vg_error *err)
{
    vg_multimode_system sys = {cfg->stats, t->n, t->mode};
    vg_multimode_work *w = NULL;
    size_t points = 0;
    double work = 0.0;
    vg_status st = vg_multimode_need(&sys, v[VG_P_REORG], v[VG_P_TEMPERATURE], v[VG_P_GAP],
                                     v[VG_P_GAP], 1, cfg->tolerance, &points, &work, err);

    if (st == VG_OK)
        st = vg_multimode_alloc(t->n, 2 * points + 64, ODOR_WORK_MAX, &w, err);
    if (st == VG_OK)
        st = vg_multimode_eval(w, &sys, v[VG_P_REORG], v[VG_P_TEMPERATURE], v[VG_P_COUPLING],
                               cfg->tolerance, 1, &v[VG_P_GAP], out, err);
    vg_multimode_free(w);
    return st;
}

/* F_total of table t at v by the time-domain FFT engine. */
static vg_status fft_engine(const vg_config *cfg, const double v[VG_NPARAM], const vg_modes *t,
                            vg_fft_point *out, vg_error *err)
{
    vg_multimode_system sys = {cfg->stats, t->n, t->mode};
    vg_fft_plan plan;
    vg_fft_work *w = NULL;
    vg_status st = vg_fft_plan_make(&sys, v[VG_P_REORG], v[VG_P_TEMPERATURE], v[VG_P_GAP], 0.0,
                                    1, ODOR_FFT_MAX, &plan, err);

    if (st == VG_OK)
        st = vg_fft_alloc(plan.n, &w, err);
    if (st == VG_OK)
        st = vg_fft_eval(w, &plan, &sys, out, err);
    vg_fft_free(w);
    return st;
}

/* ln of the golden-rule prefactor (2 pi / hbar) V^2, so that ln k = ln F +
 * this for F in meV^-1 (hbar in meV s, vg_const.h); V > 0. */
static double ln_prefactor(double coupling_meV)
{
    return log(2.0 * VG_PI / (VG_HBAR_EVS * VG_MEV_PER_EV)) + 2.0 * log(coupling_meV);
}

/* Every criterion [validity] enables, at v with mode, T1 and the total
 * rate (exp(ln_k), or 0 for a zero rate). */
static vg_status validity_eval(const vg_config *cfg, const double v[VG_NPARAM], double mode,
                               double t1, double ln_k, int zero, vg_valid_report *r,
                               vg_error *err)
{
    vg_valid_point p = {v[VG_P_COUPLING], v[VG_P_REORG], mode, v[VG_P_TEMPERATURE],
                        cfg->validity.tau_l_ps, t1, zero ? 0.0 : exp(ln_k)};

    return vg_valid_evaluate(&cfg->validity.s, &p, r, err);
}

static vg_status odorant_validity(const vg_config *cfg, const double v[VG_NPARAM],
                                  const vg_odorant *od, odorant_result *r, vg_error *err)
{
    double ln_k = r->light.ln_k_total;
    int zero = r->light.coupling_zero;

    vg_valid_modes_inputs(od->light->mode, od->light->n, cfg->validity.t1_ps, &r->valid_mode,
                          &r->valid_t1);
    if (cfg->engine == VG_ENGINE_FFT) {
        zero = v[VG_P_COUPLING] == 0.0;
        ln_k = zero ? 0.0 : r->fft.ln_f + ln_prefactor(v[VG_P_COUPLING]);
        r->valid_k_upper = !r->fft.trusted;
    }
    return validity_eval(cfg, v, r->valid_mode, r->valid_t1, ln_k, zero, &r->valid, err);
}

static vg_status odorant_compute(const vg_config *cfg, const double v[VG_NPARAM],
                                 const vg_odorant *od, int compare, odorant_result *r,
                                 vg_error *err)
{
    int fft = cfg->engine == VG_ENGINE_FFT;
    vg_status st = VG_OK;

    r->has_heavy = od->heavy != NULL;
    r->has_sum = !fft || compare;
    r->has_fft = fft || compare;
    if (r->has_sum)
        st = sum_engine(cfg, v, od->light, &r->light, err);
    if (st == VG_OK && r->has_heavy && !fft)
        st = sum_engine(cfg, v, od->heavy, &r->heavy, err);
    if (st == VG_OK && r->has_fft)
        st = fft_engine(cfg, v, od->light, &r->fft, err);
    if (st == VG_OK && r->has_heavy && fft)
        st = fft_engine(cfg, v, od->heavy, &r->fft_heavy, err);
    r->fft_diff = 0.0;
    if (st == VG_OK && compare && r->fft.trusted)
        r->fft_diff = fabs(expm1(r->fft.ln_f - r->light.ln_f_total));
    if (st == VG_OK && cfg->validity.s.enabled)
        st = odorant_validity(cfg, v, od, r, err);
    if (st != VG_OK)
        vg_error_prefix(err, "[odorant.%s]: ", od->name);
    return st;
}

/* log10 of a rate, or VG_FILL where it is exactly zero. */
static double rate_log10(double ln_k, int zero)
{
    return zero ? VG_FILL : ln_k / VG_LN10;
}

/* log10 k_total of an FFT result: VG_FILL at zero coupling or below the
 * transform's dynamic range. */
static double fft_log10_k(const vg_fft_point *f, double coupling)
{
    if (coupling == 0.0 || !f->trusted)
        return VG_FILL;
    return (f->ln_f + ln_prefactor(coupling)) / VG_LN10;
}

/* log10 of the isotope effect from the two FFT totals, VG_FILL unless both
 * are trusted. */
static double fft_log10_ie(const odorant_result *r)
{
    if (!r->fft.trusted || !r->fft_heavy.trusted)
        return VG_FILL;
    return (r->fft.ln_f - r->fft_heavy.ln_f) / VG_LN10;
}

/* "heavy (rule: 'C-H stretch*', 6 modes)" or "heavy". */
static const char *heavy_title(const vg_odorant *od, char *buf, size_t size)
{
    if (od->substitute_line == 0)
        return "  heavy";
    snprintf(buf, size, "  heavy, [isotope] rule on %zu mode%s matching '%s'", od->substituted,
             od->substituted == 1 ? "" : "s", od->substitute);
    return buf;
}

static void print_text_fft_row(const char *name, size_t modes, const vg_fft_point *f,
                               double coupling)
{
    double l = fft_log10_k(f, coupling);

    if (coupling == 0.0 && f->trusted)
        printf("  %-16s %5zu  %14s %9.1e\n", name, modes, "zero rate", f->err);
    else if (l == VG_FILL)
        printf("  %-16s %5zu  %s\n", name, modes, "below the FFT's dynamic range (no value)");
    else
        printf("  %-16s %5zu  %14.6f %9.1e\n", name, modes, l, f->err);
}

static void print_text_fft(const vg_config *cfg, const odorant_result *res, double coupling)
{
    char h[160];

    printf("\nmany-mode odorants (time-domain FFT engine: the total rate only, the transform "
           "does not separate\nthe channels; 'error' is its estimated relative error)\n");
    printf("  %-16s %5s  %14s %9s\n", "odorant", "modes", "log10 k_total", "error");
    for (size_t i = 0; i < cfg->nodorants; i++) {
        const vg_odorant *od = &cfg->odorants[i];
        print_text_fft_row(od->name, od->light->n, &res[i].fft, coupling);
        if (!res[i].has_heavy)
            continue;
        if (od->substitute_line)
            printf("  %s\n", heavy_title(od, h, sizeof h));
        print_text_fft_row(od->substitute_line ? "" : "  heavy", od->heavy->n,
                           &res[i].fft_heavy, coupling);
        if (fft_log10_ie(&res[i]) == VG_FILL)
            printf("  %-16s log10 isotope effect undefined (a total lies below the FFT's "
                   "dynamic range)\n", "");
        else
            printf("  %-16s log10 isotope effect %.6f\n", "", fft_log10_ie(&res[i]));
    }
}

static void print_text_sum(const vg_config *cfg, const odorant_result *res)
{
    char h[160];

    printf("\nmany-mode odorants (frequency-domain sum engine; 'error' bounds the relative "
           "error of the rates)\n");
    printf("  %-16s %5s  %14s %14s %14s %12s %9s\n", "odorant", "modes", "log10 k_total",
           "log10 k_elast", "log10 k_assist", "log10 ratio", "error");
    for (size_t i = 0; i < cfg->nodorants; i++) {
        const vg_multimode_rates *l = &res[i].light;
        char t[32], e[32], as[32], ra[32];
        snprintf(t, sizeof t, "%.6f", l->ln_k_total / VG_LN10);
        snprintf(e, sizeof e, "%.6f", l->ln_k_elastic / VG_LN10);
        snprintf(as, sizeof as, "%.6f", l->ln_k_assisted / VG_LN10);
        snprintf(ra, sizeof ra, "%.6f", (l->ln_f_assisted - l->ln_f_elastic) / VG_LN10);
        printf("  %-16s %5zu  %14s %14s %14s %12s %9.1e\n", cfg->odorants[i].name,
               cfg->odorants[i].light->n, l->coupling_zero ? "zero rate" : t,
               l->coupling_zero ? "zero rate" : e,
               l->coupling_zero || l->assisted_zero ? "zero rate" : as,
               l->assisted_zero ? "undefined" : ra, l->err_total);
        if (res[i].has_heavy) {
            if (cfg->odorants[i].substitute_line)
                printf("  %s\n", heavy_title(&cfg->odorants[i], h, sizeof h));
            printf("  %-16s %5zu  %14s   log10 isotope effect %.6f\n",
                   cfg->odorants[i].substitute_line ? "" : "  heavy",
                   cfg->odorants[i].heavy->n,
                   res[i].heavy.coupling_zero ? "zero rate" : (snprintf(t, sizeof t, "%.6f",
                   res[i].heavy.ln_k_total / VG_LN10), t),
                   (l->ln_f_total - res[i].heavy.ln_f_total) / VG_LN10);
        }
    }
}

static void print_text_compare(const vg_config *cfg, const odorant_result *res)
{
    printf("\nengines compared (--compare), total rate of the light form\n");
    for (size_t i = 0; i < cfg->nodorants; i++) {
        if (res[i].fft.trusted)
            printf("  %-16s FFT against sum: F_total differs by %.2e relative (FFT error "
                   "estimate %.1e, sum error bound %.1e)\n", cfg->odorants[i].name,
                   res[i].fft_diff, res[i].fft.err, res[i].light.err_total);
        else
            printf("  %-16s FFT engine: the value lies below its dynamic range (no "
                   "comparison)\n", cfg->odorants[i].name);
    }
}

static void print_text_odorants(const vg_config *cfg, const odorant_result *res, int compare,
                                double coupling)
{
    if (cfg->engine == VG_ENGINE_FFT)
        print_text_fft(cfg, res, coupling);
    else
        print_text_sum(cfg, res);
    if (compare)
        print_text_compare(cfg, res);
}

/* The threshold of criterion idx. */
static double valid_threshold(const vg_valid_settings *s, int idx)
{
    const double t[VG_VALID_NCRIT] = {s->nonadiabatic_max, s->solvent_max, s->resolved_max,
                                      s->rethermal_max};
    return t[idx];
}

/* nu_n in s^-1 as the nonadiabatic criterion uses it at mode (meV). */
static double nuclear_frequency(const vg_config *cfg, double mode)
{
    double nu = cfg->validity.s.nuclear_frequency;

    return nu > 0.0 ? nu : mode / VG_MEV_PER_EV / (VG_SI_H / VG_SI_E);
}

static void print_text_validity_report(const vg_config *cfg, const vg_valid_report *r)
{
    static const char *const what[VG_VALID_NCRIT] = {"nu_el / nu_n", "kappa_A",
                                                     "max(V/hbar omega, V/k_B T)",
                                                     "k_total T1"};
    int nfail = 0;

    for (int c = 0; c < VG_VALID_NCRIT; c++)
        if (r->evaluated & (1u << c))
            printf("    %-13s %-27s %11.4e  threshold %-8g  %s\n", vg_valid_name(c), what[c],
                   r->value[c], valid_threshold(&cfg->validity.s, c),
                   r->failed & (1u << c) ? "fails" : "holds");
    printf("    ");
    for (int c = 0; c < VG_VALID_NCRIT; c++)
        if (r->failed & (1u << c))
            printf("%s%s", nfail++ ? ", " : "failing: ", vg_valid_name(c));
    printf("%s\n", nfail ? "" : "every criterion evaluated holds");
}

static void print_text_validity(const vg_config *cfg, const point_result *pr,
                                const vg_valid_report *single, const odorant_result *odor)
{
    printf("\nvalidity of the golden-rule picture (docs/theory.md section 6; a criterion holds "
           "where its value\nis below its threshold)\n");
    printf("  single mode (hbar omega %.10g meV, nu_n %.4e s^-1%s)\n", pr->v[VG_P_MODE],
           nuclear_frequency(cfg, pr->v[VG_P_MODE]),
           cfg->validity.s.enabled & VG_VALID_RETHERMAL ? ", T1 from mode_lifetime" : "");
    print_text_validity_report(cfg, single);
    for (size_t i = 0; odor && i < cfg->nodorants; i++) {
        printf("  odorant %s (lowest active mode %.6g meV, nu_n %.4e s^-1, T1 %g ps%s)\n",
               cfg->odorants[i].name, odor[i].valid_mode,
               nuclear_frequency(cfg, odor[i].valid_mode), odor[i].valid_t1,
               odor[i].valid_k_upper ? "; k_total below the FFT's dynamic range: its upper "
               "estimate is used" : "");
        print_text_validity_report(cfg, &odor[i].valid);
    }
}

static void print_json_validity(const vg_config *cfg, const vg_valid_report *r, double mode,
                                double t1)
{
    int k = 0;

    printf("{\"mode_meV\": ");
    json_number(mode);
    printf(", \"nuclear_frequency_s-1\": ");
    json_number(nuclear_frequency(cfg, mode));
    printf(", \"relaxation_time_ps\": ");
    json_number(cfg->validity.tau_l_ps);
    printf(", \"mode_lifetime_ps\": ");
    json_number(t1);
    printf(", \"criteria\": [");
    for (int c = 0; c < VG_VALID_NCRIT; c++) {
        if (!(r->evaluated & (1u << c)))
            continue;
        printf("%s{\"name\": \"%s\", \"value\": ", k++ ? ", " : "", vg_valid_name(c));
        json_number(r->value[c]);
        printf(", \"threshold\": ");
        json_number(valid_threshold(&cfg->validity.s, c));
        printf(", \"holds\": %s}", r->failed & (1u << c) ? "false" : "true");
    }
    printf("], \"failing\": [");
    k = 0;
    for (int c = 0; c < VG_VALID_NCRIT; c++)
        if (r->failed & (1u << c))
            printf("%s\"%s\"", k++ ? ", " : "", vg_valid_name(c));
    printf("]}");
}

static void print_json_heavy_head(const vg_odorant *od)
{
    printf(", \"heavy\": {\"modes\": %zu", od->heavy->n);
    if (od->substitute_line) {
        printf(", \"substitute\": ");
        vg_fmt_json_string(stdout, od->substitute);
        printf(", \"substituted\": %zu", od->substituted);
    }
}

static void print_json_sum(const vg_odorant *od, const odorant_result *r)
{
    const vg_multimode_rates *l = &r->light;

    printf(", \"log10_k_total\": ");
    json_number(rate_log10(l->ln_k_total, l->coupling_zero));
    printf(", \"log10_k_elastic\": ");
    json_number(rate_log10(l->ln_k_elastic, l->coupling_zero));
    printf(", \"log10_k_assisted\": ");
    json_number(rate_log10(l->ln_k_assisted, l->coupling_zero || l->assisted_zero));
    printf(", \"log10_ratio\": ");
    json_number(l->assisted_zero ? VG_FILL : (l->ln_f_assisted - l->ln_f_elastic) / VG_LN10);
    printf(", \"relative_error_bound\": ");
    json_number(l->err_total);
    if (r->has_heavy) {
        print_json_heavy_head(od);
        printf(", \"log10_k_total\": ");
        json_number(rate_log10(r->heavy.ln_k_total, r->heavy.coupling_zero));
        printf(", \"log10_isotope_effect\": ");
        json_number((l->ln_f_total - r->heavy.ln_f_total) / VG_LN10);
        printf("}");
    }
}

static void print_json_fft_total(const vg_fft_point *f, double coupling)
{
    printf(", \"log10_k_total\": ");
    json_number(fft_log10_k(f, coupling));
    printf(", \"below_dynamic_range\": %s, \"error_estimate\": ", f->trusted ? "false" : "true");
    json_number(f->trusted ? f->err : VG_FILL);
}

static void print_json_fft(const vg_odorant *od, const odorant_result *r, double coupling)
{
    print_json_fft_total(&r->fft, coupling);
    printf(", \"log10_k_elastic\": null, \"log10_k_assisted\": null, \"log10_ratio\": null");
    if (r->has_heavy) {
        print_json_heavy_head(od);
        print_json_fft_total(&r->fft_heavy, coupling);
        printf(", \"log10_isotope_effect\": ");
        json_number(fft_log10_ie(r));
        printf("}");
    }
}

static void print_json_odorants(const vg_config *cfg, const odorant_result *res, int compare,
                                double coupling)
{
    int fft = cfg->engine == VG_ENGINE_FFT;

    printf(",\n  \"engine\": \"%s\",\n  \"odorants\": [", fft ? "fft" : "sum");
    for (size_t i = 0; i < cfg->nodorants; i++) {
        const odorant_result *r = &res[i];
        printf("%s\n    {\"name\": ", i ? "," : "");
        vg_fmt_json_string(stdout, cfg->odorants[i].name);
        printf(", \"modes\": %zu", cfg->odorants[i].light->n);
        if (fft)
            print_json_fft(&cfg->odorants[i], r, coupling);
        else
            print_json_sum(&cfg->odorants[i], r);
        if (compare) {
            printf(", \"fft\": {\"trusted\": %s", r->fft.trusted ? "true" : "false");
            if (r->fft.trusted) {
                printf(", \"relative_difference\": ");
                json_number(r->fft_diff);
                printf(", \"error_estimate\": ");
                json_number(r->fft.err);
            }
            printf("}");
        }
        if (compare && fft) {
            printf(", \"sum\": {\"log10_k_total\": ");
            json_number(rate_log10(r->light.ln_k_total, r->light.coupling_zero));
            printf(", \"relative_error_bound\": ");
            json_number(r->light.err_total);
            printf("}");
        }
        if (cfg->validity.s.enabled) {
            printf(", \"validity_rate_upper_estimate\": %s, \"validity\": ",
                   r->valid_k_upper ? "true" : "false");
            print_json_validity(cfg, &r->valid, r->valid_mode, r->valid_t1);
        }
        printf("}");
    }
    printf("\n  ]");
}

static void print_json(const vg_config *cfg, point_result *pr, const odorant_result *odor,
                       int compare, const vg_valid_report *valid)
{
    int first = 1;

    printf("{\n  \"config\": ");
    vg_fmt_json_string(stdout, cfg->path);
    printf(",\n  \"parameters\": {");
    for (int p = 0; p < VG_NPARAM; p++) {
        printf("%s\"%s\": ", p ? ", " : "", vg_param_get((vg_param_id)p)->csv_column);
        json_number(pr->v[p]);
    }
    printf("},\n");
    if (cfg->isotope.on) {
        printf("  \"heavy\": {\"mode_meV\": ");
        json_number(pr->ev.heavy_mode.mode);
        printf(", \"huang_rhys\": ");
        json_number(pr->ev.heavy_mode.S);
        printf(", \"frequency_ratio\": ");
        json_number(cfg->isotope.frequency_ratio);
        printf("},\n");
    }
    printf("  \"defaults\": [");
    for (int p = 0, k = 0; p < VG_NPARAM; p++)
        if (cfg->param[p].defaulted)
            printf("%s\"%s\"", k++ ? ", " : "", vg_param_get((vg_param_id)p)->key);
    printf("],\n  \"mode_statistics\": \"%s\",\n  \"channels\": [",
           cfg->stats == VG_STATS_FROZEN ? "frozen" : "thermal");
    for (long n = pr->r.n_lo; n <= pr->r.n_hi; n++)
        if (listed(pr, n)) {
            print_json_channel(pr, n, first);
            first = 0;
        }
    if (pr->r.n_lo > 0 || pr->r.n_hi < 0)
        print_json_channel(pr, 0, first);
    printf("\n  ],\n  \"metrics\": {");
    for (int m = 0; m < VG_N_METRICS; m++) {
        if (vg_config_metric_lacks_mode(pr->cfg, (vg_metric_id)m))
            continue;
        printf("%s\"%s\": ", m ? ", " : "", vg_metric_get((vg_metric_id)m)->name);
        json_number(pr->metric[m]);
    }
    printf("}");
    if (cfg->validity.s.enabled) {
        printf(",\n  \"validity\": ");
        print_json_validity(cfg, valid, pr->v[VG_P_MODE], cfg->validity.t1_ps);
    }
    if (odor)
        print_json_odorants(cfg, odor, compare, pr->v[VG_P_COUPLING]);
    printf("\n}\n");
}

vg_status vg_cmd_point(const vg_cmd_args *a, vg_error *err)
{
    vg_config cfg;
    point_result pr;
    odorant_result *odor = NULL;
    vg_valid_report valid;
    vg_status st = vg_config_load(&cfg, a->config, a->nset, a->sets, err);

    if (st != VG_OK)
        return st;
    memset(&valid, 0, sizeof valid);
    st = vg_config_require_scalars(&cfg, "point", 0, err);
    if (st == VG_OK && a->compare && cfg.nodorants == 0)
        st = vg_error_set(err, VG_ECONFIG, "%s: 'point --compare' compares the two many-mode "
                          "engines and needs [odorant.NAME] sections", cfg.path);
    if (st == VG_OK)
        st = compute(&cfg, &pr, err);
    if (st == VG_OK && cfg.validity.s.enabled) {
        st = validity_eval(&cfg, pr.v, pr.v[VG_P_MODE], cfg.validity.t1_ps, pr.r.ln_k_total,
                           pr.r.coupling_zero, &valid, err);
        if (st != VG_OK)
            vg_error_prefix(err, "single mode: ");
    }
    if (st == VG_OK && cfg.nodorants > 0) {
        odor = calloc(cfg.nodorants, sizeof *odor);
        if (!odor)
            st = vg_error_set(err, VG_ENOMEM, "out of memory for the odorants");
        for (size_t i = 0; st == VG_OK && i < cfg.nodorants; i++)
            st = odorant_compute(&cfg, pr.v, &cfg.odorants[i], a->compare, &odor[i], err);
    }
    if (st == VG_OK) {
        if (a->json)
            print_json(&cfg, &pr, odor, a->compare, &valid);
        else
            print_text(&cfg, &pr);
        if (!a->json && odor)
            print_text_odorants(&cfg, odor, a->compare, pr.v[VG_P_COUPLING]);
        if (!a->json && cfg.validity.s.enabled)
            print_text_validity(&cfg, &pr, &valid, odor);
    }
    free(odor);
    vg_config_free(&cfg);
    return st;
}
