/* The working-surface map: statistics. */
#include "surfacemap.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "grid.h"

/* The value at (x, y) interpolated bilinearly between the four nearest cell centres; the
 * nearest cell's value when one of them has none. */
static double bilinear(const tp_net_grid *g, const double *map, double x, double y)
{
    double dx = g->width / g->nx, dy = g->depth / g->ny;
    double u = x / dx - 0.5, v = y / dy - 0.5, fu, fv;
    int i0 = (int)floor(u), j0 = (int)floor(v), i1, j1, ni, nj;
    if (i0 < 0)
        i0 = 0;
    if (j0 < 0)
        j0 = 0;
    i1 = i0 + 1 < g->nx ? i0 + 1 : i0;
    j1 = j0 + 1 < g->ny ? j0 + 1 : j0;
    fu = i1 > i0 ? fmin(fmax(u - i0, 0.0), 1.0) : 0.0;
    fv = j1 > j0 ? fmin(fmax(v - j0, 0.0), 1.0) : 0.0;
    {
        double a = map[j0 * g->nx + i0], b = map[j0 * g->nx + i1];
        double c = map[j1 * g->nx + i0], e = map[j1 * g->nx + i1];
        if (isfinite(a) && isfinite(b) && isfinite(c) && isfinite(e))
            return (1 - fv) * ((1 - fu) * a + fu * b) + fv * ((1 - fu) * c + fu * e);
    }
    tp_grid_cell_at(g, x, y, &ni, &nj);
    return map[nj * g->nx + ni];
}

void tp_surfacemap_empty(tp_surfacemap_stats *s)
{
    s->cells = 0;
    s->mean = s->std = s->min = s->max = s->spread = TP_UNSET;
    s->min_x = s->min_y = s->max_x = s->max_y = TP_UNSET;
    s->centre = s->corner = s->centre_corner = TP_UNSET;
    s->min_i = s->min_j = s->max_i = s->max_j = -1;
}

void tp_surfacemap_compute(const tp_net_grid *g, const double *map, tp_surfacemap_stats *s)
{
    int i, j, i_lo = g->nx, i_hi = -1, j_lo = g->ny, j_hi = -1, k, nc = 0;
    double area = 0.0, sum = 0.0, sq = 0.0, corner = 0.0;
    tp_surfacemap_empty(s);
    for (j = 0; j < g->ny; j++) {
        for (i = 0; i < g->nx; i++) {
            double v = map[j * g->nx + i], a = g->top_area[j * g->nx + i];
            if (!isfinite(v))
                continue;
            if (s->cells == 0 || v < s->min) {
                s->min = v;
                s->min_i = i;
                s->min_j = j;
            }
            if (s->cells == 0 || v > s->max) {
                s->max = v;
                s->max_i = i;
                s->max_j = j;
            }
            s->cells++;
            area += a;
            sum += a * v;
            i_lo = i < i_lo ? i : i_lo;
            i_hi = i > i_hi ? i : i_hi;
            j_lo = j < j_lo ? j : j_lo;
            j_hi = j > j_hi ? j : j_hi;
        }
    }
    if (s->cells == 0 || !(area > 0))
        return;
    s->mean = sum / area;
    for (k = 0; k < g->nx * g->ny; k++)
        if (isfinite(map[k]))
            sq += g->top_area[k] * (map[k] - s->mean) * (map[k] - s->mean);
    s->std = sqrt(sq / area);
    s->spread = s->max - s->min;
    tp_grid_cell_centre(g, s->min_i, s->min_j, &s->min_x, &s->min_y);
    tp_grid_cell_centre(g, s->max_i, s->max_j, &s->max_x, &s->max_y);
    s->centre = bilinear(g, map, 0.5 * g->width, 0.5 * g->depth);
    {
        const int ci[4] = {i_lo, i_hi, i_lo, i_hi}, cj[4] = {j_lo, j_lo, j_hi, j_hi};
        for (k = 0; k < 4; k++) {
            double v = map[cj[k] * g->nx + ci[k]];
            if (isfinite(v)) {
                corner += v;
                nc++;
            }
        }
    }
    if (nc > 0) {
        s->corner = corner / nc;
        s->centre_corner = s->centre - s->corner;
    }
}
