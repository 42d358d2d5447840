/* Tests of the network and its evaluator: tp_network_copy (a copy of a gridded plate evaluates
 * as the original, owns every array, and each change it can make has the effect its closed
 * form says); the evaluator's right-hand side against an independent evaluation of the same
 * equations (the oracle below) on the demos and grids; its analytic Jacobian against central
 * finite differences of the right-hand side, for every law, for grids with coefficient groups,
 * and in the secant mode of the steady-state solver. */
#include "tp_test.h"

#include "convection.h"
#include "eval.h"
#include "materials.h"
#include "radiation.h"
#include "units.h"

/* A small gridded plate: three layers on a 4 x 3 grid, a pad smaller than the plate (cells
 * without heater), a sensor of its own, correlated convection (coefficient groups). */
static const char *gridded =
    "room: {temperature: 20 degC}\n"
    "bed:\n"
    "  size: [200 mm, 150 mm]\n"
    "  grid: [4, 3]\n"
    "  layers:\n"
    "    - {id: pad, material: silicone-rubber, thickness: 1.5 mm, size: [100 mm, 100 mm]}\n"
    "    - {id: plate, material: aluminium-6061, thickness: 3 mm, contact: 3000 W/(m2.K)}\n"
    "    - {id: sheet, material: spring-steel, thickness: 0.5 mm, contact: 1000 W/(m2.K)}\n"
    "  top: {emissivity: 0.9}\n"
    "  bottom: {emissivity: 0.2}\n"
    "heater: {layer: pad, supply: 24 V, resistance: 4 ohm, tempco: 0.001 1/K}\n"
    "sensor: {layer: plate, coupling: 0.02 W/K, capacity: 0.3 J/K}\n"
    "control: {mode: pid, setpoint: 80 degC, period: 1 s, kp: 0.05 1/K, ki: 0.001 1/(K.s),"
    " kd: 0.2 s/K}\n"
    "run: {duration: 10 min, step: 1 s}\n";

/* The same plate lumped (no grid). */
static const char *lumped =
    "room: {temperature: 20 degC}\n"
    "bed:\n"
    "  size: [200 mm, 150 mm]\n"
    "  layers:\n"
    "    - {id: pad, material: silicone-rubber, thickness: 1.5 mm}\n"
    "    - {id: plate, material: aluminium-6061, thickness: 3 mm, contact: 3000 W/(m2.K)}\n"
    "  top: {emissivity: 0.9}\n"
    "heater: {layer: pad, power: 100 W}\n"
    "sensor: {layer: plate, coupling: 0.02 W/K, capacity: 0.3 J/K}\n"
    "run: {duration: 10 min, step: 1 s}\n";

static const char *raw =
    "network:\n"
    "  nodes:\n"
    "    - {id: plate, capacity: 500 J/K, initial: 20 degC}\n"
    "    - {id: room, fixed: 20 degC}\n"
    "  links:\n"
    "    - {between: [plate, room], conductance: 1 W/K}\n"
    "  sources:\n"
    "    - {id: pad, node: plate, power: 50 W}\n";

/* A state that is far from uniform, so that every link carries heat: node i of the free ones
 * at 20 + 60 (1 + sin(1.7 i)) / 2 degC (any spread does; this one is our own choice). */
static double *spread_state(const tp_network *net)
{
    int n = tp_network_state_size(net), i;
    double *y = calloc((size_t)n, sizeof *y);
    assert_non_null(y);
    for (i = 0; i < net->n_free; i++)
        y[i] = TP_TEST_KELVIN + 20.0 + 30.0 * (1.0 + sin(1.7 * i));
    return y;
}

/* The evaluator's right-hand side at y, every source fully on (a new array). */
/* spread_state 25 K warmer: every free node 25 K or more above a 20 degC room, so that every
 * link to the room spans more than 10 K (smooth correlations, secants of their own). */
static double *warm_state(const tp_network *net)
{
    double *y = spread_state(net);
    int i;
    for (i = 0; i < net->n_free; i++)
        y[i] += 25.0;
    return y;
}

static double *rhs_of(const tp_network *net, const double *y)
{
    double *f = calloc((size_t)tp_network_state_size(net), sizeof *f);
    tp_eval *ev = NULL;
    assert_non_null(f);
    assert_int_equal(tp_eval_create(net, &ev), TP_OK);
    assert_int_equal(tp_eval_rhs(ev, y, f), 0);
    tp_eval_destroy(&ev);
    return f;
}

/* Heat flows at node temperatures t, every source fully on. */
static void flows_of(const tp_network *net, const double *t, tp_flows *fl)
{
    tp_eval *ev = NULL;
    assert_int_equal(tp_network_flows_init(fl, net), TP_OK);
    assert_int_equal(tp_eval_create(net, &ev), TP_OK);
    tp_eval_flows(ev, t, fl);
    tp_eval_destroy(&ev);
}

/* Equal to rounding: a copy evaluates the same sums in the same order, so 1e-12 relative
 * (closed form: identical data, identical arithmetic). */
static void check_same(const char *what, const double *a, const double *b, int n)
{
    int i;
    for (i = 0; i < n; i++)
        tp_check_abs(what, a[i], b[i], 1e-12 * fmax(1.0, fabs(b[i])));
}

static void test_copy_of_a_grid_evaluates_as_the_original(void **state)
{
    tp_yaml_net y;
    const tp_network *copy = NULL;
    double *s, *f0, *f1, *fl0, *fl1, *sl;
    int n;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    assert_non_null(y.net->grid);
    assert_true(y.net->n_groups > 0);
    assert_int_equal(tp_network_copy(y.net, NULL, 0, &copy), TP_OK);
    assert_non_null(copy);
    /* Everything the grid's evaluation and its surface need came along. */
    assert_int_equal(copy->n_nodes, y.net->n_nodes);
    assert_int_equal(copy->n_links, y.net->n_links);
    assert_int_equal(copy->n_groups, y.net->n_groups);
    assert_non_null(copy->grid);
    assert_true(copy->grid != y.net->grid);
    assert_int_equal(copy->grid->nx, 4);
    assert_int_equal(copy->grid->ny, 3);
    assert_non_null(copy->grid->lumped);
    assert_true(copy->grid->lumped != y.net->grid->lumped);
    assert_int_equal(copy->control.sensor, y.net->control.sensor);
    n = tp_network_state_size(y.net);
    assert_int_equal(tp_network_state_size(copy), n);
    s = spread_state(y.net);
    f0 = rhs_of(y.net, s);
    f1 = rhs_of(copy, s);
    check_same("right-hand side of the copy", f1, f0, n);
    /* The working surface (per-cell estimate through the coefficient groups). */
    {
        double *t0 = calloc((size_t)y.net->n_nodes, sizeof *t0);
        assert_non_null(t0);
        tp_network_temperatures(y.net, s, t0);
        tp_check_abs("surface of the copy", tp_eval_surface_at(copy, t0, NULL),
                     tp_eval_surface_at(y.net, t0, NULL), 1e-9);
        free(t0);
    }
    /* The lumped twin too. */
    sl = spread_state(y.net->grid->lumped);
    fl0 = rhs_of(y.net->grid->lumped, sl);
    fl1 = rhs_of(copy->grid->lumped, sl);
    check_same("right-hand side of the twin's copy", fl1, fl0,
               tp_network_state_size(y.net->grid->lumped));
    free(s);
    free(f0);
    free(f1);
    free(sl);
    free(fl0);
    free(fl1);
    tp_network_release(&copy);
    tp_yaml_net_close(&y);
}

