/* tepid fit: calibrate free config keys against a measured log (docs/fit.md): the report, the
 * residual table as CSV, the estimates as JSON, the figure, and the calibrated config. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "assemble.h"
#include "config.h"
#include "configedit.h"
#include "csv.h"
#include "fit.h"
#include "json.h"
#include "outfile.h"
#include "plot.h"
#include "session.h"
#include "summary.h"
#include "templog.h"
#include "units.h"
#include "verbs.h"

#define TP_FIT_FREE_MAX 32 /* --free options on one command line */
#define TP_MAX_SETS 128    /* --set options on one command line */

static const tp_opt fit_opts[] = {
    {"log", 0, 1, 0, 0, "FILE", "the measured log (CSV with a header; required)"},
    {"free", 0, 1, 1, 0, "KEY[=LO:HI]",
     "a config key to fit, e.g. heater.power=100W:400W "
     "(repeatable, or a comma list)"},
    {"time-col", 0, 1, 0, 0, "NAME",
     "the log's time column (default: by its name, else the "
     "first)"},
    {"temp-col", 0, 1, 0, 0, "NAME", "the log's reading column (default: by its name)"},
    {"duty-col", 0, 1, 0, 0, "NAME", "the log's duty or power column (default: by its name)"},
    {"starts", 0, 1, 0, 0, "N", "starting points of the search (default 3)"},
    {"write-config", 0, 1, 0, 1, "FILE", "write the config with the fitted values"},
    {"csv", 0, 1, 0, 1, "FILE", "write time, log, model and residual as CSV"},
    {"json", 0, 1, 0, 1, "FILE", "write the estimates and statistics as JSON"},
    {"plot", 0, 1, 0, TP_OUT_FIGURE, "FILE", "draw the log, the fitted model and the residuals"},
    TP_OPT_SET,
    TP_OPT_QUIET,
    TP_OPT_END,
};

typedef struct fit_run {
    tp_session s;
    tp_templog log;
    tp_fit_param params[TP_FIT_MAX_PARAMS];
    int n_params;
    tp_fit_problem pb;
    tp_fit_result res;
    tp_description fitted; /* the description with the fitted values */
    tp_network *net; /* ... assembled, for the cautions */
    char warn[TP_FIT_MAX_PARAMS + 4][512];
    int n_warn;
} fit_run;

/* ---- units and numbers -------------------------------------------------------------------- */

/* The unit to show a key in: as written in the config, else a sensible one for its kind. */
static void key_unit(const tp_yamltree *doc, const tp_fit_param *q, char *unit, size_t size)
{
    tp_configedit_unit(doc, q->path, unit, size);
    if (unit[0] || q->dim == TP_DIM_NONE)
        return;
    snprintf(unit, size, "%s", q->dim == TP_DIM_TEMPERATURE ? "degC" : tp_units_si_name(q->dim));
}

/* Significant digits that resolve a value to a tenth of its standard error (4 to 8). */
static int digits_for(double v, double se)
{
    int n;
    if (!(se > 0) || !isfinite(se) || v == 0.0)
        return 4;
    n = (int)ceil(log10(fabs(v) / se)) + 2;
    return n < 4 ? 4 : n > 8 ? 8 : n;
}

/* A number with `digits` significant digits, without an exponent for ordinary magnitudes
 * (configs read "10000 W/(m2.K)" better than "1e+04 W/(m2.K)"). */
static void fmt_number(double v, int digits, char *buf, size_t size)
{
    double a = fabs(v);
    if (v != 0.0 && (a < 1e-4 || a >= 1e7 || !isfinite(v))) {
        snprintf(buf, size, "%.*g", digits, v);
        return;
    }
    {
        int mag = v == 0.0 ? 0 : (int)floor(log10(a)), dec = digits - 1 - mag;
        char *e;
        snprintf(buf, size, "%.*f", dec > 0 ? dec : 0, v);
        /* Trailing zeros after the point say nothing more. */
        if (strchr(buf, '.')) {
            e = buf + strlen(buf);
            while (e > buf && e[-1] == '0')
                *--e = '\0';
            if (e > buf && e[-1] == '.')
                *--e = '\0';
        }
    }
}

