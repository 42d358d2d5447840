/* The CVODE driver.
 *
 * Solves dy/dt = f(y; d) (network.c) with CVODE's BDF method and Newton iteration, where d is
 * the vector of source duties. The controller samples the reading at t_k = k * period and
 * holds its output until t_{k+1} (zero-order hold), so f is smooth between ticks and only
 * where a duty actually changes does the driver restart the integrator (CVodeReInit) from the
 * state interpolated at t_k. Steps are taken in CV_ONE_STEP mode; ticks and outputs that fall
 * inside a step are served by CVODE's interpolant (CVodeGetDky), never by forcing small steps.
 * Linear algebra: dense LU up to TP_DENSE_MAX free nodes, KLU sparse direct above, both with
 * the network's analytic Jacobian. */
#include "integrate.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <cvode/cvode.h>
#include <nvector/nvector_serial.h>
#include <sundials/sundials_context.h>
#include <sunlinsol/sunlinsol_dense.h>
#include <sunlinsol/sunlinsol_klu.h>
#include <sunmatrix/sunmatrix_dense.h>
#include <sunmatrix/sunmatrix_sparse.h>

#include "config.h"

#define TP_ATOL_KELVIN 10.0 /* K: absolute tolerance on temperatures is rtol times this */
#define TP_ATOL_JOULE 1.0   /* J: absolute tolerance on energy totals is rtol times this */
#define TP_WALL_CHECK_TICKS 1024 /* controller ticks between wall-clock checks inside a step */

#define TP_JAC_REUSE_DT 0.5   /* K: a Jacobian is reused while no temperature moved more */
#define TP_JAC_REUSE_DUTY 0.1 /* -, and no duty moved more (duty enters only via tempco) */

typedef struct driver {
    tp_network *net;
    SUNMatrix jac;
    int sparse;
    double *jvals;  /* pattern-ordered Jacobian values */
    double *jy;     /* the state the values were computed at */
    double *jduty;  /* and the duties */
    int jvalid;
    long jreused;
    char cv_msg[512];
} driver;

/* Whether the cached Jacobian still describes the network at y. CVODE itself keeps a Jacobian
 * for many steps; across controller restarts (which make CVODE ask again at once) the cached
 * one is reused while the temperatures and duties have hardly moved. Only Newton's convergence
 * rate depends on it, never the accuracy of the solution. */
static int jac_fresh(const driver *dr, const double *y)
{
    const tp_network *net = dr->net;
    int i;
    if (!dr->jvalid)
        return 0;
    for (i = 0; i < net->n_sources; i++)
        if (fabs(net->duty[i] - dr->jduty[i]) > TP_JAC_REUSE_DUTY)
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
    rc = tp_network_jacobian(net, y, dr->jvals);
    if (rc != 0) {
        dr->jvalid = 0;
        return rc;
    }
    memcpy(dr->jy, y, (size_t)net->n_free * sizeof *y);
    memcpy(dr->jduty, net->duty, (size_t)net->n_sources * sizeof *net->duty);
    dr->jvalid = 1;
    return 0;
}

