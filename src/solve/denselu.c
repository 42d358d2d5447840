/* The compiled dense LU for small networks (solver support of the CVODE driver).
 *
 * Debian's SUNDIALS is built without optimisation, and for small networks its dense matrix
 * operations (copy, zero, I + c A) and LU (SUNDlsMat_denseGETRF/GETRS) are about 40 % of an
 * integration. These replace them with the same algorithms compiled with the project: the
 * column-oriented LU with partial pivoting of SUNDlsMat_denseGETRF, and its triangular solves.
 * They are installed in the ops tables of the dense matrix (and of its clones) and of the dense
 * linear solver. */
#include "denselu.h"

#include <math.h>
#include <string.h>

#include <sunlinsol/sunlinsol_dense.h>

static SUNMatrix fm_clone(SUNMatrix a);

static void fm_install(SUNMatrix a)
{
    a->ops->clone = fm_clone;
}

static int fm_zero(SUNMatrix a)
{
    memset(SM_DATA_D(a), 0, (size_t)SM_LDATA_D(a) * sizeof(realtype));
    return SUNMAT_SUCCESS;
}

static int fm_copy(SUNMatrix a, SUNMatrix b)
{
    memcpy(SM_DATA_D(b), SM_DATA_D(a), (size_t)SM_LDATA_D(a) * sizeof(realtype));
    return SUNMAT_SUCCESS;
}

/* A = c A + I */
static int fm_scaleaddi(realtype c, SUNMatrix a)
{
    sunindextype i, n = SM_COLUMNS_D(a), m = SM_ROWS_D(a);
    realtype *d = SM_DATA_D(a);
    for (i = 0; i < m * n; i++)
        d[i] *= c;
    for (i = 0; i < n && i < m; i++)
        d[i * m + i] += 1.0;
    return SUNMAT_SUCCESS;
}

static void fm_ops(SUNMatrix a)
{
    a->ops->zero = fm_zero;
    a->ops->copy = fm_copy;
    a->ops->scaleaddi = fm_scaleaddi;
    fm_install(a);
}

static SUNMatrix fm_clone(SUNMatrix a)
{
    SUNMatrix b = SUNDenseMatrix(SM_ROWS_D(a), SM_COLUMNS_D(a), a->sunctx);
    if (b)
        fm_ops(b);
    return b;
}

static int fl_setup(SUNLinearSolver s, SUNMatrix a)
{
    SUNLinearSolverContent_Dense c = (SUNLinearSolverContent_Dense)s->content;
    sunindextype n = SM_COLUMNS_D(a), i, j, k, l;
    realtype **col = SM_COLS_D(a);
    for (k = 0; k < n; k++) {
        realtype *ck = col[k], mult;
        /* The pivot: the largest magnitude in column k at or below the diagonal. */
        l = k;
        for (i = k + 1; i < n; i++)
            if (fabs(ck[i]) > fabs(ck[l]))
                l = i;
        c->pivots[k] = l;
        if (ck[l] == 0.0) {
            c->last_flag = k + 1;
            return SUNLS_LUFACT_FAIL;
        }
        if (l != k)
            for (j = 0; j < n; j++) {
                realtype t = col[j][l];
                col[j][l] = col[j][k];
                col[j][k] = t;
            }
        mult = 1.0 / ck[k];
        for (i = k + 1; i < n; i++)
            ck[i] *= mult;
        for (j = k + 1; j < n; j++) {
            realtype *cj = col[j], akj = cj[k];
            if (akj != 0.0)
                for (i = k + 1; i < n; i++)
                    cj[i] -= akj * ck[i];
        }
    }
    c->last_flag = 0;
    return SUNLS_SUCCESS;
}

static int fl_solve(SUNLinearSolver s, SUNMatrix a, N_Vector x, N_Vector b, realtype tol)
{
    SUNLinearSolverContent_Dense c = (SUNLinearSolverContent_Dense)s->content;
    sunindextype n = SM_COLUMNS_D(a), i, k;
    realtype **col = SM_COLS_D(a), *v = N_VGetArrayPointer(x);
    (void)tol;
    memcpy(v, N_VGetArrayPointer(b), (size_t)n * sizeof *v);
    for (k = 0; k < n; k++) {
        sunindextype p = c->pivots[k];
        if (p != k) {
            realtype t = v[k];
            v[k] = v[p];
            v[p] = t;
        }
    }
    for (k = 0; k < n - 1; k++) {
        realtype *ck = col[k], vk = v[k];
        for (i = k + 1; i < n; i++)
            v[i] -= ck[i] * vk;
    }
    for (k = n - 1; k > 0; k--) {
        realtype *ck = col[k];
        v[k] /= ck[k];
        for (i = 0; i < k; i++)
            v[i] -= ck[i] * v[k];
    }
    v[0] /= col[0][0];
    c->last_flag = 0;
    return SUNLS_SUCCESS;
}

tp_status tp_denselu_create(N_Vector y, SUNContext ctx, SUNMatrix *a, SUNLinearSolver *ls)
{
    sunindextype n = N_VGetLength(y);
    *ls = NULL;
    *a = SUNDenseMatrix(n, n, ctx);
    if (!*a)
        return TP_ERR_NOMEM;
    *ls = SUNLinSol_Dense(y, *a, ctx);
    if (!*ls) {
        SUNMatDestroy(*a);
        *a = NULL;
        return TP_ERR_NOMEM;
    }
    fm_ops(*a);
    (*ls)->ops->setup = fl_setup;
    (*ls)->ops->solve = fl_solve;
    return TP_OK;
}