/* "2.553 ohm" for an SI value of key q. */
static void fmt_value(const tp_yamltree *doc, const tp_fit_param *q, double si, int digits,
                      char *buf, size_t size)
{
    char unit[32], num[48];
    double v;
    key_unit(doc, q, unit, sizeof unit);
    if (tp_units_from_si(si, unit, q->dim, &v) != TP_OK) {
        snprintf(unit, sizeof unit, "%s", tp_units_si_name(q->dim));
        v = si;
    }
    fmt_number(v, digits, num, sizeof num);
    snprintf(buf, size, "%s%s%s", num, unit[0] && strcmp(unit, "1") ? " " : "",
             strcmp(unit, "1") ? unit : "");
}

/* A standard error in the key's unit (temperatures as differences). */
static void fmt_se(const tp_yamltree *doc, const tp_fit_param *q, double se, char *buf, size_t size)
{
    char unit[32], num[48];
    double v;
    tp_dim dim = q->dim == TP_DIM_TEMPERATURE ? TP_DIM_INTERVAL : q->dim;
    if (!isfinite(se)) {
        snprintf(buf, size, "undetermined");
        return;
    }
    key_unit(doc, q, unit, sizeof unit);
    if (q->dim == TP_DIM_TEMPERATURE)
        snprintf(unit, sizeof unit, "K");
    if (tp_units_from_si(se, unit, dim, &v) != TP_OK) {
        snprintf(unit, sizeof unit, "%s", tp_units_si_name(dim));
        v = se;
    }
    fmt_number(v, 2, num, sizeof num);
    snprintf(buf, size, "%s%s%s", num, unit[0] && strcmp(unit, "1") ? " " : "",
             strcmp(unit, "1") ? unit : "");
}

/* ---- options ------------------------------------------------------------------------------ */

static tp_status parse_options(const tp_cli *cli, fit_run *f, tp_diag *d)
{
    const char *frees[TP_FIT_FREE_MAX], *starts = tp_cli_get(cli, "starts");
    int n = tp_cli_all(cli, "free", frees, TP_FIT_FREE_MAX), i;
    const char *log = tp_cli_get(cli, "log");
    static const char *const outs[] = {"write-config", "csv", "json", "plot"};
    double v;
    if (!log) {
        tp_diag_error(d, tp_diag_loc_none(), NULL,
                      "give the measured log, e.g. --log warmup.csv (see docs/fit.md)",
                      "tepid fit needs --log FILE");
        return TP_ERR_USAGE;
    }
    if (n == 0) {
        tp_diag_error(d, tp_diag_loc_none(), NULL,
                      "e.g. --free heater.power --free losses.convection_scale",
                      "tepid fit needs at least one --free KEY");
        return TP_ERR_USAGE;
    }
    for (i = 0; i < 4; i++) {
        const char *o = tp_cli_get(cli, outs[i]);
        if (o && strcmp(o, "-") != 0 && (strcmp(o, log) == 0 || tp_outfile_same_file(o, log))) {
            tp_diag_error(d, tp_diag_loc_none(), NULL, "choose another output name",
                          "--%s would overwrite the log %s", outs[i], log);
            return TP_ERR_USAGE;
        }
    }
    f->pb.starts = TP_FIT_STARTS;
    if (starts) {
        if (tp_units_parse_double(starts, &v) != 0 || v != floor(v) || v < 1 ||
            v > TP_FIT_STARTS_MAX) {
            tp_diag_error(d, (tp_loc){"--starts", 1, 1}, NULL, "a whole number from 1 to 20",
                          "bad number of starting points '%s'", starts);
            return TP_ERR_USAGE;
        }
        f->pb.starts = (int)v;
    }
    for (i = 0; i < n; i++)
        if (tp_fit_parse_free(frees[i], &f->s.desc, f->params, &f->n_params, TP_FIT_MAX_PARAMS,
                              d) != TP_OK)
            return TP_ERR_USAGE;
    return TP_OK;
}

