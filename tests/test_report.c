/* tepid report as a reader sees it: the figures of its tables equal those of the verbs' JSON on
 * the demos (numbers parsed back from the Markdown tables, within the rounding the report
 * prints), the HTML is self-contained and passes an HTML5 checker, headless Chromium renders
 * it to PNG and PDF (A4 and Letter) with every section heading and nothing off the page, the
 * figure folder of a Markdown report is replaced as a whole, and bad outputs exit 2 before any
 * computation. */
#include "tp_test.h"

#include <ctype.h>

#define DEMO(name) TP_SOURCE_DIR "/configs/" name ".yaml"

/* ---- running ----------------------------------------------------------------------------- */

/* Run tepid with `args` and expect exit 0; returns nothing, fails with stderr otherwise. */
static void run_ok(const tp_scratch *s, const char *const *args)
{
    tp_run_result r;
    tp_run_tepid(s, args, &r);
    if (r.status != 0)
        fail_msg("tepid %s %s: exit %d\n%s", args[0], args[1], r.status, r.err);
    tp_run_clear(&r);
}

/* `verb FILE [--set SET] [--above ABOVE] --json PATH -q`, parsed. */
static cJSON *verb_json(const tp_scratch *s, const char *verb, const char *file, const char *set,
                        const char *above)
{
    char path[TP_TEST_PATH];
    const char *args[12];
    int n = 0;
    tp_scratch_path(s, "verb.json", path, sizeof path);
    args[n++] = verb;
    args[n++] = file;
    if (set) {
        args[n++] = "--set";
        args[n++] = set;
    }
    if (above) {
        args[n++] = "--above";
        args[n++] = above;
    }
    args[n++] = "--json";
    args[n++] = path;
    args[n++] = "-q";
    args[n] = NULL;
    run_ok(s, args);
    return tp_read_json(path);
}

/* ---- the Markdown tables ----------------------------------------------------------------- */

#define CELLS_MAX 12

typedef struct md_row {
    char cell[CELLS_MAX][256];
    int n;
} md_row;

/* The cells of one "| a | b |" line, Markdown escapes undone. */
static int split_row(const char *line, md_row *row)
{
    const char *p = line;
    row->n = 0;
    if (*p != '|')
        return -1;
    p++;
    while (*p && *p != '\n' && row->n < CELLS_MAX) {
        size_t o = 0;
        while (*p == ' ')
            p++;
        while (*p && *p != '\n' && *p != '|') {
            if (*p == '\\' && p[1])
                p++;
            if (o < sizeof row->cell[0] - 1)
                row->cell[row->n][o++] = *p;
            p++;
        }
        while (o > 0 && row->cell[row->n][o - 1] == ' ')
            o--;
        row->cell[row->n][o] = '\0';
        /* a verdict is set in bold: **PASS** */
        if (strncmp(row->cell[row->n], "**", 2) == 0 && strstr(row->cell[row->n] + 2, "**")) {
            char *c = row->cell[row->n], *e = strstr(c + 2, "**");
            memmove(e, e + 2, strlen(e + 2) + 1);
            memmove(c, c + 2, strlen(c + 2) + 1);
        }
        if (*p == '|')
            p++;
        if (*p == '\n' || !*p)
            return row->n + 1 == 0 ? -1 : ++row->n;
        row->n++;
    }
    return row->n;
}

/* The rows (header excluded) of the table captioned `caption` (a bold line before it), or of
 * the first table after the heading "## caption" when it is a section's; the count. */
static int md_table(const char *md, const char *caption, md_row *rows, int max)
{
    char want[256];
    const char *p;
    int n = 0;
    snprintf(want, sizeof want, "\n**%s**\n", caption);
    p = strstr(md, want);
    if (!p) {
        snprintf(want, sizeof want, "\n## %s\n", caption);
        p = strstr(md, want);
    }
    if (!p)
        fail_msg("the report has no table '%s'", caption);
    p = strstr(p + 1, "\n|");
    assert_non_null(p);
    p = strchr(p + 1, '\n'); /* past the header */
    p = strchr(p + 1, '\n'); /* past the alignment row */
    while (p && p[1] == '|' && n < max) {
        split_row(p + 1, &rows[n++]);
        p = strchr(p + 1, '\n');
    }
    return n;
}

/* The row whose first cell is `first`. */
static const md_row *find_row(const md_row *rows, int n, const char *first)
{
    int i;
    for (i = 0; i < n; i++)
        if (strcmp(rows[i].cell[0], first) == 0)
            return &rows[i];
    fail_msg("no row '%s'", first);
    return NULL;
}

/* A printed number against the verb's value: within half a unit of the last digit printed
 * (closed form: the rounding of "%.Nf"; "%.4g" likewise in its own exponent). */
static void check_printed(const char *what, const char *text, double v)
{
    char *end;
    double x = strtod(text, &end), tol;
    const char *dot = strchr(text, '.');
    int dec = 0;
    if (end == text)
        fail_msg("%s: '%s' is not a number", what, text);
    if (dot && dot < end)
        dec = (int)(strspn(dot + 1, "0123456789"));
    tol = 0.5 * pow(10.0, -dec) * (1.0 + 1e-9);
    if (memchr(text, 'e', (size_t)(end - text))) /* %.4g in exponent form */
        tol = 5e-4 * fabs(x);
    tp_check_abs(what, x, v, tol + 1e-12);
}

