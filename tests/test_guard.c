/* Tests of the protection design: the three checks as pure functions on hand-made series, the
 * rise recommendation against the closed form of a first-order plant, the stuck-on equilibrium
 * against closed form and `tepid steady`, healthy corners re-simulated with the recommended
 * checks, and a detached sensor caught before a service limit (and --strict on loose ones). */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "assemble.h"
#include "config.h"
#include "guard.h"
#include "integrate.h"
#include "materials.h"
#include "network.h"
#include "tp_test.h"
#include "units.h"
#include "yamltree.h"

#define KELVIN 273.15
#define HOT_PLATE TP_SOURCE_DIR "/tests/cases/guard-hot-plate.yaml"

static const tp_guard_settings none = {0, TP_UNSET, TP_UNSET, TP_UNSET, TP_UNSET, TP_UNSET, TP_UNSET};

/* ---- the checks on hand-made series --------------------------------------------------------- */

static void test_rise_check_fires_when_the_window_rise_falls_short(void **state)
{
    /* Hand calculation: r = 20, 21, 22, 23, 24, 25, 25, 25, 25 at t = 0..8 s, window 3 s,
     * rise_min 2 K, armed throughout (r < 100 - 5). Rises over 3 s: t=3: 3, t=4: 3, t=5: 3,
     * t=6: 25-23 = 2 (not below 2), t=7: 25-24 = 1 < 2 -> fires at t = 7 s. */
    const double t[] = {0, 1, 2, 3, 4, 5, 6, 7, 8};
    const double r[] = {20, 21, 22, 23, 24, 25, 25, 25, 25};
    tp_guard_settings s = none;
    tp_guard_detect det;
    double at;
    (void)state;
    s.rise_window = 3.0;
    s.rise_min = 2.0;
    s.approach = 5.0;
    det = tp_guard_check(t, r, 9, 100.0, 0, &s);
    assert_true(det.rise == 7.0);
    assert_true(isnan(det.hold) && isnan(det.ceiling));
    /* The smallest rise over a judged window: 0 K (t = 8, 25 - 25), hand calculation. */
    assert_true(tp_guard_min_rise(t, r, 9, 100.0, 0, 5.0, 3.0, &at) == 0.0);
    assert_true(at == 8.0);
    /* The same series near the setpoint: above setpoint - approach (24.5) the check is off, so
     * the flat end is never judged; windows ending at t = 3, 4 rise 3 K: no firing. */
    det = tp_guard_check(t, r, 9, 29.5, 0, &s);
    assert_true(isnan(det.rise));
    /* From the holding state (reached) the rise check is never armed. */
    det = tp_guard_check(t, r, 9, 100.0, 1, &s);
    assert_true(isnan(det.rise));
}

static void test_rise_check_restarts_its_window_after_disarming(void **state)
{
    /* Hand calculation: setpoint 30, approach 2 -> armed below 28. r = 20, 29 (disarmed), then
     * 20, 20, 20 at t = 2..4. Window 2 s: the stretch restarts at t = 2, the first judged window
     * ends at t = 4 (20 - 20 = 0 < 1) -> fires at 4 s, not at 2 s (which would straddle the
     * disarmed sample). */
    const double t[] = {0, 1, 2, 3, 4};
    const double r[] = {20, 29, 20, 20, 20};
    tp_guard_settings s = none;
    (void)state;
    s.rise_window = 2.0;
    s.rise_min = 1.0;
    s.approach = 2.0;
    assert_true(tp_guard_check(t, r, 5, 30.0, 0, &s).rise == 4.0);
}

static void test_hold_check_counts_the_stay_below_the_band(void **state)
{
    /* Hand calculation: setpoint 100, band 2 (below 98 counts), grace 5 s. Reached at t = 1;
     * below from t = 3; t - 3 > 5 first at t = 9 -> fires at 9 s. */
    const double t[] = {0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10};
    const double r[] = {99, 100, 100, 97, 97, 97, 97, 97, 97, 97, 100};
    const double cold[] = {20, 20, 20, 20, 20, 20, 20, 20, 20, 20, 20};
    tp_guard_settings s = none;
    double at;
    (void)state;
    s.hold_band = 2.0;
    s.hold_grace = 5.0;
    assert_true(tp_guard_check(t, r, 11, 100.0, 0, &s).hold == 9.0);
    /* The longest stay is 9 - 3 = 6 s, from t = 3 (hand calculation). */
    assert_true(tp_guard_longest_below(t, r, 11, 100.0, 0, 2.0, &at) == 6.0);
    assert_true(at == 3.0);
    /* A grace of 6 s is not exceeded (6 is not more than 6). */
    s.hold_grace = 6.0;
    assert_true(isnan(tp_guard_check(t, r, 11, 100.0, 0, &s).hold));
    /* Never reached: the hold check stays off however low the reading. */
    s.hold_grace = 1.0;
    assert_true(isnan(tp_guard_check(t, cold, 11, 100.0, 0, &s).hold));
    /* From the holding state it is armed at once: below from t = 0, 2 > 1 at t = 2. */
    assert_true(tp_guard_check(t, cold, 11, 100.0, 1, &s).hold == 2.0);
}

static void test_ceiling_fires_above_not_at(void **state)
{
    /* Hand calculation: ceiling 110; 110 does not fire (not above), 110.5 at t = 3 does. */
    const double t[] = {0, 1, 2, 3};
    const double r[] = {100, 110, 109, 110.5};
    tp_guard_settings s = none;
    tp_guard_detect det;
    (void)state;
    s.ceiling = 110.0;
    det = tp_guard_check(t, r, 4, 100.0, 0, &s);
    assert_true(det.ceiling == 3.0);
    assert_true(tp_guard_first(&det) == 3.0);
}

/* ---- the first-order plant ------------------------------------------------------------------ */

/* One node of C = 1000 J/K through G = 2 W/K to a 20 degC room, 400 W, on-off at 100 degC:
 * tau = C/G = 500 s, T_inf = 20 + 400/2 = 220 degC (hand calculation). */
