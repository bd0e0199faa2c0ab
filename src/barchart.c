/*
 * Ranked horizontal bar charts (see vg_barchart.h), drawn on the figure
 * module's canvases (src/draw.c: PNG with metadata, PDF and SVG through
 * temporary files).  The layout is measured once on a scratch surface at
 * 72 units per inch with hinting off, so it is the same in every format and
 * at every resolution.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "draw.h"
#include "fmt.h"
#include "vg_barchart.h"
#include "vg_plotaux.h"

#define FS_TITLE 10.0
#define FS_SUB 7.5
#define FS_LABEL 8.5
#define FS_ROW 8.0
#define FS_TICK 7.0
#define FS_VALUE 6.5
#define FS_NOTE 6.5
#define TICK_LEN 3.0
#define MARGIN 8.0

/* Bar fills, one per series: a dark blue-green and a light ochre, told
 * apart in grey scale too. */
static const double series_rgb[VG_BAR_MAX_SERIES][3] = {{0.16, 0.38, 0.45}, {0.87, 0.67, 0.33}};

typedef struct {
    const vg_barchart *bc;
    const vg_figure_spec *fig;
    vg_barchart_geom g;
    double title_y, sub_y, legend_y, tick_y, axis_y, note_y;
    double title_pt, sub_pt;   /* title and subtitle sizes, shrunk to fit the width */
    int legend;
} chart;

static int finite_item(const vg_bar_item *it, size_t s)
{
    if (!it->defined[s])
        return 1;
    if (!isfinite(it->value[s]))
        return 0;
    return !it->has_interval[s] ||
           (isfinite(it->lo[s]) && isfinite(it->hi[s]) && it->lo[s] <= it->hi[s]);
}

vg_status vg_barchart_check(const vg_barchart *bc, vg_error *err)
{
    if (bc->nseries < 1 || bc->nseries > VG_BAR_MAX_SERIES)
        return vg_error_set(err, VG_ENUMERIC, "bar chart: %zu series (allowed: 1 to %d)",
                            bc->nseries, VG_BAR_MAX_SERIES);
    if (bc->nitems < 1 || bc->nitems > VG_BAR_MAX_ITEMS || !bc->items)
        return vg_error_set(err, VG_ENUMERIC, "bar chart: %zu rows (allowed: 1 to %d)",
                            bc->nitems, VG_BAR_MAX_ITEMS);
    if (bc->rank_series >= bc->nseries)
        return vg_error_set(err, VG_ENUMERIC, "bar chart: ranking series %zu of %zu",
                            bc->rank_series, bc->nseries);
    if (!bc->title || !bc->axis_label)
        return vg_error_set(err, VG_ENUMERIC, "bar chart: no title or no axis label");
    if (!(bc->range_lo <= bc->range_hi) || !isfinite(bc->range_lo) || !isfinite(bc->range_hi))
        return vg_error_set(err, VG_ENUMERIC, "bar chart: bad axis range %g .. %g",
                            bc->range_lo, bc->range_hi);
    for (size_t i = 0; i < bc->nitems; i++) {
        if (!bc->items[i].label)
            return vg_error_set(err, VG_ENUMERIC, "bar chart: row %zu has no label", i);
        for (size_t s = 0; s < bc->nseries; s++)
            if (!finite_item(&bc->items[i], s))
                return vg_error_set(err, VG_ENUMERIC, "bar chart: row '%s', series %zu: "
                                    "a value or interval that is not finite, or lo > hi",
                                    bc->items[i].label, s);
    }
    return VG_OK;
}

/* ----------------------------------------------------------- ordering --- */

static double order_key(const vg_barchart *bc, size_t i)
{
    const vg_bar_item *it = &bc->items[i];
    size_t s = bc->rank_series;

    if (!it->defined[s])
        return -HUGE_VAL;
    return bc->order == VG_BAR_ORDER_ABS ? fabs(it->value[s]) : it->value[s];
}

