/*
 * The sensitivity command: at one operating point (every parameter scalar),
 * the elasticities d ln M / d ln p of k_total, of the ratio
 * k_assisted / k_elastic and, with [isotope], of the isotope effect, with
 * respect to each parameter, with their error estimates (src/sensitivity.c).
 * A ranked table on stdout (JSON with --json); sensitivity.txt and
 * sensitivity.json in the output directory; with [output] figures, one
 * ranked bar chart per metric, sensitivity-METRIC.png/pdf/svg.  Every file
 * is written under a temporary name and renamed when complete.
 */
#define _POSIX_C_SOURCE 200809L /* open_memstream */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include <glib.h>

#include "cmd.h"
#include "fmt.h"
#include "draw.h"
#include "fsutil.h"
#include "vg_barchart.h"
#include "vg_config.h"
#include "vg_sensitivity.h"

#define PREDICTION "model prediction (golden rule, harmonic mode, classical environment)"

static const char *kind_name(vg_sens_kind k)
{
    static const char *n[] = {"numeric", "analytic", "parameter_zero", "undefined"};
    return n[k];
}

static const char *side_name(int side)
{
    return side == 0 ? "central" : side > 0 ? "forward" : "backward";
}

/* "meV-1", "K-1", "1": the unit of d ln M / dp (with_one = 0: "" for 1). */
static void inverse_unit(vg_param_id p, int with_one, char *buf, size_t len)
{
    const char *u = vg_param_get(p)->unit;

    if (strcmp(u, "1") != 0)
        snprintf(buf, len, "%s-1", u);
    else
        snprintf(buf, len, "%s", with_one ? "1" : "");
}

/* --------------------------------------------------------------- text --- */

static void text_cell(FILE *fp, const vg_sens_entry *e)
{
    char cell[64];
    int width = 28;

    if (e->kind == VG_SENS_UNDEFINED)
        snprintf(cell, sizeof cell, "undefined");
    else if (e->kind == VG_SENS_ANALYTIC)
        snprintf(cell, sizeof cell, "%.10g (exact)", e->elasticity);
    else if (e->kind == VG_SENS_AT_ZERO)
        snprintf(cell, sizeof cell, "0 (parameter is 0)");
    else {
        snprintf(cell, sizeof cell, "%+.9g ± %.1e", e->elasticity, e->elasticity_err);
        width++; /* '±' takes two bytes and one column */
    }
    fprintf(fp, "  %-*s", width, cell);
}

static void text_notes(FILE *fp, const vg_sens_result *r)
{
    char unit[16];

    fprintf(fp, "\nnotes\n"
                "  electronic_coupling: exact, V enters only the prefactor V^2\n"
                "  gap: the elasticity is gap * d ln M / d gap (its sign follows the gap's)\n");
    for (int m = 0; m < VG_SENS_N; m++) {
        if (!r->on[m])
            continue;
        if (!r->defined[m]) {
            fprintf(fp, "  %s: undefined, %s\n", vg_sens_metric_get((vg_sens_metric)m)->name,
                    r->why[m]);
            continue;
        }
        for (int p = 0; p < VG_NPARAM; p++) {
            const vg_sens_entry *e = &r->e[m][p];
            const char *key = vg_param_get((vg_param_id)p)->key;
            inverse_unit((vg_param_id)p, 0, unit, sizeof unit);
            if (e->kind == VG_SENS_AT_ZERO)
                fprintf(fp, "  %s = 0: elasticity of %s is 0; d ln %s / d %s = %.9g ± %.1e%s%s\n",
                        key, vg_sens_metric_get((vg_sens_metric)m)->name,
                        vg_sens_metric_get((vg_sens_metric)m)->name, key, e->deriv,
                        e->deriv_err, unit[0] ? " " : "", unit);
            else if (e->kind == VG_SENS_UNDEFINED)
                fprintf(fp, "  %s, %s: undefined, %s\n",
                        vg_sens_metric_get((vg_sens_metric)m)->name, key, e->why);
            else if (e->kind == VG_SENS_NUMERIC && e->side != 0)
                fprintf(fp, "  %s, %s: %s differences (the parameter is at the edge of its "
                            "accepted range)\n",
                        vg_sens_metric_get((vg_sens_metric)m)->name, key, side_name(e->side));
        }
    }
}

