/* Sizing a heater to a target: the smallest heater power (at the heater's reference temperature,
 * on its supply) for which the reading, or the working surface, reaches a temperature within a
 * time from the cold start in every healthy corner (guard's ranges), with the steady power
 * margin kept; found by bisection on the power, each warm-up run full on. Records only: the
 * words are in the output layer and the verb. Method: docs/sizing.md. */
#ifndef TP_SIZE_H
#define TP_SIZE_H

#include "budget.h"
#include "caution.h"
#include "description.h"
#include "diag.h"
#include "guard.h"
#include "network.h"
#include "status.h"
#include "yamltree.h"

#define TP_SIZE_MARGIN_DEFAULT 1.3 /* -, least margin (available / holding power): below it
                                      the controller has little authority (docs/sizing.md;
                                      common practice, no source) */
#define TP_SIZE_TOLERANCE 1.0e-3   /* -, the bisection stops when the bracket's ends are this
                                      close in power (0.1 %) */
#define TP_SIZE_RATED_STEP 10.0    /* W: the rating to look for is the answer rounded up to
                                      this step (heaters are sold in steps of 10 W or coarser:
                                      common practice, no source) */
#define TP_SIZE_CURVE_POINTS 25    /* points of each curve of the plot */

/* What a corner's power is limited by. */
typedef enum tp_size_limit { TP_SIZE_BY_TIME, TP_SIZE_BY_MARGIN } tp_size_limit;

/* The question. */
typedef struct tp_size_request {
    double target; /* K the reading (or the surface) must reach */
    double within; /* s from the cold start */
    double margin; /* -, least steady power margin in every corner */
    int surface;   /* the target applies to the working-surface estimate */
    double supply; /* V: the nominal supply of the answer; NaN: the configured one */
    int curves;    /* also compute the curves of time against power (the plot) */
} tp_size_request;

/* One healthy corner and what it asks for. Scales are relative to the heater the config
 * describes, moved onto the requested supply at the same power (tp_size_result.p_start). */
typedef struct tp_size_corner {
    char name[160];
    int nominal;
    double supply;     /* V (NaN: a constant-power heater) */
    double resistance; /* ohm at the reference temperature, at the starting power (NaN idem) */
    double room;       /* K */
    double airflow;    /* m/s (NaN: not varied, raw form) */
    double hold_power; /* W the target takes to hold in this corner */
    double k_margin;   /* least scale that keeps the margin */
    double k_time;     /* least scale that reaches the target in time (an upper bound when the
                          corner never limited the answer: k_time_exact 0) */
    int k_time_exact;
    double time;       /* s to the target at the answer; NaN: not within the simulated time */
    double margin_at;  /* -, the margin at the answer */
} tp_size_corner;

typedef struct tp_size_result {
    int electric;        /* the heater has a supply and a resistance (else constant power) */
    double supply;       /* V, nominal (NaN: constant power) */
    double p_start;      /* W, the configured heater's power: supply^2 / r0 on this supply */
    double r_start;      /* ohm at reference for p_start (NaN: constant power) */
    int feasible;        /* a power up to p_max meets the target in every corner */
    double p_max;        /* W, the largest power considered */
    const char *p_max_why; /* what sets p_max (a phrase) */
    double best_time;    /* s, the slowest corner's time at p_max (NaN: not reached) */
    double power;        /* W, the answer (at p_max when infeasible) */
    double resistance;   /* ohm at the reference temperature (NaN: constant power) */
    double rated_power;  /* W, power rounded up to TP_SIZE_RATED_STEP */
    int limiting;        /* index of the corner that sets the answer */
    tp_size_limit limited_by;
    double time_nominal, time_worst; /* s at the answer (NaN: not reached) */
    int worst;           /* index of the slowest corner at the answer */
    double margin_worst; /* -, the smallest margin over the corners at the answer */
    tp_guard_ranges ranges;
    int n_corners;
    tp_size_corner corners[TP_GUARD_CORNERS_MAX];
    long runs;           /* warm-ups simulated */
    int has_budget;      /* the budget of the answer (budget.h) was computed */
    tp_budget budget;    /* the budget of the heater of the answer, nominal corner */
    double density;      /* W/m2: the answer's power over the heater's area (NaN: unknown) */
    double density_limit;/* W/m2 of the heater's type (NaN: none known) */
    const char *heater_type;
    int n_cautions;
    tp_caution cautions[TP_CAUTIONS_MAX];
    int n_curve;         /* points of the curves (request.curves) */
    double *curve_power; /* W */
    double *curve_nominal, *curve_worst; /* s to the target (NaN: not reached) */
} tp_size_result;

/* Size the controlled heater of `desc` (its assembled network `net`, which is only read) for
 * the request: every corner of tp_guard_ranges_resolve, the warm-ups full on from the cold
 * start, the margin at the holding point of the target. TP_OK with r->feasible 0 when no power
 * up to p_max meets the target (r->best_time says how close it came). Bad requests and
 * networks without a controller are TP_ERR_CONFIG or TP_ERR_USAGE with a message naming the
 * option or key; solver failures TP_ERR_SOLVER. Call tp_size_clear in every case. */
tp_status tp_size_run(const tp_description *desc, const tp_yamltree *doc, const tp_network *net,
                      const tp_size_request *rq, tp_size_result *r, tp_diag *d);

/* Free what a result holds. */
void tp_size_clear(tp_size_result *r);

#endif
