/*
 * The validity criteria of the rate model (include/vg_validity.h): four
 * dimensionless numbers that say whether a point lies where the
 * nonadiabatic, single-mode golden-rule rates apply (docs/theory.md,
 * section 6).  Pure functions, used by the point command and the sweep.
 *
 * Units.  Inputs come in the project's units (meV, K, ps, s^-1) and are
 * converted once to eV and s, with h and hbar in eV s from vg_const.h
 * (exact 2019 SI ratios), so that every formula below is evaluated in one
 * consistent set; the unit of each result is derived beside it.
 */
#include <math.h>
#include <stddef.h>
#include <string.h>

#include "vg_const.h"
#include "vg_validity.h"

#define EV_PER_MEV 1.0e-3
#define S_PER_PS 1.0e-12
#define H_EVS (VG_SI_H / VG_SI_E) /* Planck constant, 4.135667696e-15 eV s */

static const char *const crit_names[VG_VALID_NCRIT] = {"nonadiabatic", "solvent", "resolved",
                                                       "rethermal"};

void vg_valid_settings_default(vg_valid_settings *s)
{
    *s = (vg_valid_settings){.enabled = VG_VALID_ALL,
                             .nonadiabatic_max = VG_VALID_DEFAULT_THRESHOLD,
                             .solvent_max = VG_VALID_DEFAULT_THRESHOLD,
                             .resolved_max = VG_VALID_DEFAULT_THRESHOLD,
                             .rethermal_max = VG_VALID_DEFAULT_THRESHOLD,
                             .nuclear_frequency = VG_VALID_DEFAULT_NUCLEAR_FREQUENCY};
}

const char *vg_valid_name(int idx)
{
    return idx >= 0 && idx < VG_VALID_NCRIT ? crit_names[idx] : "none";
}

/* x must be finite and > 0, or >= 0 when zero_ok; one message per input. */
static vg_status need(double x, int zero_ok, const char *what, const char *unit, vg_error *err)
{
    if (isfinite(x) && (x > 0.0 || (zero_ok && x == 0.0)))
        return VG_OK;
    return vg_error_set(err, VG_ENUMERIC, "'%s' must be a finite number %s 0%s%s (got %g%s%s)",
                        what, zero_ok ? ">=" : ">", *unit ? " " : "", unit, x,
                        *unit ? " " : "", unit);
}

/* A computed value that is not finite (inputs so large that it overflows). */
static vg_status need_finite(double v, const char *what, vg_error *err)
{
    if (isfinite(v))
        return VG_OK;
    return vg_error_set(err, VG_ENUMERIC, "%s is not a finite number for these inputs", what);
}

static vg_status check_threshold(double t, const char *what, vg_error *err)
{
    return need(t, 0, what, "", err);
}

vg_status vg_valid_settings_check(const vg_valid_settings *s, vg_error *err)
{
    vg_status st;

    if (s == NULL)
        return vg_error_set(err, VG_ENUMERIC, "validity criteria called without settings");
    if ((s->enabled & ~VG_VALID_ALL) != 0u)
        return vg_error_set(err, VG_ENUMERIC, "validity criteria mask has unknown bits (0x%x)",
                            s->enabled & ~VG_VALID_ALL);
    if ((st = check_threshold(s->nonadiabatic_max, "nonadiabatic threshold", err)) != VG_OK ||
        (st = check_threshold(s->solvent_max, "solvent threshold", err)) != VG_OK ||
        (st = check_threshold(s->resolved_max, "resolved threshold", err)) != VG_OK ||
        (st = check_threshold(s->rethermal_max, "rethermal threshold", err)) != VG_OK)
        return st;
    return need(s->nuclear_frequency, 1, "nuclear frequency", "s^-1", err);
}

/* V (>= 0) and lambda (> 0) checked and converted to eV, and a third input
 * x checked (> 0, or >= 0 when x_zero_ok); the common head of nu_el and
 * kappa_A. */
static vg_status coupling_reorg_ev(double coupling_meV, double reorg_meV, double x,
                                   int x_zero_ok, const char *x_what, const char *x_unit,
                                   double *v, double *lam, vg_error *err)
{
    vg_status st;

    if ((st = need(coupling_meV, 1, "electronic_coupling", "meV", err)) != VG_OK ||
        (st = need(reorg_meV, 0, "reorganization", "meV", err)) != VG_OK ||
        (st = need(x, x_zero_ok, x_what, x_unit, err)) != VG_OK)
        return st;
    *v = coupling_meV * EV_PER_MEV;
    *lam = reorg_meV * EV_PER_MEV;
    return VG_OK;
}

/* *out = value when it is finite, else 0 and VG_ENUMERIC. */
static vg_status finite_or_zero(double value, const char *what, double *out, vg_error *err)
{
    vg_status st = need_finite(value, what, err);

    *out = st == VG_OK ? value : 0.0;
    return st;
}

