/* Tests of setpoint schedules (control.schedule) and their report (study/program.c): the
 * setpoint at each controller tick by hand, the heater switched off where an off segment
 * begins, a ramp faster than the heater against the one-node energy balance, and the steady
 * ramp-following error of P and PI loops against their closed forms. */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "integrate.h"
#include "program.h"
#include "schedule.h"
#include "tp_test.h"
#include "warmup.h"

#define KELVIN TP_TEST_KELVIN

/* A one-node raw plate: capacity C, conductance G to a room at 20 degC, a constant-power pad
 * of P, with `control` (a YAML control section's inside). */
static void plate(tp_yaml_net *y, double c, double g, double p, const char *control)
{
    char text[2048];
    int n = snprintf(text, sizeof text,
                     "network:\n"
                     "  nodes:\n"
                     "    - {id: plate, capacity: %g J/K, initial: 20 degC}\n"
                     "    - {id: room, fixed: 20 degC}\n"
                     "  links:\n"
                     "    - {between: [plate, room], conductance: %g W/K}\n"
                     "  sources:\n"
                     "    - {id: pad, node: plate, power: %g W}\n"
                     "run: {step: 1 s}\n"
                     "control: {source: pad, sensor: plate, %s}\n",
                     c, g, p, control);
    assert_true(n > 0 && (size_t)n < sizeof text);
    if (tp_yaml_net_open(y, text) != TP_OK)
        print_error("%s", y->diag.log);
    assert_non_null(y->net);
}

/* Run the warm-up of y following its schedule into w and its report into prog. */
static void run(tp_yaml_net *y, tp_schedule *plan, tp_warmup *w, tp_program *prog)
{
    tp_diag d;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_program_plan(&y->desc, y->net, plan), 0);
    assert_int_equal(tp_warmup_run_schedule(y->net, &y->desc.run, plan, w, &d), TP_OK);
    tp_program_compute(&w->history, plan, NULL, 0, prog);
}

/* The row of the history at time t (outputs every second). */
static long row_at(const tp_history *h, double t)
{
    long i;
    for (i = 0; i < h->n; i++)
        if (fabs(h->t[i] - t) < 1e-9)
            return i;
    fail_msg("no row at t = %g s", t);
    return -1;
}

/* ---- the setpoint by hand ----------------------------------------------------------------- */

/* docs/control.md: a ramp moves from the current setpoint (the reading at t = 0 for the first
 * segment) at its rate; a step has no duration; a hold keeps the setpoint; off has none; after
 * the schedule the last setpoint stays. Hand calculation, from 20 degC: ramp to 100 degC at
 * 2 K/s lasts 80 / 2 = 40 s (setpoint 20 + 2 t); hold 31 s to t = 71 s; step to 60 degC at
 * 71 s; off 20 s to 91 s; ramp to 80 degC at 1 K/s from the last setpoint 60 degC lasts 20 s,
 * to 111 s; then 80 degC stays. */
static const char *hand_schedule =
    "mode: pid, kp: 0.05 1/K, period: 2 s, schedule: [{to: 100 degC, ramp: 2 K/s}, "
    "{hold: 31 s}, {to: 60 degC}, {off: 20 s}, {to: 80 degC, ramp: 60 K/min}]";

static double hand_setpoint(double t) /* degC, NaN while off */
{
    if (t < 40)
        return 20 + 2 * t;
    if (t < 71)
        return 100;
    if (t < 91)
        return (double)NAN;
    if (t < 111)
        return 60 + (t - 91);
    return 80;
}

static void test_program_plan_by_hand(void **state)
{
    tp_yaml_net y;
    tp_schedule plan;
    int k;
    (void)state;
    plate(&y, 600, 1.5, 200, hand_schedule);
    assert_int_equal(tp_program_plan(&y.desc, y.net, &plan), 0);
    assert_int_equal(plan.n, 5);
    tp_check_abs("schedule length", plan.t_end, 111.0, 1e-12);
    assert_int_equal(plan.part[2].kind, TP_SCHEDULE_STEP);
    tp_check_abs("step has no duration", plan.part[2].t1 - plan.part[2].t0, 0.0, 0.0);
    /* Without run.duration the run lasts the schedule (docs/control.md). */
    tp_check_abs("run.duration", y.desc.run.duration, 111.0, 1e-9);
    for (k = 0; k <= 130; k++) {
        double want = hand_setpoint(k), got = tp_schedule_at(&plan, k, NULL);
        char what[64];
        snprintf(what, sizeof what, "setpoint at %d s", k);
        if (isnan(want))
            assert_true(isnan(got));
        else
            tp_check_abs(what, got - KELVIN, want, 1e-9);
    }
    tp_yaml_net_close(&y);
}

