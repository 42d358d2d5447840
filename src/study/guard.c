/* Protection design (docs/guard.md).
 *
 * The controller's reading is sampled at every tick, t_k = k T. Three checks judge it:
 *   rise:    while the setpoint has not been reached and r < setpoint - approach,
 *            r(t) - r(t - rise_window) >= rise_min for every window inside the armed stretch;
 *   hold:    after the setpoint is reached, r < setpoint - hold_band for at most hold_grace;
 *   ceiling: r <= ceiling always.
 * Healthy corners (every combination of the ends of the ranges in `guard:`, plus nominal) give
 * the worst rises, dips and peaks; the thresholds keep them with a safety factor and are chosen
 * among the safe ones to detect the injected faults soonest. */
#include "guard.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "array.h"
#include "assemble.h"
#include "config.h"
#include "integrate.h"
#include "materials.h"
#include "parallel.h"
#include "program.h"

#define TP_GUARD_TIME_EPS 1.0e-6 /* s: sample times closer than this are the same time */

/* ---- the checks ----------------------------------------------------------------------- */

double tp_guard_first(const tp_guard_detect *det)
{
    double f = TP_UNSET;
    if (isfinite(det->rise))
        f = det->rise;
    if (isfinite(det->hold) && !(f <= det->hold))
        f = det->hold;
    if (isfinite(det->ceiling) && !(f <= det->ceiling))
        f = det->ceiling;
    return f;
}

/* The setpoint at sample i (sp[i], or `setpoint` when sp is NULL; NaN while a schedule has the
 * heater off) after updating the "reached" latch of tp_guard_check_series at that sample. */
static double latch_step(const double *sp, double setpoint, const double *r, long i, int *reached)
{
    double s = sp ? sp[i] : setpoint;
    if (!isfinite(s) || (sp && i > 0 && s > sp[i - 1] + TP_GUARD_STEP_K))
        *reached = 0;
    if (isfinite(s) && !*reached && r[i] >= s)
        *reached = 1;
    return s;
}

/* Walks the rise check's armed stretches. For every sample i whose window start lies in the
 * current stretch, calls back with the rise r_i - r_j. Returns the first i at which `stop`
 * says so, or -1. The window start j is the last sample at or before t_i - window. */
typedef int (*rise_fn)(void *user, long i, double rise);

static long walk_rise(const double *t, const double *r, const double *sp, long n,
                      double setpoint, int reached, double approach, double window, rise_fn fn,
                      void *user)
{
    long i, start = -1, j = 0;
    for (i = 0; i < n; i++) {
        double s = latch_step(sp, setpoint, r, i, &reached);
        int ramping = sp && i > 0 && s > sp[i - 1] + TP_GUARD_TIME_EPS;
        if (!ramping && (reached || !(r[i] < s - approach))) {
            start = -1;
            continue;
        }
        if (start < 0) {
            start = i;
            j = i;
        }
        if (t[i] - t[start] < window - TP_GUARD_TIME_EPS)
            continue;
        while (j + 1 <= i && t[j + 1] <= t[i] - window + TP_GUARD_TIME_EPS)
            j++;
        if (fn(user, i, r[i] - r[j]))
            return i;
    }
    return -1;
}

static int rise_below(void *user, long i, double rise)
{
    (void)i;
    return rise < *(const double *)user;
}

typedef struct min_rise_acc {
    double min;
    long at;
} min_rise_acc;

static int rise_min_acc(void *user, long i, double rise)
{
    min_rise_acc *a = user;
    if (rise < a->min) {
        a->min = rise;
        a->at = i;
    }
    return 0;
}

static double min_rise_series(const double *t, const double *r, const double *sp, long n,
                              double setpoint, int reached, double approach, double window,
                              double *at)
{
    min_rise_acc a = {HUGE_VAL, -1};
    walk_rise(t, r, sp, n, setpoint, reached, approach, window, rise_min_acc, &a);
    if (at)
        *at = a.at >= 0 ? t[a.at] : TP_UNSET;
    return a.min;
}

double tp_guard_min_rise(const double *t, const double *r, long n, double setpoint, int reached,
                         double approach, double window, double *at)
{
    return min_rise_series(t, r, NULL, n, setpoint, reached, approach, window, at);
}

/* Calls back at every sample the hold check counts (armed, the reading below the band) with
 * the sample where its run of such samples began; returns the first i at which `fn` says
 * stop, or -1. */
typedef int (*below_fn)(void *user, long i, long first);

static long walk_below(const double *t, const double *r, const double *sp, long n,
                       double setpoint, int reached, double band, below_fn fn, void *user)
{
    long i, first = -1;
    (void)t;
    for (i = 0; i < n; i++) {
        double s = latch_step(sp, setpoint, r, i, &reached);
        if (!reached || !(r[i] < s - band)) {
            first = -1;
            continue;
        }
        if (first < 0)
            first = i;
        if (fn(user, i, first))
            return i;
    }
    return -1;
}

typedef struct below_acc {
    const double *t;
    double longest, at, grace;
} below_acc;

static int below_longest(void *user, long i, long first)
{
    below_acc *a = user;
    if (a->t[i] - a->t[first] > a->longest) {
        a->longest = a->t[i] - a->t[first];
        a->at = a->t[first];
    }
    return 0;
}

static int below_past_grace(void *user, long i, long first)
{
    const below_acc *a = user;
    return a->t[i] - a->t[first] > a->grace + TP_GUARD_TIME_EPS;
}

static double longest_below_series(const double *t, const double *r, const double *sp, long n,
                                   double setpoint, int reached, double band, double *at)
{
    below_acc a = {t, 0.0, TP_UNSET, 0.0};
    walk_below(t, r, sp, n, setpoint, reached, band, below_longest, &a);
    if (at)
        *at = a.at;
    return a.longest;
}

double tp_guard_longest_below(const double *t, const double *r, long n, double setpoint,
                              int reached, double band, double *at)
{
    return longest_below_series(t, r, NULL, n, setpoint, reached, band, at);
}

tp_guard_detect tp_guard_check_series(const double *t, const double *r, const double *sp, long n,
                                      double setpoint, int reached, const tp_guard_settings *s)
{
    tp_guard_detect det = {TP_UNSET, TP_UNSET, TP_UNSET};
    long i;
    if (isfinite(s->rise_window) && isfinite(s->rise_min)) {
        double approach = isfinite(s->approach) ? s->approach : 0.0, rmin = s->rise_min;
        i = walk_rise(t, r, sp, n, setpoint, reached, approach, s->rise_window, rise_below,
                      &rmin);
        if (i >= 0)
            det.rise = t[i];
    }
    if (isfinite(s->hold_band) && isfinite(s->hold_grace)) {
        below_acc a = {t, 0.0, TP_UNSET, s->hold_grace};
        i = walk_below(t, r, sp, n, setpoint, reached, s->hold_band, below_past_grace, &a);
        if (i >= 0)
            det.hold = t[i];
    }
    if (isfinite(s->ceiling)) {
        for (i = 0; i < n; i++) {
            if (r[i] > s->ceiling) {
                det.ceiling = t[i];
                break;
            }
        }
    }
    return det;
}

tp_guard_detect tp_guard_check(const double *t, const double *r, long n, double setpoint,
                               int reached, const tp_guard_settings *s)
{
    return tp_guard_check_series(t, r, NULL, n, setpoint, reached, s);
}

/* ---- names -------------------------------------------------------------------------------- */

static const char *const fault_names[TP_FAULT_COUNT] = {
    "sensor-detached", "heater-open", "stuck-on", "half-power", "sensor-shorted", "sensor-open"};
static const char *const fault_phrases[TP_FAULT_COUNT] = {
    "sensor detached", "heater open circuit", "switch stuck on", "heater at half power",
    "sensor shorted (reads high)", "sensor open (reads low)"};
static const char *const setting_names[TP_G_COUNT] = {"rise_window", "rise_min", "approach",
                                                      "hold_band", "hold_grace", "ceiling"};

const char *tp_guard_fault_name(tp_guard_fault f)
{
    return (unsigned)f < TP_FAULT_COUNT ? fault_names[f] : "?";
}

const char *tp_guard_fault_phrase(tp_guard_fault f)
{
    return (unsigned)f < TP_FAULT_COUNT ? fault_phrases[f] : "?";
}

const char *tp_guard_setting_name(int which)
{
    return which >= 0 && which < TP_G_COUNT ? setting_names[which] : "?";
}

static double *setting_ptr(tp_guard_settings *s, int which)
{
    switch (which) {
    case TP_G_RISE_WINDOW:
        return &s->rise_window;
    case TP_G_RISE_MIN:
        return &s->rise_min;
    case TP_G_APPROACH:
        return &s->approach;
    case TP_G_HOLD_BAND:
        return &s->hold_band;
    case TP_G_HOLD_GRACE:
        return &s->hold_grace;
    default:
        return &s->ceiling;
    }
}

/* ---- the network and its variations ------------------------------------------------------- *
 * The study assembles each corner's network once and never edits it: a fault or a disturbance
 * runs on a copy made with the change (tp_network_copy). */

/* Where a detached sensor loses its heat: the enclosure air, else the room, else the first
 * fixed node; -1 when there is none. */
static int air_node(const tp_network *net)
{
    int i = tp_network_find_node(net, "air");
    if (i >= 0)
        return i;
    i = tp_network_find_node(net, "room");
    if (i >= 0 && net->nodes[i].capacity <= 0)
        return i;
    for (i = 0; i < net->n_nodes; i++)
        if (net->nodes[i].capacity <= 0)
            return i;
    return -1;
}

/* The node of the lumped network that `node` stands for: itself, or on a gridded plate the node
 * it was refined from (every cell of a layer stands for that layer). */
static int lumped_of(const tp_network *net, int node)
{
    return net->grid && net->grid->from ? net->grid->from[node] : node;
}

/* Whether the sensor is a node of its own that can come off its host: no source heats it, there
 * is air to lose heat to, and its links to free nodes reach one host (one node, or the cells of
 * one layer of a gridded plate). */