/* ---- outputs ------------------------------------------------------------------------------ */

static tp_status write_csv(const char *path, const fit_run *f, tp_diag *d)
{
    tp_outfile o;
    long i;
    tp_status st = tp_outfile_open(&o, path, d);
    if (st != TP_OK)
        return st;
    fputs("time_s,log_C,model_C,residual_K,start_C\n", o.fp);
    for (i = 0; i < f->log.n; i++) {
        tp_csv_real(o.fp, f->log.t[i]);
        fputc(',', o.fp);
        tp_csv_real(o.fp, f->log.reading[i] - TP_KELVIN_0C);
        fputc(',', o.fp);
        tp_csv_real(o.fp, f->res.model[i] - TP_KELVIN_0C);
        fputc(',', o.fp);
        tp_csv_real(o.fp, f->res.model[i] - f->log.reading[i]);
        fputc(',', o.fp);
        tp_csv_real(o.fp, f->res.model_start[i] - TP_KELVIN_0C);
        fputc('\n', o.fp);
    }
    return tp_outfile_commit(&o, d);
}

static tp_status write_json(const char *path, const fit_run *f, tp_diag *d)
{
    const tp_fit_result *r = &f->res;
    cJSON *root = cJSON_CreateObject(), *lg, *params, *corr, *resid, *solver, *warn, *caut;
    tp_caution cautions[TP_CAUTIONS_MAX];
    char buf[96];
    tp_status st;
    int i, j;
    if (!root)
        return TP_ERR_NOMEM;
    lg = cJSON_AddObjectToObject(root, "log");
    params = cJSON_AddArrayToObject(root, "parameters");
    corr = cJSON_AddArrayToObject(root, "correlation");
    resid = cJSON_AddObjectToObject(root, "residuals");
    solver = cJSON_AddObjectToObject(root, "solver");
    warn = cJSON_AddArrayToObject(root, "warnings");
    caut = cJSON_AddArrayToObject(root, "cautions");
    if (!lg || !params || !corr || !resid || !solver || !warn || !caut) {
        cJSON_Delete(root);
        return TP_ERR_NOMEM;
    }
    cJSON_AddStringToObject(lg, "file", f->log.name);
    tp_json_number(lg, "rows", (double)f->log.n);
    tp_json_number(lg, "duration_s", f->log.t[f->log.n - 1]);
    cJSON_AddStringToObject(lg, "time_column", f->log.time_col);
    cJSON_AddStringToObject(lg, "reading_column", f->log.temp_col);
    if (f->log.drive_kind != TP_TEMPLOG_DRIVE_NONE)
        cJSON_AddStringToObject(lg, "drive_column", f->log.drive_col);
    else
        cJSON_AddNullToObject(lg, "drive_column");
    cJSON_AddStringToObject(lg, "drive",
                            r->drive == TP_FIT_BY_DUTY         ? "duty"
                            : r->drive == TP_FIT_BY_POWER      ? "power"
                            : r->drive == TP_FIT_BY_CONTROLLER ? "controller"
                                                               : "full");
    for (i = 0; i < f->n_params; i++) {
        const tp_fit_param *q = &f->params[i];
        cJSON *o = cJSON_CreateObject();
        if (!o || !cJSON_AddItemToArray(params, o)) {
            cJSON_Delete(o);
            continue;
        }
        cJSON_AddStringToObject(o, "key", q->path);
        cJSON_AddStringToObject(o, "si_unit", tp_units_si_name(q->dim));
        tp_json_number(o, "value", q->value);
        tp_json_number(o, "standard_error", q->se);
        tp_json_number(o, "start", q->start);
        cJSON_AddBoolToObject(o, "start_unset", q->start_unset);
        tp_json_number(o, "lower", q->lo);
        tp_json_number(o, "upper", q->hi);
        cJSON_AddStringToObject(o, "scale", q->scale == TP_FIT_LOG ? "log" : "linear");
        tp_json_number(o, "standard_error_scaled", q->se_scaled);
        fmt_value(f->s.doc, q, q->value, digits_for(q->value, q->se), buf, sizeof buf);
        cJSON_AddStringToObject(o, "value_text", buf);
        cJSON_AddBoolToObject(o, "at_bound", q->at_bound);
        cJSON_AddBoolToObject(o, "identifiable", !q->weak);
    }
    for (i = 0; i < f->n_params; i++) {
        cJSON *row = cJSON_CreateArray();
        if (!row || !cJSON_AddItemToArray(corr, row)) {
            cJSON_Delete(row);
            continue;
        }
        for (j = 0; j < f->n_params; j++) {
            double c = r->corr[i * f->n_params + j];
            cJSON_AddItemToArray(row, isfinite(c) ? cJSON_CreateNumber(c) : cJSON_CreateNull());
        }
    }
    tp_json_number(resid, "rms_K", r->rms);
    tp_json_number(resid, "max_abs_K", r->max_abs);
    tp_json_number(resid, "max_at_s", f->log.t[r->max_row]);
    tp_json_number(resid, "max_at_line", (double)f->log.line[r->max_row]);
    tp_json_number(resid, "sigma_K", r->sigma);
    tp_json_number(resid, "degrees_of_freedom", (double)r->dof);
    tp_json_number(resid, "rss_K2", r->rss);
    tp_json_number(solver, "starts", r->starts_run);
    tp_json_number(solver, "starts_at_best", r->starts_at_best);
    tp_json_number(solver, "model_runs", (double)r->evals);
    tp_json_number(solver, "failed_runs", (double)r->failed_runs);
    tp_json_number(solver, "rank", r->rank);
    tp_json_number(solver, "lm_info", r->lm_info);
    tp_json_number(solver, "seconds", r->seconds);
    for (i = 0; i < f->n_warn; i++)
        cJSON_AddItemToArray(warn, cJSON_CreateString(f->warn[i]));
    tp_json_add_cautions(caut, cautions, tp_fit_cautions(&f->fitted, f->net, r, cautions));
    st = tp_json_write(path, root, d);
    cJSON_Delete(root);
    return st;
}

