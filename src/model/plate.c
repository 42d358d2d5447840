/* Lowering of the physical plate description to the network.
 *
 * Nodes: one per layer (C = rho c_p A t, A from the layer's own size, centred on the bed),
 * `sensor`, `air` and `walls` with an enclosure, and the fixed `room`.
 * Links:
 *   layer i to layer i+1   G = 1 / (t_i/(2 k_i A) + 1/(h_c A) + t_j/(2 k_j A)), A = overlap,
 *                          h_c the upper layer's `contact` (absent: bonded, no term);
 *   exposed faces          natural convection (hot face up / down, Incropera 7th ed.
 *                          Eqs. 9.30-9.32, L = A/P) mixed with forced flow on the top face
 *                          (Eqs. 7.30/7.38, Churchill 1977 n = 3), and gray radiation;
 *   edges                  Churchill-Chu vertical plate (Eq. 9.26), height = stack thickness;
 *   mounts                 G = mounts.conductance to the room (or the enclosure walls);
 *   closed gaps            a layer smaller than both neighbours leaves a gap of its thickness:
 *                          still-air conduction k_air A / t plus parallel-plate radiation,
 *                          and the layer's edges, when it fits inside both, face the gap;
 *   enclosure              faces convect to `air`, radiate to `walls` (body in an enclosure,
 *                          Incropera Eq. 13.24 form); air to walls by Churchill-Chu on the wall
 *                          area; walls to room G = U A.
 * Exposed area of a face: the whole top of the top layer and bottom of the bottom layer; for
 * inner layers the part not covered by the neighbour (A_i minus the overlap). */
#include "plate.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "air.h"
#include "config.h"
#include "convection.h"
#include "grid.h"
#include "heater.h"
#include "materials.h"
#include "radiation.h"

#define TP_WALL_EMISSIVITY 0.9  /* -, inner walls of an enclosure when not given (painted or
                                   plastic panels; common practice, no source) */
#define TP_BIOT_LIMIT 0.1       /* -, lumped-capacitance criterion (Incropera 7th ed. Eq. 5.10) */
#define TP_DESIGN_RISE 60.0     /* K above the room, design temperature without a setpoint */

typedef struct geom {
    double w, d, area, t;
    const tp_material_spec *m;
    int node;
} geom;

/* The config path of layer i, "bed.layers.<id>" (or its index when an earlier layer has the
 * same id), with ".key" appended when `key` is not NULL: the form config.c uses in messages. */
static void layer_path(const tp_description *desc, size_t i, const char *key, char *out,
                       size_t size)
{
    const tp_layer *ly = desc->bed.layers;
    size_t j;
    int unique = 1;
    for (j = 0; j < i; j++)
        unique &= strcmp(ly[j].id, ly[i].id) != 0;
    if (unique)
        snprintf(out, size, "bed.layers.%s%s%s", ly[i].id, key ? "." : "", key ? key : "");
    else
        snprintf(out, size, "bed.layers.%zu%s%s", i, key ? "." : "", key ? key : "");
}

/* Where the plate and sensor nodes start: run.initial (a warm start), else the room. */
static double plate_start(const tp_description *desc)
{
    return tp_isset(desc->run.initial) ? desc->run.initial : desc->room.temperature;
}

double tp_plate_design_temperature(const tp_description *desc)
{
    if (tp_description_holds(desc))
        return tp_description_setpoint(desc);
    return desc->room.temperature + TP_DESIGN_RISE;
}

static double overlap(const geom *a, const geom *b)
{
    return fmin(a->w, b->w) * fmin(a->d, b->d);
}

