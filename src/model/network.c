/* The thermal network: its container, assembly, copies, the Jacobian pattern, and the laws of
 * one link and one source. Evaluating the whole ODE at a state is the evaluator's (eval.c),
 * which holds everything that changes during a run; a finished network is only read.
 *
 * State y = [T_1 .. T_n, E_src, E_lost, E_wire]: the temperatures (K) of the n free nodes, then
 * three running energy totals (J) that let every run close its energy balance exactly.
 *
 *   C_i dT_i/dt = sum_links Q_ji + sum_sources P_si            (W)
 *   dE_src/dt   = sum_s P_s        dE_lost/dt = sum Q into fixed nodes
 *   dE_wire/dt  = sum_s I_s^2 R_series,s
 *
 * Link laws (Q from a to b):
 *   conduction  Q = G (T_a - T_b)
 *   convection  Q = h A s (T_a - T_b), h fixed or h(T_a, T_b) from a published correlation
 *   radiation   Q = eps sigma A s (T_a^4 - T_b^4), kelvin, gray surfaces (Stefan-Boltzmann)
 * with s the loss multiplier (losses.convection_scale, losses.radiation_scale).
 * Sources: constant P, or a resistive element on a supply V through R_series:
 *   R(T) = R0 (1 + alpha (T - T_ref)),  I = V / (R + R_series),  P = d I^2 R,
 * with d the duty held by the controller (PWM averaged over a period), held in the evaluator.
 *
 * The Jacobian is analytic for the network structure; the temperature derivative of a
 * correlated convection coefficient is taken by a central difference of the correlation
 * (TP_NET_DH_STEP), which keeps it consistent with the right-hand side. */
#include "network.h"

#include <limits.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "array.h"
#include "keysort.h"
#include "radiation.h"

static const char *const law_names[] = {"conduction", "convection", "radiation"};
static const char *const path_names[TP_PATH_COUNT] = {
    "internal", "top_convection", "top_radiation", "bottom_convection", "bottom_radiation",
    "edges", "mounts", "walls", "other"};

const char *tp_network_law_name(tp_law law)
{
    return (unsigned)law < 3 ? law_names[law] : "?";
}

const char *tp_network_loss_path_name(tp_loss_path p)
{
    return (unsigned)p < TP_PATH_COUNT ? path_names[p] : "?";
}

/* The module's own view of what it builds, copies and frees: the arrays of a network are const
 * to every other module (network.h); here they are this module's to write. The one cast away
 * of const. */
static void *own(const void *p)
{
    return (void *)p;
}

tp_net_node *tp_network_node_mut(tp_network *net, int i)
{
    return own(&net->nodes[i]);
}

tp_net_link *tp_network_link_mut(tp_network *net, int i)
{
    return own(&net->links[i]);
}

tp_net_source *tp_network_source_mut(tp_network *net, int i)
{
    return own(&net->sources[i]);
}

tp_network *tp_network_twin_mut(tp_network *net)
{
    return net->grid ? own(net->grid->lumped) : NULL;
}

tp_network *tp_network_create(void)
{
    tp_network *net = calloc(1, sizeof(tp_network));
    if (net)
        net->top_node = -1;
    return net;
}

void tp_network_destroy(tp_network **net)
{
    int i;
    tp_network *n;
    if (!net || !*net)
        return;
    n = *net;
    for (i = 0; i < n->n_sources; i++) {
        free(own(n->sources[i].nodes));
        free(own(n->sources[i].weights));
    }
    free(own(n->nodes));
    free(own(n->id_index));
    free(own(n->links));
    free(own(n->sources));
    free(own(n->free_nodes));
    free(own(n->colptr));
    free(own(n->rowind));
    free(own(n->link_slot));
    free(own(n->src_slot));
    free(own(n->src_first));
    free(own(n->groups));
    free(own(n->group_links));
    if (n->grid) {
        free(own(n->grid->layer_id));
        free(own(n->grid->cell));
        free(own(n->grid->layer_capacity));
        free(own(n->grid->top_area));
        free(own(n->grid->top_link));
        free(own(n->grid->from));
        tp_network_release(&((tp_net_grid *)own(n->grid))->lumped);
        free(own(n->grid));
    }
    free(n);
    *net = NULL;
}

/* ---- copies ---------------------------------------------------------------------------------- */

static tp_status copy_network(const tp_network *src, const tp_net_change *changes,
                              int n_changes, tp_network **out);

/* A new array of n elements of `size` bytes copied from p (NULL when p is NULL or n is 0, or
 * when out of memory: *fail is then set). */
static void *dup_array(const void *p, size_t n, size_t size, int *fail)
{
    void *q;
    if (!p || n == 0)
        return NULL;
    q = malloc(n * size);
    if (!q) {
        *fail = 1;
        return NULL;
    }
    memcpy(q, p, n * size);
    return q;
}

