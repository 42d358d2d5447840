/* Tests of the caution records (src/study/caution.h) and their words (src/output/summary.h): which
 * cautions a case gets from its supply and what a run saw, the order of a list, the aggregation
 * rules a sweep uses, and the sentences that quote the figures. */
#include "tp_test.h"

#include "budget.h"
#include "caution.h"
#include "summary.h"

/* A raw plate with one electric heater of 100 ohm on `supply`. */
static void open_plate(tp_yaml_net *y, const char *supply)
{
    char source[128];
    snprintf(source, sizeof source, "supply: %s, resistance: 100 ohm", supply);
    tp_yaml_net_plate(y, source, "");
}

/* Nothing seen on an extra-low-voltage plate: the cut-out line alone, always last. */
static void test_caution_unseen_low_voltage_has_the_cutout_only(void **state)
{
    tp_yaml_net y;
    tp_caution_exposure ex = TP_CAUTION_UNSEEN;
    tp_caution list[TP_CAUTIONS_MAX];
    (void)state;
    open_plate(&y, "24 V");
    assert_int_equal(tp_caution_list(&y.desc, y.net, &ex, list), 1);
    assert_int_equal(list[0].kind, TP_CAUTION_CUTOUT);
    tp_yaml_net_close(&y);
}

/* Above 43 degC a surface burns on long contact (EN ISO 13732-1, from memory): 44 degC gets the
 * hot-surface caution quoting it, 42 degC does not. Above 10 A on extra-low voltage the
 * current caution (common practice, no source) quotes the current and the supply. */
static void test_caution_thresholds_and_figures(void **state)
{
    tp_yaml_net y;
    tp_caution_exposure ex = TP_CAUTION_UNSEEN;
    tp_caution list[TP_CAUTIONS_MAX];
    int n;
    (void)state;
    open_plate(&y, "24 V");
    ex.surface_max = TP_KELVIN_0C + 42.0;
    assert_int_equal(tp_caution_list(&y.desc, y.net, &ex, list), 1);
    ex.surface_max = TP_KELVIN_0C + 44.0;
    ex.current_max = 12.5;
    n = tp_caution_list(&y.desc, y.net, &ex, list);
    assert_int_equal(n, 3);
    assert_int_equal(list[0].kind, TP_CAUTION_HOT_SURFACE);
    tp_check_abs("hottest", list[0].value[0], TP_KELVIN_0C + 44.0, 1e-12);
    assert_int_equal(list[1].kind, TP_CAUTION_HIGH_CURRENT);
    tp_check_abs("current", list[1].value[0], 12.5, 1e-12);
    tp_check_abs("supply", list[1].value[1], 24.0, 1e-12);
    assert_int_equal(list[2].kind, TP_CAUTION_CUTOUT);
    tp_yaml_net_close(&y);
}

/* Above 50 V the supply is mains (IEC 61140's extra-low-voltage limit, from memory): the mains
 * caution takes the place of the current one. */
static void test_caution_mains_supply(void **state)
{
    tp_yaml_net y;
    tp_caution_exposure ex = TP_CAUTION_UNSEEN;
    tp_caution list[TP_CAUTIONS_MAX];
    char text[TP_SUMMARY_CAUTION_MAX];
    (void)state;
    open_plate(&y, "230 V");
    ex.current_max = 12.5;
    assert_int_equal(tp_caution_list(&y.desc, y.net, &ex, list), 2);
    assert_int_equal(list[0].kind, TP_CAUTION_MAINS);
    tp_summary_caution_text(&list[0], text, sizeof text);
    tp_check_contains("mains caution", text, "Mains voltage (230 V)");
    tp_check_contains("mains caution", text, "local electrical codes");
    tp_yaml_net_close(&y);
}

/* The sentences quote the records' figures in degC, with the burn thresholds of EN ISO 13732-1
 * (65 degC within a second, 43 degC on long contact; from memory). */
static void test_caution_words(void **state)
{
    tp_caution c;
    char text[TP_SUMMARY_CAUTION_MAX];
    (void)state;
    memset(&c, 0, sizeof c);
    c.kind = TP_CAUTION_HOT_SURFACE;
    c.value[0] = TP_KELVIN_0C + 92.4;
    tp_summary_caution_text(&c, text, sizeof text);
    tp_check_contains("hot surface", text, "the plate reaches 92 degC");
    tp_check_contains("hot surface", text, "above about 65 degC burns within a second");
    tp_check_contains("hot surface", text, "above 43 degC with long contact");
    c.kind = TP_CAUTION_SERVICE_LIMIT;
    c.value[0] = TP_KELVIN_0C + 80.0;
    c.value[1] = TP_KELVIN_0C + 94.2;
    snprintf(c.layer_id, sizeof c.layer_id, "magnet");
    snprintf(c.material, sizeof c.material, "magnet-sheet");
    tp_summary_caution_text(&c, text, sizeof text);
    assert_string_equal(text, "Service limit: layer 'magnet' (magnet-sheet) is rated to about "
                              "80 degC and reaches 94 degC here.");
    c.kind = TP_CAUTION_POWER_DENSITY;
    c.value[0] = 1.5e4; /* W/m2 = 1.50 W/cm2 */
    c.value[1] = 1.0e4; /* W/m2: the record's limit, quoted */
    snprintf(c.material, sizeof c.material, "silicone-rubber");
    tp_summary_caution_text(&c, text, sizeof text);
    tp_check_contains("density", text, "Heater power density 1.50 W/cm2 in a silicone-rubber");
    tp_check_contains("density", text, "above about 1 W/cm2 a flexible heater");
}