static int detachable(const tp_network *net)
{
    int sensor = net->control.sensor, host = -1, air = air_node(net), i, k;
    if (air < 0 || air == sensor)
        return 0;
    for (i = 0; i < net->n_sources; i++)
        for (k = 0; k < net->sources[i].n_nodes; k++)
            if (net->sources[i].nodes[k] == sensor)
                return 0;
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        int other = l->a == sensor ? l->b : l->b == sensor ? l->a : -1;
        if (other < 0 || net->nodes[other].capacity <= 0)
            continue;
        if (host >= 0 && lumped_of(net, other) != host)
            return 0;
        host = lumped_of(net, other);
    }
    return host >= 0;
}

/* The network of a detached sensor: a copy of `net` in which the sensor has lost every link to
 * the plate and keeps `loss` (W/K) to the air. */
static tp_status detached_network(const tp_network *net, double loss, const tp_network **out)
{
    int sensor = net->control.sensor, air = air_node(net);
    char label[128];
    tp_net_change ch[2];
    snprintf(label, sizeof label, "%s detached to %s", net->nodes[sensor].id,
             net->nodes[air].id);
    ch[0] = (tp_net_change){TP_CHANGE_ISOLATE, sensor, -1, 0.0, NULL, NULL};
    ch[1] = (tp_net_change){TP_CHANGE_ADD_CONDUCTION, sensor, air, loss, label, NULL};
    return tp_network_copy(net, ch, 2, out);
}

/* A study layer on a network: its node (lumped), or its index among the layers of a gridded
 * plate; -1 for what does not exist. */
typedef struct layer_ref {
    int node, grid_layer;
} layer_ref;

/* The temperature of a study layer at node temperatures `temps`: its node's, or the hottest of
 * its cells on a gridded plate (NaN when the network has neither). */
static double layer_temp(const tp_network *net, layer_ref ref, const double *temps)
{
    const tp_net_grid *g = net->grid;
    double hot = -HUGE_VAL;
    int c, n;
    if (ref.node >= 0)
        return temps[ref.node];
    if (ref.grid_layer < 0 || !g)
        return TP_UNSET;
    n = g->nx * g->ny;
    for (c = 0; c < n; c++) {
        int node = g->cell[ref.grid_layer * n + c];
        if (node >= 0 && temps[node] > hot)
            hot = temps[node];
    }
    return isfinite(hot) ? hot : TP_UNSET;
}

/* ---- traces -------------------------------------------------------------------------------- */

static void trace_clear(tp_guard_trace *tr)
{
    free(tr->t);
    free(tr->reading);
    free(tr->surface);
    free(tr->heater);
    free(tr->duty);
    free(tr->sp);
    free(tr->layers);
    memset(tr, 0, sizeof *tr);
}

static int trace_push(tp_guard_trace *tr, double t, const tp_sample *s, double surface,
                      double heater, const double *layers)
{
    long i = tr->n;
    int k;
    if (i == tr->cap) {
        long cap = tr->cap ? 2 * tr->cap : 2048;
        size_t rows = (size_t)cap, d = sizeof(double);
        size_t layers_width = (size_t)(tr->n_layers > 0 ? tr->n_layers : 1);
        if (tp_array_resize(&tr->t, rows, d) || tp_array_resize(&tr->reading, rows, d) ||
            tp_array_resize(&tr->surface, rows, d) || tp_array_resize(&tr->heater, rows, d) ||
            tp_array_resize(&tr->duty, rows, d) || tp_array_resize(&tr->sp, rows, d) ||
            tp_array_resize(&tr->layers, rows * layers_width, d))
            return -1;
        tr->cap = cap;
    }
    tr->t[i] = t;
    tr->reading[i] = s->reading;
    tr->surface[i] = surface;
    tr->heater[i] = heater;
    tr->duty[i] = s->duty;
    tr->sp[i] = s->setpoint;
    for (k = 0; k < tr->n_layers; k++)
        tr->layers[i * tr->n_layers + k] = layers[k];
    tr->n++;
    return 0;
}

/* What the output callback needs. */
typedef struct recorder {
    tp_guard_trace *tr;
    const tp_network *net;
    const layer_ref *layers; /* n_layers */
    double *map;             /* nx * ny scratch for the surface of a gridded plate, else NULL */
    double t0;               /* added to the run's times */
    double stop_level;       /* stop after the first reading at or above this (NaN: never) */
    double end_time;         /* keep the state of the sample at this time (NaN: none) */
    double *y_stop;          /* the state where the run stopped, or at end_time */
    int n_state;
    int stopped, failed;
} recorder;

static double heater_temp(const tp_network *net, const double *temps)
{
    const tp_net_source *s = &net->sources[net->control.source];
    double hot = -HUGE_VAL;
    int k;
    for (k = 0; k < s->n_nodes; k++)
        if (temps[s->nodes[k]] > hot)
            hot = temps[s->nodes[k]];
    return hot;
}

/* The working surface: the estimate of the lumped plate, or the hottest cell of a gridded one
 * (`map`: its nx * ny scratch), through the run's evaluator. */
static double surface_temp(tp_eval *ev, const double *temps, double *map)
{
    const tp_net_grid *g = tp_eval_network(ev)->grid;
    double hot = -HUGE_VAL;
    int c;
    if (!g || !map)
        return tp_eval_surface(ev, temps);
    tp_eval_surface_map(ev, temps, map);
    for (c = 0; c < g->nx * g->ny; c++)
        if (isfinite(map[c]) && map[c] > hot)
            hot = map[c];
    return isfinite(hot) ? hot : TP_UNSET;
}

static int record(void *user, const tp_sample *s)
{
    recorder *rc = user;
    double layers[TP_GUARD_LAYERS_MAX];
    int k;
    for (k = 0; k < rc->tr->n_layers; k++)
        layers[k] = layer_temp(rc->net, rc->layers[k], s->temps);
    if (trace_push(rc->tr, rc->t0 + s->t, s, surface_temp(s->eval, s->temps, rc->map),
                   heater_temp(rc->net, s->temps), layers) != 0) {
        rc->failed = 1;
        return 1;
    }
    if (s->t >= rc->end_time - TP_GUARD_TIME_EPS)
        memcpy(rc->y_stop, s->y, (size_t)rc->n_state * sizeof *s->y);
    if (s->reading >= rc->stop_level) {
        memcpy(rc->y_stop, s->y, (size_t)rc->n_state * sizeof *s->y);
        rc->stopped = 1;
        return 1;
    }
    return 0;
}

/* ---- fault hooks ---------------------------------------------------------------------------- */

typedef struct hook_ctx {
    tp_guard_fault fault;
    double pin;      /* K, pinned reading */
    double max_duty;
    double t_on;     /* s of the run from which the fault acts (0: from the start) */
} hook_ctx;

static double hook_reading(void *user, double t, double reading)
{
    const hook_ctx *h = user;
    if (t < h->t_on - TP_GUARD_TIME_EPS)
        return reading;
    if (h->fault == TP_FAULT_SENSOR_SHORT || h->fault == TP_FAULT_SENSOR_OPEN)
        return h->pin;
    return reading;
}

static double hook_duty(void *user, double t, double duty)
{
    const hook_ctx *h = user;
    if (t < h->t_on - TP_GUARD_TIME_EPS)
        return duty;
    switch (h->fault) {
    case TP_FAULT_HEATER_OPEN:
        return 0.0;
    case TP_FAULT_STUCK_ON:
        return h->max_duty;
    case TP_FAULT_HALF_POWER:
        return 0.5 * duty;
    default:
        return duty;
    }
}

/* ---- the study ---------------------------------------------------------------------------- */

typedef struct ctx {
    tp_guard_study *st;
    const tp_yamltree *doc;
    tp_diag *d;
    layer_ref layers[TP_GUARD_LAYERS_MAX];
} ctx;

/* The controller memory after ticking on readings r[0..n-1], and the gap below the setpoint at
 * which it first left full power (NaN: it never did below the setpoint). With a schedule, sp
 * holds the setpoint of each tick (NaN: off, after which the controller starts afresh, as
 * tp_integrate runs it); NULL: the controller's own setpoint. */
static void replay(const tp_control *c, const double *r, const double *sp, long n,
                   tp_control_state *s, double *gap)
{
    tp_control cc = *c;
    long i;
    int was_off = 0;
    tp_control_start(c, s);
    *gap = TP_UNSET;
    for (i = 0; i < n; i++) {
        double u;
        if (sp) {
            if (!isfinite(sp[i])) {
                was_off = 1;
                continue;
            }
            if (was_off)
                tp_control_start(c, s);
            was_off = 0;
            cc.setpoint = sp[i];
        }
        u = tp_control_tick(&cc, s, r[i]);
        if (!isfinite(*gap) && r[i] < cc.setpoint && u < c->max_duty * (1.0 - 1e-9))
            *gap = cc.setpoint - r[i];
    }
    if (was_off)
        tp_control_start(c, s);
}

/* Where each study layer is on `net`. */
static void layer_refs(const tp_guard_study *st, const tp_network *net, layer_ref *out)
{
    int k, l;
    for (k = 0; k < st->n_layers; k++) {
        out[k].node = tp_network_find_node(net, st->layer_id[k]);
        out[k].grid_layer = -1;
        for (l = 0; net->grid && out[k].node < 0 && l < net->grid->n_layers; l++)
            if (strcmp(net->grid->layer_id[l], st->layer_id[k]) == 0)
                out[k].grid_layer = l;
    }
}

/* A recorder of `tr` on `net`, with its scratch; tp_guard_trace n_layers set. Returns 0, or -1
 * when out of memory. */
static int recorder_init(recorder *rc, ctx *cx, const tp_network *net, tp_guard_trace *tr,
                         double *y)
{
    memset(rc, 0, sizeof *rc);
    tr->n_layers = cx->st->n_layers;
    layer_refs(cx->st, net, cx->layers);
    rc->tr = tr;
    rc->net = net;
    rc->layers = cx->layers;
    rc->stop_level = rc->end_time = TP_UNSET;
    rc->y_stop = y;
    rc->n_state = tp_network_state_size(net);
    if (net->grid) {
        rc->map = malloc((size_t)(net->grid->nx * net->grid->ny) * sizeof *rc->map);
        if (!rc->map)
            return -1;
    }
    return 0;
}

