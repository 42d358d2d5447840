/* The CVODE driver.
 *
 * Solves dy/dt = f(y; d) (eval.c) with CVODE's BDF method and Newton iteration, where d is the
 * vector of source duties held in the run's evaluator. The controller samples the reading at
 * t_k = k * period and holds its output until t_{k+1} (zero-order hold), so f is smooth between
 * ticks and only where a duty actually changes does the driver restart the integrator
 * (CVodeReInit) from the state interpolated at t_k. Steps are taken in CV_ONE_STEP mode; ticks
 * and outputs that fall inside a step are served by CVODE's interpolant (CVodeGetDky), never by
 * forcing small steps. A run is: setup (the run's state and CVODE with its linear solver),
 * then repeatedly a step to the next event (outputs and controller ticks inside the step) and,
 * where a tick changed a duty, a restart. Linear algebra (solver support): the compiled dense
 * LU up to TP_DENSE_MAX free nodes (denselu.c), KLU sparse direct above (SUNDIALS's, or for
 * gridded networks one that keeps its factorization, sparselu.c), and for large gridded
 * networks the multigrid-preconditioned solver (krylov.c), all with the analytic Jacobian. */
#include "integrate.h"

#include "multigrid.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <cvode/cvode.h>
#include <nvector/nvector_serial.h>
#include <sundials/sundials_context.h>
#include <sunmatrix/sunmatrix_dense.h>

#include "denselu.h"
#include "klulib.h"
#include "krylov.h"
#include "sparselu.h"
#include "vecops.h"

#define TP_ATOL_KELVIN 10.0 /* K: absolute tolerance on temperatures is rtol times this */
#define TP_ATOL_JOULE 1.0   /* J: absolute tolerance on energy totals is rtol times this */
#define TP_WALL_CHECK_TICKS 1024 /* controller ticks between wall-clock checks inside a step */

#define TP_JAC_REUSE_DT 0.5   /* K: a Jacobian is reused while no temperature moved more */
#define TP_JAC_REUSE_DUTY 0.1 /* -, and no duty moved more (duty enters only via tempco) */

/* The solver side of a run: what CVODE's callbacks reach through their user data. */
typedef struct driver {
    const tp_network *net;
    tp_eval *ev;
    SUNMatrix jac;
    int sparse;
    int iterative;  /* the multigrid-preconditioned solver (krylov.c) */
    double *jvals;  /* pattern-ordered Jacobian values */
    double *jy;     /* the state the values were computed at */
    double *jduty;  /* and the duties */
    int jvalid;
    long jreused;
    long jversion;  /* counts evaluations of jvals */
    tp_krylov *pc;
    char cv_msg[512];
} driver;

/* Whether the cached Jacobian still describes the network at y. CVODE itself keeps a Jacobian
 * for many steps; across controller restarts (which make CVODE ask again at once) the cached
 * one is reused while the temperatures and duties have hardly moved. Only Newton's convergence
 * rate depends on it, never the accuracy of the solution. */
static int jac_fresh(const driver *dr, const double *y)
{
    const tp_network *net = dr->net;
    const double *duty = tp_eval_duties(dr->ev);
    int i;
    if (!dr->jvalid)
        return 0;
    for (i = 0; i < net->n_sources; i++)
        if (fabs(duty[i] - dr->jduty[i]) > TP_JAC_REUSE_DUTY)
            return 0;
    for (i = 0; i < net->n_free; i++)
        if (fabs(y[i] - dr->jy[i]) > TP_JAC_REUSE_DT)
            return 0;
    return 1;
}

static int jac_values(driver *dr, const double *y)
{
    const tp_network *net = dr->net;
    int rc;
    if (jac_fresh(dr, y)) {
        dr->jreused++;
        return 0;
    }
    rc = tp_eval_jacobian(dr->ev, y, dr->jvals, 0);
    if (rc != 0) {
        dr->jvalid = 0;
        return rc;
    }
    memcpy(dr->jy, y, (size_t)net->n_free * sizeof *y);
    memcpy(dr->jduty, tp_eval_duties(dr->ev), (size_t)net->n_sources * sizeof *dr->jduty);
    dr->jvalid = 1;
    dr->jversion++;
    return 0;
}

/* ---- CVODE's callbacks ---------------------------------------------------------------------- */

