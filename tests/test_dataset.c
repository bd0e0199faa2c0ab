/*
 * Tests of the data-file reader (vg_dataset.h).  Real files are made with
 * the project's own writers (config text -> vg_config_load_text ->
 * vg_grid_init -> vg_out_open / vg_out_write / vg_out_commit) from metric
 * values given by an independent formula of the flat index, then opened
 * and read back and compared bit for bit; files with faults the writers
 * cannot make are built by hand with the NetCDF C API.
 *
 * References: the axis order of vg_grid.h (temperature, mode, huang_rhys,
 * electronic_coupling, reorganization, gap; slowest first) and the C
 * row-major order of NetCDF's C API (nc_get_var_double, NetCDF-C
 * documentation); the range formula a + (b - a) i / (N - 1) of
 * docs/config.md, exact here because the step 41.125 meV is a binary
 * fraction; decimal literals such as 0.03 read by the compiler, which
 * rounds them as strtod does (C17 6.4.4.2, from memory); NC_FILL_DOUBLE
 * from netcdf.h; the layout of sweep.nc (one dimension and coordinate
 * variable per axis, 0-d variables for scalars, config_text and
 * config_overrides global attributes) from src/out_netcdf.c's header.
 */
#define _GNU_SOURCE /* mkdtemp, nftw */

#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include "testutil.h"

#include <errno.h>
#include <ftw.h>
#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "vg_dataset.h"
#include "vg_output.h"

#define ROOT_LEN 64
#define DIR_LEN 128
#define PATH_LEN 256
#define MSG_LEN (2 * PATH_LEN + 256)

/* Three axes of awkward lengths: gap 7, reorganization 3 (log), huang_rhys
 * 5; coupling, mode and temperature scalars.  105 points. */
static const char config_text[] =
    "; read-back check \xce\xbb/\xce\xb5\n"
    "[scenario]\n"
    "title = read-back check\n"
    "[parameters]\n"
    "gap = -37.25 .. 209.5 meV, 7 points\n"
    "reorganization = 10 .. 300 meV, 3 points, log\n"
    "electronic_coupling = 1.25 meV\n"
    "huang_rhys = 0.01, 0.03, 0.1, 0.3, 1.1\n"
    "mode = 2950 cm-1\n"
    "temperature = 310 K\n"
    "[output]\n"
    "metrics = log10_k_elastic, log10_k_assisted, log10_ratio\n";

/* gap by the range formula, step (209.5 + 37.25) / 6 = 41.125 exactly. */
static const double gap_values[7] = {-37.25, 3.875, 45.0, 86.125, 127.25, 168.375, 209.5};
static const double hr_values[5] = {0.01, 0.03, 0.1, 0.3, 1.1};

static char root[ROOT_LEN];
static int subdir_count;

/* ---- the independent model ---------------------------------------- */

/* Metric m at grid point flat: values that need all 17 digits, VG_FILL
 * holes in log10_k_assisted. */
static double metric_value(size_t flat, int m)
{
    if (m == VG_M_LOG10_K_ASSISTED && flat % 11 == 3)
        return VG_FILL;
    return ((double)flat + 0.1 * (m + 1)) / 3.0 - 2.0 * m;
}

/* ---- helpers ------------------------------------------------------- */

static void new_dir(char *dir)
{
    snprintf(dir, DIR_LEN, "%s/t%d", root, subdir_count++);
    assert_int_equal(mkdir(dir, 0777), 0);
}

static void path_in(char *path, const char *dir, const char *name)
{
    snprintf(path, PATH_LEN, "%s/%s", dir, name);
}

static void nc_ok(int rc)
{
    if (rc != NC_NOERR)
        fail_msg("NetCDF: %s", nc_strerror(rc));
}

/* Write dir/sweep.nc from text with the nset sets, in chunks of 4, 13, 1,
 * 29, ... points (awkward sizes cross every row and block boundary). */