/* Assemble quietly (corners repeat the nominal case's warnings); errors are passed on. */
static tp_status build(ctx *cx, const tp_description *desc, const char *what,
                       const tp_network **net)
{
    tp_diag quiet;
    tp_status rc;
    tp_diag_init(&quiet, NULL);
    rc = tp_assemble(desc, cx->doc, &quiet, net);
    if (rc != TP_OK)
        tp_diag_error(cx->d, tp_diag_loc_none(), "guard",
                      rc == TP_ERR_NOMEM ? NULL : "narrow the ranges in guard:",
                      "the %s cannot be assembled: %s", what,
                      rc == TP_ERR_NOMEM ? tp_status_message(rc) : quiet.log);
    return rc;
}

static void solver_error(ctx *cx, const char *what, const tp_diag *quiet)
{
    tp_diag_error(cx->d, tp_diag_loc_none(), "guard",
                  "narrow the ranges in guard:, or check run:", "the %s failed: %s", what,
                  quiet->log);
}

/* The first controller tick at or after `t` (s): disturbances keep the tick grid. */
static double on_tick(double t, double period)
{
    return period > 0 ? ceil(t / period - 1e-9) * period : t;
}

/* The state `y` of network `from` carried to `to`, a copy with more heat capacity on some
 * nodes: what a node gains is a body at `temp` (K) that takes the node's temperature at once,
 * conserving energy, C T + Cs Ts = (C + Cs) T'. */
static void add_cold_mass(const tp_network *from, const tp_network *to, double temp, double *y)
{
    int i;
    for (i = 0; i < to->n_free; i++) {
        int node = to->free_nodes[i];
        double c = from->nodes[node].capacity, cn = to->nodes[node].capacity;
        if (cn > c)
            y[i] = (c * y[i] + (cn - c) * temp) / cn;
    }
}

/* The hold of a healthy corner on `net`, from the state `y` at which the reading first reached
 * the setpoint (the trace's last sample), for guard.hold; the disturbances split it into stages.
 * Each stage runs on a copy of `net` with every disturbance due so far, from the first
 * controller tick at or after its `after` time. The trace's last sample before a stage is
 * taken again by the stage's first tick, which reads the plate as changed (the sample before
 * the change is dropped); the controller's memory is replayed over every reading before it. */
static tp_status run_hold(ctx *cx, const tp_description *cd, const tp_network *net,
                          tp_guard_corner *c, double *y, recorder *rc)
{
    const tp_guard_study *st = cx->st;
    const tp_guard_spec *g = &st->desc->guard;
    const tp_network *cur = net;
    const tp_network *varied = NULL;
    tp_net_change chg[2];
    double when[2], t_at = 0.0, gap;
    int ne = 0, applied = 0;
    tp_status rs = TP_OK;
    if (g->gust.present) {
        when[ne] = on_tick(g->gust.after, st->period);
        chg[ne++] = (tp_net_change){TP_CHANGE_TOP_AIRFLOW, -1, -1, g->gust.airflow, NULL, NULL};
    }
    if (g->sheet.present) {
        when[ne] = on_tick(g->sheet.after, st->period);
        chg[ne++] =
            (tp_net_change){TP_CHANGE_TOP_CAPACITY, -1, -1, g->sheet.capacity, NULL, NULL};
    }
    if (ne == 2 && when[1] < when[0]) {
        double tw = when[0];
        tp_net_change tc = chg[0];
        when[0] = when[1];
        chg[0] = chg[1];
        when[1] = tw;
        chg[1] = tc;
    }
    for (;;) {
        tp_integrate_opts o;
        tp_integrate_stats stats;
        tp_control_state ctrl;
        tp_diag quiet;
        double t_next;
        int due = applied;
        while (due < ne && when[due] <= t_at + TP_GUARD_TIME_EPS)
            due++;
        if (due > applied) {
            const tp_network *next = NULL;
            rs = tp_network_copy(net, chg, due, &next);
            if (rs != TP_OK) {
                const char *key = chg[due - 1].kind == TP_CHANGE_TOP_AIRFLOW ? "guard.gust"
                                                                               : "guard.sheet";
                tp_diag_error(cx->d, tp_yamltree_nearest(cx->doc, key), key,
                              "drop it, or use the physical form with a top layer",
                              "the disturbance cannot be applied to this plate");
                break;
            }
            add_cold_mass(cur, next, cd->room.temperature, y);
            tp_network_release(&varied);
            varied = next;
            cur = varied;
            applied = due;
        }
        t_next = applied < ne && when[applied] < g->hold ? when[applied] : g->hold;
        c->trace.n--; /* taken again by this stage's first tick */
        replay(&cur->control, c->trace.reading, NULL, c->trace.n, &ctrl, &gap);
        tp_diag_init(&quiet, NULL);
        tp_integrate_defaults(&cd->run, &o);
        o.step = st->period;
        o.t_end = t_next - t_at;
        o.y0 = y;
        o.ctrl0 = &ctrl;
        o.out = record;
        o.user = rc;
        rc->net = cur;
        rc->t0 = c->t_setpoint + t_at;
        rc->stop_level = TP_UNSET;
        rc->end_time = o.t_end;
        rs = tp_integrate(cur, &o, &stats, &quiet);
        if (rs == TP_OK && rc->failed)
            rs = TP_ERR_NOMEM;
        if (rs != TP_OK) {
            solver_error(cx, c->name, &quiet);
            break;
        }
        if (t_next >= g->hold - TP_GUARD_TIME_EPS)
            break;
        t_at = t_next;
    }
    rc->net = net;
    tp_network_release(&varied);
    return rs;
}

/* The setpoint series the checks judge a trace against: its own with a schedule, else none
 * (the study's fixed setpoint). */
static const double *trace_sp(const tp_guard_study *st, const tp_guard_trace *tr)
{
    return st->scheduled ? tr->sp : NULL;
}

/* The figures of a healthy run: the highest reading, the deepest dip below the setpoint once
 * reached (tp_guard_check_series's latch) and, with a schedule, when the reading first reached
 * the study's (highest) setpoint. */
static void corner_figures(const tp_guard_study *st, tp_guard_corner *c)
{
    const tp_guard_trace *tr = &c->trace;
    const double *sp = trace_sp(st, tr);
    long i;
    int reached = 0;
    c->peak = -HUGE_VAL;
    c->dip = 0.0;
    for (i = 0; i < tr->n; i++) {
        double s = latch_step(sp, st->setpoint, tr->reading, i, &reached);
        if (tr->reading[i] > c->peak)
            c->peak = tr->reading[i];
        if (reached && s - tr->reading[i] > c->dip)
            c->dip = s - tr->reading[i];
        if (sp && !isfinite(c->t_setpoint) && tr->reading[i] >= st->setpoint)
            c->t_setpoint = tr->t[i];
    }
}

/* The healthy run of one corner: from the cold start until the reading first reaches the
 * setpoint (or run.duration), then `guard.hold` more with the disturbances. With a schedule:
 * the schedule, laid out from this corner's start, for run.duration. */
static tp_status run_corner(ctx *cx, const tp_description *cd, tp_guard_corner *c)
{
    tp_guard_study *st = cx->st;
    const tp_network *net = NULL;
    tp_integrate_opts o;
    tp_integrate_stats stats;
    tp_control_state ctrl;
    tp_schedule plan;
    recorder rc;
    tp_diag quiet;
    tp_steady full;
    double *y = NULL;
    tp_status rs = build(cx, cd, "corner", &net);
    if (rs != TP_OK)
        return rs;
    memset(&full, 0, sizeof full);
    tp_diag_init(&quiet, NULL);
    y = malloc((size_t)tp_network_state_size(net) * sizeof *y);
    if (!y || recorder_init(&rc, cx, net, &c->trace, y) != 0) {
        rs = TP_ERR_NOMEM;
        goto done;
    }
    /* The stuck-on equilibrium at this corner. */
    c->stuck_reading = c->stuck_heater = TP_UNSET;
    if (tp_steady_full(net, 1.0, &full, &quiet) == TP_OK) {
        c->stuck_reading = full.temps[net->control.sensor] + net->control.reading.offset;
        c->stuck_heater = heater_temp(net, full.temps);
    }
    tp_integrate_defaults(&cd->run, &o);
    o.step = st->period;
    o.out = record;
    o.user = &rc;
    if (st->scheduled && tp_program_plan(cd, net, &plan) == 0)
        o.schedule = &plan;
    else
        rc.stop_level = st->setpoint;
    rs = tp_integrate(net, &o, &stats, &quiet);
    if (rs == TP_OK && rc.failed)
        rs = TP_ERR_NOMEM;
    if (rs != TP_OK) {
        solver_error(cx, c->name, &quiet);
        goto done;
    }
    c->t_setpoint = rc.stopped ? c->trace.t[c->trace.n - 1] : TP_UNSET;
    replay(&net->control, c->trace.reading, trace_sp(st, &c->trace),
           c->trace.n - (rc.stopped ? 1 : 0), &ctrl, &c->backoff_gap);
    if (rc.stopped) {
        rs = run_hold(cx, cd, net, c, y, &rc);
        if (rs != TP_OK)
            goto done;
    }
    corner_figures(st, c);
done:
    tp_steady_clear(&full);
    free(rc.map);
    free(y);
    tp_network_release(&net);
    return rs;
}

/* A detached sensor injected during the schedule: the nominal network runs the schedule up to
 * the injection (recorded into fr's trace); y receives the state there, ctrl the controller's
 * memory and `shifted` the rest of the schedule from there. The trace's sample at the injection
 * is dropped: the detached run's first tick takes it again. */
static tp_status detached_prefix(ctx *cx, const tp_network *nominal, tp_guard_fault_run *fr,
                                 const tp_guard_injection *inj, recorder *rc,
                                 tp_control_state *ctrl, tp_schedule *shifted)
{
    const tp_guard_study *st = cx->st;
    tp_integrate_opts o;
    tp_integrate_stats stats;
    tp_diag quiet;
    double gap;
    int k;
    tp_status rs;
    tp_diag_init(&quiet, NULL);
    tp_integrate_defaults(&st->desc->run, &o);
    o.step = st->period;
    o.t_end = inj->t;
    o.out = record;
    o.user = rc;
    o.schedule = &st->plan;
    rc->end_time = inj->t;
    rs = tp_integrate(nominal, &o, &stats, &quiet);
    if (rs == TP_OK && rc->failed)
        rs = TP_ERR_NOMEM;
    if (rs != TP_OK) {
        solver_error(cx, "healthy run before the injection", &quiet);
        return rs;
    }
    rc->end_time = TP_UNSET;
    fr->trace.n--;
    replay(&nominal->control, fr->trace.reading, fr->trace.sp, fr->trace.n, ctrl, &gap);
    *shifted = st->plan;
    for (k = 0; k < shifted->n; k++) {
        shifted->part[k].t0 -= inj->t;
        shifted->part[k].t1 -= inj->t;
    }
    shifted->t_end -= inj->t;
    rc->t0 = inj->t;
    return TP_OK;
}

