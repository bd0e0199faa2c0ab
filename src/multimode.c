/*
 * Many-mode odorants, frequency-domain engine (vg_multimode.h): F(eps) of M
 * quantised modes and a classical environment, every value a natural log.
 * Called by the tests (and, later, the sweep).  Derivations and the error
 * bound in full: docs/theory.md, "Many modes".
 *
 * Method.  Split the environment's Gaussian (variance s2 = 2 lambda kT) into
 * Gaussians of variances u_1 .. u_L (one per undamped mode) and r2, with
 * sum u_j + r2 = s2.  Then F = K_1 * K_2 * ... * K_L * g_r2 (convolutions),
 * K_j(x) = sum_n W_n g_uj(x - n hbar omega_j) the mode's sticks, each a
 * Gaussian.  The K_j are sampled exactly on the lattice x = m delta and the
 * convolutions done by the trapezoidal rule.  For a product of two
 * Gaussians of variances p and q the rule's relative error is, by Poisson
 * summation, at most 2 sum_{k>=1} exp(-2 pi^2 k^2 h / delta^2),
 * h = p q / (p + q), whatever the centres, so deep in a tail too; all the
 * terms are positive, so the bound carries over to the sums (no
 * cancellation) and the relative errors of the L steps add up.  With
 * u_1 = 2 s, u_j = s (j > 1), r2 = s, s = s2 / (L + 2), every step has
 * h >= 2 s / 3; delta is chosen from that: 2 pi^2 h / delta^2 = A with
 * L (2 e^-A) below a sixteenth of the tolerance, delta ~ 0.6 sigma /
 * sqrt(L + 2) at 1e-12.  Splitting sticks onto a lattice instead (moment-
 * preserving linear splitting) errs by (delta^2/8) max|G''| per step,
 * absolutely: 1e-12 would need delta ~ sigma / 1e6, and the deep tails lose
 * all relative accuracy.
 *
 * Truncation.  Each mode keeps the sticks n in a window [a, b], each kernel
 * the lattice range where its Gaussians (widened by the tilt below) lie
 * within R standard deviations.  The excluded part is bounded by a Chernoff
 * tilt: for every tau, g(x) <= g(0) exp(-tau x + tau^2 var / 2), so the
 * excluded part at one gap is at most g(0) C(tau) times the excluded mass of
 * the tilted distributions, C = exp(-tau d + s2 tau^2 / 2) prod Z_j(tau
 * omega_j); tau is the saddle of the gap, which makes the bound relative to
 * F itself.  The weights are log-concave (theory.md, "Channel window"), so
 * the tilted tail beyond a window edge is at most p r / (1 - r), r the ratio
 * of the next weight to the edge's.  Windows cover the tilted bulk of every
 * gap asked for; the bound is checked at each gap afterwards and the
 * truncation (or the lattice) tightened in a new round where it is not below
 * a quarter of the tolerance.  Rounding is estimated, not bounded:
 * DBL_EPSILON (N (L + 1) + 16 (1 + |ln F|)) for lattices of N points.
 *
 * Damped modes.  Multiplying the oscillating terms of a mode's generating
 * function by e^(-t/2T1) gives, with mu+ = S (nbar + 1), mu- = S nbar,
 * exp(-g_j) = e^(-mu+ - mu-) sum_{a,b} mu-^a mu+^b / (a! b!)
 * e^(-(a+b) t / 2T1) e^(-i (b-a) omega t): a absorbed and b emitted quanta
 * (two independent Poisson counts, whose difference has the Bessel weights
 * W_n) and a Lorentzian of half width (a+b) hbar / 2T1.  The damped modes
 * are enumerated as a list of such configurations, each evaluated with a
 * Voigt profile in the last step; a Lorentzian has no exponential tilt, so
 * with damping the bound uses tau = 0 (plain masses).  Elastic means every
 * net count n_j = b_j - a_j = 0, as without damping.
 *
 * Pure apart from vg_multimode_alloc/free: no I/O, no allocation, no static
 * state; GSL's status is checked (gsl_sf_lnfact_e).
 */
#include <float.h>
#include <limits.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_gamma.h>

#include "vg_const.h"
#include "vg_multimode.h"
#include "vg_rate.h"

/* hbar in meV ps (CODATA 2018 via vg_const.h): 0.6582119569. */
#define HBAR_MEV_PS (VG_HBAR_EVS * 1.0e15)

/* Bisection steps of the saddle; the tilt need not be precise (any tau gives
 * a valid bound), so this is ample. */
#define SADDLE_STEPS 200

/* Rounds of tightening the truncation before giving up. */
#define ROUNDS 8

/* Voigt: the trapezoidal rule's exponent pi^2/h^2 >= VOIGT_A + ln(|z|/y)
 * (error about e^-VOIGT_A relative), and the stated accuracy. */
#define VOIGT_A 40.0
#define VOIGT_ERR 1e-13

/* Longest finite lifetime, ps (one second): the Lorentzians stay wider than
 * 1e-16 of any Gaussian of the domain, where the Voigt is verified; a
 * longer-lived mode is undamped for every purpose (pass INFINITY). */
#define LIFETIME_MAX 1.0e12

/* Terms one Voigt evaluation sums (2 tmax / h, about 40 to 60), for the
 * work estimate. */
#define VOIGT_TERMS 60.0

/* Exponents above this are treated as overflow (e^700 ~ 1e304). */
#define EXP_MAX 700.0

enum { MM_IDLE = 0, MM_LATTICE = 1, MM_DAMPED = 2 };

/* One mode as planned for one (reorganization, temperature) and round. */
typedef struct {
    int kind;
    double w;          /* hbar omega, meV */
    double S;
    double gamma;      /* hbar / (2 T1), meV; 0 undamped */
    double lup, ldn;   /* ln S (nbar + 1), ln S nbar; frozen: ln S, -inf */
    vg_rate_mode rm;   /* the weights (lattice modes) */
    long a, b;         /* lattice mode: sticks n in [a, b] */
    long a0, a1;       /* damped: absorbed quanta in [a0, a1] */
    long b0, b1;       /* damped: emitted quanta in [b0, b1] */
    long ca, cb;       /* damped: enumeration counters */
    double ln_tail;    /* damped: ln of the excluded Poisson mass */
    double ln_tail0;   /* damped: ln of the excluded mass with a = b */
    size_t off;        /* lattice: ln W_{a-1} .. ln W_{b+1} at wt[off ..] */
    double u;          /* lattice: variance of its kernel Gaussians, meV^2 */
    long klo, khi;     /* lattice: kernel range, lattice indices */
} mm_mode;

struct vg_multimode_work {
    size_t max_modes;
    size_t cap;
    double max_work;     /* terms (one exp each) a call may spend */
    mm_mode *md;
    double *block;       /* the nine arrays below, cap entries each */
    double *wt;          /* ln W over the windows */
    double *ker;         /* one kernel */
    double *h, *h2;      /* the assisted lattice function and its successor */
    double *eh, *ek;     /* e^(h - max h) and e^(ker - max ker), chain_step's */
    double *cf_lw;       /* damped configurations: ln weight, */
    double *cf_e;        /* energy taken up (meV), */
    double *cf_g;        /* Lorentzian half width (meV), */
    unsigned char *cf_net0; /* 1 where every net count is 0 */
};

