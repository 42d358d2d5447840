/* A setpoint schedule laid out in time (control.schedule, docs/control.md): each segment of the
 * description with its start and end time and the setpoint it moves between, from a start
 * reading. The integrator samples it at the controller's ticks; studies report per segment. */
#ifndef TP_SCHEDULE_H
#define TP_SCHEDULE_H

#include "description.h"
#include "hardlimits.h"

typedef enum tp_schedule_kind {
    TP_SCHEDULE_RAMP, /* {to, ramp}: the setpoint moves linearly to `to` */
    TP_SCHEDULE_STEP, /* {to}: the setpoint steps to `to` (no duration of its own) */
    TP_SCHEDULE_HOLD, /* {hold}: the setpoint stays */
    TP_SCHEDULE_OFF   /* {off}: the heater is off, no setpoint */
} tp_schedule_kind;

typedef struct tp_schedule_part {
    tp_schedule_kind kind;
    double t0, t1;   /* s, start and end (equal for a step) */
    double from, to; /* K, the setpoint at t0 and at t1 (NaN when off) */
    double rate;     /* K/s requested (signed, ramps only; NaN otherwise) */
} tp_schedule_part;

typedef struct tp_schedule {
    int n;                 /* parts, one per segment in the config's order */
    tp_schedule_part part[TP_SCHEDULE_MAX];
    double t_end;          /* s, where the last part ends */
} tp_schedule;

/* The names of the kinds as reports write them ("ramp", "step", "hold", "off"). */
const char *tp_schedule_kind_name(tp_schedule_kind kind);

/* Lay out the description's schedule `c` from the setpoint `start` (K, the reading at t = 0).
 * Returns 0, or -1 when the control section has no schedule (or more than TP_SCHEDULE_MAX). */
int tp_schedule_plan(const tp_control_spec *c, double start, tp_schedule *out);

/* The setpoint at time t (K), NaN while the heater is off; *part (when not NULL) receives the
 * index of the part that holds t (the last part after the schedule ends: its setpoint stays, or
 * the heater stays off). Zero-length parts (steps) never hold a time. */
double tp_schedule_at(const tp_schedule *s, double t, int *part);

/* The first time after t where an off part begins (the heater is switched off there at once,
 * not at the controller's next tick); HUGE_VAL when none. */
double tp_schedule_next_off(const tp_schedule *s, double t);

#endif
