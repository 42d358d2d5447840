/* The history of a run: rows appended at each output time, arrays grown by doubling. */
#include "history.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "array.h"

/* Columns of a gridded network: mean, min and max of each layer, then the other nodes with
 * capacity (sensor, enclosure air and walls) in declaration order. */
static tp_status grid_columns(tp_history *h, const tp_network *net)
{
    const tp_net_grid *g = net->grid;
    int n = 3 * g->n_layers + net->n_nodes, i, k = 0, l, cells = g->nx * g->ny * g->n_layers;
    char *in_grid = calloc((size_t)net->n_nodes + 1, 1);
    h->out_nodes = malloc((size_t)n * sizeof *h->out_nodes);
    h->out_kind = malloc((size_t)n * sizeof *h->out_kind);
    h->out_layer = malloc((size_t)n * sizeof *h->out_layer);
    h->map = malloc((size_t)(g->nx * g->ny) * sizeof *h->map);
    h->map_prev = malloc((size_t)(g->nx * g->ny) * sizeof *h->map_prev);
    h->map_cross = malloc((size_t)(g->nx * g->ny) * sizeof *h->map_cross);
    h->cell_cap = calloc((size_t)cells, sizeof *h->cell_cap);
    if (!in_grid || !h->out_nodes || !h->out_kind || !h->out_layer || !h->map || !h->map_prev ||
        !h->map_cross || !h->cell_cap) {
        free(in_grid);
        return TP_ERR_NOMEM;
    }
    for (i = 0; i < cells; i++)
        if (g->cell[i] >= 0)
            h->cell_cap[i] = net->nodes[g->cell[i]].capacity;
    for (l = 0; l < g->n_layers; l++) {
        static const tp_col_kind kinds[3] = {TP_COL_MEAN, TP_COL_MIN, TP_COL_MAX};
        for (i = 0; i < 3; i++) {
            h->out_nodes[k] = -1;
            h->out_kind[k] = kinds[i];
            h->out_layer[k++] = l;
        }
    }
    for (i = 0; i < cells; i++)
        if (g->cell[i] >= 0)
            in_grid[g->cell[i]] = 1;
    for (i = 0; i < net->n_nodes; i++) {
        if (!net->nodes[i].output || in_grid[i])
            continue;
        h->out_nodes[k] = i;
        h->out_kind[k] = TP_COL_NODE;
        h->out_layer[k++] = -1;
    }
    free(in_grid);
    h->n_out = k;
    return TP_OK;
}

tp_status tp_history_init(tp_history *h, const tp_network *net)
{
    int i, k = 0;
    memset(h, 0, sizeof *h);
    h->net = net;
    h->cross_level = TP_UNSET;
    h->cross_time = TP_UNSET;
    if (net->grid)
        return grid_columns(h, net);
    h->out_nodes = malloc((size_t)(net->n_nodes > 0 ? net->n_nodes : 1) * sizeof *h->out_nodes);
    h->out_kind = malloc((size_t)(net->n_nodes > 0 ? net->n_nodes : 1) * sizeof *h->out_kind);
    h->out_layer = malloc((size_t)(net->n_nodes > 0 ? net->n_nodes : 1) * sizeof *h->out_layer);
    if (!h->out_nodes || !h->out_kind || !h->out_layer)
        return TP_ERR_NOMEM;
    for (i = 0; i < net->n_nodes; i++)
        if (net->nodes[i].output) {
            h->out_kind[k] = TP_COL_NODE;
            h->out_layer[k] = -1;
            h->out_nodes[k++] = i;
        }
    h->n_out = k;
    return TP_OK;
}

void tp_history_clear(tp_history *h)
{
    free(h->out_nodes);
    free(h->out_kind);
    free(h->out_layer);
    free(h->t);
    free(h->temps);
    free(h->power);
    free(h->wire);
    free(h->current);
    free(h->duty);
    free(h->reading);
    free(h->setpoint);
    free(h->surface);
    free(h->energy);
    free(h->surface_min);
    free(h->surface_max);
    free(h->surface_dev);
    free(h->map);
    free(h->map_prev);
    free(h->map_cross);
    free(h->cell_cap);
    memset(h, 0, sizeof *h);
}

/* Every column to `cap` rows (doubling from 1024): rows of one value, of the outputs, of the
 * sources and of the energy totals. */
static int grow(tp_history *h)
{
    long cap = h->cap ? h->cap * 2 : 1024;
    size_t rows = (size_t)cap, d = sizeof(double);
    size_t outs = (size_t)(h->n_out > 0 ? h->n_out : 1);
    size_t ns = (size_t)(h->net->n_sources > 0 ? h->net->n_sources : 1);
    if (tp_array_resize(&h->t, rows, d) || tp_array_resize(&h->temps, rows * outs, d) ||
        tp_array_resize(&h->power, rows * ns, d) || tp_array_resize(&h->wire, rows, d) ||
        tp_array_resize(&h->current, rows, d) || tp_array_resize(&h->duty, rows, d) ||
        tp_array_resize(&h->reading, rows, d) || tp_array_resize(&h->surface, rows, d) ||
        tp_array_resize(&h->setpoint, rows, d) ||
        tp_array_resize(&h->energy, rows * TP_N_QUAD, d))
        return -1;
    if (h->net->grid && (tp_array_resize(&h->surface_min, rows, d) ||
                         tp_array_resize(&h->surface_max, rows, d) ||
                         tp_array_resize(&h->surface_dev, rows, d)))
        return -1;
    h->cap = cap;
    return 0;
}

