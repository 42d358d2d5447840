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

#include "multigrid.h"

#include <math.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

#include <klu.h>

#include <cvode/cvode.h>
#include <nvector/nvector_serial.h>
#include <sundials/sundials_context.h>
#include <sunlinsol/sunlinsol_dense.h>
#include <sunlinsol/sunlinsol_klu.h>
#include <sunlinsol/sunlinsol_spgmr.h>
#include <sunmatrix/sunmatrix_dense.h>
#include <sunmatrix/sunmatrix_sparse.h>

#define TP_ATOL_KELVIN 10.0 /* K: absolute tolerance on temperatures is rtol times this */
#define TP_ATOL_JOULE 1.0   /* J: absolute tolerance on energy totals is rtol times this */

#define TP_JAC_REUSE_DT 0.5   /* K: a Jacobian is reused while no temperature moved more */
#define TP_JAC_REUSE_DUTY 0.1 /* -, and no duty moved more (duty enters only via tempco) */

/* ---- a KLU solver that keeps its factorization across restarts (gridded networks) --------
 *
 * SUNDIALS's KLU module forgets its symbolic analysis whenever CVODE initialises the linear
 * solver, which CVodeReInit makes it do at every controller restart. The pattern of M = I -
 * gamma J never changes, so this solver analyses it once. After a restart CVODE rebuilds M from
 * the same (cached) Jacobian and the same gamma whenever the step size is the same, so the
 * numeric factorization is skipped when M is bitwise identical to the matrix last factored:
 * never when any value changed, so every solve is exact for the matrix CVODE passes. */

typedef struct kluwrap {
    klu_l_common common;
    klu_l_symbolic *sym;
    klu_l_numeric *num;
    double *last;       /* values of the matrix last factored */
    sunindextype nnz;
    long factors, refactors, skips;
    int last_flag;
} kluwrap;

#define TP_KLU_RCOND_MIN 1.0e-11 /* -, below this estimate a refactorization re-pivots
                                    (SUNDIALS uses uround^(2/3), about 3.7e-11) */

static kluwrap *kw_of(SUNLinearSolver S)
{
    return S->content;
}

static SUNLinearSolver_Type kw_type(SUNLinearSolver S)
{
    (void)S;
    return SUNLINEARSOLVER_DIRECT;
}

static SUNLinearSolver_ID kw_id(SUNLinearSolver S)
{
    (void)S;
    return SUNLINEARSOLVER_CUSTOM;
}

static int kw_initialize(SUNLinearSolver S)
{
    kw_of(S)->last_flag = SUNLS_SUCCESS;
    return SUNLS_SUCCESS;
}

static int kw_setup(SUNLinearSolver S, SUNMatrix A)
{
    kluwrap *k = kw_of(S);
    sunindextype n = SUNSparseMatrix_Columns(A), nnz = SUNSparseMatrix_NNZ(A);
    SuiteSparse_long *ptr = (SuiteSparse_long *)SUNSparseMatrix_IndexPointers(A);
    SuiteSparse_long *ind = (SuiteSparse_long *)SUNSparseMatrix_IndexValues(A);
    double *val = SUNSparseMatrix_Data(A);
    nnz = ptr[n];
    if (k->num && nnz == k->nnz && memcmp(val, k->last, (size_t)nnz * sizeof *val) == 0) {
        k->skips++;
        return k->last_flag = SUNLS_SUCCESS;
    }
    if (!k->sym) {
        k->sym = klu_l_analyze((SuiteSparse_long)n, ptr, ind, &k->common);
        if (!k->sym)
            return k->last_flag = SUNLS_PACKAGE_FAIL_UNREC;
    }
    if (k->num && klu_l_refactor(ptr, ind, val, k->sym, k->num, &k->common) &&
        klu_l_rcond(k->sym, k->num, &k->common) && k->common.rcond >= TP_KLU_RCOND_MIN) {
        k->refactors++;
    } else {
        if (k->num)
            klu_l_free_numeric(&k->num, &k->common);
        k->num = klu_l_factor(ptr, ind, val, k->sym, &k->common);
        if (!k->num)
            return k->last_flag = SUNLS_PACKAGE_FAIL_REC;
        k->factors++;
    }
    if (nnz != k->nnz) {
        double *p = realloc(k->last, (size_t)nnz * sizeof *p);
        if (!p)
            return k->last_flag = SUNLS_MEM_FAIL;
        k->last = p;
        k->nnz = nnz;
    }
    memcpy(k->last, val, (size_t)nnz * sizeof *val);
    return k->last_flag = SUNLS_SUCCESS;
}