/* Everything one round needs besides the per-mode records. */
typedef struct {
    vg_mode_statistics stats;
    double kT, s2, lam;
    size_t nu, nd;       /* lattice (undamped) and damped active modes */
    double tau_lo, tau_hi;
    double ln_eta;       /* ln of the truncation mass allowed per tail */
    double ln_elat;      /* ln of the lattice error target */
    double s2u, delta, ln_delta, r2, R, e_lat;
    double ln_gstar;     /* ln sup of a Gaussian of variance s2 - max u */
    double lnz0;         /* sum of ln W_0 over the lattice modes (exact) */
    long hlo, hhi;       /* range of the assisted lattice function */
    size_t ncf;          /* damped configurations */
    double ln_dtail;     /* ln of their excluded mass */
    double ln_dtail0;    /* ln of their excluded mass with every a_j = b_j */
    size_t need;         /* largest storage the plan needs */
    size_t wt_used;
    size_t n_gaps;
    double work;         /* terms the round will sum (one exp each) */
} mm_plan;

/* ------------------------------------------------------------ helpers --- */

typedef struct {
    double m, s;
} lse_acc;

static inline void lse_init(lse_acc *a)
{
    a->m = -HUGE_VAL;
    a->s = 0.0;
}

/* Below this, exp(t - m) < 2^-54: added to a sum s >= 1 it rounds away. */
#define LSE_NEGLIGIBLE (-38.0)

/* Online log-sum-exp: one exp per term that can change the sum.  s >= 1
 * once a term is in (the largest so far counts 1), so a term below
 * e^LSE_NEGLIGIBLE of the running maximum leaves s unchanged bit for bit
 * (e^-38 < 2^-54, under half an ulp of 1), and its exp is skipped. */
static inline void lse_add(lse_acc *a, double t)
{
    if (t == -HUGE_VAL)
        return;
    if (t <= a->m) {
        if (t - a->m >= LSE_NEGLIGIBLE)
            a->s += exp(t - a->m);
        return;
    }
    /* below e^-746 exp returns 0 (by its slow underflow path): the same
     * bits without the call; the first term (m = -inf, s = 0) likewise */
    a->s = a->m - t < -746.0 ? 1.0 : a->s * exp(a->m - t) + 1.0;
    a->m = t;
}

static inline double lse_val(const lse_acc *a)
{
    return a->s > 0.0 ? a->m + log(a->s) : -HUGE_VAL;
}

static double lse2(double x, double y)
{
    double hi = fmax(x, y);

    if (hi == -HUGE_VAL)
        return hi;
    return hi + log1p(exp(fmin(x, y) - hi));
}

static double exp_cap(double e)
{
    return e > EXP_MAX ? HUGE_VAL : exp(e);
}

/* e^t - 1 times e^lm (mu expm1(t)), finite or HUGE_VAL. */
static double mu_expm1(double lm, double t)
{
    if (lm == -HUGE_VAL)
        return 0.0;
    if (t <= 1.0)
        return exp(lm) * expm1(t);
    return lm + t > EXP_MAX ? HUGE_VAL : exp(lm + t) - exp(lm);
}

/* ln of the bound p r / (1 - r) on a log-concave tail beyond an edge of log
 * weight le whose outward neighbour has log weight ln (r = e^(ln - le));
 * +HUGE_VAL when r >= 1 (the edge is not past the peak). */
static double ln_tail(double le, double ln)
{
    double d = ln - le;

    if (ln == -HUGE_VAL)
        return -HUGE_VAL;
    if (!(d < 0.0))
        return HUGE_VAL;
    return le + d - log(-expm1(d));
}

/* ln S (nbar + 1) and ln S nbar with nbar = 1 / (e^beta - 1); for frozen
 * statistics no absorption: ln S and -inf. */
static void mode_mu(vg_mode_statistics st, double S, double w, double kT,
                    double *lup, double *ldn)
{
    double beta = w / kT;
    double l1 = -log(-expm1(-beta)); /* ln(nbar + 1) */

    *lup = st == VG_STATS_FROZEN ? log(S) : log(S) + l1;
    *ldn = st == VG_STATS_FROZEN ? -HUGE_VAL : log(S) + l1 - beta;
}

/* Tilted mean number of quanta, mu+ e^t - mu- e^-t (signed infinity where it
 * overflows). */
static double tilted_mean(double lup, double ldn, double t)
{
    double up = exp_cap(lup + t), dn = ldn == -HUGE_VAL ? 0.0 : exp_cap(ldn - t);

    if (t >= 0.0)
        return up == HUGE_VAL ? HUGE_VAL : up - dn;
    return dn == HUGE_VAL ? -HUGE_VAL : up - dn;
}

/* ln Z(t) = mu+ (e^t - 1) + mu- (e^-t - 1), the generating function of the
 * thermal weights (a Skellam distribution) at e^t, or of the Poisson ones. */
static double ln_z(double lup, double ldn, double t)
{
    double up = mu_expm1(lup, t), dn = mu_expm1(ldn, -t);

    if (up == HUGE_VAL || dn == HUGE_VAL)
        return HUGE_VAL;
    return up + dn;
}

/* ---------------------------------------------------- tilt and bound --- */

static int mode_active(const vg_multimode_mode *m)
{
    return m->huang_rhys > 0.0;
}

/* sum over the active modes of term(ln mu+, ln mu-, tau omega_j, omega_j). */
typedef double (*mode_term)(double lup, double ldn, double t, double w);

static double sum_modes(const vg_multimode_system *sys, double kT, double tau,
                        mode_term term)
{
    double s = 0.0;

    for (size_t j = 0; j < sys->n_modes; j++) {
        const vg_multimode_mode *m = &sys->modes[j];
        double lup, ldn;

        if (!mode_active(m))
            continue;
        mode_mu(sys->stats, m->huang_rhys, m->mode, kT, &lup, &ldn);
        s += term(lup, ldn, tau * m->mode, m->mode);
    }
    return s;
}

static double term_mean(double lup, double ldn, double t, double w)
{
    return w * tilted_mean(lup, ldn, t);
}

static double term_ln_z(double lup, double ldn, double t, double w)
{
    (void)w;
    return ln_z(lup, ldn, t);
}

/* sum_j omega_j m_j(tau omega_j) + s2 tau - d, increasing in tau. */
static double saddle_f(const vg_multimode_system *sys, double kT, double s2,
                       double d, double tau)
{
    return s2 * tau - d + sum_modes(sys, kT, tau, term_mean);
}

/* The root of saddle_f lies between 0 and (d - sum S omega) / s2, since the
 * tilted means move away from S_j monotonically. */
static double saddle_kt(const vg_multimode_system *sys, double kT, double reorg,
                        double gap)
{
    double s2 = 2.0 * reorg * kT, d = gap - reorg, lv = 0.0, lo, hi;

    for (size_t j = 0; j < sys->n_modes; j++)
        lv += sys->modes[j].huang_rhys * sys->modes[j].mode;
    lo = fmin(0.0, (d - lv) / s2);
    hi = fmax(0.0, (d - lv) / s2);
    for (int i = 0; i < SADDLE_STEPS; i++) {
        double mid = 0.5 * (lo + hi);
        if (!(mid > lo && mid < hi))
            break;
        if (saddle_f(sys, kT, s2, d, mid) > 0.0)
            hi = mid;
        else
            lo = mid;
    }
    return 0.5 * (lo + hi);
}

static double chernoff_kt(const vg_multimode_system *sys, double kT, double reorg,
                          double gap, double tau)
{
    double c = -tau * (gap - reorg) + reorg * kT * tau * tau + sum_modes(sys, kT, tau, term_ln_z);

    return isfinite(c) ? c : HUGE_VAL;
}

double vg_multimode_saddle(const vg_multimode_system *sys, double reorg_meV,
                           double temperature_K, double gap_meV)
{
    return saddle_kt(sys, VG_KB_MEV * temperature_K, reorg_meV, gap_meV);
}

double vg_multimode_ln_chernoff(const vg_multimode_system *sys, double reorg_meV,
                                double temperature_K, double gap_meV, double tau)
{
    return chernoff_kt(sys, VG_KB_MEV * temperature_K, reorg_meV, gap_meV, tau);
}