static void order_rows(const vg_barchart *bc, size_t *order)
{
    for (size_t i = 0; i < bc->nitems; i++)
        order[i] = i;
    if (bc->order == VG_BAR_ORDER_GIVEN)
        return;
    /* insertion sort, largest first; stable, so ties keep the given order */
    for (size_t i = 1; i < bc->nitems; i++) {
        size_t t = order[i], j = i;
        while (j > 0 && order_key(bc, order[j - 1]) < order_key(bc, t)) {
            order[j] = order[j - 1];
            j--;
        }
        order[j] = t;
    }
}

/* ------------------------------------------------------------- layout --- */

static void value_range(const vg_barchart *bc, double *lo, double *hi)
{
    *lo = fmin(0.0, bc->range_lo);
    *hi = fmax(0.0, bc->range_hi);
    for (size_t i = 0; i < bc->nitems; i++)
        for (size_t s = 0; s < bc->nseries; s++) {
            const vg_bar_item *it = &bc->items[i];
            if (!it->defined[s])
                continue;
            *lo = fmin(*lo, it->value[s]);
            *hi = fmax(*hi, it->value[s]);
            if (it->has_interval[s]) {
                *lo = fmin(*lo, it->lo[s]);
                *hi = fmax(*hi, it->hi[s]);
            }
        }
}

static double markup_width(cairo_t *cr, const char *font, double size, const char *markup,
                           double *h)
{
    double w, hh;

    vg_draw_text_size(cr, font, size, markup, &w, &hh);
    if (h)
        *h = hh;
    return w;
}

/* The size at most size_pt (and at least 60 % of it) at which markup fits
 * in avail points: long scenario titles shrink instead of running off the
 * page. */
static double fit_size(cairo_t *cr, const char *font, double size_pt, const char *markup,
                       double avail)
{
    double size = size_pt;

    /* measured at each candidate size: the width is not quite proportional
     * to the size (glyph metrics are rounded per size) */
    for (int k = 0; k < 24 && size > 0.6 * size_pt; k++) {
        double w = markup_width(cr, font, size, markup, NULL);
        if (!(w > avail) || !(avail > 0.0))
            return size;
        size *= fmax(0.9, avail / w);
        size = size * 0.995;
    }
    return fmax(size, 0.6 * size_pt);
}

static vg_status layout(chart *c, cairo_t *cr, vg_error *err)
{
    const vg_barchart *bc = c->bc;
    const char *font = c->fig->font;
    vg_barchart_geom *g = &c->g;
    double label_w = 0.0, th, sh = 0.0, lh = 0.0, nh = 0.0, span, pad_lo, pad_hi;
    double lo, hi;

    memset(g, 0, sizeof *g);
    g->width_pt = c->fig->width_in * 72.0;
    for (size_t i = 0; i < bc->nitems; i++)
        label_w = fmax(label_w, markup_width(cr, font, FS_ROW, bc->items[i].label, NULL));
    c->title_pt = fit_size(cr, font, FS_TITLE, bc->title, g->width_pt - 2.0 * MARGIN);
    markup_width(cr, font, c->title_pt, bc->title, &th);
    c->sub_pt = FS_SUB;
    if (bc->subtitle && *bc->subtitle) {
        c->sub_pt = fit_size(cr, font, FS_SUB, bc->subtitle, g->width_pt - 2.0 * MARGIN);
        markup_width(cr, font, c->sub_pt, bc->subtitle, &sh);
    }
    if (bc->note && *bc->note)
        markup_width(cr, font, FS_NOTE, bc->note, &nh);
    c->legend = bc->nseries == 2 || (bc->nseries == 1 && bc->series_name[0]);
    if (c->legend)
        lh = 1.5 * FS_ROW;

    c->title_y = MARGIN;
    c->sub_y = c->title_y + th + 1.0;
    c->legend_y = c->sub_y + sh + 4.0;
    g->x0 = MARGIN + fmin(label_w, 0.45 * g->width_pt) + 6.0;
    g->y0 = c->legend_y + lh + 2.0;
    g->w = g->width_pt - g->x0 - 1.5 * MARGIN;
    g->bar_h = bc->nseries == 1 ? 9.0 : 6.5;
    g->row_h = (double)bc->nseries * g->bar_h + 7.0;
    for (size_t s = 0; s < bc->nseries; s++)
        g->bar_top[s] = 3.5 + (double)s * g->bar_h;
    g->nrows = bc->nitems;
    g->h = (double)g->nrows * g->row_h;
    c->tick_y = g->y0 + g->h + TICK_LEN + 1.0;
    c->axis_y = c->tick_y + 1.5 * FS_TICK;
    c->note_y = c->axis_y + 1.5 * FS_LABEL;
    g->height_pt = c->note_y + nh + MARGIN;
    if (!(g->w > 20.0))
        return vg_error_set(err, VG_ENUMERIC, "bar chart: the row labels leave no room for "
                            "bars at a width of %g in", c->fig->width_in);

    value_range(bc, &lo, &hi);
    if (lo == hi) { /* every value 0 */
        lo = -1.0;
        hi = 1.0;
    }
    span = hi - lo;
    if (!isfinite(span))
        return vg_error_set(err, VG_ENUMERIC, "bar chart: values too large to plot "
                            "(%g .. %g)", lo, hi);
    /* room for the printed values beside the bar ends */
    pad_lo = lo < 0.0 ? (bc->show_values ? 0.14 : 0.04) * span : 0.0;
    pad_hi = hi > 0.0 ? (bc->show_values ? 0.14 : 0.04) * span : 0.0;
    g->lo = lo - pad_lo;
    g->hi = hi + pad_hi;
    order_rows(bc, g->order);
    return VG_OK;
}