static void write_sweep(const char *dir, const char *text, size_t nset,
                        const char *const *sets)
{
    static const size_t chunk[4] = {4, 13, 1, 29};
    vg_config cfg;
    vg_grid grid;
    vg_out_meta meta;
    vg_writer *w;
    vg_error err;
    double *rows;
    size_t start = 0, k = 0, i;
    int m;

    if (vg_config_load_text(&cfg, "check.ini", text, nset, sets, &err) != VG_OK)
        fail_msg("config: %s", err.msg);
    vg_grid_init(&grid, &cfg);
    meta.cfg = &cfg;
    meta.grid = &grid;
    meta.version = "0.1.0";
    meta.history = "2026-12-01T20:00:00Z vibrogate sweep check.ini";
    rows = malloc(grid.npoints * VG_N_METRICS * sizeof *rows);
    assert_non_null(rows);
    for (i = 0; i < grid.npoints; i++)
        for (m = 0; m < VG_N_METRICS; m++)
            rows[i * VG_N_METRICS + (size_t)m] = metric_value(i, m);
    assert_int_equal(vg_out_open(&w, VG_FMT_NETCDF, dir, &meta, &err), VG_OK);
    while (start < grid.npoints) {
        size_t n = chunk[k++ % 4];
        if (n > grid.npoints - start)
            n = grid.npoints - start;
        assert_int_equal(vg_out_write(w, start, n, rows + start * VG_N_METRICS, &err), VG_OK);
        start += n;
    }
    assert_int_equal(vg_out_commit(w, &err), VG_OK);
    free(rows);
    vg_config_free(&cfg);
}

/* A fresh directory's sweep.nc, written from config_text with the sets;
 * its path into path. */
static void fresh_sweep(char *path, size_t nset, const char *const *sets)
{
    char dir[DIR_LEN];

    new_dir(dir);
    write_sweep(dir, config_text, nset, sets);
    path_in(path, dir, "sweep.nc");
}

static void open_ok(vg_dataset *ds, const char *path, size_t nset, const char *const *sets)
{
    vg_error err;

    if (vg_dataset_open(ds, path, nset, sets, &err) != VG_OK)
        fail_msg("open: %s", err.msg);
}

static void expect_open_error(const char *path, size_t nset, const char *const *sets,
                              vg_status want_st, const char *want)
{
    vg_dataset ds;
    vg_error err;

    assert_int_equal(vg_dataset_open(&ds, path, nset, sets, &err), want_st);
    assert_int_equal(err.status, want_st);
    assert_string_equal(err.msg, want);
    assert_null(ds.path); /* closed again */
}

/* path opens, but reading metric m fails with message want. */
static void expect_read_error(const char *path, vg_metric_id m, size_t npoints,
                              const char *want)
{
    double *out = malloc(npoints * sizeof *out);
    vg_dataset ds;
    vg_error err;

    assert_non_null(out);
    open_ok(&ds, path, 0, NULL);
    assert_int_equal(ds.grid.npoints, npoints);
    assert_int_equal(vg_dataset_read(&ds, m, out, &err), VG_ECONFIG);
    assert_string_equal(err.msg, want);
    vg_dataset_close(&ds);
    free(out);
}

/* The values of variable name as the file holds them (for comparisons
 * that do not go through vg_dataset). */
static double *file_values(const char *path, const char *name, size_t n)
{
    double *v = malloc(n * sizeof *v);
    int ncid, varid;

    assert_non_null(v);
    nc_ok(nc_open(path, NC_NOWRITE, &ncid));
    nc_ok(nc_inq_varid(ncid, name, &varid));
    nc_ok(nc_get_var_double(ncid, varid, v));
    nc_ok(nc_close(ncid));
    return v;
}

static int group_setup(void **state)
{
    (void)state;
    snprintf(root, sizeof root, "/tmp/vg_test_dataset.XXXXXX");
    return mkdtemp(root) ? 0 : -1;
}

static int group_teardown(void **state)
{
    (void)state;
    return test_remove_tree(root);
}

/* ---- files made by the writers -------------------------------------- */

/* Axes in grid order with their lengths, scalars, and values bit-exact:
 * gap and huang_rhys against the formula and the literals, every
 * parameter against the file's own coordinate variables. */
