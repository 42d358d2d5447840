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

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "radiation.h"

#define TP_DH_STEP 1.0e-3   /* K, central-difference step for d(h A dT)/dT of correlations */
#define TP_R_FLOOR 1.0e-2   /* -, lowest R(T)/R0 accepted (a very negative tempco) */

static const char *const law_names[] = {"conduction", "convection", "radiation"};
static const char *const path_names[TP_PATH_COUNT] = {
    "internal", "top_convection", "top_radiation", "bottom_convection", "bottom_radiation",
    "edges", "mounts", "walls", "other"};

const char *tp_law_name(tp_law law)
{
    return (unsigned)law < 3 ? law_names[law] : "?";
}

const char *tp_loss_path_name(tp_loss_path p)
{
    return (unsigned)p < TP_PATH_COUNT ? path_names[p] : "?";
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
    free(n);
    *net = NULL;
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

int tp_network_add_node(tp_network *net, const char *id, double capacity, double t0)
{
    int n = net->n_nodes;
    tp_net_node *node;
    if (net->n_nodes % 64 == 0) {
        void *p = realloc(net->nodes, (size_t)(n + 64) * sizeof *net->nodes);
        if (!p)
            return -1;
        net->nodes = p;
    }
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
    if (net->n_links % 256 == 0) {
        void *p = realloc(net->links, (size_t)(net->n_links + 256) * sizeof *net->links);
        if (!p)
            return NULL;
        net->links = p;
    }
    l = &net->links[net->n_links++];
    memset(l, 0, sizeof *l);
    l->a = a;
    l->b = b;
    l->law = law;
    l->scale = 1.0;
    l->path = TP_PATH_INTERNAL;
    return l;
}

tp_net_source *tp_network_add_source(tp_network *net, const char *id, int node)
{
    tp_net_source *s;
    if (net->n_sources % 16 == 0) {
        void *p = realloc(net->sources, (size_t)(net->n_sources + 16) * sizeof *net->sources);
        if (!p)
            return NULL;
        net->sources = p;
    }
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
    qsort(e, (size_t)n, sizeof *e, entry_cmp);
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

/* ---- flows ---------------------------------------------------------------------------------- */

static double convective_flow(const tp_net_link *l, double ta, double tb)
{
    double h = l->correlated ? tp_conv_h(&l->conv, ta, tb, NULL) : l->h;
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
        q = tp_rad_flux(l->eps, ta, tb) * k;
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
        hh = (l->correlated ? tp_conv_h(&l->conv, ta, tb, NULL) : l->h) * l->scale;
        g = hh * l->area;
        break;
    case TP_LAW_RADIATION:
        hh = tp_rad_h(l->eps, ta, tb) * l->scale;
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

int tp_network_rhs(const tp_network *net, const double *y, double *ydot)
{
    double *t = net->work, lost = 0.0, src = 0.0, wire = 0.0;
    int i, k, nf = net->n_free;
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
    for (i = 0; i < net->n_sources; i++) {
        const tp_net_source *s = &net->sources[i];
        double w = 0.0, *pk = net->src_work;
        src += source_eval(s, t, net->duty[i], pk, NULL, NULL, NULL, &w);
        for (k = 0; k < s->n_nodes; k++) {
            int st = net->nodes[s->nodes[k]].state;
            if (st >= 0)
                ydot[st] += pk[k];
        }
        wire += w;
    }
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
#define TP_SECANT_MIN 1.0 /* K */
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

int tp_network_jacobian_mode(const tp_network *net, const double *y, double *values, int use_secant)
{
    double *t = net->work;
    int i, k;
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
    for (i = 0; i < net->nnz; i++)
        if (!isfinite(values[i]))
            return 1;
    return 0;
}

tp_status tp_flows_init(tp_flows *f, const tp_network *net)
{
    memset(f, 0, sizeof *f);
    f->q = calloc((size_t)net->n_nodes + 1, sizeof *f->q);
    f->src_power = calloc((size_t)net->n_sources + 1, sizeof *f->src_power);
    f->src_wire = calloc((size_t)net->n_sources + 1, sizeof *f->src_wire);
    if (!f->q || !f->src_power || !f->src_wire) {
        tp_flows_clear(f);
        return TP_ERR_NOMEM;
    }
    return TP_OK;
}

void tp_flows_clear(tp_flows *f)
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
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        double q = tp_network_link_flow(l, t[l->a], t[l->b], NULL, NULL);
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

double tp_network_surface(const tp_network *net, const double *t)
{
    int i;
    double q = 0.0;
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