static int rhs_cb(realtype t, N_Vector y, N_Vector ydot, void *user)
{
    driver *dr = user;
    (void)t;
    return tp_network_rhs(dr->net, N_VGetArrayPointer(y), N_VGetArrayPointer(ydot));
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

void tp_integrate_defaults(const tp_network *net, tp_integrate_opts *o)
{
    memset(o, 0, sizeof *o);
    o->t_end = net->run.duration;
    o->step = net->run.step;
    o->rtol = net->run.tolerance;
    o->max_steps = (long)net->run.max_steps;
    o->wall_time = net->run.wall_time;
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

typedef struct run {
    tp_network *net;
    const tp_integrate_opts *o;
    const tp_hooks *hooks;
    tp_ctrl_state ctrl;
    double *temps;
    long next_out; /* index of the next output time */
    long n_out;    /* output times 0..n_out-1 at k * step (the last one is t_end) */
    int stop;
    int bad_node;  /* a node whose temperature was not finite at an output time, or -1 */
    double bad_t;  /* s, that output time */
} run;

static double out_time(const run *r, long k)
{
    double t = (double)k * r->o->step;
    return k >= r->n_out - 1 ? r->o->t_end : t;
}

static double reading_of(run *r, double t, const double *y)
{
    double reading;
    if (!r->net->has_control)
        return TP_UNSET;
    tp_network_temperatures(r->net, y, r->temps);
    reading = tp_reading(&r->net->control.reading, r->temps[r->net->control.sensor]);
    if (r->hooks && r->hooks->reading)
        reading = r->hooks->reading(r->hooks->user, t, reading);
    return reading;
}

/* Hand one output row to the caller. A state that is not finite is never handed out: the run
 * ends there and tp_integrate reports it (no NaN reaches an output file). */
static int emit(run *r, double t, const double *y)
{
    tp_sample s;
    int i;
    s.t = t;
    s.y = y;
    s.reading = reading_of(r, t, y);
    tp_network_temperatures(r->net, y, r->temps);
    for (i = 0; i < r->net->n_nodes; i++)
        if (!isfinite(r->temps[i])) {
            r->bad_node = i;
            r->bad_t = t;
            return 1;
        }
    s.temps = r->temps;
    s.duty = r->net->has_control ? r->net->duty[r->net->control.source] : 1.0;
    if (r->o->out && r->o->out(r->o->user, &s) != 0)
        r->stop = 1;
    return r->stop;
}

/* Apply a controller tick at time t with state y; returns nonzero when the duty changed. */
static int tick(run *r, double t, const double *y)
{
    tp_network *net = r->net;
    double duty, reading;
    int src;
    if (!net->has_control)
        return 0;
    src = net->control.source;
    reading = reading_of(r, t, y);
    duty = tp_control_tick(&net->control, &r->ctrl, reading);
    if (r->hooks && r->hooks->duty)
        duty = r->hooks->duty(r->hooks->user, t, duty);
    if (duty != net->duty[src]) {
        net->duty[src] = duty;
        return 1;
    }
    return 0;
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
    tp_diag_error(d, tp_loc_none(), NULL, hint, "integration failed at t = %.6g s%s: %s%s%s", t,
                  where, what, msg && *msg ? " - " : "", msg ? msg : "");
    return TP_ERR_SOLVER;
}

tp_status tp_integrate(tp_network *net, const tp_integrate_opts *o, tp_integrate_stats *stats,
                       tp_diag *d)
{
    SUNContext ctx = NULL;
    N_Vector y = NULL, yi = NULL, atol = NULL, tmp = NULL;
    SUNLinearSolver ls = NULL;
    void *mem = NULL;
    driver dr;
    run r;
    tp_status st = TP_OK;
    int n = tp_network_state_size(net), i, flag, next_break = 0;
    long k_tick = 1;
    double t = 0.0, wall0 = now_seconds(), period;

    memset(stats, 0, sizeof *stats);
    memset(&dr, 0, sizeof dr);
    memset(&r, 0, sizeof r);
    dr.net = net;
    r.net = net;
    r.o = o;
    r.hooks = o->hooks;
    r.bad_node = -1;
    if (!(o->t_end > 0) || !(o->step > 0)) {
        tp_diag_error(d, tp_loc_none(), "run", "set run.duration and run.step above zero",
                      "nothing to integrate");
        return TP_ERR_CONFIG;
    }
    /* Sizes are judged in double before any conversion or allocation: a step of 1e-300 s
     * made (long)(t_end / step) undefined and the run silently empty. */
    if (!(o->t_end / o->step + 1.0 <= TP_MAX_OUTPUT_ROWS) ||
        !((o->t_end / o->step + 1.0) * (net->n_nodes + net->n_sources) <=
          TP_MAX_OUTPUT_VALUES)) {
        tp_diag_error(d, tp_loc_none(), "run.step",
                      "raise run.step (the output interval) or shorten run.duration",
                      "%.3g output rows of %d nodes exceed the limits of %.0f rows and %.0f "
                      "values", o->t_end / o->step + 1.0, net->n_nodes, TP_MAX_OUTPUT_ROWS,
                      TP_MAX_OUTPUT_VALUES);
        return TP_ERR_LIMIT;
    }
    period = net->has_control ? net->control.period : HUGE_VAL;
    if (net->has_control && !(o->t_end / period <= TP_MAX_TICKS)) {
        tp_diag_error(d, tp_loc_none(), "control.period", "raise control.period",
                      "%.3g controller samples exceed the limit of %.0f", o->t_end / period,
                      TP_MAX_TICKS);
        return TP_ERR_LIMIT;
    }
    r.n_out = (long)ceil(o->t_end / o->step - 1e-9) + 1;
    r.temps = malloc((size_t)(net->n_nodes > 0 ? net->n_nodes : 1) * sizeof *r.temps);
    if (!r.temps)
        return TP_ERR_NOMEM;
    if (o->ctrl0)
        r.ctrl = *o->ctrl0;
    else if (net->has_control)
        tp_control_start(&net->control, &r.ctrl);

    if (SUNContext_Create(NULL, &ctx) != 0) {
        st = TP_ERR_NOMEM;
        goto done;
    }
    y = N_VNew_Serial(n, ctx);
    yi = N_VNew_Serial(n, ctx);
    atol = N_VNew_Serial(n, ctx);
    tmp = N_VNew_Serial(n, ctx);
    if (!y || !yi || !atol || !tmp) {
        st = TP_ERR_NOMEM;
        goto done;
    }
    if (o->y0)
        memcpy(N_VGetArrayPointer(y), o->y0, (size_t)n * sizeof(double));
    else
        tp_network_initial_state(net, N_VGetArrayPointer(y));
    for (i = 0; i < n; i++)
        N_VGetArrayPointer(atol)[i] = o->rtol * (i < net->n_free ? TP_ATOL_KELVIN : TP_ATOL_JOULE);

    /* Breaks at t = 0 apply before anything else. */
    while (r.hooks && next_break < r.hooks->n_breaks && r.hooks->breaks[next_break] <= 0.0)
        r.hooks->at_break(r.hooks->user, r.hooks->breaks[next_break++], net,
                          N_VGetArrayPointer(y));
    tick(&r, 0.0, N_VGetArrayPointer(y));
    stats->ticks = net->has_control ? 1 : 0;
    if (emit(&r, 0.0, N_VGetArrayPointer(y)))
        goto done;
    r.next_out = 1;

    mem = CVodeCreate(CV_BDF, ctx);
    if (!mem || CVodeInit(mem, rhs_cb, 0.0, y) != CV_SUCCESS ||
        CVodeSVtolerances(mem, o->rtol, atol) != CV_SUCCESS ||
        CVodeSetUserData(mem, &dr) != CV_SUCCESS ||
        CVodeSetErrHandlerFn(mem, err_cb, &dr) != CV_SUCCESS ||
        CVodeSetMaxNumSteps(mem, -1) != CV_SUCCESS ||
        CVodeSetStopTime(mem, o->t_end) != CV_SUCCESS) {
        st = TP_ERR_NOMEM;
        goto done;
    }
    dr.sparse = o->linear_solver == TP_LS_SPARSE ||
                (o->linear_solver == TP_LS_AUTO && net->n_free > TP_DENSE_MAX);
    stats->sparse = dr.sparse;
    dr.jvals = malloc((size_t)(net->nnz > 0 ? net->nnz : 1) * sizeof *dr.jvals);
    dr.jy = malloc((size_t)(net->n_free > 0 ? net->n_free : 1) * sizeof *dr.jy);
    dr.jduty = malloc((size_t)(net->n_sources > 0 ? net->n_sources : 1) * sizeof *dr.jduty);
    if (!dr.jvals || !dr.jy || !dr.jduty) {
        st = TP_ERR_NOMEM;
        goto done;
    }
    if (dr.sparse) {
        dr.jac = SUNSparseMatrix(n, n, net->nnz, CSC_MAT, ctx);
        ls = dr.jac ? SUNLinSol_KLU(y, dr.jac, ctx) : NULL;
    } else {
        dr.jac = SUNDenseMatrix(n, n, ctx);
        ls = dr.jac ? SUNLinSol_Dense(y, dr.jac, ctx) : NULL;
    }
    if (!ls || CVodeSetLinearSolver(mem, ls, dr.jac) != CV_SUCCESS ||
        CVodeSetJacFn(mem, jac_cb) != CV_SUCCESS) {
        st = TP_ERR_NOMEM;
        goto done;
    }

    while (t < o->t_end && !r.stop) {
        double t_valid, t_restart = HUGE_VAL, t_break;
        int restart = 0;
        dr.cv_msg[0] = '\0';
        flag = CVode(mem, o->t_end, y, &t, CV_ONE_STEP);
        if (flag < 0) {
            add_stats(mem, stats);
            /* SUNDIALS allocates the flag's name; the caller frees it. */
            char *name = CVodeGetReturnFlagName(flag);
            st = fail(d, name ? name : "CVode failed", t, worst_node(mem, net, yi, tmp),
                      dr.cv_msg, o->rtol);
            free(name);
            goto done;
        }
        /* A break (fault, disturbance) or a tick that changes a duty inside this step ends
         * the valid part of the step there. */
        t_break = (r.hooks && next_break < r.hooks->n_breaks) ? r.hooks->breaks[next_break]
                                                               : HUGE_VAL;
        while (k_tick * period <= t && k_tick * period < t_break) {
            double tk = (double)k_tick * period;
            if (CVodeGetDky(mem, tk, 0, yi) != CV_SUCCESS) {
                st = fail(d, "interpolation", tk, NULL, dr.cv_msg, o->rtol);
                goto done;
            }
            /* Outputs up to tk use the old duty. */
            while (r.next_out < r.n_out && out_time(&r, r.next_out) < tk) {
                if (CVodeGetDky(mem, out_time(&r, r.next_out), 0, tmp) != CV_SUCCESS) {
                    st = fail(d, "interpolation", t, NULL, dr.cv_msg, o->rtol);
                    goto done;
                }
                if (emit(&r, out_time(&r, r.next_out++), N_VGetArrayPointer(tmp)))
                    goto done;
            }
            k_tick++;
            stats->ticks++;
            if (tick(&r, tk, N_VGetArrayPointer(yi))) {
                t_restart = tk;
                restart = 1;
                break;
            }
            /* One long step may hold many ticks that change nothing; the wall clock is
             * watched here too, or a tiny period would run on far past the limit. */
            if (stats->ticks % TP_WALL_CHECK_TICKS == 0 && now_seconds() - wall0 > o->wall_time) {
                tp_diag_error(d, tp_loc_none(), "run.wall_time",
                              "raise run.wall_time, or control.period",
                              "stopped at t = %.6g s: the wall-clock limit of %g s was reached",
                              tk, o->wall_time);
                add_stats(mem, stats);
                st = TP_ERR_LIMIT;
                goto done;
            }
        }
        if (!restart && t_break <= t) {
            if (CVodeGetDky(mem, t_break, 0, yi) != CV_SUCCESS) {
                st = fail(d, "interpolation", t_break, NULL, dr.cv_msg, o->rtol);
                goto done;
            }
            t_restart = t_break;
            restart = 2;
        }
        t_valid = restart ? t_restart : t;
        while (r.next_out < r.n_out && (out_time(&r, r.next_out) < t_valid ||
                                        (!restart && out_time(&r, r.next_out) <= t_valid))) {
            double to = out_time(&r, r.next_out);
            if (to == t) {
                memcpy(N_VGetArrayPointer(tmp), N_VGetArrayPointer(y), (size_t)n * sizeof(double));
            } else if (CVodeGetDky(mem, to, 0, tmp) != CV_SUCCESS) {
                st = fail(d, "interpolation", to, NULL, dr.cv_msg, o->rtol);
                goto done;
            }
            r.next_out++;
            if (emit(&r, to, N_VGetArrayPointer(tmp)))
                goto done;
        }
        if (restart) {
            if (restart == 2) {
                /* Apply every break at this time, then a tick due at the same instant. A break
                 * may change links and capacities: the cached Jacobian no longer holds. */
                while (next_break < r.hooks->n_breaks && r.hooks->breaks[next_break] <= t_restart)
                    r.hooks->at_break(r.hooks->user, r.hooks->breaks[next_break++], net,
                                      N_VGetArrayPointer(yi));
                dr.jvalid = 0;
                if (k_tick * period <= t_restart) {
                    tick(&r, (double)k_tick * period, N_VGetArrayPointer(yi));
                    k_tick++;
                    stats->ticks++;
                }
            }
            add_stats(mem, stats);
            stats->restarts++;
            t = t_restart;
            N_VScale(1.0, yi, y);
            {
                /* Start again with the last step size (capped at the controller period)
                 * instead of CVODE's initial-step estimate, which costs evaluations. */
                double hlast = 0.0;
                CVodeGetLastStep(mem, &hlast);
                if (CVodeReInit(mem, t, y) != CV_SUCCESS ||
                    CVodeSetStopTime(mem, o->t_end) != CV_SUCCESS ||
                    CVodeSetInitStep(mem, fmin(hlast, period) > 0 ? fmin(hlast, period) : 0.0) !=
                        CV_SUCCESS) {
                    st = fail(d, "restart", t, NULL, dr.cv_msg, o->rtol);
                    goto done;
                }
            }
            /* An output exactly at the restart time shows the new duty. */
            while (r.next_out < r.n_out && out_time(&r, r.next_out) <= t) {
                if (emit(&r, out_time(&r, r.next_out++), N_VGetArrayPointer(y)))
                    goto done;
            }
        }
        {
            long nst = 0;
            CVodeGetNumSteps(mem, &nst);
            if (stats->steps + nst > o->max_steps) {
                tp_diag_error(d, tp_loc_none(), "run.max_steps",
                              "raise run.max_steps, shorten run.duration, or loosen "
                              "run.tolerance",
                              "stopped at t = %.6g s after %ld integration steps", t,
                              stats->steps + nst);
                add_stats(mem, stats);
                st = TP_ERR_LIMIT;
                goto done;
            }
        }
        if (now_seconds() - wall0 > o->wall_time) {
            tp_diag_error(d, tp_loc_none(), "run.wall_time",
                          "raise run.wall_time or simplify the model (fewer grid cells)",
                          "stopped at t = %.6g s: the wall-clock limit of %g s was reached", t,
                          o->wall_time);
            add_stats(mem, stats);
            st = TP_ERR_LIMIT;
            goto done;
        }
    }
    add_stats(mem, stats);
done:
    if (st == TP_OK && r.bad_node >= 0)
        st = fail(d, "a temperature is not finite", r.bad_t, net->nodes[r.bad_node].id, NULL,
                  o->rtol);
    stats->t_reached = t;
    stats->stopped = r.stop;
    if (mem)
        CVodeFree(&mem);
    if (ls)
        SUNLinSolFree(ls);
    if (dr.jac)
        SUNMatDestroy(dr.jac);
    if (y)
        N_VDestroy(y);
    if (yi)
        N_VDestroy(yi);
    if (atol)
        N_VDestroy(atol);
    if (tmp)
        N_VDestroy(tmp);
    if (ctx)
        SUNContext_Free(&ctx);
    free(dr.jvals);
    free(dr.jy);
    free(dr.jduty);
    free(r.temps);
    return st;
}
