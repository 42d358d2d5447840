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
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <klu.h>

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

/* ---- vector operations for large networks ---------------------------------------------------
 * The SUNDIALS libraries of the distribution may be built without optimisation (Debian 12's
 * 6.4.1 is: every serial vector operation keeps its loop variables in memory, several
 * nanoseconds per element). For gridded networks, whose vectors have tens of thousands of
 * entries, the integrator and the steady-state solver give their vectors these operations
 * instead, with the same element-wise definitions (sums may round differently). */

#define NV_LEN(v) ((long)NV_LENGTH_S(v))
#define NV_DAT(v) NV_DATA_S(v)

/* z = a x + b y over n elements where z shares no memory with x or y: the compiler may use
 * vector instructions (the operations below call it when the vectors are distinct, and loop
 * element by element otherwise, which is correct for z being x or y). */
static void axpby(long n, double a, const double *restrict x, double b,
                  const double *restrict y, double *restrict z)
{
    long i;
    for (i = 0; i < n; i++)
        z[i] = a * x[i] + b * y[i];
}

static void fv_linearsum(realtype a, N_Vector x, realtype b, N_Vector y, N_Vector z)
{
    const double *xd = NV_DAT(x), *yd = NV_DAT(y);
    double *zd = NV_DAT(z);
    long i, n = NV_LEN(x);
    if (zd != xd && zd != yd) {
        axpby(n, a, xd, b, yd, zd);
        return;
    }
    for (i = 0; i < n; i++)
        zd[i] = a * xd[i] + b * yd[i];
}

static void fv_const(realtype c, N_Vector z)
{
    double *zd = NV_DAT(z);
    long i, n = NV_LEN(z);
    for (i = 0; i < n; i++)
        zd[i] = c;
}

static void fv_prod(N_Vector x, N_Vector y, N_Vector z)
{
    const double *xd = NV_DAT(x), *yd = NV_DAT(y);
    double *zd = NV_DAT(z);
    long i, n = NV_LEN(x);
    for (i = 0; i < n; i++)
        zd[i] = xd[i] * yd[i];
}

static void fv_div(N_Vector x, N_Vector y, N_Vector z)
{
    const double *xd = NV_DAT(x), *yd = NV_DAT(y);
    double *zd = NV_DAT(z);
    long i, n = NV_LEN(x);
    for (i = 0; i < n; i++)
        zd[i] = xd[i] / yd[i];
}

static void scale_into(long n, double c, const double *restrict x, double *restrict z)
{
    long i;
    for (i = 0; i < n; i++)
        z[i] = c * x[i];
}

static void fv_scale(realtype c, N_Vector x, N_Vector z)
{
    const double *xd = NV_DAT(x);
    double *zd = NV_DAT(z);
    long i, n = NV_LEN(x);
    if (zd != xd) {
        if (c == 1.0)
            memcpy(zd, xd, (size_t)n * sizeof *zd); /* a copy (1.0 * x is x) */
        else
            scale_into(n, c, xd, zd);
        return;
    }
    for (i = 0; i < n; i++)
        zd[i] = c * xd[i];
}

static void fv_abs(N_Vector x, N_Vector z)
{
    const double *xd = NV_DAT(x);
    double *zd = NV_DAT(z);
    long i, n = NV_LEN(x);
    for (i = 0; i < n; i++)
        zd[i] = fabs(xd[i]);
}

static void fv_inv(N_Vector x, N_Vector z)
{
    const double *xd = NV_DAT(x);
    double *zd = NV_DAT(z);
    long i, n = NV_LEN(x);
    for (i = 0; i < n; i++)
        zd[i] = 1.0 / xd[i];
}

static void fv_addconst(N_Vector x, realtype b, N_Vector z)
{
    const double *xd = NV_DAT(x);
    double *zd = NV_DAT(z);
    long i, n = NV_LEN(x);
    for (i = 0; i < n; i++)
        zd[i] = xd[i] + b;
}

