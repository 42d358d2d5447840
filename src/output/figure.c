/* Figures of study records: the warm-up chart and the working-surface heat map. */
#include "figure.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "summary.h"
#include "surfacemap.h"
#include "units.h"

#define TP_FIGURE_WARMUP_LEGEND 6 /* temperature curves a warm-up chart of the default size
                                     legends without growing its axis far */
#define TP_FIGURE_WARMUP_TALL 1000 /* height of a warm-up chart with more, px or pt */
#define TP_FIGURE_GUARD_HEALTHY 3 /* healthy readings drawn: nominal, slowest, deepest dip */

tp_status tp_figure_warmup(const char *path, const char *title, const tp_network *net,
                           const tp_warmup *w, tp_diag *d)
{
    const tp_history *h = &w->history;
    long n = h->n, i;
    int k, ns = 0, np = 0;
    size_t cells = (size_t)n * ((size_t)h->n_out + 9);
    double *buf = malloc(cells * sizeof *buf), *minutes, *power, *reading, *surface;
    tp_plot_series *temp_series = calloc((size_t)h->n_out + 5, sizeof *temp_series);
    char(*labels)[TP_ID_MAX + 16] = calloc((size_t)h->n_out + 1, sizeof *labels);
    tp_plot_series power_series[2];
    tp_plot_hline setpoint = {"setpoint", w->metrics.setpoint - TP_KELVIN_0C};
    tp_plot_panel panels[2];
    tp_plot_chart chart;
    tp_plot_vline marks[TP_FIGURE_MARKS];
    char mark_text[TP_FIGURE_MARKS][TP_FIGURE_MARK_TEXT];
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
    if (h->schedule) {
        /* A scheduled run draws its setpoint as it moved (gaps where the heater was off)
         * instead of one line at the highest. */
        double *sp = buf + (size_t)(6 + h->n_out) * (size_t)n;
        for (i = 0; i < n; i++)
            sp[i] = h->setpoint[i] - TP_KELVIN_0C;
        temp_series[ns++] = (tp_plot_series){"setpoint (schedule)", minutes, sp, (size_t)n,
                                             1 | TP_PLOT_GAPS, 0, 0};
        setpoint.y = TP_UNSET;
    }
    power_series[np++] = (tp_plot_series){"heater power", minutes, power, (size_t)n, 0, 0, 0};
    if (net->has_control)
        power_series[np++] = (tp_plot_series){"duty", minutes, h->duty, (size_t)n, 1, 0, 1};
    panels[0] = (tp_plot_panel){"temperature (degC)", NULL, temp_series, (size_t)ns,
                                &setpoint, isfinite(setpoint.y) ? 1u : 0u, 2.0};
    panels[1] = (tp_plot_panel){"power (W)", net->has_control ? "duty" : NULL, power_series,
                                (size_t)np, NULL, 0, 1.0};
    /* Many temperatures make a tall legend: a taller figure gives it room beside the curves
     * instead of an axis grown far past the data to clear it. */
    chart = (tp_plot_chart){title, "time (min)", panels, 2, 0,
                            tp_figure_warmup_height((size_t)ns)};
    st = tp_plot_chart_write_marked(path, &chart, marks,
                                    tp_figure_warmup_marks(&w->metrics, marks, mark_text), d);
    free(buf);
    free(temp_series);
    free(labels);
    return st;
}

/* The segments' starts after the first, labelled "2 ramp": at most TP_PLOT_VLINES_MAX. */
static size_t segment_marks(const tp_schedule *p, tp_plot_vline *marks,
                            char text[][TP_FIGURE_MARK_TEXT])
{
    size_t n = 0;
    int k;
    for (k = 1; k < p->n && n < TP_PLOT_VLINES_MAX; k++) {
        snprintf(text[n], TP_FIGURE_MARK_TEXT, "%d %s", k + 1,
                 tp_schedule_kind_name(p->part[k].kind));
        marks[n] = (tp_plot_vline){text[n], p->part[k].t0 / 60.0};
        n++;
    }
    return n;
}

