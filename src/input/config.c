/* The config reader: schema tables describe every key (kind, unit dimension, bounds, where it
 * lands in tp_description); one walker reads, validates, copies and sets values by dotted path. */
#include "config.h"

#include <ctype.h>
#include <float.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "materials.h"
#include "schedule.h"

/* ---- the schema --------------------------------------------------------------------------- */

typedef enum kind {
    K_QTY,    /* double with a unit of `dim` (TP_DIM_NONE: bare number) */
    K_QPAIR,  /* double[2], e.g. [250 mm, 210 mm] */
    K_ID,     /* char[TP_ID_MAX]: letters, digits, '-' and '_' */
    K_TEXT,   /* char[size]: free text */
    K_IDPAIR, /* char[2][TP_ID_MAX] */
    K_ENUM,   /* an enum (int), from its name in `names` (tp_mode, tp_installation) */
    K_MAP,    /* a nested section: struct at `offset`, keys in `sub` */
    K_LIST,   /* a list of sections: pointer at `offset`, size_t count at `count_offset` */
    K_IDMAP   /* a map of id -> section (materials): like K_LIST, the key becomes `id` */
} kind;

enum {
    F_REQ = 1 << 0,     /* required */
    F_POS = 1 << 1,     /* > 0 */
    F_NONNEG = 1 << 2,  /* >= 0 */
    F_FRAC = 1 << 3,    /* 0 < x <= 1 */
    F_PRESENT = 1 << 4, /* K_MAP: the struct begins with `int present` */
    F_INT = 1 << 5      /* a whole number */
};

typedef struct section section;

typedef struct key {
    const char *name;
    kind kind;
    tp_dim dim;
    size_t offset;       /* of the field within its section's struct */
    size_t size;         /* K_TEXT: buffer size; K_LIST/K_IDMAP: element size; K_ENUM: the
                            number of names */
    size_t count_offset; /* K_LIST/K_IDMAP: offset of the size_t count */
    const section *sub;  /* K_MAP/K_LIST/K_IDMAP */
    unsigned flags;
    double hi;           /* plausibility bound (SI, or element count for lists); 0: none */
    const char *why;     /* the hint given when a value exceeds `hi` */
    const char *const *names; /* K_ENUM: the value names in enum order (description.h) */
} key;

struct section {
    const key *keys;
    size_t n;
};

#define N(a) (sizeof(a) / sizeof((a)[0]))
#define QTY(T, f, nm, dim, fl, hi, why)                                                         \
    {nm, K_QTY, dim, offsetof(T, f), 0, 0, NULL, fl, hi, why, NULL}
#define QPAIR(T, f, nm, dim, fl, hi, why)                                                        \
    {nm, K_QPAIR, dim, offsetof(T, f), 0, 0, NULL, fl, hi, why, NULL}
#define ID(T, f, nm, fl)                                                                         \
    {nm, K_ID, TP_DIM_NONE, offsetof(T, f), TP_ID_MAX, 0, NULL, fl, 0, NULL, NULL}
#define TEXT(T, f, nm)                                                                           \
    {nm, K_TEXT, TP_DIM_NONE, offsetof(T, f), sizeof(((T *)0)->f), 0, NULL, 0, 0, NULL, NULL}
#define MAP(T, f, nm, sub, fl)                                                                   \
    {nm, K_MAP, TP_DIM_NONE, offsetof(T, f), 0, 0, &sub, fl, 0, NULL, NULL}
#define LIST(T, f, cnt, E, nm, sub, fl, max)                                                     \
    {nm, K_LIST, TP_DIM_NONE, offsetof(T, f), sizeof(E), offsetof(T, cnt), &sub, fl, max, NULL,    \
     NULL}
#define ENUM(T, f, nm, fl, names)                                                                \
    {nm, K_ENUM, TP_DIM_NONE, offsetof(T, f), N(names), 0, NULL, fl, 0, NULL, names}

static const char *const too_big = "tepid models benchtop plates and hotplates; check the value "
                                   "and its unit";

/* Material entries (models/materials.yaml and inline `materials:`). */
static const key material_keys[] = {
    TEXT(tp_material_spec, name, "name"),
    QTY(tp_material_spec, density, "density", TP_DIM_DENSITY, F_REQ | F_POS, 25000, too_big),
    QTY(tp_material_spec, specific_heat, "specific_heat", TP_DIM_SPECIFIC_HEAT, F_REQ | F_POS,
        1e5, too_big),
    QTY(tp_material_spec, conductivity, "conductivity", TP_DIM_CONDUCTIVITY, F_REQ | F_POS, 5000,
        too_big),
    QTY(tp_material_spec, conductivity_through, "conductivity_through", TP_DIM_CONDUCTIVITY,
        F_POS, 5000, too_big),
    QTY(tp_material_spec, emissivity, "emissivity", TP_DIM_NONE, F_REQ | F_FRAC, 0, NULL),
    QTY(tp_material_spec, max_temperature, "max_temperature", TP_DIM_TEMPERATURE, F_REQ, 3000,
        too_big),
    {"source", K_TEXT, TP_DIM_NONE, offsetof(tp_material_spec, source),
     sizeof(((tp_material_spec *)0)->source), 0, NULL, F_REQ, 0, NULL, NULL},
    TEXT(tp_material_spec, note, "note"),
};
static const section material_sec = {material_keys, N(material_keys)};

/* Raw network form. */
static const key raw_node_keys[] = {
    ID(tp_raw_node, id, "id", F_REQ),
    QTY(tp_raw_node, capacity, "capacity", TP_DIM_CAPACITY, F_POS, 1e9, too_big),
    QTY(tp_raw_node, initial, "initial", TP_DIM_TEMPERATURE, 0, 3000, too_big),
    QTY(tp_raw_node, fixed, "fixed", TP_DIM_TEMPERATURE, 0, 3000, too_big),
};
static const section raw_node_sec = {raw_node_keys, N(raw_node_keys)};

static const key raw_conv_keys[] = {
    QTY(tp_raw_convection, area, "area", TP_DIM_AREA, F_REQ | F_POS, 100, too_big),
    QTY(tp_raw_convection, coefficient, "coefficient", TP_DIM_HTC, F_REQ | F_NONNEG, 1e6,
        too_big),
};
static const section raw_conv_sec = {raw_conv_keys, N(raw_conv_keys)};

static const key raw_rad_keys[] = {
    QTY(tp_raw_radiation, area, "area", TP_DIM_AREA, F_REQ | F_POS, 100, too_big),
    QTY(tp_raw_radiation, emissivity, "emissivity", TP_DIM_NONE, F_REQ | F_FRAC, 0, NULL),
};
static const section raw_rad_sec = {raw_rad_keys, N(raw_rad_keys)};

static const key raw_link_keys[] = {
    {"between", K_IDPAIR, TP_DIM_NONE, offsetof(tp_raw_link, between), TP_ID_MAX, 0, NULL, F_REQ,
     0, NULL, NULL},
    QTY(tp_raw_link, conductance, "conductance", TP_DIM_CONDUCTANCE, F_NONNEG, 1e6, too_big),
    MAP(tp_raw_link, convection, "convection", raw_conv_sec, F_PRESENT),
    MAP(tp_raw_link, radiation, "radiation", raw_rad_sec, F_PRESENT),
};
static const section raw_link_sec = {raw_link_keys, N(raw_link_keys)};

static const key raw_source_keys[] = {
    ID(tp_raw_source, id, "id", F_REQ),
    ID(tp_raw_source, node, "node", F_REQ),
    QTY(tp_raw_source, power, "power", TP_DIM_POWER, F_NONNEG, 1e5, too_big),
    QTY(tp_raw_source, supply, "supply", TP_DIM_VOLTAGE, F_POS, 1000, too_big),
    QTY(tp_raw_source, resistance, "resistance", TP_DIM_RESISTANCE, F_POS, 1e7, too_big),
    QTY(tp_raw_source, tempco, "tempco", TP_DIM_PER_KELVIN, 0, 0.05, too_big),
    QTY(tp_raw_source, reference, "reference", TP_DIM_TEMPERATURE, 0, 3000, too_big),
};
static const section raw_source_sec = {raw_source_keys, N(raw_source_keys)};

static const key network_keys[] = {
    LIST(tp_raw, nodes, n_nodes, tp_raw_node, "nodes", raw_node_sec, F_REQ, TP_MAX_RAW_NODES),
    LIST(tp_raw, links, n_links, tp_raw_link, "links", raw_link_sec, 0, TP_MAX_RAW_LINKS),
    LIST(tp_raw, sources, n_sources, tp_raw_source, "sources", raw_source_sec, 0,
         TP_MAX_RAW_NODES),
};
static const section network_sec = {network_keys, N(network_keys)};

