/* tepid sweep: warm-up metrics over parameter grids (--vary) and tolerance spreads (--spread),
 * run on all cores; the table, CSV, JSON, and a chart or heat map. */
#include <errno.h>
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "gsllib.h"
#include "configedit.h"
#include "infile.h"
#include "csv.h"
#include "json.h"
#include "outfile.h"
#include "plot.h"
#include "session.h"
#include "summary.h"
#include "sweep.h"
#include "verbs.h"

#define TP_SWEEP_SAMPLES 500        /* default --samples */
#define TP_SWEEP_PROGRESS_AFTER 1.0 /* s: the progress bar appears after this long */
#define TP_SWEEP_BAR 28             /* characters of the progress bar */
#define TP_SWEEP_LIST_FAILED 20     /* failed points listed in the text summary */
#define TP_SWEEP_EVEN 1e-6          /* relative slack of "evenly spaced" axes (heat map) */

static const tp_opt sweep_opts[] = {
    {"vary", 0, 1, 1, 0, "KEY=RANGE",
     "grid axis: FROM:TO:STEP or A,B,C with units, e.g. heater.power=150W:400W:25W (once or "
     "twice)"},
    {"spread", 0, 1, 1, 0, "KEY=DIST",
     "tolerance: normal:SIGMA or uniform:LOW:HIGH, in % or with units (repeatable)"},
    {"samples", 0, 1, 0, 0, "N",
     "samples of a tolerance study (default 500; with --until the most to run)"},
    {"seed", 0, 1, 0, 0, "S", "seed of the sample streams (default 1)"},
    {"design", 0, 1, 0, 0, "NAME",
     "how samples are placed: random (default), lhs (Latin hypercube) or sobol (scrambled "
     "Sobol points)"},
    {"replicates", 0, 1, 0, 0, "R",
     "independent replicates (and --until batches) the samples are split into (default 10)"},
    {"percentiles", 0, 1, 0, 0, "METHOD",
     "how p5, p50, p95 and their intervals are estimated: order (order statistics, default) or "
     "fitted (a response surface as control variate; far fewer samples for smooth metrics)"},
    {"until", 0, 1, 1, 0, "METRIC.STAT=+-H",
     "run batches until the 95 % interval of a statistic has half-width H, e.g. "
     "time_to_setpoint_s.p95=+-1s (repeatable)"},
    {"shard", 0, 1, 0, 0, "K/N",
     "run only shard K of N of the samples and write them to --json for --merge"},
    {"merge", 0, TP_OPT_VALUES, 1, 0, "FILE...",
     "combine shard files into the outputs of one run (no config FILE)"},
    {"jobs", 'j', 1, 0, 0, "N",
     "worker threads, 1 to 256 (default: the number of processors, at most 256)"},
    {"metric", 0, 1, 0, 0, "NAME",
     "metric of the heat map or distribution plot (default time_surface_ready_s, or "
     "time_to_setpoint_s without a working surface)"},
    {"csv", 0, 1, 0, 1, "FILE", "one row per point or sample (- for standard output)"},
    {"json", 0, 1, 0, 1, "FILE", "points, failures and statistics as JSON"},
    {"stats", 0, 1, 0, 1, "FILE",
     "the statistics with their 95 % confidence intervals as CSV (tolerance studies)"},
    {"plot", 0, 1, 0, TP_OUT_FIGURE, "FILE",
     "line chart (one --vary), heat map (two), distribution (--spread)"},
    TP_OPT_SET,
    TP_OPT_QUIET,
    TP_OPT_END,
};

/* The metrics of the text table of a grid, in order. */
static const int grid_columns[] = {
    TP_MET_TIME_SETPOINT, TP_MET_TIME_READY, TP_MET_OVERSHOOT_READING, TP_MET_HOLD_POWER,
    TP_MET_HOLD_DUTY,     TP_MET_MARGIN,     TP_MET_ENERGY_READY};
#define N_GRID_COLUMNS (sizeof grid_columns / sizeof grid_columns[0])

/* One --until target: the statistic of a metric and the half-width wanted (SI). */
typedef struct target {
    int metric, stat;
    double halfwidth;
    double reached; /* the half-width at the end (NaN: no interval) */
    double needed;  /* samples estimated for the target (NaN: unknown) */
} target;

typedef struct options {
    const char *vary[TP_SWEEP_MAX_PARAMS + 1];
    const char *spread[TP_SWEEP_MAX_PARAMS + 1];
    int n_vary, n_spread;
    long samples;
    uint64_t seed;
    int jobs;
    int metric;
    int design;
    long replicates;
    int percentiles; /* tp_sweep_pct */
    target until[TP_CLI_MAX_ARGS];
    int n_until;
    long shard, shards; /* --shard K/N (0/0: none) */
    const char *merge[TP_CLI_MAX_ARGS];
    int n_merge;
} options;

/* What the outputs say about the study besides its plan and results: from the session, or from
 * the shard files of a merge. */
typedef struct study_info {
    char file[TP_PATH_MAX];  /* the config file as given */
    char title[TP_TEXT_MAX]; /* the config's title ("" when none) */
    char chart[TP_TEXT_MAX]; /* the title of figures (cut to TP_TEXT_MAX) */
    double tolerance, duration;
    char *network; /* the text of tp_summary_network, owned */
    const tp_session *session; /* NULL in a merge */
} study_info;

/* ---- options ------------------------------------------------------------------------------- */

static tp_status whole_number(const char *text, const char *opt, double lo, double hi, double *out,
                              tp_diag *d)
{
    if (tp_units_parse_double(text, out) != 0 || *out != floor(*out) || *out < lo || *out > hi) {
        tp_diag_error(d, (tp_loc){opt, 1, 1}, NULL, NULL,
                      "'%s' is not a whole number from %.0f to %.0f", text, lo, hi);
        return TP_ERR_USAGE;
    }
    return TP_OK;
}

/* The dimension of a half-width of a metric's statistic: its file unit, a temperature as an
 * interval. */
static tp_dim metric_spread_dim(int m)
{
    static const struct {
        const char *unit;
        tp_dim dim;
    } dims[] = {{"s", TP_DIM_TIME},       {"K", TP_DIM_INTERVAL},   {"degC", TP_DIM_INTERVAL},
                {"J", TP_DIM_ENERGY},     {"W", TP_DIM_POWER},      {"A", TP_DIM_CURRENT},
                {"K/s", TP_DIM_RATE}};
    size_t k;
    for (k = 0; k < sizeof dims / sizeof dims[0]; k++)
        if (strcmp(tp_metricdef_swept(m)->file_unit, dims[k].unit) == 0)
            return dims[k].dim;
    return TP_DIM_NONE;
}

/* "METRIC.STAT=+-H", e.g. "time_to_setpoint_s.p95=+-1s". */
static tp_status parse_until(const char *text, target *t, tp_diag *d)
{
    tp_loc loc = {"--until", 1, 1};
    const char *eq = strchr(text, '='), *dot;
    char key[96], names[1024], msg[256];
    const char *hint = NULL;
    size_t len;
    memset(t, 0, sizeof *t);
    t->reached = t->needed = TP_UNSET;
    len = eq ? (size_t)(eq - text) : 0;
    if (!eq || len == 0 || len >= sizeof key) {
        tp_diag_error(d, loc, NULL, "e.g. --until 'time_to_setpoint_s.p95=+-1s'",
                      "expected METRIC.STAT=+-HALFWIDTH in '%s'", text);
        return TP_ERR_USAGE;
    }
    memcpy(key, text, len);
    key[len] = '\0';
    dot = strrchr(key, '.');
    if (!dot) {
        tp_diag_error(d, loc, NULL, "name a statistic after the metric: mean, sd, p5, p50 or p95",
                      "no statistic in '%s'", key);
        return TP_ERR_USAGE;
    }
    key[dot - key] = '\0';
    t->metric = tp_metricdef_find(key);
    if (t->metric < 0) {
        tp_metricdef_keys(names, sizeof names);
        tp_diag_error(d, loc, NULL, names, "unknown metric '%s'", key);
        return TP_ERR_USAGE;
    }
    t->stat = tp_sweep_stat_find(dot + 1);
    if (t->stat < 0) {
        tp_diag_error(d, loc, key, "mean, sd, p5, p50 or p95", "unknown statistic '%s'", dot + 1);
        return TP_ERR_USAGE;
    }
    if (strncmp(eq + 1, "+-", 2) != 0) {
        tp_diag_error(d, loc, key, "write the half-width as +-VALUE, e.g. +-1s",
                      "expected '+-' after '='");
        return TP_ERR_USAGE;
    }
    if (tp_units_parse(eq + 3, metric_spread_dim(t->metric), &t->halfwidth, msg, sizeof msg,
                       &hint) != TP_OK) {
        tp_diag_error(d, loc, key, hint, "%s", msg);
        return TP_ERR_USAGE;
    }
    if (!(t->halfwidth > 0) || !isfinite(t->halfwidth)) {
        tp_diag_error(d, loc, key, "e.g. +-1s", "the half-width must be above zero");
        return TP_ERR_USAGE;
    }
    return TP_OK;
}

/* "K/N" with 1 <= K <= N <= TP_SWEEP_MAX_POINTS. */
static tp_status parse_shard(const char *text, options *o, tp_diag *d)
{
    char *end = NULL;
    long k, n;
    errno = 0;
    k = strtol(text, &end, 10);
    if (end && *end == '/' && end != text && errno == 0) {
        const char *rest = end + 1;
        n = strtol(rest, &end, 10);
        if (end != rest && *end == '\0' && errno == 0 && n >= 1 && n <= TP_SWEEP_MAX_POINTS &&
            k >= 1 && k <= n) {
            o->shard = k;
            o->shards = n;
            return TP_OK;
        }
    }
    tp_diag_error(d, (tp_loc){"--shard", 1, 1}, NULL,
                  "K/N with 1 <= K <= N, e.g. --shard 2/8 (shards count from 1)",
                  "'%s' is not a shard", text);
    return TP_ERR_USAGE;
}

/* --merge takes shard files and output options only. */
static tp_status check_merge(const tp_cli *cli, options *o, tp_diag *d)
{
    static const char *const study_opts[] = {"vary",  "spread", "samples", "seed",
                                             "design", "replicates", "until", "shard", "set",
                                             "jobs"};
    size_t k;
    o->n_merge = tp_cli_all(cli, "merge", o->merge, TP_CLI_MAX_ARGS);
    if (cli->file) {
        tp_diag_error(d, (tp_loc){"--merge", 1, 1}, NULL,
                      "the shard files carry the study: tepid sweep --merge A.json B.json ...",
                      "--merge takes no config file ('%s')", cli->file);
        return TP_ERR_USAGE;
    }
    for (k = 0; k < sizeof study_opts / sizeof study_opts[0]; k++)
        if (tp_cli_get(cli, study_opts[k])) {
            tp_diag_error(d, (tp_loc){"--merge", 1, 1}, NULL,
                          "the shard files carry the study; give only outputs with --merge",
                          "--%s cannot be combined with --merge", study_opts[k]);
            return TP_ERR_USAGE;
        }
    return TP_OK;
}

