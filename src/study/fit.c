/* Calibration against a measured log.
 *
 * Residuals r_i(x) = y_model(t_i; x) - y_log(t_i), i = 1..m, where y_model is the sensor node's
 * temperature plus the reading offset, integrated from the config's initial state over the
 * log's duration and interpolated linearly at the log's times. The free parameters x_k are
 * searched in scaled form: u_k in [0, 1] across the bounds, on the logarithm of the value when
 * the bounds are positive (x = lo (hi/lo)^u) and on the value otherwise (x = lo + u (hi - lo));
 * Levenberg-Marquardt (cminpack lmder) works on z_k with u_k = (1 + sin z_k) / 2, which keeps
 * every trial point inside the bounds. The Jacobian is a forward difference in z (a model run per
 * parameter). Several deterministic starting points are tried (the config's values, then a
 * Halton sequence across the bounds); the smallest sum of squares wins.
 *
 * At the optimum the Jacobian J is taken again by central differences in v = ln x (log scale)
 * or v = x (linear), and the covariance is C = s^2 (J^T J)^-1 with s^2 = RSS / (m - p)
 * (Seber & Wild, Nonlinear Regression, Wiley 1989, Sec. 2.1; from memory); a log-scaled
 * parameter's standard error in SI follows from the delta method, se(x) = x se(ln x). */
#include "fit.h"

#include "program.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>


#include "assemble.h"
#include "config.h"
#include "eval.h"
#include "integrate.h"
#include "minpacklib.h"
#include "network.h"

#define TP_FIT_FD_STEP 1.0e-3  /* step of the forward-difference Jacobian in z, rad */
#define TP_FIT_COV_STEP 1.0e-3 /* step of the central differences at the optimum, in u */
#define TP_FIT_STEP_MAX 1.0    /* s, longest output interval of a model run */
#define TP_FIT_RTOL 1.0e-6     /* -, CVODE relative tolerance of model runs at most */
#define TP_FIT_MAXFEV 60       /* residual evaluations per start (Jacobians come extra) */
#define TP_FIT_FTOL 1.0e-7     /* -, lmder: relative reduction of the sum of squares */
#define TP_FIT_XTOL 1.0e-6     /* -, lmder: relative change of the scaled parameters */
#define TP_FIT_FACTOR 100.0    /* -, lmder: initial step bound (z is of order 1) */
#define TP_FIT_PENALTY 1.0e3   /* K, every residual of a failed model run */
#define TP_FIT_SAME 1.0e-4     /* -, relative sum-of-squares difference of "the same" minimum */
#define TP_FIT_MERGE_U 0.01    /* -, a later start this close (in u) to the best minimum ... */
#define TP_FIT_MERGE_CHI2                                                                          \
    10.0                         /* ... whose sum of squares exceeds the best by less than this    \
                                    many s^2 (about 3 standard errors away) has found it: it is    \
                                    stopped there and counted as reaching the best fit */
#define TP_FIT_BOUND_EDGE 1.0e-3 /* -, share of the bound range that counts as on the bound */
#define TP_FIT_U_START_MIN                                                                         \
    0.02 /* -, starts are kept this far inside the bounds (u), because                             \
            at u = 0 or 1 the sine map has zero slope */
#define TP_FIT_RANK_TOL                                                                            \
    1.0e-10 /* -, eigenvalue of the normalised J^T J below this share of                           \
               the largest counts as zero */

static const int halton_base[TP_FIT_MAX_PARAMS] = {2, 3, 5, 7, 11, 13, 17, 19};

const char *tp_fit_drive_name(tp_fit_drive drive)
{
    switch (drive) {
    case TP_FIT_BY_DUTY:
        return "the logged duty (open loop)";
    case TP_FIT_BY_POWER:
        return "the logged power (open loop)";
    case TP_FIT_BY_CONTROLLER:
        return "the configured controller";
    case TP_FIT_FULL_POWER:
        return "full power (no controller, no drive column)";
    }
    return "?";
}

/* ---- parameters --------------------------------------------------------------------------- */

static double u_to_x(const tp_fit_param *q, double u)
{
    if (q->scale == TP_FIT_LOG)
        return q->lo * pow(q->hi / q->lo, u);
    return q->lo + u * (q->hi - q->lo);
}

static double x_to_u(const tp_fit_param *q, double x)
{
    double u = q->scale == TP_FIT_LOG ? log(x / q->lo) / log(q->hi / q->lo)
                                      : (x - q->lo) / (q->hi - q->lo);
    return u < 0.0 ? 0.0 : u > 1.0 ? 1.0 : u;
}

/* dv/du with v = ln x (log scale) or v = x (linear). */
static double dv_du(const tp_fit_param *q)
{
    return q->scale == TP_FIT_LOG ? log(q->hi / q->lo) : q->hi - q->lo;
}

static double z_to_u(double z)
{
    return 0.5 * (1.0 + sin(z));
}

static double u_to_z(double u)
{
    double s = 2.0 * u - 1.0;
    return asin(s < -1.0 ? -1.0 : s > 1.0 ? 1.0 : s);
}

static int ends_with(const char *s, const char *suffix)
{
    size_t a = strlen(s), b = strlen(suffix);
    return a >= b && strcmp(s + a - b, suffix) == 0;
}

/* Default bounds from the key's kind and its starting value; -1 when the user must give them. */
static int default_bounds(tp_fit_param *q, double start)
{
    if (ends_with(q->path, "emissivity")) {
        q->lo = 0.02;
        q->hi = 1.0;
        return 0;
    }
    if (ends_with(q->path, "max_duty")) {
        q->lo = 0.05;
        q->hi = 1.0;
        return 0;
    }
    if (!isfinite(start))
        return -1;
    if (q->dim == TP_DIM_TEMPERATURE) {
        q->lo = start - TP_FIT_TEMP_RANGE;
        q->hi = start + TP_FIT_TEMP_RANGE;
        return 0;
    }
    if (q->dim == TP_DIM_INTERVAL) {
        q->lo = start - TP_FIT_DIFF_RANGE;
        q->hi = start + TP_FIT_DIFF_RANGE;
        return 0;
    }
    if (start > 0.0) {
        q->lo = start / TP_FIT_RANGE_FACTOR;
        q->hi = start * TP_FIT_RANGE_FACTOR;
        return 0;
    }
    return -1;
}

