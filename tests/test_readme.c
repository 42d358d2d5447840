/* The README's usage examples run as tests: every `./build/tepid ...` line inside a ```sh block
 * of README.md (except the quick start's install-and-build line) must exit 0, with its outputs
 * written into a scratch directory. A README example that stops working fails the suite
 * (common practice, no source: documentation examples as tests). The figures the README quotes
 * are parsed from its text and compared with the verbs' JSON: the demo's setpoint, time to
 * setpoint, holding power and margin, and the heater-as-sold example's header line, current
 * and powers (and its hand calculation). */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include "tp_test.h"

#define MAX_ARGS 32

/* Every option of every verb that names a file tepid writes (the FILE options of the verbs'
 * --help that write or draw). A missing one made an example write into the source tree. */
static int is_output_option(const char *tok)
{
    static const char *const outputs[] = {"--plot",    "--json",         "--csv",         "--map",
                                          "--map-csv", "--map-setpoint", "--write-config",
                                          "-o"};
    size_t i;
    for (i = 0; i < sizeof outputs / sizeof outputs[0]; i++)
        if (strcmp(tok, outputs[i]) == 0)
            return 1;
    return 0;
}

/* Run one README line: "./build/tepid VERB configs/X ... [--plot F]". Paths under configs/ are
 * made absolute; output names are put into the scratch directory. */
static void run_line(const tp_scratch *s, char *line)
{
    const char *args[MAX_ARGS + 1];
    char store[MAX_ARGS][TP_TEST_PATH];
    char *tok, *save = NULL;
    int n = 0, status, prev_out = 0;
    for (tok = strtok_r(line, " \t", &save); tok; tok = strtok_r(NULL, " \t", &save)) {
        if (n == 0 && strcmp(tok, "./build/tepid") == 0)
            continue; /* tp_run_tepid supplies the binary */
        assert_true(n < MAX_ARGS);
        if (strncmp(tok, "configs/", 8) == 0)
            snprintf(store[n], TP_TEST_PATH, "%s/%s", TP_SOURCE_DIR, tok);
        else if (prev_out && tok[0] != '-')
            tp_scratch_path(s, tok, store[n], TP_TEST_PATH);
        else if (tp_looks_like_output(tok))
            fail_msg("README example names the file '%s' after an option this test does not "
                     "treat as an output: add the option to is_output_option",
                     tok);
        else
            snprintf(store[n], TP_TEST_PATH, "%s", tok);
        prev_out = is_output_option(tok);
        args[n] = store[n];
        n++;
    }
    args[n] = NULL;
    status = tp_run_status(s, args);
    if (status != 0) {
        print_error("README example failed with status %d: tepid", status);
        for (n = 0; args[n]; n++)
            print_error(" %s", args[n]);
        print_error("\n");
    }
    assert_int_equal(status, 0);
}

static void test_readme_examples_run(void **state)
{
    char path[TP_TEST_PATH], *text, *line, *save = NULL;
    int in_block = 0, ran = 0;
    tp_scratch s;
    (void)state;
    snprintf(path, sizeof path, "%s/README.md", TP_SOURCE_DIR);
    text = tp_read_file(path);
    assert_non_null(text);
    tp_scratch_create(&s);
    for (line = strtok_r(text, "\n", &save); line; line = strtok_r(NULL, "\n", &save)) {
        if (strncmp(line, "```", 3) == 0) {
            in_block = !in_block && strncmp(line, "```sh", 5) == 0;
            continue;
        }
        /* The quick start's first command (install, build, run) is CI's business. */
        if (in_block && strncmp(line, "./build/tepid ", 14) == 0) {
            char copy[2048];
            snprintf(copy, sizeof copy, "%s", line);
            run_line(&s, copy);
            ran++;
        }
    }
    tp_scratch_destroy(&s);
    free(text);
    assert_true(ran >= 3); /* the README shows at least three examples */
}


/* The README's whole text with every newline made a blank (quotes may wrap); the caller frees. */
static char *readme_flat(void)
{
    char path[TP_TEST_PATH], *text, *p;
    snprintf(path, sizeof path, "%s/README.md", TP_SOURCE_DIR);
    text = tp_read_file(path);
    assert_non_null(text);
    for (p = text; *p; p++)
        if (*p == '\n')
            *p = ' ';
    return text;
}

/* The text right after `marker` in the README (fails when absent). */
static const char *after(const char *text, const char *marker)
{
    const char *at = strstr(text, marker);
    if (!at)
        fail_msg("README.md no longer says '%s': update tests/test_readme.c with it", marker);
    return at + strlen(marker);
}

/* `tepid VERB FILE --json` into the scratch directory; the JSON (the caller deletes it). */
static cJSON *run_json(const tp_scratch *s, const char *verb, const char *file)
{
    char out[TP_TEST_PATH];
    const char *args[] = {verb, file, "-q", "--json", out, NULL};
    tp_scratch_path(s, "readme.json", out, sizeof out);
    assert_int_equal(tp_run_status(s, args), 0);
    return tp_read_json(out);
}

static double number(const cJSON *root, const char *key)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(root, key);
    if (!cJSON_IsNumber(v))
        fail_msg("no number '%s' in the JSON", key);
    return v->valuedouble;
}

