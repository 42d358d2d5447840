/* Heaters as sold and by type: the resistance of a heater given by its rating (rated_voltage^2 /
 * rated_power at its reference temperature), the voltage it runs on, its area, and the
 * power-density limit of its type, which the cautions and the budget's verdict share. */
#ifndef TP_HEATER_H
#define TP_HEATER_H

#include "description.h"

/* W/m2 (1 W/cm2): flexible silicone-rubber and polyimide heaters above this must be fully
 * bonded to a metal plate, or they overheat and delaminate (common practice, no source). */
#define TP_HEATER_DENSITY_FLEX 1.0e4

/* Whether the heater is given as sold: rated_power or rated_voltage is set. */
int tp_heater_is_rated(const tp_heater *h);

/* The element's resistance at its reference temperature, ohm: heater.resistance, or for a
 * heater given as sold rated_voltage^2 / rated_power (both set); NaN for a constant-power
 * heater or an incomplete rating. */
double tp_heater_r0(const tp_heater *h);

/* The voltage the heater runs on, V: heater.supply, or rated_voltage when no supply is given;
 * NaN for a constant-power heater. */
double tp_heater_volts(const tp_heater *h);

/* The heater's area, m2: the size of its layer (the bed's when the layer has none); NaN when
 * the description has no such layer (raw form). */
double tp_heater_area(const tp_description *desc);

/* The power-density limit of the heater's type, W/m2, and the type's name in *type (the
 * layer's material id): flexible heaters (silicone-rubber and polyimide layers) have
 * TP_HEATER_DENSITY_FLEX; NaN (and *type NULL) when no limit is known for the type. */
double tp_heater_density_limit(const tp_description *desc, const char **type);

#endif
