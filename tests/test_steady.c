/* Tests for steady.c: equilibria of small networks solved by hand, the holding power of a
 * controlled plant, radiation-only equilibrium, and the two ways a steady state can fail;
 * plus `tepid steady --json` against the keys of docs/user-guide.md. */
#include "tp_test.h"

#include <cjson/cJSON.h>

#include "steady.h"

#define SIGMA 5.670374419e-8 /* W/(m2.K4), CODATA 2018 */

/* Steady temperatures are checked to 1e-6 K. KINSOL stops when the scaled residual is below
 * 1e-9 W (steady.c, TP_FNORM_TOL); over the weakest conductance used here (0.01 W/K) that is
 * at most 1e-7 K of temperature error, and the hand values are exact fractions. */
#define TEMP_TOL 1.0e-6 /* K */

static double node_c(const tp_network *net, const tp_steady *s, const char *id)
{
    int i = tp_network_find_node(net, id);
    assert_true(i >= 0);
    return s->temps[i] - TP_TEST_KELVIN;
}

/* Solve the full-power steady state of `yaml`; the caller clears *s and closes *y. */
static void full_steady(tp_yaml_net *y, const char *yaml, tp_steady *s)
{
    tp_status st = tp_yaml_net_open(y, yaml);
    if (st != TP_OK)
        print_error("%s", y->diag.log);
    assert_int_equal(st, TP_OK);
    st = tp_steady_full(y->net, 1.0, s, &y->diag);
    if (st != TP_OK)
        print_error("%s", y->diag.log);
    assert_int_equal(st, TP_OK);
}

/* Series chain, hand calculation: P = 10 W into a, a --2 W/K-- b --0.5 W/K-- room (20 degC).
 * All of P flows through both links: T_b - T_r = P / G2 = 20 K, T_a - T_b = P / G1 = 5 K, so
 * T_a = 45 degC, T_b = 40 degC (series resistances add: 1/2 + 1/0.5 = 2.5 K/W). */
static void test_steady_series_chain(void **state)
{
    static const char *const yaml = "network:\n"
                                    "  nodes:\n"
                                    "    - {id: a, capacity: 100 J/K, initial: 20 degC}\n"
                                    "    - {id: b, capacity: 100 J/K, initial: 20 degC}\n"
                                    "    - {id: room, fixed: 20 degC}\n"
                                    "  links:\n"
                                    "    - {between: [a, b], conductance: 2 W/K}\n"
                                    "    - {between: [b, room], conductance: 0.5 W/K}\n"
                                    "  sources:\n"
                                    "    - {id: pad, node: a, power: 10 W}\n";
    tp_yaml_net y;
    tp_steady s;
    (void)state;
    full_steady(&y, yaml, &s);
    tp_check_abs("T_a", node_c(y.net, &s, "a"), 45.0, TEMP_TOL);
    tp_check_abs("T_b", node_c(y.net, &s, "b"), 40.0, TEMP_TOL);
    tp_check_abs("power", s.power, 10.0, 1.0e-12);
    tp_steady_clear(&s);
    tp_yaml_net_close(&y);
}

/* Series and parallel paths, hand calculation. P = 11 W into a. Between a and b two links in
 * parallel: a conductance of 1 W/K and convection h A = 10 W/(m2.K) x 0.3 m2 = 3 W/K, together
 * 4 W/K. b --2 W/K-- room, and a --0.5 W/K-- room directly (room 20 degC).
 * With x = T_a - T_r, z = T_b - T_r:
 *   node b: 4 (x - z) = 2 z              -> z = 2x/3
 *   node a: 11 = 4 (x - z) + 0.5 x = 4x/3 + x/2 = 11x/6  -> x = 6 K, z = 4 K,
 * so T_a = 26 degC, T_b = 24 degC. */
