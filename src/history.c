/* The history of a run: rows appended at each output time, arrays grown by doubling. */
#include "history.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

tp_status tp_history_init(tp_history *h, const tp_network *net)
{
    int i, k = 0;
    memset(h, 0, sizeof *h);
    h->net = net;
    h->out_nodes = malloc((size_t)(net->n_nodes > 0 ? net->n_nodes : 1) * sizeof *h->out_nodes);
    if (!h->out_nodes)
        return TP_ERR_NOMEM;
    for (i = 0; i < net->n_nodes; i++)
        if (net->nodes[i].output)
            h->out_nodes[k++] = i;
    h->n_out = k;
    return TP_OK;
}

void tp_history_clear(tp_history *h)
{
    free(h->out_nodes);
    free(h->t);
    free(h->temps);
    free(h->power);
    free(h->wire);
    free(h->current);
    free(h->duty);
    free(h->reading);
    free(h->surface);
    free(h->energy);
    memset(h, 0, sizeof *h);
}

static int grow_array(double **p, long cap, long width)
{
    double *q = realloc(*p, (size_t)(cap * width) * sizeof *q);
    if (!q)
        return -1;
    *p = q;
    return 0;
}

static int grow(tp_history *h)
{
    long cap = h->cap ? h->cap * 2 : 1024;
    int ns = h->net->n_sources > 0 ? h->net->n_sources : 1;
    if (grow_array(&h->t, cap, 1) || grow_array(&h->temps, cap, h->n_out > 0 ? h->n_out : 1) ||
        grow_array(&h->power, cap, ns) || grow_array(&h->wire, cap, 1) || grow_array(&h->current, cap, 1) ||
        grow_array(&h->duty, cap, 1) || grow_array(&h->reading, cap, 1) ||
        grow_array(&h->surface, cap, 1) || grow_array(&h->energy, cap, TP_N_QUAD))
        return -1;
    h->cap = cap;
    return 0;
}

int tp_history_record(void *user, const tp_sample *s)
{
    tp_history *h = user;
    const tp_network *net = h->net;
    long i = h->n;
    int k;
    if (i == h->cap && grow(h) != 0) {
        h->failed = 1;
        return 1;
    }
    h->t[i] = s->t;
    for (k = 0; k < h->n_out; k++)
        h->temps[i * h->n_out + k] = s->temps[h->out_nodes[k]];
    h->wire[i] = 0.0;
    for (k = 0; k < net->n_sources; k++) {
        double w = 0.0;
        h->power[i * net->n_sources + k] =
            tp_network_source_power(&net->sources[k], s->temps, net->duty[k], &w);
        h->wire[i] += w;
    }
    h->current[i] = tp_network_current(net, s->temps);
    h->duty[i] = s->duty;
    h->reading[i] = s->reading;
    h->surface[i] = tp_network_surface(net, s->temps);
    for (k = 0; k < TP_N_QUAD; k++)
        h->energy[i * TP_N_QUAD + k] = s->y[net->n_free + k];
    h->n++;
    return 0;
}

double tp_history_temp(const tp_history *h, long i, int col)
{
    return h->temps[i * h->n_out + col];
}

int tp_history_column(const tp_history *h, int node)
{
    int k;
    for (k = 0; k < h->n_out; k++)
        if (h->out_nodes[k] == node)
            return k;
    return -1;
}
