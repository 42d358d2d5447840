/* The evaluator of a frozen network: held duties, compact link arrays, coefficient-group state
 * and scratch, and the evaluations built on them.
 *
 * State y = [T_1 .. T_n, E_src, E_lost, E_wire] (network.c):
 *   C_i dT_i/dt = sum_links Q_ji + sum_sources d_s P_si        (W)
 *   dE_src/dt = sum_s d_s P_s,  dE_lost/dt = sum Q into fixed nodes,  dE_wire/dt = sum_s d_s I_s^2 R_series,s
 * with d_s the duty each source is held at (the controller's output, or an argument of the
 * run), which lives here and not in the network.
 *
 * A network spends most of its time in the right-hand side, so its links are copied into
 * compact arrays by kind. The linear ones (conduction, fixed-coefficient convection) form one
 * sparse matrix L over the states, with the conductance to fixed nodes on the side:
 *   sum_links Q into i = sum_j L_ij T_j + b_i,  L_ij = G_ij (j != i),  L_ii = -sum_j G_ij - g_i,
 *   g_i = sum of G to fixed nodes,  b_i = sum of G T_fixed,
 * so their part is one matrix-vector product. Radiation, coefficient-group and other links
 * (correlated convection of their own) keep short records. A coefficient group's h is the
 * correlation at the area-weighted mean temperature of its members' surfaces against their
 * sink, evaluated once per call for all members. tests/test_network.c evaluates the same
 * equations link by link from the network alone (its oracle) and holds the two together. */
#include "eval.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "keysort.h"
#include "radiation.h"

#define TP_SECANT_MIN 1.0 /* K, smallest temperature difference of a secant conductance */

enum { FAST_LINEAR, FAST_RADIATION, FAST_GROUP, FAST_OTHER };

typedef struct fast_link {
    int a, b;     /* node indices */
    int sa, sb;   /* their states, -1 for fixed nodes */
    int kind;
    int group;
    double k;     /* linear: G, W/K; radiation: eps sigma A s, W/K4; group: A s, m2 */
} fast_link;

/* A coefficient group at the last evaluation. */
typedef struct group_state {
    double h;        /* W/(m2.K) */
    double dh_ds;    /* dh/dT of the mean surface temperature, W/(m2.K2) (Jacobian) */
    double dh_db;    /* dh/dT of the sink, W/(m2.K2) (Jacobian) */
    double h_secant; /* h for the secant Jacobian, W/(m2.K) */
} group_state;

