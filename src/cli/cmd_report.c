/* tepid report: one design review of a case, as a self-contained HTML page or as Markdown with
 * its figures beside it. Runs the studies the verbs run (warm-up, steady report, budget, guard;
 * the surface maps of a gridded plate come with the warm-up) and lists the sections
 * (reportsections.h) in their order; docs/report.md describes them. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>
#include <time.h>


#include "infile.h"
#include "nettlelib.h"
#include "report.h"
#include "reportcycle.h"
#include "reportsections.h"
#include "session.h"
#include "verbs.h"
#include "version.h"

static const tp_opt report_opts[] = {
    {"output", 'o', 1, 0, TP_OUT_FILE, "FILE",
     "write the review to FILE: .html (one self-contained page) or .md (Markdown, figures in "
     "FILE-files/)"},
    {"above", 0, 1, 1, 0, "TEMP",
     "report the time the reading and the surface spend above TEMP, e.g. 217degC (repeatable; "
     "as warmup --above)"},
    TP_OPT_SET,
    TP_OPT_QUIET,
    TP_OPT_END,
};

/* The sections in their order. A section with `applies` NULL is always there; one whose study
 * did not run says why in its place. A further study is one more row here, its builder in
 * reportsections.c (reportcycle.c: the programme and the cool-down) and its run in
 * run_studies. */
static int gridded(const tp_reportcase *c)
{
    return c->net->grid != NULL;
}

/* The programme's section: a schedule followed, or levels to report the time above. */
static int programmed(const tp_reportcase *c)
{
    return c->scheduled || c->n_above > 0;
}

static const struct report_section {
    const char *id, *heading;
    tp_report_style style;
    int (*applies)(const tp_reportcase *c);
    tp_reportsections_fn build;
} sections[] = {
    {"summary", "Summary", TP_REPORT_SUMMARY, NULL, tp_reportsections_summary},
    {"cautions", "Cautions", TP_REPORT_CAUTIONS, NULL, tp_reportsections_cautions},
    {"warmup", "Warm-up", TP_REPORT_PLAIN, NULL, tp_reportsections_warmup},
    {"programme", "Programme", TP_REPORT_PLAIN, programmed, tp_reportcycle_programme},
    {"steady", "Steady state", TP_REPORT_PLAIN, NULL, tp_reportsections_steady},
    {"cool", "Cool-down", TP_REPORT_PLAIN, NULL, tp_reportcycle_cool},
    {"budget", "Power budget", TP_REPORT_PLAIN, NULL, tp_reportsections_budget},
    {"protection", "Protection", TP_REPORT_PLAIN, NULL, tp_reportsections_guard},
    {"surface", "Surface uniformity", TP_REPORT_PLAIN, gridded, tp_reportsections_surface},
    {"model", "The model", TP_REPORT_PLAIN, NULL, tp_reportsections_model},
    {"input", "The input", TP_REPORT_PLAIN, NULL, tp_reportsections_input},
    {"provenance", "Provenance", TP_REPORT_PLAIN, NULL, tp_reportsections_provenance},
};

typedef enum report_kind { REPORT_NONE, REPORT_HTML, REPORT_MARKDOWN } report_kind;

static report_kind kind_of(const char *path)
{
    const char *dot = strrchr(path, '.'), *slash = strrchr(path, '/');
    if (!dot || (slash && dot < slash))
        return REPORT_NONE;
    if (strcasecmp(dot, ".html") == 0 || strcasecmp(dot, ".htm") == 0)
        return REPORT_HTML;
    if (strcasecmp(dot, ".md") == 0)
        return REPORT_MARKDOWN;
    return REPORT_NONE;
}

/* The output's name and, for Markdown, its figure folder, checked before any work: a known
 * extension, and a folder name that is free or a folder already. */
static tp_status check_output(const char *out, report_kind *kind, tp_diag *d)
{
    char dir[TP_PATH_MAX];
    struct stat sb;
    if (!out) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, "e.g. tepid report FILE -o review.html",
                      "tepid report needs -o FILE (.html or .md)");
        return TP_ERR_USAGE;
    }
    *kind = kind_of(out);
    if (*kind == REPORT_NONE) {
        tp_diag_error(d, tp_diag_loc_none(), "-o", "name it review.html or review.md",
                      "'%s': a report is written as .html or .md", out);
        return TP_ERR_USAGE;
    }
    if (*kind == REPORT_MARKDOWN) {
        if (tp_report_files_dir(out, dir, sizeof dir) != 0) {
            tp_diag_error(d, tp_diag_loc_none(), "-o", NULL, "'%s': path too long", out);
            return TP_ERR_USAGE;
        }
        if (lstat(dir, &sb) == 0 && !S_ISDIR(sb.st_mode)) {
            tp_diag_error(d, tp_diag_loc_none(), "-o", "remove it or choose another report name",
                          "'%s' exists and is not a folder: a Markdown report puts its figures "
                          "there", dir);
            return TP_ERR_USAGE;
        }
    }
    return TP_OK;
}

