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
    VG_M_LOG10_K_TOTAL_HEAVY,   /* [isotope] only */
    VG_M_ISOTOPE_EFFECT,        /* [isotope] only: k_total light / heavy */
    VG_M_LOG10_ISOTOPE_EFFECT,  /* [isotope] only */
    VG_M_FEASIBLE,              /* [feasibility] only: 1 where every condition holds, else 0 */
    VG_M_DISCRIMINATION,        /* [model] against only: k_total of the odorant over
                                   that of the other one */
    VG_M_LOG10_DISCRIMINATION,  /* [model] against only */
    VG_M_VALID,                 /* [validity] criteria only: 1 where all hold, else 0 */
    VG_M_FAILED_CRITERIA,       /* [validity] criteria only: sum of 2^VG_VALID_IDX_* over
                                   the criteria that fail (0 where all hold) */
    VG_N_METRICS
} vg_metric_id;

/* Which config section a metric needs (0: none). */
#define VG_NEEDS_ISOTOPE 1
#define VG_NEEDS_FEASIBILITY 2
#define VG_NEEDS_DISCRIMINATION 4
#define VG_NEEDS_VALIDITY 8

/* NetCDF's default fill for doubles (NC_FILL_DOUBLE); never a valid metric. */
#define VG_FILL 9.9692099683868690e+36

typedef struct {
    const char *name;      /* config and output name, e.g. "log10_k_total" */
    const char *units;     /* UDUNITS string, "1" for dimensionless */
    const char *long_name; /* CF long_name */
    int needs;             /* VG_NEEDS_* bits */
} vg_metric_info;

/* One feasibility condition, as the loader normalises it: a condition on a
 * time constant (tau_X < 1 ns) becomes one on log10_k_X (> 9), one on
 * isotope_effect one on log10_isotope_effect, so that every comparison is
 * made in the log domain.  A metric stored as VG_FILL because its rate is
 * exactly zero compares as -infinity (an absent rate is slower than any
 * time constant). */
typedef enum { VG_CMP_LT = 0, VG_CMP_LE, VG_CMP_GT, VG_CMP_GE } vg_cmp;

typedef struct {
    vg_metric_id metric;   /* the metric compared */
    vg_cmp op;
    double value;          /* the threshold, in the metric's units */
    char text[128];        /* the condition as written, for messages and summaries */
    int line;              /* config line, -1 = --set */
} vg_require;

#define VG_MAX_REQUIRE 16

typedef struct {
    size_t n;
    vg_require r[VG_MAX_REQUIRE];
} vg_require_set;

/* 1 if every condition of req holds for the metrics m (1 for an empty set). */
int vg_require_holds(const vg_require_set *req, const double m[VG_N_METRICS]);

const vg_metric_info *vg_metric_get(vg_metric_id id);

/* Index of the metric called name, or -1. */
int vg_metric_find(const char *name);

/* All metrics of one point, in enum order, into out[VG_N_METRICS]; the
 * [isotope] and [feasibility] ones are VG_FILL. */
void vg_metrics_from_rates(const vg_rates *r, double out[VG_N_METRICS]);

/* The same with the heavy isotopologue's rates (heavy may be NULL: no
 * [isotope]) and the feasibility conditions (req may be NULL or empty: no
 * [feasibility]). */
void vg_metrics_compute(const vg_rates *light, const vg_rates *heavy,
                        const vg_require_set *req, double out[VG_N_METRICS]);

/* The same with the rates of the odorant compared against (other may be
 * NULL: no discrimination) and the verdict of the validity criteria (valid
 * 1 or 0 and failed the mask of the failing ones, or both VG_FILL where
 * none is evaluated).  The conditions of req see every metric, these
 * included. */
void vg_metrics_compute_full(const vg_rates *light, const vg_rates *heavy,
                             const vg_rates *other, double valid, double failed,
                             const vg_require_set *req, double out[VG_N_METRICS]);

/* vg_metrics_compute_full for n points of one run (element i of each array
 * of light, heavy, valid and failed belongs to point i; heavy, valid and
 * failed may be NULL): out holds n * VG_N_METRICS values, point by point.
 * The same bits as n calls with the points' records.  fill_kept 1 promises
 * that out already holds VG_FILL in every metric after
 * VG_M_LOG10_CONTRAST; where heavy, valid, failed and conditions are all
 * absent those are fill anyway and are then not written again (the sweep
 * fills its chunk buffer once; storing them cost a fifth of a sweep). */
void vg_metrics_compute_run(size_t n, const vg_rates_run *light, const vg_rates_run *heavy,
                            const double *valid, const double *failed,
                            const vg_require_set *req, int fill_kept, double *out);

#endif
