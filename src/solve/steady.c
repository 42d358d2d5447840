/* Steady states.
 *
 * Unknowns x = [T_1 .. T_n] (free temperatures, K), plus the duty u of the controlled source
 * for the holding point. Residuals, in watts:
 *   F_i(x) = sum_links Q_ji(T) + sum_sources u_s P_si(T)      (net heat into node i)
 * and for the holding point F_{n+1} = T_sensor + offset - setpoint (K).
 * Solution: secant iterations (each link replaced by its secant conductance Q/dT, which
 * converge from a cold start where the natural-convection derivative vanishes), then KINSOL's
 * Newton method with a line search and the analytic Jacobian to full accuracy. Linear algebra:
 * the compiled dense LU up to TP_DENSE_MAX unknowns (the integrator's, denselu.c), KLU sparse
 * direct above, on the network's sparsity pattern restricted to the temperatures (opened at its
 * first use, klulib.h, so that small networks do not load it); for large gridded networks
 * Newton-Krylov (GMRES) with the multigrid preconditioner and the compiled vector operations
 * (solver support). The network is only read: the duties and the target are the solve's own
 * (an evaluator of its own, and arguments). */
#include "steady.h"

#include "denselu.h"
#include "description.h"
#include "integrate.h"
#include "klulib.h"
#include "eval.h"
#include "multigrid.h"
#include "units.h"
#include "vecops.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <kinsol/kinsol.h>
#include <nvector/nvector_serial.h>
#include <sundials/sundials_context.h>
#include <sunlinsol/sunlinsol_spgmr.h>

#define TP_SECANT_ITERS 60       /* secant iterations at most before Newton */
#define TP_SECANT_TOL 1.0e-3     /* K: secant phase ends when no temperature moves more */
#define TP_MAX_MOVE 300.0        /* K: largest temperature change of one secant step */
#define TP_FNORM_TOL 1.0e-9      /* W (scaled): KINSOL residual tolerance */
#define TP_KIN_ITERS 200         /* Newton iterations at most */
#define TP_STEADY_KRYLOV 40      /* Krylov vectors of GMRES (gridded networks) */
#define TP_STEADY_RESTARTS 20    /* GMRES restarts at most (gridded networks) */

typedef struct sys {
    const tp_network *net;
    tp_eval *ev;     /* the duties and scratch of this solve */
    int n;           /* unknowns */
    int nf;          /* free temperatures */
    int hold;        /* nonzero: unknown u appended */
    int src;         /* controlled source (hold) */
    int sensor;      /* state index of the sensor node (hold) */
    double target;   /* setpoint minus reading offset, K (hold) */
    double *y;       /* network state vector scratch (nf + quadratures) */
    double *ydot;
    double *jnet;    /* network Jacobian values (pattern order) */
    double *pk;      /* per-node power of the controlled source */
    double *temps;   /* n_nodes work */
    /* CSC pattern of the system */
    int nnz;
    int *colptr, *rowind;
    int *map;        /* network slot -> system slot (-1: dropped) */
    int *ucol;       /* hold: slots of column u, one per source node (-1 when fixed) */
    int urow;        /* hold: slot of (n-1, sensor) */
    /* Gridded networks: Newton-Krylov with the multigrid preconditioner (docs/grid.md). */
    int iterative;
    tp_multigrid *mg;
    int *mgslot;     /* system slot -> slot of the hierarchy's fine matrix, -1 */
    double *mgval;   /* the temperature block of the system Jacobian */
    double *jsys;    /* the system Jacobian (pattern order) at the last setup */
    double *w;       /* hold: the preconditioner applied to the column of u */
    double *ju;      /* the unknowns jsys was computed at */
    double *ytmp;    /* n_free work */
    double *jv;      /* dense solves: the Jacobian values in pattern order */
    char msg[512];
} sys;

static void sys_clear(sys *s)
{
    tp_eval_destroy(&s->ev);
    free(s->temps);
    free(s->y);
    free(s->ydot);
    free(s->jnet);
    free(s->pk);
    free(s->colptr);
    free(s->rowind);
    free(s->map);
    free(s->ucol);
    tp_multigrid_destroy(&s->mg);
    free(s->mgslot);
    free(s->mgval);
    free(s->jsys);
    free(s->w);
    free(s->ju);
    free(s->ytmp);
    free(s->jv);
}