/* A duration as tp_summary_duration prints it ("7 min 39 s", "1 h 02 min", "45.0 s"): the
 * seconds, and the tolerance of its truncation (whole seconds, whole minutes, 0.05 s). */
static double printed_duration(const char *text, double *tol)
{
    int a, b;
    double s;
    *tol = 0.0;
    if (sscanf(text, "%d h %d min", &a, &b) == 2) {
        *tol = 60.0;
        return 3600.0 * a + 60.0 * b;
    }
    if (sscanf(text, "%d min %d s", &a, &b) == 2) {
        *tol = 1.0;
        return 60.0 * a + b;
    }
    if (sscanf(text, "%lf s", &s) == 1) {
        *tol = 0.05;
        return s;
    }
    fail_msg("'%s' is not a duration", text);
    return 0.0;
}

static double json_num(const cJSON *obj, const char *key)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
    if (!cJSON_IsNumber(v))
        fail_msg("JSON has no number '%s'", key);
    return v->valuedouble;
}

/* ---- the figures against the verbs ------------------------------------------------------- */

#define ROWS_MAX 64

/* Every row of the warm-up metrics table against warmup --json by the key it names. */
static void compare_warmup(const char *md, const cJSON *w)
{
    md_row rows[ROWS_MAX];
    int n = md_table(md, "Warm-up metrics", rows, ROWS_MAX), i;
    assert_true(n >= 8);
    for (i = 0; i < n; i++) {
        const char *key = rows[i].cell[3];
        double v = json_num(w, key), tol = 0.0;
        if (strcmp(rows[i].cell[2], "") == 0) {
            double x = printed_duration(rows[i].cell[1], &tol);
            tp_check_abs(key, x, v, tol);
        } else if (strcmp(rows[i].cell[2], "kJ") == 0) {
            check_printed(key, rows[i].cell[1], v * 1e-3);
        } else {
            check_printed(key, rows[i].cell[1], v);
        }
    }
}

/* The loss split and the summary's holding power, duty and margin against steady --json. */
static void compare_steady(const char *md, const cJSON *st)
{
    md_row rows[ROWS_MAX];
    const cJSON *losses = cJSON_GetObjectItemCaseSensitive(st, "losses_W"), *l;
    int n;
    const md_row *r;
    n = md_table(md, cJSON_HasObjectItem(st, "margin") ? "Where the holding power goes"
                                                       : "Where the full power goes",
                 rows, ROWS_MAX);
    cJSON_ArrayForEach(l, losses)
    {
        r = find_row(rows, n, l->string);
        check_printed(l->string, r->cell[1], l->valuedouble);
    }
    check_printed("total", find_row(rows, n, "total")->cell[1], json_num(st, "power_W"));
    if (cJSON_HasObjectItem(st, "margin")) {
        double p, duty;
        n = md_table(md, "Summary", rows, ROWS_MAX);
        r = find_row(rows, n, "holding power");
        assert_int_equal(sscanf(r->cell[1], "%lf W at duty %lf", &p, &duty), 2);
        tp_check_abs("holding power", p, json_num(st, "power_W"), 0.005);
        tp_check_abs("holding duty", duty, json_num(st, "duty"), 0.0005);
        check_printed("margin", find_row(rows, n, "margin")->cell[1], json_num(st, "margin"));
    }
}

/* Every check of the budget (verdict, value, limit) and the currents against budget --json. */
static void compare_budget(const char *md, const cJSON *b)
{
    static const struct {
        const char *row, *key;
    } q[] = {{"cold-start current", "cold_current_A"},
             {"cold-start power into the heater", "cold_power_W"},
             {"supply current at cold start", "supply_cold_A"},
             {"mean power at the running point", "hold_power_W"},
             {"mean current at the running point", "hold_mean_current_A"}};
    md_row rows[ROWS_MAX];
    const cJSON *checks = cJSON_GetObjectItemCaseSensitive(b, "checks"), *c;
    int n = md_table(md, "Currents and power", rows, ROWS_MAX), k;
    for (k = 0; k < (int)(sizeof q / sizeof q[0]); k++)
        check_printed(q[k].row, find_row(rows, n, q[k].row)->cell[1], json_num(b, q[k].key));
    if (cJSON_GetArraySize(checks) == 0)
        return;
    n = md_table(md, "Checks", rows, ROWS_MAX);
    assert_int_equal(n, cJSON_GetArraySize(checks));
    k = 0;
    cJSON_ArrayForEach(c, checks)
    {
        const md_row *r = &rows[k++];
        assert_string_equal(r->cell[1], cJSON_GetObjectItem(c, "check")->valuestring);
        assert_string_equal(r->cell[0], cJSON_GetObjectItem(c, "verdict")->valuestring);
        check_printed(r->cell[1], r->cell[2], json_num(c, "value"));
        if (cJSON_IsNumber(cJSON_GetObjectItem(c, "limit")))
            check_printed(r->cell[1], r->cell[3], json_num(c, "limit"));
    }
}