static void axes_and_values(void **state)
{
    char path[PATH_LEN];
    vg_dataset ds;
    int p;

    (void)state;
    fresh_sweep(path, 0, NULL);
    open_ok(&ds, path, 0, NULL);
    assert_int_equal(ds.grid.naxes, 3);
    assert_int_equal(ds.grid.axis[0], VG_P_HUANG_RHYS);  /* slowest */
    assert_int_equal(ds.grid.axis[1], VG_P_REORG);
    assert_int_equal(ds.grid.axis[2], VG_P_GAP);         /* fastest */
    assert_int_equal(ds.grid.dim[0], 5);
    assert_int_equal(ds.grid.dim[1], 3);
    assert_int_equal(ds.grid.dim[2], 7);
    assert_int_equal(ds.grid.npoints, 105);
    assert_memory_equal(ds.cfg.param[VG_P_GAP].v, gap_values, sizeof gap_values);
    assert_memory_equal(ds.cfg.param[VG_P_HUANG_RHYS].v, hr_values, sizeof hr_values);
    assert_true(ds.cfg.param[VG_P_REORG].v[0] == 10.0);
    assert_true(ds.cfg.param[VG_P_REORG].v[2] == 300.0);
    assert_true(ds.cfg.param[VG_P_COUPLING].v[0] == 1.25);
    assert_true(ds.cfg.param[VG_P_TEMPERATURE].v[0] == 310.0);
    for (p = 0; p < VG_NPARAM; p++) {
        size_t n = ds.cfg.param[p].n;
        double *v = file_values(path, vg_param_get((vg_param_id)p)->key, n);
        assert_memory_equal(ds.cfg.param[p].v, v, n * sizeof *v);
        free(v);
    }
    assert_string_equal(ds.cfg.text, config_text);
    assert_string_equal(ds.cfg.title, "read-back check");
    vg_dataset_close(&ds);
    assert_null(ds.path);
}

/* Each stored metric read back bit for bit, holes as VG_FILL. */
static void metrics_bit_exact(void **state)
{
    static const vg_metric_id stored[3] = {VG_M_LOG10_K_ELASTIC, VG_M_LOG10_K_ASSISTED,
                                           VG_M_LOG10_RATIO};
    char path[PATH_LEN];
    double got[105], want[105];
    vg_dataset ds;
    vg_error err;
    size_t i, k, holes = 0;

    (void)state;
    fresh_sweep(path, 0, NULL);
    open_ok(&ds, path, 0, NULL);
    assert_int_equal(ds.grid.npoints, 105);
    for (k = 0; k < 3; k++) {
        for (i = 0; i < 105; i++)
            want[i] = metric_value(i, (int)stored[k]);
        assert_int_equal(vg_dataset_read(&ds, stored[k], got, &err), VG_OK);
        assert_memory_equal(got, want, sizeof want);
    }
    for (i = 0; i < 105; i++)
        holes += got[i] == VG_FILL;
    assert_int_equal(holes, 0); /* log10_ratio has none */
    assert_int_equal(vg_dataset_read(&ds, VG_M_LOG10_K_ASSISTED, got, &err), VG_OK);
    for (i = 0; i < 105; i++)
        holes += got[i] == VG_FILL;
    assert_int_equal(holes, 10); /* flat % 11 == 3 for flat < 105: 3, 14, ..., 102 */
    assert_true(VG_FILL == NC_FILL_DOUBLE);
    vg_dataset_close(&ds);
}

/* The coordinates come from the file: one gap value moved by one ulp in the
 * file after writing is what the dataset holds, not the config's value. */
static void file_values_win(void **state)
{
    char path[PATH_LEN];
    double nudged[7];
    vg_dataset ds;
    int ncid, varid;

    (void)state;
    fresh_sweep(path, 0, NULL);
    memcpy(nudged, gap_values, sizeof nudged);
    nudged[3] = nextafter(nudged[3], 1e9);
    nc_ok(nc_open(path, NC_WRITE, &ncid));
    nc_ok(nc_inq_varid(ncid, "gap", &varid));
    nc_ok(nc_put_var_double(ncid, varid, nudged));
    nc_ok(nc_close(ncid));
    open_ok(&ds, path, 0, NULL);
    assert_memory_equal(ds.cfg.param[VG_P_GAP].v, nudged, sizeof nudged);
    assert_true(ds.cfg.param[VG_P_GAP].v[3] != 86.125);
    vg_dataset_close(&ds);
}

