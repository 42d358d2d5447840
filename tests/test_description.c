/* Tests of the description's own questions (src/input/description.h): the names of control modes
 * and whether a controller holds a setpoint, asked of the description and of the network built from
 * it (one answer for both). */
#include "tp_test.h"

/* A raw plate with the controller `control` (a control section, or ""): both answers. */
static void holds_case(const char *control, int expected)
{
    tp_yaml_net y;
    tp_yaml_net_plate(&y, "power: 120 W", control);
    if (tp_description_holds(&y.desc) != expected || tp_network_holds(y.net) != expected)
        print_error("control '%s': expected holds = %d\n", control, expected);
    assert_int_equal(tp_description_holds(&y.desc), expected);
    assert_int_equal(tp_network_holds(y.net), expected);
    tp_yaml_net_close(&y);
}

/* docs/control.md, "Controller": off keeps duty 0 and full keeps max_duty whatever the reading;
 * on-off and pid steer the reading to the setpoint. Only those two hold one. */
static void test_description_modes_that_hold_a_setpoint(void **state)
{
    (void)state;
    assert_false(tp_description_mode_holds(TP_MODE_OFF));
    assert_false(tp_description_mode_holds(TP_MODE_FULL));
    assert_true(tp_description_mode_holds(TP_MODE_ONOFF));
    assert_true(tp_description_mode_holds(TP_MODE_PID));
    assert_string_equal(tp_description_mode_name(TP_MODE_ONOFF), "on-off");
    assert_string_equal(tp_description_mode_name((tp_mode)7), "?");
}

/* The same answer from the description and from its network, for every mode, with and
 * without a setpoint; no controller holds nothing. */
static void test_description_and_network_agree_on_holding(void **state)
{
    (void)state;
    holds_case("", 0);
    holds_case("control: {source: pad, sensor: plate, mode: off}\n", 0);
    holds_case("control: {source: pad, sensor: plate, mode: full}\n", 0);
    holds_case("control: {source: pad, sensor: plate, mode: full, setpoint: 60 degC}\n", 0);
    holds_case("control: {source: pad, sensor: plate, mode: on-off, setpoint: 60 degC}\n", 1);
    holds_case("control: {source: pad, sensor: plate, mode: pid, setpoint: 60 degC, "
               "kp: 0.05 1/K}\n", 1);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_description_modes_that_hold_a_setpoint),
        cmocka_unit_test(test_description_and_network_agree_on_holding),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