tp_status tp_figure_programme(const char *path, const char *title, const tp_warmup *w,
                              tp_diag *d)
{
    const tp_history *h = &w->history;
    long n = h->n, i;
    double *buf = malloc((size_t)(n > 0 ? n : 1) * 7 * sizeof *buf);
    double *minutes, *sp, *reading, *surface, *err_r, *err_s, *zero;
    int has_surface = n > 0 && isfinite(h->surface[0]);
    tp_plot_series top[3], low[3];
    tp_plot_panel panels[2];
    tp_plot_chart chart;
    tp_plot_vline marks[TP_PLOT_VLINES_MAX];
    char text[TP_PLOT_VLINES_MAX][TP_FIGURE_MARK_TEXT];
    size_t nt = 0, nl = 0;
    tp_status st;
    if (!buf)
        return TP_ERR_NOMEM;
    minutes = buf;
    sp = buf + n;
    reading = buf + 2 * n;
    surface = buf + 3 * n;
    err_r = buf + 4 * n;
    err_s = buf + 5 * n;
    zero = buf + 6 * n;
    for (i = 0; i < n; i++) {
        zero[i] = isfinite(h->setpoint[i]) ? 0.0 : (double)NAN;
        minutes[i] = h->t[i] / 60.0;
        sp[i] = h->setpoint[i] - TP_KELVIN_0C;
        reading[i] = h->reading[i] - TP_KELVIN_0C;
        surface[i] = h->surface[i] - TP_KELVIN_0C;
        err_r[i] = h->reading[i] - h->setpoint[i];
        err_s[i] = h->surface[i] - h->setpoint[i];
    }
    top[nt++] = (tp_plot_series){"setpoint (schedule)", minutes, sp, (size_t)n,
                                 1 | TP_PLOT_GAPS, 0, 0};
    top[nt++] = (tp_plot_series){"reading", minutes, reading, (size_t)n, 0, 0, 0};
    /* Below, each curve less the setpoint (the setpoint itself is the zero line), under the
     * same labels: a quantity keeps its colour and dash in both panels (plot.h). */
    low[nl++] = (tp_plot_series){"setpoint (schedule)", minutes, zero, (size_t)n,
                                 1 | TP_PLOT_GAPS, 0, 0};
    low[nl++] = (tp_plot_series){"reading", minutes, err_r, (size_t)n,
                                 TP_PLOT_GAPS, 0, 0};
    if (has_surface) {
        const char *name = h->surface_min ? "surface mean" : "surface (estimate)";
        top[nt++] = (tp_plot_series){name, minutes, surface, (size_t)n, 2, 0, 0};
        low[nl++] = (tp_plot_series){name, minutes, err_s, (size_t)n, 2 | TP_PLOT_GAPS, 0, 0};
    }
    panels[0] = (tp_plot_panel){"temperature (degC)", NULL, top, nt, NULL, 0, 2.0};
    panels[1] = (tp_plot_panel){"minus the setpoint (K)", NULL, low, nl, NULL, 0, 1.0};
    chart = (tp_plot_chart){title, "time (min)", panels, 2, 0, 0};
    st = tp_plot_chart_write_marked(path, &chart, marks,
                                    h->schedule ? segment_marks(h->schedule, marks, text) : 0, d);
    free(buf);
    return st;
}

int tp_figure_warmup_height(size_t curves)
{
    return curves > TP_FIGURE_WARMUP_LEGEND ? TP_FIGURE_WARMUP_TALL : 0;
}

size_t tp_figure_warmup_marks(const tp_metrics *m, tp_plot_vline marks[TP_FIGURE_MARKS],
                              char text[TP_FIGURE_MARKS][TP_FIGURE_MARK_TEXT])
{
    /* The times the metrics report (docs/metrics.md), by their fields: a change of their
     * definitions moves the marks with them. */
    const struct {
        double t;
        const char *what;
    } times[TP_FIGURE_MARKS] = {{m->t_setpoint, "reading at setpoint"},
                                {m->t_surface_ready, "surface ready"}};
    char when[32];
    size_t k, n = 0;
    for (k = 0; k < TP_FIGURE_MARKS; k++) {
        if (!isfinite(times[k].t))
            continue;
        tp_summary_duration(times[k].t, when, sizeof when);
        snprintf(text[n], TP_FIGURE_MARK_TEXT, "%s %s", times[k].what, when);
        marks[n] = (tp_plot_vline){text[n], times[k].t / 60.0};
        n++;
    }
    return n;
}

tp_status tp_figure_surface(const char *path, const tp_net_grid *g, const double *map,
                            const char *title, tp_diag *d)
{
    size_t n = (size_t)g->nx * (size_t)g->ny, k;
    double *z = malloc(n * sizeof *z), mx[3], my[3];
    const char *labels[3];
    size_t nm = 0;
    tp_surfacemap_stats st;
    tp_plot_map pm;
    tp_status rc;
    if (!z)
        return TP_ERR_NOMEM;
    for (k = 0; k < n; k++)
        z[k] = map[k] - TP_KELVIN_0C;
    tp_surfacemap_compute(g, map, &st);
    if (isfinite(g->sensor_x)) {
        mx[nm] = g->sensor_x * 1e3;
        my[nm] = g->sensor_y * 1e3;
        labels[nm++] = "sensor";
    }
    if (st.cells > 0) {
        mx[nm] = st.max_x * 1e3;
        my[nm] = st.max_y * 1e3;
        labels[nm++] = "hottest";
        mx[nm] = st.min_x * 1e3;
        my[nm] = st.min_y * 1e3;
        labels[nm++] = "coldest";
    }
    pm = (tp_plot_map){title, "x (mm)", "y (mm)", "working surface (degC)", z, (size_t)g->nx,
                       (size_t)g->ny, 0.0, g->width * 1e3, 0.0, g->depth * 1e3, 1, mx, my,
                       labels, nm, 0, 0, 0};
    rc = tp_plot_map_write(path, &pm, d);
    free(z);
    return rc;
}

