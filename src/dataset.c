/*
 * The data-file reader (vg_dataset.h): opens a sweep.nc written by
 * src/out_netcdf.c, rebuilds its config and reads metrics back, so that
 * figures can be redrawn from the file alone.  Called by the render
 * command and by sweep when it draws figures.
 *
 * The config is re-parsed from the global attribute config_text with the
 * overrides of config_overrides (the file's own --set lines) and then the
 * caller's, through vg_config_load_text.  The file's coordinate variables
 * then replace every parameter's values, so that the numbers stored, not
 * numbers derived again, drive the figures; before that each parameter must
 * have the same shape in both (an axis of the same length, or a scalar).  A
 * caller's --set may change figure keys, not the grid: one that names a
 * parameter must give exactly the values the file holds.
 *
 * ds->grid points at ds->cfg, so an open vg_dataset must stay where it is
 * (not be copied or moved) until vg_dataset_close.  Every NetCDF call's
 * status is checked; messages use nc_strerror.
 */
#define _POSIX_C_SOURCE 200809L /* strdup */

#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vg_dataset.h"

#define DS_NO_FILE (-1)  /* ds->ncid while nothing is open */
#define DS_SET_PREFIX "parameters."

/* "cannot read 'PATH': NetCDF's reason (at 'what')", VG_EIO. */
static vg_status nc_fail(const vg_dataset *ds, int rc, const char *what, vg_error *err)
{
    if (what)
        return vg_error_set(err, VG_EIO, "cannot read '%s': %s (at '%s')", ds->path,
                            nc_strerror(rc), what);
    return vg_error_set(err, VG_EIO, "cannot read '%s': %s", ds->path, nc_strerror(rc));
}

static vg_status no_memory(const vg_dataset *ds, vg_error *err)
{
    return vg_error_set(err, VG_ENOMEM, "out of memory reading '%s'", ds->path);
}

static vg_status open_file(vg_dataset *ds, vg_error *err)
{
    int rc = nc_open(ds->path, NC_NOWRITE, &ds->ncid);

    if (rc == NC_NOERR)
        return VG_OK;
    ds->ncid = DS_NO_FILE;
    if (rc == NC_ENOTNC)
        return vg_error_set(err, VG_ECONFIG, "'%s' is not a vibrogate data file (%s)",
                            ds->path, nc_strerror(rc));
    return vg_error_set(err, VG_EIO, "cannot open '%s': %s", ds->path, nc_strerror(rc));
}

/* Global text attribute name into *out (owned, NUL-terminated), or NULL
 * when absent. */
static vg_status read_text_att(const vg_dataset *ds, const char *name, char **out,
                               vg_error *err)
{
    nc_type type;
    size_t len;
    int rc = nc_inq_att(ds->ncid, NC_GLOBAL, name, &type, &len);

    *out = NULL;
    if (rc == NC_ENOTATT)
        return VG_OK;
    if (rc != NC_NOERR)
        return nc_fail(ds, rc, name, err);
    if (type != NC_CHAR)
        return vg_error_set(err, VG_ECONFIG, "'%s': attribute '%s' is not text", ds->path,
                            name);
    *out = malloc(len + 1);
    if (!*out)
        return no_memory(ds, err);
    rc = nc_get_att_text(ds->ncid, NC_GLOBAL, name, *out);
    (*out)[len] = '\0';
    if (rc != NC_NOERR)
        return nc_fail(ds, rc, name, err);
    if (strlen(*out) != len)
        return vg_error_set(err, VG_ECONFIG, "'%s': attribute '%s' holds a NUL byte",
                            ds->path, name);
    return VG_OK;
}

/* The file's override lines (stored, '\n'-joined, cut in place; empty
 * lines skipped) followed by the caller's, in *all (owned array). */
static size_t split_sets(char *stored, size_t nset, const char *const *sets,
                         const char **all)
{
    size_t n = 0, i;
    char *line = stored;

    while (line) {
        char *nl = strchr(line, '\n');
        if (nl)
            *nl = '\0';
        if (line[0] != '\0')
            all[n++] = line;
        line = nl ? nl + 1 : NULL;
    }
    for (i = 0; i < nset; i++)
        all[n++] = sets[i];
    return n;
}

