/*
 * The render command, and the figure step of sweep: open a saved sweep.nc,
 * rebuild its config (plus any --set), and draw the maps it asks for,
 * without recomputing a single rate.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cmd.h"
#include "draw.h"
#include "fsutil.h"
#include "vg_dataset.h"
#include "vg_figure.h"

/* Open the data file; when its config names no figure format and
 * default_png is set, open it again asking for PNG, so that the figure
 * keys are validated against the grid like any requested figure. */
static vg_status open_for_figures(vg_dataset *ds, const char *nc_path, size_t nset,
                                  const char *const *sets, int default_png, vg_error *err)
{
    const char **more;
    vg_status st = vg_dataset_open(ds, nc_path, nset, sets, err);

    if (st != VG_OK || ds->cfg.fig.formats || !default_png)
        return st;
    vg_dataset_close(ds);
    more = malloc((nset + 1) * sizeof *more);
    if (!more)
        return vg_error_set(err, VG_ENOMEM, "out of memory");
    for (size_t i = 0; i < nset; i++)
        more[i] = sets[i];
    more[nset] = "output.figures=png";
    st = vg_dataset_open(ds, nc_path, nset + 1, more, err);
    free(more);
    return st;
}

vg_status vg_cmd_figures(const char *nc_path, const char *dir, size_t nset,
                         const char *const *sets, int quiet, int default_png, vg_error *err)
{
    vg_dataset ds;
    vg_figure_meta meta;
    char stamp[32], software[64];
    vg_status st = open_for_figures(&ds, nc_path, nset, sets, default_png, err);

    if (st == VG_OK && (st = vg_config_check_maps(&ds.cfg, err)) != VG_OK)
        vg_dataset_close(&ds);
    if (st == VG_OK && ds.cfg.fig.formats && (st = vg_fs_make_dirs(dir, err)) != VG_OK)
        vg_dataset_close(&ds);
    if (st != VG_OK)
        return st;
    vg_draw_meta(&meta, stamp, software, quiet);
    if (ds.cfg.fig.formats)
        st = vg_figure_maps(&ds, dir, &meta, err);
    vg_dataset_close(&ds);
    return st;
}

/* The directory part of path ("." when it has none). */
static void dir_of(const char *path, char *buf, size_t len)
{
    const char *slash = strrchr(path, '/');

    if (!slash)
        snprintf(buf, len, ".");
    else if (slash == path)
        snprintf(buf, len, "/");
    else
        snprintf(buf, len, "%.*s", (int)(slash - path), path);
}

vg_status vg_cmd_render(const vg_cmd_args *a, vg_error *err)
{
    char dir[4096];

    if (a->out_dir)
        snprintf(dir, sizeof dir, "%s", a->out_dir);
    else
        dir_of(a->config, dir, sizeof dir);
    return vg_cmd_figures(a->config, dir, a->nset, a->sets, a->quiet, 1, err);
}
