/* tepid warmup: the transient from the initial state, its metrics (docs/metrics.md), the
 * history as CSV, the metrics as JSON, and the figure. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "commands.h"
#include "csv.h"
#include "history.h"
#include "integrate.h"
#include "json.h"
#include "report.h"
#include "results.h"
#include "session.h"
#include "steady.h"
#include "warmup.h"

static const tp_opt warmup_opts[] = {
    {"csv", 0, 1, 0, 1, "FILE", "write the history as CSV (- for standard output)"},
    {"json", 0, 1, 0, 1, "FILE", "write the metrics as JSON (- for standard output)"},
    {"plot", 0, 1, 0, TP_OUT_FIGURE, "FILE", "draw temperatures, power and duty (.png, .svg or .pdf)"},
    {NULL, 0, 0, 0, 0, NULL, NULL},
};

static void exposure(const tp_warmup *w, const double *peak, tp_exposure *ex)
{
    ex->surface_max = w->metrics.surface_max;
    ex->node_max = w->metrics.node_max;
    ex->current_max = w->metrics.current_peak;
    ex->node_peak = peak;
}

static void print_time(FILE *fp, const char *what, double t)
{
    char buf[64];
    tp_fmt_duration(t, buf, sizeof buf);
    fprintf(fp, "  %-34s %s\n", what, isfinite(t) ? buf : "not in the simulated time");
}

static void summary(FILE *fp, const tp_session *s, const tp_warmup *w, const double *peak)
{
    const tp_network *net = s->net;
    const tp_history *h = &w->history;
    const tp_metrics *m = &w->metrics;
    char buf[64];
    int k;
    tp_exposure ex;
    fprintf(fp, "tepid warmup %s%s%s\n  ", s->cli->file, s->desc.title[0] ? ": " : "",
            s->desc.title);
    tp_report_network(fp, net);
    tp_fmt_duration(m->duration, buf, sizeof buf);
    fprintf(fp, "  simulated %s: %ld steps, %ld right-hand sides, %ld Jacobians, %ld restarts "
                "(%s)\n\n", buf, w->stats.steps, w->stats.rhs_evals, w->stats.jac_evals,
            w->stats.restarts, w->stats.sparse ? "KLU" : "dense LU");
    if (isfinite(m->setpoint)) {
        fprintf(fp, "  setpoint %.1f degC\n", m->setpoint - TP_KELVIN_0C);
        print_time(fp, "reading reaches the setpoint", m->t_setpoint);
        if (m->not_reached) {
            fprintf(fp, "  ! the setpoint is not reached: %s", m->not_reached);
            if (isfinite(m->highest_reachable))
                fprintf(fp, " (highest reachable reading %.1f degC)",
                        m->highest_reachable - TP_KELVIN_0C);
            fputc('\n', fp);
        }
        if (isfinite(m->surface_hold)) {
            char what[80];
            snprintf(what, sizeof what, "surface ready (within %.0f K of %.1f)", TP_READY_BAND,
                     m->surface_hold - TP_KELVIN_0C);
            print_time(fp, what, m->t_surface_ready);
            fprintf(fp, "  %-34s %.2f K (reading) / %.2f K (surface)\n", "overshoot",
                    m->overshoot_reading, m->overshoot_surface);
            fprintf(fp, "  %-34s %+.2f K (reading minus surface at hold)\n", "steady offset",
                    m->steady_offset);
            if (isfinite(m->lag))
                fprintf(fp, "  %-34s %.1f s (the surface %s the reading at %.1f %% of the "
                            "rise)\n", "lag", fabs(m->lag), m->lag >= 0 ? "behind" : "ahead of",
                        100.0 * TP_LAG_FRACTION);
            if (isfinite(m->energy_to_ready))
                fprintf(fp, "  %-34s %.1f kJ (%.2f Wh)\n", "energy until ready",
                        m->energy_to_ready * 1e-3, m->energy_to_ready / 3600.0);
        }
        if (isfinite(m->hold_power))
            fprintf(fp, "  %-34s %.1f W at duty %.3f\n", "holding power", m->hold_power,
                    m->hold_duty);
    } else if (net->has_control) {
        fprintf(fp, "  controller mode %s (no setpoint)\n", tp_mode_name(net->control.mode));
    }
    fprintf(fp, "  %-34s mean %.1f W, peak %.1f W; duty mean %.3f, peak %.3f\n", "power",
            m->power_mean, m->power_peak, m->duty_mean, m->duty_peak);
    if (isfinite(m->current_peak))
        fprintf(fp, "  %-34s %.2f A (on-current)\n", "peak current", m->current_peak);
    if (m->wire_mean > 0)
        fprintf(fp, "  %-34s %.2f W mean\n", "wiring loss", m->wire_mean);
    if (isfinite(m->air_final))
        fprintf(fp, "  %-34s %.1f degC\n", "enclosure air at the end", m->air_final - TP_KELVIN_0C);
    fprintf(fp, "\n  %-16s %10s %10s\n", "node", "final", "peak");
    for (k = 0; k < h->n_out; k++)
        fprintf(fp, "  %-16s %10.2f %10.2f degC\n", net->nodes[h->out_nodes[k]].id,
                tp_history_temp(h, h->n - 1, k) - TP_KELVIN_0C,
                peak[h->out_nodes[k]] - TP_KELVIN_0C);
    if (isfinite(m->surface_max))
        fprintf(fp, "  %-16s %10.2f %10.2f degC (working surface estimate)\n", "surface",
                h->surface[h->n - 1] - TP_KELVIN_0C, m->surface_max - TP_KELVIN_0C);
    exposure(w, peak, &ex);
    tp_report_cautions(fp, &s->desc, net, &ex);
}

static void put_node_map(cJSON *obj, const char *name, const tp_history *h,
                         const tp_network *net, const double *values_by_col)
{
    cJSON *o = cJSON_AddObjectToObject(obj, name);
    int k;
    for (k = 0; o && k < h->n_out; k++)
        tp_json_number(o, net->nodes[h->out_nodes[k]].id, values_by_col[k] - TP_KELVIN_0C);
}

static tp_status write_json(const char *path, const tp_session *s, const tp_warmup *w,
                            const double *peak, tp_diag *d)
{
    const tp_metrics *m = &w->metrics;
    const tp_history *h = &w->history;
    cJSON *root = cJSON_CreateObject(), *stats, *cautions;
    double *col = malloc(((size_t)h->n_out + 1) * sizeof *col);
    char lines[TP_CAUTIONS_MAX][TP_CAUTION_MAX];
    tp_exposure ex;
    tp_status st;
    int k, nc;
    if (!root || !col) {
        cJSON_Delete(root);
        free(col);
        return TP_ERR_NOMEM;
    }
    tp_json_number(root, "setpoint_C", m->setpoint - TP_KELVIN_0C);
    cJSON_AddBoolToObject(root, "reached", isfinite(m->t_setpoint));
    tp_json_number(root, "time_to_setpoint_s", m->t_setpoint);
    tp_json_number(root, "surface_hold_C", m->surface_hold - TP_KELVIN_0C);
    tp_json_number(root, "time_surface_ready_s", m->t_surface_ready);
    tp_json_number(root, "ready_band_K", TP_READY_BAND);
    tp_json_number(root, "overshoot_reading_K", m->overshoot_reading);
    tp_json_number(root, "overshoot_surface_K", m->overshoot_surface);
    tp_json_number(root, "steady_offset_K", m->steady_offset);
    tp_json_number(root, "lag_s", m->lag);
    tp_json_number(root, "lag_fraction", TP_LAG_FRACTION);
    tp_json_number(root, "energy_to_ready_J", m->energy_to_ready);
    tp_json_number(root, "power_mean_W", m->power_mean);
    tp_json_number(root, "power_peak_W", m->power_peak);
    tp_json_number(root, "duty_mean", m->duty_mean);
    tp_json_number(root, "duty_peak", m->duty_peak);
    tp_json_number(root, "wiring_loss_mean_W", m->wire_mean);
    tp_json_number(root, "current_peak_A", m->current_peak);
    tp_json_number(root, "holding_power_W", m->hold_power);
    tp_json_number(root, "holding_duty", m->hold_duty);
    tp_json_number(root, "highest_reachable_C", m->highest_reachable - TP_KELVIN_0C);
    tp_json_number(root, "air_final_C", m->air_final - TP_KELVIN_0C);
    tp_json_number(root, "surface_max_C", m->surface_max - TP_KELVIN_0C);
    if (m->not_reached)
        cJSON_AddStringToObject(root, "not_reached", m->not_reached);
    else
        cJSON_AddNullToObject(root, "not_reached");
    for (k = 0; k < h->n_out; k++)
        col[k] = tp_history_temp(h, h->n - 1, k);
    put_node_map(root, "final_C", h, s->net, col);
    for (k = 0; k < h->n_out; k++)
        col[k] = peak[h->out_nodes[k]];
    put_node_map(root, "max_C", h, s->net, col);
    tp_json_number(root, "duration_s", m->duration);
    stats = cJSON_AddObjectToObject(root, "solver");
    if (stats) {
        tp_json_number(stats, "steps", (double)w->stats.steps);
        tp_json_number(stats, "rhs_evals", (double)w->stats.rhs_evals);
        tp_json_number(stats, "jac_evals", (double)w->stats.jac_evals);
        tp_json_number(stats, "restarts", (double)w->stats.restarts);
        cJSON_AddStringToObject(stats, "linear_solver", w->stats.sparse ? "klu" : "dense");
    }
    exposure(w, peak, &ex);
    nc = tp_report_caution_lines(&s->desc, s->net, &ex, lines);
    cautions = cJSON_AddArrayToObject(root, "cautions");
    for (k = 0; cautions && k < nc; k++)
        cJSON_AddItemToArray(cautions, cJSON_CreateString(lines[k]));
    st = tp_json_write(path, root, d);
    cJSON_Delete(root);
    free(col);
    return st;
}

static tp_status run_warmup(const tp_cli *cli, tp_diag *d)
{
    tp_session s;
    tp_warmup w;
    tp_status rc = tp_session_open(&s, cli, d);
    if (rc != TP_OK)
        return rc;
    rc = tp_warmup_run(s.net, &w, d);
    if (rc == TP_OK && tp_cli_get(cli, "csv"))
        rc = tp_csv_write_history(tp_cli_get(cli, "csv"), &w.history, d);
    if (rc == TP_OK && tp_cli_get(cli, "json"))
        rc = write_json(tp_cli_get(cli, "json"), &s, &w, w.peak, d);
    if (rc == TP_OK && tp_cli_get(cli, "plot"))
        rc = tp_warmup_plot(tp_cli_get(cli, "plot"), &s, &w, d);
    if (rc == TP_OK && s.text)
        summary(s.text, &s, &w, w.peak);
    tp_warmup_clear(&w);
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_verb_warmup = {
    "warmup", run_warmup, "Simulate the warm-up: time to setpoint, surface readiness, power.", 1,
    warmup_opts,
    "Integrates the network with CVODE over run.duration. Reports when the reading reaches the\n"
    "setpoint, when the working surface is ready (within 1 K of its holding temperature for\n"
    "good), overshoot, the reading-to-surface offset and lag, energy, power, duty and current\n"
    "(definitions in docs/metrics.md). The CSV has time_s, <node>_C, <source>_W and, with a\n"
    "controller, duty and reading_C; --json has the metrics; --plot draws the run."};
