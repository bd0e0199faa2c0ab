/*
 * Test tool: the rate kernel over the whole domain the config accepts, for
 * tests/scripts/domain.py.
 *
 * 1. Random points: N points (default 10^6) drawn from a fixed seed, plus
 *    every corner of the domain (each parameter at its ends, and at 0 or the
 *    smallest normal double where 0 is allowed), each through
 *    vg_rate_mode_init + vg_rate_eval + vg_metrics_from_rates with a fresh
 *    mode record.  Counted: kernel errors, NaN or Inf in every field of
 *    vg_rates that the header defines and in every metric, fill values
 *    where the fill rules of docs/theory.md ("Zero rates and fill values")
 *    do not put them (or missing where they do), and broken invariants
 *    (assisted fraction outside [0, 1], n_lo <= n_peak <= n_hi, frozen
 *    n_lo >= 0, total below elastic or assisted beyond the tolerance).
 * 2. Random grids through vg_sweep_run (config text through
 *    vg_config_load_text; random axes of lists or ranges, up to 12000
 *    points a grid, 30000 in all; random chunk sizes, many above the
 *    1024-point blocks the threads share) at 1 and 2 threads: every metric
 *    of every point must equal, bit for bit, the metrics of a direct
 *    vg_rate_eval at the grid point's values.
 * 3. A stratified sample of the random points with their inputs and
 *    ln rates, written to a file for the mpmath reference.
 *
 * The accepted domain (docs/config.md, "[parameters]"; src/config.c's
 * parameter table): gap -3000 .. 3000 meV, reorganization 0.1 .. 3000 meV,
 * electronic_coupling 0 .. 1000 meV, huang_rhys 0 .. 50, mode 1 .. 1000 meV,
 * temperature 1 .. 5000 K, tolerance 1e-15 .. 1e-3, mode_statistics thermal
 * or frozen.  The smallest positive value the parser takes is the smallest
 * normal double, DBL_MIN (strtod reports ERANGE below it).  Draws: gap
 * uniform; reorganization, mode, temperature, tolerance log-uniform over
 * the whole range; coupling and huang_rhys 0 with probability 1/20,
 * log-uniform from DBL_MIN with probability 4/20 (every decade the parser
 * takes) and log-uniform over the top 6 (coupling, 1e-3 .. 1000 meV) or 5.7
 * (huang_rhys, 1e-4 .. 50) decades otherwise; statistics thermal or frozen
 * with probability 1/2.
 *
 * PRNG: splitmix64 (Steele, Lea & Flood, "Fast splittable pseudorandom
 * number generators", OOPSLA 2014; the constants of Vigna's public-domain
 * reference splitmix64.c), a double in [0, 1) from the top 53 bits.
 *
 * Usage: domain_probe [-n POINTS] [-s SEED] [-g GRID_POINTS] [-o SAMPLE]
 * stdout: "KEY VALUE" summary lines, then "detail: ..." lines for the first
 * few failures of each kind, with the exact inputs (%.17g).
 * SAMPLE: one line per sampled point,
 *   stats gap reorg V S mode T tol  ln_k_elastic ln_k_assisted ln_k_total
 *   ln_k_bare ln_fc_elastic ln_fc_assisted ln_fc_total ln_fc_bare
 *   assisted_fraction coupling_zero assisted_zero
 * with "-" for a log the header leaves undefined (a zero rate).
 */
#include <float.h>
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>

#include "vg_config.h"
#include "vg_grid.h"
#include "vg_metrics.h"
#include "vg_rate.h"
#include "vg_sweep.h"

#define N_FIELDS 9          /* the doubles of vg_rates checked below */
#define N_STRATA 12         /* statistics x huang_rhys class x coupling class */
#define PER_STRATUM 20      /* random points of each stratum in the sample */
#define CORNER_SAMPLE 60    /* corner points in the sample */
#define MAX_DETAILS 5       /* detail lines per kind of failure */
#define MAX_AXIS 12         /* values of one random grid axis */
#define MAX_GRID 12000      /* points of one random grid */