static tp_status write_plot(const char *path, const fit_run *f, tp_diag *d)
{
    long n = f->log.n, i;
    double *b = malloc((size_t)n * 5 * sizeof *b), *min, *lg, *model, *start, *resid;
    tp_plot_series top[3], bottom[1];
    tp_plot_hline zero = {NULL, 0.0};
    tp_plot_panel panels[2];
    tp_plot_chart chart;
    char title[300];
    tp_status st;
    if (!b)
        return TP_ERR_NOMEM;
    min = b;
    lg = b + n;
    model = b + 2 * n;
    start = b + 3 * n;
    resid = b + 4 * n;
    for (i = 0; i < n; i++) {
        min[i] = f->log.t[i] / 60.0;
        lg[i] = f->log.reading[i] - TP_KELVIN_0C;
        model[i] = f->res.model[i] - TP_KELVIN_0C;
        start[i] = f->res.model_start[i] - TP_KELVIN_0C;
        resid[i] = f->res.model[i] - f->log.reading[i];
    }
    top[0] = (tp_plot_series){"log", min, lg, (size_t)n, 0, 1, 0};
    top[1] = (tp_plot_series){"fitted model", min, model, (size_t)n, 0, 0, 0};
    top[2] = (tp_plot_series){"before the fit", min, start, (size_t)n, 1, 0, 0};
    bottom[0] = (tp_plot_series){"model - log", min, resid, (size_t)n, 0, 1, 0};
    panels[0] = (tp_plot_panel){"reading (degC)", NULL, top, 3, NULL, 0, 2.5};
    panels[1] = (tp_plot_panel){"residual (K)", NULL, bottom, 1, &zero, 1, 1.0};
    snprintf(title, sizeof title, "%s: fit to %s",
             tp_session_title(&f->s), f->log.name);
    chart = (tp_plot_chart){title, "time (min)", panels, 2, 0, 0};
    st = tp_plot_chart_write(path, &chart, d);
    free(b);
    return st;
}