/* The multigrid hierarchy of a gridded network's temperature block. */
static tp_status sys_init_iterative(sys *s)
{
    const tp_network *net = s->net;
    int k, *netmap = malloc((size_t)(net->nnz > 0 ? net->nnz : 1) * sizeof *netmap);
    s->iterative = 1;
    s->mgslot = malloc((size_t)(s->nnz > 0 ? s->nnz : 1) * sizeof *s->mgslot);
    s->mgval = calloc((size_t)(net->nnz > 0 ? net->nnz : 1), sizeof *s->mgval);
    s->jsys = calloc((size_t)(s->nnz > 0 ? s->nnz : 1), sizeof *s->jsys);
    s->w = calloc((size_t)s->nf + 1, sizeof *s->w);
    s->ju = calloc((size_t)s->n + 1, sizeof *s->ju);
    s->ytmp = calloc((size_t)s->nf + 1, sizeof *s->ytmp);
    s->mg = netmap ? tp_multigrid_for_network(net, netmap) : NULL;
    if (!netmap || !s->mgslot || !s->mgval || !s->jsys || !s->w || !s->ju || !s->ytmp || !s->mg) {
        free(netmap);
        return TP_ERR_NOMEM;
    }
    for (k = 0; k < s->nnz; k++)
        s->mgslot[k] = -1;
    for (k = 0; k < net->nnz; k++)
        if (s->map[k] >= 0 && netmap[k] >= 0)
            s->mgslot[s->map[k]] = netmap[k];
    free(netmap);
    return TP_OK;
}

/* Order of (row, source node) pairs: by row, then by node. */
static int pair_cmp(const void *pa, const void *pb)
{
    const int *a = pa, *b = pb;
    if (a[0] != b[0])
        return a[0] < b[0] ? -1 : 1;
    return a[1] < b[1] ? -1 : a[1] > b[1];
}

static tp_status sys_init(sys *s, const tp_network *net, int hold, double target)
{
    int nf = net->n_free, c, k, m = 0;
    const tp_net_source *src = hold ? &net->sources[net->control.source] : NULL;
    memset(s, 0, sizeof *s);
    s->net = net;
    if (tp_eval_create(net, &s->ev) != TP_OK)
        return TP_ERR_NOMEM;
    s->temps = malloc((size_t)(net->n_nodes > 0 ? net->n_nodes : 1) * sizeof *s->temps);
    s->nf = nf;
    s->hold = hold;
    s->n = nf + (hold ? 1 : 0);
    s->y = calloc((size_t)tp_network_state_size(net), sizeof *s->y);
    s->ydot = calloc((size_t)tp_network_state_size(net), sizeof *s->ydot);
    s->jnet = calloc((size_t)net->nnz + 1, sizeof *s->jnet);
    s->colptr = calloc((size_t)s->n + 1, sizeof *s->colptr);
    s->rowind = malloc(((size_t)net->nnz + (src ? (size_t)src->n_nodes : 0) + 2) *
                       sizeof *s->rowind);
    s->map = malloc(((size_t)net->nnz + 1) * sizeof *s->map);
    s->pk = calloc(src ? (size_t)src->n_nodes : 1, sizeof *s->pk);
    s->ucol = malloc((src ? (size_t)src->n_nodes : 1) * sizeof *s->ucol);
    if (!s->temps || !s->y || !s->ydot || !s->jnet || !s->colptr || !s->rowind || !s->map ||
        !s->pk || !s->ucol) {
        sys_clear(s);
        return TP_ERR_NOMEM;
    }
    if (hold) {
        s->src = net->control.source;
        s->sensor = net->nodes[net->control.sensor].state;
        s->target = target - net->control.reading.offset;
    }
    /* Columns of the temperatures: the network's rows < nf, then the hold row last. */
    for (c = 0; c < nf; c++) {
        s->colptr[c] = m;
        for (k = net->colptr[c]; k < net->colptr[c + 1]; k++) {
            if (net->rowind[k] < nf) {
                s->map[k] = m;
                s->rowind[m++] = net->rowind[k];
            } else {
                s->map[k] = -1;
            }
        }
        if (hold && c == s->sensor) {
            s->urow = m;
            s->rowind[m++] = nf;
        }
    }
    for (k = net->colptr[nf]; k < net->nnz; k++)
        s->map[k] = -1;
    if (hold) {
        /* Column u: one entry per node of the controlled source, sorted by row (state). */
        int (*rows)[2] = malloc((size_t)src->n_nodes * sizeof *rows), j, n_rows = 0;
        if (!rows) {
            sys_clear(s);
            return TP_ERR_NOMEM;
        }
        s->colptr[nf] = m;
        for (j = 0; j < src->n_nodes; j++) {
            int st = net->nodes[src->nodes[j]].state;
            s->ucol[j] = -1;
            if (st >= 0) {
                rows[n_rows][0] = st;
                rows[n_rows++][1] = j;
            }
        }
        qsort(rows, (size_t)n_rows, sizeof *rows, pair_cmp);
        for (j = 0; j < n_rows; j++) {
            s->rowind[m] = rows[j][0];
            s->ucol[rows[j][1]] = m++;
        }
        free(rows);
    }
    s->colptr[s->n] = m;
    s->nnz = m;
    if (net->grid && net->n_free >= TP_MULTIGRID_MIN_UNKNOWNS && sys_init_iterative(s) != TP_OK) {
        sys_clear(s);
        return TP_ERR_NOMEM;
    }
    return TP_OK;
}

