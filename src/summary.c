/*
 * summary.json and summary.txt next to the data of a sweep with
 * [feasibility]: the conditions, the feasible fraction of the grid, the
 * feasible interval along each axis and the most robust feasible point
 * (vg_window).  Read back from the committed sweep.nc, so the summary comes
 * from the same numbers as the data and the maps, resumed run or not.
 */
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cmd.h"
#include "fsutil.h"
#include "vg_dataset.h"
#include "vg_window.h"

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

static void json_summary(text *t, const vg_dataset *ds, const vg_window *w)
{
    const vg_config *cfg = &ds->cfg;
    const vg_grid *g = &ds->grid;

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

static void text_summary(text *t, const vg_dataset *ds, const vg_window *w)
{
    const vg_config *cfg = &ds->cfg;
    const vg_grid *g = &ds->grid;
    char u[16];

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

vg_status vg_cmd_summary(const char *nc_path, const char *dir, int quiet, vg_error *err)
{
    vg_dataset ds;
    vg_window w;
    double *feas = NULL;
    unsigned char *mask = NULL;
    text tj = {0}, tt = {0};
    vg_status st = vg_dataset_open(&ds, nc_path, 0, NULL, err);

    if (st != VG_OK)
        return st;
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
    if (st == VG_OK) {
        json_summary(&tj, &ds, &w);
        text_summary(&tt, &ds, &w);
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