/* The settings, the corners and the verdict against guard --json. */
static void compare_guard(const char *md, const cJSON *g)
{
    static const char *const names[] = {"rise_window", "rise_min", "approach", "hold_band",
                                        "hold_grace", "ceiling"};
    static const char *const keys[] = {"rise_window_s", "rise_min_K",   "approach_K",
                                       "hold_band_K",   "hold_grace_s", "ceiling_C"};
    md_row rows[ROWS_MAX];
    const cJSON *used = cJSON_GetObjectItemCaseSensitive(g, "evaluated");
    const cJSON *verdict = cJSON_GetObjectItemCaseSensitive(g, "verdict");
    int n = md_table(md, "Summary", rows, ROWS_MAX), k, trips, unsafe, undetected;
    const md_row *r = find_row(rows, n, "guard verdict");
    {
        const char *v = strchr(r->cell[1], ':');
        assert_non_null(v);
        trips = atoi(v + 1);
        unsafe = atoi(strchr(v, ';') + 1);
        undetected = atoi(strrchr(v, ';') + 1);
        assert_int_equal(trips, (int)json_num(verdict, "healthy_trips"));
        assert_int_equal(unsafe, (int)json_num(verdict, "limit_before_detection"));
        assert_int_equal(undetected, (int)json_num(verdict, "undetected"));
        /* guard --strict's test (docs/guard.md): FAIL when a corner trips or a fault crosses a
         * limit before detection */
        assert_int_equal(strncmp(r->cell[1], trips || unsafe ? "FAIL" : "PASS", 4), 0);
    }
    n = md_table(md, "Protection", rows, ROWS_MAX);
    for (k = 0; k < 6; k++) {
        const cJSON *v = cJSON_GetObjectItemCaseSensitive(used, keys[k]);
        r = find_row(rows, n, names[k]);
        if (cJSON_IsNumber(v))
            check_printed(names[k], r->cell[1], v->valuedouble);
        else
            assert_string_equal(r->cell[1], "(none)");
    }
    n = md_table(md, "Healthy corners (margins: smallest rise minus rise_min, grace minus the "
                     "longest stay below the band, ceiling minus the highest reading)",
                 rows, ROWS_MAX);
    assert_int_equal(n, cJSON_GetArraySize(cJSON_GetObjectItem(g, "corners")));
}

/* A cell against a JSON number that may be null (a figure that does not exist: "-"). */
static void check_or_dash(const char *what, const char *cell, const cJSON *obj, const char *key,
                          double scale)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
    if (cJSON_IsNull(v)) {
        if (strcmp(cell, "-") != 0)
            fail_msg("%s: '%s' where %s is null", what, cell, key);
        return;
    }
    if (!cJSON_IsNumber(v))
        fail_msg("%s: JSON has no '%s'", what, key);
    check_printed(what, cell, v->valuedouble * scale);
}

/* A duration cell against a JSON number of seconds (null: `none`, the words printed instead). */
static void check_duration(const char *what, const char *cell, const cJSON *obj, const char *key,
                           const char *none)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
    double tol, x;
    if (cJSON_IsNull(v)) {
        assert_string_equal(cell, none);
        return;
    }
    x = printed_duration(cell, &tol);
    tp_check_abs(what, x, json_num(obj, key), tol);
}

/* The Programme section's tables against warmup --json's "schedule" and "time_above", row by
 * row in their order. */
static void compare_programme(const char *md, const cJSON *w)
{
    static const char *const rates[] = {"rate_requested_K_per_s", "rate_reading_K_per_s",
                                        "rate_surface_K_per_s"};
    static const char *const track[] = {"error_reading_max_K", "error_reading_rms_K",
                                        "error_surface_max_K", "error_surface_rms_K",
                                        "at_limit_fraction",   "overshoot_reading_K",
                                        "overshoot_surface_K"};
    const cJSON *sched = cJSON_GetObjectItemCaseSensitive(w, "schedule"), *g;
    const cJSON *above = cJSON_GetObjectItemCaseSensitive(w, "time_above"), *a;
    md_row rows[ROWS_MAX], trk[ROWS_MAX];
    int n = 0, m = 0, i = 0, k;
    if (cJSON_GetArraySize(sched) > 0) {
        n = md_table(md, "Programme segments and their rates", rows, ROWS_MAX);
        m = md_table(md, "Programme tracking", trk, ROWS_MAX);
    }
    assert_int_equal(n, cJSON_GetArraySize(sched));
    assert_int_equal(m, n);
    cJSON_ArrayForEach(g, sched)
    {
        const md_row *r = &rows[i], *t = &trk[i];
        assert_int_equal(atoi(r->cell[0]), (int)json_num(g, "index") + 1);
        assert_string_equal(r->cell[1], cJSON_GetObjectItem(g, "kind")->valuestring);
        check_duration("start", r->cell[2], g, "start_s", "");
        check_duration("end", r->cell[3], g, "end_s", "");
        for (k = 0; k < 3; k++)
            check_or_dash(rates[k], r->cell[5 + k], g, rates[k], 1.0);
        for (k = 0; k < 7; k++)
            check_or_dash(track[k], t->cell[1 + k], g, track[k], k == 4 ? 100.0 : 1.0);
        i++;
    }
    n = md_table(md, "Time above", rows, ROWS_MAX);
    assert_int_equal(n, cJSON_GetArraySize(above));
    i = 0;
    cJSON_ArrayForEach(a, above)
    {
        check_printed("level", rows[i].cell[0], json_num(a, "level_C"));
        check_duration("reading above", rows[i].cell[1], a, "reading_s", "-");
        check_duration("surface above", rows[i].cell[2], a, "surface_s", "-");
        i++;
    }
}

