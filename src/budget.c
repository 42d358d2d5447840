/* The power budget. Copper: rho20 = 1/58 ohm.mm2/m (IEC 60028, the International Annealed
 * Copper Standard), alpha20 = 0.00393 1/K. AWG diameters from the ASTM B258 definition. The
 * verdict thresholds are common practice, no source: a supply within its rating at cold start
 * and 90 % of it continuously, at most 3 % voltage drop in the wiring, at most 1 W in a switch
 * without a heatsink, a fuse at 125 % of the continuous current. */
#include "budget.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "steady.h"

#define TP_KELVIN_20C 293.15
#define TP_PI 3.14159265358979323846
#define TP_DERATE 0.9        /* -, continuous load as a share of the supply rating */
#define TP_DROP_MAX 0.03     /* -, wiring drop as a share of the supply voltage */
#define TP_SWITCH_MAX 1.0    /* W in a switch without a heatsink */
#define TP_FUSE_FACTOR 1.25  /* -, fuse rating over continuous current */
#define TP_SAME_SUPPLY 0.05  /* -, heater voltage within this of the supply's: same supply */

static const double fuse_sizes[] = {0.5,  1.0,  1.6, 2.0,  2.5,  3.15, 4.0,  5.0,  6.3,
                                    7.5,  8.0,  10,  12.5, 15,   16,   20,   25,   30,
                                    32,   35,   40,  50,   63,   80,   100,  125};

double tp_awg_area(double n)
{
    double d = 0.127e-3 * pow(92.0, (36.0 - n) / 39.0);
    return TP_PI * d * d / 4.0;
}

double tp_copper_resistance(double area, double length, double t)
{
    return TP_COPPER_RHO20 * (1.0 + TP_COPPER_ALPHA20 * (t - TP_KELVIN_20C)) * length / area;
}

double tp_fuse_suggest(double amps)
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

/* The heater resistance at temperature t. */
static double heater_r(const tp_net_source *s, double t)
{
    return fmax(s->r0 * (1.0 + s->tempco * (t - s->tref)), 0.01 * s->r0);
}

