/* PID gain suggestion: a first-order-plus-dead-time (FOPDT) model of the reading's response to
 * a duty step at the holding point, identified from the network, and published tuning rules
 * (SIMC, IMC-PID) that turn it into gains in tepid's units. */
#ifndef TP_TUNE_H
#define TP_TUNE_H

#include "description.h"
#include "diag.h"
#include "network.h"
#include "status.h"
#include "yamltree.h"

/* y(s)/u(s) = gain exp(-dead s) / (tau s + 1) */
typedef struct tp_fopdt {
    double gain;   /* K of reading per unit of duty */
    double tau;    /* s */
    double dead;   /* s */
    double u0, u1; /* duty before and after the step */
    double y0;     /* K, reading before the step */
} tp_fopdt;

typedef struct tp_gains {
    double kp;    /* 1/K, duty per kelvin */
    double ki;    /* 1/(K.s) */
    double kd;    /* s/K */
    double tau_c; /* s, the closed-loop time constant (SIMC) or lambda (IMC) used */
} tp_gains;

typedef enum tp_tune_rule { TP_RULE_SIMC, TP_RULE_IMC } tp_tune_rule;

/* Identify the FOPDT model: from the holding point, step the controlled source's duty by
 * `step` (a fraction of max_duty; the sign is chosen to stay in range), simulate the open loop
 * (the duties are arguments of the run; `net` is only read) for run->duration, lengthened up
 * to TP_STEP_EXTEND times until the response is seen, and fit by the two-point method (28.3 %
 * and 63.2 % of the response). */
tp_status tp_tune_identify(const tp_network *net, const tp_run *run, double step, tp_fopdt *m,
                           tp_diag *d);

/* The two-point fit from response times: t28 and t63 (s after the step) give
 * tau = 1.5 (t63 - t28), dead = max(0, t63 - tau). */
void tp_tune_two_point(double t28, double t63, double *tau, double *dead);

/* SIMC PI (Skogestad 2003): kp = tau / (gain (tau_c + dead)), Ti = min(tau, 4 (tau_c + dead)),
 * ki = kp / Ti, kd = 0. */
void tp_tune_simc(const tp_fopdt *m, double tau_c, tp_gains *g);

/* IMC-PID for FOPDT with a first-order Pade delay (Rivera, Morari & Skogestad 1986):
 * kp gain = (tau + dead/2) / (lambda + dead/2), Ti = tau + dead/2,
 * Td = tau dead / (2 tau + dead); ki = kp / Ti, kd = kp Td. */
void tp_tune_imc(const tp_fopdt *m, double lambda, tp_gains *g);

/* The gains of `rule` for the plant `m` (its dead time already including the sampling delay)
 * at the rule's parameter `param` (SIMC's tau_c or IMC's lambda, s). */
void tp_tune_gains(const tp_fopdt *m, tp_tune_rule rule, double param, tp_gains *g);

#define TP_TUNE_SCAN_LOW (-2)  /* the scan tries param0 x 2^(j/2) for j from this ... */
#define TP_TUNE_SCAN_HIGH 12   /* ... to this (0.5 to 64 times the default parameter) */
#define TP_TUNE_REFINE 4       /* bisections between the first feasible scan point and the one
                                  below it (a ratio of sqrt(2) down to about 2 %) */
#define TP_TUNE_CASES_MAX 17   /* the nominal case and guard's corners (TP_GUARD_CORNERS_MAX) */

/* What an overshoot search found (tp_tune_overshoot). */
typedef struct tp_tune_search {
    double limit;        /* K, the overshoot allowed (reading above the setpoint) */
    int n_cases;         /* 1, or the nominal case and the corners (--worst) */
    int found;           /* a parameter meets the limit */
    double param;        /* s, the chosen one: the fastest to the setpoint among those tried */
    tp_gains gains;
    double t_setpoint;   /* s, nominal, with the chosen gains */
    double overshoot;    /* K, the largest over the cases, with the chosen gains */
    double least_overshoot, least_param; /* the smallest worst overshoot of a run that reached
                                            the setpoint, and its parameter (+inf, NaN: none
                                            reached it) */
    double param_lo, param_hi; /* s, the range searched */
    int tried;           /* parameters simulated */
} tp_tune_search;

/* Search the rule's parameter for the fastest time to the setpoint (nominal reading) whose
 * closed loop, simulated with the network's reading model (thermistor, ADC, sensor lag) and
 * PWM levels, overshoots at most `limit` (K) in the nominal case, and with `worst` in every
 * corner of guard's ranges too (tp_guard_ranges_resolve; `desc`/`doc` give them). A parameter
 * whose run never reaches the setpoint does not meet the limit. Log-spaced scan from
 * param0 x 2^(TP_TUNE_SCAN_LOW/2) to param0 x 2^(TP_TUNE_SCAN_HIGH/2), then bisection below the
 * first parameter that meets the limit. `net` is only read. TP_OK with s->found 0 when none
 * meets it. */
tp_status tp_tune_overshoot(const tp_description *desc, const tp_yamltree *doc,
                            const tp_network *net, const tp_fopdt *m, tp_tune_rule rule,
                            double param0, double limit, int worst, tp_tune_search *s,
                            tp_diag *d);

#endif