/* Physical form. */
static const key room_keys[] = {
    QTY(tp_room, temperature, "temperature", TP_DIM_TEMPERATURE, F_REQ, 400,
        "a room is between about -40 and 120 degC"),
    QTY(tp_room, airflow, "airflow", TP_DIM_SPEED, F_NONNEG, 30, too_big),
    QTY(tp_room, pressure, "pressure", TP_DIM_PRESSURE, F_POS, 2e5, too_big),
};
static const section room_sec = {room_keys, N(room_keys)};

static const key layer_keys[] = {
    ID(tp_layer, id, "id", F_REQ),
    ID(tp_layer, material, "material", F_REQ),
    QTY(tp_layer, thickness, "thickness", TP_DIM_LENGTH, F_REQ | F_POS, 0.5, too_big),
    QPAIR(tp_layer, size, "size", TP_DIM_LENGTH, F_POS, 5, too_big),
    QTY(tp_layer, contact, "contact", TP_DIM_HTC, F_POS, 1e8, too_big),
};
static const section layer_sec = {layer_keys, N(layer_keys)};

static const key face_keys[] = {
    QTY(tp_face_spec, emissivity, "emissivity", TP_DIM_NONE, F_FRAC, 0, NULL),
};
static const section face_sec = {face_keys, N(face_keys)};

static const key mounts_keys[] = {
    QTY(tp_mounts, conductance, "conductance", TP_DIM_CONDUCTANCE, F_NONNEG, 1e4, too_big),
};
static const section mounts_sec = {mounts_keys, N(mounts_keys)};

static const key bed_keys[] = {
    QPAIR(tp_bed, size, "size", TP_DIM_LENGTH, F_REQ | F_POS, 5, too_big),
    QPAIR(tp_bed, grid, "grid", TP_DIM_NONE, F_POS | F_INT, TP_GRID_SIDE_MAX,
          "at most 500 cells along a side (docs/grid.md)"),
    LIST(tp_bed, layers, n_layers, tp_layer, "layers", layer_sec, F_REQ, TP_MAX_LAYERS),
    MAP(tp_bed, top, "top", face_sec, 0),
    MAP(tp_bed, bottom, "bottom", face_sec, 0),
    MAP(tp_bed, mounts, "mounts", mounts_sec, 0),
};
static const section bed_sec = {bed_keys, N(bed_keys)};

static const key pattern_keys[] = {
    QTY(tp_heater_pattern, border, "border", TP_DIM_LENGTH, F_REQ | F_POS, 5, too_big),
    QTY(tp_heater_pattern, border_share, "border_share", TP_DIM_NONE, F_REQ | F_FRAC, 0, NULL),
};
static const section pattern_sec = {pattern_keys, N(pattern_keys)};

static const key heater_keys[] = {
    ID(tp_heater, layer, "layer", F_REQ),
    QTY(tp_heater, power, "power", TP_DIM_POWER, F_POS, 1e5, too_big),
    QTY(tp_heater, supply, "supply", TP_DIM_VOLTAGE, F_POS, 1000, too_big),
    QTY(tp_heater, resistance, "resistance", TP_DIM_RESISTANCE, F_POS, 1e7, too_big),
    QTY(tp_heater, tempco, "tempco", TP_DIM_PER_KELVIN, 0, 0.05, too_big),
    QTY(tp_heater, reference, "reference", TP_DIM_TEMPERATURE, 0, 3000, too_big),
    QTY(tp_heater, max_duty, "max_duty", TP_DIM_NONE, F_FRAC, 0, NULL),
    QTY(tp_heater, supply_resistance, "supply_resistance", TP_DIM_RESISTANCE, F_NONNEG, 1e6,
        too_big),
    QTY(tp_heater, rated_power, "rated_power", TP_DIM_POWER, F_POS, 1e5, too_big),
    QTY(tp_heater, rated_voltage, "rated_voltage", TP_DIM_VOLTAGE, F_POS, 1000, too_big),
    MAP(tp_heater, pattern, "pattern", pattern_sec, F_PRESENT),
};
static const section heater_sec = {heater_keys, N(heater_keys)};

static const key thermistor_keys[] = {
    QTY(tp_thermistor, r25, "r25", TP_DIM_RESISTANCE, F_REQ | F_POS, 1e9, too_big),
    QTY(tp_thermistor, beta, "beta", TP_DIM_INTERVAL, F_REQ | F_POS, 20000, too_big),
    QTY(tp_thermistor, series, "series", TP_DIM_RESISTANCE, F_REQ | F_POS, 1e9, too_big),
    QTY(tp_thermistor, adc_bits, "adc_bits", TP_DIM_NONE, F_POS | F_INT, 32,
        "ADCs have 8 to 24 bits"),
    QTY(tp_thermistor, supply, "supply", TP_DIM_VOLTAGE, F_POS, 100, too_big),
    QTY(tp_thermistor, adc_reference, "adc_reference", TP_DIM_VOLTAGE, F_POS, 100, too_big),
};
static const section thermistor_sec = {thermistor_keys, N(thermistor_keys)};

static const key sensor_keys[] = {
    ID(tp_sensor_spec, layer, "layer", F_REQ),
    QTY(tp_sensor_spec, coupling, "coupling", TP_DIM_CONDUCTANCE, F_REQ | F_POS, 1e4, too_big),
    QTY(tp_sensor_spec, capacity, "capacity", TP_DIM_CAPACITY, F_POS, 1e5, too_big),
    QTY(tp_sensor_spec, time_constant, "time_constant", TP_DIM_TIME, F_POS, 86400, too_big),
    QTY(tp_sensor_spec, offset, "offset", TP_DIM_INTERVAL, 0, 100, too_big),
    QPAIR(tp_sensor_spec, position, "position", TP_DIM_LENGTH, F_NONNEG, 5, too_big),
    MAP(tp_sensor_spec, thermistor, "thermistor", thermistor_sec, F_PRESENT),
};
static const section sensor_sec = {sensor_keys, N(sensor_keys)};

static const key walls_keys[] = {
    QTY(tp_walls, area, "area", TP_DIM_AREA, F_REQ | F_POS, 100, too_big),
    QTY(tp_walls, u_value, "u_value", TP_DIM_HTC, F_REQ | F_POS, 1e4, too_big),
    QTY(tp_walls, capacity, "capacity", TP_DIM_CAPACITY, F_REQ | F_POS, 1e8, too_big),
    QTY(tp_walls, emissivity, "emissivity", TP_DIM_NONE, F_FRAC, 0, NULL),
};
static const section walls_sec = {walls_keys, N(walls_keys)};

static const key enclosure_keys[] = {
    QTY(tp_enclosure, volume, "volume", TP_DIM_VOLUME, F_REQ | F_POS, 50, too_big),
    QTY(tp_enclosure, height, "height", TP_DIM_LENGTH, F_POS, 10, too_big),
    MAP(tp_enclosure, walls, "walls", walls_sec, F_REQ | F_PRESENT),
};
static const section enclosure_sec = {enclosure_keys, N(enclosure_keys)};

/* Setpoint schedules (docs/control.md): one of to (with ramp or not), hold and off per item. */
static const key schedule_keys[] = {
    QTY(tp_schedule_seg, to, "to", TP_DIM_TEMPERATURE, 0, 1500, too_big),
    QTY(tp_schedule_seg, ramp, "ramp", TP_DIM_RATE, F_POS, 100,
        "a ramp rate of a few K/s or K/min; a step is {to: TEMP} without ramp"),
    QTY(tp_schedule_seg, hold, "hold", TP_DIM_TIME, F_POS, TP_MAX_DURATION,
        "simulate at most 30 days"),
    QTY(tp_schedule_seg, off, "off", TP_DIM_TIME, F_POS, TP_MAX_DURATION,
        "simulate at most 30 days"),
};
static const section schedule_sec = {schedule_keys, N(schedule_keys)};

static const key control_keys[] = {
    ID(tp_control_spec, source, "source", 0),
    ID(tp_control_spec, sensor, "sensor", 0),
    ENUM(tp_control_spec, mode, "mode", F_REQ, tp_description_mode_names),
    QTY(tp_control_spec, setpoint, "setpoint", TP_DIM_TEMPERATURE, 0, 1500, too_big),
    QTY(tp_control_spec, band, "band", TP_DIM_INTERVAL, F_POS, 100, too_big),
    QTY(tp_control_spec, period, "period", TP_DIM_TIME, F_POS, 3600, too_big),
    QTY(tp_control_spec, kp, "kp", TP_DIM_PER_KELVIN, F_NONNEG, 1e3, too_big),
    QTY(tp_control_spec, ki, "ki", TP_DIM_PER_KELVIN_SEC, F_NONNEG, 1e3, too_big),
    QTY(tp_control_spec, kd, "kd", TP_DIM_SEC_PER_KELVIN, F_NONNEG, 1e5, too_big),
    QTY(tp_control_spec, derivative_filter, "derivative_filter", TP_DIM_TIME, F_NONNEG, 3600,
        too_big),
    QTY(tp_control_spec, duty_levels, "duty_levels", TP_DIM_NONE, F_POS | F_INT, 1e6,
        "PWM outputs have at most a few thousand levels (255 for 8 bits)"),
    LIST(tp_control_spec, schedule, n_schedule, tp_schedule_seg, "schedule", schedule_sec, 0,
         TP_SCHEDULE_MAX),
};
static const section control_sec = {control_keys, N(control_keys)};

