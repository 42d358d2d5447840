/* Tests of `tepid explain` through the binary: the JSON contract of docs/user-guide.md, the
 * radiation linearisation at --at, and every demo in configs/ through check, explain, warmup
 * and steady. */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <cjson/cJSON.h>
#include <math.h>

#include "tp_test.h"

#define T0C 273.15            /* 0 degC in kelvin, K */
#define SIGMA 5.670374419e-8  /* Stefan-Boltzmann constant, CODATA 2018, W/(m2.K4) */
#define REL_JSON 1.0e-12      /* cJSON prints doubles that read back exactly; the expected
                                 values take a few roundings: 1e-12 relative */

/* Run `tepid explain` on config text with the extra option `at` (NULL for none); returns the
 * parsed JSON (the caller deletes it). */
static cJSON *explain_json(const char *name, const char *yaml, const char *at)
{
    const tp_scratch *s = tp_group_scratch();
    char path[TP_TEST_PATH], json[TP_TEST_PATH], json_name[256], at_opt[64];
    const char *args[7] = {"explain", path, "--json", json, "-q", NULL, NULL};
    tp_run_result res;
    tp_scratch_write(s, name, yaml, path);
    snprintf(json_name, sizeof json_name, "%s.json", name);
    tp_scratch_path(s, json_name, json, sizeof json);
    if (at) {
        snprintf(at_opt, sizeof at_opt, "--at=%s", at);
        args[5] = at_opt;
    }
    tp_run_tepid(s, args, &res);
    if (res.status != 0) {
        print_error("explain exited %d:\n%s", res.status, res.err);
        fail();
    }
    tp_run_clear(&res);
    return tp_read_json(json);
}

static double number(const cJSON *o, const char *key)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, key);
    if (!cJSON_IsNumber(v)) {
        print_error("'%s' is not a number in %s\n", key, cJSON_PrintUnformatted(o));
        fail();
    }
    return v->valuedouble;
}

static int has(const cJSON *o, const char *key)
{
    return cJSON_GetObjectItemCaseSensitive(o, key) != NULL;
}

/* The link between a and b (in that order) with this law and area (0: any area). */
static const cJSON *find_link(const cJSON *root, const char *a, const char *b, const char *law,
                              double area)
{
    const cJSON *l;
    cJSON_ArrayForEach(l, cJSON_GetObjectItemCaseSensitive(root, "links"))
    {
        const cJSON *bt = cJSON_GetObjectItemCaseSensitive(l, "between");
        const cJSON *lw = cJSON_GetObjectItemCaseSensitive(l, "law");
        if (cJSON_GetArraySize(bt) == 2 &&
            strcmp(cJSON_GetArrayItem(bt, 0)->valuestring, a) == 0 &&
            strcmp(cJSON_GetArrayItem(bt, 1)->valuestring, b) == 0 &&
            strcmp(lw->valuestring, law) == 0 &&
            (area == 0.0 || fabs(number(l, "area_m2") - area) <= 1e-12 * area))
            return l;
    }
    print_error("no %s link %s-%s of area %g\n", law, a, b, area);
    fail();
    return NULL;
}

/* A 200 x 100 x 5 mm aluminium-like plate (invented round values) under a 150 x 80 x 1 mm
 * steel-like sheet; top emissivity 0.8, room 20 degC. */
static const char plate_yaml[] =
    "materials:\n"
    "  spreader: {density: 2500 kg/m3, specific_heat: 800 J/(kg.K), conductivity: 100 W/(m.K),\n"
    "             emissivity: 0.1, max_temperature: 300 degC, source: test values}\n"
    "  skin:     {density: 8000 kg/m3, specific_heat: 500 J/(kg.K), conductivity: 50 W/(m.K),\n"
    "             emissivity: 0.3, max_temperature: 300 degC, source: test values}\n"
    "room: {temperature: 20 degC}\n"
    "bed:\n"
    "  size: [200 mm, 100 mm]\n"
    "  layers:\n"
    "    - {id: plate, material: spreader, thickness: 5 mm}\n"
    "    - {id: sheet, material: skin, thickness: 1 mm, size: [150 mm, 80 mm],\n"
    "       contact: 500 W/(m2.K)}\n"
    "  top: {emissivity: 0.8}\n"
    "  mounts: {conductance: 0.1 W/K}\n"
    "heater: {layer: plate, power: 30 W}\n";