/* The quick start's demo figures: "warming to 90 degC. Its reading reaches the setpoint after
 * M min S s, and the plate then holds it on P W, a power margin of X". The README rounds:
 * seconds truncated as the summaries write them (1 s), power to 0.1 W, margin to 0.01. */
static void test_readme_demo_figures(void **state)
{
    char *text = readme_flat();
    double setpoint, watts, margin;
    int min, sec;
    tp_scratch s;
    cJSON *w, *st;
    (void)state;
    assert_int_equal(sscanf(after(text, "a 24 V build plate warming to"), "%lf degC", &setpoint),
                     1);
    assert_int_equal(sscanf(after(text, "Its reading reaches the setpoint after"), "%d min %d s",
                            &min, &sec),
                     2);
    assert_int_equal(sscanf(after(text, "the plate then holds it on"), "%lf W, a power margin of %lf",
                            &watts, &margin),
                     2);
    tp_scratch_create(&s);
    w = run_json(&s, "warmup", TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml");
    st = run_json(&s, "steady", TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml");
    tp_check_abs("setpoint (degC)", number(w, "setpoint_C"), setpoint, 1e-9);
    tp_check_abs("time to setpoint (s)", number(w, "time_to_setpoint_s"), 60.0 * min + sec + 0.5,
                 0.5);
    tp_check_abs("holding power (W)", number(w, "holding_power_W"), watts, 0.05);
    tp_check_abs("steady power (W)", number(st, "power_W"), watts, 0.05);
    tp_check_abs("margin", number(st, "margin"), margin, 0.005);
    cJSON_Delete(w);
    cJSON_Delete(st);
    tp_scratch_destroy(&s);
    free(text);
}

/* The heater as sold: the README's config fragment, run in a small plate of built-in
 * materials, gives the header line the README quotes, and the JSON the figures in it. */
static void test_readme_heater_as_sold(void **state)
{
    char *text = readme_flat(), map[256], quote[512], cfg_text[1024], cfg[TP_TEST_PATH];
    const char *p, *end;
    double rated_w, rated_v, supply, ohm, amps, watts;
    tp_scratch s;
    tp_run_result r;
    cJSON *j;
    const char *args[] = {"steady", cfg, NULL};
    (void)state;
    /* `heater: {rated_power: 240 W, rated_voltage: 24 V, supply: 23.4 V}` */
    p = after(text, "A heater may be given as sold (`heater: {");
    end = strchr(p, '}');
    assert_non_null(end);
    snprintf(map, sizeof map, "%.*s", (int)(end - p), p);
    /* `heater 240.0 W at 24.0 V rated; 23.4 V across 2.400 ohm: 9.75 A, 228.2 W full on ...` */
    p = after(text, "e.g. `heater ");
    end = strchr(p, '`');
    assert_non_null(end);
    snprintf(quote, sizeof quote, "heater %.*s", (int)(end - p), p);
    while (strstr(quote, "  ")) /* the wrap left two blanks where the line broke */
        memmove(strstr(quote, "  "), strstr(quote, "  ") + 1, strlen(strstr(quote, "  ")));
    assert_int_equal(sscanf(quote, "heater %lf W at %lf V rated; %lf V across %lf ohm: %lf A, %lf W",
                            &rated_w, &rated_v, &supply, &ohm, &amps, &watts),
                     6);
    /* The README's own working: 24^2 / 240 = 2.4 ohm; 23.4^2 / 2.4 = 228.2 W; 23.4 / 2.4 =
     * 9.75 A (hand calculation). */
    tp_check_abs("R = V^2 / P", rated_v * rated_v / rated_w, ohm, 5e-4);
    tp_check_abs("P = V^2 / R", supply * supply / ohm, watts, 0.05 + 1e-9); /* written to 0.1 W */
    tp_check_abs("I = V / R", supply / ohm, amps, 0.005);
    snprintf(cfg_text, sizeof cfg_text,
             "room: {temperature: 20 degC}\n"
             "bed:\n"
             "  size: [200 mm, 200 mm]\n"
             "  layers:\n"
             "    - {id: pad, material: silicone-rubber, thickness: 1.5 mm}\n"
             "    - {id: plate, material: aluminium-5083-cast, thickness: 6 mm}\n"
             "heater: {layer: pad, %s}\n",
             map);
    tp_scratch_create(&s);
    tp_scratch_write(&s, "as-sold.yaml", cfg_text, cfg);
    tp_run_tepid(&s, args, &r);
    assert_int_equal(r.status, 0);
    tp_check_contains("the summary's header", r.out, quote);
    tp_run_clear(&r);
    j = run_json(&s, "steady", cfg);
    tp_check_abs("rated power", number(j, "heater_rated_power_W"), rated_w, 1e-9);
    tp_check_abs("rated voltage", number(j, "heater_rated_voltage_V"), rated_v, 1e-9);
    tp_check_abs("current", number(j, "heater_current_A"), amps, 0.005);
    tp_check_abs("power", number(j, "heater_power_W"), watts, 0.05 + 1e-9);
    cJSON_Delete(j);
    tp_scratch_destroy(&s);
    free(text);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_readme_examples_run),
        cmocka_unit_test(test_readme_demo_figures),
        cmocka_unit_test(test_readme_heater_as_sold),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