static const key run_keys[] = {
    QTY(tp_run, duration, "duration", TP_DIM_TIME, F_POS, TP_MAX_DURATION,
        "simulate at most 30 days"),
    QTY(tp_run, step, "step", TP_DIM_TIME, F_POS, 86400, too_big),
    QTY(tp_run, tolerance, "tolerance", TP_DIM_NONE, F_POS, 1e-2,
        "a relative tolerance between 1e-10 and 1e-2"),
    QTY(tp_run, max_steps, "max_steps", TP_DIM_NONE, F_POS | F_INT, 1e9, too_big),
    QTY(tp_run, wall_time, "wall_time", TP_DIM_TIME, F_POS, 86400, too_big),
    QTY(tp_run, initial, "initial", TP_DIM_TEMPERATURE, 0, 1500, too_big),
};
static const section run_sec = {run_keys, N(run_keys)};

static const key losses_keys[] = {
    QTY(tp_losses, convection_scale, "convection_scale", TP_DIM_NONE, F_NONNEG, 100,
        "a multiplier of order 1"),
    QTY(tp_losses, radiation_scale, "radiation_scale", TP_DIM_NONE, F_NONNEG, 100,
        "a multiplier of order 1"),
};
static const section losses_sec = {losses_keys, N(losses_keys)};

static const key supply_keys[] = {
    QTY(tp_supply_spec, voltage, "voltage", TP_DIM_VOLTAGE, F_REQ | F_POS, 1000, too_big),
    QTY(tp_supply_spec, power, "power", TP_DIM_POWER, F_POS, 1e5, too_big),
    QTY(tp_supply_spec, current, "current", TP_DIM_CURRENT, F_POS, 1000, too_big),
    QTY(tp_supply_spec, efficiency, "efficiency", TP_DIM_NONE, F_FRAC, 0, NULL),
    QTY(tp_supply_spec, output_resistance, "output_resistance", TP_DIM_RESISTANCE, F_NONNEG, 100,
        too_big),
};
static const section supply_sec = {supply_keys, N(supply_keys)};

static const key load_keys[] = {
    ID(tp_load, id, "id", F_REQ),
    QTY(tp_load, power, "power", TP_DIM_POWER, F_NONNEG, 1e5, too_big),
    QTY(tp_load, current, "current", TP_DIM_CURRENT, F_NONNEG, 1000, too_big),
};
static const section load_sec = {load_keys, N(load_keys)};

static const key wiring_keys[] = {
    QTY(tp_wiring, cross_section, "cross_section", TP_DIM_AREA, F_POS, 1e-3, too_big),
    QTY(tp_wiring, awg, "awg", TP_DIM_NONE, F_INT, 40, "AWG numbers run from 0000 (-3) to 40"),
    QTY(tp_wiring, length, "length", TP_DIM_LENGTH, F_REQ | F_POS, 100, too_big),
    QTY(tp_wiring, switch_resistance, "switch_resistance", TP_DIM_RESISTANCE, F_NONNEG, 100,
        too_big),
    ENUM(tp_wiring, installation, "installation", 0, tp_description_installation_names),
    QTY(tp_wiring, insulation_rating, "insulation_rating", TP_DIM_TEMPERATURE, F_POS, 700,
        "insulation is rated between about 60 and 250 degC"),
    QTY(tp_wiring, ambient, "ambient", TP_DIM_TEMPERATURE, F_POS, 400,
        "the air around the wires is between about -40 and 120 degC"),
    QTY(tp_wiring, max_drop, "max_drop", TP_DIM_NONE, F_FRAC, 0, NULL),
    QTY(tp_wiring, fuse, "fuse", TP_DIM_CURRENT, F_POS, 1000, too_big),
};
static const section wiring_sec = {wiring_keys, N(wiring_keys)};
/* Protection design (docs/guard.md). */
static const key guard_step_keys[] = {
    QTY(tp_guard_step, after, "after", TP_DIM_TIME, F_REQ | F_NONNEG, 86400, too_big),
    QTY(tp_guard_step, airflow, "airflow", TP_DIM_SPEED, F_REQ | F_NONNEG, 30, too_big),
};
static const section guard_step_sec = {guard_step_keys, N(guard_step_keys)};

static const key guard_sheet_keys[] = {
    QTY(tp_guard_sheet, after, "after", TP_DIM_TIME, F_REQ | F_NONNEG, 86400, too_big),
    QTY(tp_guard_sheet, capacity, "capacity", TP_DIM_CAPACITY, F_REQ | F_POS, 1e6, too_big),
};
static const section guard_sheet_sec = {guard_sheet_keys, N(guard_sheet_keys)};

static const key guard_settings_keys[] = {
    QTY(tp_guard_settings, rise_window, "rise_window", TP_DIM_TIME, F_POS, 86400, too_big),
    QTY(tp_guard_settings, rise_min, "rise_min", TP_DIM_INTERVAL, F_POS, 500, too_big),
    QTY(tp_guard_settings, approach, "approach", TP_DIM_INTERVAL, F_NONNEG, 500, too_big),
    QTY(tp_guard_settings, hold_band, "hold_band", TP_DIM_INTERVAL, F_POS, 500, too_big),
    QTY(tp_guard_settings, hold_grace, "hold_grace", TP_DIM_TIME, F_NONNEG, 86400, too_big),
    QTY(tp_guard_settings, ceiling, "ceiling", TP_DIM_TEMPERATURE, F_POS, 3000, too_big),
};
static const section guard_settings_sec = {guard_settings_keys, N(guard_settings_keys)};

static const key guard_keys[] = {
    QPAIR(tp_guard_spec, supply, "supply", TP_DIM_VOLTAGE, F_POS, 1000, too_big),
    QTY(tp_guard_spec, resistance, "resistance", TP_DIM_NONE, F_NONNEG, 0.5,
        "a tolerance as a fraction or a percentage, e.g. 5 %"),
    QPAIR(tp_guard_spec, room, "room", TP_DIM_TEMPERATURE, F_POS, 400,
          "a room is between about -40 and 120 degC"),
    QPAIR(tp_guard_spec, airflow, "airflow", TP_DIM_SPEED, F_NONNEG, 30, too_big),
    MAP(tp_guard_spec, gust, "gust", guard_step_sec, F_PRESENT),
    MAP(tp_guard_spec, sheet, "sheet", guard_sheet_sec, F_PRESENT),
    QTY(tp_guard_spec, hold, "hold", TP_DIM_TIME, F_POS, 86400, too_big),
    QTY(tp_guard_spec, horizon, "horizon", TP_DIM_TIME, F_POS, 30 * 86400.0,
        "follow a fault at most 30 days"),
    QTY(tp_guard_spec, detached_loss, "detached_loss", TP_DIM_CONDUCTANCE, F_POS, 1e3, too_big),
    QTY(tp_guard_spec, time_factor, "time_factor", TP_DIM_NONE, F_POS, 100,
        "a factor of 1 or more on healthy durations, e.g. 1.5"),
    QTY(tp_guard_spec, rise_factor, "rise_factor", TP_DIM_NONE, F_FRAC, 0, NULL),
    MAP(tp_guard_spec, settings, "settings", guard_settings_sec, F_PRESENT),
};
static const section guard_sec = {guard_keys, N(guard_keys)};

static const key top_keys[] = {
    TEXT(tp_description, title, "title"),
    MAP(tp_description, network, "network", network_sec, F_PRESENT),
    {"materials", K_IDMAP, TP_DIM_NONE, offsetof(tp_description, materials),
     sizeof(tp_material_spec), offsetof(tp_description, n_materials), &material_sec, 0,
     TP_MAX_MATERIALS, NULL, NULL},
    MAP(tp_description, room, "room", room_sec, 0),
    MAP(tp_description, bed, "bed", bed_sec, F_PRESENT),
    MAP(tp_description, heater, "heater", heater_sec, F_PRESENT),
    MAP(tp_description, sensor, "sensor", sensor_sec, F_PRESENT),
    MAP(tp_description, enclosure, "enclosure", enclosure_sec, F_PRESENT),
    MAP(tp_description, control, "control", control_sec, F_PRESENT),
    MAP(tp_description, run, "run", run_sec, 0),
    MAP(tp_description, losses, "losses", losses_sec, 0),
    MAP(tp_description, supply, "supply", supply_sec, F_PRESENT),
    LIST(tp_description, loads, n_loads, tp_load, "loads", load_sec, 0, 64),
    MAP(tp_description, wiring, "wiring", wiring_sec, F_PRESENT),
    MAP(tp_description, guard, "guard", guard_sec, F_PRESENT),
};
static const section top_sec = {top_keys, N(top_keys)};