/* Linearised radiation at --at 90 degC: G = eps sigma A (T^2 + Ts^2)(T + Ts) with T = 363.15 K,
 * Ts = 293.15 K (Incropera 7th ed. Eq. 1.9, from memory): the sheet's top (A = 0.15 * 0.08 =
 * 0.012 m2, eps 0.8 from bed.top) and the plate's exposed top (0.02 - 0.012 = 0.008 m2, the
 * material's 0.1). With --at 20 degC every free node is at the room's temperature, T = Ts, and
 * the same formula gives 4 eps sigma A T^3. */
static void test_explain_radiation_linearised(void **state)
{
    const double t = T0C + 90.0, ts = T0C + 20.0;
    const double lin = SIGMA * (t * t + ts * ts) * (t + ts);
    cJSON *root = explain_json("rad.yaml", plate_yaml, "90degC");
    const cJSON *l;
    (void)state;
    l = find_link(root, "sheet", "room", "radiation", 0.012);
    tp_check_rel("eps sheet top", number(l, "emissivity"), 0.8, REL_JSON);
    tp_check_rel("G sheet top", number(l, "conductance_W_per_K"), 0.8 * lin * 0.012, REL_JSON);
    l = find_link(root, "plate", "room", "radiation", 0.008);
    tp_check_rel("G plate top", number(l, "conductance_W_per_K"), 0.1 * lin * 0.008, REL_JSON);
    cJSON_Delete(root);

    root = explain_json("rad0.yaml", plate_yaml, "20degC");
    l = find_link(root, "sheet", "room", "radiation", 0.012);
    tp_check_rel("G sheet top at 20 degC", number(l, "conductance_W_per_K"),
                 4.0 * 0.8 * SIGMA * 0.012 * ts * ts * ts, REL_JSON);
    cJSON_Delete(root);
}

/* The `kind` of explain's `state` object (fails when either is missing). */
static const char *state_kind(const cJSON *st)
{
    const cJSON *k = cJSON_GetObjectItemCaseSensitive(st, "kind");
    assert_true(cJSON_IsString(k));
    return k->valuestring;
}

/* Without --at, explain shows the links at the steady holding state, or at the full-power
 * steady state when no setpoint is held, and says which (JSON state.kind, the text header).
 * Hand calculations on single-node raw networks (Incropera 7th ed. Eq. 1.9 for the linearised
 * radiation, from memory):
 * - held at 100 degC by on-off control reading the plate itself: the plate is at 100 degC, and
 *   the radiation link's G = 0.9 sigma 0.05 (T^2 + Ta^2)(T + Ta), T = 373.15 K, Ta = 293.15 K;
 * - no controller, 50 W into 1 W/K: 20 + 50 = 70 degC (the radiation link of 1e-6 m2 carries
 *   2e-8 W, which moves the plate by 2e-8 K), G = 0.5 sigma 1e-6 (T^2 + Ta^2)(T + Ta) at
 *   T = 343.15 K.
 * At the initial 20 degC (what explain showed before) G would be 4 eps sigma A Ta^3, 35 % lower
 * at 100 degC. */
