/* The sections of the design-review report (report.h), each made from the records the studies
 * computed for the verbs (warm-up, steady report, budget, guard, surface maps, cautions) with
 * the verbs' own rounding: the report recomputes nothing. The verb `report` runs the studies
 * and lists the sections in their order (src/cli/cmd_report.c); a new study's section is one
 * more builder here (or in reportcycle.h) and one more row there. */
#ifndef TP_REPORTSECTIONS_H
#define TP_REPORTSECTIONS_H

#include <stddef.h>

#include "budget.h"
#include "cooldown.h"
#include "description.h"
#include "diag.h"
#include "guard.h"
#include "network.h"
#include "program.h"
#include "report.h"
#include "status.h"
#include "steadyreport.h"
#include "warmup.h"
#include "yamltree.h"

#define TP_REPORTCASE_WHY 400 /* bytes of the reason a study is missing */
#define TP_REPORTCASE_LIBS 8  /* libraries named in the provenance */

/* The studies a report runs, for the reasons one is missing. */
enum {
    TP_STUDY_WARMUP,
    TP_STUDY_STEADY,
    TP_STUDY_BUDGET,
    TP_STUDY_GUARD,
    TP_STUDY_COOL,
    TP_STUDY_COUNT
};

/* Everything the sections show: the case as loaded, the studies' records (NULL when a study
 * did not apply or failed, with the reason in why[]), and the provenance. All borrowed. */
typedef struct tp_reportcase {
    const char *file;  /* the config file as given */
    const char *title; /* the case's title: the config's, else the file name */
    const tp_description *desc;
    const tp_yamltree *doc;
    const tp_network *net;
    const tp_warmup *warmup;
    const tp_steadyreport *steady;
    const tp_budget *budget;
    const tp_guard_study *guard;
    const tp_program *program; /* the warm-up's programme (control.schedule) and time above the
                                  --above levels; NULL with neither */
    int scheduled;             /* the file has control.schedule (the warm-up follows it) */
    int n_above;               /* --above levels given */
    const tp_cooldown *cool;   /* the cool-down from the holding state, as `tepid cool` */
    int guard_evaluating; /* guard.settings given: the report evaluates them */
    char why[TP_STUDY_COUNT][TP_REPORTCASE_WHY];
    const char *const *sets; /* the --set overrides, n_sets of them */
    int n_sets;
    /* provenance */
    const char *version;                     /* tepid's */
    const char *lib_name[TP_REPORTCASE_LIBS]; /* libraries built with, and their versions */
    const char *lib_version[TP_REPORTCASE_LIBS];
    int n_libs;
    const char *command; /* the command line */
    const char *date;    /* when the report was made (UTC, ISO 8601) */
    const char *hash;    /* SHA-256 of the input file, hexadecimal */
} tp_reportcase;

/* A section builder: fills section `s` of report `r` from the case. TP_OK, or the status of a
 * failed figure or allocation (reported to `d`). */
typedef tp_status (*tp_reportsections_fn)(tp_report *r, tp_report_section *s,
                                          const tp_reportcase *c, tp_diag *d);

/* The builders, one per section (docs/report.md lists what each shows). */
tp_status tp_reportsections_summary(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                    tp_diag *d);
tp_status tp_reportsections_cautions(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                     tp_diag *d);
tp_status tp_reportsections_warmup(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                   tp_diag *d);
tp_status tp_reportsections_steady(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                   tp_diag *d);
tp_status tp_reportsections_budget(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                   tp_diag *d);
tp_status tp_reportsections_guard(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                  tp_diag *d);
tp_status tp_reportsections_surface(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                    tp_diag *d);
tp_status tp_reportsections_model(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                  tp_diag *d);
tp_status tp_reportsections_input(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                  tp_diag *d);
tp_status tp_reportsections_provenance(tp_report *r, tp_report_section *s,
                                       const tp_reportcase *c, tp_diag *d);

/* "-" for a value that does not exist, else the number with `decimals` digits after the point
 * (a negative count: %.Ng, N = -decimals significant digits). Returns buf. */
const char *tp_reportsections_num(char *buf, size_t size, int decimals, double v);

/* A duration as the verbs print it, or "not in the simulated time". */
void tp_reportsections_duration(char *buf, size_t size, double t);

/* The cautions of the whole case: every caution the studies give (warm-up, steady, budget,
 * guard, cool-down), each once with its worst figures, in kind order, into out[]; `from[k]` gets the
 * verbs that give caution k, as a bit set (1 << TP_STUDY_*). Returns how many. */
int tp_reportsections_case_cautions(const tp_reportcase *c, tp_caution out[TP_CAUTIONS_MAX],
                                    unsigned from[TP_CAUTIONS_MAX]);

#endif
