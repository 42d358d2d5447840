/* tepid guard: protection thresholds from worst-case healthy runs, tested against injected
 * faults; or the evaluation of given thresholds (--rise-window ... or guard.settings:). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "figure.h"
#include "guard.h"
#include "json.h"
#include "plot.h"
#include "session.h"
#include "summary.h"
#include "units.h"
#include "verbs.h"

static const tp_opt guard_opts[] = {
    {"rise-window", 0, 1, 0, 0, "TIME", "evaluate this rise_window (e.g. 40s)"},
    {"rise-min", 0, 1, 0, 0, "KELVIN", "evaluate this rise_min (e.g. 2K)"},
    {"approach", 0, 1, 0, 0, "KELVIN", "evaluate this approach (e.g. 4K)"},
    {"hold-band", 0, 1, 0, 0, "KELVIN", "evaluate this hold_band (e.g. 3K)"},
    {"hold-grace", 0, 1, 0, 0, "TIME", "evaluate this hold_grace (e.g. 60s)"},
    {"ceiling", 0, 1, 0, 0, "TEMP", "evaluate this ceiling (e.g. '120 degC')"},
    {"strict", 0, 0, 0, 0, NULL, "exit 3 when a healthy corner trips or a fault crosses a "
                                 "service limit before it is detected"},
    {"json", 0, 1, 0, 1, "FILE", "write every figure as JSON (- for standard output)"},
    {"plot", 0, 1, 0, TP_OUT_FIGURE, "FILE", "draw the worst healthy readings and the faults' "
                                             "readings with the thresholds"},
    TP_OPT_SET,
    TP_OPT_QUIET,
    TP_OPT_END,
};

static const struct {
    const char *opt;
    tp_dim dim;
} setting_opts[TP_G_COUNT] = {
    {"rise-window", TP_DIM_TIME},     {"rise-min", TP_DIM_INTERVAL},
    {"approach", TP_DIM_INTERVAL},    {"hold-band", TP_DIM_INTERVAL},
    {"hold-grace", TP_DIM_TIME},      {"ceiling", TP_DIM_TEMPERATURE},
};

static double *member(tp_guard_settings *s, int k)
{
    double *m[TP_G_COUNT] = {&s->rise_window, &s->rise_min, &s->approach,
                             &s->hold_band,   &s->hold_grace, &s->ceiling};
    return m[k];
}

static double value(const tp_guard_settings *s, int k)
{
    const double m[TP_G_COUNT] = {s->rise_window, s->rise_min, s->approach,
                                  s->hold_band,   s->hold_grace, s->ceiling};
    return m[k];
}

/* The settings to evaluate: guard.settings from the file, each overridden by its option. */
static tp_status given_settings(const tp_cli *cli, const tp_description *desc, tp_guard_settings *g,
                                tp_diag *d)
{
    int k;
    if (desc->guard.settings.present)
        *g = desc->guard.settings;
    else
        *g = (tp_guard_settings){0, TP_UNSET, TP_UNSET, TP_UNSET, TP_UNSET, TP_UNSET, TP_UNSET};
    for (k = 0; k < TP_G_COUNT; k++) {
        const char *v = tp_cli_get(cli, setting_opts[k].opt), *hint;
        char msg[256], where[32];
        double x;
        if (!v)
            continue;
        snprintf(where, sizeof where, "--%s", setting_opts[k].opt);
        if (tp_units_parse(v, setting_opts[k].dim, &x, msg, sizeof msg, &hint) != TP_OK) {
            tp_diag_error(d, (tp_loc){where, 1, 1}, NULL, hint, "%s", msg);
            return TP_ERR_USAGE;
        }
        if (!(x > 0) && k != TP_G_APPROACH && k != TP_G_HOLD_GRACE) {
            tp_diag_error(d, (tp_loc){where, 1, 1}, NULL, "use a value above zero",
                          "must be positive, got '%s'", v);
            return TP_ERR_USAGE;
        }
        if (x < 0) {
            tp_diag_error(d, (tp_loc){where, 1, 1}, NULL, "use zero or more",
                          "must not be negative, got '%s'", v);
            return TP_ERR_USAGE;
        }
        *member(g, k) = x;
        g->present = 1;
    }
    return TP_OK;
}

/* ---- text --------------------------------------------------------------------------------- */

static void fmt_time(double t, char *buf, size_t size)
{
    if (isfinite(t))
        tp_summary_duration(t, buf, size);
    else
        snprintf(buf, size, "-");
}