/* The options of a fault run from the holding state: the steady state at the setpoint in y, and
 * the controller as it would be after holding for long (the integral carries the holding duty,
 * the last reading is the setpoint). */
static void from_holding(const tp_guard_study *st, const tp_network *net, const tp_steady *hold,
                         double *y, tp_control_state *ctrl, tp_integrate_opts *o)
{
    tp_steady_state_vector(net, hold, y);
    tp_control_start(&net->control, ctrl);
    ctrl->ticks = 1;
    ctrl->on = 1;
    ctrl->integral = hold->duty;
    ctrl->last_reading = st->setpoint;
    ctrl->duty = hold->duty;
    o->y0 = y;
    o->ctrl0 = ctrl;
}

/* One fault on the nominal network, followed for the horizon: from the cold start (following
 * the schedule, if any) or from the holding state (inj NULL), or injected during the schedule at
 * inj->t. The faults of the switch and the sensor's reading are hooks of the run on the nominal
 * network itself, acting from the injection; a detached sensor runs on a copy of it. */
static tp_status run_fault(ctx *cx, const tp_network *nominal, tp_guard_fault_run *fr,
                           const tp_steady *hold, const tp_guard_injection *inj)
{
    tp_guard_study *st = cx->st;
    const tp_network *detached = NULL;
    const tp_network *net = nominal;
    tp_integrate_opts o;
    tp_integrate_stats stats;
    tp_control_state ctrl;
    tp_schedule shifted;
    tp_hooks hooks;
    hook_ctx h;
    recorder rc;
    tp_diag quiet;
    double *y = NULL;
    char what[96];
    tp_status rs = fr->fault == TP_FAULT_DETACHED
                       ? detached_network(nominal, st->detached_loss, &detached)
                       : TP_OK;
    memset(&rc, 0, sizeof rc);
    if (rs != TP_OK)
        return rs;
    if (detached)
        net = detached;
    tp_diag_init(&quiet, NULL);
    y = malloc((size_t)tp_network_state_size(net) * sizeof *y);
    if (!y || recorder_init(&rc, cx, net, &fr->trace, y) != 0) {
        rs = TP_ERR_NOMEM;
        goto done;
    }
    memset(&h, 0, sizeof h);
    h.fault = fr->fault;
    h.max_duty = st->max_duty;
    h.pin = fr->fault == TP_FAULT_SENSOR_SHORT ? st->pin_high : st->pin_low;
    memset(&hooks, 0, sizeof hooks);
    hooks.user = &h;
    hooks.reading = hook_reading;
    hooks.duty = hook_duty;
    tp_integrate_defaults(&st->desc->run, &o);
    o.step = st->period;
    o.t_end = st->horizon;
    o.out = record;
    o.user = &rc;
    o.hooks = &hooks;
    if (st->scheduled && !fr->from_hold)
        o.schedule = &st->plan;
    if (inj && detached) {
        rc.net = nominal;
        rs = detached_prefix(cx, nominal, fr, inj, &rc, &ctrl, &shifted);
        rc.net = net;
        if (rs != TP_OK)
            goto done;
        o.y0 = y;
        o.ctrl0 = &ctrl;
        o.schedule = &shifted;
    } else if (inj) {
        h.t_on = inj->t;
        o.t_end = inj->t + st->horizon;
    } else if (fr->from_hold) {
        from_holding(st, net, hold, y, &ctrl, &o);
    }
    rs = tp_integrate(net, &o, &stats, &quiet);
    if (rs == TP_OK && rc.failed)
        rs = TP_ERR_NOMEM;
    if (rs != TP_OK) {
        snprintf(what, sizeof what, "fault run '%s' from %s", tp_guard_fault_name(fr->fault),
                 inj ? "the injection" : fr->from_hold ? "hold" : "the cold start");
        solver_error(cx, what, &quiet);
    }
done:
    free(rc.map);
    free(y);
    tp_network_release(&detached);
    return rs;
}

/* ---- corners ------------------------------------------------------------------------------ */

tp_status tp_guard_corner_apply(const tp_description *base, const tp_network *net,
                                tp_description *cd, const tp_guard_corner *c)
{
    tp_status rs = tp_config_copy(cd, base);
    size_t i;
    if (rs != TP_OK)
        return rs;
    if (base->form == TP_FORM_PHYSICAL) {
        if (isfinite(c->supply))
            cd->heater.supply = c->supply;
        if (isfinite(c->resistance)) {
            /* The corner's resistance replaces a rating as sold (heater.h). */
            cd->heater.resistance = c->resistance;
            cd->heater.rated_power = cd->heater.rated_voltage = TP_UNSET;
        }
        if (isfinite(c->airflow))
            cd->room.airflow = c->airflow;
        cd->room.temperature = c->room;
        return TP_OK;
    }
    for (i = 0; i < cd->network.n_sources; i++) {
        tp_raw_source *s = &cd->network.sources[i];
        if (strcmp(s->id, net->sources[net->control.source].id) != 0)
            continue;
        if (isfinite(c->supply))
            s->supply = c->supply;
        if (isfinite(c->resistance))
            s->resistance = c->resistance;
    }
    /* The raw form's room is every fixed node; the start keeps its offsets from the room. */
    {
        double room0 = TP_UNSET;
        for (i = 0; i < base->network.n_nodes; i++)
            if (tp_isset(base->network.nodes[i].fixed) && !tp_isset(room0))
                room0 = base->network.nodes[i].fixed;
        for (i = 0; i < cd->network.n_nodes && tp_isset(room0); i++) {
            tp_raw_node *nd = &cd->network.nodes[i];
            if (tp_isset(nd->fixed))
                nd->fixed += c->room - room0;
            if (tp_isset(nd->initial))
                nd->initial += c->room - room0;
        }
    }
    return TP_OK;
}

static void corner_name(tp_guard_corner *c, const int *varied, double r_mid)
{
    size_t len = 0;
    if (c->nominal) {
        snprintf(c->name, sizeof c->name, "nominal");
        return;
    }
    c->name[0] = '\0';
    if (varied[TP_RANGE_SUPPLY])
        len += (size_t)snprintf(c->name + len, sizeof c->name - len, "%.1f V", c->supply);
    if (varied[TP_RANGE_RESISTANCE] && len < sizeof c->name)
        len += (size_t)snprintf(c->name + len, sizeof c->name - len, "%sR %s", len ? ", " : "",
                                c->resistance < r_mid ? "low" : "high");
    if (varied[TP_RANGE_ROOM] && len < sizeof c->name)
        len += (size_t)snprintf(c->name + len, sizeof c->name - len, "%sroom %.0f degC",
                                len ? ", " : "", c->room - TP_KELVIN_0C);
    if (varied[TP_RANGE_AIRFLOW] && len < sizeof c->name)
        snprintf(c->name + len, sizeof c->name - len, "%sair %.1f m/s", len ? ", " : "",
                 c->airflow);
}

int tp_guard_corners_plan(const tp_guard_ranges *rr, double supply_scale, double resistance_scale,
                          tp_guard_corner *out)
{
    double lv[TP_RANGE_COUNT][2], scale[TP_RANGE_COUNT] = {1, 1, 1, 1};
    int varied[TP_RANGE_COUNT], k, n2 = 0, mask, n = 1;
    scale[TP_RANGE_SUPPLY] = supply_scale;
    scale[TP_RANGE_RESISTANCE] = resistance_scale;
    for (k = 0; k < TP_RANGE_COUNT; k++) {
        const tp_guard_range *g = &rr->r[k];
        varied[k] = g->origin != TP_RANGE_NONE && g->hi > g->lo;
        lv[k][0] = g->lo * scale[k]; /* a range that does not vary has lo = hi */
        lv[k][1] = g->hi * scale[k];
        n2 += varied[k];
    }
    memset(&out[0], 0, sizeof out[0]);
    out[0].nominal = 1;
    out[0].supply = rr->r[TP_RANGE_SUPPLY].nominal * supply_scale;
    out[0].resistance = rr->r[TP_RANGE_RESISTANCE].nominal * resistance_scale;
    out[0].room = rr->r[TP_RANGE_ROOM].nominal;
    out[0].airflow = rr->r[TP_RANGE_AIRFLOW].nominal;
    corner_name(&out[0], varied, 0.0);
    for (mask = 0; n2 > 0 && mask < (1 << n2); mask++) {
        tp_guard_corner *co = &out[n++];
        double v[TP_RANGE_COUNT];
        int bit = 0;
        for (k = 0; k < TP_RANGE_COUNT; k++)
            v[k] = lv[k][varied[k] ? (mask >> bit++) & 1 : 0];
        memset(co, 0, sizeof *co);
        co->supply = v[TP_RANGE_SUPPLY];
        co->resistance = v[TP_RANGE_RESISTANCE];
        co->room = v[TP_RANGE_ROOM];
        co->airflow = v[TP_RANGE_AIRFLOW];
        corner_name(co, varied, 0.5 * (lv[TP_RANGE_RESISTANCE][0] + lv[TP_RANGE_RESISTANCE][1]));
    }
    return n;
}

static const char *const range_names[TP_RANGE_COUNT] = {"supply", "resistance", "room",
                                                        "airflow"};

const char *tp_guard_range_name(int which)
{
    return which >= 0 && which < TP_RANGE_COUNT ? range_names[which] : "?";
}

/* A range declared as [low, high] in guard:, else NULL. */
static const double *declared_pair(const tp_guard_spec *g, int which)
{
    const double *p = which == TP_RANGE_SUPPLY ? g->supply
                      : which == TP_RANGE_ROOM ? g->room
                      : which == TP_RANGE_AIRFLOW ? g->airflow : NULL;
    return p && tp_isset(p[0]) && tp_isset(p[1]) ? p : NULL;
}