vg_status vg_valid_electronic_frequency(double coupling_meV, double reorg_meV,
                                        double temperature_K, double *nu_el, vg_error *err)
{
    double v = 0.0, lam = 1.0, kt;
    vg_status st = coupling_reorg_ev(coupling_meV, reorg_meV, temperature_K, 0, "temperature",
                                     "K", &v, &lam, err);

    *nu_el = 0.0;
    if (st != VG_OK)
        return st;
    kt = VG_KB_EV * temperature_K;
    /* Newton & Sutin, Annu. Rev. Phys. Chem. 35, 437 (1984): the frequency
     * of electronic passage through the crossing region in the
     * Landau-Zener picture,
     *     nu_el = (2 V^2 / h) (pi^3 / (lambda k_B T))^(1/2).
     * Units: V^2 / h is eV^2 / (eV s) = eV s^-1; pi^3 / (lambda k_B T) is
     * eV^-2, its square root eV^-1; the product is s^-1.  The square root
     * is taken of each factor so that lambda k_B T cannot underflow. */
    return finite_or_zero(2.0 * v * (v / H_EVS) * sqrt(VG_PI * VG_PI * VG_PI) /
                              (sqrt(lam) * sqrt(kt)),
                          "electronic frequency nu_el", nu_el, err);
}

vg_status vg_valid_kappa(double coupling_meV, double reorg_meV, double tau_l_ps,
                         double *kappa, vg_error *err)
{
    double v = 0.0, lam = 1.0;
    vg_status st = coupling_reorg_ev(coupling_meV, reorg_meV, tau_l_ps, 1,
                                     "longitudinal relaxation time", "ps", &v, &lam, err);

    *kappa = 0.0;
    if (st != VG_OK)
        return st;
    /* Adiabaticity parameter of solvent-controlled transfer (Zusman, Chem.
     * Phys. 49, 295, 1980; Rips & Jortner, J. Chem. Phys. 87, 2090, 1987):
     *     kappa_A = 4 pi V^2 tau_L / (hbar lambda).
     * Units: V^2 tau_L is eV^2 s, hbar lambda is eV s eV = eV^2 s; the
     * ratio is dimensionless. */
    return finite_or_zero(4.0 * VG_PI * (v / VG_HBAR_EVS) * (v / lam) * (tau_l_ps * S_PER_PS),
                          "adiabaticity parameter kappa_A", kappa, err);
}

vg_status vg_valid_solvent_factor(double kappa, double *factor, vg_error *err)
{
    vg_status st;

    *factor = 0.0;
    if ((st = need(kappa, 1, "kappa_A", "", err)) != VG_OK)
        return st;
    /* k_obs = k_NA / (1 + kappa_A): the interpolation between the
     * nonadiabatic (kappa_A << 1) and solvent-controlled (kappa_A >> 1)
     * limits (Rips & Jortner 1987). */
    *factor = 1.0 / (1.0 + kappa);
    return VG_OK;
}

/* Common tail of the single criteria: the verdict, or zeros on failure. */
static vg_status judge(vg_status st, double v, double threshold, double *value, int *holds)
{
    *value = st == VG_OK ? v : 0.0;
    *holds = st == VG_OK && v < threshold;
    return st;
}

/* nu_n from the settings, or omega / 2 pi = (hbar omega) / h: eV / (eV s)
 * = s^-1. */
static vg_status nuclear_frequency(const vg_valid_settings *s, double mode_meV, double *nu_n,
                                   vg_error *err)
{
    vg_status st;

    *nu_n = s->nuclear_frequency;
    if (*nu_n > 0.0)
        return VG_OK;
    if ((st = need(mode_meV, 0, "mode", "meV", err)) != VG_OK)
        return st;
    *nu_n = mode_meV * EV_PER_MEV / H_EVS;
    return *nu_n > 0.0 ? VG_OK
                       : vg_error_set(err, VG_ENUMERIC, "mode frequency underflows (mode %g meV)",
                                      mode_meV);
}

vg_status vg_valid_nonadiabatic(const vg_valid_settings *s, double coupling_meV,
                                double reorg_meV, double temperature_K, double mode_meV,
                                double *value, int *holds, vg_error *err)
{
    double nu_el = 0.0, nu_n = 1.0, r = 0.0;
    vg_status st = vg_valid_settings_check(s, err);

    if (st == VG_OK)
        st = vg_valid_electronic_frequency(coupling_meV, reorg_meV, temperature_K, &nu_el, err);
    if (st == VG_OK)
        st = nuclear_frequency(s, mode_meV, &nu_n, err);
    if (st == VG_OK) {
        r = nu_el / nu_n; /* s^-1 / s^-1: dimensionless */
        st = need_finite(r, "nu_el / nu_n", err);
    }
    return judge(st, r, st == VG_OK ? s->nonadiabatic_max : 0.0, value, holds);
}

vg_status vg_valid_solvent(const vg_valid_settings *s, double coupling_meV, double reorg_meV,
                           double tau_l_ps, double *value, int *holds, vg_error *err)
{
    double k = 0.0;
    vg_status st = vg_valid_settings_check(s, err);

    if (st == VG_OK)
        st = vg_valid_kappa(coupling_meV, reorg_meV, tau_l_ps, &k, err);
    return judge(st, k, st == VG_OK ? s->solvent_max : 0.0, value, holds);
}