static const char *first_order =
    TP_TEST_FIRST_ORDER
    "control: {source: pad, sensor: plate, mode: on-off, setpoint: 100 degC, band: 2 K,"
    " period: 1 s}\n"
    "run: {duration: 20 min, step: 1 s}\n";

static void load(const char *yaml, tp_yamltree **doc, tp_description *desc)
{
    tp_diag d;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_yamltree_load_text("test.yaml", yaml, strlen(yaml), doc, &d), TP_OK);
    assert_int_equal(tp_config_read(*doc, desc, &d), TP_OK);
}

static void test_rise_recommendation_matches_first_order_closed_form(void **state)
{
    tp_yamltree *doc = NULL;
    tp_description desc;
    tp_guard_study *st = calloc(1, sizeof *st);
    tp_diag d;
    double tau = 500.0, tinf = 220.0 + KELVIN, tinf_cold = 215.0 + KELVIN, ta, w, m_cf, slope, tol;
    (void)state;
    assert_non_null(st);
    load(first_order, &doc, &desc);
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_guard_study_run(&desc, doc, NULL, st, &d), TP_OK);
    /* On-off stays fully on up to setpoint + band/2, so the approach is the 0.5 K floor and the
     * rise check ends at Ta = 99.5 degC. */
    assert_true(fabs(st->rec.approach - 0.5) < 1e-12);
    ta = st->setpoint - st->rec.approach;
    w = st->rec.rise_window;
    assert_true(w > 0 && w <= TP_GUARD_WINDOW_MAX);
    /* Closed form: T(t) = T_inf - (T_inf - T0) exp(-t/tau), so the rise over [t - W, t] is
     * (T_inf - T(t)) (exp(W/tau) - 1), falling with t: the smallest judged rise is at the last
     * armed sample, where T is just below Ta. With Ta itself: m = (T_inf - Ta)(e^{W/tau} - 1).
     * The file declares no guard: ranges, so the default room range applies (15 to 30 degC,
     * common practice, no source) and the slowest corner is the 15 degC room, where
     * T_inf = 15 + 400/2 = 215 degC (hand calculation). The last armed sample lies less than
     * one period (1 s) of slope (T_inf - Ta)/tau below Ta, which bounds the difference:
     * tol = slope * 1 s * (e^{W/tau} - 1), plus 1e-3 K for the integrator (rtol 1e-6 on
     * ~370 K). */
    assert_int_equal(st->n_corners, 3); /* nominal, 15 degC, 30 degC */
    m_cf = (tinf_cold - ta) * (exp(w / tau) - 1.0);
    slope = (tinf_cold - ta) / tau;
    tol = desc.guard.rise_factor * slope * 1.0 * (exp(w / tau) - 1.0) + 1e-3;
    assert_true(fabs(st->rise_min_raw - desc.guard.rise_factor * m_cf) <= tol);
    /* 0.67 is the documented default rise factor (docs/guard.md). */
    assert_true(fabs(desc.guard.rise_factor - 0.67) < 1e-12);
    /* The recommendation is the factor times the rise, rounded down to 0.1 K, and at least the
     * 1 K floor. */
    assert_true(st->rec.rise_min <= st->rise_min_raw + 1e-9);
    assert_true(st->rec.rise_min > st->rise_min_raw - 0.1 - 1e-9);
    assert_true(st->rec.rise_min >= TP_GUARD_RISE_FLOOR - 1e-9);
    /* The window is the shortest on the 1 s grid whose closed-form rise clears the floor, or
     * longer (it may trade length for detection): 0.67 (T_inf - Ta)(e^{W/tau} - 1) >= 1 K needs
     * W >= tau ln(1 + 1/(0.67 * 115.5)) = 6.43 s (hand calculation). */
    assert_true(w >= 7.0);
    /* Stuck on: the equilibrium at full power is T_inf = 220 degC (hand calculation). */
    assert_true(st->has_stuck);
    assert_true(fabs(st->stuck.temps[0] - tinf) < 1e-6);
    tp_guard_study_clear(st);
    free(st);
    tp_config_clear(&desc);
    tp_yamltree_destroy(&doc);
}

/* ---- through the command line --------------------------------------------------------------- */

static void test_stuck_on_equilibrium_equals_steady(void **state)
{
    /* The stuck-on equilibrium of `guard` must be the full-power state of `steady`; both solve
     * the same network, so they agree to the solver's tolerance (1e-6 K here). */
    const char *gj = TP_BINARY_DIR "/guard_stuck.json", *sj = TP_BINARY_DIR "/guard_steady.json";
    tp_scratch sc;
    cJSON *g, *s, *gn, *sn, *it;
    int count = 0;
    (void)state;
    tp_scratch_create(&sc);
    {
        const char *args[] = {"guard", HOT_PLATE, "--json", gj, NULL};
        assert_int_equal(tp_run_status(&sc, args), 0);
    }
    {
        const char *args[] = {"steady", HOT_PLATE, "--set", "control.mode=full",
                              "--json", sj,        NULL};
        assert_int_equal(tp_run_status(&sc, args), 0);
    }
    g = tp_read_json(gj);
    s = tp_read_json(sj);
    gn = cJSON_GetObjectItem(cJSON_GetObjectItem(g, "stuck_on"), "nodes_C");
    sn = cJSON_GetObjectItem(s, "nodes_C");
    assert_non_null(gn);
    assert_non_null(sn);
    cJSON_ArrayForEach(it, sn) {
        cJSON *o = cJSON_GetObjectItem(gn, it->string);
        assert_non_null(o);
        assert_true(fabs(o->valuedouble - it->valuedouble) < 1e-6);
        count++;
    }
    assert_true(count >= 4);
    /* The laminate (150 degC) is passed at full power: a cut-out is required. */
    assert_true(cJSON_IsTrue(cJSON_GetObjectItem(cJSON_GetObjectItem(g, "stuck_on"),
                                                 "cutout_required")));
    cJSON_Delete(g);
    cJSON_Delete(s);
    remove(gj);
    remove(sj);
    tp_scratch_destroy(&sc);
}