tp_status tp_guard_ranges_resolve(const tp_description *desc, const tp_yamltree *doc,
                                  const tp_network *net, tp_guard_ranges *rr, tp_diag *d)
{
    const tp_guard_spec *g = &desc->guard;
    const tp_net_source *src = net->has_control ? &net->sources[net->control.source] : NULL;
    int electric = src && src->kind == TP_SRC_ELECTRIC;
    int physical = desc->form == TP_FORM_PHYSICAL, k, bad = 0;
    double room0 = physical ? desc->room.temperature : TP_UNSET;
    size_t i;
    for (i = 0; !physical && i < desc->network.n_nodes && !tp_isset(room0); i++)
        if (tp_isset(desc->network.nodes[i].fixed))
            room0 = desc->network.nodes[i].fixed;
    memset(rr, 0, sizeof *rr);
    rr->r[TP_RANGE_SUPPLY].nominal = electric ? src->supply : TP_UNSET;
    rr->r[TP_RANGE_RESISTANCE].nominal = electric ? src->r0 : TP_UNSET;
    rr->r[TP_RANGE_ROOM].nominal = room0;
    rr->r[TP_RANGE_AIRFLOW].nominal = physical ? desc->room.airflow : TP_UNSET;
    for (k = 0; k < TP_RANGE_COUNT; k++) {
        tp_guard_range *r = &rr->r[k];
        const double *pair = declared_pair(g, k);
        char key[32];
        snprintf(key, sizeof key, "guard.%s", range_names[k]);
        r->tolerance = TP_UNSET;
        r->lo = r->hi = r->nominal;
        if (pair) {
            r->origin = TP_RANGE_DECLARED;
            r->lo = pair[0];
            r->hi = pair[1];
            if (pair[1] < pair[0]) {
                tp_diag_error(d, tp_yamltree_nearest(doc, key), key, "write [low, high]",
                              "the range is reversed");
                bad = 1;
            }
        } else if (k == TP_RANGE_RESISTANCE && tp_isset(g->resistance)) {
            r->origin = TP_RANGE_DECLARED;
            r->tolerance = g->resistance;
        } else if (k == TP_RANGE_SUPPLY && electric) {
            r->origin = TP_RANGE_DEFAULT;
            r->lo = r->nominal * (1.0 - TP_GUARD_DEFAULT_SUPPLY);
            r->hi = r->nominal * (1.0 + TP_GUARD_DEFAULT_SUPPLY);
        } else if (k == TP_RANGE_RESISTANCE && electric) {
            r->origin = TP_RANGE_DEFAULT;
            r->tolerance = TP_GUARD_DEFAULT_RESISTANCE;
        } else if (k == TP_RANGE_ROOM && tp_isset(room0)) {
            r->origin = TP_RANGE_DEFAULT;
            r->lo = fmin(TP_GUARD_DEFAULT_ROOM_LOW, room0);
            r->hi = fmax(TP_GUARD_DEFAULT_ROOM_HIGH, room0);
        }
        if (k == TP_RANGE_RESISTANCE && tp_isset(r->tolerance) && electric) {
            r->lo = r->nominal * (1.0 - r->tolerance);
            r->hi = r->nominal * (1.0 + r->tolerance);
        }
        if (r->origin == TP_RANGE_DEFAULT)
            rr->n_default++;
    }
    for (k = TP_RANGE_SUPPLY; k <= TP_RANGE_RESISTANCE; k++)
        if (!electric && rr->r[k].origin == TP_RANGE_DECLARED &&
            (k == TP_RANGE_SUPPLY || rr->r[k].tolerance > 0)) {
            const char *key = k == TP_RANGE_SUPPLY ? "guard.supply" : "guard.resistance";
            tp_diag_error(d, tp_yamltree_nearest(doc, key), key,
                          "give the heater a supply and a resistance, or drop the range",
                          "the controlled heater has a fixed power: no supply or resistance to "
                          "vary");
            bad = 1;
            break;
        }
    if (!physical && rr->r[TP_RANGE_AIRFLOW].origin == TP_RANGE_DECLARED) {
        tp_diag_error(d, tp_yamltree_nearest(doc, "guard.airflow"), "guard.airflow",
                      "airflow, gusts and sheets need the physical form (bed:, room:)",
                      "not available in the raw network form");
        bad = 1;
    }
    if (rr->r[TP_RANGE_ROOM].origin == TP_RANGE_DECLARED && !tp_isset(room0)) {
        tp_diag_error(d, tp_yamltree_nearest(doc, "guard.room"), "guard.room",
                      "add a fixed node (the room)", "the network has no room temperature to vary");
        bad = 1;
    }
    return bad ? TP_ERR_CONFIG : TP_OK;
}

/* Errors for disturbances the form cannot apply. */
static tp_status check_disturbances(ctx *cx)
{
    const tp_description *desc = cx->st->desc;
    const tp_guard_spec *g = &desc->guard;
    if (desc->form != TP_FORM_PHYSICAL && (g->gust.present || g->sheet.present)) {
        const char *key = g->gust.present ? "guard.gust" : "guard.sheet";
        tp_diag_error(cx->d, tp_yamltree_nearest(cx->doc, key), key,
                      "airflow, gusts and sheets need the physical form (bed:, room:)",
                      "not available in the raw network form");
        return TP_ERR_CONFIG;
    }
    if (cx->st->scheduled && (g->gust.present || g->sheet.present)) {
        const char *key = g->gust.present ? "guard.gust" : "guard.sheet";
        tp_diag_error(cx->d, tp_yamltree_nearest(cx->doc, key), key,
                      "drop it to study the schedule, or study a fixed setpoint with it",
                      "a disturbance during a hold is not studied with control.schedule");
        return TP_ERR_CONFIG;
    }
    return TP_OK;
}

/* ---- recommendation ----------------------------------------------------------------------- */

static double round_up(double x, double step)
{
    return ceil(x / step - 1e-9) * step;
}

static double round_down(double x, double step)
{
    return floor(x / step + 1e-9) * step;
}

/* Settings with one check only (the others never fire). */
static tp_guard_settings only(const tp_guard_settings *s, int which)
{
    tp_guard_settings o = {0, TP_UNSET, TP_UNSET, TP_UNSET, TP_UNSET, TP_UNSET, TP_UNSET};
    o.approach = s->approach;
    if (which == 0) {
        o.rise_window = s->rise_window;
        o.rise_min = s->rise_min;
    } else if (which == 1) {
        o.hold_band = s->hold_band;
        o.hold_grace = s->hold_grace;
    } else {
        o.ceiling = s->ceiling;
    }
    return o;
}

/* Sum over the faults from one start of the time the check `which` needs to detect them
 * (the horizon when it does not), and how many it misses. */
static double fault_cost(const tp_guard_study *st, const tp_guard_settings *s, int which,
                         int from_hold, int *missed)
{
    tp_guard_settings o = only(s, which);
    double cost = 0.0;
    int f;
    *missed = 0;
    for (f = 0; f < TP_FAULT_COUNT; f++) {
        const tp_guard_trace *tr = &st->faults[f][from_hold].trace;
        tp_guard_detect det;
        double t;
        if (tr->n == 0)
            continue;
        det = tp_guard_check_series(tr->t, tr->reading, trace_sp(st, tr), tr->n, st->setpoint,
                                    from_hold, &o);
        t = which == 0 ? det.rise : which == 1 ? det.hold : det.ceiling;
        if (!isfinite(t))
            (*missed)++;
        cost += isfinite(t) ? t : st->horizon;
    }
    return cost;
}

static double healthy_min_rise(const tp_guard_study *st, double approach, double window, int *at)
{
    double m = HUGE_VAL;
    int c;
    *at = -1;
    for (c = 0; c < st->n_corners; c++) {
        const tp_guard_trace *tr = &st->corners[c].trace;
        double v = min_rise_series(tr->t, tr->reading, trace_sp(st, tr), tr->n, st->setpoint,
                                   0, approach, window, NULL);
        if (v < m) {
            m = v;
            *at = c;
        }
    }
    return m;
}

static double healthy_longest(const tp_guard_study *st, double band, int *at)
{
    double m = 0.0;
    int c;
    *at = -1;
    for (c = 0; c < st->n_corners; c++) {
        const tp_guard_trace *tr = &st->corners[c].trace;
        double v = longest_below_series(tr->t, tr->reading, trace_sp(st, tr), tr->n,
                                        st->setpoint, 0, band, NULL);
        if (v > m) {
            m = v;
            *at = c;
        }
    }
    return m;
}

static const char *corner_of(const tp_guard_study *st, int c)
{
    return c >= 0 && c < st->n_corners ? st->corners[c].name : "-";
}

/* The approach: where the slowest-to-throttle controller leaves full power. */
static void recommend_approach(tp_guard_study *st, tp_guard_settings *r)
{
    double gap = 0.0, floor_a = fmax(0.5, 2.0 * st->resolution);
    int c, at = -1;
    for (c = 0; c < st->n_corners; c++)
        if (isfinite(st->corners[c].backoff_gap) && st->corners[c].backoff_gap > gap) {
            gap = st->corners[c].backoff_gap;
            at = c;
        }
    r->approach = round_up(fmax(gap, floor_a), 0.5);
    st->rec_ok[TP_G_APPROACH] = 1;
    if (at >= 0)
        snprintf(st->why[TP_G_APPROACH], sizeof st->why[0],
                 "the controller first leaves full power %.2f K below the setpoint (corner "
                 "'%s'); the rise check ends there", gap, corner_of(st, at));
    else
        snprintf(st->why[TP_G_APPROACH], sizeof st->why[0],
                 "the controller stays at full power up to the setpoint in every corner; "
                 "%.1f K keeps the rise check clear of the last readings", floor_a);
}

/* The rise check: among windows whose worst healthy rise, times rise_factor, clears the
 * floor, the one that detects the cold-start faults soonest. */
