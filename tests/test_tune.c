/* Tests of `tepid tune` through the binary: it runs on a pid controller without gains (it
 * identifies the plant in open loop), the gains it prints for a first-order plant match the
 * SIMC rule's closed form, and the block it prints pasted into control: gives a file every verb
 * accepts. */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>

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

/* Run tune with `extra` on `cfg`, read the block it prints, run warmup with those gains and
 * return warmup's reading overshoot (K). */
static double overshoot_of_printed_gains(const char *cfg, const char *const *extra)
{
    tp_scratch *s = tp_group_scratch();
    char json[TP_TEST_PATH], kp[64], ki[64], kd[64];
    const char *tune[24] = {"tune", cfg};
    const char *warm[] = {"warmup", cfg, "-q", "--json", json, "--set", "control.mode=pid",
                          "--set", kp, "--set", ki, "--set", kd, NULL};
    tp_run_result r;
    const char *block;
    double vkp, vki, vkd, over;
    int n = 2;
    cJSON *root;
    while (*extra)
        tune[n++] = *extra++;
    tune[n] = NULL;
    tp_run_tepid(s, tune, &r);
    if (r.status != 0)
        fail_msg("tune exited %d:\n%s", r.status, r.err);
    block = strstr(r.out, "    mode: pid\n");
    assert_non_null(block);
    assert_int_equal(sscanf(block, "    mode: pid\n    kp: %lf 1/K\n    ki: %lf 1/(K.s)\n"
                                   "    kd: %lf s/K\n", &vkp, &vki, &vkd), 3);
    tp_check_contains("tune", r.out, "chosen by --overshoot");
    tp_run_clear(&r);
    snprintf(kp, sizeof kp, "control.kp=%.4g 1/K", vkp);
    snprintf(ki, sizeof ki, "control.ki=%.4g 1/(K.s)", vki);
    snprintf(kd, sizeof kd, "control.kd=%.4g s/K", vkd);
    tp_scratch_path(s, "warm.json", json, sizeof json);
    assert_int_equal(tp_run_status(s, warm), 0);
    root = tp_read_json(json);
    over = cJSON_GetObjectItem(root, "overshoot_reading_K")->valuedouble;
    assert_true(isfinite(cJSON_GetObjectItem(root, "time_to_setpoint_s")->valuedouble));
    cJSON_Delete(root);
    return over;
}

/* Issue 17 section 4: the gains tune --overshoot 2K prints, pasted and run through warmup,
 * overshoot at most 2 K (the limit itself is the reference: common practice, no source, that
 * a print bed should overshoot by a few kelvin at most). The demo's own gains overshoot 5.3 K
 * (docs/sizing.md), so the search has work to do. */
static void test_tune_overshoot_gains_meet_the_limit_on_the_demo(void **state)
{
    const char *extra[] = {"--overshoot", "2K", NULL};
    double over = overshoot_of_printed_gains(TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml",
                                             extra);
    (void)state;
    /* The printed gains are rounded to 4 digits: 0.05 K of slack. */
    assert_true(over <= 2.0 + 0.05);
    assert_true(over > 0.5); /* the fastest within the limit uses most of it */
}

static void test_tune_overshoot_gains_meet_the_limit_on_a_hotplate(void **state)
{
    const char *extra[] = {"--overshoot", "2K", "--rule", "imc", NULL};
    double over = overshoot_of_printed_gains(TP_SOURCE_DIR "/configs/lab-hotplate-230v.yaml",
                                             extra);
    (void)state;
    assert_true(over <= 2.0 + 0.05);
}

/* No parameter meets the limit when no run reaches the setpoint within run.duration: exit 1,
 * the range searched and the reason named. */
static void test_tune_overshoot_says_when_nothing_meets(void **state)
{
    tp_scratch *s = tp_group_scratch();
    const char *args[] = {"tune", TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml", "-q",
                          "--overshoot", "2K", "--set", "run.duration=3 min", NULL};
    tp_run_result r;
    (void)state;
    tp_run_tepid(s, args, &r);
    assert_int_equal(r.status, 1);
    tp_check_contains("tune", r.err, "--overshoot: no tau_c from");
    tp_check_contains("tune", r.err, "keeps the overshoot within 2.00 K");
    tp_check_contains("tune", r.err, "no run reached the setpoint");
    tp_run_clear(&r);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_tune_runs_without_gains_and_block_pastes),
        cmocka_unit_test(test_tune_from_onoff),
        cmocka_unit_test(test_tune_overshoot_gains_meet_the_limit_on_the_demo),
        cmocka_unit_test(test_tune_overshoot_gains_meet_the_limit_on_a_hotplate),
        cmocka_unit_test(test_tune_overshoot_says_when_nothing_meets),
    };
    return cmocka_run_group_tests(tests, tp_scratch_group_setup, tp_scratch_group_teardown);
}
