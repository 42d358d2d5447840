/* Assembly of the raw network form, the checks shared by both forms (control, reachability),
 * and the dispatch to the physical lowering (plate.c). */
#include "assemble.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "circuit.h"
#include "config.h"
#include "plate.h"

/* tp_yamltree_nearest for a printf-formatted path. */
static tp_loc where(const tp_yamltree *doc, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));
static tp_loc where(const tp_yamltree *doc, const char *fmt, ...)
{
    char path[256];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(path, sizeof path, fmt, ap);
    va_end(ap);
    return tp_yamltree_nearest(doc, path);
}

/* A did-you-mean hint among the network's node ids. */
static void node_hint(const tp_network *net, const char *id, char *hint, size_t size)
{
    int i, best = -1, bestd = 99;
    for (i = 0; i < net->n_nodes; i++) {
        const char *a = id, *b = net->nodes[i].id;
        int dd = 0;
        /* A cheap distance: length difference plus mismatched positions. */
        size_t la = strlen(a), lb = strlen(b), k, m = la < lb ? la : lb;
        dd = (int)(la > lb ? la - lb : lb - la);
        for (k = 0; k < m; k++)
            dd += a[k] != b[k];
        if (dd < bestd) {
            bestd = dd;
            best = i;
        }
    }
    if (best >= 0 && bestd <= 2)
        snprintf(hint, size, "did you mean '%s'?", net->nodes[best].id);
    else {
        size_t len = (size_t)snprintf(hint, size, "nodes:");
        for (i = 0; i < net->n_nodes && len + 2 < size; i++)
            len += (size_t)snprintf(hint + len, size - len, " %s", net->nodes[i].id);
    }
}

static int lookup_node(const tp_network *net, const tp_yamltree *doc, tp_diag *d, const char *id,
                       const char *path)
{
    char hint[256];
    int i = tp_network_find_node(net, id);
    if (i >= 0)
        return i;
    node_hint(net, id, hint, sizeof hint);
    tp_diag_error(d, where(doc, "%s", path), path, hint, "no node '%s'", id);
    return -1;
}

static tp_status raw_nodes(const tp_raw *raw, const tp_yamltree *doc, tp_network *net, tp_diag *d)
{
    size_t i;
    int errors0 = d->errors;
    for (i = 0; i < raw->n_nodes; i++) {
        const tp_raw_node *n = &raw->nodes[i];
        int has_cap = tp_isset(n->capacity), has_fixed = tp_isset(n->fixed);
        if (tp_network_find_node(net, n->id) >= 0) {
            tp_diag_error(d, where(doc, "network.nodes.%zu.id", i), "network.nodes",
                          "give every node its own id", "duplicate node id '%s'", n->id);
            continue;
        }
        if (has_cap && has_fixed) {
            tp_diag_error(d, where(doc, "network.nodes.%zu", i), "network.nodes",
                          "a node either stores heat (capacity + initial) or is a boundary "
                          "(fixed)", "node '%s' has both capacity and fixed", n->id);
            continue;
        }
        if (!has_cap && !has_fixed) {
            tp_diag_error(d, where(doc, "network.nodes.%zu", i), "network.nodes",
                          "add capacity and initial, or fixed",
                          "node '%s' has neither capacity nor fixed", n->id);
            continue;
        }
        if (has_cap && !tp_isset(n->initial)) {
            tp_diag_error(d, where(doc, "network.nodes.%zu", i), "network.nodes",
                          "add initial: 21 degC", "node '%s' has a capacity but no initial",
                          n->id);
            continue;
        }
        if (has_fixed && tp_isset(n->initial)) {
            tp_diag_error(d, where(doc, "network.nodes.%zu.initial", i), "network.nodes",
                          "a fixed node keeps its temperature; remove initial",
                          "node '%s' is fixed and also has an initial temperature", n->id);
            continue;
        }
        if (tp_network_add_node(net, n->id, has_cap ? n->capacity : 0.0,
                                has_cap ? n->initial : n->fixed) < 0)
            return TP_ERR_NOMEM;
    }
    return d->errors == errors0 ? TP_OK : TP_ERR_CONFIG;
}

