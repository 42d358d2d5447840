/* Tests of a verb's session (src/cli/session.c): a command line parsed by the verb's own table
 * and opened into a config, description and network; --set overrides and --room reach the
 * network (figures by hand from the demo configs), the summary stream follows -q and outputs on
 * "-", the title falls back to the file name, open-loop sessions accept a PID controller
 * without gains, and every failure returns the right status with nothing left open (the ASan
 * build checks for leaks). */
#include "tp_test.h"

#include "session.h"
#include "verbs.h"

#define CONFIGS TP_SOURCE_DIR "/configs/"
#define BED24 CONFIGS "workshop-bed-24v.yaml"
#define RAW5 CONFIGS "raw-five-node.yaml"

/* Parse `args` (NULL-terminated, after the verb) for `verb` into cli; the status. */
static tp_status parse(const tp_verb *verb, const char *const *args, tp_cli *cli, tp_diag *d)
{
    char *argv[TP_CLI_MAX_ARGS * 2 + 4];
    int argc = 0, help = 0;
    tp_status st;
    while (args[argc]) {
        assert_true(argc < (int)(sizeof argv / sizeof argv[0]) - 1);
        argv[argc] = (char *)args[argc];
        argc++;
    }
    argv[argc] = NULL;
    st = tp_cli_parse(verb, argc, argv, cli, &help, d);
    assert_int_equal(help, 0);
    return st;
}

/* The heater source of a network (the controlled one, else the first). */
static const tp_net_source *heater(const tp_network *net)
{
    int k = net->has_control ? net->control.source : 0;
    assert_true(k >= 0 && k < net->n_sources);
    return &net->sources[k];
}

/* The 24 V demo as given: its title, its heater's 24 V across 2.4 ohm (the config's own
 * comment: 10 A, 240 W), a PID controller at 90 degC, the summary on standard output. */
static void test_session_opens_demo(void **state)
{
    const char *args[] = {BED24, NULL};
    tp_cli cli;
    tp_diag d;
    tp_session s;
    (void)state;
    tp_diag_init(&d, NULL);
    assert_int_equal(parse(&tp_cmd_warmup, args, &cli, &d), TP_OK);
    if (tp_session_open(&s, &cli, &d) != TP_OK) {
        print_error("%s", d.log);
        fail();
    }
    assert_non_null(s.net);
    assert_non_null(s.doc);
    assert_ptr_equal(s.cli, &cli);
    assert_ptr_equal(s.text, stdout);
    assert_string_equal(tp_session_title(&s), "24 V build plate, silicone pad, magnetic steel sheet");
    tp_check_rel("supply", heater(s.net)->supply, 24.0, 1e-12);
    tp_check_rel("resistance", heater(s.net)->r0, 2.4, 1e-12);
    assert_true(s.net->has_control);
    tp_check_abs("setpoint", s.net->control.setpoint, 90.0 + TP_TEST_KELVIN, 1e-9);
    tp_session_close(&s);
    assert_null(s.net);
    assert_null(s.doc);
}

/* --set overrides, in order (the last wins), reach the description and the network; -q sends
 * no summary. */
static void test_session_overrides(void **state)
{
    const char *args[] = {BED24, "--set", "heater.resistance=3 ohm", "--set",
                          "control.setpoint=75degC", "--set", "heater.resistance=4.8 ohm", "-q",
                          NULL};
    tp_cli cli;
    tp_diag d;
    tp_session s;
    (void)state;
    tp_diag_init(&d, NULL);
    assert_int_equal(parse(&tp_cmd_steady, args, &cli, &d), TP_OK);
    if (tp_session_open(&s, &cli, &d) != TP_OK) {
        print_error("%s", d.log);
        fail();
    }
    tp_check_rel("resistance", heater(s.net)->r0, 4.8, 1e-12);
    tp_check_abs("setpoint", s.net->control.setpoint, 75.0 + TP_TEST_KELVIN, 1e-9);
    assert_null(s.text);
    tp_session_close(&s);
}

/* --room replaces the room temperature in both forms: room.temperature of the physical form,
 * the fixed node `room` of the raw one. */
