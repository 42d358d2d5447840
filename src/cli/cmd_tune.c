/* tepid tune: suggest PID gains from the model (FOPDT identification + a published rule), then
 * simulate the warm-up with them. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "csv.h"
#include "figure.h"
#include "json.h"
#include "session.h"
#include "summary.h"
#include "tune.h"
#include "units.h"
#include "verbs.h"
#include "warmup.h"

#define TP_TUNE_STEP 0.1 /* -, default duty step of the identification, a fraction of max_duty */
#define TP_TAU_C_FLOOR 0.02 /* -, default tau_c at least this share of the time constant: when
                               the identified delay is near zero, SIMC's tau_c = dead would
                               tune the loop to the sampling period (our choice, documented) */

static const tp_opt tune_opts[] = {
    {"rule", 0, 1, 0, 0, "NAME", "simc (PI, Skogestad 2003; default) or imc (PID, Rivera et al. "
                                 "1986)"},
    {"tau-c", 0, 1, 0, 0, "TIME", "closed-loop time constant (SIMC) or lambda (IMC); default: "
                                  "the effective dead time (SIMC 'tight' choice)"},
    {"step", 0, 1, 0, 0, "FRACTION", "duty step of the identification (default 0.1)"},
    {"overshoot", 0, 1, 0, 0, "LIMIT", "search the rule's parameter for the fastest warm-up whose "
                                       "reading overshoots at most LIMIT, e.g. 2K"},
    {"worst", 0, 0, 0, 0, NULL, "with --overshoot: keep the limit in every corner of guard's "
                                "ranges too"},
    {"json", 0, 1, 0, TP_OUT_FILE, "FILE", "write the model, the gains and the resulting metrics as JSON"},
    {"csv", 0, 1, 0, TP_OUT_FILE, "FILE", "write the warm-up with the suggested gains as CSV"},
    {"plot", 0, 1, 0, TP_OUT_FIGURE, "FILE", "draw the warm-up with the suggested gains"},
    TP_OPT_SET,
    TP_OPT_QUIET,
    TP_OPT_END,
};

static tp_status parse_options(const tp_cli *cli, tp_tune_rule *rule, double *tau_c,
                               double *step, double *limit, tp_diag *d)
{
    const char *o = tp_cli_get(cli, "overshoot");
    const char *r = tp_cli_get(cli, "rule"), *t = tp_cli_get(cli, "tau-c");
    const char *s = tp_cli_get(cli, "step");
    char msg[256];
    const char *hint;
    *rule = TP_RULE_SIMC;
    *tau_c = TP_UNSET;
    *step = TP_TUNE_STEP;
    if (r && strcmp(r, "simc") == 0)
        *rule = TP_RULE_SIMC;
    else if (r && strcmp(r, "imc") == 0)
        *rule = TP_RULE_IMC;
    else if (r) {
        tp_diag_error(d, (tp_loc){"--rule", 1, 1}, NULL, "use simc or imc",
                      "unknown tuning rule '%s'", r);
        return TP_ERR_USAGE;
    }
    if (t && tp_units_parse(t, TP_DIM_TIME, tau_c, msg, sizeof msg, &hint) != TP_OK) {
        tp_diag_error(d, (tp_loc){"--tau-c", 1, 1}, NULL, hint, "%s", msg);
        return TP_ERR_USAGE;
    }
    if (s && (tp_units_parse_double(s, step) != 0 || !(*step > 0 && *step <= 0.5))) {
        tp_diag_error(d, (tp_loc){"--step", 1, 1}, NULL, "a fraction of max_duty in (0, 0.5]",
                      "bad step '%s'", s);
        return TP_ERR_USAGE;
    }
    *limit = TP_UNSET;
    if (o && (tp_units_parse(o, TP_DIM_INTERVAL, limit, msg, sizeof msg, &hint) != TP_OK ||
              !(*limit > 0))) {
        tp_diag_error(d, (tp_loc){cli->file, 0, 0}, "--overshoot",
                      "a temperature difference above zero, e.g. 2K",
                      "bad overshoot limit '%s'", o);
        return TP_ERR_USAGE;
    }
    if (o && t) {
        tp_diag_error(d, (tp_loc){cli->file, 0, 0}, "--overshoot",
                      "drop --tau-c: --overshoot chooses it",
                      "--overshoot searches the parameter --tau-c would fix");
        return TP_ERR_USAGE;
    }
    if (!o && tp_cli_flag(cli, "worst")) {
        tp_diag_error(d, (tp_loc){cli->file, 0, 0}, "--worst", "add --overshoot LIMIT, e.g. 2K",
                      "--worst applies the overshoot limit in every corner: it needs "
                      "--overshoot");
        return TP_ERR_USAGE;
    }
    return TP_OK;
}