static tp_status raw_links(const tp_raw *raw, const tp_yamltree *doc, tp_network *net, tp_diag *d)
{
    size_t i;
    int errors0 = d->errors;
    for (i = 0; i < raw->n_links; i++) {
        const tp_raw_link *l = &raw->links[i];
        char path[64];
        int a, b, laws;
        tp_net_link *nl;
        snprintf(path, sizeof path, "network.links.%zu.between", i);
        a = lookup_node(net, doc, d, l->between[0], path);
        b = lookup_node(net, doc, d, l->between[1], path);
        laws = tp_isset(l->conductance) + l->convection.present + l->radiation.present;
        if (laws != 1) {
            tp_diag_error(d, where(doc, "network.links.%zu", i), "network.links",
                          "give exactly one of conductance, convection or radiation",
                          "link %zu has %d laws", i, laws);
            continue;
        }
        if (a < 0 || b < 0)
            continue;
        if (a == b) {
            tp_diag_error(d, where(doc, "%s", path), path,
                          "a link connects two different nodes", "link from '%s' to itself",
                          l->between[0]);
            continue;
        }
        if (tp_isset(l->conductance)) {
            nl = tp_network_add_link(net, a, b, TP_LAW_CONDUCTION);
            if (nl)
                nl->g = l->conductance;
        } else if (l->convection.present) {
            nl = tp_network_add_link(net, a, b, TP_LAW_CONVECTION);
            if (nl) {
                nl->area = l->convection.area;
                nl->h = l->convection.coefficient;
            }
        } else {
            nl = tp_network_add_link(net, a, b, TP_LAW_RADIATION);
            if (nl) {
                nl->area = l->radiation.area;
                nl->eps = l->radiation.emissivity;
            }
        }
        if (!nl)
            return TP_ERR_NOMEM;
        snprintf(nl->label, sizeof nl->label, "%s-%s", l->between[0], l->between[1]);
        if (net->nodes[a].capacity <= 0 || net->nodes[b].capacity <= 0)
            nl->path = TP_PATH_OTHER;
    }
    return d->errors == errors0 ? TP_OK : TP_ERR_CONFIG;
}

static tp_status raw_sources(const tp_raw *raw, const tp_yamltree *doc, tp_network *net, tp_diag *d)
{
    size_t i;
    int errors0 = d->errors;
    for (i = 0; i < raw->n_sources; i++) {
        const tp_raw_source *s = &raw->sources[i];
        char path[64];
        int node, electric = tp_isset(s->supply) || tp_isset(s->resistance);
        tp_net_source *ns;
        snprintf(path, sizeof path, "network.sources.%zu.node", i);
        if (tp_network_find_source(net, s->id) >= 0) {
            tp_diag_error(d, where(doc, "network.sources.%zu.id", i), "network.sources",
                          "give every source its own id", "duplicate source id '%s'", s->id);
            continue;
        }
        node = lookup_node(net, doc, d, s->node, path);
        if (node < 0)
            continue;
        if (net->nodes[node].capacity <= 0) {
            tp_diag_error(d, where(doc, "%s", path), path,
                          "power goes into a node with capacity; a fixed node absorbs anything",
                          "source '%s' heats the fixed node '%s'", s->id, s->node);
            continue;
        }
        if (tp_isset(s->power) == electric) {
            tp_diag_error(d, where(doc, "network.sources.%zu", i), "network.sources",
                          "give either power, or supply and resistance",
                          "source '%s' needs exactly one of power or supply+resistance", s->id);
            continue;
        }
        if (electric && !(tp_isset(s->supply) && tp_isset(s->resistance))) {
            tp_diag_error(d, where(doc, "network.sources.%zu", i), "network.sources",
                          "an electrical source needs both supply and resistance",
                          "source '%s' is missing %s", s->id,
                          tp_isset(s->supply) ? "resistance" : "supply");
            continue;
        }
        ns = tp_network_add_source(net, s->id, node);
        if (!ns)
            return TP_ERR_NOMEM;
        if (electric) {
            ns->kind = TP_SRC_ELECTRIC;
            ns->supply = s->supply;
            ns->r0 = s->resistance;
            ns->tempco = s->tempco;
            ns->tref = s->reference;
        } else {
            ns->kind = TP_SRC_POWER;
            ns->power = s->power;
        }
    }
    return d->errors == errors0 ? TP_OK : TP_ERR_CONFIG;
}

