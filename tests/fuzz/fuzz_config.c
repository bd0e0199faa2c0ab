/*
 * libFuzzer harness: the whole config loader on arbitrary bytes
 * (vg_config_load_text and vg_config_load, docs/config.md).
 *
 * Input: the bytes up to the first NUL are the config text; each further
 * NUL-terminated piece (at most FUZZ_MAX_SETS) is one --set override.  The
 * same bytes, NULs included, are also loaded as a file (a memfd, read
 * through /proc/self/fd) without overrides:
 *   - bytes without a NUL must load from the file exactly as from memory
 *     (same status, same message, same values; docs/config.md,
 *     "Implementation notes": both hand the text to the same parser),
 *     unless they hold an "[odorant." section: a config from memory (a
 *     data file's) does not read mode tables (vg_config_load_text), so
 *     the file load may refuse a table the memory load never opens;
 *   - bytes with a NUL must be refused from the file ("NUL bytes ... are
 *     errors", docs/config.md "File format").
 * Seeds: the .ini files of configs/ and tests/bad/, copied at build time.
 *
 * Every result is held to tests/fuzz/fuzz_check.h and to the checks below:
 * an accepted config satisfies the documented limits and rules; a refusal
 * has a located one-line UTF-8 message and leaves the config freed.
 */
#define _GNU_SOURCE /* memfd_create */
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>

#include "fuzz_check.h"

#define FUZZ_MAX_SETS 8

int LLVMFuzzerInitialize(int *argc, char ***argv);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static int memfd = -1;
static char memfd_path[64];

int LLVMFuzzerInitialize(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    gsl_set_error_handler_off(); /* as main does: GSL reports by status only */
    memfd = memfd_create("fuzz-config", 0);
    if (memfd < 0) {
        perror("fuzz_config: memfd_create");
        exit(1);
    }
    snprintf(memfd_path, sizeof memfd_path, "/proc/self/fd/%d", memfd);
    return 0;
}

/* Text of 1 to max bytes of UTF-8 without ':' when no_colon. */
static void check_label(const char *what, const char *s, size_t size, int no_colon)
{
    size_t n = strnlen(s, size);

    if (n == 0 || n == size || n > FUZZ_LABEL_MAX || (no_colon && strchr(s, ':')))
        fuzz_broken(what, s);
    if (!fuzz_utf8_ok((const unsigned char *)s, n))
        fuzz_broken(what, "not UTF-8");
}

static void check_text(const char *what, const char *s)
{
    if (!s || !fuzz_utf8_ok((const unsigned char *)s, strlen(s)))
        fuzz_broken(what, s ? "not UTF-8" : "missing");
}

static int is_axis(const vg_config *cfg, int p)
{
    return p >= 0 && p < VG_NPARAM && cfg->param[p].n > 1;
}

/* Contours: at most 16, finite, all different and in order. */
static void check_contours(const vg_figure_spec *f)
{
    if (f->ncontours > VG_MAX_CONTOURS)
        fuzz_broken("contours", "more than 16");
    for (size_t i = 0; i < f->ncontours; i++) {
        if (!isfinite(f->contours[i]))
            fuzz_broken("contours", "a level is not finite");
        if (i > 1 && (f->contours[1] > f->contours[0]) != (f->contours[i] > f->contours[i - 1]))
            fuzz_broken("contours", "levels not in order");
        if (i > 0 && f->contours[i] == f->contours[i - 1])
            fuzz_broken("contours", "two equal levels");
    }
}

/* Marks: at most 16, distinct labels, values in the parameters' ranges. */
static void check_marks(const vg_figure_spec *f)
{
    if (f->nmarks > VG_MAX_MARKS)
        fuzz_broken("marks", "more than 16");
    for (size_t i = 0; i < f->nmarks; i++) {
        const vg_mark *m = &f->marks[i];
        int given = 0;
        check_label("mark label", m->label, sizeof m->label, 1);
        for (size_t j = 0; j < i; j++)
            if (strcmp(f->marks[j].label, m->label) == 0)
                fuzz_broken("marks", "two marks share a label");
        for (int p = 0; p < VG_NPARAM; p++) {
            if (!m->has[p])
                continue;
            given++;
            if (!isfinite(m->v[p]) || m->v[p] < fuzz_domain[p][0] || m->v[p] > fuzz_domain[p][1])
                fuzz_broken("mark", "a value outside the parameter's accepted range");
        }
        if (given == 0)
            fuzz_broken("mark", "fixes no parameter");
    }
}

