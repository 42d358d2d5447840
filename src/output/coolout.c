/* The words, JSON and figure of a cool-down. */
#include "coolout.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "plot.h"
#include "summary.h"
#include "units.h"

const char *tp_coolout_level_name(const tp_cooldown *c, const tp_cooldown_level *l, char *buf,
                                  size_t size)
{
    switch (l->kind) {
    case TP_COOL_BURN:
        if (l->contact >= 60.0)
            snprintf(buf, size, "burn threshold, %.0f min contact (%s)", l->contact / 60.0,
                     tp_cooldown_class_name(c->cls));
        else
            snprintf(buf, size, "burn threshold, %.0f s contact (%s)", l->contact,
                     tp_cooldown_class_name(c->cls));
        break;
    case TP_COOL_TO:
        snprintf(buf, size, "level asked for (--to)");
        break;
    case TP_COOL_ROOM:
        snprintf(buf, size, "room + %.0f K", TP_COOLDOWN_ROOM_MARGIN);
        break;
    case TP_COOL_AIR:
        snprintf(buf, size, "chamber air below room + %.0f K", TP_COOLDOWN_ROOM_MARGIN);
        break;
    }
    return buf;
}

const char tp_coolout_note[] =
    "The thresholds are for healthy adult skin on a surface that keeps its temperature during "
    "contact; children, the elderly and people with reduced sensation burn sooner. Handle hot "
    "parts with heat-resistant gloves and follow the practice of your workplace.";

void tp_coolout_note_text(FILE *fp)
{
    const char *p = tp_coolout_note;
    while (*p) {
        size_t len = strlen(p), cut = len;
        if (len > 90) {
            for (cut = 90; cut > 0 && p[cut] != ' '; cut--)
                ;
            if (cut == 0)
                cut = 90;
        }
        fprintf(fp, "  %.*s\n", (int)cut, p);
        p += cut;
        while (*p == ' ')
            p++;
    }
}

void tp_coolout_text(FILE *fp, const tp_cooldown *c)
{
    char name[96], t[32];
    int k;
    fprintf(fp, "  heater off at t = 0 from %s; touch surface %.1f degC\n",
            c->from_hold ? "the steady holding state" : "a uniform start", c->start - TP_KELVIN_0C);
    if (c->top_material)
        fprintf(fp, "  top layer: %s, burn thresholds of the %s class (EN ISO 13732-1)\n",
                c->top_material, tp_cooldown_class_name(c->cls));
    else
        fputs("  raw network: its hottest node, with the metal class's burn thresholds (the "
              "lowest;\n  EN ISO 13732-1)\n", fp);
    fprintf(fp, "\n  %-44s %10s  %s\n", "falls below", "level", "after switch-off");
    for (k = 0; k < c->n_levels; k++) {
        const tp_cooldown_level *l = &c->levels[k];
        tp_summary_duration(l->time, t, sizeof t);
        fprintf(fp, "  %-44s %5.1f degC  %s\n", tp_coolout_level_name(c, l, name, sizeof name),
                l->level - TP_KELVIN_0C,
                isfinite(l->time) ? t : "not within 24 h");
    }
}

void tp_coolout_json(cJSON *root, const tp_cooldown *c)
{
    static const char *const kinds[] = {"burn", "to", "room", "air"};
    cJSON *arr;
    int k;
    cJSON_AddStringToObject(root, "start", c->from_hold ? "holding" : "uniform");
    tp_json_number(root, "start_surface_C", c->start - TP_KELVIN_0C);
    cJSON_AddStringToObject(root, "material_class", tp_cooldown_class_name(c->cls));
    if (c->top_material)
        cJSON_AddStringToObject(root, "top_material", c->top_material);
    else
        cJSON_AddNullToObject(root, "top_material");
    arr = cJSON_AddArrayToObject(root, "levels");
    for (k = 0; arr && k < c->n_levels; k++) {
        const tp_cooldown_level *l = &c->levels[k];
        cJSON *o = cJSON_CreateObject();
        if (!o)
            break;
        cJSON_AddItemToArray(arr, o);
        cJSON_AddStringToObject(o, "kind", kinds[l->kind]);
        tp_json_number(o, "level_C", l->level - TP_KELVIN_0C);
        tp_json_number(o, "contact_s", l->contact);
        tp_json_number(o, "time_s", l->time);
    }
}

tp_status tp_coolout_figure(const char *path, const char *title, const tp_cooldown *c,
                            tp_diag *d)
{
    const tp_history *h = &c->history;
    long n = h->n, i;
    double *buf = malloc((size_t)(n > 0 ? n : 1) * 3 * sizeof *buf), *minutes, *touch, *air;
    tp_plot_series series[2];
    tp_plot_hline lines[TP_COOLDOWN_MAX_LEVELS];
    char text[TP_COOLDOWN_MAX_LEVELS][64];
    tp_plot_panel panel;
    tp_plot_chart chart;
    size_t ns = 0, nl = 0;
    int k, air_col = c->air_node >= 0 ? tp_history_column(h, c->air_node) : -1;
    tp_status st;
    if (!buf)
        return TP_ERR_NOMEM;
    minutes = buf;
    touch = buf + n;
    air = buf + 2 * n;
    for (i = 0; i < n; i++) {
        minutes[i] = h->t[i] / 60.0;
        touch[i] = c->touch[i] - TP_KELVIN_0C;
        air[i] = air_col >= 0 ? tp_history_temp(h, i, air_col) - TP_KELVIN_0C : TP_UNSET;
    }
    series[ns++] = (tp_plot_series){h->surface_max ? "surface, hottest cell"
                                    : isfinite(h->surface[0]) ? "surface (estimate)"
                                                              : "hottest node",
                                    minutes, touch, (size_t)n, 0, 0, 0};
    if (air_col >= 0)
        series[ns++] = (tp_plot_series){"chamber air", minutes, air, (size_t)n, 1, 0, 0};
    for (k = 0; k < c->n_levels; k++) {
        const tp_cooldown_level *l = &c->levels[k];
        if (l->kind == TP_COOL_AIR)
            continue;
        if (l->kind == TP_COOL_BURN)
            snprintf(text[nl], sizeof text[nl], l->contact >= 60.0 ? "burn, 1 min contact"
                                                : l->contact >= 10.0 ? "burn, 10 s contact"
                                                                     : "burn, 1 s contact");
        else if (l->kind == TP_COOL_TO)
            snprintf(text[nl], sizeof text[nl], "%.0f degC", l->level - TP_KELVIN_0C);
        else
            snprintf(text[nl], sizeof text[nl], "room + %.0f K", TP_COOLDOWN_ROOM_MARGIN);
        lines[nl] = (tp_plot_hline){text[nl], l->level - TP_KELVIN_0C};
        nl++;
    }
    panel = (tp_plot_panel){"temperature (degC)", NULL, series, ns, lines, nl, 1.0};
    chart = (tp_plot_chart){title, "time after switch-off (min)", &panel, 1, 0, 0};
    st = tp_plot_chart_write(path, &chart, d);
    free(buf);
    return st;
}
