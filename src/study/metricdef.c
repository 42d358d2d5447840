/* The table of warm-up metrics: names, units, scaling, the direction that is worse, and where
 * each is in tp_metrics. */
#include "metricdef.h"

#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <string.h>

#include "units.h"


/* Directions: a time, an overshoot, an energy, a power, a current, a duty or a temperature is
 * worse when higher; a margin is worse when lower; an offset or a lag either way from zero. The
 * highest reachable temperature is judged as a hazard (what a heater stuck on reaches), not as
 * headroom: its worst case is the hottest. Headroom is the margin's job. */
#define AT(f) offsetof(tp_metrics, f)
#define NOT_JUDGED "not judged: the warm-up reports it, a sweep does not study it"

static const tp_metricdef table[TP_MET_COUNT] = {
    [TP_MET_TIME_SETPOINT] = {"time_to_setpoint_s", "to setpoint", "s", 0.0, TP_FORM_DURATION,
                              "min", 1.0 / 60.0, 0.0, 0, TP_WORSE_HIGHER,
                              "a longer wait before the reading reaches the setpoint",
                              AT(t_setpoint)},
    [TP_MET_TIME_READY] = {"time_surface_ready_s", "surface ready", "s", 0.0, TP_FORM_DURATION,
                           "min", 1.0 / 60.0, 0.0, 0, TP_WORSE_HIGHER,
                           "a longer wait before the working surface can be used",
                           AT(t_surface_ready)},
    [TP_MET_OVERSHOOT_READING] = {"overshoot_reading_K", "overshoot", "K", 0.0, TP_FORM_NUMBER, "K",
                                  1.0, 0.0, 2, TP_WORSE_HIGHER,
                                  "further above the setpoint: stress on the layers and the part",
                                  AT(overshoot_reading)},
    [TP_MET_OVERSHOOT_SURFACE] = {"overshoot_surface_K", "surface overshoot", "K", 0.0,
                                  TP_FORM_NUMBER, "K", 1.0, 0.0, 2, TP_WORSE_HIGHER,
                                  "the working surface further above its holding temperature",
                                  AT(overshoot_surface)},
    [TP_MET_STEADY_OFFSET] = {"steady_offset_K", "steady offset", "K", 0.0, TP_FORM_NUMBER, "K",
                              1.0, 0.0, 2, TP_WORSE_FARTHER,
                              "the reading further from the surface, either way",
                              AT(steady_offset)},
    [TP_MET_LAG] = {"lag_s", "lag", "s", 0.0, TP_FORM_NUMBER, "s", 1.0, 0.0, 1, TP_WORSE_FARTHER,
                    "the surface and the reading further apart in time, either way", AT(lag)},
    [TP_MET_ENERGY_READY] = {"energy_to_ready_J", "energy to ready", "J", 0.0, TP_FORM_NUMBER, "kJ",
                             1e-3, 0.0, 1, TP_WORSE_HIGHER,
                             "more energy drawn before the surface is ready", AT(energy_to_ready)},
    [TP_MET_POWER_MEAN] = {"power_mean_W", "mean power", "W", 0.0, TP_FORM_NUMBER, "W", 1.0, 0.0, 1,
                           TP_WORSE_HIGHER, "more power drawn from the supply", AT(power_mean)},
    [TP_MET_POWER_PEAK] = {"power_peak_W", "peak power", "W", 0.0, TP_FORM_NUMBER, "W", 1.0, 0.0, 1,
                           TP_WORSE_HIGHER, "a larger load on the supply", AT(power_peak)},
    [TP_MET_CURRENT_PEAK] = {"current_peak_A", "peak current", "A", 0.0, TP_FORM_NUMBER, "A", 1.0,
                             0.0, 2, TP_WORSE_HIGHER,
                             "more current through the wiring, connectors and switch",
                             AT(current_peak)},
    [TP_MET_SURFACE_MAX] = {"surface_max_C", "hottest surface", "degC", TP_KELVIN_0C,
                            TP_FORM_NUMBER, "degC", 1.0, TP_KELVIN_0C, 1, TP_WORSE_HIGHER,
                            "a hotter surface: burns and material limits", AT(surface_max)},
    [TP_MET_HOLD_POWER] = {"holding_power_W", "holding power", "W", 0.0, TP_FORM_NUMBER, "W", 1.0,
                           0.0, 1, TP_WORSE_HIGHER, "more power needed to hold the setpoint",
                           AT(hold_power)},
    [TP_MET_HOLD_DUTY] = {"holding_duty", "holding duty", "1", 0.0, TP_FORM_NUMBER, "-", 1.0, 0.0,
                          3, TP_WORSE_HIGHER, "less duty left to recover from a disturbance",
                          AT(hold_duty)},
    [TP_MET_MARGIN] = {"margin", "margin", "1", 0.0, TP_FORM_NUMBER, "x", 1.0, 0.0, 2,
                       TP_WORSE_LOWER, "less power in reserve over what holding needs", AT(margin)},
    [TP_MET_HIGHEST] = {"highest_reachable_C", "highest reachable", "degC", TP_KELVIN_0C,
                        TP_FORM_NUMBER, "degC", 1.0, TP_KELVIN_0C, 1, TP_WORSE_HIGHER,
                        "hotter if the heater sticks on: the hazard a cut-out must stop",
                        AT(highest_reachable)},
    /* Reported by the warm-up only. */
    [TP_MET_SETPOINT] = {"setpoint_C", "setpoint", "degC", TP_KELVIN_0C, TP_FORM_NUMBER, "degC",
                         1.0, TP_KELVIN_0C, 1, TP_WORSE_HIGHER, NOT_JUDGED, AT(setpoint)},
    [TP_MET_SURFACE_HOLD] = {"surface_hold_C", "surface at holding", "degC", TP_KELVIN_0C,
                             TP_FORM_NUMBER, "degC", 1.0, TP_KELVIN_0C, 1, TP_WORSE_HIGHER,
                             NOT_JUDGED, AT(surface_hold)},
    [TP_MET_LAG_K] = {"lag_K", "lag", "K", 0.0, TP_FORM_NUMBER, "K", 1.0, 0.0, 2, TP_WORSE_FARTHER,
                      NOT_JUDGED, AT(lag_k)},
    [TP_MET_DUTY_MEAN] = {"duty_mean", "mean duty", "1", 0.0, TP_FORM_NUMBER, "-", 1.0, 0.0, 3,
                          TP_WORSE_HIGHER, NOT_JUDGED, AT(duty_mean)},
    [TP_MET_DUTY_PEAK] = {"duty_peak", "peak duty", "1", 0.0, TP_FORM_NUMBER, "-", 1.0, 0.0, 3,
                          TP_WORSE_HIGHER, NOT_JUDGED, AT(duty_peak)},
    [TP_MET_WIRE_MEAN] = {"wiring_loss_mean_W", "wiring loss", "W", 0.0, TP_FORM_NUMBER, "W", 1.0,
                          0.0, 2, TP_WORSE_HIGHER, NOT_JUDGED, AT(wire_mean)},
    [TP_MET_AIR_FINAL] = {"air_final_C", "enclosure air", "degC", TP_KELVIN_0C, TP_FORM_NUMBER,
                          "degC", 1.0, TP_KELVIN_0C, 1, TP_WORSE_HIGHER, NOT_JUDGED, AT(air_final)},
    [TP_MET_DURATION] = {"duration_s", "simulated", "s", 0.0, TP_FORM_DURATION, "min", 1.0 / 60.0,
                         0.0, 0, TP_WORSE_HIGHER, NOT_JUDGED, AT(duration)},
};