/* The grid of `src` copied into `dst` (its lumped twin copied with `changes`, see
 * tp_network_copy). */
static tp_status copy_grid(const tp_network *src, tp_network *dst, const tp_net_change *changes,
                           int n_changes)
{
    const tp_net_grid *g = src->grid;
    tp_net_grid *c = calloc(1, sizeof *c);
    tp_net_change *mapped = NULL;
    tp_control *ctl = NULL;
    size_t n = (size_t)g->nx * (size_t)g->ny, nl = (size_t)g->n_layers;
    int fail = 0, i, m = 0;
    tp_status st;
    if (!c)
        return TP_ERR_NOMEM;
    dst->grid = c;
    *c = *g;
    c->lumped = NULL;
    c->layer_id = dup_array(g->layer_id, nl, sizeof *g->layer_id, &fail);
    c->cell = dup_array(g->cell, nl * n, sizeof *g->cell, &fail);
    c->layer_capacity = dup_array(g->layer_capacity, nl, sizeof *g->layer_capacity, &fail);
    c->top_area = dup_array(g->top_area, n, sizeof *g->top_area, &fail);
    c->top_link = dup_array(g->top_link, 2 * n, sizeof *g->top_link, &fail);
    c->from = dup_array(g->from, (size_t)src->n_nodes, sizeof *g->from, &fail);
    if (fail)
        return TP_ERR_NOMEM;
    if (!g->lumped)
        return TP_OK;
    /* The twin gets the changes that name no cell, its nodes by grid->from. */
    if (n_changes > 0) {
        mapped = malloc((size_t)n_changes * sizeof *mapped);
        ctl = malloc((size_t)n_changes * sizeof *ctl);
        if (!mapped || !ctl) {
            free(mapped);
            free(ctl);
            return TP_ERR_NOMEM;
        }
    }
    for (i = 0; i < n_changes; i++) {
        tp_net_change ch = changes[i];
        int uses_b = ch.kind == TP_CHANGE_ADD_CONDUCTION;
        if (ch.kind == TP_CHANGE_CONTROL && ch.control && g->from && ch.control->sensor >= 0 &&
            ch.control->sensor < src->n_nodes) {
            /* The twin's sources are the grid's, in order; its sensor is the node the grid's
             * sensor was refined from. */
            ctl[i] = *ch.control;
            ctl[i].sensor = g->from[ch.control->sensor];
            ch.control = &ctl[i];
        }
        if (ch.kind == TP_CHANGE_ADD_CONDUCTION || ch.kind == TP_CHANGE_ISOLATE) {
            if (!g->from || g->from[ch.a] < g->n_layers || (uses_b && g->from[ch.b] < g->n_layers))
                continue;
            ch.a = g->from[ch.a];
            if (uses_b)
                ch.b = g->from[ch.b];
        }
        mapped[m++] = ch;
    }
    {
        tp_network *twin = NULL;
        st = copy_network(g->lumped, mapped, m, &twin);
        c->lumped = twin;
    }
    free(mapped);
    free(ctl);
    return st;
}

