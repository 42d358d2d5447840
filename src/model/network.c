/* The thermal network and its ODE.
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
 * with d the duty held by the controller (PWM averaged over a period).
 *
 * The Jacobian is analytic for the network structure; the temperature derivative of a
 * correlated convection coefficient is taken by a central difference of the correlation
 * (TP_DH_STEP), which keeps it consistent with the right-hand side. */
#include "network.h"

#include <limits.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "array.h"
#include "radiation.h"

#define TP_DH_STEP 1.0e-3   /* K, central-difference step for d(h A dT)/dT of correlations */
#define TP_R_FLOOR 1.0e-2   /* -, lowest R(T)/R0 accepted (a very negative tempco) */

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

static void fast_free(tp_net_fast **f);
static tp_status build_top(tp_network *net, tp_net_fast *f);
static tp_status build_fast(tp_network *net);
static int fast_rhs(const tp_network *net, const double *y, double *ydot);
static void fast_groups(const tp_network *net, const double *t, int derivs);
static void fast_temperatures(const tp_network *net, const double *y, double *t);
static double fast_q(const tp_network *net, int i, const double *t);
static double fast_surface(const tp_network *net, const double *t, double *map);
static int fast_top_ok(const tp_network *net);
static int fast_jacobian(const tp_network *net, const double *y, double *values, int use_secant);

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
        free(n->sources[i].nodes);
        free(n->sources[i].weights);
    }
    free(n->nodes);
    free(n->id_index);
    free(n->links);
    free(n->sources);
    free(n->free_nodes);
    free(n->duty);
    free(n->colptr);
    free(n->rowind);
    free(n->link_slot);
    free(n->src_slot);
    free(n->src_first);
    free(n->work);
    free(n->src_work);
    free(n->groups);
    free(n->group_links);
    fast_free(&n->fast);
    if (n->grid) {
        free(n->grid->layer_id);
        free(n->grid->cell);
        free(n->grid->layer_capacity);
        free(n->grid->top_area);
        free(n->grid->top_link);
        free(n->grid->from);
        tp_network_destroy(&n->grid->lumped);
        free(n->grid);
    }
    free(n);
    *net = NULL;
}

/* ---- copies ---------------------------------------------------------------------------------- */

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
        if (!mapped)
            return TP_ERR_NOMEM;
    }
    for (i = 0; i < n_changes; i++) {
        tp_net_change ch = changes[i];
        int uses_b = ch.kind == TP_CHANGE_ADD_CONDUCTION;
        if (ch.kind == TP_CHANGE_ADD_CONDUCTION || ch.kind == TP_CHANGE_ISOLATE) {
            if (!g->from || g->from[ch.a] < g->n_layers || (uses_b && g->from[ch.b] < g->n_layers))
                continue;
            ch.a = g->from[ch.a];
            if (uses_b)
                ch.b = g->from[ch.b];
        }
        mapped[m++] = ch;
    }
    st = tp_network_copy(g->lumped, mapped, m, &c->lumped);
    free(mapped);
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
            tp_net_link *l = &net->links[i];
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
            tp_net_link *l = &net->links[i];
            if (l->path != TP_PATH_TOP_CONV || !l->correlated)
                continue;
            l->conv.airflow = ch->value;
            if (l->group >= 0 && l->group < net->n_groups)
                net->groups[l->group].conv.airflow = ch->value;
        }
        return TP_OK;
    case TP_CHANGE_TOP_CAPACITY:
        if (net->grid) {
            tp_net_grid *g = net->grid;
            int c, n = g->nx * g->ny, top = (g->n_layers - 1) * n;
            double area = 0.0;
            for (c = 0; c < n; c++)
                if (g->cell[top + c] >= 0)
                    area += g->top_area[c];
            for (c = 0; c < n && area > 0; c++) {
                int node = g->cell[top + c];
                if (node < 0 || !(g->top_area[c] > 0))
                    continue;
                net->nodes[node].capacity += ch->value * g->top_area[c] / area;
                ok = 1;
            }
            if (ok)
                g->layer_capacity[g->n_layers - 1] += ch->value;
            return ok ? TP_OK : TP_ERR_CONFIG;
        }
        if (net->top_node < 0 || net->nodes[net->top_node].capacity <= 0)
            return TP_ERR_CONFIG;
        net->nodes[net->top_node].capacity += ch->value;
        return TP_OK;
    }
    return TP_ERR_CONFIG;
}

tp_status tp_network_copy(const tp_network *src, const tp_net_change *changes, int n_changes,
                          tp_network **out)
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
        tp_net_source *s = &net->sources[i];
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
    net->run = src->run;
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
        free(net->id_index);
        net->id_index = slots;
        net->id_slots = n_slots;
    }
    index_put(net->id_index, net->id_slots, net->nodes[node].id, node);
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
    node = &net->nodes[n];
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
    l = &net->links[net->n_links++];
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
    if (reserve(&net->sources, net->n_sources, &net->cap_sources, 16,
                sizeof *net->sources) != 0)
        return NULL;
    s = &net->sources[net->n_sources];
    memset(s, 0, sizeof *s);
    snprintf(s->id, sizeof s->id, "%s", id);
    s->nodes = malloc(sizeof *s->nodes);
    s->weights = malloc(sizeof *s->weights);
    if (!s->nodes || !s->weights) {
        free(s->nodes);
        free(s->weights);
        return NULL;
    }
    s->nodes[0] = node;
    s->weights[0] = 1.0;
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
    free(src->nodes);
    free(src->weights);
    src->nodes = nn;
    src->weights = ww;
    src->n_nodes = n;
    return TP_OK;
}

