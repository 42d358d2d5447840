/* Sweeps and tolerance studies: parameter grids and spreads over numeric config keys sampled by
 * a design (independent random draws, Latin hypercube, scrambled Sobol points), a pool of
 * worker threads running one warm-up per point, counter-based random streams, and the
 * statistics of the results (moments, percentiles, rank correlation, confidence intervals). */
#ifndef TP_SWEEP_H
#define TP_SWEEP_H

#include <stddef.h>
#include <stdint.h>

#include "caution.h"
#include "description.h"
#include "diag.h"
#include "hardlimits.h"
#include "metricdef.h"
#include "network.h"
#include "status.h"
#include "units.h"

#define TP_SWEEP_PATH_MAX 128      /* longest key path, bytes incl. NUL */
#define TP_SWEEP_REASON_MAX 240    /* longest failure reason kept per point, bytes incl. NUL */
#define TP_SWEEP_UNIT_MAX 32       /* longest unit text kept per parameter, bytes incl. NUL */

/* The metrics kept per point: the table of src/study/metricdef.h (TP_MET_*), in its order. */

typedef enum tp_sweep_mode { TP_SWEEP_GRID, TP_SWEEP_SPREAD } tp_sweep_mode;

typedef enum tp_spread_kind { TP_SPREAD_NORMAL, TP_SPREAD_UNIFORM } tp_spread_kind;

/* How the samples of a spread are placed (docs/sweep.md). */
typedef enum tp_sweep_design {
    TP_DESIGN_RANDOM, /* independent draws (the default) */
    TP_DESIGN_LHS,    /* Latin hypercube per replicate (McKay, Beckman & Conover 1979) */
    TP_DESIGN_SOBOL   /* GSL's Sobol points, nested-scrambled per replicate (Owen 1995) */
} tp_sweep_design;

/* How the percentiles of a spread and their intervals are estimated (docs/sweep.md). */
typedef enum tp_sweep_pct {
    TP_PCT_ORDER, /* order statistics and their distribution-free intervals (the default) */
    TP_PCT_FITTED /* a cross-fitted response surface as control variate (src/study/tailfit.h) */
} tp_sweep_pct;

#define TP_SWEEP_REPLICATES 10 /* default replicates (batches) of a spread */

/* One varied key. */
typedef struct tp_sweep_param {
    char path[TP_SWEEP_PATH_MAX]; /* dotted key path, e.g. "heater.power" */
    tp_dim dim;
    double nominal; /* SI, the config's value */
    /* The unit values are shown in to people: as written in the option ("mm" of
     * "3mm:5mm:1mm"; for a spread, of its absolute numbers); "" when the option gave none
     * (percentages), for the caller to fill (the config's unit, tp_configedit_unit). */
    char unit[TP_SWEEP_UNIT_MAX];
    /* grid */
    double *values; /* SI, owned */
    long n_values;
    /* spread */
    tp_spread_kind kind;
    int relative;     /* the numbers below are fractions of the nominal value */
    double sigma;     /* normal: standard deviation (SI, or a fraction) */
    double low, high; /* uniform: bounds (SI); relative: deviations, e.g. -0.1, 0.1 */
} tp_sweep_param;

typedef struct tp_sweep_plan {
    tp_sweep_mode mode;
    tp_sweep_param params[TP_SWEEP_MAX_PARAMS];
    int n_params;
    long n_samples; /* spread: samples to draw */
    uint64_t seed;  /* spread: the seed of every sample's stream */
    tp_sweep_design design;
    long replicates; /* spread: replicates of rep_size samples each (n_samples = product) */
    long rep_size;
    /* Design tables (tp_sweep_design_build), owned: LHS strata [sample][param] (the stratum
     * 0..rep_size-1 of each sample within its replicate); Sobol 30-bit integer points
     * [point within a replicate][param], the first point the origin. NULL for random. */
    uint32_t *table;
    tp_sweep_pct percentiles; /* spread: how the percentiles are estimated (a statistics
                                 choice, not part of the study: a merge may choose it) */
    /* The surrogate draws of fitted percentiles, the same for every metric: made by
     * tp_sweep_design_build (empty), filled at the first fitted summary, owned. NULL: each
     * summary makes its own. */
    struct tp_tailfit_memo *memo;
    int n_metrics;  /* metrics kept per point (tp_metricdef_swept_count): TP_MET_SWEPT, plus the
                       segment metrics of a scheduled file (tp_sweep_plan_metrics) */
} tp_sweep_plan;

/* Start an empty plan of `mode` (no parameters yet). */
void tp_sweep_plan_init(tp_sweep_plan *plan, tp_sweep_mode mode);

