/* The manual pages against --help: every option a verb's --help lists is in its page and the
 * page lists no other; every verb's --help ends with two or three examples, which are in its
 * page and run; tepid(1) names every verb and common option; --version names the libraries
 * with the versions their headers give; the package's changelog is this version's. The pages
 * are the build's (build/man, written by 'tepid _man'); tests/test_manpages.sh checks that
 * groff renders them without warnings. Check values: the program's own tables; the pages'
 * sections follow the usual manual-page layout (man-pages(7); common practice, no source). */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <ctype.h>

#include <gsl/gsl_version.h>
#include <plplot/plConfig.h>
#include <sundials/sundials_config.h>
#include <yaml.h>

#include "tp_test.h"

#define MAX_ITEMS 64
#define ITEM_MAX 128

typedef struct list {
    int n;
    char item[MAX_ITEMS][ITEM_MAX];
} list;

static void list_add(list *l, const char *s, size_t len)
{
    assert_true(l->n < MAX_ITEMS && len < ITEM_MAX);
    memcpy(l->item[l->n], s, len);
    l->item[l->n][len] = '\0';
    l->n++;
}

/* Standard output of tepid with `args` (exit 0 required); the caller frees it. */
static char *tepid_out(const tp_scratch *s, const char *const *args)
{
    tp_run_result r;
    char *out;
    tp_run_tepid(s, args, &r);
    if (r.status != 0)
        print_error("tepid %s: exit %d\n%s", args[0], r.status, r.err);
    assert_int_equal(r.status, 0);
    out = r.out;
    free(r.err);
    return out;
}

/* The lines of the block that starts with a line beginning `head` and ends at a blank line
 * or the end, without the head line; NULL when there is no such block. The caller frees. */
static char *block(const char *text, const char *head)
{
    const char *p = text, *end;
    while (p && strncmp(p, head, strlen(head)) != 0) {
        p = strchr(p, '\n');
        if (p)
            p++;
    }
    if (!p)
        return NULL;
    p = strchr(p, '\n');
    if (!p)
        return strdup("");
    p++;
    end = strstr(p, "\n\n");
    return strndup(p, end ? (size_t)(end - p + 1) : strlen(p));
}

/* The verbs of 'tepid --help' (the block after "verbs:", first word of each line). */
static void help_verbs(const tp_scratch *s, list *verbs)
{
    const char *args[] = {"--help", NULL};
    char *out = tepid_out(s, args), *b = block(out, "verbs:"), *line, *save = NULL;
    assert_non_null(b);
    memset(verbs, 0, sizeof *verbs);
    for (line = strtok_r(b, "\n", &save); line; line = strtok_r(NULL, "\n", &save)) {
        while (*line == ' ')
            line++;
        list_add(verbs, line, strcspn(line, " "));
    }
    free(b);
    free(out);
    assert_true(verbs->n >= 10); /* README.md's usage table lists ten verbs */
}

/* The options of 'tepid VERB --help': the leading "-x," and "--name" words of each line of
 * the "options:" block. *lines gets the number of lines (one option each). */
static void help_options(const char *help, list *opts, int *lines)
{
    char *b = block(help, "options:"), *line, *save = NULL;
    assert_non_null(b);
    memset(opts, 0, sizeof *opts);
    *lines = 0;
    for (line = strtok_r(b, "\n", &save); line; line = strtok_r(NULL, "\n", &save)) {
        const char *p = line;
        (*lines)++;
        for (;;) {
            size_t len;
            while (*p == ' ')
                p++;
            if (*p != '-')
                break;
            len = strcspn(p, " ,");
            list_add(opts, p, len);
            p += len;
            if (*p == ',')
                p++;
        }
    }
    free(b);
}

/* `text` with every '-' written as roff's minus sign "\-". */
static void roff_minus(const char *text, char *out, size_t size)
{
    size_t n = 0;
    for (; *text && n + 3 < size; text++) {
        if (*text == '-')
            out[n++] = '\\';
        out[n++] = *text;
    }
    out[n] = '\0';
}

static char *read_page(const char *name)
{
    char path[TP_TEST_PATH];
    char *text;
    snprintf(path, sizeof path, "%s/man/%s", TP_BINARY_DIR, name);
    text = tp_read_file(path);
    if (!text)
        print_error("cannot read %s (the build writes it)\n", path);
    assert_non_null(text);
    return text;
}

static int count(const char *text, const char *part)
{
    int n = 0;
    for (text = strstr(text, part); text; text = strstr(text + 1, part))
        n++;
    return n;
}

/* Call `check` for every verb of 'tepid --help' with the verb's --help text and the text of
 * its page tepid-VERB.1 (which `check` may modify). */
static void each_verb(void (*check)(const tp_scratch *s, const char *verb, const char *help,
                                    char *page))
{
    tp_scratch *s = tp_group_scratch();
    list verbs;
    int v;
    help_verbs(s, &verbs);
    for (v = 0; v < verbs.n; v++) {
        const char *args[] = {verbs.item[v], "--help", NULL};
        char *help = tepid_out(s, args), *page, name[ITEM_MAX + 16];
        snprintf(name, sizeof name, "tepid-%s.1", verbs.item[v]);
        page = read_page(name);
        check(s, verbs.item[v], help, page);
        free(page);
        free(help);
    }
}