static void fmt_setting(int k, double v, char *buf, size_t size)
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

static void fmt_temp(double t, char *buf, size_t size)
{
    if (isfinite(t))
        snprintf(buf, size, "%.1f", t - TP_KELVIN_0C);
    else
        snprintf(buf, size, "-");
}

static const char *const origin_names[] = {"none", "declared", "default"};

/* One range for the summary: "supply 22.8 to 25.2 V (declared)". */
static void fmt_range(const tp_guard_study *st, int k, char *buf, size_t size)
{
    const tp_guard_range *r = &st->ranges.r[k];
    const char *name = k == TP_RANGE_RESISTANCE ? "heater resistance" : tp_guard_range_name(k);
    double off = k == TP_RANGE_ROOM ? TP_KELVIN_0C : 0.0;
    const char *unit = k == TP_RANGE_SUPPLY ? "V" : k == TP_RANGE_RESISTANCE ? "ohm"
                       : k == TP_RANGE_ROOM ? "degC" : "m/s";
    char tol[32] = "";
    if (r->origin == TP_RANGE_NONE || !(r->hi > r->lo)) {
        snprintf(buf, size, "%s not varied", name);
        return;
    }
    if (k == TP_RANGE_RESISTANCE)
        snprintf(tol, sizeof tol, "+-%.3g %%, ", 100.0 * r->tolerance);
    else if (k == TP_RANGE_SUPPLY && r->origin == TP_RANGE_DEFAULT)
        snprintf(tol, sizeof tol, "+-%.3g %%, ", 100.0 * TP_GUARD_DEFAULT_SUPPLY);
    snprintf(buf, size, "%s %.4g to %.4g %s (%s%s)", name, r->lo - off, r->hi - off, unit, tol,
             origin_names[r->origin]);
}

/* The healthy ranges and, when defaults stand in for some, a line that says so. */
static void print_ranges(FILE *fp, const tp_guard_study *st)
{
    char buf[128];
    int k, n = 0;
    fprintf(fp, "  healthy ranges:");
    for (k = 0; k < TP_RANGE_COUNT; k++) {
        fmt_range(st, k, buf, sizeof buf);
        fprintf(fp, "%s %s", k ? "," : "", buf);
    }
    fputc('\n', fp);
    if (st->ranges.n_default > 0) {
        fprintf(fp, "  ! guard: declares no range for");
        for (k = 0; k < TP_RANGE_COUNT; k++)
            if (st->ranges.r[k].origin == TP_RANGE_DEFAULT)
                fprintf(fp, "%s %s", n++ ? "," : "", tp_guard_range_name(k));
        fprintf(fp, ": the defaults (common practice, no source) stand in; declare your "
                    "machine's tolerances (docs/guard.md)\n");
    }
    if (st->n_corners == 1)
        fprintf(fp, "  ! no healthy range at all: the thresholds come from the nominal run alone "
                    "and are not robust\n");
}

static void print_settings(FILE *fp, const tp_guard_study *st, int evaluating)
{
    const tp_guard_spec *g = &st->desc->guard;
    char buf[64];
    int k, n;
    fprintf(fp, "  %s (safety factors %.2f in time, %.2f in rise):\n",
            evaluating ? "settings evaluated" : "recommended settings", g->time_factor,
            g->rise_factor);
    for (k = 0; k < TP_G_COUNT; k++) {
        fmt_setting(k, value(&st->used, k), buf, sizeof buf);
        if (st->given[k])
            fprintf(fp, "    %-12s %-10s given", tp_guard_setting_name(k), buf);
        else
            fprintf(fp, "    %-12s %-10s %s", tp_guard_setting_name(k), buf, st->why[k]);
        if (st->given[k]) {
            char rec[64];
            fmt_setting(k, value(&st->rec, k), rec, sizeof rec);
            fprintf(fp, " (recommended: %s)", rec);
        }
        fputc('\n', fp);
    }
    fprintf(fp, "  as a config section:\n    guard:\n      settings: {");
    for (k = 0, n = 0; k < TP_G_COUNT; k++) {
        fmt_setting(k, value(&st->used, k), buf, sizeof buf);
        if (isfinite(value(&st->used, k)))
            fprintf(fp, "%s%s: %s", n++ ? ", " : "", tp_guard_setting_name(k), buf);
    }
    fprintf(fp, "}\n");
}

