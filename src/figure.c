/*
 * Heatmap figures (see vg_figure.h).
 *
 * A figure is one metric over the x-y axes in a grid of panels (columns:
 * values of the panels axis, rows: values of the rows axis) at one
 * combination of the remaining axes.  Cells are painted exactly as computed
 * (one flat colour per grid point, edges half-way between neighbouring
 * values, no interpolation); where an axis is evenly spaced on screen the
 * cells are one image scaled with nearest-neighbour filtering, otherwise
 * one rectangle per cell.  The dominance boundary is the iso-line
 * log10_ratio = 0 by marching squares (src/contour.c) on the same numbers.
 */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <glib.h>
#include <pango/pangocairo.h>

#include "draw.h"
#include "fmt.h"
#include "vg_colormap.h"
#include "vg_const.h"
#include "vg_figure.h"
#include "vg_plotaux.h"

#define FS_TICK 7.0
#define FS_LABEL 8.5
#define FS_PANEL 8.0
#define FS_TITLE 10.0
#define FS_SUB 7.5
#define TICK_LEN 3.0
#define NO_VALUE_GREY 0.62
#define PANEL_ASPECT 0.75
#define DIVERGING_QUANTILE 0.8
#define COLORBAR_SPACE 62.0
#define ROW_LABEL_SPACE 12.0

typedef struct {
    vg_param_id p;
    const double *v;
    size_t n;
    int log;          /* drawn on a log10 scale */
    double scale;     /* canonical units per display unit */
    char label[96];   /* Pango markup, "ε (meV)" */
    char unit[48];    /* Pango markup of the display unit, "" if none */
    double *d;        /* n display coordinates (log10 already applied) */
    double *e;        /* n + 1 cell edges */
    double lo, hi;    /* display extent */
    int uniform;      /* edges evenly spaced */
} axis_view;

typedef struct {
    const vg_config *cfg;
    const vg_grid *g;
    const vg_figure_spec *fs;
    vg_metric_id metric;
    const double *z;          /* metric over the grid */
    const double *ratio;      /* log10_ratio over the grid */
    const double *feasible;   /* feasible over the grid, NULL without [feasibility] */
    const double *valid;      /* valid over the grid, NULL without [validity] criteria */
    const vg_field_spec *field; /* a field that is not a metric (vg_figure_field), or NULL */
    axis_view ax, ay;
    size_t ncol, nrow;
    size_t fixed[VG_NPARAM];  /* coordinates of this figure's other axes */
    double lo, hi;            /* colour range */
    int diverging, clamp_lo, clamp_hi;
    vg_cmap cmap;
    double W, H, left, top, pw, ph, gapx, gapy, ptitle;
    char title[512], sub[768];
} figure;

/* ------------------------------------------------------------ labels --- */

static const char *symbol_markup(vg_param_id p)
{
    static const char *s[VG_NPARAM] = {"ε", "λ", "<i>V</i>", "<i>S</i>", "ħ<i>ω</i>", "<i>T</i>"};
    return s[p];
}

static const char *metric_markup(vg_metric_id m)
{
    static const char *const s[] = {
        "log<sub>10</sub>(<i>k</i><sub>elastic</sub> / s<sup>−1</sup>)",
        "log<sub>10</sub>(<i>k</i><sub>assisted</sub> / s<sup>−1</sup>)",
        "log<sub>10</sub>(<i>k</i><sub>total</sub> / s<sup>−1</sup>)",
        "log<sub>10</sub>(<i>k</i><sub>bare</sub> / s<sup>−1</sup>)",
        "log<sub>10</sub>(<i>k</i><sub>assisted</sub> / <i>k</i><sub>elastic</sub>)",
        "<i>k</i><sub>assisted</sub> / <i>k</i><sub>total</sub>",
        "log<sub>10</sub>(<i>k</i><sub>total</sub> / <i>k</i><sub>bare</sub>)",
        "log<sub>10</sub>(<i>k</i><sub>total, heavy</sub> / s<sup>−1</sup>)",
        "<i>k</i><sub>light</sub> / <i>k</i><sub>heavy</sub>",
        "log<sub>10</sub>(<i>k</i><sub>light</sub> / <i>k</i><sub>heavy</sub>)",
        "feasible (1) or not (0)",
        "<i>k</i><sub>odorant</sub> / <i>k</i><sub>other</sub>",
        "log<sub>10</sub>(<i>k</i><sub>odorant</sub> / <i>k</i><sub>other</sub>)",
        "model valid (1) or not (0)",
        "failed criteria (1 nonadiabatic, 2 solvent, 4 resolved, 8 rethermal)"};
    _Static_assert(sizeof s / sizeof *s == VG_N_METRICS, "one label per metric");
    return s[m];
}

/* The mapped quantity's label and file name. */
static const char *z_markup(const figure *f)
{
    return f->field ? f->field->label_markup : metric_markup(f->metric);
}

static const char *z_name(const figure *f)
{
    return f->field ? f->field->name : vg_metric_get(f->metric)->name;
}

/* Display unit: the user's cm-1 or eV where given, else the canonical one. */
static void display_unit(const vg_param *q, vg_param_id p, double *scale, char *unit, size_t len)
{
    const char *canon = vg_param_get(p)->unit;

    *scale = 1.0;
    if (strncmp(q->user_unit, "cm", 2) == 0) {
        *scale = VG_MEV_PER_CM1;
        snprintf(unit, len, "cm<sup>−1</sup>");
    } else if (strcmp(q->user_unit, "eV") == 0) {
        *scale = VG_MEV_PER_EV;
        snprintf(unit, len, "eV");
    } else {
        snprintf(unit, len, "%s", strcmp(canon, "1") == 0 ? "" : canon);
    }
}

/* "1720", "−0.5": %g with a true minus sign. */
static void number_markup(double v, char *buf, size_t len)
{
    vg_fmt_minus(v, 4, buf, len);
}

