/* The power budget. The verdict thresholds are common practice, no source: a supply within its
 * rating at cold start and 90 % of it continuously, at most 3 % voltage drop in the wiring
 * (wiring.max_drop), at most 1 W in a switch without a heatsink, a fuse at 125 % of the
 * continuous current. The wire's ampacity is a published table's (ampacity.c), the heater's
 * power-density limit the cautions' (heater.h). The heater's currents and powers are the
 * network's (tp_network_source_power and _current at the states the other verbs use), so that
 * budget, warmup and steady agree. */
#include "budget.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "eval.h"
#include "heater.h"
#include "steady.h"
#include "units.h"

#define TP_DERATE 0.9        /* -, continuous load as a share of the supply rating */
#define TP_SWITCH_MAX 1.0    /* W in a switch without a heatsink */

const char *tp_budget_verdict_name(tp_verdict v)
{
    return v == TP_FAIL ? "FAIL" : v == TP_WARN ? "WARN" : "PASS";
}

/* A check whose verdict is PASS when `ok`, else `level`. */
static void check_at(tp_budget *b, tp_verdict level, const char *name, int ok, double value,
                     double limit, const char *unit, const char *note)
{
    tp_check *c;
    if (b->n_checks == TP_BUDGET_CHECKS_MAX)
        return;
    c = &b->checks[b->n_checks++];
    snprintf(c->name, sizeof c->name, "%s", name);
    c->verdict = ok ? TP_PASS : level;
    c->value = value;
    c->limit = limit;
    snprintf(c->unit, sizeof c->unit, "%s", unit);
    snprintf(c->note, sizeof c->note, "%s", note ? note : "");
    if (c->verdict == TP_WARN)
        b->n_warn++;
    else if (c->verdict == TP_FAIL)
        b->n_fail++;
}

static void check(tp_budget *b, const char *name, int ok, double value, double limit,
                  const char *unit, const char *note)
{
    check_at(b, TP_WARN, name, ok, value, limit, unit, note);
}

/* The element's mean temperature (weighted by its share in each node), K. */
static double element_t(const tp_net_source *s, const double *t)
{
    double sum = 0.0;
    int k;
    for (k = 0; k < s->n_nodes; k++)
        sum += s->weights[k] * t[s->nodes[k]];
    return sum;
}

/* The running point: the holding point, or full power without a setpoint or when the
 * setpoint is out of reach (a WARN); the same steady states as `steady` and `warmup`. */
static tp_status running_point(const tp_network *net, const tp_net_source *s, tp_budget *b,
                               tp_diag *d)
{
    tp_steady run, full;
    tp_status st;
    size_t i;
    double wire;
    b->holding = tp_network_holds(net);
    st = tp_steady_full(net, 1.0, &full, d);
    if (st != TP_OK)
        return st;
    if (b->holding && full.reading >= net->control.setpoint) {
        st = tp_steady_hold_given(net, net->control.setpoint, &full, &run, d);
        tp_steady_clear(&full);
        if (st != TP_OK)
            return st;
    } else {
        run = full;
        b->out_of_reach = b->holding;
        b->holding = 0;
    }
    b->t_hold = element_t(s, run.temps);
    b->hot_hold = tp_eval_surface_at(net, run.temps, NULL);
    for (i = 0; i < (size_t)net->n_nodes; i++)
        if (net->nodes[i].capacity > 0 && !(run.temps[i] <= b->node_hold))
            b->node_hold = run.temps[i];
    b->duty_hold = run.duty;
    b->reading_full = run.reading;
    if (s->kind == TP_SRC_ELECTRIC) {
        b->i_hold_on = tp_network_source_current(s, run.temps);
        b->p_hold = tp_network_source_power(s, run.temps, run.duty, &wire);
    } else {
        b->i_hold_on = s->power / b->v;
        b->p_hold = run.duty * s->power;
    }
    b->i_hold_avg = b->duty_hold * b->i_hold_on;
    tp_steady_clear(&run);
    return TP_OK;
}

