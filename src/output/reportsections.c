/* The sections of the design-review report, made from the studies' records with the verbs'
 * rounding (the text summaries of warmup, steady, budget, guard and explain). */
#include "reportsections.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "config.h"
#include "convection.h"
#include "eval.h"
#include "figure.h"
#include "grid.h"
#include "history.h"
#include "materials.h"
#include "metricdef.h"
#include "series.h"
#include "steady.h"
#include "summary.h"
#include "surfacemap.h"
#include "units.h"

static const char *const study_names[TP_STUDY_COUNT] = {"warmup", "steady", "budget", "guard",
                                                         "cool"};

const char *tp_reportsections_num(char *buf, size_t size, int decimals, double v)
{
    if (!isfinite(v))
        snprintf(buf, size, "-");
    else if (decimals < 0)
        snprintf(buf, size, "%.*g", -decimals, v);
    else
        snprintf(buf, size, "%.*f", decimals, v);
    return buf;
}

void tp_reportsections_duration(char *buf, size_t size, double t)
{
    if (isfinite(t))
        tp_summary_duration(t, buf, size);
    else
        snprintf(buf, size, "not in the simulated time");
}

/* A missing study's place in its section. */
static void missing(tp_report_section *s, const tp_reportcase *c, int study)
{
    tp_report_para(s, "Not available for this case: %s",
                   c->why[study][0] ? c->why[study] : "the study did not run.");
}

#define LAWS (TP_LAW_RADIATION + 1) /* link laws (network.h) */

/* ---- cautions ----------------------------------------------------------------------------- */

static int merge_cautions(tp_caution *out, unsigned *from, int n, const tp_caution *list, int m,
                          int study)
{
    int i, k;
    for (i = 0; i < m; i++) {
        for (k = 0; k < n; k++)
            if (tp_caution_same(&out[k], &list[i]))
                break;
        if (k == n) {
            if (n == TP_CAUTIONS_MAX)
                continue;
            out[n] = list[i];
            from[n] = 0;
            n++;
        } else if (tp_caution_worse(&list[i], &out[k])) {
            out[k] = list[i];
        }
        from[k] |= 1u << study;
    }
    return n;
}

int tp_reportsections_case_cautions(const tp_reportcase *c, tp_caution out[TP_CAUTIONS_MAX],
                                    unsigned from[TP_CAUTIONS_MAX])
{
    tp_caution list[TP_CAUTIONS_MAX];
    int n = 0, i, j;
    if (c->warmup)
        n = merge_cautions(out, from, n, list,
                           tp_warmup_cautions(c->desc, c->net, c->warmup, list), TP_STUDY_WARMUP);
    if (c->steady)
        n = merge_cautions(out, from, n, list,
                           tp_steadyreport_cautions(c->desc, c->net, c->steady, list),
                           TP_STUDY_STEADY);
    if (c->budget)
        n = merge_cautions(out, from, n, list,
                           tp_budget_cautions(c->desc, c->net, c->budget, list), TP_STUDY_BUDGET);
    if (c->guard)
        n = merge_cautions(out, from, n, list, tp_guard_cautions(c->desc, c->net, c->guard, list),
                           TP_STUDY_GUARD);
    if (c->cool)
        n = merge_cautions(out, from, n, list, tp_cooldown_cautions(c->desc, c->net, c->cool, list),
                           TP_STUDY_COOL);
    if (n == 0) {
        tp_caution_exposure ex = TP_CAUTION_UNSEEN;
        n = merge_cautions(out, from, n, list, tp_caution_list(c->desc, c->net, &ex, list),
                           TP_STUDY_WARMUP);
    }
    /* kind order (tp_caution_compare), carrying the verbs along */
    for (i = 1; i < n; i++)
        for (j = i; j > 0 && tp_caution_compare(&out[j - 1], &out[j]) > 0; j--) {
            tp_caution t = out[j];
            unsigned f = from[j];
            out[j] = out[j - 1];
            from[j] = from[j - 1];
            out[j - 1] = t;
            from[j - 1] = f;
        }
    return n;
}

tp_status tp_reportsections_cautions(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                     tp_diag *d)
{
    tp_caution list[TP_CAUTIONS_MAX];
    unsigned from[TP_CAUTIONS_MAX];
    char text[TP_SUMMARY_CAUTION_MAX], verbs[64];
    int n = tp_reportsections_case_cautions(c, list, from), k, v;
    (void)r;
    (void)d;
    tp_report_para(s, "Read these before building or running the design. Each is the caution "
                      "the verbs print for this case, with the basis it names; the verbs that "
                      "give it follow in brackets.");
    for (k = 0; k < n; k++) {
        size_t used = 0;
        verbs[0] = '\0';
        for (v = 0; v < TP_STUDY_COUNT; v++)
            if (from[k] & (1u << v))
                used += (size_t)snprintf(verbs + used, sizeof verbs - used, "%s%s",
                                         used ? ", " : "", study_names[v]);
        tp_summary_caution_text(&list[k], text, sizeof text);
        tp_report_item(s, "%s [%s]", text, verbs);
    }
    tp_report_para(s, "tepid is a model, not a safety assessment. Local electrical codes and "
                      "qualified practice take precedence over anything in this report: have "
                      "mains wiring, earthing and protection checked by a qualified person.");
    return TP_OK;
}

/* ---- summary ------------------------------------------------------------------------------ */

static void heater_rows(tp_report_table *t, const tp_reportcase *c)
{
    const tp_network *net = c->net;
    double amps, watts;
    int src = tp_network_cold_start(net, &amps, &watts, NULL);
    if (src < 0) {
        tp_report_cell(t, "heater");
        tp_report_cell(t, "none");
        return;
    }
    {
        const tp_net_source *h = &net->sources[src];
        tp_report_cell(t, "heater as rated");
        if (h->kind == TP_SRC_ELECTRIC && h->rated_power > 0)
            tp_report_cell(t, "%.1f W at %.1f V", h->rated_power, h->rated_voltage);
        else if (h->kind == TP_SRC_ELECTRIC)
            tp_report_cell(t, "%.3f ohm (given as a resistance)", h->r0);
        else
            tp_report_cell(t, "%.1f W (constant power)", h->power);
        tp_report_cell(t, "heater as run");
        if (h->kind == TP_SRC_ELECTRIC)
            tp_report_cell(t, "%.1f V across %.3f ohm: %.2f A, %.1f W full on from cold%s",
                           h->supply, h->r0, amps, watts,
                           h->max_duty < 1.0 ? ", duty limited" : "");
        else
            tp_report_cell(t, "%.1f W", watts);
        tp_report_cell(t, "supply");
        if (c->desc->supply.present && c->budget && isfinite(c->budget->i_rating))
            tp_report_cell(t, "%.1f V, rated %.2f A (%.0f W)", c->desc->supply.voltage,
                           c->budget->i_rating, c->budget->i_rating * c->desc->supply.voltage);
        else if (c->desc->supply.present)
            tp_report_cell(t, "%.1f V", c->desc->supply.voltage);
        else if (h->kind == TP_SRC_ELECTRIC)
            tp_report_cell(t, "%.1f V (the heater's; no supply: section)", h->supply);
        else
            tp_report_cell(t, "none given");
    }
}

