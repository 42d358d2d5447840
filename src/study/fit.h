/* Calibration against a measured log: free config keys with bounds, the model reading at the
 * log's times, Levenberg-Marquardt (cminpack) from several starting points, and the statistics
 * at the optimum (standard errors, correlations, identifiability). Method: docs/fit.md. */
#ifndef TP_FIT_H
#define TP_FIT_H

#include "caution.h"
#include "description.h"
#include "diag.h"
#include "status.h"
#include "templog.h"
#include "units.h"
#include "yamltree.h"

#define TP_FIT_MAX_PARAMS 8     /* free parameters in one fit */
#define TP_FIT_PATH_MAX 128     /* longest key path, bytes incl. NUL */
#define TP_FIT_STARTS 3         /* default number of starting points */
#define TP_FIT_STARTS_MAX 20    /* most starting points accepted */
#define TP_FIT_RANGE_FACTOR 5.0 /* -, default bounds of a positive key: start / 5 .. start x 5 */
#define TP_FIT_TEMP_RANGE 20.0  /* K, default bounds of an absolute temperature: start +- 20 K */
#define TP_FIT_DIFF_RANGE 10.0  /* K, default bounds of a temperature difference: start +- 10 K */
#define TP_FIT_LOG_SE_MAX                                                                          \
    0.5 /* -, a log-scaled parameter whose ln has a larger standard                                \
           error (a factor e^0.5 = 1.65) is not identifiable */
#define TP_FIT_LIN_SE_MAX                                                                          \
    0.25                     /* -, a linear parameter whose standard error exceeds this share      \
                                of its bound range is not identifiable */
#define TP_FIT_CORR_MAX 0.95 /* -, |correlation| above this: the pair is not identifiable */
#define TP_FIT_START_MISMATCH                                                                      \
    3.0 /* K: the log's first reading this far from the model's                                    \
           initial reading draws a warning */

/* How a free parameter is searched: the logarithm of a positive quantity, or the value. */
typedef enum tp_fit_scale { TP_FIT_LINEAR, TP_FIT_LOG } tp_fit_scale;

/* What drives the heater in the model runs. */
typedef enum tp_fit_drive {
    TP_FIT_BY_DUTY,       /* the logged duty, open loop */
    TP_FIT_BY_POWER,      /* the logged power, open loop */
    TP_FIT_BY_CONTROLLER, /* the configured controller */
    TP_FIT_FULL_POWER     /* no controller and no drive column: every source fully on */
} tp_fit_drive;

typedef struct tp_fit_param {
    char path[TP_FIT_PATH_MAX]; /* dotted key path, e.g. "heater.power" */
    tp_dim dim;
    tp_fit_scale scale;
    double lo, hi;   /* bounds, SI */
    int user_bounds; /* the bounds were given on the command line */
    double start;    /* SI: the config's value (or the middle of the bounds when unset) */
    int start_unset; /* the config did not set the key */
    /* results of tp_fit_run */
    double value;     /* SI */
    double se;        /* SI standard error (delta method for log-scaled keys); inf when the
                         log does not determine the parameter */
    double se_scaled; /* standard error of ln(value) (log scale) or of value (linear) */
    int at_bound;     /* the estimate sits on a bound */
    int weak;         /* not identifiable from this log (see TP_FIT_*_SE_MAX, TP_FIT_CORR_MAX) */
} tp_fit_param;

typedef struct tp_fit_problem {
    const tp_description *desc; /* the description to calibrate (not modified) */
    const tp_yamltree *doc;     /* its document, for messages (may be NULL) */
    const tp_templog *log;      /* the measured log */
    tp_fit_param *params;
    int n_params;
    int starts; /* starting points (1 .. TP_FIT_STARTS_MAX) */
} tp_fit_problem;

typedef struct tp_fit_result {
    long m; /* residuals: one per log row */
    int p;  /* free parameters */
    tp_fit_drive drive;
    int sensor;          /* node index whose temperature (plus offset) is the model reading */
    double *model;       /* m: model reading at the log's times with the fitted values, K */
    double *model_start; /* m: the same with the starting values, K */
    double *corr;        /* p x p correlation matrix, row-major (NaN where undefined) */
    double rss;          /* sum of squared residuals, K^2 */
    double rms;          /* K */
    double max_abs;      /* K, largest |model - log| */
    long max_row;        /* its row */
    double sigma;        /* K, sqrt(rss / (m - p)): the noise estimate */
    long dof;            /* m - p */
    int rank;            /* numerical rank of the Jacobian at the optimum */
    int starts_run;      /* starting points tried */
    int starts_at_best;  /* of those, how many ended at the best sum of squares (0.01 %) */
    long evals;          /* model runs */
    long failed_runs;    /* of those, runs that failed (trial points where the model breaks) */
    int lm_info;         /* cminpack's info code of the best start */
    double seconds;      /* wall time of the fit */
    /* what the calibrated model saw, for the safety cautions */
    int n_nodes;
    double *node_peak;                         /* per node index, K */
    double node_max, surface_max, current_max; /* K, K, A (NaN when unknown) */
} tp_fit_result;

/* Parse one --free value: "key", "key=LO:HI" or a comma list of them (bounds with units,
 * e.g. heater.power=100W:400W). Appends to params[*n] (at most `max`), resolving dimensions,
 * starting values and default bounds against `desc`. Errors (unknown key, duplicate, bad
 * bounds, an unset key without bounds) go to `d` as TP_ERR_USAGE; *n is then unchanged. */
tp_status tp_fit_parse_free(const char *text, const tp_description *desc, tp_fit_param *params,
                            int *n, int max, tp_diag *d);

/* Fit. On success fills each param's results and *res (free with tp_fit_result_clear). Fails
 * with TP_ERR_CONFIG when the model cannot be built with the starting values, TP_ERR_SOLVER
 * when no model run succeeds, each with the reason in `d`; warnings (start mismatch, ...)
 * also go to `d`. *res must be cleared in every case. */
tp_status tp_fit_run(const tp_fit_problem *pb, tp_fit_result *res, tp_diag *d);

/* One model run with the free parameters at SI values `x` (NULL: their starting values):
 * the model reading at each log time into `model` (log->n values, K). */
tp_status tp_fit_model(const tp_fit_problem *pb, const double *x, double *model, tp_diag *d);

/* Free what a result holds; leaves it cleared. */
void tp_fit_result_clear(tp_fit_result *res);

/* A short name of a drive for reports ("logged duty", ...). */
const char *tp_fit_drive_name(tp_fit_drive drive);

/* The safety cautions of the calibrated plate (caution.h), from what its model saw over the
 * log (res's peaks and current); returns how many were written to out. */
int tp_fit_cautions(const tp_description *fitted, const tp_network *net, const tp_fit_result *res,
                    tp_caution out[TP_CAUTIONS_MAX]);

#endif
