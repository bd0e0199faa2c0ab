/*
 * Where the model holds: the dimensionless criteria that say whether the
 * nonadiabatic, single-mode golden-rule rates of the kernel (vg_rate.h)
 * describe a parameter point at all (docs/theory.md, section 6).
 *
 *   nonadiabatic  nu_el / nu_n            electronic vs nuclear frequency
 *                                          (Newton & Sutin 1984)
 *   solvent       kappa_A                 solvent-controlled (adiabatic)
 *                                          crossover (Zusman 1980;
 *                                          Rips & Jortner 1987)
 *   resolved      max(V/hbar omega, V/k_B T)  channels are separate events
 *   rethermal     k_total T_1             the mode relaxes between transfers
 *
 * Each criterion holds where its value is strictly below the threshold the
 * caller sets (vg_valid_settings); the value itself is returned so a caller
 * can show how close a point is to the edge.
 *
 * Pure functions: no I/O, no allocation, no static state.  Units: energies
 * in meV, temperature in K, times in ps, rates and frequencies in s^-1.
 * An input outside the domain, or a value that would not be a finite
 * number, gives VG_ENUMERIC with a message and never a NaN or an Inf.
 *
 * Meant for the point command (naming the failing criterion) and the sweep's
 * validity metric.
 */
#ifndef VG_VALIDITY_H
#define VG_VALIDITY_H

#include <stddef.h>

#include "vg_multimode.h"
#include "vg_status.h"

/* The criteria, as bits of a mask; VG_VALID_IDX_* are the bit numbers. */
enum {
    VG_VALID_IDX_NONADIABATIC = 0,
    VG_VALID_IDX_SOLVENT = 1,
    VG_VALID_IDX_RESOLVED = 2,
    VG_VALID_IDX_RETHERMAL = 3,
    VG_VALID_NCRIT = 4
};

#define VG_VALID_NONADIABATIC (1u << VG_VALID_IDX_NONADIABATIC)
#define VG_VALID_SOLVENT (1u << VG_VALID_IDX_SOLVENT)
#define VG_VALID_RESOLVED (1u << VG_VALID_IDX_RESOLVED)
#define VG_VALID_RETHERMAL (1u << VG_VALID_IDX_RETHERMAL)
#define VG_VALID_ALL (VG_VALID_NONADIABATIC | VG_VALID_SOLVENT | VG_VALID_RESOLVED | \
                      VG_VALID_RETHERMAL)

/* Defaults: "much less than" read as a factor of ten (common practice), and
 * a nuclear frequency at the top of the 1e12-1e13 s^-1 range the
 * nonadiabatic criterion is usually stated against (Newton & Sutin 1984). */
#define VG_VALID_DEFAULT_THRESHOLD 0.1
#define VG_VALID_DEFAULT_NUCLEAR_FREQUENCY 1.0e13

typedef struct {
    unsigned enabled;          /* mask of VG_VALID_* bits to evaluate */
    double nonadiabatic_max;   /* threshold on nu_el / nu_n, finite, > 0 */
    double solvent_max;        /* threshold on kappa_A, finite, > 0 */
    double resolved_max;       /* threshold on max(V/hbar omega, V/k_B T), finite, > 0 */
    double rethermal_max;      /* threshold on k_total T_1, finite, > 0 */
    double nuclear_frequency;  /* nu_n, s^-1, finite, > 0; or exactly 0: use
                                  the odorant mode's omega / 2 pi */
} vg_valid_settings;

/* One point: what the criteria depend on.  Only the fields the enabled
 * criteria use are checked. */
typedef struct {
    double coupling;     /* V, meV, >= 0 */
    double reorg;        /* lambda, meV, > 0 */
    double mode;         /* hbar omega, meV, > 0 */
    double temperature;  /* T, K, > 0 */
    double tau_l;        /* longitudinal relaxation time of the environment, ps, >= 0 */
    double t1;           /* lifetime T_1 of the mode's first excited level, ps, >= 0 */
    double k_total;      /* total transfer rate, s^-1, >= 0 */
} vg_valid_point;