/* "ħω = 1720 cm⁻¹" for parameter p at index k. */
static void value_markup(const vg_config *cfg, vg_param_id p, size_t k, char *buf, size_t len)
{
    double scale;
    char unit[48], num[48];

    display_unit(&cfg->param[p], p, &scale, unit, sizeof unit);
    number_markup(cfg->param[p].v[k] / scale, num, sizeof num);
    snprintf(buf, len, "%s = %s%s%s", symbol_markup(p), num, unit[0] ? " " : "", unit);
}

/* -------------------------------------------------------------- axes --- */

static void axis_free(axis_view *a)
{
    free(a->d);
    free(a->e);
}

static vg_status axis_init(axis_view *a, const vg_config *cfg, vg_param_id p, vg_error *err)
{
    const vg_param *q = &cfg->param[p];
    size_t i, n = q->n;

    memset(a, 0, sizeof *a);
    a->p = p;
    a->v = q->v;
    a->n = n;
    a->log = q->log_spacing;
    display_unit(q, p, &a->scale, a->unit, sizeof a->unit);
    snprintf(a->label, sizeof a->label, "%s%s%s%s", symbol_markup(p), a->unit[0] ? " (" : "",
             a->unit, a->unit[0] ? ")" : "");
    a->d = malloc(n * sizeof *a->d);
    a->e = malloc((n + 1) * sizeof *a->e);
    if (!a->d || !a->e) {
        axis_free(a);
        return vg_error_set(err, VG_ENOMEM, "out of memory for a figure axis");
    }
    for (i = 0; i < n; i++)
        a->d[i] = a->log ? log10(q->v[i] / a->scale) : q->v[i] / a->scale;
    a->e[0] = a->d[0] - 0.5 * (a->d[1] - a->d[0]);
    a->e[n] = a->d[n - 1] + 0.5 * (a->d[n - 1] - a->d[n - 2]);
    for (i = 1; i < n; i++)
        a->e[i] = 0.5 * (a->d[i - 1] + a->d[i]);
    a->lo = fmin(a->e[0], a->e[n]);
    a->hi = fmax(a->e[0], a->e[n]);
    a->uniform = 1;
    for (i = 1; i < n; i++)
        if (fabs((a->d[i] - a->d[i - 1]) - (a->d[1] - a->d[0])) > 1e-9 * (a->hi - a->lo))
            a->uniform = 0;
    return VG_OK;
}

/* Page coordinate of display value d along a panel of length len. */
static double axis_frac(const axis_view *a, double d)
{
    return (d - a->lo) / (a->hi - a->lo);
}

/* Display coordinate of a fractional index (from the contour code). */
static double axis_at(const axis_view *a, double s)
{
    size_t i = (size_t)s;
    double f = s - (double)i;

    if (i + 1 >= a->n)
        return a->d[a->n - 1];
    return a->d[i] + f * (a->d[i + 1] - a->d[i]);
}

/* ------------------------------------------------------------- slices --- */

static size_t flat_index(const figure *f, size_t i, size_t j, size_t c, size_t r)
{
    size_t k[VG_NPARAM], flat = 0;

    memcpy(k, f->fixed, sizeof k);
    k[f->ax.p] = i;
    k[f->ay.p] = j;
    if (f->fs->panels >= 0)
        k[f->fs->panels] = c;
    if (f->fs->rows >= 0)
        k[f->fs->rows] = r;
    for (int p = 0; p < VG_NPARAM; p++)
        flat += k[p] * f->g->stride[p];
    return flat;
}

static void slice(const figure *f, const double *src, size_t c, size_t r, double *out)
{
    for (size_t j = 0; j < f->ay.n; j++)
        for (size_t i = 0; i < f->ax.n; i++)
            out[j * f->ax.n + i] = src[flat_index(f, i, j, c, r)];
}

/* ------------------------------------------------------- colour range --- */

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* 1, 2 or 5 times a power of ten, at least x (> 0). */
static double nice_up(double x)
{
    double p = pow(10.0, floor(log10(x))), m = x / p;

    return (m <= 1.0 ? 1.0 : m <= 2.0 ? 2.0 : m <= 5.0 ? 5.0 : 10.0) * p;
}

/* Metrics with a natural zero between two regimes (assisted against
 * elastic, light against heavy, one odorant against another) take the
 * diverging map, centred on 0. */
static int diverging_metric(vg_metric_id m)
{
    return m == VG_M_LOG10_RATIO || m == VG_M_LOG10_ISOTOPE_EFFECT
           || m == VG_M_LOG10_DISCRIMINATION;
}

/* The colour range: the central 98 % of the figure's values rounded out
 * to round numbers; for the ratio, symmetric about 0 and set by the 80th
 * percentile of |log10 ratio|, so that the decades around the boundary keep
 * their contrast while a few extreme cells do not wash the map out.
 * Values beyond the range are clamped and the colorbar says so. */
