/*
 * Time-domain engine for many-mode odorants: F(eps) on a whole, evenly
 * spaced gap grid from the generating function (Huang & Rhys 1950; Lax,
 * J. Chem. Phys. 20, 1752, 1952; Kubo & Toyozawa, Prog. Theor. Phys. 13, 160,
 * 1955), in the conventions of docs/theory.md:
 *
 *   F(eps) = (1 / 2 pi hbar) int dt exp(i eps t / hbar - g(t)),
 *   g(t)   = i lambda t/hbar + lambda kT t^2/hbar^2
 *          + sum_j S_j [coth(beta_j/2) (1 - D_j cos omega_j t) + i D_j sin omega_j t],
 *
 * D_j = e^(-|t| / 2 T1_j) for a damped mode, 1 otherwise (coth -> 1 for the
 * frozen statistics), g(-t) = conj g(t).  One complex FFT (GSL's mixed-radix
 * gsl_fft_complex_backward, the transform with e^(+2 pi i j k / n)) gives F
 * on the grid.  It is the second, independent engine against which the sum
 * of vg_multimode.h is checked; its results carry an error estimate and a
 * flag where they fall below the transform's dynamic range.
 *
 * vg_fft_plan_make (pure) picks the grid: the energy window covers the
 * spectrum out to where a Chernoff bound on F is below 1e-17 of its scale
 * (so aliasing is below double rounding) and the gaps asked for, and with
 * damped modes is made long enough for their algebraic (Lorentzian) tails;
 * the time window reaches where the environment's envelope
 * e^(-lambda kT t^2 / hbar^2) is as small.  vg_fft_alloc (not pure) makes
 * the workspace for the plan's length; vg_fft_eval (pure) transforms.
 * Energies in meV, F in meV^-1.
 *
 * Dynamic range: the rounding floor lies near 1e-17 of the environment's
 * peak height (4 pi lambda kT)^(-1/2), not of F's maximum; for a spectrum
 * w times wider than the environment, F at 1e-10 of its maximum carries a
 * relative error of order w 1e-7 (tests/test_multimode.c measures it).
 * Points below 1e-12 of the maximum, or with an estimated error above 1e-3,
 * are flagged, never returned as numbers to trust.
 */
#ifndef VG_FFT_H
#define VG_FFT_H

#include <stddef.h>

#include "vg_multimode.h"
#include "vg_status.h"

/* The grid and the error terms of one transform (reorganization,
 * temperature, system and gap grid).  Filled by vg_fft_plan_make. */
typedef struct {
    size_t n;          /* transform length (a product of 2, 3, 5) */
    double de;         /* energy step of the transform, meV (gap_step / stride) */
    double e_ref;      /* energy of bin 0, meV: on the gap grid, near the mean */
    long k_lo;         /* the window is bins k_lo .. k_lo + n - 1 */
    double gap_lo;     /* the gaps asked for: gap_lo + i gap_step, */
    double gap_step;   /* i = 0 .. n_gaps - 1, */
    size_t n_gaps;
    size_t stride;     /* bins per gap step */
    long k_gap0;       /* bin of gap_lo */
    double reorg, temperature, kT, s2; /* meV, K, meV, meV^2 (2 lambda kT) */
    double alias;      /* bound on the aliased undamped spectrum, meV^-1 */
    double trunc;      /* bound on the time truncation, meV^-1 */
    int damped;        /* 1: some mode has a finite lifetime */
    double e_bar;      /* mean of the spectrum, lambda + sum S omega, meV */
    double g_bar;      /* damped: Lorentzian half width sum S coth gamma, meV */
    double c2, c3;     /* damped: coefficients of the remainder's kinks */
} vg_fft_plan;

/* One gap of the result. */
typedef struct {
    double ln_f;  /* trusted: ln F (meV^-1); else ln of |F| + its error, an
                     estimate of how large F can be */
    double err;   /* estimated relative error of F (trusted points) */
    int trusted;  /* 1 where F is above 1e-12 of the largest value of the
                     transform and err <= 1e-3; 0: below the dynamic range */
} vg_fft_point;

typedef struct vg_fft_work vg_fft_work;

/* Plan the transform for gaps gap_lo + i gap_step, i < n_gaps (gap_step > 0
 * unless n_gaps = 1).  max_n caps the length (VG_ENUMERIC if the plan needs
 * more).  Errors: VG_ENUMERIC for inputs outside the domain. */
vg_status vg_fft_plan_make(const vg_multimode_system *sys, double reorg_meV,
                           double temperature_K, double gap_lo_meV,
                           double gap_step_meV, size_t n_gaps, size_t max_n,
                           vg_fft_plan *plan, vg_error *err);

/* Lengthen a plan's transform to n points (n >= plan->n and a product of
 * 2, 3 and 5, such as the longest plan over a sweep's rows, so that one
 * workspace serves them all): the same energy step and window start, a
 * finer time step and farther aliased images, the bounds recomputed.
 * VG_EUSAGE for another n. */
vg_status vg_fft_plan_widen(const vg_multimode_system *sys, vg_fft_plan *plan, size_t n,
                            vg_error *err);

/* Workspace (GSL wave table, scratch, data) for transforms of length n.
 * VG_ENOMEM, or VG_EUSAGE for n = 0; *out NULL on failure. */
vg_status vg_fft_alloc(size_t n, vg_fft_work **out, vg_error *err);

void vg_fft_free(vg_fft_work *w);

/* F at the plan's gaps into out[0 .. n_gaps - 1].  The workspace must have
 * the plan's length.  VG_ENUMERIC if GSL fails or a value is not finite. */
vg_status vg_fft_eval(vg_fft_work *w, const vg_fft_plan *plan,
                      const vg_multimode_system *sys, vg_fft_point *out,
                      vg_error *err);

#endif