static tp_net_link *add_conv(tp_network *net, int surface, int sink, double area, tp_face face,
                             double length, double airflow, double flow_length,
                             const tp_description *desc, tp_loss_path path, const char *label)
{
    tp_net_link *l = tp_network_add_link(net, surface, sink, TP_LAW_CONVECTION);
    if (!l)
        return NULL;
    l->area = area;
    l->correlated = 1;
    l->conv.face = face;
    l->conv.length = length;
    l->conv.airflow = airflow;
    l->conv.flow_length = flow_length;
    l->conv.pressure = desc->room.pressure;
    l->scale = desc->losses.convection_scale;
    l->path = path;
    snprintf(l->label, sizeof l->label, "%s", label);
    return l;
}

static tp_net_link *add_rad(tp_network *net, int surface, int sink, double area, double eps,
                            const tp_description *desc, tp_loss_path path, const char *label)
{
    tp_net_link *l = tp_network_add_link(net, surface, sink, TP_LAW_RADIATION);
    if (!l)
        return NULL;
    l->area = area;
    l->eps = eps;
    if (desc->enclosure.present) {
        double ew = tp_isset(desc->enclosure.walls.emissivity) ? desc->enclosure.walls.emissivity
                                                               : TP_WALL_EMISSIVITY;
        l->eps = tp_radiation_eps_enclosed(eps, area, ew, desc->enclosure.walls.area);
    }
    l->scale = desc->losses.radiation_scale;
    l->path = path;
    snprintf(l->label, sizeof l->label, "%s", label);
    return l;
}

/* Convection plus radiation from one face; returns 0 or -1 (out of memory). */
static int add_face(tp_network *net, const geom *g, int conv_sink, int rad_sink, double area,
                    tp_face face, double airflow, double eps, const tp_description *desc,
                    tp_loss_path pconv, tp_loss_path prad, const char *name)
{
    char label[128];
    if (area <= 0)
        return 0;
    snprintf(label, sizeof label, "%s %s", name, face == TP_FACE_UP ? "top" : "bottom");
    if (!add_conv(net, g->node, conv_sink, area, face, tp_convection_length_horizontal(g->w, g->d),
                  airflow, g->w, desc, pconv, label))
        return -1;
    snprintf(label, sizeof label, "%s %s radiation", name, face == TP_FACE_UP ? "top" : "bottom");
    return add_rad(net, g->node, rad_sink, area, eps, desc, prad, label) ? 0 : -1;
}

/* Layers: materials, geometry, nodes. Returns the number of errors added. */
static int lower_layers(const tp_description *desc, const tp_yamltree *doc, tp_network *net,
                        tp_diag *d, geom *g)
{
    const tp_bed *bed = &desc->bed;
    size_t i, j;
    int errors0 = d->errors;
    static const char *const reserved[] = {"sensor", "room", "air", "walls"};
    for (i = 0; i < bed->n_layers; i++) {
        const tp_layer *ly = &bed->layers[i];
        char path[128], hint[160];
        snprintf(path, sizeof path, "bed.layers.%zu", i);
        for (j = 0; j < i; j++)
            if (strcmp(bed->layers[j].id, ly->id) == 0)
                tp_diag_error(d, tp_yamltree_nearest(doc, path), "bed.layers",
                              "give every layer its own id", "duplicate layer id '%s'", ly->id);
        for (j = 0; j < sizeof reserved / sizeof reserved[0]; j++)
            if (strcmp(reserved[j], ly->id) == 0)
                tp_diag_error(d, tp_yamltree_nearest(doc, path), "bed.layers",
                              "sensor, room, air and walls name nodes tepid creates itself",
                              "the layer id '%s' is reserved", ly->id);
        g[i].m = tp_materials_find(desc, ly->material);
        if (!g[i].m) {
            layer_path(desc, i, "material", path, sizeof path);
            tp_materials_hint(desc, ly->material, hint, sizeof hint);
            tp_diag_error(d, tp_yamltree_nearest(doc, path), path, hint, "unknown material '%s'",
                          ly->material);
            continue;
        }
        g[i].w = tp_isset(ly->size[0]) ? ly->size[0] : bed->size[0];
        g[i].d = tp_isset(ly->size[1]) ? ly->size[1] : bed->size[1];
        g[i].t = ly->thickness;
        g[i].area = g[i].w * g[i].d;
        if (g[i].t >= fmin(g[i].w, g[i].d)) {
            layer_path(desc, i, "thickness", path, sizeof path);
            tp_diag_error(d, tp_yamltree_nearest(doc, path), path,
                          "a layer of a plate is thinner than it is wide; check the units",
                          "layer '%s' is thicker (%g mm) than its plan size (%g x %g mm)", ly->id,
                          g[i].t * 1e3, g[i].w * 1e3, g[i].d * 1e3);
        }
    }
    if (d->errors != errors0)
        return d->errors - errors0;
    if (tp_isset(bed->layers[0].contact)) {
        char path[128];
        layer_path(desc, 0, "contact", path, sizeof path);
        tp_diag_warn(d, tp_yamltree_nearest(doc, path), path,
                     "contact belongs to the upper layer of an interface; mounts: {conductance} "
                     "couples the bottom layer to the frame",
                     "the bottom layer '%s' has no layer below; its contact is ignored",
                     bed->layers[0].id);
    }
    for (i = 0; i < bed->n_layers; i++) {
        double c = g[i].m->density * g[i].m->specific_heat * g[i].area * g[i].t;
        g[i].node = tp_network_add_node(net, bed->layers[i].id, c, plate_start(desc));
        if (g[i].node < 0)
            return 1;
    }
    return 0;
}