static vg_status colour_range(figure *f, vg_error *err)
{
    size_t cap = f->g->npoints, n = 0, c, r, i, cells = f->ax.n * f->ay.n;
    double *v = malloc(cap * sizeof *v), *s = malloc(cells * sizeof *s), lo, hi, step;

    if (!v || !s) {
        free(v);
        free(s);
        return vg_error_set(err, VG_ENOMEM, "out of memory for a figure");
    }
    for (r = 0; r < f->nrow; r++)
        for (c = 0; c < f->ncol; c++) {
            slice(f, f->z, c, r, s);
            for (i = 0; i < cells; i++)
                if (s[i] != VG_FILL)
                    v[n++] = f->diverging ? fabs(s[i]) : s[i];
        }
    qsort(v, n, sizeof *v, cmp_double);
    f->clamp_lo = f->clamp_hi = 0;
    lo = n ? v[(size_t)(0.01 * (double)(n - 1))] : 0.0;
    hi = n ? v[(size_t)(0.99 * (double)(n - 1))] : 1.0;
    if (f->diverging) {
        hi = n ? v[(size_t)(DIVERGING_QUANTILE * (double)(n - 1))] : 1.0;
        f->hi = nice_up(hi > 0 ? hi : 1.0);
        f->lo = -f->hi;
        f->clamp_hi = f->clamp_lo = n && v[n - 1] > f->hi;
    } else if (f->field) {
        f->lo = f->field->lo;
        f->hi = f->field->hi;
    } else if (f->metric == VG_M_ASSISTED_FRACTION || f->metric == VG_M_FEASIBLE
               || f->metric == VG_M_VALID) {
        f->lo = 0.0;
        f->hi = 1.0;
    } else {
        if (hi - lo < 1e-9 * fmax(1.0, fabs(hi))) {
            lo -= 0.5;
            hi += 0.5;
        }
        step = nice_up((hi - lo) / 5.0);
        f->lo = floor(lo / step) * step;
        f->hi = ceil(hi / step) * step;
        f->clamp_lo = n && v[0] < f->lo;
        f->clamp_hi = n && v[n - 1] > f->hi;
    }
    free(v);
    free(s);
    return VG_OK;
}

static void cell_colour(const figure *f, double z, double rgb[3])
{
    if (z == VG_FILL) {
        rgb[0] = rgb[1] = rgb[2] = NO_VALUE_GREY;
        return;
    }
    vg_cmap_eval(&f->cmap, (z - f->lo) / (f->hi - f->lo), rgb);
}

/* ------------------------------------------------------------ drawing --- */

static vg_status read_metric(const vg_dataset *ds, vg_metric_id m, double **out, vg_error *err)
{
    *out = malloc(ds->grid.npoints * sizeof **out);
    if (!*out)
        return vg_error_set(err, VG_ENOMEM, "out of memory reading '%s'", ds->path);
    return vg_dataset_read(ds, m, *out, err);
}

static void panel_origin(const figure *f, size_t c, size_t r, double *x0, double *y0)
{
    *x0 = f->left + (double)c * (f->pw + f->gapx);
    *y0 = f->top + (double)r * (f->ph + f->gapy) + f->ptitle;
}

static void draw_cells_image(cairo_t *cr, const figure *f, const double *s, double x0, double y0)
{
    size_t nx = f->ax.n, ny = f->ay.n;
    cairo_surface_t *img = cairo_image_surface_create(CAIRO_FORMAT_RGB24, (int)nx, (int)ny);
    unsigned char *px = cairo_image_surface_get_data(img);
    int stride = cairo_image_surface_get_stride(img);
    int xflip = f->ax.d[nx - 1] < f->ax.d[0], yflip = f->ay.d[ny - 1] < f->ay.d[0];

    cairo_surface_flush(img);
    for (size_t j = 0; j < ny; j++)
        for (size_t i = 0; i < nx; i++) {
            double rgb[3];
            size_t col = xflip ? nx - 1 - i : i, row = yflip ? j : ny - 1 - j;
            uint32_t *p = (uint32_t *)(void *)(px + (size_t)stride * row) + col;
            cell_colour(f, s[j * nx + i], rgb);
            *p = (uint32_t)lround(rgb[0] * 255) << 16 | (uint32_t)lround(rgb[1] * 255) << 8 |
                 (uint32_t)lround(rgb[2] * 255);
        }
    cairo_surface_mark_dirty(img);
    cairo_save(cr);
    cairo_translate(cr, x0, y0);
    cairo_scale(cr, f->pw / (double)nx, f->ph / (double)ny);
    cairo_set_source_surface(cr, img, 0, 0);
    cairo_pattern_set_filter(cairo_get_source(cr), CAIRO_FILTER_NEAREST);
    cairo_rectangle(cr, 0, 0, (double)nx, (double)ny);
    cairo_fill(cr);
    cairo_restore(cr);
    cairo_surface_destroy(img);
}

/* Cell (i, j) of a panel at (x0, y0) added to the current path. */
static void cell_rect(cairo_t *cr, const figure *f, size_t i, size_t j, double x0, double y0)
{
    double xa = x0 + f->pw * axis_frac(&f->ax, f->ax.e[i]);
    double xb = x0 + f->pw * axis_frac(&f->ax, f->ax.e[i + 1]);
    double ya = y0 + f->ph * (1.0 - axis_frac(&f->ay, f->ay.e[j]));
    double yb = y0 + f->ph * (1.0 - axis_frac(&f->ay, f->ay.e[j + 1]));

    cairo_rectangle(cr, fmin(xa, xb), fmin(ya, yb), fabs(xb - xa), fabs(yb - ya));
}

static void draw_cells_rects(cairo_t *cr, const figure *f, const double *s, double x0, double y0)
{
    cairo_save(cr);
    cairo_set_antialias(cr, CAIRO_ANTIALIAS_NONE);
    for (size_t j = 0; j < f->ay.n; j++)
        for (size_t i = 0; i < f->ax.n; i++) {
            double rgb[3];
            cell_colour(f, s[j * f->ax.n + i], rgb);
            cairo_set_source_rgb(cr, rgb[0], rgb[1], rgb[2]);
            cell_rect(cr, f, i, j, x0, y0);
            cairo_fill(cr);
        }
    cairo_restore(cr);
}

