/* Tests for config.c, yamltree.c and the raw-network checks of assemble.c, through the binary:
 * every input error of issue 2 (items 2 and 3) by its FILE:LINE:COL: key.path: message line,
 * exit status 2 and the absence of any output file; the two warnings; --set overrides; and
 * the command-line conventions of --help, VERB --help, --version and usage errors. */
#include "tp_test.h"

/* A valid raw network (an invented case) with slots for the variations:
 *   1 plate's capacity   2 extra node lines   3 extra link lines
 *   4 pad's power        5 extra source lines 6 the top-level tail (run, control) */
#define BASE_YAML                                                                                  \
    "network:\n"                                                                                   \
    "  nodes:\n"                                                                                   \
    "    - {id: plate, capacity: %s, initial: 21 degC}\n"                                          \
    "    - {id: room, fixed: 21 degC}\n"                                                           \
    "%s"                                                                                           \
    "  links:\n"                                                                                   \
    "    - {between: [plate, room], conductance: 1.6 W/K}\n"                                       \
    "%s"                                                                                           \
    "  sources:\n"                                                                                 \
    "    - {id: pad, node: plate, power: %s}\n"                                                    \
    "%s"                                                                                           \
    "%s"

typedef struct variant {
    const char *capacity, *nodes, *links, *power, *sources, *tail;
} variant;

static const variant valid = {"640 J/K", "", "", "120 W", "", "run: {duration: 10 s, step: 1 s}\n"};

static void compose(const variant *v, char *out, size_t size)
{
    int n = snprintf(out, size, BASE_YAML, v->capacity, v->nodes, v->links, v->power, v->sources,
                     v->tail);
    assert_true(n > 0 && (size_t)n < size);
}

/* Line and column (1-based, bytes) of the one occurrence of `needle` in `text`: found here by
 * searching the text, independently of the parser's positions. */
static void locate(const char *text, const char *needle, int *line, int *col)
{
    const char *at = strstr(text, needle);
    if (!at || strstr(at + 1, needle))
        print_error("'%s' must occur exactly once in\n%s", needle, text);
    assert_non_null(at);
    assert_null(strstr(at + 1, needle));
    tp_text_locate(text, needle, line, col);
}

/* The first line of `text` (into out). */
static void first_line(const char *text, char *out, size_t size)
{
    size_t n = strcspn(text, "\n");
    assert_true(n < size);
    memcpy(out, text, n);
    out[n] = '\0';
}

static int count_lines(const char *text)
{
    int n = 0;
    for (; *text; text++)
        n += *text == '\n';
    return n;
}

/* ---- input errors ------------------------------------------------------------------------- */

typedef struct bad_case {
    variant v;
    const char *at;      /* the offending text: its position is the expected LINE:COL */
    const char *path;    /* the key path printed */
    const char *message; /* the message after the path, exactly */
    const char *hint;    /* a fragment of the hint line */
} bad_case;

/* Each case changes one thing in the valid file. Messages are tepid's own wording; what they
 * must say comes from issue 2 items 2-3 and docs/user-guide.md (quantities and units). */
