/* Tests of the command line (src/cli/cli.c, src/cli/main.c, src/cli/verbs.c) through the binary:
 * every output option of every verb is checked before anything is computed, two outputs never share
 * standard output, a verb refuses options it does not use, --set ignores blanks around its key
 * and value, 'tepid help VERB' is the verb's help, unknown verbs and options get a
 * did-you-mean, and sweep's --jobs states its cap. The verb and option tables are read from the
 * library, so a verb or output option added later is covered without editing this file.
 * Check values: exit statuses and messages of tepid's own contract (docs/user-guide.md); the
 * option syntax follows the POSIX utility syntax guidelines (IEEE Std 1003.1-2017, XBD 12.2)
 * with long options (common practice, no source). */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include "sweep.h"
#include "tp_test.h"
#include "verbs.h"

#define DEMO TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml"
#define DEMO_LOG TP_SOURCE_DIR "/configs/workshop-bed-24v-log.csv"

/* Arguments a verb needs beyond its FILE to run at all (fit its log and a key, sweep a study);
 * a verb not listed here needs none. */
static const struct {
    const char *verb;
    const char *args[6];
} needs[] = {
    {"fit", {"--log", DEMO_LOG, "--free", "heater.resistance", NULL}},
    {"sweep", {"--spread", "heater.resistance=normal:5%", "--samples", "200", NULL}},
};

/* argv for `verb` on the demo with its needed arguments, then `extra` (NULL-terminated). */
static void verb_args(const tp_verb *v, const char *const *extra, const char **argv, int max)
{
    int n = 0;
    size_t i;
    argv[n++] = v->name;
    if (v->needs_file)
        argv[n++] = DEMO;
    for (i = 0; i < sizeof needs / sizeof needs[0]; i++)
        if (strcmp(needs[i].verb, v->name) == 0) {
            const char *const *a;
            for (a = needs[i].args; *a; a++)
                argv[n++] = *a;
        }
    for (; extra && *extra; extra++)
        argv[n++] = *extra;
    assert_true(n < max);
    argv[n] = NULL;
}

/* Issue 15 item 6: `sweep --csv /nonexistent/a.csv` ran the whole study, then failed with exit 1.
 * Every output option of every verb, pointed into a directory that does not exist, is refused
 * with exit 2 and a message naming the option, before the config is even read: the demo's
 * load-time warnings (the cork layer's Biot number) never appear and no summary is printed. */
static void test_cli_every_output_checked_before_computing(void **state)
{
    tp_scratch *s = tp_group_scratch();
    size_t i;
    int checked = 0;
    (void)state;
    for (i = 0; i < tp_verbs_count; i++) {
        const tp_verb *v = tp_verbs[i];
        const tp_opt *o;
        for (o = v->opts; o->name; o++) {
            char path[TP_TEST_PATH], name[64], want[TP_TEST_PATH + 128];
            const char *extra[3], *argv[32];
            tp_run_result r;
            if (!o->is_output)
                continue;
            snprintf(name, sizeof name, "no-such-dir/out-%s.%s", o->name,
                     o->is_output == TP_OUT_FIGURE ? "png" : "txt");
            tp_scratch_path(s, name, path, sizeof path);
            snprintf(want, sizeof want, "--%s", o->name);
            extra[0] = want;
            extra[1] = path;
            extra[2] = NULL;
            verb_args(v, extra, argv, 32);
            tp_run_tepid(s, argv, &r);
            if (r.status != 2)
                fail_msg("tepid %s --%s into a missing directory: exit %d, expected 2\n%s",
                         v->name, o->name, r.status, r.err);
            snprintf(want, sizeof want, "tepid: --%s: cannot create %s: No such file or "
                     "directory", o->name, path);
            tp_check_contains("the message names the option and the path", r.err, want);
            tp_check_contains("the hint", r.err, "nothing was computed");
            if (strstr(r.err, "warning:"))
                fail_msg("tepid %s --%s read the config before refusing the output:\n%s",
                         v->name, o->name, r.err);
            assert_string_equal(r.out, "");
            tp_run_clear(&r);
            checked++;
        }
    }
    /* warmup 6, steady 1, budget 1, guard 2, fit 4, sweep 3, tune 3, explain 1 (the tables). */
    assert_true(checked >= 21);
}

/* The check names the right option when only the last of several outputs is bad, and leaves
 * nothing in the directory (the check's trial file is removed). */
