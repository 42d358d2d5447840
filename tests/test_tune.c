/* Tests of `tepid tune` through the binary: it runs on a pid controller without gains (it
 * identifies the plant in open loop), the gains it prints for a first-order plant match the
 * SIMC rule's closed form, and the block it prints pasted into control: gives a file every verb
 * accepts. */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include "tp_test.h"

/* An invented first-order plant: C = 600 J/K, G = 1.5 W/K to a 20 degC room, a 100 W pad, the
 * reading the plate itself; a pid controller with no gains yet. */
#define PLANT                                                                                  \
    "network:\n"                                                                               \
    "  nodes:\n"                                                                               \
    "    - {id: plate, capacity: 600 J/K, initial: 20 degC}\n"                                 \
    "    - {id: room, fixed: 20 degC}\n"                                                       \
    "  links:\n"                                                                               \
    "    - {between: [plate, room], conductance: 1.5 W/K}\n"                                   \
    "  sources:\n"                                                                             \
    "    - {id: pad, node: plate, power: 100 W}\n"                                             \
    "run: {duration: 40 min, step: 1 s}\n"

/* Issue 15 item 12: `mode: pid` without gains was refused with the hint "'tepid tune' suggests
 * gains", and tune refused the same file. */
static void test_tune_runs_without_gains_and_block_pastes(void **state)
{
    tp_scratch *s = tp_group_scratch();
    char cfg[TP_TEST_PATH], pasted[TP_TEST_PATH], text[2048];
    const char *warm[] = {"warmup", cfg, "-q", NULL};
    const char *tune[] = {"tune", cfg, NULL};
    const char *warm2[] = {"warmup", pasted, "-q", NULL};
    const char *check2[] = {"check", pasted, NULL};
    tp_run_result r;
    const char *block, *end;
    double kp, ki, kd;
    (void)state;
    tp_scratch_write(s, "plant.yaml",
                     PLANT "control: {source: pad, sensor: plate, mode: pid, setpoint: 60 degC}\n",
                     cfg);
    /* The closed-loop verbs still ask for gains, and name tune. */
    tp_run_tepid(s, warm, &r);
    assert_int_equal(r.status, 2);
    tp_check_contains("warmup", r.err, "control.kp: mode pid needs gains");
    tp_check_contains("warmup", r.err, "'tepid tune' suggests gains");
    tp_run_clear(&r);

    tp_run_tepid(s, tune, &r);
    if (r.status != 0)
        fail_msg("tune refused a pid controller without gains:\n%s", r.err);
    block = strstr(r.out, "(paste into control:");
    assert_non_null(block);
    block = strchr(block, '\n') + 1;
    assert_int_equal(strncmp(block, "    mode: pid\n", 14), 0);
    assert_int_equal(sscanf(block, "    mode: pid\n    kp: %lf 1/K\n    ki: %lf 1/(K.s)\n"
                                   "    kd: %lf s/K\n", &kp, &ki, &kd), 3);
    /* SIMC PI (Skogestad, J. Process Control 13 (2003) 291-309, Eqs. for a first-order plus
     * delay plant), closed form for this plant: gain K = 100 W / 1.5 W/K = 66.67 K per unit
     * duty, tau = C/G = 400 s, no delay but half the 1 s sampling period (Skogestad's half
     * rule): dead = 0.5 s; tau_c = max(dead, 0.02 tau) = 8 s (docs/control.md);
     * kp = tau / (K (tau_c + dead)) = 400 / (66.67 x 8.5) = 0.7059 1/K;
     * Ti = min(tau, 4 (tau_c + dead)) = 34 s, ki = kp / Ti = 0.02076 1/(K.s); kd = 0.
     * The identification is numerical (two-point fit of a simulated step): 1 %. */
    tp_check_rel("kp", kp, 0.70588, 0.01);
    tp_check_rel("ki", ki, 0.020761, 0.01);
    tp_check_abs("kd", kd, 0.0, 1e-12);

    /* Paste the block, as printed (indented by four), under a control: whose keys are
     * indented the same. */
    end = strstr(block, "s/K\n") + 4;
    snprintf(text, sizeof text, "%scontrol:\n    source: pad\n    sensor: plate\n"
                                "    setpoint: 60 degC\n%.*s",
             PLANT, (int)(end - block), block);
    tp_run_clear(&r);
    tp_scratch_write(s, "pasted.yaml", text, pasted);
    tp_run_tepid(s, check2, &r);
    if (r.status != 0 || strstr(r.err, "warning"))
        fail_msg("the pasted block:\n%s\ngave exit %d:\n%s", text, r.status, r.err);
    tp_check_contains("check", r.out, "pid control of 'pad'");
    tp_run_clear(&r);
    assert_int_equal(tp_run_status(s, warm2), 0);
}

/* Tune on an on-off controller: it runs, and its block switches the mode to pid and says the
 * band goes. */
static void test_tune_from_onoff(void **state)
{
    tp_scratch *s = tp_group_scratch();
    char cfg[TP_TEST_PATH];
    const char *tune[] = {"tune", cfg, NULL};
    tp_run_result r;
    (void)state;
    tp_scratch_write(s, "onoff.yaml",
                     PLANT "control: {source: pad, sensor: plate, mode: on-off, setpoint: 60 degC,"
                           " band: 2 K}\n",
                     cfg);
    tp_run_tepid(s, tune, &r);
    assert_int_equal(r.status, 0);
    tp_check_contains("the block", r.out, "in place of its mode, band and any gains):\n"
                                          "    mode: pid\n    kp: ");
    tp_run_clear(&r);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_tune_runs_without_gains_and_block_pastes),
        cmocka_unit_test(test_tune_from_onoff),
    };
    return cmocka_run_group_tests(tests, tp_scratch_group_setup, tp_scratch_group_teardown);
}