/* x, y, panels and rows of a grid that can have maps ("x and y", "What
 * figures need"): axes, all different; rows only with panels. */
static void check_roles(const vg_config *cfg)
{
    const vg_figure_spec *f = &cfg->fig;
    const int r[4] = {(int)f->x, (int)f->y, f->panels, f->rows};

    if (!(cfg->formats & VG_FMT_NETCDF))
        fuzz_broken("figures", "drawn without netcdf data");
    for (size_t i = 0; i < f->nmaps; i++)
        if (!cfg->metric_on[f->maps[i]])
            fuzz_broken("figures", "a map of a metric not stored");
    if (f->rows >= 0 && f->panels < 0)
        fuzz_broken("figures", "rows without panels");
    for (int i = 0; i < 4; i++) {
        if (r[i] < 0 && i >= 2)
            continue;
        if (!is_axis(cfg, r[i]))
            fuzz_broken("figures", "x, y, panels or rows is not an axis");
        for (int j = 0; j < i; j++)
            if (r[j] == r[i])
                fuzz_broken("figures", "x, y, panels and rows not all different");
    }
}

static void check_figures(const vg_config *cfg)
{
    const vg_figure_spec *f = &cfg->fig;

    if (f->formats & ~(unsigned)(VG_FIG_PNG | VG_FIG_PDF | VG_FIG_SVG))
        fuzz_broken("figures", "unknown format bit");
    if (f->nmaps < 1 || f->nmaps > VG_N_METRICS)
        fuzz_broken("maps", "none, or more than the metrics");
    for (size_t i = 0; i < f->nmaps; i++)
        for (size_t j = 0; j < i; j++)
            if (f->maps[i] == f->maps[j] || (int)f->maps[i] < 0 || f->maps[i] >= VG_N_METRICS)
                fuzz_broken("maps", "a metric twice, or not a metric");
    if (!(f->width_in >= 1.0 && f->width_in <= 40.0))
        fuzz_broken("width", "outside 1 .. 40 in");
    if (!(f->dpi >= 50.0 && f->dpi <= 2400.0))
        fuzz_broken("dpi", "outside 50 .. 2400");
    check_label("font", f->font, sizeof f->font, 0);
    check_contours(f);
    check_marks(f);
    if (f->formats && !memchr(f->no_maps, '\0', sizeof f->no_maps))
        fuzz_broken("figures", "no_maps not NUL-terminated");
    if (f->formats && !f->no_maps[0])
        check_roles(cfg);
}

/* An accepted config against docs/config.md; text and overrides kept. */
static void check_accepted(const vg_config *cfg, const char *text, const char *overrides)
{
    double points = 1.0;

    for (int p = 0; p < VG_NPARAM; p++) {
        fuzz_check_param((vg_param_id)p, &cfg->param[p]);
        points *= (double)cfg->param[p].n;
    }
    if (points > FUZZ_GRID_MAX)
        fuzz_broken("grid", "more than 10^12 points");
    if (!(cfg->tolerance >= 1e-15 && cfg->tolerance <= 1e-3))
        fuzz_broken("tolerance", "outside 1e-15 .. 1e-3");
    if (!(cfg->max_bytes >= 1.0) || !isfinite(cfg->max_bytes))
        fuzz_broken("max_size", "below one byte or not finite");
    if (cfg->stats != VG_STATS_THERMAL && cfg->stats != VG_STATS_FROZEN)
        fuzz_broken("mode_statistics", "neither thermal nor frozen");
    if (cfg->formats == 0 || (cfg->formats & ~(unsigned)(VG_FMT_NETCDF | VG_FMT_CSV)))
        fuzz_broken("data", "no format, or an unknown one");
    check_text("title", cfg->title);
    check_text("notes", cfg->notes);
    check_text("directory", cfg->out_dir);
    if (!cfg->out_dir[0])
        fuzz_broken("directory", "empty");
    if (!cfg->text || strcmp(cfg->text, text) != 0)
        fuzz_broken("config text", "not kept as given");
    if (overrides ? !cfg->overrides || strcmp(cfg->overrides, overrides) != 0 : cfg->overrides != NULL)
        fuzz_broken("overrides", "not kept as given, joined by newlines");
    check_figures(cfg);
}

