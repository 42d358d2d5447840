/* Setpoint programmes: the report of a scheduled run per segment (docs/metrics.md,
 * "Programmes"). */
#include "program.h"

#include <math.h>
#include <string.h>

#include "metrics.h"

int tp_program_plan(const tp_description *desc, const tp_network *net, tp_schedule *out)
{
    double start;
    if (!net->has_control || desc->control.n_schedule == 0)
        return -1;
    start = tp_control_reading(&net->control.reading, net->nodes[net->control.sensor].t0);
    return tp_schedule_plan(&desc->control, start, out);
}

double tp_program_time_above(const double *t, const double *v, long n, double level)
{
    double total = 0.0;
    long i;
    for (i = 0; i + 1 < n; i++) {
        double a = v[i] - level, b = v[i + 1] - level, dt = t[i + 1] - t[i];
        if (!isfinite(a) || !isfinite(b))
            continue;
        if (a > 0 && b > 0)
            total += dt;
        else if (a > 0 || b > 0)
            total += dt * (a > 0 ? a : b) / fabs(a - b); /* the share above, linear in between */
    }
    return total;
}

/* Least-squares slope of v over rows [i0, i1]; NaN with fewer than two finite rows. */
static double slope(const double *t, const double *v, long i0, long i1)
{
    double st = 0, sv = 0, stt = 0, stv = 0, m = 0;
    long i;
    for (i = i0; i <= i1; i++) {
        if (!isfinite(v[i]))
            continue;
        st += t[i];
        sv += v[i];
        stt += t[i] * t[i];
        stv += t[i] * v[i];
        m += 1;
    }
    if (m < 2 || !(m * stt - st * st > 0))
        return TP_UNSET;
    return (m * stv - st * sv) / (m * stt - st * st);
}

/* Largest |v - sp| and its RMS over rows [i0, i1] where the setpoint is defined. */
static void track(const double *v, const double *sp, long i0, long i1, double *emax, double *erms)
{
    double mx = 0.0, ss = 0.0;
    long i, m = 0;
    for (i = i0; i <= i1; i++) {
        double e = v[i] - sp[i];
        if (!isfinite(e))
            continue;
        mx = fmax(mx, fabs(e));
        ss += e * e;
        m++;
    }
    *emax = m ? mx : TP_UNSET;
    *erms = m ? sqrt(ss / (double)m) : TP_UNSET;
}

/* The rows [*i0, *i1] inside [t0, t1]; returns nonzero when there is at least one. */
static int rows_in(const tp_history *h, double t0, double t1, long *i0, long *i1)
{
    long i;
    *i0 = -1;
    *i1 = -2;
    for (i = 0; i < h->n; i++) {
        if (h->t[i] < t0 - 1e-9 || h->t[i] > t1 + 1e-9)
            continue;
        if (*i0 < 0)
            *i0 = i;
        *i1 = i;
    }
    return *i0 >= 0;
}

static int at_limit_row(const tp_history *h, long i, int down, double max_duty)
{
    return down ? h->duty[i] <= 0.0 : h->duty[i] >= max_duty * (1.0 - 1e-9);
}

/* The share of time at the duty limit, and the reading's rate there (central difference over
 * three rows at the limit, the last such in the segment). */
static void limit_share(const tp_history *h, long i0, long i1, int down, double max_duty,
                        tp_program_segment *g)
{
    double on = 0.0, span = 0.0;
    long i;
    g->follow_rate = g->follow_at = TP_UNSET;
    for (i = i0; i < i1; i++) {
        double dt = h->t[i + 1] - h->t[i];
        span += dt;
        if (at_limit_row(h, i, down, max_duty))
            on += dt;
    }
    g->at_limit = span > 0 ? on / span : TP_UNSET;
    for (i = i1 - 1; i > i0; i--)
        if (at_limit_row(h, i - 1, down, max_duty) && at_limit_row(h, i, down, max_duty) &&
            at_limit_row(h, i + 1, down, max_duty)) {
            g->follow_rate = (h->reading[i + 1] - h->reading[i - 1]) / (h->t[i + 1] - h->t[i - 1]);
            g->follow_at = h->reading[i];
            break;
        }
}

