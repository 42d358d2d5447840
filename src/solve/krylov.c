/* The multigrid-preconditioned linear solver of CVODE's Newton iteration on large gridded
 * networks: the preconditioner of M = I - gamma J (one V-cycle of tp_multigrid on C M for the
 * temperatures, the energy totals exactly) and the linear solver that applies it. */
#include "krylov.h"

#include <stdlib.h>
#include <string.h>

#include <nvector/nvector_serial.h>

#include "multigrid.h"

struct tp_krylov {
    const tp_network *net;
    tp_multigrid *mg;
    int *map;       /* network pattern slot -> slot of the hierarchy's fine matrix, -1 */
    double *a;      /* fine values C (I - gamma J) */
    double *b;      /* n_free work */
    double *cap;    /* n_free: capacity of each state, J/K */
    int n_quad;     /* Jacobian entries in the energy-total rows */
    int *quad;      /* 3 per entry: row, column, pattern slot */
    double gamma;   /* of the hierarchy's values */
    long jversion;  /* and of the Jacobian they came from */
    int valid;
    long setups;
};

void tp_krylov_destroy(tp_krylov **k)
{
    tp_krylov *pc;
    if (!k || !*k)
        return;
    pc = *k;
    tp_multigrid_destroy(&pc->mg);
    free(pc->map);
    free(pc->a);
    free(pc->b);
    free(pc->cap);
    free(pc->quad);
    free(pc);
    *k = NULL;
}

/* The preconditioner's arrays: capacities by state, the energy-total entries of the pattern. */
tp_krylov *tp_krylov_create(const tp_network *net)
{
    tp_krylov *pc = calloc(1, sizeof *pc);
    int nf = net->n_free, c, k, m = 0, nnz = net->nnz > 0 ? net->nnz : 1;
    if (!pc)
        return NULL;
    pc->net = net;
    pc->map = malloc((size_t)nnz * sizeof *pc->map);
    pc->b = malloc((size_t)(nf > 0 ? nf : 1) * sizeof *pc->b);
    pc->cap = malloc((size_t)(nf > 0 ? nf : 1) * sizeof *pc->cap);
    pc->a = malloc((size_t)nnz * sizeof *pc->a);
    pc->quad = malloc((size_t)(3 * nnz) * sizeof *pc->quad);
    if (!pc->map || !pc->b || !pc->cap || !pc->a || !pc->quad) {
        tp_krylov_destroy(&pc);
        return NULL;
    }
    for (c = 0; c < nf; c++) {
        pc->cap[c] = net->nodes[net->free_nodes[c]].capacity;
        for (k = net->colptr[c]; k < net->colptr[c + 1]; k++)
            if (net->rowind[k] >= nf) {
                pc->quad[3 * m] = net->rowind[k];
                pc->quad[3 * m + 1] = c;
                pc->quad[3 * m + 2] = k;
                m++;
            }
    }
    pc->n_quad = m;
    pc->mg = tp_multigrid_for_network(net, pc->map);
    if (!pc->mg)
        tp_krylov_destroy(&pc);
    return pc;
}

int tp_krylov_setup(tp_krylov *pc, const double *jvals, long jversion, double gamma)
{
    const tp_network *net = pc->net;
    int c, k;
    if (pc->valid && pc->gamma == gamma && pc->jversion == jversion)
        return 0;
    for (c = 0; c < net->n_free; c++)
        for (k = net->colptr[c]; k < net->colptr[c + 1]; k++) {
            int r = net->rowind[k];
            if (pc->map[k] >= 0)
                pc->a[pc->map[k]] = net->nodes[net->free_nodes[r]].capacity *
                                    ((r == c ? 1.0 : 0.0) - gamma * jvals[k]);
        }
    pc->valid = 0;
    if (tp_multigrid_setup(pc->mg, pc->a) != TP_OK)
        return 1;
    pc->gamma = gamma;
    pc->jversion = jversion;
    pc->valid = 1;
    pc->setups++;
    return 0;
}