static int find_layer(const tp_bed *bed, const char *id)
{
    size_t i;
    for (i = 0; i < bed->n_layers; i++)
        if (strcmp(bed->layers[i].id, id) == 0)
            return (int)i;
    return -1;
}

static void layer_hint(const tp_bed *bed, char *hint, size_t size)
{
    size_t i, len = (size_t)snprintf(hint, size, "layers:");
    for (i = 0; i < bed->n_layers && len + 2 < size; i++)
        len += (size_t)snprintf(hint + len, size - len, " %s", bed->layers[i].id);
}

static tp_status lower_heater(const tp_description *desc, const tp_yamltree *doc, tp_network *net,
                              tp_diag *d, const geom *g)
{
    const tp_heater *h = &desc->heater;
    int li = find_layer(&desc->bed, h->layer), electric;
    tp_net_source *s;
    char hint[256];
    if (li < 0) {
        layer_hint(&desc->bed, hint, sizeof hint);
        tp_diag_error(d, tp_yamltree_nearest(doc, "heater.layer"), "heater.layer", hint,
                      "the heater layer '%s' does not exist", h->layer);
        return TP_ERR_CONFIG;
    }
    if (tp_heater_is_rated(h)) {
        /* A heater as sold: "24 V, 240 W" fixes its resistance, so neither resistance nor
         * power may be given besides. */
        const char *given = tp_isset(h->rated_power) ? "heater.rated_power"
                                                     : "heater.rated_voltage";
        if (tp_isset(h->resistance) || tp_isset(h->power)) {
            tp_diag_error(d, tp_yamltree_nearest(doc, given), given,
                          "a heater is given either as sold (rated_power and rated_voltage) or "
                          "by its resistance or power: remove one",
                          "not allowed together with heater.%s",
                          tp_isset(h->resistance) ? "resistance" : "power");
            return TP_ERR_CONFIG;
        }
        if (!tp_isset(h->rated_power) || !tp_isset(h->rated_voltage)) {
            tp_diag_error(d, tp_yamltree_nearest(doc, given),
                          tp_isset(h->rated_power) ? "heater.rated_voltage"
                                                   : "heater.rated_power",
                          "a heater as sold needs both, e.g. rated_power: 240 W with "
                          "rated_voltage: 24 V", "missing required key");
            return TP_ERR_CONFIG;
        }
    }
    electric = tp_isset(h->supply) || tp_isset(h->resistance) || tp_heater_is_rated(h);
    if (tp_isset(h->power) == electric) {
        tp_diag_error(d, tp_yamltree_nearest(doc, "heater"), "heater",
                      "give either power: 220 W, or supply: 24 V with resistance: 2.6 ohm",
                      tp_isset(h->power) ? "power and supply/resistance are both given"
                                         : "the heater needs power, or supply and resistance");
        return TP_ERR_CONFIG;
    }
    if (electric && !(tp_isset(tp_heater_volts(h)) && tp_isset(tp_heater_r0(h)))) {
        tp_diag_error(d, tp_yamltree_nearest(doc, "heater"),
                      tp_isset(h->supply) ? "heater.resistance" : "heater.supply",
                      "an electrical heater needs both supply and resistance (or rated_power "
                      "and rated_voltage)", "missing required key");
        return TP_ERR_CONFIG;
    }
    s = tp_network_add_source(net, "heater", g[li].node);
    if (!s)
        return TP_ERR_NOMEM;
    if (electric) {
        s->kind = TP_SRC_ELECTRIC;
        s->supply = tp_heater_volts(h); /* a heater as sold runs on its rating by default */
        s->r0 = tp_heater_r0(h);
        if (tp_heater_is_rated(h)) {
            s->rated_power = h->rated_power;
            s->rated_voltage = h->rated_voltage;
        }
        s->tempco = h->tempco;
        s->tref = h->reference; /* its series path: assemble.c, circuit.h */
    } else {
        s->kind = TP_SRC_POWER;
        s->power = h->power;
    }
    s->max_duty = h->max_duty;
    return TP_OK;
}

