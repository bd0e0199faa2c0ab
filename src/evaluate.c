/*
 * One parameter set through the whole model (see vg_evaluate.h): the light
 * odorant's rates, the heavy isotopologue's under the configured rule, and
 * every metric.  Isotope rule (docs/theory.md, "Isotope substitution"):
 * Born-Oppenheimer surfaces do not depend on mass, so the force constant,
 * the displacement and lambda_v = S hbar omega stay fixed while the
 * frequency scales as 1 / sqrt(reduced mass).
 */
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

vg_status vg_evaluate(const vg_config *cfg, const double v[VG_NPARAM], vg_eval_result *res,
                      vg_error *err)
{
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
        vg_metrics_compute(&res->light, cfg->isotope.on ? &res->heavy : NULL, &cfg->feasibility,
                           res->metric);
    return st;
}