static tp_status parse_bound(const char *text, const tp_fit_param *q, double *v, tp_diag *d)
{
    char msg[256];
    const char *hint;
    /* A temperature difference bound may be negative ("-5 K"); the unit parser takes that. */
    if (tp_units_parse(text, q->dim, v, msg, sizeof msg, &hint) != TP_OK) {
        tp_diag_error(d, (tp_loc){"--free", 1, 1}, q->path, hint, "bad bound: %s", msg);
        return TP_ERR_USAGE;
    }
    return TP_OK;
}

static tp_status parse_one(char *item, const tp_description *desc, tp_fit_param *q, tp_diag *d)
{
    char *eq = strchr(item, '='), *path = item;
    double start;
    memset(q, 0, sizeof *q);
    if (eq)
        *eq = '\0';
    while (*path == ' ')
        path++;
    if (!*path || strlen(path) >= sizeof q->path) {
        tp_diag_error(d, (tp_loc){"--free", 1, 1}, NULL,
                      "give key paths such as heater.power or losses.convection_scale",
                      "empty or overlong key path");
        return TP_ERR_USAGE;
    }
    strcpy(q->path, path);
    if (strncmp(q->path, "run.", 4) == 0 || strcmp(q->path, "run") == 0) {
        tp_diag_error(d, (tp_loc){"--free", 1, 1}, q->path,
                      "free physical quantities: heater, layers, sensor, losses, room",
                      "run settings are numerical choices, not something a log can measure");
        return TP_ERR_USAGE;
    }
    if (tp_config_key_dim(desc, q->path, "--free", &q->dim, d) != TP_OK)
        return TP_ERR_USAGE;
    tp_config_get(desc, q->path, &start);
    q->start_unset = !isfinite(start);
    if (eq) {
        char *colon = strchr(eq + 1, ':');
        if (!colon) {
            tp_diag_error(d, (tp_loc){"--free", 1, 1}, q->path,
                          "write bounds as KEY=LO:HI, e.g. heater.power=100W:400W",
                          "bounds need a colon");
            return TP_ERR_USAGE;
        }
        *colon = '\0';
        if (parse_bound(eq + 1, q, &q->lo, d) != TP_OK ||
            parse_bound(colon + 1, q, &q->hi, d) != TP_OK)
            return TP_ERR_USAGE;
        q->user_bounds = 1;
    } else if (default_bounds(q, start) != 0) {
        tp_diag_error(d, (tp_loc){"--free", 1, 1}, q->path,
                      "give bounds, e.g. --free KEY=LO:HI with units",
                      q->start_unset ? "the config does not set this key, so it has no default "
                                       "bounds"
                                     : "the value is zero or negative, so it has no default "
                                       "bounds");
        return TP_ERR_USAGE;
    }
    if (!(q->lo < q->hi) || !isfinite(q->lo) || !isfinite(q->hi)) {
        tp_diag_error(d, (tp_loc){"--free", 1, 1}, q->path, "the lower bound comes first",
                      "the bounds are empty or reversed");
        return TP_ERR_USAGE;
    }
    /* Positive ranges are searched on the logarithm (relative changes), except temperatures,
     * whose natural scale is additive. */
    q->scale = q->lo > 0.0 && q->dim != TP_DIM_TEMPERATURE && q->dim != TP_DIM_INTERVAL
                   ? TP_FIT_LOG
                   : TP_FIT_LINEAR;
    if (q->start_unset)
        start = u_to_x(q, 0.5);
    else if (start < q->lo || start > q->hi) {
        tp_diag_warn(d, (tp_loc){"--free", 1, 1}, q->path, NULL,
                     "the config's value lies outside the bounds; starting from the nearest bound");
        start = start < q->lo ? q->lo : q->hi;
    }
    q->start = start;
    q->value = start;
    q->se = q->se_scaled = (double)NAN;
    return TP_OK;
}

tp_status tp_fit_parse_free(const char *text, const tp_description *desc, tp_fit_param *params,
                            int *n, int max, tp_diag *d)
{
    char buf[1024], *item, *save = NULL;
    int k = *n, j;
    if (strlen(text) >= sizeof buf) {
        tp_diag_error(d, (tp_loc){"--free", 1, 1}, NULL, "give several --free options",
                      "--free value too long");
        return TP_ERR_USAGE;
    }
    strcpy(buf, text);
    for (item = strtok_r(buf, ",", &save); item; item = strtok_r(NULL, ",", &save)) {
        if (k >= max) {
            tp_diag_error(d, (tp_loc){"--free", 1, 1}, NULL,
                          "a log determines a few parameters at best; free fewer",
                          "more than %d free parameters", max);
            return TP_ERR_USAGE;
        }
        if (parse_one(item, desc, &params[k], d) != TP_OK)
            return TP_ERR_USAGE;
        for (j = 0; j < k; j++)
            if (strcmp(params[j].path, params[k].path) == 0) {
                tp_diag_error(d, (tp_loc){"--free", 1, 1}, params[k].path, "free it once",
                              "given twice");
                return TP_ERR_USAGE;
            }
        k++;
    }
    if (k == *n) {
        tp_diag_error(d, (tp_loc){"--free", 1, 1}, NULL, "e.g. --free heater.power",
                      "no key path given");
        return TP_ERR_USAGE;
    }
    *n = k;
    return TP_OK;
}

/* ---- the model run ------------------------------------------------------------------------ */

typedef struct evaluator {
    const tp_fit_problem *pb;
    tp_description work; /* the description with the trial values */
    tp_fit_drive drive;
    double period;    /* s, controller period in open-loop runs */
    double step;      /* s, output interval */
    double power_ref; /* W, the largest logged power (power drive) */
    long cap, n_rec;  /* recorded outputs */
    double *rec_t, *rec_v;
    int sensor;
    double offset; /* K, added to the sensor node's temperature */
    long evals;
    const tp_network *net; /* during a run */
    int drive_src;   /* during a run: the source the log drives (open loop), -1 */
    /* exposure tracking (the final run) */
    int track, n_nodes;
    double *peak, surface_max, current_max;
    tp_diag *q;    /* a silent sink for the trial runs */
    char why[512]; /* the first message of the last failed run */
} evaluator;

/* The first message of a diagnostics log (without the hint), for failure notes. */
static void first_line(char *dst, size_t size, const char *log)
{
    size_t n = strcspn(log, "\n");
    if (n >= size)
        n = size - 1;
    memcpy(dst, log, n);
    dst[n] = '\0';
}

