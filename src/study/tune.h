/* PID gain suggestion: a first-order-plus-dead-time (FOPDT) model of the reading's response to
 * a duty step at the holding point, identified from the network, and published tuning rules
 * (SIMC, IMC-PID) that turn it into gains in tepid's units. */
#ifndef TP_TUNE_H
#define TP_TUNE_H

#include "diag.h"
#include "network.h"
#include "status.h"

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
 * and fit by the two-point method (28.3 % and 63.2 % of the response). */
tp_status tp_tune_identify(tp_network *net, double step, tp_fopdt *m, tp_diag *d);

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

#endif
