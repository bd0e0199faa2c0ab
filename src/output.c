/*
 * The data writers' front end (vg_output.h): picks the format, creates the
 * temporary file, checks every chunk, and on commit renames the finished file
 * to its final name.  Called by the sweep command; the formats themselves are
 * in out_netcdf.c and out_csv.c.
 *
 * Temporary file: dir/.sweep.nc.XXXXXX (mkstemp), in the output directory so
 * that the final rename(2) is atomic, hidden so that a directory listing
 * shows only finished outputs, and unique so that two runs writing to the
 * same directory cannot spoil each other's temporary file.  It gets the mode
 * a plain new file would have (0666 less the umask).  The finished file is
 * fsynced before the rename, so after a crash dir/sweep.nc is either the
 * earlier file or the complete new one, never a torn one.
 */
#define _POSIX_C_SOURCE 200809L /* mkstemp, fchmod, fsync, O_DIRECTORY */

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "fsutil.h"
#include "output_int.h"

vg_status vg_out_fail_errno(const vg_writer *w, int errnum, vg_error *err)
{
    return vg_out_fail(w, strerror(errnum), err);
}

vg_status vg_out_fail(const vg_writer *w, const char *what, vg_error *err)
{
    return vg_error_set(err, VG_EIO, "cannot write '%s': %s", w->path, what);
}

vg_status vg_out_fail_nomem(const vg_writer *w, vg_error *err)
{
    return vg_error_set(err, VG_ENOMEM, "out of memory writing '%s'", w->path);
}

int vg_out_write_all(int fd, const char *buf, size_t len)
{
    while (len > 0) {
        ssize_t n = write(fd, buf, len);
        if (n < 0) {
            if (errno == EINTR)
                continue;
            return errno;
        }
        buf += n;
        len -= (size_t)n;
    }
    return 0;
}

int vg_out_sync_close(int fd)
{
    int e = 0;

    if (fsync(fd) != 0)
        e = errno;
    if (close(fd) != 0 && e == 0)
        e = errno;
    return e;
}

static void free_writer(vg_writer *w)
{
    free(w->path);
    free(w->tmp);
    free(w);
}

/* Close and remove the temporary file, free w. */
static void drop_writer(vg_writer *w)
{
    w->fmt->discard(w);
    unlink(w->tmp);
    free_writer(w);
}

static char *join_path(const char *dir, size_t dlen, const char *prefix,
                       const char *name, const char *suffix)
{
    size_t len = dlen + strlen(prefix) + strlen(name) + strlen(suffix) + 2;
    char *s = malloc(len);

    if (s)
        snprintf(s, len, "%.*s/%s%s%s", (int)dlen, dir, prefix, name, suffix);
    return s;
}

/* Final and temporary names; trailing slashes of dir are dropped ("" and
 * "/" stay usable). */
static vg_status make_names(vg_writer *w, const char *dir, vg_error *err)
{
    size_t dlen = strlen(dir);

    while (dlen > 1 && dir[dlen - 1] == '/')
        dlen--;
    if (dlen == 0) {
        dir = ".";
        dlen = 1;
    } else if (dlen == 1 && dir[0] == '/') {
        dlen = 0; /* "/" + "/sweep.nc" would give "//sweep.nc" */
    }
    w->path = join_path(dir, dlen, "", w->fmt->file_name, "");
    w->tmp = join_path(dir, dlen, ".", w->fmt->file_name, ".XXXXXX");
    if (!w->path || !w->tmp)
        return vg_error_set(err, VG_ENOMEM, "out of memory opening an output in '%s'", dir);
    return VG_OK;
}

static void select_metrics(vg_writer *w)
{
    int m;

    w->nsel = 0;
    for (m = 0; m < VG_N_METRICS; m++)
        if (w->meta.cfg->metric_on[m])
            w->sel[w->nsel++] = m;
}

/* Create the temporary file and hand it to the format. */
static vg_status start_file(vg_writer *w, vg_error *err)
{
    int fd = mkstemp(w->tmp);
    vg_status st;

    if (fd < 0)
        return vg_out_fail_errno(w, errno, err);
    if (fchmod(fd, vg_fs_new_file_mode()) != 0) {
        int e = errno;
        close(fd);
        unlink(w->tmp);
        return vg_out_fail_errno(w, e, err);
    }
    st = w->fmt->begin(w, fd, err);
    if (st != VG_OK) {
        w->fmt->discard(w);
        unlink(w->tmp);
    }
    return st;
}