static void print_corners(FILE *fp, const tp_guard_study *st)
{
    int c;
    char ts[32], first[32], rm[32];
    fprintf(fp, "\n  healthy corners (margins: smallest rise minus rise_min, grace minus the "
                "longest stay below the band, ceiling minus the highest reading)\n");
    fprintf(fp, "    %-44s %11s %9s %9s %9s %8s\n", "corner", "setpoint at", "rise K",
            "hold s", "ceil K", "trips");
    for (c = 0; c < st->n_corners; c++) {
        const tp_guard_corner *co = &st->corners[c];
        double f = tp_guard_first(&co->det);
        fmt_time(co->t_setpoint, ts, sizeof ts);
        if (isfinite(f))
            snprintf(first, sizeof first, "%s", isfinite(co->det.rise) ? "RISE"
                                                : isfinite(co->det.hold) ? "HOLD" : "CEILING");
        else
            snprintf(first, sizeof first, "no");
        if (isnan(co->rise_margin))
            snprintf(rm, sizeof rm, "-");
        else
            snprintf(rm, sizeof rm, "%.2f", co->rise_margin);
        fprintf(fp, "    %-44s %11s %9s %9.0f %9.1f %8s\n", co->name,
                isfinite(co->t_setpoint) ? ts : "never", rm, co->hold_margin,
                co->ceiling_margin, first);
    }
}

/* One fault run's row: its label (the fault and where it started), each check's detection,
 * the first, the peaks up to it and the service limit. */
static void print_fault_row(FILE *fp, const tp_guard_study *st, const tp_guard_fault_run *fr,
                            const char *from)
{
    char r[32], h[32], c[32], fi[32], sp[32], hp[32], lim[160];
    if (fr->trace.n == 0) {
        fprintf(fp, "    %-28s %-5s not applicable (the sensor is no node of its own)\n",
                tp_guard_fault_phrase(fr->fault), from);
        return;
    }
    fmt_time(fr->det.rise, r, sizeof r);
    fmt_time(fr->det.hold, h, sizeof h);
    fmt_time(fr->det.ceiling, c, sizeof c);
    fmt_time(fr->first, fi, sizeof fi);
    fmt_temp(fr->surface_peak, sp, sizeof sp);
    fmt_temp(fr->heater_peak, hp, sizeof hp);
    if (fr->limit_layer >= 0) {
        char tl[32];
        fmt_time(fr->t_limit, tl, sizeof tl);
        snprintf(lim, sizeof lim, "'%s' over %.0f degC at %s%s", st->layer_id[fr->limit_layer],
                 st->layer_limit[fr->limit_layer] - TP_KELVIN_0C, tl,
                 fr->limit_before ? " - BEFORE detection" : " (after detection)");
    } else {
        snprintf(lim, sizeof lim, "%s", st->n_layers ? "not crossed" : "no limits known");
    }
    fprintf(fp, "    %-28s %-5s %10s %10s %10s %10s %9s %9s  %s\n",
            tp_guard_fault_phrase(fr->fault), from, r, h, c, isfinite(fr->first) ? fi : "NEVER",
            sp, hp, lim);
}

static const char *const mid_names[TP_GUARD_MID_COUNT] = {"ramp", "hold"};

static void print_faults(FILE *fp, const tp_guard_study *st)
{
    int f, from, m;
    fprintf(fp, "\n  faults on the nominal case (time to detection by each check; peaks up to the "
                "first detection)\n");
    fprintf(fp, "    %-28s %-5s %10s %10s %10s %10s %9s %9s  %s\n", "fault", "from", "rise",
            "hold", "ceiling", "first", "surface", "heater", "service limit");
    for (f = 0; f < TP_FAULT_COUNT; f++)
        for (from = 0; from < 2; from++)
            print_fault_row(fp, st, &st->faults[f][from], from ? "hold" : "cold");
    if (!st->scheduled)
        return;
    fprintf(fp, "\n  faults injected during the schedule (times from the start of the schedule; "
                "from = the segment it was injected in)\n");
    for (m = 0; m < TP_GUARD_MID_COUNT; m++) {
        const tp_guard_injection *in = &st->inject[m];
        char at[32];
        if (in->segment < 0) {
            fprintf(fp, "    mid-%s: the schedule has no %s segment; not injected\n",
                    mid_names[m], mid_names[m]);
            continue;
        }
        fmt_time(in->t, at, sizeof at);
        fprintf(fp, "    mid-%s: injected at %s, the middle of segment %d (%s), setpoint "
                    "%.1f degC\n", mid_names[m], at, in->segment + 1, mid_names[m],
                in->setpoint - TP_KELVIN_0C);
        for (f = 0; f < TP_FAULT_COUNT; f++) {
            const tp_guard_fault_run *fr = &st->mid[f][m];
            char delay[32];
            print_fault_row(fp, st, fr, mid_names[m]);
            if (fr->trace.n > 0 && isfinite(fr->first)) {
                fmt_time(fr->first - in->t, delay, sizeof delay);
                fprintf(fp, "    %-28s %-5s detected %s after the injection%s\n", "", "",
                        delay, fr->first < in->t ? " (BEFORE it: a check trips the healthy "
                                                   "run)" : "");
            }
        }
    }
}