/* Load x into the state vector (temperatures) and the evaluator (the duty, for hold). */
static void load(sys *s, const double *x)
{
    memcpy(s->y, x, (size_t)s->nf * sizeof *x);
    if (s->hold)
        tp_eval_set_duty(s->ev, s->src, x[s->nf]);
}

static int residual(sys *s, const double *x, double *f)
{
    int i, rc;
    load(s, x);
    rc = tp_eval_rhs(s->ev, s->y, s->ydot);
    for (i = 0; i < s->nf; i++)
        f[i] = s->ydot[i] * s->net->nodes[s->net->free_nodes[i]].capacity;
    if (s->hold)
        f[s->nf] = x[s->sensor] - s->target;
    for (i = 0; i < s->n; i++)
        if (!isfinite(f[i]))
            return 1;
    return rc;
}

/* System Jacobian values (pattern order) at x; secant or exact link derivatives. */
static int jacobian(sys *s, const double *x, double *vals, int use_secant)
{
    const tp_network *net = s->net;
    int c, k, rc;
    load(s, x);
    rc = tp_eval_jacobian(s->ev, s->y, s->jnet, use_secant);
    memset(vals, 0, (size_t)s->nnz * sizeof *vals);
    for (c = 0; c < s->nf; c++)
        for (k = net->colptr[c]; k < net->colptr[c + 1]; k++)
            if (s->map[k] >= 0)
                vals[s->map[k]] = s->jnet[k] * net->nodes[net->free_nodes[net->rowind[k]]].capacity;
    if (s->hold) {
        const tp_net_source *src = &net->sources[s->src];
        tp_eval_temperatures(s->ev, s->y, s->temps);
        tp_network_source_split(src, s->temps, 1.0, s->pk);
        for (k = 0; k < src->n_nodes; k++)
            if (s->ucol[k] >= 0)
                vals[s->ucol[k]] = s->pk[k];
        vals[s->urow] = 1.0;
    }
    return rc;
}

static void copy_pattern(const sys *s, SUNMatrix J)
{
    sunindextype *ptr = SUNSparseMatrix_IndexPointers(J), *ind = SUNSparseMatrix_IndexValues(J);
    int k;
    for (k = 0; k <= s->n; k++)
        ptr[k] = s->colptr[k];
    for (k = 0; k < s->nnz; k++)
        ind[k] = s->rowind[k];
}

static int kin_f(N_Vector x, N_Vector f, void *user)
{
    return residual(user, N_VGetArrayPointer(x), N_VGetArrayPointer(f));
}

/* The system Jacobian at x (secant or exact link derivatives) into the direct solver's matrix
 * J: sparse on the pattern, or dense, scattered from the pattern order. */