/* ---- helpers ------------------------------------------------------------------------------ */

static double *dbl(void *base, size_t off)
{
    return (double *)(void *)((char *)base + off);
}

static void *field(void *base, size_t off)
{
    return (char *)base + off;
}

static size_t *count_at(void *base, size_t off)
{
    return (size_t *)(void *)((char *)base + off);
}

static void key_list(const section *sec, char *out, size_t size)
{
    size_t i, len = 0;
    out[0] = '\0';
    for (i = 0; i < sec->n && len + 2 < size; i++)
        len += (size_t)snprintf(out + len, size - len, "%s%s", i ? ", " : "", sec->keys[i].name);
}

static void join(char *out, size_t size, const char *path, const char *name)
{
    if (path && *path)
        snprintf(out, size, "%s.%s", path, name);
    else
        snprintf(out, size, "%s", name);
}

typedef struct reader {
    tp_diag *d;
    int nomem; /* an allocation failed (reported): the status is TP_ERR_NOMEM, not an input error */
} reader;

/* Set every number of a section to TP_UNSET, recursively through maps. */
static void init_section(const section *sec, void *base)
{
    size_t i;
    for (i = 0; i < sec->n; i++) {
        const key *k = &sec->keys[i];
        if (k->kind == K_QTY)
            *dbl(base, k->offset) = TP_UNSET;
        else if (k->kind == K_QPAIR)
            dbl(base, k->offset)[0] = dbl(base, k->offset)[1] = TP_UNSET;
        else if (k->kind == K_MAP)
            init_section(k->sub, field(base, k->offset));
    }
}

static int valid_id(const char *s)
{
    if (!*s)
        return 0;
    for (; *s; s++)
        if (!isalnum((unsigned char)*s) && *s != '-' && *s != '_')
            return 0;
    return 1;
}

static int expect_kind(reader *r, const tp_yamltree_node *n, tp_yamltree_kind want,
                       const char *path, const char *example)
{
    char hint[160];
    if (n->kind == want)
        return 1;
    snprintf(hint, sizeof hint, "write it as %s", example);
    tp_diag_error(r->d, tp_yamltree_loc(n), path, hint, "expected %s, found %s",
                  tp_yamltree_kind_name(want), tp_yamltree_kind_name(n->kind));
    return 0;
}

#define BOUND_HI (1 << 8) /* bounds_broken: the plausibility bound `hi` */

/* Which of a key's bounds `v` breaks: F_POS, F_NONNEG, F_FRAC, F_INT, BOUND_HI, or 0. */
static unsigned bounds_broken(const key *k, double v)
{
    if ((k->flags & F_POS) && !(v > 0))
        return F_POS;
    if ((k->flags & F_NONNEG) && !(v >= 0))
        return F_NONNEG;
    if ((k->flags & F_FRAC) && !(v > 0 && v <= 1))
        return F_FRAC;
    if ((k->flags & F_INT) && v != (double)(long long)v)
        return F_INT;
    if (k->hi > 0 && fabs(v) > k->hi)
        return BOUND_HI;
    return 0;
}

/* Parse one scalar quantity and check flags and bounds. Returns 0 on success. */
static int read_number(reader *r, const key *k, const tp_yamltree_node *n, const char *path,
                       double *out)
{
    char msg[256];
    const char *hint;
    double v;
    if (!expect_kind(r, n, TP_YAMLTREE_SCALAR, path, tp_units_example(k->dim)))
        return -1;
    if (n->text[0] == '\0') {
        tp_diag_error(r->d, tp_yamltree_loc(n), path, "give a value or remove the key",
                      "missing value");
        return -1;
    }
    if (tp_units_parse(n->text, k->dim, &v, msg, sizeof msg, &hint) != TP_OK) {
        tp_diag_error(r->d, tp_yamltree_loc(n), path, hint, "%s", msg);
        return -1;
    }
    switch (bounds_broken(k, v)) {
    case F_POS:
        tp_diag_error(r->d, tp_yamltree_loc(n), path, "use a value above zero",
                      "must be positive, got '%s'", n->text);
        return -1;
    case F_NONNEG:
        tp_diag_error(r->d, tp_yamltree_loc(n), path, "use zero or more", "must not be negative");
        return -1;
    case F_FRAC:
        tp_diag_error(r->d, tp_yamltree_loc(n), path,
                      "a fraction lies in (0, 1], e.g. 0.9 (or 90 %)", "'%s' is outside (0, 1]",
                      n->text);
        return -1;
    case F_INT:
        tp_diag_error(r->d, tp_yamltree_loc(n), path, "use a whole number", "'%s' is not whole",
                      n->text);
        return -1;
    case BOUND_HI:
        tp_diag_error(r->d, tp_yamltree_loc(n), path, k->why ? k->why : too_big,
                      "'%s' is implausibly large (limit %g%s%s)", n->text, k->hi,
                      k->dim == TP_DIM_NONE ? "" : " ",
                      k->dim == TP_DIM_NONE ? "" : tp_units_si_name(k->dim));
        return -1;
    default:
        break;
    }
    *out = v;
    return 0;
}

static int read_id(reader *r, const tp_yamltree_node *n, const char *path, char *out)
{
    if (!expect_kind(r, n, TP_YAMLTREE_SCALAR, path, "a name such as plate"))
        return -1;
    if (strlen(n->text) >= TP_ID_MAX || !valid_id(n->text)) {
        tp_diag_error(r->d, tp_yamltree_loc(n), path,
                      "ids use letters, digits, '-' and '_' (at most 47 characters)",
                      "'%s' is not a valid id", n->text);
        return -1;
    }
    strcpy(out, n->text);
    return 0;
}

static void read_section(reader *r, const section *sec, const tp_yamltree_node *map, void *base,
                         const char *path);

/* The label of list item i in paths: its id when it has one, else its index. */
static void item_path(const tp_yamltree_node *item, size_t i, const char *path, char *out,
                      size_t size)
{
    const tp_yamltree_node *id = item->kind == TP_YAMLTREE_MAP ? tp_yamltree_get(item, "id") : NULL;
    char label[TP_ID_MAX + 8];
    if (id && id->kind == TP_YAMLTREE_SCALAR && valid_id(id->text) && strlen(id->text) < TP_ID_MAX)
        snprintf(label, sizeof label, "%s", id->text);
    else
        snprintf(label, sizeof label, "%zu", i);
    join(out, size, path, label);
}

static void read_list(reader *r, const key *k, const tp_yamltree_node *n, void *base,
                      const char *path)
{
    size_t i, count = n->n;
    char *items;
    if (k->kind == K_LIST && !expect_kind(r, n, TP_YAMLTREE_SEQ, path, "a list of '- {...}' items"))
        return;
    if (k->kind == K_IDMAP && !expect_kind(r, n, TP_YAMLTREE_MAP, path, "a map of id: {...}"))
        return;
    if (k->hi > 0 && (double)count > k->hi) {
        tp_diag_error(r->d, tp_yamltree_loc(n), path, "see the documented limits in docs/",
                      "%zu items exceed the limit of %.0f", count, k->hi);
        return;
    }
    if (count == 0)
        return;
    items = calloc(count, k->size);
    if (!items) {
        tp_diag_error(r->d, tp_yamltree_loc(n), path, NULL, "out of memory");
        r->nomem = 1;
        return;
    }
    *(void **)field(base, k->offset) = items;
    *count_at(base, k->count_offset) = count;
    for (i = 0; i < count; i++) {
        void *elem = items + i * k->size;
        const tp_yamltree_node *item = n->items[i];
        char ipath[256];
        init_section(k->sub, elem);
        if (k->kind == K_IDMAP) {
            join(ipath, sizeof ipath, path, n->keys[i]->text);
            if (read_id(r, n->keys[i], ipath, (char *)elem) != 0)
                continue;
        } else {
            item_path(item, i, path, ipath, sizeof ipath);
        }
        if (!expect_kind(r, item, TP_YAMLTREE_MAP, ipath, "a section {key: value, ...}"))
            continue;
        read_section(r, k->sub, item, elem, ipath);
    }
}

