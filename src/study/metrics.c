/* Metrics from a run's history (definitions in docs/metrics.md). */
#include "metrics.h"

#include <math.h>
#include <string.h>

#include "description.h"
#include "series.h"

/* Energy drawn from the supply (delivered plus wiring) at time t, interpolated. */
static double energy_at(const tp_history *h, double t)
{
    long i;
    const double *e = h->energy;
    if (!isfinite(t) || h->n == 0)
        return TP_UNSET;
    for (i = 1; i < h->n; i++) {
        if (h->t[i] >= t) {
            double f = (t - h->t[i - 1]) / (h->t[i] - h->t[i - 1]);
            double a = e[(i - 1) * TP_N_QUAD + TP_Q_SOURCE] + e[(i - 1) * TP_N_QUAD + TP_Q_WIRE];
            double b = e[i * TP_N_QUAD + TP_Q_SOURCE] + e[i * TP_N_QUAD + TP_Q_WIRE];
            return a + f * (b - a);
        }
    }
    return e[(h->n - 1) * TP_N_QUAD + TP_Q_SOURCE] + e[(h->n - 1) * TP_N_QUAD + TP_Q_WIRE];
}

/* The on-off limit cycle at the end of the run: the surface over the last full cycle (from one
 * switch-on to the next). Established when the cycle before it exists and its mean differs by
 * no more than TP_CYCLE_DRIFT; returns 0 otherwise. */
static int limit_cycle(const tp_history *h, tp_metrics *m)
{
    long i, on[3] = {-1, -1, -1}, k;
    int found = 0;
    double mean[2];
    for (i = h->n - 1; i > 0 && found < 3; i--)
        if (h->duty[i] > 0.0 && h->duty[i - 1] <= 0.0)
            on[found++] = i;
    if (found < 3)
        return 0;
    /* on[0] the last switch-on, on[1] the one before, on[2] the one before that. */
    for (k = 0; k < 2; k++) {
        long a = on[k + 1], b = on[k];
        double area = 0.0;
        for (i = a; i < b; i++)
            area += 0.5 * (h->surface[i] + h->surface[i + 1]) * (h->t[i + 1] - h->t[i]);
        mean[k] = area / (h->t[b] - h->t[a]);
    }
    if (!(fabs(mean[0] - mean[1]) <= TP_CYCLE_DRIFT))
        return 0;
    m->cycle_period = h->t[on[0]] - h->t[on[1]];
    m->cycle_mean = mean[0];
    m->cycle_min = m->cycle_max = h->surface[on[1]];
    for (i = on[1]; i <= on[0]; i++) {
        m->cycle_min = fmin(m->cycle_min, h->surface[i]);
        m->cycle_max = fmax(m->cycle_max, h->surface[i]);
    }
    return 1;
}

/* Power, duty, wiring loss and current over the run. */
static void power_figures(const tp_history *h, const tp_network *net, tp_metrics *m)
{
    long n = h->n, i;
    int k, ns = net->n_sources;
    double sum = 0.0;
    m->power_mean = (h->energy[(n - 1) * TP_N_QUAD + TP_Q_SOURCE]) / fmax(m->duration, 1e-300);
    m->wire_mean = (h->energy[(n - 1) * TP_N_QUAD + TP_Q_WIRE]) / fmax(m->duration, 1e-300);
    m->power_peak = 0.0;
    for (i = 0; i < n; i++) {
        double p = 0.0;
        for (k = 0; k < ns; k++)
            p += h->power[i * ns + k];
        m->power_peak = fmax(m->power_peak, p);
        sum += h->duty[i];
    }
    m->duty_mean = sum / (double)n;
    m->duty_peak = tp_series_max(h->duty, n, 1);
    /* The on-current counts only while the heater is on: a heater held off draws nothing. When
     * it was on only between samples (a controller faster than the output step), every
     * sample's on-current counts. */
    m->current_peak = 0.0;
    for (i = 0; i < n; i++)
        if (h->duty[i] > 0.0 && !(h->current[i] <= m->current_peak))
            m->current_peak = h->current[i];
    if (m->duty_peak <= 0.0 && h->energy[(n - 1) * TP_N_QUAD + TP_Q_SOURCE] > 0.0)
        m->current_peak = tp_series_max(h->current, n, 1);
}

/* The hottest surface and node, the enclosure air at the end, and the figures of the steady
 * states: the highest reachable reading, the holding power and duty, the surface at holding,
 * the margin. */