static int psetup_cb(realtype t, N_Vector y, N_Vector fy, booleantype jok, booleantype *jcur,
                     realtype gamma, void *user)
{
    driver *dr = user;
    int rc;
    (void)t;
    (void)fy;
    if (!jok || !dr->jvalid) {
        rc = jac_values(dr, N_VGetArrayPointer(y));
        if (rc != 0)
            return rc;
        *jcur = SUNTRUE;
    } else {
        *jcur = SUNFALSE;
    }
    return tp_krylov_setup(dr->pc, dr->jvals, dr->jversion, gamma);
}

static int psolve_cb(realtype t, N_Vector y, N_Vector fy, N_Vector r, N_Vector z,
                     realtype gamma, realtype delta, int lr, void *user)
{
    driver *dr = user;
    (void)t;
    (void)y;
    (void)fy;
    (void)delta;
    (void)lr;
    tp_krylov_solve(dr->pc, dr->jvals, gamma, N_VGetArrayPointer(r), N_VGetArrayPointer(z));
    return 0;
}

/* J v with the cached Jacobian (the one the preconditioner was built from). */
static int jtimes_cb(N_Vector v, N_Vector jv, realtype t, N_Vector y, N_Vector fy, void *user,
                     N_Vector tmp)
{
    driver *dr = user;
    const tp_network *net = dr->net;
    const double *vv = N_VGetArrayPointer(v);
    double *out = N_VGetArrayPointer(jv);
    int n = tp_network_state_size(net), c, k;
    (void)t;
    (void)fy;
    (void)tmp;
    if (!dr->jvalid && jac_values(dr, N_VGetArrayPointer(y)) != 0)
        return 1;
    memset(out, 0, (size_t)n * sizeof *out);
    for (c = 0; c < n; c++) {
        double x = vv[c];
        if (x == 0.0)
            continue;
        for (k = net->colptr[c]; k < net->colptr[c + 1]; k++)
            out[net->rowind[k]] += dr->jvals[k] * x;
    }
    return 0;
}

static int rhs_cb(realtype t, N_Vector y, N_Vector ydot, void *user)
{
    driver *dr = user;
    (void)t;
    return tp_eval_rhs(dr->ev, N_VGetArrayPointer(y), N_VGetArrayPointer(ydot));
}

static int jac_cb(realtype t, N_Vector y, N_Vector fy, SUNMatrix J, void *user, N_Vector t1,
                  N_Vector t2, N_Vector t3)
{
    driver *dr = user;
    const tp_network *net = dr->net;
    int rc, col, k;
    (void)t;
    (void)fy;
    (void)t1;
    (void)t2;
    (void)t3;
    rc = jac_values(dr, N_VGetArrayPointer(y));
    if (rc != 0)
        return rc;
    if (dr->sparse) {
        /* The pattern never changes; KLU refactors numerically on it. */
        sunindextype *ptr = SUNSparseMatrix_IndexPointers(J);
        sunindextype *ind = SUNSparseMatrix_IndexValues(J);
        int n = tp_network_state_size(net);
        for (col = 0; col <= n; col++)
            ptr[col] = net->colptr[col];
        for (k = 0; k < net->nnz; k++)
            ind[k] = net->rowind[k];
        memcpy(SUNSparseMatrix_Data(J), dr->jvals, (size_t)net->nnz * sizeof *dr->jvals);
        return 0;
    }
    SUNMatZero(J);
    for (col = 0; col < tp_network_state_size(net); col++)
        for (k = net->colptr[col]; k < net->colptr[col + 1]; k++)
            SM_ELEMENT_D(J, net->rowind[k], col) = dr->jvals[k];
    return 0;
}

static void err_cb(int code, const char *module, const char *function, char *msg, void *user)
{
    driver *dr = user;
    (void)code;
    (void)module;
    snprintf(dr->cv_msg, sizeof dr->cv_msg, "%s: %s", function, msg);
}

void tp_integrate_defaults(const tp_run *run, tp_integrate_opts *o)
{
    memset(o, 0, sizeof *o);
    o->t_end = run->duration;
    o->step = run->step;
    o->rtol = run->tolerance;
    o->max_steps = (long)run->max_steps;
    o->wall_time = run->wall_time;
}

