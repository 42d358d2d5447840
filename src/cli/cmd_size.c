/* tepid size: the smallest heater power that reaches --reach TEMP within --within TIME from the
 * cold start in every healthy corner with the margin kept, per supply voltage, with the
 * current, the wire and the fuse it needs. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "figure.h"
#include "json.h"
#include "session.h"
#include "size.h"
#include "summary.h"
#include "units.h"
#include "verbs.h"

static const tp_opt size_opts[] = {
    {"reach", 0, 1, 0, 0, "TEMP", "the temperature to reach (required), e.g. 90degC"},
    {"within", 0, 1, 0, 0, "TIME", "the time allowed from the cold start (required), e.g. 5min"},
    {"margin", 0, 1, 0, 0, "RATIO", "least steady power margin, available / holding power, in "
                                    "every corner (default 1.3)"},
    {"surface", 0, 0, 0, 0, NULL, "the target applies to the working-surface estimate, not the "
                                  "reading"},
    {"supply", 0, 1, 0, 0, "LIST", "supply voltages to size for, one answer each, e.g. "
                                   "12V,24V,48V (default: the configured one)"},
    {"json", 0, 1, 0, TP_OUT_FILE, "FILE", "write the answer per supply as JSON"},
    {"plot", 0, 1, 0, TP_OUT_FIGURE, "FILE", "draw the time to the target against heater power "
                                             "(nominal and slowest corner, the answer marked)"},
    TP_OPT_SET,
    TP_OPT_QUIET,
    TP_OPT_END,
};

typedef struct size_args {
    tp_size_request rq;
    double supplies[TP_SIZE_SUPPLIES_MAX];
    int n_supplies; /* 0: the configured supply */
} size_args;

static tp_status option_error(const tp_cli *cli, tp_diag *d, const char *opt, const char *hint,
                              const char *msg)
{
    tp_diag_error(d, (tp_loc){cli->file, 0, 0}, opt, hint, "%s", msg);
    return TP_ERR_USAGE;
}

static tp_status parse_quantity(const tp_cli *cli, const char *opt, tp_dim dim, double *v,
                                tp_diag *d)
{
    const char *text = tp_cli_get(cli, opt + 2);
    char msg[256], full[300];
    const char *hint = NULL;
    if (tp_units_parse(text, dim, v, msg, sizeof msg, &hint) != TP_OK) {
        snprintf(full, sizeof full, "'%s': %s", text, msg);
        return option_error(cli, d, opt, hint, full);
    }
    return TP_OK;
}

/* "12V,24V,48V": each a voltage above zero. */
static tp_status parse_supplies(const tp_cli *cli, const char *text, size_args *a, tp_diag *d)
{
    char item[64], msg[256], full[400];
    const char *p = text, *hint = NULL;
    a->n_supplies = 0;
    for (;;) {
        const char *comma = strchr(p, ',');
        size_t len = comma ? (size_t)(comma - p) : strlen(p);
        double v;
        if (len == 0 || len >= sizeof item) {
            snprintf(full, sizeof full, "bad supply list '%s': %s", text,
                     len == 0 ? "an empty item" : "an item too long");
            return option_error(cli, d, "--supply", "write voltages with units, separated by "
                                "commas: 12V,24V,48V", full);
        }
        memcpy(item, p, len);
        item[len] = '\0';
        v = TP_UNSET;
        if (tp_units_parse(item, TP_DIM_VOLTAGE, &v, msg, sizeof msg, &hint) != TP_OK ||
            !(v > 0)) {
            snprintf(full, sizeof full, "bad supply list '%s': item '%s': %s", text, item,
                     isfinite(v) && !(v > 0) ? "not a voltage above zero" : msg);
            return option_error(cli, d, "--supply", "write voltages with units, separated by "
                                "commas: 12V,24V,48V", full);
        }
        if (a->n_supplies == TP_SIZE_SUPPLIES_MAX) {
            snprintf(full, sizeof full, "more than %d supply voltages", TP_SIZE_SUPPLIES_MAX);
            return option_error(cli, d, "--supply", "size for fewer supplies at a time", full);
        }
        a->supplies[a->n_supplies++] = v;
        if (!comma)
            return TP_OK;
        p = comma + 1;
    }
}