struct tp_eval {
    const tp_network *net;
    double *duty;         /* per source, 0..max_duty: the held duty */
    int controlled;       /* the source whose on-current samples report, -1: none */
    group_state *gs;      /* per coefficient group */
    double *work;         /* n_nodes temperatures */
    double *src_work;     /* 3 x the largest source's node count */
    /* Compact arrays, built once from the network. */
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

void tp_eval_destroy(tp_eval **ev)
{
    tp_eval *e;
    if (!ev || !*ev)
        return;
    e = *ev;
    free(e->duty);
    free(e->gs);
    free(e->work);
    free(e->src_work);
    free(e->link);
    free(e->rad);
    free(e->grp);
    free(e->oth);
    free(e->rowptr);
    free(e->col);
    free(e->val);
    free(e->gfix);
    free(e->bfix);
    free(e->inv_cap);
    free(e->fixed);
    free(e->gnode);
    free(e->garea);
    free(e->src_state);
    free(e->src_first);
    free(e->top_node);
    free(e->top_sink);
    free(e->top_rsink);
    free(e->top_group);
    free(e->top_kc);
    free(e->top_kr);
    free(e->top_w);
    free(e);
    *ev = NULL;
}

/* ---- building the compact arrays ------------------------------------------------------------ */

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
static tp_status build_linear(tp_eval *ev)
{
    const tp_network *net = ev->net;
    int i, m = 0, u, nf = net->n_free;
    lin_entry *e = malloc((size_t)(4 * net->n_links + nf + 1) * sizeof *e);
    if (!e)
        return TP_ERR_NOMEM;
    for (i = 0; i < net->n_links; i++) {
        const fast_link *l = &ev->link[i];
        if (l->kind != FAST_LINEAR)
            continue;
        if (l->sa >= 0 && l->sb >= 0) {
            e[m++] = (lin_entry){l->sa, l->sa, -l->k};
            e[m++] = (lin_entry){l->sa, l->sb, l->k};
            e[m++] = (lin_entry){l->sb, l->sb, -l->k};
            e[m++] = (lin_entry){l->sb, l->sa, l->k};
        } else if (l->sa >= 0) {
            ev->gfix[l->sa] += l->k;
            ev->bfix[l->sa] += l->k * net->nodes[l->b].t0;
        } else if (l->sb >= 0) {
            ev->gfix[l->sb] += l->k;
            ev->bfix[l->sb] += l->k * net->nodes[l->a].t0;
        }
    }
    for (i = 0; i < nf; i++)
        e[m++] = (lin_entry){i, i, -ev->gfix[i]};
    tp_keysort(e, m, sizeof *e, nf, lin_row, lin_cmp);
    for (i = 0, u = 0; i < m; i++) {
        if (u > 0 && e[u - 1].row == e[i].row && e[u - 1].col == e[i].col)
            e[u - 1].v += e[i].v;
        else
            e[u++] = e[i];
    }
    ev->rowptr = calloc((size_t)nf + 1, sizeof *ev->rowptr);
    ev->col = malloc((size_t)(u > 0 ? u : 1) * sizeof *ev->col);
    ev->val = malloc((size_t)(u > 0 ? u : 1) * sizeof *ev->val);
    if (!ev->rowptr || !ev->col || !ev->val) {
        free(e);
        return TP_ERR_NOMEM;
    }
    for (i = 0; i < u; i++) {
        ev->rowptr[e[i].row + 1]++;
        ev->col[i] = e[i].col;
        ev->val[i] = e[i].v;
    }
    for (i = 0; i < nf; i++)
        ev->rowptr[i + 1] += ev->rowptr[i];
    free(e);
    return TP_OK;
}

/* The compact record of every link, sorted into the kinds' index lists. */
static void build_links(tp_eval *ev)
{
    const tp_network *net = ev->net;
    int i;
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        fast_link *c = &ev->link[i];
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
            ev->rad[ev->n_rad++] = i;
        else if (c->kind == FAST_GROUP)
            ev->grp[ev->n_grp++] = i;
        else if (c->kind == FAST_OTHER)
            ev->oth[ev->n_oth++] = i;
    }
}

/* Capacities, fixed nodes, group members and source states. */
static tp_status build_nodes(tp_eval *ev)
{
    const tp_network *net = ev->net;
    int i, k;
    for (i = 0; i < net->n_free; i++)
        ev->inv_cap[i] = 1.0 / net->nodes[net->free_nodes[i]].capacity;
    for (i = 0; i < net->n_nodes; i++)
        if (net->nodes[i].state < 0)
            ev->fixed[ev->n_fixed++] = i;
    for (i = 0; net->group_links && i < net->n_links; i++) {
        ev->gnode[i] = 0;
        ev->garea[i] = 0.0;
    }
    for (i = 0; i < net->n_groups; i++)
        for (k = net->groups[i].first; k < net->groups[i].first + net->groups[i].count; k++) {
            const tp_net_link *l = &net->links[net->group_links[k]];
            ev->gnode[k] = l->a;
            ev->garea[k] = l->area;
        }
    ev->src_first = malloc((size_t)(net->n_sources + 1) * sizeof *ev->src_first);
    if (!ev->src_first)
        return TP_ERR_NOMEM;
    ev->src_first[0] = 0;
    for (i = 0; i < net->n_sources; i++)
        ev->src_first[i + 1] = ev->src_first[i] + net->sources[i].n_nodes;
    ev->src_state = malloc((size_t)(ev->src_first[net->n_sources] + 1) * sizeof *ev->src_state);
    if (!ev->src_state)
        return TP_ERR_NOMEM;
    for (i = 0; i < net->n_sources; i++)
        for (k = 0; k < net->sources[i].n_nodes; k++)
            ev->src_state[ev->src_first[i] + k] = net->nodes[net->sources[i].nodes[k]].state;
    return TP_OK;
}

