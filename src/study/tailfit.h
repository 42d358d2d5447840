/* Fitted percentiles of a tolerance study (`--percentiles fitted`, docs/sweep.md): a quadratic
 * response surface of the metric over the spread parameters, fitted by least squares on one half
 * of the samples and used as a control variate for the distribution function on the other half
 * (cross-fitting), its many cheap draws giving the bulk of the distribution and the real samples
 * the correction; percentiles by inverting that distribution function, their 95 % intervals by
 * Woodruff's method. */
#ifndef TP_TAILFIT_H
#define TP_TAILFIT_H

#include "status.h"
#include "sweep.h"

#define TP_TAILFIT_DRAWS 131072   /* surrogate draws per half (2^17) */
#define TP_TAILFIT_FULL_PARAMS 8  /* up to this many parameters the surface has every cross term */
#define TP_TAILFIT_MIN_HALF 40    /* fewest samples in a half, whatever the surface's terms */
#define TP_TAILFIT_PER_TERM 5     /* samples in a half per term of the surface, at least */

/* The standardised surrogate draws of a plan, kept between metrics (tp_sweep_plan.memo). */
typedef struct tp_tailfit_memo {
    double *u; /* [2][TP_TAILFIT_DRAWS][n_params], NULL until the first fitted summary */
} tp_tailfit_memo;

/* An empty memo (NULL when out of memory), and its release (NULL is fine). */
tp_tailfit_memo *tp_tailfit_memo_new(void);
void tp_tailfit_memo_free(tp_tailfit_memo *memo);

/* One fitted percentile. */
typedef struct tp_tailfit_q {
    double value;    /* the p-quantile */
    double lo, hi;   /* its 95 % interval; NaN where p -+ 1.96 se leaves (0, 1) */
    double floor_hw; /* the part of the half-width the surrogate's draws leave: it does not
                        shrink with more samples (0 when the interval is NaN) */
} tp_tailfit_q;

/* The terms of the surface for n_params parameters: 1, each parameter, and every product of two
 * (squares included) up to TP_TAILFIT_FULL_PARAMS parameters, only the squares beyond. */
int tp_tailfit_terms(int n_params);

/* The fitted p[j]-quantiles (0 < p < 1) of `metric` over samples 0..total-1 of a spread plan.
 * *used = 1 when they hold; 0 when the method does not apply and nothing was written: a grid, a
 * failed sample or one where the metric does not exist (the surface cannot know them), too few
 * samples for the surface (TP_TAILFIT_MIN_HALF, TP_TAILFIT_PER_TERM), or lhs and sobol with
 * fewer than two replicates (their halves are the odd and even replicates). *r2 is the
 * cross-fitted share of the variance the surface explains. TP_ERR_NOMEM on failure. */
tp_status tp_tailfit_percentiles(const tp_sweep_plan *plan, const tp_sweep_result *results,
                                 long total, int metric, int n_p, const double *p,
                                 tp_tailfit_q *out, double *r2, int *used);

#endif
