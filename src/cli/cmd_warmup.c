/* tepid warmup: the transient from the initial state, its metrics (docs/metrics.md), the
 * history as CSV, the metrics as JSON, and the figure. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "csv.h"
#include "figure.h"
#include "history.h"
#include "integrate.h"
#include "json.h"
#include "metrics.h"
#include "program.h"
#include "programme.h"
#include "series.h"
#include "session.h"
#include "steady.h"
#include "summary.h"
#include "surfacemap.h"
#include "verbs.h"
#include "warmup.h"

static const tp_opt warmup_opts[] = {
    {"csv", 0, 1, 0, 1, "FILE", "write the history as CSV (- for standard output)"},
    {"json", 0, 1, 0, 1, "FILE", "write the metrics as JSON (- for standard output)"},
    {"plot", 0, 1, 0, TP_OUT_FIGURE, "FILE", "draw temperatures, power and duty (.png, .svg or .pdf)"},
    {"map", 0, 1, 0, TP_OUT_FIGURE, "FILE",
     "gridded plates: draw the working surface at steady holding (.png, .svg or .pdf)"},
    {"map-setpoint", 0, 1, 0, TP_OUT_FIGURE, "FILE",
     "gridded plates: draw it when the reading reaches the setpoint"},
    {"map-csv", 0, 1, 0, 1, "FILE",
     "gridded plates: write the surface maps cell by cell as CSV (- for standard output)"},
    {"strict", 0, 0, 0, 0, NULL, "exit 3 when the reading does not reach the setpoint in the run"},
    {"above", 0, 1, 1, 0, "TEMP",
     "report the time the reading and the surface spend above TEMP, e.g. 217degC (repeatable)"},
    TP_OPT_SET,
    TP_OPT_QUIET,
    TP_OPT_END,
};

static void print_time(FILE *fp, const char *what, double t)
{
    char buf[64];
    tp_summary_duration(t, buf, sizeof buf);
    fprintf(fp, "  %-34s %s\n", what, isfinite(t) ? buf : "not in the simulated time");
}

/* The hottest value of history column k. */
static double column_peak(const tp_history *h, int k)
{
    return tp_series_max(h->temps + k, h->n, h->n_out);
}

/* One row of the surface-map table: a quantity at the setpoint and at holding. */
static void map_row(FILE *fp, const char *what, double a, double b, const char *unit, double off)
{
    char x[32], y[32];
    snprintf(x, sizeof x, isfinite(a) ? "%.2f %s" : "-", a - off, unit);
    snprintf(y, sizeof y, isfinite(b) ? "%.2f %s" : "-", b - off, unit);
    fprintf(fp, "    %-24s %-26s %s\n", what, x, y);
}

static void map_cell_row(FILE *fp, const char *what, double va, int ia, int ja, double xa,
                         double ya, double vb, int ib, int jb, double xb, double yb)
{
    char x[64], y[64];
    snprintf(x, sizeof x, isfinite(va) ? "%.2f degC (%d, %d)" : "-", va - TP_KELVIN_0C, ia, ja);
    snprintf(y, sizeof y, isfinite(vb) ? "%.2f degC (%d, %d)" : "-", vb - TP_KELVIN_0C, ib, jb);
    fprintf(fp, "    %-24s %-26s %s\n", what, x, y);
    x[0] = y[0] = '\0';
    if (isfinite(va))
        snprintf(x, sizeof x, "  at %.1f, %.1f mm", xa * 1e3, ya * 1e3);
    if (isfinite(vb))
        snprintf(y, sizeof y, "  at %.1f, %.1f mm", xb * 1e3, yb * 1e3);
    fprintf(fp, "    %-24s %-26s %s\n", "", x, y);
}