static void test_detached_sensor_caught_before_the_limit(void **state)
{
    const char *gj = TP_BINARY_DIR "/guard_detached.json";
    tp_scratch sc;
    cJSON *g, *it;
    int seen = 0;
    (void)state;
    tp_scratch_create(&sc);
    {
        const char *args[] = {"guard", HOT_PLATE, "--json", gj, "--strict", NULL};
        assert_int_equal(tp_run_status(&sc, args), 0);
    }
    g = tp_read_json(gj);
    cJSON_ArrayForEach(it, cJSON_GetObjectItem(g, "faults")) {
        const char *name = cJSON_GetObjectItem(it, "fault")->valuestring;
        cJSON *first = cJSON_GetObjectItem(it, "first_detection_s");
        cJSON *limit = cJSON_GetObjectItem(it, "limit_crossed_s");
        if (strcmp(name, "sensor-detached") != 0)
            continue;
        /* This plate takes its laminate past 150 degC at full power (the file's comment), and
         * a detached sensor makes the controller drive full power: the limit is crossed ... */
        assert_true(cJSON_IsNumber(limit));
        /* ... and the recommended checks fire first. */
        assert_true(cJSON_IsNumber(first));
        assert_true(first->valuedouble < limit->valuedouble);
        seen++;
    }
    assert_int_equal(seen, 2);
    cJSON_Delete(g);
    remove(gj);
    /* Loose settings: no window fits in the run, no grace runs out, the ceiling is far above:
     * the detached sensor cooks the laminate unnoticed, and --strict says so with exit 3. */
    {
        const char *args[] = {"guard", HOT_PLATE,   "--rise-window", "1h",       "--hold-grace",
                              "1h",    "--ceiling", "400 degC",      "--strict", "-q",
                              NULL};
        assert_int_equal(tp_run_status(&sc, args), 3);
    }
    /* Without --strict the same evaluation succeeds (exit 0). */
    {
        const char *args[] = {"guard", HOT_PLATE,   "--rise-window", "1h", "--hold-grace",
                              "1h",    "--ceiling", "400 degC",      "-q", NULL};
        assert_int_equal(tp_run_status(&sc, args), 0);
    }
    tp_scratch_destroy(&sc);
}

/* A key of a JSON object as a number, failing the test when it is missing. */
static double json_number(const cJSON *obj, const char *key)
{
    const cJSON *it = cJSON_GetObjectItem(obj, key);
    if (!cJSON_IsNumber(it))
        fail_msg("no number '%s' in the JSON output", key);
    return it->valuedouble;
}

/* ---- schedules (control.schedule) ------------------------------------------------------------ */

static void test_series_checks_follow_a_moving_setpoint(void **state)
{
    /* Hand calculation on a setpoint series sp (NaN: the schedule has the heater off).
     * 1. A ramp sp = 50, 51, ... 58 at t = 0..8 s with the reading r = 50 throughout: reached at
     *    t = 0 (r >= sp), but the setpoint rises at every later sample, so the rise check is
     *    armed from t = 1: window 2 s, rise_min 1 K; the first judged window ends at t = 3
     *    (stretch from t = 1), rise 0 < 1 -> fires at 3 s. Hold: band 3 K, grace 2 s; below
     *    sp - 3 from t = 4 (54 - 3 = 51 > 50), 2 s passed at t = 6 and more than 2 at t = 7.
     * 2. The same readings with the heater off from t = 5: both checks are disarmed there, so
     *    the hold check (needs t - 4 > 2) never fires. */
    const double t[] = {0, 1, 2, 3, 4, 5, 6, 7, 8};
    const double r[] = {50, 50, 50, 50, 50, 50, 50, 50, 50};
    const double ramp[] = {50, 51, 52, 53, 54, 55, 56, 57, 58};
    const double nan = (double)NAN;
    const double off[] = {50, 51, 52, 53, 54, nan, nan, nan, nan};
    tp_guard_settings s = none;
    tp_guard_detect det;
    (void)state;
    s.rise_window = 2.0;
    s.rise_min = 1.0;
    s.approach = 1.0;
    s.hold_band = 3.0;
    s.hold_grace = 2.0;
    det = tp_guard_check_series(t, r, ramp, 9, 58.0, 0, &s);
    assert_true(det.rise == 3.0);
    assert_true(det.hold == 7.0);
    det = tp_guard_check_series(t, r, off, 9, 58.0, 0, &s);
    assert_true(det.rise == 3.0);
    assert_true(isnan(det.hold));
    /* 3. A step: sp 50 then 60 from t = 2 (a rise of 10 K > TP_GUARD_STEP_K) clears the latch:
     *    the hold check, armed at t = 0, is disarmed until the reading reaches 60 again; r
     *    stays 50 -> no hold firing however long; the rise check is armed (r < 60 - 1) from
     *    t = 2 and fires at t = 4 (50 - 50 < 1). */
    {
        const double step[] = {50, 50, 60, 60, 60, 60, 60, 60, 60};
        det = tp_guard_check_series(t, r, step, 9, 60.0, 0, &s);
        assert_true(isnan(det.hold));
        assert_true(det.rise == 4.0);
    }
    /* 4. Without a series the function is tp_guard_check itself. */
    det = tp_guard_check_series(t, ramp, NULL, 9, 100.0, 0, &s);
    assert_true(isnan(det.rise) && isnan(det.hold));
}

/* One node of C = 1000 J/K through G = 2 W/K to a 20 degC room, 400 W, read directly (the sensor
 * is the node), PI control following a ramp to 100 degC at 0.1 K/s (800 s) and a 20 min hold:
 * tau = C / G = 500 s, full-power equilibrium T_inf = 20 + 400 / 2 = 220 degC (hand
 * calculation). */