static void recommend_rise(tp_guard_study *st, const tp_guard_settings *given,
                           tp_guard_settings *r)
{
    const tp_guard_spec *g = &st->desc->guard;
    double ws = st->period * ceil(1.0 / st->period - 1e-9), best_cost = HUGE_VAL;
    double floor_r = fmax(TP_GUARD_RISE_FLOOR, TP_GUARD_QUANTA * st->resolution);
    double best_w = TP_UNSET, best_min = TP_UNSET, best_raw = TP_UNSET, best_m = TP_UNSET;
    int k, kmax = (int)floor(TP_GUARD_WINDOW_MAX / ws + 1e-9), best_at = -1;
    if (ws < st->period)
        ws = st->period;
    for (k = 1; k <= kmax; k++) {
        double w = ws * k, m, raw, rmin, cost;
        int at, missed;
        tp_guard_settings t = *r;
        if (isfinite(given->rise_window))
            w = given->rise_window;
        m = healthy_min_rise(st, r->approach, w, &at);
        if (!isfinite(m))
            break; /* no healthy window this long: longer ones have none either */
        raw = g->rise_factor * m;
        rmin = round_down(raw, 0.1);
        if (isfinite(given->rise_min)) {
            if (given->rise_min > raw && !isfinite(given->rise_window))
                continue; /* this window is too short for the given rise */
            rmin = given->rise_min;
        } else if (rmin < floor_r && !isfinite(given->rise_window)) {
            continue;
        }
        t.rise_window = w;
        t.rise_min = rmin;
        cost = fault_cost(st, &t, 0, 0, &missed);
        if (cost < best_cost - 1e-9) {
            best_cost = cost;
            best_w = w;
            best_min = rmin;
            best_raw = raw;
            best_m = m;
            best_at = at;
        }
        if (isfinite(given->rise_window))
            break;
    }
    if (!isfinite(best_w)) {
        st->rec_ok[TP_G_RISE_WINDOW] = st->rec_ok[TP_G_RISE_MIN] = 0;
        r->rise_window = r->rise_min = TP_UNSET;
        snprintf(st->why[TP_G_RISE_WINDOW], sizeof st->why[0],
                 "no window up to %.0f s gives every healthy corner a rise of %.1f K or more "
                 "(after the factor %.2f) below setpoint - approach: no rise check "
                 "recommended", TP_GUARD_WINDOW_MAX, floor_r, g->rise_factor);
        snprintf(st->why[TP_G_RISE_MIN], sizeof st->why[0], "see rise_window");
        return;
    }
    r->rise_window = best_w;
    r->rise_min = best_min;
    st->rise_min_raw = best_raw;
    st->rec_ok[TP_G_RISE_WINDOW] = st->rec_ok[TP_G_RISE_MIN] = 1;
    snprintf(st->why[TP_G_RISE_WINDOW], sizeof st->why[0],
             "the shortest window (in steps of %.3g s) that detects the cold-start faults "
             "soonest while every healthy corner rises by %.1f K or more", ws, floor_r);
    snprintf(st->why[TP_G_RISE_MIN], sizeof st->why[0],
             "%.2f times the slowest healthy rise over %.0f s, %.2f K (corner '%s'), rounded "
             "down", g->rise_factor, best_w, best_m, corner_of(st, best_at));
}

/* The hold check: among bands from the floor to past the deepest healthy dip, each with the
 * grace that covers the longest healthy stay below it times time_factor, the pair that detects
 * the faults from hold soonest. */
static void recommend_hold(tp_guard_study *st, const tp_guard_settings *given,
                           tp_guard_settings *r)
{
    const tp_guard_spec *g = &st->desc->guard;
    double floor_b = round_up(fmax(TP_GUARD_BAND_FLOOR, TP_GUARD_QUANTA * st->resolution), 0.5);
    double floor_g = fmax(TP_GUARD_GRACE_FLOOR, 3.0 * st->period), dip = 0.0, b;
    double best_cost = HUGE_VAL, best_b = TP_UNSET, best_g = TP_UNSET, best_l = 0.0;
    int c, best_at = -1, dip_at = -1;
    for (c = 0; c < st->n_corners; c++)
        if (isfinite(st->corners[c].t_setpoint) && st->corners[c].dip > dip) {
            dip = st->corners[c].dip;
            dip_at = c;
        }
    for (b = floor_b; b <= fmax(floor_b, dip + 0.5) + 1e-9; b += 0.5) {
        tp_guard_settings t = *r;
        double l, grace, cost;
        int at, missed;
        if (isfinite(given->hold_band))
            b = given->hold_band;
        /* Both factors: a healthy dip may be 1/rise_factor deeper and time_factor longer. */
        l = healthy_longest(st, g->rise_factor * b, &at);
        grace = round_up(fmax(floor_g, g->time_factor * l), 1.0);
        if (isfinite(given->hold_grace)) {
            if (given->hold_grace < g->time_factor * l && !isfinite(given->hold_band))
                continue;
            grace = given->hold_grace;
        }
        t.hold_band = b;
        t.hold_grace = grace;
        cost = fault_cost(st, &t, 1, 1, &missed);
        if (cost < best_cost - 1e-9) {
            best_cost = cost;
            best_b = b;
            best_g = grace;
            best_l = l;
            best_at = at;
        }
        if (isfinite(given->hold_band))
            break;
    }
    if (!isfinite(best_b)) {
        best_b = round_up(dip + 0.5, 0.5);
        best_g = isfinite(given->hold_grace) ? given->hold_grace : floor_g;
        best_l = 0.0;
    }
    r->hold_band = best_b;
    r->hold_grace = best_g;
    st->rec_ok[TP_G_HOLD_BAND] = st->rec_ok[TP_G_HOLD_GRACE] = 1;
    snprintf(st->why[TP_G_HOLD_BAND], sizeof st->why[0],
             "of the bands from %.1f K to past the deepest healthy dip (%.2f K, corner '%s'), "
             "the one whose grace detects the faults from hold soonest", floor_b, dip,
             corner_of(st, dip_at));
    if (best_at >= 0)
        snprintf(st->why[TP_G_HOLD_GRACE], sizeof st->why[0],
                 "%.2f times the longest healthy stay more than %.2f x %.1f K below the "
                 "setpoint, %.0f s (corner '%s'), rounded up", g->time_factor, g->rise_factor,
                 best_b, best_l, corner_of(st, best_at));
    else
        snprintf(st->why[TP_G_HOLD_GRACE], sizeof st->why[0],
                 "no healthy corner stays more than %.2f x %.1f K below the setpoint once "
                 "there; the floor of %.0f s (at least 3 readings) applies", g->rise_factor,
                 best_b, floor_g);
}

static void recommend_ceiling(tp_guard_study *st, tp_guard_settings *r)
{
    const tp_guard_spec *g = &st->desc->guard;
    double peak = -HUGE_VAL, over, gap = fmax(TP_GUARD_CEILING_GAP,
                                               TP_GUARD_QUANTA * st->resolution);
    int c, at = -1;
    for (c = 0; c < st->n_corners; c++)
        if (st->corners[c].peak > peak) {
            peak = st->corners[c].peak;
            at = c;
        }
    over = fmax(0.0, peak - st->setpoint);
    r->ceiling = round_up(st->setpoint + fmax(over / g->rise_factor, over + gap) - TP_KELVIN_0C,
                          1.0) + TP_KELVIN_0C;
    st->rec_ok[TP_G_CEILING] = 1;
    snprintf(st->why[TP_G_CEILING], sizeof st->why[0],
             "the highest healthy reading is %.1f degC (%.2f K over the setpoint, corner '%s'); "
             "the larger of that over %.2f and that plus %.1f K above the setpoint, rounded up",
             peak - TP_KELVIN_0C, over, corner_of(st, at), g->rise_factor, gap);
}

/* ---- evaluation --------------------------------------------------------------------------- */

/* The evaluated settings on one fault run: its detections, its peaks up to the first one, and
 * whether a protected layer passed its limit before it. Counts it in the verdict. */
static void evaluate_fault(tp_guard_study *st, tp_guard_fault_run *fr, const tp_guard_settings *s)
{
    const tp_guard_trace *tr = &fr->trace;
    long i, end;
    int k;
    fr->det = (tp_guard_detect){TP_UNSET, TP_UNSET, TP_UNSET};
    fr->first = fr->surface_peak = fr->heater_peak = fr->t_limit = TP_UNSET;
    fr->limit_layer = -1;
    fr->limit_before = 0;
    if (tr->n == 0)
        return;
    fr->det = tp_guard_check_series(tr->t, tr->reading, trace_sp(st, tr), tr->n, st->setpoint,
                                    fr->from_hold, s);
    fr->first = tp_guard_first(&fr->det);
    for (i = 0, end = tr->n; i < tr->n; i++) {
        if (isfinite(fr->first) && tr->t[i] > fr->first + TP_GUARD_TIME_EPS) {
            end = i;
            break;
        }
    }
    for (i = 0; i < end; i++) {
        if (!(tr->surface[i] <= fr->surface_peak))
            fr->surface_peak = isfinite(tr->surface[i]) ? tr->surface[i] : fr->surface_peak;
        if (!(tr->heater[i] <= fr->heater_peak))
            fr->heater_peak = tr->heater[i];
    }
    for (i = 0; i < tr->n && fr->limit_layer < 0; i++)
        for (k = 0; k < st->n_layers; k++)
            if (st->layer_protected[k] &&
                tr->layers[i * tr->n_layers + k] > st->layer_limit[k]) {
                fr->t_limit = tr->t[i];
                fr->limit_layer = k;
                break;
            }
    fr->limit_before = isfinite(fr->t_limit) && !(isfinite(fr->first) && fr->first < fr->t_limit);
    if (fr->limit_before)
        st->unsafe_faults++;
    if (!isfinite(fr->first))
        st->undetected++;
}

/* A healthy corner's first trip with a schedule: the check, the time and the segment. */
static void corner_trip(const tp_guard_study *st, const tp_guard_corner *co, tp_guard_trip *out)
{
    double f = tp_guard_first(&co->det);
    out->check = -1;
    out->t = f;
    out->segment = -1;
    if (!isfinite(f))
        return;
    out->check = f == co->det.rise ? 0 : f == co->det.hold ? 1 : 2;
    if (st->scheduled)
        tp_schedule_at(&st->plan, f, &out->segment);
}

