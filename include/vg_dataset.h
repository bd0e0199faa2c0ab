/*
 * Reading a saved sweep.nc back, for redrawing figures without recomputing:
 * the config the file was made with (re-parsed from its config_text and
 * config_overrides attributes, then given further overrides), with every
 * axis' values taken from the file's coordinate variables, and any metric
 * read whole.
 *
 * Called by the render command and by sweep when it draws figures.
 */
#ifndef VG_DATASET_H
#define VG_DATASET_H

#include <stddef.h>
#include "vg_config.h"
#include "vg_grid.h"
#include "vg_status.h"

typedef struct {
    char *path;      /* the file (owned) */
    int ncid;        /* open NetCDF id */
    vg_config cfg;   /* config from the file, axes replaced by the file's coordinates */
    vg_grid grid;    /* its grid (must match the file's dimensions) */
} vg_dataset;

/* Open path, rebuild its config with nset further "section.key=value"
 * overrides, and check that the file's dimensions and coordinates agree
 * with it.  Errors: VG_ECONFIG (not a vibrogate file, config invalid,
 * dimensions disagree), VG_EIO (cannot open or read). */
vg_status vg_dataset_open(vg_dataset *ds, const char *path, size_t nset,
                          const char *const *sets, vg_error *err);

/* Read metric m over the whole grid into out (grid.npoints doubles, flat
 * order; fill values stay VG_FILL).  VG_ECONFIG if the file lacks it. */
vg_status vg_dataset_read(const vg_dataset *ds, vg_metric_id m, double *out, vg_error *err);

void vg_dataset_close(vg_dataset *ds);

#endif
