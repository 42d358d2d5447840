/* Tests of editing a config's text: values replaced in flow and block style, keys added to
 * existing and to missing sections, the comment on top, the unit lookup and the refusals. The
 * expected texts are written out by hand. */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "config.h"
#include "configedit.h"
#include "yamltree.h"

static tp_yamltree *doc_of(const char *text)
{
    tp_yamltree *doc = NULL;
    tp_diag d;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_yamltree_load_text("in.yaml", text, strlen(text), &doc, &d), TP_OK);
    return doc;
}

/* Apply items and compare the result with `want` exactly. */
static void check(const char *in, const tp_configedit_item *items, int n, const char *comment,
                  const char *want)
{
    tp_yamltree *doc = doc_of(in);
    tp_diag d;
    char *out = NULL;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_configedit_apply(doc, items, n, comment, &out, &d), TP_OK);
    if (strcmp(out, want) != 0) {
        fprintf(stderr, "got:\n%s\nwanted:\n%s\n", out, want);
        fail();
    }
    free(out);
    tp_yamltree_destroy(&doc);
}

static const char *flow_in = "# a plate\n"
                             "heater: {layer: pad, power: 150 W}   # the pad\n"
                             "sensor:\n"
                             "  layer: plate\n"
                             "  coupling: 0.02 W/K\n";

static void test_confedit_replaces_flow_and_block_values(void **state)
{
    static const tp_configedit_item items[] = {{"heater.power", "123.4 W"},
                                               {"sensor.coupling", "0.031 W/K"}};
    (void)state;
    check(flow_in, items, 2, NULL,
          "# a plate\n"
          "heater: {layer: pad, power: 123.4 W}   # the pad\n"
          "sensor:\n"
          "  layer: plate\n"
          "  coupling: 0.031 W/K\n");
}

static void test_confedit_adds_keys_where_they_belong(void **state)
{
    /* A key missing from a flow section goes before its brace; one missing from a block
     * section on a new line at the keys' indentation; a missing top-level section at the end,
     * with its keys gathered into one flow map. */
    static const tp_configedit_item items[] = {{"heater.max_duty", "0.9"},
                                               {"sensor.offset", "1.5 K"},
                                               {"losses.convection_scale", "1.2"},
                                               {"losses.radiation_scale", "0.8"}};
    (void)state;
    check(flow_in, items, 4, "# fitted\n",
          "# fitted\n"
          "# a plate\n"
          "heater: {layer: pad, power: 150 W, max_duty: 0.9}   # the pad\n"
          "sensor:\n"
          "  offset: 1.5 K\n"
          "  layer: plate\n"
          "  coupling: 0.02 W/K\n"
          "losses: {convection_scale: 1.2, radiation_scale: 0.8}\n");
}

static void test_confedit_list_items_by_id(void **state)
{
    static const char *in = "bed:\n"
                            "  layers:\n"
                            "    - id: pad\n"
                            "      thickness: 1.5 mm\n"
                            "    - {id: plate, thickness: 4 mm}\n";
    static const tp_configedit_item items[] = {{"bed.layers.pad.contact", "900 W/(m2.K)"},
                                               {"bed.layers.plate.contact", "2500 W/(m2.K)"},
                                               {"bed.layers.1.thickness", "5 mm"},
                                               {"bed.top.emissivity", "0.85"}};
    (void)state;
    check(in, items, 4, NULL,
          "bed:\n"
          "  top: {emissivity: 0.85}\n"
          "  layers:\n"
          "    - id: pad\n"
          "      contact: 900 W/(m2.K)\n"
          "      thickness: 1.5 mm\n"
          "    - {id: plate, thickness: 5 mm, contact: 2500 W/(m2.K)}\n");
}

