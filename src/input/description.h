/* The description: what a config file says, in SI units, before it becomes a network.
 * Two forms share it: the raw `network:` form and the physical plate form (docs/user-guide.md).
 * Unset numbers hold TP_UNSET (NaN; input NaN is rejected, so the sentinel is unambiguous). */
#ifndef TP_DESCRIPTION_H
#define TP_DESCRIPTION_H

#include <math.h>
#include <stddef.h>

#define TP_ID_MAX 48    /* longest id (node, layer, source, material), bytes incl. NUL */
#define TP_TEXT_MAX 160 /* longest free text (title, source note), bytes incl. NUL */
#define TP_UNSET ((double)NAN)
#define tp_isset(x) (!isnan(x))

typedef enum tp_form { TP_FORM_NONE, TP_FORM_RAW, TP_FORM_PHYSICAL } tp_form;

typedef enum tp_mode { TP_MODE_OFF, TP_MODE_FULL, TP_MODE_ONOFF, TP_MODE_PID } tp_mode;

/* ---- raw network form ---- */
typedef struct tp_raw_node {
    char id[TP_ID_MAX];
    double capacity; /* J/K */
    double initial;  /* K */
    double fixed;    /* K */
} tp_raw_node;

typedef struct tp_raw_convection {
    int present;
    double area;        /* m2 */
    double coefficient; /* W/(m2.K) */
} tp_raw_convection;

typedef struct tp_raw_radiation {
    int present;
    double area;       /* m2 */
    double emissivity; /* - */
} tp_raw_radiation;

typedef struct tp_raw_link {
    char between[2][TP_ID_MAX];
    int has_between;
    double conductance; /* W/K */
    tp_raw_convection convection;
    tp_raw_radiation radiation;
} tp_raw_link;

typedef struct tp_raw_source {
    char id[TP_ID_MAX];
    char node[TP_ID_MAX];
    double power;      /* W */
    double supply;     /* V */
    double resistance; /* ohm, at `reference` */
    double tempco;     /* 1/K */
    double reference;  /* K */
} tp_raw_source;

typedef struct tp_raw {
    int present;
    tp_raw_node *nodes;
    size_t n_nodes;
    tp_raw_link *links;
    size_t n_links;
    tp_raw_source *sources;
    size_t n_sources;
} tp_raw;

/* ---- physical form ---- */
typedef struct tp_material_spec {
    char id[TP_ID_MAX];
    char name[TP_TEXT_MAX];
    double density;              /* kg/m3 */
    double specific_heat;        /* J/(kg.K) */
    double conductivity;         /* W/(m.K), in-plane when conductivity_through is set */
    double conductivity_through; /* W/(m.K) */
    double emissivity;           /* - */
    double max_temperature;      /* K */
    char source[1024];
    char note[1024];
} tp_material_spec;

typedef struct tp_room {
    double temperature; /* K */
    double airflow;     /* m/s across the top face */
    double pressure;    /* Pa */
} tp_room;

typedef struct tp_layer {
    char id[TP_ID_MAX];
    char material[TP_ID_MAX];
    double thickness; /* m */
    double size[2];   /* m; unset: the bed size */
    double contact;   /* W/(m2.K) to the layer below; unset: bonded */
} tp_layer;

typedef struct tp_face_spec {
    double emissivity; /* - ; unset: the material's */
} tp_face_spec;

typedef struct tp_mounts {
    double conductance; /* W/K to the room (or the enclosure walls) */
} tp_mounts;

typedef struct tp_bed {
    int present;
    double size[2]; /* m */
    double grid[2]; /* -, cells along size[0] and size[1] (whole numbers); unset: lumped */
    tp_layer *layers;
    size_t n_layers;
    tp_face_spec top, bottom;
    tp_mounts mounts;
} tp_bed;

/* How the heater's power is spread over its area (gridded plates only): a denser outer band. */
typedef struct tp_heater_pattern {
    int present;
    double border;       /* m, width of the outer band of the heater's area */
    double border_share; /* -, fraction of the heater's power released in that band */
} tp_heater_pattern;

