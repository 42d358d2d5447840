/* The heater's circuit: copper wiring (IEC 60028 resistivity, ASTM B258 gauges) and the
 * resistance in series with the element between the supply and it. Assembly puts the total
 * into the heater source, so that every verb draws the same current from the same circuit;
 * `budget` reports the parts. */
#ifndef TP_CIRCUIT_H
#define TP_CIRCUIT_H

#include "description.h"
#include "diag.h"
#include "status.h"

#define TP_COPPER_RHO20 (1.0 / 58.0e6) /* ohm.m, annealed copper at 20 degC (IEC 60028, IACS) */
#define TP_COPPER_ALPHA20 0.00393      /* 1/K, its temperature coefficient at 20 degC (IEC 60028;
                                          from memory) */
#define TP_SAME_SUPPLY 0.1 /* -, a heater whose voltage is within this share of supply.voltage
                              draws from that supply (common practice, no source) */

/* Cross-section of a solid conductor of American Wire Gauge `n` (ASTM B258: d = 0.127 mm x
 * 92^((36 - n)/39)), m2. */
double tp_circuit_awg_area(double n);

/* Resistance of `length` m of copper of cross-section `area` m2 at `t` kelvin, ohm. */
double tp_circuit_copper_resistance(double area, double length, double t);

/* The series path of the heater, ohm. */
typedef struct tp_circuit {
    int on_supply;   /* the heater draws from `supply:` (or there is no supply: section) */
    double r_heater; /* heater.supply_resistance (0 in the raw form) */
    double r_output; /* supply.output_resistance, when the heater draws from that supply */
    double r_wire;   /* the wiring loop (out and back) at 20 degC */
    double r_switch; /* wiring.switch_resistance */
    double total;    /* their sum: what the network's heater source carries as r_series */
} tp_circuit;

/* The series path of a heater fed at `heater_v` volts (NaN: a constant-power heater, which has
 * no circuit) from the description's heater:, supply: and wiring: sections. TP_ERR_CONFIG, with
 * the message at `wiring_at`, when the wiring has no cross-section; *c is then zero. */
tp_status tp_circuit_series(const tp_description *desc, double heater_v, tp_loc wiring_at,
                            tp_circuit *c, tp_diag *d);

#endif
