/*
 * The sweep command: load and validate the config, create the output
 * directory, compute every chunk of the grid into the run's checkpoint
 * (src/checkpoint.c), then feed the chosen writers from it and commit them
 * only when the whole grid is done.  An interrupt or a failure removes the
 * writers' temporary files, so no partial output keeps a final name, and
 * keeps the checkpoint when it holds work, so that `sweep CONFIG --resume`
 * can finish the run with the same files an uninterrupted run writes.
 */
#define _POSIX_C_SOURCE 200809L
#include <ctype.h>
#include <dirent.h>
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "checkpoint.h"
#include "cmd.h"
#include "fsutil.h"
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

/* A final name that a rename cannot replace (a directory, a device...):
 * refused before any rename, so that no output is replaced while another
 * one then fails. */
static vg_status check_final(const char *path, vg_error *err)
{
    struct stat sb;

    if (lstat(path, &sb) != 0 || S_ISREG(sb.st_mode) || S_ISLNK(sb.st_mode))
        return VG_OK;
    return vg_error_set(err, VG_EIO, "cannot write '%s': %s", path,
                        S_ISDIR(sb.st_mode) ? "is a directory" : "is not a regular file");
}

/* The earlier file at a final name, kept under a hidden name by a hard
 * link until every rename has succeeded ("" when there was none). */
static void keep_earlier(const char *path, char *kept, size_t len)
{
    const char *slash = strrchr(path, '/');
    size_t dlen = slash ? (size_t)(slash - path) + 1 : 0;

    snprintf(kept, len, "%.*s.%s.earlier", (int)dlen, path, path + dlen);
    unlink(kept);
    if (link(path, kept) != 0)
        kept[0] = '\0';
}

/* Finish every file first, so that a failure leaves no new final name
 * beside an old one; then rename them all.  Should a rename fail after an
 * earlier one succeeded, the earlier outputs are put back. */
