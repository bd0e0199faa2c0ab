/*
 * The NetCDF writer (format of vg_output.h, driven by src/output.c):
 * NetCDF-4 following the CF-1.8 conventions.
 *
 * Layout: one dimension and one coordinate variable per grid axis, in grid
 * order (slowest first); every parameter that is not an axis is a scalar
 * (0-d) coordinate variable, named in each data variable's "coordinates"
 * attribute (CF-1.8 section 5.7); one double variable per selected metric
 * over all axes, with _FillValue = VG_FILL for values that do not exist.
 * Global attributes record the program, the constants, the model settings and
 * the full config text, so the file alone says how it was made.
 *
 * Streaming: a chunk of consecutive grid points is in general not a
 * rectangle of the array, so each one is split into rectangles (the rest of a
 * row, whole blocks, the start of a row, recursively over the dimensions)
 * and written with nc_put_vara_double.  The HDF5 chunks run along the
 * fastest dimensions, so they fill in order and a small chunk cache suffices.
 */
#define _GNU_SOURCE /* RTLD_DEFAULT */

#include <dlfcn.h>
#include <errno.h>
#include <fcntl.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "output_int.h"
#include "vg_const.h"

/* HDF5 chunk size in values (256 KiB of doubles): large enough for light
 * deflate to pay, small enough to keep in memory per variable. */
#define NC_CHUNK_VALUES 32768u
/* Chunk cache per variable, in chunks: the one being filled and the last. */
#define NC_CACHE_CHUNKS 2u
/* Hash slots of that cache (HDF5 advises a prime well above the chunks). */
#define NC_CACHE_SLOTS 13u
/* Preemption 1: a chunk is written once, in order (HDF5 H5Pset_chunk_cache). */
#define NC_CACHE_PREEMPT 1.0f
/* Deflate level 1 with the byte shuffle: most of the gain, little CPU. */
#define NC_DEFLATE_LEVEL 1
/* Rectangles one flat range splits into: at most two per dimension + 1. */
#define NC_MAX_PIECES (2 * VG_NPARAM + 1)

#define NC_DEFAULT_TITLE "vibrogate parameter sweep"
#define NC_DEFAULTED "default value (not given in the config)"
#define NC_FROM_SET "set on the command line (--set)"
#define NC_PREDICTION                                                           \
    "All values are model predictions: nonadiabatic (Fermi golden rule) "     \
    "electron-transfer rates of the Marcus-Levich-Jortner expression with a " \
    "classical environment and one quantised mode; they are not measurements."
#define NC_REFERENCES                                                         \
    "R. A. Marcus and N. Sutin, Biochim. Biophys. Acta 811, 265 (1985); "   \
    "J. Jortner, J. Chem. Phys. 64, 4860 (1976); "                          \
    "J. Ulstrup and J. Jortner, J. Chem. Phys. 63, 4358 (1975)"

typedef struct {
    int ncid;
    int open;                   /* 1 while ncid is open */
    int rc;                     /* first NetCDF status that failed, NC_NOERR */
    int sys;                    /* errno right after that call */
    const char *what;           /* the variable or attribute it failed on, or NULL */
    int dimid[VG_NPARAM];       /* per axis */
    int var[VG_N_METRICS];      /* per selected metric */
    size_t ndims;
    size_t dim[VG_NPARAM];      /* grid dims, slowest first */
    size_t inner[VG_NPARAM];    /* values below one index of dim k */
    double *col;                /* one metric of the current chunk */
    size_t col_len;
} nc_state;

typedef struct {
    size_t start[VG_NPARAM], count[VG_NPARAM];
    size_t offset;              /* flat index of its first value */
} nc_piece;

typedef struct {
    const nc_state *s;
    size_t idx[VG_NPARAM];      /* leading indices of the current sub-array */
    size_t n;
    nc_piece p[NC_MAX_PIECES];
} nc_split;

/* Sticky status: NC_TRY runs a NetCDF call only while every earlier one
 * succeeded and keeps the first failure with the object's name and errno
 * (for a failed write NetCDF says only "HDF error"; HDF5 leaves the system's
 * reason in errno), so a definition reads as a plain sequence of calls. */
