/* tepid budget: currents, supply headroom, wiring and switch losses, the wire's ampacity, the
 * smallest wire, a fuse within its ampacity and PASS/WARN/FAIL verdicts; --strict exits 3 on
 * any WARN or FAIL. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "budget.h"
#include "json.h"
#include "session.h"
#include "summary.h"
#include "verbs.h"

#define TP_MAINS 50.0 /* V: above this the supply is treated as mains (see summary.c) */

static const tp_opt budget_opts[] = {
    {"json", 0, 1, 0, TP_OUT_FILE, "FILE", "write every figure and verdict as JSON"},
    {"strict", 0, 0, 0, 0, NULL, "exit 3 when any check gives WARN or FAIL"},
    TP_OPT_SET,
    TP_OPT_QUIET,
    TP_OPT_END,
};

static void print_checks(FILE *fp, const tp_budget *b)
{
    int i;
    fputs("\n  checks:\n", fp);
    for (i = 0; i < b->n_checks; i++) {
        const tp_check *c = &b->checks[i];
        if (isfinite(c->limit))
            fprintf(fp, "    %-4s %-32s %8.2f %-2s (limit %.2f %s)  %s\n",
                    tp_budget_verdict_name(c->verdict), c->name, c->value, c->unit, c->limit,
                    c->unit, c->note);
        else
            fprintf(fp, "    %-4s %-32s %8.2f %-2s (no limit)  %s\n",
                    tp_budget_verdict_name(c->verdict), c->name, c->value, c->unit, c->note);
    }
    if (b->n_checks == 0)
        fputs("    (add supply: and wiring: to check the supply and the wiring)\n", fp);
}

/* The parts of the heater's series path that are there. */
static void series_path(FILE *fp, const tp_circuit *c)
{
    const char *sep = "";
    fprintf(fp, "    series path %.1f mohm:", 1e3 * c->total);
    if (c->r_heater > 0) {
        fprintf(fp, " %.1f mohm heater.supply_resistance", 1e3 * c->r_heater);
        sep = " +";
    }
    if (c->r_output > 0) {
        fprintf(fp, "%s %.1f mohm supply output", sep, 1e3 * c->r_output);
        sep = " +";
    }
    if (c->r_wire > 0) {
        fprintf(fp, "%s %.1f mohm wiring loop", sep, 1e3 * c->r_wire);
        sep = " +";
    }
    if (c->r_switch > 0)
        fprintf(fp, "%s %.1f mohm switch", sep, 1e3 * c->r_switch);
    fputc('\n', fp);
}

