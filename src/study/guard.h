/* Protection design: the rise, hold and ceiling checks as pure functions of a reading series,
 * worst-case healthy runs over the corners of `guard:`, injected faults, the recommended
 * thresholds and the evaluation of given ones. Method and definitions: docs/guard.md. */
#ifndef TP_GUARD_H
#define TP_GUARD_H

#include "caution.h"
#include "description.h"
#include "diag.h"
#include "network.h"
#include "schedule.h"
#include "status.h"
#include "steady.h"
#include "yamltree.h"

#define TP_GUARD_RISE_FLOOR 1.0    /* K: smallest rise_min recommended (common practice, no
                                      source: a rise well clear of reading noise) */
#define TP_GUARD_BAND_FLOOR 2.0    /* K: smallest hold_band recommended (common practice, no
                                      source) */
#define TP_GUARD_GRACE_FLOOR 10.0  /* s: smallest hold_grace recommended (common practice, no
                                      source: a few readings, never one) */
#define TP_GUARD_CEILING_GAP 3.0   /* K: least gap between the hottest healthy reading and the
                                      ceiling (common practice, no source) */
#define TP_GUARD_QUANTA 3.0        /* -, thresholds stay at least this many reading steps */
#define TP_GUARD_WINDOW_MAX 600.0  /* s: longest rise_window considered */
#define TP_GUARD_DETACH_FRACTION 0.1 /* -, default loss of a detached sensor to the air, as a
                                        fraction of its coupling (assumption, docs/guard.md) */
#define TP_GUARD_PIN_HIGH 773.15   /* K (500 degC): a shorted sensor without a thermistor
                                      model reads this (assumption, docs/guard.md) */
#define TP_GUARD_PIN_LOW 233.15    /* K (-40 degC): an open sensor without a thermistor model
                                      reads this (assumption, docs/guard.md) */
#define TP_GUARD_CORNERS_MAX 17    /* 2^4 corners plus nominal */
#define TP_GUARD_LAYERS_MAX 16     /* layers followed for service limits */
#define TP_GUARD_STEP_K 5.0        /* K: a setpoint rising by more than this between two samples
                                      is a step, after which the checks judge a heat-up afresh
                                      (schedules only; common practice, no source) */

/* The tolerances of a healthy machine where `guard:` declares none (each range on its own):
 * common practice, no source (docs/guard.md, "Healthy corners"). */
#define TP_GUARD_DEFAULT_SUPPLY 0.05      /* -, supply voltage: nominal times 1 -/+ this */
#define TP_GUARD_DEFAULT_RESISTANCE 0.05  /* -, heater resistance: R0 times 1 -/+ this */
#define TP_GUARD_DEFAULT_ROOM_LOW 288.15  /* K (15 degC), coolest room */
#define TP_GUARD_DEFAULT_ROOM_HIGH 303.15 /* K (30 degC), warmest room */

/* Where a healthy range came from. */
typedef enum tp_guard_origin {
    TP_RANGE_NONE = 0, /* not varied: nothing declared and no default applies */
    TP_RANGE_DECLARED, /* from guard: */
    TP_RANGE_DEFAULT   /* the default above */
} tp_guard_origin;

/* One healthy range: its ends (equal when it is not varied) and the nominal value, in V, ohm,
 * K or m/s; NaN where the quantity does not exist (the supply of a fixed-power heater). */
typedef struct tp_guard_range {
    double lo, hi, nominal;
    double tolerance; /* -, the resistance's relative tolerance (NaN for the others) */
    tp_guard_origin origin;
} tp_guard_range;

enum { TP_RANGE_SUPPLY, TP_RANGE_RESISTANCE, TP_RANGE_ROOM, TP_RANGE_AIRFLOW, TP_RANGE_COUNT };

typedef struct tp_guard_ranges {
    tp_guard_range r[TP_RANGE_COUNT]; /* by TP_RANGE_* */
    int n_default;                    /* how many took their default */
} tp_guard_ranges;