static tp_status parse_options(const tp_cli *cli, size_args *a, tp_diag *d)
{
    const char *m = tp_cli_get(cli, "margin"), *s = tp_cli_get(cli, "supply");
    tp_status rs;
    memset(a, 0, sizeof *a);
    a->rq.margin = TP_SIZE_MARGIN_DEFAULT;
    a->rq.supply = TP_UNSET;
    a->rq.surface = tp_cli_flag(cli, "surface");
    a->rq.curves = tp_cli_get(cli, "plot") != NULL;
    if (!tp_cli_get(cli, "reach"))
        return option_error(cli, d, "--reach", "e.g. --reach 90degC --within 5min",
                            "tepid size needs --reach TEMP");
    if (!tp_cli_get(cli, "within"))
        return option_error(cli, d, "--within", "e.g. --reach 90degC --within 5min",
                            "tepid size needs --within TIME");
    rs = parse_quantity(cli, "--reach", TP_DIM_TEMPERATURE, &a->rq.target, d);
    if (rs == TP_OK)
        rs = parse_quantity(cli, "--within", TP_DIM_TIME, &a->rq.within, d);
    if (rs != TP_OK)
        return rs;
    if (!(a->rq.within > 0))
        return option_error(cli, d, "--within", "give a time above zero, e.g. 5min",
                            "the time allowed must be above zero");
    if (a->rq.within > TP_MAX_DURATION)
        return option_error(cli, d, "--within", "give at most 30 days",
                            "the time allowed is longer than tepid simulates");
    if (m && (tp_units_parse_double(m, &a->rq.margin) != 0 || !(a->rq.margin >= 1.0) ||
              a->rq.margin > 100.0))
        return option_error(cli, d, "--margin", "a ratio from 1 to 100, e.g. 1.3",
                            "bad margin: below 1 the target could not even be held");
    return s ? parse_supplies(cli, s, a, d) : TP_OK;
}

/* ---- words ------------------------------------------------------------------------------- */

static void corner_ranges(FILE *fp, const tp_guard_ranges *rr)
{
    int k, n = 0;
    fputs("    corners: ", fp);
    for (k = 0; k < TP_RANGE_COUNT; k++) {
        const tp_guard_range *g = &rr->r[k];
        if (g->origin == TP_RANGE_NONE || !(g->hi > g->lo))
            continue;
        fprintf(fp, "%s%s ", n++ ? "; " : "", tp_guard_range_name(k));
        if (k == TP_RANGE_ROOM)
            fprintf(fp, "%.0f to %.0f degC", g->lo - TP_KELVIN_0C, g->hi - TP_KELVIN_0C);
        else if (k == TP_RANGE_AIRFLOW)
            fprintf(fp, "%.1f to %.1f m/s", g->lo, g->hi);
        else
            fprintf(fp, "%+.1f %% to %+.1f %%", 100.0 * (g->lo / g->nominal - 1.0),
                    100.0 * (g->hi / g->nominal - 1.0));
        fputs(g->origin == TP_RANGE_DECLARED ? " (guard:)" : " (default)", fp);
    }
    fprintf(fp, "%s\n", n ? "" : "none varied");
    if (rr->n_default > 0)
        fputs("    (defaults, common practice, no source: supply -/+5 %, heater resistance "
              "-/+5 %, room 15 to 30 degC; declare guard: to change them)\n",
              fp);
}

