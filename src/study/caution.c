/* Safety cautions as records. The thresholds name their basis: EN ISO 13732-1 for contact
 * burns, the extra-low-voltage limit for mains, each material's service limit. */
#include "caution.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "heater.h"
#include "materials.h"

#define TP_ELV_LIMIT 50.0        /* V: above this the supply is treated as hazardous (extra-low
                                    voltage ends at 50 V AC, IEC 61140; from memory) */
#define TP_HIGH_CURRENT 10.0     /* A: connectors and wiring deserve a check above this
                                    (common practice, no source) */
#define TP_LIMIT_MARGIN 10.0     /* K: "near" a service limit */

static double supply_voltage(const tp_network *net)
{
    int i;
    double v = 0.0;
    for (i = 0; i < net->n_sources; i++)
        if (net->sources[i].kind == TP_SRC_ELECTRIC && net->sources[i].supply > v)
            v = net->sources[i].supply;
    return v;
}

/* A new record of `kind` at the end of the list. */
static tp_caution *add(tp_caution *out, int *n, tp_caution_kind kind)
{
    tp_caution *c = &out[(*n)++];
    memset(c, 0, sizeof *c);
    c->kind = kind;
    c->layer = -1;
    return c;
}

/* Layers near or past their material's service limit. */
static void service_limits(const tp_description *desc, const tp_network *net,
                           const tp_caution_exposure *ex, double hottest, tp_caution *out, int *n)
{
    size_t i;
    for (i = 0; i < desc->bed.n_layers && *n < TP_CAUTIONS_MAX - 3; i++) {
        const tp_material_spec *m = tp_materials_find(desc, desc->bed.layers[i].material);
        int node = tp_network_find_node(net, desc->bed.layers[i].id);
        double peak = ex->layer_peak   ? ex->layer_peak[i]
                      : ex->node_peak && node >= 0 ? ex->node_peak[node]
                                                   : hottest;
        if (m && isfinite(peak) && peak > m->max_temperature - TP_LIMIT_MARGIN) {
            tp_caution *c = add(out, n, TP_CAUTION_SERVICE_LIMIT);
            c->value[0] = m->max_temperature;
            c->value[1] = peak;
            c->layer = (int)i;
            snprintf(c->layer_id, sizeof c->layer_id, "%s", desc->bed.layers[i].id);
            snprintf(c->material, sizeof c->material, "%s", m->id);
        }
    }
}

/* A heater loaded past its type's power-density limit (heater.h: flexible silicone-rubber
 * pads and polyimide film), at the power full on from cold that every header states and
 * `budget` checks. */
static void power_density(const tp_description *desc, const tp_network *net, tp_caution *out,
                          int *n)
{
    const char *type;
    double watts, limit = tp_heater_density_limit(desc, &type);
    double area = tp_heater_area(desc);
    if (!type || *n >= TP_CAUTIONS_MAX - 2)
        return;
    tp_network_cold_start(net, NULL, &watts, NULL);
    if (isfinite(watts) && watts / area > limit) {
        tp_caution *c = add(out, n, TP_CAUTION_POWER_DENSITY);
        c->value[0] = watts / area;
        c->value[1] = limit;
        snprintf(c->material, sizeof c->material, "%s", type);
    }
}

int tp_caution_list(const tp_description *desc, const tp_network *net,
                    const tp_caution_exposure *ex, tp_caution out[TP_CAUTIONS_MAX])
{
    int n = 0;
    double v = supply_voltage(net);
    double hot = isfinite(ex->surface_max) ? ex->surface_max : ex->node_max;
    if (isfinite(hot) && hot > TP_CAUTION_BURN_LONG)
        add(out, &n, TP_CAUTION_HOT_SURFACE)->value[0] = hot;
    if (v > TP_ELV_LIMIT) {
        add(out, &n, TP_CAUTION_MAINS)->value[0] = v;
    } else if (isfinite(ex->current_max) && ex->current_max > TP_HIGH_CURRENT) {
        tp_caution *c = add(out, &n, TP_CAUTION_HIGH_CURRENT);
        c->value[0] = ex->current_max;
        c->value[1] = v;
    }
    if (desc && desc->form == TP_FORM_PHYSICAL) {
        service_limits(desc, net, ex, isfinite(ex->node_max) ? ex->node_max : hot, out, &n);
        if (desc->heater.present)
            power_density(desc, net, out, &n);
    }
    add(out, &n, TP_CAUTION_CUTOUT);
    return n;
}

int tp_caution_same(const tp_caution *a, const tp_caution *b)
{
    return a->kind == b->kind && a->layer == b->layer && strcmp(a->material, b->material) == 0;
}

int tp_caution_worse(const tp_caution *a, const tp_caution *b)
{
    int i;
    for (i = 0; i < TP_CAUTION_VALUES; i++)
        if (a->value[i] != b->value[i])
            return a->value[i] > b->value[i];
    return 0;
}

int tp_caution_compare(const void *pa, const void *pb)
{
    const tp_caution *a = pa, *b = pb;
    if (a->kind != b->kind)
        return a->kind < b->kind ? -1 : 1;
    if (a->layer != b->layer)
        return a->layer < b->layer ? -1 : 1;
    return strcmp(a->material, b->material);
}