/* The healthy ranges of `desc` on its assembled network `net` (with a controller): each range
 * `guard:` declares, else its default: supply and resistance of an electric controlled heater
 * +-TP_GUARD_DEFAULT_SUPPLY and +-TP_GUARD_DEFAULT_RESISTANCE; the room from
 * TP_GUARD_DEFAULT_ROOM_LOW to TP_GUARD_DEFAULT_ROOM_HIGH, widened to take in the nominal room
 * (the raw form's room is its first fixed node); airflow only when declared. The one place
 * that decides guard's ranges and their defaults. A declared range that cannot apply (reversed,
 * a supply for a fixed-power heater, airflow in the raw form, a room without a fixed node) is
 * an error reported to `d` (TP_ERR_CONFIG), at its position in `doc` (may be NULL). */
tp_status tp_guard_ranges_resolve(const tp_description *desc, const tp_yamltree *doc,
                                  const tp_network *net, tp_guard_ranges *r, tp_diag *d);

/* The range's name as in `guard:` ("supply", "resistance", "room", "airflow"). */
const char *tp_guard_range_name(int which);

/* The checks, each by its first firing time (s; NaN: never). */
typedef struct tp_guard_detect {
    double rise, hold, ceiling;
} tp_guard_detect;

/* The earliest of the three (NaN when none fired). */
double tp_guard_first(const tp_guard_detect *det);

/* ---- the checks as pure functions ------------------------------------------------------- *
 * A series is n samples (t ascending, s; r the reading, K) taken at the controller's ticks.
 * `reached` nonzero: the series starts with the setpoint already reached (the holding state).
 * Rise check: armed while the setpoint has not yet been reached and r < setpoint - approach;
 *   at a sample i whose window start t_i - rise_window lies in the same armed stretch, it
 *   fires when r_i - r_j < rise_min, with j the last sample at or before t_i - rise_window.
 * Hold check: armed from the first sample with r >= setpoint (or from the start); it fires at
 *   the first sample at which the reading has been below setpoint - hold_band at every sample
 *   for more than hold_grace (t_i - t_first_below > hold_grace).
 * Ceiling: fires at the first sample with r > ceiling. */
tp_guard_detect tp_guard_check(const double *t, const double *r, long n, double setpoint,
                               int reached, const tp_guard_settings *s);

/* The same checks against a setpoint that moves (a schedule): sp[i] is the setpoint at sample i
 * (K), NaN where the schedule has the heater off; sp NULL: `setpoint` throughout, exactly as
 * tp_guard_check. "Reached" is a latch: set at a sample with r >= sp, cleared where the heater is
 * off and where the setpoint rises by more than TP_GUARD_STEP_K from one sample to the next (a
 * step). The rise check is also armed wherever the setpoint rises (sp[i] > sp[i - 1]: an upward
 * ramp), whatever the latch and the approach. While off, the rise and hold checks are disarmed;
 * the ceiling never is. */
tp_guard_detect tp_guard_check_series(const double *t, const double *r, const double *sp, long n,
                                      double setpoint, int reached, const tp_guard_settings *s);

/* The smallest rise r_i - r_j over every window the rise check would judge (same arming,
 * window `window`, approach `approach`); +inf when no full window lies in an armed stretch.
 * *at (may be NULL) gets the time t_i where it occurs. */
double tp_guard_min_rise(const double *t, const double *r, long n, double setpoint,
                         int reached, double approach, double window, double *at);

/* The longest time the hold check would count (t_last - t_first of a run of samples below
 * setpoint - band after the setpoint is reached); 0 when never below. *at gets its start. */
double tp_guard_longest_below(const double *t, const double *r, long n, double setpoint,
                              int reached, double band, double *at);

/* ---- faults ----------------------------------------------------------------------------- */
typedef enum tp_guard_fault {
    TP_FAULT_DETACHED = 0, /* sensor off its pocket: no coupling, a small loss to the air */
    TP_FAULT_HEATER_OPEN,  /* no power whatever the controller asks */
    TP_FAULT_STUCK_ON,     /* full power whatever the controller asks */
    TP_FAULT_HALF_POWER,   /* half the power the controller asks */
    TP_FAULT_SENSOR_SHORT, /* the reading pinned high (an NTC shorted) */
    TP_FAULT_SENSOR_OPEN,  /* the reading pinned low (an NTC open) */
    TP_FAULT_COUNT
} tp_guard_fault;

/* Short name of a fault ("sensor-detached") and a phrase for tables. */
const char *tp_guard_fault_name(tp_guard_fault f);
const char *tp_guard_fault_phrase(tp_guard_fault f);

