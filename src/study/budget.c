/* The power budget. The verdict thresholds are common practice, no source: a supply within its
 * rating at cold start and 90 % of it continuously, at most 3 % voltage drop in the wiring, at
 * most 1 W in a switch without a heatsink, a fuse at 125 % of the continuous current. The
 * heater's currents and powers are the network's (tp_network_source_power and _current at the
 * states the other verbs use), so that budget, warmup and steady agree. */
#include "budget.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "steady.h"
#include "units.h"

#define TP_DERATE 0.9        /* -, continuous load as a share of the supply rating */
#define TP_DROP_MAX 0.03     /* -, wiring drop as a share of the supply voltage */
#define TP_SWITCH_MAX 1.0    /* W in a switch without a heatsink */
#define TP_FUSE_FACTOR 1.25  /* -, fuse rating over continuous current */

static const double fuse_sizes[] = {0.5,  1.0,  1.6, 2.0,  2.5,  3.15, 4.0,  5.0,  6.3,
                                    7.5,  8.0,  10,  12.5, 15,   16,   20,   25,   30,
                                    32,   35,   40,  50,   63,   80,   100,  125};

double tp_budget_fuse_suggest(double amps)
{
    size_t i;
    for (i = 0; i < sizeof fuse_sizes / sizeof fuse_sizes[0]; i++)
        if (fuse_sizes[i] >= TP_FUSE_FACTOR * amps - 1e-9)
            return fuse_sizes[i];
    return 0.0;
}

static void check(tp_budget *b, const char *name, int ok, double value, double limit,
                  const char *unit, const char *note)
{
    tp_check *c;
    if (b->n_checks == TP_BUDGET_CHECKS_MAX)
        return;
    c = &b->checks[b->n_checks++];
    snprintf(c->name, sizeof c->name, "%s", name);
    c->verdict = ok ? TP_PASS : TP_WARN;
    c->value = value;
    c->limit = limit;
    snprintf(c->unit, sizeof c->unit, "%s", unit);
    snprintf(c->note, sizeof c->note, "%s", note ? note : "");
    if (!ok)
        b->n_warn++;
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
static tp_status running_point(tp_network *net, const tp_net_source *s, tp_budget *b, tp_diag *d)
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
    b->hot_hold = tp_network_surface(net, run.temps);
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

/* The checks, each PASS or WARN against its common-practice limit. */
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
        check(b, "supply at cold start", b->i_total_cold <= b->i_rating, b->i_total_cold,
              b->i_rating, "A", "every load on, the heater cold and full on");
        check(b, "supply while holding (peak)", b->i_total_hold_peak <= b->i_rating,
              b->i_total_hold_peak, b->i_rating, "A", "the heater's on-current during PWM");
        check(b, "supply while holding (mean)", b->i_total_hold_avg <= TP_DERATE * b->i_rating,
              b->i_total_hold_avg, TP_DERATE * b->i_rating, "A",
              "continuous load within 90 % of the rating (common practice)");
    }
    if (desc->wiring.present) {
        double v = s->kind == TP_SRC_ELECTRIC ? s->supply : b->v;
        check(b, "wiring voltage drop", b->drop_cold <= TP_DROP_MAX * v, 100.0 * b->drop_cold / v,
              100.0 * TP_DROP_MAX, "%", "at the cold-start current (common practice: 3 %)");
        if (tp_isset(desc->wiring.switch_resistance))
            check(b, "switch conduction loss", b->switch_loss_cold <= TP_SWITCH_MAX,
                  b->switch_loss_cold, TP_SWITCH_MAX, "W",
                  "full on; above about 1 W a switch needs a heatsink (common practice)");
    }
}

tp_status tp_budget_compute(const tp_description *desc, tp_network *net, tp_budget *b, tp_diag *d)
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
    /* A heater may run full on for a long time: its cold current is the continuous load. */
    b->fuse = tp_budget_fuse_suggest(b->i_cold);
    verdicts(desc, net, s, b);
    return TP_OK;
}

int tp_budget_cautions(const tp_description *desc, const tp_network *net, const tp_budget *b,
                       tp_caution out[TP_CAUTIONS_MAX])
{
    tp_caution_exposure ex = {b->hot_hold, b->node_hold, b->i_cold, NULL, NULL};
    return tp_caution_list(desc, net, &ex, out);
}