static int record(void *user, const tp_sample *s)
{
    evaluator *ev = user;
    if (ev->n_rec < ev->cap) {
        ev->rec_t[ev->n_rec] = s->t;
        ev->rec_v[ev->n_rec] = s->temps[ev->sensor] + ev->offset;
        ev->n_rec++;
    }
    if (ev->track && ev->net) {
        int i;
        double c;
        for (i = 0; i < ev->n_nodes; i++)
            if (s->temps[i] > ev->peak[i])
                ev->peak[i] = s->temps[i];
        if (ev->work.form == TP_FORM_PHYSICAL) {
            double ts = tp_eval_surface(s->eval, s->temps);
            if (!(ts <= ev->surface_max))
                ev->surface_max = ts;
        }
        /* The driven source's on-current (the controlled one's, else the first electrical). */
        c = ev->drive_src >= 0 && ev->net->sources[ev->drive_src].kind == TP_SRC_ELECTRIC
                ? tp_network_source_current(&ev->net->sources[ev->drive_src], s->temps)
                : tp_network_current(ev->net, s->temps);
        if (isfinite(c) && !(c <= ev->current_max))
            ev->current_max = c;
    }
    return 0;
}

static double drive_hook(void *user, double t, double duty)
{
    const evaluator *ev = user;
    double v = tp_templog_drive_at(ev->pb->log, t);
    (void)duty;
    if (ev->drive == TP_FIT_BY_POWER)
        v = ev->power_ref > 0 ? v / ev->power_ref : 0.0;
    return v < 0.0 ? 0.0 : v > 1.0 ? 1.0 : v;
}

static int model_sensor(const tp_network *net, const tp_description *desc, double *offset)
{
    int i;
    if (net->has_control) {
        *offset = net->control.reading.offset;
        return net->control.sensor;
    }
    *offset = desc->form == TP_FORM_PHYSICAL && desc->sensor.present ? desc->sensor.offset : 0.0;
    i = tp_network_find_node(net, "sensor");
    if (i >= 0 && net->nodes[i].capacity > 0)
        return i;
    *offset = 0.0;
    return net->n_free == 1 ? net->free_nodes[0] : -1;
}

