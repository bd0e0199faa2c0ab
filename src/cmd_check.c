/*
 * The check command: validate a config and print what a sweep would do --
 * the resolved parameters in canonical units, the grid shape, the number of
 * points and the expected output size -- without computing or writing.
 */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <string.h>
#include <sys/statvfs.h>

#include "cmd.h"
#include "vg_config.h"
#include "vg_grid.h"

static void print_param(const vg_config *cfg, vg_param_id p)
{
    const vg_param *q = &cfg->param[p];
    const vg_param_info *info = vg_param_get(p);
    char src[64];

    if (q->defaulted)
        snprintf(src, sizeof src, "default");
    else if (q->line < 0)
        snprintf(src, sizeof src, "--set");
    else
        snprintf(src, sizeof src, "line %d", q->line);
    const char *unit = strcmp(info->unit, "1") == 0 ? "" : info->unit;

    if (q->n == 1)
        printf("  %-20s %-6s %.10g %s", info->key, "scalar", q->v[0], unit);
    else
        printf("  %-20s %-6s %zu values, %.10g .. %.10g %s%s", info->key, "axis", q->n,
               q->v[0], q->v[q->n - 1], unit, q->log_spacing ? " (log spacing)" : "");
    if (q->user_unit[0] && q->user_unit[0] != info->unit[0])
        printf(" (given in %s)", q->user_unit);
    printf("  [%s]\n", src);
}

static void print_grid(const vg_grid *g)
{
    printf("grid: %zu ax%s", g->naxes, g->naxes == 1 ? "is" : "es");
    for (size_t k = 0; k < g->naxes; k++)
        printf("%s%s %zu", k ? " x " : ": ", vg_param_get(g->axis[k])->key, g->dim[k]);
    printf(" (last varies fastest), %zu point%s\n", g->npoints, g->npoints == 1 ? "" : "s");
}

/* Free bytes on the file system that will hold dir: dir itself, or the
 * nearest parent that exists (sweep creates the rest).  -1 if unknown. */
static double free_bytes(const char *dir)
{
    char path[4096];
    struct statvfs sv;

    snprintf(path, sizeof path, "%s", dir);
    for (;;) {
        char *slash;
        if (statvfs(path, &sv) == 0)
            return (double)sv.f_bavail * (double)sv.f_frsize;
        slash = strrchr(path, '/');
        if (!slash)
            return statvfs(".", &sv) == 0 ? (double)sv.f_bavail * (double)sv.f_frsize : -1.0;
        if (slash == path) {
            path[1] = '\0';
            return statvfs(path, &sv) == 0 ? (double)sv.f_bavail * (double)sv.f_frsize : -1.0;
        }
        *slash = '\0';
    }
}

static void print_space(const char *dir, double need)
{
    double avail = free_bytes(dir);
    char a[32], n[32];

    if (avail < 0) {
        printf("free disk space: unknown for '%s'\n", dir);
        return;
    }
    vg_fmt_bytes(avail, a, sizeof a);
    printf("free disk space for '%s': %s\n", dir, a);
    if (need > avail) {
        vg_fmt_bytes(need, n, sizeof n);
        fprintf(stderr, "vibrogate: warning: the outputs and the run's checkpoint may need up to "
                "%s but only %s are free for '%s'\n", n, a, dir);
    }
}

static void print_output(const vg_cmd_args *a, const vg_config *cfg)
{
    char est[32], lim[32], ck[32];
    int k = 0;

    vg_fmt_bytes(vg_grid_output_bytes(cfg), est, sizeof est);
    vg_fmt_bytes(cfg->max_bytes, lim, sizeof lim);
    printf("output: directory '%s', data%s%s\n", a->out_dir ? a->out_dir : cfg->out_dir,
           cfg->formats & VG_FMT_NETCDF ? " sweep.nc" : "",
           cfg->formats & VG_FMT_CSV ? " sweep.csv" : "");
    printf("metrics:");
    for (int m = 0; m < VG_N_METRICS; m++)
        if (cfg->metric_on[m])
            printf("%s %s", k++ ? "," : "", vg_metric_get((vg_metric_id)m)->name);
    printf("\nexpected output size: at most %s (limit %s)\n", est, lim);
    vg_fmt_bytes(vg_grid_checkpoint_bytes(cfg), ck, sizeof ck);
    printf("checkpoint while the run lasts: %s more\n", ck);
    print_space(a->out_dir ? a->out_dir : cfg->out_dir,
                vg_grid_output_bytes(cfg) + vg_grid_checkpoint_bytes(cfg));
}

/* With [model] odorant: which odorant replaces the single mode (whose
 * huang_rhys and mode above are then unused), against which, by which
 * engine. */
static void print_odorants(const vg_config *cfg)
{
    const vg_odorant *od = vg_config_mapped(cfg), *other = vg_config_against(cfg);

    if (!od)
        return;
    printf("odorant: %s (%zu modes) in place of the single mode (huang_rhys and mode unused)",
           od->name, od->light ? od->light->n : 0);
    if (other)
        printf(", against %s (%zu modes)", other->name, other->light ? other->light->n : 0);
    printf(", %s engine\n", cfg->engine == VG_ENGINE_FFT ? "FFT" : "sum");
}

vg_status vg_cmd_check(const vg_cmd_args *a, vg_error *err)
{
    vg_config cfg;
    vg_grid g;
    vg_status st = vg_config_load(&cfg, a->config, a->nset, a->sets, err);

    if (st != VG_OK)
        return st;
    st = vg_config_check_mapped_odorant(&cfg, "check", err);
    if (st == VG_OK)
        st = vg_config_check_maps(&cfg, err);
    if (st != VG_OK) {
        vg_config_free(&cfg);
        return st;
    }
    vg_grid_init(&g, &cfg);
    printf("config: %s: valid\n", cfg.path);
    if (cfg.title[0])
        printf("title: %s\n", cfg.title);
    printf("parameters (canonical units):\n");
    for (int p = 0; p < VG_NPARAM; p++)
        print_param(&cfg, (vg_param_id)p);
    printf("model: mode_statistics = %s, tolerance = %g\n",
           cfg.stats == VG_STATS_FROZEN ? "frozen" : "thermal", cfg.tolerance);
    print_odorants(&cfg);
    print_grid(&g);
    print_output(a, &cfg);
    vg_config_free(&cfg);
    return VG_OK;
}
