/*
 * Tests of the data writers (vg_output.h): a config built by hand, written in
 * chunks of awkward sizes, read back with the NetCDF C API and a CSV parser
 * of our own, and compared value by value with an independent formula of the
 * flat index.  Also the temporary-file rules and every error path.
 *
 * References: the row-major (C order) index of NetCDF's C API
 * (nc_get_var1_double, NetCDF-C documentation); the axis order stated in
 * vg_grid.h; the sweep.csv layout of the project's output specification
 * (the six parameter columns gap_meV .. temperature_K, then the selected
 * metrics, empty fields for missing values); NC_FILL_DOUBLE from netcdf.h;
 * CODATA 2018 values from docs/theory.md; "%.17g" reads back to the same double
 * (17 significant digits suffice for binary64: IEEE 754-2008 section 5.12.2,
 * from memory).
 */
#define _GNU_SOURCE /* unshare, mount; nftw, mkdtemp, setrlimit */

#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include "testutil.h"

#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <ftw.h>
#include <math.h>
#include <netcdf.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sched.h>
#include <sys/mount.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "vg_output.h"

#define ROOT_LEN 64   /* the mkdtemp directory */
#define DIR_LEN 128   /* a test's directory */
#define PATH_LEN 256  /* a file in it */

/* Axis order of vg_grid.h, slowest first (stated there, not taken from
 * grid.c). */
static const vg_param_id axis_order[VG_NPARAM] = {
    VG_P_TEMPERATURE, VG_P_MODE, VG_P_HUANG_RHYS,
    VG_P_COUPLING, VG_P_REORG, VG_P_GAP
};

/* Parameter values: base + step * index ("high-entropy" numbers). */
static const double par_base[VG_NPARAM] = {-37.25, 18.5, 1.0, 0.0735, 204.6, 150.0};
static const double par_step[VG_NPARAM] = {41.125, 18.5, 0.375, 0.0419, 12.4, 53.3};

static const char config_text[] =
    "[scenario]\ntitle = writer check\n[parameters]\ngap = -37.25 .. 209.5 meV, 7 points\n";

typedef struct {
    vg_config cfg;
    vg_grid grid;
    vg_out_meta meta;
    char dir[DIR_LEN];    /* a fresh directory for this test */
} fixture;

static char root[ROOT_LEN]; /* mkdtemp directory holding every test's files */
static int subdir_count;

/* ---- the independent model of what the writers must produce ---------- */

static double param_value(int p, size_t i)
{
    return par_base[p] + par_step[p] * (double)i;
}

/* Metric m at grid point flat: values that need all 17 digits, negative
 * subnormals for log10_ratio, and VG_FILL holes in log10_k_assisted. */
static double metric_value(size_t flat, int m)
{
    if (m == VG_M_LOG10_K_ASSISTED && flat % 11 == 3)
        return VG_FILL;
    if (m == VG_M_LOG10_RATIO)
        return ((double)flat - 50.0) * 1.0e-310;
    return ((double)flat + 0.1 * (m + 1)) / 3.0 - 2.0 * m;
}

/* Index of parameter p at flat by mixed radix over the axis order. */
static size_t param_index(const vg_config *cfg, size_t flat, int p)
{
    size_t stride = 1;
    int k;

    for (k = VG_NPARAM - 1; k >= 0; k--) {
        if (axis_order[k] == (vg_param_id)p)
            return (flat / stride) % cfg->param[p].n;
        stride *= cfg->param[axis_order[k]].n;
    }
    return 0;
}

static size_t npoints_of(const vg_config *cfg)
{
    size_t n = 1;
    int p;

    for (p = 0; p < VG_NPARAM; p++)
        n *= cfg->param[p].n;
    return n;
}

/* ---- fixture ---------------------------------------------------------- */

static void new_dir(char *dir)
{
    snprintf(dir, DIR_LEN, "%s/t%d", root, subdir_count++);
    assert_int_equal(mkdir(dir, 0777), 0);
}

static void set_param(vg_param *par, int p, size_t n)
{
    size_t i;

    memset(par, 0, sizeof *par);
    par->n = n;
    par->v = malloc(n * sizeof *par->v);
    assert_non_null(par->v);
    for (i = 0; i < n; i++)
        par->v[i] = param_value(p, i);
    par->line = 3 + p;
}

/* Shape n[] per parameter; metrics selected: all but k_bare and contrast. */
static void build_config(fixture *f, const size_t n[VG_NPARAM])
{
    vg_config *c = &f->cfg;
    int p, m;

    memset(f, 0, sizeof *f);
    for (p = 0; p < VG_NPARAM; p++)
        set_param(&c->param[p], p, n[p]);
    c->param[VG_P_COUPLING].defaulted = 1;
    c->param[VG_P_COUPLING].line = 0;
    c->param[VG_P_REORG].line = -1;
    c->param[VG_P_TEMPERATURE].log_spacing = 1;
    snprintf(c->param[VG_P_MODE].user_unit, sizeof c->param[VG_P_MODE].user_unit, "cm-1");
    c->path = strdup("writer.ini");
    c->text = strdup(config_text);
    c->overrides = strdup("parameters.reorganization=18.5 .. 92.5 meV, 5 points");
    c->title = strdup("writer check");
    c->notes = strdup("first line of notes\nsecond line");
    c->stats = VG_STATS_THERMAL;
    c->tolerance = 2.5e-11;
    c->formats = VG_FMT_NETCDF | VG_FMT_CSV;
    for (m = 0; m < VG_N_METRICS; m++)
        c->metric_on[m] = m != VG_M_LOG10_K_BARE && m != VG_M_LOG10_CONTRAST;
    vg_grid_init(&f->grid, c);
    f->meta.cfg = c;
    f->meta.grid = &f->grid;
    f->meta.version = "0.1.0";
    f->meta.history = "2024-05-04T10:11:12Z vibrogate sweep writer.ini";
}

