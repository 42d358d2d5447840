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
#include "figure.h"
#include "history.h"
#include "integrate.h"
#include "metrics.h"
#include "network.h"
#include "series.h"
#include "steady.h"
#include "tp_test.h"
#include "tune.h"
#include "warmup.h"
#include "yamltree.h"

#define KELVIN 273.15

/* Assemble a network from YAML text; fails the test on any error. */
static tp_network *build(const char *yaml)
{
    tp_diag d;
    tp_yamltree *doc = NULL;
    tp_description desc;
    tp_network *net = NULL;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_yamltree_load_text("test.yaml", yaml, strlen(yaml), &doc, &d), TP_OK);
    assert_int_equal(tp_config_read(doc, &desc, &d), TP_OK);
    assert_int_equal(tp_assemble(&desc, doc, &d, &net), TP_OK);
    tp_config_clear(&desc);
    tp_yamltree_destroy(&doc);
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

/* `warmup --strict` exits 3 when the reading does not reach the setpoint within the run, and
 * still writes its outputs; without --strict the same run exits 0. Closed form as in
 * test_time_to_level_first_order: the 60 degC setpoint is reached at 255.4 s, so a 200 s run
 * misses it and a 300 s run does not. A file whose controller holds no setpoint has nothing
 * for --strict to check: exit 2. */
static void test_strict_exits_3_when_setpoint_not_reached(void **state)
{
    static const struct {
        const char *mode, *duration;
        int strict, status;
    } cases[] = {
        {"on-off", "200 s", 0, 0}, {"on-off", "200 s", 1, 3}, {"on-off", "300 s", 1, 0},
        {"full", "300 s", 1, 2},
    };
    tp_scratch sc;
    char text[1024], cfg[TP_TEST_PATH], out[TP_TEST_PATH];
    size_t i;
    (void)state;
    tp_scratch_create(&sc);
    tp_scratch_path(&sc, "w.json", out, sizeof out);
    for (i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        const char *args[] = {"warmup", cfg, "-q", "--json", out,
                              cases[i].strict ? "--strict" : NULL, NULL};
        tp_run_result r;
        snprintf(text, sizeof text,
                 "network:\n"
                 "  nodes:\n"
                 "    - {id: plate, capacity: 500 J/K, initial: 20 degC}\n"
                 "    - {id: room, fixed: 20 degC}\n"
                 "  links:\n"
                 "    - {between: [plate, room], conductance: 1 W/K}\n"
                 "  sources:\n"
                 "    - {id: pad, node: plate, power: 100 W}\n"
                 "control: {source: pad, sensor: plate, mode: %s, setpoint: 60 degC}\n"
                 "run: {duration: %s, step: 1 s}\n",
                 cases[i].mode, cases[i].duration);
        tp_scratch_write(&sc, "plate.yaml", text, cfg);
        remove(out);
        tp_run_tepid(&sc, args, &r);
        if (r.status != cases[i].status)
            print_error("case %zu: stderr %s\n", i, r.err);
        assert_int_equal(r.status, cases[i].status);
        if (cases[i].status == 3) {
            cJSON *root = tp_read_json(out);
            tp_check_contains("note", r.err, "--strict: the reading did not reach the setpoint");
            assert_true(cJSON_IsFalse(cJSON_GetObjectItemCaseSensitive(root, "reached")));
            cJSON_Delete(root);
        } else if (cases[i].status == 2) {
            tp_check_contains("refusal", r.err, "--strict checks that the reading reaches");
            assert_false(tp_file_exists(out));
        }
        tp_run_clear(&r);
    }
    tp_scratch_destroy(&sc);
}

/* `mode: off`: the controller holds the heater off, so the header names no setpoint and the
 * run draws no current (issue: the header said "off control ... at 60.0 degC" and the summary a
 * peak current of 5 A). The on-current of 24 V across 4.8 ohm would be 5 A (hand calculation);
 * the heater never switches on, so the peak current is 0 A. */
