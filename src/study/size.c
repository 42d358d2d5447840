/* Sizing a heater to a target.
 *
 * The controlled source is scaled (tp_network_source_scaled: an electric element's r0 divided
 * by k, a constant-power source's power times k) on a copy of each corner's network, and run
 * full on from the cold start, open loop, until the reading (sensor node plus the reading
 * offset, without ADC quantisation, as tune identifies it) or the working surface reaches the
 * target; the crossing is interpolated linearly between output samples. The time to the target
 * falls as the power rises (more heat into the same plate), so the least k of each corner is
 * found by bracketing (steps of 2 in k) and bisection on log k until the bracket's ends are
 * within TP_SIZE_TOLERANCE. The margin needs no run: at the holding point of the target the
 * temperatures do not depend on the heater's size (the plate needs the same heat whatever
 * delivers it), so the margin at k is max_duty P_on(k) / P_hold, with P_on the element's on
 * power at those temperatures. The answer is the largest least k over the corners: the corner
 * that needs the most power limits it. */
#include "size.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "assemble.h"
#include "config.h"
#include "eval.h"
#include "hardlimits.h"
#include "heater.h"
#include "integrate.h"
#include "materials.h"
#include "steady.h"
#include "units.h"

#define TP_SIZE_HOLD_POWER 1.0e3 /* -, the stand-in source that finds the holding point has
                                    this many times the starting power: any plate that can be
                                    held at all is held below full duty */
#define TP_SIZE_SURFACE_ITER 8   /* iterations that hold the surface (not the reading) at the
                                    target */
#define TP_SIZE_SURFACE_TOL 0.01 /* K, how close the held surface comes to the target */

typedef struct sz_ctx {
    const tp_description *desc;
    const tp_yamltree *doc;
    const tp_size_request *rq;
    tp_size_result *r;
    tp_diag *d;
    int src, sensor;
    double offset;     /* K, the reading's offset */
    double t_end;      /* s simulated at most per warm-up */
    double step;       /* s between output samples */
    const tp_network *nets[TP_GUARD_CORNERS_MAX];
    double *hold_temps[TP_GUARD_CORNERS_MAX]; /* node temperatures at the holding point */
    double k_max;      /* largest scale considered */
} sz_ctx;

/* ---- one warm-up ---------------------------------------------------------------------------- */

typedef struct trip {
    int sensor, surface;
    double offset, target;
    double t_prev, v_prev;
    int have_prev;
    double t_hit; /* s; NaN: not reached */
} trip;

static int trip_out(void *user, const tp_sample *s)
{
    trip *tr = user;
    double v = tr->surface ? tp_eval_surface(s->eval, s->temps) : s->temps[tr->sensor] + tr->offset;
    if (v >= tr->target) {
        tr->t_hit = tr->have_prev && v > tr->v_prev
                        ? tr->t_prev + (tr->target - tr->v_prev) * (s->t - tr->t_prev) /
                                           (v - tr->v_prev)
                        : s->t;
        return 1;
    }
    tr->t_prev = s->t;
    tr->v_prev = v;
    tr->have_prev = 1;
    return 0;
}

/* The time corner `c`'s plate, its heater scaled by k, takes full on from the cold start to
 * reach the target: *t (NaN when not within t_end). */
static tp_status time_at(sz_ctx *cx, int c, double k, double *t)
{
    const tp_network *net = NULL;
    tp_net_change ch = {TP_CHANGE_SOURCE_SCALE, cx->src, -1, k, NULL, NULL};
    tp_integrate_opts o;
    tp_integrate_stats stats;
    tp_diag quiet;
    trip tr;
    double *duty = NULL;
    int i;
    tp_status rs = tp_network_copy(cx->nets[c], &ch, 1, &net);
    *t = TP_UNSET;
    if (rs != TP_OK)
        return rs;
    duty = malloc((size_t)net->n_sources * sizeof *duty);
    if (!duty) {
        tp_network_release(&net);
        return TP_ERR_NOMEM;
    }
    for (i = 0; i < net->n_sources; i++)
        duty[i] = net->sources[i].max_duty;
    memset(&tr, 0, sizeof tr);
    tr.sensor = cx->sensor;
    tr.surface = cx->rq->surface;
    tr.offset = cx->offset;
    tr.target = cx->rq->target;
    tr.t_hit = TP_UNSET;
    tp_diag_init(&quiet, NULL);
    tp_integrate_defaults(&cx->desc->run, &o);
    o.t_end = cx->t_end;
    o.step = cx->step;
    o.duty = duty;
    o.out = trip_out;
    o.user = &tr;
    rs = tp_integrate(net, &o, &stats, &quiet);
    cx->r->runs++;
    if (rs != TP_OK)
        tp_diag_error(cx->d, tp_diag_loc_none(), NULL, "check run: (rtol, max_steps)",
                      "the warm-up of corner '%s' at %.4g W failed: %s", cx->r->corners[c].name,
                      cx->r->p_start * k, quiet.log);
    *t = tr.t_hit;
    free(duty);
    tp_network_release(&net);
    return rs;
}