/* The Cool-down table against cool --json's "levels", in their order: kind by its words, the
 * level and the time after switch-off. */
static void compare_cool(const char *md, const cJSON *c)
{
    static const struct {
        const char *kind, *words;
    } names[] = {{"burn", "burn threshold, "}, {"room", "room + 5 K"},
                 {"air", "chamber air below room + 5 K"}};
    const cJSON *levels = cJSON_GetObjectItemCaseSensitive(c, "levels"), *l;
    md_row rows[ROWS_MAX];
    int n = md_table(md, "Cool-down times", rows, ROWS_MAX), i = 0;
    size_t k;
    assert_int_equal(n, cJSON_GetArraySize(levels));
    assert_true(n >= 4);
    cJSON_ArrayForEach(l, levels)
    {
        const char *kind = cJSON_GetObjectItem(l, "kind")->valuestring;
        for (k = 0; k < sizeof names / sizeof names[0]; k++)
            if (strcmp(kind, names[k].kind) == 0)
                assert_int_equal(strncmp(rows[i].cell[0], names[k].words,
                                         strlen(names[k].words)), 0);
        check_printed("level", rows[i].cell[1], json_num(l, "level_C"));
        check_duration("time", rows[i].cell[2], l, "time_s", "not within 24 h");
        i++;
    }
    /* the summary's burn-threshold times, in the levels' order */
    {
        const md_row *r;
        char *p, *next;
        n = md_table(md, "Summary", rows, ROWS_MAX);
        r = find_row(rows, n, "cool-down (heater off)");
        p = strstr(r->cell[1], " after ");
        assert_non_null(p);
        p += 7;
        cJSON_ArrayForEach(l, levels)
        {
            if (strcmp(cJSON_GetObjectItem(l, "kind")->valuestring, "burn") != 0)
                continue;
            assert_non_null(p);
            next = strstr(p, " / ");
            if (next)
                *next = '\0';
            check_duration("summary", p, l, "time_s", "not within 24 h");
            p = next ? next + 3 : NULL;
        }
    }
    /* the class named with the top layer's material, as cool --json has them */
    if (cJSON_IsString(cJSON_GetObjectItem(c, "top_material"))) {
        char want[160];
        snprintf(want, sizeof want, "Top layer: %s; the burn thresholds of the %s class",
                 cJSON_GetObjectItem(c, "top_material")->valuestring,
                 cJSON_GetObjectItem(c, "material_class")->valuestring);
        tp_check_contains("cool-down", md, want);
    }
}

/* Each node's capacity against explain --json (lumped and raw forms: one row per node). */
static void compare_explain(const char *md, const cJSON *e)
{
    md_row rows[ROWS_MAX * 4];
    const cJSON *node;
    int n = md_table(md, "Nodes", rows, ROWS_MAX * 4);
    cJSON_ArrayForEach(node, cJSON_GetObjectItem(e, "nodes"))
    {
        const md_row *r = find_row(rows, n, cJSON_GetObjectItem(node, "id")->valuestring);
        if (cJSON_HasObjectItem(node, "capacity_J_per_K"))
            check_printed("capacity", r->cell[1], json_num(node, "capacity_J_per_K"));
        else
            check_printed("fixed", r->cell[2], json_num(node, "fixed_C"));
    }
}

/* The report of `file` (with --set SET and --above ABOVE when given) against every verb's
 * JSON on the same file. */
static void compare_demo(const char *file, const char *set, const char *above, int grid)
{
    tp_scratch s;
    char out[TP_TEST_PATH];
    char *md;
    cJSON *j;
    const char *args[12];
    int n = 0;
    tp_scratch_create(&s);
    tp_scratch_path(&s, "review.md", out, sizeof out);
    args[n++] = "report";
    args[n++] = file;
    if (set) {
        args[n++] = "--set";
        args[n++] = set;
    }
    if (above) {
        args[n++] = "--above";
        args[n++] = above;
    }
    args[n++] = "-o";
    args[n++] = out;
    args[n++] = "-q";
    args[n] = NULL;
    run_ok(&s, args);
    md = tp_read_file(out);
    assert_non_null(md);
    j = verb_json(&s, "warmup", file, set, above);
    compare_warmup(md, j);
    if (cJSON_GetArraySize(cJSON_GetObjectItem(j, "schedule")) > 0)
        tp_check_contains("markdown", md, "](review-files/programme.svg)");
    if (above || cJSON_GetArraySize(cJSON_GetObjectItem(j, "schedule")) > 0)
        compare_programme(md, j);
    else
        assert_null(strstr(md, "\n## Programme\n"));
    cJSON_Delete(j);
    j = verb_json(&s, "steady", file, set, NULL);
    compare_steady(md, j);
    cJSON_Delete(j);
    j = verb_json(&s, "cool", file, set, NULL);
    compare_cool(md, j);
    /* the figures as SVG files beside the Markdown */
    tp_check_contains("markdown", md, "](review-files/cool.svg)");
    cJSON_Delete(j);
    j = verb_json(&s, "budget", file, set, NULL);
    compare_budget(md, j);
    cJSON_Delete(j);
    j = verb_json(&s, "guard", file, set, NULL);
    compare_guard(md, j);
    cJSON_Delete(j);
    if (!grid) {
        j = verb_json(&s, "explain", file, set, NULL);
        compare_explain(md, j);
        cJSON_Delete(j);
    }
    free(md);
    tp_scratch_destroy(&s);
}

