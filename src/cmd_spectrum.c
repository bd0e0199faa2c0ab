/*
 * The spectrum command: for one receptor and odorant (every parameter
 * scalar except, optionally, the gap), the rate as a function of the gap on
 * a log axis -- the elastic channel, each significant assisted channel, the
 * total and the bare Marcus rate -- with markers at lambda and
 * lambda + n*hbar*omega, where channel n is resonant.  Same formats and
 * metadata as the maps.
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <glib.h>

#include "cmd.h"
#include "fsutil.h"
#include "draw.h"
#include "vg_colormap.h"
#include "vg_config.h"
#include "vg_const.h"
#include "vg_metrics.h"
#include "vg_plotaux.h"

#define NS 1201          /* gap samples */
#define MAXCH 24         /* channels drawn */
#define MIN_DECADES 8.0  /* y range below the highest curve, at least */
#define MAX_DECADES 30.0 /* and at most */
#define MARKER_EDGE 14.0 /* points kept free of marker labels at the frame ends */
#define CH_SHARE 1e-6    /* a channel is drawn if it reaches this share of the peak total */

typedef struct {
    vg_config cfg;
    vg_rate_mode mode;
    double lam, hw, V, T;
    double g[NS];              /* gap, meV */
    double tot[NS], el[NS], bare[NS]; /* log10 k */
    long ch[MAXCH];
    size_t nch;
    double chk[MAXCH][NS];     /* log10 k_n */
    double ymin, ymax, xmin, xmax;
} spectrum;

static vg_status need_scalars(const vg_config *cfg, vg_error *err)
{
    vg_status st = vg_config_require_scalars(cfg, "spectrum", 1, err);

    if (st != VG_OK)
        return st;
    if (cfg->param[VG_P_COUPLING].v[0] == 0.0)
        return vg_error_set(err, VG_ECONFIG, "%s: 'spectrum' needs 'electronic_coupling' > 0 "
                            "(every rate is zero at 0 meV)", cfg->path);
    return VG_OK;
}

/* The gap axis: the config's gap range, or lambda - 3 hw .. lambda + 5 hw
 * around a scalar gap, kept inside the accepted |gap| <= 3000 meV. */
static void gap_range(spectrum *s)
{
    const vg_param *q = &s->cfg.param[VG_P_GAP];

    if (q->n > 1) {
        s->xmin = fmin(q->v[0], q->v[q->n - 1]);
        s->xmax = fmax(q->v[0], q->v[q->n - 1]);
    } else {
        s->xmin = fmax(-3000.0, s->lam - 3.0 * s->hw);
        s->xmax = fmin(3000.0, s->lam + 5.0 * s->hw);
    }
    for (size_t i = 0; i < NS; i++)
        s->g[i] = s->xmin + (s->xmax - s->xmin) * (double)i / (NS - 1);
}

static vg_status compute_totals(spectrum *s, long *nlo, long *nhi, vg_error *err)
{
    *nlo = 0;
    *nhi = 0;
    for (size_t i = 0; i < NS; i++) {
        vg_rates r;
        double m[VG_N_METRICS];
        vg_status st = vg_rate_eval(&s->mode, s->g[i], s->lam, s->V, s->cfg.tolerance, &r, err);
        if (st != VG_OK)
            return st;
        vg_metrics_from_rates(&r, m);
        s->tot[i] = m[VG_M_LOG10_K_TOTAL];
        s->el[i] = m[VG_M_LOG10_K_ELASTIC];
        s->bare[i] = m[VG_M_LOG10_K_BARE];
        *nlo = r.n_lo < *nlo ? r.n_lo : *nlo;
        *nhi = r.n_hi > *nhi ? r.n_hi : *nhi;
    }
    return VG_OK;
}

/* The y range: from just above the highest total down far enough to show
 * the elastic channel's peak (at most MAX_DECADES). */
static void y_range(spectrum *s)
{
    double top = -HUGE_VAL, el = -HUGE_VAL;

    for (size_t i = 0; i < NS; i++) {
        top = fmax(top, s->tot[i]);
        el = fmax(el, s->el[i]);
    }
    s->ymax = ceil(top + 0.5);
    s->ymin = fmax(s->ymax - MAX_DECADES, fmin(s->ymax - MIN_DECADES, floor(el) - 2.0));
}

/* Assisted channels whose peak over the range reaches CH_SHARE of the
 * highest total, nearest to n = 0 first (n = 1, -1, 2, -2, ...), at most
 * MAXCH. */
