/* A warm-up run packaged for reuse: the steady states around it, the integration with its
 * history, the metrics, per-node peaks, and the figure. */
#include "warmup.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "eval.h"
#include "plot.h"
#include "report.h"

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
    tp_map_stats_compute(g, w->map_final, &w->stats_final);
    if (isfinite(h->cross_time)) {
        w->map_setpoint = malloc(n * sizeof *w->map_setpoint);
        if (!w->map_setpoint)
            return TP_ERR_NOMEM;
        memcpy(w->map_setpoint, h->map_cross, n * sizeof *w->map_setpoint);
        tp_map_stats_compute(g, w->map_setpoint, &w->stats_setpoint);
    }
    if (w->map_hold) {
        tp_map_stats_compute(g, w->map_hold, &w->stats_hold);
        w->t_all_ready = tp_settle_time(h->t, h->surface_dev, h->n, 1, 0.0, TP_MAP_READY_BAND);
    }
    return TP_OK;
}

tp_status tp_warmup_run(const tp_network *net, const tp_run *run, tp_warmup *w, tp_diag *d)
{
    tp_integrate_opts o;
    tp_status st;
    tp_diag quiet;
    memset(w, 0, sizeof *w);
    w->t_all_ready = TP_UNSET;
    tp_map_stats_compute_empty(&w->stats_hold);
    tp_map_stats_compute_empty(&w->stats_setpoint);
    tp_map_stats_compute_empty(&w->stats_final);
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

tp_status tp_warmup_plot(const char *path, const tp_session *s, const tp_warmup *w, tp_diag *d)
{
    const tp_history *h = &w->history;
    const tp_network *net = s->net;
    long n = h->n, i;
    int k, ns = 0, np = 0;
    size_t cells = (size_t)n * ((size_t)h->n_out + 8);
    double *buf = malloc(cells * sizeof *buf), *minutes, *power, *reading, *surface;
    tp_plot_series *temp_series = calloc((size_t)h->n_out + 4, sizeof *temp_series);
    char(*labels)[TP_ID_MAX + 16] = calloc((size_t)h->n_out + 1, sizeof *labels);
    tp_plot_series power_series[2];
    tp_plot_hline setpoint = {"setpoint", w->metrics.setpoint - TP_KELVIN_0C};
    tp_plot_panel panels[2];
    tp_plot_chart chart;
    tp_plot_vline marks[TP_WARMUP_MARKS];
    char title[256], mark_text[TP_WARMUP_MARKS][TP_WARMUP_MARK_TEXT];
    int reading_col = tp_warmup_reading_column(net, h);
    tp_status st;
    if (!buf || !temp_series || !labels) {
        free(buf);
        free(temp_series);
        free(labels);
        return TP_ERR_NOMEM;
    }
    minutes = buf;
    power = buf + n;
    reading = buf + 2 * n;
    surface = buf + 3 * n;
    for (i = 0; i < n; i++) {
        minutes[i] = h->t[i] / 60.0;
        power[i] = 0.0;
        for (k = 0; k < net->n_sources; k++)
            power[i] += h->power[i * net->n_sources + k];
        reading[i] = h->reading[i] - TP_KELVIN_0C;
        surface[i] = h->surface[i] - TP_KELVIN_0C;
    }
    for (k = 0; k < h->n_out; k++) {
        double *col = buf + (size_t)(4 + k) * (size_t)n;
        /* A gridded plate draws each layer's mean and the other nodes. */
        if (h->out_kind[k] == TP_COL_MIN || h->out_kind[k] == TP_COL_MAX)
            continue;
        for (i = 0; i < n; i++)
            col[i] = tp_history_temp(h, i, k) - TP_KELVIN_0C;
        tp_history_label(h, k, labels[k], sizeof labels[k]);
        if (k == reading_col)
            strncat(labels[k], " = reading", sizeof labels[k] - strlen(labels[k]) - 1);
        temp_series[ns++] = (tp_plot_series){labels[k], minutes, col, (size_t)n, 0, 0, 0};
    }
    if (isfinite(w->metrics.surface_max))
        temp_series[ns++] = (tp_plot_series){h->surface_min ? "surface mean" : "surface (estimate)",
                                             minutes, surface, (size_t)n, 1, 0, 0};
    if (h->surface_min) {
        double *lo = buf + (size_t)(4 + h->n_out) * (size_t)n, *hi = lo + n;
        for (i = 0; i < n; i++) {
            lo[i] = h->surface_min[i] - TP_KELVIN_0C;
            hi[i] = h->surface_max[i] - TP_KELVIN_0C;
        }
        temp_series[ns++] = (tp_plot_series){"surface coldest cell", minutes, lo, (size_t)n, 2, 0,
                                             0};
        temp_series[ns++] = (tp_plot_series){"surface hottest cell", minutes, hi, (size_t)n, 2, 0,
                                             0};
    }
    if (net->has_control && reading_col < 0)
        temp_series[ns++] = (tp_plot_series){"reading", minutes, reading, (size_t)n, 2, 0, 0};
    power_series[np++] = (tp_plot_series){"heater power", minutes, power, (size_t)n, 0, 0, 0};
    if (net->has_control)
        power_series[np++] = (tp_plot_series){"duty", minutes, h->duty, (size_t)n, 1, 0, 1};
    panels[0] = (tp_plot_panel){"temperature (degC)", NULL, temp_series, (size_t)ns,
                                &setpoint, isfinite(setpoint.y) ? 1u : 0u, 2.0};
    panels[1] = (tp_plot_panel){"power (W)", net->has_control ? "duty" : NULL, power_series,
                                (size_t)np, NULL, 0, 1.0};
    snprintf(title, sizeof title, "%s", s->desc.title[0] ? s->desc.title : s->cli->file);
    chart = (tp_plot_chart){title, "time (min)", panels, 2, 0, 0};
    st = tp_plot_chart_write_marked(path, &chart, marks,
                                    tp_warmup_marks(&w->metrics, marks, mark_text), d);
    free(buf);
    free(temp_series);
    free(labels);
    return st;
}

int tp_warmup_reading_column(const tp_network *net, const tp_history *h)
{
    if (!net->has_control || net->control.reading.thermistor || net->control.reading.offset != 0.0)
        return -1;
    return tp_history_column(h, net->control.sensor);
}

size_t tp_warmup_marks(const tp_metrics *m, tp_plot_vline marks[TP_WARMUP_MARKS],
                       char text[TP_WARMUP_MARKS][TP_WARMUP_MARK_TEXT])
{
    /* The times the metrics report (docs/metrics.md), by their fields: a change of their
     * definitions moves the marks with them. */
    const struct {
        double t;
        const char *what;
    } times[TP_WARMUP_MARKS] = {{m->t_setpoint, "reading at setpoint"},
                                {m->t_surface_ready, "surface ready"}};
    char when[32];
    size_t k, n = 0;
    for (k = 0; k < TP_WARMUP_MARKS; k++) {
        if (!isfinite(times[k].t))
            continue;
        tp_fmt_duration(times[k].t, when, sizeof when);
        snprintf(text[n], TP_WARMUP_MARK_TEXT, "%s %s", times[k].what, when);
        marks[n] = (tp_plot_vline){text[n], times[k].t / 60.0};
        n++;
    }
    return n;
}