static void test_mode_off_draws_nothing(void **state)
{
    tp_scratch sc;
    char cfg[TP_TEST_PATH], out[TP_TEST_PATH];
    const char *args[] = {"warmup", cfg, "--json", out, NULL};
    tp_run_result r;
    cJSON *root;
    const cJSON *v;
    (void)state;
    tp_scratch_create(&sc);
    tp_scratch_write(&sc, "off.yaml",
                     "network:\n"
                     "  nodes:\n"
                     "    - {id: plate, capacity: 500 J/K, initial: 20 degC}\n"
                     "    - {id: room, fixed: 20 degC}\n"
                     "  links:\n"
                     "    - {between: [plate, room], conductance: 1 W/K}\n"
                     "  sources:\n"
                     "    - {id: pad, node: plate, supply: 24 V, resistance: 4.8 ohm}\n"
                     "control: {source: pad, sensor: plate, mode: off, setpoint: 60 degC}\n"
                     "run: {duration: 2 min, step: 1 s}\n",
                     cfg);
    tp_scratch_path(&sc, "off.json", out, sizeof out);
    tp_run_tepid(&sc, args, &r);
    assert_int_equal(r.status, 0);
    assert_null(strstr(r.out, "60.0 degC"));
    tp_check_contains("header", r.out, "the controller holds 'pad' off (mode off)");
    tp_check_contains("summary", r.out, "0 A (the heater never switched on)");
    tp_run_clear(&r);
    root = tp_read_json(out);
    v = cJSON_GetObjectItemCaseSensitive(root, "current_peak_A");
    assert_true(cJSON_IsNumber(v));
    assert_true(v->valuedouble == 0.0);
    v = cJSON_GetObjectItemCaseSensitive(root, "power_peak_W");
    assert_true(cJSON_IsNumber(v) && v->valuedouble == 0.0);
    cJSON_Delete(root);
    tp_scratch_destroy(&sc);
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
    tp_ = tp_series_first_rise(h.t, h.temps + cp, h.n, h.n_out, level);
    ts = tp_series_first_rise(h.t, h.temps + cs, h.n, h.n_out, level);
    /* The start-up transient decays as exp(-t/20 s): negligible at the 400 s crossing. */
    assert_true(fabs((ts - tp_) - 20.0) < 0.01);
    tp_history_clear(&h);
    tp_network_destroy(&net);
}

/* Plates whose only loss is the mounts' conductance (every convection and radiation scaled to
 * zero), so that they are linear and the working surface is the top layer's node exactly (no
 * flux leaves the top face); a 0.01 s sensor on a 0.05 s controller, so that the reading is
 * the plate's temperature within a few millikelvin. Invented round values: C = rho c A t. */
#define LINEAR_PLATE(layers, control) \
    "materials:\n" \
    "  base-metal: {density: 2700 kg/m3, specific_heat: 900 J/(kg.K), conductivity: 200 W/(m.K)," \
    " emissivity: 0.5, max_temperature: 400 degC, source: test values}\n" \
    "  top-sheet: {density: 8000 kg/m3, specific_heat: 500 J/(kg.K), conductivity: 50 W/(m.K)," \
    " emissivity: 0.5, max_temperature: 400 degC, source: test values}\n" \
    "room: {temperature: 20 degC}\n" \
    "bed:\n" \
    "  size: [200 mm, 200 mm]\n" \
    "  layers:\n" layers \
    "  mounts: {conductance: 1 W/K}\n" \
    "losses: {convection_scale: 0, radiation_scale: 0}\n" \
    "heater: {layer: plate, power: 100 W}\n" \
    "sensor: {layer: plate, coupling: 0.05 W/K, time_constant: 0.01 s}\n" \
    "control: " control "\n"