static tp_status lower_sensor(const tp_description *desc, const tp_yamltree *doc, tp_network *net,
                              tp_diag *d, const geom *g)
{
    const tp_sensor_spec *s = &desc->sensor;
    int li, node;
    double c;
    char hint[256];
    tp_net_link *l;
    if (!s->present)
        return TP_OK;
    li = find_layer(&desc->bed, s->layer);
    if (li < 0) {
        layer_hint(&desc->bed, hint, sizeof hint);
        tp_diag_error(d, tp_yamltree_nearest(doc, "sensor.layer"), "sensor.layer", hint,
                      "the sensor's host layer '%s' does not exist", s->layer);
        return TP_ERR_CONFIG;
    }
    if (tp_isset(s->capacity) == tp_isset(s->time_constant)) {
        tp_diag_error(d, tp_yamltree_nearest(doc, "sensor"), "sensor",
                      "give capacity: 0.3 J/K or time_constant: 4 s (not both)",
                      "the sensor needs exactly one of capacity or time_constant");
        return TP_ERR_CONFIG;
    }
    c = tp_isset(s->capacity) ? s->capacity : s->coupling * s->time_constant;
    node = tp_network_add_node(net, "sensor", c, plate_start(desc));
    l = node >= 0 ? tp_network_add_link(net, node, g[li].node, TP_LAW_CONDUCTION) : NULL;
    if (!l)
        return TP_ERR_NOMEM;
    l->g = s->coupling;
    snprintf(l->label, sizeof l->label, "sensor-%s", s->layer);
    return TP_OK;
}