/* A copy shares no array with its original: every array is its own, and the copy evaluates the
 * same after the original is gone (AddressSanitizer reports a shared array there). */
static void test_a_copy_owns_every_array(void **state)
{
    tp_yaml_net y;
    const tp_network *copy = NULL;
    double *s, *before, *fc;
    int n;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    n = tp_network_state_size(y.net);
    s = spread_state(y.net);
    before = rhs_of(y.net, s);
    assert_int_equal(tp_network_copy(y.net, NULL, 0, &copy), TP_OK);
    assert_true(copy->nodes != y.net->nodes && copy->links != y.net->links);
    assert_true(copy->sources != y.net->sources);
    assert_true(copy->sources[0].nodes != y.net->sources[0].nodes);
    assert_true(copy->sources[0].weights != y.net->sources[0].weights);
    assert_true(copy->groups != y.net->groups && copy->group_links != y.net->group_links);
    assert_true(copy->free_nodes != y.net->free_nodes && copy->colptr != y.net->colptr);
    assert_true(copy->rowind != y.net->rowind && copy->id_index != y.net->id_index);
    assert_true(copy->grid != y.net->grid && copy->grid->cell != y.net->grid->cell);
    assert_true(copy->grid->top_area != y.net->grid->top_area);
    assert_true(copy->grid->from != y.net->grid->from);
    assert_true(copy->grid->lumped != y.net->grid->lumped);
    tp_yaml_net_close(&y);
    fc = rhs_of(copy, s);
    check_same("the copy after its original was freed", fc, before, n);
    free(s);
    free(before);
    free(fc);
    tp_network_release(&copy);
}

static void test_copy_adds_a_conduction_link(void **state)
{
    tp_yaml_net y;
    const tp_network *copy = NULL;
    tp_net_change ch;
    double *s, *f0, *f1, *t;
    int sensor, room, st, i;
    const double g = 0.05; /* W/K */
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    sensor = tp_network_find_node(y.net, "sensor");
    room = tp_network_find_node(y.net, "room");
    assert_true(sensor >= 0 && room >= 0);
    ch = (tp_net_change){TP_CHANGE_ADD_CONDUCTION, sensor, room, g, "sensor leak", NULL};
    assert_int_equal(tp_network_copy(y.net, &ch, 1, &copy), TP_OK);
    assert_int_equal(copy->n_links, y.net->n_links + 1);
    assert_string_equal(copy->links[copy->n_links - 1].label, "sensor leak");
    s = spread_state(y.net);
    t = calloc((size_t)y.net->n_nodes, sizeof *t);
    assert_non_null(t);
    tp_network_temperatures(y.net, s, t);
    f0 = rhs_of(y.net, s);
    f1 = rhs_of(copy, s);
    st = y.net->nodes[sensor].state;
    /* Closed form: the new link takes g (T_sensor - T_room) out of the sensor, so its
     * derivative falls by that over its capacity; every other node is untouched. */
    tp_check_rel("sensor with the added link", f1[st],
                 f0[st] - g * (t[sensor] - t[room]) / y.net->nodes[sensor].capacity, 1e-9);
    for (i = 0; i < y.net->n_free; i++)
        if (i != st)
            tp_check_abs("other nodes", f1[i], f0[i], 1e-12 * fmax(1.0, fabs(f0[i])));
    /* The loss into the room grows by the same heat (W, closed form). */
    tp_check_rel("heat into fixed nodes", f1[y.net->n_free + TP_Q_LOST],
                 f0[y.net->n_free + TP_Q_LOST] + g * (t[sensor] - t[room]), 1e-9);
    free(s);
    free(t);
    free(f0);
    free(f1);
    tp_network_release(&copy);
    tp_yaml_net_close(&y);
}

static void test_copy_isolates_a_node(void **state)
{
    tp_yaml_net y;
    const tp_network *copy = NULL;
    tp_net_change ch;
    double *s, *f1;
    int sensor;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    sensor = tp_network_find_node(y.net, "sensor");
    ch = (tp_net_change){TP_CHANGE_ISOLATE, sensor, -1, 0.0, NULL, NULL};
    assert_int_equal(tp_network_copy(y.net, &ch, 1, &copy), TP_OK);
    s = spread_state(y.net);
    f1 = rhs_of(copy, s);
    /* Closed form: the sensor's only links go to the plate's cells; cut, it neither gains nor
     * loses heat, dT/dt = 0 exactly, whatever its temperature. */
    assert_true(fabs(f1[copy->nodes[sensor].state]) == 0.0);
    /* The original still couples it (the test can fail). */
    free(f1);
    f1 = rhs_of(y.net, s);
    assert_true(fabs(f1[y.net->nodes[sensor].state]) > 1e-6);
    free(s);
    free(f1);
    tp_network_release(&copy);
    tp_yaml_net_close(&y);
}

static void test_copy_adds_capacity_to_the_top_cells_by_area(void **state)
{
    tp_yaml_net y;
    const tp_network *copy = NULL;
    tp_net_change ch;
    const tp_net_grid *g;
    double *s, *f0, *f1, area = 0.0, added = 0.0;
    const double cs = 150.0; /* J/K */
    int c, n, top;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    ch = (tp_net_change){TP_CHANGE_TOP_CAPACITY, -1, -1, cs, NULL, NULL};
    assert_int_equal(tp_network_copy(y.net, &ch, 1, &copy), TP_OK);
    g = y.net->grid;
    n = g->nx * g->ny;
    top = (g->n_layers - 1) * n;
    for (c = 0; c < n; c++)
        area += g->top_area[c];
    s = spread_state(y.net);
    f0 = rhs_of(y.net, s);
    f1 = rhs_of(copy, s);
    for (c = 0; c < n; c++) {
        int node = g->cell[top + c], st = y.net->nodes[node].state;
        double c0 = y.net->nodes[node].capacity, share = cs * g->top_area[c] / area;
        /* Closed form: cell c gains Cs a_c / A, and the same heat flow over the larger
         * capacity gives dT/dt scaled by C / (C + Cs a_c / A). */
        tp_check_rel("top cell capacity", copy->nodes[node].capacity, c0 + share, 1e-12);
        tp_check_rel("top cell derivative", f1[st], f0[st] * c0 / (c0 + share), 1e-9);
        added += copy->nodes[node].capacity - c0;
    }
    tp_check_rel("capacity added in all", added, cs, 1e-12);
    tp_check_rel("the top layer's capacity", copy->grid->layer_capacity[g->n_layers - 1],
                 g->layer_capacity[g->n_layers - 1] + cs, 1e-12);
    free(s);
    free(f0);
    free(f1);
    tp_network_release(&copy);
    tp_yaml_net_close(&y);
}

