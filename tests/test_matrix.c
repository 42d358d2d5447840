/* Every verb on every form: warmup, steady, budget, tune, guard, fit, sweep, explain, check, size,
 * cool and report on a raw network (configs/raw-five-node.yaml), a lumped physical plate
 * (configs/workshop-bed-24v.yaml) and a gridded one (configs/small-pad-grid.yaml on a 4 x 4
 * grid). Each run must exit 0 with a summary (and JSON that parses, where the verb writes it),
 * or be one of the refusals documented in docs/user-guide.md ("Every verb on every form"): exit
 * 2 with the message listed here, naming the file or option and the key. Never a signal. The
 * table below is that documentation's test; the sanitizer build runs it like every test. */
#include "tp_test.h"

enum { RAW, LUMPED, GRID, N_FORMS };

static const char *const form_names[N_FORMS] = {"raw", "lumped", "gridded"};
static const char *const form_files[N_FORMS] = {
    TP_SOURCE_DIR "/configs/raw-five-node.yaml", TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml",
    TP_SOURCE_DIR "/configs/small-pad-grid.yaml"};

/* The heater's resistance key of each form, for fit and sweep, and two values to sweep. */
static const char *const form_key[N_FORMS] = {"network.sources.heater.resistance",
                                              "heater.resistance", "heater.resistance"};
static const char *const form_vary[N_FORMS] = {"network.sources.heater.resistance=4.6ohm,5ohm",
                                               "heater.resistance=2.4ohm,2.6ohm",
                                               "heater.resistance=2.8ohm,3ohm"};

/* Arguments a row may name, filled in per form. */
#define ARG_LOG "{log}"   /* the form's synthetic log */
#define ARG_FREE "{free}" /* the form's resistance key */
#define ARG_VARY "{vary}" /* the form's sweep */
#define ARG_OUT "{out}"   /* a report in the group's scratch directory */

typedef struct row {
    const char *verb;
    int form;            /* -1: every form */
    const char *extra[14];
    int json;            /* the verb writes --json */
    int status;          /* expected exit status */
    const char *message; /* status 2: a fragment of the refusal (key and reason) */
} row;

/* A fit needs a measured log: each form's own warm-up, written by `warmup --csv` in the group's
 * scratch directory (synthetic, see tp_matrix_setup); 10 min of it keep the fit short. */
#define FIT_ARGS                                                                            \
    "--log", ARG_LOG, "--temp-col", "reading_C", "--duty-col", "duty", "--free", ARG_FREE, \
        "--set", "run.duration=10 min"

static const row rows[] = {
    /* every verb succeeds on every form */
    {"warmup", -1, {NULL}, 1, 0, NULL},
    {"steady", -1, {NULL}, 1, 0, NULL},
    {"budget", -1, {NULL}, 1, 0, NULL},
    {"tune", -1, {NULL}, 1, 0, NULL},
    {"guard", -1, {NULL}, 1, 0, NULL},
    {"fit", -1, {FIT_ARGS, NULL}, 1, 0, NULL},
    {"sweep", -1, {"--vary", ARG_VARY, NULL}, 1, 0, NULL},
    {"explain", -1, {NULL}, 1, 0, NULL},
    {"check", -1, {NULL}, 0, 0, NULL},
    {"size", -1, {"--reach", "60degC", "--within", "15min", NULL}, 1, 0, NULL},
    {"cool", -1, {NULL}, 1, 0, NULL},
    {"cool", -1, {"--from", "80degC", "--to", "40degC", NULL}, 1, 0, NULL},
    {"report", -1, {"-o", ARG_OUT, NULL}, 0, 0, NULL},
    /* the documented refusals */
    {"guard", -1, {"--set", "control.mode=off", NULL}, 0, 2,
     "control.mode: guard judges a controller holding a setpoint; mode 'off' holds none"},
    {"fit", -1, {"--free", ARG_FREE, NULL}, 0, 2, "tepid fit needs --log FILE"},
    {"cool", -1, {"--set", "control.mode=off", NULL}, 0, 2,
     "the cool-down starts from the steady holding state, and this file's controller holds no "
     "setpoint"},
    {"guard", RAW, {"--set", "guard.gust={after: 1 min, airflow: 2 m/s}", NULL}, 0, 2,
     "guard.gust: not available in the raw network form"},
    {"size", RAW, {"--reach", "60degC", "--within", "15min", "--surface", NULL}, 0, 2,
     "--surface: the raw network form has no working surface"},
    {"report", -1, {"-o", "review.txt", NULL}, 0, 2, "a report is written as .html or .md"},
};