static const char *scheduled_node =
    TP_TEST_FIRST_ORDER
    "control:\n"
    "  source: pad\n"
    "  sensor: plate\n"
    "  mode: pid\n"
    "  kp: 0.2 1/K\n"
    "  ki: 0.002 1/(K.s)\n"
    "  period: 1 s\n"
    "  schedule:\n"
    "    - {to: 100 degC, ramp: 0.1 K/s}\n"
    "    - {hold: 20 min}\n"
    "run: {step: 1 s}\n"
    "guard: {room: [20 degC, 20 degC]}\n";

/* The reading of a trace at time t (a sample exactly there). */
static double reading_at(const tp_guard_trace *tr, double t)
{
    long i;
    for (i = 0; i < tr->n; i++)
        if (fabs(tr->t[i] - t) < 1e-6)
            return tr->reading[i];
    fail_msg("no sample at %g s", t);
    return (double)NAN;
}

/* The time s after the injection at which a reading decaying from T0 towards the room (heater
 * open: T = room + (T0 - room) exp(-s / tau)) falls `band` below a setpoint sp0 + rate s: by
 * bisection of that closed form. */
static double behind_by(double T0, double sp0, double rate, double band)
{
    double lo = 0.0, hi = 5000.0;
    int k;
    for (k = 0; k < 200; k++) {
        double mid = 0.5 * (lo + hi);
        double T = 20.0 + (T0 - 20.0) * exp(-mid / 500.0);
        if (sp0 + rate * mid - T > band)
            hi = mid;
        else
            lo = mid;
    }
    return hi;
}

static void test_schedule_faults_on_one_node_match_the_energy_balance(void **state)
{
    /* Faults injected mid-ramp (t = 400 s, setpoint 60 degC) and mid-hold (t = 800 + 600 =
     * 1400 s) on the one-node network, judged with a ceiling of 130 degC and a hold check of
     * 5 K for 30 s (no rise check). Lumped energy balance, by hand:
     * - stuck on from T0: C dT/dt = P - G (T - 20), so T = T_inf - (T_inf - T0) e^(-s/tau),
     *   whose slope at the injection is (P - G (T0 - 20)) / C; the ceiling Tc is crossed after
     *   s_c = tau ln((T_inf - T0) / (T_inf - Tc)), detected at the first tick (1 s) after it;
     * - heater open: T = 20 + (T0 - 20) e^(-s/tau); the hold check counts from the first tick
     *   at which sp - T > 5 K and fires more than 30 s later: within (s_b + 30, s_b + 32]. */
    tp_yamltree *doc = NULL;
    tp_description desc;
    tp_diag d;
    tp_guard_study *st = calloc(1, sizeof *st);
    tp_guard_settings s = none;
    const double P = 400.0, G = 2.0, C = 1000.0, tau = 500.0, Tinf = 220.0 + KELVIN;
    const double Tc = 130.0 + KELVIN;
    int m;
    (void)state;
    assert_non_null(st);
    load(scheduled_node, &doc, &desc);
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_guard_study_run(&desc, doc, NULL, st, &d), TP_OK);
    assert_true(st->scheduled);
    assert_int_equal(st->n_corners, 1);
    assert_int_equal(st->healthy_trips, 0); /* the recommendation never trips the ramp */
    assert_int_equal(st->inject[TP_GUARD_MID_RAMP].segment, 0);
    assert_true(st->inject[TP_GUARD_MID_RAMP].t == 400.0);
    assert_true(st->inject[TP_GUARD_MID_HOLD].t == 1400.0);
    tp_check_abs("setpoint mid-ramp", st->inject[TP_GUARD_MID_RAMP].setpoint - KELVIN, 60.0,
                 1e-9);
    s.ceiling = Tc;
    s.hold_band = 5.0;
    s.hold_grace = 30.0;
    tp_guard_evaluate(st, &s);
    for (m = 0; m < TP_GUARD_MID_COUNT; m++) {
        const double ti = st->inject[m].t, sp0 = st->inject[m].setpoint;
        const double rate = m == TP_GUARD_MID_RAMP ? 0.1 : 0.0;
        const tp_guard_fault_run *on = &st->mid[TP_FAULT_STUCK_ON][m];
        const tp_guard_fault_run *open = &st->mid[TP_FAULT_HEATER_OPEN][m];
        double T0 = reading_at(&on->trace, ti), slope, sc, sb;
        /* The rise rate at the injection, P/C less the loss: the first second of the run. */
        slope = (P - G * (T0 - KELVIN - 20.0)) / C;
        /* Within the integration's error: run.tolerance 1e-6 of about 330 K, 3e-4 K. */
        tp_check_abs("stuck-on first second", reading_at(&on->trace, ti + 1.0) - T0,
                     (Tinf - (Tinf - T0) * exp(-1.0 / tau)) - T0, 1e-3);
        tp_check_rel("stuck-on slope by P/C", reading_at(&on->trace, ti + 1.0) - T0, slope,
                     0.01);
        sc = tau * log((Tinf - T0) / (Tinf - Tc));
        assert_true(on->det.ceiling > ti + sc - 0.05 && on->det.ceiling <= ti + sc + 1.05);
        assert_true(on->first == on->det.ceiling);
        T0 = reading_at(&open->trace, ti);
        sb = behind_by(T0 - KELVIN, sp0 - KELVIN, rate, 5.0);
        assert_true(open->det.hold > ti + sb + 30.0 - 0.05 &&
                    open->det.hold <= ti + sb + 32.0 + 0.05);
        print_message("mid-%s at %.0f s: stuck-on %.1f s after (closed form %.1f), heater "
                      "open %.1f s after (closed form %.1f + 30 s grace)\n",
                      m ? "hold" : "ramp", ti, on->first - ti, sc, open->first - ti, sb);
    }
    tp_guard_study_clear(st);
    free(st);
    tp_config_clear(&desc);
    tp_yamltree_destroy(&doc);
}