static const bad_case bad_cases[] = {
    /* A bare number for a dimensional key. */
    {{"640", "", "", "120 W", "", ""},
     "640, initial",
     "network.nodes.plate.capacity",
     "'640' has no unit; expected a quantity in J/K, e.g. '640 J/K'",
     "every dimensional value carries a unit"},
    /* A unit of the wrong dimension. */
    {{"640 W", "", "", "120 W", "", ""},
     "640 W",
     "network.nodes.plate.capacity",
     "'640 W' has the wrong kind of unit; expected a quantity in J/K, e.g. '640 J/K'",
     "check the unit"},
    {{"640 J/K", "", "", "120 W/K", "", ""},
     "120 W/K",
     "network.sources.pad.power",
     "'120 W/K' has the wrong kind of unit; expected a quantity in W, e.g. '220 W'",
     "check the unit"},
    /* An unknown key, with a did-you-mean hint. */
    {{"640 J/K", "", "", "120 W", "", "run: {duration: 10 s, stpe: 1 s}\n"},
     "stpe",
     "run.stpe",
     "unknown key",
     "did you mean 'step'?"},
    {{"640 J/K", "", "", "120 W", "", "rnu: {duration: 10 s}\n"},
     "rnu",
     "rnu",
     "unknown key",
     "did you mean 'run'?"},
    /* A duplicate key: the second one is reported. */
    {{"640 J/K", "", "", "120 W", "", "run: {duration: 10 s, step: 1 s, duration: 20 s}\n"},
     "duration: 20 s",
     "run.duration",
     "duplicate key",
     "the first 'duration' is at line 9"},
    /* A missing required key: reported at the section that lacks it. */
    {{"640 J/K", "    - {capacity: 5 J/K, initial: 21 degC}\n", "", "120 W", "", ""},
     "{capacity: 5",
     "network.nodes.2.id",
     "missing required key",
     "add 'id:'"},
    {{"640 J/K", "", "    - {between: [plate, room], convection: {coefficient: 8 W/(m2.K)}}\n",
      "120 W", "", ""},
     "{coefficient",
     "network.links.1.convection.area",
     "missing required key",
     "add 'area:', e.g. 0.05 m2"},
    /* NaN and infinity, in YAML's spelling and in words. */
    {{"640 J/K", "", "", "nan W", "", ""},
     "nan W",
     "network.sources.pad.power",
     "'nan W' is not a number with a unit",
     "write a number then a unit"},
    {{"640 J/K", "", "", ".nan", "", ""},
     ".nan",
     "network.sources.pad.power",
     "'.nan' is not a number with a unit",
     "write a number then a unit"},
    {{"640 J/K", "", "", ".inf", "", ""},
     ".inf",
     "network.sources.pad.power",
     "'.inf' is not a number with a unit",
     "write a number then a unit"},
    {{"640 J/K", "", "", "inf W", "", ""},
     "inf W",
     "network.sources.pad.power",
     "'inf W' is not a number with a unit",
     "write a number then a unit"},
    /* Unknown node ids (with the closest id as a hint) and a duplicate id. */
    {{"640 J/K", "", "    - {between: [plate, rooom], conductance: 0.5 W/K}\n", "120 W", "", ""},
     "[plate, rooom]",
     "network.links.1.between",
     "no node 'rooom'",
     "did you mean 'room'?"},
    {{"640 J/K", "", "", "120 W", "    - {id: lamp, node: plaet, power: 5 W}\n", ""},
     "plaet",
     "network.sources.1.node",
     "no node 'plaet'",
     "did you mean 'plate'?"},
    {{"640 J/K", "", "", "120 W", "",
      "control: {source: pad, sensor: plat, mode: on-off, setpoint: 60 degC}\n"},
     "plat, mode",
     "control.sensor",
     "the controller reads a node that does not exist: 'plat'",
     "did you mean 'plate'?"},
    {{"640 J/K", "    - {id: plate, capacity: 5 J/K, initial: 21 degC}\n", "", "120 W", "", ""},
     "plate, capacity: 5 J/K",
     "network.nodes",
     "duplicate node id 'plate'",
     "give every node its own id"},
    /* A node with neither capacity nor fixed. */
    {{"640 J/K", "    - {id: x}\n", "", "120 W", "", ""},
     "{id: x}",
     "network.nodes",
     "node 'x' has neither capacity nor fixed",
     "add capacity and initial, or fixed"},
    /* Non-positive capacity. */
    {{"0 J/K", "", "", "120 W", "", ""},
     "0 J/K",
     "network.nodes.plate.capacity",
     "must be positive, got '0 J/K'",
     "use a value above zero"},
    {{"-5 J/K", "", "", "120 W", "", ""},
     "-5 J/K",
     "network.nodes.plate.capacity",
     "must be positive, got '-5 J/K'",
     "use a value above zero"},
    /* Emissivity outside (0, 1]. */
    {{"640 J/K", "",
      "    - {between: [plate, room], radiation: {area: 0.05 m2, emissivity: 1.2}}\n", "120 W", "",
      ""},
     "1.2}",
     "network.links.1.radiation.emissivity",
     "'1.2' is outside (0, 1]",
     "a fraction lies in (0, 1]"},
    {{"640 J/K", "", "    - {between: [plate, room], radiation: {area: 0.05 m2, emissivity: 0}}\n",
      "120 W", "", ""},
     "0}}",
     "network.links.1.radiation.emissivity",
     "'0' is outside (0, 1]",
     "a fraction lies in (0, 1]"},
    /* A link from a node to itself. */
    {{"640 J/K", "", "    - {between: [plate, plate], conductance: 1 W/K}\n", "120 W", "", ""},
     "[plate, plate]",
     "network.links.1.between",
     "link from 'plate' to itself",
     "a link connects two different nodes"},
};

