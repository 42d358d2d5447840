/* tepid check: validate a file and summarise its network in one line. */
#include <stdio.h>

#include "session.h"
#include "summary.h"
#include "verbs.h"

static const tp_opt check_opts[] = {
    TP_OPT_SET,
    TP_OPT_QUIET,
    TP_OPT_END,
};

static tp_status run_check(const tp_cli *cli, tp_diag *d)
{
    tp_session s;
    tp_status rc = tp_session_open(&s, cli, d);
    if (rc != TP_OK)
        return rc;
    if (s.text) {
        fprintf(s.text, "%s: valid (%s form, %d warning%s); ", cli->file,
                s.desc.form == TP_FORM_RAW ? "raw network" : "physical", d->warnings,
                d->warnings == 1 ? "" : "s");
        tp_summary_network_line(s.text, s.net);
    }
    tp_session_close(&s);
    return TP_OK;
}

const tp_verb tp_cmd_check = {
    "check",
    run_check,
    "Validate a file and summarise its network in one line.",
    1,
    check_opts,
    NULL,
    "tepid check workshop-bed-24v.yaml\n"
    "tepid check workshop-bed-24v.yaml --set bed.layers.plate.thickness=6mm"};