static void test_reflow_schedule_no_false_trip_and_faults_caught(void **state)
{
    /* The reflow demo through guard: its corners follow the ramps without a trip of the
     * recommended checks, and a switch stuck on and an open heater injected mid-ramp are
     * detected after the injection; stuck on mid-hold too, before any protected layer passes
     * its limit. (The 20 s hold is too short for the hold check to see an open heater before
     * the profile switches the heater off anyway: that one is reported, not required.) */
    tp_yamltree *doc = NULL;
    tp_description desc;
    tp_diag d;
    tp_guard_study *st = calloc(1, sizeof *st);
    const char *path = TP_SOURCE_DIR "/configs/reflow-hotplate-230v.yaml";
    char *text = tp_read_file(path);
    const tp_guard_fault_run *fr;
    int m;
    (void)state;
    assert_non_null(st);
    assert_non_null(text);
    load(text, &doc, &desc);
    free(text);
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_guard_study_run(&desc, doc, NULL, st, &d), TP_OK);
    assert_true(st->scheduled);
    assert_int_equal(st->healthy_trips, 0);
    assert_int_equal(st->inject[TP_GUARD_MID_RAMP].segment, 0);
    assert_int_equal(st->inject[TP_GUARD_MID_HOLD].segment, 3);
    for (m = 0; m < TP_GUARD_MID_COUNT; m++) {
        fr = &st->mid[TP_FAULT_STUCK_ON][m];
        assert_true(isfinite(fr->first) && fr->first >= st->inject[m].t);
        assert_false(fr->limit_before);
        print_message("reflow mid-%s: stuck on detected %.1f s after the injection\n",
                      m ? "hold" : "ramp", fr->first - st->inject[m].t);
    }
    fr = &st->mid[TP_FAULT_HEATER_OPEN][TP_GUARD_MID_RAMP];
    assert_true(isfinite(fr->first) && fr->first >= st->inject[TP_GUARD_MID_RAMP].t);
    print_message("reflow mid-ramp: heater open detected %.1f s after the injection\n",
                  fr->first - st->inject[TP_GUARD_MID_RAMP].t);
    tp_guard_study_clear(st);
    free(st);
    tp_config_clear(&desc);
    tp_yamltree_destroy(&doc);
}

static void test_schedule_guard_on_raw_and_gridded_forms(void **state)
{
    /* Through the command line: the raw one-node network and a gridded plate (3 x 3, the test
     * plate's layers) with a schedule run and write the schedule object; a disturbance with a
     * schedule is refused with exit 2 and a message. */
    tp_scratch sc;
    tp_run_result r;
    char raw[TP_TEST_PATH], grid[TP_TEST_PATH], gust[TP_TEST_PATH], js[TP_TEST_PATH];
    char *text, *at, *cfg;
    cJSON *j, *o;
    (void)state;
    tp_scratch_create(&sc);
    tp_scratch_write(&sc, "raw.yaml", scheduled_node, raw);
    text = tp_read_file(HOT_PLATE);
    assert_non_null(text);
    at = strstr(text, "control: {");
    assert_non_null(at);
    cfg = calloc(strlen(text) + 512, 1);
    assert_non_null(cfg);
    memcpy(cfg, text, (size_t)(at - text));
    strcat(cfg, "control:\n  mode: pid\n  period: 1 s\n  kp: 0.05 1/K\n  ki: 0.0005 1/(K.s)\n"
                "  schedule:\n    - {to: 80 degC, ramp: 0.2 K/s}\n    - {hold: 5 min}\n"
                "run: {step: 1 s}\n"
                "guard: {supply: [24 V, 24 V], resistance: 0 %, room: [20 degC, 20 degC]}\n");
    tp_scratch_write(&sc, "grid.yaml", cfg, grid);
    free(cfg);
    free(text);
    tp_scratch_path(&sc, "out.json", js, sizeof js);
    {
        const char *args[] = {"guard", raw, "--json", js, "-q", NULL};
        assert_int_equal(tp_run_status(&sc, args), 0);
        j = tp_read_json(js);
        o = cJSON_GetObjectItem(j, "schedule");
        assert_non_null(o);
        assert_int_equal(cJSON_GetArraySize(cJSON_GetObjectItem(o, "injections")), 2);
        assert_int_equal(cJSON_GetArraySize(cJSON_GetObjectItem(o, "faults")),
                         2 * TP_FAULT_COUNT);
        assert_int_equal(cJSON_GetArraySize(cJSON_GetObjectItem(o, "healthy_trips")), 0);
        cJSON_Delete(j);
    }
    {
        const char *args[] = {"guard", grid, "--set", "bed.grid=[3, 3]", "--json", js, "-q",
                              NULL};
        assert_int_equal(tp_run_status(&sc, args), 0);
        j = tp_read_json(js);
        o = cJSON_GetObjectItem(j, "schedule");
        assert_non_null(o);
        assert_int_equal(cJSON_GetArraySize(cJSON_GetObjectItem(o, "faults")),
                         2 * TP_FAULT_COUNT);
        cJSON_Delete(j);
    }
    {
        text = tp_read_file(grid);
        assert_non_null(text);
        at = strstr(text, "guard: {");
        assert_non_null(at);
        *at = '\0';
        cfg = calloc(strlen(text) + 256, 1);
        assert_non_null(cfg);
        strcpy(cfg, text);
        strcat(cfg, "guard: {gust: {after: 1 min, airflow: 2 m/s}}\n");
        tp_scratch_write(&sc, "gust.yaml", cfg, gust);
        free(cfg);
        free(text);
    }
    {
        const char *args[] = {"guard", gust, "-q", NULL};
        tp_run_tepid(&sc, args, &r);
        assert_int_equal(r.status, 2);
        assert_non_null(strstr(r.err, "guard.gust"));
        assert_non_null(strstr(r.err, "control.schedule"));
        tp_run_clear(&r);
    }
    tp_scratch_destroy(&sc);
}

/* ---- ranges and their defaults --------------------------------------------------------------- */