static tp_status write_json(const char *path, const tp_fopdt *m, const tp_gains *g,
                            tp_tune_rule rule, const tp_metrics *mt, const tp_tune_search *sr,
                            const tp_metrics *cur, tp_diag *d)
{
    cJSON *root = cJSON_CreateObject(), *model, *gains, *result;
    tp_status st;
    if (!root)
        return TP_ERR_NOMEM;
    model = cJSON_AddObjectToObject(root, "model");
    gains = cJSON_AddObjectToObject(root, "gains");
    result = cJSON_AddObjectToObject(root, "result");
    if (!model || !gains || !result) {
        cJSON_Delete(root);
        return TP_ERR_NOMEM;
    }
    tp_json_number(model, "gain_K_per_duty", m->gain);
    tp_json_number(model, "time_constant_s", m->tau);
    tp_json_number(model, "dead_time_s", m->dead);
    tp_json_number(model, "duty_before", m->u0);
    tp_json_number(model, "duty_after", m->u1);
    cJSON_AddStringToObject(root, "rule", rule == TP_RULE_SIMC ? "simc" : "imc");
    tp_json_number(root, "tau_c_s", g->tau_c);
    tp_json_number(gains, "kp_per_K", g->kp);
    tp_json_number(gains, "ki_per_K_s", g->ki);
    tp_json_number(gains, "kd_s_per_K", g->kd);
    tp_json_metric(result, mt, TP_MET_TIME_SETPOINT);
    tp_json_metric(result, mt, TP_MET_OVERSHOOT_READING);
    tp_json_metric(result, mt, TP_MET_TIME_READY);
    if (sr) {
        cJSON *search = cJSON_AddObjectToObject(root, "search");
        if (search) {
            tp_json_number(search, "overshoot_limit_K", sr->limit);
            tp_json_number(search, "cases", sr->n_cases);
            tp_json_number(search, "tried", sr->tried);
            tp_json_number(search, "param_low_s", sr->param_lo);
            tp_json_number(search, "param_high_s", sr->param_hi);
            tp_json_number(search, "worst_overshoot_K", sr->overshoot);
        }
    }
    if (cur) {
        cJSON *current = cJSON_AddObjectToObject(root, "current");
        if (current) {
            tp_json_metric(current, cur, TP_MET_TIME_SETPOINT);
            tp_json_metric(current, cur, TP_MET_OVERSHOOT_READING);
            tp_json_metric(current, cur, TP_MET_TIME_READY);
        }
    }
    st = tp_json_write(path, root, d);
    cJSON_Delete(root);
    return st;
}

/* Whether the config's own controller can be run for comparison: on-off, or pid with gains. */
static int has_current(const tp_session *s)
{
    const tp_control_spec *c = &s->desc.control;
    return tp_network_holds(s->net) &&
           (c->mode == TP_MODE_ONOFF || (c->mode == TP_MODE_PID && tp_isset(c->kp)));
}

/* The current controller's and the new gains' warm-ups side by side, and which is better: the
 * one within the limit (when there is one), then the faster to the setpoint; without a limit,
 * better only when faster and with no more overshoot. */