/* Warnings judged at the design temperature. */
static void physical_warnings(const tp_description *desc, const tp_yamltree *doc,
                              const tp_network *net, tp_diag *d, const geom *g)
{
    double td = tp_plate_design_temperature(desc), tr = desc->room.temperature;
    size_t i;
    int k;
    for (i = 0; i < desc->bed.n_layers; i++) {
        const tp_material_spec *m = g[i].m;
        double h = 0.0, as = 0.0, bi;
        char path[128], hint[200];
        if (desc->control.present && tp_isset(desc->control.setpoint) &&
            desc->control.mode != TP_MODE_OFF && desc->control.setpoint > m->max_temperature) {
            tp_diag_warn(d, tp_yamltree_nearest(doc, "control.setpoint"), "control.setpoint",
                         "lower the setpoint or choose a material rated for it",
                         "the setpoint %.0f degC is above the service limit of %s in layer "
                         "'%s' (%.0f degC)",
                         desc->control.setpoint - TP_KELVIN_0C, m->id, desc->bed.layers[i].id,
                         m->max_temperature - TP_KELVIN_0C);
        }
        for (k = 0; desc->control.present && k < (int)desc->control.n_schedule; k++) {
            double to = desc->control.schedule[k].to;
            char at[64];
            if (!(to > m->max_temperature))
                continue;
            snprintf(at, sizeof at, "control.schedule.%d.to", k);
            tp_diag_warn(d, tp_yamltree_nearest(doc, at), at,
                         "lower the segment's setpoint or choose a material rated for it",
                         "the schedule's setpoint %.0f degC is above the service limit of %s in "
                         "layer '%s' (%.0f degC)",
                         to - TP_KELVIN_0C, m->id, desc->bed.layers[i].id,
                         m->max_temperature - TP_KELVIN_0C);
        }
        /* Lumped-capacitance check on the exterior surfaces: Bi = h L_c / k with
         * L_c = V / A_s (Incropera 7th ed. Eq. 5.10), h = convection + radiation averaged over
         * the exposed faces, A_s = the exposed area (faces and edges). */
        {
            double ha = 0.0, af = 0.0;
            for (k = 0; k < net->n_links; k++) {
                const tp_net_link *l = &net->links[k];
                double hh;
                /* Gap links between two layers are internal: not a surface loss. */
                if (l->a != g[i].node || l->law == TP_LAW_CONDUCTION ||
                    l->path == TP_PATH_INTERNAL)
                    continue;
                tp_network_link_conductance(l, td, tr, &hh);
                if (l->law == TP_LAW_CONVECTION)
                    as += l->area;
                if (l->path != TP_PATH_EDGE) {
                    ha += hh * l->area;
                    if (l->law == TP_LAW_CONVECTION)
                        af += l->area;
                }
            }
            if (as <= 0 || af <= 0)
                continue;
            h = ha / af;
        }
        bi = h * (g[i].area * g[i].t / as) / tp_materials_k_through(m);
        if (bi > TP_BIOT_LIMIT) {
            layer_path(desc, i, NULL, path, sizeof path);
            snprintf(hint, sizeof hint,
                     "its node is the average over its thickness; to resolve the gradient, "
                     "split it into thinner layers of the same material");
            tp_diag_warn(d, tp_yamltree_nearest(doc, path), path, hint,
                         "layer '%s' (%s) has a Biot number of %.2g > %.1f: it is not isothermal",
                         desc->bed.layers[i].id, m->id, bi, TP_BIOT_LIMIT);
        }
    }
    for (k = 0; k < net->n_links; k++) {
        const tp_net_link *l = &net->links[k];
        tp_convection_info info;
        tp_loc loc = tp_yamltree_nearest(doc, "enclosure.walls");
        char path[128];
        double tsink = net->nodes[l->b].capacity > 0 ? tr : net->nodes[l->b].t0;
        if (l->law != TP_LAW_CONVECTION || !l->correlated)
            continue;
        tp_convection_h(&l->conv, td, tsink, &info);
        if (!info.out_of_range)
            continue;
        /* Point at the layer whose face it is (the walls otherwise). */
        for (i = 0; i < desc->bed.n_layers; i++) {
            if (g[i].node == l->a) {
                layer_path(desc, i, NULL, path, sizeof path);
                loc = tp_yamltree_nearest(doc, path);
            }
        }
        tp_diag_warn(d, loc, l->label,
                     "tepid uses the nearest form; treat this coefficient as approximate",
                     "at %.0f degC, Ra = %.3g%s%.3g is outside the validity range of %s",
                     td - TP_KELVIN_0C, info.ra, info.re > 0 ? ", Re = " : "",
                     info.re > 0 ? info.re : 0.0, info.method);
    }
}