/* Set the plan's metrics for the description it runs: the warm-up metrics, and with
 * control.schedule those of its first TP_METRICDEF_SEGMENTS segments. */
void tp_sweep_plan_metrics(tp_sweep_plan *plan, const tp_description *desc);

/* Free what a plan owns; leaves it empty. */
void tp_sweep_plan_clear(tp_sweep_plan *plan);

/* Add a grid axis from "key.path=FROM:TO:STEP" or "key.path=A,B,C" (values with the key's unit,
 * e.g. "heater.power=150W:400W:25W"; for an absolute temperature STEP is an interval, "2 K").
 * The unit of FROM (or of A) becomes the parameter's unit.
 * The key must hold a value in `desc`. Errors (unknown key, bad unit, empty or too large range,
 * a value the schema refuses) go to `d` as usage errors; the plan is unchanged on failure. */
tp_status tp_sweep_add_vary(tp_sweep_plan *plan, const tp_description *desc, const char *text,
                            tp_diag *d);

/* Add a spread from "key.path=normal:SIGMA" or "key.path=uniform:LOW:HIGH", each number either
 * relative ("10%", of the nominal value; uniform bounds as deviations, "-10%:10%") or absolute
 * with the key's unit (normal: a standard deviation; uniform: the bounds themselves; for an
 * absolute temperature SIGMA is an interval). Errors as for tp_sweep_add_vary. */
tp_status tp_sweep_add_spread(tp_sweep_plan *plan, const tp_description *desc, const char *text,
                              tp_diag *d);

/* Parse a design name ("random", "lhs", "sobol"); -1 when unknown. */
int tp_sweep_design_find(const char *name);

/* The name of a design. */
const char *tp_sweep_design_name(tp_sweep_design design);

/* Fix a spread's design once its parameters, n_samples, replicates and seed are set: checks that
 * replicates divides n_samples (a usage error naming `--replicates` otherwise) and builds the
 * design's table. TP_ERR_NOMEM when the table cannot be allocated. Deterministic: the same plan
 * always gets the same table. */
tp_status tp_sweep_design_build(tp_sweep_plan *plan, tp_sweep_design design, long replicates,
                                tp_diag *d);

/* The first n points of GSL's Sobol sequence in `dim` dimensions (at most TP_SWEEP_MAX_PARAMS)
 * as 30-bit integers (point j, dimension k at out[j * dim + k]; value = integer / 2^30),
 * preceded by the origin (out[0..dim-1] = 0): gsl_qrng_sobol, whose direction numbers are
 * those of Bratley & Fox, ACM TOMS 14 (1988) 88. TP_ERR_NOMEM on failure. */
tp_status tp_sweep_sobol_points(long n, int dim, uint32_t *out);

/* Owen's nested uniform scrambling (Owen 1995) of a 30-bit point coordinate, base 2: bit b
 * (from the top) is flipped by a pseudo-random bit drawn from `key` and the bits above b of
 * x, so points that share their leading digits share their flips. A bijection of the 2^30
 * integers for each key. */
uint32_t tp_sweep_owen(uint32_t x, uint64_t key);

/* Points of the plan: the product of the axis sizes (grid) or n_samples (spread). */
long tp_sweep_count(const tp_sweep_plan *plan);

/* Index along axis `k` of grid point `point`: the first axis varies slowest. */
long tp_sweep_axis_index(const tp_sweep_plan *plan, long point, int k);

/* The SI value of parameter k at a point or sample. Pure: the same arguments always give the
 * same value, whatever thread asks and in whatever order. */
double tp_sweep_value(const tp_sweep_plan *plan, long point, int k);

/* ---- random streams (counter-based: every draw is a pure function of its coordinates) ---- */

/* The SplitMix64 generator (Steele, Lea & Flood, OOPSLA 2014): advance *state by the golden
 * gamma 0x9e3779b97f4a7c15 and return the mixed value. */
uint64_t tp_sweep_splitmix64(uint64_t *state);

/* A 64-bit hash of (seed, sample, stream) built from the SplitMix64 mixer. */
uint64_t tp_sweep_hash(uint64_t seed, uint64_t sample, uint64_t stream);

/* The 52 high bits of a hash as a uniform number in (0, 1): (k + 1/2) / 2^52, k = bits >> 12,
 * so between 2^-53 and 1 - 2^-53, never 0 or 1. */
double tp_sweep_unit(uint64_t bits);

/* Box-Muller transform (Box & Muller, Ann. Math. Statist. 29 (1958) 610): a standard normal
 * number from two uniforms in (0, 1]: sqrt(-2 ln u1) cos(2 pi u2). */
double tp_sweep_box_muller(double u1, double u2);

