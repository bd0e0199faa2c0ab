/*
 * Test tool: evaluates the rate kernel on points read from stdin so that
 * tests/scripts/rates_ref.py can compare it with independent references.
 *
 * Input, one request a line:
 *   STATS GAP REORG COUPLING S MODE T   (STATS thermal|frozen; meV, K)
 *   bessel N LN_X                       (ln I_N(x) with x = exp(LN_X))
 * Output, one line per request, numbers with %.17g:
 *   rates: the 7 metrics in vg_metrics.h order, then ln_k_elastic,
 *          ln_k_assisted, ln_k_total, ln_k_bare, ln_fc_elastic,
 *          ln_fc_assisted, ln_fc_total, ln_fc_bare, assisted_zero,
 *          coupling_zero, n_lo, n_peak, n_hi; a log of an exactly zero rate
 *          is written as VG_FILL, like the metrics
 *   bessel: the value
 *   a rejected request: "error: MESSAGE"
 * Usage: rate_dump [TOL]   (relative truncation tolerance, default 1e-13)
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>

#include "vg_metrics.h"
#include "vg_rate.h"

static double or_fill(double v)
{
    return isfinite(v) ? v : VG_FILL;
}

static void print_rates(const vg_rates *r)
{
    double met[VG_N_METRICS];
    double ln[8] = {r->ln_k_elastic, r->ln_k_assisted, r->ln_k_total, r->ln_k_bare,
                    r->ln_fc_elastic, r->ln_fc_assisted, r->ln_fc_total, r->ln_fc_bare};

    vg_metrics_from_rates(r, met);
    for (int i = 0; i < VG_N_METRICS; i++)
        printf("%.17g ", met[i]);
    for (int i = 0; i < 8; i++)
        printf("%.17g ", or_fill(ln[i]));
    printf("%d %d %ld %ld %ld\n", r->assisted_zero, r->coupling_zero, r->n_lo,
           r->n_peak, r->n_hi);
}

static void do_rates(const char *stats, const double v[6], double tol)
{
    vg_rate_mode m;
    vg_rates r;
    vg_error err = {VG_OK, ""};
    vg_mode_statistics ms = strcmp(stats, "frozen") == 0 ? VG_STATS_FROZEN : VG_STATS_THERMAL;

    if (vg_rate_mode_init(&m, ms, v[3], v[4], v[5], &err) != VG_OK
        || vg_rate_eval(&m, v[0], v[1], v[2], tol, &r, &err) != VG_OK) {
        printf("error: %s\n", err.msg);
        return;
    }
    print_rates(&r);
}

static int do_line(const char *line, double tol)
{
    char word[32];
    double v[6];
    long n;
    double ln_x;

    if (sscanf(line, "bessel %ld %lf", &n, &ln_x) == 2) {
        printf("%.17g\n", vg_rate_ln_bessel_i(n, exp(ln_x), ln_x));
        return 0;
    }
    if (sscanf(line, "%31s %lf %lf %lf %lf %lf %lf", word, &v[0], &v[1], &v[2],
               &v[3], &v[4], &v[5]) == 7
        && (strcmp(word, "thermal") == 0 || strcmp(word, "frozen") == 0)) {
        do_rates(word, v, tol);
        return 0;
    }
    return -1;
}

int main(int argc, char **argv)
{
    char line[512];
    double tol = argc > 1 ? strtod(argv[1], NULL) : 1e-13;

    gsl_set_error_handler_off();
    while (fgets(line, sizeof line, stdin)) {
        if (line[0] == '\n' || line[0] == '#')
            continue;
        if (do_line(line, tol) != 0) {
            fprintf(stderr, "rate_dump: cannot read request: %s", line);
            return 2;
        }
    }
    return 0;
}