static void test_session_room(void **state)
{
    static const char *const files[2] = {BED24, RAW5};
    int k;
    (void)state;
    for (k = 0; k < 2; k++) {
        const char *args[] = {files[k], NULL};
        tp_cli cli;
        tp_diag d;
        tp_session s;
        tp_diag_init(&d, NULL);
        assert_int_equal(parse(&tp_cmd_steady, args, &cli, &d), TP_OK);
        if (tp_session_open_room(&s, &cli, "32.5 degC", &d) != TP_OK) {
            print_error("%s", d.log);
            fail();
        }
        tp_check_abs("room", tp_network_room(s.net), 32.5 + TP_TEST_KELVIN, 1e-9);
        tp_session_close(&s);
    }
}

/* A config without a title: figures take the file's name. A PID controller without gains is
 * refused by an ordinary session (exit 2 from the config) but accepted by a plant session
 * (tune identifies the plant in open loop). */
static void test_session_plant_and_title(void **state)
{
    static const char text[] = "network:\n"
                               "  nodes:\n"
                               "    - {id: plate, capacity: 640 J/K, initial: 21 degC}\n"
                               "    - {id: room, fixed: 21 degC}\n"
                               "  links:\n"
                               "    - {between: [plate, room], conductance: 1.6 W/K}\n"
                               "  sources:\n"
                               "    - {id: pad, node: plate, power: 120 W}\n"
                               "control: {source: pad, sensor: plate, mode: pid, setpoint: 60 degC}\n"
                               "run: {duration: 10 s, step: 1 s}\n";
    tp_scratch sc;
    char path[TP_TEST_PATH];
    const char *args[] = {path, NULL};
    tp_cli cli;
    tp_diag d;
    tp_session s;
    (void)state;
    tp_scratch_create(&sc);
    tp_scratch_write(&sc, "nogains.yaml", text, path);
    tp_diag_init(&d, NULL);
    assert_int_equal(parse(&tp_cmd_tune, args, &cli, &d), TP_OK);
    assert_int_equal(tp_session_open(&s, &cli, &d), TP_ERR_CONFIG);
    assert_null(s.net);
    assert_null(s.doc);
    tp_check_contains("message", d.log, "nogains.yaml");
    tp_diag_init(&d, NULL);
    if (tp_session_open_plant(&s, &cli, &d) != TP_OK) {
        print_error("%s", d.log);
        fail();
    }
    assert_string_equal(tp_session_title(&s), path);
    tp_session_close(&s);
    tp_scratch_destroy(&sc);
}

/* Failures: a missing file (TP_ERR_IO or a config error, nothing open), an unknown key in
 * --set (a config error naming the key), more --set options than TP_MAX_SETS (usage). */
static void test_session_failures(void **state)
{
    static const char *setv[TP_MAX_SETS + 1];
    const char *missing[] = {CONFIGS "no-such-file.yaml", NULL};
    const char *badkey[] = {BED24, "--set", "heater.resistence=3ohm", NULL};
    const char *args[2 * (TP_MAX_SETS + 1) + 2];
    tp_cli cli;
    tp_diag d;
    tp_session s;
    int i, n = 0;
    (void)state;
    tp_diag_init(&d, NULL);
    assert_int_equal(parse(&tp_cmd_warmup, missing, &cli, &d), TP_OK);
    assert_int_not_equal(tp_session_open(&s, &cli, &d), TP_OK);
    assert_null(s.net);
    assert_null(s.doc);
    tp_check_contains("missing", d.log, "no-such-file.yaml");

    tp_diag_init(&d, NULL);
    assert_int_equal(parse(&tp_cmd_warmup, badkey, &cli, &d), TP_OK);
    assert_int_equal(tp_session_open(&s, &cli, &d), TP_ERR_CONFIG);
    assert_null(s.net);
    assert_null(s.doc);
    tp_check_contains("bad key", d.log, "resistence");

    args[n++] = BED24;
    for (i = 0; i < TP_MAX_SETS + 1; i++) {
        setv[i] = "heater.resistance=3ohm";
        args[n++] = "--set";
        args[n++] = setv[i];
    }
    args[n] = NULL;
    tp_diag_init(&d, NULL);
    assert_int_equal(parse(&tp_cmd_warmup, args, &cli, &d), TP_OK);
    assert_int_equal(tp_session_open(&s, &cli, &d), TP_ERR_USAGE);
    assert_null(s.net);
    assert_null(s.doc);
    tp_check_contains("too many", d.log, "more than 128 --set options");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_session_opens_demo),
        cmocka_unit_test(test_session_overrides),
        cmocka_unit_test(test_session_room),
        cmocka_unit_test(test_session_plant_and_title),
        cmocka_unit_test(test_session_failures),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