/* The setpoint the controller used at each tick (every 2 s) is the hand value, in the CSV's
 * setpoint column (the history); the heater is off from the off segment's start at 71 s, which
 * falls between two ticks (70 and 72 s): the switch-off is an event of its own, not left to
 * the next tick. */
static void test_program_ticks_and_off_event(void **state)
{
    tp_yaml_net y;
    tp_schedule plan;
    tp_warmup w;
    tp_program prog;
    long i;
    (void)state;
    plate(&y, 600, 1.5, 200, hand_schedule);
    run(&y, &plan, &w, &prog);
    for (i = 0; i < w.history.n; i++) {
        double t = w.history.t[i], want = hand_setpoint(t);
        if (isnan(want)) {
            assert_true(isnan(w.history.setpoint[i]));
            tp_check_abs("duty while off", w.history.duty[i], 0.0, 0.0);
        } else {
            tp_check_abs("setpoint in the history", w.history.setpoint[i] - KELVIN, want, 1e-9);
        }
    }
    /* Just before 71 s the heater holds 100 degC (duty above 0); at 71 s it is off. */
    assert_true(w.history.duty[row_at(&w.history, 70.0)] > 0.0);
    tp_check_abs("duty at the off segment's start", w.history.duty[row_at(&w.history, 71.0)],
                 0.0, 0.0);
    tp_warmup_clear(&w);
    tp_yaml_net_close(&y);
}

/* ---- a ramp faster than the heater -------------------------------------------------------- */

/* One node, C dT/dt = P - G (T - Tinf) at full duty (lumped capacitance, Incropera 7th ed.
 * Eq. 5.2 with a heat input): a ramp of 1 K/s asks far more than (200 - 1.5 x 0)/600 = 0.33 K/s,
 * so the loop sits at the duty limit and the plate rises at (P - G (T - Tinf)) / C. The report
 * says the segment is limited and gives that rate at the temperature it names. */
static void test_program_ramp_faster_than_heater(void **state)
{
    const double c = 600, g = 1.5, p = 200;
    tp_yaml_net y;
    tp_schedule plan;
    tp_warmup w;
    tp_program prog;
    double tinf = 20.0 + KELVIN, want;
    (void)state;
    plate(&y, c, g, p, "mode: pid, kp: 1 1/K, period: 0.5 s, "
                       "schedule: [{to: 150 degC, ramp: 1 K/s}, {hold: 60 s}]");
    run(&y, &plan, &w, &prog);
    assert_true(prog.seg[0].limited);
    assert_true(prog.seg[0].at_limit > 0.95);
    want = (p - g * (prog.seg[0].follow_at - tinf)) / c;
    tp_check_rel("rate the plate follows at the limit", prog.seg[0].follow_rate, want, 1e-3);
    /* The achieved mean rate is far below the requested 1 K/s. */
    assert_true(prog.seg[0].rate_reading < 0.4);
    tp_warmup_clear(&w);
    tp_yaml_net_close(&y);
}

/* ---- ramp-following error of P and PI loops ----------------------------------------------- */

/* A lossless node (G = 0) is an integrating first-order plant, C dT/dt = P u. Closed form
 * (hand calculation): with u = kp e and a ramp setpoint r = r0 + a t, C a = P kp e in the
 * steady ramp, so e = a C / (P kp) = a tau_cl with tau_cl = C / (P kp), the closed loop's time
 * constant (C dT/dt = P kp (r - T)). Sampled with a zero-order hold the same balance holds at
 * the ticks: T rises a h per tick of length h, which needs P kp e h / C = a h. Here a =
 * 0.05 K/s, C = 600 J/K, P = 100 W, kp = 0.1 1/K: tau_cl = 60 s and e = 3 K; after 20 tau_cl
 * the transient is e^-20 of its start. */