static int drive_source(const tp_network *net)
{
    int i;
    if (net->has_control)
        return net->control.source;
    i = tp_network_find_source(net, "heater");
    if (i >= 0)
        return i;
    return net->n_sources == 1 ? 0 : -1;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

/* The controller of a run that follows the log's drive into *ctl: the network's, or one added
 * when the config has none, sampled at the log's period; the duty hook replaces its output by
 * the logged value. A logged power drives a copy of the network whose heater is a
 * constant-power source of the largest logged power (*driven, owned by the caller). Returns the
 * driven source, or -1 when there is none or memory runs out. */
static int open_loop(evaluator *ev, const tp_network *net, tp_control *ctl,
                     const tp_network **driven)
{
    int src = drive_source(net);
    if (src < 0)
        return -1;
    if (net->has_control) {
        *ctl = net->control;
    } else {
        memset(ctl, 0, sizeof *ctl);
        ctl->mode = TP_MODE_FULL;
        ctl->source = src;
        ctl->sensor = ev->sensor;
        ctl->max_duty = net->sources[src].max_duty;
    }
    ctl->period = ev->period;
    if (ev->drive == TP_FIT_BY_POWER) {
        tp_net_change ch = {TP_CHANGE_SOURCE_POWER, src, -1, ev->power_ref, NULL, NULL};
        if (tp_network_copy(net, &ch, 1, driven) != TP_OK)
            return -1;
        ctl->max_duty = 1.0;
    }
    return src;
}

static void set_values(evaluator *ev, const double *x)
{
    int k;
    for (k = 0; k < ev->pb->n_params; k++)
        tp_config_set(&ev->work, ev->pb->params[k].path, x[k]);
}

/* One model run at SI values x: the reading at the log times into `model`. 0 on success; on
 * failure ev->why says why. `d` receives assembly messages (NULL: the silent sink). */
static int evaluate(evaluator *ev, const double *x, double *model, tp_diag *d)
{
    const tp_templog *log = ev->pb->log;
    const tp_network *net = NULL, *driven = NULL;
    const tp_network *run_net;
    tp_control ctl;
    tp_integrate_opts o;
    tp_integrate_stats stats;
    tp_hooks hooks;
    tp_schedule plan;
    tp_diag *sink = d ? d : ev->q;
    long i, j;
    int rc = -1, open = ev->drive == TP_FIT_BY_DUTY || ev->drive == TP_FIT_BY_POWER;

    ev->evals++;
    ev->why[0] = '\0';
    if (!d)
        tp_diag_init(ev->q, NULL);
    set_values(ev, x);
    if (tp_assemble(&ev->work, ev->pb->doc, sink, &net) != TP_OK) {
        first_line(ev->why, sizeof ev->why, sink->log);
        return -1;
    }
    ev->drive_src = -1;
    memset(&ctl, 0, sizeof ctl);
    if (open) {
        ev->drive_src = open_loop(ev, net, &ctl, &driven);
        if (ev->drive_src < 0) {
            snprintf(ev->why, sizeof ev->why, "no heater source to drive");
            goto done;
        }
    } else if (net->has_control) {
        ctl = net->control;
    }
    /* The controller reads the sensor without ADC quantisation: the steps would make the sum
     * of squares jump with the parameters (a finite-difference Jacobian cannot work on that),
     * while they move the controlled trajectory by far less than a log's noise. */
    ctl.reading.thermistor = 0;
    run_net = driven ? driven : net;
    memset(&hooks, 0, sizeof hooks);
    hooks.user = ev;
    hooks.duty = drive_hook;
    tp_integrate_defaults(&ev->work.run, &o);
    o.t_end = log->t[log->n - 1];
    o.step = ev->step;
    o.rtol = fmin(o.rtol, TP_FIT_RTOL);
    o.out = record;
    o.user = ev;
    o.hooks = open ? &hooks : NULL;
    o.control = open || net->has_control ? &ctl : NULL;
    /* A closed-loop run follows the config's schedule, laid out from this model's start. */
    if (!open && tp_program_plan(&ev->work, net, &plan) == 0)
        o.schedule = &plan;
    ev->n_rec = 0;
    ev->net = run_net;
    if (tp_integrate(run_net, &o, &stats, sink) != TP_OK) {
        first_line(ev->why, sizeof ev->why, sink->log);
        goto done;
    }
    if (ev->n_rec < 2 || ev->rec_t[ev->n_rec - 1] < o.t_end * (1.0 - 1e-12)) {
        snprintf(ev->why, sizeof ev->why, "the model run ended early");
        goto done;
    }
    /* Linear interpolation on the output grid (uniform but for the last interval). */
    j = 0;
    for (i = 0; i < log->n; i++) {
        double t = log->t[i], w;
        while (j + 2 < ev->n_rec && ev->rec_t[j + 1] <= t)
            j++;
        w = (t - ev->rec_t[j]) / (ev->rec_t[j + 1] - ev->rec_t[j]);
        w = w < 0.0 ? 0.0 : w > 1.0 ? 1.0 : w;
        model[i] = ev->rec_v[j] + w * (ev->rec_v[j + 1] - ev->rec_v[j]);
        if (!isfinite(model[i])) {
            snprintf(ev->why, sizeof ev->why, "the model reading is not finite");
            goto done;
        }
    }
    rc = 0;
done:
    ev->net = NULL;
    tp_network_release(&driven);
    tp_network_release(&net);
    return rc;
}

static void evaluator_clear(evaluator *ev)
{
    tp_config_clear(&ev->work);
    free(ev->rec_t);
    free(ev->rec_v);
    free(ev->peak);
    free(ev->q);
    memset(ev, 0, sizeof *ev);
}

/* The log sets the model run's length, output interval and (open loop) controller period: the
 * limits of a run (docs/limits.md) are checked against it here, before anything is allocated,
 * and reported at the log's last row rather than at run.step or control.period, which fit does
 * not use (issue 15 item 25). `period` is HUGE_VAL when no controller samples. */
static tp_status check_log_span(const tp_templog *log, double step, double period, tp_diag *d)
{
    double span = log->t[log->n - 1];
    tp_loc at = {log->name, log->line[log->n - 1], 1};
    const char *hint = "fit the warm-up and some holding (minutes to hours): cut the rest of the "
                       "log (docs/limits.md)";
    if (!(span <= TP_MAX_DURATION)) {
        tp_diag_error(d, at, NULL, hint, "the log runs for %.6g s (%.4g days), past the limit "
                      "of %.0f days on a model run", span, span / 86400.0,
                      TP_MAX_DURATION / 86400.0);
        return TP_ERR_LIMIT;
    }
    if (!(span / step + 1.0 <= TP_MAX_OUTPUT_ROWS)) {
        tp_diag_error(d, at, NULL, hint, "the log runs for %.6g s: %.3g model outputs at %g s "
                      "(its median row interval, at most %g s) exceed the limit of %.0f", span,
                      span / step + 1.0, step, TP_FIT_STEP_MAX, TP_MAX_OUTPUT_ROWS);
        return TP_ERR_LIMIT;
    }
    if (!(span / period <= TP_MAX_TICKS)) {
        tp_diag_error(d, at, NULL, hint, "the log runs for %.6g s: %.3g controller samples at "
                      "%g s exceed the limit of %.0f", span, span / period, period, TP_MAX_TICKS);
        return TP_ERR_LIMIT;
    }
    return TP_OK;
}

/* Prepare the runs: the working description, the drive, the output grid, the sensor node.
 * The first assembly (at the starting values) reports its errors to `d`. */
static tp_status evaluator_init(evaluator *ev, const tp_fit_problem *pb, tp_diag *d)
{
    const tp_templog *log = pb->log;
    const tp_network *net = NULL;
    double *dt = NULL, x0[TP_FIT_MAX_PARAMS];
    int k, quiet = d->quiet;
    long i;
    tp_status st;

    memset(ev, 0, sizeof *ev);
    ev->pb = pb;
    ev->surface_max = ev->current_max = (double)NAN;
    if (log->n < 2) {
        tp_diag_error(d, (tp_loc){log->name, 0, 0}, NULL, NULL, "the log has too few rows");
        return TP_ERR_CONFIG;
    }
    ev->q = malloc(sizeof *ev->q);
    dt = malloc((size_t)(log->n - 1) * sizeof *dt);
    if (!ev->q || !dt || tp_config_copy(&ev->work, pb->desc) != TP_OK) {
        free(dt);
        evaluator_clear(ev);
        return TP_ERR_NOMEM;
    }
    for (i = 1; i < log->n; i++)
        dt[i - 1] = log->t[i] - log->t[i - 1];
    qsort(dt, (size_t)(log->n - 1), sizeof *dt, cmp_double);
    ev->period = dt[(log->n - 1) / 2];
    free(dt);
    ev->step = fmin(ev->period, TP_FIT_STEP_MAX);
    st = check_log_span(log, ev->step, HUGE_VAL, d);
    if (st != TP_OK) {
        evaluator_clear(ev);
        return st;
    }
    ev->cap = (long)ceil(log->t[log->n - 1] / ev->step - 1e-9) + 2;
    ev->rec_t = malloc((size_t)ev->cap * sizeof *ev->rec_t);
    ev->rec_v = malloc((size_t)ev->cap * sizeof *ev->rec_v);
    if (!ev->rec_t || !ev->rec_v) {
        evaluator_clear(ev);
        return TP_ERR_NOMEM;
    }
    for (k = 0; k < pb->n_params; k++)
        x0[k] = pb->params[k].start;
    set_values(ev, x0);
    d->quiet = 1; /* the session printed the config's warnings already */
    st = tp_assemble(&ev->work, pb->doc, d, &net);
    d->quiet = quiet;
    if (st != TP_OK) {
        tp_diag_note(d, "the model cannot be built with the starting values of the free "
                        "parameters");
        evaluator_clear(ev);
        return st;
    }
    ev->sensor = model_sensor(net, &ev->work, &ev->offset);
    ev->n_nodes = net->n_nodes;
    if (ev->sensor < 0) {
        tp_diag_error(d, tp_diag_loc_none(), "control.sensor",
                      "add a control: section naming the node the log measured",
                      "which node did the log measure? The network has no controller, no "
                      "'sensor' node and more than one node with capacity");
        st = TP_ERR_CONFIG;
    } else if (log->drive_kind == TP_TEMPLOG_DRIVE_DUTY ||
               log->drive_kind == TP_TEMPLOG_DRIVE_POWER) {
        ev->drive = log->drive_kind == TP_TEMPLOG_DRIVE_DUTY ? TP_FIT_BY_DUTY : TP_FIT_BY_POWER;
        if (net->has_control && net->control.period < ev->period)
            ev->period = net->control.period;
        if (drive_source(net) < 0) {
            tp_diag_error(d, tp_diag_loc_none(), "control.source",
                          "add a control: section naming the heater source",
                          "which source did the logged %s drive? The network has several",
                          log->drive_kind == TP_TEMPLOG_DRIVE_DUTY ? "duty" : "power");
            st = TP_ERR_CONFIG;
        }
        if (ev->drive == TP_FIT_BY_POWER) {
            for (i = 0; i < log->n; i++)
                ev->power_ref = fmax(ev->power_ref, log->drive[i]);
            if (!(ev->power_ref > 0)) {
                tp_diag_error(d, (tp_loc){log->name, 0, 0}, NULL, NULL,
                              "the power column '%s' is zero throughout", log->drive_col);
                st = TP_ERR_CONFIG;
            }
        }
    } else {
        ev->drive = net->has_control ? TP_FIT_BY_CONTROLLER : TP_FIT_FULL_POWER;
    }
    if (st == TP_OK)
        st = check_log_span(log, ev->step,
                            ev->drive == TP_FIT_BY_DUTY || ev->drive == TP_FIT_BY_POWER
                                ? ev->period
                            : net->has_control ? net->control.period
                                               : HUGE_VAL,
                            d);
    tp_network_release(&net);
    if (st == TP_OK &&
        !(ev->peak = malloc((size_t)(ev->n_nodes > 0 ? ev->n_nodes : 1) * sizeof *ev->peak)))
        st = TP_ERR_NOMEM;
    if (st != TP_OK)
        evaluator_clear(ev);
    return st;
}

tp_status tp_fit_model(const tp_fit_problem *pb, const double *x, double *model, tp_diag *d)
{
    evaluator ev;
    double x0[TP_FIT_MAX_PARAMS];
    int k;
    tp_status st = evaluator_init(&ev, pb, d);
    if (st != TP_OK)
        return st;
    for (k = 0; k < pb->n_params; k++)
        x0[k] = x ? x[k] : pb->params[k].start;
    if (evaluate(&ev, x0, model, d) != 0) {
        tp_diag_note(d, "the model run failed%s%s", ev.why[0] ? ": " : "", ev.why);
        st = TP_ERR_SOLVER;
    }
    evaluator_clear(&ev);
    return st;
}

/* ---- Levenberg-Marquardt ------------------------------------------------------------------ */

typedef struct lmctx {
    evaluator *ev;
    const tp_fit_problem *pb;
    double *model; /* m, scratch */
    double *fh;    /* m, scratch for Jacobian columns */
    long fails;
    int have_best;   /* a previous start has finished */
    double best_rss; /* its sum of squares, K^2 */
    double best_u[TP_FIT_MAX_PARAMS];
    int merged; /* this start was stopped in the best minimum's basin */
} lmctx;

static void z_to_x(const tp_fit_problem *pb, const double *z, double *x)
{
    int k;
    for (k = 0; k < pb->n_params; k++)
        x[k] = u_to_x(&pb->params[k], z_to_u(z[k]));
}

/* Residuals model - log at z; a failed run gives TP_FIT_PENALTY everywhere. */
static int residuals(lmctx *c, const double *z, double *f)
{
    const tp_templog *log = c->pb->log;
    double x[TP_FIT_MAX_PARAMS];
    long i;
    z_to_x(c->pb, z, x);
    if (evaluate(c->ev, x, c->model, NULL) != 0) {
        for (i = 0; i < log->n; i++)
            f[i] = TP_FIT_PENALTY;
        c->fails++;
        return -1;
    }
    for (i = 0; i < log->n; i++)
        f[i] = c->model[i] - log->reading[i];
    return 0;
}

static double sum_sq(const double *f, long m)
{
    double s = 0.0;
    long i;
    for (i = 0; i < m; i++)
        s += f[i] * f[i];
    return s;
}

static int lm_fcn(void *p, int m, int n, const double *z, double *fvec, double *fjac, int ldfjac,
                  int iflag)
{
    lmctx *c = p;
    double zz[TP_FIT_MAX_PARAMS];
    int i, j;
    if (iflag == 0)
        return 0;
    if (iflag == 1) {
        residuals(c, z, fvec);
        return 0;
    }
    /* A later start that has walked into the minimum found before stops here: the rest of
     * its path is known (lmder returns with this iterate). */
    if (c->have_best) {
        double rss = sum_sq(fvec, m), s2 = c->best_rss / (double)(m - n);
        int near = rss >= c->best_rss && rss - c->best_rss < TP_FIT_MERGE_CHI2 * s2;
        for (j = 0; j < n && near; j++)
            near = fabs(z_to_u(z[j]) - c->best_u[j]) < TP_FIT_MERGE_U;
        if (near) {
            c->merged = 1;
            return -1;
        }
    }
    /* Forward differences in z; backward when the forward run fails. */
    memcpy(zz, z, (size_t)n * sizeof *zz);
    for (j = 0; j < n; j++) {
        double h = TP_FIT_FD_STEP;
        zz[j] = z[j] + h;
        if (residuals(c, zz, c->fh) != 0) {
            h = -h;
            zz[j] = z[j] + h;
            if (residuals(c, zz, c->fh) != 0) {
                for (i = 0; i < m; i++)
                    fjac[i + (long)j * ldfjac] = 0.0;
                zz[j] = z[j];
                continue;
            }
        }
        for (i = 0; i < m; i++)
            fjac[i + (long)j * ldfjac] = (c->fh[i] - fvec[i]) / h;
        zz[j] = z[j];
    }
    return 0;
}

/* The Halton sequence: the radical inverse of `index` in `base`, in (0, 1). */
static double halton(int index, int base)
{
    double f = 1.0, r = 0.0;
    while (index > 0) {
        f /= base;
        r += f * (index % base);
        index /= base;
    }
    return r;
}

/* ---- statistics at the optimum ------------------------------------------------------------ */

/* Eigen-decomposition of a symmetric p x p matrix (row-major `a`, destroyed) by cyclic Jacobi
 * rotations: eigenvalues into w, eigenvectors into the columns of v. */
static void jacobi_eigen(double *a, int p, double *w, double *v)
{
    int i, j, k, sweep;
    for (i = 0; i < p; i++)
        for (j = 0; j < p; j++)
            v[i * p + j] = i == j;
    for (sweep = 0; sweep < 100; sweep++) {
        double off = 0.0;
        for (i = 0; i < p; i++)
            for (j = i + 1; j < p; j++)
                off += a[i * p + j] * a[i * p + j];
        if (off < 1e-30)
            break;
        for (i = 0; i < p; i++)
            for (j = i + 1; j < p; j++) {
                double apq = a[i * p + j], theta, t, cs, sn;
                if (fabs(apq) < 1e-300)
                    continue;
                theta = (a[j * p + j] - a[i * p + i]) / (2.0 * apq);
                t = (theta >= 0 ? 1.0 : -1.0) / (fabs(theta) + sqrt(theta * theta + 1.0));
                cs = 1.0 / sqrt(t * t + 1.0);
                sn = t * cs;
                for (k = 0; k < p; k++) {
                    double aki = a[k * p + i], akj = a[k * p + j];
                    a[k * p + i] = cs * aki - sn * akj;
                    a[k * p + j] = sn * aki + cs * akj;
                }
                for (k = 0; k < p; k++) {
                    double aik = a[i * p + k], ajk = a[j * p + k];
                    a[i * p + k] = cs * aik - sn * ajk;
                    a[j * p + k] = sn * aik + cs * ajk;
                }
                for (k = 0; k < p; k++) {
                    double vki = v[k * p + i], vkj = v[k * p + j];
                    v[k * p + i] = cs * vki - sn * vkj;
                    v[k * p + j] = sn * vki + cs * vkj;
                }
            }
    }
    for (i = 0; i < p; i++)
        w[i] = a[i * p + i];
}

/* The Jacobian in v (ln x or x) by central differences at u* into jac (m x p, column-major);
 * `f0` holds the residuals at the optimum, fa is m of scratch. */
static void jacobian_fd(lmctx *c, const double *ubest, const double *f0, double *jac, double *fa)
{
    const tp_fit_problem *pb = c->pb;
    int p = pb->n_params, j, k;
    long m = pb->log->n, r;
    double x[TP_FIT_MAX_PARAMS];
    for (j = 0; j < p; j++) {
        double ua = ubest[j] + TP_FIT_COV_STEP, ub = ubest[j] - TP_FIT_COV_STEP, du;
        int ok;
        if (ua > 1.0)
            ua = ubest[j];
        if (ub < 0.0)
            ub = ubest[j];
        for (k = 0; k < p; k++)
            x[k] = u_to_x(&pb->params[k], ubest[k]);
        x[j] = u_to_x(&pb->params[j], ua);
        ok = evaluate(c->ev, x, fa, NULL) == 0;
        if (ok && ub != ubest[j]) {
            x[j] = u_to_x(&pb->params[j], ub);
            ok = evaluate(c->ev, x, c->fh, NULL) == 0;
        } else if (ok) {
            for (r = 0; r < m; r++)
                c->fh[r] = f0[r] + pb->log->reading[r];
        }
        du = (ua - ub) * dv_du(&pb->params[j]);
        for (r = 0; r < m; r++)
            jac[r + (long)j * m] = ok ? (fa[r] - c->fh[r]) / du : 0.0;
    }
}

/* From the Jacobian (m x p): the covariance of v (s^2 (J^T J)^-1 over the directions the log
 * sees, the eigen-decomposition of J^T J scaled to unit diagonal), the rank, and which
 * parameters the log does not determine (lost[i]). */
static void covariance(const double *jac, long m, int p, double s2, double *cov, int *lost,
                       int *rank)
{
    double a[TP_FIT_MAX_PARAMS * TP_FIT_MAX_PARAMS], v[TP_FIT_MAX_PARAMS * TP_FIT_MAX_PARAMS];
    double w[TP_FIT_MAX_PARAMS], scale[TP_FIT_MAX_PARAMS], wmax = 0.0;
    int i, j, k;
    long r;
    /* A = J^T J, normalised to unit diagonal for the eigen-decomposition. */
    for (i = 0; i < p; i++)
        for (j = 0; j < p; j++) {
            double sum = 0.0;
            for (r = 0; r < m; r++)
                sum += jac[r + (long)i * m] * jac[r + (long)j * m];
            a[i * p + j] = sum;
        }
    for (i = 0; i < p; i++)
        scale[i] = a[i * p + i] > 0 ? sqrt(a[i * p + i]) : 0.0;
    for (i = 0; i < p; i++)
        for (j = 0; j < p; j++)
            a[i * p + j] = scale[i] > 0 && scale[j] > 0 ? a[i * p + j] / (scale[i] * scale[j])
                                                        : (i == j ? 0.0 : 0.0);
    jacobi_eigen(a, p, w, v);
    for (k = 0; k < p; k++)
        wmax = fmax(wmax, w[k]);
    *rank = 0;
    for (i = 0; i < p; i++)
        lost[i] = scale[i] <= 0;
    for (k = 0; k < p; k++) {
        if (w[k] > TP_FIT_RANK_TOL * wmax && wmax > 0) {
            (*rank)++;
            continue;
        }
        /* A direction the log does not see: every parameter with weight in it is lost. */
        for (i = 0; i < p; i++)
            if (v[i * p + k] * v[i * p + k] > 0.01)
                lost[i] = 1;
    }
    for (i = 0; i < p; i++)
        for (j = 0; j < p; j++) {
            double sum = 0.0;
            for (k = 0; k < p; k++)
                if (w[k] > TP_FIT_RANK_TOL * wmax && wmax > 0)
                    sum += v[i * p + k] * v[j * p + k] / w[k];
            cov[i * p + j] =
                scale[i] > 0 && scale[j] > 0 ? s2 * sum / (scale[i] * scale[j]) : (double)NAN;
        }
}

/* Jacobian in v (ln x or x) by central differences at u*, then the covariance, standard errors,
 * correlations and flags. `f0` holds the residuals at the optimum. */
static tp_status statistics(lmctx *c, const double *ubest, const double *f0, tp_fit_result *res)
{
    const tp_fit_problem *pb = c->pb;
    int p = pb->n_params, i, j;
    long m = pb->log->n;
    double *jac = malloc((size_t)m * (size_t)p * sizeof *jac), *fa = malloc((size_t)m * sizeof *fa);
    double cov[TP_FIT_MAX_PARAMS * TP_FIT_MAX_PARAMS];
    int lost[TP_FIT_MAX_PARAMS];
    if (!jac || !fa) {
        free(jac);
        free(fa);
        return TP_ERR_NOMEM;
    }
    jacobian_fd(c, ubest, f0, jac, fa);
    covariance(jac, m, p, res->rss / (double)res->dof, cov, lost, &res->rank);
    for (i = 0; i < p; i++) {
        tp_fit_param *q = &pb->params[i];
        double se = lost[i] ? (double)INFINITY : sqrt(cov[i * p + i]);
        q->se_scaled = se;
        q->se = q->scale == TP_FIT_LOG ? q->value * se : se;
        q->at_bound = ubest[i] < TP_FIT_BOUND_EDGE || ubest[i] > 1.0 - TP_FIT_BOUND_EDGE;
        q->weak =
            !isfinite(se) || (q->scale == TP_FIT_LOG ? se > TP_FIT_LOG_SE_MAX
                                                     : se > TP_FIT_LIN_SE_MAX * (q->hi - q->lo));
    }
    for (i = 0; i < p; i++)
        for (j = 0; j < p; j++) {
            double cij = (double)NAN;
            if (i == j)
                cij = lost[i] ? (double)NAN : 1.0;
            else if (!lost[i] && !lost[j])
                cij = cov[i * p + j] / sqrt(cov[i * p + i] * cov[j * p + j]);
            res->corr[i * p + j] = cij;
            if (i != j && isfinite(cij) && fabs(cij) > TP_FIT_CORR_MAX)
                pb->params[i].weak = 1;
        }
    free(jac);
    free(fa);
    return TP_OK;
}

static double now_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

void tp_fit_result_clear(tp_fit_result *res)
{
    if (!res)
        return;
    free(res->model);
    free(res->model_start);
    free(res->corr);
    free(res->node_peak);
    memset(res, 0, sizeof *res);
}

/* The work space of the Levenberg-Marquardt starts, and the best of them so far. */
typedef struct lmwork {
    int m, p, starts;
    double *fvec, *fjac, *wa4, *fbest, *rss_of; /* m, m x p, m, m, starts */
    double diag[TP_FIT_MAX_PARAMS], qtf[TP_FIT_MAX_PARAMS], wa1[TP_FIT_MAX_PARAMS];
    double wa2[TP_FIT_MAX_PARAMS], wa3[TP_FIT_MAX_PARAMS], z[TP_FIT_MAX_PARAMS];
    int ipvt[TP_FIT_MAX_PARAMS];
    double best, zbest[TP_FIT_MAX_PARAMS]; /* the smallest sum of squares, and where */
    int best_info;
} lmwork;

/* The starting values must give a model run: report why not, and warn when the model does not
 * start where the log does. */
static tp_status check_start(evaluator *ev, const tp_fit_problem *pb, tp_fit_result *res,
                             tp_diag *d)
{
    const tp_templog *log = pb->log;
    double x[TP_FIT_MAX_PARAMS];
    int k;
    for (k = 0; k < pb->n_params; k++)
        x[k] = pb->params[k].start;
    if (evaluate(ev, x, res->model_start, NULL) != 0) {
        tp_diag_error(d, tp_diag_loc_none(), NULL,
                      "check the config with 'tepid warmup' and the bounds of --free",
                      "the model run with the starting values failed: %s", ev->why);
        return TP_ERR_SOLVER;
    }
    if (fabs(res->model_start[0] - log->reading[0]) > TP_FIT_START_MISMATCH) {
        char hint[256];
        snprintf(hint, sizeof hint,
                 "start the log with the plate cold, or set room.temperature to the log's "
                 "start (--set room.temperature=%.1fdegC)",
                 log->reading[0] - TP_KELVIN_0C);
        tp_diag_warn(d, (tp_loc){log->name, log->line[0], 1}, NULL, hint,
                     "the log starts at %.1f degC but the model starts at %.1f degC",
                     log->reading[0] - TP_KELVIN_0C, res->model_start[0] - TP_KELVIN_0C);
    }
    return TP_OK;
}

/* Levenberg-Marquardt from w->starts points: the configured start, then a Halton sequence over
 * the bounds; a start that enters the best minimum's basin stops there (lm_fcn). */
static void multistart(lmctx *c, lmwork *w, tp_fit_result *res)
{
    const tp_fit_problem *pb = c->pb;
    int p = w->p, m = w->m, s, k, info;
    for (s = 0; s < w->starts; s++) {
        int nfev = 0, njev = 0;
        for (k = 0; k < p; k++) {
            double u =
                s == 0 ? x_to_u(&pb->params[k], pb->params[k].start) : halton(s, halton_base[k]);
            if (u < TP_FIT_U_START_MIN)
                u = TP_FIT_U_START_MIN;
            if (u > 1.0 - TP_FIT_U_START_MIN)
                u = 1.0 - TP_FIT_U_START_MIN;
            w->z[k] = u_to_z(u);
        }
        info = lmder(lm_fcn, c, m, p, w->z, w->fvec, w->fjac, m, TP_FIT_FTOL, TP_FIT_XTOL, 0.0,
                     TP_FIT_MAXFEV, w->diag, 1, TP_FIT_FACTOR, 0, &nfev, &njev, w->ipvt, w->qtf,
                     w->wa1, w->wa2, w->wa3, w->wa4);
        w->rss_of[s] = sum_sq(w->fvec, m);
        if (c->merged) {
            w->rss_of[s] = w->best; /* it was on its way to the best minimum */
            c->merged = 0;
            res->starts_run++;
            continue;
        }
        res->starts_run++;
        if (w->rss_of[s] < w->best) {
            w->best = w->rss_of[s];
            w->best_info = info;
            memcpy(w->zbest, w->z, (size_t)p * sizeof *w->z);
            memcpy(w->fbest, w->fvec, (size_t)m * sizeof *w->fvec);
        }
        c->have_best = 1;
        c->best_rss = w->best;
        for (k = 0; k < p; k++)
            c->best_u[k] = z_to_u(w->zbest[k]);
    }
}

/* The fitted model once more at x, watching the peaks for the cautions; then the residuals
 * (into fbest) and their statistics. */
static tp_status fitted_run(evaluator *ev, const tp_templog *log, const double *x, double *fbest,
                            tp_fit_result *res, tp_diag *d)
{
    long i;
    ev->track = 1;
    for (i = 0; i < ev->n_nodes; i++)
        ev->peak[i] = -HUGE_VAL;
    if (evaluate(ev, x, res->model, NULL) != 0) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL,
                      "the model run with the fitted values failed: %s", ev->why);
        return TP_ERR_SOLVER;
    }
    ev->track = 0;
    res->n_nodes = ev->n_nodes;
    memcpy(res->node_peak, ev->peak, (size_t)ev->n_nodes * sizeof *ev->peak);
    res->surface_max = ev->surface_max;
    res->current_max = ev->current_max;
    res->node_max = -HUGE_VAL;
    for (i = 0; i < ev->n_nodes; i++)
        res->node_max = fmax(res->node_max, ev->peak[i]);
    res->rss = 0.0;
    res->max_abs = -1.0;
    for (i = 0; i < res->m; i++) {
        double r = res->model[i] - log->reading[i];
        fbest[i] = r;
        res->rss += r * r;
        if (fabs(r) > res->max_abs) {
            res->max_abs = fabs(r);
            res->max_row = i;
        }
    }
    res->rms = sqrt(res->rss / res->m);
    res->sigma = sqrt(res->rss / (double)res->dof);
    return TP_OK;
}

