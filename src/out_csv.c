/*
 * The CSV writer (format of vg_output.h, driven by src/output.c): a header
 * row of column names, then one row per grid point in flat order with all six
 * parameters (scalars too) in canonical units and the selected metrics.
 * Numbers are "%.17g", enough digits to read back the same double; a metric
 * stored as VG_FILL is an empty field.  No comment lines, so that any CSV
 * reader loads the file as it is (RFC 4180 apart from the LF line ends,
 * which is common practice).
 *
 * Rows are formatted into one large buffer that goes out with a single
 * write(2) whenever it fills, so memory stays fixed whatever the grid size.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "output_int.h"

/* Longest "%.17g" of a double: sign, 17 digits, point, "e-308". */
#define CSV_FIELD_MAX 24
/* Longest row: every field, its separator and the line end. */
#define CSV_ROW_MAX ((VG_NPARAM + VG_N_METRICS) * (CSV_FIELD_MAX + 1) + 1)
/* Output buffer: many rows per write(2). */
#define CSV_BUF_SIZE (1u << 20)

typedef struct {
    int fd;                  /* the temporary file, -1 once closed */
    size_t len;              /* bytes waiting in buf */
    char buf[CSV_BUF_SIZE];
} csv_state;

static vg_status csv_flush(vg_writer *w, vg_error *err)
{
    csv_state *s = w->state;
    int e = vg_out_write_all(s->fd, s->buf, s->len);

    if (e != 0)
        return vg_out_fail_errno(w, e, err);
    s->len = 0;
    return VG_OK;
}

/* Append text; the caller keeps CSV_ROW_MAX bytes free before each row. */
static void csv_put(csv_state *s, const char *text)
{
    size_t n = strlen(text);

    memcpy(s->buf + s->len, text, n);
    s->len += n;
}

static void csv_put_number(csv_state *s, double x)
{
    int n = snprintf(s->buf + s->len, CSV_BUF_SIZE - s->len, "%.17g", x);

    s->len += (size_t)n;
}

static vg_status csv_begin(vg_writer *w, int fd, vg_error *err)
{
    csv_state *s = malloc(sizeof *s);
    size_t k;
    int p;

    if (!s) {
        close(fd);
        return vg_out_fail_nomem(w, err);
    }
    s->fd = fd;
    s->len = 0;
    w->state = s;
    for (p = 0; p < VG_NPARAM; p++) {
        csv_put(s, vg_param_get((vg_param_id)p)->csv_column);
        csv_put(s, p + 1 < VG_NPARAM ? "," : "");
    }
    for (k = 0; k < w->nsel; k++) {
        csv_put(s, ",");
        csv_put(s, vg_metric_get((vg_metric_id)w->sel[k])->name);
    }
    csv_put(s, "\n");
    return VG_OK;
}

static void csv_row(const vg_writer *w, csv_state *s, size_t flat, const double *met)
{
    double v[VG_NPARAM];
    size_t k;
    int p;

    vg_grid_values(w->meta.grid, flat, v);
    for (p = 0; p < VG_NPARAM; p++) {
        if (p > 0)
            csv_put(s, ",");
        csv_put_number(s, v[p]);
    }
    for (k = 0; k < w->nsel; k++) {
        double x = met[w->sel[k]];
        csv_put(s, ",");
        if (x != VG_FILL)
            csv_put_number(s, x);
    }
    csv_put(s, "\n");
}

static vg_status csv_write(vg_writer *w, size_t start, size_t count,
                           const double *metrics, vg_error *err)
{
    csv_state *s = w->state;
    size_t i;

    for (i = 0; i < count; i++) {
        if (CSV_BUF_SIZE - s->len < CSV_ROW_MAX) {
            vg_status st = csv_flush(w, err);
            if (st != VG_OK)
                return st;
        }
        csv_row(w, s, start + i, metrics + i * VG_N_METRICS);
    }
    return VG_OK;
}

static vg_status csv_finish(vg_writer *w, vg_error *err)
{
    csv_state *s = w->state;
    vg_status st = csv_flush(w, err);
    int e;

    if (st != VG_OK)
        return st;
    e = vg_out_sync_close(s->fd);
    s->fd = -1;
    return e != 0 ? vg_out_fail_errno(w, e, err) : VG_OK;
}

static void csv_discard(vg_writer *w)
{
    csv_state *s = w->state;

    if (!s)
        return;
    if (s->fd >= 0)
        close(s->fd);
    free(s);
    w->state = NULL;
}

const vg_out_format vg_out_csv_format = {
    "sweep.csv", csv_begin, csv_write, csv_finish, csv_discard
};