tp_status tp_figure_size(const char *path, const char *title, const tp_size_result *r,
                         double within, tp_diag *d)
{
    size_t n = (size_t)r->n_curve, i;
    double *buf = malloc(2 * n * sizeof *buf);
    char worst[sizeof r->corners[0].name + 32], allowed[64], mark[64], within_text[32];
    tp_plot_series series[2];
    tp_plot_hline hline;
    tp_plot_panel panel;
    tp_plot_chart chart;
    tp_plot_vline answer;
    tp_status st;
    if (!buf)
        return TP_ERR_NOMEM;
    for (i = 0; i < n; i++) {
        buf[i] = r->curve_nominal[i] / 60.0;
        buf[n + i] = r->curve_worst[i] / 60.0;
    }
    snprintf(worst, sizeof worst, "slowest corner: %s", r->corners[r->worst].name);
    tp_summary_duration(within, within_text, sizeof within_text);
    snprintf(allowed, sizeof allowed, "allowed: %s", within_text);
    snprintf(mark, sizeof mark, "%s %.0f W", r->feasible ? "answer" : "largest considered",
             r->power);
    series[0] = (tp_plot_series){"nominal", r->curve_power, buf, n, 0, 0, 0};
    series[1] = (tp_plot_series){worst, r->curve_power, buf + n, n, 1, 0, 0};
    hline = (tp_plot_hline){allowed, within / 60.0};
    answer = (tp_plot_vline){mark, r->power};
    memset(&panel, 0, sizeof panel);
    panel.ylabel = "time to the target (min)";
    panel.series = series;
    panel.n_series = r->corners[r->worst].nominal ? 1 : 2;
    panel.hlines = &hline;
    panel.n_hlines = 1;
    memset(&chart, 0, sizeof chart);
    chart.title = title;
    chart.xlabel = "heater power at its reference temperature (W)";
    chart.panels = &panel;
    chart.n_panels = 1;
    st = tp_plot_chart_write_marked(path, &chart, &answer, 1, d);
    free(buf);
    return st;
}

/* ---- plot --------------------------------------------------------------------------------- */

/* Minutes and degC of a guard trace, the reading kept inside [lo, hi] so a pinned sensor does not
 * flatten the chart. */
static int guard_series(const tp_guard_trace *tr, double lo, double hi, double *x, double *y)
{
    long i;
    int clipped = 0;
    for (i = 0; i < tr->n; i++) {
        double v = tr->reading[i] - TP_KELVIN_0C;
        x[i] = tr->t[i] / 60.0;
        if (v < lo || v > hi)
            clipped = 1;
        y[i] = v < lo ? lo : v > hi ? hi : v;
    }
    return clipped;
}