static void contour_path(cairo_t *cr, const figure *f, const double *s, double level,
                         vg_segment *seg, size_t cap, double x0, double y0)
{
    size_t n = vg_contour(s, f->ax.n, f->ay.n, level, VG_FILL, seg, cap);

    for (size_t k = 0; k < n; k++) {
        double xa = x0 + f->pw * axis_frac(&f->ax, axis_at(&f->ax, seg[k].x0));
        double ya = y0 + f->ph * (1.0 - axis_frac(&f->ay, axis_at(&f->ay, seg[k].y0)));
        double xb = x0 + f->pw * axis_frac(&f->ax, axis_at(&f->ax, seg[k].x1));
        double yb = y0 + f->ph * (1.0 - axis_frac(&f->ay, axis_at(&f->ay, seg[k].y1)));
        cairo_move_to(cr, xa, ya);
        cairo_line_to(cr, xb, yb);
    }
}

/* The dominance boundary: black over a white casing, legible on both
 * sides of the diverging map and in grayscale. */
/* The dominance boundary is black over a white casing; the feasibility
 * window's outline (feasible = 1/2 between cells) the inverse, white over
 * black, so the two stay apart in colour and in grayscale (marching squares
 * gives separate short segments, on which a dash pattern would restart). */
/* The current path as a line of grey level core over a casing of grey level
 * edge, widths in points. */
static void stroke_cased(cairo_t *cr, double edge_w, double edge, double core_w, double core)
{
    cairo_set_dash(cr, NULL, 0, 0);
    cairo_set_line_width(cr, edge_w);
    cairo_set_source_rgb(cr, edge, edge, edge);
    cairo_stroke_preserve(cr);
    cairo_set_line_width(cr, core_w);
    cairo_set_source_rgb(cr, core, core, core);
    cairo_stroke(cr);
}

/* Spacing of the hatching over cells where the model is not valid, pt. */
#define HATCH_STEP 4.0

/* The cells where a validity criterion of [validity] fails (valid = 0),
 * hatched with thin diagonal lines, dark over a light casing, so that the
 * colours stay readable beneath and the hatching reads on every colour and
 * in grayscale. */
static void draw_hatch(cairo_t *cr, const figure *f, const double *valid, double x0, double y0)
{
    int any = 0;

    cairo_save(cr);
    cairo_new_path(cr);
    for (size_t j = 0; j < f->ay.n; j++)
        for (size_t i = 0; i < f->ax.n; i++)
            if (valid[j * f->ax.n + i] == 0.0) {
                cell_rect(cr, f, i, j, x0, y0);
                any = 1;
            }
    if (any) {
        cairo_clip(cr);
        for (double t = -f->ph; t < f->pw; t += HATCH_STEP) {
            cairo_move_to(cr, x0 + t, y0 + f->ph);
            cairo_line_to(cr, x0 + t + f->ph, y0);
        }
        stroke_cased(cr, 1.5, 1.0, 0.55, 0.1);
    }
    cairo_new_path(cr);
    cairo_restore(cr);
}

static void draw_lines(cairo_t *cr, const figure *f, const double *s, const double *ratio,
                       const double *feas, vg_segment *seg, size_t cap, double x0, double y0)
{
    cairo_save(cr);
    cairo_rectangle(cr, x0, y0, f->pw, f->ph);
    cairo_clip(cr);
    cairo_set_line_cap(cr, CAIRO_LINE_CAP_ROUND);
    for (size_t k = 0; k < f->fs->ncontours; k++) {
        static const double dash[] = {2.5, 1.5};
        contour_path(cr, f, s, f->fs->contours[k], seg, cap, x0, y0);
        cairo_set_dash(cr, dash, 2, 0);
        cairo_set_line_width(cr, 0.7);
        cairo_set_source_rgb(cr, 0.15, 0.15, 0.15);
        cairo_stroke(cr);
    }
    if (ratio) {
        contour_path(cr, f, ratio, 0.0, seg, cap, x0, y0);
        stroke_cased(cr, 2.4, 1.0, 1.1, 0.0);
    }
    if (feas) {
        contour_path(cr, f, feas, 0.5, seg, cap, x0, y0);
        stroke_cased(cr, 3.0, 0.0, 1.2, 1.0);
    }
    cairo_restore(cr);
}

static int mark_shown(const figure *f, const vg_mark *m, size_t c, size_t r)
{
    int pp = f->fs->panels, rp = f->fs->rows;

    if (!m->has[f->ax.p] || !m->has[f->ay.p])
        return 0;
    if (pp >= 0 && m->has[pp] && fabs(m->v[pp] - f->cfg->param[pp].v[c]) > 1e-9 * fabs(m->v[pp]))
        return 0;
    if (rp >= 0 && m->has[rp] && fabs(m->v[rp] - f->cfg->param[rp].v[r]) > 1e-9 * fabs(m->v[rp]))
        return 0;
    return 1;
}

static void draw_marks(cairo_t *cr, const figure *f, size_t c, size_t r, double x0, double y0)
{
    for (size_t k = 0; k < f->fs->nmarks; k++) {
        const vg_mark *m = &f->fs->marks[k];
        double dx, dy, px, py, tw, th;
        char *label;
        if (!mark_shown(f, m, c, r))
            continue;
        dx = f->ax.log ? log10(m->v[f->ax.p] / f->ax.scale) : m->v[f->ax.p] / f->ax.scale;
        dy = f->ay.log ? log10(m->v[f->ay.p] / f->ay.scale) : m->v[f->ay.p] / f->ay.scale;
        px = x0 + f->pw * axis_frac(&f->ax, dx);
        py = y0 + f->ph * (1.0 - axis_frac(&f->ay, dy));
        cairo_arc(cr, px, py, 2.4, 0, 2 * VG_PI);
        cairo_set_source_rgb(cr, 0, 0, 0);
        cairo_fill_preserve(cr);
        cairo_set_source_rgb(cr, 1, 1, 1);
        cairo_set_line_width(cr, 0.8);
        cairo_stroke(cr);
        label = g_markup_escape_text(m->label, -1);
        vg_draw_text_size(cr, f->fs->font, FS_TICK, label, &tw, &th);
        if (px + 4.0 + tw <= x0 + f->pw) /* right of the point, else left of it */
            vg_draw_text_halo(cr, f->fs->font, FS_TICK, label, px + 4.0, py, 0.0, 0.5);
        else
            vg_draw_text_halo(cr, f->fs->font, FS_TICK, label, px - 4.0, py, 1.0, 0.5);
        g_free(label);
    }
}