/* Why parameter i is flagged, in a few words. */
static const char *weak_reason(const fit_run *f, int i)
{
    int j, p = f->n_params;
    for (j = 0; j < p; j++)
        if (j != i && isfinite(f->res.corr[i * p + j]) &&
            fabs(f->res.corr[i * p + j]) > TP_FIT_CORR_MAX)
            return "strongly correlated with another fitted key";
    return "not identifiable from this log";
}

/* The --set overrides as edits (the last of a key wins, as when reading; a fitted key's
 * override is left out: the fitted value replaces it); returns how many. */
static int override_items(const fit_run *f, const char *const *sets, int n_sets,
                          tp_configedit_item *items)
{
    int n = 0, i, j;
    for (i = 0; i < n_sets; i++) {
        const char *eq = strchr(sets[i], '=');
        size_t plen = eq ? (size_t)(eq - sets[i]) : 0;
        int fitted = 0;
        if (!eq || plen >= TP_CONFIGEDIT_PATH_MAX || strlen(eq + 1) >= TP_CONFIGEDIT_VALUE_MAX)
            continue;
        for (j = 0; j < f->n_params; j++)
            fitted |=
                strlen(f->params[j].path) == plen && strncmp(f->params[j].path, sets[i], plen) == 0;
        if (fitted)
            continue;
        memcpy(items[n].path, sets[i], plen);
        items[n].path[plen] = '\0';
        snprintf(items[n].value, sizeof items[n].value, "%s", eq + 1);
        for (j = 0; j < n; j++)
            if (strcmp(items[j].path, items[n].path) == 0)
                break;
        if (j < n)
            items[j] = items[n];
        else
            n++;
    }
    return n;
}

/* The fitted values as edits after items[0..n), and the comment block that heads the written
 * config (into comment, ccap bytes); returns the new count of items. */
static int fitted_items(const fit_run *f, tp_configedit_item *items, int n, char *comment,
                        size_t ccap)
{
    char v[96], s0[96], se[96];
    size_t clen = 0;
    int i, n_overrides = n;
    clen += (size_t)snprintf(comment + clen, ccap - clen,
                             "# Calibrated with 'tepid fit' against %s (%ld rows; the heater\n"
                             "# followed %s; RMS residual %.3g K).\n"
                             "# Fitted values and their standard errors:\n",
                             f->log.name, f->log.n, tp_fit_drive_name(f->res.drive), f->res.rms);
    for (i = 0; i < f->n_params; i++) {
        const tp_fit_param *q = &f->params[i];
        fmt_value(f->s.doc, q, q->value, digits_for(q->value, q->se), v, sizeof v);
        fmt_value(f->s.doc, q, q->start, 4, s0, sizeof s0);
        fmt_se(f->s.doc, q, q->se, se, sizeof se);
        snprintf(items[n].path, sizeof items[n].path, "%s", q->path);
        snprintf(items[n].value, sizeof items[n].value, "%s", v);
        n++;
        if (clen + 600 < ccap)
            clen += (size_t)snprintf(comment + clen, ccap - clen,
                                     "#   %s: %s%s -> %s (standard error %s)%s%s\n", q->path,
                                     q->start_unset ? "unset, started at " : "", s0, v, se,
                                     q->weak ? " - " : "", q->weak ? weak_reason(f, i) : "");
    }
    if (n_overrides > 0 && clen + 200 < ccap)
        snprintf(comment + clen, ccap - clen,
                 "# The --set values of that run are written in as well.\n");
    return n;
}

