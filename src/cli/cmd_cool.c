/* tepid cool: the cool-down with the heater off, and when the plate is safe to touch
 * (docs/cool.md). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "caution.h"
#include "coolout.h"
#include "cooldown.h"
#include "csv.h"
#include "json.h"
#include "series.h"
#include "session.h"
#include "summary.h"
#include "verbs.h"

static const tp_opt cool_opts[] = {
    {"from", 0, 1, 0, 0, "TEMP",
     "start uniformly at TEMP (plate and sensor; air and walls at the room) instead of the "
     "steady holding state"},
    {"to", 0, 1, 1, 0, "TEMP",
     "also report when the surface falls below TEMP, e.g. 40degC (repeatable)"},
    {"csv", 0, 1, 0, TP_OUT_FILE, "FILE", "write the cool-down history as CSV (- for standard "
                                           "output)"},
    {"json", 0, 1, 0, TP_OUT_FILE, "FILE", "write the times as JSON (- for standard output)"},
    {"plot", 0, 1, 0, TP_OUT_FIGURE, "FILE",
     "draw the cool-down curves with the levels (.png, .svg or .pdf)"},
    TP_OPT_SET,
    TP_OPT_QUIET,
    TP_OPT_END,
};

/* The options: --from above the room (the message points at the room in the config), --to
 * values, and a start the file allows (a setpoint to hold, or --from). */
static tp_status read_options(const tp_cli *cli, const tp_session *s, double *from, double *to,
                              int *n_to, tp_diag *d)
{
    double room = tp_network_room(s->net);
    tp_status st;
    *from = TP_UNSET;
    if ((st = tp_session_temperatures(cli, "to", TP_COOLDOWN_MAX_TO, to, n_to, d)) != TP_OK)
        return st;
    if (tp_cli_get(cli, "from")) {
        if ((st = tp_session_temperature("--from", tp_cli_get(cli, "from"), from, d)) != TP_OK)
            return st;
        if (*from < room) {
            tp_diag_error(d,
                          tp_yamltree_nearest(s->doc, s->desc.form == TP_FORM_PHYSICAL
                                                          ? "room.temperature"
                                                          : "network.nodes"),
                          "--from", "a cool-down starts at or above the room temperature",
                          "--from %.2f degC is below the room temperature %.2f degC",
                          *from - TP_KELVIN_0C, room - TP_KELVIN_0C);
            return TP_ERR_USAGE;
        }
        return TP_OK;
    }
    if (!tp_network_holds(s->net)) {
        tp_diag_error(d, tp_diag_loc_none(), NULL,
                      "give --from TEMP (e.g. --from 100degC), or a control section with a "
                      "setpoint to hold",
                      "the cool-down starts from the steady holding state, and this file's "
                      "controller holds no setpoint");
        return TP_ERR_USAGE;
    }
    return TP_OK;
}

static void summary(FILE *fp, const tp_session *s, const tp_cooldown *c)
{
    tp_caution list[TP_CAUTIONS_MAX];
    int n;
    fprintf(fp, "tepid cool %s%s%s\n  ", s->cli->file, s->desc.title[0] ? ": " : "",
            s->desc.title);
    tp_summary_network(fp, s->net);
    fputc('\n', fp);
    tp_coolout_text(fp, c);
    fputc('\n', fp);
    tp_coolout_note_text(fp);
    n = tp_cooldown_cautions(&s->desc, s->net, c, list);
    tp_summary_cautions(fp, "cautions", list, n);
}

static tp_status write_json(const char *path, const tp_session *s, const tp_cooldown *c,
                            tp_diag *d)
{
    cJSON *root = cJSON_CreateObject(), *arr;
    tp_caution list[TP_CAUTIONS_MAX];
    int n;
    tp_status st;
    if (!root)
        return TP_ERR_NOMEM;
    tp_json_conditions(root, s->net);
    tp_coolout_json(root, c);
    tp_json_number(root, "duration_s", c->history.n ? c->history.t[c->history.n - 1] : 0.0);
    arr = cJSON_AddArrayToObject(root, "cautions");
    n = tp_cooldown_cautions(&s->desc, s->net, c, list);
    tp_json_add_cautions(arr, list, n);
    st = tp_json_write(path, root, d);
    cJSON_Delete(root);
    return st;
}

static tp_status run_cool(const tp_cli *cli, tp_diag *d)
{
    tp_session s;
    tp_cooldown c;
    double from, to[TP_COOLDOWN_MAX_TO];
    int n_to;
    tp_status rc = tp_session_open(&s, cli, d);
    if (rc != TP_OK)
        return rc;
    memset(&c, 0, sizeof c);
    rc = read_options(cli, &s, &from, to, &n_to, d);
    if (rc == TP_OK)
        rc = tp_cooldown_run(&s.desc, s.net, from, to, n_to, &c, d);
    if (rc == TP_OK && tp_cli_get(cli, "csv"))
        rc = tp_csv_write_history(tp_cli_get(cli, "csv"), &c.history, d);
    if (rc == TP_OK && tp_cli_get(cli, "json"))
        rc = write_json(tp_cli_get(cli, "json"), &s, &c, d);
    if (rc == TP_OK && tp_cli_get(cli, "plot"))
        rc = tp_coolout_figure(tp_cli_get(cli, "plot"), tp_session_title(&s), &c, d);
    if (rc == TP_OK && s.text)
        summary(s.text, &s, &c);
    tp_cooldown_clear(&c);
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_cmd_cool = {
    "cool",
    run_cool,
    "Simulate the cool-down: when the plate is safe to touch.",
    1,
    cool_opts,
    "Starts from the steady holding state at the setpoint (or --from TEMP, a uniform start),\n"
    "switches the heater off and reports when the working surface (its hottest cell on a\n"
    "gridded plate, the hottest node of a raw network) falls below the contact-burn\n"
    "thresholds of EN ISO 13732-1 for the top layer's material class at 1 s, 10 s and 1 min\n"
    "of contact, below each --to TEMP, and below the room + 5 K; with an enclosure, also\n"
    "when the chamber air does. The CSV has the history (as warmup's), --json the times,\n"
    "--plot the curves with the levels (docs/cool.md).",
    "tepid cool lab-hotplate-230v.yaml\n"
    "tepid cool workshop-bed-24v.yaml --to 35degC --plot cool.png\n"
    "tepid cool raw-five-node.yaml --from 90degC --json cool.json"};