/* Apply one change to an unfinished copy. */
static tp_status apply_change(tp_network *net, const tp_net_change *ch)
{
    int i, ok = 0;
    switch (ch->kind) {
    case TP_CHANGE_ADD_CONDUCTION: {
        tp_net_link *l;
        if (ch->a < 0 || ch->a >= net->n_nodes || ch->b < 0 || ch->b >= net->n_nodes)
            return TP_ERR_CONFIG;
        l = tp_network_add_link(net, ch->a, ch->b, TP_LAW_CONDUCTION);
        if (!l)
            return TP_ERR_NOMEM;
        l->g = ch->value;
        l->path = net->nodes[ch->b].capacity > 0 && net->nodes[ch->a].capacity > 0
                      ? TP_PATH_INTERNAL
                      : TP_PATH_OTHER;
        if (ch->label)
            snprintf(l->label, sizeof l->label, "%s", ch->label);
        else
            snprintf(l->label, sizeof l->label, "%s - %s", net->nodes[ch->a].id,
                     net->nodes[ch->b].id);
        return TP_OK;
    }
    case TP_CHANGE_ISOLATE:
        if (ch->a < 0 || ch->a >= net->n_nodes)
            return TP_ERR_CONFIG;
        for (i = 0; i < net->n_links; i++) {
            tp_net_link *l = tp_network_link_mut(net, i);
            int other = l->a == ch->a ? l->b : l->b == ch->a ? l->a : -1;
            if (other >= 0 && net->nodes[other].capacity > 0) {
                l->g = l->h = l->eps = l->scale = 0.0;
            }
        }
        return TP_OK;
    case TP_CHANGE_TOP_AIRFLOW:
        if (net->top_node < 0 && !net->grid)
            return TP_ERR_CONFIG;
        for (i = 0; i < net->n_links; i++) {
            tp_net_link *l = tp_network_link_mut(net, i);
            if (l->path != TP_PATH_TOP_CONV || !l->correlated)
                continue;
            l->conv.airflow = ch->value;
            if (l->group >= 0 && l->group < net->n_groups)
                ((tp_net_group *)own(&net->groups[l->group]))->conv.airflow = ch->value;
        }
        return TP_OK;
    case TP_CHANGE_TOP_CAPACITY:
        if (net->grid) {
            const tp_net_grid *g = net->grid;
            int c, n = g->nx * g->ny, top = (g->n_layers - 1) * n;
            double area = 0.0;
            for (c = 0; c < n; c++)
                if (g->cell[top + c] >= 0)
                    area += g->top_area[c];
            for (c = 0; c < n && area > 0; c++) {
                int node = g->cell[top + c];
                if (node < 0 || !(g->top_area[c] > 0))
                    continue;
                tp_network_node_mut(net, node)->capacity += ch->value * g->top_area[c] / area;
                ok = 1;
            }
            if (ok)
                ((double *)own(g->layer_capacity))[g->n_layers - 1] += ch->value;
            return ok ? TP_OK : TP_ERR_CONFIG;
        }
        if (net->top_node < 0 || net->nodes[net->top_node].capacity <= 0)
            return TP_ERR_CONFIG;
        tp_network_node_mut(net, net->top_node)->capacity += ch->value;
        return TP_OK;
    case TP_CHANGE_CONTROL: {
        const tp_control *c = ch->control;
        if (!c || c->source < 0 || c->source >= net->n_sources || c->sensor < 0 ||
            c->sensor >= net->n_nodes)
            return TP_ERR_CONFIG;
        net->control = *c;
        net->has_control = 1;
        return TP_OK;
    }
    case TP_CHANGE_SOURCE_POWER: {
        tp_net_source *s;
        if (ch->a < 0 || ch->a >= net->n_sources)
            return TP_ERR_CONFIG;
        s = tp_network_source_mut(net, ch->a);
        s->kind = TP_SRC_POWER;
        s->power = ch->value;
        s->max_duty = 1.0;
        s->r_series = 0.0;
        if (net->has_control && net->control.source == ch->a)
            net->control.max_duty = 1.0;
        return TP_OK;
    }
    case TP_CHANGE_SOURCE_SCALE: {
        tp_net_source *s;
        if (ch->a < 0 || ch->a >= net->n_sources || !(ch->value > 0) || !isfinite(ch->value))
            return TP_ERR_CONFIG;
        s = tp_network_source_mut(net, ch->a);
        tp_network_source_scaled(s, ch->value, s);
        return TP_OK;
    }
    }
    return TP_ERR_CONFIG;
}

void tp_network_release(const tp_network **net)
{
    /* The module that built a network frees it: the one place const is cast away. */
    tp_network *n = net ? (tp_network *)*net : NULL;
    tp_network_destroy(&n);
    if (net)
        *net = NULL;
}

tp_status tp_network_copy(const tp_network *src, const tp_net_change *changes, int n_changes,
                          const tp_network **out)
{
    tp_network *net = NULL;
    tp_status st = copy_network(src, changes, n_changes, &net);
    *out = net;
    return st;
}

static tp_status copy_network(const tp_network *src, const tp_net_change *changes,
                              int n_changes, tp_network **out)
{
    tp_network *net = calloc(1, sizeof *net);
    tp_status st = TP_OK;
    int fail = 0, i;
    *out = NULL;
    if (!net)
        return TP_ERR_NOMEM;
    net->n_nodes = src->n_nodes;
    net->cap_nodes = src->n_nodes;
    net->nodes = dup_array(src->nodes, (size_t)src->n_nodes, sizeof *src->nodes, &fail);
    net->id_slots = src->id_slots;
    net->id_index = dup_array(src->id_index, (size_t)src->id_slots, sizeof *src->id_index,
                              &fail);
    net->n_links = net->cap_links = src->n_links;
    net->links = dup_array(src->links, (size_t)src->n_links, sizeof *src->links, &fail);
    net->n_groups = net->cap_groups = src->n_groups;
    net->groups = dup_array(src->groups, (size_t)src->n_groups, sizeof *src->groups, &fail);
    net->sources = calloc((size_t)(src->n_sources > 0 ? src->n_sources : 1),
                          sizeof *net->sources);
    if (!net->sources)
        fail = 1;
    for (i = 0; !fail && i < src->n_sources; i++) {
        const tp_net_source *o = &src->sources[i];
        tp_net_source *s = tp_network_source_mut(net, i);
        *s = *o;
        s->nodes = dup_array(o->nodes, (size_t)o->n_nodes, sizeof *o->nodes, &fail);
        s->weights = dup_array(o->weights, (size_t)o->n_nodes, sizeof *o->weights, &fail);
        net->n_sources = net->cap_sources = i + 1; /* destroy frees what is copied so far */
    }
    net->has_control = src->has_control;
    net->control = src->control;
    net->top_node = src->top_node;
    net->top_area = src->top_area;
    net->top_half_r = src->top_half_r;
    if (fail)
        st = TP_ERR_NOMEM;
    if (st == TP_OK && src->grid)
        st = copy_grid(src, net, changes, n_changes);
    for (i = 0; st == TP_OK && i < n_changes; i++)
        st = apply_change(net, &changes[i]);
    if (st == TP_OK)
        st = tp_network_finish(net);
    if (st != TP_OK) {
        tp_network_destroy(&net);
        return st;
    }
    *out = net;
    return TP_OK;
}

