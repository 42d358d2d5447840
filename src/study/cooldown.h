/* Cool-down (tepid cool, docs/cool.md): from the steady holding state (or a uniform start) with
 * the heater off, when the plate becomes safe to touch by the contact-burn thresholds of
 * EN ISO 13732-1, and when it passes other levels. Records only. */
#ifndef TP_COOLDOWN_H
#define TP_COOLDOWN_H

#include "caution.h"
#include "description.h"
#include "diag.h"
#include "hardlimits.h"
#include "history.h"
#include "integrate.h"
#include "network.h"
#include "status.h"

#define TP_COOLDOWN_MAX_LEVELS 24  /* levels reported in one run */
#define TP_COOLDOWN_ROOM_MARGIN 5.0 /* K above the room: "back to room temperature" */

/* The material classes of the burn thresholds. */
typedef enum tp_cooldown_class {
    TP_COOL_METAL,   /* uncoated metal */
    TP_COOL_GLASS,   /* glass, ceramics, stone */
    TP_COOL_PLASTIC  /* plastics */
} tp_cooldown_class;

typedef enum tp_cooldown_level_kind {
    TP_COOL_BURN,    /* a contact-burn threshold (contact time in `contact`) */
    TP_COOL_TO,      /* a level asked for (--to) */
    TP_COOL_ROOM,    /* the room + TP_COOLDOWN_ROOM_MARGIN */
    TP_COOL_AIR      /* the chamber air below the room + TP_COOLDOWN_ROOM_MARGIN */
} tp_cooldown_level_kind;

typedef struct tp_cooldown_level {
    tp_cooldown_level_kind kind;
    double level;   /* K */
    double contact; /* s of contact (burn thresholds), NaN otherwise */
    double time;    /* s after switch-off when the touch surface (the air for TP_COOL_AIR)
                       falls below the level; 0 when it starts below; NaN: not within the
                       horizon */
} tp_cooldown_level;

typedef struct tp_cooldown {
    tp_history history;
    tp_integrate_stats stats;
    double start;            /* K, the touch surface at switch-off */
    int from_hold;           /* 1: started from the holding point, 0: uniform start */
    tp_cooldown_class cls;   /* the top layer's class (raw form: metal) */
    const char *top_material;/* the top layer's material id, NULL in the raw form */
    int air_node;            /* the enclosure's air node, -1 without one */
    double *touch;           /* per history row: the touch surface, K (the hottest cell of a
                                gridded plate, the surface estimate of a lumped one, the
                                hottest node of a raw network) */
    int n_levels;
    tp_cooldown_level levels[TP_COOLDOWN_MAX_LEVELS];
} tp_cooldown;

/* The burn threshold (K) of EN ISO 13732-1 for a material class and a contact of 1 s, 10 s or
 * 60 s (docs/cool.md; from memory, see there); NaN for other contact times. */
double tp_cooldown_burn_threshold(tp_cooldown_class cls, double contact);

/* The class of a material by its conductivity (docs/cool.md). */
tp_cooldown_class tp_cooldown_class_of(double conductivity);

/* The class's name as reports write it ("metal", "glass/ceramic", "plastic"). */
const char *tp_cooldown_class_name(tp_cooldown_class cls);

/* Cool `net` (only read) from the holding point at its setpoint, or from `from` (K, uniform
 * over every node with capacity but the enclosure's air and walls) when it is set; report the
 * burn thresholds for the top layer's class, the `n_to` levels `to` and the room + 5 K (and
 * the chamber air). Integration settings from desc->run (its duration is not used: the run
 * stops when everything is below every level, or after TP_COOLDOWN_HORIZON). Call
 * tp_cooldown_clear in every case. */
tp_status tp_cooldown_run(const tp_description *desc, const tp_network *net, double from,
                          const double *to, int n_to, tp_cooldown *out, tp_diag *d);

/* The safety cautions of a cool-down (caution.h), from the touch surface at switch-off.
 * Returns how many were written to out. */
int tp_cooldown_cautions(const tp_description *desc, const tp_network *net, const tp_cooldown *c,
                         tp_caution out[TP_CAUTIONS_MAX]);

void tp_cooldown_clear(tp_cooldown *c);

#endif
