/*
 * Drawing surfaces and text for the figure module: one canvas per output
 * file (PNG through the project's libpng writer, PDF and SVG through cairo
 * streams into a temporary file that is renamed when complete), and Pango
 * text placed by an anchor.  Private to src/figure.c and src/spectrum.c.
 */
#ifndef VG_DRAW_H
#define VG_DRAW_H

#include <stdio.h>
#include <cairo.h>

#include "vg_config.h"
#include "vg_figure.h"
#include "vg_status.h"

typedef struct {
    vg_figure_format fmt;
    double w_pt, h_pt;          /* page size in points (1/72 in) */
    double dpi;                 /* PNG only */
    cairo_surface_t *surf;
    cairo_t *cr;                /* user units: points, origin top left */
    char *path;                 /* final name (owned) */
    char *tmp;                  /* temporary name, PDF/SVG (owned) */
    FILE *fp;                   /* PDF/SVG stream */
    int write_failed;           /* errno of a failed stream write, 0 if none */
    const char *title;
    const vg_figure_meta *meta;
} vg_canvas;

/* File extension of one format bit ("png", "pdf", "svg"). */
const char *vg_canvas_ext(vg_figure_format fmt);

vg_status vg_canvas_open(vg_canvas *c, vg_figure_format fmt, const char *path,
                         double w_pt, double h_pt, double dpi, const char *title,
                         const vg_figure_meta *meta, vg_error *err);

/* Finish the drawing, write the file (PNG with config_text in its
 * metadata) and rename it to its final name.  Frees the canvas either way. */
vg_status vg_canvas_close(vg_canvas *c, const char *config_text, vg_error *err);

/* Free the canvas and remove its temporary file. */
void vg_canvas_abort(vg_canvas *c);

/* Pango markup text at (x, y); (ax, ay) in [0, 1] is the anchor within the
 * text's logical box (0,0 top left; 0.5,0.5 centre); angle in radians
 * (counter-clockwise).  Returns the text's width in points. */
double vg_draw_text(cairo_t *cr, const char *font, double size_pt, const char *markup,
                    double x, double y, double ax, double ay, double angle);

/* Unrotated black text with a white halo, legible on any cell colour. */
void vg_draw_text_halo(cairo_t *cr, const char *font, double size_pt, const char *markup,
                       double x, double y, double ax, double ay);

/* Width and height in points of markup, unrotated. */
void vg_draw_text_size(cairo_t *cr, const char *font, double size_pt, const char *markup,
                       double *w, double *h);

/* Fill m for figures written now: time stamp (into stamp, 32 bytes),
 * "vibrogate VERSION" (into software, 64 bytes), quiet flag. */
void vg_draw_meta(vg_figure_meta *m, char stamp[32], char software[64], int quiet);

/* "2026-12-01T20:00:00Z"-style stamp and its epoch, from SOURCE_DATE_EPOCH
 * when set, else the clock. */
void vg_draw_timestamp(char *buf, size_t len, long long *epoch);

#endif
