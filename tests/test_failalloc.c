/* The allocation-failure test: tepid built with a counting allocator hook
 * (tests/failalloc/failalloc.c, the target tepid_failalloc) runs every verb on the demo configs
 * in configs/ while failing its Nth allocation. Each run must end as the run without a failure
 * does (the allocation was optional) or with exit status 1 and a message on standard error;
 * never a crash, an abort, or another status. Under the sanitizer build a leak fails the run
 * too (LeakSanitizer's exit status).
 *
 * For each case the run without a failure first counts the allocations M; then N = 1, 2, 3
 * and every STRIDE-th N up to M are failed, STRIDE chosen so that each case makes at most
 * TP_FAILALLOC_RUNS runs (about a minute for the whole test on the development machine). The
 * environment variable TP_FAILALLOC_STRIDE overrides the stride (1: every allocation, which
 * takes tens of minutes; run it after a change to error paths).
 *
 * Only tepid's own allocations are failed (the hook wraps the references of tepid's objects;
 * the shared libraries allocate through the C library directly, failalloc.c says why). */
#include "tp_test.h"

#define TP_FAILALLOC_RUNS 12 /* failing runs per case at most (besides N = 1..3) */

/* A case: the verb and its arguments; OUT/ stands for the scratch directory, a config without
 * a directory is taken from configs/. */
static const char *const cases[][12] = {
    {"warmup", "workshop-bed-24v.yaml", "-q", "--json", "OUT/w.json", "--csv", "OUT/w.csv"},
    {"warmup", "small-pad-grid.yaml", "-q", "--json", "OUT/w.json", "--map-csv", "OUT/m.csv"},
    {"warmup", "raw-five-node.yaml"},
    {"warmup", "enclosed-printer.yaml", "-q", "--json", "OUT/w.json"},
    {"warmup", "lab-hotplate-230v.yaml", "-q"},
    {"steady", "enclosed-printer.yaml", "--room", "12degC", "--json", "OUT/s.json"},
    {"steady", "small-pad-grid.yaml", "-q"},
    {"steady", "raw-five-node.yaml", "--json", "OUT/s.json"},
    {"explain", "lab-hotplate-230v.yaml", "--at", "150degC"},
    {"explain", "raw-five-node.yaml", "--json", "OUT/n.json"},
    {"explain", "small-pad-grid.yaml", "-q"},
    {"check", "workshop-bed-24v.yaml"},
    {"check", "small-pad-grid.yaml"},
    {"tune", "workshop-bed-24v.yaml", "--json", "OUT/t.json"},
    {"tune", "raw-five-node.yaml"},
    {"budget", "workshop-bed-24v.yaml", "--json", "OUT/b.json"},
    {"budget", "raw-five-node.yaml"},
    {"guard", "workshop-bed-24v.yaml", "--json", "OUT/g.json"},
    {"guard", "raw-five-node.yaml"},
    {"guard", "small-pad-grid.yaml", "-q"},
    {"fit", "workshop-bed-24v.yaml", "--log", "workshop-bed-24v-log.csv", "--free",
     "heater.resistance", "--free", "losses.convection_scale", "--json", "OUT/f.json"},
    {"sweep", "workshop-bed-24v.yaml", "--vary", "heater.supply=20V:28V:4V", "--json",
     "OUT/v.json"},
    {"sweep", "raw-five-node.yaml", "--spread", "network.sources.heater.resistance=normal:5%",
     "--samples", "4", "--jobs", "2", "--csv", "OUT/v.csv"},
    {"sweep", "raw-five-node.yaml", "--spread", "network.sources.heater.resistance=normal:5%",
     "--samples", "80", "--percentiles", "fitted", "--stats", "OUT/f.csv"},
    {"materials"},
};

#define NCASES (sizeof cases / sizeof cases[0])