static void test_program_p_loop_ramp_error(void **state)
{
    tp_yaml_net y;
    tp_schedule plan;
    tp_warmup w;
    tp_program prog;
    long i;
    (void)state;
    plate(&y, 600, 0.0, 100, "mode: pid, kp: 0.1 1/K, period: 0.1 s, "
                             "schedule: [{to: 80 degC, ramp: 3 K/min}]");
    run(&y, &plan, &w, &prog);
    tp_check_abs("ramp length", plan.t_end, 1200.0, 1e-9);
    i = row_at(&w.history, 1200.0 - 1.0);
    tp_check_abs("P-only ramp error a tau_cl", w.history.setpoint[i] - w.history.reading[i], 3.0,
                 0.01);
    tp_warmup_clear(&w);
    tp_yaml_net_close(&y);
}

/* The same plant under PI: the loop has two integrators (plant and controller), so the steady
 * error to a ramp is zero (final-value theorem on E(s) = R(s) / (1 + L(s)) with R = a / s^2 and
 * L = P (kp s + ki) / (C s^2)). In samples: u must stay at C a / P, so I_k = I_(k-1) + ki h e_k
 * stays, which needs e = 0. With a loss G > 0 (type-1 loop) the steady error is a / Kv with
 * Kv = lim s L(s) = P ki / G: e = a G / (P ki) = 0.05 x 0.5 / (100 x 0.002) = 0.125 K. */
static void test_program_pi_loop_ramp_error(void **state)
{
    static const struct {
        double g, want;
    } cases[] = {{0.0, 0.0}, {0.5, 0.125}};
    size_t k;
    (void)state;
    for (k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        tp_yaml_net y;
        tp_schedule plan;
        tp_warmup w;
        tp_program prog;
        long i;
        plate(&y, 600, cases[k].g, 100, "mode: pid, kp: 0.1 1/K, ki: 0.002 1/(K.s), "
                                         "period: 0.1 s, schedule: [{to: 95 degC, ramp: 3 K/min}]");
        run(&y, &plan, &w, &prog);
        i = row_at(&w.history, 1499.0);
        tp_check_abs("PI ramp error", w.history.setpoint[i] - w.history.reading[i], cases[k].want,
                     0.01);
        tp_warmup_clear(&w);
        tp_yaml_net_close(&y);
    }
}

/* ---- a one-step schedule is the fixed setpoint -------------------------------------------- */

/* control.schedule: [{to: 80 degC}] and control.setpoint: 80 degC describe the same run
 * (docs/control.md): the same controller decisions, so the same history to rounding. */
static void test_program_step_is_fixed_setpoint(void **state)
{
    tp_yaml_net a, b;
    tp_schedule plan;
    tp_warmup wa, wb;
    tp_diag d;
    long i;
    (void)state;
    tp_diag_init(&d, stderr);
    plate(&a, 600, 1.5, 200, "mode: pid, kp: 0.1 1/K, ki: 0.001 1/(K.s), setpoint: 80 degC");
    plate(&b, 600, 1.5, 200, "mode: pid, kp: 0.1 1/K, ki: 0.001 1/(K.s), "
                             "schedule: [{to: 80 degC}]");
    a.desc.run.duration = b.desc.run.duration = 600.0;
    assert_int_equal(tp_warmup_run(a.net, &a.desc.run, &wa, &d), TP_OK);
    assert_int_equal(tp_program_plan(&b.desc, b.net, &plan), 0);
    assert_int_equal(tp_warmup_run_schedule(b.net, &b.desc.run, &plan, &wb, &d), TP_OK);
    assert_int_equal(wa.history.n, wb.history.n);
    assert_int_equal(wa.stats.steps, wb.stats.steps);
    for (i = 0; i < wa.history.n; i++)
        tp_check_abs("reading", wb.history.reading[i], wa.history.reading[i], 1e-12);
    tp_warmup_clear(&wa);
    tp_warmup_clear(&wb);
    tp_yaml_net_close(&a);
    tp_yaml_net_close(&b);
}

/* ---- a log of a scheduled run is fitted ---------------------------------------------------- */

/* A closed-loop fit (a log of the reading only, no duty column) runs the configured controller,
 * which follows the schedule: the log of a scheduled run of a 600 J/K plate, fitted from a
 * 450 J/K start, gives back 600 J/K (the log is the model's own, so the exact value is known;
 * docs/fit.md). Without the schedule the model would hold the highest setpoint from t = 0 and
 * miss the ramps. */
