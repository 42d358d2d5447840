/* The table of warm-up metrics: for each one its key in files, its label and unit in text, how an
 * SI value is scaled for people, which direction is the worse one, and where it is in a run's
 * tp_metrics. One table, so that every output that reports a metric (the warm-up and tune JSON,
 * the sweep's columns and statistics) names and judges it the same way. Definitions of the
 * metrics themselves: docs/metrics.md. */
#ifndef TP_METRICDEF_H
#define TP_METRICDEF_H

#include <stddef.h>

#include "metrics.h"
#include "program.h"

/* The metrics: first those a sweep studies, in the order of its columns (TP_MET_SWEPT of
 * them), then those only the warm-up reports. */
typedef enum tp_metricdef_id {
    TP_MET_TIME_SETPOINT,           /* s, the reading first reaches the setpoint */
    TP_MET_TIME_READY,              /* s, the working surface is ready (docs/metrics.md) */
    TP_MET_OVERSHOOT_READING,       /* K above the setpoint */
    TP_MET_OVERSHOOT_SURFACE,       /* K above the holding surface temperature */
    TP_MET_STEADY_OFFSET,           /* K, reading minus surface at the holding point */
    TP_MET_LAG,                     /* s */
    TP_MET_ENERGY_READY,            /* J drawn until the surface is ready */
    TP_MET_POWER_MEAN,              /* W over the run */
    TP_MET_POWER_PEAK,              /* W */
    TP_MET_CURRENT_PEAK,            /* A */
    TP_MET_SURFACE_MAX,             /* K, hottest working surface */
    TP_MET_HOLD_POWER,              /* W at the holding point */
    TP_MET_HOLD_DUTY,               /* -, duty at the holding point */
    TP_MET_MARGIN,                  /* -, available / holding power at the holding point */
    TP_MET_HIGHEST,                 /* K, the reading at the full-power equilibrium */
    TP_MET_SWEPT,                   /* the metrics a sweep studies are those before this */
    TP_MET_SETPOINT = TP_MET_SWEPT, /* K, the setpoint held (NaN: none) */
    TP_MET_SURFACE_HOLD,            /* K, the working surface at the holding point */
    TP_MET_LAG_K,                   /* K, the surface short of its holding value at the setpoint */
    TP_MET_DUTY_MEAN,               /* -, over the run */
    TP_MET_DUTY_PEAK,               /* - */
    TP_MET_WIRE_MEAN,               /* W lost in the wiring over the run */
    TP_MET_AIR_FINAL,               /* K, the enclosure air at the end */
    TP_MET_DURATION,                /* s simulated */
    TP_MET_COUNT
} tp_metricdef_id;

/* Which way a metric gets worse: the "worst" of a set of values is its largest, its smallest,
 * or the one farthest from zero. */
typedef enum tp_metricdef_worse {
    TP_WORSE_LOWER = -1,  /* less is worse (a smaller margin) */
    TP_WORSE_FARTHER = 0, /* farther from zero is worse, either sign (an offset) */
    TP_WORSE_HIGHER = 1   /* more is worse (a longer time, a hotter surface) */
} tp_metricdef_worse;

/* How a value is written in text. */
typedef enum tp_metricdef_form {
    TP_FORM_NUMBER,  /* (SI - offset) * scale with `decimals`, in text_unit */
    TP_FORM_DURATION /* seconds as "7 min 20 s" (summary.h), as warmup writes times */
} tp_metricdef_form;

/* One row of the table. */
typedef struct tp_metricdef {
    const char *key;       /* JSON key and CSV column, ending in the file unit: "lag_s" */
    const char *label;     /* short text label: "to setpoint" */
    const char *file_unit; /* unit of the value in files: "s", "K", "J", "W", "A", "degC", "1" */
    double file_offset;    /* file value = SI - file_offset (273.15 for temperatures in degC) */
    tp_metricdef_form form;
    const char *text_unit; /* unit of the text value: tables of numbers and figure axes ("min"
                              for a duration, which tables write as "7 min 20 s" instead) */
    double scale, offset;  /* text value = (SI - offset) * scale */
    int decimals;          /* digits after the point in text tables */
    tp_metricdef_worse worse; /* which way is worse */
    const char *why;       /* why that way is the worse one, for the documentation */
    size_t field;          /* offset of its value (SI, double) in tp_metrics */
} tp_metricdef;