/* -------------------------------------------------------------- Voigt --- */

/* ln Re w(x + iy), x >= 0, y > 0, w the Faddeeva function, from
 * Re w = (y/pi) int e^(-t^2) / ((x-t)^2 + y^2) dt (Voigt's integral, a
 * positive integrand) by the trapezoidal rule on nodes placed half way
 * between the pole's real part x and its neighbours, plus the pole's
 * residue term (Chiarella & Reichel, Math. Comp. 22, 137, 1968; Matta &
 * Reichel, Math. Comp. 25, 339, 1971; references from memory):
 *   Re w = (h/pi) sum_k e^(-t_k^2) y / ((x - t_k)^2 + y^2)
 *        + 2 e^(y^2 - x^2) cos(2xy) / (1 + e^(2 pi y / h))   [y < pi/h],
 * with error ~ e^(-pi^2/h^2) / |z|.  h is chosen so that this is below
 * e^-VOIGT_A relative to the lower bound Re w >= 0.475 y / ((x+1)^2 + y^2)
 * (the integral over |t| < 1 alone), and the nodes run while e^(-t^2) can
 * still matter against that bound.  The sum is positive; the residue term
 * is positive unless 2xy > pi/2, and then below 1e-4 of the sum (it is at
 * most 2 e^(-x^2 + y^2 - 2 pi y / h) with 2 pi / h >= 12.6), so nothing
 * cancels.  Checked against mpmath at 50 digits (multimode_ref.py). */
static double ln_re_faddeeva(double x, double y)
{
    double lr = log(fmax(1.0, hypot(x, y) / y));
    double h = VG_PI / sqrt(VOIGT_A + lr);
    double tmax = sqrt(VOIGT_A + 1.0 - log(0.4754 * y / ((x + 1.0) * (x + 1.0) + y * y)));
    double nx = nearbyint(x / h), o = x - nx * h; /* x = nx h + o, |o| <= h/2 */
    long k0 = (long)ceil((-tmax - o) / h - 0.5), k1 = (long)floor((tmax - o) / h - 0.5);
    long kc = (long)nearbyint(-o / h - 0.5); /* the node nearest 0 */
    double tc = o + ((double)kc + 0.5) * h, q = exp(-2.0 * h * h);
    double up = exp(-2.0 * tc * h - h * h), dn = up * exp(4.0 * tc * h);
    double eu = exp(-tc * tc), ed = eu, sum = 0.0, ln_sum, corr;

    /* e^(-t^2) by recurrence outward from t_kc: e^(-(t+h)^2) = e^(-t^2)
     * e^(-2th - h^2), whose second factor gains e^(-2h^2) per step. */
    for (long k = kc; k <= k1; k++, eu *= up, up *= q) {
        double dx = h * (nx - (double)k - 0.5); /* x - t_k */
        sum += eu / (dx * dx + y * y);
    }
    for (long k = kc - 1; k >= k0; k--) {
        double dx = h * (nx - (double)k - 0.5);
        ed *= dn;
        dn *= q;
        sum += ed / (dx * dx + y * y);
    }
    sum *= h * y / VG_PI;
    ln_sum = log(sum);
    if (!(y < VG_PI / h) || y * y - x * x < -EXP_MAX)
        return ln_sum;
    corr = 2.0 * exp(y * y - x * x) * cos(2.0 * x * y) / (1.0 + exp(2.0 * VG_PI * y / h));
    return ln_sum + log1p(corr / sum);
}

double vg_multimode_ln_voigt(double x, double sigma, double gamma)
{
    double c = 1.0 / (sigma * sqrt(2.0));
    double X = fabs(x) * c;
    double norm = log(sigma) + 0.5 * log(2.0 * VG_PI);

    if (!(gamma > 0.0))
        return -X * X - norm;
    return ln_re_faddeeva(X, gamma * c) - norm;
}

/* ------------------------------------------------------------ windows --- */

/* ln W_n tilted by e^(n t) and normalised: ln W_n + n t - ln Z(t). */
static double tilted_w(const vg_rate_mode *rm, long n, double t, double lz)
{
    double lw = vg_rate_ln_weight(rm, n);

    return lw == -HUGE_VAL ? lw : lw + (double)n * t - lz;
}

/* A starting channel near the tilted mean, clamped to [nmin, 1e15]. */
static long start_channel(double mean, long nmin)
{
    double c = floor(fmin(fmax(mean, -1.0e15), 1.0e15));

    return c < (double)nmin ? nmin : (long)c;
}

/* Walking from `start` in direction dir (+1 up, -1 down, never below
 * nmin), the first n past the peak whose tilted tail beyond it is <= eta,
 * into *edge; 0 if not found within `limit` steps. */
static int window_edge(const vg_rate_mode *rm, double t, double lz, double ln_eta,
                       long start, long dir, long nmin, long limit, long *edge)
{
    double cur = tilted_w(rm, start, t, lz);

    for (long n = start; (n - start) * dir <= limit; n += dir) {
        double nxt = n + dir >= nmin ? tilted_w(rm, n + dir, t, lz) : -HUGE_VAL;
        if (ln_tail(cur, nxt) <= ln_eta) {
            *edge = n;
            return 1;
        }
        cur = nxt;
    }
    return 0;
}

/* Window of a lattice mode: every tilt in [tau_lo, tau_hi] leaves less than
 * eta of tilted mass beyond each edge (the tails grow monotonically with the
 * tilt, so the two ends of the range decide). */
static int lattice_window(const mm_plan *p, mm_mode *m, long limit)
{
    long nmin = p->stats == VG_STATS_FROZEN ? 0 : LONG_MIN / 4;
    double tl = p->tau_lo * m->w, th = p->tau_hi * m->w;
    double lzl = ln_z(m->lup, m->ldn, tl), lzh = ln_z(m->lup, m->ldn, th);
    long sl = start_channel(tilted_mean(m->lup, m->ldn, tl), nmin);
    long sh = start_channel(tilted_mean(m->lup, m->ldn, th), nmin);

    if (!isfinite(lzl) || !isfinite(lzh))
        return 0;
    return window_edge(&m->rm, tl, lzl, p->ln_eta, sl, -1, nmin, limit, &m->a)
           && window_edge(&m->rm, th, lzh, p->ln_eta, sh > sl ? sh : sl, 1, nmin, limit,
                          &m->b);
}

/* ln of the Poisson weight e^-mu mu^n / n!, NaN if GSL fails. */
static double ln_poisson(long n, double lmu)
{
    gsl_sf_result r;

    if (lmu == -HUGE_VAL)
        return n == 0 ? 0.0 : -HUGE_VAL;
    if (n < 0 || n > (long)UINT_MAX || gsl_sf_lnfact_e((unsigned int)n, &r) != GSL_SUCCESS)
        return NAN;
    return -exp(lmu) + (double)n * lmu - r.val;
}

/* Window [lo, hi] of a Poisson count with mean e^lmu, both tails <= eta;
 * *tail gets ln of their sum.  0 if it does not close within limit. */
static int poisson_window(double lmu, double ln_eta, long limit, long *lo, long *hi,
                          double *tail)
{
    long s = lmu == -HUGE_VAL ? 0 : start_channel(exp(fmin(lmu, 40.0)), 0);
    double cur = ln_poisson(s, lmu), up = cur, dn = cur, tu = HUGE_VAL, td = HUGE_VAL;

    for (*hi = s; *hi - s <= limit; (*hi)++, up = cur) {
        cur = ln_poisson(*hi + 1, lmu);
        if ((tu = ln_tail(up, cur)) <= ln_eta)
            break;
    }
    cur = dn;
    for (*lo = s; s - *lo <= limit; (*lo)--, dn = cur) {
        cur = *lo > 0 ? ln_poisson(*lo - 1, lmu) : -HUGE_VAL;
        if ((td = ln_tail(dn, cur)) <= ln_eta)
            break;
    }
    *tail = lse2(tu, td);
    return tu <= ln_eta && td <= ln_eta;
}

