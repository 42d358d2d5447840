/* tepid explain: the assembled network as a table (and JSON): every node's capacity, every
 * link's law and coefficient, evaluated at the steady holding state (the full-power one without
 * a setpoint to hold), or with every free node at --at TEMP. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "json.h"
#include "session.h"
#include "steady.h"
#include "summary.h"
#include "units.h"
#include "verbs.h"

static const tp_opt explain_opts[] = {
    {"at", 0, 1, 0, 0, "TEMP", "evaluate temperature-dependent links with every free node at TEMP "
                               "(default: the steady holding state)"},
    {"json", 0, 1, 0, 1, "FILE", "write nodes and links as JSON (- for standard output)"},
    TP_OPT_SET,
    TP_OPT_QUIET,
    TP_OPT_END,
};

/* The state the links are evaluated at. */
typedef struct state {
    const char *kind;  /* "holding", "full_power", "uniform" (--at), "initial" */
    double *t;         /* n_nodes, K */
    double duty, power; /* the heater's, at a steady state (NaN otherwise) */
    double at;         /* K, the --at temperature (NaN otherwise) */
    char note[256];    /* why a steady state could not be shown (empty otherwise) */
} state;

/* The text of a message without its "tepid: key.path: " head. */
static const char *message_text(const char *msg)
{
    const char *p;
    if (strncmp(msg, "tepid: ", 7) != 0)
        return msg;
    msg += 7;
    p = strstr(msg, ": ");
    return p && !memchr(msg, ' ', (size_t)(p - msg)) ? p + 2 : msg;
}

/* Length of the first line of a message, at most 200 characters. */
static int first_line(const char *msg)
{
    size_t n = strcspn(msg, "\n");
    return n > 200 ? 200 : (int)n;
}

/* The last message of a diagnostics log (messages start at lines without leading blanks). */
static const char *last_message(const char *log)
{
    const char *p = log, *last = log;
    for (; *p; p++)
        if (p[0] == '\n' && p[1] && p[1] != ' ')
            last = p + 1;
    return last;
}

/* The state to show: --at, else the holding point, else the full-power steady state, else
 * (no steady state exists) the initial temperatures, with the reason in st->note. */
static tp_status find_state(tp_network *net, double t_at, state *st)
{
    tp_steady ss;
    tp_diag quiet;
    tp_status rc = TP_ERR_SOLVER;
    int i;
    memset(&ss, 0, sizeof ss);
    st->t = malloc((size_t)net->n_nodes * sizeof *st->t);
    if (!st->t)
        return TP_ERR_NOMEM;
    st->duty = st->power = TP_UNSET;
    st->at = t_at;
    st->note[0] = '\0';
    if (isfinite(t_at)) {
        st->kind = "uniform";
        for (i = 0; i < net->n_nodes; i++)
            st->t[i] = net->nodes[i].capacity > 0 ? t_at : net->nodes[i].t0;
        return TP_OK;
    }
    tp_diag_init(&quiet, NULL);
    if (tp_network_holds(net)) {
        rc = tp_steady_hold(net, &ss, &quiet);
        st->kind = "holding";
        if (rc != TP_OK)
            tp_steady_clear(&ss);
    }
    if (rc == TP_ERR_NOMEM)
        return rc;
    if (rc != TP_OK) {
        if (tp_network_holds(net))
            snprintf(st->note, sizeof st->note, "no holding point: %.*s",
                     first_line(message_text(quiet.log)), message_text(quiet.log));
        else if (net->has_control && net->control.mode == TP_MODE_OFF)
            snprintf(st->note, sizeof st->note, "the controller holds the heater off (mode off); "
                                                "shown as if it were full on");
        rc = tp_steady_full(net, 1.0, &ss, &quiet);
        st->kind = "full_power";
    }
    if (rc == TP_ERR_NOMEM) {
        tp_steady_clear(&ss);
        return rc;
    }
    if (rc != TP_OK) {
        tp_steady_clear(&ss);
        snprintf(st->note, sizeof st->note, "%.*s",
                 first_line(message_text(last_message(quiet.log))),
                 message_text(last_message(quiet.log)));
        st->kind = "initial";
        for (i = 0; i < net->n_nodes; i++)
            st->t[i] = net->nodes[i].t0;
        return TP_OK;
    }
    memcpy(st->t, ss.temps, (size_t)net->n_nodes * sizeof *st->t);
    st->duty = ss.duty;
    st->power = ss.power;
    tp_steady_clear(&ss);
    return TP_OK;
}

/* The header line saying which state the links are shown at. */
static void print_state(FILE *fp, const tp_network *net, const state *st)
{
    if (strcmp(st->kind, "uniform") == 0)
        fprintf(fp, "  links with every free node at %.2f degC (--at)\n", st->at - TP_KELVIN_0C);
    else if (strcmp(st->kind, "holding") == 0)
        fprintf(fp, "  links at the steady holding state: reading %.2f degC, heater %.1f W at duty "
                    "%.3f (--at TEMP for another state)\n",
                net->control.setpoint - TP_KELVIN_0C, st->power, st->duty);
    else if (strcmp(st->kind, "full_power") == 0)
        fprintf(fp, "  links at the full-power steady state: heater %.1f W at duty %.3f (%s; --at "
                    "TEMP for another state)\n", st->power, st->duty,
                st->note[0] ? st->note : "no setpoint to hold");
    else
        fprintf(fp, "  links at the initial temperatures (%s; --at TEMP for another state)\n",
                st->note);
}