/* The result's arrays and the work space; 0, or -1 when out of memory (free with the rest). */
static int allocate(int m, int p, int n_nodes, tp_fit_result *res, lmctx *c, lmwork *w)
{
    res->model = malloc((size_t)m * sizeof *res->model);
    res->model_start = malloc((size_t)m * sizeof *res->model_start);
    res->corr = malloc((size_t)p * (size_t)p * sizeof *res->corr);
    res->node_peak = malloc((size_t)(n_nodes > 0 ? n_nodes : 1) * sizeof *res->node_peak);
    w->fvec = malloc((size_t)m * sizeof *w->fvec);
    w->fbest = malloc((size_t)m * sizeof *w->fbest);
    w->fjac = malloc((size_t)m * (size_t)p * sizeof *w->fjac);
    w->wa4 = malloc((size_t)m * sizeof *w->wa4);
    c->model = malloc((size_t)m * sizeof *c->model);
    c->fh = malloc((size_t)m * sizeof *c->fh);
    w->rss_of = malloc((size_t)w->starts * sizeof *w->rss_of);
    return res->model && res->model_start && res->corr && res->node_peak && w->fvec && w->fbest &&
                   w->fjac && w->wa4 && c->model && c->fh && w->rss_of
               ? 0
               : -1;
}

