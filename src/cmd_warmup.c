/* tepid warmup: the transient from the initial state, with its history and summary. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "commands.h"
#include "csv.h"
#include "history.h"
#include "integrate.h"
#include "report.h"
#include "results.h"
#include "session.h"

static const tp_opt warmup_opts[] = {
    {"csv", 0, 1, 0, 1, "FILE", "write the history as CSV (- for standard output)"},
    {NULL, 0, 0, 0, 0, NULL, NULL},
};

static void summary(FILE *fp, const tp_session *s, const tp_history *h,
                    const tp_integrate_stats *st)
{
    const tp_network *net = s->net;
    char buf[64];
    int k;
    long last = h->n - 1;
    tp_exposure ex = {TP_UNSET, TP_UNSET, TP_UNSET};
    fprintf(fp, "tepid warmup %s\n  ", s->cli->file);
    tp_report_network(fp, net);
    tp_fmt_duration(h->t[last], buf, sizeof buf);
    fprintf(fp, "  simulated %s: %ld steps, %ld right-hand sides, %ld Jacobians, %ld restarts (%s)\n",
            buf, st->steps, st->rhs_evals, st->jac_evals, st->restarts,
            st->sparse ? "KLU" : "dense LU");
    if (net->has_control && isfinite(net->control.setpoint)) {
        int col = tp_history_column(h, net->control.sensor);
        double tr = tp_first_rise(h->t, h->temps + col, h->n, h->n_out, net->control.setpoint);
        if (isfinite(tr)) {
            tp_fmt_duration(tr, buf, sizeof buf);
            fprintf(fp, "  '%s' first reached the setpoint %.1f degC at %s\n",
                    net->nodes[net->control.sensor].id, net->control.setpoint - TP_KELVIN_0C, buf);
        } else {
            fprintf(fp, "  '%s' did not reach the setpoint %.1f degC in the simulated time "
                        "(highest %.1f degC)\n", net->nodes[net->control.sensor].id,
                    net->control.setpoint - TP_KELVIN_0C,
                    tp_series_max(h->temps + col, h->n, h->n_out) - TP_KELVIN_0C);
        }
    }
    fprintf(fp, "  final temperatures:\n");
    for (k = 0; k < h->n_out; k++) {
        double t = tp_history_temp(h, last, k);
        double m = tp_series_max(h->temps + k, h->n, h->n_out);
        fprintf(fp, "    %-16s %8.2f degC\n", net->nodes[h->out_nodes[k]].id, t - TP_KELVIN_0C);
        if (!isfinite(ex.node_max) || m > ex.node_max)
            ex.node_max = m;
    }
    ex.surface_max = tp_series_max(h->surface, h->n, 1);
    tp_report_cautions(fp, &s->desc, net, &ex);
}

static tp_status run_warmup(const tp_cli *cli, tp_diag *d)
{
    tp_session s;
    tp_history h;
    tp_integrate_opts o;
    tp_integrate_stats st;
    tp_status rc = tp_session_open(&s, cli, d);
    if (rc != TP_OK)
        return rc;
    rc = tp_history_init(&h, s.net);
    if (rc != TP_OK) {
        tp_session_close(&s);
        return rc;
    }
    tp_integrate_defaults(s.net, &o);
    o.out = tp_history_record;
    o.user = &h;
    rc = tp_integrate(s.net, &o, &st, d);
    if (rc == TP_OK && h.failed)
        rc = TP_ERR_NOMEM;
    if (rc == TP_OK && tp_cli_get(cli, "csv"))
        rc = tp_csv_write_history(tp_cli_get(cli, "csv"), &h, d);
    if (rc == TP_OK && s.text)
        summary(s.text, &s, &h, &st);
    tp_history_clear(&h);
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_verb_warmup = {
    "warmup", run_warmup, "Simulate the warm-up from the initial state.", 1, warmup_opts,
    "Integrates the network with CVODE over run.duration and reports when the sensor reaches\n"
    "the setpoint and the final temperatures. The CSV has time_s, <node>_C, <source>_W and,\n"
    "with a controller, duty and reading_C."};
