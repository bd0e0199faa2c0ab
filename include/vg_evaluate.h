/*
 * One parameter set through the whole model: the light odorant's rates, the
 * heavy isotopologue's (when [isotope] is given), and every metric including
 * feasible (when [feasibility] is given).  The single entry point for
 * everything that evaluates points outside the sweep's rows: the point,
 * sensitivity and uncertainty commands and the probability map.
 *
 * Pure: no I/O, no allocation, no static state.
 */
#ifndef VG_EVALUATE_H
#define VG_EVALUATE_H

#include "vg_config.h"

typedef struct {
    vg_rate_mode light_mode, heavy_mode;
    vg_rates light, heavy;         /* heavy: only when cfg->isotope.on */
    double metric[VG_N_METRICS];   /* VG_FILL where a metric is not configured */
} vg_eval_result;

/* Evaluate the parameter set v (canonical units) with cfg's model settings
 * (mode statistics, tolerance, isotope, feasibility).  VG_ENUMERIC with a
 * message for values outside the kernel's domain. */
vg_status vg_evaluate(const vg_config *cfg, const double v[VG_NPARAM], vg_eval_result *res,
                      vg_error *err);

/* The heavy isotopologue's Huang-Rhys factor and mode quantum for the light
 * ones under iso's rule: hbar omega_heavy = hbar omega / ratio and, under
 * the Born-Oppenheimer rule, S_heavy = S ratio (lambda_v = S hbar omega
 * unchanged; docs/theory.md). */
void vg_isotope_heavy(const vg_isotope *iso, double S, double mode_meV, double *S_heavy,
                      double *mode_heavy_meV);

/* The heavy isotopologue of a many-mode table under iso's rule: *heavy is
 * a copy of *light in which every mode whose label matches the shell-style
 * glob pattern (fnmatch(3), no flags; "C-H stretch*") has its mode quantum
 * and Huang-Rhys factor replaced by vg_isotope_heavy's; the lifetimes,
 * labels and every other mode are copied unchanged.  Returns the number of
 * modes matched (0: *heavy equals *light).  No range checks: the caller
 * decides what a heavy mode outside the table's accepted ranges means. */
size_t vg_isotope_heavy_modes(const vg_isotope *iso, const char *pattern, const vg_modes *light,
                              vg_modes *heavy);

/* Reduced mass m1 m2 / (m1 + m2) (any mass unit). */
double vg_reduced_mass(double m1, double m2);

/* omega_light / omega_heavy of a harmonic oscillator from the reduced-mass
 * ratio mu_heavy / mu_light (> 0): sqrt(mu_heavy / mu_light). */
double vg_isotope_frequency_ratio(double reduced_mass_ratio);

/* The valid and failed_criteria metrics of one point (the same for every
 * command): both VG_FILL without [validity] criteria, else *valid 1 where
 * every enabled criterion holds and 0 where one fails, and *failed the sum
 * of 2^VG_VALID_IDX_* over the failing ones; the total rate (for the
 * re-thermalisation criterion) from r.  mode_meV and t1_ps are the single mode's (the mode
 * and mode_lifetime) or a table's (vg_valid_modes_inputs).  VG_ENUMERIC
 * from vg_valid_evaluate. */
vg_status vg_evaluate_valid(const vg_config *cfg, double coupling_meV, double reorg_meV,
                            double temperature_K, double mode_meV, double t1_ps,
                            const vg_rates *r, double *valid, double *failed,
                            vg_error *err);

#endif
