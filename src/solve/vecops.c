/* Compiled vector operations for SUNDIALS serial vectors (solver support, shared by the CVODE
 * driver and the KINSOL steady-state solver).
 *
 * The SUNDIALS libraries of the distribution may be built without optimisation (Debian 12's
 * 6.4.1 is: every serial vector operation keeps its loop variables in memory, several
 * nanoseconds per element). For gridded networks, whose vectors have tens of thousands of
 * entries, the integrator and the steady-state solver give their vectors these operations
 * instead, with the same element-wise definitions (sums may round differently). */
#include "vecops.h"

#include <math.h>
#include <string.h>

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

void tp_vecops_install(N_Vector v)
{
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