/* The healthy corners' trips on the schedule, each with its check, time and segment. */
static void print_schedule_trips(FILE *fp, const tp_guard_study *st)
{
    static const char *const checks[3] = {"rise", "hold", "ceiling"};
    int c, n = 0;
    for (c = 0; c < st->n_corners; c++) {
        const tp_guard_trip *tr = &st->trips[c];
        char at[32];
        if (tr->check < 0)
            continue;
        fmt_time(tr->t, at, sizeof at);
        fprintf(fp, "  ! FALSE TRIP on the schedule: corner '%s', the %s check fires at %s in "
                    "segment %d (%s) of a healthy run\n", st->corners[c].name, checks[tr->check],
                at, tr->segment + 1, tp_schedule_kind_name(st->plan.part[tr->segment].kind));
        n++;
    }
    if (n == 0)
        fprintf(fp, "  no check trips a healthy corner on the schedule's ramps and holds\n");
}

static void print_stuck(FILE *fp, const tp_guard_study *st)
{
    fprintf(fp, "\n  switch stuck on: no controller-side cure.\n");
    if (st->has_stuck) {
        fprintf(fp, "    equilibrium at full power (nominal): reading %.1f degC", st->stuck.reading -
                                                                              TP_KELVIN_0C);
        if (st->stuck_over_layer >= 0)
            fprintf(fp, "; layer '%s' above its %.0f degC service limit",
                    st->layer_id[st->stuck_over_layer],
                    st->layer_limit[st->stuck_over_layer] - TP_KELVIN_0C);
        fputc('\n', fp);
    }
    if (st->stuck_worst >= 0)
        fprintf(fp, "    hottest corner '%s': heater layer %.1f degC, reading %.1f degC\n",
                st->corners[st->stuck_worst].name,
                st->corners[st->stuck_worst].stuck_heater - TP_KELVIN_0C,
                st->corners[st->stuck_worst].stuck_reading - TP_KELVIN_0C);
    if (st->cutout_required)
        fprintf(fp, "    -> an independent thermal cut-out is REQUIRED: at full power a layer "
                    "passes its service limit.\n");
    else if (st->n_layers)
        fprintf(fp, "    -> every layer stays within its service limit at full power; fit an "
                    "independent cut-out all the same.\n");
    else
        fprintf(fp, "    -> no service limits are known in the raw form: judge the equilibrium "
                    "against your materials; fit an independent cut-out.\n");
}

/* What a scheduled study does: the corners follow the schedule; the holding state and the
 * ceiling are judged at its highest setpoint. */
static void print_schedule_head(FILE *fp, const tp_guard_study *st)
{
    char len[32];
    fmt_time(st->plan.t_end, len, sizeof len);
    fprintf(fp, "  control.schedule: %d segments over %s; every healthy corner follows it, the "
                "checks judge the setpoint it moves; the faults from hold start from holding "
                "its highest setpoint (%.1f degC), and every fault is also injected mid-ramp and "
                "mid-hold\n", st->plan.n, len, st->setpoint - TP_KELVIN_0C);
}