#define NC_TRY(s, call, what)                 \
    do {                                      \
        if ((s)->rc == NC_NOERR) {            \
            errno = 0;                        \
            keep((s), (call), (what));        \
        }                                     \
    } while (0)

static void keep(nc_state *s, int rc, const char *what)
{
    if (s->rc == NC_NOERR && rc != NC_NOERR) {
        s->sys = errno;
        s->rc = rc;
        s->what = what;
    }
}

/* "cannot write 'P': No space left on device (NetCDF: HDF error, at 'x')";
 * NetCDF's own text alone when no system error was recorded. */
static vg_status nc_status(const vg_writer *w, const nc_state *s, vg_error *err)
{
    char at[NC_MAX_NAME + 16] = "";

    if (s->rc == NC_NOERR)
        return VG_OK;
    if (s->what)
        snprintf(at, sizeof at, "at '%s'", s->what);
    if (s->rc < 0 && s->sys != 0)
        return vg_error_set(err, VG_EIO, "cannot write '%s': %s (%s%s%s)", w->path,
                            strerror(s->sys), nc_strerror(s->rc), at[0] ? ", " : "", at);
    return vg_error_set(err, VG_EIO, "cannot write '%s': %s%s%s%s", w->path,
                        nc_strerror(s->rc), at[0] ? " (" : "", at, at[0] ? ")" : "");
}

static void att_text(nc_state *s, int varid, const char *name, const char *text)
{
    NC_TRY(s, nc_put_att_text(s->ncid, varid, name, strlen(text), text), name);
}

static void att_double(nc_state *s, int varid, const char *name, double x)
{
    NC_TRY(s, nc_put_att_double(s->ncid, varid, name, NC_DOUBLE, 1, &x), name);
}

static void att_int(nc_state *s, int varid, const char *name, int x)
{
    NC_TRY(s, nc_put_att_int(s->ncid, varid, name, NC_INT, 1, &x), name);
}

/* units, long_name and where the value came from, for parameter p. */
static void param_atts(nc_state *s, int varid, const vg_param *par, vg_param_id p)
{
    const vg_param_info *info = vg_param_get(p);

    att_text(s, varid, "units", info->unit);
    att_text(s, varid, "long_name", info->long_name);
    if (par->user_unit[0] != '\0')
        att_text(s, varid, "input_units", par->user_unit);
    if (par->log_spacing)
        att_text(s, varid, "spacing", "logarithmic");
    if (par->defaulted)
        att_text(s, varid, "comment", NC_DEFAULTED);
    else if (par->line == -1)
        att_text(s, varid, "comment", NC_FROM_SET);
    else if (par->line > 0)
        att_int(s, varid, "config_line", par->line);
}

/* A parameter's variable: over its own dimension (an axis) or 0-d. */
static int def_param(nc_state *s, const vg_config *cfg, vg_param_id p, int *dimid)
{
    const char *key = vg_param_get(p)->key;
    int varid = -1;

    if (dimid)
        NC_TRY(s, nc_def_dim(s->ncid, key, cfg->param[p].n, dimid), key);
    NC_TRY(s, nc_def_var(s->ncid, key, NC_DOUBLE, dimid ? 1 : 0, dimid, &varid), key);
    param_atts(s, varid, &cfg->param[p], p);
    return varid;
}

static void def_params(nc_state *s, const vg_grid *g, int varid[VG_NPARAM])
{
    size_t k;
    int p;

    for (k = 0; k < g->naxes; k++)
        varid[g->axis[k]] = def_param(s, g->cfg, g->axis[k], &s->dimid[k]);
    for (p = 0; p < VG_NPARAM; p++)
        if (g->stride[p] == 0)
            varid[p] = def_param(s, g->cfg, (vg_param_id)p, NULL);
}

/* Keys of the scalar parameters, space separated ("" with none). */
static void scalar_names(const vg_grid *g, char *buf, size_t len)
{
    size_t used = 0;
    int p;

    buf[0] = '\0';
    for (p = 0; p < VG_NPARAM; p++)
        if (g->stride[p] == 0 && used < len)
            used += (size_t)snprintf(buf + used, len - used, "%s%s", used ? " " : "",
                                     vg_param_get((vg_param_id)p)->key);
}