int tp_network_add_group(tp_network *net, const tp_convection_case *conv, int sink)
{
    tp_net_group *g;
    if (reserve(&net->groups, net->n_groups, &net->cap_groups, 16,
                sizeof *net->groups) != 0)
        return -1;
    g = &net->groups[net->n_groups];
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
static void bucket_sort(void *base, int n, size_t size, int n_keys,
                        int (*key)(const void *), int (*cmp)(const void *, const void *))
{
    int *start = calloc((size_t)n_keys + 1, sizeof *start), i, k;
    char *tmp = malloc((size_t)(n > 0 ? n : 1) * size), *b = base, *x = malloc(size);
    if (!start || !tmp || !x) {
        free(start);
        free(tmp);
        free(x);
        qsort(base, (size_t)n, size, cmp);
        return;
    }
    for (i = 0; i < n; i++)
        start[key(b + (size_t)i * size) + 1]++;
    for (k = 0; k < n_keys; k++)
        start[k + 1] += start[k];
    for (i = 0; i < n; i++) {
        int kk = key(b + (size_t)i * size);
        memcpy(tmp + (size_t)start[kk]++ * size, b + (size_t)i * size, size);
    }
    /* start[k] is now the end of key k's run */
    for (k = 0, i = 0; k < n_keys; k++) {
        int len = start[k] - i, a, c;
        if (len > 32) {
            qsort(tmp + (size_t)i * size, (size_t)len, size, cmp);
        } else {
            for (a = i + 1; a < start[k]; a++) {
                memcpy(x, tmp + (size_t)a * size, size);
                for (c = a; c > i && cmp(tmp + (size_t)(c - 1) * size, x) > 0; c--)
                    memcpy(tmp + (size_t)c * size, tmp + (size_t)(c - 1) * size, size);
                memcpy(tmp + (size_t)c * size, x, size);
            }
        }
        i = start[k];
    }
    memcpy(base, tmp, (size_t)n * size);
    free(start);
    free(tmp);
    free(x);
}

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
    bucket_sort(e, n, sizeof *e, n_state, entry_col, entry_cmp);
    for (i = 0, u = 0; i < n; i++)
        if (u == 0 || e[i].col != e[u - 1].col || e[i].row != e[u - 1].row)
            e[u++] = e[i];
    net->nnz = u;
    net->colptr = calloc((size_t)n_state + 1, sizeof *net->colptr);
    net->rowind = malloc((size_t)(u > 0 ? u : 1) * sizeof *net->rowind);
    net->link_slot = malloc((size_t)(net->n_links > 0 ? net->n_links : 1) *
                            sizeof *net->link_slot);
    net->src_first = malloc((size_t)(net->n_sources + 1) * sizeof *net->src_first);
    net->src_slot = malloc((size_t)(3 * total_src_nodes + 1) * sizeof *net->src_slot);
    if (!net->colptr || !net->rowind || !net->link_slot || !net->src_first || !net->src_slot) {
        free(e);
        return TP_ERR_NOMEM;
    }
    for (i = 0; i < u; i++) {
        net->colptr[e[i].col + 1]++;
        net->rowind[i] = e[i].row;
    }
    for (i = 0; i < n_state; i++)
        net->colptr[i + 1] += net->colptr[i];
    free(e);

    for (i = 0; i < net->n_links; i++) {
        int sa = state_of(net, net->links[i].a), sb = state_of(net, net->links[i].b);
        int *sl = net->link_slot[i];
        sl[0] = slot_of(net, sa, sa);
        sl[1] = sb >= 0 ? slot_of(net, sa, sb) : -1;
        sl[2] = sa >= 0 ? slot_of(net, sb, sa) : -1;
        sl[3] = slot_of(net, sb, sb);
        sl[4] = (sa >= 0 && sb < 0) ? slot_of(net, q_lost, sa) : -1;
        sl[5] = (sb >= 0 && sa < 0) ? slot_of(net, q_lost, sb) : -1;
    }
    for (i = 0, n = 0; i < net->n_sources; i++) {
        net->src_first[i] = n;
        for (k = 0; k < net->sources[i].n_nodes; k++) {
            int s = state_of(net, net->sources[i].nodes[k]);
            net->src_slot[n++] = slot_of(net, s, s);
            net->src_slot[n++] = slot_of(net, q_src, s);
            net->src_slot[n++] = slot_of(net, q_wire, s);
        }
    }
    net->src_first[net->n_sources] = n;
    return TP_OK;
}

/* Members of every coefficient group, and each group's total area. */
static tp_status build_groups(tp_network *net)
{
    int i, g, *fill;
    if (net->n_groups == 0)
        return TP_OK;
    net->group_links = malloc((size_t)(net->n_links > 0 ? net->n_links : 1) *
                              sizeof *net->group_links);
    fill = calloc((size_t)net->n_groups, sizeof *fill);
    if (!net->group_links || !fill) {
        free(fill);
        return TP_ERR_NOMEM;
    }
    for (g = 0; g < net->n_groups; g++) {
        net->groups[g].count = 0;
        net->groups[g].area = 0.0;
    }
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        if (l->group < 0)
            continue;
        net->groups[l->group].count++;
        net->groups[l->group].area += l->area;
    }
    for (g = 0, i = 0; g < net->n_groups; g++) {
        net->groups[g].first = i;
        i += net->groups[g].count;
    }
    for (i = 0; i < net->n_links; i++) {
        int gi = net->links[i].group;
        if (gi >= 0)
            net->group_links[net->groups[gi].first + fill[gi]++] = i;
    }
    free(fill);
    return TP_OK;
}

tp_status tp_network_finish(tp_network *net)
{
    int i, n = 0, most = 1;
    for (i = 0; i < net->n_nodes; i++)
        if (net->nodes[i].capacity > 0)
            n++;
    net->n_free = n;
    net->free_nodes = malloc((size_t)(n > 0 ? n : 1) * sizeof *net->free_nodes);
    net->duty = malloc((size_t)(net->n_sources > 0 ? net->n_sources : 1) * sizeof *net->duty);
    net->work = malloc((size_t)(net->n_nodes > 0 ? net->n_nodes : 1) * sizeof *net->work);
    for (i = 0; i < net->n_sources; i++)
        if (net->sources[i].n_nodes > most)
            most = net->sources[i].n_nodes;
    net->src_work = malloc((size_t)most * 3 * sizeof *net->src_work);
    if (!net->free_nodes || !net->duty || !net->work || !net->src_work)
        return TP_ERR_NOMEM;
    for (i = 0, n = 0; i < net->n_nodes; i++) {
        if (net->nodes[i].capacity > 0) {
            net->nodes[i].state = n;
            net->free_nodes[n++] = i;
        } else {
            net->nodes[i].state = -1;
        }
    }
    for (i = 0; i < net->n_sources; i++)
        net->duty[i] = net->sources[i].max_duty;
    if (build_groups(net) != TP_OK || build_fast(net) != TP_OK)
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
    if (net->fast) {
        fast_temperatures(net, y, t);
        return;
    }
    for (i = 0; i < net->n_nodes; i++) {
        int s = net->nodes[i].state;
        t[i] = s >= 0 ? y[s] : net->nodes[i].t0;
    }
}

