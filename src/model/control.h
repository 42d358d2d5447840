/* Discrete controllers (off, full, on-off, PID) sampled every `period` with a zero-order hold,
 * and the reading model: what the controller sees of the sensor node (offset, NTC thermistor
 * divider and ADC quantisation). Equations: docs/control.md. */
#ifndef TP_CONTROL_H
#define TP_CONTROL_H

#include "description.h"
#include "units.h"

#define TP_KELVIN_25C (TP_KELVIN_0C + 25.0) /* K, the NTC reference temperature 25 degC */

/* How a sensor temperature becomes a reading. */
typedef struct tp_control_reading_model {
    double offset;        /* K, added to the reading */
    int thermistor;       /* nonzero: NTC divider + ADC */
    double r25;           /* ohm at 25 degC */
    double beta;          /* K, Beta-equation constant */
    double series;        /* ohm, fixed divider resistor from `supply` to the ADC input */
    double supply;        /* V across the divider */
    double adc_reference; /* V, ADC full scale */
    int adc_bits;         /* ADC resolution */
} tp_control_reading_model;

typedef struct tp_control {
    tp_mode mode;
    int source;         /* index of the switched source in the network */
    int sensor;         /* index of the node read */
    double setpoint;    /* K */
    double band;        /* K, on-off hysteresis */
    double period;      /* s */
    double kp;          /* 1/K */
    double ki;          /* 1/(K.s) */
    double kd;          /* s/K */
    double d_filter;    /* s, time constant of the first-order filter on the derivative term */
    double duty_levels; /* PID output rounded to k / duty_levels, as firmware writes an
                           integer PWM value (255 for 8 bits); 0: not rounded */
    double max_duty;    /* upper limit of the output, 0..1 */
    int unclamped;      /* nonzero: no anti-windup (the integral is not clamped); only for
                           comparisons, never from a config */
    tp_control_reading_model reading;
} tp_control;

/* Controller memory between ticks. */
typedef struct tp_control_state {
    long ticks;          /* ticks taken so far */
    int on;              /* on-off: current state */
    double integral;     /* PID: integral term, in duty */
    double last_reading; /* PID: previous reading, K */
    double d_term;       /* PID: derivative term of the last tick (filtered), in duty */
    double duty;         /* the output being held */
} tp_control_state;

/* Reset the controller memory before the first tick. */
void tp_control_start(const tp_control *c, tp_control_state *s);

/* One controller tick: takes the reading (K), returns the duty held until the next tick, in
 * [0, max_duty]. PID: derivative on the measurement, integral clamped to [0, max_duty]. */
double tp_control_tick(const tp_control *c, tp_control_state *s, double reading);

/* The reading the controller gets for a sensor node at `t` kelvin (quantised when a thermistor
 * and ADC are modelled; readings saturate at the ADC's ends like real firmware sees them). */
double tp_control_reading(const tp_control_reading_model *m, double t);

/* Thermistor resistance from the Beta equation R = R25 exp(B (1/T - 1/T25)), ohm. */
double tp_control_thermistor_resistance(const tp_control_reading_model *m, double t);

/* Temperature from a thermistor resistance (the inverse Beta equation), K. */
double tp_control_thermistor_temperature(const tp_control_reading_model *m, double r);

/* The ADC code for a sensor node at `t` kelvin, in [0, 2^bits - 1]. */
long tp_control_adc_code(const tp_control_reading_model *m, double t);

#endif