/* Chunk shape: whole fastest dimensions while they fit NC_CHUNK_VALUES,
 * then part of the next one, 1 for the slower ones. */
static void chunk_shape(const nc_state *s, size_t chunk[VG_NPARAM])
{
    size_t k, prod = 1;

    for (k = s->ndims; k-- > 0;) {
        if (s->dim[k] <= NC_CHUNK_VALUES / prod)
            chunk[k] = s->dim[k];
        else
            chunk[k] = NC_CHUNK_VALUES / prod > 0 ? NC_CHUNK_VALUES / prod : 1;
        prod *= chunk[k];
    }
}

static void def_storage(nc_state *s, int varid, const char *name)
{
    size_t chunk[VG_NPARAM], bytes = sizeof(double);
    double fill = VG_FILL;
    size_t k;

    NC_TRY(s, nc_def_var_fill(s->ncid, varid, NC_FILL, &fill), name);
    if (s->ndims == 0)
        return; /* a scalar has no chunks */
    chunk_shape(s, chunk);
    for (k = 0; k < s->ndims; k++)
        bytes *= chunk[k];
    NC_TRY(s, nc_def_var_chunking(s->ncid, varid, NC_CHUNKED, chunk), name);
    NC_TRY(s, nc_def_var_deflate(s->ncid, varid, 1, 1, NC_DEFLATE_LEVEL), name);
    NC_TRY(s, nc_set_var_chunk_cache(s->ncid, varid, NC_CACHE_CHUNKS * bytes,
                                     NC_CACHE_SLOTS, NC_CACHE_PREEMPT), name);
}

static void def_metrics(nc_state *s, const vg_writer *w)
{
    char coords[VG_NPARAM * 32];
    size_t k;

    scalar_names(w->meta.grid, coords, sizeof coords);
    for (k = 0; k < w->nsel; k++) {
        const vg_metric_info *mi = vg_metric_get((vg_metric_id)w->sel[k]);
        NC_TRY(s, nc_def_var(s->ncid, mi->name, NC_DOUBLE, (int)s->ndims, s->dimid,
                             &s->var[k]), mi->name);
        def_storage(s, s->var[k], mi->name);
        att_text(s, s->var[k], "units", mi->units);
        att_text(s, s->var[k], "long_name", mi->long_name);
        if (coords[0] != '\0')
            att_text(s, s->var[k], "coordinates", coords);
    }
}

/* The constants the rates use, as text and as numbers. */
static void def_constants(nc_state *s)
{
    char text[256];

    /* 13 digits: the CODATA 2018 digits, which are exact but do not end,
     * then a few more; never rounded up into a different last CODATA digit. */
    snprintf(text, sizeof text, "CODATA 2018: k_B = %.12e eV K-1, hbar = %.12e eV s, "
             "hc = %.12e eV cm, N_A = %.9g mol-1", VG_KB_EV, VG_HBAR_EVS, VG_HC_EVCM,
             VG_SI_NA);
    att_text(s, NC_GLOBAL, "physical_constants", text);
    att_double(s, NC_GLOBAL, "k_B_eV_per_K", VG_KB_EV);
    att_double(s, NC_GLOBAL, "hbar_eV_s", VG_HBAR_EVS);
    att_double(s, NC_GLOBAL, "hc_eV_cm", VG_HC_EVCM);
    att_double(s, NC_GLOBAL, "N_A_per_mol", VG_SI_NA);
}

/* Global "comment": the scenario notes, then the model-prediction note. */
static void def_comment(nc_state *s, const char *notes)
{
    size_t len = strlen(notes) + sizeof NC_PREDICTION + 2;
    char *text = malloc(len);

    if (!text) {
        keep(s, NC_ENOMEM, "comment");
        return;
    }
    snprintf(text, len, "%s%s%s", notes, notes[0] ? "\n\n" : "", NC_PREDICTION);
    att_text(s, NC_GLOBAL, "comment", text);
    free(text);
}