/* ---- the margin ------------------------------------------------------------------------------ */

/* The holding point of the target in corner c: the node temperatures into cx->hold_temps[c]
 * and the power it takes into the corner's hold_power. A stand-in constant-power source far
 * larger than the heater finds it (the temperatures do not depend on what delivers the heat);
 * with --surface the reading is moved until the surface sits at the target. */
static tp_status hold_corner(sz_ctx *cx, int c)
{
    const tp_network *big = NULL;
    const tp_network *net = cx->nets[c];
    double value = TP_SIZE_HOLD_POWER * cx->r->p_start, level = cx->rq->target;
    tp_net_change ch = {TP_CHANGE_SOURCE_POWER, cx->src, -1, value, NULL, NULL};
    tp_steady hold;
    tp_diag quiet;
    tp_status rs = tp_network_copy(net, &ch, 1, &big);
    int it;
    memset(&hold, 0, sizeof hold);
    if (rs != TP_OK)
        return rs;
    cx->hold_temps[c] = malloc((size_t)net->n_nodes * sizeof **cx->hold_temps);
    if (!cx->hold_temps[c]) {
        tp_network_release(&big);
        return TP_ERR_NOMEM;
    }
    tp_diag_init(&quiet, NULL);
    for (it = 0; it < TP_SIZE_SURFACE_ITER; it++) {
        double s;
        tp_steady_clear(&hold);
        rs = tp_steady_hold_at(big, level, &hold, &quiet);
        if (rs != TP_OK || !cx->rq->surface)
            break;
        s = tp_eval_surface_at(big, hold.temps, NULL);
        if (fabs(s - cx->rq->target) < TP_SIZE_SURFACE_TOL)
            break;
        level += cx->rq->target - s;
    }
    if (rs == TP_OK) {
        memcpy(cx->hold_temps[c], hold.temps, (size_t)net->n_nodes * sizeof **cx->hold_temps);
        cx->r->corners[c].hold_power = hold.duty * value;
    } else {
        tp_diag_error(cx->d, tp_diag_loc_none(), NULL,
                      "lower --reach, or check the plate's losses",
                      "no steady state holds the target in corner '%s': %s",
                      cx->r->corners[c].name, quiet.log);
    }
    tp_steady_clear(&hold);
    tp_network_release(&big);
    return rs;
}

/* The margin of corner c with its heater scaled by k: max_duty P_on(k) / P_hold. */
static double margin_at(const sz_ctx *cx, int c, double k)
{
    const tp_net_source *s = &cx->nets[c]->sources[cx->src];
    tp_net_source scaled;
    tp_network_source_scaled(s, k, &scaled);
    return s->max_duty * tp_network_source_power(&scaled, cx->hold_temps[c], 1.0, NULL) /
           cx->r->corners[c].hold_power;
}

/* ---- the search ------------------------------------------------------------------------------ */

/* The least scale in (0, k_max] for which ok(k) holds, ok being false below and true above:
 * bracketed from `guess` in steps of 2, then bisected on log k to TP_SIZE_TOLERANCE. *k gets
 * the smallest scale known to pass; *found 0 (and *k = k_max) when k_max does not pass. */
typedef tp_status (*sz_test)(sz_ctx *cx, int c, double k, int *ok);

