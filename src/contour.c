/*
 * Iso-lines by marching squares (see vg_plotaux.h), for the figure module:
 * the dominance boundary (log10 ratio = 0) and any other level drawn over
 * a map.  Pure: no allocation, the caller supplies the segment buffer.
 *
 * Each grid cell is classified by which of its four corners are at or
 * above the level (a 4-bit case, the 2-D form of the cube table of
 * Lorensen & Cline, "Marching cubes", SIGGRAPH 1987; the square table is
 * common practice), and the iso-line crosses each edge whose ends differ
 * at the point found by linear interpolation along that edge.  The two
 * saddle cases (diagonal corners above) are resolved by the mean of the
 * four corners: when it is at or above the level the above corners are
 * joined through the centre, otherwise the below corners are (common
 * practice).  Every edge is interpolated from its lower-index end, so the
 * two cells sharing an edge produce bit-identical points and the segments
 * chain exactly.
 *
 * A cell with a corner equal to the fill value, or not finite (so NaN
 * works as a fill value too), is skipped.
 */
#include <math.h>

#include "vg_plotaux.h"

/* Corners of cell (i, j), counter-clockwise: 0 = (i, j), 1 = (i+1, j),
 * 2 = (i+1, j+1), 3 = (i, j+1).  Edge e joins corners edge_a[e] ->
 * edge_b[e]: 0 bottom, 1 right, 2 top, 3 left, each running in the
 * direction of increasing index. */
static const int edge_a[4] = {0, 1, 3, 0};
static const int edge_b[4] = {1, 2, 2, 3};
static const int corner_dx[4] = {0, 1, 1, 0};
static const int corner_dy[4] = {0, 0, 1, 1};

/* The edge pairs crossed in each case (bit c set: corner c at or above the
 * level); -1 ends the list.  Cases 5 and 10 hold the pairing for a centre
 * at or above the level; a centre below uses the other saddle's row. */
static const signed char case_edges[16][4] = {
    {-1, -1, -1, -1}, {3, 0, -1, -1}, {0, 1, -1, -1}, {3, 1, -1, -1},
    {1, 2, -1, -1},   {0, 1, 2, 3},   {0, 2, -1, -1}, {3, 2, -1, -1},
    {2, 3, -1, -1},   {0, 2, -1, -1}, {3, 0, 1, 2},   {1, 2, -1, -1},
    {1, 3, -1, -1},   {0, 1, -1, -1}, {3, 0, -1, -1}, {-1, -1, -1, -1},
};

/* The fraction t in [0, 1] along a -> b where the linear interpolant
 * reaches level; exactly one of za, zb is at or above it.  Halves are used
 * when a difference overflows (halving is exact, so t is unchanged where
 * both forms are finite). */
static double edge_fraction(double za, double zb, double level)
{
    double num = level - za, den = zb - za;

    if (!isfinite(num) || !isfinite(den)) {
        num = 0.5 * level - 0.5 * za;
        den = 0.5 * zb - 0.5 * za;
    }
    return num / den;
}

static void edge_point(const double c[4], size_t i, size_t j, int e, double level, double *x,
                       double *y)
{
    int a = edge_a[e], b = edge_b[e];
    double t = edge_fraction(c[a], c[b], level);

    *x = (double)(i + (size_t)corner_dx[a]);
    *y = (double)(j + (size_t)corner_dy[a]);
    if (corner_dx[b] != corner_dx[a])
        *x += t;
    else
        *y += t;
}

/* Reads the corners of cell (i, j); 0 when the cell is to be skipped. */
static int cell_corners(const double *z, size_t nx, size_t i, size_t j, double skip, double c[4])
{
    int k;

    for (k = 0; k < 4; k++) {
        c[k] = z[(j + (size_t)corner_dy[k]) * nx + i + (size_t)corner_dx[k]];
        if (!isfinite(c[k]) || c[k] == skip)
            return 0;
    }
    return 1;
}

/* The case of a cell, saddles already resolved by the corner mean. */
static int cell_case(const double c[4], double level)
{
    int k, cs = 0;

    for (k = 0; k < 4; k++)
        cs |= (c[k] >= level) << k;
    if ((cs == 5 || cs == 10) && !(0.25 * c[0] + 0.25 * c[1] + 0.25 * c[2] + 0.25 * c[3] >= level))
        cs ^= 15;
    return cs;
}

/* Appends the segments of cell (i, j) after the n already in out. */
static size_t cell_segments(const double *z, size_t nx, size_t i, size_t j, double level,
                            double skip, vg_segment *out, size_t cap, size_t n)
{
    double c[4];
    const signed char *ed;
    int k;

    if (!cell_corners(z, nx, i, j, skip, c))
        return n;
    ed = case_edges[cell_case(c, level)];
    for (k = 0; k < 4 && ed[k] >= 0 && n < cap; k += 2, n++) {
        edge_point(c, i, j, ed[k], level, &out[n].x0, &out[n].y0);
        edge_point(c, i, j, ed[k + 1], level, &out[n].x1, &out[n].y1);
    }
    return n;
}

size_t vg_contour(const double *z, size_t nx, size_t ny, double level, double skip,
                  vg_segment *out, size_t cap)
{
    size_t i, j, n = 0;

    if (!z || !out || nx < 2 || ny < 2 || !isfinite(level))
        return 0;
    for (j = 0; j + 1 < ny && n < cap; j++)
        for (i = 0; i + 1 < nx && n < cap; i++)
            n = cell_segments(z, nx, i, j, level, skip, out, cap, n);
    return n;
}
