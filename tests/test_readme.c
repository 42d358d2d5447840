/* The README's usage examples run as tests: every `./build/tepid ...` line inside a ```sh block
 * of README.md (except the quick start's install-and-build line) must exit 0, with its outputs
 * written into a scratch directory. A README example that stops working fails the suite
 * (common practice, no source: documentation examples as tests). */
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

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_readme_examples_run),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
