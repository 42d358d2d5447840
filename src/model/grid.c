/* Gridded plates: the lumped lowering (plate.c) refined into cells.
 *
 * The bed [0, W] x [0, D] is cut into nx x ny cells of dx = W/nx by dy = D/ny; cell (i, j) spans
 * [i dx, (i+1) dx] x [j dy, (j+1) dy]. Every layer is a centred rectangle [x0, x1] x [y0, y1]
 * and covers the fraction fx_i fy_j of cell (i, j) (separable, because the layer is a rectangle
 * aligned with the grid). A layer has a node in every cell it covers, with
 *   C_ij = C_layer fx_i dx fy_j dy / (w d).
 * Each link of the lumped network is split over the cells by the area it concerns, so that the
 * cells' links add up to the lumped link exactly:
 *   interface between layers k and k+1   the overlap of both in the cell
 *   closed gap around layer k            overlap of k-1 and k+1 minus that of all three
 *   top face of layer k                  its area minus the overlap with k+1 and the gap above
 *   bottom face                          likewise below
 *   edges                                t x the length of the layer's outline in the cell
 *   mounts                               the bottom layer's cells by area (tepid does not know
 *                                        where screws sit, and a conductance into one cell would
 *                                        not converge as cells shrink: a point sink)
 *   sensor                               the cell(s) at sensor.position, shared equally when
 *                                        the point lies on a cell boundary
 * (conductances G and radiating or convecting areas A scale with that share). Convection keeps
 * the lumped link's correlation case for every cell of a face, as one coefficient group: h is
 * the correlation at the face's area-weighted mean temperature (network.c), applied to each
 * cell's own temperature difference.
 * In-plane conduction joins neighbouring cells of a layer (finite volumes, in-plane k):
 *   G_x = k t fy_j dy / ((fx_i + fx_i+1) dx / 2),  G_y = k t fx_i dx / ((fy_j + fy_j+1) dy / 2).
 * The heater's power is spread by its coverage: uniform over the heater layer's area, or with
 * heater.pattern a share s of the power in the outer band of width b and the rest inside:
 *   weight_ij = s A_band,ij / A_band + (1 - s) A_inner,ij / A_inner. */
#include "grid.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "config.h"
#include "materials.h"

#define TP_COVER_MIN 1.0e-9 /* -, a smaller covered fraction of a cell counts as none */
#define TP_SHARE_MIN 1.0e-12 /* -, a smaller share of a lumped link gets no cell link */
#define TP_ON_EDGE 1.0e-9    /* -, a point this close (in cells) to a cell boundary is on it */

typedef struct span {
    double lo, hi; /* m */
} span;

typedef struct layer_geo {
    span x, y;      /* the layer's rectangle on the bed */
    double w, d, t; /* m */
    double *fx, *fy; /* covered fraction of each column and row */
    int i0, i1, j0, j1; /* first and last covered column and row */
    const tp_material_spec *m;
} layer_geo;

typedef struct refine {
    const tp_description *desc;
    const tp_yamltree *doc;
    const tp_network *lumped;
    tp_network *net;
    tp_diag *d;
    int nx, ny, nl;
    double dx, dy;
    layer_geo lg[TP_MAX_LAYERS];
    int gap[TP_MAX_LAYERS]; /* 1: a closed gap surrounds layer k (links k-1 to k+1) */
    int *node_map;          /* lumped node -> node of the grid (non-layer nodes) */
    double *share;          /* nx * ny scratch: a link's weight per cell */
    tp_net_grid *grid;
} refine;

int tp_grid_wanted(const tp_description *desc)
{
    return desc->form == TP_FORM_PHYSICAL && tp_isset(desc->bed.grid[0]) &&
           tp_isset(desc->bed.grid[1]);
}

void tp_grid_cell_at(const tp_net_grid *g, double x, double y, int *i, int *j)
{
    int a = (int)floor(x / (g->width / g->nx)), b = (int)floor(y / (g->depth / g->ny));
    *i = a < 0 ? 0 : a >= g->nx ? g->nx - 1 : a;
    *j = b < 0 ? 0 : b >= g->ny ? g->ny - 1 : b;
}