/* Per-layer statistics into the row's statistic columns. */
static void layer_stats(tp_history *h, long i, const double *temps)
{
    const tp_net_grid *g = h->net->grid;
    int l, c, n = g->nx * g->ny, k;
    for (l = 0; l < g->n_layers; l++) {
        double sum = 0.0, lo = HUGE_VAL, hi = -HUGE_VAL;
        const int *cell = g->cell + (size_t)l * (size_t)n;
        const double *cap = h->cell_cap + (size_t)l * (size_t)n;
        for (c = 0; c < n; c++) {
            double t;
            if (cell[c] < 0)
                continue;
            t = temps[cell[c]];
            sum += cap[c] * t;
            lo = t < lo ? t : lo;
            hi = t > hi ? t : hi;
        }
        for (k = 0; k < h->n_out; k++) {
            double v;
            if (h->out_layer[k] != l)
                continue;
            v = h->out_kind[k] == TP_COL_MEAN ? sum / g->layer_capacity[l]
                : h->out_kind[k] == TP_COL_MIN ? lo : hi;
            h->temps[i * h->n_out + k] = v;
        }
    }
}

/* The surface map of the row: statistics, deviation from the reference, and the snapshot when
 * the reading first reaches cross_level. */
static void surface_row(tp_history *h, long i, tp_eval *ev, const double *temps)
{
    const tp_net_grid *g = h->net->grid;
    int c, n = g->nx * g->ny;
    double lo = HUGE_VAL, hi = -HUGE_VAL, dev = h->map_ref ? 0.0 : TP_UNSET, *swap;
    swap = h->map_prev;
    h->map_prev = h->map;
    h->map = swap;
    h->surface[i] = tp_eval_surface_map(ev, temps, h->map);
    for (c = 0; c < n; c++) {
        double v = h->map[c];
        if (!isfinite(v))
            continue;
        lo = v < lo ? v : lo;
        hi = v > hi ? v : hi;
        if (h->map_ref && isfinite(h->map_ref[c]) && fabs(v - h->map_ref[c]) > dev)
            dev = fabs(v - h->map_ref[c]);
    }
    h->surface_min[i] = lo;
    h->surface_max[i] = hi;
    h->surface_dev[i] = dev;
    if (isfinite(h->cross_level) && !isfinite(h->cross_time) && h->reading[i] >= h->cross_level) {
        /* The same interpolation as tp_series_first_rise, so the map matches the reported time. */
        double f = 0.0;
        if (i > 0) {
            double a = h->reading[i - 1], b = h->reading[i];
            f = (h->cross_level - a) / (b - a);
            h->cross_time = h->t[i - 1] + (h->t[i] - h->t[i - 1]) * f;
        } else {
            h->cross_time = h->t[i];
        }
        for (c = 0; c < n; c++)
            h->map_cross[c] = i > 0 ? h->map_prev[c] + f * (h->map[c] - h->map_prev[c])
                                    : h->map[c];
    }
}

int tp_history_record(void *user, const tp_sample *s)
{
    tp_history *h = user;
    const tp_network *net = h->net;
    long i = h->n;
    int k;
    if (i == h->cap && grow(h) != 0) {
        h->failed = 1;
        return 1;
    }
    h->t[i] = s->t;
    for (k = 0; k < h->n_out; k++)
        if (h->out_nodes[k] >= 0)
            h->temps[i * h->n_out + k] = s->temps[h->out_nodes[k]];
    if (net->grid)
        layer_stats(h, i, s->temps);
    tp_eval_sample_sources(s->eval, s->temps, h->power + i * net->n_sources, &h->wire[i],
                           &h->current[i]);
    h->duty[i] = s->duty;
    h->reading[i] = s->reading;
    h->setpoint[i] = s->setpoint;
    if (net->grid)
        surface_row(h, i, s->eval, s->temps);
    else
        h->surface[i] = tp_eval_surface(s->eval, s->temps);
    for (k = 0; k < TP_N_QUAD; k++)
        h->energy[i * TP_N_QUAD + k] = s->y[net->n_free + k];
    h->n++;
    return 0;
}

double tp_history_temp(const tp_history *h, long i, int col)
{
    return h->temps[i * h->n_out + col];
}

int tp_history_column(const tp_history *h, int node)
{
    int k;
    for (k = 0; k < h->n_out; k++)
        if (h->out_nodes[k] == node)
            return k;
    return -1;
}

const char *tp_history_label(const tp_history *h, int col, char *buf, size_t size)
{
    static const char *const suffix[] = {"", "_mean", "_min", "_max"};
    if (h->out_nodes[col] >= 0)
        snprintf(buf, size, "%s", h->net->nodes[h->out_nodes[col]].id);
    else
        snprintf(buf, size, "%s%s", h->net->grid->layer_id[h->out_layer[col]],
                 suffix[h->out_kind[col]]);
    return buf;
}