static void read_value(reader *r, const key *k, const tp_yamltree_node *n, void *base,
                       const char *path)
{
    size_t i;
    switch (k->kind) {
    case K_QTY:
        read_number(r, k, n, path, dbl(base, k->offset));
        return;
    case K_QPAIR:
        if (!expect_kind(r, n, TP_YAMLTREE_SEQ, path, "[a, b] with units, e.g. [250 mm, 210 mm]"))
            return;
        if (n->n != 2) {
            tp_diag_error(r->d, tp_yamltree_loc(n), path, "write [a, b], e.g. [250 mm, 210 mm]",
                          "expected two values, found %zu", n->n);
            return;
        }
        for (i = 0; i < 2; i++)
            read_number(r, k, n->items[i], path, dbl(base, k->offset) + i);
        return;
    case K_ID:
        read_id(r, n, path, (char *)field(base, k->offset));
        return;
    case K_TEXT:
        if (!expect_kind(r, n, TP_YAMLTREE_SCALAR, path, "text in quotes"))
            return;
        if (strlen(n->text) >= k->size) {
            tp_diag_error(r->d, tp_yamltree_loc(n), path, "shorten the text",
                          "longer than %zu characters", k->size - 1);
            return;
        }
        strcpy((char *)field(base, k->offset), n->text);
        return;
    case K_IDPAIR: {
        char(*pair)[TP_ID_MAX] = (char(*)[TP_ID_MAX])field(base, k->offset);
        if (!expect_kind(r, n, TP_YAMLTREE_SEQ, path, "[node-a, node-b]"))
            return;
        if (n->n != 2) {
            tp_diag_error(r->d, tp_yamltree_loc(n), path, "write [node-a, node-b]",
                          "expected two node ids, found %zu", n->n);
            return;
        }
        for (i = 0; i < 2; i++)
            read_id(r, n->items[i], path, pair[i]);
        return;
    }
    case K_ENUM: {
        char hint[160], list[120], example[140];
        size_t n_names = k->size, len = 0;
        for (i = 0; i < n_names && len + 2 < sizeof list; i++)
            len += (size_t)snprintf(list + len, sizeof list - len, "%s%s",
                                    i == 0 ? "" : i + 1 == n_names ? " or " : ", ", k->names[i]);
        snprintf(example, sizeof example, "one of %s", list);
        if (!expect_kind(r, n, TP_YAMLTREE_SCALAR, path, example))
            return;
        for (i = 0; i < n_names; i++) {
            if (strcmp(n->text, k->names[i]) == 0) {
                *(int *)field(base, k->offset) = (int)i;
                return;
            }
        }
        tp_diag_suggest(n->text, k->names, n_names, hint, sizeof hint);
        if (!hint[0])
            snprintf(hint, sizeof hint, "%s is one of %s", k->name, list);
        tp_diag_error(r->d, tp_yamltree_loc(n), path, hint, "unknown %s '%s'", k->name, n->text);
        return;
    }
    case K_MAP:
        if (!expect_kind(r, n, TP_YAMLTREE_MAP, path, "a section {key: value, ...}"))
            return;
        if (k->flags & F_PRESENT)
            *(int *)field(base, k->offset) = 1;
        read_section(r, k->sub, n, field(base, k->offset), path);
        return;
    case K_LIST:
    case K_IDMAP:
        read_list(r, k, n, base, path);
        return;
    }
}

static void read_section(reader *r, const section *sec, const tp_yamltree_node *map, void *base,
                         const char *path)
{
    size_t i, j;
    for (i = 0; i < map->n; i++) {
        const tp_yamltree_node *kn = map->keys[i];
        const key *k = NULL;
        char kpath[256];
        join(kpath, sizeof kpath, path, kn->text);
        for (j = 0; j < sec->n; j++)
            if (strcmp(sec->keys[j].name, kn->text) == 0)
                k = &sec->keys[j];
        if (!k) {
            const char *names[64];
            char hint[400], list[300];
            size_t m = sec->n < 64 ? sec->n : 64;
            for (j = 0; j < m; j++)
                names[j] = sec->keys[j].name;
            hint[0] = '\0';
            /* Past the errors that are shown, a hint would only cost time (a file of 90,000
             * unknown keys spent most of its seconds in edit distances). */
            if (r->d->errors < TP_DIAG_SHOW_MAX)
                tp_diag_suggest(kn->text, names, m, hint, sizeof hint);
            if (!hint[0] && r->d->errors < TP_DIAG_SHOW_MAX) {
                key_list(sec, list, sizeof list);
                snprintf(hint, sizeof hint, "keys here: %s", list);
            }
            tp_diag_error(r->d, tp_yamltree_loc(kn), kpath, hint, "unknown key");
            continue;
        }
        if (!map->items[i]) {
            tp_diag_error(r->d, tp_yamltree_loc(kn), kpath, NULL, "missing value");
            continue;
        }
        read_value(r, k, map->items[i], base, kpath);
    }
    for (j = 0; j < sec->n; j++) {
        const key *k = &sec->keys[j];
        if ((k->flags & F_REQ) && !tp_yamltree_get(map, k->name)) {
            char kpath[256], hint[128];
            join(kpath, sizeof kpath, path, k->name);
            snprintf(hint, sizeof hint, "add '%s:'%s%s", k->name,
                     k->kind == K_QTY ? ", e.g. " : "",
                     k->kind == K_QTY ? tp_units_example(k->dim) : "");
            tp_diag_error(r->d, tp_yamltree_loc(map), kpath, hint, "missing required key");
        }
    }
}

/* ---- defaults and form -------------------------------------------------------------------- */

static void set_default(double *x, double v)
{
    if (!tp_isset(*x))
        *x = v;
}

#define TP_DEFAULT_DURATION 1800.0  /* s, 30 min when run.duration is absent */
#define TP_DEFAULT_STEP 1.0         /* s, output interval */
#define TP_DEFAULT_RTOL 1.0e-6      /* -, CVODE relative tolerance */
#define TP_DEFAULT_RTOL_GRID 1.0e-5 /* -, the same for gridded plates (bed.grid) */
#define TP_DEFAULT_MAX_STEPS 5.0e6  /* -, integration steps before giving up */
#define TP_DEFAULT_WALL_TIME 600.0  /* s, wall-clock limit of one integration */
#define TP_DEFAULT_PERIOD 1.0       /* s, controller sampling period */
#define TP_DEFAULT_BAND 2.0         /* K, on-off hysteresis */
#define TP_REFERENCE_20C (TP_KELVIN_0C + 20.0) /* K, resistance reference temperature 20 degC */
#define TP_ATMOSPHERE 101325.0      /* Pa, standard atmosphere */
#define TP_GUARD_HOLD 600.0         /* s a healthy corner is followed after reaching the setpoint */
#define TP_GUARD_TIME_FACTOR 1.5    /* -, safety factor on healthy durations (docs/guard.md) */
#define TP_GUARD_RISE_FACTOR 0.67   /* -, safety factor on healthy rises (docs/guard.md) */

/* The reading at t = 0 as far as the description tells (the sensor's start plus its offset; a
 * thermistor's quantisation is left out): where a schedule's first ramp starts when its length
 * sets run.duration. The integrator lays the schedule out again from the exact reading. */
static double start_reading(const tp_description *c)
{
    size_t i;
    if (c->form == TP_FORM_PHYSICAL)
        return (tp_isset(c->run.initial) ? c->run.initial : c->room.temperature) +
               (tp_isset(c->sensor.offset) ? c->sensor.offset : 0.0);
    for (i = 0; i < c->network.n_nodes; i++)
        if (strcmp(c->network.nodes[i].id, c->control.sensor) == 0)
            return tp_isset(c->network.nodes[i].initial) ? c->network.nodes[i].initial
                                                         : c->network.nodes[i].fixed;
    return TP_UNSET;
}

static void apply_defaults(tp_description *c)
{
    size_t i;
    tp_schedule plan;
    /* Without run.duration a scheduled run lasts the schedule. */
    if (!tp_isset(c->run.duration) && c->control.n_schedule > 0 &&
        tp_schedule_plan(&c->control, start_reading(c), &plan) == 0 && plan.t_end > 0)
        c->run.duration = plan.t_end;
    set_default(&c->run.duration, TP_DEFAULT_DURATION);
    set_default(&c->run.step, TP_DEFAULT_STEP);
    /* A gridded plate's spatial error (tenths of a kelvin) dwarfs the time integration's: a
     * looser default halves the work and moves its answers by under 0.1 s and 1e-3 K
     * (docs/grid.md, "Tolerance"). */
    set_default(&c->run.tolerance, tp_isset(c->bed.grid[0]) ? TP_DEFAULT_RTOL_GRID
                                                            : TP_DEFAULT_RTOL);
    set_default(&c->run.max_steps, TP_DEFAULT_MAX_STEPS);
    set_default(&c->run.wall_time, TP_DEFAULT_WALL_TIME);
    set_default(&c->losses.convection_scale, 1.0);
    set_default(&c->losses.radiation_scale, 1.0);
    set_default(&c->control.period, TP_DEFAULT_PERIOD);
    set_default(&c->control.band, TP_DEFAULT_BAND);
    set_default(&c->control.kp, 0.0);
    set_default(&c->control.ki, 0.0);
    set_default(&c->control.kd, 0.0);
    set_default(&c->control.derivative_filter, 0.0);
    set_default(&c->control.duty_levels, 0.0);
    set_default(&c->room.airflow, 0.0);
    set_default(&c->room.pressure, TP_ATMOSPHERE);
    set_default(&c->heater.max_duty, 1.0);
    set_default(&c->heater.tempco, 0.0);
    set_default(&c->heater.reference, TP_REFERENCE_20C);
    set_default(&c->heater.supply_resistance, 0.0);
    set_default(&c->sensor.offset, 0.0);
    set_default(&c->bed.mounts.conductance, 0.0);
    set_default(&c->guard.hold, TP_GUARD_HOLD);
    set_default(&c->guard.time_factor, TP_GUARD_TIME_FACTOR);
    set_default(&c->guard.rise_factor, TP_GUARD_RISE_FACTOR);
    if (c->sensor.thermistor.present) {
        set_default(&c->sensor.thermistor.supply, 3.3);
        set_default(&c->sensor.thermistor.adc_reference, c->sensor.thermistor.supply);
        set_default(&c->sensor.thermistor.adc_bits, 12.0);
    }
    for (i = 0; i < c->network.n_sources; i++) {
        set_default(&c->network.sources[i].tempco, 0.0);
        set_default(&c->network.sources[i].reference, TP_REFERENCE_20C);
    }
    if (c->form == TP_FORM_PHYSICAL) {
        if (!c->control.source[0])
            strcpy(c->control.source, "heater");
        if (!c->control.sensor[0])
            strcpy(c->control.sensor, "sensor");
    }
}