static void test_report_figures_equal_the_verbs_lumped(void **state)
{
    (void)state;
    compare_demo(DEMO("workshop-bed-24v"), NULL, NULL, 0);
    compare_demo(DEMO("enclosed-printer"), NULL, NULL, 0);
}

/* The reflow demo follows control.schedule: the warm-up's metrics, the programme's segments
 * and the time above the liquidus (217 degC) as warmup reports them, the cool-down as cool
 * does; and the 24 V demo's time above a level without a schedule. */
static void test_report_figures_equal_the_verbs_scheduled(void **state)
{
    (void)state;
    compare_demo(DEMO("reflow-hotplate-230v"), NULL, "217degC", 0);
    compare_demo(DEMO("workshop-bed-24v"), NULL, "80degC", 0);
}

static void test_report_figures_equal_the_verbs_raw(void **state)
{
    (void)state;
    compare_demo(DEMO("raw-five-node"), NULL, NULL, 0);
}

static void test_report_figures_equal_the_verbs_gridded(void **state)
{
    (void)state;
    compare_demo(DEMO("small-pad-grid"), "bed.grid=[6, 6]", NULL, 1);
}

/* Without a setpoint to hold, cool refuses the file (exit 2: it starts from the holding
 * state) and the report's Cool-down section gives the same reason, the rest of the report
 * written. */
static void test_report_cool_down_mirrors_cool_without_a_setpoint(void **state)
{
    const tp_scratch *s = tp_group_scratch();
    char out[TP_TEST_PATH], *md;
    const char *cool[] = {"cool", DEMO("raw-five-node"), "--set", "control.mode=off", NULL};
    const char *report[] = {"report", DEMO("raw-five-node"), "--set", "control.mode=off", "-o",
                            out, "-q", NULL};
    tp_run_result r;
    (void)state;
    tp_run_tepid(s, cool, &r);
    assert_int_equal(r.status, 2);
    tp_check_contains("cool", r.err, "controller holds no setpoint");
    tp_run_clear(&r);
    tp_scratch_path(s, "off.md", out, sizeof out);
    run_ok(s, report);
    md = tp_read_file(out);
    assert_non_null(md);
    tp_check_contains("report", md, "## Cool-down\n\nNot available for this case: the "
                                    "cool-down starts from the steady holding state, and this "
                                    "file's controller holds no setpoint");
    assert_null(strstr(md, "Cool-down times"));
    free(md);
}

/* ---- the HTML as a file ------------------------------------------------------------------ */

/* The reports the page checks look at, each made once in the group's scratch folder: the 24 V
 * demo, and the reflow demo with its programme and the time above the liquidus. */
enum { PAGE_24V, PAGE_REFLOW, PAGES };

static const struct page {
    const char *file, *above, *name;
    int figures; /* warm-up, programme, losses, cool-down, guard */
} pages[PAGES] = {{DEMO("workshop-bed-24v"), NULL, "review.html", 4},
                  {DEMO("reflow-hotplate-230v"), "217degC", "reflow.html", 5}};

static const char *html_report(int page)
{
    static char path[PAGES][TP_TEST_PATH];
    if (!path[page][0]) {
        const char *args[] = {"report", pages[page].file, "-o", path[page], "-q", NULL, NULL,
                              NULL};
        if (pages[page].above) {
            args[5] = "--above";
            args[6] = pages[page].above;
        }
        tp_scratch_path(tp_group_scratch(), pages[page].name, path[page], sizeof path[page]);
        run_ok(tp_group_scratch(), args);
    }
    return path[page];
}

/* Nothing is fetched: no script, no external style or image, no URL but the SVG and XLink
 * namespaces (names, never fetched: W3C, Namespaces in XML 1.0, section 2), every id unique
 * (figures inlined side by side keep their own ids). */