/* The working-surface map of a gridded plate: at the setpoint and at holding. */
static void map_summary(FILE *fp, const tp_network *net, const tp_warmup *w)
{
    const tp_net_grid *g = net->grid;
    const tp_surfacemap_stats *a = &w->stats_setpoint, *b = &w->stats_hold;
    char when[64], buf[32];
    tp_summary_duration(w->history.cross_time, buf, sizeof buf);
    snprintf(when, sizeof when, "at setpoint (%s)", isfinite(w->history.cross_time) ? buf : "-");
    fprintf(fp, "\n  working surface, %d x %d cells of %.2f x %.2f mm:\n", g->nx, g->ny,
            g->width / g->nx * 1e3, g->depth / g->ny * 1e3);
    fprintf(fp, "    %-24s %-26s %s\n", "", when, "at steady holding");
    map_row(fp, "mean", a->mean, b->mean, "degC", TP_KELVIN_0C);
    map_row(fp, "standard deviation", a->std, b->std, "K", 0.0);
    map_cell_row(fp, "coldest cell", a->min, a->min_i, a->min_j, a->min_x, a->min_y, b->min,
                 b->min_i, b->min_j, b->min_x, b->min_y);
    map_cell_row(fp, "hottest cell", a->max, a->max_i, a->max_j, a->max_x, a->max_y, b->max,
                 b->max_i, b->max_j, b->max_x, b->max_y);
    map_row(fp, "spread (max - min)", a->spread, b->spread, "K", 0.0);
    map_row(fp, "centre - corners", a->centre_corner, b->centre_corner, "K", 0.0);
    if (w->map_hold) {
        char what[80];
        snprintf(what, sizeof what, "all of it ready (every cell within %.0f K)",
                 TP_SURFACEMAP_READY_BAND);
        print_time(fp, what, w->t_all_ready);
    }
}


/* The lag as a maker means it, with its direction in words: how far the surface is short of
 * its holding value when the reading reaches the setpoint, and when it comes within the band. */
static void print_lag(FILE *fp, const tp_metrics *m)
{
    char buf[64];
    if (isfinite(m->lag_k))
        fprintf(fp, "  %-34s %.2f K %s its holding %.1f degC (%s)\n", "lag: surface at that moment",
                fabs(m->lag_k), m->lag_k >= 0 ? "below" : "above",
                m->surface_hold - TP_KELVIN_0C, m->lag_k >= 0 ? "behind" : "ahead");
    if (!isfinite(m->t_setpoint))
        return;
    snprintf(buf, sizeof buf, "lag: surface within %.0f K", TP_READY_BAND);
    if (isfinite(m->lag)) {
        char t[32];
        tp_summary_duration(fabs(m->lag), t, sizeof t);
        fprintf(fp, "  %-34s %s %s the reading (%s)\n", buf, t, m->lag >= 0 ? "after" : "before",
                m->lag >= 0 ? "behind" : "ahead");
    } else {
        fprintf(fp, "  %-34s not in the simulated time\n", buf);
    }
}

/* When the surface is ready, and by which definition (docs/metrics.md). */
static void print_ready(FILE *fp, const tp_metrics *m)
{
    char t[32], p[32];
    tp_summary_duration(m->t_surface_ready, t, sizeof t);
    fprintf(fp, "  %-34s %s", "surface ready",
            isfinite(m->t_surface_ready) ? t : "not in the simulated time");
    switch (m->ready_basis) {
    case TP_READY_HOLD:
        fprintf(fp, " (within %.0f K of its holding %.1f degC)\n", TP_READY_BAND,
                m->surface_hold - TP_KELVIN_0C);
        break;
    case TP_READY_CYCLE:
        tp_summary_duration(m->cycle_period, p, sizeof p);
        fprintf(fp, " (on-off: within %.0f K of its limit cycle, %.1f to %.1f degC, mean %.1f, "
                    "period %s)\n", TP_READY_BAND, m->cycle_min - TP_KELVIN_0C,
                m->cycle_max - TP_KELVIN_0C, m->cycle_mean - TP_KELVIN_0C, p);
        break;
    case TP_READY_NO_CYCLE:
        fputs(" (on-off: no settled limit cycle by the end of the run; lengthen run.duration)\n",
              fp);
        break;
    default:
        fputc('\n', fp);
    }
}

