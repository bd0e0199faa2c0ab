/*
 * One parameter set through the whole model (see vg_evaluate.h): the light
 * odorant's rates, the heavy isotopologue's under the configured rule, and
 * every metric.  Isotope rule (docs/theory.md, "Isotope substitution"):
 * Born-Oppenheimer surfaces do not depend on mass, so the force constant,
 * the displacement and lambda_v = S hbar omega stay fixed while the
 * frequency scales as 1 / sqrt(reduced mass).
 */
#define _POSIX_C_SOURCE 200809L /* fnmatch */

#include <float.h>
#include <fnmatch.h>
#include <math.h>

#include "vg_evaluate.h"

double vg_reduced_mass(double m1, double m2)
{
    return m1 * m2 / (m1 + m2);
}

double vg_isotope_frequency_ratio(double reduced_mass_ratio)
{
    return sqrt(reduced_mass_ratio);
}

void vg_isotope_heavy(const vg_isotope *iso, double S, double mode_meV, double *S_heavy,
                      double *mode_heavy_meV)
{
    *mode_heavy_meV = mode_meV / iso->frequency_ratio;
    *S_heavy = iso->rule == VG_HR_BORN_OPPENHEIMER ? S * iso->frequency_ratio : S;
}

size_t vg_isotope_heavy_modes(const vg_isotope *iso, const char *pattern, const vg_modes *light,
                              vg_modes *heavy)
{
    size_t matched = 0;

    *heavy = *light;
    for (size_t i = 0; i < light->n; i++) {
        vg_multimode_mode *m = &heavy->mode[i];
        if (fnmatch(pattern, light->label[i], 0) != 0)
            continue;
        vg_isotope_heavy(iso, light->mode[i].huang_rhys, light->mode[i].mode, &m->huang_rhys,
                         &m->mode);
        matched++;
    }
    return matched;
}

vg_status vg_evaluate(const vg_config *cfg, const double v[VG_NPARAM], vg_eval_result *res,
                      vg_error *err)
{
    double valid = VG_FILL, failed = VG_FILL;
    vg_status st = vg_rate_mode_init(&res->light_mode, cfg->stats, v[VG_P_HUANG_RHYS],
                                     v[VG_P_MODE], v[VG_P_TEMPERATURE], err);

    if (st == VG_OK)
        st = vg_rate_eval(&res->light_mode, v[VG_P_GAP], v[VG_P_REORG], v[VG_P_COUPLING],
                          cfg->tolerance, &res->light, err);
    if (st == VG_OK && cfg->isotope.on) {
        double S_h, mode_h;
        vg_isotope_heavy(&cfg->isotope, v[VG_P_HUANG_RHYS], v[VG_P_MODE], &S_h, &mode_h);
        st = vg_rate_mode_init(&res->heavy_mode, cfg->stats, S_h, mode_h,
                               v[VG_P_TEMPERATURE], err);
        if (st == VG_OK)
            st = vg_rate_eval(&res->heavy_mode, v[VG_P_GAP], v[VG_P_REORG], v[VG_P_COUPLING],
                              cfg->tolerance, &res->heavy, err);
        if (st != VG_OK)
            vg_error_prefix(err, "heavy isotopologue: ");
    }
    if (st == VG_OK)
        st = vg_evaluate_valid(cfg, v[VG_P_COUPLING], v[VG_P_REORG], v[VG_P_TEMPERATURE],
                               v[VG_P_MODE], cfg->validity.t1_ps, &res->light, &valid, &failed,
                               err);
    if (st == VG_OK)
        vg_metrics_compute_full(&res->light, cfg->isotope.on ? &res->heavy : NULL, NULL, valid,
                                failed, &cfg->feasibility, res->metric);
    return st;
}

vg_status vg_evaluate_valid(const vg_config *cfg, double coupling_meV, double reorg_meV,
                            double temperature_K, double mode_meV, double t1_ps,
                            const vg_rates *r, double *valid, double *failed,
                            vg_error *err)
{
    vg_valid_point p;
    vg_valid_report rep;
    vg_status st;

    *valid = *failed = VG_FILL;
    if (!cfg->validity.on || !cfg->validity.s.enabled)
        return VG_OK;
    p.coupling = coupling_meV;
    p.reorg = reorg_meV;
    p.temperature = temperature_K;
    p.mode = mode_meV;
    p.tau_l = cfg->validity.tau_l_ps;
    p.t1 = t1_ps;
    p.k_total = r->coupling_zero ? 0.0 : fmin(exp(r->ln_k_total), DBL_MAX);
    st = vg_valid_evaluate(&cfg->validity.s, &p, &rep, err);
    if (st == VG_OK) {
        *valid = rep.failed == 0 ? 1.0 : 0.0;
        *failed = (double)rep.failed;
    }
    return st;
}