static void summary(FILE *fp, const tp_session *s, const tp_guard_study *st, int evaluating)
{
    tp_caution cautions[TP_CAUTIONS_MAX];
    int k;
    fprintf(fp, "tepid guard %s%s%s\n  ", s->cli->file, s->desc.title[0] ? ": " : "",
            s->desc.title);
    tp_summary_network(fp, s->net);
    if (st->scheduled)
        print_schedule_head(fp, st);
    fprintf(fp, "  %d healthy run%s (nominal%s), %d faults from the cold start and from hold, "
                "followed %.0f min; reading step near the setpoint %.3f K\n",
            st->n_corners, st->n_corners == 1 ? "" : "s",
            st->n_corners > 1 ? " and every combination of the ranges' ends" : " only",
            TP_FAULT_COUNT,
            st->horizon / 60.0, st->resolution);
    print_ranges(fp, st);
    fputc('\n', fp);
    print_settings(fp, st, evaluating);
    print_corners(fp, st);
    if (st->scheduled)
        print_schedule_trips(fp, st);
    print_faults(fp, st);
    print_stuck(fp, st);
    fprintf(fp, "\n  verdict: %d healthy corner%s tripped; %d fault run%s crossed a protected "
                "service limit before detection; %d went undetected within %.0f min\n",
            st->healthy_trips, st->healthy_trips == 1 ? "" : "s", st->unsafe_faults,
            st->unsafe_faults == 1 ? "" : "s", st->undetected, st->horizon / 60.0);
    for (k = 0; k < st->n_layers; k++)
        if (isfinite(st->layer_limit[k]) && !st->layer_protected[k])
            fprintf(fp, "  ! layer '%s' already passes its %.0f degC limit in healthy operation "
                        "(%.1f degC): no check protects it\n", st->layer_id[k],
                    st->layer_limit[k] - TP_KELVIN_0C, st->layer_healthy[k] - TP_KELVIN_0C);
    tp_summary_cautions(fp, "cautions", cautions,
                        tp_guard_cautions(&s->desc, s->net, st, cautions));
}

/* ---- JSON --------------------------------------------------------------------------------- */

static const char *const json_setting_keys[TP_G_COUNT] = {
    "rise_window_s", "rise_min_K", "approach_K", "hold_band_K", "hold_grace_s", "ceiling_C"};

static void put_settings(cJSON *obj, const char *name, const tp_guard_settings *s)
{
    cJSON *o = cJSON_AddObjectToObject(obj, name);
    int k;
    for (k = 0; o && k < TP_G_COUNT; k++)
        tp_json_number(o, json_setting_keys[k],
                       k == TP_G_CEILING ? value(s, k) - TP_KELVIN_0C : value(s, k));
}

static void put_detect(cJSON *obj, const tp_guard_detect *det)
{
    cJSON *o = cJSON_AddObjectToObject(obj, "detected_s");
    if (!o)
        return;
    tp_json_number(o, "rise", det->rise);
    tp_json_number(o, "hold", det->hold);
    tp_json_number(o, "ceiling", det->ceiling);
}

/* The healthy ranges (in the user's units: degC for the room) and which came from defaults. */
static void put_ranges(cJSON *root, const tp_guard_study *st)
{
    static const char *const keys[TP_RANGE_COUNT] = {"supply_V", "resistance_ohm", "room_C",
                                                     "airflow_m_per_s"};
    cJSON *o = cJSON_AddObjectToObject(root, "ranges"), *arr;
    int k;
    for (k = 0; o && k < TP_RANGE_COUNT; k++) {
        const tp_guard_range *r = &st->ranges.r[k];
        double off = k == TP_RANGE_ROOM ? TP_KELVIN_0C : 0.0;
        cJSON *ro = cJSON_AddObjectToObject(o, keys[k]);
        if (!ro)
            break;
        tp_json_number(ro, "low", r->lo - off);
        tp_json_number(ro, "high", r->hi - off);
        tp_json_number(ro, "nominal", r->nominal - off);
        if (k == TP_RANGE_RESISTANCE)
            tp_json_number(ro, "tolerance", r->tolerance);
        cJSON_AddStringToObject(ro, "origin", origin_names[r->origin]);
    }
    arr = cJSON_AddArrayToObject(root, "default_ranges");
    for (k = 0; arr && k < TP_RANGE_COUNT; k++)
        if (st->ranges.r[k].origin == TP_RANGE_DEFAULT)
            cJSON_AddItemToArray(arr, cJSON_CreateString(tp_guard_range_name(k)));
}

/* The recommended settings with their explanations, the evaluated ones and which were given. */
static void put_all_settings(cJSON *root, const tp_guard_study *st)
{
    cJSON *o, *arr;
    int k;
    put_settings(root, "recommended", &st->rec);
    tp_json_number(root, "rise_min_unrounded_K", st->rise_min_raw);
    o = cJSON_AddObjectToObject(root, "explanations");
    for (k = 0; o && k < TP_G_COUNT; k++)
        cJSON_AddStringToObject(o, tp_guard_setting_name(k), st->rec_ok[k] || st->why[k][0]
                                                                 ? st->why[k] : "");
    put_settings(root, "evaluated", &st->used);
    arr = cJSON_AddArrayToObject(root, "given");
    for (k = 0; arr && k < TP_G_COUNT; k++)
        if (st->given[k])
            cJSON_AddItemToArray(arr, cJSON_CreateString(tp_guard_setting_name(k)));
}