vg_status vg_out_open(vg_writer **wp, vg_data_format fmt, const char *dir,
                      const vg_out_meta *meta, vg_error *err)
{
    vg_writer *w;
    vg_status st;

    *wp = NULL;
    if (fmt != VG_FMT_NETCDF && fmt != VG_FMT_CSV)
        return vg_error_set(err, VG_EUSAGE, "unknown output format %u", (unsigned)fmt);
    w = calloc(1, sizeof *w);
    if (!w)
        return vg_error_set(err, VG_ENOMEM, "out of memory opening an output in '%s'", dir);
    w->fmt = fmt == VG_FMT_NETCDF ? &vg_out_netcdf_format : &vg_out_csv_format;
    w->meta = *meta;
    select_metrics(w);
    st = make_names(w, dir, err);
    if (st == VG_OK)
        st = start_file(w, err);
    if (st != VG_OK) {
        free_writer(w);
        return st;
    }
    *wp = w;
    return VG_OK;
}

/* Chunks must continue exactly where the last one ended; every stored value
 * must be finite (VG_FILL marks a missing one), so no file ever holds NaN. */
static vg_status check_chunk(const vg_writer *w, size_t start, size_t count,
                             const double *metrics, vg_error *err)
{
    size_t i, k;

    if (start != w->next || count > w->meta.grid->npoints - start)
        return vg_error_set(err, VG_EIO, "cannot write '%s': points %zu .. %zu do not "
                            "continue at point %zu of %zu", w->path, start,
                            start + count - 1, w->next, w->meta.grid->npoints);
    for (i = 0; i < count; i++)
        for (k = 0; k < w->nsel; k++)
            if (!isfinite(metrics[i * VG_N_METRICS + (size_t)w->sel[k]]))
                return vg_error_set(err, VG_ENUMERIC, "cannot write '%s': '%s' at grid "
                                    "point %zu is not finite", w->path,
                                    vg_metric_get((vg_metric_id)w->sel[k])->name,
                                    start + i);
    return VG_OK;
}

vg_status vg_out_write(vg_writer *w, size_t start, size_t count,
                       const double *metrics, vg_error *err)
{
    vg_status st;

    if (w->failed != VG_OK)
        return vg_error_set(err, w->failed, "cannot write '%s': an earlier write failed",
                            w->path);
    if (count == 0 && start == w->next)
        return VG_OK;
    st = check_chunk(w, start, count, metrics, err);
    if (st == VG_OK)
        st = w->fmt->write(w, start, count, metrics, err);
    if (st != VG_OK) {
        w->failed = st;
        return st;
    }
    w->next += count;
    return VG_OK;
}

/* Make the rename itself durable.  Best effort: the new file is complete and
 * in place by now, and some file systems cannot fsync a directory. */
static void sync_dir(const vg_writer *w)
{
    size_t dlen = strlen(w->path) - strlen(w->fmt->file_name) - 1;
    char *dir = malloc(dlen + 2);
    int fd;

    if (!dir)
        return;
    snprintf(dir, dlen + 2, "%.*s", (int)dlen, w->path);
    fd = open(dlen ? dir : "/", O_RDONLY | O_DIRECTORY);
    if (fd >= 0) {
        (void)fsync(fd);
        close(fd);
    }
    free(dir);
}

vg_status vg_out_finish(vg_writer *w, vg_error *err)
{
    vg_status st;

    if (w->finished)
        return VG_OK;
    if (w->failed != VG_OK) {
        st = vg_error_set(err, w->failed, "cannot write '%s': an earlier write failed",
                          w->path);
    } else if (w->next != w->meta.grid->npoints) {
        st = vg_error_set(err, VG_EIO, "cannot write '%s': only %zu of %zu points were "
                          "written", w->path, w->next, w->meta.grid->npoints);
    } else {
        st = w->fmt->finish(w, err);
    }
    w->fmt->discard(w);
    if (st == VG_OK)
        w->finished = 1;
    else
        w->failed = st;
    return st;
}

vg_status vg_out_commit(vg_writer *w, vg_error *err)
{
    vg_status st = vg_out_finish(w, err);

    if (st == VG_OK && rename(w->tmp, w->path) != 0)
        st = vg_out_fail_errno(w, errno, err);
    if (st == VG_OK)
        sync_dir(w);
    else
        unlink(w->tmp);
    free_writer(w);
    return st;
}

void vg_out_abort(vg_writer *w)
{
    if (w)
        drop_writer(w);
}

const char *vg_out_path(const vg_writer *w)
{
    return w->path;
}

const char *vg_out_temp_path(const vg_writer *w)
{
    return w->tmp;
}