/* ---- flows ---------------------------------------------------------------------------------- */

/* Each coefficient group's h at node temperatures `t`: the correlation at the area-weighted mean
 * temperature of its members' surfaces against the sink. `derivs` 1 also takes dh/dT of the
 * mean and of the sink by central differences (TP_DH_STEP), 2 the secant coefficient (the
 * difference kept at least TP_SECANT_MIN, as for single links). */
#define TP_SECANT_MIN 1.0 /* K */
static void group_coefficients(tp_net_group *gr, double tm, double tb, int derivs)
{
    gr->h = tp_convection_h(&gr->conv, tm, tb, NULL);
    if (derivs == 1) {
        gr->dh_ds = (tp_convection_h(&gr->conv, tm + TP_DH_STEP, tb, NULL) -
                     tp_convection_h(&gr->conv, tm - TP_DH_STEP, tb, NULL)) /
                    (2.0 * TP_DH_STEP);
        gr->dh_db = (tp_convection_h(&gr->conv, tm, tb + TP_DH_STEP, NULL) -
                     tp_convection_h(&gr->conv, tm, tb - TP_DH_STEP, NULL)) /
                    (2.0 * TP_DH_STEP);
    } else if (derivs == 2) {
        double dt = tm - tb;
        gr->h_secant =
            fabs(dt) < TP_SECANT_MIN
                ? tp_convection_h(&gr->conv, tb + (dt < 0 ? -TP_SECANT_MIN : TP_SECANT_MIN), tb,
                                  NULL)
                : gr->h;
    }
}

static void eval_groups(const tp_network *net, const double *t, int derivs)
{
    int g, k;
    for (g = 0; g < net->n_groups; g++) {
        tp_net_group *gr = &net->groups[g];
        double sum = 0.0, tm, tb = t[gr->sink];
        for (k = 0; k < gr->count; k++) {
            const tp_net_link *l = &net->links[net->group_links[gr->first + k]];
            sum += l->area * t[l->a];
        }
        tm = gr->area > 0 ? sum / gr->area : tb;
        group_coefficients(gr, tm, tb, derivs);
    }
}

/* The flow through link i at node temperatures `t`; group members use their group's h from
 * the last eval_groups. */
static double link_q(const tp_network *net, int i, const double *t)
{
    const tp_net_link *l = &net->links[i];
    if (l->group >= 0)
        return net->groups[l->group].h * l->area * l->scale * (t[l->a] - t[l->b]);
    return tp_network_link_flow(l, t[l->a], t[l->b], NULL, NULL);
}

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
            da = (convective_flow(l, ta + TP_DH_STEP, tb) -
                  convective_flow(l, ta - TP_DH_STEP, tb)) / (2.0 * TP_DH_STEP);
            db = (convective_flow(l, ta, tb + TP_DH_STEP) -
                  convective_flow(l, ta, tb - TP_DH_STEP)) / (2.0 * TP_DH_STEP);
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

/* Per-node power of a source and its derivatives. `pk` (n_nodes of the source) receives the
 * power landing in each node, `dpk` d(pk)/dT_k, `dtot` d(total)/dT_k, `dwire` d(wire)/dT_k
 * (any of the derivative arrays may be NULL). Returns the total; *wire the wiring loss. */
static double source_eval(const tp_net_source *s, const double *t, double duty, double *pk,
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
            double floor_r = s->weights[k] * s->r0 * TP_R_FLOOR;
            r += rk > floor_r ? rk : floor_r;
        }
        denom = r + rs;
        i_amp = s->supply / denom;
        for (k = 0; k < s->n_nodes; k++) {
            double raw = s->weights[k] * s->r0 * (1.0 + s->tempco * (t[s->nodes[k]] - s->tref));
            double floor_r = s->weights[k] * s->r0 * TP_R_FLOOR;
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
    return source_eval(s, t, duty, NULL, NULL, NULL, NULL, wire);
}

/* Add every source's power into ydot (W, before the division by capacities) and its totals
 * into *src and *wire. */
static void add_sources(const tp_network *net, const double *t, double *ydot, double *src,
                        double *wire)
{
    int i, k;
    for (i = 0; i < net->n_sources; i++) {
        const tp_net_source *s = &net->sources[i];
        double w = 0.0, *pk = net->src_work;
        *src += source_eval(s, t, net->duty[i], pk, NULL, NULL, NULL, &w);
        for (k = 0; k < s->n_nodes; k++) {
            int st = net->nodes[s->nodes[k]].state;
            if (st >= 0)
                ydot[st] += pk[k];
        }
        *wire += w;
    }
}

int tp_network_rhs(const tp_network *net, const double *y, double *ydot)
{
    double *t = net->work, lost = 0.0, src = 0.0, wire = 0.0;
    int i, nf = net->n_free;
    if (net->fast)
        return fast_rhs(net, y, ydot);
    tp_network_temperatures(net, y, t);
    for (i = 0; i < nf; i++)
        ydot[i] = 0.0;
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        int sa = net->nodes[l->a].state, sb = net->nodes[l->b].state;
        double q = tp_network_link_flow(l, t[l->a], t[l->b], NULL, NULL);
        if (sa >= 0)
            ydot[sa] -= q;
        else
            lost -= q;
        if (sb >= 0)
            ydot[sb] += q;
        else
            lost += q;
    }
    add_sources(net, t, ydot, &src, &wire);
    for (i = 0; i < nf; i++) {
        ydot[i] /= net->nodes[net->free_nodes[i]].capacity;
        if (!isfinite(ydot[i]))
            return 1;
    }
    ydot[nf + TP_Q_SOURCE] = src;
    ydot[nf + TP_Q_LOST] = lost;
    ydot[nf + TP_Q_WIRE] = wire;
    return isfinite(src) && isfinite(lost) && isfinite(wire) ? 0 : 1;
}

double tp_network_source_split(const tp_net_source *s, const double *t, double duty, double *pk)
{
    return source_eval(s, t, duty, pk, NULL, NULL, NULL, NULL);
}

