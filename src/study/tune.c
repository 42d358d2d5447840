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

#include "assemble.h"
#include "config.h"
#include "guard.h"
#include "history.h"
#include "integrate.h"
#include "metrics.h"
#include "series.h"
#include "steady.h"
#include "warmup.h"

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

tp_status tp_tune_identify(const tp_network *net, const tp_run *run, double step, tp_fopdt *m,
                           tp_diag *d)
{
    tp_steady hold, after;
    tp_history h;
    tp_integrate_opts o;
    tp_integrate_stats st;
    tp_status rc;
    double *y0 = NULL, *duty = NULL, umax, dy, t28 = TP_UNSET, t63 = TP_UNSET, duration;
    int col, src, tries, i;
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
    duty = malloc((size_t)net->n_sources * sizeof *duty);
    if (!y0 || !duty) {
        rc = TP_ERR_NOMEM;
        goto done;
    }
    tp_steady_state_vector(net, &hold, y0);
    /* The open loop: no controller, the controlled source held at u1, the others fully on. */
    for (i = 0; i < net->n_sources; i++)
        duty[i] = i == src ? m->u1 : net->sources[i].max_duty;
    duration = run->duration;
    for (tries = 0; tries < TP_STEP_EXTEND; tries++) {
        rc = tp_history_init(&h, net);
        if (rc != TP_OK)
            goto done;
        tp_integrate_defaults(run, &o);
        o.t_end = duration;
        o.y0 = y0;
        o.duty = duty;
        o.out = tp_history_record;
        o.user = &h;
        rc = tp_integrate(net, &o, &st, d);
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
    free(duty);
    tp_steady_clear(&hold);
    tp_steady_clear(&after);
    return rc;
}

void tp_tune_gains(const tp_fopdt *m, tp_tune_rule rule, double param, tp_gains *g)
{
    if (rule == TP_RULE_SIMC)
        tp_tune_simc(m, param, g);
    else
        tp_tune_imc(m, param, g);
}

/* The cases of a search: the nominal network, and with `worst` each corner's, assembled. */
static tp_status search_cases(const tp_description *desc, const tp_yamltree *doc,
                              const tp_network *net, int worst, const tp_network **cases,
                              int *n, tp_diag *d)
{
    tp_guard_ranges rr;
    tp_guard_corner gc[TP_GUARD_CORNERS_MAX];
    tp_status rs;
    int c, nc;
    cases[0] = NULL;
    *n = 1;
    if (!worst)
        return TP_OK;
    rs = tp_guard_ranges_resolve(desc, doc, net, &rr, d);
    if (rs != TP_OK)
        return rs;
    nc = tp_guard_corners_plan(&rr, 1.0, 1.0, gc);
    for (c = 1; c < nc; c++) {
        tp_description cd;
        tp_diag quiet;
        memset(&cd, 0, sizeof cd);
        rs = tp_guard_corner_apply(desc, net, &cd, &gc[c]);
        tp_diag_init(&quiet, NULL);
        if (rs == TP_OK)
            rs = tp_assemble(&cd, doc, &quiet, &cases[*n]);
        tp_config_clear(&cd);
        if (rs != TP_OK) {
            tp_diag_error(d, tp_diag_loc_none(), "guard", "narrow the ranges in guard:",
                          "corner '%s' cannot be assembled: %s", gc[c].name, quiet.log);
            return rs;
        }
        (*n)++;
    }
    return TP_OK;
}

/* The closed loop of every case with the gains of `param`: *t the nominal time to the setpoint,
 * *over the largest overshoot, *ok when every case reaches the setpoint within the limit. */
static tp_status search_try(const tp_network *net, const tp_network *const *cases, int n,
                            const tp_run *run, const tp_fopdt *m, tp_tune_rule rule, double param,
                            double limit, double *t, double *over, int *ok, tp_diag *d)
{
    tp_gains g;
    int c;
    tp_tune_gains(m, rule, param, &g);
    *t = TP_UNSET;
    *over = 0.0;
    *ok = 1;
    for (c = 0; c < n; c++) {
        const tp_network *base = c == 0 ? net : cases[c];
        const tp_network *tuned = NULL;
        tp_control ctl = base->control;
        tp_net_change ch;
        tp_warmup w;
        tp_status rs;
        ctl.mode = TP_MODE_PID;
        ctl.kp = g.kp;
        ctl.ki = g.ki;
        ctl.kd = g.kd;
        ch = (tp_net_change){TP_CHANGE_CONTROL, -1, -1, 0.0, NULL, &ctl};
        memset(&w, 0, sizeof w);
        rs = tp_network_copy(base, &ch, 1, &tuned);
        if (rs == TP_OK)
            rs = tp_warmup_run(tuned, run, &w, d);
        tp_network_release(&tuned);
        if (rs == TP_OK) {
            if (c == 0)
                *t = w.metrics.t_setpoint;
            if (!isfinite(w.metrics.t_setpoint))
                *ok = 0;
            *over = fmax(*over, w.metrics.overshoot_reading);
        }
        tp_warmup_clear(&w);
        if (rs != TP_OK)
            return rs;
    }
    if (!(*over <= limit))
        *ok = 0;
    return TP_OK;
}

tp_status tp_tune_overshoot(const tp_description *desc, const tp_yamltree *doc,
                            const tp_network *net, const tp_fopdt *m, tp_tune_rule rule,
                            double param0, double limit, int worst, tp_tune_search *s,
                            tp_diag *d)
{
    const tp_network *cases[TP_TUNE_CASES_MAX] = {NULL};
    double prev_p = TP_UNSET, best_t = HUGE_VAL;
    int prev_ok = 1, j, k, n = 1;
    tp_status rs;
    memset(s, 0, sizeof *s);
    s->limit = limit;
    s->param = s->t_setpoint = s->overshoot = s->least_param = TP_UNSET;
    s->least_overshoot = HUGE_VAL;
    s->param_lo = param0 * pow(2.0, 0.5 * TP_TUNE_SCAN_LOW);
    s->param_hi = param0 * pow(2.0, 0.5 * TP_TUNE_SCAN_HIGH);
    rs = search_cases(desc, doc, net, worst, cases, &n, d);
    s->n_cases = n;
    for (j = TP_TUNE_SCAN_LOW; rs == TP_OK && j <= TP_TUNE_SCAN_HIGH; j++) {
        double p = param0 * pow(2.0, 0.5 * j), t, over, lo, hi;
        int ok;
        rs = search_try(net, cases, n, &desc->run, m, rule, p, limit, &t, &over, &ok, d);
        if (rs != TP_OK)
            break;
        s->tried++;
        if (isfinite(t) && over < s->least_overshoot) {
            s->least_overshoot = over;
            s->least_param = p;
        }
        if (ok && t < best_t) {
            best_t = t;
            s->param = p;
        }
        /* The edge of the limit lies between a failing parameter and the next that meets it:
         * the fastest loop within the limit is usually just above it. */
        if (ok && !prev_ok && isfinite(prev_p)) {
            lo = prev_p;
            hi = p;
            for (k = 0; k < TP_TUNE_REFINE; k++) {
                double mid = sqrt(lo * hi), tm, om;
                int okm;
                rs = search_try(net, cases, n, &desc->run, m, rule, mid, limit, &tm, &om, &okm,
                                d);
                if (rs != TP_OK)
                    break;
                s->tried++;
                if (okm) {
                    hi = mid;
                    if (tm < best_t) {
                        best_t = tm;
                        s->param = mid;
                    }
                } else {
                    lo = mid;
                }
            }
        }
        prev_p = p;
        prev_ok = ok;
    }
    if (rs == TP_OK && isfinite(s->param)) {
        int ok;
        s->found = 1;
        tp_tune_gains(m, rule, s->param, &s->gains);
        rs = search_try(net, cases, n, &desc->run, m, rule, s->param, limit, &s->t_setpoint,
                        &s->overshoot, &ok, d);
    }
    for (k = 1; k < TP_TUNE_CASES_MAX; k++)
        tp_network_release(&cases[k]);
    return rs;
}