void tp_grid_layer_stats(const tp_network *net, int layer, const double *t, double *mean,
                         double *min, double *max)
{
    const tp_net_grid *g = net->grid;
    int c, n = g->nx * g->ny;
    const int *cell = g->cell + (size_t)layer * (size_t)n;
    double sum = 0.0, cap = 0.0, lo = TP_UNSET, hi = TP_UNSET;
    for (c = 0; c < n; c++) {
        double v;
        if (cell[c] < 0)
            continue;
        v = t[cell[c]];
        sum += net->nodes[cell[c]].capacity * v;
        cap += net->nodes[cell[c]].capacity;
        lo = !(v >= lo) ? v : lo;
        hi = !(v <= hi) ? v : hi;
    }
    *mean = cap > 0 ? sum / cap : TP_UNSET;
    *min = lo;
    *max = hi;
}

void tp_grid_cell_centre(const tp_net_grid *g, int i, int j, double *x, double *y)
{
    *x = (i + 0.5) * g->width / g->nx;
    *y = (j + 0.5) * g->depth / g->ny;
}

/* The covered fraction of the cell [k h, (k+1) h] by the interval s. */
static double cover(span s, int k, double h)
{
    double f = (fmin(s.hi, (k + 1) * h) - fmax(s.lo, k * h)) / h;
    return f > TP_COVER_MIN ? fmin(f, 1.0) : 0.0;
}

static span meet(span a, span b)
{
    return (span){fmax(a.lo, b.lo), fmin(a.hi, b.hi)};
}

static int cell_node(const refine *r, int layer, int i, int j)
{
    return r->grid->cell[(layer * r->ny + j) * r->nx + i];
}

/* Area of the intersection of layers a, b (and c when c >= 0) in cell (i, j), m2. */
static double common_area(const refine *r, int a, int b, int c, int i, int j)
{
    span x = meet(r->lg[a].x, r->lg[b].x), y = meet(r->lg[a].y, r->lg[b].y);
    if (c >= 0) {
        x = meet(x, r->lg[c].x);
        y = meet(y, r->lg[c].y);
    }
    return cover(x, i, r->dx) * r->dx * cover(y, j, r->dy) * r->dy;
}

static double layer_area(const refine *r, int k, int i, int j)
{
    return r->lg[k].fx[i] * r->dx * r->lg[k].fy[j] * r->dy;
}

/* The gap area around middle layer k in cell (i, j) (0 without a closed gap there). */
static double gap_area(const refine *r, int k, int i, int j)
{
    if (k <= 0 || k + 1 >= r->nl || !r->gap[k])
        return 0.0;
    return fmax(0.0, common_area(r, k - 1, k + 1, -1, i, j) - common_area(r, k - 1, k, k + 1, i, j));
}

/* ---- geometry ------------------------------------------------------------------------------ */

static tp_status geometry(refine *r)
{
    const tp_description *desc = r->desc;
    const tp_bed *bed = &desc->bed;
    double W = bed->size[0], D = bed->size[1];
    int k, i, j;
    char path[160];
    for (k = 0; k < r->nl; k++) {
        const tp_layer *ly = &bed->layers[k];
        layer_geo *g = &r->lg[k];
        g->m = tp_materials_find(desc, ly->material);
        g->w = tp_isset(ly->size[0]) ? ly->size[0] : W;
        g->d = tp_isset(ly->size[1]) ? ly->size[1] : D;
        g->t = ly->thickness;
        if (g->w > W * (1.0 + 1e-12) || g->d > D * (1.0 + 1e-12)) {
            snprintf(path, sizeof path, "bed.layers.%s.size", ly->id);
            tp_diag_error(r->d, tp_yamltree_nearest(r->doc, path), path,
                          "with bed.grid the cells span bed.size: make bed.size the largest "
                          "layer's plan",
                          "layer '%s' (%g x %g mm) is larger than the bed (%g x %g mm)", ly->id,
                          g->w * 1e3, g->d * 1e3, W * 1e3, D * 1e3);
            continue;
        }
        if (strlen(ly->id) + 10 >= TP_ID_MAX) {
            snprintf(path, sizeof path, "bed.layers.%d.id", k);
            tp_diag_error(r->d, tp_yamltree_nearest(r->doc, path), path,
                          "cells are named <layer>:<column>:<row>; use a shorter layer id",
                          "with bed.grid a layer id has at most %d characters", TP_ID_MAX - 11);
            continue;
        }
        g->x = (span){0.5 * (W - g->w), 0.5 * (W + g->w)};
        g->y = (span){0.5 * (D - g->d), 0.5 * (D + g->d)};
        g->fx = malloc((size_t)r->nx * sizeof *g->fx);
        g->fy = malloc((size_t)r->ny * sizeof *g->fy);
        if (!g->fx || !g->fy)
            return TP_ERR_NOMEM;
        g->i0 = g->j0 = -1;
        for (i = 0; i < r->nx; i++) {
            g->fx[i] = cover(g->x, i, r->dx);
            if (g->fx[i] > 0) {
                if (g->i0 < 0)
                    g->i0 = i;
                g->i1 = i;
            }
        }
        for (j = 0; j < r->ny; j++) {
            g->fy[j] = cover(g->y, j, r->dy);
            if (g->fy[j] > 0) {
                if (g->j0 < 0)
                    g->j0 = j;
                g->j1 = j;
            }
        }
    }
    return r->d->errors ? TP_ERR_CONFIG : TP_OK;
}