static void test_program_fit_scheduled_log(void **state)
{
    static const char *yaml =
        "network:\n"
        "  nodes:\n"
        "    - {id: plate, capacity: 600 J/K, initial: 20 degC}\n"
        "    - {id: room, fixed: 20 degC}\n"
        "  links:\n"
        "    - {between: [plate, room], conductance: 1.5 W/K}\n"
        "  sources:\n"
        "    - {id: pad, node: plate, power: 200 W}\n"
        "run: {step: 1 s}\n"
        "control: {source: pad, sensor: plate, mode: pid, kp: 0.2 1/K, ki: 0.002 1/(K.s),\n"
        "  schedule: [{to: 80 degC, ramp: 0.2 K/s}, {hold: 3 min}, {to: 60 degC}, {hold: 2 min},\n"
        "             {off: 2 min}]}\n";
    char cfg[TP_TEST_PATH], full[TP_TEST_PATH], logp[TP_TEST_PATH], out[TP_TEST_PATH];
    const char *warm[] = {"warmup", cfg, "--csv", full, "-q", NULL};
    const char *fit[] = {"fit", cfg, "--log", logp, "--free",
                         "network.nodes.plate.capacity=300J/K:1200J/K", "--set",
                         "network.nodes.plate.capacity=450 J/K", "--json", out, "-q", NULL};
    tp_scratch s;
    char *text, *line, *save = NULL;
    FILE *fp;
    cJSON *root, *p;
    (void)state;
    tp_scratch_create(&s);
    tp_scratch_write(&s, "sched.yaml", yaml, cfg);
    tp_scratch_path(&s, "full.csv", full, sizeof full);
    tp_scratch_path(&s, "log.csv", logp, sizeof logp);
    tp_scratch_path(&s, "fit.json", out, sizeof out);
    assert_int_equal(tp_run_status(&s, warm), 0);
    /* Keep time_s and reading_C (columns 1 and 5: time_s, plate_C, pad_W, duty, reading_C). */
    text = tp_read_file(full);
    assert_non_null(text);
    fp = fopen(logp, "w");
    assert_non_null(fp);
    for (line = strtok_r(text, "\n", &save); line; line = strtok_r(NULL, "\n", &save)) {
        char *f[8], *c = line;
        int n = 0;
        f[n++] = c;
        for (; *c && n < 8; c++)
            if (*c == ',') {
                *c = '\0';
                f[n++] = c + 1;
            }
        assert_true(n >= 5);
        fprintf(fp, "%s,%s\n", f[0], f[4]);
    }
    assert_int_equal(fclose(fp), 0);
    free(text);
    assert_int_equal(tp_run_status(&s, fit), 0);
    root = tp_read_json(out);
    p = cJSON_GetArrayItem(cJSON_GetObjectItem(root, "parameters"), 0);
    tp_check_rel("fitted capacity", cJSON_GetObjectItem(p, "value")->valuedouble, 600.0, 1e-4);
    cJSON_Delete(root);
    tp_scratch_destroy(&s);
}

/* ---- time above a level ------------------------------------------------------------------- */

/* Hand calculation: v rises linearly 0 -> 10 over t = 0..10 and falls back 10 -> 0 over
 * 10..20; above 7.5 from t = 7.5 to 12.5, i.e. 5 s (the crossings lie between samples). */
static void test_program_time_above_by_hand(void **state)
{
    const double t[] = {0, 5, 10, 15, 20}, v[] = {0, 5, 10, 5, 0};
    (void)state;
    tp_check_abs("time above 7.5", tp_program_time_above(t, v, 5, 7.5), 5.0, 1e-12);
    tp_check_abs("time above 10", tp_program_time_above(t, v, 5, 10.0), 0.0, 1e-12);
    tp_check_abs("time above -1", tp_program_time_above(t, v, 5, -1.0), 20.0, 1e-12);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_program_plan_by_hand),
        cmocka_unit_test(test_program_ticks_and_off_event),
        cmocka_unit_test(test_program_ramp_faster_than_heater),
        cmocka_unit_test(test_program_p_loop_ramp_error),
        cmocka_unit_test(test_program_pi_loop_ramp_error),
        cmocka_unit_test(test_program_time_above_by_hand),
        cmocka_unit_test(test_program_fit_scheduled_log),
        cmocka_unit_test(test_program_step_is_fixed_setpoint),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