static void tick_values(const axis_view *a, vg_ticks *t)
{
    vg_error e;
    double lo = a->lo, hi = a->hi;

    if (a->log) {
        if (vg_ticks_log(pow(10.0, lo), pow(10.0, hi), 5, t, &e) != VG_OK)
            t->n = 0;
    } else if (vg_ticks_linear(lo, hi, 5, t, &e) != VG_OK) {
        t->n = 0;
    }
}

static double tick_pos(const axis_view *a, double v)
{
    return axis_frac(a, a->log ? log10(v) : v);
}

static void draw_axes(cairo_t *cr, const figure *f, size_t c, size_t r, double x0, double y0)
{
    vg_ticks t;

    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_line_width(cr, 0.6);
    tick_values(&f->ax, &t);
    for (size_t k = 0; k < t.n; k++) {
        double x = x0 + f->pw * tick_pos(&f->ax, t.v[k]), len = t.major[k] ? TICK_LEN : TICK_LEN / 2;
        cairo_move_to(cr, x, y0 + f->ph);
        cairo_line_to(cr, x, y0 + f->ph + len);
        /* a label at the right end would run into the next panel's first */
        if (t.major[k] && r + 1 == f->nrow && (c + 1 == f->ncol || x < x0 + f->pw - 2 * FS_TICK))
            vg_draw_text(cr, f->fs->font, FS_TICK, t.label[k], x, y0 + f->ph + TICK_LEN + 1, 0.5, 0, 0);
    }
    tick_values(&f->ay, &t);
    for (size_t k = 0; k < t.n; k++) {
        double y = y0 + f->ph * (1.0 - tick_pos(&f->ay, t.v[k])), len = t.major[k] ? TICK_LEN : TICK_LEN / 2;
        cairo_move_to(cr, x0, y);
        cairo_line_to(cr, x0 - len, y);
        if (t.major[k] && c == 0)
            vg_draw_text(cr, f->fs->font, FS_TICK, t.label[k], x0 - TICK_LEN - 1.5, y, 1, 0.5, 0);
    }
    cairo_stroke(cr);
    cairo_rectangle(cr, x0, y0, f->pw, f->ph);
    cairo_stroke(cr);
}

/* Column value above each panel; row value, rotated, right of the last
 * column. */
static void panel_title(cairo_t *cr, const figure *f, size_t c, size_t r, double x0, double y0)
{
    char t[160];

    if (f->fs->panels >= 0) {
        value_markup(f->cfg, (vg_param_id)f->fs->panels, c, t, sizeof t);
        vg_draw_text(cr, f->fs->font, FS_PANEL, t, x0 + f->pw / 2, y0 - 2.0, 0.5, 1.0, 0);
    }
    if (f->fs->rows >= 0 && c + 1 == f->ncol) {
        value_markup(f->cfg, (vg_param_id)f->fs->rows, r, t, sizeof t);
        vg_draw_text(cr, f->fs->font, FS_PANEL, t, x0 + f->pw + 3.0, y0 + f->ph / 2, 0.5, 0.0,
                     VG_PI / 2);
    }
}

static vg_status draw_panels(cairo_t *cr, const figure *f, vg_error *err)
{
    size_t cells = f->ax.n * f->ay.n, cap = 2 * cells + 4;
    double *s = malloc(cells * sizeof *s), *q = malloc(cells * sizeof *q);
    double *w = f->feasible ? malloc(cells * sizeof *w) : NULL;
    double *h = f->valid ? malloc(cells * sizeof *h) : NULL;
    vg_segment *seg = malloc(cap * sizeof *seg);

    if (!s || !q || !seg || (f->feasible && !w) || (f->valid && !h)) {
        free(s);
        free(q);
        free(w);
        free(h);
        free(seg);
        return vg_error_set(err, VG_ENOMEM, "out of memory for a figure panel");
    }
    for (size_t r = 0; r < f->nrow; r++)
        for (size_t c = 0; c < f->ncol; c++) {
            double x0, y0;
            panel_origin(f, c, r, &x0, &y0);
            slice(f, f->z, c, r, s);
            if (f->ratio)
                slice(f, f->ratio, c, r, q);
            if (w)
                slice(f, f->feasible, c, r, w);
            if (f->ax.uniform && f->ay.uniform)
                draw_cells_image(cr, f, s, x0, y0);
            else
                draw_cells_rects(cr, f, s, x0, y0);
            if (h) {
                slice(f, f->valid, c, r, h);
                draw_hatch(cr, f, h, x0, y0);
            }
            draw_lines(cr, f, s, f->ratio ? q : NULL, w, seg, cap, x0, y0);
            draw_marks(cr, f, c, r, x0, y0);
            draw_axes(cr, f, c, r, x0, y0);
            panel_title(cr, f, c, r, x0, y0);
        }
    free(s);
    free(q);
    free(w);
    free(h);
    free(seg);
    return VG_OK;
}

static void colorbar_triangle(cairo_t *cr, double x, double y, double w, double dir)
{
    cairo_move_to(cr, x, y);
    cairo_line_to(cr, x + w, y);
    cairo_line_to(cr, x + w / 2, y - dir * w);
    cairo_close_path(cr);
}