static void print_answer(FILE *fp, const size_args *a, const tp_size_result *r)
{
    const tp_budget *b = &r->budget;
    const tp_size_corner *lim = &r->corners[r->limiting];
    char t1[32], t2[32], awg[96], mm2[96];
    if (r->electric)
        fprintf(fp, "\n  on %.1f V:\n", r->supply);
    else
        fputs("\n  constant-power heater:\n", fp);
    corner_ranges(fp, &r->ranges);
    if (!r->feasible) {
        tp_summary_duration(r->best_time, t1, sizeof t1);
        fprintf(fp, "    NO POWER MEETS THE TARGET up to %.0f W, the largest considered (%s).\n",
                r->p_max, r->p_max_why);
        fprintf(fp, "    At %.0f W the slowest corner ('%s') takes %s (allowed: ", r->p_max,
                r->corners[r->worst].name, isfinite(r->best_time) ? t1 : "longer than simulated");
        tp_summary_duration(a->rq.within, t2, sizeof t2);
        fprintf(fp, "%s) and the smallest margin is %.2f (asked: %.2f).\n", t2, r->margin_worst,
                a->rq.margin);
        fputs("    -> reduce the losses (insulation underneath, an enclosure), allow more "
              "time, or choose a heater type rated for a higher power density\n",
              fp);
        return;
    }
    if (r->electric)
        fprintf(fp, "    required: %.1f W at the heater's reference temperature (%.3f ohm on "
                    "%.1f V); look for a heater rated %.0f W at %.0f V (rounded up to %.0f W)\n",
                r->power, r->resistance, r->supply, r->rated_power, r->supply,
                TP_SIZE_RATED_STEP);
    else
        fprintf(fp, "    required: %.1f W (look for %.0f W, rounded up to %.0f W)\n", r->power,
                r->rated_power, TP_SIZE_RATED_STEP);
    fprintf(fp, "    limited by %s in corner '%s'\n",
            r->limited_by == TP_SIZE_BY_TIME ? "the time" : "the margin", lim->name);
    tp_summary_duration(r->time_nominal, t1, sizeof t1);
    tp_summary_duration(r->time_worst, t2, sizeof t2);
    fprintf(fp, "    warm-up full on at that power: %s nominal, %s in the slowest corner ('%s')\n",
            t1, t2, r->corners[r->worst].name);
    fprintf(fp, "    margin (available / holding power at the target): %.2f nominal, %.2f at "
                "least\n",
            r->corners[0].margin_at, r->margin_worst);
    if (!r->has_budget)
        return;
    if (isfinite(b->i_cold))
        fprintf(fp, "    cold start: %.2f A, %.1f W into the heater\n", b->i_cold, b->p_cold);
    if (isfinite(b->density) && b->heater_type)
        fprintf(fp, "    power density: %.2f W/cm2 at cold start (limit for a %s heater: %.3g "
                    "W/cm2)\n",
                b->density * 1e-4, b->heater_type, b->density_limit * 1e-4);
    else if (isfinite(b->density))
        fprintf(fp, "    power density: %.2f W/cm2 at cold start (no limit known for this "
                    "heater type)\n",
                b->density * 1e-4);
    if (isfinite(b->i_rating) && b->i_total_cold > b->i_rating)
        fprintf(fp, "    supply current: %.2f A at cold start, OVER its %.1f A rating by %.0f %%: "
                    "a larger supply is needed\n",
                b->i_total_cold, b->i_rating, 100.0 * (b->i_total_cold / b->i_rating - 1.0));
    else if (isfinite(b->i_rating))
        fprintf(fp, "    supply current: %.2f A at cold start against its %.1f A rating (%.0f %% "
                    "headroom)\n",
                b->i_total_cold, b->i_rating, 100.0 * (1.0 - b->i_total_cold / b->i_rating));
    else if (isfinite(b->i_total_cold))
        fprintf(fp, "    supply current: %.2f A at cold start (add supply: to check its "
                    "rating)\n",
                b->i_total_cold);
    tp_summary_wire_pick(awg, sizeof awg, &b->wire.awg, 1);
    tp_summary_wire_pick(mm2, sizeof mm2, &b->wire.metric, 0);
    fprintf(fp, "    smallest copper wire for %.2f A (%s): %s, or %s\n", b->wire.amps,
            tp_ampacity_table_name(b->wire_cond.installation), awg, mm2);
    if (b->fuse > 0)
        fprintf(fp, "    fuse: %.3g A%s\n", b->fuse,
                b->fuse_fitted ? " (wiring.fuse, as fitted)" : ", within the wire's ampacity");
    else
        fputs("    fuse: no standard size fits between the current and the wire's ampacity\n",
              fp);
}