static double now_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static void add_stats(void *mem, tp_integrate_stats *st)
{
    long v;
    if (CVodeGetNumSteps(mem, &v) == CV_SUCCESS)
        st->steps += v;
    if (CVodeGetNumRhsEvals(mem, &v) == CV_SUCCESS)
        st->rhs_evals += v;
    if (CVodeGetNumJacEvals(mem, &v) == CV_SUCCESS)
        st->jac_evals += v;
    if (CVodeGetNumLinSolvSetups(mem, &v) == CV_SUCCESS)
        st->lin_setups += v;
    if (CVodeGetNumErrTestFails(mem, &v) == CV_SUCCESS)
        st->error_test_fails += v;
    if (CVodeGetNumNonlinSolvConvFails(mem, &v) == CV_SUCCESS)
        st->nonlin_fails += v;
    if (CVodeGetNumNonlinSolvIters(mem, &v) == CV_SUCCESS)
        st->newton_iters += v;
    if (CVodeGetNumLinIters(mem, &v) == CV_SUCCESS)
        st->lin_iters += v;
    if (CVodeGetNumPrecSolves(mem, &v) == CV_SUCCESS)
        st->prec_solves += v;
    if (CVodeGetNumJtimesEvals(mem, &v) == CV_SUCCESS)
        st->jtimes += v;
    if (CVodeGetNumLinConvFails(mem, &v) == CV_SUCCESS)
        st->lin_fails += v;
}

/* The free node with the largest weighted local error estimate, for failure messages. */
static const char *worst_node(void *mem, const tp_network *net, N_Vector a, N_Vector b)
{
    int i, best = -1;
    double bestv = -1.0, *e, *w;
    if (CVodeGetEstLocalErrors(mem, a) != CV_SUCCESS || CVodeGetErrWeights(mem, b) != CV_SUCCESS)
        return NULL;
    e = N_VGetArrayPointer(a);
    w = N_VGetArrayPointer(b);
    for (i = 0; i < net->n_free; i++) {
        double v = fabs(e[i] * w[i]);
        if (v > bestv || !isfinite(v)) {
            bestv = isfinite(v) ? v : HUGE_VAL;
            best = i;
        }
    }
    return best >= 0 ? net->nodes[net->free_nodes[best]].id : NULL;
}

#define TP_RTOL_TIGHT 1.0e-9 /* -, relative tolerances below this are themselves suspect */

/* Report a failed integration: the time, the node with the largest weighted error (when
 * known), CVODE's own words, and a hint that fits the tolerance in use. */
static tp_status fail(tp_diag *d, const char *what, double t, const char *node, const char *msg,
                      double rtol)
{
    char hint[320], where[TP_ID_MAX + 48] = "";
    if (node)
        snprintf(where, sizeof where, ", largest error in node '%s'", node);
    snprintf(hint, sizeof hint,
             "%s; check %s%s%s for a tiny capacity or a link far stronger than the rest",
             rtol < TP_RTOL_TIGHT ? "run.tolerance is very tight: try 1e-6"
                                  : "tighten run.tolerance (e.g. 1e-8)",
             node ? "node '" : "the nodes", node ? node : "", node ? "'" : "");
    tp_diag_error(d, tp_diag_loc_none(), NULL, hint, "integration failed at t = %.6g s%s: %s%s%s",
                  t, where, what, msg && *msg ? " - " : "", msg ? msg : "");
    return TP_ERR_SOLVER;
}

/* ---- the run -------------------------------------------------------------------------------- */

typedef struct run {
    const tp_network *net;
    const tp_integrate_opts *o;
    const tp_hooks *hooks;
    tp_integrate_stats *stats;
    tp_diag *d;
    const tp_control *ctl; /* the controller that runs, NULL: open loop */
    tp_control_state ctrl; /* its memory */
    double period;         /* s between its ticks (HUGE_VAL without one) */
    long k_tick;           /* the next tick is at k_tick * period */
    double next_off;       /* s, where the schedule next switches the heater off (HUGE_VAL:
                              never) */
    int was_off;           /* the last tick found the schedule off */
    double *temps;
    long next_out;         /* index of the next output time */
    long n_out;            /* output times 0..n_out-1 at k * step (the last one is t_end) */
    int stop;              /* the output callback stopped the run */
    int bad_node;          /* a node whose temperature was not finite at an output time, or -1 */
    double bad_t;          /* s, that output time */
    double t;              /* s, where the integrator stands */
    double wall0;          /* s of wall clock at the start */
    /* The solver side. */
    driver dr;
    SUNContext ctx;
    N_Vector y, yi, atol, tmp;
    SUNLinearSolver ls;
    void *mem;
} run;