/* Windows A, B of a damped mode's absorbed (mean mu-) and emitted (mu+)
 * counts.  The excluded mass is at most tail_A + tail_B.  Where a = b (the
 * elastic configurations) and B holds A, b outside B means a outside A, so
 * the excluded a = b mass is sum_{a not in A} P-(a) P+(a) <= tail_A (for
 * the frozen statistics A = {0} exactly and this is 0). */
static int damped_window(const mm_plan *p, mm_mode *m, long limit)
{
    double ta, tb;

    if (!poisson_window(m->ldn, p->ln_eta, limit, &m->a0, &m->a1, &ta)
        || !poisson_window(m->lup, p->ln_eta, limit, &m->b0, &m->b1, &tb))
        return 0;
    m->ln_tail = lse2(ta, tb);
    m->ln_tail0 = m->b0 <= m->a0 && m->a1 <= m->b1 ? ta : m->ln_tail;
    return 1;
}

/* --------------------------------------------------------- planning --- */

/* The mode record for (stats, kT): kind, energies, rates of the Poissons,
 * and for a lattice mode its weights. */
static vg_status mode_setup(const mm_plan *p, const vg_multimode_mode *in,
                            mm_mode *m, vg_error *err)
{
    m->kind = !mode_active(in) ? MM_IDLE : isfinite(in->lifetime_ps) ? MM_DAMPED : MM_LATTICE;
    m->w = in->mode;
    m->S = in->huang_rhys;
    m->gamma = m->kind == MM_DAMPED ? HBAR_MEV_PS / (2.0 * in->lifetime_ps) : 0.0;
    if (m->kind == MM_IDLE)
        return VG_OK;
    mode_mu(p->stats, m->S, m->w, p->kT, &m->lup, &m->ldn);
    if (m->kind == MM_LATTICE)
        return vg_rate_mode_init(&m->rm, p->stats, m->S, m->w, p->kT / VG_KB_MEV, err);
    return VG_OK;
}

/* Lattice geometry of a round: variances, spacing, the reach R. */
static void plan_geometry(mm_plan *p)
{
    double A, hmin2, eps;

    p->s2u = p->s2 / ((double)p->nu + 2.0);
    p->r2 = p->s2u;
    hmin2 = 2.0 * p->s2u / 3.0; /* smallest pq/(p+q) of all the steps */
    A = fmax(4.0, log(4.0 * (double)(p->nu > 0 ? p->nu : 1)) - p->ln_elat);
    p->delta = VG_PI * sqrt(2.0 * hmin2 / A);
    p->ln_delta = log(p->delta);
    eps = 2.0 * exp(-A) / (1.0 - exp(-3.0 * A)); /* 2 sum_k e^(-A k^2) bound */
    p->e_lat = expm1((double)p->nu * log1p(eps));
    p->R = sqrt(-2.0 * p->ln_eta) + p->delta / sqrt(p->s2u);
    p->ln_gstar = -0.5 * log(2.0 * VG_PI * (p->s2 - (p->nu > 0 ? 2.0 * p->s2u : 0.0)));
}

/* Kernel range of lattice mode m, the j-th (0-based): its sticks' Gaussians
 * reach R standard deviations beyond the window after the largest tilt
 * shift tau u.  0 if it exceeds the capacity. */
static int kernel_range(const mm_plan *p, mm_mode *m, size_t j, size_t cap)
{
    double u = (j == 0 ? 2.0 : 1.0) * p->s2u, sd = sqrt(u);
    double lo = ((double)m->a * m->w - fmax(0.0, -p->tau_lo) * u - p->R * sd) / p->delta;
    double hi = ((double)m->b * m->w + fmax(0.0, p->tau_hi) * u + p->R * sd) / p->delta;

    m->u = u;
    if (!(hi - lo < (double)cap - 2.0))
        return 0;
    m->klo = (long)floor(lo);
    m->khi = (long)ceil(hi);
    return 1;
}

/* Window, kernel range and storage of one active mode (the j-th lattice
 * mode if it is one), accumulated into the plan's needs; 0 if something
 * exceeds cap. */
static int plan_mode(mm_plan *p, mm_mode *m, size_t j, size_t cap)
{
    long limit = (long)(cap < (size_t)LONG_MAX / 4 ? cap : (size_t)LONG_MAX / 4);
    size_t nk, nw;

    if (m->kind == MM_DAMPED)
        return damped_window(p, m, limit);
    if (!lattice_window(p, m, limit) || !kernel_range(p, m, j, cap))
        return 0;
    nk = (size_t)(m->khi - m->klo + 1);
    nw = (size_t)(m->b - m->a + 3);
    /* kernel: nk stick sums; a chain step: every (H, kernel) pair, plus the
     * stick sums of the n = 0 term over the new range */
    p->work += (double)nk * (double)nw;
    if (j > 0)
        p->work += (double)(p->hhi - p->hlo + 1) * (double)nk
                   + (double)(p->hhi - p->hlo + 1 + (long)nk) * (double)nw;
    m->off = p->wt_used;
    p->wt_used += nw;
    p->hlo = j == 0 ? m->klo : p->hlo + m->klo;
    p->hhi = j == 0 ? m->khi : p->hhi + m->khi;
    p->need = nk > p->need ? nk : p->need;
    return p->wt_used <= cap && p->hhi - p->hlo < (long)cap;
}

/* Lattice and damped modes of a system (modes with S = 0 do nothing). */
static void count_kinds(const vg_multimode_system *sys, size_t *nu, size_t *nd)
{
    *nu = *nd = 0;
    for (size_t i = 0; i < sys->n_modes; i++) {
        if (!mode_active(&sys->modes[i]))
            continue;
        if (isfinite(sys->modes[i].lifetime_ps))
            (*nd)++;
        else
            (*nu)++;
    }
}

/* Set up and plan every mode of a round (into md, or through a scratch
 * record when md is NULL, to size a workspace); fills the plan's needs.
 * VG_ENUMERIC when the capacity is exceeded (the message says by what). */
static vg_status plan_modes(mm_plan *p, const vg_multimode_system *sys, mm_mode *md,
                            size_t cap, vg_error *err)
{
    size_t j = 0, ncf = 1;
    mm_mode scratch;

    plan_geometry(p);
    p->need = p->wt_used = 0;
    p->work = 0.0;
    p->hlo = p->hhi = 0;
    p->ln_dtail = p->ln_dtail0 = -HUGE_VAL;
    p->lnz0 = 0.0;
    for (size_t i = 0; i < sys->n_modes; i++) {
        mm_mode *m = md ? &md[i] : &scratch;
        vg_status st = mode_setup(p, &sys->modes[i], m, err);
        if (st != VG_OK)
            return st;
        if (m->kind == MM_IDLE)
            continue;
        if (!plan_mode(p, m, j, cap))
            return vg_error_set(err, VG_ENUMERIC,
                                "the many-mode sum needs more than the workspace's %zu "
                                "points for mode %zu (%g meV, huang_rhys %g) at "
                                "reorganization %g meV, k_B T %g meV",
                                cap, i + 1, m->w, m->S, p->lam, p->kT);
        if (m->kind == MM_DAMPED) {
            size_t k = (size_t)(m->a1 - m->a0 + 1) * (size_t)(m->b1 - m->b0 + 1);
            ncf = ncf > SIZE_MAX / k ? SIZE_MAX : ncf * k;
            p->ln_dtail = lse2(p->ln_dtail, m->ln_tail);
            p->ln_dtail0 = lse2(p->ln_dtail0, m->ln_tail0);
        } else {
            p->lnz0 += vg_rate_ln_weight(&m->rm, 0);
            j++;
        }
    }
    p->ncf = p->nd > 0 ? ncf : 0;
    /* the last step: per gap and configuration, every lattice point (a
     * Voigt each with damping), and the configurations' own profiles */
    p->work += (double)p->n_gaps * (p->nu > 0 ? (double)(p->hhi - p->hlo + 1) : 0.0)
               * (p->ncf > 0 ? (double)p->ncf * (2.0 + VOIGT_TERMS) : 1.0)
               + (double)p->n_gaps * (double)p->ncf * VOIGT_TERMS;
    if (p->wt_used > p->need)
        p->need = p->wt_used;
    if (p->nu > 0 && (size_t)(p->hhi - p->hlo + 1) > p->need)
        p->need = (size_t)(p->hhi - p->hlo + 1);
    if (p->ncf > p->need)
        p->need = p->ncf;
    if (p->need > cap)
        return vg_error_set(err, VG_ENUMERIC,
                            "the many-mode sum needs %zu points (workspace holds %zu) "
                            "at reorganization %g meV, k_B T %g meV",
                            p->need, cap, p->lam, p->kT);
    return VG_OK;
}

