/*
 * Colour maps built from published colour science, not copied from any
 * plotting library: a diverging map (Moreland, "Diverging Color Maps for
 * Scientific Visualization", ISVC 2009: interpolation in Msh space between
 * two saturated end colours through a neutral white, with a hue spin near
 * the centre) and a sequential map (a ramp whose CIELAB lightness L* rises
 * monotonically from dark to light while hue and chroma vary smoothly).
 * Both are tabulated once (VG_CMAP_N entries, sRGB) and evaluated by linear
 * interpolation in the table.
 *
 * Pure functions; called by the figure module (src/figure.c).
 */
#ifndef VG_COLORMAP_H
#define VG_COLORMAP_H

#include <stddef.h>
#include "vg_status.h"

#define VG_CMAP_N 256

typedef enum {
    VG_CMAP_DIVERGING = 0,  /* low end one hue (blue-ish), centre neutral, high end another (orange-red) */
    VG_CMAP_SEQUENTIAL = 1  /* dark to light, monotonic lightness */
} vg_cmap_kind;

typedef struct {
    vg_cmap_kind kind;
    double rgb[VG_CMAP_N][3];  /* gamma-encoded sRGB in [0, 1] (IEC 61966-2-1) */
} vg_cmap;

/* Tabulate the map of kind k into c. */
vg_status vg_cmap_build(vg_cmap *c, vg_cmap_kind k, vg_error *err);

/* Colour at t in [0, 1] (t outside is clamped), gamma-encoded sRGB in [0, 1]. */
void vg_cmap_eval(const vg_cmap *c, double t, double rgb[3]);

/* Same, as 8-bit values (rounded). */
void vg_cmap_eval8(const vg_cmap *c, double t, unsigned char rgb[3]);

/* Colour-science helpers, exposed for the figure module and its tests.
 * sRGB is gamma-encoded in [0,1]; XYZ relative to the D65 white (Y = 1);
 * Lab is CIELAB (CIE 15) with the D65 white; Msh is Moreland's polar form
 * of CIELAB (M = |Lab|, s = acos(L/M), h = atan2(b, a)). */
void vg_cmap_srgb_to_lab(const double rgb[3], double lab[3]);
void vg_cmap_lab_to_srgb(const double lab[3], double rgb[3]);
void vg_cmap_lab_to_msh(const double lab[3], double msh[3]);
void vg_cmap_msh_to_lab(const double msh[3], double lab[3]);

/* Simulated appearance under a colour-vision deficiency of severity 1
 * (Machado, Oliveira & Fernandes, IEEE TVCG 15, 1291, 2009), applied to
 * linear RGB; input and output gamma-encoded sRGB. */
typedef enum { VG_CVD_PROTAN = 0, VG_CVD_DEUTAN = 1, VG_CVD_TRITAN = 2 } vg_cvd;
void vg_cmap_simulate_cvd(vg_cvd kind, const double rgb[3], double out[3]);

#endif
