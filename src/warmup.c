/* A warm-up run packaged for reuse: the steady states around it, the integration with its
 * history, the metrics, per-node peaks, and the figure. */
#include "warmup.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

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
        peak[i] = col >= 0 ? tp_series_max(h->temps + col, h->n, h->n_out) : net->nodes[i].t0;
    }
    return peak;
}

tp_status tp_warmup_run(tp_network *net, tp_warmup *w, tp_diag *d)
{
    tp_integrate_opts o;
    tp_status st;
    tp_diag quiet;
    memset(w, 0, sizeof *w);
    st = tp_history_init(&w->history, net);
    if (st != TP_OK)
        return st;
    /* The steady states frame the metrics; failing to find them is not an error here (the
     * summary says why), so their messages go to a silent sink. */
    tp_diag_init(&quiet, NULL);
    w->has_full = tp_steady_full(net, 1.0, &w->full, &quiet) == TP_OK;
    if (net->has_control && isfinite(net->control.setpoint) &&
        (net->control.mode == TP_MODE_ONOFF || net->control.mode == TP_MODE_PID))
        w->has_hold = tp_steady_hold(net, &w->hold, &quiet) == TP_OK;
    if (net->has_control && w->has_full)
        w->full.reading = w->full.temps[net->control.sensor] + net->control.reading.offset;
    tp_integrate_defaults(net, &o);
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
    return st;
}

void tp_warmup_clear(tp_warmup *w)
{
    tp_history_clear(&w->history);
    tp_steady_clear(&w->full);
    tp_steady_clear(&w->hold);
    free(w->peak);
    w->peak = NULL;
}

tp_status tp_warmup_plot(const char *path, const tp_session *s, const tp_warmup *w, tp_diag *d)
{
    const tp_history *h = &w->history;
    const tp_network *net = s->net;
    long n = h->n, i;
    int k, ns = 0, np = 0;
    size_t cells = (size_t)n * ((size_t)h->n_out + 6);
    double *buf = malloc(cells * sizeof *buf), *minutes, *power, *reading, *surface;
    tp_plot_series *temp_series = calloc((size_t)h->n_out + 2, sizeof *temp_series);
    tp_plot_series power_series[2];
    tp_plot_hline setpoint = {"setpoint", w->metrics.setpoint - TP_KELVIN_0C};
    tp_plot_panel panels[2];
    tp_plot_chart chart;
    char title[256];
    tp_status st;
    if (!buf || !temp_series) {
        free(buf);
        free(temp_series);
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
        for (i = 0; i < n; i++)
            col[i] = tp_history_temp(h, i, k) - TP_KELVIN_0C;
        temp_series[ns++] = (tp_plot_series){net->nodes[h->out_nodes[k]].id, minutes, col,
                                             (size_t)n, 0, 0, 0};
    }
    if (isfinite(w->metrics.surface_max))
        temp_series[ns++] = (tp_plot_series){"surface (estimate)", minutes, surface, (size_t)n,
                                             1, 0, 0};
    if (net->has_control)
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
    st = tp_plot_chart_write(path, &chart, d);
    free(buf);
    free(temp_series);
    return st;
}