/* A file written with --set: its overrides are applied again, including
 * one that changes the grid (huang_rhys: 2 values instead of 5, which the
 * file's dimensions must then match). */
static void overrides_carried_over(void **state)
{
    static const char *const sets[3] = {"parameters.temperature=295.5 K",
                                        "scenario.title=title from a --set",
                                        "parameters.huang_rhys = 0.02, 0.2"};
    char path[PATH_LEN];
    vg_dataset ds;

    (void)state;
    fresh_sweep(path, 3, sets);
    open_ok(&ds, path, 0, NULL);
    assert_true(ds.cfg.param[VG_P_TEMPERATURE].v[0] == 295.5);
    assert_int_equal(ds.cfg.param[VG_P_HUANG_RHYS].n, 2);
    assert_true(ds.cfg.param[VG_P_HUANG_RHYS].v[0] == 0.02);
    assert_true(ds.cfg.param[VG_P_HUANG_RHYS].v[1] == 0.2);
    assert_int_equal(ds.cfg.param[VG_P_HUANG_RHYS].line, -1);
    assert_string_equal(ds.cfg.title, "title from a --set");
    assert_int_equal(ds.grid.npoints, 2 * 3 * 7);
    assert_string_equal(ds.cfg.overrides, "parameters.temperature=295.5 K\n"
                        "scenario.title=title from a --set\n"
                        "parameters.huang_rhys = 0.02, 0.2");
    vg_dataset_close(&ds);
}

/* Further --set of figure keys is accepted and lands in cfg.fig; stored
 * overrides come first, the caller's after them. */
static void figure_sets_accepted(void **state)
{
    static const char *const stored[1] = {"scenario.title=stored title"};
    static const char *const sets[4] = {"output.figures=png", "output.dpi=150",
                                        "output.maps=log10_ratio, log10_k_elastic",
                                        "scenario.title=caller title"};
    char path[PATH_LEN];
    vg_dataset ds;

    (void)state;
    fresh_sweep(path, 1, stored);
    open_ok(&ds, path, 4, sets);
    assert_int_equal(ds.cfg.fig.formats, VG_FIG_PNG);
    assert_true(ds.cfg.fig.dpi == 150.0);
    assert_int_equal(ds.cfg.fig.nmaps, 2);
    assert_int_equal(ds.cfg.fig.maps[0], VG_M_LOG10_RATIO);
    assert_int_equal(ds.cfg.fig.maps[1], VG_M_LOG10_K_ELASTIC);
    assert_string_equal(ds.cfg.title, "caller title"); /* the later set wins */
    assert_int_equal(ds.grid.npoints, 105);
    vg_dataset_close(&ds);
}

/* A --set that restates a parameter exactly is accepted; one that changes
 * the grid is refused, naming the --set and the file. */