static void budget_verdict(char *buf, size_t size, const tp_budget *b)
{
    const char *word = b->n_fail ? "FAIL" : b->n_warn ? "WARN" : "PASS";
    if (b->n_checks == 0)
        snprintf(buf, size, "no checks (add supply: and wiring:)");
    else
        snprintf(buf, size, "%s: %d FAIL%s, %d WARN%s of %d checks", word, b->n_fail,
                 b->n_fail == 1 ? "" : "s", b->n_warn, b->n_warn == 1 ? "" : "s", b->n_checks);
}

/* guard --strict's test: a healthy corner tripped or a fault crossed a protected service limit
 * before detection is FAIL; else PASS, with the undetected faults counted. */
static void guard_verdict(char *buf, size_t size, const tp_guard_study *g)
{
    int fail = g->healthy_trips > 0 || g->unsafe_faults > 0;
    snprintf(buf, size, "%s: %d healthy corner%s tripped; %d fault run%s crossed a service limit "
                        "before detection; %d undetected within %.0f min",
             fail ? "FAIL" : "PASS", g->healthy_trips, g->healthy_trips == 1 ? "" : "s",
             g->unsafe_faults, g->unsafe_faults == 1 ? "" : "s", g->undetected,
             g->horizon / 60.0);
}

/* The cool-down's burn-threshold times, or why there is none. */
static void cool_row(tp_report_table *t, const tp_reportcase *c)
{
    char contact[64] = "", times[96] = "", d[32];
    size_t uc = 0, ut = 0;
    int k;
    tp_report_cell(t, "cool-down (heater off)");
    if (!c->cool) {
        tp_report_cell(t, "not available: %s", c->why[TP_STUDY_COOL]);
        return;
    }
    for (k = 0; k < c->cool->n_levels; k++) {
        const tp_cooldown_level *l = &c->cool->levels[k];
        if (l->kind != TP_COOL_BURN || uc >= sizeof contact || ut >= sizeof times)
            continue;
        tp_reportsections_duration(d, sizeof d, l->time);
        uc += (size_t)snprintf(contact + uc, sizeof contact - uc, "%s%s", uc ? " / " : "",
                               l->contact >= 60.0 ? "1 min" : l->contact >= 10.0 ? "10 s"
                                                                                 : "1 s");
        ut += (size_t)snprintf(times + ut, sizeof times - ut, "%s%s", ut ? " / " : "",
                               isfinite(l->time) ? d : "not within 24 h");
    }
    tp_report_cell(t, "below the burn thresholds for %s of contact after %s", contact, times);
}

tp_status tp_reportsections_summary(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                    tp_diag *d)
{
    static const char *const head[] = {"item", "value"};
    tp_report_table *t = tp_report_table_add(s, NULL, 2, head);
    const tp_metrics *m = c->warmup ? &c->warmup->metrics : NULL;
    char buf[TP_REPORTCASE_WHY];
    (void)r;
    (void)d;
    tp_report_cell(t, "case");
    tp_report_cell(t, "%s (%s)", c->title, c->file);
    heater_rows(t, c);
    tp_report_cell(t, "setpoint");
    if (c->net->has_control && tp_network_holds(c->net))
        tp_report_cell(t, "%.1f degC%s (%s control of the reading at '%s')",
                       c->net->control.setpoint - TP_KELVIN_0C,
                       c->scheduled ? ", the programme's highest" : "",
                       tp_description_mode_name(c->net->control.mode),
                       c->net->nodes[c->net->control.sensor].id);
    else
        tp_report_cell(t, "none held");
    if (m && isfinite(m->setpoint)) {
        tp_reportsections_duration(buf, sizeof buf, m->t_setpoint);
        tp_report_cell(t, "time to setpoint");
        tp_report_cell(t, "%s", buf);
        tp_reportsections_duration(buf, sizeof buf, m->t_surface_ready);
        tp_report_cell(t, "surface ready");
        tp_report_cell(t, "%s", buf);
        tp_report_cell(t, "overshoot");
        tp_report_cell(t, "%.2f K (reading) / %.2f K (surface)", m->overshoot_reading,
                       m->overshoot_surface);
    } else if (!m) {
        tp_report_cell(t, "warm-up");
        tp_report_cell(t, "not available: %s", c->why[TP_STUDY_WARMUP]);
    }
    if (c->steady && c->steady->holding) {
        tp_report_cell(t, "holding power");
        tp_report_cell(t, "%.2f W at duty %.3f", c->steady->hold.power, c->steady->hold.duty);
        tp_report_cell(t, "margin");
        tp_report_cell(t, "%.2f (available at max duty / holding)%s", c->steady->margin,
                       c->steady->margin < TP_MARGIN_LOW ? ": low" : "");
    } else if (c->steady) {
        tp_report_cell(t, "full power");
        tp_report_cell(t, "%.2f W (no setpoint held)", c->steady->shown->power);
    } else {
        tp_report_cell(t, "holding power");
        tp_report_cell(t, "not available: %s", c->why[TP_STUDY_STEADY]);
    }
    cool_row(t, c);
    tp_report_cell(t, "budget verdict");
    if (c->budget) {
        budget_verdict(buf, sizeof buf, c->budget);
        tp_report_cell(t, "%s", buf);
    } else {
        tp_report_cell(t, "not available: %s", c->why[TP_STUDY_BUDGET]);
    }
    tp_report_cell(t, "guard verdict");
    if (c->guard) {
        guard_verdict(buf, sizeof buf, c->guard);
        tp_report_cell(t, "%s", buf);
    } else {
        tp_report_cell(t, "not available: %s", c->why[TP_STUDY_GUARD]);
    }
    return TP_OK;
}

/* ---- warm-up ------------------------------------------------------------------------------ */

/* The metrics of the warm-up's JSON, in its order (cmd_warmup.c). */
static const int warmup_metrics[] = {
    TP_MET_SETPOINT,      TP_MET_TIME_SETPOINT,     TP_MET_SURFACE_HOLD, TP_MET_TIME_READY,
    TP_MET_OVERSHOOT_READING, TP_MET_OVERSHOOT_SURFACE, TP_MET_STEADY_OFFSET, TP_MET_LAG_K,
    TP_MET_LAG,           TP_MET_ENERGY_READY,      TP_MET_POWER_MEAN,   TP_MET_POWER_PEAK,
    TP_MET_DUTY_MEAN,     TP_MET_DUTY_PEAK,         TP_MET_WIRE_MEAN,    TP_MET_CURRENT_PEAK,
    TP_MET_HOLD_POWER,    TP_MET_HOLD_DUTY,         TP_MET_HIGHEST,      TP_MET_AIR_FINAL,
    TP_MET_SURFACE_MAX,   TP_MET_DURATION};