/* The wire's ampacity, the smallest wire and the fuse. */
static void wire_lines(FILE *fp, const tp_description *desc, const tp_budget *b)
{
    const tp_ampacity *a = &b->ampacity;
    const tp_ampacity_conditions *c = &b->wire_cond;
    char awg[80], mm2[80];
    fprintf(fp, "  ampacity table: %s (%s)\n", tp_ampacity_table_name(c->installation),
            tp_ampacity_table_conditions(c->installation));
    if (desc->wiring.present) {
        if (isfinite(a->amps) && isfinite(a->column))
            fprintf(fp, "  wire ampacity: read at %.0f AWG, %.0f degC column (insulation rated "
                        "%.0f degC): %.1f A x %.3f for %.1f degC ambient = %.1f A\n",
                    a->row_awg, a->column - TP_KELVIN_0C, c->insulation - TP_KELVIN_0C,
                    a->table_amps, a->factor, c->ambient - TP_KELVIN_0C, a->amps);
        else if (isfinite(a->amps))
            fprintf(fp, "  wire ampacity: read at %.0f AWG: %.1f A\n", a->row_awg, a->amps);
        else
            fprintf(fp, "  wire ampacity: none: the table rates no wire this thin with %.0f degC "
                        "insulation\n", c->insulation - TP_KELVIN_0C);
    }
    tp_summary_wire_pick(awg, sizeof awg, &b->wire.awg, 1);
    tp_summary_wire_pick(mm2, sizeof mm2, &b->wire.metric, 0);
    if (isfinite(b->wire.length))
        fprintf(fp, "  smallest wire for %.2f A within %.1f %% drop over 2 x %.2f m: %s, or %s\n",
                b->wire.amps, 100.0 * b->wire.max_drop, b->wire.length, awg, mm2);
    else
        fprintf(fp, "  smallest wire for %.2f A (add wiring: with its length to check the drop "
                    "too): %s, or %s\n", b->wire.amps, awg, mm2);
    if (b->fuse_fitted)
        fprintf(fp, "  fuse for the heater circuit: %.3g A fitted (wiring.fuse)\n", b->fuse);
    else if (b->fuse > 0 && !b->fuse_below_rule)
        fprintf(fp, "  fuse for the heater circuit: %.3g A (the next standard size at or above "
                    "1.25 x %.2f A; common practice, no source)%s\n", b->fuse, b->i_cold,
                isfinite(a->amps) ? ", within the wire's ampacity" : "");
    else if (b->fuse > 0)
        fprintf(fp, "  fuse for the heater circuit: %.3g A, the largest standard size between "
                    "the running %.2f A and the wire's %.1f A: under 1.25 x the current it may "
                    "open on a long warm-up; a thicker wire lets the fuse follow the rule\n",
                b->fuse, b->i_cold, a->amps);
    else if (isfinite(a->amps))
        fprintf(fp, "  fuse for the heater circuit: no standard size fits between the running "
                    "%.2f A and the wire's %.1f A: use a thicker wire\n", b->i_cold, a->amps);
    else
        fprintf(fp, "  fuse for the heater circuit: none in the standard sizes for %.2f A\n",
                b->i_cold);
    if (isfinite(b->density) && b->heater_type)
        fprintf(fp, "  heater power density: %.2f W/cm2 at cold start (limit for a %s heater: "
                    "%.3g W/cm2)\n",
                b->density * 1e-4, b->heater_type, b->density_limit * 1e-4);
    else if (isfinite(b->density))
        fprintf(fp, "  heater power density: %.2f W/cm2 at cold start\n", b->density * 1e-4);
}