typedef struct tp_heater {
    int present;
    char layer[TP_ID_MAX];
    double power;             /* W */
    double supply;            /* V */
    double resistance;        /* ohm at reference */
    double tempco;            /* 1/K */
    double reference;         /* K */
    double max_duty;          /* - */
    double supply_resistance; /* ohm, source and wiring in series */
    double rated_power;       /* W as sold, at rated_voltage (with it, instead of resistance) */
    double rated_voltage;     /* V as sold */
    tp_heater_pattern pattern;
} tp_heater;

typedef struct tp_thermistor {
    int present;
    double r25;           /* ohm at 25 degC */
    double beta;          /* K (Beta equation constant) */
    double series;        /* ohm, the divider's fixed resistor */
    double adc_bits;      /* - */
    double supply;        /* V across the divider */
    double adc_reference; /* V, full scale of the ADC */
} tp_thermistor;

typedef struct tp_sensor_spec {
    int present;
    char layer[TP_ID_MAX];
    double coupling;      /* W/K to the host layer */
    double capacity;      /* J/K */
    double time_constant; /* s, alternative to capacity */
    double offset;        /* K, added to the reading */
    double position[2];   /* m from the bed's lower-left corner (grids) */
    tp_thermistor thermistor;
} tp_sensor_spec;

typedef struct tp_walls {
    int present;
    double area;       /* m2 */
    double u_value;    /* W/(m2.K) to the room */
    double capacity;   /* J/K */
    double emissivity; /* - */
} tp_walls;

typedef struct tp_enclosure {
    int present;
    double volume; /* m3 */
    double height; /* m, inner height of the walls; unset: cube root of the volume */
    tp_walls walls;
} tp_enclosure;

/* One segment of a setpoint schedule (control.schedule, docs/control.md): exactly one of `to`,
 * `hold` and `off` is set; `ramp` only with `to` (unset: a step). */
typedef struct tp_schedule_seg {
    double to;   /* K, the setpoint the segment moves to */
    double ramp; /* K/s, the rate it moves at (unset: a step) */
    double hold; /* s the setpoint stays */
    double off;  /* s the heater is off */
} tp_schedule_seg;

typedef struct tp_control_spec {
    int present;
    char source[TP_ID_MAX];
    char sensor[TP_ID_MAX];
    tp_mode mode;
    double setpoint;          /* K */
    double band;              /* K, on-off hysteresis */
    double period;            /* s */
    double kp;                /* 1/K */
    double ki;                /* 1/(K.s) */
    double kd;                /* s/K */
    double derivative_filter; /* s, first-order filter on the PID derivative term (0: none) */
    double duty_levels;       /* -, PID output rounded to multiples of 1/duty_levels (0: exact) */
    tp_schedule_seg *schedule; /* the setpoint schedule, in order (NULL: a fixed setpoint) */
    size_t n_schedule;
} tp_control_spec;

typedef struct tp_run {
    double duration;  /* s */
    double step;      /* s, output interval */
    double tolerance; /* -, CVODE relative tolerance */
    double max_steps; /* -, integration step limit */
    double wall_time; /* s, wall-clock limit */
    double initial;   /* K, physical form: every plate and sensor node starts here (unset: the
                         room temperature) */
} tp_run;

typedef struct tp_losses {
    double convection_scale; /* -, multiplies every convection coefficient */
    double radiation_scale;  /* -, multiplies every radiation exchange */
} tp_losses;

/* The supply, other loads and wiring, for the power budget. */
typedef struct tp_supply_spec {
    int present;
    double voltage;           /* V, nominal output */
    double power;             /* W, rated output (or current) */
    double current;           /* A, rated output */
    double efficiency;        /* -, output / input */
    double output_resistance; /* ohm */
} tp_supply_spec;

typedef struct tp_load {
    char id[TP_ID_MAX];
    double power;   /* W (or current) */
    double current; /* A */
} tp_load;

/* Which ampacity table rates the heater's wires (ampacity.h). */
typedef enum tp_installation {
    TP_INSTALL_CABLE,  /* in a cable or raceway, at most three current-carrying conductors */
    TP_INSTALL_CHASSIS /* chassis wiring: a single conductor in free air */
} tp_installation;