static void compare(FILE *fp, const tp_session *s, const tp_metrics *cur, const tp_metrics *now,
                    double limit)
{
    char a[32], b[32], c[32], e[32];
    const tp_control_spec *cs = &s->desc.control;
    int cur_ok = isfinite(cur->t_setpoint) && (!isfinite(limit) || cur->overshoot_reading <= limit);
    int new_ok = isfinite(now->t_setpoint) && (!isfinite(limit) || now->overshoot_reading <= limit);
    const char *verdict;
    tp_summary_duration(cur->t_setpoint, a, sizeof a);
    tp_summary_duration(now->t_setpoint, b, sizeof b);
    tp_summary_duration(cur->t_surface_ready, c, sizeof c);
    tp_summary_duration(now->t_surface_ready, e, sizeof e);
    fprintf(fp, "  compared with the config's controller (%s):\n", cs->mode == TP_MODE_PID
                                                                     ? "pid, its gains"
                                                                     : "on-off");
    fprintf(fp, "    %-28s %14s %14s\n", "", "current", "suggested");
    fprintf(fp, "    %-28s %14s %14s\n", "reading at the setpoint", a, b);
    fprintf(fp, "    %-28s %12.2f K %12.2f K\n", "overshoot (reading)", cur->overshoot_reading,
            now->overshoot_reading);
    fprintf(fp, "    %-28s %14s %14s\n", "surface ready", c, e);
    if (cur_ok != new_ok)
        verdict = new_ok ? "the suggested gains (only they meet the limit)"
                         : "the current controller (only it meets the limit)";
    else if (!new_ok)
        verdict = isfinite(limit) ? "neither: both miss the limit" : "neither reaches the setpoint";
    else if (isfinite(limit))
        verdict = now->t_setpoint < cur->t_setpoint ? "the suggested gains (faster, within the limit)"
                  : now->t_setpoint > cur->t_setpoint ? "the current controller (faster, within the limit)"
                                                      : "neither: equal";
    else if (now->t_setpoint <= cur->t_setpoint && now->overshoot_reading <= cur->overshoot_reading)
        verdict = "the suggested gains (no slower, no more overshoot)";
    else if (now->t_setpoint >= cur->t_setpoint && now->overshoot_reading >= cur->overshoot_reading)
        verdict = "the current controller (no slower, no more overshoot)";
    else
        verdict = "a trade-off: one is faster, the other overshoots less (give --overshoot to "
                  "decide)";
    fprintf(fp, "    better: %s\n", verdict);
}

/* The rule's parameter searched for the fastest warm-up within --overshoot LIMIT (into *tau_c,
 * the search's record in sr); an error naming the least overshoot found when none meets it. */
static tp_status overshoot_search(tp_session *s, const tp_cli *cli, const tp_fopdt *me,
                                  tp_tune_rule rule, double limit, double *tau_c,
                                  tp_tune_search *sr, tp_diag *d)
{
    const char *pname = rule == TP_RULE_SIMC ? "tau_c" : "lambda";
    tp_status rc = tp_tune_overshoot(&s->desc, s->doc, s->net, me, rule, *tau_c, limit,
                                     tp_cli_flag(cli, "worst"), sr, d);
    if (rc == TP_OK && !sr->found) {
        char least[160] = "no run reached the setpoint";
        if (isfinite(sr->least_param))
            snprintf(least, sizeof least, "the least overshoot of a run reaching the setpoint "
                     "was %.2f K at %s = %.3g s", sr->least_overshoot, pname, sr->least_param);
        tp_diag_error(d, tp_diag_loc_none(), "--overshoot",
                      "allow more overshoot, lengthen run.duration, try --rule imc, or tune "
                      "by hand",
                      "no %s from %.3g to %.3g s keeps the overshoot within %.2f K%s and "
                      "reaches the setpoint within run.duration (%d tried); %s",
                      pname, sr->param_lo, sr->param_hi, limit,
                      sr->n_cases > 1 ? " in every corner" : "", sr->tried, least);
        rc = TP_ERR_SOLVER;
    }
    if (rc == TP_OK)
        *tau_c = sr->param;
    return rc;
}

/* What tune found: the model, the gains, the rule and its parameter, the overshoot limit
 * (NaN: none) and the search (used only with a limit). */
