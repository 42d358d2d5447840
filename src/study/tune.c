/* PID gain suggestion.
 *
 * Identification: from the holding point (KINSOL), the controlled source's duty steps from u0
 * to u1 and the open loop is integrated; the reading's response y(t) rises from y0 to y_inf
 * (the steady state at u1). The FOPDT parameters come from the two-point method (Smith 1972,
 * as given in Seborg, Edgar & Mellichamp, Process Dynamics and Control, 2nd ed., Sec. 7.2;
 * from memory): the times t28 and t63 at which y reaches 28.3 % and 63.2 % of the change give
 * tau = 1.5 (t63 - t28) and dead = t63 - tau. The gain is (y_inf - y0) / (u1 - u0).
 * Rules: SIMC (Skogestad, J. Process Control 13 (2003) 291-309, PI for first-order plus
 * delay) and IMC-PID (Rivera, Morari & Skogestad, Ind. Eng. Chem. Process Des. Dev. 25 (1986)
 * 252-265, first-order Pade delay; from memory). */
#include "tune.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "history.h"
#include "integrate.h"
#include "metrics.h"
#include "series.h"
#include "steady.h"

#define TP_TWO_POINT_LOW 0.283 /* -, first fraction of the two-point method */
#define TP_TWO_POINT_HIGH 0.632 /* -, second fraction (one time constant) */
#define TP_STEP_EXTEND 8        /* the open-loop test is lengthened at most this many times */

void tp_tune_two_point(double t28, double t63, double *tau, double *dead)
{
    *tau = 1.5 * (t63 - t28);
    *dead = fmax(0.0, t63 - *tau);
}

void tp_tune_simc(const tp_fopdt *m, double tau_c, tp_gains *g)
{
    double ti = fmin(m->tau, 4.0 * (tau_c + m->dead));
    g->kp = m->tau / (m->gain * (tau_c + m->dead));
    g->ki = g->kp / ti;
    g->kd = 0.0;
    g->tau_c = tau_c;
}

void tp_tune_imc(const tp_fopdt *m, double lambda, tp_gains *g)
{
    double ti = m->tau + 0.5 * m->dead;
    double td = m->tau * m->dead / (2.0 * m->tau + m->dead);
    g->kp = (m->tau + 0.5 * m->dead) / (m->gain * (lambda + 0.5 * m->dead));
    g->ki = g->kp / ti;
    g->kd = g->kp * td;
    g->tau_c = lambda;
}

tp_status tp_tune_identify(tp_network *net, double step, tp_fopdt *m, tp_diag *d)
{
    tp_steady hold, after;
    tp_history h;
    tp_integrate_opts o;
    tp_integrate_stats st;
    tp_status rc;
    double *y0 = NULL, umax, dy, t28 = TP_UNSET, t63 = TP_UNSET, duration;
    int col, saved_control = net->has_control, src, tries;
    memset(m, 0, sizeof *m);
    memset(&hold, 0, sizeof hold);
    memset(&after, 0, sizeof after);
    if (!net->has_control || !isfinite(net->control.setpoint)) {
        tp_diag_error(d, tp_diag_loc_none(), "control.setpoint",
                      "add control: {mode: pid, setpoint: ...}", "tuning needs a setpoint");
        return TP_ERR_CONFIG;
    }
    src = net->control.source;
    umax = net->sources[src].max_duty;
    rc = tp_steady_hold(net, &hold, d);
    if (rc != TP_OK)
        return rc;
    m->u0 = hold.duty;
    m->u1 = m->u0 + step * umax <= umax ? m->u0 + step * umax : m->u0 - step * umax;
    m->y0 = hold.reading;
    rc = tp_steady_full(net, m->u1 / umax, &after, d);
    if (rc != TP_OK)
        goto done;
    dy = after.reading - m->y0;
    m->gain = dy / (m->u1 - m->u0);
    y0 = malloc((size_t)tp_network_state_size(net) * sizeof *y0);
    if (!y0) {
        rc = TP_ERR_NOMEM;
        goto done;
    }
    tp_steady_state_vector(net, &hold, y0);
    duration = net->run.duration;
    for (tries = 0; tries < TP_STEP_EXTEND; tries++) {
        rc = tp_history_init(&h, net);
        if (rc != TP_OK)
            goto done;
        net->has_control = 0;
        net->duty[src] = m->u1;
        tp_integrate_defaults(net, &o);
        o.t_end = duration;
        o.y0 = y0;
        o.out = tp_history_record;
        o.user = &h;
        rc = tp_integrate(net, &o, &st, d);
        net->has_control = saved_control;
        net->duty[src] = net->sources[src].max_duty;
        col = tp_history_column(&h, net->control.sensor);
        if (rc == TP_OK && col >= 0) {
            /* The sensor node plus the offset: the reading without ADC quantisation. */
            double lo = m->y0 - net->control.reading.offset + TP_TWO_POINT_LOW * dy;
            double hi = m->y0 - net->control.reading.offset + TP_TWO_POINT_HIGH * dy;
            if (dy > 0) {
                t28 = tp_series_first_rise(h.t, h.temps + col, h.n, h.n_out, lo);
                t63 = tp_series_first_rise(h.t, h.temps + col, h.n, h.n_out, hi);
            } else {
                t28 = tp_series_first_fall(h.t, h.temps + col, h.n, h.n_out, lo);
                t63 = tp_series_first_fall(h.t, h.temps + col, h.n, h.n_out, hi);
            }
        }
        tp_history_clear(&h);
        if (rc != TP_OK || (isfinite(t28) && isfinite(t63)))
            break;
        duration *= 2.0;
    }
    if (rc == TP_OK && !(isfinite(t28) && isfinite(t63))) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, "lengthen run.duration",
                      "the step response did not reach 63 %% of its change in %.0f s", duration);
        rc = TP_ERR_SOLVER;
    }
    if (rc == TP_OK)
        tp_tune_two_point(t28, t63, &m->tau, &m->dead);
done:
    free(y0);
    tp_steady_clear(&hold);
    tp_steady_clear(&after);
    return rc;
}