/* Issue 2 items 2-3: each error is printed as FILE:LINE:COL: key.path: message (LINE:COL of
 * the offending value, key or section) plus a hint, the exit status is 2 (docs/user-guide.md: usage
 * or input error), nothing goes to standard output, and no output file is written (--csv
 * names a path that must not exist afterwards). */
static void test_config_errors_by_message_and_status(void **state)
{
    tp_scratch s;
    char csv[TP_TEST_PATH];
    (void)state;
    tp_scratch_create(&s);
    tp_scratch_path(&s, "out.csv", csv, sizeof csv);
    for (size_t i = 0; i < sizeof bad_cases / sizeof bad_cases[0]; i++) {
        const bad_case *c = &bad_cases[i];
        variant v = c->v;
        char yaml[2048], cfg[TP_TEST_PATH], expected[2048], got[2048];
        tp_run_result r;
        int line, col;
        if (!v.tail[0])
            v.tail = valid.tail;
        compose(&v, yaml, sizeof yaml);
        tp_scratch_write(&s, "bad.yaml", yaml, cfg);
        locate(yaml, c->at, &line, &col);
        snprintf(expected, sizeof expected, "%s:%d:%d: %s: %s", cfg, line, col, c->path,
                 c->message);
        {
            const char *args[] = {"warmup", cfg, "--csv", csv, NULL};
            tp_run_tepid(&s, args, &r);
        }
        first_line(r.err, got, sizeof got);
        if (strcmp(got, expected) != 0)
            print_error("case %zu: expected\n  %s\ngot\n  %s\n", i, expected, r.err);
        assert_string_equal(got, expected);
        tp_check_contains("hint", r.err, "  hint: ");
        tp_check_contains("hint", r.err, c->hint);
        assert_int_equal(r.status, 2);
        assert_string_equal(r.out, "");
        assert_false(tp_file_exists(csv));
        tp_run_clear(&r);
    }
    tp_scratch_destroy(&s);
}

/* The same input errors from `check`, which writes nothing anyway: exit 2 as well. */
static void test_config_check_exit_status(void **state)
{
    tp_scratch s;
    tp_run_result r;
    char yaml[2048], cfg[TP_TEST_PATH];
    variant v = valid;
    (void)state;
    tp_scratch_create(&s);
    v.capacity = "640";
    compose(&v, yaml, sizeof yaml);
    tp_scratch_write(&s, "bad.yaml", yaml, cfg);
    {
        const char *args[] = {"check", cfg, NULL};
        tp_run_tepid(&s, args, &r);
    }
    assert_int_equal(r.status, 2);
    tp_check_contains("stderr", r.err, "network.nodes.plate.capacity: '640' has no unit");
    tp_run_clear(&r);
    /* The valid file: one summary line on standard output, exit 0 (issue 2 item 7). */
    compose(&valid, yaml, sizeof yaml);
    tp_scratch_write(&s, "good.yaml", yaml, cfg);
    {
        const char *args[] = {"check", cfg, NULL};
        tp_run_tepid(&s, args, &r);
    }
    assert_int_equal(r.status, 0);
    assert_int_equal(count_lines(r.out), 1);
    tp_check_contains("summary", r.out, "valid (raw network form, 0 warnings)");
    assert_string_equal(r.err, "");
    tp_run_clear(&r);
    tp_scratch_destroy(&s);
}