static void put_corners(cJSON *root, const tp_guard_study *st)
{
    cJSON *arr = cJSON_AddArrayToObject(root, "corners"), *item;
    int c;
    for (c = 0; arr && c < st->n_corners; c++) {
        const tp_guard_corner *co = &st->corners[c];
        item = cJSON_CreateObject();
        if (!item)
            break;
        cJSON_AddItemToArray(arr, item);
        cJSON_AddStringToObject(item, "name", co->name);
        cJSON_AddBoolToObject(item, "nominal", co->nominal);
        tp_json_number(item, "supply_V", co->supply);
        tp_json_number(item, "resistance_ohm", co->resistance);
        tp_json_number(item, "room_C", co->room - TP_KELVIN_0C);
        tp_json_number(item, "airflow_m_per_s", co->airflow);
        tp_json_number(item, "time_to_setpoint_s", co->t_setpoint);
        tp_json_number(item, "full_power_until_K_below", co->backoff_gap);
        tp_json_number(item, "peak_reading_C", co->peak - TP_KELVIN_0C);
        tp_json_number(item, "deepest_dip_K", co->dip);
        tp_json_number(item, "rise_margin_K", co->rise_margin);
        tp_json_number(item, "hold_margin_s", co->hold_margin);
        tp_json_number(item, "ceiling_margin_K", co->ceiling_margin);
        put_detect(item, &co->det);
        cJSON_AddBoolToObject(item, "tripped", isfinite(tp_guard_first(&co->det)));
        tp_json_number(item, "full_power_reading_C", co->stuck_reading - TP_KELVIN_0C);
        tp_json_number(item, "full_power_heater_C", co->stuck_heater - TP_KELVIN_0C);
    }
}

/* A fault run's figures into `item`. */
static void put_fault_figures(cJSON *item, const tp_guard_study *st, const tp_guard_fault_run *fr)
{
    cJSON_AddBoolToObject(item, "applicable", fr->trace.n > 0);
    put_detect(item, &fr->det);
    tp_json_number(item, "first_detection_s", fr->first);
    tp_json_number(item, "surface_peak_C", fr->surface_peak - TP_KELVIN_0C);
    tp_json_number(item, "heater_peak_C", fr->heater_peak - TP_KELVIN_0C);
    if (fr->limit_layer >= 0)
        cJSON_AddStringToObject(item, "limit_layer", st->layer_id[fr->limit_layer]);
    else
        cJSON_AddNullToObject(item, "limit_layer");
    tp_json_number(item, "limit_crossed_s", fr->t_limit);
    cJSON_AddBoolToObject(item, "limit_before_detection", fr->limit_before);
}

static void put_faults(cJSON *root, const tp_guard_study *st)
{
    cJSON *arr = cJSON_AddArrayToObject(root, "faults"), *item;
    int f, from;
    for (f = 0; arr && f < TP_FAULT_COUNT; f++) {
        for (from = 0; from < 2; from++) {
            const tp_guard_fault_run *fr = &st->faults[f][from];
            item = cJSON_CreateObject();
            if (!item)
                break;
            cJSON_AddItemToArray(arr, item);
            cJSON_AddStringToObject(item, "fault", tp_guard_fault_name(fr->fault));
            cJSON_AddStringToObject(item, "from", from ? "hold" : "cold");
            put_fault_figures(item, st, fr);
        }
    }
}

/* With a schedule: where the faults were injected, what each check made of them, and the
 * healthy corners' trips on the schedule (segments numbered from 1). */