/* The arguments of case `c` with paths resolved, into args (store holds the strings). */
static void case_args(const tp_scratch *s, size_t c, const char *args[13],
                      char store[12][TP_TEST_PATH])
{
    int i;
    for (i = 0; i < 12 && cases[c][i]; i++) {
        const char *a = cases[c][i];
        size_t n = strlen(a);
        if (strncmp(a, "OUT/", 4) == 0)
            tp_scratch_path(s, a + 4, store[i], TP_TEST_PATH);
        else if (!strchr(a, '/') && a[0] != '-' &&
                 ((n > 5 && strcmp(a + n - 5, ".yaml") == 0) ||
                  (n > 4 && strcmp(a + n - 4, ".csv") == 0)))
            snprintf(store[i], TP_TEST_PATH, "%s/configs/%s", TP_SOURCE_DIR, a);
        else
            snprintf(store[i], TP_TEST_PATH, "%s", a);
        args[i] = store[i];
    }
    args[i] = NULL;
}

/* Run case `c` failing allocation `n` (0: none); the result in r. */
static void run_case(const tp_scratch *s, size_t c, long n, int count, tp_run_result *r)
{
    const char *args[13];
    char store[12][TP_TEST_PATH];
    char value[32];
    snprintf(value, sizeof value, "%ld", n);
    assert_int_equal(setenv("TP_FAILALLOC", value, 1), 0);
    if (count)
        assert_int_equal(setenv("TP_FAILALLOC_COUNT", "1", 1), 0);
    else
        assert_int_equal(unsetenv("TP_FAILALLOC_COUNT"), 0);
    case_args(s, c, args, store);
    tp_run_program(s, TP_FAILALLOC_EXE, args, r);
}

static void describe(size_t c, long n, const tp_run_result *r, const char *what)
{
    int i;
    print_error("%s: allocation %ld failed in: tepid", what, n);
    for (i = 0; i < 12 && cases[c][i]; i++)
        print_error(" %s", cases[c][i]);
    print_error("\nexit status %d; standard error ends:\n%s\n", r->status,
                r->err + (strlen(r->err) > 1500 ? strlen(r->err) - 1500 : 0));
}

static void test_failalloc_every_verb(void **state)
{
    tp_scratch s;
    size_t c;
    long runs = 0, failures = 0, stride_env = 0;
    const char *e = getenv("TP_FAILALLOC_STRIDE");
    (void)state;
    if (e)
        stride_env = strtol(e, NULL, 10);
    tp_scratch_create(&s);
    for (c = 0; c < NCASES; c++) {
        tp_run_result r;
        const char *at;
        long m, n, stride;
        int base;
        run_case(&s, c, 0, 1, &r);
        base = r.status;
        at = strstr(r.err, "tp-failalloc: ");
        if (base != 0 || !at) {
            describe(c, 0, &r, "the case does not run");
            fail();
        }
        m = strtol(at + strlen("tp-failalloc: "), NULL, 10);
        assert_true(m > 0);
        tp_run_clear(&r);
        stride = stride_env > 0 ? stride_env : (m + TP_FAILALLOC_RUNS - 1) / TP_FAILALLOC_RUNS;
        if (stride < 1)
            stride = 1;
        /* N = 1..3, then every stride-th from a case-dependent offset, so that the cases
         * together touch every residue of the stride. */
        for (n = 1; n <= m; n = n < 3 ? n + 1 : n == 3 ? 4 + (long)(c % (size_t)stride) : n + stride) {
            run_case(&s, c, n, 0, &r);
            runs++;
            if (r.status != base && r.status != 1) {
                describe(c, n, &r, "crash, abort, leak or a wrong exit status");
                failures++;
            } else if (r.status == 1 && r.err[0] == '\0') {
                describe(c, n, &r, "exit status 1 without a message");
                failures++;
            }
            tp_run_clear(&r);
        }
    }
    unsetenv("TP_FAILALLOC");
    tp_scratch_destroy(&s);
    print_message("%ld runs with one failed allocation each, %ld wrong\n", runs, failures);
    assert_int_equal(failures, 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_failalloc_every_verb),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