static int fill_matrix(sys *s, const double *x, SUNMatrix J, int use_secant)
{
    int c, k, rc;
    if (SUNMatGetID(J) == SUNMATRIX_SPARSE) {
        copy_pattern(s, J);
        return jacobian(s, x, SUNSparseMatrix_Data(J), use_secant);
    }
    rc = jacobian(s, x, s->jv, use_secant);
    SUNMatZero(J);
    for (c = 0; c < s->n; c++)
        for (k = s->colptr[c]; k < s->colptr[c + 1]; k++)
            SM_ELEMENT_D(J, s->rowind[k], c) = s->jv[k];
    return rc;
}

static int kin_jac(N_Vector x, N_Vector f, SUNMatrix J, void *user, N_Vector t1, N_Vector t2)
{
    (void)f;
    (void)t1;
    (void)t2;
    return fill_matrix(user, N_VGetArrayPointer(x), J, 0);
}

static void kin_err(int code, const char *module, const char *function, char *msg, void *user)
{
    sys *s = user;
    (void)code;
    (void)module;
    snprintf(s->msg, sizeof s->msg, "%s: %s", function, msg);
}

static void kin_info(const char *module, const char *function, char *msg, void *user)
{
    (void)module;
    (void)function;
    (void)msg;
    (void)user;
}

/* ---- Newton-Krylov for gridded networks ------------------------------------------------------
 * The system Jacobian is K = [A p; e_s^T 0] (the border only for the holding point: p the
 * power of the controlled source per unit duty, e_s the sensor's row). The preconditioner
 * replaces A^-1 by one multigrid V-cycle M and eliminates the border exactly:
 *   y = M v_T,  u = (y_s - v_u) / (M p)_s,  x = y - (M p) u. */

static int kin_psetup(N_Vector uu, N_Vector us, N_Vector fval, N_Vector fs, void *user)
{
    sys *s = user;
    int k;
    (void)us;
    (void)fval;
    (void)fs;
    if (jacobian(s, N_VGetArrayPointer(uu), s->jsys, 0) != 0)
        return 1;
    memcpy(s->ju, N_VGetArrayPointer(uu), (size_t)s->n * sizeof *s->ju);
    for (k = 0; k < s->nnz; k++)
        if (s->mgslot[k] >= 0)
            s->mgval[s->mgslot[k]] = s->jsys[k];
    if (tp_multigrid_setup(s->mg, s->mgval) != TP_OK)
        return 1;
    if (s->hold) {
        for (k = 0; k < s->nf; k++)
            s->ytmp[k] = 0.0;
        for (k = s->colptr[s->nf]; k < s->colptr[s->nf + 1]; k++)
            s->ytmp[s->rowind[k]] = s->jsys[k];
        tp_multigrid_vcycle(s->mg, s->ytmp, s->w);
        if (!(s->w[s->sensor] != 0.0))
            return 1;
    }
    return 0;
}

static int kin_psolve(N_Vector uu, N_Vector us, N_Vector fval, N_Vector fs, N_Vector vv,
                      void *user)
{
    sys *s = user;
    double *v = N_VGetArrayPointer(vv);
    int k;
    (void)uu;
    (void)us;
    (void)fval;
    (void)fs;
    tp_multigrid_vcycle(s->mg, v, s->ytmp);
    if (s->hold) {
        double u = (s->ytmp[s->sensor] - v[s->nf]) / s->w[s->sensor];
        for (k = 0; k < s->nf; k++)
            v[k] = s->ytmp[k] - s->w[k] * u;
        v[s->nf] = u;
    } else {
        memcpy(v, s->ytmp, (size_t)s->nf * sizeof *v);
    }
    return 0;
}

/* K v with the Jacobian of the last preconditioner setup (refreshed when u moved). */
static int kin_jtimes(N_Vector vv, N_Vector jv, N_Vector uu, booleantype *new_uu, void *user)
{
    sys *s = user;
    const double *v = N_VGetArrayPointer(vv);
    double *out = N_VGetArrayPointer(jv);
    int c, k;
    if (*new_uu) {
        /* Usually the preconditioner setup has just computed it at these unknowns. */
        if (memcmp(s->ju, N_VGetArrayPointer(uu), (size_t)s->n * sizeof *s->ju) != 0) {
            if (jacobian(s, N_VGetArrayPointer(uu), s->jsys, 0) != 0)
                return 1;
            memcpy(s->ju, N_VGetArrayPointer(uu), (size_t)s->n * sizeof *s->ju);
        }
        *new_uu = SUNFALSE;
    }
    memset(out, 0, (size_t)s->n * sizeof *out);
    for (c = 0; c < s->n; c++)
        for (k = s->colptr[c]; k < s->colptr[c + 1]; k++)
            out[s->rowind[k]] += s->jsys[k] * v[c];
    return 0;
}