static vg_status with_scratch(chart *c, vg_error *err)
{
    cairo_surface_t *s = cairo_image_surface_create(CAIRO_FORMAT_RGB24, 1, 1);
    cairo_t *cr = cairo_create(s);
    vg_status st = cairo_status(cr) == CAIRO_STATUS_SUCCESS
                   ? layout(c, cr, err)
                   : vg_error_set(err, VG_ENOMEM, "bar chart: cannot create a drawing surface");

    cairo_destroy(cr);
    cairo_surface_destroy(s);
    return st;
}

vg_status vg_barchart_geometry(const vg_barchart *bc, const vg_figure_spec *fig,
                               vg_barchart_geom *g, vg_error *err)
{
    chart c;
    vg_status st;

    memset(&c, 0, sizeof c);
    c.bc = bc;
    c.fig = fig;
    st = vg_barchart_check(bc, err);
    if (st == VG_OK)
        st = with_scratch(&c, err);
    if (st == VG_OK)
        *g = c.g;
    return st;
}

/* ------------------------------------------------------------ drawing --- */

static double xpos(const vg_barchart_geom *g, double v)
{
    return g->x0 + (v - g->lo) / (g->hi - g->lo) * g->w;
}

/* "%.3g" with a true minus sign (U+2212). */
static void value_text(double v, char *buf, size_t len)
{
    vg_fmt_minus(v, 3, buf, len);
}

static void draw_grid(cairo_t *cr, const chart *c, const vg_ticks *t)
{
    const vg_barchart_geom *g = &c->g;

    cairo_set_line_width(cr, 0.4);
    cairo_set_source_rgb(cr, 0.88, 0.88, 0.88);
    for (size_t k = 0; k < t->n; k++) {
        double x = xpos(g, t->v[k]);
        if (!t->major[k])
            continue;
        cairo_move_to(cr, x, g->y0);
        cairo_line_to(cr, x, g->y0 + g->h);
    }
    cairo_stroke(cr);
}

static void draw_axis(cairo_t *cr, const chart *c, const vg_ticks *t)
{
    const vg_barchart_geom *g = &c->g;

    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_line_width(cr, 0.6);
    cairo_move_to(cr, g->x0, g->y0 + g->h);
    cairo_line_to(cr, g->x0 + g->w, g->y0 + g->h);
    for (size_t k = 0; k < t->n; k++) {
        double x = xpos(g, t->v[k]);
        cairo_move_to(cr, x, g->y0 + g->h);
        cairo_line_to(cr, x, g->y0 + g->h + (t->major[k] ? TICK_LEN : 0.6 * TICK_LEN));
    }
    cairo_stroke(cr);
    for (size_t k = 0; k < t->n; k++)
        if (t->major[k])
            vg_draw_text(cr, c->fig->font, FS_TICK, t->label[k], xpos(g, t->v[k]), c->tick_y,
                         0.5, 0.0, 0);
    vg_draw_text(cr, c->fig->font, FS_LABEL, c->bc->axis_label, g->x0 + g->w / 2, c->axis_y,
                 0.5, 0.0, 0);
}

