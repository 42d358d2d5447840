/* Tests of the warm-up answers: heater electrics (tempco, wiring), PID behaviour (no steady
 * error, anti-windup), metrics against closed forms, the plot output through the command line,
 * and the tuning rules against their published formulas. */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "assemble.h"
#include "config.h"
#include "doc.h"
#include "history.h"
#include "integrate.h"
#include "network.h"
#include "results.h"
#include "steady.h"
#include "tp_test.h"
#include "tune.h"
#include "warmup.h"

#define KELVIN 273.15

/* Assemble a network from YAML text; fails the test on any error. */
static tp_network *build(const char *yaml)
{
    tp_diag d;
    tp_doc *doc = NULL;
    tp_desc desc;
    tp_network *net = NULL;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_doc_load_text("test.yaml", yaml, strlen(yaml), &doc, &d), TP_OK);
    assert_int_equal(tp_config_read(doc, &desc, &d), TP_OK);
    assert_int_equal(tp_assemble(&desc, doc, &d, &net), TP_OK);
    tp_desc_clear(&desc);
    tp_doc_destroy(&doc);
    return net;
}

/* ---- heater electrics --------------------------------------------------------------------- */

static const char *copper_heater =
    "network:\n"
    "  nodes:\n"
    "    - {id: plate, capacity: 800 J/K, initial: 20 degC}\n"
    "    - {id: room, fixed: 20 degC}\n"
    "  links:\n"
    "    - {between: [plate, room], conductance: 1 W/K}\n"
    "  sources:\n"
    "    - {id: trace, node: plate, supply: 24 V, resistance: 2.4 ohm, tempco: 0.00393 1/K,"
    " reference: 20 degC}\n";

static void test_tempco_cold_start_and_hot_fraction(void **state)
{
    tp_network *net = build(copper_heater);
    double t[2], p_cold, p_hot;
    (void)state;
    /* Hand calculation: cold (20 degC) R = 2.4 ohm, I = 24/2.4 = 10 A, P = 24^2/2.4 = 240 W. */
    t[0] = 20 + KELVIN;
    t[1] = 20 + KELVIN;
    p_cold = tp_network_source_power(&net->sources[0], t, 1.0, NULL);
    assert_true(fabs(p_cold - 240.0) < 1e-9);
    assert_true(fabs(tp_network_current(net, t) - 10.0) < 1e-12);
    /* At 100 degC an annealed-copper trace (alpha20 = 0.00393 1/K, IEC 60028; from memory) has
     * R = 2.4 (1 + 0.00393 * 80) = 3.15456 ohm: P = 576 / 3.15456 = 182.5928 W, so it loses
     * 1 - 1/1.3144 = 23.92 % of its cold power (hand calculation). */
    t[0] = 100 + KELVIN;
    p_hot = tp_network_source_power(&net->sources[0], t, 1.0, NULL);
    assert_true(fabs(p_hot - 576.0 / 3.15456) < 1e-9);
    assert_true(fabs((1.0 - p_hot / p_cold) - (1.0 - 1.0 / 1.3144)) < 1e-12);
    tp_network_destroy(&net);
}

static void test_supply_resistance_divides_voltage(void **state)
{
    tp_network *net = build(copper_heater);
    double t[2] = {20 + KELVIN, 20 + KELVIN}, wire, p;
    (void)state;
    net->sources[0].r_series = 0.1;
    /* Hand calculation: I = 24 / (2.4 + 0.1) = 9.6 A; heater 9.6^2 * 2.4 = 221.184 W; wiring
     * 9.6^2 * 0.1 = 9.216 W; together V I = 230.4 W. */
    p = tp_network_source_power(&net->sources[0], t, 1.0, &wire);
    assert_true(fabs(p - 221.184) < 1e-9);
    assert_true(fabs(wire - 9.216) < 1e-9);
    assert_true(fabs(p + wire - 24.0 * 9.6) < 1e-9);
    tp_network_destroy(&net);
}

/* ---- PID ------------------------------------------------------------------------------------ */

/* A single node C = 500 J/K losing G = 1 W/K to a 20 degC room, a 100 W heater under PID. */
static const char *pid_plant =
    "network:\n"
    "  nodes:\n"
    "    - {id: plate, capacity: 500 J/K, initial: 20 degC}\n"
    "    - {id: room, fixed: 20 degC}\n"
    "  links:\n"
    "    - {between: [plate, room], conductance: 1 W/K}\n"
    "  sources:\n"
    "    - {id: pad, node: plate, power: 100 W}\n"
    "control: {source: pad, sensor: plate, mode: pid, setpoint: 60 degC, period: 1 s,"
    " kp: 0.05 1/K, ki: 0.0005 1/(K.s), kd: 0 s/K}\n"
    "run: {duration: 4 h, step: 10 s}\n";