tp_status tp_fit_run(const tp_fit_problem *pb, tp_fit_result *res, tp_diag *d)
{
    const tp_templog *log = pb->log;
    int p = pb->n_params, s, k;
    double t0 = now_seconds(), ubest[TP_FIT_MAX_PARAMS], x[TP_FIT_MAX_PARAMS];
    evaluator ev;
    lmctx c;
    lmwork w;
    tp_status st;

    memset(res, 0, sizeof *res);
    memset(&c, 0, sizeof c);
    memset(&w, 0, sizeof w);
    st = tp_minpacklib_load(d);
    if (st != TP_OK)
        return st;
    if (p < 1 || p > TP_FIT_MAX_PARAMS) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, "free one to eight keys with --free",
                      "%d free parameters", p);
        return TP_ERR_USAGE;
    }
    if (log->n <= p || log->n > 0x7fffffffL / TP_FIT_MAX_PARAMS) {
        tp_diag_error(d, (tp_loc){log->name, 0, 0}, NULL, NULL,
                      "%ld rows cannot determine %d parameters", log->n, p);
        return TP_ERR_CONFIG;
    }
    w.m = (int)log->n;
    w.p = p;
    w.best = HUGE_VAL;
    st = evaluator_init(&ev, pb, d);
    if (st != TP_OK)
        return st;
    w.starts = pb->starts < 1 ? 1 : pb->starts > TP_FIT_STARTS_MAX ? TP_FIT_STARTS_MAX : pb->starts;
    res->m = w.m;
    res->p = p;
    res->drive = ev.drive;
    res->sensor = ev.sensor;
    res->dof = w.m - p;
    if (allocate(w.m, p, ev.n_nodes, res, &c, &w) != 0) {
        st = TP_ERR_NOMEM;
        goto done;
    }
    c.ev = &ev;
    c.pb = pb;
    if ((st = check_start(&ev, pb, res, d)) != TP_OK)
        goto done;
    multistart(&c, &w, res);
    if (!(w.best < TP_FIT_PENALTY * TP_FIT_PENALTY * 0.5 * w.m)) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, "check the config and the bounds of --free",
                      "no model run succeeded during the fit: %s", ev.why);
        st = TP_ERR_SOLVER;
        goto done;
    }
    for (s = 0; s < res->starts_run; s++)
        if (w.rss_of[s] <= w.best * (1.0 + TP_FIT_SAME) + 1e-300)
            res->starts_at_best++;
    res->lm_info = w.best_info;
    for (k = 0; k < p; k++) {
        ubest[k] = z_to_u(w.zbest[k]);
        pb->params[k].value = u_to_x(&pb->params[k], ubest[k]);
        x[k] = pb->params[k].value;
    }
    st = fitted_run(&ev, log, x, w.fbest, res, d);
    if (st == TP_OK)
        st = statistics(&c, ubest, w.fbest, res);
done:
    res->evals = ev.evals;
    res->failed_runs = c.fails;
    res->seconds = now_seconds() - t0;
    evaluator_clear(&ev);
    free(w.fvec);
    free(w.fbest);
    free(w.fjac);
    free(w.wa4);
    free(c.model);
    free(c.fh);
    free(w.rss_of);
    if (st != TP_OK)
        tp_fit_result_clear(res);
    return st;
}

int tp_fit_cautions(const tp_description *fitted, const tp_network *net, const tp_fit_result *res,
                    tp_caution out[TP_CAUTIONS_MAX])
{
    tp_caution_exposure ex = {res->surface_max, res->node_max, res->current_max, res->node_peak,
                              NULL};
    return tp_caution_list(fitted, net, &ex, out);
}