/* ---- nodes --------------------------------------------------------------------------------- */

static tp_status add_cells(refine *r)
{
    const tp_network *lp = r->lumped;
    int k, i, j;
    char id[TP_ID_MAX];
    for (k = 0; k < r->nl; k++) {
        const tp_net_node *ln = &lp->nodes[k];
        const layer_geo *g = &r->lg[k];
        for (j = 0; j < r->ny; j++) {
            for (i = 0; i < r->nx; i++) {
                double share = layer_area(r, k, i, j) / (g->w * g->d);
                int node;
                if (!(g->fx[i] > 0 && g->fy[j] > 0))
                    continue;
                /* Fits: geometry() limited layer ids to TP_ID_MAX - 11 characters. */
                snprintf(id, sizeof id, "%.*s:%d:%d", TP_ID_MAX - 11, ln->id, i % 1000, j % 1000);
                node = tp_network_add_node(r->net, id, ln->capacity * share, ln->t0);
                if (node < 0)
                    return TP_ERR_NOMEM;
                r->grid->cell[(k * r->ny + j) * r->nx + i] = node;
                r->grid->layer_capacity[k] += ln->capacity * share;
            }
        }
    }
    for (k = r->nl; k < lp->n_nodes; k++) {
        r->node_map[k] = tp_network_add_node(r->net, lp->nodes[k].id, lp->nodes[k].capacity,
                                             lp->nodes[k].t0);
        if (r->node_map[k] < 0)
            return TP_ERR_NOMEM;
    }
    return TP_OK;
}

/* ---- links --------------------------------------------------------------------------------- */

/* A copy of lumped link `l` between nodes a and b carrying `share` of it. Returns its index or
 * -1 when out of memory. */
static int split_link(refine *r, const tp_net_link *l, int a, int b, double share, int group,
                      const char *suffix)
{
    tp_network *net = r->net;
    tp_net_link *n = tp_network_add_link(net, a, b, l->law);
    if (!n)
        return -1;
    *n = *l;
    n->a = a;
    n->b = b;
    if (l->law == TP_LAW_CONDUCTION)
        n->g = l->g * share;
    else
        n->area = l->area * share;
    n->group = group;
    snprintf(n->label, sizeof n->label, "%.95s %.31s", l->label, suffix);
    return net->n_links - 1;
}

enum { W_UP, W_DOWN, W_EDGE, W_MOUNTS, W_INTERFACE, W_GAP };

/* The weight of every cell of layer k for one kind of lumped link into r->share; returns the
 * sum. `other` is the other layer of an interface or gap. */