static void check_self_contained(int page)
{
    char *html = tp_read_file(html_report(page)), *p;
    int figures = 0;
    assert_non_null(html);
    assert_null(strstr(html, "<script"));
    assert_null(strstr(html, "<link"));
    assert_null(strstr(html, "<img"));
    assert_null(strstr(html, "@import"));
    assert_null(strstr(html, " src="));
    for (p = html; (p = strstr(p, "http")) != NULL; p++) {
        if (strncmp(p, "http://www.w3.org/2000/svg\"", 27) == 0 ||
            strncmp(p, "http://www.w3.org/1999/xlink\"", 29) == 0)
            continue;
        fail_msg("the report names a URL: %.60s", p);
    }
    for (p = html; (p = strstr(p, "url(")) != NULL; p++)
        if (p[4] != '#')
            fail_msg("the report refers outside itself: %.60s", p);
    for (p = html; (p = strstr(p, "href=\"")) != NULL; p++)
        if (p[6] != '#')
            fail_msg("the report links outside itself: %.60s", p);
    /* every id once */
    {
        size_t n = 0, cap = 4096, i, j;
        char **ids = calloc(cap, sizeof *ids);
        assert_non_null(ids);
        for (p = html; (p = strstr(p, " id=\"")) != NULL && n < cap; p += 5)
            ids[n++] = p + 5;
        for (i = 0; i < n; i++)
            for (j = i + 1; j < n; j++) {
                size_t len = strcspn(ids[i], "\"");
                if (len == strcspn(ids[j], "\"") && strncmp(ids[i], ids[j], len) == 0)
                    fail_msg("id '%.*s' twice", (int)len, ids[i]);
            }
        free(ids);
    }
    /* the figures (warm-up, programme, loss split, cool-down, guard), each drawn: many paths,
     * not an empty frame */
    for (p = html; (p = strstr(p, "<figure")) != NULL; p++) {
        char *end = strstr(p, "</figure>");
        int paths = 0;
        char *q;
        assert_non_null(end);
        for (q = p; (q = strstr(q, "<path")) != NULL && q < end; q++)
            paths++;
        if (paths < 30)
            fail_msg("figure %d has only %d paths", figures + 1, paths);
        figures++;
    }
    assert_int_equal(figures, pages[page].figures);
    /* the summary's verdicts are words in a marked box: the 24 V demo's budget has one WARN
     * (its switch's conduction loss above 1 W, budget --json) */
    if (page == PAGE_24V)
        tp_check_contains("summary", html,
                          "<span class=\"verdict v-warn\">WARN</span>: 0 FAILs");
    free(html);
}

static void test_report_html_is_self_contained(void **state)
{
    int page;
    (void)state;
    for (page = 0; page < PAGES; page++)
        check_self_contained(page);
}

/* tidy (Debian package tidy) finds no error; its exit status is 2 on errors, 1 on warnings
 * only (tidy(1), "EXIT STATUS"). */
static void test_report_html_passes_tidy(void **state)
{
    char tidy[TP_TEST_PATH];
    tp_run_result r;
    int page;
    (void)state;
    if (tp_find_program("tidy", tidy) != 0) {
        print_message("skipped: the HTML5 check needs tidy (Debian package tidy)\n");
        skip();
    }
    for (page = 0; page < PAGES; page++) {
        const char *args[] = {"-errors", "-q", html_report(page), NULL};
        tp_run_program(tp_group_scratch(), tidy, args, &r);
        if (r.status >= 2)
            fail_msg("tidy finds errors in %s:\n%s", pages[page].name, r.err);
        tp_run_clear(&r);
    }
}

/* ---- as Chromium shows and prints it ------------------------------------------------------ */

/* The section headings in their order (docs/report.md); the programme's only on a page that
 * has one (a schedule, or --above levels). */
static const char *const headings[] = {"Summary",    "Cautions",     "Warm-up",    "Programme",
                                       "Steady state", "Cool-down", "Power budget",
                                       "Protection", "The model",    "The input",  "Provenance"};
#define HEADINGS ((int)(sizeof headings / sizeof headings[0]))

/* Print `html` to `pdf` with headless Chromium; its log must hold no console message. */
static void chromium_print(const char *chromium, const char *html, const char *pdf)
{
    const tp_scratch *s = tp_group_scratch();
    char url[TP_TEST_PATH + 8], arg[TP_TEST_PATH + 32], profile[TP_TEST_PATH];
    tp_run_result r;
    snprintf(url, sizeof url, "file://%s", html);
    snprintf(arg, sizeof arg, "--print-to-pdf=%s", pdf);
    tp_scratch_path(s, "chromium-profile", profile, sizeof profile);
    {
        char user[TP_TEST_PATH + 32];
        const char *args[] = {"--headless", "--no-sandbox", "--disable-gpu", user,
                              "--no-pdf-header-footer", "--enable-logging=stderr", "--v=0",
                              arg, url, NULL};
        snprintf(user, sizeof user, "--user-data-dir=%s", profile);
        tp_run_program(s, chromium, args, &r);
    }
    if (r.status != 0 || !tp_file_exists(pdf))
        fail_msg("chromium could not print %s:\n%s", html, r.err);
    /* Chromium logs what a page writes to its console, and every load it fails, here */
    if (strstr(r.err, "CONSOLE") || strstr(r.err, "net::ERR_"))
        fail_msg("the page logs a console message or a failed load:\n%s", r.err);
    tp_run_clear(&r);
}

/* The PDF's text: every section heading of the page on a line of its own, in their order, and
 * no other (the 24 V demo's has no Programme); no word off the page. */
