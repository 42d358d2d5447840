/* tepid explain: the assembled network as a table (and JSON): every node's capacity, every
 * link's law and coefficient, evaluated with every free node at --at TEMP. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "commands.h"
#include "json.h"
#include "report.h"
#include "session.h"
#include "units.h"

static const tp_opt explain_opts[] = {
    {"at", 0, 1, 0, 0, "TEMP", "evaluate temperature-dependent links with every free node at TEMP "
                               "(default: each node's initial temperature)"},
    {"json", 0, 1, 0, 1, "FILE", "write nodes and links as JSON (- for standard output)"},
    {NULL, 0, 0, 0, 0, NULL, NULL},
};

static tp_status write_json(const char *path, const tp_network *net, const double *t, tp_diag *d)
{
    cJSON *root = cJSON_CreateObject(), *nodes, *links;
    tp_status st;
    int i;
    if (!root)
        return TP_ERR_NOMEM;
    nodes = cJSON_AddArrayToObject(root, "nodes");
    links = cJSON_AddArrayToObject(root, "links");
    for (i = 0; nodes && i < net->n_nodes; i++) {
        cJSON *o = cJSON_CreateObject();
        if (!o)
            break;
        cJSON_AddStringToObject(o, "id", net->nodes[i].id);
        if (net->nodes[i].capacity > 0)
            tp_json_number(o, "capacity_J_per_K", net->nodes[i].capacity);
        else
            tp_json_number(o, "fixed_C", net->nodes[i].t0 - TP_KELVIN_0C);
        cJSON_AddItemToArray(nodes, o);
    }
    for (i = 0; links && i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        cJSON *o = cJSON_CreateObject(), *between;
        double h, g = tp_network_link_conductance(l, t[l->a], t[l->b], &h);
        if (!o)
            break;
        between = cJSON_AddArrayToObject(o, "between");
        if (between) {
            cJSON_AddItemToArray(between, cJSON_CreateString(net->nodes[l->a].id));
            cJSON_AddItemToArray(between, cJSON_CreateString(net->nodes[l->b].id));
        }
        cJSON_AddStringToObject(o, "law", tp_law_name(l->law));
        tp_json_number(o, "conductance_W_per_K", g);
        if (l->law == TP_LAW_CONVECTION) {
            tp_json_number(o, "h_W_per_m2K", h);
            tp_json_number(o, "area_m2", l->area);
        } else if (l->law == TP_LAW_RADIATION) {
            tp_json_number(o, "area_m2", l->area);
            tp_json_number(o, "emissivity", l->eps);
        }
        if (l->label[0])
            cJSON_AddStringToObject(o, "label", l->label);
        cJSON_AddItemToArray(links, o);
    }
    st = nodes && links ? tp_json_write(path, root, d) : TP_ERR_NOMEM;
    cJSON_Delete(root);
    return st;
}

static void print_table(FILE *fp, const tp_network *net, const double *t, int at_given)
{
    int i;
    fputs("  nodes:\n", fp);
    for (i = 0; i < net->n_nodes; i++) {
        const tp_net_node *n = &net->nodes[i];
        if (n->capacity > 0)
            fprintf(fp, "    %-16s capacity %12.4g J/K   initial %8.2f degC\n", n->id,
                    n->capacity, n->t0 - TP_KELVIN_0C);
        else
            fprintf(fp, "    %-16s fixed at %8.2f degC\n", n->id, n->t0 - TP_KELVIN_0C);
    }
    fprintf(fp, "  links%s:\n", at_given ? " (free nodes at --at)" : " (at initial temperatures)");
    fprintf(fp, "    %-28s %-12s %-24s %11s %11s %9s\n", "label", "law", "between", "G (W/K)",
            "h (W/m2K)", "area (m2)");
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        double h, g = tp_network_link_conductance(l, t[l->a], t[l->b], &h);
        char between[2 * TP_ID_MAX + 4];
        snprintf(between, sizeof between, "%s-%s", net->nodes[l->a].id, net->nodes[l->b].id);
        if (l->law == TP_LAW_CONDUCTION)
            fprintf(fp, "    %-28.28s %-12s %-24.24s %11.4g %11s %9s\n", l->label,
                    tp_law_name(l->law), between, g, "", "");
        else
            fprintf(fp, "    %-28.28s %-12s %-24.24s %11.4g %11.4g %9.4g%s\n", l->label,
                    l->law == TP_LAW_CONVECTION && l->correlated ? "convection*"
                                                                  : tp_law_name(l->law),
                    between, g, h, l->area, "");
    }
    fputs("  (* coefficient from a published correlation, evaluated at these temperatures; "
          "radiation shows the linearised coefficient)\n", fp);
    for (i = 0; i < net->n_sources; i++) {
        const tp_net_source *s = &net->sources[i];
        if (s->kind == TP_SRC_POWER)
            fprintf(fp, "  source %-10s %g W into '%s'", s->id, s->power,
                    net->nodes[s->nodes[0]].id);
        else
            fprintf(fp, "  source %-10s %g V across %g ohm (tempco %g 1/K at %.1f degC) into '%s'",
                    s->id, s->supply, s->r0, s->tempco, s->tref - TP_KELVIN_0C,
                    net->nodes[s->nodes[0]].id);
        if (s->max_duty < 1.0)
            fprintf(fp, ", duty limited to %g", s->max_duty);
        fputc('\n', fp);
    }
}

static tp_status run_explain(const tp_cli *cli, tp_diag *d)
{
    tp_session s;
    const char *at = tp_cli_get(cli, "at");
    double t_at = TP_UNSET, *t;
    tp_status rc;
    int i;
    if (at) {
        char msg[256];
        const char *hint;
        if (tp_units_parse(at, TP_DIM_TEMPERATURE, &t_at, msg, sizeof msg, &hint) != TP_OK) {
            tp_diag_error(d, (tp_loc){"--at", 1, 1}, NULL, hint, "%s", msg);
            return TP_ERR_USAGE;
        }
    }
    rc = tp_session_open(&s, cli, d);
    if (rc != TP_OK)
        return rc;
    t = malloc((size_t)s.net->n_nodes * sizeof *t);
    if (!t) {
        tp_session_close(&s);
        return TP_ERR_NOMEM;
    }
    for (i = 0; i < s.net->n_nodes; i++)
        t[i] = s.net->nodes[i].capacity > 0 && at ? t_at : s.net->nodes[i].t0;
    if (tp_cli_get(cli, "json"))
        rc = write_json(tp_cli_get(cli, "json"), s.net, t, d);
    if (rc == TP_OK && s.text) {
        tp_exposure ex = {TP_UNSET, TP_UNSET, TP_UNSET, NULL, NULL};
        fprintf(s.text, "tepid explain %s\n  ", cli->file);
        tp_report_network(s.text, s.net);
        print_table(s.text, s.net, t, at != NULL);
        ex.node_max = at ? t_at : TP_UNSET;
        tp_report_cautions(s.text, &s.desc, s.net, &ex);
    }
    free(t);
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_verb_explain = {
    "explain", run_explain, "Show the assembled network: nodes, links, laws and coefficients.",
    1, explain_opts,
    "Every node's capacity and every link's law and conductance, as tepid assembled them from\n"
    "the file. Convection coefficients from correlations and radiation (linearised, eps sigma\n"
    "(T^2 + Ts^2)(T + Ts)) depend on temperature: --at evaluates them with every free node at\n"
    "the given temperature.",
    "tepid explain lab-hotplate-230v.yaml --at 150degC\n"
    "tepid explain raw-five-node.yaml --json network.json"};