static void test_explain_default_state_is_steady(void **state)
{
    static const char held[] =
        "network:\n"
        "  nodes:\n"
        "    - {id: plate, capacity: 640 J/K, initial: 20 degC}\n"
        "    - {id: room, fixed: 20 degC}\n"
        "  links:\n"
        "    - {between: [plate, room], conductance: 1 W/K}\n"
        "    - {between: [plate, room], radiation: {area: 0.05 m2, emissivity: 0.9}}\n"
        "  sources:\n"
        "    - {id: pad, node: plate, power: 200 W}\n"
        "control: {source: pad, sensor: plate, mode: on-off, setpoint: 100 degC}\n";
    static const char free_running[] =
        "network:\n"
        "  nodes:\n"
        "    - {id: plate, capacity: 640 J/K, initial: 20 degC}\n"
        "    - {id: room, fixed: 20 degC}\n"
        "  links:\n"
        "    - {between: [plate, room], conductance: 1 W/K}\n"
        "    - {between: [plate, room], radiation: {area: 1e-6 m2, emissivity: 0.5}}\n"
        "  sources:\n"
        "    - {id: pad, node: plate, power: 50 W}\n";
    const double ta = T0C + 20.0, th = T0C + 100.0, tf = T0C + 70.0;
    char path[TP_TEST_PATH];
    const char *args[] = {"explain", path, NULL};
    tp_run_result res;
    cJSON *root;
    const cJSON *st;
    (void)state;
    root = explain_json("held.yaml", held, NULL);
    st = cJSON_GetObjectItemCaseSensitive(root, "state");
    assert_string_equal(state_kind(st), "holding");
    tp_check_rel("plate at hold",
                 number(cJSON_GetArrayItem(cJSON_GetObjectItemCaseSensitive(root, "nodes"), 0),
                        "temperature_C"),
                 100.0, 1e-9);
    tp_check_rel("G radiation at hold",
                 number(find_link(root, "plate", "room", "radiation", 0.05), "conductance_W_per_K"),
                 0.9 * SIGMA * 0.05 * (th * th + ta * ta) * (th + ta), 1e-9);
    cJSON_Delete(root);
    tp_scratch_path(tp_group_scratch(), "held.yaml", path, sizeof path);
    tp_run_tepid(tp_group_scratch(), args, &res);
    assert_int_equal(res.status, 0);
    tp_check_contains("header", res.out, "links at the steady holding state: reading 100.00 degC");
    tp_run_clear(&res);

    root = explain_json("free.yaml", free_running, NULL);
    st = cJSON_GetObjectItemCaseSensitive(root, "state");
    assert_string_equal(state_kind(st), "full_power");
    tp_check_rel("G radiation at full power",
                 number(find_link(root, "plate", "room", "radiation", 1e-6), "conductance_W_per_K"),
                 0.5 * SIGMA * 1e-6 * (tf * tf + ta * ta) * (tf + ta), 1e-6);
    cJSON_Delete(root);

    /* --at still chooses the temperature, and the JSON says so. */
    root = explain_json("held-at.yaml", held, "150degC");
    st = cJSON_GetObjectItemCaseSensitive(root, "state");
    assert_string_equal(state_kind(st), "uniform");
    tp_check_rel("at", number(st, "at_C"), 150.0, REL_JSON);
    cJSON_Delete(root);
}

/* docs/user-guide.md, explain --json: `nodes`, an array of {id, capacity_J_per_K} or {id, fixed_C};
 * `links`, an array of {between: [a, b], law, conductance_W_per_K}, law one of conduction,
 * convection, radiation; convection adds h_W_per_m2K and area_m2, radiation area_m2 and
 * emissivity. Values by hand: C plate = 2500 * 800 * 0.02 * 0.005 = 200 J/K, C sheet =
 * 8000 * 500 * 0.012 * 0.001 = 48 J/K, room fixed at 20 degC; plate-sheet
 * G = 1/(0.005/(2*100*0.012) + 1/(500*0.012) + 0.001/(2*50*0.012)) (plane walls and contact in
 * series); mounts 0.1 W/K. For convection, G = h A. */