static tp_status least_scale(sz_ctx *cx, int c, sz_test test, double guess, double *k,
                             int *found)
{
    double lo = TP_UNSET, hi = TP_UNSET, x = fmin(fmax(guess, 1e-6), cx->k_max);
    int ok, n;
    tp_status rs;
    *found = 0;
    *k = cx->k_max;
    for (n = 0; n < 64; n++) {
        rs = test(cx, c, x, &ok);
        if (rs != TP_OK)
            return rs;
        if (ok) {
            hi = x;
            if (isfinite(lo) || x <= 1e-6)
                break;
            x *= 0.5;
        } else {
            lo = x;
            if (isfinite(hi))
                break;
            if (x >= cx->k_max)
                return TP_OK;
            x = fmin(2.0 * x, cx->k_max);
        }
    }
    if (!isfinite(hi))
        return TP_OK;
    while (isfinite(lo) && hi / lo > 1.0 + TP_SIZE_TOLERANCE) {
        double mid = sqrt(lo * hi);
        rs = test(cx, c, mid, &ok);
        if (rs != TP_OK)
            return rs;
        if (ok)
            hi = mid;
        else
            lo = mid;
    }
    *k = hi;
    *found = 1;
    return TP_OK;
}

static tp_status test_time(sz_ctx *cx, int c, double k, int *ok)
{
    double t;
    tp_status rs = time_at(cx, c, k, &t);
    *ok = isfinite(t) && t <= cx->rq->within;
    return rs;
}

static tp_status test_margin(sz_ctx *cx, int c, double k, int *ok)
{
    *ok = margin_at(cx, c, k) >= cx->rq->margin;
    return TP_OK;
}

/* ---- corners ------------------------------------------------------------------------------- */

/* The corners of the ranges moved onto the requested supply and starting resistance: nominal
 * first, then every combination of the varied ranges' ends (tp_guard_corners_plan). */
static void plan(tp_size_result *r, const tp_guard_ranges *rr)
{
    tp_guard_corner gc[TP_GUARD_CORNERS_MAX];
    const tp_guard_range *v = &rr->r[TP_RANGE_SUPPLY], *res = &rr->r[TP_RANGE_RESISTANCE];
    int c;
    r->n_corners = tp_guard_corners_plan(rr, r->electric ? r->supply / v->nominal : 1.0,
                                         r->electric ? r->r_start / res->nominal : 1.0, gc);
    memset(r->corners, 0, sizeof r->corners);
    for (c = 0; c < r->n_corners; c++) {
        tp_size_corner *sc = &r->corners[c];
        memcpy(sc->name, gc[c].name, sizeof sc->name); /* both char[160] */
        sc->nominal = gc[c].nominal;
        sc->supply = gc[c].supply;
        sc->resistance = gc[c].resistance;
        sc->room = gc[c].room;
        sc->airflow = gc[c].airflow;
    }
}

/* The description of the request's supply: heater.supply (and supply.voltage, when the heater
 * draws from that supply) or the raw source's supply moved to it. */
static tp_status on_supply(const tp_description *desc, const tp_network *net, int src,
                           double volts, tp_description *out)
{
    tp_status rs = tp_config_copy(out, desc);
    size_t i;
    if (rs != TP_OK || !isfinite(volts))
        return rs;
    if (desc->form == TP_FORM_PHYSICAL) {
        double old = tp_heater_volts(&desc->heater);
        if (desc->supply.present && isfinite(old) &&
            fabs(old - desc->supply.voltage) <= TP_SAME_SUPPLY * desc->supply.voltage)
            out->supply.voltage = volts;
        out->heater.supply = volts;
        return TP_OK;
    }
    for (i = 0; i < out->network.n_sources; i++)
        if (strcmp(out->network.sources[i].id, net->sources[src].id) == 0)
            out->network.sources[i].supply = volts;
    return TP_OK;
}

/* Corner c's description: the request's supply, the corner's supply, resistance (scaled to
 * the starting power), room and airflow, assembled quietly into cx->nets[c]. */