static void put_schedule(cJSON *root, const tp_guard_study *st)
{
    static const char *const checks[3] = {"rise", "hold", "ceiling"};
    cJSON *o = cJSON_AddObjectToObject(root, "schedule"), *inj, *arr, *trips, *item;
    int m, f, c;
    if (!o)
        return;
    tp_json_number(o, "segments", st->plan.n);
    tp_json_number(o, "duration_s", st->plan.t_end);
    inj = cJSON_AddArrayToObject(o, "injections");
    arr = cJSON_AddArrayToObject(o, "faults");
    for (m = 0; inj && arr && m < TP_GUARD_MID_COUNT; m++) {
        const tp_guard_injection *in = &st->inject[m];
        if (in->segment < 0 || !(item = cJSON_CreateObject()))
            continue;
        cJSON_AddItemToArray(inj, item);
        cJSON_AddStringToObject(item, "at", mid_names[m]);
        tp_json_number(item, "segment", in->segment + 1);
        tp_json_number(item, "time_s", in->t);
        tp_json_number(item, "setpoint_C", in->setpoint - TP_KELVIN_0C);
        for (f = 0; f < TP_FAULT_COUNT; f++) {
            const tp_guard_fault_run *fr = &st->mid[f][m];
            if (!(item = cJSON_CreateObject()))
                break;
            cJSON_AddItemToArray(arr, item);
            cJSON_AddStringToObject(item, "fault", tp_guard_fault_name(fr->fault));
            cJSON_AddStringToObject(item, "at", mid_names[m]);
            tp_json_number(item, "injected_s", in->t);
            tp_json_number(item, "segment", in->segment + 1);
            put_fault_figures(item, st, fr);
            tp_json_number(item, "detection_after_injection_s", fr->first - in->t);
        }
    }
    trips = cJSON_AddArrayToObject(o, "healthy_trips");
    for (c = 0; trips && c < st->n_corners; c++) {
        const tp_guard_trip *tr = &st->trips[c];
        if (tr->check < 0 || !(item = cJSON_CreateObject()))
            continue;
        cJSON_AddItemToArray(trips, item);
        cJSON_AddStringToObject(item, "corner", st->corners[c].name);
        cJSON_AddStringToObject(item, "check", checks[tr->check]);
        tp_json_number(item, "time_s", tr->t);
        tp_json_number(item, "segment", tr->segment + 1);
        cJSON_AddStringToObject(item, "kind",
                                tp_schedule_kind_name(st->plan.part[tr->segment].kind));
    }
}

/* The stuck-on equilibrium and each layer's service limit against its healthy peak. */
static void put_stuck_and_layers(cJSON *root, const tp_network *net, const tp_guard_study *st)
{
    cJSON *o = cJSON_AddObjectToObject(root, "stuck_on"), *arr, *item;
    int k;
    if (o) {
        tp_json_number(o, "reading_C", st->has_stuck ? st->stuck.reading - TP_KELVIN_0C
                                                     : TP_UNSET);
        if (st->has_stuck) {
            cJSON *nodes = cJSON_AddObjectToObject(o, "nodes_C");
            for (k = 0; nodes && k < net->n_nodes; k++)
                tp_json_number(nodes, net->nodes[k].id, st->stuck.temps[k] - TP_KELVIN_0C);
            tp_json_number(o, "power_W", st->stuck.power);
        }
        if (st->stuck_over_layer >= 0)
            cJSON_AddStringToObject(o, "layer_over_limit", st->layer_id[st->stuck_over_layer]);
        else
            cJSON_AddNullToObject(o, "layer_over_limit");
        if (st->stuck_worst >= 0) {
            cJSON_AddStringToObject(o, "hottest_corner", st->corners[st->stuck_worst].name);
            tp_json_number(o, "hottest_corner_heater_C",
                           st->corners[st->stuck_worst].stuck_heater - TP_KELVIN_0C);
        }
        cJSON_AddBoolToObject(o, "cutout_required", st->cutout_required);
    }
    arr = cJSON_AddArrayToObject(root, "layers");
    for (k = 0; arr && k < st->n_layers; k++) {
        item = cJSON_CreateObject();
        if (!item)
            break;
        cJSON_AddItemToArray(arr, item);
        cJSON_AddStringToObject(item, "id", st->layer_id[k]);
        tp_json_number(item, "service_limit_C", st->layer_limit[k] - TP_KELVIN_0C);
        tp_json_number(item, "healthy_peak_C", st->layer_healthy[k] - TP_KELVIN_0C);
        cJSON_AddBoolToObject(item, "protected", st->layer_protected[k]);
    }
}

