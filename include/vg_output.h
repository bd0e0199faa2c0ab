/*
 * Data writers: NetCDF-4 (CF-1.8) and CSV.  A writer receives consecutive
 * blocks of grid points (chunks) in increasing order and writes them as they
 * come, so memory does not grow with the grid.  Everything goes to a
 * temporary file in the output directory; vg_out_commit renames it to its
 * final name, so an interrupted or failed run never leaves a half file under
 * the final name.
 *
 * Called by the sweep command (src/cmd_sweep.c).
 */
#ifndef VG_OUTPUT_H
#define VG_OUTPUT_H

#include <stddef.h>
#include "vg_status.h"
#include "vg_config.h"
#include "vg_grid.h"

typedef struct {
    const vg_config *cfg;
    const vg_grid *grid;
    const char *version;  /* program version, e.g. "0.1.0" */
    const char *history;  /* one line: time stamp and command line */
} vg_out_meta;

typedef struct vg_writer vg_writer;

/* Open a writer of format fmt (one VG_FMT_* bit) for directory dir (which
 * must exist); final name dir/sweep.nc or dir/sweep.csv. */
vg_status vg_out_open(vg_writer **w, vg_data_format fmt, const char *dir,
                      const vg_out_meta *meta, vg_error *err);

/* Write points start .. start+count-1.  metrics is row-major, count rows of
 * VG_N_METRICS values (all metrics; the writer keeps the selected ones).
 * Chunks must arrive in order and without gaps. */
vg_status vg_out_write(vg_writer *w, size_t start, size_t count,
                       const double *metrics, vg_error *err);

/* Flush, fsync and close the temporary file, without renaming it, so that
 * several writers can all be finished before any final name appears.
 * Idempotent; after a failure only vg_out_abort remains. */
vg_status vg_out_finish(vg_writer *w, vg_error *err);

/* Finish (if not done yet) and rename to the final name; frees w in every
 * case. */
vg_status vg_out_commit(vg_writer *w, vg_error *err);

/* Close and remove the temporary file; frees w.  NULL is allowed. */
void vg_out_abort(vg_writer *w);

/* Final path of a writer ("dir/sweep.nc"); valid until commit/abort. */
const char *vg_out_path(const vg_writer *w);

/* Its temporary file ("dir/.sweep.nc.XXXXXX"), so that a checkpoint can
 * name it for removal after a kill; valid until commit/abort. */
const char *vg_out_temp_path(const vg_writer *w);

#endif