static void draw_interval(cairo_t *cr, const chart *c, double lo, double hi, double yc)
{
    const vg_barchart_geom *g = &c->g;
    double cap = 0.3 * g->bar_h, x1 = xpos(g, lo), x2 = xpos(g, hi);

    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    cairo_set_line_width(cr, 0.7);
    cairo_move_to(cr, x1, yc);
    cairo_line_to(cr, x2, yc);
    cairo_move_to(cr, x1, yc - cap);
    cairo_line_to(cr, x1, yc + cap);
    cairo_move_to(cr, x2, yc - cap);
    cairo_line_to(cr, x2, yc + cap);
    cairo_stroke(cr);
}

static void draw_bar(cairo_t *cr, const chart *c, const vg_bar_item *it, size_t s, double ytop)
{
    const vg_barchart_geom *g = &c->g;
    double x0 = xpos(g, 0.0), yc = ytop + g->bar_h / 2;
    char txt[48];

    if (!it->defined[s]) {
        cairo_set_source_rgb(cr, 0.45, 0.45, 0.45);
        vg_draw_text(cr, c->fig->font, FS_VALUE, "n/a", x0 + 3.0, yc, 0.0, 0.5, 0);
        return;
    }
    double x1 = xpos(g, it->value[s]);
    cairo_rectangle(cr, fmin(x0, x1), ytop, fabs(x1 - x0), g->bar_h);
    cairo_set_source_rgb(cr, series_rgb[s][0], series_rgb[s][1], series_rgb[s][2]);
    cairo_fill(cr);
    if (it->has_interval[s])
        draw_interval(cr, c, it->lo[s], it->hi[s], yc);
    if (c->bc->show_values) {
        double xe = it->value[s] >= 0.0 ? fmax(x1, it->has_interval[s] ? xpos(g, it->hi[s]) : x1)
                                        : fmin(x1, it->has_interval[s] ? xpos(g, it->lo[s]) : x1);
        value_text(it->value[s], txt, sizeof txt);
        cairo_set_source_rgb(cr, 0, 0, 0);
        vg_draw_text(cr, c->fig->font, FS_VALUE, txt, xe + (it->value[s] >= 0.0 ? 2.0 : -2.0),
                     yc, it->value[s] >= 0.0 ? 0.0 : 1.0, 0.5, 0);
    }
}

static void draw_rows(cairo_t *cr, const chart *c)
{
    const vg_barchart_geom *g = &c->g;

    for (size_t r = 0; r < g->nrows; r++) {
        const vg_bar_item *it = &c->bc->items[g->order[r]];
        double y = g->y0 + (double)r * g->row_h;
        if (r % 2 == 1) { /* a faint band on every other row guides the eye */
            cairo_set_source_rgb(cr, 0.965, 0.965, 0.965);
            cairo_rectangle(cr, g->x0, y, g->w, g->row_h);
            cairo_fill(cr);
        }
        cairo_set_source_rgb(cr, 0, 0, 0);
        vg_draw_text(cr, c->fig->font, FS_ROW, it->label, g->x0 - 6.0, y + g->row_h / 2, 1.0,
                     0.5, 0);
    }
}

static void draw_bars(cairo_t *cr, const chart *c)
{
    const vg_barchart_geom *g = &c->g;

    for (size_t r = 0; r < g->nrows; r++)
        for (size_t s = 0; s < c->bc->nseries; s++)
            draw_bar(cr, c, &c->bc->items[g->order[r]], s,
                     g->y0 + (double)r * g->row_h + g->bar_top[s]);
    /* the zero line, over the bars' roots */
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_line_width(cr, 0.9);
    cairo_move_to(cr, xpos(g, 0.0), g->y0);
    cairo_line_to(cr, xpos(g, 0.0), g->y0 + g->h);
    cairo_stroke(cr);
}