/* FNV-1a over an id: the hash of the node-id index (Fowler, Noll and Vo; common practice). */
static unsigned long id_hash(const char *id)
{
    unsigned long h = 2166136261UL;
    for (; *id; id++)
        h = (h ^ (unsigned char)*id) * 16777619UL;
    return h;
}

static void index_put(int *slots, int n_slots, const char *id, int node)
{
    unsigned long i = id_hash(id) & (unsigned long)(n_slots - 1);
    while (slots[i])
        i = (i + 1) & (unsigned long)(n_slots - 1);
    slots[i] = node + 1;
}

/* Keep the id index at most half full; rebuilt when it grows, so lookups stay O(1) and
 * assembling a large raw network stays linear in its size. */
static int index_node(tp_network *net, int node)
{
    if (2 * (net->n_nodes + 1) > net->id_slots) {
        int n_slots = net->id_slots ? net->id_slots * 2 : 64, i;
        int *slots = calloc((size_t)n_slots, sizeof *slots);
        if (!slots)
            return -1;
        for (i = 0; i < node; i++)
            index_put(slots, n_slots, net->nodes[i].id, i);
        free(own(net->id_index));
        net->id_index = slots;
        net->id_slots = n_slots;
    }
    index_put(own(net->id_index), net->id_slots, net->nodes[node].id, node);
    return 0;
}

/* Make room for one more element in an array of `*cap` entries holding `n` (tp_array_reserve,
 * for the network's int counts); capacities grow geometrically (from `first`) so that large
 * gridded networks are built in linear time. */
static int reserve(void *p, int n, int *cap, int first, size_t size)
{
    size_t c = (size_t)*cap;
    if (tp_array_reserve(p, &c, (size_t)n + 1, size, (size_t)first) != 0 || c > INT_MAX)
        return -1;
    *cap = (int)c;
    return 0;
}

int tp_network_add_node(tp_network *net, const char *id, double capacity, double t0)
{
    int n = net->n_nodes;
    tp_net_node *node;
    if (reserve(&net->nodes, n, &net->cap_nodes, 64, sizeof *net->nodes) != 0)
        return -1;
    node = tp_network_node_mut(net, n);
    memset(node, 0, sizeof *node);
    snprintf(node->id, sizeof node->id, "%s", id);
    node->capacity = capacity;
    node->t0 = t0;
    node->state = -1;
    node->output = capacity > 0;
    if (index_node(net, n) != 0)
        return -1;
    net->n_nodes++;
    return n;
}

tp_net_link *tp_network_add_link(tp_network *net, int a, int b, tp_law law)
{
    tp_net_link *l;
    if (reserve(&net->links, net->n_links, &net->cap_links, 256, sizeof *net->links) != 0)
        return NULL;
    l = tp_network_link_mut(net, net->n_links++);
    memset(l, 0, sizeof *l);
    l->a = a;
    l->b = b;
    l->law = law;
    l->scale = 1.0;
    l->path = TP_PATH_INTERNAL;
    l->group = -1;
    return l;
}

tp_net_source *tp_network_add_source(tp_network *net, const char *id, int node)
{
    tp_net_source *s;
    int *nodes;
    double *weights;
    if (reserve(&net->sources, net->n_sources, &net->cap_sources, 16, sizeof *net->sources) != 0)
        return NULL;
    s = tp_network_source_mut(net, net->n_sources);
    memset(s, 0, sizeof *s);
    snprintf(s->id, sizeof s->id, "%s", id);
    nodes = malloc(sizeof *nodes);
    weights = malloc(sizeof *weights);
    if (!nodes || !weights) {
        free(nodes);
        free(weights);
        return NULL;
    }
    nodes[0] = node;
    weights[0] = 1.0;
    s->nodes = nodes;
    s->weights = weights;
    s->n_nodes = 1;
    s->max_duty = 1.0;
    net->n_sources++;
    return s;
}