/* The first line of the last message a study left in its log, without "tepid: ". */
static void reason(const tp_diag *sub, char *buf, size_t size)
{
    const char *log = sub->log, *p, *last = log;
    for (p = log; *p; p++)
        if (p[0] == '\n' && p[1] && p[1] != ' ')
            last = p + 1;
    if (strncmp(last, "tepid: ", 7) == 0)
        last += 7;
    snprintf(buf, size, "%.*s", (int)strcspn(last, "\n"), *last ? last : "the study failed");
}

/* A study's status: TP_OK, or its failure recorded as the reason its section gives (and a
 * warning); only running out of memory stops the report. */
static tp_status study_done(tp_status st, const tp_diag *sub, tp_reportcase *c, int study,
                            tp_diag *d)
{
    static const char *const names[TP_STUDY_COUNT] = {"warm-up", "steady state", "budget",
                                                      "guard", "cool-down"};
    if (st == TP_OK || st == TP_ERR_NOMEM)
        return st;
    reason(sub, c->why[study], sizeof c->why[study]);
    tp_diag_warn(d, tp_diag_loc_none(), NULL, NULL, "the %s is left out of the report: %s",
                 names[study], c->why[study]);
    return TP_OK;
}

/* The records of every study, as the verbs compute them. */
typedef struct studies {
    tp_warmup warmup;
    tp_schedule plan;   /* the programme laid out (borrowed by the warm-up's history) */
    tp_program program; /* its report per segment, and the time above the --above levels */
    double above[TP_PROGRAM_MAX_ABOVE];
    tp_steadyreport steady;
    tp_budget budget;
    tp_guard_study *guard;
    tp_cooldown cool;
    int has_warmup, has_steady, has_budget, has_cool;
} studies;

/* The warm-up as `tepid warmup FILE [--above TEMP]...` runs it: following the file's schedule
 * when it has one, with the programme's report. */
static tp_status run_warmup(const tp_session *s, studies *x, tp_reportcase *c, tp_diag *d)
{
    tp_diag sub;
    tp_status st;
    c->scheduled = tp_program_plan(&s->desc, s->net, &x->plan) == 0;
    tp_diag_init(&sub, NULL);
    st = tp_warmup_run_schedule(s->net, &s->desc.run, c->scheduled ? &x->plan : NULL,
                                &x->warmup, &sub);
    x->has_warmup = st == TP_OK;
    if (x->has_warmup && (c->scheduled || c->n_above > 0)) {
        if (!c->scheduled)
            memset(&x->plan, 0, sizeof x->plan);
        tp_program_compute(&x->warmup.history, &x->plan, x->above, c->n_above, &x->program);
    }
    return study_done(st, &sub, c, TP_STUDY_WARMUP, d);
}

/* The cool-down as `tepid cool FILE` runs it: from the holding state, so only for a controller
 * that holds a setpoint (cool refuses other files without --from). */
static tp_status run_cool(const tp_session *s, studies *x, tp_reportcase *c, tp_diag *d)
{
    tp_diag sub;
    tp_status st;
    if (!tp_network_holds(s->net)) {
        snprintf(c->why[TP_STUDY_COOL], sizeof c->why[TP_STUDY_COOL],
                 "the cool-down starts from the steady holding state, and this file's "
                 "controller holds no setpoint; `tepid cool FILE --from TEMP` cools it from a "
                 "uniform start.");
        return TP_OK;
    }
    tp_diag_init(&sub, NULL);
    st = tp_cooldown_run(&s->desc, s->net, TP_UNSET, NULL, 0, &x->cool, &sub);
    x->has_cool = st == TP_OK;
    return study_done(st, &sub, c, TP_STUDY_COOL, d);
}