static void print_text(FILE *fp, const vg_config *cfg, const vg_sens_result *r)
{
    vg_param_id order[VG_NPARAM];

    fprintf(fp, "sensitivity at the operating point (%s):\n", cfg->path);
    for (int p = 0; p < VG_NPARAM; p++) {
        const vg_param_info *pi = vg_param_get((vg_param_id)p);
        fprintf(fp, "  %-20s %.10g %s\n", pi->key, r->v[p], strcmp(pi->unit, "1") ? pi->unit : "");
    }
    fprintf(fp, "  %-20s %s\n\n", "mode statistics",
            cfg->stats == VG_STATS_FROZEN ? "frozen" : "thermal");
    fprintf(fp, "elasticities d ln M / d ln p with error estimates, ranked by the largest "
                "|elasticity|\n  %-20s", "parameter");
    for (int m = 0; m < VG_SENS_N; m++)
        if (r->on[m])
            fprintf(fp, "  %-28s", vg_sens_metric_get((vg_sens_metric)m)->name);
    fputc('\n', fp);
    vg_sensitivity_rank(r, -1, order);
    for (int k = 0; k < VG_NPARAM; k++) {
        fprintf(fp, "  %-20s", vg_param_get(order[k])->key);
        for (int m = 0; m < VG_SENS_N; m++)
            if (r->on[m])
                text_cell(fp, &r->e[m][order[k]]);
        fputc('\n', fp);
    }
    text_notes(fp, r);
    fprintf(fp, "\n%zu model evaluations; %s\n", r->evaluations, PREDICTION);
}

/* --------------------------------------------------------------- JSON --- */

/* Finite numbers only (the results never hold others; null if one did). */
static void json_number(FILE *fp, double v)
{
    if (isfinite(v))
        fprintf(fp, "%.17g", v);
    else
        fputs("null", fp);
}

static void json_entry(FILE *fp, const vg_sens_entry *e, vg_param_id p)
{
    char unit[16];

    inverse_unit(p, 1, unit, sizeof unit);
    fprintf(fp, "\"%s\": {\"kind\": \"%s\"", vg_param_get(p)->key, kind_name(e->kind));
    if (e->kind == VG_SENS_UNDEFINED) {
        fputs(", \"elasticity\": null, \"why\": ", fp);
        vg_fmt_json_string(fp, e->why);
        fputc('}', fp);
        return;
    }
    fputs(", \"elasticity\": ", fp);
    json_number(fp, e->elasticity);
    fputs(", \"error\": ", fp);
    json_number(fp, e->elasticity_err);
    fputs(", \"derivative\": ", fp);
    json_number(fp, e->deriv);
    fputs(", \"derivative_error\": ", fp);
    json_number(fp, e->deriv_err);
    fprintf(fp, ", \"derivative_unit\": \"%s\"", unit);
    if (e->kind != VG_SENS_ANALYTIC) {
        fprintf(fp, ", \"differences\": \"%s\", \"step\": ", side_name(e->side));
        json_number(fp, e->step);
        fprintf(fp, ", \"step_in\": \"%s\"",
                p == VG_P_GAP || e->kind == VG_SENS_AT_ZERO ? vg_param_get(p)->unit : "ln");
    }
    fputc('}', fp);
}

static void json_ranking(FILE *fp, const vg_sens_result *r, int m)
{
    vg_param_id order[VG_NPARAM];

    vg_sensitivity_rank(r, m, order);
    fputc('[', fp);
    for (int k = 0; k < VG_NPARAM; k++)
        fprintf(fp, "%s\"%s\"", k ? ", " : "", vg_param_get(order[k])->key);
    fputc(']', fp);
}

static void json_metric(FILE *fp, const vg_sens_result *r, int m)
{
    const vg_sens_metric_info *mi = vg_sens_metric_get((vg_sens_metric)m);

    fprintf(fp, "    \"%s\": {\n      \"from\": \"%s\",\n      \"defined\": %s,\n", mi->name,
            vg_metric_get(mi->metric)->name, r->defined[m] ? "true" : "false");
    if (!r->defined[m]) {
        fputs("      \"why\": ", fp);
        vg_fmt_json_string(fp, r->why[m]);
        fputs("\n    }", fp);
        return;
    }
    fputs("      \"ln_value\": ", fp);
    json_number(fp, r->ln_m[m]);
    fputs(",\n      \"ranking\": ", fp);
    json_ranking(fp, r, m);
    fputs(",\n      \"elasticities\": {\n", fp);
    for (int p = 0; p < VG_NPARAM; p++) {
        fputs("        ", fp);
        json_entry(fp, &r->e[m][p], (vg_param_id)p);
        fputs(p + 1 < VG_NPARAM ? ",\n" : "\n", fp);
    }
    fputs("      }\n    }", fp);
}