void tp_guard_evaluate(tp_guard_study *st, const tp_guard_settings *s)
{
    int c, f, from;
    st->healthy_trips = st->unsafe_faults = st->undetected = 0;
    for (c = 0; c < st->n_corners; c++) {
        tp_guard_corner *co = &st->corners[c];
        const tp_guard_trace *tr = &co->trace;
        const double *sp = trace_sp(st, tr);
        double approach = isfinite(s->approach) ? s->approach : 0.0;
        co->det = tp_guard_check_series(tr->t, tr->reading, sp, tr->n, st->setpoint, 0, s);
        co->rise_margin = isfinite(s->rise_window) && isfinite(s->rise_min)
                              ? min_rise_series(tr->t, tr->reading, sp, tr->n, st->setpoint, 0,
                                                approach, s->rise_window, NULL) - s->rise_min
                              : TP_UNSET;
        co->hold_margin = isfinite(s->hold_band) && isfinite(s->hold_grace)
                              ? s->hold_grace - longest_below_series(tr->t, tr->reading, sp,
                                                                     tr->n, st->setpoint, 0,
                                                                     s->hold_band, NULL)
                              : TP_UNSET;
        co->ceiling_margin = isfinite(s->ceiling) ? s->ceiling - co->peak : TP_UNSET;
        corner_trip(st, co, &st->trips[c]);
        if (isfinite(tp_guard_first(&co->det)))
            st->healthy_trips++;
    }
    for (f = 0; f < TP_FAULT_COUNT; f++)
        for (from = 0; from < 2; from++)
            evaluate_fault(st, &st->faults[f][from], s);
    for (f = 0; st->scheduled && f < TP_FAULT_COUNT; f++)
        for (from = 0; from < TP_GUARD_MID_COUNT; from++)
            evaluate_fault(st, &st->mid[f][from], s);
}

/* ---- the whole study ---------------------------------------------------------------------- */

static void setup_layers(tp_guard_study *st)
{
    const tp_description *desc = st->desc;
    size_t i;
    st->n_layers = 0;
    if (desc->form != TP_FORM_PHYSICAL)
        return;
    for (i = 0; i < desc->bed.n_layers && i < TP_GUARD_LAYERS_MAX; i++) {
        const tp_material_spec *m = tp_materials_find(desc, desc->bed.layers[i].material);
        snprintf(st->layer_id[i], TP_ID_MAX, "%s", desc->bed.layers[i].id);
        st->layer_limit[i] = m ? m->max_temperature : TP_UNSET;
        st->n_layers++;
    }
}

/* The reading's step near the setpoint: one ADC code's worth of temperature. */
static double resolution(const tp_control_reading_model *m, double setpoint)
{
    long c0, c1;
    if (!m->thermistor)
        return 0.0;
    c0 = tp_control_adc_code(m, setpoint - 1.0);
    c1 = tp_control_adc_code(m, setpoint + 1.0);
    return c0 != c1 ? 2.0 / fabs((double)(c0 - c1)) : 2.0;
}

static tp_status check_control(const tp_description *desc, const tp_yamltree *doc,
                               const tp_network *net, tp_diag *d)
{
    if (!tp_network_holds(net)) {
        if (net->has_control)
            tp_diag_error(d, tp_yamltree_nearest(doc, "control.mode"), "control.mode",
                          "use mode pid or on-off with a setpoint",
                          "guard judges a controller holding a setpoint; mode '%s' holds none",
                          tp_description_mode_name(net->control.mode));
        else
            tp_diag_error(d, tp_yamltree_nearest(doc, "control"), "control",
                          "add control: {mode: pid, setpoint: ...} or mode on-off",
                          "guard judges a controller holding a setpoint; the file has none");
        return TP_ERR_CONFIG;
    }
    if (desc->guard.time_factor < 1.0) {
        tp_diag_error(d, tp_yamltree_nearest(doc, "guard.time_factor"), "guard.time_factor",
                      "use 1 or more, e.g. 1.5",
                      "a safety factor on healthy durations below 1 gives no margin");
        return TP_ERR_CONFIG;
    }
    return TP_OK;
}

/* What the study takes from the nominal network: the controller's setpoint, period, duty
 * limit and reading step, the horizon, the detached sensor's loss, the readings of a shorted
 * and an open sensor, and the layers with their limits. */
static void nominal_setup(tp_guard_study *st, const tp_description *desc, const tp_network *net)
{
    st->setpoint = net->control.setpoint;
    st->period = net->control.period;
    st->max_duty = net->control.max_duty;
    st->resolution = resolution(&net->control.reading, st->setpoint);
    st->horizon = tp_isset(desc->guard.horizon) ? desc->guard.horizon : desc->run.duration;
    st->detached_loss = desc->guard.detached_loss;
    if (!tp_isset(desc->guard.detached_loss)) {
        /* A tenth of the sensor's coupling to its host (all its links to free nodes). */
        double g = 0.0;
        int i, s = net->control.sensor;
        for (i = 0; i < net->n_links; i++)
            if (net->links[i].law == TP_LAW_CONDUCTION &&
                (net->links[i].a == s || net->links[i].b == s))
                g += net->links[i].g;
        st->detached_loss = TP_GUARD_DETACH_FRACTION * g;
    }
    if (net->control.reading.thermistor) {
        /* The ADC's ends: a shorted NTC pulls the input to ground (the highest reading), an
         * open one leaves it at the divider's supply (the lowest). */
        st->pin_high = tp_control_reading(&net->control.reading, 1.0e4);
        st->pin_low = tp_control_reading(&net->control.reading, 100.0);
    } else {
        st->pin_high = TP_GUARD_PIN_HIGH;
        st->pin_low = TP_GUARD_PIN_LOW;
    }
    setup_layers(st);
}

/* Healthy peaks of each layer, and which layers the checks can protect. */
static void healthy_layer_peaks(tp_guard_study *st)
{
    int k, c;
    for (k = 0; k < st->n_layers; k++) {
        st->layer_healthy[k] = -HUGE_VAL;
        for (c = 0; c < st->n_corners; c++) {
            const tp_guard_trace *tr = &st->corners[c].trace;
            long i;
            for (i = 0; i < tr->n; i++)
                if (tr->layers[i * tr->n_layers + k] > st->layer_healthy[k])
                    st->layer_healthy[k] = tr->layers[i * tr->n_layers + k];
        }
        st->layer_protected[k] = isfinite(st->layer_limit[k]) &&
                                 st->layer_healthy[k] <= st->layer_limit[k];
    }
}

/* A switch stuck on: the full-power equilibrium of the nominal case and the layer furthest past
 * its limit there, the corner with the hottest full-power heater, and whether an independent
 * cut-out is required (some layer past its limit at nominal or at that corner). */
static void stuck_on(ctx *cx, const tp_description *desc, const tp_network *net, tp_guard_study *st,
                     tp_diag *quiet)
{
    tp_description cd;
    int c, k;
    memset(&cd, 0, sizeof cd);
    st->has_stuck = tp_steady_full(net, 1.0, &st->stuck, quiet) == TP_OK;
    if (st->has_stuck) {
        double over = -HUGE_VAL;
        st->stuck.reading = st->stuck.temps[net->control.sensor] + net->control.reading.offset;
        layer_refs(st, net, cx->layers);
        for (k = 0; k < st->n_layers; k++) {
            double t = layer_temp(net, cx->layers[k], st->stuck.temps) - st->layer_limit[k];
            if (t > 0 && t > over) {
                over = t;
                st->stuck_over_layer = k;
            }
        }
    }
    for (c = 0; c < st->n_corners; c++)
        if (isfinite(st->corners[c].stuck_heater) &&
            (st->stuck_worst < 0 ||
             st->corners[c].stuck_heater > st->corners[st->stuck_worst].stuck_heater))
            st->stuck_worst = c;
    st->cutout_required = st->stuck_over_layer >= 0;
    if (st->stuck_worst >= 0 && !st->cutout_required) {
        /* The corner with the hottest full-power heater layer, every layer against its
         * limit. */
        tp_guard_corner *w = &st->corners[st->stuck_worst];
        const tp_network *wn = NULL;
        tp_steady ws;
        memset(&ws, 0, sizeof ws);
        if (tp_guard_corner_apply(desc, net, &cd, w) == TP_OK && build(cx, &cd, "corner", &wn) == TP_OK &&
            tp_steady_full(wn, 1.0, &ws, quiet) == TP_OK) {
            layer_refs(st, wn, cx->layers);
            for (k = 0; k < st->n_layers; k++)
                if (layer_temp(wn, cx->layers[k], ws.temps) > st->layer_limit[k])
                    st->cutout_required = 1;
        }
        tp_steady_clear(&ws);
        tp_network_release(&wn);
        tp_config_clear(&cd);
    }
}

/* Where faults are injected during the schedule: the middle of its first ramp and of its first
 * hold, moved to the first controller tick at or after it. */
static void plan_injections(tp_guard_study *st)
{
    static const tp_schedule_kind kinds[TP_GUARD_MID_COUNT] = {TP_SCHEDULE_RAMP,
                                                                 TP_SCHEDULE_HOLD};
    int m, k;
    for (m = 0; m < TP_GUARD_MID_COUNT; m++) {
        tp_guard_injection *in = &st->inject[m];
        in->segment = -1;
        in->t = in->setpoint = TP_UNSET;
        for (k = 0; k < st->plan.n && in->segment < 0; k++) {
            const tp_schedule_part *p = &st->plan.part[k];
            if (p->kind == kinds[m] && p->t1 > p->t0) {
                in->segment = k;
                in->t = on_tick(0.5 * (p->t0 + p->t1), st->period);
                in->setpoint = tp_schedule_at(&st->plan, in->t, NULL);
            }
        }
    }
}

/* Every fault from the cold start and from the holding state, and with a schedule injected
 * mid-ramp and mid-hold. */
/* ---- the runs on threads ----------------------------------------------------------------------
 * The healthy corners and the fault runs do not depend on each other: each writes only its own
 * corner or fault record and reads the frozen network and description, so they run on
 * tp_parallel_jobs() threads (parallel.h). A task keeps its messages to itself; the first task
 * that failed, in the study's order, runs again on the calling thread with the study's
 * diagnostics, so that what is reported does not depend on the threads. */

