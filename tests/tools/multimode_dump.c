/*
 * Test tool: drives the many-mode engines (vg_multimode.h, vg_fft.h) from
 * requests on stdin so that tests/scripts/multimode_ref.py can compare them
 * with independent references (mpmath, SciPy).
 *
 * Requests, one a line (energies meV, temperature K, lifetimes ps or "inf"):
 *   modes STATS N  MODE_1 S_1 T1_1 ... MODE_N S_N T1_N   set the odorant
 *                                          (STATS thermal|frozen; no output)
 *   sum REORG T V TOL N GAP_1 .. GAP_N     sum engine at N gaps; N lines
 *       "gap ln_f_total ln_f_elastic ln_f_assisted err_total err_elastic
 *        err_assisted ln_k_total ln_k_elastic ln_k_assisted assisted_zero"
 *   fft REORG T GAP_LO GAP_STEP N           time-domain engine on the grid;
 *       N lines "gap ln_f err trusted"
 *   voigt X SIGMA GAMMA                     ln of the Voigt profile
 *   budget TERMS                            cap the terms of a sum call
 *                                          (default 4e9; no output)
 * Numbers are printed with %.17g; -inf as "-inf".  A rejected request
 * prints one line "error: MESSAGE".
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>

#include "vg_fft.h"
#include "vg_multimode.h"

#define MAX_MODES 64
#define MAX_GAPS 4096
#define WORK_POINTS 4000000
#define WORK_TERMS 4e9
#define FFT_MAX (1u << 24)

typedef struct {
    vg_multimode_mode mode[MAX_MODES];
    vg_multimode_system sys;
    vg_multimode_work *w;
} dump_state;

/* Next number of the line, advancing *p; 0 if there is none. */
static int next_num(char **p, double *v)
{
    char *end;

    *v = strtod(*p, &end);
    if (end == *p)
        return 0;
    *p = end;
    return 1;
}

/* The five numbers that open a sum or fft request, the last a gap count
 * in [1, MAX_GAPS]; 0 on success. */
static int read_head(char **p, double v[5])
{
    for (int i = 0; i < 5; i++)
        if (!next_num(p, &v[i]))
            return -1;
    return v[4] >= 1 && v[4] <= MAX_GAPS ? 0 : -1;
}

static int do_modes(dump_state *d, char *p)
{
    char word[16];
    int used;
    double n;

    if (sscanf(p, "%15s%n", word, &used) != 1)
        return -1;
    p += used;
    d->sys.stats = strcmp(word, "frozen") == 0 ? VG_STATS_FROZEN : VG_STATS_THERMAL;
    if (!next_num(&p, &n) || n < 0 || n > MAX_MODES)
        return -1;
    d->sys.n_modes = (size_t)n;
    for (size_t i = 0; i < d->sys.n_modes; i++)
        if (!next_num(&p, &d->mode[i].mode) || !next_num(&p, &d->mode[i].huang_rhys)
            || !next_num(&p, &d->mode[i].lifetime_ps))
            return -1;
    return 0;
}

static void print_rates(double gap, const vg_multimode_rates *r)
{
    printf("%.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g %d\n", gap,
           r->ln_f_total, r->ln_f_elastic, r->ln_f_assisted, r->err_total, r->err_elastic,
           r->err_assisted, r->ln_k_total, r->ln_k_elastic, r->ln_k_assisted,
           r->assisted_zero);
}

static int do_sum(dump_state *d, char *p)
{
    static double gap[MAX_GAPS];
    static vg_multimode_rates out[MAX_GAPS];
    double v[5];
    vg_error err = {VG_OK, ""};

    if (read_head(&p, v) != 0)
        return -1;
    for (size_t i = 0; i < (size_t)v[4]; i++)
        if (!next_num(&p, &gap[i]))
            return -1;
    if (vg_multimode_eval(d->w, &d->sys, v[0], v[1], v[2], v[3], (size_t)v[4], gap, out,
                          &err) != VG_OK) {
        printf("error: %s\n", err.msg);
        return 0;
    }
    for (size_t i = 0; i < (size_t)v[4]; i++)
        print_rates(gap[i], &out[i]);
    return 0;
}

static int do_fft(dump_state *d, char *p)
{
    static vg_fft_point out[MAX_GAPS];
    double v[5];
    vg_fft_plan plan;
    vg_fft_work *fw = NULL;
    vg_error err = {VG_OK, ""};

    if (read_head(&p, v) != 0)
        return -1;
    if (vg_fft_plan_make(&d->sys, v[0], v[1], v[2], v[3], (size_t)v[4], FFT_MAX, &plan,
                         &err) != VG_OK
        || vg_fft_alloc(plan.n, &fw, &err) != VG_OK
        || vg_fft_eval(fw, &plan, &d->sys, out, &err) != VG_OK) {
        printf("error: %s\n", err.msg);
        vg_fft_free(fw);
        return 0;
    }
    for (size_t i = 0; i < (size_t)v[4]; i++)
        printf("%.17g %.17g %.17g %d\n", v[2] + v[3] * (double)i, out[i].ln_f, out[i].err,
               out[i].trusted);
    vg_fft_free(fw);
    return 0;
}

static int do_line(dump_state *d, char *line)
{
    double v[3];

    if (strncmp(line, "modes ", 6) == 0)
        return do_modes(d, line + 6);
    if (strncmp(line, "sum ", 4) == 0)
        return do_sum(d, line + 4);
    if (strncmp(line, "fft ", 4) == 0)
        return do_fft(d, line + 4);
    if (sscanf(line, "budget %lf", &v[0]) == 1) { /* a new workspace with that term cap */
        vg_error err = {VG_OK, ""};
        vg_multimode_free(d->w);
        d->w = NULL;
        if (vg_multimode_alloc(MAX_MODES, WORK_POINTS, v[0], &d->w, &err) != VG_OK) {
            fprintf(stderr, "multimode_dump: %s\n", err.msg);
            return -1;
        }
        return 0;
    }
    if (sscanf(line, "voigt %lf %lf %lf", &v[0], &v[1], &v[2]) == 3) {
        printf("%.17g\n", vg_multimode_ln_voigt(v[0], v[1], v[2]));
        return 0;
    }
    return -1;
}

int main(void)
{
    static char line[1 << 17];
    static dump_state d;
    vg_error err = {VG_OK, ""};
    int rc = 0;

    gsl_set_error_handler_off();
    d.sys.modes = d.mode;
    if (vg_multimode_alloc(MAX_MODES, WORK_POINTS, WORK_TERMS, &d.w, &err) != VG_OK) {
        fprintf(stderr, "multimode_dump: %s\n", err.msg);
        return 5;
    }
    while (rc == 0 && fgets(line, sizeof line, stdin)) {
        if (line[0] == '\n' || line[0] == '#')
            continue;
        if (do_line(&d, line) != 0) {
            fprintf(stderr, "multimode_dump: cannot read request: %.80s\n", line);
            rc = 2;
        }
        fflush(stdout);
    }
    vg_multimode_free(d.w);
    return rc;
}
