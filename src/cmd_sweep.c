/*
 * The sweep command: load and validate the config, create the output
 * directory, stream every chunk of the grid to the chosen writers, and
 * commit them only when the whole grid is done.  Any failure or an
 * interrupt removes the temporary files; no partial output keeps a final name.
 */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cmd.h"
#include "vg_config.h"
#include "vg_grid.h"
#include "vg_output.h"
#include "vg_sweep.h"

#define MAX_WRITERS 2

typedef struct {
    vg_writer *w[MAX_WRITERS];
    size_t n;
} writer_set;

static vg_status sink(void *ctx, size_t start, size_t count, const double *metrics,
                      vg_error *err)
{
    writer_set *ws = ctx;

    for (size_t i = 0; i < ws->n; i++) {
        vg_status st = vg_out_write(ws->w[i], start, count, metrics, err);
        if (st != VG_OK)
            return st;
    }
    return VG_OK;
}

/* mkdir -p */
static vg_status make_dirs(const char *dir, vg_error *err)
{
    char path[4096];
    size_t len = strlen(dir);

    if (len == 0 || len >= sizeof path)
        return vg_error_set(err, VG_EIO, "output directory name '%s' is empty or too long", dir);
    memcpy(path, dir, len + 1);
    for (char *p = path + 1; ; p++) {
        if (*p != '/' && *p != '\0')
            continue;
        char c = *p;
        *p = '\0';
        if (mkdir(path, 0777) != 0 && errno != EEXIST)
            return vg_error_set(err, VG_EIO, "cannot create output directory '%s': %s",
                                path, strerror(errno));
        *p = c;
        if (c == '\0')
            break;
    }
    struct stat sb;
    if (stat(dir, &sb) != 0 || !S_ISDIR(sb.st_mode))
        return vg_error_set(err, VG_EIO, "output directory '%s' is not a directory", dir);
    return VG_OK;
}

static void abort_all(writer_set *ws)
{
    for (size_t i = 0; i < ws->n; i++)
        vg_out_abort(ws->w[i]);
    ws->n = 0;
}

static vg_status open_all(writer_set *ws, const vg_config *cfg, const char *dir,
                          const vg_out_meta *meta, vg_error *err)
{
    static const vg_data_format fmts[MAX_WRITERS] = {VG_FMT_NETCDF, VG_FMT_CSV};

    ws->n = 0;
    for (size_t i = 0; i < MAX_WRITERS; i++) {
        if (!(cfg->formats & fmts[i]))
            continue;
        vg_status st = vg_out_open(&ws->w[ws->n], fmts[i], dir, meta, err);
        if (st != VG_OK) {
            abort_all(ws);
            return st;
        }
        ws->n++;
    }
    return VG_OK;
}

/* Finish every file first, so that a failure leaves no new final name
 * beside an old one; then rename them all. */
static vg_status commit_all(writer_set *ws, int quiet, vg_error *err)
{
    vg_status st = VG_OK;

    for (size_t i = 0; i < ws->n && st == VG_OK; i++)
        st = vg_out_finish(ws->w[i], err);
    if (st != VG_OK) {
        abort_all(ws);
        return st;
    }
    for (size_t i = 0; i < ws->n; i++) {
        char path[4096];
        snprintf(path, sizeof path, "%s", vg_out_path(ws->w[i]));
        if (st != VG_OK) {
            vg_out_abort(ws->w[i]);
            continue;
        }
        st = vg_out_commit(ws->w[i], err);
        if (st == VG_OK && !quiet)
            fprintf(stderr, "vibrogate: wrote %s\n", path);
    }
    ws->n = 0;
    return st;
}

static void note_defaults(const vg_config *cfg)
{
    for (int p = 0; p < VG_NPARAM; p++)
        if (cfg->param[p].defaulted)
            fprintf(stderr, "vibrogate: note: '%s' not given, using the default %g %s\n",
                    vg_param_get((vg_param_id)p)->key, cfg->param[p].v[0],
                    vg_param_get((vg_param_id)p)->unit);
}

static vg_status run(const vg_cmd_args *a, const vg_config *cfg, vg_error *err)
{
    const char *dir = a->out_dir ? a->out_dir : cfg->out_dir;
    vg_grid g;
    vg_out_meta meta;
    vg_sweep_opts so = {a->threads, 0, !a->quiet && isatty(2), a->stop, 0};
    writer_set ws;
    vg_status st;

    vg_grid_init(&g, cfg);
    meta.cfg = cfg;
    meta.grid = &g;
    meta.version = VG_VERSION;
    meta.history = a->history;
    st = make_dirs(dir, err);
    if (st == VG_OK)
        st = open_all(&ws, cfg, dir, &meta, err);
    if (st != VG_OK)
        return st;
    st = vg_sweep_run(&g, &so, sink, &ws, err);
    if (st != VG_OK) {
        abort_all(&ws);
        if (st == VG_EINTR)
            vg_error_prefix(err, "sweep stopped: ");
        return st;
    }
    st = commit_all(&ws, a->quiet, err);
    if (st == VG_OK && cfg->fig.formats) {
        char nc[4200];
        snprintf(nc, sizeof nc, "%s/sweep.nc", dir);
        st = vg_cmd_figures(nc, dir, 0, NULL, a->quiet, 0, err);
    }
    return st;
}

vg_status vg_cmd_sweep(const vg_cmd_args *a, vg_error *err)
{
    vg_config cfg;
    vg_status st = vg_config_load(&cfg, a->config, a->nset, a->sets, err);

    if (st != VG_OK)
        return st;
    st = vg_config_check_maps(&cfg, err);
    if (st != VG_OK) {
        vg_config_free(&cfg);
        return st;
    }
    if (!a->quiet)
        note_defaults(&cfg);
    st = run(a, &cfg, err);
    vg_config_free(&cfg);
    return st;
}