/* Every free node must reach a fixed node through links, or no steady state exists. */
static const char *isolated_node(const tp_network *net)
{
    int *ok = tp_network_grounded(net), i;
    const char *bad = NULL;
    if (!ok)
        return NULL;
    for (i = 0; i < net->n_nodes && !bad; i++)
        if (!ok[i])
            bad = net->nodes[i].id;
    free(ok);
    return bad;
}

/* The direct solver of the system and its matrix: the compiled dense LU up to TP_DENSE_MAX
 * unknowns, KLU on the sparse pattern above (opened here at its first use). TP_OK;
 * TP_ERR_NOMEM; or TP_ERR_SOLVER when KLU cannot be opened (reported in d). On failure *J and
 * *ls are NULL. */
static tp_status direct_solver(sys *s, N_Vector y, SUNContext ctx, SUNMatrix *J,
                               SUNLinearSolver *ls, tp_diag *d)
{
    tp_status st;
    *J = NULL;
    *ls = NULL;
    if (s->n <= TP_DENSE_MAX) {
        if (!s->jv)
            s->jv = malloc((size_t)(s->nnz > 0 ? s->nnz : 1) * sizeof *s->jv);
        return s->jv ? tp_denselu_create(y, ctx, J, ls) : TP_ERR_NOMEM;
    }
    st = tp_klulib_load(d);
    if (st != TP_OK)
        return st;
    *J = SUNSparseMatrix(s->n, s->n, s->nnz > 0 ? s->nnz : 1, CSC_MAT, ctx);
    *ls = *J ? SUNLinSol_KLU(y, *J, ctx) : NULL;
    if (!*ls) {
        if (*J)
            SUNMatDestroy(*J);
        *J = NULL;
        return TP_ERR_NOMEM;
    }
    return TP_OK;
}

/* The secant phase: solve J_sec dx = -F by the direct solver, damped to TP_MAX_MOVE per step,
 * from x (n entries) in place, until no temperature moves more than TP_SECANT_TOL or
 * TP_SECANT_ITERS steps; a step that cannot be taken ends it early (Newton takes over). `b` and
 * `xx` are work vectors of n entries. TP_OK, TP_ERR_NOMEM, or direct_solver's TP_ERR_SOLVER. */
static tp_status secant_phase(sys *s, double *x, N_Vector b, N_Vector xx, SUNContext ctx,
                              tp_diag *d)
{
    SUNMatrix Js;
    SUNLinearSolver lss;
    double *f = malloc((size_t)s->n * sizeof *f);
    int it, i;
    tp_status st = f ? direct_solver(s, xx, ctx, &Js, &lss, d) : TP_ERR_NOMEM;
    if (!f)
        Js = NULL, lss = NULL;
    for (it = 0; st == TP_OK && it < TP_SECANT_ITERS; it++) {
        double move = 0.0, scale = 1.0;
        if (residual(s, x, f) != 0 || fill_matrix(s, x, Js, 1) != 0)
            break;
        for (i = 0; i < s->n; i++)
            N_VGetArrayPointer(b)[i] = -f[i];
        if (SUNLinSolSetup(lss, Js) != 0 || SUNLinSolSolve(lss, Js, xx, b, 0.0) != 0)
            break;
        for (i = 0; i < s->nf; i++)
            move = fmax(move, fabs(N_VGetArrayPointer(xx)[i]));
        if (move > TP_MAX_MOVE)
            scale = TP_MAX_MOVE / move;
        for (i = 0; i < s->n; i++)
            x[i] += scale * N_VGetArrayPointer(xx)[i];
        for (i = 0; i < s->nf; i++)
            if (x[i] < 1.0)
                x[i] = 1.0; /* temperatures stay positive (radiation uses T^4) */
        if (move * scale < TP_SECANT_TOL)
            break;
    }
    if (lss)
        SUNLinSolFree(lss);
    if (Js)
        SUNMatDestroy(Js);
    free(f);
    return st;
}

