/*
 * The rate kernel: nonadiabatic (Fermi golden rule) electron-transfer rates
 * with a classical environment (Marcus) and one quantised odorant mode
 * (Marcus-Levich-Jortner), everything in the log domain.
 *
 * Pure functions: no I/O, no allocation, no static state.  The only memory
 * touched besides the arguments is the caller-owned weight table inside
 * vg_rate_mode (a cache of ln W_n; filling it never changes a result, so
 * results are bit-identical whether a value came from the table or not).
 *
 * Units: energies in meV, temperature in K, rates in s^-1, logs natural.
 * Sources: Marcus & Sutin, BBA 811, 265 (1985); Jortner, J. Chem. Phys. 64,
 * 4860 (1976); Ulstrup & Jortner, J. Chem. Phys. 63, 4358 (1975).  Derivation
 * and conventions: docs/theory.md.
 *
 * Called by the sweep engine (src/sweep.c) and the point command.
 */
#ifndef VG_RATE_H
#define VG_RATE_H

#include <stddef.h>
#include "vg_status.h"

typedef enum {
    VG_STATS_THERMAL = 0, /* Bessel weights, emission and absorption channels */
    VG_STATS_FROZEN = 1   /* Poisson weights, emission only (mode in its ground state) */
} vg_mode_statistics;

/* One odorant mode at one temperature: everything the weights W_n depend on,
 * computed once by vg_rate_mode_init and shared by every (gap, reorganization,
 * coupling) point with the same (huang_rhys, mode, temperature). */
typedef struct {
    vg_mode_statistics stats;
    double S;           /* Huang-Rhys factor, >= 0 */
    double mode;        /* hbar*omega, meV, > 0 */
    double inv_mode;    /* 1 / mode */
    double kT;          /* k_B T, meV, > 0 */
    double beta;        /* hbar*omega / k_B T */
    double ln_s;        /* ln S (-inf never used when S == 0) */
    double c0;          /* thermal: -S coth(beta/2); frozen: -S */
    double ln_x;        /* thermal: ln(S / sinh(beta/2)), the Bessel argument's log */
    double x;           /* thermal: S / sinh(beta/2) (0 when it underflows) */
    /* Optional cache of ln W_n for n in [tab_lo, tab_lo + tab_len), owned by
     * the caller; tab_set[i] != 0 once entry i is filled.  tab_len == 0: none. */
    long tab_lo;
    size_t tab_len;
    double *tab;
    unsigned char *tab_set;
} vg_rate_mode;

/* Result of one point.  ln_k_* are natural logs of rates in s^-1.  A rate that
 * is exactly zero (coupling 0, or no assisted channel because S == 0) has its
 * flag set and its ln value undefined; the metrics then use the fill rules of
 * vg_rate_metrics. */
typedef struct {
    double ln_k_elastic;
    double ln_k_assisted;
    double ln_k_total;
    double ln_k_bare;
    double ln_fc_elastic;   /* ln(W_0 G_0): the V- and prefactor-free parts, */
    double ln_fc_assisted;  /* so that ratios stay defined when V == 0 */
    double ln_fc_total;
    double ln_fc_bare;
    double assisted_fraction; /* k_assisted / k_total, in [0, 1] (0 when S == 0) */
    int assisted_zero;      /* 1: no assisted channel (S == 0) */
    int coupling_zero;      /* 1: V == 0, every rate is exactly zero */
    long n_lo, n_hi;        /* channels summed: n in [n_lo, n_hi] */
    long n_peak;            /* the largest channel */
} vg_rates;

/* Largest number of channels the window path sums on each side of the peak
 * (docs/theory.md, "Channel window"); rows that need more take the log path. */
#define VG_RATE_WINDOW_MAX 24

/* Everything a run of points sharing one mode record, one reorganization
 * and one coupling has in common (a row of the gap axis on a sweep), with an
 * optional caller-owned cache of the channel step ratios
 * q_n = exp(ln W_{n+1} - ln W_n - (2n+1) (hbar omega)^2 / (4 lam kT)), so that
 * a point of the row costs one exp for its gap and a multiplication per
 * channel of its window.  Filling the cache never changes a result: a point gives the same
 * bits through vg_rate_eval_row with or without it, and through vg_rate_eval.
 * docs/theory.md, "Channel window", and docs/performance.md. */
typedef struct {
    double reorg;       /* lambda, meV */
    double coupling;    /* V, meV */
    double inv4lkt;     /* 1 / (4 lambda k_B T), meV^-2 */
    double ln_p;        /* ln of the golden-rule prefactor in s^-1 (0 when V == 0) */
    double two_c_mode;  /* 2 hbar omega / (4 lambda k_B T), meV^-1 */
    double c_mode2;     /* (hbar omega)^2 / (4 lambda k_B T) */
    /* Cache for channels n in [q_lo, q_lo + q_len): entry i is valid when
     * q_gen[i] == gen.  q_len == 0: none. */
    unsigned gen;
    long q_lo;
    size_t q_len;
    double *q;          /* q_n, or -1 where the step is outside the linear range */
    double *qi;         /* 1 / q_n */
    unsigned *q_gen;
    /* The channel window: win_k channels each side of the peak for the
     * tolerance win_tol (0: the log path), and the step ratios of the window
     * last used, q_n and 1/q_n for n in [w_lo, w_hi) (w_ok 0: one is outside
     * the linear range).  Filled by the kernel; reset by vg_rate_row_begin. */
    double win_tol;
    int win_k, w_ok;
    long w_lo, w_hi;
    /* Channels [mono_lo, mono_hi] whose q_n are known to be in the linear
     * range and non-increasing, and the peak of the last group of gaps
     * (p_set 0: none yet), which the next group tries first. */
    long mono_lo, mono_hi, p_prev;
    int p_set;
    double wq[2 * VG_RATE_WINDOW_MAX], wqi[2 * VG_RATE_WINDOW_MAX];
} vg_rate_row;