static void test_copy_sets_the_top_airflow(void **state)
{
    tp_yaml_net y;
    const tp_network *copy = NULL;
    tp_net_change ch;
    tp_flows fl;
    tp_convection_case cc;
    double *t, area = 0.0, scale = 0.0, h, expected;
    const double v = 2.0, ts = TP_TEST_KELVIN + 60.0, troom = TP_TEST_KELVIN + 20.0;
    int i, g0 = -1;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    ch = (tp_net_change){TP_CHANGE_TOP_AIRFLOW, -1, -1, v, NULL, NULL};
    assert_int_equal(tp_network_copy(y.net, &ch, 1, &copy), TP_OK);
    /* A uniform plate at 60 degC: every top cell's convection is h(v) A s (T - T_room), with
     * h the correlation of the top face at the new airflow (closed form given the
     * correlation, which tests/test_convection.c checks against its sources). */
    t = calloc((size_t)copy->n_nodes, sizeof *t);
    assert_non_null(t);
    for (i = 0; i < copy->n_nodes; i++)
        t[i] = copy->nodes[i].capacity > 0 ? ts : copy->nodes[i].t0;
    for (i = 0; i < copy->n_links; i++) {
        const tp_net_link *l = &y.net->links[i];
        if (l->path != TP_PATH_TOP_CONV)
            continue;
        assert_true(l->group >= 0);
        g0 = l->group;
        area += l->area;
        scale = l->scale;
        assert_true(fabs(t[l->b] - troom) < 1e-9);
    }
    assert_true(g0 >= 0);
    cc = y.net->groups[g0].conv;
    assert_true(cc.airflow == 0.0); /* the original's still room */
    cc.airflow = v;
    h = tp_convection_h(&cc, ts, troom, NULL);
    expected = h * area * scale * (ts - troom);
    flows_of(copy, t, &fl);
    tp_check_rel("top convection at the new airflow", fl.path[TP_PATH_TOP_CONV], expected, 1e-9);
    tp_network_flows_clear(&fl);
    /* The original keeps still air: less heat (the test can fail). */
    flows_of(y.net, t, &fl);
    assert_true(fl.path[TP_PATH_TOP_CONV] < 0.9 * expected);
    tp_network_flows_clear(&fl);
    free(t);
    tp_network_release(&copy);
    tp_yaml_net_close(&y);
}

static void test_copy_of_a_lumped_plate_adds_capacity_to_its_top_node(void **state)
{
    tp_yaml_net y;
    const tp_network *copy = NULL;
    tp_net_change ch = {TP_CHANGE_TOP_CAPACITY, -1, -1, 40.0, NULL, NULL};
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, lumped), TP_OK);
    assert_true(y.net->top_node >= 0);
    assert_int_equal(tp_network_copy(y.net, &ch, 1, &copy), TP_OK);
    /* Closed form: C' = C + 40 J/K on the top node, the original untouched. */
    tp_check_rel("top node", copy->nodes[copy->top_node].capacity,
                 y.net->nodes[y.net->top_node].capacity + 40.0, 1e-12);
    tp_network_release(&copy);
    tp_yaml_net_close(&y);
}

static void test_copy_refuses_changes_that_cannot_apply(void **state)
{
    tp_yaml_net y;
    const tp_network *copy = NULL;
    tp_net_change top = {TP_CHANGE_TOP_CAPACITY, -1, -1, 10.0, NULL, NULL};
    tp_net_change bad = {TP_CHANGE_ADD_CONDUCTION, 0, 99, 1.0, NULL, NULL};
    (void)state;
    /* The raw form has no physical top layer. */
    assert_int_equal(tp_yaml_net_open(&y, raw), TP_OK);
    copy = y.net; /* must come back NULL */
    assert_int_equal(tp_network_copy(y.net, &top, 1, &copy), TP_ERR_CONFIG);
    assert_null(copy);
    assert_int_equal(tp_network_copy(y.net, &bad, 1, &copy), TP_ERR_CONFIG);
    assert_null(copy);
    /* An exact copy of the raw form works. */
    assert_int_equal(tp_network_copy(y.net, NULL, 0, &copy), TP_OK);
    assert_int_equal(copy->n_nodes, 2);
    tp_network_release(&copy);
    tp_yaml_net_close(&y);
}

/* A copy with another controller (tune's suggested gains): the copy runs it, the original
 * keeps its own, and the copy's lumped twin gets it reading the node the grid's sensor was
 * refined from, as assembly gives the twin the grid's own controller. */
static void test_copy_with_another_controller(void **state)
{
    tp_yaml_net y;
    const tp_network *copy = NULL;
    tp_control c;
    tp_net_change ch;
    int from_sensor;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    assert_true(y.net->has_control);
    from_sensor = y.net->grid->from[y.net->control.sensor];
    /* Assembly: the twin's controller is the grid's, on the twin's sensor. */
    assert_true(y.net->grid->lumped->has_control);
    assert_int_equal(y.net->grid->lumped->control.sensor, from_sensor);
    assert_true(y.net->grid->lumped->control.kp == y.net->control.kp);
    c = y.net->control;
    c.kp = 0.2;
    c.setpoint = TP_TEST_KELVIN + 65.0;
    ch = (tp_net_change){TP_CHANGE_CONTROL, -1, -1, 0.0, NULL, &c};
    assert_int_equal(tp_network_copy(y.net, &ch, 1, &copy), TP_OK);
    assert_true(copy->control.kp == 0.2 && copy->control.setpoint == c.setpoint);
    assert_true(y.net->control.kp == 0.05); /* the config's */
    assert_true(copy->grid->lumped->control.kp == 0.2);
    assert_int_equal(copy->grid->lumped->control.sensor, from_sensor);
    tp_network_release(&copy);
    /* A controller reading a node that does not exist is refused. */
    c.sensor = y.net->n_nodes;
    assert_int_equal(tp_network_copy(y.net, &ch, 1, &copy), TP_ERR_CONFIG);
    assert_null(copy);
    tp_yaml_net_close(&y);
}

/* A copy whose heater a logged power drives (fit): a constant-power source of P at duty 1,
 * with no series path. Closed form: it delivers P into its nodes whatever their temperature,
 * and nothing is lost in wiring; the original's resistive heater is untouched. */
static void test_copy_drives_a_source_by_power(void **state)
{
    tp_yaml_net y;
    const tp_network *copy = NULL;
    tp_net_change ch;
    tp_flows fl;
    double *yv, *t;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    ch = (tp_net_change){TP_CHANGE_SOURCE_POWER, 0, -1, 80.0, NULL, NULL};
    assert_int_equal(tp_network_copy(y.net, &ch, 1, &copy), TP_OK);
    assert_int_equal(copy->sources[0].kind, TP_SRC_POWER);
    assert_int_equal(y.net->sources[0].kind, TP_SRC_ELECTRIC);
    assert_true(copy->control.max_duty == 1.0);
    yv = warm_state(copy);
    t = calloc((size_t)copy->n_nodes, sizeof *t);
    assert_non_null(t);
    tp_network_temperatures(copy, yv, t);
    flows_of(copy, t, &fl);
    tp_check_rel("driven power", fl.src_power[0], 80.0, 1e-12);
    assert_true(fl.src_wire[0] == 0.0);
    tp_network_flows_clear(&fl);
    free(yv);
    free(t);
    tp_network_release(&copy);
    ch.a = y.net->n_sources; /* no such source */
    assert_int_equal(tp_network_copy(y.net, &ch, 1, &copy), TP_ERR_CONFIG);
    tp_yaml_net_close(&y);
}