/* The same with a fresh directory f->dir. */
static void build(fixture *f, const size_t n[VG_NPARAM])
{
    build_config(f, n);
    new_dir(f->dir);
}

static void release(fixture *f)
{
    int p;

    for (p = 0; p < VG_NPARAM; p++)
        free(f->cfg.param[p].v);
    free(f->cfg.path);
    free(f->cfg.text);
    free(f->cfg.overrides);
    free(f->cfg.title);
    free(f->cfg.notes);
}

static const size_t shape_3x5x7[VG_NPARAM] = {7, 5, 1, 1, 1, 3};

static int setup_3x5x7(void **state)
{
    fixture *f = malloc(sizeof *f);

    if (!f)
        return -1;
    build(f, shape_3x5x7);
    *state = f;
    return 0;
}

static int teardown(void **state)
{
    release(*state);
    free(*state);
    return 0;
}

/* ---- writing ---------------------------------------------------------- */

/* Write the whole grid in chunks of sizes[0], sizes[1], ... (the last size
 * repeats; 0 = the rest).  Returns the first failing status. */
static vg_status write_chunks(vg_writer *w, const vg_config *cfg, const size_t *sizes,
                              size_t nsizes, vg_error *err)
{
    size_t total = npoints_of(cfg), start = 0, k = 0;

    while (start < total) {
        size_t count = sizes[k < nsizes ? k : nsizes - 1];
        double *met;
        vg_status st;
        size_t i;
        int m;

        k++;
        if (count == 0 || count > total - start)
            count = total - start;
        met = malloc(count * VG_N_METRICS * sizeof *met);
        assert_non_null(met);
        for (i = 0; i < count; i++)
            for (m = 0; m < VG_N_METRICS; m++)
                met[i * VG_N_METRICS + (size_t)m] = metric_value(start + i, m);
        st = vg_out_write(w, start, count, met, err);
        free(met);
        if (st != VG_OK)
            return st;
        start += count;
    }
    return VG_OK;
}

static vg_status write_file(fixture *f, vg_data_format fmt, const char *dir,
                            const size_t *sizes, size_t nsizes, vg_error *err)
{
    vg_writer *w;
    vg_status st = vg_out_open(&w, fmt, dir, &f->meta, err);

    if (st != VG_OK)
        return st;
    st = write_chunks(w, &f->cfg, sizes, nsizes, err);
    if (st != VG_OK) {
        vg_out_abort(w);
        return st;
    }
    return vg_out_commit(w, err);
}

static const size_t awkward[] = {1, 7, 13, 0};

/* ---- reading back ----------------------------------------------------- */

static void path_in(char *buf, const char *dir, const char *name)
{
    int n = snprintf(buf, PATH_LEN, "%s/%s", dir, name);

    assert_true(n > 0 && n < PATH_LEN);
}

static void write_text(const char *path, const char *text)
{
    FILE *fp = fopen(path, "w");

    assert_non_null(fp);
    assert_true(fputs(text, fp) >= 0);
    assert_int_equal(fclose(fp), 0);
}

/* Text attribute name of varid into buf (NUL-terminated). */
static void get_att_text(int ncid, int varid, const char *name, char *buf, size_t size)
{
    size_t len;

    assert_int_equal(nc_inq_attlen(ncid, varid, name, &len), NC_NOERR);
    assert_true(len < size);
    assert_int_equal(nc_get_att_text(ncid, varid, name, buf), NC_NOERR);
    buf[len] = '\0';
}

static void assert_att_text(int ncid, int varid, const char *name, const char *want)
{
    char buf[4096];

    get_att_text(ncid, varid, name, buf, sizeof buf);
    assert_string_equal(buf, want);
}

static double att_double(int ncid, int varid, const char *name)
{
    double x = 0.0;
    size_t len = 0;

    assert_int_equal(nc_inq_attlen(ncid, varid, name, &len), NC_NOERR);
    assert_int_equal(len, 1);
    assert_int_equal(nc_get_att_double(ncid, varid, name, &x), NC_NOERR);
    return x;
}

/* Every stored metric at every index equals metric_value(flat) with flat the
 * row-major index over the expected axes; unselected metrics are absent. */