static realtype fv_dotprod(N_Vector x, N_Vector y)
{
    const double *xd = NV_DAT(x), *yd = NV_DAT(y);
    double s0 = 0.0, s1 = 0.0;
    long i, n = NV_LEN(x);
    for (i = 0; i + 1 < n; i += 2) {
        s0 += xd[i] * yd[i];
        s1 += xd[i + 1] * yd[i + 1];
    }
    if (i < n)
        s0 += xd[i] * yd[i];
    return s0 + s1;
}

static realtype fv_maxnorm(N_Vector x)
{
    const double *xd = NV_DAT(x);
    double m = 0.0;
    long i, n = NV_LEN(x);
    for (i = 0; i < n; i++)
        if (fabs(xd[i]) > m)
            m = fabs(xd[i]);
    return m;
}

static realtype fv_wsqrsum(N_Vector x, N_Vector w)
{
    const double *xd = NV_DAT(x), *wd = NV_DAT(w);
    double s0 = 0.0, s1 = 0.0;
    long i, n = NV_LEN(x);
    for (i = 0; i + 1 < n; i += 2) {
        double p = xd[i] * wd[i], q = xd[i + 1] * wd[i + 1];
        s0 += p * p;
        s1 += q * q;
    }
    if (i < n)
        s0 += (xd[i] * wd[i]) * (xd[i] * wd[i]);
    return s0 + s1;
}

static realtype fv_wrmsnorm(N_Vector x, N_Vector w)
{
    return sqrt(fv_wsqrsum(x, w) / (double)NV_LEN(x));
}

static realtype fv_wl2norm(N_Vector x, N_Vector w)
{
    return sqrt(fv_wsqrsum(x, w));
}

static realtype fv_min(N_Vector x)
{
    const double *xd = NV_DAT(x);
    double m = xd[0];
    long i, n = NV_LEN(x);
    for (i = 1; i < n; i++)
        if (xd[i] < m)
            m = xd[i];
    return m;
}

static realtype fv_l1norm(N_Vector x)
{
    const double *xd = NV_DAT(x);
    double s = 0.0;
    long i, n = NV_LEN(x);
    for (i = 0; i < n; i++)
        s += fabs(xd[i]);
    return s;
}

static void fv_compare(realtype c, N_Vector x, N_Vector z)
{
    const double *xd = NV_DAT(x);
    double *zd = NV_DAT(z);
    long i, n = NV_LEN(x);
    for (i = 0; i < n; i++)
        zd[i] = fabs(xd[i]) >= c ? 1.0 : 0.0;
}

static booleantype fv_invtest(N_Vector x, N_Vector z)
{
    const double *xd = NV_DAT(x);
    double *zd = NV_DAT(z);
    long i, n = NV_LEN(x);
    booleantype ok = SUNTRUE;
    for (i = 0; i < n; i++) {
        if (xd[i] == 0.0)
            ok = SUNFALSE;
        else
            zd[i] = 1.0 / xd[i];
    }
    return ok;
}

#define TP_NV_FUSED_MAX 16 /* vectors combined in one pass; CVODE uses at most 6 (order 5) */