/* ------------------------------------------------------------ lattice --- */

/* ln W_n of a lattice mode from the table (n in [a-1, b+1]). */
static inline double wt_at(const double *wt, const mm_mode *m, long n)
{
    return wt[m->off + (size_t)(n - m->a + 1)];
}

static void fill_weights(double *wt, const mm_mode *m)
{
    for (long n = m->a - 1; n <= m->b + 1; n++)
        wt[m->off + (size_t)(n - m->a + 1)] = vg_rate_ln_weight(&m->rm, n);
}

/* ln sum_{n in [a, b], n != 0 if skip0} W_n g_var(x - n omega). */
static double stick_sum(const double *wt, const mm_mode *m, double x, double var,
                        int skip0)
{
    lse_acc acc;
    double inv = 0.5 / var;

    lse_init(&acc);
    for (long n = m->a; n <= m->b; n++) {
        double dx = x - (double)n * m->w;
        if (n != 0 || !skip0)
            lse_add(&acc, wt_at(wt, m, n) - dx * dx * inv);
    }
    return lse_val(&acc) - 0.5 * log(2.0 * VG_PI * var);
}

/* ln W_0 of a lattice mode if its window holds n = 0, else -inf (the
 * computed sum then leaves n = 0 of this mode out, within the bound). */
static double window_w0(const double *wt, const mm_mode *m)
{
    return m->a <= 0 && 0 <= m->b ? wt_at(wt, m, 0) : -HUGE_VAL;
}

/* One step: h2 = delta (h * kernel) on the lattice, plus the exact term of
 * every earlier mode at n = 0 (ln weight lnz, Gaussian variance vnew) and
 * this mode's sticks n != 0. */
/* e^(v[i] - max v) into e[i] for i < n; the maximum (-HUGE_VAL if every
 * v[i] is). */
static double scaled_exps(const double *v, size_t n, double *e)
{
    double mx = -HUGE_VAL;

    for (size_t i = 0; i < n; i++)
        mx = fmax(mx, v[i]);
    for (size_t i = 0; i < n; i++) { /* below e^-745 exp is 0, by its slow path */
        double d = v[i] - mx;
        e[i] = mx == -HUGE_VAL || d < -745.0 ? 0.0 : exp(d);
    }
    return mx;
}

/* sum of a[i] b[-i] for i < n, in four running sums (a chain of
 * dependent additions would wait on each one). */
static double overlap_sum(const double *a, const double *b, long n)
{
    double s0 = 0.0, s1 = 0.0, s2 = 0.0, s3 = 0.0;
    long i = 0;

    for (; i + 4 <= n; i += 4) {
        s0 += a[i] * b[-i];
        s1 += a[i + 1] * b[-i - 1];
        s2 += a[i + 2] * b[-i - 2];
        s3 += a[i + 3] * b[-i - 3];
    }
    for (; i < n; i++)
        s0 += a[i] * b[-i];
    return (s0 + s1) + (s2 + s3);
}

/* A linear-domain sum below this (about e^-596 of the largest product) may
 * have lost terms to underflow that matter; chain_step then sums in logs. */
#define LINEAR_SUM_MIN 0x1p-860

/* One step of the convolution H' = H * K of the lattice function with a
 * mode's kernel, each entry a sum over the overlap of
 * exp(h[k] + ker[l - k]).  First in the linear domain, with both arrays
 * scaled by their maxima Mh, Mk (one exp per entry of each, then only
 * multiplications): the terms left out by underflow are each below
 * e^-708 of e^(Mh + Mk), so wherever the sum is at least LINEAR_SUM_MIN
 * (e^-596) their total is below e^-100 of it.  Entries below that (the
 * deep tails) are summed again term by term in the log domain. */
static void chain_step(vg_multimode_work *w, const mm_plan *p, const mm_mode *m,
                       long hlo, long hhi, double lnz, double vnew)
{
    long nlo = hlo + m->klo, nhi = hhi + m->khi;
    double mh = scaled_exps(w->h, (size_t)(hhi - hlo + 1), w->eh);
    double mk = scaled_exps(w->ker, (size_t)(m->khi - m->klo + 1), w->ek);

    for (long l = nlo; l <= nhi; l++) {
        long k0 = hlo > l - m->khi ? hlo : l - m->khi;
        long k1 = hhi < l - m->klo ? hhi : l - m->klo;
        lse_acc acc;
        double zero = -HUGE_VAL, lin = 0.0;

        lse_init(&acc);
        lin = overlap_sum(w->eh + (k0 - hlo), w->ek + (l - k0 - m->klo), k1 - k0 + 1);
        if (lin >= LINEAR_SUM_MIN) {
            acc.m = mh + mk;
            acc.s = lin;
        } else {
            for (long k = k0; k <= k1; k++)
                lse_add(&acc, w->h[k - hlo] + w->ker[l - k - m->klo]);
        }
        if (lnz > -HUGE_VAL)
            zero = lnz + stick_sum(w->wt, m, (double)l * p->delta, vnew, 1);
        w->h2[l - nlo] = lse2(p->ln_delta + lse_val(&acc), zero);
    }
}

/* Build the assisted lattice function H+ of the lattice modes: the first
 * mode's sticks n != 0, then one chain step per further mode. */
static void chain_build(vg_multimode_work *w, const mm_plan *p, size_t n)
{
    long hlo = 0, hhi = -1;
    double lnz = 0.0, v = 0.0;

    for (size_t i = 0; i < n; i++) {
        const mm_mode *m = &w->md[i];
        if (m->kind != MM_LATTICE)
            continue;
        fill_weights(w->wt, m);
        if (hhi < hlo) {
            for (long l = m->klo; l <= m->khi; l++)
                w->h[l - m->klo] = stick_sum(w->wt, m, (double)l * p->delta, m->u, 1);
            hlo = m->klo;
            hhi = m->khi;
        } else {
            double *t;
            for (long l = m->klo; l <= m->khi; l++)
                w->ker[l - m->klo] = stick_sum(w->wt, m, (double)l * p->delta, m->u, 0);
            chain_step(w, p, m, hlo, hhi, lnz, v + m->u);
            hlo += m->klo;
            hhi += m->khi;
            t = w->h;
            w->h = w->h2;
            w->h2 = t;
        }
        lnz += window_w0(w->wt, m);
        v += m->u;
    }
}

/* --------------------------------------------------- damped configs --- */