static double weights(refine *r, int kind, int k, int other)
{
    const layer_geo *g = &r->lg[k];
    int i, j, n = r->nx * r->ny;
    double sum = 0.0;
    for (i = 0; i < n; i++)
        r->share[i] = 0.0;
    for (j = 0; j < r->ny; j++) {
        for (i = 0; i < r->nx; i++) {
            double w = 0.0;
            if (cell_node(r, k, i, j) < 0)
                continue;
            switch (kind) {
            case W_UP:
                w = layer_area(r, k, i, j);
                if (k + 1 < r->nl)
                    w -= common_area(r, k, k + 1, -1, i, j) + gap_area(r, k + 1, i, j);
                break;
            case W_DOWN:
                w = layer_area(r, k, i, j);
                if (k > 0)
                    w -= common_area(r, k - 1, k, -1, i, j) + gap_area(r, k - 1, i, j);
                break;
            case W_EDGE:
                w = ((i == g->i0) + (i == g->i1)) * g->fy[j] * r->dy +
                    ((j == g->j0) + (j == g->j1)) * g->fx[i] * r->dx;
                break;
            case W_MOUNTS:
                w = layer_area(r, k, i, j);
                break;
            case W_INTERFACE:
                w = cell_node(r, other, i, j) >= 0 ? common_area(r, k, other, -1, i, j) : 0.0;
                break;
            case W_GAP:
                w = cell_node(r, other, i, j) >= 0 ? gap_area(r, (k + other) / 2, i, j) : 0.0;
                break;
            }
            r->share[j * r->nx + i] = w > 0 ? w : 0.0;
            sum += r->share[j * r->nx + i];
        }
    }
    return sum;
}

/* Split lumped link `l` of layer k (to a sink, or to layer `other` >= 0) over the cells. */
static tp_status split_over_cells(refine *r, const tp_net_link *l, int k, int other, int kind)
{
    const tp_network *lp = r->lumped;
    double sum = weights(r, kind, k, other);
    int i, j, group = -1, top = k == r->nl - 1 && kind == W_UP;
    char suffix[32];
    if (!(sum > 0))
        return TP_OK;
    if (l->law == TP_LAW_CONVECTION && l->correlated) {
        group = tp_network_add_group(r->net, &l->conv, r->node_map[l->b]);
        if (group < 0)
            return TP_ERR_NOMEM;
    }
    for (j = 0; j < r->ny; j++) {
        for (i = 0; i < r->nx; i++) {
            double share = r->share[j * r->nx + i] / sum;
            int a, b, li;
            if (!(share > TP_SHARE_MIN))
                continue;
            a = l->a == k ? cell_node(r, k, i, j)
                          : l->a < r->nl ? cell_node(r, other, i, j) : r->node_map[l->a];
            b = l->b == k ? cell_node(r, k, i, j)
                          : l->b < r->nl ? cell_node(r, other, i, j) : r->node_map[l->b];
            snprintf(suffix, sizeof suffix, "@%d:%d", i, j);
            li = split_link(r, l, a, b, share, group, suffix);
            if (li < 0)
                return TP_ERR_NOMEM;
            if (top) {
                int c = j * r->nx + i, slot = l->law == TP_LAW_CONVECTION ? 0 : 1;
                r->grid->top_link[2 * c + slot] = li;
                if (slot == 0)
                    r->grid->top_area[c] = r->net->links[li].area;
            }
        }
    }
    (void)lp;
    return TP_OK;
}

/* In-plane conduction between neighbouring cells of every layer. */
static tp_status in_plane(refine *r)
{
    int k, i, j;
    for (k = 0; k < r->nl; k++) {
        const layer_geo *g = &r->lg[k];
        double kt = g->m->conductivity * g->t;
        for (j = 0; j < r->ny; j++) {
            for (i = 0; i < r->nx; i++) {
                int a = cell_node(r, k, i, j), b;
                tp_net_link *l;
                if (a < 0)
                    continue;
                if (i + 1 < r->nx && (b = cell_node(r, k, i + 1, j)) >= 0) {
                    l = tp_network_add_link(r->net, a, b, TP_LAW_CONDUCTION);
                    if (!l)
                        return TP_ERR_NOMEM;
                    l->g = kt * g->fy[j] * r->dy / (0.5 * (g->fx[i] + g->fx[i + 1]) * r->dx);
                    snprintf(l->label, sizeof l->label, "%s @%d:%d-%d:%d",
                             r->desc->bed.layers[k].id, i, j, i + 1, j);
                }
                if (j + 1 < r->ny && (b = cell_node(r, k, i, j + 1)) >= 0) {
                    l = tp_network_add_link(r->net, a, b, TP_LAW_CONDUCTION);
                    if (!l)
                        return TP_ERR_NOMEM;
                    l->g = kt * g->fx[i] * r->dx / (0.5 * (g->fy[j] + g->fy[j + 1]) * r->dy);
                    snprintf(l->label, sizeof l->label, "%s @%d:%d-%d:%d",
                             r->desc->bed.layers[k].id, i, j, i, j + 1);
                }
            }
        }
    }
    return TP_OK;
}