static void summary(FILE *fp, const tp_session *s, const tp_warmup *w, const tp_program *prog)
{
    const tp_network *net = s->net;
    const tp_history *h = &w->history;
    const tp_metrics *m = &w->metrics;
    char buf[64];
    int k;
    tp_caution cautions[TP_CAUTIONS_MAX];
    fprintf(fp, "tepid warmup %s%s%s\n  ", s->cli->file, s->desc.title[0] ? ": " : "",
            s->desc.title);
    tp_summary_network(fp, net);
    tp_summary_duration(m->duration, buf, sizeof buf);
    fprintf(fp, "  simulated %s: %ld steps, %ld right-hand sides, %ld Jacobians, %ld restarts "
                "(%s", buf, w->stats.steps, w->stats.rhs_evals, w->stats.jac_evals,
            w->stats.restarts,
            w->stats.iterative ? "multigrid" : w->stats.sparse ? "KLU" : "dense LU");
    if (net->grid && w->stats.iterative)
        fprintf(fp, "; %ld Newton iterations, %ld multigrid solves, %ld setups",
                w->stats.newton_iters, w->stats.lin_iters, w->stats.factorizations);
    else if (net->grid)
        fprintf(fp, "; %ld factorizations, %ld reused", w->stats.factorizations,
                w->stats.factorizations_skipped);
    fputs(")\n\n", fp);
    if (isfinite(m->setpoint)) {
        fprintf(fp, "  setpoint %.1f degC%s\n", m->setpoint - TP_KELVIN_0C,
                prog && prog->n ? " (the schedule's highest)" : "");
        print_time(fp, "reading reaches the setpoint", m->t_setpoint);
        if (m->not_reached) {
            fprintf(fp, "  ! the setpoint is not reached: %s", m->not_reached);
            if (isfinite(m->highest_reachable))
                fprintf(fp, " (highest reachable reading %.1f degC)",
                        m->highest_reachable - TP_KELVIN_0C);
            fputc('\n', fp);
        }
        if (isfinite(m->surface_hold)) {
            print_lag(fp, m);
            print_ready(fp, m);
            fprintf(fp, "  %-34s %.2f K (reading) / %.2f K (surface)\n", "overshoot",
                    m->overshoot_reading, m->overshoot_surface);
            fprintf(fp, "  %-34s %+.2f K (reading minus surface at hold)\n", "steady offset",
                    m->steady_offset);
            if (isfinite(m->energy_to_ready))
                fprintf(fp, "  %-34s %.1f kJ (%.2f Wh)\n", "energy until ready",
                        m->energy_to_ready * 1e-3, m->energy_to_ready / 3600.0);
        }
        if (isfinite(m->hold_power))
            fprintf(fp, "  %-34s %.1f W at duty %.3f\n", "holding power", m->hold_power,
                    m->hold_duty);
    } else if (net->has_control && net->control.mode == TP_MODE_OFF) {
        fputs("  the controller holds the heater off (mode off): no setpoint to reach\n", fp);
    } else if (net->has_control) {
        fprintf(fp, "  controller mode %s (no setpoint)\n",
                tp_description_mode_name(net->control.mode));
    }
    fprintf(fp, "  %-34s mean %.1f W, peak %.1f W; duty mean %.3f, peak %.3f\n", "power",
            m->power_mean, m->power_peak, m->duty_mean, m->duty_peak);
    if (isfinite(m->current_peak) && m->current_peak > 0.0)
        fprintf(fp, "  %-34s %.2f A (on-current)\n", "peak current", m->current_peak);
    else if (isfinite(m->current_peak))
        fprintf(fp, "  %-34s 0 A (the heater never switched on)\n", "peak current");
    if (m->wire_mean > 0)
        fprintf(fp, "  %-34s %.2f W mean\n", "wiring loss", m->wire_mean);
    if (isfinite(m->air_final))
        fprintf(fp, "  %-34s %.1f degC\n", "enclosure air at the end", m->air_final - TP_KELVIN_0C);
    fprintf(fp, "\n  %-16s %10s %10s\n", "node", "final", "peak");
    for (k = 0; k < h->n_out; k++) {
        char label[TP_ID_MAX + 8];
        fprintf(fp, "  %-16s %10.2f %10.2f degC\n", tp_history_label(h, k, label, sizeof label),
                tp_history_temp(h, h->n - 1, k) - TP_KELVIN_0C,
                column_peak(h, k) - TP_KELVIN_0C);
    }
    if (isfinite(m->surface_max))
        fprintf(fp, "  %-16s %10.2f %10.2f degC (working surface %s)\n", "surface",
                h->surface[h->n - 1] - TP_KELVIN_0C, m->surface_max - TP_KELVIN_0C,
                net->grid ? "mean" : "estimate");
    if (net->grid)
        map_summary(fp, net, w);
    if (prog)
        tp_programme_text(fp, prog);
    tp_summary_cautions(fp, "cautions", cautions, tp_warmup_cautions(&s->desc, net, w, cautions));
}

