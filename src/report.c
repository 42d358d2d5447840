/* Text summaries and safety cautions. The cautions name their basis: EN ISO 13732-1 for
 * contact burns, the extra-low-voltage limit for mains, each material's service limit. */
#include "report.h"

#include <math.h>
#include <string.h>

#include "heater.h"
#include "materials.h"

#define TP_BURN_LONG 316.15      /* K, 43 degC: burn threshold for contact of 8 h and longer
                                    (EN ISO 13732-1 Table 1, from memory) */
#define TP_BURN_SHORT 338.15     /* K, 65 degC: about 1 s contact with bare metal burns
                                    (EN ISO 13732-1 Fig. 1, from memory) */
#define TP_ELV_LIMIT 50.0        /* V: above this the supply is treated as hazardous (extra-low
                                    voltage ends at 50 V AC, IEC 61140; from memory) */
#define TP_HIGH_CURRENT 10.0     /* A: connectors and wiring deserve a check above this
                                    (common practice, no source) */
#define TP_LIMIT_MARGIN 10.0     /* K: "near" a service limit */

void tp_fmt_duration(double s, char *buf, size_t size)
{
    if (!isfinite(s))
        snprintf(buf, size, "-");
    else if (s < 60.0)
        snprintf(buf, size, "%.1f s", s);
    else if (s < 3600.0)
        snprintf(buf, size, "%d min %02d s", (int)(s / 60.0), (int)fmod(s, 60.0));
    else
        snprintf(buf, size, "%d h %02d min", (int)(s / 3600.0), (int)fmod(s / 60.0, 60.0));
}

void tp_report_network_line(FILE *fp, const tp_network *net)
{
    fprintf(fp, "network: %d nodes (%d with capacity), %d links, %d source%s", net->n_nodes,
            net->n_free, net->n_links, net->n_sources, net->n_sources == 1 ? "" : "s");
    if (net->has_control) {
        const tp_control *c = &net->control;
        if (c->mode == TP_MODE_OFF)
            fprintf(fp, "; the controller holds '%s' off (mode off)", net->sources[c->source].id);
        else if (c->mode == TP_MODE_FULL)
            fprintf(fp, "; the controller keeps '%s' full on (mode full)",
                    net->sources[c->source].id);
        else
            fprintf(fp, "; %s control of '%s' reading '%s' at %.1f degC", tp_mode_name(c->mode),
                    net->sources[c->source].id, net->nodes[c->sensor].id,
                    c->setpoint - TP_KELVIN_0C);
    }
    fputc('\n', fp);
}

void tp_report_conditions(FILE *fp, const tp_network *net)
{
    double room = tp_network_room(net), amps, watts;
    int src = tp_network_cold_start(net, &amps, &watts, NULL), i, shown = 0;
    fputs("  ", fp);
    if (isfinite(room)) {
        fprintf(fp, "room %.1f degC", room - TP_KELVIN_0C);
    } else {
        fputs("boundaries", fp);
        for (i = 0; i < net->n_nodes; i++)
            if (net->nodes[i].capacity <= 0)
                fprintf(fp, "%s %s %.1f degC", shown++ ? "," : "", net->nodes[i].id,
                        net->nodes[i].t0 - TP_KELVIN_0C);
        if (!shown)
            fputs(" none", fp);
    }
    if (src >= 0) {
        const tp_net_source *s = &net->sources[src];
        fprintf(fp, "; heater");
        if (strcmp(s->id, "heater") != 0)
            fprintf(fp, " '%s'", s->id);
        if (s->kind == TP_SRC_ELECTRIC) {
            if (s->rated_power > 0)
                fprintf(fp, " %.1f W at %.1f V rated;", s->rated_power, s->rated_voltage);
            fprintf(fp, " %.1f V across %.3f ohm", s->supply, s->r0);
            if (s->r_series > 0)
                fprintf(fp, " and a %.1f mohm series path", 1e3 * s->r_series);
            fprintf(fp, ": %.2f A, %.1f W full on from cold", amps, watts);
        } else {
            fprintf(fp, " %.1f W (constant power)", watts);
        }
        if (s->max_duty < 1.0)
            fprintf(fp, ", duty limited to %.2f", s->max_duty);
    } else {
        fputs("; no heater", fp);
    }
    fputc('\n', fp);
}

void tp_report_network(FILE *fp, const tp_network *net)
{
    tp_report_network_line(fp, net);
    tp_report_conditions(fp, net);
}