static tp_status build_corner(sz_ctx *cx, const tp_description *base, const tp_network *base_net,
                              int c)
{
    const tp_size_corner *sc = &cx->r->corners[c];
    tp_guard_corner gc;
    tp_description cd;
    tp_diag quiet;
    tp_status rs;
    memset(&gc, 0, sizeof gc);
    memset(&cd, 0, sizeof cd);
    gc.nominal = sc->nominal;
    gc.supply = sc->supply;
    gc.resistance = sc->resistance;
    gc.room = sc->room;
    gc.airflow = sc->airflow;
    rs = tp_guard_corner_apply(base, base_net, &cd, &gc);
    if (rs == TP_OK) {
        tp_diag_init(&quiet, NULL);
        rs = tp_assemble(&cd, cx->doc, &quiet, &cx->nets[c]);
        if (rs != TP_OK)
            tp_diag_error(cx->d, tp_diag_loc_none(), "guard", "narrow the ranges in guard:",
                          "corner '%s' cannot be assembled: %s", sc->name, quiet.log);
    }
    tp_config_clear(&cd);
    return rs;
}

/* ---- checks of the request ------------------------------------------------------------------- */

/* The layer the target is judged at: the sensor's (the reading) or the top one (--surface);
 * NULL in the raw form. */
static const tp_layer *target_layer(const tp_description *desc, int surface)
{
    size_t i;
    if (desc->form != TP_FORM_PHYSICAL || desc->bed.n_layers == 0)
        return NULL;
    if (surface)
        return &desc->bed.layers[desc->bed.n_layers - 1];
    for (i = 0; desc->sensor.present && i < desc->bed.n_layers; i++)
        if (strcmp(desc->bed.layers[i].id, desc->sensor.layer) == 0)
            return &desc->bed.layers[i];
    return NULL;
}

static tp_status check_request(const sz_ctx *cx, const tp_network *net)
{
    const tp_size_request *rq = cx->rq;
    const tp_layer *layer = target_layer(cx->desc, rq->surface);
    double room = tp_network_room(net);
    if (!net->has_control) {
        tp_diag_error(cx->d, tp_yamltree_nearest(cx->doc, "control"), "control",
                      "add control: with the source to size and the sensor to read, e.g. "
                      "{mode: pid, setpoint: 90 degC, ...}",
                      "size needs a controller: it names the heater it sizes and the reading "
                      "that must reach --reach");
        return TP_ERR_CONFIG;
    }
    if (rq->surface && net->top_node < 0 && !net->grid) {
        tp_diag_error(cx->d, tp_yamltree_nearest(cx->doc, "network"), "--surface",
                      "drop --surface, or describe the plate in the physical form (bed:)",
                      "the raw network form has no working surface");
        return TP_ERR_USAGE;
    }
    if (isfinite(rq->supply) && net->sources[net->control.source].kind != TP_SRC_ELECTRIC) {
        tp_diag_error(cx->d, tp_yamltree_nearest(cx->doc, "heater"), "--supply",
                      "give the heater supply and resistance (or rated_power and "
                      "rated_voltage), or drop --supply",
                      "the heater has a constant power: it has no supply voltage to choose");
        return TP_ERR_USAGE;
    }
    if (isfinite(room) && !(rq->target > room)) {
        tp_diag_error(cx->d, tp_yamltree_nearest(cx->doc, cx->desc->form == TP_FORM_PHYSICAL
                                                              ? "room.temperature"
                                                              : "network.nodes"),
                      "--reach", "give a temperature above the room's",
                      "the target %.1f degC is not above the room (%.1f degC): there is nothing "
                      "to heat", rq->target - TP_KELVIN_0C, room - TP_KELVIN_0C);
        return TP_ERR_USAGE;
    }
    if (layer) {
        const tp_material_spec *m = tp_materials_find(cx->desc, layer->material);
        if (m && tp_isset(m->max_temperature) && rq->target > m->max_temperature) {
            tp_diag_error(cx->d, tp_yamltree_nearest(cx->doc, "bed.layers"), "--reach",
                          "lower the target, or choose a material rated for it",
                          "the target %.0f degC is above the service limit of %s in layer '%s' "
                          "(%.0f degC), where the %s is taken",
                          rq->target - TP_KELVIN_0C, m->id, layer->id,
                          m->max_temperature - TP_KELVIN_0C,
                          rq->surface ? "working surface" : "reading");
            return TP_ERR_USAGE;
        }
    }
    return TP_OK;
}

/* ---- the answer's budget and cautions ---------------------------------------------------------- */