static void test_explain_json_contract(void **state)
{
    static const char *const expect_ids[] = {"plate", "sheet", "room"};
    static const double expect_c[] = {200.0, 48.0, 0.0};
    cJSON *root = explain_json("contract.yaml", plate_yaml, "70degC");
    const cJSON *nodes = cJSON_GetObjectItemCaseSensitive(root, "nodes");
    const cJSON *links = cJSON_GetObjectItemCaseSensitive(root, "links");
    const cJSON *n, *l;
    int i = 0, laws[3] = {0, 0, 0};
    (void)state;
    assert_true(cJSON_IsArray(nodes));
    assert_true(cJSON_IsArray(links));
    assert_int_equal(cJSON_GetArraySize(nodes), 3);
    cJSON_ArrayForEach(n, nodes)
    {
        const cJSON *id = cJSON_GetObjectItemCaseSensitive(n, "id");
        assert_true(cJSON_IsString(id));
        assert_string_equal(id->valuestring, expect_ids[i]);
        /* exactly one of the two */
        assert_int_equal(has(n, "capacity_J_per_K") + has(n, "fixed_C"), 1);
        if (expect_c[i] > 0)
            tp_check_rel(id->valuestring, number(n, "capacity_J_per_K"), expect_c[i], REL_JSON);
        else
            tp_check_rel("room", number(n, "fixed_C"), 20.0, REL_JSON);
        i++;
    }
    cJSON_ArrayForEach(l, links)
    {
        const cJSON *bt = cJSON_GetObjectItemCaseSensitive(l, "between");
        const cJSON *law = cJSON_GetObjectItemCaseSensitive(l, "law");
        double g = number(l, "conductance_W_per_K");
        assert_true(cJSON_IsArray(bt));
        assert_int_equal(cJSON_GetArraySize(bt), 2);
        assert_true(cJSON_IsString(cJSON_GetArrayItem(bt, 0)));
        assert_true(cJSON_IsString(cJSON_GetArrayItem(bt, 1)));
        assert_true(cJSON_IsString(law));
        assert_true(g >= 0.0);
        if (strcmp(law->valuestring, "conduction") == 0) {
            laws[0]++;
            assert_false(has(l, "h_W_per_m2K") || has(l, "area_m2") || has(l, "emissivity"));
        } else if (strcmp(law->valuestring, "convection") == 0) {
            laws[1]++;
            tp_check_rel("G = h A", g, number(l, "h_W_per_m2K") * number(l, "area_m2"), REL_JSON);
            assert_false(has(l, "emissivity"));
        } else if (strcmp(law->valuestring, "radiation") == 0) {
            double eps = number(l, "emissivity");
            laws[2]++;
            assert_true(number(l, "area_m2") > 0.0);
            assert_true(eps > 0.0 && eps <= 1.0);
            assert_false(has(l, "h_W_per_m2K"));
        } else {
            print_error("unknown law '%s'\n", law->valuestring);
            fail();
        }
    }
    assert_true(laws[0] >= 2 && laws[1] >= 1 && laws[2] >= 1);
    tp_check_rel(
        "G plate-sheet",
        number(find_link(root, "plate", "sheet", "conduction", 0.0), "conductance_W_per_K"),
        1.0 / (0.005 / 2.4 + 1.0 / 6.0 + 0.001 / 1.2), REL_JSON);
    cJSON_Delete(root);
}

/* The raw form's laws come out unchanged: h = coefficient, G = h A = 9 * 0.05 = 0.45 W/K, and
 * radiation with its own emissivity (the example values of docs/user-guide.md). */