static void put_node_map(cJSON *obj, const char *name, const tp_history *h,
                         const double *values_by_col)
{
    cJSON *o = cJSON_AddObjectToObject(obj, name);
    int k;
    for (k = 0; o && k < h->n_out; k++) {
        char label[TP_ID_MAX + 8];
        tp_json_number(o, tp_history_label(h, k, label, sizeof label),
                       values_by_col[k] - TP_KELVIN_0C);
    }
}

static cJSON *json_pair(double a, double b)
{
    cJSON *arr = cJSON_CreateArray();
    if (arr) {
        cJSON_AddItemToArray(arr, isfinite(a) ? cJSON_CreateNumber(a) : cJSON_CreateNull());
        cJSON_AddItemToArray(arr, isfinite(b) ? cJSON_CreateNumber(b) : cJSON_CreateNull());
    }
    return arr;
}

/* Statistics of one map, or null when the map does not exist. */
static void put_map_stats(cJSON *obj, const char *name, const tp_surfacemap_stats *st, double time)
{
    cJSON *o;
    if (st->cells == 0) {
        cJSON_AddNullToObject(obj, name);
        return;
    }
    o = cJSON_AddObjectToObject(obj, name);
    if (!o)
        return;
    if (isfinite(time))
        tp_json_number(o, "time_s", time);
    tp_json_number(o, "mean_C", st->mean - TP_KELVIN_0C);
    tp_json_number(o, "std_K", st->std);
    tp_json_number(o, "min_C", st->min - TP_KELVIN_0C);
    cJSON_AddItemToObject(o, "min_cell", json_pair(st->min_i, st->min_j));
    cJSON_AddItemToObject(o, "min_at_mm", json_pair(st->min_x * 1e3, st->min_y * 1e3));
    tp_json_number(o, "max_C", st->max - TP_KELVIN_0C);
    cJSON_AddItemToObject(o, "max_cell", json_pair(st->max_i, st->max_j));
    cJSON_AddItemToObject(o, "max_at_mm", json_pair(st->max_x * 1e3, st->max_y * 1e3));
    tp_json_number(o, "spread_K", st->spread);
    tp_json_number(o, "centre_C", st->centre - TP_KELVIN_0C);
    tp_json_number(o, "corners_C", st->corner - TP_KELVIN_0C);
    tp_json_number(o, "centre_minus_corners_K", st->centre_corner);
}

static void put_surface_map(cJSON *root, const tp_network *net, const tp_warmup *w)
{
    const tp_net_grid *g = net->grid;
    cJSON *o = cJSON_AddObjectToObject(root, "surface_map");
    if (!o)
        return;
    cJSON_AddItemToObject(o, "cells", json_pair(g->nx, g->ny));
    cJSON_AddItemToObject(o, "cell_mm", json_pair(g->width / g->nx * 1e3, g->depth / g->ny * 1e3));
    put_map_stats(o, "at_setpoint", &w->stats_setpoint, w->history.cross_time);
    put_map_stats(o, "holding", &w->stats_hold, TP_UNSET);
    put_map_stats(o, "final", &w->stats_final, w->metrics.duration);
    tp_json_number(o, "ready_band_K", TP_SURFACEMAP_READY_BAND);
    tp_json_number(o, "time_all_ready_s", w->t_all_ready);
}