/* The per-cell arrays of the working surface, when every top cell has a grouped convection link
 * and a radiation link (otherwise the surface is evaluated link by link). */
static tp_status build_top(tp_eval *ev)
{
    const tp_network *net = ev->net;
    const tp_net_grid *g = net->grid;
    int c, n = g->nx * g->ny, top = (g->n_layers - 1) * n;
    ev->top_node = malloc((size_t)n * sizeof *ev->top_node);
    ev->top_sink = malloc((size_t)n * sizeof *ev->top_sink);
    ev->top_rsink = malloc((size_t)n * sizeof *ev->top_rsink);
    ev->top_group = malloc((size_t)n * sizeof *ev->top_group);
    ev->top_kc = malloc((size_t)n * sizeof *ev->top_kc);
    ev->top_kr = malloc((size_t)n * sizeof *ev->top_kr);
    ev->top_w = malloc((size_t)n * sizeof *ev->top_w);
    if (!ev->top_node || !ev->top_sink || !ev->top_rsink || !ev->top_group || !ev->top_kc ||
        !ev->top_kr || !ev->top_w)
        return TP_ERR_NOMEM;
    ev->top_ok = 1;
    for (c = 0; c < n; c++) {
        int lc = g->top_link[2 * c], lr = g->top_link[2 * c + 1];
        ev->top_node[c] = g->cell[top + c];
        if (ev->top_node[c] < 0 || !(g->top_area[c] > 0))
            continue;
        if (lc < 0 || lr < 0 || ev->link[lc].kind != FAST_GROUP ||
            ev->link[lr].kind != FAST_RADIATION) {
            ev->top_ok = 0;
            return TP_OK;
        }
        ev->top_sink[c] = ev->link[lc].b;
        ev->top_rsink[c] = ev->link[lr].b;
        ev->top_group[c] = ev->link[lc].group;
        ev->top_kc[c] = ev->link[lc].k;
        ev->top_kr[c] = ev->link[lr].k;
        ev->top_w[c] = net->top_half_r / g->top_area[c];
    }
    return TP_OK;
}

/* The run state: duties, group state and scratch. */
static tp_status alloc_state(tp_eval *ev)
{
    const tp_network *net = ev->net;
    int i, most = 1;
    for (i = 0; i < net->n_sources; i++)
        if (net->sources[i].n_nodes > most)
            most = net->sources[i].n_nodes;
    ev->duty = malloc((size_t)(net->n_sources > 0 ? net->n_sources : 1) * sizeof *ev->duty);
    ev->gs = calloc((size_t)(net->n_groups > 0 ? net->n_groups : 1), sizeof *ev->gs);
    ev->work = malloc((size_t)(net->n_nodes > 0 ? net->n_nodes : 1) * sizeof *ev->work);
    ev->src_work = malloc((size_t)most * 3 * sizeof *ev->src_work);
    if (!ev->duty || !ev->gs || !ev->work || !ev->src_work)
        return TP_ERR_NOMEM;
    tp_eval_full_duties(ev);
    tp_eval_set_controlled(ev, net->has_control ? net->control.source : -1);
    return TP_OK;
}

tp_status tp_eval_create(const tp_network *net, tp_eval **out)
{
    tp_eval *ev = calloc(1, sizeof *ev);
    int nl = net->n_links > 0 ? net->n_links : 1, nf = net->n_free > 0 ? net->n_free : 1;
    tp_status st = TP_ERR_NOMEM;
    *out = NULL;
    if (!ev)
        return TP_ERR_NOMEM;
    ev->net = net;
    ev->link = malloc((size_t)nl * sizeof *ev->link);
    ev->rad = malloc((size_t)nl * sizeof *ev->rad);
    ev->grp = malloc((size_t)nl * sizeof *ev->grp);
    ev->oth = malloc((size_t)nl * sizeof *ev->oth);
    ev->gfix = calloc((size_t)nf, sizeof *ev->gfix);
    ev->bfix = calloc((size_t)nf, sizeof *ev->bfix);
    ev->inv_cap = malloc((size_t)nf * sizeof *ev->inv_cap);
    ev->fixed = malloc((size_t)(net->n_nodes - net->n_free + 1) * sizeof *ev->fixed);
    ev->gnode = malloc((size_t)nl * sizeof *ev->gnode);
    ev->garea = malloc((size_t)nl * sizeof *ev->garea);
    if (ev->link && ev->rad && ev->grp && ev->oth && ev->gfix && ev->bfix && ev->inv_cap &&
        ev->fixed && ev->gnode && ev->garea) {
        build_links(ev);
        st = build_nodes(ev);
    }
    if (st == TP_OK && net->grid)
        st = build_top(ev);
    if (st == TP_OK)
        st = build_linear(ev);
    if (st == TP_OK)
        st = alloc_state(ev);
    if (st != TP_OK) {
        tp_eval_destroy(&ev);
        return st;
    }
    *out = ev;
    return TP_OK;
}