/* A layer smaller than both neighbours leaves a closed gap of its own thickness between them:
 * still air conducts across it and the two faces exchange radiation. Fills gap[][] (the closed
 * area below [0] and above [1] each layer, m2) and inside[] (the layer lies within the gap,
 * its edges unexposed). */
static tp_status closed_gaps(const tp_description *desc, tp_network *net, const geom *g, size_t n,
                             double gap[][2], int *inside)
{
    const tp_bed *bed = &desc->bed;
    double tr = desc->room.temperature;
    size_t i;
    for (i = 1; i + 1 < n; i++) {
        double w = fmin(fmin(g[i - 1].w, g[i + 1].w), g[i].w);
        double dd = fmin(fmin(g[i - 1].d, g[i + 1].d), g[i].d);
        double a = overlap(&g[i - 1], &g[i + 1]) - w * dd;
        tp_air air_gap;
        tp_net_link *l;
        if (a <= 1e-12)
            continue;
        gap[i - 1][1] = a;
        gap[i + 1][0] = a;
        /* Within both neighbours' plan, its edges face the gap, not the room. */
        inside[i] = g[i].w <= fmin(g[i - 1].w, g[i + 1].w) &&
                    g[i].d <= fmin(g[i - 1].d, g[i + 1].d);
        tp_air_props(0.5 * (tr + tp_plate_design_temperature(desc)), desc->room.pressure, &air_gap);
        l = tp_network_add_link(net, g[i - 1].node, g[i + 1].node, TP_LAW_CONDUCTION);
        if (!l)
            return TP_ERR_NOMEM;
        l->g = air_gap.k * a / g[i].t;
        snprintf(l->label, sizeof l->label, "%s-%s air gap", bed->layers[i - 1].id,
                 bed->layers[i + 1].id);
        l = tp_network_add_link(net, g[i - 1].node, g[i + 1].node, TP_LAW_RADIATION);
        if (!l)
            return TP_ERR_NOMEM;
        l->area = a;
        l->eps = tp_radiation_eps_parallel(g[i - 1].m->emissivity, g[i + 1].m->emissivity);
        l->scale = desc->losses.radiation_scale;
        snprintf(l->label, sizeof l->label, "%s-%s gap radiation", bed->layers[i - 1].id,
                 bed->layers[i + 1].id);
    }
    return TP_OK;
}

/* Layer i's exposed faces (up and down, less the closed gaps' areas gap_down and gap_up, and
 * its edges unless they are inside a gap) to the sinks, and its conduction to the layer above
 * through both half-thicknesses and the contact. `stack` is the bed's height. */