/* The sensor: its lumped link to the host layer goes to the cell(s) at sensor.position. */
static tp_status sensor_link(refine *r, const tp_net_link *l, int host)
{
    const tp_sensor_spec *s = &r->desc->sensor;
    const layer_geo *g = &r->lg[host];
    double W = r->desc->bed.size[0], D = r->desc->bed.size[1];
    double x = tp_isset(s->position[0]) ? s->position[0] : 0.5 * W;
    double y = tp_isset(s->position[1]) ? s->position[1] : 0.5 * D;
    int cols[2], rows[2], nc = 0, nr = 0, a, b, n = 0, sensor_is_a = l->a >= r->nl;
    int cells[4];
    double fx = x / r->dx, fy = y / r->dy, rx = floor(fx + 0.5), ry = floor(fy + 0.5);
    char suffix[32];
    if (x < g->x.lo - TP_ON_EDGE * r->dx || x > g->x.hi + TP_ON_EDGE * r->dx ||
        y < g->y.lo - TP_ON_EDGE * r->dy || y > g->y.hi + TP_ON_EDGE * r->dy) {
        tp_diag_error(r->d, tp_yamltree_nearest(r->doc, "sensor.position"), "sensor.position",
                      "the position is measured from the bed's lower-left corner",
                      "the sensor at [%g mm, %g mm] lies outside its host layer '%s' "
                      "([%g, %g] x [%g, %g] mm)",
                      x * 1e3, y * 1e3, r->desc->bed.layers[host].id, g->x.lo * 1e3, g->x.hi * 1e3,
                      g->y.lo * 1e3, g->y.hi * 1e3);
        return TP_ERR_CONFIG;
    }
    /* A point on a boundary between cells couples to both (all four at a corner). */
    if (fabs(fx - rx) < TP_ON_EDGE && rx > 0 && rx < r->nx) {
        cols[nc++] = (int)rx - 1;
        cols[nc++] = (int)rx;
    } else {
        cols[nc++] = (int)fmin(fmax(floor(fx), 0.0), r->nx - 1.0);
    }
    if (fabs(fy - ry) < TP_ON_EDGE && ry > 0 && ry < r->ny) {
        rows[nr++] = (int)ry - 1;
        rows[nr++] = (int)ry;
    } else {
        rows[nr++] = (int)fmin(fmax(floor(fy), 0.0), r->ny - 1.0);
    }
    for (a = 0; a < nc; a++)
        for (b = 0; b < nr; b++)
            if (cell_node(r, host, cols[a], rows[b]) >= 0)
                cells[n++] = (rows[b] << 16) | cols[a];
    r->grid->sensor_x = x;
    r->grid->sensor_y = y;
    for (a = 0; a < n; a++) {
        int i = cells[a] & 0xffff, j = cells[a] >> 16, cell = cell_node(r, host, i, j);
        int sensor = r->node_map[sensor_is_a ? l->a : l->b];
        snprintf(suffix, sizeof suffix, "@%d:%d", i, j);
        if (split_link(r, l, sensor_is_a ? sensor : cell, sensor_is_a ? cell : sensor,
                       1.0 / n, -1, suffix) < 0)
            return TP_ERR_NOMEM;
    }
    return TP_OK;
}

