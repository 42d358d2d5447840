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
    {"json", 0, 1, 0, TP_OUT_FILE, "FILE", "write the model, the gains and the resulting metrics as JSON"},
    {"csv", 0, 1, 0, TP_OUT_FILE, "FILE", "write the warm-up with the suggested gains as CSV"},
    {"plot", 0, 1, 0, TP_OUT_FIGURE, "FILE", "draw the warm-up with the suggested gains"},
    TP_OPT_SET,
    TP_OPT_QUIET,
    TP_OPT_END,
};

static tp_status parse_options(const tp_cli *cli, tp_tune_rule *rule, double *tau_c,
                               double *step, tp_diag *d)
{
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
    return TP_OK;
}

static tp_status write_json(const char *path, const tp_fopdt *m, const tp_gains *g,
                            tp_tune_rule rule, const tp_metrics *mt, tp_diag *d)
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
    st = tp_json_write(path, root, d);
    cJSON_Delete(root);
    return st;
}

static tp_status run_tune(const tp_cli *cli, tp_diag *d)
{
    tp_session s;
    tp_fopdt m;
    tp_gains g;
    tp_warmup w;
    tp_tune_rule rule;
    double tau_c, step, dead_eff;
    char buf[64], buf2[64];
    tp_status rc = parse_options(cli, &rule, &tau_c, &step, d);
    if (rc != TP_OK)
        return rc;
    /* The plant is identified in open loop: a pid controller needs no gains yet (issue 15
     * item 12). */
    rc = tp_session_open_plant(&s, cli, d);
    if (rc != TP_OK)
        return rc;
    memset(&w, 0, sizeof w);
    rc = tp_tune_identify(s.net, step, &m, d);
    if (rc != TP_OK)
        goto done;
    /* A sampled controller adds about half its period of effective delay (Skogestad 2003,
     * "half rule" for the zero-order hold). */
    dead_eff = m.dead + 0.5 * s.net->control.period;
    if (!isfinite(tau_c))
        tau_c = rule == TP_RULE_SIMC ? fmax(dead_eff, TP_TAU_C_FLOOR * m.tau)
                                     : fmax(0.8 * dead_eff, 0.1 * m.tau);
    if (rule == TP_RULE_SIMC) {
        tp_fopdt me = m;
        me.dead = dead_eff;
        tp_tune_simc(&me, tau_c, &g);
    } else {
        tp_fopdt me = m;
        me.dead = dead_eff;
        tp_tune_imc(&me, tau_c, &g);
    }
    s.net->control.mode = TP_MODE_PID;
    s.net->control.kp = g.kp;
    s.net->control.ki = g.ki;
    s.net->control.kd = g.kd;
    rc = tp_warmup_run(s.net, &w, d);
    if (rc == TP_OK && tp_cli_get(cli, "csv"))
        rc = tp_csv_write_history(tp_cli_get(cli, "csv"), &w.history, d);
    if (rc == TP_OK && tp_cli_get(cli, "json"))
        rc = write_json(tp_cli_get(cli, "json"), &m, &g, rule, &w.metrics, d);
    if (rc == TP_OK && tp_cli_get(cli, "plot"))
        rc = tp_figure_warmup(tp_cli_get(cli, "plot"), tp_session_title(&s), s.net, &w, d);
    if (rc == TP_OK && s.text) {
        tp_caution cautions[TP_CAUTIONS_MAX];
        fprintf(s.text, "tepid tune %s\n  ", cli->file);
        tp_summary_network(s.text, s.net);
        fprintf(s.text, "  model of the reading at the holding point (duty %.3f -> %.3f):\n"
                        "    gain %.4g K per unit duty, time constant %.1f s, dead time %.1f s "
                        "(+%.2f s for sampling)\n",
                m.u0, m.u1, m.gain, m.tau, m.dead, 0.5 * s.net->control.period);
        fprintf(s.text, "  rule: %s, %s = %.1f s\n",
                rule == TP_RULE_SIMC ? "SIMC PI (Skogestad 2003)"
                                     : "IMC-PID (Rivera, Morari & Skogestad 1986)",
                rule == TP_RULE_SIMC ? "tau_c" : "lambda", tau_c);
        fprintf(s.text, "  suggested settings (paste into control:, in place of its mode%s and any "
                        "gains):\n"
                        "    mode: pid\n    kp: %.4g 1/K\n    ki: %.4g 1/(K.s)\n"
                        "    kd: %.4g s/K\n",
                s.desc.control.mode == TP_MODE_ONOFF ? ", band" : "", g.kp, g.ki, g.kd);
        tp_summary_duration(w.metrics.t_setpoint, buf, sizeof buf);
        tp_summary_duration(w.metrics.t_surface_ready, buf2, sizeof buf2);
        fprintf(s.text, "  warm-up with these gains: reading at the setpoint after %s, "
                        "overshoot %.2f K, surface ready after %s\n",
                isfinite(w.metrics.t_setpoint) ? buf : "(not reached)",
                w.metrics.overshoot_reading, isfinite(w.metrics.t_surface_ready) ? buf2 : "-");
        tp_summary_cautions(s.text, "cautions", cautions,
                            tp_warmup_cautions(&s.desc, s.net, &w, cautions));
    }
done:
    tp_warmup_clear(&w);
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
    "in the config's units and simulates the warm-up with them.",
    "tepid tune workshop-bed-24v.yaml\n"
    "tepid tune workshop-bed-24v.yaml --rule imc --plot tuned.png"};