static void run_history(tp_network *net, tp_history *h)
{
    tp_integrate_opts o;
    tp_integrate_stats st;
    tp_diag d;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_history_init(h, net), TP_OK);
    tp_integrate_defaults(net, &o);
    o.out = tp_history_record;
    o.user = h;
    assert_int_equal(tp_integrate(net, &o, &st, &d), TP_OK);
}

static void test_pid_no_steady_state_error(void **state)
{
    tp_network *net = build(pid_plant);
    tp_history h;
    (void)state;
    run_history(net, &h);
    /* A loop with integral action has no steady-state error for a constant load (a type-1
     * loop; Seborg, Edgar & Mellichamp, Process Dynamics and Control, 2nd ed., Ch. 11; from
     * memory). The holding duty is (60 - 20) K * 1 W/K / 100 W = 0.4 (hand calculation). */
    assert_true(fabs(h.reading[h.n - 1] - (60 + KELVIN)) < 1e-3);
    assert_true(fabs(h.duty[h.n - 1] - 0.4) < 1e-4);
    tp_history_clear(&h);
    tp_network_destroy(&net);
}

static void test_pid_antiwindup_bounds_overshoot(void **state)
{
    tp_network *clamped = build(pid_plant), *wound = build(pid_plant);
    tp_history a, b;
    double over_a, over_b;
    (void)state;
    /* A long saturated warm-up (100 W into 500 J/K with 40 K to go takes minutes at full duty)
     * with an aggressive integral gain: without clamping, the integral grows while the output
     * is saturated and must be unwound by overshooting (classic integrator windup; Astrom &
     * Hagglund, PID Controllers, 2nd ed., Sec. 3.5; from memory). */
    clamped->control.ki = wound->control.ki = 0.005;
    wound->control.unclamped = 1;
    run_history(clamped, &a);
    run_history(wound, &b);
    over_a = tp_series_max(a.reading, a.n, 1) - (60 + KELVIN);
    over_b = tp_series_max(b.reading, b.n, 1) - (60 + KELVIN);
    assert_true(over_a < 0.5 * over_b); /* clamping at least halves the overshoot */
    assert_true(over_a < 5.0);          /* and keeps it to a few kelvin */
    tp_history_clear(&a);
    tp_history_clear(&b);
    tp_network_destroy(&clamped);
    tp_network_destroy(&wound);
}

/* control.derivative_filter reaches the controller in seconds: 0.1 min is 6 s (the recurrence
 * itself is checked in test_control). */
static void test_derivative_filter_from_config(void **state)
{
    static const char kd0[] = "kd: 0 s/K}";
    char yaml[2048];
    const char *cut = strstr(pid_plant, kd0);
    tp_network *net, *plain = build(pid_plant);
    (void)state;
    assert_non_null(cut);
    snprintf(yaml, sizeof yaml, "%.*skd: 0.2 s/K, derivative_filter: 0.1 min}%s",
             (int)(cut - pid_plant), pid_plant, cut + strlen(kd0));
    net = build(yaml);
    tp_check_abs("Tf", net->control.d_filter, 6.0, 1e-12);
    tp_check_abs("kd", net->control.kd, 0.2, 1e-12);
    assert_true(plain->control.d_filter == 0.0); /* the default: no filter */
    tp_network_destroy(&net);
    tp_network_destroy(&plain);
}

/* ---- metrics against closed forms ------------------------------------------------------------ */