tp_status tp_budget_compute(const tp_desc *desc, tp_network *net, tp_budget *b, tp_diag *d)
{
    int src = net->has_control ? net->control.source : tp_network_find_source(net, "heater");
    const tp_net_source *s;
    tp_steady run;
    tp_status st;
    size_t i;
    int node;
    double tr = desc->form == TP_FORM_PHYSICAL ? desc->room.temperature : TP_KELVIN_20C;
    double p_loads_v;
    memset(b, 0, sizeof *b);
    b->i_rating = TP_UNSET;
    b->node_hold = TP_UNSET;
    if (src < 0)
        src = net->n_sources > 0 ? 0 : -1;
    if (src < 0) {
        tp_diag_error(d, tp_loc_none(), "heater", "add heater: (or a network source)",
                      "there is no heater to budget");
        return TP_ERR_CONFIG;
    }
    s = &net->sources[src];
    node = s->nodes[0];
    b->v = desc->supply.present ? desc->supply.voltage
                                : (s->kind == TP_SRC_ELECTRIC ? s->supply : TP_UNSET);
    if (!isfinite(b->v)) {
        tp_diag_error(d, tp_loc_none(), "supply.voltage",
                      "add supply: {voltage: 24 V, power: 360 W} or give the heater supply and "
                      "resistance", "the budget needs a supply voltage");
        return TP_ERR_CONFIG;
    }
    b->heater_on_supply = s->kind == TP_SRC_POWER || !desc->supply.present ||
                          fabs(s->supply - desc->supply.voltage) <= TP_SAME_SUPPLY * s->supply;
    /* The series path: supply output, the wiring loop (out and back), the switch. */
    if (desc->wiring.present) {
        double area = tp_isset(desc->wiring.cross_section) ? desc->wiring.cross_section
                      : tp_isset(desc->wiring.awg)         ? tp_awg_area(desc->wiring.awg)
                                                           : TP_UNSET;
        if (!isfinite(area)) {
            tp_diag_error(d, tp_loc_none(), "wiring", "give cross_section: 1.5 mm2 or awg: 16",
                          "the wiring needs a cross-section");
            return TP_ERR_CONFIG;
        }
        b->r_wire = tp_copper_resistance(area, 2.0 * desc->wiring.length, TP_KELVIN_20C);
    }
    b->r_series = b->r_wire;
    if (desc->supply.present && tp_isset(desc->supply.output_resistance))
        b->r_series += desc->supply.output_resistance;
    if (desc->wiring.present && tp_isset(desc->wiring.switch_resistance))
        b->r_series += desc->wiring.switch_resistance;

    /* Cold start: the element at room temperature, full on. */
    if (s->kind == TP_SRC_ELECTRIC) {
        double v = s->supply;
        b->r_cold = heater_r(s, tr);
        b->i_cold = v / (b->r_cold + b->r_series);
        b->p_cold = b->i_cold * b->i_cold * b->r_cold;
    } else {
        b->i_cold = s->power / b->v;
        b->p_cold = s->power;
    }
    /* The running point: the holding point, or full power without a setpoint. */
    b->holding = net->has_control && isfinite(net->control.setpoint) &&
                 (net->control.mode == TP_MODE_ONOFF || net->control.mode == TP_MODE_PID);
    st = b->holding ? tp_steady_hold(net, &run, d) : tp_steady_full(net, 1.0, &run, d);
    if (st != TP_OK)
        return st;
    b->t_hold = run.temps[node];
    b->hot_hold = tp_network_surface(net, run.temps);
    for (i = 0; i < (size_t)net->n_nodes; i++)
        if (net->nodes[i].capacity > 0 && !(run.temps[i] <= b->node_hold))
            b->node_hold = run.temps[i];
    /* The thermal solution fixes the power the heater must deliver; the series resistance of
     * the supply path lowers the on-power, so the duty that delivers it is recomputed here. */
    if (s->kind == TP_SRC_ELECTRIC) {
        double r = heater_r(s, b->t_hold);
        double p_on;
        b->i_hold_on = s->supply / (r + b->r_series);
        p_on = b->i_hold_on * b->i_hold_on * r;
        b->duty_hold = b->holding ? run.power / p_on : s->max_duty;
        b->i_hold_avg = b->duty_hold * b->i_hold_on;
        b->p_hold = b->duty_hold * p_on;
    } else {
        b->duty_hold = b->holding ? run.duty : s->max_duty;
        b->i_hold_on = s->power / b->v;
        b->i_hold_avg = b->duty_hold * b->i_hold_on;
        b->p_hold = b->duty_hold * s->power;
    }
    tp_steady_clear(&run);

    /* Other loads on the supply. */
    for (i = 0; i < desc->n_loads; i++) {
        const tp_load *l = &desc->loads[i];
        double amps = tp_isset(l->current) ? l->current : (tp_isset(l->power) ? l->power / b->v : 0);
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

    /* Wiring and switch. */
    b->drop_cold = b->i_cold * b->r_wire;
    b->wire_loss_cold = b->i_cold * b->i_cold * b->r_wire;
    b->wire_loss_hold = b->duty_hold * b->i_hold_on * b->i_hold_on * b->r_wire;
    if (desc->wiring.present && tp_isset(desc->wiring.switch_resistance)) {
        b->switch_loss_cold = b->i_cold * b->i_cold * desc->wiring.switch_resistance;
        b->switch_loss_hold = b->duty_hold * b->i_hold_on * b->i_hold_on *
                              desc->wiring.switch_resistance;
    }
    /* A heater may run full on for a long time: its cold current is the continuous load. */
    b->fuse = tp_fuse_suggest(b->i_cold);

    if (b->holding)
        check(b, "holding within the duty limit", b->duty_hold <= s->max_duty, b->duty_hold,
              s->max_duty, "-", "the series resistance of supply, wiring and switch included");
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
    return TP_OK;
}