tp_status tp_reportsections_warmup(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                   tp_diag *d)
{
    static const char *const mhead[] = {"metric", "value", "unit", "key in warmup --json"};
    static const char *const nhead[] = {"node", "final (degC)", "peak (degC)"};
    const tp_warmup *w = c->warmup;
    const tp_history *h;
    tp_report_table *t;
    char buf[64], caption[256];
    size_t k;
    int col;
    if (!w) {
        missing(s, c, TP_STUDY_WARMUP);
        return TP_OK;
    }
    h = &w->history;
    tp_summary_duration(w->metrics.duration, buf, sizeof buf);
    tp_report_para(s, "The transient from the initial state over %s (definitions in "
                      "docs/metrics.md); as `tepid warmup` reports it.", buf);
    if (w->metrics.not_reached)
        tp_report_para(s, "The setpoint is not reached: %s.", w->metrics.not_reached);
    t = tp_report_table_add(s, "Warm-up metrics", 4, mhead);
    for (k = 0; k < sizeof warmup_metrics / sizeof warmup_metrics[0]; k++) {
        const tp_metricdef *md = tp_metricdef_get(warmup_metrics[k]);
        double v = tp_metricdef_value(md, &w->metrics);
        if (!isfinite(v))
            continue;
        tp_summary_metric(md, v, buf, sizeof buf);
        tp_report_cell(t, "%s", md->label);
        tp_report_cell(t, "%s", buf);
        tp_report_cell(t, "%s", md->form == TP_FORM_DURATION ? "" : md->text_unit);
        tp_report_cell(t, "%s", md->key);
    }
    t = tp_report_table_add(s, "Temperatures at the end of the run and at their peak", 3, nhead);
    for (col = 0; col < h->n_out; col++) {
        char label[TP_ID_MAX + 8];
        tp_report_cell(t, "%s", tp_history_label(h, col, label, sizeof label));
        tp_report_cell(t, "%.2f", tp_history_temp(h, h->n - 1, col) - TP_KELVIN_0C);
        tp_report_cell(t, "%.2f", tp_series_max(h->temps + col, h->n, h->n_out) - TP_KELVIN_0C);
    }
    snprintf(caption, sizeof caption, "Warm-up of %s: temperatures, reading and setpoint above; "
                                      "heater power and duty below.", c->title);
    {
        char path[TP_PATH_MAX];
        tp_status st = tp_report_figure_path(r, "warmup", path, sizeof path, d);
        if (st == TP_OK)
            st = tp_figure_warmup(path, c->title, c->net, w, d);
        if (st == TP_OK)
            st = tp_report_figure(r, s, "warmup", caption, d);
        if (st != TP_OK)
            return st;
    }
    return TP_OK;
}

/* ---- steady state ------------------------------------------------------------------------- */

static void reach_row(tp_report_table *t, const tp_network *net, const char *what,
                      const tp_steady *st)
{
    char a[32], b[32];
    tp_reportsections_num(a, sizeof a, 1, net->has_control ? st->reading - TP_KELVIN_0C : TP_UNSET);
    tp_reportsections_num(b, sizeof b, 1, tp_eval_surface_at(net, st->temps, NULL) - TP_KELVIN_0C);
    tp_report_cell(t, "%s", what);
    tp_report_cell(t, "%.1f", st->power);
    tp_report_cell(t, "%s", a);
    tp_report_cell(t, "%s", b);
}

tp_status tp_reportsections_steady(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                   tp_diag *d)
{
    static const char *const lhead[] = {"path", "power (W)", "share (%)"};
    static const char *const thead[] = {"node", "temperature (degC)", "cells (degC)"};
    static const char *const rhead[] = {"state", "power (W)", "reading (degC)", "surface (degC)"};
    const tp_steadyreport *a = c->steady;
    const tp_network *net = c->net;
    tp_report_table *t;
    double surf;
    int p, i;
    if (!a) {
        missing(s, c, TP_STUDY_STEADY);
        return TP_OK;
    }
    surf = tp_eval_surface_at(net, a->shown->temps, NULL);
    if (a->holding) {
        tp_report_para(s, "Holding %.1f degC (reading): %.2f W at duty %.3f. Power margin "
                          "(available at max duty / holding): %.2f%s.",
                       net->control.setpoint - TP_KELVIN_0C, a->hold.power, a->hold.duty,
                       a->margin, a->margin < TP_MARGIN_LOW ? " (low: little in reserve to "
                                                              "recover from a disturbance)"
                                                            : "");
        if (isfinite(surf))
            tp_report_para(s, "Working surface %.2f degC: the reading is %+.2f K from the "
                              "surface.", surf - TP_KELVIN_0C, a->hold.reading - surf);
        if (a->hold.wire > 0)
            tp_report_para(s, "Wiring loss %.2f W (the series path: docs/control.md).",
                           a->hold.wire);
    } else {
        tp_report_para(s, "No setpoint is held: the state shown is full power, %.2f W.",
                       a->shown->power);
    }
    t = tp_report_table_add(s, a->holding ? "Where the holding power goes"
                                          : "Where the full power goes", 3, lhead);
    for (p = TP_PATH_INTERNAL + 1; p < TP_PATH_COUNT; p++) {
        if (p == TP_PATH_WALLS || fabs(a->flows.path[p]) < 1e-12)
            continue;
        tp_report_cell(t, "%s", tp_network_loss_path_name((tp_loss_path)p));
        tp_report_cell(t, "%.2f", a->flows.path[p]);
        tp_report_cell(t, "%.1f", a->plate_loss != 0 ? 100.0 * a->flows.path[p] / a->plate_loss
                                                     : 0.0);
    }
    tp_report_cell(t, "total");
    tp_report_cell(t, "%.2f", a->plate_loss);
    tp_report_cell(t, "100.0");
    if (fabs(a->flows.path[TP_PATH_WALLS]) > 0)
        tp_report_para(s, "%.2f W leave the enclosure through its walls (the same watts again, "
                          "leaving the box).", a->flows.path[TP_PATH_WALLS]);
    {
        char path[TP_PATH_MAX];
        tp_status st = tp_report_figure_path(r, "losses", path, sizeof path, d);
        if (st == TP_OK)
            st = tp_figure_losses(path, a->holding ? "Holding power by loss path"
                                                   : "Full power by loss path", a, d);
        if (st == TP_OK)
            st = tp_report_figure(r, s, "losses", "Where the watts of the state shown go, by "
                                                  "loss path.", d);
        if (st != TP_OK)
            return st;
    }
    t = tp_report_table_add(s, "Steady temperatures", 3, thead);
    if (net->grid) {
        const tp_net_grid *g = net->grid;
        for (i = 0; i < g->n_layers; i++) {
            double mean, lo, hi;
            tp_grid_layer_stats(net, i, a->shown->temps, &mean, &lo, &hi);
            tp_report_cell(t, "%s (mean)", g->layer_id[i]);
            tp_report_cell(t, "%.2f", mean - TP_KELVIN_0C);
            tp_report_cell(t, "%.2f to %.2f", lo - TP_KELVIN_0C, hi - TP_KELVIN_0C);
        }
    }
    for (i = 0; i < net->n_nodes; i++) {
        if (!(net->nodes[i].capacity > 0) ||
            (net->grid && net->grid->from[i] < net->grid->n_layers))
            continue;
        tp_report_cell(t, "%s", net->nodes[i].id);
        tp_report_cell(t, "%.2f", a->shown->temps[i] - TP_KELVIN_0C);
        tp_report_cell(t, "-");
    }
    t = tp_report_table_add(s, "Highest reachable (the equilibrium if the heater stays on)", 4,
                            rhead);
    if (a->max_duty < 1.0)
        reach_row(t, net, "at the duty limit", &a->limit);
    reach_row(t, net, "at full power", &a->full);
    return TP_OK;
}