static tp_status run_studies(const tp_session *s, studies *x, tp_reportcase *c, tp_diag *d)
{
    tp_diag sub;
    tp_status st;
    if ((st = run_warmup(s, x, c, d)) != TP_OK)
        return st;
    tp_diag_init(&sub, NULL);
    st = tp_steadyreport_run(s->net, &x->steady, &sub);
    x->has_steady = st == TP_OK;
    if ((st = study_done(st, &sub, c, TP_STUDY_STEADY, d)) != TP_OK)
        return st;
    tp_diag_init(&sub, NULL);
    st = tp_budget_compute(&s->desc, s->net, &x->budget, &sub);
    x->has_budget = st == TP_OK;
    if ((st = study_done(st, &sub, c, TP_STUDY_BUDGET, d)) != TP_OK)
        return st;
    if ((st = run_cool(s, x, c, d)) != TP_OK)
        return st;
    if (!tp_network_holds(s->net)) {
        snprintf(c->why[TP_STUDY_GUARD], sizeof c->why[TP_STUDY_GUARD],
                 "guard judges a controller holding a setpoint; this case's holds none.");
        return TP_OK;
    }
    x->guard = calloc(1, sizeof *x->guard);
    if (!x->guard)
        return TP_ERR_NOMEM;
    tp_diag_init(&sub, NULL);
    /* as `tepid guard FILE`: the file's guard.settings evaluated, else a recommendation */
    st = tp_guard_study_run(&s->desc, s->doc,
                            s->desc.guard.settings.present ? &s->desc.guard.settings : NULL,
                            x->guard, &sub);
    c->guard_evaluating = s->desc.guard.settings.present;
    if (st != TP_OK) {
        tp_guard_study_clear(x->guard);
        free(x->guard);
        x->guard = NULL;
    }
    return study_done(st, &sub, c, TP_STUDY_GUARD, d);
}

static void studies_clear(studies *x)
{
    tp_warmup_clear(&x->warmup);
    tp_steadyreport_clear(&x->steady);
    tp_cooldown_clear(&x->cool);
    if (x->guard) {
        tp_guard_study_clear(x->guard);
        free(x->guard);
    }
}

/* SHA-256 of the input file as hexadecimal (Nettle). */
static tp_status hash_file(const char *path, char hex[2 * SHA256_DIGEST_SIZE + 1], tp_diag *d)
{
    struct sha256_ctx ctx;
    uint8_t digest[SHA256_DIGEST_SIZE];
    char *text = NULL;
    size_t len = 0, k;
    tp_status st = tp_nettlelib_load(d);
    if (st == TP_OK)
        st = tp_infile_read(path, TP_YAMLTREE_MAX_BYTES, &text, &len, d);
    if (st != TP_OK)
        return st;
    sha256_init(&ctx);
    sha256_update(&ctx, len, (const uint8_t *)text);
    sha256_digest(&ctx, SHA256_DIGEST_SIZE, digest);
    for (k = 0; k < SHA256_DIGEST_SIZE; k++)
        snprintf(hex + 2 * k, 3, "%02x", digest[k]);
    free(text);
    return TP_OK;
}

/* The time the report is made, UTC; SOURCE_DATE_EPOCH when set (reproducible builds). */
static void made_at(char *buf, size_t size)
{
    const char *epoch = getenv("SOURCE_DATE_EPOCH");
    time_t now = time(NULL);
    struct tm tm;
    double e;
    if (epoch && tp_units_parse_double(epoch, &e) == 0 && e >= 0 && e < 4e9)
        now = (time_t)e;
    if (gmtime_r(&now, &tm))
        strftime(buf, size, "%Y-%m-%dT%H:%M:%SZ", &tm);
    else
        snprintf(buf, size, "-");
}

/* The command line as parsed: verb, file, then every option with its value. */
static void command_line(const tp_cli *cli, char *buf, size_t size)
{
    size_t used = (size_t)snprintf(buf, size, "tepid %s %s", cli->verb, cli->file);
    int i;
    for (i = 0; i < cli->n_args && used < size; i++) {
        const char *v = cli->args[i].value;
        used += (size_t)snprintf(buf + used, size - used, " --%s%s%s%s%s",
                                 cli->args[i].opt->name, v ? " " : "",
                                 v && strchr(v, ' ') ? "'" : "", v ? v : "",
                                 v && strchr(v, ' ') ? "'" : "");
    }
}

static tp_status build(tp_report *r, const tp_reportcase *c, tp_diag *d)
{
    size_t k;
    for (k = 0; k < sizeof sections / sizeof sections[0]; k++) {
        tp_report_section *s;
        tp_status st;
        if (sections[k].applies && !sections[k].applies(c))
            continue;
        s = tp_report_add_section(r, sections[k].id, sections[k].heading, sections[k].style);
        if (!s)
            return TP_ERR_NOMEM;
        st = sections[k].build(r, s, c, d);
        if (st != TP_OK)
            return st;
    }
    return TP_OK;
}