/* Controller wiring shared by both forms. */
static tp_status attach_control(const tp_description *desc, const tp_yamltree *doc, tp_network *net,
                                tp_diag *d)
{
    const tp_control_spec *c = &desc->control;
    tp_control *k = &net->control;
    int errors0 = d->errors, src, sensor;
    double coldest = HUGE_VAL;
    int i;
    if (!c->present)
        return TP_OK;
    memset(k, 0, sizeof *k);
    if (!c->source[0] && net->n_sources == 1)
        src = 0;
    else
        src = tp_network_find_source(net, c->source);
    if (src < 0) {
        tp_diag_error(d, where(doc, "control.source"), "control.source",
                      net->n_sources ? "name one of the sources' ids" : "add a source first",
                      c->source[0] ? "no source '%s'" : "which source does it switch?%s",
                      c->source);
        return TP_ERR_CONFIG;
    }
    sensor = c->sensor[0] ? tp_network_find_node(net, c->sensor) : -1;
    if (sensor < 0) {
        char hint[256];
        node_hint(net, c->sensor, hint, sizeof hint);
        tp_diag_error(d, where(doc, "control.sensor"), "control.sensor", hint,
                      c->sensor[0] ? "the controller reads a node that does not exist: '%s'"
                                   : "which node does it read?%s", c->sensor);
        return TP_ERR_CONFIG;
    }
    if (net->nodes[sensor].capacity <= 0) {
        tp_diag_error(d, where(doc, "control.sensor"), "control.sensor",
                      "read a node with a capacity (the plate, or a sensor node)",
                      "the controller reads the fixed node '%s', which never changes", c->sensor);
        return TP_ERR_CONFIG;
    }
    if (tp_description_mode_holds(c->mode) && !tp_isset(tp_description_setpoint(desc))) {
        tp_diag_error(d, where(doc, "control"), "control.setpoint", "add setpoint: 100 degC",
                      "mode %s needs a setpoint", tp_description_mode_name(c->mode));
        return TP_ERR_CONFIG;
    }
    for (i = 0; i < net->n_nodes; i++)
        if (net->nodes[i].capacity <= 0 && net->nodes[i].t0 < coldest)
            coldest = net->nodes[i].t0;
    if (tp_isset(c->setpoint) && tp_description_mode_holds(c->mode) && c->setpoint < coldest) {
        tp_diag_error(d, where(doc, "control.setpoint"), "control.setpoint",
                      "tepid models heating: the setpoint must be above the room",
                      "the setpoint %.2f degC is below the room temperature %.2f degC",
                      c->setpoint - TP_KELVIN_0C, coldest - TP_KELVIN_0C);
        return TP_ERR_CONFIG;
    }
    for (i = 0; i < (int)c->n_schedule && tp_description_mode_holds(c->mode); i++) {
        char at[64];
        if (!(c->schedule[i].to < coldest))
            continue;
        snprintf(at, sizeof at, "control.schedule.%d.to", i);
        tp_diag_error(d, where(doc, "control.schedule.%d.to", i), at,
                      "tepid models heating: a segment's setpoint is above the room (let the "
                      "plate cool with {off: TIME})",
                      "the setpoint %.2f degC is below the room temperature %.2f degC",
                      c->schedule[i].to - TP_KELVIN_0C, coldest - TP_KELVIN_0C);
        return TP_ERR_CONFIG;
    }
    k->mode = c->mode;
    k->source = src;
    k->sensor = sensor;
    k->setpoint = tp_description_setpoint(desc); /* a schedule's highest setpoint */
    k->band = c->band;
    k->period = c->period;
    k->kp = c->kp;
    k->ki = c->ki;
    k->kd = c->kd;
    k->d_filter = c->derivative_filter;
    k->duty_levels = c->duty_levels;
    k->max_duty = net->sources[src].max_duty;
    net->has_control = 1;
    return d->errors == errors0 ? TP_OK : TP_ERR_CONFIG;
}