/* Read the rewritten config back: it must be a valid config holding the fitted values. */
static tp_status read_back(const char *path, const char *text, const fit_run *f, tp_diag *d)
{
    tp_yamltree *back = NULL;
    tp_description check;
    tp_diag quiet;
    tp_status st;
    int i;
    memset(&check, 0, sizeof check);
    tp_diag_init(&quiet, NULL);
    st = tp_yamltree_load_text(path, text, strlen(text), &back, &quiet);
    if (st == TP_OK)
        st = tp_config_read(back, &check, &quiet);
    for (i = 0; st == TP_OK && i < f->n_params; i++) {
        double got;
        if (tp_config_get(&check, f->params[i].path, &got) != TP_OK ||
            !(fabs(got - f->params[i].value) <= 1e-3 * fabs(f->params[i].value) + 1e-9))
            st = TP_ERR_CONFIG;
    }
    if (st != TP_OK) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, "please report this; edit the config by hand",
                      "the rewritten config does not read back with the fitted values: %s",
                      quiet.log);
        st = TP_ERR_CONFIG;
    }
    tp_config_clear(&check);
    tp_yamltree_destroy(&back);
    return st;
}

/* The config with the fitted values (and the --set overrides) written into its text. */
static tp_status write_config(const char *path, const fit_run *f, tp_diag *d)
{
    const tp_cli *cli = f->s.cli;
    const char *sets[TP_MAX_SETS];
    int n_sets = tp_cli_all(cli, "set", sets, TP_MAX_SETS), n;
    tp_configedit_item *items = calloc((size_t)(n_sets + f->n_params + 1), sizeof *items);
    size_t ccap = 4096;
    char *comment = malloc(ccap), *text = NULL;
    tp_yamltree *orig = NULL;
    tp_outfile o;
    tp_status st;
    if (!items || !comment) {
        free(items);
        free(comment);
        return TP_ERR_NOMEM;
    }
    n = override_items(f, sets, n_sets, items);
    n = fitted_items(f, items, n, comment, ccap);
    st = tp_yamltree_load_file(cli->file, &orig, d);
    if (st == TP_OK)
        st = tp_configedit_apply(orig, items, n, comment, &text, d);
    if (st == TP_OK)
        st = read_back(path, text, f, d);
    if (st == TP_OK)
        st = tp_outfile_open(&o, path, d);
    if (st == TP_OK) {
        fputs(text, o.fp);
        st = tp_outfile_commit(&o, d);
    }
    tp_yamltree_destroy(&orig);
    free(text);
    free(comment);
    free(items);
    return st;
}

/* ---- the report --------------------------------------------------------------------------- */

static void collect_warnings(fit_run *f)
{
    int i, j, p = f->n_params, max = TP_FIT_MAX_PARAMS + 4;
    size_t size = sizeof f->warn[0];
    for (i = 0; i < p && f->n_warn < max; i++) {
        const tp_fit_param *q = &f->params[i];
        int paired = 0;
        if (q->at_bound)
            snprintf(f->warn[f->n_warn++], size,
                     "%s sits at a bound: widen the bounds (--free %s=LO:HI), or the model "
                     "lacks something the log shows",
                     q->path, q->path);
        for (j = 0; j < p; j++) {
            double c = f->res.corr[i * p + j];
            if (j != i && isfinite(c) && fabs(c) > TP_FIT_CORR_MAX) {
                paired = 1;
                if (j > i && f->n_warn < max)
                    snprintf(f->warn[f->n_warn++], size,
                             "%s and %s are not identifiable separately (correlation %+.3f): "
                             "this log determines mostly a combination of them; fix one in the "
                             "config, or log a run that separates them (docs/fit.md)",
                             q->path, f->params[j].path, c);
            }
        }
        if (!q->weak || paired || f->n_warn >= max)
            continue;
        if (!isfinite(q->se))
            snprintf(f->warn[f->n_warn++], size,
                     "%s is not identifiable: the log does not depend on it (alone or together "
                     "with other free keys); fix it in the config",
                     q->path);
        else
            snprintf(f->warn[f->n_warn++], size,
                     "%s is not identifiable from this log: its standard error is %s; treat the "
                     "estimate as a guess",
                     q->path,
                     q->scale == TP_FIT_LOG ? "more than half its value (in logarithm)"
                                            : "more than a quarter of its bound range");
    }
    if (f->res.starts_at_best < f->res.starts_run && f->n_warn < max)
        snprintf(f->warn[f->n_warn++], size,
                 "only %d of %d starting points reached the best fit: there are other local "
                 "minima; try more --starts or narrower bounds",
                 f->res.starts_at_best, f->res.starts_run);
}