/* The options a tolerance study adds: design, replicates, --until, --shard. */
static tp_status parse_study_options(const tp_cli *cli, options *o, tp_diag *d)
{
    const char *s, *list[TP_CLI_MAX_ARGS];
    double v;
    int k;
    o->design = TP_DESIGN_RANDOM;
    o->replicates = TP_SWEEP_REPLICATES;
    if (o->n_vary > 0) {
        static const char *const spread_only[] = {"design", "replicates", "until", "shard",
                                                  "percentiles"};
        for (k = 0; k < 5; k++)
            if (tp_cli_get(cli, spread_only[k])) {
                tp_diag_error(d, (tp_loc){"--vary", 1, 1}, NULL, "it applies to --spread",
                              "--%s has no meaning for a grid", spread_only[k]);
                return TP_ERR_USAGE;
            }
        return TP_OK;
    }
    if ((s = tp_cli_get(cli, "design"))) {
        o->design = tp_sweep_design_find(s);
        if (o->design < 0) {
            tp_diag_error(d, (tp_loc){"--design", 1, 1}, NULL, "random, lhs or sobol",
                          "unknown design '%s'", s);
            return TP_ERR_USAGE;
        }
    }
    if ((s = tp_cli_get(cli, "replicates"))) {
        if (whole_number(s, "--replicates", 1, TP_SWEEP_MAX_POINTS, &v, d) != TP_OK)
            return TP_ERR_USAGE;
        o->replicates = (long)v;
    } else if (o->samples % o->replicates != 0) {
        o->replicates = 1; /* the default where 10 does not divide --samples */
    }
    o->n_until = tp_cli_all(cli, "until", list, TP_CLI_MAX_ARGS);
    for (k = 0; k < o->n_until; k++)
        if (parse_until(list[k], &o->until[k], d) != TP_OK)
            return TP_ERR_USAGE;
    if ((s = tp_cli_get(cli, "shard"))) {
        if (parse_shard(s, o, d) != TP_OK)
            return TP_ERR_USAGE;
        if (o->n_until > 0) {
            tp_diag_error(d, (tp_loc){"--shard", 1, 1}, NULL,
                          "run --until on one machine, or shards of a fixed --samples",
                          "--shard and --until cannot be combined");
            return TP_ERR_USAGE;
        }
        if (!tp_cli_get(cli, "json") || tp_cli_get(cli, "csv") || tp_cli_get(cli, "plot") ||
            tp_cli_get(cli, "stats") || tp_cli_get(cli, "percentiles")) {
            tp_diag_error(d, (tp_loc){"--shard", 1, 1}, NULL,
                          "write the shard with --json FILE; --merge writes --csv, --stats and "
                          "--plot, and takes --percentiles",
                          "a shard writes --json only");
            return TP_ERR_USAGE;
        }
    }
    return TP_OK;
}

static tp_status parse_options(const tp_cli *cli, options *o, tp_diag *d)
{
    const char *s;
    double v;
    memset(o, 0, sizeof *o);
    o->n_vary = tp_cli_all(cli, "vary", o->vary, TP_SWEEP_MAX_PARAMS + 1);
    o->n_spread = tp_cli_all(cli, "spread", o->spread, TP_SWEEP_MAX_PARAMS + 1);
    o->samples = TP_SWEEP_SAMPLES;
    o->seed = 1;
    o->jobs = tp_sweep_default_jobs();
    o->metric = -1; /* chosen after the run (default_metric) */
    if ((s = tp_cli_get(cli, "percentiles")) && (o->percentiles = tp_sweep_pct_find(s)) < 0) {
        tp_diag_error(d, (tp_loc){"--percentiles", 1, 1}, NULL, "order or fitted",
                      "unknown percentile method '%s'", s);
        return TP_ERR_USAGE;
    }
    if (tp_cli_get(cli, "merge")) {
        if (check_merge(cli, o, d) != TP_OK)
            return TP_ERR_USAGE;
        if ((s = tp_cli_get(cli, "metric")) && (o->metric = tp_metricdef_find(s)) < 0) {
            char names[1024];
            tp_metricdef_keys(names, sizeof names);
            tp_diag_error(d, (tp_loc){"--metric", 1, 1}, NULL, names, "unknown metric '%s'", s);
            return TP_ERR_USAGE;
        }
        return TP_OK;
    }
    if (o->n_vary == 0 && o->n_spread == 0) {
        tp_diag_error(d, tp_diag_loc_none(), NULL,
                      "e.g. --vary heater.power=150W:400W:25W or --spread heater.resistance="
                      "normal:5%",
                      "give --vary (a grid) or --spread (a tolerance study)");
        return TP_ERR_USAGE;
    }
    if (o->n_vary > 0 && o->n_spread > 0) {
        tp_diag_error(d, tp_diag_loc_none(), NULL,
                      "run the grid and the tolerance study separately",
                      "--vary and --spread cannot be combined");
        return TP_ERR_USAGE;
    }
    if (o->n_vary > TP_SWEEP_MAX_AXES) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, "a grid has one or two axes",
                      "%d --vary options", o->n_vary);
        return TP_ERR_USAGE;
    }
    if (o->n_spread > TP_SWEEP_MAX_PARAMS) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "more than %d --spread options",
                      TP_SWEEP_MAX_PARAMS);
        return TP_ERR_USAGE;
    }
    if (o->n_vary > 0 && (tp_cli_get(cli, "samples") || tp_cli_get(cli, "seed"))) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, "they apply to --spread",
                      "--samples and --seed have no meaning for a grid");
        return TP_ERR_USAGE;
    }
    if ((s = tp_cli_get(cli, "samples"))) {
        if (whole_number(s, "--samples", 1, TP_SWEEP_MAX_POINTS, &v, d) != TP_OK)
            return TP_ERR_USAGE;
        o->samples = (long)v;
    }
    if ((s = tp_cli_get(cli, "seed"))) {
        char *end = NULL;
        unsigned long long u = 0;
        errno = 0;
        if (s[0] >= '0' && s[0] <= '9')
            u = strtoull(s, &end, 10);
        if (!end || *end != '\0' || errno == ERANGE) {
            tp_diag_error(d, (tp_loc){"--seed", 1, 1}, NULL, NULL,
                          "'%s' is not a whole number from 0 to 2^64 - 1", s);
            return TP_ERR_USAGE;
        }
        o->seed = (uint64_t)u;
    }
    if ((s = tp_cli_get(cli, "jobs"))) {
        if (whole_number(s, "--jobs", 1, TP_SWEEP_MAX_JOBS, &v, d) != TP_OK)
            return TP_ERR_USAGE;
        o->jobs = (int)v;
    }
    if ((s = tp_cli_get(cli, "metric"))) {
        o->metric = tp_metricdef_find(s);
        if (o->metric < 0) {
            char names[1024];
            tp_metricdef_keys(names, sizeof names);
            tp_diag_error(d, (tp_loc){"--metric", 1, 1}, NULL, names, "unknown metric '%s'", s);
            return TP_ERR_USAGE;
        }
    }
    if (o->n_vary > 0 && tp_cli_get(cli, "stats")) {
        tp_diag_error(d, (tp_loc){"--stats", 1, 1}, NULL, "it applies to --spread",
                      "a grid has no statistics");
        return TP_ERR_USAGE;
    }
    return parse_study_options(cli, o, d);
}

/* ---- units and values for output ------------------------------------------------------- */

/* Files (CSV, JSON) carry absolute temperatures in degC, everything else in SI. */
static double param_out(const tp_sweep_param *p, double si)
{
    return p->dim == TP_DIM_TEMPERATURE ? si - TP_KELVIN_0C : si;
}

/* The unit of a parameter in files; "" for a dimensionless key. */
static const char *param_unit(const tp_sweep_param *p)
{
    if (p->dim == TP_DIM_NONE)
        return "";
    return p->dim == TP_DIM_TEMPERATURE ? "degC" : tp_units_si_name(p->dim);
}

/* Text and figures show a parameter in the unit the user wrote (the option's, else the
 * config's: 3 mm, not 0.003), falling back to the file unit when it has none. */
static const char *param_unit_shown(const tp_sweep_param *p)
{
    return p->unit[0] ? p->unit : param_unit(p);
}

static double param_shown(const tp_sweep_param *p, double si)
{
    double v;
    if (p->unit[0] && tp_units_from_si(si, p->unit, p->dim, &v) == TP_OK)
        return v;
    return param_out(p, si);
}

/* A temperature difference or a standard deviation in the shown unit (never offset). */
static double param_shown_interval(const tp_sweep_param *p, double si)
{
    double v;
    tp_dim dim = p->dim == TP_DIM_TEMPERATURE ? TP_DIM_INTERVAL : p->dim;
    if (p->unit[0] && tp_units_from_si(si, p->unit, dim, &v) == TP_OK)
        return v;
    return si;
}

/* " mm" or "" (dimensionless), to follow a shown number in text. */
static const char *spaced_unit(const tp_sweep_param *p, char *buf, size_t size)
{
    const char *u = param_unit_shown(p);
    snprintf(buf, size, "%s%s", u[0] ? " " : "", u);
    return buf;
}

/* The unit as a column-name suffix: "W/(m2.K)" -> "W_per_m2K", degC -> "C", "1" -> none. */
static void unit_token(const tp_sweep_param *p, char *buf, size_t size)
{
    const char *u = p->dim == TP_DIM_TEMPERATURE ? "C" : tp_units_si_name(p->dim);
    size_t n = 0;
    buf[0] = '\0';
    if (strcmp(u, "1") == 0)
        return;
    for (; *u && n + 6 < size; u++) {
        if (*u == '/') {
            memcpy(buf + n, "_per_", 5);
            n += 5;
        } else if (*u != '(' && *u != ')' && *u != '.') {
            buf[n++] = *u;
        }
    }
    buf[n] = '\0';
}

static double metric_out(int m, double si)
{
    return tp_metricdef_file_value(tp_metricdef_swept(m), si);
}

static void metric_text(int m, double si, char *buf, size_t size)
{
    tp_summary_metric(tp_metricdef_swept(m), si, buf, size);
}

static const char *spread_kind_name(tp_spread_kind k)
{
    return k == TP_SPREAD_NORMAL ? "normal" : "uniform";
}

/* One line describing how a parameter is varied, in the shown unit. */
static void describe_param(FILE *fp, const tp_sweep_plan *plan, int k)
{
    const tp_sweep_param *p = &plan->params[k];
    char ub[TP_SWEEP_UNIT_MAX + 2];
    const char *u = spaced_unit(p, ub, sizeof ub);
    if (plan->mode == TP_SWEEP_GRID) {
        fprintf(fp, "    %-28s %ld value%s, %.6g .. %.6g%s (config: %.6g%s)\n", p->path,
                p->n_values, p->n_values == 1 ? "" : "s", param_shown(p, p->values[0]),
                param_shown(p, p->values[p->n_values - 1]), u, param_shown(p, p->nominal), u);
    } else if (p->kind == TP_SPREAD_NORMAL) {
        if (p->relative)
            fprintf(fp, "    %-28s normal, sd %.6g %% of %.6g%s\n", p->path, 100.0 * p->sigma,
                    param_shown(p, p->nominal), u);
        else
            fprintf(fp, "    %-28s normal, sd %.6g%s about %.6g%s\n", p->path,
                    param_shown_interval(p, p->sigma), u, param_shown(p, p->nominal), u);
    } else if (p->relative) {
        fprintf(fp, "    %-28s uniform, %+.6g %% .. %+.6g %% of %.6g%s\n", p->path, 100.0 * p->low,
                100.0 * p->high, param_shown(p, p->nominal), u);
    } else {
        fprintf(fp, "    %-28s uniform, %.6g .. %.6g%s (config: %.6g%s)\n", p->path,
                param_shown(p, p->low), param_shown(p, p->high), u, param_shown(p, p->nominal), u);
    }
}