static size_t count_lines(const char *s)
{
    size_t n = 1;

    for (; s && *s; s++)
        n += *s == '\n';
    return n;
}

static vg_status load_config(vg_dataset *ds, size_t nset, const char *const *sets,
                             vg_error *err)
{
    char *text = NULL, *stored = NULL, *name = NULL;
    const char **all = NULL;
    size_t len = strlen(ds->path) + sizeof " (config_text)";
    vg_status st = read_text_att(ds, "config_text", &text, err);

    if (st == VG_OK && !text)
        st = vg_error_set(err, VG_ECONFIG, "'%s' is not a vibrogate data file (no "
                          "'config_text' attribute)", ds->path);
    if (st == VG_OK)
        st = read_text_att(ds, "config_overrides", &stored, err);
    if (st == VG_OK) {
        name = malloc(len);
        all = malloc((count_lines(stored) + nset) * sizeof *all);
        if (!name || !all)
            st = no_memory(ds, err);
    }
    if (st == VG_OK) {
        size_t n = split_sets(stored, nset, sets, all);
        snprintf(name, len, "%s (config_text)", ds->path);
        st = vg_config_load_text(&ds->cfg, name, text, n, all, err);
    }
    free(text);
    free(stored);
    free(name);
    free(all);
    return st;
}

/* ---- the file's coordinates ----------------------------------------- */

/* Parameter p as the file holds it. */
typedef struct {
    const char *key;
    int dimid;      /* its dimension, -1 for a scalar */
    int varid;      /* its coordinate variable */
    size_t n;       /* number of values: the dimension's length, 1 for a scalar */
} file_param;

/* Whether set ("section.key=value", white space around the name allowed as
 * vg_config accepts it) names parameter key. */
static int set_names(const char *set, const char *key)
{
    const char *eq = strchr(set, '=');
    size_t plen = strlen(DS_SET_PREFIX), klen = strlen(key);

    if (!eq)
        return 0;
    while (set < eq && (*set == ' ' || *set == '\t'))
        set++;
    while (eq > set && (eq[-1] == ' ' || eq[-1] == '\t'))
        eq--;
    return (size_t)(eq - set) == plen + klen && strncmp(set, DS_SET_PREFIX, plen) == 0
           && strncmp(set + plen, key, klen) == 0;
}

static int sets_name(size_t nset, const char *const *sets, const char *key)
{
    size_t i;

    for (i = 0; i < nset; i++)
        if (set_names(sets[i], key))
            return 1;
    return 0;
}

/* The dimension (if any) and the variable called fp->key, their shapes
 * checked against each other. */
static vg_status find_param(const vg_dataset *ds, file_param *fp, vg_error *err)
{
    int ndims = 0, dimid = -1;
    int rc = nc_inq_dimid(ds->ncid, fp->key, &fp->dimid);

    fp->n = 1;
    if (rc == NC_EBADDIM) {
        fp->dimid = -1;
        rc = NC_NOERR;
    } else if (rc == NC_NOERR) {
        rc = nc_inq_dimlen(ds->ncid, fp->dimid, &fp->n);
    }
    if (rc != NC_NOERR)
        return nc_fail(ds, rc, fp->key, err);
    rc = nc_inq_varid(ds->ncid, fp->key, &fp->varid);
    if (rc == NC_ENOTVAR)
        return vg_error_set(err, VG_ECONFIG, "'%s' has no coordinate variable '%s'",
                            ds->path, fp->key);
    if (rc == NC_NOERR)
        rc = nc_inq_varndims(ds->ncid, fp->varid, &ndims);
    if (rc == NC_NOERR && ndims == 1)
        rc = nc_inq_vardimid(ds->ncid, fp->varid, &dimid);
    if (rc != NC_NOERR)
        return nc_fail(ds, rc, fp->key, err);
    if (fp->dimid < 0 ? ndims != 0 : ndims != 1 || dimid != fp->dimid)
        return vg_error_set(err, VG_ECONFIG, "'%s': coordinate variable '%s' does not "
                            "lie along its own dimension", ds->path, fp->key);
    return VG_OK;
}

/* "N values" or "a single value", for messages. */
static void describe(char *buf, size_t len, size_t n)
{
    if (n == 1)
        snprintf(buf, len, "a single value");
    else
        snprintf(buf, len, "%zu values", n);
}

