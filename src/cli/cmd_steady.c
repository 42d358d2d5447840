/* tepid steady: the holding point and where its watts go, the highest reachable temperatures
 * at full power and at the firmware's duty limit, the power margin, and the reading-to-surface
 * offset; --room answers "what if the room is colder". */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "grid.h"
#include "json.h"
#include "session.h"
#include "steadyreport.h"
#include "summary.h"
#include "verbs.h"

static const tp_opt steady_opts[] = {
    {"json", 0, 1, 0, TP_OUT_FILE, "FILE", "write the results as JSON (- for standard output)"},
    {"room", 0, 1, 0, 0, "TEMP", "solve for this room temperature instead (e.g. 12degC)"},
    TP_OPT_SET,
    TP_OPT_QUIET,
    TP_OPT_END,
};

static double surface_or_nan(const tp_network *net, const double *t)
{
    return tp_network_surface(net, t);
}

static void print_nodes(FILE *fp, const tp_network *net, const double *t)
{
    int i;
    if (net->grid) {
        /* A gridded plate: each layer's mean and extremes, then the nodes outside the grid. */
        const tp_net_grid *g = net->grid;
        for (i = 0; i < g->n_layers; i++) {
            double mean, lo, hi;
            tp_grid_layer_stats(net, i, t, &mean, &lo, &hi);
            fprintf(fp, "    %-16s %8.2f degC (cells %.2f to %.2f)\n", g->layer_id[i],
                    mean - TP_KELVIN_0C, lo - TP_KELVIN_0C, hi - TP_KELVIN_0C);
        }
        for (i = 0; i < net->n_nodes; i++)
            if (net->nodes[i].capacity > 0 && g->from[i] >= g->n_layers)
                fprintf(fp, "    %-16s %8.2f degC\n", net->nodes[i].id, t[i] - TP_KELVIN_0C);
        return;
    }
    for (i = 0; i < net->n_nodes; i++)
        if (net->nodes[i].capacity > 0)
            fprintf(fp, "    %-16s %8.2f degC\n", net->nodes[i].id, t[i] - TP_KELVIN_0C);
}

/* The working-surface map of a gridded plate at the state shown. */
static void print_map(FILE *fp, const tp_network *net, const tp_surfacemap_stats *st)
{
    const tp_net_grid *g = net->grid;
    if (st->cells == 0)
        return;
    fprintf(fp, "  working surface (%d x %d cells): mean %.2f, coldest %.2f at %.1f, %.1f mm, "
                "hottest %.2f at %.1f, %.1f mm degC\n", g->nx, g->ny,
            st->mean - TP_KELVIN_0C, st->min - TP_KELVIN_0C, st->min_x * 1e3, st->min_y * 1e3,
            st->max - TP_KELVIN_0C, st->max_x * 1e3, st->max_y * 1e3);
    fprintf(fp, "    spread %.2f K, standard deviation %.2f K, centre - corners %+.2f K\n",
            st->spread, st->std, st->centre_corner);
}

static void print_reach(FILE *fp, const tp_network *net, const char *what, const tp_steady *s)
{
    double surf = surface_or_nan(net, s->temps);
    fprintf(fp, "  %-26s %.1f W:", what, s->power);
    if (net->has_control)
        fprintf(fp, " reading %.1f degC", s->reading - TP_KELVIN_0C);
    if (isfinite(surf))
        fprintf(fp, ", surface %.1f degC", surf - TP_KELVIN_0C);
    fputc('\n', fp);
}

