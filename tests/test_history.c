/* Tests of the run history (src/study/history.c), recorded by the integrator's output callback:
 * rows kept in order across the growth of its arrays, the values of each row against closed
 * forms, which columns it keeps (nodes with capacity in declaration order; a gridded plate's
 * layer statistics, whose capacity-weighted means obey the energy balance), their labels and
 * lookups. (test_integrate.c checks the integration itself through the history.) */
#include "tp_test.h"

#include "history.h"
#include "integrate.h"

/* Integrate y's network from its initial state for t_end s with outputs every `step` s into h. */
static void record(const tp_yaml_net *y, double t_end, double step, tp_history *h)
{
    tp_integrate_opts o;
    tp_integrate_stats st;
    tp_diag d;
    tp_diag_init(&d, NULL);
    tp_integrate_defaults(&y->desc.run, &o);
    o.t_end = t_end;
    o.step = step;
    o.rtol = 1e-9;
    assert_int_equal(tp_history_init(h, y->net), TP_OK);
    o.out = tp_history_record;
    o.user = h;
    if (tp_integrate(y->net, &o, &st, &d) != TP_OK) {
        print_error("%s", d.log);
        fail();
    }
    assert_false(h->failed);
}

/* The one-node plate of tp_yaml_net_plate (C = 640 J/K, G = 1.6 W/K to a room at 21 degC) with
 * 120 W: closed form T(t) = 21 degC + (P/G)(1 - exp(-t G/C)), P/G = 75 K, C/G = 400 s. 3000 s
 * in 1 s steps is 3001 rows, past the first two blocks of the history's arrays (1024 rows,
 * doubled: history.c), so every row after a growth must still hold its own time and values:
 * t[i] = i exactly, the temperature on the closed form, the delivered power 120 W and the
 * energy delivered P t (closed form), with no wiring (0 W), no controller (duty 1, reading
 * NaN). */
static void test_history_rows_survive_growth(void **state)
{
    tp_yaml_net y;
    tp_history h;
    long i;
    int col;
    (void)state;
    tp_yaml_net_plate(&y, "power: 120 W", "");
    record(&y, 3000.0, 1.0, &h);
    assert_int_equal(h.n, 3001);
    assert_true(h.cap >= h.n);
    assert_int_equal(h.n_out, 1);
    col = tp_history_column(&h, 0);
    assert_int_equal(col, 0);
    for (i = 0; i < h.n; i++) {
        double t = (double)i;
        double want = 21.0 + TP_TEST_KELVIN + 75.0 * (1.0 - exp(-t / 400.0));
        if (h.t[i] != t) {
            print_error("row %ld holds t = %.17g\n", i, h.t[i]);
            fail();
        }
        /* rtol 1e-9: the integration error stays far below 1e-5 K (test_integrate.c bounds
         * it at 10 (rtol T + rtol 10 K) = 4e-6 K for this run). */
        tp_check_abs("plate temperature", tp_history_temp(&h, i, col), want, 1e-5);
        tp_check_abs("power", h.power[i], 120.0, 1e-9);
        tp_check_abs("wire", h.wire[i], 0.0, 1e-12);
        tp_check_abs("duty", h.duty[i], 1.0, 0.0);
        assert_true(isnan(h.reading[i]));
        tp_check_abs("energy delivered", h.energy[i * TP_N_QUAD + TP_Q_SOURCE], 120.0 * t,
                     1e-6 * (1.0 + 120.0 * t));
    }
    /* Energy balance at the last row (closed form): delivered = stored + lost, so
     * lost = P t - C (T - T0). */
    tp_check_rel("energy lost",
                 h.energy[(h.n - 1) * TP_N_QUAD + TP_Q_LOST],
                 120.0 * 3000.0 - 640.0 * 75.0 * (1.0 - exp(-3000.0 / 400.0)), 1e-6);
    tp_history_clear(&h);
    assert_null(h.t);
    assert_int_equal(h.n, 0);
    tp_yaml_net_close(&y);
}

/* The columns of a raw network: every node with capacity, in declaration order; fixed nodes
 * (no capacity) are not recorded (tp_history_column -1); labels are the node ids. */
static void test_history_raw_columns(void **state)
{
    static const char text[] = "network:\n"
                               "  nodes:\n"
                               "    - {id: top, capacity: 100 J/K, initial: 30 degC}\n"
                               "    - {id: room, fixed: 20 degC}\n"
                               "    - {id: base, capacity: 200 J/K, initial: 40 degC}\n"
                               "    - {id: frame, fixed: 25 degC}\n"
                               "    - {id: air, capacity: 50 J/K, initial: 20 degC}\n"
                               "  links:\n"
                               "    - {between: [top, base], conductance: 2 W/K}\n"
                               "    - {between: [top, room], conductance: 1 W/K}\n"
                               "    - {between: [base, frame], conductance: 1 W/K}\n"
                               "    - {between: [air, room], conductance: 1 W/K}\n"
                               "  sources:\n"
                               "    - {id: pad, node: base, power: 10 W}\n"
                               "run: {duration: 10 s, step: 5 s}\n";
    static const char *const ids[3] = {"top", "base", "air"};
    tp_yaml_net y;
    tp_history h;
    char label[64];
    int k;
    (void)state;
    if (tp_yaml_net_open(&y, text) != TP_OK) {
        print_error("%s", y.diag.log);
        fail();
    }
    record(&y, 10.0, 5.0, &h);
    assert_int_equal(h.n, 3);
    assert_int_equal(h.n_out, 3);
    for (k = 0; k < 3; k++) {
        int node = tp_network_find_node(y.net, ids[k]);
        assert_true(node >= 0);
        assert_int_equal(tp_history_column(&h, node), k);
        assert_int_equal(h.out_kind[k], TP_COL_NODE);
        assert_string_equal(tp_history_label(&h, k, label, sizeof label), ids[k]);
    }
    assert_int_equal(tp_history_column(&h, tp_network_find_node(y.net, "room")), -1);
    assert_int_equal(tp_history_column(&h, tp_network_find_node(y.net, "frame")), -1);
    /* Row 0 is the initial state as declared. */
    tp_check_abs("top at 0", tp_history_temp(&h, 0, 0), 30.0 + TP_TEST_KELVIN, 1e-9);
    tp_check_abs("base at 0", tp_history_temp(&h, 0, 1), 40.0 + TP_TEST_KELVIN, 1e-9);
    tp_check_abs("air at 0", tp_history_temp(&h, 0, 2), 20.0 + TP_TEST_KELVIN, 1e-9);
    /* air sits at the room's temperature with nothing else joined to it: it stays there. */
    tp_check_abs("air at 10 s", tp_history_temp(&h, 2, 2), 20.0 + TP_TEST_KELVIN, 1e-7);
    tp_history_clear(&h);
    tp_yaml_net_close(&y);
}