/* ---- budget ------------------------------------------------------------------------------- */

static void qrow(tp_report_table *t, const char *what, int decimals, double v, const char *unit)
{
    char buf[48];
    if (!isfinite(v))
        return;
    tp_reportsections_num(buf, sizeof buf, decimals, v);
    tp_report_cell(t, "%s", what);
    tp_report_cell(t, "%s", buf);
    tp_report_cell(t, "%s", unit);
}

static void wire_text(char *buf, size_t size, const tp_ampacity_pick *p, int awg)
{
    if (!isfinite(p->size))
        snprintf(buf, size, "none %s", awg ? "up to 4 AWG" : "up to 16 mm2");
    else if (awg)
        snprintf(buf, size, "%.0f AWG (%.1f A)", p->size, p->ampacity);
    else
        snprintf(buf, size, "%.3g mm2 (%.1f A)", p->size * 1e6, p->ampacity);
}

tp_status tp_reportsections_budget(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                   tp_diag *d)
{
    static const char *const qhead[] = {"quantity", "value", "unit"};
    static const char *const chead[] = {"verdict", "check", "value", "limit", "unit", "note"};
    const tp_budget *b = c->budget;
    tp_report_table *t;
    char awg[80], mm2[80], buf[TP_REPORTCASE_WHY];
    int i;
    (void)r;
    (void)d;
    if (!b) {
        missing(s, c, TP_STUDY_BUDGET);
        return TP_OK;
    }
    tp_report_para(s, "Currents, supply headroom, wiring and fuse, as `tepid budget` works them "
                      "out; the running point is the %s (heater at %.1f degC, duty %.3f).",
                   b->holding ? "holding point" : b->out_of_reach ? "full power (the setpoint is "
                                                                    "out of reach)"
                                                                  : "full power",
                   b->t_hold - TP_KELVIN_0C, b->duty_hold);
    t = tp_report_table_add(s, "Currents and power", 3, qhead);
    qrow(t, "supply voltage", 1, b->v, "V");
    qrow(t, "heater resistance at cold start", 3, b->r_cold, "ohm");
    qrow(t, "cold-start current", 2, b->i_cold, "A");
    qrow(t, "cold-start power into the heater", 1, b->p_cold, "W");
    if (b->wire_cold > 0)
        qrow(t, "cold-start loss in the series path", 2, b->wire_cold, "W");
    if (b->circuit.total > 0)
        qrow(t, "series path", 1, 1e3 * b->circuit.total, "mohm");
    qrow(t, "on-current at the running point", 2, b->i_hold_on, "A");
    qrow(t, "mean current at the running point", 2, b->i_hold_avg, "A");
    qrow(t, "mean power at the running point", 1, b->p_hold, "W");
    if (c->desc->n_loads)
        qrow(t, "other loads at cold start", 2, b->i_loads_cold, "A");
    qrow(t, "supply current at cold start", 2, b->i_total_cold, "A");
    qrow(t, "supply current peak while running", 2, b->i_total_hold_peak, "A");
    qrow(t, "supply current mean while running", 2, b->i_total_hold_avg, "A");
    qrow(t, "supply rating", 2, b->i_rating, "A");
    if (isfinite(b->i_rating)) {
        qrow(t, "headroom at cold start", 1,
             100.0 * (b->i_rating - b->i_total_cold) / b->i_rating, "%");
        qrow(t, "headroom while running (mean)", 1,
             100.0 * (b->i_rating - b->i_total_hold_avg) / b->i_rating, "%");
    }
    if (c->desc->wiring.present) {
        qrow(t, "wiring drop at cold start", 3, b->drop_cold, "V");
        qrow(t, "wiring loss at cold start", 2, b->wire_loss_cold, "W");
        qrow(t, "wiring loss while running (mean)", 2, b->wire_loss_hold, "W");
        qrow(t, "wire ampacity", 1, b->ampacity.amps, "A");
    }
    if (tp_isset(c->desc->wiring.switch_resistance))
        qrow(t, "switch loss while running (mean)", 2, b->switch_loss_hold, "W");
    if (b->fuse > 0)
        qrow(t, b->fuse_fitted ? "fuse (fitted)" : "fuse (suggested)", -3, b->fuse, "A");
    qrow(t, "heater power density at cold start", 2, b->density * 1e-4, "W/cm2");
    qrow(t, "power-density limit of the heater type", -3, b->density_limit * 1e-4, "W/cm2");
    wire_text(awg, sizeof awg, &b->wire.awg, 1);
    wire_text(mm2, sizeof mm2, &b->wire.metric, 0);
    tp_report_para(s, "Ampacity table: %s (%s). Smallest wire for %.2f A%s: %s, or %s.",
                   tp_ampacity_table_name(b->wire_cond.installation),
                   tp_ampacity_table_conditions(b->wire_cond.installation), b->wire.amps,
                   isfinite(b->wire.length) ? " within the drop limit" : "", awg, mm2);
    if (b->fuse > 0 && !b->fuse_fitted)
        tp_report_para(s, "Fuse: %.3g A, %s.", b->fuse,
                       b->fuse_below_rule
                           ? "the largest standard size between the running current and the "
                             "wire's ampacity, under 1.25 x the current: it may open on a long "
                             "warm-up; a thicker wire lets the fuse follow the rule"
                           : "the next standard size at or above 1.25 x the cold-start current "
                             "(common practice, no source)");
    if (b->n_checks == 0) {
        tp_report_para(s, "No checks: add supply: and wiring: to check the supply and the "
                          "wiring.");
        return TP_OK;
    }
    t = tp_report_table_add(s, "Checks", 6, chead);
    for (i = 0; i < b->n_checks; i++) {
        const tp_check *k = &b->checks[i];
        tp_report_cell(t, "%s", tp_budget_verdict_name(k->verdict));
        tp_report_cell(t, "%s", k->name);
        tp_report_cell(t, "%.2f", k->value);
        if (isfinite(k->limit))
            tp_report_cell(t, "%.2f", k->limit);
        else
            tp_report_cell(t, "no limit");
        tp_report_cell(t, "%s", k->unit);
        tp_report_cell(t, "%s", k->note);
    }
    budget_verdict(buf, sizeof buf, b);
    tp_report_para(s, "Verdict: %s.", buf);
    return TP_OK;
}