/* The example lines at the end of a verb's --help, without their indent, into lines[] (at
 * most 3, NULL after the last); *n gets their number. Returns the buffer they point into (the
 * caller frees it). Fails unless the examples end the help. */
static char *help_examples(const char *help, char *lines[4], int *n)
{
    const char *head = strstr(help, "\nexamples");
    char *ex, *line, *save = NULL;
    assert_non_null(head);
    /* the examples are the end of the help: no blank line after their head */
    assert_null(strstr(head + 1, "\n\n"));
    ex = block(head + 1, "examples");
    assert_non_null(ex);
    *n = 0;
    for (line = strtok_r(ex, "\n", &save); line; line = strtok_r(NULL, "\n", &save)) {
        assert_true(*n < 3);
        lines[(*n)++] = line + strspn(line, " ");
    }
    lines[*n] = NULL;
    return ex;
}

static void check_options(const tp_scratch *s, const char *verb, const char *help, char *page)
{
    list opts;
    int i, lines;
    char *sect, *end;
    (void)s;
    help_options(help, &opts, &lines);
    assert_true(opts.n >= lines && lines >= 2); /* at least one option of its own and --help */
    for (i = 0; i < opts.n; i++) {
        char want[ITEM_MAX * 2 + 8], minus[ITEM_MAX * 2];
        roff_minus(opts.item[i], minus, sizeof minus);
        snprintf(want, sizeof want, "\\fB%s\\fR", minus);
        tp_check_contains(verb, page, want);
    }
    /* and no option the help lacks: one tagged paragraph per help line */
    sect = strstr(page, ".SH OPTIONS\n");
    assert_non_null(sect);
    end = strstr(sect + 1, "\n.SH ");
    assert_non_null(end);
    *end = '\0';
    assert_int_equal(count(sect, ".TP\n"), lines);
}

static void test_manpage_has_every_help_option(void **state)
{
    (void)state;
    each_verb(check_options);
}

static void check_examples(const tp_scratch *s, const char *verb, const char *help, char *page)
{
    char *lines[4], lead[64], *buf;
    int i, n;
    (void)s;
    buf = help_examples(help, lines, &n);
    assert_true(n >= 2 && n <= 3); /* issue 20: two or three examples */
    snprintf(lead, sizeof lead, "tepid %s", verb);
    for (i = 0; i < n; i++) {
        char minus[1024];
        assert_int_equal(strncmp(lines[i], lead, strlen(lead)), 0);
        roff_minus(lines[i], minus, sizeof minus);
        tp_check_contains(verb, page, minus);
    }
    free(buf);
}

static void test_help_ends_with_examples_that_are_in_the_page(void **state)
{
    (void)state;
    each_verb(check_examples);
}

/* Run one example line: demo files from configs/, outputs into the scratch directory, which
 * must exist afterwards. */
static void run_example(const tp_scratch *s, char *line)
{
    const char *args[32];
    char store[32][TP_TEST_PATH], *tok, *save = NULL;
    int n = 0, i, status;
    for (tok = strtok_r(line, " ", &save); tok; tok = strtok_r(NULL, " ", &save)) {
        char demo[TP_TEST_PATH];
        if (n == 0 && strcmp(tok, "tepid") == 0) {
            n = -1; /* tp_run_tepid supplies the binary */
        } else {
            assert_true(n < 31);
            snprintf(demo, sizeof demo, "%s/configs/%s", TP_SOURCE_DIR, tok);
            if (!strchr(tok, '/') && tp_file_exists(demo))
                snprintf(store[n], TP_TEST_PATH, "%s", demo);
            else if (tp_looks_like_output(tok))
                tp_scratch_path(s, tok, store[n], TP_TEST_PATH);
            else
                snprintf(store[n], TP_TEST_PATH, "%s", tok);
            args[n] = store[n];
        }
        n++;
    }
    args[n] = NULL;
    status = tp_run_status(s, args);
    if (status != 0)
        print_error("example failed with status %d: %s ...\n", status, args[0]);
    assert_int_equal(status, 0);
    for (i = 0; i < n; i++)
        if (strncmp(args[i], s->dir, strlen(s->dir)) == 0 && !tp_file_exists(args[i]))
            fail_msg("the example did not write %s", args[i]);
}

static void run_examples(const tp_scratch *s, const char *verb, const char *help, char *page)
{
    char *lines[4], *buf;
    int i, n;
    (void)verb;
    (void)page;
    buf = help_examples(help, lines, &n);
    for (i = 0; i < n; i++) {
        char copy[1024];
        snprintf(copy, sizeof copy, "%s", lines[i]);
        run_example(s, copy);
    }
    free(buf);
}

static void test_help_examples_run(void **state)
{
    (void)state;
    each_verb(run_examples);
}

