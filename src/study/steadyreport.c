/* The answers of `tepid steady`: steady states, loss split, margin, surface map, cautions. */
#include "steadyreport.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "grid.h"

/* The loss split of the state shown, at the duty it holds. */
static tp_status split_losses(tp_network *net, tp_steadyreport *r)
{
    int src = net->has_control ? net->control.source : -1;
    tp_status st = tp_network_flows_init(&r->flows, net);
    if (st != TP_OK)
        return st;
    if (src >= 0) {
        double saved = net->duty[src];
        net->duty[src] = r->shown->duty;
        tp_network_flows(net, r->shown->temps, &r->flows);
        net->duty[src] = saved;
    } else {
        tp_network_flows(net, r->shown->temps, &r->flows);
    }
    return TP_OK;
}

static double plate_loss_total(const tp_flows *f)
{
    int p;
    double sum = 0.0;
    for (p = TP_PATH_INTERNAL + 1; p < TP_PATH_COUNT; p++)
        if (p != TP_PATH_WALLS)
            sum += f->path[p];
    return sum;
}

tp_status tp_steadyreport_run(tp_network *net, tp_steadyreport *r, tp_diag *d)
{
    tp_status st;
    int src = net->has_control ? net->control.source : -1;
    memset(r, 0, sizeof *r);
    r->margin = TP_UNSET;
    tp_surfacemap_empty(&r->map);
    r->max_duty = src >= 0 ? net->sources[src].max_duty : 1.0;
    r->holding = tp_network_holds(net);
    st = tp_steady_full(net, 1.0 / r->max_duty, &r->full, d);
    if (st == TP_OK)
        st = tp_steady_full(net, 1.0, &r->limit, d);
    if (st == TP_OK && r->holding)
        st = tp_steady_hold(net, &r->hold, d);
    if (st != TP_OK)
        return st;
    r->shown = r->holding ? &r->hold : &r->limit;
    if (r->holding)
        r->margin = r->max_duty / r->hold.duty;
    if ((st = split_losses(net, r)) != TP_OK)
        return st;
    r->plate_loss = plate_loss_total(&r->flows);
    if (net->grid) {
        const tp_net_grid *g = net->grid;
        double *map = malloc((size_t)g->nx * (size_t)g->ny * sizeof *map);
        if (!map)
            return TP_ERR_NOMEM;
        tp_network_surface_map(net, r->shown->temps, map);
        tp_surfacemap_compute(g, map, &r->map);
        free(map);
    }
    return TP_OK;
}

void tp_steadyreport_clear(tp_steadyreport *r)
{
    tp_network_flows_clear(&r->flows);
    tp_steady_clear(&r->full);
    tp_steady_clear(&r->limit);
    tp_steady_clear(&r->hold);
    r->shown = NULL;
}

int tp_steadyreport_cautions(const tp_description *desc, const tp_network *net,
                             const tp_steadyreport *r, tp_caution out[TP_CAUTIONS_MAX])
{
    const double *t = r->shown->temps;
    tp_caution_exposure ex = TP_CAUTION_UNSEEN;
    double *layer_peak = NULL;
    int i, n;
    for (i = 0; i < net->n_nodes; i++)
        if (net->nodes[i].capacity > 0 && (!isfinite(ex.node_max) || t[i] > ex.node_max))
            ex.node_max = t[i];
    ex.surface_max = tp_network_surface(net, t);
    ex.node_peak = t;
    if (net->grid) {
        /* The hottest cell of the surface and of each layer. */
        const tp_net_grid *g = net->grid;
        if (r->map.cells > 0)
            ex.surface_max = r->map.max;
        layer_peak = malloc((size_t)g->n_layers * sizeof *layer_peak);
        for (i = 0; layer_peak && i < g->n_layers; i++) {
            double mean, lo;
            tp_grid_layer_stats(net, i, t, &mean, &lo, &layer_peak[i]);
        }
        ex.layer_peak = layer_peak;
    }
    ex.current_max = tp_network_current(net, t);
    n = tp_caution_list(desc, net, &ex, out);
    free(layer_peak);
    return n;
}
