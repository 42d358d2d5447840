/* Tests of the report text (src/output/summary.c): durations, the network line with and without
 * a controller, the conditions line with its currents and powers against hand calculations, the
 * words of every caution kind with the figures they quote, the caution block's layout, and
 * metric values in their text units. (test_caution.c checks which cautions apply.) */
#include "tp_test.h"

#include "caution.h"
#include "metricdef.h"
#include "summary.h"

/* What a printing function writes, as a string (the caller frees). */
typedef struct capture {
    char *text;
    size_t size;
    FILE *fp;
} capture;

static void capture_open(capture *c)
{
    c->text = NULL;
    c->size = 0;
    c->fp = open_memstream(&c->text, &c->size);
    assert_non_null(c->fp);
}

static char *capture_close(capture *c)
{
    assert_int_equal(fclose(c->fp), 0);
    return c->text;
}

/* Durations: under a minute with a tenth of a second, under an hour in minutes and seconds
 * (seconds truncated, two digits), beyond in hours and minutes; "-" for no value. */
static void test_summary_durations(void **state)
{
    static const struct {
        double s;
        const char *text;
    } cases[] = {
        {0.0, "0.0 s"},
        {45.04, "45.0 s"},
        {59.9, "59.9 s"},
        {60.0, "1 min 00 s"},
        {372.0, "6 min 12 s"},    /* 6 x 60 + 12 */
        {439.7, "7 min 19 s"},    /* truncated, not rounded */
        {3599.0, "59 min 59 s"},
        {3600.0, "1 h 00 min"},
        {3720.0, "1 h 02 min"},   /* 62 min */
        {7199.0, "1 h 59 min"},
        {(double)NAN, "-"},
        {(double)INFINITY, "-"},
    };
    char buf[64];
    size_t i;
    (void)state;
    for (i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        tp_summary_duration(cases[i].s, buf, sizeof buf);
        assert_string_equal(buf, cases[i].text);
    }
}

/* The network line: counts (the one-node plate of tp_yaml_net_plate: 2 nodes, 1 with capacity,
 * 1 link, 1 source) and the controller: a setpoint only when it holds one. */
static void test_summary_network_line(void **state)
{
    static const struct {
        const char *tail, *text;
    } cases[] = {
        {"", "network: 2 nodes (1 with capacity), 1 links, 1 source\n"},
        {"control: {source: pad, sensor: plate, mode: on-off, setpoint: 85 degC}\n",
         "network: 2 nodes (1 with capacity), 1 links, 1 source; on-off control of 'pad' "
         "reading 'plate' at 85.0 degC\n"},
        {"control: {source: pad, sensor: plate, mode: off}\n",
         "network: 2 nodes (1 with capacity), 1 links, 1 source; the controller holds 'pad' "
         "off (mode off)\n"},
        {"control: {source: pad, sensor: plate, mode: full}\n",
         "network: 2 nodes (1 with capacity), 1 links, 1 source; the controller keeps 'pad' "
         "full on (mode full)\n"},
    };
    size_t i;
    (void)state;
    for (i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        tp_yaml_net y;
        capture c;
        char *text;
        tp_yaml_net_plate(&y, "power: 120 W", cases[i].tail);
        capture_open(&c);
        tp_summary_network_line(c.fp, y.net);
        text = capture_close(&c);
        assert_string_equal(text, cases[i].text);
        free(text);
        tp_yaml_net_close(&y);
    }
}

/* The conditions line, by hand:
 *   constant power: "120.0 W (constant power)";
 *   24 V across 4.8 ohm: I = 24 / 4.8 = 5.00 A, P = 24 x 5 = 120.0 W full on from cold (the
 *   tempco's reference is the initial 21 degC, so R is 4.8 ohm at the start). The room is the
 *   fixed node `room`. */
