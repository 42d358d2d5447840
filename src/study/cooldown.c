/* Cool-down with the heater off (docs/cool.md). */
#include "cooldown.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "materials.h"
#include "series.h"
#include "steady.h"

#define TP_COOL_METAL_K 10.0 /* W/(m.K): a conductivity at or above this is treated as metal */
#define TP_COOL_GLASS_K 0.7  /* W/(m.K): at or above this (below metal) glass or ceramic;
                                below it plastic (docs/cool.md: tepid's rule) */

/* Burn thresholds, degC, for 1 s, 10 s and 60 s of contact: EN ISO 13732-1:2008, the burn
 * threshold figures of 4.2.1 (1 s and 10 s, the lower end of each band) and the table of
 * longer contact (1 min: 51 degC for every material). From memory, not confirmed against the
 * standard's text: check them there (docs/cool.md). */
static const double burn_c[3][3] = {
    {65.0, 55.0, 51.0}, /* uncoated metal */
    {75.0, 66.0, 51.0}, /* glass, ceramics */
    {85.0, 71.0, 51.0}, /* plastics */
};
static const double contacts[3] = {1.0, 10.0, 60.0};

double tp_cooldown_burn_threshold(tp_cooldown_class cls, double contact)
{
    int k;
    if ((unsigned)cls > TP_COOL_PLASTIC)
        return TP_UNSET;
    for (k = 0; k < 3; k++)
        if (contact == contacts[k])
            return burn_c[cls][k] + TP_KELVIN_0C;
    return TP_UNSET;
}

tp_cooldown_class tp_cooldown_class_of(double conductivity)
{
    if (conductivity >= TP_COOL_METAL_K)
        return TP_COOL_METAL;
    return conductivity >= TP_COOL_GLASS_K ? TP_COOL_GLASS : TP_COOL_PLASTIC;
}

const char *tp_cooldown_class_name(tp_cooldown_class cls)
{
    static const char *const names[] = {"metal", "glass/ceramic", "plastic"};
    return (unsigned)cls <= TP_COOL_PLASTIC ? names[cls] : "?";
}

/* What the run's output callback needs: the history, and when to stop. */
typedef struct watch {
    tp_cooldown *c;
    double stop_touch; /* K: stop once the touch surface is below this ... */
    double stop_air;   /* ... and the air below this (NaN: no air) */
} watch;

static double touch_of(const tp_history *h, long i, const tp_sample *s)
{
    const tp_network *net = h->net;
    double hot = -HUGE_VAL;
    int k;
    if (h->surface_max)
        return h->surface_max[i];
    if (isfinite(h->surface[i]))
        return h->surface[i];
    for (k = 0; k < net->n_nodes; k++)
        if (net->nodes[k].capacity > 0)
            hot = fmax(hot, s->temps[k]);
    return hot;
}

static int record(void *user, const tp_sample *s)
{
    watch *w = user;
    tp_cooldown *c = w->c;
    tp_history *h = &c->history;
    long i = h->n;
    double *grown;
    if (tp_history_record(h, s) != 0)
        return 1;
    grown = realloc(c->touch, (size_t)h->cap * sizeof *c->touch);
    if (!grown) {
        h->failed = 1;
        return 1;
    }
    c->touch = grown;
    c->touch[i] = touch_of(h, i, s);
    return c->touch[i] < w->stop_touch &&
           (c->air_node < 0 || s->temps[c->air_node] < w->stop_air);
}

/* The start: the holding point, or `from` on every node with capacity but air and walls. */
static tp_status start_state(const tp_network *net, double from, int air, double *y, tp_diag *d)
{
    tp_steady hold;
    tp_status st;
    int i;
    if (tp_isset(from)) {
        tp_network_initial_state(net, y);
        for (i = 0; i < net->n_free; i++) {
            int node = net->free_nodes[i];
            if (node != air && strcmp(net->nodes[node].id, "walls") != 0)
                y[i] = from;
        }
        return TP_OK;
    }
    memset(&hold, 0, sizeof hold);
    st = tp_steady_hold(net, &hold, d);
    if (st == TP_OK)
        tp_steady_state_vector(net, &hold, y);
    tp_steady_clear(&hold);
    return st;
}

static void add_level(tp_cooldown *c, tp_cooldown_level_kind kind, double level, double contact)
{
    if (c->n_levels < TP_COOLDOWN_MAX_LEVELS)
        c->levels[c->n_levels++] = (tp_cooldown_level){kind, level, contact, TP_UNSET};
}

/* The top layer's material class (physical form), metal without one (the lowest thresholds). */
static void top_class(const tp_description *desc, tp_cooldown *c)
{
    const tp_material_spec *m;
    c->cls = TP_COOL_METAL;
    c->top_material = NULL;
    if (desc->form != TP_FORM_PHYSICAL || desc->bed.n_layers == 0)
        return;
    m = tp_materials_find(desc, desc->bed.layers[desc->bed.n_layers - 1].material);
    if (!m)
        return;
    c->cls = tp_cooldown_class_of(m->conductivity);
    c->top_material = m->id;
}

static double crossing(const tp_cooldown *c, const double *v, long stride, double level)
{
    const tp_history *h = &c->history;
    if (h->n == 0)
        return TP_UNSET;
    if (v[0] < level)
        return 0.0;
    return tp_series_first_fall(h->t, v, h->n, stride, level);
}

tp_status tp_cooldown_run(const tp_description *desc, const tp_network *net, double from,
                          const double *to, int n_to, tp_cooldown *out, tp_diag *d)
{
    tp_integrate_opts o;
    double *y = NULL, *duty = NULL, room = tp_network_room(net), lowest = HUGE_VAL;
    watch w;
    tp_status st;
    int k;
    memset(out, 0, sizeof *out);
    out->air_node = desc->enclosure.present ? tp_network_find_node(net, "air") : -1;
    out->from_hold = !tp_isset(from);
    top_class(desc, out);
    for (k = 0; k < 3; k++)
        add_level(out, TP_COOL_BURN, tp_cooldown_burn_threshold(out->cls, contacts[k]),
                  contacts[k]);
    for (k = 0; k < n_to && k < TP_COOLDOWN_MAX_TO; k++)
        add_level(out, TP_COOL_TO, to[k], TP_UNSET);
    add_level(out, TP_COOL_ROOM, room + TP_COOLDOWN_ROOM_MARGIN, TP_UNSET);
    if (out->air_node >= 0)
        add_level(out, TP_COOL_AIR, room + TP_COOLDOWN_ROOM_MARGIN, TP_UNSET);
    for (k = 0; k < out->n_levels; k++)
        if (out->levels[k].kind != TP_COOL_AIR)
            lowest = fmin(lowest, out->levels[k].level);
    st = tp_history_init(&out->history, net);
    if (st != TP_OK)
        return st;
    y = malloc((size_t)tp_network_state_size(net) * sizeof *y);
    duty = calloc((size_t)(net->n_sources > 0 ? net->n_sources : 1), sizeof *duty);
    if (!y || !duty) {
        free(y);
        free(duty);
        return TP_ERR_NOMEM;
    }
    st = start_state(net, from, out->air_node, y, d);
    if (st == TP_OK) {
        tp_integrate_defaults(&desc->run, &o);
        o.t_end = TP_COOLDOWN_HORIZON;
        o.y0 = y;
        o.duty = duty; /* open loop, every source off */
        w = (watch){out, lowest, room + TP_COOLDOWN_ROOM_MARGIN};
        o.out = record;
        o.user = &w;
        st = tp_integrate(net, &o, &out->stats, d);
        if (st == TP_OK && out->history.failed)
            st = TP_ERR_NOMEM;
    }
    free(y);
    free(duty);
    if (st != TP_OK)
        return st;
    out->start = out->touch[0];
    for (k = 0; k < out->n_levels; k++) {
        tp_cooldown_level *l = &out->levels[k];
        if (l->kind == TP_COOL_AIR) {
            int col = tp_history_column(&out->history, out->air_node);
            l->time = col >= 0 ? crossing(out, out->history.temps + col, out->history.n_out,
                                          l->level)
                               : TP_UNSET;
        } else {
            l->time = crossing(out, out->touch, 1, l->level);
        }
    }
    return TP_OK;
}

int tp_cooldown_cautions(const tp_description *desc, const tp_network *net, const tp_cooldown *c,
                         tp_caution out[TP_CAUTIONS_MAX])
{
    tp_caution_exposure ex = TP_CAUTION_UNSEEN;
    ex.surface_max = c->start;
    ex.node_max = c->start;
    return tp_caution_list(desc, net, &ex, out);
}

void tp_cooldown_clear(tp_cooldown *c)
{
    tp_history_clear(&c->history);
    free(c->touch);
    c->touch = NULL;
}