/* ---- the oracle ------------------------------------------------------------------------------
 * The right-hand side evaluated link by link from the network alone, as docs/model.md writes
 * it, without the evaluator's compact arrays, matrix form or factored laws: this was the
 * library's generic evaluation, kept here to hold the evaluator to the equations.
 *   C_i dT_i/dt = sum_links Q_ji + sum_sources d_s P_si
 *   conduction Q = G (T_a - T_b); convection Q = s h A (T_a - T_b), h fixed, from the link's
 *   correlation at (T_a, T_b), or for a coefficient group the correlation at the area-weighted
 *   mean of the members' surfaces against the sink; radiation Q = s eps sigma A (T_a^4 - T_b^4)
 *   R_k = w_k R0 (1 + alpha (T_k - T_ref)) (at least w_k R0 TP_NET_R_FLOOR),
 *   I = V / (sum R_k + R_series), P_k = d I^2 R_k, wiring loss d I^2 R_series.
 * The energy totals: dE_src/dt = sum of source power, dE_lost/dt = heat into fixed nodes,
 * dE_wire/dt = wiring loss. `scale` (may be NULL) receives per state the sum of the magnitudes
 * of the terms, the size against which rounding is judged. */

/* Each coefficient group's h: members found by their `group`, not by the group's member list. */
static void oracle_groups(const tp_network *net, const double *t, double *h)
{
    int g, i;
    for (g = 0; g < net->n_groups; g++) {
        double sum = 0.0, area = 0.0, tm, tb = t[net->groups[g].sink];
        for (i = 0; i < net->n_links; i++)
            if (net->links[i].group == g) {
                sum += net->links[i].area * t[net->links[i].a];
                area += net->links[i].area;
            }
        tm = area > 0 ? sum / area : tb;
        h[g] = tp_convection_h(&net->groups[g].conv, tm, tb, NULL);
    }
}

static double oracle_q(const tp_network *net, int i, const double *t, const double *gh)
{
    const tp_net_link *l = &net->links[i];
    double ta = t[l->a], tb = t[l->b], h;
    switch (l->law) {
    case TP_LAW_CONDUCTION:
        return l->g * (ta - tb);
    case TP_LAW_CONVECTION:
        h = l->group >= 0   ? gh[l->group]
            : l->correlated ? tp_convection_h(&l->conv, ta, tb, NULL)
                            : l->h;
        return l->scale * h * l->area * (ta - tb);
    case TP_LAW_RADIATION:
        return l->scale * l->eps * TP_STEFAN_BOLTZMANN * l->area * (pow(ta, 4) - pow(tb, 4));
    }
    return (double)NAN;
}

/* The resistance of node k of an electrical source at node temperatures t, ohm. */
static double oracle_rk(const tp_net_source *s, int k, const double *t)
{
    return fmax(s->weights[k] * s->r0 * (1.0 + s->tempco * (t[s->nodes[k]] - s->tref)),
                s->weights[k] * s->r0 * TP_NET_R_FLOOR);
}

/* Add term q to state i and its magnitude to mag[i]. */
static void oracle_add(double *ydot, double *mag, int i, double q)
{
    ydot[i] += q;
    mag[i] += fabs(q);
}

static void oracle_sources(const tp_network *net, const double *duty, const double *t,
                           double *ydot, double *mag)
{
    int nf = net->n_free, i, k;
    for (i = 0; i < net->n_sources; i++) {
        const tp_net_source *s = &net->sources[i];
        double r = 0.0, amps = 0.0;
        if (s->kind == TP_SRC_ELECTRIC) {
            for (k = 0; k < s->n_nodes; k++)
                r += oracle_rk(s, k, t);
            amps = s->supply / (r + s->r_series);
            oracle_add(ydot, mag, nf + TP_Q_WIRE, duty[i] * amps * amps * s->r_series);
        }
        for (k = 0; k < s->n_nodes; k++) {
            int st = net->nodes[s->nodes[k]].state;
            double p = s->kind == TP_SRC_POWER ? duty[i] * s->power * s->weights[k]
                                               : duty[i] * amps * amps * oracle_rk(s, k, t);
            if (st >= 0)
                oracle_add(ydot, mag, st, p);
            oracle_add(ydot, mag, nf + TP_Q_SOURCE, p);
        }
    }
}

static void oracle_rhs(const tp_network *net, const double *duty, const double *y, double *ydot,
                       double *scale)
{
    int n = tp_network_state_size(net), nf = net->n_free, i;
    double *t = calloc((size_t)net->n_nodes, sizeof *t);
    double *gh = calloc((size_t)net->n_groups + 1, sizeof *gh);
    double *mag = calloc((size_t)n, sizeof *mag);
    assert_true(t && gh && mag);
    for (i = 0; i < net->n_nodes; i++)
        t[i] = net->nodes[i].state >= 0 ? y[net->nodes[i].state] : net->nodes[i].t0;
    oracle_groups(net, t, gh);
    for (i = 0; i < n; i++)
        ydot[i] = 0.0;
    for (i = 0; i < net->n_links; i++) {
        const tp_net_link *l = &net->links[i];
        int sa = net->nodes[l->a].state, sb = net->nodes[l->b].state;
        double q = oracle_q(net, i, t, gh);
        oracle_add(ydot, mag, sa >= 0 ? sa : nf + TP_Q_LOST, -q);
        oracle_add(ydot, mag, sb >= 0 ? sb : nf + TP_Q_LOST, q);
    }
    oracle_sources(net, duty, t, ydot, mag);
    for (i = 0; i < nf; i++) {
        ydot[i] /= net->nodes[net->free_nodes[i]].capacity;
        mag[i] /= net->nodes[net->free_nodes[i]].capacity;
    }
    if (scale)
        memcpy(scale, mag, (size_t)n * sizeof *scale);
    free(t);
    free(gh);
    free(mag);
}

/* Rounding allowance of a sum evaluated in two orders: each term agrees to a few units of
 * 2.2e-16 (the radiation law is factored differently), a row sums at most a few hundred terms,
 * so the two sums agree within 1e-12 of the sum of the terms' magnitudes (the error bound of
 * recursive summation, n eps sum |x_i| (Higham, Accuracy and Stability of Numerical
 * Algorithms, 2nd ed., Sec. 4.2; from memory), with room to spare). */
#define ORACLE_REL 1.0e-12

/* The evaluator against the oracle on `net` at a spread state, with every duty at d (times each
 * source's max_duty). */