static double out_time(const run *r, long k)
{
    double t = (double)k * r->o->step;
    return k >= r->n_out - 1 ? r->o->t_end : t;
}

static double reading_of(run *r, double t, const double *y)
{
    const tp_net_node *sensor;
    double reading;
    if (!r->ctl)
        return TP_UNSET;
    /* Only the sensor's temperature: a large network is not copied at every tick. */
    sensor = &r->net->nodes[r->ctl->sensor];
    reading =
        tp_control_reading(&r->ctl->reading, sensor->state >= 0 ? y[sensor->state] : sensor->t0);
    if (r->hooks && r->hooks->reading)
        reading = r->hooks->reading(r->hooks->user, t, reading);
    return reading;
}

/* Hand one output row to the caller. A state that is not finite is never handed out: the run
 * ends there and tp_integrate reports it (no NaN reaches an output file). Returns nonzero when
 * the run ends. */
static int emit(run *r, double t, const double *y)
{
    tp_sample s;
    int i;
    s.t = t;
    s.y = y;
    s.reading = reading_of(r, t, y);
    tp_eval_temperatures(r->dr.ev, y, r->temps);
    for (i = 0; i < r->net->n_nodes; i++)
        if (!isfinite(r->temps[i])) {
            r->bad_node = i;
            r->bad_t = t;
            return 1;
        }
    s.temps = r->temps;
    s.duty = r->ctl ? tp_eval_duty(r->dr.ev, r->ctl->source) : 1.0;
    s.setpoint = r->o->schedule && r->ctl ? tp_schedule_at(r->o->schedule, t, NULL)
                 : r->ctl && tp_description_mode_holds(r->ctl->mode) ? r->ctl->setpoint
                                                                     : TP_UNSET;
    s.eval = r->dr.ev;
    if (r->o->out && r->o->out(r->o->user, &s) != 0)
        r->stop = 1;
    return r->stop;
}

/* The controller tick at time t with state y; returns nonzero when the duty changed. */
static int tick(run *r, double t, const double *y)
{
    double duty, reading;
    int src;
    if (!r->ctl)
        return 0;
    src = r->ctl->source;
    reading = reading_of(r, t, y);
    if (r->o->schedule) {
        /* The controller follows the schedule's setpoint at its ticks; off parts hold the
         * heater off, and after one the controller starts afresh. */
        tp_control c = *r->ctl;
        c.setpoint = tp_schedule_at(r->o->schedule, t, NULL);
        if (!isfinite(c.setpoint)) {
            r->was_off = 1;
            duty = 0.0;
        } else {
            if (r->was_off)
                tp_control_start(r->ctl, &r->ctrl);
            r->was_off = 0;
            duty = tp_control_tick(&c, &r->ctrl, reading);
        }
    } else {
        duty = tp_control_tick(r->ctl, &r->ctrl, reading);
    }
    if (r->hooks && r->hooks->duty)
        duty = r->hooks->duty(r->hooks->user, t, duty);
    if (duty != tp_eval_duty(r->dr.ev, src)) {
        tp_eval_set_duty(r->dr.ev, src, duty);
        return 1;
    }
    return 0;
}

/* The options a run cannot start with: nothing to integrate, or more output values than a
 * history may hold (judged in double before any conversion or allocation: a step of 1e-300 s
 * made (long)(t_end / step) undefined and the run silently empty). A history keeps every node
 * of a lumped network, but only per-layer statistics (mean, minimum, maximum) and the nodes
 * outside the grid of a gridded one. The output rows and controller samples of the run:
 * section were checked when the file was read (config.c). */
