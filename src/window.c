/*
 * The feasibility window of a grid (see vg_window.h).
 */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>

#include "vg_window.h"

/* Stands for "no edge point here" in the squared distances: larger than
 * any squared distance on axes scaled to [0, 1] (at most 6 axes, each
 * contributing at most (1 + 2 steps)^2), small enough that sums stay exact
 * enough to compare. */
#define FAR 1e30

double vg_window_position(const vg_grid *g, vg_param_id p, size_t k)
{
    const vg_param *q = &g->cfg->param[p];
    double a = q->v[0], b = q->v[q->n - 1], x = q->v[k];

    if (q->n < 2)
        return 0.0;
    if (q->log_spacing && a > 0.0 && b > 0.0)
        return log(x / a) / log(b / a);
    return (x - a) / (b - a);
}

/* One line: squared distances f[0..n) (FAR where no edge point lies at the
 * sample), positions x[0..n) increasing; the edge also lies at x[0] - step
 * and x[n-1] + step.  Result into d.  Work arrays of n + 2 (v) and n + 3 (z). */
static void edt_line(const double *f, const double *x, size_t n, double *d, size_t *v,
                     double *z, double *xs, double *fs)
{
    size_t m = n + 2, k = 0;
    double lo = n > 1 ? x[0] - (x[1] - x[0]) : x[0] - 1.0;
    double hi = n > 1 ? x[n - 1] + (x[n - 1] - x[n - 2]) : x[0] + 1.0;

    xs[0] = lo;
    fs[0] = 0.0;
    for (size_t i = 0; i < n; i++) {
        xs[i + 1] = x[i];
        fs[i + 1] = f[i];
    }
    xs[n + 1] = hi;
    fs[n + 1] = 0.0;
    v[0] = 0;
    z[0] = -HUGE_VAL;
    z[1] = HUGE_VAL;
    for (size_t q = 1; q < m; q++) {
        double s;
        for (;;) {
            size_t p = v[k];
            s = ((fs[q] + xs[q] * xs[q]) - (fs[p] + xs[p] * xs[p])) / (2.0 * (xs[q] - xs[p]));
            if (s > z[k]) /* always so at k = 0, where z[0] = -inf */
                break;
            k--;
        }
        k++;
        v[k] = q;
        z[k] = s;
        z[k + 1] = HUGE_VAL;
    }
    k = 0;
    for (size_t q = 1; q <= n; q++) {
        while (z[k + 1] < xs[q])
            k++;
        d[q - 1] = (xs[q] - xs[v[k]]) * (xs[q] - xs[v[k]]) + fs[v[k]];
    }
}

/* Squared distances of every point to the edge, in place over dist (FAR
 * at feasible points, 0 at infeasible ones on entry). */
static vg_status edt(const vg_grid *g, double *dist, vg_error *err)
{
    size_t maxn = 1;
    double *x, *line, *out, *z, *xs, *fs;
    size_t *v;
    vg_status st = VG_OK;

    for (size_t a = 0; a < g->naxes; a++)
        maxn = g->dim[a] > maxn ? g->dim[a] : maxn;
    x = malloc(maxn * sizeof *x);
    line = malloc(maxn * sizeof *line);
    out = malloc(maxn * sizeof *out);
    z = malloc((maxn + 3) * sizeof *z);
    xs = malloc((maxn + 2) * sizeof *xs);
    fs = malloc((maxn + 2) * sizeof *fs);
    v = malloc((maxn + 2) * sizeof *v);
    if (!x || !line || !out || !z || !xs || !fs || !v) {
        st = vg_error_set(err, VG_ENOMEM, "out of memory for the feasibility window");
        goto done;
    }
    for (size_t a = 0; a < g->naxes; a++) {
        vg_param_id p = g->axis[a];
        size_t n = g->dim[a], stride = g->stride[p];
        for (size_t i = 0; i < n; i++)
            x[i] = vg_window_position(g, p, i);
        /* every line along axis a: start points are those with coordinate 0 on a */
        for (size_t base = 0; base < g->npoints; base++) {
            if ((base / stride) % n != 0)
                continue;
            for (size_t i = 0; i < n; i++)
                line[i] = dist[base + i * stride];
            edt_line(line, x, n, out, v, z, xs, fs);
            for (size_t i = 0; i < n; i++)
                dist[base + i * stride] = out[i];
        }
    }
done:
    free(x);
    free(line);
    free(out);
    free(z);
    free(xs);
    free(fs);
    free(v);
    return st;
}

vg_status vg_window_analyse(const vg_grid *g, const unsigned char *mask, vg_window *w,
                            vg_error *err)
{
    double *dist;
    vg_status st;

    w->points = g->npoints;
    w->feasible = 0;
    w->have_robust = 0;
    w->robust = 0;
    w->distance = 0.0;
    for (int p = 0; p < VG_NPARAM; p++) {
        w->lo[p] = SIZE_MAX;
        w->hi[p] = 0;
    }
    for (size_t i = 0; i < g->npoints; i++) {
        if (!mask[i])
            continue;
        w->feasible++;
        for (int p = 0; p < VG_NPARAM; p++) {
            size_t c = vg_grid_coord(g, i, (vg_param_id)p);
            w->lo[p] = c < w->lo[p] ? c : w->lo[p];
            w->hi[p] = c > w->hi[p] ? c : w->hi[p];
        }
    }
    if (w->feasible == 0 || g->npoints > VG_WINDOW_EDT_MAX)
        return VG_OK;
    dist = malloc(g->npoints * sizeof *dist);
    if (!dist)
        return vg_error_set(err, VG_ENOMEM, "out of memory for the feasibility window");
    for (size_t i = 0; i < g->npoints; i++)
        dist[i] = mask[i] ? FAR : 0.0;
    st = edt(g, dist, err);
    if (st == VG_OK) {
        double best = -1.0;
        for (size_t i = 0; i < g->npoints; i++)
            if (mask[i] && dist[i] > best) {
                best = dist[i];
                w->robust = i;
            }
        w->have_robust = 1;
        w->distance = sqrt(best);
    }
    free(dist);
    return st;
}
