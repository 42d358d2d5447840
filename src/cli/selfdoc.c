/* Hidden verbs: the manual pages and the completion script written from the tables, and the
 * key paths the completion script asks for. */
#include "selfdoc.h"

#include <stdlib.h>
#include <string.h>

#include "completion.h"
#include "infile.h"
#include "manpage.h"
#include "outfile.h"

#define TEMPLATE_MAX (1u << 20) /* bytes of a template under docs/ or src/ */

static const char *const hidden[] = {"_man", "_completion", "_keys"};

int tp_selfdoc_is_hidden(const char *name)
{
    size_t i;
    if (name[0] != '_')
        return 0;
    for (i = 0; i < sizeof hidden / sizeof hidden[0]; i++)
        if (strcmp(name, hidden[i]) == 0)
            return 1;
    return 0;
}

static char *read_template(const char *path, tp_diag *d)
{
    char *text = NULL;
    size_t len = 0;
    tp_status st = tp_infile_read(path, TEMPLATE_MAX, &text, &len, d);
    if (st == TP_ERR_LIMIT)
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "%s: larger than %u bytes", path,
                      TEMPLATE_MAX);
    return st == TP_OK ? text : NULL;
}

/* One file to write: tepid(1), a verb's page, or the completion script. */
typedef enum job_kind { JOB_MAIN_PAGE, JOB_VERB_PAGE, JOB_COMPLETION } job_kind;

typedef struct job {
    job_kind kind;
    const tp_verb *verb; /* JOB_VERB_PAGE */
    const char *tmpl;    /* JOB_MAIN_PAGE, JOB_COMPLETION: the template's text */
    const tp_verb *const *verbs;
    size_t n_verbs;
} job;

/* Write the job's file at `path` through a temporary file. */
static tp_status write_job(const char *path, const job *j, tp_diag *d)
{
    tp_outfile o;
    tp_status st = tp_outfile_open(&o, path, d);
    if (st != TP_OK)
        return st;
    switch (j->kind) {
    case JOB_MAIN_PAGE:
        tp_manpage_main(j->tmpl, j->verbs, j->n_verbs, o.fp);
        break;
    case JOB_VERB_PAGE:
        tp_manpage_verb(j->verb, o.fp);
        break;
    case JOB_COMPLETION:
        tp_completion_script(j->tmpl, j->verbs, j->n_verbs, o.fp);
        break;
    }
    return tp_outfile_commit(&o, d);
}

/* tepid.1 and tepid-VERB.1 for every verb into `dir`. */
static tp_status man(job *j, const char *dir, tp_diag *d)
{
    char path[TP_PATH_MAX];
    tp_status st = TP_OK;
    size_t i;
    for (i = 0; i <= j->n_verbs && st == TP_OK; i++) {
        int n;
        j->kind = i == 0 ? JOB_MAIN_PAGE : JOB_VERB_PAGE;
        j->verb = i == 0 ? NULL : j->verbs[i - 1];
        n = i == 0 ? snprintf(path, sizeof path, "%s/tepid.1", dir)
                   : snprintf(path, sizeof path, "%s/tepid-%s.1", dir, j->verb->name);
        if (n < 0 || (size_t)n >= sizeof path) {
            tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "%s: directory name too long", dir);
            return TP_ERR_USAGE;
        }
        st = write_job(path, j, d);
    }
    return st;
}

int tp_selfdoc_run(const tp_verb *const *verbs, size_t n_verbs, int argc, char **argv)
{
    tp_diag d;
    tp_status st;
    char *tmpl;
    job j;
    tp_diag_init(&d, stderr);
    if (strcmp(argv[0], "_keys") == 0) {
        int numeric = argc > 1 && strcmp(argv[1], "--numeric") == 0;
        const char *file = argc > 1 + numeric ? argv[1 + numeric] : NULL;
        tp_completion_keys(file, numeric, stdout);
        return TP_EXIT_OK;
    }
    if (argc != 3) {
        fprintf(stderr, "usage: tepid %s TEMPLATE %s\n", argv[0],
                strcmp(argv[0], "_man") == 0 ? "DIR" : "FILE");
        return TP_EXIT_INPUT;
    }
    j.verbs = verbs;
    j.n_verbs = n_verbs;
    j.verb = NULL;
    tmpl = read_template(argv[1], &d);
    j.tmpl = tmpl;
    if (!tmpl)
        return tp_status_exit_code(TP_ERR_IO);
    if (strcmp(argv[0], "_man") == 0) {
        st = man(&j, argv[2], &d);
    } else {
        j.kind = JOB_COMPLETION;
        st = write_job(argv[2], &j, &d);
    }
    free(tmpl);
    return tp_status_exit_code(st);
}