static tp_status check_opts(const tp_network *net, const tp_integrate_opts *o, tp_diag *d)
{
    double rows, width;
    if (!(o->t_end > 0) || !(o->step > 0)) {
        tp_diag_error(d, tp_diag_loc_none(), "run", "set run.duration and run.step above zero",
                      "nothing to integrate");
        return TP_ERR_CONFIG;
    }
    rows = o->t_end / o->step + 1.0;
    width = net->grid ? 3.0 * net->grid->n_layers + net->grid->lumped->n_nodes + net->n_sources
                      : (double)(net->n_nodes + net->n_sources);
    if (!(rows * width <= TP_MAX_OUTPUT_VALUES)) {
        tp_diag_error(d, tp_diag_loc_none(), "run.step",
                      "raise run.step (the output interval) or shorten run.duration",
                      "%.3g output rows of %.0f values exceed the limit of %.0f values", rows,
                      width, TP_MAX_OUTPUT_VALUES);
        return TP_ERR_LIMIT;
    }
    return TP_OK;
}

/* The run's own state: the evaluator at the run's duties, the controller and its memory, the
 * vectors with the initial state and the tolerances. */
static tp_status setup_state(run *r)
{
    const tp_network *net = r->net;
    const tp_integrate_opts *o = r->o;
    int n = tp_network_state_size(net), i;
    r->ctl = o->duty ? NULL : o->control ? o->control : net->has_control ? &net->control : NULL;
    r->period = r->ctl ? r->ctl->period : HUGE_VAL;
    r->k_tick = 1;
    r->next_off = o->schedule && r->ctl ? tp_schedule_next_off(o->schedule, 0.0) : HUGE_VAL;
    r->n_out = (long)ceil(o->t_end / o->step - 1e-9) + 1;
    r->temps = malloc((size_t)(net->n_nodes > 0 ? net->n_nodes : 1) * sizeof *r->temps);
    if (!r->temps || tp_eval_create(net, &r->dr.ev) != TP_OK)
        return TP_ERR_NOMEM;
    for (i = 0; o->duty && i < net->n_sources; i++)
        tp_eval_set_duty(r->dr.ev, i, o->duty[i]);
    tp_eval_set_controlled(r->dr.ev, r->ctl ? r->ctl->source : -1);
    if (o->ctrl0)
        r->ctrl = *o->ctrl0;
    else if (r->ctl)
        tp_control_start(r->ctl, &r->ctrl);
    if (SUNContext_Create(NULL, &r->ctx) != 0)
        return TP_ERR_NOMEM;
    r->y = N_VNew_Serial(n, r->ctx);
    if (r->y)
        tp_vecops_install(r->y); /* CVODE's vectors are clones of y and share its ops */
    r->yi = r->y ? N_VClone(r->y) : NULL;
    r->atol = r->y ? N_VClone(r->y) : NULL;
    r->tmp = r->y ? N_VClone(r->y) : NULL;
    if (!r->y || !r->yi || !r->atol || !r->tmp)
        return TP_ERR_NOMEM;
    if (o->y0)
        memcpy(N_VGetArrayPointer(r->y), o->y0, (size_t)n * sizeof(double));
    else
        tp_network_initial_state(net, N_VGetArrayPointer(r->y));
    for (i = 0; i < n; i++)
        N_VGetArrayPointer(r->atol)[i] =
            o->rtol * (i < net->n_free ? TP_ATOL_KELVIN : TP_ATOL_JOULE);
    return TP_OK;
}

/* CVODE and its linear solver: the multigrid-preconditioned one for large gridded networks,
 * KLU above TP_DENSE_MAX free nodes, the compiled dense LU below. */
