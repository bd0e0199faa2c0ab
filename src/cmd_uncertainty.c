/*
 * The uncertainty command: what the priors of [uncertainty] do to the
 * predictions.  Which analysis runs follows from the grid:
 *
 *   no axis      Sobol' indices of [uncertainty] metric over the priors
 *                (and, with [feasibility], the probability that every
 *                condition holds); a table or JSON on stdout, and
 *                uncertainty.txt and uncertainty.json in the output directory;
 *   two axes     with [feasibility]: the probability map over the x-y grid,
 *                probability.nc and/or probability.csv ([output] data).
 *
 * Every file is written under a temporary name in the output directory,
 * fsynced, and renamed only once all of them are complete, so a failure
 * leaves no new file under a final name.
 */
#define _POSIX_C_SOURCE 200809L /* open_memstream, mkstemp, fchmod, fsync */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <glib.h>

#include "cmd.h"
#include "fmt.h"
#include "draw.h"
#include "fsutil.h"
#include "vg_barchart.h"
#include "vg_config.h"
#include "vg_figure.h"
#include "vg_grid.h"
#include "vg_uncertainty.h"

#define MAX_FILES 4
#define PREDICTION_NOTE "model prediction (golden rule, harmonic mode, classical environment)"

/* A file written under a temporary name, renamed by commit_files. */
typedef struct {
    char *path; /* final name (owned) */
    char *tmp;  /* temporary name, DIR/.NAME.XXXXXX (owned) */
    char *old;  /* DIR/.NAME.earlier: the file at the final name, kept while
                   renaming (owned) */
    int has_old;
} staged;

typedef struct {
    staged f[MAX_FILES];
    size_t n;
} staged_set;

/* One run of the command: what every part reads. */
typedef struct {
    const vg_cmd_args *a;
    vg_config cfg;
    vg_unc_space sp;
    vg_unc_plane pl;
    const char *dir;
} unc_run;

/* ------------------------------------------------------------ files --- */

static void free_staged(staged *f)
{
    free(f->path);
    free(f->tmp);
    free(f->old);
}

static void free_files(staged_set *ss)
{
    for (size_t i = 0; i < ss->n; i++)
        free_staged(&ss->f[i]);
    ss->n = 0;
}

static void drop_files(staged_set *ss)
{
    for (size_t i = 0; i < ss->n; i++)
        unlink(ss->f[i].tmp);
    free_files(ss);
}

/* A new temporary file for DIR/name, open on *fd (mode of a plain new
 * file), added to ss. */
static vg_status stage_open(staged_set *ss, const char *dir, const char *name, int *fd,
                            vg_error *err)
{
    size_t len = strlen(dir) + strlen(name) + 16;
    staged f = {malloc(len), malloc(len), malloc(len), 0};

    if (!f.path || !f.tmp || !f.old) {
        free_staged(&f);
        return vg_error_set(err, VG_ENOMEM, "out of memory");
    }
    snprintf(f.path, len, "%s/%s", dir, name);
    snprintf(f.old, len, "%s/.%s.earlier", dir, name);
    snprintf(f.tmp, len, "%s/.%s.XXXXXX", dir, name);
    *fd = mkstemp(f.tmp);
    if (*fd < 0 || fchmod(*fd, vg_fs_new_file_mode()) != 0) {
        int e = errno;

        if (*fd >= 0) {
            close(*fd);
            unlink(f.tmp);
        }
        vg_error_set(err, VG_EIO, "cannot write '%s': %s", f.path, strerror(e));
        free_staged(&f);
        return VG_EIO;
    }
    ss->f[ss->n++] = f;
    return VG_OK;
}

/* fsync and close; 0 or the first errno. */
static int sync_close(int fd)
{
    int e = fsync(fd) != 0 ? errno : 0;

    if (close(fd) != 0 && e == 0)
        e = errno;
    return e;
}

/* DIR/name holding len bytes of text, staged. */
static vg_status stage_text(staged_set *ss, const char *dir, const char *name,
                            const char *text, size_t len, vg_error *err)
{
    int fd, e = 0;
    vg_status st = stage_open(ss, dir, name, &fd, err);

    if (st != VG_OK)
        return st;
    while (len > 0 && e == 0) {
        ssize_t w = write(fd, text, len);

        if (w < 0 && errno != EINTR)
            e = errno;
        if (w > 0) {
            text += w;
            len -= (size_t)w;
        }
    }
    if (e == 0)
        e = sync_close(fd);
    else
        close(fd);
    if (e != 0)
        return vg_error_set(err, VG_EIO, "cannot write '%s': %s", ss->f[ss->n - 1].path,
                            strerror(e));
    return VG_OK;
}