static void def_globals(nc_state *s, const vg_out_meta *meta)
{
    const vg_config *cfg = meta->cfg;
    char source[128];

    snprintf(source, sizeof source, "vibrogate %s", meta->version);
    att_text(s, NC_GLOBAL, "Conventions", "CF-1.8");
    att_text(s, NC_GLOBAL, "title", cfg->title && cfg->title[0] ? cfg->title
                                                                 : NC_DEFAULT_TITLE);
    att_text(s, NC_GLOBAL, "source", source);
    att_text(s, NC_GLOBAL, "history", meta->history ? meta->history : "");
    att_text(s, NC_GLOBAL, "references", NC_REFERENCES);
    def_comment(s, cfg->notes ? cfg->notes : "");
    def_constants(s);
    att_text(s, NC_GLOBAL, "mode_statistics",
             cfg->stats == VG_STATS_FROZEN ? "frozen" : "thermal");
    att_double(s, NC_GLOBAL, "tolerance", cfg->tolerance);
    if (cfg->path)
        att_text(s, NC_GLOBAL, "config_file", cfg->path);
    att_text(s, NC_GLOBAL, "config_text", cfg->text ? cfg->text : "");
    if (cfg->overrides && cfg->overrides[0])
        att_text(s, NC_GLOBAL, "config_overrides", cfg->overrides);
}

static void put_params(nc_state *s, const vg_config *cfg, const int varid[VG_NPARAM])
{
    int p;

    for (p = 0; p < VG_NPARAM; p++)
        NC_TRY(s, nc_put_var_double(s->ncid, varid[p], cfg->param[p].v),
               vg_param_get((vg_param_id)p)->key);
}

static void init_dims(nc_state *s, const vg_grid *g)
{
    size_t k, inner = 1;

    s->ndims = g->naxes;
    for (k = 0; k < g->naxes; k++)
        s->dim[k] = g->dim[k];
    for (k = g->naxes; k-- > 0;) {
        s->inner[k] = inner;
        inner *= g->dim[k];
    }
}

/* HDF5 1.10 crashes in its exit handler when a file failed to close (a full
 * disk while writing: the crash of HDF5 issue #2257, seen with 1.10.8), so a
 * clean error would still end in a segmentation fault.  That handler only
 * releases memory the system reclaims anyway, and every file this program
 * writes is closed explicitly, so ask HDF5 not to install it.  It must come
 * before HDF5's first use, and NetCDF does not export it: look it up among
 * the loaded libraries (libnetcdf brings libhdf5 in).  Harmless when absent
 * or too late. */
static void hdf5_no_atexit(void)
{
    int (*dont_atexit)(void);
    void *sym = dlsym(RTLD_DEFAULT, "H5dont_atexit");

    if (sym) {
        memcpy(&dont_atexit, &sym, sizeof dont_atexit); /* POSIX dlsym idiom */
        (void)dont_atexit();
    }
}

static vg_status nc_begin(vg_writer *w, int fd, vg_error *err)
{
    nc_state *s = calloc(1, sizeof *s);
    int varid[VG_NPARAM] = {-1, -1, -1, -1, -1, -1};

    if (close(fd) != 0) {
        int e = errno;
        free(s);
        return vg_out_fail_errno(w, e, err);
    }
    if (!s)
        return vg_out_fail_nomem(w, err);
    w->state = s;
    init_dims(s, w->meta.grid);
    hdf5_no_atexit();
    NC_TRY(s, nc_create(w->tmp, NC_NETCDF4 | NC_CLOBBER, &s->ncid), NULL);
    s->open = s->rc == NC_NOERR;
    def_params(s, w->meta.grid, varid);
    def_metrics(s, w);
    def_globals(s, &w->meta);
    NC_TRY(s, nc_enddef(s->ncid), NULL);
    put_params(s, w->meta.cfg, varid);
    return nc_status(w, s, err);
}

static void emit(nc_split *sp, size_t k, size_t i, size_t n, size_t flat)
{
    nc_piece *pc = &sp->p[sp->n++];
    size_t j;

    for (j = 0; j < sp->s->ndims; j++) {
        pc->start[j] = j < k ? sp->idx[j] : j == k ? i : 0;
        pc->count[j] = j < k ? 1 : j == k ? n : sp->s->dim[j];
    }
    pc->offset = flat;
}