/* ---- run state ------------------------------------------------------------------------------ */

const tp_network *tp_eval_network(const tp_eval *ev)
{
    return ev->net;
}

void tp_eval_set_duty(tp_eval *ev, int source, double duty)
{
    ev->duty[source] = duty;
}

double tp_eval_duty(const tp_eval *ev, int source)
{
    return ev->duty[source];
}

const double *tp_eval_duties(const tp_eval *ev)
{
    return ev->duty;
}

void tp_eval_full_duties(tp_eval *ev)
{
    int i;
    for (i = 0; i < ev->net->n_sources; i++)
        ev->duty[i] = ev->net->sources[i].max_duty;
}

void tp_eval_set_controlled(tp_eval *ev, int source)
{
    ev->controlled = source >= 0 && source < ev->net->n_sources ? source : -1;
}

/* ---- evaluations ---------------------------------------------------------------------------- */

void tp_eval_temperatures(const tp_eval *ev, const double *y, double *t)
{
    const tp_network *net = ev->net;
    int i;
    /* The free ones by state, then the few fixed ones. */
    for (i = 0; i < net->n_free; i++)
        t[net->free_nodes[i]] = y[i];
    for (i = 0; i < ev->n_fixed; i++)
        t[ev->fixed[i]] = net->nodes[ev->fixed[i]].t0;
}

/* Each coefficient group's h at node temperatures `t`: the correlation at the area-weighted mean
 * temperature of its members' surfaces against the sink. `derivs` 1 also takes dh/dT of the
 * mean and of the sink by central differences (TP_NET_DH_STEP, as tp_network_link_flow does for
 * single links), 2 the secant coefficient (the difference kept at least TP_SECANT_MIN, as for
 * single links). */
static void eval_groups(tp_eval *ev, const double *t, int derivs)
{
    const tp_network *net = ev->net;
    int g, k;
    for (g = 0; g < net->n_groups; g++) {
        const tp_net_group *gr = &net->groups[g];
        group_state *s = &ev->gs[g];
        double sum = 0.0, tm, tb = t[gr->sink];
        for (k = gr->first; k < gr->first + gr->count; k++)
            sum += ev->garea[k] * t[ev->gnode[k]];
        tm = gr->area > 0 ? sum / gr->area : tb;
        s->h = tp_convection_h(&gr->conv, tm, tb, NULL);
        if (derivs == 1) {
            s->dh_ds = (tp_convection_h(&gr->conv, tm + TP_NET_DH_STEP, tb, NULL) -
                        tp_convection_h(&gr->conv, tm - TP_NET_DH_STEP, tb, NULL)) /
                       (2.0 * TP_NET_DH_STEP);
            s->dh_db = (tp_convection_h(&gr->conv, tm, tb + TP_NET_DH_STEP, NULL) -
                        tp_convection_h(&gr->conv, tm, tb - TP_NET_DH_STEP, NULL)) /
                       (2.0 * TP_NET_DH_STEP);
        } else if (derivs == 2) {
            double dt = tm - tb;
            s->h_secant =
                fabs(dt) < TP_SECANT_MIN
                    ? tp_convection_h(&gr->conv, tb + (dt < 0 ? -TP_SECANT_MIN : TP_SECANT_MIN), tb,
                                      NULL)
                    : s->h;
        }
    }
}