static void peak_and_steady_figures(const tp_history *h, const tp_network *net,
                                    const tp_steady *hold, const tp_steady *full, tp_metrics *m)
{
    long n = h->n;
    int k;
    m->surface_max = tp_series_max(h->surface, n, 1);
    for (k = 0; k < h->n_out; k++) {
        double v = tp_series_max(h->temps + k, n, h->n_out);
        if (!isfinite(m->node_max) || v > m->node_max)
            m->node_max = v;
    }
    k = tp_network_find_node(net, "air");
    if (k >= 0 && net->nodes[k].capacity > 0 && tp_history_column(h, k) >= 0)
        m->air_final = tp_history_temp(h, n - 1, tp_history_column(h, k));
    if (full && full->temps)
        m->highest_reachable = full->reading;
    if (hold && hold->temps) {
        m->hold_power = hold->power;
        m->hold_duty = hold->duty;
        m->surface_hold = tp_network_surface(net, hold->temps);
        if (isfinite(m->surface_hold))
            m->steady_offset = hold->reading - m->surface_hold;
    }
    /* What the heater could deliver at the holding temperatures (its power at max_duty there)
     * over what holding takes: the power at duty u is u times the on-power at those
     * temperatures, so the ratio is max_duty / holding duty. */
    if (net->has_control && isfinite(m->hold_duty) && m->hold_duty > 0)
        m->margin = net->sources[net->control.source].max_duty / m->hold_duty;
}

/* The reading against the setpoint, and the working surface against its holding value. */
static void setpoint_figures(const tp_history *h, const tp_network *net, tp_metrics *m)
{
    long n = h->n;
    m->t_setpoint = tp_series_first_rise(h->t, h->reading, n, 1, m->setpoint);
    m->overshoot_reading = fmax(0.0, tp_series_max(h->reading, n, 1) - m->setpoint);
    if (!isfinite(m->t_setpoint)) {
        if (isfinite(m->highest_reachable) && m->highest_reachable < m->setpoint)
            m->not_reached = "not enough power: at full power the reading levels off below the "
                             "setpoint";
        else
            m->not_reached = "the simulated time is too short for this plate (increase "
                             "run.duration)";
    }
    if (!isfinite(m->surface_hold))
        return;
    /* Under on-off control the surface never settles on a value: it rides the limit cycle,
     * whose mean need not be the holding point's; it is ready once it stays within the cycle's
     * range widened by the band. */
    if (net->control.mode != TP_MODE_ONOFF) {
        m->ready_basis = TP_READY_HOLD;
        m->ready_low = m->surface_hold - TP_READY_BAND;
        m->ready_high = m->surface_hold + TP_READY_BAND;
    } else if (limit_cycle(h, m)) {
        m->ready_basis = TP_READY_CYCLE;
        m->ready_low = m->cycle_min - TP_READY_BAND;
        m->ready_high = m->cycle_max + TP_READY_BAND;
    } else {
        m->ready_basis = TP_READY_NO_CYCLE;
    }
    if (isfinite(m->ready_low))
        m->t_surface_ready =
            tp_series_settle_range(h->t, h->surface, n, 1, m->ready_low, m->ready_high);
    m->overshoot_surface = fmax(0.0, m->surface_max - m->surface_hold);
    m->energy_to_ready = energy_at(h, m->t_surface_ready);
    /* The lag as a maker sees it: how far the surface is short of its holding value when the
     * reading first reaches the setpoint, and how long after that it comes within the band of
     * it. */
    m->lag_k = m->surface_hold - tp_series_at(h->t, h->surface, n, 1, m->t_setpoint);
    m->lag = tp_series_first_rise(h->t, h->surface, n, 1, m->surface_hold - TP_READY_BAND) -
             m->t_setpoint;
}

void tp_metrics_compute(const tp_history *h, const tp_network *net, const tp_steady *hold,
                        const tp_steady *full, tp_metrics *m)
{
    const double u = TP_UNSET;
    *m = (tp_metrics){.setpoint = u,
                      .t_setpoint = u,
                      .surface_hold = u,
                      .t_surface_ready = u,
                      .overshoot_reading = u,
                      .overshoot_surface = u,
                      .steady_offset = u,
                      .lag = u,
                      .lag_k = u,
                      .ready_low = u,
                      .ready_high = u,
                      .cycle_period = u,
                      .cycle_min = u,
                      .cycle_max = u,
                      .cycle_mean = u,
                      .ready_basis = TP_READY_NONE,
                      .energy_to_ready = u,
                      .power_mean = u,
                      .power_peak = u,
                      .duty_mean = u,
                      .duty_peak = u,
                      .wire_mean = u,
                      .current_peak = u,
                      .hold_power = u,
                      .hold_duty = u,
                      .margin = u,
                      .air_final = u,
                      .highest_reachable = u,
                      .not_reached = NULL,
                      .surface_max = u,
                      .node_max = u,
                      .duration = u};
    if (h->n == 0)
        return;
    m->duration = h->t[h->n - 1];
    m->setpoint = tp_network_holds(net) ? net->control.setpoint : TP_UNSET;
    power_figures(h, net, m);
    peak_and_steady_figures(h, net, hold, full, m);
    if (tp_network_holds(net))
        setpoint_figures(h, net, m);
}