/* One simulated run sampled at every controller tick. */
typedef struct tp_guard_trace {
    long n, cap;
    int n_layers;
    double *t;       /* s */
    double *reading; /* K, what the controller saw */
    double *surface; /* K, working surface (NaN in the raw form) */
    double *heater;  /* K, the hottest node the controlled source heats */
    double *duty;    /* the duty applied */
    double *sp;      /* K, the setpoint the controller followed (NaN while a schedule has the
                        heater off) */
    double *layers;  /* n x n_layers, K */
} tp_guard_trace;

/* A healthy corner: one combination of the ranges' ends, or the nominal case. */
typedef struct tp_guard_corner {
    char name[160];
    int nominal;
    double supply;     /* V (NaN: not varied) */
    double resistance; /* ohm (NaN: not varied) */
    double room;       /* K */
    double airflow;    /* m/s (NaN: not varied) */
    tp_guard_trace trace;
    double t_setpoint;  /* s the reading first reached the setpoint; NaN: never */
    double backoff_gap; /* K below the setpoint where the controller first left full power */
    double peak;        /* K, highest reading */
    double dip;         /* K, deepest reading below the setpoint after reaching it (>= 0) */
    double stuck_reading, stuck_heater; /* K, full-power equilibrium at this corner */
    tp_guard_detect det;  /* the evaluated settings on this corner */
    double rise_margin;   /* K: smallest rise minus rise_min (+inf: no window judged) */
    double hold_margin;   /* s: hold_grace minus the longest stay below the band */
    double ceiling_margin;/* K: ceiling minus the highest reading */
} tp_guard_corner;

/* A fault run and what the evaluated settings make of it. */
typedef struct tp_guard_fault_run {
    tp_guard_fault fault;
    int from_hold;        /* 0: from the cold start, 1: from the holding state */
    tp_guard_trace trace;
    tp_guard_detect det;
    double first;         /* s, earliest detection (NaN: none within the horizon) */
    double surface_peak;  /* K, hottest surface up to the first detection (or the horizon) */
    double heater_peak;   /* K, hottest heater layer up to the same time */
    double t_limit;       /* s a protected layer first exceeded its service limit; NaN: never */
    int limit_layer;      /* its index in the study's layers, -1 */
    int limit_before;     /* a protected limit was crossed before the first detection */
} tp_guard_fault_run;

/* Where a fault is injected during a schedule: the middle of its first ramp and of its first
 * hold (moved to the first controller tick at or after it). */
enum { TP_GUARD_MID_RAMP, TP_GUARD_MID_HOLD, TP_GUARD_MID_COUNT };

typedef struct tp_guard_injection {
    int segment;     /* index of the segment (from 0), -1: the schedule has no such segment */
    double t;        /* s from the start of the schedule */
    double setpoint; /* K, the schedule's setpoint there */
} tp_guard_injection;

/* A healthy corner's first false trip on a schedule: which check, when, in which segment. */
typedef struct tp_guard_trip {
    int check;       /* 0 rise, 1 hold, 2 ceiling; -1 none */
    double t;        /* s */
    int segment;     /* the schedule's segment at t (from 0) */
} tp_guard_trip;

/* One threshold with where it came from. */
enum { TP_G_RISE_WINDOW, TP_G_RISE_MIN, TP_G_APPROACH, TP_G_HOLD_BAND, TP_G_HOLD_GRACE,
       TP_G_CEILING, TP_G_COUNT };