static tp_status links(refine *r)
{
    const tp_network *lp = r->lumped;
    int i, sensor = tp_network_find_node(lp, "sensor");
    tp_status st = TP_OK;
    /* Which middle layers sit in a closed gap: the lumped network links their neighbours. */
    for (i = 0; i < lp->n_links; i++) {
        const tp_net_link *l = &lp->links[i];
        if (l->a < r->nl && l->b < r->nl && abs(l->a - l->b) == 2)
            r->gap[(l->a + l->b) / 2] = 1;
    }
    for (i = 0; i < lp->n_links && st == TP_OK; i++) {
        const tp_net_link *l = &lp->links[i];
        int la = l->a < r->nl ? l->a : -1, lb = l->b < r->nl ? l->b : -1;
        if (la >= 0 && lb >= 0) {
            st = split_over_cells(r, l, la, lb, abs(la - lb) == 1 ? W_INTERFACE : W_GAP);
        } else if (la >= 0 && l->b == sensor) {
            st = sensor_link(r, l, la);
        } else if (lb >= 0 && l->a == sensor) {
            st = sensor_link(r, l, lb);
        } else if (la >= 0) {
            int kind = l->path == TP_PATH_TOP_CONV || l->path == TP_PATH_TOP_RAD ? W_UP
                       : l->path == TP_PATH_BOTTOM_CONV || l->path == TP_PATH_BOTTOM_RAD ? W_DOWN
                       : l->path == TP_PATH_EDGE ? W_EDGE
                       : l->path == TP_PATH_MOUNTS ? W_MOUNTS : -1;
            st = kind >= 0 ? split_over_cells(r, l, la, -1, kind) : TP_ERR_CONFIG;
        } else if (lb < 0) {
            tp_net_link *n = tp_network_add_link(r->net, r->node_map[l->a], r->node_map[l->b],
                                                 l->law);
            if (!n)
                return TP_ERR_NOMEM;
            *n = *l;
            n->a = r->node_map[l->a];
            n->b = r->node_map[l->b];
        } else {
            st = TP_ERR_CONFIG; /* a sink that convects into a layer: not made by plate.c */
        }
    }
    return st == TP_OK ? in_plane(r) : st;
}

/* ---- the heater ---------------------------------------------------------------------------- */

/* Copy a lumped source's parameters into a new one, keeping the new one's node list. */
static void copy_source(tp_net_source *ns, const tp_net_source *ls)
{
    int *nodes = ns->nodes, n = ns->n_nodes;
    double *weights = ns->weights;
    *ns = *ls;
    ns->nodes = nodes;
    ns->weights = weights;
    ns->n_nodes = n;
}

/* The weights of the cells of heater layer k: its area in each, or with heater.pattern the
 * band and inner shares. Fills nodes/w; returns the count, or -1 on an input error. */
static int heater_map(refine *r, int k, int *nodes, double *w)
{
    const tp_heater_pattern *pat = &r->desc->heater.pattern;
    const layer_geo *g = &r->lg[k];
    double a_band = 0.0, a_in = 0.0, b;
    span ix = {0, 0}, iy = {0, 0};
    int i, j, n = 0;
    if (pat->present) {
        b = pat->border;
        if (2.0 * b >= fmin(g->w, g->d)) {
            tp_diag_error(r->d, tp_yamltree_nearest(r->doc, "heater.pattern.border"),
                          "heater.pattern.border",
                          "the band runs inside the heater layer's outline",
                          "a border of %g mm leaves nothing inside the %g x %g mm heater layer",
                          b * 1e3, g->w * 1e3, g->d * 1e3);
            return -1;
        }
        ix = (span){g->x.lo + b, g->x.hi - b};
        iy = (span){g->y.lo + b, g->y.hi - b};
        a_in = (g->w - 2.0 * b) * (g->d - 2.0 * b);
        a_band = g->w * g->d - a_in;
    }
    for (j = 0; j < r->ny; j++) {
        for (i = 0; i < r->nx; i++) {
            double area = layer_area(r, k, i, j), inner;
            if (cell_node(r, k, i, j) < 0 || !(area > 0))
                continue;
            nodes[n] = cell_node(r, k, i, j);
            w[n] = area;
            if (pat->present) {
                inner = cover(ix, i, r->dx) * r->dx * cover(iy, j, r->dy) * r->dy;
                w[n] = pat->border_share * fmax(area - inner, 0.0) / a_band +
                       (1.0 - pat->border_share) * inner / a_in;
            }
            n++;
        }
    }
    return n;
}

static tp_status sources(refine *r)
{
    const tp_network *lp = r->lumped;
    int s, n;
    int *nodes = malloc((size_t)(r->nx * r->ny) * sizeof *nodes);
    double *w = malloc((size_t)(r->nx * r->ny) * sizeof *w);
    tp_status st = TP_OK;
    for (s = 0; s < lp->n_sources && st == TP_OK && nodes && w; s++) {
        const tp_net_source *ls = &lp->sources[s];
        int k = ls->nodes[0];
        tp_net_source *ns;
        if (k >= r->nl) {
            ns = tp_network_add_source(r->net, ls->id, r->node_map[k]);
            if (ns)
                copy_source(ns, ls);
            st = ns ? TP_OK : TP_ERR_NOMEM;
            continue;
        }
        n = heater_map(r, k, nodes, w);
        if (n <= 0) {
            st = TP_ERR_CONFIG;
            break;
        }
        ns = tp_network_add_source(r->net, ls->id, nodes[0]);
        if (!ns) {
            st = TP_ERR_NOMEM;
            break;
        }
        copy_source(ns, ls);
        st = tp_network_spread_source(r->net, ns, nodes, w, n);
    }
    if (!nodes || !w)
        st = TP_ERR_NOMEM;
    free(nodes);
    free(w);
    return st;
}