/* Rename every staged file to its final name, all or nothing: a final
 * name taken by a directory or a special file fails before any rename, and
 * should a rename fail after others succeeded, their earlier files (kept
 * by hard links) are put back. */
static vg_status commit_files(staged_set *ss, int quiet, vg_error *err)
{
    struct stat sb;
    size_t i, done = 0;
    vg_status st = VG_OK;

    for (i = 0; i < ss->n && st == VG_OK; i++)
        if (lstat(ss->f[i].path, &sb) == 0 && !S_ISREG(sb.st_mode) && !S_ISLNK(sb.st_mode))
            st = vg_error_set(err, VG_EIO, "cannot write '%s': %s", ss->f[i].path,
                              S_ISDIR(sb.st_mode) ? "is a directory" : "not a regular file");
    for (i = 0; i < ss->n && st == VG_OK; i++) {
        unlink(ss->f[i].old);
        ss->f[i].has_old = link(ss->f[i].path, ss->f[i].old) == 0;
    }
    for (i = 0; i < ss->n && st == VG_OK; i++) {
        if (rename(ss->f[i].tmp, ss->f[i].path) != 0)
            st = vg_error_set(err, VG_EIO, "cannot write '%s': %s", ss->f[i].path,
                              strerror(errno));
        else
            done++;
    }
    for (i = 0; i < ss->n; i++) {
        staged *f = &ss->f[i];

        if (st != VG_OK && i < done)
            (void)(f->has_old ? rename(f->old, f->path) : unlink(f->path));
        else if (f->has_old)
            unlink(f->old);
        if (st != VG_OK && i >= done)
            unlink(f->tmp);
        else if (st == VG_OK && !quiet)
            fprintf(stderr, "vibrogate: wrote %s\n", f->path);
    }
    free_files(ss);
    return st;
}

/* Text produced by print into a memory stream, then staged as DIR/name. */
typedef void (*print_fn)(FILE *fp, const void *ctx);

static vg_status stage_printed(staged_set *ss, const char *dir, const char *name,
                               print_fn print, const void *ctx, vg_error *err)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *fp = open_memstream(&buf, &len);
    vg_status st;

    if (!fp)
        return vg_error_set(err, VG_ENOMEM, "out of memory for '%s'", name);
    print(fp, ctx);
    if (ferror(fp) | fclose(fp)) {
        free(buf);
        return vg_error_set(err, VG_ENOMEM, "out of memory for '%s'", name);
    }
    st = stage_text(ss, dir, name, buf, len, err);
    free(buf);
    return st;
}

/* ------------------------------------------------------------- text --- */

static const char *unit_of(vg_param_id p)
{
    const char *u = vg_param_get(p)->unit;

    return strcmp(u, "1") == 0 ? "" : u;
}

static const char *kind_name(vg_prior_kind k)
{
    static const char *names[] = {"uniform", "loguniform", "normal", "lognormal"};

    return (unsigned)k < 4 ? names[k] : "?";
}

/* "lognormal, median 40 meV, sigma 0.5", "uniform 100 .. 300 meV". */
static void prior_text(const vg_prior *pr, vg_param_id p, char *buf, size_t len)
{
    const char *u = unit_of(p), *sp = u[0] ? " " : "";

    switch (pr->kind) {
    case VG_PRIOR_UNIFORM:
    case VG_PRIOR_LOGUNIFORM:
        snprintf(buf, len, "%s %.6g .. %.6g%s%s", kind_name(pr->kind), pr->a, pr->b, sp, u);
        break;
    case VG_PRIOR_NORMAL:
        snprintf(buf, len, "normal, mean %.6g%s%s, sd %.6g%s%s", pr->a, sp, u, pr->b, sp, u);
        break;
    case VG_PRIOR_LOGNORMAL:
        snprintf(buf, len, "lognormal, median %.6g%s%s, sigma %.6g", pr->a, sp, u, pr->b);
        break;
    }
}

/* The results of the Sobol' analysis, for printing. */
typedef struct {
    const unc_run *r;
    vg_unc_sobol_out so;
    int has_prob;           /* [feasibility] given: prob and se are set */
    double prob, se;
} sobol_report;

