/* Steady states with KINSOL: the equilibrium at full power, and the holding point where the
 * controlled source's duty keeps the reading at the setpoint. */
#ifndef TP_STEADY_H
#define TP_STEADY_H

#include "diag.h"
#include "network.h"
#include "status.h"

#define TP_MARGIN_LOW 1.3 /* -, power margin (max_duty / holding duty) below which the controller
                             has little in reserve to recover from a disturbance and warm-up is
                             slow (docs/sizing.md; common practice, no source) */

typedef struct tp_steady {
    double *temps; /* n_nodes, K (owned; tp_steady_clear frees) */
    double duty;   /* the controlled source's duty (full power: its max_duty) */
    double power;  /* W delivered by the controlled source, or by all sources without control */
    double wire;   /* W lost in supply wiring */
    double reading;/* the reading at this state, K (NaN without a controller) */
    long iterations;
} tp_steady;

/* Equilibrium with the controlled source at `duty_scale` times its max_duty (1: full power)
 * and every other source fully on (without a controller, every source at duty_scale).
 * TP_ERR_SOLVER when no steady state exists (heated nodes with no path to a fixed node) or the
 * solver fails; the message says which. The network's duties are restored. */
tp_status tp_steady_full(tp_network *net, double duty_scale, tp_steady *out, tp_diag *d);

/* The holding point: the controlled source's duty that puts the reading (sensor node plus
 * reading offset, without ADC quantisation) at the setpoint. TP_ERR_SOLVER, with the highest
 * reachable reading in the message, when the setpoint is out of reach at max_duty. */
tp_status tp_steady_hold(tp_network *net, tp_steady *out, tp_diag *d);

/* The same at an arbitrary target reading (K); used by sweeps and tuning. */
tp_status tp_steady_hold_at(tp_network *net, double target, tp_steady *out, tp_diag *d);

/* The same with the full-power equilibrium already known (`full`, from tp_steady_full at
 * duty scale 1, its reading set), which saves solving it again. */
tp_status tp_steady_hold_given(tp_network *net, double target, const tp_steady *full,
                               tp_steady *out, tp_diag *d);

/* Free what a result owns. */
void tp_steady_clear(tp_steady *s);

/* The state vector (free temperatures, energy totals zero) of a steady result, into y. */
void tp_steady_state_vector(const tp_network *net, const tp_steady *s, double *y);

#endif