/* ---- protection --------------------------------------------------------------------------- */

static double setting(const tp_guard_settings *s, int k)
{
    const double m[TP_G_COUNT] = {s->rise_window, s->rise_min, s->approach,
                                  s->hold_band,   s->hold_grace, s->ceiling};
    return m[k];
}

/* A threshold as `tepid guard` writes it. */
static void setting_text(int k, double v, char *buf, size_t size)
{
    if (!isfinite(v))
        snprintf(buf, size, "(none)");
    else if (k == TP_G_RISE_WINDOW || k == TP_G_HOLD_GRACE)
        snprintf(buf, size, "%.0f s", v);
    else if (k == TP_G_CEILING)
        snprintf(buf, size, "%.0f degC", v - TP_KELVIN_0C);
    else
        snprintf(buf, size, "%.1f K", v);
}

static void time_or(char *buf, size_t size, double t, const char *none)
{
    if (isfinite(t))
        tp_summary_duration(t, buf, size);
    else
        snprintf(buf, size, "%s", none);
}

static void guard_faults(tp_report_section *s, const tp_guard_study *st)
{
    static const char *const fhead[] = {"fault", "from", "rise", "hold", "ceiling",
                                        "first detection", "surface peak (degC)",
                                        "heater peak (degC)", "service limit"};
    tp_report_table *t = tp_report_table_add(s, "Faults on the nominal case (time to detection "
                                                "by each check; peaks up to the first "
                                                "detection)", 9, fhead);
    int f, from;
    for (f = 0; f < TP_FAULT_COUNT; f++) {
        for (from = 0; from < 2; from++) {
            const tp_guard_fault_run *fr = &st->faults[f][from];
            char a[32], b[32], cc[32], fi[32], sp[32], hp[32], lim[160];
            tp_report_cell(t, "%s", tp_guard_fault_phrase(fr->fault));
            tp_report_cell(t, "%s", from ? "hold" : "cold");
            if (fr->trace.n == 0) {
                int k;
                tp_report_cell(t, "not applicable (the sensor is no node of its own)");
                for (k = 0; k < 6; k++)
                    tp_report_cell(t, "-");
                continue;
            }
            time_or(a, sizeof a, fr->det.rise, "-");
            time_or(b, sizeof b, fr->det.hold, "-");
            time_or(cc, sizeof cc, fr->det.ceiling, "-");
            time_or(fi, sizeof fi, fr->first, "NEVER");
            tp_reportsections_num(sp, sizeof sp, 1, fr->surface_peak - TP_KELVIN_0C);
            tp_reportsections_num(hp, sizeof hp, 1, fr->heater_peak - TP_KELVIN_0C);
            if (fr->limit_layer >= 0) {
                char tl[32];
                time_or(tl, sizeof tl, fr->t_limit, "-");
                snprintf(lim, sizeof lim, "'%s' over %.0f degC at %s%s",
                         st->layer_id[fr->limit_layer],
                         st->layer_limit[fr->limit_layer] - TP_KELVIN_0C, tl,
                         fr->limit_before ? " - BEFORE detection" : " (after detection)");
            } else {
                snprintf(lim, sizeof lim, "%s", st->n_layers ? "not crossed" : "no limits known");
            }
            tp_report_cell(t, "%s", a);
            tp_report_cell(t, "%s", b);
            tp_report_cell(t, "%s", cc);
            tp_report_cell(t, "%s", fi);
            tp_report_cell(t, "%s", sp);
            tp_report_cell(t, "%s", hp);
            tp_report_cell(t, "%s", lim);
        }
    }
}

static void guard_corners(tp_report_section *s, const tp_guard_study *st)
{
    static const char *const chead[] = {"corner", "setpoint at", "rise margin (K)",
                                        "hold margin (s)", "ceiling margin (K)", "trips"};
    tp_report_table *t = tp_report_table_add(s, "Healthy corners (margins: smallest rise minus "
                                                "rise_min, grace minus the longest stay below "
                                                "the band, ceiling minus the highest reading)",
                                             6, chead);
    int k;
    for (k = 0; k < st->n_corners; k++) {
        const tp_guard_corner *co = &st->corners[k];
        double f = tp_guard_first(&co->det);
        char ts[32], a[32], b[32], cc[32];
        time_or(ts, sizeof ts, co->t_setpoint, "never");
        tp_reportsections_num(a, sizeof a, 2, co->rise_margin);
        tp_reportsections_num(b, sizeof b, 0, co->hold_margin);
        tp_reportsections_num(cc, sizeof cc, 1, co->ceiling_margin);
        tp_report_cell(t, "%s", co->name);
        tp_report_cell(t, "%s", ts);
        tp_report_cell(t, "%s", isinf(co->rise_margin) ? "no window judged" : a);
        tp_report_cell(t, "%s", b);
        tp_report_cell(t, "%s", cc);
        tp_report_cell(t, "%s", !isfinite(f)          ? "no"
                                : isfinite(co->det.rise) ? "RISE"
                                : isfinite(co->det.hold) ? "HOLD"
                                                         : "CEILING");
    }
}