static int fv_linearcombination(int nv, realtype *c, N_Vector *X, N_Vector z)
{
    const double *x[TP_NV_FUSED_MAX];
    double *zd = NV_DAT(z);
    long i, n = NV_LEN(z);
    int j, m = nv < TP_NV_FUSED_MAX ? nv : TP_NV_FUSED_MAX;
    if (nv < 1)
        return -1;
    for (j = 0; j < m; j++)
        x[j] = NV_DAT(X[j]);
    switch (m) { /* the short combinations of CVODE's interpolation, one pass each */
    case 1:
        for (i = 0; i < n; i++)
            zd[i] = c[0] * x[0][i];
        break;
    case 2:
        for (i = 0; i < n; i++)
            zd[i] = c[0] * x[0][i] + c[1] * x[1][i];
        break;
    case 3:
        for (i = 0; i < n; i++)
            zd[i] = c[0] * x[0][i] + c[1] * x[1][i] + c[2] * x[2][i];
        break;
    case 4:
        for (i = 0; i < n; i++)
            zd[i] = c[0] * x[0][i] + c[1] * x[1][i] + c[2] * x[2][i] + c[3] * x[3][i];
        break;
    case 5:
        for (i = 0; i < n; i++)
            zd[i] = c[0] * x[0][i] + c[1] * x[1][i] + c[2] * x[2][i] + c[3] * x[3][i] +
                    c[4] * x[4][i];
        break;
    case 6:
        for (i = 0; i < n; i++)
            zd[i] = c[0] * x[0][i] + c[1] * x[1][i] + c[2] * x[2][i] + c[3] * x[3][i] +
                    c[4] * x[4][i] + c[5] * x[5][i];
        break;
    default:
        for (i = 0; i < n; i++) {
            double s = c[0] * x[0][i];
            for (j = 1; j < m; j++)
                s += c[j] * x[j][i];
            zd[i] = s;
        }
        break;
    }
    /* Longer combinations (Krylov solvers) add the rest one vector at a time; z may be X[0]
     * only, as in SUNDIALS. */
    for (j = m; j < nv; j++) {
        const double *xj = NV_DAT(X[j]);
        for (i = 0; i < n; i++)
            zd[i] += c[j] * xj[i];
    }
    return 0;
}

static int fv_scaleaddmulti(int nv, realtype *a, N_Vector x, N_Vector *Y, N_Vector *Z)
{
    const double *xd = NV_DAT(x);
    long i, n = NV_LEN(x);
    int j;
    for (j = 0; j < nv; j++) {
        const double *yd = NV_DAT(Y[j]);
        double *zd = NV_DAT(Z[j]);
        for (i = 0; i < n; i++)
            zd[i] = a[j] * xd[i] + yd[i];
    }
    return 0;
}

static int fv_dotprodmulti(int nv, N_Vector x, N_Vector *Y, realtype *d)
{
    int j;
    for (j = 0; j < nv; j++)
        d[j] = fv_dotprod(x, Y[j]);
    return 0;
}

/* ---- compiled dense matrix operations and LU ------------------------------------------------
 * Debian's SUNDIALS is built without optimisation, and for small networks its dense matrix
 * operations (copy, zero, I + c A) and LU (SUNDlsMat_denseGETRF/GETRS) are about 40 % of an
 * integration. These replace them with the same algorithms compiled with the project: the
 * column-oriented LU with partial pivoting of SUNDlsMat_denseGETRF, and its triangular solves.
 * They are installed in the ops tables of the dense matrix (and of its clones) and of the dense
 * linear solver. */

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