static void test_explain_json_raw_links(void **state)
{
    static const char raw[] =
        "network:\n"
        "  nodes:\n"
        "    - {id: plate, capacity: 640 J/K, initial: 21 degC}\n"
        "    - {id: room, fixed: 21 degC}\n"
        "  links:\n"
        "    - {between: [plate, room], conductance: 1.6 W/K}\n"
        "    - {between: [plate, room], convection: {area: 0.05 m2, coefficient: 9 W/(m2.K)}}\n"
        "    - {between: [plate, room], radiation: {area: 0.05 m2, emissivity: 0.9}}\n"
        "  sources:\n"
        "    - {id: pad, node: plate, power: 120 W}\n";
    cJSON *root = explain_json("raw.yaml", raw, NULL);
    const cJSON *l;
    (void)state;
    tp_check_rel("C plate",
                 number(cJSON_GetArrayItem(cJSON_GetObjectItemCaseSensitive(root, "nodes"), 0),
                        "capacity_J_per_K"),
                 640.0, REL_JSON);
    l = find_link(root, "plate", "room", "convection", 0.05);
    tp_check_rel("h", number(l, "h_W_per_m2K"), 9.0, REL_JSON);
    tp_check_rel("G", number(l, "conductance_W_per_K"), 0.45, REL_JSON);
    tp_check_rel("G cond",
                 number(find_link(root, "plate", "room", "conduction", 0.0), "conductance_W_per_K"),
                 1.6, REL_JSON);
    tp_check_rel("eps", number(find_link(root, "plate", "room", "radiation", 0.05), "emissivity"),
                 0.9, REL_JSON);
    cJSON_Delete(root);
}

/* Every demo in configs/ passes check, explain, warmup and steady with exit status 0 (issue 3:
 * "tepid explain and tepid warmup work on all three demos"). At least the three physical demos
 * and the raw one must be there, so the loop cannot pass empty. */
static void test_explain_demos_run(void **state)
{
    static const char *const verbs[] = {"check", "explain", "warmup", "steady"};
    char path[1024];
    DIR *dp = opendir(TP_SOURCE_DIR "/configs");
    struct dirent *e;
    int files = 0;
    size_t v;
    (void)state;
    assert_non_null(dp);
    while ((e = readdir(dp)) != NULL) {
        size_t len = strlen(e->d_name);
        if (len < 6 || strcmp(e->d_name + len - 5, ".yaml") != 0)
            continue;
        snprintf(path, sizeof path, "%s/configs/%s", TP_SOURCE_DIR, e->d_name);
        files++;
        for (v = 0; v < sizeof verbs / sizeof verbs[0]; v++) {
            const char *args[] = {verbs[v], path, NULL};
            tp_run_result res;
            tp_run_tepid(tp_group_scratch(), args, &res);
            if (res.status != 0) {
                print_error("tepid %s %s exited %d:\n%s", verbs[v], e->d_name, res.status,
                            res.err);
                fail();
            }
            tp_run_clear(&res);
        }
    }
    closedir(dp);
    assert_true(files >= 4);
}

/* The mains demo carries the mains cautions in its file and in tepid's output (issue 3 item 8;
 * the cautions are common practice for mains heaters, no source). */
static void test_explain_mains_demo_cautions(void **state)
{
    char path[TP_TEST_PATH], *file;
    const char *args[] = {"warmup", path, NULL};
    tp_run_result res;
    static const char *const in_file[] = {"qualified person", "protective earth",
                                          "non-self-resetting thermal cut-out",
                                          "electrical codes"};
    size_t i;
    (void)state;
    snprintf(path, sizeof path, "%s/configs/lab-hotplate-230v.yaml", TP_SOURCE_DIR);
    file = tp_read_file(path);
    assert_true(file != NULL && file[0] != '\0');
    for (i = 0; i < sizeof in_file / sizeof in_file[0]; i++)
        if (!strstr(file, in_file[i])) {
            print_error("the file lacks '%s'\n", in_file[i]);
            fail();
        }
    free(file);
    tp_run_tepid(tp_group_scratch(), args, &res);
    assert_int_equal(res.status, 0);
    assert_non_null(strstr(res.out, "Mains voltage (230 V)"));
    assert_non_null(strstr(res.out, "local electrical codes"));
    tp_run_clear(&res);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_explain_radiation_linearised),
        cmocka_unit_test(test_explain_json_contract),
        cmocka_unit_test(test_explain_default_state_is_steady),
        cmocka_unit_test(test_explain_json_raw_links),
        cmocka_unit_test(test_explain_demos_run),
        cmocka_unit_test(test_explain_mains_demo_cautions),
    };
    return cmocka_run_group_tests(tests, tp_scratch_group_setup, tp_scratch_group_teardown);
}