static void test_cli_output_check_leaves_nothing(void **state)
{
    tp_scratch *s = tp_group_scratch();
    char dir[TP_TEST_PATH], good[TP_TEST_PATH + 32], bad[TP_TEST_PATH + 32];
    const char *argv[] = {"warmup", DEMO, "-q", "--csv", good, "--json", bad, NULL};
    tp_run_result r;
    DIR *dp;
    struct dirent *e;
    int entries = 0;
    (void)state;
    tp_scratch_path(s, "kept", dir, sizeof dir);
    assert_int_equal(mkdir(dir, 0755), 0);
    snprintf(good, sizeof good, "%s/out.csv", dir);
    snprintf(bad, sizeof bad, "%s/missing/out.json", dir);
    tp_run_tepid(s, argv, &r);
    assert_int_equal(r.status, 2);
    tp_check_contains("the second output named", r.err, "--json: cannot create");
    tp_run_clear(&r);
    dp = opendir(dir);
    assert_non_null(dp);
    while ((e = readdir(dp)))
        if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0)
            entries++; /* hidden temporary files count too */
    closedir(dp);
    assert_int_equal(entries, 0);
}

/* Outputs that can be written pass the check: "-", a device written in place, a figure into a
 * device (its temporary file goes to the working directory). */
static void test_cli_output_check_accepts_devices(void **state)
{
    tp_scratch *s = tp_group_scratch();
    const char *argv[] = {"steady", DEMO, "-q", "--json", "/dev/null", NULL};
    const char *argv2[] = {"explain", DEMO, "-q", "--json", "-", NULL};
    (void)state;
    assert_int_equal(tp_run_status(s, argv), 0);
    assert_int_equal(tp_run_status(s, argv2), 0);
}

/* Issue 15 item 7: `warmup --csv - --json -` interleaved both on standard output. */
static void test_cli_two_outputs_on_stdout_refused(void **state)
{
    tp_scratch *s = tp_group_scratch();
    const char *argv[] = {"warmup", DEMO, "--csv", "-", "--json", "-", NULL};
    const char *argv2[] = {"tune", DEMO, "--json", "-", "--csv", "-", NULL};
    tp_run_result r;
    (void)state;
    tp_run_tepid(s, argv, &r);
    assert_int_equal(r.status, 2);
    tp_check_contains("warmup", r.err, "--csv and --json both write to standard output (-)");
    assert_string_equal(r.out, "");
    tp_run_clear(&r);
    tp_run_tepid(s, argv2, &r);
    assert_int_equal(r.status, 2);
    tp_check_contains("tune", r.err, "--json and --csv both write to standard output (-)");
    tp_run_clear(&r);
}

/* Issue 15 item 8: `materials --set x=y` was silently ignored and its help listed --set. Every
 * verb that reads a config accepts --set and -q; materials reads none and refuses both; every
 * verb's help lists exactly the options of its table, and --help. */
static void test_cli_options_are_per_verb(void **state)
{
    tp_scratch *s = tp_group_scratch();
    size_t i;
    (void)state;
    for (i = 0; i < tp_verbs_count; i++) {
        const tp_verb *v = tp_verbs[i];
        const char *argv[] = {"help", v->name, NULL};
        const tp_opt *o;
        int has_set = 0;
        tp_run_result r;
        tp_run_tepid(s, argv, &r);
        assert_int_equal(r.status, 0);
        for (o = v->opts; o->name; o++) {
            char want[80];
            snprintf(want, sizeof want, "--%s", o->name);
            tp_check_contains(v->name, r.out, want);
            has_set |= strcmp(o->name, "set") == 0;
        }
        tp_check_contains(v->name, r.out, "--help");
        if (!has_set && strstr(r.out, "--set"))
            fail_msg("tepid help %s lists --set, which it does not take", v->name);
        /* A verb reads a config exactly when it takes --set. */
        assert_int_equal(has_set, v->needs_file);
        tp_run_clear(&r);
    }
    {
        const char *argv[] = {"materials", "--set", "x=y", NULL};
        const char *argv_q[] = {"materials", "-q", NULL};
        tp_run_result r;
        tp_run_tepid(s, argv, &r);
        assert_int_equal(r.status, 2);
        tp_check_contains("materials --set", r.err, "unknown option --set for 'materials'");
        assert_string_equal(r.out, "");
        tp_run_clear(&r);
        assert_int_equal(tp_run_status(s, argv_q), 2);
    }
}

/* Issue 15 item 9: --set 'control.setpoint = 70 degC' failed with "unknown key
 * 'control.setpoint '". The demo's setpoint is 90 degC (configs/workshop-bed-24v.yaml); check
 * reports the one it used. */
static void test_cli_set_trims_blanks(void **state)
{
    tp_scratch *s = tp_group_scratch();
    const char *argv[] = {"check", DEMO, "--set", "  control.setpoint\t=  70 degC ", NULL};
    const char *argv_empty[] = {"check", DEMO, "--set", "control.setpoint =  ", NULL};
    tp_run_result r;
    (void)state;
    tp_run_tepid(s, argv, &r);
    assert_int_equal(r.status, 0);
    tp_check_contains("the setpoint used", r.out, "at 70.0 degC");
    tp_run_clear(&r);
    tp_run_tepid(s, argv_empty, &r);
    assert_int_equal(r.status, 2);
    /* "control.setpoint =  ": '=' is the 18th character, the value would start at 19. */
    tp_check_contains("blanks only", r.err, "--set:1:19: control.setpoint: missing value");
    tp_run_clear(&r);
}