static void pick_channels(spectrum *s, long nlo, long nhi)
{
    long dmax = nhi > -nlo ? nhi : -nlo;

    s->nch = 0;
    for (long d = 1; d <= dmax && s->nch < MAXCH; d++)
        for (int k = 0; k < 2 && s->nch < MAXCH; k++) {
            long n = k == 0 ? d : -d;
            double peak = -HUGE_VAL;
            if (n < nlo || n > nhi)
                continue;
            for (size_t i = 0; i < NS; i++) {
                double l = vg_rate_ln_channel(&s->mode, s->g[i], s->lam, s->V, n) / VG_LN10;
                s->chk[s->nch][i] = l;
                peak = fmax(peak, l);
            }
            if (peak >= s->ymax - 0.5 + log10(CH_SHARE))
                s->ch[s->nch++] = n;
        }
}

/* ------------------------------------------------------------ drawing --- */

typedef struct {
    double x0, y0, w, h;
} frame;

static double px(const spectrum *s, const frame *f, double g)
{
    return f->x0 + f->w * (g - s->xmin) / (s->xmax - s->xmin);
}

static double py(const spectrum *s, const frame *f, double l)
{
    return f->y0 + f->h * (1.0 - (l - s->ymin) / (s->ymax - s->ymin));
}

static void curve(cairo_t *cr, const spectrum *s, const frame *f, const double *l)
{
    int pen = 0;

    for (size_t i = 0; i < NS; i++) {
        double y = py(s, f, fmax(l[i], s->ymin - 1.0));
        if (l[i] == VG_FILL) {
            pen = 0;
            continue;
        }
        if (pen)
            cairo_line_to(cr, px(s, f, s->g[i]), y);
        else
            cairo_move_to(cr, px(s, f, s->g[i]), y);
        pen = 1;
    }
}

static void legend_entry(cairo_t *cr, const char *font, double x, double y, const double rgb[3],
                         double lw, const double *dash, int ndash, const char *label)
{
    cairo_set_source_rgb(cr, rgb[0], rgb[1], rgb[2]);
    cairo_set_line_width(cr, lw);
    cairo_set_dash(cr, dash, ndash, 0);
    cairo_move_to(cr, x, y);
    cairo_line_to(cr, x + 16, y);
    cairo_stroke(cr);
    cairo_set_dash(cr, NULL, 0, 0);
    cairo_set_source_rgb(cr, 0, 0, 0);
    vg_draw_text(cr, font, 7.0, label, x + 20, y, 0, 0.5, 0);
}

static void draw_markers(cairo_t *cr, const spectrum *s, const frame *f, const char *font)
{
    static const double dot[] = {0.8, 1.6};

    cairo_set_dash(cr, dot, 2, 0);
    cairo_set_line_width(cr, 0.5);
    for (long n = -3; n <= 12; n++) {
        double g = s->lam + (double)n * s->hw;
        char lab[64];
        double x = px(s, f, g);
        if (x < f->x0 + MARKER_EDGE || x > f->x0 + f->w - MARKER_EDGE)
            continue; /* a label there would collide with the axis labels */
        cairo_set_source_rgb(cr, 0.35, 0.35, 0.35);
        cairo_move_to(cr, px(s, f, g), f->y0);
        cairo_line_to(cr, px(s, f, g), f->y0 + f->h);
        cairo_stroke(cr);
        if (n == 0)
            snprintf(lab, sizeof lab, "λ");
        else if (n == 1 || n == -1)
            snprintf(lab, sizeof lab, "λ%sħ<i>ω</i>", n > 0 ? "+" : "−");
        else
            snprintf(lab, sizeof lab, "λ%s%ldħ<i>ω</i>", n > 0 ? "+" : "−", labs(n));
        cairo_set_source_rgb(cr, 0, 0, 0);
        vg_draw_text(cr, font, 6.5, lab, px(s, f, g), f->y0 - 1.5, 0.5, 1.0, 0);
    }
    cairo_set_dash(cr, NULL, 0, 0);
}