/* ---- per-segment metrics of a scheduled run (control.schedule) ---------------------------- *
 * A sweep studies, besides the metrics above, these figures of each of the schedule's first
 * TP_METRICDEF_SEGMENTS segments (docs/metrics.md, "Programmes"). Their keys are the warm-up
 * JSON's keys of a segment (TP_SEGKEY_*), named in sweeps as "segment<N>.<key>", N from 1. */
#define TP_SEGKEY_RATE_READING "rate_reading_K_per_s"
#define TP_SEGKEY_RATE_SURFACE "rate_surface_K_per_s"
#define TP_SEGKEY_ERR_READING "error_reading_max_K"
#define TP_SEGKEY_AT_LIMIT "at_limit_fraction"
#define TP_SEGKEY_FOLLOW_RATE "followable_rate_K_per_s"
#define TP_SEGKEY_FOLLOW_AT "followable_at_C"
#define TP_SEGKEY_OVERSHOOT_READING "overshoot_reading_K"

enum {
    TP_SEGMET_RATE_READING,      /* K/s, least-squares slope of the reading over the segment */
    TP_SEGMET_RATE_SURFACE,      /* K/s, the same for the working surface */
    TP_SEGMET_ERR_READING,       /* K, largest |reading - setpoint| */
    TP_SEGMET_AT_LIMIT,          /* -, share of the segment's time at the duty limit */
    TP_SEGMET_FOLLOW_RATE,       /* K/s the plate follows at the limit */
    TP_SEGMET_FOLLOW_AT,         /* K, the reading where that rate was taken */
    TP_SEGMET_OVERSHOOT_READING, /* K above the segment's target */
    TP_SEGMET_COUNT
};

#define TP_METRICDEF_SEGMENTS 8 /* segments whose metrics a sweep keeps (the first ones) */
#define TP_MET_SWEPT_MAX (TP_MET_SWEPT + TP_METRICDEF_SEGMENTS * TP_SEGMET_COUNT)

/* A metric a sweep studies, 0 <= metric < TP_MET_SWEPT_MAX: the rows of the table above below
 * TP_MET_SWEPT, then segment 1's TP_SEGMET_COUNT figures, segment 2's ...; NULL when out of
 * range. A segment row's `field` is the offset of its value in tp_program. */
const tp_metricdef *tp_metricdef_swept(int metric);

/* How many metrics a sweep studies for a run with `n_segments` schedule segments (0: none). */
int tp_metricdef_swept_count(int n_segments);

/* A segment row's value (SI) in a run's programme report; NaN past its last segment. */
double tp_metricdef_segment_value(int metric, const tp_program *p);

/* The row of `metric`; NULL when out of range. */
const tp_metricdef *tp_metricdef_get(int metric);

/* A metric a sweep studies by its key ("time_surface_ready_s", "segment2.rate_reading_K_per_s"),
 * as an index for tp_metricdef_swept, or -1. */
int tp_metricdef_find(const char *key);

/* The keys of every metric a sweep studies, ", "-separated, into buf (for messages). */
void tp_metricdef_keys(char *buf, size_t size);

/* A word for a direction: "highest", "lowest" or "farthest from 0". */
const char *tp_metricdef_worse_name(tp_metricdef_worse worse);

/* Nonzero when value a is worse than value b under `worse` (ties are not worse). */
int tp_metricdef_worse_than(double a, double b, tp_metricdef_worse worse);

/* The metric's value (SI) in a run's metrics. */
double tp_metricdef_value(const tp_metricdef *md, const tp_metrics *m);

/* The value in files (JSON, CSV): SI, absolute temperatures in degC; NaN stays NaN. */
double tp_metricdef_file_value(const tp_metricdef *m, double si);

/* The value as text and figures show it ((SI - offset) * scale); NaN stays NaN. */
double tp_metricdef_text_value(const tp_metricdef *m, double si);

#endif