static void summary(FILE *fp, const fit_run *f)
{
    const tp_fit_result *r = &f->res;
    const tp_templog *lg = &f->log;
    char buf[64], v[96], s0[96], se[96], lo[96], hi[96];
    tp_caution cautions[TP_CAUTIONS_MAX];
    int i, j, p = f->n_params;
    fprintf(fp, "tepid fit %s%s%s\n", f->s.cli->file, f->s.desc.title[0] ? ": " : "",
            f->s.desc.title);
    if (f->net)
        tp_summary_conditions(fp, f->net); /* the calibrated plate's */
    tp_summary_duration(lg->t[lg->n - 1], buf, sizeof buf);
    fprintf(fp, "  log %s: %ld rows over %s; reading '%s' (%s)", lg->name, lg->n, buf, lg->temp_col,
            lg->temp_unit);
    if (lg->drive_kind == TP_TEMPLOG_DRIVE_POWER)
        fprintf(fp, ", power '%s'", lg->drive_col);
    else if (lg->drive_kind == TP_TEMPLOG_DRIVE_DUTY && lg->duty_percent)
        fprintf(fp, ", duty '%s' (percent)", lg->drive_col);
    else if (lg->drive_kind == TP_TEMPLOG_DRIVE_DUTY && lg->duty_full_scale > 1.0)
        fprintf(fp, ", duty '%s' (counts of %.0f)", lg->drive_col, lg->duty_full_scale);
    else if (lg->drive_kind == TP_TEMPLOG_DRIVE_DUTY)
        fprintf(fp, ", duty '%s'", lg->drive_col);
    fprintf(fp, "\n  the model's heater follows %s; the model reading is node '%s'\n",
            tp_fit_drive_name(r->drive), f->net ? f->net->nodes[r->sensor].id : "?");
    fprintf(fp,
            "  Levenberg-Marquardt from %d starting point%s (%d reached the best fit), "
            "%ld model runs, %.2f s\n\n",
            r->starts_run, r->starts_run == 1 ? "" : "s", r->starts_at_best, r->evals, r->seconds);
    fprintf(fp, "  %-3s %-30s %-14s %-16s %-14s %s\n", "", "parameter", "start", "fitted",
            "std. error", "bounds");
    for (i = 0; i < p; i++) {
        const tp_fit_param *q = &f->params[i];
        fmt_value(f->s.doc, q, q->value, digits_for(q->value, q->se), v, sizeof v);
        fmt_value(f->s.doc, q, q->start, 4, s0, sizeof s0);
        fmt_se(f->s.doc, q, q->se, se, sizeof se);
        fmt_value(f->s.doc, q, q->lo, 3, lo, sizeof lo);
        fmt_value(f->s.doc, q, q->hi, 3, hi, sizeof hi);
        fprintf(fp, "  %-3d %-30s %-14s %-16s %-14s %s .. %s%s\n", i + 1, q->path, s0, v, se, lo,
                hi, q->scale == TP_FIT_LOG ? " (log)" : "");
    }
    if (p > 1) {
        fprintf(fp, "\n  correlation  ");
        for (j = 0; j < p; j++)
            fprintf(fp, " %7d", j + 1);
        fputc('\n', fp);
        for (i = 0; i < p; i++) {
            fprintf(fp, "  %11d  ", i + 1);
            for (j = 0; j < p; j++) {
                double c = r->corr[i * p + j];
                if (isfinite(c))
                    fprintf(fp, " %+7.3f", c);
                else
                    fprintf(fp, " %7s", "-");
            }
            fputc('\n', fp);
        }
    }
    tp_summary_duration(lg->t[r->max_row], buf, sizeof buf);
    fprintf(fp, "\n  residuals (model - log): RMS %.3f K, largest %.3f K at %s (line %d)\n", r->rms,
            r->max_abs, buf, lg->line[r->max_row]);
    fprintf(fp,
            "  noise estimate s = %.3f K on %ld degrees of freedom; the standard errors "
            "assume independent noise\n",
            r->sigma, r->dof);
    for (i = 0; i < f->n_warn; i++)
        fprintf(fp, "  ! %s\n", f->warn[i]);
    tp_summary_cautions(fp, "cautions", cautions, tp_fit_cautions(&f->fitted, f->net, r, cautions));
}