vg_status vg_valid_resolved(const vg_valid_settings *s, double coupling_meV, double mode_meV,
                            double temperature_K, double *value, int *holds, vg_error *err)
{
    double r = 0.0, kt;
    vg_status st = vg_valid_settings_check(s, err);

    if (st == VG_OK && (st = need(coupling_meV, 1, "electronic_coupling", "meV", err)) == VG_OK &&
        (st = need(mode_meV, 0, "mode", "meV", err)) == VG_OK &&
        (st = need(temperature_K, 0, "temperature", "K", err)) == VG_OK) {
        /* Channels are separate golden-rule events while V << hbar omega
         * (they do not mix) and V << k_B T (docs/theory.md, section 6, item
         * 3); meV / meV, dimensionless. */
        kt = VG_KB_MEV * temperature_K;
        r = fmax(coupling_meV / mode_meV, coupling_meV / kt);
        st = need_finite(r, "max(V / hbar omega, V / k_B T)", err);
    }
    return judge(st, r, st == VG_OK ? s->resolved_max : 0.0, value, holds);
}

vg_status vg_valid_rethermal(const vg_valid_settings *s, double k_total, double t1_ps,
                             double *value, int *holds, vg_error *err)
{
    double r = 0.0;
    vg_status st = vg_valid_settings_check(s, err);

    if (st == VG_OK && (st = need(k_total, 1, "total rate", "s^-1", err)) == VG_OK &&
        (st = need(t1_ps, 1, "mode lifetime T1", "ps", err)) == VG_OK) {
        /* The mode must return to equilibrium between transfers, k << 1/T_1
         * (docs/theory.md, section 6, item 7): s^-1 times s, dimensionless. */
        r = k_total * (t1_ps * S_PER_PS);
        st = need_finite(r, "k_total T1", err);
    }
    return judge(st, r, st == VG_OK ? s->rethermal_max : 0.0, value, holds);
}

/* One enabled criterion of vg_valid_evaluate, by index. */
static vg_status eval_one(const vg_valid_settings *s, const vg_valid_point *p, int idx,
                          double *value, double *threshold, int *holds, vg_error *err)
{
    switch (idx) {
    case VG_VALID_IDX_NONADIABATIC:
        *threshold = s->nonadiabatic_max;
        return vg_valid_nonadiabatic(s, p->coupling, p->reorg, p->temperature, p->mode, value,
                                     holds, err);
    case VG_VALID_IDX_SOLVENT:
        *threshold = s->solvent_max;
        return vg_valid_solvent(s, p->coupling, p->reorg, p->tau_l, value, holds, err);
    case VG_VALID_IDX_RESOLVED:
        *threshold = s->resolved_max;
        return vg_valid_resolved(s, p->coupling, p->mode, p->temperature, value, holds, err);
    default:
        *threshold = s->rethermal_max;
        return vg_valid_rethermal(s, p->k_total, p->t1, value, holds, err);
    }
}

vg_status vg_valid_evaluate(const vg_valid_settings *s, const vg_valid_point *p,
                            vg_valid_report *r, vg_error *err)
{
    double value, threshold;
    int idx, holds;
    vg_status st;

    memset(r, 0, sizeof *r);
    r->worst = -1;
    if ((st = vg_valid_settings_check(s, err)) != VG_OK)
        return st;
    if (p == NULL)
        return vg_error_set(err, VG_ENUMERIC, "validity criteria called without a point");
    for (idx = 0; idx < VG_VALID_NCRIT; idx++) {
        if ((s->enabled & (1u << idx)) == 0u)
            continue;
        st = eval_one(s, p, idx, &value, &threshold, &holds, err);
        if (st == VG_OK)
            st = need_finite(value / threshold, "value / threshold", err);
        if (st != VG_OK) {
            vg_error_prefix(err, "%s criterion: ", crit_names[idx]);
            memset(r, 0, sizeof *r);
            r->worst = -1;
            return st;
        }
        r->evaluated |= 1u << idx;
        if (!holds)
            r->failed |= 1u << idx;
        r->value[idx] = value;
        r->margin[idx] = value / threshold;
        if (r->worst < 0 || r->margin[idx] > r->worst_margin) {
            r->worst = idx;
            r->worst_margin = r->margin[idx];
        }
    }
    return VG_OK;
}

void vg_valid_modes_inputs(const vg_multimode_mode *modes, size_t n, double t1_default,
                           double *mode_meV, double *t1_ps)
{
    int any = 0;

    *mode_meV = modes[0].mode;
    *t1_ps = 0.0;
    for (size_t i = 0; i < n; i++) {
        const vg_multimode_mode *m = &modes[i];
        double life = isfinite(m->lifetime_ps) ? m->lifetime_ps : t1_default;
        if (!(m->huang_rhys > 0.0)) {
            *mode_meV = any ? *mode_meV : fmin(*mode_meV, m->mode);
            continue;
        }
        *mode_meV = any ? fmin(*mode_meV, m->mode) : m->mode;
        *t1_ps = any ? fmax(*t1_ps, life) : life;
        any = 1;
    }
}