/* Overshoot at the end of a ramp or step going up: over the segment and a hold after it. */
static void overshoot(const tp_history *h, const tp_schedule *plan, int k, tp_program_segment *g)
{
    const tp_schedule_part *p = &plan->part[k];
    double t1 = p->t1, mr = -HUGE_VAL, ms = -HUGE_VAL;
    long i0, i1, i;
    g->overshoot_reading = g->overshoot_surface = TP_UNSET;
    if ((p->kind != TP_SCHEDULE_RAMP && p->kind != TP_SCHEDULE_STEP) || p->to < p->from)
        return;
    if (p->kind == TP_SCHEDULE_STEP && k > 0)
        g->part.from = plan->part[k - 1].to;
    if (k + 1 < plan->n && plan->part[k + 1].kind == TP_SCHEDULE_HOLD)
        t1 = plan->part[k + 1].t1;
    if (!rows_in(h, p->t0, t1, &i0, &i1))
        return;
    for (i = i0; i <= i1; i++) {
        mr = fmax(mr, h->reading[i]);
        if (isfinite(h->surface[i]))
            ms = fmax(ms, h->surface[i]);
    }
    g->overshoot_reading = fmax(0.0, mr - p->to);
    if (isfinite(ms) && isfinite(h->surface[i1]))
        g->overshoot_surface = fmax(0.0, ms - h->surface[i1]);
}

static void segment(const tp_history *h, const tp_schedule *plan, int k, tp_program_segment *g)
{
    const tp_schedule_part *p = &plan->part[k];
    double max_duty = h->net->has_control ? h->net->control.max_duty : 1.0;
    int down = p->kind == TP_SCHEDULE_RAMP && p->rate < 0;
    long i0, i1;
    memset(g, 0, sizeof *g);
    g->part = *p;
    g->t_end = h->n ? fmin(p->t1, h->t[h->n - 1]) : p->t0;
    g->rate_reading = g->rate_surface = g->at_limit = TP_UNSET;
    g->err_max_reading = g->err_rms_reading = g->err_max_surface = g->err_rms_surface = TP_UNSET;
    g->follow_rate = g->follow_at = TP_UNSET;
    overshoot(h, plan, k, g);
    if (p->t1 <= p->t0 || !rows_in(h, p->t0, p->t1, &i0, &i1) || i1 <= i0)
        return;
    g->rate_reading = slope(h->t, h->reading, i0, i1);
    g->rate_surface = slope(h->t, h->surface, i0, i1);
    if (p->kind == TP_SCHEDULE_OFF)
        return;
    track(h->reading, h->setpoint, i0, i1, &g->err_max_reading, &g->err_rms_reading);
    track(h->surface, h->setpoint, i0, i1, &g->err_max_surface, &g->err_rms_surface);
    limit_share(h, i0, i1, down, max_duty, g);
    {
        double behind = down ? h->reading[i1] - h->setpoint[i1] : h->setpoint[i1] - h->reading[i1];
        int short_rate = p->kind == TP_SCHEDULE_RAMP &&
                         fabs(g->rate_reading) < TP_PROGRAM_RATE_SHORT * fabs(p->rate);
        g->limited = g->at_limit >= TP_PROGRAM_LIMIT_SHARE && (short_rate || behind > TP_READY_BAND);
    }
}

void tp_program_compute(const tp_history *h, const tp_schedule *plan, const double *above,
                        int n_above, tp_program *out)
{
    int k;
    memset(out, 0, sizeof *out);
    out->n = plan->n;
    for (k = 0; k < plan->n; k++)
        segment(h, plan, k, &out->seg[k]);
    out->n_above = n_above < TP_PROGRAM_MAX_ABOVE ? n_above : TP_PROGRAM_MAX_ABOVE;
    for (k = 0; k < out->n_above; k++) {
        int surface = h->n > 0 && isfinite(h->surface[0]);
        out->above[k].level = above[k];
        out->above[k].t_reading = tp_program_time_above(h->t, h->reading, h->n, above[k]);
        out->above[k].t_surface =
            surface ? tp_program_time_above(h->t, h->surface, h->n, above[k]) : TP_UNSET;
    }
}
