/* The evaluator of a frozen network: everything that changes while a network is run or solved.
 * It holds the duty each source is held at, compact copies of the links for fast evaluation,
 * the current coefficient of every convection group and scratch buffers, and from them it
 * evaluates the right-hand side C_i dT_i/dt = sum_j Q_ji + P_i, its Jacobian, heat flows,
 * source powers and the working surface at a state. The network is only read: one evaluator
 * per thread, and any number of evaluators may use one network at once. */
#ifndef TP_EVAL_H
#define TP_EVAL_H

#include "network.h"
#include "status.h"

typedef struct tp_eval tp_eval;

/* An evaluator of the finished network `net` (borrowed: it must outlive the evaluator), every
 * duty at its source's max_duty and the network's controlled source as the one whose current
 * is reported. TP_OK with *out set, or TP_ERR_NOMEM (*out NULL). */
tp_status tp_eval_create(const tp_network *net, tp_eval **out);

/* Free an evaluator and NULL the handle; accepts NULL. */
void tp_eval_destroy(tp_eval **ev);

/* The network it evaluates. */
const tp_network *tp_eval_network(const tp_eval *ev);

/* The duty source `source` is held at, 0..1 (the share of the period a switched source is on). */
void tp_eval_set_duty(tp_eval *ev, int source, double duty);
double tp_eval_duty(const tp_eval *ev, int source);

/* Every source's duty (n_sources entries), for comparisons; valid until the next set. */
const double *tp_eval_duties(const tp_eval *ev);

/* Every source back at its max_duty (fully on). */
void tp_eval_full_duties(tp_eval *ev);

/* The source whose on-current tp_eval_sample_sources reports: `source` when it is electrical,
 * else (and for -1: no controller) the first electrical source. */
void tp_eval_set_controlled(tp_eval *ev, int source);

/* All node temperatures from a state vector into `t` (n_nodes). */
void tp_eval_temperatures(const tp_eval *ev, const double *y, double *t);

/* The right-hand side dy/dt at state y with the held duties (CVODE's contract: 0 ok, 1 when a
 * value is not finite, which lets the integrator cut its step). */
int tp_eval_rhs(tp_eval *ev, const double *y, double *ydot);

/* The Jacobian d(dy/dt)/dy at y, written into `values` in the order of the network's pattern
 * (colptr/rowind). `use_secant` nonzero replaces each link's derivative by its secant
 * conductance Q / dT (robust first iterations of the steady-state solver). Returns 0, or 1
 * when a value is not finite. Two terms are left out to keep the pattern sparse (a Newton
 * iteration tolerates them: they change its rate, not its solution): the dependence of a
 * coefficient group's h on the other members' temperatures, and of a source spread over
 * several nodes on the other nodes' resistances (docs/model.md). */
int tp_eval_jacobian(tp_eval *ev, const double *y, double *values, int use_secant);

/* Heat flows at all-node temperatures `t` with the held duties. `f` from tp_network_flows_init. */
void tp_eval_flows(tp_eval *ev, const double *t, tp_flows *f);

/* For a recorded sample: every source's power at its held duty into power[] (W), their wiring
 * loss into *wire and the on-current of the controlled source (tp_eval_set_controlled) into
 * *current (NaN when no source is electrical). */
void tp_eval_sample_sources(const tp_eval *ev, const double *t, double *power, double *wire,
                            double *current);

/* The working-surface temperature at node temperatures `t` (K): the top face of the top layer,
 * T_s = T_top - q'' t / (2 k) with q'' the flux leaving that face; a gridded plate gives the
 * area-weighted mean of its map. NaN when the network has no physical top layer. */
double tp_eval_surface(tp_eval *ev, const double *t);

/* The working-surface map of a gridded plate at node temperatures `t`: map[j * nx + i] is the
 * top face of the top layer's cell (i, j), K; NaN where the top layer has no cell. Returns the
 * area-weighted mean, or NaN (map untouched) when the network is not gridded. */
double tp_eval_surface_map(tp_eval *ev, const double *t, double *map);

/* The working surface of `net` at one state, for reports: tp_eval_surface, and with `map`
 * (nx * ny, may be NULL) tp_eval_surface_map, through an evaluator of its own for a gridded
 * plate. NaN when the network has no physical top layer, or when memory runs out. */
double tp_eval_surface_at(const tp_network *net, const double *t, double *map);

#endif