static int kw_solve(SUNLinearSolver S, SUNMatrix A, N_Vector x, N_Vector b, realtype tol)
{
    kluwrap *k = kw_of(S);
    (void)tol;
    N_VScale(1.0, b, x);
    if (!klu_l_solve(k->sym, k->num, SUNSparseMatrix_Columns(A), 1, N_VGetArrayPointer(x),
                     &k->common))
        return k->last_flag = SUNLS_PACKAGE_FAIL_REC;
    return k->last_flag = SUNLS_SUCCESS;
}

static sunindextype kw_lastflag(SUNLinearSolver S)
{
    return kw_of(S)->last_flag;
}

static int kw_free(SUNLinearSolver S)
{
    kluwrap *k;
    if (!S)
        return SUNLS_SUCCESS;
    k = kw_of(S);
    if (k) {
        if (k->num)
            klu_l_free_numeric(&k->num, &k->common);
        if (k->sym)
            klu_l_free_symbolic(&k->sym, &k->common);
        free(k->last);
        free(k);
    }
    S->content = NULL;
    SUNLinSolFreeEmpty(S);
    return SUNLS_SUCCESS;
}

static SUNLinearSolver kluwrap_create(SUNContext ctx)
{
    SUNLinearSolver S = SUNLinSolNewEmpty(ctx);
    kluwrap *k = calloc(1, sizeof *k);
    if (!S || !k) {
        free(k);
        if (S)
            SUNLinSolFreeEmpty(S);
        return NULL;
    }
    klu_l_defaults(&k->common);
    k->common.ordering = 0; /* AMD: less fill than COLAMD on plate grids (docs/grid.md) */
    S->content = k;
    S->ops->gettype = kw_type;
    S->ops->getid = kw_id;
    S->ops->initialize = kw_initialize;
    S->ops->setup = kw_setup;
    S->ops->solve = kw_solve;
    S->ops->lastflag = kw_lastflag;
    S->ops->free = kw_free;
    return S;
}

/* The multigrid preconditioner of the iterative path (large gridded networks): M = I - gamma J
 * is solved by GMRES (SPGMR) with products by the cached Jacobian, preconditioned by one V-cycle
 * of tp_mg on C M (capacities times M: the network's own symmetric form) for the temperatures,
 * then exactly for the energy totals (their rows only read temperatures). */
typedef struct precond {
    tp_mg *mg;
    int *map;       /* network pattern slot -> slot of the hierarchy's fine matrix, -1 */
    double *a;      /* fine values C (I - gamma J) */
    double *b;      /* n_free work */
    double gamma;   /* of the hierarchy's values */
    long jversion;  /* and of the Jacobian they came from */
    int valid;
    long setups;
} precond;

typedef struct driver {
    tp_network *net;
    SUNMatrix jac;
    int sparse;
    int iterative;  /* GMRES with the multigrid preconditioner */
    double *jvals;  /* pattern-ordered Jacobian values */
    double *jy;     /* the state the values were computed at */
    double *jduty;  /* and the duties */
    int jvalid;
    long jreused;
    long jversion;  /* counts evaluations of jvals */
    precond pc;
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
    dr->jversion++;
    return 0;
}

/* ---- the iterative path -------------------------------------------------------------------- */