static vg_status commit_all(writer_set *ws, int quiet, vg_error *err)
{
    char path[MAX_WRITERS][4096], kept[MAX_WRITERS][4200];
    size_t i, done = 0;
    vg_status st = VG_OK;

    for (i = 0; i < ws->n && st == VG_OK; i++)
        st = vg_out_finish(ws->w[i], err);
    for (i = 0; i < ws->n && st == VG_OK; i++)
        st = check_final(vg_out_path(ws->w[i]), err);
    if (st != VG_OK) {
        abort_all(ws);
        return st;
    }
    for (i = 0; i < ws->n; i++) {
        snprintf(path[i], sizeof path[i], "%s", vg_out_path(ws->w[i]));
        keep_earlier(path[i], kept[i], sizeof kept[i]);
    }
    for (i = 0; i < ws->n; i++) {
        if (st != VG_OK) {
            vg_out_abort(ws->w[i]);
            continue;
        }
        st = vg_out_commit(ws->w[i], err);
        done += st == VG_OK;
    }
    for (i = 0; i < ws->n; i++) {
        if (st != VG_OK && i < done) /* put the earlier file back, or remove the new one */
            (void)(kept[i][0] ? rename(kept[i], path[i]) : unlink(path[i]));
        else if (kept[i][0])
            unlink(kept[i]);
        if (st == VG_OK && !quiet)
            fprintf(stderr, "vibrogate: wrote %s\n", path[i]);
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

/* Append s to buf (of len, used *n) quoted for a POSIX shell when it needs
 * it; 0 when it does not fit. */
static int put_word(char *buf, size_t len, size_t *n, const char *s)
{
    static const char plain[] = "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ"
                                "0123456789@%+=:,./_-";
    int quote = s[0] == '\0' || s[strspn(s, plain)] != '\0';

    if (*n + 4 * strlen(s) + 4 >= len)
        return 0;
    buf[(*n)++] = ' ';
    if (quote)
        buf[(*n)++] = '\'';
    for (; *s; s++) {
        if (*s == '\'' && quote) { /* ' ends the quote, \' is one, ' reopens */
            memcpy(buf + *n, "'\\''", 4);
            *n += 4;
        } else {
            buf[(*n)++] = *s;
        }
    }
    if (quote)
        buf[(*n)++] = '\'';
    buf[*n] = '\0';
    return 1;
}

/* The command that finishes this run: its config, --out and --set, then
 * --resume; 0 when it is too long to print whole. */
static int resume_command(const vg_cmd_args *a, char *buf, size_t len)
{
    size_t n = (size_t)snprintf(buf, len, "vibrogate sweep");
    int ok = put_word(buf, len, &n, a->config);

    if (a->out_dir)
        ok = ok && put_word(buf, len, &n, "--out") && put_word(buf, len, &n, a->out_dir);
    for (size_t i = 0; i < a->nset; i++)
        ok = ok && put_word(buf, len, &n, "--set") && put_word(buf, len, &n, a->sets[i]);
    if (a->chunk) {
        char num[32];
        snprintf(num, sizeof num, "%zu", a->chunk);
        ok = ok && put_word(buf, len, &n, "--chunk") && put_word(buf, len, &n, num);
    }
    return ok && put_word(buf, len, &n, "--resume");
}

/* The message of a stopped run whose checkpoint is kept: how to finish it. */
static vg_status kept(const vg_cmd_args *a, size_t done, size_t total, vg_status st,
                      vg_error *err)
{
    char cmd[VG_ERROR_MAX / 2], why[VG_ERROR_MAX];
    const char *how = "to finish, run the same command with --resume added";

    if (resume_command(a, cmd, sizeof cmd))
        how = "to finish, run: ";
    else
        cmd[0] = '\0';
    snprintf(why, sizeof why, "%s", err->msg);
    if (st == VG_EINTR && done < total)
        return vg_error_set(err, st, "interrupted after %zu of %zu points; the work so far is "
                            "kept; %s%s", done, total, how, cmd);
    if (st == VG_EINTR)
        return vg_error_set(err, st, "interrupted while writing the outputs; all %zu points "
                            "are kept; %s%s", total, how, cmd);
    return vg_error_set(err, st, "%s; %zu of %zu points are kept; once that is fixed, %s%s",
                        why, done, total, how, cmd);
}

/* After a failure or an interrupt: keep the checkpoint if it holds work a
 * rerun could use (not after a numerical failure, which would recur). */
static vg_status stopped(const vg_cmd_args *a, const vg_grid *g, vg_ckpt *ck, vg_status st,
                         vg_error *err)
{
    size_t done = vg_ckpt_done(ck);

    if (done > 0 && st != VG_ENUMERIC) {
        vg_ckpt_keep(ck);
        return kept(a, done, g->npoints, st, err);
    }
    vg_ckpt_discard(ck, NULL);
    if (st == VG_EINTR)
        return vg_error_set(err, st, "interrupted before any work was kept (0 of %zu points); "
                            "nothing to resume", g->npoints);
    return st;
}

/* Open the checkpoint for this run; a resumed run also takes the config
 * path the run was started with, so that its metadata match. */
/* 1 if name is one of the data writers' temporaries (".sweep.nc.XXXXXX",
 * mkstemp's six characters) or a kept earlier output (".sweep.csv.earlier"). */
static int run_leftover(const char *name)
{
    static const char *const stems[] = {".sweep.nc.", ".sweep.csv."};

    for (size_t k = 0; k < 2; k++) {
        size_t n = strlen(stems[k]);
        if (strncmp(name, stems[k], n) != 0)
            continue;
        if (strcmp(name + n, "earlier") == 0)
            return 1;
        if (strlen(name + n) != 6)
            return 0;
        for (const char *c = name + n; *c; c++)
            if (!isalnum((unsigned char)*c))
                return 0;
        return 1;
    }
    return 0;
}

/* On --resume: a run killed between creating a temporary file and noting
 * it in the checkpoint (or while renaming) left it behind; the run owns
 * the directory, so such leftovers are removed. */
static void remove_leftovers(const char *dir)
{
    DIR *d = opendir(dir);
    struct dirent *e;

    if (!d)
        return;
    while ((e = readdir(d)) != NULL)
        if (run_leftover(e->d_name)) {
            char path[4400];
            snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
            unlink(path);
        }
    closedir(d);
}

/* FNV-1a of every odorant's mode tables as read (the modes in canonical
 * units and the labels), so that a resumed run refuses a table that changed
 * since the run began; 0 without odorants. */
static uint64_t tables_digest(const vg_config *cfg)
{
    uint64_t h = VG_CKPT_FNV_BASIS;

    for (size_t i = 0; i < cfg->nodorants; i++) {
        const vg_modes *t[2] = {cfg->odorants[i].light, cfg->odorants[i].heavy};
        for (int k = 0; k < 2; k++) {
            if (!t[k])
                continue;
            h = vg_ckpt_fnv1a(h, &t[k]->n, sizeof t[k]->n);
            h = vg_ckpt_fnv1a(h, t[k]->mode, t[k]->n * sizeof *t[k]->mode);
            for (size_t j = 0; j < t[k]->n; j++)
                h = vg_ckpt_fnv1a(h, t[k]->label[j], strlen(t[k]->label[j]) + 1);
        }
    }
    return cfg->nodorants ? h : 0;
}

static vg_status open_checkpoint(const vg_cmd_args *a, vg_config *cfg, const vg_grid *g,
                                 const char *dir, size_t chunk, vg_ckpt **ck, vg_error *err)
{
    vg_ckpt_inputs in = {VG_VERSION, cfg->text, cfg->overrides, g->npoints, chunk,
                         cfg->formats, cfg->metric_on, tables_digest(cfg)};
    vg_ckpt_request rq = {dir, a->resume, cfg->path, a->history, a->fixed_time};
    vg_status st = vg_ckpt_open(ck, &rq, &in, err);
    char *path;

    if (st == VG_OK && a->resume)
        remove_leftovers(dir);
    if (st != VG_OK || strcmp(vg_ckpt_config_path(*ck), cfg->path) == 0)
        return st;
    path = strdup(vg_ckpt_config_path(*ck));
    if (!path) {
        vg_ckpt_keep(*ck);
        return vg_error_set(err, VG_ENOMEM, "out of memory resuming the run in '%s'", dir);
    }
    free(cfg->path);
    cfg->path = path;
    return VG_OK;
}

/* The one call of the sweep engine: every point from opts->start on goes
 * into the checkpoint. */
static vg_status compute(const vg_grid *g, const vg_sweep_opts *opts, vg_ckpt *ck,
                         vg_error *err)
{
    return vg_sweep_run_dist(g, opts, ck ? vg_ckpt_append : NULL, ck, err);
}

/* Feed the writers from the complete checkpoint, chunk by chunk, and commit
 * them. */
static vg_status write_outputs(const vg_cmd_args *a, const vg_config *cfg, const vg_grid *g,
                               const char *dir, size_t chunk, vg_ckpt *ck, vg_error *err)
{
    vg_out_meta meta = {cfg, g, VG_VERSION, vg_ckpt_history(ck)};
    const char *temps[MAX_WRITERS];
    writer_set ws;
    vg_status st = open_all(&ws, cfg, dir, &meta, err);

    if (st != VG_OK)
        return st;
    for (size_t i = 0; i < ws.n; i++)
        temps[i] = vg_out_temp_path(ws.w[i]);
    st = vg_ckpt_note_temps(ck, temps, ws.n, err);
    if (st == VG_OK)
        st = vg_ckpt_replay(ck, chunk, a->stop, sink, &ws, err);
    if (st != VG_OK) {
        abort_all(&ws);
        return st;
    }
    return commit_all(&ws, a->quiet, err);
}

/* The outputs are committed: the checkpoint has served.  A failure to
 * remove it does not undo the outputs, so it is a warning. */
static void finish_checkpoint(vg_ckpt *ck)
{
    vg_error e = {VG_OK, ""};

    if (vg_ckpt_discard(ck, &e) != VG_OK)
        fprintf(stderr, "vibrogate: warning: %s; remove it by hand before the next run\n",
                e.msg);
}

/* A summary of the validity criteria is written when they were evaluated
 * and the data include sweep.nc (the summary is read back from it). */
static int summary_validity(const vg_config *cfg)
{
    return cfg->metric_on[VG_M_FAILED_CRITERIA] && (cfg->formats & VG_FMT_NETCDF);
}

/* Rank 0 after the computation (status st): outputs, figures, or what to
 * do about a stop. */
static vg_status conclude(const vg_cmd_args *a, const vg_config *cfg, const vg_grid *g,
                          const char *dir, size_t chunk, vg_ckpt *ck, vg_status st,
                          vg_error *err)
{
    if (st == VG_OK)
        st = write_outputs(a, cfg, g, dir, chunk, ck, err);
    if (st != VG_OK)
        return stopped(a, g, ck, st, err);
    finish_checkpoint(ck);
    if (cfg->fig.formats || cfg->feasibility.n > 0 || summary_validity(cfg)) {
        char nc[4200];
        snprintf(nc, sizeof nc, "%s/sweep.nc", dir);
        if (cfg->feasibility.n > 0 || summary_validity(cfg))
            st = vg_cmd_summary(nc, dir, a->quiet, err);
        if (st == VG_OK && cfg->fig.formats)
            st = vg_cmd_figures(nc, dir, 0, NULL, a->quiet, 0, err);
    }
    return st;
}

/* Every rank computes (vg_sweep_run_dist); rank 0 alone keeps the
 * checkpoint and writes, and tells the others how it went. */
static vg_status run(const vg_cmd_args *a, vg_config *cfg, vg_error *err)
{
    const char *dir = a->out_dir ? a->out_dir : cfg->out_dir;
    vg_grid g;
    vg_ckpt *ck = NULL;
    size_t chunk = a->chunk ? a->chunk : VG_SWEEP_CHUNK;
    vg_sweep_opts so = {a->threads, chunk, !a->quiet && isatty(2), a->stop, 0};
    int root = vg_dist_rank() == 0;
    vg_status st = VG_OK;

    vg_grid_init(&g, cfg);
    if (root)
        st = a->resume ? VG_OK : vg_fs_make_dirs(dir, err);
    if (root && st == VG_OK)
        st = open_checkpoint(a, cfg, &g, dir, chunk, &ck, err);
    st = vg_dist_agree(st, err);
    if (st != VG_OK)
        return st;
    so.start = root ? vg_ckpt_done(ck) : 0; /* the others take rank 0's */
    st = compute(&g, &so, ck, err);
    if (root)
        st = conclude(a, cfg, &g, dir, chunk, ck, st, err);
    return vg_dist_agree(root ? st : VG_OK, err);
}

vg_status vg_cmd_sweep(const vg_cmd_args *a, vg_error *err)
{
    vg_config cfg;
    vg_status st = vg_config_load(&cfg, a->config, a->nset, a->sets, err);
    int loaded = st == VG_OK;

    if (loaded)
        st = vg_config_check_mapped_odorant(&cfg, "sweep", err);
    if (loaded && st == VG_OK)
        st = vg_config_check_maps(&cfg, err);
    /* Each rank reads the config; a rank that cannot must stop them all. */
    st = vg_dist_agree(st, err);
    if (st == VG_OK && !a->quiet)
        note_defaults(&cfg);
    if (st == VG_OK)
        st = run(a, &cfg, err);
    if (loaded)
        vg_config_free(&cfg);
    return st;
}