static void print_json(FILE *fp, const vg_config *cfg, const vg_sens_result *r)
{
    int first = 1;

    fputs("{\n  \"config\": ", fp);
    vg_fmt_json_string(fp, cfg->path);
    fputs(",\n  \"parameters\": {", fp);
    for (int p = 0; p < VG_NPARAM; p++) {
        fprintf(fp, "%s\"%s\": ", p ? ", " : "", vg_param_get((vg_param_id)p)->csv_column);
        json_number(fp, r->v[p]);
    }
    fprintf(fp, "},\n  \"mode_statistics\": \"%s\",\n",
            cfg->stats == VG_STATS_FROZEN ? "frozen" : "thermal");
    fputs("  \"definition\": \"elasticity = d ln M / d ln p; for gap: gap * d ln M / d gap\",\n"
          "  \"metrics\": {\n", fp);
    for (int m = 0; m < VG_SENS_N; m++) {
        if (!r->on[m])
            continue;
        fputs(first ? "" : ",\n", fp);
        json_metric(fp, r, m);
        first = 0;
    }
    fputs("\n  },\n  \"ranking\": ", fp);
    json_ranking(fp, r, -1);
    fprintf(fp, ",\n  \"evaluations\": %zu,\n  \"note\": \"%s\"\n}\n", r->evaluations,
            PREDICTION);
}

/* ------------------------------------------------------------ figures --- */

static const char *param_markup(vg_param_id p)
{
    static const char *s[VG_NPARAM] = {"gap ε", "reorganization λ", "coupling <i>V</i>",
                                        "Huang–Rhys <i>S</i>", "mode ħ<i>ω</i>",
                                        "temperature <i>T</i>"};
    return s[p];
}

static void chart_items(const vg_sens_result *r, int m, vg_bar_item it[VG_NPARAM],
                        char labels[VG_NPARAM][64])
{
    memset(it, 0, sizeof(vg_bar_item) * VG_NPARAM);
    for (int p = 0; p < VG_NPARAM; p++) {
        const vg_sens_entry *e = &r->e[m][p];
        snprintf(labels[p], 64, "%s%s", param_markup((vg_param_id)p),
                 e->kind == VG_SENS_AT_ZERO ? " (= 0)" : "");
        it[p].label = labels[p];
        it[p].defined[0] = e->kind != VG_SENS_UNDEFINED;
        it[p].value[0] = e->elasticity;
        it[p].has_interval[0] = e->kind == VG_SENS_NUMERIC;
        it[p].lo[0] = e->elasticity - e->elasticity_err;
        it[p].hi[0] = e->elasticity + e->elasticity_err;
    }
}

static vg_status draw_metric(const vg_config *cfg, const vg_sens_result *r, int m,
                             const char *dir, const vg_figure_meta *meta, vg_error *err)
{
    const vg_sens_metric_info *mi = vg_sens_metric_get((vg_sens_metric)m);
    char labels[VG_NPARAM][64], title[512], plain[512], sub[512], axis[256], *stem;
    char *esc = g_markup_escape_text(cfg->title[0] ? cfg->title : "vibrogate", -1);
    vg_bar_item it[VG_NPARAM];
    vg_barchart bc;
    size_t len = strlen(dir) + strlen(mi->name) + 16;
    vg_status st;

    chart_items(r, m, it, labels);
    snprintf(title, sizeof title, "%s: sensitivity of %s", esc, mi->markup);
    g_free(esc);
    snprintf(plain, sizeof plain, "%s: sensitivity of %s", cfg->title[0] ? cfg->title : "vibrogate",
             mi->name);
    snprintf(sub, sizeof sub,
             "ε = %.4g meV,  λ = %.4g meV,  <i>V</i> = %.4g meV,  <i>S</i> = %.4g,  "
             "ħ<i>ω</i> = %.4g meV,  <i>T</i> = %.4g K,  %s mode", r->v[VG_P_GAP],
             r->v[VG_P_REORG], r->v[VG_P_COUPLING], r->v[VG_P_HUANG_RHYS], r->v[VG_P_MODE],
             r->v[VG_P_TEMPERATURE], cfg->stats == VG_STATS_FROZEN ? "frozen" : "thermal");
    snprintf(axis, sizeof axis, "elasticity ∂ ln(%s) / ∂ ln <i>p</i>", mi->markup);
    memset(&bc, 0, sizeof bc);
    bc.title = title;
    bc.subtitle = sub;
    bc.plain_title = plain;
    bc.axis_label = axis;
    bc.note = "gap: ε ∂ ln <i>M</i> / ∂ε;  error bars: estimated error of the finite "
              "differences;  model prediction";
    bc.nseries = 1;
    bc.nitems = VG_NPARAM;
    bc.items = it;
    bc.order = VG_BAR_ORDER_ABS;
    bc.show_values = 1;
    stem = malloc(len);
    if (!stem)
        return vg_error_set(err, VG_ENOMEM, "out of memory");
    snprintf(stem, len, "%s/sensitivity-%s", dir, mi->name);
    st = vg_barchart_write(&bc, cfg, cfg->fig.formats, stem, meta, err);
    free(stem);
    return st;
}