static void test_confedit_result_reads_back(void **state)
{
    /* The edited text is a config again, holding the new values. */
    static const char *in = "room: {temperature: 20 degC}\n"
                            "bed:\n"
                            "  size: [200 mm, 200 mm]\n"
                            "  layers:\n"
                            "    - {id: plate, material: aluminium-6061, thickness: 3 mm}\n"
                            "heater: {layer: plate, power: 150 W}\n";
    static const tp_configedit_item items[] = {{"heater.power", "0.2 kW"},
                                               {"losses.convection_scale", "1.25"}};
    tp_yamltree *doc = doc_of(in), *back = NULL;
    tp_description desc;
    tp_diag d;
    char *out = NULL;
    (void)state;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_configedit_apply(doc, items, 2, NULL, &out, &d), TP_OK);
    assert_int_equal(tp_yamltree_load_text("out.yaml", out, strlen(out), &back, &d), TP_OK);
    assert_int_equal(tp_config_read(back, &desc, &d), TP_OK);
    /* 0.2 kW = 200 W. */
    assert_true(desc.heater.power > 199.999999 && desc.heater.power < 200.000001);
    assert_true(desc.losses.convection_scale > 1.2499999 &&
                desc.losses.convection_scale < 1.2500001);
    tp_config_clear(&desc);
    tp_yamltree_destroy(&back);
    tp_yamltree_destroy(&doc);
    free(out);
}

static void test_confedit_refusals(void **state)
{
    static const char *in = "heater: {layer: pad, power: 150 W}\n"
                            "bed:\n"
                            "  layers:\n"
                            "    - {id: pad, thickness: 1 mm}\n"
                            "sensor:\n"
                            "  layer: plate\n";
    static const tp_configedit_item through[] = {{"heater.power.x", "1"}};
    static const tp_configedit_item noitem[] = {{"bed.layers.plate.contact", "1 W/(m2.K)"}};
    static const tp_configedit_item block[] = {{"sensor", "{layer: pad}"}};
    static const tp_configedit_item both[] = {{"losses.a", "1"}, {"losses.a.b", "2"}};
    tp_yamltree *doc = doc_of(in);
    tp_diag d;
    char *out = NULL;
    (void)state;
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_configedit_apply(doc, through, 1, NULL, &out, &d), TP_ERR_CONFIG);
    assert_non_null(strstr(d.log, "the path goes through a value"));
    assert_int_equal(tp_configedit_apply(doc, noitem, 1, NULL, &out, &d), TP_ERR_CONFIG);
    assert_non_null(strstr(d.log, "no list item 'plate' to write into"));
    assert_int_equal(tp_configedit_apply(doc, block, 1, NULL, &out, &d), TP_ERR_CONFIG);
    assert_non_null(strstr(d.log, "cannot replace a block section"));
    assert_int_equal(tp_configedit_apply(doc, both, 2, NULL, &out, &d), TP_ERR_CONFIG);
    assert_non_null(strstr(d.log, "both as a value and as a section"));
    assert_null(out);
    tp_yamltree_destroy(&doc);
}

static void test_confedit_unit_as_written(void **state)
{
    static const char *in = "heater: {power: 0.15 kW, max_duty: 90 %}\n"
                            "bed: {top: {emissivity: 0.9}}\n"
                            "room: {temperature: 68 degF}\n";
    tp_yamltree *doc = doc_of(in);
    char unit[32];
    (void)state;
    tp_configedit_unit(doc, "heater.power", unit, sizeof unit);
    assert_string_equal(unit, "kW");
    tp_configedit_unit(doc, "heater.max_duty", unit, sizeof unit);
    assert_string_equal(unit, "%");
    tp_configedit_unit(doc, "bed.top.emissivity", unit, sizeof unit);
    assert_string_equal(unit, "");
    tp_configedit_unit(doc, "room.temperature", unit, sizeof unit);
    assert_string_equal(unit, "degF");
    tp_configedit_unit(doc, "heater.supply", unit, sizeof unit);
    assert_string_equal(unit, "");
    tp_yamltree_destroy(&doc);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_confedit_replaces_flow_and_block_values),
        cmocka_unit_test(test_confedit_adds_keys_where_they_belong),
        cmocka_unit_test(test_confedit_list_items_by_id),
        cmocka_unit_test(test_confedit_result_reads_back),
        cmocka_unit_test(test_confedit_refusals),
        cmocka_unit_test(test_confedit_unit_as_written),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
