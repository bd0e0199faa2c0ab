/*
 * The grid plan: the Cartesian product of every parameter given with more
 * than one value, as a flat row-major index.  Axes are ordered slowest first
 * as temperature, mode, huang_rhys, electronic_coupling, reorganization, gap
 * (gap varies fastest), skipping scalars; the NetCDF dimensions and the CSV
 * rows follow the same order.
 *
 * Called by the sweep engine and the writers.
 */
#ifndef VG_GRID_H
#define VG_GRID_H

#include <stddef.h>
#include "vg_config.h"

typedef struct {
    const vg_config *cfg;
    size_t naxes;                 /* 0 .. 6 */
    vg_param_id axis[VG_NPARAM];  /* axis[0] slowest ... axis[naxes-1] fastest */
    size_t dim[VG_NPARAM];        /* dim[k] = number of values of axis[k] */
    size_t stride[VG_NPARAM];     /* per parameter id: flat-index stride, 0 if scalar */
    size_t npoints;               /* product of dims (1 with no axes) */
} vg_grid;

/* Build the plan for cfg (which must outlive g). */
void vg_grid_init(vg_grid *g, const vg_config *cfg);

/* Index along parameter p of grid point flat (0 for a scalar). */
size_t vg_grid_coord(const vg_grid *g, size_t flat, vg_param_id p);

/* The six parameter values of grid point flat, canonical units. */
void vg_grid_values(const vg_grid *g, size_t flat, double v[VG_NPARAM]);

/* Estimated bytes the chosen outputs of cfg take on disk. */
double vg_grid_output_bytes(const vg_config *cfg);

/* Bytes the run's checkpoint takes once every point is computed; it stays
 * on disk beside the outputs until they are written (src/checkpoint.h). */
double vg_grid_checkpoint_bytes(const vg_config *cfg);

#endif