static void config_store(vg_multimode_work *w, size_t c, size_t n)
{
    double lw = 0.0, e = 0.0, g = 0.0;
    int net0 = 1;

    for (size_t i = 0; i < n; i++) {
        const mm_mode *m = &w->md[i];
        if (m->kind != MM_DAMPED)
            continue;
        lw += ln_poisson(m->ca, m->ldn) + ln_poisson(m->cb, m->lup);
        e += (double)(m->cb - m->ca) * m->w;
        g += (double)(m->ca + m->cb) * m->gamma;
        net0 = net0 && m->ca == m->cb;
    }
    w->cf_lw[c] = lw;
    w->cf_e[c] = e;
    w->cf_g[c] = g;
    w->cf_net0[c] = (unsigned char)net0;
}

/* Advance the mixed-radix counter over the damped modes' windows; 0 after
 * the last configuration. */
static int config_next(mm_mode *md, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        mm_mode *m = &md[i];
        if (m->kind != MM_DAMPED)
            continue;
        if (++m->ca <= m->a1)
            return 1;
        m->ca = m->a0;
        if (++m->cb <= m->b1)
            return 1;
        m->cb = m->b0;
    }
    return 0;
}

static vg_status configs_build(vg_multimode_work *w, const mm_plan *p, size_t n,
                               vg_error *err)
{
    size_t c = 0;

    for (size_t i = 0; i < n; i++) {
        w->md[i].ca = w->md[i].a0;
        w->md[i].cb = w->md[i].b0;
    }
    do
        config_store(w, c++, n);
    while (config_next(w->md, n) && c < p->ncf);
    for (size_t i = 0; i < p->ncf; i++)
        if (isnan(w->cf_lw[i]))
            return vg_error_set(err, VG_ENUMERIC, "GSL could not form ln n! for a damped mode");
    return VG_OK;
}

/* --------------------------------------------------------- evaluation --- */

/* Voigt terms of the last step below e^-VOIGT_SKIP of the largest lower
 * bound are not evaluated: they change the sum by less than N e^-50. */
#define VOIGT_SKIP 50.0

/* ln of an upper bound on the Voigt profile V(y; r, gam):
 * V(y) <= L(y/2) + g(y/2) (split the convolution at |u| = |y|/2; L is the
 * Lorentzian, g the Gaussian, both decreasing in |y|), within ln 2. */
static double ln_voigt_above(double y, double r2, double gam)
{
    double q = 0.25 * y * y;
    double ll = log(gam / VG_PI) - log(q + gam * gam);
    double lg = -0.5 * q / r2 - 0.5 * log(2.0 * VG_PI * r2);

    return log(2.0) + fmax(ll, lg);
}

/* ln of a lower bound: V(y) >= (1/2) g(|y| + gam) (half the Lorentzian's
 * mass lies in |u| < gam). */
static double ln_voigt_below(double y, double r2, double gam)
{
    double a = fabs(y) + gam;

    return -log(2.0) - 0.5 * a * a / r2 - 0.5 * log(2.0 * VG_PI * r2);
}

/* Last step at one shifted gap dp: ln delta sum_k H+(x_k) V(dp - x_k; r,
 * gam) into *v, and the same with the Gaussian alone (gam = 0) into *g,
 * which weighs the lattice error (the trapezoidal bound of a Voigt is that
 * of its Gaussian, absolutely: |FT of the Lorentzian| <= 1). */
static void final_sum(const vg_multimode_work *w, const mm_plan *p, double dp,
                      double gam, double *v, double *g)
{
    double r = sqrt(p->r2), inv = 0.5 / p->r2, norm = 0.5 * log(2.0 * VG_PI * p->r2);
    double floor_v = -HUGE_VAL;
    lse_acc av, ag;

    lse_init(&av);
    lse_init(&ag);
    for (long k = p->hlo; k <= p->hhi; k++) {
        double x = dp - (double)k * p->delta, hk = w->h[k - p->hlo];
        lse_add(&ag, hk - x * x * inv - norm);
        if (gam > 0.0)
            floor_v = fmax(floor_v, hk + ln_voigt_below(x, p->r2, gam));
    }
    *g = p->ln_delta + lse_val(&ag);
    if (!(gam > 0.0)) {
        *v = *g;
        return;
    }
    floor_v -= VOIGT_SKIP;
    for (long k = p->hlo; k <= p->hhi; k++) {
        double x = dp - (double)k * p->delta, hk = w->h[k - p->hlo];
        if (hk + ln_voigt_above(x, p->r2, gam) >= floor_v)
            lse_add(&av, hk + vg_multimode_ln_voigt(x, r, gam));
    }
    *v = p->ln_delta + lse_val(&av);
}

/* ln of the tilted mass a lattice mode leaves outside its window at tilt
 * t (both tails, from the stored edge weights). */
static double window_tails(const double *wt, const mm_mode *m, double t)
{
    double lz = ln_z(m->lup, m->ldn, t);
    double e[4];
    long n[4] = {m->a - 1, m->a, m->b, m->b + 1};

    for (int i = 0; i < 4; i++) {
        double lw = wt_at(wt, m, n[i]);
        e[i] = lw == -HUGE_VAL ? lw : lw + (double)n[i] * t - lz;
    }
    return lse2(ln_tail(e[1], e[0]), ln_tail(e[2], e[3]));
}

/* ln of the bound on everything the truncation leaves out at one gap:
 * 2 (1 + e_lat) g* C(tau) (sum of the excluded tilted masses), tau the
 * gap's saddle (0 with damped modes); see the file comment. */
static double ln_trunc_bound(const vg_multimode_work *w, const mm_plan *p,
                             const vg_multimode_system *sys, double gap)
{
    double tau = p->nd == 0 ? saddle_kt(sys, p->kT, p->lam, gap) : 0.0;
    double lnc = p->nd == 0 ? chernoff_kt(sys, p->kT, p->lam, gap, tau) : 0.0;
    lse_acc acc;

    lse_init(&acc);
    for (size_t i = 0; i < sys->n_modes; i++)
        if (w->md[i].kind == MM_LATTICE)
            lse_add(&acc, window_tails(w->wt, &w->md[i], tau * w->md[i].w));
    if (p->nu > 0) /* the kernels' Gaussian cuts: eta per coordinate and side */
        lse_add(&acc, log(4.0 * (double)p->nu) + p->ln_eta);
    lse_add(&acc, p->ln_dtail);
    return log(2.0) + log1p(p->e_lat) + p->ln_gstar + lnc + lse_val(&acc);
}

/* Rounding estimate for a log value x of a sum built from up to n terms a
 * step over `steps` steps (not a bound: see docs/theory.md). */
static double round_est(double x, double n, size_t steps)
{
    return DBL_EPSILON * (n * ((double)steps + 1.0) + 16.0 * (1.0 + fabs(x)));
}

/* Worst relative truncation and lattice errors of a round. */
typedef struct {
    double trunc, lat;
} mm_worst;

/* ln F_elastic and ln F_assisted at one gap, with the lattice error weight
 * (ln of the Gaussian-pair sums) in *lat. */
static void gap_parts(const vg_multimode_work *w, const mm_plan *p, double d,
                      double *el, double *as, double *lat)
{
    double sg = sqrt(p->s2), v, g;
    lse_acc ae, aa, al;

    if (p->nd == 0) {
        *el = p->lnz0 - 0.5 * d * d / p->s2 - 0.5 * log(2.0 * VG_PI * p->s2);
        *as = *lat = -HUGE_VAL;
        if (p->nu > 0)
            final_sum(w, p, d, 0.0, as, lat);
        return;
    }
    lse_init(&ae);
    lse_init(&aa);
    lse_init(&al);
    for (size_t c = 0; c < p->ncf; c++) {
        double t = p->lnz0 + w->cf_lw[c] + vg_multimode_ln_voigt(d - w->cf_e[c], sg, w->cf_g[c]);
        if (p->nu > 0) {
            final_sum(w, p, d - w->cf_e[c], w->cf_g[c], &v, &g);
            lse_add(&aa, w->cf_lw[c] + v);
            lse_add(&al, w->cf_lw[c] + g);
        }
        lse_add(w->cf_net0[c] ? &ae : &aa, t);
    }
    *el = lse_val(&ae);
    *as = lse_val(&aa);
    *lat = lse_val(&al);
}

