/* Tests of the metric table (src/study/metricdef.h): each row reads the field of a run's metrics it
 * names, its key carries its file unit, and the warm-up and tune JSON write every row they
 * report under the table's key and in the table's file unit. */
#include "tp_test.h"

#include "metricdef.h"
#include "warmup.h"

/* The key, and the field of tp_metrics it must read, written out here by hand (the reference
 * the table's offsets are checked against). */
typedef struct row {
    int metric;
    const char *key;
    double *field;
} row;

static void test_metrics_rows_read_their_fields(void **state)
{
    tp_metrics m;
    const row rows[] = {
        {TP_MET_TIME_SETPOINT, "time_to_setpoint_s", &m.t_setpoint},
        {TP_MET_TIME_READY, "time_surface_ready_s", &m.t_surface_ready},
        {TP_MET_OVERSHOOT_READING, "overshoot_reading_K", &m.overshoot_reading},
        {TP_MET_OVERSHOOT_SURFACE, "overshoot_surface_K", &m.overshoot_surface},
        {TP_MET_STEADY_OFFSET, "steady_offset_K", &m.steady_offset},
        {TP_MET_LAG, "lag_s", &m.lag},
        {TP_MET_ENERGY_READY, "energy_to_ready_J", &m.energy_to_ready},
        {TP_MET_POWER_MEAN, "power_mean_W", &m.power_mean},
        {TP_MET_POWER_PEAK, "power_peak_W", &m.power_peak},
        {TP_MET_CURRENT_PEAK, "current_peak_A", &m.current_peak},
        {TP_MET_SURFACE_MAX, "surface_max_C", &m.surface_max},
        {TP_MET_HOLD_POWER, "holding_power_W", &m.hold_power},
        {TP_MET_HOLD_DUTY, "holding_duty", &m.hold_duty},
        {TP_MET_MARGIN, "margin", &m.margin},
        {TP_MET_HIGHEST, "highest_reachable_C", &m.highest_reachable},
        {TP_MET_SETPOINT, "setpoint_C", &m.setpoint},
        {TP_MET_SURFACE_HOLD, "surface_hold_C", &m.surface_hold},
        {TP_MET_LAG_K, "lag_K", &m.lag_k},
        {TP_MET_DUTY_MEAN, "duty_mean", &m.duty_mean},
        {TP_MET_DUTY_PEAK, "duty_peak", &m.duty_peak},
        {TP_MET_WIRE_MEAN, "wiring_loss_mean_W", &m.wire_mean},
        {TP_MET_AIR_FINAL, "air_final_C", &m.air_final},
        {TP_MET_DURATION, "duration_s", &m.duration},
    };
    size_t i;
    (void)state;
    assert_int_equal(sizeof rows / sizeof rows[0], TP_MET_COUNT);
    memset(&m, 0, sizeof m);
    for (i = 0; i < sizeof rows / sizeof rows[0]; i++)
        *rows[i].field = 100.0 + (double)i;
    for (i = 0; i < sizeof rows / sizeof rows[0]; i++) {
        const tp_metricdef *md = tp_metricdef_get(rows[i].metric);
        assert_non_null(md);
        assert_string_equal(md->key, rows[i].key);
        tp_check_abs(md->key, tp_metricdef_value(md, &m), 100.0 + (double)i, 0.0);
        /* degC in files: the value less 273.15 K (BIPM SI Brochure, 9th ed., 2.3.1). */
        tp_check_abs(md->key, tp_metricdef_file_value(md, 300.0),
                     strcmp(md->file_unit, "degC") == 0 ? 300.0 - TP_TEST_KELVIN : 300.0, 1e-12);
    }
    assert_null(tp_metricdef_get(TP_MET_COUNT));
}

/* Only the metrics a sweep studies can be asked for by --metric. */
static void test_metrics_sweep_keys(void **state)
{
    char keys[2048];
    (void)state;
    assert_int_equal(tp_metricdef_find("time_surface_ready_s"), TP_MET_TIME_READY);
    assert_int_equal(tp_metricdef_find("margin"), TP_MET_MARGIN);
    assert_int_equal(tp_metricdef_find("duty_mean"), -1);
    tp_metricdef_keys(keys, sizeof keys);
    tp_check_contains("keys", keys, "highest_reachable_C");
    assert_null(strstr(keys, "duty_mean"));
}

/* The warm-up JSON of the 24 V demo carries every metric under the table's key, in its file
 * unit: the values of the same run computed here, null where a value does not exist (it has no
 * enclosure: no air); the margin is a sweep column the warm-up JSON does not carry. */
static void test_metrics_warmup_json_keys_from_the_table(void **state)
{
    tp_scratch s;
    char json[TP_TEST_PATH];
    const char *cfg = TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml";
    tp_yaml_net y;
    tp_warmup w;
    cJSON *root;
    char *text = tp_read_file(cfg);
    int k;
    (void)state;
    tp_scratch_create(&s);
    tp_scratch_path(&s, "w.json", json, sizeof json);
    {
        const char *args[] = {"warmup", cfg, "-q", "--json", json, NULL};
        assert_int_equal(tp_run_status(&s, args), 0);
    }
    root = tp_read_json(json);
    assert_non_null(text);
    assert_int_equal(tp_yaml_net_open(&y, text), TP_OK);
    assert_int_equal(tp_warmup_run(y.net, &w, &y.diag), TP_OK);
    for (k = 0; k < TP_MET_COUNT; k++) {
        const tp_metricdef *md = tp_metricdef_get(k);
        const cJSON *item = cJSON_GetObjectItemCaseSensitive(root, md->key);
        double v = tp_metricdef_file_value(md, tp_metricdef_value(md, &w.metrics));
        if (k == TP_MET_MARGIN) {
            assert_null(item);
            continue;
        }
        if (!(isfinite(v) ? cJSON_IsNumber(item) : cJSON_IsNull(item)))
            print_error("warmup JSON: %s should be %g\n", md->key, v);
        if (!isfinite(v)) {
            assert_true(cJSON_IsNull(item));
            continue;
        }
        assert_true(cJSON_IsNumber(item));
        tp_check_abs(md->key, item->valuedouble, v, 1e-9 * (1.0 + fabs(v)));
    }
    tp_warmup_clear(&w);
    tp_yaml_net_close(&y);
    cJSON_Delete(root);
    free(text);
    tp_scratch_destroy(&s);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_metrics_rows_read_their_fields),
        cmocka_unit_test(test_metrics_sweep_keys),
        cmocka_unit_test(test_metrics_warmup_json_keys_from_the_table),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
