/* Fitted percentiles of a tolerance study (tailfit.h; docs/sweep.md, "Fitted percentiles").
 *
 * The estimator of the distribution function F(t) = P(Y <= t) is a control-variate (difference)
 * estimator: with a surrogate g of the metric, F(t) = P(g(X) <= t) + E[1{Y <= t} - 1{g(X) <= t}];
 * the first term is estimated from many cheap draws of X, the second from the real samples (T. C.
 * Hesterberg and B. L. Nelson, "Control variates for probability and quantile estimation",
 * Management Science 44 (1998) 1295; the generalized difference estimator of C.-E. Särndal,
 * B. Swensson and J. Wretman, Model Assisted Survey Sampling, Springer 1992, sec. 6.3; both from
 * memory). When g is close to Y the indicators rarely differ, and the real samples' term has a
 * far smaller variance than the plain count's p (1 - p) / n.
 *
 * Cross-fitting keeps the estimator unbiased whatever the fit: the samples are split in two
 * halves, the surface fitted on one is corrected by the other, and the two estimates are averaged
 * (V. Chernozhukov et al., "Double/debiased machine learning", Econometrics Journal 21 (2018) C1;
 * from memory). The interval of a quantile inverts the distribution function's normal interval
 * at the estimate (R. S. Woodruff, "Confidence intervals for medians and other position
 * measures", JASA 47 (1952) 635; from memory). */
#include "tailfit.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "gsllib.h"

#define TAIL_SALT 0x7461696c2d666974ULL /* separates the surrogate's draws, any constant */
#define Z975 1.959963984540054          /* 97.5 % point of the standard normal (GSL gives 1.959964) */
#define BISECT_MAX 200                  /* bisection steps when inverting the distribution */

/* One half of the samples, with the surface fitted on the other half. */
typedef struct half {
    long n;
    double *u;       /* [n][d] standardised inputs */
    double *y, *h;   /* the metric and the surface, in sample order */
    double *ys, *hs; /* sorted copies */
    double *g;       /* the surface at TP_TAILFIT_DRAWS draws, sorted */
    double *coef;    /* the surface's coefficients (fitted on the other half) */
} half;

int tp_tailfit_terms(int n_params)
{
    if (n_params <= TP_TAILFIT_FULL_PARAMS)
        return 1 + n_params + n_params * (n_params + 1) / 2;
    return 1 + 2 * n_params;
}

static void features(const double *u, int d, double *f)
{
    int a, b, j = 0;
    f[j++] = 1.0;
    for (a = 0; a < d; a++)
        f[j++] = u[a];
    for (a = 0; a < d; a++)
        for (b = a; b < d; b++)
            if (d <= TP_TAILFIT_FULL_PARAMS || a == b)
                f[j++] = u[a] * u[b];
}

static double surface(const double *coef, const double *u, int d, int p, double *f)
{
    double s = 0.0;
    int j;
    features(u, d, f);
    for (j = 0; j < p; j++)
        s += coef[j] * f[j];
    return s;
}

/* Centre and scale that make a parameter's draws standard: a normal spread's nominal and sigma,
 * a uniform spread's midpoint and half-width. */
static void centre_scale(const tp_sweep_param *q, double *c, double *s)
{
    double scale = q->relative ? fabs(q->nominal) : 1.0;
    if (q->kind == TP_SPREAD_NORMAL) {
        *c = q->nominal;
        *s = q->sigma * scale;
    } else {
        double lo = q->relative ? q->nominal + q->low * scale : q->low;
        double hi = q->relative ? q->nominal + q->high * scale : q->high;
        *c = 0.5 * (lo + hi);
        *s = 0.5 * (hi - lo);
    }
    if (!(*s > 0))
        *s = 1.0;
}