static void check_form(reader *r, const tp_yamltree *doc, tp_description *c)
{
    static const char *const physical[] = {"room", "bed", "heater", "sensor", "enclosure",
                                           "materials"};
    const tp_yamltree_node *root = doc->root;
    size_t i;
    if (c->network.present) {
        c->form = TP_FORM_RAW;
        for (i = 0; i < N(physical); i++) {
            const tp_yamltree_node *n = tp_yamltree_get(root, physical[i]);
            if (n)
                tp_diag_error(r->d, tp_yamltree_loc(n), physical[i],
                              "a file uses either the raw network: form or the physical form",
                              "not allowed together with network:");
        }
        return;
    }
    if (!c->bed.present) {
        tp_diag_error(r->d, tp_yamltree_loc(root), NULL,
                      "describe the plate with bed:, heater:, room: (see docs/user-guide.md) "
                      "or a network: of nodes and links",
                      "the file describes neither a bed nor a network");
        return;
    }
    c->form = TP_FORM_PHYSICAL;
    if (!tp_yamltree_get(root, "room"))
        tp_diag_error(r->d, tp_yamltree_loc(root), "room", "add room: {temperature: 20 degC}",
                      "missing required key");
    if (!c->heater.present)
        tp_diag_error(r->d, tp_yamltree_loc(root), "heater",
                      "add heater: {layer: ..., power: 200 W}", "missing required key");
}

#define TP_ROOM_MIN 223.15 /* K, -50 degC: colder rooms are typos ("5 K" for 5 degC) */
#define TP_SETPOINT_MIN 200.0 /* K, -73 degC: colder setpoints are typos ("60 K" for 60 degC) */

/* A setpoint below TP_SETPOINT_MIN, refused before anything is assembled (the convection
 * correlations would otherwise be evaluated at it and warn first, issue 15 item 11). When the
 * value was written in kelvin, the hint offers the same number in degC. */
static void check_setpoint(reader *r, const tp_yamltree *doc, const tp_description *c)
{
    const tp_yamltree_node *n;
    char hint[160];
    const char *unit = NULL;
    if (!c->control.present || !tp_isset(c->control.setpoint) ||
        c->control.setpoint >= TP_SETPOINT_MIN)
        return;
    n = tp_yamltree_find(doc, "control.setpoint");
    if (n && n->text) {
        char *end;
        (void)strtod(n->text, &end);
        while (*end == ' ')
            end++;
        unit = end;
    }
    if (unit && strcmp(unit, "K") == 0)
        snprintf(hint, sizeof hint, "did you mean %.6g degC? A temperature in K is absolute "
                 "(0 degC is 273.15 K)", c->control.setpoint);
    else
        snprintf(hint, sizeof hint, "tepid models heating: a setpoint is above the room, "
                 "e.g. 60 degC");
    tp_diag_error(r->d, tp_yamltree_nearest(doc, "control.setpoint"), "control.setpoint", hint,
                  "%.6g K (%.2f degC) is implausibly low for a setpoint (limit %.0f K, %.2f "
                  "degC)",
                  c->control.setpoint, c->control.setpoint - TP_KELVIN_0C, TP_SETPOINT_MIN,
                  TP_SETPOINT_MIN - TP_KELVIN_0C);
}

/* A schedule's segments: one of to, hold and off each, ramp only with to, setpoints that are
 * plausible, and not together with control.setpoint (docs/control.md). */
static void check_schedule(reader *r, const tp_yamltree *doc, const tp_description *c)
{
    const tp_yamltree_node *n = tp_yamltree_find(doc, "control.schedule");
    const tp_control_spec *k = &c->control;
    size_t i;
    int any_to = 0, errors0 = r->d->errors;
    char path[96];
    if (!n)
        return;
    if (k->n_schedule == 0) {
        tp_diag_error(r->d, tp_yamltree_loc(n), "control.schedule",
                      "list segments such as - {to: 150 degC, ramp: 2 K/s} and - {hold: 10 min}",
                      "the schedule is empty");
        return;
    }
    if (tp_isset(k->setpoint))
        tp_diag_error(r->d, tp_yamltree_loc(n), "control.schedule",
                      "keep one: control.setpoint for a fixed setpoint, or control.schedule for a "
                      "programme",
                      "control.schedule and control.setpoint exclude each other");
    if (!tp_description_mode_holds(k->mode))
        tp_diag_error(r->d, tp_yamltree_loc(n), "control.schedule",
                      "set control.mode to on-off or pid",
                      "a schedule needs a controller that holds a setpoint; mode %s holds none",
                      tp_description_mode_name(k->mode));
    for (i = 0; i < k->n_schedule; i++) {
        const tp_schedule_seg *g = &k->schedule[i];
        int kinds = tp_isset(g->to) + tp_isset(g->hold) + tp_isset(g->off);
        tp_loc at = tp_yamltree_loc(n->items[i]);
        snprintf(path, sizeof path, "control.schedule.%zu", i);
        if (tp_isset(g->ramp) && !tp_isset(g->to))
            tp_diag_error(r->d, at, path, "write {to: TEMP, ramp: RATE}",
                          "ramp needs the temperature it ramps to (to:)");
        else if (kinds != 1)
            tp_diag_error(r->d, at, path,
                          "write one of {to: TEMP, ramp: RATE}, {to: TEMP}, {hold: TIME} or "
                          "{off: TIME} per item",
                          kinds ? "a segment is one of to, hold and off" : "the segment is empty");
        if (tp_isset(g->to)) {
            any_to = 1;
            if (g->to < TP_SETPOINT_MIN)
                tp_diag_error(r->d, at, path, "tepid models heating: e.g. to: 150 degC",
                              "%.2f degC is implausibly low for a setpoint (limit %.2f degC)",
                              g->to - TP_KELVIN_0C, TP_SETPOINT_MIN - TP_KELVIN_0C);
        }
    }
    if (!any_to && r->d->errors == errors0)
        tp_diag_error(r->d, tp_yamltree_loc(n), "control.schedule",
                      "add a segment such as - {to: 150 degC, ramp: 2 K/s}",
                      "the schedule never sets a temperature");
}

/* run.initial starts the plate and sensor nodes of the physical form; a raw network gives each
 * node its own initial. */
static void check_initial(reader *r, const tp_yamltree *doc, const tp_description *c)
{
    if (!tp_isset(c->run.initial))
        return;
    if (c->form == TP_FORM_RAW)
        tp_diag_error(r->d, tp_yamltree_nearest(doc, "run.initial"), "run.initial",
                      "give each node of the network its own initial: instead",
                      "run.initial applies to the physical form only");
    else if (c->run.initial < c->room.temperature)
        tp_diag_error(r->d, tp_yamltree_nearest(doc, "run.initial"), "run.initial",
                      "a warm start is at or above the room temperature",
                      "%.2f degC is below the room temperature %.2f degC",
                      c->run.initial - TP_KELVIN_0C, c->room.temperature - TP_KELVIN_0C);
}

/* Limits that involve two keys, checked with the defaults in place and before anything is
 * allocated for the run (docs/limits.md); and the lower plausibility bound of the room. */
