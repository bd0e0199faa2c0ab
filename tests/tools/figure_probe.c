/*
 * Test helper: prints where a figure puts its panels and its colour range
 * (vg_figure_geometry), and the colour map's table, for the figure tests
 * (tests/scripts/figures.py), which probe the rendered pixels.
 *
 *   figure_probe DATA.nc METRIC
 */
#include <stdio.h>
#include <string.h>

#include <gsl/gsl_errno.h>

#include "vg_colormap.h"
#include "vg_figure.h"

int main(int argc, char **argv)
{
    vg_dataset ds;
    vg_figure_geom g;
    vg_cmap c;
    vg_error err;
    size_t fixed[6] = {0};
    int m;

    gsl_set_error_handler_off();
    if (argc != 3 || (m = vg_metric_find(argv[2])) < 0) {
        fprintf(stderr, "usage: figure_probe DATA.nc METRIC\n");
        return 2;
    }
    if (vg_dataset_open(&ds, argv[1], 0, NULL, &err) != VG_OK ||
        vg_figure_geometry(&ds, (vg_metric_id)m, fixed, &g, &err) != VG_OK ||
        vg_cmap_build(&c, g.diverging ? VG_CMAP_DIVERGING : VG_CMAP_SEQUENTIAL, &err) != VG_OK) {
        fprintf(stderr, "figure_probe: %s\n", err.msg);
        return 1;
    }
    printf("geom %.17g %.17g %zu %zu %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g "
           "%d %d %.17g %.17g %.17g %.17g %d %d\n",
           g.width_pt, g.height_pt, g.ncol, g.nrow, g.x0, g.y0, g.w, g.h, g.gap_x, g.gap_y,
           g.x_lo, g.x_hi, g.y_lo, g.y_hi, g.x_log, g.y_log, g.x_scale, g.y_scale, g.lo, g.hi,
           g.clamp_lo, g.clamp_hi);
    for (int i = 0; i < VG_CMAP_N; i++)
        printf("cmap %d %.17g %.17g %.17g\n", i, c.rgb[i][0], c.rgb[i][1], c.rgb[i][2]);
    vg_dataset_close(&ds);
    return 0;
}