static void test_summary_conditions_by_hand(void **state)
{
    static const struct {
        const char *source, *text;
    } cases[] = {
        {"power: 120 W", "  room 21.0 degC; heater 'pad' 120.0 W (constant power)\n"},
        {"supply: 24 V, resistance: 4.8 ohm",
         "  room 21.0 degC; heater 'pad' 24.0 V across 4.800 ohm: 5.00 A, 120.0 W full on from "
         "cold\n"},
    };
    size_t i;
    (void)state;
    for (i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        tp_yaml_net y;
        capture c;
        char *text;
        tp_yaml_net_plate(&y, cases[i].source, "");
        capture_open(&c);
        tp_summary_conditions(c.fp, y.net);
        text = capture_close(&c);
        assert_string_equal(text, cases[i].text);
        free(text);
        tp_yaml_net_close(&y);
    }
}

/* A raw network without a node named room lists its fixed nodes as boundaries. */
static void test_summary_conditions_boundaries(void **state)
{
    static const char text[] = "network:\n"
                               "  nodes:\n"
                               "    - {id: plate, capacity: 640 J/K, initial: 21 degC}\n"
                               "    - {id: floor, fixed: 15 degC}\n"
                               "    - {id: wall, fixed: 25 degC}\n"
                               "  links:\n"
                               "    - {between: [plate, floor], conductance: 1 W/K}\n"
                               "    - {between: [plate, wall], conductance: 1 W/K}\n"
                               "  sources:\n"
                               "    - {id: heater, node: plate, power: 60 W}\n"
                               "run: {duration: 10 s, step: 1 s}\n";
    tp_yaml_net y;
    capture c;
    char *out;
    (void)state;
    if (tp_yaml_net_open(&y, text) != TP_OK) {
        print_error("%s", y.diag.log);
        fail();
    }
    capture_open(&c);
    tp_summary_conditions(c.fp, y.net);
    out = capture_close(&c);
    /* The source named "heater" is not named again. */
    assert_string_equal(out, "  boundaries floor 15.0 degC, wall 25.0 degC; heater 60.0 W "
                             "(constant power)\n");
    free(out);
    tp_yaml_net_close(&y);
}

/* Every caution kind's words with its figures: temperatures in degC (K - 273.15), power
 * densities in W/cm2 (W/m2 x 1e-4), the EN ISO 13732-1 thresholds of caution.h (65 and 43
 * degC), and each safety text's key advice. */
static void test_summary_caution_words(void **state)
{
    tp_caution c;
    char buf[TP_SUMMARY_CAUTION_MAX];
    (void)state;
    memset(&c, 0, sizeof c);
    c.kind = TP_CAUTION_HOT_SURFACE;
    c.value[0] = 100.0 + TP_TEST_KELVIN;
    tp_summary_caution_text(&c, buf, sizeof buf);
    tp_check_contains("hot", buf, "Hot surface: the plate reaches 100 degC.");
    tp_check_contains("hot", buf, "above about 65 degC burns within a second");
    tp_check_contains("hot", buf, "above 43 degC with long contact");
    tp_check_contains("hot", buf, "EN ISO 13732-1");

    memset(&c, 0, sizeof c);
    c.kind = TP_CAUTION_MAINS;
    c.value[0] = 230.0;
    tp_summary_caution_text(&c, buf, sizeof buf);
    tp_check_contains("mains", buf, "Mains voltage (230 V)");
    tp_check_contains("mains", buf, "residual-current device");
    tp_check_contains("mains", buf, "local electrical codes");

    memset(&c, 0, sizeof c);
    c.kind = TP_CAUTION_HIGH_CURRENT;
    c.value[0] = 12.54;
    c.value[1] = 24.0;
    tp_summary_caution_text(&c, buf, sizeof buf);
    tp_check_contains("current", buf, "High current (12.5 A at 24 V)");

    memset(&c, 0, sizeof c);
    c.kind = TP_CAUTION_SERVICE_LIMIT;
    c.value[0] = 80.0 + TP_TEST_KELVIN;
    c.value[1] = 95.4 + TP_TEST_KELVIN;
    snprintf(c.layer_id, sizeof c.layer_id, "magnet");
    snprintf(c.material, sizeof c.material, "magnet-sheet");
    tp_summary_caution_text(&c, buf, sizeof buf);
    assert_string_equal(buf, "Service limit: layer 'magnet' (magnet-sheet) is rated to about 80 "
                             "degC and reaches 95 degC here.");

    memset(&c, 0, sizeof c);
    c.kind = TP_CAUTION_POWER_DENSITY;
    c.value[0] = 25000.0; /* W/m2: 2.50 W/cm2 */
    c.value[1] = 40000.0; /* 4 W/cm2 */
    snprintf(c.material, sizeof c.material, "silicone-rubber");
    tp_summary_caution_text(&c, buf, sizeof buf);
    tp_check_contains("density", buf,
                      "Heater power density 2.50 W/cm2 in a silicone-rubber layer: above "
                      "about 4 W/cm2");

    memset(&c, 0, sizeof c);
    c.kind = TP_CAUTION_CUTOUT;
    tp_summary_caution_text(&c, buf, sizeof buf);
    tp_check_contains("cut-out", buf, "independent over-temperature cut-out");
    tp_check_contains("cut-out", buf, "never leave a heating plate unattended");

    memset(&c, 0, sizeof c);
    c.kind = TP_CAUTION_GUARD_CUTOUT;
    tp_summary_caution_text(&c, buf, sizeof buf);
    tp_check_contains("guard", buf, "never replace an independent hardware cut-out");
}