static void check_run_size(reader *r, const tp_yamltree *doc, const tp_description *c)
{
    check_setpoint(r, doc, c);
    if (c->form == TP_FORM_PHYSICAL && c->room.temperature < TP_ROOM_MIN)
        tp_diag_error(r->d, tp_yamltree_nearest(doc, "room.temperature"), "room.temperature",
                      "a room is between about -40 and 120 degC",
                      "%.2f degC is implausibly low (limit -50 degC)",
                      c->room.temperature - TP_KELVIN_0C);
    double rows = c->run.duration / c->run.step + 1.0;
    if (!(rows <= TP_MAX_OUTPUT_ROWS))
        tp_diag_error(r->d, tp_yamltree_nearest(doc, "run.step"), "run.step",
                      "raise run.step (the output interval) or shorten run.duration",
                      "%.3g output rows (run.duration / run.step) exceed the limit of %.0f", rows,
                      TP_MAX_OUTPUT_ROWS);
    if (c->control.present && c->control.mode != TP_MODE_OFF &&
        !(c->run.duration / c->control.period <= TP_MAX_TICKS))
        tp_diag_error(r->d, tp_yamltree_nearest(doc, "control.period"), "control.period",
                      "raise control.period (real controllers sample every 0.1 s to a few "
                      "seconds) or shorten run.duration",
                      "%.3g controller samples (run.duration / control.period) exceed the "
                      "limit of %.0f",
                      c->run.duration / c->control.period, TP_MAX_TICKS);
}

/* Keys the chosen mode does not use: the PID keys outside pid, band outside on-off. They are
 * read and kept (a file switched between modes keeps its values) but do nothing, so say so
 * (issue 15 item 12). */
static void check_mode_keys(reader *r, const tp_yamltree *doc, const tp_description *c)
{
    static const char *const pid_keys[] = {"kp", "ki", "kd", "derivative_filter",
                                           "duty_levels"};
    size_t i;
    char path[64];
    if (!c->control.present)
        return;
    if (c->control.mode != TP_MODE_PID)
        for (i = 0; i < N(pid_keys); i++) {
            snprintf(path, sizeof path, "control.%s", pid_keys[i]);
            if (tp_yamltree_find(doc, path))
                tp_diag_warn(r->d, tp_yamltree_nearest(doc, path), path,
                             "it applies to mode pid only; remove it or set mode: pid",
                             "has no effect in mode %s", tp_description_mode_name(c->control.mode));
        }
    if (c->control.mode != TP_MODE_ONOFF && tp_yamltree_find(doc, "control.band"))
        tp_diag_warn(r->d, tp_yamltree_nearest(doc, "control.band"), "control.band",
                     "it applies to mode on-off only; remove it or set mode: on-off",
                     "has no effect in mode %s", tp_description_mode_name(c->control.mode));
}

tp_status tp_config_check_gains(const tp_yamltree *doc, const tp_description *desc, tp_diag *d)
{
    const tp_control_spec *c = &desc->control;
    if (!c->present || c->mode != TP_MODE_PID || c->kp > 0 || c->ki > 0)
        return TP_OK;
    tp_diag_error(d, tp_yamltree_nearest(doc, "control"), "control.kp",
                  "give kp (and usually ki), e.g. kp: 0.05 1/K, ki: 0.001 1/(K.s); "
                  "'tepid tune' suggests gains",
                  "mode pid needs gains");
    return TP_ERR_CONFIG;
}

tp_status tp_config_read(const tp_yamltree *doc, tp_description *desc, tp_diag *d)
{
    reader r = {d, 0};
    int errors0 = d->errors;
    memset(desc, 0, sizeof *desc);
    init_section(&top_sec, desc);
    if (!doc->root) {
        tp_diag_error(d, (tp_loc){doc->file, 0, 0}, NULL,
                      "start from one of the files in configs/", "the file is empty");
        return TP_ERR_CONFIG;
    }
    if (doc->root->kind != TP_YAMLTREE_MAP) {
        tp_diag_error(d, tp_yamltree_loc(doc->root), NULL, "the top level is a set of keys: values",
                      "expected a section at the top level, found %s",
                      tp_yamltree_kind_name(doc->root->kind));
        return TP_ERR_CONFIG;
    }
    read_section(&r, &top_sec, doc->root, desc, "");
    if (d->errors == errors0)
        check_form(&r, doc, desc);
    if (d->errors == errors0)
        check_schedule(&r, doc, desc);
    if (d->errors == errors0)
        check_initial(&r, doc, desc);
    if (d->errors != errors0) {
        tp_config_clear(desc);
        return r.nomem ? TP_ERR_NOMEM : TP_ERR_CONFIG;
    }
    apply_defaults(desc);
    check_run_size(&r, doc, desc);
    check_mode_keys(&r, doc, desc);
    if (d->errors != errors0) {
        tp_config_clear(desc);
        return TP_ERR_CONFIG;
    }
    return TP_OK;
}

tp_status tp_config_read_materials(const tp_yamltree_node *map, const char *path,
                                   tp_material_spec **out, size_t *n, tp_diag *d)
{
    reader r = {d, 0};
    int errors0 = d->errors;
    struct {
        tp_material_spec *m;
        size_t n;
    } holder = {NULL, 0};
    static const key k = {"materials", K_IDMAP, TP_DIM_NONE, 0, sizeof(tp_material_spec),
                          sizeof(void *), &material_sec, 0, TP_MAX_MATERIALS, NULL, NULL};
    read_list(&r, &k, map, &holder, path);
    if (d->errors != errors0) {
        free(holder.m);
        *out = NULL;
        *n = 0;
        return r.nomem ? TP_ERR_NOMEM : TP_ERR_CONFIG;
    }
    *out = holder.m;
    *n = holder.n;
    return TP_OK;
}

tp_status tp_config_load(const char *path, const char *const *sets, int n_sets, tp_yamltree **doc,
                         tp_description *desc, tp_diag *d)
{
    tp_status st;
    int i;
    memset(desc, 0, sizeof *desc);
    st = tp_yamltree_load_file(path, doc, d);
    if (st != TP_OK)
        return st;
    for (i = 0; i < n_sets; i++) {
        st = tp_yamltree_set(*doc, sets[i], d);
        if (st != TP_OK) {
            tp_yamltree_destroy(doc);
            return st == TP_ERR_USAGE ? TP_ERR_CONFIG : st;
        }
    }
    st = tp_config_read(*doc, desc, d);
    if (st != TP_OK)
        tp_yamltree_destroy(doc);
    return st;
}

/* ---- ownership ---------------------------------------------------------------------------- */

static void clear_section(const section *sec, void *base)
{
    size_t i, j;
    for (i = 0; i < sec->n; i++) {
        const key *k = &sec->keys[i];
        if (k->kind == K_MAP) {
            clear_section(k->sub, field(base, k->offset));
        } else if (k->kind == K_LIST || k->kind == K_IDMAP) {
            char *items = *(char **)field(base, k->offset);
            size_t count = *count_at(base, k->count_offset);
            for (j = 0; items && j < count; j++)
                clear_section(k->sub, items + j * k->size);
            free(items);
            *(void **)field(base, k->offset) = NULL;
            *count_at(base, k->count_offset) = 0;
        }
    }
}

void tp_config_clear(tp_description *desc)
{
    if (!desc)
        return;
    clear_section(&top_sec, desc);
    memset(desc, 0, sizeof *desc);
}

static int copy_section(const section *sec, void *dst, const void *src)
{
    size_t i, j;
    int rc = 0;
    for (i = 0; i < sec->n; i++) {
        const key *k = &sec->keys[i];
        if (k->kind == K_MAP) {
            rc |= copy_section(k->sub, field(dst, k->offset),
                               (const char *)src + k->offset);
        } else if (k->kind == K_LIST || k->kind == K_IDMAP) {
            const char *items = *(char *const *)(const void *)((const char *)src + k->offset);
            size_t count = *(const size_t *)(const void *)((const char *)src + k->count_offset);
            char *copy = NULL;
            *(void **)field(dst, k->offset) = NULL;
            *count_at(dst, k->count_offset) = 0;
            if (!items || count == 0)
                continue;
            copy = malloc(count * k->size);
            if (!copy) {
                /* Go on: every later list of dst still points into src until it is set. */
                rc = -1;
                continue;
            }
            memcpy(copy, items, count * k->size);
            *(void **)field(dst, k->offset) = copy;
            *count_at(dst, k->count_offset) = count;
            for (j = 0; j < count; j++)
                rc |= copy_section(k->sub, copy + j * k->size, items + j * k->size);
        }
    }
    return rc;
}

tp_status tp_config_copy(tp_description *dst, const tp_description *src)
{
    *dst = *src;
    if (copy_section(&top_sec, dst, src) != 0) {
        tp_config_clear(dst);
        return TP_ERR_NOMEM;
    }
    return TP_OK;
}

/* ---- numeric keys by dotted path ---------------------------------------------------------- */

