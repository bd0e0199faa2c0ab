/*
 * summary.json and summary.txt next to the data of a sweep with
 * [feasibility] or [validity] criteria: the conditions, the feasible
 * fraction of the grid, the feasible interval along each axis and the most
 * robust feasible point (vg_window); where the model's validity criteria
 * were evaluated, how much of the grid (and of the window) they accept and
 * how often each one fails.  Read back from the committed sweep.nc, so the
 * summary comes from the same numbers as the data and the maps, resumed run
 * or not.
 */
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cmd.h"
#include "fsutil.h"
#include "vg_dataset.h"
#include "vg_validity.h"
#include "vg_window.h"

/* What the valid and failed_criteria metrics say over the grid. */
typedef struct {
    unsigned enabled;                /* criteria evaluated (VG_VALID_* mask) */
    size_t valid;                    /* points where every one holds */
    size_t fails[VG_VALID_NCRIT];    /* points where criterion i fails */
    size_t feasible_valid;           /* feasible points that are valid */
} valid_counts;

typedef struct {
    char *s;
    size_t n, cap;
    int failed;
} text;

static void put(text *t, const char *fmt, ...)
{
    va_list ap;
    int need;

    if (t->failed)
        return;
    va_start(ap, fmt);
    need = vsnprintf(t->s ? t->s + t->n : NULL, t->s ? t->cap - t->n : 0, fmt, ap);
    va_end(ap);
    if (need < 0) {
        t->failed = 1;
        return;
    }
    if (t->n + (size_t)need + 1 > t->cap) {
        size_t cap = 2 * (t->n + (size_t)need + 1) + 1024;
        char *s = realloc(t->s, cap);
        if (!s) {
            t->failed = 1;
            return;
        }
        t->s = s;
        t->cap = cap;
        va_start(ap, fmt);
        vsnprintf(t->s + t->n, t->cap - t->n, fmt, ap);
        va_end(ap);
    }
    t->n += (size_t)need;
}

/* A JSON string body: quotes, backslashes and control characters escaped. */
static void put_json_string(text *t, const char *s)
{
    put(t, "\"");
    for (; *s; s++) {
        unsigned char c = (unsigned char)*s;
        if (c == '"' || c == '\\')
            put(t, "\\%c", c);
        else if (c < 0x20)
            put(t, "\\u%04x", c);
        else
            put(t, "%c", c);
    }
    put(t, "\"");
}

static void json_validity(text *t, const vg_dataset *ds, const vg_window *w,
                          const valid_counts *vc)
{
    size_t n = ds->grid.npoints;
    int first = 1;

    put(t, "  \"validity\": {\"criteria\": [");
    for (int i = 0; i < VG_VALID_NCRIT; i++)
        if (vc->enabled & (1u << i)) {
            put(t, "%s\"%s\"", first ? "" : ", ", vg_valid_name(i));
            first = 0;
        }
    put(t, "], \"valid_points\": %zu, \"fraction_valid\": %.17g, \"fails\": {", vc->valid,
        (double)vc->valid / (double)n);
    first = 1;
    for (int i = 0; i < VG_VALID_NCRIT; i++)
        if (vc->enabled & (1u << i)) {
            put(t, "%s\"%s\": %zu", first ? "" : ", ", vg_valid_name(i), vc->fails[i]);
            first = 0;
        }
    put(t, "}");
    if (w)
        put(t, ", \"feasible_and_valid\": %zu", vc->feasible_valid);
    put(t, "},\n");
}