/* The budget of the heater of the answer, on the request's supply in the nominal corner. */
static tp_status answer_budget(sz_ctx *cx, const tp_description *base, const tp_network *base_net)
{
    tp_size_result *r = cx->r;
    tp_description cd;
    const tp_network *net = NULL;
    tp_diag quiet;
    tp_status rs = tp_config_copy(&cd, base);
    size_t i;
    if (rs != TP_OK)
        return rs;
    if (cd.form == TP_FORM_PHYSICAL) {
        if (r->electric) {
            cd.heater.resistance = r->resistance;
            cd.heater.rated_power = cd.heater.rated_voltage = TP_UNSET;
            cd.heater.supply = r->supply;
        } else {
            cd.heater.power = r->power;
        }
    } else {
        for (i = 0; i < cd.network.n_sources; i++) {
            tp_raw_source *s = &cd.network.sources[i];
            if (strcmp(s->id, base_net->sources[cx->src].id) != 0)
                continue;
            if (r->electric)
                s->resistance = r->resistance;
            else
                s->power = r->power;
        }
    }
    tp_diag_init(&quiet, NULL);
    rs = tp_assemble(&cd, cx->doc, &quiet, &net);
    if (rs == TP_OK) {
        /* The cautions of what the answer leads to: the plate held at the target (nominal
         * corner), the cold-start current. */
        const double *t = cx->hold_temps[0];
        tp_caution_exposure ex = TP_CAUTION_UNSEEN;
        int i_node;
        r->has_budget = tp_budget_compute(&cd, net, &r->budget, &quiet) == TP_OK;
        ex.node_peak = t;
        ex.node_max = -HUGE_VAL;
        for (i_node = 0; i_node < net->n_nodes; i_node++)
            if (net->nodes[i_node].capacity > 0)
                ex.node_max = fmax(ex.node_max, t[i_node]);
        ex.surface_max = net->top_node >= 0 || net->grid ? tp_eval_surface_at(net, t, NULL)
                                                         : TP_UNSET;
        ex.current_max = r->has_budget ? r->budget.i_cold : TP_UNSET;
        r->n_cautions = tp_caution_list(&cd, net, &ex, r->cautions);
    }
    if (rs != TP_OK)
        tp_diag_error(cx->d, tp_diag_loc_none(), NULL, NULL,
                      "the heater of the answer cannot be assembled: %s", quiet.log);
    tp_network_release(&net);
    tp_config_clear(&cd);
    return rs;
}

/* ---- the study ------------------------------------------------------------------------------- */

/* The largest scale considered: the heater type's power-density limit, the matched load (an
 * element below the series path's resistance delivers less, not more) and TP_SIZE_SCALE_MAX. */
static void scale_cap(sz_ctx *cx, const tp_network *net)
{
    tp_size_result *r = cx->r;
    const tp_net_source *s = &net->sources[cx->src];
    double area = tp_heater_area(cx->desc);
    r->density_limit = tp_heater_density_limit(cx->desc, &r->heater_type);
    cx->k_max = TP_SIZE_SCALE_MAX;
    r->p_max_why = "the search's limit (hardlimits.h: TP_SIZE_SCALE_MAX times the configured "
                   "power)";
    if (isfinite(r->density_limit) && isfinite(area) && area > 0 &&
        r->density_limit * area / r->p_start < cx->k_max) {
        cx->k_max = r->density_limit * area / r->p_start;
        r->p_max_why = "the power-density limit of the heater's type";
    }
    if (r->electric && s->r_series > 0 && r->r_start / s->r_series < cx->k_max) {
        cx->k_max = r->r_start / s->r_series;
        r->p_max_why = "the matched load: an element below the series path's resistance "
                       "delivers less power, not more";
    }
    r->p_max = cx->k_max * r->p_start;
}

/* Each corner's least scale for the margin and for the time, the slowest corners first so that
 * the others only need checking; the answer is the largest. */