/* "heater.power = 150 W, room.temperature = 20 degC" for point i. */
static void point_params(const tp_sweep_plan *plan, long i, char *buf, size_t size)
{
    size_t used = 0;
    int k;
    buf[0] = '\0';
    for (k = 0; k < plan->n_params && used < size; k++) {
        const tp_sweep_param *p = &plan->params[k];
        char ub[TP_SWEEP_UNIT_MAX + 2];
        int n = snprintf(buf + used, size - used, "%s%s = %.6g%s", k ? ", " : "", p->path,
                         param_shown(p, tp_sweep_value(plan, i, k)), spaced_unit(p, ub, sizeof ub));
        if (n < 0)
            break;
        used += (size_t)n;
    }
}

/* ---- progress ---------------------------------------------------------------------------- */

typedef struct progress {
    FILE *fp;
    int shown;
    const char *what; /* "points" or "samples" */
} progress;

static void show_progress(void *user, long done, long total, double elapsed)
{
    progress *pr = user;
    char bar[TP_SWEEP_BAR + 1], left[64];
    int k, filled;
    double rate;
    if (done >= total) {
        if (pr->shown)
            fprintf(pr->fp, "\r%*s\r", 79, "");
        fflush(pr->fp);
        return;
    }
    if (elapsed < TP_SWEEP_PROGRESS_AFTER)
        return;
    filled = (int)((double)TP_SWEEP_BAR * (double)done / (double)total);
    for (k = 0; k < TP_SWEEP_BAR; k++)
        bar[k] = k < filled ? '#' : '.';
    bar[TP_SWEEP_BAR] = '\0';
    rate = (double)done / elapsed;
    if (done > 0)
        tp_summary_duration((double)(total - done) / rate, left, sizeof left);
    else
        snprintf(left, sizeof left, "?");
    fprintf(pr->fp, "\r  [%s] %ld/%ld %s, %.1f/s, %s left   ", bar, done, total, pr->what, rate,
            left);
    fflush(pr->fp);
    pr->shown = 1;
}

/* ---- text summaries ------------------------------------------------------------------------ */

static void list_failed(FILE *fp, const tp_sweep_plan *plan, const tp_sweep_result *res, long total,
                        const char *what)
{
    long i, listed = 0;
    char params[512];
    for (i = 0; i < total; i++) {
        if (res[i].ok)
            continue;
        if (listed == TP_SWEEP_LIST_FAILED) {
            fprintf(fp, "    ... (every failure is in --json and as ok = 0 in --csv)\n");
            break;
        }
        point_params(plan, i, params, sizeof params);
        fprintf(fp, "    %s %ld (%s): %s\n", what, i + 1, params, res[i].reason);
        listed++;
    }
}

/* The metric columns of a grid table: the usual ones that some point has; without any (no
 * controller) the power, current and surface figures instead. Returns the count. */
static int grid_columns_present(const tp_sweep_result *res, long total, int *cols)
{
    static const int fallback[] = {TP_MET_POWER_MEAN, TP_MET_POWER_PEAK, TP_MET_CURRENT_PEAK,
                                   TP_MET_SURFACE_MAX};
    const int *sets[2] = {grid_columns, fallback};
    size_t sizes[2] = {N_GRID_COLUMNS, sizeof fallback / sizeof fallback[0]}, c;
    int n = 0, set;
    long i;
    for (set = 0; set < 2 && n == 0; set++)
        for (c = 0; c < sizes[set]; c++)
            for (i = 0; i < total; i++)
                if (res[i].ok && isfinite(res[i].metric[sets[set][c]])) {
                    cols[n++] = sets[set][c];
                    break;
                }
    return n;
}

static void grid_table(FILE *fp, const tp_sweep_plan *plan, const tp_sweep_result *res, long total)
{
    int cols[N_GRID_COLUMNS + 4], nc = grid_columns_present(res, total, cols), c, k;
    int width[TP_SWEEP_MAX_AXES];
    long i;
    char buf[64];
    for (k = 0; k < plan->n_params; k++) {
        size_t len = strlen(plan->params[k].path);
        width[k] = len > 14 ? (int)len : 14;
    }
    fputc('\n', fp);
    for (k = 0; k < plan->n_params; k++)
        fprintf(fp, "  %*s", width[k], plan->params[k].path);
    for (c = 0; c < nc; c++)
        fprintf(fp, " %14s", tp_metricdef_swept(cols[c])->label);
    fputc('\n', fp);
    for (k = 0; k < plan->n_params; k++) {
        const char *u = param_unit_shown(&plan->params[k]);
        snprintf(buf, sizeof buf, "(%s)", u[0] ? u : "-");
        fprintf(fp, "  %*s", width[k], buf);
    }
    for (c = 0; c < nc; c++) {
        const tp_metricdef *md = tp_metricdef_swept(cols[c]);
        /* A duration carries its own units ("7 min 20 s"). */
        if (md->form == TP_FORM_DURATION)
            snprintf(buf, sizeof buf, " ");
        else
            snprintf(buf, sizeof buf, "(%s)", md->text_unit);
        fprintf(fp, " %14s", buf);
    }
    fputc('\n', fp);
    for (i = 0; i < total; i++) {
        for (k = 0; k < plan->n_params; k++)
            fprintf(fp, "  %*.6g", width[k],
                    param_shown(&plan->params[k], tp_sweep_value(plan, i, k)));
        if (!res[i].ok) {
            fprintf(fp, "  failed: %s\n", res[i].reason);
            continue;
        }
        for (c = 0; c < nc; c++) {
            metric_text(cols[c], res[i].metric[cols[c]], buf, sizeof buf);
            fprintf(fp, " %14s", buf);
        }
        fputc('\n', fp);
    }
    fputs("  (- : not reached in the simulated time, or not defined for this point; every metric "
          "is in --csv and --json)\n",
          fp);
}

#define SPREAD_COL 12 /* characters of a value column of the statistics table */

static void spread_table(FILE *fp, const tp_sweep_plan *plan, const tp_sweep_summary *sum)
{
    int m, none;
    char v[6][32], worst[48];
    fprintf(fp, "\n  %-18s %5s %*s %*s %*s %*s %*s %*s %-8s %-16s %s\n", "metric", "unit",
            SPREAD_COL, "mean", SPREAD_COL, "sd", SPREAD_COL, "p5", SPREAD_COL, "p50", SPREAD_COL,
            "p95", SPREAD_COL, "worst", "sample", "worst is", "driven most by (Spearman rho)");
    for (m = 0; m < plan->n_metrics; m++) {
        const tp_metricdef *mi = tp_metricdef_swept(m);
        const tp_sweep_summary *s = &sum[m];
        if (s->n == 0)
            continue; /* listed below as not defined */
        metric_text(m, s->mean, v[0], sizeof v[0]);
        tp_summary_metric_spread(mi, s->sd, v[1], sizeof v[1]);
        metric_text(m, s->p5, v[2], sizeof v[2]);
        metric_text(m, s->p50, v[3], sizeof v[3]);
        metric_text(m, s->p95, v[4], sizeof v[4]);
        metric_text(m, s->worst, v[5], sizeof v[5]);
        if (s->worst_index >= 0)
            snprintf(worst, sizeof worst, "#%ld", s->worst_index + 1);
        else
            snprintf(worst, sizeof worst, "-");
        fprintf(fp, "  %-18s %5s %*s %*s %*s %*s %*s %*s %-8s %-16s", mi->label,
                mi->form == TP_FORM_DURATION ? "" : mi->text_unit, SPREAD_COL, v[0], SPREAD_COL,
                v[1], SPREAD_COL, v[2], SPREAD_COL, v[3], SPREAD_COL, v[4], SPREAD_COL, v[5], worst,
                tp_metricdef_worse_name(mi->worse));
        if (s->driver >= 0)
            fprintf(fp, " %s (%+.2f)", plan->params[s->driver].path, s->rho[s->driver]);
        else
            fputs(" -", fp);
        fputc('\n', fp);
    }
    for (m = 0; m < plan->n_metrics; m++)
        if (sum[m].absent > 0 && sum[m].n > 0)
            fprintf(fp,
                    "  %s: absent in %ld sample%s (not reached in the simulated time); "
                    "statistics over the other %ld\n",
                    tp_metricdef_swept(m)->label, sum[m].absent, sum[m].absent == 1 ? "" : "s",
                    sum[m].n);
    for (m = 0, none = 0; m < plan->n_metrics; m++)
        if (sum[m].n == 0) {
            fprintf(fp, "%s%s",
                    none ? ", " : "  not defined for any sample: ", tp_metricdef_swept(m)->key);
            none = 1;
        }
    if (none)
        fputc('\n', fp);
}

/* ---- files ------------------------------------------------------------------------------------
 */

static tp_status write_csv(const char *path, const tp_sweep_plan *plan, const tp_sweep_result *res,
                           long total, tp_diag *d)
{
    tp_outfile o;
    long i;
    int k;
    char tok[64];
    tp_status st = tp_outfile_open(&o, path, d);
    if (st != TP_OK)
        return st;
    fputs(plan->mode == TP_SWEEP_GRID ? "point" : "sample", o.fp);
    for (k = 0; k < plan->n_params; k++) {
        unit_token(&plan->params[k], tok, sizeof tok);
        fprintf(o.fp, ",%s%s%s", plan->params[k].path, tok[0] ? "_" : "", tok);
    }
    fputs(",ok", o.fp);
    for (k = 0; k < plan->n_metrics; k++)
        fprintf(o.fp, ",%s", tp_metricdef_swept(k)->key);
    fputc('\n', o.fp);
    for (i = 0; i < total; i++) {
        fprintf(o.fp, "%ld", i + 1);
        for (k = 0; k < plan->n_params; k++) {
            fputc(',', o.fp);
            tp_csv_real(o.fp, param_out(&plan->params[k], tp_sweep_value(plan, i, k)));
        }
        fprintf(o.fp, ",%d", res[i].ok);
        for (k = 0; k < plan->n_metrics; k++) {
            fputc(',', o.fp);
            tp_csv_real(o.fp, metric_out(k, res[i].metric[k]));
        }
        fputc('\n', o.fp);
    }
    return tp_outfile_commit(&o, d);
}

/* A new item appended to a JSON array (an object, or an array when `array`); NULL when memory
 * runs out (nothing is appended then). */
static cJSON *append_item(cJSON *arr, int array)
{
    cJSON *o = array ? cJSON_CreateArray() : cJSON_CreateObject();
    if (!o || !cJSON_AddItemToArray(arr, o)) {
        cJSON_Delete(o);
        return NULL;
    }
    return o;
}

static void json_param(cJSON *arr, const tp_sweep_plan *plan, int k)
{
    const tp_sweep_param *p = &plan->params[k];
    cJSON *o = append_item(arr, 0), *vals;
    long i;
    if (!o)
        return;
    cJSON_AddStringToObject(o, "key", p->path);
    cJSON_AddStringToObject(o, "unit", param_unit(p));
    tp_json_number(o, "nominal", param_out(p, p->nominal));
    if (plan->mode == TP_SWEEP_GRID) {
        vals = cJSON_AddArrayToObject(o, "values");
        for (i = 0; vals && i < p->n_values; i++)
            cJSON_AddItemToArray(vals, cJSON_CreateNumber(param_out(p, p->values[i])));
        return;
    }
    cJSON_AddStringToObject(o, "distribution", spread_kind_name(p->kind));
    cJSON_AddBoolToObject(o, "relative", p->relative);
    if (p->kind == TP_SPREAD_NORMAL) {
        tp_json_number(o, "sigma", p->sigma); /* a fraction, or SI (an interval in K) */
    } else {
        tp_json_number(o, "low", p->relative ? p->low : param_out(p, p->low));
        tp_json_number(o, "high", p->relative ? p->high : param_out(p, p->high));
    }
}