/* One gap: the F, their error bounds, the worst errors of the round. */
static void eval_gap(const vg_multimode_work *w, const mm_plan *p,
                     const vg_multimode_system *sys, double gap,
                     vg_multimode_rates *out, mm_worst *worst)
{
    double el, as, lat, tot, lnb, lnl, vo = p->nd > 0 ? VOIGT_ERR : 0.0;
    double nh = p->nu > 0 ? (double)(p->hhi - p->hlo + 1) : 1.0;
    double t_as, t_tot, l_as, l_tot, t_el;

    gap_parts(w, p, gap - p->lam, &el, &as, &lat);
    tot = lse2(el, as);
    out->ln_f_elastic = el;
    out->ln_f_assisted = as;
    out->ln_f_total = tot;
    out->assisted_zero = p->nu + p->nd == 0;
    if (out->assisted_zero) {
        out->err_elastic = out->err_total = round_est(el, 1.0, 0);
        out->err_assisted = 0.0;
        return;
    }
    lnb = ln_trunc_bound(w, p, sys, gap);
    lnl = log(p->e_lat * (1.0 + p->e_lat)) + lat;
    t_as = exp_cap(lnb - as);
    t_tot = exp_cap(lnb - tot);
    l_as = exp_cap(lnl - as);
    l_tot = exp_cap(lnl - tot);
    t_el = p->nd > 0 ? exp_cap(log(2.0) + p->ln_gstar + p->lnz0 + p->ln_dtail0 - el) : 0.0;
    out->err_assisted = t_as + l_as + vo + round_est(as, nh, p->nu);
    out->err_total = t_tot + l_tot + vo + round_est(tot, nh, p->nu);
    out->err_elastic = t_el + vo + round_est(el, 1.0, 0);
    worst->trunc = fmax(worst->trunc, fmax(fmax(t_as, t_tot), t_el));
    worst->lat = fmax(worst->lat, fmax(l_as, l_tot));
}

/* The rates from the F: ln k = ln F + ln[(2 pi / hbar) V^2] in the units of
 * src/rate.c, whose public Marcus rate at gap = reorganization is exactly
 * the prefactor (2 pi / hbar) V^2 (4 pi lam kT)^-1/2. */
static void add_rates(vg_multimode_rates *r, double reorg, double T, double V, double kT)
{
    double lp = vg_rate_ln_marcus(reorg, reorg, V, T) + 0.5 * log(4.0 * VG_PI * reorg * kT);

    r->coupling_zero = V == 0.0;
    r->ln_k_total = r->coupling_zero ? -HUGE_VAL : r->ln_f_total + lp;
    r->ln_k_elastic = r->coupling_zero ? -HUGE_VAL : r->ln_f_elastic + lp;
    r->ln_k_assisted = r->coupling_zero || r->assisted_zero ? -HUGE_VAL : r->ln_f_assisted + lp;
}

/* --------------------------------------------------------- public API --- */

/* The checks of the mode records, one message per way to fail. */
static vg_status modes_check(const vg_multimode_system *sys, vg_error *err)
{
    if (!sys || (sys->n_modes > 0 && !sys->modes))
        return vg_error_set(err, VG_ENUMERIC, "many-mode engine called without a mode list");
    if (sys->stats != VG_STATS_THERMAL && sys->stats != VG_STATS_FROZEN)
        return vg_error_set(err, VG_ENUMERIC,
                            "'mode_statistics' must be thermal or frozen (got code %d)",
                            (int)sys->stats);
    for (size_t i = 0; i < sys->n_modes; i++) {
        const vg_multimode_mode *m = &sys->modes[i];
        if (!isfinite(m->mode) || m->mode <= 0.0)
            return vg_error_set(err, VG_ENUMERIC,
                                "mode %zu: 'mode' must be a finite energy > 0 meV (got %g meV)",
                                i + 1, m->mode);
        if (!isfinite(m->huang_rhys) || m->huang_rhys < 0.0)
            return vg_error_set(err, VG_ENUMERIC,
                                "mode %zu: 'huang_rhys' must be a finite number >= 0 (got %g)",
                                i + 1, m->huang_rhys);
        if (isnan(m->lifetime_ps) || m->lifetime_ps <= 0.0
            || (isfinite(m->lifetime_ps) && m->lifetime_ps > LIFETIME_MAX))
            return vg_error_set(err, VG_ENUMERIC,
                                "mode %zu: 'lifetime' must be > 0 and <= %g ps, or infinite "
                                "(got %g ps)", i + 1, LIFETIME_MAX, m->lifetime_ps);
    }
    return VG_OK;
}

vg_status vg_multimode_check(const vg_multimode_system *sys, double reorg_meV,
                             double temperature_K, vg_error *err)
{
    vg_status st = modes_check(sys, err);

    if (st != VG_OK)
        return st;
    if (!isfinite(reorg_meV) || reorg_meV <= 0.0)
        return vg_error_set(err, VG_ENUMERIC,
                            "'reorganization' must be finite and > 0 meV (got %g meV)",
                            reorg_meV);
    if (!isfinite(temperature_K) || temperature_K <= 0.0
        || !isnormal(2.0 * reorg_meV * VG_KB_MEV * temperature_K))
        return vg_error_set(err, VG_ENUMERIC,
                            "'temperature' must be finite and > 0 K with 2 reorganization "
                            "k_B T a normal number (got %g K)", temperature_K);
    return VG_OK;
}

/* The checks of a point, one message per way to fail. */
static vg_status point_check(const vg_multimode_system *sys, double reorg, double T,
                             double V, double tol, vg_error *err)
{
    vg_status st = vg_multimode_check(sys, reorg, T, err);

    if (st != VG_OK)
        return st;
    if (!isfinite(V) || V < 0.0)
        return vg_error_set(err, VG_ENUMERIC,
                            "'electronic_coupling' must be finite and >= 0 meV (got %g meV)", V);
    if (!(tol > 0.0 && tol < 1.0))
        return vg_error_set(err, VG_ENUMERIC,
                            "'tolerance' must lie strictly between 0 and 1 (got %g)", tol);
    return VG_OK;
}

/* The plan's fixed part for one (reorganization, temperature) and the gap
 * range; the first round's truncation (a guess of 1e-3 for F / g(0) C). */
static void plan_init(mm_plan *p, const vg_multimode_system *sys, double reorg,
                      double T, double tol, double gap_lo, double gap_hi, size_t n_gaps)
{
    p->stats = sys->stats;
    p->n_gaps = n_gaps;
    p->kT = VG_KB_MEV * T;
    p->s2 = 2.0 * reorg * p->kT;
    p->lam = reorg;
    count_kinds(sys, &p->nu, &p->nd);
    p->tau_lo = p->nd == 0 ? saddle_kt(sys, p->kT, reorg, gap_lo) : 0.0;
    p->tau_hi = p->nd == 0 ? saddle_kt(sys, p->kT, reorg, gap_hi) : 0.0;
    p->ln_eta = log(tol) - log(64.0 * (double)(p->nu + p->nd + 1)) - log(1.0e3);
    p->ln_elat = log(tol / 16.0);
}

