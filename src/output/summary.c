/* Text summaries, and the words of the safety cautions: each names its basis (EN ISO 13732-1
 * for contact burns, the extra-low-voltage limit for mains, each material's service limit). */
#include "summary.h"

#include <math.h>
#include <string.h>

void tp_summary_duration(double s, char *buf, size_t size)
{
    if (!isfinite(s))
        snprintf(buf, size, "-");
    else if (s < 60.0) /* truncated to tenths as longer ones to seconds: 59.96 s is not 60.0 s */
        snprintf(buf, size, "%.1f s", floor(s * 10.0 + 1e-9) / 10.0);
    else if (s < 3600.0)
        snprintf(buf, size, "%d min %02d s", (int)(s / 60.0), (int)fmod(s, 60.0));
    else
        snprintf(buf, size, "%d h %02d min", (int)(s / 3600.0), (int)fmod(s / 60.0, 60.0));
}

void tp_summary_network_line(FILE *fp, const tp_network *net)
{
    fprintf(fp, "network: %d node%s (%d with capacity), %d link%s, %d source%s", net->n_nodes,
            net->n_nodes == 1 ? "" : "s", net->n_free, net->n_links, net->n_links == 1 ? "" : "s",
            net->n_sources, net->n_sources == 1 ? "" : "s");
    if (net->has_control) {
        const tp_control *c = &net->control;
        if (c->mode == TP_MODE_OFF)
            fprintf(fp, "; the controller holds '%s' off (mode off)", net->sources[c->source].id);
        else if (c->mode == TP_MODE_FULL)
            fprintf(fp, "; the controller keeps '%s' full on (mode full)",
                    net->sources[c->source].id);
        else
            fprintf(fp, "; %s control of '%s' reading '%s' at %.1f degC",
                    tp_description_mode_name(c->mode), net->sources[c->source].id,
                    net->nodes[c->sensor].id, c->setpoint - TP_KELVIN_0C);
    }
    fputc('\n', fp);
}

void tp_summary_conditions(FILE *fp, const tp_network *net)
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

void tp_summary_network(FILE *fp, const tp_network *net)
{
    tp_summary_network_line(fp, net);
    tp_summary_conditions(fp, net);
}

void tp_summary_caution_text(const tp_caution *c, char *buf, size_t size)
{
    switch (c->kind) {
    case TP_CAUTION_HOT_SURFACE:
        snprintf(buf, size,
                 "Hot surface: the plate reaches %.0f degC. Skin contact with bare metal above "
                 "about %.0f degC burns within a second, and above %.0f degC with long contact "
                 "(EN ISO 13732-1 contact-burn thresholds). Guard or mark the plate, and let it "
                 "cool before handling.",
                 c->value[0] - TP_KELVIN_0C, TP_CAUTION_BURN_SHORT - TP_KELVIN_0C,
                 TP_CAUTION_BURN_LONG - TP_KELVIN_0C);
        return;
    case TP_CAUTION_MAINS:
        snprintf(buf, size,
                 "Mains voltage (%.0f V): installation by a qualified person; protective earth "
                 "on every accessible metal part, a fuse and a residual-current device, and a "
                 "non-self-resetting thermal cut-out in series with the heater, independent of "
                 "the controller. Follow your local electrical codes.",
                 c->value[0]);
        return;
    case TP_CAUTION_HIGH_CURRENT:
        snprintf(buf, size,
                 "High current (%.1f A at %.0f V): rate connectors, wiring and the switch for "
                 "it with margin; a loose crimp at this current is a fire risk.",
                 c->value[0], c->value[1]);
        return;
    case TP_CAUTION_SERVICE_LIMIT:
        snprintf(buf, size,
                 "Service limit: layer '%s' (%s) is rated to about %.0f degC and reaches %.0f "
                 "degC here.",
                 c->layer_id, c->material, c->value[0] - TP_KELVIN_0C, c->value[1] - TP_KELVIN_0C);
        return;
    case TP_CAUTION_POWER_DENSITY:
        snprintf(buf, size,
                 "Heater power density %.2f W/cm2 in a %s layer: above about %.0f W/cm2 a "
                 "flexible heater must be fully bonded to the plate, or it overheats and "
                 "delaminates.",
                 c->value[0] * 1e-4, c->material, c->value[1] * 1e-4);
        return;
    case TP_CAUTION_CUTOUT:
        snprintf(buf, size,
                 "tepid models no independent over-temperature cut-out. Controller and firmware "
                 "checks do not replace one: fit a thermal fuse or one-shot thermostat on the "
                 "heated part, and never leave a heating plate unattended.");
        return;
    case TP_CAUTION_GUARD_CUTOUT:
        snprintf(buf, size,
                 "These thresholds supplement and never replace an independent hardware "
                 "cut-out: a stuck switch or a firmware fault defeats every check the "
                 "controller runs.");
        return;
    }
    snprintf(buf, size, "?");
}

void tp_summary_cautions(FILE *fp, const char *heading, const tp_caution *list, int n)
{
    char line[TP_SUMMARY_CAUTION_MAX];
    int i;
    fprintf(fp, "\n%s:\n", heading);
    for (i = 0; i < n; i++) {
        tp_summary_caution_text(&list[i], line, sizeof line);
        fprintf(fp, "  ! %s\n", line);
    }
}

/* The value less `offset`, scaled, as text (durations in their own units). */
static void metric_less(const tp_metricdef *m, double si, double offset, char *buf, size_t size)
{
    if (!isfinite(si))
        snprintf(buf, size, "-");
    else if (m->form == TP_FORM_DURATION)
        tp_summary_duration(si, buf, size);
    else
        snprintf(buf, size, "%.*f", m->decimals, (si - offset) * m->scale);
}

void tp_summary_metric(const tp_metricdef *m, double si, char *buf, size_t size)
{
    metric_less(m, si, m->offset, buf, size);
}

void tp_summary_metric_spread(const tp_metricdef *m, double si, char *buf, size_t size)
{
    metric_less(m, si, 0.0, buf, size); /* a spread is an interval: no offset */
}

void tp_summary_wire_pick(char *buf, size_t size, const tp_ampacity_pick *p, int awg)
{
    const char *why = p->limited_by && strcmp(p->limited_by, "both") == 0
                          ? "ampacity and drop decide"
                      : p->limited_by && strcmp(p->limited_by, "drop") == 0 ? "drop decides"
                                                                             : "ampacity decides";
    if (!isfinite(p->size))
        snprintf(buf, size, "none %s", awg ? "up to 4 AWG" : "up to 16 mm2");
    else if (awg)
        snprintf(buf, size, "%.0f AWG (%.1f A; %s)", p->size, p->ampacity, why);
    else
        snprintf(buf, size, "%.3g mm2 (%.1f A; %s)", p->size * 1e6, p->ampacity, why);
}