static void add_answer(cJSON *arr, const size_args *a, const tp_size_result *r)
{
    cJSON *o = cJSON_CreateObject(), *corners;
    const tp_budget *b = &r->budget;
    int c;
    (void)a;
    if (!o)
        return;
    cJSON_AddItemToArray(arr, o);
    tp_json_number(o, "supply_V", r->supply);
    cJSON_AddBoolToObject(o, "feasible", r->feasible);
    tp_json_number(o, "required_power_W", r->feasible ? r->power : TP_UNSET);
    tp_json_number(o, "resistance_ohm", r->feasible ? r->resistance : TP_UNSET);
    tp_json_number(o, "rated_power_W", r->feasible ? r->rated_power : TP_UNSET);
    tp_json_number(o, "best_time_s", r->feasible ? TP_UNSET : r->best_time);
    tp_json_number(o, "rated_step_W", TP_SIZE_RATED_STEP);
    tp_json_number(o, "max_power_W", r->p_max);
    cJSON_AddStringToObject(o, "limiting_corner", r->corners[r->limiting].name);
    cJSON_AddStringToObject(o, "limited_by", r->limited_by == TP_SIZE_BY_TIME ? "time" : "margin");
    tp_json_number(o, "time_nominal_s", r->time_nominal);
    tp_json_number(o, "time_worst_s", r->time_worst);
    cJSON_AddStringToObject(o, "worst_corner", r->corners[r->worst].name);
    tp_json_number(o, "margin_nominal", r->corners[0].margin_at);
    tp_json_number(o, "margin_worst", r->margin_worst);
    tp_json_number(o, "cold_current_A", r->has_budget ? b->i_cold : TP_UNSET);
    tp_json_number(o, "cold_power_W", r->has_budget ? b->p_cold : TP_UNSET);
    tp_json_number(o, "power_density_W_per_cm2",
                   r->has_budget && isfinite(b->density) ? b->density * 1e-4 : TP_UNSET);
    tp_json_number(o, "power_density_limit_W_per_cm2",
                   r->has_budget && isfinite(b->density_limit) ? b->density_limit * 1e-4
                                                               : TP_UNSET);
    tp_json_number(o, "supply_current_A", r->has_budget ? b->i_total_cold : TP_UNSET);
    tp_json_number(o, "supply_rating_A", r->has_budget ? b->i_rating : TP_UNSET);
    if (r->has_budget)
        tp_json_wire(o, "wire", &b->wire, &b->wire_cond);
    else
        cJSON_AddNullToObject(o, "wire");
    tp_json_number(o, "fuse_A", r->has_budget && b->fuse > 0 ? b->fuse : TP_UNSET);
    tp_json_number(o, "warmups", (double)r->runs);
    corners = cJSON_AddArrayToObject(o, "corners");
    for (c = 0; corners && c < r->n_corners; c++) {
        const tp_size_corner *sc = &r->corners[c];
        cJSON *co = cJSON_CreateObject();
        if (!co)
            break;
        cJSON_AddItemToArray(corners, co);
        cJSON_AddStringToObject(co, "name", sc->name);
        tp_json_number(co, "supply_V", sc->supply);
        tp_json_number(co, "room_C", sc->room - TP_KELVIN_0C);
        tp_json_number(co, "airflow_m_per_s", sc->airflow);
        tp_json_number(co, "hold_power_W", sc->hold_power);
        tp_json_number(co, "time_s", sc->time);
        tp_json_number(co, "margin", sc->margin_at);
    }
}

static tp_status write_json(const char *path, const size_args *a, const tp_size_result *res,
                            int n, tp_diag *d)
{
    cJSON *root = cJSON_CreateObject(), *arr, *cautions;
    tp_status st;
    int i;
    if (!root)
        return TP_ERR_NOMEM;
    tp_json_number(root, "target_C", a->rq.target - TP_KELVIN_0C);
    cJSON_AddStringToObject(root, "target_at", a->rq.surface ? "surface" : "reading");
    tp_json_number(root, "within_s", a->rq.within);
    tp_json_number(root, "margin_min", a->rq.margin);
    arr = cJSON_AddArrayToObject(root, "supplies");
    for (i = 0; arr && i < n; i++)
        add_answer(arr, a, &res[i]);
    cautions = cJSON_AddArrayToObject(root, "cautions");
    if (cautions && n > 0)
        tp_json_add_cautions(cautions, res[n - 1].cautions, res[n - 1].n_cautions);
    st = tp_json_write(path, root, d);
    cJSON_Delete(root);
    return st;
}