/* A refusal: located message ("NAME:" or "--set"), config left freed. */
static void check_refused(vg_status st, const vg_error *err, const vg_config *cfg,
                          const char *name)
{
    size_t n = strlen(name);

    fuzz_check_refusal(st, err, 1);
    if (st == VG_ECONFIG && !(strncmp(err->msg, name, n) == 0 && err->msg[n] == ':') &&
        strncmp(err->msg, "--set", 5) != 0)
        fuzz_broken("message of a refusal not located", err->msg);
    if (cfg->text || cfg->path)
        fuzz_broken("refused config", "not left freed");
    for (int p = 0; p < VG_NPARAM; p++)
        if (cfg->param[p].v)
            fuzz_broken("refused config", "values left allocated");
}

static vg_status load_memory(vg_config *cfg, const char *text, size_t nset,
                             const char *const *sets, const char *overrides, vg_error *err)
{
    vg_status st;

    memset(err, 0, sizeof *err);
    st = vg_config_load_text(cfg, memfd_path, text, nset, sets, err);
    if (st == VG_OK)
        check_accepted(cfg, text, overrides);
    else
        check_refused(st, err, cfg, memfd_path);
    return st;
}

/* The same bytes from a file: refused if they hold a NUL, else the same
 * outcome as from memory (mem_st, mem_err, mem). */
static void load_file(const uint8_t *data, size_t size, int has_nul, vg_status mem_st,
                      const vg_error *mem_err, const vg_config *mem)
{
    vg_config cfg;
    vg_error err;
    vg_status st;

    if (ftruncate(memfd, 0) != 0 || pwrite(memfd, data, size, 0) != (ssize_t)size) {
        perror("fuzz_config: writing the memfd");
        exit(1);
    }
    memset(&err, 0, sizeof err);
    st = vg_config_load(&cfg, memfd_path, 0, NULL, &err);
    if (st != VG_OK)
        check_refused(st, &err, &cfg, memfd_path);
    if (has_nul && st != VG_ECONFIG)
        fuzz_broken("a file holding a NUL byte", "not refused");
    if (!has_nul && !memmem(data, size, "[odorant.", 9)
        && (st != mem_st || strcmp(err.msg, mem_err->msg) != 0))
        fuzz_broken("file and memory loads differ", err.msg);
    if (!has_nul && st == VG_OK && mem_st == VG_OK) {
        for (int p = 0; p < VG_NPARAM; p++)
            if (cfg.param[p].n != mem->param[p].n ||
                memcmp(cfg.param[p].v, mem->param[p].v, cfg.param[p].n * sizeof(double)) != 0)
                fuzz_broken("file and memory loads differ", vg_param_get((vg_param_id)p)->key);
    }
    if (st == VG_OK)
        vg_config_free(&cfg);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char *copy = malloc(size + 1), *overrides = malloc(size + 1);
    const char *sets[FUZZ_MAX_SETS];
    size_t nset = 0, at;
    vg_config cfg;
    vg_error err;
    vg_status st;

    if (!copy || !overrides)
        goto out;
    memcpy(copy, data, size);
    copy[size] = '\0';
    overrides[0] = '\0';
    at = strlen(copy) + 1;
    while (at <= size && nset < FUZZ_MAX_SETS) {
        sets[nset] = copy + at;
        strcat(strcat(overrides, nset ? "\n" : ""), copy + at);
        nset++;
        at += strlen(copy + at) + 1;
    }
    st = load_memory(&cfg, copy, nset, sets, nset ? overrides : NULL, &err);
    load_file(data, size, nset > 0, st, &err, &cfg);
    if (st == VG_OK)
        vg_config_free(&cfg);
out:
    free(overrides);
    free(copy);
    return 0;
}
