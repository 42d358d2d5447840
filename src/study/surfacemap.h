/* The working-surface map of a gridded plate: its statistics (mean, spread, extremes and where
 * they are, centre against corners). Definitions in docs/grid.md; the figure is figure.h's, the
 * CSV csv.h's. */
#ifndef TP_SURFACEMAP_H
#define TP_SURFACEMAP_H

#include "diag.h"
#include "network.h"
#include "status.h"

#define TP_SURFACEMAP_READY_BAND                                                                   \
    2.0 /* K: the whole surface is ready when every cell is within this                            \
    of its value at the holding point */

typedef struct tp_surfacemap_stats {
    int cells;                         /* cells with a value */
    double mean, std;                  /* area-weighted mean (K) and standard deviation (K) */
    double min, max, spread;           /* coldest and hottest cell, and max - min, K */
    int min_i, min_j, max_i, max_j;    /* the cells of the extremes (column, row) */
    double min_x, min_y, max_x, max_y; /* their centres, m from the bed's lower-left corner */
    double centre;        /* K at the bed's centre, bilinear between the nearest cell centres */
    double corner;        /* K, mean of the four corner cells of the top layer */
    double centre_corner; /* K, centre - corner */
} tp_surfacemap_stats;

/* Statistics of `map` (nx * ny values, NaN where the top layer has no cell), weighted by each
 * cell's exposed top area. All NaN (cells 0) when no cell has a value. */
void tp_surfacemap_compute(const tp_net_grid *g, const double *map, tp_surfacemap_stats *s);

/* Set every statistic to "unknown" (NaN, cells 0). */
void tp_surfacemap_empty(tp_surfacemap_stats *s);

#endif