/* KINSOL set up for the system: Newton with the analytic Jacobian and the direct solver, or
 * for a gridded network Newton-Krylov (GMRES) with the multigrid preconditioner. 0, or -1
 * when a call fails. */
static int kinsol_setup(sys *s, void *kin, N_Vector u, SUNLinearSolver ls, SUNMatrix J)
{
    if (KINInit(kin, kin_f, u) != KIN_SUCCESS || KINSetUserData(kin, s) != KIN_SUCCESS ||
        KINSetErrHandlerFn(kin, kin_err, s) != KIN_SUCCESS ||
        KINSetInfoHandlerFn(kin, kin_info, s) != KIN_SUCCESS ||
        KINSetFuncNormTol(kin, TP_FNORM_TOL) != KIN_SUCCESS ||
        KINSetScaledStepTol(kin, 1e-13) != KIN_SUCCESS ||
        KINSetNumMaxIters(kin, TP_KIN_ITERS) != KIN_SUCCESS ||
        KINSetMaxSetupCalls(kin, 1) != KIN_SUCCESS)
        return -1;
    if (s->iterative)
        return SUNLinSol_SPGMRSetMaxRestarts(ls, TP_STEADY_RESTARTS) != SUNLS_SUCCESS ||
                       KINSetLinearSolver(kin, ls, NULL) != KIN_SUCCESS ||
                       KINSetPreconditioner(kin, kin_psetup, kin_psolve) != KIN_SUCCESS ||
                       KINSetJacTimesVecFn(kin, kin_jtimes) != KIN_SUCCESS
                   ? -1
                   : 0;
    return KINSetLinearSolver(kin, ls, J) != KIN_SUCCESS ||
                   KINSetJacFn(kin, kin_jac) != KIN_SUCCESS
               ? -1
               : 0;
}

/* Solve the system from the initial guess in x (n entries): the secant phase (not for a
 * gridded network, which starts from its lumped network's steady state instead, close enough
 * for Newton), then KINSOL's Newton method with a line search to full accuracy. */
static tp_status solve(sys *s, double *x, long *iters, tp_diag *d)
{
    SUNContext ctx = NULL;
    N_Vector u = NULL, us = NULL, fs = NULL;
    SUNMatrix J = NULL;
    SUNLinearSolver ls = NULL;
    void *kin = NULL;
    tp_status st = TP_OK;
    int i, flag;

    if (SUNContext_Create(NULL, &ctx) != 0)
        return TP_ERR_NOMEM;
    u = N_VNew_Serial(s->n, ctx);
    if (u && s->iterative)
        tp_vecops_install(u); /* KINSOL's vectors are clones of u */
    us = u ? N_VClone(u) : NULL;
    fs = u ? N_VClone(u) : NULL;
    if (!u || !us || !fs)
        st = TP_ERR_NOMEM;
    if (st == TP_OK && !s->iterative)
        st = secant_phase(s, x, fs, us, ctx, d);
    if (st == TP_OK) {
        for (i = 0; i < s->n; i++) {
            N_VGetArrayPointer(u)[i] = x[i];
            N_VGetArrayPointer(us)[i] = i < s->nf ? 1.0 / 300.0 : 1.0;
            N_VGetArrayPointer(fs)[i] = 1.0;
        }
        kin = KINCreate(ctx);
        if (s->iterative)
            ls = SUNLinSol_SPGMR(u, SUN_PREC_RIGHT, TP_STEADY_KRYLOV, ctx);
        else
            st = direct_solver(s, u, ctx, &J, &ls, d);
        if (st == TP_OK && (!kin || !ls || kinsol_setup(s, kin, u, ls, J) != 0))
            st = TP_ERR_NOMEM;
    }
    if (st == TP_OK) {
        flag = KINSol(kin, u, KIN_LINESEARCH, us, fs);
        KINGetNumNonlinSolvIters(kin, iters);
        if (flag < 0) {
            char *name = KINGetReturnFlagName(flag); /* allocated by SUNDIALS: ours to free */
            tp_diag_error(d, tp_diag_loc_none(), NULL,
                          "check for nodes coupled only by very weak or very strong links",
                          "the steady-state solver failed (%s)%s%s", name ? name : "?",
                          s->msg[0] ? ": " : "", s->msg);
            free(name);
            st = TP_ERR_SOLVER;
        } else {
            memcpy(x, N_VGetArrayPointer(u), (size_t)s->n * sizeof *x);
        }
    }
    if (kin)
        KINFree(&kin);
    if (ls)
        SUNLinSolFree(ls);
    if (J)
        SUNMatDestroy(J);
    if (u)
        N_VDestroy(u);
    if (us)
        N_VDestroy(us);
    if (fs)
        N_VDestroy(fs);
    if (ctx)
        SUNContext_Free(&ctx);
    return st;
}