static int psetup_cb(realtype t, N_Vector y, N_Vector fy, booleantype jok, booleantype *jcur,
                     realtype gamma, void *user)
{
    driver *dr = user;
    const tp_network *net = dr->net;
    precond *pc = &dr->pc;
    int c, k, rc;
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
    if (pc->valid && pc->gamma == gamma && pc->jversion == dr->jversion)
        return 0;
    for (c = 0; c < net->n_free; c++)
        for (k = net->colptr[c]; k < net->colptr[c + 1]; k++) {
            int r = net->rowind[k];
            if (pc->map[k] >= 0)
                pc->a[pc->map[k]] = net->nodes[net->free_nodes[r]].capacity *
                                    ((r == c ? 1.0 : 0.0) - gamma * dr->jvals[k]);
        }
    pc->valid = 0;
    if (tp_mg_setup(pc->mg, pc->a) != TP_OK)
        return 1; /* recoverable: CVODE retries with a smaller step */
    pc->gamma = gamma;
    pc->jversion = dr->jversion;
    pc->valid = 1;
    pc->setups++;
    return 0;
}

static int psolve_cb(realtype t, N_Vector y, N_Vector fy, N_Vector r, N_Vector z,
                     realtype gamma, realtype delta, int lr, void *user)
{
    driver *dr = user;
    const tp_network *net = dr->net;
    precond *pc = &dr->pc;
    const double *rr = N_VGetArrayPointer(r);
    double *zz = N_VGetArrayPointer(z);
    int nf = net->n_free, n = tp_network_state_size(net), c, k;
    (void)t;
    (void)y;
    (void)fy;
    (void)delta;
    (void)lr;
    for (c = 0; c < nf; c++)
        pc->b[c] = net->nodes[net->free_nodes[c]].capacity * rr[c];
    tp_mg_vcycle(pc->mg, pc->b, zz);
    for (c = nf; c < n; c++)
        zz[c] = rr[c];
    for (c = 0; c < nf; c++)
        for (k = net->colptr[c]; k < net->colptr[c + 1]; k++)
            if (net->rowind[k] >= nf)
                zz[net->rowind[k]] += gamma * dr->jvals[k] * zz[c];
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
    if (CVodeGetNumNonlinSolvIters(mem, &v) == CV_SUCCESS)
        st->newton_iters += v;
    if (CVodeGetNumLinIters(mem, &v) == CV_SUCCESS)
        st->lin_iters += v;
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

static int emit(run *r, double t, const double *y)
{
    tp_sample s;
    s.t = t;
    s.y = y;
    s.reading = reading_of(r, t, y);
    tp_network_temperatures(r->net, y, r->temps);
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

static tp_status fail(tp_diag *d, const char *what, double t, const char *node, const char *msg)
{
    char hint[256];
    snprintf(hint, sizeof hint,
             "tighten run.tolerance (e.g. 1e-8), check for a tiny capacity%s%s%s, or a "
             "link far stronger than the rest",
             node ? " (node '" : "", node ? node : "", node ? "')" : "");
    tp_diag_error(d, tp_loc_none(), NULL, hint, "integration failed at t = %.6g s: %s%s%s",
                  t, what, msg && *msg ? " - " : "", msg ? msg : "");
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
    if (!(o->t_end > 0) || !(o->step > 0)) {
        tp_diag_error(d, tp_loc_none(), "run", "set run.duration and run.step above zero",
                      "nothing to integrate");
        return TP_ERR_CONFIG;
    }
    r.n_out = (long)ceil(o->t_end / o->step - 1e-9) + 1;
    period = net->has_control ? net->control.period : HUGE_VAL;
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
    tp_network_refresh(net);
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
    dr.sparse = net->n_free > TP_DENSE_MAX;
    dr.iterative = net->grid && net->n_free > TP_ITERATIVE_MIN;
    stats->sparse = dr.sparse;
    stats->iterative = dr.iterative;
    dr.jvals = malloc((size_t)(net->nnz > 0 ? net->nnz : 1) * sizeof *dr.jvals);
    dr.jy = malloc((size_t)(net->n_free > 0 ? net->n_free : 1) * sizeof *dr.jy);
    dr.jduty = malloc((size_t)(net->n_sources > 0 ? net->n_sources : 1) * sizeof *dr.jduty);
    if (!dr.jvals || !dr.jy || !dr.jduty) {
        st = TP_ERR_NOMEM;
        goto done;
    }
    if (dr.iterative) {
        dr.pc.map = malloc((size_t)(net->nnz > 0 ? net->nnz : 1) * sizeof *dr.pc.map);
        dr.pc.b = malloc((size_t)net->n_free * sizeof *dr.pc.b);
        dr.pc.a = malloc((size_t)(net->nnz > 0 ? net->nnz : 1) * sizeof *dr.pc.a);
        dr.pc.mg = dr.pc.map ? tp_mg_for_network(net, dr.pc.map) : NULL;
        ls = dr.pc.mg && dr.pc.b && dr.pc.a ? SUNLinSol_SPGMR(y, SUN_PREC_RIGHT, TP_KRYLOV_MAX,
                                                              ctx)
                                            : NULL;
        if (!ls || CVodeSetLinearSolver(mem, ls, NULL) != CV_SUCCESS ||
            CVodeSetPreconditioner(mem, psetup_cb, psolve_cb) != CV_SUCCESS ||
            CVodeSetJacTimes(mem, NULL, jtimes_cb) != CV_SUCCESS) {
            st = TP_ERR_NOMEM;
            goto done;
        }
    } else if (dr.sparse) {
        dr.jac = SUNSparseMatrix(n, n, net->nnz, CSC_MAT, ctx);
        if (net->grid)
            ls = dr.jac ? kluwrap_create(ctx) : NULL;
        else
            ls = dr.jac ? SUNLinSol_KLU(y, dr.jac, ctx) : NULL;
    } else {
        dr.jac = SUNDenseMatrix(n, n, ctx);
        ls = dr.jac ? SUNLinSol_Dense(y, dr.jac, ctx) : NULL;
    }
    if (!dr.iterative && (!ls || CVodeSetLinearSolver(mem, ls, dr.jac) != CV_SUCCESS ||
                          CVodeSetJacFn(mem, jac_cb) != CV_SUCCESS)) {
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
            st = fail(d, CVodeGetReturnFlagName(flag), t, worst_node(mem, net, yi, tmp),
                      dr.cv_msg);
            goto done;
        }
        /* A break (fault, disturbance) or a tick that changes a duty inside this step ends
         * the valid part of the step there. */
        t_break = (r.hooks && next_break < r.hooks->n_breaks) ? r.hooks->breaks[next_break]
                                                               : HUGE_VAL;
        while (k_tick * period <= t && k_tick * period < t_break) {
            double tk = (double)k_tick * period;
            if (CVodeGetDky(mem, tk, 0, yi) != CV_SUCCESS) {
                st = fail(d, "interpolation", tk, NULL, dr.cv_msg);
                goto done;
            }
            /* Outputs up to tk use the old duty. */
            while (r.next_out < r.n_out && out_time(&r, r.next_out) < tk) {
                if (CVodeGetDky(mem, out_time(&r, r.next_out), 0, tmp) != CV_SUCCESS) {
                    st = fail(d, "interpolation", t, NULL, dr.cv_msg);
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
        }
        if (!restart && t_break <= t) {
            if (CVodeGetDky(mem, t_break, 0, yi) != CV_SUCCESS) {
                st = fail(d, "interpolation", t_break, NULL, dr.cv_msg);
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
                st = fail(d, "interpolation", to, NULL, dr.cv_msg);
                goto done;
            }
            r.next_out++;
            if (emit(&r, to, N_VGetArrayPointer(tmp)))
                goto done;
        }
        if (restart) {
            if (restart == 2) {
                /* Apply every break at this time, then a tick due at the same instant. */
                while (next_break < r.hooks->n_breaks && r.hooks->breaks[next_break] <= t_restart)
                    r.hooks->at_break(r.hooks->user, r.hooks->breaks[next_break++], net,
                                      N_VGetArrayPointer(yi));
                tp_network_refresh(net);
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
                    st = fail(d, "restart", t, NULL, dr.cv_msg);
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
    if (dr.iterative)
        stats->factorizations = dr.pc.setups;
    else if (ls && net->grid && dr.sparse) {
        stats->factorizations = kw_of(ls)->factors + kw_of(ls)->refactors;
        stats->factorizations_skipped = kw_of(ls)->skips;
    }
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
    tp_mg_destroy(&dr.pc.mg);
    free(dr.pc.map);
    free(dr.pc.a);
    free(dr.pc.b);
    free(dr.jvals);
    free(dr.jy);
    free(dr.jduty);
    free(r.temps);
    return st;
}
