/* Golden figures of every demo: for each tests/cases/<demo>.json (tests/cases/README.md) the
 * verbs it names run on configs/<demo>.yaml with --json, and every check compares one key with
 * its expected value within its tolerance; each file's `basis` strings say where the figures
 * come from. Every demo config has its file. Also, on every demo, steady's margin is the
 * inverse of its duty (docs/sizing.md: full power at the holding state over holding power).
 * Check values: none of this file's own; each case file names its source beside each figure
 * (`basis`: a hand calculation, a closed form, a handbook table, or 'from memory'). */
#include "tp_test.h"

/* The demos: every .yaml file of configs/. */
static int is_demo(const char *name)
{
    size_t n = strlen(name);
    return n > 5 && strcmp(name + n - 5, ".yaml") == 0;
}

/* The JSON of `verb` on `config` (its path), run into the scratch directory. */
static cJSON *verb_json(const tp_scratch *s, const char *verb, const char *config)
{
    char out[TP_TEST_PATH];
    const char *args[] = {verb, config, "-q", "--json", out, NULL};
    tp_run_result r;
    cJSON *root;
    tp_scratch_path(s, "case.json", out, sizeof out);
    tp_run_tepid(s, args, &r);
    if (r.status != 0)
        print_error("tepid %s %s: status %d\n%s", verb, config, r.status, r.err);
    assert_int_equal(r.status, 0);
    tp_run_clear(&r);
    root = tp_read_json(out);
    remove(out);
    return root;
}

static void check_case(const tp_scratch *s, const char *demo)
{
    char path[TP_TEST_PATH], config[TP_TEST_PATH];
    cJSON *file, *checks, *c, *steady = NULL, *warmup = NULL, *duty, *margin;
    int n = 0;
    snprintf(path, sizeof path, "%s/tests/cases/%s.json", TP_SOURCE_DIR, demo);
    if (!tp_file_exists(path))
        fail_msg("the demo %s has no golden figures in tests/cases/%s.json", demo, demo);
    file = tp_read_json(path);
    snprintf(config, sizeof config, "%s/configs/%s.yaml", TP_SOURCE_DIR, demo);
    checks = cJSON_GetObjectItemCaseSensitive(file, "checks");
    assert_true(cJSON_IsArray(checks));
    cJSON_ArrayForEach(c, checks)
    {
        const cJSON *verb = cJSON_GetObjectItemCaseSensitive(c, "verb");
        const cJSON *key = cJSON_GetObjectItemCaseSensitive(c, "key");
        const cJSON *want = cJSON_GetObjectItemCaseSensitive(c, "expected");
        const cJSON *abs_tol = cJSON_GetObjectItemCaseSensitive(c, "abs");
        const cJSON *rel_tol = cJSON_GetObjectItemCaseSensitive(c, "rel");
        const cJSON *basis = cJSON_GetObjectItemCaseSensitive(c, "basis");
        const cJSON *got;
        cJSON **out = NULL;
        char what[1024];
        assert_true(cJSON_IsString(verb) && cJSON_IsString(key) && cJSON_IsNumber(want));
        assert_true(cJSON_IsString(basis) && strlen(basis->valuestring) > 20);
        assert_true(cJSON_IsNumber(abs_tol) != cJSON_IsNumber(rel_tol));
        if (strcmp(verb->valuestring, "steady") == 0)
            out = &steady;
        else if (strcmp(verb->valuestring, "warmup") == 0)
            out = &warmup;
        else
            fail_msg("%s: verb %s has no golden runs here", path, verb->valuestring);
        if (!*out)
            *out = verb_json(s, verb->valuestring, config);
        got = cJSON_GetObjectItemCaseSensitive(*out, key->valuestring);
        snprintf(what, sizeof what, "%s: %s %s", demo, verb->valuestring, key->valuestring);
        if (!cJSON_IsNumber(got))
            fail_msg("%s: not a number in the JSON", what);
        if (cJSON_IsNumber(abs_tol))
            tp_check_abs(what, got->valuedouble, want->valuedouble, abs_tol->valuedouble);
        else
            tp_check_rel(what, got->valuedouble, want->valuedouble, rel_tol->valuedouble);
        n++;
    }
    assert_true(n >= 5);
    if (!steady)
        steady = verb_json(s, "steady", config);
    duty = cJSON_GetObjectItemCaseSensitive(steady, "duty");
    margin = cJSON_GetObjectItemCaseSensitive(steady, "margin");
    assert_true(cJSON_IsNumber(duty) && cJSON_IsNumber(margin));
    tp_check_rel("margin = 1 / duty", margin->valuedouble, 1.0 / duty->valuedouble, 1e-9);
    cJSON_Delete(steady);
    cJSON_Delete(warmup);
    cJSON_Delete(file);
}

static void test_cases_every_demo(void **state)
{
    char dir[TP_TEST_PATH];
    DIR *dp;
    struct dirent *e;
    tp_scratch s;
    int demos = 0;
    (void)state;
    snprintf(dir, sizeof dir, "%s/configs", TP_SOURCE_DIR);
    dp = opendir(dir);
    assert_non_null(dp);
    tp_scratch_create(&s);
    while ((e = readdir(dp))) {
        char demo[256];
        if (!is_demo(e->d_name))
            continue;
        snprintf(demo, sizeof demo, "%.*s", (int)(strlen(e->d_name) - 5), e->d_name);
        check_case(&s, demo);
        demos++;
    }
    closedir(dp);
    tp_scratch_destroy(&s);
    assert_true(demos >= 5);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_cases_every_demo),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
