/* Quantities with units: parse "4 mm", "220 W", "18 degC" into SI with a dimension check
 * (udunits2), keeping absolute temperatures and temperature differences apart. */
#ifndef TP_UNITS_H
#define TP_UNITS_H

#include <stddef.h>

#include "status.h"

#define TP_KELVIN_0C 273.15 /* K at 0 degC (BIPM SI Brochure, 9th ed., 2.3.1); the one definition */

/* The physical kinds a config value may have. The SI unit of each is in tp_units_si_name(). */
typedef enum tp_dim {
    TP_DIM_NONE,            /* dimensionless: a bare number (or "%") */
    TP_DIM_LENGTH,          /* m */
    TP_DIM_AREA,            /* m2 */
    TP_DIM_VOLUME,          /* m3 */
    TP_DIM_TIME,            /* s */
    TP_DIM_SPEED,           /* m/s */
    TP_DIM_POWER,           /* W */
    TP_DIM_ENERGY,          /* J */
    TP_DIM_CONDUCTANCE,     /* W/K */
    TP_DIM_CAPACITY,        /* J/K */
    TP_DIM_HTC,             /* W/(m2.K), heat-transfer or contact coefficient */
    TP_DIM_CONDUCTIVITY,    /* W/(m.K) */
    TP_DIM_DENSITY,         /* kg/m3 */
    TP_DIM_SPECIFIC_HEAT,   /* J/(kg.K) */
    TP_DIM_TEMPERATURE,     /* K, an absolute temperature (converted with its offset) */
    TP_DIM_INTERVAL,        /* K, a temperature difference (never offset: 2 degC is 2 K) */
    TP_DIM_PER_KELVIN,      /* 1/K: temperature coefficients, proportional gain */
    TP_DIM_PER_KELVIN_SEC,  /* 1/(K.s): integral gain */
    TP_DIM_SEC_PER_KELVIN,  /* s/K: derivative gain */
    TP_DIM_RATE,            /* K/s: rate of temperature change */
    TP_DIM_VOLTAGE,         /* V */
    TP_DIM_CURRENT,         /* A */
    TP_DIM_RESISTANCE,      /* ohm */
    TP_DIM_MASS,            /* kg */
    TP_DIM_PRESSURE,        /* Pa */
    TP_DIM_COUNT
} tp_dim;

/* Parse `text` (a number, optional space, a unit) as a quantity of dimension `dim`, giving SI.
 * On failure returns TP_ERR_CONFIG, writes a one-line reason to msg and sets *hint to a static
 * suggestion (never NULL on failure). Thread-safe. Never accepts NaN or infinity. */
tp_status tp_units_parse(const char *text, tp_dim dim, double *si, char *msg, size_t msg_size,
                         const char **hint);

/* Convert an SI value back into `unit` (the unit text a user wrote), for writing configs.
 * Returns TP_ERR_CONFIG when the unit does not fit the dimension. */
tp_status tp_units_from_si(double si, const char *unit, tp_dim dim, double *out);

/* The unit text of a quantity ("mm" for "3 mm" or "3mm", "" for a bare number), without
 * surrounding blanks, into unit. TP_ERR_CONFIG (unit set to "") when the text does not start
 * with a number or the unit does not fit. */
tp_status tp_units_unit_text(const char *text, char *unit, size_t size);

/* The SI unit text of a dimension ("W/(m2.K)"), and an example value ("8 W/(m2.K)"). */
const char *tp_units_si_name(tp_dim dim);
const char *tp_units_example(tp_dim dim);

/* Strict number parsing: the whole of `text` must be one finite decimal number (no hex,
 * no NaN/inf, no trailing characters). Returns 0 on success. */
int tp_units_parse_double(const char *text, double *out);

/* Release the unit database (call once at exit; later calls to the parser reload it). */
void tp_units_shutdown(void);

#endif
