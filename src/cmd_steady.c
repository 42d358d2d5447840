/* tepid steady: the equilibrium at full power and, with a controller, the holding point. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "commands.h"
#include "json.h"
#include "report.h"
#include "session.h"
#include "steady.h"

static const tp_opt steady_opts[] = {
    {"json", 0, 1, 0, 1, "FILE", "write nodes_C and power_W as JSON (- for standard output)"},
    {NULL, 0, 0, 0, 0, NULL, NULL},
};

static void print_temps(FILE *fp, const tp_network *net, const double *temps)
{
    int i;
    for (i = 0; i < net->n_nodes; i++)
        if (net->nodes[i].capacity > 0)
            fprintf(fp, "    %-16s %8.2f degC\n", net->nodes[i].id, temps[i] - TP_KELVIN_0C);
}

static tp_status write_json(const char *path, const tp_network *net, const tp_steady *s,
                            tp_diag *d)
{
    cJSON *root = cJSON_CreateObject(), *nodes;
    tp_status st;
    int i;
    if (!root)
        return TP_ERR_NOMEM;
    nodes = cJSON_AddObjectToObject(root, "nodes_C");
    for (i = 0; nodes && i < net->n_nodes; i++)
        if (net->nodes[i].capacity > 0)
            tp_json_number(nodes, net->nodes[i].id, s->temps[i] - TP_KELVIN_0C);
    tp_json_number(root, "power_W", s->power);
    if (net->has_control)
        tp_json_number(root, "duty", s->duty);
    st = nodes ? tp_json_write(path, root, d) : TP_ERR_NOMEM;
    cJSON_Delete(root);
    return st;
}

static tp_status run_steady(const tp_cli *cli, tp_diag *d)
{
    tp_session s;
    tp_steady full, hold;
    tp_status rc = tp_session_open(&s, cli, d);
    int holding;
    memset(&hold, 0, sizeof hold);
    if (rc != TP_OK)
        return rc;
    holding = s.net->has_control && isfinite(s.net->control.setpoint) &&
              (s.net->control.mode == TP_MODE_ONOFF || s.net->control.mode == TP_MODE_PID);
    rc = tp_steady_full(s.net, 1.0, &full, d);
    if (rc == TP_OK && holding)
        rc = tp_steady_hold(s.net, &hold, d);
    if (rc == TP_OK && tp_cli_get(cli, "json"))
        rc = write_json(tp_cli_get(cli, "json"), s.net, holding ? &hold : &full, d);
    if (rc == TP_OK && s.text) {
        tp_exposure ex = {TP_UNSET, TP_UNSET, TP_UNSET, NULL};
        int i;
        const double *shown = holding ? hold.temps : full.temps;
        fprintf(s.text, "tepid steady %s\n  ", cli->file);
        tp_report_network(s.text, s.net);
        fprintf(s.text, "  at full power (%.1f W):\n", full.power);
        print_temps(s.text, s.net, full.temps);
        if (holding) {
            fprintf(s.text, "  holding the setpoint %.1f degC: %.2f W at duty %.3f\n",
                    s.net->control.setpoint - TP_KELVIN_0C, hold.power, hold.duty);
            print_temps(s.text, s.net, hold.temps);
        }
        for (i = 0; i < s.net->n_nodes; i++)
            if (s.net->nodes[i].capacity > 0 && (!isfinite(ex.node_max) || shown[i] > ex.node_max))
                ex.node_max = shown[i];
        ex.surface_max = tp_network_surface(s.net, shown);
        ex.node_peak = shown;
        ex.current_max = tp_network_current(s.net, shown);
        tp_report_cautions(s.text, &s.desc, s.net, &ex);
    }
    tp_steady_clear(&full);
    tp_steady_clear(&hold);
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_verb_steady = {
    "steady", run_steady, "Find the steady state at full power and the holding power.", 1,
    steady_opts,
    "Solves for the equilibrium with KINSOL. With an on-off or PID controller, also finds the\n"
    "power that holds the sensor at the setpoint. Exits 1 when no steady state exists or the\n"
    "setpoint is out of reach at full power."};