static vg_status draw_all(const vg_config *cfg, const vg_sens_result *r, const char *dir,
                          int quiet, vg_error *err)
{
    char stamp[32], software[64];
    vg_figure_meta meta;
    vg_status st = VG_OK;

    if (!cfg->fig.formats)
        return VG_OK;
    vg_draw_meta(&meta, stamp, software, quiet);
    for (int m = 0; m < VG_SENS_N && st == VG_OK; m++)
        if (r->defined[m])
            st = draw_metric(cfg, r, m, dir, &meta, err);
    return st;
}

/* -------------------------------------------------------------- files --- */

typedef void (*printer)(FILE *fp, const vg_config *cfg, const vg_sens_result *r);

/* What print writes, in memory (caller frees *buf). */
static vg_status render(printer print, const vg_config *cfg, const vg_sens_result *r,
                        char **buf, size_t *len, vg_error *err)
{
    FILE *fp = open_memstream(buf, len);

    if (!fp)
        return vg_error_set(err, VG_ENOMEM, "out of memory");
    print(fp, cfg, r);
    if (fclose(fp) != 0) {
        free(*buf);
        return vg_error_set(err, VG_ENOMEM, "out of memory");
    }
    return VG_OK;
}

static vg_status write_report(const char *dir, const char *name, const char *text, size_t len,
                              int quiet, vg_error *err)
{
    size_t plen = strlen(dir) + strlen(name) + 2;
    char *path = malloc(plen);
    vg_status st;

    if (!path)
        return vg_error_set(err, VG_ENOMEM, "out of memory");
    snprintf(path, plen, "%s/%s", dir, name);
    st = vg_fs_write_atomic(path, text, len, err);
    if (st == VG_OK && !quiet)
        fprintf(stderr, "vibrogate: wrote %s\n", path);
    free(path);
    return st;
}

static vg_status outputs(const vg_cmd_args *a, const vg_config *cfg, const vg_sens_result *r,
                         vg_error *err)
{
    const char *dir = a->out_dir ? a->out_dir : cfg->out_dir;
    char *txt = NULL, *json = NULL;
    size_t ntxt = 0, njson = 0;
    vg_status st = render(print_text, cfg, r, &txt, &ntxt, err);

    if (st == VG_OK) {
        st = render(print_json, cfg, r, &json, &njson, err);
        if (st != VG_OK) {
            free(txt);
            txt = NULL;
        }
    }
    if (st == VG_OK)
        st = vg_fs_make_dirs(dir, err);
    if (st == VG_OK)
        st = draw_all(cfg, r, dir, a->quiet, err);
    if (st == VG_OK)
        st = write_report(dir, "sensitivity.txt", txt, ntxt, a->quiet, err);
    if (st == VG_OK)
        st = write_report(dir, "sensitivity.json", json, njson, a->quiet, err);
    if (st == VG_OK) {
        const char *out = a->json ? json : txt;
        size_t n = a->json ? njson : ntxt;
        if (fwrite(out, 1, n, stdout) != n || fflush(stdout) != 0)
            st = vg_error_set(err, VG_EIO, "cannot write to standard output: %s",
                              strerror(errno));
    }
    free(txt);
    free(json);
    return st;
}

vg_status vg_cmd_sensitivity(const vg_cmd_args *a, vg_error *err)
{
    vg_config cfg;
    vg_sens_result *r;
    double v[VG_NPARAM];
    vg_status st = vg_config_load(&cfg, a->config, a->nset, a->sets, err);

    if (st != VG_OK)
        return st;
    st = vg_config_refuse_odorants(&cfg, "sensitivity", err);
    if (st == VG_OK)
        st = vg_config_require_scalars(&cfg, "sensitivity", 0, err);
    r = st == VG_OK ? malloc(sizeof *r) : NULL;
    if (st == VG_OK && !r)
        st = vg_error_set(err, VG_ENOMEM, "out of memory");
    if (st == VG_OK) {
        for (int p = 0; p < VG_NPARAM; p++)
            v[p] = cfg.param[p].v[0];
        st = vg_sensitivity_compute(&cfg, v, r, err);
    }
    if (st == VG_OK)
        st = outputs(a, &cfg, r, err);
    free(r);
    vg_config_free(&cfg);
    return st;
}