/* How readiness was judged: ready_definition, the band, and the on-off limit cycle. */
static void put_ready(cJSON *root, const tp_metrics *m)
{
    static const char *const names[] = {NULL, "hold_band", "limit_cycle", "no_limit_cycle"};
    cJSON *c;
    if (names[m->ready_basis])
        cJSON_AddStringToObject(root, "ready_definition", names[m->ready_basis]);
    else
        cJSON_AddNullToObject(root, "ready_definition");
    tp_json_number(root, "ready_low_C", m->ready_low - TP_KELVIN_0C);
    tp_json_number(root, "ready_high_C", m->ready_high - TP_KELVIN_0C);
    if (m->ready_basis != TP_READY_CYCLE) {
        cJSON_AddNullToObject(root, "limit_cycle");
        return;
    }
    c = cJSON_AddObjectToObject(root, "limit_cycle");
    if (!c)
        return;
    tp_json_number(c, "period_s", m->cycle_period);
    tp_json_number(c, "surface_min_C", m->cycle_min - TP_KELVIN_0C);
    tp_json_number(c, "surface_max_C", m->cycle_max - TP_KELVIN_0C);
    tp_json_number(c, "surface_mean_C", m->cycle_mean - TP_KELVIN_0C);
}

/* The metrics of the JSON after the readiness block, in their order there (metricdef.h names
 * and scales them). */
static const int json_metrics[] = {
    TP_MET_OVERSHOOT_READING, TP_MET_OVERSHOOT_SURFACE, TP_MET_STEADY_OFFSET, TP_MET_LAG_K,
    TP_MET_LAG,               TP_MET_ENERGY_READY,      TP_MET_POWER_MEAN,    TP_MET_POWER_PEAK,
    TP_MET_DUTY_MEAN,         TP_MET_DUTY_PEAK,         TP_MET_WIRE_MEAN,     TP_MET_CURRENT_PEAK,
    TP_MET_HOLD_POWER,        TP_MET_HOLD_DUTY,         TP_MET_HIGHEST,       TP_MET_AIR_FINAL,
    TP_MET_SURFACE_MAX};

static tp_status write_json(const char *path, const tp_session *s, const tp_warmup *w,
                            const tp_program *prog, tp_diag *d)
{
    const tp_metrics *m = &w->metrics;
    const tp_history *h = &w->history;
    cJSON *root = cJSON_CreateObject(), *stats, *cautions;
    double *col = malloc(((size_t)h->n_out + 1) * sizeof *col);
    tp_caution list[TP_CAUTIONS_MAX];
    tp_status st;
    int k;
    if (!root || !col) {
        cJSON_Delete(root);
        free(col);
        return TP_ERR_NOMEM;
    }
    tp_json_conditions(root, s->net);
    tp_json_metric(root, m, TP_MET_SETPOINT);
    cJSON_AddBoolToObject(root, "reached", isfinite(m->t_setpoint));
    tp_json_metric(root, m, TP_MET_TIME_SETPOINT);
    tp_json_metric(root, m, TP_MET_SURFACE_HOLD);
    tp_json_metric(root, m, TP_MET_TIME_READY);
    tp_json_number(root, "ready_band_K", TP_READY_BAND);
    put_ready(root, m);
    for (k = 0; k < (int)(sizeof json_metrics / sizeof json_metrics[0]); k++)
        tp_json_metric(root, m, json_metrics[k]);
    if (m->not_reached)
        cJSON_AddStringToObject(root, "not_reached", m->not_reached);
    else
        cJSON_AddNullToObject(root, "not_reached");
    for (k = 0; k < h->n_out; k++)
        col[k] = tp_history_temp(h, h->n - 1, k);
    put_node_map(root, "final_C", h, col);
    for (k = 0; k < h->n_out; k++)
        col[k] = column_peak(h, k);
    put_node_map(root, "max_C", h, col);
    if (s->net->grid)
        put_surface_map(root, s->net, w);
    if (prog)
        tp_programme_json(root, prog);
    tp_json_metric(root, m, TP_MET_DURATION);
    stats = cJSON_AddObjectToObject(root, "solver");
    if (stats) {
        tp_json_number(stats, "steps", (double)w->stats.steps);
        tp_json_number(stats, "rhs_evals", (double)w->stats.rhs_evals);
        tp_json_number(stats, "jac_evals", (double)w->stats.jac_evals);
        tp_json_number(stats, "restarts", (double)w->stats.restarts);
        cJSON_AddStringToObject(stats, "linear_solver",
                                w->stats.iterative ? "multigrid" : w->stats.sparse ? "klu"
                                                                                   : "dense");
    }
    cautions = cJSON_AddArrayToObject(root, "cautions");
    tp_json_add_cautions(cautions, list, tp_warmup_cautions(&s->desc, s->net, w, list));
    st = tp_json_write(path, root, d);
    cJSON_Delete(root);
    free(col);
    return st;
}