static const char *metric_name(const vg_config *cfg)
{
    return vg_metric_get(cfg->uncertainty.metric)->name;
}

static void print_interval(FILE *fp, double v, double lo, double hi)
{
    fprintf(fp, "  %7.4f [%7.4f, %7.4f]", v, lo, hi);
}

static void print_table(FILE *fp, const void *ctx)
{
    const sobol_report *rep = ctx;
    const vg_config *cfg = &rep->r->cfg;
    const vg_uncertainty *u = &cfg->uncertainty;
    const vg_unc_space *sp = &rep->r->sp;

    fprintf(fp, "Sobol indices of %s over %zu uncertain parameter%s (%s)\n", metric_name(cfg),
            sp->k, sp->k == 1 ? "" : "s", cfg->path);
    fprintf(fp, "  %zu base samples, %zu model runs; %g%% bootstrap intervals from %zu "
            "resamples, seed %lu\n", u->samples, rep->so.runs, 100.0 * u->level, u->bootstrap,
            u->seed);
    fprintf(fp, "  %s over the priors: mean %.6g, standard deviation %.6g\n\n",
            metric_name(cfg), rep->so.mean, rep->so.sd);
    fprintf(fp, "  %-20s %-42s   %-27s %s\n", "parameter", "prior", "S1 (first order)",
            "ST (total effect)");
    for (size_t i = 0; i < sp->k; i++) {
        char prior[128];
        const vg_sobol_result *x = &rep->so.idx[i];

        prior_text(&sp->prior[i], sp->id[i], prior, sizeof prior);
        fprintf(fp, "  %-20s %-42s", vg_param_get(sp->id[i])->key, prior);
        print_interval(fp, x->S1, x->S1_lo, x->S1_hi);
        print_interval(fp, x->ST, x->ST_lo, x->ST_hi);
        fputc('\n', fp);
    }
    fprintf(fp, "\n  priors are truncated to the accepted range of each parameter\n");
    if (rep->has_prob)
        fprintf(fp, "  probability that every [feasibility] condition holds: %.6f "
                "(standard error %.6f, %zu draws)\n", rep->prob, rep->se, u->samples);
    fprintf(fp, "%s\n", PREDICTION_NOTE);
}

/* A JSON string: quotes, backslashes and control characters escaped
 * (RFC 8259, section 7). */
static void json_interval(FILE *fp, const char *name, double v, double lo, double hi)
{
    fprintf(fp, ", \"%s\": %.17g, \"%s_interval\": [%.17g, %.17g]", name, v, name, lo, hi);
}

static void json_parameter(FILE *fp, const vg_unc_space *sp, const vg_sobol_result *x,
                           size_t i)
{
    fprintf(fp, "    {\"name\": ");
    vg_fmt_json_string(fp, vg_param_get(sp->id[i])->key);
    fprintf(fp, ", \"units\": ");
    vg_fmt_json_string(fp, vg_param_get(sp->id[i])->unit);
    fprintf(fp, ", \"prior\": {\"kind\": \"%s\", \"a\": %.17g, \"b\": %.17g, "
            "\"truncated_to\": [%.17g, %.17g]}", kind_name(sp->prior[i].kind),
            sp->prior[i].a, sp->prior[i].b, sp->lo[i], sp->hi[i]);
    json_interval(fp, "S1", x->S1, x->S1_lo, x->S1_hi);
    json_interval(fp, "ST", x->ST, x->ST_lo, x->ST_hi);
    fprintf(fp, "}%s\n", i + 1 < sp->k ? "," : "");
}

static void print_json(FILE *fp, const void *ctx)
{
    const sobol_report *rep = ctx;
    const vg_config *cfg = &rep->r->cfg;
    const vg_uncertainty *u = &cfg->uncertainty;

    fprintf(fp, "{\n  \"config\": ");
    vg_fmt_json_string(fp, cfg->path);
    fprintf(fp, ",\n  \"metric\": ");
    vg_fmt_json_string(fp, metric_name(cfg));
    fprintf(fp, ",\n  \"samples\": %zu,\n  \"model_runs\": %zu,\n  \"bootstrap\": %zu,\n"
            "  \"level\": %.17g,\n  \"seed\": %lu,\n  \"metric_mean\": %.17g,\n"
            "  \"metric_sd\": %.17g,\n", u->samples, rep->so.runs, u->bootstrap, u->level,
            u->seed, rep->so.mean, rep->so.sd);
    if (rep->has_prob)
        fprintf(fp, "  \"feasible_probability\": %.17g,\n  \"feasible_probability_"
                "standard_error\": %.17g,\n", rep->prob, rep->se);
    fprintf(fp, "  \"parameters\": [\n");
    for (size_t i = 0; i < rep->r->sp.k; i++)
        json_parameter(fp, &rep->r->sp, &rep->so.idx[i], i);
    fprintf(fp, "  ],\n  \"note\": \"%s\"\n}\n", PREDICTION_NOTE);
}