typedef struct tp_guard_study {
    const tp_description *desc; /* borrowed */
    double setpoint;        /* K */
    double period;          /* s, controller period */
    double max_duty;
    double resolution;      /* K, the reading's step near the setpoint (0: continuous) */
    double pin_high, pin_low; /* K, pinned readings of the sensor faults */
    double detached_loss;   /* W/K */
    double horizon;         /* s each fault is followed */
    tp_guard_ranges ranges; /* the healthy ranges, declared or default */
    int n_corners;
    tp_guard_corner corners[TP_GUARD_CORNERS_MAX];
    tp_guard_fault_run faults[TP_FAULT_COUNT][2];
    int n_layers;
    char layer_id[TP_GUARD_LAYERS_MAX][TP_ID_MAX];
    double layer_limit[TP_GUARD_LAYERS_MAX];   /* K service limit; NaN unknown */
    double layer_healthy[TP_GUARD_LAYERS_MAX]; /* K hottest in any healthy corner */
    int layer_protected[TP_GUARD_LAYERS_MAX];  /* within its limit in every healthy corner */
    tp_steady stuck;        /* nominal full-power equilibrium (has_stuck) */
    int has_stuck;
    int stuck_worst;        /* corner with the hottest full-power heater layer, -1 */
    int stuck_over_layer;   /* layer above its limit at the nominal equilibrium, -1 */
    int cutout_required;    /* some corner's equilibrium exceeds a service limit */
    tp_guard_settings rec;  /* recommended */
    double rise_min_raw;    /* K, rise_factor times the smallest healthy rise, unrounded */
    int rec_ok[TP_G_COUNT]; /* a recommendation exists */
    char why[TP_G_COUNT][240];
    tp_guard_settings used; /* evaluated: given values, else recommended */
    int given[TP_G_COUNT];
    int healthy_trips;      /* corners on which a check fired */
    int unsafe_faults;      /* fault runs with a protected limit crossed before detection */
    int undetected;         /* fault runs no check detected */
    /* With control.schedule: the corners follow it, and every fault is also injected during it
     * (mid[f][TP_GUARD_MID_*], on the nominal case; fault_run.first and det are times from the
     * start of the schedule). */
    int scheduled;
    tp_schedule plan;       /* the nominal case's schedule, laid out from its start */
    tp_guard_injection inject[TP_GUARD_MID_COUNT];
    tp_guard_fault_run mid[TP_FAULT_COUNT][TP_GUARD_MID_COUNT];
    tp_guard_trip trips[TP_GUARD_CORNERS_MAX];
} tp_guard_study;

/* Run the study for `desc` (physical or raw form with a controller holding a setpoint, or
 * following control.schedule): every corner, every fault from both starts (and, with a schedule,
 * injected mid-ramp and mid-hold), the recommendation, then the evaluation of
 * `given` (members set override the recommendation; NULL or none set: recommend only).
 * `doc` (may be NULL) gives positions for messages. On failure the diagnostics say why;
 * call tp_guard_study_clear in every case. */
tp_status tp_guard_study_run(const tp_description *desc, const tp_yamltree *doc,
                             const tp_guard_settings *given, tp_guard_study *st, tp_diag *d);

/* Free what a study holds. */
void tp_guard_study_clear(tp_guard_study *st);

/* The corners of the ranges `rr` into out[0 ..): the nominal case first ("nominal"), then
 * every combination of the ends of the ranges that vary (lo < hi), named as guard's tables
 * name them ("22.8 V, R high, room 15 degC, air 1.0 m/s"). The supply and the resistance are
 * multiplied by `supply_scale` and `resistance_scale` (1 for the ranges themselves; size moves
 * them onto another supply and heater). Only the corners' values and names are set. Returns
 * the count, at most TP_GUARD_CORNERS_MAX. */
int tp_guard_corners_plan(const tp_guard_ranges *rr, double supply_scale, double resistance_scale,
                          tp_guard_corner *out);

/* A copy of the description `base` (its network `net`, with a controller) into *cd, set to the
 * corner `c`: its supply, resistance and airflow where finite (the resistance replaces a
 * rating as sold) and its room; in the raw form the controlled source's supply and resistance,
 * and every fixed node and initial temperature moved with the room. The caller clears *cd
 * (tp_config_clear) in every case. Used by guard and size. */
tp_status tp_guard_corner_apply(const tp_description *base, const tp_network *net,
                                tp_description *cd, const tp_guard_corner *c);

/* Evaluate settings `s` on the study's runs (fills det, margins, fault figures and counts).
 * Used by tp_guard_study_run; exposed for tests. */
void tp_guard_evaluate(tp_guard_study *st, const tp_guard_settings *s);

/* Name of a threshold as in configs ("rise_window"). */
const char *tp_guard_setting_name(int which);

/* The safety cautions of a study (caution.h), from the healthy corners' hottest surface and
 * heater and each layer's healthy peak, with guard's own last: its thresholds supplement a
 * hardware cut-out and never replace it. Returns how many were written to out. */
int tp_guard_cautions(const tp_description *desc, const tp_network *net, const tp_guard_study *st,
                      tp_caution out[TP_CAUTIONS_MAX]);

#endif
