/* Discrete controllers and the reading model. The controller is a pure function of its memory
 * and the reading; the integrator calls it at t = 0, period, 2 period, ... (zero-order hold). */
#include "control.h"

#include <math.h>

static double clamp(double x, double lo, double hi)
{
    return x < lo ? lo : x > hi ? hi : x;
}

void tp_control_start(const tp_control *c, tp_control_state *s)
{
    (void)c;
    s->ticks = 0;
    s->on = 0;
    s->integral = 0.0;
    s->last_reading = 0.0;
    s->d_term = 0.0;
    s->duty = 0.0;
}

double tp_control_tick(const tp_control *c, tp_control_state *s, double reading)
{
    double e, d_term, u;
    switch (c->mode) {
    case TP_MODE_OFF:
        s->duty = 0.0;
        break;
    case TP_MODE_FULL:
        s->duty = c->max_duty;
        break;
    case TP_MODE_ONOFF:
        /* Hysteresis: off at or above setpoint + band/2, on at or below setpoint - band/2,
         * otherwise unchanged; the first tick switches on below the setpoint (docs/control.md). */
        if (s->ticks == 0)
            s->on = reading < c->setpoint;
        else if (reading >= c->setpoint + 0.5 * c->band)
            s->on = 0;
        else if (reading <= c->setpoint - 0.5 * c->band)
            s->on = 1;
        s->duty = s->on ? c->max_duty : 0.0;
        break;
    case TP_MODE_PID:
        /* Positional PID: u_k = kp e_k + I_k + D_k,
         * I_k = clamp(I_{k-1} + ki T e_k, 0, u_max), u_k clamped to [0, u_max], then rounded
         * to the nearest of duty_levels steps when given. D is on the measurement, through a
         * first-order filter of time constant Tf discretised by backward differences
         * (docs/control.md): D_k = (Tf D_{k-1} - kd (y_k - y_{k-1})) / (Tf + T); Tf = 0 gives
         * the plain difference -kd (y_k - y_{k-1}) / T. */
        e = c->setpoint - reading;
        s->integral += c->ki * c->period * e;
        if (!c->unclamped)
            s->integral = clamp(s->integral, 0.0, c->max_duty);
        d_term = s->ticks > 0 ? (c->d_filter * s->d_term - c->kd * (reading - s->last_reading)) /
                                    (c->d_filter + c->period)
                              : 0.0;
        s->d_term = d_term;
        u = c->kp * e + s->integral + d_term;
        s->duty = clamp(u, 0.0, c->max_duty);
        /* Firmware writes an integer PWM value: the duty the heater gets is the nearest level,
         * never above the limit. */
        if (c->duty_levels > 0) {
            s->duty = floor(s->duty * c->duty_levels + 0.5) / c->duty_levels;
            if (s->duty > c->max_duty)
                s->duty = floor(c->max_duty * c->duty_levels) / c->duty_levels;
        }
        s->last_reading = reading;
        break;
    }
    s->ticks++;
    return s->duty;
}

double tp_control_thermistor_resistance(const tp_control_reading_model *m, double t)
{
    return m->r25 * exp(m->beta * (1.0 / t - 1.0 / TP_KELVIN_25C));
}

double tp_control_thermistor_temperature(const tp_control_reading_model *m, double r)
{
    return 1.0 / (1.0 / TP_KELVIN_25C + log(r / m->r25) / m->beta);
}

long tp_control_adc_code(const tp_control_reading_model *m, double t)
{
    /* Divider: `series` from the supply to the ADC input, the thermistor from there to ground. */
    double rt = tp_control_thermistor_resistance(m, t);
    /* supply rt / (rt + series), written so that rt = inf (a sensor below about 25 K with a
     * large beta: exp overflows) gives the supply rather than inf/inf = NaN, whose conversion
     * to long below would be undefined. */
    double v = m->supply / (1.0 + m->series / rt);
    double full = ldexp(1.0, m->adc_bits);
    double code = floor(v / m->adc_reference * full);
    return (long)clamp(code, 0.0, full - 1.0);
}

double tp_control_reading(const tp_control_reading_model *m, double t)
{
    double r, v, full;
    long code;
    if (!m->thermistor)
        return t + m->offset;
    full = ldexp(1.0, m->adc_bits);
    code = tp_control_adc_code(m, t);
    /* The firmware's view: the code's lower edge as a voltage, back through the divider and
     * the Beta equation. Codes at the ends saturate (open or shorted sensor). */
    if (code < 1)
        code = 1;
    v = (double)code / full * m->adc_reference;
    if (v >= m->supply)
        v = m->supply * (1.0 - 1.0 / full);
    r = m->series * v / (m->supply - v);
    return tp_control_thermistor_temperature(m, r) + m->offset;
}