void tp_krylov_solve(tp_krylov *pc, const double *jvals, double gamma, const double *r,
                     double *z)
{
    const tp_network *net = pc->net;
    int nf = net->n_free, n = tp_network_state_size(net), c, k;
    for (c = 0; c < nf; c++)
        pc->b[c] = pc->cap[c] * r[c];
    tp_multigrid_solve(pc->mg, pc->b, z, TP_MULTIGRID_CYCLES);
    for (c = nf; c < n; c++)
        z[c] = r[c];
    for (k = 0; k < pc->n_quad; k++) {
        const int *q = pc->quad + 3 * k;
        z[q[0]] += gamma * jvals[q[2]] * z[q[1]];
    }
}

long tp_krylov_setups(const tp_krylov *pc)
{
    return pc->setups;
}

/* ---- a solver that applies the preconditioner ---------------------------------------------- */

typedef struct mgsolve {
    void *a_data, *p_data;
    SUNATimesFn atimes; /* kept because CVODE requires iterative solvers to take it */
    SUNPSetupFn psetup;
    SUNPSolveFn psolve;
    int last_flag;
} mgsolve;

static mgsolve *ms_of(SUNLinearSolver S)
{
    return S->content;
}

static SUNLinearSolver_Type ms_type(SUNLinearSolver S)
{
    (void)S;
    return SUNLINEARSOLVER_ITERATIVE;
}

static SUNLinearSolver_ID ms_id(SUNLinearSolver S)
{
    (void)S;
    return SUNLINEARSOLVER_CUSTOM;
}

static int ms_setatimes(SUNLinearSolver S, void *data, SUNATimesFn atimes)
{
    ms_of(S)->a_data = data;
    ms_of(S)->atimes = atimes;
    return SUNLS_SUCCESS;
}

static int ms_setprec(SUNLinearSolver S, void *data, SUNPSetupFn psetup, SUNPSolveFn psolve)
{
    ms_of(S)->p_data = data;
    ms_of(S)->psetup = psetup;
    ms_of(S)->psolve = psolve;
    return SUNLS_SUCCESS;
}

static int ms_initialize(SUNLinearSolver S)
{
    ms_of(S)->last_flag = SUNLS_SUCCESS;
    return SUNLS_SUCCESS;
}

static int ms_setup(SUNLinearSolver S, SUNMatrix A)
{
    mgsolve *m = ms_of(S);
    (void)A;
    if (m->psetup && m->psetup(m->p_data) != 0)
        return m->last_flag = SUNLS_PSET_FAIL_REC;
    return m->last_flag = SUNLS_SUCCESS;
}

static int ms_solve(SUNLinearSolver S, SUNMatrix A, N_Vector x, N_Vector b, realtype tol)
{
    mgsolve *m = ms_of(S);
    (void)A;
    if (m->psolve(m->p_data, b, x, tol, SUN_PREC_LEFT) != 0)
        return m->last_flag = SUNLS_PSOLVE_FAIL_REC;
    return m->last_flag = SUNLS_SUCCESS;
}

static int ms_numiters(SUNLinearSolver S)
{
    (void)S;
    return 1;
}

static realtype ms_resnorm(SUNLinearSolver S)
{
    (void)S;
    return 0.0;
}

static sunindextype ms_lastflag(SUNLinearSolver S)
{
    return ms_of(S)->last_flag;
}

static int ms_free(SUNLinearSolver S)
{
    if (!S)
        return SUNLS_SUCCESS;
    free(S->content);
    S->content = NULL;
    SUNLinSolFreeEmpty(S);
    return SUNLS_SUCCESS;
}

SUNLinearSolver tp_krylov_solver(SUNContext ctx)
{
    SUNLinearSolver S = SUNLinSolNewEmpty(ctx);
    mgsolve *m = calloc(1, sizeof *m);
    if (!S || !m) {
        free(m);
        if (S)
            SUNLinSolFreeEmpty(S);
        return NULL;
    }
    S->content = m;
    S->ops->gettype = ms_type;
    S->ops->getid = ms_id;
    S->ops->setatimes = ms_setatimes;
    S->ops->setpreconditioner = ms_setprec;
    S->ops->initialize = ms_initialize;
    S->ops->setup = ms_setup;
    S->ops->solve = ms_solve;
    S->ops->numiters = ms_numiters;
    S->ops->resnorm = ms_resnorm;
    S->ops->lastflag = ms_lastflag;
    S->ops->free = ms_free;
    return S;
}