static void grid_sets_refused(void **state)
{
    static const char *const same[1] = {"parameters.gap=-37.25 .. 209.5 meV, 7 points"};
    static const char *const count[1] = {"parameters.gap=0 .. 100 meV, 5 points"};
    static const char *const values[1] = {"parameters.gap=0 .. 100 meV, 7 points"};
    static const char *const axis[1] = {"parameters.temperature=300, 310 K"};
    static const char *const scalar[1] = {" parameters.huang_rhys =0.1"};
    char path[PATH_LEN], want[MSG_LEN];
    vg_dataset ds;

    (void)state;
    fresh_sweep(path, 0, NULL);
    open_ok(&ds, path, 1, same);
    assert_memory_equal(ds.cfg.param[VG_P_GAP].v, gap_values, sizeof gap_values);
    vg_dataset_close(&ds);
    snprintf(want, sizeof want, "--set parameters.gap: the grid of a data file cannot be "
             "changed ('%s' holds 7 values of 'gap', the --set gives 5 values)", path);
    expect_open_error(path, 1, count, VG_ECONFIG, want);
    snprintf(want, sizeof want, "--set parameters.gap: the grid of a data file cannot be "
             "changed ('%s' holds other values of 'gap')", path);
    expect_open_error(path, 1, values, VG_ECONFIG, want);
    snprintf(want, sizeof want, "--set parameters.temperature: the grid of a data file "
             "cannot be changed ('%s' holds a single value of 'temperature', the --set "
             "gives 2 values)", path);
    expect_open_error(path, 1, axis, VG_ECONFIG, want);
    snprintf(want, sizeof want, "--set parameters.huang_rhys: the grid of a data file "
             "cannot be changed ('%s' holds 5 values of 'huang_rhys', the --set gives a "
             "single value)", path);
    expect_open_error(path, 1, scalar, VG_ECONFIG, want);
}

/* A bad --set is reported by the config parser, as for a config file. */
static void bad_set_reported(void **state)
{
    static const char *const sets[1] = {"output.dpi=7"};
    char path[PATH_LEN];
    vg_dataset ds;
    vg_error err;

    (void)state;
    fresh_sweep(path, 0, NULL);
    assert_int_equal(vg_dataset_open(&ds, path, 1, sets, &err), VG_ECONFIG);
    assert_int_equal(strncmp(err.msg, "--set output.dpi: ", 18), 0);
    assert_null(ds.path);
}

/* A metric the config did not store: refused, listing what is stored. */
static void metric_not_stored(void **state)
{
    char path[PATH_LEN], want[MSG_LEN];

    (void)state;
    fresh_sweep(path, 0, NULL);
    snprintf(want, sizeof want, "'%s' does not hold metric 'log10_k_total' (it holds: "
             "log10_k_elastic, log10_k_assisted, log10_ratio)", path);
    expect_read_error(path, VG_M_LOG10_K_TOTAL, 105, want);
    snprintf(want, sizeof want, "'%s': unknown metric number %d", path, VG_N_METRICS);
    expect_read_error(path, (vg_metric_id)VG_N_METRICS, 105, want);
}

/* ---- files that are not vibrogate's ------------------------------- */

static void missing_file(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN], want[MSG_LEN];

    (void)state;
    new_dir(dir);
    path_in(path, dir, "absent.nc");
    snprintf(want, sizeof want, "cannot open '%s': %s", path, strerror(ENOENT));
    expect_open_error(path, 0, NULL, VG_EIO, want);
}

/* A NetCDF file without config_text, and a file that is not NetCDF. */
static void not_a_vibrogate_file(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN], want[MSG_LEN];
    int ncid, dimid, varid;
    double v[3] = {1.5, 2.5, 3.5};
    FILE *fp;

    (void)state;
    new_dir(dir);
    path_in(path, dir, "other.nc");
    nc_ok(nc_create(path, NC_NETCDF4 | NC_CLOBBER, &ncid));
    nc_ok(nc_def_dim(ncid, "gap", 3, &dimid));
    nc_ok(nc_def_var(ncid, "gap", NC_DOUBLE, 1, &dimid, &varid));
    nc_ok(nc_put_att_text(ncid, NC_GLOBAL, "title", 5, "other"));
    nc_ok(nc_enddef(ncid));
    nc_ok(nc_put_var_double(ncid, varid, v));
    nc_ok(nc_close(ncid));
    snprintf(want, sizeof want, "'%s' is not a vibrogate data file (no 'config_text' "
             "attribute)", path);
    expect_open_error(path, 0, NULL, VG_ECONFIG, want);
    path_in(path, dir, "notes.txt");
    fp = fopen(path, "w");
    assert_non_null(fp);
    fputs("gap = 120 meV\n", fp);
    assert_int_equal(fclose(fp), 0);
    snprintf(want, sizeof want, "'%s' is not a vibrogate data file (%s)", path,
             nc_strerror(NC_ENOTNC));
    expect_open_error(path, 0, NULL, VG_ECONFIG, want);
}