/* The config's parameter and the file's disagree (in count, or in values
 * when a caller's --set named it). */
static vg_status mismatch(const vg_dataset *ds, const file_param *fp, size_t cfg_n,
                          int by_set, vg_error *err)
{
    char in_file[32], in_cfg[32];

    describe(in_file, sizeof in_file, fp->n);
    describe(in_cfg, sizeof in_cfg, cfg_n);
    if (by_set && fp->n == cfg_n)
        return vg_error_set(err, VG_ECONFIG, "--set %s%s: the grid of a data file cannot be "
                            "changed ('%s' holds other values of '%s')", DS_SET_PREFIX,
                            fp->key, ds->path, fp->key);
    if (by_set)
        return vg_error_set(err, VG_ECONFIG, "--set %s%s: the grid of a data file cannot be "
                            "changed ('%s' holds %s of '%s', the --set gives %s)",
                            DS_SET_PREFIX, fp->key, ds->path, in_file, fp->key, in_cfg);
    return vg_error_set(err, VG_ECONFIG, "'%s' does not match its own config: it holds %s "
                        "of '%s', its config gives %s", ds->path, in_file, fp->key, in_cfg);
}

/* Values fit for coordinates: finite, and an axis strictly monotonic. */
static vg_status check_values(const vg_dataset *ds, const file_param *fp, const double *v,
                              vg_error *err)
{
    size_t i;

    for (i = 0; i < fp->n; i++)
        if (!isfinite(v[i]))
            return vg_error_set(err, VG_ECONFIG, "'%s': coordinate '%s' holds a value "
                                "that is not finite (at index %zu)", ds->path, fp->key, i);
    for (i = 1; i < fp->n; i++)
        if (!(v[1] > v[0] ? v[i] > v[i - 1] : v[i] < v[i - 1]))
            return vg_error_set(err, VG_ECONFIG, "'%s': coordinate '%s' is not strictly "
                                "increasing or decreasing (at index %zu)", ds->path,
                                fp->key, i);
    return VG_OK;
}

/* Replace parameter p's values by the file's. */
static vg_status take_param(vg_dataset *ds, vg_param_id p, int by_set, vg_error *err)
{
    vg_param *par = &ds->cfg.param[p];
    file_param fp;
    double *v;
    vg_status st;
    int rc;

    fp.key = vg_param_get(p)->key;
    st = find_param(ds, &fp, err);
    if (st != VG_OK)
        return st;
    if (fp.n != par->n)
        return mismatch(ds, &fp, par->n, by_set, err);
    v = malloc(fp.n * sizeof *v);
    if (!v)
        return no_memory(ds, err);
    rc = nc_get_var_double(ds->ncid, fp.varid, v);
    if (rc != NC_NOERR)
        st = nc_fail(ds, rc, fp.key, err);
    else
        st = check_values(ds, &fp, v, err);
    if (st == VG_OK && by_set && memcmp(v, par->v, fp.n * sizeof *v) != 0)
        st = mismatch(ds, &fp, par->n, by_set, err);
    if (st != VG_OK) {
        free(v);
        return st;
    }
    free(par->v);
    par->v = v;
    return VG_OK;
}

vg_status vg_dataset_open(vg_dataset *ds, const char *path, size_t nset,
                          const char *const *sets, vg_error *err)
{
    vg_status st;
    int p;

    memset(ds, 0, sizeof *ds);
    ds->ncid = DS_NO_FILE;
    ds->path = strdup(path);
    if (!ds->path)
        return vg_error_set(err, VG_ENOMEM, "out of memory reading '%s'", path);
    st = open_file(ds, err);
    if (st == VG_OK)
        st = load_config(ds, nset, sets, err);
    for (p = 0; st == VG_OK && p < VG_NPARAM; p++)
        st = take_param(ds, (vg_param_id)p,
                        sets_name(nset, sets, vg_param_get((vg_param_id)p)->key), err);
    if (st != VG_OK) {
        vg_dataset_close(ds);
        return st;
    }
    vg_grid_init(&ds->grid, &ds->cfg);
    return VG_OK;
}

/* ---- metrics ------------------------------------------------------ */