/* The segment rows: segment n's figures at tp_program.seg[n - 1]. */
#define SEG_AT(k, f)                                                                               \
    (offsetof(tp_program, seg) + (size_t)(k) * sizeof(tp_program_segment) +                      \
     offsetof(tp_program_segment, f))
#define SEG_ROWS(k, n)                                                                             \
    {"segment" #n "." TP_SEGKEY_RATE_READING, "seg " #n " rate", "K/s", 0.0, TP_FORM_NUMBER,       \
     "K/s", 1.0, 0.0, 3, TP_WORSE_LOWER, "a slower ramp of the reading (an upward one)",         \
     SEG_AT(k, rate_reading)},                                                                     \
    {"segment" #n "." TP_SEGKEY_RATE_SURFACE, "seg " #n " surface rate", "K/s", 0.0,              \
     TP_FORM_NUMBER, "K/s", 1.0, 0.0, 3, TP_WORSE_LOWER,                                           \
     "a slower ramp of the working surface (an upward one)", SEG_AT(k, rate_surface)},            \
    {"segment" #n "." TP_SEGKEY_ERR_READING, "seg " #n " error", "K", 0.0, TP_FORM_NUMBER, "K",    \
     1.0, 0.0, 2, TP_WORSE_HIGHER, "the reading further from the setpoint it should follow",      \
     SEG_AT(k, err_max_reading)},                                                                  \
    {"segment" #n "." TP_SEGKEY_AT_LIMIT, "seg " #n " at limit", "1", 0.0, TP_FORM_NUMBER, "-",    \
     1.0, 0.0, 3, TP_WORSE_HIGHER, "more of the segment with the heater at its limit",            \
     SEG_AT(k, at_limit)},                                                                         \
    {"segment" #n "." TP_SEGKEY_FOLLOW_RATE, "seg " #n " followable", "K/s", 0.0, TP_FORM_NUMBER, \
     "K/s", 1.0, 0.0, 3, TP_WORSE_LOWER, "a slower rate the plate can follow at its limit",       \
     SEG_AT(k, follow_rate)},                                                                      \
    {"segment" #n "." TP_SEGKEY_FOLLOW_AT, "seg " #n " limit at", "degC", TP_KELVIN_0C,     \
     TP_FORM_NUMBER, "degC", 1.0, TP_KELVIN_0C, 1, TP_WORSE_LOWER,                                 \
     "the plate at its limit at a lower temperature", SEG_AT(k, follow_at)},                      \
    {"segment" #n "." TP_SEGKEY_OVERSHOOT_READING, "seg " #n " overshoot", "K", 0.0,              \
     TP_FORM_NUMBER, "K", 1.0, 0.0, 2, TP_WORSE_HIGHER,                                            \
     "further above the segment's target", SEG_AT(k, overshoot_reading)}

