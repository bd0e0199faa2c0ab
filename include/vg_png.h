/*
 * PNG writer through libpng, with the metadata a figure needs to be traced
 * to its run: pHYs (the resolution), sRGB, and iTXt chunks for Title,
 * Software, Creation Time (RFC 3339 / ISO 8601 text) and the full config
 * text under the keyword VG_PNG_CONFIG_KEY.  Written to a temporary file
 * and renamed, like every output.
 *
 * Called by the figure module.
 */
#ifndef VG_PNG_H
#define VG_PNG_H

#include <stddef.h>
#include "vg_status.h"

#define VG_PNG_CONFIG_KEY "vibrogate config"

typedef struct {
    const char *title;
    const char *software;       /* "vibrogate 0.1.0" */
    const char *creation_time;  /* e.g. "2026-12-01T20:00:00Z" */
    const char *config_text;    /* may be NULL */
    double dpi;                 /* > 0 */
} vg_png_meta;

/* Write an image given as cairo's CAIRO_FORMAT_RGB24 or ARGB32 pixels
 * (native-endian 32-bit words 0xAARRGGBB, premultiplied; alpha ignored for
 * RGB24), height rows of stride bytes, as 8-bit RGB PNG. */
vg_status vg_png_write(const char *path, const unsigned char *pixels, int width, int height,
                       int stride, const vg_png_meta *meta, vg_error *err);

#endif
