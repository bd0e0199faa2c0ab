/*
 * The metrics stored for every grid point, their names, units and long names,
 * and the conversion from a vg_rates record.  Adding a metric: append to the
 * enum, to the table in src/metrics.c, and to vg_metrics_from_rates.
 *
 * A metric whose value does not exist at a point (the log of a rate that is
 * exactly zero) is stored as VG_FILL, which the NetCDF writer declares as
 * _FillValue and the CSV writer leaves as an empty field.  No output ever
 * holds NaN or Inf.
 */
#ifndef VG_METRICS_H
#define VG_METRICS_H

#include "vg_rate.h"

typedef enum {
    VG_M_LOG10_K_ELASTIC = 0,
    VG_M_LOG10_K_ASSISTED,
    VG_M_LOG10_K_TOTAL,
    VG_M_LOG10_K_BARE,
    VG_M_LOG10_RATIO,
    VG_M_ASSISTED_FRACTION,
    VG_M_LOG10_CONTRAST,
    VG_N_METRICS
} vg_metric_id;

/* NetCDF's default fill for doubles (NC_FILL_DOUBLE); never a valid metric. */
#define VG_FILL 9.9692099683868690e+36

typedef struct {
    const char *name;      /* config and output name, e.g. "log10_k_total" */
    const char *units;     /* UDUNITS string, "1" for dimensionless */
    const char *long_name; /* CF long_name */
} vg_metric_info;

const vg_metric_info *vg_metric_get(vg_metric_id id);

/* Index of the metric called name, or -1. */
int vg_metric_find(const char *name);

/* All metrics of one point, in enum order, into out[VG_N_METRICS]. */
void vg_metrics_from_rates(const vg_rates *r, double out[VG_N_METRICS]);

#endif
