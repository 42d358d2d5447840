/* The CVODE driver: integrates a frozen network from t = 0 with the controller sampled at its
 * ticks, reporting the state on the output grid, with restarts only where a source output
 * changes. The run's state (duties, controller memory, solver memory) is its own: the network is
 * only read, so any number of runs may share one network. */
#ifndef TP_INTEGRATE_H
#define TP_INTEGRATE_H

#include "control.h"
#include "description.h"
#include "diag.h"
#include "eval.h"
#include "hardlimits.h"
#include "network.h"
#include "schedule.h"
#include "status.h"

#define TP_DENSE_MAX 12 /* free nodes up to which the dense LU is used; KLU above
                           (measured: docs/performance.md) */

/* What the driver reports at each output time. */
typedef struct tp_sample {
    double t;             /* s */
    const double *y;      /* the state vector (free temperatures, then energy totals) */
    const double *temps;  /* every node's temperature, K (n_nodes) */
    double duty;          /* the controlled source's held duty (1 without a controller) */
    double reading;       /* the controller's reading at t, K (NaN without a controller) */
    double setpoint;      /* the setpoint at t, K: the schedule's (NaN while it has the heater
                             off), else the controller's (NaN without one that holds one) */
    tp_eval *eval;        /* the run's evaluator at the duties held at t: source powers, flows
                             and the working surface of this sample, only during the call; its
                             duties are the run's, never to be set by the callback */
} tp_sample;

/* Called at each output time; return nonzero to stop the run early (not an error). */
typedef int (*tp_output_fn)(void *user, const tp_sample *s);

/* Optional hooks (fault injection); any may be NULL. A varied network (a disturbance, a
 * detached part) is a copy (tp_network_copy), run from the state where the change happens. */
typedef struct tp_hooks {
    void *user;
    /* Replace the reading the controller sees (a shorted or open sensor). */
    double (*reading)(void *user, double t, double reading);
    /* Replace the duty applied to the controlled source (a stuck switch, an open heater). */
    double (*duty)(void *user, double t, double duty);
} tp_hooks;

typedef struct tp_integrate_opts {
    double t_end;          /* s */
    double step;           /* s, output interval */
    double rtol;           /* relative tolerance */
    long max_steps;        /* internal steps allowed in the whole run */
    double wall_time;      /* s of wall clock allowed */
    const double *y0;      /* initial state (NULL: the network's initial state) */
    const tp_control *control; /* the controller to run instead of the network's (other gains, a
                              reading model, or one for a network without): its source and sensor
                              index the network. NULL: the network's controller, if any */
    const double *duty;    /* open loop: every source held at duty[i] (n_sources entries) with no
                              controller at all. NULL: each source at its max_duty, the
                              controlled one switched by the controller */
    const tp_control_state *ctrl0; /* controller memory at t = 0 (NULL: reset) */
    const tp_schedule *schedule; /* the setpoint schedule the controller follows, sampled at its
                              ticks; an off part switches the heater off where it begins, and
                              the controller starts afresh at its first tick after one. NULL:
                              the controller's fixed setpoint */
    tp_output_fn out;
    void *user;
    const tp_hooks *hooks;
    int linear_solver;     /* TP_LS_AUTO (dense up to TP_DENSE_MAX free nodes), TP_LS_DENSE,
                              TP_LS_SPARSE (benchmarks compare them) */
} tp_integrate_opts;

enum { TP_LS_AUTO = 0, TP_LS_DENSE, TP_LS_SPARSE };

typedef struct tp_integrate_stats {
    long steps, rhs_evals, jac_evals, lin_setups, error_test_fails, nonlin_fails;
    long restarts;         /* CVodeReInit calls */
    long ticks;            /* controller ticks */
    int sparse;            /* 1 when KLU was used */
    int iterative;         /* 1 when GMRES with the multigrid preconditioner was used */
    long newton_iters, lin_iters; /* Newton iterations, and linear (Krylov) iterations */
    long prec_solves, jtimes, lin_fails; /* preconditioner solves, Jacobian-vector products,
                                            linear solves that did not converge */
    long factorizations;   /* gridded networks: numeric factorizations of M = I - gamma J, or
                              setups of the multigrid preconditioner */
    long factorizations_skipped; /* setups with M bitwise equal to the last factored one */
    double t_reached;      /* s */
    int stopped;           /* the output callback stopped the run */
} tp_integrate_stats;

/* Options from the description's run settings (duration, step, tolerance, limits); everything
 * else zero or NULL (the network's controller, its initial state). */
void tp_integrate_defaults(const tp_run *run, tp_integrate_opts *o);

/* Integrate `net` (only read). On failure reports the time, the node with the largest error
 * estimate and a hint to `d`, and returns TP_ERR_SOLVER (TP_ERR_LIMIT for a step or wall-clock
 * limit, or for more output values than TP_MAX_OUTPUT_VALUES, refused before anything is
 * allocated; TP_ERR_NOMEM when memory runs out). */
tp_status tp_integrate(const tp_network *net, const tp_integrate_opts *o,
                       tp_integrate_stats *stats, tp_diag *d);

#endif