tp_status tp_network_spread_source(tp_network *net, tp_net_source *src, const int *nodes,
                                   const double *weights, int n)
{
    int i;
    double sum = 0.0;
    int *nn;
    double *ww;
    (void)net;
    for (i = 0; i < n; i++)
        sum += weights[i];
    if (n <= 0 || !(sum > 0))
        return TP_ERR_CONFIG;
    nn = malloc((size_t)n * sizeof *nn);
    ww = malloc((size_t)n * sizeof *ww);
    if (!nn || !ww) {
        free(nn);
        free(ww);
        return TP_ERR_NOMEM;
    }
    for (i = 0; i < n; i++) {
        nn[i] = nodes[i];
        ww[i] = weights[i] / sum;
    }
    free(own(src->nodes));
    free(own(src->weights));
    src->nodes = nn;
    src->weights = ww;
    src->n_nodes = n;
    return TP_OK;
}

int tp_network_add_group(tp_network *net, const tp_convection_case *conv, int sink)
{
    tp_net_group *g;
    if (reserve(&net->groups, net->n_groups, &net->cap_groups, 16, sizeof *net->groups) != 0)
        return -1;
    g = own(&net->groups[net->n_groups]);
    memset(g, 0, sizeof *g);
    g->conv = *conv;
    g->sink = sink;
    return net->n_groups++;
}

int tp_network_find_node(const tp_network *net, const char *id)
{
    unsigned long i;
    if (!net->id_slots)
        return -1;
    /* The first node added with an id wins, as the linear search it replaces did. */
    for (i = id_hash(id) & (unsigned long)(net->id_slots - 1); net->id_index[i];
         i = (i + 1) & (unsigned long)(net->id_slots - 1)) {
        int k = net->id_index[i] - 1;
        if (strcmp(net->nodes[k].id, id) == 0)
            return k;
    }
    return -1;
}

int tp_network_find_source(const tp_network *net, const char *id)
{
    int i;
    for (i = 0; i < net->n_sources; i++)
        if (strcmp(net->sources[i].id, id) == 0)
            return i;
    return -1;
}

int tp_network_heater(const tp_network *net)
{
    int i;
    if (net->has_control)
        return net->control.source;
    if ((i = tp_network_find_source(net, "heater")) >= 0)
        return i;
    for (i = 0; i < net->n_sources; i++)
        if (net->sources[i].kind == TP_SRC_ELECTRIC)
            return i;
    return net->n_sources > 0 ? 0 : -1;
}

int tp_network_cold_start(const tp_network *net, double *current, double *power, double *series)
{
    int src = tp_network_heater(net), i;
    double *t, i_on = TP_UNSET, p = TP_UNSET, w = TP_UNSET;
    if (src >= 0 && (t = malloc((size_t)net->n_nodes * sizeof *t)) != NULL) {
        for (i = 0; i < net->n_nodes; i++)
            t[i] = net->nodes[i].t0;
        i_on = tp_network_source_current(&net->sources[src], t);
        p = tp_network_source_power(&net->sources[src], t, 1.0, &w);
        free(t);
    } else {
        src = -1;
    }
    if (current)
        *current = i_on;
    if (power)
        *power = p;
    if (series)
        *series = w;
    return src;
}

double tp_network_room(const tp_network *net)
{
    int i = tp_network_find_node(net, "room");
    return i >= 0 && net->nodes[i].capacity <= 0 ? net->nodes[i].t0 : TP_UNSET;
}

int tp_network_holds(const tp_network *net)
{
    return net->has_control && isfinite(net->control.setpoint) &&
           tp_description_mode_holds(net->control.mode);
}

int *tp_network_grounded(const tp_network *net)
{
    int *grounded = calloc((size_t)net->n_nodes + 1, sizeof *grounded), i, changed = 1;
    if (!grounded)
        return NULL;
    for (i = 0; i < net->n_nodes; i++)
        grounded[i] = net->nodes[i].capacity <= 0;
    /* By relaxation: networks are small or sparse. */
    while (changed) {
        changed = 0;
        for (i = 0; i < net->n_links; i++) {
            int a = net->links[i].a, b = net->links[i].b;
            if (grounded[a] != grounded[b]) {
                grounded[a] = grounded[b] = 1;
                changed = 1;
            }
        }
    }
    return grounded;
}

int tp_network_state_size(const tp_network *net)
{
    return net->n_free + TP_N_QUAD;
}

/* ---- the sparsity pattern ------------------------------------------------------------------ */

typedef struct entry {
    int col, row;
} entry;

static int entry_cmp(const void *pa, const void *pb)
{
    const entry *a = pa, *b = pb;
    if (a->col != b->col)
        return a->col < b->col ? -1 : 1;
    return a->row < b->row ? -1 : a->row > b->row;
}

/* The position of (row, col) in the pattern, or -1. */
static int slot_of(const tp_network *net, int row, int col)
{
    int lo, hi;
    if (row < 0 || col < 0)
        return -1;
    lo = net->colptr[col];
    hi = net->colptr[col + 1] - 1;
    while (lo <= hi) {
        int mid = (lo + hi) / 2;
        if (net->rowind[mid] == row)
            return mid;
        if (net->rowind[mid] < row)
            lo = mid + 1;
        else
            hi = mid - 1;
    }
    return -1;
}