static void test_time_to_level_first_order(void **state)
{
    /* Full power until the setpoint: T(t) = Ta + (P/G)(1 - exp(-t/tau)), tau = C/G = 500 s, so
     * the 60 degC setpoint (40 K of a 100 K rise) is reached at t = -500 ln(1 - 0.4) =
     * 255.4128 s (closed form of the lumped first-order response, Incropera 7th ed. Sec. 5.2;
     * from memory). */
    static const char *yaml =
        "network:\n"
        "  nodes:\n"
        "    - {id: plate, capacity: 500 J/K, initial: 20 degC}\n"
        "    - {id: room, fixed: 20 degC}\n"
        "  links:\n"
        "    - {between: [plate, room], conductance: 1 W/K}\n"
        "  sources:\n"
        "    - {id: pad, node: plate, power: 100 W}\n"
        "control: {source: pad, sensor: plate, mode: on-off, setpoint: 60 degC, band: 2 K,"
        " period: 0.01 s}\n"
        "run: {duration: 10 min, step: 1 s, tolerance: 1e-9}\n";
    tp_network *net = build(yaml);
    tp_warmup w;
    tp_diag d;
    (void)state;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_warmup_run(net, &w, &d), TP_OK);
    /* Linear interpolation over 1 s of a curve with T'' ~ 1e-4 K/s^2 errs by < 1e-4 s. */
    assert_true(fabs(w.metrics.t_setpoint - (-500.0 * log(0.6))) < 1e-3);
    /* The holding power of a single node is G (T - Ta) = 40 W (hand calculation). */
    assert_true(fabs(w.metrics.hold_power - 40.0) < 1e-6);
    tp_warmup_clear(&w);
    tp_network_destroy(&net);
}

static void test_sensor_lag_behind_ramp_is_time_constant(void **state)
{
    /* A plate heated at constant power without losses ramps; a first-order sensor (C_s/G_s =
     * 0.2 J/K / 0.01 W/K = 20 s) follows a ramp with a constant delay equal to its time
     * constant (textbook result: Doebelin, Measurement Systems, 5th ed., Sec. 3.3 ramp
     * response of a first-order instrument; from memory). */
    static const char *yaml =
        "network:\n"
        "  nodes:\n"
        "    - {id: plate, capacity: 1000 J/K, initial: 20 degC}\n"
        "    - {id: sensor, capacity: 0.2 J/K, initial: 20 degC}\n"
        "  links:\n"
        "    - {between: [plate, sensor], conductance: 0.01 W/K}\n"
        "  sources:\n"
        "    - {id: pad, node: plate, power: 100 W}\n"
        "run: {duration: 10 min, step: 1 s, tolerance: 1e-9}\n";
    tp_network *net;
    tp_history h;
    double level = 60 + KELVIN, tp_, ts;
    int cp, cs;
    (void)state;
    net = build(yaml);
    run_history(net, &h);
    cp = tp_history_column(&h, tp_network_find_node(net, "plate"));
    cs = tp_history_column(&h, tp_network_find_node(net, "sensor"));
    tp_ = tp_first_rise(h.t, h.temps + cp, h.n, h.n_out, level);
    ts = tp_first_rise(h.t, h.temps + cs, h.n, h.n_out, level);
    /* The start-up transient decays as exp(-t/20 s): negligible at the 400 s crossing. */
    assert_true(fabs((ts - tp_) - 20.0) < 0.01);
    tp_history_clear(&h);
    tp_network_destroy(&net);
}

static void test_settle_time_definition(void **state)
{
    /* A damped series entering a +-1 band around 10 for good at t = 3.5 (by construction). */
    double t[] = {0, 1, 2, 3, 4, 5, 6};
    double v[] = {0, 12, 9.5, 12, 11, 10.2, 10};
    (void)state;
    /* Last exit from the band: between t = 3 (12) and t = 4 (11): enters at 11 when v = 11,
     * i.e. exactly t = 4 (hand calculation with linear interpolation). */
    assert_true(fabs(tp_settle_time(t, v, 7, 1, 10.0, 1.0) - 4.0) < 1e-12);
    v[4] = 10.5;
    /* Now between 12 at t = 3 and 10.5 at t = 4: v = 11 at t = 3 + 1/1.5 = 3.6667. */
    assert_true(fabs(tp_settle_time(t, v, 7, 1, 10.0, 1.0) - (3.0 + 1.0 / 1.5)) < 1e-12);
    v[6] = 12;
    assert_true(isnan(tp_settle_time(t, v, 7, 1, 10.0, 1.0)));
}

/* ---- tuning rules ---------------------------------------------------------------------------- */

static void test_simc_formula(void **state)
{
    tp_fopdt m = {100.0, 500.0, 10.0, 0, 0, 0};
    tp_gains g;
    (void)state;
    /* SIMC PI (Skogestad, J. Process Control 13 (2003) 291, Eqs. (22)-(23)): Kc = tau / (K
     * (tau_c + theta)) = 500 / (100 * 20) = 0.25; tau_I = min(tau, 4 (tau_c + theta)) = 80 s;
     * ki = Kc / tau_I = 0.003125 (hand calculation). */
    tp_tune_simc(&m, 10.0, &g);
    assert_true(fabs(g.kp - 0.25) < 1e-12);
    assert_true(fabs(g.ki - 0.003125) < 1e-12);
    assert_true(g.kd == 0.0);
}