/* ---- the whole refinement ------------------------------------------------------------------ */

static tp_status make_grid(refine *r)
{
    tp_net_grid *g = calloc(1, sizeof *g);
    int n = r->nx * r->ny, k;
    if (!g)
        return TP_ERR_NOMEM;
    r->net->grid = g;
    r->grid = g;
    g->nx = r->nx;
    g->ny = r->ny;
    g->n_layers = r->nl;
    g->width = r->desc->bed.size[0];
    g->depth = r->desc->bed.size[1];
    g->sensor_x = g->sensor_y = TP_UNSET;
    g->layer_id = calloc((size_t)r->nl, sizeof *g->layer_id);
    g->cell = malloc((size_t)(n * r->nl) * sizeof *g->cell);
    g->layer_capacity = calloc((size_t)r->nl, sizeof *g->layer_capacity);
    g->top_area = calloc((size_t)n, sizeof *g->top_area);
    g->top_link = malloc((size_t)(2 * n) * sizeof *g->top_link);
    if (!g->layer_id || !g->cell || !g->layer_capacity || !g->top_area || !g->top_link)
        return TP_ERR_NOMEM;
    for (k = 0; k < n * r->nl; k++)
        g->cell[k] = -1;
    for (k = 0; k < 2 * n; k++)
        g->top_link[k] = -1;
    for (k = 0; k < r->nl; k++)
        snprintf(g->layer_id[k], TP_ID_MAX, "%s", r->desc->bed.layers[k].id);
    return TP_OK;
}

tp_status tp_grid_refine(const tp_description *desc, const tp_yamltree *doc, tp_network **owned,
                         tp_network *net, tp_diag *d)
{
    const tp_network *lumped = *owned;
    refine r;
    tp_status st;
    int k;
    memset(&r, 0, sizeof r);
    r.desc = desc;
    r.doc = doc;
    r.lumped = lumped;
    r.net = net;
    r.d = d;
    r.nx = (int)desc->bed.grid[0];
    r.ny = (int)desc->bed.grid[1];
    r.nl = (int)desc->bed.n_layers;
    r.dx = desc->bed.size[0] / r.nx;
    r.dy = desc->bed.size[1] / r.ny;
    r.node_map = malloc((size_t)lumped->n_nodes * sizeof *r.node_map);
    r.share = malloc((size_t)(r.nx * r.ny) * sizeof *r.share);
    st = r.node_map && r.share ? make_grid(&r) : TP_ERR_NOMEM;
    if (st == TP_OK)
        st = geometry(&r);
    if (st == TP_OK)
        st = add_cells(&r);
    if (st == TP_OK)
        st = links(&r);
    if (st == TP_OK)
        st = sources(&r);
    if (st == TP_OK) {
        int i;
        net->grid->from = malloc((size_t)net->n_nodes * sizeof *net->grid->from);
        if (!net->grid->from)
            st = TP_ERR_NOMEM;
        for (k = 0; st == TP_OK && k < r.nl; k++)
            for (i = 0; i < r.nx * r.ny; i++)
                if (net->grid->cell[k * r.nx * r.ny + i] >= 0)
                    net->grid->from[net->grid->cell[k * r.nx * r.ny + i]] = k;
        for (k = r.nl; st == TP_OK && k < lumped->n_nodes; k++)
            net->grid->from[r.node_map[k]] = k;
        if (st == TP_OK)
            st = tp_network_finish(*owned);
        if (st == TP_OK) {
            net->grid->lumped = *owned;
            *owned = NULL;
        }
    }
    if (st == TP_OK) {
        net->top_node = -1;
        net->top_half_r = lumped->top_half_r;
        net->top_area = lumped->top_area;
    }
    for (k = 0; k < r.nl; k++) {
        free(r.lg[k].fx);
        free(r.lg[k].fy);
    }
    free(r.node_map);
    free(r.share);
    return st;
}