static void summary(FILE *fp, const tp_session *s, const tp_budget *b)
{
    const tp_description *desc = &s->desc;
    double v = b->v;
    size_t i;
    tp_caution cautions[TP_CAUTIONS_MAX];
    fprintf(fp, "tepid budget %s%s%s\n  ", s->cli->file, desc->title[0] ? ": " : "", desc->title);
    tp_summary_network(fp, s->net);
    if (desc->supply.present) {
        fprintf(fp, "  supply %.1f V", desc->supply.voltage);
        if (isfinite(b->i_rating))
            fprintf(fp, ", rated %.2f A (%.0f W)", b->i_rating, b->i_rating * desc->supply.voltage);
        if (tp_isset(desc->supply.efficiency))
            fprintf(fp, ", efficiency %.2f", desc->supply.efficiency);
        fputc('\n', fp);
    }
    fprintf(fp, "  bed heater%s\n", b->heater_on_supply ? "" : " (on its own supply)");
    if (b->circuit.total > 0)
        series_path(fp, &b->circuit);
    if (isfinite(b->r_cold))
        fprintf(fp, "    cold start: %.3f ohm -> %.2f A, %.1f W into the heater", b->r_cold,
                b->i_cold, b->p_cold);
    else
        fprintf(fp, "    cold start: %.2f A, %.1f W", b->i_cold, b->p_cold);
    if (b->wire_cold > 0)
        fprintf(fp, ", %.2f W in the series path", b->wire_cold);
    fputc('\n', fp);
    fprintf(fp, "    %s (heater at %.1f degC, duty %.3f): on-current %.2f A, mean %.2f A, "
                "%.1f W\n", b->holding ? "holding" : b->out_of_reach ? "full power (the "
                "setpoint is out of reach)" : "full power", b->t_hold - TP_KELVIN_0C,
            b->duty_hold, b->i_hold_on, b->i_hold_avg, b->p_hold);
    if (desc->n_loads) {
        fputs("  other loads:", fp);
        for (i = 0; i < desc->n_loads; i++) {
            const tp_load *l = &desc->loads[i];
            if (tp_isset(l->current))
                fprintf(fp, " %s %.2f A;", l->id, l->current);
            else
                fprintf(fp, " %s %.1f W;", l->id, tp_isset(l->power) ? l->power : 0.0);
        }
        fprintf(fp, " together %.2f A\n", b->i_loads_cold);
    }
    fprintf(fp, "  supply current: %.2f A at cold start, %.2f A peak / %.2f A mean while %s\n",
            b->i_total_cold, b->i_total_hold_peak, b->i_total_hold_avg,
            b->holding ? "holding" : "at full power");
    if (isfinite(b->i_rating))
        fprintf(fp, "  headroom: %.1f %% at cold start, %.1f %% while holding (mean)\n",
                100.0 * (b->i_rating - b->i_total_cold) / b->i_rating,
                100.0 * (b->i_rating - b->i_total_hold_avg) / b->i_rating);
    if (b->input_power_hold > 0)
        fprintf(fp, "  power drawn by the supply from its input: %.1f W\n", b->input_power_hold);
    if (desc->wiring.present) {
        fprintf(fp, "  wiring: copper, 2 x %.2f m, %.1f mohm loop at 20 degC: drop %.3f V and "
                    "%.2f W at cold start, %.2f W mean while holding\n",
                desc->wiring.length, 1e3 * b->circuit.r_wire, b->drop_cold, b->wire_loss_cold,
                b->wire_loss_hold);
        if (tp_isset(desc->wiring.switch_resistance))
            fprintf(fp, "  switch: %.1f mohm on: %.2f W full on, %.2f W mean while holding\n",
                    1e3 * desc->wiring.switch_resistance, b->switch_loss_cold,
                    b->switch_loss_hold);
    }
    wire_lines(fp, desc, b);
    print_checks(fp, b);
    fprintf(fp, "\n  verdict: %d FAIL%s, %d WARN%s\n", b->n_fail, b->n_fail == 1 ? "" : "s",
            b->n_warn, b->n_warn == 1 ? "" : "s");
    if (v > TP_MAINS || (s->net->n_sources && s->net->sources[0].supply > TP_MAINS))
        fputs("  ! mains heater: tepid refuses nothing, but fit a non-self-resetting thermal "
              "cut-out in series with the heater, independent of the controller, and have the "
              "installation checked by a qualified person.\n", fp);
    tp_summary_cautions(fp, "cautions", cautions, tp_budget_cautions(desc, s->net, b, cautions));
}

