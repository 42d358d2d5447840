/* Tests of the YAML tree's positions (src/input/yamltree.h): where a message about a key points
 * when the file gives the key, only an enclosing section, or nothing of it. Expected positions are
 * found by searching the text here, independently of the parser. Check values: positions
 * counted in the text itself, as YAML 1.2 (yaml.org, 2009, ch. 5-6) lays a document out in lines
 * and columns (from memory); no figure from a published table. */
#include "tp_test.h"

static const char text[] = "# an invented plate\n"
                           "room: {temperature: 19 degC}\n"
                           "bed:\n"
                           "  size: [250 mm, 210 mm]\n"
                           "  layers:\n"
                           "    - {id: pad, material: silicone-rubber, thickness: 1.5 mm}\n"
                           "    - {id: plate, material: aluminium-6061, thickness: 4 mm}\n";

static void check_nearest(const tp_yamltree *doc, const char *path, const char *needle)
{
    int line, col;
    tp_loc loc = tp_yamltree_nearest(doc, path);
    tp_text_locate(text, needle, &line, &col);
    if (loc.line != line || loc.col != col)
        print_error("%s: at %d:%d, expected '%s' at %d:%d\n", path, loc.line, loc.col, needle,
                    line, col);
    assert_string_equal(loc.file, "plate.yaml");
    assert_int_equal(loc.line, line);
    assert_int_equal(loc.col, col);
}

/* A key the file gives; a missing key under a given section, list item or list (the value of
 * the nearest key given: a section or list starts at its first entry); and a section the file
 * does not have at all (the top of the document: its first key). */
static void test_yamltree_nearest_key_position(void **state)
{
    tp_yamltree *doc = NULL;
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_yamltree_load_text("plate.yaml", text, strlen(text), &doc, &d), TP_OK);
    check_nearest(doc, "bed.size", "[250 mm");
    check_nearest(doc, "room.temperature", "19 degC");
    check_nearest(doc, "room.airflow", "{temperature");
    check_nearest(doc, "bed.layers.plate.contact", "{id: plate");
    check_nearest(doc, "bed.layers.7.contact", "- {id: pad");
    check_nearest(doc, "bed.grid", "size: [250");
    check_nearest(doc, "control.setpoint", "room:");
    tp_yamltree_destroy(&doc);
}

/* An empty document has no position to give but its file; no document, not even a file. */
static void test_yamltree_nearest_without_a_tree(void **state)
{
    tp_yamltree *doc = NULL;
    tp_diag d;
    tp_loc loc;
    (void)state;
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_yamltree_load_text("empty.yaml", "# nothing\n", 10, &doc, &d), TP_OK);
    loc = tp_yamltree_nearest(doc, "control.setpoint");
    assert_string_equal(loc.file, "empty.yaml");
    assert_int_equal(loc.line, 0);
    tp_yamltree_destroy(&doc);
    loc = tp_yamltree_nearest(NULL, "control.setpoint");
    assert_null(loc.file);
    assert_int_equal(loc.line, 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_yamltree_nearest_key_position),
        cmocka_unit_test(test_yamltree_nearest_without_a_tree),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