/* ------------------------------------------------------------ Sobol --- */

/* The probability that every condition holds in each cell of r->pl, over
 * N = samples draws made once from the seed (vg_unc_draws). */
static vg_status estimate(const unc_run *r, double *prob, double *se, vg_error *err)
{
    size_t n = r->cfg.uncertainty.samples;
    double *draws = malloc(n * r->sp.k * sizeof *draws);
    vg_unc_metric_ctx mc = {&r->cfg, VG_M_FEASIBLE};
    vg_unc_model m = vg_unc_metric_model(&mc);
    vg_status st;

    if (!draws)
        return vg_error_set(err, VG_ENOMEM, "out of memory for %zu draws", n);
    st = vg_unc_draws(&r->sp, n, r->cfg.uncertainty.seed, draws, err);
    if (st == VG_OK)
        st = vg_unc_probability(&r->sp, &r->pl, &m, n, draws, r->a->threads, prob, se, err);
    free(draws);
    return st;
}

/* sobol-METRIC.png/pdf/svg: S1 and ST with their intervals, one row per
 * uncertain parameter, largest total effect first. */
static vg_status sobol_chart(const unc_run *r, const sobol_report *rep, vg_error *err)
{
    const vg_config *cfg = &r->cfg;
    vg_bar_item items[VG_NPARAM];
    vg_barchart bc;
    vg_figure_meta meta;
    char stamp[32], software[64], stem[4200], title[160], sub[256];
    char *esc = g_markup_escape_text(cfg->title && cfg->title[0] ? cfg->title : "vibrogate", -1);
    vg_status st;

    memset(items, 0, sizeof items);
    for (size_t i = 0; i < r->sp.k; i++) {
        const vg_sobol_result *x = &rep->so.idx[i];
        vg_bar_item it = {vg_param_get(r->sp.id[i])->key, {x->S1, x->ST}, {1, 1}, {1, 1},
                          {x->S1_lo, x->ST_lo}, {x->S1_hi, x->ST_hi}};

        items[i] = it;
    }
    snprintf(title, sizeof title, "%s: Sobol indices of %s", esc, metric_name(cfg));
    g_free(esc);
    snprintf(sub, sizeof sub, "%zu base samples, %zu model runs; bars: %g%% bootstrap "
             "intervals;  model prediction", cfg->uncertainty.samples, rep->so.runs,
             100.0 * cfg->uncertainty.level);
    memset(&bc, 0, sizeof bc);
    bc.title = title;
    bc.subtitle = sub;
    bc.plain_title = "vibrogate: Sobol indices";
    bc.axis_label = "Sobol index";
    bc.note = "priors truncated to the accepted range of each parameter";
    bc.nseries = 2;
    bc.series_name[0] = "first order <i>S</i><sub>1</sub>";
    bc.series_name[1] = "total effect <i>S</i><sub>T</sub>";
    bc.nitems = r->sp.k;
    bc.items = items;
    bc.order = VG_BAR_ORDER_VALUE;
    bc.rank_series = 1;
    bc.show_values = 1;
    bc.range_hi = 1.0;
    vg_draw_meta(&meta, stamp, software, r->a->quiet);
    snprintf(stem, sizeof stem, "%s/sobol-%s", r->dir, metric_name(cfg));
    st = vg_barchart_write(&bc, cfg, cfg->fig.formats, stem, &meta, err);
    return st;
}

static vg_status sobol_outputs(const unc_run *r, const sobol_report *rep, vg_error *err)
{
    staged_set ss = {.n = 0};
    vg_status st = vg_fs_make_dirs(r->dir, err);

    if (st == VG_OK)
        st = stage_printed(&ss, r->dir, "uncertainty.txt", print_table, rep, err);
    if (st == VG_OK)
        st = stage_printed(&ss, r->dir, "uncertainty.json", print_json, rep, err);
    if (st != VG_OK) {
        drop_files(&ss);
        return st;
    }
    st = commit_files(&ss, r->a->quiet, err);
    if (st == VG_OK && r->cfg.fig.formats)
        st = sobol_chart(r, rep, err);
    return st;
}

