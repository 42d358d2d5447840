/* Tests of the steady report (src/study/steadyreport.h) on a one-node plate whose answers have a
 * closed form: T = T_room + P / G at full power, the holding duty G (T_set - T_room) / P, the
 * margin its reciprocal, and every watt leaving the plate by some path. */
#include "tp_test.h"

#include "steadyreport.h"

/* The invented plate of tp_yaml_net_plate: 120 W, 1.6 W/K to a room at 21 degC. */
#define POWER 120.0
#define CONDUCTANCE 1.6
#define ROOM (TP_TEST_KELVIN + 21.0)

/* Full power only: T = 21 + 120 / 1.6 = 96 degC (closed form); the shown state is the full
 * power one, which leaves the plate whole; no holding point, no margin. */
static void test_steadyreport_full_power_closed_form(void **state)
{
    tp_yaml_net y;
    tp_steadyreport r;
    (void)state;
    tp_yaml_net_plate(&y, "power: 120 W", "");
    assert_int_equal(tp_steadyreport_run(y.net, &r, &y.diag), TP_OK);
    assert_false(r.holding);
    tp_check_abs("max_duty", r.max_duty, 1.0, 0.0);
    tp_check_abs("full power plate", r.full.temps[0], ROOM + POWER / CONDUCTANCE, 1e-6);
    assert_ptr_equal(r.shown, &r.limit);
    tp_check_rel("plate loss", r.plate_loss, POWER, 1e-9);
    assert_true(isnan(r.margin));
    assert_int_equal(r.map.cells, 0);
    tp_steadyreport_clear(&r);
    tp_yaml_net_close(&y);
}

/* Holding 60 degC: duty = 1.6 * (60 - 21) / 120 = 0.52, margin 1 / 0.52 = 1.923 (hand
 * calculation); the plate loses the holding power 0.52 * 120 = 62.4 W. */
static void test_steadyreport_holding_closed_form(void **state)
{
    tp_yaml_net y;
    tp_steadyreport r;
    (void)state;
    tp_yaml_net_plate(&y, "power: 120 W",
                      "control: {source: pad, sensor: plate, mode: on-off, setpoint: 60 degC}\n");
    assert_int_equal(tp_steadyreport_run(y.net, &r, &y.diag), TP_OK);
    assert_true(r.holding);
    assert_ptr_equal(r.shown, &r.hold);
    tp_check_abs("holding duty", r.hold.duty, CONDUCTANCE * 39.0 / POWER, 1e-6);
    tp_check_abs("margin", r.margin, POWER / (CONDUCTANCE * 39.0), 1e-5);
    tp_check_rel("plate loss", r.plate_loss, CONDUCTANCE * 39.0, 1e-6);
    tp_steadyreport_clear(&r);
    tp_yaml_net_close(&y);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_steadyreport_full_power_closed_form),
        cmocka_unit_test(test_steadyreport_holding_closed_form),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