/* Sort n elements of `size` bytes by an integer key in [0, n_keys) (counting sort), then each
 * key's elements with `cmp` (insertion sort for the short runs of a network's patterns, qsort
 * for long ones). Large networks have hundreds of thousands of pattern entries; a comparison
 * sort of them all took a tenth of a second. Falls back to qsort when out of memory. */
static int entry_col(const void *p)
{
    return ((const entry *)p)->col;
}

static int state_of(const tp_network *net, int node)
{
    return net->nodes[node].state;
}

static tp_status build_pattern(tp_network *net)
{
    int n_state = tp_network_state_size(net), q_src = net->n_free + TP_Q_SOURCE;
    int q_lost = net->n_free + TP_Q_LOST, q_wire = net->n_free + TP_Q_WIRE;
    int i, k, n = 0, cap, total_src_nodes = 0, u;
    int *colptr, *rowind, (*link_slot)[6], *src_first, *src_slot;
    entry *e;

    for (i = 0; i < net->n_sources; i++)
        total_src_nodes += net->sources[i].n_nodes;
    cap = n_state + 6 * net->n_links + 3 * total_src_nodes;
    e = malloc((size_t)cap * sizeof *e);
    if (!e)
        return TP_ERR_NOMEM;
    for (i = 0; i < n_state; i++)
        e[n++] = (entry){i, i};
    for (i = 0; i < net->n_links; i++) {
        int sa = state_of(net, net->links[i].a), sb = state_of(net, net->links[i].b);
        if (sa >= 0 && sb >= 0) {
            e[n++] = (entry){sb, sa};
            e[n++] = (entry){sa, sb};
        }
        if (sa >= 0 && sb < 0)
            e[n++] = (entry){sa, q_lost};
        if (sb >= 0 && sa < 0)
            e[n++] = (entry){sb, q_lost};
    }
    for (i = 0; i < net->n_sources; i++) {
        for (k = 0; k < net->sources[i].n_nodes; k++) {
            int s = state_of(net, net->sources[i].nodes[k]);
            if (s < 0)
                continue;
            e[n++] = (entry){s, q_src};
            e[n++] = (entry){s, q_wire};
        }
    }
    tp_keysort(e, n, sizeof *e, n_state, entry_col, entry_cmp);
    for (i = 0, u = 0; i < n; i++)
        if (u == 0 || e[i].col != e[u - 1].col || e[i].row != e[u - 1].row)
            e[u++] = e[i];
    net->nnz = u;
    net->colptr = colptr = calloc((size_t)n_state + 1, sizeof *colptr);
    net->rowind = rowind = malloc((size_t)(u > 0 ? u : 1) * sizeof *rowind);
    link_slot = malloc((size_t)(net->n_links > 0 ? net->n_links : 1) * sizeof *link_slot);
    net->link_slot = (const int(*)[6])link_slot;
    net->src_first = src_first = malloc((size_t)(net->n_sources + 1) * sizeof *src_first);
    net->src_slot = src_slot = malloc((size_t)(3 * total_src_nodes + 1) * sizeof *src_slot);
    if (!colptr || !rowind || !link_slot || !src_first || !src_slot) {
        free(e);
        return TP_ERR_NOMEM;
    }
    for (i = 0; i < u; i++) {
        colptr[e[i].col + 1]++;
        rowind[i] = e[i].row;
    }
    for (i = 0; i < n_state; i++)
        colptr[i + 1] += colptr[i];
    free(e);

    for (i = 0; i < net->n_links; i++) {
        int sa = state_of(net, net->links[i].a), sb = state_of(net, net->links[i].b);
        int *sl = link_slot[i];
        sl[0] = slot_of(net, sa, sa);
        sl[1] = sb >= 0 ? slot_of(net, sa, sb) : -1;
        sl[2] = sa >= 0 ? slot_of(net, sb, sa) : -1;
        sl[3] = slot_of(net, sb, sb);
        sl[4] = (sa >= 0 && sb < 0) ? slot_of(net, q_lost, sa) : -1;
        sl[5] = (sb >= 0 && sa < 0) ? slot_of(net, q_lost, sb) : -1;
    }
    for (i = 0, n = 0; i < net->n_sources; i++) {
        src_first[i] = n;
        for (k = 0; k < net->sources[i].n_nodes; k++) {
            int s = state_of(net, net->sources[i].nodes[k]);
            src_slot[n++] = slot_of(net, s, s);
            src_slot[n++] = slot_of(net, q_src, s);
            src_slot[n++] = slot_of(net, q_wire, s);
        }
    }
    src_first[net->n_sources] = n;
    return TP_OK;
}

