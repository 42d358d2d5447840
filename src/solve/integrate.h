/* The CVODE driver: integrates a network from t = 0 with the controller sampled at its ticks,
 * reporting the state on the output grid, with restarts only where a source output changes. */
#ifndef TP_INTEGRATE_H
#define TP_INTEGRATE_H

#include "control.h"
#include "diag.h"
#include "network.h"
#include "status.h"

#define TP_DENSE_MAX 12 /* free nodes up to which the dense LU is used; KLU above
                           (measured: docs/performance.md) */
#define TP_MAX_OUTPUT_VALUES 5.0e7 /* output rows times (nodes + sources): bounds the history a
                                      caller keeps (about 8 bytes each), values */

/* What the driver reports at each output time. */
typedef struct tp_sample {
    double t;             /* s */
    const double *y;      /* the state vector (free temperatures, then energy totals) */
    const double *temps;  /* every node's temperature, K (n_nodes) */
    double duty;          /* the controlled source's held duty (1 without a controller) */
    double reading;       /* the controller's reading at t, K (NaN without a controller) */
} tp_sample;

/* Called at each output time; return nonzero to stop the run early (not an error). */
typedef int (*tp_output_fn)(void *user, const tp_sample *s);

/* Optional hooks (fault injection and what-ifs); any may be NULL. */
typedef struct tp_hooks {
    void *user;
    /* Times at which the network may change (sorted, ascending); at each the driver calls
     * `at_break`, which may edit link, node and source parameters and the state vector `y`
     * (free temperatures then energy totals), then restarts the integrator from `y`. */
    const double *breaks;
    int n_breaks;
    void (*at_break)(void *user, double t, tp_network *net, double *y);
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
    const tp_control_state *ctrl0; /* controller memory at t = 0 (NULL: reset) */
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

/* Give a SUNDIALS serial vector (an N_Vector, passed untyped so that SUNDIALS types stay in the
 * solver modules) compiled vector operations with the same definitions as the library's, for
 * large networks (the library may be built without optimisation). Clones share them. */
void tp_integrate_vector_ops(void *vector);

/* Options from the network's run settings (duration, step, tolerance, limits). */
void tp_integrate_defaults(const tp_network *net, tp_integrate_opts *o);

/* Integrate. On failure reports the time, the node with the largest error estimate and a hint
 * to `d`, and returns TP_ERR_SOLVER (TP_ERR_LIMIT for a step or wall-clock limit, or for more
 * output rows or values than TP_MAX_OUTPUT_ROWS and TP_MAX_OUTPUT_VALUES, refused before
 * anything is allocated). The network's duties are left as at the end of the run. */
tp_status tp_integrate(tp_network *net, const tp_integrate_opts *o, tp_integrate_stats *stats,
                       tp_diag *d);

#endif
