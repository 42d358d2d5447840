/* The heater's circuit. Copper: rho20 = 1/58 ohm.mm2/m (IEC 60028, the International Annealed
 * Copper Standard), alpha20 = 0.00393 1/K. AWG diameters from the ASTM B258 definition. */
#include "circuit.h"

#include <math.h>
#include <string.h>

#include "units.h"

#define TP_KELVIN_20C (TP_KELVIN_0C + 20.0) /* K, the reference of the copper data */
#define TP_PI 3.14159265358979323846

double tp_circuit_awg_area(double n)
{
    double d = 0.127e-3 * pow(92.0, (36.0 - n) / 39.0);
    return TP_PI * d * d / 4.0;
}

double tp_circuit_copper_resistance(double area, double length, double t)
{
    return TP_COPPER_RHO20 * (1.0 + TP_COPPER_ALPHA20 * (t - TP_KELVIN_20C)) * length / area;
}

tp_status tp_circuit_series(const tp_description *desc, double heater_v, tp_loc wiring_at,
                            tp_circuit *c, tp_diag *d)
{
    memset(c, 0, sizeof *c);
    c->on_supply = !desc->supply.present || !isfinite(heater_v) ||
                   fabs(heater_v - desc->supply.voltage) <= TP_SAME_SUPPLY * desc->supply.voltage;
    if (!isfinite(heater_v))
        return TP_OK;
    if (desc->form == TP_FORM_PHYSICAL && tp_isset(desc->heater.supply_resistance))
        c->r_heater = desc->heater.supply_resistance;
    if (desc->supply.present && c->on_supply && tp_isset(desc->supply.output_resistance))
        c->r_output = desc->supply.output_resistance;
    if (desc->wiring.present) {
        double area = tp_isset(desc->wiring.cross_section) ? desc->wiring.cross_section
                      : tp_isset(desc->wiring.awg)         ? tp_circuit_awg_area(desc->wiring.awg)
                                                           : TP_UNSET;
        if (!isfinite(area)) {
            tp_diag_error(d, wiring_at, "wiring", "give cross_section: 1.5 mm2 or awg: 16",
                          "the wiring needs a cross-section");
            memset(c, 0, sizeof *c);
            return TP_ERR_CONFIG;
        }
        c->r_wire = tp_circuit_copper_resistance(area, 2.0 * desc->wiring.length, TP_KELVIN_20C);
        if (tp_isset(desc->wiring.switch_resistance))
            c->r_switch = desc->wiring.switch_resistance;
    }
    c->total = c->r_heater + c->r_output + c->r_wire + c->r_switch;
    return TP_OK;
}