static tp_status write_json(const char *path, const tp_network *net, const tp_budget *b,
                            tp_diag *d)
{
    cJSON *root = cJSON_CreateObject(), *checks;
    tp_status st;
    int i;
    if (!root)
        return TP_ERR_NOMEM;
    tp_json_conditions(root, net);
    cJSON_AddBoolToObject(root, "heater_on_supply", b->heater_on_supply);
    tp_json_number(root, "supply_V", b->v);
    tp_json_number(root, "heater_cold_ohm", b->r_cold);
    tp_json_number(root, "cold_current_A", b->i_cold);
    tp_json_number(root, "cold_power_W", b->p_cold);
    tp_json_number(root, "hold_heater_C", b->t_hold - TP_KELVIN_0C);
    tp_json_number(root, "hold_duty", b->duty_hold);
    tp_json_number(root, "hold_on_current_A", b->i_hold_on);
    tp_json_number(root, "hold_mean_current_A", b->i_hold_avg);
    tp_json_number(root, "hold_power_W", b->p_hold);
    tp_json_number(root, "loads_A", b->i_loads_cold);
    tp_json_number(root, "supply_cold_A", b->i_total_cold);
    tp_json_number(root, "supply_hold_peak_A", b->i_total_hold_peak);
    tp_json_number(root, "supply_hold_mean_A", b->i_total_hold_avg);
    tp_json_number(root, "supply_rating_A", b->i_rating);
    tp_json_number(root, "series_resistance_ohm", b->circuit.total);
    tp_json_number(root, "wiring_ohm", b->circuit.r_wire);
    tp_json_number(root, "series_loss_cold_W", b->wire_cold);
    tp_json_number(root, "wiring_drop_V", b->drop_cold);
    tp_json_number(root, "wiring_loss_cold_W", b->wire_loss_cold);
    tp_json_number(root, "wiring_loss_hold_W", b->wire_loss_hold);
    tp_json_number(root, "switch_loss_cold_W", b->switch_loss_cold);
    tp_json_number(root, "switch_loss_hold_W", b->switch_loss_hold);
    tp_json_number(root, "fuse_A", b->fuse > 0 ? b->fuse : TP_UNSET);
    cJSON_AddBoolToObject(root, "fuse_fitted", b->fuse_fitted);
    cJSON_AddBoolToObject(root, "fuse_below_rule", b->fuse_below_rule);
    tp_json_number(root, "wire_ampacity_A", b->ampacity.amps);
    tp_json_number(root, "wire_table_A", b->ampacity.table_amps);
    tp_json_number(root, "wire_ambient_factor", b->ampacity.factor);
    tp_json_number(root, "wire_row_awg", b->ampacity.row_awg);
    tp_json_number(root, "wire_ambient_C", b->wire_cond.ambient - TP_KELVIN_0C);
    tp_json_number(root, "wire_insulation_C", b->wire_cond.insulation - TP_KELVIN_0C);
    tp_json_number(root, "max_drop", b->max_drop);
    tp_json_wire(root, "wire", &b->wire, &b->wire_cond);
    tp_json_number(root, "power_density_W_per_cm2", b->density * 1e-4);
    tp_json_number(root, "power_density_limit_W_per_cm2", b->density_limit * 1e-4);
    tp_json_number(root, "warnings", b->n_warn);
    tp_json_number(root, "failures", b->n_fail);
    checks = cJSON_AddArrayToObject(root, "checks");
    for (i = 0; checks && i < b->n_checks; i++) {
        cJSON *c = cJSON_CreateObject();
        if (!c)
            break;
        cJSON_AddStringToObject(c, "check", b->checks[i].name);
        cJSON_AddStringToObject(c, "verdict", tp_budget_verdict_name(b->checks[i].verdict));
        tp_json_number(c, "value", b->checks[i].value);
        tp_json_number(c, "limit", b->checks[i].limit);
        cJSON_AddStringToObject(c, "unit", b->checks[i].unit);
        cJSON_AddItemToArray(checks, c);
    }
    st = tp_json_write(path, root, d);
    cJSON_Delete(root);
    return st;
}

static tp_status run_budget(const tp_cli *cli, tp_diag *d)
{
    tp_session s;
    tp_budget b;
    tp_status rc = tp_session_open(&s, cli, d);
    if (rc != TP_OK)
        return rc;
    rc = tp_budget_compute(&s.desc, s.net, &b, d);
    if (rc == TP_OK && tp_cli_get(cli, "json"))
        rc = write_json(tp_cli_get(cli, "json"), s.net, &b, d);
    if (rc == TP_OK && s.text)
        summary(s.text, &s, &b);
    if (rc == TP_OK && tp_cli_flag(cli, "strict") && b.n_warn + b.n_fail > 0) {
        tp_diag_note(d, "--strict: %d check%s gave FAIL, %d WARN", b.n_fail,
                     b.n_fail == 1 ? "" : "s", b.n_warn);
        rc = TP_ERR_STRICT;
    }
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_cmd_budget = {
    "budget",
    run_budget,
    "Currents, supply headroom, wiring and switch losses, fuse size.",
    1,
    budget_opts,
    "Uses the config's supply: (voltage, power or current rating, efficiency,\n"
    "output_resistance), loads: (id with power or current) and wiring: (cross_section or awg,\n"
    "one-way length, switch_resistance, installation, insulation_rating, ambient, max_drop,\n"
    "fuse). The heater's cold resistance sets the cold-start current; the holding point\n"
    "(KINSOL) sets the running current. The wire is checked against a published ampacity\n"
    "table (NEC Table 310.16, or a chassis-wiring table), the smallest wire meeting ampacity\n"
    "and drop is suggested in AWG and mm2, and the fuse never exceeds the wire's ampacity.\n"
    "FAIL: a rating exceeded; WARN: a margin missed.",
    "tepid budget workshop-bed-24v.yaml\n"
    "tepid budget workshop-bed-24v.yaml --set heater.supply=20V --json budget.json"};