static void test_imc_formula(void **state)
{
    tp_fopdt m = {100.0, 500.0, 10.0, 0, 0, 0};
    tp_gains g;
    (void)state;
    /* IMC-PID with a first-order Pade delay (Rivera, Morari & Skogestad 1986, Table 1; from
     * memory): K Kc = (tau + theta/2)/(lambda + theta/2) = 505/25, so Kc = 0.202;
     * tau_I = 505 s; tau_D = 500*10/1010 = 4.950495 s (hand calculation). */
    tp_tune_imc(&m, 20.0, &g);
    assert_true(fabs(g.kp - 0.202) < 1e-12);
    assert_true(fabs(g.ki - 0.202 / 505.0) < 1e-12);
    assert_true(fabs(g.kd - 0.202 * 5000.0 / 1010.0) < 1e-12);
}

static void test_two_point_recovers_fopdt(void **state)
{
    /* For y = 1 - exp(-(t - theta)/tau): t28 = theta + tau ln(1/0.717), t63 = theta + tau
     * ln(1/0.368) (closed form). The method's 1.5 factor (Smith 1972) is a rounding of
     * 1/(ln(1/0.368) - ln(1/0.717)) = 1.4986, so tau comes back within 0.2 %. */
    double tau = 100.0, theta = 5.0, t28, t63, ft, fd;
    (void)state;
    t28 = theta + tau * log(1.0 / 0.717);
    t63 = theta + tau * log(1.0 / 0.368);
    tp_tune_two_point(t28, t63, &ft, &fd);
    assert_true(fabs(ft - tau) / tau < 2e-3);
    assert_true(fabs(fd - theta) < 0.3);
}

static void test_identify_first_order_plant(void **state)
{
    /* The reading is the node itself: a pure first-order plant, tau = C/G = 500 s, no dead
     * time, gain = P/G = 100 K per unit duty (closed form). */
    tp_network *net = build(pid_plant);
    tp_fopdt m;
    tp_diag d;
    (void)state;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_tune_identify(net, 0.1, &m, &d), TP_OK);
    assert_true(fabs(m.gain - 100.0) < 1e-6);
    assert_true(fabs(m.tau - 500.0) / 500.0 < 5e-3);
    assert_true(m.dead < 2.0);
    tp_network_destroy(&net);
}

/* ---- the figure through the command line ---------------------------------------------------- */

static int has_prefix(const char *path, const unsigned char *magic, size_t n)
{
    unsigned char buf[16];
    FILE *fp = fopen(path, "rb");
    size_t got;
    if (!fp)
        return 0;
    got = fread(buf, 1, n, fp);
    fclose(fp);
    return got == n && memcmp(buf, magic, n) == 0;
}

static void test_plot_png_and_failures(void **state)
{
    const tp_scratch *sc = tp_group_scratch();
    const char *config = TP_SOURCE_DIR "/configs/raw-five-node.yaml";
    char path[TP_TEST_PATH], csv[TP_TEST_PATH];
    const char *plot_args[] = {"warmup", config, "-q", "--plot", path, NULL};
    const char *csv_plot_args[] = {"warmup", config, "-q", "--csv", csv, "--plot", path, NULL};
    /* PNG signature, ISO/IEC 15948 Sec. 5.2. */
    static const unsigned char png[8] = {0x89, 'P', 'N', 'G', 0x0d, 0x0a, 0x1a, 0x0a};
    struct stat sb;
    (void)state;
    tp_scratch_path(sc, "run.png", path, sizeof path);
    assert_int_equal(tp_run_status(sc, plot_args), 0);
    assert_true(has_prefix(path, png, 8));
    /* A plot into a directory that does not exist fails (exit 1) and leaves nothing. */
    tp_scratch_path(sc, "missing/run.png", path, sizeof path);
    assert_int_equal(tp_run_status(sc, plot_args), 1);
    assert_int_not_equal(stat(path, &sb), 0);
    /* An unknown format is a usage error (exit 2) and writes nothing, not even the CSV. */
    tp_scratch_path(sc, "run.bmp", path, sizeof path);
    tp_scratch_path(sc, "run.csv", csv, sizeof csv);
    assert_int_equal(tp_run_status(sc, csv_plot_args), 2);
    assert_int_not_equal(stat(path, &sb), 0);
    assert_int_not_equal(stat(csv, &sb), 0);
}