static vg_status run_sobol(unc_run *r, vg_error *err)
{
    const vg_uncertainty *u = &r->cfg.uncertainty;
    vg_unc_metric_ctx mc = {&r->cfg, u->metric};
    vg_unc_model m = vg_unc_metric_model(&mc);
    vg_unc_sobol_opts o = {u->samples, u->bootstrap, u->seed, u->level, r->a->threads};
    sobol_report rep = {.r = r};
    vg_status st = vg_unc_sobol(&r->sp, &m, &o, &rep.so, err);

    if (st != VG_OK) {
        vg_error_prefix(err, "%s: Sobol indices of '%s': ", r->cfg.path, metric_name(&r->cfg));
        return st;
    }
    rep.has_prob = r->cfg.feasibility.n > 0;
    if (rep.has_prob && (st = estimate(r, &rep.prob, &rep.se, err)) != VG_OK) {
        vg_error_prefix(err, "%s: probability of [feasibility]: ", r->cfg.path);
        return st;
    }
    st = sobol_outputs(r, &rep, err);
    if (st == VG_OK)
        (r->a->json ? print_json : print_table)(stdout, &rep);
    return st;
}

/* ------------------------------------------------------ probability --- */

/* The NetCDF file's sticky status: the first failure and where. */
typedef struct {
    int ncid, rc;
    const char *what;
} ncw;

static void nc_did(ncw *w, int rc, const char *what)
{
    if (w->rc == NC_NOERR && rc != NC_NOERR) {
        w->rc = rc;
        w->what = what;
    }
}

static void nc_text(ncw *w, int varid, const char *name, const char *text)
{
    nc_did(w, nc_put_att_text(w->ncid, varid, name, strlen(text), text), name);
}

/* The coordinate variable of parameter p: over dimension *dimid, or 0-d. */
static int nc_coordinate(ncw *w, const vg_config *cfg, vg_param_id p, const int *dimid)
{
    const vg_param_info *pi = vg_param_get(p);
    const vg_param *q = &cfg->param[p];
    int varid = -1;

    nc_did(w, nc_def_var(w->ncid, pi->key, NC_DOUBLE, dimid ? 1 : 0, dimid, &varid), pi->key);
    nc_text(w, varid, "units", pi->unit);
    nc_text(w, varid, "long_name", pi->long_name);
    if (q->user_unit[0])
        nc_text(w, varid, "input_units", q->user_unit);
    if (q->log_spacing)
        nc_text(w, varid, "spacing", "logarithmic");
    return varid;
}

/* Priors and conditions as one line each, for the global attributes. */
static void describe_setup(const unc_run *r, char *priors, size_t plen, char *conds,
                           size_t clen)
{
    size_t pu = 0, cu = 0;

    priors[0] = conds[0] = '\0';
    for (size_t i = 0; i < r->sp.k && pu < plen; i++) {
        char t[128];

        prior_text(&r->sp.prior[i], r->sp.id[i], t, sizeof t);
        pu += (size_t)snprintf(priors + pu, plen - pu, "%s%s: %s (truncated to %g .. %g%s%s)",
                               i ? "; " : "", vg_param_get(r->sp.id[i])->key, t, r->sp.lo[i],
                               r->sp.hi[i], unit_of(r->sp.id[i])[0] ? " " : "",
                               unit_of(r->sp.id[i]));
    }
    for (size_t i = 0; i < r->cfg.feasibility.n && cu < clen; i++)
        cu += (size_t)snprintf(conds + cu, clen - cu, "%s%s", i ? "; " : "",
                               r->cfg.feasibility.r[i].text);
}