/* Two first-order lags: heater -> plate (C1 = 2700 x 900 x 0.04 x 0.005 = 486 J/K, 1 W/K to the
 * room) -> sheet (C2 = 8000 x 500 x 0.04 x 0.001 = 160 J/K, no loss of its own) through
 * G12 = 1 / (0.005/(2 x 200 x 0.04) + 1/(100 x 0.04) + 0.001/(2 x 50 x 0.04)) = 3.99102 W/K.
 * With x = T - T_room and full power P = 100 W:
 *   C1 x1' = P - x1 - G12 (x1 - x2),   C2 x2' = G12 (x1 - x2),   x(0) = 0,
 * a linear system with eigenvalues l = (tr +- sqrt(tr^2 - 4 det)) / 2, tr = -(1 + G12)/C1 -
 * G12/C2, det = G12 / (C1 C2), eigenvectors (1 + l C2 / G12, 1) and the steady state
 * x1 = x2 = P = 100 K (closed form of a linear ODE system; the crossing times below are its
 * roots, found by bisection). Held by on-off control at 80 degC, the sheet (the surface) holds
 * at 80 degC too. The lag: when x1 = 60 K (the reading reaches 80 degC), the surface is
 * 60 - x2 short of its holding value (behind), and it comes within 1 K (x2 = 59 K) that much
 * later. The 10 K band keeps the heater full on all that time (checked below: x1 < 65 K). */
typedef struct two_lags {
    double l[2], a[2], v[2]; /* eigenvalues, weights, first components of the eigenvectors */
} two_lags;

static void two_lags_init(two_lags *s)
{
    const double c1 = 486.0, c2 = 160.0, g = 1.0 / (0.005 / 16.0 + 0.25 + 0.001 / 4.0);
    double tr = -(1.0 + g) / c1 - g / c2, det = g / (c1 * c2), disc = sqrt(tr * tr - 4.0 * det);
    int k;
    s->l[0] = 0.5 * (tr + disc);
    s->l[1] = 0.5 * (tr - disc);
    for (k = 0; k < 2; k++)
        s->v[k] = 1.0 + s->l[k] * c2 / g;
    /* a0 v + a1 w = -(100, 100): a0 + a1 = -100 and a0 v0 + a1 v1 = -100. */
    s->a[0] = -100.0 * (1.0 - s->v[1]) / (s->v[0] - s->v[1]);
    s->a[1] = -100.0 - s->a[0];
}

static double two_lags_x(const two_lags *s, int node, double t)
{
    double x = 100.0;
    int k;
    for (k = 0; k < 2; k++)
        x += s->a[k] * (node == 0 ? s->v[k] : 1.0) * exp(s->l[k] * t);
    return x;
}

/* The time node `node` rises through `level` K, by bisection (both rise monotonically). */
static double two_lags_cross(const two_lags *s, int node, double level)
{
    double lo = 0.0, hi = 5000.0;
    int i;
    for (i = 0; i < 200; i++) {
        double mid = 0.5 * (lo + hi);
        if (two_lags_x(s, node, mid) < level)
            lo = mid;
        else
            hi = mid;
    }
    return 0.5 * (lo + hi);
}

/* `tepid warmup --json` of `yaml`: the metrics as the command line writes them. */
static cJSON *warmup_json(const char *yaml)
{
    tp_scratch sc;
    char cfg[TP_TEST_PATH], out[TP_TEST_PATH];
    const char *args[] = {"warmup", cfg, "-q", "--json", out, NULL};
    cJSON *root;
    tp_scratch_create(&sc);
    tp_scratch_write(&sc, "plate.yaml", yaml, cfg);
    tp_scratch_path(&sc, "plate.json", out, sizeof out);
    assert_int_equal(tp_run_status(&sc, args), 0);
    root = tp_read_json(out);
    tp_scratch_destroy(&sc);
    return root;
}

/* A number of a JSON object (fails when it is missing or null). */
static double json_num(const cJSON *o, const char *key)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, key);
    if (!cJSON_IsNumber(v))
        fail_msg("'%s' is not a number", key);
    return v->valuedouble;
}