static void summary(FILE *fp, const tp_session *s, const tp_steadyreport *a)
{
    const tp_network *net = s->net;
    const tp_steady *shown = a->shown;
    double total = a->plate_loss, surf = surface_or_nan(net, shown->temps);
    tp_caution cautions[TP_CAUTIONS_MAX];
    int p;
    fprintf(fp, "tepid steady %s%s%s\n  ", s->cli->file, s->desc.title[0] ? ": " : "",
            s->desc.title);
    tp_summary_network(fp, net);
    if (a->holding) {
        fprintf(fp, "\n  holding %.1f degC (reading): %.2f W at duty %.3f\n",
                net->control.setpoint - TP_KELVIN_0C, a->hold.power, a->hold.duty);
        fprintf(fp, "  power margin (available at max duty / holding): %.2f%s\n", a->margin,
                a->margin < TP_MARGIN_LOW ? " (low: see the warning)" : "");
        if (isfinite(surf))
            fprintf(fp, "  working surface %.2f degC: the reading is %+.2f K from the surface\n",
                    surf - TP_KELVIN_0C, a->hold.reading - surf);
        if (a->hold.wire > 0)
            fprintf(fp, "  wiring loss %.2f W (the series path: docs/control.md)\n", a->hold.wire);
    }
    fprintf(fp, "\n  where the %s goes:\n", a->holding ? "holding power" : "full power");
    for (p = TP_PATH_INTERNAL + 1; p < TP_PATH_COUNT; p++) {
        if (p == TP_PATH_WALLS || fabs(a->flows.path[p]) < 1e-12)
            continue;
        fprintf(fp, "    %-18s %8.2f W %6.1f %%\n", tp_network_loss_path_name((tp_loss_path)p),
                a->flows.path[p], total != 0 ? 100.0 * a->flows.path[p] / total : 0.0);
    }
    fprintf(fp, "    %-18s %8.2f W\n", "total", total);
    if (fabs(a->flows.path[TP_PATH_WALLS]) > 0)
        fprintf(fp, "    (%.2f W leave the enclosure through its walls)\n",
                a->flows.path[TP_PATH_WALLS]);
    fputs("\n  steady temperatures:\n", fp);
    print_nodes(fp, net, shown->temps);
    if (net->grid)
        print_map(fp, net, &a->map);
    fputs("\n  highest reachable:\n", fp);
    if (a->max_duty < 1.0)
        print_reach(fp, net, "at the duty limit", &a->limit);
    print_reach(fp, net, "at full power", &a->full);
    tp_summary_cautions(fp, "cautions", cautions,
                        tp_steadyreport_cautions(&s->desc, net, a, cautions));
}

/* The highest reachable temperatures at one duty: {reading, surface, nodes{}} in degC; the
 * power and duty beside it as <name>_power_W and <name>_duty. */
static void put_reach(cJSON *root, const char *name, const tp_network *net, const tp_steady *s)
{
    cJSON *o = cJSON_AddObjectToObject(root, name), *nodes;
    char key[64];
    int i;
    if (!o)
        return;
    snprintf(key, sizeof key, "%s_power_W", name);
    tp_json_number(root, key, s->power);
    snprintf(key, sizeof key, "%s_duty", name);
    tp_json_number(root, key, s->duty);
    /* Keys that do not apply (no controller, no working surface in the raw form) are left
     * out rather than written as null. */
    if (net->has_control)
        tp_json_number(o, "reading", s->reading - TP_KELVIN_0C);
    if (isfinite(surface_or_nan(net, s->temps)))
        tp_json_number(o, "surface", surface_or_nan(net, s->temps) - TP_KELVIN_0C);
    nodes = cJSON_AddObjectToObject(o, "nodes");
    for (i = 0; nodes && i < net->n_nodes; i++)
        if (net->nodes[i].capacity > 0)
            tp_json_number(nodes, net->nodes[i].id, s->temps[i] - TP_KELVIN_0C);
}