/* The --until targets, their outcome and the samples each needs, into a JSON object. */
static void json_until(cJSON *root, const options *o, int met)
{
    cJSON *u = cJSON_AddObjectToObject(root, "until"), *arr;
    int k;
    if (!u)
        return;
    cJSON_AddStringToObject(u, "stopped", met ? "targets met" : "samples reached");
    arr = cJSON_AddArrayToObject(u, "targets");
    for (k = 0; arr && k < o->n_until; k++) {
        const target *t = &o->until[k];
        cJSON *e = append_item(arr, 0);
        if (!e)
            return;
        cJSON_AddStringToObject(e, "metric", tp_metricdef_swept(t->metric)->key);
        cJSON_AddStringToObject(e, "statistic", tp_sweep_stat_name(t->stat));
        tp_json_number(e, "halfwidth", t->halfwidth);
        tp_json_number(e, "reached", t->reached);
        cJSON_AddBoolToObject(e, "met", t->reached <= t->halfwidth);
        tp_json_number(e, "samples_needed", t->needed);
    }
}

/* The 95 % intervals of one metric's statistics, in file units (spreads without offset). */
static void json_intervals(cJSON *o, int m, const tp_sweep_summary *sm)
{
    cJSON *ci = cJSON_AddObjectToObject(o, "intervals");
    int k;
    for (k = 0; ci && k < TP_STAT_COUNT; k++) {
        cJSON *e = cJSON_AddObjectToObject(ci, tp_sweep_stat_name(k));
        int spread = k == TP_STAT_SD;
        if (!e)
            return;
        tp_json_number(e, "low", spread ? sm->lo[k] : metric_out(m, sm->lo[k]));
        tp_json_number(e, "high", spread ? sm->hi[k] : metric_out(m, sm->hi[k]));
        tp_json_number(e, "halfwidth", 0.5 * (sm->hi[k] - sm->lo[k]));
    }
    tp_json_number(o, "replicates", sm->reps >= 2 ? (double)sm->reps : TP_UNSET);
    cJSON_AddStringToObject(o, "percentile_method",
                            tp_sweep_pct_name(sm->fitted ? TP_PCT_FITTED : TP_PCT_ORDER));
    tp_json_number(o, "surface_r2", sm->fitted ? sm->fit_r2 : TP_UNSET);
}

static tp_status write_json(const char *path, const study_info *info, const tp_sweep_plan *plan,
                            const tp_sweep_result *res, long total, const tp_sweep_summary *sum,
                            const tp_sweep_totals *tot, const options *o_, int met, tp_diag *d)
{
    cJSON *root = cJSON_CreateObject(), *params, *points, *cautions;
    long i;
    int k;
    tp_status st;
    if (!root)
        return TP_ERR_NOMEM;
    cJSON_AddStringToObject(root, "mode", plan->mode == TP_SWEEP_GRID ? "grid" : "spread");
    tp_json_number(root, "tolerance", info->tolerance);
    if (plan->mode == TP_SWEEP_SPREAD) {
        char seed[32];
        /* As a string: a 64-bit seed does not fit a JSON number exactly. */
        snprintf(seed, sizeof seed, "%" PRIu64, plan->seed);
        cJSON_AddStringToObject(root, "seed", seed);
        tp_json_number(root, "samples", (double)total);
        cJSON_AddStringToObject(root, "design", tp_sweep_design_name(plan->design));
        tp_json_number(root, "replicates", (double)(total / plan->rep_size));
        tp_json_number(root, "confidence", TP_SWEEP_LEVEL);
        cJSON_AddStringToObject(root, "percentiles", tp_sweep_pct_name(plan->percentiles));
        if (o_ && o_->n_until > 0)
            json_until(root, o_, met);
    }
    params = cJSON_AddArrayToObject(root, "parameters");
    for (k = 0; params && k < plan->n_params; k++)
        json_param(params, plan, k);
    tp_json_number(root, "failed", (double)tot->failed);
    points = cJSON_AddArrayToObject(root, "points");
    for (i = 0; points && i < total; i++) {
        cJSON *pt = append_item(points, 0), *pv, *mv;
        if (!pt)
            break;
        tp_json_number(pt, "index", (double)(i + 1));
        pv = cJSON_AddObjectToObject(pt, "parameters");
        for (k = 0; pv && k < plan->n_params; k++)
            tp_json_number(pv, plan->params[k].path,
                           param_out(&plan->params[k], tp_sweep_value(plan, i, k)));
        cJSON_AddBoolToObject(pt, "ok", res[i].ok);
        if (!res[i].ok) {
            cJSON_AddStringToObject(pt, "reason", res[i].reason);
            continue;
        }
        mv = cJSON_AddObjectToObject(pt, "metrics");
        for (k = 0; mv && k < plan->n_metrics; k++)
            tp_json_number(mv, tp_metricdef_swept(k)->key, metric_out(k, res[i].metric[k]));
    }
    if (sum) {
        cJSON *stats = cJSON_AddObjectToObject(root, "statistics");
        int m;
        for (m = 0; stats && m < plan->n_metrics; m++) {
            const tp_sweep_summary *sm = &sum[m];
            cJSON *o = cJSON_AddObjectToObject(stats, tp_metricdef_swept(m)->key), *rho;
            if (!o)
                break;
            tp_json_number(o, "n", (double)sm->n);
            tp_json_number(o, "absent", (double)sm->absent);
            tp_json_number(o, "mean", metric_out(m, sm->mean));
            tp_json_number(o, "sd", sm->sd); /* a spread: no offset, even for degC */
            tp_json_number(o, "p5", metric_out(m, sm->p5));
            tp_json_number(o, "p50", metric_out(m, sm->p50));
            tp_json_number(o, "p95", metric_out(m, sm->p95));
            tp_json_number(o, "worst", metric_out(m, sm->worst));
            tp_json_number(o, "worst_index",
                           sm->worst_index >= 0 ? (double)(sm->worst_index + 1) : TP_UNSET);
            rho = cJSON_AddObjectToObject(o, "rank_correlation");
            for (k = 0; rho && k < plan->n_params; k++)
                tp_json_number(rho, plan->params[k].path, sm->rho[k]);
            if (sm->driver >= 0)
                cJSON_AddStringToObject(o, "driver", plan->params[sm->driver].path);
            else
                cJSON_AddNullToObject(o, "driver");
            json_intervals(o, m, sm);
        }
    }
    cautions = cJSON_AddArrayToObject(root, "cautions");
    tp_json_add_cautions(cautions, tot->cautions, tot->n_cautions);
    st = tp_json_write(path, root, d);
    cJSON_Delete(root);
    return st;
}

/* ---- figures --------------------------------------------------------------------------------- */

/* Whether a grid axis is evenly spaced (needed to draw it as heat-map cells). */
static int evenly_spaced(const tp_sweep_param *p)
{
    long i;
    double step;
    if (p->n_values < 3)
        return 1;
    step = p->values[1] - p->values[0];
    if (step == 0.0)
        return 0;
    for (i = 2; i < p->n_values; i++)
        if (fabs(p->values[i] - p->values[i - 1] - step) > TP_SWEEP_EVEN * fabs(step))
            return 0;
    return 1;
}

static void axis_label(const tp_sweep_param *p, char *buf, size_t size)
{
    const char *u = param_unit_shown(p);
    /* Bounded to the fields' sizes: GCC's -O3 truncation check cannot see them. */
    if (u[0])
        snprintf(buf, size, "%.*s (%.*s)", TP_SWEEP_PATH_MAX - 1, p->path, TP_SWEEP_UNIT_MAX - 1,
                 u);
    else
        snprintf(buf, size, "%.*s", TP_SWEEP_PATH_MAX - 1, p->path);
}

static void metric_label(int m, char *buf, size_t size)
{
    const tp_metricdef *mi = tp_metricdef_swept(m);
    snprintf(buf, size, "%s (%s)", mi->label, mi->text_unit);
}

static double metric_plot(int m, double si)
{
    return isfinite(si) ? tp_metricdef_text_value(tp_metricdef_swept(m), si) : TP_UNSET;
}

static const char *chart_title(const study_info *info)
{
    return info->chart;
}

/* The curves of the one-parameter chart: panel, metric, legend, dash, right axis. */
static const struct line_curve {
    int panel, metric;
    const char *label;
    int dash, right;
} line_curves[] = {
    {0, TP_MET_TIME_SETPOINT, "reading at the setpoint", 0, 0},
    {0, TP_MET_TIME_READY, "surface ready", 1, 0},
    {1, TP_MET_OVERSHOOT_READING, "reading", 0, 0},
    {1, TP_MET_OVERSHOOT_SURFACE, "surface", 1, 0},
    {2, TP_MET_HOLD_POWER, "holding power", 0, 0},
    {2, TP_MET_MARGIN, "margin", 1, 1},
    {3, TP_MET_POWER_MEAN, "mean power", 0, 0}, /* only when nothing above exists */
    {3, TP_MET_POWER_PEAK, "peak power", 1, 0},
};
#define N_LINE_CURVES (sizeof line_curves / sizeof line_curves[0])

static const struct line_panel {
    const char *ylabel, *y2label;
    double share;
} line_panels[] = {
    {"time (min)", NULL, 1.5},
    {"overshoot (K)", NULL, 1.0},
    {"holding power (W)", "margin (x)", 1.0},
    {"power (W)", NULL, 1.0},
};
#define N_LINE_PANELS (sizeof line_panels / sizeof line_panels[0])

/* One --vary: the times, the overshoot, and the holding power with the margin against the
 * parameter. Curves of metrics no point has (the surface in the raw form) are left out, and so
 * are empty panels; without a controller the mean and peak power are drawn instead. */
static tp_status plot_line(const char *path, const study_info *s, const tp_sweep_plan *plan,
                           const tp_sweep_result *res, long total, tp_diag *d)
{
    double *buf = malloc((size_t)total * (N_LINE_CURVES + 1) * sizeof *buf), *x;
    tp_plot_series ser[N_LINE_CURVES];
    tp_plot_panel panels[N_LINE_PANELS];
    tp_plot_chart chart;
    char xl[TP_SWEEP_PATH_MAX + TP_SWEEP_UNIT_MAX + 4], title[TP_TEXT_MAX + 32];
    int markers = total < 2, ns = 0, np = 0;
    size_t c, p;
    long i;
    tp_status st;
    if (!buf)
        return TP_ERR_NOMEM;
    x = buf;
    for (i = 0; i < total; i++)
        x[i] = param_shown(&plan->params[0], tp_sweep_value(plan, i, 0));
    for (p = 0; p < N_LINE_PANELS; p++) {
        int first = ns;
        if (p == N_LINE_PANELS - 1 && np > 0)
            break; /* the power panel stands in only for an otherwise empty chart */
        for (c = 0; c < N_LINE_CURVES; c++) {
            const struct line_curve *lc = &line_curves[c];
            double *y = buf + (c + 1) * (size_t)total;
            int finite = 0;
            if (lc->panel != (int)p)
                continue;
            for (i = 0; i < total; i++) {
                y[i] = res[i].ok ? metric_plot(lc->metric, res[i].metric[lc->metric]) : TP_UNSET;
                finite += isfinite(y[i]) != 0;
            }
            if (finite > 0)
                ser[ns++] =
                    (tp_plot_series){lc->label, x, y, (size_t)total, lc->dash, markers, lc->right};
        }
        if (ns > first) {
            int right = 0, k;
            for (k = first; k < ns; k++)
                right |= ser[k].right_axis;
            panels[np++] = (tp_plot_panel){line_panels[p].ylabel,
                                           right ? line_panels[p].y2label : NULL,
                                           ser + first,
                                           (size_t)(ns - first),
                                           NULL,
                                           0,
                                           line_panels[p].share};
        }
    }
    axis_label(&plan->params[0], xl, sizeof xl);
    snprintf(title, sizeof title, "%s: sweep", chart_title(s));
    chart = (tp_plot_chart){title, xl, panels, (size_t)np, 0, 0};
    st = np > 0 ? tp_plot_chart_write(path, &chart, d) : TP_ERR_SOLVER;
    if (np == 0)
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "no metric to draw");
    free(buf);
    return st;
}