/* ---- warnings ------------------------------------------------------------------------------ */

/* Issue 2 item 3: a node with no link, and a powered node with no path to a fixed node, are
 * warnings: FILE:LINE:COL: warning: ... at the nodes or sources list, exit 0, and the run
 * goes on (the CSV is written). */
static void test_config_warnings(void **state)
{
    static const struct {
        variant v;
        const char *at, *message;
    } cases[] = {
        {{"640 J/K", "    - {id: lonely, capacity: 5 J/K, initial: 21 degC}\n", "", "120 W", "",
          ""},
         "- {id: plate",
         "warning: node 'lonely' has no link"},
        {{"640 J/K",
          "    - {id: island, capacity: 5 J/K, initial: 21 degC}\n"
          "    - {id: isle, capacity: 5 J/K, initial: 21 degC}\n",
          "    - {between: [island, isle], conductance: 1 W/K}\n", "120 W",
          "    - {id: lamp, node: island, power: 5 W}\n", ""},
         "- {id: pad",
         "warning: source 'lamp' heats nodes with no path to a fixed node"},
    };
    tp_scratch s;
    char csv[TP_TEST_PATH];
    (void)state;
    tp_scratch_create(&s);
    tp_scratch_path(&s, "out.csv", csv, sizeof csv);
    for (size_t i = 0; i < 2; i++) {
        variant v = cases[i].v;
        char yaml[2048], cfg[TP_TEST_PATH], expected[2048], got[2048];
        tp_run_result r;
        int line, col;
        v.tail = valid.tail;
        compose(&v, yaml, sizeof yaml);
        tp_scratch_write(&s, "warn.yaml", yaml, cfg);
        locate(yaml, cases[i].at, &line, &col);
        snprintf(expected, sizeof expected, "%s:%d:%d: %s", cfg, line, col, cases[i].message);
        {
            const char *args[] = {"warmup", cfg, "--csv", csv, "-q", NULL};
            tp_run_tepid(&s, args, &r);
        }
        first_line(r.err, got, sizeof got);
        assert_string_equal(got, expected);
        assert_int_equal(r.status, 0);
        assert_true(tp_file_exists(csv));
        remove(csv);
        tp_run_clear(&r);
    }
    tp_scratch_destroy(&s);
}

/* ---- --set overrides ----------------------------------------------------------------------- */

/* Run `tepid steady` on the valid file with one --set; returns the plate temperature (degC)
 * and power (W) from the JSON. Steady state by hand for the file: T = 21 degC + P / G. */
static void steady_with_set(tp_scratch *s, const char *set, double *plate, double *power)
{
    char yaml[2048], cfg[TP_TEST_PATH], json[TP_TEST_PATH], *text, *p;
    tp_run_result r;
    compose(&valid, yaml, sizeof yaml);
    tp_scratch_write(s, "set.yaml", yaml, cfg);
    tp_scratch_path(s, "out.json", json, sizeof json);
    {
        const char *args[] = {"steady", cfg, "--set", set, "--json", json, "-q", NULL};
        tp_run_tepid(s, args, &r);
    }
    if (r.status != 0)
        print_error("%s", r.err);
    assert_int_equal(r.status, 0);
    tp_run_clear(&r);
    text = tp_read_file(json);
    assert_non_null(text);
    /* Two numbers by key; the JSON layout itself is test_steady's concern. */
    p = strstr(text, "\"plate\":");
    assert_non_null(p);
    *plate = strtod(p + strlen("\"plate\":"), NULL);
    p = strstr(text, "\"power_W\":");
    assert_non_null(p);
    *power = strtod(p + strlen("\"power_W\":"), NULL);
    free(text);
    remove(json);
}

