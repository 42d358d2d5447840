/* Metrics from a run's history: crossing times, readiness of the working surface, overshoot,
 * lag, energy, power and duty statistics. The definitions are in docs/metrics.md. */
#ifndef TP_METRICS_H
#define TP_METRICS_H

#include "history.h"
#include "steady.h"

#define TP_READY_BAND                                                                              \
    1.0 /* K: the surface is ready within this of its holding value (or,                           \
           under on-off control, of its limit cycle's range) */
#define TP_CYCLE_DRIFT                                                                             \
    0.1 /* K: an on-off limit cycle is established when the surface's mean                         \
           over the last cycle is within this of the cycle before */

/* How the surface's readiness was judged (docs/metrics.md). */
typedef enum tp_ready_basis {
    TP_READY_NONE = 0, /* no holding value: not judged */
    TP_READY_HOLD,     /* within TP_READY_BAND of the holding point's surface (PID) */
    TP_READY_CYCLE,    /* within TP_READY_BAND of the range of the on-off limit cycle */
    TP_READY_NO_CYCLE  /* on-off, but no established limit cycle within the run */
} tp_ready_basis;

typedef struct tp_metrics {
    double setpoint;        /* K, NaN without a setpoint */
    double t_setpoint;      /* s: the reading first reaches the setpoint; NaN: never */
    double surface_hold;    /* K: working surface at the holding point */
    double t_surface_ready; /* s: from here on the surface stays within [ready_low,
                               ready_high]; NaN: not in the simulated time */
    tp_ready_basis ready_basis;
    double ready_low, ready_high; /* K: the band the surface must settle in: surface_hold +-
                                 TP_READY_BAND, or the limit cycle's range widened by it */
    double cycle_period;          /* s, the on-off limit cycle's last full period (NaN: none) */
    double cycle_min, cycle_max, cycle_mean; /* K, the surface over that cycle (time mean) */
    double overshoot_reading;                /* K above the setpoint (0 when none) */
    double overshoot_surface;                /* K above surface_hold (0 when none) */
    double steady_offset;                    /* K: reading minus surface at the holding point */
    double lag_k;           /* K: surface_hold minus the surface when the reading first
                               reaches the setpoint; > 0: the surface is behind (short of its
                               holding value) */
    double lag;             /* s: from the reading first reaching the setpoint until the
                               surface first comes within TP_READY_BAND of surface_hold;
                               > 0: the surface is behind, < 0: it got there first */
    double energy_to_ready; /* J drawn (delivered + wiring) until the surface is ready */
    double power_mean;      /* W delivered by all sources over the run */
    double power_peak;      /* W, largest sampled */
    double duty_mean, duty_peak;
    double wire_mean;    /* W lost in wiring over the run */
    double current_peak; /* A, largest on-current while the heater is on (cold start with
                            a positive tempco); 0 when it never switched on; NaN when no
                            source is electrical */
    double hold_power;   /* W at the holding point */
    double hold_duty;
    double margin;            /* -, what the heater could deliver at the holding point over what
                                 holding takes: max_duty / hold_duty (NaN without one) */
    double air_final;         /* K, enclosure air at the end (NaN without an enclosure) */
    double highest_reachable; /* K, the reading at full power in steady state */
    const char *not_reached;  /* why the setpoint was not reached, or NULL */
    double surface_max;       /* K */
    double node_max;          /* K, hottest node with capacity */
    double duration;          /* s simulated */
} tp_metrics;

/* Compute the metrics. `hold` and `full` (the holding point and full-power steady state) may
 * be NULL when unknown. Never fails: unknown values are NaN. */
void tp_metrics_compute(const tp_history *h, const tp_network *net, const tp_steady *hold,
                        const tp_steady *full, tp_metrics *m);

#endif
