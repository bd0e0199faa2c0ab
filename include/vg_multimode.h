/*
 * Many-mode odorants: the Franck-Condon weighted density
 *
 *   F(eps) = sum over n_1..n_M of prod_j W_{n_j}(S_j, omega_j, T)
 *            * G(eps - lambda - sum_j n_j hbar omega_j),
 *   G(x)   = (4 pi lambda k_B T)^(-1/2) exp(-x^2 / (4 lambda k_B T)),
 *
 * of an odorant with M quantised modes and a classical environment, split
 * into its elastic part (every n_j = 0) and its assisted part (the rest), and
 * the rates k = (2 pi / hbar) V^2 F.  A mode may carry a vibrational lifetime
 * T1: its oscillating terms in the generating function are then damped by
 * e^(-t / 2 T1) (docs/theory.md, "Many modes"), which gives every sideband in
 * which a quanta are absorbed and b emitted a Lorentzian of half width
 * (a + b) hbar / (2 T1).  The exact relative error of every result is bounded
 * and reported.  The second, independent engine (time domain, FFT) is
 * vg_fft.h.
 *
 * The engine (src/multimode.c), in short: each undamped mode's sticks are
 * given a slice of the environment's Gaussian, sampled on a lattice and
 * convolved by the trapezoidal rule, whose error for products of Gaussians
 * is known in closed form (Poisson summation) and relative, so it holds in
 * the deepest tails; all values are logs.  Damped modes enter as an explicit
 * list of (absorbed, emitted) configurations, each a Voigt profile.
 *
 * Pure functions (no I/O, no allocation, no static state) except
 * vg_multimode_alloc / vg_multimode_free.  Energies in meV, temperature in K,
 * lifetimes in ps, densities F in meV^-1, rates in s^-1, logs natural.
 * Called by the tests; the sweep and the config follow (docs/theory.md).
 */
#ifndef VG_MULTIMODE_H
#define VG_MULTIMODE_H

#include <stddef.h>

#include "vg_rate.h"
#include "vg_status.h"

/* One mode of the odorant. */
typedef struct {
    double mode;        /* hbar omega_j, meV, finite and > 0 */
    double huang_rhys;  /* S_j, finite and >= 0 (0: the mode does nothing) */
    double lifetime_ps; /* T1_j, ps, in (0, 1e12]; INFINITY (HUGE_VAL): undamped */
} vg_multimode_mode;

/* The odorant: n_modes modes sharing one statistics (thermal: each mode in
 * equilibrium at T before the transfer; frozen: each in its ground state). */
typedef struct {
    vg_mode_statistics stats;
    size_t n_modes;
    const vg_multimode_mode *modes; /* n_modes records (may be NULL if 0) */
} vg_multimode_system;

/* The result at one gap.  ln_f_* are natural logs of F in meV^-1, ln_k_* of
 * rates in s^-1.  err_* bound the relative error of F (and so of k): the
 * truncation and discretisation parts are rigorous bounds, kept below the
 * requested tolerance; a rounding estimate is added (docs/theory.md).  An
 * exactly zero quantity has its flag set and its logs at -HUGE_VAL. */
typedef struct {
    double ln_f_total;
    double ln_f_elastic;
    double ln_f_assisted;
    double ln_k_total;
    double ln_k_elastic;
    double ln_k_assisted;
    double err_total;
    double err_elastic;
    double err_assisted;
    int assisted_zero; /* 1: no mode has S > 0, F_assisted = 0 */
    int coupling_zero; /* 1: V = 0, every rate is 0 (the F are still given) */
} vg_multimode_rates;

/* Caller-owned workspace: lattice, weight and configuration storage. */
typedef struct vg_multimode_work vg_multimode_work;

/* Workspace for systems of up to max_modes modes and lattices (and weight
 * windows, and damped configurations) of up to max_points entries each; the
 * memory is about 73 max_points bytes.  max_work caps the terms (a
 * multiplication or an exp each) one call of vg_multimode_eval may sum: a narrow
 * environment (small lambda kT) against far-apart modes needs a fine, long
 * lattice, and the call is then refused instead of running for hours.
 * vg_multimode_need says what a parameter range needs.  Returns VG_ENOMEM,
 * or VG_EUSAGE for zero sizes.  *out is NULL on failure. */
