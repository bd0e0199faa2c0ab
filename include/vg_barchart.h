/*
 * Ranked horizontal bar charts: one row per item (a parameter, say), one or
 * two bars per row (two series, e.g. first-order and total Sobol indices, or
 * two metrics), optional intervals drawn as error bars, a vertical zero
 * line, a title, a subtitle, an axis label, a legend and a footnote.
 * Written as PNG, PDF and SVG with the figures' fonts, width, resolution and
 * metadata (software, creation time from SOURCE_DATE_EPOCH, the config text
 * in the PNG), each file under a temporary name renamed when complete, so a
 * failure leaves no partial file.
 *
 * Text fields are Pango markup (<i>, <sub>, <sup>; escape '&', '<', '>'
 * yourself).  Values are plotted as given (no log axis); the value axis
 * always covers 0, every defined value and interval, and [range_lo,
 * range_hi].
 *
 * Called by the sensitivity and uncertainty commands.
 */
#ifndef VG_BARCHART_H
#define VG_BARCHART_H

#include <stddef.h>
#include "vg_config.h"
#include "vg_figure.h"
#include "vg_status.h"

#define VG_BAR_MAX_SERIES 2
#define VG_BAR_MAX_ITEMS 64

/* One row of the chart. */
typedef struct {
    const char *label;                    /* row label, markup (e.g. "<i>S</i>") */
    double value[VG_BAR_MAX_SERIES];      /* bar length from 0, one per series */
    int defined[VG_BAR_MAX_SERIES];       /* 0: no bar, the row says "n/a" for it;
                                             value, lo, hi are then ignored */
    int has_interval[VG_BAR_MAX_SERIES];  /* 1: draw an error bar from lo to hi */
    double lo[VG_BAR_MAX_SERIES], hi[VG_BAR_MAX_SERIES]; /* lo <= hi */
} vg_bar_item;

/* How rows are ordered, top to bottom. */
typedef enum {
    VG_BAR_ORDER_GIVEN = 0,   /* as in items[] */
    VG_BAR_ORDER_ABS,         /* by |value| of series rank_series, largest first */
    VG_BAR_ORDER_VALUE        /* by value of series rank_series, largest first */
} vg_bar_order;

typedef struct {
    const char *title;        /* markup, drawn at the top */
    const char *subtitle;     /* markup or NULL (may hold '\n') */
    const char *plain_title;  /* plain text for the file metadata (PNG Title,
                                 PDF Title); NULL: "vibrogate" */
    const char *axis_label;   /* markup, under the value axis */
    const char *note;         /* markup or NULL: footnote at the bottom */
    size_t nseries;           /* 1 or 2 */
    const char *series_name[VG_BAR_MAX_SERIES]; /* legend entries, markup; with one
                                                   series NULL means no legend */
    size_t nitems;            /* 1 .. VG_BAR_MAX_ITEMS */
    const vg_bar_item *items;
    vg_bar_order order;
    size_t rank_series;       /* the series that orders the rows (< nseries) */
    int show_values;          /* 1: print each defined value beside its bar */
    double range_lo, range_hi; /* the axis covers at least this (0, 0: no demand) */
} vg_barchart;

/* Where the chart puts things (points, origin top left), for tests and for
 * anyone overlaying a drawing: the page, the plot frame, the value axis
 * (value v is at x = x0 + (v - lo) / (hi - lo) * w), and the rows: row r
 * (0 = top, after ordering) occupies y0 + r * row_h .. + row_h; the bar of
 * series s in it spans y0 + r * row_h + bar_top[s] .. + bar_h. */
typedef struct {
    double width_pt, height_pt;
    double x0, y0, w, h;
    double lo, hi;
    double row_h, bar_h;
    double bar_top[VG_BAR_MAX_SERIES];
    size_t nrows;
    size_t order[VG_BAR_MAX_ITEMS]; /* order[r]: index into items[] of row r */
} vg_barchart_geom;

/* VG_ENUMERIC with a message if bc is malformed: nseries or nitems out of
 * range, rank_series >= nseries, a NULL title, axis_label or row label, a
 * defined value or interval bound that is not finite, lo > hi, or
 * range_lo > range_hi.  (An interval need not contain its value.) */
vg_status vg_barchart_check(const vg_barchart *bc, vg_error *err);

/* The layout of bc at fig's width and font (checks bc first). */
vg_status vg_barchart_geometry(const vg_barchart *bc, const vg_figure_spec *fig,
                               vg_barchart_geom *g, vg_error *err);

/* Write stem.png, stem.pdf, stem.svg for the VG_FIG_* bits in formats (none
 * when 0), with cfg->fig's width, dpi and font and cfg->text as the PNG's
 * config text.  stem is a path without extension ("out/sensitivity-k_total");
 * its directory must exist.  Each file is complete or absent.  Names every
 * file written on stderr unless meta->quiet.  VG_ENUMERIC for a malformed
 * chart, VG_EIO / VG_ENOMEM otherwise. */
vg_status vg_barchart_write(const vg_barchart *bc, const vg_config *cfg, unsigned formats,
                            const char *stem, const vg_figure_meta *meta, vg_error *err);

#endif