static void json_summary(text *t, const vg_dataset *ds, const vg_window *w,
                         const valid_counts *vc)
{
    const vg_config *cfg = &ds->cfg;
    const vg_grid *g = &ds->grid;

    if (!w) { /* [validity] alone */
        put(t, "{\n  \"points\": %zu,\n", g->npoints);
        json_validity(t, ds, NULL, vc);
        put(t, "  \"note\": \"model prediction (golden rule, harmonic mode, classical "
               "environment)\"\n}\n");
        return;
    }
    put(t, "{\n  \"conditions\": [");
    for (size_t i = 0; i < cfg->feasibility.n; i++) {
        put(t, "%s", i ? ", " : "");
        put_json_string(t, cfg->feasibility.r[i].text);
    }
    put(t, "],\n  \"points\": %zu,\n  \"feasible_points\": %zu,\n", w->points, w->feasible);
    put(t, "  \"fraction_feasible\": %.17g,\n  \"axes\": {", (double)w->feasible / (double)w->points);
    for (size_t a = 0; a < g->naxes; a++) {
        vg_param_id p = g->axis[a];
        const vg_param *q = &cfg->param[p];
        put(t, "%s\n    \"%s\": {\"unit\": \"%s\", \"grid\": [%.17g, %.17g]", a ? "," : "",
            vg_param_get(p)->key, vg_param_get(p)->unit, q->v[0], q->v[q->n - 1]);
        if (w->feasible)
            put(t, ", \"feasible\": [%.17g, %.17g]}", q->v[w->lo[p]], q->v[w->hi[p]]);
        else
            put(t, ", \"feasible\": null}");
    }
    put(t, "\n  },\n  \"robust_point\": ");
    if (w->have_robust) {
        put(t, "{\"index\": %zu, \"distance_to_edge\": %.17g", w->robust, w->distance);
        for (int p = 0; p < VG_NPARAM; p++)
            put(t, ", \"%s\": %.17g", vg_param_get((vg_param_id)p)->csv_column,
                cfg->param[p].v[vg_grid_coord(g, w->robust, (vg_param_id)p)]);
        put(t, "},\n");
    } else {
        put(t, "null,\n  \"robust_point_note\": \"%s\",\n",
            w->feasible ? "grid too large for the distance transform" : "no feasible point");
    }
    if (vc)
        json_validity(t, ds, w, vc);
    put(t, "  \"note\": \"model prediction (golden rule, harmonic mode, classical "
           "environment); distances with each axis scaled to its range, log axes in log "
           "units, the grid's outside counting as edge\"\n}\n");
}

/* " meV", " K", or nothing for a dimensionless parameter. */
static const char *unit_suffix(vg_param_id p, char *buf, size_t len)
{
    const char *u = vg_param_get(p)->unit;

    snprintf(buf, len, "%s%s", strcmp(u, "1") ? " " : "", strcmp(u, "1") ? u : "");
    return buf;
}

static void text_validity(text *t, const vg_dataset *ds, const vg_window *w,
                          const valid_counts *vc)
{
    size_t n = ds->grid.npoints;

    put(t, "\nvalidity of the model (docs/theory.md section 6; a criterion fails where its "
           "value reaches its threshold):\n");
    put(t, "  valid (every criterion holds): %zu of %zu grid points (%.4g %%)\n", vc->valid, n,
        100.0 * (double)vc->valid / (double)n);
    for (int i = 0; i < VG_VALID_NCRIT; i++)
        if (vc->enabled & (1u << i))
            put(t, "  %-13s fails at %zu points (%.4g %%)\n", vg_valid_name(i), vc->fails[i],
                100.0 * (double)vc->fails[i] / (double)n);
    if (w)
        put(t, "  feasible and valid: %zu of the %zu feasible points\n", vc->feasible_valid,
            w->feasible);
}

static void text_summary(text *t, const vg_dataset *ds, const vg_window *w,
                         const valid_counts *vc)
{
    const vg_config *cfg = &ds->cfg;
    const vg_grid *g = &ds->grid;
    char u[16];

    if (!w) { /* [validity] alone */
        put(t, "validity of the model over the sweep in %s\n", ds->path);
        if (cfg->title[0])
            put(t, "%s\n", cfg->title);
        text_validity(t, ds, NULL, vc);
        put(t, "\nmodel prediction (golden rule, harmonic mode, classical environment)\n");
        return;
    }
    put(t, "feasibility window of the sweep in %s\n", ds->path);
    if (cfg->title[0])
        put(t, "%s\n", cfg->title);
    put(t, "\nconditions (all must hold):\n");
    for (size_t i = 0; i < cfg->feasibility.n; i++)
        put(t, "  %s\n", cfg->feasibility.r[i].text);
    put(t, "\nfeasible: %zu of %zu grid points (%.4g %%)\n\n", w->feasible, w->points,
        100.0 * (double)w->feasible / (double)w->points);
    put(t, "per axis: grid range, feasible range (projection of the window)\n");
    for (size_t a = 0; a < g->naxes; a++) {
        vg_param_id p = g->axis[a];
        const vg_param *q = &cfg->param[p];
        put(t, "  %-20s %12.6g .. %-12.6g%-5s", vg_param_get(p)->key, q->v[0], q->v[q->n - 1],
            unit_suffix(p, u, sizeof u));
        if (w->feasible)
            put(t, "   feasible %.6g .. %.6g\n", q->v[w->lo[p]], q->v[w->hi[p]]);
        else
            put(t, "   feasible: none\n");
    }
    if (w->have_robust) {
        put(t, "\nmost robust point (farthest from the window's edge, %.4g in axis units "
               "scaled to each range):\n", w->distance);
        for (int p = 0; p < VG_NPARAM; p++)
            put(t, "  %-20s %.10g%s\n", vg_param_get((vg_param_id)p)->key,
                cfg->param[p].v[vg_grid_coord(g, w->robust, (vg_param_id)p)],
                unit_suffix((vg_param_id)p, u, sizeof u));
    } else {
        put(t, "\nmost robust point: %s\n",
            w->feasible ? "not computed (grid larger than the distance transform's limit)"
                        : "none (no feasible point)");
    }
    if (vc)
        text_validity(t, ds, w, vc);
    put(t, "\nmodel prediction (golden rule, harmonic mode, classical environment)\n");
}

