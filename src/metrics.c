/*
 * The per-point metrics (see vg_metrics.h): their names, CF units and long
 * names, and their values from one vg_rates record.  Called by the sweep
 * engine, the writers (for names and attributes) and the point command.
 *
 * Fill rules (docs/theory.md, "Zero rates"): the log of a rate that is exactly
 * zero is VG_FILL.  With coupling 0 every rate is zero, but the ratio, the
 * fraction and the contrast are ratios of Franck-Condon sums and stay
 * defined.  With huang_rhys 0 there is no assisted channel: its rate and the
 * ratio are VG_FILL, the fraction is 0 and the contrast is exactly 0.
 */
#include <math.h>
#include <string.h>

#include "vg_const.h"
#include "vg_metrics.h"

static const vg_metric_info metric_table[VG_N_METRICS] = {
    [VG_M_LOG10_K_ELASTIC] = {"log10_k_elastic", "1",
                              "log10 of the elastic (no quantum exchanged) rate in s-1"},
    [VG_M_LOG10_K_ASSISTED] = {"log10_k_assisted", "1",
                               "log10 of the vibrationally assisted rate (all channels "
                               "exchanging quanta) in s-1"},
    [VG_M_LOG10_K_TOTAL] = {"log10_k_total", "1",
                            "log10 of the total transfer rate in s-1"},
    [VG_M_LOG10_K_BARE] = {"log10_k_bare", "1",
                           "log10 of the Marcus rate without the odorant mode in s-1"},
    [VG_M_LOG10_RATIO] = {"log10_ratio", "1",
                          "log10 of the ratio of assisted to elastic rate"},
    [VG_M_ASSISTED_FRACTION] = {"assisted_fraction", "1",
                                "fraction of the total rate carried by assisted channels"},
    [VG_M_LOG10_CONTRAST] = {"log10_contrast", "1",
                             "log10 of the ratio of total rate to bare Marcus rate"},
};

const vg_metric_info *vg_metric_get(vg_metric_id id)
{
    if ((int)id < 0 || id >= VG_N_METRICS)
        return NULL;
    return &metric_table[id];
}

int vg_metric_find(const char *name)
{
    if (!name)
        return -1;
    for (int i = 0; i < VG_N_METRICS; i++)
        if (strcmp(metric_table[i].name, name) == 0)
            return i;
    return -1;
}

/* log10 of a rate, or VG_FILL where the rate is exactly zero. */
static double log10_or_fill(double ln_value, int zero)
{
    return zero ? VG_FILL : ln_value * VG_LOG10E;
}

void vg_metrics_from_rates(const vg_rates *r, double out[VG_N_METRICS])
{
    int vz = r->coupling_zero;
    int sz = r->assisted_zero;

    out[VG_M_LOG10_K_ELASTIC] = log10_or_fill(r->ln_k_elastic, vz);
    out[VG_M_LOG10_K_ASSISTED] = log10_or_fill(r->ln_k_assisted, vz || sz);
    out[VG_M_LOG10_K_TOTAL] = log10_or_fill(r->ln_k_total, vz);
    out[VG_M_LOG10_K_BARE] = log10_or_fill(r->ln_k_bare, vz);
    out[VG_M_LOG10_RATIO] = log10_or_fill(r->ln_fc_assisted - r->ln_fc_elastic, sz);
    out[VG_M_ASSISTED_FRACTION] = sz ? 0.0 : r->assisted_fraction;
    out[VG_M_LOG10_CONTRAST] = (r->ln_fc_total - r->ln_fc_bare) * VG_LOG10E;
}