static void check_against_oracle(const char *what, const tp_network *net, double d)
{
    int n = tp_network_state_size(net), i;
    double *y = spread_state(net), *f = calloc((size_t)n, sizeof *f);
    double *g = calloc((size_t)n, sizeof *g), *sc = calloc((size_t)n, sizeof *sc);
    double *duty = calloc((size_t)net->n_sources + 1, sizeof *duty);
    tp_eval *ev = NULL;
    assert_true(f && g && sc && duty);
    assert_int_equal(tp_eval_create(net, &ev), TP_OK);
    for (i = 0; i < net->n_sources; i++) {
        duty[i] = d * net->sources[i].max_duty;
        tp_eval_set_duty(ev, i, duty[i]);
    }
    assert_int_equal(tp_eval_rhs(ev, y, f), 0);
    oracle_rhs(net, duty, y, g, sc);
    for (i = 0; i < n; i++)
        if (!(fabs(f[i] - g[i]) <= ORACLE_REL * sc[i]))
            fail_msg("%s, duty %g: state %d: evaluator %.17g, oracle %.17g (terms %.3g)", what,
                     d, i, f[i], g[i], sc[i]);
    /* Not vacuous: heat does flow (some state changes). */
    for (i = 0; i < net->n_free && g[i] == 0.0; i++)
        ;
    assert_true(i < net->n_free);
    tp_eval_destroy(&ev);
    free(y);
    free(f);
    free(g);
    free(sc);
    free(duty);
}

/* Open a YAML file of the source tree as a network. */
static void open_file(const char *rel, tp_yaml_net *y)
{
    char path[TP_TEST_PATH], *text;
    snprintf(path, sizeof path, "%s/%s", TP_SOURCE_DIR, rel);
    text = tp_read_file(path);
    assert_non_null(text);
    if (tp_yaml_net_open(y, text) != TP_OK)
        fail_msg("%s: %s", rel, y->diag.log);
    free(text);
}

/* Every demo (lumped plates, an enclosure, the raw form, a 40 x 40 grid), the grid benchmark
 * (100 x 100 x 3) and the lumped twins of the grids, each off, part on and full on. */
static void test_eval_rhs_matches_the_oracle(void **state)
{
    static const char *const files[] = {
        "configs/workshop-bed-24v.yaml", "configs/lab-hotplate-230v.yaml",
        "configs/enclosed-printer.yaml", "configs/raw-five-node.yaml",
        "configs/small-pad-grid.yaml",   "tests/bench/grid-100x100x3.yaml",
    };
    static const double duties[] = {0.0, 0.37, 1.0};
    size_t f, k;
    tp_yaml_net y;
    (void)state;
    for (f = 0; f < sizeof files / sizeof files[0]; f++) {
        open_file(files[f], &y);
        for (k = 0; k < 3; k++) {
            check_against_oracle(files[f], y.net, duties[k]);
            if (y.net->grid)
                check_against_oracle(files[f], y.net->grid->lumped, duties[k]);
        }
        tp_yaml_net_close(&y);
    }
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    check_against_oracle("the 4 x 3 test grid", y.net, 0.8);
    tp_yaml_net_close(&y);
}

/* The comparison can fail: a network that evaluates differently (a copy with one more link)
 * differs from the oracle of the original at that link's node. */
static void test_oracle_tells_a_different_network(void **state)
{
    tp_yaml_net y;
    const tp_network *copy = NULL;
    tp_net_change ch;
    double *yv, *f, *g, *duty;
    int n, sensor, room, st;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    sensor = tp_network_find_node(y.net, "sensor");
    room = tp_network_find_node(y.net, "room");
    ch = (tp_net_change){TP_CHANGE_ADD_CONDUCTION, sensor, room, 1e-3, NULL, NULL};
    assert_int_equal(tp_network_copy(y.net, &ch, 1, &copy), TP_OK);
    n = tp_network_state_size(y.net);
    yv = spread_state(y.net);
    f = rhs_of(copy, yv);
    g = calloc((size_t)n, sizeof *g);
    duty = calloc((size_t)y.net->n_sources, sizeof *duty);
    assert_true(g && duty);
    duty[0] = y.net->sources[0].max_duty;
    oracle_rhs(y.net, duty, yv, g, NULL);
    st = y.net->nodes[sensor].state;
    assert_true(fabs(f[st] - g[st]) > 1e-6 * fabs(g[st]));
    free(yv);
    free(f);
    free(g);
    free(duty);
    tp_network_release(&copy);
    tp_yaml_net_close(&y);
}

/* Two evaluators of one network hold their own duties: what one is set to never reaches the
 * other (hand calculation: the raw network's 50 W source into 500 J/K at the room's temperature
 * gives dT/dt = d x 0.1 K/s). */
static void test_two_evaluators_hold_their_own_duties(void **state)
{
    tp_yaml_net y;
    tp_eval *a = NULL, *b = NULL;
    double yv[1 + TP_N_QUAD] = {0}, fa[1 + TP_N_QUAD], fb[1 + TP_N_QUAD];
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, raw), TP_OK);
    assert_int_equal(tp_network_state_size(y.net), 1 + TP_N_QUAD);
    tp_network_initial_state(y.net, yv);
    assert_int_equal(tp_eval_create(y.net, &a), TP_OK);
    assert_int_equal(tp_eval_create(y.net, &b), TP_OK);
    tp_eval_set_duty(a, 0, 0.25);
    assert_int_equal(tp_eval_rhs(a, yv, fa), 0);
    assert_int_equal(tp_eval_rhs(b, yv, fb), 0);
    tp_check_abs("full on", fb[0], 50.0 / 500.0, 1e-15);
    tp_check_abs("a quarter on", fa[0], 0.25 * 50.0 / 500.0, 1e-15);
    assert_true(tp_eval_duty(b, 0) == y.net->sources[0].max_duty);
    tp_eval_destroy(&a);
    tp_eval_destroy(&b);
    tp_yaml_net_close(&y);
}

/* ---- the Jacobian against central differences ------------------------------------------------
 * Column j of d(dy/dt)/dy by central differences of the evaluator's right-hand side with a step
 * of 1e-3 K (1e-3 J for the energy totals, on which nothing depends). Their error is the
 * truncation h^2/6 |f'''| plus the rounding eps |f| / h. Every law here is smooth at the states
 * used (no correlation branch switch near, every link across 10 K or more): f''' / f' is of
 * order 1/dT^2, so the truncation is below (1e-3 / 10)^2 = 1e-8 of the derivative; the rounding
 * is below 2.2e-16 x 1e2 / 1e-3 = 2.2e-11 K/s per K. The analytic Jacobian takes a
 * correlation's temperature derivative itself by a central difference of 1 mK (docs/model.md),
 * whose error is of the same order. The comparison allows 1e-6 of the entry plus 1e-9 of the
 * column's largest entry: a hundred times those errors, and far below a dropped or misplaced
 * term (closed forms of the error of central differences). */
#define FD_STEP 1.0e-3
#define FD_REL 1.0e-6
#define FD_COL 1.0e-9