static const char *const field_names[N_FIELDS] = {
    "ln_k_elastic", "ln_k_assisted", "ln_k_total", "ln_k_bare", "ln_fc_elastic",
    "ln_fc_assisted", "ln_fc_total", "ln_fc_bare", "assisted_fraction"};

/* One point of the domain. */
typedef struct {
    vg_mode_statistics stats;
    double gap, reorg, coupling, S, mode, T, tol;
} point;

typedef struct {
    size_t points, errors, nonfinite_field[N_FIELDS], nonfinite_metric[VG_N_METRICS];
    size_t fill_wrong, invariant_wrong, undefined_nan, details;
} tally;

/* ---- splitmix64 -------------------------------------------------------- */

static uint64_t splitmix64(uint64_t *s)
{
    uint64_t z = (*s += UINT64_C(0x9E3779B97F4A7C15));

    z = (z ^ (z >> 30)) * UINT64_C(0xBF58476D1CE4E5B9);
    z = (z ^ (z >> 27)) * UINT64_C(0x94D049BB133111EB);
    return z ^ (z >> 31);
}

static double uniform01(uint64_t *s)
{
    return (double)(splitmix64(s) >> 11) * 0x1.0p-53;
}

static double uniform(uint64_t *s, double a, double b)
{
    return fmin(b, a + (b - a) * uniform01(s));
}

static double log_uniform(uint64_t *s, double a, double b)
{
    return fmin(b, fmax(a, exp(log(a) + (log(b) - log(a)) * uniform01(s))));
}

/* 0, every decade from DBL_MIN, or the decades that matter in practice. */
static double with_zero(uint64_t *s, double practical_lo, double hi)
{
    double u = uniform01(s);

    if (u < 0.05)
        return 0.0;
    return log_uniform(s, u < 0.25 ? DBL_MIN : practical_lo, hi);
}

static point draw(uint64_t *s)
{
    point p;

    p.stats = uniform01(s) < 0.5 ? VG_STATS_THERMAL : VG_STATS_FROZEN;
    p.gap = uniform(s, -3000.0, 3000.0);
    p.reorg = log_uniform(s, 0.1, 3000.0);
    p.coupling = with_zero(s, 1e-3, 1000.0);
    p.S = with_zero(s, 1e-4, 50.0);
    p.mode = log_uniform(s, 1.0, 1000.0);
    p.T = log_uniform(s, 1.0, 5000.0);
    p.tol = log_uniform(s, 1e-15, 1e-3);
    return p;
}

/* Corner k of the 3*2*3*3*2*2*2*2 = 864 corners. */
#define N_CORNERS 864
static point corner(size_t k)
{
    static const double gaps[] = {-3000.0, 0.0, 3000.0}, reorgs[] = {0.1, 3000.0};
    static const double vs[] = {0.0, DBL_MIN, 1000.0}, ss[] = {0.0, DBL_MIN, 50.0};
    static const double modes[] = {1.0, 1000.0}, ts[] = {1.0, 5000.0}, tols[] = {1e-15, 1e-3};
    point p;

    p.gap = gaps[k % 3], k /= 3;
    p.reorg = reorgs[k % 2], k /= 2;
    p.coupling = vs[k % 3], k /= 3;
    p.S = ss[k % 3], k /= 3;
    p.mode = modes[k % 2], k /= 2;
    p.T = ts[k % 2], k /= 2;
    p.tol = tols[k % 2], k /= 2;
    p.stats = k % 2 ? VG_STATS_FROZEN : VG_STATS_THERMAL;
    return p;
}

/* ---- one point --------------------------------------------------------- */

static void print_point(FILE *f, const point *p)
{
    fprintf(f, "%s %.17g %.17g %.17g %.17g %.17g %.17g %.17g",
            p->stats == VG_STATS_FROZEN ? "frozen" : "thermal", p->gap, p->reorg, p->coupling,
            p->S, p->mode, p->T, p->tol);
}

static void detail(tally *t, const point *p, const char *what)
{
    if (t->details++ >= 4 * MAX_DETAILS)
        return;
    printf("detail: ");
    print_point(stdout, p);
    printf(": %s\n", what);
}