/* A gridded plate of two layers, 6 x 4 cells of 20 x 25 mm (120 x 100 mm), every surface loss
 * off, a 50 W heater in the base layer; columns: each layer's mean, min and max, labelled
 * "<layer>_mean", "_min", "_max" (no other node has capacity). Capacities by hand:
 *   base: 1000 kg/m3 x 1000 J/(kg.K) x 2 mm x 0.012 m2 = 24 J/K;
 *   top:  2500 x 800 x 3 mm x 0.012 m2 = 72 J/K.
 * With no loss, every joule delivered is stored: the capacity-weighted layer means obey
 *   24 mean_base + 72 mean_top = 96 x T0 + 50 t          (energy balance, closed form)
 * at every row, which holds only if the means are weighted by the cells' capacities. And
 * min <= mean <= max per layer, the heated layer warmer on average than the one above. */
static void test_history_grid_layer_statistics(void **state)
{
    static const char text[] =
        "materials:\n"
        "  soft:  {density: 1000 kg/m3, specific_heat: 1000 J/(kg.K), conductivity: 0.5 W/(m.K),\n"
        "          emissivity: 0.9, max_temperature: 300 degC, source: test values}\n"
        "  metal: {density: 2500 kg/m3, specific_heat: 800 J/(kg.K), conductivity: 100 W/(m.K),\n"
        "          emissivity: 0.1, max_temperature: 300 degC, source: test values}\n"
        "room: {temperature: 20 degC}\n"
        "bed:\n"
        "  size: [120 mm, 100 mm]\n"
        "  grid: [6, 4]\n"
        "  layers:\n"
        "    - {id: base, material: soft, thickness: 2 mm}\n"
        "    - {id: top, material: metal, thickness: 3 mm}\n"
        "heater: {layer: base, power: 50 W, pattern: {border: 20 mm, border_share: 0.6}}\n"
        "losses: {convection_scale: 0, radiation_scale: 0}\n"
        "run: {duration: 100 s, step: 10 s}\n";
    static const char *const labels[6] = {"base_mean", "base_min", "base_max",
                                          "top_mean",  "top_min",  "top_max"};
    const double t0 = 20.0 + TP_TEST_KELVIN;
    tp_yaml_net y;
    tp_history h;
    char label[64];
    long i;
    int k;
    (void)state;
    if (tp_yaml_net_open(&y, text) != TP_OK) {
        print_error("%s", y.diag.log);
        fail();
    }
    assert_non_null(y.net->grid);
    record(&y, 100.0, 10.0, &h);
    assert_int_equal(h.n, 11);
    assert_int_equal(h.n_out, 6);
    for (k = 0; k < 6; k++) {
        assert_int_equal(h.out_nodes[k], -1);
        assert_string_equal(tp_history_label(&h, k, label, sizeof label), labels[k]);
    }
    tp_check_rel("base capacity", y.net->grid->layer_capacity[0], 24.0, 1e-12);
    tp_check_rel("top capacity", y.net->grid->layer_capacity[1], 72.0, 1e-12);
    for (i = 0; i < h.n; i++) {
        double mb = tp_history_temp(&h, i, 0), mt = tp_history_temp(&h, i, 3);
        tp_check_abs("stored energy", 24.0 * mb + 72.0 * mt, 96.0 * t0 + 50.0 * h.t[i], 1e-4);
        assert_true(tp_history_temp(&h, i, 1) <= mb + 1e-12 && mb <= tp_history_temp(&h, i, 2) + 1e-12);
        assert_true(tp_history_temp(&h, i, 4) <= mt + 1e-12 && mt <= tp_history_temp(&h, i, 5) + 1e-12);
        assert_true(h.surface_min[i] <= h.surface[i] + 1e-12);
        assert_true(h.surface[i] <= h.surface_max[i] + 1e-12);
        if (i > 0) {
            assert_true(mb > mt);
            /* The patterned heater puts more power per area in the border: not uniform. */
            assert_true(tp_history_temp(&h, i, 2) > tp_history_temp(&h, i, 1));
        }
    }
    /* Without map_ref there is no deviation; without cross_level no crossing. */
    assert_true(isnan(h.surface_dev[h.n - 1]));
    assert_true(isnan(h.cross_time));
    tp_history_clear(&h);
    tp_yaml_net_close(&y);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_history_rows_survive_growth),
        cmocka_unit_test(test_history_raw_columns),
        cmocka_unit_test(test_history_grid_layer_statistics),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