/* The analytic Jacobian of `ev` at y as a dense n x n array (row major). */
static double *dense_jacobian(tp_eval *ev, const double *y, int use_secant)
{
    const tp_network *net = tp_eval_network(ev);
    int n = tp_network_state_size(net), c, k;
    double *vals = calloc((size_t)net->nnz + 1, sizeof *vals);
    double *dense = calloc((size_t)n * (size_t)n, sizeof *dense);
    assert_true(vals && dense);
    assert_int_equal(tp_eval_jacobian(ev, y, vals, use_secant), 0);
    for (c = 0; c < n; c++)
        for (k = net->colptr[c]; k < net->colptr[c + 1]; k++)
            dense[(size_t)net->rowind[k] * (size_t)n + (size_t)c] = vals[k];
    free(vals);
    return dense;
}

/* Central differences of the right-hand side of `ev` at y, dense row major. */
static double *fd_jacobian(tp_eval *ev, const double *y)
{
    const tp_network *net = tp_eval_network(ev);
    int n = tp_network_state_size(net), i, j;
    double *yp = malloc((size_t)n * sizeof *yp), *fp = malloc((size_t)n * sizeof *fp);
    double *fm = malloc((size_t)n * sizeof *fm);
    double *dense = calloc((size_t)n * (size_t)n, sizeof *dense);
    assert_true(yp && fp && fm && dense);
    memcpy(yp, y, (size_t)n * sizeof *yp);
    for (j = 0; j < n; j++) {
        yp[j] = y[j] + FD_STEP;
        assert_int_equal(tp_eval_rhs(ev, yp, fp), 0);
        yp[j] = y[j] - FD_STEP;
        assert_int_equal(tp_eval_rhs(ev, yp, fm), 0);
        yp[j] = y[j];
        for (i = 0; i < n; i++)
            dense[(size_t)i * (size_t)n + (size_t)j] = (fp[i] - fm[i]) / (2.0 * FD_STEP);
    }
    free(yp);
    free(fp);
    free(fm);
    return dense;
}

/* `expected` (dense) against the central differences, every entry, at the tolerance above. */
static void check_jacobian(const char *what, const double *expected, const double *fd, int n)
{
    int i, j;
    for (j = 0; j < n; j++) {
        double big = 0.0;
        for (i = 0; i < n; i++)
            big = fmax(big, fabs(fd[(size_t)i * (size_t)n + (size_t)j]));
        for (i = 0; i < n; i++) {
            double e = expected[(size_t)i * (size_t)n + (size_t)j];
            double v = fd[(size_t)i * (size_t)n + (size_t)j];
            if (!(fabs(e - v) <= FD_REL * fabs(v) + FD_COL * big))
                fail_msg("%s: d f_%d / d y_%d: analytic %.12g, central differences %.12g", what,
                         i, j, e, v);
        }
    }
}

/* A link of law `law` between nodes a and b with the given parameters (the others default). */
static tp_net_link *link_of(tp_network *net, int a, int b, tp_law law, double g_or_h,
                            double area, double scale)
{
    tp_net_link *l = tp_network_add_link(net, a, b, law);
    assert_non_null(l);
    if (law == TP_LAW_CONDUCTION)
        l->g = g_or_h;
    else if (law == TP_LAW_CONVECTION)
        l->h = g_or_h;
    else
        l->eps = g_or_h;
    l->area = area;
    l->scale = scale;
    return l;
}

/* A lumped network with every law and both kinds of source, built with the network API:
 * plate (400 J/K), sheet (150 J/K), sensor (0.3 J/K), air (60 J/K, free), room and walls
 * fixed; conduction plate-sheet and plate-sensor; fixed-coefficient convection sheet-air;
 * correlated convection of the sheet's top face to the room (natural, and a second face with
 * airflow: mixed), of the plate's bottom face to the air and of a vertical edge to the room;
 * radiation sheet-room and plate-walls; a resistive heater with a temperature coefficient and a
 * series resistance on the plate, a constant-power source on the air. Invented values. */
static tp_network *every_law(void)
{
    tp_network *net = tp_network_create();
    const tp_convection_case up = {TP_FACE_UP, 0.05, 0.0, 0.2, 101325.0};
    const tp_convection_case forced = {TP_FACE_UP, 0.05, 1.5, 0.2, 101325.0};
    const tp_convection_case down = {TP_FACE_DOWN, 0.05, 0.0, 0.2, 101325.0};
    const tp_convection_case edge = {TP_FACE_VERTICAL, 0.004, 0.0, 0.2, 101325.0};
    tp_net_source *s;
    int plate, sheet, sensor, air, room, walls;
    assert_non_null(net);
    plate = tp_network_add_node(net, "plate", 400.0, 300.0);
    sheet = tp_network_add_node(net, "sheet", 150.0, 300.0);
    sensor = tp_network_add_node(net, "sensor", 0.3, 300.0);
    air = tp_network_add_node(net, "air", 60.0, 300.0);
    room = tp_network_add_node(net, "room", 0.0, 293.15);
    walls = tp_network_add_node(net, "walls", 0.0, 288.0);
    link_of(net, plate, sheet, TP_LAW_CONDUCTION, 2.5, 0.0, 1.0);
    link_of(net, plate, sensor, TP_LAW_CONDUCTION, 0.02, 0.0, 1.0);
    link_of(net, sheet, air, TP_LAW_CONVECTION, 7.0, 0.01, 1.0);
    link_of(net, sheet, room, TP_LAW_CONVECTION, 0.0, 0.04, 0.9)->conv = up;
    link_of(net, sheet, room, TP_LAW_CONVECTION, 0.0, 0.01, 1.0)->conv = forced;
    link_of(net, plate, air, TP_LAW_CONVECTION, 0.0, 0.04, 1.0)->conv = down;
    link_of(net, plate, room, TP_LAW_CONVECTION, 0.0, 0.0032, 1.0)->conv = edge;
    link_of(net, sheet, room, TP_LAW_RADIATION, 0.9, 0.04, 1.1);
    link_of(net, plate, walls, TP_LAW_RADIATION, 0.2, 0.04, 1.0);
    for (int i = 3; i <= 6; i++)
        tp_network_link_mut(net, i)->correlated = 1;
    s = tp_network_add_source(net, "heater", plate);
    s->kind = TP_SRC_ELECTRIC;
    s->supply = 24.0;
    s->r0 = 2.6;
    s->tempco = 0.0039;
    s->tref = 293.15;
    s->r_series = 0.05;
    s = tp_network_add_source(net, "fan", air);
    s->kind = TP_SRC_POWER;
    s->power = 3.0;
    assert_int_equal(tp_network_finish(net), TP_OK);
    return net;
}

/* On a lumped network every derivative is kept: the analytic Jacobian equals the central
 * differences everywhere (in the pattern, and zero outside it). */