static void check_nc_values(const vg_config *cfg, const char *path)
{
    size_t total = npoints_of(cfg), flat, idx[VG_NPARAM], nax;
    int ncid, varid, m, k;

    assert_int_equal(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    for (m = 0; m < VG_N_METRICS; m++) {
        int rc = nc_inq_varid(ncid, vg_metric_get((vg_metric_id)m)->name, &varid);
        if (!cfg->metric_on[m]) {
            assert_int_equal(rc, NC_ENOTVAR);
            continue;
        }
        assert_int_equal(rc, NC_NOERR);
        for (flat = 0; flat < total; flat++) {
            double got;
            for (nax = 0, k = 0; k < VG_NPARAM; k++)
                if (cfg->param[axis_order[k]].n > 1)
                    idx[nax++] = param_index(cfg, flat, axis_order[k]);
            assert_int_equal(nc_get_var1_double(ncid, varid, idx, &got), NC_NOERR);
            assert_true(got == metric_value(flat, m));
        }
    }
    assert_int_equal(nc_close(ncid), NC_NOERR);
}

/* Split one CSV line into fields (empty ones kept); returns the count. */
static size_t split_fields(char *line, char **field, size_t max)
{
    size_t n = 0;

    field[n++] = line;
    for (char *p = line; *p; p++)
        if (*p == ',' && n < max) {
            *p = '\0';
            field[n++] = p + 1;
        }
    return n;
}

static void expected_header(const vg_config *cfg, char *buf, size_t len)
{
    size_t used = (size_t)snprintf(buf, len, "gap_meV,reorganization_meV,"
                                   "electronic_coupling_meV,huang_rhys,mode_meV,temperature_K");
    int m;

    for (m = 0; m < VG_N_METRICS; m++)
        if (cfg->metric_on[m])
            used += (size_t)snprintf(buf + used, len - used, ",%s",
                                     vg_metric_get((vg_metric_id)m)->name);
}

static void check_csv_row(const vg_config *cfg, size_t flat, char **field, size_t nf)
{
    size_t k = VG_NPARAM;
    int p, m;

    for (p = 0; p < VG_NPARAM; p++)
        assert_true(strtod(field[p], NULL) == param_value(p, param_index(cfg, flat, p)));
    for (m = 0; m < VG_N_METRICS; m++) {
        double want = metric_value(flat, m);
        if (!cfg->metric_on[m])
            continue;
        assert_true(k < nf);
        if (want == VG_FILL)
            assert_string_equal(field[k], "");
        else
            assert_true(strtod(field[k], NULL) == want);
        k++;
    }
    assert_int_equal(k, nf);
}

/* Header, then exactly one row per point in flat order, nothing else. */
static void check_csv(const vg_config *cfg, const char *path)
{
    char *text = test_read_file(path, NULL), *line = text, header[1024];
    char *field[VG_NPARAM + VG_N_METRICS + 2];
    size_t total = npoints_of(cfg), flat = 0;

    expected_header(cfg, header, sizeof header);
    while (*line) {
        char *end = strchr(line, '\n');
        assert_non_null(end); /* every line ends with a newline */
        *end = '\0';
        if (line == text) {
            assert_string_equal(line, header);
        } else {
            size_t nf = split_fields(line, field, VG_NPARAM + VG_N_METRICS + 2);
            assert_true(flat < total);
            check_csv_row(cfg, flat++, field, nf);
        }
        line = end + 1;
    }
    assert_int_equal(flat, total);
    free(text);
}

/* ---- tests: values ---------------------------------------------------- */

static void write_and_check_nc(fixture *f, const size_t *sizes, size_t nsizes)
{
    char dir[DIR_LEN], path[PATH_LEN];
    vg_error err;

    new_dir(dir);
    assert_int_equal(write_file(f, VG_FMT_NETCDF, dir, sizes, nsizes, &err), VG_OK);
    path_in(path, dir, "sweep.nc");
    check_nc_values(&f->cfg, path);
}

/* 3 x 5 x 7, a 4-D and a 6-D grid under several chunk schedules, including
 * ones whose chunks start and end inside rows and cross block boundaries. */
static void nc_values_land_at_their_index(void **state)
{
    static const size_t shape_4d[VG_NPARAM] = {5, 1, 2, 1, 4, 3};
    static const size_t shape_6d[VG_NPARAM] = {3, 2, 2, 3, 2, 3};
    const size_t one[] = {1}, whole[] = {0}, cross[] = {34, 1, 36, 2, 0}, five[] = {5};
    const size_t *sched[] = {awkward, one, whole, cross, five};
    const size_t nsched[] = {4, 1, 1, 5, 1};
    fixture *f = *state, g4, g6;
    size_t s;

    build(&g4, shape_4d);
    build(&g6, shape_6d);
    for (s = 0; s < 5; s++) {
        write_and_check_nc(f, sched[s], nsched[s]);
        write_and_check_nc(&g4, sched[s], nsched[s]);
        write_and_check_nc(&g6, sched[s], nsched[s]);
    }
    release(&g4);
    release(&g6);
}

/* A grid larger than one HDF5 chunk (60 000 points), written in uneven
 * chunks; the HDF5 chunks run along the fastest dimensions (so that they
 * fill in order while streaming) and are deflated. */
static void nc_large_grid(void **state)
{
    static const size_t shape[VG_NPARAM] = {300, 40, 1, 1, 1, 5};
    const size_t sizes[] = {4999, 1, 7777};
    size_t chunk[3], total, flat;
    int ncid, varid, storage, shuffle, deflate, level;
    char path[PATH_LEN];
    double *buf;
    vg_error err;
    fixture g;

    (void)state;
    build(&g, shape);
    total = npoints_of(&g.cfg);
    assert_int_equal(write_file(&g, VG_FMT_NETCDF, g.dir, sizes, 3, &err), VG_OK);
    path_in(path, g.dir, "sweep.nc");
    assert_int_equal(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    assert_int_equal(nc_inq_varid(ncid, "log10_k_total", &varid), NC_NOERR);
    assert_int_equal(nc_inq_var_chunking(ncid, varid, &storage, chunk), NC_NOERR);
    assert_int_equal(storage, NC_CHUNKED);
    /* 5 x 40 x 300: whole gap and reorganization rows per chunk, the
     * slowest dimension (temperature) split across chunks. */
    assert_int_equal(chunk[2], 300);
    assert_int_equal(chunk[1], 40);
    assert_true(chunk[0] >= 1 && chunk[0] < 5);
    assert_int_equal(nc_inq_var_deflate(ncid, varid, &shuffle, &deflate, &level), NC_NOERR);
    assert_true(deflate && level >= 1);
    buf = malloc(total * sizeof *buf);
    assert_non_null(buf);
    /* nc_get_var_double returns C (row-major) order. */
    assert_int_equal(nc_get_var_double(ncid, varid, buf), NC_NOERR);
    for (flat = 0; flat < total; flat++)
        assert_true(buf[flat] == metric_value(flat, VG_M_LOG10_K_TOTAL));
    free(buf);
    assert_int_equal(nc_close(ncid), NC_NOERR);
    release(&g);
}

/* Every parameter a scalar: one point, 0-d metric variables, one CSV row. */
static void single_point(void **state)
{
    static const size_t shape[VG_NPARAM] = {1, 1, 1, 1, 1, 1};
    char path[PATH_LEN];
    int ncid, varid, ndims;
    vg_error err;
    fixture g;

    (void)state;
    build(&g, shape);
    assert_int_equal(write_file(&g, VG_FMT_NETCDF, g.dir, awkward, 1, &err), VG_OK);
    assert_int_equal(write_file(&g, VG_FMT_CSV, g.dir, awkward, 1, &err), VG_OK);
    path_in(path, g.dir, "sweep.nc");
    check_nc_values(&g.cfg, path);
    assert_int_equal(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    assert_int_equal(nc_inq_varid(ncid, "log10_k_elastic", &varid), NC_NOERR);
    assert_int_equal(nc_inq_varndims(ncid, varid, &ndims), NC_NOERR);
    assert_int_equal(ndims, 0);
    assert_int_equal(nc_close(ncid), NC_NOERR);
    path_in(path, g.dir, "sweep.csv");
    check_csv(&g.cfg, path);
    release(&g);
}

static void csv_values_and_layout(void **state)
{
    fixture *f = *state;
    char path[PATH_LEN];
    vg_error err;

    assert_int_equal(write_file(f, VG_FMT_CSV, f->dir, awkward, 4, &err), VG_OK);
    path_in(path, f->dir, "sweep.csv");
    check_csv(&f->cfg, path);
}

/* The same bytes whatever the chunk sizes. */
static void csv_same_bytes_for_any_chunks(void **state)
{
    const size_t one[] = {1}, whole[] = {0}, cross[] = {34, 1, 36, 2, 0};
    const size_t *sched[] = {one, whole, cross};
    const size_t nsched[] = {1, 1, 5};
    fixture *f = *state;
    char dir[DIR_LEN], path[PATH_LEN];
    char *ref, *other;
    size_t len, olen, s;
    vg_error err;

    assert_int_equal(write_file(f, VG_FMT_CSV, f->dir, awkward, 4, &err), VG_OK);
    path_in(path, f->dir, "sweep.csv");
    ref = test_read_file(path, &len);
    for (s = 0; s < 3; s++) {
        new_dir(dir);
        assert_int_equal(write_file(f, VG_FMT_CSV, dir, sched[s], nsched[s], &err), VG_OK);
        path_in(path, dir, "sweep.csv");
        other = test_read_file(path, &olen);
        assert_int_equal(olen, len);
        assert_memory_equal(other, ref, len);
        free(other);
    }
    free(ref);
}

/* ---- tests: NetCDF metadata ------------------------------------------- */

static void check_dims(int ncid)
{
    static const char *const want[] = {"temperature", "reorganization", "gap"};
    static const size_t want_len[] = {3, 5, 7};
    char name[NC_MAX_NAME + 1];
    int ndims, dimids[3], varid, i;
    size_t len;

    assert_int_equal(nc_inq_ndims(ncid, &ndims), NC_NOERR);
    assert_int_equal(ndims, 3);
    assert_int_equal(nc_inq_varid(ncid, "log10_k_total", &varid), NC_NOERR);
    assert_int_equal(nc_inq_varndims(ncid, varid, &ndims), NC_NOERR);
    assert_int_equal(ndims, 3);
    assert_int_equal(nc_inq_vardimid(ncid, varid, dimids), NC_NOERR);
    for (i = 0; i < 3; i++) {
        assert_int_equal(nc_inq_dim(ncid, dimids[i], name, &len), NC_NOERR);
        assert_string_equal(name, want[i]);
        assert_int_equal(len, want_len[i]);
    }
}

static int var_id(int ncid, const char *name)
{
    int varid = -1;

    assert_int_equal(nc_inq_varid(ncid, name, &varid), NC_NOERR);
    return varid;
}

/* Coordinate and scalar variables: values, units, long_name, provenance. */
static void check_params(int ncid, const vg_config *cfg)
{
    double v[16];
    int p, varid, ndims;
    size_t i;

    for (p = 0; p < VG_NPARAM; p++) {
        const vg_param_info *info = vg_param_get((vg_param_id)p);
        assert_int_equal(nc_inq_varid(ncid, info->key, &varid), NC_NOERR);
        assert_int_equal(nc_inq_varndims(ncid, varid, &ndims), NC_NOERR);
        assert_int_equal(ndims, cfg->param[p].n > 1 ? 1 : 0);
        assert_int_equal(nc_get_var_double(ncid, varid, v), NC_NOERR);
        for (i = 0; i < cfg->param[p].n; i++)
            assert_true(v[i] == param_value(p, i));
        assert_att_text(ncid, varid, "units", info->unit);
        assert_att_text(ncid, varid, "long_name", info->long_name);
    }
    assert_att_text(ncid, var_id(ncid, "mode"), "input_units", "cm-1");
    assert_att_text(ncid, var_id(ncid, "temperature"), "spacing", "logarithmic");
    assert_att_text(ncid, var_id(ncid, "electronic_coupling"), "comment",
                    "default value (not given in the config)");
    assert_att_text(ncid, var_id(ncid, "reorganization"), "comment",
                    "set on the command line (--set)");
    varid = var_id(ncid, "gap");
    assert_int_equal(nc_inq_attlen(ncid, varid, "comment", &i), NC_ENOTATT);
    assert_int_equal(nc_inq_attlen(ncid, varid, "input_units", &i), NC_ENOTATT);
    assert_int_equal(nc_inq_attlen(ncid, varid, "spacing", &i), NC_ENOTATT);
}

/* Metric variables: units, long_name, _FillValue, scalar coordinates. */
static void check_metric_atts(int ncid, const vg_config *cfg)
{
    int m, varid;

    for (m = 0; m < VG_N_METRICS; m++) {
        const vg_metric_info *mi = vg_metric_get((vg_metric_id)m);
        if (!cfg->metric_on[m])
            continue;
        assert_int_equal(nc_inq_varid(ncid, mi->name, &varid), NC_NOERR);
        assert_att_text(ncid, varid, "units", mi->units);
        assert_att_text(ncid, varid, "long_name", mi->long_name);
        /* NetCDF's default double fill (netcdf.h), the CF missing-data mark. */
        assert_true(att_double(ncid, varid, "_FillValue") == NC_FILL_DOUBLE);
        assert_att_text(ncid, varid, "coordinates",
                        "electronic_coupling huang_rhys mode");
    }
}

static void assert_att_contains(int ncid, const char *name, const char *part)
{
    char buf[4096];

    get_att_text(ncid, NC_GLOBAL, name, buf, sizeof buf);
    if (!strstr(buf, part))
        fail_msg("attribute '%s' = '%s' lacks '%s'", name, buf, part);
}

static void check_globals(int ncid, const vg_config *cfg)
{
    assert_att_text(ncid, NC_GLOBAL, "Conventions", "CF-1.8");
    assert_att_text(ncid, NC_GLOBAL, "title", "writer check");
    assert_att_text(ncid, NC_GLOBAL, "source", "vibrogate 0.1.0");
    assert_att_text(ncid, NC_GLOBAL, "history",
                    "2024-05-04T10:11:12Z vibrogate sweep writer.ini");
    assert_att_text(ncid, NC_GLOBAL, "config_text", config_text);
    assert_att_text(ncid, NC_GLOBAL, "config_overrides", cfg->overrides);
    assert_att_text(ncid, NC_GLOBAL, "mode_statistics", "thermal");
    assert_true(att_double(ncid, NC_GLOBAL, "tolerance") == 2.5e-11);
    assert_att_contains(ncid, "comment", "first line of notes\nsecond line");
    assert_att_contains(ncid, "comment", "model predictions");
    assert_att_contains(ncid, "physical_constants", "CODATA 2018");
    /* CODATA 2018 (docs/theory.md): k_B = 8.617333262e-5 eV/K, hbar =
     * 6.582119569e-16 eV s, hc = 1.239841984e-4 eV cm, N_A = 6.02214076e23. */
    assert_true(fabs(att_double(ncid, NC_GLOBAL, "k_B_eV_per_K") / 8.617333262e-5 - 1) < 1e-9);
    assert_true(fabs(att_double(ncid, NC_GLOBAL, "hbar_eV_s") / 6.582119569e-16 - 1) < 1e-9);
    assert_true(fabs(att_double(ncid, NC_GLOBAL, "hc_eV_cm") / 1.239841984e-4 - 1) < 1e-9);
    assert_true(att_double(ncid, NC_GLOBAL, "N_A_per_mol") == 6.02214076e23);
    /* The same CODATA digits in the text. */
    assert_att_contains(ncid, "physical_constants", "k_B = 8.617333262");
    assert_att_contains(ncid, "physical_constants", "hbar = 6.582119569");
    assert_att_contains(ncid, "physical_constants", "hc = 1.239841984");
    assert_att_contains(ncid, "physical_constants", "N_A = 6.02214076e+23");
}

static void nc_metadata(void **state)
{
    fixture *f = *state;
    char path[PATH_LEN];
    vg_error err;
    int ncid, fmt;

    assert_int_equal(write_file(f, VG_FMT_NETCDF, f->dir, awkward, 4, &err), VG_OK);
    path_in(path, f->dir, "sweep.nc");
    assert_int_equal(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    assert_int_equal(nc_inq_format(ncid, &fmt), NC_NOERR);
    assert_int_equal(fmt, NC_FORMAT_NETCDF4);
    check_dims(ncid);
    check_params(ncid, &f->cfg);
    check_metric_atts(ncid, &f->cfg);
    check_globals(ncid, &f->cfg);
    assert_int_equal(nc_close(ncid), NC_NOERR);
}

/* No title, no notes, no overrides: default title, no config_overrides. */
static void nc_metadata_defaults(void **state)
{
    fixture *f = *state;
    char path[PATH_LEN];
    vg_error err;
    size_t len;
    int ncid;

    f->cfg.title[0] = '\0';
    f->cfg.notes[0] = '\0';
    free(f->cfg.overrides);
    f->cfg.overrides = NULL;
    assert_int_equal(write_file(f, VG_FMT_NETCDF, f->dir, awkward, 4, &err), VG_OK);
    path_in(path, f->dir, "sweep.nc");
    assert_int_equal(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    assert_int_equal(nc_inq_attlen(ncid, NC_GLOBAL, "title", &len), NC_NOERR);
    assert_true(len > 0);
    assert_int_equal(nc_inq_attlen(ncid, NC_GLOBAL, "config_overrides", &len), NC_ENOTATT);
    assert_att_contains(ncid, "comment", "model predictions");
    assert_int_equal(nc_close(ncid), NC_NOERR);
}

/* The stored fill reads back as NC_FILL_DOUBLE, and as masked in any CF
 * reader, at exactly the points given VG_FILL. */
static void nc_fill_value(void **state)
{
    fixture *f = *state;
    char path[PATH_LEN];
    double v[105];
    vg_error err;
    int ncid, varid, nofill;
    double fill;
    size_t flat;

    assert_int_equal(write_file(f, VG_FMT_NETCDF, f->dir, awkward, 4, &err), VG_OK);
    path_in(path, f->dir, "sweep.nc");
    assert_int_equal(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    assert_int_equal(nc_inq_varid(ncid, "log10_k_assisted", &varid), NC_NOERR);
    assert_int_equal(nc_inq_var_fill(ncid, varid, &nofill, &fill), NC_NOERR);
    assert_int_equal(nofill, 0);
    assert_true(fill == NC_FILL_DOUBLE);
    assert_int_equal(nc_get_var_double(ncid, varid, v), NC_NOERR);
    for (flat = 0; flat < 105; flat++)
        assert_true((v[flat] == NC_FILL_DOUBLE) == (flat % 11 == 3));
    assert_int_equal(nc_close(ncid), NC_NOERR);
}

/* ---- tests: temporary files ------------------------------------------- */

static void temp_gone_after_commit(void **state)
{
    fixture *f = *state;
    char names[1024];
    vg_error err;

    assert_int_equal(write_file(f, VG_FMT_NETCDF, f->dir, awkward, 4, &err), VG_OK);
    assert_int_equal(write_file(f, VG_FMT_CSV, f->dir, awkward, 4, &err), VG_OK);
    test_list_dir(f->dir, "/", names, sizeof names);
    assert_string_equal(names, "sweep.csv/sweep.nc");
}

/* Abort after some chunks: nothing left, an earlier file kept as it was. */
static void temp_gone_after_abort(void **state)
{
    const vg_data_format fmts[] = {VG_FMT_NETCDF, VG_FMT_CSV};
    fixture *f = *state;
    char names[1024], path[PATH_LEN], *text;
    vg_writer *w;
    vg_error err;
    int i;

    path_in(path, f->dir, "sweep.csv");
    write_text(path, "earlier results\n");
    for (i = 0; i < 2; i++) {
        assert_int_equal(vg_out_open(&w, fmts[i], f->dir, &f->meta, &err), VG_OK);
        test_list_dir(f->dir, "/", names, sizeof names);
        assert_non_null(strstr(names, i == 0 ? ".sweep.nc." : ".sweep.csv."));
        assert_int_equal(write_chunks(w, &f->cfg, (const size_t[]){13}, 1, &err), VG_OK);
        vg_out_abort(w);
    }
    vg_out_abort(NULL);
    test_list_dir(f->dir, "/", names, sizeof names);
    assert_string_equal(names, "sweep.csv");
    text = test_read_file(path, NULL);
    assert_string_equal(text, "earlier results\n");
    free(text);
}

static void final_path(void **state)
{
    fixture *f = *state;
    char dir[PATH_LEN + 2], want[PATH_LEN + 16];
    vg_writer *w;
    vg_error err;

    snprintf(dir, sizeof dir, "%s//", f->dir);
    snprintf(want, sizeof want, "%s/sweep.nc", f->dir);
    assert_int_equal(vg_out_open(&w, VG_FMT_NETCDF, dir, &f->meta, &err), VG_OK);
    assert_string_equal(vg_out_path(w), want);
    vg_out_abort(w);
    snprintf(want, sizeof want, "%s/sweep.csv", f->dir);
    assert_int_equal(vg_out_open(&w, VG_FMT_CSV, f->dir, &f->meta, &err), VG_OK);
    assert_string_equal(vg_out_path(w), want);
    vg_out_abort(w);
}

/* ---- tests: errors ---------------------------------------------------- */

/* vg_out_open in dir fails with VG_EIO and "cannot write 'dir/NAME': why". */
static void expect_open_error(fixture *f, const char *dir, int errnum)
{
    const vg_data_format fmts[] = {VG_FMT_NETCDF, VG_FMT_CSV};
    const char *names[] = {"sweep.nc", "sweep.csv"};
    char want[2 * PATH_LEN];
    vg_writer *w = (vg_writer *)&w;
    vg_error err;
    int i;

    for (i = 0; i < 2; i++) {
        assert_int_equal(vg_out_open(&w, fmts[i], dir, &f->meta, &err), VG_EIO);
        assert_null(w);
        assert_int_equal(err.status, VG_EIO);
        snprintf(want, sizeof want, "cannot write '%s/%s': %s", dir, names[i],
                 strerror(errnum));
        assert_string_equal(err.msg, want);
    }
}

static void error_missing_dir(void **state)
{
    fixture *f = *state;
    char dir[PATH_LEN + 16];

    snprintf(dir, sizeof dir, "%s/missing/deeper", f->dir);
    expect_open_error(f, dir, ENOENT);
}

/* Root ignores permission bits, so provoke the errors the file system
 * raises for everyone: a path through a regular file, and /proc. */
static void error_dir_not_writable(void **state)
{
    fixture *f = *state;
    char file[PATH_LEN + 16], dir[PATH_LEN + 32], names[1024];
    int fd, proc_errno;

    snprintf(file, sizeof file, "%s/plain", f->dir);
    write_text(file, "x\n");
    snprintf(dir, sizeof dir, "%s/sub", file);
    expect_open_error(f, dir, ENOTDIR);
    /* What the kernel says about a new file in /proc, asked directly. */
    fd = open("/proc/.vg_probe", O_WRONLY | O_CREAT | O_EXCL, 0600);
    assert_true(fd < 0);
    proc_errno = errno;
    expect_open_error(f, "/proc", proc_errno);
    test_list_dir(f->dir, "/", names, sizeof names);
    assert_string_equal(names, "plain");
}

/* Run one write to completion under a file size limit smaller than the
 * output: a write(2) fails with EFBIG (SIGXFSZ ignored).  Used for CSV only:
 * after a NetCDF file fails to close, HDF5 1.10 crashes at exit unless it was
 * told so before its first use, which this process (having read files back
 * already) is past; the disk-full tests cover NetCDF in a fresh process. */
static vg_status write_limited(fixture *f, vg_data_format fmt, rlim_t limit, vg_error *err)
{
    struct rlimit old, lim;
    vg_status st;

    assert_int_equal(getrlimit(RLIMIT_FSIZE, &old), 0);
    lim = old;
    lim.rlim_cur = limit;
    signal(SIGXFSZ, SIG_IGN);
    assert_int_equal(setrlimit(RLIMIT_FSIZE, &lim), 0);
    st = write_file(f, fmt, f->dir, awkward, 4, err);
    assert_int_equal(setrlimit(RLIMIT_FSIZE, &old), 0);
    signal(SIGXFSZ, SIG_DFL);
    return st;
}

static void error_write_keeps_earlier_csv(void **state)
{
    fixture *f = *state;
    char path[PATH_LEN], want[2 * PATH_LEN], names[1024], *text;
    vg_error err;

    path_in(path, f->dir, "sweep.csv");
    write_text(path, "earlier results\n");
    assert_int_equal(write_limited(f, VG_FMT_CSV, 2048, &err), VG_EIO);
    snprintf(want, sizeof want, "cannot write '%s': %s", path, strerror(EFBIG));
    assert_string_equal(err.msg, want);
    test_list_dir(f->dir, "/", names, sizeof names);
    assert_string_equal(names, "sweep.csv");
    text = test_read_file(path, NULL);
    assert_string_equal(text, "earlier results\n");
    free(text);
}

/* ---- a full disk, for real ------------------------------------------ */

enum { FULL_OK = 0, FULL_NO_MOUNT = 77 };

/* Names in dir other than "." and ".." (child side: no cmocka asserts). */
static int count_entries(const char *dir)
{
    DIR *d = opendir(dir);
    struct dirent *e;
    int n = 0;

    if (!d)
        return -1;
    while ((e = readdir(d)))
        n += strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0;
    closedir(d);
    return n;
}

static int file_is(const char *path, const char *text)
{
    char buf[256] = "";
    FILE *fp = fopen(path, "r");
    size_t n;

    if (!fp)
        return 0;
    n = fread(buf, 1, sizeof buf - 1, fp);
    fclose(fp);
    buf[n] = '\0';
    return strcmp(buf, text) == 0;
}

/* The child: a private mount namespace with a 32 KiB tmpfs on dir, an
 * earlier output in it, then a grid far larger than the space left.  Runs
 * in a fresh process (the test program started again), so that HDF5 starts
 * there from scratch as it does in the program.  Returns the exit status:
 * FULL_OK, FULL_NO_MOUNT, or the number of the failed check (the reason on
 * stderr). */
static int disk_full_child(const char *format, const char *dir)
{
    static const size_t shape[VG_NPARAM] = {300, 40, 1, 1, 1, 5};
    int nc = strcmp(format, "nc") == 0;
    const char *name = nc ? "sweep.nc" : "sweep.csv";
    char path[PATH_LEN], want[2 * PATH_LEN];
    vg_status st;
    vg_error err;
    fixture f;
    FILE *fp;

    if (unshare(CLONE_NEWNS) != 0 || mount(NULL, "/", NULL, MS_REC | MS_PRIVATE, NULL) != 0
        || mount("tmpfs", dir, "tmpfs", 0, "size=32k") != 0)
        return FULL_NO_MOUNT;
    if (snprintf(path, sizeof path, "%s/%s", dir, name) >= (int)sizeof path)
        return 1;
    fp = fopen(path, "w");
    if (!fp || fputs("earlier results\n", fp) < 0 || fclose(fp) != 0)
        return 2;
    build_config(&f, shape);
    st = write_file(&f, nc ? VG_FMT_NETCDF : VG_FMT_CSV, dir, awkward, 4, &err);
    snprintf(want, sizeof want, "cannot write '%s': %s", path, strerror(ENOSPC));
    if (st != VG_EIO || strncmp(err.msg, want, strlen(want)) != 0) {
        fprintf(stderr, "disk full: status %d, message '%s'\n", (int)st, err.msg);
        return 3;
    }
    if (count_entries(dir) != 1 || !file_is(path, "earlier results\n"))
        return 4;
    release(&f);
    return FULL_OK;
}

/* Disk full (ENOSPC) on a real file system, in a child process so that
 * nothing stays mounted.  The child must also exit normally: a library left
 * in a state it cannot shut down from would crash at exit.  Skipped where
 * mounting is not allowed. */
static void disk_full(const char *format)
{
    char dir[DIR_LEN];
    int status;
    pid_t pid;

    new_dir(dir);
    fflush(stdout);
    fflush(stderr);
    pid = fork();
    assert_true(pid >= 0);
    if (pid == 0) {
        execl("/proc/self/exe", "test_output", "--disk-full", format, dir, (char *)NULL);
        _exit(126);
    }
    assert_int_equal(waitpid(pid, &status, 0), pid);
    assert_true(WIFEXITED(status)); /* not killed by a signal */
    if (WEXITSTATUS(status) == FULL_NO_MOUNT)
        skip();
    assert_int_equal(WEXITSTATUS(status), FULL_OK);
}

static void error_disk_full_nc(void **state)
{
    (void)state;
    disk_full("nc");
}

static void error_disk_full_csv(void **state)
{
    (void)state;
    disk_full("csv");
}

/* The final name taken by a non-empty directory: rename(2) fails (EISDIR
 * for a file onto a directory, POSIX rename), the temporary file goes. */
static void error_rename(void **state)
{
    const vg_data_format fmts[] = {VG_FMT_NETCDF, VG_FMT_CSV};
    const char *names[] = {"sweep.nc", "sweep.csv"};
    fixture *f = *state;
    char path[PATH_LEN], inner[PATH_LEN], want[2 * PATH_LEN], list[1024];
    vg_error err;
    int i;

    for (i = 0; i < 2; i++) {
        path_in(path, f->dir, names[i]);
        assert_int_equal(mkdir(path, 0777), 0);
        path_in(inner, path, "keep");
        write_text(inner, "x\n");
        assert_int_equal(write_file(f, fmts[i], f->dir, awkward, 4, &err), VG_EIO);
        snprintf(want, sizeof want, "cannot write '%s': %s", path, strerror(EISDIR));
        assert_string_equal(err.msg, want);
        test_list_dir(path, "/", list, sizeof list);
        assert_string_equal(list, "keep");
    }
    test_list_dir(f->dir, "/", list, sizeof list);
    assert_string_equal(list, "sweep.csv/sweep.nc");
}

/* Chunks out of order, a chunk past the end, a commit before the last
 * point: VG_EIO, the writer refuses further work, nothing is left. */
static void error_chunk_order(void **state)
{
    const vg_data_format fmts[] = {VG_FMT_NETCDF, VG_FMT_CSV};
    fixture *f = *state;
    double met[8 * VG_N_METRICS] = {0};
    char names[1024];
    vg_writer *w;
    vg_error err;
    int i;

    for (i = 0; i < 2; i++) {
        assert_int_equal(vg_out_open(&w, fmts[i], f->dir, &f->meta, &err), VG_OK);
        assert_int_equal(vg_out_write(w, 0, 7, met, &err), VG_OK);
        assert_int_equal(vg_out_write(w, 8, 1, met, &err), VG_EIO);
        assert_int_equal(vg_out_write(w, 7, 1, met, &err), VG_EIO);
        assert_int_equal(vg_out_commit(w, &err), VG_EIO);
        assert_int_equal(vg_out_open(&w, fmts[i], f->dir, &f->meta, &err), VG_OK);
        assert_int_equal(vg_out_write(w, 0, 7, met, &err), VG_OK);
        assert_int_equal(vg_out_write(w, 7, 8, met, &err), VG_OK);
        assert_int_equal(vg_out_commit(w, &err), VG_EIO);
        assert_non_null(strstr(err.msg, "only 15 of 105 points"));
        assert_int_equal(vg_out_open(&w, fmts[i], f->dir, &f->meta, &err), VG_OK);
        assert_int_equal(write_chunks(w, &f->cfg, (const size_t[]){100}, 1, &err), VG_OK);
        assert_int_equal(vg_out_write(w, 105, 1, met, &err), VG_EIO);
        vg_out_abort(w);
    }
    test_list_dir(f->dir, "/", names, sizeof names);
    assert_string_equal(names, "");
}

/* NaN or Inf in a stored metric is refused (no output holds either); in a
 * metric that is not stored it does not matter. */
static void error_not_finite(void **state)
{
    fixture *f = *state;
    double met[VG_N_METRICS];
    char names[1024];
    vg_writer *w;
    vg_error err;
    int m;

    for (m = 0; m < VG_N_METRICS; m++)
        met[m] = metric_value(0, m);
    met[VG_M_LOG10_K_BARE] = NAN; /* not selected */
    assert_int_equal(vg_out_open(&w, VG_FMT_CSV, f->dir, &f->meta, &err), VG_OK);
    assert_int_equal(vg_out_write(w, 0, 1, met, &err), VG_OK);
    met[VG_M_LOG10_K_TOTAL] = INFINITY;
    assert_int_equal(vg_out_write(w, 1, 1, met, &err), VG_ENUMERIC);
    assert_non_null(strstr(err.msg, "'log10_k_total' at grid point 1 is not finite"));
    assert_int_equal(vg_out_commit(w, &err), VG_ENUMERIC);
    test_list_dir(f->dir, "/", names, sizeof names);
    assert_string_equal(names, "");
}

/* ---- main ------------------------------------------------------------- */

#define T(fn) cmocka_unit_test_setup_teardown(fn, setup_3x5x7, teardown)

int main(int argc, char **argv)
{
    const struct CMUnitTest tests[] = {
        T(nc_values_land_at_their_index),
        cmocka_unit_test(nc_large_grid),
        cmocka_unit_test(single_point),
        T(csv_values_and_layout),
        T(csv_same_bytes_for_any_chunks),
        T(nc_metadata),
        T(nc_metadata_defaults),
        T(nc_fill_value),
        T(temp_gone_after_commit),
        T(temp_gone_after_abort),
        T(final_path),
        T(error_missing_dir),
        T(error_dir_not_writable),
        T(error_write_keeps_earlier_csv),
        cmocka_unit_test(error_disk_full_nc),
        cmocka_unit_test(error_disk_full_csv),
        T(error_rename),
        T(error_chunk_order),
        T(error_not_finite),
    };
    int failed;

    if (argc == 4 && strcmp(argv[1], "--disk-full") == 0)
        return disk_full_child(argv[2], argv[3]);
    snprintf(root, sizeof root, "/tmp/vg_test_output.XXXXXX");
    if (!mkdtemp(root)) {
        perror("mkdtemp");
        return 1;
    }
    failed = cmocka_run_group_tests(tests, NULL, NULL);
    test_remove_tree(root);
    return failed;
}