/* Fill `out` from the solution x. A solution with a temperature that is not finite (or not
 * above absolute zero) is refused, so no NaN reaches a report or an output file. */
static tp_status finish(const tp_network *net, sys *s, const double *x, tp_steady *out,
                        tp_diag *d)
{
    int i;
    out->temps = malloc((size_t)net->n_nodes * sizeof *out->temps);
    if (!out->temps)
        return TP_ERR_NOMEM;
    load(s, x);
    tp_eval_temperatures(s->ev, s->y, out->temps);
    for (i = 0; i < net->n_nodes; i++)
        if (!isfinite(out->temps[i]) || !(out->temps[i] > 0.0)) {
            tp_diag_error(d, tp_diag_loc_none(), NULL,
                          "check for nodes coupled only by very weak or very strong links",
                          "the steady-state solver returned an impossible temperature for "
                          "node '%s'",
                          net->nodes[i].id);
            return TP_ERR_SOLVER;
        }
    out->power = 0.0;
    out->wire = 0.0;
    for (i = 0; i < net->n_sources; i++) {
        double w;
        double p = tp_network_source_power(&net->sources[i], out->temps,
                                           tp_eval_duty(s->ev, i), &w);
        if (!net->has_control || i == net->control.source) {
            out->power += p;
            out->wire += w;
        }
    }
    out->duty = net->has_control ? tp_eval_duty(s->ev, net->control.source) : 1.0;
    out->reading = net->has_control
                       ? out->temps[net->control.sensor] + net->control.reading.offset
                       : TP_UNSET;
    return TP_OK;
}

static tp_status check_grounded(const tp_network *net, tp_diag *d)
{
    const char *bad = isolated_node(net);
    if (bad) {
        tp_diag_error(d, tp_diag_loc_none(), NULL,
                      "link every node, directly or through others, to a fixed node (the room)",
                      "no steady state exists: node '%s' has no path to a fixed node", bad);
        return TP_ERR_SOLVER;
    }
    return TP_OK;
}

/* A gridded network's starting point: the steady state of the lumped network it was refined
 * from (which has the grid's controller, reading the node the grid's sensor was refined from),
 * each cell at its layer's temperature (and, for the holding point, the lumped duty). Returns
 * 0, or -1 when the lumped network has no such state. */
static int lumped_guess(const tp_network *net, int hold, double target, double duty_scale,
                        double *x)
{
    const tp_network *lp = net->grid->lumped;
    const int *from = net->grid->from;
    tp_steady st;
    tp_diag quiet;
    int i, rc;
    tp_diag_init(&quiet, NULL);
    rc = hold ? tp_steady_hold_at(lp, target, &st, &quiet)
              : tp_steady_full(lp, duty_scale, &st, &quiet);
    if (rc != TP_OK)
        return -1;
    for (i = 0; i < net->n_free; i++)
        x[i] = st.temps[from[net->free_nodes[i]]];
    if (hold)
        x[net->n_free] = st.duty;
    tp_steady_clear(&st);
    return 0;
}