static void check_pdf(const char *pdftotext, const char *pdf, const char *paper, int page)
{
    const tp_scratch *s = tp_group_scratch();
    tp_run_result r;
    char *p, *last;
    int k, found = 0;
    double page_w = 0;
    {
        const char *args[] = {pdf, "-", NULL};
        tp_run_program(s, pdftotext, args, &r);
    }
    assert_int_equal(r.status, 0);
    last = r.out;
    for (k = 0; k < HEADINGS; k++) {
        char want[64];
        char *at = NULL;
        int expected = page == PAGE_REFLOW || strcmp(headings[k], "Programme") != 0;
        /* a line of its own: after a line break or a page break (form feed) */
        snprintf(want, sizeof want, "%s\n", headings[k]);
        for (p = r.out + 1; (p = strstr(p, want)) != NULL; p++)
            if ((p[-1] == '\n' || p[-1] == '\f') && !at)
                at = p;
        if (expected && !at)
            fail_msg("%s, %s: the PDF has no heading '%s'", pages[page].name, paper,
                     headings[k]);
        if (!expected && at)
            fail_msg("%s, %s: the PDF has a heading '%s'", pages[page].name, paper,
                     headings[k]);
        if (at && at < last)
            fail_msg("%s, %s: '%s' out of order", pages[page].name, paper, headings[k]);
        if (at) {
            last = at;
            found++;
        }
    }
    assert_int_equal(found, page == PAGE_REFLOW ? HEADINGS : HEADINGS - 1);
    tp_run_clear(&r);
    {
        const char *args[] = {"-bbox", pdf, "-", NULL};
        tp_run_program(s, pdftotext, args, &r);
    }
    assert_int_equal(r.status, 0);
    p = strstr(r.out, "<page width=\"");
    assert_non_null(p);
    page_w = strtod(p + 13, NULL);
    for (p = r.out; (p = strstr(p, "xMax=\"")) != NULL; p++)
        if (strtod(p + 6, NULL) > page_w + 0.5)
            fail_msg("%s: a word runs off the page (page %.0f pt wide): %.120s", paper, page_w, p);
    tp_run_clear(&r);
}

/* A screenshot far from blank, and Letter and A4 PDFs with their headings, of one page. */
static void render_page(const char *chromium, const char *pdftotext, int page)
{
    const tp_scratch *s = tp_group_scratch();
    char png[TP_TEST_PATH], pdf[TP_TEST_PATH], name[64];
    char a4[TP_TEST_PATH], url[TP_TEST_PATH + 8], arg[TP_TEST_PATH + 32], user[TP_TEST_PATH];
    char *html;
    tp_run_result r;
    struct stat sb;
    FILE *fp;
    /* a screenshot: written, and far from blank (a white 1200 x 3000 PNG is a few kB) */
    snprintf(name, sizeof name, "%s.png", pages[page].name);
    tp_scratch_path(s, name, png, sizeof png);
    snprintf(url, sizeof url, "file://%s", html_report(page));
    snprintf(arg, sizeof arg, "--screenshot=%s", png);
    tp_scratch_path(s, "chromium-profile", user, sizeof user);
    {
        char profile[TP_TEST_PATH + 32];
        const char *args[] = {"--headless", "--no-sandbox", "--disable-gpu", profile,
                              "--window-size=1200,3000", arg, url, NULL};
        snprintf(profile, sizeof profile, "--user-data-dir=%s", user);
        tp_run_program(s, chromium, args, &r);
    }
    if (r.status != 0)
        fail_msg("chromium could not take a screenshot:\n%s", r.err);
    tp_run_clear(&r);
    assert_int_equal(stat(png, &sb), 0);
    assert_true(sb.st_size > 100000);
    /* Letter (Chromium's default paper) */
    snprintf(name, sizeof name, "%s-letter.pdf", pages[page].name);
    tp_scratch_path(s, name, pdf, sizeof pdf);
    chromium_print(chromium, html_report(page), pdf);
    check_pdf(pdftotext, pdf, "Letter", page);
    /* A4: the same page with the paper named */
    html = tp_read_file(html_report(page));
    assert_non_null(html);
    snprintf(name, sizeof name, "%s-a4.html", pages[page].name);
    tp_scratch_path(s, name, a4, sizeof a4);
    fp = fopen(a4, "w");
    assert_non_null(fp);
    fprintf(fp, "%.*s<style>@page{size:A4}</style>%s", (int)(strstr(html, "</head>") - html),
            html, strstr(html, "</head>"));
    assert_int_equal(fclose(fp), 0);
    free(html);
    snprintf(name, sizeof name, "%s-a4.pdf", pages[page].name);
    tp_scratch_path(s, name, pdf, sizeof pdf);
    chromium_print(chromium, a4, pdf);
    check_pdf(pdftotext, pdf, "A4", page);
}

static void test_report_renders_in_chromium(void **state)
{
    char chromium[TP_TEST_PATH], pdftotext[TP_TEST_PATH];
    int page;
    (void)state;
    if (tp_find_program("chromium", chromium) != 0 ||
        tp_find_program("pdftotext", pdftotext) != 0) {
        print_message("skipped: rendering the report needs chromium and pdftotext (Debian "
                      "packages chromium and poppler-utils)\n");
        skip();
    }
    for (page = 0; page < PAGES; page++)
        render_page(chromium, pdftotext, page);
}

/* ---- Markdown and its figure folder ------------------------------------------------------- */