/* "log10_k_elastic, log10_ratio": the metrics the file holds. */
static void held_metrics(const vg_dataset *ds, char *buf, size_t len)
{
    size_t used = 0;
    int m, varid;

    snprintf(buf, len, "none");
    for (m = 0; m < VG_N_METRICS; m++) {
        const char *name = vg_metric_get((vg_metric_id)m)->name;
        if (nc_inq_varid(ds->ncid, name, &varid) == NC_NOERR && used < len)
            used += (size_t)snprintf(buf + used, len - used, "%s%s", used ? ", " : "", name);
    }
}

/* The variable's dimensions must be the grid's axes, in grid order. */
static vg_status check_dims(const vg_dataset *ds, int varid, const char *name,
                            vg_error *err)
{
    int dimids[NC_MAX_VAR_DIMS], ndims, rc, want;
    size_t k;

    rc = nc_inq_varndims(ds->ncid, varid, &ndims);
    if (rc == NC_NOERR && ndims >= 0 && (size_t)ndims == ds->grid.naxes)
        rc = nc_inq_vardimid(ds->ncid, varid, dimids);
    if (rc != NC_NOERR)
        return nc_fail(ds, rc, name, err);
    for (k = 0; (size_t)ndims == ds->grid.naxes && k < ds->grid.naxes; k++) {
        rc = nc_inq_dimid(ds->ncid, vg_param_get(ds->grid.axis[k])->key, &want);
        if (rc != NC_NOERR)
            return nc_fail(ds, rc, name, err);
        if (dimids[k] != want)
            break;
    }
    if ((size_t)ndims != ds->grid.naxes || k < ds->grid.naxes)
        return vg_error_set(err, VG_ECONFIG, "'%s': metric '%s' does not lie along the "
                            "grid's %zu axes in grid order", ds->path, name, ds->grid.naxes);
    return VG_OK;
}

/* A file's own fill value becomes VG_FILL; any other value must be finite. */
static vg_status check_metric(const vg_dataset *ds, int varid, const char *name,
                              double *out, vg_error *err)
{
    double fill = VG_FILL;
    int no_fill = 0, rc = nc_inq_var_fill(ds->ncid, varid, &no_fill, &fill);
    size_t i;

    if (rc != NC_NOERR)
        return nc_fail(ds, rc, name, err);
    for (i = 0; i < ds->grid.npoints; i++) {
        if (!no_fill && out[i] == fill)
            out[i] = VG_FILL;
        else if (!isfinite(out[i]))
            return vg_error_set(err, VG_ECONFIG, "'%s': metric '%s' holds a value that is "
                                "not finite (at grid point %zu)", ds->path, name, i);
    }
    return VG_OK;
}

vg_status vg_dataset_read(const vg_dataset *ds, vg_metric_id m, double *out, vg_error *err)
{
    const vg_metric_info *mi = vg_metric_get(m);
    char held[VG_N_METRICS * 32];
    vg_status st;
    int varid, rc;

    if (!mi)
        return vg_error_set(err, VG_ECONFIG, "'%s': unknown metric number %d", ds->path,
                            (int)m);
    rc = nc_inq_varid(ds->ncid, mi->name, &varid);
    if (rc == NC_ENOTVAR) {
        held_metrics(ds, held, sizeof held);
        return vg_error_set(err, VG_ECONFIG, "'%s' does not hold metric '%s' (it holds: %s)",
                            ds->path, mi->name, held);
    }
    if (rc != NC_NOERR)
        return nc_fail(ds, rc, mi->name, err);
    st = check_dims(ds, varid, mi->name, err);
    if (st != VG_OK)
        return st;
    rc = nc_get_var_double(ds->ncid, varid, out);
    if (rc != NC_NOERR)
        return nc_fail(ds, rc, mi->name, err);
    return check_metric(ds, varid, mi->name, out, err);
}

void vg_dataset_close(vg_dataset *ds)
{
    if (!ds)
        return;
    if (ds->ncid != DS_NO_FILE)
        (void)nc_close(ds->ncid); /* read-only: nothing is lost if it fails */
    vg_config_free(&ds->cfg);
    free(ds->path);
    ds->path = NULL;
    ds->ncid = DS_NO_FILE;
}