static void test_guard_without_ranges_uses_stated_defaults(void **state)
{
    /* The 230 V hotplate declares no guard: ranges. The defaults are supply +-5 %, heater
     * resistance +-5 % and a room of 15 to 30 degC (common practice, no source), so guard
     * runs 2^3 corners plus nominal and says which ranges are defaults. The ends, by hand:
     * 230 V x 0.95 = 218.5 V, x 1.05 = 241.5 V; 88 ohm x 0.95 = 83.6 ohm, x 1.05 = 92.4 ohm. */
    tp_scratch sc;
    tp_run_result r;
    char path[TP_TEST_PATH];
    cJSON *g, *rg, *def;
    (void)state;
    tp_scratch_create(&sc);
    tp_scratch_path(&sc, "defaults.json", path, sizeof path);
    {
        const char *args[] = {"guard", TP_SOURCE_DIR "/configs/lab-hotplate-230v.yaml", "--json",
                              path, NULL};
        tp_run_tepid(&sc, args, &r);
    }
    assert_int_equal(r.status, 0);
    tp_check_contains("summary", r.out, "supply 218.5 to 241.5 V (+-5 %, default)");
    tp_check_contains("summary", r.out, "heater resistance 83.6 to 92.4 ohm (+-5 %, default)");
    tp_check_contains("summary", r.out, "room 15 to 30 degC (default)");
    tp_check_contains("summary", r.out, "guard: declares no range for supply, resistance, room: "
                                        "the defaults (common practice, no source) stand in");
    tp_run_clear(&r);
    g = tp_read_json(path);
    assert_int_equal(cJSON_GetArraySize(cJSON_GetObjectItem(g, "corners")), 9);
    def = cJSON_GetObjectItem(g, "default_ranges");
    assert_int_equal(cJSON_GetArraySize(def), 3);
    assert_string_equal(cJSON_GetArrayItem(def, 0)->valuestring, "supply");
    assert_string_equal(cJSON_GetArrayItem(def, 1)->valuestring, "resistance");
    assert_string_equal(cJSON_GetArrayItem(def, 2)->valuestring, "room");
    rg = cJSON_GetObjectItem(g, "ranges");
    tp_check_abs("supply low", json_number(cJSON_GetObjectItem(rg, "supply_V"), "low"), 218.5,
                 1e-9);
    tp_check_abs("supply high", json_number(cJSON_GetObjectItem(rg, "supply_V"), "high"), 241.5,
                 1e-9);
    tp_check_abs("resistance low", json_number(cJSON_GetObjectItem(rg, "resistance_ohm"), "low"),
                 83.6, 1e-9);
    tp_check_abs("room low", json_number(cJSON_GetObjectItem(rg, "room_C"), "low"), 15.0, 1e-9);
    tp_check_abs("room high", json_number(cJSON_GetObjectItem(rg, "room_C"), "high"), 30.0,
                 1e-9);
    assert_string_equal(
        cJSON_GetObjectItem(cJSON_GetObjectItem(rg, "room_C"), "origin")->valuestring, "default");
    assert_string_equal(
        cJSON_GetObjectItem(cJSON_GetObjectItem(rg, "airflow_m_per_s"), "origin")->valuestring,
        "none");
    cJSON_Delete(g);
    /* The 24 V demo declares all four: no defaults, and no line saying so. */
    {
        const char *args[] = {"guard", TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml", "--json",
                              path, NULL};
        tp_run_tepid(&sc, args, &r);
    }
    assert_int_equal(r.status, 0);
    tp_check_contains("summary", r.out, "room 15 to 30 degC (declared)");
    assert_null(strstr(r.out, "stand in"));
    tp_run_clear(&r);
    g = tp_read_json(path);
    assert_int_equal(cJSON_GetArraySize(cJSON_GetObjectItem(g, "default_ranges")), 0);
    assert_int_equal(cJSON_GetArraySize(cJSON_GetObjectItem(g, "corners")), 17);
    cJSON_Delete(g);
    /* A range pinned to one value is declared, not defaulted: a fixed room of 22 degC leaves
     * supply and resistance to their defaults, 2^2 corners plus nominal. */
    {
        const char *args[] = {"guard", TP_SOURCE_DIR "/configs/lab-hotplate-230v.yaml", "--set",
                              "guard.room=[22 degC, 22 degC]", "--json", path, "-q", NULL};
        assert_int_equal(tp_run_status(&sc, args), 0);
    }
    g = tp_read_json(path);
    assert_int_equal(cJSON_GetArraySize(cJSON_GetObjectItem(g, "corners")), 5);
    assert_int_equal(cJSON_GetArraySize(cJSON_GetObjectItem(g, "default_ranges")), 2);
    cJSON_Delete(g);
    tp_scratch_destroy(&sc);
}

/* A heater given as sold: the resistance corners replace its rating (a corner given both a
 * resistance and a rating would be refused as an input error). The 230 V hotplate rated 600 W
 * at 230 V has R0 = 230^2 / 600 = 88.1667 ohm; +-5 % gives 83.76 to 92.58 ohm (hand
 * calculation). */
static void test_guard_runs_on_a_rated_heater(void **state)
{
    tp_scratch sc;
    tp_run_result r;
    char path[TP_TEST_PATH], *text, *at;
    (void)state;
    tp_scratch_create(&sc);
    text = tp_read_file(TP_SOURCE_DIR "/configs/lab-hotplate-230v.yaml");
    assert_non_null(text);
    at = strstr(text, "resistance: 88 ohm");
    assert_non_null(at);
    {
        char *cfg = malloc(strlen(text) + 64);
        assert_non_null(cfg);
        memcpy(cfg, text, (size_t)(at - text));
        strcpy(cfg + (at - text), "rated_power: 600 W, rated_voltage: 230 V");
        strcat(cfg, at + strlen("resistance: 88 ohm"));
        tp_scratch_write(&sc, "rated.yaml", cfg, path);
        free(cfg);
    }
    free(text);
    {
        const char *args[] = {"guard", path, NULL};
        tp_run_tepid(&sc, args, &r);
    }
    if (r.status != 0)
        print_error("stderr: %s\n", r.err);
    assert_int_equal(r.status, 0);
    tp_check_contains("summary", r.out, "heater 600.0 W at 230.0 V rated;");
    tp_check_contains("summary", r.out, "heater resistance 83.76 to 92.58 ohm (+-5 %, default)");
    tp_run_clear(&r);
    tp_scratch_destroy(&sc);
}