static void test_report_markdown_replaces_its_folder_whole(void **state)
{
    const tp_scratch *s = tp_group_scratch();
    char out[TP_TEST_PATH], dir[TP_TEST_PATH], stale[2 * TP_TEST_PATH], fig[2 * TP_TEST_PATH];
    const char *args[] = {"report", DEMO("raw-five-node"), "-o", out, "-q", NULL};
    char *md;
    (void)state;
    tp_scratch_path(s, "raw.md", out, sizeof out);
    tp_scratch_path(s, "raw-files", dir, sizeof dir);
    assert_int_equal(mkdir(dir, 0755), 0);
    snprintf(stale, sizeof stale, "%s/from-before.svg", dir);
    tp_write_file(stale, "<svg/>");
    run_ok(s, args);
    assert_false(tp_file_exists(stale));
    md = tp_read_file(out);
    assert_non_null(md);
    tp_check_contains("markdown", md, "](raw-files/warmup.svg)");
    tp_check_contains("markdown", md, "](raw-files/losses.svg)");
    tp_check_contains("markdown", md, "](raw-files/guard.svg)");
    tp_check_contains("markdown", md, "](raw-files/cool.svg)");
    snprintf(fig, sizeof fig, "%s/warmup.svg", dir);
    assert_true(tp_file_exists(fig));
    /* the input's SHA-256 as coreutils' sha256sum computes it (an independent implementation
     * of FIPS 180-4) */
    {
        char prog[TP_TEST_PATH], want[128];
        const char *sargs[] = {DEMO("raw-five-node"), NULL};
        tp_run_result r;
        if (tp_find_program("sha256sum", prog) == 0) {
            tp_run_program(s, prog, sargs, &r);
            assert_int_equal(r.status, 0);
            snprintf(want, sizeof want, "| SHA-256 of the input file | %.64s |", r.out);
            tp_check_contains("provenance", md, want);
            tp_run_clear(&r);
        }
    }
    free(md);
}

/* ---- bad outputs --------------------------------------------------------------------------- */

/* Each refused with exit 2 before the file is even read: the config given is broken, and the
 * message is about the output, not the config. */
static void test_report_refuses_bad_outputs_before_any_work(void **state)
{
    const tp_scratch *s = tp_group_scratch();
    char broken[TP_TEST_PATH], clash[TP_TEST_PATH], files[TP_TEST_PATH];
    static const char *const frag[] = {"a report is written as .html or .md",
                                       "needs -o FILE", "is not a folder",
                                       "cannot create"};
    const char *outs[] = {"review.txt", NULL, "clash.md", "/nonexistent-dir/review.html"};
    size_t k;
    (void)state;
    tp_scratch_write(s, "broken.yaml", "network: [this is: not a network\n", broken);
    tp_scratch_path(s, "clash.md", clash, sizeof clash);
    tp_scratch_path(s, "clash-files", files, sizeof files);
    tp_write_file(files, "a file where the figures would go\n");
    outs[2] = clash;
    for (k = 0; k < sizeof outs / sizeof outs[0]; k++) {
        const char *with[] = {"report", broken, "-o", outs[k], NULL};
        const char *without[] = {"report", broken, NULL};
        tp_run_result r;
        tp_run_tepid(s, outs[k] ? with : without, &r);
        assert_int_equal(r.status, 2);
        tp_check_contains(outs[k] ? outs[k] : "-o", r.err, frag[k]);
        assert_null(strstr(r.err, "broken.yaml:"));
        tp_run_clear(&r);
    }
    /* a level without a unit, before the config is read too */
    {
        char html[TP_TEST_PATH];
        const char *args[] = {"report", broken, "--above", "217", "-o", html, NULL};
        tp_run_result r;
        tp_scratch_path(s, "above.html", html, sizeof html);
        tp_run_tepid(s, args, &r);
        assert_int_equal(r.status, 2);
        tp_check_contains("--above", r.err, "--above: '217' has no unit");
        assert_null(strstr(r.err, "broken.yaml:"));
        assert_false(tp_file_exists(html));
        tp_run_clear(&r);
    }
    /* the output onto the input itself */
    {
        const char *args[] = {"report", clash, "-o", clash, NULL};
        tp_write_file(clash, "x\n");
        assert_int_equal(tp_run_status(s, args), 2);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_report_refuses_bad_outputs_before_any_work),
        cmocka_unit_test(test_report_html_is_self_contained),
        cmocka_unit_test(test_report_html_passes_tidy),
        cmocka_unit_test(test_report_renders_in_chromium),
        cmocka_unit_test(test_report_markdown_replaces_its_folder_whole),
        cmocka_unit_test(test_report_figures_equal_the_verbs_lumped),
        cmocka_unit_test(test_report_figures_equal_the_verbs_scheduled),
        cmocka_unit_test(test_report_figures_equal_the_verbs_raw),
        cmocka_unit_test(test_report_figures_equal_the_verbs_gridded),
        cmocka_unit_test(test_report_cool_down_mirrors_cool_without_a_setpoint),
    };
    return cmocka_run_group_tests_name("test_report", tests, tp_scratch_group_setup,
                                       tp_scratch_group_teardown);
}