/* The colour ramp as a 1 x N image, top = hi, scaled without smoothing. */
static void colorbar_image(cairo_t *cr, const figure *f, double x, double y, double w, double h)
{
    cairo_surface_t *img = cairo_image_surface_create(CAIRO_FORMAT_RGB24, 1, VG_CMAP_N);
    unsigned char *px = cairo_image_surface_get_data(img);
    int stride = cairo_image_surface_get_stride(img);

    cairo_surface_flush(img);
    for (int k = 0; k < VG_CMAP_N; k++) {
        unsigned char c[3];
        vg_cmap_eval8(&f->cmap, (double)(VG_CMAP_N - 1 - k) / (VG_CMAP_N - 1), c);
        *(uint32_t *)(void *)(px + (size_t)stride * (size_t)k) =
            (uint32_t)c[0] << 16 | (uint32_t)c[1] << 8 | c[2];
    }
    cairo_surface_mark_dirty(img);
    cairo_save(cr);
    cairo_translate(cr, x, y);
    cairo_scale(cr, w, h / VG_CMAP_N);
    cairo_set_source_surface(cr, img, 0, 0);
    cairo_pattern_set_filter(cairo_get_source(cr), CAIRO_FILTER_NEAREST);
    cairo_rectangle(cr, 0, 0, 1, VG_CMAP_N);
    cairo_fill(cr);
    cairo_restore(cr);
    cairo_surface_destroy(img);
}

static void draw_colorbar(cairo_t *cr, const figure *f)
{
    double x = f->left + (double)f->ncol * f->pw + (double)(f->ncol - 1) * f->gapx + 12.0 +
               (f->fs->rows >= 0 ? ROW_LABEL_SPACE : 0.0);
    double y0 = f->top + f->ptitle, total = (double)f->nrow * (f->ph + f->gapy) - f->gapy;
    double h = fmin(total, 216.0), y = y0 + (total - h) / 2, w = 8.0, rgb[3];
    vg_ticks t;
    vg_error e;

    colorbar_image(cr, f, x, y, w, h);
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_line_width(cr, 0.6);
    if (f->clamp_hi) {
        vg_cmap_eval(&f->cmap, 1.0, rgb);
        colorbar_triangle(cr, x, y - 0.5, w, 1.0);
        cairo_set_source_rgb(cr, rgb[0], rgb[1], rgb[2]);
        cairo_fill_preserve(cr);
        cairo_set_source_rgb(cr, 0, 0, 0);
        cairo_stroke(cr);
    }
    if (f->clamp_lo) {
        vg_cmap_eval(&f->cmap, 0.0, rgb);
        colorbar_triangle(cr, x, y + h + 0.5, w, -1.0);
        cairo_set_source_rgb(cr, rgb[0], rgb[1], rgb[2]);
        cairo_fill_preserve(cr);
        cairo_set_source_rgb(cr, 0, 0, 0);
        cairo_stroke(cr);
    }
    cairo_rectangle(cr, x, y, w, h);
    cairo_stroke(cr);
    if (vg_ticks_linear(f->lo, f->hi, 5, &t, &e) != VG_OK)
        t.n = 0;
    for (size_t k = 0; k < t.n; k++) {
        double ty = y + h * (1.0 - (t.v[k] - f->lo) / (f->hi - f->lo));
        cairo_move_to(cr, x + w, ty);
        cairo_line_to(cr, x + w + (t.major[k] ? TICK_LEN : TICK_LEN / 2), ty);
        if (t.major[k])
            vg_draw_text(cr, f->fs->font, FS_TICK, t.label[k], x + w + TICK_LEN + 1.5, ty, 0, 0.5, 0);
    }
    cairo_stroke(cr);
    if (!f->field && f->metric == VG_M_LOG10_RATIO) { /* the boundary's level on the bar */
        cairo_move_to(cr, x - 2, y + h / 2);
        cairo_line_to(cr, x + w + 2, y + h / 2);
        cairo_set_line_width(cr, 1.1);
        cairo_stroke(cr);
    }
    vg_draw_text(cr, f->fs->font, FS_LABEL, z_markup(f), x + w + 30.0, y + h / 2,
                 0.5, 0.0, VG_PI / 2);
    if (f->clamp_lo || f->clamp_hi)
        vg_draw_text(cr, f->fs->font, FS_SUB - 1.0, "▲▼ clamped", x - 2.0,
                     y + h + (f->clamp_lo ? w : 0) + 3.0, 0, 0, 0);
}

static void draw_titles(cairo_t *cr, const figure *f)
{
    double y = 4.0;

    cairo_set_source_rgb(cr, 0, 0, 0);
    y += 1.25 * FS_TITLE;
    vg_draw_text(cr, f->fs->font, FS_TITLE, f->title, f->W / 2, y, 0.5, 1.0, 0);
    vg_draw_text(cr, f->fs->font, FS_SUB, f->sub, f->W / 2, y + 1.0, 0.5, 0.0, 0);
    /* axis labels: x under the bottom row, y left of the first column */
    vg_draw_text(cr, f->fs->font, FS_LABEL, f->ax.label,
                 f->left + ((double)f->ncol * (f->pw + f->gapx) - f->gapx) / 2,
                 f->H - 4.0, 0.5, 1.0, 0);
    vg_draw_text(cr, f->fs->font, FS_LABEL, f->ay.label, 4.0,
                 f->top + f->ptitle + ((double)f->nrow * (f->ph + f->gapy) - f->gapy) / 2,
                 0.5, 0.0, VG_PI / 2);
}

/* ------------------------------------------------------------- layout --- */

static void layout(figure *f, int nsub_lines)
{
    double right = COLORBAR_SPACE + (f->fs->rows >= 0 ? ROW_LABEL_SPACE : 0.0);

    f->W = f->fs->width_in * 72.0;
    f->left = 44.0;
    f->top = 8.0 + 1.3 * FS_TITLE + 1.3 * FS_SUB * nsub_lines + 4.0;
    f->ptitle = f->fs->panels >= 0 ? 1.4 * FS_PANEL : 0.0;
    f->gapx = 8.0;
    f->pw = (f->W - f->left - right - (double)(f->ncol - 1) * f->gapx) / (double)f->ncol;
    f->ph = f->pw * PANEL_ASPECT;
    f->gapy = 8.0 + f->ptitle;
    f->H = f->top + f->ptitle + (double)f->nrow * f->ph + (double)(f->nrow - 1) * f->gapy +
           TICK_LEN + 1.6 * FS_TICK + 1.4 * FS_LABEL + 4.0;
}