static char log_path[N_FORMS][2 * TP_TEST_PATH]; /* room for the directory and a name */
static char out_path[N_FORMS][2 * TP_TEST_PATH];

/* The form's base arguments after the verb: the file, and the grid for the gridded form. */
static int base_args(int form, const char **argv)
{
    int n = 0;
    argv[n++] = form_files[form];
    if (form == GRID) {
        argv[n++] = "--set";
        argv[n++] = "bed.grid=[4, 4]";
    }
    return n;
}

/* Group setup: the scratch directory and a synthetic log of every form (its own model's
 * warm-up, reading and duty columns). */
static int tp_matrix_setup(void **state)
{
    int f;
    if (tp_scratch_group_setup(state) != 0)
        return -1;
    for (f = 0; f < N_FORMS; f++) {
        const char *argv[16];
        int n = 0;
        tp_run_result r;
        argv[n++] = "warmup";
        n += base_args(f, argv + n);
        snprintf(log_path[f], sizeof log_path[f], "%s/log-%s.csv", tp_group_scratch()->dir,
                 form_names[f]);
        snprintf(out_path[f], sizeof out_path[f], "%s/report-%s.html", tp_group_scratch()->dir,
                 form_names[f]);
        argv[n++] = "--set";
        argv[n++] = "run.duration=10 min";
        argv[n++] = "--csv";
        argv[n++] = log_path[f];
        argv[n++] = "-q";
        argv[n] = NULL;
        tp_run_tepid(tp_group_scratch(), argv, &r);
        tp_run_clear(&r);
        if (r.status != 0 || !tp_file_exists(log_path[f]))
            return -1;
    }
    return 0;
}

static const char *fill(const char *arg, int form)
{
    if (strcmp(arg, ARG_LOG) == 0)
        return log_path[form];
    if (strcmp(arg, ARG_FREE) == 0)
        return form_key[form];
    if (strcmp(arg, ARG_VARY) == 0)
        return form_vary[form];
    if (strcmp(arg, ARG_OUT) == 0)
        return out_path[form];
    return arg;
}

static void run_row(const row *rw, int form)
{
    const tp_scratch *sc = tp_group_scratch();
    const char *argv[40];
    char json[2 * TP_TEST_PATH];
    tp_run_result r;
    int n = 0, k;
    argv[n++] = rw->verb;
    n += base_args(form, argv + n);
    for (k = 0; rw->extra[k]; k++)
        argv[n++] = fill(rw->extra[k], form);
    snprintf(json, sizeof json, "%s/%s-%s.json", sc->dir, rw->verb, form_names[form]);
    if (rw->json) {
        argv[n++] = "--json";
        argv[n++] = json;
    }
    argv[n] = NULL;
    tp_run_tepid(sc, argv, &r);
    if (r.status < 0)
        fail_msg("%s on the %s form: killed by a signal\n%s", rw->verb, form_names[form], r.err);
    if (r.status != rw->status)
        fail_msg("%s on the %s form: exit %d, expected %d\n%s", rw->verb, form_names[form],
                 r.status, rw->status, r.err);
    if (rw->status == 0) {
        /* A summary, and JSON that parses. */
        assert_true(r.out[0] != '\0');
        if (rw->json) {
            cJSON *root = tp_read_json(json);
            cJSON_Delete(root);
            remove(json);
        }
    } else {
        tp_check_contains(rw->verb, r.err, rw->message);
        tp_check_contains(rw->verb, r.err, "hint:");
    }
    tp_run_clear(&r);
}

/* One test per row, over the forms it names. */
static void test_row(void **state)
{
    const row *rw = *state;
    int f;
    for (f = 0; f < N_FORMS; f++)
        if (rw->form < 0 || rw->form == f)
            run_row(rw, f);
}

int main(void)
{
    enum { N = sizeof rows / sizeof rows[0] };
    struct CMUnitTest tests[N];
    char names[N][96];
    size_t i;
    for (i = 0; i < N; i++) {
        snprintf(names[i], sizeof names[i], "test_%s_%s_exits_%d", rows[i].verb,
                 rows[i].form < 0 ? "every_form" : form_names[rows[i].form], rows[i].status);
        tests[i] = (struct CMUnitTest){names[i], test_row, NULL, NULL, (void *)&rows[i]};
    }
    return cmocka_run_group_tests_name("test_matrix", tests, tp_matrix_setup,
                                       tp_scratch_group_teardown);
}