/* The secant conductance Q / (T_a - T_b) of a link, with the difference kept at least
 * TP_SECANT_MIN so laws that vanish at equal temperatures still couple their nodes. */
static void secant(const tp_net_link *l, double ta, double tb, double *dqa, double *dqb)
{
    double dt = ta - tb, q;
    if (fabs(dt) < TP_SECANT_MIN) {
        dt = dt < 0 ? -TP_SECANT_MIN : TP_SECANT_MIN;
        q = tp_network_link_flow(l, tb + dt, tb, NULL, NULL);
    } else {
        q = tp_network_link_flow(l, ta, tb, NULL, NULL);
    }
    *dqa = q / dt;
    *dqb = -*dqa;
}

int tp_network_jacobian(const tp_network *net, const double *y, double *values)
{
    return tp_network_jacobian_mode(net, y, values, 0);
}

/* A link's derivatives (W/K) into the Jacobian's slots: rows of free nodes divided by their
 * capacities, the energy total of fixed ends as they are. */
static void scatter_link(double *values, const int *sl, double dqa, double dqb, double ca,
                         double cb)
{
    if (sl[0] >= 0)
        values[sl[0]] -= dqa / ca;
    if (sl[1] >= 0)
        values[sl[1]] -= dqb / ca;
    if (sl[2] >= 0)
        values[sl[2]] += dqa / cb;
    if (sl[3] >= 0)
        values[sl[3]] += dqb / cb;
    if (sl[4] >= 0)
        values[sl[4]] += dqa;
    if (sl[5] >= 0)
        values[sl[5]] -= dqb;
}

/* Every source's derivatives into the Jacobian. */
static void scatter_sources(const tp_network *net, const double *t, double *values)
{
    int i, k;
    for (i = 0; i < net->n_sources; i++) {
        const tp_net_source *s = &net->sources[i];
        const int *sl = net->src_slot + net->src_first[i];
        double *buf = net->src_work;
        source_eval(s, t, net->duty[i], NULL, buf, buf + s->n_nodes, buf + 2 * s->n_nodes, NULL);
        for (k = 0; k < s->n_nodes; k++) {
            double c = net->nodes[s->nodes[k]].capacity;
            if (sl[3 * k] >= 0)
                values[sl[3 * k]] += buf[k] / c;
            if (sl[3 * k + 1] >= 0)
                values[sl[3 * k + 1]] += buf[s->n_nodes + k];
            if (sl[3 * k + 2] >= 0)
                values[sl[3 * k + 2]] += buf[2 * s->n_nodes + k];
        }
    }
}

int tp_network_jacobian_mode(const tp_network *net, const double *y, double *values, int use_secant)
{
    double *t = net->work;
    int i;
    if (net->fast)
        return fast_jacobian(net, y, values, use_secant);
    tp_network_temperatures(net, y, t);
    memset(values, 0, (size_t)net->nnz * sizeof *values);
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        const int *sl = net->link_slot[i];
        double dqa, dqb, ca = net->nodes[l->a].capacity, cb = net->nodes[l->b].capacity;
        if (use_secant)
            secant(l, t[l->a], t[l->b], &dqa, &dqb);
        else
            tp_network_link_flow(l, t[l->a], t[l->b], &dqa, &dqb);
        scatter_link(values, sl, dqa, dqb, ca, cb);
    }
    scatter_sources(net, t, values);
    for (i = 0; i < net->nnz; i++)
        if (!isfinite(values[i]))
            return 1;
    return 0;
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

void tp_network_flows(const tp_network *net, const double *t, tp_flows *f)
{
    int i, k;
    memset(f->q, 0, (size_t)net->n_nodes * sizeof *f->q);
    memset(f->path, 0, sizeof f->path);
    f->lost = 0.0;
    if (net->n_groups > 0)
        eval_groups(net, t, 0);
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        double q = link_q(net, i, t);
        int fa = net->nodes[l->a].state < 0, fb = net->nodes[l->b].state < 0;
        f->q[l->a] -= q;
        f->q[l->b] += q;
        if (fb && !fa)
            f->lost += q;
        else if (fa && !fb)
            f->lost -= q;
        /* Loss paths point away from the plate: the surface is `a`, except in raw links that
         * name the fixed node first. */
        if (l->path != TP_PATH_INTERNAL)
            f->path[l->path] += (fa && !fb) ? -q : q;
    }
    for (i = 0; i < net->n_sources; i++) {
        const tp_net_source *s = &net->sources[i];
        double *pk = net->src_work;
        f->src_power[i] = source_eval(s, t, net->duty[i], pk, NULL, NULL, NULL,
                                      &f->src_wire[i]);
        for (k = 0; k < s->n_nodes; k++)
            f->q[s->nodes[k]] += pk[k];
    }
}

/* The surface of each top cell of a gridded plate into map (may be NULL); returns the
 * area-weighted mean. */
static double surface_cells(const tp_network *net, const double *t, double *map)
{
    const tp_net_grid *g = net->grid;
    int c, n = g->nx * g->ny, top = (g->n_layers - 1) * n;
    double sum = 0.0, area = 0.0;
    if (net->fast && fast_top_ok(net))
        return fast_surface(net, t, map);
    if (net->n_groups > 0 && net->fast)
        fast_groups(net, t, 0);
    else if (net->n_groups > 0)
        eval_groups(net, t, 0);
    for (c = 0; c < n; c++) {
        int node = g->cell[top + c], k;
        double q = 0.0, ts;
        if (node < 0 || !(g->top_area[c] > 0)) {
            if (map)
                map[c] = TP_UNSET;
            continue;
        }
        for (k = 0; k < 2; k++)
            if (g->top_link[2 * c + k] >= 0)
                q += net->fast ? fast_q(net, g->top_link[2 * c + k], t)
                               : link_q(net, g->top_link[2 * c + k], t);
        ts = t[node] - q / g->top_area[c] * net->top_half_r;
        if (map)
            map[c] = ts;
        sum += g->top_area[c] * ts;
        area += g->top_area[c];
    }
    return area > 0 ? sum / area : TP_UNSET;
}

double tp_network_surface_map(const tp_network *net, const double *t, double *map)
{
    return net->grid ? surface_cells(net, t, map) : TP_UNSET;
}