static void test_steady_series_parallel(void **state)
{
    static const char *const yaml =
        "network:\n"
        "  nodes:\n"
        "    - {id: a, capacity: 100 J/K, initial: 20 degC}\n"
        "    - {id: room, fixed: 20 degC}\n"
        "    - {id: b, capacity: 300 J/K, initial: 20 degC}\n"
        "  links:\n"
        "    - {between: [a, b], conductance: 1 W/K}\n"
        "    - {between: [b, a], convection: {area: 0.3 m2, coefficient: 10 W/(m2.K)}}\n"
        "    - {between: [b, room], conductance: 2 W/K}\n"
        "    - {between: [room, a], conductance: 0.5 W/K}\n"
        "  sources:\n"
        "    - {id: pad, node: a, power: 11 W}\n";
    tp_yaml_net y;
    tp_steady s;
    (void)state;
    full_steady(&y, yaml, &s);
    tp_check_abs("T_a", node_c(y.net, &s, "a"), 26.0, TEMP_TOL);
    tp_check_abs("T_b", node_c(y.net, &s, "b"), 24.0, TEMP_TOL);
    tp_steady_clear(&s);
    tp_yaml_net_close(&y);
}

/* No source, two boundaries, hand calculation: m links to hot (80 degC) by 3 W/K and to cold
 * (20 degC) by 1 W/K, so T_m is the conductance-weighted mean (3 x 80 + 1 x 20) / 4 = 65 degC;
 * the node d hangs off m alone and carries no heat, so T_d = T_m. */
static void test_steady_weighted_mean_between_boundaries(void **state)
{
    static const char *const yaml = "network:\n"
                                    "  nodes:\n"
                                    "    - {id: hot, fixed: 80 degC}\n"
                                    "    - {id: m, capacity: 50 J/K, initial: 20 degC}\n"
                                    "    - {id: d, capacity: 5 J/K, initial: 20 degC}\n"
                                    "    - {id: cold, fixed: 20 degC}\n"
                                    "  links:\n"
                                    "    - {between: [hot, m], conductance: 3 W/K}\n"
                                    "    - {between: [m, cold], conductance: 1 W/K}\n"
                                    "    - {between: [m, d], conductance: 0.2 W/K}\n";
    tp_yaml_net y;
    tp_steady s;
    (void)state;
    full_steady(&y, yaml, &s);
    tp_check_abs("T_m", node_c(y.net, &s, "m"), 65.0, TEMP_TOL);
    tp_check_abs("T_d", node_c(y.net, &s, "d"), 65.0, TEMP_TOL);
    tp_steady_clear(&s);
    tp_yaml_net_close(&y);
}

/* Radiation alone: P = eps sigma A (T^4 - Ts^4) (Stefan-Boltzmann, gray body to large
 * surroundings; Incropera 7th ed. Eq. 1.7, from memory), solved for T:
 * T = (P / (eps sigma A) + Ts^4)^(1/4). P = 50 W, eps = 0.9, A = 0.1 m2, Ts = 293.15 K gives
 * T = 362.0534 K (88.9034 degC). The solver starts from the 20 degC initial state, where the
 * linearised radiation conductance is smallest. */
static void test_steady_radiation_only(void **state)
{
    static const char *const yaml =
        "network:\n"
        "  nodes:\n"
        "    - {id: plate, capacity: 700 J/K, initial: 20 degC}\n"
        "    - {id: room, fixed: 20 degC}\n"
        "  links:\n"
        "    - {between: [plate, room], radiation: {area: 0.1 m2, emissivity: 0.9}}\n"
        "  sources:\n"
        "    - {id: pad, node: plate, power: 50 W}\n";
    const double ts = 293.15, ts2 = ts * ts;
    double expected = pow(50.0 / (0.9 * SIGMA * 0.1) + ts2 * ts2, 0.25);
    tp_yaml_net y;
    tp_steady s;
    (void)state;
    tp_check_abs("closed form", expected, 362.0534, 5.0e-5);
    full_steady(&y, yaml, &s);
    tp_check_abs("T", s.temps[tp_network_find_node(y.net, "plate")], expected, TEMP_TOL);
    tp_steady_clear(&s);
    tp_yaml_net_close(&y);
}