tp_status tp_reportsections_guard(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                  tp_diag *d)
{
    static const char *const shead[] = {"setting", "value", "why"};
    const tp_guard_study *st = c->guard;
    const tp_guard_spec *g = &c->desc->guard;
    tp_report_table *t;
    char buf[TP_REPORTCASE_WHY], snippet[512];
    size_t used = 0;
    int k;
    if (!st) {
        missing(s, c, TP_STUDY_GUARD);
        return TP_OK;
    }
    tp_report_para(s, "%d healthy run%s (nominal%s) and %d faults from the cold start and from "
                      "hold, followed %.0f min; reading step near the setpoint %.3f K. Method "
                      "and definitions: docs/guard.md.",
                   st->n_corners, st->n_corners == 1 ? "" : "s",
                   st->n_corners > 1 ? " and every combination of the ranges' ends" : " only",
                   TP_FAULT_COUNT, st->horizon / 60.0, st->resolution);
    if (st->ranges.n_default > 0)
        tp_report_para(s, "The file declares no range for some of supply, resistance and room: "
                          "the defaults (common practice, no source) stand in; declare your "
                          "machine's tolerances (docs/guard.md).");
    snprintf(buf, sizeof buf, "%s (safety factors %.2f in time, %.2f in rise)",
             c->guard_evaluating ? "Settings evaluated" : "Recommended settings", g->time_factor,
             g->rise_factor);
    t = tp_report_table_add(s, buf, 3, shead);
    for (k = 0; k < TP_G_COUNT; k++) {
        setting_text(k, setting(&st->used, k), buf, sizeof buf);
        tp_report_cell(t, "%s", tp_guard_setting_name(k));
        tp_report_cell(t, "%s", buf);
        if (st->given[k]) {
            setting_text(k, setting(&st->rec, k), buf, sizeof buf);
            tp_report_cell(t, "given (recommended: %s)", buf);
        } else {
            tp_report_cell(t, "%s", st->why[k]);
        }
    }
    used += (size_t)snprintf(snippet, sizeof snippet, "guard:\n  settings: {");
    for (k = 0; k < TP_G_COUNT && used < sizeof snippet; k++) {
        setting_text(k, setting(&st->used, k), buf, sizeof buf);
        if (isfinite(setting(&st->used, k)))
            used += (size_t)snprintf(snippet + used, sizeof snippet - used, "%s%s: %s",
                                     k ? ", " : "", tp_guard_setting_name(k), buf);
    }
    if (used < sizeof snippet)
        snprintf(snippet + used, sizeof snippet - used, "}\n");
    tp_report_para(s, "As a config section:");
    tp_report_pre(s, snippet);
    guard_corners(s, st);
    guard_faults(s, st);
    if (st->cutout_required)
        tp_report_para(s, "Switch stuck on: no controller-side cure. At full power a layer passes "
                          "its service limit: an independent thermal cut-out is REQUIRED.");
    else
        tp_report_para(s, "Switch stuck on: no controller-side cure. %s",
                       st->n_layers ? "Every layer stays within its service limit at full "
                                      "power; fit an independent cut-out all the same."
                                    : "No service limits are known in the raw form: judge the "
                                      "equilibrium against your materials; fit an independent "
                                      "cut-out.");
    if (st->has_stuck)
        tp_report_para(s, "Equilibrium at full power (nominal): reading %.1f degC.",
                       st->stuck.reading - TP_KELVIN_0C);
    guard_verdict(buf, sizeof buf, st);
    tp_report_para(s, "Verdict: %s.", buf);
    {
        char path[TP_PATH_MAX];
        tp_status rc = tp_report_figure_path(r, "guard", path, sizeof path, d);
        if (rc == TP_OK)
            rc = tp_figure_guard(path, c->title, st, d);
        if (rc == TP_OK)
            rc = tp_report_figure(r, s, "guard", "Healthy readings (nominal, slowest, deepest "
                                                 "dip) and every fault's reading from cold and "
                                                 "from hold, with the thresholds.", d);
        if (rc != TP_OK)
            return rc;
    }
    return TP_OK;
}

/* ---- surface uniformity (gridded plates) --------------------------------------------------- */

static void stat_row(tp_report_table *t, const char *what, double a, double b, const char *unit,
                     double off)
{
    char x[48], y[48];
    snprintf(x, sizeof x, isfinite(a) ? "%.2f" : "-", a - off);
    snprintf(y, sizeof y, isfinite(b) ? "%.2f" : "-", b - off);
    tp_report_cell(t, "%s (%s)", what, unit);
    tp_report_cell(t, "%s", x);
    tp_report_cell(t, "%s", y);
}

static void cell_row(tp_report_table *t, const char *what, double va, int ia, int ja, double xa,
                     double ya, double vb, int ib, int jb, double xb, double yb)
{
    char x[96], y[96];
    snprintf(x, sizeof x, isfinite(va) ? "%.2f at cell (%d, %d), %.1f, %.1f mm" : "-",
             va - TP_KELVIN_0C, ia, ja, xa * 1e3, ya * 1e3);
    snprintf(y, sizeof y, isfinite(vb) ? "%.2f at cell (%d, %d), %.1f, %.1f mm" : "-",
             vb - TP_KELVIN_0C, ib, jb, xb * 1e3, yb * 1e3);
    tp_report_cell(t, "%s (degC)", what);
    tp_report_cell(t, "%s", x);
    tp_report_cell(t, "%s", y);
}

tp_status tp_reportsections_surface(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                    tp_diag *d)
{
    static const char *const head[] = {"quantity", "at setpoint", "at steady holding"};
    const tp_warmup *w = c->warmup;
    const tp_net_grid *g = c->net->grid;
    const tp_surfacemap_stats *a, *b;
    tp_report_table *t;
    char when[64], caption[200];
    if (!w) {
        missing(s, c, TP_STUDY_WARMUP);
        return TP_OK;
    }
    a = &w->stats_setpoint;
    b = &w->stats_hold;
    tp_report_para(s, "The working surface of the gridded plate, %d x %d cells of %.2f x %.2f "
                      "mm (docs/grid.md), as `tepid warmup` reports it.",
                   g->nx, g->ny, g->width / g->nx * 1e3, g->depth / g->ny * 1e3);
    t = tp_report_table_add(s, "Working-surface map", 3, head);
    stat_row(t, "mean", a->mean, b->mean, "degC", TP_KELVIN_0C);
    stat_row(t, "standard deviation", a->std, b->std, "K", 0.0);
    cell_row(t, "coldest cell", a->min, a->min_i, a->min_j, a->min_x, a->min_y, b->min, b->min_i,
             b->min_j, b->min_x, b->min_y);
    cell_row(t, "hottest cell", a->max, a->max_i, a->max_j, a->max_x, a->max_y, b->max, b->max_i,
             b->max_j, b->max_x, b->max_y);
    stat_row(t, "spread (max - min)", a->spread, b->spread, "K", 0.0);
    stat_row(t, "centre - corners", a->centre_corner, b->centre_corner, "K", 0.0);
    if (w->map_hold) {
        tp_reportsections_duration(when, sizeof when, w->t_all_ready);
        tp_report_para(s, "All of it ready (every cell within %.0f K of its holding value): %s.",
                       TP_SURFACEMAP_READY_BAND, when);
    }
    if (w->map_setpoint) {
        tp_summary_duration(w->history.cross_time, when, sizeof when);
        snprintf(caption, sizeof caption, "Working surface when the reading reaches the "
                                          "setpoint (%s)", when);
        {
        char path[TP_PATH_MAX];
        tp_status st = tp_report_figure_path(r, "map-setpoint", path, sizeof path, d);
        if (st == TP_OK)
            st = tp_figure_surface(path, g, w->map_setpoint, caption, d);
        if (st == TP_OK)
            st = tp_report_figure(r, s, "map-setpoint", caption, d);
        if (st != TP_OK)
            return st;
    }
    }
    snprintf(caption, sizeof caption, "Working surface %s (%d x %d cells)",
             w->map_hold ? "at steady holding" : "at the end of the run", g->nx, g->ny);
    {
        char path[TP_PATH_MAX];
        tp_status st = tp_report_figure_path(r, "map-hold", path, sizeof path, d);
        if (st == TP_OK)
            st = tp_figure_surface(path, g, w->map_hold ? w->map_hold : w->map_final, caption, d);
        if (st == TP_OK)
            st = tp_report_figure(r, s, "map-hold", caption, d);
        if (st != TP_OK)
            return st;
    }
    return TP_OK;
}