static vg_status eval(const point *p, vg_rates *r, vg_error *err)
{
    vg_rate_mode m;
    vg_status st = vg_rate_mode_init(&m, p->stats, p->S, p->mode, p->T, err);

    if (st == VG_OK)
        st = vg_rate_eval(&m, p->gap, p->reorg, p->coupling, p->tol, r, err);
    return st;
}

static void fields(const vg_rates *r, double f[N_FIELDS], int defined[N_FIELDS])
{
    const double v[N_FIELDS] = {r->ln_k_elastic, r->ln_k_assisted, r->ln_k_total,
                                r->ln_k_bare, r->ln_fc_elastic, r->ln_fc_assisted,
                                r->ln_fc_total, r->ln_fc_bare, r->assisted_fraction};

    for (int i = 0; i < N_FIELDS; i++) {
        f[i] = v[i];
        /* vg_rate.h: a log of an exactly zero rate is undefined */
        defined[i] = !((i < 4 && r->coupling_zero) ||
                       ((i == 1 || i == 5) && r->assisted_zero));
    }
}

/* Fill rules (docs/theory.md, section 5): 1 where the metric must be
 * VG_FILL, 0 where it must not, -1 for a metric those rules do not cover
 * (only its finiteness is checked). */
static int fill_expected(int m, const point *p)
{
    int vz = p->coupling == 0.0, sz = p->S == 0.0;

    switch (m) {
    case VG_M_LOG10_K_ELASTIC:
    case VG_M_LOG10_K_TOTAL:
    case VG_M_LOG10_K_BARE:
        return vz;
    case VG_M_LOG10_K_ASSISTED:
        return vz || sz;
    case VG_M_LOG10_RATIO:
        return sz;
    case VG_M_ASSISTED_FRACTION:
    case VG_M_LOG10_CONTRAST:
        return 0;
    default:
        return -1;
    }
}

static void check_metrics(tally *t, const point *p, const double met[VG_N_METRICS])
{
    char why[160];

    for (int m = 0; m < VG_N_METRICS; m++) {
        if (!isfinite(met[m])) {
            t->nonfinite_metric[m]++;
            snprintf(why, sizeof why, "%s = %g", vg_metric_get((vg_metric_id)m)->name, met[m]);
            detail(t, p, why);
        } else if (fill_expected(m, p) >= 0 && (met[m] == VG_FILL) != fill_expected(m, p)) {
            t->fill_wrong++;
            snprintf(why, sizeof why, "%s = %.17g against the fill rule",
                     vg_metric_get((vg_metric_id)m)->name, met[m]);
            detail(t, p, why);
        }
    }
}

/* ln(e^a + e^b) */
static double log_add(double a, double b)
{
    double hi = fmax(a, b), lo = fmin(a, b);
    return hi + log1p(exp(lo - hi));
}

/* The invariants that hold at any point (vg_rate.h, docs/theory.md 4.2):
 * flags from the inputs, channel window order, fraction in [0, 1], total
 * = elastic + assisted to the truncation tolerance plus rounding. */
static int invariants_hold(const point *p, const vg_rates *r)
{
    double slack = 2.0 * p->tol + 1e-13 + 1e-14 * fabs(r->ln_fc_total);

    if (r->coupling_zero != (p->coupling == 0.0) || r->assisted_zero != (p->S == 0.0))
        return 0;
    if (!(r->n_lo <= r->n_peak && r->n_peak <= r->n_hi))
        return 0;
    if (p->stats == VG_STATS_FROZEN && r->n_lo < 0)
        return 0;
    if (!(r->assisted_fraction >= 0.0 && r->assisted_fraction <= 1.0))
        return 0;
    if (!r->assisted_zero &&
        !(fabs(r->ln_fc_total - log_add(r->ln_fc_elastic, r->ln_fc_assisted)) <= slack))
        return 0;
    return 1;
}