/* Every source's power into ydot and its totals (tp_network_source_eval's formulas, each
 * element's resistance computed once). */
static void eval_sources(tp_eval *ev, const double *t, double *ydot, double *src, double *wire)
{
    const tp_network *net = ev->net;
    int i, k;
    for (i = 0; i < net->n_sources; i++) {
        const tp_net_source *s = &net->sources[i];
        const int *st = ev->src_state + ev->src_first[i];
        double duty = ev->duty[i], total = 0.0;
        if (s->kind == TP_SRC_POWER) {
            for (k = 0; k < s->n_nodes; k++) {
                double p = duty * s->power * s->weights[k];
                if (st[k] >= 0)
                    ydot[st[k]] += p;
                total += p;
            }
        } else {
            double *rk = ev->src_work, r = 0.0, i2;
            for (k = 0; k < s->n_nodes; k++) {
                double wr = s->weights[k] * s->r0;
                double raw = wr * (1.0 + s->tempco * (t[s->nodes[k]] - s->tref));
                rk[k] = raw > wr * TP_NET_R_FLOOR ? raw : wr * TP_NET_R_FLOOR;
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

/* The flow through link i from its compact record (groups evaluated). */
static double link_q(const tp_eval *ev, int i, const double *t)
{
    const fast_link *l = &ev->link[i];
    double ta = t[l->a], tb = t[l->b];
    switch (l->kind) {
    case FAST_LINEAR:
        return l->k * (ta - tb);
    case FAST_RADIATION:
        return l->k * (ta * ta + tb * tb) * (ta + tb) * (ta - tb);
    case FAST_GROUP:
        return ev->gs[l->group].h * l->k * (ta - tb);
    default:
        return tp_network_link_flow(&ev->net->links[i], ta, tb, NULL, NULL);
    }
}

int tp_eval_rhs(tp_eval *ev, const double *y, double *ydot)
{
    const tp_network *net = ev->net;
    double *t = ev->work, lost = 0.0, src = 0.0, wire = 0.0;
    int i, k, nf = net->n_free;
    tp_eval_temperatures(ev, y, t);
    if (net->n_groups > 0)
        eval_groups(ev, t, 0);
    for (i = 0; i < nf; i++) {
        /* Two partial sums: a shorter chain of dependent additions. */
        double q0 = ev->bfix[i], q1 = 0.0;
        int end = ev->rowptr[i + 1];
        for (k = ev->rowptr[i]; k + 1 < end; k += 2) {
            q0 += ev->val[k] * y[ev->col[k]];
            q1 += ev->val[k + 1] * y[ev->col[k + 1]];
        }
        if (k < end)
            q0 += ev->val[k] * y[ev->col[k]];
        ydot[i] = q0 + q1;
        lost += ev->gfix[i] * y[i] - ev->bfix[i];
    }
    for (k = 0; k < ev->n_rad; k++) {
        const fast_link *l = &ev->link[ev->rad[k]];
        double ta = t[l->a], tb = t[l->b];
        double q = l->k * (ta * ta + tb * tb) * (ta + tb) * (ta - tb);
        add_flow(ydot, &lost, l->sa, l->sb, q);
    }
    for (k = 0; k < ev->n_grp; k++) {
        const fast_link *l = &ev->link[ev->grp[k]];
        double q = ev->gs[l->group].h * l->k * (t[l->a] - t[l->b]);
        add_flow(ydot, &lost, l->sa, l->sb, q);
    }
    for (k = 0; k < ev->n_oth; k++) {
        const fast_link *l = &ev->link[ev->oth[k]];
        double q = tp_network_link_flow(&net->links[ev->oth[k]], t[l->a], t[l->b], NULL, NULL);
        add_flow(ydot, &lost, l->sa, l->sb, q);
    }
    eval_sources(ev, t, ydot, &src, &wire);
    for (i = 0; i < nf; i++) {
        ydot[i] *= ev->inv_cap[i];
        if (!isfinite(ydot[i]))
            return 1;
    }
    ydot[nf + TP_Q_SOURCE] = src;
    ydot[nf + TP_Q_LOST] = lost;
    ydot[nf + TP_Q_WIRE] = wire;
    return isfinite(src) && isfinite(lost) && isfinite(wire) ? 0 : 1;
}

/* ---- the Jacobian --------------------------------------------------------------------------- */

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
static void scatter_sources(tp_eval *ev, const double *t, double *values)
{
    const tp_network *net = ev->net;
    int i, k;
    for (i = 0; i < net->n_sources; i++) {
        const tp_net_source *s = &net->sources[i];
        const int *sl = net->src_slot + net->src_first[i];
        double *buf = ev->src_work;
        tp_network_source_eval(s, t, ev->duty[i], NULL, buf, buf + s->n_nodes,
                               buf + 2 * s->n_nodes, NULL);
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

/* The derivatives of link i's flow by T_a and T_b. A group member's coefficient depends on the
 * mean of all members; only its own share of that dependence is kept (the diagonal). */
static void link_derivs(const tp_eval *ev, int i, const double *t, int use_secant, double *dqa,
                        double *dqb)
{
    const tp_network *net = ev->net;
    const fast_link *l = &ev->link[i];
    double ta = t[l->a], tb = t[l->b];
    switch (l->kind) {
    case FAST_LINEAR:
        *dqa = l->k;
        *dqb = -l->k;
        break;
    case FAST_RADIATION:
        if (use_secant) {
            secant(&net->links[i], ta, tb, dqa, dqb);
        } else {
            *dqa = 4.0 * l->k * ta * ta * ta;
            *dqb = -4.0 * l->k * tb * tb * tb;
        }
        break;
    case FAST_GROUP: {
        const group_state *g = &ev->gs[l->group];
        if (use_secant) {
            *dqa = g->h_secant * l->k;
            *dqb = -*dqa;
        } else {
            double share = net->links[i].area / net->groups[l->group].area;
            *dqa = g->h * l->k + g->dh_ds * share * l->k * (ta - tb);
            *dqb = -g->h * l->k + g->dh_db * l->k * (ta - tb);
        }
        break;
    }
    default:
        if (use_secant)
            secant(&net->links[i], ta, tb, dqa, dqb);
        else
            tp_network_link_flow(&net->links[i], ta, tb, dqa, dqb);
        break;
    }
}

int tp_eval_jacobian(tp_eval *ev, const double *y, double *values, int use_secant)
{
    const tp_network *net = ev->net;
    double *t = ev->work;
    int i;
    tp_eval_temperatures(ev, y, t);
    if (net->n_groups > 0)
        eval_groups(ev, t, use_secant ? 2 : 1);
    memset(values, 0, (size_t)net->nnz * sizeof *values);
    for (i = 0; i < net->n_links; i++) {
        const fast_link *l = &ev->link[i];
        double dqa, dqb;
        link_derivs(ev, i, t, use_secant, &dqa, &dqb);
        scatter_link(values, net->link_slot[i], dqa, dqb, net->nodes[l->a].capacity,
                     net->nodes[l->b].capacity);
    }
    scatter_sources(ev, t, values);
    for (i = 0; i < net->nnz; i++)
        if (!isfinite(values[i]))
            return 1;
    return 0;
}

/* ---- flows, sources and the working surface ------------------------------------------------ */

void tp_eval_flows(tp_eval *ev, const double *t, tp_flows *f)
{
    const tp_network *net = ev->net;
    int i, k;
    memset(f->q, 0, (size_t)net->n_nodes * sizeof *f->q);
    memset(f->path, 0, sizeof f->path);
    f->lost = 0.0;
    if (net->n_groups > 0)
        eval_groups(ev, t, 0);
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        double q = link_q(ev, i, t);
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
        double *pk = ev->src_work;
        f->src_power[i] = tp_network_source_eval(s, t, ev->duty[i], pk, NULL, NULL, NULL,
                                                 &f->src_wire[i]);
        for (k = 0; k < s->n_nodes; k++)
            f->q[s->nodes[k]] += pk[k];
    }
}

void tp_eval_sample_sources(const tp_eval *ev, const double *t, double *power, double *wire,
                            double *current)
{
    const tp_network *net = ev->net;
    int i, k, cur = -1;
    *wire = 0.0;
    /* The source whose current is reported: the controlled one when electrical, else the
     * first electrical one after it. */
    for (i = 0; i < net->n_sources && cur < 0; i++) {
        int j = ev->controlled >= 0 && i == 0 ? ev->controlled : i;
        if (net->sources[j].kind == TP_SRC_ELECTRIC)
            cur = j;
    }
    *current = TP_UNSET;
    for (i = 0; i < net->n_sources; i++) {
        const tp_net_source *s = &net->sources[i];
        double d = ev->duty[i], total = 0.0, r = 0.0, amp;
        if (s->kind == TP_SRC_POWER) {
            for (k = 0; k < s->n_nodes; k++)
                total += d * s->power * s->weights[k];
            power[i] = total;
            continue;
        }
        for (k = 0; k < s->n_nodes; k++) {
            double wr = s->weights[k] * s->r0;
            double raw = wr * (1.0 + s->tempco * (t[s->nodes[k]] - s->tref));
            r += raw > wr * TP_NET_R_FLOOR ? raw : wr * TP_NET_R_FLOOR;
        }
        amp = s->supply / (r + s->r_series);
        if (i == cur)
            *current = amp;
        power[i] = d * amp * amp * r; /* the sum of d I^2 R_k over the nodes */
        *wire += d * amp * amp * s->r_series;
    }
}

/* The working surface from the per-cell arrays (groups evaluated). */
static double surface_fast(const tp_eval *ev, const double *t, double *map)
{
    const tp_net_grid *g = ev->net->grid;
    int c, n = g->nx * g->ny;
    double sum = 0.0, area = 0.0;
    for (c = 0; c < n; c++) {
        int node = ev->top_node[c];
        double ta, tb, tr, q, ts;
        if (node < 0 || !(g->top_area[c] > 0)) {
            if (map)
                map[c] = TP_UNSET;
            continue;
        }
        ta = t[node];
        tb = t[ev->top_sink[c]];
        tr = t[ev->top_rsink[c]];
        q = ev->gs[ev->top_group[c]].h * ev->top_kc[c] * (ta - tb) +
            ev->top_kr[c] * (ta * ta + tr * tr) * (ta + tr) * (ta - tr);
        ts = ta - q * ev->top_w[c];
        if (map)
            map[c] = ts;
        sum += g->top_area[c] * ts;
        area += g->top_area[c];
    }
    return area > 0 ? sum / area : TP_UNSET;
}

/* The surface of each top cell of a gridded plate into map (may be NULL); returns the
 * area-weighted mean. */
static double surface_cells(tp_eval *ev, const double *t, double *map)
{
    const tp_network *net = ev->net;
    const tp_net_grid *g = net->grid;
    int c, n = g->nx * g->ny, top = (g->n_layers - 1) * n;
    double sum = 0.0, area = 0.0;
    if (net->n_groups > 0)
        eval_groups(ev, t, 0);
    if (ev->top_ok)
        return surface_fast(ev, t, map);
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
                q += link_q(ev, g->top_link[2 * c + k], t);
        ts = t[node] - q / g->top_area[c] * net->top_half_r;
        if (map)
            map[c] = ts;
        sum += g->top_area[c] * ts;
        area += g->top_area[c];
    }
    return area > 0 ? sum / area : TP_UNSET;
}

/* The surface of a lumped plate: its top node less the drop across half the top layer. */
static double surface_lumped(const tp_network *net, const double *t)
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

double tp_eval_surface_map(tp_eval *ev, const double *t, double *map)
{
    return ev->net->grid ? surface_cells(ev, t, map) : TP_UNSET;
}

double tp_eval_surface(tp_eval *ev, const double *t)
{
    return ev->net->grid ? surface_cells(ev, t, NULL) : surface_lumped(ev->net, t);
}

double tp_eval_surface_at(const tp_network *net, const double *t, double *map)
{
    tp_eval *ev = NULL;
    double s;
    if (!net->grid)
        return surface_lumped(net, t);
    if (tp_eval_create(net, &ev) != TP_OK)
        return TP_UNSET;
    s = surface_cells(ev, t, map);
    tp_eval_destroy(&ev);
    return s;
}