double tp_network_surface(const tp_network *net, const double *t)
{
    int i;
    double q = 0.0;
    if (net->grid)
        return surface_cells(net, t, NULL);
    if (net->top_node < 0)
        return TP_UNSET;
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        if (l->a == net->top_node && (l->path == TP_PATH_TOP_CONV || l->path == TP_PATH_TOP_RAD))
            q += tp_network_link_flow(l, t[l->a], t[l->b], NULL, NULL);
    }
    return t[net->top_node] - q / net->top_area * net->top_half_r;
}

/* The on-current of one electrical source at node temperatures t, A. */
static double source_current(const tp_net_source *s, const double *t)
{
    double r = 0.0;
    int k;
    for (k = 0; k < s->n_nodes; k++) {
        double rk = s->weights[k] * s->r0 * (1.0 + s->tempco * (t[s->nodes[k]] - s->tref));
        r += fmax(rk, s->weights[k] * s->r0 * TP_R_FLOOR);
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

void tp_network_sample_sources(const tp_network *net, const double *t, double *power,
                               double *wire, double *current)
{
    int i, k, cur = -1;
    *wire = 0.0;
    if (!net->fast) {
        for (i = 0; i < net->n_sources; i++) {
            double w = 0.0;
            power[i] = tp_network_source_power(&net->sources[i], t, net->duty[i], &w);
            *wire += w;
        }
        *current = tp_network_current(net, t);
        return;
    }
    /* The source whose current tp_network_current reports. */
    for (i = 0; i < net->n_sources && cur < 0; i++) {
        int j = net->has_control && i == 0 ? net->control.source : i;
        if (net->sources[j].kind == TP_SRC_ELECTRIC)
            cur = j;
    }
    *current = TP_UNSET;
    for (i = 0; i < net->n_sources; i++) {
        const tp_net_source *s = &net->sources[i];
        double d = net->duty[i], total = 0.0, r = 0.0, amp;
        if (s->kind == TP_SRC_POWER) {
            for (k = 0; k < s->n_nodes; k++)
                total += d * s->power * s->weights[k];
            power[i] = total;
            continue;
        }
        for (k = 0; k < s->n_nodes; k++) {
            double wr = s->weights[k] * s->r0;
            double raw = wr * (1.0 + s->tempco * (t[s->nodes[k]] - s->tref));
            r += raw > wr * TP_R_FLOOR ? raw : wr * TP_R_FLOOR;
        }
        amp = s->supply / (r + s->r_series);
        if (i == cur)
            *current = amp;
        power[i] = d * amp * amp * r; /* the sum of d I^2 R_k over the nodes */
        *wire += d * amp * amp * s->r_series;
    }
}

/* ---- compact evaluation ---------------------------------------------------------------------
 * A network spends most of its time in the right-hand side, so its links are copied into
 * compact arrays by kind (gridded networks first; every network since it measured 7 % less
 * CPU on the 24 V demo's sweep). The linear ones (conduction, fixed-coefficient convection)
 * form one sparse matrix L over the states, with the conductance to fixed nodes on the side:
 *   sum_links Q into i = sum_j L_ij T_j + b_i,  L_ij = G_ij (j != i),  L_ii = -sum_j G_ij - g_i,
 *   g_i = sum of G to fixed nodes,  b_i = sum of G T_fixed,
 * so their part is one matrix-vector product. Radiation, coefficient-group and other links keep
 * short records. The accumulation order differs from the generic loop, so results agree with
 * it to rounding, not bit for bit. tp_network_refresh rebuilds the arrays after a change to
 * the links, capacities or fixed temperatures. */

enum { FAST_LINEAR, FAST_RADIATION, FAST_GROUP, FAST_OTHER };

typedef struct fast_link {
    int a, b;     /* node indices */
    int sa, sb;   /* their states, -1 for fixed nodes */
    int kind;
    int group;
    double k;     /* linear: G, W/K; radiation: eps sigma A s, W/K4; group: A s, m2 */
} fast_link;

struct tp_net_fast {
    fast_link *link;      /* n_links, in link order */
    int *rad, n_rad;      /* radiation links */
    int *grp, n_grp;      /* coefficient-group links */
    int *oth, n_oth;      /* other links (correlated convection of their own) */
    int *rowptr, *col;    /* L over the states (CSR) */
    double *val;
    double *gfix, *bfix;  /* per state: g_i (W/K) and b_i (W) */
    double *inv_cap;      /* per state: 1 / C, K/J */
    int *fixed, n_fixed;  /* the fixed nodes */
    int *gnode;           /* group members by group (as net->group_links): surface node */
    double *garea;        /* and area, m2 */
    int *src_state;       /* the state of every source's every node (-1 fixed) */
    int *src_first;       /* n_sources + 1: where each source's nodes start in src_state */
    /* The working surface, cell by cell (gridded plates whose top faces are a convection group
     * and radiation, the case tp_grid_refine builds): */
    int top_ok;           /* 1 when the arrays below describe every top cell */
    int *top_node;        /* nx * ny: the top layer's node (-1 none) */
    int *top_sink;        /* the node the face convects to / radiates to */
    int *top_rsink;
    int *top_group;       /* the convection group */
    double *top_kc;       /* A s of the convection link, m2 */
    double *top_kr;       /* eps sigma A s of the radiation link, W/K4 */
    double *top_w;        /* t / (2 k A): surface drop per watt leaving the face, K/W */
};

static void fast_free(tp_net_fast **f)
{
    if (!f || !*f)
        return;
    free((*f)->link);
    free((*f)->rad);
    free((*f)->grp);
    free((*f)->oth);
    free((*f)->rowptr);
    free((*f)->col);
    free((*f)->val);
    free((*f)->gfix);
    free((*f)->bfix);
    free((*f)->inv_cap);
    free((*f)->fixed);
    free((*f)->gnode);
    free((*f)->garea);
    free((*f)->src_state);
    free((*f)->src_first);
    free((*f)->top_node);
    free((*f)->top_sink);
    free((*f)->top_rsink);
    free((*f)->top_group);
    free((*f)->top_kc);
    free((*f)->top_kr);
    free((*f)->top_w);
    free(*f);
    *f = NULL;
}

/* An entry of L while it is assembled. */
typedef struct lin_entry {
    int row, col;
    double v;
} lin_entry;

static int lin_cmp(const void *pa, const void *pb)
{
    const lin_entry *a = pa, *b = pb;
    if (a->row != b->row)
        return a->row < b->row ? -1 : 1;
    return a->col < b->col ? -1 : a->col > b->col;
}

static int lin_row(const void *p)
{
    return ((const lin_entry *)p)->row;
}

/* L, g and b from the linear links. */
static tp_status build_linear(tp_network *net, tp_net_fast *f)
{
    int i, m = 0, u, nf = net->n_free;
    lin_entry *e = malloc((size_t)(4 * net->n_links + nf + 1) * sizeof *e);
    if (!e)
        return TP_ERR_NOMEM;
    for (i = 0; i < net->n_links; i++) {
        const fast_link *l = &f->link[i];
        if (l->kind != FAST_LINEAR)
            continue;
        if (l->sa >= 0 && l->sb >= 0) {
            e[m++] = (lin_entry){l->sa, l->sa, -l->k};
            e[m++] = (lin_entry){l->sa, l->sb, l->k};
            e[m++] = (lin_entry){l->sb, l->sb, -l->k};
            e[m++] = (lin_entry){l->sb, l->sa, l->k};
        } else if (l->sa >= 0) {
            f->gfix[l->sa] += l->k;
            f->bfix[l->sa] += l->k * net->nodes[l->b].t0;
        } else if (l->sb >= 0) {
            f->gfix[l->sb] += l->k;
            f->bfix[l->sb] += l->k * net->nodes[l->a].t0;
        }
    }
    for (i = 0; i < nf; i++)
        e[m++] = (lin_entry){i, i, -f->gfix[i]};
    bucket_sort(e, m, sizeof *e, nf, lin_row, lin_cmp);
    for (i = 0, u = 0; i < m; i++) {
        if (u > 0 && e[u - 1].row == e[i].row && e[u - 1].col == e[i].col)
            e[u - 1].v += e[i].v;
        else
            e[u++] = e[i];
    }
    f->rowptr = calloc((size_t)nf + 1, sizeof *f->rowptr);
    f->col = malloc((size_t)(u > 0 ? u : 1) * sizeof *f->col);
    f->val = malloc((size_t)(u > 0 ? u : 1) * sizeof *f->val);
    if (!f->rowptr || !f->col || !f->val) {
        free(e);
        return TP_ERR_NOMEM;
    }
    for (i = 0; i < u; i++) {
        f->rowptr[e[i].row + 1]++;
        f->col[i] = e[i].col;
        f->val[i] = e[i].v;
    }
    for (i = 0; i < nf; i++)
        f->rowptr[i + 1] += f->rowptr[i];
    free(e);
    return TP_OK;
}

static tp_status build_fast(tp_network *net)
{
    tp_net_fast *f = calloc(1, sizeof *f);
    int i, nl = net->n_links > 0 ? net->n_links : 1, nf = net->n_free > 0 ? net->n_free : 1;
    if (!f)
        return TP_ERR_NOMEM;
    net->fast = f;
    f->link = malloc((size_t)nl * sizeof *f->link);
    f->rad = malloc((size_t)nl * sizeof *f->rad);
    f->grp = malloc((size_t)nl * sizeof *f->grp);
    f->oth = malloc((size_t)nl * sizeof *f->oth);
    f->gfix = calloc((size_t)nf, sizeof *f->gfix);
    f->bfix = calloc((size_t)nf, sizeof *f->bfix);
    f->inv_cap = malloc((size_t)nf * sizeof *f->inv_cap);
    f->fixed = malloc((size_t)(net->n_nodes - net->n_free + 1) * sizeof *f->fixed);
    f->gnode = malloc((size_t)nl * sizeof *f->gnode);
    f->garea = malloc((size_t)nl * sizeof *f->garea);
    if (!f->link || !f->rad || !f->grp || !f->oth || !f->gfix || !f->bfix || !f->inv_cap ||
        !f->fixed || !f->gnode || !f->garea)
        return TP_ERR_NOMEM;
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        fast_link *c = &f->link[i];
        c->a = l->a;
        c->b = l->b;
        c->sa = net->nodes[l->a].state;
        c->sb = net->nodes[l->b].state;
        c->group = l->group;
        switch (l->law) {
        case TP_LAW_CONDUCTION:
            c->kind = FAST_LINEAR;
            c->k = l->g;
            break;
        case TP_LAW_CONVECTION:
            c->kind = l->group >= 0 ? FAST_GROUP : l->correlated ? FAST_OTHER : FAST_LINEAR;
            c->k = l->group >= 0 ? l->area * l->scale : l->h * l->area * l->scale;
            break;
        case TP_LAW_RADIATION:
            c->kind = FAST_RADIATION;
            c->k = l->eps * TP_STEFAN_BOLTZMANN * l->area * l->scale;
            break;
        }
        if (c->kind == FAST_RADIATION)
            f->rad[f->n_rad++] = i;
        else if (c->kind == FAST_GROUP)
            f->grp[f->n_grp++] = i;
        else if (c->kind == FAST_OTHER)
            f->oth[f->n_oth++] = i;
    }
    for (i = 0; i < net->n_free; i++)
        f->inv_cap[i] = 1.0 / net->nodes[net->free_nodes[i]].capacity;
    for (i = 0; i < net->n_nodes; i++)
        if (net->nodes[i].state < 0)
            f->fixed[f->n_fixed++] = i;
    for (i = 0; net->group_links && i < net->n_links; i++) {
        f->gnode[i] = 0;
        f->garea[i] = 0.0;
    }
    for (i = 0; i < net->n_groups; i++) {
        int k;
        for (k = net->groups[i].first; k < net->groups[i].first + net->groups[i].count; k++) {
            const tp_net_link *l = &net->links[net->group_links[k]];
            f->gnode[k] = l->a;
            f->garea[k] = l->area;
        }
    }
    f->src_first = malloc((size_t)(net->n_sources + 1) * sizeof *f->src_first);
    if (!f->src_first)
        return TP_ERR_NOMEM;
    f->src_first[0] = 0;
    for (i = 0; i < net->n_sources; i++)
        f->src_first[i + 1] = f->src_first[i] + net->sources[i].n_nodes;
    f->src_state = malloc((size_t)(f->src_first[net->n_sources] + 1) * sizeof *f->src_state);
    if (!f->src_state)
        return TP_ERR_NOMEM;
    for (i = 0; i < net->n_sources; i++) {
        int k;
        for (k = 0; k < net->sources[i].n_nodes; k++)
            f->src_state[f->src_first[i] + k] = net->nodes[net->sources[i].nodes[k]].state;
    }
    if (net->grid && build_top(net, f) != TP_OK)
        return TP_ERR_NOMEM;
    return build_linear(net, f);
}

/* The per-cell arrays of the working surface, when every top cell has a grouped convection link
 * and a radiation link (otherwise the general evaluation is used). */
static tp_status build_top(tp_network *net, tp_net_fast *f)
{
    const tp_net_grid *g = net->grid;
    int c, n = g->nx * g->ny, top = (g->n_layers - 1) * n;
    f->top_node = malloc((size_t)n * sizeof *f->top_node);
    f->top_sink = malloc((size_t)n * sizeof *f->top_sink);
    f->top_rsink = malloc((size_t)n * sizeof *f->top_rsink);
    f->top_group = malloc((size_t)n * sizeof *f->top_group);
    f->top_kc = malloc((size_t)n * sizeof *f->top_kc);
    f->top_kr = malloc((size_t)n * sizeof *f->top_kr);
    f->top_w = malloc((size_t)n * sizeof *f->top_w);
    if (!f->top_node || !f->top_sink || !f->top_rsink || !f->top_group || !f->top_kc ||
        !f->top_kr || !f->top_w)
        return TP_ERR_NOMEM;
    f->top_ok = 1;
    for (c = 0; c < n; c++) {
        int lc = g->top_link[2 * c], lr = g->top_link[2 * c + 1];
        f->top_node[c] = g->cell[top + c];
        if (f->top_node[c] < 0 || !(g->top_area[c] > 0))
            continue;
        if (lc < 0 || lr < 0 || f->link[lc].kind != FAST_GROUP ||
            f->link[lr].kind != FAST_RADIATION) {
            f->top_ok = 0;
            return TP_OK;
        }
        f->top_sink[c] = f->link[lc].b;
        f->top_rsink[c] = f->link[lr].b;
        f->top_group[c] = f->link[lc].group;
        f->top_kc[c] = f->link[lc].k;
        f->top_kr[c] = f->link[lr].k;
        f->top_w[c] = net->top_half_r / g->top_area[c];
    }
    return TP_OK;
}

void tp_network_refresh(tp_network *net)
{
    int g, k;
    if (!net->fast)
        return;
    for (g = 0; g < net->n_groups; g++) {
        net->groups[g].area = 0.0;
        for (k = net->groups[g].first; k < net->groups[g].first + net->groups[g].count; k++)
            net->groups[g].area += net->links[net->group_links[k]].area;
    }
    fast_free(&net->fast);
    if (build_fast(net) != TP_OK)
        fast_free(&net->fast); /* out of memory: the generic evaluation still works */
}

/* Node temperatures from a state vector (the free ones by state, then the few fixed ones). */
static void fast_temperatures(const tp_network *net, const double *y, double *t)
{
    const tp_net_fast *f = net->fast;
    int i;
    for (i = 0; i < net->n_free; i++)
        t[net->free_nodes[i]] = y[i];
    for (i = 0; i < f->n_fixed; i++)
        t[f->fixed[i]] = net->nodes[f->fixed[i]].t0;
}

/* eval_groups with the compact member arrays. */
static void fast_groups(const tp_network *net, const double *t, int derivs)
{
    const tp_net_fast *f = net->fast;
    int g, k;
    for (g = 0; g < net->n_groups; g++) {
        tp_net_group *gr = &net->groups[g];
        double sum = 0.0, tm, tb = t[gr->sink];
        for (k = gr->first; k < gr->first + gr->count; k++)
            sum += f->garea[k] * t[f->gnode[k]];
        tm = gr->area > 0 ? sum / gr->area : tb;
        group_coefficients(gr, tm, tb, derivs);
    }
}

/* Every source's power into ydot and its totals (source_eval's formulas, each element's
 * resistance computed once). */
static void fast_sources(const tp_network *net, const double *t, double *ydot, double *src,
                         double *wire)
{
    const tp_net_fast *f = net->fast;
    int i, k;
    for (i = 0; i < net->n_sources; i++) {
        const tp_net_source *s = &net->sources[i];
        const int *st = f->src_state + f->src_first[i];
        double duty = net->duty[i], total = 0.0;
        if (s->kind == TP_SRC_POWER) {
            for (k = 0; k < s->n_nodes; k++) {
                double p = duty * s->power * s->weights[k];
                if (st[k] >= 0)
                    ydot[st[k]] += p;
                total += p;
            }
        } else {
            double *rk = net->src_work, r = 0.0, i2;
            for (k = 0; k < s->n_nodes; k++) {
                double wr = s->weights[k] * s->r0;
                double raw = wr * (1.0 + s->tempco * (t[s->nodes[k]] - s->tref));
                rk[k] = raw > wr * TP_R_FLOOR ? raw : wr * TP_R_FLOOR;
                r += rk[k];
            }
            i2 = s->supply / (r + s->r_series);
            i2 *= i2;
            for (k = 0; k < s->n_nodes; k++) {
                double p = duty * i2 * rk[k];
                if (st[k] >= 0)
                    ydot[st[k]] += p;
                total += p;
            }
            *wire += duty * i2 * s->r_series;
        }
        *src += total;
    }
}

static int fast_top_ok(const tp_network *net)
{
    return net->fast->top_ok;
}

/* The working surface from the per-cell arrays (see surface_cells). */
static double fast_surface(const tp_network *net, const double *t, double *map)
{
    const tp_net_fast *f = net->fast;
    const tp_net_grid *g = net->grid;
    int c, n = g->nx * g->ny;
    double sum = 0.0, area = 0.0;
    if (net->n_groups > 0)
        fast_groups(net, t, 0);
    for (c = 0; c < n; c++) {
        int node = f->top_node[c];
        double ta, tb, tr, q, ts;
        if (node < 0 || !(g->top_area[c] > 0)) {
            if (map)
                map[c] = TP_UNSET;
            continue;
        }
        ta = t[node];
        tb = t[f->top_sink[c]];
        tr = t[f->top_rsink[c]];
        q = net->groups[f->top_group[c]].h * f->top_kc[c] * (ta - tb) +
            f->top_kr[c] * (ta * ta + tr * tr) * (ta + tr) * (ta - tr);
        ts = ta - q * f->top_w[c];
        if (map)
            map[c] = ts;
        sum += g->top_area[c] * ts;
        area += g->top_area[c];
    }
    return area > 0 ? sum / area : TP_UNSET;
}

/* A link's flow q from a (state sa) to b (state sb) into ydot, or into *lost for a fixed end. */
static void add_flow(double *ydot, double *lost, int sa, int sb, double q)
{
    if (sa >= 0)
        ydot[sa] -= q;
    else
        *lost -= q;
    if (sb >= 0)
        ydot[sb] += q;
    else
        *lost += q;
}

/* The flow through link i from the compact record (groups evaluated). */
static double fast_q(const tp_network *net, int i, const double *t)
{
    const fast_link *l = &net->fast->link[i];
    double ta = t[l->a], tb = t[l->b];
    switch (l->kind) {
    case FAST_LINEAR:
        return l->k * (ta - tb);
    case FAST_RADIATION:
        return l->k * (ta * ta + tb * tb) * (ta + tb) * (ta - tb);
    case FAST_GROUP:
        return net->groups[l->group].h * l->k * (ta - tb);
    default:
        return tp_network_link_flow(&net->links[i], ta, tb, NULL, NULL);
    }
}

static int fast_rhs(const tp_network *net, const double *y, double *ydot)
{
    const tp_net_fast *f = net->fast;
    double *t = net->work, lost = 0.0, src = 0.0, wire = 0.0;
    int i, k, nf = net->n_free;
    fast_temperatures(net, y, t);
    if (net->n_groups > 0)
        fast_groups(net, t, 0);
    for (i = 0; i < nf; i++) {
        /* Two partial sums: a shorter chain of dependent additions. */
        double q0 = f->bfix[i], q1 = 0.0;
        int end = f->rowptr[i + 1];
        for (k = f->rowptr[i]; k + 1 < end; k += 2) {
            q0 += f->val[k] * y[f->col[k]];
            q1 += f->val[k + 1] * y[f->col[k + 1]];
        }
        if (k < end)
            q0 += f->val[k] * y[f->col[k]];
        ydot[i] = q0 + q1;
        lost += f->gfix[i] * y[i] - f->bfix[i];
    }
    for (k = 0; k < f->n_rad; k++) {
        const fast_link *l = &f->link[f->rad[k]];
        double ta = t[l->a], tb = t[l->b];
        double q = l->k * (ta * ta + tb * tb) * (ta + tb) * (ta - tb);
        add_flow(ydot, &lost, l->sa, l->sb, q);
    }
    for (k = 0; k < f->n_grp; k++) {
        const fast_link *l = &f->link[f->grp[k]];
        double q = net->groups[l->group].h * l->k * (t[l->a] - t[l->b]);
        add_flow(ydot, &lost, l->sa, l->sb, q);
    }
    for (k = 0; k < f->n_oth; k++) {
        const fast_link *l = &f->link[f->oth[k]];
        double q = tp_network_link_flow(&net->links[f->oth[k]], t[l->a], t[l->b], NULL, NULL);
        add_flow(ydot, &lost, l->sa, l->sb, q);
    }
    fast_sources(net, t, ydot, &src, &wire);
    for (i = 0; i < nf; i++) {
        ydot[i] *= f->inv_cap[i];
        if (!isfinite(ydot[i]))
            return 1;
    }
    ydot[nf + TP_Q_SOURCE] = src;
    ydot[nf + TP_Q_LOST] = lost;
    ydot[nf + TP_Q_WIRE] = wire;
    return isfinite(src) && isfinite(lost) && isfinite(wire) ? 0 : 1;
}

/* The Jacobian from the compact links. A group member's coefficient depends on the mean of all
 * members; only its own share of that dependence is kept (the diagonal), which keeps the
 * pattern sparse: the Jacobian is then inexact by the cross terms, which Newton's method
 * tolerates (it changes the convergence rate, not the solution). */
static int fast_jacobian(const tp_network *net, const double *y, double *values, int use_secant)
{
    const tp_net_fast *f = net->fast;
    double *t = net->work;
    int i;
    fast_temperatures(net, y, t);
    if (net->n_groups > 0)
        fast_groups(net, t, use_secant ? 2 : 1);
    memset(values, 0, (size_t)net->nnz * sizeof *values);
    for (i = 0; i < net->n_links; i++) {
        const fast_link *l = &f->link[i];
        const int *sl = net->link_slot[i];
        double ta = t[l->a], tb = t[l->b], dqa, dqb;
        switch (l->kind) {
        case FAST_LINEAR:
            dqa = l->k;
            dqb = -l->k;
            break;
        case FAST_RADIATION:
            if (use_secant) {
                secant(&net->links[i], ta, tb, &dqa, &dqb);
            } else {
                dqa = 4.0 * l->k * ta * ta * ta;
                dqb = -4.0 * l->k * tb * tb * tb;
            }
            break;
        case FAST_GROUP: {
            const tp_net_group *g = &net->groups[l->group];
            if (use_secant) {
                dqa = g->h_secant * l->k;
                dqb = -dqa;
            } else {
                double share = net->links[i].area / g->area;
                dqa = g->h * l->k + g->dh_ds * share * l->k * (ta - tb);
                dqb = -g->h * l->k + g->dh_db * l->k * (ta - tb);
            }
            break;
        }
        default:
            if (use_secant)
                secant(&net->links[i], ta, tb, &dqa, &dqb);
            else
                tp_network_link_flow(&net->links[i], ta, tb, &dqa, &dqb);
            break;
        }
        scatter_link(values, sl, dqa, dqb, net->nodes[l->a].capacity,
                     net->nodes[l->b].capacity);
    }
    scatter_sources(net, t, values);
    for (i = 0; i < net->nnz; i++)
        if (!isfinite(values[i]))
            return 1;
    return 0;
}