static tp_status setup_solver(run *r)
{
    const tp_network *net = r->net;
    const tp_integrate_opts *o = r->o;
    driver *dr = &r->dr;
    int n = tp_network_state_size(net);
    r->mem = CVodeCreate(CV_BDF, r->ctx);
    if (!r->mem || CVodeInit(r->mem, rhs_cb, 0.0, r->y) != CV_SUCCESS ||
        CVodeSVtolerances(r->mem, o->rtol, r->atol) != CV_SUCCESS ||
        CVodeSetUserData(r->mem, dr) != CV_SUCCESS ||
        CVodeSetErrHandlerFn(r->mem, err_cb, dr) != CV_SUCCESS ||
        CVodeSetMaxNumSteps(r->mem, -1) != CV_SUCCESS ||
        CVodeSetStopTime(r->mem, o->t_end) != CV_SUCCESS)
        return TP_ERR_NOMEM;
    dr->net = net;
    dr->sparse = o->linear_solver == TP_LS_SPARSE ||
                 (o->linear_solver == TP_LS_AUTO && net->n_free > TP_DENSE_MAX);
    dr->iterative =
        o->linear_solver == TP_LS_AUTO && net->grid && net->n_free >= TP_MULTIGRID_MIN_UNKNOWNS;
    r->stats->sparse = dr->sparse;
    r->stats->iterative = dr->iterative;
    dr->jvals = malloc((size_t)(net->nnz > 0 ? net->nnz : 1) * sizeof *dr->jvals);
    dr->jy = malloc((size_t)(net->n_free > 0 ? net->n_free : 1) * sizeof *dr->jy);
    dr->jduty = malloc((size_t)(net->n_sources > 0 ? net->n_sources : 1) * sizeof *dr->jduty);
    if (!dr->jvals || !dr->jy || !dr->jduty)
        return TP_ERR_NOMEM;
    if (dr->iterative) {
        dr->pc = tp_krylov_create(net);
        r->ls = dr->pc ? tp_krylov_solver(r->ctx) : NULL;
        if (!r->ls || CVodeSetLinearSolver(r->mem, r->ls, NULL) != CV_SUCCESS ||
            CVodeSetPreconditioner(r->mem, psetup_cb, psolve_cb) != CV_SUCCESS ||
            CVodeSetJacTimes(r->mem, NULL, jtimes_cb) != CV_SUCCESS)
            return TP_ERR_NOMEM;
        return TP_OK;
    }
    if (dr->sparse) {
        tp_status st = tp_klulib_load(r->d);
        if (st != TP_OK)
            return st;
        dr->jac = SUNSparseMatrix(n, n, net->nnz, CSC_MAT, r->ctx);
        if (net->grid)
            r->ls = dr->jac ? tp_sparselu_create(r->ctx) : NULL;
        else
            r->ls = dr->jac ? SUNLinSol_KLU(r->y, dr->jac, r->ctx) : NULL;
    } else if (tp_denselu_create(r->y, r->ctx, &dr->jac, &r->ls) != TP_OK) {
        return TP_ERR_NOMEM;
    }
    if (!r->ls || CVodeSetLinearSolver(r->mem, r->ls, dr->jac) != CV_SUCCESS ||
        CVodeSetJacFn(r->mem, jac_cb) != CV_SUCCESS)
        return TP_ERR_NOMEM;
    return TP_OK;
}

/* The wall-clock limit, checked after every step and every TP_WALL_CHECK_TICKS ticks inside
 * one (a tiny period would otherwise run on far past the limit in one long step). */
static tp_status check_wall(run *r, double t, const char *hint)
{
    if (now_seconds() - r->wall0 <= r->o->wall_time)
        return TP_OK;
    tp_diag_error(r->d, tp_diag_loc_none(), "run.wall_time", hint,
                  "stopped at t = %.6g s: the wall-clock limit of %g s was reached", t,
                  r->o->wall_time);
    add_stats(r->mem, r->stats);
    return TP_ERR_LIMIT;
}

/* The state at time `to` inside the last step into `v` (the step's own state when `to` is its
 * end). */
static tp_status state_at(run *r, double to, N_Vector v, double t_msg)
{
    if (to == r->t) {
        N_VScale(1.0, r->y, v);
        return TP_OK;
    }
    if (CVodeGetDky(r->mem, to, 0, v) != CV_SUCCESS)
        return fail(r->d, "interpolation", t_msg, NULL, r->dr.cv_msg, r->o->rtol);
    return TP_OK;
}

/* The controller ticks inside the step just taken, each after the outputs before it, until one
 * changes a duty: *t_restart is then its time and r->yi the state there (HUGE_VAL when none
 * did). */