/* Two --vary: a heat map of one metric over the two parameters. */
static tp_status plot_map(const char *path, const study_info *s, const tp_sweep_plan *plan,
                          const tp_sweep_result *res, int metric, tp_diag *d)
{
    const tp_sweep_param *px = &plan->params[0], *py = &plan->params[1];
    size_t nx = (size_t)px->n_values, ny = (size_t)py->n_values;
    double *z = malloc(nx * ny * sizeof *z), ext[4];
    char xl[TP_SWEEP_PATH_MAX + TP_SWEEP_UNIT_MAX + 4],
        yl[TP_SWEEP_PATH_MAX + TP_SWEEP_UNIT_MAX + 4];
    char zl[64];
    char title[TP_TEXT_MAX + 64];
    const tp_sweep_param *ax[2] = {px, py};
    long i;
    int a;
    tp_plot_map map;
    tp_status st;
    if (!z)
        return TP_ERR_NOMEM;
    for (a = 0; a < 2; a++) {
        /* Cells centred on the values, which run up or down evenly. */
        double v0 = param_shown(ax[a], ax[a]->values[0]);
        double v1 = param_shown(ax[a], ax[a]->values[ax[a]->n_values - 1]);
        double half =
            ax[a]->n_values > 1 ? 0.5 * fabs(v1 - v0) / (double)(ax[a]->n_values - 1) : 0.0;
        ext[2 * a] = fmin(v0, v1) - half;
        ext[2 * a + 1] = fmax(v0, v1) + half;
    }
    for (i = 0; i < (long)(nx * ny); i++) {
        size_t ix = (size_t)tp_sweep_axis_index(plan, i, 0);
        size_t iy = (size_t)tp_sweep_axis_index(plan, i, 1);
        if (px->n_values > 1 && px->values[px->n_values - 1] < px->values[0])
            ix = nx - 1 - ix;
        if (py->n_values > 1 && py->values[py->n_values - 1] < py->values[0])
            iy = ny - 1 - iy;
        z[iy * nx + ix] = res[i].ok ? metric_plot(metric, res[i].metric[metric]) : TP_UNSET;
    }
    axis_label(px, xl, sizeof xl);
    axis_label(py, yl, sizeof yl);
    metric_label(metric, zl, sizeof zl);
    snprintf(title, sizeof title, "%s: %s", chart_title(s), tp_metricdef_swept(metric)->label);
    memset(&map, 0, sizeof map);
    map.title = title;
    map.xlabel = xl;
    map.ylabel = yl;
    map.zlabel = zl;
    map.z = z;
    map.nx = nx;
    map.ny = ny;
    map.x0 = ext[0];
    map.x1 = ext[1];
    map.y0 = ext[2];
    map.y1 = ext[3];
    map.contours = nx >= 2 && ny >= 2;
    map.free_aspect = 1;
    st = tp_plot_map_write(path, &map, d);
    free(z);
    return st;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* --spread: the empirical distribution (sorted values against the fraction of samples at or
 * below) of one metric, with the 5 %, 50 % and 95 % levels marked. */
static tp_status plot_distribution(const char *path, const study_info *s,
                                   const tp_sweep_result *res, long total, int metric, tp_diag *d)
{
    double *x = malloc(2 * ((size_t)total + 1) * sizeof *x), *y;
    long i, n = 0;
    tp_plot_series ser;
    tp_plot_hline lines[3] = {{"5 %", 0.05}, {"median", 0.5}, {"95 %", 0.95}};
    tp_plot_panel panel;
    tp_plot_chart chart;
    char xl[64], title[TP_TEXT_MAX + 64];
    tp_status st;
    if (!x)
        return TP_ERR_NOMEM;
    y = x + total + 1;
    for (i = 0; i < total; i++)
        if (res[i].ok && isfinite(res[i].metric[metric]))
            x[n++] = metric_plot(metric, res[i].metric[metric]);
    if (n == 0) {
        free(x);
        tp_diag_error(d, tp_diag_loc_none(), path, "choose another --metric",
                      "no sample has a value of %s to draw", tp_metricdef_swept(metric)->key);
        return TP_ERR_SOLVER;
    }
    qsort(x, (size_t)n, sizeof *x, cmp_double);
    for (i = 0; i < n; i++)
        y[i] = (double)(i + 1) / (double)n;
    ser = (tp_plot_series){tp_metricdef_swept(metric)->label, x, y, (size_t)n, 0, n < 2, 0};
    panel = (tp_plot_panel){"fraction of samples at or below", NULL, &ser, 1, lines, 3, 1.0};
    metric_label(metric, xl, sizeof xl);
    snprintf(title, sizeof title, "%s: %ld samples", chart_title(s), n);
    chart = (tp_plot_chart){title, xl, &panel, 1, 0, 0};
    st = tp_plot_chart_write(path, &chart, d);
    free(x);
    return st;
}

/* ---- the verb -------------------------------------------------------------------------------- */

/* The metric drawn when --metric is not given: the surface's ready time, or where there is no
 * working surface (the raw form) the time to the setpoint, or without a controller the mean
 * power: the first of these that some successful point has. */
static int default_metric(const tp_sweep_result *res, long total)
{
    static const int order[] = {TP_MET_TIME_READY, TP_MET_TIME_SETPOINT, TP_MET_HOLD_POWER,
                                TP_MET_POWER_MEAN};
    size_t k;
    long i;
    for (k = 0; k < sizeof order / sizeof order[0]; k++)
        for (i = 0; i < total; i++)
            if (res[i].ok && isfinite(res[i].metric[order[k]]))
                return order[k];
    return TP_MET_TIME_READY;
}

/* ---- confidence intervals in text ---------------------------------------------------------- */

#define CI_COL 25 /* characters of an interval column */

/* The 95 % intervals of every metric's statistics: "low .. high" in the text units. */
static void interval_table(FILE *fp, const tp_sweep_plan *plan, const tp_sweep_summary *sum)
{
    int m, k, reps = 0, ordered = 0;
    char lo[32], hi[32], cell[TP_STAT_COUNT][72];
    fprintf(fp, "\n  95 %% confidence intervals (mean: Student's t%s; sd: chi-square, normal data; "
                "percentiles: %s)\n",
            plan->design == TP_DESIGN_RANDOM ? "" : " over the replicates' means",
            plan->percentiles == TP_PCT_FITTED ? "fitted surface, Woodruff; * order statistics"
                                               : "order statistics");
    fprintf(fp, "  %-18s %5s", "metric", "unit");
    for (k = 0; k < TP_STAT_COUNT; k++)
        fprintf(fp, " %*s", CI_COL, tp_sweep_stat_name(k));
    fputc('\n', fp);
    for (m = 0; m < plan->n_metrics; m++) {
        const tp_metricdef *mi = tp_metricdef_swept(m);
        const tp_sweep_summary *s = &sum[m];
        if (s->n == 0)
            continue;
        reps = s->reps > reps ? (int)s->reps : reps;
        for (k = 0; k < TP_STAT_COUNT; k++) {
            if (!isfinite(s->lo[k]) || !isfinite(s->hi[k])) {
                snprintf(cell[k], sizeof cell[k], "-");
                continue;
            }
            if (k == TP_STAT_SD) {
                tp_summary_metric_spread(mi, s->lo[k], lo, sizeof lo);
                tp_summary_metric_spread(mi, s->hi[k], hi, sizeof hi);
            } else {
                metric_text(m, s->lo[k], lo, sizeof lo);
                metric_text(m, s->hi[k], hi, sizeof hi);
            }
            snprintf(cell[k], sizeof cell[k], "%s .. %s", lo, hi);
        }
        ordered += plan->percentiles == TP_PCT_FITTED && !s->fitted;
        fprintf(fp, "  %-18s%c%5s", mi->label,
                plan->percentiles == TP_PCT_FITTED && !s->fitted ? '*' : ' ',
                mi->form == TP_FORM_DURATION ? "" : mi->text_unit);
        for (k = 0; k < TP_STAT_COUNT; k++)
            fprintf(fp, " %*s", CI_COL, cell[k]);
        fputc('\n', fp);
    }
    fputs("  (- : too few samples for the interval: the 5th and 95th percentiles need at least 72, "
          "the median 6)\n",
          fp);
    if (ordered)
        fputs("  (* : percentiles from the order statistics: the surface needs every sample to "
              "succeed with the metric, and enough of them)\n",
              fp);
    if (reps >= 2)
        fprintf(fp, "  the mean's interval rests on %d replicates of %ld samples\n", reps,
                plan->rep_size);
}

/* ---- shards ---------------------------------------------------------------------------------- */

#define SHARD_FORMAT "tepid sweep shard" /* the "format" of a shard file */
#define SHARD_VERSION 1

/* The first sample (0-based) of shard k (0-based) of n over `total` samples: shards are
 * consecutive runs of samples, their sizes differing by at most one. */
static long shard_first(long total, long k, long n)
{
    return (long)(((long long)total * k) / n);
}

/* A double exactly, as a C99 hexadecimal string ("0x1.8p+1"); null when not finite. */
static void put_exact(cJSON *o, const char *name, double v)
{
    char buf[48];
    if (!isfinite(v)) {
        cJSON_AddNullToObject(o, name);
        return;
    }
    snprintf(buf, sizeof buf, "%a", v);
    cJSON_AddStringToObject(o, name, buf);
}

static cJSON *exact_item(double v)
{
    char buf[48];
    if (!isfinite(v))
        return cJSON_CreateNull();
    snprintf(buf, sizeof buf, "%a", v);
    return cJSON_CreateString(buf);
}

static double exact_value(const cJSON *item)
{
    char *end = NULL;
    double v;
    if (!cJSON_IsString(item))
        return TP_UNSET;
    v = strtod(item->valuestring, &end);
    return end && *end == '\0' ? v : TP_UNSET;
}

static double get_exact(const cJSON *o, const char *name)
{
    return exact_value(cJSON_GetObjectItemCaseSensitive(o, name));
}

/* A hash of the config file's bytes and the --set options, so that shards of different configs
 * are told apart even where the plan and the network line agree. */
static void config_hash(const tp_cli *cli, char *buf, size_t size, tp_diag *d)
{
    const char *sets[TP_MAX_SETS + 1];
    char *text = NULL;
    size_t len = 0, i;
    uint64_t h = 0;
    int n, k;
    if (tp_infile_read(cli->file, TP_YAMLTREE_MAX_BYTES, &text, &len, d) == TP_OK)
        for (i = 0; i < len; i++)
            h = tp_sweep_hash(h, i, (unsigned char)text[i]);
    free(text);
    n = tp_cli_all(cli, "set", sets, TP_MAX_SETS + 1);
    for (k = 0; k < n; k++)
        for (i = 0; sets[k][i]; i++)
            h = tp_sweep_hash(h, ((uint64_t)k << 32) | i, (unsigned char)sets[k][i]);
    snprintf(buf, size, "%016" PRIx64, h);
}

/* The study of a shard file: everything a merge needs to rebuild the plan and the outputs. */
static cJSON *study_json(const tp_cli *cli, const study_info *info, const tp_sweep_plan *plan,
                         tp_diag *d)
{
    cJSON *st = cJSON_CreateObject(), *params;
    char buf[32];
    int k;
    if (!st)
        return NULL;
    cJSON_AddStringToObject(st, "file", info->file);
    cJSON_AddStringToObject(st, "title", info->title);
    cJSON_AddStringToObject(st, "chart", info->chart);
    cJSON_AddStringToObject(st, "network", info->network);
    config_hash(cli, buf, sizeof buf, d);
    cJSON_AddStringToObject(st, "config_hash", buf);
    put_exact(st, "tolerance", info->tolerance);
    put_exact(st, "duration", info->duration);
    snprintf(buf, sizeof buf, "%" PRIu64, plan->seed);
    cJSON_AddStringToObject(st, "seed", buf);
    cJSON_AddNumberToObject(st, "samples", (double)plan->n_samples);
    cJSON_AddStringToObject(st, "design", tp_sweep_design_name(plan->design));
    cJSON_AddNumberToObject(st, "replicates", (double)plan->replicates);
    cJSON_AddNumberToObject(st, "metrics", (double)plan->n_metrics);
    params = cJSON_AddArrayToObject(st, "parameters");
    for (k = 0; params && k < plan->n_params; k++) {
        const tp_sweep_param *p = &plan->params[k];
        cJSON *o = append_item(params, 0);
        if (!o)
            break;
        cJSON_AddStringToObject(o, "key", p->path);
        cJSON_AddNumberToObject(o, "dim", (double)p->dim);
        cJSON_AddStringToObject(o, "unit", p->unit);
        put_exact(o, "nominal", p->nominal);
        cJSON_AddStringToObject(o, "distribution", spread_kind_name(p->kind));
        cJSON_AddBoolToObject(o, "relative", p->relative);
        put_exact(o, "sigma", p->sigma);
        put_exact(o, "low", p->low);
        put_exact(o, "high", p->high);
    }
    return st;
}

static tp_status write_shard(const char *path, const options *o, const study_info *info,
                             const tp_sweep_plan *plan, const tp_sweep_result *res, long first,
                             long end, const tp_sweep_totals *tot, FILE *text, tp_diag *d)
{
    cJSON *root = cJSON_CreateObject(), *points, *cautions, *totals;
    long i;
    int k;
    tp_status st;
    if (!root)
        return TP_ERR_NOMEM;
    cJSON_AddStringToObject(root, "format", SHARD_FORMAT);
    cJSON_AddNumberToObject(root, "version", SHARD_VERSION);
    cJSON_AddNumberToObject(root, "shard", (double)o->shard);
    cJSON_AddNumberToObject(root, "shards", (double)o->shards);
    cJSON_AddNumberToObject(root, "first", (double)(first + 1));
    cJSON_AddNumberToObject(root, "last", (double)end);
    cJSON_AddItemToObject(root, "study", study_json(info->session->cli, info, plan, d));
    totals = cJSON_AddObjectToObject(root, "totals");
    if (totals) {
        cJSON_AddNumberToObject(totals, "failed", (double)tot->failed);
        cJSON_AddNumberToObject(totals, "jobs", (double)tot->jobs);
        put_exact(totals, "wall", tot->wall);
        put_exact(totals, "cpu", tot->cpu);
    }
    points = cJSON_AddArrayToObject(root, "points");
    for (i = first; points && i < end; i++) {
        cJSON *pt = append_item(points, 1);
        if (!pt)
            break;
        if (!res[i].ok) {
            cJSON_AddItemToArray(pt, cJSON_CreateString(res[i].reason));
            continue;
        }
        for (k = 0; k < plan->n_metrics; k++)
            cJSON_AddItemToArray(pt, exact_item(res[i].metric[k]));
    }
    cautions = cJSON_AddArrayToObject(root, "cautions");
    for (k = 0; cautions && k < tot->n_cautions; k++) {
        const tp_caution *c = &tot->cautions[k];
        cJSON *e = append_item(cautions, 0), *v;
        if (!e)
            break;
        cJSON_AddNumberToObject(e, "point", (double)tot->caution_point[k]);
        cJSON_AddNumberToObject(e, "kind", (double)c->kind);
        v = cJSON_AddArrayToObject(e, "values");
        cJSON_AddItemToArray(v, exact_item(c->value[0]));
        cJSON_AddItemToArray(v, exact_item(c->value[1]));
        cJSON_AddNumberToObject(e, "layer", (double)c->layer);
        cJSON_AddStringToObject(e, "layer_id", c->layer_id);
        cJSON_AddStringToObject(e, "material", c->material);
    }
    st = tp_json_write(path, root, d);
    cJSON_Delete(root);
    if (st == TP_OK && text)
        fprintf(text,
                "tepid sweep %s: shard %ld of %ld, samples %ld to %ld of %ld, %.2f s wall, "
                "%.2f s CPU, %ld failed; written to %s for tepid sweep --merge\n",
                info->file, o->shard, o->shards, first + 1, end, tp_sweep_count(plan), tot->wall,
                tot->cpu, tot->failed, path);
    return st;
}

static tp_status finish(const tp_cli *cli, options *o, const study_info *info,
                        const tp_sweep_plan *plan, const tp_sweep_result *res, long run,
                        const tp_sweep_totals *tot, int met, int shards, FILE *text, tp_diag *d);

/* ---- merging shards ------------------------------------------------------------------------- */

typedef struct shard_file {
    const char *path;
    cJSON *root;
    long k, n;
} shard_file;

static tp_status merge_refuse(tp_diag *d, const char *path, const char *hint, const char *what)
{
    tp_diag_error(d, (tp_loc){"--merge", 1, 1}, NULL, hint, "%s: %s", path, what);
    return TP_ERR_USAGE;
}

static long json_long(const cJSON *o, const char *name)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, name);
    return cJSON_IsNumber(v) ? (long)v->valuedouble : -1;
}

