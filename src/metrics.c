/*
 * The per-point metrics (see vg_metrics.h): their names, CF units and long
 * names, and their values from one vg_rates record.  Called by the sweep
 * engine, the writers (for names and attributes) and the point command.
 *
 * Fill rules (docs/theory.md, "Zero rates"): the log of a rate that is exactly
 * zero is VG_FILL.  With coupling 0 every rate is zero, but the ratio, the
 * fraction and the contrast are ratios of Franck-Condon sums and stay
 * defined.  With huang_rhys 0 there is no assisted channel: its rate and the
 * ratio are VG_FILL, the fraction is 0 and the contrast is exactly 0.
 */
#include <math.h>
#include <string.h>

#include "vg_const.h"
#include "vg_metrics.h"

static const vg_metric_info metric_table[VG_N_METRICS] = {
    [VG_M_LOG10_K_ELASTIC] = {"log10_k_elastic", "1",
                              "log10 of the elastic (no quantum exchanged) rate in s-1", 0},
    [VG_M_LOG10_K_ASSISTED] = {"log10_k_assisted", "1",
                               "log10 of the vibrationally assisted rate (all channels "
                               "exchanging quanta) in s-1", 0},
    [VG_M_LOG10_K_TOTAL] = {"log10_k_total", "1",
                            "log10 of the total transfer rate in s-1", 0},
    [VG_M_LOG10_K_BARE] = {"log10_k_bare", "1",
                           "log10 of the Marcus rate without the odorant mode in s-1", 0},
    [VG_M_LOG10_RATIO] = {"log10_ratio", "1",
                          "log10 of the ratio of assisted to elastic rate", 0},
    [VG_M_ASSISTED_FRACTION] = {"assisted_fraction", "1",
                                "fraction of the total rate carried by assisted channels", 0},
    [VG_M_LOG10_CONTRAST] = {"log10_contrast", "1",
                             "log10 of the ratio of total rate to bare Marcus rate", 0},
    [VG_M_LOG10_K_TOTAL_HEAVY] = {"log10_k_total_heavy", "1",
                                  "log10 of the total transfer rate with the heavy "
                                  "isotopologue in s-1", VG_NEEDS_ISOTOPE},
    [VG_M_ISOTOPE_EFFECT] = {"isotope_effect", "1",
                             "isotope effect: total rate with the light over the heavy "
                             "isotopologue", VG_NEEDS_ISOTOPE},
    [VG_M_LOG10_ISOTOPE_EFFECT] = {"log10_isotope_effect", "1",
                                   "log10 of the isotope effect", VG_NEEDS_ISOTOPE},
    [VG_M_FEASIBLE] = {"feasible", "1",
                       "1 where every feasibility condition holds, else 0",
                       VG_NEEDS_FEASIBILITY},
    [VG_M_DISCRIMINATION] = {"discrimination", "1",
                             "discrimination: total rate with the odorant over that with "
                             "the odorant compared against", VG_NEEDS_DISCRIMINATION},
    [VG_M_LOG10_DISCRIMINATION] = {"log10_discrimination", "1",
                                   "log10 of the discrimination", VG_NEEDS_DISCRIMINATION},
    [VG_M_VALID] = {"valid", "1",
                    "1 where every enabled validity criterion of the model holds, else 0",
                    VG_NEEDS_VALIDITY},
    [VG_M_FAILED_CRITERIA] = {"failed_criteria", "1",
                              "validity criteria that fail: sum of 1 nonadiabatic, 2 solvent, "
                              "4 resolved, 8 rethermal (0 where all hold)", VG_NEEDS_VALIDITY},
};

const vg_metric_info *vg_metric_get(vg_metric_id id)
{
    if ((int)id < 0 || id >= VG_N_METRICS)
        return NULL;
    return &metric_table[id];
}

int vg_metric_find(const char *name)
{
    if (!name)
        return -1;
    for (int i = 0; i < VG_N_METRICS; i++)
        if (strcmp(metric_table[i].name, name) == 0)
            return i;
    return -1;
}

/* Two doubles, for the stores of the sweep's usual case (GCC vector type;
 * lane-wise IEEE arithmetic, so the bits are the scalar expressions'). */
typedef double v2d __attribute__((vector_size(16)));

/* log10 of a rate, or VG_FILL where the rate is exactly zero. */
static double log10_or_fill(double ln_value, int zero)
{
    return zero ? VG_FILL : ln_value * VG_LOG10E;
}

void vg_metrics_from_rates(const vg_rates *r, double out[VG_N_METRICS])
{
    vg_metrics_compute(r, NULL, NULL, out);
}

/* The light metrics from a point's values (one expression for records and
 * for arrays, so that both give the same bits). */
