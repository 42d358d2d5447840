/* A setpoint schedule laid out in time. */
#include "schedule.h"

#include <math.h>
#include <string.h>

const char *tp_schedule_kind_name(tp_schedule_kind kind)
{
    static const char *const names[] = {"ramp", "step", "hold", "off"};
    return (unsigned)kind < sizeof names / sizeof names[0] ? names[kind] : "?";
}

int tp_schedule_plan(const tp_control_spec *c, double start, tp_schedule *out)
{
    double t = 0.0, sp = start;
    size_t i;
    memset(out, 0, sizeof *out);
    if (c->n_schedule == 0 || c->n_schedule > TP_SCHEDULE_MAX)
        return -1;
    for (i = 0; i < c->n_schedule; i++) {
        const tp_schedule_seg *g = &c->schedule[i];
        tp_schedule_part *p = &out->part[i];
        p->t0 = t;
        p->rate = TP_UNSET;
        if (tp_isset(g->off)) {
            p->kind = TP_SCHEDULE_OFF;
            p->from = p->to = TP_UNSET;
            t += g->off;
        } else if (tp_isset(g->hold)) {
            p->kind = TP_SCHEDULE_HOLD;
            p->from = p->to = sp; /* after an off segment: the setpoint before it */
            t += g->hold;
        } else if (tp_isset(g->ramp)) {
            p->kind = TP_SCHEDULE_RAMP;
            p->from = sp;
            p->to = g->to;
            p->rate = g->to >= sp ? g->ramp : -g->ramp;
            t += fabs(g->to - sp) / g->ramp;
            sp = g->to;
        } else {
            p->kind = TP_SCHEDULE_STEP;
            p->from = p->to = sp = g->to;
        }
        p->t1 = t;
    }
    out->n = (int)c->n_schedule;
    out->t_end = t;
    return 0;
}

double tp_schedule_at(const tp_schedule *s, double t, int *part)
{
    int i, last = s->n - 1;
    const tp_schedule_part *p;
    for (i = 0; i < s->n; i++)
        if (t >= s->part[i].t0 && t < s->part[i].t1)
            break;
    if (i == s->n)
        i = t < 0 ? 0 : last;
    if (part)
        *part = i;
    p = &s->part[i];
    if (p->kind == TP_SCHEDULE_OFF)
        return TP_UNSET;
    if (p->kind != TP_SCHEDULE_RAMP || !(t < p->t1))
        return p->to;
    return t <= p->t0 ? p->from : p->from + p->rate * (t - p->t0);
}

double tp_schedule_next_off(const tp_schedule *s, double t)
{
    int i;
    for (i = 0; i < s->n; i++)
        if (s->part[i].kind == TP_SCHEDULE_OFF && s->part[i].t0 > t)
            return s->part[i].t0;
    return HUGE_VAL;
}