/* 1 when the kernel accepted the point (r is then filled). */
static int check_point(tally *t, const point *p, vg_rates *r)
{
    double f[N_FIELDS], met[VG_N_METRICS];
    int def[N_FIELDS];
    vg_error err = {VG_OK, ""};
    char why[VG_ERROR_MAX + 32];

    t->points++;
    if (eval(p, r, &err) != VG_OK) {
        t->errors++;
        snprintf(why, sizeof why, "kernel error: %s", err.msg);
        detail(t, p, why);
        return 0;
    }
    fields(r, f, def);
    for (int i = 0; i < N_FIELDS; i++) {
        if (def[i] && !isfinite(f[i])) {
            t->nonfinite_field[i]++;
            snprintf(why, sizeof why, "%s = %g", field_names[i], f[i]);
            detail(t, p, why);
        }
        t->undefined_nan += !def[i] && isnan(f[i]);
    }
    if (!invariants_hold(p, r)) {
        t->invariant_wrong++;
        detail(t, p, "an invariant does not hold");
    }
    vg_metrics_from_rates(r, met);
    check_metrics(t, p, met);
    return 1;
}

/* ---- the sample -------------------------------------------------------- */

static void print_log(FILE *f, double v, int defined)
{
    if (defined)
        fprintf(f, " %.17g", v);
    else
        fputs(" -", f);
}

static void write_sample_line(FILE *f, const point *p, const vg_rates *r)
{
    double v[N_FIELDS];
    int def[N_FIELDS];

    fields(r, v, def);
    print_point(f, p);
    for (int i = 0; i < N_FIELDS; i++)
        print_log(f, v[i], def[i]);
    fprintf(f, " %d %d\n", r->coupling_zero, r->assisted_zero);
}

static int stratum(const point *p)
{
    int s_class = p->S == 0.0 ? 0 : p->S < 1e-4 ? 1 : 2;

    return (p->stats == VG_STATS_FROZEN) * 6 + s_class * 2 + (p->coupling > 0.0);
}

/* ---- sweeps ------------------------------------------------------------ */

typedef struct {
    double *m;       /* npoints x VG_N_METRICS */
    size_t npoints;
} collected;