/* Least squares of the surface on a half (GSL's SVD solver). 0, or -1 when GSL fails. */
static int fit(const half *train, int d, int p, double *coef)
{
    gsl_matrix *x = gsl_matrix_alloc((size_t)train->n, (size_t)p);
    gsl_matrix *cov = gsl_matrix_alloc((size_t)p, (size_t)p);
    gsl_vector *y = gsl_vector_alloc((size_t)train->n), *c = gsl_vector_alloc((size_t)p);
    gsl_multifit_linear_workspace *w = gsl_multifit_linear_alloc((size_t)train->n, (size_t)p);
    double chisq;
    long i;
    int j, rc = -1;
    if (x && cov && y && c && w) {
        for (i = 0; i < train->n; i++) {
            features(train->u + (size_t)i * (size_t)d, d, x->data + (size_t)i * x->tda);
            y->data[(size_t)i * y->stride] = train->y[i];
        }
        if (gsl_multifit_linear(x, y, c, cov, &chisq, w) == 0) {
            for (j = 0; j < p; j++)
                coef[j] = c->data[(size_t)j * c->stride];
            rc = 0;
        }
    }
    if (w)
        gsl_multifit_linear_free(w);
    if (c)
        gsl_vector_free(c);
    if (y)
        gsl_vector_free(y);
    if (cov)
        gsl_matrix_free(cov);
    if (x)
        gsl_matrix_free(x);
    return rc;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

tp_tailfit_memo *tp_tailfit_memo_new(void)
{
    return calloc(1, sizeof(tp_tailfit_memo));
}

void tp_tailfit_memo_free(tp_tailfit_memo *memo)
{
    if (memo)
        free(memo->u);
    free(memo);
}

/* The standardised draws of the parameters for both halves: independent uniform hashes of (seed,
 * draw, parameter), through the inverse normal distribution function for normal spreads. From
 * the plan's memo when it has them; else into `own` (freed by the caller). NULL: no memory. */
static const double *draw_table(const tp_sweep_plan *plan, double **own)
{
    size_t d = (size_t)plan->n_params, n = 2 * (size_t)TP_TAILFIT_DRAWS, j, k;
    double *u;
    *own = NULL;
    if (plan->memo && plan->memo->u)
        return plan->memo->u;
    if (!(u = malloc(n * d * sizeof *u)))
        return NULL;
    for (j = 0; j < n; j++)
        for (k = 0; k < d; k++) {
            double v = tp_sweep_unit(tp_sweep_hash(plan->seed ^ TAIL_SALT, j, k));
            u[j * d + k] = plan->params[k].kind == TP_SPREAD_NORMAL ? gsl_cdf_ugaussian_Pinv(v)
                                                                     : 2.0 * v - 1.0;
        }
    if (plan->memo)
        plan->memo->u = u;
    else
        *own = u;
    return u;
}

/* A double's bits as an unsigned key in the same order (finite values): negative numbers have
 * every bit flipped, the others only the sign bit. */
static uint64_t order_key(double x)
{
    uint64_t b;
    memcpy(&b, &x, sizeof b);
    return (b >> 63) ? ~b : b | 0x8000000000000000ULL;
}

/* Sort n finite doubles in place: least-significant-digit radix sort on order_key, 8 passes of
 * one byte (the draws are many; qsort's comparisons took three quarters of a summary's time).
 * `tmp` holds n keys and n values. */
static void radix_sort(double *a, size_t n, uint64_t *tmp)
{
    uint64_t *key = tmp, *other = tmp + n, *sw;
    size_t i, count[256];
    int pass;
    for (i = 0; i < n; i++)
        key[i] = order_key(a[i]);
    for (pass = 0; pass < 8; pass++) {
        int shift = 8 * pass;
        size_t sum = 0, c;
        memset(count, 0, sizeof count);
        for (i = 0; i < n; i++)
            count[(key[i] >> shift) & 0xff]++;
        for (i = 0; i < 256; i++) {
            c = count[i];
            count[i] = sum;
            sum += c;
        }
        for (i = 0; i < n; i++)
            other[count[(key[i] >> shift) & 0xff]++] = key[i];
        sw = key;
        key = other;
        other = sw;
    }
    /* After an even number of passes the sorted keys are back in tmp[0..n-1]. */
    for (i = 0; i < n; i++) {
        uint64_t b = (key[i] >> 63) ? key[i] & 0x7fffffffffffffffULL : ~key[i];
        memcpy(&a[i], &b, sizeof b);
    }
}

/* The surface at the half's own draws, sorted; `tmp` as radix_sort's. */
static void draws(const double *table, int which, half *hf, int d, int p, double *f, uint64_t *tmp)
{
    const double *u = table + (size_t)which * TP_TAILFIT_DRAWS * (size_t)d;
    long j;
    for (j = 0; j < TP_TAILFIT_DRAWS; j++)
        hf->g[j] = surface(hf->coef, u + (size_t)j * (size_t)d, d, p, f);
    radix_sort(hf->g, TP_TAILFIT_DRAWS, tmp);
}

/* How many of the sorted a[0..n-1] are <= t. */
static long count_le(const double *a, long n, double t)
{
    long lo = 0, hi = n;
    while (lo < hi) {
        long mid = lo + (hi - lo) / 2;
        if (a[mid] <= t)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

/* The cross-fitted estimate of F(t). */
static double cdf(const half *hf, double t)
{
    double s = 0.0;
    int k;
    for (k = 0; k < 2; k++)
        s += (double)count_le(hf[k].g, TP_TAILFIT_DRAWS, t) / TP_TAILFIT_DRAWS +
             (double)(count_le(hf[k].ys, hf[k].n, t) - count_le(hf[k].hs, hf[k].n, t)) /
                 (double)hf[k].n;
    return 0.5 * s;
}

/* The variance of cdf(t), and in *draws_part the share of it the draws cause. The real samples'
 * term bounds the variance of 1{Y <= t} - 1{g <= t} by the rate at which the two differ, counted
 * with one more discordant sample than seen (so that none seen is not taken for certainty). */
static double cdf_variance(const half *hf, double t, double *draws_part)
{
    double v = 0.0, vd = 0.0;
    long i;
    int k;
    for (k = 0; k < 2; k++) {
        double g = (double)count_le(hf[k].g, TP_TAILFIT_DRAWS, t) / TP_TAILFIT_DRAWS;
        long disc = 0;
        for (i = 0; i < hf[k].n; i++)
            disc += (hf[k].y[i] <= t) != (hf[k].h[i] <= t);
        vd += g * (1.0 - g) / TP_TAILFIT_DRAWS;
        v += (double)(disc + 1) / (double)(hf[k].n + 1) / (double)hf[k].n;
    }
    *draws_part = 0.25 * vd;
    return 0.25 * (v + vd);
}

/* The largest element <= t of the sorted arrays of both halves (the jump of the estimate at or
 * below t), or t when there is none. */
static double jump_at(const half *hf, double t)
{
    double best = -HUGE_VAL;
    const double *arr[3];
    long len[3], c;
    int k, a;
    for (k = 0; k < 2; k++) {
        arr[0] = hf[k].g;
        len[0] = TP_TAILFIT_DRAWS;
        arr[1] = hf[k].ys;
        arr[2] = hf[k].hs;
        len[1] = len[2] = hf[k].n;
        for (a = 0; a < 3; a++)
            if ((c = count_le(arr[a], len[a], t)) > 0 && arr[a][c - 1] > best)
                best = arr[a][c - 1];
    }
    return isfinite(best) ? best : t;
}

/* The smallest t found with F(t) >= target, by bisection between the smallest and the largest
 * value (F is 0 below both and 1 at the largest), then moved to the jump it lies on. NaN when the
 * target is outside (0, 1). */
static double invert(const half *hf, double target)
{
    double lo = HUGE_VAL, hi = -HUGE_VAL, t;
    int k, it;
    if (!(target > 0.0 && target < 1.0))
        return (double)NAN;
    for (k = 0; k < 2; k++) {
        lo = fmin(lo, fmin(hf[k].g[0], fmin(hf[k].ys[0], hf[k].hs[0])));
        hi = fmax(hi, fmax(hf[k].g[TP_TAILFIT_DRAWS - 1],
                           fmax(hf[k].ys[hf[k].n - 1], hf[k].hs[hf[k].n - 1])));
    }
    lo -= 1.0 + fabs(lo);
    for (it = 0; it < BISECT_MAX; it++) {
        double mid = 0.5 * (lo + hi);
        if (mid <= lo || mid >= hi)
            break;
        if (cdf(hf, mid) >= target)
            hi = mid;
        else
            lo = mid;
    }
    t = jump_at(hf, hi);
    return cdf(hf, t) >= target ? t : hi;
}

/* Which half sample i belongs to: alternate samples for random draws (independent), alternate
 * replicates for lhs and sobol (independent randomisations of the design). */
static int half_of(const tp_sweep_plan *plan, long i)
{
    if (plan->design == TP_DESIGN_RANDOM || plan->rep_size < 1)
        return (int)(i & 1);
    return (int)((i / plan->rep_size) & 1);
}

/* Whether the method applies to these samples (tailfit.h). */
static int applies(const tp_sweep_plan *plan, const tp_sweep_result *res, long total, int metric)
{
    long i, n[2] = {0, 0}, need;
    if (plan->mode != TP_SWEEP_SPREAD || plan->n_params < 1)
        return 0;
    if (plan->design != TP_DESIGN_RANDOM && total < 2 * plan->rep_size)
        return 0;
    for (i = 0; i < total; i++) {
        if (!res[i].ok || !isfinite(res[i].metric[metric]))
            return 0;
        n[half_of(plan, i)]++;
    }
    need = (long)TP_TAILFIT_PER_TERM * tp_tailfit_terms(plan->n_params);
    if (need < TP_TAILFIT_MIN_HALF)
        need = TP_TAILFIT_MIN_HALF;
    return n[0] >= need && n[1] >= need;
}

static void free_halves(half *hf)
{
    int k;
    for (k = 0; k < 2; k++) {
        free(hf[k].u);
        free(hf[k].y);
        free(hf[k].g);
        free(hf[k].coef);
    }
}

/* Split the samples into halves with standardised inputs. -1 when out of memory. */
static int load_halves(const tp_sweep_plan *plan, const tp_sweep_result *res, long total,
                       int metric, half *hf)
{
    int d = plan->n_params, p = tp_tailfit_terms(d), k;
    double c[TP_SWEEP_MAX_PARAMS], s[TP_SWEEP_MAX_PARAMS];
    long i, n;
    memset(hf, 0, 2 * sizeof *hf);
    for (i = 0; i < total; i++)
        hf[half_of(plan, i)].n++;
    for (k = 0; k < 2; k++) {
        n = hf[k].n;
        hf[k].u = malloc((size_t)n * (size_t)d * sizeof *hf[k].u);
        hf[k].y = malloc((size_t)n * 4 * sizeof *hf[k].y);
        hf[k].g = malloc(TP_TAILFIT_DRAWS * sizeof *hf[k].g);
        hf[k].coef = malloc((size_t)p * sizeof *hf[k].coef);
        if (!hf[k].u || !hf[k].y || !hf[k].g || !hf[k].coef)
            return -1;
        hf[k].h = hf[k].y + n;
        hf[k].ys = hf[k].y + 2 * n;
        hf[k].hs = hf[k].y + 3 * n;
        hf[k].n = 0;
    }
    for (k = 0; k < d; k++)
        centre_scale(&plan->params[k], &c[k], &s[k]);
    for (i = 0; i < total; i++) {
        half *h = &hf[half_of(plan, i)];
        for (k = 0; k < d; k++)
            h->u[(size_t)h->n * (size_t)d + (size_t)k] = (tp_sweep_value(plan, i, k) - c[k]) / s[k];
        h->y[h->n++] = res[i].metric[metric];
    }
    return 0;
}

/* Fit each half's surface on the other half, evaluate it at the half's samples and draws, sort.
 * Returns the cross-fitted R^2, NaN when a fit failed, -HUGE_VAL when out of memory. */
static double cross_fit(const tp_sweep_plan *plan, const double *table, half *hf)
{
    int d = plan->n_params, p = tp_tailfit_terms(d), k;
    double f[1 + 2 * TP_SWEEP_MAX_PARAMS + TP_SWEEP_MAX_PARAMS * TP_SWEEP_MAX_PARAMS];
    double sum = 0.0, mean, ss = 0.0, sr = 0.0;
    long i, n = hf[0].n + hf[1].n;
    uint64_t *tmp = malloc(2 * TP_TAILFIT_DRAWS * sizeof *tmp);
    if (!tmp)
        return -HUGE_VAL;
    for (k = 0; k < 2; k++)
        if (fit(&hf[1 - k], d, p, hf[k].coef) != 0) {
            free(tmp);
            return (double)NAN;
        }
    for (k = 0; k < 2; k++) {
        for (i = 0; i < hf[k].n; i++) {
            hf[k].h[i] = surface(hf[k].coef, hf[k].u + (size_t)i * (size_t)d, d, p, f);
            sum += hf[k].y[i];
        }
        memcpy(hf[k].ys, hf[k].y, (size_t)hf[k].n * sizeof *hf[k].y);
        memcpy(hf[k].hs, hf[k].h, (size_t)hf[k].n * sizeof *hf[k].h);
        qsort(hf[k].ys, (size_t)hf[k].n, sizeof *hf[k].ys, cmp_double);
        qsort(hf[k].hs, (size_t)hf[k].n, sizeof *hf[k].hs, cmp_double);
        draws(table, k, &hf[k], d, p, f, tmp);
    }
    free(tmp);
    mean = sum / (double)n;
    for (k = 0; k < 2; k++)
        for (i = 0; i < hf[k].n; i++) {
            ss += (hf[k].y[i] - mean) * (hf[k].y[i] - mean);
            sr += (hf[k].y[i] - hf[k].h[i]) * (hf[k].y[i] - hf[k].h[i]);
        }
    return ss > 0 ? 1.0 - sr / ss : 1.0;
}

tp_status tp_tailfit_percentiles(const tp_sweep_plan *plan, const tp_sweep_result *results,
                                 long total, int metric, int n_p, const double *p,
                                 tp_tailfit_q *out, double *r2, int *used)
{
    half hf[2];
    double *own;
    const double *table;
    int j;
    *used = 0;
    if (!applies(plan, results, total, metric))
        return TP_OK;
    if (!(table = draw_table(plan, &own)) || load_halves(plan, results, total, metric, hf) != 0) {
        if (table)
            free_halves(hf);
        free(own);
        return TP_ERR_NOMEM;
    }
    *r2 = cross_fit(plan, table, hf);
    free(own);
    if (isnan(*r2) || *r2 == -HUGE_VAL) {
        free_halves(hf);
        return *r2 == -HUGE_VAL ? TP_ERR_NOMEM : TP_OK;
    }
    for (j = 0; j < n_p; j++) {
        double part, var, se;
        out[j].value = invert(hf, p[j]);
        var = cdf_variance(hf, out[j].value, &part);
        se = sqrt(var);
        out[j].lo = invert(hf, p[j] - Z975 * se);
        out[j].hi = invert(hf, p[j] + Z975 * se);
        out[j].floor_hw = isfinite(out[j].lo) && isfinite(out[j].hi)
                              ? 0.5 * (out[j].hi - out[j].lo) * sqrt(part / var)
                              : 0.0;
    }
    free_halves(hf);
    *used = 1;
    return TP_OK;
}
