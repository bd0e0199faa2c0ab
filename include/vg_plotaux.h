/*
 * Plot geometry helpers, pure and independent of any drawing library:
 * round-number axis ticks (Heckbert, "Nice numbers for graph labels",
 * Graphics Gems, 1990, for linear axes; decades and 1-2-5 subdivisions
 * for log axes) and iso-lines by marching squares with linear
 * interpolation.
 *
 * Called by the figure module (src/figure.c).
 */
#ifndef VG_PLOTAUX_H
#define VG_PLOTAUX_H

#include <stddef.h>
#include "vg_status.h"

#define VG_TICKS_MAX 32
#define VG_TICK_LABEL 48

typedef struct {
    size_t n;
    double v[VG_TICKS_MAX];                  /* tick positions in data units, increasing */
    int major[VG_TICKS_MAX];                 /* 1: labelled, 0: minor tick */
    char label[VG_TICKS_MAX][VG_TICK_LABEL]; /* Pango markup, true minus sign U+2212,
                                                powers as 10<sup>k</sup>; "" for minor */
} vg_ticks;

/* Ticks inside [lo, hi] (lo < hi) on a linear axis, about target labelled
 * ticks, at 1, 2 or 5 times a power of ten, labels with just enough
 * decimals. */
vg_status vg_ticks_linear(double lo, double hi, int target, vg_ticks *t, vg_error *err);

/* Ticks inside [lo, hi] (0 < lo < hi) on a log axis: labelled decades (or
 * 1-2-5 steps when the range is under about two decades), minor ticks at
 * 2..9 times each decade when there is room. */
vg_status vg_ticks_log(double lo, double hi, int target, vg_ticks *t, vg_error *err);

/* One piece of an iso-line, in fractional index coordinates: x = i + f
 * between columns i and i+1, y = j + g between rows j and j+1. */
typedef struct {
    double x0, y0, x1, y1;
} vg_segment;

/* Marching squares on z (ny rows of nx values, row-major, z[j*nx + i]) at
 * level.  Cells with a corner equal to skip (the fill value) produce no
 * segment.  Saddle cells are resolved by the mean of the four corners.
 * Writes at most cap segments (2*(nx-1)*(ny-1) is always enough) and
 * returns how many; a corner exactly at level counts as above it. */
size_t vg_contour(const double *z, size_t nx, size_t ny, double level, double skip,
                  vg_segment *out, size_t cap);

#endif