static tp_status run_report(const tp_cli *cli, tp_diag *d)
{
    const char *out = tp_cli_get(cli, "output");
    const char *sets[TP_MAX_SETS + 1];
    char hash[2 * SHA256_DIGEST_SIZE + 1], date[32], command[4096], title[TP_TEXT_MAX + 32];
    report_kind kind = REPORT_NONE;
    tp_reportcase c;
    tp_session s;
    studies x;
    tp_report *r = NULL;
    tp_status rc = check_output(out, &kind, d);
    if (rc != TP_OK)
        return rc;
    memset(&c, 0, sizeof c);
    memset(&x, 0, sizeof x);
    rc = tp_session_temperatures(cli, "above", TP_PROGRAM_MAX_ABOVE, x.above, &c.n_above, d);
    if (rc != TP_OK)
        return rc;
    rc = tp_session_open(&s, cli, d);
    if (rc != TP_OK)
        return rc;
    rc = hash_file(cli->file, hash, d);
    if (rc == TP_OK)
        rc = run_studies(&s, &x, &c, d);
    if (rc == TP_OK) {
        made_at(date, sizeof date);
        command_line(cli, command, sizeof command);
        c.file = cli->file;
        c.title = tp_session_title(&s);
        c.desc = &s.desc;
        c.doc = s.doc;
        c.net = s.net;
        c.warmup = x.has_warmup ? &x.warmup : NULL;
        c.steady = x.has_steady ? &x.steady : NULL;
        c.budget = x.has_budget ? &x.budget : NULL;
        c.guard = x.guard;
        c.program = x.has_warmup && programmed(&c) ? &x.program : NULL;
        c.cool = x.has_cool ? &x.cool : NULL;
        c.n_sets = tp_cli_all(cli, "set", sets, TP_MAX_SETS);
        c.sets = sets;
        c.version = TP_VERSION;
        c.n_libs = tp_version_libraries(c.lib_name, c.lib_version, TP_REPORTCASE_LIBS);
        c.command = command;
        c.date = date;
        c.hash = hash;
        snprintf(title, sizeof title, "Design review: %s", c.title);
        r = tp_report_create(title);
        rc = r ? build(r, &c, d) : TP_ERR_NOMEM;
    }
    if (rc == TP_OK)
        rc = kind == REPORT_HTML ? tp_report_write_html(r, out, d)
                                 : tp_report_write_markdown(r, out, d);
    if (rc == TP_OK && s.text) {
        char dir[TP_PATH_MAX];
        fprintf(s.text, "tepid report %s: %zu sections, %zu figures written to %s", cli->file,
                tp_report_sections(r), tp_report_figures(r), out);
        if (kind == REPORT_MARKDOWN && tp_report_files_dir(out, dir, sizeof dir) == 0)
            fprintf(s.text, " (figures in %s/)", dir);
        fputc('\n', s.text);
    }
    tp_report_destroy(&r);
    studies_clear(&x);
    tp_session_close(&s);
    return rc;
}

const tp_verb tp_cmd_report = {
    "report",
    run_report,
    "Write one design review of the case: HTML page or Markdown.",
    1,
    report_opts,
    "Runs the warm-up (following control.schedule when the file has one), the steady states,\n"
    "the cool-down, the budget and guard (and the surface maps of a gridded plate) on FILE\n"
    "with the --set overrides given, as the verbs do, and writes one review: a summary box,\n"
    "the cautions, the warm-up, the programme (a schedule, or --above levels), the steady\n"
    "state, the cool-down, the power budget, the protection, the surface uniformity (gridded\n"
    "plates), the model, the input and the provenance (docs/report.md). -o review.html writes one self-contained page (inline SVG\n"
    "figures, no scripts, nothing fetched; prints on A4 and Letter); -o review.md writes\n"
    "Markdown with the figures as SVG files in review-files/, a folder replaced as a whole.\n"
    "A study that does not apply (guard without a setpoint) or fails leaves its section\n"
    "saying why.",
    "tepid report workshop-bed-24v.yaml -o review.html\n"
    "tepid report reflow-hotplate-230v.yaml --above 217degC -o review.html\n"
    "tepid report raw-five-node.yaml -o review.md"};