/* Other loads on the supply, the totals it carries and its rating. */
static void supply_totals(const tp_description *desc, tp_budget *b)
{
    size_t i;
    double p_loads_v;
    for (i = 0; i < desc->n_loads; i++) {
        const tp_load *l = &desc->loads[i];
        double amps = tp_isset(l->current) ? l->current : tp_isset(l->power) ? l->power / b->v : 0;
        b->i_loads_cold += amps;
    }
    b->i_loads_hold = b->i_loads_cold;
    p_loads_v = b->i_loads_hold * b->v;
    b->i_total_cold = b->i_loads_cold + (b->heater_on_supply ? b->i_cold : 0.0);
    b->i_total_hold_peak = b->i_loads_hold + (b->heater_on_supply ? b->i_hold_on : 0.0);
    b->i_total_hold_avg = b->i_loads_hold + (b->heater_on_supply ? b->i_hold_avg : 0.0);
    if (desc->supply.present) {
        const tp_supply_spec *sp = &desc->supply;
        double eff = tp_isset(sp->efficiency) ? sp->efficiency : 1.0;
        b->i_rating = tp_isset(sp->current) ? sp->current
                      : tp_isset(sp->power) ? sp->power / sp->voltage
                                            : TP_UNSET;
        b->input_power_hold = (p_loads_v + (b->heater_on_supply ? b->v * b->i_hold_avg : 0)) / eff;
    }
}

/* The wiring figures that need the heater's cold current: the wire's ampacity, the smallest
 * wire, the fuse, and the heater's power density. */
static void wiring_figures(const tp_description *desc, const tp_network *net,
                           const tp_net_source *s, tp_budget *b)
{
    const tp_wiring *w = &desc->wiring;
    double room = desc->form == TP_FORM_PHYSICAL ? desc->room.temperature : tp_network_room(net);
    double v = s->kind == TP_SRC_ELECTRIC ? s->supply : b->v;
    b->wire_cond.installation = w->present ? w->installation : TP_INSTALL_CABLE;
    b->wire_cond.insulation = w->present && tp_isset(w->insulation_rating)
                                  ? w->insulation_rating
                                  : TP_AMPACITY_INSULATION_DEFAULT;
    /* The air around the wires: wiring.ambient, else the room, else the table's own 30 degC. */
    b->wire_cond.ambient = w->present && tp_isset(w->ambient) ? w->ambient
                           : isfinite(room)                    ? room
                                                               : TP_AMPACITY_REF_AMBIENT;
    b->max_drop = w->present && tp_isset(w->max_drop) ? w->max_drop : TP_AMPACITY_DROP_DEFAULT;
    b->ampacity.amps = b->ampacity.table_amps = TP_UNSET;
    if (w->present)
        tp_ampacity_lookup(tp_isset(w->cross_section) ? w->cross_section
                                                      : tp_circuit_awg_area(w->awg),
                           &b->wire_cond, &b->ampacity);
    tp_ampacity_wire_recommend(b->i_cold, w->present ? w->length : TP_UNSET, v, b->max_drop,
                               &b->wire_cond, &b->wire);
    /* A heater may run full on for a long time: its cold current is the continuous load. */
    b->fuse_fitted = w->present && tp_isset(w->fuse);
    b->fuse = b->fuse_fitted ? w->fuse
                             : tp_ampacity_fuse_within(b->i_cold, b->ampacity.amps,
                                                       &b->fuse_below_rule);
    b->density_limit = tp_heater_density_limit(desc, &b->heater_type);
    b->density = b->p_cold / tp_heater_area(desc);
}

/* The wiring's checks: its drop, its ampacity (FAIL over it), the fuse against the wire
 * (FAIL above its ampacity) and the current, the switch's loss. */