/* --set key.path=value overrides any key (docs/user-guide.md), hand calculations T = 21 + P/G:
 *   a list item by id:  network.sources.pad.power=60 W       -> 21 + 60/1.6 = 58.5 degC
 *   a list item by index, nested: network.links.0.conductance=2.4 W/K -> 21 + 120/2.4 = 71
 *   a new section:      control={...on-off, setpoint: 50 degC} -> holding power
 *                       1.6 W/K x (50 - 21) K = 46.4 W, plate at 50 degC.
 * Tolerance 1e-6: KINSOL's residual tolerance (steady.c) over 1.6 W/K, far below. */
static void test_config_set_overrides(void **state)
{
    tp_scratch s;
    double plate, power;
    (void)state;
    tp_scratch_create(&s);
    steady_with_set(&s, "network.sources.pad.power=60 W", &plate, &power);
    tp_check_abs("by id", plate, 58.5, 1.0e-6);
    tp_check_abs("power", power, 60.0, 1.0e-9);
    steady_with_set(&s, "network.links.0.conductance=2.4 W/K", &plate, &power);
    tp_check_abs("nested by index", plate, 71.0, 1.0e-6);
    steady_with_set(&s, "control={source: pad, sensor: plate, mode: on-off, setpoint: 50 degC}",
                    &plate, &power);
    tp_check_abs("new section: plate", plate, 50.0, 1.0e-6);
    tp_check_abs("new section: holding power", power, 46.4, 1.0e-6);
    tp_scratch_destroy(&s);
}

/* A plain value: --set run.duration=20 s makes the CSV 21 rows (0..20 s at 1 s) instead of
 * 11; and a bad override is an input error at "--set:N:COL" (COL of the value: 30 for
 * "network.nodes.plate.capacity=5"), exit 2, no output. */
static void test_config_set_value_and_error(void **state)
{
    tp_scratch s;
    tp_run_result r;
    char yaml[2048], cfg[TP_TEST_PATH], csv[TP_TEST_PATH], got[1024], *text;
    (void)state;
    tp_scratch_create(&s);
    compose(&valid, yaml, sizeof yaml);
    tp_scratch_write(&s, "set.yaml", yaml, cfg);
    tp_scratch_path(&s, "out.csv", csv, sizeof csv);
    {
        const char *args[] = {"warmup", cfg, "--set", "run.duration=20 s",
                              "--csv",  csv, "-q",    NULL};
        tp_run_tepid(&s, args, &r);
    }
    assert_int_equal(r.status, 0);
    tp_run_clear(&r);
    text = tp_read_file(csv);
    assert_non_null(text);
    assert_int_equal(count_lines(text), 1 + 21);
    free(text);
    remove(csv);
    {
        const char *args[] = {"warmup", cfg, "--set", "network.nodes.plate.capacity=5",
                              "--csv",  csv, NULL};
        tp_run_tepid(&s, args, &r);
    }
    first_line(r.err, got, sizeof got);
    assert_string_equal(got, "--set:1:30: network.nodes.plate.capacity: '5' has no unit; "
                             "expected a quantity in J/K, e.g. '640 J/K'");
    assert_int_equal(r.status, 2);
    assert_false(tp_file_exists(csv));
    tp_run_clear(&r);
    {
        const char *args[] = {"check", cfg, "--set", "network.nodes.plate.capcity=5 J/K", NULL};
        tp_run_tepid(&s, args, &r);
    }
    tp_check_contains("stderr", r.err, "network.nodes.plate.capcity: unknown key");
    tp_check_contains("stderr", r.err, "did you mean 'capacity'?");
    assert_int_equal(r.status, 2);
    tp_run_clear(&r);
    tp_scratch_destroy(&s);
}

/* ---- command-line conventions ---------------------------------------------------------------- */