vg_status vg_multimode_need(const vg_multimode_system *sys, double reorg_meV,
                            double temperature_K, double gap_lo_meV,
                            double gap_hi_meV, size_t n_gaps, double tol,
                            size_t *points, double *work, vg_error *err)
{
    vg_status st = point_check(sys, reorg_meV, temperature_K, 0.0, tol, err);
    mm_plan p;

    if (st != VG_OK)
        return st;
    if (!points || !isfinite(gap_lo_meV) || !isfinite(gap_hi_meV) || gap_lo_meV > gap_hi_meV)
        return vg_error_set(err, VG_ENUMERIC,
                            "gap range must be finite with low <= high (got %g .. %g meV)",
                            gap_lo_meV, gap_hi_meV);
    plan_init(&p, sys, reorg_meV, temperature_K, tol, gap_lo_meV, gap_hi_meV, n_gaps);
    st = plan_modes(&p, sys, NULL, SIZE_MAX / 2, err);
    *points = st == VG_OK ? (p.need > 1 ? p.need : 1) : 0;
    if (work)
        *work = st == VG_OK ? p.work : 0.0;
    return st;
}

/* One round: plan, build, evaluate every gap; the worst errors. */
static vg_status eval_round(vg_multimode_work *w, mm_plan *p, const vg_multimode_system *sys,
                            size_t n_gaps, const double *gap, vg_multimode_rates *out,
                            mm_worst *worst, vg_error *err)
{
    vg_status st = plan_modes(p, sys, w->md, w->cap, err);

    if (st != VG_OK)
        return st;
    if (!(p->work <= w->max_work))
        return vg_error_set(err, VG_ENUMERIC,
                            "the many-mode sum would take %.3g terms (the workspace allows "
                            "%.3g) at reorganization %g meV, k_B T %g meV: the environment's "
                            "width %.3g meV is too small for this lattice",
                            p->work, w->max_work, p->lam, p->kT, sqrt(p->s2));
    if (p->nu > 0)
        chain_build(w, p, sys->n_modes);
    if (p->nd > 0 && (st = configs_build(w, p, sys->n_modes, err)) != VG_OK)
        return st;
    worst->trunc = worst->lat = 0.0;
    for (size_t i = 0; i < n_gaps; i++)
        eval_gap(w, p, sys, gap[i], &out[i], worst);
    return VG_OK;
}

/* Tighten a target by the factor its worst error missed it by (twice
 * over); a bound that overflowed moves it by e^-200. */
static double tighten(double ln_target, double worst, double tol)
{
    double miss = log(worst) - log(tol / 8.0);

    return ln_target - (isfinite(miss) ? fmax(miss, log(10.0)) : 200.0);
}

static int rates_finite(const vg_multimode_rates *r)
{
    int f = isfinite(r->ln_f_total) && isfinite(r->ln_f_elastic)
            && (r->assisted_zero || isfinite(r->ln_f_assisted))
            && isfinite(r->err_total) && isfinite(r->err_elastic) && isfinite(r->err_assisted);
    int k = r->coupling_zero
            || (isfinite(r->ln_k_total) && isfinite(r->ln_k_elastic)
                && (r->assisted_zero || isfinite(r->ln_k_assisted)));
    return f && k;
}

static vg_status finish(const mm_plan *p, double reorg, double T, double V,
                        size_t n_gaps, const double *gap, vg_multimode_rates *out,
                        vg_error *err)
{
    for (size_t i = 0; i < n_gaps; i++) {
        add_rates(&out[i], reorg, T, V, p->kT);
        if (!rates_finite(&out[i]))
            return vg_error_set(err, VG_ENUMERIC,
                                "many-mode sum produced a non-finite value at gap %g meV, "
                                "reorganization %g meV, temperature %g K", gap[i], reorg, T);
    }
    return VG_OK;
}

vg_status vg_multimode_eval(vg_multimode_work *w, const vg_multimode_system *sys,
                            double reorg_meV, double temperature_K,
                            double coupling_meV, double tol, size_t n_gaps,
                            const double *gap_meV, vg_multimode_rates *out,
                            vg_error *err)
{
    vg_status st = point_check(sys, reorg_meV, temperature_K, coupling_meV, tol, err);
    double lo = HUGE_VAL, hi = -HUGE_VAL;
    mm_plan p;

    if (st != VG_OK)
        return st;
    if (!w || !out || !gap_meV || n_gaps == 0 || sys->n_modes > w->max_modes)
        return vg_error_set(err, VG_ENUMERIC,
                            "many-mode engine called without a workspace for %zu modes, "
                            "gaps or results", sys->n_modes);
    for (size_t i = 0; i < n_gaps; i++) {
        if (!isfinite(gap_meV[i]))
            return vg_error_set(err, VG_ENUMERIC,
                                "'gap' must be a finite energy in meV (got %g)", gap_meV[i]);
        lo = fmin(lo, gap_meV[i]);
        hi = fmax(hi, gap_meV[i]);
    }
    plan_init(&p, sys, reorg_meV, temperature_K, tol, lo, hi, n_gaps);
    for (int round = 0; round < ROUNDS; round++) {
        mm_worst worst = {0.0, 0.0};
        if ((st = eval_round(w, &p, sys, n_gaps, gap_meV, out, &worst, err)) != VG_OK)
            return st;
        if (worst.trunc <= 0.25 * tol && worst.lat <= 0.25 * tol)
            return finish(&p, reorg_meV, temperature_K, coupling_meV, n_gaps, gap_meV, out, err);
        if (worst.trunc > 0.25 * tol)
            p.ln_eta = tighten(p.ln_eta, worst.trunc, tol);
        if (worst.lat > 0.25 * tol)
            p.ln_elat = tighten(p.ln_elat, worst.lat, tol);
    }
    return vg_error_set(err, VG_ENUMERIC,
                        "many-mode sum could not bring its error below the tolerance %g "
                        "at reorganization %g meV, temperature %g K", tol, reorg_meV,
                        temperature_K);
}

vg_status vg_multimode_alloc(size_t max_modes, size_t max_points, double max_work,
                             vg_multimode_work **out, vg_error *err)
{
    vg_multimode_work *w;

    if (!out)
        return vg_error_set(err, VG_EUSAGE, "many-mode workspace: no place for the result");
    *out = NULL;
    if (max_modes == 0 || max_points == 0 || max_points > SIZE_MAX / (10 * sizeof(double))
        || !(max_work > 0.0))
        return vg_error_set(err, VG_EUSAGE,
                            "many-mode workspace: sizes must be > 0 (got %zu modes, %zu points, "
                            "%g terms)", max_modes, max_points, max_work);
    w = calloc(1, sizeof *w);
    if (!w)
        return vg_error_set(err, VG_ENOMEM, "out of memory for the many-mode workspace");
    w->max_modes = max_modes;
    w->cap = max_points;
    w->max_work = max_work;
    w->md = calloc(max_modes, sizeof *w->md);
    w->block = malloc(9 * max_points * sizeof *w->block);
    w->cf_net0 = malloc(max_points);
    if (!w->md || !w->block || !w->cf_net0) {
        vg_multimode_free(w);
        return vg_error_set(err, VG_ENOMEM,
                            "out of memory for a many-mode workspace of %zu points", max_points);
    }
    w->wt = w->block;
    w->ker = w->wt + max_points;
    w->h = w->ker + max_points;
    w->h2 = w->h + max_points;
    w->cf_lw = w->h2 + max_points;
    w->cf_e = w->cf_lw + max_points;
    w->cf_g = w->cf_e + max_points;
    w->eh = w->cf_g + max_points;
    w->ek = w->eh + max_points;
    *out = w;
    return VG_OK;
}

void vg_multimode_free(vg_multimode_work *w)
{
    if (!w)
        return;
    free(w->md);
    free(w->block);
    free(w->cf_net0);
    free(w);
}