static const tp_metricdef seg_table[TP_METRICDEF_SEGMENTS * TP_SEGMET_COUNT] = {
    SEG_ROWS(0, 1), SEG_ROWS(1, 2), SEG_ROWS(2, 3), SEG_ROWS(3, 4),
    SEG_ROWS(4, 5), SEG_ROWS(5, 6), SEG_ROWS(6, 7), SEG_ROWS(7, 8),
};

const tp_metricdef *tp_metricdef_swept(int metric)
{
    if (metric >= 0 && metric < TP_MET_SWEPT)
        return &table[metric];
    if (metric >= TP_MET_SWEPT && metric < TP_MET_SWEPT_MAX)
        return &seg_table[metric - TP_MET_SWEPT];
    return NULL;
}

int tp_metricdef_swept_count(int n_segments)
{
    if (n_segments < 0)
        n_segments = 0;
    if (n_segments > TP_METRICDEF_SEGMENTS)
        n_segments = TP_METRICDEF_SEGMENTS;
    return TP_MET_SWEPT + n_segments * TP_SEGMET_COUNT;
}

double tp_metricdef_segment_value(int metric, const tp_program *p)
{
    int k = metric - TP_MET_SWEPT;
    double v;
    if (k < 0 || metric >= TP_MET_SWEPT_MAX || k / TP_SEGMET_COUNT >= p->n)
        return TP_UNSET;
    memcpy(&v, (const char *)p + seg_table[k].field, sizeof v);
    return v;
}

const tp_metricdef *tp_metricdef_get(int metric)
{
    return metric >= 0 && metric < TP_MET_COUNT ? &table[metric] : NULL;
}

int tp_metricdef_find(const char *key)
{
    int i;
    for (i = 0; key && i < TP_MET_SWEPT_MAX; i++)
        if (strcmp(tp_metricdef_swept(i)->key, key) == 0)
            return i;
    return -1;
}

void tp_metricdef_keys(char *buf, size_t size)
{
    size_t used = 0;
    int i;
    if (size == 0)
        return;
    buf[0] = '\0';
    for (i = 0; i < TP_MET_SWEPT && used < size; i++) {
        int n = snprintf(buf + used, size - used, "%s%s", i ? ", " : "", table[i].key);
        if (n < 0)
            break;
        used += (size_t)n;
    }
    if (used < size)
        snprintf(buf + used, size - used, "; with control.schedule segment<N>.%s ...",
                 TP_SEGKEY_RATE_READING);
}

const char *tp_metricdef_worse_name(tp_metricdef_worse worse)
{
    return worse == TP_WORSE_HIGHER  ? "highest"
           : worse == TP_WORSE_LOWER ? "lowest"
                                     : "farthest from 0";
}

int tp_metricdef_worse_than(double a, double b, tp_metricdef_worse worse)
{
    if (worse == TP_WORSE_HIGHER)
        return a > b;
    if (worse == TP_WORSE_LOWER)
        return a < b;
    return fabs(a) > fabs(b);
}

double tp_metricdef_value(const tp_metricdef *md, const tp_metrics *m)
{
    double v;
    memcpy(&v, (const char *)m + md->field, sizeof v);
    return v;
}

double tp_metricdef_file_value(const tp_metricdef *m, double si)
{
    return si - m->file_offset;
}

double tp_metricdef_text_value(const tp_metricdef *m, double si)
{
    return (si - m->offset) * m->scale;
}