/* Members of every coefficient group, and each group's total area. */
static tp_status build_groups(tp_network *net)
{
    tp_net_group *groups = own(net->groups);
    int i, g, *fill, *members;
    if (net->n_groups == 0)
        return TP_OK;
    net->group_links = members =
        malloc((size_t)(net->n_links > 0 ? net->n_links : 1) * sizeof *members);
    fill = calloc((size_t)net->n_groups, sizeof *fill);
    if (!members || !fill) {
        free(fill);
        return TP_ERR_NOMEM;
    }
    for (g = 0; g < net->n_groups; g++) {
        groups[g].count = 0;
        groups[g].area = 0.0;
    }
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        if (l->group < 0)
            continue;
        groups[l->group].count++;
        groups[l->group].area += l->area;
    }
    for (g = 0, i = 0; g < net->n_groups; g++) {
        groups[g].first = i;
        i += groups[g].count;
    }
    for (i = 0; i < net->n_links; i++) {
        int gi = net->links[i].group;
        if (gi >= 0)
            members[groups[gi].first + fill[gi]++] = i;
    }
    free(fill);
    return TP_OK;
}

tp_status tp_network_finish(tp_network *net)
{
    int i, n = 0, *free_nodes;
    for (i = 0; i < net->n_nodes; i++)
        if (net->nodes[i].capacity > 0)
            n++;
    net->n_free = n;
    net->free_nodes = free_nodes = malloc((size_t)(n > 0 ? n : 1) * sizeof *free_nodes);
    if (!free_nodes)
        return TP_ERR_NOMEM;
    for (i = 0, n = 0; i < net->n_nodes; i++) {
        if (net->nodes[i].capacity > 0) {
            tp_network_node_mut(net, i)->state = n;
            free_nodes[n++] = i;
        } else {
            tp_network_node_mut(net, i)->state = -1;
        }
    }
    if (build_groups(net) != TP_OK)
        return TP_ERR_NOMEM;
    return build_pattern(net);
}

void tp_network_initial_state(const tp_network *net, double *y)
{
    int i;
    for (i = 0; i < net->n_free; i++)
        y[i] = net->nodes[net->free_nodes[i]].t0;
    for (i = 0; i < TP_N_QUAD; i++)
        y[net->n_free + i] = 0.0;
}

void tp_network_temperatures(const tp_network *net, const double *y, double *t)
{
    int i;
    for (i = 0; i < net->n_nodes; i++) {
        int s = net->nodes[i].state;
        t[i] = s >= 0 ? y[s] : net->nodes[i].t0;
    }
}

/* ---- one link, one source ------------------------------------------------------------------ */

static double convective_flow(const tp_net_link *l, double ta, double tb)
{
    double h = l->correlated ? tp_convection_h(&l->conv, ta, tb, NULL) : l->h;
    return h * l->area * l->scale * (ta - tb);
}

double tp_network_link_flow(const tp_net_link *l, double ta, double tb, double *dqa, double *dqb)
{
    double q = 0.0, da = 0.0, db = 0.0, k;
    switch (l->law) {
    case TP_LAW_CONDUCTION:
        q = l->g * (ta - tb);
        da = l->g;
        db = -l->g;
        break;
    case TP_LAW_CONVECTION:
        q = convective_flow(l, ta, tb);
        if (!l->correlated) {
            da = l->h * l->area * l->scale;
            db = -da;
        } else if (dqa || dqb) {
            da = (convective_flow(l, ta + TP_NET_DH_STEP, tb) -
                  convective_flow(l, ta - TP_NET_DH_STEP, tb)) / (2.0 * TP_NET_DH_STEP);
            db = (convective_flow(l, ta, tb + TP_NET_DH_STEP) -
                  convective_flow(l, ta, tb - TP_NET_DH_STEP)) / (2.0 * TP_NET_DH_STEP);
        }
        break;
    case TP_LAW_RADIATION:
        k = l->area * l->scale;
        q = tp_radiation_flux(l->eps, ta, tb) * k;
        da = 4.0 * l->eps * TP_STEFAN_BOLTZMANN * k * ta * ta * ta;
        db = -4.0 * l->eps * TP_STEFAN_BOLTZMANN * k * tb * tb * tb;
        break;
    }
    if (dqa)
        *dqa = da;
    if (dqb)
        *dqb = db;
    return q;
}

double tp_network_link_conductance(const tp_net_link *l, double ta, double tb, double *h)
{
    double hh = 0.0, g = 0.0;
    switch (l->law) {
    case TP_LAW_CONDUCTION:
        g = l->g;
        break;
    case TP_LAW_CONVECTION:
        hh = (l->correlated ? tp_convection_h(&l->conv, ta, tb, NULL) : l->h) * l->scale;
        g = hh * l->area;
        break;
    case TP_LAW_RADIATION:
        hh = tp_radiation_h(l->eps, ta, tb) * l->scale;
        g = hh * l->area;
        break;
    }
    if (h)
        *h = hh;
    return g;
}