/* "odorant velarone (20 modes) against velarone-d" for a sweep that maps a
 * many-mode odorant; names escaped for Pango markup. */
static void odorant_markup(const vg_config *cfg, char *buf, size_t len)
{
    const vg_odorant *od = vg_config_mapped(cfg), *other = vg_config_against(cfg);
    char *a = g_markup_escape_text(od->name, -1);
    char *b = g_markup_escape_text(other ? other->name : "", -1);
    char modes[32] = "";

    if (od->light)
        snprintf(modes, sizeof modes, " (%zu modes)", od->light->n);
    snprintf(buf, len, "odorant %s%s%s%s", a, modes, other ? " against " : "", b);
    g_free(a);
    g_free(b);
}

static void titles(figure *f)
{
    char *t = g_markup_escape_text(f->cfg->title[0] ? f->cfg->title : "vibrogate sweep", -1);
    size_t used;

    snprintf(f->title, sizeof f->title, "%s", t);
    g_free(t);
    used = (size_t)snprintf(f->sub, sizeof f->sub, "%s", z_markup(f));
    for (int p = 0; p < VG_NPARAM && used < sizeof f->sub; p++) {
        char v[160];
        if (p == (int)f->ax.p || p == (int)f->ay.p || p == f->fs->panels || p == f->fs->rows)
            continue;
        if ((p == VG_P_MODE || p == VG_P_HUANG_RHYS) && vg_config_mapped(f->cfg)) {
            if (p == VG_P_HUANG_RHYS) /* the odorant's table replaces both */
                continue;
            odorant_markup(f->cfg, v, sizeof v);
        } else if (f->field && f->cfg->uncertainty.has[p])
            snprintf(v, sizeof v, "%s from its prior", symbol_markup((vg_param_id)p));
        else
            value_markup(f->cfg, (vg_param_id)p, f->fixed[p], v, sizeof v);
        used += (size_t)snprintf(f->sub + used, sizeof f->sub - used, ",  %s", v);
    }
    if (used < sizeof f->sub && !f->ratio)
        snprintf(f->sub + used, sizeof f->sub - used, "\n%s%s;  model prediction",
                 f->field && f->field->note ? f->field->note : "",
                 f->valid ? ";  hatched: model not valid" : "");
    else if (used < sizeof f->sub)
        snprintf(f->sub + used, sizeof f->sub - used,
                 "\nblack line: <i>k</i><sub>assisted</sub> = <i>k</i><sub>elastic</sub>%s%s"
                 "%s;  model prediction", f->fs->ncontours ? ";  dashed: extra levels" : "",
                 f->feasible ? ";  white line: feasibility window" : "",
                 f->valid ? ";  hatched: model not valid" : "");
}

/* ----------------------------------------------------------- per file --- */

static vg_status draw_one(const figure *f, vg_figure_format fmt, const char *path,
                          const vg_figure_meta *meta, vg_error *err)
{
    vg_canvas cv;
    char plain[512];
    vg_status st;

    snprintf(plain, sizeof plain, "%s: %s", f->cfg->title[0] ? f->cfg->title : "vibrogate sweep",
             z_name(f));
    st = vg_canvas_open(&cv, fmt, path, f->W, f->H, f->fs->dpi, plain, meta, err);
    if (st != VG_OK)
        return st;
    draw_titles(cv.cr, f);
    st = draw_panels(cv.cr, f, err);
    if (st != VG_OK) {
        vg_canvas_abort(&cv);
        return st;
    }
    draw_colorbar(cv.cr, f);
    st = vg_canvas_close(&cv, f->cfg->text, err);
    if (st == VG_OK && !meta->quiet)
        fprintf(stderr, "vibrogate: wrote %s\n", path);
    return st;
}

/* "DIR/map-log10_ratio-temperature03" for this figure's fixed axes. */
static void file_stem(const figure *f, const char *dir, char *buf, size_t len)
{
    size_t used = (size_t)snprintf(buf, len, "%s/map-%s", dir, z_name(f));

    for (size_t k = 0; k < f->g->naxes && used < len; k++) {
        vg_param_id p = f->g->axis[k];
        int digits = 1;
        if (p == f->ax.p || p == f->ay.p || (int)p == f->fs->panels || (int)p == f->fs->rows)
            continue;
        for (size_t n = f->cfg->param[p].n - 1; n >= 10; n /= 10)
            digits++;
        used += (size_t)snprintf(buf + used, len - used, "-%s%0*zu", vg_param_get(p)->key,
                                 digits, f->fixed[p]);
    }
}

static vg_status draw_formats(const figure *f, const char *dir, const vg_figure_meta *meta,
                              vg_error *err)
{
    static const vg_figure_format fmts[] = {VG_FIG_PNG, VG_FIG_PDF, VG_FIG_SVG};
    char stem[4096], path[4200];

    file_stem(f, dir, stem, sizeof stem);
    for (size_t k = 0; k < 3; k++) {
        vg_status st;
        if (!(f->fs->formats & fmts[k]))
            continue;
        snprintf(path, sizeof path, "%s.%s", stem, vg_canvas_ext(fmts[k]));
        st = draw_one(f, fmts[k], path, meta, err);
        if (st != VG_OK)
            return st;
    }
    return VG_OK;
}

/* Step through every combination of the axes that are not drawn inside a
 * figure (odometer order, fastest axis last). */