static void test_jacobian_lumped_every_law(void **state)
{
    tp_network *net = every_law();
    tp_eval *ev = NULL;
    /* plate, sheet, sensor, air (K), then the energy totals (J): every link across 10 K or
     * more (the room is 293.15 K, the walls 288 K). */
    const double y[4 + TP_N_QUAD] = {380.0, 352.0, 365.0, 318.0, 0.0, 0.0, 0.0};
    double *an, *fd;
    int n = tp_network_state_size(net);
    (void)state;
    assert_int_equal(n, 4 + TP_N_QUAD);
    assert_int_equal(tp_eval_create(net, &ev), TP_OK);
    tp_eval_set_duty(ev, 0, 0.63);
    an = dense_jacobian(ev, y, 0);
    fd = fd_jacobian(ev, y);
    check_jacobian("lumped, every law", an, fd, n);
    free(an);
    free(fd);
    tp_eval_destroy(&ev);
    tp_network_destroy(&net);
}

/* The comparison can fail: the Jacobian at another duty (the heater's temperature derivative
 * scales with it) differs from the central differences at this one in the plate's diagonal. */
static void test_jacobian_check_tells_a_wrong_term(void **state)
{
    tp_network *net = every_law();
    tp_eval *ev = NULL;
    const double y[4 + TP_N_QUAD] = {380.0, 352.0, 365.0, 318.0, 0.0, 0.0, 0.0};
    double *an, *fd;
    (void)state;
    assert_int_equal(tp_eval_create(net, &ev), TP_OK);
    tp_eval_set_duty(ev, 0, 0.2);
    an = dense_jacobian(ev, y, 0);
    tp_eval_set_duty(ev, 0, 0.63);
    fd = fd_jacobian(ev, y);
    assert_true(fabs(an[0] - fd[0]) > FD_REL * fabs(fd[0]) + 1e-6);
    free(an);
    free(fd);
    tp_eval_destroy(&ev);
    tp_network_destroy(&net);
}

/* The derivative of coefficient group g's h by the mean surface temperature, a central
 * difference of 1 mK as the evaluator takes it; the mean and sink temperatures into *tm, *tb. */
static double group_dh(const tp_network *net, int g, const double *t, double *tm, double *tb)
{
    const tp_net_group *gr = &net->groups[g];
    double sum = 0.0;
    int i;
    for (i = 0; i < net->n_links; i++)
        if (net->links[i].group == g)
            sum += net->links[i].area * t[net->links[i].a];
    *tm = sum / gr->area;
    *tb = t[gr->sink];
    return (tp_convection_h(&gr->conv, *tm + 1e-3, *tb, NULL) -
            tp_convection_h(&gr->conv, *tm - 1e-3, *tb, NULL)) / 2e-3;
}

/* The group terms the analytic Jacobian of a gridded network leaves out (eval.h), added to
 * jac: for a coefficient group g with members m (surface node a_m, area A_m, scale s_m, sink b)
 * the flow q_m = h(T_mean, T_b) A_m s_m (T_a_m - T_b) with T_mean = sum_n A_n T_a_n / A_g
 * depends on every member's temperature, d q_m / d T_a_n = dh/dT_mean (A_n / A_g) A_m s_m
 * (T_a_m - T_b), of which only n = m is kept (closed form: differentiate the law of
 * docs/model.md). */
static void add_dropped_group_terms(const tp_network *net, const double *t, double *jac)
{
    int n = tp_network_state_size(net), nf = net->n_free, g, m, o;
    for (g = 0; g < net->n_groups; g++) {
        double tm, tb, dh = group_dh(net, g, t, &tm, &tb);
        int sb = net->nodes[net->groups[g].sink].state;
        for (m = 0; m < net->n_links; m++) {
            const tp_net_link *lm = &net->links[m];
            int sa = net->nodes[lm->a].state;
            if (lm->group != g)
                continue;
            for (o = 0; o < net->n_links; o++) {
                const tp_net_link *ln = &net->links[o];
                int col = net->nodes[ln->a].state;
                double dq;
                if (ln->group != g || o == m || col < 0)
                    continue;
                dq = dh * (ln->area / net->groups[g].area) * lm->area * lm->scale *
                     (t[lm->a] - tb);
                if (sa >= 0)
                    jac[(size_t)sa * (size_t)n + (size_t)col] -= dq / net->nodes[lm->a].capacity;
                if (sb >= 0)
                    jac[(size_t)sb * (size_t)n + (size_t)col] +=
                        dq / net->nodes[net->groups[g].sink].capacity;
                else
                    jac[(size_t)(nf + TP_Q_LOST) * (size_t)n + (size_t)col] += dq;
            }
        }
    }
}

/* The source terms left out, added to jac: for a source spread over nodes k (resistances R_k,
 * R = sum R_k, current I = V / (R + R_s), duty d), P_k = d I^2 R_k depends on the other nodes'
 * resistances, d P_k / d T_j = -2 d I^2 R_k (dR_j/dT_j) / (R + R_s) for j != k, of which none is
 * kept (closed form: differentiate P_k). */
static void add_dropped_source_terms(const tp_network *net, const double *duty, const double *t,
                                     double *jac)
{
    int n = tp_network_state_size(net), i, k, j;
    for (i = 0; i < net->n_sources; i++) {
        const tp_net_source *s = &net->sources[i];
        double r = 0.0, amps;
        if (s->kind != TP_SRC_ELECTRIC || s->n_nodes < 2)
            continue;
        for (k = 0; k < s->n_nodes; k++)
            r += oracle_rk(s, k, t);
        amps = s->supply / (r + s->r_series);
        for (k = 0; k < s->n_nodes; k++) {
            int row = net->nodes[s->nodes[k]].state;
            for (j = 0; j < s->n_nodes; j++) {
                int col = net->nodes[s->nodes[j]].state;
                double drj = s->weights[j] * s->r0 * s->tempco;
                if (j == k || row < 0 || col < 0)
                    continue;
                jac[(size_t)row * (size_t)n + (size_t)col] +=
                    -2.0 * duty[i] * amps * amps * oracle_rk(s, k, t) * drj /
                    (r + s->r_series) / net->nodes[s->nodes[k]].capacity;
            }
        }
    }
}

/* The 4 x 3 x 3 test grid at warm_state: coefficient groups on every face, the heater spread
 * over the pad's cells with a temperature coefficient, a sensor node. Its analytic Jacobian
 * plus the terms derived above equals the central differences everywhere; without them it
 * does not. */
static void test_jacobian_grid_with_coefficient_groups(void **state)
{
    tp_yaml_net y;
    tp_eval *ev = NULL;
    double *yv, *t, *an, *bare, *fd, duty;
    int n, i, differs = 0;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    assert_true(y.net->n_groups > 0 && y.net->sources[0].n_nodes > 1);
    n = tp_network_state_size(y.net);
    yv = warm_state(y.net);
    t = calloc((size_t)y.net->n_nodes, sizeof *t);
    assert_non_null(t);
    tp_network_temperatures(y.net, yv, t);
    assert_int_equal(tp_eval_create(y.net, &ev), TP_OK);
    duty = 0.7 * y.net->sources[0].max_duty;
    tp_eval_set_duty(ev, 0, duty);
    an = dense_jacobian(ev, yv, 0);
    bare = dense_jacobian(ev, yv, 0);
    fd = fd_jacobian(ev, yv);
    add_dropped_group_terms(y.net, t, an);
    add_dropped_source_terms(y.net, &duty, t, an);
    check_jacobian("4 x 3 grid with coefficient groups", an, fd, n);
    for (i = 0; i < n * n; i++)
        differs |= !(fabs(bare[i] - fd[i]) <= FD_REL * fabs(fd[i]) + 1e-9);
    assert_true(differs);
    free(yv);
    free(t);
    free(an);
    free(bare);
    free(fd);
    tp_eval_destroy(&ev);
    tp_yaml_net_close(&y);
}