tp_status tp_steady_full(const tp_network *net, double duty_scale, tp_steady *out, tp_diag *d)
{
    sys s;
    double *x;
    tp_status st;
    int i;
    memset(out, 0, sizeof *out);
    st = check_grounded(net, d);
    if (st != TP_OK)
        return st;
    if (sys_init(&s, net, 0, TP_UNSET) != TP_OK)
        return TP_ERR_NOMEM;
    x = malloc(((size_t)s.n + 1) * sizeof *x);
    if (!x) {
        sys_clear(&s);
        return TP_ERR_NOMEM;
    }
    for (i = 0; i < net->n_sources; i++) {
        int controlled = !net->has_control || i == net->control.source;
        tp_eval_set_duty(s.ev, i, (controlled ? duty_scale : 1.0) * net->sources[i].max_duty);
    }
    for (i = 0; i < s.nf; i++)
        x[i] = net->nodes[net->free_nodes[i]].t0;
    if (s.iterative)
        lumped_guess(net, 0, TP_UNSET, duty_scale, x);
    st = solve(&s, x, &out->iterations, d);
    if (st == TP_OK)
        st = finish(net, &s, x, out, d);
    free(x);
    sys_clear(&s);
    return st;
}

static tp_status need_control(const tp_network *net, tp_diag *d)
{
    if (net->has_control)
        return TP_OK;
    tp_diag_error(d, tp_diag_loc_none(), "control", "add a control: section with a setpoint",
                  "a holding point needs a controller");
    return TP_ERR_CONFIG;
}

tp_status tp_steady_hold_at(const tp_network *net, double target, tp_steady *out, tp_diag *d)
{
    tp_steady full;
    tp_status st;
    memset(out, 0, sizeof *out);
    if (need_control(net, d) != TP_OK)
        return TP_ERR_CONFIG;
    /* Reachable at all? The full-power equilibrium bounds the reading. */
    st = tp_steady_full(net, 1.0, &full, d);
    if (st != TP_OK)
        return st;
    full.reading = full.temps[net->control.sensor] + net->control.reading.offset;
    st = tp_steady_hold_given(net, target, &full, out, d);
    tp_steady_clear(&full);
    return st;
}

tp_status tp_steady_hold_given(const tp_network *net, double target, const tp_steady *full,
                               tp_steady *out, tp_diag *d)
{
    sys s;
    double *x, umax;
    tp_status st;
    int i;
    memset(out, 0, sizeof *out);
    if (need_control(net, d) != TP_OK)
        return TP_ERR_CONFIG;
    umax = net->sources[net->control.source].max_duty;
    if (full->reading < target) {
        tp_diag_error(d, tp_diag_loc_none(), "control.setpoint",
                      "more heater power, better insulation, or a lower setpoint",
                      "the setpoint %.2f degC is out of reach: at full power (duty %.2f) the "
                      "reading levels off at %.2f degC",
                      target - TP_KELVIN_0C, umax, full->reading - TP_KELVIN_0C);
        return TP_ERR_SOLVER;
    }
    if (sys_init(&s, net, 1, target) != TP_OK)
        return TP_ERR_NOMEM;
    x = malloc((size_t)s.n * sizeof *x);
    if (!x) {
        sys_clear(&s);
        return TP_ERR_NOMEM;
    }
    /* Start between the room and the full-power state, at the duty that scales to it. */
    {
        double tr = full->reading, t0 = net->nodes[net->control.sensor].t0;
        double frac = (target - t0) / fmax(tr - t0, 1e-9);
        for (i = 0; i < s.nf; i++) {
            int node = net->free_nodes[i];
            x[i] = net->nodes[node].t0 + frac * (full->temps[node] - net->nodes[node].t0);
        }
        x[s.nf] = umax * fmin(fmax(frac, 0.0), 1.0);
    }
    if (s.iterative)
        lumped_guess(net, 1, target, 1.0, x);
    st = solve(&s, x, &out->iterations, d);
    if (st == TP_OK)
        st = finish(net, &s, x, out, d);
    free(x);
    sys_clear(&s);
    return st;
}

tp_status tp_steady_hold(const tp_network *net, tp_steady *out, tp_diag *d)
{
    return tp_steady_hold_at(net, net->control.setpoint, out, d);
}

void tp_steady_clear(tp_steady *s)
{
    if (!s)
        return;
    free(s->temps);
    s->temps = NULL;
}

void tp_steady_state_vector(const tp_network *net, const tp_steady *s, double *y)
{
    int i;
    for (i = 0; i < net->n_free; i++)
        y[i] = s->temps[net->free_nodes[i]];
    for (i = 0; i < TP_N_QUAD; i++)
        y[net->n_free + i] = 0.0;
}