static tp_status write_json(const char *path, const tp_network *net, const tp_steadyreport *a,
                            tp_diag *d)
{
    const tp_steady *shown = a->shown;
    cJSON *root = cJSON_CreateObject(), *nodes, *losses, *walls = NULL;
    tp_status st;
    int i, p;
    if (!root)
        return TP_ERR_NOMEM;
    tp_json_conditions(root, net);
    nodes = cJSON_AddObjectToObject(root, "nodes_C");
    for (i = 0; nodes && i < net->n_nodes; i++)
        if (net->nodes[i].capacity > 0)
            tp_json_number(nodes, net->nodes[i].id, shown->temps[i] - TP_KELVIN_0C);
    tp_json_number(root, "power_W", shown->power);
    if (net->has_control)
        tp_json_number(root, "duty", shown->duty);
    /* What leaves the plate (its paths sum to power_W), and apart from it what leaves the
     * enclosure (the same watts again, through its walls). */
    losses = cJSON_AddObjectToObject(root, "losses_W");
    for (p = TP_PATH_INTERNAL + 1; losses && p < TP_PATH_COUNT; p++)
        if (p != TP_PATH_WALLS && fabs(a->flows.path[p]) > 0)
            tp_json_number(losses, tp_network_loss_path_name((tp_loss_path)p), a->flows.path[p]);
    if (fabs(a->flows.path[TP_PATH_WALLS]) > 0) {
        walls = cJSON_AddObjectToObject(root, "enclosure_losses_W");
        if (walls)
            tp_json_number(walls, tp_network_loss_path_name(TP_PATH_WALLS),
                           a->flows.path[TP_PATH_WALLS]);
    }
    put_reach(root, "max_C", net, &a->limit);
    if (a->max_duty < 1.0)
        put_reach(root, "max_full_duty_C", net, &a->full);
    if (a->holding) {
        double surf = surface_or_nan(net, a->hold.temps);
        tp_json_number(root, "margin", a->margin);
        cJSON_AddBoolToObject(root, "margin_low", a->margin < TP_MARGIN_LOW);
        tp_json_number(root, "margin_advised", TP_MARGIN_LOW);
        if (isfinite(surf)) {
            tp_json_number(root, "surface_C", surf - TP_KELVIN_0C);
            tp_json_number(root, "offset_K", a->hold.reading - surf);
        }
        tp_json_number(root, "wiring_loss_W", a->hold.wire);
    }
    st = nodes && losses && (walls || !(fabs(a->flows.path[TP_PATH_WALLS]) > 0))
             ? tp_json_write(path, root, d)
             : TP_ERR_NOMEM;
    cJSON_Delete(root);
    return st;
}

/* Where the setpoint is written, for a warning about it. */
static tp_loc setpoint_at(const tp_session *s)
{
    return tp_yamltree_nearest(s->doc, "control.setpoint");
}

static tp_status run_steady(const tp_cli *cli, tp_diag *d)
{
    tp_session s;
    tp_steadyreport a;
    tp_status rc;
    rc = tp_session_open_room(&s, cli, tp_cli_get(cli, "room"), d);
    if (rc != TP_OK)
        return rc;
    rc = tp_steadyreport_run(s.net, &a, d);
    if (rc == TP_OK && a.holding && a.margin < TP_MARGIN_LOW)
        tp_diag_warn(d, setpoint_at(&s), "control.setpoint",
                     "a stronger heater, better insulation, or a lower setpoint",
                     "the power margin is %.2f (%.1f W to hold %.1f degC, %.1f W available at "
                     "the duty limit), below %.1f: little in reserve to recover from a "
                     "disturbance, and a slow warm-up (docs/sizing.md)",
                     a.margin, a.hold.power, s.net->control.setpoint - TP_KELVIN_0C,
                     a.hold.power * a.margin, TP_MARGIN_LOW);
    if (rc == TP_OK && tp_cli_get(cli, "json"))
        rc = write_json(tp_cli_get(cli, "json"), s.net, &a, d);
    if (rc == TP_OK && s.text)
        summary(s.text, &s, &a);
    tp_steadyreport_clear(&a);
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_cmd_steady = {
    "steady",
    run_steady,
    "Holding power, where the watts go, and the highest reachable "
    "temperatures.",
    1,
    steady_opts,
    "Solves the steady states with KINSOL: the holding point (the duty that keeps the reading\n"
    "at the setpoint) with its loss split by path, and the equilibria at full power and at\n"
    "heater.max_duty. Without a controller, the full-power state. --room solves for another\n"
    "room temperature. Exits 1 when no steady state exists or the setpoint is out of reach.",
    "tepid steady enclosed-printer.yaml\n"
    "tepid steady enclosed-printer.yaml --room 12degC --json steady.json"};
