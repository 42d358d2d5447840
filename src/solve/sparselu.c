/* A KLU solver that keeps its factorization across restarts (solver support of the CVODE
 * driver, for gridded networks below the multigrid size).
 *
 * SUNDIALS's KLU module forgets its symbolic analysis whenever CVODE initialises the linear
 * solver, which CVodeReInit makes it do at every controller restart. The pattern of M = I -
 * gamma J never changes, so this solver analyses it once. After a restart CVODE rebuilds M from
 * the same (cached) Jacobian and the same gamma whenever the step size is the same, so the
 * numeric factorization is skipped when M is bitwise identical to the matrix last factored:
 * never when any value changed, so every solve is exact for the matrix CVODE passes. */
#include "sparselu.h"

#include "klulib.h"

#include <stdlib.h>
#include <string.h>



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

SUNLinearSolver tp_sparselu_create(SUNContext ctx)
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

void tp_sparselu_counts(SUNLinearSolver S, long *factors, long *skips)
{
    const kluwrap *k = kw_of(S);
    *factors = k->factors + k->refactors;
    *skips = k->skips;
}