/* ---- the model ---------------------------------------------------------------------------- */

/* The state the links are shown at, as `tepid explain` chooses it: the holding point, else
 * full power, else (no steady state) the initial temperatures. */
static const double *model_state(const tp_reportcase *c, const char **what)
{
    if (c->steady && c->steady->holding) {
        *what = "the steady holding state";
        return c->steady->hold.temps;
    }
    if (c->steady) {
        *what = "the full-power steady state";
        return c->steady->full.temps;
    }
    *what = "the initial temperatures (no steady state)";
    return NULL;
}

static void model_nodes(tp_report_section *s, const tp_network *net, const double *t)
{
    static const char *const head[] = {"node", "capacity (J/K)", "initial or fixed (degC)",
                                       "shown at (degC)"};
    tp_report_table *tb = tp_report_table_add(s, "Nodes", 4, head);
    const tp_net_grid *g = net->grid;
    int i, l;
    if (g) {
        for (l = 0; l < g->n_layers; l++) {
            double mean, lo, hi;
            tp_grid_layer_stats(net, l, t, &mean, &lo, &hi);
            tp_report_cell(tb, "%s (%d cells)", g->layer_id[l], g->nx * g->ny);
            tp_report_cell(tb, "%.4g", g->layer_capacity[l]);
            tp_report_cell(tb, "-");
            tp_report_cell(tb, "%.2f (mean)", mean - TP_KELVIN_0C);
        }
    }
    for (i = 0; i < net->n_nodes; i++) {
        const tp_net_node *n = &net->nodes[i];
        if (g && g->from[i] < g->n_layers && n->capacity > 0)
            continue;
        tp_report_cell(tb, "%s", n->id);
        if (n->capacity > 0) {
            tp_report_cell(tb, "%.4g", n->capacity);
            tp_report_cell(tb, "%.2f", n->t0 - TP_KELVIN_0C);
            tp_report_cell(tb, "%.2f", t[i] - TP_KELVIN_0C);
        } else {
            tp_report_cell(tb, "fixed");
            tp_report_cell(tb, "%.2f", n->t0 - TP_KELVIN_0C);
            tp_report_cell(tb, "%.2f", n->t0 - TP_KELVIN_0C);
        }
    }
}

/* The links, one row each as `tepid explain` lists them; a gridded plate's many cell links
 * summed by law and loss path instead. */
static void model_links(tp_report_section *s, const tp_network *net, const double *t)
{
    static const char *const head[] = {"label", "law", "between", "G (W/K)", "h (W/(m2.K))",
                                       "area (m2)"};
    static const char *const ghead[] = {"law", "loss path", "links", "G total (W/K)",
                                        "area total (m2)"};
    tp_report_table *tb;
    int i;
    if (net->grid) {
        double g_sum[LAWS][TP_PATH_COUNT] = {{0}}, a_sum[LAWS][TP_PATH_COUNT] = {{0}};
        int count[LAWS][TP_PATH_COUNT] = {{0}}, law, p;
        for (i = 0; i < net->n_links; i++) {
            const tp_net_link *l = &net->links[i];
            double h, g = tp_network_link_conductance(l, t[l->a], t[l->b], &h);
            g_sum[l->law][l->path] += g;
            a_sum[l->law][l->path] += l->law == TP_LAW_CONDUCTION ? 0.0 : l->area;
            count[l->law][l->path]++;
        }
        tb = tp_report_table_add(s, "Links of the gridded plate, summed by law and loss path",
                                 5, ghead);
        for (law = 0; law < LAWS; law++)
            for (p = 0; p < TP_PATH_COUNT; p++) {
                if (!count[law][p])
                    continue;
                tp_report_cell(tb, "%s", tp_network_law_name((tp_law)law));
                tp_report_cell(tb, "%s", p == TP_PATH_INTERNAL ? "within the plate"
                                                               : tp_network_loss_path_name(
                                                                     (tp_loss_path)p));
                tp_report_cell(tb, "%d", count[law][p]);
                tp_report_cell(tb, "%.4g", g_sum[law][p]);
                if (law == TP_LAW_CONDUCTION)
                    tp_report_cell(tb, "-");
                else
                    tp_report_cell(tb, "%.4g", a_sum[law][p]);
            }
        return;
    }
    tb = tp_report_table_add(s, "Links (* coefficient from a published correlation, evaluated "
                                "at these temperatures; radiation shows the linearised "
                                "coefficient)", 6, head);
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        double h, g = tp_network_link_conductance(l, t[l->a], t[l->b], &h);
        tp_report_cell(tb, "%s", l->label[0] ? l->label : "-");
        tp_report_cell(tb, "%s%s", tp_network_law_name(l->law),
                       l->law == TP_LAW_CONVECTION && l->correlated ? "*" : "");
        tp_report_cell(tb, "%s - %s", net->nodes[l->a].id, net->nodes[l->b].id);
        tp_report_cell(tb, "%.4g", g);
        if (l->law == TP_LAW_CONDUCTION) {
            tp_report_cell(tb, "-");
            tp_report_cell(tb, "-");
        } else {
            tp_report_cell(tb, "%.4g", h);
            tp_report_cell(tb, "%.4g", l->area);
        }
    }
}

/* The correlations the links use, each named once, with the links that use it. */
static void model_correlations(tp_report_section *s, const tp_network *net, const double *t)
{
    const char *seen[16];
    int uses[16], n = 0, i, k, radiation = 0, fixed = 0;
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        tp_convection_info info;
        if (l->law == TP_LAW_RADIATION)
            radiation++;
        if (l->law != TP_LAW_CONVECTION)
            continue;
        if (!l->correlated) {
            fixed++;
            continue;
        }
        tp_convection_h(&l->conv, t[l->a], t[l->b], &info);
        for (k = 0; k < n; k++)
            if (strcmp(seen[k], info.method) == 0)
                break;
        if (k == n && n < 16) {
            seen[n] = info.method;
            uses[n++] = 0;
        }
        if (k < 16)
            uses[k]++;
    }
    tp_report_subhead(s, "Correlations");
    for (k = 0; k < n; k++)
        tp_report_item(s, "Convection: %s (%d link%s; docs/correlations.md)", seen[k], uses[k],
                       uses[k] == 1 ? "" : "s");
    if (fixed)
        tp_report_item(s, "Convection with a coefficient given in the file (%d link%s)", fixed,
                       fixed == 1 ? "" : "s");
    if (radiation)
        tp_report_item(s, "Radiation: the Stefan-Boltzmann law between grey surfaces, eps sigma "
                          "A (Ta^4 - Tb^4) (%d link%s)", radiation, radiation == 1 ? "" : "s");
    if (!n && !fixed && !radiation)
        tp_report_item(s, "None: every link is a conductance.");
}