typedef struct tune_answer {
    const tp_fopdt *m;
    const tp_gains *g;
    tp_tune_rule rule;
    double tau_c, limit;
    const tp_tune_search *sr;
} tune_answer;

/* The text summary: the model, the rule, the settings to paste, the warm-up with them (w, on
 * the network `tuned`) and, when the config has a controller, the comparison with its own (wc,
 * else NULL), and the cautions. */
static void print_text(tp_session *s, const tp_cli *cli, const tp_network *tuned,
                       const tune_answer *a, tp_warmup *w, tp_warmup *wc)
{
    const tp_fopdt *m = a->m;
    const tp_gains *g = a->g;
    const tp_tune_search *sr = a->sr;
    const char *pname = a->rule == TP_RULE_SIMC ? "tau_c" : "lambda";
    double limit = a->limit;
    char buf[64], buf2[64];
    tp_caution cautions[TP_CAUTIONS_MAX];
    fprintf(s->text, "tepid tune %s\n  ", cli->file);
    tp_summary_network(s->text, tuned);
    fprintf(s->text, "  model of the reading at the holding point (duty %.3f -> %.3f):\n"
                     "    gain %.4g K per unit duty, time constant %.1f s, dead time %.1f s "
                     "(+%.2f s for sampling)\n",
            m->u0, m->u1, m->gain, m->tau, m->dead, 0.5 * s->net->control.period);
    fprintf(s->text, "  rule: %s, %s = %.1f s\n",
            a->rule == TP_RULE_SIMC ? "SIMC PI (Skogestad 2003)"
                                    : "IMC-PID (Rivera, Morari & Skogestad 1986)",
            pname, a->tau_c);
    if (isfinite(limit))
        fprintf(s->text, "  chosen by --overshoot %.2f K: the fastest to the setpoint of %d "
                         "values of %s from %.3g to %.3g s whose reading overshoots at most "
                         "the limit%s (worst %.2f K)\n",
                limit, sr->tried, pname, sr->param_lo, sr->param_hi,
                sr->n_cases > 1 ? " in every corner of guard's ranges" : "", sr->overshoot);
    fprintf(s->text, "  suggested settings (paste into control:, in place of its mode%s and any "
                     "gains):\n"
                     "    mode: pid\n    kp: %.4g 1/K\n    ki: %.4g 1/(K.s)\n"
                     "    kd: %.4g s/K\n",
            s->desc.control.mode == TP_MODE_ONOFF ? ", band" : "", g->kp, g->ki, g->kd);
    tp_summary_duration(w->metrics.t_setpoint, buf, sizeof buf);
    tp_summary_duration(w->metrics.t_surface_ready, buf2, sizeof buf2);
    fprintf(s->text, "  warm-up with these gains: reading at the setpoint after %s, "
                     "overshoot %.2f K, surface ready after %s\n",
            isfinite(w->metrics.t_setpoint) ? buf : "(not reached)",
            w->metrics.overshoot_reading, isfinite(w->metrics.t_surface_ready) ? buf2 : "-");
    if (wc)
        compare(s->text, s, &wc->metrics, &w->metrics, limit);
    tp_summary_cautions(s->text, "cautions", cautions,
                        tp_warmup_cautions(&s->desc, tuned, w, cautions));
}