static void test_lag_two_first_order_lags(void **state)
{
    static const char yaml[] = LINEAR_PLATE(
        "    - {id: plate, material: base-metal, thickness: 5 mm}\n"
        "    - {id: sheet, material: top-sheet, thickness: 1 mm, contact: 100 W/(m2.K)}\n",
        "{mode: on-off, setpoint: 80 degC, band: 10 K, period: 0.05 s}\n"
        "run: {duration: 15 min, step: 0.5 s, tolerance: 1e-9}");
    tp_network *net = build(yaml);
    cJSON *root;
    two_lags s;
    tp_warmup w;
    tp_diag d;
    double t_sp, t_catch;
    (void)state;
    two_lags_init(&s);
    t_sp = two_lags_cross(&s, 0, 60.0);
    t_catch = two_lags_cross(&s, 1, 59.0);
    assert_true(two_lags_x(&s, 0, t_catch) < 65.0); /* still full on: below 80 + 10/2 degC */
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_warmup_run(net, &w, &d), TP_OK);
    tp_check_abs("surface at hold", w.metrics.surface_hold - KELVIN, 80.0, 1e-6);
    /* The 0.01 s sensor delays the reading by about 0.01 s (a few mK at 0.2 K/s); linear
     * interpolation over 0.5 s steps errs by far less. */
    tp_check_abs("time to setpoint", w.metrics.t_setpoint, t_sp, 0.05);
    tp_check_abs("lag, K behind", w.metrics.lag_k, 60.0 - two_lags_x(&s, 1, t_sp), 0.01);
    assert_true(w.metrics.lag_k > 1.0); /* the surface is behind: the sign says so */
    tp_check_abs("lag, s until within 1 K", w.metrics.lag, t_catch - t_sp, 0.05);
    assert_true(w.metrics.lag > 0.0);
    tp_warmup_clear(&w);
    tp_network_destroy(&net);
    /* The command line reports the same, under lag_K and lag_s. */
    root = warmup_json(yaml);
    tp_check_abs("lag_K", json_num(root, "lag_K"), 60.0 - two_lags_x(&s, 1, t_sp), 0.01);
    tp_check_abs("lag_s", json_num(root, "lag_s"), t_catch - t_sp, 0.05);
    cJSON_Delete(root);
}

/* On-off control of one linear plate (C = 486 J/K, 1 W/K, 100 W: tau = 486 s, x_inf = 100 K)
 * reading itself: the surface rides a limit cycle between the band's edges, 58.5 and 61.5 degC
 * (x from 38.5 to 41.5 K), on for tau ln((100 - 38.5)/(100 - 41.5)) = 24.30 s and off for
 * tau ln(41.5/38.5) = 36.47 s, a period of 60.77 s (closed form of the first-order response
 * between fixed levels). It never stays within 1 K of the 60 degC holding point, so readiness
 * is judged against the cycle: within 1 K of its range, 57.5 to 62.5 degC, which the rising
 * plate first reaches at tau ln(100/62.5) = 228.43 s and never leaves. The controller's 0.05 s
 * ticks, the sensor's 0.01 s and the 0.1 s samples move the cycle's extremes by at most about
 * 0.03 K (0.2 K/s x 0.15 s), hence the tolerances (0.03 K / 0.129 K/s = 0.25 s at the
 * ready time). */
static void test_ready_on_off_limit_cycle(void **state)
{
    static const char yaml[] = LINEAR_PLATE(
        "    - {id: plate, material: base-metal, thickness: 5 mm}\n",
        "{mode: on-off, setpoint: 60 degC, band: 3 K, period: 0.05 s}\n"
        "run: {duration: 30 min, step: 0.1 s, tolerance: 1e-9}");
    tp_network *net = build(yaml);
    const double tau = 486.0;
    cJSON *root;
    const cJSON *def;
    tp_warmup w;
    tp_diag d;
    (void)state;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_warmup_run(net, &w, &d), TP_OK);
    assert_int_equal(w.metrics.ready_basis, TP_READY_CYCLE);
    tp_check_abs("cycle low", w.metrics.cycle_min - KELVIN, 58.5, 0.05);
    tp_check_abs("cycle high", w.metrics.cycle_max - KELVIN, 61.5, 0.05);
    tp_check_abs("cycle period", w.metrics.cycle_period,
                 tau * (log(61.5 / 58.5) + log(41.5 / 38.5)), 0.3);
    tp_check_abs("ready band low", w.metrics.ready_low - KELVIN, 57.5, 0.05);
    tp_check_abs("ready band high", w.metrics.ready_high - KELVIN, 62.5, 0.05);
    tp_check_abs("surface ready", w.metrics.t_surface_ready, tau * log(100.0 / 62.5), 0.5);
    tp_warmup_clear(&w);
    tp_network_destroy(&net);
    /* The command line says which definition it used. */
    root = warmup_json(yaml);
    tp_check_abs("time_surface_ready_s", json_num(root, "time_surface_ready_s"),
                 tau * log(100.0 / 62.5), 0.5);
    def = cJSON_GetObjectItemCaseSensitive(root, "ready_definition");
    assert_true(cJSON_IsString(def));
    assert_string_equal(def->valuestring, "limit_cycle");
    tp_check_abs("ready_low_C", json_num(root, "ready_low_C"), 57.5, 0.05);
    tp_check_abs("limit cycle period",
                 json_num(cJSON_GetObjectItemCaseSensitive(root, "limit_cycle"), "period_s"),
                 tau * (log(61.5 / 58.5) + log(41.5 / 38.5)), 0.3);
    cJSON_Delete(root);
}