void tp_integrate_vector_ops(void *vector)
{
    N_Vector v = vector;
    v->ops->nvlinearsum = fv_linearsum;
    v->ops->nvconst = fv_const;
    v->ops->nvprod = fv_prod;
    v->ops->nvdiv = fv_div;
    v->ops->nvscale = fv_scale;
    v->ops->nvabs = fv_abs;
    v->ops->nvinv = fv_inv;
    v->ops->nvaddconst = fv_addconst;
    v->ops->nvdotprod = fv_dotprod;
    v->ops->nvmaxnorm = fv_maxnorm;
    v->ops->nvwrmsnorm = fv_wrmsnorm;
    v->ops->nvmin = fv_min;
    v->ops->nvwl2norm = fv_wl2norm;
    v->ops->nvl1norm = fv_l1norm;
    v->ops->nvcompare = fv_compare;
    v->ops->nvinvtest = fv_invtest;
    v->ops->nvlinearcombination = fv_linearcombination;
    v->ops->nvscaleaddmulti = fv_scaleaddmulti;
    v->ops->nvdotprodmulti = fv_dotprodmulti;
    v->ops->nvdotprodlocal = fv_dotprod;
    v->ops->nvmaxnormlocal = fv_maxnorm;
    v->ops->nvminlocal = fv_min;
    v->ops->nvl1normlocal = fv_l1norm;
    v->ops->nvinvtestlocal = fv_invtest;
    v->ops->nvwsqrsumlocal = fv_wsqrsum;
}

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
 * of tp_multigrid on C M (capacities times M: the network's own symmetric form) for the
 * temperatures, then exactly for the energy totals (their rows only read temperatures). */
#define TP_MULTIGRID_CYCLES 1 /* V-cycles per preconditioner solve (docs/grid.md, "Solver") */

typedef struct precond {
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
    if (tp_multigrid_setup(pc->mg, pc->a) != TP_OK)
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
        pc->b[c] = pc->cap[c] * rr[c];
    tp_multigrid_solve(pc->mg, pc->b, zz, TP_MULTIGRID_CYCLES);
    for (c = nf; c < n; c++)
        zz[c] = rr[c];
    for (k = 0; k < pc->n_quad; k++) {
        const int *q = pc->quad + 3 * k;
        zz[q[0]] += gamma * dr->jvals[q[2]] * zz[q[1]];
    }
    return 0;
}

/* The preconditioner's arrays: capacities by state, the energy-total entries of the pattern. */
static int precond_init(precond *pc, const tp_network *net)
{
    int nf = net->n_free, c, k, m = 0;
    pc->map = malloc((size_t)(net->nnz > 0 ? net->nnz : 1) * sizeof *pc->map);
    pc->b = malloc((size_t)nf * sizeof *pc->b);
    pc->cap = malloc((size_t)nf * sizeof *pc->cap);
    pc->a = malloc((size_t)(net->nnz > 0 ? net->nnz : 1) * sizeof *pc->a);
    pc->quad = malloc((size_t)(3 * (net->nnz > 0 ? net->nnz : 1)) * sizeof *pc->quad);
    if (!pc->map || !pc->b || !pc->cap || !pc->a || !pc->quad)
        return -1;
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
    return pc->mg ? 0 : -1;
}

static void precond_clear(precond *pc)
{
    tp_multigrid_destroy(&pc->mg);
    free(pc->map);
    free(pc->a);
    free(pc->b);
    free(pc->cap);
    free(pc->quad);
}

/* ---- a solver that applies the preconditioner ----------------------------------------------
 * The multigrid V-cycle is a close approximation of M^-1 (it shrinks the error about tenfold),
 * so GMRES would spend most of its work on vector operations and a second preconditioner solve
 * to form its answer. This solver returns x = P^-1 b. An inexact solve only slows Newton's
 * convergence; CVODE's nonlinear test still decides when a step is solved (docs/grid.md). */

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

static SUNLinearSolver mgsolve_create(SUNContext ctx)
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
    S->ops->getid = kw_id;
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

typedef struct run {
    tp_network *net;
    const tp_integrate_opts *o;
    const tp_hooks *hooks;
    tp_control_state ctrl;
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
    const tp_net_node *sensor;
    double reading;
    if (!r->net->has_control)
        return TP_UNSET;
    /* Only the sensor's temperature: a large network is not copied at every tick. */
    sensor = &r->net->nodes[r->net->control.sensor];
    reading = tp_control_reading(&r->net->control.reading,
                                 sensor->state >= 0 ? y[sensor->state] : sensor->t0);
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
    tp_diag_error(d, tp_diag_loc_none(), NULL, hint, "integration failed at t = %.6g s%s: %s%s%s",
                  t, where, what, msg && *msg ? " - " : "", msg ? msg : "");
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
    double t = 0.0, wall0 = now_seconds(), period, width;

    memset(stats, 0, sizeof *stats);
    memset(&dr, 0, sizeof dr);
    memset(&r, 0, sizeof r);
    dr.net = net;
    r.net = net;
    r.o = o;
    r.hooks = o->hooks;
    r.bad_node = -1;
    if (!(o->t_end > 0) || !(o->step > 0)) {
        tp_diag_error(d, tp_diag_loc_none(), "run", "set run.duration and run.step above zero",
                      "nothing to integrate");
        return TP_ERR_CONFIG;
    }
    /* Sizes are judged in double before any conversion or allocation: a step of 1e-300 s
     * made (long)(t_end / step) undefined and the run silently empty. */
    /* A history keeps every node of a lumped network, but only per-layer statistics (mean,
     * minimum, maximum) and the nodes outside the grid of a gridded one. */
    width = net->grid ? 3.0 * net->grid->n_layers + net->grid->lumped->n_nodes + net->n_sources
                      : (double)(net->n_nodes + net->n_sources);
    if (!(o->t_end / o->step + 1.0 <= TP_MAX_OUTPUT_ROWS) ||
        !((o->t_end / o->step + 1.0) * width <= TP_MAX_OUTPUT_VALUES)) {
        tp_diag_error(d, tp_diag_loc_none(), "run.step",
                      "raise run.step (the output interval) or shorten run.duration",
                      "%.3g output rows of %.0f values exceed the limits of %.0f rows and %.0f "
                      "values",
                      o->t_end / o->step + 1.0, width, TP_MAX_OUTPUT_ROWS, TP_MAX_OUTPUT_VALUES);
        return TP_ERR_LIMIT;
    }
    period = net->has_control ? net->control.period : HUGE_VAL;
    if (net->has_control && !(o->t_end / period <= TP_MAX_TICKS)) {
        tp_diag_error(d, tp_diag_loc_none(), "control.period", "raise control.period",
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
    if (y)
        tp_integrate_vector_ops(y); /* CVODE's vectors are clones of y and share its ops */
    yi = y ? N_VClone(y) : NULL;
    atol = y ? N_VClone(y) : NULL;
    tmp = y ? N_VClone(y) : NULL;
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
    dr.sparse = o->linear_solver == TP_LS_SPARSE ||
                (o->linear_solver == TP_LS_AUTO && net->n_free > TP_DENSE_MAX);
    dr.iterative =
        o->linear_solver == TP_LS_AUTO && net->grid && net->n_free >= TP_MULTIGRID_MIN_UNKNOWNS;
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
        ls = precond_init(&dr.pc, net) == 0 ? mgsolve_create(ctx) : NULL;
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
        if (ls) {
            fm_ops(dr.jac);
            ls->ops->setup = fl_setup;
            ls->ops->solve = fl_solve;
        }
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
            char *name = CVodeGetReturnFlagName(flag); /* allocated by SUNDIALS: ours to free */
            add_stats(mem, stats);
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
            if (net->grid && tk == t) {
                /* The step ended on the tick: the interpolant there is the step's state (the
                 * same numbers); a large network saves the interpolation. */
                N_VScale(1.0, y, yi);
            } else if (CVodeGetDky(mem, tk, 0, yi) != CV_SUCCESS) {
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
                tp_diag_error(d, tp_diag_loc_none(), "run.wall_time",
                              "raise run.wall_time, or control.period",
                              "stopped at t = %.6g s: the wall-clock limit of %g s was reached", tk,
                              o->wall_time);
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
                 * instead of CVODE's initial-step estimate, which costs evaluations. A fixed
                 * fraction of it was tried and dropped: 0.5 saved 17 % of the right-hand sides
                 * on the 24 V demo but cost 28 to 100 % more steps on the other demos and the
                 * gridded benchmark, whose restarts rarely fail the error test
                 * (docs/performance.md). */
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
                tp_diag_error(d, tp_diag_loc_none(), "run.max_steps",
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
            tp_diag_error(d, tp_diag_loc_none(), "run.wall_time",
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
    if (dr.iterative) {
        stats->factorizations = dr.pc.setups;
        stats->jac_evals = dr.jversion; /* CVODE does not count the preconditioner's */
    }
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
    precond_clear(&dr.pc);
    free(dr.jvals);
    free(dr.jy);
    free(dr.jduty);
    free(r.temps);
    return st;
}
