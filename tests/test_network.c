/* Tests of tp_network_copy: a copy of a gridded plate evaluates as the original, owns every
 * array (editing or destroying one leaves the other intact), and each change it can make has
 * the effect its closed form says. */
#include "tp_test.h"

#include "materials.h"
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

static double *rhs_of(const tp_network *net, const double *y)
{
    double *f = calloc((size_t)tp_network_state_size(net), sizeof *f);
    assert_non_null(f);
    assert_int_equal(tp_network_rhs(net, y, f), 0);
    return f;
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
    tp_network *copy = NULL;
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
        tp_check_abs("surface of the copy", tp_network_surface(copy, t0),
                     tp_network_surface(y.net, t0), 1e-9);
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
    tp_network_destroy(&copy);
    tp_yaml_net_close(&y);
}

static void test_editing_a_copy_leaves_the_original(void **state)
{
    tp_yaml_net y;
    tp_network *copy = NULL;
    double *s, *before, *after, *fc;
    int n, i;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    n = tp_network_state_size(y.net);
    s = spread_state(y.net);
    before = rhs_of(y.net, s);
    assert_int_equal(tp_network_copy(y.net, NULL, 0, &copy), TP_OK);
    /* Edit everything a shared array would leak through: links, capacities, coefficient
     * groups, sources' nodes and weights, the grid's maps. */
    for (i = 0; i < copy->n_links; i++) {
        copy->links[i].g *= 3.0;
        copy->links[i].scale *= 2.0;
    }
    for (i = 0; i < copy->n_nodes; i++)
        copy->nodes[i].capacity *= 0.5;
    for (i = 0; i < copy->n_groups; i++)
        copy->groups[i].conv.airflow = 5.0;
    copy->sources[0].weights[0] = 0.0;
    copy->sources[0].supply = 1.0;
    copy->grid->top_area[0] = 0.0;
    copy->grid->lumped->nodes[0].capacity = 1.0;
    tp_network_refresh(copy);
    fc = rhs_of(copy, s);
    after = rhs_of(y.net, s);
    check_same("the original after its copy was edited", after, before, n);
    /* The edits did reach the copy (the test can fail). */
    assert_true(fabs(fc[0] - before[0]) > 1e-6 * fabs(before[0]));
    /* Destroyed first, the original takes nothing of the copy with it (ASan would report a
     * shared array here). */
    free(after);
    tp_yaml_net_close(&y);
    free(fc);
    fc = rhs_of(copy, s);
    assert_true(isfinite(fc[0]));
    free(s);
    free(before);
    free(fc);
    tp_network_destroy(&copy);
}

static void test_copy_adds_a_conduction_link(void **state)
{
    tp_yaml_net y;
    tp_network *copy = NULL;
    tp_net_change ch;
    double *s, *f0, *f1, *t;
    int sensor, room, st, i;
    const double g = 0.05; /* W/K */
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    sensor = tp_network_find_node(y.net, "sensor");
    room = tp_network_find_node(y.net, "room");
    assert_true(sensor >= 0 && room >= 0);
    ch = (tp_net_change){TP_CHANGE_ADD_CONDUCTION, sensor, room, g, "sensor leak"};
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
    tp_network_destroy(&copy);
    tp_yaml_net_close(&y);
}

static void test_copy_isolates_a_node(void **state)
{
    tp_yaml_net y;
    tp_network *copy = NULL;
    tp_net_change ch;
    double *s, *f1;
    int sensor;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    sensor = tp_network_find_node(y.net, "sensor");
    ch = (tp_net_change){TP_CHANGE_ISOLATE, sensor, -1, 0.0, NULL};
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
    tp_network_destroy(&copy);
    tp_yaml_net_close(&y);
}

static void test_copy_adds_capacity_to_the_top_cells_by_area(void **state)
{
    tp_yaml_net y;
    tp_network *copy = NULL;
    tp_net_change ch;
    const tp_net_grid *g;
    double *s, *f0, *f1, area = 0.0, added = 0.0;
    const double cs = 150.0; /* J/K */
    int c, n, top;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    ch = (tp_net_change){TP_CHANGE_TOP_CAPACITY, -1, -1, cs, NULL};
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
    tp_network_destroy(&copy);
    tp_yaml_net_close(&y);
}

static void test_copy_sets_the_top_airflow(void **state)
{
    tp_yaml_net y;
    tp_network *copy = NULL;
    tp_net_change ch;
    tp_flows fl;
    tp_convection_case cc;
    double *t, area = 0.0, scale = 0.0, h, expected;
    const double v = 2.0, ts = TP_TEST_KELVIN + 60.0, troom = TP_TEST_KELVIN + 20.0;
    int i, g0 = -1;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, gridded), TP_OK);
    ch = (tp_net_change){TP_CHANGE_TOP_AIRFLOW, -1, -1, v, NULL};
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
    assert_int_equal(tp_network_flows_init(&fl, copy), TP_OK);
    tp_network_flows(copy, t, &fl);
    tp_check_rel("top convection at the new airflow", fl.path[TP_PATH_TOP_CONV], expected, 1e-9);
    tp_network_flows_clear(&fl);
    /* The original keeps still air: less heat (the test can fail). */
    assert_int_equal(tp_network_flows_init(&fl, y.net), TP_OK);
    tp_network_flows(y.net, t, &fl);
    assert_true(fl.path[TP_PATH_TOP_CONV] < 0.9 * expected);
    tp_network_flows_clear(&fl);
    free(t);
    tp_network_destroy(&copy);
    tp_yaml_net_close(&y);
}

static void test_copy_of_a_lumped_plate_adds_capacity_to_its_top_node(void **state)
{
    tp_yaml_net y;
    tp_network *copy = NULL;
    tp_net_change ch = {TP_CHANGE_TOP_CAPACITY, -1, -1, 40.0, NULL};
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, lumped), TP_OK);
    assert_true(y.net->top_node >= 0);
    assert_int_equal(tp_network_copy(y.net, &ch, 1, &copy), TP_OK);
    /* Closed form: C' = C + 40 J/K on the top node, the original untouched. */
    tp_check_rel("top node", copy->nodes[copy->top_node].capacity,
                 y.net->nodes[y.net->top_node].capacity + 40.0, 1e-12);
    tp_network_destroy(&copy);
    tp_yaml_net_close(&y);
}

static void test_copy_refuses_changes_that_cannot_apply(void **state)
{
    tp_yaml_net y;
    tp_network *copy = NULL;
    tp_net_change top = {TP_CHANGE_TOP_CAPACITY, -1, -1, 10.0, NULL};
    tp_net_change bad = {TP_CHANGE_ADD_CONDUCTION, 0, 99, 1.0, NULL};
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
    tp_network_destroy(&copy);
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
        cmocka_unit_test(test_editing_a_copy_leaves_the_original),
        cmocka_unit_test(test_copy_adds_a_conduction_link),
        cmocka_unit_test(test_copy_isolates_a_node),
        cmocka_unit_test(test_copy_adds_capacity_to_the_top_cells_by_area),
        cmocka_unit_test(test_copy_sets_the_top_airflow),
        cmocka_unit_test(test_copy_of_a_lumped_plate_adds_capacity_to_its_top_node),
        cmocka_unit_test(test_copy_refuses_changes_that_cannot_apply),
    };
    return cmocka_run_group_tests(tests, NULL, teardown);
}