static tp_status ticks_in_step(run *r, double *t_restart)
{
    tp_status st;
    *t_restart = HUGE_VAL;
    while ((double)r->k_tick * r->period <= r->t || r->next_off <= r->t) {
        double tk = (double)r->k_tick * r->period;
        int is_tick = tk <= r->next_off;
        if (!is_tick)
            tk = r->next_off; /* the schedule switches the heater off here */
        /* A large network ending its step on the tick takes the step's state (the same
         * numbers) and saves the interpolation. */
        if (r->net->grid && tk == r->t)
            N_VScale(1.0, r->y, r->yi);
        else if (CVodeGetDky(r->mem, tk, 0, r->yi) != CV_SUCCESS)
            return fail(r->d, "interpolation", tk, NULL, r->dr.cv_msg, r->o->rtol);
        /* Outputs up to tk use the old duty. */
        while (r->next_out < r->n_out && out_time(r, r->next_out) < tk) {
            if (CVodeGetDky(r->mem, out_time(r, r->next_out), 0, r->tmp) != CV_SUCCESS)
                return fail(r->d, "interpolation", r->t, NULL, r->dr.cv_msg, r->o->rtol);
            if (emit(r, out_time(r, r->next_out++), N_VGetArrayPointer(r->tmp)))
                return TP_OK;
        }
        if (!is_tick) {
            r->next_off = tp_schedule_next_off(r->o->schedule, tk);
            r->was_off = 1;
            double off = r->hooks && r->hooks->duty ? r->hooks->duty(r->hooks->user, tk, 0.0)
                                                    : 0.0;
            if (r->ctl && tp_eval_duty(r->dr.ev, r->ctl->source) != off) {
                tp_eval_set_duty(r->dr.ev, r->ctl->source, off);
                *t_restart = tk;
                return TP_OK;
            }
            continue;
        }
        if (tk == r->next_off)
            r->next_off = tp_schedule_next_off(r->o->schedule, tk);
        r->k_tick++;
        r->stats->ticks++;
        if (tick(r, tk, N_VGetArrayPointer(r->yi))) {
            *t_restart = tk;
            return TP_OK;
        }
        if (r->stats->ticks % TP_WALL_CHECK_TICKS == 0 &&
            (st = check_wall(r, tk, "raise run.wall_time, or control.period")) != TP_OK)
            return st;
    }
    return TP_OK;
}

/* One CVODE step to the next event: the ticks inside it and the outputs up to where it stays
 * valid (the step's end, or a tick that changed a duty: *t_restart, HUGE_VAL when none). */
static tp_status step_to_event(run *r, double *t_restart)
{
    tp_status st;
    double t_valid;
    int flag, restart;
    *t_restart = HUGE_VAL;
    r->dr.cv_msg[0] = '\0';
    flag = CVode(r->mem, r->o->t_end, r->y, &r->t, CV_ONE_STEP);
    if (flag < 0) {
        char *name = CVodeGetReturnFlagName(flag); /* allocated by SUNDIALS: ours to free */
        add_stats(r->mem, r->stats);
        st = fail(r->d, name ? name : "CVode failed", r->t,
                  worst_node(r->mem, r->net, r->yi, r->tmp), r->dr.cv_msg, r->o->rtol);
        free(name);
        return st;
    }
    st = ticks_in_step(r, t_restart);
    if (st != TP_OK || r->stop || r->bad_node >= 0)
        return st;
    restart = *t_restart < HUGE_VAL;
    t_valid = restart ? *t_restart : r->t;
    while (r->next_out < r->n_out &&
           (out_time(r, r->next_out) < t_valid ||
            (!restart && out_time(r, r->next_out) <= t_valid))) {
        double to = out_time(r, r->next_out);
        if ((st = state_at(r, to, r->tmp, to)) != TP_OK)
            return st;
        r->next_out++;
        if (emit(r, to, N_VGetArrayPointer(r->tmp)))
            return TP_OK;
    }
    return TP_OK;
}

/* Start the integrator again at `t_restart` from the state r->yi (where a tick changed a duty),
 * and hand out an output due exactly then (it shows the new duty). */
static tp_status restart_at(run *r, double t_restart)
{
    double hlast = 0.0, h0;
    add_stats(r->mem, r->stats);
    r->stats->restarts++;
    r->t = t_restart;
    N_VScale(1.0, r->yi, r->y);
    /* Start again with the last step size (capped at the controller period) instead of CVODE's
     * initial-step estimate, which costs evaluations. A fixed fraction of it was tried and
     * dropped: 0.5 saved 17 % of the right-hand sides on the 24 V demo but cost 28 to 100 % more
     * steps on the other demos and the gridded benchmark, whose restarts rarely fail the error
     * test (docs/performance.md). */
    CVodeGetLastStep(r->mem, &hlast);
    h0 = fmin(hlast, r->period) > 0 ? fmin(hlast, r->period) : 0.0;
    if (CVodeReInit(r->mem, r->t, r->y) != CV_SUCCESS ||
        CVodeSetStopTime(r->mem, r->o->t_end) != CV_SUCCESS ||
        CVodeSetInitStep(r->mem, h0) != CV_SUCCESS)
        return fail(r->d, "restart", r->t, NULL, r->dr.cv_msg, r->o->rtol);
    while (r->next_out < r->n_out && out_time(r, r->next_out) <= r->t)
        if (emit(r, out_time(r, r->next_out++), N_VGetArrayPointer(r->y)))
            break;
    return TP_OK;
}