static tp_status run_size(const tp_cli *cli, tp_diag *d)
{
    tp_session s;
    size_args a;
    tp_size_result res[TP_SIZE_SUPPLIES_MAX];
    int n, i, infeasible = 0;
    char within[32], title[400];
    tp_status rc = parse_options(cli, &a, d);
    if (rc != TP_OK)
        return rc;
    rc = tp_session_open(&s, cli, d);
    if (rc != TP_OK)
        return rc;
    memset(res, 0, sizeof res);
    n = a.n_supplies > 0 ? a.n_supplies : 1;
    for (i = 0; i < n && rc == TP_OK; i++) {
        tp_size_request rq = a.rq;
        rq.supply = a.n_supplies > 0 ? a.supplies[i] : TP_UNSET;
        rc = tp_size_run(&s.desc, s.doc, s.net, &rq, &res[i], d);
        infeasible += rc == TP_OK && !res[i].feasible;
    }
    /* No power meets the target on any supply: a failed computation writes no output (the
     * summary says how close it came). With some supplies answered, the others say so. */
    if (rc == TP_OK && infeasible < n && tp_cli_get(cli, "json"))
        rc = write_json(tp_cli_get(cli, "json"), &a, res, n, d);
    if (rc == TP_OK && infeasible < n && tp_cli_get(cli, "plot")) {
        /* The plot draws the last answered supply's curves (the only one without --supply). */
        const tp_size_result *r = &res[n - 1];
        for (i = n - 1; i > 0 && !res[i].feasible; i--)
            r = &res[i - 1];
        if (r->electric)
            snprintf(title, sizeof title, "%s: time to %.0f degC (%s), full on, on %.0f V",
                     tp_session_title(&s), a.rq.target - TP_KELVIN_0C,
                     a.rq.surface ? "surface" : "reading", r->supply);
        else
            snprintf(title, sizeof title, "%s: time to %.0f degC (%s), full on",
                     tp_session_title(&s), a.rq.target - TP_KELVIN_0C,
                     a.rq.surface ? "surface" : "reading");
        rc = tp_figure_size(tp_cli_get(cli, "plot"), title, r, a.rq.within, d);
    }
    if (rc == TP_OK && s.text) {
        tp_summary_duration(a.rq.within, within, sizeof within);
        fprintf(s.text, "tepid size %s\n  ", cli->file);
        tp_summary_network(s.text, s.net);
        fprintf(s.text, "  target: the %s at %.1f degC within %s of the cold start, heater full "
                        "on, in every corner; margin at least %.2f\n",
                a.rq.surface ? "working surface" : "reading", a.rq.target - TP_KELVIN_0C, within,
                a.rq.margin);
        for (i = 0; i < n; i++)
            print_answer(s.text, &a, &res[i]);
        tp_summary_cautions(s.text, "cautions", res[n - 1].cautions, res[n - 1].n_cautions);
    }
    if (rc == TP_OK && infeasible == n) {
        tp_diag_error(d, tp_diag_loc_none(), NULL,
                      "reduce the losses, allow more time, or lower --reach",
                      "no heater power up to the limit meets the target%s (see the summary)",
                      n > 1 ? " on any supply" : "");
        rc = TP_ERR_SOLVER;
    } else if (rc == TP_OK && infeasible > 0) {
        for (i = 0; i < n; i++)
            if (!res[i].feasible)
                tp_diag_warn(d, tp_diag_loc_none(), "--supply", NULL,
                             "no heater power up to %.0f W meets the target on %.1f V (see the "
                             "summary)", res[i].p_max, res[i].supply);
    }
    for (i = 0; i < n; i++)
        tp_size_clear(&res[i]);
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_cmd_size = {
    "size",
    run_size,
    "Find the smallest heater that reaches a temperature in time, in every corner.",
    1,
    size_opts,
    "Finds the smallest heater power (at the heater's reference temperature, on its supply)\n"
    "for which the reading (or, with --surface, the working surface) reaches --reach TEMP\n"
    "within --within TIME from the cold start, heater full on, in every corner of guard's\n"
    "ranges (default supply -/+5 %, resistance -/+5 %, room 15 to 30 degC), with the steady\n"
    "power margin at least --margin. Bisection on the power to 0.1 %. Reports the resistance,\n"
    "the rating to buy, the limiting corner, the currents, the power density, the wire and the\n"
    "fuse, per supply voltage with --supply. Exit 1 when no power up to the heater type's\n"
    "power-density limit meets the target (docs/sizing.md).",
    "tepid size workshop-bed-24v.yaml --reach 90degC --within 6min\n"
    "tepid size workshop-bed-24v.yaml --reach 85degC --within 8min --surface --supply 12V,24V\n"
    "tepid size raw-five-node.yaml --reach 100degC --within 10min --json size.json"};