/* Help goes to standard output with exit 0 (issue 2 item 7; GNU Coding Standards, "--help",
 * common practice): the top-level help lists the verbs; VERB --help gives that verb's usage
 * and options; --version prints "tepid VERSION". */
static void test_cli_help_and_version(void **state)
{
    static const char *const verbs[] = {"warmup", "steady", "explain", "check", "materials"};
    tp_scratch s;
    tp_run_result r;
    char expected[128];
    (void)state;
    tp_scratch_create(&s);
    {
        const char *args[] = {"--help", NULL};
        tp_run_tepid(&s, args, &r);
    }
    assert_int_equal(r.status, 0);
    assert_string_equal(r.err, "");
    assert_true(strncmp(r.out, "usage: tepid VERB FILE [options]\n", 33) == 0);
    for (size_t i = 0; i < sizeof verbs / sizeof verbs[0]; i++) {
        snprintf(expected, sizeof expected, "\n  %s ", verbs[i]);
        tp_check_contains("verb list", r.out, expected);
    }
    tp_run_clear(&r);
    {
        const char *args[] = {"warmup", "--help", NULL};
        tp_run_tepid(&s, args, &r);
    }
    assert_int_equal(r.status, 0);
    assert_string_equal(r.err, "");
    assert_true(strncmp(r.out, "usage: tepid warmup FILE [options]\n", 35) == 0);
    tp_check_contains("warmup options", r.out, "--csv FILE");
    tp_check_contains("common options", r.out, "--set KEY=VALUE");
    tp_run_clear(&r);
    {
        const char *args[] = {"steady", "--help", NULL};
        tp_run_tepid(&s, args, &r);
    }
    assert_int_equal(r.status, 0);
    tp_check_contains("steady options", r.out, "--json FILE");
    tp_run_clear(&r);
    {
        const char *args[] = {"--version", NULL};
        tp_run_tepid(&s, args, &r);
    }
    assert_int_equal(r.status, 0);
    /* the first line; the library versions after it are checked in test_manpage */
    snprintf(expected, sizeof expected, "tepid %s\n", TP_VERSION);
    assert_int_equal(strncmp(r.out, expected, strlen(expected)), 0);
    tp_run_clear(&r);
    tp_scratch_destroy(&s);
}

/* Usage errors print a short usage line on standard error, nothing on standard output, and
 * exit 2 (issue 2 item 7): no arguments, an unknown verb, a missing FILE, an unknown option. */
static void test_cli_usage_errors(void **state)
{
    static const struct {
        const char *args[4];
        const char *fragment;
    } cases[] = {
        {{NULL}, "usage: tepid VERB FILE [options]"},
        {{"frobnicate", NULL}, "unknown verb 'frobnicate'"},
        {{"warmup", NULL}, "usage: tepid warmup FILE [options]"},
        {{"warmup", "plate.yaml", "--bogus", NULL}, "unknown option --bogus for 'warmup'"},
    };
    tp_scratch s;
    (void)state;
    tp_scratch_create(&s);
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        tp_run_result r;
        tp_run_tepid(&s, cases[i].args, &r);
        assert_int_equal(r.status, 2);
        assert_string_equal(r.out, "");
        tp_check_contains("usage", r.err, cases[i].fragment);
        /* Short: at most the message and one usage or hint line, never the whole help. */
        if (count_lines(r.err) > 2)
            print_error("case %zu: %d lines on stderr:\n%s", i, count_lines(r.err), r.err);
        assert_true(count_lines(r.err) <= 2);
        tp_run_clear(&r);
    }
    tp_scratch_destroy(&s);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_config_errors_by_message_and_status),
        cmocka_unit_test(test_config_check_exit_status),
        cmocka_unit_test(test_config_warnings),
        cmocka_unit_test(test_config_set_overrides),
        cmocka_unit_test(test_config_set_value_and_error),
        cmocka_unit_test(test_cli_help_and_version),
        cmocka_unit_test(test_cli_usage_errors),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