static const char *json_text(const cJSON *o, const char *name)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, name);
    return cJSON_IsString(v) ? v->valuestring : "";
}

/* Rebuild the plan and the outputs' description from a shard file's study. */
static tp_status plan_from_study(const cJSON *st, tp_sweep_plan *plan, study_info *info,
                                 tp_diag *d)
{
    const cJSON *params = cJSON_GetObjectItemCaseSensitive(st, "parameters"), *p;
    char *end = NULL;
    int design = tp_sweep_design_find(json_text(st, "design"));
    tp_sweep_plan_init(plan, TP_SWEEP_SPREAD);
    plan->n_samples = json_long(st, "samples");
    plan->seed = (uint64_t)strtoull(json_text(st, "seed"), &end, 10);
    plan->n_metrics = (int)json_long(st, "metrics");
    if (plan->n_metrics < TP_MET_SWEPT || plan->n_metrics > TP_MET_SWEPT_MAX || design < 0 || plan->n_samples < 1 || plan->n_samples > TP_SWEEP_MAX_POINTS ||
        !cJSON_IsArray(params) || cJSON_GetArraySize(params) > TP_SWEEP_MAX_PARAMS)
        return TP_ERR_USAGE;
    cJSON_ArrayForEach(p, params)
    {
        tp_sweep_param *q = &plan->params[plan->n_params++];
        snprintf(q->path, sizeof q->path, "%s", json_text(p, "key"));
        snprintf(q->unit, sizeof q->unit, "%s", json_text(p, "unit"));
        q->dim = (tp_dim)json_long(p, "dim");
        q->nominal = get_exact(p, "nominal");
        q->kind = strcmp(json_text(p, "distribution"), "normal") == 0 ? TP_SPREAD_NORMAL
                                                                       : TP_SPREAD_UNIFORM;
        q->relative = cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(p, "relative"));
        q->sigma = get_exact(p, "sigma");
        q->low = get_exact(p, "low");
        q->high = get_exact(p, "high");
    }
    snprintf(info->file, sizeof info->file, "%s", json_text(st, "file"));
    snprintf(info->title, sizeof info->title, "%s", json_text(st, "title"));
    snprintf(info->chart, sizeof info->chart, "%s", json_text(st, "chart"));
    info->network = strdup(json_text(st, "network"));
    info->tolerance = get_exact(st, "tolerance");
    info->duration = get_exact(st, "duration");
    if (!info->network)
        return TP_ERR_NOMEM;
    return tp_sweep_design_build(plan, (tp_sweep_design)design, json_long(st, "replicates"), d);
}

/* The points and cautions of one shard into the results and totals. */
static tp_status take_shard(const shard_file *f, long first, long end, int n_metrics,
                            tp_sweep_result *res, tp_sweep_totals *tot, tp_diag *d)
{
    const cJSON *points = cJSON_GetObjectItemCaseSensitive(f->root, "points"), *pt, *c;
    const cJSON *totals = cJSON_GetObjectItemCaseSensitive(f->root, "totals");
    tp_sweep_totals mine;
    long i = first;
    if (json_long(f->root, "first") != first + 1 || json_long(f->root, "last") != end ||
        !cJSON_IsArray(points) || cJSON_GetArraySize(points) != end - first)
        return merge_refuse(d, f->path, "run the shard again",
                            "the shard does not hold the samples its number says");
    cJSON_ArrayForEach(pt, points)
    {
        tp_sweep_result *r = &res[i++];
        int k = 0;
        const cJSON *v;
        memset(r, 0, sizeof *r);
        for (k = 0; k < TP_MET_SWEPT_MAX; k++)
            r->metric[k] = TP_UNSET;
        if (cJSON_GetArraySize(pt) == 1 && cJSON_IsString(cJSON_GetArrayItem(pt, 0))) {
            snprintf(r->reason, sizeof r->reason, "%s", cJSON_GetArrayItem(pt, 0)->valuestring);
            continue;
        }
        if (cJSON_GetArraySize(pt) != n_metrics)
            return merge_refuse(d, f->path, "run the shard again", "a point has the wrong size");
        k = 0;
        cJSON_ArrayForEach(v, pt) r->metric[k++] = exact_value(v);
        r->ok = 1;
    }
    memset(&mine, 0, sizeof mine);
    mine.failed = json_long(totals, "failed");
    mine.jobs = (int)json_long(totals, "jobs");
    mine.wall = get_exact(totals, "wall");
    mine.cpu = get_exact(totals, "cpu");
    cJSON_ArrayForEach(c, cJSON_GetObjectItemCaseSensitive(f->root, "cautions"))
    {
        tp_caution *cc;
        const cJSON *vals = cJSON_GetObjectItemCaseSensitive(c, "values");
        if (mine.n_cautions == TP_SWEEP_CAUTIONS_MAX)
            break;
        cc = &mine.cautions[mine.n_cautions];
        memset(cc, 0, sizeof *cc); /* whole records defined: they compare bytewise */
        cc->kind = (tp_caution_kind)json_long(c, "kind");
        cc->value[0] = exact_value(cJSON_GetArrayItem(vals, 0));
        cc->value[1] = exact_value(cJSON_GetArrayItem(vals, 1));
        cc->layer = (int)json_long(c, "layer");
        snprintf(cc->layer_id, sizeof cc->layer_id, "%s", json_text(c, "layer_id"));
        snprintf(cc->material, sizeof cc->material, "%s", json_text(c, "material"));
        mine.caution_point[mine.n_cautions++] = json_long(c, "point");
    }
    tp_sweep_totals_merge(tot, &mine);
    return TP_OK;
}