static vg_status write_one(const char *dir, const char *name, text *t, int quiet, vg_error *err)
{
    char path[4200];
    vg_status st;

    if (t->failed)
        return vg_error_set(err, VG_ENOMEM, "out of memory for %s", name);
    snprintf(path, sizeof path, "%s/%s", dir, name);
    st = vg_fs_write_atomic(path, t->s, t->n, err);
    if (st == VG_OK && !quiet)
        fprintf(stderr, "vibrogate: wrote %s\n", path);
    return st;
}

/* The counts of valid_counts from the failed_criteria metric (and the
 * feasibility mask, NULL without [feasibility]). */
static vg_status count_validity(vg_dataset *ds, const unsigned char *mask, valid_counts *vc,
                                vg_error *err)
{
    double *f = malloc(ds->grid.npoints * sizeof *f);
    vg_status st;

    memset(vc, 0, sizeof *vc);
    vc->enabled = ds->cfg.validity.s.enabled;
    if (!f)
        return vg_error_set(err, VG_ENOMEM, "out of memory for the validity summary");
    st = vg_dataset_read(ds, VG_M_FAILED_CRITERIA, f, err);
    for (size_t i = 0; st == VG_OK && i < ds->grid.npoints; i++) {
        unsigned bits = f[i] >= 0.0 && f[i] < 16.0 ? (unsigned)f[i] : 0u;
        vc->valid += bits == 0;
        vc->feasible_valid += bits == 0 && mask && mask[i];
        for (int c = 0; c < VG_VALID_NCRIT; c++)
            vc->fails[c] += (bits >> c) & 1u;
    }
    free(f);
    return st;
}

vg_status vg_cmd_summary(const char *nc_path, const char *dir, int quiet, vg_error *err)
{
    vg_dataset ds;
    vg_window w;
    valid_counts vc;
    double *feas = NULL;
    unsigned char *mask = NULL;
    text tj = {0}, tt = {0};
    int have_feas, have_valid;
    vg_status st = vg_dataset_open(&ds, nc_path, 0, NULL, err);

    if (st != VG_OK)
        return st;
    have_feas = ds.cfg.feasibility.n > 0;
    have_valid = ds.cfg.metric_on[VG_M_FAILED_CRITERIA];
    if (have_feas) {
        feas = malloc(ds.grid.npoints * sizeof *feas);
        mask = malloc(ds.grid.npoints);
        if (!feas || !mask)
            st = vg_error_set(err, VG_ENOMEM, "out of memory for the feasibility summary");
        if (st == VG_OK)
            st = vg_dataset_read(&ds, VG_M_FEASIBLE, feas, err);
        for (size_t i = 0; st == VG_OK && i < ds.grid.npoints; i++)
            mask[i] = feas[i] == 1.0;
        if (st == VG_OK)
            st = vg_window_analyse(&ds.grid, mask, &w, err);
    }
    if (st == VG_OK && have_valid)
        st = count_validity(&ds, mask, &vc, err);
    if (st == VG_OK) {
        json_summary(&tj, &ds, have_feas ? &w : NULL, have_valid ? &vc : NULL);
        text_summary(&tt, &ds, have_feas ? &w : NULL, have_valid ? &vc : NULL);
        st = write_one(dir, "summary.json", &tj, quiet, err);
    }
    if (st == VG_OK)
        st = write_one(dir, "summary.txt", &tt, quiet, err);
    free(tj.s);
    free(tt.s);
    free(feas);
    free(mask);
    vg_dataset_close(&ds);
    return st;
}