/* Open a demo config as a network (assembled, not run). */
static void open_demo(const char *name, tp_yaml_net *y)
{
    char path[TP_TEST_PATH], *text;
    snprintf(path, sizeof path, "%s/configs/%s", TP_SOURCE_DIR, name);
    text = tp_read_file(path);
    assert_non_null(text);
    assert_int_equal(tp_yaml_net_open(y, text), TP_OK);
    free(text);
}

/* One curve for the sensor and the reading exactly when the reading is the sensor node's
 * temperature (docs/control.md: reading = sensor temperature + offset, without a thermistor):
 * the 230 V demo (no thermistor, no offset) draws them as one; an offset, a thermistor (the 24 V
 * demo) or no controller keep them apart. */
static void test_reading_shares_the_sensor_curve_only_when_equal(void **state)
{
    tp_yaml_net y;
    tp_history h;
    (void)state;
    open_demo("lab-hotplate-230v.yaml", &y);
    assert_int_equal(tp_history_init(&h, y.net), TP_OK);
    assert_true(tp_warmup_reading_column(y.net, &h) >= 0);
    assert_int_equal(tp_warmup_reading_column(y.net, &h),
                     tp_history_column(&h, y.net->control.sensor));
    y.net->control.reading.offset = 1.0; /* K */
    assert_int_equal(tp_warmup_reading_column(y.net, &h), -1);
    y.net->control.reading.offset = 0.0;
    y.net->has_control = 0;
    assert_int_equal(tp_warmup_reading_column(y.net, &h), -1);
    tp_history_clear(&h);
    tp_yaml_net_close(&y);
    open_demo("workshop-bed-24v.yaml", &y);
    assert_int_equal(tp_history_init(&h, y.net), TP_OK);
    assert_int_equal(tp_warmup_reading_column(y.net, &h), -1);
    tp_history_clear(&h);
    tp_yaml_net_close(&y);
}

/* The chart marks the times the metrics report, by their fields, in minutes (closed form:
 * 440 s = 7.333... min, 671 s = 11.183... min), labelled as warmup writes times; a time that
 * does not exist (NaN: not reached) gets no mark. */
static void test_marks_follow_the_metrics(void **state)
{
    tp_metrics m;
    tp_plot_vline marks[TP_WARMUP_MARKS];
    char text[TP_WARMUP_MARKS][TP_WARMUP_MARK_TEXT];
    (void)state;
    memset(&m, 0, sizeof m);
    m.t_setpoint = 440.0;
    m.t_surface_ready = 671.0;
    assert_int_equal(tp_warmup_marks(&m, marks, text), 2);
    tp_check_abs("setpoint mark", marks[0].x, 440.0 / 60.0, 1e-12);
    tp_check_abs("ready mark", marks[1].x, 671.0 / 60.0, 1e-12);
    assert_string_equal(marks[0].label, "reading at setpoint 7 min 20 s");
    assert_string_equal(marks[1].label, "surface ready 11 min 11 s");
    m.t_setpoint = (double)NAN;
    assert_int_equal(tp_warmup_marks(&m, marks, text), 1);
    assert_string_equal(marks[0].label, "surface ready 11 min 11 s");
    m.t_surface_ready = (double)NAN;
    assert_int_equal(tp_warmup_marks(&m, marks, text), 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_reading_shares_the_sensor_curve_only_when_equal),
        cmocka_unit_test(test_marks_follow_the_metrics),
        cmocka_unit_test(test_tempco_cold_start_and_hot_fraction),
        cmocka_unit_test(test_supply_resistance_divides_voltage),
        cmocka_unit_test(test_pid_no_steady_state_error),
        cmocka_unit_test(test_pid_antiwindup_bounds_overshoot),
        cmocka_unit_test(test_derivative_filter_from_config),
        cmocka_unit_test(test_time_to_level_first_order),
        cmocka_unit_test(test_sensor_lag_behind_ramp_is_time_constant),
        cmocka_unit_test(test_settle_time_definition),
        cmocka_unit_test(test_simc_formula),
        cmocka_unit_test(test_imc_formula),
        cmocka_unit_test(test_two_point_recovers_fopdt),
        cmocka_unit_test(test_identify_first_order_plant),
        cmocka_unit_test(test_plot_png_and_failures),
    };
    return cmocka_run_group_tests(tests, tp_scratch_group_setup, tp_scratch_group_teardown);
}