typedef struct runs {
    ctx *cx;                       /* the study's: its diagnostics */
    const tp_description *desc;    /* the nominal case */
    const tp_network *net;
    const tp_steady *hold;         /* the nominal holding state (fault runs) */
    tp_guard_fault_run **fr;       /* fault runs: the record of each task */
    const tp_guard_injection **inj;/* fault runs: its injection, NULL */
    tp_status *rs;                 /* the status of each task */
} runs;

static tp_status corner_at(ctx *cx, const runs *rn, long c)
{
    tp_description cd;
    tp_status rs;
    memset(&cd, 0, sizeof cd);
    rs = tp_guard_corner_apply(rn->desc, rn->net, &cd, &cx->st->corners[c]);
    if (rs == TP_OK)
        rs = run_corner(cx, &cd, &cx->st->corners[c]);
    tp_config_clear(&cd);
    return rs;
}

static tp_status fault_at(ctx *cx, const runs *rn, long i)
{
    return run_fault(cx, rn->net, rn->fr[i], rn->hold, rn->inj[i]);
}

/* One task on a thread: a context of its own (the layer scratch) with quiet diagnostics. */
static void task(runs *rn, long i, tp_status (*at)(ctx *, const runs *, long))
{
    ctx own = *rn->cx;
    tp_diag *quiet = malloc(sizeof *quiet);
    if (!quiet) {
        rn->rs[i] = TP_ERR_NOMEM;
        return;
    }
    tp_diag_init(quiet, NULL);
    own.d = quiet;
    rn->rs[i] = at(&own, rn, i);
    free(quiet);
}

static void corner_task(void *arg, long i)
{
    task(arg, i, corner_at);
}

static void fault_task(void *arg, long i)
{
    task(arg, i, fault_at);
}

/* Run tasks 0..n-1 on threads, then again on this thread, reporting, each that failed (its
 * trace started afresh), in order, until one fails again. */
static tp_status run_tasks(runs *rn, long n, void (*fn)(void *, long),
                           tp_status (*at)(ctx *, const runs *, long),
                           tp_guard_trace *(*trace_of)(const runs *, long))
{
    long i;
    tp_status rs = TP_OK;
    rn->rs = malloc((size_t)(n > 0 ? n : 1) * sizeof *rn->rs);
    if (!rn->rs)
        return TP_ERR_NOMEM;
    tp_parallel_for(n, tp_parallel_jobs(), fn, rn);
    for (i = 0; i < n && rs == TP_OK; i++)
        if (rn->rs[i] != TP_OK) {
            trace_clear(trace_of(rn, i));
            rs = at(rn->cx, rn, i);
        }
    free(rn->rs);
    rn->rs = NULL;
    return rs;
}

static tp_guard_trace *corner_trace(const runs *rn, long c)
{
    return &rn->cx->st->corners[c].trace;
}

static tp_guard_trace *fault_trace(const runs *rn, long i)
{
    return &rn->fr[i]->trace;
}

static tp_status run_corners(ctx *cx, const tp_description *desc, const tp_network *net)
{
    runs rn;
    memset(&rn, 0, sizeof rn);
    rn.cx = cx;
    rn.desc = desc;
    rn.net = net;
    return run_tasks(&rn, cx->st->n_corners, corner_task, corner_at, corner_trace);
}

static tp_status run_faults(ctx *cx, const tp_network *net, const tp_steady *hold)
{
    tp_guard_study *st = cx->st;
    enum { MAX_RUNS = TP_FAULT_COUNT * (2 + TP_GUARD_MID_COUNT) };
    tp_guard_fault_run *fr[MAX_RUNS];
    const tp_guard_injection *inj[MAX_RUNS];
    runs rn;
    long n = 0;
    int fi, k;
    for (fi = 0; fi < TP_FAULT_COUNT; fi++) {
        for (k = 0; k < 2 + (st->scheduled ? TP_GUARD_MID_COUNT : 0); k++) {
            fr[n] = k < 2 ? &st->faults[fi][k] : &st->mid[fi][k - 2];
            inj[n] = k < 2 ? NULL : &st->inject[k - 2];
            fr[n]->fault = (tp_guard_fault)fi;
            fr[n]->from_hold = k == 1;
            if ((fi == TP_FAULT_DETACHED && !detachable(net)) || (inj[n] && inj[n]->segment < 0))
                continue;
            n++;
        }
    }
    memset(&rn, 0, sizeof rn);
    rn.cx = cx;
    rn.net = net;
    rn.hold = hold;
    rn.fr = fr;
    rn.inj = inj;
    return run_tasks(&rn, n, fault_task, fault_at, fault_trace);
}

/* Recommend from scratch; then, when settings are given, complete them: each missing member is
 * recommended consistently with the given ones. The settings used are evaluated. */
static void settle_settings(tp_guard_study *st, const tp_guard_settings *given,
                            const tp_guard_settings *none)
{
    int k;
    st->rec = *none;
    recommend_approach(st, &st->rec);
    recommend_rise(st, none, &st->rec);
    recommend_hold(st, none, &st->rec);
    recommend_ceiling(st, &st->rec);
    st->used = st->rec;
    if (given->present) {
        double raw = st->rise_min_raw;
        st->used = *none;
        st->used.approach = given->approach;
        if (!isfinite(given->approach))
            recommend_approach(st, &st->used);
        recommend_rise(st, given, &st->used);
        recommend_hold(st, given, &st->used);
        recommend_ceiling(st, &st->used);
        st->rise_min_raw = raw;
    }
    for (k = 0; k < TP_G_COUNT; k++) {
        tp_guard_settings gv = *given;
        st->given[k] = isfinite(*setting_ptr(&gv, k));
        if (st->given[k])
            *setting_ptr(&st->used, k) = *setting_ptr(&gv, k);
    }
    tp_guard_evaluate(st, &st->used);
}

tp_status tp_guard_study_run(const tp_description *desc, const tp_yamltree *doc,
                             const tp_guard_settings *given, tp_guard_study *st, tp_diag *d)
{
    const tp_network *net = NULL;
    tp_steady hold;
    tp_diag quiet;
    tp_guard_settings none = {0, TP_UNSET, TP_UNSET, TP_UNSET, TP_UNSET, TP_UNSET, TP_UNSET};
    ctx cx;
    tp_status rs;
    memset(st, 0, sizeof *st);
    memset(&hold, 0, sizeof hold);
    st->desc = desc;
    st->stuck_worst = st->stuck_over_layer = -1;
    if (!given)
        given = &none;
    cx.st = st;
    cx.doc = doc;
    cx.d = d;
    rs = build(&cx, desc, "nominal case", &net);
    if (rs != TP_OK)
        return rs;
    rs = check_control(desc, doc, net, d);
    if (rs != TP_OK)
        goto done;
    nominal_setup(st, desc, net);
    st->scheduled = tp_program_plan(desc, net, &st->plan) == 0;
    if (st->scheduled)
        plan_injections(st);
    rs = tp_guard_ranges_resolve(desc, doc, net, &st->ranges, d);
    if (rs == TP_OK)
        rs = check_disturbances(&cx);
    if (rs != TP_OK)
        goto done;
    st->n_corners = tp_guard_corners_plan(&st->ranges, 1.0, 1.0, st->corners);
    rs = run_corners(&cx, desc, net);
    if (rs != TP_OK)
        goto done;
    healthy_layer_peaks(st);
    /* The holding state and the full-power equilibrium of the nominal case. */
    tp_diag_init(&quiet, NULL);
    if (tp_steady_hold(net, &hold, &quiet) != TP_OK) {
        tp_diag_error(d, tp_diag_loc_none(), "control.setpoint",
                      "lower the setpoint or raise the heater's power",
                      "no holding state at the nominal corner: %s", quiet.log);
        rs = TP_ERR_SOLVER;
        goto done;
    }
    stuck_on(&cx, desc, net, st, &quiet);
    rs = run_faults(&cx, net, &hold);
    if (rs != TP_OK)
        goto done;
    settle_settings(st, given, &none);
done:
    tp_steady_clear(&hold);
    tp_network_release(&net);
    return rs;
}

void tp_guard_study_clear(tp_guard_study *st)
{
    int c, f;
    if (!st)
        return;
    for (c = 0; c < TP_GUARD_CORNERS_MAX; c++)
        trace_clear(&st->corners[c].trace);
    for (f = 0; f < TP_FAULT_COUNT; f++) {
        trace_clear(&st->faults[f][0].trace);
        trace_clear(&st->faults[f][1].trace);
        trace_clear(&st->mid[f][TP_GUARD_MID_RAMP].trace);
        trace_clear(&st->mid[f][TP_GUARD_MID_HOLD].trace);
    }
    tp_steady_clear(&st->stuck);
    st->n_corners = 0;
}

int tp_guard_cautions(const tp_description *desc, const tp_network *net, const tp_guard_study *st,
                      tp_caution out[TP_CAUTIONS_MAX])
{
    double surface = -HUGE_VAL, node = -HUGE_VAL;
    double *peak = malloc((size_t)net->n_nodes * sizeof *peak); /* NULL: peaks unknown */
    tp_caution_exposure ex = TP_CAUTION_UNSEEN;
    int c, k, n;
    long i;
    for (k = 0; peak && k < net->n_nodes; k++)
        peak[k] = TP_UNSET;
    for (c = 0; c < st->n_corners; c++) {
        const tp_guard_trace *tr = &st->corners[c].trace;
        for (i = 0; i < tr->n; i++) {
            if (tr->surface[i] > surface)
                surface = tr->surface[i];
            if (tr->heater[i] > node)
                node = tr->heater[i];
        }
    }
    for (k = 0; peak && k < st->n_layers; k++) {
        int nd = tp_network_find_node(net, st->layer_id[k]);
        if (nd >= 0)
            peak[nd] = st->layer_healthy[k];
    }
    ex.surface_max = isfinite(surface) ? surface : TP_UNSET;
    ex.node_max = isfinite(node) ? node : TP_UNSET;
    ex.node_peak = peak;
    n = tp_caution_list(desc, net, &ex, out);
    memset(&out[n], 0, sizeof out[n]);
    out[n].kind = TP_CAUTION_GUARD_CUTOUT;
    out[n++].layer = -1;
    free(peak);
    return n;
}