/* A simple controlled plant (invented): plate --1.5 W/K-- room (20 degC), plate --0.05 W/K--
 * sensor --0.01 W/K-- room, a 100 W pad on the plate, the controller reading the sensor. */
#define PLANT_YAML                                                                                 \
    "network:\n"                                                                                   \
    "  nodes:\n"                                                                                   \
    "    - {id: plate, capacity: 500 J/K, initial: 20 degC}\n"                                     \
    "    - {id: sensor, capacity: 0.2 J/K, initial: 20 degC}\n"                                    \
    "    - {id: room, fixed: 20 degC}\n"                                                           \
    "  links:\n"                                                                                   \
    "    - {between: [plate, room], conductance: 1.5 W/K}\n"                                       \
    "    - {between: [plate, sensor], conductance: 0.05 W/K}\n"                                    \
    "    - {between: [sensor, room], conductance: 0.01 W/K}\n"                                     \
    "  sources:\n"                                                                                 \
    "    - {id: pad, node: plate, power: 100 W}\n"                                                 \
    "control: {source: pad, sensor: sensor, mode: on-off, setpoint: %s, band: 2 K}\n"

/* Holding power, hand calculation. With the sensor held at T_s = 70 degC:
 *   sensor: 0.05 (T_p - T_s) = 0.01 (T_s - T_r)  -> T_p - T_s = 0.2 x 50 = 10 K, T_p = 80 degC
 *   power:  P = 1.5 (T_p - T_r) + 0.01 (T_s - T_r) = 90 + 0.5 = 90.5 W, duty 0.905. */
static void test_steady_holding_power(void **state)
{
    char yaml[2048];
    tp_yaml_net y;
    tp_steady s;
    (void)state;
    snprintf(yaml, sizeof yaml, PLANT_YAML, "70 degC");
    assert_int_equal(tp_yaml_net_open(&y, yaml), TP_OK);
    assert_int_equal(tp_steady_hold(y.net, &s, &y.diag), TP_OK);
    tp_check_abs("T_sensor", node_c(y.net, &s, "sensor"), 70.0, TEMP_TOL);
    tp_check_abs("T_plate", node_c(y.net, &s, "plate"), 80.0, TEMP_TOL);
    /* Power tolerance: the temperature tolerance times the total conductance 1.51 W/K. */
    tp_check_abs("holding power", s.power, 90.5, 1.51 * TEMP_TOL);
    tp_check_abs("duty", s.duty, 0.905, 1.51 * TEMP_TOL / 100.0);
    tp_check_abs("reading", s.reading - TP_TEST_KELVIN, 70.0, TEMP_TOL);
    tp_steady_clear(&s);
    tp_yaml_net_close(&y);
}

/* Out of reach, hand calculation: at full power (100 W) with x = T_s - T_r, T_p - T_r = 1.2 x
 * (as above) and 100 = 1.5 x 1.2 x + 0.01 x = 1.81 x, so the highest reading is
 * 20 + 100/1.81 = 75.2486 degC. A 150 degC setpoint fails with that figure in the message
 * (issue 2 item 6: "say which"), printed to two decimals. */
static void test_steady_setpoint_out_of_reach(void **state)
{
    char yaml[2048];
    tp_yaml_net y;
    tp_steady s;
    (void)state;
    snprintf(yaml, sizeof yaml, PLANT_YAML, "150 degC");
    assert_int_equal(tp_yaml_net_open(&y, yaml), TP_OK);
    assert_int_equal(tp_steady_hold(y.net, &s, &y.diag), TP_ERR_SOLVER);
    tp_check_contains("message", y.diag.log, "out of reach");
    tp_check_contains("message", y.diag.log, "75.25 degC");
    tp_check_contains("message", y.diag.log, "control.setpoint");
    tp_steady_clear(&s);
    tp_yaml_net_close(&y);
}

/* A heated node with no path to a fixed node has no steady state (energy accumulates without
 * bound): the solver refuses before iterating and names the node. The fixed node exists but
 * only a and b are linked. */