/* ---- gridded plates ------------------------------------------------------------------------- */

static void test_guard_runs_on_a_gridded_plate(void **state)
{
    /* Guard once crashed on every gridded plate (its hand-made copy of the network lost the
     * grid). On a 3 x 3 grid its stuck-on equilibrium must be `steady`'s full-power state of
     * the same grid (the heater's cells at full power, the sensor read on its cell): both solve
     * one network, so they agree to the solver's tolerance, 1e-6 K. */
    tp_scratch sc;
    char gj[TP_TEST_PATH], sj[TP_TEST_PATH];
    cJSON *g, *s, *gn, *it;
    int count = 0, detached = 0;
    (void)state;
    tp_scratch_create(&sc);
    tp_scratch_path(&sc, "grid-guard.json", gj, sizeof gj);
    tp_scratch_path(&sc, "grid-steady.json", sj, sizeof sj);
    {
        const char *args[] = {"guard", HOT_PLATE, "--set", "bed.grid=[3, 3]", "--json", gj,
                              "-q",    NULL};
        assert_int_equal(tp_run_status(&sc, args), 0);
    }
    {
        const char *args[] = {"steady", HOT_PLATE, "--set", "bed.grid=[3, 3]", "--set",
                              "control.mode=full", "--json", sj, "-q", NULL};
        assert_int_equal(tp_run_status(&sc, args), 0);
    }
    g = tp_read_json(gj);
    s = tp_read_json(sj);
    gn = cJSON_GetObjectItem(cJSON_GetObjectItem(g, "stuck_on"), "nodes_C");
    assert_non_null(gn);
    cJSON_ArrayForEach(it, cJSON_GetObjectItem(s, "nodes_C")) {
        tp_check_abs(it->string, json_number(gn, it->string), it->valuedouble, 1e-6);
        count++;
    }
    assert_true(count >= 3 * 9); /* three layers of nine cells at least */
    /* The sensor is a node of its own on its cell: detaching it applies, from both starts,
     * and the recommended checks catch it before the laminate passes 150 degC, as on the
     * lumped plate (test_detached_sensor_caught_before_the_limit). */
    cJSON_ArrayForEach(it, cJSON_GetObjectItem(g, "faults")) {
        if (strcmp(cJSON_GetObjectItem(it, "fault")->valuestring, "sensor-detached") != 0)
            continue;
        assert_true(cJSON_IsTrue(cJSON_GetObjectItem(it, "applicable")));
        if (cJSON_IsNumber(cJSON_GetObjectItem(it, "limit_crossed_s")))
            assert_true(json_number(it, "first_detection_s") <
                        json_number(it, "limit_crossed_s"));
        detached++;
    }
    assert_int_equal(detached, 2);
    cJSON_Delete(g);
    cJSON_Delete(s);
    tp_scratch_destroy(&sc);
}

static void test_a_cold_sheet_dips_a_gridded_plate(void **state)
{
    /* The 24 V demo lays a cold 150 J/K sheet on the plate during hold. On a gridded plate it
     * lands on the top cells (in proportion to their area) and takes their heat, so the
     * reading dips. Hand calculation: the sheet at room temperature (20 degC) takes
     * 150 J/K x 70 K = 10.5 kJ from a plate at 90 degC; shared with the pad, plate, magnet and
     * sheet layers (87 + 793 + 123 + 115 = 1118 J/K, `tepid explain` of the demo) that is
     * 10.5 kJ / (1118 + 150) J/K = 8.3 K before the heater answers. A dip of more than 2 K is a
     * loose lower bound. A negligible sheet (1 mJ/K) takes nothing; what remains is the gust,
     * which the PID holds closely, so the two dips differ by more than 2 K. Before the fix the
     * sheet did nothing on a grid (and guard crashed first). */
    tp_scratch sc;
    char path[TP_TEST_PATH];
    double dip, dip_none;
    cJSON *g;
    (void)state;
    tp_scratch_create(&sc);
    tp_scratch_path(&sc, "sheet.json", path, sizeof path);
    {
        const char *args[] = {"guard", TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml", "--set",
                              "bed.grid=[3, 3]", "--json", path, "-q", NULL};
        assert_int_equal(tp_run_status(&sc, args), 0);
    }
    g = tp_read_json(path);
    dip = json_number(cJSON_GetArrayItem(cJSON_GetObjectItem(g, "corners"), 0), "deepest_dip_K");
    cJSON_Delete(g);
    {
        const char *args[] = {"guard", TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml", "--set",
                              "bed.grid=[3, 3]", "--set", "guard.sheet.capacity=0.001 J/K",
                              "--json", path, "-q", NULL};
        assert_int_equal(tp_run_status(&sc, args), 0);
    }
    g = tp_read_json(path);
    dip_none = json_number(cJSON_GetArrayItem(cJSON_GetObjectItem(g, "corners"), 0),
                           "deepest_dip_K");
    cJSON_Delete(g);
    assert_true(dip > 2.0);
    assert_true(dip > dip_none + 2.0);
    tp_scratch_destroy(&sc);
}

/* ---- healthy corners re-simulated with the checks ------------------------------------------- */

typedef struct series {
    double t[4096], r[4096];
    long n;
} series;

static int keep(void *user, const tp_sample *s)
{
    series *se = user;
    if (se->n < 4096) {
        se->t[se->n] = s->t;
        se->r[se->n] = s->reading;
        se->n++;
    }
    return 0;
}