static void draw_axes(cairo_t *cr, const spectrum *s, const frame *f, const char *font)
{
    vg_ticks t;
    vg_error e;

    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_line_width(cr, 0.6);
    if (vg_ticks_linear(s->xmin, s->xmax, 6, &t, &e) != VG_OK)
        t.n = 0;
    for (size_t k = 0; k < t.n; k++) {
        double x = px(s, f, t.v[k]);
        cairo_move_to(cr, x, f->y0 + f->h);
        cairo_line_to(cr, x, f->y0 + f->h + (t.major[k] ? 3.0 : 1.5));
        if (t.major[k])
            vg_draw_text(cr, font, 7.0, t.label[k], x, f->y0 + f->h + 4.0, 0.5, 0, 0);
    }
    if (vg_ticks_linear(s->ymin, s->ymax, 7, &t, &e) != VG_OK)
        t.n = 0;
    for (size_t k = 0; k < t.n; k++) {
        double y = py(s, f, t.v[k]);
        char lab[96];
        cairo_move_to(cr, f->x0, y);
        cairo_line_to(cr, f->x0 - (t.major[k] ? 3.0 : 1.5), y);
        if (!t.major[k])
            continue;
        snprintf(lab, sizeof lab, "10<sup>%s</sup>", t.label[k]);
        vg_draw_text(cr, font, 7.0, lab, f->x0 - 4.5, y, 1, 0.5, 0);
    }
    cairo_stroke(cr);
    cairo_rectangle(cr, f->x0, f->y0, f->w, f->h);
    cairo_stroke(cr);
    vg_draw_text(cr, font, 8.5, "ε (meV)", f->x0 + f->w / 2, f->y0 + f->h + 16.0, 0.5, 0, 0);
    vg_draw_text(cr, font, 8.5, "rate <i>k</i> (s<sup>−1</sup>)", 6.0, f->y0 + f->h / 2, 0.5, 0,
                 VG_PI / 2);
}

static void draw_curves(cairo_t *cr, const spectrum *s, const frame *f, const vg_cmap *seq)
{
    static const double dash[] = {3.0, 1.5}, dash2[] = {1.0, 1.5};
    static const double black[3] = {0, 0, 0}, blue[3] = {0.16, 0.33, 0.70}, grey[3] = {0.5, 0.5, 0.5};
    const char *font = s->cfg.fig.font;
    double lx = f->x0 + f->w + 10.0, ly = f->y0 + 6.0;

    cairo_save(cr);
    cairo_rectangle(cr, f->x0, f->y0, f->w, f->h);
    cairo_clip(cr);
    /* total underneath, wide, so the channels that make it up stay visible */
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_line_width(cr, 2.2);
    curve(cr, s, f, s->tot);
    cairo_stroke(cr);
    cairo_set_source_rgb(cr, grey[0], grey[1], grey[2]);
    cairo_set_dash(cr, dash2, 2, 0);
    cairo_set_line_width(cr, 0.9);
    curve(cr, s, f, s->bare);
    cairo_stroke(cr);
    cairo_set_dash(cr, NULL, 0, 0);
    for (size_t c = 0; c < s->nch; c++) {
        double rgb[3];
        vg_cmap_eval(seq, 0.35 + 0.45 * (double)c / (double)(s->nch > 1 ? s->nch - 1 : 1), rgb);
        cairo_set_source_rgb(cr, rgb[0], rgb[1], rgb[2]);
        cairo_set_line_width(cr, 0.9);
        curve(cr, s, f, s->chk[c]);
        cairo_stroke(cr);
    }
    cairo_set_source_rgb(cr, blue[0], blue[1], blue[2]);
    cairo_set_dash(cr, dash, 2, 0);
    cairo_set_line_width(cr, 1.1);
    curve(cr, s, f, s->el);
    cairo_stroke(cr);
    cairo_set_dash(cr, NULL, 0, 0);
    cairo_restore(cr);
    legend_entry(cr, font, lx, ly, black, 2.2, NULL, 0, "total");
    legend_entry(cr, font, lx, ly + 11, blue, 1.1, dash, 2, "elastic (<i>n</i> = 0)");
    legend_entry(cr, font, lx, ly + 22, grey, 0.9, dash2, 2, "no odorant (bare)");
    for (size_t c = 0; c < s->nch; c++) {
        double rgb[3];
        char lab[48];
        vg_cmap_eval(seq, 0.35 + 0.45 * (double)c / (double)(s->nch > 1 ? s->nch - 1 : 1), rgb);
        snprintf(lab, sizeof lab, "<i>n</i> = %s%ld", s->ch[c] < 0 ? "−" : "", labs(s->ch[c]));
        legend_entry(cr, font, lx, ly + 33 + 11 * (double)c, rgb, 0.9, NULL, 0, lab);
    }
}

static void subtitle(const spectrum *s, char *buf, size_t len)
{
    snprintf(buf, len, "λ = %.4g meV,  <i>V</i> = %.4g meV,  <i>S</i> = %.4g,  ħ<i>ω</i> = %.4g meV,"
             "  <i>T</i> = %.4g K,  %s mode;  model prediction", s->lam, s->V,
             s->cfg.param[VG_P_HUANG_RHYS].v[0], s->hw, s->T,
             s->cfg.stats == VG_STATS_FROZEN ? "frozen" : "thermal");
}