/* The maps a gridded run asked for: --map (at holding, or at the end without a holding
 * point), --map-setpoint, --map-csv. */
static tp_status write_maps(const tp_cli *cli, const tp_session *s, const tp_warmup *w,
                            tp_diag *d)
{
    const tp_net_grid *g = s->net->grid;
    char head[160];
    tp_status rc = TP_OK;
    if (tp_cli_get(cli, "map")) {
        snprintf(head, sizeof head, "Working surface %s (%d x %d cells)",
                 w->map_hold ? "at steady holding" : "at the end of the run", g->nx, g->ny);
        rc = tp_figure_surface(tp_cli_get(cli, "map"), g, w->map_hold ? w->map_hold : w->map_final,
                         head, d);
    }
    if (rc == TP_OK && tp_cli_get(cli, "map-setpoint")) {
        if (w->map_setpoint) {
            char t[32];
            tp_summary_duration(w->history.cross_time, t, sizeof t);
            snprintf(head, sizeof head, "Working surface when the reading reaches the "
                                        "setpoint (%s)", t);
            rc = tp_figure_surface(tp_cli_get(cli, "map-setpoint"), g, w->map_setpoint, head, d);
        } else {
            tp_diag_warn(d, tp_diag_loc_none(), "--map-setpoint",
                         "give a setpoint the plate reaches within run.duration",
                         "the reading never reached the setpoint: %s is not written",
                         tp_cli_get(cli, "map-setpoint"));
        }
    }
    if (rc == TP_OK && tp_cli_get(cli, "map-csv")) {
        const double *maps[3] = {w->map_setpoint, w->map_hold, w->map_final};
        const char *const names[3] = {"at_setpoint", "holding", "final"};
        rc = tp_csv_write_maps(tp_cli_get(cli, "map-csv"), g, maps, names, 3, d);
    }
    return rc;
}