static void nc_globals(ncw *w, const unc_run *r)
{
    const vg_config *cfg = &r->cfg;
    char priors[2048], conds[2304];
    unsigned long long draws = cfg->uncertainty.samples, seed = cfg->uncertainty.seed;

    describe_setup(r, priors, sizeof priors, conds, sizeof conds);
    nc_text(w, NC_GLOBAL, "Conventions", "CF-1.8");
    nc_text(w, NC_GLOBAL, "title", cfg->title && cfg->title[0] ? cfg->title
                                                               : "vibrogate probability map");
    nc_text(w, NC_GLOBAL, "source", "vibrogate " VG_VERSION);
    nc_text(w, NC_GLOBAL, "history", r->a->history ? r->a->history : "");
    nc_text(w, NC_GLOBAL, "comment", "Probability over the priors of [uncertainty] that every "
            "[feasibility] condition holds, by plain Monte Carlo with the same draws in every "
            "cell. All values are model predictions (nonadiabatic golden-rule rates, one "
            "harmonic mode, classical environment), not measurements.");
    nc_text(w, NC_GLOBAL, "priors", priors);
    nc_text(w, NC_GLOBAL, "feasibility_conditions", conds);
    nc_did(w, nc_put_att_ulonglong(w->ncid, NC_GLOBAL, "monte_carlo_draws", NC_UINT64, 1,
                                   &draws), "monte_carlo_draws");
    nc_did(w, nc_put_att_ulonglong(w->ncid, NC_GLOBAL, "random_seed", NC_UINT64, 1, &seed),
           "random_seed");
    nc_text(w, NC_GLOBAL, "random_generator", "gsl_rng_mt19937, gsl_rng_uniform_pos");
    nc_text(w, NC_GLOBAL, "mode_statistics", cfg->stats == VG_STATS_FROZEN ? "frozen"
                                                                             : "thermal");
    nc_did(w, nc_put_att_double(w->ncid, NC_GLOBAL, "tolerance", NC_DOUBLE, 1,
                                &cfg->tolerance), "tolerance");
    if (cfg->path)
        nc_text(w, NC_GLOBAL, "config_file", cfg->path);
    nc_text(w, NC_GLOBAL, "config_text", cfg->text ? cfg->text : "");
    if (cfg->overrides && cfg->overrides[0])
        nc_text(w, NC_GLOBAL, "config_overrides", cfg->overrides);
}

/* Keys of the 0-d coordinates (parameters neither axis nor uncertain). */
static int is_fixed(const unc_run *r, vg_param_id p)
{
    return r->cfg.param[p].n == 1 && !r->cfg.uncertainty.has[p];
}

static void nc_define(ncw *w, const unc_run *r, int coord[VG_NPARAM], int data[2])
{
    static const char *names[2] = {"feasible_probability", "feasible_probability_standard_error"};
    static const char *longs[2] = {
        "probability over the priors that every feasibility condition holds",
        "binomial standard error of the Monte Carlo estimate of feasible_probability"};
    int dim[2] = {-1, -1};
    char coords[VG_NPARAM * 32] = "";
    size_t used = 0;

    for (size_t a = 0; a < r->pl.naxes; a++) {
        const char *key = vg_param_get(r->pl.p[a])->key;

        nc_did(w, nc_def_dim(w->ncid, key, r->pl.n[a], &dim[a]), key);
        coord[r->pl.p[a]] = nc_coordinate(w, &r->cfg, r->pl.p[a], &dim[a]);
    }
    for (int p = 0; p < VG_NPARAM; p++)
        if (is_fixed(r, (vg_param_id)p)) {
            coord[p] = nc_coordinate(w, &r->cfg, (vg_param_id)p, NULL);
            used += (size_t)snprintf(coords + used, sizeof coords - used, "%s%s",
                                     used ? " " : "", vg_param_get((vg_param_id)p)->key);
        }
    for (int k = 0; k < 2; k++) {
        nc_did(w, nc_def_var(w->ncid, names[k], NC_DOUBLE, (int)r->pl.naxes, dim, &data[k]),
               names[k]);
        nc_text(w, data[k], "units", "1");
        nc_text(w, data[k], "long_name", longs[k]);
        if (coords[0])
            nc_text(w, data[k], "coordinates", coords);
    }
    nc_text(w, data[0], "ancillary_variables", names[1]);
    nc_did(w, nc_put_att_double(w->ncid, data[0], "valid_range", NC_DOUBLE, 2,
                                (const double[2]){0.0, 1.0}), "valid_range");
    nc_globals(w, r);
}