static vg_status collect(void *ctx, size_t start, size_t count, const double *metrics,
                         vg_error *err)
{
    collected *c = ctx;

    if (start + count > c->npoints)
        return vg_error_set(err, VG_EIO, "points %zu .. %zu beyond the grid", start,
                            start + count - 1);
    memcpy(c->m + start * VG_N_METRICS, metrics, count * VG_N_METRICS * sizeof *metrics);
    return VG_OK;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* One parameter's value text: a scalar, a list of k distinct values, or a
 * range (linear, or log when both ends are > 0). */
static void axis_text(uint64_t *s, int param, size_t k, char *buf, size_t size)
{
    static const char *const units[VG_NPARAM] = {" meV", " meV", " meV", "", " meV", " K"};
    double v[MAX_AXIS];
    size_t n = 0, used = 0;

    for (size_t i = 0; i < k; i++) {
        point p = draw(s);
        const double all[VG_NPARAM] = {p.gap, p.reorg, p.coupling, p.S, p.mode, p.T};
        v[i] = all[param];
    }
    qsort(v, k, sizeof v[0], cmp_double);
    for (size_t i = 0; i < k; i++)
        if (n == 0 || v[i] != v[n - 1])
            v[n++] = v[i];
    if (n > 1 && uniform01(s) < 0.3) {
        snprintf(buf, size, "%.17g .. %.17g%s, %zu points%s", v[n - 1], v[0], units[param],
                 k, v[0] > 0.0 && uniform01(s) < 0.5 ? ", log" : "");
        return;
    }
    for (size_t i = 0; i < n; i++)
        used += (size_t)snprintf(buf + used, size - used, "%s%.17g", i ? ", " : "", v[i]);
    snprintf(buf + used, size - used, "%s", units[param]);
}

/* A random grid's config: each parameter a scalar (probability 0.4) or an
 * axis of 2 .. MAX_AXIS values, at most MAX_GRID points in all. */
static char *grid_text(uint64_t *s)
{
    static const char *const keys[VG_NPARAM] = {"gap", "reorganization", "electronic_coupling",
                                                "huang_rhys", "mode", "temperature"};
    size_t size = 8192, used, n[VG_NPARAM], total;
    char *t = malloc(size), value[1024];
    point p = draw(s);

    if (!t)
        return NULL;
    do {
        total = 1;
        for (int k = 0; k < VG_NPARAM; k++) {
            n[k] = uniform01(s) < 0.4 ? 1 : 2 + (size_t)(uniform01(s) * (MAX_AXIS - 1));
            total *= n[k];
        }
    } while (total > MAX_GRID);
    used = (size_t)snprintf(t, size, "[parameters]\n");
    for (int k = 0; k < VG_NPARAM; k++) {
        axis_text(s, k, n[k], value, sizeof value);
        used += (size_t)snprintf(t + used, size - used, "%s = %s\n", keys[k], value);
    }
    snprintf(t + used, size - used, "[model]\nmode_statistics = %s\ntolerance = %.17g\n"
             "[output]\nmax_size = 1 TiB\n",
             p.stats == VG_STATS_FROZEN ? "frozen" : "thermal", p.tol);
    return t;
}

typedef struct {
    size_t grids, points, failed, thread_mismatch, direct_mismatch, direct_errors;
    size_t split;        /* grids whose chunks the two threads share */
} sweep_tally;

static int run_sweep(const vg_grid *g, int threads, size_t chunk, collected *c, vg_error *err)
{
    vg_sweep_opts o = {threads, chunk, 0, NULL, 0};

    return vg_sweep_run(g, &o, collect, c, err) == VG_OK;
}

/* The grid point's metrics by a direct vg_rate_eval; 0 on a kernel error. */
static int direct_metrics(const vg_grid *g, size_t i, double met[VG_N_METRICS], point *p)
{
    double v[VG_NPARAM];
    vg_rates r;
    vg_error err = {VG_OK, ""};

    vg_grid_values(g, i, v);
    p->stats = g->cfg->stats;
    p->gap = v[VG_P_GAP], p->reorg = v[VG_P_REORG], p->coupling = v[VG_P_COUPLING];
    p->S = v[VG_P_HUANG_RHYS], p->mode = v[VG_P_MODE], p->T = v[VG_P_TEMPERATURE];
    p->tol = g->cfg->tolerance;
    if (eval(p, &r, &err) != VG_OK)
        return 0;
    vg_metrics_from_rates(&r, met);
    return 1;
}

static void compare_grid(const vg_grid *g, const collected *one, const collected *two,
                         sweep_tally *st, tally *t)
{
    double met[VG_N_METRICS];
    point p;

    for (size_t i = 0; i < g->npoints; i++) {
        const double *a = one->m + i * VG_N_METRICS, *b = two->m + i * VG_N_METRICS;
        int ok = direct_metrics(g, i, met, &p);
        if (memcmp(a, b, sizeof met) != 0) {
            st->thread_mismatch++;
            detail(t, &p, "sweep at 1 and 2 threads differ");
        }
        if (!ok) {
            st->direct_errors++;
            detail(t, &p, "direct evaluation of a sweep point failed");
        } else if (memcmp(a, met, sizeof met) != 0) {
            st->direct_mismatch++;
            detail(t, &p, "sweep and direct vg_rate_eval differ");
        }
    }
}

static void sweep_grid(uint64_t *s, sweep_tally *st, tally *t)
{
    char *text = grid_text(s);
    vg_config cfg;
    vg_grid g;
    vg_error err = {VG_OK, ""};
    collected one = {NULL, 0}, two = {NULL, 0};
    /* Threads take points in blocks of 1024 (src/sweep.c), so only chunks
     * above 1024 points are split: small chunks, larger ones, the default. */
    double u = uniform01(s);
    size_t chunk = u < 0.3 ? 1 + (size_t)(uniform01(s) * 700.0)
                 : u < 0.8 ? 1025 + (size_t)(uniform01(s) * 4000.0) : 0;

    if (!text || vg_config_load_text(&cfg, "random grid", text, 0, NULL, &err) != VG_OK) {
        st->failed++;
        printf("detail: grid not accepted: %s\n", text ? err.msg : "out of memory");
        free(text);
        return;
    }
    vg_grid_init(&g, &cfg);
    one.npoints = two.npoints = g.npoints;
    one.m = malloc(g.npoints * VG_N_METRICS * sizeof *one.m);
    two.m = malloc(g.npoints * VG_N_METRICS * sizeof *two.m);
    st->grids++;
    st->points += g.npoints;
    st->split += g.npoints > 1024 && (chunk == 0 || chunk > 1024);
    if (!one.m || !two.m || !run_sweep(&g, 1, chunk, &one, &err) ||
        !run_sweep(&g, 2, chunk, &two, &err)) {
        st->failed++;
        printf("detail: sweep failed: %s\ndetail: grid:\n%s", err.msg, text);
    } else {
        compare_grid(&g, &one, &two, st, t);
    }
    free(one.m);
    free(two.m);
    vg_config_free(&cfg);
    free(text);
}

/* ---- main -------------------------------------------------------------- */

static void report(const tally *t, const sweep_tally *st, size_t sampled)
{
    printf("points %zu\nkernel_errors %zu\n", t->points, t->errors);
    for (int i = 0; i < N_FIELDS; i++)
        printf("nonfinite_field %s %zu\n", field_names[i], t->nonfinite_field[i]);
    for (int m = 0; m < VG_N_METRICS; m++)
        printf("nonfinite_metric %s %zu\n", vg_metric_get((vg_metric_id)m)->name,
               t->nonfinite_metric[m]);
    printf("fill_rule_violations %zu\ninvariant_violations %zu\n", t->fill_wrong,
           t->invariant_wrong);
    printf("undefined_logs_nan %zu\nsampled %zu\n", t->undefined_nan, sampled);
    printf("sweep_grids %zu\nsweep_split_grids %zu\nsweep_points %zu\nsweep_failures %zu\n",
           st->grids, st->split, st->points, st->failed);
    printf("sweep_thread_mismatches %zu\nsweep_direct_mismatches %zu\n"
           "sweep_direct_errors %zu\n", st->thread_mismatch, st->direct_mismatch,
           st->direct_errors);
}

int main(int argc, char **argv)
{
    size_t n = 1000000, grid_points = 30000, taken[N_STRATA] = {0}, sampled = 0;
    uint64_t seed = UINT64_C(2385), s;
    const char *sample_path = NULL;
    FILE *sample = NULL;
    tally t;
    sweep_tally st;
    vg_rates r;

    for (int i = 1; i + 1 < argc; i += 2) {
        if (strcmp(argv[i], "-n") == 0)
            n = strtoul(argv[i + 1], NULL, 10);
        else if (strcmp(argv[i], "-s") == 0)
            seed = strtoull(argv[i + 1], NULL, 10);
        else if (strcmp(argv[i], "-g") == 0)
            grid_points = strtoul(argv[i + 1], NULL, 10);
        else if (strcmp(argv[i], "-o") == 0)
            sample_path = argv[i + 1];
    }
    gsl_set_error_handler_off();
    memset(&t, 0, sizeof t);
    memset(&st, 0, sizeof st);
    if (sample_path && !(sample = fopen(sample_path, "w"))) {
        perror(sample_path);
        return 2;
    }
    s = seed;
    for (size_t i = 0; i < n; i++) {
        point p = draw(&s);
        int k = stratum(&p);
        if (check_point(&t, &p, &r) && sample && taken[k] < PER_STRATUM) {
            taken[k]++, sampled++;
            write_sample_line(sample, &p, &r);
        }
    }
    for (size_t k = 0; k < N_CORNERS; k++) {
        point p = corner(k);
        if (check_point(&t, &p, &r) && sample && k % (N_CORNERS / CORNER_SAMPLE) == 7) {
            sampled++;
            write_sample_line(sample, &p, &r);
        }
    }
    while (st.points < grid_points && st.grids < 10000)
        sweep_grid(&s, &st, &t);
    if (sample && fclose(sample) != 0) {
        perror(sample_path);
        return 2;
    }
    report(&t, &st, sampled);
    return 0;
}