static tp_status layer_links(const tp_description *desc, tp_network *net, const geom *g, size_t n,
                             size_t i, double gap_down, double gap_up, int inside, double stack,
                             int conv_sink, int rad_sink)
{
    const tp_bed *bed = &desc->bed;
    const char *id = bed->layers[i].id;
    double up = (i + 1 == n ? g[i].area : g[i].area - overlap(&g[i], &g[i + 1])) - gap_up;
    double down = (i == 0 ? g[i].area : g[i].area - overlap(&g[i - 1], &g[i])) - gap_down;
    double eps_up = g[i].m->emissivity, eps_down = g[i].m->emissivity;
    int is_top = i + 1 == n, is_bottom = i == 0;
    char label[128];
    if (is_top && tp_isset(bed->top.emissivity))
        eps_up = bed->top.emissivity;
    if (is_bottom && tp_isset(bed->bottom.emissivity))
        eps_down = bed->bottom.emissivity;
    /* Forced air flows across the working surface only (along the bed's first side). */
    if (add_face(net, &g[i], conv_sink, rad_sink, up > 1e-12 ? up : 0.0, TP_FACE_UP,
                 is_top ? desc->room.airflow : 0.0, eps_up, desc, TP_PATH_TOP_CONV, TP_PATH_TOP_RAD,
                 id) != 0 ||
        add_face(net, &g[i], conv_sink, rad_sink, down > 1e-12 ? down : 0.0, TP_FACE_DOWN, 0.0,
                 eps_down, desc, TP_PATH_BOTTOM_CONV, TP_PATH_BOTTOM_RAD, id) != 0)
        return TP_ERR_NOMEM;
    snprintf(label, sizeof label, "%s edges", id);
    if (!inside && !add_conv(net, g[i].node, conv_sink, 2.0 * (g[i].w + g[i].d) * g[i].t,
                             TP_FACE_VERTICAL, stack, 0.0, 0.0, desc, TP_PATH_EDGE, label))
        return TP_ERR_NOMEM;
    snprintf(label, sizeof label, "%s edges radiation", id);
    if (!inside && !add_rad(net, g[i].node, rad_sink, 2.0 * (g[i].w + g[i].d) * g[i].t,
                            g[i].m->emissivity, desc, TP_PATH_EDGE, label))
        return TP_ERR_NOMEM;
    if (i + 1 < n) {
        double a = overlap(&g[i], &g[i + 1]);
        double r = g[i].t / (2.0 * tp_materials_k_through(g[i].m) * a) +
                   g[i + 1].t / (2.0 * tp_materials_k_through(g[i + 1].m) * a);
        tp_net_link *l;
        if (tp_isset(bed->layers[i + 1].contact))
            r += 1.0 / (bed->layers[i + 1].contact * a);
        l = tp_network_add_link(net, g[i].node, g[i + 1].node, TP_LAW_CONDUCTION);
        if (!l)
            return TP_ERR_NOMEM;
        l->g = 1.0 / r;
        snprintf(l->label, sizeof l->label, "%s-%s", id, bed->layers[i + 1].id);
    }
    return TP_OK;
}

/* The mounts into the frame, and an enclosure's walls (inside to its air, through to the
 * room). */
static tp_status mounts_and_walls(const tp_description *desc, tp_network *net, int bottom, int air,
                                  int walls, int room, int rad_sink)
{
    if (desc->bed.mounts.conductance > 0) {
        tp_net_link *l = tp_network_add_link(net, bottom, rad_sink, TP_LAW_CONDUCTION);
        if (!l)
            return TP_ERR_NOMEM;
        l->g = desc->bed.mounts.conductance;
        l->path = TP_PATH_MOUNTS;
        snprintf(l->label, sizeof l->label, "mounts");
    }
    if (desc->enclosure.present) {
        const tp_enclosure *e = &desc->enclosure;
        double height = tp_isset(e->height) ? e->height : cbrt(e->volume);
        tp_net_link *l = add_conv(net, walls, air, e->walls.area, TP_FACE_VERTICAL, height, 0.0,
                                  0.0, desc, TP_PATH_INTERNAL, "walls inside");
        if (!l)
            return TP_ERR_NOMEM;
        l = tp_network_add_link(net, walls, room, TP_LAW_CONDUCTION);
        if (!l)
            return TP_ERR_NOMEM;
        l->g = e->walls.u_value * e->walls.area;
        l->path = TP_PATH_WALLS;
        snprintf(l->label, sizeof l->label, "walls-room");
    }
    return TP_OK;
}

