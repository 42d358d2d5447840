/* The sections of the design-review report on a heating cycle: the programme a scheduled
 * warm-up followed (as `tepid warmup` reports it per segment, with the time above its --above
 * levels) and the cool-down from the holding state (as `tepid cool` reports it). */
#include <math.h>
#include <stdio.h>

#include "coolout.h"
#include "figure.h"
#include "reportcycle.h"
#include "summary.h"
#include "units.h"

static const char *num(char *buf, size_t size, int decimals, double v)
{
    return tp_reportsections_num(buf, size, decimals, v);
}

/* A figure drawn into the report's scratch folder by `st` (already the drawing's status), then
 * added to the section. */
static tp_status add_figure(tp_report *r, tp_report_section *s, const char *name,
                            const char *caption, tp_status st, tp_diag *d)
{
    return st == TP_OK ? tp_report_figure(r, s, name, caption, d) : st;
}

/* ---- programme ---------------------------------------------------------------------------- */

/* The setpoint a segment moves between, in words for its table cell. */
static void segment_setpoint(char *buf, size_t size, const tp_schedule_part *p)
{
    switch (p->kind) {
    case TP_SCHEDULE_RAMP:
        snprintf(buf, size, "%.1f to %.1f", p->from - TP_KELVIN_0C, p->to - TP_KELVIN_0C);
        break;
    case TP_SCHEDULE_STEP:
    case TP_SCHEDULE_HOLD:
        snprintf(buf, size, "%.1f", p->to - TP_KELVIN_0C);
        break;
    case TP_SCHEDULE_OFF:
        snprintf(buf, size, "heater off");
        break;
    }
}

/* The segments: times, setpoints and rates (requested, and achieved by the reading and the
 * surface, least-squares slopes: docs/metrics.md). */
static void programme_rates(tp_report_section *s, const tp_program *p)
{
    static const char *const head[] = {"segment", "kind", "start", "end", "setpoint (degC)",
                                       "rate asked (K/s)", "reading rate (K/s)",
                                       "surface rate (K/s)"};
    tp_report_table *t = tp_report_table_add(s, "Programme segments and their rates", 8, head);
    char a[48], b[32], c[32];
    int k;
    for (k = 0; k < p->n; k++) {
        const tp_program_segment *g = &p->seg[k];
        tp_report_cell(t, "%d", k + 1);
        tp_report_cell(t, "%s", tp_schedule_kind_name(g->part.kind));
        tp_summary_duration(g->part.t0, b, sizeof b);
        tp_summary_duration(g->part.t1, c, sizeof c);
        tp_report_cell(t, "%s", b);
        tp_report_cell(t, "%s", c);
        segment_setpoint(a, sizeof a, &g->part);
        tp_report_cell(t, "%s", a);
        tp_report_cell(t, "%s", num(a, sizeof a, 3, g->part.rate));
        tp_report_cell(t, "%s", num(a, sizeof a, 3, g->rate_reading));
        tp_report_cell(t, "%s", num(a, sizeof a, 3, g->rate_surface));
    }
}

/* The segments' tracking: errors, the share at the duty limit, the overshoot after ramps and
 * steps; then a line for each segment the heater cannot keep up with. */
static void programme_tracking(tp_report_section *s, const tp_program *p)
{
    static const char *const head[] = {"segment",
                                       "reading error max (K)",
                                       "reading error RMS (K)",
                                       "surface error max (K)",
                                       "surface error RMS (K)",
                                       "at duty limit (%)",
                                       "overshoot, reading (K)",
                                       "overshoot, surface (K)"};
    tp_report_table *t = tp_report_table_add(s, "Programme tracking", 8, head);
    char a[32];
    int k;
    for (k = 0; k < p->n; k++) {
        const tp_program_segment *g = &p->seg[k];
        tp_report_cell(t, "%d", k + 1);
        tp_report_cell(t, "%s", num(a, sizeof a, 2, g->err_max_reading));
        tp_report_cell(t, "%s", num(a, sizeof a, 2, g->err_rms_reading));
        tp_report_cell(t, "%s", num(a, sizeof a, 2, g->err_max_surface));
        tp_report_cell(t, "%s", num(a, sizeof a, 2, g->err_rms_surface));
        tp_report_cell(t, "%s", num(a, sizeof a, 0, 100.0 * g->at_limit));
        tp_report_cell(t, "%s", num(a, sizeof a, 2, g->overshoot_reading));
        tp_report_cell(t, "%s", num(a, sizeof a, 2, g->overshoot_surface));
    }
    for (k = 0; k < p->n; k++) {
        const tp_program_segment *g = &p->seg[k];
        if (!g->limited)
            continue;
        if (isfinite(g->follow_rate))
            tp_report_item(s, "Segment %d: the heater cannot keep up; at %.1f degC the plate "
                              "follows at most %.3f K/s.", k + 1, g->follow_at - TP_KELVIN_0C,
                           g->follow_rate);
        else
            tp_report_item(s, "Segment %d: the heater cannot keep up.", k + 1);
    }
}