static void test_settle_time_definition(void **state)
{
    /* A damped series entering a +-1 band around 10 for good at t = 3.5 (by construction). */
    double t[] = {0, 1, 2, 3, 4, 5, 6};
    double v[] = {0, 12, 9.5, 12, 11, 10.2, 10};
    (void)state;
    /* Last exit from the band: between t = 3 (12) and t = 4 (11): enters at 11 when v = 11,
     * i.e. exactly t = 4 (hand calculation with linear interpolation). */
    assert_true(fabs(tp_series_settle_time(t, v, 7, 1, 10.0, 1.0) - 4.0) < 1e-12);
    v[4] = 10.5;
    /* Now between 12 at t = 3 and 10.5 at t = 4: v = 11 at t = 3 + 1/1.5 = 3.6667. */
    assert_true(fabs(tp_series_settle_time(t, v, 7, 1, 10.0, 1.0) - (3.0 + 1.0 / 1.5)) < 1e-12);
    v[6] = 12;
    assert_true(isnan(tp_series_settle_time(t, v, 7, 1, 10.0, 1.0)));
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
    /* A plot into a directory that does not exist is refused before the run (exit 2, issue 15
     * item 6) and leaves nothing. */
    tp_scratch_path(sc, "missing/run.png", path, sizeof path);
    assert_int_equal(tp_run_status(sc, plot_args), 2);
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
    tp_plot_vline marks[TP_FIGURE_MARKS];
    char text[TP_FIGURE_MARKS][TP_FIGURE_MARK_TEXT];
    (void)state;
    memset(&m, 0, sizeof m);
    m.t_setpoint = 440.0;
    m.t_surface_ready = 671.0;
    assert_int_equal(tp_figure_warmup_marks(&m, marks, text), 2);
    tp_check_abs("setpoint mark", marks[0].x, 440.0 / 60.0, 1e-12);
    tp_check_abs("ready mark", marks[1].x, 671.0 / 60.0, 1e-12);
    assert_string_equal(marks[0].label, "reading at setpoint 7 min 20 s");
    assert_string_equal(marks[1].label, "surface ready 11 min 11 s");
    m.t_setpoint = (double)NAN;
    assert_int_equal(tp_figure_warmup_marks(&m, marks, text), 1);
    assert_string_equal(marks[0].label, "surface ready 11 min 11 s");
    m.t_surface_ready = (double)NAN;
    assert_int_equal(tp_figure_warmup_marks(&m, marks, text), 0);
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
        cmocka_unit_test(test_strict_exits_3_when_setpoint_not_reached),
        cmocka_unit_test(test_mode_off_draws_nothing),
        cmocka_unit_test(test_sensor_lag_behind_ramp_is_time_constant),
        cmocka_unit_test(test_settle_time_definition),
        cmocka_unit_test(test_lag_two_first_order_lags),
        cmocka_unit_test(test_ready_on_off_limit_cycle),
        cmocka_unit_test(test_simc_formula),
        cmocka_unit_test(test_imc_formula),
        cmocka_unit_test(test_two_point_recovers_fopdt),
        cmocka_unit_test(test_identify_first_order_plant),
        cmocka_unit_test(test_plot_png_and_failures),
    };
    return cmocka_run_group_tests(tests, tp_scratch_group_setup, tp_scratch_group_teardown);
}
