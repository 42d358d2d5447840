/* The power budget: heater currents at cold start and at hold, other loads against the supply
 * rating, copper wiring (IEC 60028 resistivity), switch conduction loss, a fuse suggestion, and
 * PASS/WARN verdicts. */
#ifndef TP_BUDGET_H
#define TP_BUDGET_H

#include "desc.h"
#include "diag.h"
#include "network.h"
#include "status.h"

#define TP_COPPER_RHO20 (1.0 / 58.0e6) /* ohm.m, annealed copper at 20 degC (IEC 60028, IACS) */
#define TP_COPPER_ALPHA20 0.00393      /* 1/K, its temperature coefficient at 20 degC (IEC 60028;
                                          from memory) */
#define TP_BUDGET_CHECKS_MAX 12

/* Cross-section of a solid conductor of American Wire Gauge `n` (ASTM B258: d = 0.127 mm x
 * 92^((36 - n)/39)), m2. */
double tp_awg_area(double n);

/* Resistance of `length` m of copper of cross-section `area` m2 at `t` kelvin, ohm. */
double tp_copper_resistance(double area, double length, double t);

/* The smallest standard fuse rating at or above 1.25 times `amps` (common practice: a fuse
 * carries its continuous load at no more than 80 % of its rating), A; 0 above the table. */
double tp_fuse_suggest(double amps);

typedef enum tp_verdict { TP_PASS, TP_WARN } tp_verdict;

typedef struct tp_check {
    char name[64];
    tp_verdict verdict;
    double value, limit; /* in the unit named by `unit` */
    char unit[8];
    char note[200];
} tp_check;

typedef struct tp_budget {
    int heater_on_supply;   /* the bed heater draws from `supply:` */
    double v;               /* V of the supply (or the heater's own) */
    double r_series;        /* ohm: supply output + wiring loop + switch */
    double r_wire;          /* ohm: the wiring loop at 20 degC */
    double r_cold;          /* ohm: the heater at the room temperature */
    double i_cold, p_cold;  /* A, W (into the heater) at cold start, full on */
    double t_hold;          /* K of the heater layer at the running point */
    double duty_hold;       /* the duty that delivers the holding power through r_series */
    double hot_hold;        /* K, working surface at the running point (NaN: raw form) */
    double node_hold;       /* K, hottest node at the running point */
    double i_hold_on, i_hold_avg, p_hold; /* A on, A average, W average at the running point */
    double i_loads_cold, i_loads_hold;    /* A of the other loads */
    double i_total_cold, i_total_hold_peak, i_total_hold_avg;
    double i_rating;        /* A the supply is rated for (NaN when no supply:) */
    double drop_cold, wire_loss_cold, wire_loss_hold; /* V, W, W */
    double switch_loss_cold, switch_loss_hold;        /* W */
    double fuse;            /* A suggested */
    double input_power_hold; /* W drawn from the mains by the supply at the running point */
    int holding;            /* the running point is a holding point (else full power) */
    tp_check checks[TP_BUDGET_CHECKS_MAX];
    int n_checks, n_warn;
} tp_budget;

/* Work out the budget for a physical description and its network. TP_ERR_CONFIG when the file
 * has no heater to budget; steady-state failures are reported and returned. */
tp_status tp_budget_compute(const tp_desc *desc, tp_network *net, tp_budget *b, tp_diag *d);

#endif