/* ---- the secant mode of the steady-state solver ---------------------------------------------
 * With use_secant every link's derivative is its secant conductance S = Q / (T_a - T_b), the
 * difference kept at least 1 K (at a smaller one S = Q(T_b + 1 K, T_b) / 1 K), so that the
 * first iterations of the steady-state solver see every link couple its nodes. */

/* One free node at `ta` (100 J/K) to a fixed room at 300 K by one link of each law: the
 * diagonal of the secant Jacobian is -(sum of S) / C and the lost-energy row holds the sum of S
 * (closed forms: conduction S = G; fixed convection S = h A s; correlated convection
 * S = h(T_a, T_b) A s; radiation S = eps sigma A s (T_a^4 - T_b^4) / (T_a - T_b)). */
static void secant_case(double ta)
{
    tp_network *net = tp_network_create();
    const tp_convection_case up = {TP_FACE_UP, 0.05, 0.0, 0.2, 101325.0};
    const double tb = 300.0, c = 100.0;
    double y[1 + TP_N_QUAD] = {ta, 0.0, 0.0, 0.0}, *jac, sum, te, hc;
    tp_eval *ev = NULL;
    int a, b;
    assert_non_null(net);
    a = tp_network_add_node(net, "plate", c, ta);
    b = tp_network_add_node(net, "room", 0.0, tb);
    link_of(net, a, b, TP_LAW_CONDUCTION, 0.4, 0.0, 1.0);
    link_of(net, a, b, TP_LAW_CONVECTION, 8.0, 0.02, 1.2);
    link_of(net, a, b, TP_LAW_CONVECTION, 0.0, 0.04, 1.0)->conv = up;
    link_of(net, a, b, TP_LAW_RADIATION, 0.9, 0.04, 0.8);
    tp_network_link_mut(net, 2)->correlated = 1;
    assert_int_equal(tp_network_finish(net), TP_OK);
    assert_int_equal(tp_eval_create(net, &ev), TP_OK);
    jac = dense_jacobian(ev, y, 1);
    te = fabs(ta - tb) < 1.0 ? tb + 1.0 : ta; /* the difference kept at least 1 K */
    hc = tp_convection_h(&up, te, tb, NULL);
    sum = 0.4 + 8.0 * 0.02 * 1.2 + hc * 0.04 +
          0.8 * 0.9 * TP_STEFAN_BOLTZMANN * 0.04 * (pow(te, 4) - pow(tb, 4)) / (te - tb);
    tp_check_rel("secant diagonal", jac[0], -sum / c, 1e-12);
    tp_check_rel("secant into the room", jac[(size_t)(1 + TP_Q_LOST) * (1 + TP_N_QUAD)], sum,
                 1e-12);
    free(jac);
    tp_eval_destroy(&ev);
    tp_network_destroy(&net);
}

static void test_secant_jacobian_closed_form(void **state)
{
    (void)state;
    secant_case(380.0); /* 80 K above the room */
    secant_case(300.4); /* 0.4 K above: the difference is taken as 1 K */
}

/* On a grid at a state where every link to the room spans more than 1 K, the secant matrix
 * reproduces the flows exactly: with the sources off, C_i dT_i/dt = sum_j S_ij (T_j - T_i) =
 * C_i sum_j J_ij T_j + (the secant conductance to the room) T_room, the last being the
 * lost-energy row of the secant Jacobian (closed form: each link's flow is S (T_a - T_b), the
 * coefficient groups' S the group's h A s). */
static void test_secant_jacobian_reproduces_the_flows_of_a_grid(void **state)
{
    tp_yaml_net y;
    tp_eval *ev = NULL;
    double *yv, *jac, *f, troom;
    int n, nf, i, j;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    n = tp_network_state_size(y.net);
    nf = y.net->n_free;
    troom = tp_network_room(y.net);
    for (i = 0; i < y.net->n_nodes; i++)
        if (y.net->nodes[i].capacity <= 0)
            assert_true(y.net->nodes[i].t0 == troom); /* one fixed temperature */
    yv = warm_state(y.net);
    assert_int_equal(tp_eval_create(y.net, &ev), TP_OK);
    tp_eval_set_duty(ev, 0, 0.0);
    jac = dense_jacobian(ev, yv, 1);
    f = calloc((size_t)n, sizeof *f);
    assert_non_null(f);
    assert_int_equal(tp_eval_rhs(ev, yv, f), 0);
    for (i = 0; i < nf; i++) {
        double c = y.net->nodes[y.net->free_nodes[i]].capacity, lin = 0.0;
        for (j = 0; j < nf; j++)
            lin += jac[(size_t)i * (size_t)n + (size_t)j] * yv[j];
        lin += jac[(size_t)(nf + TP_Q_LOST) * (size_t)n + (size_t)i] * troom / c;
        tp_check_abs("secant flows", lin, f[i], 1e-9 * fmax(1.0, fabs(f[i])));
    }
    free(yv);
    free(jac);
    free(f);
    tp_eval_destroy(&ev);
    tp_yaml_net_close(&y);
}

static int teardown(void **state)
{
    (void)state;
    tp_materials_shutdown();
    tp_units_shutdown();
    return 0;
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_copy_of_a_grid_evaluates_as_the_original),
        cmocka_unit_test(test_a_copy_owns_every_array),
        cmocka_unit_test(test_copy_adds_a_conduction_link),
        cmocka_unit_test(test_copy_isolates_a_node),
        cmocka_unit_test(test_copy_adds_capacity_to_the_top_cells_by_area),
        cmocka_unit_test(test_copy_sets_the_top_airflow),
        cmocka_unit_test(test_copy_of_a_lumped_plate_adds_capacity_to_its_top_node),
        cmocka_unit_test(test_copy_refuses_changes_that_cannot_apply),
        cmocka_unit_test(test_copy_with_another_controller),
        cmocka_unit_test(test_copy_drives_a_source_by_power),
        cmocka_unit_test(test_eval_rhs_matches_the_oracle),
        cmocka_unit_test(test_oracle_tells_a_different_network),
        cmocka_unit_test(test_two_evaluators_hold_their_own_duties),
        cmocka_unit_test(test_jacobian_lumped_every_law),
        cmocka_unit_test(test_jacobian_check_tells_a_wrong_term),
        cmocka_unit_test(test_jacobian_grid_with_coefficient_groups),
        cmocka_unit_test(test_secant_jacobian_closed_form),
        cmocka_unit_test(test_secant_jacobian_reproduces_the_flows_of_a_grid),
    };
    return cmocka_run_group_tests(tests, NULL, teardown);
}