static void wiring_verdicts(const tp_description *desc, const tp_net_source *s, tp_budget *b)
{
    double v = s->kind == TP_SRC_ELECTRIC ? s->supply : b->v;
    char note[200];
    const tp_ampacity *a = &b->ampacity;
    check(b, "wiring voltage drop", b->drop_cold <= b->max_drop * v, 100.0 * b->drop_cold / v,
          100.0 * b->max_drop, "%",
          "at the cold-start current (wiring.max_drop; 3 % common practice, no source)");
    if (isfinite(a->amps)) {
        if (isfinite(a->column))
            snprintf(note, sizeof note,
                     "NEC Table 310.16 at %.0f AWG, %.0f degC column x %.3f for %.1f degC "
                     "ambient (docs/sizing.md)",
                     a->row_awg, a->column - TP_KELVIN_0C, a->factor,
                     b->wire_cond.ambient - TP_KELVIN_0C);
        else
            snprintf(note, sizeof note,
                     "chassis-wiring table at %.0f AWG, single wire in free air, no ambient "
                     "correction (docs/sizing.md)",
                     a->row_awg);
        check_at(b, TP_FAIL, "wire within its ampacity", b->i_cold <= a->amps, b->i_cold, a->amps,
                 "A", note);
    } else {
        snprintf(note, sizeof note,
                 "the table rates no wire this thin at %.0f degC insulation: give "
                 "wiring.insulation_rating or installation: chassis",
                 b->wire_cond.insulation - TP_KELVIN_0C);
        check(b, "wire within its ampacity", 0, b->i_cold, TP_UNSET, "A", note);
    }
    if (b->fuse_fitted) {
        check_at(b, TP_FAIL, "fuse within the wire's ampacity",
                 !isfinite(a->amps) || b->fuse <= a->amps, b->fuse, a->amps, "A",
                 "wiring.fuse must protect the wire: no larger than its ampacity");
        check(b, "fuse above the running current", b->fuse >= TP_AMPACITY_FUSE_FACTOR * b->i_cold,
              b->fuse, TP_AMPACITY_FUSE_FACTOR * b->i_cold, "A",
              "at least 1.25 x the cold-start current, or it may open on a long warm-up "
              "(common practice, no source)");
    } else if (isfinite(a->amps)) {
        check_at(b, b->fuse > 0 ? TP_WARN : TP_FAIL, "fuse within the wire's ampacity",
                 b->fuse > 0 && !b->fuse_below_rule, b->fuse, a->amps, "A",
                 b->fuse <= 0 ? "no standard fuse fits between the running current and the "
                                "wire's ampacity: use a thicker wire"
                 : b->fuse_below_rule ? "the largest standard fuse within the ampacity is "
                                        "under 1.25 x the current and may open on a long "
                                        "warm-up: a thicker wire lets it follow the rule"
                                      : "the suggested fuse, 1.25 x the current or more "
                                        "(common practice, no source)");
    }
    if (tp_isset(desc->wiring.switch_resistance))
        check(b, "switch conduction loss", b->switch_loss_cold <= TP_SWITCH_MAX,
              b->switch_loss_cold, TP_SWITCH_MAX, "W",
              "full on; above about 1 W a switch needs a heatsink (common practice)");
}

/* The checks, each PASS, WARN or FAIL (tp_verdict). */
static void verdicts(const tp_description *desc, const tp_network *net, const tp_net_source *s,
                     tp_budget *b)
{
    if (b->holding)
        check(b, "holding within the duty limit", b->duty_hold <= s->max_duty, b->duty_hold,
              s->max_duty, "-", "the series resistance of supply, wiring and switch included");
    if (b->out_of_reach)
        check(b, "setpoint within reach", 0, b->reading_full - TP_KELVIN_0C,
              net->control.setpoint - TP_KELVIN_0C, "degC",
              "at full power the reading levels off below the setpoint");
    if (isfinite(b->i_rating)) {
        check_at(b, TP_FAIL, "supply at cold start", b->i_total_cold <= b->i_rating,
                 b->i_total_cold, b->i_rating, "A", "every load on, the heater cold and full on");
        check_at(b, TP_FAIL, "supply while holding (peak)", b->i_total_hold_peak <= b->i_rating,
                 b->i_total_hold_peak, b->i_rating, "A", "the heater's on-current during PWM");
        check_at(b, b->i_total_hold_avg <= b->i_rating ? TP_WARN : TP_FAIL,
                 "supply while holding (mean)", b->i_total_hold_avg <= TP_DERATE * b->i_rating,
                 b->i_total_hold_avg, TP_DERATE * b->i_rating, "A",
                 "continuous load within 90 % of the rating (common practice); over the rating "
                 "FAIL");
    }
    if (desc->wiring.present)
        wiring_verdicts(desc, s, b);
    if (b->heater_type && isfinite(b->density)) {
        char note[200];
        snprintf(note, sizeof note,
                 "cold start, full on, over the heater's area; the limit of a %s heater (common "
                 "practice, no source)",
                 b->heater_type);
        check_at(b, TP_FAIL, "heater power density", b->density <= b->density_limit,
                 b->density * 1e-4, b->density_limit * 1e-4, "W/cm2", note);
    }
}