typedef struct {
    unsigned evaluated;                /* mask of the criteria evaluated */
    unsigned failed;                   /* mask of those whose value >= threshold */
    double value[VG_VALID_NCRIT];      /* criterion values by VG_VALID_IDX_* (0 if
                                          not evaluated) */
    double margin[VG_VALID_NCRIT];     /* value / threshold (1 at the edge; the
                                          verdict is in failed) */
    int worst;                         /* VG_VALID_IDX_* of the largest margin (the
                                          lowest index on a tie); -1 if none */
    double worst_margin;               /* that margin; 0 if none */
} vg_valid_report;

/* All four criteria, thresholds 0.1, nu_n = 1e13 s^-1. */
void vg_valid_settings_default(vg_valid_settings *s);

/* Checks every threshold and the nuclear frequency; VG_ENUMERIC if one is
 * not finite or not > 0 (nu_n may be exactly 0), or if enabled has bits
 * outside VG_VALID_ALL. */
vg_status vg_valid_settings_check(const vg_valid_settings *s, vg_error *err);

/* Short name of a criterion by VG_VALID_IDX_* ("nonadiabatic", "solvent",
 * "resolved", "rethermal"); "none" for anything else. */
const char *vg_valid_name(int idx);

/* nu_el = (2 V^2 / h) (pi^3 / (lambda k_B T))^(1/2), s^-1 (Newton & Sutin,
 * Annu. Rev. Phys. Chem. 35, 437, 1984).  V >= 0, lambda > 0 meV, T > 0 K. */
vg_status vg_valid_electronic_frequency(double coupling_meV, double reorg_meV,
                                        double temperature_K, double *nu_el, vg_error *err);

/* kappa_A = 4 pi V^2 tau_L / (hbar lambda), dimensionless (Zusman, Chem.
 * Phys. 49, 295, 1980; Rips & Jortner, J. Chem. Phys. 87, 2090, 1987).
 * V >= 0, lambda > 0 meV, tau_L >= 0 ps. */
vg_status vg_valid_kappa(double coupling_meV, double reorg_meV, double tau_l_ps,
                         double *kappa, vg_error *err);

/* The factor the solvent-controlled rate carries, k_obs / k_NA =
 * 1 / (1 + kappa_A), in (0, 1]; kappa_A >= 0 and finite. */
vg_status vg_valid_solvent_factor(double kappa, double *factor, vg_error *err);

/* The criteria one at a time: *value is the dimensionless criterion value,
 * *holds is 1 where value < the settings' threshold, else 0.  The settings
 * are checked as vg_valid_settings_check does (enabled is ignored).  On
 * VG_ENUMERIC, *value = 0 and *holds = 0. */

/* nu_el / nu_n; nu_n from the settings, or omega / 2 pi = (hbar omega) / h
 * when the settings' nuclear_frequency is 0 (then mode > 0 meV is needed;
 * otherwise mode is not used). */
vg_status vg_valid_nonadiabatic(const vg_valid_settings *s, double coupling_meV,
                                double reorg_meV, double temperature_K, double mode_meV,
                                double *value, int *holds, vg_error *err);

/* kappa_A against the solvent threshold. */
vg_status vg_valid_solvent(const vg_valid_settings *s, double coupling_meV, double reorg_meV,
                           double tau_l_ps, double *value, int *holds, vg_error *err);

/* max(V / hbar omega, V / k_B T); mode > 0 meV, T > 0 K. */
vg_status vg_valid_resolved(const vg_valid_settings *s, double coupling_meV, double mode_meV,
                            double temperature_K, double *value, int *holds, vg_error *err);

/* k_total T_1 (T_1 in ps, so k_total 1e-12 T_1). */
vg_status vg_valid_rethermal(const vg_valid_settings *s, double k_total, double t1_ps,
                             double *value, int *holds, vg_error *err);

/* The mode quantum and lifetime the criteria use for a many-mode odorant
 * (docs/config.md, [validity]): the lowest quantum among the modes with
 * S > 0 (the closest channel spacing; the lowest of all if none has S > 0)
 * and the longest lifetime among them, a mode without one taking
 * t1_default (ps).  n >= 1. */
void vg_valid_modes_inputs(const vg_multimode_mode *modes, size_t n, double t1_default,
                           double *mode_meV, double *t1_ps);

/* Every criterion enabled in s at point p.  On VG_ENUMERIC (bad settings
 * or an input an enabled criterion needs), *r is zeroed with worst = -1. */
vg_status vg_valid_evaluate(const vg_valid_settings *s, const vg_valid_point *p,
                            vg_valid_report *r, vg_error *err);

#endif