static int next_combination(figure *f)
{
    for (size_t k = f->g->naxes; k-- > 0;) {
        vg_param_id p = f->g->axis[k];
        if (p == f->ax.p || p == f->ay.p || (int)p == f->fs->panels || (int)p == f->fs->rows)
            continue;
        if (++f->fixed[p] < f->cfg->param[p].n)
            return 1;
        f->fixed[p] = 0;
    }
    return 0;
}

static vg_status draw_metric(figure *f, const char *dir, const vg_figure_meta *meta, vg_error *err)
{
    vg_status st;

    memset(f->fixed, 0, sizeof f->fixed);
    f->diverging = !f->field && diverging_metric(f->metric);
    st = vg_cmap_build(&f->cmap, f->diverging ? VG_CMAP_DIVERGING : VG_CMAP_SEQUENTIAL, err);
    do {
        if (st == VG_OK)
            st = colour_range(f, err);
        if (st == VG_OK) {
            titles(f);
            layout(f, 2);
            st = draw_formats(f, dir, meta, err);
        }
    } while (st == VG_OK && next_combination(f));
    return st;
}

static void figure_free(figure *f)
{
    free((double *)f->ratio);
    free((double *)f->feasible);
    free((double *)f->valid);
    axis_free(&f->ax);
    axis_free(&f->ay);
}

/* Everything but the metric itself: axes, panel counts, the ratio field. */
static vg_status figure_init(figure *f, const vg_dataset *ds, vg_error *err)
{
    double *ratio = NULL;
    vg_status st;

    memset(f, 0, sizeof *f);
    f->cfg = &ds->cfg;
    f->g = &ds->grid;
    f->fs = &ds->cfg.fig;
    f->ncol = f->fs->panels >= 0 ? f->cfg->param[f->fs->panels].n : 1;
    f->nrow = f->fs->rows >= 0 ? f->cfg->param[f->fs->rows].n : 1;
    st = axis_init(&f->ax, f->cfg, f->fs->x, err);
    if (st == VG_OK)
        st = axis_init(&f->ay, f->cfg, f->fs->y, err);
    /* the dominance boundary needs log10_ratio; without it (not stored, or
     * not computable, as with the FFT engine) the maps have no boundary */
    if (st == VG_OK && ds->cfg.metric_on[VG_M_LOG10_RATIO])
        st = read_metric(ds, VG_M_LOG10_RATIO, &ratio, err);
    f->ratio = ratio;
    if (st == VG_OK && ds->cfg.feasibility.n > 0) {
        double *feas = NULL;
        st = read_metric(ds, VG_M_FEASIBLE, &feas, err);
        f->feasible = feas;
    }
    if (st == VG_OK && ds->cfg.metric_on[VG_M_VALID]) {
        double *valid = NULL;
        st = read_metric(ds, VG_M_VALID, &valid, err);
        f->valid = valid;
    }
    if (st != VG_OK)
        figure_free(f);
    return st;
}

vg_status vg_figure_maps(const vg_dataset *ds, const char *dir, const vg_figure_meta *meta,
                         vg_error *err)
{
    figure f;
    double *z = NULL;
    vg_status st = figure_init(&f, ds, err);

    if (st != VG_OK)
        return st;
    for (size_t k = 0; st == VG_OK && k < f.fs->nmaps; k++) {
        f.metric = f.fs->maps[k];
        st = read_metric(ds, f.metric, &z, err);
        f.z = z;
        if (st == VG_OK)
            st = draw_metric(&f, dir, meta, err);
        free(z);
        z = NULL;
    }
    figure_free(&f);
    return st;
}

vg_status vg_figure_field(const vg_config *cfg, const vg_grid *g, const double *field,
                          const vg_field_spec *spec, const char *dir,
                          const vg_figure_meta *meta, vg_error *err)
{
    figure f;
    vg_status st;

    memset(&f, 0, sizeof f);
    f.cfg = cfg;
    f.g = g;
    f.fs = &cfg->fig;
    f.field = spec;
    f.z = field;
    f.ncol = f.fs->panels >= 0 ? cfg->param[f.fs->panels].n : 1;
    f.nrow = f.fs->rows >= 0 ? cfg->param[f.fs->rows].n : 1;
    st = axis_init(&f.ax, cfg, f.fs->x, err);
    if (st == VG_OK)
        st = axis_init(&f.ay, cfg, f.fs->y, err);
    if (st == VG_OK)
        st = draw_metric(&f, dir, meta, err);
    figure_free(&f);
    return st;
}

vg_status vg_figure_geometry(const vg_dataset *ds, vg_metric_id m, const size_t fixed[6],
                             vg_figure_geom *geom, vg_error *err)
{
    figure f;
    double *z = NULL;
    vg_status st = figure_init(&f, ds, err);

    if (st != VG_OK)
        return st;
    f.metric = m;
    f.diverging = diverging_metric(m);
    for (int p = 0; p < VG_NPARAM; p++)
        f.fixed[p] = fixed[p];
    f.fixed[f.ax.p] = f.fixed[f.ay.p] = 0;
    if (f.fs->panels >= 0)
        f.fixed[f.fs->panels] = 0;
    if (f.fs->rows >= 0)
        f.fixed[f.fs->rows] = 0;
    st = read_metric(ds, m, &z, err);
    f.z = z;
    if (st == VG_OK)
        st = colour_range(&f, err);
    if (st == VG_OK) {
        layout(&f, 2);
        *geom = (vg_figure_geom){f.W, f.H, f.ncol, f.nrow, f.left, f.top + f.ptitle, f.pw, f.ph,
                                 f.gapx, f.gapy, f.ax.lo, f.ax.hi, f.ay.lo, f.ay.hi, f.ax.log,
                                 f.ay.log, f.ax.scale, f.ay.scale, f.lo, f.hi, f.diverging,
                                 f.clamp_lo, f.clamp_hi};
    }
    free(z);
    figure_free(&f);
    return st;
}