/* Read and check the shard files: each one of the same study, shard numbers 1..N once each. */
static tp_status read_shards(const options *o, shard_file *f, tp_diag *d)
{
    int i, j;
    for (i = 0; i < o->n_merge; i++) {
        char *text = NULL;
        size_t len = 0;
        f[i].path = o->merge[i];
        if (tp_infile_read(f[i].path, TP_SWEEP_SHARD_MAX_BYTES, &text, &len, d) != TP_OK)
            return TP_ERR_USAGE;
        f[i].root = cJSON_ParseWithLength(text, len);
        free(text);
        if (!f[i].root || strcmp(json_text(f[i].root, "format"), SHARD_FORMAT) != 0 ||
            json_long(f[i].root, "version") != SHARD_VERSION)
            return merge_refuse(d, f[i].path, "give the --json files of tepid sweep --shard K/N",
                                "not a shard file of tepid sweep");
        f[i].k = json_long(f[i].root, "shard");
        f[i].n = json_long(f[i].root, "shards");
        if (f[i].n < 1 || f[i].k < 1 || f[i].k > f[i].n)
            return merge_refuse(d, f[i].path, NULL, "the shard number is not K of N");
    }
    for (i = 1; i < o->n_merge; i++)
        if (f[i].n != f[0].n ||
            !cJSON_Compare(cJSON_GetObjectItemCaseSensitive(f[i].root, "study"),
                           cJSON_GetObjectItemCaseSensitive(f[0].root, "study"), 1)) {
            tp_diag_error(d, (tp_loc){"--merge", 1, 1}, NULL,
                          "merge the shards of one command line (the same config, --set, "
                          "--spread, --samples, --seed, --design, --replicates and --shard N)",
                          "%s and %s are shards of different studies", f[0].path, f[i].path);
            return TP_ERR_USAGE;
        }
    for (i = 0; i < o->n_merge; i++)
        for (j = 0; j < i; j++)
            if (f[i].k == f[j].k) {
                tp_diag_error(d, (tp_loc){"--merge", 1, 1}, NULL, "give each shard once",
                              "%s and %s are both shard %ld of %ld", f[j].path, f[i].path,
                              f[i].k, f[i].n);
                return TP_ERR_USAGE;
            }
    if (o->n_merge != f[0].n) {
        long k;
        for (k = 1; k <= f[0].n; k++) {
            for (i = 0; i < o->n_merge && f[i].k != k; i++)
                ;
            if (i == o->n_merge)
                break;
        }
        tp_diag_error(d, (tp_loc){"--merge", 1, 1}, NULL,
                      "give every shard of the study (run the missing one with --shard K/N)",
                      "shard %ld of %ld is missing", k, f[0].n);
        return TP_ERR_USAGE;
    }
    return TP_OK;
}

static tp_status merge_run(const tp_cli *cli, options *o, tp_diag *d)
{
    shard_file *f = calloc((size_t)o->n_merge, sizeof *f);
    tp_sweep_plan plan;
    tp_sweep_result *res = NULL;
    tp_sweep_totals tot;
    study_info info;
    long total = 0;
    int i;
    tp_status rc;
    memset(&info, 0, sizeof info);
    memset(&tot, 0, sizeof tot);
    tp_sweep_plan_init(&plan, TP_SWEEP_SPREAD);
    if (!f)
        return TP_ERR_NOMEM;
    rc = read_shards(o, f, d);
    if (rc == TP_OK) {
        rc = plan_from_study(cJSON_GetObjectItemCaseSensitive(f[0].root, "study"), &plan, &info,
                             d);
        if (rc == TP_ERR_USAGE)
            merge_refuse(d, f[0].path, NULL, "the study in the shard file cannot be read");
        plan.percentiles = (tp_sweep_pct)o->percentiles;
    }
    if (rc == TP_OK) {
        total = tp_sweep_count(&plan);
        res = calloc((size_t)total, sizeof *res);
        if (!res)
            rc = TP_ERR_NOMEM;
    }
    for (i = 0; rc == TP_OK && i < o->n_merge; i++)
        rc = take_shard(&f[i], shard_first(total, f[i].k - 1, f[i].n),
                        shard_first(total, f[i].k, f[i].n), plan.n_metrics, res, &tot, d);
    if (rc == TP_OK)
        rc = finish(cli, o, &info, &plan, res, total, &tot, 0, o->n_merge,
                    tp_cli_text_stream(cli), d);
    for (i = 0; i < o->n_merge; i++)
        cJSON_Delete(f[i].root);
    free(f);
    free(res);
    free(info.network);
    tp_sweep_plan_clear(&plan);
    return rc;
}

/* A segment metric named by --metric or --until must be one of the file's: its schedule has
 * enough segments (and the sweep keeps the first TP_METRICDEF_SEGMENTS). */
static tp_status check_metric_names(const options *o, const tp_sweep_plan *plan, tp_diag *d)
{
    int k, m = o->metric, n_seg = (plan->n_metrics - TP_MET_SWEPT) / TP_SEGMET_COUNT;
    for (k = -1; k < o->n_until; k++) {
        if (k >= 0)
            m = o->until[k].metric;
        if (m < plan->n_metrics)
            continue;
        tp_diag_error(d, (tp_loc){k < 0 ? "--metric" : "--until", 1, 1}, NULL,
                      n_seg ? "name one of the schedule's segments, from segment1"
                            : "segment metrics need control.schedule in the file",
                      "'%s': the file's schedule has %d segment%s%s",
                      tp_metricdef_swept(m)->key, n_seg, n_seg == 1 ? "" : "s",
                      n_seg == TP_METRICDEF_SEGMENTS ? " kept by a sweep" : "");
        return TP_ERR_USAGE;
    }
    return TP_OK;
}

static tp_status build_plan(const options *o, const tp_session *s, tp_sweep_plan *plan, tp_diag *d)
{
    int k;
    tp_status st = TP_OK;
    tp_sweep_plan_init(plan, o->n_vary > 0 ? TP_SWEEP_GRID : TP_SWEEP_SPREAD);
    plan->n_samples = o->samples;
    plan->seed = o->seed;
    for (k = 0; st == TP_OK && k < o->n_vary; k++)
        st = tp_sweep_add_vary(plan, &s->desc, o->vary[k], d);
    for (k = 0; st == TP_OK && k < o->n_spread; k++)
        st = tp_sweep_add_spread(plan, &s->desc, o->spread[k], d);
    /* A parameter whose option gave no unit (a percentage) is shown in the config's unit. */
    for (k = 0; st == TP_OK && k < plan->n_params; k++)
        if (!plan->params[k].unit[0])
            tp_configedit_unit(s->doc, plan->params[k].path, plan->params[k].unit,
                               sizeof plan->params[k].unit);
    if (st == TP_OK && plan->mode == TP_SWEEP_GRID && plan->n_params == 2 &&
        tp_cli_get(s->cli, "plot"))
        for (k = 0; k < 2; k++)
            if (!evenly_spaced(&plan->params[k])) {
                tp_diag_error(d, (tp_loc){"--plot", 1, 1}, plan->params[k].path,
                              "give the axis as FROM:TO:STEP",
                              "a heat map needs evenly spaced values");
                st = TP_ERR_USAGE;
            }
    tp_sweep_plan_metrics(plan, &s->desc);
    if (st == TP_OK)
        st = check_metric_names(o, plan, d);
    if (st == TP_OK && plan->mode == TP_SWEEP_SPREAD)
        st = tp_sweep_design_build(plan, (tp_sweep_design)o->design, o->replicates, d);
    if (st != TP_OK)
        tp_sweep_plan_clear(plan);
    plan->percentiles = (tp_sweep_pct)o->percentiles;
    return st;
}

static void summary_head(FILE *fp, const study_info *info, const tp_sweep_plan *plan, long total,
                         const tp_sweep_totals *tot, int shards)
{
    int k;
    const char *what = plan->mode == TP_SWEEP_GRID ? "point" : "sample";
    fprintf(fp, "tepid sweep %s%s%s\n  ", info->file, info->title[0] ? ": " : "", info->title);
    fputs(info->network, fp);
    if (plan->mode == TP_SWEEP_GRID)
        fprintf(fp, "  grid of %ld point%s over:\n", total, total == 1 ? "" : "s");
    else
        fprintf(fp,
                "  tolerance study of %ld sample%s (seed %" PRIu64 ", design %s, %ld "
                "replicate%s of %ld) over:\n",
                total, total == 1 ? "" : "s", plan->seed, tp_sweep_design_name(plan->design),
                total / plan->rep_size, total / plan->rep_size == 1 ? "" : "s", plan->rep_size);
    for (k = 0; k < plan->n_params; k++)
        describe_param(fp, plan, k);
    fprintf(fp,
            "  each point a full warm-up of %.0f s at integration tolerance %g "
            "(run.tolerance)\n",
            info->duration, info->tolerance);
    if (shards > 0)
        fprintf(fp, "  merged from %d shards: %.2f s wall and %.2f s CPU in all\n", shards,
                tot->wall, tot->cpu);
    else
        fprintf(fp, "  %d job%s: %.2f s wall, %.2f s CPU, %.1f %ss per second\n", tot->jobs,
                tot->jobs == 1 ? "" : "s", tot->wall, tot->cpu,
                tot->wall > 0 ? (double)total / tot->wall : 0.0, what);
    if (tot->failed > 0)
        fprintf(fp, "  ! %ld of %ld %ss failed and are left out of %s:\n", tot->failed, total, what,
                plan->mode == TP_SWEEP_GRID ? "the table's metrics" : "the statistics");
    else
        fprintf(fp, "  no %s failed\n", what);
}

/* The cautions of the run; when no point succeeded, those of the config itself. */
static void summary_cautions(FILE *fp, const study_info *info, const tp_sweep_totals *tot)
{
    if (tot->n_cautions == 0 && info->session) {
        tp_caution_exposure ex = TP_CAUTION_UNSEEN;
        tp_caution cautions[TP_CAUTIONS_MAX];
        const tp_session *s = info->session;
        tp_summary_cautions(fp, "cautions", cautions,
                            tp_caution_list(&s->desc, s->net, &ex, cautions));
        return;
    }
    tp_summary_cautions(fp, "cautions (the worst case over all points)", tot->cautions,
                        tot->n_cautions);
}

/* A half-width in the text unit with three significant digits (a duration as "1.2 s"). */
static void half_text(const tp_metricdef *md, double si, char *buf, size_t size)
{
    if (md->form == TP_FORM_DURATION)
        snprintf(buf, size, "%.3g s", si);
    else
        snprintf(buf, size, "%.3g", si * md->scale);
}