static tp_status run_warmup(const tp_cli *cli, tp_diag *d)
{
    tp_session s;
    tp_warmup w;
    tp_schedule plan;
    tp_program program;
    const tp_program *prog = NULL;
    double above[TP_PROGRAM_MAX_ABOVE];
    int n_above, scheduled;
    tp_status rc = tp_session_open(&s, cli, d);
    static const char *const map_opts[] = {"map", "map-setpoint", "map-csv"};
    size_t i;
    if (rc != TP_OK)
        return rc;
    for (i = 0; i < sizeof map_opts / sizeof map_opts[0]; i++) {
        if (tp_cli_get(cli, map_opts[i]) && !s.net->grid) {
            tp_diag_error(d, tp_diag_loc_none(), NULL,
                          "add bed.grid: [NX, NY] to the bed (docs/grid.md), or --set "
                          "'bed.grid=[40, 40]'",
                          "--%s draws the working surface of a gridded plate (bed.grid); "
                          "this file has none",
                          map_opts[i]);
            tp_session_close(&s);
            return TP_ERR_USAGE;
        }
    }
    if (tp_cli_flag(cli, "strict") && !tp_network_holds(s.net)) {
        tp_diag_error(d, tp_diag_loc_none(), NULL,
                      "give control: a setpoint with mode on-off or pid, or leave out --strict",
                      "--strict checks that the reading reaches the setpoint; this file's "
                      "controller holds none");
        tp_session_close(&s);
        return TP_ERR_USAGE;
    }
    rc = tp_session_temperatures(cli, "above", TP_PROGRAM_MAX_ABOVE, above, &n_above, d);
    if (rc != TP_OK) {
        tp_session_close(&s);
        return rc;
    }
    scheduled = tp_program_plan(&s.desc, s.net, &plan) == 0;
    rc = tp_warmup_run_schedule(s.net, &s.desc.run, scheduled ? &plan : NULL, &w, d);
    if (rc == TP_OK && (scheduled || n_above > 0)) {
        if (!scheduled)
            memset(&plan, 0, sizeof plan);
        tp_program_compute(&w.history, &plan, above, n_above, &program);
        prog = &program;
    }
    if (rc == TP_OK && tp_cli_get(cli, "csv"))
        rc = tp_csv_write_history(tp_cli_get(cli, "csv"), &w.history, d);
    if (rc == TP_OK && s.net->grid)
        rc = write_maps(cli, &s, &w, d);
    if (rc == TP_OK && tp_cli_get(cli, "json"))
        rc = write_json(tp_cli_get(cli, "json"), &s, &w, prog, d);
    if (rc == TP_OK && tp_cli_get(cli, "plot"))
        rc = tp_figure_warmup(tp_cli_get(cli, "plot"), tp_session_title(&s), s.net, &w, d);
    if (rc == TP_OK && s.text)
        summary(s.text, &s, &w, prog);
    if (rc == TP_OK && tp_cli_flag(cli, "strict") && !isfinite(w.metrics.t_setpoint)) {
        char buf[64];
        tp_summary_duration(w.metrics.duration, buf, sizeof buf);
        tp_diag_note(d, "--strict: the reading did not reach the setpoint %.1f degC within the "
                        "%s run: %s", w.metrics.setpoint - TP_KELVIN_0C, buf,
                     w.metrics.not_reached ? w.metrics.not_reached : "not reached");
        rc = TP_ERR_STRICT;
    }
    tp_warmup_clear(&w);
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_cmd_warmup = {
    "warmup",
    run_warmup,
    "Simulate the warm-up: time to setpoint, surface readiness, power.",
    1,
    warmup_opts,
    "Integrates the network with CVODE over run.duration. Reports when the reading reaches the\n"
    "setpoint, how far the working surface lags it, when the surface is ready (within 1 K of\n"
    "its holding temperature for good; under on-off control, of its limit cycle's range),\n"
    "overshoot, the reading-to-surface offset, energy, power, duty and current\n"
    "(definitions in docs/metrics.md); --strict exits 3 when the reading does not reach the\n"
    "setpoint within run.duration. The CSV has time_s, <node>_C, <source>_W and, with a\n"
    "controller, duty and reading_C; --json has the metrics; --plot draws the run.\n"
    "With control.schedule (a programme of ramps, steps, holds and heater-off spells) the\n"
    "controller follows it and each segment is reported: achieved rates, tracking errors,\n"
    "time at the duty limit, overshoot; --above TEMP adds the time spent above TEMP, and the\n"
    "CSV gains setpoint_C (docs/control.md).\n"
    "With bed.grid it also answers for the working-surface map at the setpoint and at\n"
    "holding (mean, spread, extremes, centre against corners, when all of it is ready);\n"
    "--map, --map-setpoint and --map-csv write the maps (docs/grid.md).",
    "tepid warmup workshop-bed-24v.yaml\n"
    "tepid warmup workshop-bed-24v.yaml --plot warmup.png --csv warmup.csv\n"
    "tepid warmup small-pad-grid.yaml --map hold.png --map-csv cells.csv"};