static tp_status write_json(const char *path, const tp_session *s, const tp_guard_study *st,
                            int evaluating, int strict_failed, tp_diag *d)
{
    cJSON *root = cJSON_CreateObject(), *o;
    tp_caution cautions[TP_CAUTIONS_MAX];
    const tp_guard_spec *g = &s->desc.guard;
    tp_status rs;
    int n;
    if (!root)
        return TP_ERR_NOMEM;
    cJSON_AddStringToObject(root, "mode", evaluating ? "evaluate" : "recommend");
    tp_json_number(root, "setpoint_C", st->setpoint - TP_KELVIN_0C);
    tp_json_number(root, "control_period_s", st->period);
    tp_json_number(root, "reading_step_K", st->resolution);
    tp_json_number(root, "time_factor", g->time_factor);
    tp_json_number(root, "rise_factor", g->rise_factor);
    tp_json_number(root, "horizon_s", st->horizon);
    tp_json_number(root, "hold_followed_s", g->hold);
    tp_json_number(root, "detached_loss_W_per_K", st->detached_loss);
    tp_json_number(root, "pinned_high_C", st->pin_high - TP_KELVIN_0C);
    tp_json_number(root, "pinned_low_C", st->pin_low - TP_KELVIN_0C);
    put_ranges(root, st);
    put_all_settings(root, st);
    put_corners(root, st);
    put_faults(root, st);
    if (st->scheduled)
        put_schedule(root, st);
    put_stuck_and_layers(root, s->net, st);
    o = cJSON_AddObjectToObject(root, "verdict");
    if (o) {
        tp_json_number(o, "healthy_trips", st->healthy_trips);
        tp_json_number(o, "limit_before_detection", st->unsafe_faults);
        tp_json_number(o, "undetected", st->undetected);
        cJSON_AddBoolToObject(o, "strict_failed", strict_failed);
    }
    n = tp_guard_cautions(&s->desc, s->net, st, cautions);
    tp_json_add_cautions(cJSON_AddArrayToObject(root, "cautions"), cautions, n);
    rs = tp_json_write(path, root, d);
    cJSON_Delete(root);
    return rs;
}

/* ---- the verb ----------------------------------------------------------------------------- */

static tp_status run_guard(const tp_cli *cli, tp_diag *d)
{
    tp_session s;
    tp_guard_settings given;
    tp_guard_study *st = NULL;
    int evaluating, strict_failed;
    tp_status rc = tp_session_open(&s, cli, d);
    if (rc != TP_OK)
        return rc;
    rc = given_settings(cli, &s.desc, &given, d);
    if (rc != TP_OK)
        goto done;
    evaluating = given.present;
    st = calloc(1, sizeof *st);
    if (!st) {
        rc = TP_ERR_NOMEM;
        goto done;
    }
    rc = tp_guard_study_run(&s.desc, s.doc, &given, st, d);
    if (rc != TP_OK)
        goto done;
    strict_failed = st->healthy_trips > 0 || st->unsafe_faults > 0;
    if (tp_cli_get(cli, "json"))
        rc = write_json(tp_cli_get(cli, "json"), &s, st, evaluating, strict_failed, d);
    if (rc == TP_OK && tp_cli_get(cli, "plot"))
        rc = tp_figure_guard(tp_cli_get(cli, "plot"), tp_session_title(&s), st, d);
    if (rc == TP_OK && s.text)
        summary(s.text, &s, st, evaluating);
    if (rc == TP_OK && tp_cli_flag(cli, "strict") && strict_failed) {
        tp_diag_error(d, tp_diag_loc_none(), "guard",
                      "tighten the thresholds (run without settings for a recommendation)",
                      "--strict: %d healthy corner%s tripped, %d fault run%s crossed a service "
                      "limit before detection",
                      st->healthy_trips, st->healthy_trips == 1 ? "" : "s", st->unsafe_faults,
                      st->unsafe_faults == 1 ? "" : "s");
        rc = TP_ERR_STRICT;
    }
done:
    if (st)
        tp_guard_study_clear(st);
    free(st);
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_cmd_guard = {
    "guard",
    run_guard,
    "Protection thresholds from worst-case healthy runs, tested against injected faults.",
    1,
    guard_opts,
    "Runs every corner of the healthy ranges (guard: supply, resistance tolerance, room,\n"
    "airflow; a range not declared takes its default, supply and resistance +-5 %, room 15 to\n"
    "30 degC, and the summary says so) through the warm-up and a hold with the disturbances\n"
    "given, then injects six faults from the cold start and from the holding state. Recommends "
    "the\n"
    "rise check (rise_window, rise_min, approach), the hold check (hold_band, hold_grace) and\n"
    "the ceiling, each explained; with --rise-window ... or guard.settings: it evaluates the\n"
    "given values instead. With control.schedule the corners follow the schedule and every\n"
    "fault is also injected mid-ramp and mid-hold. Definitions in docs/guard.md. The checks\n"
    "supplement and never replace an independent thermal cut-out.",
    "tepid guard workshop-bed-24v.yaml --plot guard.png\n"
    "tepid guard workshop-bed-24v.yaml --rise-window 40s --rise-min 2K --json guard.json"};