/* The time above each --above level. */
static void programme_above(tp_report_section *s, const tp_program *p)
{
    static const char *const head[] = {"level (degC)", "reading above it", "surface above it"};
    tp_report_table *t;
    char a[32], b[32];
    int k;
    if (p->n_above == 0) {
        tp_report_para(s, "Give `--above TEMP` (as to `tepid warmup`) for the time the reading "
                          "and the surface spend above a level, e.g. a solder's liquidus.");
        return;
    }
    t = tp_report_table_add(s, "Time above", 3, head);
    for (k = 0; k < p->n_above; k++) {
        const tp_program_above *x = &p->above[k];
        tp_summary_duration(x->t_reading, a, sizeof a);
        tp_summary_duration(x->t_surface, b, sizeof b);
        tp_report_cell(t, "%.1f", x->level - TP_KELVIN_0C);
        tp_report_cell(t, "%s", a);
        tp_report_cell(t, "%s", isfinite(x->t_surface) ? b : "-");
    }
}

tp_status tp_reportcycle_programme(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                   tp_diag *d)
{
    const tp_program *p = c->program;
    char path[TP_PATH_MAX], caption[256];
    tp_status st;
    if (!c->warmup) {
        tp_report_para(s, "Not available for this case: %s", c->why[TP_STUDY_WARMUP]);
        return TP_OK;
    }
    if (!c->scheduled) {
        tp_report_para(s, "No programme: the controller holds one setpoint (no "
                          "`control.schedule`). The warm-up's time above the levels asked for:");
        programme_above(s, p);
        return TP_OK;
    }
    tp_report_para(s, "The warm-up follows `control.schedule` (docs/control.md), as `tepid "
                      "warmup` reports it segment by segment (definitions in docs/metrics.md, "
                      "\"Programmes\"): times from switch-on; the achieved rates are "
                      "least-squares slopes over the segment; the errors are the reading's and "
                      "the working surface's distance from the setpoint as it moves.");
    programme_rates(s, p);
    programme_tracking(s, p);
    programme_above(s, p);
    snprintf(caption, sizeof caption, "Programme of %s: the setpoint as scheduled with the reading "
                                      "and the surface above; their distance from it below; "
                                      "each segment's start marked.", c->title);
    st = tp_report_figure_path(r, "programme", path, sizeof path, d);
    if (st == TP_OK)
        st = tp_figure_programme(path, c->title, c->warmup, d);
    return add_figure(r, s, "programme", caption, st, d);
}

/* ---- cool-down ---------------------------------------------------------------------------- */

tp_status tp_reportcycle_cool(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                              tp_diag *d)
{
    static const char *const head[] = {"falls below", "level (degC)", "after switch-off"};
    const tp_cooldown *cd = c->cool;
    char path[TP_PATH_MAX], caption[256], name[96], t[32];
    tp_report_table *tb;
    tp_status st;
    int k;
    if (!cd) {
        tp_report_para(s, "Not available for this case: %s", c->why[TP_STUDY_COOL]);
        return TP_OK;
    }
    tp_report_para(s, "The heater switched off at the steady holding state%s, as `tepid cool` "
                      "reports it: the touch surface (%s) is %.1f degC at switch-off.",
                   c->scheduled ? " at the programme's highest setpoint" : "",
                   c->net->grid ? "the working surface's hottest cell"
                   : cd->top_material ? "the working-surface estimate"
                                      : "the hottest node",
                   cd->start - TP_KELVIN_0C);
    if (cd->top_material)
        tp_report_para(s, "Top layer: %s; the burn thresholds of the %s class (EN ISO 13732-1; "
                          "docs/cool.md).", cd->top_material, tp_cooldown_class_name(cd->cls));
    else
        tp_report_para(s, "A raw network has no materials: the touch surface is its hottest "
                          "node, with the metal class's burn thresholds, the lowest (EN ISO "
                          "13732-1; docs/cool.md).");
    tb = tp_report_table_add(s, "Cool-down times", 3, head);
    for (k = 0; k < cd->n_levels; k++) {
        const tp_cooldown_level *l = &cd->levels[k];
        tp_summary_duration(l->time, t, sizeof t);
        tp_report_cell(tb, "%s", tp_coolout_level_name(cd, l, name, sizeof name));
        tp_report_cell(tb, "%.1f", l->level - TP_KELVIN_0C);
        tp_report_cell(tb, "%s", isfinite(l->time) ? t : "not within 24 h");
    }
    tp_report_para(s, "%s", tp_coolout_note);
    snprintf(caption, sizeof caption, "Cool-down of %s with the heater off: the touch surface%s "
                                      "against the burn thresholds and the room + %.0f K.",
             c->title, cd->air_node >= 0 ? " and the chamber air" : "", TP_COOLDOWN_ROOM_MARGIN);
    st = tp_report_figure_path(r, "cool", path, sizeof path, d);
    if (st == TP_OK)
        st = tp_coolout_figure(path, c->title, cd, d);
    return add_figure(r, s, "cool", caption, st, d);
}