static vg_status stage_netcdf(staged_set *ss, const unc_run *r, const double *prob,
                              const double *se, vg_error *err)
{
    int fd, coord[VG_NPARAM], data[2] = {-1, -1}, e;
    ncw w = {-1, NC_NOERR, NULL};
    vg_status st = stage_open(ss, r->dir, "probability.nc", &fd, err);
    const char *tmp;

    if (st != VG_OK)
        return st;
    close(fd); /* NetCDF opens the file by name */
    tmp = ss->f[ss->n - 1].tmp;
    nc_did(&w, nc_create(tmp, NC_NETCDF4 | NC_CLOBBER, &w.ncid), NULL);
    if (w.rc == NC_NOERR) {
        nc_define(&w, r, coord, data);
        nc_did(&w, nc_enddef(w.ncid), NULL);
        for (int p = 0; p < VG_NPARAM; p++)
            if ((r->cfg.param[p].n > 1 || is_fixed(r, (vg_param_id)p)) && w.rc == NC_NOERR)
                nc_did(&w, nc_put_var_double(w.ncid, coord[p], r->cfg.param[p].v),
                       vg_param_get((vg_param_id)p)->key);
        nc_did(&w, nc_put_var_double(w.ncid, data[0], prob), "feasible_probability");
        nc_did(&w, nc_put_var_double(w.ncid, data[1], se), "feasible_probability_standard_error");
        /* After a failed call HDF5's state may be half torn down and closing
         * or aborting can crash in it (src/out_netcdf.c): the handle is then
         * left alone until the process exits with the error. */
        if (w.rc == NC_NOERR)
            nc_did(&w, nc_close(w.ncid), NULL);
    }
    if (w.rc != NC_NOERR)
        return vg_error_set(err, VG_EIO, "cannot write '%s': %s%s%s%s", ss->f[ss->n - 1].path,
                            nc_strerror(w.rc), w.what ? " (at '" : "", w.what ? w.what : "",
                            w.what ? "')" : "");
    fd = open(tmp, O_RDONLY); /* NetCDF does not fsync */
    e = fd < 0 ? errno : sync_close(fd);
    if (e != 0)
        return vg_error_set(err, VG_EIO, "cannot write '%s': %s", ss->f[ss->n - 1].path,
                            strerror(e));
    return VG_OK;
}

typedef struct {
    const unc_run *r;
    const double *prob, *se;
} map_data;

/* Columns: every parameter without a prior, then the probability and its
 * standard error; one row per cell in grid order; "%.17g". */
static void print_csv(FILE *fp, const void *ctx)
{
    const map_data *md = ctx;
    const unc_run *r = md->r;
    size_t ncell = r->pl.n[0] * r->pl.n[1];

    for (int p = 0; p < VG_NPARAM; p++)
        if (!r->cfg.uncertainty.has[p])
            fprintf(fp, "%s,", vg_param_get((vg_param_id)p)->csv_column);
    fprintf(fp, "feasible_probability,feasible_probability_standard_error\n");
    for (size_t c = 0; c < ncell; c++) {
        size_t idx[2] = {c / r->pl.n[1], c % r->pl.n[1]};

        for (int p = 0; p < VG_NPARAM; p++) {
            double v = r->sp.base[p];

            if (r->cfg.uncertainty.has[p])
                continue;
            for (size_t a = 0; a < r->pl.naxes; a++)
                if (r->pl.p[a] == (vg_param_id)p)
                    v = r->pl.v[a][idx[a]];
            fprintf(fp, "%.17g,", v);
        }
        fprintf(fp, "%.17g,%.17g\n", md->prob[c], md->se[c]);
    }
}

static void print_map_summary(const map_data *md, int json)
{
    const unc_run *r = md->r;
    size_t ncell = r->pl.n[0] * r->pl.n[1];
    double lo = 1.0, hi = 0.0;

    for (size_t c = 0; c < ncell; c++) {
        lo = fmin(lo, md->prob[c]);
        hi = fmax(hi, md->prob[c]);
    }
    if (json) {
        printf("{\n  \"config\": ");
        vg_fmt_json_string(stdout, r->cfg.path);
        printf(",\n  \"cells\": %zu,\n  \"draws\": %zu,\n  \"seed\": %lu,\n"
               "  \"probability_min\": %.17g,\n  \"probability_max\": %.17g,\n"
               "  \"note\": \"%s\"\n}\n", ncell, r->cfg.uncertainty.samples,
               r->cfg.uncertainty.seed, lo, hi, PREDICTION_NOTE);
        return;
    }
    printf("probability that every [feasibility] condition holds (%s)\n", r->cfg.path);
    printf("  %zu x %zu cells (%s x %s), %zu draws of %zu uncertain parameter%s each, seed %lu\n",
           r->pl.n[0], r->pl.n[1], vg_param_get(r->pl.p[0])->key,
           vg_param_get(r->pl.p[1])->key, r->cfg.uncertainty.samples, r->sp.k,
           r->sp.k == 1 ? "" : "s", r->cfg.uncertainty.seed);
    printf("  probability from %.6f to %.6f over the map\n%s\n", lo, hi, PREDICTION_NOTE);
}

