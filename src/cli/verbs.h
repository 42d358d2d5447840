/* The verbs of the command line, one file each (cmd_*.c), and the table of them. */
#ifndef TP_VERBS_H
#define TP_VERBS_H

#include <stddef.h>

#include "cli.h"
#include "diag.h"

extern const tp_verb tp_cmd_warmup;
extern const tp_verb tp_cmd_steady;
extern const tp_verb tp_cmd_explain;
extern const tp_verb tp_cmd_check;
extern const tp_verb tp_cmd_materials;
extern const tp_verb tp_cmd_tune;
extern const tp_verb tp_cmd_size;
extern const tp_verb tp_cmd_budget;
extern const tp_verb tp_cmd_guard;
extern const tp_verb tp_cmd_fit;
extern const tp_verb tp_cmd_sweep;
extern const tp_verb tp_cmd_cool;
extern const tp_verb tp_cmd_report;

/* Every verb, in the order the general help lists them (tp_verbs_count entries). */
extern const tp_verb *const tp_verbs[];
extern const size_t tp_verbs_count;

/* The verb named `name`, or NULL. */
const tp_verb *tp_verbs_find(const char *name);

/* Report `name` as an unknown verb, with the closest verb as a hint. */
void tp_verbs_unknown(const char *name, tp_diag *d);

#endif