static void test_steady_no_path_to_fixed(void **state)
{
    static const char *const yaml = "network:\n"
                                    "  nodes:\n"
                                    "    - {id: a, capacity: 100 J/K, initial: 20 degC}\n"
                                    "    - {id: b, capacity: 100 J/K, initial: 20 degC}\n"
                                    "    - {id: room, fixed: 20 degC}\n"
                                    "  links:\n"
                                    "    - {between: [a, b], conductance: 2 W/K}\n"
                                    "  sources:\n"
                                    "    - {id: pad, node: a, power: 10 W}\n";
    tp_yaml_net y;
    tp_steady s;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, yaml), TP_OK);
    /* Assembly already warned (issue 2 item 3). */
    tp_check_contains("warning", y.diag.log, "no path to a fixed node");
    assert_int_equal(tp_steady_full(y.net, 1.0, &s, &y.diag), TP_ERR_SOLVER);
    tp_check_contains("message", y.diag.log, "no steady state exists: node 'a' has no path");
    tp_steady_clear(&s);
    tp_yaml_net_close(&y);
}

/* ---- the command line --------------------------------------------------------------------- */

static double json_number(const cJSON *obj, const char *name)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, name);
    assert_true(cJSON_IsNumber(v));
    return v->valuedouble;
}

/* `tepid steady FILE --json F` (docs/user-guide.md "Outputs"): an object with nodes_C (id to
 * temperature, every node with capacity) and power_W, the holding power with a controller.
 * Values: the hand calculation of test_steady_holding_power. */
static void test_steady_cli_json(void **state)
{
    tp_scratch sc;
    tp_run_result r;
    char yaml[2048], cfg[TP_TEST_PATH], out[TP_TEST_PATH];
    cJSON *root, *nodes;
    (void)state;
    tp_scratch_create(&sc);
    snprintf(yaml, sizeof yaml, PLANT_YAML, "70 degC");
    tp_scratch_write(&sc, "plant.yaml", yaml, cfg);
    tp_scratch_path(&sc, "steady.json", out, sizeof out);
    {
        const char *args[] = {"steady", cfg, "--json", out, "-q", NULL};
        tp_run_tepid(&sc, args, &r);
    }
    assert_int_equal(r.status, 0);
    tp_run_clear(&r);
    root = tp_read_json(out);
    nodes = cJSON_GetObjectItemCaseSensitive(root, "nodes_C");
    assert_true(cJSON_IsObject(nodes));
    assert_int_equal(cJSON_GetArraySize(nodes), 2); /* plate and sensor; not the fixed room */
    tp_check_abs("plate", json_number(nodes, "plate"), 80.0, TEMP_TOL);
    tp_check_abs("sensor", json_number(nodes, "sensor"), 70.0, TEMP_TOL);
    tp_check_abs("power_W", json_number(root, "power_W"), 90.5, 1.51 * TEMP_TOL);
    cJSON_Delete(root);
    tp_scratch_destroy(&sc);
}

/* The power margin (max duty / holding duty) is flagged below 1.3, the figure docs/sizing.md
 * calls risky. Hand calculation from test_steady_holding_power: holding 70 degC takes 90.5 W
 * of the 100 W, margin 100 / 90.5 = 1.105 (flagged); holding 60 degC, with x = 40 K,
 * T_p - T_r = 1.2 x = 48 K and P = 1.5 x 48 + 0.01 x 40 = 72.4 W, margin 1.381 (not). */
