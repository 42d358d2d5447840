/* A warm-up run packaged for reuse: the steady states around it, the integration with its
 * history, the metrics and per-node peaks. */
#include "warmup.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "eval.h"
#include "series.h"

/* Per-node peak temperatures from the history (NaN for nodes not recorded). */
static double *node_peaks(const tp_history *h, const tp_network *net)
{
    double *peak = malloc((size_t)net->n_nodes * sizeof *peak);
    int i;
    if (!peak)
        return NULL;
    for (i = 0; i < net->n_nodes; i++) {
        int col = tp_history_column(h, i);
        peak[i] = col >= 0 ? tp_series_max(h->temps + col, h->n, h->n_out)
                  : net->nodes[i].capacity > 0 ? TP_UNSET : net->nodes[i].t0;
    }
    return peak;
}

/* The answers about the working-surface map of a gridded plate: the map at the holding point
 * (prepared before the run, as the history's reference), and after it the maps when the
 * reading reached the setpoint and at the end, their statistics, the time the whole surface is
 * ready, and each layer's peak. */
static tp_status grid_before(const tp_network *net, tp_warmup *w)
{
    size_t n = (size_t)net->grid->nx * (size_t)net->grid->ny;
    w->map_hold = w->has_hold ? malloc(n * sizeof *w->map_hold) : NULL;
    if (w->has_hold && !w->map_hold)
        return TP_ERR_NOMEM;
    if (w->map_hold) {
        tp_eval_surface_at(net, w->hold.temps, w->map_hold);
        w->history.map_ref = w->map_hold;
    }
    if (tp_network_holds(net))
        w->history.cross_level = net->control.setpoint;
    return TP_OK;
}

static tp_status grid_after(const tp_network *net, tp_warmup *w)
{
    const tp_net_grid *g = net->grid;
    const tp_history *h = &w->history;
    size_t n = (size_t)g->nx * (size_t)g->ny;
    int k;
    w->layer_peak = malloc((size_t)g->n_layers * sizeof *w->layer_peak);
    w->map_final = malloc(n * sizeof *w->map_final);
    if (!w->layer_peak || !w->map_final)
        return TP_ERR_NOMEM;
    for (k = 0; k < h->n_out; k++)
        if (h->out_kind[k] == TP_COL_MAX)
            w->layer_peak[h->out_layer[k]] = tp_series_max(h->temps + k, h->n, h->n_out);
    memcpy(w->map_final, h->map, n * sizeof *w->map_final);
    tp_surfacemap_compute(g, w->map_final, &w->stats_final);
    if (isfinite(h->cross_time)) {
        w->map_setpoint = malloc(n * sizeof *w->map_setpoint);
        if (!w->map_setpoint)
            return TP_ERR_NOMEM;
        memcpy(w->map_setpoint, h->map_cross, n * sizeof *w->map_setpoint);
        tp_surfacemap_compute(g, w->map_setpoint, &w->stats_setpoint);
    }
    if (w->map_hold) {
        tp_surfacemap_compute(g, w->map_hold, &w->stats_hold);
        w->t_all_ready =
            tp_series_settle_time(h->t, h->surface_dev, h->n, 1, 0.0, TP_SURFACEMAP_READY_BAND);
    }
    return TP_OK;
}

tp_status tp_warmup_run(const tp_network *net, const tp_run *run, tp_warmup *w, tp_diag *d)
{
    return tp_warmup_run_schedule(net, run, NULL, w, d);
}

tp_status tp_warmup_run_schedule(const tp_network *net, const tp_run *run,
                                 const tp_schedule *schedule, tp_warmup *w, tp_diag *d)
{
    tp_integrate_opts o;
    tp_status st;
    tp_diag quiet;
    memset(w, 0, sizeof *w);
    w->t_all_ready = TP_UNSET;
    tp_surfacemap_empty(&w->stats_hold);
    tp_surfacemap_empty(&w->stats_setpoint);
    tp_surfacemap_empty(&w->stats_final);
    st = tp_history_init(&w->history, net);
    if (st != TP_OK)
        return st;
    /* The steady states frame the metrics; failing to find them is not an error here (the
     * summary says why), so their messages go to a silent sink. */
    tp_diag_init(&quiet, NULL);
    w->has_full = tp_steady_full(net, 1.0, &w->full, &quiet) == TP_OK;
    if (net->has_control && w->has_full)
        w->full.reading = w->full.temps[net->control.sensor] + net->control.reading.offset;
    /* The holding point starts from the full-power state just found (not solved twice). */
    if (tp_network_holds(net) && w->has_full)
        w->has_hold = tp_steady_hold_given(net, net->control.setpoint, &w->full, &w->hold,
                                           &quiet) == TP_OK;
    if (net->grid && (st = grid_before(net, w)) != TP_OK)
        return st;
    tp_integrate_defaults(run, &o);
    o.schedule = schedule;
    w->history.schedule = schedule;
    o.out = tp_history_record;
    o.user = &w->history;
    st = tp_integrate(net, &o, &w->stats, d);
    if (st == TP_OK && w->history.failed)
        st = TP_ERR_NOMEM;
    if (st == TP_OK)
        tp_metrics_compute(&w->history, net, w->has_hold ? &w->hold : NULL,
                           w->has_full ? &w->full : NULL, &w->metrics);
    if (st == TP_OK && !(w->peak = node_peaks(&w->history, net)))
        st = TP_ERR_NOMEM;
    if (st == TP_OK && net->grid)
        st = grid_after(net, w);
    return st;
}

void tp_warmup_clear(tp_warmup *w)
{
    tp_history_clear(&w->history);
    tp_steady_clear(&w->full);
    tp_steady_clear(&w->hold);
    free(w->peak);
    free(w->layer_peak);
    free(w->map_hold);
    free(w->map_setpoint);
    free(w->map_final);
    w->peak = w->layer_peak = w->map_hold = w->map_setpoint = w->map_final = NULL;
}

int tp_warmup_reading_column(const tp_network *net, const tp_history *h)
{
    if (!net->has_control || net->control.reading.thermistor || net->control.reading.offset != 0.0)
        return -1;
    return tp_history_column(h, net->control.sensor);
}

int tp_warmup_cautions(const tp_description *desc, const tp_network *net, const tp_warmup *w,
                       tp_caution out[TP_CAUTIONS_MAX])
{
    tp_caution_exposure ex = {w->metrics.surface_max, w->metrics.node_max,
                              w->metrics.current_peak, w->peak, w->layer_peak};
    if (w->history.surface_max)
        ex.surface_max = tp_series_max(w->history.surface_max, w->history.n, 1);
    return tp_caution_list(desc, net, &ex, out);
}