/* The --until lines of the text summary. */
static void until_text(FILE *fp, const options *o, long run, long rep_size, int met)
{
    int k;
    char now[48], want[48];
    if (met)
        fprintf(fp, "\n  --until: every target met after %ld samples (batches of %ld)\n", run,
                rep_size);
    else
        fprintf(fp, "\n  --until: --samples %ld reached before every target was met\n", run);
    for (k = 0; k < o->n_until; k++) {
        const target *t = &o->until[k];
        const tp_metricdef *md = tp_metricdef_swept(t->metric);
        const char *u = md->form == TP_FORM_DURATION ? "" : md->text_unit;
        half_text(md, t->reached, now, sizeof now);
        half_text(md, t->halfwidth, want, sizeof want);
        fprintf(fp, "    %s.%s: half-width %s%s%s for +-%s%s%s, %s; ", md->key,
                tp_sweep_stat_name(t->stat), isfinite(t->reached) ? now : "-", u[0] ? " " : "",
                u, want, u[0] ? " " : "", u, t->reached <= t->halfwidth ? "met" : "not met");
        if (isfinite(t->needed))
            fprintf(fp, "about %.0f samples needed\n", t->needed);
        else
            fputs("too few samples to estimate the count needed\n", fp);
    }
}

/* Summaries of every metric over the first n points (only those of `want`, without rank
 * correlations, when want is not NULL); NULL when memory runs out. */
static tp_sweep_summary *summarise_all(const tp_sweep_plan *plan, const tp_sweep_result *res,
                                       long n, const int *want)
{
    tp_sweep_summary *sum = calloc(TP_MET_SWEPT_MAX, sizeof *sum);
    int m;
    for (m = 0; sum && m < plan->n_metrics; m++)
        if ((!want || want[m]) &&
            tp_sweep_summarise_first(plan, res, n, m, want == NULL, &sum[m]) != TP_OK) {
            free(sum);
            return NULL;
        }
    return sum;
}

/* Fill each target's half-width and samples needed from summaries; nonzero when all are met. */
static int targets_met(options *o, const tp_sweep_plan *plan, const tp_sweep_summary *sum)
{
    int k, all = 1;
    for (k = 0; k < o->n_until; k++) {
        target *t = &o->until[k];
        const tp_sweep_summary *sm = &sum[t->metric];
        t->reached = 0.5 * (sm->hi[t->stat] - sm->lo[t->stat]);
        t->needed = tp_sweep_needed(plan, sm, t->stat, t->halfwidth);
        all &= t->reached <= t->halfwidth; /* NaN: not met */
    }
    return all;
}

/* --until: batches of one replicate until every target is met or the samples run out.
 * Returns the samples run; *met says which happened. */
static tp_status run_until(options *o, const tp_sweep_plan *plan, const tp_description *desc,
                           tp_sweep_result *res, tp_sweep_totals *tot, long *run, int *met)
{
    long total = tp_sweep_count(plan), done = 0;
    int want[TP_MET_SWEPT_MAX] = {0}, k;
    for (k = 0; k < o->n_until; k++)
        want[o->until[k].metric] = 1;
    *met = 0;
    memset(tot, 0, sizeof *tot);
    while (done < total && !*met) {
        tp_sweep_totals batch;
        tp_sweep_summary *sum;
        tp_status st = tp_sweep_run_range(plan, desc, o->jobs, done, done + plan->rep_size, res,
                                          NULL, NULL, &batch);
        if (st != TP_OK)
            return st;
        tp_sweep_totals_merge(tot, &batch);
        done += plan->rep_size;
        sum = summarise_all(plan, res, done, want);
        if (!sum)
            return TP_ERR_NOMEM;
        *met = targets_met(o, plan, sum);
        free(sum);
    }
    *run = done;
    return TP_OK;
}

/* The statistics and their 95 % intervals as CSV: one row per metric and statistic. */
static tp_status write_stats(const char *path, const tp_sweep_plan *plan,
                             const tp_sweep_summary *sum, tp_diag *d)
{
    tp_outfile o;
    int m, k;
    tp_status st = tp_outfile_open(&o, path, d);
    if (st != TP_OK)
        return st;
    fputs("metric,statistic,n,value,low,high,halfwidth\n", o.fp);
    for (m = 0; m < plan->n_metrics; m++)
        for (k = 0; k < TP_STAT_COUNT; k++) {
            const tp_sweep_summary *sm = &sum[m];
            int spread = k == TP_STAT_SD;
            double v = tp_sweep_summary_value(sm, k);
            fprintf(o.fp, "%s,%s,%ld,", tp_metricdef_swept(m)->key, tp_sweep_stat_name(k), sm->n);
            tp_csv_real(o.fp, spread ? v : metric_out(m, v));
            fputc(',', o.fp);
            tp_csv_real(o.fp, spread ? sm->lo[k] : metric_out(m, sm->lo[k]));
            fputc(',', o.fp);
            tp_csv_real(o.fp, spread ? sm->hi[k] : metric_out(m, sm->hi[k]));
            fputc(',', o.fp);
            tp_csv_real(o.fp, 0.5 * (sm->hi[k] - sm->lo[k]));
            fputc('\n', o.fp);
        }
    return tp_outfile_commit(&o, d);
}

/* Everything after the points have run: statistics, files, figure, text. `run` points of the
 * plan hold results (fewer than planned when --until stopped early). */
static tp_status finish(const tp_cli *cli, options *o, const study_info *info,
                        const tp_sweep_plan *plan, const tp_sweep_result *res, long run,
                        const tp_sweep_totals *tot, int met, int shards, FILE *text, tp_diag *d)
{
    tp_sweep_summary *sum = NULL;
    const char *out;
    tp_status rc = TP_OK;
    if (plan->mode == TP_SWEEP_SPREAD) {
        sum = summarise_all(plan, res, run, NULL);
        if (!sum)
            return TP_ERR_NOMEM;
    }
    if ((out = tp_cli_get(cli, "csv")))
        rc = write_csv(out, plan, res, run, d);
    if (rc == TP_OK && (out = tp_cli_get(cli, "json")))
        rc = write_json(out, info, plan, res, run, sum, tot, o, met, d);
    if (rc == TP_OK && sum && (out = tp_cli_get(cli, "stats")))
        rc = write_stats(out, plan, sum, d);
    if (o->metric < 0)
        o->metric = default_metric(res, run);
    if (rc == TP_OK && (out = tp_cli_get(cli, "plot")) && tot->failed < run) {
        if (plan->mode == TP_SWEEP_SPREAD)
            rc = plot_distribution(out, info, res, run, o->metric, d);
        else if (plan->n_params == 1)
            rc = plot_line(out, info, plan, res, run, d);
        else
            rc = plot_map(out, info, plan, res, o->metric, d);
    }
    if (rc == TP_OK && text) {
        summary_head(text, info, plan, run, tot, shards);
        if (plan->mode == TP_SWEEP_GRID) {
            grid_table(text, plan, res, run); /* failed points show their reason there */
        } else {
            list_failed(text, plan, res, run, "sample");
            spread_table(text, plan, sum);
            interval_table(text, plan, sum);
            if (o->n_until > 0)
                until_text(text, o, run, plan->rep_size, met);
        }
        summary_cautions(text, info, tot);
    }
    if (rc == TP_OK && run > 0 && tot->failed == run) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, "see the reasons above or in --json",
                      "every point failed; the first: %s", res[0].reason);
        rc = TP_ERR_SOLVER;
    }
    free(sum);
    return rc;
}

/* The study's description for outputs, from the session. */
static tp_status info_from_session(study_info *info, const tp_session *s)
{
    size_t len = 0;
    FILE *fp;
    memset(info, 0, sizeof *info);
    snprintf(info->file, sizeof info->file, "%s", s->cli->file);
    snprintf(info->title, sizeof info->title, "%s", s->desc.title);
    snprintf(info->chart, sizeof info->chart, "%s", tp_session_title(s));
    info->tolerance = s->desc.run.tolerance;
    info->duration = s->desc.run.duration;
    info->session = s;
    fp = open_memstream(&info->network, &len);
    if (!fp)
        return TP_ERR_NOMEM;
    tp_summary_network(fp, s->net);
    return fclose(fp) == 0 && info->network ? TP_OK : TP_ERR_NOMEM;
}

static tp_status run_sweep(const tp_cli *cli, tp_diag *d)
{
    options o;
    tp_session s;
    tp_sweep_plan plan;
    tp_sweep_result *res = NULL;
    tp_sweep_totals tot;
    study_info info;
    progress pr = {stderr, 0, NULL};
    long total, first = 0, end, run;
    int met = 0;
    tp_status rc = parse_options(cli, &o, d);
    if (rc == TP_OK)
        rc = tp_gsllib_load(d); /* opened now: a missing library is an error, not a crash */
    if (rc != TP_OK)
        return rc;
    if (o.n_merge > 0)
        return merge_run(cli, &o, d);
    rc = tp_session_open(&s, cli, d);
    if (rc != TP_OK)
        return rc;
    memset(&info, 0, sizeof info);
    rc = build_plan(&o, &s, &plan, d);
    if (rc != TP_OK) {
        tp_session_close(&s);
        return rc;
    }
    memset(&tot, 0, sizeof tot);
    total = tp_sweep_count(&plan);
    end = run = total;
    res = calloc((size_t)total, sizeof *res);
    if (!res || info_from_session(&info, &s) != TP_OK) {
        rc = TP_ERR_NOMEM;
        goto done;
    }
    pr.what = plan.mode == TP_SWEEP_GRID ? "points" : "samples";
    if (o.shards > 0) {
        first = shard_first(total, o.shard - 1, o.shards);
        end = shard_first(total, o.shard, o.shards);
    }
    if (o.n_until > 0)
        rc = run_until(&o, &plan, &s.desc, res, &tot, &run, &met);
    else
        rc = tp_sweep_run_range(&plan, &s.desc, o.jobs, first, end, res,
                                s.text && isatty(STDERR_FILENO) ? show_progress : NULL, &pr,
                                &tot);
    if (rc != TP_OK)
        goto done;
    if (o.shards > 0)
        rc = write_shard(tp_cli_get(cli, "json"), &o, &info, &plan, res, first, end, &tot, s.text,
                         d);
    else
        rc = finish(cli, &o, &info, &plan, res, run, &tot, met, 0, s.text, d);
done:
    free(info.network);
    free(res);
    tp_sweep_plan_clear(&plan);
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_cmd_sweep = {
    "sweep",
    run_sweep,
    "Warm-up metrics over parameter grids and tolerance spreads.",
    1,
    sweep_opts,
    "--vary KEY=FROM:TO:STEP (or KEY=A,B,C), once or twice: a warm-up at every grid point.\n"
    "--spread KEY=normal:SIGMA or KEY=uniform:LOW:HIGH (in % of the config's value or with\n"
    "units), repeatable, with --samples N and --seed S: a tolerance study with mean, standard\n"
    "deviation, 5/50/95th percentiles, the worst sample and the parameter that drives each\n"
    "metric most (Spearman rank correlation), each statistic with its 95 % confidence interval\n"
    "(Student's t, chi-square, order statistics). --design lhs or sobol places the samples by\n"
    "Latin hypercube or scrambled Sobol points in --replicates independent replicates;\n"
    "--until METRIC.STAT=+-H runs batches until the interval is that narrow. --shard K/N runs\n"
    "one part for a batch system and --merge FILES... joins the parts into the output of one\n"
    "run. Points run on --jobs threads; the results do not depend on the number of jobs. A\n"
    "failed point is listed with its parameters and reason and left out of the statistics.\n"
    "Details: docs/sweep.md.",
    "tepid sweep workshop-bed-24v.yaml --vary heater.supply=20V:28V:2V\n"
    "tepid sweep workshop-bed-24v.yaml --vary heater.supply=20V:28V:4V "
    "--vary room.temperature=15degC:25degC:5degC --plot map.png\n"
    "tepid sweep workshop-bed-24v.yaml --spread heater.resistance=normal:5% --samples 200 "
    "--design lhs --csv samples.csv"};