/* The caution block: a blank line, the heading with a colon, one "  ! " line per caution. */
static void test_summary_caution_block(void **state)
{
    tp_caution list[2];
    char one[TP_SUMMARY_CAUTION_MAX], two[TP_SUMMARY_CAUTION_MAX], want[1024];
    capture c;
    char *out;
    (void)state;
    memset(list, 0, sizeof list);
    list[0].kind = TP_CAUTION_MAINS;
    list[0].value[0] = 120.0;
    list[1].kind = TP_CAUTION_CUTOUT;
    tp_summary_caution_text(&list[0], one, sizeof one);
    tp_summary_caution_text(&list[1], two, sizeof two);
    snprintf(want, sizeof want, "\nCautions:\n  ! %s\n  ! %s\n", one, two);
    capture_open(&c);
    tp_summary_cautions(c.fp, "Cautions", list, 2);
    out = capture_close(&c);
    assert_string_equal(out, want);
    free(out);
}

/* Metric values in their text units (metricdef.h: text value = (SI - offset) x scale with the
 * row's decimals): a time as a duration, a temperature in degC, a spread of a temperature
 * without the offset (an interval), a missing value as "-". */
static void test_summary_metric_text(void **state)
{
    const tp_metricdef *t = tp_metricdef_get(TP_MET_TIME_SETPOINT);
    const tp_metricdef *s = tp_metricdef_get(TP_MET_SURFACE_MAX);
    char buf[64], want[64];
    (void)state;
    assert_non_null(t);
    assert_non_null(s);
    tp_summary_metric(t, 440.0, buf, sizeof buf);
    assert_string_equal(buf, "7 min 20 s");
    tp_summary_metric(t, (double)NAN, buf, sizeof buf);
    assert_string_equal(buf, "-");
    /* 368.15 K is 95 degC; the spread 2.5 K stays 2.5 (K and degC intervals are equal). */
    assert_string_equal(s->text_unit, "degC");
    tp_summary_metric(s, 95.0 + TP_TEST_KELVIN, buf, sizeof buf);
    snprintf(want, sizeof want, "%.*f", s->decimals, 95.0);
    assert_string_equal(buf, want);
    tp_summary_metric_spread(s, 2.5, buf, sizeof buf);
    snprintf(want, sizeof want, "%.*f", s->decimals, 2.5);
    assert_string_equal(buf, want);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_summary_durations),
        cmocka_unit_test(test_summary_network_line),
        cmocka_unit_test(test_summary_conditions_by_hand),
        cmocka_unit_test(test_summary_conditions_boundaries),
        cmocka_unit_test(test_summary_caution_words),
        cmocka_unit_test(test_summary_caution_block),
        cmocka_unit_test(test_summary_metric_text),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