static tp_status search(sz_ctx *cx)
{
    tp_size_result *r = cx->r;
    double t1[TP_GUARD_CORNERS_MAX], best = 0.0;
    int order[TP_GUARD_CORNERS_MAX], c, i, j, found;
    tp_status rs;
    r->limiting = 0;
    r->limited_by = TP_SIZE_BY_TIME;
    for (c = 0; c < r->n_corners; c++) {
        double km;
        rs = least_scale(cx, c, test_margin, 1.0, &km, &found);
        if (rs != TP_OK)
            return rs;
        r->corners[c].k_margin = found ? km : TP_UNSET;
        if (!found)
            return TP_OK; /* r->feasible stays 0 */
        if (km > best) {
            best = km;
            r->limiting = c;
            r->limited_by = TP_SIZE_BY_MARGIN;
        }
        rs = time_at(cx, c, 1.0, &t1[c]);
        if (rs != TP_OK)
            return rs;
        order[c] = c;
    }
    /* Slowest first (insertion sort; a time not reached counts as the slowest). */
    for (i = 1; i < r->n_corners; i++)
        for (j = i; j > 0; j--) {
            double a = t1[order[j]], b = t1[order[j - 1]];
            int tmp;
            if (!((isfinite(b) ? b : HUGE_VAL) < (isfinite(a) ? a : HUGE_VAL)))
                break;
            tmp = order[j];
            order[j] = order[j - 1];
            order[j - 1] = tmp;
        }
    for (i = 0; i < r->n_corners; i++) {
        tp_size_corner *sc;
        double kt, t;
        int ok;
        c = order[i];
        sc = &r->corners[c];
        if (best > 0) {
            rs = test_time(cx, c, best, &ok);
            if (rs != TP_OK)
                return rs;
            if (ok) {
                sc->k_time = best; /* an upper bound: this corner needs no more */
                continue;
            }
        }
        t = t1[c];
        rs = least_scale(cx, c, test_time, isfinite(t) ? fmax(best, t / cx->rq->within) : 2.0,
                         &kt, &found);
        if (rs != TP_OK)
            return rs;
        sc->k_time = kt;
        sc->k_time_exact = 1;
        if (!found) {
            r->limiting = c;
            r->limited_by = TP_SIZE_BY_TIME;
            return TP_OK;
        }
        if (kt > best) {
            best = kt;
            r->limiting = c;
            r->limited_by = TP_SIZE_BY_TIME;
        }
    }
    r->feasible = 1;
    r->power = best * r->p_start;
    return TP_OK;
}

/* Every corner at scale k: times, margins, the slowest and the smallest margin. */
static tp_status at_answer(sz_ctx *cx, double k)
{
    tp_size_result *r = cx->r;
    double slowest = -HUGE_VAL;
    int c;
    r->worst = 0;
    r->margin_worst = HUGE_VAL;
    for (c = 0; c < r->n_corners; c++) {
        tp_size_corner *sc = &r->corners[c];
        tp_status rs = time_at(cx, c, k, &sc->time);
        double key = isfinite(sc->time) ? sc->time : HUGE_VAL; /* not reached: the slowest */
        if (rs != TP_OK)
            return rs;
        sc->margin_at = margin_at(cx, c, k);
        if (key > slowest) {
            slowest = key;
            r->worst = c;
        }
        r->margin_worst = fmin(r->margin_worst, sc->margin_at);
    }
    r->time_worst = isfinite(slowest) ? slowest : TP_UNSET;
    r->time_nominal = r->corners[0].time;
    return TP_OK;
}

/* Time against power for the nominal and the slowest corner, around the answer. */
static tp_status curves(sz_ctx *cx)
{
    tp_size_result *r = cx->r;
    int n = TP_SIZE_CURVE_POINTS, i;
    double lo = 0.4 * r->power / r->p_start, hi = fmin(2.5 * r->power / r->p_start, cx->k_max);
    r->curve_power = malloc((size_t)n * sizeof *r->curve_power);
    r->curve_nominal = malloc((size_t)n * sizeof *r->curve_nominal);
    r->curve_worst = malloc((size_t)n * sizeof *r->curve_worst);
    if (!r->curve_power || !r->curve_nominal || !r->curve_worst)
        return TP_ERR_NOMEM;
    if (!(hi > lo))
        lo = 0.4 * hi;
    for (i = 0; i < n; i++) {
        double k = lo * pow(hi / lo, (double)i / (n - 1));
        tp_status rs;
        r->curve_power[i] = k * r->p_start;
        rs = time_at(cx, 0, k, &r->curve_nominal[i]);
        if (rs == TP_OK)
            rs = time_at(cx, r->worst, k, &r->curve_worst[i]);
        if (rs != TP_OK)
            return rs;
        r->n_curve = i + 1;
    }
    return TP_OK;
}