double tp_network_source_eval(const tp_net_source *s, const double *t, double duty, double *pk,
                              double *dpk, double *dtot, double *dwire, double *wire)
{
    int k;
    double total = 0.0;
    if (wire)
        *wire = 0.0;
    if (s->kind == TP_SRC_POWER) {
        for (k = 0; k < s->n_nodes; k++) {
            double p = duty * s->power * s->weights[k];
            if (pk)
                pk[k] = p;
            if (dpk)
                dpk[k] = 0.0;
            if (dtot)
                dtot[k] = 0.0;
            if (dwire)
                dwire[k] = 0.0;
            total += p;
        }
        return total;
    }
    {
        double r = 0.0, i_amp, rs = s->r_series, denom;
        for (k = 0; k < s->n_nodes; k++) {
            double rk = s->weights[k] * s->r0 * (1.0 + s->tempco * (t[s->nodes[k]] - s->tref));
            double floor_r = s->weights[k] * s->r0 * TP_NET_R_FLOOR;
            r += rk > floor_r ? rk : floor_r;
        }
        denom = r + rs;
        i_amp = s->supply / denom;
        for (k = 0; k < s->n_nodes; k++) {
            double raw = s->weights[k] * s->r0 * (1.0 + s->tempco * (t[s->nodes[k]] - s->tref));
            double floor_r = s->weights[k] * s->r0 * TP_NET_R_FLOOR;
            double rk = raw > floor_r ? raw : floor_r;
            double drk = raw > floor_r ? s->weights[k] * s->r0 * s->tempco : 0.0;
            double p = duty * i_amp * i_amp * rk;
            if (pk)
                pk[k] = p;
            /* dI/dT_k = -I dR_k / (R + Rs); the single-node case is exact, several nodes keep
             * the diagonal terms only (cross terms are second order for a sparse Newton). */
            if (dpk)
                dpk[k] = duty * i_amp * i_amp * drk * (1.0 - 2.0 * rk / denom);
            if (dtot)
                dtot[k] = duty * i_amp * i_amp * drk * (1.0 - 2.0 * r / denom);
            if (dwire)
                dwire[k] = -2.0 * duty * i_amp * i_amp * rs * drk / denom;
            total += p;
        }
        if (wire)
            *wire = duty * i_amp * i_amp * rs;
        return total;
    }
}

double tp_network_source_power(const tp_net_source *s, const double *t, double duty,
                               double *wire)
{
    return tp_network_source_eval(s, t, duty, NULL, NULL, NULL, NULL, wire);
}

void tp_network_source_scaled(const tp_net_source *s, double k, tp_net_source *out)
{
    if (out != s)
        *out = *s;
    if (s->kind == TP_SRC_ELECTRIC)
        out->r0 = s->r0 / k;
    else
        out->power = s->power * k;
    /* A heater as sold keeps r0 = rated_voltage^2 / rated_power. */
    out->rated_power = s->rated_power * k;
}

double tp_network_source_split(const tp_net_source *s, const double *t, double duty, double *pk)
{
    return tp_network_source_eval(s, t, duty, pk, NULL, NULL, NULL, NULL);
}

tp_status tp_network_flows_init(tp_flows *f, const tp_network *net)
{
    memset(f, 0, sizeof *f);
    f->q = calloc((size_t)net->n_nodes + 1, sizeof *f->q);
    f->src_power = calloc((size_t)net->n_sources + 1, sizeof *f->src_power);
    f->src_wire = calloc((size_t)net->n_sources + 1, sizeof *f->src_wire);
    if (!f->q || !f->src_power || !f->src_wire) {
        tp_network_flows_clear(f);
        return TP_ERR_NOMEM;
    }
    return TP_OK;
}

void tp_network_flows_clear(tp_flows *f)
{
    free(f->q);
    free(f->src_power);
    free(f->src_wire);
    memset(f, 0, sizeof *f);
}

/* The on-current of one electrical source at node temperatures t, A. */
static double source_current(const tp_net_source *s, const double *t)
{
    double r = 0.0;
    int k;
    for (k = 0; k < s->n_nodes; k++) {
        double rk = s->weights[k] * s->r0 * (1.0 + s->tempco * (t[s->nodes[k]] - s->tref));
        r += fmax(rk, s->weights[k] * s->r0 * TP_NET_R_FLOOR);
    }
    return s->supply / (r + s->r_series);
}

double tp_network_source_current(const tp_net_source *s, const double *t)
{
    return s->kind == TP_SRC_ELECTRIC ? source_current(s, t) : TP_UNSET;
}

double tp_network_current(const tp_network *net, const double *t)
{
    int i;
    if (net->has_control && net->sources[net->control.source].kind == TP_SRC_ELECTRIC)
        return source_current(&net->sources[net->control.source], t);
    for (i = 0; i < net->n_sources; i++)
        if (net->sources[i].kind == TP_SRC_ELECTRIC)
            return source_current(&net->sources[i], t);
    return TP_UNSET;
}