/* The step limit of the whole run. */
static tp_status check_steps(run *r)
{
    long nst = 0;
    CVodeGetNumSteps(r->mem, &nst);
    if (r->stats->steps + nst <= r->o->max_steps)
        return TP_OK;
    tp_diag_error(r->d, tp_diag_loc_none(), "run.max_steps",
                  "raise run.max_steps, shorten run.duration, or loosen run.tolerance",
                  "stopped at t = %.6g s after %ld integration steps", r->t, r->stats->steps + nst);
    add_stats(r->mem, r->stats);
    return TP_ERR_LIMIT;
}

/* The solver's counts into the statistics, and everything the run holds freed. */
static void teardown(run *r)
{
    driver *dr = &r->dr;
    if (dr->iterative && dr->pc) {
        r->stats->factorizations = tp_krylov_setups(dr->pc);
        r->stats->jac_evals = dr->jversion; /* CVODE does not count the preconditioner's */
    } else if (r->ls && r->net->grid && dr->sparse) {
        tp_sparselu_counts(r->ls, &r->stats->factorizations, &r->stats->factorizations_skipped);
    }
    r->stats->t_reached = r->t;
    r->stats->stopped = r->stop;
    if (r->mem)
        CVodeFree(&r->mem);
    if (r->ls)
        SUNLinSolFree(r->ls);
    if (dr->jac)
        SUNMatDestroy(dr->jac);
    if (r->y)
        N_VDestroy(r->y);
    if (r->yi)
        N_VDestroy(r->yi);
    if (r->atol)
        N_VDestroy(r->atol);
    if (r->tmp)
        N_VDestroy(r->tmp);
    if (r->ctx)
        SUNContext_Free(&r->ctx);
    tp_krylov_destroy(&dr->pc);
    tp_eval_destroy(&dr->ev);
    free(dr->jvals);
    free(dr->jy);
    free(dr->jduty);
    free(r->temps);
}

tp_status tp_integrate(const tp_network *net, const tp_integrate_opts *o,
                       tp_integrate_stats *stats, tp_diag *d)
{
    run r;
    tp_status st;
    memset(stats, 0, sizeof *stats);
    memset(&r, 0, sizeof r);
    r.net = net;
    r.o = o;
    r.hooks = o->hooks;
    r.stats = stats;
    r.d = d;
    r.bad_node = -1;
    r.wall0 = now_seconds();
    st = check_opts(net, o, d);
    if (st != TP_OK)
        return st;
    st = setup_state(&r);
    if (st == TP_OK) {
        tick(&r, 0.0, N_VGetArrayPointer(r.y));
        stats->ticks = r.ctl ? 1 : 0;
        r.next_out = 1;
        if (emit(&r, 0.0, N_VGetArrayPointer(r.y)) == 0)
            st = setup_solver(&r);
    }
    while (st == TP_OK && r.t < o->t_end && !r.stop && r.bad_node < 0) {
        double t_restart;
        st = step_to_event(&r, &t_restart);
        if (st != TP_OK || r.stop || r.bad_node >= 0)
            break;
        if (t_restart < HUGE_VAL)
            st = restart_at(&r, t_restart);
        if (st != TP_OK || r.stop || r.bad_node >= 0)
            break;
        st = check_steps(&r);
        if (st == TP_OK)
            st = check_wall(&r, r.t, "raise run.wall_time or simplify the model (fewer grid "
                                     "cells)");
    }
    if (st == TP_OK && r.mem && !r.stop && r.bad_node < 0)
        add_stats(r.mem, stats);
    if (st == TP_OK && r.bad_node >= 0)
        st = fail(d, "a temperature is not finite", r.bad_t, net->nodes[r.bad_node].id, NULL,
                  o->rtol);
    teardown(&r);
    return st;
}