typedef struct tp_wiring {
    int present;
    double cross_section;     /* m2 of copper per conductor (or awg) */
    double awg;               /* American Wire Gauge number */
    double length;            /* m, one way from the supply to the heater */
    double switch_resistance; /* ohm, on-resistance of the switching element */
    tp_installation installation; /* the ampacity table that applies */
    double insulation_rating; /* K, the insulation's temperature rating */
    double ambient;           /* K around the wires; unset: the room */
    double max_drop;          /* -, voltage drop limit as a share of the heater's supply */
    double fuse;              /* A, the fuse fitted in the heater circuit; unset: suggested */
} tp_wiring;
/* ---- protection design (`guard:`, docs/guard.md) ---- */
typedef struct tp_guard_step {
    int present;
    double after;   /* s after the reading first reaches the setpoint */
    double airflow; /* m/s: the gust's airflow across the top face */
} tp_guard_step;

typedef struct tp_guard_sheet {
    int present;
    double after;    /* s after the reading first reaches the setpoint */
    double capacity; /* J/K of the cold sheet, at room temperature, added to the top layer */
} tp_guard_sheet;

/* The thresholds of the three checks; unset members are recommended. */
typedef struct tp_guard_settings {
    int present;
    double rise_window; /* s */
    double rise_min;    /* K, interval */
    double approach;    /* K, interval below the setpoint where the rise check ends */
    double hold_band;   /* K, interval */
    double hold_grace;  /* s */
    double ceiling;     /* K, absolute */
} tp_guard_settings;

typedef struct tp_guard_spec {
    int present;
    double supply[2];     /* V, range of the supply voltage; unset: none */
    double resistance;    /* -, heater resistance tolerance (R0 times 1 -/+ this) */
    double room[2];       /* K, range of the room temperature */
    double airflow[2];    /* m/s, range of the airflow across the top face */
    tp_guard_step gust;   /* a step in airflow during hold */
    tp_guard_sheet sheet; /* a cold sheet placed on the plate during hold */
    double hold;          /* s each healthy corner is followed after reaching the setpoint */
    double horizon;       /* s each fault is followed; unset: run.duration */
    double detached_loss; /* W/K a detached sensor keeps to the air; unset: coupling / 10 */
    double time_factor;   /* -, safety factor on healthy durations (>= 1) */
    double rise_factor;   /* -, safety factor on healthy rises and margins (<= 1) */
    tp_guard_settings settings;
} tp_guard_spec;

typedef struct tp_description {
    tp_form form;
    char title[TP_TEXT_MAX];
    tp_raw network;
    tp_material_spec *materials;
    size_t n_materials;
    tp_room room;
    tp_bed bed;
    tp_heater heater;
    tp_sensor_spec sensor;
    tp_enclosure enclosure;
    tp_control_spec control;
    tp_run run;
    tp_losses losses;
    tp_supply_spec supply;
    tp_load *loads;
    size_t n_loads;
    tp_wiring wiring;
    tp_guard_spec guard;
} tp_description;

/* The modes as written in configs, by tp_mode value ("off", "full", "on-off", "pid"). */
extern const char *const tp_description_mode_names[TP_MODE_PID + 1];

/* Name of a control mode as written in configs ("on-off"); "?" when out of range. */
const char *tp_description_mode_name(tp_mode mode);

/* Nonzero for the modes that hold a setpoint (on-off and pid); off and full hold none. The one
 * place that says so: tp_description_holds and tp_network_holds ask it. */
int tp_description_mode_holds(tp_mode mode);

/* Nonzero when the description's controller holds a setpoint: present, a mode that holds one
 * (tp_description_mode_holds) and a setpoint or a schedule given. */
int tp_description_holds(const tp_description *desc);

/* The controller's nominal setpoint, K: control.setpoint, or with a schedule the highest
 * setpoint it moves to (what steady states, budgets and protection are judged at); NaN when
 * neither is given. */
double tp_description_setpoint(const tp_description *desc);

/* The wiring installations as written in configs, by tp_installation value ("cable",
 * "chassis"). */
extern const char *const tp_description_installation_names[TP_INSTALL_CHASSIS + 1];

#endif