static tp_status write_json(const char *path, const tp_network *net, const state *sta,
                            tp_diag *d)
{
    cJSON *root = cJSON_CreateObject(), *nodes, *links, *so;
    const double *t = sta->t;
    tp_status st;
    int i;
    if (!root)
        return TP_ERR_NOMEM;
    tp_json_conditions(root, net);
    so = cJSON_AddObjectToObject(root, "state");
    if (so) {
        cJSON_AddStringToObject(so, "kind", sta->kind);
        tp_json_number(so, "at_C", sta->at - TP_KELVIN_0C);
        tp_json_number(so, "heater_power_W", sta->power);
        tp_json_number(so, "heater_duty", sta->duty);
        if (sta->note[0])
            cJSON_AddStringToObject(so, "note", sta->note);
    }
    nodes = cJSON_AddArrayToObject(root, "nodes");
    links = cJSON_AddArrayToObject(root, "links");
    for (i = 0; nodes && i < net->n_nodes; i++) {
        cJSON *o = cJSON_CreateObject();
        if (!o)
            break;
        cJSON_AddStringToObject(o, "id", net->nodes[i].id);
        if (net->nodes[i].capacity > 0) {
            tp_json_number(o, "capacity_J_per_K", net->nodes[i].capacity);
            tp_json_number(o, "temperature_C", t[i] - TP_KELVIN_0C);
        } else {
            tp_json_number(o, "fixed_C", net->nodes[i].t0 - TP_KELVIN_0C);
        }
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
        cJSON_AddStringToObject(o, "law", tp_network_law_name(l->law));
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
    st = nodes && links && so ? tp_json_write(path, root, d) : TP_ERR_NOMEM;
    cJSON_Delete(root);
    return st;
}

static void print_table(FILE *fp, const tp_network *net, const double *t)
{
    int i;
    fputs("  nodes:\n", fp);
    for (i = 0; i < net->n_nodes; i++) {
        const tp_net_node *n = &net->nodes[i];
        if (n->capacity > 0)
            fprintf(fp, "    %-16s capacity %12.4g J/K   initial %8.2f degC   shown at %8.2f "
                        "degC\n", n->id, n->capacity, n->t0 - TP_KELVIN_0C, t[i] - TP_KELVIN_0C);
        else
            fprintf(fp, "    %-16s fixed at %8.2f degC\n", n->id, n->t0 - TP_KELVIN_0C);
    }
    fputs("  links:\n", fp);
    fprintf(fp, "    %-28s %-12s %-24s %11s %11s %9s\n", "label", "law", "between", "G (W/K)",
            "h (W/m2K)", "area (m2)");
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        double h, g = tp_network_link_conductance(l, t[l->a], t[l->b], &h);
        char between[2 * TP_ID_MAX + 4];
        snprintf(between, sizeof between, "%s-%s", net->nodes[l->a].id, net->nodes[l->b].id);
        if (l->law == TP_LAW_CONDUCTION)
            fprintf(fp, "    %-28.28s %-12s %-24.24s %11.4g %11s %9s\n", l->label,
                    tp_network_law_name(l->law), between, g, "", "");
        else
            fprintf(fp, "    %-28.28s %-12s %-24.24s %11.4g %11.4g %9.4g%s\n", l->label,
                    l->law == TP_LAW_CONVECTION && l->correlated ? "convection*"
                                                                 : tp_network_law_name(l->law),
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
    double t_at = TP_UNSET;
    state sta;
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
    memset(&sta, 0, sizeof sta);
    rc = find_state(s.net, t_at, &sta);
    if (rc == TP_OK && tp_cli_get(cli, "json"))
        rc = write_json(tp_cli_get(cli, "json"), s.net, &sta, d);
    if (rc == TP_OK && s.text) {
        tp_caution_exposure ex = TP_CAUTION_UNSEEN;
        tp_caution cautions[TP_CAUTIONS_MAX];
        fprintf(s.text, "tepid explain %s\n  ", cli->file);
        tp_summary_network(s.text, s.net);
        print_state(s.text, s.net, &sta);
        print_table(s.text, s.net, sta.t);
        /* The cautions of the state shown (none for the initial temperatures). */
        if (strcmp(sta.kind, "initial") != 0) {
            for (i = 0; i < s.net->n_nodes; i++)
                if (s.net->nodes[i].capacity > 0 && !(sta.t[i] <= ex.node_max))
                    ex.node_max = sta.t[i];
            ex.surface_max = tp_network_surface(s.net, sta.t);
        }
        tp_summary_cautions(s.text, "cautions", cautions,
                            tp_caution_list(&s.desc, s.net, &ex, cautions));
    }
    free(sta.t);
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_cmd_explain = {
    "explain",
    run_explain,
    "Show the assembled network: nodes, links, laws and coefficients.",
    1,
    explain_opts,
    "Every node's capacity and every link's law and conductance, as tepid assembled them from\n"
    "the file. Convection coefficients from correlations and radiation (linearised, eps sigma\n"
    "(T^2 + Ts^2)(T + Ts)) depend on temperature. They are shown at the steady holding state\n"
    "(KINSOL), or at the full-power steady state when no setpoint is held (or it is out of\n"
    "reach); --at evaluates them with every free node at the given temperature instead. The\n"
    "header says which state is shown.",
    "tepid explain lab-hotplate-230v.yaml --at 150degC\n"
    "tepid explain raw-five-node.yaml --json network.json"};