/* map-feasible_probability.EXT from the same numbers as the data files. */
static vg_status map_figure(const unc_run *r, const map_data *md, vg_error *err)
{
    static const vg_field_spec spec = {
        "feasible_probability",
        "probability that every feasibility condition holds",
        "over the priors of [uncertainty], by Monte Carlo", 0.0, 1.0};
    vg_figure_meta meta;
    char stamp[32], software[64];
    vg_grid g;

    vg_grid_init(&g, &r->cfg);
    vg_draw_meta(&meta, stamp, software, r->a->quiet);
    return vg_figure_field(&r->cfg, &g, md->prob, &spec, r->dir, &meta, err);
}

static vg_status map_outputs(const unc_run *r, const map_data *md, vg_error *err)
{
    staged_set ss = {.n = 0};
    vg_status st = vg_fs_make_dirs(r->dir, err);

    if (st == VG_OK && (r->cfg.formats & VG_FMT_NETCDF))
        st = stage_netcdf(&ss, r, md->prob, md->se, err);
    if (st == VG_OK && (r->cfg.formats & VG_FMT_CSV))
        st = stage_printed(&ss, r->dir, "probability.csv", print_csv, md, err);
    if (st != VG_OK) {
        drop_files(&ss);
        return st;
    }
    st = commit_files(&ss, r->a->quiet, err);
    if (st == VG_OK && r->cfg.fig.formats)
        st = map_figure(r, md, err);
    if (st == VG_OK)
        print_map_summary(md, r->a->json);
    return st;
}

static vg_status run_map(unc_run *r, vg_error *err)
{
    size_t ncell = r->pl.n[0] * r->pl.n[1];
    double *prob = malloc(ncell * sizeof *prob), *se = malloc(ncell * sizeof *se);
    map_data md = {r, prob, se};
    vg_status st = VG_OK;

    if (!prob || !se)
        st = vg_error_set(err, VG_ENOMEM, "out of memory for a probability map of %zu cells",
                          ncell);
    if (st == VG_OK && (st = estimate(r, prob, se, err)) != VG_OK)
        vg_error_prefix(err, "%s: probability map: ", r->cfg.path);
    if (st == VG_OK)
        st = map_outputs(r, &md, err);
    free(prob);
    free(se);
    return st;
}

/* ---------------------------------------------------------- command --- */

static vg_status pick_analysis(unc_run *r, vg_error *err)
{
    vg_status st = vg_unc_space_init(&r->sp, &r->cfg, err);

    if (st == VG_OK)
        st = vg_unc_plane_from_config(&r->pl, &r->cfg, err);
    if (st != VG_OK || r->pl.naxes == 0)
        return st;
    if (r->cfg.feasibility.n == 0)
        return vg_error_set(err, VG_ECONFIG, "%s: with axes in [parameters], 'uncertainty' "
                            "draws the probability map, which needs 'require' conditions in "
                            "[feasibility]; for Sobol indices make every parameter without a "
                            "prior a single value", r->cfg.path);
    if (r->pl.naxes != 2)
        return vg_error_set(err, VG_ECONFIG, "%s: the probability map needs exactly two axes "
                            "in [parameters] (its x and y; got only '%s')", r->cfg.path,
                            vg_param_get(r->pl.p[0])->key);
    return VG_OK;
}

vg_status vg_cmd_uncertainty(const vg_cmd_args *a, vg_error *err)
{
    unc_run r = {.a = a};
    vg_status st = vg_config_load(&r.cfg, a->config, a->nset, a->sets, err);

    if (st != VG_OK)
        return st;
    r.dir = a->out_dir ? a->out_dir : r.cfg.out_dir;
    st = vg_config_refuse_odorants(&r.cfg, "uncertainty", err);
    if (st == VG_OK)
        st = pick_analysis(&r, err);
    if (st == VG_OK)
        st = r.pl.naxes == 0 ? run_sobol(&r, err) : run_map(&r, err);
    vg_config_free(&r.cfg);
    return st;
}