static void test_healthy_corners_never_trip_recommended_settings(void **state)
{
    tp_yamltree *doc = NULL;
    tp_description desc;
    tp_diag d;
    tp_guard_study *st = calloc(1, sizeof *st);
    series *se = calloc(1, sizeof *se);
    int c;
    (void)state;
    assert_non_null(st);
    assert_non_null(se);
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_config_load(HOT_PLATE, NULL, 0, &doc, &desc, &d), TP_OK);
    assert_int_equal(tp_guard_study_run(&desc, doc, NULL, st, &d), TP_OK);
    assert_int_equal(st->n_corners, 17); /* 2^4 ends plus nominal */
    for (c = 0; c < st->n_corners; c++) {
        const tp_guard_corner *co = &st->corners[c];
        tp_description cd;
        const tp_network *net = NULL;
        tp_integrate_opts o;
        tp_integrate_stats stats;
        tp_guard_detect det;
        tp_diag quiet;
        /* Set the corner by its config keys (independent of the study's own path) and run
         * one uninterrupted warm-up, sampled at every tick, for run.duration. */
        assert_int_equal(tp_config_copy(&cd, &desc), TP_OK);
        assert_int_equal(tp_config_set(&cd, "heater.supply", co->supply), TP_OK);
        assert_int_equal(tp_config_set(&cd, "heater.resistance", co->resistance), TP_OK);
        assert_int_equal(tp_config_set(&cd, "room.temperature", co->room), TP_OK);
        assert_int_equal(tp_config_set(&cd, "room.airflow", co->airflow), TP_OK);
        tp_diag_init(&quiet, NULL);
        assert_int_equal(tp_assemble(&cd, doc, &quiet, &net), TP_OK);
        tp_integrate_defaults(&cd.run, &o);
        o.step = net->control.period;
        o.out = keep;
        o.user = se;
        se->n = 0;
        assert_int_equal(tp_integrate(net, &o, &stats, &quiet), TP_OK);
        assert_true(se->n > 100);
        det = tp_guard_check(se->t, se->r, se->n, st->setpoint, 0, &st->rec);
        if (isfinite(tp_guard_first(&det)))
            fail_msg("corner '%s' trips: rise %g hold %g ceiling %g", co->name, det.rise,
                     det.hold, det.ceiling);
        tp_network_release(&net);
        tp_config_clear(&cd);
    }
    assert_int_equal(st->healthy_trips, 0);
    tp_guard_study_clear(st);
    free(st);
    free(se);
    tp_config_clear(&desc);
    tp_yamltree_destroy(&doc);
}

static int teardown(void **state)
{
    (void)state;
    tp_materials_shutdown();
    tp_units_shutdown();
    return 0;
}

/* ---- threads ---------------------------------------------------------------------------------- */

/* The corners and fault runs go to threads (src/base/parallel.h); each writes only its own
 * record, so the answer cannot depend on how many there are: the JSON and the text of one
 * thread and of three are the same, byte for byte, on a gridded plate and on the reflow
 * programme (mid-ramp and mid-hold faults included). */
static void test_guard_answer_does_not_depend_on_threads(void **state)
{
    static const char *const cfgs[][3] = {
        {TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml", "--set", "bed.grid=[4, 4]"},
        {TP_SOURCE_DIR "/configs/reflow-hotplate-230v.yaml", NULL, NULL},
    };
    tp_scratch sc;
    size_t c;
    (void)state;
    tp_scratch_create(&sc);
    for (c = 0; c < sizeof cfgs / sizeof cfgs[0]; c++) {
        char path[2][TP_TEST_PATH];
        char *json[2], *out[2];
        int j;
        for (j = 0; j < 2; j++) {
            tp_run_result r;
            const char *args[] = {"guard", cfgs[c][0], "--json", path[j], cfgs[c][1],
                                  cfgs[c][2], NULL};
            tp_scratch_path(&sc, j ? "three.json" : "one.json", path[j], sizeof path[j]);
            assert_int_equal(setenv("TEPID_JOBS", j ? "3" : "1", 1), 0);
            tp_run_tepid(&sc, args, &r);
            assert_int_equal(r.status, 0);
            out[j] = strdup(r.out);
            tp_run_clear(&r);
            json[j] = tp_read_file(path[j]);
            assert_non_null(json[j]);
            assert_non_null(out[j]);
        }
        assert_string_equal(json[0], json[1]);
        assert_string_equal(out[0], out[1]);
        for (j = 0; j < 2; j++) {
            free(json[j]);
            free(out[j]);
        }
    }
    unsetenv("TEPID_JOBS");
    tp_scratch_destroy(&sc);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_rise_check_fires_when_the_window_rise_falls_short),
        cmocka_unit_test(test_rise_check_restarts_its_window_after_disarming),
        cmocka_unit_test(test_hold_check_counts_the_stay_below_the_band),
        cmocka_unit_test(test_ceiling_fires_above_not_at),
        cmocka_unit_test(test_rise_recommendation_matches_first_order_closed_form),
        cmocka_unit_test(test_stuck_on_equilibrium_equals_steady),
        cmocka_unit_test(test_detached_sensor_caught_before_the_limit),
        cmocka_unit_test(test_healthy_corners_never_trip_recommended_settings),
        cmocka_unit_test(test_guard_without_ranges_uses_stated_defaults),
        cmocka_unit_test(test_guard_runs_on_a_rated_heater),
        cmocka_unit_test(test_guard_runs_on_a_gridded_plate),
        cmocka_unit_test(test_a_cold_sheet_dips_a_gridded_plate),
        cmocka_unit_test(test_series_checks_follow_a_moving_setpoint),
        cmocka_unit_test(test_schedule_faults_on_one_node_match_the_energy_balance),
        cmocka_unit_test(test_reflow_schedule_no_false_trip_and_faults_caught),
        cmocka_unit_test(test_schedule_guard_on_raw_and_gridded_forms),
        cmocka_unit_test(test_guard_answer_does_not_depend_on_threads),
    };
    return cmocka_run_group_tests(tests, NULL, teardown);
}