tp_status tp_budget_compute(const tp_description *desc, const tp_network *net, tp_budget *b,
                            tp_diag *d)
{
    int src = tp_network_heater(net);
    const tp_net_source *s;
    tp_status st;
    memset(b, 0, sizeof *b);
    b->i_rating = TP_UNSET;
    b->node_hold = TP_UNSET;
    b->r_cold = TP_UNSET;
    if (src < 0) {
        tp_diag_error(d, tp_diag_loc_none(), "heater", "add heater: (or a network source)",
                      "there is no heater to budget");
        return TP_ERR_CONFIG;
    }
    s = &net->sources[src];
    b->v = desc->supply.present ? desc->supply.voltage
                                : (s->kind == TP_SRC_ELECTRIC ? s->supply : TP_UNSET);
    if (!isfinite(b->v)) {
        tp_diag_error(d, tp_diag_loc_none(), "supply.voltage",
                      "add supply: {voltage: 24 V, power: 360 W} or give the heater supply and "
                      "resistance",
                      "the budget needs a supply voltage");
        return TP_ERR_CONFIG;
    }
    /* The parts of the series path, for the report; assembly put their sum into the source. */
    st = tp_circuit_series(desc, s->kind == TP_SRC_ELECTRIC ? s->supply : TP_UNSET,
                           tp_diag_loc_none(), &b->circuit, d);
    if (st != TP_OK)
        return st;
    b->heater_on_supply = b->circuit.on_supply;

    /* Cold start: the network's initial state (the room), full on: the current warmup draws at
     * its first step, and every summary's header states. */
    tp_network_cold_start(net, &b->i_cold, &b->p_cold, &b->wire_cold);
    if (s->kind == TP_SRC_ELECTRIC) {
        b->r_cold = s->supply / b->i_cold - s->r_series;
    } else {
        b->i_cold = s->power / b->v;
        b->wire_cold = 0.0;
    }
    st = running_point(net, s, b, d);
    if (st != TP_OK)
        return st;
    supply_totals(desc, b);

    /* Wiring and switch. */
    b->drop_cold = b->i_cold * b->circuit.r_wire;
    b->wire_loss_cold = b->i_cold * b->i_cold * b->circuit.r_wire;
    b->wire_loss_hold = b->duty_hold * b->i_hold_on * b->i_hold_on * b->circuit.r_wire;
    b->switch_loss_cold = b->i_cold * b->i_cold * b->circuit.r_switch;
    b->switch_loss_hold = b->duty_hold * b->i_hold_on * b->i_hold_on * b->circuit.r_switch;
    wiring_figures(desc, net, s, b);
    verdicts(desc, net, s, b);
    return TP_OK;
}

int tp_budget_cautions(const tp_description *desc, const tp_network *net, const tp_budget *b,
                       tp_caution out[TP_CAUTIONS_MAX])
{
    tp_caution_exposure ex = {b->hot_hold, b->node_hold, b->i_cold, NULL, NULL};
    return tp_caution_list(desc, net, &ex, out);
}