/* Issue 15 item 10: `tepid help warmup` printed the general help. For every verb, 'tepid help
 * VERB' prints exactly what 'tepid VERB --help' prints. */
static void test_cli_help_verb(void **state)
{
    tp_scratch *s = tp_group_scratch();
    size_t i;
    (void)state;
    for (i = 0; i < tp_verbs_count; i++) {
        const char *a[] = {"help", tp_verbs[i]->name, NULL};
        const char *b[] = {tp_verbs[i]->name, "--help", NULL};
        char want[64];
        tp_run_result ra, rb;
        tp_run_tepid(s, a, &ra);
        tp_run_tepid(s, b, &rb);
        assert_int_equal(ra.status, 0);
        assert_int_equal(rb.status, 0);
        snprintf(want, sizeof want, "usage: tepid %s", tp_verbs[i]->name);
        tp_check_contains("the verb's usage", ra.out, want);
        assert_string_equal(ra.out, rb.out);
        tp_run_clear(&ra);
        tp_run_clear(&rb);
    }
}

/* Unknown verbs and options get the closest name as a hint (the suggestion helper of config
 * keys), and none when nothing is close. */
static void test_cli_did_you_mean(void **state)
{
    tp_scratch *s = tp_group_scratch();
    static const struct {
        const char *argv[5];
        const char *message;
        const char *hint; /* NULL: no did-you-mean expected */
    } cases[] = {
        {{"warmpu", DEMO, NULL}, "tepid: unknown verb 'warmpu'", "did you mean 'warmup'?"},
        {{"help", "stedy", NULL}, "tepid: unknown verb 'stedy'", "did you mean 'steady'?"},
        {{"heatup", DEMO, NULL}, "tepid: unknown verb 'heatup'", NULL},
        {{"warmup", DEMO, "--jsno", "x.json", NULL}, "unknown option --jsno for 'warmup'",
         "did you mean --json?"},
        {{"sweep", DEMO, "--sample", "3", NULL}, "unknown option --sample for 'sweep'",
         "did you mean --samples?"},
        {{"steady", DEMO, "--csv", "x.csv", NULL}, "unknown option --csv for 'steady'", NULL},
    };
    size_t i;
    (void)state;
    for (i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        tp_run_result r;
        tp_run_tepid(s, cases[i].argv, &r);
        assert_int_equal(r.status, 2);
        tp_check_contains("the message", r.err, cases[i].message);
        if (cases[i].hint)
            tp_check_contains("the hint", r.err, cases[i].hint);
        else if (strstr(r.err, "did you mean"))
            fail_msg("a suggestion where nothing is close:\n%s", r.err);
        tp_run_clear(&r);
    }
}

/* Issue 15 item 27: --jobs was capped at 256 without a word. The help states the cap, which is
 * the library's TP_SWEEP_MAX_JOBS; the cap is accepted and one more is refused naming it. */
static void test_cli_jobs_limit_stated(void **state)
{
    tp_scratch *s = tp_group_scratch();
    char want[64], max[16], over[16];
    const char *help[] = {"help", "sweep", NULL};
    const char *at_max[] = {"sweep", DEMO, "-q", "--vary", "heater.supply=20V,24V", "--jobs",
                            max, NULL};
    const char *above[] = {"sweep", DEMO, "-q", "--vary", "heater.supply=20V,24V", "--jobs",
                           over, NULL};
    tp_run_result r;
    (void)state;
    snprintf(max, sizeof max, "%d", TP_SWEEP_MAX_JOBS);
    snprintf(over, sizeof over, "%d", TP_SWEEP_MAX_JOBS + 1);
    tp_run_tepid(s, help, &r);
    assert_int_equal(r.status, 0);
    snprintf(want, sizeof want, "worker threads, 1 to %d", TP_SWEEP_MAX_JOBS);
    tp_check_contains("sweep --help", r.out, want);
    tp_run_clear(&r);
    assert_int_equal(tp_run_status(s, at_max), 0);
    tp_run_tepid(s, above, &r);
    assert_int_equal(r.status, 2);
    snprintf(want, sizeof want, "is not a whole number from 1 to %d", TP_SWEEP_MAX_JOBS);
    tp_check_contains("--jobs above the cap", r.err, want);
    tp_run_clear(&r);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_cli_every_output_checked_before_computing),
        cmocka_unit_test(test_cli_output_check_leaves_nothing),
        cmocka_unit_test(test_cli_output_check_accepts_devices),
        cmocka_unit_test(test_cli_two_outputs_on_stdout_refused),
        cmocka_unit_test(test_cli_options_are_per_verb),
        cmocka_unit_test(test_cli_set_trims_blanks),
        cmocka_unit_test(test_cli_help_verb),
        cmocka_unit_test(test_cli_did_you_mean),
        cmocka_unit_test(test_cli_jobs_limit_stated),
    };
    return cmocka_run_group_tests(tests, tp_scratch_group_setup, tp_scratch_group_teardown);
}