/* Split [lo, hi), offsets within the sub-array below level k whose first
 * value has flat index base, into rectangles: the rest of the first row,
 * the whole rows, the start of the last row (rows = indices of dim k). */
static void split(nc_split *sp, size_t k, size_t base, size_t lo, size_t hi)
{
    size_t inner = sp->s->inner[k];
    size_t i0 = lo / inner, i1 = hi / inner;

    if (lo == hi)
        return;
    if (lo % inner == 0 && hi % inner == 0) {
        emit(sp, k, i0, i1 - i0, base + lo);
        return;
    }
    if (i0 == i1) {
        sp->idx[k] = i0;
        split(sp, k + 1, base + i0 * inner, lo % inner, hi % inner);
        return;
    }
    if (lo % inner != 0) {
        sp->idx[k] = i0;
        split(sp, k + 1, base + i0 * inner, lo % inner, inner);
        i0++;
    }
    if (i1 > i0)
        emit(sp, k, i0, i1 - i0, base + i0 * inner);
    if (hi % inner != 0) {
        sp->idx[k] = i1;
        split(sp, k + 1, base + i1 * inner, 0, hi % inner);
    }
}

/* Metric k of the chunk, contiguous in s->col. */
static int gather(nc_state *s, const vg_writer *w, size_t k, size_t count,
                  const double *metrics)
{
    size_t i;

    if (count > s->col_len) {
        double *c = realloc(s->col, count * sizeof *c);
        if (!c)
            return -1;
        s->col = c;
        s->col_len = count;
    }
    for (i = 0; i < count; i++)
        s->col[i] = metrics[i * VG_N_METRICS + (size_t)w->sel[k]];
    return 0;
}

static vg_status nc_write(vg_writer *w, size_t start, size_t count,
                          const double *metrics, vg_error *err)
{
    nc_state *s = w->state;
    nc_split sp;
    size_t k, i;

    sp.s = s;
    sp.n = 0;
    if (s->ndims > 0)
        split(&sp, 0, 0, start, start + count);
    for (k = 0; k < w->nsel && s->rc == NC_NOERR; k++) {
        const char *name = vg_metric_get((vg_metric_id)w->sel[k])->name;
        if (gather(s, w, k, count, metrics) != 0)
            return vg_out_fail_nomem(w, err);
        if (s->ndims == 0)
            NC_TRY(s, nc_put_var_double(s->ncid, s->var[k], s->col), name);
        for (i = 0; i < sp.n; i++)
            NC_TRY(s, nc_put_vara_double(s->ncid, s->var[k], sp.p[i].start,
                                         sp.p[i].count, s->col + (sp.p[i].offset - start)),
                   name);
    }
    return nc_status(w, s, err);
}

static vg_status nc_finish(vg_writer *w, vg_error *err)
{
    nc_state *s = w->state;
    int fd, e;

    s->open = 0; /* after a failed nc_close any further call may crash HDF5 */
    NC_TRY(s, nc_close(s->ncid), NULL);
    if (s->rc != NC_NOERR)
        return nc_status(w, s, err);
    /* NetCDF does not fsync; do it through a descriptor of our own. */
    fd = open(w->tmp, O_RDONLY);
    e = fd < 0 ? errno : vg_out_sync_close(fd);
    return e != 0 ? vg_out_fail_errno(w, e, err) : VG_OK;
}

static void nc_discard(vg_writer *w)
{
    nc_state *s = w->state;

    if (!s)
        return;
    /* nc_abort releases the file without writing out what is pending; the
     * file is removed next, so its status is moot.  After any failed call
     * (a full disk, above all) HDF5's state can be half torn down and
     * nc_abort may crash in it: the handle is then left alone, a leak that
     * lasts only until the process exits with the error. */
    if (s->open && s->rc == NC_NOERR)
        (void)nc_abort(s->ncid);
    free(s->col);
    free(s);
    w->state = NULL;
}

const vg_out_format vg_out_netcdf_format = {
    "sweep.nc", nc_begin, nc_write, nc_finish, nc_discard
};