/* Fill m for (S, hbar*omega, T).  Returns VG_ENUMERIC with a message if the
 * inputs are outside the accepted domain (S < 0, mode <= 0, T <= 0, or not
 * finite).  Leaves the table empty (tab_len = 0). */
vg_status vg_rate_mode_init(vg_rate_mode *m, vg_mode_statistics stats,
                            double huang_rhys, double mode_meV, double temperature_K,
                            vg_error *err);

/* Attach a caller-owned cache of len entries for channels lo .. lo+len-1 and
 * mark it empty.  tab and set must each hold len elements. */
void vg_rate_mode_attach_table(vg_rate_mode *m, long lo, size_t len,
                               double *tab, unsigned char *set);

/* ln W_n, the thermal (or frozen) weight of channel n; -HUGE_VAL for a weight
 * that is exactly zero (frozen n < 0, S == 0 and n != 0).  Never NaN. */
double vg_rate_ln_weight(const vg_rate_mode *m, long n);

/* Same, through the cache when n lies in it (fills the entry). */
double vg_rate_ln_weight_cached(vg_rate_mode *m, long n);

/* ln of the modified Bessel function I_n(x) for n >= 0, given x and ln x
 * (x may underflow to 0 while ln_x is finite).  Exposed for tests. */
double vg_rate_ln_bessel_i(long n, double x, double ln_x);

/* Rates at one point.  tol is the relative truncation tolerance: the
 * channels left out change the assisted and total rates by less than tol
 * (relative).  gap in meV (any sign), reorganization > 0 meV, coupling >= 0
 * meV.  Returns VG_ENUMERIC if an input is outside the domain. */
vg_status vg_rate_eval(vg_rate_mode *m, double gap_meV, double reorg_meV,
                       double coupling_meV, double tol, vg_rates *out,
                       vg_error *err);

/* Attach a caller-owned cache of len entries (q, qi and gen each hold len
 * elements) for channels lo .. lo+len-1 and mark it empty.  Once per row
 * record; vg_rate_row_begin keeps it across rows. */
void vg_rate_row_attach(vg_rate_row *row, long lo, size_t len, double *q, double *qi,
                        unsigned *gen);

/* Start a row for (m, reorganization, coupling): checks them as vg_rate_eval
 * does and forgets the cache's entries.  A row without a cache needs
 * row->q_len == 0 (a zeroed record will do). */
vg_status vg_rate_row_begin(vg_rate_row *row, const vg_rate_mode *m, double reorg_meV,
                            double coupling_meV, vg_error *err);

/* Rates at one gap of the row: the same bits as vg_rate_eval(m, gap,
 * row's reorganization, row's coupling, ...). */
vg_status vg_rate_eval_row(vg_rate_mode *m, vg_rate_row *row, double gap_meV, double tol,
                           vg_rates *out, vg_error *err);

/* Rates at n gaps of the row into out[0..n): the same bits as n calls of
 * vg_rate_eval_row, computed four gaps at a time (docs/theory.md, "Channel
 * window").  *done is the number of leading points computed; on an error it
 * is the index of the point the message names. */
vg_status vg_rate_eval_gaps(vg_rate_mode *m, vg_rate_row *row, size_t n, const double *gap_meV,
                            double tol, vg_rates *out, size_t *done, vg_error *err);

/* The rates of a run of points of one row as arrays (the sweep's form of
 * vg_rates): element i of each array belongs to point i.  The two flags are
 * the row's, which every point of it shares. */
typedef struct {
    double *ln_k_elastic, *ln_k_assisted, *ln_k_total, *ln_k_bare;
    double *ln_fc_elastic, *ln_fc_assisted, *ln_fc_total, *ln_fc_bare;
    double *assisted_fraction;
    int assisted_zero, coupling_zero;
} vg_rates_run;

/* Point i of a run as a record (the channel window fields 0). */
void vg_rates_run_get(const vg_rates_run *r, size_t i, vg_rates *out);

/* vg_rate_eval_gaps into arrays (every array holds n elements): the same
 * bits in every field, without the channel window fields. */
vg_status vg_rate_eval_gaps_run(vg_rate_mode *m, vg_rate_row *row, size_t n,
                                const double *gap_meV, double tol, vg_rates_run *out,
                                size_t *done, vg_error *err);

/* Batch form: count points sharing one mode. */
vg_status vg_rate_eval_batch(vg_rate_mode *m, size_t count, const double *gap_meV,
                             const double *reorg_meV, const double *coupling_meV,
                             double tol, vg_rates *out, vg_error *err);

/* ln k_n of one channel (for listings); -HUGE_VAL where the rate is zero. */
double vg_rate_ln_channel(vg_rate_mode *m, double gap_meV, double reorg_meV,
                          double coupling_meV, long n);

/* ln of the bare Marcus rate (no odorant); -HUGE_VAL when coupling is 0. */
double vg_rate_ln_marcus(double gap_meV, double reorg_meV, double coupling_meV,
                         double temperature_K);

#endif