/* The description with the fitted values, assembled, for the cautions. */
static tp_status build_fitted(fit_run *f, tp_diag *d)
{
    tp_diag quiet;
    int i;
    tp_status st = tp_config_copy(&f->fitted, &f->s.desc);
    if (st != TP_OK)
        return st;
    for (i = 0; i < f->n_params; i++)
        tp_config_set(&f->fitted, f->params[i].path, f->params[i].value);
    tp_diag_init(&quiet, NULL);
    st = tp_assemble(&f->fitted, f->s.doc, &quiet, &f->net);
    if (st != TP_OK)
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL,
                      "the config with the fitted values does not assemble");
    return st;
}

static tp_status run_fit(const tp_cli *cli, tp_diag *d)
{
    fit_run *f = calloc(1, sizeof *f);
    tp_templog_opts lo;
    const char *out;
    tp_status rc;
    if (!f)
        return TP_ERR_NOMEM;
    rc = tp_session_open(&f->s, cli, d);
    if (rc != TP_OK) {
        free(f);
        return rc;
    }
    rc = parse_options(cli, f, d);
    if (rc == TP_OK) {
        lo.time_col = tp_cli_get(cli, "time-col");
        lo.temp_col = tp_cli_get(cli, "temp-col");
        lo.duty_col = tp_cli_get(cli, "duty-col");
        rc = tp_templog_load(tp_cli_get(cli, "log"), &lo, &f->log, d);
    }
    if (rc == TP_OK) {
        f->pb.desc = &f->s.desc;
        f->pb.doc = f->s.doc;
        f->pb.log = &f->log;
        f->pb.params = f->params;
        f->pb.n_params = f->n_params;
        rc = tp_fit_run(&f->pb, &f->res, d);
    }
    if (rc == TP_OK)
        rc = build_fitted(f, d);
    if (rc == TP_OK)
        collect_warnings(f);
    if (rc == TP_OK && (out = tp_cli_get(cli, "csv")))
        rc = write_csv(out, f, d);
    if (rc == TP_OK && (out = tp_cli_get(cli, "json")))
        rc = write_json(out, f, d);
    if (rc == TP_OK && (out = tp_cli_get(cli, "plot")))
        rc = write_plot(out, f, d);
    if (rc == TP_OK && (out = tp_cli_get(cli, "write-config")))
        rc = write_config(out, f, d);
    if (rc == TP_OK && f->s.text)
        summary(f->s.text, f);
    tp_network_destroy(&f->net);
    tp_config_clear(&f->fitted);
    tp_fit_result_clear(&f->res);
    tp_templog_clear(&f->log);
    tp_session_close(&f->s);
    free(f);
    return rc;
}

const tp_verb tp_cmd_fit = {
    "fit",
    run_fit,
    "Calibrate config keys against a measured warm-up log.",
    1,
    fit_opts,
    "Adjusts the --free keys (with bounds, log-scaled when positive) so that the model's\n"
    "reading matches the log (Levenberg-Marquardt from several starting points), reports the\n"
    "estimates with standard errors and correlations, flags parameters the log cannot\n"
    "determine, and writes the calibrated config. A logged duty or power drives the heater\n"
    "open loop; without one the configured controller runs. How to record a useful log, the\n"
    "log format and the method: docs/fit.md.",
    "tepid fit workshop-bed-24v.yaml --log workshop-bed-24v-log.csv "
    "--free heater.resistance --free losses.convection_scale\n"
    "tepid fit workshop-bed-24v.yaml --log workshop-bed-24v-log.csv "
    "--free sensor.time_constant --write-config calibrated.yaml --plot fit.png"};