/* ---- statistics ---------------------------------------------------------------------------- */

/* Mean and sample standard deviation (n - 1 in the denominator; 0 for n = 1) of x[0..n-1],
 * two-pass. NaN when n = 0. */
void tp_sweep_mean_sd(const double *x, size_t n, double *mean, double *sd);

/* The p-quantile (0 <= p <= 1) of sorted data, linear interpolation between order statistics
 * (Hyndman & Fan, Am. Statistician 50 (1996) 361, definition 7): h = (n - 1) p,
 * Q = x[floor h] + (h - floor h) (x[floor h + 1] - x[floor h]). NaN when n = 0. */
double tp_sweep_quantile(const double *sorted, size_t n, double p);

/* Ranks 1..n of x, ties given the mean of the ranks they span. TP_ERR_NOMEM on failure. */
tp_status tp_sweep_ranks(const double *x, size_t n, double *rank);

/* Spearman's rank correlation of x and y: Pearson's correlation of their tie-averaged ranks.
 * NaN when n < 2 or either set has no spread (all ranks equal), or when memory runs out. */
double tp_sweep_spearman(const double *x, const double *y, size_t n);

/* ---- running ---------------------------------------------------------------------------- */

/* ---- confidence intervals (95 %; docs/sweep.md names the methods and sources) -------------- */

#define TP_SWEEP_LEVEL 0.95 /* -, confidence level of every interval */

/* The statistics of a tolerance study, in the order of tables and files. */
typedef enum tp_sweep_stat {
    TP_STAT_MEAN,
    TP_STAT_SD,
    TP_STAT_P5,
    TP_STAT_P50,
    TP_STAT_P95,
    TP_STAT_COUNT
} tp_sweep_stat;

/* A statistic by name ("mean", "sd", "p5", "p50", "p95"); -1 when unknown. */
int tp_sweep_stat_find(const char *name);

/* The name of a statistic. */
const char *tp_sweep_stat_name(int stat);

/* Student's t interval of the mean of n values with mean m and sample sd s: m -+ t s / sqrt(n),
 * t the 97.5 % point of t with n - 1 degrees of freedom. NaN bounds when n < 2. */
void tp_sweep_ci_mean(double m, double s, long n, double *lo, double *hi);

/* The chi-square interval of a normal population's standard deviation from the sample sd s of
 * n values: s sqrt((n - 1) / chi2(0.975)), s sqrt((n - 1) / chi2(0.025)). NaN when n < 2. */
void tp_sweep_ci_sd(double s, long n, double *lo, double *hi);

/* The distribution-free interval of the p-quantile from the order statistics: 1-based ranks
 * l <= u with P(Bin(n, p) <= l - 1) <= 2.5 % and P(Bin(n, p) <= u - 1) >= 97.5 %, l the largest
 * and u the smallest such. Returns 0 and sets *l, *u, or -1 when n is too small for either. */
int tp_sweep_ci_ranks(long n, double p, long *l, long *u);

/* ---- what one point gave ------------------------------------------------------------------ */

/* What one point gave. */
typedef struct tp_sweep_result {
    int ok;                     /* 1: the metrics hold; 0: failed (reason says why) */
    double metric[TP_MET_SWEPT_MAX]; /* SI, by tp_metricdef_swept index (the plan's n_metrics of
                                        them); NaN where a metric does not exist for this point */
    char reason[TP_SWEEP_REASON_MAX];
} tp_sweep_result;

/* Called by the waiting thread (never by a worker) about every TP_SWEEP_TICK_MS with the points
 * finished so far and the seconds since the start; the last call has done == total. */
typedef void (*tp_sweep_progress_fn)(void *user, long done, long total, double elapsed);

#define TP_SWEEP_TICK_MS 100 /* ms between progress calls */

#define TP_SWEEP_CAUTIONS_MAX 32 /* distinct caution lines kept over a run */

/* Totals of a run, for reports. */
typedef struct tp_sweep_totals {
    long failed; /* points that failed */
    int jobs;    /* worker threads actually started (0: ran in the calling thread) */
    double wall; /* s of wall clock */
    double cpu;  /* s of CPU summed over the workers */
    /* The safety cautions over all successful points: of each caution (tp_caution_same: its
     * kind, layer and material) the record with the worst figures (tp_caution_worse: the
     * hottest, the highest voltage ...), the lowest point index on ties; in list order
     * (tp_caution_compare), the closing cut-out last. Independent of the number of jobs. */
    tp_caution cautions[TP_SWEEP_CAUTIONS_MAX];
    long caution_point[TP_SWEEP_CAUTIONS_MAX]; /* the point each came from */
    int n_cautions;
} tp_sweep_totals;