static void draw_legend(cairo_t *cr, const chart *c)
{
    double x = c->g.x0 + c->g.w, y = c->legend_y + 0.75 * FS_ROW;

    for (size_t s = c->bc->nseries; s-- > 0;) {
        const char *name = c->bc->series_name[s] ? c->bc->series_name[s] : "";
        double w = markup_width(cr, c->fig->font, FS_ROW, name, NULL);
        cairo_set_source_rgb(cr, 0, 0, 0);
        vg_draw_text(cr, c->fig->font, FS_ROW, name, x, y, 1.0, 0.5, 0);
        x -= w + 3.0 + 9.0;
        cairo_set_source_rgb(cr, series_rgb[s][0], series_rgb[s][1], series_rgb[s][2]);
        cairo_rectangle(cr, x, y - 4.0, 9.0, 8.0);
        cairo_fill(cr);
        x -= 12.0;
    }
}

static void draw_chart(cairo_t *cr, const chart *c, const vg_ticks *t)
{
    const vg_barchart *bc = c->bc;

    cairo_set_source_rgb(cr, 0, 0, 0);
    vg_draw_text(cr, c->fig->font, c->title_pt, bc->title, c->g.width_pt / 2, c->title_y, 0.5,
                 0.0, 0);
    if (bc->subtitle && *bc->subtitle)
        vg_draw_text(cr, c->fig->font, c->sub_pt, bc->subtitle, c->g.width_pt / 2, c->sub_y,
                     0.5, 0.0, 0);
    if (c->legend)
        draw_legend(cr, c);
    draw_rows(cr, c);
    draw_grid(cr, c, t);
    draw_bars(cr, c);
    draw_axis(cr, c, t);
    if (bc->note && *bc->note) {
        cairo_set_source_rgb(cr, 0.3, 0.3, 0.3);
        vg_draw_text(cr, c->fig->font, FS_NOTE, bc->note, MARGIN, c->note_y, 0.0, 0.0, 0);
    }
}

static vg_status draw_file(const chart *c, const vg_ticks *t, vg_figure_format fmt,
                           const char *path, const vg_config *cfg, const vg_figure_meta *meta,
                           vg_error *err)
{
    vg_canvas cv;
    vg_status st = vg_canvas_open(&cv, fmt, path, c->g.width_pt, c->g.height_pt, c->fig->dpi,
                                  c->bc->plain_title ? c->bc->plain_title : "vibrogate", meta,
                                  err);

    if (st != VG_OK)
        return st;
    draw_chart(cv.cr, c, t);
    st = vg_canvas_close(&cv, cfg->text, err);
    if (st == VG_OK && !meta->quiet)
        fprintf(stderr, "vibrogate: wrote %s\n", path);
    return st;
}

vg_status vg_barchart_write(const vg_barchart *bc, const vg_config *cfg, unsigned formats,
                            const char *stem, const vg_figure_meta *meta, vg_error *err)
{
    static const vg_figure_format fmts[] = {VG_FIG_PNG, VG_FIG_PDF, VG_FIG_SVG};
    chart c;
    vg_ticks t;
    vg_status st;

    memset(&c, 0, sizeof c);
    c.bc = bc;
    c.fig = &cfg->fig;
    st = vg_barchart_check(bc, err);

    if (st == VG_OK && formats)
        st = with_scratch(&c, err);
    if (st == VG_OK && formats)
        st = vg_ticks_linear(c.g.lo, c.g.hi, 6, &t, err);
    for (size_t k = 0; k < 3 && st == VG_OK; k++) {
        size_t len = strlen(stem) + 8;
        char *path;
        if (!(formats & fmts[k]))
            continue;
        path = malloc(len);
        if (!path)
            return vg_error_set(err, VG_ENOMEM, "out of memory writing '%s'", stem);
        snprintf(path, len, "%s.%s", stem, vg_canvas_ext(fmts[k]));
        st = draw_file(&c, &t, fmts[k], path, cfg, meta, err);
        free(path);
    }
    return st;
}