static void test_main_page_names_verbs_and_common_options(void **state)
{
    tp_scratch *s = tp_group_scratch();
    list verbs;
    char *page = read_page("tepid.1");
    int v;
    (void)state;
    help_verbs(s, &verbs);
    for (v = 0; v < verbs.n; v++) {
        char want[ITEM_MAX + 32];
        snprintf(want, sizeof want, ".TP\n.B %s\n", verbs.item[v]);
        tp_check_contains("tepid.1 VERBS", page, want);
        snprintf(want, sizeof want, ".BR tepid\\-%s (1)", verbs.item[v]);
        tp_check_contains("tepid.1 SEE ALSO", page, want);
    }
    /* the common options of 'tepid --help' (README.md: --set, -q, --help) */
    tp_check_contains("tepid.1", page, "\\fB\\-\\-set\\fR \\fIKEY=VALUE\\fR");
    tp_check_contains("tepid.1", page, "\\fB\\-q\\fR, \\fB\\-\\-quiet\\fR");
    tp_check_contains("tepid.1", page, "\\fB\\-h\\fR, \\fB\\-\\-help\\fR");
    /* keys of the schema, with list items as placeholders (docs/user-guide.md key table) */
    tp_check_contains("tepid.1 keys", page, ".B heater.supply_resistance\n");
    tp_check_contains("tepid.1 keys", page, ".B bed.layers.ID.thickness\n");
    tp_check_contains("tepid.1 keys", page, ".B network.links.N.conductance\n");
    /* no template mark left */
    assert_null(strstr(page, "@VERBS@"));
    assert_null(strstr(page, "@KEYS@"));
    assert_null(strstr(page, "@VERSION@"));
    free(page);
}

/* "  NAME  VERSION" from --version, into out. */
static void version_of(const char *text, const char *name, char *out, size_t size)
{
    char head[64];
    const char *p;
    snprintf(head, sizeof head, "\n  %s ", name);
    p = strstr(text, head);
    if (!p)
        fail_msg("--version does not name %s:\n%s", name, text);
    p += strlen(head);
    p += strspn(p, " ");
    snprintf(out, size, "%.*s", (int)strcspn(p, "\n"), p);
}

static void test_version_names_the_libraries(void **state)
{
    tp_scratch *s = tp_group_scratch();
    const char *args[] = {"--version", NULL};
    char *out = tepid_out(s, args), v[64], cjson[32];
    (void)state;
    tp_check_contains("--version", out, "tepid " TP_VERSION "\n");
    /* the versions the headers of this build give (sundials_config.h, plConfig.h, cJSON.h),
     * and libyaml's own report of its version */
    version_of(out, "SUNDIALS", v, sizeof v);
    assert_string_equal(v, SUNDIALS_VERSION);
    version_of(out, "PLplot", v, sizeof v);
    assert_string_equal(v, PLPLOT_VERSION);
    snprintf(cjson, sizeof cjson, "%d.%d.%d", CJSON_VERSION_MAJOR, CJSON_VERSION_MINOR,
             CJSON_VERSION_PATCH);
    version_of(out, "cJSON", v, sizeof v);
    assert_string_equal(v, cjson);
    version_of(out, "libyaml", v, sizeof v);
    assert_string_equal(v, yaml_get_version_string());
    version_of(out, "GSL", v, sizeof v); /* gsl_version.h */
    assert_string_equal(v, GSL_VERSION);
    /* udunits2 and cminpack have no version in their headers: a dotted number */
    version_of(out, "udunits2", v, sizeof v);
    assert_true(isdigit((unsigned char)v[0]) && strchr(v, '.'));
    version_of(out, "cminpack", v, sizeof v);
    assert_true(isdigit((unsigned char)v[0]) && strchr(v, '.'));
    free(out);
}

/* The package's changelog (docs/debian/changelog, installed as changelog.gz) opens with an entry
 * for this version, in the form Debian Policy 4.6 section 4.4 gives for a changelog entry's
 * first line: "package (version) distribution(s); urgency=urgency". */
static void test_changelog_opens_with_this_version(void **state)
{
    char path[TP_TEST_PATH], want[64], *text;
    (void)state;
    snprintf(path, sizeof path, "%s/docs/debian/changelog", TP_SOURCE_DIR);
    text = tp_read_file(path);
    assert_non_null(text);
    snprintf(want, sizeof want, "tepid (%s) ", TP_VERSION);
    if (strncmp(text, want, strlen(want)) != 0)
        fail_msg("docs/debian/changelog does not open with an entry '%s...': add one for the "
                 "version in CMakeLists.txt",
                 want);
    tp_check_contains("changelog entry", text, "; urgency=");
    tp_check_contains("changelog trailer", text, "\n -- ");
    free(text);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_manpage_has_every_help_option),
        cmocka_unit_test(test_help_ends_with_examples_that_are_in_the_page),
        cmocka_unit_test(test_help_examples_run),
        cmocka_unit_test(test_main_page_names_verbs_and_common_options),
        cmocka_unit_test(test_version_names_the_libraries),
        cmocka_unit_test(test_changelog_opens_with_this_version),
    };
    return cmocka_run_group_tests(tests, tp_scratch_group_setup, tp_scratch_group_teardown);
}