vg_status vg_multimode_alloc(size_t max_modes, size_t max_points, double max_work,
                             vg_multimode_work **out, vg_error *err);

/* Frees w (NULL is fine). */
void vg_multimode_free(vg_multimode_work *w);

/* Checks every mode record (finite energies > 0, S >= 0, lifetime in
 * (0, 1e12] ps or infinite), the statistics, the reorganization (finite,
 * > 0) and the temperature (finite, > 0, 2 lambda kT a normal number).
 * VG_ENUMERIC with a message naming the mode or parameter otherwise. */
vg_status vg_multimode_check(const vg_multimode_system *sys, double reorg_meV,
                             double temperature_K, vg_error *err);

/* Lattice points (the max_points of vg_multimode_alloc) and terms (the
 * max_work; work may be NULL) that vg_multimode_eval needs for n_gaps gaps
 * in [gap_lo, gap_hi] at one reorganization and temperature, as planned
 * for its first round.  A first estimate: when eval tightens the truncation
 * it needs a little more, and says how much if the workspace is short. */
vg_status vg_multimode_need(const vg_multimode_system *sys, double reorg_meV,
                            double temperature_K, double gap_lo_meV,
                            double gap_hi_meV, size_t n_gaps, double tol,
                            size_t *points, double *work, vg_error *err);

/* F and k at n_gaps gaps (any order, any sign) for one reorganization
 * (> 0), temperature (> 0) and coupling (>= 0).  tol in (0, 1) is the
 * relative accuracy asked for: the truncation and discretisation errors of
 * every F stay below it.  The lattice is built once for all the gaps, so a
 * call with many gaps costs little more than one; the windows and the
 * lattice cover the call's whole gap range, so the same gap in another set
 * of gaps may differ in the last digits (within the error bound): pass the
 * same set (e.g. the whole gap axis) wherever identical bits are needed.
 * Errors: VG_ENUMERIC for inputs outside the domain, a workspace too small
 * (the message says how many points are needed), more terms than the
 * workspace's max_work, or a tolerance that cannot be met. */
vg_status vg_multimode_eval(vg_multimode_work *w, const vg_multimode_system *sys,
                            double reorg_meV, double temperature_K,
                            double coupling_meV, double tol, size_t n_gaps,
                            const double *gap_meV, vg_multimode_rates *out,
                            vg_error *err);

/* ln of the normalised Voigt profile: a Gaussian of standard deviation
 * sigma > 0 convolved with a Lorentzian of half width at half maximum
 * gamma >= 0 (gamma = 0: the Gaussian), at x; meV^-1 for meV inputs.
 * Relative accuracy about 1e-13 everywhere, deep tails included
 * (tests/scripts/multimode_ref.py checks it against mpmath). */
double vg_multimode_ln_voigt(double x, double sigma, double gamma);

/* The exponential tilt that centres the spectrum on one gap: the tau
 * (meV^-1) solving sum_j hbar omega_j m_j(tau hbar omega_j) + 2 lambda kT tau
 * = gap - lambda, m_j(theta) = S_j (nbar_j + 1) e^theta - S_j nbar_j e^-theta
 * the tilted mean number of quanta (frozen: nbar_j = 0).  Lifetimes are
 * ignored.  For valid inputs (vg_multimode_check); with no active mode it is
 * (gap - lambda) / (2 lambda kT). */
double vg_multimode_saddle(const vg_multimode_system *sys, double reorg_meV,
                           double temperature_K, double gap_meV);

/* ln C with F(gap) <= (4 pi lambda kT)^(-1/2) C for the undamped system and
 * any real tau (Chernoff): ln C = -tau (gap - lambda) + lambda kT tau^2
 * + sum_j ln Z_j(tau hbar omega_j), Z_j the mode's generating function of
 * the weights.  Tightest at tau = vg_multimode_saddle.  +HUGE_VAL where it
 * overflows. */
double vg_multimode_ln_chernoff(const vg_multimode_system *sys, double reorg_meV,
                                double temperature_K, double gap_meV, double tau);

#endif