static void result_init(tp_size_result *r)
{
    memset(r, 0, sizeof *r);
    r->supply = r->r_start = r->p_max = r->best_time = r->power = r->resistance = TP_UNSET;
    r->rated_power = r->time_nominal = r->time_worst = r->margin_worst = TP_UNSET;
    r->density = r->density_limit = TP_UNSET;
}

tp_status tp_size_run(const tp_description *desc, const tp_yamltree *doc, const tp_network *net,
                      const tp_size_request *rq, tp_size_result *r, tp_diag *d)
{
    sz_ctx cx;
    tp_description base;
    const tp_network *base_net = NULL;
    const tp_net_source *s;
    tp_diag quiet;
    double area;
    int c;
    tp_status rs;
    result_init(r);
    memset(&cx, 0, sizeof cx);
    memset(&base, 0, sizeof base);
    cx.desc = desc;
    cx.doc = doc;
    cx.rq = rq;
    cx.r = r;
    cx.d = d;
    rs = check_request(&cx, net);
    if (rs != TP_OK)
        return rs;
    cx.src = net->control.source;
    cx.sensor = net->control.sensor;
    cx.offset = net->control.reading.offset;
    cx.t_end = fmin(fmax(desc->run.duration, 3.0 * rq->within), TP_MAX_DURATION);
    cx.step = fmin(desc->run.step, rq->within / 200.0);
    /* The configured heater, moved onto the requested supply at the same power. */
    s = &net->sources[cx.src];
    r->electric = s->kind == TP_SRC_ELECTRIC;
    r->p_start = r->electric ? s->supply * s->supply / s->r0 : s->power;
    r->supply = r->electric ? (isfinite(rq->supply) ? rq->supply : s->supply) : TP_UNSET;
    r->r_start = r->electric ? r->supply * r->supply / r->p_start : TP_UNSET;
    rs = on_supply(desc, net, cx.src, isfinite(rq->supply) ? rq->supply : TP_UNSET, &base);
    if (rs == TP_OK) {
        tp_diag_init(&quiet, NULL);
        rs = tp_assemble(&base, doc, &quiet, &base_net);
        if (rs != TP_OK)
            tp_diag_error(d, tp_diag_loc_none(), "--supply", NULL,
                          "the plate on %.1f V cannot be assembled: %s", r->supply, quiet.log);
    }
    /* The ranges of the configured plate: a declared supply range is taken relative to the
     * configured supply and moved with it (plan). */
    if (rs == TP_OK)
        rs = tp_guard_ranges_resolve(desc, doc, net, &r->ranges, d);
    if (rs != TP_OK)
        goto done;
    scale_cap(&cx, base_net);
    plan(r, &r->ranges);
    for (c = 0; c < r->n_corners && rs == TP_OK; c++) {
        rs = build_corner(&cx, &base, base_net, c);
        if (rs == TP_OK)
            rs = hold_corner(&cx, c);
    }
    if (rs == TP_OK)
        rs = search(&cx);
    if (rs != TP_OK)
        goto done;
    if (!r->feasible) {
        r->power = r->p_max;
        rs = at_answer(&cx, cx.k_max);
        r->best_time = r->time_worst;
    } else {
        rs = at_answer(&cx, r->power / r->p_start);
    }
    if (rs != TP_OK)
        goto done;
    r->resistance = r->electric ? r->supply * r->supply / r->power : TP_UNSET;
    r->rated_power = ceil(r->power / TP_SIZE_RATED_STEP - 1e-9) * TP_SIZE_RATED_STEP;
    area = tp_heater_area(desc);
    r->density = isfinite(area) && area > 0 ? r->power / area : TP_UNSET;
    rs = answer_budget(&cx, &base, base_net);
    if (rs == TP_OK && rq->curves)
        rs = curves(&cx);
done:
    for (c = 0; c < TP_GUARD_CORNERS_MAX; c++) {
        tp_network_release(&cx.nets[c]);
        free(cx.hold_temps[c]);
    }
    tp_network_release(&base_net);
    tp_config_clear(&base);
    return rs;
}

void tp_size_clear(tp_size_result *r)
{
    if (!r)
        return;
    free(r->curve_power);
    free(r->curve_nominal);
    free(r->curve_worst);
    r->curve_power = r->curve_nominal = r->curve_worst = NULL;
    r->n_curve = 0;
}
