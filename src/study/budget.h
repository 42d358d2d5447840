/* The power budget: heater currents at cold start and at hold, other loads against the supply
 * rating, copper wiring (IEC 60028 resistivity) against its ampacity (ampacity.h), switch
 * conduction loss, the heater's power density, a wire and a fuse suggestion, and PASS, WARN and
 * FAIL verdicts. */
#ifndef TP_BUDGET_H
#define TP_BUDGET_H

#include "ampacity.h"
#include "caution.h"
#include "circuit.h"
#include "description.h"
#include "diag.h"
#include "network.h"
#include "status.h"

#define TP_BUDGET_CHECKS_MAX 16

/* PASS: within the limit. WARN: a margin or a rule of common practice is not met, or a figure
 * cannot be checked. FAIL: a rating is exceeded (a wire over its ampacity, the supply over its
 * rating, a fuse larger than the wire's ampacity, a heater over its type's power density). */
typedef enum tp_verdict { TP_PASS, TP_WARN, TP_FAIL } tp_verdict;

/* "PASS", "WARN" or "FAIL". */
const char *tp_budget_verdict_name(tp_verdict v);

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
    double i_rating; /* A the supply is rated for (NaN when no supply:) */
    double drop_cold, wire_loss_cold, wire_loss_hold; /* V, W, W: the wiring loop only */
    double switch_loss_cold, switch_loss_hold;        /* W */
    double fuse;         /* A: the fitted wiring.fuse, else the suggestion (tp_ampacity_fuse_within;
                            0: no standard fuse fits between the current and the ampacity) */
    int fuse_fitted;     /* the fuse is wiring.fuse, not a suggestion */
    int fuse_below_rule; /* the suggestion is under 1.25 x the current (tp_ampacity_fuse_within) */
    tp_ampacity_conditions wire_cond; /* the ampacity table and its conditions */
    tp_ampacity ampacity;             /* the configured wire's (NaN amps without wiring:) */
    double max_drop;         /* -, the drop limit (wiring.max_drop or TP_AMPACITY_DROP_DEFAULT) */
    tp_ampacity_choice wire; /* the smallest wire for i_cold (the drop unchecked without wiring:) */
    double density, density_limit; /* W/m2: cold-start power over the heater's area, and its
                                      type's limit (NaN: unknown, raw form) */
    const char *heater_type;       /* the type the limit is for (NULL: no limit known) */
    double input_power_hold;       /* W drawn from the mains by the supply at the running point */
    int holding;            /* the running point is a holding point (else full power) */
    int out_of_reach;       /* a setpoint the heater cannot hold: the running point is full
                               power, and a check says WARN */
    double reading_full;    /* K, the reading at the running point (NaN without a controller) */
    tp_check checks[TP_BUDGET_CHECKS_MAX];
    int n_checks, n_warn, n_fail;
} tp_budget;

/* Work out the budget for a physical description and its network. TP_ERR_CONFIG when the file
 * has no heater to budget; steady-state failures are reported and returned. */
tp_status tp_budget_compute(const tp_description *desc, const tp_network *net, tp_budget *b,
                            tp_diag *d);

/* The safety cautions of a budget (caution.h): what the plate reaches at its holding point and
 * the cold-start current; returns how many were written to out. */
int tp_budget_cautions(const tp_description *desc, const tp_network *net, const tp_budget *b,
                       tp_caution out[TP_CAUTIONS_MAX]);

#endif