static void model_materials(tp_report_section *s, const tp_reportcase *c)
{
    static const char *const head[] = {"layer", "material", "thickness (mm)",
                                       "density (kg/m3)", "specific heat (J/(kg.K))",
                                       "conductivity (W/(m.K))", "emissivity",
                                       "service limit (degC)"};
    const tp_description *desc = c->desc;
    tp_report_table *t;
    size_t i;
    tp_report_subhead(s, "Materials");
    if (desc->form != TP_FORM_PHYSICAL || !desc->bed.present) {
        tp_report_para(s, "None: the raw network form gives capacities and conductances "
                          "directly.");
        return;
    }
    t = tp_report_table_add(s, "Layers, bottom to top", 8, head);
    for (i = 0; i < desc->bed.n_layers; i++) {
        const tp_layer *l = &desc->bed.layers[i];
        const tp_material_spec *m = tp_materials_find(desc, l->material);
        char e[32], lim[32];
        tp_report_cell(t, "%s", l->id);
        tp_report_cell(t, "%s", l->material);
        tp_report_cell(t, "%.2f", l->thickness * 1e3);
        if (!m) {
            int k;
            for (k = 0; k < 5; k++)
                tp_report_cell(t, "-");
            continue;
        }
        tp_reportsections_num(e, sizeof e, 2, m->emissivity);
        tp_reportsections_num(lim, sizeof lim, 0, m->max_temperature - TP_KELVIN_0C);
        tp_report_cell(t, "%.4g", m->density);
        tp_report_cell(t, "%.4g", m->specific_heat);
        tp_report_cell(t, "%.4g", tp_materials_k_through(m));
        tp_report_cell(t, "%s", e);
        tp_report_cell(t, "%s", lim);
    }
    for (i = 0; i < desc->bed.n_layers; i++) {
        const tp_material_spec *m = tp_materials_find(desc, desc->bed.layers[i].material);
        size_t j;
        for (j = 0; j < i; j++)
            if (strcmp(desc->bed.layers[j].material, desc->bed.layers[i].material) == 0)
                break;
        if (m && j == i)
            tp_report_item(s, "%s (%s): %s", m->id, m->name[0] ? m->name : m->id,
                           m->source[0] ? m->source : "no source given");
    }
}

tp_status tp_reportsections_model(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                  tp_diag *d)
{
    const tp_network *net = c->net;
    const char *what = NULL;
    const double *t = model_state(c, &what);
    double *initial = NULL;
    int i;
    (void)r;
    (void)d;
    if (!t) {
        initial = malloc((size_t)net->n_nodes * sizeof *initial);
        if (!initial)
            return TP_ERR_NOMEM;
        for (i = 0; i < net->n_nodes; i++)
            initial[i] = net->nodes[i].t0;
        t = initial;
    }
    tp_report_para(s, "The network tepid assembled from the file, as `tepid explain` shows it: "
                      "%d nodes (%d with capacity), %d links, %d source%s; temperature-dependent "
                      "links evaluated at %s.",
                   net->n_nodes, net->n_free, net->n_links, net->n_sources,
                   net->n_sources == 1 ? "" : "s", what);
    model_nodes(s, net, t);
    model_links(s, net, t);
    for (i = 0; i < net->n_sources; i++) {
        const tp_net_source *src = &net->sources[i];
        if (src->kind == TP_SRC_POWER)
            tp_report_item(s, "source %s: %g W into '%s'%s", src->id, src->power,
                           net->nodes[src->nodes[0]].id, src->max_duty < 1.0 ? ", duty limited"
                                                                              : "");
        else
            tp_report_item(s, "source %s: %g V across %g ohm (tempco %g 1/K at %.1f degC) into "
                              "'%s'%s", src->id, src->supply, src->r0, src->tempco,
                           src->tref - TP_KELVIN_0C, net->nodes[src->nodes[0]].id,
                           src->max_duty < 1.0 ? ", duty limited" : "");
    }
    model_materials(s, c);
    model_correlations(s, net, t);
    free(initial);
    return TP_OK;
}

/* ---- the input ---------------------------------------------------------------------------- */

typedef struct defaults_ctx {
    const tp_reportcase *c;
    tp_report_table *t;
    int n;
} defaults_ctx;

/* A numeric key the file does not give but the description holds: a default. */
static void default_row(const tp_config_key_info *key, void *p)
{
    defaults_ctx *x = p;
    double v;
    const char *unit;
    if (key->kind != TP_KEY_NUMBER || tp_yamltree_find(x->c->doc, key->path) ||
        tp_config_get(x->c->desc, key->path, &v) != TP_OK || !isfinite(v))
        return;
    unit = key->dim == TP_DIM_NONE ? "-" : tp_units_si_name(key->dim);
    if (key->dim == TP_DIM_TEMPERATURE) {
        v -= TP_KELVIN_0C;
        unit = "degC";
    }
    tp_report_cell(x->t, "%s", key->path);
    tp_report_cell(x->t, "%.6g", v);
    tp_report_cell(x->t, "%s", unit);
    x->n++;
}

tp_status tp_reportsections_input(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                  tp_diag *d)
{
    static const char *const head[] = {"key", "value", "unit"};
    defaults_ctx x;
    int i;
    (void)r;
    (void)d;
    tp_report_para(s, "The config file %s as given:", c->file);
    tp_report_pre(s, c->doc->text ? c->doc->text : "");
    if (c->n_sets) {
        tp_report_para(s, "With these overrides from the command line:");
        for (i = 0; i < c->n_sets; i++)
            tp_report_item(s, "--set %s", c->sets[i]);
    }
    x.c = c;
    x.n = 0;
    x.t = tp_report_table_add(s, "Values the file leaves to their defaults (SI units, "
                                 "temperatures in degC)", 3, head);
    tp_config_each_key(c->desc, 0, default_row, &x);
    if (x.n == 0)
        tp_report_cell(x.t, "(none)"), tp_report_cell(x.t, "-"), tp_report_cell(x.t, "-");
    return TP_OK;
}

/* ---- provenance --------------------------------------------------------------------------- */

tp_status tp_reportsections_provenance(tp_report *r, tp_report_section *s,
                                       const tp_reportcase *c, tp_diag *d)
{
    static const char *const head[] = {"item", "value"};
    tp_report_table *t = tp_report_table_add(s, NULL, 2, head);
    int i;
    (void)r;
    (void)d;
    tp_report_cell(t, "tepid version");
    tp_report_cell(t, "%s", c->version);
    for (i = 0; i < c->n_libs; i++) {
        tp_report_cell(t, "built with %s", c->lib_name[i]);
        tp_report_cell(t, "%s", c->lib_version[i]);
    }
    tp_report_cell(t, "made (UTC)");
    tp_report_cell(t, "%s", c->date);
    tp_report_cell(t, "command line");
    tp_report_cell(t, "%s", c->command);
    tp_report_cell(t, "input file");
    tp_report_cell(t, "%s", c->file);
    tp_report_cell(t, "SHA-256 of the input file");
    tp_report_cell(t, "%s", c->hash);
    return TP_OK;
}