tp_status tp_figure_guard(const char *path, const char *title_of_case, const tp_guard_study *st,
                          tp_diag *d)
{
    tp_plot_series healthy[TP_FIGURE_GUARD_HEALTHY], faults[2][TP_FAULT_COUNT];
    tp_plot_panel panels[3];
    tp_plot_hline lines[4];
    tp_plot_chart chart;
    char title[256], labels[TP_FAULT_COUNT][96];
    int pick[TP_FIGURE_GUARD_HEALTHY] = {0, 0, 0}, np = 1, nh = 0, nl = 0, c, f, from;
    size_t nf[2] = {0, 0}, total = 0, off = 0;
    double *buf, lo, hi, room = st->corners[0].room - TP_KELVIN_0C;
    tp_status rs;
    /* The nominal corner, the slowest to the setpoint, and the deepest dip. */
    {
        int slow = 0, deep = 0;
        for (c = 1; c < st->n_corners; c++) {
            const tp_guard_corner *a = &st->corners[c], *b = &st->corners[slow];
            if (isfinite(b->t_setpoint) &&
                (!isfinite(a->t_setpoint) || a->t_setpoint > b->t_setpoint))
                slow = c;
            if (a->dip > st->corners[deep].dip)
                deep = c;
        }
        if (slow != 0)
            pick[np++] = slow;
        if (deep != 0 && deep != slow)
            pick[np++] = deep;
    }
    for (c = 0; c < st->n_corners; c++)
        if (st->corners[c].room - TP_KELVIN_0C < room)
            room = st->corners[c].room - TP_KELVIN_0C;
    lo = room - 10.0;
    hi = (isfinite(st->used.ceiling) ? st->used.ceiling : st->setpoint) - TP_KELVIN_0C + 30.0;
    for (c = 0; c < np; c++)
        total += (size_t)st->corners[pick[c]].trace.n;
    for (f = 0; f < TP_FAULT_COUNT; f++)
        for (from = 0; from < 2; from++)
            total += (size_t)st->faults[f][from].trace.n;
    buf = malloc(2 * (total > 0 ? total : 1) * sizeof *buf);
    if (!buf)
        return TP_ERR_NOMEM;
    for (c = 0; c < np; c++) {
        const tp_guard_trace *tr = &st->corners[pick[c]].trace;
        guard_series(tr, lo, hi, buf + off, buf + off + (size_t)tr->n);
        healthy[nh++] = (tp_plot_series){st->corners[pick[c]].name, buf + off,
                                         buf + off + (size_t)tr->n, (size_t)tr->n, c, 0, 0};
        off += 2 * (size_t)tr->n;
    }
    /* A fault has one label in both panels, so that it keeps its colour (the chart gives a
     * label one colour): "(clipped)" when either of its runs is. */
    for (f = 0; f < TP_FAULT_COUNT; f++) {
        int clipped = 0;
        size_t at[2] = {off, off};
        for (from = 0; from < 2; from++) {
            const tp_guard_trace *tr = &st->faults[f][from].trace;
            at[from] = off;
            if (tr->n == 0)
                continue;
            clipped |= guard_series(tr, lo, hi, buf + off, buf + off + (size_t)tr->n);
            off += 2 * (size_t)tr->n;
        }
        snprintf(labels[f], sizeof labels[0], "%s%s", tp_guard_fault_phrase(f),
                 clipped ? " (clipped)" : "");
        for (from = 0; from < 2; from++) {
            const tp_guard_trace *tr = &st->faults[f][from].trace;
            if (tr->n > 0)
                faults[from][nf[from]++] =
                    (tp_plot_series){labels[f], buf + at[from], buf + at[from] + (size_t)tr->n,
                                     (size_t)tr->n, 0, 0, 0};
        }
    }
    lines[nl++] = (tp_plot_hline){"setpoint", st->setpoint - TP_KELVIN_0C};
    if (isfinite(st->used.ceiling))
        lines[nl++] = (tp_plot_hline){"ceiling", st->used.ceiling - TP_KELVIN_0C};
    /* The end of the rise check only when it stands clear of the other lines (labels
     * overlap within a few kelvin). */
    if (isfinite(st->used.approach) && st->used.approach >= 3.0 &&
        !(fabs(st->used.approach - st->used.hold_band) < 3.0))
        lines[nl++] = (tp_plot_hline){"rise check ends", st->setpoint - st->used.approach -
                                                              TP_KELVIN_0C};
    if (isfinite(st->used.hold_band))
        lines[nl++] = (tp_plot_hline){"hold band", st->setpoint - st->used.hold_band -
                                                        TP_KELVIN_0C};
    panels[0] = (tp_plot_panel){"healthy reading (degC)", NULL, healthy, (size_t)nh, lines,
                                (size_t)nl, 1.0};
    panels[1] = (tp_plot_panel){"faults from cold (degC)", NULL, faults[0], nf[0], lines,
                                (size_t)nl, 1.0};
    panels[2] = (tp_plot_panel){"faults from hold (degC)", NULL, faults[1], nf[1], lines,
                                (size_t)nl, 1.0};
    snprintf(title, sizeof title, "guard: %s", title_of_case);
    chart = (tp_plot_chart){title, "time (min)", panels, 3, 0, 1000};
    rs = tp_plot_chart_write(path, &chart, d);
    free(buf);
    return rs;
}

tp_status tp_figure_losses(const char *path, const char *title, const tp_steadyreport *r,
                           tp_diag *d)
{
    const char *labels[TP_PATH_COUNT], *texts[TP_PATH_COUNT];
    char text[TP_PATH_COUNT][48];
    double values[TP_PATH_COUNT];
    size_t n = 0;
    int p;
    tp_plot_bars bars;
    for (p = TP_PATH_INTERNAL + 1; p < TP_PATH_COUNT; p++) {
        if (p == TP_PATH_WALLS || fabs(r->flows.path[p]) < 1e-12)
            continue;
        labels[n] = tp_network_loss_path_name((tp_loss_path)p);
        values[n] = r->flows.path[p];
        snprintf(text[n], sizeof text[n], "%.2f W (%.1f %%)", r->flows.path[p],
                 r->plate_loss != 0 ? 100.0 * r->flows.path[p] / r->plate_loss : 0.0);
        texts[n] = text[n];
        n++;
    }
    bars = (tp_plot_bars){title, "power (W)", labels, texts, values, n, 0, 0};
    return tp_plot_bars_write(path, &bars, d);
}