/* The lumped lowering: one node per layer. */
static tp_status lower_lumped(const tp_description *desc, const tp_yamltree *doc, tp_network *net,
                              tp_diag *d)
{
    const tp_bed *bed = &desc->bed;
    geom g[TP_MAX_LAYERS];
    double gap[TP_MAX_LAYERS][2]; /* closed-gap area below [0] and above [1] each layer, m2 */
    int inside[TP_MAX_LAYERS];    /* 1: the layer lies within a closed gap, edges unexposed */
    size_t i, n = bed->n_layers;
    int room, air = -1, walls = -1, conv_sink, rad_sink;
    double stack = 0.0, tr = desc->room.temperature;
    tp_status st;

    st = tp_materials_builtin(NULL, NULL, d);
    if (st != TP_OK)
        return st == TP_ERR_NOMEM ? st : TP_ERR_CONFIG;
    if (n == 0 || n > TP_MAX_LAYERS) {
        tp_diag_error(d, tp_yamltree_nearest(doc, "bed.layers"), "bed.layers",
                      "list the layers bottom to top", "a bed needs 1 to %d layers", TP_MAX_LAYERS);
        return TP_ERR_CONFIG;
    }
    memset(g, 0, sizeof g);
    memset(gap, 0, sizeof gap);
    memset(inside, 0, sizeof inside);
    if (lower_layers(desc, doc, net, d, g) != 0)
        return TP_ERR_CONFIG;
    st = lower_sensor(desc, doc, net, d, g);
    if (st != TP_OK)
        return st;
    if (desc->enclosure.present) {
        tp_air a;
        tp_air_props(tr, desc->room.pressure, &a);
        air = tp_network_add_node(net, "air", a.rho * a.cp * desc->enclosure.volume, tr);
        walls = tp_network_add_node(net, "walls", desc->enclosure.walls.capacity, tr);
    }
    room = tp_network_add_node(net, "room", 0.0, tr);
    if (room < 0)
        return TP_ERR_NOMEM;
    conv_sink = air >= 0 ? air : room;
    rad_sink = walls >= 0 ? walls : room;
    for (i = 0; i < n; i++)
        stack += g[i].t;
    if ((st = closed_gaps(desc, net, g, n, gap, inside)) != TP_OK)
        return st;
    for (i = 0; i < n; i++)
        if ((st = layer_links(desc, net, g, n, i, gap[i][0], gap[i][1], inside[i], stack, conv_sink,
                              rad_sink)) != TP_OK)
            return st;
    if ((st = mounts_and_walls(desc, net, g[0].node, air, walls, room, rad_sink)) != TP_OK)
        return st;
    net->top_node = g[n - 1].node;
    net->top_area = g[n - 1].area;
    net->top_half_r = g[n - 1].t / (2.0 * tp_materials_k_through(g[n - 1].m));
    st = lower_heater(desc, doc, net, d, g);
    if (st != TP_OK)
        return st;
    physical_warnings(desc, doc, net, d, g);
    return TP_OK;
}

tp_status tp_plate_lower(const tp_description *desc, const tp_yamltree *doc, tp_network *net,
                         tp_diag *d)
{
    tp_network *lumped;
    tp_status st;
    if (!tp_grid_wanted(desc)) {
        st = lower_lumped(desc, doc, net, d);
        if (st == TP_OK && desc->heater.pattern.present)
            tp_diag_warn(d, tp_yamltree_nearest(doc, "heater.pattern"), "heater.pattern",
                         "set bed.grid: [NX, NY] to resolve the plate into cells",
                         "the heater pattern only shapes the power over the cells of a "
                         "gridded plate; the lumped plate ignores it");
        return st;
    }
    /* A gridded plate refines the lumped lowering, which also validates the description and
     * gives the physical warnings once per layer. */
    lumped = tp_network_create();
    if (!lumped)
        return TP_ERR_NOMEM;
    st = lower_lumped(desc, doc, lumped, d);
    if (st == TP_OK)
        st = tp_grid_refine(desc, doc, &lumped, net, d);
    tp_network_destroy(&lumped);
    return st;
}

tp_status tp_plate_attach_sensor(const tp_description *desc, tp_network *net)
{
    const tp_sensor_spec *s = &desc->sensor;
    tp_control_reading_model *m = &net->control.reading;
    if (!net->has_control)
        return TP_OK;
    memset(m, 0, sizeof *m);
    m->offset = s->present ? s->offset : 0.0;
    if (s->present && s->thermistor.present) {
        m->thermistor = 1;
        m->r25 = s->thermistor.r25;
        m->beta = s->thermistor.beta;
        m->series = s->thermistor.series;
        m->supply = s->thermistor.supply;
        m->adc_reference = s->thermistor.adc_reference;
        m->adc_bits = (int)s->thermistor.adc_bits;
    }
    return TP_OK;
}
