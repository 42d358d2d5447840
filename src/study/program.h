/* Setpoint programmes (control.schedule): the report of a scheduled run per segment, and the
 * time spent above given levels. Records only; the words and figures are in output and cli.
 * Definitions: docs/metrics.md, "Programmes". */
#ifndef TP_PROGRAM_H
#define TP_PROGRAM_H

#include "description.h"
#include "hardlimits.h"
#include "history.h"
#include "network.h"
#include "schedule.h"

#define TP_PROGRAM_LIMIT_SHARE 0.5 /* -, a segment spending at least this share of its time at the
                                     duty limit while the reading falls behind is limited */
#define TP_PROGRAM_RATE_SHORT 0.9  /* -, a ramp whose reading achieves less than this share of
                                     the requested rate falls behind */

typedef struct tp_program_segment {
    tp_schedule_part part;   /* the segment as laid out (kind, times, setpoints, rate) */
    double t_end;            /* s, where the run's report of it ends (the run may be shorter) */
    double rate_reading;     /* K/s, least-squares slope of the reading over the segment */
    double rate_surface;     /* K/s, the same for the working surface (NaN: no surface) */
    double err_max_reading;  /* K, largest |reading - setpoint| (NaN for off segments) */
    double err_rms_reading;  /* K, root mean square of reading - setpoint */
    double err_max_surface;  /* K, the same for the working surface */
    double err_rms_surface;
    double at_limit;         /* -, share of the segment's time with the duty at its limit (the
                                heater's max_duty; for a downward ramp, off) */
    int limited;             /* the heater cannot keep up (docs/metrics.md) */
    double follow_rate;      /* K/s the reading rises (falls, downward) at the limit, at the last
                                time in the segment the duty was there; NaN: never there */
    double follow_at;        /* K, the reading at that time */
    double overshoot_reading; /* K, ramps and steps: largest reading above the target, over the
                                segment and a hold that follows it (0 when none) */
    double overshoot_surface; /* K, the surface above the value it settles to at the end of that
                                window (NaN: no surface) */
} tp_program_segment;

typedef struct tp_program_above {
    double level;     /* K */
    double t_reading; /* s the reading spends above it */
    double t_surface; /* s the working surface spends above it (NaN: no surface) */
} tp_program_above;

typedef struct tp_program {
    int n;
    tp_program_segment seg[TP_SCHEDULE_MAX];
    int n_above;
    tp_program_above above[TP_PROGRAM_MAX_ABOVE];
} tp_program;

/* Lay out the description's schedule for `net` from its reading at t = 0 (the sensor node's
 * initial temperature through the reading model). Returns 0, or -1 without a schedule. */
int tp_program_plan(const tp_description *desc, const tp_network *net, tp_schedule *out);

/* The report of a run `h` that followed `plan`, with the levels of `above` (K, n_above of
 * them, at most TP_PROGRAM_MAX_ABOVE). */
void tp_program_compute(const tp_history *h, const tp_schedule *plan, const double *above,
                        int n_above, tp_program *out);

/* Time (s) the series v (n samples at times t, linear between them) spends above `level`. */
double tp_program_time_above(const double *t, const double *v, long n, double level);

#endif