static vg_status draw_file(const spectrum *s, vg_figure_format fmt, const char *path,
                           const vg_figure_meta *meta, vg_error *err)
{
    double W = s->cfg.fig.width_in * 72.0, H = W * 0.6;
    frame f = {46.0, 44.0, W - 46.0 - 92.0, H - 44.0 - 34.0};
    char plain[512], sub[512], *title;
    vg_canvas cv;
    vg_cmap seq;
    vg_status st = vg_cmap_build(&seq, VG_CMAP_SEQUENTIAL, err);

    if (st != VG_OK)
        return st;
    snprintf(plain, sizeof plain, "%s: rate against gap", s->cfg.title[0] ? s->cfg.title : "vibrogate");
    st = vg_canvas_open(&cv, fmt, path, W, H, s->cfg.fig.dpi, plain, meta, err);
    if (st != VG_OK)
        return st;
    title = g_markup_escape_text(s->cfg.title[0] ? s->cfg.title : "vibrogate spectrum", -1);
    subtitle(s, sub, sizeof sub);
    cairo_set_source_rgb(cv.cr, 0, 0, 0);
    vg_draw_text(cv.cr, s->cfg.fig.font, 10.0, title, W / 2, 4.0, 0.5, 0, 0);
    vg_draw_text(cv.cr, s->cfg.fig.font, 7.5, sub, W / 2, 18.0, 0.5, 0, 0);
    g_free(title);
    draw_curves(cv.cr, s, &f, &seq);
    draw_markers(cv.cr, s, &f, s->cfg.fig.font);
    draw_axes(cv.cr, s, &f, s->cfg.fig.font);
    st = vg_canvas_close(&cv, s->cfg.text, err);
    if (st == VG_OK && !meta->quiet)
        fprintf(stderr, "vibrogate: wrote %s\n", path);
    return st;
}

static vg_status draw_all(const spectrum *s, const char *dir, int quiet, vg_error *err)
{
    static const vg_figure_format fmts[] = {VG_FIG_PNG, VG_FIG_PDF, VG_FIG_SVG};
    unsigned want = s->cfg.fig.formats ? s->cfg.fig.formats : VG_FIG_PNG;
    char stamp[32], software[64], path[4200];
    vg_figure_meta meta;

    vg_draw_meta(&meta, stamp, software, quiet);
    vg_status made = vg_fs_make_dirs(dir, err);

    if (made != VG_OK)
        return made;
    for (size_t k = 0; k < 3; k++) {
        vg_status st;
        if (!(want & fmts[k]))
            continue;
        snprintf(path, sizeof path, "%s/spectrum.%s", dir, vg_canvas_ext(fmts[k]));
        st = draw_file(s, fmts[k], path, &meta, err);
        if (st != VG_OK)
            return st;
    }
    return VG_OK;
}

vg_status vg_cmd_spectrum(const vg_cmd_args *a, vg_error *err)
{
    spectrum *s = calloc(1, sizeof *s);
    long nlo, nhi;
    vg_status st;

    if (!s)
        return vg_error_set(err, VG_ENOMEM, "out of memory");
    st = vg_config_load(&s->cfg, a->config, a->nset, a->sets, err);
    if (st != VG_OK) {
        free(s);
        return st;
    }
    st = vg_config_refuse_odorants(&s->cfg, "spectrum", err);
    if (st == VG_OK)
        st = need_scalars(&s->cfg, err);
    s->lam = s->cfg.param[VG_P_REORG].v[0];
    s->hw = s->cfg.param[VG_P_MODE].v[0];
    s->V = s->cfg.param[VG_P_COUPLING].v[0];
    s->T = s->cfg.param[VG_P_TEMPERATURE].v[0];
    if (st == VG_OK)
        st = vg_rate_mode_init(&s->mode, s->cfg.stats, s->cfg.param[VG_P_HUANG_RHYS].v[0], s->hw,
                               s->T, err);
    if (st == VG_OK) {
        gap_range(s);
        st = compute_totals(s, &nlo, &nhi, err);
    }
    if (st == VG_OK) {
        y_range(s);
        pick_channels(s, nlo, nhi);
        st = draw_all(s, a->out_dir ? a->out_dir : s->cfg.out_dir, a->quiet, err);
    }
    vg_config_free(&s->cfg);
    free(s);
    return st;
}