/* Warnings: isolated nodes, and powered nodes with no path to a fixed node. */
static void check_graph(const tp_network *net, tp_diag *d, const tp_yamltree *doc)
{
    int n = net->n_nodes, i;
    int *degree = calloc((size_t)n + 1, sizeof *degree);
    int *grounded = tp_network_grounded(net); /* reachability of a fixed node */
    if (!degree || !grounded) {
        free(degree);
        free(grounded);
        return;
    }
    for (i = 0; i < net->n_links; i++) {
        degree[net->links[i].a]++;
        degree[net->links[i].b]++;
    }
    for (i = 0; i < n; i++)
        if (degree[i] == 0)
            tp_diag_warn(d, where(doc, "network.nodes"), NULL,
                         "link it to the rest of the network or remove it",
                         "node '%s' has no link", net->nodes[i].id);
    for (i = 0; i < net->n_sources; i++) {
        int k, lost = 0;
        for (k = 0; k < net->sources[i].n_nodes; k++)
            lost |= !grounded[net->sources[i].nodes[k]];
        if (lost)
            tp_diag_warn(d, where(doc, "network.sources"), NULL,
                         "link the heated nodes to a fixed node (the room), or there is no "
                         "steady state", "source '%s' heats nodes with no path to a fixed node",
                         net->sources[i].id);
    }
    free(degree);
    free(grounded);
}

/* The heater's series path (circuit.h) into its source; a gridded plate's lumped network too,
 * whose steady states start the grid's. */
static tp_status attach_circuit(const tp_description *desc, const tp_yamltree *doc, tp_network *net,
                                tp_diag *d)
{
    int src = tp_network_heater(net);
    tp_circuit c;
    tp_status st;
    if (src < 0)
        return TP_OK;
    st = tp_circuit_series(desc,
                           net->sources[src].kind == TP_SRC_ELECTRIC ? net->sources[src].supply
                                                                     : TP_UNSET,
                           where(doc, "wiring"), &c, d);
    if (st != TP_OK)
        return st;
    for (; net; net = tp_network_twin_mut(net)) {
        src = tp_network_heater(net);
        if (src >= 0 && net->sources[src].kind == TP_SRC_ELECTRIC)
            tp_network_source_mut(net, src)->r_series = c.total;
    }
    return TP_OK;
}

/* A gridded plate's lumped twin gets the grid's controller, reading the node the grid's sensor
 * was refined from (the twin's sources are the grid's, in order): its steady states start the
 * grid's, at the same duties and targets. */
static void mirror_control(tp_network *net)
{
    tp_network *lp = tp_network_twin_mut(net);
    if (!lp || !net->has_control || !net->grid->from)
        return;
    lp->has_control = 1;
    lp->control = net->control;
    lp->control.sensor = net->grid->from[net->control.sensor];
}

tp_status tp_assemble(const tp_description *desc, const tp_yamltree *doc, tp_diag *d,
                      const tp_network **out)
{
    tp_network *net;
    tp_status st;
    int errors0 = d->errors;
    *out = NULL;
    net = tp_network_create();
    if (!net)
        return TP_ERR_NOMEM;
    if (desc->form == TP_FORM_RAW) {
        st = raw_nodes(&desc->network, doc, net, d);
        if (st == TP_OK)
            st = raw_links(&desc->network, doc, net, d);
        if (st == TP_OK || st == TP_ERR_CONFIG) {
            tp_status s2 = raw_sources(&desc->network, doc, net, d);
            if (st == TP_OK)
                st = s2;
        }
    } else {
        st = tp_plate_lower(desc, doc, net, d);
    }
    if (st == TP_OK)
        st = tp_network_finish(net);
    if (st == TP_OK)
        st = attach_control(desc, doc, net, d);
    if (st == TP_OK && desc->form == TP_FORM_PHYSICAL)
        st = tp_plate_attach_sensor(desc, net);
    if (st == TP_OK)
        st = attach_circuit(desc, doc, net, d);
    /* Every input error is reported; a builder that failed without a word ran out of memory
     * (the builders count errors, and an allocation failure is none). */
    if (st == TP_ERR_CONFIG && d->errors == errors0)
        st = TP_ERR_NOMEM;
    if (st != TP_OK) {
        tp_network_destroy(&net);
        return st;
    }
    mirror_control(net);
    check_graph(net, d, doc);
    *out = net;
    return TP_OK;
}