static inline void light_values(double ln_k_elastic, double ln_k_assisted, double ln_k_total,
                                double ln_k_bare, double ln_fc_elastic, double ln_fc_assisted,
                                double ln_fc_total, double ln_fc_bare, double fraction, int vz,
                                int sz, double out[VG_N_METRICS])
{
    out[VG_M_LOG10_K_ELASTIC] = log10_or_fill(ln_k_elastic, vz);
    out[VG_M_LOG10_K_ASSISTED] = log10_or_fill(ln_k_assisted, vz || sz);
    out[VG_M_LOG10_K_TOTAL] = log10_or_fill(ln_k_total, vz);
    out[VG_M_LOG10_K_BARE] = log10_or_fill(ln_k_bare, vz);
    out[VG_M_LOG10_RATIO] = log10_or_fill(ln_fc_assisted - ln_fc_elastic, sz);
    out[VG_M_ASSISTED_FRACTION] = sz ? 0.0 : fraction;
    out[VG_M_LOG10_CONTRAST] = (ln_fc_total - ln_fc_bare) * VG_LOG10E;
}

/* The light metrics of r. */
static void light_metrics(const vg_rates *r, double out[VG_N_METRICS])
{
    light_values(r->ln_k_elastic, r->ln_k_assisted, r->ln_k_total, r->ln_k_bare,
                 r->ln_fc_elastic, r->ln_fc_assisted, r->ln_fc_total, r->ln_fc_bare,
                 r->assisted_fraction, r->coupling_zero, r->assisted_zero, out);
}

/* Beyond this |log10| the linear isotope effect is not stored (it would
 * leave the double range); log10_isotope_effect carries it. */
#define ISOTOPE_LOG10_MAX 300.0

static inline void heavy_values(double light_ln_fc_total, double heavy_ln_fc_total,
                                double heavy_ln_k_total, int heavy_vz, double out[VG_N_METRICS])
{
    /* from the prefactor-free sums: the prefactor is the same for both
     * isotopologues (it holds V, lambda and T only), and they stay defined
     * at V = 0 */
    double l10 = (light_ln_fc_total - heavy_ln_fc_total) * VG_LOG10E;

    out[VG_M_LOG10_K_TOTAL_HEAVY] = log10_or_fill(heavy_ln_k_total, heavy_vz);
    out[VG_M_LOG10_ISOTOPE_EFFECT] = l10;
    out[VG_M_ISOTOPE_EFFECT] = fabs(l10) <= ISOTOPE_LOG10_MAX
                               ? exp((light_ln_fc_total - heavy_ln_fc_total)) : VG_FILL;
}

static void heavy_metrics(const vg_rates *light, const vg_rates *heavy,
                          double out[VG_N_METRICS])
{
    heavy_values(light->ln_fc_total, heavy->ln_fc_total, heavy->ln_k_total,
                 heavy->coupling_zero, out);
}

/* A stored value as the comparisons see it: VG_FILL (a rate that is exactly
 * zero, or a ratio with a zero numerator) is -infinity. */
static double compared(double v)
{
    return v == VG_FILL ? -HUGE_VAL : v;
}

int vg_require_holds(const vg_require_set *req, const double m[VG_N_METRICS])
{
    for (size_t k = 0; req && k < req->n; k++) {
        const vg_require *c = &req->r[k];
        double v = compared(m[c->metric]);
        int ok = c->op == VG_CMP_LT   ? v < c->value
                 : c->op == VG_CMP_LE ? v <= c->value
                 : c->op == VG_CMP_GT ? v > c->value
                                      : v >= c->value;
        if (!ok)
            return 0;
    }
    return 1;
}

/* The discrimination from the prefactor-free totals, as the isotope effect:
 * the prefactor holds V, lambda and T only, the same for both odorants. */
static void other_metrics(const vg_rates *light, const vg_rates *other,
                          double out[VG_N_METRICS])
{
    double l10 = (light->ln_fc_total - other->ln_fc_total) * VG_LOG10E;

    out[VG_M_LOG10_DISCRIMINATION] = l10;
    out[VG_M_DISCRIMINATION] = fabs(l10) <= ISOTOPE_LOG10_MAX
                               ? exp(light->ln_fc_total - other->ln_fc_total) : VG_FILL;
}

