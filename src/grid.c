/*
 * The grid plan (see vg_grid.h): which parameters are axes, their order and
 * strides, and the decomposition of a flat index into per-axis indices.
 */
#include "vg_grid.h"

/* Slowest first: the weights depend on (huang_rhys, mode, temperature), so
 * keeping those outermost lets consecutive points share one weight table. */
static const vg_param_id axis_order[VG_NPARAM] = {
    VG_P_TEMPERATURE, VG_P_MODE, VG_P_HUANG_RHYS,
    VG_P_COUPLING, VG_P_REORG, VG_P_GAP
};

void vg_grid_init(vg_grid *g, const vg_config *cfg)
{
    size_t k, stride = 1;

    g->cfg = cfg;
    g->naxes = 0;
    for (k = 0; k < VG_NPARAM; k++) {
        vg_param_id p = axis_order[k];
        g->stride[p] = 0;
        if (cfg->param[p].n > 1) {
            g->axis[g->naxes] = p;
            g->dim[g->naxes] = cfg->param[p].n;
            g->naxes++;
        }
    }
    for (k = g->naxes; k-- > 0;) {
        g->stride[g->axis[k]] = stride;
        stride *= g->dim[k];
    }
    g->npoints = stride;
}

size_t vg_grid_coord(const vg_grid *g, size_t flat, vg_param_id p)
{
    size_t s = g->stride[p];

    if (s == 0)
        return 0;
    return (flat / s) % g->cfg->param[p].n;
}

void vg_grid_values(const vg_grid *g, size_t flat, double v[VG_NPARAM])
{
    int p;

    for (p = 0; p < VG_NPARAM; p++)
        v[p] = g->cfg->param[p].v[vg_grid_coord(g, flat, (vg_param_id)p)];
}

/* Points of cfg's grid and the metrics it stores. */
static double points_and_metrics(const vg_config *cfg, int *nmet)
{
    double points = 1.0;

    for (int p = 0; p < VG_NPARAM; p++)
        points *= (double)cfg->param[p].n;
    *nmet = 0;
    for (int m = 0; m < VG_N_METRICS; m++)
        *nmet += cfg->metric_on[m] != 0;
    return points;
}

/* NetCDF: 8 bytes per stored metric and point (uncompressed upper bound).
 * CSV: at most 24 characters per "%.17g" field plus a separator, for the
 * six parameter columns and each metric. */
double vg_grid_output_bytes(const vg_config *cfg)
{
    int nmet;
    double points = points_and_metrics(cfg, &nmet), bytes = 0.0;

    if (cfg->formats & VG_FMT_NETCDF)
        bytes += points * 8.0 * nmet;
    if (cfg->formats & VG_FMT_CSV)
        bytes += points * 25.0 * (VG_NPARAM + nmet);
    return bytes;
}

/* 8 bytes per stored metric and point (src/checkpoint.h). */
double vg_grid_checkpoint_bytes(const vg_config *cfg)
{
    int nmet;
    double points = points_and_metrics(cfg, &nmet);

    return points * 8.0 * nmet;
}