/* Walk `path` to a number. On success *where points at the double and *k at its key. */
static int resolve_path(const section *sec, void *base, const char *path, double **where,
                        const key **kout)
{
    char buf[256];
    char *seg, *save = NULL;
    const key *k = NULL;
    if (strlen(path) >= sizeof buf)
        return -1;
    strcpy(buf, path);
    seg = strtok_r(buf, ".", &save);
    while (seg) {
        size_t j;
        k = NULL;
        for (j = 0; j < sec->n; j++)
            if (strcmp(sec->keys[j].name, seg) == 0)
                k = &sec->keys[j];
        if (!k)
            return -1;
        seg = strtok_r(NULL, ".", &save);
        switch (k->kind) {
        case K_QTY:
            if (seg)
                return -1;
            *where = dbl(base, k->offset);
            *kout = k;
            return 0;
        case K_QPAIR: {
            char *end;
            long idx;
            if (!seg)
                return -1;
            idx = strtol(seg, &end, 10);
            if (*end || idx < 0 || idx > 1 || strtok_r(NULL, ".", &save))
                return -1;
            *where = dbl(base, k->offset) + idx;
            *kout = k;
            return 0;
        }
        case K_MAP:
            base = field(base, k->offset);
            sec = k->sub;
            break;
        case K_LIST:
        case K_IDMAP: {
            char *items = *(char **)field(base, k->offset);
            size_t count = *count_at(base, k->count_offset), j2;
            char *end;
            long idx;
            if (!seg || !items)
                return -1;
            idx = strtol(seg, &end, 10);
            if (*end != '\0')
                idx = -1;
            /* Items are selected by id (their first field) or by 0-based index. */
            for (j2 = 0; j2 < count && idx < 0; j2++)
                if (strcmp(items + j2 * k->size, seg) == 0)
                    idx = (long)j2;
            if (idx < 0 || (size_t)idx >= count)
                return -1;
            base = items + (size_t)idx * k->size;
            sec = k->sub;
            seg = strtok_r(NULL, ".", &save);
            break;
        }
        default:
            return -1;
        }
    }
    return -1;
}

/* The hint for a path that names no number: a built-in material's property cannot be varied
 * in place (the table is shared and read-only), so say how to make it the config's own. */
static void key_hint(const tp_description *desc, const char *path, char *hint, size_t size)
{
    char id[TP_ID_MAX];
    const char *dot;
    const tp_material_spec *m;
    const tp_material_spec *table;
    size_t n, i;
    tp_diag quiet;
    snprintf(hint, size, "give the dotted path of a number in the config, e.g. heater.power, "
             "bed.layers.plate.contact, sensor.coupling or losses.convection_scale");
    if (strncmp(path, "materials.", 10) != 0)
        return;
    dot = strchr(path + 10, '.');
    if (!dot || (size_t)(dot - path - 10) >= sizeof id)
        return;
    memcpy(id, path + 10, (size_t)(dot - path - 10));
    id[dot - path - 10] = '\0';
    for (i = 0; i < desc->n_materials; i++)
        if (strcmp(desc->materials[i].id, id) == 0)
            return; /* the config's own material: the property is what is wrong */
    tp_diag_init(&quiet, NULL);
    if (tp_materials_builtin(&table, &n, &quiet) != TP_OK || !(m = tp_materials_find(desc, id)))
        return;
    snprintf(hint, size, "'%s' is a built-in material, which cannot be varied or fitted in "
             "place: copy its entry into the config's materials: under the same id (its values "
             "and source: 'tepid materials --sources', docs/materials.md); then --vary, --spread "
             "and --free accept its %s", m->id, dot + 1);
}

tp_status tp_config_key_dim(const tp_description *desc, const char *path, const char *opt,
                            tp_dim *dim, tp_diag *d)
{
    double *where;
    const key *k;
    if (resolve_path(&top_sec, (void *)(uintptr_t)desc, path, &where, &k) != 0) {
        char hint[512];
        key_hint(desc, path, hint, sizeof hint);
        tp_diag_error(d, opt ? (tp_loc){opt, 1, 1} : tp_diag_loc_none(), path, hint,
                      "not a numeric key of this config");
        return TP_ERR_CONFIG;
    }
    *dim = k->dim;
    return TP_OK;
}

tp_status tp_config_get(const tp_description *desc, const char *path, double *si)
{
    double *where;
    const key *k;
    if (resolve_path(&top_sec, (void *)(uintptr_t)desc, path, &where, &k) != 0)
        return TP_ERR_CONFIG;
    *si = *where;
    return TP_OK;
}

tp_status tp_config_set(tp_description *desc, const char *path, double si)
{
    double *where;
    const key *k;
    if (resolve_path(&top_sec, desc, path, &where, &k) != 0)
        return TP_ERR_CONFIG;
    *where = si;
    return TP_OK;
}

tp_status tp_config_check(const tp_description *desc, const char *path, double si, char *msg,
                          size_t msg_size)
{
    double *where;
    const key *k;
    if (resolve_path(&top_sec, (void *)(uintptr_t)desc, path, &where, &k) != 0) {
        snprintf(msg, msg_size, "%s is not a numeric key of this config", path);
        return TP_ERR_CONFIG;
    }
    if (!isfinite(si)) {
        snprintf(msg, msg_size, "%s = %g is not a finite number", path, si);
        return TP_ERR_CONFIG;
    }
    switch (bounds_broken(k, si)) {
    case F_POS:
        snprintf(msg, msg_size, "%s = %.6g %s must be positive", path, si,
                 tp_units_si_name(k->dim));
        return TP_ERR_CONFIG;
    case F_NONNEG:
        snprintf(msg, msg_size, "%s = %.6g %s must not be negative", path, si,
                 tp_units_si_name(k->dim));
        return TP_ERR_CONFIG;
    case F_FRAC:
        snprintf(msg, msg_size, "%s = %.6g is outside (0, 1]", path, si);
        return TP_ERR_CONFIG;
    case F_INT:
        snprintf(msg, msg_size, "%s = %.6g is not a whole number", path, si);
        return TP_ERR_CONFIG;
    case BOUND_HI:
        snprintf(msg, msg_size, "%s = %.6g %s is implausibly large (limit %g)", path, si,
                 tp_units_si_name(k->dim), k->hi);
        return TP_ERR_CONFIG;
    default:
        return TP_OK;
    }
}

/* ---- the key paths, for completion and the manual pages ----------------------------------- */

/* path.name into out; nonzero when it does not fit (the key is then left out). */
static int extend(char *out, size_t size, const char *path, const char *name)
{
    int n = path[0] ? snprintf(out, size, "%s.%s", path, name) : snprintf(out, size, "%s", name);
    return n < 0 || (size_t)n >= size;
}

/* The keys of `sec` (from its key `first` on) under `path`; `base` is the section's struct, or
 * NULL when only the schema is listed. */
static void each_key(const section *sec, size_t first, void *base, const char *path,
                     int placeholders, tp_config_key_fn fn, void *ctx)
{
    size_t i, j;
    for (i = first; i < sec->n; i++) {
        const key *k = &sec->keys[i];
        char p[256];
        tp_config_key_info info;
        if (extend(p, sizeof p, path, k->name))
            continue;
        info.path = p;
        info.dim = k->dim;
        info.required = (k->flags & F_REQ) != 0;
        switch (k->kind) {
        case K_QTY:
            info.kind = TP_KEY_NUMBER;
            fn(&info, ctx);
            break;
        case K_QPAIR:
            info.kind = TP_KEY_PAIR;
            fn(&info, ctx);
            break;
        case K_ID:
        case K_TEXT:
        case K_IDPAIR:
        case K_ENUM:
            info.dim = TP_DIM_NONE;
            info.kind = TP_KEY_TEXT;
            fn(&info, ctx);
            break;
        case K_MAP:
            each_key(k->sub, 0, base ? field(base, k->offset) : NULL, p, placeholders, fn, ctx);
            break;
        case K_LIST:
        case K_IDMAP: {
            /* Items are named by their id where they have one (an id map's key, or a list
             * whose first key is an id), as resolve_path and --set select them; the id key
             * itself is then left out (the path already names it). */
            int by_id = k->kind == K_IDMAP || k->sub->keys[0].kind == K_ID;
            size_t skip = k->kind == K_LIST && by_id ? 1 : 0;
            size_t id_at = k->kind == K_IDMAP ? 0 : k->sub->keys[0].offset;
            char *items = base ? *(char **)field(base, k->offset) : NULL;
            size_t count = items ? *count_at(base, k->count_offset) : 0;
            char q[256];
            if (!base) {
                if (placeholders && !extend(q, sizeof q, p, by_id ? "ID" : "N"))
                    each_key(k->sub, skip, NULL, q, placeholders, fn, ctx);
                break;
            }
            for (j = 0; j < count; j++) {
                char *it = items + j * k->size;
                char idx[32];
                snprintf(idx, sizeof idx, "%zu", j);
                if (!extend(q, sizeof q, p, by_id && it[id_at] ? it + id_at : idx))
                    each_key(k->sub, skip, it, q, placeholders, fn, ctx);
            }
            break;
        }
        }
    }
}

void tp_config_each_key(const tp_description *desc, int placeholders, tp_config_key_fn fn,
                        void *ctx)
{
    each_key(&top_sec, 0, (void *)(uintptr_t)desc, "", placeholders, fn, ctx);
}
