/*
 * Figures: heatmaps of any stored metric over two axes, in a grid of panels
 * (one per value of a third and optionally a fourth axis) sharing one colour
 * scale, with the dominance boundary (log10_ratio = 0), extra contour levels
 * and marked operating points; written as PNG (src/png.c), PDF and SVG
 * (cairo, text through Pango).  Everything is drawn from a data file
 * (vg_dataset), so a figure can always be rebuilt from sweep.nc alone.
 *
 * Called by the sweep and render commands.
 */
#ifndef VG_FIGURE_H
#define VG_FIGURE_H

#include "vg_dataset.h"
#include "vg_grid.h"
#include "vg_status.h"

typedef struct {
    const char *software;       /* "vibrogate 0.1.0" */
    const char *creation_time;  /* ISO 8601, from SOURCE_DATE_EPOCH when set */
    long long epoch;            /* the same instant, seconds since 1970 */
    int quiet;                  /* 0: name every file written on stderr */
} vg_figure_meta;

/* Draw every map the dataset's config asks for into dir.  Files are named
 * map-METRIC[-AXISkk...].EXT, one per metric and per combination of the
 * axes that are neither x, y, panels nor rows (indices zero-padded so they
 * sort).  Each file is written under a temporary name and renamed. */
vg_status vg_figure_maps(const vg_dataset *ds, const char *dir, const vg_figure_meta *meta,
                         vg_error *err);

/* A quantity over the grid that is not a sweep metric (the probability map
 * of the uncertainty command), for vg_figure_field. */
typedef struct {
    const char *name;          /* file name part: DIR/map-NAME.EXT */
    const char *label_markup;  /* Pango markup for the colour bar and subtitle */
    const char *note;          /* second subtitle line (markup), or NULL */
    double lo, hi;             /* fixed colour range (sequential map) */
} vg_field_spec;

/* Draw field (g->npoints values in flat order, VG_FILL where undefined)
 * as a map of cfg's grid with cfg's figure settings (formats, x, y,
 * panels, rows, size, marks), without the dominance boundary or the
 * window outline.  Written like vg_figure_maps' files. */
vg_status vg_figure_field(const vg_config *cfg, const vg_grid *g, const double *field,
                          const vg_field_spec *spec, const char *dir,
                          const vg_figure_meta *meta, vg_error *err);

/* Where a figure puts things, for tests and for anyone overlaying their own
 * drawing: page size and panel rectangles in points (origin top left;
 * panel (c, r) spans x0 + c (w + gap_x) .. + w and y0 + r (h + gap_y) .. + h),
 * the display extents of the x and y axes (log10 of the value in display
 * units on a log axis), the units' scale (canonical per display unit) and
 * the colour range with its clamping. */
typedef struct {
    double width_pt, height_pt;
    size_t ncol, nrow;
    double x0, y0, w, h, gap_x, gap_y;
    double x_lo, x_hi, y_lo, y_hi;
    int x_log, y_log;
    double x_scale, y_scale;
    double lo, hi;
    int diverging, clamp_lo, clamp_hi;
} vg_figure_geom;

/* Geometry of the figure of metric m at the coordinates fixed[] of the axes
 * not drawn inside it (entries for x, y, panels and rows are ignored). */
vg_status vg_figure_geometry(const vg_dataset *ds, vg_metric_id m, const size_t fixed[6],
                             vg_figure_geom *geom, vg_error *err);

#endif
