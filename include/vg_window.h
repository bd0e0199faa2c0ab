/*
 * The feasibility window of a swept grid: how much of the grid is feasible,
 * the feasible interval along each axis, and the most robust feasible
 * point -- the one farthest from the window's edge, distances measured with
 * each axis scaled to its range (log axes in log units).  Points just
 * outside the grid count as the edge too: nothing is known beyond the
 * sweep's range.
 *
 * The distance is the exact Euclidean distance transform of the infeasible
 * set on the grid's sample positions, computed separably one axis at a
 * time by the lower envelope of parabolas (Felzenszwalb & Huttenlocher,
 * Theory of Computing 8, 415, 2012), which holds for unevenly spaced
 * samples too.
 *
 * Called by the sweep command (after the data are committed) for its
 * summary files.
 */
#ifndef VG_WINDOW_H
#define VG_WINDOW_H

#include <stddef.h>
#include "vg_grid.h"
#include "vg_status.h"

/* Largest grid whose robust point is computed (one double per point). */
#define VG_WINDOW_EDT_MAX ((size_t)50000000)

typedef struct {
    size_t points, feasible;       /* grid points, feasible ones */
    size_t lo[VG_NPARAM], hi[VG_NPARAM]; /* per parameter id: index range of the
                                            feasible points (valid when feasible > 0) */
    int have_robust;               /* 1 if robust and distance are set */
    size_t robust;                 /* flat index of the most robust point */
    double distance;               /* its distance to the edge, scaled axis units */
} vg_window;

/* Analyse mask (g->npoints entries, nonzero = feasible).  The robust point
 * is left out (have_robust = 0) when no point is feasible or the grid is
 * larger than VG_WINDOW_EDT_MAX.  VG_ENOMEM if the workspace cannot be had. */
vg_status vg_window_analyse(const vg_grid *g, const unsigned char *mask, vg_window *w,
                            vg_error *err);

/* Position of value k of parameter p on its scaled axis: 0 at the first
 * value, 1 at the last (log axes in log units). */
double vg_window_position(const vg_grid *g, vg_param_id p, size_t k);

#endif