/* A 10 x 10 cm silicone-rubber pad heated by `heater` in a 15 degC room. */
static void open_pad(tp_yaml_net *y, const char *heater)
{
    char text[1024];
    int n = snprintf(text, sizeof text,
                     "room: {temperature: 15 degC}\n"
                     "bed:\n"
                     "  size: [100 mm, 100 mm]\n"
                     "  layers:\n"
                     "    - {id: pad, material: silicone-rubber, thickness: 1.5 mm}\n"
                     "    - {id: plate, material: aluminium-6061, thickness: 4 mm}\n"
                     "heater: {layer: pad, %s}\n"
                     "sensor: {layer: plate, coupling: 0.05 W/K, capacity: 0.2 J/K}\n"
                     "control: {mode: on-off, setpoint: 60 degC, band: 2 K}\n",
                     heater);
    assert_true(n > 0 && (size_t)n < sizeof text);
    if (tp_yaml_net_open(y, text) != TP_OK)
        print_error("%s", y->diag.log);
    assert_non_null(y->net);
}

/* The density caution quotes the heater's power full on from cold, the figure every header
 * states and `budget` checks against the same limit, so the two agree. */
static void test_caution_power_density_is_the_cold_start_power(void **state)
{
    static const char *heaters[] = {
        /* 2.4 ohm x (1 + 0.0039 x (15 - 20)) = 2.3532 ohm cold, with 0.1 ohm in series:
         * I = 24 / 2.4532 = 9.78314 A, P = I^2 x 2.3532 = 225.224 W over 0.01 m2 = 2.25224
         * W/cm2 (hand calculation); supply^2 / resistance would say 2.40. */
        "supply: 24 V, resistance: 2.4 ohm, tempco: 0.0039 1/K, reference: 20 degC, "
        "supply_resistance: 0.1 ohm",
        /* Sold as 240 W at 24 V, no tempco: 240 W over 0.01 m2 = 2.4 W/cm2 (closed form). */
        "rated_power: 240 W, rated_voltage: 24 V",
    };
    static const double expected[] = {2.2522438572829e4, 2.4e4}; /* W/m2 */
    size_t k;
    (void)state;
    for (k = 0; k < sizeof heaters / sizeof heaters[0]; k++) {
        tp_yaml_net y;
        tp_caution_exposure ex = TP_CAUTION_UNSEEN;
        tp_caution list[TP_CAUTIONS_MAX];
        tp_budget b;
        int i, n, found = -1;
        open_pad(&y, heaters[k]);
        n = tp_caution_list(&y.desc, y.net, &ex, list);
        for (i = 0; i < n; i++)
            if (list[i].kind == TP_CAUTION_POWER_DENSITY)
                found = i;
        assert_true(found >= 0);
        tp_check_rel("density", list[found].value[0], expected[k], 1e-9);
        /* 1 W/cm2 for flexible heaters (common practice, no source; heater.h). */
        tp_check_rel("limit", list[found].value[1], 1.0e4, 1e-12);
        assert_string_equal(list[found].material, "silicone-rubber");
        assert_int_equal(tp_budget_compute(&y.desc, y.net, &b, &y.diag), TP_OK);
        tp_check_rel("budget's density", b.density, list[found].value[0], 1e-12);
        tp_check_rel("budget's limit", b.density_limit, list[found].value[1], 1e-12);
        tp_yaml_net_close(&y);
    }
}

/* What a sweep aggregates by: the same caution is the same kind, layer and material whatever
 * its figures; the worse one has the larger figures in order; a list sorts by kind, then
 * layer. */
static void test_caution_same_worse_and_order(void **state)
{
    tp_caution a, b, list[3];
    (void)state;
    memset(&a, 0, sizeof a);
    a.kind = TP_CAUTION_SERVICE_LIMIT;
    a.layer = 2;
    snprintf(a.material, sizeof a.material, "cork-board");
    a.value[0] = 400.0;
    a.value[1] = 395.0;
    b = a;
    b.value[1] = 397.0;
    assert_true(tp_caution_same(&a, &b));
    assert_true(tp_caution_worse(&b, &a));
    assert_false(tp_caution_worse(&a, &b));
    assert_false(tp_caution_worse(&a, &a));
    b.layer = 1;
    assert_false(tp_caution_same(&a, &b));
    list[0] = a;
    list[1] = b;
    memset(&list[2], 0, sizeof list[2]);
    list[2].kind = TP_CAUTION_HOT_SURFACE;
    list[2].layer = -1;
    qsort(list, 3, sizeof list[0], tp_caution_compare);
    assert_int_equal(list[0].kind, TP_CAUTION_HOT_SURFACE);
    assert_int_equal(list[1].layer, 1);
    assert_int_equal(list[2].layer, 2);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_caution_unseen_low_voltage_has_the_cutout_only),
        cmocka_unit_test(test_caution_thresholds_and_figures),
        cmocka_unit_test(test_caution_mains_supply),
        cmocka_unit_test(test_caution_words),
        cmocka_unit_test(test_caution_power_density_is_the_cold_start_power),
        cmocka_unit_test(test_caution_same_worse_and_order),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
