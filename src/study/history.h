/* The history of a run: what the integrator reports at each output time, kept for metrics,
 * CSV, JSON and plots. A gridded plate keeps per-layer statistics instead of every cell, the
 * working-surface statistics, and the surface maps the answers need (docs/grid.md). */
#ifndef TP_HISTORY_H
#define TP_HISTORY_H

#include "integrate.h"
#include "network.h"
#include "status.h"

/* What a recorded temperature column holds. */
typedef enum tp_col_kind {
    TP_COL_NODE,  /* one node's temperature */
    TP_COL_MEAN,  /* a gridded layer: capacity-weighted mean of its cells */
    TP_COL_MIN,   /* a gridded layer: its coldest cell */
    TP_COL_MAX    /* a gridded layer: its hottest cell */
} tp_col_kind;

typedef struct tp_history {
    const tp_network *net;
    long n, cap;       /* rows */
    int n_out;         /* recorded temperature columns: every node with capacity in declaration
                          order; for a gridded plate, each layer's mean, min and max, then the
                          nodes outside the grid */
    int *out_nodes;    /* their node indices (-1 for a layer statistic) */
    tp_col_kind *out_kind;
    int *out_layer;    /* the layer of a statistic column (-1 otherwise) */
    double *t;         /* s */
    double *temps;     /* n x n_out, K */
    double *power;     /* n x n_sources, W delivered */
    double *wire;      /* n: W lost in wiring, all sources */
    double *current;   /* n: A through the controlled (or first electrical) source when on */
    double *duty;      /* n: the controlled source's duty */
    double *reading;   /* n: K (NaN without a controller) */
    double *setpoint;  /* n: K, the setpoint at each row (NaN without one, or while a schedule
                          has the heater off) */
    const tp_schedule *schedule; /* the schedule the run followed (borrowed), NULL: none; the
                          CSV then has a setpoint_C column */
    double *surface;   /* n: working-surface estimate, K (NaN for the raw form); gridded: the
                          map's area-weighted mean */
    double *energy;    /* n x TP_N_QUAD, J */
    int failed;        /* an allocation failed while recording */
    /* Gridded plates only (NULL otherwise). */
    double *surface_min, *surface_max; /* n: coldest and hottest cell of the map, K */
    double *surface_dev; /* n: largest |map - map_ref| over the cells, K (NaN without map_ref) */
    double *map;       /* nx * ny: the map at the last row */
    double *map_prev;  /* nx * ny: the map at the row before */
    const double *map_ref; /* reference map (the holding point), borrowed; NULL: none */
    double cross_level;    /* K: keep the map when the reading first reaches this (NaN: none) */
    double cross_time;     /* s, interpolated between rows (NaN until it happens) */
    double *map_cross;     /* nx * ny: the map at cross_time, interpolated likewise */
    double *cell_cap;      /* n_layers * nx * ny: capacity of each cell, J/K (0: no cell) */
} tp_history;

/* Prepare an empty history for `net` (borrowed; must outlive the history). For a gridded
 * network set map_ref and cross_level afterwards, before the run, when they are wanted. */
tp_status tp_history_init(tp_history *h, const tp_network *net);

/* The tp_output_fn that records a sample; `user` is the tp_history. Stops the run (returns
 * nonzero) only when memory runs out (h->failed set). */
int tp_history_record(void *user, const tp_sample *s);

/* Free the rows. */
void tp_history_clear(tp_history *h);

/* Temperature of recorded column `col` at row `i`. */
double tp_history_temp(const tp_history *h, long i, int col);

/* Column of node `node` in the history, or -1 when it is not recorded. */
int tp_history_column(const tp_history *h, int node);

/* The name of column `col` as used in CSV headers (before "_C") and summaries: the node id,
 * or "<layer>_mean", "<layer>_min", "<layer>_max". Returns buf. */
const char *tp_history_label(const tp_history *h, int col, char *buf, size_t size);

#endif