static tp_status run_tune(const tp_cli *cli, tp_diag *d)
{
    tp_session s;
    tp_fopdt m, me;
    tp_gains g;
    tp_warmup w, wc;
    tp_control tuned_ctl;
    tp_net_change change;
    tp_tune_search sr;
    const tp_network *tuned = NULL;
    tp_tune_rule rule;
    double tau_c, step, dead_eff, limit;
    int current = 0;
    char title[512];
    const char *pname;
    tp_status rc = parse_options(cli, &rule, &tau_c, &step, &limit, d);
    if (rc != TP_OK)
        return rc;
    /* The plant is identified in open loop: a pid controller needs no gains yet (issue 15
     * item 12). */
    rc = tp_session_open_plant(&s, cli, d);
    if (rc != TP_OK)
        return rc;
    memset(&w, 0, sizeof w);
    memset(&wc, 0, sizeof wc);
    memset(&sr, 0, sizeof sr);
    pname = rule == TP_RULE_SIMC ? "tau_c" : "lambda";
    rc = tp_tune_identify(s.net, &s.desc.run, step, &m, d);
    if (rc != TP_OK)
        goto done;
    /* A sampled controller adds about half its period of effective delay (Skogestad 2003,
     * "half rule" for the zero-order hold). */
    dead_eff = m.dead + 0.5 * s.net->control.period;
    me = m;
    me.dead = dead_eff;
    if (!isfinite(tau_c))
        tau_c = rule == TP_RULE_SIMC ? fmax(dead_eff, TP_TAU_C_FLOOR * m.tau)
                                     : fmax(0.8 * dead_eff, 0.1 * m.tau);
    if (isfinite(limit)) {
        rc = overshoot_search(&s, cli, &me, rule, limit, &tau_c, &sr, d);
        if (rc != TP_OK)
            goto done;
    }
    tp_tune_gains(&me, rule, tau_c, &g);
    /* The warm-up with the suggested gains runs on a copy of the plate with that controller. */
    tuned_ctl = s.net->control;
    tuned_ctl.mode = TP_MODE_PID;
    tuned_ctl.kp = g.kp;
    tuned_ctl.ki = g.ki;
    tuned_ctl.kd = g.kd;
    change = (tp_net_change){TP_CHANGE_CONTROL, -1, -1, 0.0, NULL, &tuned_ctl};
    rc = tp_network_copy(s.net, &change, 1, &tuned);
    if (rc == TP_OK)
        rc = tp_warmup_run(tuned, &s.desc.run, &w, d);
    /* The config's own controller, for the comparison. */
    if (rc == TP_OK && has_current(&s)) {
        rc = tp_warmup_run(s.net, &s.desc.run, &wc, d);
        current = rc == TP_OK;
    }
    if (rc == TP_OK && tp_cli_get(cli, "csv"))
        rc = tp_csv_write_history(tp_cli_get(cli, "csv"), &w.history, d);
    if (rc == TP_OK && tp_cli_get(cli, "json"))
        rc = write_json(tp_cli_get(cli, "json"), &m, &g, rule, &w.metrics,
                        isfinite(limit) ? &sr : NULL, current ? &wc.metrics : NULL, d);
    if (rc == TP_OK && tp_cli_get(cli, "plot")) {
        snprintf(title, sizeof title, "%s: %s, %s = %.3g s; kp %.4g 1/K, ki %.4g 1/(K.s), kd %.4g s/K",
                 tp_session_title(&s), rule == TP_RULE_SIMC ? "SIMC PI" : "IMC-PID", pname, tau_c,
                 g.kp, g.ki, g.kd);
        rc = tp_figure_warmup(tp_cli_get(cli, "plot"), title, tuned, &w, d);
    }
    if (rc == TP_OK && s.text) {
        tune_answer a = {&m, &g, rule, tau_c, limit, &sr};
        print_text(&s, cli, tuned, &a, &w, current ? &wc : NULL);
    }
done:
    tp_warmup_clear(&w);
    tp_warmup_clear(&wc);
    tp_network_release(&tuned);
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_cmd_tune = {
    "tune",
    run_tune,
    "Suggest PID gains from the model and show the warm-up they give.",
    1,
    tune_opts,
    "Identifies a first-order-plus-dead-time model of the reading's response to a duty step\n"
    "at the holding point (two-point method), applies SIMC (PI) or IMC (PID), prints the gains\n"
    "in the config's units and simulates the warm-up with them, beside the config's own\n"
    "controller. --overshoot LIMIT searches the rule's parameter for the fastest warm-up whose\n"
    "reading overshoots at most LIMIT (--worst: in every corner of guard's ranges too).",
    "tepid tune workshop-bed-24v.yaml\n"
    "tepid tune workshop-bed-24v.yaml --rule imc --plot tuned.png\n"
    "tepid tune workshop-bed-24v.yaml --overshoot 2K"};