static void test_steady_low_margin_warns(void **state)
{
    static const struct {
        const char *setpoint;
        double margin;
        int low;
    } cases[] = {{"70 degC", 100.0 / 90.5, 1}, {"60 degC", 100.0 / 72.4, 0}};
    tp_scratch sc;
    tp_run_result r;
    char yaml[2048], cfg[TP_TEST_PATH], out[TP_TEST_PATH];
    size_t i;
    (void)state;
    tp_scratch_create(&sc);
    tp_scratch_path(&sc, "steady.json", out, sizeof out);
    for (i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        const char *args[] = {"steady", cfg, "--json", out, NULL};
        cJSON *root;
        snprintf(yaml, sizeof yaml, PLANT_YAML, cases[i].setpoint);
        tp_scratch_write(&sc, "plant.yaml", yaml, cfg);
        tp_run_tepid(&sc, args, &r);
        assert_int_equal(r.status, 0);
        if (cases[i].low) {
            /* The setpoint's position: line 12, column 64 of PLANT_YAML (counted by hand). */
            tp_check_contains("stderr", r.err, "plant.yaml:12:64: warning: control.setpoint");
            tp_check_contains("stderr", r.err, "the power margin is 1.10");
            tp_check_contains("stderr", r.err, "below 1.3");
            tp_check_contains("stdout", r.out, "1.10 (low: see the warning)");
        } else {
            assert_null(strstr(r.err, "power margin"));
            assert_null(strstr(r.out, "(low"));
        }
        tp_run_clear(&r);
        root = tp_read_json(out);
        tp_check_rel("margin", json_number(root, "margin"), cases[i].margin, 1e-6);
        assert_true(cJSON_IsBool(cJSON_GetObjectItemCaseSensitive(root, "margin_low")));
        assert_int_equal(cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(root, "margin_low")),
                         cases[i].low);
        tp_check_rel("margin_advised", json_number(root, "margin_advised"), 1.3, 1e-12);
        cJSON_Delete(root);
    }
    tp_scratch_destroy(&sc);
}

/* Where no steady state exists or the setpoint is out of reach, `tepid steady` exits 1 and
 * says which (issue 2 item 6); no JSON file is written. */
static void test_steady_cli_failures_exit_1(void **state)
{
    tp_scratch sc;
    tp_run_result r;
    char yaml[2048], cfg[TP_TEST_PATH], out[TP_TEST_PATH];
    (void)state;
    tp_scratch_create(&sc);
    tp_scratch_path(&sc, "steady.json", out, sizeof out);
    snprintf(yaml, sizeof yaml, PLANT_YAML, "150 degC");
    tp_scratch_write(&sc, "reach.yaml", yaml, cfg);
    {
        const char *args[] = {"steady", cfg, "--json", out, NULL};
        tp_run_tepid(&sc, args, &r);
    }
    assert_int_equal(r.status, 1);
    tp_check_contains("stderr", r.err, "out of reach");
    tp_check_contains("stderr", r.err, "75.25 degC");
    assert_false(tp_file_exists(out));
    tp_run_clear(&r);

    tp_scratch_write(&sc, "island.yaml",
                     "network:\n"
                     "  nodes:\n"
                     "    - {id: a, capacity: 100 J/K, initial: 20 degC}\n"
                     "    - {id: room, fixed: 20 degC}\n"
                     "  sources:\n"
                     "    - {id: pad, node: a, power: 10 W}\n",
                     cfg);
    {
        const char *args[] = {"steady", cfg, "--json", out, NULL};
        tp_run_tepid(&sc, args, &r);
    }
    assert_int_equal(r.status, 1);
    tp_check_contains("stderr", r.err, "no steady state exists");
    assert_false(tp_file_exists(out));
    tp_run_clear(&r);
    tp_scratch_destroy(&sc);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_steady_series_chain),
        cmocka_unit_test(test_steady_series_parallel),
        cmocka_unit_test(test_steady_weighted_mean_between_boundaries),
        cmocka_unit_test(test_steady_radiation_only),
        cmocka_unit_test(test_steady_holding_power),
        cmocka_unit_test(test_steady_setpoint_out_of_reach),
        cmocka_unit_test(test_steady_no_path_to_fixed),
        cmocka_unit_test(test_steady_cli_json),
        cmocka_unit_test(test_steady_cli_failures_exit_1),
        cmocka_unit_test(test_steady_low_margin_warns),
    };
    int rc = cmocka_run_group_tests(tests, NULL, NULL);
    tp_units_shutdown();
    return rc;
}
