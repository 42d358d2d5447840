/* The power budget: heater currents at cold start and at hold, other loads against the supply
 * rating, copper wiring (IEC 60028 resistivity), switch conduction loss, a fuse suggestion, and
 * PASS/WARN verdicts. */
#ifndef TP_BUDGET_H
#define TP_BUDGET_H

#include "caution.h"
#include "circuit.h"
#include "description.h"
#include "diag.h"
#include "network.h"
#include "status.h"

#define TP_BUDGET_CHECKS_MAX 12

/* The smallest standard fuse rating at or above 1.25 times `amps` (common practice: a fuse
 * carries its continuous load at no more than 80 % of its rating), A; 0 above the table. */
double tp_budget_fuse_suggest(double amps);

typedef enum tp_verdict { TP_PASS, TP_WARN } tp_verdict;

typedef struct tp_check {
    char name[64];
    tp_verdict verdict;
    double value, limit; /* in the unit named by `unit` */
    char unit[8];
    char note[200];
} tp_check;

/* Every electrical figure comes from the network's heater source (tp_network_heater), whose
 * series path assembly set from the same circuit (circuit.h): the figures `warmup` and
 * `steady` report for the same file are the same numbers. */
typedef struct tp_budget {
    int heater_on_supply;   /* the bed heater draws from `supply:` */
    double v;               /* V of the supply (or the heater's own) */
    tp_circuit circuit;     /* ohm: the heater's series path and its parts */
    double r_cold;          /* ohm: the element at the cold start (NaN: constant power) */
    double i_cold, p_cold;  /* A, W (into the heater) at cold start, full on */
    double wire_cold;       /* W lost in the whole series path at cold start */
    double t_hold;          /* K: the element at the running point (mean over its nodes) */
    double duty_hold;       /* the duty at the running point (the holding point's) */
    double hot_hold;        /* K, working surface at the running point (NaN: raw form) */
    double node_hold;       /* K, hottest node at the running point */
    double i_hold_on, i_hold_avg, p_hold; /* A on, A average, W average at the running point */
    double i_loads_cold, i_loads_hold;    /* A of the other loads */
    double i_total_cold, i_total_hold_peak, i_total_hold_avg;
    double i_rating;        /* A the supply is rated for (NaN when no supply:) */
    double drop_cold, wire_loss_cold, wire_loss_hold; /* V, W, W: the wiring loop only */
    double switch_loss_cold, switch_loss_hold;        /* W */
    double fuse;            /* A suggested */
    double input_power_hold; /* W drawn from the mains by the supply at the running point */
    int holding;            /* the running point is a holding point (else full power) */
    int out_of_reach;       /* a setpoint the heater cannot hold: the running point is full
                               power, and a check says WARN */
    double reading_full;    /* K, the reading at the running point (NaN without a controller) */
    tp_check checks[TP_BUDGET_CHECKS_MAX];
    int n_checks, n_warn;
} tp_budget;

/* Work out the budget for a physical description and its network. TP_ERR_CONFIG when the file
 * has no heater to budget; steady-state failures are reported and returned. */
tp_status tp_budget_compute(const tp_description *desc, tp_network *net, tp_budget *b, tp_diag *d);

/* The safety cautions of a budget (caution.h): what the plate reaches at its holding point and
 * the cold-start current; returns how many were written to out. */
int tp_budget_cautions(const tp_description *desc, const tp_network *net, const tp_budget *b,
                       tp_caution out[TP_CAUTIONS_MAX]);

#endif