void vg_metrics_compute_full(const vg_rates *light, const vg_rates *heavy,
                             const vg_rates *other, double valid, double failed,
                             const vg_require_set *req, double out[VG_N_METRICS])
{
    light_metrics(light, out);
    out[VG_M_LOG10_K_TOTAL_HEAVY] = out[VG_M_ISOTOPE_EFFECT] = VG_FILL;
    out[VG_M_LOG10_ISOTOPE_EFFECT] = out[VG_M_FEASIBLE] = VG_FILL;
    out[VG_M_DISCRIMINATION] = out[VG_M_LOG10_DISCRIMINATION] = VG_FILL;
    out[VG_M_VALID] = valid;
    out[VG_M_FAILED_CRITERIA] = failed;
    if (heavy)
        heavy_metrics(light, heavy, out);
    if (other)
        other_metrics(light, other, out);
    if (req && req->n > 0)
        out[VG_M_FEASIBLE] = vg_require_holds(req, out) ? 1.0 : 0.0;
}

void vg_metrics_compute(const vg_rates *light, const vg_rates *heavy,
                        const vg_require_set *req, double out[VG_N_METRICS])
{
    vg_metrics_compute_full(light, heavy, NULL, VG_FILL, VG_FILL, req, out);
}

void vg_metrics_compute_run(size_t n, const vg_rates_run *light, const vg_rates_run *heavy,
                            const double *valid, const double *failed,
                            const vg_require_set *req, int fill_kept, double *out)
{
    if (!light->coupling_zero && !light->assisted_zero && !heavy && !valid && !failed
        && !(req && req->n > 0)) {
        /* the usual case, the same expressions without the flags' branches,
         * stored two values at a time (the store of 15 doubles a point, not
         * their arithmetic, is what this loop's time goes to) */
        const v2d l10 = {VG_LOG10E, VG_LOG10E}, fill = {VG_FILL, VG_FILL};
        /* the arrays in locals: the stores below (memcpy) may alias
         * anything, so the compiler would otherwise read each pointer from
         * the record again for every point */
        const double *ke = light->ln_k_elastic, *ka = light->ln_k_assisted;
        const double *kt = light->ln_k_total, *kb = light->ln_k_bare;
        const double *fe = light->ln_fc_elastic, *fa = light->ln_fc_assisted;
        const double *ft = light->ln_fc_total, *fb = light->ln_fc_bare;
        const double *af = light->assisted_fraction;
        double *o = out;
        _Static_assert(VG_M_LOG10_K_ASSISTED == 1 && VG_M_LOG10_K_TOTAL == 2
                       && VG_M_LOG10_K_BARE == 3 && VG_M_LOG10_RATIO == 4
                       && VG_M_ASSISTED_FRACTION == 5 && VG_M_LOG10_CONTRAST == 6
                       && VG_N_METRICS == 15, "the stores below follow the metric order");
        for (size_t i = 0; i < n; i++, o += VG_N_METRICS) {
            v2d a = (v2d){ke[i], ka[i]} * l10;
            v2d b = (v2d){kt[i], kb[i]} * l10;
            v2d c = {(fa[i] - fe[i]) * VG_LOG10E, af[i]};
            memcpy(o, &a, sizeof a);
            memcpy(o + 2, &b, sizeof b);
            memcpy(o + 4, &c, sizeof c);
            o[VG_M_LOG10_CONTRAST] = (ft[i] - fb[i]) * VG_LOG10E;
        }
        for (size_t i = 0; !fill_kept && i < n; i++, out += VG_N_METRICS) /* the rest: fill */
            for (int k = 7; k < VG_N_METRICS - 1; k += 2)
                memcpy(out + k, &fill, sizeof fill);
        return;
    }
    for (size_t i = 0; i < n; i++, out += VG_N_METRICS) {
        light_values(light->ln_k_elastic[i], light->ln_k_assisted[i], light->ln_k_total[i],
                     light->ln_k_bare[i], light->ln_fc_elastic[i], light->ln_fc_assisted[i],
                     light->ln_fc_total[i], light->ln_fc_bare[i], light->assisted_fraction[i],
                     light->coupling_zero, light->assisted_zero, out);
        out[VG_M_LOG10_K_TOTAL_HEAVY] = out[VG_M_ISOTOPE_EFFECT] = VG_FILL;
        out[VG_M_LOG10_ISOTOPE_EFFECT] = out[VG_M_FEASIBLE] = VG_FILL;
        out[VG_M_DISCRIMINATION] = out[VG_M_LOG10_DISCRIMINATION] = VG_FILL;
        out[VG_M_VALID] = valid ? valid[i] : VG_FILL;
        out[VG_M_FAILED_CRITERIA] = failed ? failed[i] : VG_FILL;
        if (heavy)
            heavy_values(light->ln_fc_total[i], heavy->ln_fc_total[i], heavy->ln_k_total[i],
                         heavy->coupling_zero, out);
        if (req && req->n > 0)
            out[VG_M_FEASIBLE] = vg_require_holds(req, out) ? 1.0 : 0.0;
    }
}