static double supply_voltage(const tp_network *net)
{
    int i;
    double v = 0.0;
    for (i = 0; i < net->n_sources; i++)
        if (net->sources[i].kind == TP_SRC_ELECTRIC && net->sources[i].supply > v)
            v = net->sources[i].supply;
    return v;
}

int tp_report_caution_lines(const tp_desc *desc, const tp_network *net, const tp_exposure *ex,
                            char lines[][TP_CAUTION_MAX])
{
    int n = 0;
    double v = supply_voltage(net);
    double hot = isfinite(ex->surface_max) ? ex->surface_max : ex->node_max;
    if (isfinite(hot) && hot > TP_BURN_LONG) {
        snprintf(lines[n++], TP_CAUTION_MAX,
                 "Hot surface: the plate reaches %.0f degC. Skin contact with bare metal above "
                 "about %.0f degC burns within a second, and above %.0f degC with long contact "
                 "(EN ISO 13732-1 contact-burn thresholds). Guard or mark the plate, and let it "
                 "cool before handling.", hot - TP_KELVIN_0C, TP_BURN_SHORT - TP_KELVIN_0C,
                 TP_BURN_LONG - TP_KELVIN_0C);
    }
    if (v > TP_ELV_LIMIT) {
        snprintf(lines[n++], TP_CAUTION_MAX,
                 "Mains voltage (%.0f V): installation by a qualified person; protective earth "
                 "on every accessible metal part, a fuse and a residual-current device, and a "
                 "non-self-resetting thermal cut-out in series with the heater, independent of "
                 "the controller. Follow your local electrical codes.", v);
    } else if (isfinite(ex->current_max) && ex->current_max > TP_HIGH_CURRENT) {
        snprintf(lines[n++], TP_CAUTION_MAX,
                 "High current (%.1f A at %.0f V): rate connectors, wiring and the switch for "
                 "it with margin; a loose crimp at this current is a fire risk.",
                 ex->current_max, v);
    }
    if (desc && desc->form == TP_FORM_PHYSICAL) {
        size_t i;
        double hottest = isfinite(ex->node_max) ? ex->node_max : hot;
        for (i = 0; i < desc->bed.n_layers && n < TP_CAUTIONS_MAX - 2; i++) {
            const tp_material_spec *m = tp_materials_find(desc, desc->bed.layers[i].material);
            int node = tp_network_find_node(net, desc->bed.layers[i].id);
            double peak = ex->layer_peak   ? ex->layer_peak[i]
                          : ex->node_peak && node >= 0 ? ex->node_peak[node]
                                                       : hottest;
            if (m && isfinite(peak) && peak > m->max_temperature - TP_LIMIT_MARGIN) {
                snprintf(lines[n++], TP_CAUTION_MAX,
                         "Service limit: layer '%s' (%s) is rated to about %.0f degC and "
                         "reaches %.0f degC here.", desc->bed.layers[i].id, m->id,
                         m->max_temperature - TP_KELVIN_0C, peak - TP_KELVIN_0C);
            }
        }
        if (desc->heater.present && n < TP_CAUTIONS_MAX - 1) {
            /* The power full on from cold, as every header states and `budget` checks. */
            const char *type;
            double watts, limit = tp_heater_density_limit(desc, &type);
            double area = tp_heater_area(desc);
            tp_network_cold_start(net, NULL, &watts, NULL);
            if (type && isfinite(watts) && watts / area > limit)
                snprintf(lines[n++], TP_CAUTION_MAX,
                         "Heater power density %.2f W/cm2 in a %s layer: above about %.0f W/cm2 "
                         "a flexible heater must be fully bonded to the plate, or it "
                         "overheats and delaminates.", watts / area * 1e-4, type, limit * 1e-4);
        }
    }
    snprintf(lines[n++], TP_CAUTION_MAX,
             "tepid models no independent over-temperature cut-out. Controller and firmware "
             "checks do not replace one: fit a thermal fuse or one-shot thermostat on the heated "
             "part, and never leave a heating plate unattended.");
    return n;
}

void tp_report_cautions(FILE *fp, const tp_desc *desc, const tp_network *net,
                        const tp_exposure *ex)
{
    char lines[TP_CAUTIONS_MAX][TP_CAUTION_MAX];
    int i, n = tp_report_caution_lines(desc, net, ex, lines);
    fputs("\ncautions:\n", fp);
    for (i = 0; i < n; i++)
        fprintf(fp, "  ! %s\n", lines[i]);
}