/* ---- files built by hand ------------------------------------------- */

/* A config with two axes (reorganization 2 slowest, gap 3 fastest) and the
 * rest scalars; the file is built to match it unless a test spoils it. */
static const char hand_config[] =
    "[parameters]\n"
    "gap = 10 .. 30 meV, 3 points\n"
    "reorganization = 100, 200 meV\n"
    "huang_rhys = 0.5\n"
    "mode = 150 meV\n"
    "[output]\n"
    "metrics = log10_ratio\n";

typedef struct {
    const char *config;     /* config_text, NULL for none */
    size_t gap_n;           /* length of the gap dimension (3 to match) */
    double gap[4];
    double reorg[2];
    double temperature;     /* the 0-d temperature variable */
    int swap_dims;          /* metric over (gap, reorganization): wrong order */
    double fill;            /* the metric's _FillValue */
    double metric[8];       /* gap_n * 2 values, row-major */
} hand_spec;

static hand_spec hand_default(void)
{
    hand_spec h = {hand_config, 3, {10.0, 20.0, 30.0, 0.0}, {100.0, 200.0}, 298.15, 0,
                   -999.0, {0.25, -1.5, -999.0, 3.0e-300, 7.75, -999.0, 0.0, 0.0}};
    return h;
}

static int def_axis(int ncid, const char *name, size_t n, int *dimid)
{
    int varid;

    nc_ok(nc_def_dim(ncid, name, n, dimid));
    nc_ok(nc_def_var(ncid, name, NC_DOUBLE, 1, dimid, &varid));
    return varid;
}

static void hand_file(const char *path, const hand_spec *h)
{
    static const char *const scalars[4] = {"electronic_coupling", "huang_rhys", "mode",
                                           "temperature"};
    const double sval[4] = {1.0, 0.5, 150.0, h->temperature};
    int ncid, dim[2], gvar, rvar, svar[4], mvar, mdims[2], k;

    nc_ok(nc_create(path, NC_NETCDF4 | NC_CLOBBER, &ncid));
    rvar = def_axis(ncid, "reorganization", 2, &dim[0]);
    gvar = def_axis(ncid, "gap", h->gap_n, &dim[1]);
    for (k = 0; k < 4; k++)
        nc_ok(nc_def_var(ncid, scalars[k], NC_DOUBLE, 0, NULL, &svar[k]));
    mdims[0] = dim[h->swap_dims ? 1 : 0];
    mdims[1] = dim[h->swap_dims ? 0 : 1];
    nc_ok(nc_def_var(ncid, "log10_ratio", NC_DOUBLE, 2, mdims, &mvar));
    nc_ok(nc_def_var_fill(ncid, mvar, NC_FILL, &h->fill));
    if (h->config)
        nc_ok(nc_put_att_text(ncid, NC_GLOBAL, "config_text", strlen(h->config), h->config));
    nc_ok(nc_enddef(ncid));
    nc_ok(nc_put_var_double(ncid, rvar, h->reorg));
    nc_ok(nc_put_var_double(ncid, gvar, h->gap));
    for (k = 0; k < 4; k++)
        nc_ok(nc_put_var_double(ncid, svar[k], &sval[k]));
    nc_ok(nc_put_var_double(ncid, mvar, h->metric));
    nc_ok(nc_close(ncid));
}

/* h as a fresh directory's hand.nc; its path into path. */
static void hand_made(char *path, const hand_spec *h)
{
    char dir[DIR_LEN];

    new_dir(dir);
    path_in(path, dir, "hand.nc");
    hand_file(path, h);
}

/* A file's own _FillValue (-999) is read as VG_FILL; other values as
 * stored. */