/* Add the totals of another run over other points (a batch, a shard) to `into`: failures, CPU
 * and wall time add up, cautions merge as within a run (worst figures, lowest point on ties),
 * so the result does not depend on how the points were split. */
void tp_sweep_totals_merge(tp_sweep_totals *into, const tp_sweep_totals *from);

/* Run every point of `plan` on `jobs` threads (at least 1). Each worker holds its own copy of
 * `base` and builds its own network per point; the result of a point depends only on the point
 * (never on `jobs` or on scheduling). results[] has tp_sweep_count(plan) entries. A point that
 * fails (a value the schema refuses, assembly, steady state or integration) is marked with its
 * reason and the run goes on. Returns TP_ERR_NOMEM when nothing could be started; per-point
 * failures do not fail the run. */
tp_status tp_sweep_run(const tp_sweep_plan *plan, const tp_description *base, int jobs,
                       tp_sweep_result *results, tp_sweep_progress_fn progress, void *user,
                       tp_sweep_totals *totals);

/* The same for points first..end-1 only (a batch of --until, a shard): results[] is indexed by
 * point over the whole plan and only those slots are written; totals are of those points. */
tp_status tp_sweep_run_range(const tp_sweep_plan *plan, const tp_description *base, int jobs,
                             long first, long end, tp_sweep_result *results,
                             tp_sweep_progress_fn progress, void *user, tp_sweep_totals *totals);

/* The default number of workers: the online processor count (at least 1). */
int tp_sweep_default_jobs(void);

/* ---- summaries of a tolerance study ------------------------------------------------------ */

typedef struct tp_sweep_summary {
    long n;      /* successful samples with a finite value */
    long absent; /* successful samples where the metric does not exist (e.g. not reached) */
    double mean, sd, p5, p50, p95;
    double worst;                    /* the worst finite value (tp_metricdef.worse) */
    long worst_index;                /* its sample index, or -1 */
    double rho[TP_SWEEP_MAX_PARAMS]; /* Spearman correlation with each parameter (NaN: none) */
    int driver;                      /* the parameter with the largest |rho|, or -1 */
    /* 95 % confidence intervals of mean, sd, p5, p50, p95 (tp_sweep_stat order); NaN where the
     * samples are too few. The mean's comes from the replicates' means for lhs and sobol. */
    double lo[TP_STAT_COUNT], hi[TP_STAT_COUNT];
    long reps; /* replicates behind the mean's interval (0: the samples themselves) */
    double rep_sd; /* sd of the replicate means (reps >= 2), else NaN */
    /* --percentiles fitted: 1 when p5, p50, p95 and their intervals are the fitted ones (0: the
     * order statistics, where the method does not apply); the surface's cross-fitted R^2; the
     * part of each percentile's half-width that more samples do not shrink (else NaN). */
    int fitted;
    double fit_r2;
    double floor_hw[TP_STAT_COUNT];
} tp_sweep_summary;

/* A percentile method by name ("order", "fitted"); -1 when unknown. */
int tp_sweep_pct_find(const char *name);

/* The name of a percentile method. */
const char *tp_sweep_pct_name(tp_sweep_pct pct);

/* The value of statistic `stat` in a summary. */
double tp_sweep_summary_value(const tp_sweep_summary *s, int stat);

/* The samples a study of this plan would need for the interval of `stat` to have a half-width
 * of at most `halfwidth` (> 0), estimated from a summary of n samples: for the mean Student's
 * t (over replicates of rep_size samples for lhs and sobol), for the sd the chi-square
 * interval, for the percentiles the current half-width scaled by sqrt(n / N) (fitted ones:
 * the part that shrinks, above the floor of the surrogate's draws). NaN when the summary cannot
 * tell (too few samples, or a fitted floor at or above the half-width asked). */
double tp_sweep_needed(const tp_sweep_plan *plan, const tp_sweep_summary *s, int stat,
                       double halfwidth);

#define TP_SWEEP_NOISE                                                                             \
    1e-7 /* -, a metric whose sd is below this share of its mean does not                          \
            vary (solver noise): no rank correlation is given */

/* Summarise metric `metric` over the successful samples. TP_ERR_NOMEM on failure. */
tp_status tp_sweep_summarise(const tp_sweep_plan *plan, const tp_sweep_result *results, int metric,
                             tp_sweep_summary *out);

/* The same over the first n samples only (a study stopped early by --until); without the rank
 * correlations (rho NaN, driver -1) unless with_rho, for the checks between batches. */
tp_status tp_sweep_summarise_first(const tp_sweep_plan *plan, const tp_sweep_result *results,
                                   long n, int metric, int with_rho, tp_sweep_summary *out);

#endif