static void foreign_fill_value(void **state)
{
    hand_spec h = hand_default();
    const double want[6] = {0.25, -1.5, VG_FILL, 3.0e-300, 7.75, VG_FILL};
    char path[PATH_LEN];
    double out[6];
    vg_dataset ds;
    vg_error err;

    (void)state;
    hand_made(path, &h);
    open_ok(&ds, path, 0, NULL);
    assert_int_equal(ds.grid.npoints, 6);
    assert_int_equal(vg_dataset_read(&ds, VG_M_LOG10_RATIO, out, &err), VG_OK);
    assert_memory_equal(out, want, sizeof want);
    vg_dataset_close(&ds);
}

/* The file's dimension disagrees with its own config_text. */
static void dimension_mismatch(void **state)
{
    hand_spec h = hand_default();
    char path[PATH_LEN], want[MSG_LEN];

    (void)state;
    h.gap_n = 4;
    h.gap[3] = 40.0;
    hand_made(path, &h);
    snprintf(want, sizeof want, "'%s' does not match its own config: it holds 4 values of "
             "'gap', its config gives 3 values", path);
    expect_open_error(path, 0, NULL, VG_ECONFIG, want);
}

/* A metric over the right axes in the wrong order. */
static void metric_dims_order(void **state)
{
    hand_spec h = hand_default();
    char path[PATH_LEN], want[MSG_LEN];

    (void)state;
    h.swap_dims = 1;
    hand_made(path, &h);
    snprintf(want, sizeof want, "'%s': metric 'log10_ratio' does not lie along the grid's "
             "2 axes in grid order", path);
    expect_read_error(path, VG_M_LOG10_RATIO, 6, want);
}

/* Values no output may pass on: NaN or Inf in a coordinate or a metric, a
 * coordinate out of order. */
static void non_finite_and_unordered(void **state)
{
    hand_spec h = hand_default();
    char path[PATH_LEN], want[MSG_LEN];

    (void)state;
    h.temperature = NAN;
    hand_made(path, &h);
    snprintf(want, sizeof want, "'%s': coordinate 'temperature' holds a value that is not "
             "finite (at index 0)", path);
    expect_open_error(path, 0, NULL, VG_ECONFIG, want);

    h = hand_default();
    h.gap[2] = 20.0; /* 10, 20, 20 */
    hand_made(path, &h);
    snprintf(want, sizeof want, "'%s': coordinate 'gap' is not strictly increasing or "
             "decreasing (at index 2)", path);
    expect_open_error(path, 0, NULL, VG_ECONFIG, want);

    h = hand_default();
    h.metric[4] = INFINITY;
    hand_made(path, &h);
    snprintf(want, sizeof want, "'%s': metric 'log10_ratio' holds a value that is not "
             "finite (at grid point 4)", path);
    expect_read_error(path, VG_M_LOG10_RATIO, 6, want);
}

/* A config_text the parser refuses: its message, located in the text. */
static void bad_config_text(void **state)
{
    hand_spec h = hand_default();
    char path[PATH_LEN], head[MSG_LEN];
    vg_dataset ds;
    vg_error err;

    (void)state;
    h.config = "[parameters]\ngap = two\n";
    hand_made(path, &h);
    assert_int_equal(vg_dataset_open(&ds, path, 0, NULL, &err), VG_ECONFIG);
    snprintf(head, sizeof head, "%s (config_text):2: ", path);
    assert_int_equal(strncmp(err.msg, head, strlen(head)), 0);
    assert_null(ds.path);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(axes_and_values),
        cmocka_unit_test(metrics_bit_exact),
        cmocka_unit_test(file_values_win),
        cmocka_unit_test(overrides_carried_over),
        cmocka_unit_test(figure_sets_accepted),
        cmocka_unit_test(grid_sets_refused),
        cmocka_unit_test(bad_set_reported),
        cmocka_unit_test(metric_not_stored),
        cmocka_unit_test(missing_file),
        cmocka_unit_test(not_a_vibrogate_file),
        cmocka_unit_test(foreign_fill_value),
        cmocka_unit_test(dimension_mismatch),
        cmocka_unit_test(metric_dims_order),
        cmocka_unit_test(non_finite_and_unordered),
        cmocka_unit_test(bad_config_text),
    };

    return cmocka_run_group_tests(tests, group_setup, group_teardown);
}
